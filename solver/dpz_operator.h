/* dpz_operator.h: the discrete-dipole interaction operator A = alpha^-1 - G.
 *
 * The coupled-dipole system (Purcell & Pennypacker 1973; Draine 1988) is
 *     alpha_j^-1 p~_j - sum_{l != j} G(r_j - r_l) p~_l = E_inc(r_j).
 * Vectors are compact over the occupied voxels of a grid, in the order of grid->occ,
 * three Cartesian components per voxel: x[3 * v + c], c = 0, 1, 2 for x, y, z.
 * p~ in V m^2, E in V/m, A in m^-3. The matrix is complex symmetric (A^T = A).
 *
 * Two implementations share one kernel (dpz_green_kernel): the FFT operator (plan once,
 * apply many) for production, and the dense operator (explicit 3N x 3N matrix, LAPACKE)
 * as ground truth for tests and for tiny problems. */
#ifndef DPZ_SOLVER_OPERATOR_H
#define DPZ_SOLVER_OPERATOR_H

#include <complex.h>
#include <stddef.h>

#include "dpz_common.h"
#include "dpz_dipole.h"
#include "dpz_grid.h"

#ifdef __cplusplus
extern "C" {
#endif

/* A linear operator as seen by the iterative solvers. `diag`, when not NULL, holds the
 * n diagonal entries (for the Jacobi preconditioner). */
typedef struct dpz_linop {
    size_t n;
    void *ctx;
    dpz_status (*apply)(void *ctx, const double complex *x, double complex *y, dpz_err *err);
    const double complex *diag;
} dpz_linop;

/* FFTW planner effort. */
typedef enum { DPZ_PLAN_ESTIMATE = 0, DPZ_PLAN_MEASURE = 1, DPZ_PLAN_PATIENT = 2 } dpz_plan;

/* Instruction set of the FFT operator's 3x3 kernel product. AUTO uses AVX2 with FMA
 * where the CPU has them (results then differ from GENERIC in the last bits: FMA rounds
 * once); GENERIC forces the portable code (tests compare the two). */
typedef enum { DPZ_SIMD_AUTO = 0, DPZ_SIMD_GENERIC = 1 } dpz_simd;

typedef struct dpz_op_opts {
    int threads;   /* FFTW and OpenMP threads; <= 0 means 1 */
    dpz_plan plan; /* planner effort */
    dpz_simd simd; /* kernel product instruction set (zero-initialised: AUTO) */
} dpz_op_opts;

/* ---- FFT operator ------------------------------------------------------------------ */
typedef struct dpz_fftop dpz_fftop;

/* Bytes the FFT operator for this grid will allocate with one thread (kernel transform
 * on the frequency octant, the z-transformed slab of 3 nx ny pz points, one plane buffer,
 * per-voxel data), computed before anything is allocated. */
size_t dpz_fftop_memory_need(const dpz_grid *grid);
/* The same for `threads` threads (each thread has its own plane buffer). */
size_t dpz_fftop_memory_need_threads(const dpz_grid *grid, int threads);

/* Builds the operator for host wavenumber k (1/m; k = 0 gives the static kernel) and the
 * given prescription: the six Green-tensor components over all lattice offsets, embedded in
 * a zero-padded FFT-friendly grid of at least 2n-1 points per axis, transformed once.
 * `inv_alpha` holds 1/alpha (m^-3) per occupied voxel, n_occ entries, copied.
 * Borrows `grid` (it must outlive the operator). Plans from the calling thread.
 * Statuses: DPZ_EINVAL (empty grid, bad k), DPZ_ENOMEM, DPZ_EFFTW. */
dpz_status dpz_fftop_create(dpz_fftop **out, const dpz_grid *grid, double k,
                            dpz_dipole_model model, const double complex *inv_alpha,
                            const dpz_op_opts *opts, dpz_err *err);
void dpz_fftop_destroy(dpz_fftop *op); /* NULL is a no-op */

/* "avx2-fma" or "generic": the kernel product this operator uses. */
const char *dpz_fftop_product_name(const dpz_fftop *op);

/* Replaces the diagonal 1/alpha (n_occ entries, copied) without recomputing the kernel. */
dpz_status dpz_fftop_set_diag(dpz_fftop *op, const double complex *inv_alpha, dpz_err *err);

/* y = A x (both 3 * n_occ long, must not alias). No allocation, no planning; uses scratch
 * owned by the operator, so one apply at a time per operator. */
dpz_status dpz_fftop_apply(dpz_fftop *op, const double complex *x, double complex *y,
                           dpz_err *err);

/* y = G x only (the off-diagonal interaction, without the alpha^-1 term). */
dpz_status dpz_fftop_apply_green(dpz_fftop *op, const double complex *x, double complex *y,
                                 dpz_err *err);

/* The operator as a dpz_linop (borrowing op). */
dpz_linop dpz_fftop_linop(dpz_fftop *op);

/* Padded FFT grid size actually used, per axis. */
void dpz_fftop_padded_dims(const dpz_fftop *op, size_t dims[3]);

/* ---- dense reference operator ---------------------------------------------------------- */
typedef struct dpz_denseop dpz_denseop;

/* Builds the explicit 3N x 3N matrix (column-major, N = n_occ) from the same kernel and
 * diagonal as the FFT operator. Refuses (DPZ_ELIMIT) above `max_dipoles` (0: 4000). */
dpz_status dpz_denseop_create(dpz_denseop **out, const dpz_grid *grid, double k,
                              dpz_dipole_model model, const double complex *inv_alpha,
                              size_t max_dipoles, dpz_err *err);
void dpz_denseop_destroy(dpz_denseop *op);
dpz_status dpz_denseop_apply(dpz_denseop *op, const double complex *x, double complex *y,
                             dpz_err *err);
/* Read-only view of the matrix, column-major, leading dimension 3N. */
const double complex *dpz_denseop_matrix(const dpz_denseop *op, size_t *n);
/* Solves A X = B for `nrhs` right-hand sides stored one after another (each 3N long),
 * overwriting B with X (LAPACKE zgesv on a copy of the matrix). */
dpz_status dpz_denseop_solve(dpz_denseop *op, double complex *b, size_t nrhs, dpz_err *err);
dpz_linop dpz_denseop_linop(dpz_denseop *op);

/* ---- per-voxel diagonal from materials ----------------------------------------------- */
/* Fills inv_alpha[v] (m^-3) for every occupied voxel v from eps_label[label] (relative to
 * vacuum), the host index n_h (eps_rel = eps / n_h^2), k (1/m), the model and the grid's
 * spacing. DPZ_EINVAL if an occupied label has a non-finite permittivity, or one equal to
 * the host's (alpha would vanish and 1/alpha be infinite); the message names the label.
 * When grid->fill is set, a voxel of fill fraction f < 1 gets the Maxwell Garnett
 * effective permittivity of the material mixed with the host (its Clausius-Mossotti
 * polarizability is f times the full voxel's; see operator.c); a fraction outside (0, 1]
 * on an occupied voxel gives DPZ_EINVAL. */
dpz_status dpz_operator_inv_alpha(const dpz_grid *grid, const double complex eps_label[256],
                                  double host_index, double k, dpz_dipole_model model,
                                  double complex *inv_alpha, dpz_err *err);

#ifdef __cplusplus
}
#endif
#endif
