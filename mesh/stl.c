/* stl.c: STL reading, closed-mesh checks, volume and voxelization (see dpz_stl.h). */
#include "dpz_stl.h"

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "dpz_fileio.h"
#include "mesh_int.h"

#define WHO "stl reader"

double dpz_mesh_signed_volume(const double *t, size_t n_tri)
{
    /* V = sum a . (b x c) / 6 over triangles (divergence theorem; Zhang and Chen 2001).
     * Each term is taken relative to the first vertex of the mesh to limit cancellation
     * for meshes far from the origin (the sum is translation invariant for closed
     * meshes). */
    if (n_tri == 0)
        return 0.0;
    double o[3] = {t[0], t[1], t[2]};
    double sum = 0.0;
    for (size_t q = 0; q < n_tri; q++) {
        const double *p = t + 9 * q;
        double a[3], b[3], c[3];
        for (int k = 0; k < 3; k++) {
            a[k] = p[k] - o[k];
            b[k] = p[3 + k] - o[k];
            c[k] = p[6 + k] - o[k];
        }
        sum += a[0] * (b[1] * c[2] - b[2] * c[1]) + a[1] * (b[2] * c[0] - b[0] * c[2]) +
               a[2] * (b[0] * c[1] - b[1] * c[0]);
    }
    return sum / 6.0;
}

void dpz_mesh_destroy(dpz_mesh *mesh)
{
    if (!mesh)
        return;
    dpz__free(mesh->xyz);
    dpz__free(mesh);
}

typedef struct {
    double x, y, z;
    size_t orig; /* index of the vertex slot, 3 * triangle + corner */
} vslot;

static int cmp_vslot(const void *pa, const void *pb)
{
    const vslot *a = pa, *b = pb;
    if (a->x != b->x)
        return a->x < b->x ? -1 : 1;
    if (a->y != b->y)
        return a->y < b->y ? -1 : 1;
    if (a->z != b->z)
        return a->z < b->z ? -1 : 1;
    return (a->orig > b->orig) - (a->orig < b->orig);
}

typedef struct {
    size_t a, b; /* welded vertex ids, a < b */
    int dir;     /* +1 when the triangle runs a -> b, -1 for b -> a */
    size_t tri;
} edge;

static int cmp_edge(const void *pa, const void *pb)
{
    const edge *a = pa, *b = pb;
    if (a->a != b->a)
        return a->a < b->a ? -1 : 1;
    if (a->b != b->b)
        return a->b < b->b ? -1 : 1;
    return (a->tri > b->tri) - (a->tri < b->tri);
}

/* Checks closedness and orientation; returns DPZ_OK or DPZ_EFORMAT with a message. */
static dpz_status check_closed(const double *t, size_t n_tri, const char *name,
                               dpz_err *err)
{
    size_t nv = 3 * n_tri;
    vslot *vs = dpz__malloc(nv * sizeof *vs);
    size_t *id = dpz__malloc(nv * sizeof *id);
    edge *es = dpz__malloc(nv * sizeof *es);
    dpz_status st = DPZ_OK;
    if (!vs || !id || !es) {
        st = dpz_err_set(err, DPZ_ENOMEM, WHO ": %s: out of memory for %zu triangles",
                         name, n_tri);
        goto done;
    }
    for (size_t s = 0; s < nv; s++) {
        vs[s].x = t[3 * s], vs[s].y = t[3 * s + 1], vs[s].z = t[3 * s + 2];
        vs[s].orig = s;
    }
    qsort(vs, nv, sizeof *vs, cmp_vslot);
    size_t next = 0;
    for (size_t s = 0; s < nv; s++) {
        if (s > 0 &&
            (vs[s].x != vs[s - 1].x || vs[s].y != vs[s - 1].y || vs[s].z != vs[s - 1].z))
            next++;
        id[vs[s].orig] = next;
    }
    for (size_t q = 0; q < n_tri; q++)
        for (int e = 0; e < 3; e++) {
            size_t u = id[3 * q + e], w = id[3 * q + (e + 1) % 3];
            edge *x = &es[3 * q + e];
            x->a = u < w ? u : w;
            x->b = u < w ? w : u;
            x->dir = u < w ? 1 : -1;
            x->tri = q;
        }
    qsort(es, nv, sizeof *es, cmp_edge);
    size_t open = 0, misoriented = 0, degenerate = 0;
    size_t open_tri = 0, mis_tri = 0;
    size_t open_a = 0, open_b = 0;
    for (size_t s = 0; s < nv;) {
        size_t e = s;
        while (e < nv && es[e].a == es[s].a && es[e].b == es[s].b)
            e++;
        size_t cnt = e - s;
        if (es[s].a == es[s].b) {
            degenerate++;
        } else if (cnt != 2) {
            if (open == 0) {
                open_tri = es[s].tri;
                open_a = es[s].a;
                open_b = es[s].b;
            }
            open++;
        } else if (es[s].dir == es[s + 1].dir) {
            if (misoriented == 0)
                mis_tri = es[s].tri;
            misoriented++;
        }
        s = e;
    }
    (void)degenerate; /* triangles with a repeated vertex add no area and no open edge */
    if (open) {
        /* Find the coordinates of the first open edge for the message. */
        double pa[3] = {0, 0, 0}, pb[3] = {0, 0, 0};
        for (size_t s = 0; s < nv; s++) {
            if (id[s] == open_a)
                memcpy(pa, t + 3 * s, sizeof pa);
            if (id[s] == open_b)
                memcpy(pb, t + 3 * s, sizeof pb);
        }
        st = dpz_err_set(
            err, DPZ_EFORMAT,
            WHO ": %s: mesh is not closed: %zu open edge%s (every edge must be "
                "shared by exactly two triangles); for example the edge (%g, %g, %g) "
                "- (%g, %g, %g) m of triangle %zu",
            name, open, open == 1 ? "" : "s", pa[0], pa[1], pa[2], pb[0], pb[1], pb[2],
            open_tri + 1);
    } else if (misoriented) {
        st = dpz_err_set(
            err, DPZ_EFORMAT,
            WHO ": %s: mesh is not consistently oriented: %zu edge%s run the same "
                "way in both of their triangles (first at triangle %zu); fix the "
                "vertex order of the flipped triangles",
            name, misoriented, misoriented == 1 ? "" : "s", mis_tri + 1);
    }
done:
    dpz__free(vs);
    dpz__free(id);
    dpz__free(es);
    return st;
}

dpz_status dpz_mesh_from_triangles(dpz_mesh **out, const double *xyz_m, size_t n_tri,
                                   const char *name, double unit_m, dpz_err *err)
{
    if (!out)
        return dpz_err_set(err, DPZ_EINVAL, WHO ": output pointer is NULL");
    *out = NULL;
    if (!name)
        name = "(buffer)";
    if (n_tri == 0)
        return dpz_err_set(err, DPZ_EFORMAT, WHO ": %s: the mesh has no triangles", name);
    if (!xyz_m)
        return dpz_err_set(err, DPZ_EINVAL, WHO ": %s: NULL coordinates", name);
    size_t nc;
    if (dpz_mul_overflow(n_tri, 9 * sizeof(double), &nc))
        return dpz_err_set(err, DPZ_ELIMIT, WHO ": %s: too many triangles", name);
    for (size_t s = 0; s < 9 * n_tri; s++)
        if (!isfinite(xyz_m[s]))
            return dpz_err_set(err, DPZ_EFORMAT,
                               WHO ": %s: triangle %zu has a non-finite coordinate", name,
                               s / 9 + 1);
    dpz_status st = check_closed(xyz_m, n_tri, name, err);
    if (st != DPZ_OK)
        return st;
    double vol = dpz_mesh_signed_volume(xyz_m, n_tri);
    if (!(fabs(vol) > 0.0) || !isfinite(vol))
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO ": %s: the closed mesh encloses no volume", name);
    dpz_mesh *m = dpz__calloc(1, sizeof *m);
    if (!m)
        return dpz_err_set(err, DPZ_ENOMEM, WHO ": %s: out of memory", name);
    m->xyz = dpz__malloc(nc);
    if (!m->xyz) {
        dpz_mesh_destroy(m);
        return dpz_err_set(err, DPZ_ENOMEM, WHO ": %s: out of memory for %zu triangles",
                           name, n_tri);
    }
    memcpy(m->xyz, xyz_m, nc);
    m->n_tri = n_tri;
    if (vol < 0.0) {
        /* Every triangle winds inwards: swap b and c. */
        for (size_t q = 0; q < n_tri; q++)
            for (int k = 0; k < 3; k++) {
                double tmp = m->xyz[9 * q + 3 + k];
                m->xyz[9 * q + 3 + k] = m->xyz[9 * q + 6 + k];
                m->xyz[9 * q + 6 + k] = tmp;
            }
        m->flipped = 1;
        vol = -vol;
    }
    m->volume_m3 = vol;
    for (int k = 0; k < 3; k++) {
        m->lo[k] = HUGE_VAL;
        m->hi[k] = -HUGE_VAL;
    }
    for (size_t s = 0; s < 3 * n_tri; s++)
        for (int k = 0; k < 3; k++) {
            double v = m->xyz[3 * s + k];
            if (v < m->lo[k])
                m->lo[k] = v;
            if (v > m->hi[k])
                m->hi[k] = v;
        }
    m->unit_m = unit_m;
    snprintf(m->name, sizeof m->name, "%s", name);
    *out = m;
    return DPZ_OK;
}

/* ---- reading ---- */

typedef struct {
    double *t;
    size_t n, cap;
} tri_list;

static int push_tri(tri_list *l, const double v[9])
{
    if (l->n == l->cap) {
        size_t nc = l->cap ? 2 * l->cap : 1024;
        if (nc > SIZE_MAX / (9 * sizeof(double)))
            return -1;
        double *bigger = dpz__realloc(l->t, nc * 9 * sizeof(double));
        if (!bigger)
            return -1;
        l->t = bigger;
        l->cap = nc;
    }
    memcpy(l->t + 9 * l->n, v, 9 * sizeof(double));
    l->n++;
    return 0;
}

static float get_le_float(const unsigned char *p)
{
    uint32_t u = (uint32_t)p[0] | (uint32_t)p[1] << 8 | (uint32_t)p[2] << 16 |
                 (uint32_t)p[3] << 24;
    float f;
    memcpy(&f, &u, 4);
    return f;
}

static dpz_status read_binary(dpz_mesh **out, const unsigned char *u, size_t len,
                              const char *name, double unit_m, dpz_err *err)
{
    size_t n =
        (size_t)u[80] | (size_t)u[81] << 8 | (size_t)u[82] << 16 | (size_t)u[83] << 24;
    if (n == 0)
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO ": %s: byte 80: binary STL with no triangles", name);
    size_t need = 9 * n;
    double *t = dpz__malloc(need * sizeof *t);
    if (!t)
        return dpz_err_set(err, DPZ_ENOMEM, WHO ": %s: out of memory for %zu triangles",
                           name, n);
    (void)len;
    for (size_t q = 0; q < n; q++) {
        const unsigned char *rec = u + 84 + 50 * q + 12; /* skip the normal */
        for (int k = 0; k < 9; k++) {
            float f = get_le_float(rec + 4 * k);
            if (!isfinite(f)) {
                dpz__free(t);
                return dpz_err_set(err, DPZ_EFORMAT,
                                   WHO ": %s: byte %zu: triangle %zu has a non-finite "
                                       "coordinate",
                                   name, 84 + 50 * q + 12 + 4 * (size_t)k, q + 1);
            }
            t[9 * q + k] = (double)f * unit_m;
        }
    }
    dpz_status st = dpz_mesh_from_triangles(out, t, n, name, unit_m, err);
    dpz__free(t);
    return st;
}

typedef struct {
    const char *buf;
    size_t len, pos, line;
} tok_cursor;

/* Next whitespace-separated token (truncated to 63 chars); returns 0 at end of input.
 * *line receives the token's line. */
static int next_tok(tok_cursor *c, char tok[64], size_t *line)
{
    while (c->pos < c->len && isspace((unsigned char)c->buf[c->pos])) {
        if (c->buf[c->pos] == '\n')
            c->line++;
        c->pos++;
    }
    if (c->pos >= c->len)
        return 0;
    *line = c->line;
    size_t k = 0;
    while (c->pos < c->len && !isspace((unsigned char)c->buf[c->pos])) {
        if (k < 63)
            tok[k++] = c->buf[c->pos];
        c->pos++;
    }
    tok[k] = '\0';
    return 1;
}

static void skip_line(tok_cursor *c)
{
    while (c->pos < c->len && c->buf[c->pos] != '\n')
        c->pos++;
}

static dpz_status expect_word(tok_cursor *c, const char *word, const char *name,
                              dpz_err *err)
{
    char tok[64];
    size_t line = c->line;
    if (!next_tok(c, tok, &line))
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO ": %s: line %zu: unexpected end of file (expected '%s')",
                           name, c->line, word);
    if (strcasecmp(tok, word) != 0)
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO ": %s: line %zu: expected '%s' (got '%s')", name, line,
                           word, tok);
    return DPZ_OK;
}

static dpz_status expect_number(tok_cursor *c, double *v, int finite, const char *what,
                                const char *name, dpz_err *err)
{
    char tok[64];
    size_t line = c->line;
    if (!next_tok(c, tok, &line))
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO ": %s: line %zu: unexpected end of file in %s", name,
                           c->line, what);
    char *end;
    *v = strtod(tok, &end);
    if (end == tok || *end != '\0')
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO ": %s: line %zu: %s: '%s' is not a number", name, line,
                           what, tok);
    if (finite && !isfinite(*v))
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO ": %s: line %zu: %s coordinate '%s' is not finite", name,
                           line, what, tok);
    return DPZ_OK;
}

static dpz_status read_ascii(dpz_mesh **out, const char *buf, size_t len,
                             const char *name, double unit_m, dpz_err *err)
{
    if (memchr(buf, '\0', len))
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO
                           ": %s: byte %zu: NUL byte in an ASCII STL (or a binary STL "
                           "whose size does not match its triangle count)",
                           name, (size_t)((const char *)memchr(buf, '\0', len) - buf));
    tok_cursor c = {buf, len, 0, 1};
    tri_list l = {NULL, 0, 0};
    dpz_status st = DPZ_OK;
    char tok[64];
    size_t line = 1;
    st = expect_word(&c, "solid", name, err);
    if (st != DPZ_OK)
        goto fail;
    skip_line(&c);
    for (;;) {
        if (!next_tok(&c, tok, &line)) {
            st = dpz_err_set(
                err, DPZ_EFORMAT,
                WHO ": %s: line %zu: unexpected end of file (missing 'endsolid')", name,
                c.line);
            goto fail;
        }
        if (strcasecmp(tok, "endsolid") == 0) {
            skip_line(&c);
            if (!next_tok(&c, tok, &line))
                break;
            if (strcasecmp(tok, "solid") == 0) {
                skip_line(&c);
                continue;
            }
            st = dpz_err_set(err, DPZ_EFORMAT,
                             WHO ": %s: line %zu: unexpected '%s' after 'endsolid'", name,
                             line, tok);
            goto fail;
        }
        if (strcasecmp(tok, "facet") != 0) {
            st = dpz_err_set(err, DPZ_EFORMAT,
                             WHO
                             ": %s: line %zu: expected 'facet' or 'endsolid' (got '%s')",
                             name, line, tok);
            goto fail;
        }
        double v[9], nrm;
        if ((st = expect_word(&c, "normal", name, err)) != DPZ_OK)
            goto fail;
        for (int k = 0; k < 3; k++)
            if ((st = expect_number(&c, &nrm, 0, "normal", name, err)) != DPZ_OK)
                goto fail;
        if ((st = expect_word(&c, "outer", name, err)) != DPZ_OK ||
            (st = expect_word(&c, "loop", name, err)) != DPZ_OK)
            goto fail;
        for (int q = 0; q < 3; q++) {
            if ((st = expect_word(&c, "vertex", name, err)) != DPZ_OK)
                goto fail;
            for (int k = 0; k < 3; k++) {
                if ((st = expect_number(&c, &v[3 * q + k], 1, "vertex", name, err)) !=
                    DPZ_OK)
                    goto fail;
                v[3 * q + k] *= unit_m;
            }
        }
        if ((st = expect_word(&c, "endloop", name, err)) != DPZ_OK ||
            (st = expect_word(&c, "endfacet", name, err)) != DPZ_OK)
            goto fail;
        if (push_tri(&l, v) != 0) {
            st = dpz_err_set(err, DPZ_ENOMEM, WHO ": %s: line %zu: out of memory", name,
                             line);
            goto fail;
        }
    }
    st = dpz_mesh_from_triangles(out, l.t, l.n, name, unit_m, err);
fail:
    dpz__free(l.t);
    return st;
}

dpz_status dpz_stl_read(dpz_mesh **out, const char *buf, size_t len, const char *name,
                        double unit_m, dpz_err *err)
{
    if (!out)
        return dpz_err_set(err, DPZ_EINVAL, WHO ": output pointer is NULL");
    *out = NULL;
    if (!name)
        name = "(buffer)";
    if (!buf && len)
        return dpz_err_set(err, DPZ_EINVAL, WHO ": NULL buffer");
    if (!(unit_m > 0.0) || !isfinite(unit_m))
        return dpz_err_set(err, DPZ_EINVAL,
                           WHO
                           ": %s: the mesh length unit must be positive and finite (got "
                           "%g m)",
                           name, unit_m);
    const unsigned char *u = (const unsigned char *)buf;
    if (len >= 84) {
        size_t n = (size_t)u[80] | (size_t)u[81] << 8 | (size_t)u[82] << 16 |
                   (size_t)u[83] << 24;
        if (n <= (SIZE_MAX - 84) / 50 && len == 84 + 50 * n)
            return read_binary(out, u, len, name, unit_m, err);
    }
    size_t p = 0;
    while (p < len && isspace(u[p]))
        p++;
    if (len - p >= 5 && strncasecmp(buf + p, "solid", 5) == 0)
        return read_ascii(out, buf, len, name, unit_m, err);
    if (len < 84)
        return dpz_err_set(err, DPZ_EFORMAT,
                           WHO
                           ": %s: byte 0: neither ASCII STL (no 'solid') nor binary STL "
                           "(%zu bytes, shorter than the 84-byte header)",
                           name, len);
    size_t n =
        (size_t)u[80] | (size_t)u[81] << 8 | (size_t)u[82] << 16 | (size_t)u[83] << 24;
    return dpz_err_set(
        err, DPZ_EFORMAT,
        WHO ": %s: byte 80: binary STL header counts %zu triangles, which need "
            "%.0f bytes, but the file has %zu (truncated or not an STL file)",
        name, n, 84.0 + 50.0 * (double)n, len);
}

dpz_status dpz_stl_read_file(dpz_mesh **out, const char *path, double unit_m,
                             dpz_err *err)
{
    if (out)
        *out = NULL;
    char *buf;
    size_t len;
    dpz_status st = dpz_file_read_all(path, WHO, 0, &buf, &len, err);
    if (st != DPZ_OK)
        return st;
    st = dpz_stl_read(out, buf, len, path, unit_m, err);
    dpz__free(buf);
    return st;
}

/* ---- voxelization ---- */

typedef struct {
    size_t row;
    double x; /* position along the ray axis, m */
    int sign; /* +1 leaving the solid, -1 entering */
} crossing;

static int cmp_crossing(const void *pa, const void *pb)
{
    const crossing *a = pa, *b = pb;
    if (a->row != b->row)
        return a->row < b->row ? -1 : 1;
    if (a->x != b->x)
        return a->x < b->x ? -1 : 1;
    return a->sign - b->sign;
}

/* 2-D orientation (B - A) x (Q - A). */
static double orient(const double A[2], const double B[2], const double Q[2])
{
    return (B[0] - A[0]) * (Q[1] - A[1]) - (B[1] - A[1]) * (Q[0] - A[0]);
}

static int lex_less(const double A[2], const double B[2])
{
    return A[0] < B[0] || (A[0] == B[0] && A[1] < B[1]);
}

/* Edge function of edge P -> Q at point X, evaluated with the endpoints in canonical
 * (lexicographic) order so that the two triangles sharing the edge get exactly opposite
 * values. */
static double edge_fn(const double P[2], const double Q[2], const double X[2])
{
    return lex_less(P, Q) ? orient(P, Q, X) : -orient(Q, P, X);
}

/* Top-left rule: of the two directions of an edge, exactly one is included. */
static int top_left(const double P[2], const double Q[2])
{
    return Q[1] < P[1] || (Q[1] == P[1] && Q[0] > P[0]);
}

/* Sample positions of a lattice axis: S samples per voxel at the centres of sub-cells
 * (S = 1: the voxel centres themselves). */
typedef struct {
    double origin, d;
    int S;
    size_t n; /* samples */
} axis_lattice;

static double sample_pos(const axis_lattice *L, size_t m)
{
    if (L->S == 1)
        return L->origin + L->d * (double)m;
    size_t v = m / (size_t)L->S, s = m % (size_t)L->S;
    return L->origin + L->d * ((double)v + ((double)s + 0.5) / L->S - 0.5);
}

/* Index range of samples within [lo, hi] (inclusive), conservatively widened by one. */
static int sample_range(const axis_lattice *L, double lo, double hi, size_t *m0,
                        size_t *m1)
{
    double step = L->d / L->S, first = sample_pos(L, 0);
    double a = floor((lo - first) / step) - 1.0, b = ceil((hi - first) / step) + 1.0;
    if (b < 0.0 || a > (double)(L->n - 1))
        return 0;
    *m0 = a < 0.0 ? 0 : (size_t)a;
    *m1 = b > (double)(L->n - 1) ? L->n - 1 : (size_t)b;
    return 1;
}

/* Casts rays along `axis` through every sample row and calls back per sample with its
 * inside flag. Mode 0: add 1 to votes[voxel] when inside (centres); mode 1: add 1 to
 * counts[voxel] (fractions). */
static dpz_status cast_axis(const dpz_mesh *m, const axis_lattice lat[3], int axis,
                            const size_t nvox[3], uint16_t *acc, const char *name,
                            dpz_err *err)
{
    int ua = (axis + 1) % 3, va = (axis + 2) % 3;
    const axis_lattice *LU = &lat[ua], *LV = &lat[va], *LA = &lat[axis];
    crossing *cr = NULL;
    size_t ncr = 0, cap = 0;
    for (size_t q = 0; q < m->n_tri; q++) {
        const double *t = m->xyz + 9 * q;
        double P[3][2];
        double lo_u = HUGE_VAL, hi_u = -HUGE_VAL, lo_v = HUGE_VAL, hi_v = -HUGE_VAL;
        for (int c = 0; c < 3; c++) {
            P[c][0] = t[3 * c + ua];
            P[c][1] = t[3 * c + va];
            lo_u = fmin(lo_u, P[c][0]), hi_u = fmax(hi_u, P[c][0]);
            lo_v = fmin(lo_v, P[c][1]), hi_v = fmax(hi_v, P[c][1]);
        }
        double area = orient(P[0], P[1], P[2]);
        if (area == 0.0)
            continue; /* edge-on to the rays: its neighbours carry the crossings */
        int s = area > 0.0 ? 1 : -1;
        size_t u0, u1, v0, v1;
        if (!sample_range(LU, lo_u, hi_u, &u0, &u1) ||
            !sample_range(LV, lo_v, hi_v, &v0, &v1))
            continue;
        for (size_t mu = u0; mu <= u1; mu++)
            for (size_t mv = v0; mv <= v1; mv++) {
                double X[2] = {sample_pos(LU, mu), sample_pos(LV, mv)};
                double w[3];
                int in = 1;
                for (int e = 0; e < 3 && in; e++) {
                    /* w[e]: edge opposite vertex e, running (e+1) -> (e+2). */
                    const double *A = P[(e + 1) % 3], *B = P[(e + 2) % 3];
                    w[e] = s * edge_fn(A, B, X);
                    if (w[e] < 0.0)
                        in = 0;
                    else if (w[e] == 0.0) {
                        /* Direction of the edge in the counter-clockwise triangle. */
                        in = s > 0 ? top_left(A, B) : top_left(B, A);
                    }
                }
                if (!in)
                    continue;
                double sum = w[0] + w[1] + w[2];
                if (!(sum > 0.0))
                    continue;
                double x =
                    (w[0] * t[axis] + w[1] * t[3 + axis] + w[2] * t[6 + axis]) / sum;
                if (ncr == cap) {
                    size_t nc = cap ? 2 * cap : 4096;
                    crossing *bigger = dpz__realloc(cr, nc * sizeof *cr);
                    if (!bigger) {
                        dpz__free(cr);
                        return dpz_err_set(
                            err, DPZ_ENOMEM,
                            "stl voxelizer: %s: out of memory for ray crossings", name);
                    }
                    cr = bigger;
                    cap = nc;
                }
                cr[ncr].row = mu * LV->n + mv;
                cr[ncr].x = x;
                cr[ncr].sign = s;
                ncr++;
            }
    }
    /* cr is NULL when no ray met a triangle; qsort requires a valid pointer. */
    if (ncr > 1)
        qsort(cr, ncr, sizeof *cr, cmp_crossing);
    int S = LA->S;
    size_t strides[3] = {nvox[1] * nvox[2], nvox[2], 1};
    for (size_t g0 = 0; g0 < ncr;) {
        size_t g1 = g0;
        int total = 0;
        while (g1 < ncr && cr[g1].row == cr[g0].row)
            total += cr[g1++].sign;
        size_t mu = cr[g0].row / LV->n, mv = cr[g0].row % LV->n;
        size_t base =
            (mu / (size_t)LU->S) * strides[ua] + (mv / (size_t)LV->S) * strides[va];
        /* Only samples between the first and last crossing can be inside. */
        size_t a0, a1;
        if (sample_range(LA, cr[g0].x, cr[g1 - 1].x, &a0, &a1)) {
            size_t p = g0;
            int prefix = 0;
            for (size_t ma = a0; ma <= a1; ma++) {
                double pos = sample_pos(LA, ma);
                while (p < g1 && cr[p].x <= pos)
                    prefix += cr[p++].sign;
                if (total - prefix != 0)
                    acc[base + (ma / (size_t)S) * strides[axis]]++;
            }
        }
        g0 = g1;
    }
    dpz__free(cr);
    return DPZ_OK;
}

dpz_status dpz_stl_voxelize(dpz_grid **out, const dpz_mesh *mesh, double d_m,
                            int fractions, int subsamples, size_t max_cells, dpz_err *err)
{
    if (!out)
        return dpz_err_set(err, DPZ_EINVAL, "stl voxelizer: output pointer is NULL");
    *out = NULL;
    if (!mesh || !mesh->xyz || mesh->n_tri == 0)
        return dpz_err_set(err, DPZ_EINVAL, "stl voxelizer: empty mesh");
    const char *name = mesh->name[0] ? mesh->name : "(mesh)";
    if (!(d_m > 0.0) || !isfinite(d_m))
        return dpz_err_set(
            err, DPZ_EINVAL,
            "stl voxelizer: %s: spacing must be positive and finite (got %g m)", name,
            d_m);
    if (fractions && (subsamples < 1 || subsamples > 16))
        return dpz_err_set(
            err, DPZ_EINVAL,
            "stl voxelizer: %s: sub-samples per voxel edge must be 1..16 (got "
            "%d)",
            name, subsamples);
    if (max_cells == 0)
        max_cells = DPZ_GRID_DEFAULT_MAX_CELLS;
    size_t n[3];
    double centre[3];
    for (int a = 0; a < 3; a++) {
        centre[a] = 0.5 * (mesh->lo[a] + mesh->hi[a]);
        double q = 0.5 * (mesh->hi[a] - mesh->lo[a]) / d_m;
        double c = dpz__axis_count(q, fractions ? 0.5 : 0.0);
        if (!(c <= (double)max_cells))
            return dpz_err_set(
                err, DPZ_ELIMIT,
                "stl voxelizer: %s: spacing %g m gives %.3g voxels along an "
                "axis, more than the limit of %zu voxels (raise the voxel limit "
                "or use a coarser spacing)",
                name, d_m, c, max_cells);
        n[a] = (size_t)c;
    }
    dpz_grid *g = NULL;
    dpz_status st = dpz_grid_create(&g, n[0], n[1], n[2], d_m, max_cells, err);
    if (st != DPZ_OK)
        return st;
    for (int a = 0; a < 3; a++)
        g->origin[a] += centre[a];
    g->source_kind = DPZ_SOURCE_MESH;
    int w =
        snprintf(g->source, sizeof g->source, DPZ_MESH_RECORD_PREFIX "unit=%.17g path=%s",
                 mesh->unit_m, mesh->name);
    if (w < 0 || (size_t)w >= sizeof g->source) {
        dpz_grid_destroy(g);
        return dpz_err_set(err, DPZ_EINVAL, "stl voxelizer: %s: file name too long",
                           name);
    }
    size_t total = n[0] * n[1] * n[2];
    uint16_t *acc = dpz__calloc(total, sizeof *acc);
    if (!acc) {
        dpz_grid_destroy(g);
        return dpz_err_set(err, DPZ_ENOMEM, "stl voxelizer: %s: out of memory", name);
    }
    int S = fractions ? subsamples : 1;
    axis_lattice lat[3];
    for (int a = 0; a < 3; a++) {
        lat[a].origin = g->origin[a];
        lat[a].d = d_m;
        lat[a].S = S;
        lat[a].n = n[a] * (size_t)S;
    }
    if (!fractions) {
        for (int axis = 0; axis < 3 && st == DPZ_OK; axis++)
            st = cast_axis(mesh, lat, axis, n, acc, name, err);
        if (st == DPZ_OK)
            for (size_t i = 0; i < total; i++)
                g->label[i] = acc[i] >= 2 ? 1 : 0; /* two of three directions */
    } else {
        g->fill = dpz__calloc(total, sizeof *g->fill);
        if (!g->fill)
            st = dpz_err_set(err, DPZ_ENOMEM, "stl voxelizer: %s: out of memory", name);
        if (st == DPZ_OK)
            st = cast_axis(mesh, lat, 0, n, acc, name, err);
        if (st == DPZ_OK) {
            double inv = 1.0 / ((double)S * S * S);
            for (size_t i = 0; i < total; i++) {
                g->label[i] = acc[i] > 0 ? 1 : 0;
                g->fill[i] = (float)(acc[i] * inv);
            }
        }
    }
    dpz__free(acc);
    if (st == DPZ_OK)
        st = dpz_grid_update(g, err);
    if (st != DPZ_OK) {
        dpz_grid_destroy(g);
        return st;
    }
    *out = g;
    return DPZ_OK;
}

dpz_status dpz_stl_voxelize_file(dpz_grid **out, const char *path, double unit_m,
                                 double d_m, int fractions, size_t max_cells,
                                 double *mesh_volume_m3, dpz_err *err)
{
    if (out)
        *out = NULL;
    if (mesh_volume_m3)
        *mesh_volume_m3 = -1.0;
    dpz_mesh *m = NULL;
    dpz_status st = dpz_stl_read_file(&m, path, unit_m, err);
    if (st != DPZ_OK)
        return st;
    st = dpz_stl_voxelize(out, m, d_m, fractions, 4, max_cells, err);
    if (st == DPZ_OK && mesh_volume_m3)
        *mesh_volume_m3 = m->volume_m3;
    dpz_mesh_destroy(m);
    return st;
}

void dpz_stl_volumes(const dpz_mesh *mesh, const dpz_grid *grid, double *mesh_m3,
                     double *voxel_m3)
{
    if (mesh_m3)
        *mesh_m3 = mesh ? mesh->volume_m3 : 0.0;
    if (voxel_m3)
        *voxel_m3 = grid ? dpz_grid_volume(grid) : 0.0;
}

dpz_status dpz_mesh_parse_record(const char *record, double *unit_m, char *path,
                                 size_t path_len, dpz_err *err)
{
    const char *pre = DPZ_MESH_RECORD_PREFIX "unit=";
    size_t pl = strlen(pre);
    if (!record || strncmp(record, pre, pl) != 0)
        return dpz_err_set(err, DPZ_EFORMAT, "mesh record: does not start with '%s'",
                           pre);
    char *end;
    double u = strtod(record + pl, &end);
    if (end == record + pl || strncmp(end, " path=", 6) != 0 || !(u > 0.0) ||
        !isfinite(u))
        return dpz_err_set(err, DPZ_EFORMAT,
                           "mesh record: malformed unit or path in '%s'", record);
    const char *p = end + 6;
    if (!*p || strlen(p) >= path_len)
        return dpz_err_set(err, DPZ_EFORMAT, "mesh record: empty or too long path");
    if (unit_m)
        *unit_m = u;
    if (path)
        memcpy(path, p, strlen(p) + 1);
    return DPZ_OK;
}
