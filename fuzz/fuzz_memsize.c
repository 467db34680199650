/* fuzz_memsize.c: libFuzzer harness for the --max-memory size parser ("4GiB", "500MB").
 */
#include <math.h>

#include "cli_limits.h"
#include "fuzz_common.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char *t = fuzz_cstring(data, size);
    if (t == NULL)
        return 0;
    double bytes = -1.0;
    char msg[256];
    msg[0] = '\0';
    if (cli_parse_memory_size(t, &bytes, msg, sizeof msg) == 0)
        FUZZ_CHECK(isfinite(bytes) && bytes >= 1.0 && bytes < 0x1p63);
    else
        FUZZ_CHECK(msg[0] != '\0' && memchr(msg, '\0', sizeof msg) != NULL);
    free(t);
    return 0;
}
