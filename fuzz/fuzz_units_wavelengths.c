/* fuzz_units_wavelengths.c: libFuzzer harness for wavelength lists: the bytes are read
 * both as a command-line value (LO:HI:STEP or a comma list; "@FILE" is skipped, as it
 * would read a file) and as the contents of an @FILE list. */
#include <math.h>

#include "dpz_units.h"
#include "fuzz_common.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

/* Points bound for the harness: a range like 1nm:1m:1pm must be refused quickly. */
#define FUZZ_MAX_POINTS 4096

static void check(dpz_status s, const dpz_err *err, double *v, size_t n)
{
    if (s == DPZ_OK) {
        FUZZ_CHECK(v != NULL && n >= 1 && n <= FUZZ_MAX_POINTS);
        for (size_t i = 0; i < n; i++)
            FUZZ_CHECK(isfinite(v[i]) && v[i] > 0.0);
    } else
        fuzz_check_failure(s, err);
    free(v);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char *t = fuzz_cstring(data, size);
    if (t == NULL)
        return 0;
    dpz_err err;
    double *v = NULL;
    size_t n = 0;
    dpz_status s;
    if (t[0] != '@') {
        s = dpz_units_wavelengths("--wavelengths", t, FUZZ_MAX_POINTS, &v, &n, &err);
        check(s, &err, v, n);
    }
    v = NULL;
    n = 0;
    s = dpz_units_wavelength_text("--wavelengths", "fuzz.txt", (const char *)data, size,
                                  FUZZ_MAX_POINTS, &v, &n, &err);
    check(s, &err, v, n);
    free(t);
    return 0;
}
