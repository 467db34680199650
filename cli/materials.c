/* materials.c: --eps / --material / --host-index into one material per grid label, with
 * every consistency check done before any computation (a label without a material, a
 * material for an absent label, non-finite values, wavelengths outside a table). */
#include "cli_int.h"

#include <math.h>
#include <string.h>

static int make_material(const cli_args *a, const char *opt, const char *text,
                         int has_label, dpz_matspec *spec, dpz_material **mat)
{
    dpz_err e;
    if (dpz_units_material(opt, text, has_label, spec, &e) != DPZ_OK)
        return cli_fail_err(a->cmd->name, &e);
    dpz_status s;
    switch (spec->kind) {
    case DPZ_MATSPEC_CONST:
        s = dpz_material_create_const(mat, spec->eps, &e);
        break;
    case DPZ_MATSPEC_TABLE:
        s = dpz_material_create_table_file(mat, spec->path, &e);
        break;
    default:
        s = dpz_material_create_drude(mat, &spec->drude, &e);
        break;
    }
    if (s != DPZ_OK) {
        char what[128];
        snprintf(what, sizeof what, "%s %s", a->cmd->name, opt);
        return cli_fail_err(what, &e);
    }
    return CLI_OK;
}

int cli_materials_load(const cli_args *a, const dpz_grid *grid, cli_materials *m)
{
    memset(m, 0, sizeof *m);
    m->host_index = 1.0;
    m->lo_m = 0.0;
    m->hi_m = INFINITY;
    int rc, given;
    if ((rc = cli_opt_real(a, "--host-index", &m->host_index, &given)) != CLI_OK)
        return rc;
    if (!(m->host_index > 0.0))
        return cli_fail(
            "%s: --host-index %s: the host index must be a positive real number",
            a->cmd->name, cli_get(a, "--host-index"));
    size_t counts[256];
    dpz_grid_label_counts(grid, counts);
    const char *eps = cli_get(a, "--eps");
    size_t nmat = cli_count(a, "--material");
    if (eps && nmat)
        return cli_fail(
            "%s: give either --eps (every label) or --material LABEL=SPEC, not "
            "both",
            a->cmd->name);
    if (!eps && !nmat)
        return cli_fail(
            "%s: no material: give --eps SPEC (e.g. --eps 2.25) or --material "
            "LABEL=SPEC for each label",
            a->cmd->name);
    dpz_matspec spec;
    if (eps) {
        dpz_material *mat = NULL;
        if ((rc = make_material(a, "--eps", eps, 0, &spec, &mat)) != CLI_OK)
            return rc;
        int first = 1;
        for (int l = 1; l < 256; l++) {
            if (!counts[l])
                continue;
            m->mat[l] = mat;
            m->shared[l] = !first;
            first = 0;
        }
        if (first)
            dpz_material_destroy(mat); /* empty grid: caught by the caller */
    } else {
        for (size_t i = 0; i < nmat; i++) {
            dpz_material *mat = NULL;
            if ((rc = make_material(a, "--material", cli_value_at(a, "--material", i), 1,
                                    &spec, &mat)) != CLI_OK) {
                cli_materials_free(m);
                return rc;
            }
            unsigned l = spec.label;
            if (m->mat[l]) {
                dpz_material_destroy(mat);
                cli_materials_free(m);
                return cli_fail("%s: --material: label %u is given twice", a->cmd->name,
                                l);
            }
            if (!counts[l]) {
                dpz_material_destroy(mat);
                cli_materials_free(m);
                return cli_fail("%s: --material %s: the grid has no voxel with label %u",
                                a->cmd->name, cli_value_at(a, "--material", i), l);
            }
            m->mat[l] = mat;
        }
        for (int l = 1; l < 256; l++)
            if (counts[l] && !m->mat[l]) {
                cli_materials_free(m);
                return cli_fail(
                    "%s: label %d (%zu voxels) has no material; add --material "
                    "%d=SPEC",
                    a->cmd->name, l, counts[l], l);
            }
    }
    for (int l = 1; l < 256; l++) {
        if (!m->mat[l])
            continue;
        double lo, hi;
        dpz_material_range(m->mat[l], &lo, &hi);
        if (lo > m->lo_m)
            m->lo_m = lo;
        if (hi < m->hi_m)
            m->hi_m = hi;
        dpz_material_describe(m->mat[l], m->describe[l], sizeof m->describe[l]);
        if (strncmp(m->describe[l], "const", 5) != 0)
            m->dispersive = 1;
    }
    return CLI_OK;
}

void cli_materials_free(cli_materials *m)
{
    for (int l = 1; l < 256; l++) {
        if (m->mat[l] && !m->shared[l])
            dpz_material_destroy(m->mat[l]);
        m->mat[l] = NULL;
    }
}

int cli_materials_eval(cli_materials *m, const dpz_grid *grid, double lambda0_m,
                       double complex eps_label[256])
{
    (void)grid;
    for (int l = 0; l < 256; l++)
        eps_label[l] = 1.0;
    for (int l = 1; l < 256; l++) {
        if (!m->mat[l])
            continue;
        dpz_err e;
        if (dpz_material_eps(m->mat[l], lambda0_m, &eps_label[l], &e) != DPZ_OK) {
            char what[256];
            snprintf(what, sizeof what, "label %d (%s)", l, m->describe[l]);
            return cli_fail_err(what, &e);
        }
        if (!isfinite(creal(eps_label[l])) || !isfinite(cimag(eps_label[l])))
            return cli_fail("label %d: the permittivity at %.6g m is not finite", l,
                            lambda0_m);
        /* exp(-i omega t): absorption is Im eps > 0, so Im eps < 0 describes gain. Legal
         * input (the solve is still defined), but rarely intended: say so once. */
        if (cimag(eps_label[l]) < 0.0 && !m->gain_warned[l]) {
            fprintf(
                stderr,
                "dipolize: note: label %d has Im(eps) < 0 (gain under the exp(-i omega "
                "t) convention used here; absorbing materials have Im(eps) > 0)\n",
                l);
            m->gain_warned[l] = 1;
        }
    }
    return CLI_OK;
}

cJSON *cli_materials_json(const cli_materials *m, const dpz_grid *grid)
{
    (void)grid;
    cJSON *arr = cJSON_CreateArray();
    for (int l = 1; arr && l < 256; l++) {
        if (!m->mat[l])
            continue;
        cJSON *o = cJSON_CreateObject();
        cli_json_add_number(o, "label", l);
        cJSON_AddStringToObject(o, "spec", m->describe[l]);
        cJSON_AddItemToArray(arr, o);
    }
    return arr;
}
