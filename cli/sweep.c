/* sweep.c: `dipolize sweep FILE MATERIALS --wavelengths LIST -o DIR`: the 6x6 tensor,
 * cross sections and diagnostics over a wavelength list, written into DIR as described
 * in docs/sweep-format.md, crash-safe: every finished wavelength is appended to the
 * tables, and commits (fsync of the tables, the restart state, summary.json replaced
 * atomically last) follow often enough that a killed run loses little and rarely enough
 * that they cost at most about 5% of the run; `--resume` continues from the last.
 * `--shard I/N` computes every N-th wavelength starting at I; under an MPI launcher
 * (built with -DDPZ_MPI=ON) rank 0 hands wavelengths out to the other ranks
 * (mpi_farm.c).
 *
 * Determinism: each wavelength's solves start from the previous wavelength's solutions
 * (warm start). The solutions are kept in DIR/restart.<0|1>.bin at every commit,
 * so that a resumed run continues from the very same initial guesses and writes tables
 * byte-identical to an uninterrupted run with the same thread count. */
#include "dpz_sweep.h"

#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include <dirent.h>

#include "cli_int.h"
#include "cli_limits.h"
#include "dpz_sha256.h"
#include "sweep_int.h"

#ifndef DPZ_VERSION
#define DPZ_VERSION "unknown"
#endif

/* ---- the command ------------------------------------------------------------------ */
static const cli_opt sweep_opts[] = {
    {"--wavelengths", "LIST",
     "vacuum wavelengths: LO:HI:STEP (lengths with units, e.g. 400nm:700nm:10nm), "
     "L1,L2,... or @FILE (one length per line); required",
     0},
    {"-o", "DIR", "output directory (created; must be absent or empty unless --resume)",
     0},
    {"--shard", "I/N",
     "compute only positions I, I+N, I+2N, ... of the list (0 <= I < N; merge the N "
     "directories with 'dipolize merge')",
     0},
    {"--resume", NULL,
     "continue an interrupted run in DIR (same inputs required; an absent or empty DIR "
     "starts a new run)",
     0},
    {"--incidence", "K:E",
     "plane wave for cross sections: direction KX,KY,KZ and polarization EX,EY,EZ "
     "(complex allowed), e.g. 0,0,1:1,1i,0 (default 0,0,1:1,0,0)",
     0},
    {"--origin", "X,Y,Z",
     "multipole origin, lengths in the grid frame (default: centroid of the occupied "
     "voxels)",
     0},
    {"--refine", "N",
     "solve every wavelength on N lattices (2 to 4; as for 'tensor --refine': a recorded "
     "shape or mesh re-voxelized finer, a plain voxel set split into sub-voxels) and "
     "write the tensor extrapolated to zero spacing with its error estimate (alpha.csv "
     "gains err_re, err_im); cross sections and diagnostics come from the finest level",
     0},
    {"--quiet", NULL, "no progress output on stderr", 0},
    {NULL, NULL, NULL, 0},
};
static const cli_group sweep_group = {"Sweep", sweep_opts};

static int sweep_run(const cli_args *a);

const cli_cmd cli_cmd_sweep = {
    "sweep",
    "FILE MATERIALS --wavelengths LIST -o DIR [options]",
    "6x6 polarizability, cross sections and diagnostics over a wavelength list, into "
    "a directory",
    "Writes DIR/alpha.csv, cross_sections.csv, diagnostics.csv, static.json and\n"
    "summary.json (columns: docs/sweep-format.md). Finished wavelengths are flushed to\n"
    "disk in commits; a killed run continues with --resume from the last. Each\n"
    "wavelength's solves start from the previous wavelength's solutions. On a terminal\n"
    "a progress line shows the wavelength, iterations, residual and the time left; one\n"
    "line per wavelength otherwise; --quiet for none. Under mpirun (MPI build), rank 0\n"
    "hands wavelengths out to the other ranks and writes every file. Exit code 1 when a\n"
    "wavelength did not converge (its rows say converged=0 and hold nan).",
    "dipolize sweep ring.vtk --material 1=drude:eps_inf=9.5,wp=8.9eV,gamma=0.07eV "
    "--host-index 1.45 --wavelengths 500nm:1500nm:20nm -o ring-sweep",
    1,
    1,
    {&cli_group_geometry, &cli_group_materials, &cli_group_solver, &sweep_group, NULL},
    sweep_run,
};

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* ---- inputs ----------------------------------------------------------------------- */
/* "KX,KY,KZ:EX,EY,EZ": a real direction and a complex polarization transverse to it. */
static int parse_incidence(const char *text, double khat[3], double complex e0[3])
{
    const char *colon = strchr(text, ':');
    if (!colon || strchr(colon + 1, ':'))
        return cli_fail("sweep: --incidence %s: expected KX,KY,KZ:EX,EY,EZ (e.g. "
                        "0,0,1:1,0,0)",
                        text);
    char part[2][256];
    size_t l0 = (size_t)(colon - text);
    if (l0 >= sizeof part[0] || strlen(colon + 1) >= sizeof part[1])
        return cli_fail("sweep: --incidence: value too long");
    memcpy(part[0], text, l0);
    part[0][l0] = '\0';
    snprintf(part[1], sizeof part[1], "%s", colon + 1);
    for (int w = 0; w < 2; w++) {
        char *save = NULL, *tok = strtok_r(part[w], ",", &save);
        for (int i = 0; i < 3; i++, tok = strtok_r(NULL, ",", &save)) {
            dpz_err e;
            if (!tok)
                return cli_fail("sweep: --incidence %s: %s needs three components", text,
                                w ? "the polarization" : "the direction");
            if (w == 0 ? dpz_units_real("--incidence", tok, &khat[i], &e)
                       : dpz_units_complex("--incidence", tok, &e0[i], &e))
                return cli_fail_err("sweep", &e);
        }
        if (tok)
            return cli_fail("sweep: --incidence %s: more than three components", text);
    }
    double kn = sqrt(khat[0] * khat[0] + khat[1] * khat[1] + khat[2] * khat[2]);
    double en = 0.0;
    double complex dot = 0.0;
    for (int i = 0; i < 3; i++)
        en += creal(e0[i] * conj(e0[i]));
    en = sqrt(en);
    if (!(kn > 0.0) || !(en > 0.0))
        return cli_fail("sweep: --incidence %s: direction and polarization must not be "
                        "zero",
                        text);
    for (int i = 0; i < 3; i++) {
        khat[i] /= kn;
        dot += khat[i] * e0[i];
    }
    /* A plane wave in a homogeneous host is transverse: khat . E0 = 0. */
    if (cabs(dot) > 1e-9 * en)
        return cli_fail(
            "sweep: --incidence %s: the polarization must be perpendicular to "
            "the direction",
            text);
    return CLI_OK;
}

/* Fingerprint of the voxel grid actually solved (dimensions, spacing, labels, fill
 * fractions): catches a re-voxelization at another spacing of the same file. */
static void grid_hash(const dpz_grid *g, char hex[65])
{
    dpz_sha256 ctx;
    unsigned char d[32];
    char head[160];
    int n = snprintf(head, sizeof head, "%zu %zu %zu %.17g %.17g %.17g %.17g\n", g->nx,
                     g->ny, g->nz, g->d, g->origin[0], g->origin[1], g->origin[2]);
    dpz_sha256_init(&ctx);
    dpz_sha256_update(&ctx, head, (size_t)n);
    size_t cells = g->nx * g->ny * g->nz;
    dpz_sha256_update(&ctx, g->label, cells);
    if (g->fill)
        dpz_sha256_update(&ctx, g->fill, cells * sizeof *g->fill);
    dpz_sha256_final(&ctx, d);
    dpz_sha256_hex(d, hex);
}

/* One material as JSON from its command-line spec: values for constants and models,
 * the content hash for tables (their paths may differ between machines). */
static cJSON *matspec_json(unsigned label, const dpz_matspec *s)
{
    cJSON *o = cJSON_CreateObject();
    if (!o)
        return NULL;
    cJSON_AddNumberToObject(o, "label", label);
    if (s->kind == DPZ_MATSPEC_CONST) {
        cJSON_AddStringToObject(o, "kind", "const");
        cJSON_AddItemToObject(o, "eps", cli_json_complex(s->eps));
    } else if (s->kind == DPZ_MATSPEC_DRUDE) {
        cJSON_AddStringToObject(o, "kind", "drude");
        cJSON_AddNumberToObject(o, "eps_inf", s->drude.eps_inf);
        cJSON_AddNumberToObject(o, "plasma_ev", s->drude.plasma_ev);
        cJSON_AddNumberToObject(o, "damping_ev", s->drude.damping_ev);
        cJSON *lz = cJSON_AddArrayToObject(o, "lorentz");
        for (size_t i = 0; lz && i < s->drude.n_lorentz; i++) {
            double t[3] = {s->drude.lorentz[i].strength, s->drude.lorentz[i].energy_ev,
                           s->drude.lorentz[i].damping_ev};
            cJSON_AddItemToArray(lz, cJSON_CreateDoubleArray(t, 3));
        }
    } else {
        char hex[65] = "";
        dpz_err e;
        if (dpz_sha256_file_hex(s->path, hex, &e) != DPZ_OK)
            snprintf(hex, sizeof hex, "unreadable");
        cJSON_AddStringToObject(o, "kind", "table");
        cJSON_AddStringToObject(o, "path", s->path);
        cJSON_AddStringToObject(o, "sha256", hex);
    }
    return o;
}

static cJSON *materials_json(const cli_args *a, const dpz_grid *grid)
{
    size_t counts[256];
    dpz_grid_label_counts(grid, counts);
    cJSON *arr = cJSON_CreateArray();
    dpz_matspec spec;
    const char *eps = cli_get(a, "--eps");
    if (eps) {
        if (dpz_units_material("--eps", eps, 0, &spec, NULL) != DPZ_OK)
            return arr;
        for (unsigned l = 1; arr && l < 256; l++)
            if (counts[l])
                cJSON_AddItemToArray(arr, matspec_json(l, &spec));
        return arr;
    }
    /* In label order, whatever the order on the command line. */
    for (unsigned l = 1; arr && l < 256; l++)
        for (size_t i = 0; i < cli_count(a, "--material"); i++)
            if (dpz_units_material("--material", cli_value_at(a, "--material", i), 1,
                                   &spec, NULL) == DPZ_OK &&
                spec.label == l)
                cJSON_AddItemToArray(arr, matspec_json(l, &spec));
    return arr;
}

/* Every option that changes results (threads and planner effort change only the last
 * bits and are recorded under "run"). */
static cJSON *options_json(const dpz__sweep_ctx *c)
{
    cJSON *o = cli_json_setup(&c->setup);
    if (!o)
        return NULL;
    cJSON_DeleteItemFromObjectCaseSensitive(o, "threads");
    cJSON_AddNumberToObject(o, "host_index", c->setup.host_index);
    if (c->setup.has_origin)
        cJSON_AddItemToObject(o, "origin_m", cli_json_vec3(c->setup.origin_m));
    else
        cJSON_AddStringToObject(o, "origin_m", "centroid");
    cJSON *inc = cJSON_AddObjectToObject(o, "incidence");
    if (inc) {
        cJSON_AddItemToObject(inc, "direction", cli_json_vec3(c->khat));
        cJSON *pol = cJSON_AddArrayToObject(inc, "polarization");
        for (int i = 0; pol && i < 3; i++)
            cJSON_AddItemToArray(pol, cli_json_complex(c->e0[i]));
    }
    return o;
}

static cJSON *summary_new(const dpz__sweep_ctx *c, const char *path, const char *file_hex,
                          const char *grid_hex, const char *format)
{
    cJSON *s = cJSON_CreateObject();
    if (!s)
        return NULL;
    cJSON_AddStringToObject(s, "program", "dipolize");
    cJSON_AddStringToObject(s, "version", DPZ_VERSION);
    cJSON *in = cJSON_AddObjectToObject(s, "input");
    if (in) {
        cJSON_AddStringToObject(in, "path", path);
        cJSON_AddStringToObject(in, "sha256", file_hex);
        cJSON_AddStringToObject(in, "format", format);
        cJSON *g = cJSON_AddObjectToObject(in, "grid");
        if (g) {
            double dims[3] = {(double)c->grid->nx, (double)c->grid->ny,
                              (double)c->grid->nz};
            cJSON_AddItemToObject(g, "dims", cJSON_CreateDoubleArray(dims, 3));
            cli_json_grid_facts(g, c->grid);
            cJSON_AddStringToObject(g, "labels_sha256", grid_hex);
        }
    }
    cJSON_AddItemToObject(s, "materials", materials_json(c->a, c->grid));
    cJSON_AddItemToObject(s, "options", options_json(c));
    cJSON_AddItemToObject(s, "wavelengths_m", cli_json_doubles(c->wl, c->n_wl));
    /* Only with --refine, so that other runs keep their summary as it was; resume and
     * merge compare it like the other inputs. */
    if (c->ref.n) {
        cJSON *rj = cli_refine_json(&c->ref);
        if (rj && !c->setup.has_origin)
            cJSON_AddItemToObject(rj, "origin_m", cli_json_vec3(c->ref_origin_m));
        cJSON_AddItemToObject(s, "refine", rj);
    }
    cJSON *sh = cJSON_AddObjectToObject(s, "shard");
    if (sh) {
        cJSON_AddNumberToObject(sh, "index", (double)c->shard_index);
        cJSON_AddNumberToObject(sh, "count", (double)c->shard_count);
    }
    cJSON_AddArrayToObject(s, "results");
    cJSON_AddFalseToObject(s, "finished");
    return s;
}

/* The kind to write or scan table t as: alpha.csv of a refined run has err_re, err_im. */
static dpz_table_kind table_kind(const dpz__sweep_ctx *c, int t)
{
    return t == DPZ_TABLE_ALPHA && c->ref.n ? DPZ_TABLE_ALPHA_REFINED : (dpz_table_kind)t;
}

/* ---- the output directory --------------------------------------------------------- */
struct dpz__sweep_out {
    const char *dir;
    int fd[DPZ_TABLE_COUNT];
    cJSON *summary;
    cJSON *results;     /* borrowed from summary */
    size_t done;        /* shard positions finished, before and during this session */
    size_t done_before; /* finished before this session (--resume) */
    double t_start;     /* session start, s (monotonic) */
    int any_failed;     /* some wavelength (or the static solve) did not converge */
    int progress;       /* 0 quiet, 1 one line per wavelength, 2 terminal line */
    int lock_fd;        /* DIR/.lock, locked while this process writes DIR; -1 none */
    size_t committed;   /* shard positions in the summary.json on disk */
    unsigned commits; /* commits so far; the next restart file goes to slot commits % 2 */
    double last_commit; /* when the last commit ended, s (monotonic; 0: none yet) */
    double commit_cost; /* how long it took, s */
};

static dpz_status write_summary(dpz__sweep_out *o, dpz_err *err)
{
    char *text = cJSON_Print(o->summary);
    if (!text)
        return dpz_err_set(err, DPZ_ENOMEM, "sweep: out of memory printing summary.json");
    size_t len = strlen(text);
    const void *parts[2] = {text, "\n"};
    size_t lens[2] = {len, 1};
    dpz_status st =
        dpz_sweep_write_atomic_parts(o->dir, "summary.json", parts, lens, 2, err);
    cJSON_free(text);
    return st;
}

/* Restart state: the six solution vectors after the last shard position of a commit, in
 * restart.<commit mod 2>.bin (two files, so that the one matching the last position
 * recorded in summary.json is never being replaced; a resume takes the one whose header
 * matches). Layout: 8 bytes "DPZWARM1", uint64 position
 * (full list), uint64 n_vec, double lambda0_m, then 6 * n_vec complex doubles. With
 * --refine n_vec spans every level (coarse to fine, c->warm_off), so each level's
 * warm-start chain survives a kill as well. */
static const char warm_magic[8] = {'D', 'P', 'Z', 'W', 'A', 'R', 'M', '1'};

static dpz_status write_restart(const char *dir, unsigned slot, uint64_t position,
                                double lambda, uint64_t n_vec,
                                double complex *const warm[6], dpz_err *err)
{
    char name[32];
    snprintf(name, sizeof name, "restart.%u.bin", slot % 2);
    const void *parts[10] = {warm_magic, &position, &n_vec, &lambda};
    size_t lens[10] = {8, 8, 8, 8};
    for (int i = 0; i < 6; i++) {
        parts[4 + i] = warm[i];
        lens[4 + i] = (size_t)n_vec * sizeof(double complex);
    }
    return dpz_sweep_write_atomic_parts(dir, name, parts, lens, 10, err);
}

/* Loads the restart state written after full-list position `position` from the slot
 * that holds it; 0 on success, -1 otherwise (the caller then starts from zero). */
static int read_restart_slot(const char *dir, int slot, uint64_t position, double lambda,
                             uint64_t n_vec, double complex *warm[6])
{
    char path[4096];
    snprintf(path, sizeof path, "%s/restart.%d.bin", dir, slot);
    FILE *f = fopen(path, "rb");
    if (!f)
        return -1;
    char magic[8];
    uint64_t p, n;
    double l;
    int ok = fread(magic, 1, 8, f) == 8 && memcmp(magic, warm_magic, 8) == 0 &&
             fread(&p, 8, 1, f) == 1 && fread(&n, 8, 1, f) == 1 &&
             fread(&l, 8, 1, f) == 1 && p == position && n == n_vec && l == lambda;
    for (int i = 0; ok && i < 6; i++)
        ok = fread(warm[i], sizeof(double complex), (size_t)n, f) == (size_t)n;
    ok = ok && fgetc(f) == EOF;
    fclose(f);
    if (!ok)
        for (int i = 0; i < 6; i++)
            memset(warm[i], 0, (size_t)n_vec * sizeof(double complex));
    return ok ? 0 : -1;
}

/* Tries both slots; returns the slot that held the state, or -1. */
static int read_restart(const char *dir, uint64_t position, double lambda, uint64_t n_vec,
                        double complex *warm[6])
{
    for (int slot = 0; slot < 2; slot++)
        if (read_restart_slot(dir, slot, position, lambda, n_vec, warm) == 0)
            return slot;
    return -1;
}

static void remove_restart(const char *dir)
{
    char path[4096];
    for (int i = 0; i < 2; i++) {
        snprintf(path, sizeof path, "%s/restart.%d.bin", dir, i);
        unlink(path);
    }
}

/* Leftovers of atomic writes interrupted by a kill: ".NAME.tmpXXXXXX". */
static int is_temp_name(const char *name)
{
    return name[0] == '.' && strstr(name, ".tmp") != NULL;
}

/* Files a sweep writes while it sets up, before summary.json exists. */
static int is_setup_name(const char *name)
{
    static const char *const names[] = {"alpha.csv", "cross_sections.csv",
                                        "diagnostics.csv", "static.json"};
    for (size_t i = 0; i < sizeof names / sizeof names[0]; i++)
        if (strcmp(name, names[i]) == 0)
            return 1;
    return strcmp(name, ".lock") == 0 || is_temp_name(name);
}

/* -1: absent, 0: empty directory, 1: has entries, 2: not a directory, 3: holds only
 * what a sweep killed during its set-up leaves (no summary.json yet). */
static int dir_state(const char *path)
{
    struct stat sb;
    if (stat(path, &sb) != 0)
        return -1;
    if (!S_ISDIR(sb.st_mode))
        return 2;
    DIR *d = opendir(path);
    if (!d)
        return 1;
    int n = 0, setup_only = 1;
    struct dirent *e;
    while ((e = readdir(d)) != NULL)
        if (strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0) {
            n++;
            setup_only = setup_only && is_setup_name(e->d_name);
        }
    closedir(d);
    return n == 0 ? 0 : setup_only ? 3 : 1;
}

static void remove_temp_files(const char *dir)
{
    DIR *d = opendir(dir);
    if (!d)
        return;
    struct dirent *e;
    char path[4096];
    while ((e = readdir(d)) != NULL)
        if (is_temp_name(e->d_name)) {
            snprintf(path, sizeof path, "%s/%s", dir, e->d_name);
            unlink(path);
        }
    closedir(d);
}

/* One writer per directory: a POSIX record lock on DIR/.lock, held until the process
 * ends (the system releases it on any exit, SIGKILL included). A second sweep into the
 * same DIR (a requeued job while the first still runs) is refused instead of
 * interleaving its rows. */
static int lock_dir(dpz__sweep_out *o)
{
    char path[4096];
    snprintf(path, sizeof path, "%s/.lock", o->dir);
    int fd = open(path, O_RDWR | O_CREAT, 0644);
    if (fd < 0)
        return cli_fail("sweep: cannot create %s: %s", path, strerror(errno));
    struct flock fl;
    memset(&fl, 0, sizeof fl);
    fl.l_type = F_WRLCK;
    fl.l_whence = SEEK_SET;
    if (fcntl(fd, F_SETLK, &fl) != 0) {
        close(fd);
        return cli_fail("sweep: %s is being written by another running sweep (it holds "
                        "%s); wait for it to end",
                        o->dir, path);
    }
    o->lock_fd = fd;
    return CLI_OK;
}

static void unlock_dir(dpz__sweep_out *o, int remove_file)
{
    if (o->lock_fd < 0)
        return;
    if (remove_file) {
        char path[4096];
        snprintf(path, sizeof path, "%s/.lock", o->dir);
        unlink(path);
    }
    close(o->lock_fd);
    o->lock_fd = -1;
}

static int open_tables(dpz__sweep_out *o)
{
    char path[4096];
    for (int t = 0; t < DPZ_TABLE_COUNT; t++) {
        snprintf(path, sizeof path, "%s/%s", o->dir,
                 dpz_sweep_table_file((dpz_table_kind)t));
        o->fd[t] = open(path, O_WRONLY | O_APPEND);
        if (o->fd[t] < 0)
            return cli_fail("sweep: cannot open %s: %s", path, strerror(errno));
    }
    return CLI_OK;
}

static dpz_status append_all(int fd, const char *path, const char *buf, size_t len,
                             dpz_err *err)
{
    while (len > 0) {
        ssize_t w = write(fd, buf, len);
        if (w < 0) {
            if (errno == EINTR)
                continue;
            return dpz_err_set(err, DPZ_EIO, "sweep: cannot write %s: %s", path,
                               strerror(errno));
        }
        buf += w;
        len -= (size_t)w;
    }
    return DPZ_OK;
}

/* Checks a directory to resume against this run's summary, cuts the tables back to the
 * wavelengths recorded in its summary.json and adopts its results. */
static int resume_dir(dpz__sweep_ctx *c, dpz__sweep_out *o, const char *fresh_text)
{
    char path[4096], *old_text = NULL;
    size_t len;
    dpz_err e;
    snprintf(path, sizeof path, "%s/summary.json", o->dir);
    if (dpz_sweep_read_file(path, &old_text, &len, &e) != DPZ_OK)
        return cli_fail("sweep: --resume: %s is not a sweep directory (%s)", o->dir,
                        e.msg);
    cJSON *old = cJSON_Parse(old_text);
    if (!cJSON_IsObject(old)) {
        free(old_text);
        cJSON_Delete(old);
        return cli_fail("sweep: --resume: %s is damaged (not valid JSON)", path);
    }
    const char *which = dpz_sweep_inputs_differ(fresh_text, old_text, 1);
    free(old_text);
    if (which) {
        cJSON_Delete(old);
        return cli_fail("sweep: %s was made with different inputs: %s", o->dir, which);
    }
    int rc = lock_dir(o);
    if (rc != CLI_OK) {
        cJSON_Delete(old);
        return rc;
    }
    cJSON *res = cJSON_GetObjectItemCaseSensitive(old, "results");
    if (!cJSON_IsArray(res)) {
        cJSON_Delete(old);
        return cli_fail("sweep: %s/summary.json has no \"results\"", o->dir);
    }
    size_t k = (size_t)cJSON_GetArraySize(res), i = 0;
    if (k > c->shard_size) {
        cJSON_Delete(old);
        return cli_fail("sweep: %s/summary.json lists %zu results for a shard of %zu",
                        o->dir, k, c->shard_size);
    }
    for (cJSON *r = res->child; r; r = r->next, i++) {
        size_t p = dpz_sweep_shard_position(i, c->shard_index, c->shard_count);
        cJSON *w = cJSON_GetObjectItemCaseSensitive(r, "wavelength_m");
        cJSON *conv = cJSON_GetObjectItemCaseSensitive(r, "converged");
        if (!cJSON_IsNumber(w) || !dpz_sweep_same_wavelength(w->valuedouble, c->wl[p]) ||
            !cJSON_IsBool(conv)) {
            cJSON_Delete(old);
            return cli_fail(
                "sweep: %s/summary.json: result %zu is not wavelength %.12g m", o->dir,
                i + 1, c->wl[p]);
        }
        if (!cJSON_IsTrue(conv))
            o->any_failed = 1;
    }
    /* Cut every table back to the first k wavelengths (a kill may have left rows of the
     * wavelength in progress, complete or not). */
    for (int t = 0; t < DPZ_TABLE_COUNT; t++) {
        snprintf(path, sizeof path, "%s/%s", o->dir,
                 dpz_sweep_table_file((dpz_table_kind)t));
        char *buf = NULL;
        dpz_table tb;
        if (dpz_sweep_read_file(path, &buf, &len, &e) != DPZ_OK ||
            dpz_sweep_table_scan(table_kind(c, t), path, buf, len, &tb, &e) != DPZ_OK) {
            free(buf);
            cJSON_Delete(old);
            return cli_fail("sweep: cannot resume: %s", e.msg);
        }
        free(buf);
        int bad = tb.n_groups < k;
        for (size_t g = 0; !bad && g < k; g++)
            bad = tb.groups[g].lambda0_m !=
                  c->wl[dpz_sweep_shard_position(g, c->shard_index, c->shard_count)];
        size_t cut = k ? (k <= tb.n_groups ? tb.groups[k - 1].end : 0) : tb.head_end;
        size_t n_groups = tb.n_groups;
        dpz_sweep_table_free(&tb);
        if (bad) {
            cJSON_Delete(old);
            return cli_fail(
                "sweep: cannot resume: %s holds %zu complete wavelengths that do "
                "not match the %zu listed in %s/summary.json",
                path, n_groups, k, o->dir);
        }
        if (truncate(path, (off_t)cut) != 0) {
            cJSON_Delete(old);
            return cli_fail("sweep: cannot cut %s back: %s", path, strerror(errno));
        }
    }
    /* A static solve that failed in the first session still makes the run a failure. */
    snprintf(path, sizeof path, "%s/static.json", o->dir);
    char *stext = NULL;
    if (dpz_sweep_read_file(path, &stext, &len, &e) == DPZ_OK) {
        cJSON *sj = cJSON_Parse(stext);
        if (cJSON_IsNull(cJSON_GetObjectItemCaseSensitive(sj, "chi")))
            o->any_failed = 1;
        cJSON_Delete(sj);
        free(stext);
    }
    /* Adopt the recorded results (with their timings). */
    cJSON *mine = cJSON_DetachItemFromObjectCaseSensitive(old, "results");
    cJSON_ReplaceItemInObjectCaseSensitive(o->summary, "results", mine);
    o->results = mine;
    o->done = o->done_before = o->committed = k;
    cJSON_Delete(old);
    return CLI_OK;
}

/* static.json: the static tensor at the permittivities of the first wavelength of the
 * full list (the same in every shard). */
static int write_static(dpz__sweep_ctx *c, dpz__sweep_out *o)
{
    if (cli_materials_eval(&c->mat, c->grid, c->wl[0], c->setup.eps_label) != CLI_OK)
        return CLI_USAGE;
    double complex chi[3][3];
    dpz_rhs_report rhs[3];
    dpz_err e;
    dpz_err_clear(&e);
    dpz_status st = dpz_static_compute(&c->setup, chi, rhs, &e);
    int noconv = st == DPZ_ENOCONV || st == DPZ_EBREAKDOWN || st == DPZ_ESTAGNATION;
    if (st != DPZ_OK && !noconv)
        return cli_fail_err("sweep: static tensor", &e);
    cJSON *s = cJSON_CreateObject();
    if (!s)
        return cli_fail("sweep: out of memory"), CLI_FAILED;
    /* The fields of `dipolize static --json`, with chi = null rather than an
     * unconverged number, and the wavelength the permittivities were taken at. */
    if (noconv) {
        o->any_failed = 1;
        cJSON_AddNullToObject(s, "chi");
        cJSON_AddNullToObject(s, "chi_over_volume");
    } else {
        double V = dpz_grid_volume(c->grid);
        double complex n3[3][3];
        for (int i = 0; i < 3; i++)
            for (int j = 0; j < 3; j++)
                n3[i][j] = chi[i][j] / V;
        cJSON_AddItemToObject(s, "chi",
                              cli_json_tensor3((const double complex(*)[3])chi));
        cJSON_AddItemToObject(s, "chi_over_volume",
                              cli_json_tensor3((const double complex(*)[3])n3));
    }
    cli_json_grid_facts(s, c->grid);
    cJSON_AddNumberToObject(s, "host_index", c->setup.host_index);
    if (c->mat.dispersive)
        cJSON_AddNumberToObject(s, "eps_at_wavelength_m", c->wl[0]);
    cJSON_AddItemToObject(s, "materials", cli_materials_json(&c->mat, c->grid));
    cJSON *sol = cli_json_setup(&c->setup);
    if (sol) {
        double it[3], res[3];
        for (int i = 0; i < 3; i++) {
            it[i] = (double)rhs[i].iterations;
            res[i] = rhs[i].residual;
        }
        cJSON_AddItemToObject(sol, "iterations", cli_json_doubles(it, 3));
        cJSON_AddItemToObject(sol, "residuals", cli_json_doubles(res, 3));
        cJSON *sts = cJSON_AddArrayToObject(sol, "statuses");
        for (int i = 0; sts && i < 3; i++)
            cJSON_AddItemToArray(sts, cJSON_CreateString(dpz_status_name(rhs[i].status)));
        cJSON_AddBoolToObject(sol, "converged", !noconv);
        cJSON_AddItemToObject(s, "solver", sol);
    }
    char *text = cJSON_Print(s);
    cJSON_Delete(s);
    if (!text)
        return cli_fail("sweep: out of memory"), CLI_FAILED;
    const void *parts[2] = {text, "\n"};
    size_t lens[2] = {strlen(text), 1};
    st = dpz_sweep_write_atomic_parts(o->dir, "static.json", parts, lens, 2, &e);
    cJSON_free(text);
    if (st != DPZ_OK) {
        cli_fail_err(NULL, &e);
        return CLI_FAILED;
    }
    if (noconv)
        fprintf(stderr, "dipolize: sweep: the static solve did not converge (static.json "
                        "has chi = null)\n");
    return CLI_OK;
}

/* A new run: the directory, the table heads, static.json, then summary.json last (a
 * directory without summary.json is not a sweep directory). */
static int create_dir(dpz__sweep_ctx *c, dpz__sweep_out *o, int existed)
{
    if (!existed && mkdir(o->dir, 0755) != 0)
        return cli_fail("sweep: cannot create %s: %s", o->dir, strerror(errno));
    int rc = lock_dir(o);
    if (rc != CLI_OK)
        return rc;
    remove_temp_files(o->dir);
    dpz_err e;
    char head[2048];
    for (int t = 0; t < DPZ_TABLE_COUNT; t++) {
        size_t len = dpz_sweep_table_head(table_kind(c, t), head, sizeof head);
        if (len && c->ref.n && t != DPZ_TABLE_ALPHA) {
            /* One more comment line before the column header of a refined run. */
            static const char note[] =
                "# --refine: values from the finest level (summary.json: refine); "
                "converged = 1 only if every level converged\n";
            size_t cols = strlen(dpz_sweep_table_columns((dpz_table_kind)t)) + 1;
            if (len + sizeof note - 1 < sizeof head && cols <= len) {
                memmove(head + len - cols + sizeof note - 1, head + len - cols, cols);
                memcpy(head + len - cols, note, sizeof note - 1);
                len += sizeof note - 1;
            } else {
                return cli_fail("sweep: the head of %s is too long",
                                dpz_sweep_table_file((dpz_table_kind)t)),
                       CLI_FAILED;
            }
        }
        if (dpz_sweep_write_atomic(o->dir, dpz_sweep_table_file((dpz_table_kind)t), head,
                                   len, &e) != DPZ_OK)
            return cli_fail_err(NULL, &e), CLI_FAILED;
    }
    rc = write_static(c, o);
    if (rc != CLI_OK)
        return rc;
    if (write_summary(o, &e) != DPZ_OK)
        return cli_fail_err(NULL, &e), CLI_FAILED;
    return CLI_OK;
}

/* ---- one wavelength --------------------------------------------------------------- */
static int is_noconv(dpz_status s)
{
    return s == DPZ_ENOCONV || s == DPZ_EBREAKDOWN || s == DPZ_ESTAGNATION;
}

dpz_status dpz__sweep_compute(dpz__sweep_ctx *c, size_t position, double complex *warm[6],
                              dpz_sweep_result *r, dpz_err *err)
{
    double t0 = now_s();
    memset(r, 0, sizeof *r);
    r->position = position;
    r->lambda0_m = c->wl[position];
    if (cli_materials_eval(&c->mat, c->grid, r->lambda0_m, c->setup.eps_label) != CLI_OK)
        return dpz_err_set(err, DPZ_EINVAL, "sweep: no permittivity at %.17g m",
                           r->lambda0_m);
    /* Without --refine one level: the given lattice. With it, every level from its own
     * part of the warm vectors, all with one multipole origin; T ends up holding the
     * finest level, which gives the diagnostics and the cross sections. */
    size_t nl = c->ref.n ? c->ref.n : 1;
    dpz_setup setup = c->setup;
    if (c->ref.n) {
        setup.has_origin = 1;
        memcpy(setup.origin_m, c->ref_origin_m, sizeof setup.origin_m);
    }
    dpz_tensor tensor, *T = &tensor;
    double complex vals[CLI_REFINE_MAX * 36];
    int all_conv = 1;
    dpz_status st = DPZ_OK;
    for (size_t l = 0; l < nl; l++) {
        double complex *wl[6];
        for (int i = 0; i < 6; i++)
            wl[i] = warm ? warm[i] + c->warm_off[l] : NULL;
        if (c->ref.n)
            setup.grid = c->ref.grid[l];
        memset(T, 0, sizeof *T);
        st = dpz_tensor_compute(&setup, r->lambda0_m, T, warm ? wl : NULL, err);
        if (st != DPZ_OK && !is_noconv(st))
            return st;
        int conv = st == DPZ_OK && T->converged;
        for (int i = 0; i < 6 && r->status == DPZ_OK; i++)
            r->status = T->rhs[i].status;
        if (r->status == DPZ_OK && !conv)
            r->status = st != DPZ_OK ? st : DPZ_ENOCONV;
        for (int i = 0; i < 6; i++) {
            if (T->rhs[i].iterations > r->iterations)
                r->iterations = T->rhs[i].iterations;
            if (T->rhs[i].residual > r->residual || isnan(T->rhs[i].residual))
                r->residual = T->rhs[i].residual;
        }
        if (conv) {
            memcpy(vals + 36 * l, &T->A[0][0], 36 * sizeof *vals);
        } else {
            all_conv = 0;
            /* A non-converged iterate is no guess for the next wavelength. */
            for (int i = 0; warm && i < 6; i++)
                memset(wl[i], 0, 3 * setup.grid->n_occ * sizeof(double complex));
        }
    }
    r->have_tensor = all_conv;
    if (r->have_tensor && c->ref.n) {
        if (cli_refine_extrapolate(&c->ref, vals, 36, &r->A[0][0], &r->A_err[0][0]) !=
            CLI_OK)
            return dpz_err_set(err, DPZ_EINVAL,
                               "sweep: the extrapolation to zero spacing failed at "
                               "%.9g nm",
                               r->lambda0_m * 1e9);
    } else if (r->have_tensor) {
        memcpy(r->A, T->A, sizeof r->A);
    }
    if (r->have_tensor) {
        r->reciprocity = T->reciprocity;
        r->energy_balance = T->energy_balance;
        r->min_absorption_eig = T->absorption_eig[0];
        r->dipole_validity = T->dipole_validity;
        r->min_fluct_eig_m3 = T->fluct_eig[0];
        dpz_xsec xs;
        memset(&xs, 0, sizeof xs);
        st = dpz_xsec_compute(&setup, r->lambda0_m, c->khat, c->e0, T, &xs, err);
        if (st != DPZ_OK && !is_noconv(st))
            return st;
        r->have_xsec = st == DPZ_OK;
        if (r->status == DPZ_OK && !r->have_xsec)
            r->status = xs.rhs.status != DPZ_OK ? xs.rhs.status : st;
        if (xs.rhs.iterations > r->iterations)
            r->iterations = xs.rhs.iterations;
        if (xs.rhs.residual > r->residual || isnan(xs.rhs.residual))
            r->residual = xs.rhs.residual;
        if (r->have_xsec) {
            r->ext = xs.ext;
            r->abs = xs.abs;
            r->sca = xs.sca;
            r->ext_dip = xs.ext_dip;
            r->abs_dip = xs.abs_dip;
            r->sca_dip = xs.sca_dip;
            r->rel_diff = xs.rel_diff;
        } else {
            r->ext_dip = r->abs_dip = r->sca_dip = r->rel_diff = NAN;
        }
    }
    r->converged = r->have_tensor && r->have_xsec;
    dpz_err_clear(err);
    r->seconds = now_s() - t0;
    return DPZ_OK;
}

/* ---- recording and progress ------------------------------------------------------- */
static void format_duration(double s, char *buf, size_t cap)
{
    if (!(s >= 0.0) || s > 1e7)
        snprintf(buf, cap, "?");
    else if (s < 60)
        snprintf(buf, cap, "%.0fs", s);
    else if (s < 3600)
        snprintf(buf, cap, "%ldm%02lds", lround(s) / 60, lround(s) % 60);
    else
        snprintf(buf, cap, "%ldh%02ldm", lround(s) / 3600, lround(s) % 3600 / 60);
}

static void progress(const dpz__sweep_ctx *c, const dpz__sweep_out *o,
                     const dpz_sweep_result *r)
{
    if (!o->progress)
        return;
    size_t session = o->done - o->done_before, left = c->shard_size - o->done;
    double elapsed = now_s() - o->t_start;
    char eta[32];
    format_duration(session ? elapsed / (double)session * (double)left : -1.0, eta,
                    sizeof eta);
    if (o->progress == 2) {
        fprintf(stderr,
                "\rdipolize: sweep %zu/%zu  %.6g nm  %llu iterations  residual %.1e%s  "
                "ETA %s\033[K",
                o->done, c->shard_size, r->lambda0_m * 1e9,
                (unsigned long long)r->iterations, r->residual,
                r->converged ? "" : "  NOT CONVERGED", eta);
        if (left == 0)
            fputc('\n', stderr);
    } else {
        fprintf(
            stderr,
            "dipolize: sweep %zu/%zu: %.9g nm: %llu iterations, residual %.2e, %.2f s%s, "
            "ETA %s\n",
            o->done, c->shard_size, r->lambda0_m * 1e9, (unsigned long long)r->iterations,
            r->residual, r->seconds, r->converged ? "" : ", NOT CONVERGED", eta);
    }
    fflush(stderr);
}

/* On a terminal: which wavelength is being solved now (a solve may take minutes). */
static void progress_start(const dpz__sweep_ctx *c, const dpz__sweep_out *o, size_t p)
{
    if (o->progress != 2)
        return;
    size_t session = o->done - o->done_before, left = c->shard_size - o->done;
    char eta[32];
    format_duration(session ? (now_s() - o->t_start) / (double)session * (double)left
                            : -1.0,
                    eta, sizeof eta);
    fprintf(stderr, "\rdipolize: sweep %zu/%zu  %.6g nm  solving...  ETA %s\033[K",
            o->done + 1, c->shard_size, c->wl[p] * 1e9, eta);
    fflush(stderr);
}

/* A commit is repeated once COMMIT_SPACING times its own last duration has passed, so
 * that committing costs at most about 1/COMMIT_SPACING of the run whatever the number of
 * wavelengths (summary.json grows with every result: rewriting it after each wavelength
 * made a 4000-wavelength sweep of a 27-voxel cube ten times slower). */
#define COMMIT_SPACING 20.0

/* Makes the finished wavelengths durable together: fsync of the three tables, the restart
 * state after the last finished position (`warm`, may be NULL: none), then summary.json
 * atomically (the commit point a resume trusts); the restart files go once the shard is
 * complete. */
dpz_status dpz__sweep_commit(dpz__sweep_ctx *c, dpz__sweep_out *o,
                             double complex *const warm[6], dpz_err *err)
{
    double t0 = now_s();
    dpz_status st;
    for (int t = 0; t < DPZ_TABLE_COUNT; t++)
        if (fsync(o->fd[t]) != 0)
            return dpz_err_set(err, DPZ_EIO, "sweep: fsync of %s/%s failed: %s", o->dir,
                               dpz_sweep_table_file((dpz_table_kind)t), strerror(errno));
    int finished = o->done == c->shard_size;
    if (warm && !finished && o->done > 0) {
        size_t p = dpz_sweep_shard_position(o->done - 1, c->shard_index, c->shard_count);
        if ((st = write_restart(o->dir, o->commits, p, c->wl[p], c->n_vec, warm, err)) !=
            DPZ_OK)
            return st;
    }
    if (finished)
        cJSON_ReplaceItemInObjectCaseSensitive(o->summary, "finished",
                                               cJSON_CreateTrue());
    if ((st = write_summary(o, err)) != DPZ_OK)
        return st;
    if (finished)
        remove_restart(o->dir);
    o->commits++;
    o->committed = o->done;
    o->last_commit = now_s();
    o->commit_cost = o->last_commit - t0;
    return DPZ_OK;
}

/* At the end of a session, successful or not: commits the wavelengths recorded since the
 * last commit. Returns `st`, or the commit's failure (in *err) when `st` was DPZ_OK. */
static dpz_status commit_rest(dpz__sweep_ctx *c, dpz__sweep_out *o,
                              double complex *const warm[6], dpz_status st, dpz_err *err)
{
    if (o->done == o->committed)
        return st;
    dpz_err ce;
    dpz_status cs = dpz__sweep_commit(c, o, warm, &ce);
    if (st == DPZ_OK && cs != DPZ_OK) {
        *err = ce;
        return cs;
    }
    return st;
}

dpz_status dpz__sweep_record(dpz__sweep_ctx *c, dpz__sweep_out *o,
                             const dpz_sweep_result *r, double complex *const warm[6],
                             dpz_err *err)
{
    char buf[DPZ_SWEEP_ROWS_MAX], path[4096];
    dpz_status st;
    for (int t = 0; t < DPZ_TABLE_COUNT; t++) {
        size_t len = dpz_sweep_rows(table_kind(c, t), r, buf, sizeof buf);
        snprintf(path, sizeof path, "%s/%s", o->dir,
                 dpz_sweep_table_file((dpz_table_kind)t));
        if (len == 0)
            return dpz_err_set(err, DPZ_ELIMIT, "sweep: rows too long for %s", path);
        if ((st = append_all(o->fd[t], path, buf, len, err)) != DPZ_OK)
            return st;
    }
    cJSON *e = cJSON_CreateObject();
    if (!e)
        return dpz_err_set(err, DPZ_ENOMEM, "sweep: out of memory");
    cJSON_AddNumberToObject(e, "wavelength_m", r->lambda0_m);
    cJSON_AddNumberToObject(e, "position", (double)r->position);
    cJSON_AddBoolToObject(e, "converged", r->converged);
    cJSON_AddStringToObject(e, "status", dpz_status_name((dpz_status)r->status));
    cJSON_AddNumberToObject(e, "iterations", (double)r->iterations);
    if (isfinite(r->residual))
        cJSON_AddNumberToObject(e, "residual", r->residual);
    else
        cJSON_AddNullToObject(e, "residual"); /* a solver breakdown */
    cJSON_AddNumberToObject(e, "seconds", r->seconds);
    cJSON_AddItemToArray(o->results, e);
    o->done++;
    if (!r->converged)
        o->any_failed = 1;
    if (o->done == c->shard_size || o->last_commit == 0.0 ||
        now_s() - o->last_commit >= COMMIT_SPACING * o->commit_cost)
        if ((st = dpz__sweep_commit(c, o, warm, err)) != DPZ_OK)
            return st;
    progress(c, o, r);
    return DPZ_OK;
}

/* ---- the run
 * ---------------------------------------------------------------------------- */
static void ctx_free(dpz__sweep_ctx *c)
{
    cli_refine_free(&c->ref);
    cli_materials_free(&c->mat);
    dpz_grid_destroy(c->grid);
    free(c->wl);
}

/* Everything that can be wrong with the input, checked before any computation. */
static int validate(const cli_args *a, dpz__sweep_ctx *c, cli_src_format *fmt)
{
    int rc;
    dpz_err e;
    const char *wtext = cli_get(a, "--wavelengths");
    if (!wtext)
        return cli_fail("sweep: --wavelengths LIST is required (e.g. 400nm:700nm:10nm)");
    if (!cli_get(a, "-o"))
        return cli_fail("sweep: -o DIR is required (the output directory)");
    if (dpz_units_wavelengths("--wavelengths", wtext, 0, &c->wl, &c->n_wl, &e) != DPZ_OK)
        return cli_fail_err("sweep", &e);
    c->shard_index = 0;
    c->shard_count = 1;
    const char *sh = cli_get(a, "--shard");
    if (sh &&
        dpz_units_shard("--shard", sh, &c->shard_index, &c->shard_count, &e) != DPZ_OK)
        return cli_fail_err("sweep", &e);
    c->shard_size = dpz_sweep_shard_size(c->n_wl, c->shard_index, c->shard_count);
    if (c->shard_size == 0)
        return cli_fail("sweep: --shard %s is empty: the list has only %zu wavelengths",
                        sh, c->n_wl);
    if ((rc = cli_load_geometry(a, a->pos[0], &c->grid, fmt, NULL)) != CLI_OK)
        return rc;
    if (c->grid->n_occ == 0)
        return cli_fail("sweep: %s has no occupied voxel (every label is 0)", a->pos[0]);
    if ((rc = cli_materials_load(a, c->grid, &c->mat)) != CLI_OK)
        return rc;
    for (size_t p = 0; p < c->n_wl; p++) {
        if (c->wl[p] < c->mat.lo_m || c->wl[p] > c->mat.hi_m)
            return cli_fail("sweep: wavelength %.9g nm lies outside the range of the "
                            "material data (%.9g nm to %.9g nm)",
                            c->wl[p] * 1e9, c->mat.lo_m * 1e9, c->mat.hi_m * 1e9);
        if ((rc = cli_materials_eval(&c->mat, c->grid, c->wl[p], c->setup.eps_label)) !=
            CLI_OK)
            return rc;
    }
    c->setup.grid = c->grid;
    c->setup.host_index = c->mat.host_index;
    if ((rc = cli_setup_options(a, &c->setup)) != CLI_OK)
        return rc;
    size_t levels = 0;
    if ((rc = cli_refine_option(a, &levels)) != CLI_OK)
        return rc;
    if (levels && (rc = cli_refine_build(a, c->grid, levels, &c->ref)) != CLI_OK)
        return rc;
    /* The memory estimate (operator, solver vectors, the six warm-start solutions)
     * against --max-memory or the memory available, before allocating any of it; with
     * --refine for the finest level, the largest. */
    if ((rc = cli_limits_check(a, levels ? c->ref.grid[levels - 1] : c->grid, &c->setup,
                               CLI_WORK_SWEEP)) != CLI_OK)
        return rc;
    c->khat[0] = c->khat[1] = 0.0;
    c->khat[2] = 1.0;
    c->e0[0] = 1.0;
    c->e0[1] = c->e0[2] = 0.0;
    const char *inc = cli_get(a, "--incidence");
    if (inc && (rc = parse_incidence(inc, c->khat, c->e0)) != CLI_OK)
        return rc;
    c->n_vec = 3 * c->grid->n_occ;
    if (levels) {
        /* One multipole origin for every level: the user's, else the centroid of the
         * finest voxel set (as tensor --refine does). */
        if (c->setup.has_origin)
            memcpy(c->ref_origin_m, c->setup.origin_m, sizeof c->ref_origin_m);
        else
            dpz_grid_centroid(c->ref.grid[levels - 1], c->ref_origin_m);
        c->n_vec = 0;
        for (size_t l = 0; l < levels; l++) {
            c->warm_off[l] = c->n_vec;
            c->n_vec += 3 * c->ref.grid[l]->n_occ;
        }
    }
    return CLI_OK;
}

static int sweep_body(const cli_args *a, dpz__sweep_ctx *c, int rank, int size)
{
    cli_src_format fmt = CLI_SRC_VTK;
    int rc = validate(a, c, &fmt);
    /* Every rank validates the same arguments; all stop if any rank could not. */
    int worst = dpz__mpi_max(rc);
    if (worst != CLI_OK) {
        if (rc == CLI_OK && rank == 0)
            cli_fail("sweep: another MPI rank could not read the inputs");
        return worst;
    }
    dpz_err e;
    dpz_err_clear(&e);
    if (rank > 0) {
        /* Workers wait for rank 0's verdict on the output directory, then compute. */
        if (dpz__mpi_bcast(CLI_OK) != CLI_OK)
            return CLI_OK;
        dpz_status st = dpz__mpi_work(c, &e);
        return st == DPZ_OK ? CLI_OK : CLI_FAILED;
    }
    dpz__sweep_out o;
    memset(&o, 0, sizeof o);
    for (int t = 0; t < DPZ_TABLE_COUNT; t++)
        o.fd[t] = -1;
    o.lock_fd = -1;
    o.dir = cli_get(a, "-o");
    o.progress = a->quiet ? 0 : isatty(STDERR_FILENO) ? 2 : 1;
    char file_hex[65], grid_hex[65];
    if (dpz_sha256_file_hex(a->pos[0], file_hex, &e) != DPZ_OK) {
        dpz__mpi_bcast(CLI_USAGE);
        return cli_fail_err("sweep", &e);
    }
    grid_hash(c->grid, grid_hex);
    o.summary = summary_new(c, a->pos[0], file_hex, grid_hex, cli_src_format_name(fmt));
    cJSON *run = o.summary ? cJSON_AddObjectToObject(o.summary, "run") : NULL;
    if (run) {
        /* How this session ran; not an input (results agree across these). */
        cJSON_AddNumberToObject(run, "threads", c->setup.op.threads);
        cJSON_AddNumberToObject(run, "mpi_ranks", size);
    }
    char *fresh = o.summary ? cJSON_Print(o.summary) : NULL;
    if (!fresh) {
        cJSON_Delete(o.summary);
        dpz__mpi_bcast(CLI_FAILED);
        return cli_fail("sweep: out of memory"), CLI_FAILED;
    }
    o.results = cJSON_GetObjectItemCaseSensitive(o.summary, "results");
    int state = dir_state(o.dir);
    int resume = cli_flag(a, "--resume") && state == 1;
    if (state == 2)
        rc = cli_fail("sweep: -o %s exists and is not a directory", o.dir);
    else if ((state == 1 || state == 3) && !cli_flag(a, "--resume"))
        rc =
            cli_fail("sweep: %s is not empty (continue an interrupted run with --resume, "
                     "or choose another directory)",
                     o.dir);
    else if (resume)
        rc = resume_dir(c, &o, fresh);
    free(fresh);
    if (rc == CLI_OK && resume)
        remove_temp_files(o.dir);
    /* --resume of a run killed before its summary.json existed starts it afresh. */
    if (rc == CLI_OK && !resume)
        rc = create_dir(c, &o, state >= 0);
    if (rc == CLI_OK)
        rc = open_tables(&o);
    dpz__mpi_bcast(rc);
    if (rc != CLI_OK) {
        for (int t = 0; t < DPZ_TABLE_COUNT; t++)
            if (o.fd[t] >= 0)
                close(o.fd[t]);
        unlock_dir(&o, 0);
        cJSON_Delete(o.summary);
        return rc;
    }
    o.t_start = now_s();
    if (o.progress && o.done_before > 0)
        fprintf(stderr, "dipolize: sweep: resuming %s at wavelength %zu of %zu\n", o.dir,
                o.done_before + 1, c->shard_size);
    dpz_status st = DPZ_OK;
    if (size > 1) {
        st = dpz__mpi_farm(c, &o, o.done, &e);
        st = commit_rest(c, &o, NULL, st, &e);
    } else if (o.done < c->shard_size) {
        double complex *warm[6] = {NULL};
        for (int i = 0; i < 6; i++) {
            warm[i] = calloc(c->n_vec, sizeof(double complex));
            if (!warm[i])
                st = dpz_err_set(&e, DPZ_ENOMEM,
                                 "sweep: out of memory for the solutions "
                                 "(6 x %zu complex numbers)",
                                 c->n_vec);
        }
        if (st == DPZ_OK && o.done > 0) {
            size_t jp = o.done - 1,
                   pp = dpz_sweep_shard_position(jp, c->shard_index, c->shard_count);
            int slot = read_restart(o.dir, pp, c->wl[pp], c->n_vec, warm);
            /* The next commit writes the other slot: the one read stays valid until the
             * next summary.json is in place. */
            o.commits = slot >= 0 ? (unsigned)slot + 1 : 0;
            if (slot < 0 && o.progress)
                fprintf(stderr,
                        "dipolize: sweep: no restart state for wavelength %zu; the "
                        "next solves start from zero (results agree with an "
                        "uninterrupted run to the solver tolerance)\n",
                        o.done);
        }
        dpz_sweep_result r;
        while (st == DPZ_OK && o.done < c->shard_size) {
            size_t p = dpz_sweep_shard_position(o.done, c->shard_index, c->shard_count);
            progress_start(c, &o, p);
            st = dpz__sweep_compute(c, p, warm, &r, &e);
            if (st == DPZ_OK)
                st = dpz__sweep_record(c, &o, &r, warm, &e);
        }
        st = commit_rest(c, &o, warm, st, &e);
        for (int i = 0; i < 6; i++)
            free(warm[i]);
    }
    for (int t = 0; t < DPZ_TABLE_COUNT; t++)
        if (o.fd[t] >= 0)
            close(o.fd[t]);
    unlock_dir(&o, 1);
    cJSON_Delete(o.summary);
    if (st != DPZ_OK) {
        if (o.progress == 2)
            fputc('\n', stderr);
        cli_fail("%s (%s keeps the %zu finished wavelengths; continue with --resume)",
                 e.msg, o.dir, o.done);
        return CLI_FAILED;
    }
    if (o.any_failed) {
        if (!a->quiet)
            fprintf(stderr,
                    "dipolize: sweep: some wavelengths did not converge (rows with "
                    "converged=0); exit code 1\n");
        return CLI_FAILED;
    }
    return CLI_OK;
}

static int sweep_run(const cli_args *a)
{
    dpz__sweep_ctx c;
    memset(&c, 0, sizeof c);
    c.a = a;
    int rank = 0, size = 1;
    dpz__mpi_start(NULL, NULL, &rank, &size);
    /* Only rank 0 speaks; the other ranks report through it. */
    if (rank > 0) {
        FILE *quiet = freopen("/dev/null", "w", stderr);
        (void)quiet;
    }
    int rc = sweep_body(a, &c, rank, size);
    ctx_free(&c);
    dpz__mpi_stop();
    return rc;
}

int dpz_cli_sweep(int argc, char **argv)
{
    cli_args *a = calloc(1, sizeof *a);
    if (!a)
        return cli_fail("out of memory"), CLI_FAILED;
    int help = 0;
    int rc = cli_parse(&cli_cmd_sweep, argc, argv, 1, a, &help);
    if (rc == CLI_OK) {
        if (help)
            cli_print_help(&cli_cmd_sweep, stdout);
        else
            rc = sweep_run(a);
    }
    free(a);
    return rc;
}
