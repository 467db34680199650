/* refine_grid.c: splitting the voxels of a plain voxel set (see dpz_refine_grid.h). */
#include "dpz_refine_grid.h"

#include <string.h>

dpz_status dpz_refine_grid_split(dpz_grid **out, const dpz_grid *grid, size_t m,
                                 size_t max_cells, dpz_err *err)
{
    if (!out)
        return dpz_err_set(err, DPZ_EINVAL, "refine grid: NULL output");
    *out = NULL;
    if (!grid || m == 0)
        return dpz_err_set(err, DPZ_EINVAL, "refine grid: NULL grid or split factor 0");
    size_t nx, ny, nz, cells;
    if (dpz_mul_overflow(grid->nx, m, &nx) || dpz_mul_overflow(grid->ny, m, &ny) ||
        dpz_mul_overflow(grid->nz, m, &nz) || dpz_mul_overflow(nx, ny, &cells) ||
        dpz_mul_overflow(cells, nz, &cells))
        return dpz_err_set(
            err, DPZ_ELIMIT,
            "refine grid: splitting %zu x %zu x %zu voxels by %zu overflows", grid->nx,
            grid->ny, grid->nz, m);
    dpz_grid *s = NULL;
    dpz_status st = dpz_grid_create(&s, nx, ny, nz, grid->d / (double)m, max_cells, err);
    if (st != DPZ_OK)
        return st;
    if (grid->fill) {
        s->fill = dpz__calloc(cells, sizeof *s->fill);
        if (!s->fill) {
            dpz_grid_destroy(s);
            return dpz_err_set(err, DPZ_ENOMEM,
                               "refine grid: out of memory for %zu fill fractions",
                               cells);
        }
    }
    for (int c = 0; c < 3; c++)
        s->origin[c] = grid->origin[c] + grid->d * (0.5 / (double)m - 0.5);
    /* Row-major with k fastest: each parent row along k expands into m runs of m. */
    for (size_t i = 0; i < nx; i++)
        for (size_t j = 0; j < ny; j++) {
            size_t prow = dpz_grid_index(grid, i / m, j / m, 0);
            size_t qrow = dpz_grid_index(s, i, j, 0);
            for (size_t k = 0; k < nz; k++) {
                s->label[qrow + k] = grid->label[prow + k / m];
                if (grid->fill)
                    s->fill[qrow + k] = grid->fill[prow + k / m];
            }
        }
    s->source_kind = grid->source_kind;
    memcpy(s->source, grid->source, sizeof s->source);
    st = dpz_grid_update(s, err);
    if (st != DPZ_OK) {
        dpz_grid_destroy(s);
        return st;
    }
    *out = s;
    return DPZ_OK;
}
