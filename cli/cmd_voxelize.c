/* cmd_voxelize.c: `dipolize voxelize MESH.stl --spacing LEN --stl-unit UNIT -o FILE.vtk`:
 * voxelizes a closed STL mesh and writes a VTK file that records the mesh (path and
 * unit), printing the mesh volume beside the voxel volume. */
#include "cli_int.h"

#include <string.h>
#include <strings.h>

#include "dpz_voxio.h"

static int run_voxelize(const cli_args *a)
{
    const char *out = cli_get(a, "-o");
    if (!out)
        return cli_fail("voxelize: -o FILE.vtk is required");
    size_t olen = strlen(out);
    if (olen < 5 || strcasecmp(out + olen - 4, ".vtk") != 0)
        return cli_fail(
            "voxelize: -o %s: the output is a VTK file; give it the .vtk extension", out);
    if (!cli_get(a, "--spacing"))
        return cli_fail("voxelize: --spacing LEN is required (e.g. --spacing 2nm)");
    if (!cli_get(a, "--stl-unit"))
        return cli_fail(
            "voxelize: --stl-unit UNIT is required (the length unit of the STL "
            "coordinates: m, cm, mm, um, nm, pm or A)");
    size_t n = strlen(a->pos[0]);
    if (n < 5 || strcasecmp(a->pos[0] + n - 4, ".stl") != 0)
        return cli_fail("voxelize: %s: expected an STL mesh (.stl)", a->pos[0]);
    dpz_grid *g = NULL;
    double mesh_volume = -1.0;
    int rc = cli_load_geometry(a, a->pos[0], &g, NULL, &mesh_volume);
    if (rc != CLI_OK)
        return rc;
    dpz_err e;
    /* The VTK writer writes a temporary file and renames it: no partial output. */
    if (dpz_vtk_write_file(g, out, &e) != DPZ_OK) {
        dpz_grid_destroy(g);
        return cli_fail_err("voxelize", &e);
    }
    double vv = dpz_grid_volume(g);
    if (cli_flag(a, "--json")) {
        cJSON *o = cJSON_CreateObject();
        cJSON_AddStringToObject(o, "file", out);
        cJSON_AddStringToObject(o, "mesh", a->pos[0]);
        double dims[3] = {(double)g->nx, (double)g->ny, (double)g->nz};
        cJSON_AddItemToObject(o, "dims", cli_json_doubles(dims, 3));
        cli_json_grid_facts(o, g);
        cli_json_add_number(o, "mesh_volume_m3", mesh_volume);
        rc = cli_json_emit(o);
    } else {
        printf("wrote %s: %zu x %zu x %zu grid, %zu voxels of %g m\n", out, g->nx, g->ny,
               g->nz, g->n_occ, g->d);
        printf("volume: voxels %.6e m^3, mesh %.6e m^3 (%+.2f%%)\n", vv, mesh_volume,
               mesh_volume > 0 ? 100.0 * (vv - mesh_volume) / mesh_volume : 0.0);
    }
    dpz_grid_destroy(g);
    return rc;
}

static const cli_opt voxelize_opts[] = {
    {"--spacing", "LEN", "voxel edge (required), e.g. 2nm", 0},
    {"--stl-unit", "UNIT",
     "length unit of the STL coordinates (required): m, cm, mm, um, nm, pm or A", 0},
    {"-o", "FILE.vtk", "output VTK file (required; written atomically)", 0},
    {"--fractions", NULL, "store boundary fill fractions (4 x 4 x 4 samples per voxel)",
     0},
    {"--max-voxels", "N", "refuse grids with more than N cells (default 268435456)", 0},
    {"--json", NULL, "print the grid facts and both volumes as one JSON object", 0},
    {"--quiet", NULL, "no progress lines on stderr", 0},
    {NULL, NULL, NULL, 0},
};
static const cli_group voxelize_group = {"Options", voxelize_opts};

const cli_cmd cli_cmd_voxelize = {
    .name = "voxelize",
    .usage = "MESH.stl --spacing LEN --stl-unit UNIT -o FILE.vtk [options]",
    .summary = "voxelize a closed STL mesh (ASCII or binary) into a VTK file",
    .details =
        "A voxel belongs to the mesh when its centre is inside (ray crossings along\n"
        "three axes, two of three voting). The mesh must be closed. The VTK file\n"
        "records the mesh path and unit, so other commands can re-voxelize it with\n"
        "--spacing.",
    .example = "dipolize voxelize antenna.stl --spacing 2nm --stl-unit nm -o antenna.vtk",
    .min_pos = 1,
    .max_pos = 1,
    .groups = {&voxelize_group, NULL},
    .run = run_voxelize,
};
