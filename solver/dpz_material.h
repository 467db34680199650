/* dpz_material.h: material permittivities as functions of the vacuum wavelength.
 *
 * All permittivities here are the material's own, relative to vacuum (the solver divides by
 * the host's n_h^2 where it needs eps relative to the host). Time dependence exp(-i omega t),
 * so absorbing materials have Im(eps) >= 0. */
#ifndef DPZ_SOLVER_MATERIAL_H
#define DPZ_SOLVER_MATERIAL_H

#include <complex.h>
#include <stddef.h>

#include "dpz_common.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct dpz_material dpz_material;

/* One Lorentz oscillator: strength (dimensionless), resonance and damping energies, eV. */
typedef struct dpz_lorentz_term {
    double strength;
    double energy_ev;
    double damping_ev;
} dpz_lorentz_term;

#define DPZ_MAX_LORENTZ 16

/* Drude-Lorentz model (energies in eV, E = h c / lambda0):
 *   eps(E) = eps_inf - Ep^2 / (E (E + i gamma))
 *            + sum_j f_j E_j^2 / (E_j^2 - E^2 - i Gamma_j E)
 * (e.g. Rakic et al., Appl. Opt. 37, 5271 (1998), eq. 3, written for exp(-i omega t)). */
typedef struct dpz_drude_params {
    double eps_inf;
    double plasma_ev;   /* Ep = hbar omega_p, eV (>= 0) */
    double damping_ev;  /* gamma = hbar / tau, eV (>= 0) */
    size_t n_lorentz;
    dpz_lorentz_term lorentz[DPZ_MAX_LORENTZ];
} dpz_drude_params;

/* A wavelength-independent complex permittivity (finite). */
dpz_status dpz_material_create_const(dpz_material **out, double complex eps, dpz_err *err);

/* Drude-Lorentz model; negative damping, negative energies or non-finite values are
 * refused with DPZ_EINVAL. The params are copied. */
dpz_status dpz_material_create_drude(dpz_material **out, const dpz_drude_params *params,
                                     dpz_err *err);

/* Tabulated data from CSV text. The first non-comment line is a header naming the columns:
 * a wavelength column `wavelength_nm`, `wavelength_um` or `wavelength_m` and either `n,k`
 * or `eps_re,eps_im`. Lines starting with '#' are comments. Wavelengths strictly
 * increasing; values finite; k >= 0 and eps_im >= 0. `name` (a path, used in messages)
 * is copied. Linear interpolation in wavelength of n,k (or of eps_re, eps_im). */
dpz_status dpz_material_create_table(dpz_material **out, const char *buf, size_t len,
                                     const char *name, dpz_err *err);
dpz_status dpz_material_create_table_file(dpz_material **out, const char *path,
                                          dpz_err *err);

void dpz_material_destroy(dpz_material *mat); /* NULL is a no-op */

/* Permittivity (relative to vacuum) at vacuum wavelength lambda0_m (metres, > 0).
 * DPZ_ERANGE for a wavelength outside a table's range (no extrapolation) and for a
 * permittivity that overflows (finite parameters, e.g. n = 1e200, whose square is not). */
dpz_status dpz_material_eps(const dpz_material *mat, double lambda0_m, double complex *eps,
                            dpz_err *err);

/* Wavelength range where the material is defined, m (0 and +inf for models). */
void dpz_material_range(const dpz_material *mat, double *lo_m, double *hi_m);

/* A short description for summaries, e.g. "const 2.25+0i", "table n,k (12 rows) FILE",
 * "drude eps_inf=..."; written into buf (always NUL-terminated). */
void dpz_material_describe(const dpz_material *mat, char *buf, size_t len);

#ifdef __cplusplus
}
#endif
#endif
