/* fftop.c: the FFT-accelerated discrete-dipole operator A = alpha^-1 - G (plan once,
 * apply many).
 *
 * The interaction sum (G x)_r = sum_{r'} G(r - r') x_{r'} over a regular lattice is a
 * discrete convolution, evaluated as a circular convolution on a zero-padded grid of at
 * least 2n - 1 points per axis, which avoids wrap-around (Goodman, Draine & Flatau, Opt.
 * Lett. 16, 1198 (1991)). The six independent kernel components are transformed once at
 * creation; each apply does three forward and three inverse complex transforms (FFTW,
 * Frigo & Johnson, Proc. IEEE 93, 216 (2005)) and a 3x3 symmetric tensor product per
 * frequency. The kernel is complex for k > 0, so complex-to-complex transforms are used.
 */
#include "dpz_operator.h"

#include <math.h>
#include <string.h>

#include <fftw3.h>
#include <omp.h>

#include "solver_int.h"

struct dpz_fftop {
    const dpz_grid *grid;   /* borrowed */
    size_t n_occ;           /* occupied voxels */
    size_t p[3];            /* padded dims */
    size_t ptot;            /* p[0] p[1] p[2] */
    int threads;            /* OpenMP and FFTW threads */
    double complex *kern_a; /* transformed kernel xx, xy, xz (3 ptot), scaled by 1/ptot */
    double complex *kern_b; /* transformed kernel yy, yz, zz (3 ptot), scaled by 1/ptot */
    double complex *buf;    /* 3 ptot work grid, component-major */
    size_t *pos;            /* n_occ padded linear indices of the occupied voxels */
    double complex *inv_alpha; /* n_occ, m^-3 */
    double complex *diag3;     /* 3 n_occ, the diagonal for Jacobi preconditioning */
    fftw_plan fwd, bwd;        /* batched 3-component transforms on buf */
};

/* ---- sizes and memory
 * ------------------------------------------------------------------ */

/* Smallest m >= n whose only prime factors are 2, 3, 5, 7 (sizes FFTW handles with its
 * fastest codelets; common practice). */
static size_t fft_friendly(size_t n)
{
    for (size_t m = n > 1 ? n : 1;; m++) {
        size_t r = m;
        static const size_t f[] = {2, 3, 5, 7};
        for (int i = 0; i < 4; i++)
            while (r % f[i] == 0)
                r /= f[i];
        if (r == 1)
            return m;
    }
}

static void padded_dims(const dpz_grid *g, size_t p[3])
{
    p[0] = fft_friendly(2 * g->nx - 1);
    p[1] = fft_friendly(2 * g->ny - 1);
    p[2] = fft_friendly(2 * g->nz - 1);
}

size_t dpz_fftop_memory_need(const dpz_grid *grid)
{
    if (!grid || grid->nx == 0 || grid->ny == 0 || grid->nz == 0)
        return 0;
    size_t p[3];
    padded_dims(grid, p);
    size_t ptot = p[0] * p[1] * p[2];
    /* 6 kernel components + 3 work components, complex doubles; per voxel: position,
     * 1/alpha and the 3-component diagonal. FFTW's own plan data come on top (small). */
    return sizeof(struct dpz_fftop) + 9 * ptot * sizeof(double complex) +
           grid->n_occ * (sizeof(size_t) + 4 * sizeof(double complex));
}

/* ---- FFTW set-up ---------------------------------------------------------------------
 */

/* The one mapping from the planner effort to FFTW flags. */
static unsigned plan_flags(dpz_plan plan)
{
    switch (plan) {
    case DPZ_PLAN_MEASURE:
        return FFTW_MEASURE;
    case DPZ_PLAN_PATIENT:
        return FFTW_PATIENT;
    case DPZ_PLAN_ESTIMATE:
    default:
        return FFTW_ESTIMATE;
    }
}

/* fftw_init_threads must run once before any threaded planning; FFTW's planner is not
 * thread-safe, so operators are created from one thread (documented in the header). */
static int fftw_threads_ready = 0;

/* FFTW buffers come from fftw_malloc (SIMD alignment); the probe routes each through the
 * library's allocation hook so that tests can provoke their failure too. */
static double complex *fft_alloc(size_t count)
{
    void *probe = dpz__malloc(1);
    if (!probe)
        return NULL;
    dpz__free(probe);
    size_t bytes;
    if (dpz_mul_overflow(count, sizeof(double complex), &bytes) != 0)
        return NULL;
    return fftw_malloc(bytes);
}

void dpz_fftop_destroy(dpz_fftop *op)
{
    if (!op)
        return;
    if (op->fwd)
        fftw_destroy_plan(op->fwd);
    if (op->bwd)
        fftw_destroy_plan(op->bwd);
    fftw_free(op->kern_a);
    fftw_free(op->kern_b);
    fftw_free(op->buf);
    dpz__free(op->pos);
    dpz__free(op->inv_alpha);
    dpz__free(op->diag3);
    dpz__free(op);
}

dpz_status dpz_fftop_set_diag(dpz_fftop *op, const double complex *inv_alpha,
                              dpz_err *err)
{
    if (!op || !inv_alpha)
        return dpz_err_set(err, DPZ_EINVAL, "FFT operator: NULL argument");
    for (size_t v = 0; v < op->n_occ; v++) {
        if (!isfinite(creal(inv_alpha[v])) || !isfinite(cimag(inv_alpha[v])))
            return dpz_err_set(
                err, DPZ_EINVAL,
                "FFT operator: 1/alpha of occupied voxel %zu is not finite", v);
    }
    for (size_t v = 0; v < op->n_occ; v++) {
        op->inv_alpha[v] = inv_alpha[v];
        op->diag3[3 * v] = op->diag3[3 * v + 1] = op->diag3[3 * v + 2] = inv_alpha[v];
    }
    return DPZ_OK;
}

/* Writes the kernel for every lattice offset into the padded grids (offset o at index
 * o mod p, so the circular convolution reproduces the linear one). Each component is even
 * or odd under each axis reflection (G(-R) = G(R) and the reflection symmetry of the cube
 * average), so the kernel is evaluated on the non-negative octant only and reflected. */
static void fill_kernel(dpz_fftop *op, double k, dpz_dipole_model model,
                        const dpz__igt_table *tab)
{
    const dpz_grid *g = op->grid;
    size_t px = op->p[0], py = op->p[1], pz = op->p[2], ptot = op->ptot;
    double complex *kc[6] = {op->kern_a, op->kern_a + ptot, op->kern_a + 2 * ptot,
                             op->kern_b, op->kern_b + ptot, op->kern_b + 2 * ptot};
    /* Component c = (a, b) changes sign as s_a s_b under the reflections s. */
    static const int ca[6] = {0, 0, 0, 1, 1, 2}, cb[6] = {0, 1, 2, 1, 2, 2};
    long nx = (long)g->nx, ny = (long)g->ny, nz = (long)g->nz;
#pragma omp parallel for num_threads(op->threads) schedule(dynamic)
    for (long i = 0; i < nx; i++) {
        for (long j = 0; j < ny; j++) {
            for (long l = 0; l < nz; l++) {
                double complex gv[6] = {0};
                if (i != 0 || j != 0 || l != 0)
                    dpz__kernel_tab(model, k, g->d, tab, i, j, l, gv);
                for (int s = 0; s < 8; s++) {
                    int sg[3] = {s & 1 ? -1 : 1, s & 2 ? -1 : 1, s & 4 ? -1 : 1};
                    if ((sg[0] < 0 && i == 0) || (sg[1] < 0 && j == 0) ||
                        (sg[2] < 0 && l == 0))
                        continue;
                    size_t a = (size_t)(sg[0] < 0 ? (long)px - i : i);
                    size_t b = (size_t)(sg[1] < 0 ? (long)py - j : j);
                    size_t c = (size_t)(sg[2] < 0 ? (long)pz - l : l);
                    size_t q = (a * py + b) * pz + c;
                    for (int m = 0; m < 6; m++)
                        kc[m][q] = sg[ca[m]] * sg[cb[m]] * gv[m];
                }
            }
        }
    }
}

dpz_status dpz_fftop_create(dpz_fftop **out, const dpz_grid *grid, double k,
                            dpz_dipole_model model, const double complex *inv_alpha,
                            const dpz_op_opts *opts, dpz_err *err)
{
    if (!out)
        return dpz_err_set(err, DPZ_EINVAL, "FFT operator: NULL output");
    *out = NULL;
    if (!grid || !inv_alpha)
        return dpz_err_set(err, DPZ_EINVAL, "FFT operator: NULL argument");
    if (grid->n_occ == 0)
        return dpz_err_set(err, DPZ_EINVAL,
                           "FFT operator: the grid has no occupied voxel");
    if (!(k >= 0.0) || !isfinite(k))
        return dpz_err_set(err, DPZ_EINVAL,
                           "FFT operator: wavenumber %g 1/m must be >= 0 "
                           "and finite",
                           k);
    if (!(grid->d > 0.0) || !isfinite(grid->d))
        return dpz_err_set(err, DPZ_EINVAL, "FFT operator: spacing %g m must be positive",
                           grid->d);
    size_t p[3];
    padded_dims(grid, p);
    size_t ptot;
    if (dpz_mul_overflow(p[0], p[1], &ptot) || dpz_mul_overflow(ptot, p[2], &ptot) ||
        ptot > (size_t)1 << 40 || p[0] > 2147483647 || p[1] > 2147483647 ||
        p[2] > 2147483647)
        return dpz_err_set(err, DPZ_ELIMIT,
                           "FFT operator: padded grid %zu x %zu x %zu is "
                           "too large",
                           p[0], p[1], p[2]);

    dpz_fftop *op = dpz__calloc(1, sizeof *op);
    if (!op)
        return dpz_err_set(err, DPZ_ENOMEM, "FFT operator: out of memory");
    op->grid = grid;
    op->n_occ = grid->n_occ;
    memcpy(op->p, p, sizeof p);
    op->ptot = ptot;
    op->threads = opts && opts->threads > 0 ? opts->threads : 1;
    op->kern_a = fft_alloc(3 * ptot);
    op->kern_b = fft_alloc(3 * ptot);
    op->buf = fft_alloc(3 * ptot);
    op->pos = dpz__calloc(grid->n_occ, sizeof *op->pos);
    op->inv_alpha = dpz__calloc(grid->n_occ, sizeof *op->inv_alpha);
    op->diag3 = dpz__calloc(3 * grid->n_occ, sizeof *op->diag3);
    if (!op->kern_a || !op->kern_b || !op->buf || !op->pos || !op->inv_alpha ||
        !op->diag3) {
        dpz_fftop_destroy(op);
        return dpz_err_set(
            err, DPZ_ENOMEM,
            "FFT operator: out of memory (%zu bytes needed for a %zu x %zu x "
            "%zu padded grid)",
            dpz_fftop_memory_need(grid), p[0], p[1], p[2]);
    }
    dpz_status st = dpz_fftop_set_diag(op, inv_alpha, err);
    if (st != DPZ_OK) {
        dpz_fftop_destroy(op);
        return st;
    }
    size_t ny = grid->ny, nz = grid->nz;
    for (size_t v = 0; v < grid->n_occ; v++) {
        size_t iv = grid->occ[v];
        size_t a = iv / (ny * nz), b = iv / nz % ny, c = iv % nz;
        op->pos[v] = (a * p[1] + b) * p[2] + c;
    }

    /* Plan first: a measuring planner overwrites the arrays it plans on. */
    if (!fftw_threads_ready) {
        if (!fftw_init_threads()) {
            dpz_fftop_destroy(op);
            return dpz_err_set(err, DPZ_EFFTW, "FFT operator: fftw_init_threads failed");
        }
        fftw_threads_ready = 1;
    }
    fftw_plan_with_nthreads(op->threads);
    int dims[3] = {(int)p[0], (int)p[1], (int)p[2]};
    unsigned flags = plan_flags(opts ? opts->plan : DPZ_PLAN_ESTIMATE);
    fftw_complex *fb = (fftw_complex *)op->buf;
    op->fwd = fftw_plan_many_dft(3, dims, 3, fb, NULL, 1, (int)ptot, fb, NULL, 1,
                                 (int)ptot, FFTW_FORWARD, flags);
    op->bwd = fftw_plan_many_dft(3, dims, 3, fb, NULL, 1, (int)ptot, fb, NULL, 1,
                                 (int)ptot, FFTW_BACKWARD, flags);
    if (!op->fwd || !op->bwd) {
        dpz_fftop_destroy(op);
        return dpz_err_set(err, DPZ_EFFTW,
                           "FFT operator: FFTW could not plan a %d x %d x %d "
                           "transform",
                           dims[0], dims[1], dims[2]);
    }

    /* Kernel: fill, then transform each half with the batched forward plan (new-array
     * execute: both kernel blocks come from fftw_malloc, so they share its alignment). */
    memset(op->kern_a, 0, 3 * ptot * sizeof *op->kern_a);
    memset(op->kern_b, 0, 3 * ptot * sizeof *op->kern_b);
    dpz__igt_table tab;
    if (model == DPZ_DIPOLE_IGT)
        dpz__igt_table_fill(&tab, k, grid->d);
    fill_kernel(op, k, model, model == DPZ_DIPOLE_IGT ? &tab : NULL);
    fftw_execute_dft(op->fwd, (fftw_complex *)op->kern_a, (fftw_complex *)op->kern_a);
    fftw_execute_dft(op->fwd, (fftw_complex *)op->kern_b, (fftw_complex *)op->kern_b);
    /* FFTW's transforms are unnormalized: forward then backward multiplies by ptot. The
     * single normalization 1/ptot of the whole operator is folded into the kernel here.
     */
    double scale = 1.0 / (double)ptot;
    for (size_t q = 0; q < 3 * ptot; q++) {
        op->kern_a[q] *= scale;
        op->kern_b[q] *= scale;
    }
    *out = op;
    return DPZ_OK;
}

/* Computes buf <- G x on the padded grid (components at pos[]). */
static void convolve(dpz_fftop *op, const double complex *x)
{
    size_t ptot = op->ptot, n = op->n_occ;
    double complex *b0 = op->buf, *b1 = op->buf + ptot, *b2 = op->buf + 2 * ptot;
    const size_t *pos = op->pos;
    long np = (long)ptot;
#pragma omp parallel num_threads(op->threads)
    {
#pragma omp for schedule(static)
        for (long q = 0; q < np; q++)
            b0[q] = b1[q] = b2[q] = 0.0;
#pragma omp for schedule(static)
        for (long v = 0; v < (long)n; v++) {
            b0[pos[v]] = x[3 * v];
            b1[pos[v]] = x[3 * v + 1];
            b2[pos[v]] = x[3 * v + 2];
        }
    }
    fftw_execute(op->fwd);
    const double complex *ka = op->kern_a, *kb = op->kern_b;
#pragma omp parallel for num_threads(op->threads) schedule(static)
    for (long q = 0; q < np; q++) {
        double complex gxx = ka[q], gxy = ka[q + ptot], gxz = ka[q + 2 * ptot];
        double complex gyy = kb[q], gyz = kb[q + ptot], gzz = kb[q + 2 * ptot];
        double complex X = b0[q], Y = b1[q], Z = b2[q];
        b0[q] = gxx * X + gxy * Y + gxz * Z;
        b1[q] = gxy * X + gyy * Y + gyz * Z;
        b2[q] = gxz * X + gyz * Y + gzz * Z;
    }
    fftw_execute(op->bwd);
}

dpz_status dpz_fftop_apply(dpz_fftop *op, const double complex *x, double complex *y,
                           dpz_err *err)
{
    if (!op || !x || !y)
        return dpz_err_set(err, DPZ_EINVAL, "FFT operator: NULL argument");
    convolve(op, x);
    size_t ptot = op->ptot;
    const double complex *b0 = op->buf, *b1 = op->buf + ptot, *b2 = op->buf + 2 * ptot;
    const size_t *pos = op->pos;
    const double complex *ia = op->inv_alpha;
#pragma omp parallel for num_threads(op->threads) schedule(static)
    for (long v = 0; v < (long)op->n_occ; v++) {
        y[3 * v] = ia[v] * x[3 * v] - b0[pos[v]];
        y[3 * v + 1] = ia[v] * x[3 * v + 1] - b1[pos[v]];
        y[3 * v + 2] = ia[v] * x[3 * v + 2] - b2[pos[v]];
    }
    return DPZ_OK;
}

dpz_status dpz_fftop_apply_green(dpz_fftop *op, const double complex *x,
                                 double complex *y, dpz_err *err)
{
    if (!op || !x || !y)
        return dpz_err_set(err, DPZ_EINVAL, "FFT operator: NULL argument");
    convolve(op, x);
    size_t ptot = op->ptot;
    const double complex *b0 = op->buf, *b1 = op->buf + ptot, *b2 = op->buf + 2 * ptot;
    const size_t *pos = op->pos;
#pragma omp parallel for num_threads(op->threads) schedule(static)
    for (long v = 0; v < (long)op->n_occ; v++) {
        y[3 * v] = b0[pos[v]];
        y[3 * v + 1] = b1[pos[v]];
        y[3 * v + 2] = b2[pos[v]];
    }
    return DPZ_OK;
}

static dpz_status fft_apply_cb(void *ctx, const double complex *x, double complex *y,
                               dpz_err *err)
{
    return dpz_fftop_apply(ctx, x, y, err);
}

dpz_linop dpz_fftop_linop(dpz_fftop *op)
{
    dpz_linop L = {op ? 3 * op->n_occ : 0, op, fft_apply_cb, op ? op->diag3 : NULL};
    return L;
}

void dpz_fftop_padded_dims(const dpz_fftop *op, size_t dims[3])
{
    for (int a = 0; a < 3; a++)
        dims[a] = op ? op->p[a] : 0;
}
