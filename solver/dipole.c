/* dipole.c: voxel polarizability prescriptions (cm-rr, ldr, igt), the Green tensor and
 * the lattice interaction kernel shared by the FFT and dense operators.
 *
 * Units: SI volume units for polarizabilities (m^3), so that p~ = p / (eps0 eps_h) and
 * E = G p~ with the Green tensor of Jackson, Classical Electrodynamics, eq. 9.18, written
 * for exp(-i omega t). */
#include "dpz_dipole.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "solver_int.h"

/* ---- names ----------------------------------------------------------------------- */

const char *dpz_dipole_name(dpz_dipole_model model)
{
    switch (model) {
    case DPZ_DIPOLE_CMRR:
        return "cm-rr";
    case DPZ_DIPOLE_LDR:
        return "ldr";
    case DPZ_DIPOLE_IGT:
        return "igt";
    }
    return "unknown";
}

dpz_status dpz_dipole_parse(const char *name, dpz_dipole_model *model, dpz_err *err)
{
    static const dpz_dipole_model all[] = {DPZ_DIPOLE_CMRR, DPZ_DIPOLE_LDR,
                                           DPZ_DIPOLE_IGT};
    if (name && model) {
        for (size_t i = 0; i < sizeof all / sizeof all[0]; i++) {
            if (strcmp(name, dpz_dipole_name(all[i])) == 0) {
                *model = all[i];
                return DPZ_OK;
            }
        }
    }
    return dpz_err_set(err, DPZ_EINVAL,
                       "dipole model: unknown name '%s' (choose cm-rr, ldr or igt)",
                       name ? name : "(null)");
}

/* ---- Green tensor ------------------------------------------------------------------ */

/* G(R) = e^{ikR}/(4 pi R^3) [ (k^2R^2 + ikR - 1) I - (k^2R^2 + 3ikR - 3) RR/R^2 ]
 * (Jackson, Classical Electrodynamics, 3rd ed., eq. 9.18 (number from memory), field of
 * an electric dipole, divided by eps0 eps_h; static limit (3 RR - I)/(4 pi R^3)). */
void dpz_green_eval(double k, const double R[3], double complex g[6])
{
    double r2 = R[0] * R[0] + R[1] * R[1] + R[2] * R[2];
    double r = sqrt(r2);
    double ux = R[0] / r, uy = R[1] / r, uz = R[2] / r;
    double kr = k * r;
    double complex ph = k == 0.0 ? 1.0 : cexp(CMPLX(0.0, kr));
    double complex pref = ph / (4.0 * DPZ_SOLVER_PI * r2 * r);
    double complex a = pref * CMPLX(kr * kr - 1.0, kr);
    double complex b = -pref * CMPLX(kr * kr - 3.0, 3.0 * kr);
    g[0] = a + b * ux * ux;
    g[1] = b * ux * uy;
    g[2] = b * ux * uz;
    g[3] = a + b * uy * uy;
    g[4] = b * uy * uz;
    g[5] = a + b * uz * uz;
}

/* ---- Gauss-Legendre rules ------------------------------------------------------------
 */

#define GL_MAX 64

/* Nodes and weights of the n-point Gauss-Legendre rule on [-1, 1] by Newton iteration on
 * the three-term recurrence of P_n (Abramowitz & Stegun 25.4.29; common practice). */
static void gauss_legendre(int n, double *x, double *w)
{
    for (int i = 0; i < (n + 1) / 2; i++) {
        /* Tricomi's initial guess (A&S 22.16.6). */
        double z = cos(DPZ_SOLVER_PI * (i + 0.75) / (n + 0.5));
        double dp = 1.0;
        for (int it = 0; it < 100; it++) {
            double p0 = 1.0, p1 = z;
            for (int m = 2; m <= n; m++) {
                double p2 = ((2.0 * m - 1.0) * z * p1 - (m - 1.0) * p0) / m;
                p0 = p1;
                p1 = p2;
            }
            dp = n * (z * p1 - p0) / (z * z - 1.0);
            double dz = p1 / dp;
            z -= dz;
            if (fabs(dz) < 1e-16)
                break;
        }
        /* Recompute the derivative at the converged node for the weight. */
        double p0 = 1.0, p1 = z;
        for (int m = 2; m <= n; m++) {
            double p2 = ((2.0 * m - 1.0) * z * p1 - (m - 1.0) * p0) / m;
            p0 = p1;
            p1 = p2;
        }
        dp = n * (z * p1 - p0) / (z * z - 1.0);
        x[i] = -z;
        x[n - 1 - i] = z;
        w[i] = w[n - 1 - i] = 2.0 / ((1.0 - z * z) * dp * dp);
    }
    if (n % 2 == 1)
        x[n / 2] = 0.0;
}

/* ---- integrated Green tensor ---------------------------------------------------------
 */

/* Cube average of G over the source voxel centred at (i, j, l) d, observation point at
 * the origin: (1/d^3) int G(0 - r') dV' = (1/d^3) int G(r') dV' since G(-R) = G(R).
 * Integrated Green tensor of Chaumet, Sentenac & Rahmani, Phys. Rev. E 70, 036606 (2004),
 * here by tensor-product Gauss-Legendre quadrature on sub-cubes. */
void dpz__igt_average(double k, double d, long i, long j, long l, int sub, int order,
                      double complex g[6])
{
    double x[GL_MAX], w[GL_MAX];
    if (order > GL_MAX)
        order = GL_MAX;
    gauss_legendre(order, x, w);
    int n1 = sub * order;
    double pts[GL_MAX * 8], wts[GL_MAX * 8];
    if (sub > 8)
        sub = 8, n1 = sub * order;
    /* One-dimensional composite rule on [-d/2, d/2] relative to the voxel centre. */
    double hs = d / sub; /* sub-interval length */
    for (int s = 0; s < sub; s++) {
        double c = -0.5 * d + (s + 0.5) * hs;
        for (int q = 0; q < order; q++) {
            pts[s * order + q] = c + 0.5 * hs * x[q];
            wts[s * order + q] = 0.5 * hs * w[q] / d; /* normalized: weights sum to 1 */
        }
    }
    double complex acc[6] = {0};
    double cx = i * d, cy = j * d, cz = l * d;
    for (int a = 0; a < n1; a++) {
        for (int b = 0; b < n1; b++) {
            double complex row[6] = {0};
            for (int c = 0; c < n1; c++) {
                double R[3] = {cx + pts[a], cy + pts[b], cz + pts[c]};
                double complex gg[6];
                dpz_green_eval(k, R, gg);
                for (int m = 0; m < 6; m++)
                    row[m] += wts[c] * gg[m];
            }
            double wab = wts[a] * wts[b];
            for (int m = 0; m < 6; m++)
                acc[m] += wab * row[m];
        }
    }
    for (int m = 0; m < 6; m++)
        g[m] = acc[m];
}

/* The igt kernel of one near offset: the real (reactive) part is the cube average of G,
 * the imaginary (radiative) part is the point value Im G(R). Im G is an entire function
 * of R (it is built from sin(kR)/R and its derivatives), so averaging it only changes it
 * at O((kd)^2), while keeping the point value makes the radiated power of the lossless
 * dipole system equal its extinction exactly: Im(-A) is then the radiation matrix of
 * point dipoles (the energy argument of Draine, ApJ 333, 848 (1988), section 3, which
 * requires Im(1/alpha) = -k^3/(6 pi) together with point Im G). With the radiative part
 * averaged too, a lossless sphere showed an energy imbalance of 2e-5 and small negative
 * absorption eigenvalues. */
static void igt_hybrid(double k, double d, long i, long j, long l, double complex g[6]);

/* Quadrature used for the igt near field: 2 x 2 x 2 sub-cubes with a 10-point rule each.
 * The nearest source cube has its face at d/2 from the observation point; halving the
 * sub-cube edge keeps the nearest complex singularity of the integrand outside a
 * Bernstein ellipse of parameter ~4.5, so the error ~ 4.5^-20 ~ 1e-13 (checked in the
 * tests by doubling the number of sub-cubes). */
#define IGT_SUB 2
#define IGT_ORDER 10

void dpz__igt_table_fill(dpz__igt_table *tab, double k, double d)
{
    const int N = DPZ_IGT_NEAR;
    tab->k = k;
    tab->d = d;
    for (int i = 0; i <= N; i++)
        for (int j = 0; j <= N; j++)
            for (int l = 0; l <= N; l++) {
                double complex *g =
                    tab->g + (((size_t)i * (N + 1) + j) * (N + 1) + l) * 6;
                if (i == 0 && j == 0 && l == 0) {
                    for (int m = 0; m < 6; m++)
                        g[m] = 0.0;
                    continue;
                }
                igt_hybrid(k, d, i, j, l, g);
            }
}

/* J = int_cube e^{ikR}/R dV over the cube [-d/2, d/2]^3. The cube is six pyramids with
 * apex at the centre (Duffy, SIAM J. Numer. Anal. 19, 1260 (1982)); by symmetry each
 * pyramid is 4 copies of x in (0, h), y = x u, z = x v with u, v in (0, 1), Jacobian x^2,
 * so J = 24 int_0^h int_0^1 int_0^1 x e^{i k x s} / s dv du dx, s = sqrt(1 + u^2 + v^2):
 * the 1/R singularity is gone and the integrand is smooth (analytic) on the box. */
static void igt_hybrid(double k, double d, long i, long j, long l, double complex g[6])
{
    double complex avg[6], pt[6];
    double R[3] = {i * d, j * d, l * d};
    dpz__igt_average(k, d, i, j, l, IGT_SUB, IGT_ORDER, avg);
    dpz_green_eval(k, R, pt);
    for (int m = 0; m < 6; m++)
        g[m] = CMPLX(creal(avg[m]), cimag(pt[m]));
}

double complex dpz__igt_self_integral(double k, double d, int order)
{
    double x[GL_MAX], w[GL_MAX];
    if (order > GL_MAX)
        order = GL_MAX;
    gauss_legendre(order, x, w);
    double h = 0.5 * d;
    double complex acc = 0.0;
    for (int a = 0; a < order; a++) {
        double u = 0.5 * (x[a] + 1.0);
        for (int b = 0; b < order; b++) {
            double v = 0.5 * (x[b] + 1.0);
            double s = sqrt(1.0 + u * u + v * v);
            double complex inner = 0.0;
            for (int c = 0; c < order; c++) {
                double t = 0.5 * h * (x[c] + 1.0);
                inner += w[c] * t * cexp(CMPLX(0.0, k * t * s));
            }
            acc += 0.25 * w[a] * w[b] * 0.5 * h * inner / s;
        }
    }
    return 24.0 * acc;
}

/* ---- voxel polarizabilities
 * ------------------------------------------------------------ */

/* Clausius-Mossotti in SI volume units: alpha_CM = 3 d^3 (eps - 1)/(eps + 2)
 * (Purcell & Pennypacker, ApJ 186, 705 (1973); Draine, ApJ 333, 848 (1988); their
 * Gaussian-unit form times 4 pi for SI volume units). */
static double complex inv_alpha_cm(double complex eps, double d)
{
    return (eps + 2.0) / (3.0 * d * d * d * (eps - 1.0));
}

/* Lattice dispersion relation coefficients (Draine & Goodman, ApJ 405, 685 (1993); the
 * equation numbers below are from memory), with S = sum_j a_j^2 e_j^2 averaged over
 * orthonormal pairs a (propagation), e (polarization) drawn uniformly: the isotropic
 * average <a_i a_j e_k e_l> = (4 d_ij d_kl - d_ik d_jl - d_il d_jk)/30 gives
 * <a_j^2 e_j^2> = 2/30 per axis, so S = 1/5. */
#define LDR_B1 (-1.8915316)
#define LDR_B2 0.1648469
#define LDR_B3 (-1.7700004)
#define LDR_S 0.2

double complex dpz_dipole_inv_alpha(dpz_dipole_model model, double complex eps_rel,
                                    double k, double d)
{
    double complex inv_cm = inv_alpha_cm(eps_rel, d);
    if (k == 0.0)
        return inv_cm;
    double kd = k * d;
    switch (model) {
    case DPZ_DIPOLE_CMRR:
        /* Radiative reaction: 1/alpha = 1/alpha_CM - i k^3/(6 pi) (Draine, ApJ 333, 848
         * (1988); in SI volume units). */
        return inv_cm - CMPLX(0.0, k * k * k / (6.0 * DPZ_SOLVER_PI));
    case DPZ_DIPOLE_LDR: {
        /* Draine & Goodman (1993), eq. 4.3 (from memory), in Gaussian units, 1/alpha =
         * 1/alpha_CM + (1/d^3)[(b1 + m^2 b2 + m^2 b3 S)(kd)^2 - (2/3) i (kd)^3]; SI
         * volume units multiply alpha by 4 pi. The last term equals -i k^3/(6 pi). */
        double complex m2 = eps_rel;
        double complex br = LDR_B1 + m2 * LDR_B2 + m2 * LDR_B3 * LDR_S;
        return inv_cm + (br * kd * kd - CMPLX(0.0, 2.0 / 3.0 * kd * kd * kd)) /
                            (4.0 * DPZ_SOLVER_PI * d * d * d);
    }
    case DPZ_DIPOLE_IGT: {
        /* Volume-integral equation with p~ = (eps - 1) d^3 E per voxel: the field of the
         * voxel's own polarization at its centre is (eps - 1)(-I/3 + M) E (the static
         * principal value over a cube vanishes, leaving the Lorentz term -I/3), which
         * gives 1/alpha = 1/alpha_CM - M/d^3 with the dimensionless
         * M = int_cube (G - G_static) dV = (k^2/(6 pi)) J I, J = int_cube e^{ikR}/R dV,
         * because tr G(R) = k^2 e^{ikR}/(2 pi R), tr G_static = 0 and the cube integral
         * of a tensor is isotropic by cubic symmetry (Chaumet, Sentenac & Rahmani, PRE
         * 70, 036606 (2004); Yurkin & Hoekstra, JQSRT 106, 558 (2007)). */
        double complex J = dpz__igt_self_integral(k, d, 24);
        /* Only the reactive part Re J enters; the radiative part is the exact radiative
         * reaction -i k^3/(6 pi) (the leading term of Im J; see igt_hybrid for why). */
        return inv_cm - k * k / (6.0 * DPZ_SOLVER_PI) * creal(J) / (d * d * d) -
               CMPLX(0.0, k * k * k / (6.0 * DPZ_SOLVER_PI));
    }
    }
    return inv_cm;
}

double dpz_dipole_mkd(double complex eps_rel, double k, double d)
{
    return sqrt(cabs(eps_rel)) * k * d;
}

/* ---- kernel --------------------------------------------------------------------------
 */

void dpz__kernel_tab(dpz_dipole_model model, double k, double d,
                     const dpz__igt_table *tab, long i, long j, long l,
                     double complex g[6])
{
    long ai = labs(i), aj = labs(j), al = labs(l);
    long mx = ai > aj ? ai : aj;
    mx = mx > al ? mx : al;
    if (model == DPZ_DIPOLE_IGT && mx <= DPZ_IGT_NEAR) {
        /* The cube is symmetric under each axis reflection, so the averaged tensor of the
         * reflected offset is the reflected tensor: component ab changes by s_a s_b. */
        double complex q[6];
        if (tab) {
            const int N = DPZ_IGT_NEAR;
            const double complex *t = tab->g + ((ai * (N + 1) + aj) * (N + 1) + al) * 6;
            for (int m = 0; m < 6; m++)
                q[m] = t[m];
        } else {
            igt_hybrid(k, d, ai, aj, al, q);
        }
        double sx = i < 0 ? -1.0 : 1.0, sy = j < 0 ? -1.0 : 1.0, sz = l < 0 ? -1.0 : 1.0;
        g[0] = q[0];
        g[1] = sx * sy * q[1];
        g[2] = sx * sz * q[2];
        g[3] = q[3];
        g[4] = sy * sz * q[4];
        g[5] = q[5];
        return;
    }
    double R[3] = {i * d, j * d, l * d};
    dpz_green_eval(k, R, g);
}

void dpz_green_kernel(dpz_dipole_model model, double k, double d, long i, long j, long l,
                      double complex g[6])
{
    dpz__kernel_tab(model, k, d, NULL, i, j, l, g);
}
