/* operator.c: the per-voxel diagonal 1/alpha of the discrete-dipole operator, with the
 * boundary treatment of partly filled voxels. */
#include "dpz_operator.h"

#include <math.h>

/* A voxel only the fraction f of which lies inside the material is given the effective
 * permittivity of a Maxwell Garnett mixture of the material (volume fraction f) in the
 * host (Maxwell Garnett, Phil. Trans. R. Soc. A 203, 385 (1904); Bohren & Huffman 1983,
 * sec. 8.5, with the host as matrix):
 *     (eps_eff - 1)/(eps_eff + 2) = f (eps - 1)/(eps + 2)    (host-relative),
 * so that its Clausius-Mossotti polarizability 3 d^3 (eps_eff - 1)/(eps_eff + 2) is the
 * full voxel's one weighted by the filled volume. The prescription's corrections beyond
 * Clausius-Mossotti (radiative reaction, lattice dispersion, integrated Green tensor) are
 * then applied to eps_eff. For cm-rr and igt these corrections do not depend on the
 * permittivity, so 1/alpha(eps_eff) = 1/alpha(eps) + [1/alpha_CM(eps_eff) -
 * 1/alpha_CM(eps)], which avoids recomputing the igt self integral per voxel. */
static double complex partial_inv_alpha(dpz_dipole_model model, double complex er,
                                        double f, double k, double d,
                                        double complex inv_full)
{
    double complex beta = (er - 1.0) / (er + 2.0);
    if (model == DPZ_DIPOLE_LDR)
        return dpz_dipole_inv_alpha(model, (1.0 + 2.0 * f * beta) / (1.0 - f * beta), k,
                                    d);
    double d3 = d * d * d;
    return inv_full + 1.0 / (3.0 * d3 * f * beta) - 1.0 / (3.0 * d3 * beta);
}

dpz_status dpz_operator_inv_alpha(const dpz_grid *grid,
                                  const double complex eps_label[256], double host_index,
                                  double k, dpz_dipole_model model,
                                  double complex *inv_alpha, dpz_err *err)
{
    if (!grid || !eps_label || !inv_alpha)
        return dpz_err_set(err, DPZ_EINVAL, "operator: NULL argument");
    if (!(host_index > 0.0) || !isfinite(host_index))
        return dpz_err_set(err, DPZ_EINVAL, "operator: host index %g must be positive",
                           host_index);
    if (!(k >= 0.0) || !isfinite(k))
        return dpz_err_set(err, DPZ_EINVAL, "operator: wavenumber %g 1/m must be >= 0",
                           k);
    /* One value per label, so the (igt) self integral is computed once per material. */
    double complex per_label[256];
    unsigned char seen[256] = {0};
    double eh = host_index * host_index;
    for (size_t v = 0; v < grid->n_occ; v++) {
        unsigned lab = grid->label[grid->occ[v]];
        if (!seen[lab]) {
            double complex eps = eps_label[lab];
            if (!isfinite(creal(eps)) || !isfinite(cimag(eps)))
                return dpz_err_set(err, DPZ_EINVAL,
                                   "operator: label %u has a non-finite permittivity",
                                   lab);
            /* Permittivity relative to the host (Bohren & Huffman 1983, sec. 4.4). */
            double complex er = eps / eh;
            if (er == 1.0)
                return dpz_err_set(
                    err, DPZ_EINVAL,
                    "operator: label %u has the host's permittivity %g%+gi "
                    "(zero polarizability)",
                    lab, creal(eps), cimag(eps));
            per_label[lab] = dpz_dipole_inv_alpha(model, er, k, grid->d);
            /* eps_rel = -2 is the Clausius-Mossotti pole of a cubic voxel (alpha_CM =
             * 3 d^3 (eps-1)/(eps+2), Purcell & Pennypacker 1973): in the static problem
             * (k = 0) nothing regularizes it, and the system is singular. */
            if (per_label[lab] == 0.0)
                return dpz_err_set(
                    err, DPZ_EINVAL,
                    "operator: label %u: permittivity %g%+gi is -2 times the host's, the "
                    "pole of the Clausius-Mossotti voxel polarizability (infinite "
                    "polarizability, singular static system)",
                    lab, creal(eps), cimag(eps));
            seen[lab] = 1;
        }
        inv_alpha[v] = per_label[lab];
        if (grid->fill) {
            double f = grid->fill[grid->occ[v]];
            if (!(f > 0.0) || !(f <= 1.0))
                return dpz_err_set(
                    err, DPZ_EINVAL,
                    "operator: voxel %zu has fill fraction %g outside (0, 1]",
                    grid->occ[v], f);
            if (f < 1.0)
                inv_alpha[v] = partial_inv_alpha(model, eps_label[lab] / eh, f, k,
                                                 grid->d, per_label[lab]);
        }
    }
    return DPZ_OK;
}
