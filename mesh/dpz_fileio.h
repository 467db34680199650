/* dpz_fileio.h: whole-file reads shared by every reader of the library and the program
 * (voxel files, meshes, material tables, wavelength lists). */
#ifndef DPZ_MESH_FILEIO_H
#define DPZ_MESH_FILEIO_H

#include <stddef.h>

#include "dpz_common.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Reads the file at `path` into a new NUL-terminated buffer (free it with dpz__free);
 * *len excludes the NUL. `who` prefixes error messages ("vtk reader: PATH: ..."; NULL
 * for "PATH: ..."). Files
 * larger than `max_bytes` (0: no limit) are refused with DPZ_ELIMIT. Statuses: DPZ_EINVAL
 * (NULL path), DPZ_EIO (cannot open, read error), DPZ_ELIMIT, DPZ_ENOMEM. */
dpz_status dpz_file_read_all(const char *path, const char *who, size_t max_bytes,
                             char **buf, size_t *len, dpz_err *err);

#ifdef __cplusplus
}
#endif
#endif
