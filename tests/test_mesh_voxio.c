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
#include <sys/stat.h>
#include <unistd.h>

#include "dpz_test.h"

#include "dpz_fileio.h"
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
    /* The usual permissions of a new file (0666 less the umask), not the 0600 of a
     * temporary file. */
    mode_t mask = umask(0);
    umask(mask);
    struct stat sb;
    assert_int_equal(stat(path, &sb), 0);
    assert_int_equal(sb.st_mode & 0777, 0666 & ~mask);
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

/* Binary data straight after the SCALARS line (LOOKUP_TABLE is optional), starting with
 * a zero byte and a newline byte. */
static void test_vtk_read_binary_without_lookup_table(void **state)
{
    (void)state;
    const char *head =
        "# vtk DataFile Version 3.0\nno table\nBINARY\n"
        "DATASET STRUCTURED_POINTS\nDIMENSIONS 3 1 1\nSPACING 1e-9 1e-9 1e-9\n"
        "ORIGIN 0 0 0\nPOINT_DATA 3\nSCALARS labels unsigned_char 1\n";
    char buf[512];
    size_t hl = strlen(head);
    memcpy(buf, head, hl);
    buf[hl] = 0, buf[hl + 1] = 10, buf[hl + 2] = 7;
    dpz_grid *g = NULL;
    dpz_err err;
    assert_int_equal(dpz_vtk_read(&g, buf, hl + 3, "t.vtk", 0, &err), DPZ_OK);
    assert_int_equal(g->label[0], 0);
    assert_int_equal(g->label[1], 10);
    assert_int_equal(g->label[2], 7);
    dpz_grid_destroy(g);
    /* With a malformed LOOKUP_TABLE line. */
    const char *bad = "# vtk DataFile Version 3.0\nt\nASCII\nDATASET STRUCTURED_POINTS\n"
                      "DIMENSIONS 1 1 1\nSPACING 1 1 1\nPOINT_DATA 1\nSCALARS a int\n"
                      "LOOKUP_TABLE\n1\n";
    assert_int_equal(dpz_vtk_read(&g, bad, strlen(bad), "t.vtk", 0, &err), DPZ_EFORMAT);
    assert_non_null(strstr(err.msg, "line 9: LOOKUP_TABLE needs one name"));
}

/* Files re-saved by other VTK-based tools: a METADATA block after an array, and further
 * arrays in a FIELD section (a 'fill' array read, a 3-component array skipped; the
 * labels may also come as a FIELD array named 'labels'). */
static void test_vtk_read_field_and_metadata(void **state)
{
    (void)state;
    const char *ascii =
        "# vtk DataFile Version 5.1\nvtk output\nASCII\nDATASET STRUCTURED_POINTS\n"
        "DIMENSIONS 2 2 1\nSPACING 2e-9 2e-9 2e-9\nORIGIN 0 0 0\nPOINT_DATA 4\n"
        "SCALARS labels unsigned_char\nLOOKUP_TABLE default\n0 3 4 5\n"
        "METADATA\nINFORMATION 1\nNAME L2_NORM_RANGE LOCATION vtkDataArray\n"
        "DATA 2 0 5\n\n"
        "FIELD FieldData 2\nvelocity 3 4 double\n1 2 3 4 5 6 7 8 9 10 11 12\n"
        "fill 1 4 float\n0 0.5 1 0.25\n";
    dpz_grid *g = NULL;
    dpz_err err;
    dpz_status st = dpz_vtk_read(&g, ascii, strlen(ascii), "pv.vtk", 0, &err);
    if (st != DPZ_OK)
        print_error("%s\n", err.msg);
    assert_int_equal(st, DPZ_OK);
    assert_int_equal(g->label[dpz_grid_index(g, 1, 0, 0)], 3);
    assert_int_equal(g->label[dpz_grid_index(g, 1, 1, 0)], 5);
    assert_non_null(g->fill);
    assert_true(g->fill[dpz_grid_index(g, 1, 0, 0)] == 0.5f);
    assert_true(g->fill[dpz_grid_index(g, 1, 1, 0)] == 0.25f);
    dpz_grid_destroy(g);
    /* Labels as a FIELD array, binary, after an unrelated FIELD array. */
    char bin[512];
    int n =
        sprintf(bin, "# vtk DataFile Version 3.0\nt\nBINARY\nDATASET STRUCTURED_POINTS\n"
                     "DIMENSIONS 3 1 1\nSPACING 1 1 1\nORIGIN 0 0 0\nPOINT_DATA 3\n"
                     "FIELD f 2\nid 1 3 short\n");
    size_t len = (size_t)n;
    memcpy(bin + len, "\0\1\0\2\0\3\n", 7);
    len += 7;
    n = sprintf(bin + len, "labels 1 3 unsigned_char\n");
    len += (size_t)n;
    memcpy(bin + len, "\x09\0\x0b\n", 4);
    len += 4;
    assert_int_equal(dpz_vtk_read(&g, bin, len, "f.vtk", 0, &err), DPZ_OK);
    assert_int_equal(g->label[0], 9);
    assert_int_equal(g->label[1], 0);
    assert_int_equal(g->label[2], 11);
    dpz_grid_destroy(g);
    /* Malformed FIELD sections. */
    const char *bad[] = {
        "# vtk DataFile Version 3.0\nt\nASCII\nDATASET STRUCTURED_POINTS\n"
        "DIMENSIONS 2 1 1\nSPACING 1 1 1\nPOINT_DATA 2\nFIELD f 1\nlabels 1 3 int\n1 2 "
        "3\n",
        "# vtk DataFile Version 3.0\nt\nASCII\nDATASET STRUCTURED_POINTS\n"
        "DIMENSIONS 2 1 1\nSPACING 1 1 1\nPOINT_DATA 2\nFIELD f 2\nlabels 1 2 int\n1 2\n",
        "# vtk DataFile Version 3.0\nt\nASCII\nDATASET STRUCTURED_POINTS\n"
        "DIMENSIONS 2 1 1\nSPACING 1 1 1\nPOINT_DATA 2\nFIELD f\n",
        "# vtk DataFile Version 3.0\nt\nASCII\nDATASET STRUCTURED_POINTS\n"
        "DIMENSIONS 2 1 1\nSPACING 1 1 1\nPOINT_DATA 2\nFIELD f 1\nother 1 2 int\n1 2\n"};
    const char *needle[] = {"line 9: FIELD array 'labels' has 3 tuples, 2 expected",
                            "FIELD array 2 missing", "line 8: FIELD needs a name",
                            "no label array"};
    for (int q = 0; q < 4; q++) {
        g = (dpz_grid *)&g;
        assert_int_equal(dpz_vtk_read(&g, bad[q], strlen(bad[q]), "b.vtk", 0, &err),
                         DPZ_EFORMAT);
        assert_null(g);
        if (!strstr(err.msg, needle[q]))
            print_error("%s\n", err.msg);
        assert_non_null(strstr(err.msg, needle[q]));
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
        {HDR "DIMENSIONS 2 1 1\nSPACING 1 1 1\nPOINT_DATA 2\nSCALARS fill float\n0 1\n",
         DPZ_EFORMAT, "no label array"},
        {HDR "DIMENSIONS 2 1 1\nSPACING 1 1 1\nPOINT_DATA 2\n", DPZ_EFORMAT,
         "line 7: truncated file: 2 values announced, only 0 bytes follow"},
        {HDR "DIMENSIONS 1000 1000 100\nSPACING 1 1 1\nPOINT_DATA 100000000\nSCALARS a "
             "int\n1 2 3\n",
         DPZ_EFORMAT, "truncated file: 100000000 values announced"},
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

/* ---- NumPy .npy ---- */

/* Writes a .npy buffer for the 5 x 4 x 3 test object, following NEP 1: magic, version,
 * little-endian header length, dict padded with spaces to a multiple of 64 bytes, '\n'.
 */
static size_t make_npy(unsigned char *out, int version, const char *descr, int fortran,
                       const uint8_t *labels, size_t nx, size_t ny, size_t nz)
{
    char dict[256];
    int dl = snprintf(dict, sizeof dict,
                      "{'descr': '%s', 'fortran_order': %s, 'shape': (%zu, "
                      "%zu, %zu), }",
                      descr, fortran ? "True" : "False", nx, ny, nz);
    size_t pre = version == 1 ? 10 : 12;
    size_t total = pre + (size_t)dl + 1;
    size_t padded = (total + 63) / 64 * 64;
    memcpy(out, "\x93NUMPY", 6);
    out[6] = (unsigned char)version, out[7] = 0;
    size_t hl = padded - pre;
    out[8] = (unsigned char)hl, out[9] = (unsigned char)(hl >> 8);
    if (version > 1)
        out[10] = (unsigned char)(hl >> 16), out[11] = (unsigned char)(hl >> 24);
    memcpy(out + pre, dict, (size_t)dl);
    memset(out + pre + dl, ' ', padded - pre - (size_t)dl - 1);
    out[padded - 1] = '\n';
    size_t size = (size_t)(descr[2] - '0');
    int big = descr[0] == '>';
    size_t pos = padded;
    for (size_t q = 0; q < nx * ny * nz; q++) {
        size_t i, j, k;
        if (fortran) {
            i = q % nx, j = (q / nx) % ny, k = q / (nx * ny);
        } else {
            k = q % nz, j = (q / nz) % ny, i = q / (nz * ny);
        }
        uint64_t v = labels[(i * ny + j) * nz + k];
        for (size_t b = 0; b < size; b++)
            out[pos + (big ? size - 1 - b : b)] = (unsigned char)(v >> (8 * b));
        pos += size;
    }
    return pos;
}

static void test_npy_every_dtype_order_and_version(void **state)
{
    (void)state;
    dpz_grid *ref = make_object(0);
    const char *descrs[] = {"|u1", "|i1", "<i2", ">i2", "<u2", ">u2", "<i4",
                            ">i4", "<u4", ">u4", "<i8", ">i8", "<u8", ">u8"};
    static unsigned char buf[4096];
    const char *vtk = scratch_path("npy.vtk");
    for (size_t t = 0; t < sizeof descrs / sizeof descrs[0]; t++)
        for (int fortran = 0; fortran < 2; fortran++)
            for (int version = 1; version <= 3; version++) {
                uint8_t labels[60];
                memcpy(labels, ref->label, 60);
                if (descrs[t][1] == 'i' && descrs[t][2] == '1')
                    for (int q = 0; q < 60; q++)
                        labels[q] &= 0x7f; /* int8 holds 0..127 */
                size_t len = make_npy(buf, version, descrs[t], fortran, labels, 5, 4, 3);
                dpz_grid *g = NULL;
                dpz_err err;
                dpz_status st =
                    dpz_npy_read(&g, (const char *)buf, len, "a.npy", D, 0, &err);
                if (st != DPZ_OK)
                    print_error("%s fortran=%d v%d: %s\n", descrs[t], fortran, version,
                                err.msg);
                assert_int_equal(st, DPZ_OK);
                assert_int_equal(g->nx, 5);
                assert_int_equal(g->ny, 4);
                assert_int_equal(g->nz, 3);
                assert_memory_equal(g->label, labels, 60);
                assert_true(g->d == D);
                /* NPY -> VTK -> grid keeps every voxel. */
                assert_int_equal(dpz_vtk_write_file(g, vtk, &err), DPZ_OK);
                dpz_grid *h = NULL;
                assert_int_equal(dpz_vtk_read_file(&h, vtk, 0, &err), DPZ_OK);
                assert_same_grid(g, h);
                dpz_grid_destroy(h);
                dpz_grid_destroy(g);
            }
    /* bool arrays. */
    uint8_t bits[60];
    for (int q = 0; q < 60; q++)
        bits[q] = ref->label[q] != 0;
    size_t len = make_npy(buf, 1, "|b1", 1, bits, 5, 4, 3);
    dpz_grid *g = NULL;
    assert_int_equal(dpz_npy_read(&g, (const char *)buf, len, NULL, D, 0, NULL), DPZ_OK);
    assert_memory_equal(g->label, bits, 60);
    assert_int_equal(g->n_occ, ref->n_occ);
    dpz_grid_destroy(g);
    remove(vtk);
    dpz_grid_destroy(ref);
}

static void expect_npy_failure(const unsigned char *buf, size_t len, double spacing,
                               size_t max_cells, dpz_status want, const char *needle)
{
    dpz_grid *g = (dpz_grid *)&g;
    dpz_err err;
    dpz_err_clear(&err);
    dpz_status st =
        dpz_npy_read(&g, (const char *)buf, len, "bad.npy", spacing, max_cells, &err);
    if (st != want || !strstr(err.msg, needle))
        print_error("status %s, message '%s', expected %s with '%s'\n",
                    dpz_status_name(st), err.msg, dpz_status_name(want), needle);
    assert_int_equal(st, want);
    assert_null(g);
    assert_non_null(strstr(err.msg, needle));
    assert_non_null(strstr(err.msg, "npy reader: bad.npy: "));
}

/* Replaces the dict of a version-1 buffer with `dict` (padded to the same length). */
static size_t with_dict(unsigned char *buf, const unsigned char *good, size_t len,
                        const char *dict)
{
    memcpy(buf, good, len);
    size_t hl = (size_t)good[8] | (size_t)good[9] << 8;
    size_t dl = strlen(dict);
    assert_true(dl < hl);
    memset(buf + 10, ' ', hl - 1);
    memcpy(buf + 10, dict, dl);
    return len;
}

static void test_npy_rejects_malformed(void **state)
{
    (void)state;
    uint8_t labels[60];
    for (int q = 0; q < 60; q++)
        labels[q] = (uint8_t)(q % 3);
    static unsigned char good[2048], buf[2048];
    size_t len = make_npy(good, 1, "<i2", 0, labels, 5, 4, 3);
    dpz_grid *g = NULL;
    assert_int_equal(dpz_npy_read(&g, (const char *)good, len, NULL, D, 0, NULL), DPZ_OK);
    dpz_grid_destroy(g);

    expect_npy_failure(good, len, 0.0, 0, DPZ_EINVAL, "spacing is required");
    expect_npy_failure(good, len, NAN, 0, DPZ_EINVAL, "spacing is required");
    expect_npy_failure(good, len, -D, 0, DPZ_EINVAL, "spacing is required");
    expect_npy_failure(good, len, INFINITY, 0, DPZ_EINVAL, "spacing is required");
    expect_npy_failure((const unsigned char *)"PK\3\4 not npy", 13, D, 0, DPZ_EFORMAT,
                       "byte 0: not a .npy file");
    expect_npy_failure(good, 7, D, 0, DPZ_EFORMAT, "byte 0");
    memcpy(buf, good, len);
    buf[6] = 4;
    expect_npy_failure(buf, len, D, 0, DPZ_EFORMAT,
                       "byte 6: unsupported format version 4.0");
    memcpy(buf, good, len);
    buf[9] = 0x7f; /* header length past the end */
    expect_npy_failure(buf, len, D, 0, DPZ_EFORMAT, "byte 8: header");
    size_t ds = 10 + ((size_t)good[8] | (size_t)good[9] << 8); /* data start */
    char where[64];
    memcpy(buf, good, len);
    buf[ds - 1] = ' '; /* no newline */
    expect_npy_failure(buf, len, D, 0, DPZ_EFORMAT, "newline");
    with_dict(buf, good, len, "{'fortran_order': False, 'shape': (5, 4, 3), }");
    expect_npy_failure(buf, len, D, 0, DPZ_EFORMAT, "no 'descr'");
    with_dict(buf, good, len,
              "{'descr': '<f8', 'fortran_order': False, 'shape': (5, 4, 3), }");
    expect_npy_failure(buf, len, D, 0, DPZ_EFORMAT, "unsupported dtype '<f8'");
    with_dict(buf, good, len,
              "{'descr': '|i2', 'fortran_order': False, 'shape': (5, 4, 3), }");
    expect_npy_failure(buf, len, D, 0, DPZ_EFORMAT, "unsupported dtype '|i2'");
    with_dict(buf, good, len,
              "{'descr': '<U1', 'fortran_order': False, 'shape': (5, 4, 3), }");
    expect_npy_failure(buf, len, D, 0, DPZ_EFORMAT, "unsupported dtype");
    with_dict(buf, good, len,
              "{'descr': '<i2', 'fortran_order': 0, 'shape': (5, 4, 3), }");
    expect_npy_failure(buf, len, D, 0, DPZ_EFORMAT, "fortran_order");
    /* Python 2 longs in the shape, as old NumPy wrote them, are accepted. */
    with_dict(buf, good, len,
              "{'descr': '<i2', 'fortran_order': False, 'shape': (5L, 4L, 3L), }");
    assert_int_equal(dpz_npy_read(&g, (const char *)buf, len, NULL, D, 0, NULL), DPZ_OK);
    assert_memory_equal(g->label, labels, 60);
    dpz_grid_destroy(g);
    with_dict(buf, good, len,
              "{'descr': '<i2', 'fortran_order': False, 'shape': (60,), }");
    expect_npy_failure(buf, len, D, 0, DPZ_EFORMAT,
                       "must be 3-D (shape has 1 dimensions)");
    with_dict(buf, good, len,
              "{'descr': '<i2', 'fortran_order': False, 'shape': (5, 4, 3, 1), }");
    expect_npy_failure(buf, len, D, 0, DPZ_EFORMAT, "more than 3 dimensions");
    with_dict(buf, good, len,
              "{'descr': '<i2', 'fortran_order': False, 'shape': (5, -4, 3), }");
    expect_npy_failure(buf, len, D, 0, DPZ_EFORMAT, "malformed 'shape'");
    with_dict(buf, good, len,
              "{'descr': '<i2', 'fortran_order': False, 'shape': [5, 4, 3], }");
    expect_npy_failure(buf, len, D, 0, DPZ_EFORMAT, "'shape' tuple");
    with_dict(buf, good, len,
              "{'descr': '<i2', 'fortran_order': False, 'shape': (5, 0, 3), }");
    expect_npy_failure(buf, len, D, 0, DPZ_EFORMAT, "empty array");
    with_dict(
        buf, good, len,
        "{'descr': '<i2', 'fortran_order': False, 'shape': (4294967296, 4294967296, "
        "4294967296), }");
    expect_npy_failure(buf, len, D, 0, DPZ_ELIMIT, "overflows");
    with_dict(buf, good, len,
              "{'descr': '<i2', 'fortran_order': False, 'shape': "
              "(99999999999999999999999, 1, 1), }");
    expect_npy_failure(buf, len, D, 0, DPZ_ELIMIT, "overflows");
    expect_npy_failure(good, len, D, 59, DPZ_ELIMIT, "raise the voxel limit");
    expect_npy_failure(good, len - 1, D, 0, DPZ_EFORMAT,
                       "truncated data: 120 bytes expected");
    memcpy(buf, good, len);
    buf[len] = 0;
    expect_npy_failure(buf, len + 1, D, 0, DPZ_EFORMAT, "trailing bytes");
    /* Values outside 0..255: -1 and 256 as int16, 2 as bool. */
    memcpy(buf, good, len);
    buf[ds + 2 * 7] = 0xff, buf[ds + 2 * 7 + 1] = 0xff;
    snprintf(where, sizeof where, "byte %zu: value -1 outside", ds + 14);
    expect_npy_failure(buf, len, D, 0, DPZ_ERANGE, where);
    memcpy(buf, good, len);
    buf[ds + 2 * 9] = 0x00, buf[ds + 2 * 9 + 1] = 0x01;
    snprintf(where, sizeof where, "byte %zu: value 256 outside", ds + 18);
    expect_npy_failure(buf, len, D, 0, DPZ_ERANGE, where);
    size_t blen = make_npy(buf, 1, "|b1", 0, labels, 5, 4, 3); /* labels hold 2s */
    expect_npy_failure(buf, blen, D, 0, DPZ_ERANGE, "bool must be 0 or 1");
    size_t llen = make_npy(buf, 1, ">i8", 0, labels, 5, 4, 3);
    size_t lds = 10 + ((size_t)buf[8] | (size_t)buf[9] << 8);
    memset(buf + lds + 8, 0xff, 8);
    expect_npy_failure(buf, llen, D, 0, DPZ_ERANGE, "value -1 outside");
    /* Every truncation of a valid file fails cleanly. */
    for (size_t cut = 0; cut < len; cut += 5) {
        g = (dpz_grid *)&g;
        assert_int_not_equal(
            dpz_npy_read(&g, (const char *)good, cut, "t.npy", D, 0, NULL), DPZ_OK);
        assert_null(g);
    }
    /* Allocation failure at every step. */
    int failures = 0;
    for (long n = 0; n < 20; n++) {
        g = NULL;
        dpz_alloc_fail_after(n);
        dpz_status st = dpz_npy_read(&g, (const char *)good, len, NULL, D, 0, NULL);
        dpz_alloc_fail_after(-1);
        if (st == DPZ_OK) {
            dpz_grid_destroy(g);
            break;
        }
        assert_int_equal(st, DPZ_ENOMEM);
        failures++;
    }
    assert_true(failures >= 3);
}

/* ---- CSV ---- */

static void test_csv_round_trip_keeps_every_voxel(void **state)
{
    (void)state;
    dpz_grid *ref = make_object(0);
    /* Written in shuffled order, with a header, comments, blanks, spaces and CRLF. */
    static char text[8192];
    size_t pos = (size_t)sprintf(text, "i,j,k,label\r\n# a comment\n\n");
    for (size_t m = 0; m < ref->n_occ; m++) {
        size_t idx = ref->occ[(m * 7) % ref->n_occ]; /* 7 is coprime to the count */
        size_t k = idx % 3, j = (idx / 3) % 4, i = idx / 12;
        pos += (size_t)sprintf(
            text + pos, m % 2 ? "%zu,%zu,%zu,%u\r\n" : " %zu , %zu,%zu ,%u  # voxel\n", i,
            j, k, ref->label[idx]);
    }
    assert_int_equal(ref->n_occ % 7 != 0, 1);
    dpz_grid *g = NULL;
    dpz_err err;
    dpz_status st = dpz_csvvox_read(&g, text, pos, "v.csv", D, 0, &err);
    if (st != DPZ_OK)
        print_error("%s\n", err.msg);
    assert_int_equal(st, DPZ_OK);
    /* The grid is sized to the largest index + 1: the object spans the whole 5 x 4 x 3.
     */
    assert_int_equal(g->nx, 5);
    assert_int_equal(g->ny, 4);
    assert_int_equal(g->nz, 3);
    assert_memory_equal(g->label, ref->label, 60);
    /* CSV -> VTK -> grid. */
    const char *vtk = scratch_path("csv.vtk");
    assert_int_equal(dpz_vtk_write_file(g, vtk, &err), DPZ_OK);
    dpz_grid *h = NULL;
    assert_int_equal(dpz_vtk_read_file(&h, vtk, 0, &err), DPZ_OK);
    assert_same_grid(g, h);
    dpz_grid_destroy(h);
    dpz_grid_destroy(g);
    remove(vtk);
    dpz_grid_destroy(ref);
}

static void expect_csv_failure(const char *text, double spacing, size_t max_cells,
                               dpz_status want, const char *needle)
{
    dpz_grid *g = (dpz_grid *)&g;
    dpz_err err;
    dpz_err_clear(&err);
    dpz_status st =
        dpz_csvvox_read(&g, text, strlen(text), "bad.csv", spacing, max_cells, &err);
    if (st != want || !strstr(err.msg, needle))
        print_error("status %s, message '%s', expected %s with '%s'\n",
                    dpz_status_name(st), err.msg, dpz_status_name(want), needle);
    assert_int_equal(st, want);
    assert_null(g);
    assert_non_null(strstr(err.msg, needle));
}

static void test_csv_rejects_malformed(void **state)
{
    (void)state;
    /* Accepted variants: a UTF-8 byte-order mark before the header. */
    const char *bom = "\xEF\xBB\xBFi,j,k,label\n2,0,1,9\n";
    dpz_grid *gb = NULL;
    assert_int_equal(dpz_csvvox_read(&gb, bom, strlen(bom), NULL, D, 0, NULL), DPZ_OK);
    assert_int_equal(gb->label[dpz_grid_index(gb, 2, 0, 1)], 9);
    dpz_grid_destroy(gb);
    expect_csv_failure("0,0,0,1\n", 0.0, 0, DPZ_EINVAL, "spacing is required");
    expect_csv_failure("", D, 0, DPZ_EFORMAT, "no voxel lines");
    expect_csv_failure("i,j,k,label\n# nothing\n", D, 0, DPZ_EFORMAT, "no voxel lines");
    expect_csv_failure("0,0,0,1\n1,0,1\n", D, 0, DPZ_EFORMAT,
                       "line 2: expected 4 fields");
    expect_csv_failure("0,0,0,1,5\n", D, 0, DPZ_EFORMAT, "line 1: expected 4 fields");
    expect_csv_failure("-1,0,0,1\n", D, 0, DPZ_EFORMAT, "line 1: field 1 ('-1')");
    expect_csv_failure("0,0,0,1\n0,2.5,0,1\n", D, 0, DPZ_EFORMAT, "line 2: field 2");
    expect_csv_failure("0,0,0,1\n0,0,,1\n", D, 0, DPZ_EFORMAT, "line 2: field 3");
    expect_csv_failure("0,0,0,nan\n", D, 0, DPZ_EFORMAT, "field 4");
    expect_csv_failure("0,0,0,256\n", D, 0, DPZ_ERANGE, "label 256");
    expect_csv_failure("0,0,0,1\n3,1,2,4\n0,0,1,1\n3,1,2,5\n", D, 0, DPZ_EFORMAT,
                       "line 4: voxel 3,1,2 listed twice (first on line 2)");
    expect_csv_failure("0,0,99999999999999999999,1\n", D, 0, DPZ_EFORMAT, "field 3");
    expect_csv_failure("0,0,300000000,1\n", D, 0, DPZ_ELIMIT, "raise the voxel limit");
    expect_csv_failure("3000,3000,3000,1\n", D, 0, DPZ_ELIMIT, "raise the voxel limit");
    expect_csv_failure("4,4,4,1\n", D, 124, DPZ_ELIMIT, "limit of 124");
    expect_csv_failure("0,0,0,1\n0,0\0,1,1\n", D, 0, DPZ_EFORMAT, "line 2");
    /* Allocation failure at every step. */
    const char *ok = "0,0,0,1\n1,2,3,4\n";
    int failures = 0;
    for (long n = 0; n < 20; n++) {
        dpz_grid *g = NULL;
        dpz_alloc_fail_after(n);
        dpz_status st = dpz_csvvox_read(&g, ok, strlen(ok), NULL, D, 0, NULL);
        dpz_alloc_fail_after(-1);
        if (st == DPZ_OK) {
            assert_int_equal(g->n_occ, 2);
            assert_int_equal(g->label[dpz_grid_index(g, 1, 2, 3)], 4);
            dpz_grid_destroy(g);
            break;
        }
        assert_int_equal(st, DPZ_ENOMEM);
        assert_null(g);
        failures++;
    }
    assert_true(failures >= 4);
}

static void write_file(const char *path, const void *data, size_t len)
{
    FILE *f = fopen(path, "wb");
    assert_non_null(f);
    assert_int_equal(fwrite(data, 1, len, f), len);
    fclose(f);
}

static void test_voxfile_dispatch(void **state)
{
    (void)state;
    dpz_grid *ref = make_object(0);
    static unsigned char buf[4096];
    size_t len = make_npy(buf, 1, "|u1", 0, ref->label, 5, 4, 3);
    char npy[400];
    snprintf(npy, sizeof npy, "%s", scratch_path("v.npy"));
    write_file(npy, buf, len);
    char csv[400];
    snprintf(csv, sizeof csv, "%s", scratch_path("v.csv"));
    write_file(csv, "i,j,k,label\n1,2,0,3\n", 20);
    char vtk[400];
    snprintf(vtk, sizeof vtk, "%s", scratch_path("v.vtk"));
    assert_int_equal(dpz_vtk_write_file(ref, vtk, NULL), DPZ_OK);
    char stl[400];
    snprintf(stl, sizeof stl, "%s", scratch_path("v.stl"));
    write_file(stl, "solid x\nendsolid x\n", 19);
    char odd[400];
    snprintf(odd, sizeof odd, "%s", scratch_path("v.dat"));
    write_file(odd, "\x01\x02\x03", 3);
    dpz_grid *g = NULL;
    dpz_err err;
    assert_int_equal(dpz_voxfile_read(&g, npy, D, 0, &err), DPZ_OK);
    assert_memory_equal(g->label, ref->label, 60);
    dpz_grid_destroy(g);
    assert_int_equal(dpz_voxfile_read(&g, npy, 0.0, 0, &err), DPZ_EINVAL);
    assert_non_null(strstr(err.msg, "give the spacing"));
    assert_int_equal(dpz_voxfile_read(&g, csv, 1.5e-9, 0, &err), DPZ_OK);
    assert_int_equal(g->n_occ, 1);
    assert_true(g->d == 1.5e-9);
    dpz_grid_destroy(g);
    assert_int_equal(dpz_voxfile_read(&g, csv, 0.0, 0, &err), DPZ_EINVAL);
    assert_non_null(strstr(err.msg, "give the spacing"));
    /* VTK carries its own spacing. */
    assert_int_equal(dpz_voxfile_read(&g, vtk, 0.0, 0, &err), DPZ_OK);
    assert_same_grid(ref, g);
    dpz_grid_destroy(g);
    assert_int_equal(dpz_voxfile_read(&g, stl, D, 0, &err), DPZ_EINVAL);
    assert_non_null(strstr(err.msg, "STL mesh"));
    assert_int_equal(dpz_voxfile_read(&g, odd, D, 0, &err), DPZ_EFORMAT);
    assert_non_null(strstr(err.msg, "unknown format"));
    assert_int_equal(dpz_voxfile_read(&g, scratch_path("none.csv"), D, 0, &err), DPZ_EIO);
    assert_null(g);
    remove(npy), remove(csv), remove(vtk), remove(stl), remove(odd);
    dpz_grid_destroy(ref);
}

/* Mutation robustness (a small deterministic fuzz): flipped bytes, inserted digits and
 * cut lengths of valid VTK, .npy and CSV buffers must give either a clean error with a
 * message or a consistent grid; never a crash or an out-of-bounds read (run under
 * AddressSanitizer in CI). */
static void check_consistent(const dpz_grid *g)
{
    size_t count = 0, n = g->nx * g->ny * g->nz;
    for (size_t i = 0; i < n; i++)
        count += g->label[i] != 0;
    assert_int_equal(count, g->n_occ);
    assert_true(g->d > 0.0 && isfinite(g->d));
}

static void mutate(unsigned char *buf, size_t len, uint64_t *seed)
{
    int edits = 1 + (int)((dpz_test_rand(seed) + 1.0) * 2.0);
    for (int e = 0; e < edits; e++) {
        size_t at = (size_t)((dpz_test_rand(seed) + 1.0) * 0.5 * (double)len) % len;
        double r = dpz_test_rand(seed);
        if (r < -0.3)
            buf[at] = (unsigned char)((dpz_test_rand(seed) + 1.0) * 128.0);
        else if (r < 0.3)
            buf[at] = (unsigned char)"0123456789 -.e\n"[at % 15];
        else
            buf[at] ^= (unsigned char)(1u << (at % 8));
    }
}

/* The shared whole-file reader: contents and length, the size limit, a missing file. */
static void test_file_read_all_limits(void **state)
{
    (void)state;
    const char *path = scratch_path("bytes.txt");
    FILE *f = fopen(path, "wb");
    assert_non_null(f);
    for (int i = 0; i < 100; i++)
        fputc('a' + i % 26, f);
    fclose(f);
    char *buf = NULL;
    size_t len = 0;
    dpz_err err;
    assert_int_equal(dpz_file_read_all(path, "test", 0, &buf, &len, &err), DPZ_OK);
    assert_int_equal(len, 100);
    assert_int_equal(buf[99], 'a' + 99 % 26);
    assert_int_equal(buf[100], '\0');
    dpz__free(buf);
    assert_int_equal(dpz_file_read_all(path, "test", 100, &buf, &len, &err), DPZ_OK);
    dpz__free(buf);
    assert_int_equal(dpz_file_read_all(path, "test", 99, &buf, &len, &err), DPZ_ELIMIT);
    assert_null(buf);
    assert_non_null(strstr(err.msg, "test: "));
    assert_non_null(strstr(err.msg, "99 bytes"));
    assert_int_equal(
        dpz_file_read_all(scratch_path("none.txt"), "test", 0, &buf, &len, &err),
        DPZ_EIO);
    assert_non_null(strstr(err.msg, "cannot open"));
    dpz_alloc_fail_after(0);
    assert_int_equal(dpz_file_read_all(path, "test", 0, &buf, &len, &err), DPZ_ENOMEM);
    dpz_alloc_fail_after(-1);
    remove(path);
}

static void test_readers_survive_mutations(void **state)
{
    (void)state;
    dpz_grid *ref = make_object(1);
    const char *path = scratch_path("fuzz.vtk");
    assert_int_equal(dpz_vtk_write_file(ref, path, NULL), DPZ_OK);
    FILE *f = fopen(path, "rb");
    static unsigned char vtk[4096], npy[4096], work[4096];
    size_t vlen = fread(vtk, 1, sizeof vtk, f);
    fclose(f);
    remove(path);
    size_t nlen = make_npy(npy, 1, "<i2", 1, ref->label, 5, 4, 3);
    static char csv[2048];
    size_t clen = 0;
    for (size_t m = 0; m < ref->n_occ; m++) {
        size_t idx = ref->occ[m];
        clen += (size_t)sprintf(csv + clen, "%zu,%zu,%zu,%u\n", idx / 12, (idx / 3) % 4,
                                idx % 3, ref->label[idx]);
    }
    uint64_t seed = 0x5eedu;
    size_t ok[3] = {0, 0, 0}, failed[3] = {0, 0, 0};
    for (int trial = 0; trial < 3000; trial++) {
        int which = trial % 3;
        const unsigned char *src = which == 0   ? vtk
                                   : which == 1 ? npy
                                                : (unsigned char *)csv;
        size_t len = which == 0 ? vlen : which == 1 ? nlen : clen;
        memcpy(work, src, len);
        mutate(work, len, &seed);
        if (trial % 7 == 0)
            len = (size_t)((dpz_test_rand(&seed) + 1.0) * 0.5 * (double)len);
        dpz_grid *g = NULL;
        dpz_err err;
        dpz_err_clear(&err);
        dpz_status st;
        if (which == 0)
            st = dpz_vtk_read(&g, (const char *)work, len, "f.vtk", 4096, &err);
        else if (which == 1)
            st = dpz_npy_read(&g, (const char *)work, len, "f.npy", D, 4096, &err);
        else
            st = dpz_csvvox_read(&g, (const char *)work, len, "f.csv", D, 4096, &err);
        if (st == DPZ_OK) {
            check_consistent(g);
            ok[which]++;
        } else {
            assert_null(g);
            assert_true(strlen(err.msg) > 0);
            failed[which]++;
        }
        dpz_grid_destroy(g);
    }
    print_message("mutations: vtk %zu ok / %zu refused, npy %zu / %zu, csv %zu / %zu\n",
                  ok[0], failed[0], ok[1], failed[1], ok[2], failed[2]);
    /* Both outcomes occur, so the mutations do reach the parsers' checks. */
    for (int w = 0; w < 3; w++)
        assert_true(failed[w] > 0);
    dpz_grid_destroy(ref);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_vtk_round_trip_keeps_every_voxel),
        cmocka_unit_test(test_vtk_written_header),
        cmocka_unit_test(test_vtk_shape_record_round_trip),
        cmocka_unit_test(test_vtk_read_ascii_layout),
        cmocka_unit_test(test_vtk_read_binary_every_type),
        cmocka_unit_test(test_vtk_read_binary_without_lookup_table),
        cmocka_unit_test(test_vtk_read_field_and_metadata),
        cmocka_unit_test(test_vtk_read_cell_data),
        cmocka_unit_test(test_vtk_rejects_malformed),
        cmocka_unit_test(test_vtk_rejects_truncated_binary),
        cmocka_unit_test(test_vtk_allocation_failure),
        cmocka_unit_test(test_vtk_write_failure_leaves_nothing),
        cmocka_unit_test(test_file_read_all_limits),
        cmocka_unit_test(test_npy_every_dtype_order_and_version),
        cmocka_unit_test(test_npy_rejects_malformed),
        cmocka_unit_test(test_csv_round_trip_keeps_every_voxel),
        cmocka_unit_test(test_csv_rejects_malformed),
        cmocka_unit_test(test_voxfile_dispatch),
        cmocka_unit_test(test_readers_survive_mutations),
    };
    return cmocka_run_group_tests(tests, setup_scratch, teardown_scratch);
}
