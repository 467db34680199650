/* wisdom.c: FFTW wisdom files (see dpz_wisdom.h; FFTW 3 manual, sec. "Words of
 * Wisdom-Saving Plans"). */
#include "dpz_wisdom.h"

#include <errno.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include <fftw3.h>

#include "solver_int.h"

dpz_status dpz_wisdom_load(const char *path, int *loaded, dpz_err *err)
{
    if (loaded)
        *loaded = 0;
    if (!path || !*path)
        return dpz_err_set(err, DPZ_EINVAL, "wisdom: no file name");
    /* Wisdom records the planner's set of algorithms, threaded ones included: register
     * them first, as every operator does before planning, or the file will not load. */
    if (dpz__fftw_threads_init() != 0)
        return dpz_err_set(err, DPZ_EFFTW, "wisdom: fftw_init_threads failed");
    FILE *f = fopen(path, "r");
    if (!f) {
        if (errno == ENOENT)
            return DPZ_OK;
        return dpz_err_set(err, DPZ_EIO, "wisdom: %s: %s", path, strerror(errno));
    }
    int ok = fftw_import_wisdom_from_file(f);
    int rerr = ferror(f);
    fclose(f);
    if (rerr)
        return dpz_err_set(err, DPZ_EIO, "wisdom: %s: read error", path);
    if (!ok)
        return dpz_err_set(err, DPZ_EFORMAT,
                           "wisdom: %s: not FFTW wisdom of this FFTW version and "
                           "precision (delete it to start afresh)",
                           path);
    if (loaded)
        *loaded = 1;
    return DPZ_OK;
}

dpz_status dpz_wisdom_save(const char *path, dpz_err *err)
{
    if (!path || !*path)
        return dpz_err_set(err, DPZ_EINVAL, "wisdom: no file name");
    char tmp[4096];
    int len = snprintf(tmp, sizeof tmp, "%s.tmp.%ld", path, (long)getpid());
    if (len < 0 || (size_t)len >= sizeof tmp)
        return dpz_err_set(err, DPZ_EINVAL, "wisdom: file name too long");
    FILE *f = fopen(tmp, "w");
    if (!f)
        return dpz_err_set(err, DPZ_EIO, "wisdom: %s: %s", tmp, strerror(errno));
    fftw_export_wisdom_to_file(f);
    int bad = ferror(f) != 0;
    bad |= fclose(f) != 0;
    if (bad || rename(tmp, path) != 0) {
        int e = errno;
        remove(tmp);
        return dpz_err_set(err, DPZ_EIO, "wisdom: cannot write %s: %s", path,
                           bad ? "write error" : strerror(e));
    }
    return DPZ_OK;
}
