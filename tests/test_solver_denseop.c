/* test_solver_denseop.c: the dense reference operator (explicit matrix, LAPACKE solve)
 * and the per-voxel diagonal from materials (operator.c). */
#include <complex.h>
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dpz_test.h"

#include "dpz_dipole.h"
#include "dpz_grid.h"
#include "dpz_operator.h"

#define SPACING 3.1e-8 /* m */
/* LU solve residual: backward stable, so ||A x - b|| ~ n eps ||A|| ||x||; the matrices
 * here are well conditioned (dielectric, 2.25). */
#define TOL_LU 1e-12

static dpz_grid *block(size_t nx, size_t ny, size_t nz)
{
    dpz_grid *g = NULL;
    dpz_err err;
    assert_int_equal(dpz_grid_create(&g, nx, ny, nz, SPACING, 0, &err), DPZ_OK);
    for (size_t i = 0; i < nx * ny * nz; i++)
        g->label[i] = (uint8_t)(1 + i % 3 % 2); /* labels 1 and 2 */
    assert_int_equal(dpz_grid_update(g, &err), DPZ_OK);
    return g;
}

/* The matrix is complex symmetric (reciprocity, Draine 1988) with 1/alpha on the
 * diagonal and -G(r_v - r_w) off it; two right-hand sides solved at once agree with the
 * operator applied to the solution. */
static void test_denseop_matrix_and_solve(void **state)
{
    (void)state;
    dpz_grid *g = block(3, 2, 2);
    double k = 0.52 / SPACING;
    double complex eps[256];
    for (int i = 0; i < 256; i++)
        eps[i] = 2.25;
    eps[2] = 12.25 + 0.3 * I;
    double complex *ia = malloc(g->n_occ * sizeof *ia);
    dpz_err err;
    assert_int_equal(dpz_operator_inv_alpha(g, eps, 1.0, k, DPZ_DIPOLE_CMRR, ia, &err),
                     DPZ_OK);
    dpz_denseop *op = NULL;
    assert_int_equal(dpz_denseop_create(&op, g, k, DPZ_DIPOLE_CMRR, ia, 0, &err), DPZ_OK);
    size_t n;
    const double complex *A = dpz_denseop_matrix(op, &n);
    assert_int_equal(n, 3 * g->n_occ);
    for (size_t r = 0; r < n; r++)
        for (size_t c = 0; c < n; c++)
            assert_true(A[c * n + r] == A[r * n + c]);
    for (size_t v = 0; v < g->n_occ; v++)
        for (int a = 0; a < 3; a++)
            assert_true(A[(3 * v + a) * n + 3 * v + a] == ia[v]);
    /* Element (voxel 0, x) - (voxel 1, y) is -G_xy of their offset. */
    double r0[3], r1[3];
    dpz_grid_centre(g, g->occ[0], r0);
    dpz_grid_centre(g, g->occ[1], r1);
    double R[3] = {r0[0] - r1[0], r0[1] - r1[1], r0[2] - r1[2]};
    double complex G[6];
    dpz_green_eval(k, R, G);
    assert_cclose(A[(3 * 1 + 1) * n + 0], -G[1], 1e-14);
    double complex *b = malloc(2 * n * sizeof *b), *x = malloc(2 * n * sizeof *x),
                   *ax = malloc(n * sizeof *ax);
    uint64_t seed = 99;
    for (size_t i = 0; i < 2 * n; i++)
        b[i] = CMPLX(dpz_test_rand(&seed), dpz_test_rand(&seed));
    memcpy(x, b, 2 * n * sizeof *x);
    assert_int_equal(dpz_denseop_solve(op, x, 2, &err), DPZ_OK);
    for (int q = 0; q < 2; q++) {
        assert_int_equal(dpz_denseop_apply(op, x + q * n, ax, &err), DPZ_OK);
        double scale = 0;
        for (size_t i = 0; i < n; i++)
            scale = fmax(scale, cabs(b[q * n + i]));
        for (size_t i = 0; i < n; i++)
            assert_cclose_abs(ax[i], b[q * n + i], TOL_LU, scale);
    }
    dpz_linop L = dpz_denseop_linop(op);
    assert_int_equal(L.n, n);
    assert_true(L.diag[4] == ia[1]);
    assert_int_equal(dpz_denseop_solve(op, x, 0, &err), DPZ_OK);
    dpz_denseop_destroy(op);
    dpz_denseop_destroy(NULL);
    free(ia);
    free(b);
    free(x);
    free(ax);
    dpz_grid_destroy(g);
}

/* eps is taken relative to the host (eps_rel = eps / n_h^2; Bohren & Huffman 1983,
 * sec. 4.4): a material of eps 2.25 n_h^2 in a host of index n_h = 1.33 has the voxel
 * polarizability of eps_rel = 2.25 in vacuum, with k the wavenumber in the host. Labels
 * map to their own materials. */
static void test_operator_inv_alpha_host_and_labels(void **state)
{
    (void)state;
    dpz_grid *g = block(2, 2, 1);
    double complex eps[256];
    for (int i = 0; i < 256; i++)
        eps[i] = 2.25 * 1.33 * 1.33;
    eps[2] = (-10.0 + 1.0 * I) * 1.33 * 1.33;
    double complex ia[4];
    dpz_err err;
    double k = 0.4 / SPACING;
    assert_int_equal(dpz_operator_inv_alpha(g, eps, 1.33, k, DPZ_DIPOLE_LDR, ia, &err),
                     DPZ_OK);
    for (size_t v = 0; v < g->n_occ; v++) {
        unsigned lab = g->label[g->occ[v]];
        double complex er = lab == 1 ? 2.25 : -10.0 + 1.0 * I;
        assert_cclose(ia[v], dpz_dipole_inv_alpha(DPZ_DIPOLE_LDR, er, k, SPACING), 1e-14);
    }
    assert_int_equal(dpz_operator_inv_alpha(g, eps, 0.0, k, DPZ_DIPOLE_LDR, ia, &err),
                     DPZ_EINVAL);
    assert_non_null(strstr(err.msg, "host index"));
    assert_int_equal(dpz_operator_inv_alpha(g, eps, 1.33, -k, DPZ_DIPOLE_LDR, ia, &err),
                     DPZ_EINVAL);
    eps[1] = 1.33 * 1.33;
    assert_int_equal(dpz_operator_inv_alpha(g, eps, 1.33, k, DPZ_DIPOLE_LDR, ia, &err),
                     DPZ_EINVAL);
    assert_non_null(strstr(err.msg, "label 1"));
    dpz_grid_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_denseop_matrix_and_solve),
        cmocka_unit_test(test_operator_inv_alpha_host_and_labels),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
