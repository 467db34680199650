/* tblock.c: dipole-order T block of a discrete-dipole system and the T <-> 6x6
 * polarizability conversion (see dpz_tblock.h). */
#include "dpz_tblock.h"

#include <math.h>
#include <omp.h>
#include <string.h>

#include "dpz_vswf.h"
#include "extract_int.h"

void dpz__extract_origin(const dpz_grid *grid, int has_origin, const double origin[3],
                         double out[3])
{
    if (has_origin) {
        out[0] = origin[0];
        out[1] = origin[1];
        out[2] = origin[2];
    } else {
        dpz_grid_centroid(grid, out);
    }
}

static void rel_centre(const dpz_grid *grid, size_t v, const double origin[3],
                       double r[3])
{
    dpz_grid_centre(grid, grid->occ[v], r);
    r[0] -= origin[0];
    r[1] -= origin[1];
    r[2] -= origin[2];
}

dpz_status dpz_tblock_incident(const dpz_grid *grid, const double origin[3], double k,
                               int col, double complex *e, dpz_err *err)
{
    if (!grid || !origin || !e)
        return dpz_err_set(err, DPZ_EINVAL, "T block: NULL argument");
    if (col < 0 || col > 5)
        return dpz_err_set(err, DPZ_EINVAL, "T block: incident wave %d outside 0..5",
                           col);
    if (!(k > 0.0) || !isfinite(k))
        return dpz_err_set(err, DPZ_EINVAL, "T block: wavenumber %g 1/m must be positive",
                           k);
    int m = col % 3 - 1;
    for (size_t v = 0; v < grid->n_occ; v++) {
        double r[3];
        double complex M[3], N[3];
        rel_centre(grid, v, origin, r);
        /* The Cartesian order-1 form is exact at the origin and on the axis. */
        dpz_status st = dpz_vswf1_cart(DPZ_VSWF_REGULAR, m, k, r, M, N, err);
        if (st != DPZ_OK)
            return st;
        const double complex *f = col < 3 ? N : M;
        e[3 * v] = f[0];
        e[3 * v + 1] = f[1];
        e[3 * v + 2] = f[2];
    }
    return DPZ_OK;
}

dpz_status dpz_tblock_project(const dpz_grid *grid, const double origin[3], double k,
                              size_t nmax, const double complex *ptilde,
                              double complex *q, double complex *p, dpz_err *err)
{
    if (!grid || !origin || !ptilde)
        return dpz_err_set(err, DPZ_EINVAL, "T block: NULL argument");
    if (nmax < 1 || nmax > DPZ_VSWF_NMAX)
        return dpz_err_set(err, DPZ_EINVAL, "T block: projection order %zu outside 1..%d",
                           nmax, DPZ_VSWF_NMAX);
    if (!(k > 0.0) || !isfinite(k))
        return dpz_err_set(err, DPZ_EINVAL, "T block: wavenumber %g 1/m must be positive",
                           k);
    size_t cnt = dpz_vswf_count(nmax);
    double complex sq[DPZ_VSWF_NMAX * (DPZ_VSWF_NMAX + 2)];
    double complex sp[DPZ_VSWF_NMAX * (DPZ_VSWF_NMAX + 2)];
    memset(sq, 0, cnt * sizeof sq[0]);
    memset(sp, 0, cnt * sizeof sp[0]);
    int bad = 0;
    /* Voxels are independent: each thread sums its share (a fixed block of voxels under
     * the static schedule), then the partial sums are added in thread order, so that a
     * run is reproducible bit for bit for a given thread count. */
#pragma omp parallel
    {
        double complex lq[DPZ_VSWF_NMAX * (DPZ_VSWF_NMAX + 2)];
        double complex lp[DPZ_VSWF_NMAX * (DPZ_VSWF_NMAX + 2)];
        double complex M[3 * 3 * 5], N[3 * 3 * 5];
        double complex *Mv = M, *Nv = N;
        double complex *Mbig = NULL, *Nbig = NULL;
        if (cnt > 15) {
            Mbig = dpz__malloc(3 * cnt * sizeof *Mbig);
            Nbig = dpz__malloc(3 * cnt * sizeof *Nbig);
            Mv = Mbig;
            Nv = Nbig;
        }
        memset(lq, 0, cnt * sizeof lq[0]);
        memset(lp, 0, cnt * sizeof lp[0]);
        int lbad = (cnt > 15 && (!Mbig || !Nbig)) ? 2 : 0;
#pragma omp for schedule(static)
        for (size_t v = 0; v < grid->n_occ; v++) {
            if (lbad)
                continue;
            double r[3];
            rel_centre(grid, v, origin, r);
            if (dpz_vswf_eval(DPZ_VSWF_REGULAR, nmax, k, r, Mv, Nv, NULL) != DPZ_OK) {
                lbad = 1;
                continue;
            }
            const double complex *pv = ptilde + 3 * v;
            for (size_t i = 0; i < cnt; i++) {
                lq[i] += conj(Nv[3 * i]) * pv[0] + conj(Nv[3 * i + 1]) * pv[1] +
                         conj(Nv[3 * i + 2]) * pv[2];
                lp[i] += conj(Mv[3 * i]) * pv[0] + conj(Mv[3 * i + 1]) * pv[1] +
                         conj(Mv[3 * i + 2]) * pv[2];
            }
        }
        /* One iteration per thread; the static schedule with chunk 1 gives iteration t to
         * thread t (OpenMP 4.5, 2.7.1), and `ordered` runs the iterations in order. A
         * critical section would add the partial sums in the order the threads arrive,
         * which changes the last bits from run to run with three or more threads. */
        int nt = omp_get_num_threads();
#pragma omp for ordered schedule(static, 1)
        for (int t = 0; t < nt; t++) {
#pragma omp ordered
            {
                for (size_t i = 0; i < cnt; i++) {
                    sq[i] += lq[i];
                    sp[i] += lp[i];
                }
                if (lbad > bad)
                    bad = lbad;
            }
        }
        dpz__free(Mbig);
        dpz__free(Nbig);
    }
    if (bad == 2)
        return dpz_err_set(err, DPZ_ENOMEM, "T block: out of memory for the projection");
    if (bad)
        return dpz_err_set(err, DPZ_EINVAL, "T block: a voxel centre is not finite");
    /* q_mn = i k^3 sum conj(RgN_mn) . p~, p_mn = i k^3 sum conj(RgM_mn) . p~
     * (Green-dyadic expansion, Tsang, Kong & Ding 2000). */
    double complex f = I * k * k * k;
    for (size_t i = 0; i < cnt; i++) {
        if (q)
            q[i] = f * sq[i];
        if (p)
            p[i] = f * sp[i];
    }
    return DPZ_OK;
}

static int is_noconv(dpz_status st)
{
    return st == DPZ_ENOCONV || st == DPZ_EBREAKDOWN || st == DPZ_ESTAGNATION;
}

/* U = [e_{-1} e_0 e_{+1}] (columns), U[c][m + 1] = component c of e_m; a constant table,
 * so concurrent callers share it safely. */
#define DPZ_R2 0.70710678118654752440
static const double complex DPZ_U[9] = {
    CMPLX(DPZ_R2, 0.0),  CMPLX(0.0, 0.0), CMPLX(-DPZ_R2, 0.0),
    CMPLX(0.0, -DPZ_R2), CMPLX(0.0, 0.0), CMPLX(0.0, -DPZ_R2),
    CMPLX(0.0, 0.0),     CMPLX(1.0, 0.0), CMPLX(0.0, 0.0)};

static const double complex *umat(void)
{
    return DPZ_U;
}

/* Cartesian combination W_c = sum_m conj(U[c][m]) RgPsi_1m of the order-1 waves (type N
 * when magnetic == 0, else M): near the origin RgN-type W_c -> x^_c / sqrt(6 pi), a
 * linearly polarized field. Conversely RgPsi_1m = sum_c U[c][m] W_c (U is unitary).
 * Solving for W_c rather than for the circular waves avoids right-hand sides with
 * b^T b = 0 (e_{+-1} . e_{+-1} = 0), on which the conjugate-orthogonal solvers break down
 * at once. */
static dpz_status incident_cart(const dpz_grid *grid, const double origin[3], double k,
                                int magnetic, int c, double complex *e, dpz_err *err)
{
    const double complex *U = umat();
    for (size_t v = 0; v < grid->n_occ; v++) {
        double r[3];
        rel_centre(grid, v, origin, r);
        double complex acc[3] = {0.0, 0.0, 0.0};
        for (int m = -1; m <= 1; m++) {
            double complex w = conj(U[3 * c + m + 1]);
            if (w == 0.0)
                continue;
            double complex M[3], N[3];
            dpz_status st = dpz_vswf1_cart(DPZ_VSWF_REGULAR, m, k, r, M, N, err);
            if (st != DPZ_OK)
                return st;
            const double complex *f = magnetic ? M : N;
            for (int i = 0; i < 3; i++)
                acc[i] += w * f[i];
        }
        e[3 * v] = acc[0];
        e[3 * v + 1] = acc[1];
        e[3 * v + 2] = acc[2];
    }
    return DPZ_OK;
}

dpz_status dpz_tblock_solve(const dpz_grid *grid, const double origin[3], double k,
                            const dpz_linop *op, const dpz_solve_opts *opts,
                            unsigned cols, double complex T[6][6],
                            double complex T2[10][6], double complex T3[14][6],
                            double complex *warm[6], dpz_rhs_report rep[6], dpz_err *err)
{
    if (!grid || !origin || !op || !T)
        return dpz_err_set(err, DPZ_EINVAL, "T block: NULL argument");
    size_t n3 = 3 * grid->n_occ;
    if (grid->n_occ == 0)
        return dpz_err_set(err, DPZ_EINVAL, "T block: the grid has no occupied voxel");
    if (op->n != n3)
        return dpz_err_set(err, DPZ_EINVAL,
                           "T block: operator size %zu does not match 3 x %zu voxels",
                           op->n, grid->n_occ);
    if (!(k > 0.0) || !isfinite(k))
        return dpz_err_set(err, DPZ_EINVAL, "T block: wavenumber %g 1/m must be positive",
                           k);
    if (warm)
        for (int c = 0; c < 6; c++)
            if ((cols & (c < 3 ? 0x07u : 0x38u)) && !warm[c])
                return dpz_err_set(err, DPZ_EINVAL,
                                   "T block: warm-start vector %d is NULL", c);
    dpz_solve_opts def = dpz_solve_opts_default();
    if (!opts)
        opts = &def;
    memset(T, 0, 36 * sizeof T[0][0]);
    if (T2)
        memset(T2, 0, 60 * sizeof T2[0][0]);
    if (T3)
        memset(T3, 0, 84 * sizeof T3[0][0]);
    if (rep)
        memset(rep, 0, 6 * sizeof rep[0]);
    double complex *b = dpz__malloc(n3 * sizeof *b);
    double complex *x = warm ? NULL : dpz__malloc(n3 * sizeof *x);
    if (!b || (!warm && !x)) {
        dpz__free(b);
        dpz__free(x);
        return dpz_err_set(err, DPZ_ENOMEM, "T block: out of memory for %zu unknowns",
                           n3);
    }
    size_t nmax = (T3 ? 3 : (T2 ? 2 : 1));
    const double complex *U = umat();
    int noconv = -1;
    dpz_status st = DPZ_OK;
    for (int w = 0; w < 6 && st == DPZ_OK; w++) {
        int magnetic = w >= 3, c = w % 3;
        if (!(cols & (magnetic ? 0x38u : 0x07u)))
            continue;
        st = incident_cart(grid, origin, k, magnetic, c, b, err);
        if (st != DPZ_OK)
            break;
        double complex *xc = warm ? warm[w] : x;
        if (!warm)
            memset(xc, 0, n3 * sizeof *xc);
        dpz_solve_info info;
        dpz_err serr;
        dpz_status ss = dpz_solve(op, b, xc, opts, &info, &serr);
        if (rep) {
            rep[w].status = ss;
            rep[w].iterations = info.iterations;
            rep[w].residual = info.residual;
        }
        dpz_solve_info_free(&info);
        if (ss != DPZ_OK && !is_noconv(ss)) {
            st = dpz_err_set(err, ss, "T block: incident wave %d: %s", w, serr.msg);
            break;
        }
        if (ss != DPZ_OK && noconv < 0)
            noconv = w;
        double complex q[15], p[15];
        st = dpz_tblock_project(grid, origin, k, nmax, xc, q, p, err);
        if (st != DPZ_OK)
            break;
        /* The response to RgPsi_1m = sum_c U[c][m] W_c accumulates U[c][m] times the
         * response to W_c. */
        for (int m = -1; m <= 1; m++) {
            double complex u = U[3 * c + m + 1];
            if (u == 0.0)
                continue;
            int col = (magnetic ? 3 : 0) + m + 1;
            for (int mo = -1; mo <= 1; mo++) {
                T[mo + 1][col] += u * q[dpz_vswf_index(1, mo)];
                T[mo + 4][col] += u * p[dpz_vswf_index(1, mo)];
            }
            if (T2)
                for (int mo = -2; mo <= 2; mo++) {
                    T2[mo + 2][col] += u * q[dpz_vswf_index(2, mo)];
                    T2[mo + 7][col] += u * p[dpz_vswf_index(2, mo)];
                }
            if (T3)
                for (int mo = -3; mo <= 3; mo++) {
                    T3[mo + 3][col] += u * q[dpz_vswf_index(3, mo)];
                    T3[mo + 10][col] += u * p[dpz_vswf_index(3, mo)];
                }
        }
    }
    dpz__free(b);
    dpz__free(x);
    if (st != DPZ_OK)
        return st;
    if (noconv >= 0)
        return dpz_err_set(err, DPZ_ENOCONV,
                           "T block: the solve for incident wave %d did not converge "
                           "(residual %.3g)",
                           noconv, rep ? rep[noconv].residual : NAN);
    return DPZ_OK;
}

/* V = blockdiag(U, -i U), U = [e_{-1} e_0 e_{+1}] (columns; spherical basis vectors,
 * Edmonds 1957 sec. 5.1). */
void dpz__vmatrix(double complex V[6][6])
{
    const double s = 0.70710678118654752440;
    const double complex U[3][3] = {{s, 0.0, -s}, {-I * s, 0.0, -I * s}, {0.0, 1.0, 0.0}};
    memset(V, 0, 36 * sizeof V[0][0]);
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++) {
            V[i][j] = U[i][j];
            V[i + 3][j + 3] = -I * U[i][j];
        }
}

/* out = f * L X R where L, R are V or V^H as selected. */
void dpz__sandwich(double complex V[6][6], int left_h, double complex X[6][6],
                   int right_h, double complex f, double complex out[6][6])
{
    double complex tmp[6][6];
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++) {
            double complex s = 0.0;
            for (int l = 0; l < 6; l++)
                s += (left_h ? conj(V[l][i]) : V[i][l]) * X[l][j];
            tmp[i][j] = s;
        }
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++) {
            double complex s = 0.0;
            for (int l = 0; l < 6; l++)
                s += tmp[i][l] * (right_h ? conj(V[j][l]) : V[l][j]);
            out[i][j] = f * s;
        }
}

void dpz_tblock_to_alpha(double k, double complex T[6][6], double complex A[6][6])
{
    double complex V[6][6];
    dpz__vmatrix(V);
    /* A = -(6 pi i / k^3) V T V^H */
    dpz__sandwich(V, 0, T, 1, -6.0 * DPZ_XPI * I / (k * k * k), A);
}

void dpz_alpha_to_tblock(double k, double complex A[6][6], double complex T[6][6])
{
    double complex V[6][6];
    dpz__vmatrix(V);
    /* T = (i k^3 / (6 pi)) V^H A V */
    dpz__sandwich(V, 1, A, 0, I * k * k * k / (6.0 * DPZ_XPI), T);
}
