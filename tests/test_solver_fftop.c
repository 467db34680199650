/* test_solver_fftop.c: the FFT discrete-dipole operator against the dense operator built
 * from the same kernel (an independent direct summation), the complex symmetry of the
 * discrete-dipole matrix (reciprocity, Draine 1988 sec. II), thread independence, memory
 * accounting and error paths. */
#include <complex.h>
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dpz_test.h"

#include "dpz_dipole.h"
#include "dpz_grid.h"
#include "dpz_operator.h"

/* FFT vs direct summation: both evaluate the same sums; the FFT adds O(log N eps)
 * relative rounding, so 1e-12 relative to the largest entry leaves ample margin. */
#define TOL_FFT 1e-12
#define SPACING 2.385e-8 /* m */

typedef enum { SHAPE_FULL, SHAPE_HALF, SHAPE_SPHERE_HOLES, SHAPE_SPARSE } shape_kind;

static dpz_grid *make_grid(size_t nx, size_t ny, size_t nz, shape_kind shape)
{
    dpz_grid *g = NULL;
    dpz_err err;
    assert_int_equal(dpz_grid_create(&g, nx, ny, nz, SPACING, 0, &err), DPZ_OK);
    for (size_t i = 0; i < nx; i++)
        for (size_t j = 0; j < ny; j++)
            for (size_t l = 0; l < nz; l++) {
                int on = 1;
                if (shape == SHAPE_HALF)
                    on = (i + 2 * j + 3 * l) % 3 != 1;
                if (shape == SHAPE_SPHERE_HOLES) {
                    double x = i - 0.5 * (nx - 1.0), y = j - 0.5 * (ny - 1.0),
                           z = l - 0.5 * (nz - 1.0);
                    on = x * x + y * y + z * z <= 3.2 * 3.2 && (i + j + l) % 5 != 0;
                }
                /* A few voxels spread over a large box (opposite corners occupied), so
                 * that the dense reference stays small while the padded grid is big. */
                if (shape == SHAPE_SPARSE)
                    on = (7 * i + 13 * j + 29 * l) % 31 == 0 ||
                         (i + 1 == nx && j + 1 == ny && l + 1 == nz);
                /* Two materials so that the diagonal is not uniform. */
                g->label[dpz_grid_index(g, i, j, l)] =
                    on ? (uint8_t)(1 + (i + j) % 2) : 0;
            }
    assert_int_equal(dpz_grid_update(g, &err), DPZ_OK);
    return g;
}

static void inv_alpha_for(const dpz_grid *g, double k, dpz_dipole_model model,
                          double complex *ia)
{
    double complex eps[256];
    for (int i = 0; i < 256; i++)
        eps[i] = 2.25;
    eps[2] = -10.0 + 1.0 * I;
    dpz_err err;
    assert_int_equal(dpz_operator_inv_alpha(g, eps, 1.33, k, model, ia, &err), DPZ_OK);
}

static void random_vec(double complex *x, size_t n, uint64_t *seed)
{
    for (size_t i = 0; i < n; i++)
        x[i] = CMPLX(dpz_test_rand(seed), dpz_test_rand(seed));
}

static double max_abs(const double complex *x, size_t n)
{
    double m = 0.0;
    for (size_t i = 0; i < n; i++)
        m = fmax(m, cabs(x[i]));
    return m;
}

/* Compares the FFT and dense applications of A and of G for one grid, k and model. */
static void compare_one(const dpz_grid *g, double k, dpz_dipole_model model, int threads)
{
    size_t n = 3 * g->n_occ;
    double complex *ia = malloc(g->n_occ * sizeof *ia);
    double complex *x = malloc(n * sizeof *x), *yf = malloc(n * sizeof *yf),
                   *yd = malloc(n * sizeof *yd);
    inv_alpha_for(g, k, model, ia);
    uint64_t seed = 0x2385u + g->n_occ;
    random_vec(x, n, &seed);
    dpz_err err;
    dpz_fftop *op = NULL;
    dpz_denseop *dn = NULL;
    dpz_op_opts opts = {threads, DPZ_PLAN_ESTIMATE, DPZ_SIMD_AUTO};
    assert_int_equal(dpz_fftop_create(&op, g, k, model, ia, &opts, &err), DPZ_OK);
    assert_int_equal(dpz_denseop_create(&dn, g, k, model, ia, 0, &err), DPZ_OK);
    assert_int_equal(dpz_fftop_apply(op, x, yf, &err), DPZ_OK);
    assert_int_equal(dpz_denseop_apply(dn, x, yd, &err), DPZ_OK);
    double scale = max_abs(yd, n);
    for (size_t i = 0; i < n; i++)
        assert_cclose_abs(yf[i], yd[i], TOL_FFT, scale);
    /* G x alone: the dense matrix times x minus the diagonal part, negated. Forming it
     * by subtraction cancels digits where 1/alpha dominates (|1/alpha x| up to ~100 |G x|
     * for these materials), hence a 100x looser tolerance. */
    assert_int_equal(dpz_fftop_apply_green(op, x, yf, &err), DPZ_OK);
    for (size_t i = 0; i < n; i++)
        yd[i] = ia[i / 3] * x[i] - yd[i];
    scale = fmax(max_abs(yd, n), 1e-300);
    if (g->n_occ == 1) {
        /* A single voxel has no partner: G x = 0 exactly. */
        for (size_t i = 0; i < n; i++)
            assert_true(cabs(yf[i]) <= TOL_FFT * cabs(ia[0] * x[i]));
    } else {
        for (size_t i = 0; i < n; i++)
            assert_cclose_abs(yf[i], yd[i], 1e2 * TOL_FFT, scale);
    }
    dpz_fftop_destroy(op);
    dpz_denseop_destroy(dn);
    free(ia);
    free(x);
    free(yf);
    free(yd);
}

static void compare_all_models(const dpz_grid *g)
{
    const dpz_dipole_model models[] = {DPZ_DIPOLE_CMRR, DPZ_DIPOLE_LDR, DPZ_DIPOLE_IGT};
    /* k d = 0.3 (about 21 voxels per wavelength in the host) and the static kernel. */
    const double ks[] = {0.0, 0.3 / SPACING};
    for (int m = 0; m < 3; m++)
        for (int q = 0; q < 2; q++)
            compare_one(g, ks[q], models[m], 1);
}

static void test_fftop_matches_dense_odd_cube(void **state)
{
    (void)state;
    dpz_grid *g = make_grid(3, 3, 3, SHAPE_FULL);
    compare_all_models(g);
    dpz_grid_destroy(g);
}

static void test_fftop_matches_dense_even_partial(void **state)
{
    (void)state;
    dpz_grid *g = make_grid(4, 4, 4, SHAPE_HALF);
    compare_all_models(g);
    dpz_grid_destroy(g);
}

static void test_fftop_matches_dense_noncubic(void **state)
{
    (void)state;
    dpz_grid *g = make_grid(2, 3, 5, SHAPE_FULL);
    compare_all_models(g);
    dpz_grid_destroy(g);
}

static void test_fftop_matches_dense_single_voxel(void **state)
{
    (void)state;
    dpz_grid *g = make_grid(1, 1, 1, SHAPE_FULL);
    compare_all_models(g);
    dpz_grid_destroy(g);
}

static void test_fftop_matches_dense_line(void **state)
{
    (void)state;
    dpz_grid *g = make_grid(1, 1, 7, SHAPE_FULL);
    compare_all_models(g);
    dpz_grid_destroy(g);
    g = make_grid(6, 1, 1, SHAPE_FULL);
    compare_all_models(g);
    dpz_grid_destroy(g);
}

/* Single layers: no padding and no transform along that axis (p = 1), so the z pass is
 * skipped (nz = 1) or the plane has one row (nx = 1); nz = 11 pads to 24 z frequencies,
 * one block of 16 and a remainder block of 8. */
static void test_fftop_matches_dense_layers(void **state)
{
    (void)state;
    dpz_grid *g = make_grid(4, 3, 1, SHAPE_HALF);
    compare_all_models(g);
    dpz_grid_destroy(g);
    g = make_grid(1, 5, 3, SHAPE_FULL);
    compare_all_models(g);
    dpz_grid_destroy(g);
    g = make_grid(2, 2, 11, SHAPE_HALF);
    compare_all_models(g);
    dpz_grid_destroy(g);
}

static void test_fftop_matches_dense_sphere_holes(void **state)
{
    (void)state;
    dpz_grid *g = make_grid(7, 7, 7, SHAPE_SPHERE_HOLES);
    compare_all_models(g);
    dpz_grid_destroy(g);
}

/* x^T A y = y^T A x: the discrete-dipole matrix is complex symmetric (reciprocity;
 * Draine 1988, sec. II). */
/* A large padded plane (60 x 56) makes the operator process fewer z frequencies per block
 * (8, with a remainder block of 2 of the 18): still the direct sum, with 1 and 2 threads
 * and both kernel products. */
static void test_fftop_matches_dense_small_blocks(void **state)
{
    (void)state;
    dpz_grid *g = make_grid(30, 28, 9, SHAPE_SPARSE);
    assert_true(g->n_occ > 100 && g->n_occ < 400);
    compare_one(g, 0.3 / SPACING, DPZ_DIPOLE_CMRR, 1);
    compare_one(g, 0.3 / SPACING, DPZ_DIPOLE_IGT, 2);
    dpz_grid_destroy(g);
}

/* The AVX2/FMA kernel product (chosen automatically where the CPU has it) against the
 * portable one: the same sums, rounded differently (FMA), so equal to a few ulps of the
 * largest entry; on a CPU with AVX2 and FMA the automatic choice must be the AVX2 one. */
static void test_fftop_simd_matches_generic(void **state)
{
    (void)state;
    const size_t dims[][3] = {{7, 7, 7}, {4, 3, 1}, {30, 28, 9}, {2, 2, 11}};
    const shape_kind shapes[] = {SHAPE_SPHERE_HOLES, SHAPE_HALF, SHAPE_SPARSE,
                                 SHAPE_HALF};
    for (int c = 0; c < 4; c++) {
        dpz_grid *g = make_grid(dims[c][0], dims[c][1], dims[c][2], shapes[c]);
        size_t n = 3 * g->n_occ;
        double complex *ia = malloc(g->n_occ * sizeof *ia);
        double complex *x = malloc(n * sizeof *x), *ya = malloc(n * sizeof *ya),
                       *yg = malloc(n * sizeof *yg);
        double k = 0.4 / SPACING;
        inv_alpha_for(g, k, DPZ_DIPOLE_LDR, ia);
        uint64_t seed = 0x51dd + (uint64_t)c;
        random_vec(x, n, &seed);
        dpz_op_opts oa = {1, DPZ_PLAN_ESTIMATE, DPZ_SIMD_AUTO},
                    og = {1, DPZ_PLAN_ESTIMATE, DPZ_SIMD_GENERIC};
        dpz_fftop *a = NULL, *gen = NULL;
        dpz_err err;
        assert_int_equal(dpz_fftop_create(&a, g, k, DPZ_DIPOLE_LDR, ia, &oa, &err),
                         DPZ_OK);
        assert_int_equal(dpz_fftop_create(&gen, g, k, DPZ_DIPOLE_LDR, ia, &og, &err),
                         DPZ_OK);
        assert_string_equal(dpz_fftop_product_name(gen), "generic");
#if defined(__x86_64__) && defined(__GNUC__)
        __builtin_cpu_init();
        if (__builtin_cpu_supports("avx2") && __builtin_cpu_supports("fma"))
            assert_string_equal(dpz_fftop_product_name(a), "avx2-fma");
#endif
        assert_int_equal(dpz_fftop_apply_green(a, x, ya, &err), DPZ_OK);
        assert_int_equal(dpz_fftop_apply_green(gen, x, yg, &err), DPZ_OK);
        double scale = max_abs(yg, n);
        assert_true(scale > 0.0);
        for (size_t i = 0; i < n; i++)
            assert_cclose_abs(ya[i], yg[i], 1e-14, scale);
        dpz_fftop_destroy(a);
        dpz_fftop_destroy(gen);
        free(ia);
        free(x);
        free(ya);
        free(yg);
        dpz_grid_destroy(g);
    }
}

static void test_fftop_complex_symmetric(void **state)
{
    (void)state;
    dpz_grid *g = make_grid(5, 4, 6, SHAPE_HALF);
    size_t n = 3 * g->n_occ;
    double complex *ia = malloc(g->n_occ * sizeof *ia), *x = malloc(n * sizeof *x),
                   *y = malloc(n * sizeof *y), *ax = malloc(n * sizeof *ax),
                   *ay = malloc(n * sizeof *ay);
    uint64_t seed = 7;
    random_vec(x, n, &seed);
    random_vec(y, n, &seed);
    const dpz_dipole_model models[] = {DPZ_DIPOLE_CMRR, DPZ_DIPOLE_LDR, DPZ_DIPOLE_IGT};
    for (int m = 0; m < 3; m++) {
        double k = 0.41 / SPACING;
        inv_alpha_for(g, k, models[m], ia);
        dpz_fftop *op = NULL;
        dpz_err err;
        assert_int_equal(dpz_fftop_create(&op, g, k, models[m], ia, NULL, &err), DPZ_OK);
        assert_int_equal(dpz_fftop_apply(op, x, ax, &err), DPZ_OK);
        assert_int_equal(dpz_fftop_apply(op, y, ay, &err), DPZ_OK);
        double complex yAx = 0, xAy = 0;
        double mag = 0;
        for (size_t i = 0; i < n; i++) {
            yAx += y[i] * ax[i];
            xAy += x[i] * ay[i];
            mag += cabs(y[i] * ax[i]);
        }
        assert_cclose_abs(yAx, xAy, TOL_FFT, mag);
        dpz_fftop_destroy(op);
    }
    free(ia);
    free(x);
    free(y);
    free(ax);
    free(ay);
    dpz_grid_destroy(g);
}

/* One thread and two threads give the same product to rounding (the second operator
 * also plans with FFTW_MEASURE); with the same planner effort, three threads give
 * exactly the same bits as one: the operator splits whole lines and plane blocks among
 * threads, each computed by the same operations. 6 x 5 x 7 pads to 12 x 10 x 14: 14 z
 * frequencies leave a remainder block of 2, and 90 slab lines a remainder chunk. */
static void test_fftop_threads_agree(void **state)
{
    (void)state;
    dpz_grid *g = make_grid(6, 5, 7, SHAPE_HALF);
    size_t n = 3 * g->n_occ;
    double k = 0.27 / SPACING;
    double complex *ia = malloc(g->n_occ * sizeof *ia), *x = malloc(n * sizeof *x),
                   *y1 = malloc(n * sizeof *y1), *y2 = malloc(n * sizeof *y2);
    inv_alpha_for(g, k, DPZ_DIPOLE_CMRR, ia);
    uint64_t seed = 11;
    random_vec(x, n, &seed);
    dpz_err err;
    dpz_fftop *a = NULL, *b = NULL;
    dpz_op_opts o1 = {1, DPZ_PLAN_ESTIMATE, DPZ_SIMD_AUTO},
                o2 = {2, DPZ_PLAN_MEASURE, DPZ_SIMD_AUTO};
    assert_int_equal(dpz_fftop_create(&a, g, k, DPZ_DIPOLE_CMRR, ia, &o1, &err), DPZ_OK);
    assert_int_equal(dpz_fftop_create(&b, g, k, DPZ_DIPOLE_CMRR, ia, &o2, &err), DPZ_OK);
    assert_int_equal(dpz_fftop_apply(a, x, y1, &err), DPZ_OK);
    assert_int_equal(dpz_fftop_apply(b, x, y2, &err), DPZ_OK);
    double scale = max_abs(y1, n);
    for (size_t i = 0; i < n; i++)
        assert_cclose_abs(y2[i], y1[i], TOL_FFT, scale);
    /* A repeated apply reuses the scratch: the result must not change. */
    assert_int_equal(dpz_fftop_apply(b, x, y2, &err), DPZ_OK);
    for (size_t i = 0; i < n; i++)
        assert_cclose_abs(y2[i], y1[i], TOL_FFT, scale);
    dpz_fftop *c3 = NULL;
    dpz_op_opts o3 = {3, DPZ_PLAN_ESTIMATE, DPZ_SIMD_AUTO};
    assert_int_equal(dpz_fftop_create(&c3, g, k, DPZ_DIPOLE_CMRR, ia, &o3, &err), DPZ_OK);
    assert_int_equal(dpz_fftop_apply(c3, x, y2, &err), DPZ_OK);
    assert_memory_equal(y1, y2, n * sizeof *y1);
    dpz_fftop_destroy(c3);
    dpz_fftop_destroy(a);
    dpz_fftop_destroy(b);
    free(ia);
    free(x);
    free(y1);
    free(y2);
    dpz_grid_destroy(g);
}

/* Padded sizes are even, FFT-friendly (factors 2, 3, 5, 7) and at least 2n - 1 (1 for a
 * single layer); the memory estimate covers the z-transformed slab (3 nx ny pz points),
 * one plane buffer per thread (3 px (py + 1) zb points, zb <= 16 z frequencies) and the
 * six kernel components on the non-negative frequency octant (p/2 + 1 per axis), plus
 * per-voxel data. */
static void test_fftop_padding_and_memory(void **state)
{
    (void)state;
    dpz_grid *g = make_grid(6, 11, 1, SHAPE_FULL);
    double complex *ia = malloc(g->n_occ * sizeof *ia);
    inv_alpha_for(g, 0.0, DPZ_DIPOLE_CMRR, ia);
    dpz_fftop *op = NULL;
    dpz_err err;
    assert_int_equal(dpz_fftop_create(&op, g, 0.0, DPZ_DIPOLE_CMRR, ia, NULL, &err),
                     DPZ_OK);
    size_t p[3];
    dpz_fftop_padded_dims(op, p);
    /* 2*6 = 12; 2*11 = 22 = 2*11 is not 7-smooth -> 24; a single layer stays 1. */
    assert_int_equal(p[0], 12);
    assert_int_equal(p[1], 24);
    assert_int_equal(p[2], 1);
    size_t need = dpz_fftop_memory_need(g);
    /* The plane buffer's x rows hold py + 1 frequency groups (one unused, against cache
     * set conflicts). */
    size_t slab = 3 * 6 * 11 * 1, plane = 3 * 12 * (24 + 1) * 1;
    size_t octant = (12 / 2 + 1) * (24 / 2 + 1) * 1;
    size_t grids = (slab + plane + 6 * octant) * sizeof(double complex);
    assert_true(need >= grids + g->n_occ * (sizeof(size_t) + 4 * sizeof(double complex)));
    assert_true(need <= grids + 200 * g->n_occ + 4096);
    /* A second thread adds one plane buffer (rounded to 8 points). */
    size_t need2 = dpz_fftop_memory_need_threads(g, 2);
    assert_int_equal(need2 - need, (plane + 7) / 8 * 8 * sizeof(double complex));
    assert_int_equal(dpz_fftop_linop(op).n, 3 * g->n_occ);
    dpz_fftop_destroy(op);
    free(ia);
    dpz_grid_destroy(g);
}

static void test_fftop_rejects_bad_input(void **state)
{
    (void)state;
    dpz_grid *g = make_grid(3, 3, 3, SHAPE_FULL);
    double complex *ia = malloc(g->n_occ * sizeof *ia);
    inv_alpha_for(g, 0.0, DPZ_DIPOLE_CMRR, ia);
    dpz_fftop *op = NULL;
    dpz_err err;
    assert_int_equal(dpz_fftop_create(&op, g, -1.0, DPZ_DIPOLE_CMRR, ia, NULL, &err),
                     DPZ_EINVAL);
    assert_null(op);
    assert_non_null(strstr(err.msg, "wavenumber"));
    assert_int_equal(dpz_fftop_create(&op, g, NAN, DPZ_DIPOLE_CMRR, ia, NULL, &err),
                     DPZ_EINVAL);
    ia[4] = NAN;
    assert_int_equal(dpz_fftop_create(&op, g, 0.0, DPZ_DIPOLE_CMRR, ia, NULL, &err),
                     DPZ_EINVAL);
    assert_non_null(strstr(err.msg, "voxel 4"));
    dpz_denseop *dn = NULL;
    assert_int_equal(dpz_denseop_create(&dn, g, 0.0, DPZ_DIPOLE_CMRR, ia, 10, &err),
                     DPZ_ELIMIT);
    /* An empty grid has nothing to operate on. */
    memset(g->label, 0, 27);
    assert_int_equal(dpz_grid_update(g, &err), DPZ_OK);
    assert_int_equal(dpz_fftop_create(&op, g, 0.0, DPZ_DIPOLE_CMRR, ia, NULL, &err),
                     DPZ_EINVAL);
    assert_int_equal(dpz_denseop_create(&dn, g, 0.0, DPZ_DIPOLE_CMRR, ia, 0, &err),
                     DPZ_EINVAL);
    /* Host permittivity in an occupied label: zero polarizability, refused by name. */
    dpz_grid_destroy(g);
    g = make_grid(2, 2, 2, SHAPE_FULL);
    double complex eps[256];
    for (int i = 0; i < 256; i++)
        eps[i] = 2.25;
    eps[2] = 1.33 * 1.33;
    assert_int_equal(dpz_operator_inv_alpha(g, eps, 1.33, 1e7, DPZ_DIPOLE_CMRR, ia, &err),
                     DPZ_EINVAL);
    assert_non_null(strstr(err.msg, "label 2"));
    eps[2] = CMPLX(INFINITY, 0.0);
    assert_int_equal(dpz_operator_inv_alpha(g, eps, 1.33, 1e7, DPZ_DIPOLE_CMRR, ia, &err),
                     DPZ_EINVAL);
    /* eps_rel = -2: the Clausius-Mossotti pole (Purcell & Pennypacker 1973) makes the
     * static system singular; refused by name. At k > 0 the radiative reaction keeps
     * 1/alpha finite and nonzero, so the same material is accepted there. */
    eps[2] = -2.0 * 1.33 * 1.33;
    assert_int_equal(dpz_operator_inv_alpha(g, eps, 1.33, 0.0, DPZ_DIPOLE_CMRR, ia, &err),
                     DPZ_EINVAL);
    assert_non_null(strstr(err.msg, "pole"));
    assert_int_equal(dpz_operator_inv_alpha(g, eps, 1.33, 1e7, DPZ_DIPOLE_CMRR, ia, &err),
                     DPZ_OK);
    free(ia);
    dpz_grid_destroy(g);
}

/* Partly filled boundary voxels: the Maxwell Garnett effective permittivity (Maxwell
 * Garnett, Phil. Trans. R. Soc. A 203, 385 (1904)) makes the Clausius-Mossotti
 * polarizability of a voxel filled to the fraction f equal to f times the full voxel's,
 * 3 f d^3 (eps - 1)/(eps + 2) (SI volume units, Draine 1988 eq. 3 times 4 pi), plus the
 * radiative reaction -i k^3/(6 pi) (Draine 1988 eq. 4) for cm-rr; ldr applies the lattice
 * dispersion relation to the mixture's permittivity; a full voxel (f = 1) is unchanged.
 */
static void test_fftop_inv_alpha_partial_fill(void **state)
{
    (void)state;
    /* Float fractions exactly representable, so the test compares the same f. */
    static const float fills[8] = {1.0f,    0.375f, 0.8125f, 1.0f,
                                   0.0625f, 1.0f,   0.5f,    0.25f};
    const double tol = 1e-13; /* a few roundings of rational expressions */
    dpz_grid *g = NULL;
    dpz_err err;
    assert_int_equal(dpz_grid_create(&g, 2, 2, 2, SPACING, 0, &err), DPZ_OK);
    memset(g->label, 1, 8);
    assert_int_equal(dpz_grid_update(g, &err), DPZ_OK);
    g->fill = malloc(8 * sizeof *g->fill);
    memcpy(g->fill, fills, sizeof fills);
    double complex eps[256];
    for (int i = 0; i < 256; i++)
        eps[i] = CMPLX(3.385, 0.27);
    const double nh = 1.21, k = 0.41 / SPACING, d3 = SPACING * SPACING * SPACING;
    double complex er = eps[1] / (nh * nh), beta = (er - 1.0) / (er + 2.0);
    double complex ia[8], ib[8], ic[8];
    /* cm-rr against the hand formula. */
    assert_int_equal(dpz_operator_inv_alpha(g, eps, nh, k, DPZ_DIPOLE_CMRR, ia, &err),
                     DPZ_OK);
    for (size_t v = 0; v < 8; v++) {
        double f = fills[g->occ[v]];
        double complex want = 1.0 / (3.0 * f * d3 * beta) -
                              CMPLX(0.0, k * k * k / (6.0 * 3.14159265358979323846));
        assert_cclose(ia[v], want, tol);
    }
    /* ldr: the prescription evaluated at the mixture's permittivity, which satisfies the
     * Maxwell Garnett relation (eps_eff - 1)/(eps_eff + 2) = f (eps - 1)/(eps + 2). */
    assert_int_equal(dpz_operator_inv_alpha(g, eps, nh, k, DPZ_DIPOLE_LDR, ib, &err),
                     DPZ_OK);
    for (size_t v = 0; v < 8; v++) {
        double f = fills[g->occ[v]];
        double complex eff = (1.0 + 2.0 * f * beta) / (1.0 - f * beta);
        assert_cclose((eff - 1.0) / (eff + 2.0), f * beta, tol);
        assert_cclose(ib[v], dpz_dipole_inv_alpha(DPZ_DIPOLE_LDR, eff, k, SPACING), tol);
    }
    /* igt: its self-term correction does not depend on eps, so only the CM part moves. */
    assert_int_equal(dpz_operator_inv_alpha(g, eps, nh, k, DPZ_DIPOLE_IGT, ic, &err),
                     DPZ_OK);
    double complex full = dpz_dipole_inv_alpha(DPZ_DIPOLE_IGT, er, k, SPACING);
    for (size_t v = 0; v < 8; v++) {
        double f = fills[g->occ[v]];
        assert_cclose(ic[v], full + 1.0 / (3.0 * d3 * beta) * (1.0 / f - 1.0), tol);
    }
    /* Static limit: 1/alpha = (1/f) times the full voxel's Clausius-Mossotti inverse. */
    assert_int_equal(dpz_operator_inv_alpha(g, eps, nh, 0.0, DPZ_DIPOLE_CMRR, ia, &err),
                     DPZ_OK);
    assert_cclose(ia[1] * fills[1], 1.0 / (3.0 * d3 * beta), tol);
    /* A fraction outside (0, 1] on an occupied voxel is refused, naming the voxel. */
    g->fill[6] = 0.0f;
    assert_int_equal(dpz_operator_inv_alpha(g, eps, nh, k, DPZ_DIPOLE_CMRR, ia, &err),
                     DPZ_EINVAL);
    assert_non_null(strstr(err.msg, "voxel 6"));
    g->fill[6] = 1.25f;
    assert_int_equal(dpz_operator_inv_alpha(g, eps, nh, k, DPZ_DIPOLE_CMRR, ia, &err),
                     DPZ_EINVAL);
    dpz_grid_destroy(g);
}

/* Replacing the diagonal equals building a new operator with it (the kernel is reused).
 */
static void test_fftop_set_diag_matches_fresh(void **state)
{
    (void)state;
    dpz_grid *g = make_grid(4, 3, 5, SHAPE_HALF);
    size_t n = 3 * g->n_occ;
    double k = 0.33 / SPACING;
    double complex *ia = malloc(g->n_occ * sizeof *ia),
                   *ib = malloc(g->n_occ * sizeof *ib), *x = malloc(n * sizeof *x),
                   *y1 = malloc(n * sizeof *y1), *y2 = malloc(n * sizeof *y2);
    inv_alpha_for(g, k, DPZ_DIPOLE_LDR, ia);
    for (size_t v = 0; v < g->n_occ; v++)
        ib[v] = 2.385 * ia[v] + CMPLX(0.0, 0.1 * creal(ia[v]));
    uint64_t seed = 5;
    random_vec(x, n, &seed);
    dpz_err err;
    dpz_fftop *a = NULL, *b = NULL;
    assert_int_equal(dpz_fftop_create(&a, g, k, DPZ_DIPOLE_LDR, ia, NULL, &err), DPZ_OK);
    assert_int_equal(dpz_fftop_create(&b, g, k, DPZ_DIPOLE_LDR, ib, NULL, &err), DPZ_OK);
    assert_int_equal(dpz_fftop_set_diag(a, ib, &err), DPZ_OK);
    assert_int_equal(dpz_fftop_apply(a, x, y1, &err), DPZ_OK);
    assert_int_equal(dpz_fftop_apply(b, x, y2, &err), DPZ_OK);
    for (size_t i = 0; i < n; i++)
        assert_true(y1[i] == y2[i]);
    const dpz_linop L = dpz_fftop_linop(a);
    for (size_t i = 0; i < n; i++)
        assert_true(L.diag[i] == ib[i / 3]);
    ib[0] = CMPLX(NAN, 0.0);
    assert_int_equal(dpz_fftop_set_diag(a, ib, &err), DPZ_EINVAL);
    dpz_fftop_destroy(a);
    dpz_fftop_destroy(b);
    free(ia);
    free(ib);
    free(x);
    free(y1);
    free(y2);
    dpz_grid_destroy(g);
}

/* Every allocation of both operators fails cleanly (no leak under ASan, NULL output). */
static void test_fftop_allocation_failure(void **state)
{
    (void)state;
    dpz_grid *g = make_grid(3, 4, 2, SHAPE_FULL);
    double complex *ia = malloc(g->n_occ * sizeof *ia);
    inv_alpha_for(g, 1e7, DPZ_DIPOLE_CMRR, ia);
    dpz_err err;
    int failures = 0;
    for (long n = 0;; n++) {
        dpz_fftop *op = NULL;
        dpz_alloc_fail_after(n);
        dpz_status st = dpz_fftop_create(&op, g, 1e7, DPZ_DIPOLE_CMRR, ia, NULL, &err);
        dpz_alloc_fail_after(-1);
        if (st == DPZ_OK) {
            dpz_fftop_destroy(op);
            break;
        }
        assert_int_equal(st, DPZ_ENOMEM);
        assert_null(op);
        failures++;
    }
    assert_true(failures >= 6);
    failures = 0;
    for (long n = 0;; n++) {
        dpz_denseop *op = NULL;
        dpz_alloc_fail_after(n);
        dpz_status st = dpz_denseop_create(&op, g, 1e7, DPZ_DIPOLE_CMRR, ia, 0, &err);
        dpz_alloc_fail_after(-1);
        if (st == DPZ_OK) {
            dpz_denseop_destroy(op);
            break;
        }
        assert_int_equal(st, DPZ_ENOMEM);
        assert_null(op);
        failures++;
    }
    assert_true(failures >= 3);
    free(ia);
    dpz_grid_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_fftop_matches_dense_odd_cube),
        cmocka_unit_test(test_fftop_matches_dense_even_partial),
        cmocka_unit_test(test_fftop_matches_dense_noncubic),
        cmocka_unit_test(test_fftop_matches_dense_single_voxel),
        cmocka_unit_test(test_fftop_matches_dense_line),
        cmocka_unit_test(test_fftop_matches_dense_layers),
        cmocka_unit_test(test_fftop_matches_dense_sphere_holes),
        cmocka_unit_test(test_fftop_matches_dense_small_blocks),
        cmocka_unit_test(test_fftop_simd_matches_generic),
        cmocka_unit_test(test_fftop_complex_symmetric),
        cmocka_unit_test(test_fftop_threads_agree),
        cmocka_unit_test(test_fftop_padding_and_memory),
        cmocka_unit_test(test_fftop_rejects_bad_input),
        cmocka_unit_test(test_fftop_set_diag_matches_fresh),
        cmocka_unit_test(test_fftop_inv_alpha_partial_fill),
        cmocka_unit_test(test_fftop_allocation_failure),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
