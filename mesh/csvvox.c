/* csvvox.c: CSV voxel lists "i,j,k,label" (see dpz_voxio.h), and the voxel-file reader
 * that dispatches on content and extension. */
#include "dpz_voxio.h"

#include <ctype.h>
#include <errno.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "dpz_fileio.h"
#include "mesh_int.h"

#define WHO "csv reader"

typedef struct {
    size_t i, j, k;
    unsigned label;
    size_t line;
} entry;

/* Parses a non-negative decimal integer field [p, e) with optional surrounding blanks. */
static int parse_index(const char *p, const char *e, unsigned long long *v)
{
    while (p < e && (*p == ' ' || *p == '\t'))
        p++;
    while (e > p && (e[-1] == ' ' || e[-1] == '\t' || e[-1] == '\r'))
        e--;
    if (p == e || (size_t)(e - p) > 19)
        return -1;
    unsigned long long x = 0;
    for (; p < e; p++) {
        if (*p < '0' || *p > '9')
            return -1;
        x = x * 10 + (unsigned)(*p - '0');
    }
    *v = x;
    return 0;
}

dpz_status dpz_csvvox_read(dpz_grid **out, const char *buf, size_t len, const char *name,
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
                           WHO
                           ": %s: a positive voxel spacing is required (a CSV voxel list "
                           "stores none; got %g m)",
                           name, spacing_m);
    if (max_cells == 0)
        max_cells = DPZ_GRID_DEFAULT_MAX_CELLS;
    entry *list = NULL;
    size_t n = 0, cap = 0, line = 0, content_lines = 0;
    size_t max[3] = {0, 0, 0};
    dpz_status st = DPZ_OK;
    dpz_grid *g = NULL;
    uint8_t *seen = NULL;
    size_t pos = 0;
    if (len >= 3 && memcmp(buf, "\xEF\xBB\xBF", 3) == 0)
        pos = 3; /* a UTF-8 byte-order mark, as spreadsheet programs write */
    while (pos < len) {
        line++;
        const char *ls = buf + pos;
        const char *le = memchr(ls, '\n', len - pos);
        if (!le)
            le = buf + len;
        pos = (size_t)(le - buf) + 1;
        if (memchr(ls, '\0', (size_t)(le - ls))) {
            st =
                dpz_err_set(err, DPZ_EFORMAT, WHO ": %s: line %zu: NUL byte", name, line);
            goto fail;
        }
        const char *hash = memchr(ls, '#', (size_t)(le - ls));
        const char *ce = hash ? hash : le;
        const char *p = ls;
        while (p < ce && (*p == ' ' || *p == '\t' || *p == '\r'))
            p++;
        if (p == ce)
            continue;
        content_lines++;
        /* Split into fields. */
        const char *f[5];
        const char *fe[5];
        int nf = 0;
        const char *q = ls;
        for (;;) {
            const char *comma = memchr(q, ',', (size_t)(ce - q));
            if (nf == 5)
                break;
            f[nf] = q;
            fe[nf] = comma ? comma : ce;
            nf++;
            if (!comma)
                break;
            q = comma + 1;
        }
        if (content_lines == 1 && isalpha((unsigned char)*p))
            continue; /* a header line such as "i,j,k,label" */
        if (nf != 4) {
            st = dpz_err_set(err, DPZ_EFORMAT,
                             WHO
                             ": %s: line %zu: expected 4 fields i,j,k,label (found %s%d)",
                             name, line, nf == 5 ? "more than " : "", nf == 5 ? 4 : nf);
            goto fail;
        }
        unsigned long long v[4];
        for (int a = 0; a < 4; a++)
            if (parse_index(f[a], fe[a], &v[a]) != 0) {
                st = dpz_err_set(
                    err, DPZ_EFORMAT,
                    WHO ": %s: line %zu: field %d ('%.*s') is not a non-negative "
                        "integer",
                    name, line, a + 1, (int)(fe[a] - f[a] > 40 ? 40 : fe[a] - f[a]),
                    f[a]);
                goto fail;
            }
        if (v[3] > 255) {
            st = dpz_err_set(err, DPZ_ERANGE,
                             WHO ": %s: line %zu: label %llu outside 0..255", name, line,
                             v[3]);
            goto fail;
        }
        for (int a = 0; a < 3; a++)
            if (v[a] >= max_cells) {
                st = dpz_err_set(err, DPZ_ELIMIT,
                                 WHO
                                 ": %s: line %zu: index %llu exceeds the voxel limit of "
                                 "%zu (raise the voxel limit to read this file)",
                                 name, line, v[a], max_cells);
                goto fail;
            }
        if (n == cap) {
            size_t nc = cap ? 2 * cap : 256;
            entry *bigger = dpz__realloc(list, nc * sizeof *list);
            if (!bigger) {
                st = dpz_err_set(err, DPZ_ENOMEM, WHO ": %s: out of memory at line %zu",
                                 name, line);
                goto fail;
            }
            list = bigger;
            cap = nc;
        }
        entry *e = &list[n++];
        e->i = (size_t)v[0], e->j = (size_t)v[1], e->k = (size_t)v[2];
        e->label = (unsigned)v[3];
        e->line = line;
        size_t idx3[3] = {e->i, e->j, e->k};
        for (int a = 0; a < 3; a++)
            if (idx3[a] > max[a])
                max[a] = idx3[a];
    }
    if (n == 0) {
        st = dpz_err_set(err, DPZ_EFORMAT,
                         WHO ": %s: no voxel lines (expected i,j,k,label)", name);
        goto fail;
    }
    size_t n01, total;
    if (dpz_mul_overflow(max[0] + 1, max[1] + 1, &n01) ||
        dpz_mul_overflow(n01, max[2] + 1, &total) || total > max_cells) {
        st =
            dpz_err_set(err, DPZ_ELIMIT,
                        WHO ": %s: indices up to %zu, %zu, %zu need more voxels than the "
                            "limit of %zu (raise the voxel limit to read this file)",
                        name, max[0], max[1], max[2], max_cells);
        goto fail;
    }
    st = dpz_grid_create(&g, max[0] + 1, max[1] + 1, max[2] + 1, spacing_m, max_cells,
                         err);
    if (st != DPZ_OK)
        goto fail;
    seen = dpz__calloc((total + 7) / 8, 1);
    if (!seen) {
        st = dpz_err_set(err, DPZ_ENOMEM, WHO ": %s: out of memory", name);
        goto fail;
    }
    for (size_t m = 0; m < n; m++) {
        size_t idx = dpz_grid_index(g, list[m].i, list[m].j, list[m].k);
        if (seen[idx / 8] & (1u << (idx % 8))) {
            size_t first = 0;
            for (size_t r = 0; r < m; r++)
                if (list[r].i == list[m].i && list[r].j == list[m].j &&
                    list[r].k == list[m].k) {
                    first = list[r].line;
                    break;
                }
            st = dpz_err_set(err, DPZ_EFORMAT,
                             WHO
                             ": %s: line %zu: voxel %zu,%zu,%zu listed twice (first on "
                             "line %zu)",
                             name, list[m].line, list[m].i, list[m].j, list[m].k, first);
            goto fail;
        }
        seen[idx / 8] |= (uint8_t)(1u << (idx % 8));
        g->label[idx] = (uint8_t)list[m].label;
    }
    st = dpz_grid_update(g, err);
    if (st != DPZ_OK)
        goto fail;
    dpz__free(seen);
    dpz__free(list);
    *out = g;
    return DPZ_OK;
fail:
    dpz__free(seen);
    dpz__free(list);
    dpz_grid_destroy(g);
    return st;
}

dpz_status dpz_csvvox_read_file(dpz_grid **out, const char *path, double spacing_m,
                                size_t max_cells, dpz_err *err)
{
    if (out)
        *out = NULL;
    char *buf;
    size_t len;
    dpz_status st = dpz_file_read_all(path, WHO, 0, &buf, &len, err);
    if (st != DPZ_OK)
        return st;
    st = dpz_csvvox_read(out, buf, len, path, spacing_m, max_cells, err);
    dpz__free(buf);
    return st;
}

static int has_ext(const char *path, const char *ext)
{
    size_t pl = strlen(path), el = strlen(ext);
    return pl > el && strcasecmp(path + pl - el, ext) == 0;
}

dpz_status dpz_voxfile_read(dpz_grid **out, const char *path, double spacing_m,
                            size_t max_cells, dpz_err *err)
{
    if (out)
        *out = NULL;
    if (!out || !path)
        return dpz_err_set(err, DPZ_EINVAL, "voxel file: NULL argument");
    char *buf;
    size_t len;
    dpz_status st = dpz_file_read_all(path, "voxel file", 0, &buf, &len, err);
    if (st != DPZ_OK)
        return st;
    int spacing_given = spacing_m > 0.0;
    if (len >= 6 && memcmp(buf, "\x93NUMPY", 6) == 0) {
        if (!spacing_given)
            st = dpz_err_set(err, DPZ_EINVAL,
                             "npy reader: %s: a .npy file stores no voxel size: give the "
                             "spacing (--spacing)",
                             path);
        else
            st = dpz_npy_read(out, buf, len, path, spacing_m, max_cells, err);
    } else if (len >= 22 && memcmp(buf, "# vtk DataFile Version", 22) == 0) {
        st = dpz_vtk_read(out, buf, len, path, max_cells, err);
    } else if (has_ext(path, ".stl") || (len >= 5 && strncasecmp(buf, "solid", 5) == 0)) {
        st = dpz_err_set(
            err, DPZ_EINVAL,
            "voxel file: %s: this is an STL mesh, not a voxel file: voxelize it "
            "with a spacing and a length unit",
            path);
    } else if (has_ext(path, ".npy")) {
        st = dpz_err_set(err, DPZ_EFORMAT,
                         "npy reader: %s: byte 0: not a .npy file (magic "
                         "string missing)",
                         path);
    } else if (has_ext(path, ".vtk")) {
        st = dpz_vtk_read(out, buf, len, path, max_cells, err);
    } else if (has_ext(path, ".csv") || has_ext(path, ".txt") ||
               (len > 0 && (isdigit((unsigned char)buf[0]) || buf[0] == '#' ||
                            buf[0] == 'i' || buf[0] == 'I'))) {
        if (!spacing_given)
            st = dpz_err_set(
                err, DPZ_EINVAL,
                "csv reader: %s: a CSV voxel list stores no voxel size: give the "
                "spacing (--spacing)",
                path);
        else
            st = dpz_csvvox_read(out, buf, len, path, spacing_m, max_cells, err);
    } else {
        st = dpz_err_set(
            err, DPZ_EFORMAT,
            "voxel file: %s: unknown format (expected VTK legacy, .npy or CSV "
            "i,j,k,label)",
            path);
    }
    dpz__free(buf);
    return st;
}
