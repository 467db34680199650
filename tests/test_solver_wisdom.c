/* test_solver_wisdom.c: FFTW wisdom files: a missing file is no error, a saved file loads
 * back, operators planned with FFTW_MEASURE from loaded wisdom reproduce the first
 * operator's product bit for bit (the point of saving wisdom: the same plans), and bad
 * files and unwritable paths are refused without leftovers. */
#include <complex.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <fftw3.h>

#include "dpz_test.h"

#include "dpz_grid.h"
#include "dpz_operator.h"
#include "dpz_wisdom.h"

#define SPACING 2.385e-8 /* m */

static void tmp_path(char *buf, size_t len, const char *name)
{
    snprintf(buf, len, "/tmp/dpz_wisdom_test_%ld_%s", (long)getpid(), name);
}

static void test_wisdom_missing_file_is_not_an_error(void **state)
{
    (void)state;
    char path[256];
    tmp_path(path, sizeof path, "absent");
    remove(path);
    int loaded = 7;
    dpz_err err;
    assert_int_equal(dpz_wisdom_load(path, &loaded, &err), DPZ_OK);
    assert_int_equal(loaded, 0);
    assert_int_equal(dpz_wisdom_load(NULL, &loaded, &err), DPZ_EINVAL);
}

/* Products of an operator of a 5 x 4 x 6 block (partly filled) planned with
 * FFTW_MEASURE. */
static void measured_product(double complex *y, size_t *n_out)
{
    dpz_grid *g = NULL;
    dpz_err err;
    assert_int_equal(dpz_grid_create(&g, 5, 4, 6, SPACING, 0, &err), DPZ_OK);
    for (size_t i = 0; i < 5 * 4 * 6; i++)
        g->label[i] = (uint8_t)(i % 3 != 1);
    assert_int_equal(dpz_grid_update(g, &err), DPZ_OK);
    size_t n = 3 * g->n_occ;
    double complex *ia = malloc(g->n_occ * sizeof *ia), *x = malloc(n * sizeof *x);
    double complex eps[256];
    for (int i = 0; i < 256; i++)
        eps[i] = 2.25 + 0.1 * I;
    double k = 0.31 / SPACING;
    assert_int_equal(dpz_operator_inv_alpha(g, eps, 1.0, k, DPZ_DIPOLE_CMRR, ia, &err),
                     DPZ_OK);
    uint64_t seed = 2385;
    for (size_t i = 0; i < n; i++)
        x[i] = CMPLX(dpz_test_rand(&seed), dpz_test_rand(&seed));
    dpz_op_opts o = {1, DPZ_PLAN_MEASURE, DPZ_SIMD_AUTO};
    dpz_fftop *op = NULL;
    assert_int_equal(dpz_fftop_create(&op, g, k, DPZ_DIPOLE_CMRR, ia, &o, &err), DPZ_OK);
    assert_int_equal(dpz_fftop_apply(op, x, y, &err), DPZ_OK);
    *n_out = n;
    dpz_fftop_destroy(op);
    free(ia);
    free(x);
    dpz_grid_destroy(g);
}

static void test_wisdom_roundtrip_reproduces_measured_plans(void **state)
{
    (void)state;
    char path[256];
    tmp_path(path, sizeof path, "saved");
    fftw_forget_wisdom();
    double complex y1[3 * 120], y2[3 * 120];
    size_t n1 = 0, n2 = 0;
    measured_product(y1, &n1);
    dpz_err err;
    assert_int_equal(dpz_wisdom_save(path, &err), DPZ_OK);
    FILE *f = fopen(path, "r");
    assert_non_null(f);
    char head[16] = {0};
    assert_true(fread(head, 1, 6, f) == 6);
    fclose(f);
    /* FFTW 3 wisdom is an s-expression starting "(fftw-3" (FFTW manual, wisdom format).
     */
    assert_memory_equal(head, "(fftw-", 6);
    fftw_forget_wisdom();
    int loaded = 0;
    assert_int_equal(dpz_wisdom_load(path, &loaded, &err), DPZ_OK);
    assert_int_equal(loaded, 1);
    measured_product(y2, &n2);
    assert_int_equal(n1, n2);
    assert_memory_equal(y1, y2, n1 * sizeof y1[0]);
    remove(path);
    fftw_forget_wisdom();
}

static void test_wisdom_rejects_bad_files(void **state)
{
    (void)state;
    char path[256];
    tmp_path(path, sizeof path, "garbage");
    FILE *f = fopen(path, "w");
    assert_non_null(f);
    fputs("not wisdom at all\n", f);
    fclose(f);
    int loaded = 1;
    dpz_err err;
    assert_int_equal(dpz_wisdom_load(path, &loaded, &err), DPZ_EFORMAT);
    assert_int_equal(loaded, 0);
    assert_non_null(strstr(err.msg, path));
    remove(path);
    /* A directory that does not exist: refused, and no temporary file appears. */
    assert_int_equal(dpz_wisdom_save("/nonexistent-dir-dpz/w.fftw", &err), DPZ_EIO);
    assert_non_null(strstr(err.msg, "/nonexistent-dir-dpz/"));
    assert_int_equal(dpz_wisdom_save(NULL, &err), DPZ_EINVAL);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_wisdom_missing_file_is_not_an_error),
        cmocka_unit_test(test_wisdom_roundtrip_reproduces_measured_plans),
        cmocka_unit_test(test_wisdom_rejects_bad_files),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
