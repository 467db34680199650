/* bench_sweep.c: iterations and seconds per wavelength of a tensor sweep, with and
 * without the previous wavelength's six solutions as initial guesses (warm start), as the
 * sweep command does.
 *
 * Scenario: the split ring of scripts/demo.sh (outer radius 40 nm, inner 25 nm, 20 nm
 * thick, 10 nm gap) of an illustrative Drude metal (eps_inf 9.5, hbar omega_p 8.9 eV,
 * hbar gamma 0.07 eV; round gold-like numbers from memory, invented data for a benchmark)
 * in a host of index 1.45, COCG with Jacobi, cm-rr dipoles.
 * Usage: bench_sweep SPACING_NM LO_NM HI_NM STEP_NM TOL [THREADS]
 *   the demo:                  bench_sweep 5 1000 2150 50 1e-5
 *   ~20,000 voxels near the LC resonance (1600 nm): bench_sweep 1.4 1600 1650 50 1e-5
 * For each wavelength: the summed iterations of the six solves and the seconds (CPU time
 * of the process: comparable under load), cold (zero initial guess) and warm, each solve
 * on its own operator; then the totals. Output lines "key value" at the end for run.sh.
 */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "dpz_extract.h"
#include "dpz_material.h"
#include "dpz_shape.h"

#include "bench_common.h"

static void die(const char *what, const dpz_err *e)
{
    fprintf(stderr, "bench_sweep: %s: %s\n", what, e->msg);
    exit(1);
}

int main(int argc, char **argv)
{
    if (argc < 6) {
        fprintf(stderr,
                "usage: bench_sweep SPACING_NM LO_NM HI_NM STEP_NM TOL [THREADS]\n");
        return 2;
    }
    double d = atof(argv[1]) * 1e-9, lo = atof(argv[2]), hi = atof(argv[3]),
           step = atof(argv[4]), tol = atof(argv[5]);
    int threads = argc > 6 ? atoi(argv[6]) : 1;
    dpz_err e;
    dpz_shape s;
    dpz_shape_init(&s, DPZ_SHAPE_SPLIT_RING);
    s.outer = 40e-9;
    s.inner = 25e-9;
    s.thickness = 20e-9;
    s.gap = 10e-9;
    dpz_grid *g = NULL;
    if (dpz_shape_voxelize(&g, &s, d, 0, 1, 0, &e) != DPZ_OK)
        die("voxelize", &e);
    dpz_drude_params dp;
    memset(&dp, 0, sizeof dp);
    dp.eps_inf = 9.5;
    dp.plasma_ev = 8.9;
    dp.damping_ev = 0.07;
    dpz_material *metal = NULL;
    if (dpz_material_create_drude(&metal, &dp, &e) != DPZ_OK)
        die("material", &e);
    dpz_setup su;
    memset(&su, 0, sizeof su);
    su.grid = g;
    su.host_index = 1.45;
    su.model = DPZ_DIPOLE_CMRR;
    su.solve = dpz_solve_opts_default();
    su.solve.kind = DPZ_SOLVER_COCG;
    su.solve.tol = tol;
    su.op.threads = threads;
    su.op.plan = DPZ_PLAN_ESTIMATE;
    size_t n3 = 3 * g->n_occ;
    double complex *warm[6];
    for (int i = 0; i < 6; i++)
        warm[i] = calloc(n3, sizeof(double complex));
    printf("# split ring, %zu voxels of %.3g nm, %zu x %zu x %zu grid, COCG tol %g, %d "
           "thread(s)\n",
           g->n_occ, d * 1e9, g->nx, g->ny, g->nz, tol, threads);
    printf("# %8s %10s %10s %10s %10s\n", "lambda_nm", "it_cold", "it_warm", "s_cold",
           "s_warm");
    size_t it_c = 0, it_w = 0, nw = 0;
    double s_c = 0, s_w = 0;
    for (double lam = lo; lam <= hi + 1e-9; lam += step) {
        double complex eps;
        if (dpz_material_eps(metal, lam * 1e-9, &eps, &e) != DPZ_OK)
            die("permittivity", &e);
        for (int l = 0; l < 256; l++)
            su.eps_label[l] = eps;
        dpz_tensor T;
        double t0 = process_cpu_now();
        dpz_status st = dpz_tensor_compute(&su, lam * 1e-9, &T, NULL, &e);
        double t1 = process_cpu_now();
        if (st != DPZ_OK && st != DPZ_ENOCONV)
            die("cold solve", &e);
        size_t ic = 0;
        for (int i = 0; i < 6; i++)
            ic += T.rhs[i].iterations;
        double t2 = process_cpu_now();
        st = dpz_tensor_compute(&su, lam * 1e-9, &T, warm, &e);
        double t3 = process_cpu_now();
        if (st != DPZ_OK && st != DPZ_ENOCONV)
            die("warm solve", &e);
        size_t iw = 0;
        for (int i = 0; i < 6; i++)
            iw += T.rhs[i].iterations;
        printf("  %8.0f %10zu %10zu %10.3f %10.3f\n", lam, ic, iw, t1 - t0, t3 - t2);
        fflush(stdout);
        it_c += ic;
        it_w += iw;
        s_c += t1 - t0;
        s_w += t3 - t2;
        nw++;
    }
    printf("voxels %zu\nwavelengths %zu\niter_cold %.1f\niter_warm %.1f\nsec_cold %.3f\n"
           "sec_warm %.3f\n",
           g->n_occ, nw, (double)it_c / (double)nw, (double)it_w / (double)nw,
           s_c / (double)nw, s_w / (double)nw);
    for (int i = 0; i < 6; i++)
        free(warm[i]);
    dpz_material_destroy(metal);
    dpz_grid_destroy(g);
    return 0;
}
