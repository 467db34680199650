/* units.c: the command-line value parsers of dpz_units.h (lengths with units, angles,
 * energies, complex numbers, lists, wavelength ranges, shards, material specifications).
 * Numbers are scanned by hand before strtod so that strtod's extras (hex floats, "nan",
 * "inf", locale forms) never reach the program. */
#include "dpz_units.h"

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "dpz_fileio.h"

/* Longest single value we accept; longer text is refused rather than truncated. */
#define UNITS_TOKEN_MAX 256

/* Relative tolerance (in units of STEP) within which HI counts as a point of LO:HI:STEP;
 * covers the rounding of decimal inputs such as 400nm:800nm:10nm. */
#define UNITS_RANGE_SLACK 1e-9

/* pi to double precision (M_PI is not part of strict C17). */
#define UNITS_PI 3.14159265358979323846

static const struct {
    const char *name;
    double metres;
    int pow10; /* metres = 10^pow10 */
} length_units[] = {
    {"m", 1.0, 0},    {"cm", 1e-2, -2},        {"mm", 1e-3, -3},
    {"um", 1e-6, -6}, {"\xc2\xb5m", 1e-6, -6}, /* micro sign, UTF-8 */
    {"nm", 1e-9, -9}, {"pm", 1e-12, -12},      {"A", 1e-10, -10},
};
#define N_LENGTH_UNITS (sizeof length_units / sizeof length_units[0])
#define LENGTH_UNIT_LIST "m, cm, mm, um, nm, pm or A"

static const char *nz(const char *opt)
{
    return opt ? opt : "value";
}

/* Copies text without surrounding blanks into buf; returns 0, or -1 if too long. */
static int trim_copy(const char *text, char *buf, size_t cap)
{
    while (*text && isspace((unsigned char)*text))
        text++;
    size_t n = strlen(text);
    while (n > 0 && isspace((unsigned char)text[n - 1]))
        n--;
    if (n + 1 > cap)
        return -1;
    memcpy(buf, text, n);
    buf[n] = '\0';
    return 0;
}

/* Scans a decimal number at s. On success stores it in *v, sets *end after it and returns
 * 0; returns -1 if no number starts at s and -2 if it overflows to infinity. `sign_ok`
 * allows a leading sign. */
static int scan_number(const char *s, int sign_ok, double *v, const char **end)
{
    const char *p = s;
    if (sign_ok && (*p == '+' || *p == '-'))
        p++;
    size_t digits = 0;
    while (isdigit((unsigned char)*p)) {
        p++;
        digits++;
    }
    if (*p == '.') {
        p++;
        while (isdigit((unsigned char)*p)) {
            p++;
            digits++;
        }
    }
    if (digits == 0)
        return -1;
    if (*p == 'e' || *p == 'E') {
        const char *q = p + 1;
        if (*q == '+' || *q == '-')
            q++;
        if (isdigit((unsigned char)*q)) {
            while (isdigit((unsigned char)*q))
                q++;
            p = q;
        }
    }
    char buf[UNITS_TOKEN_MAX];
    size_t n = (size_t)(p - s);
    if (n + 1 > sizeof buf)
        return -1;
    memcpy(buf, s, n);
    buf[n] = '\0';
    errno = 0;
    double x = strtod(buf, NULL);
    if (!isfinite(x))
        return -2;
    *v = x;
    *end = p;
    return 0;
}

dpz_status dpz_units_real(const char *opt, const char *text, double *out, dpz_err *err)
{
    char buf[UNITS_TOKEN_MAX];
    if (!text || trim_copy(text, buf, sizeof buf) != 0 || !buf[0])
        return dpz_err_set(err, DPZ_EINVAL, "%s: expected a number such as 2.385 or 1e-8",
                           nz(opt));
    double v;
    const char *end;
    int rc = scan_number(buf, 1, &v, &end);
    if (rc == -2)
        return dpz_err_set(err, DPZ_ERANGE, "%s: \"%s\" is too large", nz(opt), buf);
    if (rc != 0 || *end != '\0')
        return dpz_err_set(err, DPZ_EINVAL,
                           "%s: \"%s\" is not a number (expected e.g. 2.385 or 1e-8)",
                           nz(opt), buf);
    *out = v;
    return DPZ_OK;
}

dpz_status dpz_units_count(const char *opt, const char *text, size_t *out, dpz_err *err)
{
    char buf[UNITS_TOKEN_MAX];
    if (!text || trim_copy(text, buf, sizeof buf) != 0 || !buf[0])
        return dpz_err_set(err, DPZ_EINVAL, "%s: expected a whole number such as 12",
                           nz(opt));
    size_t v = 0;
    for (const char *p = buf; *p; p++) {
        if (!isdigit((unsigned char)*p))
            return dpz_err_set(err, DPZ_EINVAL,
                               "%s: \"%s\" is not a whole number (expected e.g. 12)",
                               nz(opt), buf);
        size_t d = (size_t)(*p - '0');
        if (v > (SIZE_MAX - d) / 10)
            return dpz_err_set(err, DPZ_ERANGE, "%s: \"%s\" is too large", nz(opt), buf);
        v = v * 10 + d;
    }
    *out = v;
    return DPZ_OK;
}

static int unit_lookup_pow(const char *u, double *metres, int *pow10)
{
    for (size_t i = 0; i < N_LENGTH_UNITS; i++)
        if (strcmp(u, length_units[i].name) == 0) {
            *metres = length_units[i].metres;
            if (pow10)
                *pow10 = length_units[i].pow10;
            return 0;
        }
    return -1;
}

static int unit_lookup(const char *u, double *metres)
{
    return unit_lookup_pow(u, metres, NULL);
}

/* The decimal number text[0..len) times 10^pow10, rounded once: the unit's power of ten
 * is added to the decimal exponent before conversion, so that "20nm" gives exactly the
 * double nearest to 2e-8 (a multiplication by 1e-9 would round twice). Returns -2 when
 * the result is not finite. */
static int scale_decimal(const char *text, size_t len, int pow10, double *out)
{
    size_t mlen = 0;
    while (mlen < len && text[mlen] != 'e' && text[mlen] != 'E')
        mlen++;
    long ex = 0;
    if (mlen < len) {
        size_t i = mlen + 1;
        int neg = 0;
        if (i < len && (text[i] == '+' || text[i] == '-'))
            neg = text[i++] == '-';
        for (; i < len; i++)
            if (ex < 100000) /* saturate: far beyond the range of double */
                ex = ex * 10 + (text[i] - '0');
        if (neg)
            ex = -ex;
    }
    char buf[UNITS_TOKEN_MAX + 32];
    snprintf(buf, sizeof buf, "%.*se%ld", (int)mlen, text, ex + pow10);
    double v = strtod(buf, NULL);
    if (!isfinite(v))
        return -2;
    *out = v;
    return 0;
}

dpz_status dpz_units_length_unit(const char *opt, const char *text, double *metres,
                                 dpz_err *err)
{
    char buf[UNITS_TOKEN_MAX];
    if (!text || trim_copy(text, buf, sizeof buf) != 0 || unit_lookup(buf, metres) != 0)
        return dpz_err_set(err, DPZ_EINVAL, "%s: \"%s\" is not a length unit (use %s)",
                           nz(opt), text ? text : "", LENGTH_UNIT_LIST);
    return DPZ_OK;
}

/* Number followed by a suffix from a caller's table; `what` names the quantity. */
static dpz_status number_with_unit(const char *opt, const char *text, const char *what,
                                   const char *example, int is_length, double *out,
                                   dpz_err *err)
{
    char buf[UNITS_TOKEN_MAX];
    if (!text || trim_copy(text, buf, sizeof buf) != 0 || !buf[0])
        return dpz_err_set(err, DPZ_EINVAL, "%s: expected %s with a unit, such as %s",
                           nz(opt), what, example);
    double v;
    const char *end;
    int rc = scan_number(buf, 1, &v, &end);
    if (rc == -2)
        return dpz_err_set(err, DPZ_ERANGE, "%s: \"%s\" is too large", nz(opt), buf);
    if (rc != 0)
        return dpz_err_set(
            err, DPZ_EINVAL,
            "%s: \"%s\" is not %s (expected a number and a unit, such as %s)", nz(opt),
            buf, what, example);
    if (*end == '\0')
        return dpz_err_set(err, DPZ_EINVAL,
                           "%s: \"%s\" has no unit; %s needs one, such as %s", nz(opt),
                           buf, what, example);
    double scale = 0.0;
    if (is_length == 1) {
        int p10;
        if (unit_lookup_pow(end, &scale, &p10) != 0)
            return dpz_err_set(err, DPZ_EINVAL,
                               "%s: \"%s\": unknown length unit \"%s\" (use %s, e.g. %s)",
                               nz(opt), buf, end, LENGTH_UNIT_LIST, example);
        if (scale_decimal(buf, (size_t)(end - buf), p10, &v) != 0)
            return dpz_err_set(err, DPZ_ERANGE, "%s: \"%s\" is too large", nz(opt), buf);
        scale = 1.0;
    } else if (is_length == 0) {
        if (strcmp(end, "deg") == 0)
            scale = UNITS_PI / 180.0;
        else if (strcmp(end, "rad") == 0)
            scale = 1.0;
        else
            return dpz_err_set(
                err, DPZ_EINVAL,
                "%s: \"%s\": unknown angle unit \"%s\" (use deg or rad, e.g. %s)",
                nz(opt), buf, end, example);
    } else {
        if (strcmp(end, "eV") != 0)
            return dpz_err_set(err, DPZ_EINVAL,
                               "%s: \"%s\": an energy must be given in eV (e.g. %s)",
                               nz(opt), buf, example);
        scale = 1.0;
    }
    double r = v * scale;
    if (!isfinite(r))
        return dpz_err_set(err, DPZ_ERANGE, "%s: \"%s\" is too large", nz(opt), buf);
    *out = r;
    return DPZ_OK;
}

dpz_status dpz_units_length(const char *opt, const char *text, double *out_m,
                            dpz_err *err)
{
    return number_with_unit(opt, text, "a length", "20nm, 0.5um or 1e-7m", 1, out_m, err);
}

dpz_status dpz_units_length_pos(const char *opt, const char *text, double *out_m,
                                dpz_err *err)
{
    double v;
    dpz_status s = dpz_units_length(opt, text, &v, err);
    if (s != DPZ_OK)
        return s;
    if (!(v > 0.0))
        return dpz_err_set(err, DPZ_ERANGE, "%s: the length must be positive, got \"%s\"",
                           nz(opt), text);
    *out_m = v;
    return DPZ_OK;
}

dpz_status dpz_units_angle(const char *opt, const char *text, double *out_rad,
                           dpz_err *err)
{
    return number_with_unit(opt, text, "an angle", "30deg or 0.5rad", 0, out_rad, err);
}

dpz_status dpz_units_energy_ev(const char *opt, const char *text, double *out_ev,
                               dpz_err *err)
{
    return number_with_unit(opt, text, "an energy", "8.9eV", 2, out_ev, err);
}

dpz_status dpz_units_complex(const char *opt, const char *text, double complex *out,
                             dpz_err *err)
{
    char buf[UNITS_TOKEN_MAX];
    const char *example = "2.25, -10+1i or 12.25-0.02i";
    if (!text || trim_copy(text, buf, sizeof buf) != 0 || !buf[0])
        return dpz_err_set(err, DPZ_EINVAL, "%s: expected a complex number such as %s",
                           nz(opt), example);
    const char *p = buf;
    double re = 0.0, im = 0.0;
    const char *end;
    /* "i", "+i", "-i": a unit imaginary part alone. */
    if (strcmp(p, "i") == 0 || strcmp(p, "+i") == 0 || strcmp(p, "-i") == 0) {
        *out = CMPLX(0.0, p[0] == '-' ? -1.0 : 1.0);
        return DPZ_OK;
    }
    int rc = scan_number(p, 1, &re, &end);
    if (rc == -2)
        return dpz_err_set(err, DPZ_ERANGE, "%s: \"%s\" is too large", nz(opt), buf);
    if (rc != 0)
        goto bad;
    p = end;
    if (*p == '\0') {
        *out = CMPLX(re, 0.0);
        return DPZ_OK;
    }
    if (*p == 'i' && p[1] == '\0') {
        *out = CMPLX(0.0, re);
        return DPZ_OK;
    }
    if (*p != '+' && *p != '-')
        goto bad;
    {
        double sign = (*p == '-') ? -1.0 : 1.0;
        p++;
        if (*p == 'i' && p[1] == '\0') {
            im = sign;
        } else {
            rc = scan_number(p, 0, &im, &end);
            if (rc == -2)
                return dpz_err_set(err, DPZ_ERANGE, "%s: \"%s\" is too large", nz(opt),
                                   buf);
            if (rc != 0 || end[0] != 'i' || end[1] != '\0')
                goto bad;
            im *= sign;
        }
    }
    *out = CMPLX(re, im);
    return DPZ_OK;
bad:
    return dpz_err_set(err, DPZ_EINVAL,
                       "%s: \"%s\" is not a complex number (write it like %s)", nz(opt),
                       buf, example);
}

/* Splits text at `sep` into at most `max` trimmed pieces written to `items` (each up to
 * UNITS_TOKEN_MAX). Returns the count, or -1 for too many / too long / empty pieces. */
typedef char token[UNITS_TOKEN_MAX];

static long split(const char *text, char sep, token *items, size_t max)
{
    size_t count = 0;
    const char *p = text;
    for (;;) {
        const char *q = strchr(p, sep);
        size_t n = q ? (size_t)(q - p) : strlen(p);
        if (count >= max || n + 1 > UNITS_TOKEN_MAX)
            return -1;
        char raw[UNITS_TOKEN_MAX];
        memcpy(raw, p, n);
        raw[n] = '\0';
        if (trim_copy(raw, items[count], UNITS_TOKEN_MAX) != 0 || !items[count][0])
            return -1;
        count++;
        if (!q)
            break;
        p = q + 1;
    }
    return (long)count;
}

static dpz_status vec_of(const char *opt, const char *text, double *out, size_t n,
                         int is_length, dpz_err *err)
{
    token items[8];
    if (!text || n > 8)
        return dpz_err_set(err, DPZ_EINVAL, "%s: missing value", nz(opt));
    long got = split(text, ',', items, 8);
    if (got != (long)n)
        return dpz_err_set(
            err, DPZ_EINVAL, "%s: \"%s\": expected %zu comma-separated %s such as %s",
            nz(opt), text, n, is_length ? "lengths" : "angles",
            is_length ? (n == 3 ? "10nm,20nm,30nm" : "10nm,20nm") : "30deg,45deg,0deg");
    for (size_t i = 0; i < n; i++) {
        dpz_status s = is_length ? dpz_units_length(opt, items[i], &out[i], err)
                                 : dpz_units_angle(opt, items[i], &out[i], err);
        if (s != DPZ_OK)
            return s;
    }
    return DPZ_OK;
}

dpz_status dpz_units_length_vec(const char *opt, const char *text, double *out_m,
                                size_t n, dpz_err *err)
{
    return vec_of(opt, text, out_m, n, 1, err);
}

dpz_status dpz_units_angle_vec(const char *opt, const char *text, double *out_rad,
                               size_t n, dpz_err *err)
{
    return vec_of(opt, text, out_rad, n, 0, err);
}

/* Walks a comma list without a fixed token array (lists may be long). */
typedef dpz_status (*item_fn)(const char *opt, const char *item, double *v, dpz_err *err);

static dpz_status list_of(const char *opt, const char *text, double *out, size_t max,
                          size_t *n, item_fn fn, const char *example, dpz_err *err)
{
    if (!text || !text[0])
        return dpz_err_set(err, DPZ_EINVAL,
                           "%s: expected a comma-separated list such as %s", nz(opt),
                           example);
    size_t count = 0;
    const char *p = text;
    for (;;) {
        const char *q = strchr(p, ',');
        size_t len = q ? (size_t)(q - p) : strlen(p);
        char item[UNITS_TOKEN_MAX];
        if (len + 1 > sizeof item)
            return dpz_err_set(err, DPZ_EINVAL, "%s: list item %zu is too long", nz(opt),
                               count + 1);
        memcpy(item, p, len);
        item[len] = '\0';
        char trimmed[UNITS_TOKEN_MAX];
        trim_copy(item, trimmed, sizeof trimmed);
        if (!trimmed[0])
            return dpz_err_set(err, DPZ_EINVAL,
                               "%s: list item %zu is empty (expected a list such as %s)",
                               nz(opt), count + 1, example);
        if (count >= max)
            return dpz_err_set(err, DPZ_ELIMIT, "%s: more than %zu values", nz(opt), max);
        dpz_status s = fn(opt, trimmed, &out[count], err);
        if (s != DPZ_OK)
            return s;
        if (!(out[count] > 0.0))
            return dpz_err_set(err, DPZ_ERANGE,
                               "%s: list item %zu (\"%s\") must be positive", nz(opt),
                               count + 1, trimmed);
        for (size_t j = 0; j < count; j++)
            if (out[j] == out[count])
                return dpz_err_set(err, DPZ_EINVAL,
                                   "%s: list item %zu (\"%s\") repeats item %zu", nz(opt),
                                   count + 1, trimmed, j + 1);
        count++;
        if (!q)
            break;
        p = q + 1;
    }
    *n = count;
    return DPZ_OK;
}

dpz_status dpz_units_length_list(const char *opt, const char *text, double *out_m,
                                 size_t max, size_t *n, dpz_err *err)
{
    return list_of(opt, text, out_m, max, n, dpz_units_length, "10nm,20nm,30nm", err);
}

dpz_status dpz_units_size_params(const char *opt, const char *text, double *out,
                                 size_t max, size_t *n, dpz_err *err)
{
    return list_of(opt, text, out, max, n, dpz_units_real, "0.05,0.1,0.2", err);
}

/* LO + i STEP carries a few ulps of rounding (0.1 + 2 * 0.1 != 0.3); the points a user
 * means are short decimals, so round to 15 significant digits (beyond the rounding, far
 * within any typed precision) and read back the double nearest that decimal. */
static double snap_decimal(double x)
{
    char buf[64];
    snprintf(buf, sizeof buf, "%.15g", x);
    return strtod(buf, NULL);
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Refuses repeated values (sweeps key their rows by wavelength). */
static dpz_status check_unique(const char *opt, const double *v, size_t n, dpz_err *err)
{
    if (n < 2)
        return DPZ_OK;
    double *s = dpz__malloc(n * sizeof *s);
    if (!s)
        return dpz_err_set(err, DPZ_ENOMEM, "%s: out of memory", nz(opt));
    memcpy(s, v, n * sizeof *s);
    qsort(s, n, sizeof *s, cmp_double);
    for (size_t i = 1; i < n; i++)
        if (s[i] == s[i - 1]) {
            double dup = s[i];
            free(s);
            return dpz_err_set(err, DPZ_EINVAL,
                               "%s: the wavelength %.17g m appears twice", nz(opt), dup);
        }
    free(s);
    return DPZ_OK;
}

dpz_status dpz_units_wavelength_text(const char *opt, const char *name, const char *buf,
                                     size_t len, size_t max_points, double **out,
                                     size_t *n, dpz_err *err)
{
    if (max_points == 0 || max_points > DPZ_UNITS_MAX_POINTS)
        max_points = DPZ_UNITS_MAX_POINTS;
    size_t cap = 16, count = 0, line = 0;
    double *v = dpz__malloc(cap * sizeof *v);
    if (!v)
        return dpz_err_set(err, DPZ_ENOMEM, "%s: out of memory", nz(opt));
    size_t pos = 0;
    while (pos < len) {
        size_t start = pos;
        while (pos < len && buf[pos] != '\n')
            pos++;
        size_t l = pos - start;
        pos++; /* past the newline */
        line++;
        char text[UNITS_TOKEN_MAX];
        if (l + 1 > sizeof text) {
            free(v);
            return dpz_err_set(err, DPZ_EINVAL, "%s: %s: line %zu is too long", nz(opt),
                               name, line);
        }
        memcpy(text, buf + start, l);
        text[l] = '\0';
        if (memchr(text, '\0', l)) {
            free(v);
            return dpz_err_set(err, DPZ_EINVAL, "%s: %s: line %zu contains a NUL byte",
                               nz(opt), name, line);
        }
        char *hash = strchr(text, '#');
        if (hash)
            *hash = '\0';
        char item[UNITS_TOKEN_MAX];
        trim_copy(text, item, sizeof item);
        if (!item[0])
            continue;
        double w = 0.0;
        dpz_err e1;
        if (dpz_units_length_pos(opt, item, &w, &e1) != DPZ_OK) {
            free(v);
            return dpz_err_set(err, e1.code, "%s: line %zu: %s", name, line, e1.msg);
        }
        if (count >= max_points) {
            free(v);
            return dpz_err_set(err, DPZ_ELIMIT, "%s: %s: more than %zu wavelengths",
                               nz(opt), name, max_points);
        }
        if (count == cap) {
            double *nv = dpz__realloc(v, 2 * cap * sizeof *v);
            if (!nv) {
                free(v);
                return dpz_err_set(err, DPZ_ENOMEM, "%s: out of memory", nz(opt));
            }
            v = nv;
            cap *= 2;
        }
        v[count++] = w;
    }
    if (count == 0) {
        free(v);
        return dpz_err_set(err, DPZ_EINVAL,
                           "%s: %s holds no wavelength (one per line, e.g. 550nm)",
                           nz(opt), name);
    }
    dpz_status s = check_unique(opt, v, count, err);
    if (s != DPZ_OK) {
        free(v);
        return s;
    }
    *out = v;
    *n = count;
    return DPZ_OK;
}

static dpz_status wavelength_file(const char *opt, const char *path, size_t max_points,
                                  double **out, size_t *n, dpz_err *err)
{
    char *buf = NULL;
    size_t len = 0;
    dpz_status s = dpz_file_read_all(path, nz(opt), (size_t)64 << 20, &buf, &len, err);
    if (s != DPZ_OK)
        return s;
    s = dpz_units_wavelength_text(opt, path, buf, len, max_points, out, n, err);
    dpz__free(buf);
    return s;
}

dpz_status dpz_units_wavelengths(const char *opt, const char *text, size_t max_points,
                                 double **out, size_t *n, dpz_err *err)
{
    if (max_points == 0 || max_points > DPZ_UNITS_MAX_POINTS)
        max_points = DPZ_UNITS_MAX_POINTS;
    if (!text || !text[0])
        return dpz_err_set(
            err, DPZ_EINVAL,
            "%s: expected LO:HI:STEP (e.g. 400nm:800nm:10nm), a list or @FILE", nz(opt));
    if (text[0] == '@') {
        if (!text[1])
            return dpz_err_set(err, DPZ_EINVAL, "%s: \"@\" needs a file name", nz(opt));
        return wavelength_file(opt, text + 1, max_points, out, n, err);
    }
    if (strchr(text, ':')) {
        token parts[3];
        if (split(text, ':', parts, 3) != 3)
            return dpz_err_set(err, DPZ_EINVAL,
                               "%s: \"%s\": expected LO:HI:STEP with units, e.g. "
                               "400nm:800nm:10nm",
                               nz(opt), text);
        double lo = 0.0, hi = 0.0, step = 0.0;
        dpz_status s;
        if ((s = dpz_units_length_pos(opt, parts[0], &lo, err)) != DPZ_OK ||
            (s = dpz_units_length_pos(opt, parts[1], &hi, err)) != DPZ_OK)
            return s;
        if ((s = dpz_units_length(opt, parts[2], &step, err)) != DPZ_OK)
            return s;
        if (hi < lo)
            return dpz_err_set(err, DPZ_EINVAL,
                               "%s: \"%s\": the range is inverted (LO %s is above HI %s)",
                               nz(opt), text, parts[0], parts[1]);
        if (!(step > 0.0))
            return dpz_err_set(err, DPZ_EINVAL, "%s: \"%s\": the step must be positive",
                               nz(opt), text);
        double span = (hi - lo) / step;
        if (!(span < (double)max_points))
            return dpz_err_set(err, DPZ_ELIMIT,
                               "%s: \"%s\" gives more than %zu wavelengths", nz(opt),
                               text, max_points);
        size_t count = (size_t)floor(span + UNITS_RANGE_SLACK) + 1;
        if (count > max_points)
            return dpz_err_set(err, DPZ_ELIMIT,
                               "%s: \"%s\" gives more than %zu wavelengths", nz(opt),
                               text, max_points);
        double *v = dpz__malloc(count * sizeof *v);
        if (!v)
            return dpz_err_set(err, DPZ_ENOMEM, "%s: out of memory", nz(opt));
        for (size_t i = 0; i < count; i++)
            v[i] = snap_decimal(lo + (double)i * step);
        /* HI on the grid within rounding: report it exactly as typed. */
        if (fabs(v[count - 1] - hi) <= UNITS_RANGE_SLACK * step)
            v[count - 1] = hi;
        if (count >= 2 && !(v[count - 1] > v[count - 2])) {
            free(v);
            return dpz_err_set(
                err, DPZ_EINVAL,
                "%s: \"%s\": the step is too small to separate wavelengths", nz(opt),
                text);
        }
        *out = v;
        *n = count;
        return DPZ_OK;
    }
    size_t cap = 1;
    for (const char *p = text; *p; p++)
        cap += (*p == ',');
    if (cap > max_points)
        return dpz_err_set(err, DPZ_ELIMIT, "%s: more than %zu wavelengths", nz(opt),
                           max_points);
    double *v = dpz__malloc(cap * sizeof *v);
    if (!v)
        return dpz_err_set(err, DPZ_ENOMEM, "%s: out of memory", nz(opt));
    size_t count = 0;
    dpz_status s = dpz_units_length_list(opt, text, v, cap, &count, err);
    if (s != DPZ_OK) {
        free(v);
        return s;
    }
    *out = v;
    *n = count;
    return DPZ_OK;
}

dpz_status dpz_units_shard(const char *opt, const char *text, size_t *index,
                           size_t *count, dpz_err *err)
{
    token parts[2];
    if (!text || split(text, '/', parts, 2) != 2)
        return dpz_err_set(
            err, DPZ_EINVAL,
            "%s: \"%s\": expected I/N, e.g. 0/4 (shard I of N, 0 <= I < N)", nz(opt),
            text ? text : "");
    size_t i, nn;
    dpz_err e1;
    if (dpz_units_count(opt, parts[0], &i, &e1) != DPZ_OK ||
        dpz_units_count(opt, parts[1], &nn, &e1) != DPZ_OK)
        return dpz_err_set(err, DPZ_EINVAL,
                           "%s: \"%s\": expected I/N with whole numbers, e.g. 0/4",
                           nz(opt), text);
    if (nn == 0)
        return dpz_err_set(err, DPZ_ERANGE, "%s: \"%s\": the shard count N must be >= 1",
                           nz(opt), text);
    if (i >= nn)
        return dpz_err_set(err, DPZ_ERANGE,
                           "%s: \"%s\": the shard index must be below N (0 <= I < %zu)",
                           nz(opt), text, nn);
    *index = i;
    *count = nn;
    return DPZ_OK;
}

dpz_status dpz_units_drude(const char *opt, const char *text, dpz_drude_params *out,
                           dpz_err *err)
{
    const char *example = "drude:eps_inf=9.5,wp=8.9eV,gamma=0.07eV";
    dpz_drude_params p;
    memset(&p, 0, sizeof p);
    p.eps_inf = 1.0;
    int have_wp = 0, have_einf = 0, have_gamma = 0;
    if (!text || !text[0])
        return dpz_err_set(err, DPZ_EINVAL, "%s: empty Drude model (write e.g. %s)",
                           nz(opt), example);
    token items[4 + DPZ_MAX_LORENTZ];
    long n = split(text, ',', items, 4 + DPZ_MAX_LORENTZ);
    if (n < 0)
        return dpz_err_set(
            err, DPZ_EINVAL,
            "%s: drude:%s: expected comma-separated key=value items "
            "(eps_inf, wp, gamma, lorentz; at most %d lorentz terms), e.g. %s",
            nz(opt), text, DPZ_MAX_LORENTZ, example);
    for (long t = 0; t < n; t++) {
        char *eq = strchr(items[t], '=');
        if (!eq)
            return dpz_err_set(err, DPZ_EINVAL,
                               "%s: drude item \"%s\" lacks '=' (e.g. %s)", nz(opt),
                               items[t], example);
        *eq = '\0';
        const char *key = items[t], *val = eq + 1;
        char what[2 * UNITS_TOKEN_MAX];
        snprintf(what, sizeof what, "%s drude %s", nz(opt), key);
        dpz_status s;
        if (strcmp(key, "eps_inf") == 0) {
            if (have_einf++)
                return dpz_err_set(err, DPZ_EINVAL, "%s: eps_inf given twice", what);
            if ((s = dpz_units_real(what, val, &p.eps_inf, err)) != DPZ_OK)
                return s;
        } else if (strcmp(key, "wp") == 0) {
            if (have_wp++)
                return dpz_err_set(err, DPZ_EINVAL, "%s: given twice", what);
            if ((s = dpz_units_energy_ev(what, val, &p.plasma_ev, err)) != DPZ_OK)
                return s;
            if (p.plasma_ev < 0)
                return dpz_err_set(err, DPZ_ERANGE, "%s: must not be negative", what);
        } else if (strcmp(key, "gamma") == 0) {
            if (have_gamma++)
                return dpz_err_set(err, DPZ_EINVAL, "%s: given twice", what);
            if ((s = dpz_units_energy_ev(what, val, &p.damping_ev, err)) != DPZ_OK)
                return s;
            if (p.damping_ev < 0)
                return dpz_err_set(err, DPZ_ERANGE, "%s: must not be negative", what);
        } else if (strcmp(key, "lorentz") == 0) {
            if (p.n_lorentz >= DPZ_MAX_LORENTZ)
                return dpz_err_set(err, DPZ_ELIMIT, "%s: more than %d Lorentz terms",
                                   what, DPZ_MAX_LORENTZ);
            token f[3];
            if (split(val, ':', f, 3) != 3)
                return dpz_err_set(err, DPZ_EINVAL,
                                   "%s: \"%s\": expected F:E0:G, e.g. 1.2:2.9eV:0.6eV",
                                   what, val);
            dpz_lorentz_term *L = &p.lorentz[p.n_lorentz];
            if ((s = dpz_units_real(what, f[0], &L->strength, err)) != DPZ_OK ||
                (s = dpz_units_energy_ev(what, f[1], &L->energy_ev, err)) != DPZ_OK ||
                (s = dpz_units_energy_ev(what, f[2], &L->damping_ev, err)) != DPZ_OK)
                return s;
            if (!(L->energy_ev > 0) || L->damping_ev < 0)
                return dpz_err_set(err, DPZ_ERANGE,
                                   "%s: \"%s\": E0 must be positive and G not negative",
                                   what, val);
            p.n_lorentz++;
        } else {
            return dpz_err_set(
                err, DPZ_EINVAL,
                "%s: unknown drude key \"%s\" (use eps_inf, wp, gamma, lorentz)", nz(opt),
                key);
        }
    }
    if (!have_wp)
        return dpz_err_set(err, DPZ_EINVAL,
                           "%s: the Drude model needs wp=ENERGY (e.g. %s)", nz(opt),
                           example);
    *out = p;
    return DPZ_OK;
}

dpz_status dpz_units_material(const char *opt, const char *text, int has_label,
                              dpz_matspec *out, dpz_err *err)
{
    dpz_matspec m;
    memset(&m, 0, sizeof m);
    if (!text)
        return dpz_err_set(err, DPZ_EINVAL, "%s: missing value", nz(opt));
    const char *spec = text;
    if (has_label) {
        const char *eq = strchr(text, '=');
        char lab[UNITS_TOKEN_MAX];
        size_t ll = eq ? (size_t)(eq - text) : 0;
        if (!eq || ll + 1 > sizeof lab)
            return dpz_err_set(err, DPZ_EINVAL,
                               "%s: \"%s\": expected LABEL=SPEC, e.g. 1=2.25, "
                               "2=nk:gold.csv or 1=drude:wp=8.9eV,gamma=0.07eV",
                               nz(opt), text);
        memcpy(lab, text, ll);
        lab[ll] = '\0';
        size_t label;
        dpz_err e1;
        if (dpz_units_count(opt, lab, &label, &e1) != DPZ_OK || label < 1 || label > 255)
            return dpz_err_set(
                err, DPZ_EINVAL,
                "%s: \"%s\": the label must be a whole number from 1 to 255", nz(opt),
                text);
        m.label = (unsigned)label;
        spec = eq + 1;
    }
    if (strncmp(spec, "nk:", 3) == 0) {
        const char *path = spec + 3;
        if (!path[0])
            return dpz_err_set(err, DPZ_EINVAL, "%s: \"nk:\" needs a CSV file name",
                               nz(opt));
        if (strlen(path) + 1 > sizeof m.path)
            return dpz_err_set(err, DPZ_EINVAL, "%s: the file name is too long", nz(opt));
        m.kind = DPZ_MATSPEC_TABLE;
        strcpy(m.path, path);
    } else if (strncmp(spec, "drude:", 6) == 0) {
        m.kind = DPZ_MATSPEC_DRUDE;
        dpz_status s = dpz_units_drude(opt, spec + 6, &m.drude, err);
        if (s != DPZ_OK)
            return s;
    } else {
        m.kind = DPZ_MATSPEC_CONST;
        dpz_err e1;
        if (dpz_units_complex(opt, spec, &m.eps, &e1) != DPZ_OK)
            return dpz_err_set(err, e1.code,
                               "%s: \"%s\" is not a permittivity (write a complex number "
                               "like 2.25 or -10+1i, nk:FILE.csv or drude:...)",
                               nz(opt), spec);
    }
    *out = m;
    return DPZ_OK;
}
