/* diag.c: diagnostics of the T block and the 6x6 polarizability (see dpz_diag.h). */
#include "dpz_diag.h"

#include <math.h>
#include <string.h>

#include <lapacke.h>

#include "extract_int.h"

double dpz_diag_reciprocity(double complex A[6][6])
{
    /* A' = D A D^H, D = diag(1,1,1,i,i,i): A'_ij = d_i A_ij conj(d_j). */
    double complex Ap[6][6];
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++) {
            double complex di = i < 3 ? 1.0 : I, dj = j < 3 ? 1.0 : I;
            Ap[i][j] = di * A[i][j] * conj(dj);
        }
    double amax = 0.0, dmax = 0.0;
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++) {
            amax = fmax(amax, cabs(Ap[i][j]));
            dmax = fmax(dmax, cabs(Ap[i][j] - Ap[j][i]));
        }
    return amax > 0.0 ? dmax / amax : 0.0;
}

dpz_status dpz_diag_herm_eig(size_t n, const double complex *H, double *eig,
                             double complex *vectors, dpz_err *err)
{
    if (n == 0 || n > 6 || !H || !eig)
        return dpz_err_set(err, DPZ_EINVAL, "diagnostics: bad eigenproblem arguments");
    lapack_complex_double a[36];
    for (size_t i = 0; i < n; i++)
        for (size_t j = 0; j < n; j++)
            a[i * n + j] = 0.5 * (H[i * n + j] + conj(H[j * n + i]));
    lapack_int info = LAPACKE_zheev(LAPACK_ROW_MAJOR, vectors ? 'V' : 'N', 'U',
                                    (lapack_int)n, a, (lapack_int)n, eig);
    if (info != 0)
        return dpz_err_set(err, DPZ_ELAPACK, "diagnostics: zheev failed (info %d)",
                           (int)info);
    if (vectors)
        for (size_t i = 0; i < n * n; i++)
            vectors[i] = a[i];
    return DPZ_OK;
}

/* acc += f * X^H X for an r x 6 block X (row-major). */
static void add_gram(double complex acc[6][6], const double complex *X, size_t rows,
                     double f)
{
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++) {
            double complex s = 0.0;
            for (size_t r = 0; r < rows; r++)
                s += conj(X[r * 6 + i]) * X[r * 6 + j];
            acc[i][j] += f * s;
        }
}

static double frob(const double complex *X, size_t n)
{
    double s = 0.0;
    for (size_t i = 0; i < n; i++)
        s += creal(X[i]) * creal(X[i]) + cimag(X[i]) * cimag(X[i]);
    return sqrt(s);
}

dpz_status dpz_diag_absorption(double complex T[6][6], double complex T2[10][6],
                               double complex T3[14][6], double *balance, double eig[6],
                               dpz_err *err)
{
    double complex W[6][6];
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++)
            W[i][j] = T[i][j] + conj(T[j][i]);
    add_gram(W, &T[0][0], 6, 2.0);
    if (T2)
        add_gram(W, &T2[0][0], 10, 2.0);
    if (T3)
        add_gram(W, &T3[0][0], 14, 2.0);
    if (balance) {
        double nt = frob(&T[0][0], 36);
        *balance = nt > 0.0 ? frob(&W[0][0], 36) / nt : 0.0;
    }
    if (eig) {
        double complex mW[36];
        for (int i = 0; i < 6; i++)
            for (int j = 0; j < 6; j++)
                mW[i * 6 + j] = -W[i][j];
        return dpz_diag_herm_eig(6, mW, eig, NULL, err);
    }
    return DPZ_OK;
}

dpz_status dpz_diag_fluctuation(double k, double complex A[6][6], double complex F[6][6],
                                double eig[6], dpz_err *err)
{
    if (!(k > 0.0) || !isfinite(k))
        return dpz_err_set(err, DPZ_EINVAL, "diagnostics: wavenumber %g must be positive",
                           k);
    /* F = (A - A^H)/(2i) - (k^3/(6 pi)) A^H A */
    double complex Fm[36];
    double rr = k * k * k / (6.0 * DPZ_XPI);
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++) {
            double complex s = 0.0;
            for (int l = 0; l < 6; l++)
                s += conj(A[l][i]) * A[l][j];
            Fm[i * 6 + j] = (A[i][j] - conj(A[j][i])) / (2.0 * I) - rr * s;
        }
    if (F)
        for (int i = 0; i < 6; i++)
            for (int j = 0; j < 6; j++)
                F[i][j] = Fm[i * 6 + j];
    if (eig)
        return dpz_diag_herm_eig(6, Fm, eig, NULL, err);
    return DPZ_OK;
}

void dpz_diag_leakage(double k, double complex T2[10][6], double complex T3[14][6],
                      double complex L[6][6])
{
    double complex S[6][6], V[6][6];
    memset(S, 0, sizeof S);
    if (T2)
        add_gram(S, &T2[0][0], 10, 1.0);
    if (T3)
        add_gram(S, &T3[0][0], 14, 1.0);
    dpz__vmatrix(V);
    dpz__sandwich(V, 0, S, 1, 6.0 * DPZ_XPI / (k * k * k), L);
}

double dpz_diag_validity(double complex T[6][6], double complex T2[10][6],
                         double complex T3[14][6])
{
    double nt = frob(&T[0][0], 36);
    double n2 = T2 ? frob(&T2[0][0], 60) : 0.0;
    double n3 = T3 ? frob(&T3[0][0], 84) : 0.0;
    return nt > 0.0 ? sqrt(n2 * n2 + n3 * n3) / nt : 0.0;
}
