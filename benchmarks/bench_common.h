/* bench_common.h: clocks and the median shared by the benchmark programs (header only:
 * each benchmark .c file is a program of its own). */
#ifndef DPZ_BENCH_COMMON_H
#define DPZ_BENCH_COMMON_H

#include <stdlib.h>
#include <time.h>

static inline double bench_clock(clockid_t id)
{
    struct timespec ts;
    clock_gettime(id, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Wall-clock time, s. */
static inline double now(void)
{
    return bench_clock(CLOCK_MONOTONIC);
}

/* CPU time of the calling thread, s: on a loaded machine it excludes the time the thread
 * waits for a core, which wall-clock time of a one-thread run does not. */
static inline double cpu_now(void)
{
    return bench_clock(CLOCK_THREAD_CPUTIME_ID);
}

/* CPU time of the whole process (all threads), s. */
static inline double process_cpu_now(void)
{
    return bench_clock(CLOCK_PROCESS_CPUTIME_ID);
}

static inline int bench_cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Median of v[0..n-1] (sorts v). */
static inline double median(double *v, int n)
{
    qsort(v, (size_t)n, sizeof *v, bench_cmp_double);
    return n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
}

#endif
