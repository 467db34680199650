/* dpz_mie.h: Lorenz-Mie coefficients of a homogeneous sphere (Bohren & Huffman 1983,
 * "Absorption and Scattering of Light by Small Particles", ch. 4), used as the reference
 * the discrete-dipole extraction is tested against, and its dipole polarizabilities.
 *
 * Conventions: exp(-i omega t); m = sqrt(eps_rel) is the refractive index of the sphere
 * relative to the (non-magnetic, lossless) host, Im(m) >= 0 for absorbing spheres; the
 * size parameter x = k a is dimensionless (k the host wavenumber). */
#ifndef DPZ_EXTRACT_MIE_H
#define DPZ_EXTRACT_MIE_H

#include <complex.h>
#include <stddef.h>

#include "dpz_common.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Number of terms for convergent efficiencies: n_max = x + 4 x^(1/3) + 2 (Wiscombe 1980,
 * Appl. Opt. 19, 1505; as quoted by Bohren & Huffman 1983, app. A), rounded up, plus 2
 * spare terms. Always >= 3. */
size_t dpz_mie_nmax(double x);

/* Mie coefficients a_n, b_n for n = 1..nmax (a[0] is a_1) of a sphere of relative index m
 * and size parameter x (> 0, finite), Bohren & Huffman 1983 eqs. 4.56-4.57 with
 * mu_1 = mu. psi_n'(mx)/psi_n(mx) comes from the downward recursion of the logarithmic
 * derivative (B&H 4.89), which is stable for complex m. Writes nmax entries to each of
 * `a` and `b`. DPZ_EINVAL for x <= 0, non-finite input, m == 0 or nmax == 0 or > 10000,
 * DPZ_ENOMEM on allocation failure. */
dpz_status dpz_mie_coeffs(double complex m, double x, size_t nmax, double complex *a,
                          double complex *b, dpz_err *err);

/* Efficiencies and dipole coefficients of a sphere. */
typedef struct dpz_mie_result {
    double q_ext, q_sca, q_abs; /* efficiencies (cross section / (pi a^2)) */
    double complex a1, b1;      /* first electric and magnetic coefficients */
    size_t nmax;                /* terms used */
} dpz_mie_result;

/* Q_ext = (2/x^2) sum (2n+1) Re(a_n + b_n), Q_sca = (2/x^2) sum (2n+1)(|a_n|^2 + |b_n|^2)
 * (Bohren & Huffman 1983 eqs. 4.61-4.62), Q_abs = Q_ext - Q_sca, with dpz_mie_nmax(x)
 * terms. eps_rel: sphere permittivity relative to the host (m = sqrt(eps_rel), principal
 * root). Statuses as dpz_mie_coeffs. */
dpz_status dpz_mie_sphere(double complex eps_rel, double x, dpz_mie_result *out,
                          dpz_err *err);

/* Dipole polarizabilities of a sphere of radius a_m (m) in a host of wavenumber k (1/m),
 * in SI volume units (m^3): a_ee = 6 pi i a_1 / k^3 and a_mm = 6 pi i b_1 / k^3
 * (from the n = 1 terms of the scattered field, B&H 1983 sec. 4.4, as induced moments;
 * p / (eps0 eps_h) = a_ee E, m = a_mm H). Either output may be NULL. */
dpz_status dpz_mie_dipole_alpha(double complex eps_rel, double k, double a_m,
                                double complex *a_ee, double complex *a_mm, dpz_err *err);

#ifdef __cplusplus
}
#endif
#endif
