/* test_mesh_grid.c: the voxel grid (mesh/grid.c). */
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "dpz_test.h"

#include "dpz_grid.h"

/* Sums of a few doubles: a few ulps. */
static const double TIGHT = 16 * DBL_EPSILON;
static const double SPACING = 2.385e-9; /* m */

static void test_grid_create_centred(void **state)
{
    (void)state;
    dpz_grid *g = NULL;
    dpz_err err;
    assert_int_equal(dpz_grid_create(&g, 4, 5, 7, SPACING, 0, &err), DPZ_OK);
    assert_non_null(g);
    assert_int_equal(g->nx, 4);
    assert_int_equal(g->ny, 5);
    assert_int_equal(g->nz, 7);
    /* Centred on 0: first and last voxel centres are opposite. */
    assert_close(g->origin[0], -1.5 * SPACING, TIGHT);
    assert_close(g->origin[1], -2.0 * SPACING, TIGHT);
    assert_close(g->origin[2], -3.0 * SPACING, TIGHT);
    double r[3];
    dpz_grid_centre(g, dpz_grid_index(g, 3, 4, 6), r);
    assert_close(r[0], 1.5 * SPACING, TIGHT);
    assert_close(r[1], 2.0 * SPACING, TIGHT);
    assert_close(r[2], 3.0 * SPACING, TIGHT);
    for (size_t i = 0; i < 4 * 5 * 7; i++)
        assert_int_equal(g->label[i], 0);
    assert_null(g->fill);
    assert_int_equal(g->source_kind, DPZ_SOURCE_VOXELS);
    assert_string_equal(g->source, "");
    assert_true(dpz_grid_volume(g) == 0.0);
    dpz_grid_destroy(g);
    dpz_grid_destroy(NULL);
}

static void test_grid_create_rejects_bad_arguments(void **state)
{
    (void)state;
    dpz_grid *g = (dpz_grid *)&g; /* must be reset to NULL */
    dpz_err err;
    assert_int_equal(dpz_grid_create(&g, 0, 3, 3, SPACING, 0, &err), DPZ_EINVAL);
    assert_null(g);
    assert_non_null(strstr(err.msg, "dimensions"));
    assert_int_equal(dpz_grid_create(&g, 3, 3, 3, 0.0, 0, &err), DPZ_EINVAL);
    assert_int_equal(dpz_grid_create(&g, 3, 3, 3, -SPACING, 0, &err), DPZ_EINVAL);
    assert_int_equal(dpz_grid_create(&g, 3, 3, 3, NAN, 0, &err), DPZ_EINVAL);
    assert_int_equal(dpz_grid_create(&g, 3, 3, 3, INFINITY, 0, &err), DPZ_EINVAL);
    assert_non_null(strstr(err.msg, "spacing"));
    /* Product overflowing size_t. */
    assert_int_equal(dpz_grid_create(&g, SIZE_MAX / 2, 3, 3, SPACING, SIZE_MAX, &err),
                     DPZ_ELIMIT);
    assert_non_null(strstr(err.msg, "overflow"));
    /* Above the caller's limit, and above the default limit. */
    assert_int_equal(dpz_grid_create(&g, 10, 10, 10, SPACING, 999, &err), DPZ_ELIMIT);
    assert_non_null(strstr(err.msg, "limit"));
    assert_int_equal(dpz_grid_create(&g, 1024, 1024, 257, SPACING, 0, &err), DPZ_ELIMIT);
    assert_null(g);
    assert_int_equal(dpz_grid_create(NULL, 3, 3, 3, SPACING, 0, &err), DPZ_EINVAL);
    /* Exactly at the limit is fine. */
    assert_int_equal(dpz_grid_create(&g, 10, 10, 10, SPACING, 1000, &err), DPZ_OK);
    dpz_grid_destroy(g);
}

/* An L-shaped test object with two labels. */
static dpz_grid *make_object(void)
{
    dpz_grid *g = NULL;
    assert_int_equal(dpz_grid_create(&g, 6, 5, 4, SPACING, 0, NULL), DPZ_OK);
    g->label[dpz_grid_index(g, 1, 1, 1)] = 1;
    g->label[dpz_grid_index(g, 2, 1, 1)] = 1;
    g->label[dpz_grid_index(g, 3, 1, 1)] = 2;
    g->label[dpz_grid_index(g, 3, 3, 2)] = 7;
    assert_int_equal(dpz_grid_update(g, NULL), DPZ_OK);
    return g;
}

static void test_grid_update_volume_aeq_centroid(void **state)
{
    (void)state;
    dpz_grid *g = make_object();
    assert_int_equal(g->n_occ, 4);
    /* Ascending linear indices. */
    for (size_t m = 1; m < g->n_occ; m++)
        assert_true(g->occ[m - 1] < g->occ[m]);
    assert_int_equal(g->occ[0], dpz_grid_index(g, 1, 1, 1));
    double v1 = SPACING * SPACING * SPACING;
    assert_close(dpz_grid_volume(g), 4.0 * v1, TIGHT);
    /* a_eq from V = 4 pi a^3 / 3 (definition of the equal-volume radius). */
    assert_close(dpz_grid_aeq(g), cbrt(3.0 * 4.0 * v1 / (4.0 * 3.14159265358979323846)),
                 TIGHT);
    double c[3];
    dpz_grid_centroid(g, c);
    /* Mean index by hand: i (1+2+3+3)/4 = 2.25, j (1+1+1+3)/4 = 1.5, k (1+1+1+2)/4
     * = 1.25. */
    assert_close(c[0], g->origin[0] + 2.25 * SPACING, TIGHT);
    assert_close(c[1], g->origin[1] + 1.5 * SPACING, TIGHT);
    assert_close(c[2], g->origin[2] + 1.25 * SPACING, TIGHT);
    size_t counts[256];
    dpz_grid_label_counts(g, counts);
    assert_int_equal(counts[0], 6 * 5 * 4 - 4);
    assert_int_equal(counts[1], 2);
    assert_int_equal(counts[2], 1);
    assert_int_equal(counts[7], 1);
    assert_int_equal(counts[3], 0);
    dpz_grid_destroy(g);
}

static void test_grid_volume_fill_weighted(void **state)
{
    (void)state;
    dpz_grid *g = make_object();
    size_t n = g->nx * g->ny * g->nz;
    g->fill = calloc(n, sizeof *g->fill);
    assert_non_null(g->fill);
    for (size_t i = 0; i < n; i++)
        g->fill[i] = 0.375f; /* host voxels must not count */
    g->fill[dpz_grid_index(g, 1, 1, 1)] = 1.0f;
    g->fill[dpz_grid_index(g, 2, 1, 1)] = 0.5f;
    g->fill[dpz_grid_index(g, 3, 1, 1)] = 0.25f;
    g->fill[dpz_grid_index(g, 3, 3, 2)] = 0.125f;
    double v1 = SPACING * SPACING * SPACING;
    assert_close(dpz_grid_volume(g), 1.875 * v1, TIGHT);
    dpz_grid_destroy(g);
}

static void test_grid_empty_centroid_is_zero(void **state)
{
    (void)state;
    dpz_grid *g = NULL;
    assert_int_equal(dpz_grid_create(&g, 3, 3, 3, SPACING, 0, NULL), DPZ_OK);
    double c[3] = {1, 1, 1};
    dpz_grid_centroid(g, c);
    assert_true(c[0] == 0.0 && c[1] == 0.0 && c[2] == 0.0);
    assert_true(dpz_grid_aeq(g) == 0.0);
    dpz_err err;
    dpz_grid *cropped = NULL;
    assert_int_equal(dpz_grid_crop(&cropped, g, &err), DPZ_EINVAL);
    assert_null(cropped);
    dpz_grid_destroy(g);
}

static void test_grid_clone_is_deep(void **state)
{
    (void)state;
    dpz_grid *g = make_object();
    g->fill = calloc(g->nx * g->ny * g->nz, sizeof *g->fill);
    g->fill[5] = 0.75f;
    g->source_kind = DPZ_SOURCE_SHAPE;
    strcpy(g->source, "a record");
    g->origin[1] = 4.2e-9;
    dpz_grid *c = NULL;
    assert_int_equal(dpz_grid_clone(&c, g, NULL), DPZ_OK);
    assert_int_equal(c->n_occ, g->n_occ);
    assert_memory_equal(c->occ, g->occ, g->n_occ * sizeof *g->occ);
    assert_memory_equal(c->label, g->label, g->nx * g->ny * g->nz);
    assert_true(c->fill[5] == 0.75f);
    assert_true(c->origin[1] == 4.2e-9);
    assert_int_equal(c->source_kind, DPZ_SOURCE_SHAPE);
    assert_string_equal(c->source, "a record");
    assert_ptr_not_equal(c->label, g->label);
    c->label[0] = 9;
    assert_int_equal(g->label[0], 0);
    dpz_grid_destroy(c);
    dpz_grid_destroy(g);
}

static void test_grid_crop_keeps_positions(void **state)
{
    (void)state;
    dpz_grid *g = make_object();
    g->fill = calloc(g->nx * g->ny * g->nz, sizeof *g->fill);
    g->fill[dpz_grid_index(g, 3, 3, 2)] = 0.625f;
    dpz_grid *c = NULL;
    assert_int_equal(dpz_grid_crop(&c, g, NULL), DPZ_OK);
    assert_int_equal(c->nx, 3); /* i 1..3 */
    assert_int_equal(c->ny, 3); /* j 1..3 */
    assert_int_equal(c->nz, 2); /* k 1..2 */
    assert_int_equal(c->n_occ, 4);
    assert_int_equal(c->label[dpz_grid_index(c, 2, 2, 1)], 7);
    assert_true(c->fill[dpz_grid_index(c, 2, 2, 1)] == 0.625f);
    /* Every occupied voxel keeps its physical centre and label. */
    for (size_t m = 0; m < g->n_occ; m++) {
        double r[3];
        dpz_grid_centre(g, g->occ[m], r);
        double rc[3];
        dpz_grid_centre(c, c->occ[m], rc);
        for (int a = 0; a < 3; a++)
            assert_close_abs(rc[a], r[a], TIGHT, SPACING);
        assert_int_equal(c->label[c->occ[m]], g->label[g->occ[m]]);
    }
    double cg[3], cc[3];
    dpz_grid_centroid(g, cg);
    dpz_grid_centroid(c, cc);
    for (int a = 0; a < 3; a++)
        assert_close_abs(cc[a], cg[a], TIGHT, SPACING);
    assert_close(dpz_grid_volume(c), dpz_grid_volume(g), TIGHT);
    dpz_grid_destroy(c);
    dpz_grid_destroy(g);
}

static void test_grid_memory_need(void **state)
{
    (void)state;
    /* 10 x 20 x 30 voxels: one label byte and one size_t per voxel, plus 4 bytes of fill.
     */
    size_t n = 6000;
    size_t base = dpz_grid_memory_need(10, 20, 30, 0);
    assert_true(base >= n * (1 + sizeof(size_t)));
    assert_int_equal(dpz_grid_memory_need(10, 20, 30, 1) - base, n * sizeof(float));
    assert_int_equal(dpz_grid_memory_need(SIZE_MAX / 2, 4, 1, 0), 0);
    assert_int_equal(dpz_grid_memory_need((size_t)1 << 40, (size_t)1 << 30, 1, 0), 0);
}

static void test_grid_allocation_failure(void **state)
{
    (void)state;
    dpz_err err;
    /* Every allocation of create, update, clone and crop in turn. */
    for (long n = 0; n < 2; n++) {
        dpz_grid *g = NULL;
        dpz_alloc_fail_after(n);
        assert_int_equal(dpz_grid_create(&g, 3, 3, 3, SPACING, 0, &err), DPZ_ENOMEM);
        assert_int_equal(err.code, DPZ_ENOMEM);
        assert_null(g);
        dpz_alloc_fail_after(-1);
    }
    dpz_grid *g = make_object();
    g->fill = calloc(g->nx * g->ny * g->nz, sizeof *g->fill);
    size_t before = g->n_occ;
    dpz_alloc_fail_after(0);
    assert_int_equal(dpz_grid_update(g, &err), DPZ_ENOMEM);
    assert_int_equal(g->n_occ, before); /* old list intact */
    for (long n = 0; n < 4; n++) {
        dpz_grid *c = NULL;
        dpz_alloc_fail_after(n);
        assert_int_equal(dpz_grid_clone(&c, g, &err), DPZ_ENOMEM);
        assert_null(c);
        dpz_alloc_fail_after(n);
        assert_int_equal(dpz_grid_crop(&c, g, &err), DPZ_ENOMEM);
        assert_null(c);
    }
    dpz_alloc_fail_after(-1);
    dpz_grid_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_grid_create_centred),
        cmocka_unit_test(test_grid_create_rejects_bad_arguments),
        cmocka_unit_test(test_grid_update_volume_aeq_centroid),
        cmocka_unit_test(test_grid_volume_fill_weighted),
        cmocka_unit_test(test_grid_empty_centroid_is_zero),
        cmocka_unit_test(test_grid_clone_is_deep),
        cmocka_unit_test(test_grid_crop_keeps_positions),
        cmocka_unit_test(test_grid_memory_need),
        cmocka_unit_test(test_grid_allocation_failure),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
