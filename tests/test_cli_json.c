/* test_cli_json.c: the JSON output helpers of the program (cli/json_out.c): complex
 * numbers as [re, im], 3x3 tensors as 3 rows of 3 pairs, blocks of the 6x6 tensor, and
 * full precision (every double printed reads back to the same double: cJSON prints %.15g
 * and falls back to %.17g, which round-trips IEEE doubles; IEEE 754-2008, sect. 5.12.2).
 */
#include "cli_int.h"

#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dpz_test.h"

/* Prints `o` and parses the text back (both freed by the caller through cJSON). */
static cJSON *round_trip(cJSON *o)
{
    char *text = cJSON_PrintUnformatted(o);
    assert_non_null(text);
    cJSON *back = cJSON_Parse(text);
    cJSON_free(text);
    assert_non_null(back);
    return back;
}

static double num(const cJSON *o)
{
    assert_true(cJSON_IsNumber(o));
    return o->valuedouble;
}

static void test_json_tensor_layout_and_precision(void **state)
{
    (void)state;
    double complex t[3][3];
    uint64_t seed = 2385;
    for (int r = 0; r < 3; r++)
        for (int c = 0; c < 3; c++)
            t[r][c] =
                CMPLX(dpz_test_rand(&seed) * 1e-22 / 3.0, dpz_test_rand(&seed) / 7.0);
    t[1][2] = CMPLX(0.1 + 0.2, -1.0 / 3.0); /* needs 17 digits */
    cJSON *o = cJSON_CreateObject();
    cJSON_AddItemToObject(o, "chi", cli_json_tensor3(t));
    cJSON *back = round_trip(o);
    const cJSON *chi = cJSON_GetObjectItemCaseSensitive(back, "chi");
    assert_int_equal(cJSON_GetArraySize(chi), 3);
    for (int r = 0; r < 3; r++) {
        const cJSON *row = cJSON_GetArrayItem(chi, r);
        assert_int_equal(cJSON_GetArraySize(row), 3);
        for (int c = 0; c < 3; c++) {
            const cJSON *pair = cJSON_GetArrayItem(row, c);
            assert_int_equal(cJSON_GetArraySize(pair), 2);
            /* Exact equality: the printed text must read back bit for bit. */
            assert_true(num(cJSON_GetArrayItem(pair, 0)) == creal(t[r][c]));
            assert_true(num(cJSON_GetArrayItem(pair, 1)) == cimag(t[r][c]));
        }
    }
    cJSON_Delete(o);
    cJSON_Delete(back);
}

static void test_json_blocks_of_6x6(void **state)
{
    (void)state;
    /* A[i][j] = (i + 1) + (j + 1) i / 10: the em block (rows 0-2, columns 3-5) starts
     * with 1 + 0.4 i, the me block (rows 3-5, columns 0-2) with 4 + 0.1 i. */
    double complex A[6][6];
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++)
            A[i][j] = CMPLX(i + 1.0, (j + 1.0) / 10.0);
    cJSON *o = cJSON_CreateObject();
    cJSON_AddItemToObject(o, "em", cli_json_block(A, 0, 3));
    cJSON_AddItemToObject(o, "me", cli_json_block(A, 3, 0));
    cJSON *back = round_trip(o);
    const cJSON *em = cJSON_GetObjectItemCaseSensitive(back, "em");
    const cJSON *me = cJSON_GetObjectItemCaseSensitive(back, "me");
    const cJSON *p = cJSON_GetArrayItem(cJSON_GetArrayItem(em, 0), 0);
    assert_true(num(cJSON_GetArrayItem(p, 0)) == 1.0);
    assert_true(num(cJSON_GetArrayItem(p, 1)) == 0.4);
    p = cJSON_GetArrayItem(cJSON_GetArrayItem(me, 2), 1);
    assert_true(num(cJSON_GetArrayItem(p, 0)) == 6.0);
    assert_true(num(cJSON_GetArrayItem(p, 1)) == 0.2);
    cJSON_Delete(o);
    cJSON_Delete(back);
}

static void test_json_numbers(void **state)
{
    (void)state;
    /* NaN and infinities have no JSON form: they are written as null. Integers print
     * without a fraction. */
    cJSON *o = cJSON_CreateObject();
    cli_json_add_number(o, "nan", NAN);
    cli_json_add_number(o, "inf", -INFINITY);
    cli_json_add_number(o, "count", 2385.0);
    cli_json_add_number(o, "tiny", 4.9406564584124654e-324); /* smallest subnormal */
    char *text = cJSON_PrintUnformatted(o);
    assert_string_equal(
        text,
        "{\"nan\":null,\"inf\":null,\"count\":2385,\"tiny\":4.94065645841247e-324}");
    cJSON_free(text);
    cJSON *back = round_trip(o);
    assert_true(num(cJSON_GetObjectItemCaseSensitive(back, "tiny")) ==
                4.9406564584124654e-324);
    cJSON_Delete(o);
    cJSON_Delete(back);
}

static void test_json_grid_facts(void **state)
{
    (void)state;
    dpz_grid *g = NULL;
    assert_int_equal(dpz_grid_create(&g, 3, 2, 2, 2.385e-9, 0, NULL), DPZ_OK);
    g->label[0] = 1;
    g->label[5] = 1;
    g->label[7] = 2;
    assert_int_equal(dpz_grid_update(g, NULL), DPZ_OK);
    cJSON *o = cJSON_CreateObject();
    cli_json_grid_facts(o, g);
    cJSON *back = round_trip(o);
    /* V = 3 d^3; a_eq = (3 V / (4 pi))^(1/3) (definitions). */
    double V = 3.0 * 2.385e-9 * 2.385e-9 * 2.385e-9;
    assert_close(num(cJSON_GetObjectItemCaseSensitive(back, "voxels")), 3.0, 0.0);
    assert_close(num(cJSON_GetObjectItemCaseSensitive(back, "spacing_m")), 2.385e-9, 0.0);
    assert_close(num(cJSON_GetObjectItemCaseSensitive(back, "volume_m3")), V,
                 4 * DBL_EPSILON);
    assert_close(num(cJSON_GetObjectItemCaseSensitive(back, "a_eq_m")),
                 cbrt(3.0 * V / (4.0 * 3.14159265358979323846)), 8 * DBL_EPSILON);
    cJSON_Delete(o);
    cJSON_Delete(back);
    dpz_grid_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_json_tensor_layout_and_precision),
        cmocka_unit_test(test_json_blocks_of_6x6),
        cmocka_unit_test(test_json_numbers),
        cmocka_unit_test(test_json_grid_facts),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
