/* test_solver_iter.c: the Krylov solvers against a direct LU solve (LAPACKE zgesv) of the
 * same discrete-dipole system, on spheres of dielectric (eps 2.25), high-index (12.25)
 * and metallic (-10+1i) material; warm starts, iteration limits, breakdown, b = 0. */
#include <complex.h>
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <lapacke.h>

#include "dpz_test.h"

#include "dpz_dipole.h"
#include "dpz_grid.h"
#include "dpz_iter.h"
#include "dpz_operator.h"

#define SPACING 1.7e-8 /* m */
#define TOL 1e-8

typedef struct problem {
    dpz_grid *g;
    double complex *ia, *b, *xd; /* 1/alpha, right-hand side, direct solution */
    dpz_fftop *op;
    dpz_denseop *dn;
    size_t n;
    double kappa1; /* 1-norm condition number estimate (LAPACKE zgecon) */
} problem;

/* Sphere of radius R voxels (centres within R of the grid centre), eps relative to the
 * host (n_h = 1), k such that k d = 0.2, incident plane wave x e^{ikz} (unit amplitude).
 */
static problem make_problem(double R, double complex eps, dpz_dipole_model model)
{
    problem P = {0};
    size_t n1 = (size_t)(2 * R) + 1;
    dpz_err err;
    assert_int_equal(dpz_grid_create(&P.g, n1, n1, n1, SPACING, 0, &err), DPZ_OK);
    for (size_t i = 0; i < n1; i++)
        for (size_t j = 0; j < n1; j++)
            for (size_t l = 0; l < n1; l++) {
                double c = 0.5 * (n1 - 1.0);
                double x = i - c, y = j - c, z = l - c;
                P.g->label[dpz_grid_index(P.g, i, j, l)] = x * x + y * y + z * z <= R * R;
            }
    assert_int_equal(dpz_grid_update(P.g, &err), DPZ_OK);
    double k = 0.2 / SPACING;
    double complex epsl[256];
    for (int i = 0; i < 256; i++)
        epsl[i] = eps;
    P.n = 3 * P.g->n_occ;
    P.ia = malloc(P.g->n_occ * sizeof *P.ia);
    P.b = calloc(P.n, sizeof *P.b);
    P.xd = malloc(P.n * sizeof *P.xd);
    assert_int_equal(dpz_operator_inv_alpha(P.g, epsl, 1.0, k, model, P.ia, &err),
                     DPZ_OK);
    for (size_t v = 0; v < P.g->n_occ; v++) {
        double r[3];
        dpz_grid_centre(P.g, P.g->occ[v], r);
        P.b[3 * v] = cexp(CMPLX(0.0, k * r[2]));
    }
    assert_int_equal(dpz_fftop_create(&P.op, P.g, k, model, P.ia, NULL, &err), DPZ_OK);
    assert_int_equal(dpz_denseop_create(&P.dn, P.g, k, model, P.ia, 0, &err), DPZ_OK);
    memcpy(P.xd, P.b, P.n * sizeof *P.xd);
    assert_int_equal(dpz_denseop_solve(P.dn, P.xd, 1, &err), DPZ_OK);
    /* Condition number for the forward-error bound of the iterative solution. */
    size_t nn;
    const double complex *A = dpz_denseop_matrix(P.dn, &nn);
    double complex *lu = malloc(nn * nn * sizeof *lu);
    lapack_int *ipiv = malloc(nn * sizeof *ipiv);
    memcpy(lu, A, nn * nn * sizeof *lu);
    double anorm = LAPACKE_zlange(LAPACK_COL_MAJOR, '1', (lapack_int)nn, (lapack_int)nn,
                                  A, (lapack_int)nn);
    assert_int_equal(LAPACKE_zgetrf(LAPACK_COL_MAJOR, (lapack_int)nn, (lapack_int)nn, lu,
                                    (lapack_int)nn, ipiv),
                     0);
    double rcond = 0;
    assert_int_equal(LAPACKE_zgecon(LAPACK_COL_MAJOR, '1', (lapack_int)nn, lu,
                                    (lapack_int)nn, anorm, &rcond),
                     0);
    P.kappa1 = 1.0 / rcond;
    free(lu);
    free(ipiv);
    return P;
}

static void free_problem(problem *P)
{
    dpz_fftop_destroy(P->op);
    dpz_denseop_destroy(P->dn);
    dpz_grid_destroy(P->g);
    free(P->ia);
    free(P->b);
    free(P->xd);
}

static double rel_diff(const double complex *x, const double complex *y, size_t n)
{
    double num = 0, den = 0;
    for (size_t i = 0; i < n; i++) {
        num += pow(cabs(x[i] - y[i]), 2);
        den += pow(cabs(y[i]), 2);
    }
    return sqrt(num / den);
}

/* Solves with `kind` and checks: converged; the true residual (recomputed here with the
 * dense matrix) is below the tolerance; the forward error against LU is below
 * kappa_1 * tol. For a complex-symmetric A, ||A||_2 <= ||A||_1 and ||A^-1||_2 <=
 * ||A^-1||_1, so ||x - x*||_2/||x*||_2 <= kappa_1 ||r||_2/||b||_2 (Higham, Accuracy and
 * Stability of Numerical Algorithms, 2002, sec. 7.1); zgecon's estimate may be low by a
 * small factor (Higham 2002, sec. 15.3), hence the factor 10. Returns the iterations. */
static size_t solve_and_check(problem *P, dpz_solver_kind kind, dpz_status want)
{
    dpz_solve_opts o = dpz_solve_opts_default();
    o.kind = kind;
    o.tol = TOL;
    double complex *x = calloc(P->n, sizeof *x), *ax = malloc(P->n * sizeof *ax);
    dpz_solve_info info;
    dpz_err err;
    dpz_linop L = dpz_fftop_linop(P->op);
    dpz_status st = dpz_solve(&L, P->b, x, &o, &info, &err);
    assert_int_equal(st, want);
    size_t iters = info.iterations;
    if (want == DPZ_OK) {
        assert_int_equal(info.status, DPZ_OK);
        assert_true(info.residual <= TOL);
        assert_int_equal(info.n_history, info.iterations);
        assert_non_null(info.history);
        assert_true(info.applies >= info.iterations);
        assert_int_equal(dpz_denseop_apply(P->dn, x, ax, &err), DPZ_OK);
        double rn = 0, bn = 0;
        for (size_t i = 0; i < P->n; i++) {
            rn += pow(cabs(P->b[i] - ax[i]), 2);
            bn += pow(cabs(P->b[i]), 2);
        }
        /* The FFT and dense operators agree to ~1e-13, far below TOL. */
        assert_true(sqrt(rn / bn) <= 1.01 * TOL);
        assert_true(rel_diff(x, P->xd, P->n) <= 10.0 * P->kappa1 * TOL);
    }
    dpz_solve_info_free(&info);
    free(x);
    free(ax);
    return iters;
}

static void test_iter_dielectric_sphere(void **state)
{
    (void)state;
    problem P = make_problem(3.6, 2.25, DPZ_DIPOLE_CMRR);
    solve_and_check(&P, DPZ_SOLVER_BICGSTAB, DPZ_OK);
    solve_and_check(&P, DPZ_SOLVER_COCG, DPZ_OK);
    solve_and_check(&P, DPZ_SOLVER_GMRES, DPZ_OK);
    free_problem(&P);
}

static void test_iter_high_index_sphere(void **state)
{
    (void)state;
    problem P = make_problem(3.6, 12.25, DPZ_DIPOLE_LDR);
    solve_and_check(&P, DPZ_SOLVER_BICGSTAB, DPZ_OK);
    solve_and_check(&P, DPZ_SOLVER_COCG, DPZ_OK);
    solve_and_check(&P, DPZ_SOLVER_GMRES, DPZ_OK);
    free_problem(&P);
}

static void test_iter_metal_sphere(void **state)
{
    (void)state;
    problem P = make_problem(3.6, -10.0 + 1.0 * I, DPZ_DIPOLE_IGT);
    solve_and_check(&P, DPZ_SOLVER_BICGSTAB, DPZ_OK);
    solve_and_check(&P, DPZ_SOLVER_COCG, DPZ_OK);
    solve_and_check(&P, DPZ_SOLVER_GMRES, DPZ_OK);
    free_problem(&P);
}

/* Starting from the direct solution, the solvers stop at once (0 iterations) or after one
 * iteration (when the rounding of the LU solution sits just above the tolerance). */
static void test_iter_warm_start(void **state)
{
    (void)state;
    problem P = make_problem(2.5, 2.25, DPZ_DIPOLE_CMRR);
    const dpz_solver_kind kinds[] = {DPZ_SOLVER_BICGSTAB, DPZ_SOLVER_COCG,
                                     DPZ_SOLVER_GMRES};
    for (int q = 0; q < 3; q++) {
        dpz_solve_opts o = dpz_solve_opts_default();
        o.kind = kinds[q];
        o.tol = TOL;
        double complex *x = malloc(P.n * sizeof *x);
        memcpy(x, P.xd, P.n * sizeof *x);
        dpz_solve_info info;
        dpz_linop L = dpz_fftop_linop(P.op);
        assert_int_equal(dpz_solve(&L, P.b, x, &o, &info, NULL), DPZ_OK);
        assert_true(info.iterations <= 1);
        assert_true(rel_diff(x, P.xd, P.n) <= 10.0 * P.kappa1 * TOL);
        dpz_solve_info_free(&info);
        free(x);
    }
    free_problem(&P);
}

/* A guess that is the direct solution times 2.385 - 0.7i (the right shape, the wrong
 * amplitude, as a neighbouring wavelength's solution near a resonance can be) is rescaled
 * by the minimal-residual factor (A x0)^H b / ||A x0||^2 (Saad 2003, sec. 5.3): the
 * solvers then stop at once or after one iteration, like the unscaled direct solution
 * above; without the rescaling the initial relative residual would be |1 - 2.385 + 0.7i|
 * = 1.55. A guess orthogonal in the residual sense is no worse than a zero guess. */
static void test_iter_warm_start_rescaled(void **state)
{
    (void)state;
    problem P = make_problem(2.5, 2.25, DPZ_DIPOLE_CMRR);
    double complex *x = malloc(P.n * sizeof *x);
    dpz_linop L = dpz_fftop_linop(P.op);
    dpz_solve_opts o = dpz_solve_opts_default();
    o.kind = DPZ_SOLVER_COCG;
    o.tol = TOL;
    for (size_t i = 0; i < P.n; i++)
        x[i] = (2.385 - 0.7 * I) * P.xd[i];
    dpz_solve_info info;
    assert_int_equal(dpz_solve(&L, P.b, x, &o, &info, NULL), DPZ_OK);
    assert_true(info.iterations <= 1);
    assert_true(rel_diff(x, P.xd, P.n) <= 10.0 * P.kappa1 * TOL);
    dpz_solve_info_free(&info);
    /* Cold start for comparison: the same system needs several iterations from zero. */
    memset(x, 0, P.n * sizeof *x);
    assert_int_equal(dpz_solve(&L, P.b, x, &o, &info, NULL), DPZ_OK);
    size_t cold = info.iterations;
    assert_true(cold > 2);
    dpz_solve_info_free(&info);
    /* The iteration object's residual after set-up never exceeds the zero guess's (1):
     * a guess of unrelated random entries. */
    uint64_t seed = 2385;
    for (size_t i = 0; i < P.n; i++)
        x[i] = CMPLX(dpz_test_rand(&seed), dpz_test_rand(&seed));
    dpz_iter *it = NULL;
    assert_int_equal(dpz_iter_create(&it, P.n, &o, NULL), DPZ_OK);
    assert_int_equal(dpz_iter_set(it, &L, P.b, x, NULL), DPZ_OK);
    assert_true(dpz_iter_residual(it) <= 1.0);
    dpz_iter_destroy(it);
    free(x);
    free_problem(&P);
}

/* Two iterations cannot solve the system: DPZ_ENOCONV, with the iterate, the count and
 * the history still readable. */
static void test_iter_max_iter_reports_noconv(void **state)
{
    (void)state;
    problem P = make_problem(3.1, 12.25, DPZ_DIPOLE_CMRR);
    const dpz_solver_kind kinds[] = {DPZ_SOLVER_BICGSTAB, DPZ_SOLVER_COCG,
                                     DPZ_SOLVER_GMRES};
    for (int q = 0; q < 3; q++) {
        dpz_solve_opts o = dpz_solve_opts_default();
        o.kind = kinds[q];
        o.max_iter = 2;
        double complex *x = calloc(P.n, sizeof *x);
        dpz_solve_info info;
        dpz_err err;
        dpz_linop L = dpz_fftop_linop(P.op);
        assert_int_equal(dpz_solve(&L, P.b, x, &o, &info, &err), DPZ_ENOCONV);
        assert_int_equal(err.code, DPZ_ENOCONV);
        assert_non_null(strstr(err.msg, "did not reach"));
        assert_int_equal(info.iterations, 2);
        assert_int_equal(info.n_history, 2);
        assert_true(info.residual > TOL && info.residual < 1.0);
        dpz_solve_info_free(&info);
        free(x);
    }
    free_problem(&P);
}

/* b = 0 gives x = 0 at once, whatever the initial guess. */
static void test_iter_zero_rhs(void **state)
{
    (void)state;
    problem P = make_problem(2.0, 2.25, DPZ_DIPOLE_CMRR);
    double complex *b = calloc(P.n, sizeof *b), *x = malloc(P.n * sizeof *x);
    for (size_t i = 0; i < P.n; i++)
        x[i] = 2.385;
    dpz_solve_info info;
    dpz_linop L = dpz_fftop_linop(P.op);
    assert_int_equal(dpz_solve(&L, b, x, NULL, &info, NULL), DPZ_OK);
    assert_int_equal(info.iterations, 0);
    assert_int_equal(info.applies, 0);
    for (size_t i = 0; i < P.n; i++)
        assert_true(x[i] == 0.0);
    dpz_solve_info_free(&info);
    free(b);
    free(x);
    free_problem(&P);
}

/* A = [[0, 1], [1, 0]], b = (1, 0): the first Krylov step gives rhat^H A r = 0 (BiCGSTAB)
 * and r^T A r = 0 (COCG): a genuine breakdown that must be reported, not hidden. GMRES
 * has no such breakdown and solves it (x = (0, 1)). */
static dpz_status swap_apply(void *ctx, const double complex *x, double complex *y,
                             dpz_err *err)
{
    (void)ctx;
    (void)err;
    y[0] = x[1];
    y[1] = x[0];
    return DPZ_OK;
}

static void test_iter_breakdown_detected(void **state)
{
    (void)state;
    dpz_linop L = {2, NULL, swap_apply, NULL};
    const double complex b[2] = {1.0, 0.0};
    double complex x[2] = {0, 0};
    dpz_solve_opts o = dpz_solve_opts_default();
    dpz_err err;
    dpz_solve_info info;
    o.kind = DPZ_SOLVER_BICGSTAB;
    assert_int_equal(dpz_solve(&L, b, x, &o, &info, &err), DPZ_EBREAKDOWN);
    assert_non_null(strstr(err.msg, "broke down"));
    dpz_solve_info_free(&info);
    o.kind = DPZ_SOLVER_COCG;
    x[0] = x[1] = 0;
    assert_int_equal(dpz_solve(&L, b, x, &o, &info, &err), DPZ_EBREAKDOWN);
    dpz_solve_info_free(&info);
    o.kind = DPZ_SOLVER_GMRES;
    x[0] = x[1] = 0;
    assert_int_equal(dpz_solve(&L, b, x, &o, &info, &err), DPZ_OK);
    assert_cclose_abs(x[0], 0.0, 1e-15, 1.0);
    assert_cclose(x[1], 1.0, 1e-15);
    dpz_solve_info_free(&info);
}

/* A stagnation window of 3 iterations stops a solve whose residual cannot fall: the
 * operator returns 0 * x for the second component, so that equation is never satisfied
 * (singular system) and GMRES's residual plateaus. */
static dpz_status singular_apply(void *ctx, const double complex *x, double complex *y,
                                 dpz_err *err)
{
    (void)ctx;
    (void)err;
    y[0] = 2.385 * x[0];
    y[1] = 0.0;
    y[2] = 1.5 * x[2];
    return DPZ_OK;
}

static void test_iter_stagnation_detected(void **state)
{
    (void)state;
    dpz_linop L = {3, NULL, singular_apply, NULL};
    const double complex b[3] = {1.0, 1.0, 1.0};
    double complex x[3] = {0, 0, 0};
    dpz_solve_opts o = dpz_solve_opts_default();
    o.kind = DPZ_SOLVER_GMRES;
    o.restart = 1;
    o.stagnation_window = 3;
    dpz_err err;
    dpz_solve_info info;
    dpz_status st = dpz_solve(&L, b, x, &o, &info, &err);
    assert_int_equal(st, DPZ_ESTAGNATION);
    assert_non_null(strstr(err.msg, "stagnated"));
    assert_true(info.residual > 0.5);
    dpz_solve_info_free(&info);
}

static void test_iter_names_and_bad_options(void **state)
{
    (void)state;
    dpz_solver_kind k;
    dpz_err err;
    assert_int_equal(dpz_solver_parse("cocg", &k, &err), DPZ_OK);
    assert_int_equal(k, DPZ_SOLVER_COCG);
    assert_string_equal(dpz_solver_name(DPZ_SOLVER_GMRES), "gmres");
    assert_int_equal(dpz_solver_parse("qmr", &k, &err), DPZ_EINVAL);
    assert_non_null(strstr(err.msg, "bicgstab"));
    dpz_solve_opts o = dpz_solve_opts_default();
    assert_close(o.tol, 1e-8, 0.0);
    assert_int_equal(o.max_iter, 10000);
    assert_int_equal(o.restart, 30);
    assert_true(o.jacobi != 0);
    dpz_iter *it = NULL;
    o.tol = 0.0;
    assert_int_equal(dpz_iter_create(&it, 10, &o, &err), DPZ_EINVAL);
    o = dpz_solve_opts_default();
    o.max_iter = 0;
    assert_int_equal(dpz_iter_create(&it, 10, &o, &err), DPZ_EINVAL);
    assert_int_equal(dpz_iter_create(&it, 0, NULL, &err), DPZ_EINVAL);
    assert_null(it);
    /* A linop of the wrong order is refused at set. */
    assert_int_equal(dpz_iter_create(&it, 4, NULL, &err), DPZ_OK);
    dpz_linop L = {2, NULL, swap_apply, NULL};
    double complex b[4] = {1, 2, 3, 4};
    assert_int_equal(dpz_iter_set(it, &L, b, NULL, &err), DPZ_EINVAL);
    assert_int_equal(dpz_iter_step(it, &err), DPZ_EINVAL);
    dpz_iter_destroy(it);
}

static void test_iter_allocation_failure(void **state)
{
    (void)state;
    const dpz_solver_kind kinds[] = {DPZ_SOLVER_BICGSTAB, DPZ_SOLVER_COCG,
                                     DPZ_SOLVER_GMRES};
    for (int q = 0; q < 3; q++) {
        dpz_solve_opts o = dpz_solve_opts_default();
        o.kind = kinds[q];
        int failures = 0;
        for (long n = 0;; n++) {
            dpz_iter *it = NULL;
            dpz_err err;
            dpz_alloc_fail_after(n);
            dpz_status st = dpz_iter_create(&it, 12, &o, &err);
            dpz_alloc_fail_after(-1);
            if (st == DPZ_OK) {
                dpz_iter_destroy(it);
                break;
            }
            assert_int_equal(st, DPZ_ENOMEM);
            assert_null(it);
            failures++;
        }
        assert_true(failures >= 5);
    }
}

/* Physics check of operator + solver together: the static (k = 0) polarizability of a
 * voxelized sphere of eps = 2.25 (radius 10 voxels, 4169 dipoles, about 20 per diameter)
 * against the sphere's 4 pi a^3 (eps - 1)/(eps + 2) with a = a_eq (Bohren & Huffman
 * 1983, eq. 5.15, number from memory). The lattice (staircase) error at this resolution
 * is a few tenths of a percent (measured 0.35%) and falls roughly linearly with the
 * spacing: TOL_LATTICE = 1% keeps a margin while catching any missing factor (4 pi, 3, a
 * sign). The tensor is diagonal and isotropic by the cubic symmetry of the voxel set. */
#define TOL_LATTICE 1e-2
static void test_iter_static_sphere_polarizability(void **state)
{
    (void)state;
    dpz_grid *g = NULL;
    dpz_err err;
    const double R = 10.0, d = 2.385e-9;
    const size_t n1 = 21;
    assert_int_equal(dpz_grid_create(&g, n1, n1, n1, d, 0, &err), DPZ_OK);
    for (size_t i = 0; i < n1; i++)
        for (size_t j = 0; j < n1; j++)
            for (size_t l = 0; l < n1; l++) {
                double x = i - 10.0, y = j - 10.0, z = l - 10.0;
                g->label[dpz_grid_index(g, i, j, l)] = x * x + y * y + z * z <= R * R;
            }
    assert_int_equal(dpz_grid_update(g, &err), DPZ_OK);
    assert_int_equal(g->n_occ, 4169);
    double complex eps[256];
    for (int i = 0; i < 256; i++)
        eps[i] = 2.25;
    size_t n = 3 * g->n_occ;
    double complex *ia = malloc(g->n_occ * sizeof *ia), *b = malloc(n * sizeof *b),
                   *x = malloc(n * sizeof *x);
    assert_int_equal(dpz_operator_inv_alpha(g, eps, 1.0, 0.0, DPZ_DIPOLE_CMRR, ia, &err),
                     DPZ_OK);
    dpz_fftop *op = NULL;
    assert_int_equal(dpz_fftop_create(&op, g, 0.0, DPZ_DIPOLE_CMRR, ia, NULL, &err),
                     DPZ_OK);
    dpz_linop L = dpz_fftop_linop(op);
    double aeq = cbrt(3.0 * g->n_occ / (4.0 * 3.14159265358979323846)) * d;
    double want = 4.0 * 3.14159265358979323846 * aeq * aeq * aeq * 1.25 / 4.25;
    dpz_solve_opts o = dpz_solve_opts_default();
    o.kind = DPZ_SOLVER_COCG;
    o.tol = 1e-10;
    for (int c = 0; c < 3; c++) {
        /* Uniform field of 1 V/m along axis c. */
        for (size_t i = 0; i < n; i++) {
            b[i] = (i % 3 == (size_t)c) ? 1.0 : 0.0;
            x[i] = 0.0;
        }
        dpz_solve_info info;
        assert_int_equal(dpz_solve(&L, b, x, &o, &info, &err), DPZ_OK);
        dpz_solve_info_free(&info);
        double complex p[3] = {0, 0, 0};
        for (size_t v = 0; v < g->n_occ; v++)
            for (int a = 0; a < 3; a++)
                p[a] += x[3 * v + a];
        assert_close(creal(p[c]), want, TOL_LATTICE);
        for (int a = 0; a < 3; a++) {
            assert_true(fabs(cimag(p[a])) < 1e-8 * want); /* lossless, static: real */
            if (a != c)
                assert_true(cabs(p[a]) < 1e-8 * want);
        }
    }
    dpz_fftop_destroy(op);
    dpz_grid_destroy(g);
    free(ia);
    free(b);
    free(x);
}

/* Energy conservation of the discrete-dipole solution for a lossless material (optical
 * theorem; Draine 1988, sec. II and eqs. 34-36): with Im(1/alpha) = -k^3/(6 pi) exactly
 * (cm-rr, ldr and igt for real eps), the extinction cross section from the forward
 * amplitude, C_ext = k Im(sum_j E_inc(r_j)^* . p~_j) / |E0|^2, equals the scattering
 * cross section from the far field, computed independently of the interaction kernel by
 * quadrature over directions: C_sca = (k^4/(16 pi^2)) int |P - (P . n) n|^2 dOmega,  P(n)
 * = sum_j p~_j e^{-ik n.r_j} (Jackson eq. 9.22, number from memory, for the far field of
 * a dipole, summed with phases). Gauss-Legendre in cos(theta) x trapezoid in phi
 * integrate the band-limited integrand (k r_max ~ 1.5) to rounding; TOL_ENERGY allows for
 * the solver tolerance 1e-11. */
#define TOL_ENERGY 1e-8
static double sca_cross_section(const dpz_grid *g, const double complex *p, double k)
{
    enum { NT = 32, NP = 64 };
    /* Gauss-Legendre nodes on [-1, 1] by Newton iteration on P_NT (A&S 25.4.29). */
    double mu[NT], w[NT];
    for (int i = 0; i < NT; i++) {
        double z = cos(3.14159265358979323846 * (i + 0.75) / (NT + 0.5)), dp = 1;
        for (int it = 0; it < 100; it++) {
            double p0 = 1, p1 = z;
            for (int m = 2; m <= NT; m++) {
                double p2 = ((2.0 * m - 1) * z * p1 - (m - 1.0) * p0) / m;
                p0 = p1;
                p1 = p2;
            }
            dp = NT * (z * p1 - p0) / (z * z - 1);
            double dz = p1 / dp;
            z -= dz;
            if (fabs(dz) < 1e-16)
                break;
        }
        double p0 = 1, p1 = z;
        for (int m = 2; m <= NT; m++) {
            double p2 = ((2.0 * m - 1) * z * p1 - (m - 1.0) * p0) / m;
            p0 = p1;
            p1 = p2;
        }
        dp = NT * (z * p1 - p0) / (z * z - 1);
        mu[i] = z;
        w[i] = 2 / ((1 - z * z) * dp * dp);
    }
    double sum = 0;
    for (int i = 0; i < NT; i++) {
        double st = sqrt(1 - mu[i] * mu[i]);
        for (int j = 0; j < NP; j++) {
            double ph = 2 * 3.14159265358979323846 * j / NP;
            double nv[3] = {st * cos(ph), st * sin(ph), mu[i]};
            double complex P[3] = {0, 0, 0};
            for (size_t v = 0; v < g->n_occ; v++) {
                double r[3];
                dpz_grid_centre(g, g->occ[v], r);
                double complex e =
                    cexp(CMPLX(0, -k * (nv[0] * r[0] + nv[1] * r[1] + nv[2] * r[2])));
                for (int a = 0; a < 3; a++)
                    P[a] += p[3 * v + a] * e;
            }
            double complex pn = P[0] * nv[0] + P[1] * nv[1] + P[2] * nv[2];
            double q = 0;
            for (int a = 0; a < 3; a++)
                q += pow(cabs(P[a] - pn * nv[a]), 2);
            sum += w[i] * (2 * 3.14159265358979323846 / NP) * q;
        }
    }
    return pow(k, 4) / (16 * 3.14159265358979323846 * 3.14159265358979323846) * sum;
}

static void test_iter_energy_conservation_lossless(void **state)
{
    (void)state;
    const dpz_dipole_model models[] = {DPZ_DIPOLE_CMRR, DPZ_DIPOLE_LDR, DPZ_DIPOLE_IGT};
    for (int m = 0; m < 3; m++) {
        /* A non-symmetric particle: an L-shaped block, eps = 3.1 relative to the host. */
        dpz_grid *g = NULL;
        dpz_err err;
        assert_int_equal(dpz_grid_create(&g, 5, 4, 3, SPACING, 0, &err), DPZ_OK);
        for (size_t i = 0; i < 5; i++)
            for (size_t j = 0; j < 4; j++)
                for (size_t l = 0; l < 3; l++)
                    g->label[dpz_grid_index(g, i, j, l)] = (i < 2 || j < 2) ? 1 : 0;
        assert_int_equal(dpz_grid_update(g, &err), DPZ_OK);
        double k = 0.45 / SPACING;
        double complex eps[256];
        for (int i = 0; i < 256; i++)
            eps[i] = 3.1;
        size_t n = 3 * g->n_occ;
        double complex *ia = malloc(g->n_occ * sizeof *ia), *b = malloc(n * sizeof *b),
                       *x = calloc(n, sizeof *x);
        assert_int_equal(dpz_operator_inv_alpha(g, eps, 1.0, k, models[m], ia, &err),
                         DPZ_OK);
        /* Plane wave along (0.6, 0, 0.8), polarized along y with 1 V/m. */
        const double kh[3] = {0.6, 0.0, 0.8};
        for (size_t v = 0; v < g->n_occ; v++) {
            double r[3];
            dpz_grid_centre(g, g->occ[v], r);
            double complex e =
                cexp(CMPLX(0, k * (kh[0] * r[0] + kh[1] * r[1] + kh[2] * r[2])));
            b[3 * v] = 0;
            b[3 * v + 1] = e;
            b[3 * v + 2] = 0;
        }
        dpz_fftop *op = NULL;
        assert_int_equal(dpz_fftop_create(&op, g, k, models[m], ia, NULL, &err), DPZ_OK);
        dpz_linop L = dpz_fftop_linop(op);
        dpz_solve_opts o = dpz_solve_opts_default();
        o.tol = 1e-11;
        dpz_solve_info info;
        assert_int_equal(dpz_solve(&L, b, x, &o, &info, &err), DPZ_OK);
        dpz_solve_info_free(&info);
        double complex s = 0;
        for (size_t i = 0; i < n; i++)
            s += conj(b[i]) * x[i];
        double c_ext = k * cimag(s);
        double c_sca = sca_cross_section(g, x, k);
        assert_true(c_ext > 0);
        assert_close(c_sca, c_ext, TOL_ENERGY);
        dpz_fftop_destroy(op);
        dpz_grid_destroy(g);
        free(ia);
        free(b);
        free(x);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_iter_dielectric_sphere),
        cmocka_unit_test(test_iter_high_index_sphere),
        cmocka_unit_test(test_iter_metal_sphere),
        cmocka_unit_test(test_iter_warm_start),
        cmocka_unit_test(test_iter_warm_start_rescaled),
        cmocka_unit_test(test_iter_max_iter_reports_noconv),
        cmocka_unit_test(test_iter_zero_rhs),
        cmocka_unit_test(test_iter_breakdown_detected),
        cmocka_unit_test(test_iter_stagnation_detected),
        cmocka_unit_test(test_iter_names_and_bad_options),
        cmocka_unit_test(test_iter_allocation_failure),
        cmocka_unit_test(test_iter_static_sphere_polarizability),
        cmocka_unit_test(test_iter_energy_conservation_lossless),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
