/* cmd_solve.c: the computing commands `static`, `tensor` and `expand`: load the grid and
 * the materials, check everything, call the extraction layer (dpz_extract.h), then print
 * a readable table or one JSON object. A solve that does not converge is still reported
 * (marked converged = false) and gives exit code 1. */
#include "cli_int.h"
#include "cli_limits.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "dpz_post.h"

/* Verdict thresholds. The dipole-validity ratio ||[T2;T3]|| / ||T11|| measures how much
 * of the response to order-1 waves leaks into quadrupole and octupole waves: a few
 * percent is the usual working limit of point-dipole lattice models (common practice). */
#define VALID_GOOD 0.05
#define VALID_FAIR 0.20
/* Reciprocity (a_ee = a_ee^T, a_mm = a_mm^T, a_em = -a_me^T, from the reaction theorem:
 * Rumsey, Phys. Rev. 94, 1483 (1954)) holds for the exact coupled-dipole solution because
 * the system matrix is complex symmetric, so it is judged against the solver tolerance
 * with a safety factor. */
#define RECIP_FACTOR 100.0
/* Energy balance of a lossless scatterer: T + T^H = -2 T^H T (unitarity of the scattering
 * matrix; Mishchenko, Travis & Lacis 2002, ch. 5). Truncated at multipole order 3 it is
 * ~1e-7 for particles of size parameter up to ~1; 1e-3 flags a real problem. */
#define ENERGY_OK 1e-3

/* Entries below this fraction of the largest one print as 0 in tables (the JSON keeps
 * every digit): far below any solver tolerance, so only rounding noise is hidden. */
#define TABLE_ZERO 1e-12

static double max_abs(const double complex *t, size_t n)
{
    double m = 0.0;
    for (size_t i = 0; i < n; i++)
        if (cabs(t[i]) > m)
            m = cabs(t[i]);
    return m;
}

/* A solve that did not converge leaves an iterate, not a result (dpz_iter.h): the
 * numbers derived from it are reported as NaN (null in JSON, nan in tables). */
static void fill_nan(double complex *v, size_t n)
{
    for (size_t i = 0; i < n; i++)
        v[i] = CMPLX(NAN, NAN);
}

static double now_s(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

#define REFINE_HELP                                                                      \
    "solve on N lattices (2..4: a recorded shape or mesh re-voxelized at d, d/1.5, "     \
    "d/2, "                                                                              \
    "d/2.5; a plain voxel set split into 1, 8, 27, 64 sub-voxels) and extrapolate "      \
    "linearly to zero spacing, with an error estimate (default: off)"

static const cli_opt tensor_opts[] = {
    {"--wavelength", "LEN", "vacuum wavelength (required), e.g. 600nm", 0},
    {"--origin", "X,Y,Z",
     "multipole origin, grid frame (default: centroid of the occupied voxel centres)", 0},
    {"--cross-sections", NULL,
     "also solve one plane wave (along +z, x-polarized) for extinction, absorption and "
     "scattering cross sections, full and dipole-model",
     0},
    {"--refine", "N", REFINE_HELP, 0},
    {NULL, NULL, NULL, 0},
};
static const cli_group tensor_group = {"Tensor", tensor_opts};

static const cli_opt static_opts[] = {
    {"--wavelength", "LEN",
     "vacuum wavelength at which dispersive materials (nk:, drude:) are evaluated "
     "(required for them, ignored otherwise)",
     0},
    {"--refine", "N", REFINE_HELP, 0},
    {NULL, NULL, NULL, 0},
};
static const cli_group static_group = {"Static", static_opts};

static const cli_opt expand_opts[] = {
    {"--size-parameters", "LIST",
     "comma list of x = k a_eq values (plain numbers in (0, 1]; default 8 values in "
     "0.05..0.4)",
     0},
    {"--wavelength", "LEN",
     "vacuum wavelength at which dispersive materials are evaluated (required for them)",
     0},
    {NULL, NULL, NULL, 0},
};
static const cli_group expand_group = {"Expansion", expand_opts};

/* Everything the three commands share. */
typedef struct job {
    dpz_grid *grid;
    cli_materials mat;
    int have_mat;
    dpz_setup setup;
} job;

static void job_free(job *j)
{
    if (j->have_mat)
        cli_materials_free(&j->mat);
    dpz_grid_destroy(j->grid);
}

static int job_prepare(const cli_args *a, job *j)
{
    memset(j, 0, sizeof *j);
    int rc = cli_load_geometry(a, a->pos[0], &j->grid, NULL, NULL);
    if (rc != CLI_OK)
        return rc;
    if ((rc = cli_materials_load(a, j->grid, &j->mat)) != CLI_OK)
        return rc;
    j->have_mat = 1;
    memset(&j->setup, 0, sizeof j->setup);
    if ((rc = cli_setup_options(a, &j->setup)) != CLI_OK)
        return rc;
    j->setup.grid = j->grid;
    j->setup.host_index = j->mat.host_index;
    return CLI_OK;
}

/* The lattices of a run: with --refine N, the N refined grids (cli_refine_build);
 * then the memory check against the finest grid the run will solve on. */
static int job_levels(const cli_args *a, job *j, cli_refine *ref, size_t *levels,
                      cli_work work)
{
    int rc = cli_refine_option(a, levels);
    if (rc == CLI_OK && *levels)
        rc = cli_refine_build(a, j->grid, *levels, ref);
    if (rc == CLI_OK)
        rc = cli_limits_check(a, *levels ? ref->grid[*levels - 1] : j->grid, &j->setup,
                              work);
    return rc;
}

/* Permittivities for the k = 0 and fixed-permittivity commands: at --wavelength when
 * given, else only constants are allowed. */
static int fixed_eps(const cli_args *a, job *j, double *lambda_used)
{
    int given = 0, rc;
    double lam = 0.0;
    if ((rc = cli_opt_length_pos(a, "--wavelength", &lam, 0, &given)) != CLI_OK)
        return rc;
    if (!given && j->mat.dispersive)
        return cli_fail("%s: a material depends on the wavelength (nk: or drude:); give "
                        "--wavelength LEN at which to evaluate it",
                        a->cmd->name);
    *lambda_used = given ? lam : 0.0;
    /* Constants ignore the wavelength; 1 m stands in for "any". */
    return cli_materials_eval(&j->mat, j->grid, given ? lam : 1.0, j->setup.eps_label);
}

static cJSON *rhs_json(const dpz_rhs_report *r, size_t n, int *all_ok)
{
    cJSON *o = cJSON_CreateObject();
    cJSON *it = cJSON_CreateArray(), *res = cJSON_CreateArray(),
          *st = cJSON_CreateArray();
    *all_ok = 1;
    for (size_t i = 0; i < n; i++) {
        cJSON_AddItemToArray(it, cli_json_number((double)r[i].iterations));
        cJSON_AddItemToArray(res, cli_json_number(r[i].residual));
        cJSON_AddItemToArray(st, cJSON_CreateString(dpz_status_name(r[i].status)));
        if (r[i].status != DPZ_OK)
            *all_ok = 0;
    }
    cJSON_AddItemToObject(o, "iterations", it);
    cJSON_AddItemToObject(o, "residuals", res);
    cJSON_AddItemToObject(o, "statuses", st);
    return o;
}

static void solver_table(const dpz_setup *s, const dpz_rhs_report *r, size_t n)
{
    size_t itmax = 0;
    double resmax = 0.0;
    int ok = 1;
    for (size_t i = 0; i < n; i++) {
        if (r[i].iterations > itmax)
            itmax = r[i].iterations;
        if (r[i].residual > resmax)
            resmax = r[i].residual;
        ok &= r[i].status == DPZ_OK;
    }
    printf("solver: %s, %s dipoles, tol %.1e: %zu solves, at most %zu iterations, "
           "residual <= %.2e%s\n",
           dpz_solver_name(s->solve.kind), dpz_dipole_name(s->model), s->solve.tol, n,
           itmax, resmax, ok ? "" : "  NOT CONVERGED");
}

static void grid_table(const dpz_grid *g, double host)
{
    printf(
        "grid: %zu voxels of %.4g m, volume V = %.6e m^3, a_eq = %.6e m, host n = %g\n",
        g->n_occ, g->d, dpz_grid_volume(g), dpz_grid_aeq(g), host);
}

/* ---- static
 * ------------------------------------------------------------------------------ */
static cJSON *error_tensor_json(const double complex *err)
{
    return cli_json_tensor3_flat(err);
}

/* The four 3x3 blocks of a 6x6 tensor (m^3) as {ee, em, me, mm}. */
static cJSON *blocks_json(const double complex *A)
{
    static const char *const name[4] = {"ee", "em", "me", "mm"};
    cJSON *o = cJSON_CreateObject();
    for (int b = 0; b < 4; b++)
        cJSON_AddItemToObject(o, name[b],
                              cli_json_block_flat(A, 3 * (b >> 1), 3 * (b & 1)));
    return o;
}

/* What a designer reads off the tensor besides its elements (extract/dpz_post.h):
 * principal values and axes of the Hermitian (reactive) parts of a_ee and a_mm, the
 * orientation averages tr(block)/3, the chirality pseudoscalar tr(a_em)/3 and the
 * bianisotropy measure. NULL when LAPACK fails (the caller then omits the object). */
static cJSON *post_json(double complex A[6][6])
{
    cJSON *o = cJSON_CreateObject();
    static const char *const which[2] = {"ee_hermitian", "mm_hermitian"};
    for (int b = 0; b < 2; b++) {
        double complex blk[3][3];
        for (int r = 0; r < 3; r++)
            for (int c = 0; c < 3; c++)
                blk[r][c] = A[3 * b + r][3 * b + c];
        double w[3];
        double complex ax[3][3];
        if (dpz_post_principal_herm(blk, w, ax, NULL) != DPZ_OK) {
            cJSON_Delete(o);
            return NULL;
        }
        cJSON *p = cJSON_CreateObject();
        cJSON_AddItemToObject(p, "values_m3", cli_json_doubles(w, 3));
        /* axes[i]: unit eigenvector of values_m3[i], grid frame, complex components
         * (real up to a phase for a symmetric block). */
        cJSON *axes = cJSON_CreateArray();
        for (int i = 0; i < 3; i++) {
            /* An eigenvector is fixed up to a phase: make its largest component real and
             * positive, so that real axes print as real vectors. */
            int big = 0;
            for (int c = 1; c < 3; c++)
                if (cabs(ax[c][i]) > cabs(ax[big][i]))
                    big = c;
            double complex ph =
                cabs(ax[big][i]) > 0 ? conj(ax[big][i]) / cabs(ax[big][i]) : 1;
            cJSON *v = cJSON_CreateArray();
            for (int c = 0; c < 3; c++)
                cJSON_AddItemToArray(v, cli_json_complex(ax[c][i] * ph));
            cJSON_AddItemToArray(axes, v);
        }
        cJSON_AddItemToObject(p, "axes", axes);
        cJSON_AddItemToObject(o, which[b], p);
    }
    double complex avg[4];
    dpz_post_orientation_average(A, avg);
    cJSON *av = cJSON_CreateObject();
    static const char *const name[4] = {"ee", "em", "me", "mm"};
    for (int b = 0; b < 4; b++)
        cJSON_AddItemToObject(av, name[b], cli_json_complex(avg[b]));
    cJSON_AddItemToObject(o, "orientation_average_m3", av);
    cJSON_AddItemToObject(o, "chirality_m3", cli_json_complex(dpz_post_chirality(A)));
    cli_json_add_number(o, "bianisotropy", dpz_post_bianisotropy(A));
    return o;
}

/* The post-processing of post_json, in words, normalized by the volume V. */
static void post_table(double complex A[6][6], double V)
{
    static const char *const name[2] = {"a_ee", "a_mm"};
    printf("\n");
    for (int b = 0; b < 2; b++) {
        double complex blk[3][3];
        for (int r = 0; r < 3; r++)
            for (int c = 0; c < 3; c++)
                blk[r][c] = A[3 * b + r][3 * b + c];
        double w[3];
        if (dpz_post_principal_herm(blk, w, NULL, NULL) == DPZ_OK)
            printf("principal values of the Hermitian part of %s / V: %.5g %.5g %.5g\n",
                   name[b], w[0] / V, w[1] / V, w[2] / V);
    }
    double complex avg[4];
    dpz_post_orientation_average(A, avg);
    printf("orientation averages / V: ee %.5g%+.5gi, mm %.5g%+.5gi, em %.5g%+.5gi\n",
           creal(avg[0]) / V, cimag(avg[0]) / V, creal(avg[3]) / V, cimag(avg[3]) / V,
           creal(avg[1]) / V, cimag(avg[1]) / V);
    double complex ch = dpz_post_chirality(A);
    printf("chirality tr(a_em)/3 / V: %.5g%+.5gi; bianisotropy measure: %.4g\n",
           creal(ch) / V, cimag(ch) / V, dpz_post_bianisotropy(A));
}

static void refine_table(const cli_refine *r)
{
    printf("refinement (%s; the result belongs to %s), spacing -> voxels:", r->how,
           strcmp(r->how, "split voxels") == 0 ? "the staircase body of the voxel set"
                                               : "the true shape or mesh");
    for (size_t k = 0; k < r->n; k++)
        printf(" %.4g m -> %zu%s", r->d[k], r->grid[k]->n_occ, k + 1 < r->n ? "," : "");
    printf("\nvalues extrapolated linearly to zero spacing; error = larger of the "
           "extrapolation step and (spread to a quadratic fit + 2 standard errors), plus "
           "the largest residual\n");
}

static int run_static(const cli_args *a)
{
    job j;
    cli_refine ref;
    memset(&ref, 0, sizeof ref);
    size_t levels = 0;
    int rc = job_prepare(a, &j);
    double lam = 0.0;
    if (rc == CLI_OK)
        rc = fixed_eps(a, &j, &lam);
    if (rc == CLI_OK)
        rc = job_levels(a, &j, &ref, &levels, CLI_WORK_STATIC);
    if (rc != CLI_OK) {
        cli_refine_free(&ref);
        job_free(&j);
        return rc;
    }
    size_t nl = levels ? levels : 1;
    double complex chis[CLI_REFINE_MAX][3][3], chi[3][3], chi_err[3][3];
    dpz_rhs_report rhs[CLI_REFINE_MAX][3];
    memset(rhs, 0, sizeof rhs);
    dpz_err e;
    dpz_err_clear(&e);
    dpz_status s = DPZ_OK;
    double t0 = now_s();
    for (size_t l = 0; l < nl; l++) {
        j.setup.grid = levels ? ref.grid[l] : j.grid;
        cli_progress(a, "static solve: %zu voxels, 3 right-hand sides",
                     j.setup.grid->n_occ);
        dpz_err el;
        dpz_err_clear(&el);
        dpz_status sl = dpz_static_compute(&j.setup, chis[l], rhs[l], &el);
        if (sl != DPZ_OK && sl != DPZ_ENOCONV) {
            rc = cli_fail_err("static", &el);
            cli_refine_free(&ref);
            job_free(&j);
            return rc;
        }
        if (sl != DPZ_OK && s == DPZ_OK) {
            s = sl;
            e = el;
        }
    }
    double secs = now_s() - t0;
    cli_progress(a, "static solve finished in %.1f s", secs);
    if (s != DPZ_OK) {
        fill_nan(&chis[0][0][0], 9 * nl);
        fill_nan(&chi[0][0], 9);
        fill_nan(&chi_err[0][0], 9);
    } else if (levels) {
        rc = cli_refine_extrapolate(&ref, &chis[0][0][0], 9, &chi[0][0], &chi_err[0][0]);
    } else {
        memcpy(chi, chis[0], sizeof chi);
    }
    if (rc != CLI_OK) {
        cli_refine_free(&ref);
        job_free(&j);
        return rc;
    }
    int ok;
    double V = levels ? ref.v_true : dpz_grid_volume(j.grid);
    cJSON *rj = NULL;
    if (levels)
        rj = cli_refine_json(&ref);
    if (cli_flag(a, "--json")) {
        cJSON *o = cJSON_CreateObject();
        cJSON_AddItemToObject(o, "chi", cli_json_tensor3(chi));
        if (levels)
            cJSON_AddItemToObject(o, "chi_error", error_tensor_json(&chi_err[0][0]));
        double complex n3[3][3];
        for (int r = 0; r < 3; r++)
            for (int c = 0; c < 3; c++)
                n3[r][c] = chi[r][c] / V;
        cJSON_AddItemToObject(o, "chi_over_volume", cli_json_tensor3(n3));
        if (s == DPZ_OK) {
            /* Principal values (ascending, m^3) and unit axes (grid frame) of the
             * symmetric part of Re chi (extract/dpz_post.h). */
            double w[3], ax[3][3];
            if (dpz_post_principal_real(chi, w, ax, NULL) == DPZ_OK) {
                cJSON *pr = cJSON_CreateObject();
                cJSON_AddItemToObject(pr, "values_m3", cli_json_doubles(w, 3));
                cJSON *axes = cJSON_CreateArray();
                for (int i = 0; i < 3; i++) {
                    double v[3] = {ax[0][i], ax[1][i], ax[2][i]};
                    cJSON_AddItemToArray(axes, cli_json_vec3(v));
                }
                cJSON_AddItemToObject(pr, "axes", axes);
                cJSON_AddItemToObject(o, "chi_principal", pr);
            }
        }
        cli_json_grid_facts(o, j.grid);
        cli_json_add_number(o, "host_index", j.mat.host_index);
        if (lam > 0)
            cli_json_add_number(o, "wavelength_m", lam);
        cJSON_AddItemToObject(o, "materials", cli_materials_json(&j.mat, j.grid));
        if (rj) {
            cJSON *per = cJSON_CreateArray();
            for (size_t l = 0; l < nl; l++)
                cJSON_AddItemToArray(per, cli_json_tensor3(chis[l]));
            cJSON_AddItemToObject(rj, "chi_levels", per);
            cJSON_AddItemToObject(o, "refine", rj);
            rj = NULL;
        }
        cJSON *sol = rhs_json(rhs[nl - 1], 3, &ok);
        cJSON_AddBoolToObject(sol, "converged", s == DPZ_OK);
        cJSON *opts = cli_json_setup(&j.setup);
        cJSON_AddItemToObject(sol, "options", opts);
        cli_json_add_number(sol, "seconds", secs);
        cJSON_AddItemToObject(o, "solver", sol);
        rc = cli_json_emit(o);
    } else {
        grid_table(j.grid, j.mat.host_index);
        for (int l = 1; l < 256; l++)
            if (j.mat.mat[l])
                printf("label %d: eps = %.6g%+.6gi  (%s)\n", l,
                       creal(j.setup.eps_label[l]), cimag(j.setup.eps_label[l]),
                       j.mat.describe[l]);
        if (levels)
            refine_table(&ref);
        double z = TABLE_ZERO * max_abs(&chi[0][0], 9);
        cli_print_tensor3(stdout, "static tensor chi", chi, 1.0, z, "m^3");
        if (levels)
            cli_print_tensor3(stdout, "chi error estimate (re, im)", chi_err, 1.0, z,
                              "m^3");
        cli_print_tensor3(stdout, levels ? "chi / V (V of the true object)" : "chi / V",
                          chi, V, z / V, "dimensionless");
        solver_table(&j.setup, rhs[nl - 1], 3);
    }
    cJSON_Delete(rj);
    if (rc == CLI_OK && s != DPZ_OK) {
        cli_fail("static: %s", e.msg[0] ? e.msg : "a solve did not converge");
        rc = CLI_FAILED;
    }
    cli_refine_free(&ref);
    job_free(&j);
    return rc;
}

/* ---- tensor
 * ------------------------------------------------------------------------------ */
static const char *validity_verdict(double v, char *buf, size_t len)
{
    if (v < VALID_GOOD)
        snprintf(buf, len, "good (higher orders %.2g%% of dipole)", 100.0 * v);
    else if (v < VALID_FAIR)
        snprintf(buf, len, "fair (higher orders %.2g%% of dipole; use with care)",
                 100.0 * v);
    else
        snprintf(
            buf, len,
            "WARNING: higher orders are %.3g%% of the dipole response; the point-dipole "
            "model is doubtful at this size",
            100.0 * v);
    return buf;
}

/* Largest |m| k d over the occupied labels of `g`, m = sqrt(eps / n_h^2) the index
 * relative to the host and k = 2 pi n_h / lambda0, so |m| k d = sqrt|eps| 2 pi d /
 * lambda0. The coupled-dipole lattice resolves the internal field while |m| k d < 1
 * (Draine & Flatau, JOSA A 11, 1491 (1994), sect. 2; common practice). */
static double lattice_kd(const dpz_grid *g, const double complex eps[256], double lambda0)
{
    size_t counts[256];
    dpz_grid_label_counts(g, counts);
    double worst = 0.0;
    for (int l = 1; l < 256; l++)
        if (counts[l]) {
            double v = sqrt(cabs(eps[l])) * 2.0 * 3.14159265358979323846 * g->d / lambda0;
            if (v > worst)
                worst = v;
        }
    return worst;
}

#define LATTICE_KD_LIMIT 1.0

static const char *lattice_verdict(double mkd, char *buf, size_t len)
{
    if (mkd < LATTICE_KD_LIMIT)
        snprintf(buf, len, "ok (|m| k d = %.3g < 1)", mkd);
    else
        snprintf(buf, len,
                 "WARNING: |m| k d = %.3g exceeds 1: the lattice is too coarse for this "
                 "wavelength and material; use a smaller spacing",
                 mkd);
    return buf;
}

static const char *recip_verdict(double r, double tol, char *buf, size_t len)
{
    if (r <= RECIP_FACTOR * tol)
        snprintf(buf, len, "ok (%.1e)", r);
    else
        snprintf(
            buf, len,
            "WARNING: asymmetry %.2e exceeds %g x the solver tolerance; tighten --tol", r,
            RECIP_FACTOR);
    return buf;
}

static const char *energy_verdict(const dpz_tensor *t, double tol, char *buf, size_t len)
{
    if (t->lossless) {
        if (t->energy_balance <= ENERGY_OK)
            snprintf(buf, len, "ok (lossless; imbalance %.1e)", t->energy_balance);
        else
            snprintf(buf, len,
                     "WARNING: lossless particle but the energy imbalance is %.2e",
                     t->energy_balance);
    } else {
        double m = t->absorption_eig[0];
        double scale = fabs(t->absorption_eig[5]) > 0 ? fabs(t->absorption_eig[5]) : 1.0;
        if (m >= -RECIP_FACTOR * tol * scale)
            snprintf(buf, len, "ok (absorbing; absorption eigenvalues %.2e .. %.2e >= 0)",
                     m, t->absorption_eig[5]);
        else
            snprintf(
                buf, len,
                "WARNING: negative absorption eigenvalue %.2e (gain, or an inaccurate "
                "solve)",
                m);
    }
    return buf;
}

static int run_tensor(const cli_args *a)
{
    job j;
    cli_refine ref;
    memset(&ref, 0, sizeof ref);
    size_t levels = 0;
    int rc = job_prepare(a, &j);
    double lam = 0.0;
    if (rc == CLI_OK)
        rc = cli_opt_length_pos(a, "--wavelength", &lam, 1, NULL);
    if (rc == CLI_OK)
        rc = cli_materials_eval(&j.mat, j.grid, lam, j.setup.eps_label);
    if (rc == CLI_OK)
        rc = job_levels(a, &j, &ref, &levels, CLI_WORK_TENSOR);
    if (rc != CLI_OK) {
        cli_refine_free(&ref);
        job_free(&j);
        return rc;
    }
    size_t nl = levels ? levels : 1;
    dpz_tensor *ts = calloc(nl, sizeof *ts);
    if (!ts) {
        cli_refine_free(&ref);
        job_free(&j);
        return cli_fail("out of memory"), CLI_FAILED;
    }
    /* One multipole origin for every level: the user's, else the centroid of the finest
     * voxel set (the best estimate of the true shape's centroid). */
    if (levels && !j.setup.has_origin) {
        dpz_grid_centroid(ref.grid[nl - 1], j.setup.origin_m);
        j.setup.has_origin = 1;
    }
    dpz_err e;
    dpz_err_clear(&e);
    dpz_status s = DPZ_OK;
    double t0 = now_s();
    for (size_t l = 0; l < nl; l++) {
        j.setup.grid = levels ? ref.grid[l] : j.grid;
        cli_progress(a, "tensor at %.6g m: %zu voxels, 6 right-hand sides", lam,
                     j.setup.grid->n_occ);
        dpz_err el;
        dpz_err_clear(&el);
        dpz_status sl = dpz_tensor_compute(&j.setup, lam, &ts[l], NULL, &el);
        if (sl != DPZ_OK && sl != DPZ_ENOCONV) {
            rc = cli_fail_err("tensor", &el);
            free(ts);
            cli_refine_free(&ref);
            job_free(&j);
            return rc;
        }
        if (sl != DPZ_OK && s == DPZ_OK) {
            s = sl;
            e = el;
        }
    }
    /* Diagnostics, T block and cross sections come from the finest level. */
    dpz_tensor *t = &ts[nl - 1];
    double complex A[6][6], A_err[6][6];
    if (s != DPZ_OK || !t->converged) {
        for (size_t l = 0; l < nl; l++) {
            fill_nan(&ts[l].A[0][0], 36);
            fill_nan(&ts[l].T[0][0], 36);
        }
        fill_nan(&A[0][0], 36);
        fill_nan(&A_err[0][0], 36);
        t->reciprocity = t->energy_balance = t->dipole_validity = NAN;
        for (int i = 0; i < 6; i++)
            t->absorption_eig[i] = t->fluct_eig[i] = NAN;
    } else if (levels) {
        double complex *vals = calloc(nl * 36, sizeof *vals);
        if (vals) {
            for (size_t l = 0; l < nl; l++)
                memcpy(vals + 36 * l, &ts[l].A[0][0], 36 * sizeof *vals);
            rc = cli_refine_extrapolate(&ref, vals, 36, &A[0][0], &A_err[0][0]);
            free(vals);
        }
        if (!vals || rc != CLI_OK) {
            free(ts);
            cli_refine_free(&ref);
            job_free(&j);
            return vals ? rc : (cli_fail("out of memory"), CLI_FAILED);
        }
    } else {
        memcpy(A, t->A, sizeof A);
    }
    dpz_status sx = DPZ_OK;
    dpz_xsec xs;
    memset(&xs, 0, sizeof xs);
    dpz_err ex;
    dpz_err_clear(&ex);
    int want_x = cli_flag(a, "--cross-sections");
    if (want_x && s == DPZ_OK) {
        const double khat[3] = {0.0, 0.0, 1.0};
        const double complex e0[3] = {1.0, 0.0, 0.0};
        cli_progress(a, "plane-wave solve for cross sections");
        sx = dpz_xsec_compute(&j.setup, lam, khat, e0, t, &xs, &ex);
        if (sx != DPZ_OK && sx != DPZ_ENOCONV) {
            rc = cli_fail_err("tensor --cross-sections", &ex);
            free(ts);
            cli_refine_free(&ref);
            job_free(&j);
            return rc;
        }
    }
    double secs = now_s() - t0;
    cli_progress(a, "tensor finished in %.1f s", secs);
    double V = levels ? ref.v_true : dpz_grid_volume(j.grid);
    cJSON *rj = NULL;
    if (levels)
        rj = cli_refine_json(&ref);
    char v1[256], v2[256], v3[256], v4[256];
    /* The finest lattice decides what the result can resolve. */
    double mkd = lattice_kd(levels ? ref.grid[nl - 1] : j.grid, j.setup.eps_label, lam);
    lattice_verdict(mkd, v4, sizeof v4);
    int converged = s == DPZ_OK && t->converged;
    validity_verdict(t->dipole_validity, v1, sizeof v1);
    recip_verdict(t->reciprocity, j.setup.solve.tol, v2, sizeof v2);
    energy_verdict(t, j.setup.solve.tol, v3, sizeof v3);
    if (!converged) {
        const char *na = "not available: a solve did not converge";
        snprintf(v1, sizeof v1, "%s", na);
        snprintf(v2, sizeof v2, "%s", na);
        snprintf(v3, sizeof v3, "%s", na);
    }
    if (cli_flag(a, "--json")) {
        cJSON *o = cJSON_CreateObject();
        cli_json_add_number(o, "wavelength_m", lam);
        cli_json_add_number(o, "k_per_m", t->k_per_m);
        cli_json_add_number(o, "host_index", j.mat.host_index);
        cJSON_AddItemToObject(o, "origin_m", cli_json_vec3(t->origin_m));
        cli_json_grid_facts(o, j.grid);
        cli_json_add_number(o, "size_parameter", t->k_per_m * dpz_grid_aeq(j.grid));
        cJSON *eps = cJSON_CreateArray();
        for (int l = 1; l < 256; l++)
            if (j.mat.mat[l]) {
                cJSON *m = cJSON_CreateObject();
                cli_json_add_number(m, "label", l);
                cJSON_AddStringToObject(m, "spec", j.mat.describe[l]);
                cJSON_AddItemToObject(m, "eps", cli_json_complex(j.setup.eps_label[l]));
                cJSON_AddItemToArray(eps, m);
            }
        cJSON_AddItemToObject(o, "materials", eps);
        cJSON_AddItemToObject(o, "alpha", blocks_json(&A[0][0]));
        if (s == DPZ_OK) {
            cJSON *post = post_json(A);
            if (post)
                cJSON_AddItemToObject(o, "post", post);
        }
        if (levels) {
            cJSON_AddItemToObject(o, "error", blocks_json(&A_err[0][0]));
            cJSON *per = cJSON_CreateArray();
            for (size_t l = 0; l < nl; l++)
                cJSON_AddItemToArray(per, blocks_json(&ts[l].A[0][0]));
            cJSON_AddItemToObject(rj, "alpha_levels", per);
            cJSON_AddItemToObject(o, "refine", rj);
            rj = NULL;
        }
        cJSON *tb = cJSON_CreateArray();
        for (int r = 0; r < 6; r++) {
            cJSON *row = cJSON_CreateArray();
            for (int c = 0; c < 6; c++)
                cJSON_AddItemToArray(row, cli_json_complex(t->T[r][c]));
            cJSON_AddItemToArray(tb, row);
        }
        cJSON_AddItemToObject(o, "t_block", tb);
        cJSON *dg = cJSON_CreateObject();
        cli_json_add_number(dg, "reciprocity", t->reciprocity);
        cli_json_add_number(dg, "energy_balance", t->energy_balance);
        cli_json_add_number(dg, "dipole_validity", t->dipole_validity);
        cJSON_AddItemToObject(dg, "absorption_eig",
                              cli_json_doubles(t->absorption_eig, 6));
        cJSON_AddItemToObject(dg, "fluct_eig_m3", cli_json_doubles(t->fluct_eig, 6));
        cJSON_AddBoolToObject(dg, "lossless", t->lossless);
        cJSON *vd = cJSON_CreateObject();
        cJSON_AddStringToObject(vd, "dipole_picture", v1);
        cJSON_AddStringToObject(vd, "reciprocity", v2);
        cJSON_AddStringToObject(vd, "energy", v3);
        cJSON_AddStringToObject(vd, "lattice", v4);
        cJSON_AddItemToObject(dg, "verdicts", vd);
        cli_json_add_number(dg, "lattice_mkd", mkd);
        cJSON_AddItemToObject(o, "diagnostics", dg);
        if (want_x && s == DPZ_OK) {
            cJSON *x = cJSON_CreateObject();
            double kh[3] = {0, 0, 1}, pol[3] = {1, 0, 0};
            cJSON_AddItemToObject(x, "direction", cli_json_vec3(kh));
            cJSON_AddItemToObject(x, "polarization", cli_json_vec3(pol));
            cli_json_add_number(x, "ext_m2", xs.ext);
            cli_json_add_number(x, "abs_m2", xs.abs);
            cli_json_add_number(x, "sca_m2", xs.sca);
            cli_json_add_number(x, "ext_dipole_m2", xs.ext_dip);
            cli_json_add_number(x, "abs_dipole_m2", xs.abs_dip);
            cli_json_add_number(x, "sca_dipole_m2", xs.sca_dip);
            cli_json_add_number(x, "rel_diff", xs.rel_diff);
            cJSON_AddBoolToObject(x, "converged", sx == DPZ_OK);
            cJSON_AddItemToObject(o, "cross_sections", x);
        }
        int ok;
        cJSON *sol = rhs_json(t->rhs, 6, &ok);
        cJSON_AddBoolToObject(sol, "converged", converged);
        cJSON_AddItemToObject(sol, "options", cli_json_setup(&j.setup));
        cli_json_add_number(sol, "seconds", secs);
        cJSON_AddItemToObject(o, "solver", sol);
        rc = cli_json_emit(o);
    } else {
        printf("wavelength %.6g m, k = %.6e 1/m, x = k a_eq = %.4f\n", lam, t->k_per_m,
               t->k_per_m * dpz_grid_aeq(j.grid));
        grid_table(j.grid, j.mat.host_index);
        for (int l = 1; l < 256; l++)
            if (j.mat.mat[l])
                printf("label %d: eps = %.6g%+.6gi  (%s)\n", l,
                       creal(j.setup.eps_label[l]), cimag(j.setup.eps_label[l]),
                       j.mat.describe[l]);
        printf("origin: %.6e %.6e %.6e m\n", t->origin_m[0], t->origin_m[1],
               t->origin_m[2]);
        if (levels)
            refine_table(&ref);
        printf("\n");
        static const char *names[4] = {"a_ee", "a_em", "a_me", "a_mm"};
        double z = TABLE_ZERO * max_abs(&A[0][0], 36);
        for (int b = 0; b < 4; b++) {
            double complex blk[3][3], blk_err[3][3];
            int r0 = (b / 2) * 3, c0 = (b % 2) * 3;
            for (int r = 0; r < 3; r++)
                for (int c = 0; c < 3; c++) {
                    blk[r][c] = A[r0 + r][c0 + c];
                    blk_err[r][c] = levels ? A_err[r0 + r][c0 + c] : 0.0;
                }
            char title[64];
            snprintf(title, sizeof title, "%s", names[b]);
            cli_print_tensor3(stdout, title, blk, 1.0, z, "m^3");
            if (levels) {
                snprintf(title, sizeof title, "%s error estimate (re, im)", names[b]);
                cli_print_tensor3(stdout, title, blk_err, 1.0, z, "m^3");
            }
            snprintf(title, sizeof title,
                     levels ? "%s / V (V of the true object)" : "%s / V", names[b]);
            cli_print_tensor3(stdout, title, blk, V, z / V, "dimensionless");
        }
        if (s == DPZ_OK)
            post_table(A, V);
        printf("\ndipole picture: %s\n", v1);
        printf("reciprocity:    %s\n", v2);
        printf("energy:         %s\n", v3);
        printf("lattice:        %s\n", v4);
        if (want_x && s == DPZ_OK)
            printf("cross sections (+z, x-pol) [m^2]: ext %.5e abs %.5e sca %.5e; dipole "
                   "model "
                   "ext %.5e (%.2g%% off)%s\n",
                   xs.ext, xs.abs, xs.sca, xs.ext_dip, 100.0 * xs.rel_diff,
                   sx == DPZ_OK ? "" : "  NOT CONVERGED");
        solver_table(&j.setup, t->rhs, 6);
    }
    if (rc == CLI_OK && !converged) {
        cli_fail("tensor: %s", e.msg[0] ? e.msg : "a solve did not converge");
        rc = CLI_FAILED;
    } else if (rc == CLI_OK && want_x && sx != DPZ_OK) {
        cli_fail("tensor: cross sections: %s", ex.msg);
        rc = CLI_FAILED;
    }
    cJSON_Delete(rj);
    free(ts);
    cli_refine_free(&ref);
    job_free(&j);
    return rc;
}

/* ---- expand
 * ------------------------------------------------------------------------------ */
#define C2_CAUTION                                                                       \
    "C2 depends on the conventions of the dipole extraction (multipole origin, exact "   \
    "order-1 projection): compare it only with values obtained the same way; C0 and C3 " \
    "are convention-free"

static int run_expand(const cli_args *a)
{
    job j;
    int rc = job_prepare(a, &j);
    double lam = 0.0;
    if (rc == CLI_OK)
        rc = fixed_eps(a, &j, &lam);
    double x[64];
    size_t n = 0;
    if (rc == CLI_OK) {
        const char *v = cli_get(a, "--size-parameters");
        if (v) {
            dpz_err e;
            if (dpz_units_size_params("--size-parameters", v, x, 64, &n, &e) != DPZ_OK)
                rc = cli_fail_err("expand", &e);
            else if (n < 4)
                rc = cli_fail(
                    "expand: --size-parameters: the fit of C0, C2, C3, C4 needs at "
                    "least 4 values, got %zu",
                    n);
            for (size_t i = 0; rc == CLI_OK && i < n; i++)
                if (x[i] > DPZ_EXPAND_X_MAX)
                    rc = cli_fail(
                        "expand: --size-parameters: %g exceeds %g: the expansion "
                        "is a small-size series in x = k a_eq",
                        x[i], DPZ_EXPAND_X_MAX);
        } else {
            n = dpz_expand_default_points(x);
        }
    }
    if (rc == CLI_OK)
        rc = cli_limits_check(a, j.grid, &j.setup, CLI_WORK_EXPAND);
    if (rc != CLI_OK) {
        job_free(&j);
        return rc;
    }
    dpz_expansion *ex = calloc(1, sizeof *ex);
    if (!ex) {
        job_free(&j);
        return cli_fail("out of memory"), CLI_FAILED;
    }
    dpz_err e;
    dpz_err_clear(&e);
    cli_progress(a, "size expansion: %zu size parameters, 6 solves each", n);
    double t0 = now_s();
    dpz_status s = dpz_expand_compute(&j.setup, x, n, ex, &e);
    double secs = now_s() - t0;
    cli_progress(a, "size expansion finished in %.1f s", secs);
    if (s != DPZ_OK && s != DPZ_ENOCONV) {
        rc = cli_fail_err("expand", &e);
        free(ex);
        job_free(&j);
        return rc;
    }
    int converged = s == DPZ_OK && ex->converged;
    if (!converged) {
        fill_nan(&ex->C0[0][0], 9);
        fill_nan(&ex->C2[0][0], 9);
        fill_nan(&ex->C3[0][0], 9);
        fill_nan(&ex->C4[0][0], 9);
        ex->fit_residual = ex->radiative_check = NAN;
    }
    /* The largest size parameter sets the shortest wavelength: lambda0 = 2 pi n_h a_eq /
     * x in the host, so |m| k d is largest there. */
    double xmax = 0.0;
    for (size_t i = 0; i < ex->n_points; i++)
        if (ex->points[i] > xmax)
            xmax = ex->points[i];
    double lam_min =
        2.0 * 3.14159265358979323846 * j.mat.host_index * dpz_grid_aeq(j.grid) / xmax;
    double mkd = lattice_kd(j.grid, j.setup.eps_label, lam_min);
    char v_lat[256];
    lattice_verdict(mkd, v_lat, sizeof v_lat);
    if (cli_flag(a, "--json")) {
        cJSON *o = cJSON_CreateObject();
        cJSON_AddItemToObject(o, "C0", cli_json_tensor3(ex->C0));
        cJSON_AddItemToObject(o, "C2", cli_json_tensor3(ex->C2));
        cJSON_AddItemToObject(o, "C3", cli_json_tensor3(ex->C3));
        cJSON_AddItemToObject(o, "C4", cli_json_tensor3(ex->C4));
        cli_json_add_number(o, "fit_residual", ex->fit_residual);
        cJSON_AddItemToObject(o, "points", cli_json_doubles(ex->points, ex->n_points));
        cli_json_add_number(o, "radiative_check", ex->radiative_check);
        cJSON_AddStringToObject(o, "c2_caution", C2_CAUTION);
        cli_json_add_number(o, "lattice_mkd_max", mkd);
        cJSON_AddStringToObject(o, "lattice", v_lat);
        cli_json_grid_facts(o, j.grid);
        cli_json_add_number(o, "host_index", j.mat.host_index);
        if (lam > 0)
            cli_json_add_number(o, "wavelength_m", lam);
        cJSON_AddItemToObject(o, "materials", cli_materials_json(&j.mat, j.grid));
        cJSON *sol = cJSON_CreateObject();
        cli_json_add_number(sol, "worst_iterations", (double)ex->worst.iterations);
        cli_json_add_number(sol, "worst_residual", ex->worst.residual);
        cJSON_AddBoolToObject(sol, "converged", converged);
        cJSON_AddItemToObject(sol, "options", cli_json_setup(&j.setup));
        cli_json_add_number(sol, "seconds", secs);
        cJSON_AddItemToObject(o, "solver", sol);
        rc = cli_json_emit(o);
    } else {
        grid_table(j.grid, j.mat.host_index);
        printf("V a_ee^-1(x) = C0 + C2 x^2 + C3 x^3 + C4 x^4, x = k a_eq, at x =");
        for (size_t i = 0; i < ex->n_points; i++)
            printf(" %g", ex->points[i]);
        printf("\n");
        double z = TABLE_ZERO * max_abs(&ex->C0[0][0], 9);
        cli_print_tensor3(stdout, "C0 (= V chi^-1)", ex->C0, 1.0, z, "dimensionless");
        cli_print_tensor3(stdout, "C2 (see caution)", ex->C2, 1.0, z, "dimensionless");
        cli_print_tensor3(stdout, "C3 (radiative: -(2i/9) I expected)", ex->C3, 1.0, z,
                          "dimensionless");
        cli_print_tensor3(stdout, "C4", ex->C4, 1.0, z, "dimensionless");
        printf("fit residual: %.2e (largest relative, over elements)\n",
               ex->fit_residual);
        printf("radiative check |C3 + 2i/9 I| / (2/9): %.2e%s\n", ex->radiative_check,
               isnan(ex->radiative_check)   ? " (not available: a solve did not converge)"
               : ex->radiative_check < 0.05 ? " (ok)"
                                            : "  WARNING: C3 departs from -(2i/9) I");
        printf("caution: %s\n", C2_CAUTION);
        printf("lattice at the largest x: %s\n", v_lat);
        printf("solver: worst of all solves: %zu iterations, residual %.2e%s\n",
               ex->worst.iterations, ex->worst.residual,
               converged ? "" : "  NOT CONVERGED");
    }
    if (rc == CLI_OK && !converged) {
        cli_fail("expand: %s", e.msg[0] ? e.msg : "a solve did not converge");
        rc = CLI_FAILED;
    }
    free(ex);
    job_free(&j);
    return rc;
}

#define MATERIALS_DETAILS                                                                \
    "\nMATERIALS: --eps SPEC for every label, or --material LABEL=SPEC per label. SPEC " \
    "is a complex permittivity relative to vacuum (2.25, -10+1i, 12.25+0.02i; "          \
    "absorbing "                                                                         \
    "materials have Im > 0 under exp(-i omega t)), nk:FILE.csv (columns wavelength_nm, " \
    "wavelength_um or wavelength_m, then n,k or eps_re,eps_im), or "                     \
    "drude:eps_inf=X,wp=E,gamma=E[,lorentz=F:E0:G...] with energies in eV, for example " \
    "drude:eps_inf=9.5,wp=8.9eV,gamma=0.07eV,lorentz=1.2:2.9eV:0.6eV (the "              \
    "Drude-Lorentz "                                                                     \
    "model of Rakic et al., Appl. Opt. 37, 5271 (1998)). The permittivities are "        \
    "divided "                                                                           \
    "by the host's n^2 internally."

const cli_cmd cli_cmd_static = {
    .name = "static",
    .usage = "FILE MATERIALS [--json] [options]",
    .summary = "quasi-static polarizability tensor chi (k = 0), m^3",
    .details = MATERIALS_DETAILS,
    .example = "dipolize static sphere.vtk --eps 2.25 --json",
    .min_pos = 1,
    .max_pos = 1,
    .groups = {&cli_group_materials, &static_group, &cli_group_solver,
               &cli_group_geometry, &cli_group_output, NULL},
    .run = run_static,
};

const cli_cmd cli_cmd_tensor = {
    .name = "tensor",
    .usage = "FILE MATERIALS --wavelength LEN [--origin X,Y,Z] [--json] [options]",
    .summary = "6x6 electric/magnetic/magneto-electric polarizability at one wavelength",
    .details =
        "Output: a_ee, a_em, a_me, a_mm (m^3; p/(eps0 eps_h) = a_ee E + a_em Z_h H, "
        "Z_h m = a_me E + a_mm Z_h H), the order-1 T block and diagnostics "
        "(reciprocity, energy balance, dipole validity) with plain-words "
        "verdicts.\n" MATERIALS_DETAILS,
    .example =
        "dipolize tensor srr.vtk --material 1=drude:eps_inf=9.5,wp=8.9eV,gamma=0.07eV "
        "--host-index 1.45 --wavelength 900nm --json",
    .min_pos = 1,
    .max_pos = 1,
    .groups = {&cli_group_materials, &tensor_group, &cli_group_solver,
               &cli_group_geometry, &cli_group_output, NULL},
    .run = run_tensor,
};

const cli_cmd cli_cmd_expand = {
    .name = "expand",
    .usage = "FILE MATERIALS [--size-parameters LIST] [--json] [options]",
    .summary = "size expansion V a_ee^-1(x) = C0 + C2 x^2 + C3 x^3 + C4 x^4, x = k a_eq",
    .details =
        "The permittivities stay fixed while the size parameter varies. C3 should "
        "come out as -(2i/9) I for any shape (radiative_check measures the "
        "departure). C2 is convention-dependent (see c2_caution).\n" MATERIALS_DETAILS,
    .example = "dipolize expand sphere.vtk --eps 2.25 --size-parameters "
               "0.05,0.1,0.15,0.2,0.25,0.3 --json",
    .min_pos = 1,
    .max_pos = 1,
    .groups = {&cli_group_materials, &expand_group, &cli_group_solver,
               &cli_group_geometry, &cli_group_output, NULL},
    .run = run_expand,
};
