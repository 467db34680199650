/* dpz_test.c: comparison helpers for the cmocka tests (see dpz_test.h). */
#include "dpz_test.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void dpz_test_close(const char *what, double got, double want, double rtol,
                    double floor_abs, const char *file, int line)
{
    double scale = fabs(want) > floor_abs ? fabs(want) : floor_abs;
    double diff = fabs(got - want);
    if (!(diff <= rtol * scale) && !(scale == 0.0 && diff == 0.0)) {
        print_error(
            "%s:%d: %s = %.17g, expected %.17g (relative difference %.3g > %.3g)\n", file,
            line, what, got, want, scale > 0 ? diff / scale : diff, rtol);
        _fail(file, line);
    }
}

void dpz_test_cclose(const char *what, double complex got, double complex want,
                     double rtol, double floor_abs, const char *file, int line)
{
    double scale = cabs(want) > floor_abs ? cabs(want) : floor_abs;
    double diff = cabs(got - want);
    if (!(diff <= rtol * scale) && !(scale == 0.0 && diff == 0.0)) {
        print_error(
            "%s:%d: %s = %.17g%+.17gi, expected %.17g%+.17gi (relative difference "
            "%.3g > %.3g)\n",
            file, line, what, creal(got), cimag(got), creal(want), cimag(want),
            scale > 0 ? diff / scale : diff, rtol);
        _fail(file, line);
    }
}

const char *dpz_test_path(const char *relative)
{
    static char buf[4096];
    const char *root = getenv("DPZ_SOURCE_DIR");
    snprintf(buf, sizeof buf, "%s/%s", root ? root : ".", relative);
    return buf;
}

double dpz_test_rand(uint64_t *state)
{
    uint64_t x = *state;
    x ^= x >> 12;
    x ^= x << 25;
    x ^= x >> 27;
    *state = x;
    return (double)((x * 2685821657736338717ULL) >> 11) / 4503599627370496.0 - 1.0;
}

dpz_setup dpz_test_setup(const dpz_grid *g, double complex eps, double tol)
{
    dpz_setup s;
    memset(&s, 0, sizeof s);
    s.grid = g;
    for (int l = 0; l < 256; l++)
        s.eps_label[l] = eps;
    s.host_index = 1.0;
    s.model = DPZ_DIPOLE_CMRR;
    s.solve = dpz_solve_opts_default();
    s.solve.kind = DPZ_SOLVER_COCG;
    s.solve.tol = tol;
    s.op.threads = 1;
    s.op.plan = DPZ_PLAN_ESTIMATE;
    return s;
}
