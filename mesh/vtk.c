/* vtk.c: VTK legacy STRUCTURED_POINTS voxel files (see dpz_voxio.h). The format is the
 * legacy one described in Kitware, "VTK File Formats" (VTK User's Guide, 11th ed., 2010,
 * ch. 19): four header lines, then keywords; binary data are big-endian. */
#include "dpz_voxio.h"

#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sys/stat.h>
#include <unistd.h>

#include "dpz_fileio.h"
#include "dpz_shape.h"
#include "mesh_int.h"

#define WHO "vtk reader"
#define MAX_LINE 1100 /* titles up to the grid's source record (1023) plus margin */

typedef struct {
    const char *buf;
    size_t len, pos;
    size_t line; /* number of the line that starts at pos (1-based) */
    const char *name;
    dpz_err *err;
} cursor;

/* Copies the next line (without its end of line) into out; returns 0 at end of input,
 * -1 for a line too long (error set), 1 otherwise. `lineno` receives its number. */
static int next_line(cursor *c, char out[MAX_LINE], size_t *lineno)
{
    if (c->pos >= c->len)
        return 0;
    size_t start = c->pos, end = start;
    while (end < c->len && c->buf[end] != '\n')
        end++;
    size_t n = end - start;
    if (n > 0 && c->buf[start + n - 1] == '\r')
        n--;
    *lineno = c->line;
    if (n >= MAX_LINE) {
        dpz_err_set(c->err, DPZ_EFORMAT,
                    WHO ": %s: line %zu: line longer than %d characters", c->name,
                    c->line, MAX_LINE - 1);
        return -1;
    }
    memcpy(out, c->buf + start, n);
    out[n] = '\0';
    if (memchr(out, '\0', n)) {
        dpz_err_set(c->err, DPZ_EFORMAT, WHO ": %s: line %zu: NUL byte in a text line",
                    c->name, c->line);
        return -1;
    }
    c->pos = end < c->len ? end + 1 : end;
    c->line++;
    return 1;
}

/* Next non-blank line. */
static int next_content_line(cursor *c, char out[MAX_LINE], size_t *lineno)
{
    for (;;) {
        int r = next_line(c, out, lineno);
        if (r <= 0)
            return r;
        if (strspn(out, " \t") != strlen(out))
            return 1;
    }
}

/* Splits a line into at most `max` whitespace-separated words (in place). */
static int split_words(char *line, char **words, int max)
{
    int n = 0;
    char *save = NULL;
    for (char *w = strtok_r(line, " \t", &save); w; w = strtok_r(NULL, " \t", &save)) {
        if (n == max)
            return max + 1;
        words[n++] = w;
    }
    return n;
}

static int parse_real(const char *s, double *v)
{
    char *end;
    errno = 0;
    *v = strtod(s, &end);
    return end != s && *end == '\0' && isfinite(*v) ? 0 : -1;
}

static int parse_count(const char *s, size_t *v)
{
    if (*s < '0' || *s > '9')
        return -1;
    char *end;
    errno = 0;
    unsigned long long x = strtoull(s, &end, 10);
    if (*end != '\0' || errno == ERANGE || x > (unsigned long long)SIZE_MAX)
        return -1;
    *v = (size_t)x;
    return 0;
}

typedef enum {
    T_UCHAR,
    T_CHAR,
    T_SHORT,
    T_USHORT,
    T_INT,
    T_UINT,
    T_FLOAT,
    T_DOUBLE
} vtype;

static const struct {
    const char *name;
    vtype type;
    size_t size;
} vtypes[] = {
    {"unsigned_char", T_UCHAR, 1},   {"char", T_CHAR, 1},    {"short", T_SHORT, 2},
    {"unsigned_short", T_USHORT, 2}, {"int", T_INT, 4},      {"unsigned_int", T_UINT, 4},
    {"float", T_FLOAT, 4},           {"double", T_DOUBLE, 8}};

/* Decodes one big-endian binary value. */
static double decode_be(const unsigned char *p, vtype t)
{
    switch (t) {
    case T_UCHAR:
        return p[0];
    case T_CHAR:
        return (signed char)p[0];
    case T_SHORT:
        return (int16_t)(uint16_t)((unsigned)p[0] << 8 | p[1]);
    case T_USHORT:
        return (uint16_t)((unsigned)p[0] << 8 | p[1]);
    case T_INT:
    case T_UINT:
    case T_FLOAT: {
        uint32_t u =
            (uint32_t)p[0] << 24 | (uint32_t)p[1] << 16 | (uint32_t)p[2] << 8 | p[3];
        if (t == T_INT)
            return (int32_t)u;
        if (t == T_UINT)
            return u;
        float f;
        memcpy(&f, &u, 4);
        return f;
    }
    case T_DOUBLE: {
        uint64_t u = 0;
        for (int b = 0; b < 8; b++)
            u = u << 8 | p[b];
        double d;
        memcpy(&d, &u, 8);
        return d;
    }
    }
    return NAN;
}

/* Reads `n` values of one array into the destination (labels or fill), converting from
 * VTK's x-fastest order. dest_kind 0: labels, 1: fill, 2: skip. */
typedef struct {
    size_t nx, ny, nz;
} dims3;

static size_t vtk_to_grid(const dims3 *d, size_t v)
{
    size_t i = v % d->nx, rest = v / d->nx;
    size_t j = rest % d->ny, k = rest / d->ny;
    return (i * d->ny + j) * d->nz + k;
}

static dpz_status store_value(cursor *c, double v, size_t v_index, const dims3 *d,
                              int dest_kind, uint8_t *label, float *fill,
                              const char *where, size_t at)
{
    size_t g = vtk_to_grid(d, v_index);
    if (dest_kind == 0) {
        if (!(v >= 0.0 && v <= 255.0) || v != floor(v))
            return dpz_err_set(c->err, isnan(v) ? DPZ_EFORMAT : DPZ_ERANGE,
                               WHO ": %s: %s %zu: label %g is not an integer in 0..255",
                               c->name, where, at, v);
        label[g] = (uint8_t)v;
    } else if (dest_kind == 1) {
        if (!(v >= 0.0 && v <= 1.0))
            return dpz_err_set(c->err, isnan(v) ? DPZ_EFORMAT : DPZ_ERANGE,
                               WHO ": %s: %s %zu: fill fraction %g is outside [0, 1]",
                               c->name, where, at, v);
        fill[g] = (float)v;
    }
    return DPZ_OK;
}

static dpz_status read_binary(cursor *c, size_t n, vtype t, size_t size, const dims3 *d,
                              int dest_kind, uint8_t *label, float *fill)
{
    size_t bytes;
    if (dpz_mul_overflow(n, size, &bytes) != 0 || bytes > c->len - c->pos)
        return dpz_err_set(c->err, DPZ_EFORMAT,
                           WHO ": %s: byte %zu: truncated binary data: %zu values of %zu "
                               "bytes expected, %zu bytes left",
                           c->name, c->pos, n, size, c->len - c->pos);
    const unsigned char *p = (const unsigned char *)c->buf + c->pos;
    /* Keep counting lines through the block, so that later messages match an editor. */
    for (const char *q = c->buf + c->pos, *e = q + bytes;
         (q = memchr(q, '\n', (size_t)(e - q))); q++)
        c->line++;
    if (dest_kind != 2)
        for (size_t v = 0; v < n; v++) {
            dpz_status st = store_value(c, decode_be(p + v * size, t), v, d, dest_kind,
                                        label, fill, "byte", c->pos + v * size);
            if (st != DPZ_OK)
                return st;
        }
    c->pos += bytes;
    /* Binary blocks end with a line break before the next keyword. */
    if (c->pos < c->len && c->buf[c->pos] == '\r')
        c->pos++;
    if (c->pos < c->len && c->buf[c->pos] == '\n') {
        c->pos++;
        c->line++;
    }
    return DPZ_OK;
}

static dpz_status read_ascii(cursor *c, size_t n, const dims3 *d, int dest_kind,
                             uint8_t *label, float *fill)
{
    size_t v = 0;
    while (v < n) {
        while (c->pos < c->len && strchr(" \t\r\n", c->buf[c->pos]) && c->buf[c->pos]) {
            if (c->buf[c->pos] == '\n')
                c->line++;
            c->pos++;
        }
        if (c->pos >= c->len)
            return dpz_err_set(c->err, DPZ_EFORMAT,
                               WHO
                               ": %s: line %zu: truncated data: %zu of %zu values read",
                               c->name, c->line, v, n);
        char tok[64];
        size_t k = 0;
        while (c->pos < c->len && !strchr(" \t\r\n", c->buf[c->pos]) && c->buf[c->pos]) {
            if (k + 1 >= sizeof tok)
                return dpz_err_set(c->err, DPZ_EFORMAT,
                                   WHO ": %s: line %zu: value too long", c->name,
                                   c->line);
            tok[k++] = c->buf[c->pos++];
        }
        tok[k] = '\0';
        if (k == 0) /* a NUL byte */
            return dpz_err_set(c->err, DPZ_EFORMAT,
                               WHO ": %s: line %zu: NUL byte in data", c->name, c->line);
        char *end;
        double x = strtod(tok, &end);
        if (*end != '\0')
            return dpz_err_set(c->err, DPZ_EFORMAT,
                               WHO ": %s: line %zu: '%s' is not a number", c->name,
                               c->line, tok);
        dpz_status st = store_value(c, x, v, d, dest_kind, label, fill, "line", c->line);
        if (st != DPZ_OK)
            return st;
        v++;
    }
    /* Finish the current line. */
    while (c->pos < c->len &&
           (c->buf[c->pos] == ' ' || c->buf[c->pos] == '\t' || c->buf[c->pos] == '\r'))
        c->pos++;
    if (c->pos < c->len && c->buf[c->pos] == '\n') {
        c->pos++;
        c->line++;
    }
    return DPZ_OK;
}

/* Skips a METADATA block: lines up to the first empty one (or the end of the input). */
static dpz_status skip_metadata(cursor *c)
{
    char line[MAX_LINE];
    size_t ln;
    for (;;) {
        int r = next_line(c, line, &ln);
        if (r < 0)
            return c->err ? c->err->code : DPZ_EFORMAT;
        if (r == 0 || strspn(line, " \t") == strlen(line))
            return DPZ_OK;
    }
}

/* Restores the geometry source from the title line. */
static dpz_status parse_title(cursor *c, const char *title, dpz_grid *g)
{
    size_t tl = strlen(title);
    int ours =
        strncmp(title, DPZ_SHAPE_RECORD_PREFIX, strlen(DPZ_SHAPE_RECORD_PREFIX)) == 0 ||
        strncmp(title, "dipolize-mesh v1 ", 17) == 0;
    if (ours && tl >= sizeof g->source)
        return dpz_err_set(c->err, DPZ_EFORMAT,
                           WHO ": %s: line 2: source record longer than %zu characters",
                           c->name, sizeof g->source - 1);
    if (strncmp(title, DPZ_SHAPE_RECORD_PREFIX, strlen(DPZ_SHAPE_RECORD_PREFIX)) == 0) {
        dpz_shape s;
        dpz_err sub;
        if (dpz_shape_parse_record(title, &s, &sub) != DPZ_OK)
            return dpz_err_set(c->err, DPZ_EFORMAT,
                               WHO ": %s: line 2: bad shape record: %s", c->name,
                               sub.msg);
        g->source_kind = DPZ_SOURCE_SHAPE;
        memcpy(g->source, title, tl + 1);
    } else if (strncmp(title, "dipolize-mesh v1 ", 17) == 0) {
        g->source_kind = DPZ_SOURCE_MESH;
        memcpy(g->source, title, tl + 1);
    } else {
        g->source_kind = DPZ_SOURCE_VOXELS;
        g->source[0] = '\0';
    }
    return DPZ_OK;
}

dpz_status dpz_vtk_read(dpz_grid **out, const char *buf, size_t len, const char *name,
                        size_t max_cells, dpz_err *err)
{
    if (!out)
        return dpz_err_set(err, DPZ_EINVAL, WHO ": output pointer is NULL");
    *out = NULL;
    if (!buf && len)
        return dpz_err_set(err, DPZ_EINVAL, WHO ": NULL buffer");
    if (!name)
        name = "(buffer)";
    if (max_cells == 0)
        max_cells = DPZ_GRID_DEFAULT_MAX_CELLS;
    cursor c = {buf ? buf : "", len, 0, 1, name, err};
    char line[MAX_LINE], title[MAX_LINE];
    size_t ln;
    int r = next_line(&c, line, &ln);
    if (r < 0)
        return err ? err->code : DPZ_EFORMAT;
    if (r == 0 || strncmp(line, "# vtk DataFile Version", 22) != 0)
        return dpz_err_set(
            err, DPZ_EFORMAT,
            WHO ": %s: line 1: not a VTK legacy file (expected '# vtk DataFile "
                "Version x.x')",
            name);
    r = next_line(&c, title, &ln);
    if (r <= 0)
        return r < 0 ? err ? err->code : DPZ_EFORMAT
                     : dpz_err_set(err, DPZ_EFORMAT,
                                   WHO ": %s: line 2: title line missing", name);
    r = next_line(&c, line, &ln);
    int binary;
    char *w[8];
    int nw = r > 0 ? split_words(line, w, 8) : 0;
    if (r < 0)
        return err ? err->code : DPZ_EFORMAT;
    if (nw == 1 && strcasecmp(w[0], "ASCII") == 0)
        binary = 0;
    else if (nw == 1 && strcasecmp(w[0], "BINARY") == 0)
        binary = 1;
    else
        return dpz_err_set(err, DPZ_EFORMAT, WHO ": %s: line 3: expected ASCII or BINARY",
                           name);
    r = next_content_line(&c, line, &ln);
    if (r < 0)
        return err ? err->code : DPZ_EFORMAT;
    nw = r > 0 ? split_words(line, w, 8) : 0;
    if (nw != 2 || strcasecmp(w[0], "DATASET") != 0 ||
        strcasecmp(w[1], "STRUCTURED_POINTS") != 0)
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO
                           ": %s: line %zu: expected 'DATASET STRUCTURED_POINTS' (other "
                           "dataset types are not voxel grids)",
                           name, r > 0 ? ln : c.line);

    size_t dim[3] = {0, 0, 0};
    double sp[3] = {0, 0, 0}, org[3] = {0, 0, 0};
    int have_dim = 0, have_sp = 0, have_org = 0;
    size_t sp_line = 0;
    /* Geometry keywords, until POINT_DATA or CELL_DATA. */
    int cell_data = -1;
    size_t n_data = 0;
    for (;;) {
        r = next_content_line(&c, line, &ln);
        if (r < 0)
            return err ? err->code : DPZ_EFORMAT;
        if (r == 0)
            return dpz_err_set(err, DPZ_EFORMAT,
                               WHO ": %s: line %zu: no POINT_DATA or CELL_DATA section",
                               name, c.line);
        nw = split_words(line, w, 8);
        if (strcasecmp(w[0], "DIMENSIONS") == 0) {
            if (nw != 4 || parse_count(w[1], &dim[0]) || parse_count(w[2], &dim[1]) ||
                parse_count(w[3], &dim[2]))
                return dpz_err_set(err, DPZ_EFORMAT,
                                   WHO
                                   ": %s: line %zu: DIMENSIONS needs three non-negative "
                                   "integers",
                                   name, ln);
            have_dim = 1;
        } else if (strcasecmp(w[0], "SPACING") == 0 ||
                   strcasecmp(w[0], "ASPECT_RATIO") == 0) {
            if (nw != 4 || parse_real(w[1], &sp[0]) || parse_real(w[2], &sp[1]) ||
                parse_real(w[3], &sp[2]))
                return dpz_err_set(
                    err, DPZ_EFORMAT,
                    WHO ": %s: line %zu: SPACING needs three finite numbers", name, ln);
            have_sp = 1;
            sp_line = ln;
        } else if (strcasecmp(w[0], "ORIGIN") == 0) {
            if (nw != 4 || parse_real(w[1], &org[0]) || parse_real(w[2], &org[1]) ||
                parse_real(w[3], &org[2]))
                return dpz_err_set(
                    err, DPZ_EFORMAT,
                    WHO ": %s: line %zu: ORIGIN needs three finite numbers", name, ln);
            have_org = 1;
        } else if (strcasecmp(w[0], "POINT_DATA") == 0 ||
                   strcasecmp(w[0], "CELL_DATA") == 0) {
            cell_data = strcasecmp(w[0], "CELL_DATA") == 0;
            if (nw != 2 || parse_count(w[1], &n_data))
                return dpz_err_set(err, DPZ_EFORMAT,
                                   WHO ": %s: line %zu: %s needs one count", name, ln,
                                   w[0]);
            break;
        } else {
            return dpz_err_set(err, DPZ_EFORMAT,
                               WHO
                               ": %s: line %zu: unexpected keyword '%s' in the geometry "
                               "section",
                               name, ln, w[0]);
        }
    }
    if (!have_dim || !have_sp)
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO ": %s: line %zu: %s missing before the data", name, ln,
                           have_dim ? "SPACING" : "DIMENSIONS");
    (void)have_org; /* ORIGIN defaults to (0, 0, 0), as in VTK */
    if (!(sp[0] > 0.0))
        return dpz_err_set(err, DPZ_ERANGE,
                           WHO ": %s: line %zu: SPACING must be positive (got %g %g %g)",
                           name, sp_line, sp[0], sp[1], sp[2]);
    for (int a = 1; a < 3; a++)
        if (fabs(sp[a] - sp[0]) > 1e-9 * sp[0])
            return dpz_err_set(err, DPZ_EFORMAT,
                               WHO
                               ": %s: line %zu: SPACING must be equal on all axes (got "
                               "%.9g %.9g %.9g): voxels must be cubes",
                               name, sp_line, sp[0], sp[1], sp[2]);
    size_t nv[3];
    for (int a = 0; a < 3; a++) {
        if (dim[a] == 0)
            return dpz_err_set(err, DPZ_EFORMAT,
                               WHO ": %s: DIMENSIONS must be >= 1 (got %zu %zu "
                                   "%zu)",
                               name, dim[0], dim[1], dim[2]);
        nv[a] = cell_data ? (dim[a] > 1 ? dim[a] - 1 : 1) : dim[a];
    }
    size_t n01, total;
    if (dpz_mul_overflow(nv[0], nv[1], &n01) || dpz_mul_overflow(n01, nv[2], &total))
        return dpz_err_set(err, DPZ_ELIMIT,
                           WHO ": %s: DIMENSIONS %zu %zu %zu: the voxel count overflows",
                           name, dim[0], dim[1], dim[2]);
    if (total > max_cells)
        return dpz_err_set(err, DPZ_ELIMIT,
                           WHO
                           ": %s: %zu x %zu x %zu = %zu voxels exceed the limit of %zu "
                           "(raise the voxel limit to read this file)",
                           name, nv[0], nv[1], nv[2], total, max_cells);
    if (n_data != total)
        return dpz_err_set(
            err, DPZ_EFORMAT,
            WHO ": %s: line %zu: %s count %zu does not match DIMENSIONS (%zu "
                "values expected)",
            name, ln, cell_data ? "CELL_DATA" : "POINT_DATA", n_data, total);

    /* Before allocating: the rest of the input must be able to hold the values (one byte
     * each in binary, a digit and a separator in ASCII), so that a short file claiming
     * a huge grid fails at once. */
    size_t left = c.len - c.pos;
    if (binary ? left < total : left / 2 + 1 < total)
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO
                           ": %s: line %zu: truncated file: %zu values announced, only "
                           "%zu bytes follow",
                           name, ln, total, left);
    dpz_grid *g = NULL;
    dpz_status st = dpz_grid_create(&g, nv[0], nv[1], nv[2], sp[0], max_cells, err);
    if (st != DPZ_OK)
        return st;
    for (int a = 0; a < 3; a++)
        g->origin[a] = org[a] + (cell_data ? 0.5 * sp[a] : 0.0);
    st = parse_title(&c, title, g);
    if (st != DPZ_OK)
        goto fail;

    dims3 d3 = {nv[0], nv[1], nv[2]};
    int have_labels = 0;
    for (;;) {
        r = next_content_line(&c, line, &ln);
        if (r < 0) {
            st = err ? err->code : DPZ_EFORMAT;
            goto fail;
        }
        if (r == 0)
            break;
        nw = split_words(line, w, 8);
        if (strcasecmp(w[0], "METADATA") == 0) {
            /* Information keys written by recent VTK versions: text lines up to an empty
             * line. Nothing in them is needed. */
            st = skip_metadata(&c);
            if (st != DPZ_OK)
                goto fail;
            continue;
        }
        size_t narrays = 1;
        int field = strcasecmp(w[0], "FIELD") == 0;
        if (field) {
            if (nw != 3 || parse_count(w[2], &narrays)) {
                st = dpz_err_set(err, DPZ_EFORMAT,
                                 WHO
                                 ": %s: line %zu: FIELD needs a name and an array count",
                                 name, ln);
                goto fail;
            }
        } else if (strcasecmp(w[0], "SCALARS") != 0) {
            st = dpz_err_set(
                err, DPZ_EFORMAT,
                WHO
                ": %s: line %zu: unexpected '%s' (only SCALARS and FIELD arrays of one "
                "POINT_DATA or CELL_DATA section are read)",
                name, ln, w[0]);
            goto fail;
        }
        for (size_t fa = 0; fa < narrays; fa++) {
            /* SCALARS name type [components] | FIELD array: name components tuples type
             */
            const char *aname, *tname;
            size_t ncomp = 1, ntuples = total;
            if (field) {
                r = next_content_line(&c, line, &ln);
                if (r <= 0) {
                    st = r < 0
                             ? (err ? err->code : DPZ_EFORMAT)
                             : dpz_err_set(err, DPZ_EFORMAT,
                                           WHO ": %s: line %zu: FIELD array %zu missing",
                                           name, c.line, fa + 1);
                    goto fail;
                }
                nw = split_words(line, w, 8);
                if (nw != 4 || parse_count(w[1], &ncomp) || parse_count(w[2], &ntuples)) {
                    st = dpz_err_set(err, DPZ_EFORMAT,
                                     WHO ": %s: line %zu: a FIELD array needs 'name "
                                         "components tuples type'",
                                     name, ln);
                    goto fail;
                }
                aname = w[0];
                tname = w[3];
                if (ntuples != total) {
                    st = dpz_err_set(err, DPZ_EFORMAT,
                                     WHO
                                     ": %s: line %zu: FIELD array '%s' has %zu tuples, "
                                     "%zu expected",
                                     name, ln, aname, ntuples, total);
                    goto fail;
                }
            } else {
                if (nw < 3 || nw > 4) {
                    st = dpz_err_set(
                        err, DPZ_EFORMAT,
                        WHO ": %s: line %zu: SCALARS needs a name and a type", name, ln);
                    goto fail;
                }
                if (nw == 4 && (parse_count(w[3], &ncomp) || ncomp != 1)) {
                    st = dpz_err_set(
                        err, DPZ_EFORMAT,
                        WHO ": %s: line %zu: SCALARS must have one component", name, ln);
                    goto fail;
                }
                aname = w[1];
                tname = w[2];
            }
            int ti = -1;
            for (int q = 0; q < (int)(sizeof vtypes / sizeof vtypes[0]); q++)
                if (strcasecmp(tname, vtypes[q].name) == 0)
                    ti = q;
            if (ti < 0) {
                st = dpz_err_set(
                    err, DPZ_EFORMAT,
                    WHO ": %s: line %zu: unsupported scalar type '%s' (use "
                        "unsigned_char, char, short, unsigned_short, int, unsigned_int, "
                        "float or double)",
                    name, ln, tname);
                goto fail;
            }
            /* Labels: the first SCALARS array not named "fill", or a FIELD array named
             * "labels"; fill: an array named "fill"; anything else is skipped. */
            int dest = 2;
            if (strcmp(aname, "fill") == 0 && ncomp == 1) {
                if (g->fill) {
                    st = dpz_err_set(err, DPZ_EFORMAT,
                                     WHO ": %s: line %zu: second 'fill' array", name, ln);
                    goto fail;
                }
                g->fill = dpz__calloc(total, sizeof *g->fill);
                if (!g->fill) {
                    st = dpz_err_set(err, DPZ_ENOMEM,
                                     WHO ": %s: out of memory for fill fractions", name);
                    goto fail;
                }
                dest = 1;
            } else if (!have_labels && ncomp == 1 &&
                       (!field || strcmp(aname, "labels") == 0)) {
                have_labels = 1;
                dest = 0;
            }
            size_t nvalues;
            if (dpz_mul_overflow(ncomp, ntuples, &nvalues)) {
                st = dpz_err_set(err, DPZ_ELIMIT, WHO ": %s: line %zu: array too large",
                                 name, ln);
                goto fail;
            }
            if (!field) {
                /* An optional LOOKUP_TABLE line precedes the values. Peek without
                 * reading a line: without it, binary data (NUL bytes included) follow
                 * directly. */
                size_t peek = c.pos;
                while (peek < c.len && strchr(" \t\r\n", c.buf[peek]) && c.buf[peek])
                    peek++;
                if (c.len - peek >= 12 &&
                    strncasecmp(c.buf + peek, "LOOKUP_TABLE", 12) == 0) {
                    r = next_content_line(&c, line, &ln);
                    if (r < 0) {
                        st = err ? err->code : DPZ_EFORMAT;
                        goto fail;
                    }
                    char *lw[4];
                    if (split_words(line, lw, 4) != 2) {
                        st = dpz_err_set(
                            err, DPZ_EFORMAT,
                            WHO ": %s: line %zu: LOOKUP_TABLE needs one name", name, ln);
                        goto fail;
                    }
                }
            }
            if (binary)
                st = read_binary(&c, nvalues, vtypes[ti].type, vtypes[ti].size, &d3, dest,
                                 g->label, g->fill);
            else
                st = read_ascii(&c, nvalues, &d3, dest, g->label, g->fill);
            if (st != DPZ_OK)
                goto fail;
        }
    }
    if (!have_labels) {
        st = dpz_err_set(err, DPZ_EFORMAT,
                         WHO ": %s: no label array (SCALARS, or a FIELD array named "
                             "'labels') in the file",
                         name);
        goto fail;
    }
    st = dpz_grid_update(g, err);
    if (st != DPZ_OK)
        goto fail;
    *out = g;
    return DPZ_OK;
fail:
    dpz_grid_destroy(g);
    return st;
}

dpz_status dpz_vtk_read_file(dpz_grid **out, const char *path, size_t max_cells,
                             dpz_err *err)
{
    if (out)
        *out = NULL;
    char *buf;
    size_t len;
    dpz_status st = dpz_file_read_all(path, WHO, 0, &buf, &len, err);
    if (st != DPZ_OK)
        return st;
    st = dpz_vtk_read(out, buf, len, path, max_cells, err);
    dpz__free(buf);
    return st;
}

/* ---- writer ---- */

static void put_be32(unsigned char *p, uint32_t u)
{
    p[0] = (unsigned char)(u >> 24);
    p[1] = (unsigned char)(u >> 16);
    p[2] = (unsigned char)(u >> 8);
    p[3] = (unsigned char)u;
}

dpz_status dpz_vtk_write_file(const dpz_grid *grid, const char *path, dpz_err *err)
{
    if (!grid || !grid->label || !path)
        return dpz_err_set(err, DPZ_EINVAL, "vtk writer: NULL argument");
    const char *title = grid->source_kind == DPZ_SOURCE_VOXELS || grid->source[0] == '\0'
                            ? DPZ_VTK_TITLE_VOXELS
                            : grid->source;
    if (strpbrk(title, "\r\n") ||
        strnlen(title, sizeof grid->source) >= sizeof grid->source)
        return dpz_err_set(err, DPZ_EINVAL,
                           "vtk writer: %s: the source record must be one line", path);
    size_t plen = strlen(path);
    char *tmp = dpz__malloc(plen + 16);
    if (!tmp)
        return dpz_err_set(err, DPZ_ENOMEM, "vtk writer: out of memory");
    memcpy(tmp, path, plen);
    memcpy(tmp + plen, ".tmp-XXXXXX", 12);
    int fd = mkstemp(tmp);
    if (fd < 0) {
        dpz_status st =
            dpz_err_set(err, DPZ_EIO, "vtk writer: %s: cannot create a file: %s", path,
                        strerror(errno));
        dpz__free(tmp);
        return st;
    }
    /* mkstemp creates mode 0600; give the file the usual 0666 less the umask. */
    mode_t mask = umask(0);
    umask(mask);
    if (fchmod(fd, 0666 & ~mask) != 0) {
        close(fd);
        unlink(tmp);
        dpz__free(tmp);
        return dpz_err_set(err, DPZ_EIO, "vtk writer: %s: cannot set permissions", path);
    }
    FILE *f = fdopen(fd, "wb");
    if (!f) {
        close(fd);
        unlink(tmp);
        dpz__free(tmp);
        return dpz_err_set(err, DPZ_EIO, "vtk writer: %s: cannot open a stream", path);
    }
    size_t nx = grid->nx, ny = grid->ny, nz = grid->nz, n = nx * ny * nz;
    int ok = fprintf(f,
                     "# vtk DataFile Version 3.0\n%s\nBINARY\nDATASET STRUCTURED_POINTS\n"
                     "DIMENSIONS %zu %zu %zu\nSPACING %.17g %.17g %.17g\n"
                     "ORIGIN %.17g %.17g %.17g\nPOINT_DATA %zu\n"
                     "SCALARS labels unsigned_char 1\nLOOKUP_TABLE default\n",
                     title, nx, ny, nz, grid->d, grid->d, grid->d, grid->origin[0],
                     grid->origin[1], grid->origin[2], n) > 0;
    /* One x-row at a time, so that the buffer is small: VTK runs x fastest. */
    unsigned char row[4096];
    for (size_t k = 0; ok && k < nz; k++)
        for (size_t j = 0; ok && j < ny; j++)
            for (size_t i0 = 0; ok && i0 < nx; i0 += sizeof row) {
                size_t m = nx - i0 < sizeof row ? nx - i0 : sizeof row;
                for (size_t q = 0; q < m; q++)
                    row[q] = grid->label[dpz_grid_index(grid, i0 + q, j, k)];
                ok = fwrite(row, 1, m, f) == m;
            }
    if (ok && grid->fill) {
        ok = fprintf(f, "\nSCALARS fill float 1\nLOOKUP_TABLE default\n") > 0;
        for (size_t k = 0; ok && k < nz; k++)
            for (size_t j = 0; ok && j < ny; j++)
                for (size_t i0 = 0; ok && i0 < nx; i0 += sizeof row / 4) {
                    size_t m = nx - i0 < sizeof row / 4 ? nx - i0 : sizeof row / 4;
                    for (size_t q = 0; q < m; q++) {
                        float v = grid->fill[dpz_grid_index(grid, i0 + q, j, k)];
                        uint32_t u;
                        memcpy(&u, &v, 4);
                        put_be32(row + 4 * q, u);
                    }
                    ok = fwrite(row, 4, m, f) == m;
                }
    }
    if (ok)
        ok = fputc('\n', f) != EOF;
    if (ok)
        ok = fflush(f) == 0 && fsync(fileno(f)) == 0;
    int close_ok = fclose(f) == 0;
    if (!ok || !close_ok) {
        int e = errno;
        unlink(tmp);
        dpz__free(tmp);
        return dpz_err_set(err, DPZ_EIO, "vtk writer: %s: write failed: %s", path,
                           strerror(e));
    }
    if (rename(tmp, path) != 0) {
        int e = errno;
        unlink(tmp);
        dpz__free(tmp);
        return dpz_err_set(err, DPZ_EIO,
                           "vtk writer: %s: cannot rename the temporary file: %s", path,
                           strerror(e));
    }
    dpz__free(tmp);
    return DPZ_OK;
}
