/* test_extract_vswf.c: vector spherical harmonics and wave functions (extract/dpz_vswf.h)
 * against scipy harmonics and Bessel functions, orthonormality by quadrature, the curl
 * relations by finite differences, the order-1 Cartesian forms, the plane-wave expansion
 * and the Green-dyadic expansion (Tsang, Kong & Ding 2000; Mishchenko, Travis & Lacis
 * 2002, app. C). */
#include <complex.h>
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dpz_test.h"

/* glibc provides CMPLX only for GCC; a fallback for finite arguments. */
#ifndef CMPLX
#define CMPLX(x, y) ((double complex)((double)(x) + _Complex_I * (double)(y)))
#endif

#include "dpz_vswf.h"
#include "extract_int.h"

#define PI 3.14159265358979323846
#define NMAX_T 3
#define CNT_T (NMAX_T * (NMAX_T + 2))

/* Recurrences in double precision: a few hundred ulps. */
#define TOL_FN 1e-12

typedef struct {
    int n, m;
    double theta, phi, re, im;
} yref;
typedef struct {
    int n;
    double rho, j, y;
} bref;

/* tests/data/extract/vswf_ref.py: scipy.special.sph_harm and spherical_jn/spherical_yn,
 * scipy 1.10.1 via /usr/bin/python3. */
static const yref YREF[] = {
    {1, -1, 0.73119999999999996, 2.1457000000000002, -0.12544856904435706,
     -0.19362074418560118},
    {1, 0, 0.73119999999999996, 2.1457000000000002, 0.3637028217230619, 0},
    {1, 1, 0.73119999999999996, 2.1457000000000002, 0.12544856904435706,
     -0.19362074418560118},
    {2, -2, 0.73119999999999996, 2.1457000000000002, -0.070389275900967857,
     0.1572033879570929},
    {2, -1, 0.73119999999999996, 2.1457000000000002, -0.20880538228326939,
     -0.32227592403505501},
    {2, 0, 0.73119999999999996, 2.1457000000000002, 0.20887634923421836, 0},
    {2, 1, 0.73119999999999996, 2.1457000000000002, 0.20880538228326939,
     -0.32227592403505501},
    {2, 2, 0.73119999999999996, 2.1457000000000002, -0.070389275900967871,
     -0.15720338795709293},
    {3, -3, 0.73119999999999996, 2.1457000000000002, 0.1227643486080346,
     -0.019045872274639625},
    {3, -2, 0.73119999999999996, 2.1457000000000002, -0.13862657478581569,
     0.30960067337356834},
    {3, -1, 0.73119999999999996, 2.1457000000000002, -0.20775714455118988,
     -0.32065804531938069},
    {3, 0, 0.73119999999999996, 2.1457000000000002, -0.063762097528791251, 0},
    {3, 1, 0.73119999999999996, 2.1457000000000002, 0.2077571445511899,
     -0.32065804531938075},
    {3, 2, 0.73119999999999996, 2.1457000000000002, -0.13862657478581566,
     -0.30960067337356828},
    {3, 3, 0.73119999999999996, 2.1457000000000002, -0.12276434860803459,
     -0.019045872274639622},
    {7, -7, 0.73119999999999996, 2.1457000000000002, -0.022869056681169495,
     -0.018800315388382477},
    {7, -3, 0.73119999999999996, 2.1457000000000002, 0.33638457799137189,
     -0.052187282221794126},
    {7, 0, 0.73119999999999996, 2.1457000000000002, -0.012433617380314406, 0},
    {7, 3, 0.73119999999999996, 2.1457000000000002, -0.33638457799137189,
     -0.052187282221794126},
    {7, 7, 0.73119999999999996, 2.1457000000000002, 0.022869056681169495,
     -0.018800315388382473},
    {1, -1, 2.4011999999999998, -0.84130000000000005, 0.1553349377624991,
     0.17375061144797019},
    {1, 0, 2.4011999999999998, -0.84130000000000005, -0.36068820177737593, 0},
    {1, 1, 2.4011999999999998, -0.84130000000000005, -0.1553349377624991,
     0.17375061144797019},
    {2, -2, 2.4011999999999998, -0.84130000000000005, -0.019611496370718736,
     0.1746786367954643},
    {2, -1, 2.4011999999999998, -0.84130000000000005, -0.25640730335585094,
     -0.28680557239428556},
    {2, 0, 2.4011999999999998, -0.84130000000000005, 0.20022137923616271, 0},
    {2, 1, 2.4011999999999998, -0.84130000000000005, 0.25640730335585094,
     -0.28680557239428556},
    {2, 2, 2.4011999999999998, -0.84130000000000005, -0.01961149637071874,
     -0.17467863679546433},
    {3, -3, 2.4011999999999998, -0.84130000000000005, -0.10440912834486053,
     0.074175523883458425},
    {3, -2, 2.4011999999999998, -0.84130000000000005, 0.0383032824680683,
     -0.34116545927130448},
    {3, -1, 2.4011999999999998, -0.84130000000000005, 0.25060673205715095,
     0.28031731660061709},
    {3, 0, 2.4011999999999998, -0.84130000000000005, 0.075833129956949574, 0},
    {3, 1, 2.4011999999999998, -0.84130000000000005, -0.25060673205715095,
     0.28031731660061709},
    {3, 2, 2.4011999999999998, -0.84130000000000005, 0.0383032824680683,
     0.34116545927130443},
    {3, 3, 2.4011999999999998, -0.84130000000000005, 0.10440912834486053,
     0.074175523883458425},
    {7, -7, 2.4011999999999998, -0.84130000000000005, 0.029349064799274609,
     -0.012204472862542571},
    {7, -3, 2.4011999999999998, -0.84130000000000005, -0.26300292051600638,
     0.18684553469040271},
    {7, 0, 2.4011999999999998, -0.84130000000000005, -0.014407249368557183, 0},
    {7, 3, 2.4011999999999998, -0.84130000000000005, 0.26300292051600638,
     0.18684553469040271},
    {7, 7, 2.4011999999999998, -0.84130000000000005, -0.029349064799274616,
     -0.012204472862542575},
    {1, -1, 0.050000000000000003, 0.29999999999999999, 0.016496282931962019,
     -0.0051028982946723696},
    {1, 0, 0.050000000000000003, 0.29999999999999999, 0.4879918859926759, 0},
    {1, 1, 0.050000000000000003, 0.29999999999999999, -0.016496282931962019,
     -0.0051028982946723696},
    {2, -2, 0.050000000000000003, 0.29999999999999999, 0.00079635068261301313,
     -0.00054481281432359476},
    {2, -1, 0.050000000000000003, 0.29999999999999999, 0.036840711104561344,
     -0.011396167406036604},
    {2, 0, 0.050000000000000003, 0.29999999999999999, 0.62841966430598051, 0},
    {2, 1, 0.050000000000000003, 0.29999999999999999, -0.036840711104561344,
     -0.011396167406036604},
    {2, 2, 0.050000000000000003, 0.29999999999999999, 0.00079635068261301335,
     0.00054481281432359487},
    {3, -3, 0.050000000000000003, 0.29999999999999999, 3.2378309400922011e-05,
     -4.0801792661959261e-05},
    {3, -2, 0.050000000000000003, 0.29999999999999999, 0.0021043127289004202,
     -0.0014396377941027303},
    {3, -1, 0.050000000000000003, 0.29999999999999999, 0.061530713824719946,
     -0.019033680250341863},
    {3, 0, 0.050000000000000003, 0.29999999999999999, 0.74076492530489668, 0},
    {3, 1, 0.050000000000000003, 0.29999999999999999, -0.06153071382471996,
     -0.019033680250341869},
    {3, 2, 0.050000000000000003, 0.29999999999999999, 0.0021043127289004202,
     0.0014396377941027303},
    {3, 3, 0.050000000000000003, 0.29999999999999999, -3.2378309400922011e-05,
     -4.0801792661959268e-05},
    {7, -7, 0.050000000000000003, 0.29999999999999999, -1.9664667592444585e-10,
     -3.3623563900307674e-10},
    {7, -3, 0.050000000000000003, 0.29999999999999999, 0.00068213718088107832,
     -0.00085960077398391274},
    {7, 0, 0.050000000000000003, 0.29999999999999999, 1.0546385924886488, 0},
    {7, 3, 0.050000000000000003, 0.29999999999999999, -0.00068213718088107843,
     -0.00085960077398391295},
    {7, 7, 0.050000000000000003, 0.29999999999999999, 1.9664667592444587e-10,
     -3.3623563900307674e-10},
};
static const bref BREF[] = {
    {0, 0.0001, 0.99999999833333342, -9999.9999499999994},
    {1, 0.0001, 3.3333333300000061e-05, -100000000.49999999},
    {2, 0.0001, 6.666666661904783e-10, -3000000004999.999},
    {5, 0.0001, 9.620009616309665e-25, -9.4500000052499969e+26},
    {12, 0.0001, 1.264885555514906e-61, -3.1623414329374637e+63},
    {0, 0.38169999999999998, 0.9758937976240295, -2.431314459424037},
    {1, 0.38169999999999998, 0.12538922835178049, -7.3455937175193329},
    {2, 0.38169999999999998, 0.0096123198906185731, -55.301934564830617},
    {5, 0.38169999999999998, 7.7508933652805332e-07, -308047.84893757751},
    {12, 0.38169999999999998, 1.2065499161639738e-18, -86895326355142208},
    {0, 2.8999999999999999, 0.082499768694476699, 0.33481316039641057},
    {1, 2.8999999999999999, 0.36326135649795427, 0.032953045235320048},
    {2, 2.8999999999999999, 0.29328784147582077, -0.30072380325642434},
    {5, 2.8999999999999999, 0.014174053916633757, -2.646176840977942},
    {12, 2.8999999999999999, 3.826675806497015e-08, -370633.68216101581},
    {0, 3.1415926535897931, 3.8981718325193755e-17, 0.31830988618379069},
    {1, 3.1415926535897931, 0.31830988618379069, 0.10132118364233775},
    {2, 3.1415926535897931, 0.30396355092701327, -0.22155528288419224},
    {5, 3.1415926535897931, 0.019935413383293583, -1.808942200067774},
    {12, 3.1415926535897931, 9.7266930086107587e-08, -135276.78756820137},
    {0, 17.300000000000001, -0.057790429541792546, -0.0012276767730431219},
    {1, 17.300000000000001, -0.0045681640297941363, 0.057719465566472138},
    {2, 17.300000000000001, 0.056998262368995876, 0.011236832651622104},
    {5, 17.300000000000001, -0.046264696420330063, 0.037159854785138835},
    {12, 17.300000000000001, -0.0023890335499928, 0.069137295254033976},
    {0, 45.200000000000003, 0.020759014896760051, -0.0076504887180308054},
    {1, 45.200000000000003, -0.0071912184769520422, -0.020928273496716485},
    {2, 45.200000000000003, -0.021236308158504656, 0.0062614440169213043},
    {5, 45.200000000000003, -0.0004642889154176065, -0.022200947734140965},
    {12, 45.200000000000003, 0.0042056325155694248, 0.022171867447043643},
};

static void test_vswf_harmonics_match_scipy(void **state)
{
    (void)state;
    double complex P[3 * 7 * 9];
    for (size_t i = 0; i < sizeof YREF / sizeof YREF[0]; i++) {
        const yref *r = &YREF[i];
        double dir[3] = {sin(r->theta) * cos(r->phi), sin(r->theta) * sin(r->phi),
                         cos(r->theta)};
        assert_int_equal(dpz_vsh_eval(7, dir, NULL, NULL, P, NULL), DPZ_OK);
        size_t idx = dpz_vswf_index((size_t)r->n, r->m);
        /* P_nm = r^ Y_n^m, so r^ . P_nm = Y_n^m */
        double complex y =
            dir[0] * P[3 * idx] + dir[1] * P[3 * idx + 1] + dir[2] * P[3 * idx + 2];
        assert_cclose_abs(y, CMPLX(r->re, r->im), TOL_FN, 1.0);
    }
}

static void test_vswf_bessel_match_scipy(void **state)
{
    (void)state;
    double j[13], y[13];
    for (size_t i = 0; i < sizeof BREF / sizeof BREF[0]; i++) {
        const bref *r = &BREF[i];
        dpz__sph_jn(r->rho, 12, j);
        dpz__sph_yn(r->rho, 12, y);
        /* series (rho < 1): relative accuracy; Miller recursion: accuracy relative to
         * the largest j_n (j_0(pi) is 3.9e-17 but known only to ~1e-16 absolutely) */
        assert_close_abs(j[r->n], r->j, TOL_FN, r->rho < 1.0 ? 1e-300 : 1e-4);
        /* upward recursion for y_n is stable; relative accuracy */
        assert_close(y[r->n], r->y, TOL_FN);
    }
}

/* Far arguments (a multipole origin metres away from nanometre voxels): scipy 1.10.1
 * spherical_jn. Miller's recursion was 4e-7 off at rho = 1000 and ran ~rho steps. */
static void test_vswf_bessel_far_argument(void **state)
{
    (void)state;
    static const struct {
        int n;
        double rho, j;
    } far[] = {
        {0, 1000.3, 0.00095585582128268132}, {1, 1000.3, -0.00029185822631007841},
        {3, 1000.3, 0.00028707600530953866}, {0, 2e+17, 4.1136803855183093e-18},
        {1, 2e+17, -2.8421178170163762e-18}, {3, 2e+17, 2.8421178170163762e-18},
    };
    double j[4];
    for (size_t i = 0; i < sizeof far / sizeof far[0]; i++) {
        dpz__sph_jn(far[i].rho, 3, j);
        /* relative to the envelope 1/rho of j_n for n << rho */
        assert_close_abs(j[far[i].n], far[i].j, TOL_FN, 1.0 / far[i].rho);
    }
}

/* Gauss-Legendre nodes and weights on [-1, 1] by Newton iteration on P_n (common
 * practice; e.g. Press et al., Numerical Recipes, sec. 4.6). */
static void gauss_legendre(int n, double *x, double *w)
{
    for (int i = 0; i < n; i++) {
        double z = cos(PI * (i + 0.75) / (n + 0.5)), pp = 0.0;
        for (int it = 0; it < 100; it++) {
            double p1 = 1.0, p2 = 0.0;
            for (int l = 1; l <= n; l++) {
                double p3 = p2;
                p2 = p1;
                p1 = ((2.0 * l - 1.0) * z * p2 - (l - 1.0) * p3) / l;
            }
            pp = n * (z * p1 - p2) / (z * z - 1.0);
            double dz = p1 / pp;
            z -= dz;
            if (fabs(dz) < 1e-16)
                break;
        }
        x[i] = z;
        w[i] = 2.0 / ((1.0 - z * z) * pp * pp);
    }
}

/* C, B, P orthonormal on the unit sphere: int conj(X_a) . Y_b dOmega = delta_ab
 * (Mishchenko et al. 2002, app. C). Quadrature: 16 Gauss-Legendre nodes in cos(theta),
 * 32 uniform in phi, exact for these band-limited products. */
static void test_vswf_orthonormal_quadrature(void **state)
{
    (void)state;
    enum { NT = 16, NP = 32, NF = 3 * CNT_T };
    double xs[NT], ws[NT];
    gauss_legendre(NT, xs, ws);
    static double complex gram[NF][NF];
    memset(gram, 0, sizeof gram);
    double complex C[3 * CNT_T], B[3 * CNT_T], P[3 * CNT_T];
    for (int it = 0; it < NT; it++) {
        double st = sqrt(1.0 - xs[it] * xs[it]);
        for (int ip = 0; ip < NP; ip++) {
            double phi = 2.0 * PI * (ip + 0.1234) / NP;
            double dir[3] = {st * cos(phi), st * sin(phi), xs[it]};
            assert_int_equal(dpz_vsh_eval(NMAX_T, dir, C, B, P, NULL), DPZ_OK);
            double w = ws[it] * 2.0 * PI / NP;
            const double complex *f[3] = {C, B, P};
            for (int a = 0; a < NF; a++)
                for (int b = 0; b < NF; b++) {
                    const double complex *fa = f[a / CNT_T] + 3 * (a % CNT_T);
                    const double complex *fb = f[b / CNT_T] + 3 * (b % CNT_T);
                    gram[a][b] += w * (conj(fa[0]) * fb[0] + conj(fa[1]) * fb[1] +
                                       conj(fa[2]) * fb[2]);
                }
        }
    }
    for (int a = 0; a < NF; a++)
        for (int b = 0; b < NF; b++)
            assert_cclose_abs(gram[a][b], a == b ? 1.0 : 0.0, 1e-13, 1.0);
}

/* Curl by central differences of step h; truncation error O(h^2). */
static void fd_curl(dpz_vswf_kind kind, int field_is_m, double k, const double r[3],
                    double h, double complex curl[CNT_T][3])
{
    double complex M[3 * CNT_T], N[3 * CNT_T];
    double complex d[3][CNT_T][3]; /* d[axis][idx][comp] */
    for (int ax = 0; ax < 3; ax++) {
        double rp[3] = {r[0], r[1], r[2]}, rm[3] = {r[0], r[1], r[2]};
        rp[ax] += h;
        rm[ax] -= h;
        double complex fp[3 * CNT_T];
        dpz_vswf_eval(kind, NMAX_T, k, rp, M, N, NULL);
        memcpy(fp, field_is_m ? M : N, sizeof fp);
        dpz_vswf_eval(kind, NMAX_T, k, rm, M, N, NULL);
        const double complex *fm = field_is_m ? M : N;
        for (int i = 0; i < CNT_T; i++)
            for (int c = 0; c < 3; c++)
                d[ax][i][c] = (fp[3 * i + c] - fm[3 * i + c]) / (2.0 * h);
    }
    for (int i = 0; i < CNT_T; i++) {
        curl[i][0] = d[1][i][2] - d[2][i][1];
        curl[i][1] = d[2][i][0] - d[0][i][2];
        curl[i][2] = d[0][i][1] - d[1][i][0];
    }
}

/* N = curl M / k and curl N = k M (definition; Tsang, Kong & Ding 2000). */
static void test_vswf_curl_relations(void **state)
{
    (void)state;
    const double k = 1.385e7;
    const double pts[3][3] = {
        {0.8e-7, -0.6e-7, 1.1e-7}, {-1.7e-7, 0.4e-7, -0.3e-7}, {0.0, 0.0, 0.9e-7}};
    const double h = 1e-5 / k;
    /* central differences with kh = 1e-5: truncation ~1e-11, rounding ~1e-11 */
    const double tol_fd = 1e-7;
    for (int kind = 0; kind < 2; kind++)
        for (int p = 0; p < 3; p++) {
            double complex M[3 * CNT_T], N[3 * CNT_T], cm[CNT_T][3], cn[CNT_T][3];
            assert_int_equal(dpz_vswf_eval(kind, NMAX_T, k, pts[p], M, N, NULL), DPZ_OK);
            fd_curl(kind, 1, k, pts[p], h, cm);
            fd_curl(kind, 0, k, pts[p], h, cn);
            double scale = 0.0;
            for (int i = 0; i < 3 * CNT_T; i++)
                scale = fmax(scale, fmax(cabs(N[i]), cabs(M[i])));
            for (int i = 0; i < CNT_T; i++) {
                for (int c = 0; c < 3; c++) {
                    assert_cclose_abs(cm[i][c] / k, N[3 * i + c], tol_fd, scale);
                    assert_cclose_abs(cn[i][c] / k, M[3 * i + c], tol_fd, scale);
                }
            }
        }
}

/* The order-1 Cartesian forms equal the general spherical form, on and off the axis. */
static void test_vswf_order1_cartesian_matches(void **state)
{
    (void)state;
    const double k = 2.385e7;
    const double pts[5][3] = {{0.3e-7, 0.2e-7, -0.5e-7},
                              {-1.2e-7, 0.9e-7, 0.4e-7},
                              {0.0, 0.0, 0.7e-7},
                              {0.0, 0.0, -0.7e-7},
                              {1e-12, -2e-12, 3e-12}};
    for (int kind = 0; kind < 2; kind++)
        for (int p = 0; p < 5; p++) {
            double complex M[3 * 3], N[3 * 3];
            assert_int_equal(dpz_vswf_eval(kind, 1, k, pts[p], M, N, NULL), DPZ_OK);
            for (int m = -1; m <= 1; m++) {
                double complex Mc[3], Nc[3];
                assert_int_equal(dpz_vswf1_cart(kind, m, k, pts[p], Mc, Nc, NULL),
                                 DPZ_OK);
                size_t idx = dpz_vswf_index(1, m);
                double scale = 0.0;
                for (int c = 0; c < 3; c++)
                    scale = fmax(scale, fmax(cabs(Nc[c]), cabs(Mc[c])));
                for (int c = 0; c < 3; c++) {
                    assert_cclose_abs(M[3 * idx + c], Mc[c], 1e-12, scale);
                    assert_cclose_abs(N[3 * idx + c], Nc[c], 1e-12, scale);
                }
            }
        }
}

/* At the origin RgM = 0, RgN_1m = e_m / sqrt(6 pi), higher orders vanish (limits of
 * j_n(rho)/rho and (rho j_n)'/rho); the values are continuous as r -> 0. */
static void test_vswf_origin_and_axis_limits(void **state)
{
    (void)state;
    const double k = 1.7e7;
    double complex M[3 * CNT_T], N[3 * CNT_T], M2[3 * CNT_T], N2[3 * CNT_T];
    const double o[3] = {0.0, 0.0, 0.0};
    assert_int_equal(dpz_vswf_eval(DPZ_VSWF_REGULAR, NMAX_T, k, o, M, N, NULL), DPZ_OK);
    for (int m = -1; m <= 1; m++) {
        double complex e[3];
        dpz_vswf_unit(m, e);
        size_t idx = dpz_vswf_index(1, m);
        for (int c = 0; c < 3; c++)
            assert_cclose_abs(N[3 * idx + c], e[c] / sqrt(6.0 * PI), 1e-15, 1.0);
    }
    for (int i = 0; i < 3 * CNT_T; i++) {
        assert_true(M[i] == 0.0);
        if (i >= 9)
            assert_true(N[i] == 0.0);
    }
    /* near the origin: O(kr) deviations */
    const double tiny[3] = {1e-9 / k, -2e-9 / k, 0.5e-9 / k};
    assert_int_equal(dpz_vswf_eval(DPZ_VSWF_REGULAR, NMAX_T, k, tiny, M2, N2, NULL),
                     DPZ_OK);
    for (int i = 0; i < 3 * CNT_T; i++) {
        assert_true(cabs(M2[i] - M[i]) < 1e-8);
        assert_true(cabs(N2[i] - N[i]) < 1e-8);
    }
    /* on the z axis (both poles) vs a point 1e-9 rad off the axis */
    for (int sgn = -1; sgn <= 1; sgn += 2) {
        double zax[3] = {0.0, 0.0, sgn * 1.3e-7};
        double off[3] = {1.3e-7 * 1e-9, 0.0, sgn * 1.3e-7};
        for (int kind = 0; kind < 2; kind++) {
            assert_int_equal(dpz_vswf_eval(kind, NMAX_T, k, zax, M, N, NULL), DPZ_OK);
            assert_int_equal(dpz_vswf_eval(kind, NMAX_T, k, off, M2, N2, NULL), DPZ_OK);
            for (int i = 0; i < 3 * CNT_T; i++) {
                assert_cclose_abs(M2[i], M[i], 1e-8, 1.0);
                assert_cclose_abs(N2[i], N[i], 1e-8, 1.0);
            }
        }
    }
}

/* Plane wave E0 exp(i k khat.r) = sum a^M RgM + a^N RgN (Mishchenko et al. 2002 app. C
 * in the orthonormal form), truncated at n = 20 for kr ~ 2: the tail is ~ (kr/2)^20/20!.
 */
static void test_vswf_plane_wave_expansion(void **state)
{
    (void)state;
    enum { NM = 20, CNT = NM * (NM + 2) };
    const double k = 1.2385e7;
    double khat[3] = {0.3, -0.5, 0.81};
    double nk = sqrt(khat[0] * khat[0] + khat[1] * khat[1] + khat[2] * khat[2]);
    for (int c = 0; c < 3; c++)
        khat[c] /= nk;
    /* elliptical polarization transverse to khat: e1 = z x khat normalized, e2 = khat x
     * e1 */
    double e1[3] = {-khat[1], khat[0], 0.0};
    double n1 = sqrt(e1[0] * e1[0] + e1[1] * e1[1]);
    e1[0] /= n1;
    e1[1] /= n1;
    double e2[3] = {khat[1] * e1[2] - khat[2] * e1[1], khat[2] * e1[0] - khat[0] * e1[2],
                    khat[0] * e1[1] - khat[1] * e1[0]};
    double complex e0[3];
    for (int c = 0; c < 3; c++)
        e0[c] = 2.385 * e1[c] + CMPLX(0.7, -1.3) * e2[c];
    static double complex aM[CNT], aN[CNT], M[3 * CNT], N[3 * CNT];
    assert_int_equal(dpz_vswf_plane_wave(NM, khat, e0, aM, aN, NULL), DPZ_OK);
    const double pts[4][3] = {{1.0e-7, 0.5e-7, -0.9e-7},
                              {0.0, 0.0, 1.6e-7},
                              {-1.1e-7, 0.7e-7, 0.2e-7},
                              {0, 0, 0}};
    for (int p = 0; p < 4; p++) {
        assert_int_equal(dpz_vswf_eval(DPZ_VSWF_REGULAR, NM, k, pts[p], M, N, NULL),
                         DPZ_OK);
        double kr = k * (khat[0] * pts[p][0] + khat[1] * pts[p][1] + khat[2] * pts[p][2]);
        double complex ph = cexp(I * kr);
        for (int c = 0; c < 3; c++) {
            double complex s = 0.0;
            for (int i = 0; i < CNT; i++)
                s += aM[i] * M[3 * i + c] + aN[i] * N[3 * i + c];
            assert_cclose_abs(s, e0[c] * ph, 1e-12, 2.7);
        }
    }
}

/* Closed-form Green tensor (Jackson, Classical Electrodynamics, eq. 9.18 in the units
 * E = G p / (eps0 eps_h)); a private copy for this test. */
static void green_closed(double k, const double R[3], double complex G[3][3])
{
    double r = sqrt(R[0] * R[0] + R[1] * R[1] + R[2] * R[2]);
    double complex ph = cexp(I * k * r) / (4.0 * PI * r * r * r);
    double complex a = k * k * r * r + I * k * r - 1.0;
    double complex b = k * k * r * r + 3.0 * I * k * r - 3.0;
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            G[i][j] = ph * ((i == j ? a : 0.0) - b * R[i] * R[j] / (r * r));
}

/* G(r - r') = i k^3 sum [M(r) RgM(r')^dagger + N(r) RgN(r')^dagger] for |r| > |r'|
 * (Tsang, Kong & Ding 2000, dyadic Green function expansion, in these units); the
 * truncation error at n = 20 and |r'|/|r| = 0.22 is ~1e-13. */
static void test_vswf_green_expansion(void **state)
{
    (void)state;
    enum { NM = 20, CNT = NM * (NM + 2) };
    const double k = 1.0e7;
    const double r[3] = {1.3e-7, -1.5e-7, 1.2e-7};   /* kr = 2.33 */
    const double rp[3] = {0.2e-7, 0.35e-7, -0.3e-7}; /* kr' = 0.50 */
    static double complex M[3 * CNT], N[3 * CNT], RM[3 * CNT], RN[3 * CNT];
    assert_int_equal(dpz_vswf_eval(DPZ_VSWF_OUTGOING, NM, k, r, M, N, NULL), DPZ_OK);
    assert_int_equal(dpz_vswf_eval(DPZ_VSWF_REGULAR, NM, k, rp, RM, RN, NULL), DPZ_OK);
    double R[3] = {r[0] - rp[0], r[1] - rp[1], r[2] - rp[2]};
    double complex G[3][3];
    green_closed(k, R, G);
    double gmax = 0.0;
    for (int a = 0; a < 3; a++)
        for (int b = 0; b < 3; b++)
            gmax = fmax(gmax, cabs(G[a][b]));
    for (int a = 0; a < 3; a++)
        for (int b = 0; b < 3; b++) {
            double complex s = 0.0;
            for (int i = 0; i < CNT; i++)
                s += M[3 * i + a] * conj(RM[3 * i + b]) +
                     N[3 * i + a] * conj(RN[3 * i + b]);
            s *= I * k * k * k;
            assert_cclose_abs(s, G[a][b], 1e-9, gmax);
        }
}

static void test_vswf_rejects_bad_input(void **state)
{
    (void)state;
    double complex M[3 * CNT_T], N[3 * CNT_T];
    const double o[3] = {0, 0, 0}, p[3] = {1e-7, 0, 0};
    dpz_err err;
    assert_int_equal(dpz_vswf_eval(DPZ_VSWF_OUTGOING, 3, 1e7, o, M, N, &err), DPZ_EINVAL);
    assert_int_equal(err.code, DPZ_EINVAL);
    assert_int_equal(dpz_vswf_eval(DPZ_VSWF_REGULAR, 0, 1e7, p, M, N, &err), DPZ_EINVAL);
    assert_int_equal(
        dpz_vswf_eval(DPZ_VSWF_REGULAR, DPZ_VSWF_NMAX + 1, 1e7, p, M, N, &err),
        DPZ_EINVAL);
    assert_int_equal(dpz_vswf_eval(DPZ_VSWF_REGULAR, 3, 0.0, p, M, N, &err), DPZ_EINVAL);
    const double bad[3] = {NAN, 0, 0};
    assert_int_equal(dpz_vswf_eval(DPZ_VSWF_REGULAR, 3, 1e7, bad, M, N, &err),
                     DPZ_EINVAL);
    assert_int_equal(dpz_vsh_eval(3, o, M, N, NULL, &err), DPZ_EINVAL);
    assert_int_equal(dpz_vswf1_cart(DPZ_VSWF_REGULAR, 2, 1e7, p, M, N, &err), DPZ_EINVAL);
    assert_int_equal(dpz_vswf1_cart(DPZ_VSWF_OUTGOING, 0, 1e7, o, M, N, &err),
                     DPZ_EINVAL);
    const double complex e0[3] = {1, 0, 0};
    assert_int_equal(dpz_vswf_plane_wave(3, o, e0, M, N, &err), DPZ_EINVAL);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_vswf_harmonics_match_scipy),
        cmocka_unit_test(test_vswf_bessel_match_scipy),
        cmocka_unit_test(test_vswf_bessel_far_argument),
        cmocka_unit_test(test_vswf_orthonormal_quadrature),
        cmocka_unit_test(test_vswf_curl_relations),
        cmocka_unit_test(test_vswf_order1_cartesian_matches),
        cmocka_unit_test(test_vswf_origin_and_axis_limits),
        cmocka_unit_test(test_vswf_plane_wave_expansion),
        cmocka_unit_test(test_vswf_green_expansion),
        cmocka_unit_test(test_vswf_rejects_bad_input),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
