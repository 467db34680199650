/* dpz_tblock.h: the dipole-order T block of a discrete-dipole system and its conversion
 * to the 6x6 Cartesian polarizability.
 *
 * Construction (Mackowski 2002, JOSA A 19, 881, for the T matrix of a coupled-dipole
 * system): illuminate the dipole set with each of the six regular order-1 waves
 * RgPsi_in in the order [RgN_{1,-1}, RgN_{1,0}, RgN_{1,+1}, RgM_{1,-1}, RgM_{1,0},
 * RgM_{1,+1}] (unit amplitude, V/m, normalization of dpz_vswf.h, positions relative to
 * the multipole origin), solve alpha^-1 p~ - G p~ = E_inc, and project the induced
 * dipoles onto the outgoing waves: the outgoing coefficients of point dipoles p~_j at r_j
 * are q_mn = i k^3 sum_j conj(RgN_mn(r_j)) . p~_j,   p_mn = i k^3 sum_j conj(RgM_mn(r_j))
 * . p~_j (from the Green-dyadic expansion G(r - r') = i k^3 sum [M(r) RgM(r')^H + N(r)
 * RgN(r')^H], Tsang, Kong & Ding 2000), so that E_sca = sum (p_mn M_mn + q_mn N_mn)
 * outside the particle and [q; p]_out = T [a^N; a^M]_in. */
#ifndef DPZ_EXTRACT_TBLOCK_H
#define DPZ_EXTRACT_TBLOCK_H

#include <complex.h>
#include <stddef.h>

#include "dpz_common.h"
#include "dpz_extract.h"
#include "dpz_grid.h"
#include "dpz_iter.h"
#include "dpz_operator.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Incident field of the order-1 regular wave number `col` (0..5, order above) at the
 * occupied voxel centres of `grid` relative to `origin` (m), host wavenumber k (1/m):
 * e[3 v + c], V/m, compact order of grid->occ. DPZ_EINVAL for a bad column or k <= 0. */
dpz_status dpz_tblock_incident(const dpz_grid *grid, const double origin[3], double k,
                               int col, double complex *e, dpz_err *err);

/* Outgoing coefficients of the dipoles p~ (3 n_occ entries, V m^2, compact order) up to
 * order nmax (1..DPZ_VSWF_NMAX): q[i] (N waves) and p[i] (M waves), i = n(n+1)+m-1, each
 * dpz_vswf_count(nmax) long, in V/m (the amplitudes multiplying the outgoing waves).
 * Either output may be NULL. */
dpz_status dpz_tblock_project(const dpz_grid *grid, const double origin[3], double k,
                              size_t nmax, const double complex *ptilde,
                              double complex *q, double complex *p, dpz_err *err);

/* Columns of the T block by solving with the operator `op` (3 n_occ unknowns, e.g. the
 * FFT or the dense operator of dpz_operator.h at the same k). `cols` selects the incident
 * wave types: any of bits 0-2 solves for the three N waves, any of bits 3-5 for the
 * three M waves (0x3f: all six; 0x07: the N waves only, enough for a_ee).
 * T[out][in] (dimensionless) receives the order-1 block, T2 (rows N_{2,-2..2},
 * M_{2,-2..2}) and T3 (N_{3,-3..3}, M_{3,-3..3}), when not NULL, the order-2 and order-3
 * coefficients of the same solves; columns not solved for are zero. The solves use the
 * Cartesian combinations W_c = sum_m conj(U_cm) RgPsi_1m (c = x, y, z; U as below), which
 * near the origin are linearly polarized fields along x^_c, and the T columns follow by
 * linearity; solve w (0..5: N-type x, y, z, then M-type x, y, z) is reported in rep[w],
 * and `warm` (may be NULL) holds six vectors of 3 n_occ entries for these six solves:
 * initial guesses on entry and solutions on return (entries of types not solved for are
 * untouched). A solve that stops without converging (DPZ_ENOCONV, DPZ_EBREAKDOWN,
 * DPZ_ESTAGNATION) is reported in rep and its columns are still filled from the last
 * iterate; the function then returns DPZ_ENOCONV after doing all solves. Other failures
 * (memory, invalid input) return at once. */
dpz_status dpz_tblock_solve(const dpz_grid *grid, const double origin[3], double k,
                            const dpz_linop *op, const dpz_solve_opts *opts,
                            unsigned cols, double complex T[6][6],
                            double complex T2[10][6], double complex T3[14][6],
                            double complex *warm[6], dpz_rhs_report rep[6], dpz_err *err);

/* T block -> 6x6 polarizability (m^3), with U = [e_{-1} e_0 e_{+1}] and
 * V = blockdiag(U, -i U): A = -(6 pi i / k^3) V T V^H. The -i of the magnetic block comes
 * from Z_h H(0) = -i sum a^M_1m e_m / sqrt(6 pi) for the incident waves, and the factor
 * from the dipole projection q_1m = i k^3 conj(e_m) . p~ / sqrt(6 pi), p_1m = -k^3
 * conj(e_m) . (Z_h m) / sqrt(6 pi) (Mishchenko et al. 2002 app. C; Jackson 9.4 for the
 * dipole fields). For a sphere T_NN = -a_1, T_MM = -b_1 (Bohren & Huffman 1983) and it
 * gives a_ee = 6 pi i a_1 / k^3, a_mm = 6 pi i b_1 / k^3. */
void dpz_tblock_to_alpha(double k, double complex T[6][6], double complex A[6][6]);
/* (T is read only; the parameter is not const-qualified so that callers can pass plain
 * arrays without a cast in C17.) */

/* The inverse: T = (i k^3 / (6 pi)) V^H A V. */
void dpz_alpha_to_tblock(double k, double complex A[6][6], double complex T[6][6]);

#ifdef __cplusplus
}
#endif
#endif
