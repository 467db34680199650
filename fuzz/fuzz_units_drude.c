/* fuzz_units_drude.c: libFuzzer harness for Drude-Lorentz specifications; an accepted
 * specification must also be accepted by the material model and evaluate finitely away
 * from its poles. */
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
    dpz_drude_params p;
    dpz_status s = dpz_units_drude("--material", t, &p, &err);
    if (s != DPZ_OK) {
        fuzz_check_failure(s, &err);
        free(t);
        return 0;
    }
    FUZZ_CHECK(p.n_lorentz <= DPZ_MAX_LORENTZ);
    dpz_material *m = NULL;
    s = dpz_material_create_drude(&m, &p, &err);
    if (s == DPZ_OK) {
        double complex eps;
        s = dpz_material_eps(m, 633e-9, &eps, &err);
        if (s != DPZ_OK)
            fuzz_check_failure(s, &err);
    } else {
        FUZZ_CHECK(m == NULL);
        fuzz_check_failure(s, &err);
    }
    dpz_material_destroy(m);
    free(t);
    return 0;
}
