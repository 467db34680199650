/* fileio.c: whole-file reads (dpz_fileio.h) and names of paths for messages. */
#include "dpz_fileio.h"

#include "mesh_int.h"

#include <errno.h>
#include <stdio.h>
#include <string.h>

dpz_status dpz_file_read_all(const char *path, const char *who, size_t max_bytes,
                             char **buf, size_t *len, dpz_err *err)
{
    *buf = NULL;
    *len = 0;
    /* Messages read "WHO: PATH: ..." or, without `who`, "PATH: ...". */
    const char *sep = who ? ": " : "";
    if (!who)
        who = "";
    if (!path)
        return dpz_err_set(err, DPZ_EINVAL, "%s%sNULL path", who, sep);
    FILE *f = fopen(path, "rb");
    if (!f)
        return dpz_err_set(err, DPZ_EIO, "%s%s%s: cannot open: %s", who, sep, path,
                           strerror(errno));
    size_t cap = 1 << 16, n = 0;
    char *data = dpz__malloc(cap + 1);
    if (!data) {
        fclose(f);
        return dpz_err_set(err, DPZ_ENOMEM, "%s%s%s: out of memory", who, sep, path);
    }
    for (;;) {
        if (n == cap) {
            if (cap > ((size_t)-1 - 1) / 2) {
                dpz__free(data);
                fclose(f);
                return dpz_err_set(err, DPZ_ELIMIT, "%s%s%s: file too large", who, sep,
                                   path);
            }
            char *bigger = dpz__realloc(data, 2 * cap + 1);
            if (!bigger) {
                dpz__free(data);
                fclose(f);
                return dpz_err_set(err, DPZ_ENOMEM,
                                   "%s%s%s: out of memory after %zu bytes", who, sep,
                                   path, n);
            }
            data = bigger;
            cap *= 2;
        }
        size_t got = fread(data + n, 1, cap - n, f);
        n += got;
        if (max_bytes != 0 && n > max_bytes) {
            dpz__free(data);
            fclose(f);
            return dpz_err_set(err, DPZ_ELIMIT,
                               "%s%s%s: larger than the limit of %zu bytes", who, sep,
                               path, max_bytes);
        }
        if (got == 0)
            break;
    }
    int bad = ferror(f);
    fclose(f);
    if (bad) {
        dpz__free(data);
        return dpz_err_set(err, DPZ_EIO, "%s%s%s: read error", who, sep, path);
    }
    data[n] = '\0';
    *buf = data;
    *len = n;
    return DPZ_OK;
}

const char *dpz__basename(const char *path)
{
    if (!path)
        return "(buffer)";
    const char *slash = strrchr(path, '/');
    return slash ? slash + 1 : path;
}
