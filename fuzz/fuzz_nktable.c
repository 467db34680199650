/* fuzz_nktable.c: libFuzzer harness for the n-k / permittivity CSV table reader; an
 * accepted table is evaluated across and just outside its range. */
#include <complex.h>
#include <math.h>

#include "dpz_material.h"
#include "fuzz_common.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    dpz_material *m = NULL;
    dpz_err err;
    dpz_status s =
        dpz_material_create_table(&m, (const char *)data, size, "fuzz.csv", &err);
    if (s != DPZ_OK) {
        FUZZ_CHECK(m == NULL);
        fuzz_check_failure(s, &err);
        return 0;
    }
    double lo, hi;
    dpz_material_range(m, &lo, &hi);
    FUZZ_CHECK(lo > 0.0 && lo <= hi && isfinite(hi));
    for (int t = -1; t <= 9; t++) {
        double lam = lo + (hi - lo) * t / 8.0;
        double complex eps = 0.0;
        s = dpz_material_eps(m, lam, &eps, &err);
        if (s == DPZ_OK)
            FUZZ_CHECK(isfinite(creal(eps)) && isfinite(cimag(eps)));
        else
            fuzz_check_failure(s, &err);
    }
    char desc[256];
    dpz_material_describe(m, desc, sizeof desc);
    FUZZ_CHECK(memchr(desc, '\0', sizeof desc) != NULL);
    dpz_material_destroy(m);
    return 0;
}
