/* dpz_vswf.h: vector spherical harmonics and vector spherical wave functions (VSWF).
 *
 * Normalization (Tsang, Kong & Ding 2000, "Scattering of Electromagnetic Waves: Theories
 * and Applications", ch. 1; Mishchenko, Travis & Lacis 2002, app. C, with orthonormal
 * harmonics): Y_n^m are the orthonormal spherical harmonics with the Condon-Shortley
 * phase, Y_n^{-m} = (-1)^m conj(Y_n^m) (as scipy.special.sph_harm). With grad_s = theta^
 * d_theta
 * + phi^ (1/sin theta) d_phi,
 *     C_nm = [theta^ (i m / sin theta) Y - phi^ d_theta Y] / sqrt(n(n+1))
 *     B_nm = r^ x C_nm = [theta^ d_theta Y + phi^ (i m / sin theta) Y] / sqrt(n(n+1))
 *     P_nm = r^ Y_n^m
 * are orthonormal on the unit sphere, and
 *     M_mn = z_n(kr) C_nm,
 *     N_mn = curl M_mn / k = sqrt(n(n+1)) z_n(kr)/(kr) P_nm + [(kr z_n(kr))'/(kr)] B_nm,
 * with z_n = j_n for the regular waves RgM, RgN and z_n = h_n^(1) = j_n + i y_n for the
 * outgoing ones (time dependence exp(-i omega t)). Fields are Cartesian (x, y, z).
 *
 * Indexing: for 1 <= n <= nmax and -n <= m <= n the pair (n, m) has the linear index
 * n (n + 1) + m - 1, so there are nmax (nmax + 2) pairs. */
#ifndef DPZ_EXTRACT_VSWF_H
#define DPZ_EXTRACT_VSWF_H

#include <complex.h>
#include <stddef.h>

#include "dpz_common.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Largest order accepted (work arrays live on the stack). */
#define DPZ_VSWF_NMAX 32

typedef enum {
    DPZ_VSWF_REGULAR = 0, /* z_n = j_n: finite everywhere */
    DPZ_VSWF_OUTGOING = 1 /* z_n = h_n^(1): singular at r = 0 */
} dpz_vswf_kind;

/* Number of (n, m) pairs for orders 1..nmax. */
static inline size_t dpz_vswf_count(size_t nmax)
{
    return nmax * (nmax + 2);
}

/* Linear index of (n, m), n >= 1, |m| <= n. */
static inline size_t dpz_vswf_index(size_t n, int m)
{
    return (size_t)((long)(n * (n + 1)) + m - 1);
}

/* Spherical unit vector e_m (m = -1, 0, +1): e_{+1} = -(x^ + i y^)/sqrt 2, e_0 = z^,
 * e_{-1} = (x^ - i y^)/sqrt 2 (Edmonds 1957, sec. 5.1), so that conj(e_m) . e_m' = delta
 * and Y_1^m(r^) = sqrt(3/(4 pi)) r^ . e_m. */
void dpz_vswf_unit(int m, double complex e[3]);

/* Vector spherical harmonics C_nm, B_nm, P_nm (layout [index][3]) for every (n, m) with
 * n <= nmax at the direction `dir` (any non-zero vector; only its direction matters). On
 * the z axis the limits of (m / sin theta) P_n^m and d_theta P_n^m are used with phi = 0.
 * Any of C, B, P may be NULL. DPZ_EINVAL for nmax outside 1..DPZ_VSWF_NMAX or a zero or
 * non-finite direction. Thread-safe, no allocation. */
dpz_status dpz_vsh_eval(size_t nmax, const double dir[3], double complex *C,
                        double complex *B, double complex *P, dpz_err *err);

/* M_mn(r) and N_mn(r) (layout [index][3], dimensionless) for every (n, m) with n <= nmax,
 * at the point r (m, relative to the expansion origin), host wavenumber k (1/m, > 0).
 * Regular waves are finite everywhere: at r = 0, RgM = 0, RgN_1m = e_m / sqrt(6 pi) and
 * the higher orders vanish; on the z axis the angular limits are used. Outgoing waves are
 * refused at r = 0 (DPZ_EINVAL). Either of M, N may be NULL. Thread-safe, no allocation.
 */
dpz_status dpz_vswf_eval(dpz_vswf_kind kind, size_t nmax, double k, const double r[3],
                         double complex *M, double complex *N, dpz_err *err);

/* Order-1 waves in Cartesian form, valid at r = 0 and on the z axis:
 *     M_1m = (c k / sqrt 2) f(kr) (e_m x r),
 *     N_1m = (c / sqrt 2) [g(kr) e_m + (2 f(kr) - g(kr)) r^ (r^ . e_m)],
 * c = sqrt(3/(4 pi)), f(rho) = z_1(rho)/rho, g(rho) = (rho z_1(rho))'/rho (from the
 * definitions above with Y_1^m = c r^ . e_m). m in -1..1; r in m, k in 1/m. DPZ_EINVAL
 * for |m| > 1, k <= 0, or an outgoing wave at r = 0. */
dpz_status dpz_vswf1_cart(dpz_vswf_kind kind, int m, double k, const double r[3],
                          double complex M[3], double complex N[3], dpz_err *err);

/* Expansion of the plane wave E0 exp(i k khat . r) = sum a^M_mn RgM_mn + a^N_mn RgN_mn
 * (Tsang, Kong & Ding 2000; Mishchenko et al. 2002 app. C, in this normalization):
 *     a^M_mn = 4 pi i^n conj(C_nm(khat)) . E0,   a^N_mn = 4 pi i^(n-1) conj(B_nm(khat)) .
 * E0. Writes dpz_vswf_count(nmax) coefficients to each of aM and aN (V/m when E0 is in
 * V/m). khat must be non-zero (it is normalized); E0 should be transverse to khat. */
dpz_status dpz_vswf_plane_wave(size_t nmax, const double khat[3],
                               const double complex e0[3], double complex *aM,
                               double complex *aN, dpz_err *err);

#ifdef __cplusplus
}
#endif
#endif
