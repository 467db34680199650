/* fuzz_sweep_table.c: libFuzzer harness for the sweep table scanner that --resume and
 * merge run over alpha.csv, cross_sections.csv and diagnostics.csv left by a killed or
 * damaged run. The first byte picks the table; the rest is its contents. The scan must
 * either refuse the head with a message or describe the table consistently: groups in
 * ascending byte order inside the good part, which ends at or before the end. */
#include "dpz_sweep.h"
#include "fuzz_common.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size < 1)
        return 0;
    dpz_table_kind kind = (dpz_table_kind)(data[0] % DPZ_TABLE_COUNT);
    const char *buf = (const char *)data + 1;
    size_t len = size - 1;
    dpz_table t;
    memset(&t, 0, sizeof t);
    dpz_err err;
    dpz_status s = dpz_sweep_table_scan(kind, "fuzz.csv", buf, len, &t, &err);
    if (s != DPZ_OK) {
        fuzz_check_failure(s, &err);
        dpz_sweep_table_free(&t);
        return 0;
    }
    FUZZ_CHECK(t.head_end <= t.good_end && t.good_end <= len);
    FUZZ_CHECK(t.n_groups == 0 || t.groups != NULL);
    size_t prev_end = t.head_end;
    for (size_t g = 0; g < t.n_groups; g++) {
        FUZZ_CHECK(t.groups[g].begin >= prev_end && t.groups[g].begin < t.groups[g].end);
        FUZZ_CHECK(t.groups[g].end <= t.good_end);
        prev_end = t.groups[g].end;
    }
    FUZZ_CHECK(t.damaged || t.good_end == len);
    FUZZ_CHECK(memchr(t.damage, '\0', sizeof t.damage) != NULL);
    /* Every line of a good group must parse again on its own. */
    for (size_t g = 0; g < t.n_groups; g++) {
        size_t p = t.groups[g].begin;
        while (p < t.groups[g].end) {
            const char *nl = memchr(buf + p, '\n', t.groups[g].end - p);
            FUZZ_CHECK(nl != NULL);
            size_t l = (size_t)(nl - (buf + p));
            dpz_sweep_result r;
            int elem = -1;
            FUZZ_CHECK(dpz_sweep_row_parse(kind, buf + p, l, &r, &elem, &err) == DPZ_OK);
            p += l + 1;
        }
    }
    dpz_sweep_table_free(&t);
    return 0;
}
