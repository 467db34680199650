/* test_cli_refine.c: --refine support of the program (cli/refine.c): the ladder of finer
 * lattices and the linear extrapolation to zero spacing. References: a straight line is
 * reproduced exactly by a least-squares line fit (any textbook on linear regression);
 * splitting voxels keeps the occupied volume and centroid (geometry by hand); the sphere
 * volume 4 pi r^3 / 3. */
#include "cli_int.h"

#include <float.h>
#include <math.h>
#include <string.h>

#include "dpz_test.h"

/* A handful of additions and one division per coefficient. */
#define TOL_FIT (64 * DBL_EPSILON)

static int t_run(const cli_args *a)
{
    (void)a;
    return CLI_OK;
}
static const cli_cmd t_cmd = {
    .name = "probe",
    .usage = "FILE",
    .summary = "test",
    .example = "dipolize probe x.vtk",
    .min_pos = 1,
    .max_pos = 1,
    .groups = {&cli_group_geometry, NULL},
    .run = t_run,
};

static void parse(cli_args *a, int argc, const char **argv)
{
    int help;
    assert_int_equal(cli_parse(&t_cmd, argc, (char **)argv, 0, a, &help), CLI_OK);
}

static void test_refine_extrapolate_line(void **state)
{
    (void)state;
    /* v(d) = (2.385 - 0.71 i) + (1.7e9 + 0.3e9 i) d, exactly linear: the fit returns the
     * intercept; with three levels the model spread, standard error and residual are at
     * rounding level, so the estimate is the extrapolation step from the finest level,
     * 1.7e9 * 1e-9 = 1.7 (real part) and 0.3 (imaginary part). */
    const double d[3] = {2e-9, 4.0 / 3.0 * 1e-9, 1e-9};
    double complex v[3 * 2], out[2], err[2];
    for (int k = 0; k < 3; k++) {
        v[2 * k] = CMPLX(2.385, -0.71) + CMPLX(1.7e9, 0.3e9) * d[k];
        v[2 * k + 1] = CMPLX(-4.2, 0.0) - 2.0e8 * d[k];
    }
    assert_int_equal(cli_extrapolate(3, d, v, 2, out, err), CLI_OK);
    assert_cclose(out[0], CMPLX(2.385, -0.71), TOL_FIT);
    assert_cclose(out[1], CMPLX(-4.2, 0.0), TOL_FIT);
    assert_close(creal(err[0]), 1.7, 1e-9);
    assert_close(cimag(err[0]), 0.3, 1e-9);
    /* Two levels: the line through both points; the error is the extrapolation step from
     * the finest level, 1.7e9 * 1e-9 = 1.7 (real part) and 0.3 (imaginary part). */
    assert_int_equal(cli_extrapolate(2, d + 1, v + 2, 2, out, err), CLI_OK);
    assert_cclose(out[0], CMPLX(2.385, -0.71), TOL_FIT);
    assert_close(creal(err[0]), 1.7, 1e-9);
    assert_close(cimag(err[0]), 0.3, 1e-9);
}

static void test_refine_extrapolate_residual(void **state)
{
    (void)state;
    /* Values 1.0, 0.5, 1.0 at d = 3, 2, 1 (worked by hand): the line is flat at 5/6 with
     * residuals 1/6, -1/3, 1/6; the parabola through the points is 0.5 + 0.5 (d - 2)^2,
     * 2.5 at d = 0; the standard error of the intercept is sqrt(s^2 (1/3 + 4/2)) with
     * s^2 = (1/6) / 1, i.e. sqrt(7/18). Error = |5/6 - 5/2| + 2 sqrt(7/18) + 1/3. */
    const double d[3] = {3.0, 2.0, 1.0};
    const double complex v[3] = {1.0, 0.5, 1.0};
    double complex out, err;
    assert_int_equal(cli_extrapolate(3, d, v, 1, &out, &err), CLI_OK);
    assert_close(creal(out), 5.0 / 6.0, TOL_FIT);
    assert_close(creal(err), 5.0 / 3.0 + 2.0 * sqrt(7.0 / 18.0) + 1.0 / 3.0, 1e-12);
    assert_close_abs(cimag(err), 0.0, 0.0, 1e-300);
    /* Repeated spacings are refused. */
    const double dup[2] = {1.0, 1.0};
    assert_int_equal(cli_extrapolate(2, dup, v, 1, &out, &err), CLI_USAGE);
}

static void test_refine_split_voxels(void **state)
{
    (void)state;
    /* An L-shaped plain voxel set of three voxels, 2.385 nm, labels 1, 1, 2. */
    dpz_grid *g = NULL;
    assert_int_equal(dpz_grid_create(&g, 2, 2, 1, 2.385e-9, 0, NULL), DPZ_OK);
    g->label[dpz_grid_index(g, 0, 0, 0)] = 1;
    g->label[dpz_grid_index(g, 1, 0, 0)] = 1;
    g->label[dpz_grid_index(g, 0, 1, 0)] = 2;
    assert_int_equal(dpz_grid_update(g, NULL), DPZ_OK);
    cli_args a;
    const char *argv[] = {"l.vtk"};
    parse(&a, 1, argv);
    cli_refine r;
    assert_int_equal(cli_refine_build(&a, g, 3, &r), CLI_OK);
    assert_string_equal(r.how, "split voxels");
    assert_int_equal(r.grid[0]->n_occ, g->n_occ); /* level 0 is a copy */
    double c0[3];
    dpz_grid_centroid(g, c0);
    for (size_t k = 1; k < 3; k++) {
        size_t m = k + 1, counts[256];
        assert_close(r.d[k], 2.385e-9 / (double)m, TOL_FIT);
        assert_int_equal(r.grid[k]->n_occ, 3 * m * m * m);
        dpz_grid_label_counts(r.grid[k], counts);
        assert_int_equal(counts[1], 2 * m * m * m);
        assert_int_equal(counts[2], m * m * m);
        assert_close(dpz_grid_volume(r.grid[k]), dpz_grid_volume(g), TOL_FIT);
        double c[3];
        dpz_grid_centroid(r.grid[k], c);
        for (int i = 0; i < 3; i++)
            assert_close_abs(c[i], c0[i], TOL_FIT,
                             2.385e-9); /* relative to the spacing */
    }
    assert_close(r.v_true, dpz_grid_volume(g), 0.0);
    cli_refine_free(&r);
    dpz_grid_destroy(g);
}

static void test_refine_shape_ladder(void **state)
{
    (void)state;
    dpz_shape s;
    dpz_shape_init(&s, DPZ_SHAPE_SPHERE);
    s.radius = 6e-9;
    dpz_grid *g = NULL;
    assert_int_equal(dpz_shape_voxelize(&g, &s, 2e-9, 0, 1, 0, NULL), DPZ_OK);
    cli_args a;
    const char *argv[] = {"s.vtk"};
    parse(&a, 1, argv);
    cli_refine r;
    assert_int_equal(cli_refine_build(&a, g, 3, &r), CLI_OK);
    assert_string_equal(r.how, "re-voxelized shape");
    assert_string_equal(r.v_source, "shape formula");
    /* d / (1 + k/2) */
    assert_close(r.d[1], 2e-9 / 1.5, TOL_FIT);
    assert_close(r.d[2], 1e-9, TOL_FIT);
    assert_close(r.v_true, 4.0 * 3.14159265358979323846 * 216e-27 / 3.0, 4 * DBL_EPSILON);
    assert_true(r.grid[1]->n_occ > g->n_occ && r.grid[2]->n_occ > r.grid[1]->n_occ);
    cli_refine_free(&r);
    /* A voxel limit the finer levels exceed is refused with the library's status. */
    const char *lim[] = {"s.vtk", "--max-voxels", "300"};
    parse(&a, 3, lim);
    assert_int_equal(cli_refine_build(&a, g, 3, &r), CLI_USAGE);
    dpz_grid_destroy(g);
}

static void test_refine_option(void **state)
{
    (void)state;
    static const cli_opt opts[] = {{"--refine", "N", "levels", 0}, {NULL, NULL, NULL, 0}};
    static const cli_group grp = {"Refine", opts};
    cli_cmd cmd = t_cmd;
    cmd.groups[0] = &grp;
    cmd.groups[1] = NULL;
    cli_args a;
    int help;
    size_t n;
    const char *none[] = {"s.vtk"};
    assert_int_equal(cli_parse(&cmd, 1, (char **)none, 0, &a, &help), CLI_OK);
    assert_int_equal(cli_refine_option(&a, &n), CLI_OK);
    assert_int_equal(n, 0);
    const char *three[] = {"s.vtk", "--refine", "3"};
    assert_int_equal(cli_parse(&cmd, 3, (char **)three, 0, &a, &help), CLI_OK);
    assert_int_equal(cli_refine_option(&a, &n), CLI_OK);
    assert_int_equal(n, 3);
    const char *bad[][3] = {{"s.vtk", "--refine", "1"},
                            {"s.vtk", "--refine", "5"},
                            {"s.vtk", "--refine", "x"}};
    for (int i = 0; i < 3; i++) {
        assert_int_equal(cli_parse(&cmd, 3, (char **)bad[i], 0, &a, &help), CLI_OK);
        assert_int_equal(cli_refine_option(&a, &n), CLI_USAGE);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_refine_extrapolate_line),
        cmocka_unit_test(test_refine_extrapolate_residual),
        cmocka_unit_test(test_refine_split_voxels),
        cmocka_unit_test(test_refine_shape_ladder),
        cmocka_unit_test(test_refine_option),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
