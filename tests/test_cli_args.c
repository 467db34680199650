/* test_cli_args.c: the program's argument parser (cli/args.c), the solver options
 * (cli/cli.c) and the material set-up (cli/materials.c). Error paths print one
 * "dipolize: ..." line on stderr, which is expected here. */
#include "cli_int.h"

#include <float.h>
#include <math.h>
#include <string.h>

#include "dpz_test.h"

/* One decimal-to-double conversion and a few operations. */
#define TOL_PARSE (8 * DBL_EPSILON)

static const cli_opt t_opts[] = {
    {"--radius", "LEN", "a length", 0}, {"--material", "LABEL=SPEC", "repeatable", 1},
    {"--json", NULL, "a flag", 0},      {"--origin", "X,Y,Z", "three lengths", 0},
    {"-o", "FILE", "output", 0},        {NULL, NULL, NULL, 0},
};
static const cli_group t_group = {"Test", t_opts};
static int t_run(const cli_args *a)
{
    (void)a;
    return CLI_OK;
}
static const cli_cmd t_cmd = {
    .name = "probe",
    .usage = "FILE [options]",
    .summary = "test command",
    .example = "dipolize probe x.vtk",
    .min_pos = 1,
    .max_pos = 2,
    .groups = {&t_group, &cli_group_solver, &cli_group_materials, NULL},
    .run = t_run,
};

static int parse(cli_args *a, int *help, int argc, const char **argv)
{
    return cli_parse(&t_cmd, argc, (char **)argv, 0, a, help);
}

static void test_args_values_and_flags(void **state)
{
    (void)state;
    cli_args a;
    int help;
    const char *argv[] = {
        "g.vtk",  "--radius=2.385nm", "--material",   "1=2.25", "--material=2=4",
        "--json", "--origin",         "-1nm,0nm,2nm", "-o",     "out.vtk",
        "--",     "--odd-name"};
    assert_int_equal(parse(&a, &help, 12, argv), CLI_OK);
    assert_int_equal(help, 0);
    assert_int_equal(a.npos, 2);
    assert_string_equal(a.pos[0], "g.vtk");
    assert_string_equal(a.pos[1], "--odd-name"); /* after "--" everything is positional */
    assert_string_equal(cli_get(&a, "--radius"), "2.385nm");
    assert_int_equal(cli_count(&a, "--material"), 2);
    assert_string_equal(cli_value_at(&a, "--material", 0), "1=2.25");
    assert_string_equal(cli_value_at(&a, "--material", 1), "2=4");
    assert_null(cli_value_at(&a, "--material", 2));
    assert_true(cli_flag(&a, "--json"));
    assert_false(cli_flag(&a, "--tol"));
    assert_string_equal(cli_get(&a, "--origin"), "-1nm,0nm,2nm");
    assert_string_equal(cli_get(&a, "-o"), "out.vtk");
    assert_null(cli_get(&a, "--no-such-option"));
    const char *h[] = {"--radius", "1nm", "--help"};
    assert_int_equal(parse(&a, &help, 3, h), CLI_OK);
    assert_int_equal(help, 1);
}

static void test_args_errors(void **state)
{
    (void)state;
    cli_args a;
    int help;
    const char *unknown[] = {"g.vtk", "--radus", "2nm"};
    assert_int_equal(parse(&a, &help, 3, unknown), CLI_USAGE);
    const char *twice[] = {"g.vtk", "--radius", "2nm", "--radius", "3nm"};
    assert_int_equal(parse(&a, &help, 5, twice), CLI_USAGE);
    const char *novalue[] = {"g.vtk", "--radius"};
    assert_int_equal(parse(&a, &help, 2, novalue), CLI_USAGE);
    const char *flagvalue[] = {"g.vtk", "--json=yes"};
    assert_int_equal(parse(&a, &help, 2, flagvalue), CLI_USAGE);
    const char *nopos[] = {"--json"};
    assert_int_equal(parse(&a, &help, 1, nopos), CLI_USAGE);
    const char *toomany[] = {"a.vtk", "b.vtk", "c.vtk"};
    assert_int_equal(parse(&a, &help, 3, toomany), CLI_USAGE);
}

static void test_args_solver_options(void **state)
{
    (void)state;
    cli_args a;
    int help;
    dpz_setup s;
    const char *argv[] = {"g.vtk",  "--solver",   "cocg",          "--tol",
                          "2.5e-7", "--max-iter", "2385",          "--dipole-model",
                          "ldr",    "--origin",   "1nm,-2nm,0.5nm"};
    assert_int_equal(parse(&a, &help, 11, argv), CLI_OK);
    memset(&s, 0, sizeof s);
    assert_int_equal(cli_setup_options(&a, &s), CLI_OK);
    assert_int_equal(s.solve.kind, DPZ_SOLVER_COCG);
    assert_close(s.solve.tol, 2.5e-7, TOL_PARSE);
    assert_int_equal(s.solve.max_iter, 2385);
    assert_int_equal(s.model, DPZ_DIPOLE_LDR);
    assert_int_equal(s.has_origin, 1);
    assert_close(s.origin_m[1], -2e-9, TOL_PARSE);
    /* Defaults (dpz_iter.h): BiCGSTAB, 1e-8, 10000 iterations; cm-rr; one thread. */
    const char *none[] = {"g.vtk"};
    assert_int_equal(parse(&a, &help, 1, none), CLI_OK);
    assert_int_equal(cli_setup_options(&a, &s), CLI_OK);
    assert_int_equal(s.solve.kind, DPZ_SOLVER_BICGSTAB);
    assert_close(s.solve.tol, 1e-8, 0.0);
    assert_int_equal(s.model, DPZ_DIPOLE_CMRR);
    assert_int_equal(s.has_origin, 0);
    const char *bad[][3] = {
        {"g.vtk", "--tol", "0"},      {"g.vtk", "--tol", "1.5"},
        {"g.vtk", "--max-iter", "0"}, {"g.vtk", "--threads", "0"},
        {"g.vtk", "--solver", "cg"},  {"g.vtk", "--dipole-model", "x"},
        {"g.vtk", "--origin", "1nm"}};
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        assert_int_equal(parse(&a, &help, 3, bad[i]), CLI_OK);
        assert_int_equal(cli_setup_options(&a, &s), CLI_USAGE);
    }
}

/* A 3 x 1 x 1 grid with labels 1, 2, 1. */
static dpz_grid *two_label_grid(void)
{
    dpz_grid *g = NULL;
    assert_int_equal(dpz_grid_create(&g, 3, 1, 1, 2e-9, 0, NULL), DPZ_OK);
    g->label[0] = 1;
    g->label[1] = 2;
    g->label[2] = 1;
    assert_int_equal(dpz_grid_update(g, NULL), DPZ_OK);
    return g;
}

static void test_args_materials(void **state)
{
    (void)state;
    dpz_grid *g = two_label_grid();
    cli_args a;
    int help;
    cli_materials m;
    double complex eps[256];
    const char *good[] = {"g.vtk",
                          "--material",
                          "1=12.25+0.02i",
                          "--material",
                          "2=drude:eps_inf=9.5,wp=8.9eV,gamma=0.07eV",
                          "--host-index",
                          "1.45"};
    assert_int_equal(parse(&a, &help, 7, good), CLI_OK);
    assert_int_equal(cli_materials_load(&a, g, &m), CLI_OK);
    assert_int_equal(m.dispersive, 1);
    assert_close(m.host_index, 1.45, 0.0);
    assert_int_equal(cli_materials_eval(&m, g, 600e-9, eps), CLI_OK);
    assert_cclose(eps[1], CMPLX(12.25, 0.02), TOL_PARSE);
    /* Drude at 600 nm by hand: E = hc/lambda with hc = 1239.841984 eV nm (CODATA 2018),
     * eps = eps_inf - Ep^2 / (E (E + i gamma))  (Rakic et al. 1998, eq. 3). */
    double E = 1239.841984 / 600.0;
    double complex want = 9.5 - 8.9 * 8.9 / (E * (E + 0.07 * I));
    assert_cclose(eps[2], want, 1e-8);
    cli_materials_free(&m);

    /* --eps gives every label the same material. */
    const char *all[] = {"g.vtk", "--eps", "-10+1i"};
    assert_int_equal(parse(&a, &help, 3, all), CLI_OK);
    assert_int_equal(cli_materials_load(&a, g, &m), CLI_OK);
    assert_int_equal(m.dispersive, 0);
    assert_int_equal(cli_materials_eval(&m, g, 1e-6, eps), CLI_OK);
    assert_cclose(eps[1], CMPLX(-10.0, 1.0), 0.0);
    assert_cclose(eps[2], CMPLX(-10.0, 1.0), 0.0);
    cli_materials_free(&m);

    const char *missing[] = {"g.vtk", "--material", "1=2.25"};
    const char *absent[] = {"g.vtk", "--material", "1=2.25", "--material",
                            "2=4",   "--material", "7=4"};
    const char *both[] = {"g.vtk", "--eps", "2.25", "--material", "1=2.25"};
    const char *none[] = {"g.vtk"};
    const char *host[] = {"g.vtk", "--eps", "2.25", "--host-index", "0"};
    assert_int_equal(parse(&a, &help, 3, missing), CLI_OK);
    assert_int_equal(cli_materials_load(&a, g, &m), CLI_USAGE);
    assert_int_equal(parse(&a, &help, 7, absent), CLI_OK);
    assert_int_equal(cli_materials_load(&a, g, &m), CLI_USAGE);
    assert_int_equal(parse(&a, &help, 5, both), CLI_OK);
    assert_int_equal(cli_materials_load(&a, g, &m), CLI_USAGE);
    assert_int_equal(parse(&a, &help, 1, none), CLI_OK);
    assert_int_equal(cli_materials_load(&a, g, &m), CLI_USAGE);
    assert_int_equal(parse(&a, &help, 5, host), CLI_OK);
    assert_int_equal(cli_materials_load(&a, g, &m), CLI_USAGE);
    dpz_grid_destroy(g);
}

static void test_args_exit_codes(void **state)
{
    (void)state;
    /* Exit codes of the program: 1 computation failed, 2 bad input or usage. */
    assert_int_equal(cli_exit_code(DPZ_OK), CLI_OK);
    assert_int_equal(cli_exit_code(DPZ_ENOCONV), CLI_FAILED);
    assert_int_equal(cli_exit_code(DPZ_ESTAGNATION), CLI_FAILED);
    assert_int_equal(cli_exit_code(DPZ_ENOMEM), CLI_FAILED);
    assert_int_equal(cli_exit_code(DPZ_EFORMAT), CLI_USAGE);
    assert_int_equal(cli_exit_code(DPZ_EIO), CLI_USAGE);
    assert_int_equal(cli_exit_code(DPZ_ELIMIT), CLI_USAGE);
    dpz_err e;
    dpz_err_set(&e, DPZ_EBREAKDOWN, "bicgstab: rho = 0");
    assert_int_equal(cli_fail_err("test", &e), CLI_FAILED);
    dpz_err_set(&e, DPZ_EINVAL, "a bad value");
    assert_int_equal(cli_fail_err("test", &e), CLI_USAGE);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_args_values_and_flags),
        cmocka_unit_test(test_args_errors),
        cmocka_unit_test(test_args_solver_options),
        cmocka_unit_test(test_args_materials),
        cmocka_unit_test(test_args_exit_codes),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
