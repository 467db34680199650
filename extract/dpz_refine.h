/* dpz_refine.h: results at several lattice spacings extrapolated to zero spacing, with an
 * error estimate, and the ladder of finer lattices of one object.
 *
 * Method: Richardson-type extrapolation by least squares over several spacings, as
 * proposed for the discrete-dipole approximation by Yurkin, Maltsev & Hoekstra, JOSA A
 * 23, 2592 (2006) (value(h) = v0 + c1 h + c2 h^2 fitted over 4 or more spacings, errors
 * from the fit). Measured on spheres against Mie theory (docs/accuracy.md): the error
 * is roughly linear in h but carries staircase oscillations (plain voxels) or plateaus
 * (boundary fill fractions), so the linear model is the default choice and the estimate
 * must include the irregular part, which is covered, not removed. */
#ifndef DPZ_EXTRACT_REFINE_H
#define DPZ_EXTRACT_REFINE_H

#include <complex.h>
#include <stddef.h>

#include "dpz_common.h"
#include "dpz_grid.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Largest number of spacings handled. */
#define DPZ_REFINE_MAX_LEVELS 6

typedef enum {
    DPZ_REFINE_LINEAR = 1,   /* v(h) = v0 + c1 h */
    DPZ_REFINE_QUADRATIC = 2 /* v(h) = v0 + c1 h + c2 h^2 */
} dpz_refine_model;

/* Extrapolates n_values complex quantities, given at n_levels spacings h[0..n_levels)
 * (any unit, > 0, distinct; v[l * n_values + e] is quantity e at spacing h[l]), to h = 0.
 * Real and imaginary parts are fitted separately by least squares (LAPACKE_dgels) with
 * the chosen model; value[e] receives v0 and error[e] the estimate of |v0 - v_exact| for
 * the real and imaginary parts (as the real and imaginary parts of error[e]):
 *     error = max(|v0 - v(h_min)|, |v0(linear) - v0(quadratic)| + 2 s(v0))
 *             + max_l |residual_l|:
 * the larger of Richardson's own estimate (the extrapolation step from the finest
 * spacing) and the fit-based one (the spread between the two models fitted to the same
 * points plus twice the standard error of v0 from the residual of the chosen fit, zero
 * without degrees of freedom), plus the largest residual of the chosen fit (the
 * irregular, staircase part of the data, which no smooth model removes). On 40 refined
 * sphere polarizabilities (docs/accuracy.md) the step alone missed the true error 4
 * times, the fit-based part alone 9 times, the larger of the two twice. The quadratic
 * needs 3 levels, the spread needs 3 levels; with 2 levels only the linear model applies
 * and the error is the extrapolation step |v0 - v(h_min)|. Statuses: DPZ_EINVAL (NULL
 * pointers, n_levels < 2 or > DPZ_REFINE_MAX_LEVELS, too few levels for the model, a
 * spacing <= 0, non-finite or repeated, a non-finite value), DPZ_ENOMEM, DPZ_ELAPACK. */
dpz_status dpz_refine_extrapolate(size_t n_levels, const double *h,
                                  const double complex *v, size_t n_values,
                                  dpz_refine_model model, double complex *value,
                                  double complex *error, dpz_err *err);

/* What the refined grids describe. */
typedef enum {
    DPZ_REFINE_SHAPE =
        0, /* a recorded shape, re-voxelized: results belong to the shape */
    DPZ_REFINE_MESH =
        1, /* a recorded STL mesh, re-voxelized: results belong to the mesh */
    DPZ_REFINE_SPLIT = 2 /* a plain voxel set, voxels split: results belong to the
                            staircase body of the voxels themselves */
} dpz_refine_kind;

/* The ladder of lattices for --refine: levels[0] is a copy of `base`; for a grid that
 * records a shape or an STL mesh (source_kind), level l is the shape or mesh re-voxelized
 * at spacing d / (1 + l/2) (with fill fractions, 4 samples per voxel edge, when
 * base->fill is set); for a plain voxel set level l splits every voxel into (l + 1)^3
 * sub-voxels (dpz_refine_grid_split). The grids are owned by the caller (free each with
 * dpz_grid_destroy). On failure every grid made so far is freed and levels[] is NULL.
 * Statuses: DPZ_EINVAL (NULL, n_levels < 2 or > DPZ_REFINE_MAX_LEVELS, unreadable
 * record), DPZ_EIO/DPZ_EFORMAT from the mesh reader, DPZ_ELIMIT (max_cells, 0 = default),
 * DPZ_ENOMEM. */
dpz_status dpz_refine_levels(const dpz_grid *base, size_t n_levels, size_t max_cells,
                             dpz_grid **levels, dpz_refine_kind *kind, dpz_err *err);

#ifdef __cplusplus
}
#endif
#endif
