/* dpz_grid.h: the voxel grid, the object every other layer works on.
 *
 * A grid is a box of nx * ny * nz cubic voxels of edge d (metres). Voxel (i, j, k) has
 * its centre at origin + d * (i, j, k) (origin in metres: the centre of voxel (0,0,0), in
 * the grid frame). Each voxel carries a uint8 label: 0 is the host medium, 1..255 are
 * materials. Arrays are flat and row-major with k fastest:
 *     index(i, j, k) = (i * ny + j) * nz + k.
 * An optional per-voxel fill fraction in [0, 1] describes boundary voxels that are only
 * partly inside a true shape (NULL when every occupied voxel is full). */
#ifndef DPZ_MESH_GRID_H
#define DPZ_MESH_GRID_H

#include <stddef.h>
#include <stdint.h>

#include "dpz_common.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Default upper bound on nx * ny * nz accepted by constructors and readers (the user can
 * raise it: readers and shapes take a limit argument). 2^28 cells = 256 Mi labels. */
#define DPZ_GRID_DEFAULT_MAX_CELLS ((size_t)1 << 28)

/* What the grid describes, so that it can be re-voxelized at another spacing. */
typedef enum {
    DPZ_SOURCE_VOXELS = 0, /* a plain voxel set: the voxels are the object */
    DPZ_SOURCE_SHAPE = 1,  /* a built-in shape; `source` holds its record
                              "dipolize-shape v1 KIND key=value ..." (dpz_shape.h) */
    DPZ_SOURCE_MESH = 2    /* an STL mesh; `source` holds the record
                              "dipolize-mesh v1 unit=METRES path=PATH" (dpz_stl.h) */
} dpz_source_kind;

typedef struct dpz_grid {
    size_t nx, ny, nz; /* voxels per axis (each >= 1) */
    double d;          /* voxel edge, m (> 0, finite) */
    double origin[3];  /* centre of voxel (0,0,0) in the grid frame, m */
    uint8_t *label;    /* nx*ny*nz labels, index (i*ny + j)*nz + k; 0 = host */
    float *fill;       /* NULL, or nx*ny*nz fill fractions in [0, 1] */
    size_t n_occ;      /* number of occupied voxels (label != 0) */
    size_t *occ;       /* n_occ linear indices of occupied voxels, ascending */
    dpz_source_kind source_kind;
    char source[1024]; /* shape specification or mesh reference; "" for voxels */
} dpz_grid;

/* Creates an all-host grid (every label 0). Fails with DPZ_EINVAL for a zero dimension or
 * a non-positive or non-finite spacing, DPZ_ELIMIT when nx*ny*nz overflows or exceeds
 * `max_cells` (0 means DPZ_GRID_DEFAULT_MAX_CELLS), DPZ_ENOMEM on allocation failure.
 * The origin is set so that the grid is centred on (0, 0, 0). */
dpz_status dpz_grid_create(dpz_grid **out, size_t nx, size_t ny, size_t nz, double d_m,
                           size_t max_cells, dpz_err *err);

/* Bytes a grid of nx * ny * nz voxels needs (header, labels, the occupied list when every
 * voxel is occupied, and fill fractions when with_fill != 0), so that a caller can check
 * memory before creating it; 0 when the count overflows size_t. */
size_t dpz_grid_memory_need(size_t nx, size_t ny, size_t nz, int with_fill);

/* Frees the grid and its arrays; NULL is a no-op. */
void dpz_grid_destroy(dpz_grid *grid);

/* Rebuilds `occ` and `n_occ` from the labels; call after changing labels by hand. */
dpz_status dpz_grid_update(dpz_grid *grid, dpz_err *err);

/* Deep copy (labels, fill, occupied list, source). */
dpz_status dpz_grid_clone(dpz_grid **out, const dpz_grid *grid, dpz_err *err);

/* Linear index of voxel (i, j, k). */
static inline size_t dpz_grid_index(const dpz_grid *g, size_t i, size_t j, size_t k)
{
    return (i * g->ny + j) * g->nz + k;
}

/* Centre of the voxel with linear index `idx`, m, grid frame. */
void dpz_grid_centre(const dpz_grid *grid, size_t idx, double r[3]);

/* Occupied volume, m^3: d^3 times the number of occupied voxels (or the sum of their fill
 * fractions when `fill` is set). */
double dpz_grid_volume(const dpz_grid *grid);

/* Equal-volume radius a_eq = (3 V / (4 pi))^(1/3), m. */
double dpz_grid_aeq(const dpz_grid *grid);

/* Centroid of the occupied voxel centres, m, grid frame (zero for an empty grid). */
void dpz_grid_centroid(const dpz_grid *grid, double c[3]);

/* Voxel count of every label: counts[0..255]. */
void dpz_grid_label_counts(const dpz_grid *grid, size_t counts[256]);

/* New grid cropped to the bounding box of the occupied voxels (keeping physical
 * positions: the origin moves accordingly). An empty grid gives DPZ_EINVAL. */
dpz_status dpz_grid_crop(dpz_grid **out, const dpz_grid *grid, dpz_err *err);

#ifdef __cplusplus
}
#endif
#endif
