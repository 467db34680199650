/* test_extract_post.c: post-processing of polarizability tensors (extract/dpz_post.h):
 * z-y-z Euler rotations (z-y-z variant, e.g. Goldstein, Classical Mechanics), principal
 * values and axes, orientation averages (invariance of the trace under rotation), and the
 * chirality pseudoscalar (Lindell et al. 1994) under rotation and mirror reflection. */
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

#include "dpz_post.h"

/* 3x3 products and 6x6 sandwiches: a few tens of ulps. */
#define TOL_LIN (256 * DBL_EPSILON)

static void matmul3(double A[3][3], double B[3][3], double C[3][3])
{
    double T[3][3];
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++) {
            T[i][j] = 0.0;
            for (int l = 0; l < 3; l++)
                T[i][j] += A[i][l] * B[l][j];
        }
    memcpy(C, T, sizeof T);
}

static void rz(double a, double R[3][3])
{
    double M[3][3] = {{cos(a), -sin(a), 0}, {sin(a), cos(a), 0}, {0, 0, 1}};
    memcpy(R, M, sizeof M);
}

static void ry(double a, double R[3][3])
{
    double M[3][3] = {{cos(a), 0, sin(a)}, {0, 1, 0}, {-sin(a), 0, cos(a)}};
    memcpy(R, M, sizeof M);
}

static void random_tensor(uint64_t *seed, double complex A[6][6])
{
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++)
            A[i][j] = 1e-22 * CMPLX(dpz_test_rand(seed), dpz_test_rand(seed));
}

/* R = Rz(alpha) Ry(beta) Rz(gamma) built from the elementary rotations. */
static void test_post_euler_matrix_composition(void **state)
{
    (void)state;
    const double eu[3] = {0.385, 1.27, -2.05};
    double R[3][3], A[3][3], B[3][3], C[3][3];
    dpz_post_euler_matrix(eu, R);
    rz(eu[0], A);
    ry(eu[1], B);
    rz(eu[2], C);
    matmul3(A, B, A);
    matmul3(A, C, A);
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++) {
            assert_close_abs(R[i][j], A[i][j], TOL_LIN, 1.0);
            double s = 0.0; /* orthogonality R^T R = I */
            for (int l = 0; l < 3; l++)
                s += R[l][i] * R[l][j];
            assert_close_abs(s, i == j ? 1.0 : 0.0, TOL_LIN, 1.0);
        }
}

/* Rotating a tensor: blockwise R X R^T, traces (orientation averages), Frobenius norms
 * and the chirality pseudoscalar are invariant; rotating back restores it. */
static void test_post_rotation_invariants(void **state)
{
    (void)state;
    uint64_t seed = 0x1234fedcULL;
    double complex A[6][6], B[6][6], C[6][6];
    random_tensor(&seed, A);
    const double eu[3] = {2.385, 0.41, 1.9};
    dpz_post_rotate6(A, eu, B);
    double complex a0[4], a1[4];
    dpz_post_orientation_average(A, a0);
    dpz_post_orientation_average(B, a1);
    for (int b = 0; b < 4; b++)
        assert_cclose(a1[b], a0[b], 1e-13);
    assert_cclose(dpz_post_chirality(B), dpz_post_chirality(A), 1e-13);
    assert_close(dpz_post_bianisotropy(B), dpz_post_bianisotropy(A), 1e-13);
    const double back[3] = {-eu[2], -eu[1], -eu[0]};
    dpz_post_rotate6(B, back, C);
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++)
            assert_cclose_abs(C[i][j], A[i][j], 1e-13, 1e-22);
    /* in-place use */
    memcpy(C, A, sizeof C);
    dpz_post_rotate6(C, eu, C);
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++)
            assert_cclose_abs(C[i][j], B[i][j], 1e-15, 1e-22);
    /* a_em block of the rotated tensor equals R a_em R^T computed with rotate3 */
    double complex em[3][3], em2[3][3];
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            em[i][j] = A[i][j + 3];
    dpz_post_rotate3(em, eu, em2);
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            assert_cclose_abs(B[i][j + 3], em2[i][j], 1e-14, 1e-22);
}

/* Mirror reflection S = diag(1, 1, -1): polar vectors E, p transform with S, axial ones
 * H, m with det(S) S = -S, so a_em -> -S a_em S^T and tr(a_em) changes sign. */
static void test_post_chirality_is_pseudoscalar(void **state)
{
    (void)state;
    uint64_t seed = 0xabcdef01ULL;
    double complex A[6][6], M[6][6];
    random_tensor(&seed, A);
    const double S[3] = {1.0, 1.0, -1.0};
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++) {
            M[i][j] = S[i] * A[i][j] * S[j];
            M[i][j + 3] = -S[i] * A[i][j + 3] * S[j];
            M[i + 3][j] = -S[i] * A[i + 3][j] * S[j];
            M[i + 3][j + 3] = S[i] * A[i + 3][j + 3] * S[j];
        }
    assert_cclose(dpz_post_chirality(M), -dpz_post_chirality(A), 1e-15);
    /* an isotropic chiral tensor a_em = kappa I: chirality kappa, bianisotropy
     * |kappa| sqrt(3) / sqrt(|a_ee|_F |a_mm|_F) */
    double complex B[6][6];
    memset(B, 0, sizeof B);
    double complex kappa = CMPLX(0.0, 2.385e-23);
    for (int i = 0; i < 3; i++) {
        B[i][i] = 4.1e-22;
        B[i + 3][i + 3] = 1.7e-23;
        B[i][i + 3] = kappa;
        B[i + 3][i] = -kappa;
    }
    assert_cclose(dpz_post_chirality(B), kappa, 1e-15);
    double want =
        cabs(kappa) * sqrt(3.0) / sqrt(4.1e-22 * sqrt(3.0) * 1.7e-23 * sqrt(3.0));
    assert_close(dpz_post_bianisotropy(B), want, 1e-14);
    memset(B, 0, sizeof B);
    assert_true(dpz_post_bianisotropy(B) == 0.0);
}

/* Principal values and axes of a rotated diagonal tensor are the diagonal and the columns
 * of the rotation (up to sign). */
static void test_post_principal_axes(void **state)
{
    (void)state;
    const double vals[3] = {1.1e-22, 2.385e-22, 3.7e-22};
    const double eu[3] = {0.7, 1.1, -0.3};
    double complex chi[3][3];
    memset(chi, 0, sizeof chi);
    for (int i = 0; i < 3; i++)
        chi[i][i] = CMPLX(vals[i], 0.3e-22 * (i + 1)); /* imaginary parts are ignored */
    dpz_post_rotate3(chi, eu, chi);
    double R[3][3], got[3], axes[3][3];
    dpz_post_euler_matrix(eu, R);
    assert_int_equal(dpz_post_principal_real(chi, got, axes, NULL), DPZ_OK);
    for (int i = 0; i < 3; i++) {
        assert_close(got[i], vals[i], 1e-13);
        double dot = 0.0;
        for (int c = 0; c < 3; c++)
            dot += axes[c][i] * R[c][i];
        assert_close(fabs(dot), 1.0, 1e-12);
    }
    /* Hermitian part of a complex symmetric block: (B + B^H)/2 = Re B here */
    double complex ax[3][3];
    double hv[3];
    assert_int_equal(dpz_post_principal_herm(chi, hv, ax, NULL), DPZ_OK);
    for (int i = 0; i < 3; i++) {
        assert_close(hv[i], vals[i], 1e-13);
        double complex dot = 0.0;
        for (int c = 0; c < 3; c++)
            dot += conj(ax[c][i]) * R[c][i];
        assert_close(cabs(dot), 1.0, 1e-12);
    }
    dpz_err err;
    assert_int_equal(dpz_post_principal_real(NULL, got, axes, &err), DPZ_EINVAL);
    assert_int_equal(dpz_post_principal_herm(NULL, hv, NULL, &err), DPZ_EINVAL);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_post_euler_matrix_composition),
        cmocka_unit_test(test_post_rotation_invariants),
        cmocka_unit_test(test_post_chirality_is_pseudoscalar),
        cmocka_unit_test(test_post_principal_axes),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
