/* test_solver_dipole.c: voxel polarizabilities (Clausius-Mossotti, radiative reaction,
 * lattice dispersion relation, integrated Green tensor) and the Green tensor, against
 * hand computations from the published formulas, scipy quadratures and physical limits.
 */
#include <complex.h>
#include <float.h>
#include <math.h>
#include <string.h>

#include "dpz_test.h"

#include "dpz_dipole.h"
#include "solver_int.h"

#define PI 3.14159265358979323846
#define D 2.385e-8 /* voxel edge, m */
/* Closed-form evaluations: a few roundings of relative size DBL_EPSILON. */
#define TOL_FORMULA (64 * DBL_EPSILON)
/* Quadrature against scipy's adaptive tplquad (requested 1e-12 .. 1e-13). */
#define TOL_QUAD 1e-10

/* Clausius-Mossotti by hand, eps = 2.25: alpha_CM = 3 d^3 (1.25 / 4.25), so
 * 1/alpha_CM = 4.25 / 3.75 / d^3 = 1.1333333.../d^3 (Purcell & Pennypacker 1973; SI
 * volume units). At k = 0 every prescription reduces to it. */
static void test_dipole_static_is_clausius_mossotti(void **state)
{
    (void)state;
    double want = (4.25 / 3.75) / (D * D * D);
    const dpz_dipole_model models[] = {DPZ_DIPOLE_CMRR, DPZ_DIPOLE_LDR, DPZ_DIPOLE_IGT};
    for (int m = 0; m < 3; m++)
        assert_cclose(dpz_dipole_inv_alpha(models[m], 2.25, 0.0, D), want, TOL_FORMULA);
    /* A metal: (eps + 2)/(3 (eps - 1)) for eps = -10 + 1i, by hand: (-8 + i)/(3 (-11 +
     * i)) = (-8 + i)(-11 - i)/(3 * 122) = (89 - 3i)/366. */
    assert_cclose(dpz_dipole_inv_alpha(DPZ_DIPOLE_CMRR, -10.0 + 1.0 * I, 0.0, D),
                  CMPLX(89.0 / 366.0, -3.0 / 366.0) / (D * D * D), TOL_FORMULA);
}

/* Radiative reaction (Draine 1988, SI volume units): for real eps the imaginary
 * part of 1/alpha is exactly -k^3/(6 pi) and the real part stays Clausius-Mossotti. */
static void test_dipole_radiative_reaction(void **state)
{
    (void)state;
    double k = 0.3 / D;
    double complex ia = dpz_dipole_inv_alpha(DPZ_DIPOLE_CMRR, 2.25, k, D);
    assert_close(cimag(ia), -k * k * k / (6 * PI), TOL_FORMULA);
    assert_close(creal(ia), (4.25 / 3.75) / (D * D * D), TOL_FORMULA);
    /* LDR carries the same radiative term: -(2/3) i (kd)^3 / (4 pi d^3) = -i k^3/(6 pi).
     */
    ia = dpz_dipole_inv_alpha(DPZ_DIPOLE_LDR, 12.25, k, D);
    assert_close(cimag(ia), -k * k * k / (6 * PI), TOL_FORMULA);
}

/* Lattice dispersion relation, Draine & Goodman (1993) (equation numbers from memory)
 * eq. 4.3 with the coefficients of their eq. 4.4 and the orientation average S = 1/5, by
 * hand for eps = 2.25, kd = 0.3: b1 + eps b2 + eps b3 / 5 = -1.8915316 + 0.3709055 -
 * 0.7965002 = -2.3171263, so d^3 Re(1/alpha) = 1.1333333 - 2.3171263 * 0.09 / (4 pi)
 * = 1.1167381 and d^3 Im(1/alpha) = -(0.3)^3 / (6 pi) = -0.0014323945. For eps = -10 + 1i
 * the coefficient is b1 + eps (b2 + b3/5) = (2.0e-7 - 0.18915318i), so d^3/alpha =
 * 0.24316940 - 0.0095514312i - 0.0014323945i. */
static void test_dipole_ldr_coefficients(void **state)
{
    (void)state;
    double k = 0.3 / D, d3 = D * D * D;
    double complex ia = dpz_dipole_inv_alpha(DPZ_DIPOLE_LDR, 2.25, k, D);
    assert_close(creal(ia) * d3, 1.1167381389570266, 1e-12);
    assert_close(cimag(ia) * d3, -0.0014323944878270579, 1e-12);
    ia = dpz_dipole_inv_alpha(DPZ_DIPOLE_LDR, -10.0 + 1.0 * I, k, D);
    assert_cclose(
        ia * d3,
        CMPLX(0.24316940033949833, -0.009551431173410205 - 0.0014323944878270579), 1e-12);
    /* In the lattice limit kd -> 0 LDR tends to Clausius-Mossotti. */
    ia = dpz_dipole_inv_alpha(DPZ_DIPOLE_LDR, 2.25, 1e-5 / D, D);
    assert_close(creal(ia) * d3, 4.25 / 3.75, 1e-10);
}

/* The igt self integral J = int_cube e^{ikR}/R dV against scipy (tplquad over an octant,
 * times 8; computed with scipy 1.10.1 by tests/data/solver/igt_reference.py, error
 * estimates below 5e-13): k = 0:          J / d^2 = 2.380077363979553 k d = 0.5:      J /
 * d^2 = 2.3203978725451577 + 0.4948122382222645 i k d = 1.3:      J / d^2
 * = 1.9902986770527986 + 1.2108721714805213 i (The k = 0 value, the integral of 1/|u|
 * over the unit cube, is 2.3800772 from memory.)
 */
static void test_dipole_igt_self_integral_matches_scipy(void **state)
{
    (void)state;
    double d = 1.0;
    assert_cclose(dpz__igt_self_integral(0.0, d, 24), 2.380077363979553, TOL_QUAD);
    assert_cclose(dpz__igt_self_integral(0.5, d, 24),
                  CMPLX(2.3203978725451577, 0.4948122382222645), TOL_QUAD);
    assert_cclose(dpz__igt_self_integral(1.3, d, 24),
                  CMPLX(1.9902986770527986, 1.2108721714805213), TOL_QUAD);
    /* Scaling: J(k, d) = d^2 J(k d, 1). */
    assert_cclose(dpz__igt_self_integral(1.3 / D, D, 24) / (D * D),
                  CMPLX(1.9902986770527986, 1.2108721714805213), TOL_QUAD);
    /* Doubling the rule changes nothing at the 1e-14 level: the Duffy transform removed
     * the singularity. */
    assert_cclose(dpz__igt_self_integral(1.3, d, 24), dpz__igt_self_integral(1.3, d, 48),
                  1e-14);
}

/* igt self term: 1/alpha = 1/alpha_CM - (k^2/(6 pi)) J / d^3. As kd -> 0 it tends to
 * Clausius-Mossotti, and Im(1/alpha) -> -k^3/(6 pi) since Im J = k d^3 (1 + O(kd)^2);
 * the real correction is -(kd)^2 2.3800774/(6 pi) / d^3 to leading order. */
static void test_dipole_igt_self_term_limits(void **state)
{
    (void)state;
    double d3 = D * D * D;
    double kd = 1e-3, k = kd / D;
    double complex ia = dpz_dipole_inv_alpha(DPZ_DIPOLE_IGT, 2.25, k, D);
    double cm = 4.25 / 3.75;
    /* Re: CM + leading correction; the next term is O(kd)^4. */
    assert_close(creal(ia) * d3, cm - kd * kd * 2.380077363979553 / (6 * PI), 1e-12);
    /* Im: exactly the radiative reaction -k^3/(6 pi) (Draine 1988), at any kd: igt
     * averages only the reactive part of G. */
    assert_close(cimag(ia), -k * k * k / (6 * PI), 4 * DBL_EPSILON);
    ia = dpz_dipole_inv_alpha(DPZ_DIPOLE_IGT, 12.25, 0.9 / D, D);
    assert_close(cimag(ia), -pow(0.9 / D, 3) / (6 * PI), 4 * DBL_EPSILON);
    ia = dpz_dipole_inv_alpha(DPZ_DIPOLE_IGT, 2.25, 1e-6 / D, D);
    assert_close(creal(ia) * d3, cm, 1e-11);
}

/* Cube-averaged Green tensor, offsets near the origin, against scipy tplquad of the Green
 * tensor of Jackson eq. 9.18 (number from memory) over the source cube (d = 1 m, k = 0.5
 * 1/m; requested tolerance 1e-12; tests/data/solver/igt_reference.py). */
/* The igt kernel keeps the point value of the radiative part Im G (see solver/dipole.c),
 * so only its real part is the cube average; the imaginary part must equal Im G(R). */
static void assert_igt_radiative_is_point(double k, long i, long j, long l,
                                          const double complex g[6])
{
    double R[3] = {(double)i, (double)j, (double)l};
    double complex p[6];
    dpz_green_eval(k, R, p);
    for (int m = 0; m < 6; m++)
        assert_true(cimag(g[m]) == cimag(p[m]));
}

static void test_dipole_igt_average_matches_scipy(void **state)
{
    (void)state;
    double complex g[6], a[6];
    dpz_green_kernel(DPZ_DIPOLE_IGT, 0.5, 1.0, 1, 0, 0, g);
    assert_close(creal(g[0]), 0.15130026198185823, TOL_QUAD);
    assert_close(creal(g[3]), -0.0586226555532584, TOL_QUAD);
    assert_cclose(g[5], g[3], TOL_FORMULA);
    assert_igt_radiative_is_point(0.5, 1, 0, 0, g);
    /* The full cube average (radiative part included) against scipy as well. */
    dpz__igt_average(0.5, 1.0, 1, 0, 0, 2, 10, a);
    assert_cclose(a[0], CMPLX(0.15130026198185823, 0.0064000427004420445), TOL_QUAD);
    assert_cclose(a[3], CMPLX(-0.0586226555532584, 0.0062388863088207527), TOL_QUAD);
    dpz_green_kernel(DPZ_DIPOLE_IGT, 0.5, 1.0, 1, 1, 0, g);
    assert_close(creal(g[1]), 0.046382726770101385, TOL_QUAD);
    assert_igt_radiative_is_point(0.5, 1, 1, 0, g);
    dpz__igt_average(0.5, 1.0, 1, 1, 0, 2, 10, a);
    assert_cclose(a[1], CMPLX(0.046382726770101385, 0.00015828780152053), TOL_QUAD);
    dpz_green_kernel(DPZ_DIPOLE_IGT, 0.5, 1.0, 2, 1, 1, g);
    assert_close(creal(g[4]), 0.0035252951725409515, TOL_QUAD);
    assert_igt_radiative_is_point(0.5, 2, 1, 1, g);
    dpz__igt_average(0.5, 1.0, 2, 1, 1, 2, 10, a);
    assert_cclose(a[4], CMPLX(0.0035252951725409515, 0.00014720400808376061), TOL_QUAD);
    /* Static kernel (k = 0): the cube average of (3RR - I)/(4 pi R^3). */
    dpz_green_kernel(DPZ_DIPOLE_IGT, 0.0, 1.0, 1, 0, 0, g);
    assert_cclose(g[0], 0.13478238623740676, TOL_QUAD);
    dpz_green_kernel(DPZ_DIPOLE_IGT, 0.0, 1.0, 1, 1, 0, g);
    assert_cclose(g[1], 0.042922353171900872, TOL_QUAD);
    /* Beyond the near zone the kernel is the point value. */
    double complex p[6];
    double R[3] = {4 * D, -1 * D, 2 * D};
    dpz_green_kernel(DPZ_DIPOLE_IGT, 0.7 / D, D, 4, -1, 2, g);
    dpz_green_eval(0.7 / D, R, p);
    for (int c = 0; c < 6; c++)
        assert_true(g[c] == p[c]);
}

/* The near-field quadrature is converged: doubling the sub-cubes or the rule changes the
 * average by less than 1e-10 relative to its largest component, at kd = 0.5 and 1.5. */
static void test_dipole_igt_quadrature_converged(void **state)
{
    (void)state;
    const long off[][3] = {{1, 0, 0}, {1, 1, 0}, {1, 1, 1},
                           {2, 1, 0}, {3, 2, 1}, {3, 3, 3}};
    const double kds[] = {0.5, 1.5};
    for (int q = 0; q < 2; q++) {
        for (size_t o = 0; o < sizeof off / sizeof off[0]; o++) {
            double complex a[6], b[6], c[6];
            dpz_green_kernel(DPZ_DIPOLE_IGT, kds[q] / D, D, off[o][0], off[o][1],
                             off[o][2], a);
            dpz__igt_average(kds[q] / D, D, off[o][0], off[o][1], off[o][2], 4, 10, b);
            dpz__igt_average(kds[q] / D, D, off[o][0], off[o][1], off[o][2], 2, 20, c);
            double scale = 0;
            for (int m = 0; m < 6; m++)
                scale = fmax(scale, cabs(b[m]));
            for (int m = 0; m < 6; m++) {
                assert_close_abs(creal(a[m]), creal(b[m]), 1e-10, scale);
                assert_close_abs(creal(a[m]), creal(c[m]), 1e-10, scale);
                assert_close_abs(cimag(b[m]), cimag(c[m]), 1e-10, scale);
            }
        }
    }
}

/* Reflected offsets: the kernel's reflection rule equals a direct average over the
 * reflected cube. */
static void test_dipole_igt_reflections(void **state)
{
    (void)state;
    const long off[][3] = {{-1, 0, 0}, {1, -1, 0}, {-1, -1, 1}, {2, -3, -1}, {0, 0, -2}};
    for (size_t o = 0; o < sizeof off / sizeof off[0]; o++) {
        double complex a[6], b[6];
        dpz_green_kernel(DPZ_DIPOLE_IGT, 0.9 / D, D, off[o][0], off[o][1], off[o][2], a);
        dpz__igt_average(0.9 / D, D, off[o][0], off[o][1], off[o][2], 2, 10, b);
        double scale = 0;
        for (int m = 0; m < 6; m++)
            scale = fmax(scale, cabs(b[m]));
        for (int m = 0; m < 6; m++)
            assert_close_abs(creal(a[m]), creal(b[m]), 1e-13, scale);
    }
}

/* Static Green tensor by hand at R = (1, 2, 2) m (R = 3): (3 RR/R^2 - I)/(4 pi 27). */
static void test_green_static_by_hand(void **state)
{
    (void)state;
    const double R[3] = {1.0, 2.0, 2.0};
    double complex g[6];
    dpz_green_eval(0.0, R, g);
    const double want[6] = {(3.0 / 9 - 1) / (108 * PI), (6.0 / 9) / (108 * PI),
                            (6.0 / 9) / (108 * PI),     (12.0 / 9 - 1) / (108 * PI),
                            (12.0 / 9) / (108 * PI),    (12.0 / 9 - 1) / (108 * PI)};
    for (int c = 0; c < 6; c++)
        assert_cclose(g[c], want[c], TOL_FORMULA);
    /* k -> 0 continuity: kR = 3e-6 changes the tensor by O((kR)^2) relative. */
    double complex h[6];
    dpz_green_eval(1e-6, R, h);
    for (int c = 0; c < 6; c++)
        assert_cclose_abs(h[c], g[c], 1e-10, cabs(g[0]));
}

/* G(-R) = G(R) (reciprocity), for a complex k R of order one. */
static void test_green_even(void **state)
{
    (void)state;
    const double R[3] = {1.3 * D, -0.4 * D, 2.385 * D}, mR[3] = {-R[0], -R[1], -R[2]};
    double complex a[6], b[6];
    dpz_green_eval(0.37 / D, R, a);
    dpz_green_eval(0.37 / D, mR, b);
    for (int c = 0; c < 6; c++)
        assert_true(a[c] == b[c]);
}

/* Im G(R) -> (k^3/(6 pi)) I as R -> 0: the radiative reaction field of a point dipole
 * (Draine 1988; Jackson 9.18 expanded in kR: Im G = k^3/(6 pi) I + O(k^5 R^2)). */
static void test_green_imag_limit(void **state)
{
    (void)state;
    double k = 1e7;
    const double R[3] = {0.6e-11, 0.8e-11, 0.0}; /* kR = 1e-4 */
    double complex g[6];
    dpz_green_eval(k, R, g);
    double want = k * k * k / (6 * PI);
    assert_close(cimag(g[0]), want, 1e-7);
    assert_close(cimag(g[3]), want, 1e-7);
    assert_close(cimag(g[5]), want, 1e-7);
    assert_true(fabs(cimag(g[1])) < 1e-7 * want);
    assert_true(fabs(cimag(g[2])) < 1e-12 * want);
}

/* G = (k^2 I + grad grad) e^{ikR}/(4 pi R): the Green tensor equals the curl-curl form
 * of the scalar Green function (Tsang, Kong & Ding 2000, ch. 1), checked with central
 * differences of step h = 1e-3 R (truncation O(h^2) ~ 1e-6 relative). */
static double complex phi(double k, const double r[3])
{
    double R = sqrt(r[0] * r[0] + r[1] * r[1] + r[2] * r[2]);
    return cexp(CMPLX(0.0, k * R)) / (4 * PI * R);
}

static void test_green_matches_finite_difference(void **state)
{
    (void)state;
    double k = 2.1e7;
    const double R0[3] = {4.1e-8, -2.3e-8, 6.7e-8};
    double Rn = sqrt(R0[0] * R0[0] + R0[1] * R0[1] + R0[2] * R0[2]);
    double h = 1e-3 * Rn;
    double complex g[6];
    dpz_green_eval(k, R0, g);
    static const int ab[6][2] = {{0, 0}, {0, 1}, {0, 2}, {1, 1}, {1, 2}, {2, 2}};
    double scale = 0;
    for (int c = 0; c < 6; c++)
        scale = fmax(scale, cabs(g[c]));
    for (int c = 0; c < 6; c++) {
        int a = ab[c][0], b = ab[c][1];
        double complex sum = 0;
        for (int sa = -1; sa <= 1; sa += 2)
            for (int sb = -1; sb <= 1; sb += 2) {
                double r[3] = {R0[0], R0[1], R0[2]};
                r[a] += sa * h;
                r[b] += sb * h;
                sum += sa * sb * phi(k, r);
            }
        double complex dd = sum / (4 * h * h); /* d^2 phi / dx_a dx_b */
        double complex want = dd + (a == b ? k * k * phi(k, R0) : 0.0);
        assert_cclose_abs(g[c], want, 1e-5, scale);
    }
}

static void test_dipole_names(void **state)
{
    (void)state;
    /* |m| k d for eps = 12.25 (|m| = 3.5), k d = 0.3: 1.05, above the limit of 1. */
    assert_close(dpz_dipole_mkd(12.25, 0.3 / D, D), 1.05, TOL_FORMULA);
    assert_true(dpz_dipole_mkd(12.25, 0.3 / D, D) > DPZ_DIPOLE_MKD_LIMIT);
    /* |-10 + 1i| = sqrt(101), |m| = 101^(1/4). */
    assert_close(dpz_dipole_mkd(-10.0 + 1.0 * I, 0.2 / D, D), pow(101.0, 0.25) * 0.2,
                 TOL_FORMULA);
    dpz_dipole_model m;
    dpz_err err;
    assert_int_equal(dpz_dipole_parse("ldr", &m, &err), DPZ_OK);
    assert_int_equal(m, DPZ_DIPOLE_LDR);
    assert_int_equal(dpz_dipole_parse("igt", &m, &err), DPZ_OK);
    assert_int_equal(m, DPZ_DIPOLE_IGT);
    assert_string_equal(dpz_dipole_name(DPZ_DIPOLE_CMRR), "cm-rr");
    assert_int_equal(dpz_dipole_parse("cm", &m, &err), DPZ_EINVAL);
    assert_non_null(strstr(err.msg, "cm-rr, ldr or igt"));
    assert_int_equal(dpz_dipole_parse(NULL, &m, &err), DPZ_EINVAL);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_dipole_static_is_clausius_mossotti),
        cmocka_unit_test(test_dipole_radiative_reaction),
        cmocka_unit_test(test_dipole_ldr_coefficients),
        cmocka_unit_test(test_dipole_igt_self_integral_matches_scipy),
        cmocka_unit_test(test_dipole_igt_self_term_limits),
        cmocka_unit_test(test_dipole_igt_average_matches_scipy),
        cmocka_unit_test(test_dipole_igt_quadrature_converged),
        cmocka_unit_test(test_dipole_igt_reflections),
        cmocka_unit_test(test_green_static_by_hand),
        cmocka_unit_test(test_green_even),
        cmocka_unit_test(test_green_imag_limit),
        cmocka_unit_test(test_green_matches_finite_difference),
        cmocka_unit_test(test_dipole_names),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
