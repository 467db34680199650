/* sweep_table.c: the files of a sweep directory (docs/sweep-format.md): shard
 * arithmetic, row formatting and scanning of the three CSV tables, atomic file writes
 * and the comparison of the inputs recorded in summary.json. Shared by sweep, --resume,
 * the MPI task farm and merge. */
#include "dpz_sweep.h"

#include <cJSON.h>
#include <errno.h>
#include <fcntl.h>
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "dpz_fileio.h"

#ifndef DPZ_VERSION
#define DPZ_VERSION "unknown"
#endif

size_t dpz_sweep_shard_size(size_t n_total, size_t index, size_t count)
{
    if (count == 0 || index >= count || index >= n_total)
        return 0;
    return (n_total - index - 1) / count + 1;
}

int dpz_sweep_same_wavelength(double a, double b)
{
    return fabs(a - b) <= 4.0 * DBL_EPSILON * fmax(fabs(a), fabs(b));
}

size_t dpz_sweep_shard_position(size_t j, size_t index, size_t count)
{
    return index + j * count;
}

/* ---- table layout ----------------------------------------------------------------- */
/* Indexed by dpz_table_kind: the three tables, then alpha.csv of a refined sweep. */
#define N_KINDS (DPZ_TABLE_COUNT + 1)
static const char *const table_files[N_KINDS] = {"alpha.csv", "cross_sections.csv",
                                                 "diagnostics.csv", "alpha.csv"};
static const char *const table_columns[N_KINDS] = {
    "wavelength_m,block,row,col,re,im,converged",
    "wavelength_m,ext,abs,sca,ext_dipole,abs_dipole,sca_dipole,rel_diff,converged",
    "wavelength_m,iterations,residual,converged,reciprocity,energy_balance,"
    "min_absorption_eig,dipole_validity,min_fluct_eig_m3",
    "wavelength_m,block,row,col,re,im,err_re,err_im,converged"};
static const char *const table_notes[N_KINDS] = {
    "# 6x6 polarizability A = [[ee, em], [me, mm]] mapping [E; Z_h H] to "
    "[p/(eps0 eps_h); Z_h m]\n"
    "# wavelength_m: vacuum wavelength, m; row, col: 0 1 2 = x y z; re, im: m^3\n"
    "# converged: 1 if every solve of the wavelength converged; else 0 and values nan\n",
    "# plane-wave cross sections (incidence in summary.json), m^2; *_dipole: from the "
    "point-dipole tensor alone\n"
    "# wavelength_m: vacuum wavelength, m; rel_diff = |ext - ext_dipole| / ext\n"
    "# converged: 1 if every solve of the wavelength converged; nan where a value is "
    "missing\n",
    "# solver and physics diagnostics per wavelength\n"
    "# iterations, residual: largest over the seven solves (six tensor right-hand sides, "
    "one plane wave)\n"
    "# reciprocity, energy_balance, dipole_validity: relative; min_absorption_eig: "
    "dimensionless; min_fluct_eig_m3: m^3\n",
    "# 6x6 polarizability A = [[ee, em], [me, mm]] mapping [E; Z_h H] to "
    "[p/(eps0 eps_h); Z_h m]\n"
    "# wavelength_m: vacuum wavelength, m; row, col: 0 1 2 = x y z; re, im: m^3\n"
    "# --refine: re, im extrapolated to zero spacing over the levels in summary.json "
    "(refine); err_re, err_im: error estimates of re and im, m^3\n"
    "# converged: 1 if every solve of the wavelength (every level) converged; else 0 and "
    "values nan\n"};
static const char *const block_names[4] = {"ee", "em", "me", "mm"};

const char *dpz_sweep_table_file(dpz_table_kind kind)
{
    return table_files[kind];
}

const char *dpz_sweep_table_columns(dpz_table_kind kind)
{
    return table_columns[kind];
}

size_t dpz_sweep_table_head(dpz_table_kind kind, char *buf, size_t cap)
{
    int n = snprintf(buf, cap, "# dipolize %s sweep table %s\n%s%s\n", DPZ_VERSION,
                     table_files[kind], table_notes[kind], table_columns[kind]);
    return (n < 0 || (size_t)n >= cap) ? 0 : (size_t)n;
}

/* ---- writing rows ----------------------------------------------------------------- */
/* Appends text to buf; on overflow marks *pos as cap (so the caller sees failure). */
typedef struct sbuf {
    char *p;
    size_t cap, pos;
    int overflow;
} sbuf;

/* The shortest of %.15g, %.16g, %.17g that reads back as the same double: exact round
 * trip, and 2e-07 rather than 1.9999999999999999e-07 where the value allows it. */
static int format_exact(char *buf, size_t cap, double v)
{
    int n = 0;
    for (int prec = 15; prec <= 17; prec++) {
        n = snprintf(buf, cap, "%.*g", prec, v);
        if (n < 0 || (size_t)n >= cap || strtod(buf, NULL) == v)
            break;
    }
    return n;
}

static void sb_num(sbuf *s, double v, int available, const char *sep)
{
    if (s->overflow)
        return;
    char num[40];
    if (available && isfinite(v))
        format_exact(num, sizeof num, v);
    else
        snprintf(num, sizeof num, "nan");
    int n = snprintf(s->p + s->pos, s->cap - s->pos, "%s%s", num, sep);
    if (n < 0 || (size_t)n >= s->cap - s->pos) {
        s->overflow = 1;
        return;
    }
    s->pos += (size_t)n;
}

static void sb_text(sbuf *s, const char *fmt_arg_s, unsigned long u, int kind)
{
    if (s->overflow)
        return;
    int n = kind == 0 ? snprintf(s->p + s->pos, s->cap - s->pos, "%s", fmt_arg_s)
                      : snprintf(s->p + s->pos, s->cap - s->pos, "%lu", u);
    if (n < 0 || (size_t)n >= s->cap - s->pos) {
        s->overflow = 1;
        return;
    }
    s->pos += (size_t)n;
}

size_t dpz_sweep_rows(dpz_table_kind kind, const dpz_sweep_result *r, char *buf,
                      size_t cap)
{
    sbuf s = {buf, cap, 0, cap == 0};
    const char *conv = r->converged ? "1\n" : "0\n";
    switch (kind) {
    case DPZ_TABLE_ALPHA:
    case DPZ_TABLE_ALPHA_REFINED:
        for (int b = 0; b < 4; b++)
            for (int i = 0; i < 3; i++)
                for (int j = 0; j < 3; j++) {
                    double complex a = r->A[3 * (b / 2) + i][3 * (b % 2) + j];
                    double complex ae = r->A_err[3 * (b / 2) + i][3 * (b % 2) + j];
                    sb_num(&s, r->lambda0_m, 1, ",");
                    sb_text(&s, block_names[b], 0, 0);
                    sb_text(&s, ",", 0, 0);
                    sb_text(&s, NULL, (unsigned long)i, 1);
                    sb_text(&s, ",", 0, 0);
                    sb_text(&s, NULL, (unsigned long)j, 1);
                    sb_text(&s, ",", 0, 0);
                    sb_num(&s, creal(a), r->have_tensor, ",");
                    sb_num(&s, cimag(a), r->have_tensor, ",");
                    if (kind == DPZ_TABLE_ALPHA_REFINED) {
                        sb_num(&s, creal(ae), r->have_tensor, ",");
                        sb_num(&s, cimag(ae), r->have_tensor, ",");
                    }
                    sb_text(&s, conv, 0, 0);
                }
        break;
    case DPZ_TABLE_XSEC:
        sb_num(&s, r->lambda0_m, 1, ",");
        sb_num(&s, r->ext, r->have_xsec, ",");
        sb_num(&s, r->abs, r->have_xsec, ",");
        sb_num(&s, r->sca, r->have_xsec, ",");
        sb_num(&s, r->ext_dip, r->have_tensor, ",");
        sb_num(&s, r->abs_dip, r->have_tensor, ",");
        sb_num(&s, r->sca_dip, r->have_tensor, ",");
        sb_num(&s, r->rel_diff, r->have_tensor && r->have_xsec, ",");
        sb_text(&s, conv, 0, 0);
        break;
    case DPZ_TABLE_DIAG:
        sb_num(&s, r->lambda0_m, 1, ",");
        sb_text(&s, NULL, (unsigned long)r->iterations, 1);
        sb_text(&s, ",", 0, 0);
        sb_num(&s, r->residual, 1, ",");
        sb_text(&s, r->converged ? "1," : "0,", 0, 0);
        sb_num(&s, r->reciprocity, r->have_tensor, ",");
        sb_num(&s, r->energy_balance, r->have_tensor, ",");
        sb_num(&s, r->min_absorption_eig, r->have_tensor, ",");
        sb_num(&s, r->dipole_validity, r->have_tensor, ",");
        sb_num(&s, r->min_fluct_eig_m3, r->have_tensor, "\n");
        break;
    }
    return s.overflow ? 0 : s.pos;
}

/* ---- reading rows ----------------------------------------------------------------- */
#define MAX_FIELDS 12

/* Splits [line, line+len) at commas into at most MAX_FIELDS fields; returns the count
 * (MAX_FIELDS + 1 when there are more). */
static size_t split(const char *line, size_t len, const char *f[MAX_FIELDS],
                    size_t flen[MAX_FIELDS])
{
    size_t n = 0, start = 0;
    for (size_t i = 0; i <= len; i++) {
        if (i == len || line[i] == ',') {
            if (n == MAX_FIELDS)
                return MAX_FIELDS + 1;
            f[n] = line + start;
            flen[n] = i - start;
            n++;
            start = i + 1;
        }
    }
    return n;
}

/* A decimal number as written by %.17g (finite), or "nan" when allow_nan. */
static int field_number(const char *f, size_t n, int allow_nan, double *out)
{
    char tmp[64];
    if (n == 0 || n >= sizeof tmp)
        return -1;
    memcpy(tmp, f, n);
    tmp[n] = '\0';
    if (strcmp(tmp, "nan") == 0) {
        if (!allow_nan)
            return -1;
        *out = NAN;
        return 0;
    }
    for (size_t i = 0; i < n; i++)
        if (!strchr("0123456789+-.eE", tmp[i]))
            return -1;
    char *end = NULL;
    errno = 0;
    double v = strtod(tmp, &end);
    if (end != tmp + n || !isfinite(v))
        return -1;
    *out = v;
    return 0;
}

static int field_uint(const char *f, size_t n, uint64_t *out)
{
    if (n == 0 || n > 19)
        return -1;
    uint64_t v = 0;
    for (size_t i = 0; i < n; i++) {
        if (f[i] < '0' || f[i] > '9')
            return -1;
        v = v * 10u + (uint64_t)(f[i] - '0');
    }
    *out = v;
    return 0;
}

static int field_is(const char *f, size_t n, const char *s)
{
    return strlen(s) == n && memcmp(f, s, n) == 0;
}

static int field_flag(const char *f, size_t n, int *out)
{
    if (field_is(f, n, "0") || field_is(f, n, "1")) {
        *out = f[0] == '1';
        return 0;
    }
    return -1;
}

dpz_status dpz_sweep_row_parse(dpz_table_kind kind, const char *line, size_t len,
                               dpz_sweep_result *r, int *elem, dpz_err *err)
{
    static const size_t n_expected[N_KINDS] = {7, 9, 9, 9};
    int alpha = kind == DPZ_TABLE_ALPHA || kind == DPZ_TABLE_ALPHA_REFINED;
    const char *f[MAX_FIELDS];
    size_t fl[MAX_FIELDS];
    size_t n = split(line, len, f, fl);
    if (n != n_expected[kind])
        return dpz_err_set(err, DPZ_EFORMAT, "%zu fields where %s has %zu",
                           n > MAX_FIELDS ? (size_t)MAX_FIELDS + 1 : n, table_files[kind],
                           n_expected[kind]);
    if (field_number(f[0], fl[0], 0, &r->lambda0_m) != 0 || !(r->lambda0_m > 0))
        return dpz_err_set(err, DPZ_EFORMAT, "wavelength_m is not a positive number");
    int conv_field = kind == DPZ_TABLE_ALPHA           ? 6
                     : kind == DPZ_TABLE_ALPHA_REFINED ? 8
                     : kind == DPZ_TABLE_XSEC          ? 8
                                                       : 3;
    if (field_flag(f[conv_field], fl[conv_field], &r->converged) != 0)
        return dpz_err_set(err, DPZ_EFORMAT, "converged is not 0 or 1");
    if (alpha) {
        int b = -1;
        for (int i = 0; i < 4; i++)
            if (field_is(f[1], fl[1], block_names[i]))
                b = i;
        if (b < 0)
            return dpz_err_set(err, DPZ_EFORMAT, "block is not ee, em, me or mm");
        uint64_t row, col;
        if (field_uint(f[2], fl[2], &row) != 0 || row > 2 ||
            field_uint(f[3], fl[3], &col) || col > 2)
            return dpz_err_set(err, DPZ_EFORMAT, "row or col is not 0, 1 or 2");
        double re, im;
        if (field_number(f[4], fl[4], 1, &re) != 0 ||
            field_number(f[5], fl[5], 1, &im) != 0)
            return dpz_err_set(err, DPZ_EFORMAT, "re or im is not a number");
        r->A[3 * (b / 2) + (int)row][3 * (b % 2) + (int)col] = CMPLX(re, im);
        if (kind == DPZ_TABLE_ALPHA_REFINED) {
            double er, ei;
            if (field_number(f[6], fl[6], 1, &er) != 0 ||
                field_number(f[7], fl[7], 1, &ei) != 0)
                return dpz_err_set(err, DPZ_EFORMAT, "err_re or err_im is not a number");
            r->A_err[3 * (b / 2) + (int)row][3 * (b % 2) + (int)col] = CMPLX(er, ei);
        }
        r->have_tensor = !isnan(re);
        if (elem)
            *elem = b * 9 + (int)row * 3 + (int)col;
        return DPZ_OK;
    }
    if (kind == DPZ_TABLE_XSEC) {
        double *dst[7] = {&r->ext,     &r->abs,     &r->sca,     &r->ext_dip,
                          &r->abs_dip, &r->sca_dip, &r->rel_diff};
        for (int i = 0; i < 7; i++)
            if (field_number(f[1 + i], fl[1 + i], 1, dst[i]) != 0)
                return dpz_err_set(err, DPZ_EFORMAT, "column %d is not a number", i + 2);
        r->have_xsec = !isnan(r->ext);
        r->have_tensor = !isnan(r->ext_dip);
        return DPZ_OK;
    }
    if (field_uint(f[1], fl[1], &r->iterations) != 0)
        return dpz_err_set(err, DPZ_EFORMAT, "iterations is not a whole number");
    if (field_number(f[2], fl[2], 1, &r->residual) != 0)
        return dpz_err_set(err, DPZ_EFORMAT, "residual is not a number");
    double *dst[5] = {&r->reciprocity, &r->energy_balance, &r->min_absorption_eig,
                      &r->dipole_validity, &r->min_fluct_eig_m3};
    for (int i = 0; i < 5; i++)
        if (field_number(f[4 + i], fl[4 + i], 1, dst[i]) != 0)
            return dpz_err_set(err, DPZ_EFORMAT, "column %d is not a number", i + 5);
    r->have_tensor = !isnan(r->reciprocity);
    return DPZ_OK;
}

/* ---- scanning a table ------------------------------------------------------------- */
void dpz_sweep_table_free(dpz_table *t)
{
    if (!t)
        return;
    free(t->groups);
    t->groups = NULL;
    t->n_groups = 0;
}

static void mark_damage(dpz_table *t, size_t line, const char *what)
{
    t->damaged = 1;
    t->damage_line = line;
    snprintf(t->damage, sizeof t->damage, "%.250s", what);
}

dpz_status dpz_sweep_table_scan(dpz_table_kind kind, const char *name, const char *buf,
                                size_t len, dpz_table *out, dpz_err *err)
{
    memset(out, 0, sizeof *out);
    size_t pos = 0, line_no = 0;
    /* The head: comment lines, then the exact column header. */
    for (;;) {
        const char *nl = pos < len ? memchr(buf + pos, '\n', len - pos) : NULL;
        if (!nl)
            return dpz_err_set(err, DPZ_EFORMAT,
                               "%s: no column header line (expected \"%s\")", name,
                               table_columns[kind]);
        size_t l = (size_t)(nl - (buf + pos));
        line_no++;
        if (l > 0 && buf[pos] == '#') {
            pos += l + 1;
            continue;
        }
        if (!field_is(buf + pos, l, table_columns[kind]))
            return dpz_err_set(err, DPZ_EFORMAT,
                               "%s: line %zu: column header is not \"%s\"", name, line_no,
                               table_columns[kind]);
        pos += l + 1;
        break;
    }
    out->head_end = pos;
    out->good_end = pos;
    int alpha = kind == DPZ_TABLE_ALPHA || kind == DPZ_TABLE_ALPHA_REFINED;
    size_t per_group = alpha ? DPZ_SWEEP_ALPHA_ROWS : 1;
    size_t cap = 0;
    dpz_sweep_result r;
    dpz_table_group g = {0};
    size_t in_group = 0;
    char what[256];
    while (pos < len) {
        const char *nl = memchr(buf + pos, '\n', len - pos);
        line_no++;
        if (!nl) {
            mark_damage(out, line_no, "the last row is cut short (no end of line)");
            break;
        }
        size_t l = (size_t)(nl - (buf + pos));
        dpz_err e;
        int elem = 0;
        memset(&r, 0, sizeof r);
        if (dpz_sweep_row_parse(kind, buf + pos, l, &r, &elem, &e) != DPZ_OK) {
            mark_damage(out, line_no, e.msg);
            break;
        }
        if (in_group == 0) {
            g.lambda0_m = r.lambda0_m;
            g.converged = r.converged;
            g.begin = pos;
            g.first_line = line_no;
        } else if (r.lambda0_m != g.lambda0_m || r.converged != g.converged) {
            snprintf(what, sizeof what,
                     "row %zu of the wavelength that starts at line %zu has another "
                     "wavelength or converged flag (the group of %zu rows is incomplete)",
                     in_group + 1, g.first_line, per_group);
            mark_damage(out, line_no, what);
            break;
        }
        if (alpha && (size_t)elem != in_group) {
            snprintf(what, sizeof what,
                     "element %s[%d][%d] out of order (expected block/row/col %zu of 36)",
                     block_names[elem / 9], elem / 3 % 3, elem % 3, in_group + 1);
            mark_damage(out, line_no, what);
            break;
        }
        pos += l + 1;
        if (++in_group == per_group) {
            g.end = pos;
            if (out->n_groups == cap) {
                size_t ncap = cap ? 2 * cap : 64;
                dpz_table_group *ng = dpz__realloc(out->groups, ncap * sizeof *ng);
                if (!ng) {
                    dpz_sweep_table_free(out);
                    return dpz_err_set(err, DPZ_ENOMEM, "%s: out of memory", name);
                }
                out->groups = ng;
                cap = ncap;
            }
            out->groups[out->n_groups++] = g;
            out->good_end = pos;
            in_group = 0;
        }
    }
    if (!out->damaged && in_group > 0) {
        snprintf(what, sizeof what,
                 "the wavelength that starts at line %zu has %zu of its %zu rows",
                 g.first_line, in_group, per_group);
        mark_damage(out, g.first_line, what);
    }
    return DPZ_OK;
}

/* ---- files ------------------------------------------------------------------------ */
dpz_status dpz_sweep_read_file(const char *path, char **buf, size_t *len, dpz_err *err)
{
    return dpz_file_read_all(path, NULL, 0, buf, len, err);
}

static dpz_status fsync_dir(const char *dir, dpz_err *err)
{
    int fd = open(dir, O_RDONLY);
    if (fd < 0)
        return dpz_err_set(err, DPZ_EIO, "%s: cannot open directory: %s", dir,
                           strerror(errno));
    int rc = fsync(fd);
    int e = errno;
    close(fd);
    /* Some file systems do not support fsync on directories (EINVAL); the rename is then
     * as durable as that file system makes it. */
    if (rc != 0 && e != EINVAL)
        return dpz_err_set(err, DPZ_EIO, "%s: fsync failed: %s", dir, strerror(e));
    return DPZ_OK;
}

dpz_status dpz_sweep_write_atomic_parts(const char *dir, const char *name,
                                        const void *const *parts, const size_t *lens,
                                        size_t n_parts, dpz_err *err)
{
    char tmp[4096], dst[4096];
    int n1 = snprintf(dst, sizeof dst, "%s/%s", dir, name);
    int n2 = snprintf(tmp, sizeof tmp, "%s/.%s.tmpXXXXXX", dir, name);
    if (n1 < 0 || n2 < 0 || (size_t)n1 >= sizeof dst || (size_t)n2 >= sizeof tmp)
        return dpz_err_set(err, DPZ_EINVAL, "%s/%s: path too long", dir, name);
    int fd = mkstemp(tmp);
    if (fd < 0)
        return dpz_err_set(err, DPZ_EIO, "%s: cannot create a file: %s", dir,
                           strerror(errno));
    for (size_t k = 0; k < n_parts; k++) {
        const char *p = parts[k];
        size_t left = lens[k];
        while (left > 0) {
            ssize_t w = write(fd, p, left);
            if (w < 0) {
                if (errno == EINTR)
                    continue;
                int e = errno;
                close(fd);
                unlink(tmp);
                return dpz_err_set(err, DPZ_EIO, "%s: write failed: %s", dst,
                                   strerror(e));
            }
            p += w;
            left -= (size_t)w;
        }
    }
    /* mkstemp creates mode 0600; the tables are ordinary output files. */
    if (fchmod(fd, 0644) != 0 || fsync(fd) != 0) {
        int e = errno;
        close(fd);
        unlink(tmp);
        return dpz_err_set(err, DPZ_EIO, "%s: fsync failed: %s", dst, strerror(e));
    }
    if (close(fd) != 0 || rename(tmp, dst) != 0) {
        int e = errno;
        unlink(tmp);
        return dpz_err_set(err, DPZ_EIO, "%s: cannot write: %s", dst, strerror(e));
    }
    return fsync_dir(dir, err);
}

dpz_status dpz_sweep_write_atomic(const char *dir, const char *name, const void *data,
                                  size_t len, dpz_err *err)
{
    const void *parts[1] = {data};
    return dpz_sweep_write_atomic_parts(dir, name, parts, &len, 1, err);
}

/* ---- comparing inputs ------------------------------------------------------------- */
/* Removes every member named "path" below `o` (paths of input files may differ between
 * machines; their content is compared through sha256). */
static void drop_paths(cJSON *o)
{
    if (!o)
        return;
    if (cJSON_IsObject(o))
        cJSON_DeleteItemFromObjectCaseSensitive(o, "path");
    for (cJSON *c = o->child; c; c = c->next)
        drop_paths(c);
}

const char *dpz_sweep_inputs_differ(const char *summary_a, const char *summary_b,
                                    int with_shard)
{
    /* "refine" (--refine levels and spacings) is absent from runs without it; absent on
     * both sides counts as equal. */
    static const char *const keys[] = {"version",       "input",  "materials", "options",
                                       "wavelengths_m", "refine", "shard"};
    cJSON *a = cJSON_Parse(summary_a), *b = cJSON_Parse(summary_b);
    const char *diff = NULL;
    if (!cJSON_IsObject(a) || !cJSON_IsObject(b)) {
        diff = "summary";
        goto done;
    }
    for (size_t i = 0; i < sizeof keys / sizeof keys[0]; i++) {
        if (!with_shard && strcmp(keys[i], "shard") == 0)
            continue;
        cJSON *x = cJSON_GetObjectItemCaseSensitive(a, keys[i]);
        cJSON *y = cJSON_GetObjectItemCaseSensitive(b, keys[i]);
        if (!x && !y && strcmp(keys[i], "refine") == 0)
            continue;
        if (!x || !y) {
            diff = keys[i];
            break;
        }
        drop_paths(x);
        drop_paths(y);
        if (!cJSON_Compare(x, y, 1)) {
            diff = keys[i];
            break;
        }
    }
done:
    cJSON_Delete(a);
    cJSON_Delete(b);
    return diff;
}
