/* refine.c: `--refine LEVELS` for the computing commands: the ladder of finer lattices
 * and the extrapolation to zero spacing come from the library (dpz_refine.h: a recorded
 * shape or mesh re-voxelized at d / (1 + k/2), a plain voxel set split into (k+1)^3
 * sub-voxels; least-squares extrapolation after Yurkin, Maltsev & Hoekstra, JOSA A 23,
 * 2592 (2006)). What the program adds: the option, finding a recorded mesh beside its VTK
 * file, and the volume of the true object, by which the callers scale results that were
 * extrapolated per unit voxel volume (the staircase volume oscillates with the spacing
 * and would otherwise dominate the fit). */
#include "cli_int.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dpz_refine.h"
#include "dpz_stl.h"

int cli_refine_option(const cli_args *a, size_t *levels)
{
    *levels = 0;
    const char *v = cli_get(a, "--refine");
    if (!v)
        return CLI_OK;
    dpz_err e;
    if (dpz_units_count("--refine", v, levels, &e) != DPZ_OK)
        return cli_fail_err(a->cmd->name, &e);
    if (*levels < 2 || *levels > CLI_REFINE_MAX)
        return cli_fail("%s: --refine %s: use 2 to %d levels", a->cmd->name, v,
                        CLI_REFINE_MAX);
    return CLI_OK;
}

/* Volume of the mesh in `path` (metres per unit `unit_m`), m^3, or -1. */
static double mesh_volume(const char *path, double unit_m, const dpz_grid *g)
{
    dpz_mesh *mesh = NULL;
    if (dpz_stl_read_file(&mesh, path, unit_m, NULL) != DPZ_OK)
        return -1.0;
    double mesh_m3 = -1.0, vox_m3;
    dpz_stl_volumes(mesh, g, &mesh_m3, &vox_m3);
    dpz_mesh_destroy(mesh);
    return mesh_m3;
}

int cli_refine_build(const cli_args *a, const dpz_grid *base, size_t levels,
                     cli_refine *r)
{
    memset(r, 0, sizeof *r);
    size_t max_cells = 0;
    int given, rc;
    if ((rc = cli_opt_count(a, "--max-voxels", &max_cells, &given)) != CLI_OK)
        return rc;
    dpz_err e;
    dpz_err_clear(&e);
    r->v_true = dpz_grid_volume(base);
    r->v_source = "voxels";
    /* A relative mesh record names the file from where voxelize ran: hand the library a
     * copy of the grid whose record points at the file that actually opens. */
    dpz_grid *resolved = NULL;
    double unit_m = 0.0;
    char rec[1024], path[1024];
    if (base->source_kind == DPZ_SOURCE_MESH &&
        dpz_mesh_parse_record(base->source, &unit_m, rec, sizeof rec, &e) == DPZ_OK) {
        if (cli_resolve_mesh_path(a->npos ? a->pos[0] : "", rec, path, sizeof path) != 0)
            return cli_fail("refine: the mesh %s recorded in %s cannot be opened: "
                            "re-voxelize the STL file itself",
                            rec, a->npos ? a->pos[0] : "the grid");
        if (strcmp(rec, path) != 0) {
            if (dpz_grid_clone(&resolved, base, &e) != DPZ_OK)
                return cli_fail_err("refine", &e);
            int n =
                snprintf(resolved->source, sizeof resolved->source,
                         "%sunit=%.17g path=%s", DPZ_MESH_RECORD_PREFIX, unit_m, path);
            if (n < 0 || (size_t)n >= sizeof resolved->source) {
                dpz_grid_destroy(resolved);
                return cli_fail("refine: the mesh path %s is too long", path);
            }
        }
        double vm = mesh_volume(path, unit_m, base);
        if (vm > 0) {
            r->v_true = vm;
            r->v_source = "mesh";
        }
    }
    dpz_refine_kind kind;
    cli_progress(a, "refine: building %zu lattices", levels);
    dpz_status s = dpz_refine_levels(resolved ? resolved : base, levels, max_cells,
                                     r->grid, &kind, &e);
    dpz_grid_destroy(resolved);
    if (s != DPZ_OK) {
        memset(r, 0, sizeof *r);
        return cli_fail_err("refine", &e);
    }
    r->n = levels;
    for (size_t k = 0; k < levels; k++)
        r->d[k] = r->grid[k]->d;
    r->how = kind == DPZ_REFINE_SHAPE  ? "re-voxelized shape"
             : kind == DPZ_REFINE_MESH ? "re-voxelized mesh"
                                       : "split voxels";
    if (kind == DPZ_REFINE_SHAPE) {
        /* dpz_shape_volume is negative where no closed form applies (overlapping helix
         * turns): the finest voxel volume is then the best estimate. */
        dpz_shape shape;
        double vs = -1.0;
        if (dpz_shape_parse_record(base->source, &shape, NULL) == DPZ_OK)
            vs = dpz_shape_volume(&shape);
        r->v_true = vs > 0 ? vs : dpz_grid_volume(r->grid[levels - 1]);
        r->v_source = vs > 0 ? "shape formula" : "finest voxels";
    }
    return CLI_OK;
}

void cli_refine_free(cli_refine *r)
{
    for (size_t k = 0; k < r->n; k++)
        dpz_grid_destroy(r->grid[k]);
    memset(r, 0, sizeof *r);
}

int cli_extrapolate(size_t n, const double *d, const double complex *v, size_t m,
                    double complex *out, double complex *err)
{
    /* Linear in the spacing: the measured errors show no reliable curvature (staircase
     * oscillations and plateaus dominate it, docs/accuracy.md); the library's estimate
     * takes the larger of the extrapolation step and the spread to the quadratic model
     * plus standard errors, and adds the largest residual. */
    dpz_err e;
    if (dpz_refine_extrapolate(n, d, v, m, DPZ_REFINE_LINEAR, out, err, &e) != DPZ_OK)
        return cli_fail_err("refine", &e);
    return CLI_OK;
}

const char *cli_refine_belongs_to(const cli_refine *r)
{
    /* Split voxels describe the same staircase body at every level, so the limit is that
     * body's continuum response, not the response of a smooth shape it approximates. */
    return strcmp(r->how, "split voxels") == 0
               ? "the staircase body of the voxel set itself"
               : "the true shape or mesh, re-voxelized";
}

cJSON *cli_refine_json(const cli_refine *r)
{
    cJSON *o = cJSON_CreateObject();
    if (!o)
        return NULL;
    double vol[CLI_REFINE_MAX], vox[CLI_REFINE_MAX];
    for (size_t k = 0; k < r->n; k++) {
        vol[k] = dpz_grid_volume(r->grid[k]);
        vox[k] = (double)r->grid[k]->n_occ;
    }
    cli_json_add_number(o, "levels", (double)r->n);
    cJSON_AddStringToObject(o, "how", r->how);
    cJSON_AddItemToObject(o, "spacings_m", cli_json_doubles(r->d, r->n));
    cJSON_AddItemToObject(o, "voxels", cli_json_doubles(vox, r->n));
    cJSON_AddItemToObject(o, "volumes_m3", cli_json_doubles(vol, r->n));
    cli_json_add_number(o, "true_volume_m3", r->v_true);
    cJSON_AddStringToObject(o, "true_volume_from", r->v_source);
    cJSON_AddStringToObject(o, "result_belongs_to", cli_refine_belongs_to(r));
    cJSON_AddStringToObject(
        o, "method",
        "value/V of each level fitted by least squares with a line in the spacing, "
        "extrapolated to zero spacing, times the true volume; error = the larger of the "
        "extrapolation step from the finest level and (spread between the linear and "
        "quadratic fits + 2 standard errors), plus the largest residual (2 levels: the "
        "extrapolation step)");
    return o;
}

int cli_refine_extrapolate(const cli_refine *r, const double complex *v, size_t m,
                           double complex *out, double complex *err)
{
    double complex *w = calloc(r->n * m, sizeof *w);
    if (!w)
        return cli_fail("out of memory"), CLI_FAILED;
    for (size_t k = 0; k < r->n; k++) {
        double vk = dpz_grid_volume(r->grid[k]);
        for (size_t e = 0; e < m; e++)
            w[k * m + e] = v[k * m + e] / vk;
    }
    int rc = cli_extrapolate(r->n, r->d, w, m, out, err);
    free(w);
    if (rc != CLI_OK)
        return rc;
    for (size_t e = 0; e < m; e++) {
        out[e] *= r->v_true;
        err[e] *= r->v_true;
    }
    return CLI_OK;
}
