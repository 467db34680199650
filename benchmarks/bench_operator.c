/* bench_operator.c: cost of the FFT discrete-dipole operator and of the iterative solves.
 *
 * For spheres of radius 4, 8 and 12 voxels (centres within the radius), in one run:
 *  - the operator apply (median of repetitions) against the bare FFTW transforms of the
 *    same padded grid (three forward and three inverse complex transforms, batched as in
 *    the operator) and their ratio: the overhead of gather, tensor product and scatter;
 *  - the memory per occupied voxel (dpz_fftop_memory_need / n_occ);
 *  - iterations (operator applies) to a relative residual of 1e-8 for BiCGSTAB, COCG and
 *    GMRES(30), eps = 2.25 and eps = -10+1i, cm-rr dipoles, incident x e^{ikz}, with k
 *    chosen so that x = k a_eq = 0.5.
 * Usage: bench_operator [threads] [repetitions]   (defaults 1 and 9). */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <fftw3.h>

#include "dpz_grid.h"
#include "dpz_iter.h"
#include "dpz_operator.h"

#include "bench_common.h"

static dpz_grid *sphere(double R, double d)
{
    size_t n = (size_t)(2 * R) + 1;
    dpz_grid *g = NULL;
    dpz_err err;
    if (dpz_grid_create(&g, n, n, n, d, 0, &err) != DPZ_OK) {
        fprintf(stderr, "bench: %s\n", err.msg);
        exit(1);
    }
    double c = 0.5 * (n - 1.0);
    for (size_t i = 0; i < n; i++)
        for (size_t j = 0; j < n; j++)
            for (size_t l = 0; l < n; l++) {
                double x = i - c, y = j - c, z = l - c;
                g->label[dpz_grid_index(g, i, j, l)] = x * x + y * y + z * z <= R * R;
            }
    dpz_grid_update(g, &err);
    return g;
}

int main(int argc, char **argv)
{
    int threads = argc > 1 ? atoi(argv[1]) : 1;
    int reps = argc > 2 ? atoi(argv[2]) : 9;
    if (threads < 1)
        threads = 1;
    if (reps < 1)
        reps = 1;
    const double radii[] = {4, 8, 12};
    const double d = 1e-8;
    printf("threads %d, repetitions %d (median), FFTW_ESTIMATE plans\n\n", threads, reps);
    printf("%6s %7s %14s %10s %10s %6s %10s %10s %6s %9s\n", "radius", "voxels", "padded",
           "apply_ms", "fftw6_ms", "ratio", "apply_min", "fftw6_min", "ratio",
           "bytes/vox");
    for (int s = 0; s < 3; s++) {
        dpz_grid *g = sphere(radii[s], d);
        double aeq = cbrt(3.0 * g->n_occ / (4.0 * 3.14159265358979323846)) * d;
        double k = 0.5 / aeq;
        double complex *ia = malloc(g->n_occ * sizeof *ia);
        double complex eps[256];
        for (int i = 0; i < 256; i++)
            eps[i] = 2.25;
        dpz_err err;
        dpz_operator_inv_alpha(g, eps, 1.0, k, DPZ_DIPOLE_CMRR, ia, &err);
        dpz_op_opts o = {threads, DPZ_PLAN_ESTIMATE, DPZ_SIMD_AUTO};
        dpz_fftop *op = NULL;
        if (dpz_fftop_create(&op, g, k, DPZ_DIPOLE_CMRR, ia, &o, &err) != DPZ_OK) {
            fprintf(stderr, "bench: %s\n", err.msg);
            return 1;
        }
        size_t n = 3 * g->n_occ, p[3];
        dpz_fftop_padded_dims(op, p);
        size_t ptot = p[0] * p[1] * p[2];
        double complex *x = malloc(n * sizeof *x), *y = malloc(n * sizeof *y);
        for (size_t i = 0; i < n; i++)
            x[i] = CMPLX(sin(0.37 * i), cos(0.11 * i));
        /* Bare transforms: the same batched full 3-D plans on a buffer of the same size.
         */
        fftw_plan_with_nthreads(threads);
        fftw_complex *buf = fftw_malloc(3 * ptot * sizeof *buf);
        int dims[3] = {(int)p[0], (int)p[1], (int)p[2]};
        fftw_plan f = fftw_plan_many_dft(3, dims, 3, buf, NULL, 1, (int)ptot, buf, NULL,
                                         1, (int)ptot, FFTW_FORWARD, FFTW_ESTIMATE);
        fftw_plan b = fftw_plan_many_dft(3, dims, 3, buf, NULL, 1, (int)ptot, buf, NULL,
                                         1, (int)ptot, FFTW_BACKWARD, FFTW_ESTIMATE);
        memset(buf, 0, 3 * ptot * sizeof *buf);
        double *t = malloc((size_t)reps * sizeof *t),
               *tf = malloc((size_t)reps * sizeof *tf);
        dpz_fftop_apply(op, x, y, &err); /* warm-up */
        fftw_execute(f);
        fftw_execute(b);
        /* Interleaved, so that both see the same load on a shared machine. */
        for (int r = 0; r < reps; r++) {
            double t0 = now();
            dpz_fftop_apply(op, x, y, &err);
            double t1 = now();
            fftw_execute(f);
            fftw_execute(b);
            double t2 = now();
            t[r] = t1 - t0;
            tf[r] = t2 - t1;
        }
        double t_apply = median(t, reps), t_fft = median(tf, reps);
        /* After the sort in median(): the fastest repetition, the least disturbed by
         * other processes on a shared machine. */
        double m_apply = t[0], m_fft = tf[0];
        printf("%6.0f %7zu %4zux%zux%zu %10.3f %10.3f %6.2f %10.3f %10.3f %6.2f %9.0f\n",
               radii[s], g->n_occ, p[0], p[1], p[2], 1e3 * t_apply, 1e3 * t_fft,
               t_apply / t_fft, 1e3 * m_apply, 1e3 * m_fft, m_apply / m_fft,
               (double)dpz_fftop_memory_need(g) / g->n_occ);
        fflush(stdout);
        fftw_destroy_plan(f);
        fftw_destroy_plan(b);
        fftw_free(buf);
        free(x);
        free(y);
        free(t);
        free(tf);
        free(ia);
        dpz_fftop_destroy(op);
        dpz_grid_destroy(g);
    }

    printf("\niterations to relative residual 1e-8 (operator applies in brackets), x = k "
           "a_eq = 0.5, cm-rr, Jacobi on\n");
    printf("%6s %7s %10s %16s %16s %16s\n", "radius", "voxels", "eps", "bicgstab", "cocg",
           "gmres(30)");
    const double complex epss[] = {2.25, -10.0 + 1.0 * I};
    for (int s = 0; s < 3; s++) {
        dpz_grid *g = sphere(radii[s], d);
        double aeq = cbrt(3.0 * g->n_occ / (4.0 * 3.14159265358979323846)) * d;
        double k = 0.5 / aeq;
        size_t n = 3 * g->n_occ;
        double complex *ia = malloc(g->n_occ * sizeof *ia), *b = calloc(n, sizeof *b),
                       *x = malloc(n * sizeof *x);
        for (size_t v = 0; v < g->n_occ; v++) {
            double r[3];
            dpz_grid_centre(g, g->occ[v], r);
            b[3 * v] = cexp(CMPLX(0.0, k * r[2]));
        }
        for (int e = 0; e < 2; e++) {
            double complex eps[256];
            for (int i = 0; i < 256; i++)
                eps[i] = epss[e];
            dpz_err err;
            dpz_operator_inv_alpha(g, eps, 1.0, k, DPZ_DIPOLE_CMRR, ia, &err);
            dpz_op_opts o = {threads, DPZ_PLAN_ESTIMATE, DPZ_SIMD_AUTO};
            dpz_fftop *op = NULL;
            dpz_fftop_create(&op, g, k, DPZ_DIPOLE_CMRR, ia, &o, &err);
            dpz_linop L = dpz_fftop_linop(op);
            char cell[3][32];
            for (int q = 0; q < 3; q++) {
                dpz_solve_opts so = dpz_solve_opts_default();
                so.kind = (dpz_solver_kind)q;
                memset(x, 0, n * sizeof *x);
                dpz_solve_info info;
                dpz_status st = dpz_solve(&L, b, x, &so, &info, &err);
                snprintf(cell[q], sizeof cell[q], "%zu (%zu)%s", info.iterations,
                         info.applies, st == DPZ_OK ? "" : " FAIL");
                dpz_solve_info_free(&info);
            }
            printf("%6.0f %7zu %10s %16s %16s %16s\n", radii[s], g->n_occ,
                   e == 0 ? "2.25" : "-10+1i", cell[0], cell[1], cell[2]);
            fflush(stdout);
            dpz_fftop_destroy(op);
        }
        free(ia);
        free(b);
        free(x);
        dpz_grid_destroy(g);
    }
    return 0;
}
