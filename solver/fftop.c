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
    const dpz_grid *grid; /* borrowed */
    size_t n_occ;         /* occupied voxels */
    size_t n[3];          /* grid dims */
    size_t p[3];          /* padded dims */
    size_t ptot;          /* p[0] p[1] p[2] */
    size_t cstride;       /* distance between the three components in buf (>= ptot) */
    size_t h[3];          /* stored kernel octant, h = p/2 + 1 per axis */
    size_t htot;          /* h[0] h[1] h[2] */
    int threads;          /* OpenMP and FFTW threads */
    double complex *kern; /* transformed kernel, 6 components xx xy xz yy yz zz over the
                             non-negative frequency octant (6 htot), scaled by 1/ptot */
    double complex *buf;  /* 3 cstride work grid, component-major */
    size_t *refl;         /* per axis (offsets 0, p0, p0 + p1): folded frequency index */
    signed char *sign;    /* per axis: +1, or -1 where the frequency was reflected */
    size_t *pos;          /* n_occ padded linear indices of the occupied voxels */
    double complex *inv_alpha; /* n_occ, m^-3 */
    double complex *diag3;     /* 3 n_occ, the diagonal for Jacobi preconditioning */
    /* Pruned transforms (three 1-D passes each way, skipping lines that are known to be
     * zero on input or not needed on output). */
    fftw_plan fz, fy, fx, bx, by, bz;
};

/* ---- sizes and memory
 * ------------------------------------------------------------------ */

/* Smallest m >= n whose only prime factors are 2, 3, 5, 7 (sizes FFTW handles with its
 * fastest codelets; common practice). */
static size_t fft_friendly(size_t n)
{
    static const size_t f[] = {2, 3, 5, 7};
    for (size_t m = n > 1 ? n : 1;; m++) {
        size_t r = m;
        for (int i = 0; i < 4; i++)
            while (r % f[i] == 0)
                r /= f[i];
        if (r == 1)
            return m;
    }
}

typedef struct layout {
    size_t p[3], ptot, cstride, h[3], htot;
} layout;

static int make_layout(const dpz_grid *g, layout *L)
{
    const size_t n[3] = {g->nx, g->ny, g->nz};
    for (int a = 0; a < 3; a++) {
        if (n[a] > ((size_t)1 << 28))
            return -1;
        L->p[a] = fft_friendly(2 * n[a] - 1);
        L->h[a] = L->p[a] / 2 + 1;
    }
    /* At most 2^40 padded points (16 TiB per component) keeps every index product far
     * from overflow; strides are passed to FFTW's 64-bit interface. */
    if (dpz_mul_overflow(L->p[0], L->p[1], &L->ptot) ||
        dpz_mul_overflow(L->ptot, L->p[2], &L->ptot) || L->ptot > ((size_t)1 << 40))
        return -1;
    /* Components start on 128-byte boundaries, so each is aligned like the buffer. */
    L->cstride = (L->ptot + 7) / 8 * 8;
    L->htot = L->h[0] * L->h[1] * L->h[2];
    return 0;
}

size_t dpz_fftop_memory_need(const dpz_grid *grid)
{
    layout L;
    if (!grid || grid->nx == 0 || grid->ny == 0 || grid->nz == 0 || make_layout(grid, &L))
        return 0;
    /* Three padded work components, six kernel components on the frequency octant, the
     * folding tables, and per voxel its position, 1/alpha and the 3-component diagonal.
     * FFTW's own plan data come on top (small). */
    size_t axes = L.p[0] + L.p[1] + L.p[2];
    return sizeof(struct dpz_fftop) +
           (3 * L.cstride + 6 * L.htot) * sizeof(double complex) +
           axes * (sizeof(size_t) + 1) +
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
    fftw_plan plans[6] = {op->fz, op->fy, op->fx, op->bx, op->by, op->bz};
    for (int i = 0; i < 6; i++)
        if (plans[i])
            fftw_destroy_plan(plans[i]);
    fftw_free(op->kern);
    fftw_free(op->buf);
    dpz__free(op->refl);
    dpz__free(op->sign);
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

/* One 1-D pass of length p[axis] over the three components of buf, restricted to the
 * lines whose indices along the other axes are below `lim` (lim[a] = p[a] for no
 * restriction). Axes are 0 (x, slowest) .. 2 (z, fastest). The 64-bit guru interface lets
 * FFTW loop over the components and lines (and thread that loop) with strides beyond
 * 2^31. */
static fftw_plan plan_pass(dpz_fftop *op, int axis, const size_t lim[3], int dir,
                           unsigned flags)
{
    const size_t *p = op->p;
    const ptrdiff_t stride[3] = {(ptrdiff_t)(p[1] * p[2]), (ptrdiff_t)p[2], 1};
    fftw_iodim64 dim = {(ptrdiff_t)p[axis], stride[axis], stride[axis]};
    fftw_iodim64 how[3];
    int nh = 0;
    how[nh++] = (fftw_iodim64){3, (ptrdiff_t)op->cstride, (ptrdiff_t)op->cstride};
    for (int a = 0; a < 3; a++)
        if (a != axis)
            how[nh++] = (fftw_iodim64){(ptrdiff_t)lim[a], stride[a], stride[a]};
    fftw_complex *b = (fftw_complex *)op->buf;
    return fftw_plan_guru64_dft(1, &dim, nh, how, b, b, dir, flags);
}

/* Writes the kernel for every lattice offset into component c of buf (offset o at index
 * o mod p, so the circular convolution reproduces the linear one). Each component is even
 * or odd under each axis reflection (G(-R) = G(R) and the reflection symmetry of the cube
 * average), so the kernel is evaluated on the non-negative octant only and reflected.
 * m0 is the first of the three tensor components written (0: xx xy xz, 3: yy yz zz). */
static void fill_kernel(dpz_fftop *op, double k, dpz_dipole_model model,
                        const dpz__igt_table *tab, int m0)
{
    const dpz_grid *g = op->grid;
    size_t px = op->p[0], py = op->p[1], pz = op->p[2], cs = op->cstride;
    double complex *buf = op->buf;
    /* Component m = (a, b) changes sign as s_a s_b under the reflections s. */
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
                    for (int m = m0; m < m0 + 3; m++)
                        buf[(size_t)(m - m0) * cs + q] = sg[ca[m]] * sg[cb[m]] * gv[m];
                }
            }
        }
    }
}

/* Transforms the kernel (three components at a time, in buf) with a full 3-D transform
 * and keeps the non-negative frequency octant: the transform of a sequence that is even
 * (odd) under a circular axis reflection is even (odd) under the same reflection, so the
 * octant determines the rest. */
static dpz_status transform_kernel(dpz_fftop *op, double k, dpz_dipole_model model,
                                   dpz_err *err)
{
    const size_t *p = op->p, *h = op->h;
    size_t cs = op->cstride, ptot = op->ptot;
    const ptrdiff_t pyz = (ptrdiff_t)(p[1] * p[2]);
    fftw_iodim64 dims[3] = {{(ptrdiff_t)p[0], pyz, pyz},
                            {(ptrdiff_t)p[1], (ptrdiff_t)p[2], (ptrdiff_t)p[2]},
                            {(ptrdiff_t)p[2], 1, 1}};
    fftw_iodim64 comp = {3, (ptrdiff_t)cs, (ptrdiff_t)cs};
    fftw_complex *b = (fftw_complex *)op->buf;
    fftw_plan full =
        fftw_plan_guru64_dft(3, dims, 1, &comp, b, b, FFTW_FORWARD, FFTW_ESTIMATE);
    if (!full)
        return dpz_err_set(err, DPZ_EFFTW,
                           "FFT operator: FFTW could not plan the kernel "
                           "transform");
    dpz__igt_table tab;
    if (model == DPZ_DIPOLE_IGT)
        dpz__igt_table_fill(&tab, k, op->grid->d);
    /* FFTW's transforms are unnormalized: forward then backward multiplies by ptot. The
     * single normalization 1/ptot of the whole operator is folded into the kernel here.
     */
    double scale = 1.0 / (double)ptot;
    for (int m0 = 0; m0 < 6; m0 += 3) {
        memset(op->buf, 0, 3 * cs * sizeof *op->buf);
        fill_kernel(op, k, model, model == DPZ_DIPOLE_IGT ? &tab : NULL, m0);
        fftw_execute(full);
        for (int c = 0; c < 3; c++) {
            double complex *dst = op->kern + (size_t)(m0 + c) * op->htot;
            const double complex *src = op->buf + (size_t)c * cs;
            for (size_t a = 0; a < h[0]; a++)
                for (size_t bb = 0; bb < h[1]; bb++)
                    for (size_t cc = 0; cc < h[2]; cc++)
                        dst[(a * h[1] + bb) * h[2] + cc] =
                            scale * src[(a * p[1] + bb) * p[2] + cc];
        }
    }
    fftw_destroy_plan(full);
    return DPZ_OK;
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
                           "FFT operator: wavenumber %g 1/m must be >= 0 and finite", k);
    if (!(grid->d > 0.0) || !isfinite(grid->d))
        return dpz_err_set(err, DPZ_EINVAL, "FFT operator: spacing %g m must be positive",
                           grid->d);
    layout L;
    if (make_layout(grid, &L))
        return dpz_err_set(
            err, DPZ_ELIMIT,
            "FFT operator: the padded grid for %zu x %zu x %zu voxels is too "
            "large",
            grid->nx, grid->ny, grid->nz);

    dpz_fftop *op = dpz__calloc(1, sizeof *op);
    if (!op)
        return dpz_err_set(err, DPZ_ENOMEM, "FFT operator: out of memory");
    op->grid = grid;
    op->n_occ = grid->n_occ;
    op->n[0] = grid->nx;
    op->n[1] = grid->ny;
    op->n[2] = grid->nz;
    memcpy(op->p, L.p, sizeof L.p);
    memcpy(op->h, L.h, sizeof L.h);
    op->ptot = L.ptot;
    op->cstride = L.cstride;
    op->htot = L.htot;
    op->threads = opts && opts->threads > 0 ? opts->threads : 1;
    size_t axes = L.p[0] + L.p[1] + L.p[2];
    op->kern = fft_alloc(6 * L.htot);
    op->buf = fft_alloc(3 * L.cstride);
    op->refl = dpz__calloc(axes, sizeof *op->refl);
    op->sign = dpz__calloc(axes, sizeof *op->sign);
    op->pos = dpz__calloc(grid->n_occ, sizeof *op->pos);
    op->inv_alpha = dpz__calloc(grid->n_occ, sizeof *op->inv_alpha);
    op->diag3 = dpz__calloc(3 * grid->n_occ, sizeof *op->diag3);
    if (!op->kern || !op->buf || !op->refl || !op->sign || !op->pos || !op->inv_alpha ||
        !op->diag3) {
        dpz_fftop_destroy(op);
        return dpz_err_set(
            err, DPZ_ENOMEM,
            "FFT operator: out of memory (%zu bytes needed for a %zu x %zu x "
            "%zu padded grid)",
            dpz_fftop_memory_need(grid), L.p[0], L.p[1], L.p[2]);
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
        op->pos[v] = (a * L.p[1] + b) * L.p[2] + c;
    }
    /* Frequency folding: index q and p - q share the stored octant entry; components odd
     * along the axis change sign on the upper half. */
    for (size_t a = 0, off = 0; a < 3; off += L.p[a], a++)
        for (size_t q = 0; q < L.p[a]; q++) {
            int up = q > L.p[a] / 2;
            op->refl[off + q] = up ? L.p[a] - q : q;
            op->sign[off + q] = up ? -1 : 1;
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
    unsigned flags = plan_flags(opts ? opts->plan : DPZ_PLAN_ESTIMATE);
    /* Forward: the input is zero outside i < nx, j < ny, k < nz. Transform along z only
     * the lines with i < nx, j < ny; along y only the planes i < nx; along x everything.
     * Backward: only outputs with i < nx, j < ny, k < nz are read, so the passes run in
     * the opposite order with the same restrictions. About 7/12 of the work of two full
     * 3-D transforms for p = 2n. */
    const size_t *p = L.p, *n = op->n;
    const size_t lim_z[3] = {n[0], n[1], p[2]}, lim_y[3] = {n[0], p[1], p[2]},
                 lim_x[3] = {p[0], p[1], p[2]};
    op->fz = plan_pass(op, 2, lim_z, FFTW_FORWARD, flags);
    op->fy = plan_pass(op, 1, lim_y, FFTW_FORWARD, flags);
    op->fx = plan_pass(op, 0, lim_x, FFTW_FORWARD, flags);
    op->bx = plan_pass(op, 0, lim_x, FFTW_BACKWARD, flags);
    op->by = plan_pass(op, 1, lim_y, FFTW_BACKWARD, flags);
    op->bz = plan_pass(op, 2, lim_z, FFTW_BACKWARD, flags);
    if (!op->fz || !op->fy || !op->fx || !op->bx || !op->by || !op->bz) {
        dpz_fftop_destroy(op);
        return dpz_err_set(
            err, DPZ_EFFTW,
            "FFT operator: FFTW could not plan a %zu x %zu x %zu transform", p[0], p[1],
            p[2]);
    }
    st = transform_kernel(op, k, model, err);
    if (st != DPZ_OK) {
        dpz_fftop_destroy(op);
        return st;
    }
    *out = op;
    return DPZ_OK;
}

/* Computes buf <- G x on the padded grid (components at pos[]). */
static void convolve(dpz_fftop *op, const double complex *x)
{
    size_t cs = op->cstride, n = op->n_occ;
    double complex *b0 = op->buf, *b1 = op->buf + cs, *b2 = op->buf + 2 * cs;
    const size_t *pos = op->pos;
    long nb = (long)(3 * cs);
    double complex *buf = op->buf;
#pragma omp parallel num_threads(op->threads)
    {
#pragma omp for schedule(static)
        for (long q = 0; q < nb; q++)
            buf[q] = 0.0;
#pragma omp for schedule(static)
        for (long v = 0; v < (long)n; v++) {
            b0[pos[v]] = x[3 * v];
            b1[pos[v]] = x[3 * v + 1];
            b2[pos[v]] = x[3 * v + 2];
        }
    }
    fftw_execute(op->fz);
    fftw_execute(op->fy);
    fftw_execute(op->fx);
    /* 3x3 symmetric tensor product per frequency; the kernel is stored on the octant and
     * unfolded with the parity of each component (xy odd in x and y, and so on). */
    const size_t *p = op->p, *h = op->h;
    const size_t *rx = op->refl, *ry = op->refl + p[0], *rz = op->refl + p[0] + p[1];
    const signed char *sx = op->sign, *sy = op->sign + p[0], *sz = op->sign + p[0] + p[1];
    const double complex *K = op->kern;
    size_t ht = op->htot;
    long pxy = (long)(p[0] * p[1]);
#pragma omp parallel for num_threads(op->threads) schedule(static)
    for (long ab = 0; ab < pxy; ab++) {
        size_t a = (size_t)ab / p[1], b = (size_t)ab % p[1];
        size_t row = (rx[a] * h[1] + ry[b]) * h[2];
        double sab = sx[a] * sy[b];
        size_t q0 = (size_t)ab * p[2];
        for (size_t c = 0; c < p[2]; c++) {
            size_t kq = row + rz[c];
            double sac = sx[a] * sz[c], sbc = sy[b] * sz[c];
            double complex gxx = K[kq], gxy = sab * K[ht + kq],
                           gxz = sac * K[2 * ht + kq];
            double complex gyy = K[3 * ht + kq], gyz = sbc * K[4 * ht + kq],
                           gzz = K[5 * ht + kq];
            size_t q = q0 + c;
            double complex X = b0[q], Y = b1[q], Z = b2[q];
            b0[q] = gxx * X + gxy * Y + gxz * Z;
            b1[q] = gxy * X + gyy * Y + gyz * Z;
            b2[q] = gxz * X + gyz * Y + gzz * Z;
        }
    }
    fftw_execute(op->bx);
    fftw_execute(op->by);
    fftw_execute(op->bz);
}

dpz_status dpz_fftop_apply(dpz_fftop *op, const double complex *x, double complex *y,
                           dpz_err *err)
{
    if (!op || !x || !y)
        return dpz_err_set(err, DPZ_EINVAL, "FFT operator: NULL argument");
    convolve(op, x);
    size_t cs = op->cstride;
    const double complex *b0 = op->buf, *b1 = op->buf + cs, *b2 = op->buf + 2 * cs;
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
    size_t cs = op->cstride;
    const double complex *b0 = op->buf, *b1 = op->buf + cs, *b2 = op->buf + 2 * cs;
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
