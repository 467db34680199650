/* dpz_post.h: post-processing of polarizability tensors for designers: principal values
 * and axes, orientation averages, rotation by Euler angles, chirality and bianisotropy
 * measures. Tensors as in dpz_extract.h: A[6][6] in m^3, rows/cols 0-2 electric x, y, z,
 * 3-5 magnetic x, y, z; chi[3][3] in m^3. */
#ifndef DPZ_EXTRACT_POST_H
#define DPZ_EXTRACT_POST_H

#include <complex.h>

#include "dpz_common.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Principal values (ascending) and axes of the real symmetric part of Re(chi),
 * (Re chi + Re chi^T)/2, by LAPACKE_dsyev: axes[:, i] (column i, unit vector, grid frame)
 * belongs to values[i] (m^3). DPZ_ELAPACK on failure. */
dpz_status dpz_post_principal_real(double complex chi[3][3], double values[3],
                                   double axes[3][3], dpz_err *err);

/* Principal values (ascending, real, m^3) and orthonormal axes (columns, complex) of the
 * Hermitian part (B + B^H)/2 of a 3x3 block B (e.g. a_ee or a_mm), by LAPACKE_zheev; for
 * a reciprocal lossless particle B is symmetric, so this is the reactive (real) part.
 * axes may be NULL. */
dpz_status dpz_post_principal_herm(double complex blk[3][3], double values[3],
                                   double complex axes[3][3], dpz_err *err);

/* Orientation averages (the isotropic parts, trace / 3, m^3) of the four blocks:
 * avg[0] = ee, avg[1] = em, avg[2] = me, avg[3] = mm. For random orientations the
 * average of R X R^T over all rotations R is (tr X / 3) I (common practice; e.g.
 * Mishchenko et al. 2002 for orientation averaging). */
void dpz_post_orientation_average(double complex A[6][6], double complex avg[4]);

/* Active rotation R = Rz(alpha) Ry(beta) Rz(gamma) (z-y-z Euler angles, radians;
 * the z-y-z variant of the Euler angles, e.g. Goldstein, Classical Mechanics): the
 * columns of R are the rotated body axes in the grid frame. */
void dpz_post_euler_matrix(const double euler[3], double R[3][3]);

/* The tensor of the rotated particle: out = Q A Q^T, Q = blockdiag(R, R) (electric and
 * magnetic vectors both rotate with R under proper rotations). A and out may alias. */
void dpz_post_rotate6(double complex A[6][6], const double euler[3],
                      double complex out[6][6]);

/* The same for a 3x3 tensor: out = R chi R^T. chi and out may alias. */
void dpz_post_rotate3(double complex chi[3][3], const double euler[3],
                      double complex out[3][3]);

/* Isotropic chirality tr(a_em)/3 (m^3): the pseudoscalar part of the magneto-electric
 * block, which changes sign under mirror reflection and survives orientation averaging
 * (the chirality parameter of a bi-isotropic medium of such particles; Lindell, Sihvola,
 * Tretyakov & Viitanen 1994, "Electromagnetic Waves in Chiral and Bi-isotropic Media",
 * ch. 1-2). Zero for particles with a mirror plane or inversion centre. */
double complex dpz_post_chirality(double complex A[6][6]);

/* Bianisotropy measure ||a_em||_F / sqrt(||a_ee||_F ||a_mm||_F) (dimensionless): 0 for
 * inversion-symmetric particles (about the origin); of order 1 for strongly chiral or
 * omega-type particles. Returns 0 when a_ee or a_mm vanishes. */
double dpz_post_bianisotropy(double complex A[6][6]);

#ifdef __cplusplus
}
#endif
#endif
