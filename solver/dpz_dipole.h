/* dpz_dipole.h: voxel polarizability prescriptions and the lattice interaction kernel.
 *
 * Units: SI; polarizabilities in m^3 (the Gaussian polarizabilities of Purcell &
 * Pennypacker 1973 and Draine 1988 times 4 pi), so that p~ = p / (eps0 eps_h) = alpha E;
 * eps_rel is the permittivity relative to the host; k = 2 pi n_h / lambda0 is the
 * wavenumber in the host, 1/m; d is the voxel edge, m. */
#ifndef DPZ_SOLVER_DIPOLE_H
#define DPZ_SOLVER_DIPOLE_H

#include <complex.h>

#include "dpz_common.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef enum {
    DPZ_DIPOLE_CMRR = 0, /* Clausius-Mossotti + radiative reaction (Draine 1988) */
    DPZ_DIPOLE_LDR = 1,  /* lattice dispersion relation, orientation averaged
                            (Draine & Goodman 1993) */
    DPZ_DIPOLE_IGT = 2   /* integrated Green tensor over each cubic voxel */
} dpz_dipole_model;

/* "cm-rr", "ldr", "igt". */
const char *dpz_dipole_name(dpz_dipole_model model);
/* Parses a name as above; DPZ_EINVAL naming the choices otherwise. */
dpz_status dpz_dipole_parse(const char *name, dpz_dipole_model *model, dpz_err *err);

/* Inverse voxel polarizability 1/alpha, m^-3, for permittivity eps_rel (relative to the
 * host), host wavenumber k (1/m, k = 0 gives the static Clausius-Mossotti value for every
 * model) and spacing d (m). Independent of the incident field. */
double complex dpz_dipole_inv_alpha(dpz_dipole_model model, double complex eps_rel,
                                    double k, double d);

/* |m| k d with m = sqrt(eps_rel): the phase change across one voxel inside the material.
 * Discrete-dipole results degrade when it exceeds about 1 (fewer than about ten dipoles per
 * wavelength in the material; common practice, e.g. Draine & Flatau, JOSA A 11, 1491
 * (1994)); callers warn above DPZ_DIPOLE_MKD_LIMIT. k in 1/m, d in m. */
#define DPZ_DIPOLE_MKD_LIMIT 1.0
double dpz_dipole_mkd(double complex eps_rel, double k, double d);

/* Green tensor G(R) of an electric dipole (Jackson, Classical Electrodynamics, 3rd ed.,
 * eq. 9.18, number from memory; in SI volume units: E = G p~), R in metres, k in 1/m; the
 * six independent components in the order xx, xy, xz, yy, yz, zz, units m^-3. R must not
 * be zero. k = 0 gives the static tensor (3 RR - I)/(4 pi R^3). */
void dpz_green_eval(double k, const double R[3], double complex g[6]);

/* The interaction kernel between two voxels whose lattice offset is (i, j, l) (integers,
 * not all zero) for the given model, same order and units as dpz_green_eval: the point
 * Green tensor for cm-rr and ldr; for igt the Green tensor averaged over the source voxel
 * near the origin and the point value far away. Both the FFT and the dense operator take
 * their matrix elements from this one function. For igt, offsets with
 * max(|i|, |j|, |l|) <= 3 use a 2x2x2 sub-cube, 10-point-per-axis Gauss-Legendre rule
 * (8000 Green evaluations, error below 1e-10 relative); the operators compute those once
 * per (k, d) and cache them, so call this directly only for single elements. */
void dpz_green_kernel(dpz_dipole_model model, double k, double d, long i, long j, long l,
                      double complex g[6]);

#ifdef __cplusplus
}
#endif
#endif
