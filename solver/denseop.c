/* denseop.c: the dense reference operator, an explicit 3N x 3N complex-symmetric matrix
 * built from the same kernel and diagonal as the FFT operator; ground truth for tests and
 * a direct solver (LAPACKE zgesv) for tiny problems. */
#include "dpz_operator.h"

#include <math.h>
#include <string.h>

#include <cblas.h>
#include <lapacke.h>

#include "solver_int.h"

struct dpz_denseop {
    size_t n3;            /* 3 N, the matrix order */
    double complex *a;    /* n3 x n3, column-major */
    double complex *diag; /* n3 diagonal entries (1/alpha per component), m^-3 */
    double complex *work; /* n3 x n3 copy for zgesv */
    lapack_int *ipiv;     /* n3 pivots */
};

void dpz_denseop_destroy(dpz_denseop *op)
{
    if (!op)
        return;
    dpz__free(op->a);
    dpz__free(op->diag);
    dpz__free(op->work);
    dpz__free(op->ipiv);
    dpz__free(op);
}

dpz_status dpz_denseop_create(dpz_denseop **out, const dpz_grid *grid, double k,
                              dpz_dipole_model model, const double complex *inv_alpha,
                              size_t max_dipoles, dpz_err *err)
{
    if (!out)
        return dpz_err_set(err, DPZ_EINVAL, "dense operator: NULL output");
    *out = NULL;
    if (!grid || !inv_alpha)
        return dpz_err_set(err, DPZ_EINVAL, "dense operator: NULL argument");
    if (grid->n_occ == 0)
        return dpz_err_set(err, DPZ_EINVAL,
                           "dense operator: the grid has no occupied voxel");
    if (!(k >= 0.0) || !isfinite(k))
        return dpz_err_set(err, DPZ_EINVAL,
                           "dense operator: wavenumber %g 1/m must be >= 0", k);
    if (max_dipoles == 0)
        max_dipoles = 4000;
    if (grid->n_occ > max_dipoles)
        return dpz_err_set(err, DPZ_ELIMIT,
                           "dense operator: %zu dipoles exceed the limit of %zu",
                           grid->n_occ, max_dipoles);
    size_t N = grid->n_occ, n3 = 3 * N;
    dpz_denseop *op = dpz__calloc(1, sizeof *op);
    if (!op)
        return dpz_err_set(err, DPZ_ENOMEM, "dense operator: out of memory");
    op->n3 = n3;
    op->a = dpz__calloc(n3 * n3, sizeof *op->a);
    op->diag = dpz__calloc(n3, sizeof *op->diag);
    op->ipiv = dpz__calloc(n3, sizeof *op->ipiv);
    if (!op->a || !op->diag || !op->ipiv) {
        dpz_denseop_destroy(op);
        return dpz_err_set(err, DPZ_ENOMEM,
                           "dense operator: out of memory for a %zu x %zu matrix", n3,
                           n3);
    }
    dpz__igt_table tab;
    if (model == DPZ_DIPOLE_IGT)
        dpz__igt_table_fill(&tab, k, grid->d);
    size_t ny = grid->ny, nz = grid->nz;
    for (size_t v = 0; v < N; v++) {
        size_t iv = grid->occ[v];
        long xi = (long)(iv / (ny * nz)), yi = (long)(iv / nz % ny), zi = (long)(iv % nz);
        for (int c = 0; c < 3; c++) {
            op->diag[3 * v + c] = inv_alpha[v];
            op->a[(3 * v + c) * n3 + 3 * v + c] = inv_alpha[v];
        }
        for (size_t w = 0; w < N; w++) {
            if (w == v)
                continue;
            size_t iw = grid->occ[w];
            long xj = (long)(iw / (ny * nz)), yj = (long)(iw / nz % ny),
                 zj = (long)(iw % nz);
            double complex g[6];
            dpz__kernel_tab(model, k, grid->d, model == DPZ_DIPOLE_IGT ? &tab : NULL,
                            xi - xj, yi - yj, zi - zj, g);
            static const int idx[3][3] = {{0, 1, 2}, {1, 3, 4}, {2, 4, 5}};
            /* Row 3v+a, column 3w+b holds -G_ab(r_v - r_w) (column-major storage). */
            for (int a = 0; a < 3; a++)
                for (int b = 0; b < 3; b++)
                    op->a[(3 * w + b) * n3 + 3 * v + a] = -g[idx[a][b]];
        }
    }
    *out = op;
    return DPZ_OK;
}

dpz_status dpz_denseop_apply(dpz_denseop *op, const double complex *x, double complex *y,
                             dpz_err *err)
{
    if (!op || !x || !y)
        return dpz_err_set(err, DPZ_EINVAL, "dense operator: NULL argument");
    const double complex one = 1.0, zero = 0.0;
    cblas_zgemv(CblasColMajor, CblasNoTrans, (blasint)op->n3, (blasint)op->n3, &one,
                op->a, (blasint)op->n3, x, 1, &zero, y, 1);
    return DPZ_OK;
}

const double complex *dpz_denseop_matrix(const dpz_denseop *op, size_t *n)
{
    if (n)
        *n = op ? op->n3 : 0;
    return op ? op->a : NULL;
}

dpz_status dpz_denseop_solve(dpz_denseop *op, double complex *b, size_t nrhs,
                             dpz_err *err)
{
    if (!op || (!b && nrhs > 0))
        return dpz_err_set(err, DPZ_EINVAL, "dense operator: NULL argument");
    if (nrhs == 0)
        return DPZ_OK;
    size_t n3 = op->n3;
    if (!op->work) {
        op->work = dpz__malloc(n3 * n3 * sizeof *op->work);
        if (!op->work)
            return dpz_err_set(err, DPZ_ENOMEM,
                               "dense operator: out of memory for the LU copy");
    }
    memcpy(op->work, op->a, n3 * n3 * sizeof *op->work);
    lapack_int info = LAPACKE_zgesv(LAPACK_COL_MAJOR, (lapack_int)n3, (lapack_int)nrhs,
                                    (lapack_complex_double *)op->work, (lapack_int)n3,
                                    op->ipiv, (lapack_complex_double *)b, (lapack_int)n3);
    if (info > 0)
        return dpz_err_set(err, DPZ_ELAPACK,
                           "dense operator: zgesv: the matrix is singular (U(%d,%d) = 0)",
                           (int)info, (int)info);
    if (info < 0)
        return dpz_err_set(err, DPZ_ELAPACK,
                           "dense operator: zgesv: argument %d is invalid", (int)-info);
    return DPZ_OK;
}

static dpz_status dense_apply_cb(void *ctx, const double complex *x, double complex *y,
                                 dpz_err *err)
{
    return dpz_denseop_apply(ctx, x, y, err);
}

dpz_linop dpz_denseop_linop(dpz_denseop *op)
{
    dpz_linop L = {op ? op->n3 : 0, op, dense_apply_cb, op ? op->diag : NULL};
    return L;
}
