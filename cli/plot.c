/* plot.c: `dipolize plot DIR` - SVG spectra from the tables of a sweep directory
 * (docs/sweep-format.md): principal components of a_ee and a_mm, the magneto-electric
 * block when it matters, cross sections of the full solve beside the point-dipole model,
 * and the dipole-validity diagnostic with its warning band. Also the sweep-table reader
 * and small helpers shared with preview.c and report.c. */
#include "pictures.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "dpz_fileio.h"

/* Largest table accepted: 2 GiB (10^5 wavelengths x 36 rows x ~150 bytes fit easily). */
#define PIC_MAX_TABLE_BYTES ((size_t)1 << 31)
#define PIC_MAX_COLS 64

/* Off-diagonal elements count as significant above this fraction of the largest element
 * of the block over the sweep; then the plot shows principal-axis components instead of
 * xx, yy, zz. A choice of presentation, not of physics: 1 % is visible on a plot. */
#define PIC_OFFDIAG_SIGNIFICANT 1e-2
/* The em block is plotted when max|a_em| exceeds this fraction of max|A|. */
#define PIC_EM_SIGNIFICANT 1e-3
/* Dipole-validity level above which the reduction to a point dipole is doubtful (order-2
 * and -3 response more than 10 % of order 1): a rule of thumb, common practice. */
#define PIC_VALIDITY_WARN 0.1
/* Point markers are drawn at every wavelength up to this many points; beyond, only the
 * non-converged ones. */
#define PIC_MAX_MARKERS 80

/* ---- small helpers
 * ---------------------------------------------------------------------- */

int dpz__pic_fail(dpz_status st, const char *msg)
{
    fprintf(stderr, "dipolize: %s\n", msg && msg[0] ? msg : dpz_status_message(st));
    return st == DPZ_ENOMEM ? 1 : 2;
}

char *dpz__pic_join(const char *dir, const char *name)
{
    size_t a = strlen(dir), b = strlen(name);
    char *p = dpz__malloc(a + b + 2);
    if (!p)
        return NULL;
    memcpy(p, dir, a);
    size_t k = a;
    if (a > 0 && dir[a - 1] != '/')
        p[k++] = '/';
    memcpy(p + k, name, b + 1);
    return p;
}

dpz_status dpz__pic_read_file(const char *path, size_t max_bytes, char **out, size_t *len,
                              dpz_err *err)
{
    return dpz_file_read_all(path, NULL, max_bytes, out, len, err);
}

/* Cyclic Jacobi for a symmetric 3x3 matrix (Golub & Van Loan 2013, algorithm 8.5.3). */
void dpz__pic_eigsym3(const double a_in[3][3], double w[3], double v[3][3])
{
    double a[3][3];
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++) {
            a[i][j] = 0.5 * (a_in[i][j] + a_in[j][i]);
            v[i][j] = i == j ? 1.0 : 0.0;
        }
    for (int sweep = 0; sweep < 50; sweep++) {
        double off = a[0][1] * a[0][1] + a[0][2] * a[0][2] + a[1][2] * a[1][2];
        double tot = off;
        for (int i = 0; i < 3; i++)
            tot += a[i][i] * a[i][i];
        if (off <= 1e-32 * tot || off == 0.0)
            break;
        for (int p = 0; p < 2; p++)
            for (int q = p + 1; q < 3; q++) {
                if (a[p][q] == 0.0)
                    continue;
                /* Symmetric Schur decomposition of the (p, q) 2x2 block (G&VL 8.5.2). */
                double tau = (a[q][q] - a[p][p]) / (2.0 * a[p][q]);
                double t = (tau >= 0 ? 1.0 : -1.0) / (fabs(tau) + sqrt(1.0 + tau * tau));
                double c = 1.0 / sqrt(1.0 + t * t), s = t * c;
                for (int k = 0; k < 3; k++) { /* A <- A J */
                    double akp = a[k][p], akq = a[k][q];
                    a[k][p] = c * akp - s * akq;
                    a[k][q] = s * akp + c * akq;
                }
                for (int k = 0; k < 3; k++) { /* A <- J^T A */
                    double apk = a[p][k], aqk = a[q][k];
                    a[p][k] = c * apk - s * aqk;
                    a[q][k] = s * apk + c * aqk;
                }
                for (int k = 0; k < 3; k++) { /* V <- V J */
                    double vkp = v[k][p], vkq = v[k][q];
                    v[k][p] = c * vkp - s * vkq;
                    v[k][q] = s * vkp + c * vkq;
                }
            }
    }
    int idx[3] = {0, 1, 2};
    for (int i = 0; i < 3; i++)
        for (int j = i + 1; j < 3; j++)
            if (a[idx[j]][idx[j]] > a[idx[i]][idx[i]]) {
                int t = idx[i];
                idx[i] = idx[j];
                idx[j] = t;
            }
    double vv[3][3];
    for (int i = 0; i < 3; i++) {
        w[i] = a[idx[i]][idx[i]];
        /* Sign convention: largest component of each eigenvector positive. */
        int big = 0;
        for (int r = 1; r < 3; r++)
            if (fabs(v[r][idx[i]]) > fabs(v[big][idx[i]]))
                big = r;
        double sg = v[big][idx[i]] < 0 ? -1.0 : 1.0;
        for (int r = 0; r < 3; r++)
            vv[r][i] = sg * v[r][idx[i]];
    }
    memcpy(v, vv, sizeof vv);
}

/* ---- CSV tables -----------------------------------------------------------------------
 */

typedef struct csv {
    const char *path;
    char *text;
    size_t len;
    char *p;     /* next unread byte */
    size_t line; /* line number of the current row */
    size_t ncol;
    char *names[PIC_MAX_COLS];
    char *field[PIC_MAX_COLS];
} csv;

/* Splits the next line at p into NUL-terminated comma fields (trimmed). Returns the
 * number of fields, 0 at end of text; *is_skip = 1 for blank and '#' lines. */
static size_t csv_split(csv *c, char **field, size_t max, int *is_skip, int *too_many)
{
    *is_skip = 0;
    *too_many = 0;
    if (!c->p || *c->p == '\0')
        return 0;
    char *line = c->p;
    char *end = strchr(line, '\n');
    if (end) {
        *end = '\0';
        c->p = end + 1;
    } else {
        c->p = line + strlen(line);
    }
    c->line++;
    size_t n = strlen(line);
    if (n > 0 && line[n - 1] == '\r')
        line[--n] = '\0';
    char *q = line;
    while (*q == ' ' || *q == '\t')
        q++;
    if (*q == '\0' || *q == '#') {
        *is_skip = 1;
        return 1;
    }
    size_t nf = 0;
    char *f = line;
    for (;;) {
        char *comma = strchr(f, ',');
        if (comma)
            *comma = '\0';
        while (*f == ' ' || *f == '\t')
            f++;
        char *e = f + strlen(f);
        while (e > f && (e[-1] == ' ' || e[-1] == '\t'))
            *--e = '\0';
        if (nf < max)
            field[nf] = f;
        else
            *too_many = 1;
        nf++;
        if (!comma)
            break;
        f = comma + 1;
    }
    return nf;
}

/* Opens a table and reads its header. *absent = 1 (and DPZ_OK) when `optional` and the
 * file does not exist. */
static dpz_status csv_open(csv *c, const char *path, int optional, int *absent,
                           dpz_err *err)
{
    memset(c, 0, sizeof *c);
    c->path = path;
    if (absent)
        *absent = 0;
    struct stat stt;
    if (optional && stat(path, &stt) != 0 && errno == ENOENT) {
        *absent = 1;
        return DPZ_OK;
    }
    dpz_status st = dpz__pic_read_file(path, PIC_MAX_TABLE_BYTES, &c->text, &c->len, err);
    if (st != DPZ_OK)
        return st;
    if (memchr(c->text, '\0', c->len))
        return dpz_err_set(err, DPZ_EFORMAT, "%s: contains a NUL byte: not a CSV table",
                           path);
    c->p = c->text;
    for (;;) {
        int skip, too_many;
        size_t nf = csv_split(c, c->names, PIC_MAX_COLS, &skip, &too_many);
        if (nf == 0)
            return dpz_err_set(err, DPZ_EFORMAT, "%s:%zu: no header line (file empty)",
                               path, c->line);
        if (skip)
            continue;
        if (too_many)
            return dpz_err_set(err, DPZ_EFORMAT,
                               "%s:%zu: header has more than %d columns", path, c->line,
                               PIC_MAX_COLS);
        c->ncol = nf;
        for (size_t i = 0; i < nf; i++) {
            if (c->names[i][0] == '\0')
                return dpz_err_set(err, DPZ_EFORMAT, "%s:%zu: header column %zu is empty",
                                   path, c->line, i + 1);
            for (size_t j = 0; j < i; j++)
                if (strcmp(c->names[i], c->names[j]) == 0)
                    return dpz_err_set(err, DPZ_EFORMAT,
                                       "%s:%zu: header names column '%s' twice", path,
                                       c->line, c->names[i]);
        }
        return DPZ_OK;
    }
}

static void csv_close(csv *c)
{
    free(c->text);
    c->text = NULL;
}

static int csv_col(const csv *c, const char *name)
{
    for (size_t i = 0; i < c->ncol; i++)
        if (strcmp(c->names[i], name) == 0)
            return (int)i;
    return -1;
}

static dpz_status csv_need(const csv *c, const char *name, int *col, dpz_err *err)
{
    *col = csv_col(c, name);
    if (*col < 0)
        return dpz_err_set(err, DPZ_EFORMAT, "%s: header has no column '%s'", c->path,
                           name);
    return DPZ_OK;
}

/* Next data row: 1, 0 at the end, -1 on a damaged row (err set). */
static int csv_next(csv *c, dpz_err *err)
{
    for (;;) {
        int skip, too_many;
        size_t nf = csv_split(c, c->field, PIC_MAX_COLS, &skip, &too_many);
        if (nf == 0)
            return 0;
        if (skip)
            continue;
        if (nf != c->ncol) {
            dpz_err_set(err, DPZ_EFORMAT, "%s:%zu: %zu fields, the header has %zu",
                        c->path, c->line, nf, c->ncol);
            return -1;
        }
        return 1;
    }
}

/* A number in column `col` of the current row ("nan" and "inf" are read as such: a
 * failed value is plotted as a gap). */
static dpz_status csv_num(const csv *c, int col, double *v, dpz_err *err)
{
    if (col < 0) {
        *v = NAN;
        return DPZ_OK;
    }
    const char *f = c->field[col];
    char *end;
    errno = 0;
    double x = strtod(f, &end);
    if (f[0] == '\0' || *end != '\0')
        return dpz_err_set(err, DPZ_EFORMAT,
                           "%s:%zu: column '%s': '%.40s' is not a number", c->path,
                           c->line, c->names[col], f);
    if (errno == ERANGE && fabs(x) > 1.0)
        return dpz_err_set(err, DPZ_EFORMAT, "%s:%zu: column '%s': '%.40s' overflows",
                           c->path, c->line, c->names[col], f);
    *v = x;
    return DPZ_OK;
}

static dpz_status csv_wavelength(const csv *c, int col, double *v, dpz_err *err)
{
    dpz_status st = csv_num(c, col, v, err);
    if (st != DPZ_OK)
        return st;
    if (!isfinite(*v) || *v <= 0.0)
        return dpz_err_set(err, DPZ_EFORMAT,
                           "%s:%zu: wavelength_m '%.40s' is not a positive finite length",
                           c->path, c->line, c->field[col]);
    return DPZ_OK;
}

static dpz_status csv_flag(const csv *c, int col, int *v, dpz_err *err)
{
    if (col < 0) {
        *v = 1;
        return DPZ_OK;
    }
    const char *f = c->field[col];
    if (strcmp(f, "0") == 0)
        *v = 0;
    else if (strcmp(f, "1") == 0)
        *v = 1;
    else
        return dpz_err_set(err, DPZ_EFORMAT, "%s:%zu: column '%s': '%.40s' is not 0 or 1",
                           c->path, c->line, c->names[col], f);
    return DPZ_OK;
}

/* ---- loading the sweep
 * ----------------------------------------------------------------- */

typedef struct alpha_rec {
    double lambda;
    int elem; /* 6x6 index row*6 + col */
    double re, im;
    int conv;
    size_t line;
} alpha_rec;

static int cmp_rec(const void *a, const void *b)
{
    const alpha_rec *x = a, *y = b;
    if (x->lambda != y->lambda)
        return x->lambda < y->lambda ? -1 : 1;
    if (x->elem != y->elem)
        return x->elem < y->elem ? -1 : 1;
    return x->line < y->line ? -1 : (x->line > y->line);
}

void dpz__pic_sweep_free(dpz_pic_sweep *sw)
{
    free(sw->lambda_m);
    free(sw->A);
    free(sw->conv);
    free(sw->cs_lambda_m);
    for (int i = 0; i < 6; i++)
        free(sw->cs[i]);
    free(sw->cs_rel);
    free(sw->cs_conv);
    free(sw->d_lambda_m);
    free(sw->d_iter);
    free(sw->d_resid);
    free(sw->d_recip);
    free(sw->d_energy);
    free(sw->d_minabs);
    free(sw->d_validity);
    free(sw->d_minfluct);
    free(sw->d_conv);
    memset(sw, 0, sizeof *sw);
}

static dpz_status load_alpha(const char *dir, dpz_pic_sweep *sw, dpz_err *err)
{
    char *path = dpz__pic_join(dir, "alpha.csv");
    if (!path)
        return dpz_err_set(err, DPZ_ENOMEM, "out of memory");
    csv c;
    alpha_rec *rec = NULL;
    size_t nrec = 0, cap = 0;
    dpz_status st = csv_open(&c, path, 0, NULL, err);
    int cw = -1, cb = -1, cr = -1, cc = -1, cre = -1, cim = -1;
    if (st == DPZ_OK)
        st = csv_need(&c, "wavelength_m", &cw, err);
    if (st == DPZ_OK)
        st = csv_need(&c, "block", &cb, err);
    if (st == DPZ_OK)
        st = csv_need(&c, "row", &cr, err);
    if (st == DPZ_OK)
        st = csv_need(&c, "col", &cc, err);
    if (st == DPZ_OK)
        st = csv_need(&c, "re", &cre, err);
    if (st == DPZ_OK)
        st = csv_need(&c, "im", &cim, err);
    int cconv = csv_col(&c, "converged");
    while (st == DPZ_OK) {
        int r = csv_next(&c, err);
        if (r < 0)
            st = DPZ_EFORMAT;
        if (r <= 0)
            break;
        alpha_rec a;
        a.line = c.line;
        st = csv_wavelength(&c, cw, &a.lambda, err);
        if (st != DPZ_OK)
            break;
        static const char *const blocks[4] = {"ee", "em", "me", "mm"};
        int b = -1;
        for (int i = 0; i < 4; i++)
            if (strcmp(c.field[cb], blocks[i]) == 0)
                b = i;
        if (b < 0) {
            st = dpz_err_set(err, DPZ_EFORMAT,
                             "%s:%zu: block '%.20s' is not one of ee, em, me, mm", path,
                             c.line, c.field[cb]);
            break;
        }
        int rc[2];
        const int cols[2] = {cr, cc};
        for (int i = 0; i < 2 && st == DPZ_OK; i++) {
            const char *f = c.field[cols[i]];
            if (strlen(f) != 1 || f[0] < '0' || f[0] > '2')
                st = dpz_err_set(err, DPZ_EFORMAT, "%s:%zu: %s '%.20s' is not 0, 1 or 2",
                                 path, c.line, i ? "col" : "row", f);
            else
                rc[i] = f[0] - '0';
        }
        if (st == DPZ_OK)
            st = csv_num(&c, cre, &a.re, err);
        if (st == DPZ_OK)
            st = csv_num(&c, cim, &a.im, err);
        if (st == DPZ_OK)
            st = csv_flag(&c, cconv, &a.conv, err);
        if (st != DPZ_OK)
            break;
        a.elem = (rc[0] + 3 * (b >> 1)) * 6 + rc[1] + 3 * (b & 1);
        if (nrec == cap) {
            size_t ncap = cap ? 2 * cap : 1024;
            alpha_rec *nr = dpz__realloc(rec, ncap * sizeof *nr);
            if (!nr) {
                st = dpz_err_set(err, DPZ_ENOMEM, "%s: out of memory", path);
                break;
            }
            rec = nr;
            cap = ncap;
        }
        rec[nrec++] = a;
    }
    if (st == DPZ_OK && nrec == 0)
        st = dpz_err_set(err, DPZ_EFORMAT,
                         "%s: no data rows (is the sweep still starting?)", path);
    if (st == DPZ_OK) {
        qsort(rec, nrec, sizeof *rec, cmp_rec);
        size_t nl = 0;
        for (size_t i = 0; i < nrec; i++) {
            if (i > 0 && rec[i].lambda == rec[i - 1].lambda &&
                rec[i].elem == rec[i - 1].elem) {
                st = dpz_err_set(
                    err, DPZ_EFORMAT,
                    "%s:%zu: element repeats the one of line %zu for the same "
                    "wavelength",
                    path, rec[i].line, rec[i - 1].line);
                break;
            }
            if (i == 0 || rec[i].lambda != rec[i - 1].lambda)
                nl++;
        }
        if (st == DPZ_OK) {
            sw->lambda_m = dpz__malloc(nl * sizeof *sw->lambda_m);
            sw->A = dpz__malloc(nl * sizeof *sw->A);
            sw->conv = dpz__malloc(nl * sizeof *sw->conv);
            if (!sw->lambda_m || !sw->A || !sw->conv) {
                st = dpz_err_set(err, DPZ_ENOMEM, "%s: out of memory", path);
            } else {
                sw->n = nl;
                size_t k = (size_t)-1;
                for (size_t i = 0; i < nrec; i++) {
                    if (i == 0 || rec[i].lambda != rec[i - 1].lambda) {
                        k++;
                        sw->lambda_m[k] = rec[i].lambda;
                        sw->conv[k] = 1;
                        for (int e = 0; e < 36; e++)
                            sw->A[k][e / 6][e % 6] = CMPLX(NAN, NAN);
                    }
                    sw->A[k][rec[i].elem / 6][rec[i].elem % 6] =
                        CMPLX(rec[i].re, rec[i].im);
                    if (!rec[i].conv)
                        sw->conv[k] = 0;
                }
            }
        }
    }
    free(rec);
    csv_close(&c);
    free(path);
    return st;
}

/* Generic one-row-per-wavelength table: reads the named columns (absent optional columns
 * give NaN), sorted by wavelength. */
typedef struct col_spec {
    const char *name;
    int required;
    double **dst;
} col_spec;

typedef struct row_rec {
    double lambda;
    size_t line;
    int conv;
    double v[16];
} row_rec;

static int cmp_row(const void *a, const void *b)
{
    const row_rec *x = a, *y = b;
    if (x->lambda != y->lambda)
        return x->lambda < y->lambda ? -1 : 1;
    return x->line < y->line ? -1 : (x->line > y->line);
}

static dpz_status load_rows(const char *dir, const char *name, const col_spec *spec,
                            size_t nspec, size_t *n_out, double **lambda_out,
                            int **conv_out, int *present, dpz_err *err)
{
    *n_out = 0;
    *present = 0;
    char *path = dpz__pic_join(dir, name);
    if (!path)
        return dpz_err_set(err, DPZ_ENOMEM, "out of memory");
    csv c;
    int absent = 0;
    row_rec *rec = NULL;
    size_t nrec = 0, cap = 0;
    int cols[16];
    int cw = -1;
    dpz_status st = csv_open(&c, path, 1, &absent, err);
    if (st != DPZ_OK || absent) {
        free(path);
        csv_close(&c);
        return st;
    }
    *present = 1;
    st = csv_need(&c, "wavelength_m", &cw, err);
    for (size_t i = 0; i < nspec && st == DPZ_OK; i++) {
        cols[i] = csv_col(&c, spec[i].name);
        if (cols[i] < 0 && spec[i].required)
            st = csv_need(&c, spec[i].name, &cols[i], err);
    }
    int cconv = csv_col(&c, "converged");
    while (st == DPZ_OK) {
        int r = csv_next(&c, err);
        if (r < 0)
            st = DPZ_EFORMAT;
        if (r <= 0)
            break;
        row_rec a;
        a.line = c.line;
        st = csv_wavelength(&c, cw, &a.lambda, err);
        for (size_t i = 0; i < nspec && st == DPZ_OK; i++)
            st = csv_num(&c, cols[i], &a.v[i], err);
        if (st == DPZ_OK)
            st = csv_flag(&c, cconv, &a.conv, err);
        if (st != DPZ_OK)
            break;
        if (nrec == cap) {
            size_t ncap = cap ? 2 * cap : 256;
            row_rec *nr = dpz__realloc(rec, ncap * sizeof *nr);
            if (!nr) {
                st = dpz_err_set(err, DPZ_ENOMEM, "%s: out of memory", path);
                break;
            }
            rec = nr;
            cap = ncap;
        }
        rec[nrec++] = a;
    }
    if (st == DPZ_OK && nrec > 0) {
        qsort(rec, nrec, sizeof *rec, cmp_row);
        for (size_t i = 1; i < nrec && st == DPZ_OK; i++)
            if (rec[i].lambda == rec[i - 1].lambda)
                st = dpz_err_set(err, DPZ_EFORMAT,
                                 "%s:%zu: wavelength repeats the one of line %zu", path,
                                 rec[i].line, rec[i - 1].line);
    }
    if (st == DPZ_OK && nrec > 0) {
        double *lam = dpz__malloc(nrec * sizeof *lam);
        int *conv = dpz__malloc(nrec * sizeof *conv);
        int ok = lam && conv;
        for (size_t i = 0; i < nspec && ok; i++) {
            *spec[i].dst = dpz__malloc(nrec * sizeof(double));
            ok = *spec[i].dst != NULL;
        }
        if (!ok) {
            free(lam);
            free(conv);
            st = dpz_err_set(err, DPZ_ENOMEM, "%s: out of memory", path);
        } else {
            for (size_t r = 0; r < nrec; r++) {
                lam[r] = rec[r].lambda;
                conv[r] = rec[r].conv;
                for (size_t i = 0; i < nspec; i++)
                    (*spec[i].dst)[r] = rec[r].v[i];
            }
            *lambda_out = lam;
            *conv_out = conv;
            *n_out = nrec;
        }
    }
    free(rec);
    csv_close(&c);
    free(path);
    return st;
}

dpz_status dpz__pic_sweep_load(const char *dir, dpz_pic_sweep *sw, dpz_err *err)
{
    memset(sw, 0, sizeof *sw);
    dpz_status st = load_alpha(dir, sw, err);
    if (st == DPZ_OK) {
        const col_spec cs[] = {
            {"ext", 1, &sw->cs[0]},        {"abs", 1, &sw->cs[1]},
            {"sca", 1, &sw->cs[2]},        {"ext_dipole", 0, &sw->cs[3]},
            {"abs_dipole", 0, &sw->cs[4]}, {"sca_dipole", 0, &sw->cs[5]},
            {"rel_diff", 0, &sw->cs_rel}};
        st = load_rows(dir, "cross_sections.csv", cs, sizeof cs / sizeof cs[0], &sw->ncs,
                       &sw->cs_lambda_m, &sw->cs_conv, &sw->has_cs, err);
    }
    if (st == DPZ_OK) {
        const col_spec ds[] = {{"iterations", 0, &sw->d_iter},
                               {"residual", 0, &sw->d_resid},
                               {"reciprocity", 0, &sw->d_recip},
                               {"energy_balance", 0, &sw->d_energy},
                               {"min_absorption_eig", 0, &sw->d_minabs},
                               {"dipole_validity", 1, &sw->d_validity},
                               {"min_fluct_eig_m3", 0, &sw->d_minfluct}};
        st = load_rows(dir, "diagnostics.csv", ds, sizeof ds / sizeof ds[0], &sw->nd,
                       &sw->d_lambda_m, &sw->d_conv, &sw->has_diag, err);
    }
    if (st != DPZ_OK)
        dpz__pic_sweep_free(sw);
    return st;
}

/* ---- plots
 * ------------------------------------------------------------------------------- */

static const char *const plot_files[DPZ_PIC_COUNT] = {
    "alpha_ee.svg", "alpha_mm.svg", "alpha_em.svg", "cross_sections.svg",
    "dipole_validity.svg"};

const char *dpz__pic_plot_file(dpz_pic_kind kind)
{
    return kind < DPZ_PIC_COUNT ? plot_files[kind] : "";
}

static double max_abs_block(const dpz_pic_sweep *sw, int r0, int c0)
{
    double m = 0.0;
    for (size_t k = 0; k < sw->n; k++)
        for (int i = 0; i < 3; i++)
            for (int j = 0; j < 3; j++) {
                double a = cabs(sw->A[k][r0 + i][c0 + j]);
                if (isfinite(a) && a > m)
                    m = a;
            }
    return m;
}

int dpz__pic_plot_wanted(const dpz_pic_sweep *sw, dpz_pic_kind kind)
{
    switch (kind) {
    case DPZ_PIC_ALPHA_EE:
    case DPZ_PIC_ALPHA_MM:
        return sw->n > 0;
    case DPZ_PIC_ALPHA_EM: {
        double all = 0.0;
        for (int b = 0; b < 4; b++) {
            double m = max_abs_block(sw, 3 * (b >> 1), 3 * (b & 1));
            if (m > all)
                all = m;
        }
        return sw->n > 0 && max_abs_block(sw, 0, 3) > PIC_EM_SIGNIFICANT * all;
    }
    case DPZ_PIC_CROSS:
        return sw->ncs > 0;
    case DPZ_PIC_VALIDITY:
        return sw->nd > 0;
    default:
        return 0;
    }
}

/* Layout of every plot (px). */
enum { PW = 640, PH = 400 };
static const double FX = 82, FY = 44, FW = 376, FH = 290, LEGX = 478, LEGY = 58;

static void frame_init(dpz_svg_frame *f)
{
    memset(f, 0, sizeof *f);
    f->px = FX;
    f->py = FY;
    f->pw = FW;
    f->ph = FH;
}

/* Engineering exponent (multiple of 3) that brings max|v| into [1, 1000). */
static int eng_exponent(double maxabs)
{
    if (!(maxabs > 0.0) || !isfinite(maxabs))
        return 0;
    return 3 * (int)floor(log10(maxabs) / 3.0 + 1e-12);
}

static void unit_label(char *out, size_t cap, const char *quantity, int e,
                       const char *unit)
{
    char p[32];
    if (e == 0) {
        snprintf(out, cap, "%s (%s)", quantity, unit);
        return;
    }
    dpz_svg_pow10_label(e, p, sizeof p);
    snprintf(out, cap, "%s (%s %s)", quantity, p, unit);
}

/* Data range of arrays (finite values only). */
static void range_of(const double *v, size_t n, double *lo, double *hi)
{
    for (size_t i = 0; i < n; i++)
        if (isfinite(v[i])) {
            if (v[i] < *lo)
                *lo = v[i];
            if (v[i] > *hi)
                *hi = v[i];
        }
}

static size_t count_unconverged(const int *conv, size_t n)
{
    size_t k = 0;
    for (size_t i = 0; i < n; i++)
        k += conv[i] == 0;
    return k;
}

/* Markers of a series: filled at converged points (only when few), hollow at the others.
 */
static void markers(dpz_svg *s, const dpz_svg_frame *f, const double *x, const double *y,
                    const int *conv, size_t n, const char *colour)
{
    dpz_svg_style filled = {colour, 1.0, NULL, colour, 1.0};
    dpz_svg_style hollow = {colour, 1.5, NULL, "#ffffff", 1.0};
    for (size_t i = 0; i < n; i++) {
        if (conv[i] && n > PIC_MAX_MARKERS)
            continue;
        double px = dpz_svg_fx(f, x[i]), py = dpz_svg_fy(f, y[i]);
        if (!isfinite(px) || !isfinite(py) || py < f->py - 1 || py > f->py + f->ph + 1)
            continue;
        if (conv[i])
            dpz_svg_circle(s, px, py, 2.4, &filled);
        else
            dpz_svg_circle(s, px, py, 4.0, &hollow);
    }
}

/* Every non-converged wavelength gets a faint vertical line and a hollow marker on the
 * wavelength axis, so that it stays visible when its values are missing (NaN rows). */
static void unconverged_marks(dpz_svg *s, const dpz_svg_frame *f, const double *x,
                              const int *conv, size_t n)
{
    dpz_svg_style line = {"#999999", 1.0, "2 3", NULL, 1.0};
    dpz_svg_style hollow = {"#555555", 1.5, NULL, "#ffffff", 1.0};
    for (size_t i = 0; i < n; i++) {
        if (conv[i])
            continue;
        double px = dpz_svg_fx(f, x[i]);
        dpz_svg_line(s, px, f->py, px, f->py + f->ph, &line);
        dpz_svg_circle(s, px, f->py + f->ph, 4.0, &hollow);
    }
}

static void title_block(dpz_svg *s, const char *title, const char *subtitle)
{
    dpz_svg_text(s, FX, 22, 15, DPZ_SVG_START, 0, 1, title);
    if (subtitle)
        dpz_svg_text(s, FX, 37, 11.5, DPZ_SVG_START, 0, 0, subtitle);
}

/* Legend note about convergence; returns the next legend y. */
static double legend_convergence(dpz_svg *s, double y, size_t nbad, size_t n)
{
    char t[96];
    dpz_svg_style st = {"#555555", 1.5, NULL, NULL, 1.0};
    if (nbad > 0) {
        dpz_svg_legend_entry(s, LEGX, y, &st, 0, 2, "not converged");
        snprintf(t, sizeof t, "%zu of %zu wavelengths", nbad, n);
        dpz_svg_text(s, LEGX, y + 19, 11.5, DPZ_SVG_START, 0, 0, t);
        return y + 40;
    }
    snprintf(t, sizeof t, "all %zu wavelengths", n);
    dpz_svg_text(s, LEGX, y + 4, 11.5, DPZ_SVG_START, 0, 0, t);
    dpz_svg_text(s, LEGX, y + 19, 11.5, DPZ_SVG_START, 0, 0, "converged");
    return y + 40;
}

static void wavelengths_nm(const double *lam, size_t n, double *out)
{
    for (size_t i = 0; i < n; i++)
        out[i] = lam[i] * 1e9;
}

/* alpha_ee / alpha_mm / alpha_em. `r0`, `c0`: block offsets in A. */
static void render_alpha(dpz_svg *s, const dpz_pic_sweep *sw, int r0, int c0,
                         const char *name)
{
    size_t n = sw->n;
    double *x = dpz__malloc(n * sizeof *x);
    double *y = dpz__malloc(9 * 2 * n * sizeof *y);
    if (!x || !y) {
        free(x);
        free(y);
        s->oom = 1;
        return;
    }
    wavelengths_nm(sw->lambda_m, n, x);
    const int em = r0 != c0;
    /* Series: for ee/mm three components; for em the significant elements. */
    char names[9][64];
    size_t ns = 0;
    const char *axn = "xyz";
    char note[160] = "";
    double bmax = max_abs_block(sw, r0, c0);
    if (!em) {
        double offmax = 0.0;
        for (size_t k = 0; k < n; k++)
            for (int i = 0; i < 3; i++)
                for (int j = 0; j < 3; j++)
                    if (i != j) {
                        double a = cabs(sw->A[k][r0 + i][c0 + j]);
                        if (isfinite(a) && a > offmax)
                            offmax = a;
                    }
        if (offmax <= PIC_OFFDIAG_SIGNIFICANT * bmax) {
            for (int i = 0; i < 3; i++) {
                for (size_t k = 0; k < n; k++) {
                    double complex v = sw->A[k][r0 + i][c0 + i];
                    y[(2 * i) * n + k] = creal(v);
                    y[(2 * i + 1) * n + k] = cimag(v);
                }
                snprintf(names[i], sizeof names[i], "%c%c", axn[i], axn[i]);
            }
            ns = 3;
            snprintf(note, sizeof note, "diagonal elements (off-diagonal < %g%% of max)",
                     100 * PIC_OFFDIAG_SIGNIFICANT);
        } else {
            /* Principal axes fixed over the sweep: eigenvectors of
             * M = sum_k Re(S_k) Re(S_k)^T + Im(S_k) Im(S_k)^T, S_k the symmetric part.
             * For S_k = U D_k U^T with one real orthogonal U (a particle whose principal
             * axes do not turn with wavelength) M = U (sum |D_k|^2) U^T, so U is
             * recovered. */
            double M[3][3] = {{0}}, w[3], U[3][3];
            for (size_t k = 0; k < n; k++) {
                double complex S[3][3];
                int ok = 1;
                for (int i = 0; i < 3; i++)
                    for (int j = 0; j < 3; j++) {
                        S[i][j] =
                            0.5 * (sw->A[k][r0 + i][c0 + j] + sw->A[k][r0 + j][c0 + i]);
                        if (!isfinite(creal(S[i][j])) || !isfinite(cimag(S[i][j])))
                            ok = 0;
                    }
                if (!ok)
                    continue;
                for (int i = 0; i < 3; i++)
                    for (int j = 0; j < 3; j++)
                        for (int l = 0; l < 3; l++)
                            M[i][j] += creal(S[i][l]) * creal(S[j][l]) +
                                       cimag(S[i][l]) * cimag(S[j][l]);
            }
            dpz__pic_eigsym3((const double(*)[3])M, w, U);
            for (int a = 0; a < 3; a++) {
                for (size_t k = 0; k < n; k++) {
                    double complex v = 0;
                    for (int i = 0; i < 3; i++)
                        for (int j = 0; j < 3; j++)
                            v += U[i][a] * sw->A[k][r0 + i][c0 + j] * U[j][a];
                    y[(2 * a) * n + k] = creal(v);
                    y[(2 * a + 1) * n + k] = cimag(v);
                }
                snprintf(names[a], sizeof names[a], "u%d (%.2f, %.2f, %.2f)", a + 1,
                         U[0][a] + 0.0, U[1][a] + 0.0, U[2][a] + 0.0);
            }
            ns = 3;
            snprintf(
                note, sizeof note,
                "principal axes u1..u3 of the symmetric part (fixed over the sweep)");
        }
    } else {
        /* The largest elements of a_em, at most four, each above 1 % of the block max. */
        int used[9] = {0};
        for (int pick = 0; pick < 4; pick++) {
            int best = -1;
            double bm = 0.0;
            for (int e = 0; e < 9; e++) {
                if (used[e])
                    continue;
                double m = 0.0;
                for (size_t k = 0; k < n; k++) {
                    double a = cabs(sw->A[k][r0 + e / 3][c0 + e % 3]);
                    if (isfinite(a) && a > m)
                        m = a;
                }
                if (m > bm) {
                    bm = m;
                    best = e;
                }
            }
            if (best < 0 || bm < 1e-2 * bmax)
                break;
            used[best] = 1;
            for (size_t k = 0; k < n; k++) {
                double complex v = sw->A[k][r0 + best / 3][c0 + best % 3];
                y[(2 * ns) * n + k] = creal(v);
                y[(2 * ns + 1) * n + k] = cimag(v);
            }
            snprintf(names[ns], sizeof names[ns], "%c%c", axn[best / 3], axn[best % 3]);
            ns++;
        }
        snprintf(note, sizeof note, "largest elements; depends on the multipole origin");
    }
    double lo = INFINITY, hi = -INFINITY;
    range_of(y, 2 * ns * n, &lo, &hi);
    if (!(lo <= hi))
        lo = hi = 0.0;
    double m = fmax(fabs(lo), fabs(hi));
    int e = eng_exponent(m);
    double sc = pow(10.0, -e);
    for (size_t i = 0; i < 2 * ns * n; i++)
        y[i] *= sc;
    lo *= sc;
    hi *= sc;
    if (lo > 0)
        lo = 0; /* keep zero in view: Im(alpha) >= 0 for passive particles is then visible
                 */
    if (hi < 0)
        hi = 0;

    dpz_svg_frame f;
    frame_init(&f);
    double xlo = INFINITY, xhi = -INFINITY;
    range_of(x, n, &xlo, &xhi);
    dpz_svg_axis_linear(&f.x, xlo, xhi, 6);
    dpz_svg_axis_linear(&f.y, lo, hi, 6);
    char title[96], ylab[96];
    snprintf(title, sizeof title, "Polarizability %s", name);
    unit_label(ylab, sizeof ylab, name, e, "m\u00B3");
    title_block(s, title, note);
    dpz_svg_axes(s, &f, "vacuum wavelength (nm)", ylab);
    unconverged_marks(s, &f, x, sw->conv, n);
    if (f.y.lo < 0 && f.y.hi > 0) {
        dpz_svg_style zero = {"#888888", 1.0, NULL, NULL, 1.0};
        dpz_svg_line(s, f.px, dpz_svg_fy(&f, 0), f.px + f.pw, dpz_svg_fy(&f, 0), &zero);
    }
    for (size_t i = 0; i < ns; i++) {
        const char *col = dpz_svg_colour(i);
        dpz_svg_style re = {col, 2.0, NULL, NULL, 1.0};
        dpz_svg_style im = {col, 2.0, "6 4", NULL, 1.0};
        dpz_svg_series(s, &f, x, y + (2 * i) * n, n, &re);
        dpz_svg_series(s, &f, x, y + (2 * i + 1) * n, n, &im);
        markers(s, &f, x, y + (2 * i) * n, sw->conv, n, col);
        markers(s, &f, x, y + (2 * i + 1) * n, sw->conv, n, col);
    }
    /* Legend: colours name the components, line styles the parts. */
    double ly = LEGY;
    for (size_t i = 0; i < ns; i++) {
        dpz_svg_style st = {dpz_svg_colour(i), 2.0, NULL, NULL, 1.0};
        dpz_svg_legend_entry(s, LEGX, ly, &st, 1, 0, names[i]);
        ly += 20;
    }
    ly += 6;
    dpz_svg_style ink = {"#333333", 2.0, NULL, NULL, 1.0};
    dpz_svg_style inkd = {"#333333", 2.0, "6 4", NULL, 1.0};
    dpz_svg_legend_entry(s, LEGX, ly, &ink, 1, 0, "real part");
    ly += 20;
    dpz_svg_legend_entry(s, LEGX, ly, &inkd, 1, 0, "imaginary part");
    ly += 26;
    legend_convergence(s, ly, count_unconverged(sw->conv, n), n);
    free(x);
    free(y);
}

static void render_cross(dpz_svg *s, const dpz_pic_sweep *sw)
{
    size_t n = sw->ncs;
    double *x = dpz__malloc(n * sizeof *x);
    double *y = dpz__malloc(6 * n * sizeof *y);
    if (!x || !y) {
        free(x);
        free(y);
        s->oom = 1;
        return;
    }
    wavelengths_nm(sw->cs_lambda_m, n, x);
    double lo = INFINITY, hi = -INFINITY;
    for (int q = 0; q < 6; q++) {
        memcpy(y + q * n, sw->cs[q], n * sizeof *y);
        range_of(y + q * n, n, &lo, &hi);
    }
    if (!(lo <= hi))
        lo = hi = 0.0;
    int e = eng_exponent(fmax(fabs(lo), fabs(hi)));
    double sc = pow(10.0, -e);
    for (size_t i = 0; i < 6 * n; i++)
        y[i] *= sc;
    lo = fmin(lo * sc, 0.0);
    hi = hi * sc;
    dpz_svg_frame f;
    frame_init(&f);
    double xlo = INFINITY, xhi = -INFINITY;
    range_of(x, n, &xlo, &xhi);
    dpz_svg_axis_linear(&f.x, xlo, xhi, 6);
    dpz_svg_axis_linear(&f.y, lo, hi, 6);
    char ylab[96];
    unit_label(ylab, sizeof ylab, "cross section", e, "m\u00B2");
    title_block(s, "Cross sections",
                "full solve (solid) beside the point-dipole model (dashed)");
    dpz_svg_axes(s, &f, "vacuum wavelength (nm)", ylab);
    unconverged_marks(s, &f, x, sw->cs_conv, n);
    static const char *const qn[3] = {"extinction", "absorption", "scattering"};
    for (int q = 0; q < 3; q++) {
        const char *col = dpz_svg_colour((size_t)q);
        dpz_svg_style full = {col, 2.2, NULL, NULL, 1.0};
        dpz_svg_style dip = {col, 1.8, "7 4", NULL, 1.0};
        dpz_svg_series(s, &f, x, y + q * n, n, &full);
        dpz_svg_series(s, &f, x, y + (q + 3) * n, n, &dip);
        markers(s, &f, x, y + q * n, sw->cs_conv, n, col);
    }
    double ly = LEGY;
    for (int q = 0; q < 3; q++) {
        dpz_svg_style st = {dpz_svg_colour((size_t)q), 2.2, NULL, NULL, 1.0};
        dpz_svg_legend_entry(s, LEGX, ly, &st, 1, 0, qn[q]);
        ly += 20;
    }
    ly += 6;
    dpz_svg_style ink = {"#333333", 2.0, NULL, NULL, 1.0};
    dpz_svg_style inkd = {"#333333", 1.8, "7 4", NULL, 1.0};
    dpz_svg_legend_entry(s, LEGX, ly, &ink, 1, 0, "full solve");
    ly += 20;
    dpz_svg_legend_entry(s, LEGX, ly, &inkd, 1, 0, "point dipole");
    ly += 26;
    ly = legend_convergence(s, ly, count_unconverged(sw->cs_conv, n), n);
    if (sw->cs_rel) {
        double worst = -1.0, wl = 0.0;
        for (size_t i = 0; i < n; i++)
            if (isfinite(sw->cs_rel[i]) && sw->cs_rel[i] > worst) {
                worst = sw->cs_rel[i];
                wl = x[i];
            }
        if (worst >= 0.0) {
            char t[96];
            snprintf(t, sizeof t, "largest ext. difference");
            dpz_svg_text(s, LEGX, ly + 4, 11.5, DPZ_SVG_START, 0, 0, t);
            snprintf(t, sizeof t, "%.3g %% at %.4g nm", 100 * worst, wl);
            dpz_svg_text(s, LEGX, ly + 19, 11.5, DPZ_SVG_START, 0, 0, t);
        }
    }
    free(x);
    free(y);
}

static void render_validity(dpz_svg *s, const dpz_pic_sweep *sw)
{
    size_t n = sw->nd;
    double *x = dpz__malloc(n * sizeof *x);
    if (!x) {
        s->oom = 1;
        return;
    }
    wavelengths_nm(sw->d_lambda_m, n, x);
    const double *v = sw->d_validity;
    double lo = INFINITY, hi = -INFINITY, pos_lo = INFINITY;
    range_of(v, n, &lo, &hi);
    for (size_t i = 0; i < n; i++)
        if (v[i] > 0 && v[i] < pos_lo)
            pos_lo = v[i];
    if (!(lo <= hi))
        lo = hi = 0.0;
    dpz_svg_frame f;
    frame_init(&f);
    double xlo = INFINITY, xhi = -INFINITY;
    range_of(x, n, &xlo, &xhi);
    dpz_svg_axis_linear(&f.x, xlo, xhi, 6);
    /* A log axis when the values are positive and span more than a decade and a half;
     * the warning level is always in view. */
    if (lo > 0 && fmax(hi, PIC_VALIDITY_WARN) / fmin(pos_lo, PIC_VALIDITY_WARN) > 30.0)
        dpz_svg_axis_log(&f.y, fmin(pos_lo, PIC_VALIDITY_WARN),
                         fmax(hi, 2 * PIC_VALIDITY_WARN));
    else
        dpz_svg_axis_linear(&f.y, fmin(lo, 0.0), fmax(hi, 1.5 * PIC_VALIDITY_WARN), 6);
    title_block(s, "Dipole validity", "order-2 and order-3 response relative to order 1");
    /* Warning band from the threshold to the top of the axis, drawn under the axes. */
    double top = f.y.log ? pow(10.0, f.y.hi) : f.y.hi;
    double yb = dpz_svg_fy(&f, PIC_VALIDITY_WARN), yt = dpz_svg_fy(&f, top);
    dpz_svg_style band = {NULL, 0, NULL, DPZ_SVG_VERMILLION, 0.13};
    dpz_svg_rect(s, f.px, yt, f.pw, yb - yt, &band);
    dpz_svg_axes(s, &f, "vacuum wavelength (nm)", "dipole validity (dimensionless)");
    unconverged_marks(s, &f, x, sw->d_conv, n);
    dpz_svg_style thr = {DPZ_SVG_VERMILLION, 1.5, "4 3", NULL, 1.0};
    dpz_svg_line(s, f.px, yb, f.px + f.pw, yb, &thr);
    dpz_svg_text(s, f.px + f.pw - 6, yb - 6, 11.5, DPZ_SVG_END, 0, 0,
                 "0.1: point dipole doubtful above");
    dpz_svg_style line = {DPZ_SVG_BLUE, 2.2, NULL, NULL, 1.0};
    dpz_svg_series(s, &f, x, v, n, &line);
    markers(s, &f, x, v, sw->d_conv, n, DPZ_SVG_BLUE);
    double ly = LEGY;
    dpz_svg_legend_entry(s, LEGX, ly, &line, 1, 0, "dipole validity");
    ly += 20;
    dpz_svg_style bst = {NULL, 0, NULL, DPZ_SVG_VERMILLION, 0.13};
    dpz_svg_legend_entry(s, LEGX, ly, &bst, 0, 3, "warning band");
    ly += 20;
    dpz_svg_legend_entry(s, LEGX, ly, &thr, 1, 0, "threshold 0.1");
    ly += 26;
    ly = legend_convergence(s, ly, count_unconverged(sw->d_conv, n), n);
    size_t above = 0;
    double worst = -1, wl = 0;
    for (size_t i = 0; i < n; i++) {
        if (v[i] > PIC_VALIDITY_WARN)
            above++;
        if (isfinite(v[i]) && v[i] > worst) {
            worst = v[i];
            wl = x[i];
        }
    }
    char t[96];
    snprintf(t, sizeof t, "%zu of %zu above 0.1", above, n);
    dpz_svg_text(s, LEGX, ly + 4, 11.5, DPZ_SVG_START, 0, 0, t);
    if (worst >= 0) {
        snprintf(t, sizeof t, "worst %.3g at %.4g nm", worst, wl);
        dpz_svg_text(s, LEGX, ly + 19, 11.5, DPZ_SVG_START, 0, 0, t);
    }
    free(x);
}

void dpz__pic_plot_render(dpz_svg *s, const dpz_pic_sweep *sw, dpz_pic_kind kind,
                          int standalone)
{
    static const char *const titles[DPZ_PIC_COUNT] = {
        "Electric polarizability a_ee against wavelength",
        "Magnetic polarizability a_mm against wavelength",
        "Magneto-electric polarizability a_em against wavelength",
        "Cross sections: full solve and point-dipole model",
        "Dipole validity against wavelength"};
    if (kind >= DPZ_PIC_COUNT)
        return;
    dpz_svg_begin(s, PW, PH, standalone, titles[kind]);
    switch (kind) {
    case DPZ_PIC_ALPHA_EE:
        render_alpha(s, sw, 0, 0, "\u03B1_ee");
        break;
    case DPZ_PIC_ALPHA_MM:
        render_alpha(s, sw, 3, 3, "\u03B1_mm");
        break;
    case DPZ_PIC_ALPHA_EM:
        render_alpha(s, sw, 0, 3, "\u03B1_em");
        break;
    case DPZ_PIC_CROSS:
        render_cross(s, sw);
        break;
    case DPZ_PIC_VALIDITY:
        render_validity(s, sw);
        break;
    default:
        break;
    }
    dpz_svg_end(s);
}

/* ---- the command
 * ----------------------------------------------------------------------- */

static void plot_usage(FILE *out)
{
    fprintf(
        out,
        "usage: dipolize plot DIR [-o OUTDIR]\n"
        "\n"
        "Draws SVG plots (640 x 400 px) from the tables of a sweep directory:\n"
        "  alpha_ee.svg          real and imaginary parts of the principal components\n"
        "                        of a_ee (m^3, scaled axis) against wavelength (nm)\n"
        "  alpha_mm.svg          the same for a_mm\n"
        "  alpha_em.svg          the magneto-electric block, only when\n"
        "                        max|a_em| > 1e-3 max|A|\n"
        "  cross_sections.svg    extinction, absorption, scattering (m^2): full solve\n"
        "                        (solid) beside the point-dipole model (dashed)\n"
        "  dipole_validity.svg   the dipole-validity diagnostic with its warning band\n"
        "                        above 0.1\n"
        "Wavelengths whose solves did not converge are drawn as hollow markers.\n"
        "\n"
        "options:\n"
        "  -o, --output OUTDIR   directory for the SVG files (default DIR/plots;\n"
        "                        created if missing, its parent must exist)\n"
        "  -h, --help            this text\n"
        "\n"
        "example:\n"
        "  dipolize plot run1 -o run1/figures\n");
}

/* Creates `dir` if it does not exist; 0 or -1 (errno). */
static int ensure_dir(const char *dir)
{
    struct stat st;
    if (stat(dir, &st) == 0) {
        if (S_ISDIR(st.st_mode))
            return 0;
        errno = ENOTDIR;
        return -1;
    }
    return mkdir(dir, 0777);
}

int dpz_cli_plot(int argc, char **argv)
{
    const char *dir = NULL, *outdir = NULL;
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (strcmp(a, "-h") == 0 || strcmp(a, "--help") == 0) {
            plot_usage(stdout);
            return 0;
        } else if (strcmp(a, "-o") == 0 || strcmp(a, "--output") == 0) {
            if (i + 1 >= argc) {
                fprintf(stderr, "dipolize: plot: %s needs a directory\n", a);
                return 2;
            }
            if (outdir) {
                fprintf(stderr, "dipolize: plot: %s given twice\n", a);
                return 2;
            }
            outdir = argv[++i];
        } else if (a[0] == '-' && a[1] != '\0') {
            fprintf(stderr,
                    "dipolize: plot: unknown option '%s' (see dipolize plot --help)\n",
                    a);
            return 2;
        } else if (!dir) {
            dir = a;
        } else {
            fprintf(stderr, "dipolize: plot: unexpected argument '%s' (one DIR only)\n",
                    a);
            return 2;
        }
    }
    if (!dir) {
        fprintf(stderr,
                "dipolize: plot: missing the sweep directory (usage: dipolize plot "
                "DIR [-o OUTDIR])\n");
        return 2;
    }
    struct stat dst;
    if (stat(dir, &dst) != 0 || !S_ISDIR(dst.st_mode)) {
        fprintf(stderr,
                "dipolize: plot: %s is not a directory (give a sweep directory)\n", dir);
        return 2;
    }
    dpz_err err;
    dpz_err_clear(&err);
    dpz_pic_sweep sw;
    dpz_status st = dpz__pic_sweep_load(dir, &sw, &err);
    if (st != DPZ_OK)
        return dpz__pic_fail(st, err.msg);

    /* Render everything in memory first: no file is written unless all plots are ready.
     */
    dpz_svg svgs[DPZ_PIC_COUNT];
    int want[DPZ_PIC_COUNT];
    int rc = 0;
    for (int k = 0; k < DPZ_PIC_COUNT; k++) {
        dpz_svg_init(&svgs[k], NULL);
        want[k] = dpz__pic_plot_wanted(&sw, (dpz_pic_kind)k);
        if (want[k]) {
            dpz__pic_plot_render(&svgs[k], &sw, (dpz_pic_kind)k, 1);
            if (dpz_svg_ok(&svgs[k]) != 0)
                rc = dpz__pic_fail(DPZ_ENOMEM, "plot: out of memory");
        }
    }
    char *od = NULL;
    if (rc == 0) {
        od = outdir ? strdup(outdir) : dpz__pic_join(dir, "plots");
        if (!od)
            rc = dpz__pic_fail(DPZ_ENOMEM, "plot: out of memory");
    }
    if (rc == 0 && ensure_dir(od) != 0) {
        fprintf(stderr, "dipolize: plot: cannot create the output directory %s: %s\n", od,
                strerror(errno));
        rc = 2;
    }
    for (int k = 0; k < DPZ_PIC_COUNT && rc == 0; k++) {
        if (!want[k])
            continue;
        char *path = dpz__pic_join(od, dpz__pic_plot_file((dpz_pic_kind)k));
        if (!path) {
            rc = dpz__pic_fail(DPZ_ENOMEM, "plot: out of memory");
        } else if (dpz_svg_write_file(path, svgs[k].buf, svgs[k].len) != 0) {
            fprintf(stderr, "dipolize: plot: cannot write %s: %s\n", path,
                    strerror(errno));
            rc = 2;
        } else {
            printf("wrote %s\n", path);
        }
        free(path);
    }
    if (rc == 0) {
        if (!want[DPZ_PIC_ALPHA_EM])
            printf("alpha_em.svg not written: max|a_em| <= %g max|A|\n",
                   PIC_EM_SIGNIFICANT);
        if (!sw.has_cs)
            printf("cross_sections.svg not written: %s/cross_sections.csv not found\n",
                   dir);
        else if (!want[DPZ_PIC_CROSS])
            printf("cross_sections.svg not written: cross_sections.csv has no rows\n");
        if (!sw.has_diag)
            printf("dipole_validity.svg not written: %s/diagnostics.csv not found\n",
                   dir);
        else if (!want[DPZ_PIC_VALIDITY])
            printf("dipole_validity.svg not written: diagnostics.csv has no rows\n");
    }
    for (int k = 0; k < DPZ_PIC_COUNT; k++)
        dpz_svg_free(&svgs[k]);
    free(od);
    dpz__pic_sweep_free(&sw);
    return rc;
}
