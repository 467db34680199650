/* iter.c: Krylov solvers for the complex-symmetric discrete-dipole system A x = b.
 *
 * BiCGSTAB (van der Vorst, SIAM J. Sci. Stat. Comput. 13, 631 (1992)), preconditioned as
 * in Barrett et al., Templates for the Solution of Linear Systems (SIAM 1994),
 * sec. 2.3.8; COCG, conjugate orthogonal conjugate gradients for A^T = A (van der Vorst &
 * Melissen, IEEE Trans. Magn. 26, 706 (1990)); restarted GMRES(m) (Saad & Schultz, SIAM
 * J. Sci. Stat. Comput. 7, 856 (1986)) with complex Givens rotations. Jacobi (diagonal)
 * preconditioning: on the right for BiCGSTAB and GMRES (so the recurrence residual is the
 * residual of the original system) and as the symmetric-form preconditioner M = diag(A)
 * in COCG (M^-1 A is symmetric in the bilinear form x^T M y). Every reported convergence
 * is confirmed by recomputing the true residual b - A x. */
#include "dpz_iter.h"

#include <float.h>
#include <math.h>
#include <string.h>

/* Breakdown threshold: a Krylov scalar that is this small relative to the norms it is
 * built from carries no information (rounding level; common practice). */
#define BREAKDOWN_TOL (1e3 * DBL_EPSILON)
/* BiCGSTAB restarts with a fresh shadow residual after a breakdown; this many restarts in
 * a row without progress are reported as a breakdown. */
#define MAX_RESTARTS 3

struct dpz_iter {
    size_t n;
    dpz_solve_opts opts;
    dpz_linop A;             /* copied descriptor; the operator itself is borrowed */
    const double complex *b; /* borrowed */
    double bnorm;
    double complex *x, *r;
    const double complex *diag; /* borrowed from A: Jacobi divides by it */
    int use_jacobi;
    /* BiCGSTAB */
    double complex *rhat, *p, *v, *s, *t, *ph; /* s: COCG's z = M^-1 r only */
    double complex rho, alpha, omega;
    int fresh;          /* the next BiCGSTAB/COCG step starts a new recurrence */
    int restarts;       /* BiCGSTAB restarts without progress */
    double restart_res; /* residual at the last BiCGSTAB restart */
    /* GMRES: basis V (m+1 vectors), Hessenberg H ((m+1) x m, column-major), rotations,
     * right-hand side g, position j in the cycle. */
    size_t m, j;
    double complex *V, *H, *cs_s, *g, *y;
    double *cs_c;
    /* state */
    dpz_status status;
    size_t iterations, applies;
    double residual, res0;
    double *hist, *histmin;
    size_t n_hist, cap_hist;
};

/* ---- names and defaults -------------------------------------------------------------
 */

const char *dpz_solver_name(dpz_solver_kind kind)
{
    switch (kind) {
    case DPZ_SOLVER_BICGSTAB:
        return "bicgstab";
    case DPZ_SOLVER_COCG:
        return "cocg";
    case DPZ_SOLVER_GMRES:
        return "gmres";
    }
    return "unknown";
}

dpz_status dpz_solver_parse(const char *name, dpz_solver_kind *kind, dpz_err *err)
{
    static const dpz_solver_kind all[] = {DPZ_SOLVER_BICGSTAB, DPZ_SOLVER_COCG,
                                          DPZ_SOLVER_GMRES};
    if (name && kind) {
        for (size_t i = 0; i < 3; i++) {
            if (strcmp(name, dpz_solver_name(all[i])) == 0) {
                *kind = all[i];
                return DPZ_OK;
            }
        }
    }
    return dpz_err_set(err, DPZ_EINVAL,
                       "solver: unknown name '%s' (choose bicgstab, cocg or gmres)",
                       name ? name : "(null)");
}

/* tol 1e-8: the discretization error of a DDA solve is 1e-4 or more (lattice spacing,
 * staircase), so 1e-8 leaves the algebraic error four orders below it while keeping the
 * iteration count moderate; reciprocity and energy checks of the extracted tensors then
 * test the physics, not the solver. Jacobi is on: it costs one multiply per entry and
 * equalizes materials of very different 1/alpha in one particle. */
dpz_solve_opts dpz_solve_opts_default(void)
{
    dpz_solve_opts o = {DPZ_SOLVER_BICGSTAB, 1e-8, 10000, 30, 1, 1000};
    return o;
}

void dpz_solve_info_free(dpz_solve_info *info)
{
    if (!info)
        return;
    dpz__free(info->history);
    info->history = NULL;
    info->n_history = 0;
}

/* ---- vector helpers -------------------------------------------------------------------
 */

static double nrm2(size_t n, const double complex *x)
{
    double s = 0.0;
    for (size_t i = 0; i < n; i++)
        s += creal(x[i]) * creal(x[i]) + cimag(x[i]) * cimag(x[i]);
    return sqrt(s);
}

/* Hermitian inner product x^H y. */
static double complex dotc(size_t n, const double complex *x, const double complex *y)
{
    double complex s = 0.0;
    for (size_t i = 0; i < n; i++)
        s += conj(x[i]) * y[i];
    return s;
}

/* Bilinear form x^T y (no conjugation), the one that matches A^T = A in COCG. */
static double complex dotu(size_t n, const double complex *x, const double complex *y)
{
    double complex s = 0.0;
    for (size_t i = 0; i < n; i++)
        s += x[i] * y[i];
    return s;
}

/* z = M^-1 r (copy when not preconditioning). Dividing by the operator's diagonal on the
 * fly instead of storing its inverse saves one vector; the division costs nothing next to
 * an operator application. */
static void precond(const dpz_iter *it, const double complex *r, double complex *z)
{
    if (it->use_jacobi)
        for (size_t i = 0; i < it->n; i++)
            z[i] = r[i] / it->diag[i];
    else
        memcpy(z, r, it->n * sizeof *z);
}

static dpz_status apply(dpz_iter *it, const double complex *x, double complex *y,
                        dpz_err *err)
{
    it->applies++;
    return it->A.apply(it->A.ctx, x, y, err);
}

/* r = b - A x, using `tmp` for A x; returns the status of the apply. */
static dpz_status true_residual(dpz_iter *it, double complex *tmp, dpz_err *err)
{
    dpz_status st = apply(it, it->x, tmp, err);
    if (st != DPZ_OK)
        return st;
    for (size_t i = 0; i < it->n; i++)
        it->r[i] = it->b[i] - tmp[i];
    it->residual = nrm2(it->n, it->r) / it->bnorm;
    return DPZ_OK;
}

/* ---- create / destroy
 * ------------------------------------------------------------------ */

void dpz_iter_destroy(dpz_iter *it)
{
    if (!it)
        return;
    double complex *vec[] = {it->x,  it->r, it->rhat, it->p,    it->v, it->s, it->t,
                             it->ph, it->V, it->H,    it->cs_s, it->g, it->y};
    for (size_t i = 0; i < sizeof vec / sizeof vec[0]; i++)
        dpz__free(vec[i]);
    dpz__free(it->cs_c);
    dpz__free(it->hist);
    dpz__free(it->histmin);
    dpz__free(it);
}

dpz_status dpz_iter_create(dpz_iter **out, size_t n, const dpz_solve_opts *opts,
                           dpz_err *err)
{
    if (!out)
        return dpz_err_set(err, DPZ_EINVAL, "solver: NULL output");
    *out = NULL;
    dpz_solve_opts o = opts ? *opts : dpz_solve_opts_default();
    if (n == 0)
        return dpz_err_set(err, DPZ_EINVAL, "solver: empty system");
    if (!(o.tol > 0.0) || !(o.tol < 1.0))
        return dpz_err_set(err, DPZ_EINVAL, "solver: tolerance %g must lie in (0, 1)",
                           o.tol);
    if (o.max_iter == 0)
        return dpz_err_set(err, DPZ_EINVAL, "solver: max_iter must be at least 1");
    if (o.kind != DPZ_SOLVER_BICGSTAB && o.kind != DPZ_SOLVER_COCG &&
        o.kind != DPZ_SOLVER_GMRES)
        return dpz_err_set(err, DPZ_EINVAL, "solver: unknown solver kind %d",
                           (int)o.kind);
    if (o.kind == DPZ_SOLVER_GMRES && (o.restart == 0 || o.restart > 10000))
        return dpz_err_set(err, DPZ_EINVAL,
                           "solver: GMRES restart %zu must lie in 1..10000", o.restart);
    dpz_iter *it = dpz__calloc(1, sizeof *it);
    if (!it)
        return dpz_err_set(err, DPZ_ENOMEM, "solver: out of memory");
    it->n = n;
    it->opts = o;
    it->status = DPZ_EINVAL; /* until set */
    /* Vectors of n entries: BiCGSTAB 7 (x r rhat p v t and one for p^ then s^), COCG 5,
     * GMRES 4 + m + 1: memory per unknown is what limits the largest particle. */
    int ok = (it->x = dpz__calloc(n, sizeof(double complex))) &&
             (it->r = dpz__calloc(n, sizeof(double complex))) &&
             (it->p = dpz__calloc(n, sizeof(double complex))) &&
             (it->v = dpz__calloc(n, sizeof(double complex)));
    if (ok && o.kind == DPZ_SOLVER_BICGSTAB)
        ok = (it->rhat = dpz__calloc(n, sizeof(double complex))) &&
             (it->t = dpz__calloc(n, sizeof(double complex))) &&
             (it->ph = dpz__calloc(n, sizeof(double complex)));
    if (ok && o.kind == DPZ_SOLVER_COCG)
        ok = (it->s = dpz__calloc(n, sizeof(double complex))) != NULL; /* z = M^-1 r */
    if (ok && o.kind == DPZ_SOLVER_GMRES) {
        size_t m = o.restart;
        it->m = m;
        size_t vn;
        ok = dpz_mul_overflow(n, m + 1, &vn) == 0 &&
             (it->V = dpz__calloc(vn, sizeof(double complex))) &&
             (it->H = dpz__calloc((m + 1) * m, sizeof(double complex))) &&
             (it->cs_s = dpz__calloc(m, sizeof(double complex))) &&
             (it->cs_c = dpz__calloc(m, sizeof(double))) &&
             (it->g = dpz__calloc(m + 1, sizeof(double complex))) &&
             (it->y = dpz__calloc(m, sizeof(double complex)));
    }
    /* Residual history: preallocated so that iterating does not allocate (grown by
     * doubling only beyond 100000 iterations). */
    it->cap_hist = o.max_iter < 100000 ? o.max_iter : 100000;
    ok = ok && (it->hist = dpz__calloc(it->cap_hist, sizeof(double))) &&
         (it->histmin = dpz__calloc(it->cap_hist, sizeof(double)));
    if (!ok) {
        dpz_iter_destroy(it);
        return dpz_err_set(err, DPZ_ENOMEM, "solver: out of memory for %zu unknowns", n);
    }
    *out = it;
    return DPZ_OK;
}

/* ---- method set-up -------------------------------------------------------------------
 */

/* Starts (or restarts) the recurrences from the current x and r. */
static dpz_status begin_cycle(dpz_iter *it, dpz_err *err)
{
    size_t n = it->n;
    (void)err;
    switch (it->opts.kind) {
    case DPZ_SOLVER_BICGSTAB:
        memcpy(it->rhat, it->r, n * sizeof *it->r);
        it->fresh = 1;
        break;
    case DPZ_SOLVER_COCG:
        precond(it, it->r, it->s);
        memcpy(it->p, it->s, n * sizeof *it->p);
        it->rho = dotu(n, it->r, it->s);
        break;
    case DPZ_SOLVER_GMRES: {
        double beta = nrm2(n, it->r);
        for (size_t i = 0; i < n; i++)
            it->V[i] = it->r[i] / beta;
        memset(it->g, 0, (it->m + 1) * sizeof *it->g);
        it->g[0] = beta;
        it->j = 0;
        break;
    }
    }
    return DPZ_OK;
}

dpz_status dpz_iter_set(dpz_iter *it, const dpz_linop *A, const double complex *b,
                        const double complex *x0, dpz_err *err)
{
    if (!it || !A || !A->apply || !b)
        return dpz_err_set(err, DPZ_EINVAL, "solver: NULL argument");
    if (A->n != it->n)
        return dpz_err_set(err, DPZ_EINVAL,
                           "solver: operator of order %zu for a solver of %zu unknowns",
                           A->n, it->n);
    size_t n = it->n;
    it->A = *A;
    it->b = b;
    it->iterations = it->applies = 0;
    it->n_hist = 0;
    it->restarts = 0;
    it->restart_res = INFINITY;
    it->use_jacobi = 0;
    it->diag = NULL;
    if (it->opts.jacobi && A->diag) {
        for (size_t i = 0; i < n; i++) {
            if (A->diag[i] == 0.0 || !isfinite(cabs(A->diag[i]))) {
                it->status = DPZ_EINVAL;
                return dpz_err_set(err, DPZ_EINVAL,
                                   "solver: diagonal entry %zu is zero or not finite; "
                                   "Jacobi preconditioning impossible",
                                   i);
            }
        }
        it->use_jacobi = 1;
        it->diag = A->diag;
    }
    it->bnorm = nrm2(n, b);
    if (!isfinite(it->bnorm)) {
        it->status = DPZ_EINVAL;
        return dpz_err_set(err, DPZ_EINVAL, "solver: right-hand side is not finite");
    }
    if (it->bnorm == 0.0) {
        /* A x = 0 has the solution x = 0 exactly (A is nonsingular by assumption). */
        memset(it->x, 0, n * sizeof *it->x);
        memset(it->r, 0, n * sizeof *it->r);
        it->residual = it->res0 = 0.0;
        it->status = DPZ_OK;
        return DPZ_OK;
    }
    if (x0) {
        memcpy(it->x, x0, n * sizeof *it->x);
        dpz_status st = true_residual(it, it->v, err);
        if (st != DPZ_OK)
            return it->status = st;
        /* Minimal-residual scaling of the guess: x0 -> g x0 with g = (A x0)^H b /
         * ||A x0||^2, the least-squares fit of b on A x0 (a one-dimensional Galerkin
         * projection; e.g. Saad, Iterative Methods for Sparse Linear Systems, 2nd ed.,
         * 2003, sec. 5.3). Its residual is never larger than that of x0 itself (g = 1) or
         * of a zero guess (g = 0), so a guess from a neighbouring wavelength whose
         * amplitude is off (near a resonance) cannot start worse than a cold start. */
        double vv = nrm2(n, it->v);
        if (vv > 0.0 && isfinite(vv)) {
            double complex g = dotc(n, it->v, b) / (vv * vv);
            if (isfinite(creal(g)) && isfinite(cimag(g)) && g != 1.0) {
                for (size_t i = 0; i < n; i++) {
                    it->x[i] *= g;
                    it->r[i] = b[i] - g * it->v[i];
                }
                it->residual = nrm2(n, it->r) / it->bnorm;
            }
        }
    } else {
        memset(it->x, 0, n * sizeof *it->x);
        memcpy(it->r, b, n * sizeof *it->r);
        it->residual = 1.0;
    }
    it->res0 = it->residual;
    if (!isfinite(it->residual)) {
        it->status = DPZ_EINVAL;
        return dpz_err_set(err, DPZ_EINVAL,
                           "solver: initial guess gives a non-finite residual");
    }
    if (it->residual <= it->opts.tol) {
        it->status = DPZ_OK;
        return DPZ_OK;
    }
    it->status = DPZ_CONTINUE;
    begin_cycle(it, err);
    return DPZ_OK;
}

/* ---- bookkeeping
 * ------------------------------------------------------------------------ */

static dpz_status record(dpz_iter *it, double res, dpz_err *err)
{
    if (it->n_hist == it->cap_hist) {
        size_t cap = 2 * it->cap_hist;
        double *h = dpz__realloc(it->hist, cap * sizeof *h);
        if (!h)
            return dpz_err_set(err, DPZ_ENOMEM, "solver: out of memory for the history");
        it->hist = h;
        double *hm = dpz__realloc(it->histmin, cap * sizeof *hm);
        if (!hm)
            return dpz_err_set(err, DPZ_ENOMEM, "solver: out of memory for the history");
        it->histmin = hm;
        it->cap_hist = cap;
    }
    double prev = it->n_hist ? it->histmin[it->n_hist - 1] : it->res0;
    it->hist[it->n_hist] = res;
    it->histmin[it->n_hist] = res < prev ? res : prev;
    it->n_hist++;
    return DPZ_OK;
}

/* Common end of an iteration: convergence is claimed only after the true residual
 * confirms it; otherwise the recurrences restart from the true residual. */
static dpz_status finish_step(dpz_iter *it, double est, int end_of_cycle, dpz_err *err)
{
    it->iterations++;
    dpz_status st = record(it, est, err);
    if (st != DPZ_OK)
        return it->status = st;
    it->residual = est;
    if (est <= it->opts.tol || end_of_cycle) {
        st = true_residual(it, it->v, err);
        if (st != DPZ_OK)
            return it->status = st;
        if (it->residual <= it->opts.tol) {
            it->status = DPZ_OK;
            return DPZ_OK;
        }
        begin_cycle(it, err);
    }
    if (it->iterations >= it->opts.max_iter) {
        it->status = DPZ_ENOCONV;
        return dpz_err_set(err, DPZ_ENOCONV,
                           "solver: %s did not reach the tolerance %g in %zu iterations "
                           "(relative residual %.3g)",
                           dpz_solver_name(it->opts.kind), it->opts.tol, it->iterations,
                           it->residual);
    }
    size_t W = it->opts.stagnation_window;
    if (W > 0 && it->n_hist > W) {
        double then = it->histmin[it->n_hist - 1 - W];
        double now = it->histmin[it->n_hist - 1];
        if (now > 0.9 * then) {
            it->status = DPZ_ESTAGNATION;
            return dpz_err_set(
                err, DPZ_ESTAGNATION,
                "solver: %s stagnated: the residual fell by less than 10%% "
                "over %zu iterations (relative residual %.3g)",
                dpz_solver_name(it->opts.kind), W, it->residual);
        }
    }
    return DPZ_CONTINUE;
}

static dpz_status breakdown(dpz_iter *it, const char *what, dpz_err *err)
{
    it->status = DPZ_EBREAKDOWN;
    return dpz_err_set(err, DPZ_EBREAKDOWN,
                       "solver: %s broke down (%s) after %zu iterations at relative "
                       "residual %.3g",
                       dpz_solver_name(it->opts.kind), what, it->iterations,
                       it->residual);
}

/* BiCGSTAB: after a breakdown, restart with the shadow residual set to the current
 * residual (a common remedy), a bounded number of times. */
static dpz_status bicgstab_restart_or_fail(dpz_iter *it, const char *what, dpz_err *err)
{
    /* A restart that follows progress (a lower residual than at the previous restart) is
     * the ordinary loss of bi-orthogonality on hard problems; only repeated restarts
     * without progress are a breakdown. */
    if (it->residual < 0.999 * it->restart_res)
        it->restarts = 0;
    it->restart_res = it->residual;
    if (it->restarts >= MAX_RESTARTS)
        return breakdown(it, what, err);
    it->restarts++;
    memcpy(it->rhat, it->r, it->n * sizeof *it->r);
    it->fresh = 1;
    return DPZ_CONTINUE;
}

/* ---- the three methods
 * ------------------------------------------------------------------- */

/* One BiCGSTAB iteration in seven vectors: s overwrites r (r is not needed once s is
 * formed), and x takes its alpha p^ part at once so that the buffer of p^ can hold s^. */
static dpz_status step_bicgstab(dpz_iter *it, dpz_err *err)
{
    size_t n = it->n;
    double complex *x = it->x, *r = it->r, *p = it->p, *v = it->v, *t = it->t;
    double complex *ph = it->ph; /* p^ = M^-1 p, later s^ = M^-1 s */
    double complex rho1 = dotc(n, it->rhat, r);
    double rn = nrm2(n, r), rhn = nrm2(n, it->rhat);
    if (cabs(rho1) <= BREAKDOWN_TOL * rn * rhn)
        return bicgstab_restart_or_fail(it, "rho = rhat^H r vanished", err);
    if (it->fresh) {
        memcpy(p, r, n * sizeof *p);
        it->fresh = 0;
    } else {
        double complex beta = (rho1 / it->rho) * (it->alpha / it->omega);
        for (size_t i = 0; i < n; i++)
            p[i] = r[i] + beta * (p[i] - it->omega * v[i]);
    }
    it->rho = rho1;
    precond(it, p, ph);
    dpz_status st = apply(it, ph, v, err);
    if (st != DPZ_OK)
        return it->status = st;
    double complex den = dotc(n, it->rhat, v);
    if (cabs(den) <= BREAKDOWN_TOL * rhn * nrm2(n, v))
        return bicgstab_restart_or_fail(it, "rhat^H A p vanished", err);
    it->alpha = rho1 / den;
    /* Half step: x += alpha p^, s = r - alpha v (stored in r). */
    for (size_t i = 0; i < n; i++) {
        x[i] += it->alpha * ph[i];
        r[i] -= it->alpha * v[i];
    }
    double sn = nrm2(n, r) / it->bnorm;
    if (sn <= it->opts.tol)
        return finish_step(it, sn, 0, err); /* converged at the half step */
    precond(it, r, ph);
    st = apply(it, ph, t, err);
    if (st != DPZ_OK)
        return it->status = st;
    double tt = nrm2(n, t);
    double complex ts = dotc(n, t, r);
    if (tt == 0.0 || cabs(ts) <= BREAKDOWN_TOL * tt * nrm2(n, r)) {
        /* omega = 0: the half-step update is still valid, but the recurrence cannot go
         * on; keep the progress and restart. */
        st = finish_step(it, sn, 0, err);
        if (st != DPZ_CONTINUE)
            return st;
        return bicgstab_restart_or_fail(it, "omega = t^H s / t^H t vanished", err);
    }
    it->omega = ts / (tt * tt);
    for (size_t i = 0; i < n; i++) {
        x[i] += it->omega * ph[i];
        r[i] -= it->omega * t[i];
    }
    return finish_step(it, nrm2(n, r) / it->bnorm, 0, err);
}

static dpz_status step_cocg(dpz_iter *it, dpz_err *err)
{
    size_t n = it->n;
    double complex *x = it->x, *r = it->r, *p = it->p, *q = it->v, *z = it->s;
    dpz_status st = apply(it, p, q, err);
    if (st != DPZ_OK)
        return it->status = st;
    double complex mu = dotu(n, p, q);
    if (cabs(mu) <= BREAKDOWN_TOL * nrm2(n, p) * nrm2(n, q))
        return breakdown(it, "p^T A p vanished", err);
    double complex alpha = it->rho / mu;
    for (size_t i = 0; i < n; i++) {
        x[i] += alpha * p[i];
        r[i] -= alpha * q[i];
    }
    double est = nrm2(n, r) / it->bnorm;
    if (est <= it->opts.tol)
        return finish_step(it, est, 0, err);
    precond(it, r, z);
    double complex rho1 = dotu(n, r, z);
    if (cabs(rho1) <= BREAKDOWN_TOL * nrm2(n, r) * nrm2(n, z)) {
        st = finish_step(it, est, 0, err);
        if (st != DPZ_CONTINUE)
            return st;
        return breakdown(it, "r^T M^-1 r vanished (quasi-null residual)", err);
    }
    double complex beta = rho1 / it->rho;
    it->rho = rho1;
    for (size_t i = 0; i < n; i++)
        p[i] = z[i] + beta * p[i];
    return finish_step(it, est, 0, err);
}

/* Completes a GMRES cycle of length j: solves the triangular system H y = g and updates
 * x += M^-1 V y. */
static void gmres_update(dpz_iter *it)
{
    size_t n = it->n, m = it->m, j = it->j;
    for (size_t a = j; a-- > 0;) {
        double complex s = it->g[a];
        for (size_t c = a + 1; c < j; c++)
            s -= it->H[c * (m + 1) + a] * it->y[c];
        it->y[a] = s / it->H[a * (m + 1) + a];
    }
    /* w = V y, then x += M^-1 w (w kept in it->p). */
    memset(it->p, 0, n * sizeof *it->p);
    for (size_t c = 0; c < j; c++) {
        const double complex *vc = it->V + c * n;
        for (size_t i = 0; i < n; i++)
            it->p[i] += it->y[c] * vc[i];
    }
    if (it->use_jacobi)
        for (size_t i = 0; i < n; i++)
            it->x[i] += it->p[i] / it->diag[i];
    else
        for (size_t i = 0; i < n; i++)
            it->x[i] += it->p[i];
}

static dpz_status step_gmres(dpz_iter *it, dpz_err *err)
{
    size_t n = it->n, m = it->m, j = it->j;
    double complex *h = it->H + j * (m + 1); /* column j */
    double complex *vj = it->V + j * n, *w = it->V + (j + 1) * n;
    precond(it, vj, it->p);
    dpz_status st = apply(it, it->p, w, err);
    if (st != DPZ_OK)
        return it->status = st;
    double w0 = nrm2(n, w);
    /* Modified Gram-Schmidt against the basis (Saad, Iterative Methods for Sparse Linear
     * Systems, 2nd ed., SIAM 2003, Algorithm 6.2). */
    for (size_t a = 0; a <= j; a++) {
        const double complex *va = it->V + a * n;
        double complex hij = dotc(n, va, w);
        h[a] = hij;
        for (size_t i = 0; i < n; i++)
            w[i] -= hij * va[i];
    }
    double hn = nrm2(n, w);
    h[j + 1] = hn;
    /* "Happy breakdown": A M^-1 v_j lies in the Krylov space, the solution is exact. */
    int lucky = hn <= BREAKDOWN_TOL * w0;
    if (!lucky)
        for (size_t i = 0; i < n; i++)
            w[i] /= hn;
    /* Apply the previous rotations, then a new one that zeros h[j+1]. */
    for (size_t a = 0; a < j; a++) {
        double c = it->cs_c[a];
        double complex s = it->cs_s[a];
        double complex t0 = c * h[a] + s * h[a + 1];
        h[a + 1] = -conj(s) * h[a] + c * h[a + 1];
        h[a] = t0;
    }
    double complex aa = h[j], bb = h[j + 1];
    double tn = hypot(cabs(aa), cabs(bb));
    double c;
    double complex s;
    if (cabs(aa) == 0.0) {
        c = 0.0;
        s = 1.0;
    } else {
        c = cabs(aa) / tn;
        s = (aa / cabs(aa)) * conj(bb) / tn;
    }
    it->cs_c[j] = c;
    it->cs_s[j] = s;
    h[j] = c * aa + s * bb;
    h[j + 1] = 0.0;
    it->g[j + 1] = -conj(s) * it->g[j];
    it->g[j] = c * it->g[j];
    it->j = j + 1;
    double est = cabs(it->g[j + 1]) / it->bnorm;
    if (h[j] == 0.0)
        return breakdown(it, "singular Hessenberg matrix", err);
    int end = it->j == m || lucky || est <= it->opts.tol;
    if (end)
        gmres_update(it);
    return finish_step(it, est, end, err);
}

dpz_status dpz_iter_step(dpz_iter *it, dpz_err *err)
{
    if (!it)
        return dpz_err_set(err, DPZ_EINVAL, "solver: NULL argument");
    if (it->status != DPZ_CONTINUE)
        return it->status;
    switch (it->opts.kind) {
    case DPZ_SOLVER_BICGSTAB:
        return step_bicgstab(it, err);
    case DPZ_SOLVER_COCG:
        return step_cocg(it, err);
    case DPZ_SOLVER_GMRES:
        return step_gmres(it, err);
    }
    return dpz_err_set(err, DPZ_EINVAL, "solver: unknown solver kind");
}

const double complex *dpz_iter_solution(const dpz_iter *it)
{
    return it ? it->x : NULL;
}

double dpz_iter_residual(const dpz_iter *it)
{
    return it ? it->residual : NAN;
}

size_t dpz_iter_iterations(const dpz_iter *it)
{
    return it ? it->iterations : 0;
}

dpz_status dpz_solve(const dpz_linop *A, const double complex *b, double complex *x,
                     const dpz_solve_opts *opts, dpz_solve_info *info, dpz_err *err)
{
    if (info)
        memset(info, 0, sizeof *info);
    if (!A || !b || !x) {
        dpz_status st = dpz_err_set(err, DPZ_EINVAL, "solver: NULL argument");
        if (info)
            info->status = st;
        return st;
    }
    dpz_iter *it = NULL;
    dpz_status st = dpz_iter_create(&it, A->n, opts, err);
    if (st == DPZ_OK) {
        /* An all-zero guess needs no operator application to form r = b. */
        int zero = 1;
        for (size_t i = 0; i < A->n && zero; i++)
            zero = x[i] == 0.0;
        st = dpz_iter_set(it, A, b, zero ? NULL : x, err);
        if (st == DPZ_OK)
            st = it->status; /* DPZ_OK when x already solves the system */
    }
    while (st == DPZ_CONTINUE)
        st = dpz_iter_step(it, err);
    if (it && st != DPZ_EINVAL) {
        memcpy(x, it->x, A->n * sizeof *x);
    }
    if (info) {
        info->status = st;
        if (it) {
            info->iterations = it->iterations;
            info->applies = it->applies;
            info->residual = it->residual;
            if (it->n_hist) {
                info->history = dpz__malloc(it->n_hist * sizeof *info->history);
                if (info->history) {
                    memcpy(info->history, it->hist, it->n_hist * sizeof *info->history);
                    info->n_history = it->n_hist;
                }
            }
        }
    }
    dpz_iter_destroy(it);
    return st;
}
