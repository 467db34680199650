/* dpz_shape.h: built-in parametric shapes and their voxelization.
 *
 * Every length is in metres, every angle in radians. A shape is defined in its own body
 * frame, centred on the origin, and rotated actively by the Euler angles (A, B, G) in the
 * z-y-z convention: R = Rz(A) Ry(B) Rz(G), so the columns of R are the shape's own axes
 * written in the grid frame, and a grid-frame point r lies in the shape when R^T r lies
 * in the unrotated shape. Body-frame definitions (all boundaries inclusive): sphere |r|
 * <= radius ellipsoid   (x/a)^2 + (y/b)^2 + (z/c)^2 <= 1, semi = (a, b, c) box |x| <=
 * X/2, |y| <= Y/2, |z| <= Z/2, size = (X, Y, Z) cylinder    distance from `axis` <=
 * radius, |coordinate along axis| <= height/2 ring        axis z: inner <= sqrt(x^2 +
 * y^2) <= outer, |z| <= thickness/2 split-ring  the ring without the slot x > 0, |y| <
 * gap/2 (gap centred on +x) helix       axis z: every point within wire_radius of the
 * centre line (coil_radius cos t, s coil_radius sin t, pitch t/(2 pi) - pitch turns/2),
 *               0 <= t <= 2 pi turns, s = +1 right-handed, -1 left-handed; the ends are
 *               therefore hemispherical caps
 *   cross       two bars in the xy plane, |x| <= L/2 and |y| <= W/2, or |y| <= L/2 and
 *               |x| <= W/2 (L = arm_length tip to tip, W = arm_width), |z| <= thickness/2
 *   dimer       two spheres of `radius` centred at x = +-(radius + gap/2)
 *   core-shell  |r| <= radius has label `label` (core), radius < |r| <= radius + shell
 * has label `label` + 1 (shell): labels 1 and 2 by default A voxel belongs to the shape
 * when its centre does. */
#ifndef DPZ_MESH_SHAPE_H
#define DPZ_MESH_SHAPE_H

#include <stddef.h>

#include "dpz_common.h"
#include "dpz_grid.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef enum {
    DPZ_SHAPE_SPHERE = 0,
    DPZ_SHAPE_ELLIPSOID,
    DPZ_SHAPE_BOX,
    DPZ_SHAPE_CYLINDER,
    DPZ_SHAPE_RING,
    DPZ_SHAPE_SPLIT_RING,
    DPZ_SHAPE_HELIX,
    DPZ_SHAPE_CROSS,
    DPZ_SHAPE_DIMER,
    DPZ_SHAPE_CORE_SHELL,
    DPZ_SHAPE_KIND_COUNT
} dpz_shape_kind;

/* A shape: only the fields of its kind are read (see the table above). Initialise with
 * dpz_shape_init, which zeroes every field and sets label 1 and no rotation. */
typedef struct dpz_shape {
    dpz_shape_kind kind;
    double radius;      /* sphere, cylinder, dimer (each sphere), core-shell core, m */
    double semi[3];     /* ellipsoid semi-axes a, b, c along body x, y, z, m */
    double size[3];     /* box edges along body x, y, z, m */
    double height;      /* cylinder length along its axis, m */
    int axis;           /* cylinder axis: 0 = x, 1 = y, 2 = z */
    double outer;       /* ring, split-ring outer radius, m */
    double inner;       /* ring, split-ring inner radius, m */
    double thickness;   /* ring, split-ring, cross extent along body z, m */
    double gap;         /* split-ring slot width (m); dimer surface-to-surface gap, m */
    double coil_radius; /* helix: radius of the centre line, m */
    double wire_radius; /* helix: radius of the wire, m */
    double pitch;       /* helix: rise per turn, m */
    double turns;       /* helix: number of turns (> 0, need not be an integer) */
    int left;           /* helix: nonzero for left-handed */
    double arm_length;  /* cross: tip-to-tip length of each bar, m */
    double arm_width;   /* cross: width of each bar, m */
    double shell;       /* core-shell: shell thickness, m */
    double euler[3];    /* active rotation angles A, B, G (z-y-z), rad */
    int label;          /* material label 1..255 (core-shell: 1..254, shell gets +1) */
} dpz_shape;

/* Zeroes `s`, sets its kind, label 1 and no rotation. */
void dpz_shape_init(dpz_shape *s, dpz_shape_kind kind);

/* Canonical name of a kind ("split-ring"), NULL for an invalid kind. */
const char *dpz_shape_kind_name(dpz_shape_kind kind);
/* Kind from its name; DPZ_EINVAL (with the list of names) when unknown. */
dpz_status dpz_shape_kind_from_name(const char *name, dpz_shape_kind *kind, dpz_err *err);

/* Checks the parameters of the shape's kind: every length positive and finite (the dimer
 * gap may be 0), inner < outer, split-ring gap < 2 outer, helix wire radius < coil
 * radius, cross arm width <= arm length, finite Euler angles, label in range.
 * DPZ_EINVAL with a message naming the parameter. */
dpz_status dpz_shape_validate(const dpz_shape *s, dpz_err *err);

/* Label of the point r (grid frame, m, relative to the shape centre): 0 outside.
 * The shape must be valid. Computes the rotation on every call: for many points use
 * dpz_shape_voxelize. */
int dpz_shape_label_at(const dpz_shape *s, const double r[3]);

/* Analytic volume of the shape, m^3 (all labels together). Returns a negative value when
 * no closed form applies (a helix whose neighbouring turns overlap). Formulas: sphere
 * and ellipsoid 4 pi abc/3; split ring: ring minus the slot, whose area in a disc of
 * radius r is g sqrt(r^2-g^2) + r^2 asin(g/r) with g = gap/2 (elementary integration);
 * helix: Pappus-Guldin theorem for a tube, pi w^2 L + 4 pi w^3/3 (caps), L the
 * centre-line length turns * sqrt((2 pi R)^2 + pitch^2). */
double dpz_shape_volume(const dpz_shape *s);

/* Half-extents (m) of the axis-aligned bounding box of the rotated shape in the grid
 * frame. */
void dpz_shape_half_extent(const dpz_shape *s, double h[3]);

/* Voxelizes the shape on a lattice of spacing d_m (m).
 * Grid: per axis the lattice is placed symmetrically about the shape centre, either with
 * a voxel centre on it (odd count) or a voxel face on it (even count); the choice keeps
 * voxel centres as far as possible from the bounding planes (so that a box of 10 voxels
 * edge gets exactly 10 voxels), ties going to the odd count. The grid covers the rotated
 * bounding box plus at most one voxel per axis (with fractions: plus at most two, so that
 * every voxel overlapping the shape is present). Mirror symmetries of the shape about the
 * grid planes are therefore kept exactly by the voxel set.
 * fractions == 0: a voxel takes the label of its centre.
 * fractions != 0: each voxel is sampled at subsamples^3 points (centres of its sub-cells,
 * 1 <= subsamples <= 16); grid->fill receives the fraction of samples inside the shape;
 * a voxel is occupied when that fraction is > 0, and its label is the label covering most
 * of its samples (ties: the lower label). Voxels that a distance bound shows to lie
 * wholly inside or outside one label are not sampled (same result, far less work: only
 * the boundary layer is sampled).
 * The grid is centred on the shape centre (0,0,0), source_kind = DPZ_SOURCE_SHAPE and
 * source = dpz_shape_format(s). Statuses: DPZ_EINVAL (invalid shape or spacing),
 * DPZ_ELIMIT (more than max_cells voxels; 0 means DPZ_GRID_DEFAULT_MAX_CELLS),
 * DPZ_ENOMEM. */
dpz_status dpz_shape_voxelize(dpz_grid **out, const dpz_shape *s, double d_m,
                              int fractions, int subsamples, size_t max_cells,
                              dpz_err *err);

/* Canonical one-line record of the shape, SI units, numbers in the shortest form that
 * reads back to the same double, e.g.
 *     "dipolize-shape v1 sphere radius=2e-08 euler=0,0,0 label=1".
 * Keys per kind: sphere radius; ellipsoid semi-axes=a,b,c; box size=x,y,z; cylinder
 * radius height axis=x|y|z; ring outer-radius inner-radius thickness; split-ring the
 * same plus gap; helix coil-radius wire-radius pitch turns hand=right|left; cross
 * arm-length arm-width thickness; dimer radius gap; core-shell radius shell.
 * Returns DPZ_ERANGE if `len` is too small (buf then holds ""), DPZ_EINVAL for an
 * invalid kind. A record is at most DPZ_SHAPE_RECORD_MAX - 1 characters long. */
dpz_status dpz_shape_format(const dpz_shape *s, char *buf, size_t len);

/* Buffer size that holds any shape record. */
#define DPZ_SHAPE_RECORD_MAX 512

/* Parses a record written by dpz_shape_format (exact round trip) and validates it.
 * Every key of the kind is required, unknown or repeated keys are refused: DPZ_EFORMAT
 * or DPZ_EINVAL with a message. */
dpz_status dpz_shape_parse_record(const char *text, dpz_shape *out, dpz_err *err);

/* The prefix that starts every shape record. */
#define DPZ_SHAPE_RECORD_PREFIX "dipolize-shape v1 "

#ifdef __cplusplus
}
#endif
#endif
