/* shape.c: built-in parametric shapes (see dpz_shape.h): membership tests, analytic
 * volumes, bounding boxes, symmetric voxelization with optional fill fractions, and the
 * canonical text record that lets a voxel file be re-voxelized at another spacing. */
#include "dpz_shape.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "mesh_int.h"

static const char *const kind_names[DPZ_SHAPE_KIND_COUNT] = {
    "sphere",     "ellipsoid", "box",   "cylinder", "ring",
    "split-ring", "helix",     "cross", "dimer",    "core-shell"};

void dpz_shape_init(dpz_shape *s, dpz_shape_kind kind)
{
    memset(s, 0, sizeof *s);
    s->kind = kind;
    s->axis = 2;
    s->label = 1;
}

const char *dpz_shape_kind_name(dpz_shape_kind kind)
{
    if ((int)kind < 0 || kind >= DPZ_SHAPE_KIND_COUNT)
        return NULL;
    return kind_names[kind];
}

dpz_status dpz_shape_kind_from_name(const char *name, dpz_shape_kind *kind, dpz_err *err)
{
    for (int k = 0; k < DPZ_SHAPE_KIND_COUNT; k++)
        if (name && strcmp(name, kind_names[k]) == 0) {
            *kind = (dpz_shape_kind)k;
            return DPZ_OK;
        }
    return dpz_err_set(
        err, DPZ_EINVAL,
        "shape: unknown kind '%s' (known: sphere, ellipsoid, box, cylinder, "
        "ring, split-ring, helix, cross, dimer, core-shell)",
        name ? name : "(null)");
}

/* ---- validation ---- */

static int positive(double v)
{
    return v > 0.0 && isfinite(v);
}

#define REQUIRE_POSITIVE(field, text)                                                    \
    do {                                                                                 \
        if (!positive(s->field))                                                         \
            return dpz_err_set(err, DPZ_EINVAL,                                          \
                               "shape %s: %s must be positive and finite (got %g m)",    \
                               name, text, s->field);                                    \
    } while (0)

dpz_status dpz_shape_validate(const dpz_shape *s, dpz_err *err)
{
    if (!s)
        return dpz_err_set(err, DPZ_EINVAL, "shape: NULL shape");
    const char *name = dpz_shape_kind_name(s->kind);
    if (!name)
        return dpz_err_set(err, DPZ_EINVAL, "shape: invalid kind %d", (int)s->kind);
    for (int a = 0; a < 3; a++)
        if (!isfinite(s->euler[a]))
            return dpz_err_set(err, DPZ_EINVAL, "shape %s: Euler angle %d is not finite",
                               name, a + 1);
    int max_label = s->kind == DPZ_SHAPE_CORE_SHELL ? 254 : 255;
    if (s->label < 1 || s->label > max_label)
        return dpz_err_set(err, DPZ_EINVAL, "shape %s: label must be 1..%d (got %d)",
                           name, max_label, s->label);
    switch (s->kind) {
    case DPZ_SHAPE_SPHERE:
        REQUIRE_POSITIVE(radius, "radius");
        break;
    case DPZ_SHAPE_ELLIPSOID:
        REQUIRE_POSITIVE(semi[0], "semi-axis a");
        REQUIRE_POSITIVE(semi[1], "semi-axis b");
        REQUIRE_POSITIVE(semi[2], "semi-axis c");
        break;
    case DPZ_SHAPE_BOX:
        REQUIRE_POSITIVE(size[0], "size x");
        REQUIRE_POSITIVE(size[1], "size y");
        REQUIRE_POSITIVE(size[2], "size z");
        break;
    case DPZ_SHAPE_CYLINDER:
        REQUIRE_POSITIVE(radius, "radius");
        REQUIRE_POSITIVE(height, "height");
        if (s->axis < 0 || s->axis > 2)
            return dpz_err_set(err, DPZ_EINVAL, "shape cylinder: axis must be x, y or z");
        break;
    case DPZ_SHAPE_RING:
    case DPZ_SHAPE_SPLIT_RING:
        REQUIRE_POSITIVE(outer, "outer radius");
        REQUIRE_POSITIVE(inner, "inner radius");
        REQUIRE_POSITIVE(thickness, "thickness");
        if (s->inner >= s->outer)
            return dpz_err_set(
                err, DPZ_EINVAL,
                "shape %s: inner radius (%g m) must be smaller than the outer "
                "radius (%g m)",
                name, s->inner, s->outer);
        if (s->kind == DPZ_SHAPE_SPLIT_RING) {
            REQUIRE_POSITIVE(gap, "gap");
            if (s->gap >= 2.0 * s->outer)
                return dpz_err_set(
                    err, DPZ_EINVAL,
                    "shape split-ring: gap (%g m) must be smaller than the "
                    "outer diameter (%g m)",
                    s->gap, 2.0 * s->outer);
        }
        break;
    case DPZ_SHAPE_HELIX:
        REQUIRE_POSITIVE(coil_radius, "coil radius");
        REQUIRE_POSITIVE(wire_radius, "wire radius");
        REQUIRE_POSITIVE(pitch, "pitch");
        if (!(s->turns > 0.0) || !isfinite(s->turns) || s->turns > 1e6)
            return dpz_err_set(
                err, DPZ_EINVAL,
                "shape helix: turns must be positive, finite and at most 1e6 "
                "(got %g)",
                s->turns);
        if (s->wire_radius >= s->coil_radius)
            return dpz_err_set(
                err, DPZ_EINVAL,
                "shape helix: wire radius (%g m) must be smaller than the coil "
                "radius (%g m)",
                s->wire_radius, s->coil_radius);
        break;
    case DPZ_SHAPE_CROSS:
        REQUIRE_POSITIVE(arm_length, "arm length");
        REQUIRE_POSITIVE(arm_width, "arm width");
        REQUIRE_POSITIVE(thickness, "thickness");
        if (s->arm_width > s->arm_length)
            return dpz_err_set(
                err, DPZ_EINVAL,
                "shape cross: arm width (%g m) must not exceed the arm length "
                "(%g m)",
                s->arm_width, s->arm_length);
        break;
    case DPZ_SHAPE_DIMER:
        REQUIRE_POSITIVE(radius, "radius");
        if (!(s->gap >= 0.0) || !isfinite(s->gap))
            return dpz_err_set(
                err, DPZ_EINVAL,
                "shape dimer: gap must be non-negative and finite (got %g m)", s->gap);
        break;
    case DPZ_SHAPE_CORE_SHELL:
        REQUIRE_POSITIVE(radius, "core radius");
        REQUIRE_POSITIVE(shell, "shell thickness");
        break;
    default:
        return dpz_err_set(err, DPZ_EINVAL, "shape: invalid kind %d", (int)s->kind);
    }
    return DPZ_OK;
}

/* ---- rotation and membership ---- */

/* R = Rz(A) Ry(B) Rz(G), the z-y-z Euler rotation used for active rotations in angular
 * momentum theory (Edmonds, Angular Momentum in Quantum Mechanics, 1957, ch. 1; cited
 * from memory); the columns of R are the body axes in the grid frame. */
static void euler_matrix(const double e[3], double R[3][3])
{
    double ca = cos(e[0]), sa = sin(e[0]), cb = cos(e[1]), sb = sin(e[1]);
    double cg = cos(e[2]), sg = sin(e[2]);
    double Rz1[3][3] = {{ca, -sa, 0}, {sa, ca, 0}, {0, 0, 1}};
    double Ry[3][3] = {{cb, 0, sb}, {0, 1, 0}, {-sb, 0, cb}};
    double Rz2[3][3] = {{cg, -sg, 0}, {sg, cg, 0}, {0, 0, 1}};
    double T[3][3];
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++) {
            T[i][j] = 0.0;
            for (int k = 0; k < 3; k++)
                T[i][j] += Rz1[i][k] * Ry[k][j];
        }
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++) {
            R[i][j] = 0.0;
            for (int k = 0; k < 3; k++)
                R[i][j] += T[i][k] * Rz2[k][j];
        }
}

/* Squared distance from body point (x, y, z) to the helix centre line, restricted to the
 * parameter window where the axial distance alone is at most `reach` (HUGE_VAL when that
 * window misses the line; pass the wire radius to decide membership).
 * With rho, phi the cylindrical coordinates of the point and h(t) its axial offset, the
 * squared distance to the line point at parameter t is
 *     f(t) = rho^2 + R^2 - 2 rho R cos(t - phi) + (zz - c t)^2,  c = pitch / (2 pi),
 * with f''(t) = 2 rho R cos(t - phi) + 2 c^2. f is convex on the intervals
 * |t - phi - 2 pi k| <= a, a = acos(-c^2 / (rho R)) (all t when c^2 >= rho R), and
 * concave between them, so its minimum over the window is either the single stationary
 * point of f in one of these convex intervals (found by safeguarded Newton iteration on
 * f', which is monotone there; Press et al., Numerical Recipes, 3rd ed. 2007, sec. 9.4)
 * or an end point of an interval or of the window: all of these are compared. */
static double helix_dist2(const dpz_shape *s, double x, double y, double z, double reach)
{
    const double two_pi = 2.0 * DPZ_PI;
    double rc = s->coil_radius, p = s->pitch;
    double rho = hypot(x, y);
    double phi = atan2(y, x);
    double zz = z + 0.5 * p * s->turns; /* axial position from the start of the line */
    double t0 = two_pi * zz / p, dt = two_pi * reach / p;
    double lo = fmax(0.0, t0 - dt), hi = fmin(two_pi * s->turns, t0 + dt);
    if (lo > hi)
        return HUGE_VAL;
    double c1 = rho * rho + rc * rc, c2 = 2.0 * rho * rc, c3 = p / two_pi;
#define HELIX_F(t) (c1 - c2 * cos((t)-phi) + (zz - c3 * (t)) * (zz - c3 * (t)))
#define HELIX_D(t) (c2 * sin((t)-phi) - 2.0 * c3 * (zz - c3 * (t)))
    double best = fmin(HELIX_F(lo), HELIX_F(hi));
    double ratio = c2 > 0.0 ? 2.0 * c3 * c3 / c2 : HUGE_VAL;
    double a = ratio >= 1.0 ? DPZ_PI : acos(-ratio);
    double k0 = floor((lo - phi - a) / two_pi), k1 = ceil((hi - phi + a) / two_pi);
    for (double k = k0; k <= k1; k += 1.0) {
        double A = fmax(lo, phi + two_pi * k - a), B = fmin(hi, phi + two_pi * k + a);
        if (A > B)
            continue;
        best = fmin(best, fmin(HELIX_F(A), HELIX_F(B)));
        double dA = HELIX_D(A), dB = HELIX_D(B);
        if (!(dA < 0.0 && dB > 0.0))
            continue; /* f is monotone on [A, B]: its minimum is an end point */
        /* f' increases on [A, B]: Newton steps kept inside a shrinking bracket. */
        double t = 0.5 * (A + B);
        for (int it = 0; it < 60; it++) {
            double d1 = HELIX_D(t);
            if (d1 < 0.0)
                A = t;
            else
                B = t;
            double d2 = c2 * cos(t - phi) + 2.0 * c3 * c3;
            double tn = d2 > 0.0 ? t - d1 / d2 : 0.5 * (A + B);
            if (!(tn > A && tn < B))
                tn = 0.5 * (A + B);
            if (fabs(tn - t) <= 1e-15 * (1.0 + fabs(t)) ||
                B - A <= 1e-15 * (1.0 + fabs(t))) {
                t = tn;
                break;
            }
            t = tn;
        }
        best = fmin(best, HELIX_F(t));
    }
#undef HELIX_F
#undef HELIX_D
    return fmax(0.0, best);
}

/* Label of a body-frame point. */
static int body_label(const dpz_shape *s, const double b[3])
{
    double x = b[0], y = b[1], z = b[2];
    int L = s->label;
    switch (s->kind) {
    case DPZ_SHAPE_SPHERE:
        return x * x + y * y + z * z <= s->radius * s->radius ? L : 0;
    case DPZ_SHAPE_ELLIPSOID: {
        double u = x / s->semi[0], v = y / s->semi[1], w = z / s->semi[2];
        return u * u + v * v + w * w <= 1.0 ? L : 0;
    }
    case DPZ_SHAPE_BOX:
        return fabs(x) <= 0.5 * s->size[0] && fabs(y) <= 0.5 * s->size[1] &&
                       fabs(z) <= 0.5 * s->size[2]
                   ? L
                   : 0;
    case DPZ_SHAPE_CYLINDER: {
        double along = b[s->axis];
        double p = b[(s->axis + 1) % 3], q = b[(s->axis + 2) % 3];
        return fabs(along) <= 0.5 * s->height && p * p + q * q <= s->radius * s->radius
                   ? L
                   : 0;
    }
    case DPZ_SHAPE_RING:
    case DPZ_SHAPE_SPLIT_RING: {
        if (fabs(z) > 0.5 * s->thickness)
            return 0;
        double r2 = x * x + y * y;
        if (r2 > s->outer * s->outer || r2 < s->inner * s->inner)
            return 0;
        if (s->kind == DPZ_SHAPE_SPLIT_RING && x > 0.0 && fabs(y) < 0.5 * s->gap)
            return 0;
        return L;
    }
    case DPZ_SHAPE_HELIX: {
        double w = s->wire_radius;
        double yy = s->left ? -y : y;
        double rho = hypot(x, yy);
        if (fabs(rho - s->coil_radius) > w || fabs(z) > 0.5 * s->pitch * s->turns + w)
            return 0;
        return helix_dist2(s, x, yy, z, w) <= w * w ? L : 0;
    }
    case DPZ_SHAPE_CROSS: {
        if (fabs(z) > 0.5 * s->thickness)
            return 0;
        double hl = 0.5 * s->arm_length, hw = 0.5 * s->arm_width;
        int bar_x = fabs(x) <= hl && fabs(y) <= hw;
        int bar_y = fabs(y) <= hl && fabs(x) <= hw;
        return bar_x || bar_y ? L : 0;
    }
    case DPZ_SHAPE_DIMER: {
        double c = s->radius + 0.5 * s->gap;
        double dx = fabs(x) - c; /* both spheres at once: mirror x -> -x */
        return dx * dx + y * y + z * z <= s->radius * s->radius ? L : 0;
    }
    case DPZ_SHAPE_CORE_SHELL: {
        double r2 = x * x + y * y + z * z;
        double ro = s->radius + s->shell;
        if (r2 <= s->radius * s->radius)
            return L;
        return r2 <= ro * ro ? L + 1 : 0;
    }
    default:
        return 0;
    }
}

/* Outside distance to the axis-aligned box of half-extents h, or minus the inside margin
 * (the distance to the nearest face) for a point inside: a signed distance. */
static double box_sdist(const double p[3], const double h[3])
{
    double out2 = 0.0, in = HUGE_VAL;
    for (int a = 0; a < 3; a++) {
        double e = fabs(p[a]) - h[a];
        if (e > 0.0)
            out2 += e * e;
        in = fmin(in, -e);
    }
    return out2 > 0.0 ? sqrt(out2) : -in;
}

/* A radius L >= 0 such that every point within L of the body point b has the label of b
 * (a lower bound on the distance to the shape's boundary; 0 when unknown). `margin` is
 * the radius the caller will test against, needed by the helix search window. Used to
 * skip sub-sampling of voxels that are wholly inside or outside. Distances of boxes,
 * cylinders, rings and spheres are exact; the ellipsoid uses the Lipschitz bound of
 * r -> (x/a, y/b, z/c), whose constant is 1/min(a, b, c). */
static double body_margin(const dpz_shape *s, const double b[3], double margin)
{
    double x = b[0], y = b[1], z = b[2];
    switch (s->kind) {
    case DPZ_SHAPE_SPHERE:
        return fabs(sqrt(x * x + y * y + z * z) - s->radius);
    case DPZ_SHAPE_CORE_SHELL: {
        double r = sqrt(x * x + y * y + z * z);
        return fmin(fabs(r - s->radius), fabs(r - s->radius - s->shell));
    }
    case DPZ_SHAPE_ELLIPSOID: {
        double u = x / s->semi[0], v = y / s->semi[1], w = z / s->semi[2];
        double amin = fmin(s->semi[0], fmin(s->semi[1], s->semi[2]));
        return fabs(sqrt(u * u + v * v + w * w) - 1.0) * amin;
    }
    case DPZ_SHAPE_BOX: {
        double h[3] = {0.5 * s->size[0], 0.5 * s->size[1], 0.5 * s->size[2]};
        return fabs(box_sdist(b, h));
    }
    case DPZ_SHAPE_CYLINDER: {
        double along = b[s->axis];
        double rho = hypot(b[(s->axis + 1) % 3], b[(s->axis + 2) % 3]);
        double er = rho - s->radius, ea = fabs(along) - 0.5 * s->height;
        if (er <= 0.0 && ea <= 0.0)
            return fmin(-er, -ea);
        return hypot(fmax(er, 0.0), fmax(ea, 0.0));
    }
    case DPZ_SHAPE_RING:
    case DPZ_SHAPE_SPLIT_RING: {
        double rho = hypot(x, y);
        double er = fmax(s->inner - rho, rho - s->outer),
               ez = fabs(z) - 0.5 * s->thickness;
        double L =
            er <= 0.0 && ez <= 0.0 ? fmin(-er, -ez) : hypot(fmax(er, 0.0), fmax(ez, 0.0));
        if (s->kind ==
            DPZ_SHAPE_SPLIT_RING) /* the slot changes only across these planes */
            L = fmin(L, fmin(fabs(fabs(y) - 0.5 * s->gap), fabs(x)));
        return L;
    }
    case DPZ_SHAPE_CROSS: {
        double ha[3] = {0.5 * s->arm_length, 0.5 * s->arm_width, 0.5 * s->thickness};
        double hb[3] = {0.5 * s->arm_width, 0.5 * s->arm_length, 0.5 * s->thickness};
        double da = box_sdist(b, ha), db = box_sdist(b, hb);
        if (da <= 0.0 || db <= 0.0) /* inside the union: the deeper bar's margin */
            return fmax(da <= 0.0 ? -da : 0.0, db <= 0.0 ? -db : 0.0);
        return fmin(da, db);
    }
    case DPZ_SHAPE_DIMER: {
        double dx = fabs(x) - (s->radius + 0.5 * s->gap);
        return fabs(sqrt(dx * dx + y * y + z * z) - s->radius);
    }
    case DPZ_SHAPE_HELIX: {
        double w = s->wire_radius;
        double yy = s->left ? -y : y;
        /* The tube lies within the annulus |rho - R| <= w and the slab |z| <= pN/2 + w.
         */
        double shell = fmax(fabs(hypot(x, yy) - s->coil_radius) - w,
                            fabs(z) - 0.5 * s->pitch * s->turns - w);
        if (shell > margin)
            return shell;
        /* Centre-line distance over the window of axial distance <= w + 2 margin; points
         * of the line outside the window are farther than w + 2 margin. */
        double reach = w + 2.0 * margin;
        double dist = sqrt(helix_dist2(s, x, yy, z, reach));
        return dist <= w ? w - dist : fmin(dist, reach) - w;
    }
    default:
        return 0.0;
    }
}

/* Body coordinates b = R^T r. */
static void to_body(double R[3][3], const double r[3], double b[3])
{
    for (int j = 0; j < 3; j++)
        b[j] = R[0][j] * r[0] + R[1][j] * r[1] + R[2][j] * r[2];
}

int dpz_shape_label_at(const dpz_shape *s, const double r[3])
{
    double R[3][3], b[3];
    euler_matrix(s->euler, R);
    to_body(R, r, b);
    return body_label(s, b);
}

/* ---- volume and extent ---- */

/* Area of {x > 0, |y| < g, x^2 + y^2 <= r^2}: 2 * integral_0^g sqrt(r^2 - y^2) dy. */
static double slot_area(double r, double g)
{
    if (g >= r)
        return 0.5 * DPZ_PI * r * r;
    return g * sqrt(r * r - g * g) + r * r * asin(g / r);
}

double dpz_shape_volume(const dpz_shape *s)
{
    const double pi = DPZ_PI;
    switch (s->kind) {
    case DPZ_SHAPE_SPHERE:
        return 4.0 / 3.0 * pi * s->radius * s->radius * s->radius;
    case DPZ_SHAPE_ELLIPSOID:
        return 4.0 / 3.0 * pi * s->semi[0] * s->semi[1] * s->semi[2];
    case DPZ_SHAPE_BOX:
        return s->size[0] * s->size[1] * s->size[2];
    case DPZ_SHAPE_CYLINDER:
        return pi * s->radius * s->radius * s->height;
    case DPZ_SHAPE_RING:
        return pi * (s->outer * s->outer - s->inner * s->inner) * s->thickness;
    case DPZ_SHAPE_SPLIT_RING: {
        double g = 0.5 * s->gap;
        double area = pi * (s->outer * s->outer - s->inner * s->inner) -
                      (slot_area(s->outer, g) - slot_area(s->inner, g));
        return area * s->thickness;
    }
    case DPZ_SHAPE_HELIX: {
        /* The tube formula holds while neighbouring turns stay apart: the wire's axial
         * half-thickness w / cos(helix angle) must be at most pitch / 2. */
        double w = s->wire_radius, rc = s->coil_radius, p = s->pitch;
        double tan_angle = p / (2.0 * pi * rc);
        if (2.0 * w * sqrt(1.0 + tan_angle * tan_angle) > p)
            return -1.0;
        double len = s->turns * sqrt(4.0 * pi * pi * rc * rc + p * p);
        return pi * w * w * len + 4.0 / 3.0 * pi * w * w * w;
    }
    case DPZ_SHAPE_CROSS:
        return (2.0 * s->arm_length * s->arm_width - s->arm_width * s->arm_width) *
               s->thickness;
    case DPZ_SHAPE_DIMER:
        return 8.0 / 3.0 * pi * s->radius * s->radius * s->radius;
    case DPZ_SHAPE_CORE_SHELL: {
        double r = s->radius + s->shell;
        return 4.0 / 3.0 * pi * r * r * r;
    }
    default:
        return -1.0;
    }
}

/* Half extents of a cylinder of radius `rad`, length `len` along the unit vector u. */
static void cylinder_extent(const double u[3], double rad, double len, double h[3])
{
    for (int i = 0; i < 3; i++)
        h[i] = 0.5 * len * fabs(u[i]) + rad * sqrt(fmax(0.0, 1.0 - u[i] * u[i]));
}

static void shape_half_extent(const dpz_shape *s, double R[3][3], double h[3])
{
    double col[3][3]; /* col[a] = body axis a in the grid frame */
    for (int a = 0; a < 3; a++)
        for (int i = 0; i < 3; i++)
            col[a][i] = R[i][a];
    double bh[3] = {0, 0, 0}; /* body half-extents for box-like shapes */
    switch (s->kind) {
    case DPZ_SHAPE_SPHERE:
        h[0] = h[1] = h[2] = s->radius;
        return;
    case DPZ_SHAPE_CORE_SHELL:
        h[0] = h[1] = h[2] = s->radius + s->shell;
        return;
    case DPZ_SHAPE_ELLIPSOID:
        /* Support function of an ellipsoid: sqrt(sum_j R_ij^2 a_j^2). */
        for (int i = 0; i < 3; i++) {
            double acc = 0.0;
            for (int j = 0; j < 3; j++)
                acc += R[i][j] * R[i][j] * s->semi[j] * s->semi[j];
            h[i] = sqrt(acc);
        }
        return;
    case DPZ_SHAPE_CYLINDER:
        cylinder_extent(col[s->axis], s->radius, s->height, h);
        return;
    case DPZ_SHAPE_RING:
    case DPZ_SHAPE_SPLIT_RING:
        cylinder_extent(col[2], s->outer, s->thickness, h);
        return;
    case DPZ_SHAPE_HELIX:
        cylinder_extent(col[2], s->coil_radius + s->wire_radius,
                        s->pitch * s->turns + 2.0 * s->wire_radius, h);
        return;
    case DPZ_SHAPE_DIMER: {
        double c = s->radius + 0.5 * s->gap;
        for (int i = 0; i < 3; i++)
            h[i] = c * fabs(col[0][i]) + s->radius;
        return;
    }
    case DPZ_SHAPE_BOX:
        for (int a = 0; a < 3; a++)
            bh[a] = 0.5 * s->size[a];
        break;
    case DPZ_SHAPE_CROSS:
        bh[0] = bh[1] = 0.5 * s->arm_length;
        bh[2] = 0.5 * s->thickness;
        break;
    default:
        h[0] = h[1] = h[2] = 0.0;
        return;
    }
    for (int i = 0; i < 3; i++)
        h[i] = fabs(R[i][0]) * bh[0] + fabs(R[i][1]) * bh[1] + fabs(R[i][2]) * bh[2];
}

void dpz_shape_half_extent(const dpz_shape *s, double h[3])
{
    double R[3][3];
    euler_matrix(s->euler, R);
    shape_half_extent(s, R, h);
}

/* ---- voxelization ---- */

/* Voxel count along one axis. q = half extent / d. The lattice has either a voxel centre
 * (odd count, centres at integers) or a face (even count, centres at half-integers) on
 * the shape centre; pick the one whose nearest centre lies farther from the bounding
 * plane at q, ties to odd. `extra` widens the covered range by that many voxels (0.5 for
 * fractions: every voxel whose cube reaches the bounding box). */
double dpz__axis_count(double q, double extra)
{
    /* A relative slack of 1e-12 keeps centres that lie on the bounding plane up to
     * rounding (radius 10 nm at spacing 1 nm gives q = 9.999999999999998). */
    q += 1e-12 * (q + 1.0);
    double frac = q - floor(q);
    double dist_odd = fmin(frac, 1.0 - frac);
    double dist_even = fabs(frac - 0.5);
    double qq = q + extra;
    if (dist_even > dist_odd && floor(qq + 0.5) >= 1.0)
        return 2.0 * floor(qq + 0.5);
    return 2.0 * floor(qq) + 1.0;
}

dpz_status dpz_shape_voxelize(dpz_grid **out, const dpz_shape *s, double d_m,
                              int fractions, int subsamples, size_t max_cells,
                              dpz_err *err)
{
    if (!out)
        return dpz_err_set(err, DPZ_EINVAL, "shape: output pointer is NULL");
    *out = NULL;
    dpz_status st = dpz_shape_validate(s, err);
    if (st != DPZ_OK)
        return st;
    if (!positive(d_m))
        return dpz_err_set(err, DPZ_EINVAL,
                           "shape %s: spacing must be positive and finite (got %g m)",
                           dpz_shape_kind_name(s->kind), d_m);
    if (fractions && (subsamples < 1 || subsamples > 16))
        return dpz_err_set(err, DPZ_EINVAL,
                           "shape %s: sub-samples per voxel edge must be 1..16 (got %d)",
                           dpz_shape_kind_name(s->kind), subsamples);
    if (max_cells == 0)
        max_cells = DPZ_GRID_DEFAULT_MAX_CELLS;
    double R[3][3], h[3];
    euler_matrix(s->euler, R);
    shape_half_extent(s, R, h);
    size_t n[3];
    for (int a = 0; a < 3; a++) {
        double q = h[a] / d_m;
        double c = dpz__axis_count(q, fractions ? 0.5 : 0.0);
        if (!(c <= (double)max_cells))
            return dpz_err_set(
                err, DPZ_ELIMIT,
                "shape %s: spacing %g m gives %.3g voxels along an axis, more "
                "than the limit of %zu voxels (raise the voxel limit or use a "
                "coarser spacing)",
                dpz_shape_kind_name(s->kind), d_m, c, max_cells);
        n[a] = (size_t)c;
    }
    dpz_grid *g = NULL;
    st = dpz_grid_create(&g, n[0], n[1], n[2], d_m, max_cells, err);
    if (st != DPZ_OK)
        return st;
    if (dpz_shape_format(s, g->source, sizeof g->source) != DPZ_OK) {
        dpz_grid_destroy(g);
        return dpz_err_set(err, DPZ_ERANGE, "shape: record too long");
    }
    g->source_kind = DPZ_SOURCE_SHAPE;
    size_t total = n[0] * n[1] * n[2];
    if (fractions) {
        g->fill = dpz__calloc(total, sizeof *g->fill);
        if (!g->fill) {
            dpz_grid_destroy(g);
            return dpz_err_set(err, DPZ_ENOMEM,
                               "shape: out of memory for %zu fill fractions", total);
        }
    }
    int S = fractions ? subsamples : 1;
    double off[16];
    for (int q = 0; q < S; q++)
        off[q] = fractions ? ((q + 0.5) / S - 0.5) * d_m : 0.0;
    const double inv_samples = 1.0 / ((double)S * S * S);
    const double half_diag = 0.5 * sqrt(3.0) * d_m; /* every sample lies within it */
    /* Voxel centres relative to the shape centre as d (i - (n-1)/2): the half-integer
     * offset is exact and its product with d is exactly odd under i -> n-1-i, so a centre
     * lying on a boundary (core radius 40 nm at 2 nm) is classified the same on both
     * sides. origin + d i rounds differently for the two mirror images. */
    double half[3] = {0.5 * (double)(n[0] - 1), 0.5 * (double)(n[1] - 1),
                      0.5 * (double)(n[2] - 1)};
    size_t idx = 0;
    for (size_t i = 0; i < n[0]; i++) {
        double x = d_m * ((double)i - half[0]);
        for (size_t j = 0; j < n[1]; j++) {
            double y = d_m * ((double)j - half[1]);
            for (size_t k = 0; k < n[2]; k++, idx++) {
                double z = d_m * ((double)k - half[2]);
                if (!fractions) {
                    double r[3] = {x, y, z}, b[3];
                    to_body(R, r, b);
                    g->label[idx] = (uint8_t)body_label(s, b);
                    continue;
                }
                /* A voxel whose circumscribed ball has one label needs no samples. */
                {
                    double r[3] = {x, y, z}, b[3];
                    to_body(R, r, b);
                    if (body_margin(s, b, half_diag) > half_diag * (1.0 + 1e-9)) {
                        int L = body_label(s, b);
                        g->label[idx] = (uint8_t)L;
                        g->fill[idx] = L ? 1.0f : 0.0f;
                        continue;
                    }
                }
                /* Counts of the shape's own label and of label + 1 (core-shell shell). */
                long c0 = 0, c1 = 0;
                for (int a = 0; a < S; a++)
                    for (int bq = 0; bq < S; bq++)
                        for (int c = 0; c < S; c++) {
                            double r[3] = {x + off[a], y + off[bq], z + off[c]}, b[3];
                            to_body(R, r, b);
                            int L = body_label(s, b);
                            if (L == s->label)
                                c0++;
                            else if (L != 0)
                                c1++;
                        }
                if (c0 + c1 == 0)
                    continue;
                g->label[idx] = (uint8_t)(c1 > c0 ? s->label + 1 : s->label);
                g->fill[idx] = (float)((double)(c0 + c1) * inv_samples);
            }
        }
    }
    st = dpz_grid_update(g, err);
    if (st != DPZ_OK) {
        dpz_grid_destroy(g);
        return st;
    }
    *out = g;
    return DPZ_OK;
}

/* ---- text record ---- */

/* Shortest %.Ng form (N <= 17) that reads back to exactly v. */
static void fmt_num(double v, char out[32])
{
    for (int prec = 1; prec <= 17; prec++) {
        snprintf(out, 32, "%.*g", prec, v);
        if (strtod(out, NULL) == v)
            return;
    }
    snprintf(out, 32, "%.17g", v);
}

typedef struct {
    char *buf;
    size_t len, pos;
    int overflow;
} sbuf;

static void sb_add(sbuf *b, const char *text)
{
    size_t n = strlen(text);
    if (b->pos + n + 1 > b->len) {
        b->overflow = 1;
        return;
    }
    memcpy(b->buf + b->pos, text, n + 1);
    b->pos += n;
}

static void sb_num(sbuf *b, const char *key, double v)
{
    char num[32];
    fmt_num(v, num);
    sb_add(b, " ");
    sb_add(b, key);
    sb_add(b, "=");
    sb_add(b, num);
}

static void sb_vec(sbuf *b, const char *key, const double v[3])
{
    sb_add(b, " ");
    sb_add(b, key);
    sb_add(b, "=");
    for (int a = 0; a < 3; a++) {
        char num[32];
        fmt_num(v[a], num);
        if (a)
            sb_add(b, ",");
        sb_add(b, num);
    }
}

dpz_status dpz_shape_format(const dpz_shape *s, char *buf, size_t len)
{
    if (!s || !buf || len == 0)
        return DPZ_EINVAL;
    const char *name = dpz_shape_kind_name(s->kind);
    if (!name) {
        buf[0] = '\0';
        return DPZ_EINVAL;
    }
    sbuf b = {buf, len, 0, 0};
    buf[0] = '\0';
    sb_add(&b, DPZ_SHAPE_RECORD_PREFIX);
    sb_add(&b, name);
    switch (s->kind) {
    case DPZ_SHAPE_SPHERE:
        sb_num(&b, "radius", s->radius);
        break;
    case DPZ_SHAPE_ELLIPSOID:
        sb_vec(&b, "semi-axes", s->semi);
        break;
    case DPZ_SHAPE_BOX:
        sb_vec(&b, "size", s->size);
        break;
    case DPZ_SHAPE_CYLINDER:
        sb_num(&b, "radius", s->radius);
        sb_num(&b, "height", s->height);
        sb_add(&b, s->axis == 0 ? " axis=x" : s->axis == 1 ? " axis=y" : " axis=z");
        break;
    case DPZ_SHAPE_RING:
    case DPZ_SHAPE_SPLIT_RING:
        sb_num(&b, "outer-radius", s->outer);
        sb_num(&b, "inner-radius", s->inner);
        sb_num(&b, "thickness", s->thickness);
        if (s->kind == DPZ_SHAPE_SPLIT_RING)
            sb_num(&b, "gap", s->gap);
        break;
    case DPZ_SHAPE_HELIX:
        sb_num(&b, "coil-radius", s->coil_radius);
        sb_num(&b, "wire-radius", s->wire_radius);
        sb_num(&b, "pitch", s->pitch);
        sb_num(&b, "turns", s->turns);
        sb_add(&b, s->left ? " hand=left" : " hand=right");
        break;
    case DPZ_SHAPE_CROSS:
        sb_num(&b, "arm-length", s->arm_length);
        sb_num(&b, "arm-width", s->arm_width);
        sb_num(&b, "thickness", s->thickness);
        break;
    case DPZ_SHAPE_DIMER:
        sb_num(&b, "radius", s->radius);
        sb_num(&b, "gap", s->gap);
        break;
    case DPZ_SHAPE_CORE_SHELL:
        sb_num(&b, "radius", s->radius);
        sb_num(&b, "shell", s->shell);
        break;
    default:
        break;
    }
    sb_vec(&b, "euler", s->euler);
    char lab[16];
    snprintf(lab, sizeof lab, " label=%d", s->label);
    sb_add(&b, lab);
    if (b.overflow) {
        buf[0] = '\0';
        return DPZ_ERANGE;
    }
    return DPZ_OK;
}

/* Parses one number filling the whole of `text`. */
static int parse_double(const char *text, double *v)
{
    if (!*text)
        return -1;
    char *end;
    errno = 0;
    *v = strtod(text, &end);
    return *end == '\0' && errno != ERANGE ? 0 : -1;
}

static int parse_vec(char *text, double v[3])
{
    char *p = text;
    for (int a = 0; a < 3; a++) {
        char *comma = strchr(p, ',');
        if ((a < 2) != (comma != NULL))
            return -1;
        if (comma)
            *comma = '\0';
        if (parse_double(p, &v[a]) != 0)
            return -1;
        if (comma)
            p = comma + 1;
    }
    return 0;
}

/* Keys of each kind, in record order; "euler" and "label" are common to all. */
static const char *const kind_keys[DPZ_SHAPE_KIND_COUNT][6] = {
    {"radius"},
    {"semi-axes"},
    {"size"},
    {"radius", "height", "axis"},
    {"outer-radius", "inner-radius", "thickness"},
    {"outer-radius", "inner-radius", "thickness", "gap"},
    {"coil-radius", "wire-radius", "pitch", "turns", "hand"},
    {"arm-length", "arm-width", "thickness"},
    {"radius", "gap"},
    {"radius", "shell"}};

static dpz_status set_key(dpz_shape *s, const char *key, char *val, dpz_err *err)
{
    double v = 0.0;
    const char *name = dpz_shape_kind_name(s->kind);
    if (strcmp(key, "semi-axes") == 0 || strcmp(key, "size") == 0 ||
        strcmp(key, "euler") == 0) {
        double *dst = key[0] == 'e' ? s->euler : key[1] == 'e' ? s->semi : s->size;
        if (parse_vec(val, dst) != 0)
            return dpz_err_set(
                err, DPZ_EFORMAT,
                "shape record: %s: '%s' needs three comma-separated numbers", name, key);
        return DPZ_OK;
    }
    if (strcmp(key, "axis") == 0) {
        if (strlen(val) != 1 || val[0] < 'x' || val[0] > 'z')
            return dpz_err_set(
                err, DPZ_EFORMAT,
                "shape record: cylinder: axis must be x, y or z (got '%s')", val);
        s->axis = val[0] - 'x';
        return DPZ_OK;
    }
    if (strcmp(key, "hand") == 0) {
        if (strcmp(val, "left") != 0 && strcmp(val, "right") != 0)
            return dpz_err_set(
                err, DPZ_EFORMAT,
                "shape record: helix: hand must be left or right (got '%s')", val);
        s->left = strcmp(val, "left") == 0;
        return DPZ_OK;
    }
    if (strcmp(key, "label") == 0) {
        char *end;
        errno = 0;
        long l = strtol(val, &end, 10);
        if (!*val || *end || errno || l < 0 || l > 255)
            return dpz_err_set(err, DPZ_EFORMAT,
                               "shape record: label must be an integer 1..255 (got '%s')",
                               val);
        s->label = (int)l;
        return DPZ_OK;
    }
    if (parse_double(val, &v) != 0)
        return dpz_err_set(err, DPZ_EFORMAT,
                           "shape record: %s: '%s' is not a number ('%s')", name, key,
                           val);
    if (strcmp(key, "radius") == 0)
        s->radius = v;
    else if (strcmp(key, "height") == 0)
        s->height = v;
    else if (strcmp(key, "outer-radius") == 0)
        s->outer = v;
    else if (strcmp(key, "inner-radius") == 0)
        s->inner = v;
    else if (strcmp(key, "thickness") == 0)
        s->thickness = v;
    else if (strcmp(key, "gap") == 0)
        s->gap = v;
    else if (strcmp(key, "coil-radius") == 0)
        s->coil_radius = v;
    else if (strcmp(key, "wire-radius") == 0)
        s->wire_radius = v;
    else if (strcmp(key, "pitch") == 0)
        s->pitch = v;
    else if (strcmp(key, "turns") == 0)
        s->turns = v;
    else if (strcmp(key, "arm-length") == 0)
        s->arm_length = v;
    else if (strcmp(key, "arm-width") == 0)
        s->arm_width = v;
    else if (strcmp(key, "shell") == 0)
        s->shell = v;
    return DPZ_OK;
}

dpz_status dpz_shape_parse_record(const char *text, dpz_shape *out, dpz_err *err)
{
    if (!text || !out)
        return dpz_err_set(err, DPZ_EINVAL, "shape record: NULL argument");
    char copy[DPZ_SHAPE_RECORD_MAX * 2];
    size_t tl = strlen(text);
    while (tl > 0 &&
           (text[tl - 1] == '\n' || text[tl - 1] == '\r' || text[tl - 1] == ' '))
        tl--;
    if (tl >= sizeof copy)
        return dpz_err_set(err, DPZ_EFORMAT, "shape record: longer than %zu characters",
                           sizeof copy - 1);
    memcpy(copy, text, tl);
    copy[tl] = '\0';
    const char *prefix = DPZ_SHAPE_RECORD_PREFIX;
    size_t pl = strlen(prefix);
    if (strncmp(copy, prefix, pl) != 0)
        return dpz_err_set(err, DPZ_EFORMAT, "shape record: does not start with '%s'",
                           prefix);
    char *save = NULL;
    char *tok = strtok_r(copy + pl, " \t", &save);
    dpz_shape s;
    dpz_shape_kind kind = DPZ_SHAPE_SPHERE; /* set by the parser below */
    if (!tok)
        return dpz_err_set(err, DPZ_EFORMAT, "shape record: kind is missing");
    dpz_status st = dpz_shape_kind_from_name(tok, &kind, err);
    if (st != DPZ_OK)
        return st;
    dpz_shape_init(&s, kind);
    const char *const *keys = kind_keys[kind];
    int seen[8] = {0}; /* kind keys 0..5, euler 6, label 7 */
    while ((tok = strtok_r(NULL, " \t", &save)) != NULL) {
        char *eq = strchr(tok, '=');
        if (!eq)
            return dpz_err_set(err, DPZ_EFORMAT, "shape record: '%s' is not key=value",
                               tok);
        *eq = '\0';
        int slot = -1;
        for (int q = 0; q < 6 && keys[q]; q++)
            if (strcmp(tok, keys[q]) == 0)
                slot = q;
        if (strcmp(tok, "euler") == 0)
            slot = 6;
        if (strcmp(tok, "label") == 0)
            slot = 7;
        if (slot < 0)
            return dpz_err_set(err, DPZ_EFORMAT, "shape record: %s: unknown key '%s'",
                               kind_names[kind], tok);
        if (seen[slot])
            return dpz_err_set(err, DPZ_EFORMAT, "shape record: %s: key '%s' repeated",
                               kind_names[kind], tok);
        seen[slot] = 1;
        st = set_key(&s, tok, eq + 1, err);
        if (st != DPZ_OK)
            return st;
    }
    for (int q = 0; q < 6 && keys[q]; q++)
        if (!seen[q])
            return dpz_err_set(err, DPZ_EFORMAT, "shape record: %s: key '%s' is missing",
                               kind_names[kind], keys[q]);
    st = dpz_shape_validate(&s, err);
    if (st != DPZ_OK)
        return st;
    *out = s;
    return DPZ_OK;
}
