/* fuzz_common.h: helpers shared by the libFuzzer harnesses of fuzz/.
 *
 * Each harness feeds the fuzzer's bytes to one library reader or command-line parser,
 * checks the contract every reader promises (a status out of the enum; on failure a NULL
 * result and a non-empty, NUL-terminated message; on success a self-consistent object)
 * and frees everything, so that AddressSanitizer, UndefinedBehaviorSanitizer and
 * LeakSanitizer see every defect. A broken contract traps. */
#ifndef DPZ_FUZZ_COMMON_H
#define DPZ_FUZZ_COMMON_H

#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "dpz_common.h"
#include "dpz_grid.h"

/* Voxel limit for the readers: large enough for every seed, small enough that a header
 * claiming a big grid cannot make one run allocate gigabytes. */
#define FUZZ_MAX_CELLS ((size_t)1 << 20)

/* Traps (a crash the fuzzer records) when `cond` is false. */
#define FUZZ_CHECK(cond)                                                                 \
    do {                                                                                 \
        if (!(cond))                                                                     \
            __builtin_trap();                                                            \
    } while (0)

/* The fuzzer's bytes as a NUL-terminated string (text parsers take C strings); an
 * embedded NUL simply ends the text early. Free with free(). */
static inline char *fuzz_cstring(const uint8_t *data, size_t size)
{
    char *s = malloc(size + 1);
    if (s == NULL)
        return NULL;
    memcpy(s, data, size);
    s[size] = '\0';
    return s;
}

/* A failed call: status in the enum, not OK, message filled and terminated. */
static inline void fuzz_check_failure(dpz_status s, const dpz_err *err)
{
    FUZZ_CHECK(s > DPZ_CONTINUE && s < DPZ_STATUS_COUNT);
    FUZZ_CHECK(err->code == s);
    FUZZ_CHECK(memchr(err->msg, '\0', sizeof err->msg) != NULL);
    FUZZ_CHECK(err->msg[0] != '\0');
}

/* A grid handed out by a reader: sizes within the limit, positive finite spacing,
 * occupied list ascending and consistent with the labels. */
static inline void fuzz_check_grid(const dpz_grid *g, size_t max_cells)
{
    FUZZ_CHECK(g != NULL);
    FUZZ_CHECK(g->nx >= 1 && g->ny >= 1 && g->nz >= 1);
    size_t cells = g->nx * g->ny * g->nz;
    FUZZ_CHECK(cells / g->nx / g->ny == g->nz && cells <= max_cells);
    FUZZ_CHECK(g->d > 0.0 && g->d < 1e308);
    size_t occ = 0;
    for (size_t c = 0; c < cells; c++)
        occ += g->label[c] != 0;
    FUZZ_CHECK(occ == g->n_occ);
    for (size_t n = 0; n < g->n_occ; n++) {
        FUZZ_CHECK(g->occ[n] < cells && g->label[g->occ[n]] != 0);
        FUZZ_CHECK(n == 0 || g->occ[n] > g->occ[n - 1]);
    }
    if (g->fill != NULL)
        for (size_t c = 0; c < cells; c++)
            FUZZ_CHECK(g->fill[c] >= 0.0f && g->fill[c] <= 1.0f);
}

#endif
