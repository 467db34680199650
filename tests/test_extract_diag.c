/* test_extract_diag.c: diagnostics reported with every tensor (extract/dpz_diag.h and
 * dpz_tensor_compute) and the cross sections (dpz_xsec_compute): reciprocity
 * (Onsager-Casimir: a_ee = a_ee^T, a_mm = a_mm^T, a_em = -a_me^T), vanishing
 * magneto-electric coupling under inversion symmetry, sign change of the chirality under
 * mirror reflection, unitarity of the T column for lossless particles
 * (T + T^H = -2 T^H T; Mishchenko et al. 2002, ch. 5), the fluctuation tensor against
 * the leakage term, positivity for lossy particles, and the optical theorem against Mie
 * (Bohren & Huffman 1983). */
#include <complex.h>
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dpz_test.h"

/* glibc provides CMPLX only for GCC; a fallback for finite arguments. */
#ifndef CMPLX
#define CMPLX(x, y) ((double complex)((double)(x) + _Complex_I * (double)(y)))
#endif

#include "dpz_diag.h"
#include "dpz_extract.h"
#include "dpz_mie.h"
#include "dpz_post.h"
#include "dpz_shape.h"

#define PI 3.14159265358979323846

/* Solver tolerance used here and the resulting precision of identities that hold
 * exactly for the discrete system (measured: 1e-12 .. 1e-10 of the largest entry). */
#define SOLVE_TOL 1e-11
#define TOL_EXACT 1e-8

static dpz_grid *helix_grid(double d, int left)
{
    dpz_shape sh;
    dpz_shape_init(&sh, DPZ_SHAPE_HELIX);
    sh.coil_radius = 3.0 * d;
    sh.wire_radius = 1.1 * d;
    sh.pitch = 5.0 * d;
    sh.turns = 1.5;
    sh.left = left;
    dpz_grid *g = NULL;
    assert_int_equal(dpz_shape_voxelize(&g, &sh, d, 0, 1, 0, NULL), DPZ_OK);
    return g;
}

static dpz_grid *split_ring_grid(double d)
{
    dpz_shape sh;
    dpz_shape_init(&sh, DPZ_SHAPE_SPLIT_RING);
    sh.outer = 5.0 * d;
    sh.inner = 3.0 * d;
    sh.thickness = 2.0 * d;
    sh.gap = 2.0 * d;
    dpz_grid *g = NULL;
    assert_int_equal(dpz_shape_voxelize(&g, &sh, d, 0, 1, 0, NULL), DPZ_OK);
    return g;
}

/* An irregular cluster of 7 voxels without any symmetry (chiral). */
static dpz_grid *cluster_grid(double d)
{
    static const int v[7][3] = {{0, 0, 0}, {1, 0, 0}, {2, 0, 0}, {2, 1, 0},
                                {2, 1, 1}, {2, 2, 1}, {0, 0, 1}};
    dpz_grid *g = NULL;
    assert_int_equal(dpz_grid_create(&g, 3, 3, 2, d, 0, NULL), DPZ_OK);
    for (int i = 0; i < 7; i++)
        g->label[dpz_grid_index(g, (size_t)v[i][0], (size_t)v[i][1], (size_t)v[i][2])] =
            1;
    assert_int_equal(dpz_grid_update(g, NULL), DPZ_OK);
    return g;
}

/* Tensor at x_eq = k a_eq = x. */
static void tensor_at(const dpz_grid *g, double complex eps, double x, dpz_tensor *t)
{
    dpz_setup s = dpz_test_setup(g, eps, SOLVE_TOL);
    double k = x / dpz_grid_aeq(g);
    dpz_err err;
    dpz_status st = dpz_tensor_compute(&s, 2.0 * PI / k, t, NULL, &err);
    if (st != DPZ_OK)
        print_error("%s\n", err.msg);
    assert_int_equal(st, DPZ_OK);
    assert_true(t->converged);
    for (int c = 0; c < 6; c++)
        assert_true(t->rhs[c].residual <= SOLVE_TOL);
}

static double amax(double complex A[6][6])
{
    double m = 0.0;
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++)
            m = fmax(m, cabs(A[i][j]));
    return m;
}

/* The reciprocity residual of constructed tensors: zero for a_em = -a_me^T with symmetric
 * diagonal blocks, of order one for the wrong sign. */
static void test_diag_reciprocity_residual_definition(void **state)
{
    (void)state;
    uint64_t seed = 0x77aa55ULL;
    double complex A[6][6];
    for (int i = 0; i < 6; i++)
        for (int j = i; j < 6; j++) {
            double complex v = CMPLX(dpz_test_rand(&seed), dpz_test_rand(&seed));
            A[i][j] = v;
            /* symmetric ee and mm blocks, antisymmetric-transpose cross blocks */
            A[j][i] = (i < 3 && j >= 3) ? -v : v;
        }
    assert_true(dpz_diag_reciprocity(A) < 4 * DBL_EPSILON);
    A[0][4] = -A[0][4]; /* now a_em[0][1] = +a_me[1][0] */
    assert_true(dpz_diag_reciprocity(A) > 0.1);
    double complex Z[6][6];
    memset(Z, 0, sizeof Z);
    assert_true(dpz_diag_reciprocity(Z) == 0.0);
    assert_true(dpz_diag_validity(Z, NULL, NULL) == 0.0);
    dpz_err err;
    assert_int_equal(dpz_diag_fluctuation(0.0, A, NULL, NULL, &err), DPZ_EINVAL);
}

/* Reciprocity holds to solver precision for asymmetric targets, while the opposite-sign
 * combination a_em - a_me^T is of the size of a_em (so the check has teeth). */
static void test_diag_reciprocity_asymmetric(void **state)
{
    (void)state;
    const double d = 4.1e-9;
    dpz_grid *grids[3] = {cluster_grid(d), helix_grid(d, 0), split_ring_grid(d)};
    const char *names[3] = {"cluster", "helix", "split ring"};
    for (int s = 0; s < 3; s++) {
        dpz_tensor t;
        tensor_at(grids[s], 12.25, 0.5, &t);
        double m = amax(t.A), em = 0.0, wrong = 0.0;
        for (int i = 0; i < 3; i++)
            for (int j = 0; j < 3; j++) {
                em = fmax(em, cabs(t.A[i][j + 3]));
                wrong = fmax(wrong, cabs(t.A[i][j + 3] - t.A[j + 3][i]));
            }
        print_message("%s: reciprocity %.3g, max|a_em| / max|A| %.3g, "
                      "max|a_em - a_me^T| / max|A| %.3g\n",
                      names[s], t.reciprocity, em / m, wrong / m);
        assert_true(t.reciprocity < TOL_EXACT);
        assert_true(em > 1e-3 * m);
        assert_true(wrong > 1e-3 * m);
        /* the same relation block by block, computed here independently */
        for (int i = 0; i < 3; i++)
            for (int j = 0; j < 3; j++) {
                assert_true(cabs(t.A[i][j] - t.A[j][i]) < TOL_EXACT * m);
                assert_true(cabs(t.A[i + 3][j + 3] - t.A[j + 3][i + 3]) < TOL_EXACT * m);
                assert_true(cabs(t.A[i][j + 3] + t.A[j + 3][i]) < TOL_EXACT * m);
            }
        dpz_grid_destroy(grids[s]);
    }
}

/* A box has an inversion centre at its centroid: a_em = a_me = 0 (parity: p is odd, m
 * even under inversion). */
static void test_diag_inversion_symmetric_has_no_em(void **state)
{
    (void)state;
    dpz_grid *g = NULL;
    assert_int_equal(dpz_grid_create(&g, 3, 4, 5, 3.7e-9, 0, NULL), DPZ_OK);
    memset(g->label, 1, 60);
    assert_int_equal(dpz_grid_update(g, NULL), DPZ_OK);
    dpz_tensor t;
    tensor_at(g, CMPLX(-10.0, 1.0), 0.6, &t);
    double m = amax(t.A);
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++) {
            assert_true(cabs(t.A[i][j + 3]) < TOL_EXACT * m);
            assert_true(cabs(t.A[i + 3][j]) < TOL_EXACT * m);
        }
    assert_true(dpz_post_bianisotropy(t.A) < TOL_EXACT);
    assert_true(cabs(dpz_post_chirality(t.A)) < TOL_EXACT * m);
    /* the box's axes are principal axes: a_ee diagonal, principal values = diagonal */
    double complex ee[3][3];
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            ee[i][j] = t.A[i][j];
    double vals[3];
    assert_int_equal(dpz_post_principal_herm(ee, vals, NULL, NULL), DPZ_OK);
    double diag[3] = {creal(ee[0][0]), creal(ee[1][1]), creal(ee[2][2])};
    for (int i = 0; i < 3; i++) {
        int found = 0;
        for (int j = 0; j < 3; j++)
            found |= fabs(vals[i] - diag[j]) < 1e-8 * fabs(diag[j]);
        assert_true(found);
    }
    dpz_grid_destroy(g);
}

/* Mirror images have opposite chirality: the left-handed helix is the right-handed one
 * reflected in the xz plane (y -> -y), and a_em -> -S a_em S^T with S = diag(1, -1, 1)
 * (a_em couples a polar and an axial vector), so tr(a_em) changes sign while a_ee keeps
 * its diagonal. */
static void test_diag_chirality_flips_under_mirror(void **state)
{
    (void)state;
    const double d = 4.1e-9;
    dpz_grid *gr = helix_grid(d, 0), *gl = helix_grid(d, 1);
    assert_int_equal(gr->n_occ, gl->n_occ);
    dpz_tensor tr, tl;
    tensor_at(gr, 2.25, 0.5, &tr);
    tensor_at(gl, 2.25, 0.5, &tl);
    double complex cr = dpz_post_chirality(tr.A), cl = dpz_post_chirality(tl.A);
    print_message("helix chirality right %.4g%+.4gi left %.4g%+.4gi (m^3), bianisotropy "
                  "%.3g\n",
                  creal(cr), cimag(cr), creal(cl), cimag(cl),
                  dpz_post_bianisotropy(tr.A));
    /* small (the 1.5-turn helix's a_em is nearly traceless: 5e-5 of a_ee) but nonzero */
    assert_true(cabs(cr) > 1e-5 * cabs(tr.A[0][0]));
    assert_cclose(cl, -cr, 1e-7);
    const double S[3] = {1.0, -1.0, 1.0};
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++) {
            assert_cclose_abs(tl.A[i][j], S[i] * S[j] * tr.A[i][j], 1e-7,
                              cabs(tr.A[0][0]));
            assert_cclose_abs(tl.A[i][j + 3], -S[i] * S[j] * tr.A[i][j + 3], 1e-7,
                              cabs(tr.A[0][0]));
        }
    dpz_grid_destroy(gr);
    dpz_grid_destroy(gl);
}

static double frob6(double complex A[6][6])
{
    double s = 0.0;
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++)
            s += creal(A[i][j] * conj(A[i][j]));
    return sqrt(s);
}

/* Lossless particles: the unitarity residual falls with the number of orders kept
 * (order 1 alone, then 2, then 3), the absorption eigenvalues vanish, and the fluctuation
 * tensor equals the leakage term (6 pi / k^3) V (sum_{n=2,3} Tn1^H Tn1) V^H up to the
 * orders n >= 4 left out. For a sphere both are ~0. */
static void test_diag_lossless_unitarity_and_leakage(void **state)
{
    (void)state;
    const double d = 4.1e-9;
    dpz_grid *g = helix_grid(d, 0);
    dpz_tensor t;
    tensor_at(g, 12.25, 0.5, &t);
    assert_true(t.lossless);
    double b1, b2, b3;
    assert_int_equal(dpz_diag_absorption(t.T, NULL, NULL, &b1, NULL, NULL), DPZ_OK);
    assert_int_equal(dpz_diag_absorption(t.T, t.T2, NULL, &b2, NULL, NULL), DPZ_OK);
    assert_int_equal(dpz_diag_absorption(t.T, t.T2, t.T3, &b3, NULL, NULL), DPZ_OK);
    print_message(
        "helix lossless: balance n<=1 %.3g, n<=2 %.3g, n<=3 %.3g (reported %.3g)"
        "; validity %.3g\n",
        b1, b2, b3, t.energy_balance, t.dipole_validity);
    assert_close(t.energy_balance, b3, 1e-12);
    assert_true(b2 < b1 && b3 < b2);
    /* measured 8.0e-5, 1.2e-5, 1.4e-7 */
    assert_true(b3 < 0.01 * b1 && b3 < 1e-6);
    double tmax = 0.0;
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++)
            tmax = fmax(tmax, cabs(t.T[i][j]));
    for (int i = 0; i < 6; i++)
        assert_true(fabs(t.absorption_eig[i]) < 10.0 * b3 * tmax + 1e-9 * tmax);
    double complex F[6][6], L[6][6];
    assert_int_equal(dpz_diag_fluctuation(t.k_per_m, t.A, F, NULL, NULL), DPZ_OK);
    dpz_diag_leakage(t.k_per_m, t.T2, t.T3, L);
    double complex D[6][6];
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++)
            D[i][j] = F[i][j] - L[i][j];
    double rel = frob6(D) / frob6(L);
    print_message(
        "helix lossless: |F - L| / |L| = %.3g, |L| / (k^3/(6 pi) |A|^2) = %.3g\n", rel,
        frob6(L) / (pow(t.k_per_m, 3) / (6 * PI) * pow(frob6(t.A), 2)));
    assert_true(rel < 0.05);
    /* a leakage comparable to F: the helix radiates measurably into n = 2, 3 */
    assert_true(frob6(L) > 1e-4 * pow(t.k_per_m, 3) / (6 * PI) * pow(frob6(t.A), 2));
    for (int i = 0; i < 6; i++)
        assert_true(t.fluct_eig[i] > -1e-8 * frob6(L) - 0.05 * frob6(L));
    dpz_grid_destroy(g);

    /* sphere of radius 3 voxels: inversion symmetry removes order 2; the cubic lattice
     * couples order 1 weakly to order 3 */
    dpz_shape sh;
    dpz_shape_init(&sh, DPZ_SHAPE_SPHERE);
    sh.radius = 3.0 * d + 1e-12;
    assert_int_equal(dpz_shape_voxelize(&g, &sh, d, 0, 1, 0, NULL), DPZ_OK);
    tensor_at(g, 2.25, 0.5, &t);
    double sc = pow(t.k_per_m, 3) / (6 * PI) * pow(frob6(t.A), 2);
    assert_int_equal(dpz_diag_fluctuation(t.k_per_m, t.A, F, NULL, NULL), DPZ_OK);
    print_message("sphere lossless: balance %.3g, |F| / (k^3/(6 pi) |A|^2) = %.3g, T2 "
                  "validity %.3g\n",
                  t.energy_balance, frob6(F) / sc, t.dipole_validity);
    assert_true(t.energy_balance < 1e-8);
    assert_true(frob6(F) < 1e-7 * sc);
    for (int i = 0; i < 10; i++)
        for (int j = 0; j < 6; j++)
            assert_true(cabs(t.T2[i][j]) < 1e-10 * cabs(t.T[0][0]));
    dpz_grid_destroy(g);
}

/* The lattice-dispersion-relation prescription (Draine & Goodman 1993) keeps the exact
 * radiative reaction, so a lossless target conserves energy with it as well. */
static void test_diag_ldr_lossless_balance(void **state)
{
    (void)state;
    const double d = 4.1e-9;
    dpz_grid *g = split_ring_grid(d);
    dpz_setup s = dpz_test_setup(g, 12.25, SOLVE_TOL);
    s.model = DPZ_DIPOLE_LDR;
    double k = 0.5 / dpz_grid_aeq(g);
    dpz_tensor t;
    assert_int_equal(dpz_tensor_compute(&s, 2.0 * PI / k, &t, NULL, NULL), DPZ_OK);
    print_message("split ring, LDR, lossless: balance %.3g, reciprocity %.3g, absorption "
                  "eig %.3g .. %.3g\n",
                  t.energy_balance, t.reciprocity, t.absorption_eig[0],
                  t.absorption_eig[5]);
    assert_true(t.lossless);
    assert_true(t.reciprocity < TOL_EXACT);
    /* truncation at n = 3 for this asymmetric target leaves ~1e-7 */
    assert_true(t.energy_balance < 1e-5);
    dpz_grid_destroy(g);
}

/* Lossy particle (eps -10+1i): the absorption matrix and the fluctuation tensor are
 * positive (definite here, since every voxel absorbs), reciprocity still holds. */
static void test_diag_lossy_is_positive(void **state)
{
    (void)state;
    const double d = 4.1e-9;
    dpz_grid *g = helix_grid(d, 0);
    dpz_tensor t;
    tensor_at(g, CMPLX(-10.0, 1.0), 0.5, &t);
    assert_false(t.lossless);
    print_message(
        "helix lossy: absorption eig %.3g .. %.3g, fluct eig %.3g .. %.3g m^3\n",
        t.absorption_eig[0], t.absorption_eig[5], t.fluct_eig[0], t.fluct_eig[5]);
    assert_true(t.absorption_eig[0] > 0.0);
    assert_true(t.fluct_eig[0] > 0.0);
    for (int i = 1; i < 6; i++) {
        assert_true(t.absorption_eig[i] >= t.absorption_eig[i - 1]);
        assert_true(t.fluct_eig[i] >= t.fluct_eig[i - 1]);
    }
    assert_true(t.reciprocity < TOL_EXACT);
    dpz_grid_destroy(g);
}

/* Cross sections of spheres against Mie (B&H 1983 eqs. 4.61-4.62, C = Q pi a^2 at the
 * equal-volume radius): lossless spheres absorb nothing (the optical theorem and the
 * radiated power balance exactly in the discrete system), lossy ones absorb; the
 * point-dipole model reproduces the full solve where the dipole picture holds. */
static void test_diag_cross_sections_against_mie(void **state)
{
    (void)state;
    const double d = 3.3e-9;
    dpz_shape sh;
    dpz_shape_init(&sh, DPZ_SHAPE_SPHERE);
    sh.radius = 5.0 * d + 1e-12;
    dpz_grid *g = NULL;
    assert_int_equal(dpz_shape_voxelize(&g, &sh, d, 0, 1, 0, NULL), DPZ_OK);
    const double complex eps[2] = {2.25, CMPLX(-10.0, 1.0)};
    const double khat[3] = {0.36, 0.48, 0.8};
    const double complex e0[3] = {CMPLX(0.8, 0.3), CMPLX(-0.6, -0.225), 0.0};
    double aeq = dpz_grid_aeq(g);
    for (int c = 0; c < 2; c++) {
        dpz_tensor t;
        tensor_at(g, eps[c], 0.5, &t);
        dpz_setup s = dpz_test_setup(g, eps[c], SOLVE_TOL);
        dpz_xsec xs;
        dpz_err err;
        assert_int_equal(dpz_xsec_compute(&s, t.lambda0_m, khat, e0, &t, &xs, &err),
                         DPZ_OK);
        dpz_mie_result mie;
        assert_int_equal(dpz_mie_sphere(eps[c], 0.5, &mie, NULL), DPZ_OK);
        double geo = PI * aeq * aeq;
        print_message(
            "eps %g%+gi: ext %.5g (Mie %.5g), abs %.5g (Mie %.5g), ext_dip %.5g, "
            "sca_dip %.5g, rel_diff %.3g\n",
            creal(eps[c]), cimag(eps[c]), xs.ext / geo, mie.q_ext, xs.abs / geo,
            mie.q_abs, xs.ext_dip / geo, xs.sca_dip / geo, xs.rel_diff);
        assert_close(xs.sca, xs.ext - xs.abs, 1e-14);
        if (c == 0) {
            assert_true(fabs(xs.abs) < 1e-12 * xs.ext);
            /* the dipole polarizabilities are off by 0.8% (a_ee) and 5% (a_mm) at this
             * resolution; extinction is dominated by a_ee */
            assert_close(xs.ext / geo, mie.q_ext, 0.03);
            assert_true(fabs(xs.abs_dip) < 1e-3 * xs.ext_dip);
            assert_true(xs.rel_diff < 0.01);
        } else {
            /* CM + radiative reaction overestimates the absorption of metal spheres at
             * this resolution (measured here: Im a_ee 2.5x the Mie value at 11 dipoles
             * per diameter, 1.5x at 19, converging slowly; Q_ext 1.60 vs 0.635), so only
             * the physics that must hold is asserted: positive absorption, below
             * extinction, and agreement of the full solve with its own dipole model. */
            assert_true(xs.abs > 0.0 && xs.abs < xs.ext);
            assert_true(xs.abs_dip > 0.0 && xs.abs_dip < xs.ext_dip);
            assert_true(xs.ext / geo > mie.q_ext);
            assert_true(xs.rel_diff < 0.02);
        }
    }
    /* errors: wrong wavelength, non-transverse field */
    dpz_tensor t;
    tensor_at(g, 2.25, 0.5, &t);
    dpz_setup s = dpz_test_setup(g, 2.25, SOLVE_TOL);
    dpz_xsec xs;
    dpz_err err;
    assert_int_equal(dpz_xsec_compute(&s, 1.1 * t.lambda0_m, khat, e0, &t, &xs, &err),
                     DPZ_EINVAL);
    const double complex elong[3] = {0.36, 0.48, 0.8};
    assert_int_equal(dpz_xsec_compute(&s, t.lambda0_m, khat, elong, &t, &xs, &err),
                     DPZ_EINVAL);
    const double kz[3] = {0.0, 0.0, 0.0};
    assert_int_equal(dpz_xsec_compute(&s, t.lambda0_m, kz, e0, &t, &xs, &err),
                     DPZ_EINVAL);
    dpz_grid_destroy(g);
}

/* Energy balance of the discrete system, checked with independent pieces: the scattered
 * power of the dipole array, C_sca = (k/|E0|^2) sum_jl conj(p~_j) . Im G(r_j - r_l) p~_l
 * with Im G(0) = (k^3/(6 pi)) I (far-field power of coherent dipoles; Jackson 1999
 * sec. 9.2 for a single dipole, Draine 1988 for the array), must equal C_ext - C_abs from
 * dpz_xsec_compute, for a lossy, asymmetric target (the split ring, eps -10+1i). */
static void test_diag_cross_sections_energy_balance(void **state)
{
    (void)state;
    const double d = 4.1e-9;
    dpz_grid *g = split_ring_grid(d);
    const double complex eps = CMPLX(-10.0, 1.0);
    dpz_tensor t;
    tensor_at(g, eps, 0.7, &t);
    dpz_setup s = dpz_test_setup(g, eps, SOLVE_TOL);
    s.solve.tol = 1e-12;
    const double khat[3] = {0.0, 0.6, 0.8};
    const double complex e0[3] = {CMPLX(1.3, 0.2), CMPLX(0.0, 0.8), CMPLX(0.0, -0.6)};
    dpz_xsec xs;
    assert_int_equal(dpz_xsec_compute(&s, t.lambda0_m, khat, e0, &t, &xs, NULL), DPZ_OK);
    /* the same plane-wave solve done here with the solver layer directly */
    size_t n = g->n_occ, n3 = 3 * n;
    double k = t.k_per_m;
    double complex *ia = malloc(n * sizeof *ia), *b = malloc(n3 * sizeof *b),
                   *x = calloc(n3, sizeof *x);
    double(*r)[3] = malloc(n * sizeof *r);
    assert_non_null(ia);
    assert_non_null(b);
    assert_non_null(x);
    assert_non_null(r);
    assert_int_equal(
        dpz_operator_inv_alpha(g, s.eps_label, 1.0, k, DPZ_DIPOLE_CMRR, ia, NULL),
        DPZ_OK);
    dpz_fftop *op = NULL;
    assert_int_equal(dpz_fftop_create(&op, g, k, DPZ_DIPOLE_CMRR, ia, &s.op, NULL),
                     DPZ_OK);
    for (size_t v = 0; v < n; v++) {
        dpz_grid_centre(g, g->occ[v], r[v]);
        double ph = k * (khat[0] * (r[v][0] - t.origin_m[0]) +
                         khat[1] * (r[v][1] - t.origin_m[1]) +
                         khat[2] * (r[v][2] - t.origin_m[2]));
        for (int c = 0; c < 3; c++)
            b[3 * v + c] = e0[c] * cexp(I * ph);
    }
    dpz_linop lin = dpz_fftop_linop(op);
    dpz_solve_info info;
    assert_int_equal(dpz_solve(&lin, b, x, &s.solve, &info, NULL), DPZ_OK);
    dpz_solve_info_free(&info);
    double e2 = 0.0;
    for (int c = 0; c < 3; c++)
        e2 += creal(e0[c] * conj(e0[c]));
    double sca = 0.0;
    for (size_t j = 0; j < n; j++)
        for (size_t l = 0; l < n; l++) {
            double complex gm[3][3];
            if (j == l) {
                memset(gm, 0, sizeof gm);
                for (int c = 0; c < 3; c++)
                    gm[c][c] = I * k * k * k / (6.0 * PI);
            } else {
                double R[3] = {r[j][0] - r[l][0], r[j][1] - r[l][1], r[j][2] - r[l][2]};
                double complex g6[6];
                dpz_green_eval(k, R, g6);
                const int ix[3][3] = {{0, 1, 2}, {1, 3, 4}, {2, 4, 5}};
                for (int a = 0; a < 3; a++)
                    for (int c = 0; c < 3; c++)
                        gm[a][c] = g6[ix[a][c]];
            }
            for (int a = 0; a < 3; a++)
                for (int c = 0; c < 3; c++)
                    sca += creal(conj(x[3 * j + a]) * cimag(gm[a][c]) * x[3 * l + c]);
        }
    sca *= k / e2;
    print_message("split ring, eps -10+1i: ext %.6g abs %.6g, ext - abs %.6g, direct "
                  "scattering %.6g m^2\n",
                  xs.ext, xs.abs, xs.sca, sca);
    assert_true(xs.abs > 0.0);
    assert_close(xs.sca, sca, 1e-8);
    dpz_fftop_destroy(op);
    free(ia);
    free(b);
    free(x);
    free(r);
    dpz_grid_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_diag_reciprocity_residual_definition),
        cmocka_unit_test(test_diag_reciprocity_asymmetric),
        cmocka_unit_test(test_diag_inversion_symmetric_has_no_em),
        cmocka_unit_test(test_diag_chirality_flips_under_mirror),
        cmocka_unit_test(test_diag_lossless_unitarity_and_leakage),
        cmocka_unit_test(test_diag_ldr_lossless_balance),
        cmocka_unit_test(test_diag_lossy_is_positive),
        cmocka_unit_test(test_diag_cross_sections_against_mie),
        cmocka_unit_test(test_diag_cross_sections_energy_balance),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
