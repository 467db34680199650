/* fuzz_units_material.c: libFuzzer harness for material specifications
 * ("LABEL=SPEC" of --material and the bare SPEC of --eps). */
#include <complex.h>
#include <math.h>

#include "dpz_units.h"
#include "fuzz_common.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static void check(dpz_status s, const dpz_err *err, const dpz_matspec *m, int has_label)
{
    if (s != DPZ_OK) {
        fuzz_check_failure(s, err);
        return;
    }
    if (has_label)
        FUZZ_CHECK(m->label >= 1 && m->label <= 255);
    if (m->kind == DPZ_MATSPEC_CONST)
        FUZZ_CHECK(isfinite(creal(m->eps)) && isfinite(cimag(m->eps)));
    else if (m->kind == DPZ_MATSPEC_TABLE)
        FUZZ_CHECK(memchr(m->path, '\0', sizeof m->path) != NULL);
    else
        FUZZ_CHECK(m->kind == DPZ_MATSPEC_DRUDE && m->drude.n_lorentz <= DPZ_MAX_LORENTZ);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char *t = fuzz_cstring(data, size);
    if (t == NULL)
        return 0;
    dpz_err err;
    dpz_matspec m;
    check(dpz_units_material("--material", t, 1, &m, &err), &err, &m, 1);
    check(dpz_units_material("--eps", t, 0, &m, &err), &err, &m, 0);
    free(t);
    return 0;
}
