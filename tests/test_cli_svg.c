/* test_cli_svg.c: the SVG writer (escaping, nice-number ticks, well-formed output, atomic
 * files) and the picture helpers built on it (sweep-table reader, plots, voxel preview,
 * 3x3 symmetric eigen-decomposition). */
#include "dpz_test.h"

#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "dpz_svg.h"
#include "pictures.h"

#define SQRT1_2 0.70710678118654752440 /* 1/sqrt(2) */

/* ---- a small well-formedness checker -------------------------------------------------
 */

/* Checks the markup rules our writer must keep (W3C XML 1.0, 5th ed.): every start tag
 * is closed in order, attribute values are quoted and hold no '<', every '&' starts one
 * of the five predefined entity references or a numeric character reference, and no
 * text appears outside the root element. Returns NULL when well-formed, else a message
 * with the byte offset in `why`. */
static const char *xml_check(const char *x, char *why, size_t cap)
{
    char stack[64][48];
    int depth = 0, roots = 0;
    size_t i = 0, n = strlen(x);
#define FAIL(...)                                                                        \
    do {                                                                                 \
        snprintf(why, cap, __VA_ARGS__);                                                 \
        return why;                                                                      \
    } while (0)
    while (i < n) {
        if (x[i] == '&') {
            static const char *const ent[] = {"&amp;", "&lt;", "&gt;", "&quot;",
                                              "&apos;"};
            int ok = 0;
            for (int e = 0; e < 5; e++)
                ok |= strncmp(x + i, ent[e], strlen(ent[e])) == 0;
            if (!ok && x[i + 1] == '#') {
                size_t j = i + 2;
                while (x[j] >= '0' && x[j] <= '9')
                    j++;
                ok = j > i + 2 && x[j] == ';';
            }
            if (!ok)
                FAIL("byte %zu: bare '&'", i);
            i++;
            continue;
        }
        if (x[i] != '<') {
            if (depth == 0 && x[i] != '\n' && x[i] != ' ')
                FAIL("byte %zu: text outside the root element", i);
            i++;
            continue;
        }
        if (strncmp(x + i, "<?", 2) == 0) {
            const char *e = strstr(x + i, "?>");
            if (!e)
                FAIL("byte %zu: unterminated declaration", i);
            i = (size_t)(e - x) + 2;
            continue;
        }
        int closing = x[i + 1] == '/';
        size_t j = i + 1 + closing, k = 0;
        char name[48];
        while (j < n && (x[j] == '-' || x[j] == ':' || (x[j] >= 'a' && x[j] <= 'z') ||
                         (x[j] >= 'A' && x[j] <= 'Z') || (x[j] >= '0' && x[j] <= '9'))) {
            if (k + 1 < sizeof name)
                name[k++] = x[j];
            j++;
        }
        name[k] = '\0';
        if (k == 0)
            FAIL("byte %zu: '<' not starting a tag", i);
        /* Attributes: name="value" pairs. */
        for (;;) {
            while (x[j] == ' ' || x[j] == '\n')
                j++;
            if (x[j] == '>' || (x[j] == '/' && x[j + 1] == '>') || x[j] == '\0')
                break;
            if (closing)
                FAIL("byte %zu: attribute in an end tag", j);
            while (x[j] && x[j] != '=' && x[j] != '>' && x[j] != ' ')
                j++;
            if (x[j] != '=' || x[j + 1] != '"')
                FAIL("byte %zu: attribute without a quoted value", j);
            j += 2;
            while (x[j] && x[j] != '"') {
                if (x[j] == '<')
                    FAIL("byte %zu: '<' inside an attribute value", j);
                j++;
            }
            if (x[j] != '"')
                FAIL("byte %zu: unterminated attribute value", j);
            j++;
        }
        if (x[j] == '\0')
            FAIL("byte %zu: unterminated tag", i);
        int self = x[j] == '/';
        i = j + (self ? 2 : 1);
        if (closing) {
            if (depth == 0 || strcmp(stack[depth - 1], name) != 0)
                FAIL("end tag </%s> does not match <%s>", name,
                     depth ? stack[depth - 1] : "(none)");
            depth--;
        } else if (!self) {
            if (depth == 0)
                roots++;
            if (depth == 64)
                FAIL("nesting deeper than 64");
            strcpy(stack[depth++], name);
        } else if (depth == 0) {
            roots++;
        }
    }
    if (depth != 0)
        FAIL("%d element(s) left open, innermost <%s>", depth, stack[depth - 1]);
    if (roots != 1)
        FAIL("%d root elements", roots);
    return NULL;
#undef FAIL
}

static void assert_well_formed(const char *x)
{
    char why[160];
    const char *msg = xml_check(x, why, sizeof why);
    if (msg)
        fail_msg("not well-formed XML: %s", msg);
}

/* The checker itself must reject broken markup, or the checks below prove nothing. */
static void test_svg_checker_rejects_broken_markup(void **state)
{
    (void)state;
    char why[160];
    assert_null(xml_check("<svg><g></g></svg>", why, sizeof why));
    assert_non_null(xml_check("<svg><g></svg>", why, sizeof why));
    assert_non_null(xml_check("<svg>a & b</svg>", why, sizeof why));
    assert_non_null(xml_check("<svg x=\"<\"/>", why, sizeof why));
    assert_non_null(xml_check("<svg></svg><svg></svg>", why, sizeof why));
    assert_non_null(xml_check("<svg><text>1 < 2</text></svg>", why, sizeof why));
}

/* ---- escaping
 * --------------------------------------------------------------------------- */

static void test_svg_escapes_xml_specials(void **state)
{
    (void)state;
    dpz_svg s;
    dpz_svg_init(&s, NULL);
    dpz_svg_escaped(&s, "a<b & \"c\" 'd'>");
    assert_int_equal(dpz_svg_ok(&s), 0);
    /* XML 1.0 section 2.4: '<' and '&' must be escaped; '>', '"', '\'' are escaped too so
     * that the text is safe inside attribute values. */
    assert_string_equal(s.buf, "a&lt;b &amp; &quot;c&quot; &#39;d&#39;&gt;");
    dpz_svg_free(&s);
}

static void test_svg_escapes_invalid_bytes(void **state)
{
    (void)state;
    dpz_svg s;
    dpz_svg_init(&s, NULL);
    /* Valid UTF-8 passes unchanged: e acute (2 bytes), euro sign (3), an emoji (4). */
    dpz_svg_escaped(&s, "\xC3\xA9\xE2\x82\xAC\xF0\x9F\x98\x80");
    assert_string_equal(s.buf, "\xC3\xA9\xE2\x82\xAC\xF0\x9F\x98\x80");
    dpz_svg_free(&s);
    /* A control character (not allowed by XML 1.0 production [2]), a lone continuation
     * byte, a truncated sequence, a UTF-16 surrogate encoded in UTF-8 (RFC 3629 section
     * 3) and an overlong '/' each become U+FFFD (EF BF BD) per offending byte. */
    const char *bad[] = {"\x01", "\x80", "\xC3", "\xED\xA0\x80", "\xC0\xAF"};
    const size_t replaced[] = {1, 1, 1, 3, 2};
    for (size_t t = 0; t < sizeof bad / sizeof bad[0]; t++) {
        dpz_svg_init(&s, NULL);
        dpz_svg_escaped(&s, bad[t]);
        assert_int_equal(s.len, 3 * replaced[t]);
        for (size_t k = 0; k < replaced[t]; k++)
            assert_memory_equal(s.buf + 3 * k, "\xEF\xBF\xBD", 3);
        dpz_svg_free(&s);
    }
    /* Tab, newline and carriage return are allowed characters. */
    dpz_svg_init(&s, NULL);
    dpz_svg_escaped(&s, "a\tb\nc\r");
    assert_string_equal(s.buf, "a\tb\nc\r");
    dpz_svg_free(&s);
}

/* ---- nice numbers (Heckbert 1990)
 * --------------------------------------------------------- */

static void test_svg_nicenum_heckbert(void **state)
{
    (void)state;
    const double tol = 4 * DBL_EPSILON;
    /* Hand-computed from Heckbert's rules: x = f 10^e; rounded: f < 1.5 -> 1, < 3 -> 2,
     * < 7 -> 5, else 10; not rounded (ceiling): f <= 1 -> 1, <= 2 -> 2, <= 5 -> 5, else
     * 10. */
    assert_close(dpz_svg_nicenum(438.0, 0), 500.0, tol);   /* f = 4.38 -> 5 */
    assert_close(dpz_svg_nicenum(125.0, 1), 100.0, tol);   /* f = 1.25 -> 1 */
    assert_close(dpz_svg_nicenum(0.0173, 1), 0.02, tol);   /* f = 1.73 -> 2 */
    assert_close(dpz_svg_nicenum(6.99, 1), 5.0, tol);      /* f = 6.99 -> 5 */
    assert_close(dpz_svg_nicenum(7.0, 1), 10.0, tol);      /* f = 7 -> 10 */
    assert_close(dpz_svg_nicenum(2.0, 0), 2.0, tol);       /* f = 2 -> 2 */
    assert_close(dpz_svg_nicenum(2.385, 0), 5.0, tol);     /* f = 2.385 -> 5 */
    assert_close(dpz_svg_nicenum(5.5e-21, 0), 1e-20, tol); /* f = 5.5 -> 10 */
    assert_true(dpz_svg_nicenum(0.0, 1) == 0.0);
    assert_true(dpz_svg_nicenum(-3.0, 1) == 0.0);
    assert_true(dpz_svg_nicenum(NAN, 0) == 0.0);
}

static void test_svg_ticks_loose_labels(void **state)
{
    (void)state;
    const double tol = 1e-12;
    struct {
        double lo, hi;
        int n;
        double tmin, tmax, step;
        int nfrac;
    } cases[] = {
        /* range = nice(438, ceil) = 500; step = nice(500/4 = 125, round) = 100 */
        {105.0, 543.0, 5, 100.0, 600.0, 100.0, 0},
        /* range = nice(0.0658) = 0.1; step = nice(0.025) = 0.02; nfrac = -floor(log10
         * 0.02) = 2 */
        {0.0213, 0.0871, 5, 0.02, 0.1, 0.02, 2},
        /* range = nice(15.9) = 20; step = nice(4) = 5 */
        {-3.7, 12.2, 6, -5.0, 15.0, 5.0, 0},
        /* degenerate: widened to 2.7..3.3; range = nice(0.6) = 1; step = nice(0.25) =
         * 0.2 */
        {3.0, 3.0, 5, 2.6, 3.4, 0.2, 1},
        /* wavelength axis 600..1400 nm, 6 ticks: range = 1000, step = nice(200) = 200 */
        {600.0, 1400.0, 6, 600.0, 1400.0, 200.0, 0},
    };
    for (size_t c = 0; c < sizeof cases / sizeof cases[0]; c++) {
        double tmin, tmax, step;
        int nfrac;
        assert_int_equal(dpz_svg_ticks(cases[c].lo, cases[c].hi, cases[c].n, &tmin, &tmax,
                                       &step, &nfrac),
                         0);
        assert_close_abs(tmin, cases[c].tmin, tol, 1e-12);
        assert_close_abs(tmax, cases[c].tmax, tol, 1e-12);
        assert_close(step, cases[c].step, tol);
        assert_int_equal(nfrac, cases[c].nfrac);
    }
    double a, b, st;
    int nf;
    assert_int_equal(dpz_svg_ticks(2.0, 1.0, 5, &a, &b, &st, &nf), -1);
    assert_int_equal(dpz_svg_ticks(NAN, 1.0, 5, &a, &b, &st, &nf), -1);
    assert_int_equal(dpz_svg_ticks(0.0, INFINITY, 5, &a, &b, &st, &nf), -1);
}

/* Properties over random ranges: the axis covers the data, ends on whole steps, the step
 * is 1, 2 or 5 times a power of ten, and the tick count stays near the request. */
static void test_svg_ticks_properties(void **state)
{
    (void)state;
    uint64_t seed = 0x5eed2385u;
    for (int t = 0; t < 2000; t++) {
        double e = 12.0 * dpz_test_rand(&seed);
        double lo = dpz_test_rand(&seed) * pow(10.0, e);
        double hi =
            lo + fabs(dpz_test_rand(&seed)) * pow(10.0, e + 2 * dpz_test_rand(&seed));
        double tmin, tmax, step;
        int nf;
        assert_int_equal(dpz_svg_ticks(lo, hi, 6, &tmin, &tmax, &step, &nf), 0);
        /* Heckbert's floor/ceil, with the 1e-9 step slack of the implementation. */
        assert_true(tmin <= lo + 1e-8 * step);
        assert_true(tmax >= hi - 1e-8 * step);
        double k = (tmax - tmin) / step;
        assert_true(fabs(k - round(k)) < 1e-6);
        assert_true(k >= 1.0 && k <= 12.0);
        double f = step / pow(10.0, floor(log10(step) + 1e-12));
        assert_true(fabs(f - 1) < 1e-9 || fabs(f - 2) < 1e-9 || fabs(f - 5) < 1e-9);
    }
}

/* The axis helper tries a few tick counts and keeps the best-filled axis. 800..2000 with
 * 6 ticks: Heckbert gives step nice(400) = 500 and 500..2000 (filled 80 %) for 6 and 7
 * ticks (range nice(1200) = 2000), step nice(2000/7 = 285.7) = 200 and 800..2000
 * (filled 100 %) for 8 (by hand). */
static void test_svg_axis_best_filled(void **state)
{
    (void)state;
    dpz_svg_axis a;
    dpz_svg_axis_linear(&a, 800.0, 2000.0, 6);
    assert_close(a.lo, 800.0, 1e-12);
    assert_close(a.hi, 2000.0, 1e-12);
    assert_close(a.step, 200.0, 1e-12);
    /* 600..1400 is already filled by the requested count: step 200. */
    dpz_svg_axis_linear(&a, 600.0, 1400.0, 6);
    assert_close(a.lo, 600.0, 1e-12);
    assert_close(a.step, 200.0, 1e-12);
    /* Never more than DPZ_SVG_MAX_TICKS ticks; bad input falls back to 0..1. */
    uint64_t seed = 0x2385u;
    for (int t = 0; t < 500; t++) {
        double lo = 100 * dpz_test_rand(&seed), hi = lo + 50 * fabs(dpz_test_rand(&seed));
        dpz_svg_axis_linear(&a, lo, hi, 6);
        assert_true((a.hi - a.lo) / a.step <= DPZ_SVG_MAX_TICKS - 1 + 1e-9);
        assert_true(a.lo <= lo + 1e-8 * a.step && a.hi >= hi - 1e-8 * a.step);
    }
    dpz_svg_axis_linear(&a, NAN, 1.0, 6);
    assert_true(a.lo == 0.0 && a.hi == 1.0);
}

static void test_svg_pow10_label(void **state)
{
    (void)state;
    char b[32];
    dpz_svg_pow10_label(-21, b, sizeof b);
    /* "10" + superscript minus U+207B + superscript two U+00B2 + superscript one U+00B9
     */
    assert_string_equal(b, "10\u207B\u00B2\u00B9");
    dpz_svg_pow10_label(3, b, sizeof b);
    assert_string_equal(b, "10\u00B3");
}

/* ---- well-formed output
 * ------------------------------------------------------------------ */

static void test_svg_output_well_formed(void **state)
{
    (void)state;
    dpz_svg s;
    dpz_svg_init(&s, "t-");
    dpz_svg_begin(&s, 640, 400, 1, "title with <markup> & \"quotes\"");
    dpz_svg_frame f;
    memset(&f, 0, sizeof f);
    f.px = 80;
    f.py = 40;
    f.pw = 400;
    f.ph = 300;
    dpz_svg_axis_linear(&f.x, 600.0, 1400.0, 6);
    dpz_svg_axis_log(&f.y, 2.385e-4, 0.7);
    dpz_svg_axes(&s, &f, "x <label>", "y & label");
    double x[5] = {600, 800, NAN, 1200, 1400}, y[5] = {1e-3, 0.01, 0.1, -1.0, 0.5};
    dpz_svg_style st = {DPZ_SVG_BLUE, 2.0, "6 4", NULL, 1.0};
    dpz_svg_series(&s, &f, x, y, 5, &st);
    dpz_svg_style fill = {NULL, 0, NULL, DPZ_SVG_VERMILLION, 0.2};
    dpz_svg_rect(&s, 10, 10, 20, 20, &fill);
    dpz_svg_rect(&s, NAN, 10, 20, 20, &fill); /* skipped, not written as "nan" */
    dpz_svg_circle(&s, 5, 5, 2, &st);
    dpz_svg_legend_entry(&s, 500, 60, &st, 1, 2, "hollow & <marker>");
    dpz_svg_text(&s, 10, 390, 12, DPZ_SVG_END, -90, 1, "\x01 bad \xFF bytes");
    dpz_svg_end(&s);
    assert_int_equal(dpz_svg_ok(&s), 0);
    assert_well_formed(s.buf);
    assert_null(strstr(s.buf, "nan"));
    assert_null(strstr(s.buf, "inf"));
    /* The clipPath id carries the prefix and is referenced by the series. */
    assert_non_null(strstr(s.buf, "id=\"t-clip0\""));
    assert_non_null(strstr(s.buf, "url(#t-clip0)"));
    dpz_svg_free(&s);
}

static void test_svg_allocation_failure(void **state)
{
    (void)state;
    for (long k = 0; k < 3; k++) {
        dpz_svg s;
        dpz_svg_init(&s, NULL);
        dpz_alloc_fail_after(k);
        for (int i = 0; i < 2000; i++)
            dpz_svg_printf(&s, "<g id=\"%d\"></g>\n", i);
        dpz_alloc_fail_after(-1);
        assert_int_equal(dpz_svg_ok(&s), -1);
        /* Appends after the failure are ignored, the buffer stays consistent. */
        dpz_svg_printf(&s, "more");
        assert_int_equal(dpz_svg_ok(&s), -1);
        assert_true(s.buf == NULL || strlen(s.buf) == s.len);
        dpz_svg_free(&s);
    }
}

static void test_svg_write_file_atomic(void **state)
{
    (void)state;
    char dir[] = "/tmp/dpz-svg-XXXXXX";
    assert_non_null(mkdtemp(dir));
    char path[128];
    snprintf(path, sizeof path, "%s/a.svg", dir);
    const char data[] = "<svg/>\n";
    assert_int_equal(dpz_svg_write_file(path, data, sizeof data - 1), 0);
    FILE *fp = fopen(path, "rb");
    assert_non_null(fp);
    char back[32] = {0};
    size_t got = fread(back, 1, sizeof back, fp);
    fclose(fp);
    assert_int_equal(got, sizeof data - 1);
    assert_string_equal(back, data);
    /* A missing directory fails and leaves nothing behind. */
    char bad[160];
    snprintf(bad, sizeof bad, "%s/missing/b.svg", dir);
    assert_int_equal(dpz_svg_write_file(bad, data, sizeof data - 1), -1);
    unlink(path);
    assert_int_equal(rmdir(dir), 0); /* empty: no temporary file was left */
}

/* ---- eigen-decomposition
 * ------------------------------------------------------------------ */

static void test_svg_eigsym3_known_matrix(void **state)
{
    (void)state;
    /* [[2.385, 1, 0], [1, 2.385, 0], [0, 0, 5]]: eigenvalues 5, 3.385, 1.385 with vectors
     * e_z, (1, 1, 0)/sqrt 2, (1, -1, 0)/sqrt 2 (by hand). */
    const double a[3][3] = {{2.385, 1.0, 0.0}, {1.0, 2.385, 0.0}, {0.0, 0.0, 5.0}};
    double w[3], v[3][3];
    dpz__pic_eigsym3(a, w, v);
    const double tol = 1e-13;
    assert_close(w[0], 5.0, tol);
    assert_close(w[1], 3.385, tol);
    assert_close(w[2], 1.385, tol);
    assert_close(fabs(v[2][0]), 1.0, tol);
    assert_close(fabs(v[0][1]), SQRT1_2, tol);
    assert_close(v[0][1] * v[1][1], 0.5, tol);
    assert_close(v[0][2] * v[1][2], -0.5, tol);
    /* A V = V diag(w) for a full random symmetric matrix (fixed seed). */
    uint64_t seed = 42;
    double b[3][3];
    for (int i = 0; i < 3; i++)
        for (int j = 0; j <= i; j++)
            b[i][j] = b[j][i] = dpz_test_rand(&seed);
    dpz__pic_eigsym3((const double(*)[3])b, w, v);
    for (int c = 0; c < 3; c++)
        for (int r = 0; r < 3; r++) {
            double av = 0;
            for (int k = 0; k < 3; k++)
                av += b[r][k] * v[k][c];
            assert_close_abs(av, w[c] * v[r][c], 1e-12, 1e-12);
        }
    assert_true(w[0] >= w[1] && w[1] >= w[2]);
}

/* ---- sweep tables
 * ------------------------------------------------------------------------- */

static char sweep_dir[64];

static void remove_file(const char *name)
{
    char path[160];
    snprintf(path, sizeof path, "%s/%s", sweep_dir, name);
    unlink(path);
}

static void write_text(const char *name, const char *text)
{
    char path[160];
    snprintf(path, sizeof path, "%s/%s", sweep_dir, name);
    FILE *fp = fopen(path, "w");
    assert_non_null(fp);
    fputs(text, fp);
    fclose(fp);
}

/* Synthetic test input (invented values, not a computation): two wavelengths, the ee
 * block diagonal, a small em element. */
static void write_alpha(double em)
{
    char buf[8192];
    size_t pos = 0;
    pos += (size_t)snprintf(buf + pos, sizeof buf - pos,
                            "# synthetic test input\n# units: m, m^3\n"
                            "wavelength_m,block,row,col,re,im,converged\n");
    const char *blocks[4] = {"ee", "em", "me", "mm"};
    for (int l = 0; l < 2; l++)
        for (int b = 0; b < 4; b++)
            for (int r = 0; r < 3; r++)
                for (int c = 0; c < 3; c++) {
                    double re = 0, im = 0;
                    if ((b == 0 || b == 3) && r == c) {
                        re = (2.385 + r + l) * 1e-21;
                        im = 0.5e-21;
                    }
                    if (b == 1 && r == 0 && c == 1)
                        im = em;
                    pos += (size_t)snprintf(
                        buf + pos, sizeof buf - pos, "%.17g,%s,%d,%d,%.17g,%.17g,%d\n",
                        l ? 8.5e-7 : 6.25e-7, blocks[b], r, c, re, im, l ? 0 : 1);
                }
    write_text("alpha.csv", buf);
}

static int sweep_setup(void **state)
{
    (void)state;
    snprintf(sweep_dir, sizeof sweep_dir, "/tmp/dpz-sweep-XXXXXX");
    if (!mkdtemp(sweep_dir))
        return -1;
    return 0;
}

static int sweep_teardown(void **state)
{
    (void)state;
    const char *files[] = {"alpha.csv", "cross_sections.csv", "diagnostics.csv"};
    char path[160];
    for (size_t i = 0; i < 3; i++) {
        snprintf(path, sizeof path, "%s/%s", sweep_dir, files[i]);
        unlink(path);
    }
    rmdir(sweep_dir);
    return 0;
}

static void test_svg_sweep_tables_read(void **state)
{
    (void)state;
    write_alpha(3e-24);
    write_text("diagnostics.csv",
               "# synthetic\nwavelength_m,iterations,residual,converged,reciprocity,"
               "energy_balance,min_absorption_eig,dipole_validity,min_fluct_eig_m3\n"
               "8.5e-7,40,3e-3,0,1e-9,0.01,1e-25,0.25,1e-26\n"
               "6.25e-7,31,1e-9,1,1e-9,0.01,1e-25,nan,1e-26\n");
    remove_file("cross_sections.csv");
    dpz_pic_sweep sw;
    dpz_err err;
    assert_int_equal(dpz__pic_sweep_load(sweep_dir, &sw, &err), DPZ_OK);
    assert_int_equal(sw.n, 2);
    assert_close(sw.lambda_m[0], 6.25e-7, DBL_EPSILON); /* sorted ascending */
    assert_close(creal(sw.A[1][1][1]), 4.385e-21, 4 * DBL_EPSILON);
    assert_close(cimag(sw.A[0][0][4]), 3e-24, 4 * DBL_EPSILON); /* em x,y -> A[0][4] */
    assert_int_equal(sw.conv[0], 1);
    assert_int_equal(sw.conv[1], 0);
    assert_int_equal(sw.has_cs, 0);
    assert_int_equal(sw.nd, 2);
    assert_true(isnan(sw.d_validity[0])); /* "nan" is a gap, not an error */
    assert_close(sw.d_validity[1], 0.25, DBL_EPSILON);
    /* em is 3e-24 / 4.385e-21 = 6.8e-4 of max|A|: below 1e-3, no alpha_em plot. */
    assert_int_equal(dpz__pic_plot_wanted(&sw, DPZ_PIC_ALPHA_EM), 0);
    assert_int_equal(dpz__pic_plot_wanted(&sw, DPZ_PIC_CROSS), 0);
    assert_int_equal(dpz__pic_plot_wanted(&sw, DPZ_PIC_VALIDITY), 1);
    for (int k = 0; k < DPZ_PIC_COUNT; k++) {
        if (!dpz__pic_plot_wanted(&sw, (dpz_pic_kind)k))
            continue;
        dpz_svg s;
        dpz_svg_init(&s, NULL);
        dpz__pic_plot_render(&s, &sw, (dpz_pic_kind)k, 1);
        assert_int_equal(dpz_svg_ok(&s), 0);
        assert_well_formed(s.buf);
        /* The non-converged wavelength is noted in the legend. */
        assert_non_null(strstr(s.buf, "not converged"));
        dpz_svg_free(&s);
    }
    dpz__pic_sweep_free(&sw);
    write_alpha(1e-23); /* 2.3e-3 of max|A|: plotted */
    assert_int_equal(dpz__pic_sweep_load(sweep_dir, &sw, &err), DPZ_OK);
    assert_int_equal(dpz__pic_plot_wanted(&sw, DPZ_PIC_ALPHA_EM), 1);
    dpz__pic_sweep_free(&sw);
}

static void expect_damage(const char *alpha, const char *where)
{
    write_text("alpha.csv", alpha);
    dpz_pic_sweep sw;
    dpz_err err;
    dpz_err_clear(&err);
    assert_int_equal(dpz__pic_sweep_load(sweep_dir, &sw, &err), DPZ_EFORMAT);
    if (!strstr(err.msg, where))
        fail_msg("message '%s' lacks '%s'", err.msg, where);
}

static void test_svg_sweep_tables_damaged(void **state)
{
    (void)state;
    remove_file("diagnostics.csv");
    const char *h = "# c\nwavelength_m,block,row,col,re,im,converged\n";
    char t[512];
    snprintf(t, sizeof t, "%s6e-7,ee,0,0,1e-21,0,1\n6e-7,ee,0,1,abc,0,1\n", h);
    expect_damage(t, "alpha.csv:4: column 're': 'abc' is not a number");
    snprintf(t, sizeof t, "%s6e-7,ee,0,0,1e-21,0\n", h);
    expect_damage(t, "alpha.csv:3: 6 fields, the header has 7");
    snprintf(t, sizeof t, "%s6e-7,xy,0,0,1e-21,0,1\n", h);
    expect_damage(t, "alpha.csv:3: block 'xy'");
    snprintf(t, sizeof t, "%s6e-7,ee,3,0,1e-21,0,1\n", h);
    expect_damage(t, "alpha.csv:3: row '3'");
    snprintf(t, sizeof t, "%s-6e-7,ee,0,0,1e-21,0,1\n", h);
    expect_damage(t, "alpha.csv:3: wavelength_m");
    snprintf(t, sizeof t, "%s6e-7,ee,0,0,1e-21,0,2\n", h);
    expect_damage(t, "alpha.csv:3: column 'converged'");
    snprintf(t, sizeof t, "%s6e-7,ee,0,0,1e-21,0,1\n\n6e-7,ee,0,0,2e-21,0,1\n", h);
    expect_damage(t, "alpha.csv:5: element repeats the one of line 3");
    expect_damage("# only a comment\nwavelength_m,block,row,col,re,converged\n",
                  "no column 'im'");
    expect_damage(h, "no data rows");
    expect_damage("", "no header line");
    /* A damaged optional table is an error too, with its own name and line. */
    write_alpha(0.0);
    write_text("cross_sections.csv", "wavelength_m,ext,abs,sca\n6.25e-7,1e-15,2e-16\n");
    dpz_pic_sweep sw;
    dpz_err err;
    assert_int_equal(dpz__pic_sweep_load(sweep_dir, &sw, &err), DPZ_EFORMAT);
    assert_non_null(strstr(err.msg, "cross_sections.csv:2:"));
    remove_file("cross_sections.csv");
}

static void test_svg_sweep_tables_allocation_failure(void **state)
{
    (void)state;
    write_alpha(1e-23);
    char path[160];
    snprintf(path, sizeof path, "%s/cross_sections.csv", sweep_dir);
    unlink(path);
    int saw_oom = 0, saw_ok = 0;
    for (long k = 0; k < 40 && !saw_ok; k++) {
        dpz_pic_sweep sw;
        dpz_err err;
        dpz_alloc_fail_after(k);
        dpz_status st = dpz__pic_sweep_load(sweep_dir, &sw, &err);
        dpz_alloc_fail_after(-1);
        if (st == DPZ_OK) {
            saw_ok = 1;
            dpz__pic_sweep_free(&sw);
        } else {
            assert_int_equal(st, DPZ_ENOMEM);
            saw_oom = 1;
        }
    }
    assert_true(saw_oom && saw_ok);
}

/* An ee block rotated by 45 degrees about z: [[p, q, 0], [q, p, 0], [0, 0, c]] has the
 * principal axes (1, 1, 0)/sqrt 2 (value p + q), (1, -1, 0)/sqrt 2 (p - q) and z (by
 * hand); with off-diagonal elements this large the plot shows principal-axis components
 * and names the axes. */
static void test_svg_plot_principal_axes(void **state)
{
    (void)state;
    char buf[8192];
    size_t pos = (size_t)snprintf(buf, sizeof buf,
                                  "# synthetic test input\n"
                                  "wavelength_m,block,row,col,re,im,converged\n");
    const double p = 2.385e-21, q = 1e-21, c = 0.5e-21;
    for (int l = 0; l < 3; l++)
        for (int r = 0; r < 3; r++)
            for (int k = 0; k < 3; k++) {
                double re = r == 2 || k == 2 ? (r == k ? c : 0.0) : (r == k ? p : q);
                re *= 1.0 + 0.1 * l;
                pos += (size_t)snprintf(buf + pos, sizeof buf - pos,
                                        "%.17g,ee,%d,%d,%.17g,%.17g,1\n", 7e-7 + 1e-7 * l,
                                        r, k, re, r == k ? 1e-22 : 0.0);
            }
    write_text("alpha.csv", buf);
    dpz_pic_sweep sw;
    dpz_err err;
    assert_int_equal(dpz__pic_sweep_load(sweep_dir, &sw, &err), DPZ_OK);
    dpz_svg s;
    dpz_svg_init(&s, NULL);
    dpz__pic_plot_render(&s, &sw, DPZ_PIC_ALPHA_EE, 1);
    assert_well_formed(s.buf);
    assert_non_null(strstr(s.buf, "principal axes"));
    assert_non_null(strstr(s.buf, "u1 (0.71, 0.71, 0.00)"));
    assert_non_null(strstr(s.buf, "u3 (0.00, 0.00, 1.00)"));
    dpz_svg_free(&s);
    dpz__pic_sweep_free(&sw);
}

/* ---- voxel preview
 * ------------------------------------------------------------------------ */

static void test_svg_preview_well_formed(void **state)
{
    (void)state;
    dpz_grid *g = NULL;
    dpz_err err;
    /* An L of label 1 with one voxel of label 2, in a 7 x 5 x 3 grid of 2.5 nm. */
    assert_int_equal(dpz_grid_create(&g, 7, 5, 3, 2.5e-9, 0, &err), DPZ_OK);
    for (size_t i = 1; i < 6; i++)
        g->label[dpz_grid_index(g, i, 1, 1)] = 1;
    for (size_t j = 1; j < 4; j++)
        g->label[dpz_grid_index(g, 1, j, 1)] = 1;
    g->label[dpz_grid_index(g, 5, 3, 1)] = 2;
    assert_int_equal(dpz_grid_update(g, &err), DPZ_OK);
    dpz_svg s;
    dpz_svg_init(&s, NULL);
    assert_int_equal(dpz__pic_preview_render(&s, g, "L & dot <test>", 1, &err), DPZ_OK);
    assert_well_formed(s.buf);
    assert_non_null(strstr(s.buf, "label 1: 7 voxels")); /* 5 + 3 - 1 shared corner */
    assert_non_null(strstr(s.buf, "label 2: 1 voxels"));
    assert_non_null(strstr(s.buf, " nm</text>")); /* the scale bar */
    dpz_svg_free(&s);
    /* An empty grid is refused. */
    for (size_t i = 0; i < 7 * 5 * 3; i++)
        g->label[i] = 0;
    assert_int_equal(dpz_grid_update(g, &err), DPZ_OK);
    dpz_svg_init(&s, NULL);
    assert_int_equal(dpz__pic_preview_render(&s, g, NULL, 1, &err), DPZ_EINVAL);
    dpz_svg_free(&s);
    dpz_grid_destroy(g);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_svg_checker_rejects_broken_markup),
        cmocka_unit_test(test_svg_escapes_xml_specials),
        cmocka_unit_test(test_svg_escapes_invalid_bytes),
        cmocka_unit_test(test_svg_nicenum_heckbert),
        cmocka_unit_test(test_svg_ticks_loose_labels),
        cmocka_unit_test(test_svg_ticks_properties),
        cmocka_unit_test(test_svg_axis_best_filled),
        cmocka_unit_test(test_svg_pow10_label),
        cmocka_unit_test(test_svg_output_well_formed),
        cmocka_unit_test(test_svg_allocation_failure),
        cmocka_unit_test(test_svg_write_file_atomic),
        cmocka_unit_test(test_svg_eigsym3_known_matrix),
        cmocka_unit_test_setup_teardown(test_svg_sweep_tables_read, sweep_setup,
                                        sweep_teardown),
        cmocka_unit_test_setup_teardown(test_svg_sweep_tables_damaged, sweep_setup,
                                        sweep_teardown),
        cmocka_unit_test_setup_teardown(test_svg_sweep_tables_allocation_failure,
                                        sweep_setup, sweep_teardown),
        cmocka_unit_test_setup_teardown(test_svg_plot_principal_axes, sweep_setup,
                                        sweep_teardown),
        cmocka_unit_test(test_svg_preview_well_formed),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
