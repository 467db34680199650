/* mesh_int.h: declarations shared by the files of mesh/ only. */
#ifndef DPZ_MESH_MESH_INT_H
#define DPZ_MESH_MESH_INT_H

#include <stddef.h>

#include "dpz_common.h"
#include "dpz_grid.h"

/* pi to double precision (M_PI is not part of strict C17). */
#define DPZ_PI 3.14159265358979323846

/* Voxel count along one axis of a lattice placed symmetrically about a centre, for a
 * half extent of q voxels (see dpz_shape_voxelize): odd count (a voxel centre on the
 * centre) or even count (a face on it), whichever keeps voxel centres farther from the
 * bounding planes; `extra` widens the range (0.5 with fill fractions). */
double dpz__axis_count(double q, double extra);

/* Base name of a path, for messages. */
const char *dpz__basename(const char *path);

#endif
