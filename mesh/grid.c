/* grid.c: the voxel grid (see dpz_grid.h): construction, occupied list, volume, centroid,
 * label statistics and cropping. */
#include "dpz_grid.h"

#include <math.h>
#include <string.h>

#include "mesh_int.h"

dpz_status dpz_grid_create(dpz_grid **out, size_t nx, size_t ny, size_t nz, double d_m,
                           size_t max_cells, dpz_err *err)
{
    if (!out)
        return dpz_err_set(err, DPZ_EINVAL, "grid: output pointer is NULL");
    *out = NULL;
    if (nx == 0 || ny == 0 || nz == 0)
        return dpz_err_set(err, DPZ_EINVAL,
                           "grid: dimensions must be >= 1 (got %zu x %zu x %zu)", nx, ny,
                           nz);
    if (!(d_m > 0.0) || !isfinite(d_m))
        return dpz_err_set(err, DPZ_EINVAL,
                           "grid: spacing must be positive and finite (got %g m)", d_m);
    if (max_cells == 0)
        max_cells = DPZ_GRID_DEFAULT_MAX_CELLS;
    size_t nxy, n;
    if (dpz_mul_overflow(nx, ny, &nxy) != 0 || dpz_mul_overflow(nxy, nz, &n) != 0)
        return dpz_err_set(err, DPZ_ELIMIT,
                           "grid: %zu x %zu x %zu voxels overflow the size type", nx, ny,
                           nz);
    if (n > max_cells)
        return dpz_err_set(err, DPZ_ELIMIT,
                           "grid: %zu x %zu x %zu = %zu voxels exceed the limit of %zu "
                           "(raise the voxel limit to allow more)",
                           nx, ny, nz, n, max_cells);
    dpz_grid *g = dpz__calloc(1, sizeof *g);
    if (!g)
        return dpz_err_set(err, DPZ_ENOMEM, "grid: out of memory for the grid header");
    g->nx = nx;
    g->ny = ny;
    g->nz = nz;
    g->d = d_m;
    /* Centre the grid on (0,0,0): voxel centres at d * (i - (n-1)/2). */
    g->origin[0] = -0.5 * d_m * (double)(nx - 1);
    g->origin[1] = -0.5 * d_m * (double)(ny - 1);
    g->origin[2] = -0.5 * d_m * (double)(nz - 1);
    g->label = dpz__calloc(n, 1);
    if (!g->label) {
        dpz_grid_destroy(g);
        return dpz_err_set(err, DPZ_ENOMEM, "grid: out of memory for %zu labels", n);
    }
    g->source_kind = DPZ_SOURCE_VOXELS;
    g->source[0] = '\0';
    *out = g;
    return DPZ_OK;
}

size_t dpz_grid_memory_need(size_t nx, size_t ny, size_t nz, int with_fill)
{
    size_t nxy, n, per, total;
    size_t per_voxel = 1 + sizeof(size_t) + (with_fill ? sizeof(float) : 0);
    if (dpz_mul_overflow(nx, ny, &nxy) || dpz_mul_overflow(nxy, nz, &n) ||
        dpz_mul_overflow(n, per_voxel, &per))
        return 0;
    total = per + sizeof(dpz_grid);
    return total < per ? 0 : total;
}

void dpz_grid_destroy(dpz_grid *grid)
{
    if (!grid)
        return;
    dpz__free(grid->label);
    dpz__free(grid->fill);
    dpz__free(grid->occ);
    dpz__free(grid);
}

static size_t grid_cells(const dpz_grid *g)
{
    return g->nx * g->ny * g->nz;
}

dpz_status dpz_grid_update(dpz_grid *grid, dpz_err *err)
{
    if (!grid || !grid->label)
        return dpz_err_set(err, DPZ_EINVAL, "grid: NULL grid");
    size_t n = grid_cells(grid), count = 0;
    for (size_t i = 0; i < n; i++)
        count += grid->label[i] != 0;
    /* Allocate before freeing, so that a failure leaves the old list intact. */
    size_t *occ = dpz__malloc((count ? count : 1) * sizeof *occ);
    if (!occ)
        return dpz_err_set(err, DPZ_ENOMEM, "grid: out of memory for %zu occupied voxels",
                           count);
    size_t m = 0;
    for (size_t i = 0; i < n; i++)
        if (grid->label[i] != 0)
            occ[m++] = i;
    dpz__free(grid->occ);
    grid->occ = occ;
    grid->n_occ = count;
    return DPZ_OK;
}

dpz_status dpz_grid_clone(dpz_grid **out, const dpz_grid *grid, dpz_err *err)
{
    if (!out)
        return dpz_err_set(err, DPZ_EINVAL, "grid: output pointer is NULL");
    *out = NULL;
    if (!grid || !grid->label)
        return dpz_err_set(err, DPZ_EINVAL, "grid: NULL grid");
    dpz_grid *g = NULL;
    dpz_status st =
        dpz_grid_create(&g, grid->nx, grid->ny, grid->nz, grid->d, (size_t)-1, err);
    if (st != DPZ_OK)
        return st;
    size_t n = grid_cells(grid);
    memcpy(g->label, grid->label, n);
    memcpy(g->origin, grid->origin, sizeof g->origin);
    g->source_kind = grid->source_kind;
    memcpy(g->source, grid->source, sizeof g->source);
    if (grid->fill) {
        g->fill = dpz__malloc(n * sizeof *g->fill);
        if (!g->fill) {
            dpz_grid_destroy(g);
            return dpz_err_set(err, DPZ_ENOMEM,
                               "grid: out of memory for %zu fill fractions", n);
        }
        memcpy(g->fill, grid->fill, n * sizeof *g->fill);
    }
    if (grid->occ || grid->n_occ) {
        g->occ = dpz__malloc((grid->n_occ ? grid->n_occ : 1) * sizeof *g->occ);
        if (!g->occ) {
            dpz_grid_destroy(g);
            return dpz_err_set(err, DPZ_ENOMEM,
                               "grid: out of memory for %zu occupied voxels",
                               grid->n_occ);
        }
        if (grid->n_occ)
            memcpy(g->occ, grid->occ, grid->n_occ * sizeof *g->occ);
        g->n_occ = grid->n_occ;
    }
    *out = g;
    return DPZ_OK;
}

void dpz_grid_centre(const dpz_grid *grid, size_t idx, double r[3])
{
    size_t k = idx % grid->nz;
    size_t ij = idx / grid->nz;
    size_t j = ij % grid->ny;
    size_t i = ij / grid->ny;
    r[0] = grid->origin[0] + grid->d * (double)i;
    r[1] = grid->origin[1] + grid->d * (double)j;
    r[2] = grid->origin[2] + grid->d * (double)k;
}

double dpz_grid_volume(const dpz_grid *grid)
{
    if (!grid || !grid->label)
        return 0.0;
    double v1 = grid->d * grid->d * grid->d;
    size_t n = grid_cells(grid);
    if (!grid->fill) {
        size_t count = 0;
        for (size_t i = 0; i < n; i++)
            count += grid->label[i] != 0;
        return v1 * (double)count;
    }
    /* Kahan-free plain sum in double: fractions are in [0, 1] and counts are far below
     * 2^53, so the rounding error stays at the level of n * DBL_EPSILON. */
    double sum = 0.0;
    for (size_t i = 0; i < n; i++)
        if (grid->label[i] != 0)
            sum += (double)grid->fill[i];
    return v1 * sum;
}

double dpz_grid_aeq(const dpz_grid *grid)
{
    /* Equal-volume sphere: V = 4 pi a^3 / 3. */
    return cbrt(3.0 * dpz_grid_volume(grid) / (4.0 * DPZ_PI));
}

void dpz_grid_centroid(const dpz_grid *grid, double c[3])
{
    c[0] = c[1] = c[2] = 0.0;
    if (!grid || !grid->label)
        return;
    double si = 0.0, sj = 0.0, sk = 0.0;
    size_t count = 0;
    size_t idx = 0;
    for (size_t i = 0; i < grid->nx; i++)
        for (size_t j = 0; j < grid->ny; j++)
            for (size_t k = 0; k < grid->nz; k++, idx++)
                if (grid->label[idx] != 0) {
                    si += (double)i;
                    sj += (double)j;
                    sk += (double)k;
                    count++;
                }
    if (count == 0)
        return;
    double inv = 1.0 / (double)count;
    c[0] = grid->origin[0] + grid->d * si * inv;
    c[1] = grid->origin[1] + grid->d * sj * inv;
    c[2] = grid->origin[2] + grid->d * sk * inv;
}

void dpz_grid_label_counts(const dpz_grid *grid, size_t counts[256])
{
    memset(counts, 0, 256 * sizeof counts[0]);
    if (!grid || !grid->label)
        return;
    size_t n = grid_cells(grid);
    for (size_t i = 0; i < n; i++)
        counts[grid->label[i]]++;
}

dpz_status dpz_grid_crop(dpz_grid **out, const dpz_grid *grid, dpz_err *err)
{
    if (!out)
        return dpz_err_set(err, DPZ_EINVAL, "grid: output pointer is NULL");
    *out = NULL;
    if (!grid || !grid->label)
        return dpz_err_set(err, DPZ_EINVAL, "grid: NULL grid");
    size_t lo[3] = {grid->nx, grid->ny, grid->nz}, hi[3] = {0, 0, 0};
    int any = 0;
    size_t idx = 0;
    for (size_t i = 0; i < grid->nx; i++)
        for (size_t j = 0; j < grid->ny; j++)
            for (size_t k = 0; k < grid->nz; k++, idx++) {
                if (grid->label[idx] == 0)
                    continue;
                any = 1;
                size_t p[3] = {i, j, k};
                for (int a = 0; a < 3; a++) {
                    if (p[a] < lo[a])
                        lo[a] = p[a];
                    if (p[a] > hi[a])
                        hi[a] = p[a];
                }
            }
    if (!any)
        return dpz_err_set(err, DPZ_EINVAL,
                           "grid: cannot crop a grid with no occupied voxel");
    dpz_grid *g = NULL;
    dpz_status st = dpz_grid_create(&g, hi[0] - lo[0] + 1, hi[1] - lo[1] + 1,
                                    hi[2] - lo[2] + 1, grid->d, (size_t)-1, err);
    if (st != DPZ_OK)
        return st;
    for (int a = 0; a < 3; a++)
        g->origin[a] = grid->origin[a] + grid->d * (double)lo[a];
    g->source_kind = grid->source_kind;
    memcpy(g->source, grid->source, sizeof g->source);
    if (grid->fill) {
        g->fill = dpz__calloc(g->nx * g->ny * g->nz, sizeof *g->fill);
        if (!g->fill) {
            dpz_grid_destroy(g);
            return dpz_err_set(err, DPZ_ENOMEM, "grid: out of memory for fill fractions");
        }
    }
    for (size_t i = 0; i < g->nx; i++)
        for (size_t j = 0; j < g->ny; j++) {
            size_t src = dpz_grid_index(grid, i + lo[0], j + lo[1], lo[2]);
            size_t dst = dpz_grid_index(g, i, j, 0);
            memcpy(g->label + dst, grid->label + src, g->nz);
            if (grid->fill)
                memcpy(g->fill + dst, grid->fill + src, g->nz * sizeof *g->fill);
        }
    st = dpz_grid_update(g, err);
    if (st != DPZ_OK) {
        dpz_grid_destroy(g);
        return st;
    }
    *out = g;
    return DPZ_OK;
}
