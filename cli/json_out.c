/* json_out.c: output helpers of the program: JSON values through cJSON (complex numbers
 * as [re, im], 3x3 tensors as 3 rows of 3 pairs, SI units, doubles printed by cJSON with
 * up to 17 significant digits so that they read back exactly), aligned terminal tables
 * and atomic file writing (temporary name in the same directory, then rename). */
#include "cli_int.h"

#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

cJSON *cli_json_number(double v)
{
    if (!isfinite(v))
        return cJSON_CreateNull();
    char buf[40];
    for (int digits = 15; digits <= 17; digits++) {
        snprintf(buf, sizeof buf, "%.*g", digits, v);
        if (strtod(buf, NULL) == v)
            break;
    }
    return cJSON_CreateRaw(buf);
}

cJSON *cli_json_add_number(cJSON *object, const char *name, double v)
{
    cJSON *n = cli_json_number(v);
    if (n && !cJSON_AddItemToObject(object, name, n)) {
        cJSON_Delete(n);
        return NULL;
    }
    return n;
}

cJSON *cli_json_complex(double complex z)
{
    cJSON *p = cJSON_CreateArray();
    if (!p)
        return NULL;
    cJSON_AddItemToArray(p, cli_json_number(creal(z)));
    cJSON_AddItemToArray(p, cli_json_number(cimag(z)));
    return p;
}

cJSON *cli_json_tensor3_flat(const double complex *t)
{
    cJSON *rows = cJSON_CreateArray();
    for (int r = 0; rows && r < 3; r++) {
        cJSON *row = cJSON_CreateArray();
        for (int c = 0; row && c < 3; c++)
            cJSON_AddItemToArray(row, cli_json_complex(t[3 * r + c]));
        cJSON_AddItemToArray(rows, row);
    }
    return rows;
}

cJSON *cli_json_block_flat(const double complex *A, int r0, int c0)
{
    double complex t[9];
    for (int r = 0; r < 3; r++)
        for (int c = 0; c < 3; c++)
            t[3 * r + c] = A[6 * (r0 + r) + c0 + c];
    return cli_json_tensor3_flat(t);
}

cJSON *cli_json_vec3(const double v[3])
{
    return cli_json_doubles(v, 3);
}

cJSON *cli_json_doubles(const double *v, size_t n)
{
    cJSON *arr = cJSON_CreateArray();
    for (size_t i = 0; arr && i < n; i++)
        cJSON_AddItemToArray(arr, cli_json_number(v[i]));
    return arr;
}

cJSON *cli_json_setup(const dpz_setup *s)
{
    cJSON *o = cJSON_CreateObject();
    if (!o)
        return NULL;
    cJSON_AddStringToObject(o, "kind", dpz_solver_name(s->solve.kind));
    cli_json_add_number(o, "tol", s->solve.tol);
    cli_json_add_number(o, "max_iter", (double)s->solve.max_iter);
    cJSON_AddStringToObject(o, "dipole_model", dpz_dipole_name(s->model));
    cli_json_add_number(o, "threads", s->op.threads);
    return o;
}

void cli_json_grid_facts(cJSON *o, const dpz_grid *g)
{
    cli_json_add_number(o, "voxels", (double)g->n_occ);
    cli_json_add_number(o, "spacing_m", g->d);
    cli_json_add_number(o, "volume_m3", dpz_grid_volume(g));
    cli_json_add_number(o, "a_eq_m", dpz_grid_aeq(g));
}

int cli_json_emit(cJSON *o)
{
    if (!o)
        return cli_fail("out of memory while building the JSON output"), CLI_FAILED;
    char *text = cJSON_PrintUnformatted(o);
    cJSON_Delete(o);
    if (!text)
        return cli_fail("out of memory while printing the JSON output"), CLI_FAILED;
    int bad = fputs(text, stdout) < 0 || fputc('\n', stdout) == EOF;
    cJSON_free(text);
    if (bad)
        return cli_fail("cannot write to standard output"), CLI_FAILED;
    return CLI_OK;
}

void cli_print_tensor3_flat(FILE *f, const char *title, const double complex *t,
                            double scale, double zero_below, const char *unit)
{
    fprintf(f, "%s [%s]\n", title, unit);
    for (int r = 0; r < 3; r++) {
        fputs("    ", f);
        for (int c = 0; c < 3; c++) {
            double complex z = t[3 * r + c] / scale;
            double re = fabs(creal(z)) < zero_below ? 0.0 : creal(z);
            double im = fabs(cimag(z)) < zero_below ? 0.0 : cimag(z);
            char cell[64];
            if (re == 0.0 && im == 0.0)
                snprintf(cell, sizeof cell, "0");
            else if (im == 0.0)
                snprintf(cell, sizeof cell, "%+.5e", re);
            else
                snprintf(cell, sizeof cell, "%+.5e %c %.5ei", re, im < 0 ? '-' : '+',
                         fabs(im));
            fprintf(f, "  %-27s", cell);
        }
        fputc('\n', f);
    }
}

int cli_write_atomic(const char *path, cli_writer write, void *ctx)
{
    size_t len = strlen(path);
    char *tmp = malloc(len + 16);
    if (!tmp)
        return cli_fail("out of memory");
    /* Same directory as the target, so that rename() is atomic. */
    snprintf(tmp, len + 16, "%s.tmp%06ld", path, (long)getpid() % 1000000);
    dpz_err e;
    dpz_err_clear(&e);
    dpz_status s = write(tmp, ctx, &e);
    if (s != DPZ_OK) {
        remove(tmp);
        free(tmp);
        return cli_fail_err(NULL, &e);
    }
    if (rename(tmp, path) != 0) {
        int en = errno;
        remove(tmp);
        free(tmp);
        return cli_fail("cannot write %s: %s", path, strerror(en));
    }
    free(tmp);
    return CLI_OK;
}
