/* dpz_wisdom.h: FFTW wisdom (the planner's memory of the fastest algorithms) in a file,
 * so that a batch of jobs on one kind of machine plans once: the first job measures and
 * saves, the others load and reuse the same plans. Loading wisdom also makes
 * measure-planned runs repeatable: with the same wisdom, FFTW picks the same algorithms,
 * whereas fresh FFTW_MEASURE planning may pick different ones from run to run (results
 * then differ in the last bits).
 *
 * Call from one thread, before creating operators (load) and after (save): FFTW's
 * planner and its wisdom are process-wide and not thread-safe. */
#ifndef DPZ_SOLVER_WISDOM_H
#define DPZ_SOLVER_WISDOM_H

#include "dpz_common.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Adds the wisdom in `path` to the process's wisdom. A file that does not exist is not an
 * error (*loaded = 0: the first job of a batch creates it); *loaded = 1 after a load.
 * DPZ_EINVAL for a NULL path; DPZ_EFORMAT when the file exists but is not FFTW wisdom
 * (or was written by an FFTW of another precision or version); DPZ_EIO when it exists
 * but cannot be read. */
dpz_status dpz_wisdom_load(const char *path, int *loaded, dpz_err *err);

/* Writes the process's wisdom (what was loaded plus everything planned since) to `path`,
 * atomically: into a temporary file beside it, then renamed, so that concurrent jobs
 * saving the same file never leave a half-written one. DPZ_EIO on failure (nothing is
 * left behind). */
dpz_status dpz_wisdom_save(const char *path, dpz_err *err);

#ifdef __cplusplus
}
#endif
#endif
