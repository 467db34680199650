/* dpz_sweep.h: wavelength sweeps of the dipolize program, their output directory
 * (docs/sweep-format.md), shards, resuming and merging.
 *
 * The pure parts (shard arithmetic, row formatting, table scanning, summary comparison,
 * atomic file writes) are declared here so that the tests can reach them; the commands
 * themselves are dpz_cli_sweep and dpz_cli_merge. Nothing here prints except the two
 * commands (and the progress line of a sweep), which return the process exit code:
 * 0 success, 1 computation failed (a wavelength did not converge, or a solver error),
 * 2 bad input or usage. */
#ifndef DPZ_CLI_SWEEP_H
#define DPZ_CLI_SWEEP_H

#include <complex.h>
#include <stddef.h>
#include <stdint.h>

#include "dpz_common.h"

#ifdef __cplusplus
extern "C" {
#endif

/* The two subcommands (argv[0] is the subcommand name). */
int dpz_cli_sweep(int argc, char **argv);
int dpz_cli_merge(int argc, char **argv);

/* ---- shards ----------------------------------------------------------------------- */
/* Shard I of N takes the positions p of the full wavelength list (0-based) with
 * p mod N == I. Number of positions of shard `index` in a list of n_total. */
size_t dpz_sweep_shard_size(size_t n_total, size_t index, size_t count);
/* The j-th position (0-based) of shard `index`: index + j * count. */
size_t dpz_sweep_shard_position(size_t j, size_t index, size_t count);

/* Whether two wavelengths are the same up to the rounding of a JSON writer: within
 * 4 DBL_EPSILON relative. The tables hold exact values; summary.json's numbers may be
 * printed by cJSON with 15 digits when they agree to its own epsilon. */
int dpz_sweep_same_wavelength(double a, double b);

/* ---- the result of one wavelength ------------------------------------------------- */
/* Plain data (no pointers) so that MPI workers can send it to rank 0 as bytes. */
typedef struct dpz_sweep_result {
    uint64_t position; /* index in the full wavelength list */
    double lambda0_m;  /* vacuum wavelength, m */
    int converged;     /* all seven solves (six tensor RHS, one plane wave) converged */
    int status;        /* DPZ_OK, or the first failure among the solves
                          (DPZ_ENOCONV, DPZ_EBREAKDOWN, DPZ_ESTAGNATION) */
    int have_tensor;   /* A and the diagnostics hold values (tensor solves converged) */
    int have_xsec;     /* ext, abs, sca hold values (plane-wave solve converged) */
    double complex A[6][6];           /* 6x6 polarizability, m^3 (dpz_extract.h) */
    double ext, abs, sca;             /* full-solve cross sections, m^2 */
    double ext_dip, abs_dip, sca_dip; /* from A alone, m^2 */
    double rel_diff;                  /* |ext - ext_dip| / ext */
    uint64_t iterations;              /* largest iteration count over the seven solves */
    double residual; /* largest final relative residual over the seven solves */
    double reciprocity, energy_balance, min_absorption_eig, dipole_validity;
    double min_fluct_eig_m3; /* m^3 */
    double seconds;          /* wall time of this wavelength, s */
    /* With --refine: A holds the value extrapolated to zero spacing and A_err its error
     * estimate per element (real and imaginary parts: the estimates for the real and
     * imaginary parts of A), m^3; zero otherwise. */
    double complex A_err[6][6];
} dpz_sweep_result;

/* ---- the three CSV tables --------------------------------------------------------- */
typedef enum {
    DPZ_TABLE_ALPHA = 0,
    DPZ_TABLE_XSEC = 1,
    DPZ_TABLE_DIAG = 2,
    /* alpha.csv of a sweep with --refine: the columns of DPZ_TABLE_ALPHA plus err_re,
     * err_im after im. Not counted in DPZ_TABLE_COUNT: a sweep writes it in place of
     * DPZ_TABLE_ALPHA. */
    DPZ_TABLE_ALPHA_REFINED = 3
} dpz_table_kind;
#define DPZ_TABLE_COUNT 3
#define DPZ_SWEEP_ALPHA_ROWS 36 /* 4 blocks x 3 rows x 3 columns per wavelength */
#define DPZ_SWEEP_ROWS_MAX 8192 /* bytes that always hold one wavelength's rows */

/* "alpha.csv", "cross_sections.csv", "diagnostics.csv". */
const char *dpz_sweep_table_file(dpz_table_kind kind);
/* The column header line, without its newline. */
const char *dpz_sweep_table_columns(dpz_table_kind kind);
/* The whole head of a new table: '#' comment lines (program version, units), then the
 * column header, each ending in '\n'. Written into buf (cap bytes); returns the length,
 * 0 if cap is too small. */
size_t dpz_sweep_table_head(dpz_table_kind kind, char *buf, size_t cap);

/* Formats the rows of one wavelength for a table (each ending in '\n'; %.17g numbers,
 * "nan" where a value is not available). Returns the length, 0 if cap is too small. */
size_t dpz_sweep_rows(dpz_table_kind kind, const dpz_sweep_result *r, char *buf,
                      size_t cap);

/* The rows of one wavelength inside a table's bytes. */
typedef struct dpz_table_group {
    double lambda0_m;
    int converged;
    size_t begin, end; /* byte range [begin, end) of the group's rows */
    size_t first_line; /* 1-based line number of the first row */
} dpz_table_group;

/* What dpz_sweep_table_scan found in a table. */
typedef struct dpz_table {
    size_t head_end;         /* bytes of the comment lines and the column header */
    size_t n_groups;         /* complete, well-formed groups from the start */
    dpz_table_group *groups; /* n_groups entries, malloc'd (dpz_sweep_table_free) */
    size_t good_end;         /* byte offset just after the last complete group */
    int damaged;             /* bytes after good_end that are not complete groups */
    size_t damage_line;      /* 1-based line of the first problem (if damaged) */
    char damage[256];        /* what was wrong there (if damaged) */
} dpz_table;

/* Scans a table's bytes: comment lines, the exact column header, then groups of rows
 * (36 per wavelength for alpha.csv, in block/row/col order with one wavelength and one
 * converged flag; one row otherwise). Every row must end in '\n' and every field must
 * parse. Scanning stops at the first problem, which is recorded (damaged = 1) rather
 * than returned: a killed sweep leaves such a tail, which --resume cuts off and merge
 * refuses. Returns DPZ_EFORMAT (naming `name`) only when the head itself is missing or
 * wrong, DPZ_ENOMEM on allocation failure. */
dpz_status dpz_sweep_table_scan(dpz_table_kind kind, const char *name, const char *buf,
                                size_t len, dpz_table *out, dpz_err *err);
void dpz_sweep_table_free(dpz_table *t);

/* Parses one data row (without its '\n') of a table into the fields of `r` that the row
 * carries (alpha rows: the one element at block/row/col; `elem` receives 0..35, i.e.
 * block * 9 + row * 3 + col with blocks ee, em, me, mm). DPZ_EFORMAT with a description
 * in err (without file or line: the caller adds them). */
dpz_status dpz_sweep_row_parse(dpz_table_kind kind, const char *line, size_t len,
                               dpz_sweep_result *r, int *elem, dpz_err *err);

/* ---- files ------------------------------------------------------------------------ */
/* Reads a whole file into a malloc'd, NUL-terminated buffer. */
dpz_status dpz_sweep_read_file(const char *path, char **buf, size_t *len, dpz_err *err);
/* Writes `len` bytes to DIR/NAME through a temporary file in DIR, fsync, rename and a
 * fsync of DIR, so that DIR/NAME is always either the old or the new content. */
dpz_status dpz_sweep_write_atomic(const char *dir, const char *name, const void *data,
                                  size_t len, dpz_err *err);
/* The same for content given in `n_parts` pieces, written one after another. */
dpz_status dpz_sweep_write_atomic_parts(const char *dir, const char *name,
                                        const void *const *parts, const size_t *lens,
                                        size_t n_parts, dpz_err *err);

/* ---- summary.json ----------------------------------------------------------------- */
/* Compares the inputs recorded by two summary.json texts: `version`, `input` (without
 * `path`), `materials` (without paths), `options`, `wavelengths_m`, `refine` (absent in
 * both is equal: runs without --refine) and, when `with_shard`, `shard`. Returns NULL
 * when they are equal, else the name of the first field that differs (a static string).
 * Either text failing to parse gives "summary". */
const char *dpz_sweep_inputs_differ(const char *summary_a, const char *summary_b,
                                    int with_shard);

/* Merges finished shard directories into OUT (see dpz_cli_merge and
 * docs/sweep-format.md): every check comes before any write. Statuses: DPZ_EINVAL
 * (different inputs, a wavelength missing or duplicated, a directory given twice, OUT not
 * empty), DPZ_EFORMAT (a damaged or unfinished table: file and line), DPZ_EIO (a missing
 * or unreadable directory or file, a failed write), DPZ_ENOMEM; each with one sentence in
 * err, and nothing left at OUT. */
dpz_status dpz_sweep_merge(const char *const *dirs, size_t n_dirs, const char *out,
                           dpz_err *err);

#ifdef __cplusplus
}
#endif
#endif
