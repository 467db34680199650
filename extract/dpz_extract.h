/* dpz_extract.h: from a voxel grid and materials to the dipole-order T block, the 6x6
 * polarizability tensor, the static tensor, the size expansion, cross sections and the
 * diagnostics that tell how far to trust them. The top-level API used by the CLI.
 *
 * Conventions: SI, exp(-i omega t), host of real index n_h,
 * k = 2 pi n_h / lambda0. The 6x6 tensor A = [[a_ee, a_em], [a_me, a_mm]] (m^3, row-major
 * A[row][col], rows/cols 0-2 electric x,y,z, 3-5 magnetic x,y,z) maps [E; Z_h H] at the
 * multipole origin to [p / (eps0 eps_h); Z_h m]. The T block uses the ordering
 * [N_{1,-1}, N_{1,0}, N_{1,+1}, M_{1,-1}, M_{1,0}, M_{1,+1}] (wave functions and T-block
 * construction in dpz_vswf.h and dpz_tblock.h; Mackowski 2002, JOSA A 19, 881). */
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
    /* Diagnostics (see dpz_diag.h) */
    double reciprocity;       /* max|A'-A'^T| / max|A'|, A' = D A D^H,
                                 D = diag(1,1,1,i,i,i) */
    double energy_balance;    /* ||T11 + T11^H + 2 sum_{n<=3} Tn1^H Tn1|| / ||T11||
                                 (Frobenius): ~0 for lossless particles */
    double absorption_eig[6]; /* eigenvalues of -(T11 + T11^H + 2 sum Tn1^H Tn1),
                                 ascending; >= 0 up to solver precision */
    double fluct_eig[6];      /* eigenvalues of (A - A^H)/(2i) - (k^3/(6 pi)) A^H A, m^3,
                                 ascending */
    double dipole_validity;   /* ||[T2; T3]|| / ||T11||, Frobenius */
    int lossless;             /* every occupied label has Im(eps) == 0 */
    dpz_rhs_report
        rhs[6];    /* the six solves: incident waves W_c = sum_m conj(U_cm)
                      RgN_1m (c = x, y, z), then the same for RgM (dpz_tblock.h) */
    int converged; /* all six right-hand sides converged */
} dpz_tensor;

/* The 6x6 tensor at vacuum wavelength lambda0_m. `warm`, when not NULL, points to six
 * vectors of 3*n_occ entries: the initial guesses on entry (e.g. the previous
 * wavelength's solutions; zero vectors for none) and the solutions on return (in the
 * order of out->rhs). Returns DPZ_ENOCONV (with `out` filled and out->converged = 0) when
 * any right-hand side fails to converge; DPZ_EINVAL for bad input (empty grid, lambda0 or
 * host index not positive, a label with the host's permittivity), DPZ_ERANGE for a size
 * parameter k a_eq below 1e-30 (the static tensor applies), DPZ_ENOMEM, DPZ_EFFTW,
 * DPZ_ELAPACK otherwise. Solver options left all zero (tol 0, max_iter 0) mean
 * dpz_solve_opts_default(). Builds one FFT operator per call. */
dpz_status dpz_tensor_compute(const dpz_setup *setup, double lambda0_m, dpz_tensor *out,
                              double complex *warm[6], dpz_err *err);

/* Static tensor chi (3x3, m^3, chi[row][col]): the k = 0 Clausius-Mossotti solve with
 * uniform fields along x, y, z (Purcell & Pennypacker 1973 at k = 0). eps_label taken
 * from setup. */
dpz_status dpz_static_compute(const dpz_setup *setup, double complex chi[3][3],
                              dpz_rhs_report rhs[3], dpz_err *err);

/* Size expansion V a_ee^-1(x) - C0 = C2 x^2 + C3 x^3 + C4 x^4, x = k a_eq,
 * permittivities fixed at setup->eps_label. With seven or more points the least-squares
 * fit also carries x^5 and x^6 columns (not reported) that absorb the truncation of the
 * series, so that it does not leak into C3. */
typedef struct dpz_expansion {
    double complex C0[3][3], C2[3][3], C3[3][3], C4[3][3]; /* dimensionless */
    double fit_residual;    /* max over elements of the relative least-squares residual */
    double radiative_check; /* ||C3 + (2i/9) I|| / (2/9), Frobenius */
    size_t n_points;
    double points[64]; /* the x values used */
    int converged;
    dpz_rhs_report worst; /* the worst right-hand side over all solves */
} dpz_expansion;

/* Largest size parameter x = k a_eq the expansion accepts. The fit is a truncated power
 * series in x (terms to x^4, with x^5 and x^6 as nuisance terms from 7 points): beyond
 * x = 1 the neglected terms are not small even for weakly scattering particles, and for a
 * sphere of relative index n the first Mie resonance, where the series fails, lies near
 * x = pi / n (Bohren & Huffman 1983, ch. 4; common practice to keep such fits well below
 * the first resonance). */
#define DPZ_EXPAND_X_MAX 1.0

/* Default list of size parameters (8 values in 0.05..0.4); returns the count. */
size_t dpz_expand_default_points(double x[64]);

/* For each x[i] (n of them, 4..64, in (0, DPZ_EXPAND_X_MAX], distinct): k = x / a_eq
 * (a_eq of the grid's volume), a_ee from the N-wave columns of the T block, then the
 * least-squares fit (LAPACKE_zgels) per element. C0 = V chi^-1 from dpz_static_compute; V
 * = the grid's volume. fit_residual: max over elements of ||residual|| / ||data||,
 * elements that vanish by symmetry measured against 1e-3 of the largest. DPZ_ENOCONV (out
 * filled, converged = 0) when a solve did not converge; DPZ_ERANGE when chi or a_ee is
 * singular.
 */
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

/* Plane wave with phase referred to the multipole origin o = tensor->origin_m:
 * E_inc(r) = E0 exp(i k khat . (r - o)) (khat is normalized here; E0 must be transverse,
 * |khat . E0| <= 1e-10 |E0|). ext by the optical theorem k Im(sum_j conj(E_inc,j) . p~_j)
 * / |E0|^2, abs = (k/|E0|^2) sum_j |p~_j|^2 (-Im(1/alpha_j) - k^3/(6 pi)) (Draine 1988,
 * ApJ 333, 848, in SI volume units), sca = ext - abs. The dipole-model numbers use
 * tensor->A with E(o) = E0, Z_h H(o) = khat x E0. Needs the tensor of the same setup at
 * the same wavelength (DPZ_EINVAL otherwise). DPZ_ENOCONV (out filled) when the solve did
 * not converge. */
dpz_status dpz_xsec_compute(const dpz_setup *setup, double lambda0_m,
                            const double khat[3], const double complex e0[3],
                            const dpz_tensor *tensor, dpz_xsec *out, dpz_err *err);

#ifdef __cplusplus
}
#endif
#endif
