/* dpz_stl.h: closed triangle meshes from STL files and their voxelization.
 *
 * STL (the stereolithography format; 3D Systems, "StereoLithography Interface
 * Specification", 1989) comes as ASCII ("solid ... facet normal ... outer loop / vertex x
 * y z / endloop / endfacet ... endsolid") or binary (80-byte header, little-endian uint32
 * triangle count, then 50 bytes per triangle: normal and three vertices as little-endian
 * float32, and a 2-byte attribute). A file is taken as binary when its size is exactly
 * 84 + 50 n for the count n in its header (binary files may start with "solid" too), else
 * as ASCII when it starts with "solid". Stored normals are ignored: orientation comes
 * from the vertex order.
 *
 * Coordinates are multiplied by `unit_m`, the length of one mesh unit in metres (1e-9 for
 * a mesh drawn in nanometres), given by the caller: STL stores no unit. The mesh must be
 * closed: after merging identical vertices every edge must be shared by exactly two
 * triangles traversing it in opposite directions. A mesh whose triangles all wind
 * inwards (negative signed volume) is turned around. */
#ifndef DPZ_MESH_STL_H
#define DPZ_MESH_STL_H

#include <stddef.h>

#include "dpz_common.h"
#include "dpz_grid.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct dpz_mesh {
    size_t n_tri; /* number of triangles */
    double *xyz;  /* 9 * n_tri coordinates, m: vertices a, b, c of each triangle,
                     ordered counter-clockwise seen from outside */
    double lo[3]; /* bounding box corners, m */
    double hi[3];
    double volume_m3; /* enclosed volume, m^3 (> 0) */
    int flipped;      /* 1 when the input wound inwards and was turned around */
    double unit_m;    /* metres per mesh unit used when reading */
    char name[512];   /* file name or buffer name, for records and messages */
} dpz_mesh;

/* Builds a mesh from n_tri triangles (xyz_m: 9 * n_tri coordinates in metres, copied).
 * Checks: n_tri > 0, finite coordinates, closed and consistently oriented (the message
 * counts open and wrongly oriented edges and shows one), non-zero volume. `name` (may be
 * NULL) is used in messages and records. DPZ_EFORMAT / DPZ_EINVAL / DPZ_ENOMEM. */
dpz_status dpz_mesh_from_triangles(dpz_mesh **out, const double *xyz_m, size_t n_tri,
                                   const char *name, double unit_m, dpz_err *err);

void dpz_mesh_destroy(dpz_mesh *mesh); /* NULL is a no-op */

/* Reads an ASCII or binary STL from buf[0..len); unit_m (> 0, finite) metres per mesh
 * unit. Messages name the file and the line (ASCII) or byte offset (binary):
 * "stl reader: part.stl: line 12: expected 'vertex'". */
dpz_status dpz_stl_read(dpz_mesh **out, const char *buf, size_t len, const char *name,
                        double unit_m, dpz_err *err);
dpz_status dpz_stl_read_file(dpz_mesh **out, const char *path, double unit_m,
                             dpz_err *err);

/* Signed volume by the divergence theorem, sum over triangles of a . (b x c) / 6 (Zhang
 * and Chen, "Efficient feature extraction for 2D/3D objects in mesh representation",
 * ICIP 2001; cited from memory), m^3; positive for an outward-wound closed mesh. */
double dpz_mesh_signed_volume(const double *xyz_m, size_t n_tri);

/* Voxelizes the mesh on a lattice of spacing d_m (m) centred on the mesh bounding box
 * (the same symmetric lattice rule as dpz_shape_voxelize). Inside test: for each of the
 * three axis directions, rays through the voxel centres cross the triangles; a point is
 * inside for that direction when the signed crossings beyond it (+1 leaving, -1 entering)
 * do not sum to zero. Points of a ray that fall exactly on a projected edge or vertex are
 * given to exactly one of the triangles that share it: edge functions (Pineda, "A
 * parallel algorithm for polygon rasterization", SIGGRAPH 1988) are evaluated with the
 * endpoints in one canonical order, so that both triangles of an edge see the same value,
 * and zeros are broken by the top-left fill rule on counter-clockwise-normalized
 * triangles (common practice in GPU rasterization); rays through edges and vertices
 * therefore do not flip voxels; the three
 * directions then vote (two of three) against rounding in near-degenerate triangles.
 * Occupied voxels get label 1. With fractions != 0, rays along x at subsamples^2 sample
 * rows per voxel give fill fractions over subsamples^3 points per voxel (1..16); a voxel
 * is occupied when its fraction is > 0. source_kind = DPZ_SOURCE_MESH, source =
 * "dipolize-mesh v1 unit=U path=NAME". DPZ_EINVAL, DPZ_ELIMIT (max_cells; 0 means the
 * default), DPZ_ENOMEM. */
dpz_status dpz_stl_voxelize(dpz_grid **out, const dpz_mesh *mesh, double d_m,
                            int fractions, int subsamples, size_t max_cells,
                            dpz_err *err);

/* Reads the STL file at `path` (unit_m metres per mesh unit) and voxelizes it as
 * dpz_stl_voxelize does (4 sub-samples per voxel edge when fractions != 0). When
 * mesh_volume_m3 is not NULL it receives the mesh volume (m^3), to report beside the
 * voxel volume dpz_grid_volume(*out). */
dpz_status dpz_stl_voxelize_file(dpz_grid **out, const char *path, double unit_m,
                                 double d_m, int fractions, size_t max_cells,
                                 double *mesh_volume_m3, dpz_err *err);

/* The mesh volume and the voxel volume of a grid made from it, m^3, side by side. */
void dpz_stl_volumes(const dpz_mesh *mesh, const dpz_grid *grid, double *mesh_m3,
                     double *voxel_m3);

/* Parses a mesh record "dipolize-mesh v1 unit=U path=P" (P may contain spaces) into the
 * unit in metres and the path (copied into path, of size path_len). DPZ_EFORMAT. */
dpz_status dpz_mesh_parse_record(const char *record, double *unit_m, char *path,
                                 size_t path_len, dpz_err *err);

#define DPZ_MESH_RECORD_PREFIX "dipolize-mesh v1 "

#ifdef __cplusplus
}
#endif
#endif
