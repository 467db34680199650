/* dpz_refine_grid.h: finer lattices of a plain voxel set, for refinement studies.
 *
 * A plain voxel set is the object itself: its finer versions must describe the same
 * staircase body, which splitting each voxel into m^3 sub-voxels does exactly (the
 * discrete-dipole response of the split grids then converges, as m grows, to the
 * continuum response of that staircase body; a true shape must be re-voxelized instead,
 * see dpz_shape_voxelize and dpz_stl_voxelize). */
#ifndef DPZ_MESH_REFINE_GRID_H
#define DPZ_MESH_REFINE_GRID_H

#include <stddef.h>

#include "dpz_common.h"
#include "dpz_grid.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Splits every voxel of `grid` into m^3 sub-voxels of edge d/m (m >= 1) covering the same
 * volume: child (a, b, c), 0 <= a, b, c < m, of voxel (i, j, k) is voxel (m i + a, m j +
 * b, m k + c) of the new grid, with its centre at the parent centre + d ((a + 1/2)/m -
 * 1/2) (per axis, m), so the new origin is the old one shifted by d (1/(2m) - 1/2) per
 * axis. Children copy the parent's label and, when `grid->fill` is set, its fill fraction
 * (the partial volume inside the parent is not known, so it is spread uniformly; the
 * total occupied volume is kept). source_kind and source are copied. Borrows `grid`; the
 * result is a new grid owned by the caller. Statuses: DPZ_EINVAL (NULL grid, m == 0),
 * DPZ_ELIMIT (the new grid overflows or exceeds max_cells; 0 means
 * DPZ_GRID_DEFAULT_MAX_CELLS), DPZ_ENOMEM. */
dpz_status dpz_refine_grid_split(dpz_grid **out, const dpz_grid *grid, size_t m,
                                 size_t max_cells, dpz_err *err);

#ifdef __cplusplus
}
#endif
#endif
