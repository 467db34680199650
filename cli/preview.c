/* preview.c: `dipolize preview FILE` - an SVG picture of a voxel set, so that a designer
 * sees at a glance whether the meta-atom was voxelized as meant: three orthogonal
 * projections (the largest label along each axis, shaded by the thickness crossed) and
 * the three mid-plane slices, labels coloured by material, label 0 (host) transparent,
 * one shared scale with a scale bar in nanometres. */
#include "pictures.h"

#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli_int.h"

/* Panels are at most this many picture cells wide or high: larger grids are reduced by
 * taking the largest label of each block of voxels, which keeps thin features visible. */
#define PV_MAX_CELLS 256
/* Thickness shading of the projections: this many levels of opacity. */
#define PV_LEVELS 4

/* Layout (px). */
enum { PV_W = 860, PV_H = 720 };
static const double PV_PANEL = 230.0, PV_X0 = 40.0, PV_DX = 270.0, PV_Y0 = 92.0,
                    PV_DY = 290.0;

/* Colour of a material label: the Okabe & Ito (2008) palette for labels 1-8, then hues
 * spaced by the golden angle at fixed saturation and value. */
static void label_colour(unsigned label, char out[8])
{
    static const char *const base[8] = {
        DPZ_SVG_BLUE,    DPZ_SVG_ORANGE,     DPZ_SVG_GREEN,  DPZ_SVG_PURPLE,
        DPZ_SVG_SKYBLUE, DPZ_SVG_VERMILLION, DPZ_SVG_YELLOW, DPZ_SVG_BLACK};
    if (label >= 1 && label <= 8) {
        memcpy(out, base[label - 1], 8);
        return;
    }
    double h = fmod(label * 137.50776405, 360.0) / 60.0, sat = 0.6, v = 0.75;
    double c = v * sat, x = c * (1 - fabs(fmod(h, 2.0) - 1)), m = v - c;
    double r = 0, g = 0, b = 0;
    switch ((int)h) {
    case 0:
        r = c;
        g = x;
        break;
    case 1:
        r = x;
        g = c;
        break;
    case 2:
        g = c;
        b = x;
        break;
    case 3:
        g = x;
        b = c;
        break;
    case 4:
        r = x;
        b = c;
        break;
    default:
        r = c;
        b = x;
        break;
    }
    snprintf(out, 8, "#%02X%02X%02X", (unsigned)lround((r + m) * 255),
             (unsigned)lround((g + m) * 255), (unsigned)lround((b + m) * 255));
}

/* One panel image: nh x nv cells, lab[v * nh + h] (0 = empty), lev[] opacity level
 * 1..PV_LEVELS (NULL: opaque). */
typedef struct pv_image {
    size_t nh, nv;
    uint8_t *lab;
    uint8_t *lev;
} pv_image;

/* Builds the image of one view. axis: 0, 1, 2 = the axis looked along (projection) or cut
 * (slice); `slice` < 0 for a projection, else the index of the cut plane. The picture's
 * horizontal and vertical axes are the remaining two in increasing order (x-y, x-z,
 * y-z), vertical pointing up. */
static int pv_build(const dpz_grid *g, int axis, long slice, size_t block, pv_image *im)
{
    size_t n[3] = {g->nx, g->ny, g->nz};
    int ah = axis == 0 ? 1 : 0, av = axis == 2 ? 1 : 2;
    size_t nh = (n[ah] + block - 1) / block, nv = (n[av] + block - 1) / block;
    im->nh = nh;
    im->nv = nv;
    im->lab = dpz__calloc(nh * nv, 1);
    im->lev = NULL;
    uint32_t *cnt = NULL;
    if (!im->lab)
        return -1;
    if (slice < 0) {
        im->lev = dpz__calloc(nh * nv, 1);
        cnt = dpz__calloc(nh * nv, sizeof *cnt);
        if (!im->lev || !cnt) {
            free(cnt);
            return -1;
        }
    }
    size_t idx3[3];
    for (idx3[0] = 0; idx3[0] < n[0]; idx3[0]++)
        for (idx3[1] = 0; idx3[1] < n[1]; idx3[1]++)
            for (idx3[2] = 0; idx3[2] < n[2]; idx3[2]++) {
                if (slice >= 0 && idx3[axis] != (size_t)slice)
                    continue;
                uint8_t l = g->label[dpz_grid_index(g, idx3[0], idx3[1], idx3[2])];
                if (!l)
                    continue;
                size_t c = (idx3[av] / block) * nh + idx3[ah] / block;
                if (l > im->lab[c])
                    im->lab[c] = l;
                if (cnt)
                    cnt[c]++;
            }
    if (cnt) {
        /* Thickness relative to the thickest line of sight (a block counts block^2
         * lines). */
        uint32_t mx = 0;
        for (size_t c = 0; c < nh * nv; c++)
            if (cnt[c] > mx)
                mx = cnt[c];
        for (size_t c = 0; c < nh * nv; c++)
            if (cnt[c]) {
                unsigned lv = 1 + (unsigned)((double)cnt[c] / mx * PV_LEVELS);
                im->lev[c] = (uint8_t)(lv > PV_LEVELS ? PV_LEVELS : lv);
            }
        free(cnt);
    }
    return 0;
}

static void pv_free(pv_image *im)
{
    free(im->lab);
    free(im->lev);
    im->lab = im->lev = NULL;
}

/* Draws a panel with its top-left corner at (x0, y0), cell size `ps` px. Runs of equal
 * cells along a row become one rectangle, which keeps the file small. */
static void pv_draw(dpz_svg *s, const pv_image *im, double x0, double y0, double ps,
                    const char *title, char hname, char vname)
{
    double w = im->nh * ps, h = im->nv * ps;
    dpz_svg_text(s, x0, y0 - 10, 13, DPZ_SVG_START, 0, 1, title);
    dpz_svg_style bg = {"#bbbbbb", 0.8, NULL, "#f3f3f3", 1.0};
    dpz_svg_rect(s, x0, y0, w, h, &bg);
    dpz_svg_printf(s, "<g shape-rendering=\"crispEdges\">\n");
    for (size_t v = 0; v < im->nv; v++) {
        size_t h0 = 0;
        while (h0 < im->nh) {
            size_t c = v * im->nh + h0;
            uint8_t l = im->lab[c], lv = im->lev ? im->lev[c] : 0;
            size_t h1 = h0 + 1;
            while (h1 < im->nh && im->lab[v * im->nh + h1] == l &&
                   (!im->lev || im->lev[v * im->nh + h1] == lv))
                h1++;
            if (l) {
                char col[8];
                label_colour(l, col);
                double op = im->lev ? 0.25 + 0.75 * lv / (double)PV_LEVELS : 1.0;
                /* Row v = 0 is at the bottom: the vertical axis points up. */
                double y = y0 + (double)(im->nv - 1 - v) * ps;
                dpz_svg_printf(
                    s,
                    "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" "
                    "fill=\"%s\"",
                    x0 + h0 * ps, y, (h1 - h0) * ps, ps, col);
                if (op < 1.0)
                    dpz_svg_printf(s, " fill-opacity=\"%.2f\"", op);
                dpz_svg_printf(s, "/>\n");
            }
            h0 = h1;
        }
    }
    dpz_svg_printf(s, "</g>\n");
    /* Axis glyph below the panel's lower-left corner: horizontal and vertical axes. */
    dpz_svg_style ax = {"#444444", 1.3, NULL, NULL, 1.0};
    double gx = x0, gy = y0 + h + 24;
    dpz_svg_line(s, gx, gy, gx + 22, gy, &ax);
    dpz_svg_line(s, gx + 22, gy, gx + 17, gy - 3, &ax);
    dpz_svg_line(s, gx + 22, gy, gx + 17, gy + 3, &ax);
    dpz_svg_line(s, gx, gy, gx, gy - 16, &ax);
    dpz_svg_line(s, gx, gy - 16, gx - 3, gy - 11, &ax);
    dpz_svg_line(s, gx, gy - 16, gx + 3, gy - 11, &ax);
    char t[2] = {hname, 0};
    dpz_svg_text(s, gx + 26, gy + 4, 11.5, DPZ_SVG_START, 0, 0, t);
    t[0] = vname;
    dpz_svg_text(s, gx + 5, gy - 12, 11.5, DPZ_SVG_START, 0, 0, t);
}

dpz_status dpz__pic_preview_render(dpz_svg *s, const dpz_grid *grid_in, const char *title,
                                   int standalone, dpz_err *err)
{
    if (!grid_in || grid_in->n_occ == 0)
        return dpz_err_set(err, DPZ_EINVAL,
                           "preview: the grid has no occupied voxel (every label is 0)");
    dpz_grid *g = NULL;
    dpz_status st = dpz_grid_crop(&g, grid_in, err);
    if (st != DPZ_OK)
        return st;
    size_t n[3] = {g->nx, g->ny, g->nz};
    size_t nmax = n[0] > n[1] ? n[0] : n[1];
    if (n[2] > nmax)
        nmax = n[2];
    size_t block = (nmax + PV_MAX_CELLS - 1) / PV_MAX_CELLS;
    double ps = PV_PANEL / (double)((nmax + block - 1) / block); /* px per picture cell */
    double nm_per_px = g->d * 1e9 * (double)block / ps;

    size_t counts[256];
    dpz_grid_label_counts(g, counts);
    char sub[256];
    double vol = dpz_grid_volume(g), aeq = dpz_grid_aeq(g);
    snprintf(sub, sizeof sub,
             "%zu occupied voxels of edge %.4g nm; bounding box %zu x %zu x %zu voxels "
             "(%.4g x %.4g x %.4g nm); V = %.4g nm\u00B3, a_eq = %.4g nm",
             g->n_occ, g->d * 1e9, n[0], n[1], n[2], n[0] * g->d * 1e9, n[1] * g->d * 1e9,
             n[2] * g->d * 1e9, vol * 1e27, aeq * 1e9);

    dpz_svg_begin(s, PV_W, PV_H, standalone, title ? title : "Voxel preview");
    dpz_svg_text(s, PV_X0, 26, 16, DPZ_SVG_START, 0, 1, title ? title : "Voxel preview");
    dpz_svg_text(s, PV_X0, 46, 11.5, DPZ_SVG_START, 0, 0, sub);
    dpz_svg_text(s, PV_X0, 62, 11.5, DPZ_SVG_START, 0, 0,
                 "Top: projections (largest label along the line of sight; paler = "
                 "thinner). Bottom: mid-plane slices. One scale for all panels.");

    static const char axn[3] = {'x', 'y', 'z'};
    for (int row = 0; row < 2 && st == DPZ_OK; row++)
        for (int axis = 0; axis < 3; axis++) {
            pv_image im;
            long slice = row == 0 ? -1 : (long)(n[axis] / 2);
            if (pv_build(g, axis, slice, block, &im) != 0) {
                pv_free(&im);
                st = dpz_err_set(err, DPZ_ENOMEM, "preview: out of memory");
                break;
            }
            int ah = axis == 0 ? 1 : 0, av = axis == 2 ? 1 : 2;
            char t[96];
            if (row == 0) {
                snprintf(t, sizeof t, "projection along %c", axn[axis]);
            } else {
                /* Centre of the cut plane in the grid frame (dpz_grid.h). */
                double c = (g->origin[axis] + g->d * (double)slice) * 1e9;
                snprintf(t, sizeof t, "slice %c = %.4g nm", axn[axis], c + 0.0);
            }
            pv_draw(s, &im, PV_X0 + axis * PV_DX, PV_Y0 + row * PV_DY, ps, t, axn[ah],
                    axn[av]);
            pv_free(&im);
        }

    /* Scale bar: a Heckbert (1990) nice length near a third of a panel. */
    double bar_nm = dpz_svg_nicenum(PV_PANEL / 3.0 * nm_per_px, 1);
    double bar_px = bar_nm / nm_per_px;
    double by = PV_Y0 + 2 * PV_DY + 4;
    dpz_svg_style bar = {"#222222", 3.0, NULL, NULL, 1.0};
    dpz_svg_line(s, PV_X0, by, PV_X0 + bar_px, by, &bar);
    dpz_svg_line(s, PV_X0, by - 5, PV_X0, by + 5, &bar);
    dpz_svg_line(s, PV_X0 + bar_px, by - 5, PV_X0 + bar_px, by + 5, &bar);
    char t[96];
    snprintf(t, sizeof t, "%g nm", bar_nm);
    dpz_svg_text(s, PV_X0 + bar_px / 2, by + 20, 12, DPZ_SVG_MIDDLE, 0, 1, t);

    /* Legend of labels (at most 12 shown). */
    double lx = PV_X0 + 200, ly = by - 4;
    size_t shown = 0, nlab = 0;
    for (unsigned l = 1; l < 256; l++)
        nlab += counts[l] > 0;
    for (unsigned l = 1; l < 256 && shown < 12; l++) {
        if (!counts[l])
            continue;
        char col[8];
        label_colour(l, col);
        dpz_svg_style sw = {NULL, 0, NULL, col, 1.0};
        snprintf(t, sizeof t, "label %u: %zu voxels (%.1f %%)", l, counts[l],
                 100.0 * counts[l] / (double)g->n_occ);
        double ex = lx + (double)(shown % 2) * 290, ey = ly + (double)(shown / 2) * 18;
        dpz_svg_legend_entry(s, ex, ey, &sw, 0, 3, t);
        shown++;
    }
    if (nlab > shown) {
        snprintf(t, sizeof t, "... and %zu more labels", nlab - shown);
        dpz_svg_text(s, lx, ly + (double)((shown + 1) / 2) * 18 + 4, 11.5, DPZ_SVG_START,
                     0, 0, t);
    }
    dpz_svg_end(s);
    dpz_grid_destroy(g);
    if (st == DPZ_OK && dpz_svg_ok(s) != 0)
        st = dpz_err_set(err, DPZ_ENOMEM, "preview: out of memory");
    return st;
}

/* ---- the command
 * ----------------------------------------------------------------------- */

static const cli_opt preview_opts[] = {
    {"-o", "OUT.svg",
     "output SVG file (default: FILE with its extension replaced by -preview.svg; "
     "written "
     "atomically)",
     0},
    {NULL, NULL, NULL, 0},
};
static const cli_group preview_group = {"Output", preview_opts};

static int run_preview(const cli_args *a);

static const cli_cmd preview_cmd = {
    .name = "preview",
    .usage = "FILE [-o OUT.svg] [--spacing LEN]",
    .summary = "draw a voxel set as SVG: three projections, three mid-plane slices",
    .details = "FILE is a VTK voxel file, a NumPy .npy or CSV (i,j,k,label) voxel file "
               "(with --spacing), or an STL mesh (with --spacing and --stl-unit). Labels "
               "are coloured by material; label 0 (the host) is left transparent; the "
               "scale bar is in nanometres.",
    .example = "dipolize preview srr.vtk -o srr-preview.svg",
    .min_pos = 1,
    .max_pos = 1,
    .groups = {&preview_group, &cli_group_geometry, NULL},
    .run = run_preview,
};

/* FILE with its extension replaced by "-preview.svg". */
static char *default_out(const char *path)
{
    size_t n = strlen(path);
    const char *slash = strrchr(path, '/');
    const char *dot = strrchr(path, '.');
    if (dot && (!slash || dot > slash + 1))
        n = (size_t)(dot - path);
    char *o = malloc(n + 16);
    if (o) {
        memcpy(o, path, n);
        memcpy(o + n, "-preview.svg", 13);
    }
    return o;
}

static const char *base_name(const char *path)
{
    const char *slash = strrchr(path, '/');
    return slash && slash[1] ? slash + 1 : path;
}

static int run_preview(const cli_args *a)
{
    const char *path = a->pos[0];
    dpz_grid *g = NULL;
    int rc = cli_load_geometry(a, path, &g, NULL, NULL);
    if (rc != CLI_OK)
        return rc;
    char *out = cli_get(a, "-o") ? strdup(cli_get(a, "-o")) : default_out(path);
    if (!out) {
        dpz_grid_destroy(g);
        return dpz__pic_fail(DPZ_ENOMEM, "preview: out of memory");
    }
    char title[600];
    snprintf(title, sizeof title, "Voxel preview: %s", base_name(path));
    dpz_svg s;
    dpz_svg_init(&s, NULL);
    dpz_err err;
    dpz_err_clear(&err);
    dpz_status st = dpz__pic_preview_render(&s, g, title, 1, &err);
    dpz_grid_destroy(g);
    if (st != DPZ_OK) {
        rc = dpz__pic_fail(st, err.msg);
    } else if (dpz_svg_write_file(out, s.buf, s.len) != 0) {
        rc = cli_fail("preview: cannot write %s: %s", out, strerror(errno));
    } else {
        printf("wrote %s\n", out);
    }
    dpz_svg_free(&s);
    free(out);
    return rc;
}

int dpz_cli_preview(int argc, char **argv)
{
    cli_args *a = dpz__calloc(1, sizeof *a);
    if (!a)
        return dpz__pic_fail(DPZ_ENOMEM, "out of memory");
    int help = 0;
    int rc = cli_parse(&preview_cmd, argc, argv, 1, a, &help);
    if (rc == CLI_OK) {
        if (help)
            cli_print_help(&preview_cmd, stdout);
        else
            rc = preview_cmd.run(a);
    }
    free(a);
    return rc;
}
