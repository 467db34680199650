/* cli_int.h: declarations shared by the files of the dipolize program (cli/). The cli
 * layer is the only code that prints or exits; its functions return an exit code
 * (CLI_OK 0, CLI_FAILED 1 = computation failed, CLI_USAGE 2 = bad input or usage) after
 * printing at most one message, prefixed "dipolize: ", on stderr.
 *
 * Building a subcommand: fill a cli_cmd (name, usage, summary, one worked example, its
 * option groups and a run function) and add it to the table in cli.c; the argument parser
 * (args.c) then handles --help, unknown options, missing values and repeated options, and
 * the run function reads the parsed values with cli_get / cli_count / cli_value_at. */
#ifndef DPZ_CLI_CLI_INT_H
#define DPZ_CLI_CLI_INT_H

#include <complex.h>
#include <stddef.h>
#include <stdio.h>

#include "dpz_common.h"
#include "dpz_extract.h"
#include "dpz_grid.h"
#include "dpz_material.h"
#include "dpz_shape.h"
#include "dpz_units.h"

#include "cJSON.h"

#ifdef __cplusplus
extern "C" {
#endif

enum { CLI_OK = 0, CLI_FAILED = 1, CLI_USAGE = 2 };

/* ---- options and subcommands */
typedef struct cli_opt {
    const char *name; /* "--radius" */
    const char *meta; /* value placeholder ("LEN"), NULL for a flag without value */
    const char *help; /* one line: meaning, unit, default */
    int repeat;       /* nonzero: may be given several times */
} cli_opt;

#define CLI_MAX_GROUPS 6
#define CLI_MAX_POS 16
#define CLI_MAX_OPTS 64 /* options of one subcommand, all groups together */
#define CLI_MAX_VALUES 256

typedef struct cli_args cli_args;

typedef struct cli_group {
    const char *title;   /* "Materials" */
    const cli_opt *opts; /* terminated by an entry with name == NULL */
} cli_group;

typedef struct cli_cmd {
    const char *name;    /* "tensor" */
    const char *usage;   /* "FILE MATERIALS --wavelength LEN [options]" */
    const char *summary; /* one line */
    const char *details; /* a paragraph or NULL */
    const char *example; /* one worked example (full command line) */
    size_t min_pos, max_pos;
    const cli_group *groups[CLI_MAX_GROUPS]; /* NULL-terminated */
    int (*run)(const cli_args *a);
} cli_cmd;

struct cli_args {
    const cli_cmd *cmd;
    const char *pos[CLI_MAX_POS];
    size_t npos;
    const cli_opt *opt[CLI_MAX_OPTS]; /* every option the command knows */
    size_t nopt;
    const char **vals[CLI_MAX_OPTS]; /* values given per option (flags: "") */
    size_t nvals[CLI_MAX_OPTS];
    const char *valbuf[CLI_MAX_VALUES];
    int quiet;    /* --quiet given */
    int progress; /* progress lines wanted: stderr is a terminal and not --quiet */
};

/* Parses argv[first..argc) for `cmd`. Returns CLI_OK, or prints the message and returns
 * CLI_USAGE; `*help` is set when --help was asked for (the caller prints it). */
int cli_parse(const cli_cmd *cmd, int argc, char **argv, int first, cli_args *a,
              int *help);
void cli_print_help(const cli_cmd *cmd, FILE *f);

/* Last value given for option `name` (NULL when absent; "" for a flag). */
const char *cli_get(const cli_args *a, const char *name);
size_t cli_count(const cli_args *a, const char *name);
const char *cli_value_at(const cli_args *a, const char *name, size_t i);
int cli_flag(const cli_args *a, const char *name);

/* Shared option groups (defined in cli.c). */
extern const cli_group cli_group_materials;
extern const cli_group cli_group_solver;
extern const cli_group cli_group_geometry; /* --spacing, --stl-unit, --max-voxels, ... */
extern const cli_group cli_group_output;   /* --json, --quiet */

/* ---- messages and exit codes */
/* Prints "dipolize: <message>" on stderr and returns CLI_USAGE. */
int cli_fail(const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 1, 2)))
#endif
    ;
/* Prints the library error (prefixed by `what` when not NULL) and returns the exit code
 * for its status: CLI_FAILED for failed computations (no convergence, breakdown,
 * stagnation, out of memory, FFTW or LAPACK failures), CLI_USAGE otherwise. */
int cli_fail_err(const char *what, const dpz_err *err);
int cli_exit_code(dpz_status s);
/* A progress line on stderr when a->progress. */
void cli_progress(const cli_args *a, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 2, 3)))
#endif
    ;

/* Parses an option with a units parser, printing the message on failure:
 *     if ((rc = cli_opt_length_pos(a, "--spacing", &d, 1)) != CLI_OK) return rc;
 * `required` = 1 makes a missing option an error; otherwise *out is left unchanged and
 * `*given` (when not NULL) says whether the option was there. */
int cli_opt_length_pos(const cli_args *a, const char *name, double *out, int required,
                       int *given);
int cli_opt_real(const cli_args *a, const char *name, double *out, int *given);
int cli_opt_count(const cli_args *a, const char *name, size_t *out, int *given);

/* ---- geometry */
typedef enum {
    CLI_SRC_VTK = 0,
    CLI_SRC_NPY,
    CLI_SRC_CSV,
    CLI_SRC_STL,
} cli_src_format;

/* Loads the FILE argument as a grid: VTK (a shape record inside is re-voxelized when
 * --spacing or --fractions asks for it), .npy and .csv (need --spacing), .stl (needs
 * --spacing and --stl-unit). Honours --max-voxels. Prints the message on failure.
 * `*fmt` receives the format; `mesh_volume` (may be NULL) the STL mesh volume (m^3), or
 * -1 when not a mesh. */
int cli_load_geometry(const cli_args *a, const char *path, dpz_grid **grid,
                      cli_src_format *fmt, double *mesh_volume);
const char *cli_src_format_name(cli_src_format f);
/* The STL file named by a mesh record `rec` found in the VTK file `vtk_path`: `rec`
 * itself, else (when relative) beside the VTK file. Writes the path into out; 0 when it
 * opens. */
int cli_resolve_mesh_path(const char *vtk_path, const char *rec, char *out, size_t len);

/* ---- refinement (refine.c) */
#define CLI_REFINE_MAX 4
/* The object on LEVELS lattices, coarse to fine (dpz_refine_levels): grid[0] is a copy of
 * the caller's grid; all are owned. Shapes and meshes are re-voxelized at d / (1 + k/2);
 * plain voxel sets have each voxel split into (k+1)^3. */
typedef struct cli_refine {
    size_t n;
    dpz_grid *grid[CLI_REFINE_MAX];
    double d[CLI_REFINE_MAX]; /* spacing of each level, m */
    const char *how;      /* "re-voxelized shape", "re-voxelized mesh", "split voxels" */
    double v_true;        /* volume of the true object, m^3: the shape's formula, the mesh
                             volume, or the voxel volume of a plain voxel set */
    const char *v_source; /* "shape formula", "mesh", "voxels" or "finest voxels" */
} cli_refine;
/* --refine LEVELS (2..CLI_REFINE_MAX); *levels = 0 when absent. */
int cli_refine_option(const cli_args *a, size_t *levels);
int cli_refine_build(const cli_args *a, const dpz_grid *base, size_t levels,
                     cli_refine *r);
void cli_refine_free(cli_refine *r);
/* Extrapolates m complex results per level (v[k * m + e], levels at spacings d[k], the
 * last the finest) to zero spacing: out[e], with err[e] = (error of the real part, error
 * of the imaginary part) as the real and imaginary parts. Callers extrapolate results
 * divided by each level's voxel volume and multiply by v_true: the staircase volume
 * oscillates with the spacing and would otherwise dominate the fit. */
int cli_extrapolate(size_t n, const double *d, const double complex *v, size_t m,
                    double complex *out, double complex *err);
/* The same for a refinement: divides each level's m values (v[k * m + e]) by that
 * level's voxel volume, extrapolates with cli_extrapolate and multiplies value and error
 * by r->v_true. Used by static, tensor and sweep alike. Prints the message on failure. */
int cli_refine_extrapolate(const cli_refine *r, const double complex *v, size_t m,
                           double complex *out, double complex *err);
/* What the extrapolated result describes: the true shape or mesh (re-voxelized levels)
 * or the staircase body of a plain voxel set (split levels). */
const char *cli_refine_belongs_to(const cli_refine *r);
/* The levels of a refinement as JSON: levels, how, spacings_m, voxels, volumes_m3,
 * true_volume_m3, true_volume_from, result_belongs_to, method. */
cJSON *cli_refine_json(const cli_refine *r);

/* ---- materials */
typedef struct cli_materials {
    dpz_material *mat[256]; /* per label (owned; NULL for label 0 and unused labels) */
    int shared[256];        /* nonzero: mat[l] is the --eps material owned by label 1.. */
    int dispersive;         /* some material depends on the wavelength */
    double host_index;      /* n_h */
    double lo_m, hi_m;      /* wavelength range where every used material is defined */
    char describe[256][160];
    int gain_warned[256]; /* the gain note was printed for this label */
} cli_materials;

/* Builds the materials from --eps / --material / --host-index for the labels present in
 * `grid`, checking: exactly one of --eps or --material; every label of the grid has a
 * material; no material names an absent label; no label given twice; finite values.
 * Prints the message and returns CLI_USAGE on failure. */
int cli_materials_load(const cli_args *a, const dpz_grid *grid, cli_materials *m);
void cli_materials_free(cli_materials *m);
/* Permittivities of every used label at vacuum wavelength lambda0 (m); checks the
 * wavelength lies in every table's range and the values are finite. */
int cli_materials_eval(cli_materials *m, const dpz_grid *grid, double lambda0_m,
                       double complex eps_label[256]);
/* JSON description of the materials: [{label, spec}]. */
cJSON *cli_materials_json(const cli_materials *m, const dpz_grid *grid);

/* Solver options (--dipole-model, --solver, --tol, --max-iter, --threads, --origin) into
 * `setup` (grid and materials are set by the caller). */
int cli_setup_options(const cli_args *a, dpz_setup *setup);
/* --plan (planner effort into setup->op.plan) and --wisdom FILE (loads FFTW wisdom now,
 * saves it at exit); called by cli_setup_options. Prints the message on failure. */
int cli_plan_options(const cli_args *a, dpz_setup *setup);

/* ---- JSON and output */
/* A JSON number that reads back to exactly `v`: the shortest of %.15g, %.16g and %.17g
 * that round-trips (cJSON 1.7's own printing accepts a 15-digit form that differs in the
 * last bits, e.g. 0.1 + 0.2 as "0.3"), inserted as raw text; null for NaN and infinities,
 * which JSON cannot hold. Use it (or cli_json_add_number) for every double written. */
cJSON *cli_json_number(double v);
cJSON *cli_json_add_number(cJSON *object, const char *name, double v);
cJSON *cli_json_complex(double complex z);
/* A 3x3 tensor from 9 entries, row-major. Call it through cli_json_tensor3(t) with a
 * `double complex t[3][3]` (const or not: the macro takes &t[0][0], which converts to
 * a pointer to const without the C17 array-qualifier pitfall). */
cJSON *cli_json_tensor3_flat(const double complex *t);
#define cli_json_tensor3(t) cli_json_tensor3_flat(&(t)[0][0])
cJSON *cli_json_vec3(const double v[3]);
cJSON *cli_json_doubles(const double *v, size_t n);
/* The 3x3 block (r0, c0) of a 6x6 matrix A[6][6] (row-major, 36 entries). */
cJSON *cli_json_block_flat(const double complex *A, int r0, int c0);
#define cli_json_block(A, r0, c0) cli_json_block_flat(&(A)[0][0], (r0), (c0))
/* Solver options as an object: kind, tol, max_iter, dipole_model, threads. */
cJSON *cli_json_setup(const dpz_setup *s);
/* Grid facts shared by every command: voxels, spacing_m, volume_m3, a_eq_m. */
void cli_json_grid_facts(cJSON *o, const dpz_grid *g);
/* Prints `o` unformatted with a newline on stdout and frees it; CLI_FAILED if the
 * printing itself fails (out of memory, closed stdout). */
int cli_json_emit(cJSON *o);

/* Prints a 3x3 complex tensor t[3][3] divided by `scale` as an aligned block with a
 * title and unit; parts smaller than `zero_below` (in printed units) show as 0. */
void cli_print_tensor3_flat(FILE *f, const char *title, const double complex *t,
                            double scale, double zero_below, const char *unit);
#define cli_print_tensor3(f, title, t, scale, zero_below, unit)                          \
    cli_print_tensor3_flat((f), (title), &(t)[0][0], (scale), (zero_below), (unit))

/* Writes a file atomically: `write(tmp_path, ctx, err)` writes a temporary file in the
 * same directory as `path`, which is then renamed to `path`; on failure the temporary
 * is removed and nothing is left behind. */
typedef dpz_status (*cli_writer)(const char *tmp_path, void *ctx, dpz_err *err);
int cli_write_atomic(const char *path, cli_writer write, void *ctx);

/* Shape from the KIND argument and the shape options of `dipolize shape`. */
int cli_shape_from_args(const cli_args *a, const char *kind_name, dpz_shape *s);

/* ---- subcommands (cmd_*.c) */
extern const cli_cmd cli_cmd_shape;
extern const cli_cmd cli_cmd_voxelize;
extern const cli_cmd cli_cmd_info;
extern const cli_cmd cli_cmd_static;
extern const cli_cmd cli_cmd_tensor;
extern const cli_cmd cli_cmd_expand;

/* The program: dispatches argv to a subcommand; returns the exit code. */
int dpz_cli_main(int argc, char **argv);

#ifdef __cplusplus
}
#endif
#endif
