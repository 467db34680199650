/* fuzz_units_complex.c: libFuzzer harness for the complex-number parser (--eps). */
#include <complex.h>
#include <math.h>

#include "dpz_units.h"
#include "fuzz_common.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char *t = fuzz_cstring(data, size);
    if (t == NULL)
        return 0;
    dpz_err err;
    double complex z = 0.0;
    dpz_status s = dpz_units_complex("--eps", t, &z, &err);
    if (s == DPZ_OK)
        FUZZ_CHECK(isfinite(creal(z)) && isfinite(cimag(z)));
    else
        fuzz_check_failure(s, &err);
    free(t);
    return 0;
}
