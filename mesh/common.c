/* common.c: status names, the error buffer and the allocation hook (see dpz_common.h). */
#include "dpz_common.h"

#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

const char *dpz_status_name(dpz_status s)
{
    switch (s) {
#define DPZ_X_NAME(name, text)                                                           \
    case name:                                                                           \
        return #name;
        DPZ_STATUS_LIST(DPZ_X_NAME)
#undef DPZ_X_NAME
    default:
        return "DPZ_UNKNOWN";
    }
}

const char *dpz_status_message(dpz_status s)
{
    switch (s) {
#define DPZ_X_TEXT(name, text)                                                           \
    case name:                                                                           \
        return text;
        DPZ_STATUS_LIST(DPZ_X_TEXT)
#undef DPZ_X_TEXT
    default:
        return "unknown status";
    }
}

dpz_status dpz_err_set(dpz_err *err, dpz_status code, const char *fmt, ...)
{
    if (err) {
        err->code = code;
        va_list ap;
        va_start(ap, fmt);
        vsnprintf(err->msg, sizeof err->msg, fmt, ap);
        va_end(ap);
    }
    return code;
}

void dpz_err_clear(dpz_err *err)
{
    if (err) {
        err->code = DPZ_OK;
        err->msg[0] = '\0';
    }
}

/* Failure injection counter: negative means disabled. */
static long fail_countdown = -1;

void dpz_alloc_fail_after(long n) { fail_countdown = n; }

static int injected_failure(void)
{
    if (fail_countdown < 0)
        return 0;
    if (fail_countdown == 0) {
        fail_countdown = -1;
        return 1;
    }
    fail_countdown--;
    return 0;
}

int dpz_mul_overflow(size_t a, size_t b, size_t *out)
{
    if (a != 0 && b > SIZE_MAX / a)
        return -1;
    *out = a * b;
    return 0;
}

void *dpz__malloc(size_t n)
{
    if (injected_failure())
        return NULL;
    return malloc(n ? n : 1);
}

void *dpz__calloc(size_t count, size_t size)
{
    size_t total;
    if (dpz_mul_overflow(count, size, &total) != 0 || injected_failure())
        return NULL;
    return calloc(count ? count : 1, size ? size : 1);
}

void *dpz__realloc(void *p, size_t n)
{
    if (injected_failure())
        return NULL;
    return realloc(p, n ? n : 1);
}

void dpz__free(void *p) { free(p); }
