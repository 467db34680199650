/* report.c: `dipolize report DIR` - one self-contained HTML page about a sweep directory:
 * the inputs, the static tensor and its principal values, the size expansion, the spectra
 * (inline SVG), the voxel preview, the diagnostics in plain words and the cautions on the
 * point-dipole reduction. The page needs no network access and no JavaScript: styles are
 * inline, pictures are inline SVG. */
#include "pictures.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "cJSON.h"
#include "cli_int.h"
#include "dpz_sha256.h"
#include "dpz_shape.h"
#include "dpz_voxio.h"

/* JSON files of a run are small; refuse anything absurd. */
#define RP_MAX_JSON_BYTES ((size_t)64 << 20)
/* Plain-words thresholds (presentation choices, stated on the page). */
#define RP_VALIDITY_WARN 0.1   /* same level as the plot's warning band */
#define RP_RECIPROCITY_OK 1e-6 /* relative; well above round-off of a converged solve */
#define RP_NEG_EIG_TOL 1e-6  /* absolute: the absorption matrix is dimensionless, O(1) */
#define RP_RADIATIVE_OK 0.05 /* |C3 + 2i/9 I| / (2/9) */
#define RP_TENSOR_ZERO                                                                   \
    1e-9                  /* tensor parts below this fraction of the largest: shown 0    \
                           */
#define RP_EXT_AGREE 0.05 /* point-dipole extinction within 5 % of the full solve */

#ifndef DPZ_VERSION
#define DPZ_VERSION "unknown"
#endif
static const char program_version[] = DPZ_VERSION;

typedef dpz_svg buf; /* the page is built in the SVG writer's growable buffer */

#define P dpz_svg_printf
#define E dpz_svg_escaped

static const char *const css =
    "body{font-family:'DejaVu Sans',Helvetica,Arial,sans-serif;color:#222;max-width:"
    "1000px;margin:24px auto;padding:0 16px;line-height:1.45}"
    "h1{font-size:1.6em;margin-bottom:0.2em}h2{font-size:1.25em;border-bottom:2px solid "
    "#0072B2;padding-bottom:3px;margin-top:1.8em}h3{font-size:1.05em;margin-bottom:0.3em}"
    ".meta{color:#555;font-size:0.92em}"
    "table{border-collapse:collapse;margin:0.4em 0 0.8em}"
    "td,th{border:1px solid #ccc;padding:3px 8px;text-align:left;vertical-align:top;"
    "font-size:0.92em}"
    "th{background:#eef4f9}td.num{text-align:right;font-family:'DejaVu Sans Mono',"
    "monospace;white-space:nowrap}"
    "table.kv td:first-child{font-weight:bold;background:#f7f7f7}"
    "figure{margin:1em 0}figure svg{max-width:100%;height:auto;border:1px solid #ddd}"
    "figcaption{font-size:0.9em;color:#444;margin-top:4px}"
    ".ok{color:#006e50}.warn{color:#b34700;font-weight:bold}"
    "ul.verdict li{margin:0.2em 0}"
    ".box{background:#fff7ec;border-left:4px solid #D55E00;padding:6px 12px}"
    "code{font-family:'DejaVu Sans Mono',monospace;font-size:0.92em}"
    "@media print{figure{break-inside:avoid}}";

/* ---- JSON helpers ---------------------------------------------------------------------
 */

/* Reads and parses DIR/NAME. *out = NULL (and DPZ_OK) when the file is absent. */
static dpz_status load_json(const char *dir, const char *name, cJSON **out, dpz_err *err)
{
    *out = NULL;
    char *path = dpz__pic_join(dir, name);
    if (!path)
        return dpz_err_set(err, DPZ_ENOMEM, "out of memory");
    struct stat st;
    if (stat(path, &st) != 0 && errno == ENOENT) {
        free(path);
        return DPZ_OK;
    }
    char *text = NULL;
    size_t len = 0;
    dpz_status s = dpz__pic_read_file(path, RP_MAX_JSON_BYTES, &text, &len, err);
    if (s == DPZ_OK) {
        const char *end = NULL;
        cJSON *j = cJSON_ParseWithLengthOpts(text, len, &end, 0);
        if (!j) {
            size_t off = end && end >= text ? (size_t)(end - text) : 0;
            s = dpz_err_set(err, DPZ_EFORMAT, "%s: byte %zu: not valid JSON", path, off);
        } else if (!cJSON_IsObject(j)) {
            cJSON_Delete(j);
            s = dpz_err_set(err, DPZ_EFORMAT, "%s: the top level is not a JSON object",
                            path);
        } else {
            *out = j;
        }
    }
    free(text);
    free(path);
    return s;
}

static int json_complex(const cJSON *j, double complex *z)
{
    if (cJSON_IsNumber(j)) {
        *z = j->valuedouble;
        return 0;
    }
    if (cJSON_IsArray(j) && cJSON_GetArraySize(j) == 2) {
        const cJSON *a = cJSON_GetArrayItem(j, 0), *b = cJSON_GetArrayItem(j, 1);
        if (cJSON_IsNumber(a) && cJSON_IsNumber(b)) {
            *z = CMPLX(a->valuedouble, b->valuedouble);
            return 0;
        }
    }
    return -1;
}

/* A 3x3 tensor: 3 rows of 3 [re, im] pairs (the JSON layout of every dipolize command). */
static int json_tensor3(const cJSON *j, double complex t[3][3])
{
    if (!cJSON_IsArray(j) || cJSON_GetArraySize(j) != 3)
        return -1;
    for (int r = 0; r < 3; r++) {
        const cJSON *row = cJSON_GetArrayItem(j, r);
        if (!cJSON_IsArray(row) || cJSON_GetArraySize(row) != 3)
            return -1;
        for (int c = 0; c < 3; c++)
            if (json_complex(cJSON_GetArrayItem(row, c), &t[r][c]) != 0)
                return -1;
    }
    return 0;
}

static int json_num(const cJSON *o, const char *key, double *v)
{
    const cJSON *j = cJSON_GetObjectItemCaseSensitive(o, key);
    if (!cJSON_IsNumber(j))
        return -1;
    *v = j->valuedouble;
    return 0;
}

static const char *json_str(const cJSON *o, const char *key)
{
    const cJSON *j = cJSON_GetObjectItemCaseSensitive(o, key);
    return cJSON_IsString(j) ? j->valuestring : NULL;
}

/* Generic rendering of a JSON value (materials, options, unknown fields). */
static void html_json(buf *h, const cJSON *j, int depth)
{
    if (!j || cJSON_IsNull(j)) {
        P(h, "&#8212;");
    } else if (cJSON_IsBool(j)) {
        P(h, "%s", cJSON_IsTrue(j) ? "yes" : "no");
    } else if (cJSON_IsNumber(j)) {
        P(h, "%.6g", j->valuedouble);
    } else if (cJSON_IsString(j)) {
        P(h, "<code>");
        E(h, j->valuestring);
        P(h, "</code>");
    } else if (depth > 6) {
        P(h, "(nested too deeply to show)");
    } else if (cJSON_IsObject(j)) {
        if (!j->child) {
            P(h, "&#8212;");
            return;
        }
        P(h, "<table class=\"kv\">");
        for (const cJSON *c = j->child; c; c = c->next) {
            P(h, "<tr><td>");
            E(h, c->string ? c->string : "");
            P(h, "</td><td>");
            html_json(h, c, depth + 1);
            P(h, "</td></tr>");
        }
        P(h, "</table>");
    } else if (cJSON_IsArray(j)) {
        int n = cJSON_GetArraySize(j), scalars = 1;
        for (const cJSON *c = j->child; c; c = c->next)
            if (cJSON_IsObject(c) || cJSON_IsArray(c))
                scalars = 0;
        if (n == 0) {
            P(h, "(empty)");
        } else if (scalars && n <= 12) {
            int first = 1;
            for (const cJSON *c = j->child; c; c = c->next) {
                if (!first)
                    P(h, ", ");
                first = 0;
                html_json(h, c, depth + 1);
            }
        } else if (scalars) {
            P(h, "%d values: ", n);
            html_json(h, j->child, depth + 1);
            P(h, " &#8230; ");
            html_json(h, cJSON_GetArrayItem(j, n - 1), depth + 1);
        } else {
            P(h, "<ol>");
            int k = 0;
            for (const cJSON *c = j->child; c && k < 50; c = c->next, k++) {
                P(h, "<li>");
                html_json(h, c, depth + 1);
                P(h, "</li>");
            }
            if (n > 50)
                P(h, "<li>&#8230; %d more</li>", n - 50);
            P(h, "</ol>");
        }
    } else {
        P(h, "?");
    }
}

/* ---- number formatting
 * ------------------------------------------------------------------ */

static void fmt_complex(char *out, size_t cap, double complex z)
{
    double re = creal(z), im = cimag(z);
    if (im == 0.0)
        snprintf(out, cap, "%.5g", re + 0.0);
    else
        snprintf(out, cap, "%.5g %s %.4gi", re + 0.0, im < 0 ? "&#8722;" : "+", fabs(im));
}

/* Table of a 3x3 complex tensor, values multiplied by `scale`. */
static void html_tensor3(buf *h, double complex t[3][3], double scale)
{
    static const char *const ax[3] = {"x", "y", "z"};
    /* Parts below RP_TENSOR_ZERO of the largest element are solver noise at the default
     * tolerances: shown as 0 so that the structure of the tensor reads at a glance. */
    double mx = 0.0;
    for (int r = 0; r < 3; r++)
        for (int c = 0; c < 3; c++)
            if (isfinite(cabs(t[r][c])))
                mx = fmax(mx, cabs(t[r][c]));
    double zero = RP_TENSOR_ZERO * mx;
    P(h, "<table><tr><th></th><th>x</th><th>y</th><th>z</th></tr>");
    for (int r = 0; r < 3; r++) {
        P(h, "<tr><th>%s</th>", ax[r]);
        for (int c = 0; c < 3; c++) {
            double re = creal(t[r][c]), im = cimag(t[r][c]);
            if (fabs(re) < zero)
                re = 0.0;
            if (fabs(im) < zero)
                im = 0.0;
            char v[96];
            fmt_complex(v, sizeof v, CMPLX(re * scale, im * scale));
            P(h, "<td class=\"num\">%s</td>", v);
        }
        P(h, "</tr>");
    }
    P(h, "</table>");
}

/* "10<sup>-21</sup>" style power for HTML. */
static int pick_exponent(double complex t[3][3])
{
    double m = 0.0;
    for (int r = 0; r < 3; r++)
        for (int c = 0; c < 3; c++)
            if (isfinite(cabs(t[r][c])) && cabs(t[r][c]) > m)
                m = cabs(t[r][c]);
    if (!(m > 0.0))
        return 0;
    return 3 * (int)floor(log10(m) / 3.0 + 1e-12);
}

static double nm(double m)
{
    return m * 1e9;
}

/* ---- sections
 * --------------------------------------------------------------------------- */

static void section_inputs(buf *h, const cJSON *sum, const dpz_pic_sweep *sw)
{
    P(h, "<h2 id=\"inputs\">Inputs</h2>");
    if (!sum) {
        P(h, "<p>summary.json is not available in this directory: the inputs of the run "
             "are unknown.</p>");
        return;
    }
    P(h, "<table class=\"kv\">");
    const cJSON *in = cJSON_GetObjectItemCaseSensitive(sum, "input");
    const char *prog = json_str(sum, "program"), *ver = json_str(sum, "version");
    if (prog || ver) {
        P(h, "<tr><td>program</td><td>");
        E(h, prog ? prog : "dipolize");
        P(h, " ");
        E(h, ver ? ver : "");
        P(h, "</td></tr>");
    }
    if (cJSON_IsObject(in)) {
        const char *path = json_str(in, "path"), *sha = json_str(in, "sha256");
        P(h, "<tr><td>geometry file</td><td><code>");
        E(h, path ? path : "(not recorded)");
        P(h, "</code></td></tr>");
        if (sha) {
            P(h, "<tr><td>SHA-256 of the file</td><td><code>");
            E(h, sha);
            P(h, "</code></td></tr>");
        }
        for (const cJSON *c = in->child; c; c = c->next) {
            if (c->string &&
                (strcmp(c->string, "path") == 0 || strcmp(c->string, "sha256") == 0))
                continue;
            P(h, "<tr><td>input ");
            E(h, c->string ? c->string : "");
            P(h, "</td><td>");
            html_json(h, c, 1);
            P(h, "</td></tr>");
        }
    }
    P(h, "<tr><td>materials</td><td>");
    html_json(h, cJSON_GetObjectItemCaseSensitive(sum, "materials"), 1);
    P(h, "</td></tr><tr><td>options</td><td>");
    html_json(h, cJSON_GetObjectItemCaseSensitive(sum, "options"), 1);
    P(h, "</td></tr>");
    const cJSON *wl = cJSON_GetObjectItemCaseSensitive(sum, "wavelengths_m");
    if (cJSON_IsArray(wl) && cJSON_GetArraySize(wl) > 0) {
        int n = cJSON_GetArraySize(wl);
        double lo = INFINITY, hi = -INFINITY;
        for (const cJSON *c = wl->child; c; c = c->next)
            if (cJSON_IsNumber(c)) {
                lo = fmin(lo, c->valuedouble);
                hi = fmax(hi, c->valuedouble);
            }
        P(h,
          "<tr><td>wavelengths of the run</td><td>%d, from %.6g nm to %.6g nm (vacuum); "
          "%zu present in alpha.csv</td></tr>",
          n, nm(lo), nm(hi), sw->n);
    }
    const cJSON *sh = cJSON_GetObjectItemCaseSensitive(sum, "shard");
    double si, sc;
    if (cJSON_IsObject(sh) && json_num(sh, "index", &si) == 0 &&
        json_num(sh, "count", &sc) == 0 && sc > 1)
        P(h,
          "<tr><td>shard</td><td>%.0f of %.0f (this directory holds every %.0f-th "
          "wavelength)</td></tr>",
          si, sc, sc);
    const cJSON *res = cJSON_GetObjectItemCaseSensitive(sum, "results");
    if (cJSON_IsArray(res)) {
        double secs = 0.0;
        int n = 0;
        for (const cJSON *c = res->child; c; c = c->next) {
            double t;
            n++;
            if (json_num(c, "seconds", &t) == 0 && isfinite(t))
                secs += t;
        }
        P(h,
          "<tr><td>finished wavelengths</td><td>%d (solver time %.4g s in "
          "total)</td></tr>",
          n, secs);
    }
    P(h, "</table>");
}

static dpz_status section_static(buf *h, const char *dir, const cJSON *js, dpz_err *err)
{
    P(h, "<h2 id=\"static\">Static tensor</h2>");
    if (!js) {
        P(h, "<p>static.json is not available in this directory.</p>");
        return DPZ_OK;
    }
    double complex chi[3][3];
    if (json_tensor3(cJSON_GetObjectItemCaseSensitive(js, "chi"), chi) != 0)
        return dpz_err_set(err, DPZ_EFORMAT,
                           "%s/static.json: 'chi' is not a 3x3 tensor of [re, im] pairs",
                           dir);
    double V = NAN, aeq = NAN, d = NAN, vox = NAN;
    json_num(js, "volume_m3", &V);
    json_num(js, "a_eq_m", &aeq);
    json_num(js, "spacing_m", &d);
    json_num(js, "voxels", &vox);
    P(h, "<p>The quasi-static (k &#8594; 0) polarizability &#967; of the same voxel set, "
         "in volume units: p / (&#949;<sub>0</sub>&#949;<sub>h</sub>) = &#967; E.");
    if (isfinite(V))
        P(h, " Volume V = %.5g nm<sup>3</sup>", V * 1e27);
    if (isfinite(aeq))
        P(h, ", equal-volume radius a<sub>eq</sub> = %.5g nm", nm(aeq));
    if (isfinite(vox))
        P(h, ", %.0f voxels", vox);
    if (isfinite(d))
        P(h, " of edge %.4g nm", nm(d));
    P(h, ".</p>");
    const char *note = json_str(js, "note");
    if (note) {
        P(h, "<p>");
        E(h, note);
        P(h, "</p>");
    }
    double lam_eps;
    if (json_num(js, "eps_at_wavelength_m", &lam_eps) == 0)
        P(h,
          "<p>The materials depend on wavelength: this static tensor uses their "
          "permittivities at %.6g nm, so it is the k &#8594; 0 shape response at those "
          "permittivities, not a property of the shape alone.</p>",
          nm(lam_eps));
    const cJSON *sol = cJSON_GetObjectItemCaseSensitive(js, "solver");
    if (cJSON_IsObject(sol)) {
        P(h, "<div>Solver of the static solves:");
        html_json(h, sol, 1);
        P(h, "</div>");
    }
    int e = pick_exponent(chi);
    P(h, "<h3>&#967; (10<sup>%d</sup> m<sup>3</sup>)</h3>", e);
    P(h,
      "<p class=\"meta\">Parts smaller than %g of the largest element are shown as "
      "0.</p>",
      RP_TENSOR_ZERO);
    html_tensor3(h, chi, pow(10.0, -e));
    if (isfinite(V) && V > 0) {
        P(h, "<h3>&#967; / V (dimensionless)</h3>");
        html_tensor3(h, chi, 1.0 / V);
    }
    /* Principal axes: eigenvectors (Jacobi) of M = Re(S) Re(S)^T + Im(S) Im(S)^T, S the
     * symmetric part of chi. When Re(S) and Im(S) share their axes (any shape with three
     * mirror planes, any lossless material) these are the axes of chi itself, and the
     * complex principal values are u^T chi u. */
    double M[3][3] = {{0}}, w[3], U[3][3];
    double complex S[3][3];
    for (int r = 0; r < 3; r++)
        for (int c = 0; c < 3; c++)
            S[r][c] = 0.5 * (chi[r][c] + chi[c][r]);
    for (int r = 0; r < 3; r++)
        for (int c = 0; c < 3; c++)
            for (int k = 0; k < 3; k++)
                M[r][c] +=
                    creal(S[r][k]) * creal(S[c][k]) + cimag(S[r][k]) * cimag(S[c][k]);
    dpz__pic_eigsym3((const double(*)[3])M, w, U);
    /* How far U diagonalizes S: largest off-diagonal element of U^T S U, relative. */
    double complex D[3][3];
    double off = 0.0, dmax = 0.0;
    for (int a = 0; a < 3; a++)
        for (int b = 0; b < 3; b++) {
            D[a][b] = 0.0;
            for (int r = 0; r < 3; r++)
                for (int c = 0; c < 3; c++)
                    D[a][b] += U[r][a] * S[r][c] * U[c][b];
            if (a == b)
                dmax = fmax(dmax, cabs(D[a][b]));
            else
                off = fmax(off, cabs(D[a][b]));
        }
    P(h,
      "<h3>Principal values</h3><p>Values of &#967; along its principal axes (unit "
      "vectors in the grid frame):</p><table><tr><th></th>"
      "<th>value (10<sup>%d</sup> m<sup>3</sup>)</th>",
      e);
    if (isfinite(V) && V > 0)
        P(h, "<th>value / V</th>");
    P(h, "<th>axis (x, y, z)</th></tr>");
    for (int i = 0; i < 3; i++) {
        char v[96];
        fmt_complex(v, sizeof v, D[i][i] * pow(10.0, -e));
        P(h, "<tr><th>%d</th><td class=\"num\">%s</td>", i + 1, v);
        if (isfinite(V) && V > 0) {
            fmt_complex(v, sizeof v, D[i][i] / V);
            P(h, "<td class=\"num\">%s</td>", v);
        }
        double u[3];
        for (int r = 0; r < 3; r++) /* no "-0.000" */
            u[r] = fabs(U[r][i]) < 5e-4 ? 0.0 : U[r][i];
        P(h, "<td class=\"num\">(%.3f, %.3f, %.3f)</td></tr>", u[0], u[1], u[2]);
    }
    P(h, "</table>");
    if (dmax > 0 && off > 1e-6 * dmax)
        P(h,
          "<p>The real and imaginary parts of &#967; do not share their principal axes "
          "exactly (off-diagonal remainder %.3g of the largest value in this frame): the "
          "axes above are a compromise and the values approximate.</p>",
          off / dmax);
    return DPZ_OK;
}

static dpz_status section_expand(buf *h, const char *dir, const cJSON *jx, dpz_err *err)
{
    if (!jx)
        return DPZ_OK;
    P(h, "<h2 id=\"expansion\">Size expansion</h2>");
    P(h,
      "<p>The inverse electric polarizability expanded in the size parameter x = k "
      "a<sub>eq</sub>: V &#945;<sub>ee</sub><sup>&#8722;1</sup>(x) = C<sub>0</sub> + "
      "C<sub>2</sub> x<sup>2</sup> + C<sub>3</sub> x<sup>3</sup> + C<sub>4</sub> "
      "x<sup>4</sup> + &#8230; (dimensionless 3x3 coefficients). C<sub>0</sub> = V "
      "&#967;<sup>&#8722;1</sup>; C<sub>3</sub> must equal &#8722;(2i/9) I for any shape "
      "(the radiative correction &#8722;i k<sup>3</sup>/(6&#960;) times V = 4&#960;"
      "a<sub>eq</sub><sup>3</sup>/3).</p>");
    static const char *const names[4] = {"C0", "C2", "C3", "C4"};
    for (int i = 0; i < 4; i++) {
        const cJSON *c = cJSON_GetObjectItemCaseSensitive(jx, names[i]);
        if (!c)
            continue;
        double complex t[3][3];
        if (json_tensor3(c, t) != 0)
            return dpz_err_set(
                err, DPZ_EFORMAT,
                "%s/expand.json: '%s' is not a 3x3 tensor of [re, im] pairs", dir,
                names[i]);
        P(h, "<h3>C<sub>%c</sub></h3>", names[i][1]);
        html_tensor3(h, t, 1.0);
    }
    double rc, fr;
    P(h, "<ul>");
    if (json_num(jx, "radiative_check", &rc) == 0) {
        P(h, "<li>Radiative check |C<sub>3</sub> + (2i/9) I| / (2/9) = %.3g: ", rc);
        if (rc <= RP_RADIATIVE_OK)
            P(h,
              "<span class=\"ok\">the fit recovers the exact radiative correction</span> "
              "(within %g %%).</li>",
              100 * RP_RADIATIVE_OK);
        else
            P(h,
              "<span class=\"warn\">the fitted C<sub>3</sub> departs from &#8722;(2i/9) "
              "I by more than %g %%</span>: the sizes used may be too large or too few "
              "for the expansion, or the solves not accurate enough.</li>",
              100 * RP_RADIATIVE_OK);
    }
    if (json_num(jx, "fit_residual", &fr) == 0)
        P(h, "<li>Fit residual %.3g.</li>", fr);
    const cJSON *pts = cJSON_GetObjectItemCaseSensitive(jx, "points");
    if (pts) {
        P(h, "<li>Size parameters used: ");
        html_json(h, pts, 1);
        P(h, ".</li>");
    }
    P(h,
      "<li>C<sub>2</sub> is the shape's non-radiative dynamic term; its value depends on "
      "the convention used to define the polarizability (which quantities are held "
      "fixed as the size grows), so compare it only with values obtained the same "
      "way.</li></ul>");
    return DPZ_OK;
}

static void section_spectra(buf *h, const dpz_pic_sweep *sw)
{
    static const char *const captions[DPZ_PIC_COUNT] = {
        "Electric polarizability: real (solid) and imaginary (dashed) parts of the "
        "principal components against vacuum wavelength.",
        "Magnetic polarizability, drawn the same way.",
        "Magneto-electric block (shown because it exceeds 10<sup>&#8722;3</sup> of the "
        "largest element of A); it depends on the multipole origin.",
        "Cross sections of the full solve (solid) and of the point-dipole tensor alone "
        "(dashed).",
        "Dipole validity: size of the order-2 and order-3 response relative to order 1. "
        "Above 0.1 (shaded) the point dipole is a doubtful description."};
    P(h, "<h2 id=\"spectra\">Spectra</h2>");
    P(h, "<p>Hollow markers and faint vertical lines flag wavelengths whose solves did "
         "not converge (their values may be missing).</p>");
    for (int k = 0; k < DPZ_PIC_COUNT; k++) {
        if (!dpz__pic_plot_wanted(sw, (dpz_pic_kind)k))
            continue;
        P(h, "<figure>\n");
        dpz__pic_plot_render(h, sw, (dpz_pic_kind)k, 0);
        P(h, "<figcaption>%s</figcaption></figure>\n", captions[k]);
    }
    if (!sw->has_cs)
        P(h, "<p>cross_sections.csv is not available: no cross-section plot.</p>");
    if (!sw->has_diag)
        P(h, "<p>diagnostics.csv is not available: no dipole-validity plot.</p>");
}

/* Voxel edge of the run's grid, m (0 when not recorded): input.grid.spacing_m as written
 * by the sweep, else a spacing among the options. */
static double recorded_spacing(const cJSON *sum)
{
    double d;
    const cJSON *in = cJSON_GetObjectItemCaseSensitive(sum, "input");
    const cJSON *grid = in ? cJSON_GetObjectItemCaseSensitive(in, "grid") : NULL;
    if (grid && json_num(grid, "spacing_m", &d) == 0 && d > 0)
        return d;
    const cJSON *opt = cJSON_GetObjectItemCaseSensitive(sum, "options");
    if (!cJSON_IsObject(opt))
        return 0.0;
    if (json_num(opt, "spacing_m", &d) == 0 && d > 0)
        return d;
    const cJSON *s = cJSON_GetObjectItemCaseSensitive(opt, "spacing");
    if (cJSON_IsNumber(s) && s->valuedouble > 0)
        return s->valuedouble;
    if (cJSON_IsString(s) &&
        dpz_units_length_pos("spacing", s->valuestring, &d, NULL) == DPZ_OK)
        return d;
    return 0.0;
}

static void section_geometry(buf *h, const char *dir, const cJSON *sum)
{
    P(h, "<h2 id=\"geometry\">Geometry</h2>");
    const cJSON *in = sum ? cJSON_GetObjectItemCaseSensitive(sum, "input") : NULL;
    const char *path = in ? json_str(in, "path") : NULL;
    if (!path || !path[0]) {
        P(h, "<p>The voxel preview is not available: summary.json records no geometry "
             "path.</p>");
        return;
    }
    /* The path as recorded (relative to where the sweep ran), else relative to DIR. */
    char *use = strdup(path);
    struct stat st;
    if (use && stat(use, &st) != 0 && path[0] != '/') {
        free(use);
        use = dpz__pic_join(dir, path);
        if (use && stat(use, &st) != 0) {
            free(use);
            use = NULL;
        }
    }
    if (!use) {
        P(h, "<p>The voxel preview is not available: the geometry file <code>");
        E(h, path);
        P(h, "</code> is not found (neither as recorded nor relative to the run "
             "directory).</p>");
        return;
    }
    double run_d = recorded_spacing(sum);
    dpz_grid *g = NULL;
    dpz_err err;
    dpz_err_clear(&err);
    int revox = 0;
    dpz_status s = dpz_voxfile_read(&g, use, run_d, 0, &err);
    /* A VTK file written by `dipolize shape` records its shape; a run at another spacing
     * re-voxelized it (the same way the program does), so the preview does too. */
    if (s == DPZ_OK && g->source_kind == DPZ_SOURCE_SHAPE && run_d > 0 &&
        fabs(g->d - run_d) > 1e-9 * run_d) {
        dpz_shape shape;
        dpz_grid *g2 = NULL;
        s = dpz_shape_parse_record(g->source, &shape, &err);
        if (s == DPZ_OK)
            s = dpz_shape_voxelize(&g2, &shape, run_d, 0, 4, 0, &err);
        dpz_grid_destroy(g);
        g = g2;
        revox = s == DPZ_OK;
    }
    if (s == DPZ_OK) {
        char title[600];
        const char *slash = strrchr(path, '/');
        snprintf(title, sizeof title, "Voxel preview: %s", slash ? slash + 1 : path);
        P(h, "<figure>\n");
        s = dpz__pic_preview_render(h, g, title, 0, &err);
        P(h, "<figcaption>The voxel set read from <code>");
        E(h, use);
        P(h, "</code>%s",
          revox ? ", its recorded shape re-voxelized at the run's spacing" : "");
        /* Has the file changed since the run? Compare with the recorded SHA-256. */
        const char *sha = json_str(in, "sha256");
        char hex[65];
        if (sha && dpz_sha256_file_hex(use, hex, NULL) == DPZ_OK) {
            if (strcmp(hex, sha) == 0)
                P(h, "; the file is unchanged since the run (same SHA-256)");
            else
                P(h, "; <span class=\"warn\">the file has changed since the run</span> "
                     "(its SHA-256 differs from the recorded one): this picture may not "
                     "show the geometry that was solved");
        }
        const cJSON *grid = cJSON_GetObjectItemCaseSensitive(in, "grid");
        double occ;
        if (g && grid && json_num(grid, "voxels", &occ) == 0 && occ != (double)g->n_occ)
            P(h,
              "; <span class=\"warn\">the run had %.0f occupied voxels, this picture "
              "%zu</span>",
              occ, g->n_occ);
        P(h, "%s</figcaption></figure>\n", s == DPZ_OK ? "." : " (picture incomplete).");
    }
    if (s != DPZ_OK) {
        P(h, "<p>The voxel preview is not available: ");
        E(h, err.msg[0] ? err.msg : dpz_status_message(s));
        P(h, ".</p>");
    }
    dpz_grid_destroy(g);
    free(use);
}

/* Index of the largest finite value (or SIZE_MAX). */
static size_t argmax(const double *v, size_t n)
{
    size_t k = (size_t)-1;
    for (size_t i = 0; i < n; i++)
        if (v && isfinite(v[i]) && (k == (size_t)-1 || v[i] > v[k]))
            k = i;
    return k;
}

static size_t argmin(const double *v, size_t n)
{
    size_t k = (size_t)-1;
    for (size_t i = 0; i < n; i++)
        if (v && isfinite(v[i]) && (k == (size_t)-1 || v[i] < v[k]))
            k = i;
    return k;
}

/* The verdict list, used at the top ("at a glance") and in the diagnostics section. */
static void verdicts(buf *h, const dpz_pic_sweep *sw, int detailed)
{
    const size_t none = (size_t)-1;
    P(h, "<ul class=\"verdict\">");
    size_t bad = 0;
    for (size_t i = 0; i < sw->n; i++)
        bad += !sw->conv[i];
    if (bad == 0) {
        P(h, "<li class=\"ok\">All %zu wavelengths converged.</li>", sw->n);
    } else {
        P(h, "<li><span class=\"warn\">%zu of %zu wavelengths did not converge</span>: ",
          bad, sw->n);
        size_t shown = 0;
        for (size_t i = 0; i < sw->n && shown < 12; i++)
            if (!sw->conv[i])
                P(h, "%s%.5g nm", shown++ ? ", " : "", nm(sw->lambda_m[i]));
        if (bad > shown)
            P(h, ", &#8230;");
        P(h, ". Their tensors are shown but should not be used; raise --max-iter or try "
             "another --solver.</li>");
    }
    if (sw->nd > 0) {
        size_t k = argmax(sw->d_validity, sw->nd), above = 0;
        for (size_t i = 0; i < sw->nd; i++)
            above += sw->d_validity[i] > RP_VALIDITY_WARN;
        if (k != none) {
            double worst = sw->d_validity[k];
            if (above == 0)
                P(h,
                  "<li class=\"ok\">The point-dipole description holds at every "
                  "wavelength: dipole validity at most %.3g (at %.5g nm), below "
                  "%.2g.</li>",
                  worst, nm(sw->d_lambda_m[k]), RP_VALIDITY_WARN);
            else
                P(h,
                  "<li><span class=\"warn\">The point-dipole description is doubtful at "
                  "%zu of %zu wavelengths</span> (dipole validity above %.2g); worst "
                  "%.3g "
                  "at %.5g nm: there the order-2 and order-3 response is a sizeable "
                  "fraction of the dipole response.</li>",
                  above, sw->nd, RP_VALIDITY_WARN, worst, nm(sw->d_lambda_m[k]));
        }
    }
    if (sw->ncs > 0 && sw->cs_rel) {
        size_t k = argmax(sw->cs_rel, sw->ncs);
        if (k != none && sw->cs_rel[k] <= RP_EXT_AGREE)
            P(h,
              "<li class=\"ok\">The point-dipole tensor reproduces the extinction of the "
              "full solve within %.3g %% at every wavelength (largest difference at %.5g "
              "nm).</li>",
              100 * sw->cs_rel[k], nm(sw->cs_lambda_m[k]));
        else if (k != none)
            P(h,
              "<li><span class=\"warn\">The point-dipole extinction differs from the "
              "full "
              "solve by up to %.3g %%</span> (at %.5g nm): there the dipole tensor "
              "misses "
              "part of the particle's response to a plane wave.</li>",
              100 * sw->cs_rel[k], nm(sw->cs_lambda_m[k]));
    }
    if (detailed && sw->nd > 0) {
        size_t k = argmax(sw->d_iter, sw->nd);
        if (k != none)
            P(h, "<li>Largest iteration count %.0f (at %.5g nm).</li>", sw->d_iter[k],
              nm(sw->d_lambda_m[k]));
        k = argmax(sw->d_resid, sw->nd);
        if (k != none)
            P(h, "<li>Largest final relative residual %.3g (at %.5g nm).</li>",
              sw->d_resid[k], nm(sw->d_lambda_m[k]));
        k = argmax(sw->d_recip, sw->nd);
        if (k != none) {
            if (sw->d_recip[k] <= RP_RECIPROCITY_OK)
                P(h,
                  "<li class=\"ok\">The tensor is reciprocal to solver precision "
                  "(largest reciprocity residual %.3g).</li>",
                  sw->d_recip[k]);
            else
                P(h,
                  "<li><span class=\"warn\">Reciprocity residual up to %.3g</span> (at "
                  "%.5g nm): a reciprocal particle should give a residual near the "
                  "solver "
                  "tolerance; a larger one points to an inaccurate solve.</li>",
                  sw->d_recip[k], nm(sw->d_lambda_m[k]));
        }
        k = argmax(sw->d_energy, sw->nd);
        if (k != none)
            P(h,
              "<li>Energy-balance (unitarity) residual up to %.3g (at %.5g nm). It is "
              "zero for a lossless particle up to solver precision; for an absorbing "
              "particle it measures the absorbed part.</li>",
              sw->d_energy[k], nm(sw->d_lambda_m[k]));
        k = argmin(sw->d_minabs, sw->nd);
        if (k != none) {
            if (sw->d_minabs[k] >= -RP_NEG_EIG_TOL)
                P(h,
                  "<li class=\"ok\">The absorption matrix has no negative eigenvalue "
                  "beyond round-off (smallest %.3g): the tensor is passive.</li>",
                  sw->d_minabs[k]);
            else
                P(h,
                  "<li><span class=\"warn\">Smallest absorption eigenvalue %.3g</span> "
                  "(at "
                  "%.5g nm): a negative value means the tensor would create energy, "
                  "which a passive particle cannot; check convergence and "
                  "discretization.</li>",
                  sw->d_minabs[k], nm(sw->d_lambda_m[k]));
        }
        k = argmin(sw->d_minfluct, sw->nd);
        if (k != none)
            P(h,
              "<li>Smallest eigenvalue of the fluctuation tensor %.3g m<sup>3</sup> (at "
              "%.5g nm); it should not be negative beyond round-off.</li>",
              sw->d_minfluct[k], nm(sw->d_lambda_m[k]));
    }
    P(h, "</ul>");
}

static void section_cautions(buf *h)
{
    P(h, "<h2 id=\"cautions\">Cautions on the point-dipole reduction</h2><ul>");
    P(h,
      "<li><b>Only the dipole order is kept.</b> The 6x6 tensor describes the electric "
      "and magnetic dipole response; quadrupole and higher orders are dropped. The "
      "dipole-validity diagnostic measures what is dropped. Where it is large, and "
      "whenever neighbouring meta-atoms come closer than about the diameter of the "
      "sphere circumscribing one of them, a dipole-only array model can be wrong.</li>");
    P(h,
      "<li><b>The tensor depends on the multipole origin.</b> Moving the origin mixes "
      "the electric and magnetic blocks: a<sub>em</sub>, a<sub>me</sub> and "
      "a<sub>mm</sub> change, a<sub>ee</sub> does not. The tensors here use the origin "
      "recorded with the run (by default the centroid of the occupied voxels); use the "
      "same origin in the array model, and compare tensors only at the same "
      "origin.</li>");
    P(h, "<li><b>The results are only as good as the material data.</b> Permittivity "
         "tables are interpolated between their points, and model parameters (Drude, "
         "Lorentz) may be illustrative rather than measured; resonance positions and "
         "widths follow them directly. The host is taken lossless with the given "
         "index.</li>");
    P(h, "<li><b>Discretization.</b> Curved surfaces become staircases of voxels. The "
         "discrete-dipole method is accurate when |m| k d is well below 1 (m the "
         "relative refractive index, d the voxel edge; Draine &amp; Flatau 1994, J. Opt. "
         "Soc. Am. A 11, 1491); for metals near plasmon resonances a finer spacing, or "
         "the refinement with extrapolation to zero spacing, is needed to trust "
         "resonance positions.</li>");
    P(h, "<li><b>Static tensor and size expansion.</b> The static tensor is the k "
         "&#8594; 0 limit with the permittivities stated with it; the expansion "
         "coefficient C<sub>2</sub> is convention-dependent, while C<sub>3</sub> = "
         "&#8722;(2i/9) I holds for every shape and is the check to look at.</li>");
    P(h, "<li><b>Non-converged wavelengths</b> are kept in the tables and marked; do not "
         "use their values.</li>");
    P(h, "</ul>");
}

/* ---- the command
 * ----------------------------------------------------------------------- */

static dpz_status build_report(buf *h, const char *dir, dpz_err *err)
{
    dpz_pic_sweep sw;
    cJSON *sum = NULL, *js = NULL, *jx = NULL;
    dpz_status st = dpz__pic_sweep_load(dir, &sw, err);
    if (st != DPZ_OK)
        return st;
    st = load_json(dir, "summary.json", &sum, err);
    if (st == DPZ_OK)
        st = load_json(dir, "static.json", &js, err);
    if (st == DPZ_OK)
        st = load_json(dir, "expand.json", &jx, err);
    if (st != DPZ_OK)
        goto done;

    const char *path = NULL;
    const cJSON *in = sum ? cJSON_GetObjectItemCaseSensitive(sum, "input") : NULL;
    if (in)
        path = json_str(in, "path");
    const char *name = path ? (strrchr(path, '/') ? strrchr(path, '/') + 1 : path) : dir;
    P(h, "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
         "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
         "<title>dipolize report: ");
    E(h, name);
    P(h, "</title>\n<style>%s</style>\n</head>\n<body>\n", css);
    P(h, "<h1>Point-dipole polarizability of ");
    E(h, name);
    P(h, "</h1>\n<p class=\"meta\">Run directory <code>");
    E(h, dir);
    P(h,
      "</code>; %zu wavelengths from %.6g nm to %.6g nm. Written by dipolize %s. "
      "Units SI; time dependence exp(&#8722;i&#969;t); polarizabilities in volume "
      "units (m<sup>3</sup>), A = [[a<sub>ee</sub>, a<sub>em</sub>], [a<sub>me</sub>, "
      "a<sub>mm</sub>]].</p>\n",
      sw.n, nm(sw.lambda_m[0]), nm(sw.lambda_m[sw.n - 1]), program_version);
    P(h,
      "<nav class=\"meta\">Sections: <a href=\"#glance\">at a glance</a> &#183; "
      "<a href=\"#inputs\">inputs</a> &#183; <a href=\"#static\">static tensor</a> "
      "&#183; %s<a href=\"#spectra\">spectra</a> &#183; <a "
      "href=\"#geometry\">geometry</a> "
      "&#183; <a href=\"#diagnostics\">diagnostics</a> &#183; <a "
      "href=\"#cautions\">cautions</a></nav>\n",
      jx ? "<a href=\"#expansion\">size expansion</a> &#183; " : "");
    P(h, "<h2 id=\"glance\">At a glance</h2>\n");
    verdicts(h, &sw, 0);
    section_inputs(h, sum, &sw);
    st = section_static(h, dir, js, err);
    if (st == DPZ_OK)
        st = section_expand(h, dir, jx, err);
    if (st != DPZ_OK)
        goto done;
    section_spectra(h, &sw);
    section_geometry(h, dir, sum);
    P(h, "<h2 id=\"diagnostics\">Diagnostics in plain words</h2>\n");
    if (!sw.has_diag)
        P(h, "<p>diagnostics.csv is not available; only convergence flags from alpha.csv "
             "are known.</p>");
    verdicts(h, &sw, 1);
    section_cautions(h);
    P(h, "<p class=\"meta\">This page is self-contained: it loads nothing from the "
         "network.</p>\n</body>\n</html>\n");
    if (dpz_svg_ok(h) != 0)
        st = dpz_err_set(err, DPZ_ENOMEM, "report: out of memory");
done:
    cJSON_Delete(sum);
    cJSON_Delete(js);
    cJSON_Delete(jx);
    dpz__pic_sweep_free(&sw);
    return st;
}

static const cli_opt report_opts[] = {
    {"-o", "REPORT.html",
     "output HTML file (default DIR/report.html; written atomically)", 0},
    {NULL, NULL, NULL, 0},
};
static const cli_group report_group = {"Output", report_opts};

static int run_report(const cli_args *a);

static const cli_cmd report_cmd = {
    .name = "report",
    .usage = "DIR [-o REPORT.html]",
    .summary = "write one self-contained HTML page about a sweep directory",
    .details =
        "The page holds the inputs (summary.json), the static tensor (static.json) "
        "with its principal values, the size expansion (expand.json, when present), "
        "the spectra plots and the voxel preview as inline SVG, the diagnostics in "
        "plain words and the cautions on the point-dipole reduction. It needs no "
        "network access and no JavaScript.",
    .example = "dipolize report run1 -o run1.html",
    .min_pos = 1,
    .max_pos = 1,
    .groups = {&report_group, NULL},
    .run = run_report,
};

static int run_report(const cli_args *a)
{
    const char *dir = a->pos[0];
    struct stat st;
    if (stat(dir, &st) != 0 || !S_ISDIR(st.st_mode))
        return cli_fail("report: %s is not a directory (give a sweep directory)", dir);
    char *out =
        cli_get(a, "-o") ? strdup(cli_get(a, "-o")) : dpz__pic_join(dir, "report.html");
    if (!out)
        return dpz__pic_fail(DPZ_ENOMEM, "report: out of memory");
    buf h;
    dpz_svg_init(&h, "r");
    dpz_err err;
    dpz_err_clear(&err);
    int rc = CLI_OK;
    dpz_status s = build_report(&h, dir, &err);
    if (s != DPZ_OK)
        rc = dpz__pic_fail(s, err.msg);
    else if (dpz_svg_write_file(out, h.buf, h.len) != 0)
        rc = cli_fail("report: cannot write %s: %s", out, strerror(errno));
    else
        printf("wrote %s\n", out);
    dpz_svg_free(&h);
    free(out);
    return rc;
}

int dpz_cli_report(int argc, char **argv)
{
    cli_args *a = calloc(1, sizeof *a);
    if (!a)
        return dpz__pic_fail(DPZ_ENOMEM, "out of memory");
    int help = 0;
    int rc = cli_parse(&report_cmd, argc, argv, 1, a, &help);
    if (rc == CLI_OK) {
        if (help)
            cli_print_help(&report_cmd, stdout);
        else
            rc = report_cmd.run(a);
    }
    free(a);
    return rc;
}
