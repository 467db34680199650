/* test_mesh_refine_grid.c: splitting the voxels of a plain voxel set
 * (mesh/refine_grid.c). The checks are geometric identities: the split grid covers the
 * same points with the same labels, keeps the occupied volume and the centroid, and every
 * child centre lies inside its parent voxel. */
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "dpz_test.h"

#include "dpz_grid.h"
#include "dpz_refine_grid.h"

/* Sums of up to a few thousand positions: relative rounding well below 1e-12. */
static const double TIGHT = 1e-12;
static const double SPACING = 2.385e-9; /* m */

/* An irregular 3 x 4 x 5 voxel set with two labels and a hole, origin moved off centre.
 */
static dpz_grid *make_set(int with_fill)
{
    dpz_grid *g = NULL;
    dpz_err err;
    assert_int_equal(dpz_grid_create(&g, 3, 4, 5, SPACING, 0, &err), DPZ_OK);
    g->origin[0] += 0.37 * SPACING;
    g->origin[2] -= 1.21 * SPACING;
    for (size_t v = 0; v < 60; v++)
        g->label[v] = (uint8_t)((v * 7 + 3) % 5 == 0 ? 0 : 1 + (v % 3 == 0));
    if (with_fill) {
        g->fill = calloc(60, sizeof *g->fill);
        for (size_t v = 0; v < 60; v++)
            g->fill[v] = g->label[v] ? (float)(0.125 * (1 + v % 8)) : 0.0f;
    }
    g->source_kind = DPZ_SOURCE_VOXELS;
    strcpy(g->source, "");
    assert_int_equal(dpz_grid_update(g, &err), DPZ_OK);
    return g;
}

/* Label of the voxel containing point r (grid frame), -1 outside the grid. */
static int label_at(const dpz_grid *g, const double r[3])
{
    size_t n[3] = {g->nx, g->ny, g->nz}, ix[3];
    for (int c = 0; c < 3; c++) {
        double u = floor((r[c] - g->origin[c]) / g->d + 0.5);
        if (u < 0 || u >= (double)n[c])
            return -1;
        ix[c] = (size_t)u;
    }
    return g->label[dpz_grid_index(g, ix[0], ix[1], ix[2])];
}

static void test_refine_grid_split_same_body(void **state)
{
    (void)state;
    dpz_grid *g = make_set(0);
    for (size_t m = 1; m <= 3; m++) {
        dpz_grid *s = NULL;
        dpz_err err;
        assert_int_equal(dpz_refine_grid_split(&s, g, m, 0, &err), DPZ_OK);
        assert_int_equal(s->nx, 3 * m);
        assert_int_equal(s->ny, 4 * m);
        assert_int_equal(s->nz, 5 * m);
        assert_close(s->d, SPACING / (double)m, TIGHT);
        assert_int_equal(s->n_occ, g->n_occ * m * m * m);
        /* Same volume and, because children are spread symmetrically inside each parent,
         * the same centroid of occupied centres. */
        assert_close(dpz_grid_volume(s), dpz_grid_volume(g), TIGHT);
        double c0[3], c1[3];
        dpz_grid_centroid(g, c0);
        dpz_grid_centroid(s, c1);
        for (int c = 0; c < 3; c++)
            assert_close_abs(c1[c], c0[c], TIGHT, SPACING);
        /* Every child centre lies in a parent voxel of the same label. */
        for (size_t v = 0; v < s->nx * s->ny * s->nz; v++) {
            double r[3];
            dpz_grid_centre(s, v, r);
            assert_int_equal(label_at(g, r), s->label[v]);
        }
        assert_int_equal(s->source_kind, DPZ_SOURCE_VOXELS);
        assert_null(s->fill);
        dpz_grid_destroy(s);
    }
    dpz_grid_destroy(g);
}

static void test_refine_grid_split_keeps_fill_and_source(void **state)
{
    (void)state;
    dpz_grid *g = make_set(1);
    g->source_kind = DPZ_SOURCE_SHAPE;
    strcpy(g->source, "dipolize-shape v1 sphere radius=2.385e-08 euler=0,0,0 label=1");
    dpz_grid *s = NULL;
    dpz_err err;
    assert_int_equal(dpz_refine_grid_split(&s, g, 2, 0, &err), DPZ_OK);
    assert_non_null(s->fill);
    /* Volume with fractions: d^3 sum f is kept (Maxwell Garnett weights per child). */
    assert_close(dpz_grid_volume(s), dpz_grid_volume(g), TIGHT);
    assert_float_equal(s->fill[dpz_grid_index(s, 5, 7, 9)],
                       g->fill[dpz_grid_index(g, 2, 3, 4)], 0.0f);
    assert_int_equal(s->source_kind, DPZ_SOURCE_SHAPE);
    assert_string_equal(s->source, g->source);
    dpz_grid_destroy(s);
    dpz_grid_destroy(g);
}

static void test_refine_grid_split_rejects_bad_input(void **state)
{
    (void)state;
    dpz_grid *g = make_set(1);
    dpz_grid *s = (dpz_grid *)&s;
    dpz_err err;
    assert_int_equal(dpz_refine_grid_split(&s, g, 0, 0, &err), DPZ_EINVAL);
    assert_null(s);
    assert_int_equal(dpz_refine_grid_split(&s, NULL, 2, 0, &err), DPZ_EINVAL);
    assert_int_equal(dpz_refine_grid_split(NULL, g, 2, 0, &err), DPZ_EINVAL);
    /* 60 * 27 = 1620 cells exceed a limit of 1000. */
    assert_int_equal(dpz_refine_grid_split(&s, g, 3, 1000, &err), DPZ_ELIMIT);
    assert_null(s);
    /* A split factor whose cube overflows size_t. */
    assert_int_equal(dpz_refine_grid_split(&s, g, SIZE_MAX / 2, SIZE_MAX, &err),
                     DPZ_ELIMIT);
    assert_non_null(strstr(err.msg, "overflows"));
    /* Allocation failure at every allocation of the split, cleanly unwound. */
    for (int k = 0; k < 6; k++) {
        dpz_alloc_fail_after(k);
        dpz_status st = dpz_refine_grid_split(&s, g, 2, 0, &err);
        dpz_alloc_fail_after(-1);
        if (st == DPZ_OK) {
            dpz_grid_destroy(s);
            break;
        }
        assert_int_equal(st, DPZ_ENOMEM);
        assert_null(s);
    }
    dpz_grid_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_refine_grid_split_same_body),
        cmocka_unit_test(test_refine_grid_split_keeps_fill_and_source),
        cmocka_unit_test(test_refine_grid_split_rejects_bad_input),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
