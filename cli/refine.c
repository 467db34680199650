/* refine.c: `--refine LEVELS`: the same object on successively finer lattices, and the
 * extrapolation of a result to zero spacing with an error estimate.
 *
 * A grid that records a true shape or an STL mesh is re-voxelized at spacings
 * d / (1 + k/2), k = 0 .. LEVELS-1 (d, d/1.5, d/2, d/2.5); a plain voxel set, which is
 * the object itself, has each voxel split into (k+1)^3 sub-voxels (d, d/2, d/3, d/4),
 * which keeps its geometry exactly. Discrete-dipole results approach their continuum
 * limit roughly linearly in the spacing, with staircase oscillations on top (measured for
 * spheres against Mie theory; e.g. Yurkin, Maltsev & Hoekstra, JOSA A 23, 2578 (2006),
 * from memory), so the results are fitted by least squares with a straight line in d and
 * extrapolated to d = 0 (Richardson, Phil. Trans. R. Soc. A 210, 307 (1911)); the error
 * estimate is the size of the extrapolation step plus the largest fit residual. */
#include "cli_int.h"

#include <math.h>
#include <string.h>

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

/* Splits every voxel of `g` into m^3 sub-voxels of edge d/m at the same place. */
static dpz_status split_voxels(dpz_grid **out, const dpz_grid *g, size_t m,
                               size_t max_cells, dpz_err *err)
{
    size_t nx, ny, nz, cells;
    if (dpz_mul_overflow(g->nx, m, &nx) || dpz_mul_overflow(g->ny, m, &ny) ||
        dpz_mul_overflow(g->nz, m, &nz) || dpz_mul_overflow(nx, ny, &cells) ||
        dpz_mul_overflow(cells, nz, &cells))
        return dpz_err_set(err, DPZ_ELIMIT, "refine: the split grid overflows size_t");
    dpz_grid *s = NULL;
    dpz_status st = dpz_grid_create(&s, nx, ny, nz, g->d / (double)m, max_cells, err);
    if (st != DPZ_OK)
        return st;
    if (g->fill) {
        s->fill = dpz__calloc(cells, sizeof *s->fill);
        if (!s->fill) {
            dpz_grid_destroy(s);
            return dpz_err_set(err, DPZ_ENOMEM, "refine: out of memory");
        }
    }
    /* Child a of parent i sits at parent centre + d ((a + 1/2)/m - 1/2). */
    for (int c = 0; c < 3; c++)
        s->origin[c] = g->origin[c] + g->d * (0.5 / (double)m - 0.5);
    for (size_t i = 0; i < nx; i++)
        for (size_t j = 0; j < ny; j++)
            for (size_t k = 0; k < nz; k++) {
                size_t p = dpz_grid_index(g, i / m, j / m, k / m);
                size_t q = dpz_grid_index(s, i, j, k);
                s->label[q] = g->label[p];
                if (g->fill)
                    s->fill[q] = g->fill[p];
            }
    s->source_kind = g->source_kind;
    memcpy(s->source, g->source, sizeof s->source);
    st = dpz_grid_update(s, err);
    if (st != DPZ_OK) {
        dpz_grid_destroy(s);
        return st;
    }
    *out = s;
    return DPZ_OK;
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
    dpz_shape shape;
    double unit_m = 0.0;
    char mesh_path[1024] = "";
    int kind = 0; /* 0 voxels, 1 shape, 2 mesh */
    if (base->source_kind == DPZ_SOURCE_SHAPE &&
        dpz_shape_parse_record(base->source, &shape, &e) == DPZ_OK)
        kind = 1;
    else if (base->source_kind == DPZ_SOURCE_MESH &&
             dpz_mesh_parse_record(base->source, &unit_m, mesh_path, sizeof mesh_path,
                                   &e) == DPZ_OK) {
        char rec[1024];
        snprintf(rec, sizeof rec, "%s", mesh_path);
        if (cli_resolve_mesh_path(a->npos ? a->pos[0] : "", rec, mesh_path,
                                  sizeof mesh_path) == 0)
            kind = 2;
    }
    r->how = kind == 0   ? "split voxels"
             : kind == 1 ? "re-voxelized shape"
                         : "re-voxelized mesh";
    r->n = levels;
    r->grid[0] = (dpz_grid *)base; /* borrowed: see cli_refine_free */
    double mesh_vol = -1.0;
    r->d[0] = base->d;
    for (size_t k = 1; k < levels; k++) {
        dpz_status s;
        dpz_grid *g = NULL;
        if (kind == 0) {
            s = split_voxels(&g, base, k + 1, max_cells, &e);
        } else {
            double d = base->d / (1.0 + 0.5 * (double)k);
            cli_progress(a, "refine: level %zu at spacing %.4g m", k + 1, d);
            if (kind == 1)
                s = dpz_shape_voxelize(&g, &shape, d, base->fill != NULL, 4, max_cells,
                                       &e);
            else
                s = dpz_stl_voxelize_file(&g, mesh_path, unit_m, d, base->fill != NULL,
                                          max_cells, &mesh_vol, &e);
        }
        if (s != DPZ_OK) {
            cli_refine_free(r);
            return cli_fail_err("refine", &e);
        }
        r->grid[k] = g;
        r->d[k] = g->d;
    }
    if (kind == 1) {
        /* dpz_shape_volume is negative where no closed form applies (overlapping helix
         * turns): the finest voxel volume is then the best estimate. */
        double vs = dpz_shape_volume(&shape);
        r->v_true = vs > 0 ? vs : dpz_grid_volume(r->grid[levels - 1]);
        r->v_source = vs > 0 ? "shape formula" : "finest voxels";
    } else if (kind == 2) {
        r->v_true = mesh_vol;
        r->v_source = "mesh";
    } else {
        /* A plain voxel set is its own object: split voxels keep its volume exactly. */
        r->v_true = dpz_grid_volume(base);
        r->v_source = "voxels";
    }
    return CLI_OK;
}

void cli_refine_free(cli_refine *r)
{
    for (size_t k = 1; k < r->n; k++)
        dpz_grid_destroy(r->grid[k]);
    memset(r, 0, sizeof *r);
}

/* Least-squares line v = c0 + c1 d through n points; returns c0 and the largest
 * residual. */
static double fit_line(const double *d, const double *v, size_t n, double *max_res)
{
    double dm = 0.0, vm = 0.0;
    for (size_t k = 0; k < n; k++) {
        dm += d[k];
        vm += v[k];
    }
    dm /= (double)n;
    vm /= (double)n;
    double sdd = 0.0, sdv = 0.0;
    for (size_t k = 0; k < n; k++) {
        sdd += (d[k] - dm) * (d[k] - dm);
        sdv += (d[k] - dm) * (v[k] - vm);
    }
    double c1 = sdd > 0.0 ? sdv / sdd : 0.0;
    double c0 = vm - c1 * dm;
    *max_res = 0.0;
    for (size_t k = 0; k < n; k++) {
        double res = fabs(v[k] - (c0 + c1 * d[k]));
        if (res > *max_res)
            *max_res = res;
    }
    return c0;
}

void cli_extrapolate(size_t n, const double *d, const double complex *v, size_t m,
                     double complex *out, double complex *err)
{
    double re[CLI_REFINE_MAX], im[CLI_REFINE_MAX];
    for (size_t e = 0; e < m; e++) {
        for (size_t k = 0; k < n; k++) {
            re[k] = creal(v[k * m + e]);
            im[k] = cimag(v[k * m + e]);
        }
        double rr, ri;
        double c_re = fit_line(d, re, n, &rr);
        double c_im = fit_line(d, im, n, &ri);
        out[e] = CMPLX(c_re, c_im);
        /* The finest level is the last one. */
        err[e] = CMPLX(fabs(c_re - re[n - 1]) + rr, fabs(c_im - im[n - 1]) + ri);
    }
}
