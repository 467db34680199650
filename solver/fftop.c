/* fftop.c: the FFT-accelerated discrete-dipole operator A = alpha^-1 - G (plan once,
 * apply many).
 *
 * The interaction sum (G x)_r = sum_{r'} G(r - r') x_{r'} over a regular lattice is a
 * discrete convolution, evaluated as a circular convolution on a zero-padded grid of at
 * least 2n - 1 points per axis, which avoids wrap-around (Goodman, Draine & Flatau, Opt.
 * Lett. 16, 1198 (1991)). Transforms by FFTW (Frigo & Johnson, Proc. IEEE 93, 216
 * (2005)); the kernel is complex for k > 0, so the field transforms are complex.
 *
 * Layout of one apply (memory and cache are the limits, not arithmetic):
 *  1. the three components of x are scattered into a "slab" of nx * ny lines of pz
 *     points each (a quarter of the padded grid: only the lines that hold data) and
 *     transformed along z;
 *  2. for each small block of consecutive z frequencies, the nx x ny slices of the slab
 *     are copied into a per-thread zero-padded px x py plane buffer (rows padded by one
 *     frequency group against cache set conflicts), transformed along y (only the nx
 *     rows that hold data) and x (all columns), multiplied by the 3x3 kernel tensor
 *     (AVX2/FMA code where the CPU has it), transformed back along x and y, and the
 *     nx x ny part that is needed is copied back into the slab;
 *  3. the slab is transformed back along z and gathered.
 * The work is that of the transforms pruned to the lines that hold data on the way in and
 * the lines that are kept on the way out (about 7/12 of two full 3-D transforms for
 * p = 2n), the memory a quarter of one padded grid per component, and each plane block is
 * processed while it is in cache. Threads split the z lines and the plane blocks
 * (OpenMP); every line and block is computed by the same sequence of operations whatever
 * the thread count, so the result does not depend on it.
 *
 * The kernel is stored on the non-negative frequency octant only: each of the six tensor
 * components is even or odd along each axis (G(-R) = G(R) and reflection symmetry), so
 * its transform is too, and the octant transform is a product of real-to-real
 * transforms of the half-sequences: a DCT-I along even axes and a DST-I along odd axes
 * (FFTW's REDFT00 and RODFT00; see Frigo & Johnson 2005, sec. on real-even and
 * real-odd DFTs). This avoids ever holding a full padded grid, also at creation.
 */
#include "dpz_operator.h"

#include <math.h>
#include <string.h>

#include <fftw3.h>
#include <omp.h>

/* The AVX2/FMA kernel product is compiled (with a target attribute, the rest of the
 * project stays generic x86-64) where the compiler supports it, and chosen at run time.
 */
#if (defined(__x86_64__) || defined(__i386__)) && defined(__GNUC__)
#define DPZ_FFTOP_AVX2 1
#include <immintrin.h>
#else
#define DPZ_FFTOP_AVX2 0
#endif

#include "solver_int.h"

/* At most ZBLOCK consecutive z frequencies are processed together in one plane block,
 * fewer when the block would exceed PLANE_BUDGET bytes: the copies in and out of the slab
 * then move whole cache lines, FFTW's plane passes run over zb contiguous transforms at
 * a time, and the block stays in the outer caches (values measured on this project's
 * machine, 1 MB L2 per core and 32 MB L3: benchmarks/README.md). */
#define ZBLOCK 16
#define PLANE_BUDGET ((size_t)2 << 20)
/* Lines per z-transform call (a unit of work for the threads). */
#define ZLINES 16

struct dpz_fftop {
    const dpz_grid *grid; /* borrowed */
    size_t n_occ;         /* occupied voxels */
    size_t n[3];          /* grid dims */
    size_t p[3];          /* padded dims: 1 when n = 1, else an even FFT-friendly >= 2n */
    size_t ptot;          /* p[0] p[1] p[2] */
    size_t h[3];          /* stored kernel octant, h = p/2 + 1 per axis (1 when p = 1) */
    size_t htot;          /* h[0] h[1] h[2] */
    size_t cs;            /* slab component stride, nx ny pz */
    size_t zb;            /* z frequencies per plane block (<= ZBLOCK) */
    size_t rs;            /* plane buffer x-row stride, >= py zb */
    size_t ps;            /* plane buffer component stride, px rs */
    size_t pt;            /* plane buffer stride between threads, >= 3 ps */
    int threads;          /* OpenMP threads */
    double complex *kern; /* transformed kernel over the octant, [c][a][b][m] (z frequency
                             outermost, so that a block of z frequencies reads contiguous
                             memory) with the six components m = xx xy xz yy yz zz
                             innermost, scaled by 1/ptot */
    double complex *slab; /* 3 cs: [comp][i < nx][j < ny][c < pz] */
    double complex
        *plane;   /* threads x 3 ps: per thread [comp][a][b][t < zb], row a at a rs */
    size_t *refl; /* per axis (offsets 0, p0, p0 + p1): folded frequency index */
    double *sign; /* per axis: +1, or -1 where the frequency was reflected */
    size_t *pos;  /* n_occ slab indices of the occupied voxels */
    double complex *inv_alpha; /* n_occ, m^-3 */
    double complex *diag3;     /* 3 n_occ, the diagonal for Jacobi preconditioning */
    /* z passes on ZLINES lines and on the remainder; plane passes for a full block of zb
     * frequencies and for the remainder pz mod zb (index 0 full, 1 remainder). */
    fftw_plan fz[2], bz[2], fy[2], fx[2], bx[2], by[2];
    size_t zlines_rem, zb_rem;
    /* the kernel product of a plane block (generic or AVX2, chosen at creation) */
    void (*product)(const struct dpz_fftop *op, double complex *P, size_t c0, size_t nt);
};

/* ---- sizes and memory
 * ------------------------------------------------------------------ */

/* Smallest even m >= n whose only prime factors are 2, 3, 5, 7 (sizes FFTW handles with
 * its fastest codelets; common practice). Even sizes let the kernel octant be
 * transformed by DCT-I/DST-I of length p/2 + 1 and p/2 - 1. */
static size_t fft_friendly_even(size_t n)
{
    static const size_t f[] = {2, 3, 5, 7};
    for (size_t m = n > 2 ? n + (n & 1) : 2;; m += 2) {
        size_t r = m;
        for (int i = 0; i < 4; i++)
            while (r % f[i] == 0)
                r /= f[i];
        if (r == 1)
            return m;
    }
}

typedef struct layout {
    size_t p[3], ptot, h[3], htot, cs, zb, rs, ps, pt;
} layout;

static int make_layout(const dpz_grid *g, layout *L)
{
    const size_t n[3] = {g->nx, g->ny, g->nz};
    for (int a = 0; a < 3; a++) {
        if (n[a] > ((size_t)1 << 28))
            return -1;
        /* A single layer needs no padding: the only offset along that axis is 0. */
        L->p[a] = n[a] == 1 ? 1 : fft_friendly_even(2 * n[a]);
        L->h[a] = L->p[a] == 1 ? 1 : L->p[a] / 2 + 1;
    }
    /* At most 2^40 padded points keeps every index product far from overflow; strides
     * are passed to FFTW's 64-bit interface. */
    if (dpz_mul_overflow(L->p[0], L->p[1], &L->ptot) ||
        dpz_mul_overflow(L->ptot, L->p[2], &L->ptot) || L->ptot > ((size_t)1 << 40))
        return -1;
    L->htot = L->h[0] * L->h[1] * L->h[2];
    L->cs = n[0] * n[1] * L->p[2];
    /* The plane buffer's x rows are py + 1 frequency groups apart (one unused group):
     * with the plain stride py zb, a power of two times 16 bytes for most sizes, the
     * elements of one x line fall into a few cache sets and the x passes thrash
     * (measured: 5.0 s against 1.1 s per apply at 128^3, 0.95 against 0.55 ms at 16^3).
     * The block of z frequencies is the largest power of two <= ZBLOCK whose plane buffer
     * fits in PLANE_BUDGET bytes, but at least 4, so that each visit of a slab line moves
     * a whole 64-byte cache line (measured at 128^3: 4 faster than 2, and 2 than 1). */
    L->zb = ZBLOCK;
    while (L->zb > 4 &&
           3 * L->p[0] * (L->p[1] + 1) * L->zb * sizeof(double complex) > PLANE_BUDGET)
        L->zb /= 2;
    if (L->zb > L->p[2])
        L->zb = L->p[2];
    L->rs = (L->p[1] + 1) * L->zb;
    L->ps = L->p[0] * L->rs;
    /* Each thread's buffer starts on a 128-byte boundary, aligned like the first one
     * (FFTW's new-array execute needs the alignment the plan was made with). */
    L->pt = (3 * L->ps + 7) / 8 * 8;
    return 0;
}

static size_t memory_need(const dpz_grid *grid, const layout *L, size_t threads)
{
    size_t axes = L->p[0] + L->p[1] + L->p[2];
    return sizeof(struct dpz_fftop) +
           (3 * L->cs + threads * L->pt + 6 * L->htot) * sizeof(double complex) +
           axes * (sizeof(size_t) + sizeof(double)) +
           grid->n_occ * (sizeof(size_t) + 4 * sizeof(double complex));
}

size_t dpz_fftop_memory_need(const dpz_grid *grid)
{
    return dpz_fftop_memory_need_threads(grid, 1);
}

size_t dpz_fftop_memory_need_threads(const dpz_grid *grid, int threads)
{
    layout L;
    if (!grid || grid->nx == 0 || grid->ny == 0 || grid->nz == 0 || make_layout(grid, &L))
        return 0;
    return memory_need(grid, &L, threads > 0 ? (size_t)threads : 1);
}

/* ---- kernel product variants (defined with the apply below) ---------------------------
 */
static void product_generic(const dpz_fftop *op, double complex *P, size_t c0, size_t nt);
#if DPZ_FFTOP_AVX2
static void product_avx2(const dpz_fftop *op, double complex *P, size_t c0, size_t nt);

/* CPU and operating system support AVX2 and FMA (GCC's CPU detection checks that the OS
 * saves the YMM registers). */
static int cpu_has_avx2_fma(void)
{
    __builtin_cpu_init();
    return __builtin_cpu_supports("avx2") && __builtin_cpu_supports("fma");
}
#endif

const char *dpz_fftop_product_name(const dpz_fftop *op)
{
#if DPZ_FFTOP_AVX2
    if (op && op->product == product_avx2)
        return "avx2-fma";
#endif
    return "generic";
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

/* fftw_init_threads must run once before any threaded planning (callers such as the
 * benchmarks may plan threaded transforms of their own) and before wisdom is imported
 * (it registers the threaded algorithms, and wisdom only loads into a planner with the
 * same set); FFTW's planner is not thread-safe, so operators are created from one thread
 * (documented in the header). */
static int fftw_threads_ready = 0;

int dpz__fftw_threads_init(void)
{
    if (!fftw_threads_ready) {
        if (!fftw_init_threads())
            return -1;
        fftw_threads_ready = 1;
    }
    return 0;
}

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
    for (int i = 0; i < 2; i++) {
        fftw_plan plans[6] = {op->fz[i], op->bz[i], op->fy[i],
                              op->fx[i], op->bx[i], op->by[i]};
        for (int j = 0; j < 6; j++)
            if (plans[j])
                fftw_destroy_plan(plans[j]);
    }
    fftw_free(op->kern);
    fftw_free(op->slab);
    fftw_free(op->plane);
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

/* z pass: `lines` consecutive slab lines of pz points (in place). */
static fftw_plan plan_z(dpz_fftop *op, size_t lines, int dir, unsigned flags)
{
    fftw_iodim64 dim = {(ptrdiff_t)op->p[2], 1, 1};
    fftw_iodim64 how = {(ptrdiff_t)lines, (ptrdiff_t)op->p[2], (ptrdiff_t)op->p[2]};
    fftw_complex *b = (fftw_complex *)op->slab;
    return fftw_plan_guru64_dft(1, &dim, 1, &how, b, b, dir, flags);
}

/* Plane pass along `axis` (0: x over all py columns, 1: y over the nx rows that hold
 * data) for the three components and `nt` frequencies of a block, in place in the
 * first thread's plane buffer (the others are executed with fftw_execute_dft). */
static fftw_plan plan_plane(dpz_fftop *op, int axis, size_t nt, int dir, unsigned flags)
{
    const size_t *p = op->p, zb = op->zb;
    ptrdiff_t sx = (ptrdiff_t)op->rs, sy = (ptrdiff_t)zb;
    fftw_iodim64 dim, how[3];
    if (axis == 0) {
        dim = (fftw_iodim64){(ptrdiff_t)p[0], sx, sx};
        how[1] = (fftw_iodim64){(ptrdiff_t)p[1], sy, sy};
    } else {
        dim = (fftw_iodim64){(ptrdiff_t)p[1], sy, sy};
        how[1] = (fftw_iodim64){(ptrdiff_t)op->n[0], sx, sx};
    }
    how[0] = (fftw_iodim64){3, (ptrdiff_t)op->ps, (ptrdiff_t)op->ps};
    how[2] = (fftw_iodim64){(ptrdiff_t)nt, 1, 1};
    fftw_complex *b = (fftw_complex *)op->plane;
    return fftw_plan_guru64_dft(1, &dim, 3, how, b, b, dir, flags);
}

/* Writes the kernel (scaled later) for every lattice offset 0 <= (i, j, l) < n into the
 * octant array; larger offsets up to p/2 are the zero padding. Component m = (a, b)
 * changes sign as s_a s_b under the axis reflections s, so the octant determines it. */
static void fill_kernel(dpz_fftop *op, double k, dpz_dipole_model model,
                        const dpz__igt_table *tab)
{
    const dpz_grid *g = op->grid;
    const size_t *h = op->h;
    double complex *K = op->kern;
    long nx = (long)g->nx, ny = (long)g->ny, nz = (long)g->nz;
#pragma omp parallel for num_threads(op->threads) schedule(dynamic)
    for (long i = 0; i < nx; i++)
        for (long j = 0; j < ny; j++)
            for (long l = 0; l < nz; l++) {
                double complex gv[6] = {0};
                if (i != 0 || j != 0 || l != 0)
                    dpz__kernel_tab(model, k, g->d, tab, i, j, l, gv);
                /* Components odd along an axis vanish on the plane where that offset is 0
                 * (by the reflection symmetry; a quadrature may leave rounding there). */
                if (i == 0)
                    gv[1] = gv[2] = 0.0;
                if (j == 0)
                    gv[1] = gv[4] = 0.0;
                if (l == 0)
                    gv[2] = gv[4] = 0.0;
                double complex *dst =
                    K + (((size_t)l * h[0] + (size_t)i) * h[1] + (size_t)j) * 6;
                for (int m = 0; m < 6; m++)
                    dst[m] = gv[m];
            }
}

/* Transforms the kernel octant in place, one component at a time: the DFT of a sequence
 * of even length p that is even about 0 (g[p - q] = g[q]) is, on 0 <= q <= p/2, the DCT-I
 * of g[0..p/2] (FFTW REDFT00: Y_k = X_0 + (-1)^k X_{N-1} + 2 sum_{j=1}^{N-2} X_j
 * cos(pi j k / (N - 1)), N = p/2 + 1); for an odd sequence it is -i times the DST-I of
 * g[1..p/2-1] (RODFT00: Y_k = 2 sum_{j=0}^{N-1} X_j sin(pi (j+1)(k+1) / (N+1)),
 * N = p/2 - 1), and 0 at q = 0 and p/2. Real and imaginary parts are transformed alike
 * (the transforms are real-linear). The off-diagonal components are odd along two axes,
 * so they pick up (-i)^2 = -1. */
static dpz_status transform_kernel(dpz_fftop *op, dpz_err *err)
{
    static const int ca[6] = {0, 0, 0, 1, 1, 2}, cb[6] = {0, 1, 2, 1, 2, 2};
    const size_t *p = op->p, *h = op->h;
    const ptrdiff_t stride[3] = {(ptrdiff_t)(h[1] * 12), 12,
                                 (ptrdiff_t)(h[0] * h[1] * 12)}; /* in doubles */
    double *base = (double *)op->kern;
    for (int m = 0; m < 6; m++) {
        fftw_iodim64 dims[3];
        fftw_r2r_kind kinds[3];
        int rank = 0, empty = 0;
        ptrdiff_t off = 2 * m;
        for (int a = 0; a < 3; a++) {
            if (p[a] == 1)
                continue; /* length-1 transform: identity (odd components vanish) */
            int odd = (ca[m] == a) != (cb[m] == a);
            if (odd && h[a] < 3) {
                empty = 1;
                break;
            }
            dims[rank] =
                (fftw_iodim64){(ptrdiff_t)(odd ? h[a] - 2 : h[a]), stride[a], stride[a]};
            kinds[rank] = odd ? FFTW_RODFT00 : FFTW_REDFT00;
            if (odd)
                off += stride[a];
            rank++;
        }
        if (empty || rank == 0)
            continue; /* nothing to transform (the component is zero or constant) */
        fftw_iodim64 reim = {2, 1, 1};
        double *d = base + off;
        fftw_plan pl =
            fftw_plan_guru64_r2r(rank, dims, 1, &reim, d, d, kinds, FFTW_ESTIMATE);
        if (!pl)
            return dpz_err_set(err, DPZ_EFFTW,
                               "FFT operator: FFTW could not plan the kernel transform");
        fftw_execute(pl);
        fftw_destroy_plan(pl);
    }
    /* FFTW's transforms are unnormalized: forward then backward multiplies by ptot. The
     * single normalization 1/ptot of the whole operator is folded into the kernel here,
     * with the sign -1 of the off-diagonal components. */
    double scale = 1.0 / (double)op->ptot;
    const double sgn[6] = {scale, -scale, -scale, scale, -scale, scale};
    for (size_t q = 0; q < op->htot; q++)
        for (int m = 0; m < 6; m++)
            op->kern[6 * q + m] *= sgn[m];
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
    op->htot = L.htot;
    op->cs = L.cs;
    op->zb = L.zb;
    op->rs = L.rs;
    op->ps = L.ps;
    op->pt = L.pt;
    op->threads = opts && opts->threads > 0 ? opts->threads : 1;
    op->product = product_generic;
#if DPZ_FFTOP_AVX2
    if (!(opts && opts->simd == DPZ_SIMD_GENERIC) && cpu_has_avx2_fma())
        op->product = product_avx2;
#endif
    size_t axes = L.p[0] + L.p[1] + L.p[2];
    op->kern = fft_alloc(6 * L.htot);
    op->slab = fft_alloc(3 * L.cs);
    op->plane = fft_alloc((size_t)op->threads * L.pt);
    op->refl = dpz__calloc(axes, sizeof *op->refl);
    op->sign = dpz__calloc(axes, sizeof *op->sign);
    op->pos = dpz__calloc(grid->n_occ, sizeof *op->pos);
    op->inv_alpha = dpz__calloc(grid->n_occ, sizeof *op->inv_alpha);
    op->diag3 = dpz__calloc(3 * grid->n_occ, sizeof *op->diag3);
    if (!op->kern || !op->slab || !op->plane || !op->refl || !op->sign || !op->pos ||
        !op->inv_alpha || !op->diag3) {
        dpz_fftop_destroy(op);
        return dpz_err_set(
            err, DPZ_ENOMEM,
            "FFT operator: out of memory (%zu bytes needed for a %zu x %zu x "
            "%zu padded grid)",
            memory_need(grid, &L,
                        (size_t)(opts && opts->threads > 0 ? opts->threads : 1)),
            L.p[0], L.p[1], L.p[2]);
    }
    dpz_status st = dpz_fftop_set_diag(op, inv_alpha, err);
    if (st != DPZ_OK) {
        dpz_fftop_destroy(op);
        return st;
    }
    size_t nz = grid->nz;
    for (size_t v = 0; v < grid->n_occ; v++) {
        size_t iv = grid->occ[v];
        /* Slab line (i, j) holds voxel column (i, j, 0..nz) at its start. */
        op->pos[v] = iv / nz * L.p[2] + iv % nz;
    }
    /* Frequency folding: index q and p - q share the stored octant entry; components odd
     * along the axis change sign on the upper half. */
    for (size_t a = 0, off = 0; a < 3; off += L.p[a], a++)
        for (size_t q = 0; q < L.p[a]; q++) {
            int up = q > L.p[a] / 2;
            op->refl[off + q] = up ? L.p[a] - q : q;
            op->sign[off + q] = up ? -1.0 : 1.0;
        }

    /* Plan first: a measuring planner overwrites the arrays it plans on. Each plan is
     * single-threaded: the operator distributes lines and blocks over its threads. */
    if (dpz__fftw_threads_init() != 0) {
        dpz_fftop_destroy(op);
        return dpz_err_set(err, DPZ_EFFTW, "FFT operator: fftw_init_threads failed");
    }
    fftw_plan_with_nthreads(1);
    unsigned flags = plan_flags(opts ? opts->plan : DPZ_PLAN_ESTIMATE);
    size_t nlines = 3 * L.cs / L.p[2];
    size_t zl = nlines < ZLINES ? nlines : ZLINES;
    op->zlines_rem = nlines % zl;
    op->zb_rem = L.p[2] % L.zb;
    int ok = 1;
    for (int i = 0; i < 2 && ok; i++) {
        if (L.p[2] > 1 && (i == 0 || op->zlines_rem)) {
            size_t cnt = i == 0 ? zl : op->zlines_rem;
            ok = (op->fz[i] = plan_z(op, cnt, FFTW_FORWARD, flags)) &&
                 (op->bz[i] = plan_z(op, cnt, FFTW_BACKWARD, flags));
        }
        if (ok && (i == 0 || op->zb_rem)) {
            size_t nt = i == 0 ? L.zb : op->zb_rem;
            ok = (op->fy[i] = plan_plane(op, 1, nt, FFTW_FORWARD, flags)) &&
                 (op->fx[i] = plan_plane(op, 0, nt, FFTW_FORWARD, flags)) &&
                 (op->bx[i] = plan_plane(op, 0, nt, FFTW_BACKWARD, flags)) &&
                 (op->by[i] = plan_plane(op, 1, nt, FFTW_BACKWARD, flags));
        }
    }
    if (!ok) {
        dpz_fftop_destroy(op);
        return dpz_err_set(
            err, DPZ_EFFTW,
            "FFT operator: FFTW could not plan a %zu x %zu x %zu transform", L.p[0],
            L.p[1], L.p[2]);
    }
    memset(op->kern, 0, 6 * L.htot * sizeof *op->kern);
    dpz__igt_table tab;
    if (model == DPZ_DIPOLE_IGT)
        dpz__igt_table_fill(&tab, k, grid->d);
    fill_kernel(op, k, model, model == DPZ_DIPOLE_IGT ? &tab : NULL);
    st = transform_kernel(op, err);
    if (st != DPZ_OK) {
        dpz_fftop_destroy(op);
        return st;
    }
    *out = op;
    return DPZ_OK;
}

/* The z pass over the whole slab, split into chunks of ZLINES lines among the threads. */
static void pass_z(dpz_fftop *op, fftw_plan *pl)
{
    if (op->p[2] == 1)
        return;
    size_t pz = op->p[2], nlines = 3 * op->cs / pz;
    size_t zl = nlines < ZLINES ? nlines : ZLINES;
    long nchunks = (long)(nlines / zl);
    fftw_complex *s = (fftw_complex *)op->slab;
#pragma omp parallel for num_threads(op->threads) schedule(static)
    for (long c = 0; c < nchunks; c++)
        fftw_execute_dft(pl[0], s + (size_t)c * zl * pz, s + (size_t)c * zl * pz);
    if (op->zlines_rem) {
        fftw_complex *r = s + (size_t)nchunks * zl * pz;
        fftw_execute_dft(pl[1], r, r);
    }
}

/* Two doubles as one SIMD register (GCC/Clang vector extension; SSE2 on x86-64): a
 * complex number (re, im). */
typedef double v2d __attribute__((vector_size(16)));

static inline v2d v2_load(const double *p)
{
    v2d v;
    memcpy(&v, p, sizeof v);
    return v;
}

/* (x, y, z) <- g (x, y, z) for the symmetric 3x3 complex g of six components k6 = (xx,
 * xy, xz, yy, yz, zz) as (re, im) pairs, with the signs s_xy, s_xz, s_yz of the unfolded
 * off-diagonal components. Written with g v = Re(g) v + Im(g) (i v) so that each complex
 * product is two broadcast multiplies. */
static inline void cmul3(const double *k6, double sxy, double sxz, double syz, double *x,
                         double *y, double *z)
{
    const v2d flip = {-1.0, 1.0};
    v2d X = v2_load(x), Y = v2_load(y), Z = v2_load(z);
    v2d iX = (v2d){X[1], X[0]} * flip, iY = (v2d){Y[1], Y[0]} * flip,
        iZ = (v2d){Z[1], Z[0]} * flip;
    double xyr = sxy * k6[2], xyi = sxy * k6[3], xzr = sxz * k6[4], xzi = sxz * k6[5];
    double yzr = syz * k6[8], yzi = syz * k6[9];
    v2d ox = k6[0] * X + k6[1] * iX + xyr * Y + xyi * iY + xzr * Z + xzi * iZ;
    v2d oy = xyr * X + xyi * iX + k6[6] * Y + k6[7] * iY + yzr * Z + yzi * iZ;
    v2d oz = xzr * X + xzi * iX + yzr * Y + yzi * iY + k6[10] * Z + k6[11] * iZ;
    memcpy(x, &ox, sizeof ox);
    memcpy(y, &oy, sizeof oy);
    memcpy(z, &oz, sizeof oz);
}

/* What both kernel products read: the folded frequency indices and signs per axis, the
 * octant kernel (stride hxy between z frequencies, hy between x rows) and the three
 * components of the plane block P. */
typedef struct kview {
    const size_t *rx, *ry, *rz;
    const double *sx, *sy, *sz, *K;
    size_t px, py, hy, hxy, zb, rowlen;
    double *b0, *b1, *b2;
} kview;

static kview kernel_view(const dpz_fftop *op, double complex *P)
{
    const size_t *p = op->p;
    kview v = {op->refl,
               op->refl + p[0],
               op->refl + p[0] + p[1],
               op->sign,
               op->sign + p[0],
               op->sign + p[0] + p[1],
               (const double *)op->kern,
               p[0],
               p[1],
               op->h[1],
               op->h[0] * op->h[1],
               op->zb,
               op->rs,
               (double *)P,
               (double *)(P + op->ps),
               (double *)(P + 2 * op->ps)};
    return v;
}

/* The 3x3 symmetric tensor product for the nt frequencies c0.. of a plane block P; the
 * kernel is stored on the octant and unfolded with the parity of each component (xy odd
 * in x and y, and so on). Portable version (SSE2 on x86-64). */
static void product_generic(const dpz_fftop *op, double complex *P, size_t c0, size_t nt)
{
    kview v = kernel_view(op, P);
    const size_t *rx = v.rx, *ry = v.ry, *rz = v.rz, hxy = v.hxy;
    const double *sx = v.sx, *sy = v.sy, *sz = v.sz, *K = v.K;
    double *b0 = v.b0, *b1 = v.b1, *b2 = v.b2;
    for (size_t a = 0; a < v.px; a++)
        for (size_t b = 0; b < v.py; b++) {
            size_t row = rx[a] * v.hy + ry[b];
            double sab = sx[a] * sy[b];
            size_t q0 = a * v.rowlen + b * v.zb;
            for (size_t t = 0; t < nt; t++) {
                size_t c = c0 + t;
                cmul3(K + 12 * (rz[c] * hxy + row), sab, sx[a] * sz[c], sy[b] * sz[c],
                      b0 + 2 * (q0 + t), b1 + 2 * (q0 + t), b2 + 2 * (q0 + t));
            }
        }
}

#if DPZ_FFTOP_AVX2
/* The same product with AVX2 and FMA (selected at run time when the CPU has them: FFTW's
 * own codelets already use them, and the generic build of the project is SSE2 only),
 * two consecutive frequencies per 256-bit register. Complex products as in the generic
 * version, g v = Re(g) v + Im(g) (i v), with the two sums combined by one addsub:
 * out = sum Re(g) v (+/-) sum Im(g) swap(v), subtracting in the real lanes (the usual
 * SIMD complex multiply; Intel optimization manual, "complex arithmetic"; common
 * practice). Equal to the generic product up to rounding (FMA rounds once). */
__attribute__((target("avx2,fma"))) static void
product_avx2(const dpz_fftop *op, double complex *P, size_t c0, size_t nt)
{
    kview v = kernel_view(op, P);
    const size_t *rx = v.rx, *ry = v.ry, *rz = v.rz, hxy = v.hxy;
    const double *sx = v.sx, *sy = v.sy, *sz = v.sz, *K = v.K;
    double *b0 = v.b0, *b1 = v.b1, *b2 = v.b2;
    size_t npair = nt / 2;
    for (size_t a = 0; a < v.px; a++)
        for (size_t b = 0; b < v.py; b++) {
            size_t row = rx[a] * v.hy + ry[b];
            double sab = sx[a] * sy[b];
            const __m256d vab = _mm256_set1_pd(sab);
            size_t q0 = a * v.rowlen + b * v.zb;
            for (size_t t2 = 0; t2 < npair; t2++) {
                size_t t = 2 * t2, c = c0 + t;
                const double *k0 = K + 12 * (rz[c] * hxy + row),
                             *k1 = K + 12 * (rz[c + 1] * hxy + row);
                __m256d vz = _mm256_set_pd(sz[c + 1], sz[c + 1], sz[c], sz[c]);
                __m256d g[6];
                for (int m = 0; m < 6; m++)
                    g[m] = _mm256_loadu2_m128d(k1 + 2 * m, k0 + 2 * m);
                g[1] = _mm256_mul_pd(g[1], vab);
                g[2] = _mm256_mul_pd(g[2], _mm256_mul_pd(vz, _mm256_set1_pd(sx[a])));
                g[4] = _mm256_mul_pd(g[4], _mm256_mul_pd(vz, _mm256_set1_pd(sy[b])));
                __m256d gr[6], gi[6];
                for (int m = 0; m < 6; m++) {
                    gr[m] = _mm256_movedup_pd(g[m]);
                    gi[m] = _mm256_permute_pd(g[m], 0xF);
                }
                double *px = b0 + 2 * (q0 + t), *py = b1 + 2 * (q0 + t),
                       *pz = b2 + 2 * (q0 + t);
                __m256d X = _mm256_loadu_pd(px), Y = _mm256_loadu_pd(py),
                        Z = _mm256_loadu_pd(pz);
                /* Output r sums components gc[r][0..2] of g times x, y, z. */
                static const int gc[3][3] = {{0, 1, 2}, {1, 3, 4}, {2, 4, 5}};
                const __m256d V[3] = {X, Y, Z}, Vs[3] = {_mm256_permute_pd(X, 0x5),
                                                         _mm256_permute_pd(Y, 0x5),
                                                         _mm256_permute_pd(Z, 0x5)};
                double *dst[3] = {px, py, pz};
                for (int r = 0; r < 3; r++) {
                    const int *q = gc[r];
                    __m256d re = _mm256_fmadd_pd(
                        gr[q[2]], V[2],
                        _mm256_fmadd_pd(gr[q[1]], V[1], _mm256_mul_pd(gr[q[0]], V[0])));
                    __m256d im = _mm256_fmadd_pd(
                        gi[q[2]], Vs[2],
                        _mm256_fmadd_pd(gi[q[1]], Vs[1], _mm256_mul_pd(gi[q[0]], Vs[0])));
                    _mm256_storeu_pd(dst[r], _mm256_addsub_pd(re, im));
                }
            }
            if (nt % 2) {
                size_t t = nt - 1, c = c0 + t;
                cmul3(K + 12 * (rz[c] * hxy + row), sab, sx[a] * sz[c], sy[b] * sz[c],
                      b0 + 2 * (q0 + t), b1 + 2 * (q0 + t), b2 + 2 * (q0 + t));
            }
        }
}
#endif

/* Copies a run of nt <= ZBLOCK complex numbers (GCC turns the loop into a memmove call;
 * forcing it inline changed nothing beyond noise at 16^3 to 128^3: the cost of these
 * copies, 15% of an apply at 64^3 by perf, is the cache misses on the slab lines). */
static inline void copy_run(double complex *restrict dst,
                            const double complex *restrict src, size_t nt)
{
    for (size_t t = 0; t < nt; t++)
        dst[t] = src[t];
}

/* Step 2 of the apply for the block of nt z frequencies starting at c0, in the plane
 * buffer P of one thread; `rem` selects the remainder plans. */
static void plane_block(dpz_fftop *op, double complex *P, size_t c0, size_t nt, int rem)
{
    const size_t *n = op->n, *p = op->p;
    size_t zb = op->zb, ps = op->ps, pz = p[2], cs = op->cs;
    size_t rowlen = op->rs; /* one x row of the plane */
    /* Copy in, zero padding in y and the rows nx..px. */
    for (int c = 0; c < 3; c++) {
        double complex *Pc = P + (size_t)c * ps;
        const double complex *Sc = op->slab + (size_t)c * cs;
        for (size_t a = 0; a < n[0]; a++) {
            double complex *row = Pc + a * rowlen;
            for (size_t b = 0; b < n[1]; b++) {
                copy_run(row + b * zb, Sc + (a * n[1] + b) * pz + c0, nt);
            }
            memset(row + n[1] * zb, 0, (p[1] - n[1]) * zb * sizeof *row);
        }
        memset(Pc + n[0] * rowlen, 0, (p[0] - n[0]) * rowlen * sizeof *Pc);
    }
    fftw_complex *f = (fftw_complex *)P;
    fftw_execute_dft(op->fy[rem], f, f);
    fftw_execute_dft(op->fx[rem], f, f);
    op->product(op, P, c0, nt);
    fftw_execute_dft(op->bx[rem], f, f);
    fftw_execute_dft(op->by[rem], f, f);
    for (int c = 0; c < 3; c++) {
        const double complex *Pc = P + (size_t)c * ps;
        double complex *Sc = op->slab + (size_t)c * cs;
        for (size_t a = 0; a < n[0]; a++)
            for (size_t b = 0; b < n[1]; b++)
                copy_run(Sc + (a * n[1] + b) * pz + c0, Pc + a * rowlen + b * zb, nt);
    }
}

/* Computes the slab <- G x (components at pos[]). */
static void convolve(dpz_fftop *op, const double complex *x)
{
    size_t cs = op->cs, n = op->n_occ;
    double complex *s0 = op->slab, *s1 = op->slab + cs, *s2 = op->slab + 2 * cs;
    const size_t *pos = op->pos;
    long ns = (long)(3 * cs);
    double complex *slab = op->slab;
#pragma omp parallel num_threads(op->threads)
    {
#pragma omp for schedule(static)
        for (long q = 0; q < ns; q++)
            slab[q] = 0.0;
#pragma omp for schedule(static)
        for (long v = 0; v < (long)n; v++) {
            s0[pos[v]] = x[3 * v];
            s1[pos[v]] = x[3 * v + 1];
            s2[pos[v]] = x[3 * v + 2];
        }
    }
    pass_z(op, op->fz);
    size_t pz = op->p[2], zb = op->zb;
    long nfull = (long)(pz / zb);
#pragma omp parallel num_threads(op->threads)
    {
        double complex *P = op->plane + (size_t)omp_get_thread_num() * op->pt;
#pragma omp for schedule(static)
        for (long blk = 0; blk < nfull; blk++)
            plane_block(op, P, (size_t)blk * zb, zb, 0);
    }
    if (op->zb_rem)
        plane_block(op, op->plane, (size_t)nfull * zb, op->zb_rem, 1);
    pass_z(op, op->bz);
}

dpz_status dpz_fftop_apply(dpz_fftop *op, const double complex *x, double complex *y,
                           dpz_err *err)
{
    if (!op || !x || !y)
        return dpz_err_set(err, DPZ_EINVAL, "FFT operator: NULL argument");
    convolve(op, x);
    size_t cs = op->cs;
    const double complex *s0 = op->slab, *s1 = op->slab + cs, *s2 = op->slab + 2 * cs;
    const size_t *pos = op->pos;
    const double complex *ia = op->inv_alpha;
#pragma omp parallel for num_threads(op->threads) schedule(static)
    for (long v = 0; v < (long)op->n_occ; v++) {
        y[3 * v] = ia[v] * x[3 * v] - s0[pos[v]];
        y[3 * v + 1] = ia[v] * x[3 * v + 1] - s1[pos[v]];
        y[3 * v + 2] = ia[v] * x[3 * v + 2] - s2[pos[v]];
    }
    return DPZ_OK;
}

dpz_status dpz_fftop_apply_green(dpz_fftop *op, const double complex *x,
                                 double complex *y, dpz_err *err)
{
    if (!op || !x || !y)
        return dpz_err_set(err, DPZ_EINVAL, "FFT operator: NULL argument");
    convolve(op, x);
    size_t cs = op->cs;
    const double complex *s0 = op->slab, *s1 = op->slab + cs, *s2 = op->slab + 2 * cs;
    const size_t *pos = op->pos;
#pragma omp parallel for num_threads(op->threads) schedule(static)
    for (long v = 0; v < (long)op->n_occ; v++) {
        y[3 * v] = s0[pos[v]];
        y[3 * v + 1] = s1[pos[v]];
        y[3 * v + 2] = s2[pos[v]];
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
