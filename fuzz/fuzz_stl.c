/* fuzz_stl.c: libFuzzer harness for the STL reader and, for meshes it accepts, the
 * voxelizer on a coarse lattice (at most FUZZ_MAX_CELLS voxels). */
#include <math.h>

#include "dpz_stl.h"
#include "fuzz_common.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    dpz_mesh *m = NULL;
    dpz_err err;
    dpz_status s = dpz_stl_read(&m, (const char *)data, size, "fuzz.stl", 1e-9, &err);
    if (s != DPZ_OK) {
        FUZZ_CHECK(m == NULL);
        fuzz_check_failure(s, &err);
        return 0;
    }
    FUZZ_CHECK(m != NULL && m->n_tri > 0 && m->volume_m3 > 0.0);
    /* Spacing: a tenth of the largest extent, so that the lattice stays small. */
    double ext = 0.0;
    for (int a = 0; a < 3; a++)
        ext = fmax(ext, m->hi[a] - m->lo[a]);
    if (isfinite(ext) && ext > 0.0) {
        dpz_grid *g = NULL;
        s = dpz_stl_voxelize(&g, m, ext / 10.0, 1, 2, FUZZ_MAX_CELLS, &err);
        if (s == DPZ_OK)
            fuzz_check_grid(g, FUZZ_MAX_CELLS);
        else {
            FUZZ_CHECK(g == NULL);
            fuzz_check_failure(s, &err);
        }
        dpz_grid_destroy(g);
    }
    dpz_mesh_destroy(m);
    return 0;
}
