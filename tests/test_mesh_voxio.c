/* test_mesh_voxio.c: voxel files (mesh/vtk.c, npy.c, csvvox.c): round trips that keep
 * every voxel, hand-made files in every supported encoding (legacy VTK format: Kitware,
 * VTK User's Guide 11th ed., ch. 19; .npy: NumPy Enhancement Proposal 1), and every
 * malformed-input path, including allocation failure. */
#include <dirent.h>
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
#include "dpz_voxio.h"

static const double D = 2.385e-9; /* voxel edge used throughout, m */

/* A scratch directory per test run. */
static char scratch[256];

static int setup_scratch(void **state)
{
    (void)state;
    snprintf(scratch, sizeof scratch, "/tmp/dpz_voxio_%ld", (long)getpid());
    char cmd[300];
    snprintf(cmd, sizeof cmd, "mkdir -p %s", scratch);
    return system(cmd) == 0 ? 0 : -1;
}

static int teardown_scratch(void **state)
{
    (void)state;
    char cmd[300];
    snprintf(cmd, sizeof cmd, "rm -rf %s", scratch);
    return system(cmd) == 0 ? 0 : -1;
}

static const char *scratch_path(const char *name)
{
    static char buf[2][400];
    static int which = 0;
    which ^= 1;
    snprintf(buf[which], sizeof buf[which], "%s/%s", scratch, name);
    return buf[which];
}

/* Number of entries in the scratch directory (to catch leftover temporary files). */
static int scratch_entries(void)
{
    DIR *d = opendir(scratch);
    assert_non_null(d);
    int n = 0;
    struct dirent *e;
    while ((e = readdir(d)) != NULL)
        n += e->d_name[0] != '.';
    closedir(d);
    return n;
}

/* An asymmetric object with several labels on a 5 x 4 x 3 grid. */
static dpz_grid *make_object(int with_fill)
{
    dpz_grid *g = NULL;
    assert_int_equal(dpz_grid_create(&g, 5, 4, 3, D, 0, NULL), DPZ_OK);
    size_t n = 5 * 4 * 3;
    for (size_t i = 0; i < n; i++)
        g->label[i] = (uint8_t)((i * 7 + 3) % 5 == 0 ? 0 : (i * 13) % 256);
    g->label[dpz_grid_index(g, 4, 3, 2)] = 255;
    g->label[0] = 1;
    g->origin[0] = -3.1e-9, g->origin[1] = 1.7e-9, g->origin[2] = 0.0;
    if (with_fill) {
        g->fill = calloc(n, sizeof *g->fill);
        for (size_t i = 0; i < n; i++)
            g->fill[i] = g->label[i] ? (float)((i % 8) + 1) / 8.0f : 0.0f;
    }
    assert_int_equal(dpz_grid_update(g, NULL), DPZ_OK);
    return g;
}

static void assert_same_grid(const dpz_grid *a, const dpz_grid *b)
{
    assert_int_equal(a->nx, b->nx);
    assert_int_equal(a->ny, b->ny);
    assert_int_equal(a->nz, b->nz);
    assert_true(a->d == b->d);
    for (int q = 0; q < 3; q++)
        assert_true(a->origin[q] == b->origin[q]);
    assert_memory_equal(a->label, b->label, a->nx * a->ny * a->nz);
    assert_int_equal(a->n_occ, b->n_occ);
    assert_int_equal(!a->fill, !b->fill);
    if (a->fill)
        assert_memory_equal(a->fill, b->fill, a->nx * a->ny * a->nz * sizeof(float));
    assert_int_equal(a->source_kind, b->source_kind);
    assert_string_equal(a->source, b->source);
}

static void test_vtk_round_trip_keeps_every_voxel(void **state)
{
    (void)state;
    for (int fill = 0; fill < 2; fill++) {
        dpz_grid *g = make_object(fill);
        const char *path = scratch_path("rt.vtk");
        dpz_err err;
        assert_int_equal(dpz_vtk_write_file(g, path, &err), DPZ_OK);
        dpz_grid *h = NULL;
        assert_int_equal(dpz_vtk_read_file(&h, path, 0, &err), DPZ_OK);
        assert_same_grid(g, h);
        /* And again: VTK -> VTK -> VTK. */
        assert_int_equal(dpz_vtk_write_file(h, path, &err), DPZ_OK);
        dpz_grid *h2 = NULL;
        assert_int_equal(dpz_vtk_read_file(&h2, path, 0, &err), DPZ_OK);
        assert_same_grid(g, h2);
        dpz_grid_destroy(h2);
        dpz_grid_destroy(h);
        dpz_grid_destroy(g);
        remove(path);
    }
    assert_int_equal(scratch_entries(), 0); /* no temporary file left */
}

static void test_vtk_written_header(void **state)
{
    (void)state;
    dpz_grid *g = make_object(0);
    const char *path = scratch_path("hdr.vtk");
    assert_int_equal(dpz_vtk_write_file(g, path, NULL), DPZ_OK);
    FILE *f = fopen(path, "rb");
    assert_non_null(f);
    char text[400] = {0};
    size_t got = fread(text, 1, sizeof text - 1, f);
    fclose(f);
    assert_true(got > 200);
    /* The header a viewer reads: point data, one point per voxel centre. */
    assert_non_null(strstr(text,
                           "# vtk DataFile Version 3.0\ndipolize voxels v1\nBINARY\n"
                           "DATASET STRUCTURED_POINTS\nDIMENSIONS 5 4 3\n"));
    assert_non_null(strstr(text, "POINT_DATA 60\nSCALARS labels unsigned_char 1\n"
                                 "LOOKUP_TABLE default\n"));
    /* x runs fastest: the first bytes are voxels (0,0,0), (1,0,0), (2,0,0). */
    const char *data = strstr(text, "LOOKUP_TABLE default\n") + 21;
    assert_int_equal((unsigned char)data[0], g->label[dpz_grid_index(g, 0, 0, 0)]);
    assert_int_equal((unsigned char)data[1], g->label[dpz_grid_index(g, 1, 0, 0)]);
    assert_int_equal((unsigned char)data[5], g->label[dpz_grid_index(g, 0, 1, 0)]);
    assert_int_equal((unsigned char)data[20], g->label[dpz_grid_index(g, 0, 0, 1)]);
    dpz_grid_destroy(g);
    remove(path);
}

/* A shape record survives the file and re-voxelizes to the same voxels. */
static void test_vtk_shape_record_round_trip(void **state)
{
    (void)state;
    dpz_shape s;
    dpz_shape_init(&s, DPZ_SHAPE_SPLIT_RING);
    s.outer = 21.7e-9, s.inner = 13.1e-9, s.thickness = 5.3e-9, s.gap = 4.7e-9;
    s.euler[0] = 0.25, s.euler[1] = 0.5, s.label = 3;
    dpz_grid *g = NULL;
    dpz_err err;
    assert_int_equal(dpz_shape_voxelize(&g, &s, 1.3e-9, 1, 3, 0, &err), DPZ_OK);
    const char *path = scratch_path("shape.vtk");
    assert_int_equal(dpz_vtk_write_file(g, path, &err), DPZ_OK);
    dpz_grid *h = NULL;
    assert_int_equal(dpz_vtk_read_file(&h, path, 0, &err), DPZ_OK);
    assert_same_grid(g, h);
    assert_int_equal(h->source_kind, DPZ_SOURCE_SHAPE);
    dpz_shape back;
    assert_int_equal(dpz_shape_parse_record(h->source, &back, &err), DPZ_OK);
    assert_true(back.outer == s.outer && back.gap == s.gap &&
                back.euler[1] == s.euler[1]);
    assert_int_equal(back.label, 3);
    dpz_grid *again = NULL;
    assert_int_equal(dpz_shape_voxelize(&again, &back, 1.3e-9, 1, 3, 0, &err), DPZ_OK);
    assert_same_grid(g, again);
    dpz_grid_destroy(again);
    dpz_grid_destroy(h);
    /* A mesh record is kept as well. */
    g->source_kind = DPZ_SOURCE_MESH;
    snprintf(g->source, sizeof g->source,
             "dipolize-mesh v1 unit=1e-09 path=parts/a b.stl");
    assert_int_equal(dpz_vtk_write_file(g, path, &err), DPZ_OK);
    assert_int_equal(dpz_vtk_read_file(&h, path, 0, &err), DPZ_OK);
    assert_int_equal(h->source_kind, DPZ_SOURCE_MESH);
    assert_string_equal(h->source, g->source);
    dpz_grid_destroy(h);
    /* A record with a line break cannot go into a title line: refused, no file. */
    remove(path);
    strcpy(g->source, "dipolize-mesh v1 unit=1\npath=x");
    assert_int_equal(dpz_vtk_write_file(g, path, &err), DPZ_EINVAL);
    assert_int_equal(access(path, F_OK), -1);
    dpz_grid_destroy(g);
}

/* Hand-written ASCII file, 3 x 2 x 2 points, x fastest: value = 1 + i + 3 j + 6 k. */
static void test_vtk_read_ascii_layout(void **state)
{
    (void)state;
    const char *types[] = {"unsigned_char", "char",         "short", "unsigned_short",
                           "int",           "unsigned_int", "float", "double"};
    for (size_t t = 0; t < 8; t++) {
        char text[1024];
        snprintf(text, sizeof text,
                 "# vtk DataFile Version 2.0\r\nhand made\r\nASCII\r\n\r\n"
                 "DATASET STRUCTURED_POINTS\nDIMENSIONS 3 2 2\nORIGIN 1e-9 -2e-9 0.5e-9\n"
                 "SPACING 2.385e-9 2.385e-9 2.385e-9\nPOINT_DATA 12\n"
                 "SCALARS something %s\nLOOKUP_TABLE default\n"
                 "1 2 3 4 5 6\n7 8 9\n10 11 12\n",
                 types[t]);
        dpz_grid *g = NULL;
        dpz_err err;
        dpz_status st = dpz_vtk_read(&g, text, strlen(text), "hand.vtk", 0, &err);
        if (st != DPZ_OK)
            print_error("%s: %s\n", types[t], err.msg);
        assert_int_equal(st, DPZ_OK);
        assert_int_equal(g->nx, 3);
        assert_int_equal(g->ny, 2);
        assert_int_equal(g->nz, 2);
        for (size_t i = 0; i < 3; i++)
            for (size_t j = 0; j < 2; j++)
                for (size_t k = 0; k < 2; k++)
                    assert_int_equal(g->label[dpz_grid_index(g, i, j, k)],
                                     1 + i + 3 * j + 6 * k);
        assert_true(g->origin[0] == 1e-9 && g->origin[1] == -2e-9 &&
                    g->origin[2] == 0.5e-9);
        assert_true(g->d == 2.385e-9);
        assert_int_equal(g->n_occ, 12);
        assert_int_equal(g->source_kind, DPZ_SOURCE_VOXELS);
        dpz_grid_destroy(g);
    }
}

/* Big-endian encoders for hand-made binary files. */
static size_t encode_be(unsigned char *p, const char *type, double v)
{
    if (!strcmp(type, "unsigned_char") || !strcmp(type, "char")) {
        p[0] = (unsigned char)(int)v;
        return 1;
    }
    if (!strcmp(type, "short") || !strcmp(type, "unsigned_short")) {
        uint16_t u = (uint16_t)(int)v;
        p[0] = (unsigned char)(u >> 8), p[1] = (unsigned char)u;
        return 2;
    }
    uint64_t u;
    size_t n;
    if (!strcmp(type, "float")) {
        float f = (float)v;
        uint32_t w;
        memcpy(&w, &f, 4);
        u = w, n = 4;
    } else if (!strcmp(type, "double")) {
        memcpy(&u, &v, 8);
        n = 8;
    } else {
        u = (uint32_t)(int32_t)v, n = 4;
    }
    for (size_t b = 0; b < n; b++)
        p[b] = (unsigned char)(u >> (8 * (n - 1 - b)));
    return n;
}

/* Builds a binary VTK buffer of nx*ny*nz values vals (x fastest). Returns its length. */
static size_t make_binary_vtk(unsigned char *out, const char *type, const char *section,
                              size_t nx, size_t ny, size_t nz, const double *vals,
                              size_t nvals)
{
    int n = sprintf((char *)out,
                    "# vtk DataFile Version 3.0\nbinary test\nBINARY\n"
                    "DATASET STRUCTURED_POINTS\nDIMENSIONS %zu %zu %zu\n"
                    "SPACING 1.5e-9 1.5e-9 1.5e-9\nORIGIN 0 0 0\n%s %zu\n"
                    "SCALARS labels %s 1\nLOOKUP_TABLE default\n",
                    nx, ny, nz, section, nvals, type);
    size_t pos = (size_t)n;
    for (size_t v = 0; v < nvals; v++)
        pos += encode_be(out + pos, type, vals[v]);
    out[pos++] = '\n';
    return pos;
}

static void test_vtk_read_binary_every_type(void **state)
{
    (void)state;
    const char *types[] = {"unsigned_char", "char",         "short", "unsigned_short",
                           "int",           "unsigned_int", "float", "double"};
    double vals[24];
    for (int v = 0; v < 24; v++)
        vals[v] = (v * 37) % 128; /* 0..127 fits every type, char included */
    vals[5] = 0;
    for (size_t t = 0; t < 8; t++) {
        unsigned char buf[1024];
        size_t len = make_binary_vtk(buf, types[t], "POINT_DATA", 4, 3, 2, vals, 24);
        dpz_grid *g = NULL;
        dpz_err err;
        dpz_status st = dpz_vtk_read(&g, (const char *)buf, len, "bin.vtk", 0, &err);
        if (st != DPZ_OK)
            print_error("%s: %s\n", types[t], err.msg);
        assert_int_equal(st, DPZ_OK);
        for (size_t i = 0; i < 4; i++)
            for (size_t j = 0; j < 3; j++)
                for (size_t k = 0; k < 2; k++)
                    assert_int_equal(g->label[dpz_grid_index(g, i, j, k)],
                                     (int)vals[i + 4 * (j + 3 * k)]);
        dpz_grid_destroy(g);
    }
    /* Unsigned and wide types carry the full 0..255 range. */
    double big[2] = {200, 255};
    const char *wide[] = {"unsigned_char", "short", "unsigned_short", "int",
                          "unsigned_int",  "float", "double"};
    for (size_t t = 0; t < 7; t++) {
        unsigned char buf[512];
        size_t len = make_binary_vtk(buf, wide[t], "POINT_DATA", 2, 1, 1, big, 2);
        dpz_grid *g = NULL;
        assert_int_equal(dpz_vtk_read(&g, (const char *)buf, len, NULL, 0, NULL), DPZ_OK);
        assert_int_equal(g->label[dpz_grid_index(g, 0, 0, 0)], 200);
        assert_int_equal(g->label[dpz_grid_index(g, 1, 0, 0)], 255);
        dpz_grid_destroy(g);
    }
}

/* CELL_DATA: DIMENSIONS count points, voxels are the cells between them. */
static void test_vtk_read_cell_data(void **state)
{
    (void)state;
    double vals[6] = {1, 2, 3, 4, 5, 6};
    unsigned char buf[512];
    size_t len = make_binary_vtk(buf, "unsigned_char", "CELL_DATA", 4, 3, 2, vals, 6);
    dpz_grid *g = NULL;
    dpz_err err;
    assert_int_equal(dpz_vtk_read(&g, (const char *)buf, len, "cells.vtk", 0, &err),
                     DPZ_OK);
    assert_int_equal(g->nx, 3);
    assert_int_equal(g->ny, 2);
    assert_int_equal(g->nz, 1);
    assert_int_equal(g->label[dpz_grid_index(g, 2, 1, 0)], 6);
    assert_int_equal(g->label[dpz_grid_index(g, 1, 0, 0)], 2);
    /* ORIGIN is the first cell's corner: its centre is half a voxel further. */
    assert_close(g->origin[0], 0.75e-9, 1e-15);
    dpz_grid_destroy(g);
}

/* One malformed input: must fail with `want` and a message containing `needle`. */
static void expect_vtk_failure(const char *text, size_t len, dpz_status want,
                               const char *needle, size_t max_cells)
{
    dpz_grid *g = (dpz_grid *)&g;
    dpz_err err;
    dpz_err_clear(&err);
    dpz_status st = dpz_vtk_read(&g, text, len, "bad.vtk", max_cells, &err);
    if (st != want || !strstr(err.msg, needle))
        print_error("status %s, message '%s', expected %s with '%s'\n",
                    dpz_status_name(st), err.msg, dpz_status_name(want), needle);
    assert_int_equal(st, want);
    assert_null(g);
    assert_non_null(strstr(err.msg, needle));
    assert_non_null(strstr(err.msg, "vtk reader: bad.vtk: "));
}

#define HDR "# vtk DataFile Version 3.0\nt\nASCII\nDATASET STRUCTURED_POINTS\n"

static void test_vtk_rejects_malformed(void **state)
{
    (void)state;
    static const struct {
        const char *text;
        dpz_status st;
        const char *needle;
    } cases[] = {
        {"", DPZ_EFORMAT, "line 1: not a VTK"},
        {"# vtk DataFile Version 3.0", DPZ_EFORMAT, "line 2"},
        {"solid cube\n", DPZ_EFORMAT, "line 1"},
        {"# vtk DataFile Version 3.0\nt\nTEXT\n", DPZ_EFORMAT, "line 3: expected ASCII"},
        {"# vtk DataFile Version 3.0\nt\nASCII\nDATASET POLYDATA\n", DPZ_EFORMAT,
         "line 4: expected 'DATASET STRUCTURED_POINTS'"},
        {HDR "DIMENSIONS 2 2 2\nSPACING 1e-9 1e-9 2e-9\nPOINT_DATA 8\n", DPZ_EFORMAT,
         "line 6: SPACING must be equal on all axes"},
        {HDR "DIMENSIONS 2 2 2\nSPACING 0 0 0\nPOINT_DATA 8\n", DPZ_ERANGE, "positive"},
        {HDR "DIMENSIONS 2 2 2\nSPACING -1 -1 -1\nPOINT_DATA 8\n", DPZ_ERANGE,
         "positive"},
        {HDR "DIMENSIONS 2 2 2\nSPACING nan nan nan\nPOINT_DATA 8\n", DPZ_EFORMAT,
         "line 6: SPACING needs three finite"},
        {HDR "DIMENSIONS 2 2\n", DPZ_EFORMAT, "line 5: DIMENSIONS needs three"},
        {HDR "DIMENSIONS 2 -2 2\n", DPZ_EFORMAT, "line 5: DIMENSIONS"},
        {HDR "DIMENSIONS 2 0 2\nSPACING 1 1 1\nPOINT_DATA 0\n", DPZ_EFORMAT, ">= 1"},
        {HDR "DIMENSIONS 4294967296 4294967296 4294967296\nSPACING 1 1 1\nPOINT_DATA 1\n",
         DPZ_ELIMIT, "overflows"},
        {HDR "DIMENSIONS 99999999999999999999 2 2\n", DPZ_EFORMAT, "DIMENSIONS"},
        {HDR "DIMENSIONS 2000 2000 2000\nSPACING 1 1 1\nPOINT_DATA 8000000000\n",
         DPZ_ELIMIT, "raise the voxel limit"},
        {HDR "DIMENSIONS 2 2 2\nSPACING 1 1 1\nPOINT_DATA 9\n", DPZ_EFORMAT,
         "line 7: POINT_DATA count 9 does not match"},
        {HDR "DIMENSIONS 2 2 2\nSPACING 1 1 1\n", DPZ_EFORMAT, "no POINT_DATA"},
        {HDR "SPACING 1 1 1\nPOINT_DATA 8\n", DPZ_EFORMAT, "DIMENSIONS missing"},
        {HDR "DIMENSIONS 2 2 2\nCOLOR 1\n", DPZ_EFORMAT,
         "line 6: unexpected keyword 'COLOR'"},
        {HDR "DIMENSIONS 2 1 1\nSPACING 1 1 1\nPOINT_DATA 2\n", DPZ_EFORMAT,
         "no label array"},
        {HDR "DIMENSIONS 2 1 1\nSPACING 1 1 1\nPOINT_DATA 2\nSCALARS a bit\n1 0\n",
         DPZ_EFORMAT, "line 8: unsupported scalar type 'bit'"},
        {HDR "DIMENSIONS 2 1 1\nSPACING 1 1 1\nPOINT_DATA 2\nSCALARS a int 3\n1 0\n",
         DPZ_EFORMAT, "one component"},
        {HDR "DIMENSIONS 2 1 1\nSPACING 1 1 1\nPOINT_DATA 2\nSCALARS a int\n"
             "LOOKUP_TABLE default\n1\n",
         DPZ_EFORMAT, "truncated data: 1 of 2"},
        {HDR "DIMENSIONS 2 1 1\nSPACING 1 1 1\nPOINT_DATA 2\nSCALARS a int\n"
             "LOOKUP_TABLE default\n1 -1\n",
         DPZ_ERANGE, "line 10: label -1 is not an integer in 0..255"},
        {HDR "DIMENSIONS 2 1 1\nSPACING 1 1 1\nPOINT_DATA 2\nSCALARS a int\n"
             "LOOKUP_TABLE default\n1 256\n",
         DPZ_ERANGE, "label 256"},
        {HDR "DIMENSIONS 2 1 1\nSPACING 1 1 1\nPOINT_DATA 2\nSCALARS a float\n"
             "LOOKUP_TABLE default\n1 1.5\n",
         DPZ_ERANGE, "label 1.5"},
        {HDR "DIMENSIONS 2 1 1\nSPACING 1 1 1\nPOINT_DATA 2\nSCALARS a float\n"
             "LOOKUP_TABLE default\n1\nnan\n",
         DPZ_EFORMAT, "line 11: label nan"},
        {HDR "DIMENSIONS 2 1 1\nSPACING 1 1 1\nPOINT_DATA 2\nSCALARS a float\n"
             "LOOKUP_TABLE default\n1 x\n",
         DPZ_EFORMAT, "'x' is not a number"},
        {HDR "DIMENSIONS 2 1 1\nSPACING 1 1 1\nPOINT_DATA 2\nSCALARS a int\n"
             "LOOKUP_TABLE default\n1 1\nextra stuff\n",
         DPZ_EFORMAT, "line 11: unexpected 'extra'"},
        {HDR
         "DIMENSIONS 2 1 1\nSPACING 1 1 1\nPOINT_DATA 2\nSCALARS a int\n"
         "LOOKUP_TABLE default\n1 1\nSCALARS fill float\nLOOKUP_TABLE default\n1 1.25\n",
         DPZ_ERANGE, "fill fraction 1.25"},
        {HDR
         "DIMENSIONS 2 1 1\nSPACING 1 1 1\nPOINT_DATA 2\nVECTORS v float\n1 1 1 1 1 1\n",
         DPZ_EFORMAT, "unexpected 'VECTORS'"},
        {"# vtk DataFile Version 3.0\ndipolize-shape v1 sphere radius=-1\nASCII\n"
         "DATASET STRUCTURED_POINTS\nDIMENSIONS 1 1 1\nSPACING 1 1 1\nPOINT_DATA 1\n"
         "SCALARS labels unsigned_char\n1\n",
         DPZ_EFORMAT, "line 2: bad shape record"},
    };
    for (size_t q = 0; q < sizeof cases / sizeof cases[0]; q++)
        expect_vtk_failure(cases[q].text, strlen(cases[q].text), cases[q].st,
                           cases[q].needle, 0);
    /* Above a caller's limit. */
    const char *ok = HDR "DIMENSIONS 2 2 2\nSPACING 1 1 1\nPOINT_DATA 8\nSCALARS a int\n"
                         "LOOKUP_TABLE default\n1 1 1 1 1 1 1 1\n";
    expect_vtk_failure(ok, strlen(ok), DPZ_ELIMIT, "limit of 7", 7);
    dpz_grid *g = NULL;
    assert_int_equal(dpz_vtk_read(&g, ok, strlen(ok), NULL, 8, NULL), DPZ_OK);
    dpz_grid_destroy(g);
    /* A NUL byte inside a header line. */
    char nul[] = "# vtk DataFile Version 3.0\nti\0tle\nASCII\n";
    expect_vtk_failure(nul, sizeof nul - 1, DPZ_EFORMAT, "line 2: NUL byte", 0);
    /* A very long line. */
    static char longline[3000];
    memset(longline, 'a', sizeof longline - 1);
    memcpy(longline, "# vtk DataFile Version 3.0\n", 27);
    expect_vtk_failure(longline, strlen(longline), DPZ_EFORMAT, "line 2: line longer", 0);
}

static void test_vtk_rejects_truncated_binary(void **state)
{
    (void)state;
    double vals[24] = {0};
    vals[3] = 7;
    unsigned char buf[1024];
    size_t len = make_binary_vtk(buf, "int", "POINT_DATA", 4, 3, 2, vals, 24);
    dpz_grid *g = NULL;
    dpz_err err;
    assert_int_equal(dpz_vtk_read(&g, (const char *)buf, len, "b.vtk", 0, &err), DPZ_OK);
    dpz_grid_destroy(g);
    /* Every shorter prefix inside the data fails cleanly. */
    size_t header = len - 1 - 24 * 4;
    for (size_t cut = header; cut < len - 1; cut += 3) {
        g = (dpz_grid *)&g;
        assert_int_equal(dpz_vtk_read(&g, (const char *)buf, cut, "b.vtk", 0, &err),
                         DPZ_EFORMAT);
        assert_null(g);
        assert_non_null(strstr(err.msg, "truncated binary data"));
        char where[64];
        snprintf(where, sizeof where, "byte %zu", header);
        assert_non_null(strstr(err.msg, where));
    }
    /* Every prefix of the header fails too (never reads past the end). */
    for (size_t cut = 0; cut < header; cut++) {
        g = (dpz_grid *)&g;
        dpz_status st = dpz_vtk_read(&g, (const char *)buf, cut, "b.vtk", 0, &err);
        assert_true(st == DPZ_EFORMAT);
        assert_null(g);
    }
    /* A NaN in binary float data. */
    double nanv[2] = {1, NAN};
    len = make_binary_vtk(buf, "float", "POINT_DATA", 2, 1, 1, nanv, 2);
    assert_int_equal(dpz_vtk_read(&g, (const char *)buf, len, "b.vtk", 0, &err),
                     DPZ_EFORMAT);
    assert_non_null(strstr(err.msg, "label nan"));
}

static void test_vtk_allocation_failure(void **state)
{
    (void)state;
    dpz_grid *g = make_object(1);
    const char *path = scratch_path("alloc.vtk");
    assert_int_equal(dpz_vtk_write_file(g, path, NULL), DPZ_OK);
    int failures = 0;
    for (long n = 0; n < 50; n++) {
        dpz_grid *h = NULL;
        dpz_err err;
        dpz_alloc_fail_after(n);
        dpz_status st = dpz_vtk_read_file(&h, path, 0, &err);
        dpz_alloc_fail_after(-1);
        if (st == DPZ_OK) {
            assert_same_grid(g, h);
            dpz_grid_destroy(h);
            break;
        }
        assert_int_equal(st, DPZ_ENOMEM);
        assert_null(h);
        failures++;
    }
    assert_true(failures >= 4); /* file buffer, header, labels, fill, occupied list */
    dpz_alloc_fail_after(0);
    assert_int_equal(dpz_vtk_write_file(g, scratch_path("x.vtk"), NULL), DPZ_ENOMEM);
    dpz_alloc_fail_after(-1);
    remove(path);
    dpz_grid_destroy(g);
    assert_int_equal(scratch_entries(), 0);
}

static void test_vtk_write_failure_leaves_nothing(void **state)
{
    (void)state;
    dpz_grid *g = make_object(0);
    dpz_err err;
    assert_int_equal(dpz_vtk_write_file(g, "/nonexistent-dir-dpz/x.vtk", &err), DPZ_EIO);
    assert_non_null(strstr(err.msg, "/nonexistent-dir-dpz/x.vtk"));
    dpz_grid *h = (dpz_grid *)&h;
    assert_int_equal(dpz_vtk_read_file(&h, scratch_path("missing.vtk"), 0, &err),
                     DPZ_EIO);
    assert_null(h);
    assert_non_null(strstr(err.msg, "cannot open"));
    /* Renaming over a non-empty directory fails after the data are written: the
     * temporary file must be removed. */
    char cmd[512];
    snprintf(cmd, sizeof cmd, "mkdir -p %s/adir/inner", scratch);
    assert_int_equal(system(cmd), 0);
    assert_int_equal(dpz_vtk_write_file(g, scratch_path("adir"), &err), DPZ_EIO);
    snprintf(cmd, sizeof cmd, "rm -rf %s/adir", scratch);
    assert_int_equal(system(cmd), 0);
    assert_int_equal(scratch_entries(), 0);
    dpz_grid_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_vtk_round_trip_keeps_every_voxel),
        cmocka_unit_test(test_vtk_written_header),
        cmocka_unit_test(test_vtk_shape_record_round_trip),
        cmocka_unit_test(test_vtk_read_ascii_layout),
        cmocka_unit_test(test_vtk_read_binary_every_type),
        cmocka_unit_test(test_vtk_read_cell_data),
        cmocka_unit_test(test_vtk_rejects_malformed),
        cmocka_unit_test(test_vtk_rejects_truncated_binary),
        cmocka_unit_test(test_vtk_allocation_failure),
        cmocka_unit_test(test_vtk_write_failure_leaves_nothing),
    };
    return cmocka_run_group_tests(tests, setup_scratch, teardown_scratch);
}
