/* svg.c: the small SVG writer of dpz_svg.h (buffer, escaping, shapes, nice-number axes,
 * legends, atomic file output). */
#include "dpz_svg.h"

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "dpz_common.h"

/* Series colours: Okabe & Ito (2008), yellow left out (too pale on white). */
static const char *const series_colours[] = {
    DPZ_SVG_BLUE,   DPZ_SVG_VERMILLION, DPZ_SVG_GREEN, DPZ_SVG_PURPLE,
    DPZ_SVG_ORANGE, DPZ_SVG_SKYBLUE,    DPZ_SVG_BLACK};

const char *dpz_svg_colour(size_t i)
{
    return series_colours[i % (sizeof series_colours / sizeof series_colours[0])];
}

void dpz_svg_init(dpz_svg *s, const char *id_prefix)
{
    memset(s, 0, sizeof *s);
    if (id_prefix) {
        size_t n = strlen(id_prefix);
        if (n >= sizeof s->id_prefix)
            n = sizeof s->id_prefix - 1;
        memcpy(s->id_prefix, id_prefix, n);
        s->id_prefix[n] = '\0';
    }
}

void dpz_svg_free(dpz_svg *s)
{
    free(s->buf);
    s->buf = NULL;
    s->len = s->cap = 0;
}

int dpz_svg_ok(const dpz_svg *s)
{
    return s->oom ? -1 : 0;
}

/* Makes room for `extra` more bytes plus the NUL; returns 0 or -1 (and sets oom). */
static int reserve(dpz_svg *s, size_t extra)
{
    if (s->oom)
        return -1;
    if (extra > SIZE_MAX / 2 - s->len - 1) {
        s->oom = 1;
        return -1;
    }
    size_t need = s->len + extra + 1;
    if (need <= s->cap)
        return 0;
    size_t cap = s->cap ? s->cap : 4096;
    while (cap < need)
        cap *= 2;
    char *nb = dpz__realloc(s->buf, cap);
    if (!nb) {
        s->oom = 1;
        return -1;
    }
    s->buf = nb;
    s->cap = cap;
    return 0;
}

static void append(dpz_svg *s, const char *p, size_t n)
{
    if (reserve(s, n))
        return;
    memcpy(s->buf + s->len, p, n);
    s->len += n;
    s->buf[s->len] = '\0';
}

void dpz_svg_printf(dpz_svg *s, const char *fmt, ...)
{
    if (s->oom)
        return;
    va_list ap;
    va_start(ap, fmt);
    char small[256];
    int n = vsnprintf(small, sizeof small, fmt, ap);
    va_end(ap);
    if (n < 0) {
        s->oom = 1;
        return;
    }
    if ((size_t)n < sizeof small) {
        append(s, small, (size_t)n);
        return;
    }
    if (reserve(s, (size_t)n))
        return;
    va_start(ap, fmt);
    vsnprintf(s->buf + s->len, (size_t)n + 1, fmt, ap);
    va_end(ap);
    s->len += (size_t)n;
}

/* Length of the valid UTF-8 sequence starting at p (at most `avail` bytes) whose code
 * point is allowed in XML 1.0 (W3C XML 1.0, 5th ed., section 2.2, production [2]), or 0.
 * UTF-8 well-formedness after RFC 3629, section 4 (no overlongs, no surrogates). */
static size_t utf8_xml_len(const unsigned char *p, size_t avail)
{
    unsigned c = p[0];
    if (c < 0x80)
        return (c >= 0x20 || c == 0x09 || c == 0x0A || c == 0x0D) ? 1 : 0;
    size_t n;
    unsigned lo = 0x80, hi = 0xBF, cp;
    if (c >= 0xC2 && c <= 0xDF) {
        n = 2;
        cp = c & 0x1F;
    } else if (c >= 0xE0 && c <= 0xEF) {
        n = 3;
        cp = c & 0x0F;
        if (c == 0xE0)
            lo = 0xA0;
        if (c == 0xED)
            hi = 0x9F;
    } else if (c >= 0xF0 && c <= 0xF4) {
        n = 4;
        cp = c & 0x07;
        if (c == 0xF0)
            lo = 0x90;
        if (c == 0xF4)
            hi = 0x8F;
    } else {
        return 0;
    }
    if (avail < n)
        return 0;
    if (p[1] < lo || p[1] > hi)
        return 0;
    cp = (cp << 6) | (p[1] & 0x3F);
    for (size_t i = 2; i < n; i++) {
        if (p[i] < 0x80 || p[i] > 0xBF)
            return 0;
        cp = (cp << 6) | (p[i] & 0x3F);
    }
    if (cp == 0xFFFE || cp == 0xFFFF)
        return 0;
    return n;
}

void dpz_svg_escaped_n(dpz_svg *s, const char *text, size_t n)
{
    const unsigned char *p = (const unsigned char *)text;
    size_t i = 0;
    while (i < n && !s->oom) {
        switch (p[i]) {
        case '&':
            append(s, "&amp;", 5);
            i++;
            continue;
        case '<':
            append(s, "&lt;", 4);
            i++;
            continue;
        case '>':
            append(s, "&gt;", 4);
            i++;
            continue;
        case '"':
            append(s, "&quot;", 6);
            i++;
            continue;
        case '\'':
            append(s, "&#39;", 5);
            i++;
            continue;
        default:
            break;
        }
        size_t k = utf8_xml_len(p + i, n - i);
        if (k == 0) {
            append(s, "\xEF\xBF\xBD", 3); /* U+FFFD replacement character */
            i++;
        } else {
            append(s, text + i, k);
            i += k;
        }
    }
}

void dpz_svg_escaped(dpz_svg *s, const char *text)
{
    if (text)
        dpz_svg_escaped_n(s, text, strlen(text));
}

void dpz_svg_begin(dpz_svg *s, double w, double h, int standalone, const char *title)
{
    /* Inline SVG in HTML gets its namespace from the HTML parser: no xmlns there, so
     * that the page holds no URL at all. */
    if (standalone)
        dpz_svg_printf(s, "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n"
                          "<svg xmlns=\"http://www.w3.org/2000/svg\"");
    else
        dpz_svg_printf(s, "<svg");
    dpz_svg_printf(s,
                   " viewBox=\"0 0 %.0f %.0f\" "
                   "width=\"%.0f\" height=\"%.0f\" font-family=\"DejaVu Sans, Helvetica, "
                   "Arial, sans-serif\" role=\"img\">\n",
                   w, h, w, h);
    if (title) {
        dpz_svg_printf(s, "<title>");
        dpz_svg_escaped(s, title);
        dpz_svg_printf(s, "</title>\n");
    }
    dpz_svg_printf(
        s, "<rect x=\"0\" y=\"0\" width=\"%.0f\" height=\"%.0f\" fill=\"#ffffff\"/>\n", w,
        h);
}

void dpz_svg_end(dpz_svg *s)
{
    dpz_svg_printf(s, "</svg>\n");
}

static int finite2(double a, double b)
{
    return isfinite(a) && isfinite(b);
}

/* Writes the presentation attributes of a style (leading space included). */
static void style_attrs(dpz_svg *s, const dpz_svg_style *st)
{
    if (!st) {
        dpz_svg_printf(s, " fill=\"none\" stroke=\"#000000\"");
        return;
    }
    if (st->fill) {
        dpz_svg_printf(s, " fill=\"%s\"", st->fill);
        if (st->fill_opacity >= 0.0 && st->fill_opacity < 1.0)
            dpz_svg_printf(s, " fill-opacity=\"%.3g\"", st->fill_opacity);
    } else {
        dpz_svg_printf(s, " fill=\"none\"");
    }
    if (st->stroke) {
        dpz_svg_printf(s, " stroke=\"%s\" stroke-width=\"%.3g\"", st->stroke,
                       st->width > 0 ? st->width : 1.0);
        if (st->dash)
            dpz_svg_printf(s, " stroke-dasharray=\"%s\"", st->dash);
    }
}

void dpz_svg_line(dpz_svg *s, double x1, double y1, double x2, double y2,
                  const dpz_svg_style *st)
{
    if (!finite2(x1, y1) || !finite2(x2, y2))
        return;
    dpz_svg_printf(s, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\"", x1, y1, x2,
                   y2);
    style_attrs(s, st);
    dpz_svg_printf(s, "/>\n");
}

void dpz_svg_rect(dpz_svg *s, double x, double y, double w, double h,
                  const dpz_svg_style *st)
{
    if (!finite2(x, y) || !finite2(w, h) || w < 0 || h < 0)
        return;
    dpz_svg_printf(s, "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\"", x, y,
                   w, h);
    style_attrs(s, st);
    dpz_svg_printf(s, "/>\n");
}

void dpz_svg_circle(dpz_svg *s, double cx, double cy, double r, const dpz_svg_style *st)
{
    if (!finite2(cx, cy) || !isfinite(r) || r < 0)
        return;
    dpz_svg_printf(s, "<circle cx=\"%.2f\" cy=\"%.2f\" r=\"%.2f\"", cx, cy, r);
    style_attrs(s, st);
    dpz_svg_printf(s, "/>\n");
}

void dpz_svg_polyline(dpz_svg *s, const double *x, const double *y, size_t n,
                      const dpz_svg_style *st, const char *clip_id)
{
    size_t i = 0;
    while (i < n) {
        while (i < n && !finite2(x[i], y[i]))
            i++;
        size_t j = i;
        while (j < n && finite2(x[j], y[j]))
            j++;
        if (j - i >= 2) {
            dpz_svg_printf(
                s, "<polyline stroke-linejoin=\"round\" stroke-linecap=\"round\"");
            style_attrs(s, st);
            if (clip_id && clip_id[0])
                dpz_svg_printf(s, " clip-path=\"url(#%s)\"", clip_id);
            dpz_svg_printf(s, " points=\"");
            for (size_t k = i; k < j; k++)
                dpz_svg_printf(s, "%s%.2f,%.2f", k > i ? " " : "", x[k], y[k]);
            dpz_svg_printf(s, "\"/>\n");
        }
        i = j;
    }
}

void dpz_svg_text(dpz_svg *s, double x, double y, double size, dpz_svg_anchor anchor,
                  double rotate, int bold, const char *text)
{
    static const char *const anchors[] = {"start", "middle", "end"};
    if (!finite2(x, y) || !text)
        return;
    dpz_svg_printf(s, "<text x=\"%.2f\" y=\"%.2f\" font-size=\"%.3g\" fill=\"#222222\"",
                   x, y, size);
    if (anchor != DPZ_SVG_START)
        dpz_svg_printf(s, " text-anchor=\"%s\"", anchors[anchor]);
    if (bold)
        dpz_svg_printf(s, " font-weight=\"bold\"");
    if (rotate != 0.0 && isfinite(rotate))
        dpz_svg_printf(s, " transform=\"rotate(%.3g %.2f %.2f)\"", rotate, x, y);
    dpz_svg_printf(s, ">");
    dpz_svg_escaped(s, text);
    dpz_svg_printf(s, "</text>\n");
}

/* Heckbert (1990), "Nice numbers for graph labels", function nicenum. */
double dpz_svg_nicenum(double x, int round)
{
    if (!(x > 0.0) || !isfinite(x))
        return 0.0;
    double expv = floor(log10(x));
    double p10 = pow(10.0, expv);
    double f = x / p10; /* fraction in [1, 10) up to rounding */
    double nf;
    if (round) {
        if (f < 1.5)
            nf = 1.0;
        else if (f < 3.0)
            nf = 2.0;
        else if (f < 7.0)
            nf = 5.0;
        else
            nf = 10.0;
    } else {
        if (f <= 1.0)
            nf = 1.0;
        else if (f <= 2.0)
            nf = 2.0;
        else if (f <= 5.0)
            nf = 5.0;
        else
            nf = 10.0;
    }
    return nf * p10;
}

/* Heckbert (1990), "Nice numbers for graph labels", function loose_label. */
int dpz_svg_ticks(double lo, double hi, int nticks, double *tmin, double *tmax,
                  double *step, int *nfrac)
{
    if (!isfinite(lo) || !isfinite(hi) || lo > hi)
        return -1;
    if (nticks < 2)
        nticks = 2;
    if (lo == hi) {
        double w = lo != 0.0 ? fabs(lo) / 10.0 : 1.0;
        lo -= w;
        hi += w;
    }
    double range = dpz_svg_nicenum(hi - lo, 0);
    double d = dpz_svg_nicenum(range / (nticks - 1), 1);
    if (!(d > 0.0))
        return -1;
    /* A small relative slack keeps a value that is a whole step up to rounding (e.g.
     * 0.3 / 0.1 = 2.9999999999999996) from adding a tick. */
    const double slack = 1e-9;
    *tmin = floor(lo / d + slack) * d;
    *tmax = ceil(hi / d - slack) * d;
    *step = d;
    int nf = (int)-floor(log10(d) + slack);
    *nfrac = nf > 0 ? nf : 0;
    return 0;
}

void dpz_svg_axis_linear(dpz_svg_axis *a, double lo, double hi, int nticks)
{
    memset(a, 0, sizeof *a);
    /* Heckbert's loose labels for a few tick counts around the request; keep the one
     * whose axis is filled best by the data (ties: the count closest to the request), so
     * that e.g. 800..2000 gets 800, 1000, ..., 2000 rather than 500..2000. */
    double best_cov = -1.0, best_miss = 0.0;
    for (int k = 0; k < 5; k++) {
        static const int order[5] = {0, 1, 2, -1, 3};
        int n = nticks + order[k];
        double t0, t1, st;
        int nf;
        if (n < 2 || dpz_svg_ticks(lo, hi, n, &t0, &t1, &st, &nf) != 0)
            continue;
        double count = (t1 - t0) / st;
        if (count > DPZ_SVG_MAX_TICKS - 1 + 1e-9)
            continue;
        double cov = t1 > t0 ? (hi - lo) / (t1 - t0) : 0.0;
        double miss = fabs(count + 1.0 - nticks);
        if (cov > best_cov + 1e-9 || (cov > best_cov - 1e-9 && miss < best_miss)) {
            best_cov = cov;
            best_miss = miss;
            a->lo = t0;
            a->hi = t1;
            a->step = st;
            a->nfrac = nf;
        }
    }
    if (best_cov < 0.0) {
        a->lo = 0.0;
        a->hi = 1.0;
        a->step = 0.2;
        a->nfrac = 1;
    }
}

void dpz_svg_axis_log(dpz_svg_axis *a, double lo, double hi)
{
    memset(a, 0, sizeof *a);
    a->log = 1;
    if (!(lo > 0.0) || !isfinite(lo) || !isfinite(hi) || hi < lo) {
        lo = 1e-3;
        hi = 1.0;
    }
    a->lo = floor(log10(lo) + 1e-9);
    a->hi = ceil(log10(hi) - 1e-9);
    if (a->hi <= a->lo)
        a->hi = a->lo + 1.0;
    double decades = a->hi - a->lo;
    a->step = decades > 8 ? ceil(decades / 8.0) : 1.0;
}

static double axis_frac(const dpz_svg_axis *a, double v)
{
    if (a->log) {
        if (!(v > 0.0))
            return NAN;
        v = log10(v);
    }
    if (!(a->hi > a->lo))
        return NAN;
    return (v - a->lo) / (a->hi - a->lo);
}

double dpz_svg_fx(const dpz_svg_frame *f, double v)
{
    return f->px + f->pw * axis_frac(&f->x, v);
}

double dpz_svg_fy(const dpz_svg_frame *f, double v)
{
    return f->py + f->ph * (1.0 - axis_frac(&f->y, v));
}

void dpz_svg_pow10_label(int e, char *out, size_t cap)
{
    static const char *const sup[10] = {"\u2070", "\u00B9", "\u00B2", "\u00B3", "\u2074",
                                        "\u2075", "\u2076", "\u2077", "\u2078", "\u2079"};
    char digits[16];
    snprintf(digits, sizeof digits, "%d", e < 0 ? -e : e);
    size_t pos = (size_t)snprintf(out, cap, "10");
    if (e < 0 && pos < cap)
        pos += (size_t)snprintf(out + pos, cap - pos, "\u207B"); /* superscript minus */
    for (const char *d = digits; *d && pos < cap; d++)
        pos += (size_t)snprintf(out + pos, cap - pos, "%s", sup[*d - '0']);
}

/* Tick values of an axis: returns the count (<= max) and fills v[] (data units; for a
 * log axis the exponents). */
static size_t axis_ticks(const dpz_svg_axis *a, double *v, size_t max)
{
    size_t n = 0;
    if (!(a->step > 0.0) || !(a->hi >= a->lo))
        return 0;
    double count = floor((a->hi - a->lo) / a->step + 1e-9);
    for (double i = 0; i <= count && n < max; i += 1.0) {
        double t = a->lo + i * a->step;
        if (fabs(t) < 1e-9 * a->step)
            t = 0.0; /* no "-0.0" labels */
        v[n++] = t;
    }
    return n;
}

static void tick_label(const dpz_svg_axis *a, double t, char *out, size_t cap)
{
    if (a->log)
        dpz_svg_pow10_label((int)lround(t), out, cap);
    else
        snprintf(out, cap, "%.*f", a->nfrac, t);
}

/* Rough width of a label in px at font size `size` (DejaVu Sans digits are ~0.64 em). */
static double text_width(const char *t, double size)
{
    size_t chars = 0;
    for (const unsigned char *p = (const unsigned char *)t; *p; p++)
        if ((*p & 0xC0) != 0x80)
            chars++;
    return (double)chars * 0.62 * size;
}

void dpz_svg_axes(dpz_svg *s, dpz_svg_frame *f, const char *xlabel, const char *ylabel)
{
    const dpz_svg_style grid = {"#dddddd", 1.0, NULL, NULL, 1.0};
    const dpz_svg_style ink = {"#333333", 1.0, NULL, NULL, 1.0};
    const dpz_svg_style box = {"#333333", 1.2, NULL, NULL, 1.0};
    const double fs = 12.0;
    double tv[64];
    char lab[64];

    snprintf(f->clip_id, sizeof f->clip_id, "%sclip%u", s->id_prefix, s->next_id++);
    dpz_svg_printf(s,
                   "<defs><clipPath id=\"%s\"><rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" "
                   "height=\"%.2f\"/></clipPath></defs>\n",
                   f->clip_id, f->px, f->py, f->pw, f->ph);

    size_t nx = axis_ticks(&f->x, tv, 64);
    for (size_t i = 0; i < nx; i++) {
        double x = f->px + f->pw * (tv[i] - f->x.lo) / (f->x.hi - f->x.lo);
        dpz_svg_line(s, x, f->py, x, f->py + f->ph, &grid);
        dpz_svg_line(s, x, f->py + f->ph, x, f->py + f->ph + 5, &ink);
        tick_label(&f->x, tv[i], lab, sizeof lab);
        dpz_svg_text(s, x, f->py + f->ph + 19, fs, DPZ_SVG_MIDDLE, 0, 0, lab);
    }
    size_t ny = axis_ticks(&f->y, tv, 64);
    double widest = 0.0;
    for (size_t i = 0; i < ny; i++) {
        double y = f->py + f->ph * (1.0 - (tv[i] - f->y.lo) / (f->y.hi - f->y.lo));
        dpz_svg_line(s, f->px, y, f->px + f->pw, y, &grid);
        dpz_svg_line(s, f->px - 5, y, f->px, y, &ink);
        tick_label(&f->y, tv[i], lab, sizeof lab);
        double w = text_width(lab, fs);
        if (w > widest)
            widest = w;
        dpz_svg_text(s, f->px - 8, y + 4, fs, DPZ_SVG_END, 0, 0, lab);
    }
    dpz_svg_rect(s, f->px, f->py, f->pw, f->ph, &box);
    if (xlabel)
        dpz_svg_text(s, f->px + f->pw / 2, f->py + f->ph + 40, 13, DPZ_SVG_MIDDLE, 0, 0,
                     xlabel);
    if (ylabel) {
        double x = f->px - 14 - widest;
        if (x < 14)
            x = 14;
        dpz_svg_text(s, x, f->py + f->ph / 2, 13, DPZ_SVG_MIDDLE, -90, 0, ylabel);
    }
}

void dpz_svg_series(dpz_svg *s, const dpz_svg_frame *f, const double *x, const double *y,
                    size_t n, const dpz_svg_style *st)
{
    /* Map in chunks so that no allocation is needed. */
    enum { CHUNK = 256 };
    double px[CHUNK], py[CHUNK];
    size_t i = 0;
    while (i < n) {
        size_t m = n - i < CHUNK ? n - i : CHUNK;
        for (size_t k = 0; k < m; k++) {
            px[k] = dpz_svg_fx(f, x[i + k]);
            py[k] = dpz_svg_fy(f, y[i + k]);
        }
        dpz_svg_polyline(s, px, py, m, st, f->clip_id);
        /* Overlap one point between chunks so that the line has no gap. */
        i += m;
        if (i < n)
            i--;
        if (m == 1)
            break;
    }
}

void dpz_svg_legend_entry(dpz_svg *s, double x, double y, const dpz_svg_style *st,
                          int line, int marker, const char *text)
{
    if (line)
        dpz_svg_line(s, x, y, x + 24, y, st);
    const char *colour = st && st->stroke ? st->stroke : "#333333";
    if (marker == 1) {
        dpz_svg_style m = {colour, 1.2, NULL, colour, 1.0};
        dpz_svg_circle(s, x + 12, y, 3.2, &m);
    } else if (marker == 2) {
        dpz_svg_style m = {colour, 1.4, NULL, "#ffffff", 1.0};
        dpz_svg_circle(s, x + 12, y, 3.6, &m);
    } else if (marker == 3) {
        dpz_svg_style m = {st && st->stroke ? st->stroke : NULL, 1.0, NULL,
                           st && st->fill ? st->fill : colour,
                           st ? st->fill_opacity : 1.0};
        dpz_svg_rect(s, x, y - 6, 24, 12, &m);
    }
    dpz_svg_text(s, x + 30, y + 4, 12, DPZ_SVG_START, 0, 0, text);
}

int dpz_svg_write_file(const char *path, const char *data, size_t len)
{
    size_t n = strlen(path);
    char *tmp = dpz__malloc(n + 16);
    if (!tmp) {
        errno = ENOMEM;
        return -1;
    }
    memcpy(tmp, path, n);
    memcpy(tmp + n, ".tmpXXXXXX", 11);
    int fd = mkstemp(tmp);
    if (fd < 0) {
        int e = errno;
        free(tmp);
        errno = e;
        return -1;
    }
    /* mkstemp creates the file 0600; pictures are for sharing: use the umask default. */
    mode_t um = umask(0);
    umask(um);
    (void)fchmod(fd, 0666 & ~um);
    size_t off = 0;
    int e = 0;
    while (off < len) {
        ssize_t w = write(fd, data + off, len - off);
        if (w < 0) {
            if (errno == EINTR)
                continue;
            e = errno;
            break;
        }
        off += (size_t)w;
    }
    if (!e && fsync(fd) != 0)
        e = errno;
    if (close(fd) != 0 && !e)
        e = errno;
    if (!e && rename(tmp, path) != 0)
        e = errno;
    if (e) {
        unlink(tmp);
        free(tmp);
        errno = e;
        return -1;
    }
    free(tmp);
    return 0;
}
