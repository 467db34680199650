/* dpz_test.h: helpers shared by the cmocka test programs.
 * cmocka 1.1.5's assert_float_equal compares in single precision; these compare doubles
 * with a relative tolerance and print both values on failure. */
#ifndef DPZ_TESTS_HELPERS_TEST_H
#define DPZ_TESTS_HELPERS_TEST_H

/* cmocka needs stdarg, stddef and setjmp before it. */
// clang-format off
#include <complex.h>
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>
// clang-format on

#include "dpz_extract.h"

/* Fails the running test unless |got - want| <= rtol * max(|want|, atol_floor).
 * `what` names the quantity in the failure message. */
void dpz_test_close(const char *what, double got, double want, double rtol,
                    double floor_abs, const char *file, int line);
void dpz_test_cclose(const char *what, double complex got, double complex want,
                     double rtol, double floor_abs, const char *file, int line);

#define assert_close(got, want, rtol)                                                    \
    dpz_test_close(#got, (got), (want), (rtol), 0.0, __FILE__, __LINE__)
#define assert_close_abs(got, want, rtol, floor_abs)                                     \
    dpz_test_close(#got, (got), (want), (rtol), (floor_abs), __FILE__, __LINE__)
#define assert_cclose(got, want, rtol)                                                   \
    dpz_test_cclose(#got, (got), (want), (rtol), 0.0, __FILE__, __LINE__)
#define assert_cclose_abs(got, want, rtol, floor_abs)                                    \
    dpz_test_cclose(#got, (got), (want), (rtol), (floor_abs), __FILE__, __LINE__)

/* Absolute path of a file below the source tree (DPZ_SOURCE_DIR from CTest, else "."),
 * written into a static buffer. */
const char *dpz_test_path(const char *relative);

/* Deterministic pseudo-random numbers (xorshift64*), uniform in [-1, 1). */
double dpz_test_rand(uint64_t *state);

/* The extraction set-up the extract tests share: every label of `g` at relative
 * permittivity eps in vacuum (host index 1), cm-rr dipoles, COCG (van der Vorst &
 * Melissen 1990: it exploits the complex symmetry, about 4x fewer operator applications
 * than BiCGSTAB on metal spheres) to relative residual tol, Jacobi on, one thread,
 * estimated plans. */
dpz_setup dpz_test_setup(const dpz_grid *g, double complex eps, double tol);

#endif
