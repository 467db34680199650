/* solver_int.h: declarations shared by the files of solver/ only. */
#ifndef DPZ_SOLVER_SOLVER_INT_H
#define DPZ_SOLVER_SOLVER_INT_H

#include <complex.h>
#include <stddef.h>

#include "dpz_common.h"
#include "dpz_dipole.h"
#include "dpz_grid.h"

/* pi to double precision (M_PI is not part of strict C17). */
#define DPZ_SOLVER_PI 3.14159265358979323846

/* Offsets with max(|i|, |j|, |l|) <= DPZ_IGT_NEAR use the cube-averaged Green tensor in
 * the igt prescription; farther ones the point value. */
#define DPZ_IGT_NEAR 3

/* Cube-averaged Green tensor for all offsets 0 <= i, j, l <= DPZ_IGT_NEAR (the other
 * octants follow by reflection symmetry), computed once per (k, d) so that operator
 * construction does not repeat the quadrature per offset. */
typedef struct dpz__igt_table {
    double k, d;
    /* g[((i * (N + 1) + j) * (N + 1) + l) * 6 + c], N = DPZ_IGT_NEAR, order xx xy xz yy
     * yz zz, m^-3; entry (0, 0, 0) is unused (zero). */
    double complex g[(DPZ_IGT_NEAR + 1) * (DPZ_IGT_NEAR + 1) * (DPZ_IGT_NEAR + 1) * 6];
} dpz__igt_table;

/* Fills the table for (k, d). */
void dpz__igt_table_fill(dpz__igt_table *tab, double k, double d);

/* Cube average (1/d^3) int_{cube centred at (i,j,l) d} G(-r') dV' evaluated with
 * `sub` x `sub` x `sub` sub-cubes and an `order`-point Gauss-Legendre rule per axis
 * (order <= 32). Exposed for the quadrature convergence test. */
void dpz__igt_average(double k, double d, long i, long j, long l, int sub, int order,
                      double complex g[6]);

/* Self-term integral J = int_{cube of edge d, centred} e^{ikR}/R dV (m^2) by the
 * six-pyramid (Duffy) transform and an `order`-point Gauss-Legendre rule per axis. */
double complex dpz__igt_self_integral(double k, double d, int order);

/* Kernel of the given model at lattice offset (i, j, l) != 0, using `tab` (may be NULL,
 * then computed on the fly) for the igt near field. */
void dpz__kernel_tab(dpz_dipole_model model, double k, double d,
                     const dpz__igt_table *tab, long i, long j, long l,
                     double complex g[6]);

/* Runs fftw_init_threads once per process (fftop.c); 0 on success, -1 on failure. Call
 * before planning and before importing wisdom. */
int dpz__fftw_threads_init(void);

#endif
