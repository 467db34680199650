/* clang_cmplx.h: force-included into the clang (fuzzing) build. glibc's <complex.h>
 * defines the C11 CMPLX macro only for GCC >= 4.7 by its version test, which clang 14
 * (reporting itself as GCC 4.2) fails; clang has the same __builtin_complex since
 * version 12, so the macro is supplied here with glibc's own definition. */
#ifndef DPZ_FUZZ_CLANG_CMPLX_H
#define DPZ_FUZZ_CLANG_CMPLX_H
#include <complex.h>
#ifndef CMPLX
#define CMPLX(x, y) __builtin_complex((double)(x), (double)(y))
#endif
#endif
