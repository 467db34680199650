/* limits.c: memory estimate and --max-memory check of the computing commands (see
 * cli_limits.h). The estimate follows the allocations of the library: the FFT operator
 * reports its own need (dpz_fftop_memory_need); the Krylov solvers allocate a fixed
 * number of vectors of length 3 n_occ (solver/iter.c); the extraction layer adds the
 * right-hand side, the solution and 1/alpha per voxel; a sweep keeps the six previous
 * solutions for its warm start (cli/sweep.c). */
#include "cli_limits.h"

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "dpz_operator.h"

/* Solver vectors of length 3 n_occ per solver kind (solver/iter.c: x, r, p, v are
 * common; BiCGSTAB adds r^, t and one for p^ then s^; COCG adds z; GMRES(m) adds the
 * m + 1 basis vectors). */
static double solver_vectors(const dpz_solve_opts *o)
{
    switch (o->kind) {
    case DPZ_SOLVER_COCG:
        return 5.0;
    case DPZ_SOLVER_GMRES:
        return 4.0 + (double)(o->restart ? o->restart : 30) + 1.0;
    case DPZ_SOLVER_BICGSTAB:
    default:
        return 7.0;
    }
}

double cli_memory_need(const dpz_grid *grid, const dpz_setup *setup, cli_work work,
                       double *operator_bytes, double *vector_bytes)
{
    double cells = (double)grid->nx * (double)grid->ny * (double)grid->nz;
    double nocc = (double)grid->n_occ;
    double vec = 3.0 * nocc * (double)sizeof(double complex);
    /* dpz_fftop_memory_need works in size_t; past 2^50 cells its products could wrap,
     * so such grids are estimated from the padded size 8 cells x 9 components. */
    double op = cells < 0x1p50
                    ? (double)dpz_fftop_memory_need_threads(grid, setup->op.threads)
                    : 72.0 * cells * (double)sizeof(double complex);
    double nvec = solver_vectors(&setup->solve) + 2.0; /* + right-hand side, solution */
    if (work == CLI_WORK_SWEEP)
        nvec += 6.0;
    double vectors = nvec * vec + nocc * (double)sizeof(double complex); /* 1/alpha */
    double grid_bytes = cells * (1.0 + (grid->fill ? sizeof(float) : 0.0)) +
                        nocc * (double)sizeof(size_t);
    if (operator_bytes)
        *operator_bytes = op;
    if (vector_bytes)
        *vector_bytes = vectors;
    return grid_bytes + op + vectors;
}

/* First number after `key` in a "key: value" text file, or -1. */
static double read_key(const char *path, const char *key)
{
    FILE *f = fopen(path, "r");
    if (!f)
        return -1.0;
    char line[256];
    double v = -1.0;
    size_t kl = strlen(key);
    while (fgets(line, sizeof line, f))
        if (strncmp(line, key, kl) == 0) {
            char *end;
            errno = 0;
            double x = strtod(line + kl, &end);
            if (end != line + kl && errno == 0 && x >= 0.0)
                v = x;
            break;
        }
    fclose(f);
    return v;
}

/* A file holding one non-negative integer ("max" or unreadable: -1). */
static double read_number(const char *path)
{
    FILE *f = fopen(path, "r");
    if (!f)
        return -1.0;
    char line[64];
    double v = -1.0;
    if (fgets(line, sizeof line, f) && isdigit((unsigned char)line[0]))
        v = strtod(line, NULL);
    fclose(f);
    return v;
}

double cli_memory_available(const char **source)
{
    /* MemAvailable (Linux >= 3.14, in kB): the kernel's estimate of memory available for
     * new allocations without swapping (proc(5)). */
    double avail = read_key("/proc/meminfo", "MemAvailable:");
    const char *src = "MemAvailable in /proc/meminfo";
    if (avail >= 0.0)
        avail *= 1024.0;
    /* Batch systems confine jobs with cgroup v2 memory limits (cgroups(7)); the room
     * left under the limit is what the job can use. */
    double max = read_number("/sys/fs/cgroup/memory.max");
    double cur = read_number("/sys/fs/cgroup/memory.current");
    if (max >= 0.0 && cur >= 0.0) {
        double room = max > cur ? max - cur : 0.0;
        if (avail < 0.0 || room < avail) {
            avail = room;
            src = "the cgroup limit in /sys/fs/cgroup/memory.max";
        }
    }
    if (source)
        *source = src;
    return avail > 0.0 ? avail : 0.0;
}

int cli_parse_memory_size(const char *text, double *bytes, char *msg, size_t len)
{
    static const struct {
        const char *name;
        double scale;
    } units[] = {{"B", 1.0},      {"kB", 1e3},    {"KB", 1e3},     {"MB", 1e6},
                 {"GB", 1e9},     {"TB", 1e12},   {"KiB", 0x1p10}, {"MiB", 0x1p20},
                 {"GiB", 0x1p30}, {"TiB", 0x1p40}};
    const char *p = text;
    /* Decimal digits and one point, an optional exponent: no sign, hex, inf or nan. */
    size_t digits = 0;
    while (isdigit((unsigned char)*p) || *p == '.')
        digits += isdigit((unsigned char)*p++) != 0;
    if (digits && (*p == 'e' || *p == 'E')) {
        const char *q = p + 1;
        if (*q == '+' || *q == '-')
            q++;
        if (isdigit((unsigned char)*q)) {
            p = q;
            while (isdigit((unsigned char)*p))
                p++;
        }
    }
    char num[64];
    size_t nl = (size_t)(p - text);
    if (digits == 0 || nl >= sizeof num) {
        snprintf(msg, len,
                 "--max-memory: \"%s\" is not a memory size (write e.g. 4GiB or "
                 "500MB)",
                 text);
        return -1;
    }
    memcpy(num, text, nl);
    num[nl] = '\0';
    char *end;
    double v = strtod(num, &end);
    if (*end != '\0') {
        snprintf(msg, len,
                 "--max-memory: \"%s\" is not a memory size (write e.g. 4GiB or "
                 "500MB)",
                 text);
        return -1;
    }
    for (size_t u = 0; u < sizeof units / sizeof units[0]; u++)
        if (strcmp(p, units[u].name) == 0) {
            double b = v * units[u].scale;
            if (!(b >= 1.0) || !(b < 0x1p63)) {
                snprintf(msg, len,
                         "--max-memory: \"%s\" must be at least 1B and below "
                         "8EiB",
                         text);
                return -1;
            }
            *bytes = b;
            return 0;
        }
    snprintf(msg, len,
             "--max-memory: \"%s\" %s (use B, kB, MB, GB, TB, KiB, MiB, GiB or "
             "TiB, e.g. 4GiB)",
             text, *p ? "has an unknown unit" : "has no unit");
    return -1;
}

/* Bytes in a readable binary unit, e.g. "3.75 GiB". */
static void human(double b, char *buf, size_t len)
{
    static const char *u[] = {"B", "KiB", "MiB", "GiB", "TiB", "PiB", "EiB"};
    int i = 0;
    while (b >= 1024.0 && i < 6) {
        b /= 1024.0;
        i++;
    }
    snprintf(buf, len, i ? "%.3g %s" : "%.0f %s", b, u[i]);
}

/* The multipole origin must lie on or near the particle: farther from the grid's box
 * than the box's diagonal, the order-1 (dipole) part of the response about that point is
 * a small remainder of the higher orders, and far enough away the regular waves at the
 * voxels underflow and the tensor comes out as zeros. */
static int origin_check(const char *cmd, const dpz_grid *g, const dpz_setup *s)
{
    if (!s->has_origin)
        return CLI_OK;
    size_t n[3] = {g->nx, g->ny, g->nz};
    double dist2 = 0.0, diag2 = 0.0;
    for (int ax = 0; ax < 3; ax++) {
        double lo = g->origin[ax] - 0.5 * g->d;
        double hi = g->origin[ax] + g->d * ((double)n[ax] - 0.5);
        double o = s->origin_m[ax];
        double out = o < lo ? lo - o : o > hi ? o - hi : 0.0;
        dist2 += out * out;
        diag2 += (hi - lo) * (hi - lo);
    }
    if (dist2 <= diag2)
        return CLI_OK;
    return cli_fail("%s: --origin %.6g,%.6g,%.6g m lies %.3g m outside the voxel grid, "
                    "more than the grid's diagonal (%.3g m): about such a point the "
                    "response is not that of a point dipole; choose an origin on or near "
                    "the particle",
                    cmd, s->origin_m[0], s->origin_m[1], s->origin_m[2], sqrt(dist2),
                    sqrt(diag2));
}

int cli_limits_check(const cli_args *a, const dpz_grid *grid, const dpz_setup *setup,
                     cli_work work)
{
    const char *cmd = a->cmd->name;
    int rc = origin_check(cmd, grid, setup);
    if (rc != CLI_OK)
        return rc;
    const char *v = cli_get(a, "--max-memory");
    double limit = 0.0;
    const char *source = NULL;
    if (v) {
        char msg[256];
        if (cli_parse_memory_size(v, &limit, msg, sizeof msg) != 0)
            return cli_fail("%s: %s", cmd, msg);
    } else {
        limit = cli_memory_available(&source);
        if (limit <= 0.0)
            return CLI_OK; /* nothing known about the machine: no default limit */
    }
    double op = 0.0, vec = 0.0;
    double need = cli_memory_need(grid, setup, work, &op, &vec);
    if (need <= limit)
        return CLI_OK;
    char hn[32], hl[32], ho[32], hv[32];
    human(need, hn, sizeof hn);
    human(limit, hl, sizeof hl);
    human(op, ho, sizeof ho);
    human(vec, hv, sizeof hv);
    if (v)
        return cli_fail(
            "%s: this run needs about %s (%.0f bytes: FFT operator %s, solver "
            "vectors %s for %zu occupied voxels) but --max-memory allows %s "
            "(%.0f bytes); use a coarser --spacing or raise --max-memory",
            cmd, hn, need, ho, hv, grid->n_occ, hl, limit);
    return cli_fail("%s: this run needs about %s (%.0f bytes: FFT operator %s, solver "
                    "vectors %s for %zu occupied voxels) but only %s (%.0f bytes) is "
                    "available (%s); use a coarser --spacing, or give --max-memory SIZE "
                    "to try anyway",
                    cmd, hn, need, ho, hv, grid->n_occ, hl, limit, source);
}
