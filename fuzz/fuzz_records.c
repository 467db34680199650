/* fuzz_records.c: libFuzzer harness for the geometry records a VTK title line carries
 * back into the program: shape records ("dipolize-shape v1 ...") and mesh records
 * ("dipolize-mesh v1 unit=U path=P"). A shape record that parses must format back to a
 * record that parses to the same text (exact round trip). */
#include "dpz_shape.h"
#include "dpz_stl.h"
#include "fuzz_common.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char *t = fuzz_cstring(data, size);
    if (t == NULL)
        return 0;
    dpz_err err;
    dpz_shape sh;
    dpz_status s = dpz_shape_parse_record(t, &sh, &err);
    if (s == DPZ_OK) {
        char a[1024], b[1024];
        FUZZ_CHECK(dpz_shape_format(&sh, a, sizeof a) == DPZ_OK);
        dpz_shape sh2;
        FUZZ_CHECK(dpz_shape_parse_record(a, &sh2, &err) == DPZ_OK);
        FUZZ_CHECK(dpz_shape_format(&sh2, b, sizeof b) == DPZ_OK);
        FUZZ_CHECK(strcmp(a, b) == 0);
    } else
        fuzz_check_failure(s, &err);
    double unit = 0.0;
    char path[256];
    s = dpz_mesh_parse_record(t, &unit, path, sizeof path, &err);
    if (s == DPZ_OK)
        FUZZ_CHECK(unit > 0.0 && memchr(path, '\0', sizeof path) != NULL);
    else
        fuzz_check_failure(s, &err);
    free(t);
    return 0;
}
