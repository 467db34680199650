/* operator.c: the per-voxel diagonal 1/alpha of the discrete-dipole operator. */
#include "dpz_operator.h"

#include <math.h>

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
            seen[lab] = 1;
        }
        inv_alpha[v] = per_label[lab];
    }
    return DPZ_OK;
}
