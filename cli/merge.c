/* merge.c: `dipolize merge DIR... -o OUT` combines the directories of sharded sweeps
 * (`--shard I/N`) into one directory equal to that of a single run: same tables, rows in
 * wavelength order, and a summary.json equal to a single run's except for timings. It
 * checks everything before writing anything: the shards share their inputs and their
 * full wavelength list, every wavelength is present exactly once, and no table is
 * damaged. */
#include "dpz_sweep.h"

#include <cJSON.h>
#include <dirent.h>
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cli_int.h"
#include "dpz_common.h"

typedef struct shard_in {
    const char *dir;
    char *summary_text;
    cJSON *summary;
    cJSON *results; /* borrowed from summary */
    size_t n_results;
    char *table_buf[DPZ_TABLE_COUNT];
    size_t table_len[DPZ_TABLE_COUNT];
    dpz_table table[DPZ_TABLE_COUNT];
} shard_in;

/* Sets obj[key] = item, replacing an existing member in place (keeping the key order). */
static void set_item(cJSON *obj, const char *key, cJSON *item)
{
    if (cJSON_GetObjectItemCaseSensitive(obj, key))
        cJSON_ReplaceItemInObjectCaseSensitive(obj, key, item);
    else
        cJSON_AddItemToObject(obj, key, item);
}

static void shard_free(shard_in *s)
{
    free(s->summary_text);
    cJSON_Delete(s->summary);
    for (int t = 0; t < DPZ_TABLE_COUNT; t++) {
        free(s->table_buf[t]);
        dpz_sweep_table_free(&s->table[t]);
    }
}

/* Reads summary.json and the three tables of one shard and checks it on its own. */
static dpz_status shard_load(shard_in *s, dpz_err *err)
{
    char path[4096];
    size_t len;
    dpz_status st;
    snprintf(path, sizeof path, "%s/summary.json", s->dir);
    dpz_err e;
    if ((st = dpz_sweep_read_file(path, &s->summary_text, &len, &e)) != DPZ_OK)
        return dpz_err_set(err, st, "%s is not a sweep directory (%s)", s->dir, e.msg);
    s->summary = cJSON_Parse(s->summary_text);
    if (!cJSON_IsObject(s->summary))
        return dpz_err_set(err, DPZ_EFORMAT, "%s: not valid JSON", path);
    s->results = cJSON_GetObjectItemCaseSensitive(s->summary, "results");
    cJSON *wl = cJSON_GetObjectItemCaseSensitive(s->summary, "wavelengths_m");
    if (!cJSON_IsArray(s->results) || !cJSON_IsArray(wl))
        return dpz_err_set(err, DPZ_EFORMAT, "%s: lacks \"results\" or \"wavelengths_m\"",
                           path);
    s->n_results = (size_t)cJSON_GetArraySize(s->results);
    for (int t = 0; t < DPZ_TABLE_COUNT; t++) {
        const char *file = dpz_sweep_table_file((dpz_table_kind)t);
        snprintf(path, sizeof path, "%s/%s", s->dir, file);
        if ((st = dpz_sweep_read_file(path, &s->table_buf[t], &s->table_len[t], err)) !=
            DPZ_OK)
            return st;
        /* A shard made with --refine has err_re, err_im in alpha.csv; mixing refined
         * and unrefined shards is refused by the input comparison ("refine"). */
        dpz_table_kind kind = (dpz_table_kind)t;
        if (t == DPZ_TABLE_ALPHA &&
            cJSON_GetObjectItemCaseSensitive(s->summary, "refine"))
            kind = DPZ_TABLE_ALPHA_REFINED;
        if ((st = dpz_sweep_table_scan(kind, path, s->table_buf[t], s->table_len[t],
                                       &s->table[t], err)) != DPZ_OK)
            return st;
        const dpz_table *tb = &s->table[t];
        if (tb->damaged)
            return dpz_err_set(
                err, DPZ_EFORMAT,
                "%s: line %zu: %s (a damaged or unfinished shard: finish it "
                "with sweep --resume)",
                path, tb->damage_line, tb->damage);
        if (tb->n_groups != s->n_results)
            return dpz_err_set(err, DPZ_EFORMAT,
                               "%s holds %zu wavelengths but %s/summary.json lists %zu",
                               path, tb->n_groups, s->dir, s->n_results);
        size_t j = 0;
        for (cJSON *r = s->results->child; r; r = r->next, j++) {
            cJSON *w = cJSON_GetObjectItemCaseSensitive(r, "wavelength_m");
            cJSON *c = cJSON_GetObjectItemCaseSensitive(r, "converged");
            if (!cJSON_IsNumber(w) || !cJSON_IsBool(c))
                return dpz_err_set(err, DPZ_EFORMAT,
                                   "%s/summary.json: result %zu lacks wavelength_m or "
                                   "converged",
                                   s->dir, j + 1);
            if (!dpz_sweep_same_wavelength(w->valuedouble, tb->groups[j].lambda0_m) ||
                cJSON_IsTrue(c) != (tb->groups[j].converged != 0))
                return dpz_err_set(
                    err, DPZ_EFORMAT,
                    "%s: line %zu: wavelength %.12g m does not match result "
                    "%zu of %s/summary.json",
                    path, tb->groups[j].first_line, tb->groups[j].lambda0_m, j + 1,
                    s->dir);
        }
    }
    return DPZ_OK;
}

static int dir_entries(const char *path)
{
    DIR *d = opendir(path);
    if (!d)
        return -1;
    int n = 0;
    struct dirent *e;
    while ((e = readdir(d)) != NULL)
        if (strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0)
            n++;
    closedir(d);
    return n;
}

static void remove_tree_shallow(const char *dir)
{
    DIR *d = opendir(dir);
    if (!d)
        return;
    struct dirent *e;
    char p[4096];
    while ((e = readdir(d)) != NULL) {
        if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0)
            continue;
        snprintf(p, sizeof p, "%s/%s", dir, e->d_name);
        unlink(p);
    }
    closedir(d);
    rmdir(dir);
}

dpz_status dpz_sweep_merge(const char *const *dirs, size_t n_dirs, const char *out,
                           dpz_err *err)
{
    dpz_status st = DPZ_OK;
    shard_in *s = dpz__calloc(n_dirs ? n_dirs : 1, sizeof *s);
    size_t *owner = NULL, *group = NULL;
    char *buf = NULL, *static_text = NULL;
    char tmpdir[4096] = "";
    cJSON *merged = NULL;
    if (!s)
        return dpz_err_set(err, DPZ_ENOMEM, "merge: out of memory");
    if (n_dirs == 0) {
        st = dpz_err_set(err, DPZ_EINVAL, "merge: no shard directories given");
        goto done;
    }
    int exists = 0;
    struct stat sb;
    if (stat(out, &sb) == 0) {
        exists = 1;
        if (!S_ISDIR(sb.st_mode) || dir_entries(out) != 0) {
            st = dpz_err_set(err, DPZ_EINVAL,
                             "merge: output %s already exists and is not an empty "
                             "directory",
                             out);
            goto done;
        }
    }
    for (size_t i = 0; i < n_dirs; i++) {
        s[i].dir = dirs[i];
        for (size_t j = 0; j < i; j++)
            if (strcmp(dirs[i], dirs[j]) == 0) {
                st = dpz_err_set(err, DPZ_EINVAL, "merge: %s is given twice", dirs[i]);
                goto done;
            }
        if ((st = shard_load(&s[i], err)) != DPZ_OK)
            goto done;
        if (i > 0) {
            const char *which =
                dpz_sweep_inputs_differ(s[0].summary_text, s[i].summary_text, 0);
            if (which) {
                st = dpz_err_set(err, DPZ_EINVAL,
                                 "merge: %s and %s were made with different inputs: %s",
                                 dirs[0], dirs[i], which);
                goto done;
            }
            for (int t = 0; t < DPZ_TABLE_COUNT; t++)
                if (s[i].table[t].head_end != s[0].table[t].head_end ||
                    memcmp(s[i].table_buf[t], s[0].table_buf[t],
                           s[0].table[t].head_end)) {
                    st = dpz_err_set(err, DPZ_EINVAL,
                                     "merge: %s/%s and %s/%s have different header lines",
                                     dirs[i], dpz_sweep_table_file((dpz_table_kind)t),
                                     dirs[0], dpz_sweep_table_file((dpz_table_kind)t));
                    goto done;
                }
        }
    }
    /* Place every wavelength of every shard at its position in the full list. */
    cJSON *wl = cJSON_GetObjectItemCaseSensitive(s[0].summary, "wavelengths_m");
    size_t n_wl = (size_t)cJSON_GetArraySize(wl);
    double *lam = dpz__calloc(n_wl ? n_wl : 1, sizeof *lam);
    owner = dpz__malloc((n_wl ? n_wl : 1) * sizeof *owner);
    group = dpz__malloc((n_wl ? n_wl : 1) * sizeof *group);
    if (!lam || !owner || !group) {
        free(lam);
        st = dpz_err_set(err, DPZ_ENOMEM, "merge: out of memory");
        goto done;
    }
    {
        size_t p = 0;
        for (cJSON *w = wl->child; w; w = w->next, p++) {
            lam[p] = cJSON_IsNumber(w) ? w->valuedouble : -1.0;
            owner[p] = SIZE_MAX;
        }
    }
    for (size_t i = 0; i < n_dirs && st == DPZ_OK; i++) {
        const dpz_table *tb = &s[i].table[DPZ_TABLE_ALPHA];
        for (size_t g = 0; g < tb->n_groups; g++) {
            size_t p = 0;
            while (p < n_wl &&
                   !dpz_sweep_same_wavelength(lam[p], tb->groups[g].lambda0_m))
                p++;
            if (p == n_wl) {
                st = dpz_err_set(
                    err, DPZ_EFORMAT,
                    "merge: %s/alpha.csv: line %zu: wavelength %.12g m is not "
                    "in the run's wavelength list",
                    s[i].dir, tb->groups[g].first_line, tb->groups[g].lambda0_m);
                break;
            }
            if (owner[p] != SIZE_MAX) {
                st = dpz_err_set(
                    err, DPZ_EINVAL,
                    "merge: wavelength %.12g m (position %zu) is in both %s and "
                    "%s",
                    lam[p], p, s[owner[p]].dir, s[i].dir);
                break;
            }
            owner[p] = i;
            group[p] = g;
        }
    }
    if (st == DPZ_OK)
        for (size_t p = 0; p < n_wl; p++)
            if (owner[p] == SIZE_MAX) {
                st = dpz_err_set(
                    err, DPZ_EINVAL,
                    "merge: wavelength %.12g m (position %zu of %zu) is in none "
                    "of the given directories (a shard missing or unfinished)",
                    lam[p], p, n_wl);
                break;
            }
    free(lam);
    if (st != DPZ_OK)
        goto done;

    /* static.json of the first shard (every shard computed it from the same inputs). */
    {
        char path[4096];
        size_t len;
        snprintf(path, sizeof path, "%s/static.json", s[0].dir);
        if ((st = dpz_sweep_read_file(path, &static_text, &len, err)) != DPZ_OK)
            goto done;
    }
    /* The merged summary: the first shard's inputs, one shard of one, all results. */
    merged = cJSON_Duplicate(s[0].summary, 1);
    cJSON *results = cJSON_CreateArray();
    cJSON *shard = cJSON_CreateObject();
    if (!merged || !results || !shard) {
        cJSON_Delete(results);
        cJSON_Delete(shard);
        st = dpz_err_set(err, DPZ_ENOMEM, "merge: out of memory");
        goto done;
    }
    cJSON_AddNumberToObject(shard, "index", 0);
    cJSON_AddNumberToObject(shard, "count", 1);
    set_item(merged, "shard", shard);
    set_item(merged, "results", results);
    for (size_t p = 0; p < n_wl; p++) {
        cJSON *r = cJSON_GetArrayItem(s[owner[p]].results, (int)group[p]);
        cJSON *copy = cJSON_Duplicate(r, 1);
        if (!copy) {
            st = dpz_err_set(err, DPZ_ENOMEM, "merge: out of memory");
            goto done;
        }
        set_item(copy, "position", cJSON_CreateNumber((double)p));
        cJSON_AddItemToArray(results, copy);
    }
    set_item(merged, "finished", cJSON_CreateTrue());

    /* Write everything into a fresh directory beside OUT, then rename it into place. */
    {
        /* "OUT/" and "OUT" name the same directory; the temporary one goes beside it. */
        size_t ol = strlen(out);
        while (ol > 1 && out[ol - 1] == '/')
            ol--;
        snprintf(tmpdir, sizeof tmpdir, "%.*s.merging.%ld", (int)ol, out, (long)getpid());
    }
    if (mkdir(tmpdir, 0755) != 0) {
        st = dpz_err_set(err, DPZ_EIO, "merge: cannot create %s: %s", tmpdir,
                         strerror(errno));
        tmpdir[0] = '\0';
        goto done;
    }
    for (int t = 0; t < DPZ_TABLE_COUNT && st == DPZ_OK; t++) {
        size_t total = s[0].table[t].head_end;
        for (size_t p = 0; p < n_wl; p++) {
            const dpz_table_group *g = &s[owner[p]].table[t].groups[group[p]];
            total += g->end - g->begin;
        }
        free(buf);
        buf = dpz__malloc(total ? total : 1);
        if (!buf) {
            st = dpz_err_set(err, DPZ_ENOMEM, "merge: out of memory");
            break;
        }
        memcpy(buf, s[0].table_buf[t], s[0].table[t].head_end);
        size_t pos = s[0].table[t].head_end;
        for (size_t p = 0; p < n_wl; p++) {
            const dpz_table_group *g = &s[owner[p]].table[t].groups[group[p]];
            memcpy(buf + pos, s[owner[p]].table_buf[t] + g->begin, g->end - g->begin);
            pos += g->end - g->begin;
        }
        st = dpz_sweep_write_atomic(tmpdir, dpz_sweep_table_file((dpz_table_kind)t), buf,
                                    total, err);
    }
    if (st == DPZ_OK)
        st = dpz_sweep_write_atomic(tmpdir, "static.json", static_text,
                                    strlen(static_text), err);
    if (st == DPZ_OK) {
        char *text = cJSON_Print(merged);
        if (!text) {
            st = dpz_err_set(err, DPZ_ENOMEM, "merge: out of memory");
        } else {
            size_t tl = strlen(text);
            char *nl = malloc(tl + 2);
            if (nl) {
                memcpy(nl, text, tl);
                nl[tl] = '\n';
                nl[tl + 1] = '\0';
                st = dpz_sweep_write_atomic(tmpdir, "summary.json", nl, tl + 1, err);
                free(nl);
            } else {
                st = dpz_err_set(err, DPZ_ENOMEM, "merge: out of memory");
            }
            cJSON_free(text);
        }
    }
    if (st == DPZ_OK) {
        if (exists)
            rmdir(out);
        if (rename(tmpdir, out) != 0)
            st = dpz_err_set(err, DPZ_EIO, "merge: cannot rename %s to %s: %s", tmpdir,
                             out, strerror(errno));
        else
            tmpdir[0] = '\0';
    }
done:
    if (tmpdir[0])
        remove_tree_shallow(tmpdir);
    cJSON_Delete(merged);
    free(buf);
    free(static_text);
    free(owner);
    free(group);
    for (size_t i = 0; i < n_dirs; i++)
        shard_free(&s[i]);
    free(s);
    return st;
}

static void merge_usage(FILE *f)
{
    fprintf(
        f,
        "usage: dipolize merge DIR... -o OUT\n"
        "\n"
        "Combines the directories written by `dipolize sweep ... --shard I/N` (one per\n"
        "shard) into OUT, which then holds the same files as a single run over the\n"
        "whole wavelength list: alpha.csv, cross_sections.csv, diagnostics.csv with\n"
        "rows in wavelength order, static.json and summary.json.\n"
        "\n"
        "Checks before writing anything: every directory was made with the same\n"
        "inputs (geometry hash, materials, options, program version, full wavelength\n"
        "list), every wavelength appears exactly once, and no table is damaged or\n"
        "unfinished. Any problem: one message and exit code 2, nothing written.\n"
        "\n"
        "options:\n"
        "  -o, --output OUT   output directory (must not exist, or be empty)\n"
        "  --quiet            no summary line on stderr\n"
        "  -h, --help         this text\n"
        "\n"
        "example:\n"
        "  dipolize merge run.0 run.1 run.2 run.3 -o run\n");
}

int dpz_cli_merge(int argc, char **argv)
{
    const char *out = NULL;
    int quiet = 0;
    const char **dirs = calloc((size_t)(argc > 0 ? argc : 1), sizeof *dirs);
    size_t n = 0;
    if (!dirs) {
        cli_fail("merge: out of memory");
        return CLI_FAILED;
    }
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (strcmp(a, "-h") == 0 || strcmp(a, "--help") == 0) {
            merge_usage(stdout);
            free(dirs);
            return 0;
        } else if (strcmp(a, "-o") == 0 || strcmp(a, "--output") == 0) {
            if (i + 1 >= argc) {
                free(dirs);
                return cli_fail("merge: %s needs a directory", a);
            }
            out = argv[++i];
        } else if (strcmp(a, "--quiet") == 0) {
            quiet = 1;
        } else if (a[0] == '-' && a[1] != '\0') {
            free(dirs);
            return cli_fail("merge: unknown option %s (see dipolize merge --help)", a);
        } else {
            dirs[n++] = a;
        }
    }
    if (!out || n == 0) {
        free(dirs);
        return cli_fail("merge: %s (usage: dipolize merge DIR... -o OUT)",
                        !out ? "no output directory (-o OUT)"
                             : "no shard directories given");
    }
    dpz_err err;
    dpz_err_clear(&err);
    dpz_status st = dpz_sweep_merge(dirs, n, out, &err);
    free(dirs);
    if (st != DPZ_OK) {
        cli_fail("%s", err.msg);
        return st == DPZ_ENOMEM ? CLI_FAILED : CLI_USAGE;
    }
    if (!quiet)
        fprintf(stderr, "dipolize: merge: %zu director%s merged into %s\n", n,
                n == 1 ? "y" : "ies", out);
    return CLI_OK;
}
