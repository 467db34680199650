/* dpz_diag.h: diagnostics of an extracted dipole-order T block and 6x6 polarizability:
 * reciprocity, energy balance (unitarity of the T column), absorption and fluctuation
 * matrices, dipole validity. Conventions as dpz_extract.h and dpz_tblock.h: A in m^3,
 * rows/cols 0-2 electric, 3-5 magnetic; T blocks dimensionless, T[out][in]; k in 1/m. */
#ifndef DPZ_EXTRACT_DIAG_H
#define DPZ_EXTRACT_DIAG_H

#include <complex.h>

#include "dpz_common.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Reciprocity residual max|A' - A'^T| / max|A'| with A' = D A D^H, D = diag(1,1,1,i,i,i):
 * reciprocity means a_ee = a_ee^T, a_mm = a_mm^T, a_em = -a_me^T, i.e. A' symmetric
 * (Onsager-Casimir relations; e.g. Lindell et al. 1994, "Electromagnetic Waves in Chiral
 * and Bi-isotropic Media", ch. 1, written for these scaled fields). 0 for A = 0. */
double dpz_diag_reciprocity(double complex A[6][6]);

/* Energy balance of the T column: W = T11 + T11^H + 2 sum_{n=1..3} Tn1^H Tn1 (T1 = T,
 * T2 and T3 as in dpz_tensor; either may be NULL to truncate earlier). Unitarity of the
 * full T matrix of a lossless scatterer, T + T^H = -2 T^H T (Mishchenko et al. 2002,
 * ch. 5, in this normalization), makes W -> 0 as the order grows; -W is the
 * absorption matrix (positive semi-definite for passive particles). Writes
 * ||W||_F / ||T11||_F to *balance (0 when T11 = 0) and the eigenvalues of -W,
 * ascending, to eig (may be NULL). DPZ_ELAPACK if the eigensolver fails. */
dpz_status dpz_diag_absorption(double complex T[6][6], double complex T2[10][6],
                               double complex T3[14][6], double *balance, double eig[6],
                               dpz_err *err);

/* Fluctuation (absorption) tensor F = (A - A^H)/(2i) - (k^3/(6 pi)) A^H A (m^3), the
 * quadratic form of the power a dipole with polarizability A extracts from a field at its
 * position minus the power it radiates (radiated power of electric and magnetic point
 * dipoles as in Jackson 1999, sec. 9.2-9.3, in these scaled units k^3/(6 pi) |p~|^2);
 * by the fluctuation-dissipation theorem it gives the thermal dipole correlations (the
 * reference for that use is given from memory: Manjavacas & Garcia de Abajo 2012, Phys.
 * Rev. B 86, 075466). Hermitian; positive semi-definite for passive
 * particles. F (may be NULL) receives the matrix, eig (may be NULL) its eigenvalues,
 * ascending. k > 0. */
dpz_status dpz_diag_fluctuation(double k, double complex A[6][6], double complex F[6][6],
                                double eig[6], dpz_err *err);

/* Leakage term L = (6 pi / k^3) V (sum_{n=2,3} Tn1^H Tn1) V^H (m^3), V of dpz_tblock.h:
 * the part of F owed to radiation into orders n >= 2. For a lossless particle,
 * unitarity gives F = L exactly when all orders are included, since
 * F = -(3 pi / k^3) V (T11 + T11^H + 2 T11^H T11) V^H. T2, T3 may be NULL. */
void dpz_diag_leakage(double k, double complex T2[10][6], double complex T3[14][6],
                      double complex L[6][6]);

/* Dipole validity ||[T2; T3]||_F / ||T11||_F: the order-2 and -3 response to order-1
 * illumination relative to the order-1 response (0 when T11 = 0). */
double dpz_diag_validity(double complex T[6][6], double complex T2[10][6],
                         double complex T3[14][6]);

/* Eigenvalues (ascending) of the Hermitian part (H + H^H)/2 of a complex n x n row-major
 * matrix, n <= 6, by LAPACKE_zheev; vectors (may be NULL) receive the orthonormal
 * eigenvectors as columns (row-major n x n). DPZ_ELAPACK on failure. */
dpz_status dpz_diag_herm_eig(size_t n, const double complex *H, double *eig,
                             double complex *vectors, dpz_err *err);

#ifdef __cplusplus
}
#endif
#endif
