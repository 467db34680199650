/* test_cli_units.c: the command-line value parsers (cli/units.c). Reference values are
 * the SI definitions of the units (BIPM SI Brochure, 9th ed., 2019: prefixes n = 1e-9,
 * u = 1e-6, ...; the angstrom 1e-10 m and the degree pi/180 rad as non-SI units accepted
 * for use with the SI, table 8) and decimal arithmetic done by hand. */
#include "dpz_units.h"

#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "dpz_test.h"

/* Decimal text to double and one scale multiplication: two roundings at most. */
#define TOL_PARSE (4 * DBL_EPSILON)

static void expect_fail(dpz_status s, const dpz_err *e, const char *fragment)
{
    assert_int_not_equal(s, DPZ_OK);
    if (!strstr(e->msg, fragment)) {
        print_error("message \"%s\" lacks \"%s\"\n", e->msg, fragment);
        fail();
    }
}

static void test_units_length_good(void **state)
{
    (void)state;
    dpz_err e;
    double v;
    struct {
        const char *text;
        double want;
    } cases[] = {
        {"20nm", 20e-9},       {"0.5um", 0.5e-6},   {"1e-7m", 1e-7},
        {"2.385mm", 2.385e-3}, {"12A", 12e-10},     {"350pm", 350e-12},
        {" 7.5nm ", 7.5e-9},   {"-3nm", -3e-9},     {".5um", 0.5e-6},
        {"5.nm", 5e-9},        {"1.5E2nm", 150e-9}, {"2cm", 0.02},
        {"3\xc2\xb5m", 3e-6},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        assert_int_equal(dpz_units_length("--radius", cases[i].text, &v, &e), DPZ_OK);
        assert_close(v, cases[i].want, TOL_PARSE);
    }
    /* One rounding only: the unit's power of ten joins the decimal exponent, so the
     * result is the double nearest to the decimal value (C17 7.22.1.3 for strtod). */
    assert_int_equal(dpz_units_length("--radius", "6nm", &v, &e), DPZ_OK);
    assert_true(v == 6e-9);
    assert_int_equal(dpz_units_length("--radius", "2.385e-2um", &v, &e), DPZ_OK);
    assert_true(v == 2.385e-8);
    assert_int_equal(dpz_units_length("--radius", "0.1um", &v, &e), DPZ_OK);
    assert_true(v == 1e-7);
}

static void test_units_length_bad(void **state)
{
    (void)state;
    dpz_err e;
    double v = 0;
    /* A bare number names the option and the expected form. */
    dpz_status s = dpz_units_length("--radius", "6", &v, &e);
    expect_fail(s, &e, "--radius");
    expect_fail(s, &e, "no unit");
    expect_fail(s, &e, "20nm");
    const char *bad[] = {"",      "nm",      "6 nm",    "6km",  "nanm",
                         "infnm", "1e999nm", "0x10nm",  "6nm6", "--6nm",
                         "6NM",   "1e5000m", "6.6.6nm", "+-2nm"};
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        s = dpz_units_length("--spacing", bad[i], &v, &e);
        if (s == DPZ_OK) {
            print_error("\"%s\" was accepted as %g\n", bad[i], v);
            fail();
        }
        expect_fail(s, &e, "--spacing");
    }
    expect_fail(dpz_units_length_pos("--spacing", "0nm", &v, &e), &e, "positive");
    expect_fail(dpz_units_length_pos("--spacing", "-2nm", &v, &e), &e, "positive");
    expect_fail(dpz_units_length(NULL, NULL, &v, &e), &e, "length");
}

static void test_units_length_unit(void **state)
{
    (void)state;
    dpz_err e;
    double m;
    assert_int_equal(dpz_units_length_unit("--stl-unit", "mm", &m, &e), DPZ_OK);
    assert_close(m, 1e-3, 0.0);
    assert_int_equal(dpz_units_length_unit("--stl-unit", "A", &m, &e), DPZ_OK);
    assert_close(m, 1e-10, 0.0);
    expect_fail(dpz_units_length_unit("--stl-unit", "inch", &m, &e), &e, "--stl-unit");
    expect_fail(dpz_units_length_unit("--stl-unit", "1nm", &m, &e), &e,
                "not a length unit");
}

static void test_units_angle(void **state)
{
    (void)state;
    dpz_err e;
    double v;
    assert_int_equal(dpz_units_angle("--euler", "30deg", &v, &e), DPZ_OK);
    assert_close(v, 0.52359877559829887, TOL_PARSE); /* pi/6 by hand */
    assert_int_equal(dpz_units_angle("--euler", "0.5rad", &v, &e), DPZ_OK);
    assert_close(v, 0.5, 0.0);
    assert_int_equal(dpz_units_angle("--euler", "-90deg", &v, &e), DPZ_OK);
    assert_close(v, -1.5707963267948966, TOL_PARSE);
    expect_fail(dpz_units_angle("--euler", "30", &v, &e), &e, "no unit");
    expect_fail(dpz_units_angle("--euler", "30grad", &v, &e), &e, "deg or rad");
    double abc[3];
    assert_int_equal(dpz_units_angle_vec("--euler", "10deg,0.2rad,-5deg", abc, 3, &e),
                     DPZ_OK);
    assert_close(abc[1], 0.2, 0.0);
    assert_close(abc[2], -0.087266462599716474, TOL_PARSE); /* -5 pi/180 */
    expect_fail(dpz_units_angle_vec("--euler", "10deg,20deg", abc, 3, &e), &e, "3");
}

static void test_units_complex(void **state)
{
    (void)state;
    dpz_err e;
    double complex z;
    struct {
        const char *text;
        double re, im;
    } cases[] = {
        {"2.25", 2.25, 0.0},
        {"-10+1i", -10.0, 1.0},
        {"12.25-0.02i", 12.25, -0.02},
        {"1i", 0.0, 1.0},
        {"-1.5e-3-2e1i", -1.5e-3, -20.0},
        {"i", 0.0, 1.0},
        {"-i", 0.0, -1.0},
        {"3+i", 3.0, 1.0},
        {"2.385e+1-4.5E-2i", 23.85, -0.045},
        {" -2.5i ", 0.0, -2.5},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        assert_int_equal(dpz_units_complex("--eps", cases[i].text, &z, &e), DPZ_OK);
        assert_close_abs(creal(z), cases[i].re, TOL_PARSE, 1e-300);
        assert_close_abs(cimag(z), cases[i].im, TOL_PARSE, 1e-300);
    }
    const char *bad[] = {
        "",     "nan", "inf",   "-inf+1i",  "2.25+nani", "1+2",       "1+2j",  "1i+2",
        "2,25", "abc", "1e999", "1+1e999i", "1++2i",     "2.25 + 1i", "0x1p2", "i2"};
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        dpz_status s = dpz_units_complex("--eps", bad[i], &z, &e);
        if (s == DPZ_OK) {
            print_error("\"%s\" was accepted\n", bad[i]);
            fail();
        }
        expect_fail(s, &e, "--eps");
    }
}

static void test_units_real_and_count(void **state)
{
    (void)state;
    dpz_err e;
    double v;
    size_t n;
    assert_int_equal(dpz_units_real("--tol", "1e-8", &v, &e), DPZ_OK);
    assert_close(v, 1e-8, TOL_PARSE);
    expect_fail(dpz_units_real("--tol", "1e-8x", &v, &e), &e, "--tol");
    expect_fail(dpz_units_real("--tol", "nan", &v, &e), &e, "not a number");
    assert_int_equal(dpz_units_count("--max-iter", "2385", &n, &e), DPZ_OK);
    assert_int_equal(n, 2385);
    expect_fail(dpz_units_count("--max-iter", "-3", &n, &e), &e, "whole number");
    expect_fail(dpz_units_count("--max-iter", "3.5", &n, &e), &e, "whole number");
    expect_fail(dpz_units_count("--max-iter", "99999999999999999999999", &n, &e), &e,
                "too large");
}

static void test_units_lists(void **state)
{
    (void)state;
    dpz_err e;
    double v[8];
    size_t n;
    assert_int_equal(dpz_units_length_list("--x", "10nm,20nm, 0.03um", v, 8, &n, &e),
                     DPZ_OK);
    assert_int_equal(n, 3);
    assert_close(v[2], 30e-9, TOL_PARSE);
    expect_fail(dpz_units_length_list("--x", "10nm,,20nm", v, 8, &n, &e), &e, "empty");
    expect_fail(dpz_units_length_list("--x", "10nm,20", v, 8, &n, &e), &e, "no unit");
    expect_fail(dpz_units_length_list("--x", "10nm,-2nm", v, 8, &n, &e), &e, "positive");
    expect_fail(dpz_units_length_list("--x", "1nm,2nm,3nm", v, 2, &n, &e), &e,
                "more than");
    assert_int_equal(
        dpz_units_size_params("--size-parameters", "0.05,0.1,0.25", v, 8, &n, &e),
        DPZ_OK);
    assert_int_equal(n, 3);
    assert_close(v[2], 0.25, 0.0);
    expect_fail(dpz_units_size_params("--size-parameters", "0.1,0", v, 8, &n, &e), &e,
                "positive");
    expect_fail(dpz_units_size_params("--size-parameters", "0.1,0.1", v, 8, &n, &e), &e,
                "repeats");
    expect_fail(dpz_units_size_params("--size-parameters", "0.1nm", v, 8, &n, &e), &e,
                "--size-parameters");
    double xyz[3];
    assert_int_equal(dpz_units_length_vec("--semi-axes", "10nm,20nm,30nm", xyz, 3, &e),
                     DPZ_OK);
    assert_close(xyz[1], 20e-9, TOL_PARSE);
    expect_fail(dpz_units_length_vec("--semi-axes", "10nm,20nm", xyz, 3, &e), &e,
                "expected 3");
}

static void test_units_wavelength_range(void **state)
{
    (void)state;
    dpz_err e;
    double *w = NULL;
    size_t n = 0;
    /* 400..800 step 10: 41 points, HI included although 400e-9 + 40*10e-9 rounds. */
    assert_int_equal(
        dpz_units_wavelengths("--wavelengths", "400nm:800nm:10nm", 0, &w, &n, &e),
        DPZ_OK);
    assert_int_equal(n, 41);
    assert_close(w[0], 400e-9, TOL_PARSE);
    assert_true(w[17] ==
                570e-9); /* the double nearest to the decimal, not 400e-9 + 17 * 10e-9 */
    assert_true(w[1] == 410e-9);
    assert_true(w[40] == 800e-9); /* HI exactly as typed, not LO + 40 STEP */
    free(w);
    /* HI off the grid: the last point stays below it. 0.2..0.25um by 0.02um:
     * 0.2,0.22,0.24. */
    assert_int_equal(
        dpz_units_wavelengths("--wavelengths", "0.2um:0.25um:0.02um", 0, &w, &n, &e),
        DPZ_OK);
    assert_int_equal(n, 3);
    assert_close(w[2], 0.24e-6, TOL_PARSE);
    free(w);
    /* 0.1:0.3:0.1 in um: the classic rounding trap (0.1 + 2*0.1 != 0.3 in binary). */
    assert_int_equal(
        dpz_units_wavelengths("--wavelengths", "0.1um:0.3um:0.1um", 0, &w, &n, &e),
        DPZ_OK);
    assert_int_equal(n, 3);
    free(w);
    assert_int_equal(
        dpz_units_wavelengths("--wavelengths", "500nm:500nm:1nm", 0, &w, &n, &e), DPZ_OK);
    assert_int_equal(n, 1);
    free(w);
    assert_int_equal(dpz_units_wavelengths("--wavelengths", "500nm,600nm", 0, &w, &n, &e),
                     DPZ_OK);
    assert_int_equal(n, 2);
    assert_close(w[1], 600e-9, TOL_PARSE);
    free(w);
    w = NULL;
    expect_fail(dpz_units_wavelengths("--wavelengths", "800nm:400nm:10nm", 0, &w, &n, &e),
                &e, "inverted");
    expect_fail(dpz_units_wavelengths("--wavelengths", "400nm:800nm:0nm", 0, &w, &n, &e),
                &e, "positive");
    expect_fail(dpz_units_wavelengths("--wavelengths", "400nm:800nm:-1nm", 0, &w, &n, &e),
                &e, "positive");
    expect_fail(dpz_units_wavelengths("--wavelengths", "400:800nm:10nm", 0, &w, &n, &e),
                &e, "no unit");
    expect_fail(dpz_units_wavelengths("--wavelengths", "400nm:800nm", 0, &w, &n, &e), &e,
                "LO:HI:STEP");
    expect_fail(
        dpz_units_wavelengths("--wavelengths", "400nm:800nm:1pm", 1000, &w, &n, &e), &e,
        "more than 1000");
    expect_fail(dpz_units_wavelengths("--wavelengths", "1nm:1m:1e-30m", 0, &w, &n, &e),
                &e, "more than");
    expect_fail(dpz_units_wavelengths("--wavelengths", "0nm:800nm:1nm", 0, &w, &n, &e),
                &e, "positive");
    expect_fail(dpz_units_wavelengths("--wavelengths", "500nm,500nm", 0, &w, &n, &e), &e,
                "repeats");
    assert_null(w);
}

static void test_units_wavelength_file(void **state)
{
    (void)state;
    dpz_err e;
    double *w = NULL;
    size_t n = 0;
    const char good[] = "# wavelengths\n550nm\n\n  0.6um  # comment\n6.5e-7m";
    assert_int_equal(dpz_units_wavelength_text("--wavelengths", "w.txt", good,
                                               sizeof good - 1, 0, &w, &n, &e),
                     DPZ_OK);
    assert_int_equal(n, 3);
    assert_close(w[1], 600e-9, TOL_PARSE);
    assert_close(w[2], 650e-9, TOL_PARSE);
    free(w);
    const char noun[] = "550nm\n600\n";
    expect_fail(dpz_units_wavelength_text("--wavelengths", "w.txt", noun, sizeof noun - 1,
                                          0, &w, &n, &e),
                &e, "line 2");
    const char dup[] = "550nm\n0.55um\n";
    expect_fail(dpz_units_wavelength_text("--wavelengths", "w.txt", dup, sizeof dup - 1,
                                          0, &w, &n, &e),
                &e, "twice");
    const char empty[] = "# nothing\n\n";
    expect_fail(dpz_units_wavelength_text("--wavelengths", "w.txt", empty,
                                          sizeof empty - 1, 0, &w, &n, &e),
                &e, "no wavelength");
    expect_fail(dpz_units_wavelength_text("--wavelengths", "w.txt", good, sizeof good - 1,
                                          2, &w, &n, &e),
                &e, "more than 2");
    /* Through a real file, and a missing one. */
    char path[] = "/tmp/dpz_units_wlXXXXXX";
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    FILE *f = fdopen(fd, "w");
    fputs("700nm\n710nm\n", f);
    fclose(f);
    char arg[64];
    snprintf(arg, sizeof arg, "@%s", path);
    assert_int_equal(dpz_units_wavelengths("--wavelengths", arg, 0, &w, &n, &e), DPZ_OK);
    assert_int_equal(n, 2);
    assert_close(w[1], 710e-9, TOL_PARSE);
    free(w);
    remove(path);
    expect_fail(dpz_units_wavelengths("--wavelengths", arg, 0, &w, &n, &e), &e,
                "cannot open");
}

static void test_units_alloc_failure(void **state)
{
    (void)state;
    dpz_err e;
    double *w = NULL;
    size_t n = 0;
    /* Every allocation of the wavelength parsers goes through the library hook. */
    dpz_alloc_fail_after(0);
    expect_fail(dpz_units_wavelengths("--wavelengths", "400nm:800nm:10nm", 0, &w, &n, &e),
                &e, "out of memory");
    assert_int_equal(e.code, DPZ_ENOMEM);
    dpz_alloc_fail_after(0);
    expect_fail(dpz_units_wavelengths("--wavelengths", "500nm,600nm", 0, &w, &n, &e), &e,
                "out of memory");
    /* The text form grows its array: fail at the first growth (17th value). */
    char text[512] = "";
    for (int i = 0; i < 20; i++) {
        char line[32];
        snprintf(line, sizeof line, "%dnm\n", 500 + i);
        strcat(text, line);
    }
    dpz_alloc_fail_after(1);
    expect_fail(dpz_units_wavelength_text("--wavelengths", "w.txt", text, strlen(text), 0,
                                          &w, &n, &e),
                &e, "out of memory");
    dpz_alloc_fail_after(-1);
    assert_null(w);
    assert_int_equal(dpz_units_wavelength_text("--wavelengths", "w.txt", text,
                                               strlen(text), 0, &w, &n, &e),
                     DPZ_OK);
    assert_int_equal(n, 20);
    free(w);
}

static void test_units_shard(void **state)
{
    (void)state;
    dpz_err e;
    size_t i, n;
    assert_int_equal(dpz_units_shard("--shard", "3/4", &i, &n, &e), DPZ_OK);
    assert_int_equal(i, 3);
    assert_int_equal(n, 4);
    assert_int_equal(dpz_units_shard("--shard", "0/1", &i, &n, &e), DPZ_OK);
    expect_fail(dpz_units_shard("--shard", "4/4", &i, &n, &e), &e, "below N");
    expect_fail(dpz_units_shard("--shard", "0/0", &i, &n, &e), &e, ">= 1");
    expect_fail(dpz_units_shard("--shard", "-1/4", &i, &n, &e), &e, "I/N");
    expect_fail(dpz_units_shard("--shard", "1", &i, &n, &e), &e, "I/N");
    expect_fail(dpz_units_shard("--shard", "1/2/3", &i, &n, &e), &e, "I/N");
}

static void test_units_drude(void **state)
{
    (void)state;
    dpz_err e;
    dpz_drude_params p;
    assert_int_equal(dpz_units_drude("--material",
                                     "eps_inf=9.5,wp=8.9eV,gamma=0.07eV,"
                                     "lorentz=1.2:2.9eV:0.6eV,lorentz=0.3:4.1eV:1.1eV",
                                     &p, &e),
                     DPZ_OK);
    assert_close(p.eps_inf, 9.5, 0.0);
    assert_close(p.plasma_ev, 8.9, 0.0);
    assert_close(p.damping_ev, 0.07, 0.0);
    assert_int_equal(p.n_lorentz, 2);
    assert_close(p.lorentz[1].strength, 0.3, 0.0);
    assert_close(p.lorentz[1].energy_ev, 4.1, 0.0);
    assert_close(p.lorentz[1].damping_ev, 1.1, 0.0);
    /* Defaults: eps_inf 1, gamma 0. */
    assert_int_equal(dpz_units_drude("--material", "wp=3.2eV", &p, &e), DPZ_OK);
    assert_close(p.eps_inf, 1.0, 0.0);
    assert_close(p.damping_ev, 0.0, 0.0);
    expect_fail(dpz_units_drude("--material", "wp=8.9,gamma=0.07eV", &p, &e), &e, "eV");
    expect_fail(dpz_units_drude("--material", "gamma=0.07eV", &p, &e), &e, "needs wp");
    expect_fail(dpz_units_drude("--material", "wp=8.9eV,gamma=-0.1eV", &p, &e), &e,
                "negative");
    expect_fail(dpz_units_drude("--material", "wp=8.9eV,foo=1", &p, &e), &e, "unknown");
    expect_fail(dpz_units_drude("--material", "wp=8.9eV,lorentz=1:2eV", &p, &e), &e,
                "F:E0:G");
    expect_fail(dpz_units_drude("--material", "wp=8.9eV,wp=1eV", &p, &e), &e, "twice");
    expect_fail(dpz_units_drude("--material", "wp", &p, &e), &e, "'='");
    expect_fail(dpz_units_drude("--material", "", &p, &e), &e, "empty");
}

static void test_units_material(void **state)
{
    (void)state;
    dpz_err e;
    dpz_matspec m;
    assert_int_equal(dpz_units_material("--material", "2=-10+1i", 1, &m, &e), DPZ_OK);
    assert_int_equal(m.label, 2);
    assert_int_equal(m.kind, DPZ_MATSPEC_CONST);
    assert_cclose(m.eps, CMPLX(-10.0, 1.0), 0.0);
    assert_int_equal(dpz_units_material("--material", "1=nk:data/gold.csv", 1, &m, &e),
                     DPZ_OK);
    assert_int_equal(m.kind, DPZ_MATSPEC_TABLE);
    assert_string_equal(m.path, "data/gold.csv");
    assert_int_equal(
        dpz_units_material("--material", "255=drude:wp=9eV,gamma=0.1eV", 1, &m, &e),
        DPZ_OK);
    assert_int_equal(m.label, 255);
    assert_int_equal(m.kind, DPZ_MATSPEC_DRUDE);
    assert_close(m.drude.plasma_ev, 9.0, 0.0);
    assert_int_equal(dpz_units_material("--eps", "12.25-0.02i", 0, &m, &e), DPZ_OK);
    assert_int_equal(m.label, 0);
    assert_cclose(m.eps, CMPLX(12.25, -0.02), TOL_PARSE);
    expect_fail(dpz_units_material("--material", "0=2.25", 1, &m, &e), &e, "1 to 255");
    expect_fail(dpz_units_material("--material", "256=2.25", 1, &m, &e), &e, "1 to 255");
    expect_fail(dpz_units_material("--material", "2.25", 1, &m, &e), &e, "LABEL=SPEC");
    expect_fail(dpz_units_material("--material", "1=nan", 1, &m, &e), &e,
                "not a permittivity");
    expect_fail(dpz_units_material("--material", "1=nk:", 1, &m, &e), &e, "file name");
    expect_fail(dpz_units_material("--eps", "gold", 0, &m, &e), &e, "--eps");
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_units_length_good),
        cmocka_unit_test(test_units_length_bad),
        cmocka_unit_test(test_units_length_unit),
        cmocka_unit_test(test_units_angle),
        cmocka_unit_test(test_units_complex),
        cmocka_unit_test(test_units_real_and_count),
        cmocka_unit_test(test_units_lists),
        cmocka_unit_test(test_units_wavelength_range),
        cmocka_unit_test(test_units_wavelength_file),
        cmocka_unit_test(test_units_alloc_failure),
        cmocka_unit_test(test_units_shard),
        cmocka_unit_test(test_units_drude),
        cmocka_unit_test(test_units_material),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
