/* cli_limits.h: the memory limit of the computing commands (static, tensor, expand,
 * sweep): estimate the bytes a run will allocate before allocating them, and refuse the
 * run with one message giving both numbers when the estimate exceeds --max-memory
 * (default: the memory the machine has available now). Internal to cli/. */
#ifndef DPZ_CLI_CLI_LIMITS_H
#define DPZ_CLI_CLI_LIMITS_H

#include <stddef.h>

#include "cli_int.h"

#ifdef __cplusplus
extern "C" {
#endif

/* What the run does with the operator: decides the vectors kept besides the solver's. */
typedef enum {
    CLI_WORK_STATIC = 0, /* 3 right-hand sides at k = 0, one after the other */
    CLI_WORK_TENSOR = 1, /* 6 right-hand sides (7 with cross sections), one at a time */
    CLI_WORK_EXPAND = 2, /* tensor solves at several k, one at a time */
    CLI_WORK_SWEEP = 3 /* tensor solves plus 6 warm-start solutions kept between steps */
} cli_work;

/* Bytes a run on `grid` with the solver of `setup` needs, estimated before anything is
 * allocated: the grid itself, the FFT operator (dpz_fftop_memory_need), the iterative
 * solver's vectors of 3 n_occ complex numbers (BiCGSTAB 10, COCG 6, GMRES(m) m + 6; see
 * solver/iter.c), the right-hand side and solution, the per-voxel 1/alpha, and for a
 * sweep the 6 warm-start solutions. FFTW's plan data and the program itself (a few MB)
 * are not counted. Returned as a double so that absurd grids cannot overflow. Fills the
 * parts (may be NULL): operator and vectors, bytes. */
double cli_memory_need(const dpz_grid *grid, const dpz_setup *setup, cli_work work,
                       double *operator_bytes, double *vector_bytes);

/* Memory available to this process now, bytes: MemAvailable from /proc/meminfo, lowered
 * to the room left under a cgroup v2 limit (memory.max - memory.current) when there is
 * one. Returns 0 when neither can be read (then no default limit applies); `source`
 * (may be NULL) receives a short description of where the number came from. */
double cli_memory_available(const char **source);

/* Parses a memory size: a number with unit B, kB, MB, GB, TB (powers of 1000) or KiB,
 * MiB, GiB, TiB (powers of 1024), e.g. "4GiB", "500MB", "1.5GB"; no blanks inside, the
 * unit is required, the value must be positive and below 2^63 bytes. Returns 0 and the
 * bytes, or -1 with a message in msg[0..len). */
int cli_parse_memory_size(const char *text, double *bytes, char *msg, size_t len);

/* The checks made before a computing command allocates: a --origin farther from the voxel
 * grid's box than the box's diagonal is refused (the dipole reduction about it means
 * nothing; see limits.c); then the memory limit is --max-memory when given, else
 * cli_memory_available().
 * Returns CLI_OK when the estimate fits (or no limit is known), else prints
 * "dipolize: CMD: this run needs about X but ... allows Y; ..." and returns CLI_USAGE.
 * A malformed --max-memory also gives CLI_USAGE with its message. */
int cli_limits_check(const cli_args *a, const dpz_grid *grid, const dpz_setup *setup,
                     cli_work work);

/* Option entry shared by the computing commands' solver group. */
#define CLI_MAX_MEMORY_HELP                                                              \
    "refuse to start when the estimated memory exceeds SIZE, e.g. 4GiB or 500MB "        \
    "(default: the memory available now)"

#ifdef __cplusplus
}
#endif
#endif
