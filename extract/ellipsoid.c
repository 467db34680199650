/* ellipsoid.c: depolarization factors and static polarizability of an ellipsoid (see
 * dpz_ellipsoid.h). */
#include "dpz_ellipsoid.h"

#include <float.h>
#include <math.h>

#include "extract_int.h"

double dpz_carlson_rd(double x, double y, double z)
{
    if (!(x >= 0.0) || !(y >= 0.0) || !(z > 0.0) || (x == 0.0 && y == 0.0) ||
        !isfinite(x) || !isfinite(y) || !isfinite(z))
        return NAN;
    /* Carlson 1995, sec. 2, algorithm for R_D: duplication
     *   lambda = sqrt(x y) + sqrt(x z) + sqrt(y z), x <- (x + lambda)/4, ...
     * accumulating 3 sum 4^-m / (sqrt(z_m) (z_m + lambda_m)), until
     * 4^-m Q < |A_m| with Q = (r/4)^(-1/6) max|A_0 - x_0, ...| (r the tolerance), then a
     * fifth-order Taylor series in the scaled deviations X, Y, Z. */
    const double r = 1e-16;
    double A0 = (x + y + 3.0 * z) / 5.0;
    double Q =
        pow(r / 4.0, -1.0 / 6.0) * fmax(fabs(A0 - x), fmax(fabs(A0 - y), fabs(A0 - z)));
    double x0 = x, y0 = y, A = A0, sum = 0.0, fac = 1.0, pow4 = 1.0;
    for (int m = 0; m < 100; m++) {
        if (Q * pow4 < fabs(A) && m > 0)
            break;
        if (Q == 0.0)
            break;
        double sx = sqrt(x), sy = sqrt(y), sz = sqrt(z);
        double lam = sx * sy + sx * sz + sy * sz;
        sum += fac / (sz * (z + lam));
        fac *= 0.25;
        pow4 *= 0.25;
        x = 0.25 * (x + lam);
        y = 0.25 * (y + lam);
        z = 0.25 * (z + lam);
        A = 0.25 * (A + lam);
    }
    double X = (A0 - x0) * pow4 / A;
    double Y = (A0 - y0) * pow4 / A;
    double Z = -(X + Y) / 3.0;
    double E2 = X * Y - 6.0 * Z * Z;
    double E3 = (3.0 * X * Y - 8.0 * Z * Z) * Z;
    double E4 = 3.0 * (X * Y - Z * Z) * Z * Z;
    double E5 = X * Y * Z * Z * Z;
    double series = 1.0 - 3.0 * E2 / 14.0 + E3 / 6.0 + 9.0 * E2 * E2 / 88.0 -
                    3.0 * E4 / 22.0 - 9.0 * E2 * E3 / 52.0 + 3.0 * E5 / 26.0;
    return pow4 * pow(A, -1.5) * series + 3.0 * sum;
}

dpz_status dpz_ellipsoid_depolarization(const double a[3], double L[3], dpz_err *err)
{
    if (!a || !L)
        return dpz_err_set(err, DPZ_EINVAL, "ellipsoid: NULL argument");
    for (int i = 0; i < 3; i++)
        if (!(a[i] > 0.0) || !isfinite(a[i]))
            return dpz_err_set(err, DPZ_EINVAL,
                               "ellipsoid: semi-axis %d (%g) must be positive and finite",
                               i + 1, a[i]);
    /* Scale to the largest axis so that R_D sees O(1) arguments. */
    double s = fmax(a[0], fmax(a[1], a[2]));
    double b[3] = {a[0] / s, a[1] / s, a[2] / s};
    double p = b[0] * b[1] * b[2] / 3.0;
    for (int i = 0; i < 3; i++) {
        int j = (i + 1) % 3, k = (i + 2) % 3;
        /* L_i = (a1 a2 a3 / 3) R_D(a_j^2, a_k^2, a_i^2) (Osborn 1945; Carlson 1995) */
        L[i] = p * dpz_carlson_rd(b[j] * b[j], b[k] * b[k], b[i] * b[i]);
    }
    return DPZ_OK;
}

dpz_status dpz_ellipsoid_alpha(double complex eps_rel, const double a[3],
                               double complex alpha[3], dpz_err *err)
{
    double L[3];
    dpz_status st = dpz_ellipsoid_depolarization(a, L, err);
    if (st != DPZ_OK)
        return st;
    if (!alpha)
        return dpz_err_set(err, DPZ_EINVAL, "ellipsoid: NULL argument");
    double V = 4.0 * DPZ_XPI * a[0] * a[1] * a[2] / 3.0;
    for (int i = 0; i < 3; i++) {
        /* B&H 1983 eq. 5.32: a_i = V (eps - 1) / (1 + L_i (eps - 1)) in volume units */
        double complex den = 1.0 + L[i] * (eps_rel - 1.0);
        if (cabs(den) < 1e-14 * (1.0 + cabs(eps_rel)))
            return dpz_err_set(
                err, DPZ_ERANGE,
                "ellipsoid: permittivity %g%+gi is on the resonance of axis "
                "%d",
                creal(eps_rel), cimag(eps_rel), i + 1);
        alpha[i] = V * (eps_rel - 1.0) / den;
    }
    return DPZ_OK;
}
