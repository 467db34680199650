/* dpz_svg.h: a small SVG writer for the pictures of dipolize (spectra plots, voxel
 * previews, the inline figures of the HTML report). It has no dependency beyond libc.
 *
 * The writer appends text to a growable buffer in memory; the caller writes the buffer to
 * a file only when the whole picture is ready, so that a failure never leaves a partial
 * file behind. Every text that comes from outside (labels, file names) goes through
 * dpz_svg_escaped, which escapes the XML special characters and replaces bytes that are
 * not valid UTF-8 or not allowed in XML 1.0, so the output is always well-formed XML.
 * Coordinates that are not finite are never written: the element is skipped.
 *
 * Axis ticks follow Heckbert's "nice numbers" (P. S. Heckbert, "Nice numbers for graph
 * labels", Graphics Gems, 1990, pp. 61-63 and 657-659): the range is rounded to 1, 2 or 5
 * times a power of ten, the tick step likewise, and the axis is widened to whole steps
 * ("loose labels").
 *
 * Colours: the palette of M. Okabe and K. Ito, "Color Universal Design" (2008), which
 * stays distinguishable for the common forms of colour blindness. */
#ifndef DPZ_CLI_SVG_H
#define DPZ_CLI_SVG_H

#include <stddef.h>

#ifdef __cplusplus
extern "C" {
#endif

/* Okabe & Ito (2008) colours, in the order used for series. */
#define DPZ_SVG_BLACK "#000000"
#define DPZ_SVG_ORANGE "#E69F00"
#define DPZ_SVG_SKYBLUE "#56B4E9"
#define DPZ_SVG_GREEN "#009E73" /* bluish green */
#define DPZ_SVG_YELLOW "#F0E442"
#define DPZ_SVG_BLUE "#0072B2"
#define DPZ_SVG_VERMILLION "#D55E00"
#define DPZ_SVG_PURPLE "#CC79A7" /* reddish purple */

/* Series colour number i (i >= 0), cycling through the seven Okabe & Ito colours that
 * read well on white (blue, vermillion, bluish green, reddish purple, orange, sky blue,
 * black). */
const char *dpz_svg_colour(size_t i);

/* The buffer being written. All fields are owned by the writer. */
typedef struct dpz_svg {
    char *buf;          /* NUL-terminated text, or NULL before the first append */
    size_t len;         /* bytes used, without the NUL */
    size_t cap;         /* bytes allocated */
    int oom;            /* 1 once an allocation failed; later calls append nothing */
    unsigned next_id;   /* counter for unique element ids */
    char id_prefix[24]; /* prefix of every id, so that several pictures can share one
                           HTML page */
} dpz_svg;

/* Initializes an empty writer; `id_prefix` (may be NULL) is copied, truncated to 23 bytes
 * and should contain only letters, digits and '-'. */
void dpz_svg_init(dpz_svg *s, const char *id_prefix);
/* Frees the buffer; the writer may be initialized again. */
void dpz_svg_free(dpz_svg *s);
/* 0 if every append so far succeeded, -1 after an allocation failure. */
int dpz_svg_ok(const dpz_svg *s);

/* Appends formatted text verbatim. The caller guarantees it is well-formed markup. */
void dpz_svg_printf(dpz_svg *s, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 2, 3)))
#endif
    ;
/* Appends `text` as XML character data: & < > " ' become entity references; bytes that
 * do not form valid UTF-8, and control characters other than tab, newline and carriage
 * return (not allowed in XML 1.0, section 2.2), become U+FFFD. */
void dpz_svg_escaped(dpz_svg *s, const char *text);
/* Same for the first `n` bytes of `text`. */
void dpz_svg_escaped_n(dpz_svg *s, const char *text, size_t n);

/* Opens an <svg> element with viewBox "0 0 w h" (pixels). With `standalone` = 1 an XML
 * declaration comes first (for .svg files); 0 for SVG inlined in HTML. `title` (may be
 * NULL) becomes the <title> child, read by screen readers and shown as a tooltip. A white
 * background rectangle is drawn. */
void dpz_svg_begin(dpz_svg *s, double w, double h, int standalone, const char *title);
/* Closes the <svg> element. */
void dpz_svg_end(dpz_svg *s);

/* Drawing style. NULL strings mean "none" (fill, stroke) or "solid" (dash). */
typedef struct dpz_svg_style {
    const char *stroke;  /* stroke colour, e.g. "#0072B2" */
    double width;        /* stroke width, px */
    const char *dash;    /* stroke-dasharray, e.g. "6 3" */
    const char *fill;    /* fill colour */
    double fill_opacity; /* 0..1; values outside are written as 1 */
} dpz_svg_style;

void dpz_svg_line(dpz_svg *s, double x1, double y1, double x2, double y2,
                  const dpz_svg_style *st);
void dpz_svg_rect(dpz_svg *s, double x, double y, double w, double h,
                  const dpz_svg_style *st);
void dpz_svg_circle(dpz_svg *s, double cx, double cy, double r, const dpz_svg_style *st);
/* Polyline through the n points (x[i], y[i]), px. A point with a non-finite coordinate
 * breaks the line into separate pieces. `clip_id` (may be NULL) names a clipPath. */
void dpz_svg_polyline(dpz_svg *s, const double *x, const double *y, size_t n,
                      const dpz_svg_style *st, const char *clip_id);

/* Text anchors. */
typedef enum { DPZ_SVG_START = 0, DPZ_SVG_MIDDLE = 1, DPZ_SVG_END = 2 } dpz_svg_anchor;

/* Text at (x, y) (baseline), font size in px, escaped; `rotate` degrees about (x, y)
 * (0 for none); `bold` 0/1. The colour is dark grey. */
void dpz_svg_text(dpz_svg *s, double x, double y, double size, dpz_svg_anchor anchor,
                  double rotate, int bold, const char *text);

/* Heckbert (1990) nice number: a number of the form 1, 2, 5 or 10 times a power of ten
 * close to x > 0. With `round` = 1 it is the nearest such number (thresholds 1.5, 3, 7);
 * with `round` = 0 the smallest such number >= x. Returns 0 for x <= 0 or non-finite x.
 */
double dpz_svg_nicenum(double x, int round);

/* Heckbert (1990) loose labels for the data range [lo, hi] with about `nticks` (>= 2)
 * ticks: *tmin and *tmax (the axis ends, whole multiples of *step, tmin <= lo, tmax >=
 * hi), *step, and *nfrac (digits after the decimal point needed by the labels). A
 * degenerate range (lo == hi) is first widened to lo -/+ |lo| / 10 (-/+ 1 when lo is 0).
 * Returns 0, or -1 for non-finite input or lo > hi. */
int dpz_svg_ticks(double lo, double hi, int nticks, double *tmin, double *tmax,
                  double *step, int *nfrac);

/* A 2D plot frame: the plot area in pixels and the data range of each axis. */
typedef struct dpz_svg_axis {
    double lo, hi; /* axis ends, data units (log axis: log10 of the data) */
    double step;   /* tick step, data units (log axis: decades, >= 1) */
    int nfrac;     /* decimals of the tick labels (linear axis) */
    int log;       /* 1: logarithmic (base 10) axis */
} dpz_svg_axis;

typedef struct dpz_svg_frame {
    double px, py, pw, ph; /* plot area: left, top, width, height, px */
    dpz_svg_axis x, y;
    char clip_id[40]; /* id of the clipPath of the plot area ("" before axes) */
} dpz_svg_frame;

/* Largest number of ticks on a linear axis. */
#define DPZ_SVG_MAX_TICKS 11

/* Sets up a linear axis covering [lo, hi] (data units) with Heckbert (1990) loose labels
 * for about `nticks` ticks: tick counts nticks-1 .. nticks+3 are tried and the one whose
 * axis the data fill best is kept (at most DPZ_SVG_MAX_TICKS ticks). */
void dpz_svg_axis_linear(dpz_svg_axis *a, double lo, double hi, int nticks);
/* Sets up a log10 axis covering [lo, hi] (lo > 0): whole decades. */
void dpz_svg_axis_log(dpz_svg_axis *a, double lo, double hi);

/* Pixel position of data value v on the frame's x or y axis (NaN for v <= 0 on a log
 * axis, so that the point breaks a polyline). */
double dpz_svg_fx(const dpz_svg_frame *f, double v);
double dpz_svg_fy(const dpz_svg_frame *f, double v);

/* Draws the frame: light grid lines, the box, ticks with labels and the axis labels
 * (escaped; the y label is rotated); defines the clipPath of the plot area. */
void dpz_svg_axes(dpz_svg *s, dpz_svg_frame *f, const char *xlabel, const char *ylabel);

/* Data series: polyline through (x[i], y[i]) in data units, clipped to the plot area. */
void dpz_svg_series(dpz_svg *s, const dpz_svg_frame *f, const double *x, const double *y,
                    size_t n, const dpz_svg_style *st);

/* Legend entry at (x, y) (centre line of the entry): a 24 px line sample in style `st`
 * (when `line` is 1), a marker (0: none, 1: filled circle, 2: hollow circle, 3: filled
 * square for areas), then the escaped text. */
void dpz_svg_legend_entry(dpz_svg *s, double x, double y, const dpz_svg_style *st,
                          int line, int marker, const char *text);

/* Writes `len` bytes of `data` to `path` atomically: into a temporary file in the same
 * directory, then renamed over `path`, so that readers never see a partial file. Returns
 * 0, or -1 with errno set (the temporary file is removed). */
int dpz_svg_write_file(const char *path, const char *data, size_t len);

/* Formats a power of ten "10^e" with Unicode superscript digits into out (cap >= 16). */
void dpz_svg_pow10_label(int e, char *out, size_t cap);

#ifdef __cplusplus
}
#endif
#endif
