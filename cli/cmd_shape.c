/* cmd_shape.c: `dipolize shape KIND [params] --spacing LEN -o FILE.vtk`: voxelizes a
 * built-in shape and writes it as a VTK file that also records the shape, so that later
 * commands can re-voxelize it at another spacing. */
#include "cli_int.h"

#include <math.h>
#include <string.h>
#include <strings.h>

#include "dpz_shape.h"
#include "dpz_voxio.h"

static const cli_opt shape_opts[] = {
    {"--radius", "LEN", "sphere, cylinder, dimer (each sphere), core-shell core radius",
     0},
    {"--semi-axes", "A,B,C", "ellipsoid semi-axes along its own x, y, z (lengths)", 0},
    {"--size", "X,Y,Z", "box edge lengths", 0},
    {"--height", "LEN", "cylinder length along its axis", 0},
    {"--axis", "x|y|z", "cylinder axis (default z)", 0},
    {"--outer-radius", "LEN", "ring, split-ring outer radius", 0},
    {"--inner-radius", "LEN", "ring, split-ring inner radius", 0},
    {"--thickness", "LEN", "ring, split-ring, cross thickness along z", 0},
    {"--gap", "LEN",
     "split-ring slot width (centred on +x); dimer surface gap (may be 0nm)", 0},
    {"--coil-radius", "LEN", "helix radius of the wire's centre line", 0},
    {"--wire-radius", "LEN", "helix wire radius", 0},
    {"--pitch", "LEN", "helix rise per turn", 0},
    {"--turns", "N", "helix number of turns (> 0, need not be whole)", 0},
    {"--left", NULL, "helix: left-handed (default right-handed)", 0},
    {"--arm-length", "LEN", "cross: tip-to-tip length of each bar", 0},
    {"--arm-width", "LEN", "cross: width of each bar", 0},
    {"--shell", "LEN", "core-shell shell thickness (core label L, shell L+1)", 0},
    {NULL, NULL, NULL, 0},
};
static const cli_group shape_group = {"Shape parameters (lengths with units)",
                                      shape_opts};

static const cli_opt common_opts[] = {
    {"--spacing", "LEN", "voxel edge (required)", 0},
    {"-o", "FILE.vtk", "output VTK file (required; written atomically)", 0},
    {"--euler", "A,B,G",
     "active rotation R = Rz(A) Ry(B) Rz(G), angles with deg or rad (default "
     "0deg,0deg,0deg)",
     0},
    {"--label", "N", "material label 1..255 (default 1)", 0},
    {"--fractions", NULL, "store boundary fill fractions (sampled on sub-cells)", 0},
    {"--subsamples", "N", "sub-cells per axis for --fractions, 1..16 (default 4)", 0},
    {"--max-voxels", "N", "refuse grids with more than N cells (default 268435456)", 0},
    {"--json", NULL, "print the grid facts as one JSON object", 0},
    {"--quiet", NULL, "no progress lines on stderr", 0},
    {NULL, NULL, NULL, 0},
};
static const cli_group common_group = {"Options", common_opts};

/* Which parameters each kind takes (the header dpz_shape.h defines them). */
static const struct {
    dpz_shape_kind kind;
    const char *params[6];
} kind_params[] = {
    {DPZ_SHAPE_SPHERE, {"--radius"}},
    {DPZ_SHAPE_ELLIPSOID, {"--semi-axes"}},
    {DPZ_SHAPE_BOX, {"--size"}},
    {DPZ_SHAPE_CYLINDER, {"--radius", "--height", "--axis"}},
    {DPZ_SHAPE_RING, {"--outer-radius", "--inner-radius", "--thickness"}},
    {DPZ_SHAPE_SPLIT_RING, {"--outer-radius", "--inner-radius", "--thickness", "--gap"}},
    {DPZ_SHAPE_HELIX, {"--coil-radius", "--wire-radius", "--pitch", "--turns", "--left"}},
    {DPZ_SHAPE_CROSS, {"--arm-length", "--arm-width", "--thickness"}},
    {DPZ_SHAPE_DIMER, {"--radius", "--gap"}},
    {DPZ_SHAPE_CORE_SHELL, {"--radius", "--shell"}},
};

static int takes(dpz_shape_kind kind, const char *opt)
{
    for (size_t i = 0; i < sizeof kind_params / sizeof kind_params[0]; i++)
        if (kind_params[i].kind == kind)
            for (size_t j = 0; j < 6 && kind_params[i].params[j]; j++)
                if (strcmp(kind_params[i].params[j], opt) == 0)
                    return 1;
    return 0;
}

/* Optional parameters of a kind (everything else it takes is required). */
static int optional_param(const char *opt)
{
    return strcmp(opt, "--axis") == 0 || strcmp(opt, "--left") == 0;
}

static int need_len(const cli_args *a, const char *opt, double *out, int allow_zero)
{
    const char *v = cli_get(a, opt);
    dpz_err e;
    if (allow_zero) {
        if (dpz_units_length(opt, v, out, &e) != DPZ_OK)
            return cli_fail_err("shape", &e);
        if (*out < 0)
            return cli_fail("shape: %s %s: the length must not be negative", opt, v);
        return CLI_OK;
    }
    if (dpz_units_length_pos(opt, v, out, &e) != DPZ_OK)
        return cli_fail_err("shape", &e);
    return CLI_OK;
}

int cli_shape_from_args(const cli_args *a, const char *kind_name, dpz_shape *s)
{
    dpz_err e;
    dpz_shape_kind kind;
    if (dpz_shape_kind_from_name(kind_name, &kind, &e) != DPZ_OK)
        return cli_fail_err("shape", &e);
    dpz_shape_init(s, kind);
    /* Refuse parameters of other kinds, and demand the kind's own. */
    for (const cli_opt *o = shape_opts; o->name; o++) {
        int given = cli_count(a, o->name) > 0;
        if (given && !takes(kind, o->name))
            return cli_fail(
                "shape: %s does not apply to a %s (see dipolize shape --help)", o->name,
                kind_name);
        if (!given && takes(kind, o->name) && !optional_param(o->name))
            return cli_fail("shape: a %s needs %s %s", kind_name, o->name, o->meta);
    }
    int rc = CLI_OK;
    switch (kind) {
    case DPZ_SHAPE_SPHERE:
        rc = need_len(a, "--radius", &s->radius, 0);
        break;
    case DPZ_SHAPE_ELLIPSOID:
        if (dpz_units_length_vec("--semi-axes", cli_get(a, "--semi-axes"), s->semi, 3,
                                 &e))
            return cli_fail_err("shape", &e);
        break;
    case DPZ_SHAPE_BOX:
        if (dpz_units_length_vec("--size", cli_get(a, "--size"), s->size, 3, &e))
            return cli_fail_err("shape", &e);
        break;
    case DPZ_SHAPE_CYLINDER: {
        if ((rc = need_len(a, "--radius", &s->radius, 0)) ||
            (rc = need_len(a, "--height", &s->height, 0)))
            return rc;
        const char *ax = cli_get(a, "--axis");
        s->axis = 2;
        if (ax) {
            if (strcmp(ax, "x") == 0)
                s->axis = 0;
            else if (strcmp(ax, "y") == 0)
                s->axis = 1;
            else if (strcmp(ax, "z") != 0)
                return cli_fail("shape: --axis %s: use x, y or z", ax);
        }
        break;
    }
    case DPZ_SHAPE_RING:
    case DPZ_SHAPE_SPLIT_RING:
        if ((rc = need_len(a, "--outer-radius", &s->outer, 0)) ||
            (rc = need_len(a, "--inner-radius", &s->inner, 0)) ||
            (rc = need_len(a, "--thickness", &s->thickness, 0)))
            return rc;
        if (kind == DPZ_SHAPE_SPLIT_RING)
            rc = need_len(a, "--gap", &s->gap, 0);
        break;
    case DPZ_SHAPE_HELIX:
        if ((rc = need_len(a, "--coil-radius", &s->coil_radius, 0)) ||
            (rc = need_len(a, "--wire-radius", &s->wire_radius, 0)) ||
            (rc = need_len(a, "--pitch", &s->pitch, 0)))
            return rc;
        if (dpz_units_real("--turns", cli_get(a, "--turns"), &s->turns, &e) != DPZ_OK)
            return cli_fail_err("shape", &e);
        if (!(s->turns > 0))
            return cli_fail("shape: --turns must be positive");
        s->left = cli_flag(a, "--left");
        break;
    case DPZ_SHAPE_CROSS:
        if ((rc = need_len(a, "--arm-length", &s->arm_length, 0)) ||
            (rc = need_len(a, "--arm-width", &s->arm_width, 0)) ||
            (rc = need_len(a, "--thickness", &s->thickness, 0)))
            return rc;
        break;
    case DPZ_SHAPE_DIMER:
        if ((rc = need_len(a, "--radius", &s->radius, 0)) ||
            (rc = need_len(a, "--gap", &s->gap, 1)))
            return rc;
        break;
    case DPZ_SHAPE_CORE_SHELL:
        if ((rc = need_len(a, "--radius", &s->radius, 0)) ||
            (rc = need_len(a, "--shell", &s->shell, 0)))
            return rc;
        break;
    default:
        return cli_fail("shape: unknown kind %s", kind_name);
    }
    if (rc)
        return rc;
    const char *v;
    if ((v = cli_get(a, "--euler")) &&
        dpz_units_angle_vec("--euler", v, s->euler, 3, &e) != DPZ_OK)
        return cli_fail_err("shape", &e);
    if ((v = cli_get(a, "--label"))) {
        size_t label;
        if (dpz_units_count("--label", v, &label, &e) != DPZ_OK)
            return cli_fail_err("shape", &e);
        size_t top = kind == DPZ_SHAPE_CORE_SHELL ? 254 : 255;
        if (label < 1 || label > top)
            return cli_fail("shape: --label %s: use a label from 1 to %zu", v, top);
        s->label = (int)label;
    }
    if (dpz_shape_validate(s, &e) != DPZ_OK)
        return cli_fail_err("shape", &e);
    return CLI_OK;
}

static int run_shape(const cli_args *a)
{
    int rc;
    dpz_shape s;
    if ((rc = cli_shape_from_args(a, a->pos[0], &s)) != CLI_OK)
        return rc;
    double d;
    if ((rc = cli_opt_length_pos(a, "--spacing", &d, 1, NULL)) != CLI_OK)
        return rc;
    const char *out = cli_get(a, "-o");
    if (!out)
        return cli_fail("shape: -o FILE.vtk is required");
    size_t olen = strlen(out);
    if (olen < 5 || strcasecmp(out + olen - 4, ".vtk") != 0)
        return cli_fail(
            "shape: -o %s: the output is a VTK file; give it the .vtk extension", out);
    size_t sub = 4, max_cells = 0;
    int given;
    if ((rc = cli_opt_count(a, "--subsamples", &sub, &given)) != CLI_OK)
        return rc;
    if (given && !cli_flag(a, "--fractions"))
        return cli_fail("shape: --subsamples applies only with --fractions");
    if (sub < 1 || sub > 16)
        return cli_fail("shape: --subsamples must be between 1 and 16");
    if ((rc = cli_opt_count(a, "--max-voxels", &max_cells, &given)) != CLI_OK)
        return rc;
    if (given && max_cells == 0)
        return cli_fail("shape: --max-voxels must be at least 1");
    dpz_err e;
    dpz_grid *g = NULL;
    cli_progress(a, "voxelizing %s at %.4g m", a->pos[0], d);
    if (dpz_shape_voxelize(&g, &s, d, cli_flag(a, "--fractions"), (int)sub, max_cells,
                           &e) != DPZ_OK)
        return cli_fail_err("shape", &e);
    if (g->n_occ == 0) {
        dpz_grid_destroy(g);
        return cli_fail(
            "shape: no voxel centre falls inside the %s at spacing %g m; use a "
            "smaller --spacing",
            a->pos[0], d);
    }
    /* The VTK writer writes a temporary file and renames it: no partial output. */
    rc = dpz_vtk_write_file(g, out, &e) == DPZ_OK ? CLI_OK : cli_fail_err("shape", &e);
    if (rc == CLI_OK) {
        double vs = dpz_shape_volume(&s), vv = dpz_grid_volume(g);
        if (cli_flag(a, "--json")) {
            cJSON *o = cJSON_CreateObject();
            cJSON_AddStringToObject(o, "file", out);
            cJSON_AddStringToObject(o, "shape", g->source);
            size_t dims[3] = {g->nx, g->ny, g->nz};
            double dd[3] = {(double)dims[0], (double)dims[1], (double)dims[2]};
            cJSON_AddItemToObject(o, "dims", cli_json_doubles(dd, 3));
            cli_json_grid_facts(o, g);
            if (vs > 0)
                cli_json_add_number(o, "shape_volume_m3", vs);
            rc = cli_json_emit(o);
        } else {
            printf("wrote %s: %zu x %zu x %zu grid, %zu voxels of %g m\n", out, g->nx,
                   g->ny, g->nz, g->n_occ, g->d);
            if (vs > 0)
                printf("volume: voxels %.6e m^3, shape %.6e m^3 (%+.2f%%)\n", vv, vs,
                       100.0 * (vv - vs) / vs);
            else
                printf("volume: voxels %.6e m^3\n", vv);
        }
    }
    dpz_grid_destroy(g);
    return rc;
}

const cli_cmd cli_cmd_shape = {
    .name = "shape",
    .usage = "KIND [parameters] --spacing LEN -o FILE.vtk [options]",
    .summary = "voxelize a built-in shape into a VTK file",
    .details =
        "KIND and its parameters (all lengths need a unit):\n"
        "  sphere      --radius R\n"
        "  ellipsoid   --semi-axes A,B,C\n"
        "  box         --size X,Y,Z\n"
        "  cylinder    --radius R --height H [--axis x|y|z]\n"
        "  ring        --outer-radius R1 --inner-radius R2 --thickness T\n"
        "  split-ring  --outer-radius R1 --inner-radius R2 --thickness T --gap G\n"
        "  helix       --coil-radius R --wire-radius W --pitch P --turns N [--left]\n"
        "  cross       --arm-length L --arm-width W --thickness T\n"
        "  dimer       --radius R --gap G   (two spheres along x)\n"
        "  core-shell  --radius R --shell S (label 1 core, label 2 shell)\n"
        "A voxel belongs to the shape when its centre does. The grid is centred on the\n"
        "shape, keeping its mirror symmetries. The VTK file records the shape, so other\n"
        "commands can re-voxelize it with --spacing.",
    .example = "dipolize shape split-ring --outer-radius 40nm --inner-radius 25nm "
               "--thickness 20nm --gap 10nm --spacing 2.5nm -o srr.vtk",
    .min_pos = 1,
    .max_pos = 1,
    .groups = {&shape_group, &common_group, NULL},
    .run = run_shape,
};
