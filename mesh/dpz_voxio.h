/* dpz_voxio.h: voxel files: VTK legacy STRUCTURED_POINTS (read ASCII and BINARY, write
 * BINARY), NumPy .npy (read) and CSV "i,j,k,label" (read).
 *
 * Every reader parses a memory buffer (so that it can be fuzzed) and has a path wrapper.
 * `name` names the input in messages (NULL: "(buffer)"). `max_cells` bounds nx*ny*nz
 * (0 means DPZ_GRID_DEFAULT_MAX_CELLS); a larger file gives DPZ_ELIMIT with a message
 * saying how many voxels it has and that the limit can be raised. Malformed input gives
 * DPZ_EFORMAT (or DPZ_ERANGE for values out of range) with a message of the form
 * "vtk reader: FILE: line 5: ..." or "npy reader: FILE: byte 10: ..."; a missing file
 * DPZ_EIO; allocation failure DPZ_ENOMEM. On failure *out is NULL. Readers return a grid
 * whose occupied list is built.
 *
 * VTK conventions (legacy format, Kitware, "VTK File Formats", VTK User's Guide 11th ed.,
 * 2010, ch. 19): lengths in metres. Written files use POINT_DATA: DIMENSIONS nx ny nz
 * count voxels, each point is a voxel centre, ORIGIN is the centre of voxel (0,0,0) and
 * SPACING is d on all three axes; data are big-endian, x fastest (converted to the
 * grid's k-fastest layout). Scalars "labels" (unsigned_char) and, when the grid has fill
 * fractions, "fill" (float). The title line records the geometry source: "dipolize voxels
 * v1" for a plain voxel set, else the grid's `source` record (a shape record
 * "dipolize-shape v1 ..." or a mesh record "dipolize-mesh v1 ..."), which the reader
 * turns back into source_kind and source. Reading accepts POINT_DATA as above and
 * CELL_DATA (then DIMENSIONS count points, voxels = points - 1 per axis, and ORIGIN is
 * the corner of the first voxel); scalar types unsigned_char, char, short,
 * unsigned_short, int, unsigned_int, float and double holding integral values 0..255;
 * the first SCALARS array not named "fill" (or a FIELD array named "labels") gives the
 * labels; an array named "fill" (values in [0, 1]) gives fill fractions; other FIELD
 * arrays and METADATA blocks (as written by recent VTK versions) are skipped; SPACING
 * must be equal on all three axes. */
#ifndef DPZ_MESH_VOXIO_H
#define DPZ_MESH_VOXIO_H

#include <stddef.h>

#include "dpz_common.h"
#include "dpz_grid.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Title line of a plain voxel set. */
#define DPZ_VTK_TITLE_VOXELS "dipolize voxels v1"

/* Reads a VTK legacy STRUCTURED_POINTS file from buf[0..len). */
dpz_status dpz_vtk_read(dpz_grid **out, const char *buf, size_t len, const char *name,
                        size_t max_cells, dpz_err *err);
dpz_status dpz_vtk_read_file(dpz_grid **out, const char *path, size_t max_cells,
                             dpz_err *err);

/* Writes the grid as BINARY VTK (see above) through a temporary file in the same
 * directory renamed into place, so that a failure leaves no partial file. DPZ_EINVAL
 * for a grid whose source record contains a line break, DPZ_EIO on write failure. */
dpz_status dpz_vtk_write_file(const dpz_grid *grid, const char *path, dpz_err *err);

/* Reads a NumPy .npy array (format versions 1.0, 2.0 and 3.0; NumPy Enhancement
 * Proposal 1, "A simple file format for NumPy arrays", 2007). The array must be 3-D,
 * indexed [i][j][k] (C order; fortran_order True is converted), with dtype |b1, |u1, |i1,
 * <i2, >i2, <u2, >u2, <i4, >i4, <u4, >u4, <i8, >i8, <u8 or >u8 and values 0..255.
 * spacing_m (> 0, finite, m) is the voxel edge; the grid is centred on (0, 0, 0). */
dpz_status dpz_npy_read(dpz_grid **out, const char *buf, size_t len, const char *name,
                        double spacing_m, size_t max_cells, dpz_err *err);
dpz_status dpz_npy_read_file(dpz_grid **out, const char *path, double spacing_m,
                             size_t max_cells, dpz_err *err);

/* Reads CSV lines "i,j,k,label" (non-negative integer indices, label 0..255; spaces
 * around fields allowed). An optional header line whose first field is not a number
 * ("i,j,k,label"), blank lines and '#' comments (whole lines or trailing) are skipped;
 * a voxel listed twice is refused. The grid has (max index + 1) voxels per axis,
 * spacing_m (> 0, finite, m), and is centred on (0, 0, 0). */
dpz_status dpz_csvvox_read(dpz_grid **out, const char *buf, size_t len, const char *name,
                           double spacing_m, size_t max_cells, dpz_err *err);
dpz_status dpz_csvvox_read_file(dpz_grid **out, const char *path, double spacing_m,
                                size_t max_cells, dpz_err *err);

/* Reads any voxel file: VTK and NumPy files are recognised by their first bytes, CSV by
 * the extension .csv (or, without a known extension, by content). spacing_m is the voxel
 * edge in m for .npy and .csv (0 if not given: then DPZ_EINVAL says that a spacing is
 * required); VTK files carry their own spacing and spacing_m is ignored. An STL file is
 * refused with a message pointing to the STL voxelizer. */
dpz_status dpz_voxfile_read(dpz_grid **out, const char *path, double spacing_m,
                            size_t max_cells, dpz_err *err);

#ifdef __cplusplus
}
#endif
#endif
