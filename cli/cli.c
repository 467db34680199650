/* cli.c: the dipolize program: subcommand dispatch, program help and version, shared
 * option groups, messages and exit codes, and the solver options common to every
 * computing subcommand. */
#include "cli_int.h"
#include "cli_limits.h"

#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

#include "dpz_sweep.h"
#include "pictures.h"
#ifdef _OPENMP
#include <omp.h>
#endif

#ifndef DPZ_VERSION
#define DPZ_VERSION "unknown"
#endif

/* Subcommands built on the shared argument parser (args.c). */
static const cli_cmd *const commands[] = {
    &cli_cmd_shape,  &cli_cmd_voxelize, &cli_cmd_info,
    &cli_cmd_static, &cli_cmd_tensor,   &cli_cmd_expand,
};
#define N_COMMANDS (sizeof commands / sizeof commands[0])

/* Commands that parse their own arguments (argv[0] is the command name). */
static const struct {
    const char *name;
    const char *summary;
    int (*run)(int argc, char **argv);
} raw_commands[] = {
    {"sweep", "6x6 tensors over a wavelength list into a directory of tables",
     dpz_cli_sweep},
    {"merge", "combine the directories of sharded sweeps into one run", dpz_cli_merge},
    {"plot", "SVG plots of a sweep directory: spectra, cross sections, validity",
     dpz_cli_plot},
    {"preview", "SVG picture of a voxel set: projections and mid-plane slices",
     dpz_cli_preview},
    {"report", "one self-contained HTML page about a sweep directory", dpz_cli_report},
};
#define N_RAW (sizeof raw_commands / sizeof raw_commands[0])

/* ---- shared option groups -------------------------------------------------------------
 */
static const cli_opt materials_opts[] = {
    {"--eps", "SPEC",
     "permittivity of every label, relative to vacuum: complex (2.25, -10+1i), "
     "nk:FILE.csv or drude:... (forms: dipolize tensor --help)",
     0},
    {"--material", "LABEL=SPEC",
     "permittivity of one label (1..255), same SPEC forms; every label of the grid needs "
     "one",
     1},
    {"--host-index", "N", "real refractive index of the host medium (default 1)", 0},
    {NULL, NULL, NULL, 0},
};
const cli_group cli_group_materials = {"Materials (give --eps or --material)",
                                       materials_opts};

static const cli_opt solver_opts[] = {
    {"--dipole-model", "NAME", "voxel polarizability: cm-rr, ldr or igt (default cm-rr)",
     0},
    {"--solver", "NAME", "iterative solver: bicgstab, cocg or gmres (default bicgstab)",
     0},
    {"--tol", "X", "relative residual at which a solve stops (default 1e-8)", 0},
    {"--max-iter", "N", "iteration limit per solve (default 10000)", 0},
    {"--threads", "N", "FFTW/OpenMP threads (default 1)", 0},
    {"--plan", "EFFORT",
     "FFTW planner effort: estimate, measure or patient (default estimate; see --wisdom)",
     0},
    {"--wisdom", "FILE",
     "FFTW wisdom file: loaded before planning (a missing file is created), saved at the "
     "end; makes measure-planned runs repeatable and plans a batch of jobs once",
     0},
    {"--max-memory", "SIZE", CLI_MAX_MEMORY_HELP, 0},
    {NULL, NULL, NULL, 0},
};
const cli_group cli_group_solver = {"Solver", solver_opts};

static const cli_opt geometry_opts[] = {
    {"--spacing", "LEN",
     "voxel edge for .npy/.csv/.stl input (required there); for a VTK file written by "
     "'dipolize shape', re-voxelizes the shape at this spacing",
     0},
    {"--stl-unit", "UNIT", "length unit of STL coordinates: m, cm, mm, um, nm, pm or A",
     0},
    {"--fractions", NULL, "with a shape record: re-voxelize with boundary fill fractions",
     0},
    {"--max-voxels", "N", "refuse grids with more than N cells (default 268435456)", 0},
    {NULL, NULL, NULL, 0},
};
const cli_group cli_group_geometry = {"Geometry input", geometry_opts};

static const cli_opt output_opts[] = {
    {"--json", NULL, "print one JSON object on stdout (SI units, complex as [re, im])",
     0},
    {"--quiet", NULL, "no progress lines on stderr", 0},
    {NULL, NULL, NULL, 0},
};
const cli_group cli_group_output = {"Output", output_opts};

/* ---- messages
 * -------------------------------------------------------------------------- */
int cli_fail(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    fflush(stdout);
    fputs("dipolize: ", stderr);
    vfprintf(stderr, fmt, ap);
    fputc('\n', stderr);
    va_end(ap);
    return CLI_USAGE;
}

int cli_exit_code(dpz_status s)
{
    switch (s) {
    case DPZ_OK:
        return CLI_OK;
    case DPZ_ENOCONV:
    case DPZ_EBREAKDOWN:
    case DPZ_ESTAGNATION:
    case DPZ_ENOMEM:
    case DPZ_ELAPACK:
    case DPZ_EFFTW:
    case DPZ_CONTINUE:
        return CLI_FAILED;
    default:
        return CLI_USAGE;
    }
}

int cli_fail_err(const char *what, const dpz_err *err)
{
    const char *msg = err->msg[0] ? err->msg : dpz_status_message(err->code);
    const char *hint = err->code == DPZ_ELIMIT && strstr(msg, "limit")
                           ? " (the limit is set with --max-voxels N)"
                           : "";
    if (what)
        cli_fail("%s: %s%s", what, msg, hint);
    else
        cli_fail("%s%s", msg, hint);
    return cli_exit_code(err->code) == CLI_OK ? CLI_FAILED : cli_exit_code(err->code);
}

/* ---- typed option readers
 * --------------------------------------------------------------- */
int cli_opt_length_pos(const cli_args *a, const char *name, double *out, int required,
                       int *given)
{
    const char *v = cli_get(a, name);
    if (given)
        *given = v != NULL;
    if (!v) {
        if (required)
            return cli_fail("%s: %s LEN is required (a length with unit, e.g. 2nm)",
                            a->cmd->name, name);
        return CLI_OK;
    }
    dpz_err e;
    if (dpz_units_length_pos(name, v, out, &e) != DPZ_OK)
        return cli_fail_err(a->cmd->name, &e);
    return CLI_OK;
}

int cli_opt_real(const cli_args *a, const char *name, double *out, int *given)
{
    const char *v = cli_get(a, name);
    if (given)
        *given = v != NULL;
    if (!v)
        return CLI_OK;
    dpz_err e;
    if (dpz_units_real(name, v, out, &e) != DPZ_OK)
        return cli_fail_err(a->cmd->name, &e);
    return CLI_OK;
}

int cli_opt_count(const cli_args *a, const char *name, size_t *out, int *given)
{
    const char *v = cli_get(a, name);
    if (given)
        *given = v != NULL;
    if (!v)
        return CLI_OK;
    dpz_err e;
    if (dpz_units_count(name, v, out, &e) != DPZ_OK)
        return cli_fail_err(a->cmd->name, &e);
    return CLI_OK;
}

int cli_setup_options(const cli_args *a, dpz_setup *s)
{
    dpz_err e;
    int rc;
    s->model = DPZ_DIPOLE_CMRR;
    s->solve = dpz_solve_opts_default();
    s->op.threads = 1;
    s->op.plan = DPZ_PLAN_ESTIMATE;
    s->has_origin = 0;
    const char *v;
    if ((v = cli_get(a, "--dipole-model")) &&
        dpz_dipole_parse(v, &s->model, &e) != DPZ_OK)
        return cli_fail_err("--dipole-model", &e);
    if ((v = cli_get(a, "--solver")) && dpz_solver_parse(v, &s->solve.kind, &e) != DPZ_OK)
        return cli_fail_err("--solver", &e);
    int given;
    double tol = s->solve.tol;
    if ((rc = cli_opt_real(a, "--tol", &tol, &given)) != CLI_OK)
        return rc;
    if (given && !(tol > 0.0 && tol < 1.0))
        return cli_fail("%s: --tol %s: the tolerance must lie between 0 and 1",
                        a->cmd->name, cli_get(a, "--tol"));
    s->solve.tol = tol;
    size_t n = s->solve.max_iter;
    if ((rc = cli_opt_count(a, "--max-iter", &n, &given)) != CLI_OK)
        return rc;
    if (given && n == 0)
        return cli_fail("%s: --max-iter must be at least 1", a->cmd->name);
    s->solve.max_iter = n;
    size_t threads = 1;
    if ((rc = cli_opt_count(a, "--threads", &threads, &given)) != CLI_OK)
        return rc;
    if (given && (threads == 0 || threads > 1024))
        return cli_fail("%s: --threads must be between 1 and 1024", a->cmd->name);
    s->op.threads = (int)threads;
    if ((rc = cli_plan_options(a, s)) != CLI_OK)
        return rc;
#ifdef _OPENMP
    omp_set_num_threads((int)threads);
#endif
    if ((v = cli_get(a, "--origin"))) {
        if (dpz_units_length_vec("--origin", v, s->origin_m, 3, &e) != DPZ_OK)
            return cli_fail_err(a->cmd->name, &e);
        s->has_origin = 1;
    }
    return CLI_OK;
}

/* ---- the program
 * ------------------------------------------------------------------------- */
static void print_program_help(FILE *f)
{
    fprintf(
        f,
        "dipolize %s: reduces a meta-atom (voxel file, STL mesh or built-in shape plus\n"
        "materials) to its 6x6 electric/magnetic/magneto-electric point-dipole\n"
        "polarizability by a discrete-dipole solve, with the static tensor, the size\n"
        "expansion of the inverse polarizability and diagnostics.\n\n"
        "Usage: dipolize COMMAND [arguments] [options]\n\nCommands:\n",
        DPZ_VERSION);
    for (size_t i = 0; i < N_COMMANDS; i++)
        fprintf(f, "  %-10s %s\n", commands[i]->name, commands[i]->summary);
    for (size_t i = 0; i < N_RAW; i++)
        fprintf(f, "  %-10s %s\n", raw_commands[i].name, raw_commands[i].summary);
    fprintf(f,
            "\nLengths always carry a unit (20nm, 0.5um, 1e-7m); angles deg or rad;\n"
            "complex numbers like 2.25, -10+1i, 12.25-0.02i. Results are in SI units.\n"
            "Exit codes: 0 success, 1 computation failed (e.g. no convergence),\n"
            "2 bad input or usage.\n\n"
            "'dipolize COMMAND --help' shows every option of a command with an example.\n"
            "'dipolize --version' prints the version.\n");
}

int dpz_cli_main(int argc, char **argv)
{
    if (argc < 2) {
        print_program_help(stderr);
        return CLI_USAGE;
    }
    const char *c = argv[1];
    if (strcmp(c, "--help") == 0 || strcmp(c, "-h") == 0 || strcmp(c, "help") == 0) {
        if (strcmp(c, "help") == 0 && argc > 2) {
            for (size_t i = 0; i < N_COMMANDS; i++)
                if (strcmp(argv[2], commands[i]->name) == 0) {
                    cli_print_help(commands[i], stdout);
                    return CLI_OK;
                }
            for (size_t i = 0; i < N_RAW; i++)
                if (strcmp(argv[2], raw_commands[i].name) == 0) {
                    char help_opt[] = "--help";
                    char *sub[3] = {argv[2], help_opt, NULL};
                    return raw_commands[i].run(2, sub);
                }
            return cli_fail("unknown command \"%s\" (see dipolize --help)", argv[2]);
        }
        print_program_help(stdout);
        return CLI_OK;
    }
    if (strcmp(c, "--version") == 0 || strcmp(c, "version") == 0) {
        printf("dipolize %s\n", DPZ_VERSION);
        return CLI_OK;
    }
    for (size_t i = 0; i < N_COMMANDS; i++) {
        if (strcmp(c, commands[i]->name) != 0)
            continue;
        cli_args *a = calloc(1, sizeof *a);
        if (!a)
            return cli_fail("out of memory");
        int help = 0;
        int rc = cli_parse(commands[i], argc, argv, 2, a, &help);
        if (rc == CLI_OK) {
            if (help)
                cli_print_help(commands[i], stdout);
            else
                rc = commands[i]->run(a);
        }
        free(a);
        if (fflush(stdout) != 0 && rc == CLI_OK) {
            cli_fail("cannot write to standard output");
            rc = CLI_FAILED;
        }
        return rc;
    }
    for (size_t i = 0; i < N_RAW; i++)
        if (strcmp(c, raw_commands[i].name) == 0)
            return raw_commands[i].run(argc - 1, argv + 1);
    if (c[0] == '-')
        return cli_fail("unknown option %s (see dipolize --help)", c);
    return cli_fail("unknown command \"%s\" (see dipolize --help for the list)", c);
}
