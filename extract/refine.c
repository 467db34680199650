/* refine.c: extrapolation to zero lattice spacing with an error estimate, and the ladder
 * of finer lattices of one object (see dpz_refine.h). */
#include "dpz_refine.h"

#include <math.h>
#include <string.h>

#include <lapacke.h>

#include "dpz_refine_grid.h"
#include "dpz_shape.h"
#include "dpz_stl.h"

/* Least-squares fit of the columns of y (n rows, ncol columns, column-major) with the
 * polynomial basis 1, t, ..., t^deg in the scaled spacing t = h / h_max (scaling keeps
 * the normal matrix well conditioned). Returns the intercepts c0[col] and, when the fit
 * has degrees of freedom, their standard errors se[col] = sqrt(RSS/(n - p) (A^T A)^-1_00)
 * (ordinary least-squares theory, e.g. Press et al., Numerical Recipes, 3rd ed., sec.
 * 15.4); se = 0 otherwise. `work` holds n * (deg + 1) + n * ncol doubles. */
static dpz_status poly_fit(size_t n, const double *t, const double *y, size_t ncol,
                           int deg, double *c0, double *se, double *maxres, double *work,
                           dpz_err *err)
{
    size_t p = (size_t)deg + 1;
    double *A = work, *B = work + n * p;
    for (size_t r = 0; r < n; r++) {
        double q = 1.0;
        for (size_t c = 0; c < p; c++) {
            A[c * n + r] = q;
            q *= t[r];
        }
    }
    memcpy(B, y, n * ncol * sizeof *B);
    lapack_int info = LAPACKE_dgels(LAPACK_COL_MAJOR, 'N', (lapack_int)n, (lapack_int)p,
                                    (lapack_int)ncol, A, (lapack_int)n, B, (lapack_int)n);
    if (info != 0)
        return dpz_err_set(err, DPZ_ELAPACK,
                           "refine: least-squares fit failed (dgels %d)", (int)info);
    /* (A^T A)^-1_00 from the normal matrix, solved directly (p <= 3). */
    double M[9] = {0}, e1[3] = {1.0, 0.0, 0.0};
    for (size_t i = 0; i < p; i++)
        for (size_t j = 0; j < p; j++) {
            double s = 0.0;
            for (size_t r = 0; r < n; r++)
                s += pow(t[r], (double)(i + j));
            M[j * p + i] = s;
        }
    lapack_int ipiv[3];
    info = LAPACKE_dgesv(LAPACK_COL_MAJOR, (lapack_int)p, 1, M, (lapack_int)p, ipiv, e1,
                         (lapack_int)p);
    if (info != 0)
        return dpz_err_set(err, DPZ_ELAPACK, "refine: singular normal matrix (dgesv %d)",
                           (int)info);
    for (size_t col = 0; col < ncol; col++) {
        c0[col] = B[col * n];
        se[col] = 0.0;
        maxres[col] = 0.0;
        for (size_t r = 0; r < n; r++) {
            double f = 0.0, q = 1.0;
            for (size_t c = 0; c < p; c++) {
                f += B[col * n + c] * q;
                q *= t[r];
            }
            maxres[col] = fmax(maxres[col], fabs(y[col * n + r] - f));
        }
        if (n > p) {
            /* dgels leaves the residual sum of squares in rows p..n-1 of the column. */
            double rss = 0.0;
            for (size_t r = p; r < n; r++)
                rss += B[col * n + r] * B[col * n + r];
            se[col] = sqrt(rss / (double)(n - p) * fabs(e1[0]));
        }
    }
    return DPZ_OK;
}

dpz_status dpz_refine_extrapolate(size_t n_levels, const double *h,
                                  const double complex *v, size_t n_values,
                                  dpz_refine_model model, double complex *value,
                                  double complex *error, dpz_err *err)
{
    if (!h || !v || !value || !error || n_values == 0)
        return dpz_err_set(err, DPZ_EINVAL, "refine: NULL argument or no values");
    if (n_levels < 2 || n_levels > DPZ_REFINE_MAX_LEVELS)
        return dpz_err_set(err, DPZ_EINVAL, "refine: %zu spacings; use 2 to %d", n_levels,
                           DPZ_REFINE_MAX_LEVELS);
    if (model != DPZ_REFINE_LINEAR && model != DPZ_REFINE_QUADRATIC)
        return dpz_err_set(err, DPZ_EINVAL, "refine: unknown model %d", (int)model);
    if (model == DPZ_REFINE_QUADRATIC && n_levels < 3)
        return dpz_err_set(
            err, DPZ_EINVAL,
            "refine: the quadratic model needs at least 3 spacings, got %zu", n_levels);
    double hmax = 0.0, hmin = INFINITY;
    size_t imin = 0;
    for (size_t l = 0; l < n_levels; l++) {
        if (!(h[l] > 0.0) || !isfinite(h[l]))
            return dpz_err_set(err, DPZ_EINVAL, "refine: spacing %zu is %g, not > 0", l,
                               h[l]);
        for (size_t m = 0; m < l; m++)
            if (h[m] == h[l])
                return dpz_err_set(err, DPZ_EINVAL, "refine: spacing %g given twice",
                                   h[l]);
        hmax = fmax(hmax, h[l]);
        if (h[l] < hmin) {
            hmin = h[l];
            imin = l;
        }
    }
    for (size_t i = 0; i < n_levels * n_values; i++)
        if (!isfinite(creal(v[i])) || !isfinite(cimag(v[i])))
            return dpz_err_set(err, DPZ_EINVAL,
                               "refine: value %zu at spacing %zu is not "
                               "finite",
                               i % n_values, i / n_values);
    size_t n = n_levels, ncol = 2 * n_values;
    double *mem = dpz__malloc((n * ncol + n * 3 + n * ncol + 6 * ncol + n) * sizeof *mem);
    if (!mem)
        return dpz_err_set(err, DPZ_ENOMEM, "refine: out of memory for %zu values",
                           n_values);
    double *y = mem, *work = y + n * ncol, *c_lin = work + n * 3 + n * ncol,
           *s_lin = c_lin + ncol, *c_quad = s_lin + ncol, *s_quad = c_quad + ncol,
           *r_lin = s_quad + ncol, *r_quad = r_lin + ncol, *t = r_quad + ncol;
    for (size_t l = 0; l < n; l++) {
        t[l] = h[l] / hmax;
        for (size_t e = 0; e < n_values; e++) {
            y[(2 * e) * n + l] = creal(v[l * n_values + e]);
            y[(2 * e + 1) * n + l] = cimag(v[l * n_values + e]);
        }
    }
    dpz_status st = poly_fit(n, t, y, ncol, 1, c_lin, s_lin, r_lin, work, err);
    if (st == DPZ_OK && n >= 3)
        st = poly_fit(n, t, y, ncol, 2, c_quad, s_quad, r_quad, work, err);
    if (st != DPZ_OK) {
        dpz__free(mem);
        return st;
    }
    for (size_t e = 0; e < n_values; e++) {
        double out[2], est[2];
        for (int part = 0; part < 2; part++) {
            size_t col = 2 * e + (size_t)part;
            if (n < 3) {
                /* Two spacings: the line through them; the error is the size of the
                 * extrapolation step from the finest spacing (Richardson's own estimate).
                 */
                out[part] = c_lin[col];
                est[part] = fabs(c_lin[col] - y[col * n + imin]);
            } else {
                int quad = model == DPZ_REFINE_QUADRATIC;
                out[part] = quad ? c_quad[col] : c_lin[col];
                /* The larger of Richardson's own estimate (the extrapolation step from
                 * the finest spacing) and the fit-based one (model spread plus two
                 * standard errors), plus the irregular part (largest residual): either
                 * alone missed the true error of refined sphere polarizabilities in 4
                 * and 9 of 40 cases, the larger of the two in 2 (docs/accuracy.md). */
                double step = fabs(out[part] - y[col * n + imin]);
                double fit = fabs(c_lin[col] - c_quad[col]) +
                             2.0 * (quad ? s_quad[col] : s_lin[col]);
                est[part] = fmax(step, fit) + (quad ? r_quad[col] : r_lin[col]);
            }
        }
        value[e] = CMPLX(out[0], out[1]);
        error[e] = CMPLX(est[0], est[1]);
    }
    dpz__free(mem);
    return DPZ_OK;
}

dpz_status dpz_refine_levels(const dpz_grid *base, size_t n_levels, size_t max_cells,
                             dpz_grid **levels, dpz_refine_kind *kind, dpz_err *err)
{
    if (!base || !levels)
        return dpz_err_set(err, DPZ_EINVAL, "refine: NULL grid or output");
    if (n_levels < 2 || n_levels > DPZ_REFINE_MAX_LEVELS)
        return dpz_err_set(err, DPZ_EINVAL, "refine: %zu levels; use 2 to %d", n_levels,
                           DPZ_REFINE_MAX_LEVELS);
    for (size_t l = 0; l < n_levels; l++)
        levels[l] = NULL;
    dpz_refine_kind kd = DPZ_REFINE_SPLIT;
    dpz_shape shape;
    double unit_m = 0.0;
    char path[1024];
    dpz_status st = DPZ_OK;
    if (base->source_kind == DPZ_SOURCE_SHAPE) {
        st = dpz_shape_parse_record(base->source, &shape, err);
        kd = DPZ_REFINE_SHAPE;
    } else if (base->source_kind == DPZ_SOURCE_MESH) {
        st = dpz_mesh_parse_record(base->source, &unit_m, path, sizeof path, err);
        kd = DPZ_REFINE_MESH;
    }
    if (st != DPZ_OK)
        return st;
    st = dpz_grid_clone(&levels[0], base, err);
    int fractions = base->fill != NULL;
    for (size_t l = 1; st == DPZ_OK && l < n_levels; l++) {
        double d = base->d / (1.0 + 0.5 * (double)l);
        if (kd == DPZ_REFINE_SHAPE)
            st = dpz_shape_voxelize(&levels[l], &shape, d, fractions, 4, max_cells, err);
        else if (kd == DPZ_REFINE_MESH)
            st = dpz_stl_voxelize_file(&levels[l], path, unit_m, d, fractions, max_cells,
                                       NULL, err);
        else
            st = dpz_refine_grid_split(&levels[l], base, l + 1, max_cells, err);
    }
    if (st != DPZ_OK) {
        for (size_t l = 0; l < n_levels; l++) {
            dpz_grid_destroy(levels[l]);
            levels[l] = NULL;
        }
        return st;
    }
    if (kind)
        *kind = kd;
    return DPZ_OK;
}
