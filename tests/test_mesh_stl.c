/* test_mesh_stl.c: STL reading and voxelization (mesh/stl.c). Meshes are generated here:
 * cubes with subdivided faces and icospheres (subdivided icosahedra), written as ASCII
 * and binary STL buffers, and compared with the built-in shapes voxel by voxel. */
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "dpz_test.h"

#include "dpz_grid.h"
#include "dpz_shape.h"
#include "dpz_stl.h"

/* ---- mesh generators ---- */

typedef struct {
    double *t;
    size_t n, cap;
} tris;

static void add_tri(tris *m, const double a[3], const double b[3], const double c[3])
{
    if (m->n == m->cap) {
        m->cap = m->cap ? 2 * m->cap : 256;
        m->t = realloc(m->t, m->cap * 9 * sizeof(double));
        assert_non_null(m->t);
    }
    memcpy(m->t + 9 * m->n, a, 3 * sizeof(double));
    memcpy(m->t + 9 * m->n + 3, b, 3 * sizeof(double));
    memcpy(m->t + 9 * m->n + 6, c, 3 * sizeof(double));
    m->n++;
}

/* Box [lo, hi] with each face split into k x k squares of two triangles, outward
 * (counter-clockwise seen from outside). Grid points are lo + (hi - lo) * i / k. */
static void add_box(tris *m, const double lo[3], const double hi[3], int k)
{
    for (int axis = 0; axis < 3; axis++)
        for (int side = 0; side < 2; side++) {
            int u = (axis + 1) % 3, v = (axis + 2) % 3;
            for (int i = 0; i < k; i++)
                for (int j = 0; j < k; j++) {
                    double p[4][3];
                    int ii[4] = {i, i + 1, i + 1, i}, jj[4] = {j, j, j + 1, j + 1};
                    for (int c = 0; c < 4; c++) {
                        p[c][axis] = side ? hi[axis] : lo[axis];
                        /* The ends exactly lo and hi, so that faces share edges. */
                        p[c][u] =
                            ii[c] == k ? hi[u] : lo[u] + (hi[u] - lo[u]) * ii[c] / k;
                        p[c][v] =
                            jj[c] == k ? hi[v] : lo[v] + (hi[v] - lo[v]) * jj[c] / k;
                    }
                    /* (u, v, axis) is right-handed: counter-clockwise in (u, v) faces
                     * +axis. */
                    if (side) {
                        add_tri(m, p[0], p[1], p[2]);
                        add_tri(m, p[0], p[2], p[3]);
                    } else {
                        add_tri(m, p[0], p[2], p[1]);
                        add_tri(m, p[0], p[3], p[2]);
                    }
                }
        }
}

/* Icosphere of radius r: an icosahedron whose faces are split into 4 `level` times, with
 * vertices pushed onto the sphere; shared vertices are bitwise identical. */
static void add_icosphere(tris *m, double r, int level)
{
    const double p = (1.0 + sqrt(5.0)) / 2.0;
    double(*v)[3] = malloc(20000 * sizeof *v);
    int(*f)[3] = malloc(50000 * sizeof *f), (*g)[3] = malloc(50000 * sizeof *g);
    assert_true(v && f && g);
    double base[12][3] = {{-1, p, 0}, {1, p, 0}, {-1, -p, 0}, {1, -p, 0},
                          {0, -1, p}, {0, 1, p}, {0, -1, -p}, {0, 1, -p},
                          {p, 0, -1}, {p, 0, 1}, {-p, 0, -1}, {-p, 0, 1}};
    int faces[20][3] = {{0, 11, 5}, {0, 5, 1},  {0, 1, 7},   {0, 7, 10}, {0, 10, 11},
                        {1, 5, 9},  {5, 11, 4}, {11, 10, 2}, {10, 7, 6}, {7, 1, 8},
                        {3, 9, 4},  {3, 4, 2},  {3, 2, 6},   {3, 6, 8},  {3, 8, 9},
                        {4, 9, 5},  {2, 4, 11}, {6, 2, 10},  {8, 6, 7},  {9, 8, 1}};
    int nv = 12, nf = 20;
    for (int i = 0; i < 12; i++) {
        double n = sqrt(base[i][0] * base[i][0] + base[i][1] * base[i][1] +
                        base[i][2] * base[i][2]);
        for (int k = 0; k < 3; k++)
            v[i][k] = base[i][k] / n;
    }
    memcpy(f, faces, sizeof faces);
    /* Midpoint cache: (a, b, mid) triples. */
    int(*cache)[3] = malloc(60000 * sizeof *cache);
    assert_non_null(cache);
    for (int l = 0; l < level; l++) {
        int nc = 0, ng = 0;
        for (int q = 0; q < nf; q++) {
            int mid[3];
            for (int e = 0; e < 3; e++) {
                int a = f[q][e], b = f[q][(e + 1) % 3];
                int lo = a < b ? a : b, hi = a < b ? b : a, found = -1;
                for (int c = 0; c < nc; c++)
                    if (cache[c][0] == lo && cache[c][1] == hi) {
                        found = cache[c][2];
                        break;
                    }
                if (found < 0) {
                    double w[3], n = 0;
                    for (int k = 0; k < 3; k++) {
                        w[k] = v[lo][k] + v[hi][k];
                        n += w[k] * w[k];
                    }
                    n = sqrt(n);
                    for (int k = 0; k < 3; k++)
                        v[nv][k] = w[k] / n;
                    cache[nc][0] = lo, cache[nc][1] = hi, cache[nc][2] = nv;
                    found = nv++;
                    nc++;
                }
                mid[e] = found;
            }
            int a = f[q][0], b = f[q][1], c = f[q][2];
            int nt[4][3] = {{a, mid[0], mid[2]},
                            {b, mid[1], mid[0]},
                            {c, mid[2], mid[1]},
                            {mid[0], mid[1], mid[2]}};
            memcpy(g[ng], nt, sizeof nt);
            ng += 4;
        }
        memcpy(f, g, (size_t)ng * sizeof *g);
        nf = ng;
    }
    for (int q = 0; q < nf; q++) {
        double a[3], b[3], c[3];
        for (int k = 0; k < 3; k++) {
            a[k] = r * v[f[q][0]][k];
            b[k] = r * v[f[q][1]][k];
            c[k] = r * v[f[q][2]][k];
        }
        add_tri(m, a, b, c);
    }
    free(cache);
    free(v);
    free(f);
    free(g);
}

/* ASCII STL text of the triangles in mesh units (coordinates / unit). */
static char *to_ascii(const tris *m, double unit, size_t *len)
{
    size_t cap = 200 + m->n * 400;
    char *s = malloc(cap);
    assert_non_null(s);
    size_t pos = (size_t)sprintf(s, "solid generated by the test\n");
    for (size_t q = 0; q < m->n; q++) {
        const double *t = m->t + 9 * q;
        pos += (size_t)sprintf(s + pos, "  facet normal 0 0 0\n    outer loop\n");
        for (int c = 0; c < 3; c++)
            pos += (size_t)sprintf(s + pos, "      vertex %.17g %.17g %.17g\n",
                                   t[3 * c] / unit, t[3 * c + 1] / unit,
                                   t[3 * c + 2] / unit);
        pos += (size_t)sprintf(s + pos, "    endloop\n  endfacet\n");
    }
    pos += (size_t)sprintf(s + pos, "endsolid generated by the test\n");
    *len = pos;
    return s;
}

/* Binary STL; the 80-byte header starts with "solid" on purpose. */
static unsigned char *to_binary(const tris *m, double unit, size_t *len)
{
    *len = 84 + 50 * m->n;
    unsigned char *b = calloc(*len, 1);
    assert_non_null(b);
    memcpy(b, "solid but binary", 16);
    uint32_t n = (uint32_t)m->n;
    for (int k = 0; k < 4; k++)
        b[80 + k] = (unsigned char)(n >> (8 * k));
    for (size_t q = 0; q < m->n; q++)
        for (int c = 0; c < 9; c++) {
            float f = (float)(m->t[9 * q + c] / unit);
            uint32_t u;
            memcpy(&u, &f, 4);
            for (int k = 0; k < 4; k++)
                b[84 + 50 * q + 12 + 4 * c + k] = (unsigned char)(u >> (8 * k));
        }
    return b;
}

static dpz_mesh *read_ok(const void *buf, size_t len, double unit)
{
    dpz_mesh *m = NULL;
    dpz_err err;
    dpz_status st = dpz_stl_read(&m, buf, len, "gen.stl", unit, &err);
    if (st != DPZ_OK)
        print_error("%s\n", err.msg);
    assert_int_equal(st, DPZ_OK);
    return m;
}

static dpz_grid *vox_ok(const dpz_mesh *m, double d, int fractions)
{
    dpz_grid *g = NULL;
    dpz_err err;
    dpz_status st = dpz_stl_voxelize(&g, m, d, fractions, 4, 0, &err);
    if (st != DPZ_OK)
        print_error("%s\n", err.msg);
    assert_int_equal(st, DPZ_OK);
    return g;
}

/* ---- tests ---- */

/* Two boxes whose faces are subdivided at half-integer steps, voxelized at d = 1 (unit
 * 1 m, so that every coordinate is exact): the rays through voxel centres run exactly
 * through mesh vertices, edges and face diagonals. No voxel may flip. */
static void test_stl_rays_through_edges_and_vertices(void **state)
{
    (void)state;
    tris m = {0};
    double lo1[3] = {-3, -3, -3}, hi1[3] = {3, 3, 3};
    double lo2[3] = {5, -1, -2}, hi2[3] = {7, 2, 1};
    add_box(&m, lo1, hi1, 12); /* grid lines every 0.5: through every voxel centre */
    add_box(&m, lo2, hi2, 4);  /* steps 0.5, 0.75, 0.75 */
    for (int form = 0; form < 2; form++) {
        size_t len;
        void *buf =
            form ? (void *)to_binary(&m, 1.0, &len) : (void *)to_ascii(&m, 1.0, &len);
        dpz_mesh *mesh = read_ok(buf, len, 1.0);
        free(buf);
        assert_int_equal(mesh->n_tri, m.n);
        assert_close(mesh->volume_m3, 216.0 + 2.0 * 3.0 * 3.0, 1e-14);
        dpz_grid *g = vox_ok(mesh, 1.0, 0);
        /* Bounding box x -3..7 (q = 5, even: 10 voxels), y -3..3 (6), z -3..3 (6). */
        assert_int_equal(g->nx, 10);
        assert_int_equal(g->ny, 6);
        assert_int_equal(g->nz, 6);
        size_t bad = 0, inside = 0;
        for (size_t idx = 0; idx < g->nx * g->ny * g->nz; idx++) {
            double r[3];
            dpz_grid_centre(g, idx, r);
            int in1 = fabs(r[0]) < 3 && fabs(r[1]) < 3 && fabs(r[2]) < 3;
            int in2 =
                r[0] > 5 && r[0] < 7 && r[1] > -1 && r[1] < 2 && r[2] > -2 && r[2] < 1;
            int want = in1 || in2;
            inside += want;
            bad += (g->label[idx] != 0) != want;
        }
        assert_int_equal(inside, 216 + 2 * 3 * 3);
        assert_int_equal(bad, 0);
        /* The same holds for each ray direction alone: with fractions (rays along x only,
         * 2^3 samples) every sample of an inside voxel is inside, none outside. */
        dpz_grid *gf = NULL;
        assert_int_equal(dpz_stl_voxelize(&gf, mesh, 1.0, 1, 2, 0, NULL), DPZ_OK);
        double vm, vv;
        dpz_stl_volumes(mesh, gf, &vm, &vv);
        assert_close(vv, vm, 1e-12);
        dpz_grid_destroy(gf);
        dpz_grid_destroy(g);
        dpz_mesh_destroy(mesh);
    }
    free(m.t);
}

/* A cube mesh voxelizes to exactly the voxels of the built-in box of the same size. */
static void test_stl_cube_matches_builtin_box(void **state)
{
    (void)state;
    const double nm = 1e-9, d = 1.3 * nm;
    tris m = {0};
    double lo[3] = {-10.7, -7.9, -5.3}, hi[3] = {10.7, 7.9, 5.3}; /* in nm */
    add_box(&m, lo, hi, 3);
    dpz_shape box;
    dpz_shape_init(&box, DPZ_SHAPE_BOX);
    box.size[0] = 21.4 * nm, box.size[1] = 15.8 * nm, box.size[2] = 10.6 * nm;
    dpz_grid *ref = NULL;
    assert_int_equal(dpz_shape_voxelize(&ref, &box, d, 0, 1, 0, NULL), DPZ_OK);
    for (int form = 0; form < 2; form++) {
        size_t len;
        void *buf =
            form ? (void *)to_binary(&m, 1.0, &len) : (void *)to_ascii(&m, 1.0, &len);
        dpz_mesh *mesh = read_ok(buf, len, nm);
        free(buf);
        dpz_grid *g = vox_ok(mesh, d, 0);
        assert_int_equal(g->nx, ref->nx);
        assert_int_equal(g->ny, ref->ny);
        assert_int_equal(g->nz, ref->nz);
        assert_memory_equal(g->label, ref->label, g->nx * g->ny * g->nz);
        assert_int_equal(g->source_kind, DPZ_SOURCE_MESH);
        double unit;
        char path[64];
        assert_int_equal(dpz_mesh_parse_record(g->source, &unit, path, sizeof path, NULL),
                         DPZ_OK);
        assert_true(unit == nm);
        assert_string_equal(path, "gen.stl");
        /* Mesh volume by the divergence theorem = edge product (binary: float rounding).
         */
        assert_close(mesh->volume_m3, 21.4 * 15.8 * 10.6 * nm * nm * nm,
                     form ? 1e-6 : 1e-12);
        dpz_grid_destroy(g);
        dpz_mesh_destroy(mesh);
    }
    /* Through a file: same voxels, and the mesh volume beside them. */
    size_t len;
    unsigned char *bin = to_binary(&m, 1.0, &len);
    char path[64];
    snprintf(path, sizeof path, "/tmp/dpz_stl_%ld.stl", (long)getpid());
    FILE *f = fopen(path, "wb");
    assert_non_null(f);
    assert_int_equal(fwrite(bin, 1, len, f), len);
    fclose(f);
    free(bin);
    dpz_grid *g = NULL;
    double vm = 0.0;
    dpz_err err;
    assert_int_equal(dpz_stl_voxelize_file(&g, path, nm, d, 0, 0, &vm, &err), DPZ_OK);
    assert_memory_equal(g->label, ref->label, g->nx * g->ny * g->nz);
    assert_close(vm, 21.4 * 15.8 * 10.6 * nm * nm * nm, 1e-6);
    assert_string_equal(strstr(g->source, "path=") + 5, path);
    dpz_grid_destroy(g);
    remove(path);
    assert_int_equal(dpz_stl_voxelize_file(&g, path, nm, d, 0, 0, &vm, &err), DPZ_EIO);
    assert_null(g);
    assert_true(vm < 0.0);
    dpz_grid_destroy(ref);
    free(m.t);
}

/* An icosphere voxelizes like the built-in sphere except in the boundary layer: the
 * icosphere lies inside the sphere by at most the sag of its largest face, so every
 * differing voxel centre lies within one voxel of the surface. */
static void test_stl_icosphere_matches_builtin_sphere(void **state)
{
    (void)state;
    const double nm = 1e-9, R = 12.37 * nm, d = 0.83 * nm;
    tris m = {0};
    add_icosphere(&m, 12.37, 3); /* 1280 faces, in nm */
    dpz_shape sph;
    dpz_shape_init(&sph, DPZ_SHAPE_SPHERE);
    sph.radius = R;
    dpz_grid *ref = NULL;
    assert_int_equal(dpz_shape_voxelize(&ref, &sph, d, 0, 1, 0, NULL), DPZ_OK);
    dpz_grid *first = NULL;
    for (int form = 0; form < 2; form++) {
        size_t len;
        void *buf =
            form ? (void *)to_binary(&m, 1.0, &len) : (void *)to_ascii(&m, 1.0, &len);
        dpz_mesh *mesh = read_ok(buf, len, nm);
        free(buf);
        assert_int_equal(mesh->n_tri, 1280);
        assert_int_equal(mesh->flipped, 0);
        double vs = 4.0 / 3.0 * 3.14159265358979323846 * R * R * R;
        /* Inscribed polyhedron: below the sphere by under 1% at 1280 faces. */
        assert_true(mesh->volume_m3 < vs && mesh->volume_m3 > 0.99 * vs);
        dpz_grid *g = vox_ok(mesh, d, 0);
        /* Same lattice: the icosphere's bounding box is within rounding of the sphere's
         * (vertices lie on the six poles), so the grids coincide. */
        assert_int_equal(g->nx, ref->nx);
        assert_int_equal(g->ny, ref->ny);
        assert_int_equal(g->nz, ref->nz);
        size_t differ = 0;
        for (size_t idx = 0; idx < g->nx * g->ny * g->nz; idx++) {
            if (g->label[idx] == ref->label[idx])
                continue;
            differ++;
            double r[3];
            dpz_grid_centre(g, idx, r);
            double dist = sqrt(r[0] * r[0] + r[1] * r[1] + r[2] * r[2]);
            assert_true(fabs(dist - R) <= d);
        }
        double vm, vv;
        dpz_stl_volumes(mesh, g, &vm, &vv);
        print_message(
            "%s icosphere: %zu of %zu voxels differ from the sphere (all in the "
            "boundary layer); mesh volume %.5g m^3, voxel volume %.5g m^3\n",
            form ? "binary" : "ASCII", differ, ref->n_occ, vm, vv);
        assert_true(differ < ref->n_occ / 20);
        assert_close(vv, vm, 2e-2);
        if (!first) {
            first = g;
        } else {
            /* ASCII and binary differ only by float rounding of the vertices. */
            size_t fd = 0;
            for (size_t idx = 0; idx < g->nx * g->ny * g->nz; idx++)
                fd += g->label[idx] != first->label[idx];
            assert_true(fd <= 4);
            dpz_grid_destroy(g);
        }
        /* Fill fractions bring the voxel volume to the mesh volume. */
        dpz_grid *gf = vox_ok(mesh, d, 1);
        double vf;
        dpz_stl_volumes(mesh, gf, NULL, &vf);
        assert_close(vf, vm, 2e-3);
        dpz_grid_destroy(gf);
        dpz_mesh_destroy(mesh);
    }
    dpz_grid_destroy(first);
    dpz_grid_destroy(ref);
    free(m.t);
}

/* A mesh wound inwards is turned around and gives the same voxels. */
static void test_stl_inverted_mesh_is_turned(void **state)
{
    (void)state;
    tris m = {0};
    add_icosphere(&m, 7.3, 2);
    dpz_mesh *a = NULL, *b = NULL;
    assert_int_equal(dpz_mesh_from_triangles(&a, m.t, m.n, "a", 1.0, NULL), DPZ_OK);
    for (size_t q = 0; q < m.n; q++)
        for (int k = 0; k < 3; k++) {
            double t = m.t[9 * q + 3 + k];
            m.t[9 * q + 3 + k] = m.t[9 * q + 6 + k];
            m.t[9 * q + 6 + k] = t;
        }
    assert_true(dpz_mesh_signed_volume(m.t, m.n) < 0.0);
    assert_int_equal(dpz_mesh_from_triangles(&b, m.t, m.n, "a", 1.0, NULL), DPZ_OK);
    assert_int_equal(b->flipped, 1);
    assert_close(b->volume_m3, a->volume_m3, 1e-13);
    dpz_grid *ga = vox_ok(a, 0.71, 0), *gb = vox_ok(b, 0.71, 0);
    assert_memory_equal(ga->label, gb->label, ga->nx * ga->ny * ga->nz);
    dpz_grid_destroy(ga);
    dpz_grid_destroy(gb);
    dpz_mesh_destroy(a);
    dpz_mesh_destroy(b);
    free(m.t);
}

static void expect_mesh_failure(const void *buf, size_t len, dpz_status want,
                                const char *needle)
{
    dpz_mesh *m = (dpz_mesh *)&m;
    dpz_err err;
    dpz_err_clear(&err);
    dpz_status st = dpz_stl_read(&m, buf, len, "bad.stl", 1e-9, &err);
    if (st != want || !strstr(err.msg, needle))
        print_error("status %s, message '%s', expected %s with '%s'\n",
                    dpz_status_name(st), err.msg, dpz_status_name(want), needle);
    assert_int_equal(st, want);
    assert_null(m);
    assert_non_null(strstr(err.msg, needle));
    assert_non_null(strstr(err.msg, "stl reader: bad.stl: "));
}

static void test_stl_rejects_open_and_misoriented(void **state)
{
    (void)state;
    tris m = {0};
    double lo[3] = {0, 0, 0}, hi[3] = {2.5, 1.5, 1.0};
    add_box(&m, lo, hi, 1);
    /* Drop the last triangle: its three edges are open. */
    m.n--;
    size_t len;
    char *txt = to_ascii(&m, 1.0, &len);
    expect_mesh_failure(txt, len, DPZ_EFORMAT, "mesh is not closed: 3 open edges");
    free(txt);
    unsigned char *bin = to_binary(&m, 1.0, &len);
    expect_mesh_failure(bin, len, DPZ_EFORMAT, "mesh is not closed: 3 open edges");
    free(bin);
    m.n++;
    /* Flip one triangle: its three edges run the same way as their neighbours'. */
    for (int k = 0; k < 3; k++) {
        double t = m.t[3 + k];
        m.t[3 + k] = m.t[6 + k];
        m.t[6 + k] = t;
    }
    txt = to_ascii(&m, 1.0, &len);
    expect_mesh_failure(txt, len, DPZ_EFORMAT, "not consistently oriented: 3 edges");
    free(txt);
    /* A duplicated triangle makes an edge shared by three triangles. */
    for (int k = 0; k < 3; k++) {
        double t = m.t[3 + k];
        m.t[3 + k] = m.t[6 + k];
        m.t[6 + k] = t;
    }
    add_tri(&m, m.t, m.t + 3, m.t + 6);
    txt = to_ascii(&m, 1.0, &len);
    expect_mesh_failure(txt, len, DPZ_EFORMAT, "not closed");
    free(txt);
    free(m.t);
    /* A flat closed surface (two faces back to back) encloses nothing. */
    double flat[18] = {0, 0, 0, 1, 0, 0, 0, 1, 0, 0, 0, 0, 0, 1, 0, 1, 0, 0};
    dpz_mesh *mm = NULL;
    dpz_err err;
    assert_int_equal(dpz_mesh_from_triangles(&mm, flat, 2, "flat", 1.0, &err),
                     DPZ_EFORMAT);
    assert_non_null(strstr(err.msg, "encloses no volume"));
    assert_int_equal(dpz_mesh_from_triangles(&mm, flat, 0, "flat", 1.0, &err),
                     DPZ_EFORMAT);
    assert_non_null(strstr(err.msg, "no triangles"));
}

#define FACET                                                                            \
    "facet normal 0 0 1\nouter loop\nvertex 0 0 0\nvertex 1 0 0\nvertex 0 1 "            \
    "0\nendloop\nendfacet\n"

static void test_stl_rejects_malformed(void **state)
{
    (void)state;
    static const struct {
        const char *text;
        dpz_status st;
        const char *needle;
    } cases[] = {
        {"", DPZ_EFORMAT, "byte 0: neither ASCII"},
        {"hello", DPZ_EFORMAT, "byte 0: neither ASCII"},
        {"solid x\nendsolid x\n", DPZ_EFORMAT, "no triangles"},
        {"solid x\n" FACET, DPZ_EFORMAT,
         "line 9: unexpected end of file (missing 'endsolid')"},
        {"solid x\nfacet normal 0 0 1\nouter loop\nvertex 0 0 0\nvertex 1 0 0\nvertex 0 "
         "1\n"
         "endloop\nendfacet\nendsolid\n",
         DPZ_EFORMAT, "line 7: vertex: 'endloop' is not a number"},
        {"solid x\nfacet normal 0 0 1\nouter loop\nvertex 0 nan 0\n", DPZ_EFORMAT,
         "line 4: vertex coordinate 'nan' is not finite"},
        {"solid x\nfacet normal 0 0 1\nouter loop\nvertex 0 1e999 0\n", DPZ_EFORMAT,
         "line 4: vertex coordinate '1e999' is not finite"},
        {"solid x\nfacet normal 0 0 1\nouter loop\nvertex 0 0 0\nvertex 1 0 0\nvertex 0 "
         "1 0\n"
         "endfacet\n",
         DPZ_EFORMAT, "line 7: expected 'endloop' (got 'endfacet')"},
        {"solid x\nfacet normal 0 0 1\ninner loop\n", DPZ_EFORMAT,
         "line 3: expected 'outer' (got 'inner')"},
        {"solid x\nfacets\n", DPZ_EFORMAT, "line 2: expected 'facet' or 'endsolid'"},
        {"solid x\n" FACET "endsolid x\ngarbage\n", DPZ_EFORMAT,
         "line 10: unexpected 'garbage' after 'endsolid'"},
        {"solid x\nfacet normal 0 0 1\nouter loop\nvertex 0 0 0\nvertex 1 0 0\nvertex 0 "
         "1 0\n"
         "endloop\nendfacet\nendsolid x\n",
         DPZ_EFORMAT, "not closed: 3 open edges"},
    };
    for (size_t q = 0; q < sizeof cases / sizeof cases[0]; q++)
        expect_mesh_failure(cases[q].text, strlen(cases[q].text), cases[q].st,
                            cases[q].needle);
    /* Binary: wrong size (truncated), zero triangles, NaN coordinate. */
    tris m = {0};
    double lo[3] = {0, 0, 0}, hi[3] = {1, 2, 3};
    add_box(&m, lo, hi, 1);
    size_t len;
    unsigned char *bin = to_binary(&m, 1.0, &len);
    bin[0] = 'X'; /* not "solid": only the size check can recognise it */
    dpz_mesh *mesh = read_ok(bin, len, 1e-9);
    assert_close(mesh->volume_m3, 6e-27, 1e-12);
    dpz_mesh_destroy(mesh);
    expect_mesh_failure(bin, len - 1, DPZ_EFORMAT,
                        "byte 80: binary STL header counts 12");
    expect_mesh_failure(bin, len + 3, DPZ_EFORMAT, "truncated or not an STL file");
    unsigned char zero[84] = {0};
    expect_mesh_failure(zero, 84, DPZ_EFORMAT, "byte 80: binary STL with no triangles");
    float nanf_ = NAN; /* vertex 2, y of triangle 3: 84 + 2 * 50 + 12 + 4 * 4 = 212 */
    memcpy(bin + 84 + 50 * 2 + 12 + 4 * 4, &nanf_, 4);
    expect_mesh_failure(bin, len, DPZ_EFORMAT, "byte 212: triangle 3 has a non-finite");
    /* A binary file starting with "solid" whose size matches is binary. */
    memcpy(bin, "solid", 5);
    expect_mesh_failure(bin, len, DPZ_EFORMAT, "byte 212");
    free(bin);
    /* Units. */
    size_t tl;
    char *txt = to_ascii(&m, 1.0, &tl);
    dpz_err err;
    dpz_mesh *mm = NULL;
    assert_int_equal(dpz_stl_read(&mm, txt, tl, "u.stl", 0.0, &err), DPZ_EINVAL);
    assert_non_null(strstr(err.msg, "unit"));
    assert_int_equal(dpz_stl_read(&mm, txt, tl, "u.stl", NAN, &err), DPZ_EINVAL);
    /* Every truncation of the ASCII text before its final keyword fails cleanly (after
     * "endsolid" only the optional solid name follows). */
    size_t last = (size_t)(strstr(txt, "endsolid") - txt) + 8;
    for (size_t cut = 0; cut < last; cut += 3) {
        mm = (dpz_mesh *)&mm;
        assert_int_not_equal(dpz_stl_read(&mm, txt, cut, "t.stl", 1.0, NULL), DPZ_OK);
        assert_null(mm);
    }
    free(txt);
    free(m.t);
    assert_int_equal(dpz_stl_read_file(&mm, "/nonexistent-dpz/x.stl", 1.0, &err),
                     DPZ_EIO);
}

static void test_stl_voxelize_errors_and_allocation(void **state)
{
    (void)state;
    tris m = {0};
    add_icosphere(&m, 5.1, 1);
    size_t len;
    char *txt = to_ascii(&m, 1.0, &len);
    dpz_mesh *mesh = read_ok(txt, len, 1.0);
    dpz_grid *g = NULL;
    dpz_err err;
    assert_int_equal(dpz_stl_voxelize(&g, mesh, 0.0, 0, 1, 0, &err), DPZ_EINVAL);
    assert_int_equal(dpz_stl_voxelize(&g, mesh, NAN, 0, 1, 0, &err), DPZ_EINVAL);
    assert_int_equal(dpz_stl_voxelize(&g, mesh, 1.0, 1, 0, 0, &err), DPZ_EINVAL);
    assert_int_equal(dpz_stl_voxelize(&g, mesh, 1e-12, 0, 1, 0, &err), DPZ_ELIMIT);
    assert_non_null(strstr(err.msg, "limit"));
    assert_int_equal(dpz_stl_voxelize(&g, mesh, 1.0, 0, 1, 100, &err), DPZ_ELIMIT);
    assert_null(g);
    /* Allocation failure at every step of reading and of voxelizing. */
    int failures = 0;
    for (long n = 0; n < 40; n++) {
        dpz_mesh *mm = NULL;
        dpz_alloc_fail_after(n);
        dpz_status st = dpz_stl_read(&mm, txt, len, NULL, 1.0, NULL);
        dpz_alloc_fail_after(-1);
        if (st == DPZ_OK) {
            dpz_mesh_destroy(mm);
            break;
        }
        assert_int_equal(st, DPZ_ENOMEM);
        assert_null(mm);
        failures++;
    }
    assert_true(failures >= 5);
    for (int fr = 0; fr < 2; fr++) {
        failures = 0;
        for (long n = 0; n < 40; n++) {
            dpz_alloc_fail_after(n);
            dpz_status st = dpz_stl_voxelize(&g, mesh, 0.9, fr, 3, 0, NULL);
            dpz_alloc_fail_after(-1);
            if (st == DPZ_OK) {
                dpz_grid_destroy(g);
                break;
            }
            assert_int_equal(st, DPZ_ENOMEM);
            assert_null(g);
            failures++;
        }
        assert_true(failures >= 3);
    }
    free(txt);
    dpz_mesh_destroy(mesh);
    free(m.t);
}

/* Mutation robustness (a small deterministic fuzz): flipped bytes and cut lengths of a
 * valid ASCII and binary STL give either a clean error or a closed mesh that voxelizes;
 * never a crash (run under AddressSanitizer in CI). */
static void test_stl_survives_mutations(void **state)
{
    (void)state;
    tris m = {0};
    add_icosphere(&m, 3.7, 1);
    size_t alen, blen;
    char *asc = to_ascii(&m, 1.0, &alen);
    unsigned char *bin = to_binary(&m, 1.0, &blen);
    unsigned char *work = malloc(alen > blen ? alen : blen);
    assert_non_null(work);
    uint64_t seed = 0x57fu;
    size_t ok = 0, refused = 0;
    for (int trial = 0; trial < 600; trial++) {
        int binary = trial % 2;
        size_t len = binary ? blen : alen;
        memcpy(work, binary ? (const void *)bin : (const void *)asc, len);
        int edits = 1 + trial % 3;
        for (int e = 0; e < edits; e++) {
            size_t at = (size_t)((dpz_test_rand(&seed) + 1.0) * 0.5 * (double)len) % len;
            work[at] = (unsigned char)((dpz_test_rand(&seed) + 1.0) * 128.0);
        }
        if (trial % 5 == 0)
            len = (size_t)((dpz_test_rand(&seed) + 1.0) * 0.5 * (double)len);
        dpz_mesh *mesh = NULL;
        dpz_err err;
        dpz_err_clear(&err);
        if (dpz_stl_read(&mesh, (const char *)work, len, "f.stl", 1.0, &err) != DPZ_OK) {
            assert_null(mesh);
            assert_true(strlen(err.msg) > 0);
            refused++;
            continue;
        }
        ok++;
        assert_true(mesh->volume_m3 > 0.0);
        dpz_grid *g = NULL;
        dpz_status st = dpz_stl_voxelize(&g, mesh, 0.9, 0, 1, 1 << 20, &err);
        assert_true(st == DPZ_OK || st == DPZ_ELIMIT);
        dpz_grid_destroy(g);
        dpz_mesh_destroy(mesh);
    }
    print_message("STL mutations: %zu read, %zu refused\n", ok, refused);
    assert_true(refused > 0 && ok > 0);
    free(work);
    free(asc);
    free(bin);
    free(m.t);
}

/* The shipped example meshes (a 20 nm cube, ASCII and binary with a header starting with
 * "solid") read to the same mesh: volume 20^3 nm^3, 10^3 voxels at 2 nm. */
static void test_stl_example_files(void **state)
{
    (void)state;
    const char *files[] = {"tests/data/mesh/cube_20nm.stl",
                           "tests/data/mesh/cube_20nm_binary.stl"};
    for (int q = 0; q < 2; q++) {
        dpz_mesh *mesh = NULL;
        dpz_err err;
        dpz_status st = dpz_stl_read_file(&mesh, dpz_test_path(files[q]), 1e-9, &err);
        if (st != DPZ_OK)
            print_error("%s\n", err.msg);
        assert_int_equal(st, DPZ_OK);
        assert_int_equal(mesh->n_tri, 12);
        assert_close(mesh->volume_m3, 8000e-27, 1e-12);
        dpz_grid *g = vox_ok(mesh, 2e-9, 0);
        assert_int_equal(g->n_occ, 1000);
        assert_int_equal(g->nx * g->ny * g->nz, 1000);
        dpz_grid_destroy(g);
        dpz_mesh_destroy(mesh);
    }
}

/* A torus (non-convex, with a hole: rays cross it up to four times), meshed from a
 * periodic parameter grid so that vertices are shared exactly, voxelizes like the exact
 * torus (sqrt(x^2 + y^2) - Rt)^2 + z^2 <= r^2 except within one voxel of its surface.
 * Pappus: the exact torus volume is 2 pi^2 Rt r^2. */
static void test_stl_torus_matches_exact_torus(void **state)
{
    (void)state;
    const double pi = 3.14159265358979323846;
    const double Rt = 9.7, r = 3.3, d = 0.61; /* mesh units = metres here */
    const int nu = 96, nv = 48;
    double *pts = malloc((size_t)nu * nv * 3 * sizeof *pts);
    assert_non_null(pts);
    for (int i = 0; i < nu; i++)
        for (int j = 0; j < nv; j++) {
            double u = 2 * pi * i / nu, v = 2 * pi * j / nv;
            double *p = pts + 3 * (i * nv + j);
            p[0] = (Rt + r * cos(v)) * cos(u);
            p[1] = (Rt + r * cos(v)) * sin(u);
            p[2] = r * sin(v);
        }
    tris m = {0};
    for (int i = 0; i < nu; i++)
        for (int j = 0; j < nv; j++) {
            const double *a = pts + 3 * (i * nv + j);
            const double *b = pts + 3 * (((i + 1) % nu) * nv + j);
            const double *c = pts + 3 * (((i + 1) % nu) * nv + (j + 1) % nv);
            const double *e = pts + 3 * (i * nv + (j + 1) % nv);
            add_tri(&m, a, b, c);
            add_tri(&m, a, c, e);
        }
    free(pts);
    dpz_mesh *mesh = NULL;
    dpz_err err;
    assert_int_equal(dpz_mesh_from_triangles(&mesh, m.t, m.n, "torus", 1.0, &err),
                     DPZ_OK);
    double v_exact = 2 * pi * pi * Rt * r * r;
    /* Inscribed polyhedron: a little below the smooth torus. */
    assert_true(mesh->volume_m3 < v_exact && mesh->volume_m3 > 0.99 * v_exact);
    dpz_grid *g = vox_ok(mesh, d, 0);
    size_t differ = 0, inside = 0;
    for (size_t idx = 0; idx < g->nx * g->ny * g->nz; idx++) {
        double p[3];
        dpz_grid_centre(g, idx, p);
        double q = hypot(hypot(p[0], p[1]) - Rt, p[2]); /* distance to the core circle */
        int want = q <= r;
        inside += want;
        if ((g->label[idx] != 0) != want) {
            differ++;
            assert_true(fabs(q - r) <= d);
        }
    }
    print_message("torus: %zu of %zu voxels differ from the exact torus, all within one "
                  "voxel of its surface\n",
                  differ, inside);
    assert_true(inside > 8000); /* V / d^3 = 2 pi^2 Rt r^2 / d^3 = 9190 */
    assert_true(differ < inside / 50);
    /* The hole is empty: the voxel at the centre is outside. */
    size_t centre = dpz_grid_index(g, g->nx / 2, g->ny / 2, g->nz / 2);
    assert_int_equal(g->label[centre], 0);
    dpz_grid_destroy(g);
    dpz_mesh_destroy(mesh);
    free(m.t);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_stl_rays_through_edges_and_vertices),
        cmocka_unit_test(test_stl_cube_matches_builtin_box),
        cmocka_unit_test(test_stl_icosphere_matches_builtin_sphere),
        cmocka_unit_test(test_stl_inverted_mesh_is_turned),
        cmocka_unit_test(test_stl_torus_matches_exact_torus),
        cmocka_unit_test(test_stl_rejects_open_and_misoriented),
        cmocka_unit_test(test_stl_rejects_malformed),
        cmocka_unit_test(test_stl_voxelize_errors_and_allocation),
        cmocka_unit_test(test_stl_survives_mutations),
        cmocka_unit_test(test_stl_example_files),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
