/* bench_perf.c: the performance figures of the FFT discrete-dipole operator, each
 * measured against a reference taken in the same run so that machine noise cancels.
 *
 *   ratio    apply time / time of six full 3-D FFTW transforms of the same zero-padded
 *            grid (three components forward, three backward, one batched plan each way,
 *            as a naive operator would do), filled cubes; medians of interleaved
 *            repetitions;
 *   scaling  apply time against N = n^3 for cubes of edge 16, 32, 64 (and 128 with
 *            --full), fitted exponent e of t ~ N^e (least squares in log-log) and the
 *            exponent left after dividing by log N (t ~ N^e' log N);
 *   threads  apply with 2 threads against 1 thread on the 64^3 cube, interleaved, wall
 *            clock (needs an otherwise idle machine to mean anything);
 *   product  apply with the portable kernel product against the automatic choice
 *            (AVX2/FMA where the CPU has it), 32^3;
 *   memory   dpz_fftop_memory_need / voxel.
 * One-thread times are CPU times of the thread (CLOCK_THREAD_CPUTIME_ID), which on a
 * loaded machine exclude waiting for a core (they still include cache interference).
 *
 * Usage: bench_perf [--full] [--measure] [repetitions]   (default 7 repetitions;
 * --measure: FFTW_MEASURE plans for the operators and the reference transforms)
 *        bench_perf --once N   (one apply and one reference, for callgrind)
 * Output: lines "key value" after a human-readable table, for benchmarks/run.sh. */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <fftw3.h>

#include "dpz_grid.h"
#include "dpz_operator.h"

#include "bench_common.h"

static dpz_grid *cube(size_t n, double d)
{
    dpz_grid *g = NULL;
    dpz_err err;
    if (dpz_grid_create(&g, n, n, n, d, 0, &err) != DPZ_OK) {
        fprintf(stderr, "bench_perf: %s\n", err.msg);
        exit(1);
    }
    memset(g->label, 1, n * n * n);
    if (dpz_grid_update(g, &err) != DPZ_OK) {
        fprintf(stderr, "bench_perf: %s\n", err.msg);
        exit(1);
    }
    return g;
}

static dpz_fftop *make_op_simd(const dpz_grid *g, int threads, dpz_simd simd,
                               double complex **ia_out);

/* Planner effort of the operators and of the reference transforms (--measure). */
static dpz_plan plan_effort = DPZ_PLAN_ESTIMATE;
static unsigned fftw_effort = FFTW_ESTIMATE;

static dpz_fftop *make_op(const dpz_grid *g, int threads, double complex **ia_out)
{
    return make_op_simd(g, threads, DPZ_SIMD_AUTO, ia_out);
}

static dpz_fftop *make_op_simd(const dpz_grid *g, int threads, dpz_simd simd,
                               double complex **ia_out)
{
    double d = g->d, k = 0.5 / (d * (double)g->nx); /* k x edge = 0.5 */
    double complex eps[256];
    for (int i = 0; i < 256; i++)
        eps[i] = 2.25;
    double complex *ia = malloc(g->n_occ * sizeof *ia);
    dpz_err err;
    dpz_fftop *op = NULL;
    dpz_op_opts o = {threads, plan_effort, simd};
    if (!ia ||
        dpz_operator_inv_alpha(g, eps, 1.0, k, DPZ_DIPOLE_CMRR, ia, &err) != DPZ_OK ||
        dpz_fftop_create(&op, g, k, DPZ_DIPOLE_CMRR, ia, &o, &err) != DPZ_OK) {
        fprintf(stderr, "bench_perf: %s\n", err.msg);
        exit(1);
    }
    *ia_out = ia;
    return op;
}

/* A fixed test vector of nv entries (allocated; never zero, no structure). */
static double complex *test_vector(size_t nv)
{
    double complex *x = malloc(nv * sizeof *x);
    for (size_t i = 0; x && i < nv; i++)
        x[i] = CMPLX(sin(0.37 * (double)i), cos(0.11 * (double)i));
    return x;
}

/* The reference of a naive operator on the padded grid p: three forward and three
 * inverse full 3-D transforms, one batched plan each way, on a zeroed buffer (returned;
 * free with fftw_free). */
static fftw_complex *reference_plans(const size_t p[3], fftw_plan *f, fftw_plan *b)
{
    size_t ptot = p[0] * p[1] * p[2];
    fftw_plan_with_nthreads(1);
    fftw_complex *buf = fftw_malloc(3 * ptot * sizeof *buf);
    int dims[3] = {(int)p[0], (int)p[1], (int)p[2]};
    *f = fftw_plan_many_dft(3, dims, 3, buf, NULL, 1, (int)ptot, buf, NULL, 1, (int)ptot,
                            FFTW_FORWARD, fftw_effort);
    *b = fftw_plan_many_dft(3, dims, 3, buf, NULL, 1, (int)ptot, buf, NULL, 1, (int)ptot,
                            FFTW_BACKWARD, fftw_effort);
    memset(buf, 0, 3 * ptot * sizeof *buf);
    return buf;
}

typedef struct result {
    size_t n;
    double apply, fft6, ratio, bytes;
} result;

/* Apply vs six full transforms on an n^3 cube, `reps` interleaved repetitions. */
static result measure(size_t n, int reps)
{
    result R = {n, 0, 0, 0, 0};
    dpz_grid *g = cube(n, 1e-8);
    double complex *ia;
    dpz_fftop *op = make_op(g, 1, &ia);
    size_t nv = 3 * g->n_occ, p[3];
    dpz_fftop_padded_dims(op, p);
    double complex *x = test_vector(nv), *y = malloc(nv * sizeof *y);
    fftw_plan f, b;
    fftw_complex *buf = reference_plans(p, &f, &b);
    double *ta = malloc((size_t)reps * sizeof *ta),
           *tf = malloc((size_t)reps * sizeof *tf),
           *tr = malloc((size_t)reps * sizeof *tr);
    dpz_err err;
    dpz_fftop_apply(op, x, y, &err); /* warm-up */
    fftw_execute(f);
    fftw_execute(b);
    for (int r = 0; r < reps; r++) {
        double t0 = cpu_now();
        dpz_fftop_apply(op, x, y, &err);
        double t1 = cpu_now();
        fftw_execute(f);
        fftw_execute(b);
        double t2 = cpu_now();
        ta[r] = t1 - t0;
        tf[r] = t2 - t1;
        tr[r] = ta[r] / tf[r];
    }
    R.apply = median(ta, reps);
    R.fft6 = median(tf, reps);
    R.ratio = median(tr, reps); /* median of the per-repetition ratios */
    R.bytes = (double)dpz_fftop_memory_need(g) / (double)g->n_occ;
    fftw_destroy_plan(f);
    fftw_destroy_plan(b);
    fftw_free(buf);
    free(x);
    free(y);
    free(ta);
    free(tf);
    free(tr);
    free(ia);
    dpz_fftop_destroy(op);
    dpz_grid_destroy(g);
    return R;
}

/* Two operators for the same n^3 cube applied alternately, `reps` times after one
 * warm-up each, timed with `clock`: the median of the per-repetition ratios t_a / t_b and
 * the median times. Operator a is built with threads ta and product sa, b with tb, sb. */
static double compare_ops(size_t n, int reps, int ta, dpz_simd sa, int tb, dpz_simd sb,
                          double (*clock)(void), double *tam, double *tbm,
                          const char **bname)
{
    dpz_grid *g = cube(n, 1e-8);
    double complex *ia1, *ia2;
    dpz_fftop *oa = make_op_simd(g, ta, sa, &ia1), *ob = make_op_simd(g, tb, sb, &ia2);
    if (bname)
        *bname = dpz_fftop_product_name(ob);
    size_t nv = 3 * g->n_occ;
    double complex *x = test_vector(nv), *y = malloc(nv * sizeof *y);
    double *a = malloc((size_t)reps * sizeof *a), *b = malloc((size_t)reps * sizeof *b),
           *s = malloc((size_t)reps * sizeof *s);
    dpz_err err;
    dpz_fftop_apply(oa, x, y, &err);
    dpz_fftop_apply(ob, x, y, &err);
    for (int r = 0; r < reps; r++) {
        double t0 = clock();
        dpz_fftop_apply(oa, x, y, &err);
        double t1 = clock();
        dpz_fftop_apply(ob, x, y, &err);
        double t2 = clock();
        a[r] = t1 - t0;
        b[r] = t2 - t1;
        s[r] = a[r] / b[r];
    }
    *tam = median(a, reps);
    *tbm = median(b, reps);
    double ratio = median(s, reps);
    free(a);
    free(b);
    free(s);
    free(x);
    free(y);
    free(ia1);
    free(ia2);
    dpz_fftop_destroy(oa);
    dpz_fftop_destroy(ob);
    dpz_grid_destroy(g);
    return ratio;
}

/* The six bare transforms once (a function of its own, so that callgrind reports its
 * inclusive instruction count beside dpz_fftop_apply's). */
__attribute__((noinline)) void bench_fft6_once(fftw_plan f, fftw_plan b)
{
    fftw_execute(f);
    fftw_execute(b);
}

/* One apply and one set of six transforms on an n^3 cube, for
 *   valgrind --tool=callgrind bench_perf --once N
 * whose inclusive counts of dpz_fftop_apply and bench_fft6_once give a repeatable ratio.
 */
static int once(size_t n)
{
    dpz_grid *g = cube(n, 1e-8);
    double complex *ia;
    dpz_fftop *op = make_op(g, 1, &ia);
    size_t nv = 3 * g->n_occ, p[3];
    dpz_fftop_padded_dims(op, p);
    double complex *x = test_vector(nv), *y = malloc(nv * sizeof *y);
    fftw_plan f, b;
    fftw_complex *buf = reference_plans(p, &f, &b);
    dpz_err err;
    dpz_fftop_apply(op, x, y, &err);
    bench_fft6_once(f, b);
    fftw_destroy_plan(f);
    fftw_destroy_plan(b);
    fftw_free(buf);
    free(x);
    free(y);
    free(ia);
    dpz_fftop_destroy(op);
    dpz_grid_destroy(g);
    return 0;
}

int main(int argc, char **argv)
{
    int full = 0, reps = 7;
    for (int i = 1; i < argc; i++) {
        if (strcmp(argv[i], "--full") == 0)
            full = 1;
        else if (strcmp(argv[i], "--measure") == 0) {
            plan_effort = DPZ_PLAN_MEASURE;
            fftw_effort = FFTW_MEASURE;
        } else if (strcmp(argv[i], "--once") == 0 && i + 1 < argc)
            return once((size_t)atoi(argv[i + 1]));
        else
            reps = atoi(argv[i]);
    }
    if (reps < 1)
        reps = 1;
    /* Powers of two: FFTW's speed varies with the factors of the size (a 96^3 padded grid
     * was measured slower than 128^3), which would blur the fitted exponent. */
    const size_t sizes[] = {16, 32, 64, 128};
    size_t ns = full ? 4 : 3;
    result res[4];
    printf("# filled cubes, 1 thread, %s, %d interleaved repetitions (medians)\n",
           plan_effort == DPZ_PLAN_MEASURE ? "FFTW_MEASURE" : "FFTW_ESTIMATE", reps);
    printf("# %5s %10s %10s %10s %7s %9s\n", "edge", "voxels", "apply_ms", "fft6_ms",
           "ratio", "bytes/vox");
    for (size_t s = 0; s < ns; s++) {
        /* Fewer repetitions for the large cubes keep the default run short. */
        int r = sizes[s] >= 96 ? (reps + 2) / 3 : reps;
        res[s] = measure(sizes[s], r);
        printf("# %5zu %10zu %10.3f %10.3f %7.3f %9.0f\n", sizes[s],
               sizes[s] * sizes[s] * sizes[s], 1e3 * res[s].apply, 1e3 * res[s].fft6,
               res[s].ratio, res[s].bytes);
        fflush(stdout);
    }
    /* Least-squares slope of log t against log N, and of log(t / log N). */
    double sx = 0, sy = 0, sxx = 0, sxy = 0, sy2 = 0, sxy2 = 0, sy3 = 0, sxy3 = 0;
    for (size_t s = 0; s < ns; s++) {
        double N = pow((double)sizes[s], 3.0);
        double lx = log(N), ly = log(res[s].apply), ly2 = log(res[s].apply / log(N));
        double ly3 = log(res[s].fft6);
        sx += lx;
        sy += ly;
        sxx += lx * lx;
        sxy += lx * ly;
        sy2 += ly2;
        sxy2 += lx * ly2;
        sy3 += ly3;
        sxy3 += lx * ly3;
    }
    double m = (double)ns;
    double e = (m * sxy - sx * sy) / (m * sxx - sx * sx);
    double e2 = (m * sxy2 - sx * sy2) / (m * sxx - sx * sx);
    /* The same fit for the six bare transforms: the machine's own scaling, for reference.
     */
    double e3 = (m * sxy3 - sx * sy3) / (m * sxx - sx * sx);
    double t1, t2;
    /* 2 threads vs 1 (wall clock: the point is the elapsed time), and the portable kernel
     * product against the automatic choice (CPU time, one thread). */
    double sp =
        compare_ops(64, reps, 1, DPZ_SIMD_AUTO, 2, DPZ_SIMD_AUTO, now, &t1, &t2, NULL);
    printf("# 64^3 apply: 1 thread %.3f ms, 2 threads %.3f ms\n", 1e3 * t1, 1e3 * t2);
    const char *pname = "generic";
    double sg = compare_ops(32, reps, 1, DPZ_SIMD_GENERIC, 1, DPZ_SIMD_AUTO, cpu_now, &t1,
                            &t2, &pname);
    printf("# 32^3 apply: generic kernel product %.3f ms, %s %.3f ms\n", 1e3 * t1, pname,
           1e3 * t2);
    for (size_t s = 0; s < ns; s++)
        if (sizes[s] == 32 || sizes[s] == 64)
            printf("ratio_%zu %.3f\n", sizes[s], res[s].ratio);
    printf("exponent %.3f\nexponent_nlogn %.3f\nexponent_fft6 %.3f\nrange %zu-%zu\n"
           "speedup2 %.2f\nsimd_gain %.3f\nsimd_name %s\n",
           e, e2, e3, sizes[0], sizes[ns - 1], sp, sg, pname);
    return 0;
}
