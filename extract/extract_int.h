/* extract_int.h: declarations shared by the files of extract/ only. */
#ifndef DPZ_EXTRACT_EXTRACT_INT_H
#define DPZ_EXTRACT_EXTRACT_INT_H

#include <complex.h>
#include <stddef.h>

#include "dpz_common.h"
#include "dpz_grid.h"

/* C11 CMPLX where the C library does not provide it (glibc defines it only for compilers
 * it recognises as GCC >= 4.7, not for clang). Finite arguments only. */
#ifndef CMPLX
#define CMPLX(x, y) ((double complex)((double)(x) + _Complex_I * (double)(y)))
#endif

/* pi to double precision (M_PI is not part of strict C17). */
#define DPZ_XPI 3.14159265358979323846

/* Multipole origin of a setup-like request: `origin` when has_origin, else the centroid
 * of the occupied voxel centres (grid frame, m). */
void dpz__extract_origin(const dpz_grid *grid, int has_origin, const double origin[3],
                         double out[3]);

/* V = blockdiag(U, -i U), U = [e_{-1} e_0 e_{+1}] (columns), the unitary map between the
 * order-1 wave basis and Cartesian components (defined in tblock.c). */
void dpz__vmatrix(double complex V[6][6]);

/* out = f * L X R with L = V (left_h = 0) or V^H (left_h = 1), R likewise. */
void dpz__sandwich(double complex V[6][6], int left_h, double complex X[6][6],
                   int right_h, double complex f, double complex out[6][6]);

/* Spherical Bessel functions of the first kind j_0..j_nmax at real rho >= 0 (nmax + 1
 * values), accurate for every order: the power series for rho < 1 and Miller's downward
 * recursion normalized by sum (2n+1) j_n^2 = 1 (Abramowitz & Stegun 10.1.19 and 10.1.50)
 * otherwise. */
void dpz__sph_jn(double rho, size_t nmax, double *j);

/* Spherical Bessel functions of the second kind y_0..y_nmax at rho > 0 by upward
 * recursion (A&S 10.1.19), which is stable for y_n. */
void dpz__sph_yn(double rho, size_t nmax, double *y);

#endif
