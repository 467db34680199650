/* dpz_ellipsoid.h: static polarizability of a homogeneous ellipsoid, the reference for
 * the static discrete-dipole tensor: depolarization factors (Osborn 1945, Phys. Rev. 67,
 * 351; Bohren & Huffman 1983 eq. 5.33) through Carlson's symmetric elliptic integral
 * R_D (Carlson 1995, Numer. Algorithms 10, 13). */
#ifndef DPZ_EXTRACT_ELLIPSOID_H
#define DPZ_EXTRACT_ELLIPSOID_H

#include <complex.h>

#include "dpz_common.h"

#ifdef __cplusplus
extern "C" {
#endif

/* R_D(x, y, z) = (3/2) int_0^inf (t+x)^(-1/2) (t+y)^(-1/2) (t+z)^(-3/2) dt for x, y >= 0
 * (at most one of them zero) and z > 0, by Carlson's duplication algorithm (Carlson 1995,
 * sec. 2, relative error below 1e-15). Returns NaN for arguments outside the domain. */
double dpz_carlson_rd(double x, double y, double z);

/* Depolarization factors of the ellipsoid with semi-axes a[0..2] (any length unit, > 0):
 * L_i = (a1 a2 a3 / 3) R_D(a_j^2, a_k^2, a_i^2) (Osborn 1945; B&H 5.33), sum L_i = 1.
 * DPZ_EINVAL for a non-positive or non-finite semi-axis. */
dpz_status dpz_ellipsoid_depolarization(const double a[3], double L[3], dpz_err *err);

/* Body-frame static polarizabilities a_i = V (eps_rel - 1) / (1 + L_i (eps_rel - 1)),
 * V = 4 pi a1 a2 a3 / 3 with semi-axes in metres (result in m^3; B&H 1983 eq. 5.32 in
 * SI volume units); eps_rel relative to the host. DPZ_EINVAL as above, DPZ_ERANGE when
 * eps_rel sits on a depolarization resonance (1 + L_i (eps_rel - 1) = 0). */
dpz_status dpz_ellipsoid_alpha(double complex eps_rel, const double a[3],
                               double complex alpha[3], dpz_err *err);

#ifdef __cplusplus
}
#endif
#endif
