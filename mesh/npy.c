/* npy.c: NumPy .npy voxel arrays (see dpz_voxio.h). Format: NumPy Enhancement Proposal 1,
 * "A simple file format for NumPy arrays" (2007): the magic string "\x93NUMPY", major and
 * minor version bytes, a little-endian header length (2 bytes in version 1.0, 4 bytes in
 * 2.0 and 3.0), then a Python dict literal with keys 'descr', 'fortran_order' and
 * 'shape', padded with spaces and ended by '\n', then the raw data. */
#include "dpz_voxio.h"

#include <ctype.h>
#include <errno.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "dpz_fileio.h"
#include "mesh_int.h"

#define WHO "npy reader"

/* Finds 'key' in the header dict and returns a pointer just after its ':' (skipping
 * spaces), or NULL. */
static const char *find_key(const char *h, size_t hl, const char *key)
{
    size_t kl = strlen(key);
    for (size_t p = 0; p + kl + 2 <= hl; p++) {
        if ((h[p] == '\'' || h[p] == '"') && memcmp(h + p + 1, key, kl) == 0 &&
            h[p + 1 + kl] == h[p]) {
            size_t q = p + kl + 2;
            while (q < hl && h[q] == ' ')
                q++;
            if (q >= hl || h[q] != ':')
                return NULL;
            q++;
            while (q < hl && h[q] == ' ')
                q++;
            return h + q;
        }
    }
    return NULL;
}

typedef struct {
    int size;       /* bytes per value */
    int is_signed;  /* two's complement */
    int big_endian; /* byte order */
    int is_bool;
} dtype;

static int parse_descr(const char *v, const char *end, dtype *dt, char text[16])
{
    if (v >= end || (*v != '\'' && *v != '"'))
        return -1;
    char quote = *v++;
    size_t n = 0;
    while (v < end && *v != quote && n < 15)
        text[n++] = *v++;
    text[n] = '\0';
    if (v >= end || *v != quote || n != 3)
        return -1;
    char order = text[0], kind = text[1], sz = text[2];
    if (order != '<' && order != '>' && order != '|' && order != '=')
        return -1;
    dt->big_endian = order == '>';
    dt->is_bool = kind == 'b' && sz == '1';
    if (kind != 'b' && kind != 'u' && kind != 'i')
        return -1;
    if (kind == 'b' && sz != '1')
        return -1;
    if (sz != '1' && sz != '2' && sz != '4' && sz != '8')
        return -1;
    if (sz != '1' && order == '|')
        return -1;
    dt->size = sz - '0';
    dt->is_signed = kind == 'i';
    return 0;
}

dpz_status dpz_npy_read(dpz_grid **out, const char *buf, size_t len, const char *name,
                        double spacing_m, size_t max_cells, dpz_err *err)
{
    if (!out)
        return dpz_err_set(err, DPZ_EINVAL, WHO ": output pointer is NULL");
    *out = NULL;
    if (!name)
        name = "(buffer)";
    if (!buf && len)
        return dpz_err_set(err, DPZ_EINVAL, WHO ": NULL buffer");
    if (!(spacing_m > 0.0) || spacing_m > 1e300)
        return dpz_err_set(err, DPZ_EINVAL,
                           WHO ": %s: a positive voxel spacing is required (a .npy file "
                               "stores none; got %g m)",
                           name, spacing_m);
    if (max_cells == 0)
        max_cells = DPZ_GRID_DEFAULT_MAX_CELLS;
    const unsigned char *u = (const unsigned char *)buf;
    if (len < 10 || memcmp(buf, "\x93NUMPY", 6) != 0)
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO ": %s: byte 0: not a .npy file (magic string missing)",
                           name);
    int major = u[6];
    size_t hl, start;
    if (major == 1) {
        hl = (size_t)u[8] | (size_t)u[9] << 8;
        start = 10;
    } else if (major == 2 || major == 3) {
        if (len < 12)
            return dpz_err_set(err, DPZ_EFORMAT, WHO ": %s: byte 8: truncated header",
                               name);
        hl = (size_t)u[8] | (size_t)u[9] << 8 | (size_t)u[10] << 16 | (size_t)u[11] << 24;
        start = 12;
    } else {
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO ": %s: byte 6: unsupported format version %d.%d", name,
                           major, u[7]);
    }
    if (hl > len - start)
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO
                           ": %s: byte 8: header of %zu bytes runs past the end of the "
                           "file (%zu bytes)",
                           name, hl, len);
    const char *h = buf + start, *hend = h + hl;
    if (hl == 0 || h[hl - 1] != '\n' || memchr(h, '\0', hl))
        return dpz_err_set(
            err, DPZ_EFORMAT,
            WHO ": %s: byte %zu: header must be text ending with a newline", name, start);
    /* descr */
    const char *v = find_key(h, hl, "descr");
    dtype dt;
    char dtext[16] = "";
    if (!v)
        return dpz_err_set(err, DPZ_EFORMAT, WHO ": %s: byte %zu: header has no 'descr'",
                           name, start);
    if (parse_descr(v, hend, &dt, dtext) != 0)
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO ": %s: byte %zu: unsupported dtype '%s' (use bool, uint8, "
                               "int8, int16, uint16, int32, uint32, int64 or uint64)",
                           name, (size_t)(v - buf), dtext);
    /* fortran_order */
    v = find_key(h, hl, "fortran_order");
    int fortran;
    if (v && (size_t)(hend - v) >= 4 && memcmp(v, "True", 4) == 0)
        fortran = 1;
    else if (v && (size_t)(hend - v) >= 5 && memcmp(v, "False", 5) == 0)
        fortran = 0;
    else
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO
                           ": %s: byte %zu: header needs 'fortran_order': True or False",
                           name, v ? (size_t)(v - buf) : start);
    /* shape */
    v = find_key(h, hl, "shape");
    if (!v || *v != '(')
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO ": %s: byte %zu: header needs a 'shape' tuple", name,
                           v ? (size_t)(v - buf) : start);
    size_t dims[3], nd = 0;
    const char *p = v + 1;
    for (;;) {
        while (p < hend && *p == ' ')
            p++;
        if (p < hend && *p == ')')
            break;
        if (p >= hend || !isdigit((unsigned char)*p))
            return dpz_err_set(err, DPZ_EFORMAT,
                               WHO ": %s: byte %zu: malformed 'shape' tuple", name,
                               (size_t)(p - buf));
        char *e;
        errno = 0;
        unsigned long long x = strtoull(p, &e, 10);
        if (errno == ERANGE || x > SIZE_MAX || e > hend)
            return dpz_err_set(err, DPZ_ELIMIT,
                               WHO ": %s: byte %zu: dimension overflows the size type",
                               name, (size_t)(p - buf));
        if (nd == 3)
            return dpz_err_set(
                err, DPZ_EFORMAT,
                WHO ": %s: byte %zu: array must be 3-D (more than 3 dimensions)", name,
                (size_t)(p - buf));
        dims[nd++] = (size_t)x;
        p = e;
        if (p < hend && *p == 'L')
            p++; /* Python 2 long integers, written by old NumPy versions */
        while (p < hend && *p == ' ')
            p++;
        if (p < hend && *p == ',')
            p++;
    }
    if (nd != 3)
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO
                           ": %s: byte %zu: array must be 3-D (shape has %zu dimensions)",
                           name, (size_t)(v - buf), nd);
    if (dims[0] == 0 || dims[1] == 0 || dims[2] == 0)
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO ": %s: byte %zu: empty array (shape %zu, %zu, %zu)", name,
                           (size_t)(v - buf), dims[0], dims[1], dims[2]);
    size_t n01, total, bytes;
    if (dpz_mul_overflow(dims[0], dims[1], &n01) ||
        dpz_mul_overflow(n01, dims[2], &total) ||
        dpz_mul_overflow(total, (size_t)dt.size, &bytes))
        return dpz_err_set(
            err, DPZ_ELIMIT,
            WHO ": %s: byte %zu: shape (%zu, %zu, %zu) overflows the size type", name,
            (size_t)(v - buf), dims[0], dims[1], dims[2]);
    if (total > max_cells)
        return dpz_err_set(err, DPZ_ELIMIT,
                           WHO
                           ": %s: %zu x %zu x %zu = %zu voxels exceed the limit of %zu "
                           "(raise the voxel limit to read this file)",
                           name, dims[0], dims[1], dims[2], total, max_cells);
    size_t data = start + hl;
    if (len - data != bytes)
        return dpz_err_set(
            err, DPZ_EFORMAT,
            WHO ": %s: byte %zu: %s data: %zu bytes expected for %zu values, "
                "%zu found",
            name, data, len - data < bytes ? "truncated" : "trailing bytes after", bytes,
            total, len - data);
    dpz_grid *g = NULL;
    dpz_status st =
        dpz_grid_create(&g, dims[0], dims[1], dims[2], spacing_m, max_cells, err);
    if (st != DPZ_OK)
        return st;
    const unsigned char *src = u + data;
    for (size_t q = 0; q < total; q++) {
        const unsigned char *e = src + q * (size_t)dt.size;
        uint64_t x = 0;
        for (int b = 0; b < dt.size; b++) {
            int byte = dt.big_endian ? b : dt.size - 1 - b;
            x = x << 8 | e[byte];
        }
        int negative = dt.is_signed && (e[dt.big_endian ? 0 : dt.size - 1] & 0x80);
        if (negative || x > 255 || (dt.is_bool && x > 1)) {
            /* Two's complement value of a negative entry, for the message. */
            long long shown = (long long)x;
            if (negative)
                shown = dt.size == 8 ? -(long long)(~x) - 1
                                     : (long long)x - (1LL << (8 * dt.size));
            dpz_grid_destroy(g);
            return dpz_err_set(err, DPZ_ERANGE,
                               WHO
                               ": %s: byte %zu: value %lld outside the labels 0..255%s",
                               name, data + q * (size_t)dt.size, shown,
                               dt.is_bool ? " (bool must be 0 or 1)" : "");
        }
        size_t idx;
        if (fortran) {
            /* Fortran order: the first index runs fastest. */
            size_t i = q % dims[0], rest = q / dims[0];
            size_t j = rest % dims[1], k = rest / dims[1];
            idx = (i * dims[1] + j) * dims[2] + k;
        } else {
            idx = q;
        }
        g->label[idx] = (uint8_t)x;
    }
    st = dpz_grid_update(g, err);
    if (st != DPZ_OK) {
        dpz_grid_destroy(g);
        return st;
    }
    *out = g;
    return DPZ_OK;
}

dpz_status dpz_npy_read_file(dpz_grid **out, const char *path, double spacing_m,
                             size_t max_cells, dpz_err *err)
{
    if (out)
        *out = NULL;
    char *buf;
    size_t len;
    dpz_status st = dpz_file_read_all(path, WHO, 0, &buf, &len, err);
    if (st != DPZ_OK)
        return st;
    st = dpz_npy_read(out, buf, len, path, spacing_m, max_cells, err);
    dpz__free(buf);
    return st;
}
