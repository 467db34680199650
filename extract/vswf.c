/* vswf.c: vector spherical harmonics and wave functions (see dpz_vswf.h). */
#include "dpz_vswf.h"

#include <math.h>

#include "extract_int.h"

void dpz_vswf_unit(int m, double complex e[3])
{
    const double r2 = 0.70710678118654752440;
    if (m > 0) {
        e[0] = -r2;
        e[1] = -r2 * I;
        e[2] = 0.0;
    } else if (m < 0) {
        e[0] = r2;
        e[1] = -r2 * I;
        e[2] = 0.0;
    } else {
        e[0] = 0.0;
        e[1] = 0.0;
        e[2] = 1.0;
    }
}

/* Table index of the polynomial part q_n^m, 0 <= m <= n <= DPZ_VSWF_NMAX. */
#define QIDX(n, m) ((n) * ((n) + 1) / 2 + (m))

/* Angular functions for all 0 <= m <= n <= nmax at cos(theta) = x, sin(theta) = s >= 0:
 *   pbar[n][m] = normalized Legendre function Nbar_nm P_n^m(x) (Condon-Shortley), so that
 *                Y_n^m = pbar e^{i m phi};
 *   pi[n][m]   = m pbar / s (finite on the axis);
 *   tau[n][m]  = d pbar / d theta.
 * Writing pbar_n^m = s^m q_n^m(x), q is a polynomial obtained from the standard
 * three-term recursions of the normalized functions (e.g. Holmes & Featherstone 2002,
 * J. Geodesy 76, 279):
 *   q_0^0 = 1/sqrt(4 pi),  q_m^m = -sqrt((2m+1)/(2m)) q_{m-1}^{m-1},
 *   q_{m+1}^m = sqrt(2m+3) x q_m^m,
 *   q_n^m = a_nm (x q_{n-1}^m - b_nm q_{n-2}^m), a = sqrt((4n^2-1)/(n^2-m^2)),
 *           b = sqrt(((n-1)^2-m^2)/(4(n-1)^2-1)).
 * The derivative follows from (1-x^2) dP_n^m/dx = -n x P_n^m + (n+m) P_{n-1}^m
 * (Abramowitz & Stegun 8.5.4), which for the normalized functions reads
 *   tau = [n x pbar_n^m - e_nm pbar_{n-1}^m] / s, e_nm = sqrt((2n+1)(n^2-m^2)/(2n-1)),
 * = s^{m-1} [n x q_n^m - e_nm q_{n-1}^m] for m >= 1, and tau_n^0 = sqrt(n(n+1)) pbar_n^1
 * (d P_n / d theta = P_n^1 with the Condon-Shortley phase). */
static void legendre(size_t nmax, double x, double s, double *q)
{
    q[QIDX(0, 0)] = 1.0 / sqrt(4.0 * DPZ_XPI);
    for (size_t m = 1; m <= nmax; m++)
        q[QIDX(m, m)] = -sqrt((2.0 * m + 1.0) / (2.0 * m)) * q[QIDX(m - 1, m - 1)];
    for (size_t m = 0; m < nmax; m++)
        q[QIDX(m + 1, m)] = sqrt(2.0 * m + 3.0) * x * q[QIDX(m, m)];
    for (size_t m = 0; m <= nmax; m++) {
        for (size_t n = m + 2; n <= nmax; n++) {
            double nn = (double)n, mm = (double)m;
            double a = sqrt((4.0 * nn * nn - 1.0) / (nn * nn - mm * mm));
            double b = sqrt(((nn - 1.0) * (nn - 1.0) - mm * mm) /
                            (4.0 * (nn - 1.0) * (nn - 1.0) - 1.0));
            q[QIDX(n, m)] = a * (x * q[QIDX(n - 1, m)] - b * q[QIDX(n - 2, m)]);
        }
    }
    (void)s;
}

/* Spherical angles of a direction: cos theta, sin theta >= 0, and e^{i phi} (phi = 0 on
 * the z axis). Returns -1 for a zero or non-finite vector. */
static int angles(const double v[3], double *ct, double *st, double *cp, double *sp)
{
    double rho2 = v[0] * v[0] + v[1] * v[1];
    double r = sqrt(rho2 + v[2] * v[2]);
    if (!(r > 0.0) || !isfinite(r))
        return -1;
    double rho = sqrt(rho2);
    *ct = v[2] / r;
    *st = rho / r;
    if (rho > 0.0) {
        *cp = v[0] / rho;
        *sp = v[1] / rho;
    } else {
        *cp = 1.0;
        *sp = 0.0;
    }
    return 0;
}

/* Fills C, B, P at a direction given by its angles (see dpz_vsh_eval). */
static void vsh_fill(size_t nmax, double ct, double st, double cp, double sp,
                     double complex *C, double complex *B, double complex *P)
{
    double q[QIDX(DPZ_VSWF_NMAX + 1, 0) + 1];
    legendre(nmax, ct, st, q);
    const double rhat[3] = {st * cp, st * sp, ct};
    const double that[3] = {ct * cp, ct * sp, -st};
    const double phat[3] = {-sp, cp, 0.0};
    double complex eiphi = CMPLX(cp, sp);
    /* powers s^(m-1) for m >= 1 and e^{i m phi} for m >= 0 */
    double spow[DPZ_VSWF_NMAX + 1];
    double complex epow[DPZ_VSWF_NMAX + 1];
    spow[0] = 1.0; /* s^0, used as s^(m-1) for m = 1 */
    epow[0] = 1.0;
    for (size_t m = 1; m <= nmax; m++) {
        spow[m] = spow[m - 1] * st;
        epow[m] = epow[m - 1] * eiphi;
    }
    for (size_t n = 1; n <= nmax; n++) {
        double nn = (double)n;
        double inv = 1.0 / sqrt(nn * (nn + 1.0));
        for (size_t m = 0; m <= n; m++) {
            double mm = (double)m;
            double qn = q[QIDX(n, m)];
            double qn1 = (n >= m + 1) ? q[QIDX(n - 1, m)] : 0.0;
            double pbar, pi_, tau;
            if (m == 0) {
                pbar = qn;
                pi_ = 0.0;
                tau = sqrt(nn * (nn + 1.0)) * st * q[QIDX(n, 1)];
            } else {
                double sm1 = spow[m - 1];
                pbar = sm1 * st * qn;
                pi_ = mm * sm1 * qn;
                double e =
                    sqrt((2.0 * nn + 1.0) * (nn * nn - mm * mm) / (2.0 * nn - 1.0));
                tau = sm1 * (nn * ct * qn - e * qn1);
            }
            /* m and -m: pbar(-m) = (-1)^m pbar(m), pi(-m) = -(-1)^m pi(m),
             * tau(-m) = (-1)^m tau(m), e^{-i m phi} = conj(e^{i m phi}). */
            for (int sgn = 1; sgn >= -1; sgn -= 2) {
                if (m == 0 && sgn < 0)
                    break;
                double par = (sgn < 0 && (m & 1)) ? -1.0 : 1.0;
                double pb = par * pbar, pp = sgn * par * pi_, tt = par * tau;
                double complex ph = sgn > 0 ? epow[m] : conj(epow[m]);
                size_t idx = dpz_vswf_index(n, sgn * (int)m);
                for (int c = 0; c < 3; c++) {
                    if (C)
                        C[3 * idx + c] = ph * inv * (that[c] * I * pp - phat[c] * tt);
                    if (B)
                        B[3 * idx + c] = ph * inv * (that[c] * tt + phat[c] * I * pp);
                    if (P)
                        P[3 * idx + c] = ph * rhat[c] * pb;
                }
            }
        }
    }
}

dpz_status dpz_vsh_eval(size_t nmax, const double dir[3], double complex *C,
                        double complex *B, double complex *P, dpz_err *err)
{
    if (nmax < 1 || nmax > DPZ_VSWF_NMAX)
        return dpz_err_set(err, DPZ_EINVAL, "vswf: order %zu outside 1..%d", nmax,
                           DPZ_VSWF_NMAX);
    double ct = 1.0, st = 0.0, cp = 1.0, sp = 0.0; /* set by angles() */
    if (!dir || angles(dir, &ct, &st, &cp, &sp) != 0)
        return dpz_err_set(err, DPZ_EINVAL, "vswf: direction is zero or not finite");
    vsh_fill(nmax, ct, st, cp, sp, C, B, P);
    return DPZ_OK;
}

/* Below this kr a regular wave is evaluated as at the origin (j_n(kr) underflows). */
#define DPZ_VSWF_RHO_ZERO 1e-100

dpz_status dpz_vswf_eval(dpz_vswf_kind kind, size_t nmax, double k, const double r[3],
                         double complex *M, double complex *N, dpz_err *err)
{
    if (nmax < 1 || nmax > DPZ_VSWF_NMAX)
        return dpz_err_set(err, DPZ_EINVAL, "vswf: order %zu outside 1..%d", nmax,
                           DPZ_VSWF_NMAX);
    if (!(k > 0.0) || !isfinite(k))
        return dpz_err_set(err, DPZ_EINVAL, "vswf: wavenumber must be positive (got %g)",
                           k);
    if (!r || !isfinite(r[0]) || !isfinite(r[1]) || !isfinite(r[2]))
        return dpz_err_set(err, DPZ_EINVAL, "vswf: point is not finite");
    double rr = sqrt(r[0] * r[0] + r[1] * r[1] + r[2] * r[2]);
    double rho = k * rr;
    size_t cnt = dpz_vswf_count(nmax);
    if (rho < DPZ_VSWF_RHO_ZERO) {
        if (kind == DPZ_VSWF_OUTGOING)
            return dpz_err_set(err, DPZ_EINVAL,
                               "vswf: outgoing waves are singular at r = 0");
        /* Limits at the origin: j_1(rho)/rho -> 1/3, (rho j_1)'/rho -> 2/3, all other
         * orders vanish; hence RgN_1m(0) = sqrt(3/(4 pi)) (2/3) e_m / sqrt(2)
         * = e_m / sqrt(6 pi). */
        for (size_t i = 0; i < 3 * cnt; i++) {
            if (M)
                M[i] = 0.0;
            if (N)
                N[i] = 0.0;
        }
        if (N) {
            for (int m = -1; m <= 1; m++) {
                double complex e[3];
                dpz_vswf_unit(m, e);
                size_t idx = dpz_vswf_index(1, m);
                for (int c = 0; c < 3; c++)
                    N[3 * idx + c] = e[c] / sqrt(6.0 * DPZ_XPI);
            }
        }
        return DPZ_OK;
    }
    double jn[DPZ_VSWF_NMAX + 1], yn[DPZ_VSWF_NMAX + 1];
    dpz__sph_jn(rho, nmax, jn);
    if (kind == DPZ_VSWF_OUTGOING)
        dpz__sph_yn(rho, nmax, yn);
    double complex Cv[3 * DPZ_VSWF_NMAX * (DPZ_VSWF_NMAX + 2)];
    double complex Bv[3 * DPZ_VSWF_NMAX * (DPZ_VSWF_NMAX + 2)];
    double complex Pv[3 * DPZ_VSWF_NMAX * (DPZ_VSWF_NMAX + 2)];
    double ct = 1.0, st = 0.0, cp = 1.0, sp = 0.0; /* set by angles() */
    angles(r, &ct, &st, &cp, &sp);
    vsh_fill(nmax, ct, st, cp, sp, Cv, N ? Bv : NULL, N ? Pv : NULL);
    for (size_t n = 1; n <= nmax; n++) {
        double complex z = jn[n], zm1 = jn[n - 1];
        if (kind == DPZ_VSWF_OUTGOING) {
            z += I * yn[n];
            zm1 += I * yn[n - 1];
        }
        double nn = (double)n;
        /* z_n/rho and (rho z_n)'/rho = z_{n-1} - n z_n / rho (A&S 10.1.22) */
        double complex zr = z / rho;
        double complex dz = zm1 - nn * zr;
        double complex rad = sqrt(nn * (nn + 1.0)) * zr;
        for (int m = -(int)n; m <= (int)n; m++) {
            size_t idx = dpz_vswf_index(n, m);
            for (int c = 0; c < 3; c++) {
                if (M)
                    M[3 * idx + c] = z * Cv[3 * idx + c];
                if (N)
                    N[3 * idx + c] = rad * Pv[3 * idx + c] + dz * Bv[3 * idx + c];
            }
        }
    }
    return DPZ_OK;
}

dpz_status dpz_vswf1_cart(dpz_vswf_kind kind, int m, double k, const double r[3],
                          double complex M[3], double complex N[3], dpz_err *err)
{
    if (m < -1 || m > 1)
        return dpz_err_set(err, DPZ_EINVAL, "vswf: order-1 wave needs |m| <= 1 (got %d)",
                           m);
    if (!(k > 0.0) || !isfinite(k))
        return dpz_err_set(err, DPZ_EINVAL, "vswf: wavenumber must be positive (got %g)",
                           k);
    double rr = sqrt(r[0] * r[0] + r[1] * r[1] + r[2] * r[2]);
    double rho = k * rr;
    double complex f, g;
    if (rho < 1e-3 && kind == DPZ_VSWF_REGULAR) {
        /* Series j_1(rho)/rho = 1/3 - rho^2/30 + rho^4/840 and
         * (rho j_1)'/rho = 2/3 - 2 rho^2/15 + rho^4/140 (A&S 10.1.2). */
        double r2 = rho * rho;
        f = 1.0 / 3.0 - r2 / 30.0 + r2 * r2 / 840.0;
        g = 2.0 / 3.0 - 2.0 * r2 / 15.0 + r2 * r2 / 140.0;
    } else {
        if (!(rho > 0.0))
            return dpz_err_set(err, DPZ_EINVAL,
                               "vswf: outgoing waves are singular at r = 0");
        double jn[2], yn[2];
        dpz__sph_jn(rho, 1, jn);
        double complex z0 = jn[0], z1 = jn[1];
        if (kind == DPZ_VSWF_OUTGOING) {
            dpz__sph_yn(rho, 1, yn);
            z0 += I * yn[0];
            z1 += I * yn[1];
        }
        f = z1 / rho;
        g = z0 - z1 / rho;
    }
    double complex e[3];
    dpz_vswf_unit(m, e);
    const double c = sqrt(3.0 / (4.0 * DPZ_XPI)) / sqrt(2.0);
    double rh[3] = {0.0, 0.0, 0.0};
    if (rr > 0.0)
        for (int i = 0; i < 3; i++)
            rh[i] = r[i] / rr;
    double complex rde = rh[0] * e[0] + rh[1] * e[1] + rh[2] * e[2];
    double complex exr[3] = {e[1] * r[2] - e[2] * r[1], e[2] * r[0] - e[0] * r[2],
                             e[0] * r[1] - e[1] * r[0]};
    for (int i = 0; i < 3; i++) {
        if (M)
            M[i] = c * k * f * exr[i];
        if (N)
            N[i] = c * (g * e[i] + (2.0 * f - g) * rh[i] * rde);
    }
    return DPZ_OK;
}

dpz_status dpz_vswf_plane_wave(size_t nmax, const double khat[3],
                               const double complex e0[3], double complex *aM,
                               double complex *aN, dpz_err *err)
{
    if (nmax < 1 || nmax > DPZ_VSWF_NMAX)
        return dpz_err_set(err, DPZ_EINVAL, "vswf: order %zu outside 1..%d", nmax,
                           DPZ_VSWF_NMAX);
    double ct = 1.0, st = 0.0, cp = 1.0, sp = 0.0; /* set by angles() */
    if (!khat || angles(khat, &ct, &st, &cp, &sp) != 0)
        return dpz_err_set(err, DPZ_EINVAL, "vswf: propagation direction is zero");
    double complex Cv[3 * DPZ_VSWF_NMAX * (DPZ_VSWF_NMAX + 2)];
    double complex Bv[3 * DPZ_VSWF_NMAX * (DPZ_VSWF_NMAX + 2)];
    vsh_fill(nmax, ct, st, cp, sp, Cv, Bv, NULL);
    double complex in = 1.0; /* i^n */
    for (size_t n = 1; n <= nmax; n++) {
        double complex inm1 = in; /* i^(n-1) */
        in *= I;
        for (int m = -(int)n; m <= (int)n; m++) {
            size_t idx = dpz_vswf_index(n, m);
            double complex cm = 0.0, bm = 0.0;
            for (int c = 0; c < 3; c++) {
                cm += conj(Cv[3 * idx + c]) * e0[c];
                bm += conj(Bv[3 * idx + c]) * e0[c];
            }
            if (aM)
                aM[idx] = 4.0 * DPZ_XPI * in * cm;
            if (aN)
                aN[idx] = 4.0 * DPZ_XPI * inm1 * bm;
        }
    }
    return DPZ_OK;
}
