/* test_solver_material.c: constant, Drude-Lorentz and tabulated permittivities; CSV
 * table validation with file and line in every message; allocation failure. */
#include <complex.h>
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "dpz_test.h"

#include "dpz_material.h"

/* A few roundings in closed-form arithmetic. */
#define TOL_FORMULA (64 * DBL_EPSILON)
#define NM 1e-9

static dpz_drude_params demo_drude(void)
{
    /* Invented demo parameters (not a real metal): eps_inf 1.53, Ep 9 eV, gamma 0.1 eV,
     * one Lorentz term f = 1.2 at 3 eV, width 0.5 eV. */
    dpz_drude_params p = {1.53, 9.0, 0.1, 1, {{1.2, 3.0, 0.5}}};
    return p;
}

/* Drude-Lorentz (Rakic et al. 1998, eq. 3 for exp(-i omega t)) by hand. With
 * hc = 1239.8419843320026 eV nm (CODATA 2018), lambda = 1239.8419843320026 nm is E = 1
 * eV: Drude: -81/(1 (1 + 0.1i)) = -81 (1 - 0.1i)/1.01 = -80.198020 + 8.0198020i
 *   Lorentz: 1.2 * 9/(9 - 1 - 0.5i) = 10.8 (8 + 0.5i)/64.25 = 1.3447471 + 0.084046693i
 *   eps = 1.53 - 80.198020 + 1.3447471 + (8.0198020 + 0.084046693)i
 *       = -77.323273 + 8.1038487i
 * and lambda = 619.92099216600130 nm is E = 2 eV:
 *   Drude: -81/(2 (2 + 0.1i)) = -81 (4 - 0.2i)/16.04 = -20.199501 + 1.0099751i
 *   Lorentz: 10.8/(9 - 4 - 1i) = 10.8 (5 + i)/26 = 2.0769231 + 0.41538462i
 *   eps = -16.592578 + 1.4253597i. */
static void test_material_drude_lorentz_by_hand(void **state)
{
    (void)state;
    dpz_drude_params p = demo_drude();
    dpz_material *m = NULL;
    dpz_err err;
    assert_int_equal(dpz_material_create_drude(&m, &p, &err), DPZ_OK);
    double complex eps;
    assert_int_equal(dpz_material_eps(m, 1239.8419843320026 * NM, &eps, &err), DPZ_OK);
    assert_cclose(eps, CMPLX(-77.32327272026814, 8.103848672805023), 1e-13);
    assert_int_equal(dpz_material_eps(m, 619.9209921660013 * NM, &eps, &err), DPZ_OK);
    assert_cclose(eps, CMPLX(-16.592578169959715, 1.425359677728755), 1e-13);
    /* Pure Drude without damping at E = Ep: eps = eps_inf - 1 (the plasma edge). */
    dpz_drude_params q = {1.0, 9.0, 0.0, 0, {{0, 0, 0}}};
    dpz_material *d = NULL;
    assert_int_equal(dpz_material_create_drude(&d, &q, &err), DPZ_OK);
    assert_int_equal(dpz_material_eps(d, 1239.8419843320026 / 9.0 * NM, &eps, &err),
                     DPZ_OK);
    assert_cclose_abs(eps, 0.0, TOL_FORMULA, 1.0);
    double lo, hi;
    dpz_material_range(m, &lo, &hi);
    assert_true(lo == 0.0 && isinf(hi));
    char buf[128];
    dpz_material_describe(m, buf, sizeof buf);
    assert_non_null(strstr(buf, "drude eps_inf=1.53"));
    dpz_material_destroy(m);
    dpz_material_destroy(d);
}

static void test_material_drude_rejects_bad_params(void **state)
{
    (void)state;
    dpz_material *m = NULL;
    dpz_err err;
    dpz_drude_params p = demo_drude();
    p.damping_ev = -0.1;
    assert_int_equal(dpz_material_create_drude(&m, &p, &err), DPZ_EINVAL);
    assert_null(m);
    assert_non_null(strstr(err.msg, "damping -0.1 eV"));
    p = demo_drude();
    p.lorentz[0].damping_ev = -0.5;
    assert_int_equal(dpz_material_create_drude(&m, &p, &err), DPZ_EINVAL);
    assert_non_null(strstr(err.msg, "Lorentz term 1"));
    p = demo_drude();
    p.plasma_ev = NAN;
    assert_int_equal(dpz_material_create_drude(&m, &p, &err), DPZ_EINVAL);
    p = demo_drude();
    p.n_lorentz = DPZ_MAX_LORENTZ + 1;
    assert_int_equal(dpz_material_create_drude(&m, &p, &err), DPZ_EINVAL);
    assert_int_equal(dpz_material_create_const(&m, CMPLX(INFINITY, 0), &err), DPZ_EINVAL);
}

static void test_material_const(void **state)
{
    (void)state;
    dpz_material *m = NULL;
    dpz_err err;
    assert_int_equal(dpz_material_create_const(&m, -10.0 + 1.0 * I, &err), DPZ_OK);
    double complex eps;
    assert_int_equal(dpz_material_eps(m, 633 * NM, &eps, &err), DPZ_OK);
    assert_true(eps == -10.0 + 1.0 * I);
    assert_int_equal(dpz_material_eps(m, -1.0, &eps, &err), DPZ_EINVAL);
    char buf[64];
    dpz_material_describe(m, buf, sizeof buf);
    assert_string_equal(buf, "const -10+1i");
    dpz_material_destroy(m);
    dpz_material_destroy(NULL);
}

/* Linear interpolation of n and k, then eps = (n + ik)^2 (Bohren & Huffman 1983, 2.5):
 * at 450 nm, n = 1.6, k = 0.2, eps = 2.56 - 0.04 + 0.64i = 2.52 + 0.64i; at the end
 * point 400 nm, eps = (1.5 + 0.1i)^2 = 2.24 + 0.3i. */
static void test_material_table_interpolates(void **state)
{
    (void)state;
    const char *csv =
        "# test\nwavelength_nm,n,k\n400,1.5,0.1\n500,1.7,0.3\n\n600,1.9,0.0\n";
    dpz_material *m = NULL;
    dpz_err err;
    assert_int_equal(dpz_material_create_table(&m, csv, strlen(csv), "t.csv", &err),
                     DPZ_OK);
    double complex eps;
    assert_int_equal(dpz_material_eps(m, 450 * NM, &eps, &err), DPZ_OK);
    assert_cclose(eps, CMPLX(2.52, 0.64), 1e-14);
    assert_int_equal(dpz_material_eps(m, 400 * NM, &eps, &err), DPZ_OK);
    assert_cclose(eps, CMPLX(2.24, 0.3), 1e-14);
    assert_int_equal(dpz_material_eps(m, 600 * NM, &eps, &err), DPZ_OK);
    assert_cclose(eps, 3.61, 1e-14);
    /* 575 nm: n = 1.85, k = 0.075 -> eps = 3.4225 - 0.005625 + 0.2775i. */
    assert_int_equal(dpz_material_eps(m, 575 * NM, &eps, &err), DPZ_OK);
    assert_cclose(eps, CMPLX(3.416875, 0.2775), 1e-14);
    double lo, hi;
    dpz_material_range(m, &lo, &hi);
    assert_close(lo, 400 * NM, 1e-15);
    assert_close(hi, 600 * NM, 1e-15);
    char buf[128];
    dpz_material_describe(m, buf, sizeof buf);
    assert_string_equal(buf, "table n,k (3 rows, 400-600 nm) t.csv");
    dpz_material_destroy(m);
    /* eps columns in micrometres, interpolated directly; extra columns ignored. */
    const char *csv2 =
        "wavelength_um,note,eps_re,eps_im\r\n0.5,a,-4.0,0.5\r\n0.7,b,-8.0,1.5\r\n";
    assert_int_equal(dpz_material_create_table(&m, csv2, strlen(csv2), "e.csv", &err),
                     DPZ_OK);
    assert_int_equal(dpz_material_eps(m, 550 * NM, &eps, &err), DPZ_OK);
    assert_cclose(eps, CMPLX(-5.0, 0.75), 1e-14);
    dpz_material_destroy(m);
}

static void test_material_table_refuses_out_of_range(void **state)
{
    (void)state;
    const char *csv = "wavelength_nm,n,k\n400,1.5,0.1\n500,1.7,0.3\n";
    dpz_material *m = NULL;
    dpz_err err;
    assert_int_equal(dpz_material_create_table(&m, csv, strlen(csv), "r.csv", &err),
                     DPZ_OK);
    double complex eps = 2.385;
    assert_int_equal(dpz_material_eps(m, 399.9 * NM, &eps, &err), DPZ_ERANGE);
    assert_non_null(strstr(err.msg, "r.csv"));
    assert_non_null(strstr(err.msg, "399.9 nm"));
    assert_non_null(strstr(err.msg, "400 to 500 nm"));
    assert_int_equal(dpz_material_eps(m, 500.1 * NM, &eps, &err), DPZ_ERANGE);
    assert_true(eps == 2.385); /* untouched on failure */
    dpz_material_destroy(m);
}

/* Finite table values and model parameters whose permittivity overflows are refused at
 * evaluation (found by fuzzing: k = 3e174 gave eps = -inf with DPZ_OK). */
static void test_material_eps_overflow_refused(void **state)
{
    (void)state;
    const char *csv = "wavelength_nm,n,k\n400,1.5,0\n500,1.5,3.3e174\n";
    dpz_material *m = NULL;
    dpz_err err;
    assert_int_equal(dpz_material_create_table(&m, csv, strlen(csv), "o.csv", &err),
                     DPZ_OK);
    double complex eps = 2.385;
    assert_int_equal(dpz_material_eps(m, 401.0 * NM, &eps, &err), DPZ_ERANGE);
    assert_non_null(strstr(err.msg, "o.csv"));
    assert_non_null(strstr(err.msg, "not finite"));
    assert_true(eps == 2.385); /* untouched on failure */
    /* At 400 nm exactly the row's own finite value is used: 1.5^2 = 2.25. */
    assert_int_equal(dpz_material_eps(m, 400.0 * NM, &eps, &err), DPZ_OK);
    assert_close(creal(eps), 2.25, 4 * DBL_EPSILON);
    dpz_material_destroy(m);
    dpz_drude_params p = {.eps_inf = 1.0, .plasma_ev = 1e300, .damping_ev = 0.1};
    assert_int_equal(dpz_material_create_drude(&m, &p, &err), DPZ_OK);
    eps = 2.385;
    assert_int_equal(dpz_material_eps(m, 633.0 * NM, &eps, &err), DPZ_ERANGE);
    assert_true(eps == 2.385);
    dpz_material_destroy(m);
}

/* Each malformed table is refused with the file name, the line and what is wrong. */
static void expect_bad(const char *csv, int line, const char *what)
{
    dpz_material *m = NULL;
    dpz_err err;
    dpz_status st = dpz_material_create_table(&m, csv, strlen(csv), "bad.csv", &err);
    assert_int_equal(st, DPZ_EFORMAT);
    assert_null(m);
    assert_non_null(strstr(err.msg, "bad.csv"));
    if (line > 0) {
        char tag[32];
        snprintf(tag, sizeof tag, "line %d:", line);
        if (!strstr(err.msg, tag))
            fail_msg("message '%s' lacks '%s'", err.msg, tag);
    }
    if (!strstr(err.msg, what))
        fail_msg("message '%s' lacks '%s'", err.msg, what);
}

static void test_material_table_rejects_bad_input(void **state)
{
    (void)state;
    expect_bad("wavelength_nm,n,k\n400,nan,0.1\n500,1.7,0.3\n", 2, "not a finite number");
    expect_bad("wavelength_nm,n,k\n400,1.5,0.1\n500,1.7,inf\n", 3, "not a finite number");
    expect_bad("wavelength_nm,n,k\n500,1.5,0.1\n400,1.7,0.3\n", 3, "strictly increasing");
    expect_bad("wavelength_nm,n,k\n400,1.5,0.1\n400,1.7,0.3\n", 3, "duplicates");
    expect_bad("wavelength_nm,n\n400,1.5\n500,1.7\n", 1, "n,k or eps_re,eps_im");
    expect_bad("lambda,n,k\n400,1.5,0.1\n500,1.7,0.3\n", 1, "no wavelength column");
    expect_bad("wavelength_nm,n,k\n400,1.5,-0.1\n500,1.7,0.3\n", 2, "negative k");
    expect_bad("wavelength_nm,eps_re,eps_im\n400,2,0\n500,2,-1e-3\n", 3,
               "negative eps_im");
    expect_bad("wavelength_nm,n,k\n400,1.5\n500,1.7,0.3\n", 2,
               "2 fields, the header has 3");
    expect_bad("wavelength_nm,n,k\n400,1.5x,0.1\n500,1.7,0.3\n", 2, "'1.5x'");
    expect_bad("wavelength_nm,n,k\n-400,1.5,0.1\n500,1.7,0.3\n", 2, "positive");
    expect_bad("wavelength_nm,n,k\n400,1.5,0.1\n", 0, "at least two");
    expect_bad("# only a comment\n", 0, "no header");
    expect_bad("", 0, "no header");
}

static void test_material_table_file(void **state)
{
    (void)state;
    dpz_material *m = NULL;
    dpz_err err;
    const char *path = dpz_test_path("tests/data/solver/nk_demo.csv");
    assert_int_equal(dpz_material_create_table_file(&m, path, &err), DPZ_OK);
    double complex eps;
    /* 0.45 um: n = 1.6, k = 0.2 -> 2.52 + 0.64i (as above). */
    assert_int_equal(dpz_material_eps(m, 450 * NM, &eps, &err), DPZ_OK);
    assert_cclose(eps, CMPLX(2.52, 0.64), 1e-14);
    dpz_material_destroy(m);
    assert_int_equal(dpz_material_create_table_file(
                         &m, dpz_test_path("tests/data/solver/missing.csv"), &err),
                     DPZ_EIO);
    assert_non_null(strstr(err.msg, "missing.csv"));
}

static void test_material_allocation_failure(void **state)
{
    (void)state;
    const char *csv = "wavelength_nm,n,k\n400,1.5,0.1\n500,1.7,0.3\n";
    int failures = 0;
    for (long n = 0;; n++) {
        dpz_material *m = NULL;
        dpz_err err;
        dpz_alloc_fail_after(n);
        dpz_status st = dpz_material_create_table(&m, csv, strlen(csv), "a.csv", &err);
        dpz_alloc_fail_after(-1);
        if (st == DPZ_OK) {
            dpz_material_destroy(m);
            break;
        }
        assert_int_equal(st, DPZ_ENOMEM);
        assert_null(m);
        failures++;
    }
    assert_int_equal(failures, 5);
    dpz_material *m = NULL;
    dpz_drude_params p = demo_drude();
    dpz_alloc_fail_after(0);
    assert_int_equal(dpz_material_create_drude(&m, &p, NULL), DPZ_ENOMEM);
    dpz_alloc_fail_after(0);
    assert_int_equal(dpz_material_create_const(&m, 2.25, NULL), DPZ_ENOMEM);
    dpz_alloc_fail_after(-1);
    assert_null(m);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_material_drude_lorentz_by_hand),
        cmocka_unit_test(test_material_drude_rejects_bad_params),
        cmocka_unit_test(test_material_const),
        cmocka_unit_test(test_material_table_interpolates),
        cmocka_unit_test(test_material_table_refuses_out_of_range),
        cmocka_unit_test(test_material_eps_overflow_refused),
        cmocka_unit_test(test_material_table_rejects_bad_input),
        cmocka_unit_test(test_material_table_file),
        cmocka_unit_test(test_material_allocation_failure),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
