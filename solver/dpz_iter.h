/* dpz_iter.h: Krylov solvers for the complex-symmetric discrete-dipole system.
 *
 * Shape (create, set, iterate while DPZ_CONTINUE, read): the iteration object owns its
 * work vectors; `dpz_solve` is a thin loop over it with no printing. A solve that does not
 * reach the tolerance returns DPZ_ENOCONV (or DPZ_EBREAKDOWN / DPZ_ESTAGNATION) and its
 * iterate, iteration count and residual history stay readable: callers must never report
 * such an iterate as a result. */
#ifndef DPZ_SOLVER_ITER_H
#define DPZ_SOLVER_ITER_H

#include <complex.h>
#include <stddef.h>

#include "dpz_common.h"
#include "dpz_operator.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef enum {
    DPZ_SOLVER_BICGSTAB = 0, /* van der Vorst 1992 */
    DPZ_SOLVER_COCG = 1,     /* conjugate orthogonal CG, van der Vorst & Melissen 1990:
                                exploits A^T = A; robust for metals near resonance */
    DPZ_SOLVER_GMRES = 2     /* restarted GMRES(m), Saad & Schultz 1986 */
} dpz_solver_kind;

/* "bicgstab", "cocg", "gmres". */
const char *dpz_solver_name(dpz_solver_kind kind);
dpz_status dpz_solver_parse(const char *name, dpz_solver_kind *kind, dpz_err *err);

typedef struct dpz_solve_opts {
    dpz_solver_kind kind;
    double tol;          /* stop when ||b - A x|| / ||b|| <= tol (default 1e-8) */
    size_t max_iter;     /* iteration limit (default 10000) */
    size_t restart;      /* GMRES restart length (default 30) */
    int jacobi;          /* nonzero: Jacobi (diagonal) preconditioning when A->diag set */
    size_t stagnation_window; /* stop as stagnated when the residual has not fallen by
                                 10% over this many iterations (default 1000; 0 = off) */
} dpz_solve_opts;

/* Defaults as documented above, with kind BiCGSTAB and Jacobi on. */
dpz_solve_opts dpz_solve_opts_default(void);

typedef struct dpz_solve_info {
    dpz_status status;   /* DPZ_OK, DPZ_ENOCONV, DPZ_EBREAKDOWN, DPZ_ESTAGNATION, ... */
    size_t iterations;   /* iterations performed */
    size_t applies;      /* operator applications */
    double residual;     /* final true relative residual ||b - A x|| / ||b|| */
    double *history;     /* relative residual after each iteration (owned by the caller
                            of dpz_solve when non-NULL: free with dpz_solve_info_free) */
    size_t n_history;
} dpz_solve_info;

void dpz_solve_info_free(dpz_solve_info *info);

typedef struct dpz_iter dpz_iter;

dpz_status dpz_iter_create(dpz_iter **out, size_t n, const dpz_solve_opts *opts,
                           dpz_err *err);
void dpz_iter_destroy(dpz_iter *it);
/* Starts a solve of A x = b from x0 (NULL: zero), rescaled by the factor g minimizing
 * ||b - g A x0|| (so a guess never starts worse than a zero guess; costs no extra
 * operator application). Borrows A (and its diagonal) and b until the next set.
 * Returns DPZ_OK once set up (the next dpz_iter_step returns DPZ_OK at once when x0
 * already meets the tolerance or b = 0, which gives x = 0); DPZ_EINVAL for an operator of
 * another order, a non-finite b or x0, or a zero diagonal entry with Jacobi on. A set
 * object can be set again for the next right-hand side (its vectors are reused). */
dpz_status dpz_iter_set(dpz_iter *it, const dpz_linop *A, const double complex *b,
                        const double complex *x0, dpz_err *err);
/* One iteration: DPZ_CONTINUE while not done, DPZ_OK when converged, an error status
 * (DPZ_ENOCONV at max_iter, DPZ_EBREAKDOWN, DPZ_ESTAGNATION, operator errors) otherwise.
 * Convergence is declared only after the true residual ||b - A x|| / ||b||, recomputed
 * with one extra operator application, meets the tolerance; a recurrence residual below
 * it that the true residual contradicts restarts the recurrence instead. */
dpz_status dpz_iter_step(dpz_iter *it, dpz_err *err);
const double complex *dpz_iter_solution(const dpz_iter *it);
double dpz_iter_residual(const dpz_iter *it);
size_t dpz_iter_iterations(const dpz_iter *it);

/* Solves A x = b; x holds the initial guess on entry (zeros for none) and the iterate on
 * return. Fills `info` (history allocated; free with dpz_solve_info_free). Returns
 * info->status. */
dpz_status dpz_solve(const dpz_linop *A, const double complex *b, double complex *x,
                     const dpz_solve_opts *opts, dpz_solve_info *info, dpz_err *err);

#ifdef __cplusplus
}
#endif
#endif
