/* fuzz_units_length.c: libFuzzer harness for the unit-carrying number parsers of the
 * command line: lengths, angles, energies, plain reals, counts, shards and the
 * comma-separated vectors and lists built on them. */
#include <math.h>

#include "dpz_units.h"
#include "fuzz_common.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

/* Every parser must either succeed with finite values or fail with a message. */
static void check(dpz_status s, const dpz_err *err, const double *v, size_t n)
{
    if (s == DPZ_OK) {
        for (size_t i = 0; i < n; i++)
            FUZZ_CHECK(isfinite(v[i]));
    } else
        fuzz_check_failure(s, err);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char *t = fuzz_cstring(data, size);
    if (t == NULL)
        return 0;
    dpz_err err;
    double v[64];
    size_t n = 0;
    dpz_status s;

    s = dpz_units_length("--radius", t, &v[0], &err);
    check(s, &err, v, 1);
    s = dpz_units_length_pos("--spacing", t, &v[0], &err);
    check(s, &err, v, 1);
    if (s == DPZ_OK)
        FUZZ_CHECK(v[0] > 0.0);
    s = dpz_units_length_unit("--stl-unit", t, &v[0], &err);
    check(s, &err, v, 1);
    s = dpz_units_angle("--angle", t, &v[0], &err);
    check(s, &err, v, 1);
    s = dpz_units_energy_ev("--energy", t, &v[0], &err);
    check(s, &err, v, 1);
    s = dpz_units_real("--tol", t, &v[0], &err);
    check(s, &err, v, 1);
    s = dpz_units_length_vec("--size", t, v, 3, &err);
    check(s, &err, v, 3);
    s = dpz_units_angle_vec("--euler", t, v, 3, &err);
    check(s, &err, v, 3);
    s = dpz_units_length_list("--lengths", t, v, 64, &n, &err);
    if (s == DPZ_OK)
        FUZZ_CHECK(n >= 1 && n <= 64);
    check(s, &err, v, s == DPZ_OK ? n : 0);
    s = dpz_units_size_params("--size-parameters", t, v, 64, &n, &err);
    if (s == DPZ_OK)
        FUZZ_CHECK(n >= 1 && n <= 64);
    check(s, &err, v, s == DPZ_OK ? n : 0);

    size_t count = 0, index = 0, shards = 0;
    s = dpz_units_count("--max-iter", t, &count, &err);
    if (s != DPZ_OK)
        fuzz_check_failure(s, &err);
    s = dpz_units_shard("--shard", t, &index, &shards, &err);
    if (s == DPZ_OK)
        FUZZ_CHECK(shards >= 1 && index < shards);
    else
        fuzz_check_failure(s, &err);
    free(t);
    return 0;
}
