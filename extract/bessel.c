/* bessel.c: real-argument spherical Bessel functions for the Mie series and the vector
 * spherical wave functions (see extract_int.h). */
#include "extract_int.h"

#include <math.h>

/* Power series j_n(rho) = rho^n / (2n+1)!! sum_k (-rho^2/2)^k / (k!
 * prod_{i=1..k}(2n+2i+1)) (Abramowitz & Stegun 10.1.2); for rho < 1 twenty terms exceed
 * double precision. */
static double jn_series(double rho, size_t n)
{
    double lead = 1.0;
    for (size_t i = 1; i <= n; i++)
        lead *= rho / (double)(2 * i + 1);
    double t = 1.0, sum = 1.0, h = -0.5 * rho * rho;
    for (size_t kk = 1; kk < 30; kk++) {
        t *= h / ((double)kk * (double)(2 * n + 2 * kk + 1));
        sum += t;
        if (fabs(t) < 1e-18 * fabs(sum))
            break;
    }
    return lead * sum;
}

void dpz__sph_jn(double rho, size_t nmax, double *j)
{
    if (rho == 0.0) {
        j[0] = 1.0;
        for (size_t n = 1; n <= nmax; n++)
            j[n] = 0.0;
        return;
    }
    if (rho < 1.0) {
        for (size_t n = 0; n <= nmax; n++)
            j[n] = jn_series(rho, n);
        return;
    }
    if (!isfinite(rho)) {
        for (size_t n = 0; n <= nmax; n++)
            j[n] = NAN;
        return;
    }
    /* Where rho exceeds twice the highest order, the upward recurrence from
     * j_0 = sin/rho and j_1 = sin/rho^2 - cos/rho (A&S 10.1.11, 10.1.19) is stable: j_n
     * and y_n are of one size while n < rho (Press et al., Numerical Recipes, 3rd ed.
     * 2007, sec. 6.6). Miller's algorithm below loses accuracy there (it starts only 30
     * orders above rho, inside the oscillating range: against scipy, relative errors
     * 3e-12 at rho = 300, 4e-7 at 1000, 6e-3 at 1e4 with nmax = 7, where the recurrence
     * has 2e-16 or better) and its loop would run ~rho times for a point metres away at
     * nanometre wavelengths. */
    if (rho > 30.0 && rho > 2.0 * (double)nmax) {
        j[0] = sin(rho) / rho;
        if (nmax >= 1)
            j[1] = sin(rho) / (rho * rho) - cos(rho) / rho;
        for (size_t n = 1; n < nmax; n++)
            j[n + 1] = (double)(2 * n + 1) / rho * j[n] - j[n - 1];
        return;
    }
    /* Miller's algorithm: the recurrence f_{n-1} = (2n+1)/rho f_n - f_{n+1} (A&S 10.1.19)
     * run downwards from far above max(nmax, rho) converges to the minimal solution j_n;
     * the normalization sum_n (2n+1) j_n^2 = 1 (A&S 10.1.50) fixes the scale without
     * dividing by j_0, which vanishes at rho = pi, 2 pi, ... */
    size_t nstart = nmax + (size_t)rho + 30;
    double fp1 = 0.0, f = 1e-20, sum = 0.0;
    for (size_t n = nstart; n > 0; n--) {
        if (n <= nmax)
            j[n] = f;
        sum += (double)(2 * n + 1) * f * f;
        double fm1 = (double)(2 * n + 1) / rho * f - fp1;
        fp1 = f;
        f = fm1;
        if (fabs(f) > 1e100) {
            /* Rescale everything computed so far to avoid overflow; the neglected tail of
             * the sum underflows harmlessly. */
            f *= 1e-100;
            fp1 *= 1e-100;
            sum *= 1e-200;
            for (size_t i = n; i <= nmax; i++)
                j[i] *= 1e-100;
        }
    }
    j[0] = f;
    sum += f * f;
    double scale = 1.0 / sqrt(sum);
    /* Fix the sign with whichever of j_0 = sin/rho, j_1 = sin/rho^2 - cos/rho is larger.
     */
    double j0 = sin(rho) / rho;
    double j1 = sin(rho) / (rho * rho) - cos(rho) / rho;
    double f1 = fp1;
    if (fabs(j0) >= fabs(j1)) {
        if ((j0 < 0) != (f < 0))
            scale = -scale;
    } else if ((j1 < 0) != (f1 < 0)) {
        scale = -scale;
    }
    for (size_t n = 0; n <= nmax; n++)
        j[n] *= scale;
}

void dpz__sph_yn(double rho, size_t nmax, double *y)
{
    double c = cos(rho), s = sin(rho);
    y[0] = -c / rho;
    if (nmax == 0)
        return;
    y[1] = -c / (rho * rho) - s / rho;
    for (size_t n = 1; n < nmax; n++)
        y[n + 1] = (double)(2 * n + 1) / rho * y[n] - y[n - 1];
}
