/* dpz_common.h: status codes, the error buffer and the allocation hook shared by every
 * layer of libdipolize. Library code never prints or exits: it returns a dpz_status and,
 * when the caller passed a dpz_err, one sentence of context such as
 * "npy reader: s.npy: byte 128: dimensions overflow size_t". */
#ifndef DPZ_MESH_COMMON_H
#define DPZ_MESH_COMMON_H

#include <stddef.h>

#ifdef __cplusplus
extern "C" {
#endif

/* One list generates the enum, dpz_status_name() and dpz_status_message(). */
#define DPZ_STATUS_LIST(X)                                                               \
    X(DPZ_OK, "success")                                                                 \
    X(DPZ_CONTINUE, "iteration continues")                                               \
    X(DPZ_EINVAL, "invalid argument")                                                    \
    X(DPZ_ENOMEM, "out of memory")                                                       \
    X(DPZ_EIO, "input/output error")                                                     \
    X(DPZ_EFORMAT, "malformed input")                                                    \
    X(DPZ_ERANGE, "value out of range")                                                  \
    X(DPZ_ELIMIT, "size limit exceeded")                                                 \
    X(DPZ_ENOCONV, "iterative solve did not converge")                                   \
    X(DPZ_EBREAKDOWN, "iterative solve broke down")                                      \
    X(DPZ_ESTAGNATION, "iterative solve stagnated")                                      \
    X(DPZ_ELAPACK, "LAPACK routine failed")                                              \
    X(DPZ_EFFTW, "FFTW planning failed")

typedef enum {
#define DPZ_X_ENUM(name, text) name,
    DPZ_STATUS_LIST(DPZ_X_ENUM)
#undef DPZ_X_ENUM
        DPZ_STATUS_COUNT
} dpz_status;

/* Symbolic name of a status ("DPZ_EFORMAT"); "DPZ_UNKNOWN" for values outside the enum. */
const char *dpz_status_name(dpz_status s);
/* Generic one-line description of a status ("malformed input"). */
const char *dpz_status_message(dpz_status s);

#define DPZ_ERR_MSG_LEN 512

/* Error report filled by library calls. The message is one sentence of context, without
 * a trailing newline; it is always NUL-terminated. */
typedef struct dpz_err {
    dpz_status code;
    char msg[DPZ_ERR_MSG_LEN];
} dpz_err;

/* Records `code` and a printf-style message in `err` (which may be NULL) and returns
 * `code`, so that callers can write `return dpz_err_set(err, DPZ_EINVAL, "...")`. */
dpz_status dpz_err_set(dpz_err *err, dpz_status code, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 3, 4)))
#endif
    ;

/* Clears `err` (may be NULL) to DPZ_OK and an empty message. */
void dpz_err_clear(dpz_err *err);

/* Allocation hook used by every library allocation of size_t-counted memory, so that
 * tests can provoke allocation failure. dpz__malloc and dpz__calloc return NULL on
 * failure (and for a product that overflows size_t); dpz__free(NULL) is a no-op. */
void *dpz__malloc(size_t n);
void *dpz__calloc(size_t count, size_t size);
void *dpz__realloc(void *p, size_t n);
void dpz__free(void *p);

/* Test hook: the allocation after the next `n` successful ones fails (n = 0: the next
 * one); a negative `n` disables failure injection. Not thread-safe; tests only. */
void dpz_alloc_fail_after(long n);

/* Multiplies a * b into *out; returns 0 on success, -1 if the product overflows. */
int dpz_mul_overflow(size_t a, size_t b, size_t *out);

#ifdef __cplusplus
}
#endif
#endif /* DPZ_MESH_COMMON_H */
