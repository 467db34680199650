/* post.c: principal values, orientation averages, rotations, chirality and bianisotropy
 * of polarizability tensors (see dpz_post.h). */
#include "dpz_post.h"

#include <math.h>
#include <string.h>

#include <lapacke.h>

dpz_status dpz_post_principal_real(double complex chi[3][3], double values[3],
                                   double axes[3][3], dpz_err *err)
{
    if (!chi || !values || !axes)
        return dpz_err_set(err, DPZ_EINVAL, "principal values: NULL argument");
    double a[9];
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            a[3 * i + j] = 0.5 * (creal(chi[i][j]) + creal(chi[j][i]));
    lapack_int info = LAPACKE_dsyev(LAPACK_ROW_MAJOR, 'V', 'U', 3, a, 3, values);
    if (info != 0)
        return dpz_err_set(err, DPZ_ELAPACK, "principal values: dsyev failed (info %d)",
                           (int)info);
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            axes[i][j] = a[3 * i + j];
    return DPZ_OK;
}

dpz_status dpz_post_principal_herm(double complex blk[3][3], double values[3],
                                   double complex axes[3][3], dpz_err *err)
{
    if (!blk || !values)
        return dpz_err_set(err, DPZ_EINVAL, "principal values: NULL argument");
    lapack_complex_double a[9];
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            a[3 * i + j] = 0.5 * (blk[i][j] + conj(blk[j][i]));
    lapack_int info =
        LAPACKE_zheev(LAPACK_ROW_MAJOR, axes ? 'V' : 'N', 'U', 3, a, 3, values);
    if (info != 0)
        return dpz_err_set(err, DPZ_ELAPACK, "principal values: zheev failed (info %d)",
                           (int)info);
    if (axes)
        for (int i = 0; i < 3; i++)
            for (int j = 0; j < 3; j++)
                axes[i][j] = a[3 * i + j];
    return DPZ_OK;
}

void dpz_post_orientation_average(double complex A[6][6], double complex avg[4])
{
    for (int b = 0; b < 4; b++) {
        int r0 = (b / 2) * 3, c0 = (b % 2) * 3;
        avg[b] = (A[r0][c0] + A[r0 + 1][c0 + 1] + A[r0 + 2][c0 + 2]) / 3.0;
    }
}

void dpz_post_euler_matrix(const double euler[3], double R[3][3])
{
    double ca = cos(euler[0]), sa = sin(euler[0]);
    double cb = cos(euler[1]), sb = sin(euler[1]);
    double cg = cos(euler[2]), sg = sin(euler[2]);
    /* Rz(a) Ry(b) Rz(g) multiplied out */
    R[0][0] = ca * cb * cg - sa * sg;
    R[0][1] = -ca * cb * sg - sa * cg;
    R[0][2] = ca * sb;
    R[1][0] = sa * cb * cg + ca * sg;
    R[1][1] = -sa * cb * sg + ca * cg;
    R[1][2] = sa * sb;
    R[2][0] = -sb * cg;
    R[2][1] = sb * sg;
    R[2][2] = cb;
}

void dpz_post_rotate6(double complex A[6][6], const double euler[3],
                      double complex out[6][6])
{
    double R[3][3];
    dpz_post_euler_matrix(euler, R);
    double complex tmp[6][6];
    for (int bi = 0; bi < 2; bi++)
        for (int bj = 0; bj < 2; bj++)
            for (int i = 0; i < 3; i++)
                for (int j = 0; j < 3; j++) {
                    double complex s = 0.0;
                    for (int l = 0; l < 3; l++)
                        for (int m = 0; m < 3; m++)
                            s += R[i][l] * A[3 * bi + l][3 * bj + m] * R[j][m];
                    tmp[3 * bi + i][3 * bj + j] = s;
                }
    memcpy(out, tmp, sizeof tmp);
}

void dpz_post_rotate3(double complex chi[3][3], const double euler[3],
                      double complex out[3][3])
{
    double R[3][3];
    dpz_post_euler_matrix(euler, R);
    double complex tmp[3][3];
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++) {
            double complex s = 0.0;
            for (int l = 0; l < 3; l++)
                for (int m = 0; m < 3; m++)
                    s += R[i][l] * chi[l][m] * R[j][m];
            tmp[i][j] = s;
        }
    memcpy(out, tmp, sizeof tmp);
}

double complex dpz_post_chirality(double complex A[6][6])
{
    return (A[0][3] + A[1][4] + A[2][5]) / 3.0;
}

static double block_norm(double complex A[6][6], int r0, int c0)
{
    double s = 0.0;
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++) {
            double complex v = A[r0 + i][c0 + j];
            s += creal(v) * creal(v) + cimag(v) * cimag(v);
        }
    return sqrt(s);
}

double dpz_post_bianisotropy(double complex A[6][6])
{
    double ee = block_norm(A, 0, 0), mm = block_norm(A, 3, 3), em = block_norm(A, 0, 3);
    if (!(ee > 0.0) || !(mm > 0.0))
        return 0.0;
    return em / sqrt(ee * mm);
}
