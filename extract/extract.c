/* extract.c: the top-level extraction API (see dpz_extract.h): 6x6 tensor with
 * diagnostics, static tensor, size expansion and cross sections. */
#include "dpz_extract.h"

#include <math.h>
#include <string.h>

#include <lapacke.h>

#include "dpz_diag.h"
#include "dpz_tblock.h"
#include "extract_int.h"

/* ---- shared set-up -------------------------------------------------------------------
 */

static dpz_status check_setup(const dpz_setup *s, dpz_err *err)
{
    if (!s || !s->grid)
        return dpz_err_set(err, DPZ_EINVAL, "extract: NULL setup or grid");
    if (s->grid->n_occ == 0)
        return dpz_err_set(err, DPZ_EINVAL, "extract: the grid has no occupied voxel");
    if (!(s->host_index > 0.0) || !isfinite(s->host_index))
        return dpz_err_set(err, DPZ_EINVAL, "extract: host index %g must be positive",
                           s->host_index);
    if (s->has_origin && (!isfinite(s->origin_m[0]) || !isfinite(s->origin_m[1]) ||
                          !isfinite(s->origin_m[2])))
        return dpz_err_set(err, DPZ_EINVAL, "extract: origin is not finite");
    return DPZ_OK;
}

/* The caller's solver options, or the documented defaults when they were left zeroed. */
static dpz_solve_opts solve_opts(const dpz_setup *s)
{
    if (s->solve.tol == 0.0 && s->solve.max_iter == 0)
        return dpz_solve_opts_default();
    return s->solve;
}

/* An operator at wavenumber k (k = 0: static) with its diagonal. */
typedef struct opctx {
    dpz_fftop *op;
    double complex *inv_alpha;
    dpz_linop lin;
} opctx;

static void opctx_free(opctx *c)
{
    dpz_fftop_destroy(c->op);
    dpz__free(c->inv_alpha);
    c->op = NULL;
    c->inv_alpha = NULL;
}

static dpz_status opctx_make(opctx *c, const dpz_setup *s, double k, dpz_err *err)
{
    memset(c, 0, sizeof *c);
    const dpz_grid *g = s->grid;
    c->inv_alpha = dpz__malloc(g->n_occ * sizeof *c->inv_alpha);
    if (!c->inv_alpha)
        return dpz_err_set(err, DPZ_ENOMEM, "extract: out of memory for %zu voxels",
                           g->n_occ);
    dpz_status st = dpz_operator_inv_alpha(g, s->eps_label, s->host_index, k, s->model,
                                           c->inv_alpha, err);
    if (st == DPZ_OK)
        st = dpz_fftop_create(&c->op, g, k, s->model, c->inv_alpha, &s->op, err);
    if (st != DPZ_OK) {
        opctx_free(c);
        return st;
    }
    c->lin = dpz_fftop_linop(c->op);
    return DPZ_OK;
}

static int is_noconv(dpz_status st)
{
    return st == DPZ_ENOCONV || st == DPZ_EBREAKDOWN || st == DPZ_ESTAGNATION;
}

static int lossless_labels(const dpz_setup *s)
{
    size_t counts[256];
    dpz_grid_label_counts(s->grid, counts);
    for (int l = 1; l < 256; l++)
        if (counts[l] && cimag(s->eps_label[l]) != 0.0)
            return 0;
    return 1;
}

/* 3x3 complex inverse by the adjugate; returns -1 when singular. */
static int inv3(double complex a[3][3], double complex out[3][3])
{
    double complex c[3][3];
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++) {
            int i1 = (i + 1) % 3, i2 = (i + 2) % 3, j1 = (j + 1) % 3, j2 = (j + 2) % 3;
            c[j][i] = a[i1][j1] * a[i2][j2] - a[i1][j2] * a[i2][j1];
        }
    double complex det = a[0][0] * c[0][0] + a[0][1] * c[1][0] + a[0][2] * c[2][0];
    double scale = 0.0;
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            scale = fmax(scale, cabs(a[i][j]));
    if (!(cabs(det) > 1e-300) || cabs(det) < 1e-14 * scale * scale * scale)
        return -1;
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            out[i][j] = c[i][j] / det;
    return 0;
}

/* ---- 6x6 tensor
 * ------------------------------------------------------------------------ */

dpz_status dpz_tensor_compute(const dpz_setup *setup, double lambda0_m, dpz_tensor *out,
                              double complex *warm[6], dpz_err *err)
{
    dpz_status st = check_setup(setup, err);
    if (st != DPZ_OK)
        return st;
    if (!out)
        return dpz_err_set(err, DPZ_EINVAL, "tensor: NULL output");
    if (!(lambda0_m > 0.0) || !isfinite(lambda0_m))
        return dpz_err_set(err, DPZ_EINVAL, "tensor: wavelength %g m must be positive",
                           lambda0_m);
    memset(out, 0, sizeof *out);
    const dpz_grid *g = setup->grid;
    double k = 2.0 * DPZ_XPI * setup->host_index / lambda0_m;
    /* Far below x = k a_eq ~ 1e-30 the order-1 T block (~x^3) and the magnetic response
     * (~x^2) run into the underflow range of doubles and came out as zeros (a_mm at
     * x = 1e-68, every block at 1e-108), while the tensor equals the static one to all
     * digits long before: refuse instead of returning zeros. */
    double x = k * dpz_grid_aeq(g);
    if (!(x >= 1e-30))
        return dpz_err_set(
            err, DPZ_ERANGE,
            "tensor: wavelength %g m gives the size parameter x = k a_eq = "
            "%.3g, below 1e-30: at such sizes the tensor is the static "
            "one (compute the static tensor instead)",
            lambda0_m, x);
    out->lambda0_m = lambda0_m;
    out->k_per_m = k;
    out->host_index = setup->host_index;
    dpz__extract_origin(g, setup->has_origin, setup->origin_m, out->origin_m);
    opctx c;
    st = opctx_make(&c, setup, k, err);
    if (st != DPZ_OK)
        return st;
    dpz_solve_opts so = solve_opts(setup);
    dpz_status sst = dpz_tblock_solve(g, out->origin_m, k, &c.lin, &so, 0x3fu, out->T,
                                      out->T2, out->T3, warm, out->rhs, err);
    opctx_free(&c);
    if (sst != DPZ_OK && sst != DPZ_ENOCONV)
        return sst;
    dpz_tblock_to_alpha(k, out->T, out->A);
    out->reciprocity = dpz_diag_reciprocity(out->A);
    out->dipole_validity = dpz_diag_validity(out->T, out->T2, out->T3);
    out->lossless = lossless_labels(setup);
    dpz_err derr;
    st = dpz_diag_absorption(out->T, out->T2, out->T3, &out->energy_balance,
                             out->absorption_eig, &derr);
    if (st == DPZ_OK)
        st = dpz_diag_fluctuation(k, out->A, NULL, out->fluct_eig, &derr);
    if (st != DPZ_OK)
        return dpz_err_set(err, st, "tensor: %s", derr.msg);
    out->converged = sst == DPZ_OK;
    return sst;
}

/* ---- static tensor
 * ----------------------------------------------------------------------- */

dpz_status dpz_static_compute(const dpz_setup *setup, double complex chi[3][3],
                              dpz_rhs_report rhs[3], dpz_err *err)
{
    dpz_status st = check_setup(setup, err);
    if (st != DPZ_OK)
        return st;
    if (!chi)
        return dpz_err_set(err, DPZ_EINVAL, "static: NULL output");
    const dpz_grid *g = setup->grid;
    size_t n3 = 3 * g->n_occ;
    opctx c;
    st = opctx_make(&c, setup, 0.0, err);
    if (st != DPZ_OK)
        return st;
    double complex *b = dpz__malloc(n3 * sizeof *b);
    double complex *x = dpz__malloc(n3 * sizeof *x);
    if (!b || !x) {
        dpz__free(b);
        dpz__free(x);
        opctx_free(&c);
        return dpz_err_set(err, DPZ_ENOMEM, "static: out of memory for %zu unknowns", n3);
    }
    dpz_solve_opts so = solve_opts(setup);
    int bad = -1;
    double badres = 0.0;
    st = DPZ_OK;
    for (int j = 0; j < 3; j++) {
        /* Uniform unit field along axis j (1 V/m): chi[:, j] = sum_i p~_i / E0, the
         * static polarizability of the dipole array (Purcell & Pennypacker 1973 at k =
         * 0). */
        for (size_t i = 0; i < n3; i++) {
            b[i] = (i % 3 == (size_t)j) ? 1.0 : 0.0;
            x[i] = 0.0;
        }
        dpz_solve_info info;
        dpz_err serr;
        dpz_status ss = dpz_solve(&c.lin, b, x, &so, &info, &serr);
        if (rhs) {
            rhs[j].status = ss;
            rhs[j].iterations = info.iterations;
            rhs[j].residual = info.residual;
        }
        dpz_solve_info_free(&info);
        if (ss != DPZ_OK && !is_noconv(ss)) {
            st = dpz_err_set(err, ss, "static: field along axis %d: %s", j, serr.msg);
            break;
        }
        if (ss != DPZ_OK && bad < 0) {
            bad = j;
            badres = info.residual;
        }
        double complex s[3] = {0.0, 0.0, 0.0};
        for (size_t v = 0; v < g->n_occ; v++)
            for (int i = 0; i < 3; i++)
                s[i] += x[3 * v + i];
        for (int i = 0; i < 3; i++)
            chi[i][j] = s[i];
    }
    dpz__free(b);
    dpz__free(x);
    opctx_free(&c);
    if (st != DPZ_OK)
        return st;
    if (bad >= 0)
        return dpz_err_set(
            err, DPZ_ENOCONV,
            "static: the solve for the field along axis %d did not converge "
            "(residual %.3g)",
            bad, badres);
    return DPZ_OK;
}

/* ---- size expansion
 * ----------------------------------------------------------------------- */

size_t dpz_expand_default_points(double x[64])
{
    /* Eight evenly spaced size parameters 0.05, 0.10, ..., 0.40: small enough for the
     * series to converge quickly, wide enough to separate x^2, x^3 and x^4. */
    for (size_t i = 0; i < 8; i++)
        x[i] = 0.05 * (double)(i + 1);
    return 8;
}

static void worse(dpz_rhs_report *w, const dpz_rhs_report *r)
{
    int rb = r->status != DPZ_OK, wb = w->status != DPZ_OK;
    if ((rb && !wb) || (rb == wb && r->residual > w->residual))
        *w = *r;
}

dpz_status dpz_expand_compute(const dpz_setup *setup, const double *x, size_t n,
                              dpz_expansion *out, dpz_err *err)
{
    dpz_status st = check_setup(setup, err);
    if (st != DPZ_OK)
        return st;
    if (!x || !out)
        return dpz_err_set(err, DPZ_EINVAL, "expand: NULL argument");
    if (n < 4 || n > 64)
        return dpz_err_set(
            err, DPZ_EINVAL,
            "expand: %zu size parameters given; the fit of C2, C3, C4 needs "
            "4 to 64",
            n);
    for (size_t i = 0; i < n; i++) {
        if (!(x[i] > 0.0) || !isfinite(x[i]))
            return dpz_err_set(err, DPZ_EINVAL,
                               "expand: size parameter %zu (%g) must be positive", i + 1,
                               x[i]);
        if (x[i] > DPZ_EXPAND_X_MAX)
            return dpz_err_set(
                err, DPZ_EINVAL,
                "expand: size parameter %zu (%g) exceeds %g: the expansion "
                "is a small-size series in x = k a_eq",
                i + 1, x[i], DPZ_EXPAND_X_MAX);
        for (size_t j = 0; j < i; j++)
            if (x[j] == x[i])
                return dpz_err_set(err, DPZ_EINVAL, "expand: size parameter %g repeated",
                                   x[i]);
    }
    memset(out, 0, sizeof *out);
    out->n_points = n;
    memcpy(out->points, x, n * sizeof *x);
    const dpz_grid *g = setup->grid;
    double vol = dpz_grid_volume(g), aeq = dpz_grid_aeq(g);
    double origin[3];
    dpz__extract_origin(g, setup->has_origin, setup->origin_m, origin);

    /* C0 = V chi^-1 from the static solve. */
    double complex chi[3][3], chinv[3][3];
    dpz_rhs_report srep[3];
    int conv = 1;
    st = dpz_static_compute(setup, chi, srep, err);
    if (st != DPZ_OK && st != DPZ_ENOCONV)
        return st;
    if (st == DPZ_ENOCONV)
        conv = 0;
    out->worst = srep[0];
    for (int j = 1; j < 3; j++)
        worse(&out->worst, &srep[j]);
    if (inv3(chi, chinv) != 0)
        return dpz_err_set(err, DPZ_ERANGE, "expand: the static tensor is singular");
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            out->C0[i][j] = vol * chinv[i][j];

    /* y(x) = V a_ee^-1(x) - C0 for every x, 9 elements each, column-major n x 9. */
    lapack_complex_double *B = dpz__malloc(9 * n * sizeof *B);
    lapack_complex_double *Y = dpz__malloc(9 * n * sizeof *Y);
    /* Columns x^2, x^3, x^4, and with seven or more points also x^5 and x^6: nuisance
     * terms that absorb the truncation of the series (the sphere's series has an x^6
     * term, Bohren & Huffman 1983 small-x expansion of a_1; a bianisotropic particle adds
     * odd orders through the magneto-electric coupling) so that it does not leak into C3.
     * Measured on a helix (eps 12.25, x = 0.05..0.4): the radiative check fell
     * from 5.7e-2 with three columns to the level of the small-x fit. */
    const size_t ncol = n >= 7 ? 5 : 3;
    lapack_complex_double *M = dpz__malloc(ncol * n * sizeof *M);
    if (!B || !Y || !M) {
        dpz__free(B);
        dpz__free(Y);
        dpz__free(M);
        return dpz_err_set(err, DPZ_ENOMEM, "expand: out of memory");
    }
    dpz_solve_opts so = solve_opts(setup);
    for (size_t p = 0; p < n; p++) {
        double k = x[p] / aeq;
        opctx c;
        st = opctx_make(&c, setup, k, err);
        if (st != DPZ_OK)
            break;
        double complex T[6][6], A[6][6];
        dpz_rhs_report rep[6];
        /* Only the electric block is needed: the three N-wave columns and order-1
         * projection (a_ee = -(6 pi i / k^3) U T_NN U^H). */
        st = dpz_tblock_solve(g, origin, k, &c.lin, &so, 0x07u, T, NULL, NULL, NULL, rep,
                              err);
        opctx_free(&c);
        if (st != DPZ_OK && st != DPZ_ENOCONV)
            break;
        if (st == DPZ_ENOCONV)
            conv = 0;
        for (int j = 0; j < 3; j++)
            worse(&out->worst, &rep[j]);
        dpz_tblock_to_alpha(k, T, A);
        double complex aee[3][3], ainv[3][3];
        for (int i = 0; i < 3; i++)
            for (int j = 0; j < 3; j++)
                aee[i][j] = A[i][j];
        if (inv3(aee, ainv) != 0) {
            st = dpz_err_set(err, DPZ_ERANGE, "expand: a_ee is singular at x = %g", x[p]);
            break;
        }
        for (int i = 0; i < 3; i++)
            for (int j = 0; j < 3; j++)
                Y[(size_t)(3 * i + j) * n + p] = vol * ainv[i][j] - out->C0[i][j];
        double xp = x[p] * x[p];
        for (size_t c = 0; c < ncol; c++, xp *= x[p])
            M[c * n + p] = xp;
        st = DPZ_OK;
    }
    if (st != DPZ_OK) {
        dpz__free(B);
        dpz__free(Y);
        dpz__free(M);
        return st;
    }
    /* Linear least squares for C2, C3, C4 (and the nuisance C5, C6) per element
     * (LAPACKE_zgels, QR; backward stable). */
    memcpy(B, Y, 9 * n * sizeof *B);
    lapack_complex_double *Mc = dpz__malloc(ncol * n * sizeof *Mc);
    if (!Mc) {
        dpz__free(B);
        dpz__free(Y);
        dpz__free(M);
        return dpz_err_set(err, DPZ_ENOMEM, "expand: out of memory");
    }
    memcpy(Mc, M, ncol * n * sizeof *Mc);
    lapack_int info =
        LAPACKE_zgels(LAPACK_COL_MAJOR, 'N', (lapack_int)n, (lapack_int)ncol, 9, Mc,
                      (lapack_int)n, B, (lapack_int)n);
    dpz__free(Mc);
    if (info != 0) {
        dpz__free(B);
        dpz__free(Y);
        dpz__free(M);
        return dpz_err_set(err, DPZ_ELAPACK, "expand: zgels failed (info %d)", (int)info);
    }
    double ymax = 0.0, res_max = 0.0;
    double ynorm[9], rnorm[9];
    for (int e = 0; e < 9; e++) {
        double complex c2 = B[(size_t)e * n], c3 = B[(size_t)e * n + 1],
                       c4 = B[(size_t)e * n + 2];
        int i = e / 3, j = e % 3;
        out->C2[i][j] = c2;
        out->C3[i][j] = c3;
        out->C4[i][j] = c4;
        double ys = 0.0, rs = 0.0;
        for (size_t p = 0; p < n; p++) {
            double complex y = Y[(size_t)e * n + p];
            double complex r = y;
            for (size_t c = 0; c < ncol; c++)
                r -= B[(size_t)e * n + c] * M[c * n + p];
            ys += creal(y * conj(y));
            rs += creal(r * conj(r));
        }
        ynorm[e] = sqrt(ys);
        rnorm[e] = sqrt(rs);
        ymax = fmax(ymax, ynorm[e]);
    }
    /* Relative residual per element; elements that vanish by symmetry are measured
     * against 1e-3 of the largest element instead of their own (zero) size. */
    for (int e = 0; e < 9; e++) {
        double scale = fmax(ynorm[e], 1e-3 * ymax);
        if (scale > 0.0)
            res_max = fmax(res_max, rnorm[e] / scale);
    }
    out->fit_residual = res_max;
    double rc = 0.0;
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++) {
            double complex d = out->C3[i][j] + (i == j ? 2.0 * I / 9.0 : 0.0);
            rc += creal(d * conj(d));
        }
    /* |C3 + (2i/9) I|_F / (2/9): the radiative-reaction term -i k^3 V/(6 pi) = -(2i/9)
     * x^3 (Draine 1988) is universal. */
    out->radiative_check = sqrt(rc) / (2.0 / 9.0);
    out->converged = conv;
    dpz__free(B);
    dpz__free(Y);
    dpz__free(M);
    if (!conv)
        return dpz_err_set(err, DPZ_ENOCONV,
                           "expand: at least one solve did not converge (worst residual "
                           "%.3g)",
                           out->worst.residual);
    return DPZ_OK;
}

/* ---- cross sections
 * ------------------------------------------------------------------------ */

dpz_status dpz_xsec_compute(const dpz_setup *setup, double lambda0_m,
                            const double khat[3], const double complex e0[3],
                            const dpz_tensor *tensor, dpz_xsec *out, dpz_err *err)
{
    dpz_status st = check_setup(setup, err);
    if (st != DPZ_OK)
        return st;
    if (!khat || !e0 || !tensor || !out)
        return dpz_err_set(err, DPZ_EINVAL, "cross sections: NULL argument");
    if (!(lambda0_m > 0.0) || !isfinite(lambda0_m))
        return dpz_err_set(err, DPZ_EINVAL,
                           "cross sections: wavelength %g m must be positive", lambda0_m);
    if (fabs(tensor->lambda0_m - lambda0_m) > 1e-12 * lambda0_m ||
        tensor->host_index != setup->host_index)
        return dpz_err_set(
            err, DPZ_EINVAL,
            "cross sections: the tensor was computed at another wavelength "
            "(%g m, not %g m) or host index",
            tensor->lambda0_m, lambda0_m);
    double kn = sqrt(khat[0] * khat[0] + khat[1] * khat[1] + khat[2] * khat[2]);
    if (!(kn > 0.0) || !isfinite(kn))
        return dpz_err_set(err, DPZ_EINVAL, "cross sections: direction is zero");
    double kh[3] = {khat[0] / kn, khat[1] / kn, khat[2] / kn};
    double e2 = 0.0;
    double complex kdote = 0.0;
    for (int c = 0; c < 3; c++) {
        e2 += creal(e0[c] * conj(e0[c]));
        kdote += kh[c] * e0[c];
    }
    if (!(e2 > 0.0) || !isfinite(e2))
        return dpz_err_set(err, DPZ_EINVAL, "cross sections: field amplitude is zero");
    if (cabs(kdote) > 1e-10 * sqrt(e2))
        return dpz_err_set(err, DPZ_EINVAL,
                           "cross sections: the field is not transverse to the direction "
                           "(|khat . E0| / |E0| = %.3g)",
                           cabs(kdote) / sqrt(e2));
    memset(out, 0, sizeof *out);
    const dpz_grid *g = setup->grid;
    size_t n3 = 3 * g->n_occ;
    double k = 2.0 * DPZ_XPI * setup->host_index / lambda0_m;
    const double *o = tensor->origin_m;
    opctx c;
    st = opctx_make(&c, setup, k, err);
    if (st != DPZ_OK)
        return st;
    double complex *b = dpz__malloc(n3 * sizeof *b);
    double complex *x = dpz__calloc(n3, sizeof *x);
    if (!b || !x) {
        dpz__free(b);
        dpz__free(x);
        opctx_free(&c);
        return dpz_err_set(err, DPZ_ENOMEM, "cross sections: out of memory");
    }
    /* E_inc(r_j) = E0 exp(i k khat . (r_j - o)): the phase is referred to the multipole
     * origin so that the dipole model below sees E(o) = E0. */
    for (size_t v = 0; v < g->n_occ; v++) {
        double r[3];
        dpz_grid_centre(g, g->occ[v], r);
        double ph =
            k * (kh[0] * (r[0] - o[0]) + kh[1] * (r[1] - o[1]) + kh[2] * (r[2] - o[2]));
        double complex f = cexp(I * ph);
        for (int cc = 0; cc < 3; cc++)
            b[3 * v + cc] = e0[cc] * f;
    }
    dpz_solve_opts so = solve_opts(setup);
    dpz_solve_info info;
    dpz_err serr;
    dpz_status ss = dpz_solve(&c.lin, b, x, &so, &info, &serr);
    out->rhs.status = ss;
    out->rhs.iterations = info.iterations;
    out->rhs.residual = info.residual;
    dpz_solve_info_free(&info);
    if (ss != DPZ_OK && !is_noconv(ss)) {
        dpz__free(b);
        dpz__free(x);
        opctx_free(&c);
        return dpz_err_set(err, ss, "cross sections: %s", serr.msg);
    }
    /* Optical theorem for a dipole array (Draine 1988, ApJ 333, 848; here in SI volume
     * units, p~ = p/(eps0 eps_h)): C_ext = k Im(sum_j conj(E_inc,j) . p~_j) / |E0|^2.
     * Absorption (same source): C_abs = (k/|E0|^2) sum_j [Im(p~_j . conj(1/alpha_j)
     * conj(p~_j)) - (k^3/(6 pi)) |p~_j|^2] = (k/|E0|^2) sum_j |p~_j|^2 (-Im(1/alpha_j) -
     * k^3/(6 pi)) for scalar alpha_j: the radiative-reaction part of 1/alpha_j carries no
     * absorption. */
    double sext = 0.0, sabs = 0.0, rr = k * k * k / (6.0 * DPZ_XPI);
    for (size_t v = 0; v < g->n_occ; v++) {
        double complex s = 0.0;
        double p2 = 0.0;
        for (int cc = 0; cc < 3; cc++) {
            s += conj(b[3 * v + cc]) * x[3 * v + cc];
            p2 += creal(x[3 * v + cc] * conj(x[3 * v + cc]));
        }
        sext += cimag(s);
        sabs += p2 * (-cimag(c.inv_alpha[v]) - rr);
    }
    out->ext = k * sext / e2;
    out->abs = k * sabs / e2;
    out->sca = out->ext - out->abs;
    dpz__free(b);
    dpz__free(x);
    opctx_free(&c);

    /* Point-dipole model: E(o) = E0, Z_h H(o) = khat x E0 for the plane wave; induced
     * [p~; Z_h m] = A [E; Z_h H]. Extinction (k/|E0|^2) Im(conj(E).p~ + conj(Z_h H).Z_h
     * m) and scattering k^4/(6 pi |E0|^2) (|p~|^2 + |Z_h m|^2) (Jackson 1999,
     * sec. 9.2-9.3, radiated power of electric and magnetic dipoles, in these units). */
    double complex f[6], pm[6];
    for (int cc = 0; cc < 3; cc++) {
        f[cc] = e0[cc];
        int c1 = (cc + 1) % 3, c2 = (cc + 2) % 3;
        f[3 + cc] = kh[c1] * e0[c2] - kh[c2] * e0[c1];
    }
    double ed = 0.0, sd = 0.0;
    for (int i = 0; i < 6; i++) {
        pm[i] = 0.0;
        for (int j = 0; j < 6; j++)
            pm[i] += tensor->A[i][j] * f[j];
    }
    for (int i = 0; i < 6; i++) {
        ed += cimag(conj(f[i]) * pm[i]);
        sd += creal(pm[i] * conj(pm[i]));
    }
    out->ext_dip = k * ed / e2;
    out->sca_dip = k * k * k * k / (6.0 * DPZ_XPI) * sd / e2;
    out->abs_dip = out->ext_dip - out->sca_dip;
    out->rel_diff =
        out->ext != 0.0 ? fabs(out->ext - out->ext_dip) / fabs(out->ext) : 0.0;
    if (ss != DPZ_OK)
        return dpz_err_set(err, DPZ_ENOCONV,
                           "cross sections: the plane-wave solve did not converge "
                           "(residual %.3g)",
                           out->rhs.residual);
    return DPZ_OK;
}
