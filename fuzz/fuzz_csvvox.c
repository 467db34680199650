/* fuzz_csvvox.c: libFuzzer harness for the CSV "i,j,k,label" voxel reader. */
#include "dpz_voxio.h"
#include "fuzz_common.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    dpz_grid *g = NULL;
    dpz_err err;
    dpz_status s = dpz_csvvox_read(&g, (const char *)data, size, "fuzz.csv", 2.385e-9,
                                   FUZZ_MAX_CELLS, &err);
    if (s == DPZ_OK)
        fuzz_check_grid(g, FUZZ_MAX_CELLS);
    else {
        FUZZ_CHECK(g == NULL);
        fuzz_check_failure(s, &err);
    }
    dpz_grid_destroy(g);
    return 0;
}
