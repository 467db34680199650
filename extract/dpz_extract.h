/* dpz_extract.h: from a voxel grid and materials to the dipole-order T block, the 6x6
 * polarizability tensor, the static tensor, the size expansion, cross sections and the
 * diagnostics that tell how far to trust them. The top-level API used by the CLI.
 *
 * Conventions (CONVENTIONS.md 1 and 7): SI, exp(-i omega t), host of real index n_h,
 * k = 2 pi n_h / lambda0. The 6x6 tensor A = [[a_ee, a_em], [a_me, a_mm]] (m^3, row-major
 * A[row][col], rows/cols 0-2 electric x,y,z, 3-5 magnetic x,y,z) maps [E; Z_h H] at the
 * multipole origin to [p / (eps0 eps_h); Z_h m]. The T block uses the ordering
 * [N_{1,-1}, N_{1,0}, N_{1,+1}, M_{1,-1}, M_{1,0}, M_{1,+1}] (CONVENTIONS.md 7.3). */
#ifndef DPZ_EXTRACT_EXTRACT_H
#define DPZ_EXTRACT_EXTRACT_H

#include <complex.h>
#include <stddef.h>

#include "dpz_common.h"
#include "dpz_dipole.h"
#include "dpz_grid.h"
#include "dpz_iter.h"
#include "dpz_operator.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Everything that fixes a solve apart from the wavelength. */
typedef struct dpz_setup {
    const dpz_grid *grid;          /* borrowed */
    double complex eps_label[256]; /* permittivity per label, relative to vacuum, at the
                                      wavelength of the call (entry 0 unused) */
    double host_index;             /* n_h, real, >= 1 not required but > 0 */
    dpz_dipole_model model;
    dpz_solve_opts solve;
    dpz_op_opts op;
    int has_origin;     /* 0: centroid of occupied voxel centres */
    double origin_m[3]; /* multipole origin, grid frame, m (if has_origin) */
} dpz_setup;

/* Outcome of one right-hand side. */
typedef struct dpz_rhs_report {
    dpz_status status;
    size_t iterations;
    double residual; /* final relative residual */
} dpz_rhs_report;

typedef struct dpz_tensor {
    double lambda0_m, k_per_m, host_index;
    double origin_m[3];
    double complex A[6][6];   /* 6x6 polarizability, m^3 */
    double complex T[6][6];   /* order-1 T block, T[out][in] */
    double complex T2[10][6]; /* order-2 outgoing coefficients for the six order-1
                                 incident waves: rows N_{2,-2..2}, M_{2,-2..2} */
    double complex T3[14][6]; /* order 3 likewise: N_{3,-3..3}, M_{3,-3..3} */
    /* Diagnostics (CONVENTIONS.md 7.6, 7.7) */
    double reciprocity;       /* max|A'-A'^T| / max|A'|, A' = D A D^H (7.6) */
    double energy_balance;    /* ||T11 + T11^H + 2 sum_{n<=3} Tn1^H Tn1|| / ||T11||
                                 (Frobenius): ~0 for lossless particles */
    double absorption_eig[6]; /* eigenvalues of -(T11 + T11^H + 2 sum Tn1^H Tn1),
                                 ascending; >= 0 up to solver precision */
    double fluct_eig[6];      /* eigenvalues of (A - A^H)/(2i) - (k^3/(6 pi)) A^H A, m^3,
                                 ascending */
    double dipole_validity;   /* ||[T2; T3]|| / ||T11||, Frobenius */
    int lossless;             /* every occupied label has Im(eps) == 0 */
    dpz_rhs_report rhs[6];
    int converged; /* all six right-hand sides converged */
} dpz_tensor;

/* The 6x6 tensor at vacuum wavelength lambda0_m. `warm`, when not NULL, points to six
 * vectors of 3*n_occ entries: the initial guesses on entry (e.g. the previous
 * wavelength's solutions; zero vectors for none) and the solutions on return. Returns
 * DPZ_ENOCONV (with `out` filled and out->converged = 0) when any right-hand side fails
 * to converge. */
dpz_status dpz_tensor_compute(const dpz_setup *setup, double lambda0_m, dpz_tensor *out,
                              double complex *warm[6], dpz_err *err);

/* Static tensor chi (3x3, m^3, chi[row][col]): the k = 0 Clausius-Mossotti solve with
 * uniform fields along x, y, z (CONVENTIONS.md 3). eps_label taken from setup. */
dpz_status dpz_static_compute(const dpz_setup *setup, double complex chi[3][3],
                              dpz_rhs_report rhs[3], dpz_err *err);

/* Size expansion V a_ee^-1(x) - C0 = C2 x^2 + C3 x^3 + C4 x^4 (DESIGN.md), x = k a_eq,
 * permittivities fixed at setup->eps_label. */
typedef struct dpz_expansion {
    double complex C0[3][3], C2[3][3], C3[3][3], C4[3][3]; /* dimensionless */
    double fit_residual;    /* max over elements of the relative least-squares residual */
    double radiative_check; /* ||C3 + (2i/9) I|| / (2/9), Frobenius */
    size_t n_points;
    double points[64]; /* the x values used */
    int converged;
    dpz_rhs_report worst; /* the worst right-hand side over all solves */
} dpz_expansion;

/* Default list of size parameters (8 values in 0.05..0.4); returns the count. */
size_t dpz_expand_default_points(double x[64]);

dpz_status dpz_expand_compute(const dpz_setup *setup, const double *x, size_t n,
                              dpz_expansion *out, dpz_err *err);

/* Cross sections for a plane wave E0 exp(i k khat.r) (khat unit vector, E0 complex, not
 * necessarily normalized; cross sections are per |E0|^2), m^2. */
typedef struct dpz_xsec {
    double ext, abs, sca; /* full solve: optical theorem, voxel absorption, difference */
    double ext_dip, abs_dip, sca_dip; /* point-dipole model A alone */
    double rel_diff;                  /* |ext - ext_dip| / ext */
    dpz_rhs_report rhs;
} dpz_xsec;

/* Needs the tensor at the same wavelength for the dipole-model numbers. */
dpz_status dpz_xsec_compute(const dpz_setup *setup, double lambda0_m,
                            const double khat[3], const double complex e0[3],
                            const dpz_tensor *tensor, dpz_xsec *out, dpz_err *err);

#ifdef __cplusplus
}
#endif
#endif
