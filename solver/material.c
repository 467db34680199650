/* material.c: permittivities of materials as functions of the vacuum wavelength:
 * constant, Drude-Lorentz model and tabulated n,k or eps data read from CSV. */
#include "dpz_material.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "dpz_fileio.h"

/* h c in eV nm (CODATA 2018, exact since the 2019 SI redefinition): E[eV] = HC_EV_NM /
 * lambda[nm]. */
#define HC_EV_NM 1239.8419843320026

typedef enum { MAT_CONST, MAT_DRUDE, MAT_TABLE } mat_kind;

struct dpz_material {
    mat_kind kind;
    double complex eps; /* MAT_CONST */
    dpz_drude_params drude;
    /* MAT_TABLE: rows ascending in wavelength (m); v1, v2 are n, k or eps_re, eps_im */
    size_t rows;
    double *wl, *v1, *v2;
    int is_nk;
    char name[256];
};

static dpz_material *mat_new(mat_kind kind)
{
    dpz_material *m = dpz__calloc(1, sizeof *m);
    if (m)
        m->kind = kind;
    return m;
}

void dpz_material_destroy(dpz_material *mat)
{
    if (!mat)
        return;
    dpz__free(mat->wl);
    dpz__free(mat->v1);
    dpz__free(mat->v2);
    dpz__free(mat);
}

dpz_status dpz_material_create_const(dpz_material **out, double complex eps, dpz_err *err)
{
    if (!out)
        return dpz_err_set(err, DPZ_EINVAL, "material: NULL output");
    *out = NULL;
    if (!isfinite(creal(eps)) || !isfinite(cimag(eps)))
        return dpz_err_set(err, DPZ_EINVAL, "material: permittivity %g%+gi is not finite",
                           creal(eps), cimag(eps));
    dpz_material *m = mat_new(MAT_CONST);
    if (!m)
        return dpz_err_set(err, DPZ_ENOMEM, "material: out of memory");
    m->eps = eps;
    *out = m;
    return DPZ_OK;
}

dpz_status dpz_material_create_drude(dpz_material **out, const dpz_drude_params *p,
                                     dpz_err *err)
{
    if (!out)
        return dpz_err_set(err, DPZ_EINVAL, "material: NULL output");
    *out = NULL;
    if (!p)
        return dpz_err_set(err, DPZ_EINVAL, "drude model: NULL parameters");
    if (!isfinite(p->eps_inf))
        return dpz_err_set(err, DPZ_EINVAL, "drude model: eps_inf is not finite");
    if (!isfinite(p->plasma_ev) || p->plasma_ev < 0)
        return dpz_err_set(err, DPZ_EINVAL,
                           "drude model: plasma energy %g eV must be finite and >= 0",
                           p->plasma_ev);
    if (!isfinite(p->damping_ev) || p->damping_ev < 0)
        return dpz_err_set(
            err, DPZ_EINVAL,
            "drude model: damping %g eV must be finite and >= 0 (a negative "
            "damping would make the material amplify light)",
            p->damping_ev);
    if (p->n_lorentz > DPZ_MAX_LORENTZ)
        return dpz_err_set(err, DPZ_EINVAL, "drude model: %zu Lorentz terms (at most %d)",
                           p->n_lorentz, DPZ_MAX_LORENTZ);
    for (size_t j = 0; j < p->n_lorentz; j++) {
        const dpz_lorentz_term *t = &p->lorentz[j];
        if (!isfinite(t->strength) || !isfinite(t->energy_ev) || !isfinite(t->damping_ev))
            return dpz_err_set(err, DPZ_EINVAL,
                               "drude model: Lorentz term %zu is not finite", j + 1);
        if (t->energy_ev < 0 || t->damping_ev < 0)
            return dpz_err_set(
                err, DPZ_EINVAL,
                "drude model: Lorentz term %zu has a negative energy (%g eV) or "
                "damping (%g eV)",
                j + 1, t->energy_ev, t->damping_ev);
    }
    dpz_material *m = mat_new(MAT_DRUDE);
    if (!m)
        return dpz_err_set(err, DPZ_ENOMEM, "material: out of memory");
    m->drude = *p;
    *out = m;
    return DPZ_OK;
}

/* ---- CSV tables ----------------------------------------------------------------------
 */

/* Splits `line` (modified in place) at commas into at most `max` trimmed fields. */
static size_t split_fields(char *line, char **f, size_t max)
{
    size_t n = 0;
    char *s = line;
    for (;;) {
        char *c = strchr(s, ',');
        if (c)
            *c = '\0';
        while (*s == ' ' || *s == '\t')
            s++;
        char *e = s + strlen(s);
        while (e > s && (e[-1] == ' ' || e[-1] == '\t' || e[-1] == '\r'))
            *--e = '\0';
        if (n < max)
            f[n] = s;
        n++;
        if (!c)
            break;
        s = c + 1;
    }
    return n;
}

static int parse_double(const char *s, double *v)
{
    char *end;
    errno = 0;
    *v = strtod(s, &end);
    return *s != '\0' && *end == '\0';
}

#define MAX_FIELDS 32

dpz_status dpz_material_create_table(dpz_material **out, const char *buf, size_t len,
                                     const char *name, dpz_err *err)
{
    if (!out)
        return dpz_err_set(err, DPZ_EINVAL, "material: NULL output");
    *out = NULL;
    if (!buf && len > 0)
        return dpz_err_set(err, DPZ_EINVAL, "material table: NULL buffer");
    const char *nm = name ? name : "(table)";
    dpz_material *m = mat_new(MAT_TABLE);
    char *line = NULL;
    if (!m)
        return dpz_err_set(err, DPZ_ENOMEM, "material table %s: out of memory", nm);
    snprintf(m->name, sizeof m->name, "%s", nm);
    /* Rows are at most the number of newlines + 1. */
    size_t cap = 1;
    for (size_t i = 0; i < len; i++)
        cap += buf[i] == '\n';
    m->wl = dpz__calloc(cap, sizeof *m->wl);
    m->v1 = dpz__calloc(cap, sizeof *m->v1);
    m->v2 = dpz__calloc(cap, sizeof *m->v2);
    line = dpz__malloc(len + 1);
    dpz_status st = DPZ_OK;
    if (!m->wl || !m->v1 || !m->v2 || !line) {
        st = dpz_err_set(err, DPZ_ENOMEM, "material table %s: out of memory", nm);
        goto fail;
    }
    int have_header = 0;
    int col_wl = -1, col_a = -1, col_b = -1;
    size_t nfields = 0;
    double unit = 0;
    size_t lineno = 0;
    for (size_t pos = 0; pos < len;) {
        size_t e = pos;
        while (e < len && buf[e] != '\n')
            e++;
        lineno++;
        memcpy(line, buf + pos, e - pos);
        line[e - pos] = '\0';
        if (strlen(line) != e - pos) {
            st = dpz_err_set(err, DPZ_EFORMAT, "material table %s: line %zu: NUL byte",
                             nm, lineno);
            goto fail;
        }
        pos = e + 1;
        char *s = line;
        while (*s == ' ' || *s == '\t' || *s == '\r')
            s++;
        if (*s == '\0' || *s == '#')
            continue;
        char *f[MAX_FIELDS];
        size_t n = split_fields(s, f, MAX_FIELDS);
        if (n > MAX_FIELDS) {
            st = dpz_err_set(err, DPZ_EFORMAT,
                             "material table %s: line %zu: more than %d "
                             "columns",
                             nm, lineno, MAX_FIELDS);
            goto fail;
        }
        if (!have_header) {
            int col_n = -1, col_k = -1, col_er = -1, col_ei = -1;
            for (size_t i = 0; i < n; i++) {
                if (strcmp(f[i], "wavelength_nm") == 0)
                    col_wl = (int)i, unit = 1e-9;
                else if (strcmp(f[i], "wavelength_um") == 0)
                    col_wl = (int)i, unit = 1e-6;
                else if (strcmp(f[i], "wavelength_m") == 0)
                    col_wl = (int)i, unit = 1.0;
                else if (strcmp(f[i], "n") == 0)
                    col_n = (int)i;
                else if (strcmp(f[i], "k") == 0)
                    col_k = (int)i;
                else if (strcmp(f[i], "eps_re") == 0)
                    col_er = (int)i;
                else if (strcmp(f[i], "eps_im") == 0)
                    col_ei = (int)i;
            }
            if (col_wl < 0) {
                st = dpz_err_set(
                    err, DPZ_EFORMAT,
                    "material table %s: line %zu: the header names no wavelength "
                    "column (wavelength_nm, wavelength_um or wavelength_m)",
                    nm, lineno);
                goto fail;
            }
            if (col_n >= 0 && col_k >= 0) {
                m->is_nk = 1;
                col_a = col_n;
                col_b = col_k;
            } else if (col_er >= 0 && col_ei >= 0) {
                m->is_nk = 0;
                col_a = col_er;
                col_b = col_ei;
            } else {
                st = dpz_err_set(
                    err, DPZ_EFORMAT,
                    "material table %s: line %zu: the header needs columns n,k "
                    "or eps_re,eps_im",
                    nm, lineno);
                goto fail;
            }
            nfields = n;
            have_header = 1;
            continue;
        }
        if (n != nfields) {
            st =
                dpz_err_set(err, DPZ_EFORMAT,
                            "material table %s: line %zu: %zu fields, the header has %zu",
                            nm, lineno, n, nfields);
            goto fail;
        }
        double w, a, b;
        const int cols[3] = {col_wl, col_a, col_b};
        double *dst[3] = {&w, &a, &b};
        for (int c = 0; c < 3; c++) {
            if (!parse_double(f[cols[c]], dst[c]) || !isfinite(*dst[c])) {
                st = dpz_err_set(err, DPZ_EFORMAT,
                                 "material table %s: line %zu: column %d ('%s') is not a "
                                 "finite number",
                                 nm, lineno, cols[c] + 1, f[cols[c]]);
                goto fail;
            }
        }
        w *= unit;
        if (!(w > 0)) {
            st = dpz_err_set(err, DPZ_EFORMAT,
                             "material table %s: line %zu: wavelength must be positive",
                             nm, lineno);
            goto fail;
        }
        if (m->rows > 0 && w <= m->wl[m->rows - 1]) {
            st = dpz_err_set(
                err, DPZ_EFORMAT,
                "material table %s: line %zu: wavelength %s %s the previous row "
                "(wavelengths must be strictly increasing)",
                nm, lineno, f[col_wl],
                w == m->wl[m->rows - 1] ? "duplicates" : "is below");
            goto fail;
        }
        if (b < 0) {
            /* exp(-i omega t): absorption means k >= 0 and Im eps >= 0. */
            st = dpz_err_set(
                err, DPZ_EFORMAT,
                "material table %s: line %zu: negative %s %g (a passive material "
                "has %s >= 0)",
                nm, lineno, m->is_nk ? "k" : "eps_im", b, m->is_nk ? "k" : "eps_im");
            goto fail;
        }
        if (m->is_nk && a < 0) {
            st = dpz_err_set(err, DPZ_EFORMAT,
                             "material table %s: line %zu: negative n %g", nm, lineno, a);
            goto fail;
        }
        m->wl[m->rows] = w;
        m->v1[m->rows] = a;
        m->v2[m->rows] = b;
        m->rows++;
    }
    if (!have_header) {
        st = dpz_err_set(err, DPZ_EFORMAT, "material table %s: no header line", nm);
        goto fail;
    }
    if (m->rows < 2) {
        st = dpz_err_set(err, DPZ_EFORMAT,
                         "material table %s: %zu data rows (at least two are needed to "
                         "interpolate)",
                         nm, m->rows);
        goto fail;
    }
    dpz__free(line);
    *out = m;
    return DPZ_OK;
fail:
    dpz__free(line);
    dpz_material_destroy(m);
    return st;
}

dpz_status dpz_material_create_table_file(dpz_material **out, const char *path,
                                          dpz_err *err)
{
    if (!out)
        return dpz_err_set(err, DPZ_EINVAL, "material: NULL output");
    *out = NULL;
    if (!path)
        return dpz_err_set(err, DPZ_EINVAL, "material table: NULL path");
    char *buf = NULL;
    size_t len = 0;
    dpz_status rs =
        dpz_file_read_all(path, "material table", (size_t)1 << 30, &buf, &len, err);
    if (rs != DPZ_OK)
        return rs;
    dpz_status st = dpz_material_create_table(out, buf, len, path, err);
    dpz__free(buf);
    return st;
}

/* ---- evaluation
 * ------------------------------------------------------------------------ */

/* Drude-Lorentz permittivity for exp(-i omega t) (Rakic et al., Appl. Opt. 37, 5271
 * (1998), eq. 3, with i -> -i for the opposite time convention):
 *   eps(E) = eps_inf - Ep^2/(E (E + i gamma)) + sum_j f_j E_j^2/(E_j^2 - E^2 - i Gamma_j
 * E) */
static double complex drude_eps(const dpz_drude_params *p, double E)
{
    double complex eps = p->eps_inf;
    if (p->plasma_ev > 0)
        eps -= p->plasma_ev * p->plasma_ev / (E * CMPLX(E, p->damping_ev));
    for (size_t j = 0; j < p->n_lorentz; j++) {
        const dpz_lorentz_term *t = &p->lorentz[j];
        double Ej2 = t->energy_ev * t->energy_ev;
        eps += t->strength * Ej2 / CMPLX(Ej2 - E * E, -t->damping_ev * E);
    }
    return eps;
}

/* Stores e in *eps when finite. A model or table can hold finite parameters whose
 * permittivity overflows (n = 1e200 squares to inf; a Drude plasma energy of 1e300 eV
 * likewise): refuse rather than hand out inf or nan, leaving *eps untouched. */
static dpz_status eps_finite(const dpz_material *mat, double lambda0_m, double complex e,
                             double complex *eps, dpz_err *err)
{
    if (isfinite(creal(e)) && isfinite(cimag(e))) {
        *eps = e;
        return DPZ_OK;
    }
    return dpz_err_set(err, DPZ_ERANGE,
                       "material %s: the permittivity at %.6g nm is not finite (the "
                       "model's or table's values are too large)",
                       mat->kind == MAT_TABLE ? mat->name : "model", lambda0_m * 1e9);
}

dpz_status dpz_material_eps(const dpz_material *mat, double lambda0_m,
                            double complex *eps, dpz_err *err)
{
    if (!mat || !eps)
        return dpz_err_set(err, DPZ_EINVAL, "material: NULL argument");
    if (!(lambda0_m > 0) || !isfinite(lambda0_m))
        return dpz_err_set(err, DPZ_EINVAL, "material: wavelength %g m must be positive",
                           lambda0_m);
    switch (mat->kind) {
    case MAT_CONST:
        *eps = mat->eps;
        return DPZ_OK;
    case MAT_DRUDE:
        return eps_finite(mat, lambda0_m,
                          drude_eps(&mat->drude, HC_EV_NM / (lambda0_m * 1e9)), eps, err);
    case MAT_TABLE: {
        size_t n = mat->rows;
        if (lambda0_m < mat->wl[0] || lambda0_m > mat->wl[n - 1])
            return dpz_err_set(
                err, DPZ_ERANGE,
                "material table %s: wavelength %.6g nm is outside the table "
                "range %.6g to %.6g nm (no extrapolation)",
                mat->name, lambda0_m * 1e9, mat->wl[0] * 1e9, mat->wl[n - 1] * 1e9);
        /* Binary search for wl[lo] <= lambda <= wl[lo + 1]. */
        size_t lo = 0, hi = n - 1;
        while (hi - lo > 1) {
            size_t mid = lo + (hi - lo) / 2;
            if (mat->wl[mid] <= lambda0_m)
                lo = mid;
            else
                hi = mid;
        }
        double t = (lambda0_m - mat->wl[lo]) / (mat->wl[hi] - mat->wl[lo]);
        double a = mat->v1[lo] + t * (mat->v1[hi] - mat->v1[lo]);
        double b = mat->v2[lo] + t * (mat->v2[hi] - mat->v2[lo]);
        /* eps = (n + i k)^2 for exp(-i omega t) (Bohren & Huffman 1983, sec. 2.5). */
        return eps_finite(mat, lambda0_m,
                          mat->is_nk ? CMPLX(a * a - b * b, 2 * a * b) : CMPLX(a, b), eps,
                          err);
    }
    }
    return dpz_err_set(err, DPZ_EINVAL, "material: unknown kind");
}

void dpz_material_range(const dpz_material *mat, double *lo_m, double *hi_m)
{
    double lo = 0, hi = INFINITY;
    if (mat && mat->kind == MAT_TABLE) {
        lo = mat->wl[0];
        hi = mat->wl[mat->rows - 1];
    }
    if (lo_m)
        *lo_m = lo;
    if (hi_m)
        *hi_m = hi;
}

void dpz_material_describe(const dpz_material *mat, char *buf, size_t len)
{
    if (!buf || len == 0)
        return;
    if (!mat) {
        snprintf(buf, len, "(none)");
        return;
    }
    switch (mat->kind) {
    case MAT_CONST:
        snprintf(buf, len, "const %.10g%+.10gi", creal(mat->eps), cimag(mat->eps));
        break;
    case MAT_DRUDE:
        snprintf(buf, len,
                 "drude eps_inf=%.10g Ep=%.10geV gamma=%.10geV lorentz_terms=%zu",
                 mat->drude.eps_inf, mat->drude.plasma_ev, mat->drude.damping_ev,
                 mat->drude.n_lorentz);
        break;
    case MAT_TABLE:
        snprintf(buf, len, "table %s (%zu rows, %.6g-%.6g nm) %s",
                 mat->is_nk ? "n,k" : "eps_re,eps_im", mat->rows, mat->wl[0] * 1e9,
                 mat->wl[mat->rows - 1] * 1e9, mat->name);
        break;
    }
}
