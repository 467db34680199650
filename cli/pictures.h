/* pictures.h: the picture commands of dipolize, `plot`, `preview` and `report`, and the
 * pieces they share (the sweep tables in memory, plot and preview rendering).
 *
 * Each command function takes the arguments after the program name: argv[0] is the
 * subcommand name ("plot", "preview", "report"), argv[1..argc-1] its arguments. It prints
 * what it wrote on stdout, and on failure one message on stderr prefixed "dipolize: ",
 * and returns the process exit code: 0 success, 1 failure that is not the user's input
 * (out of memory), 2 bad input or usage (missing or damaged files, unwritable output).
 * Output files appear only complete: they are rendered in memory first and written
 * through a temporary file renamed into place. */
#ifndef DPZ_CLI_PICTURES_H
#define DPZ_CLI_PICTURES_H

#include <complex.h>
#include <stddef.h>

#include "dpz_common.h"
#include "dpz_grid.h"
#include "dpz_svg.h"

#ifdef __cplusplus
extern "C" {
#endif

/* dipolize plot DIR [-o OUTDIR]: SVG spectra of a sweep directory (default OUTDIR:
 * DIR/plots). */
int dpz_cli_plot(int argc, char **argv);
/* dipolize preview FILE [-o OUT.svg] [--spacing LEN]: SVG of a voxel set (default OUT:
 * FILE with its extension replaced by "-preview.svg"). */
int dpz_cli_preview(int argc, char **argv);
/* dipolize report DIR [-o REPORT.html]: one self-contained HTML page about a sweep
 * (default DIR/report.html). */
int dpz_cli_report(int argc, char **argv);

/* ---- shared by plot.c, preview.c and report.c (internal to cli/) ----------------------
 */

/* The tables of a sweep directory (docs/sweep-format.md), each sorted by wavelength.
 * Missing values are NaN. */
typedef struct dpz_pic_sweep {
    /* alpha.csv */
    size_t n;                  /* wavelengths with at least one alpha row */
    double *lambda_m;          /* n vacuum wavelengths, m, ascending */
    double complex (*A)[6][6]; /* n tensors A[row][col], m^3 (blocks ee em / me mm) */
    int *conv;                 /* n flags: 1 converged */
    /* cross_sections.csv (ncs = 0 when the file is absent) */
    size_t ncs;
    double *cs_lambda_m; /* ncs wavelengths, m */
    double *cs[6];       /* ext, abs, sca, ext_dipole, abs_dipole, sca_dipole, m^2 */
    double *cs_rel;      /* rel_diff */
    int *cs_conv;
    /* diagnostics.csv (nd = 0 when the file is absent) */
    size_t nd;
    double *d_lambda_m; /* nd wavelengths, m */
    double *d_iter, *d_resid, *d_recip, *d_energy, *d_minabs, *d_validity, *d_minfluct;
    int *d_conv;
    int has_cs, has_diag; /* 1 when the file existed */
} dpz_pic_sweep;

/* Reads DIR/alpha.csv (required), DIR/cross_sections.csv and DIR/diagnostics.csv
 * (optional). Damaged files give DPZ_EFORMAT with "FILE:LINE: what was wrong"; a missing
 * alpha.csv DPZ_EIO. */
dpz_status dpz__pic_sweep_load(const char *dir, dpz_pic_sweep *sw, dpz_err *err);
void dpz__pic_sweep_free(dpz_pic_sweep *sw);

/* The plots. */
typedef enum {
    DPZ_PIC_ALPHA_EE = 0,
    DPZ_PIC_ALPHA_MM,
    DPZ_PIC_ALPHA_EM,
    DPZ_PIC_CROSS,
    DPZ_PIC_VALIDITY,
    DPZ_PIC_COUNT
} dpz_pic_kind;

/* File name of a plot ("alpha_ee.svg"). */
const char *dpz__pic_plot_file(dpz_pic_kind kind);
/* 1 if the sweep has what the plot needs (alpha_em: only when max|a_em| > 1e-3 max|A|).
 */
int dpz__pic_plot_wanted(const dpz_pic_sweep *sw, dpz_pic_kind kind);
/* Appends the plot (640 x 400 px) to `s`. */
void dpz__pic_plot_render(dpz_svg *s, const dpz_pic_sweep *sw, dpz_pic_kind kind,
                          int standalone);

/* Appends the voxel preview of `grid` (projections and mid-plane slices, scale bar in
 * nm) to `s`; `title` may be NULL. DPZ_EINVAL for a grid without occupied voxels. */
dpz_status dpz__pic_preview_render(dpz_svg *s, const dpz_grid *grid, const char *title,
                                   int standalone, dpz_err *err);

/* Eigen-decomposition of a real symmetric 3x3 matrix by cyclic Jacobi rotations (C. G. J.
 * Jacobi 1846; Golub & Van Loan, Matrix Computations, 4th ed. 2013, section 8.5): w[i]
 * eigenvalues in descending order, v[r][i] the unit eigenvector of w[i] in column i. */
void dpz__pic_eigsym3(const double a[3][3], double w[3], double v[3][3]);

/* Reads a whole file into a NUL-terminated malloc'd buffer; DPZ_EIO with the path and
 * strerror on failure, DPZ_ELIMIT above `max_bytes`. */
dpz_status dpz__pic_read_file(const char *path, size_t max_bytes, char **out, size_t *len,
                              dpz_err *err);

/* Joins a directory and a file name into a malloc'd string (NULL on allocation failure).
 */
char *dpz__pic_join(const char *dir, const char *name);

/* Prints "dipolize: MSG" on stderr and returns the exit code for `st` (1 for DPZ_ENOMEM,
 * else 2). */
int dpz__pic_fail(dpz_status st, const char *msg);

#ifdef __cplusplus
}
#endif
#endif
