/* geometry.c: the FILE argument of every command as a voxel grid. VTK files are the
 * object itself, unless they record a shape (written by `dipolize shape`) and the user
 * asks for another spacing or fill fractions: then the shape is re-voxelized. NumPy and
 * CSV voxel files need --spacing; STL meshes need --spacing and --stl-unit. */
#include "cli_int.h"

#include <errno.h>
#include <string.h>
#include <strings.h>

#include "dpz_shape.h"
#include "dpz_stl.h"
#include "dpz_voxio.h"

const char *cli_src_format_name(cli_src_format f)
{
    switch (f) {
    case CLI_SRC_VTK:
        return "vtk";
    case CLI_SRC_NPY:
        return "npy";
    case CLI_SRC_CSV:
        return "csv";
    default:
        return "stl";
    }
}

int cli_resolve_mesh_path(const char *vtk_path, const char *rec, char *out, size_t len)
{
    FILE *f;
    if (snprintf(out, len, "%s", rec) < (int)len && (f = fopen(out, "rb"))) {
        fclose(f);
        return 0;
    }
    /* A relative record is relative to where voxelize ran; try the VTK file's folder. */
    const char *slash = strrchr(vtk_path, '/');
    if (rec[0] != '/' && slash) {
        int n = snprintf(out, len, "%.*s/%s", (int)(slash - vtk_path), vtk_path, rec);
        if (n > 0 && (size_t)n < len && (f = fopen(out, "rb"))) {
            fclose(f);
            return 0;
        }
    }
    snprintf(out, len, "%s", rec);
    return -1;
}

static int ends_with(const char *s, const char *suffix)
{
    size_t n = strlen(s), m = strlen(suffix);
    return n >= m && strcasecmp(s + n - m, suffix) == 0;
}

int cli_load_geometry(const cli_args *a, const char *path, dpz_grid **grid,
                      cli_src_format *fmt, double *mesh_volume)
{
    const char *cmd = a->cmd->name;
    *grid = NULL;
    if (mesh_volume)
        *mesh_volume = -1.0;
    cli_src_format f;
    if (ends_with(path, ".vtk"))
        f = CLI_SRC_VTK;
    else if (ends_with(path, ".npy"))
        f = CLI_SRC_NPY;
    else if (ends_with(path, ".csv"))
        f = CLI_SRC_CSV;
    else if (ends_with(path, ".stl"))
        f = CLI_SRC_STL;
    else
        return cli_fail("%s: %s: unknown file type (expected .vtk, .npy, .csv or .stl)",
                        cmd, path);
    if (fmt)
        *fmt = f;
    FILE *probe = fopen(path, "rb");
    if (!probe)
        return cli_fail("%s: cannot open %s: %s", cmd, path, strerror(errno));
    fclose(probe);

    int rc, have_d = 0;
    double d = 0.0;
    if ((rc = cli_opt_length_pos(a, "--spacing", &d, 0, &have_d)) != CLI_OK)
        return rc;
    size_t max_cells = 0;
    int given;
    if ((rc = cli_opt_count(a, "--max-voxels", &max_cells, &given)) != CLI_OK)
        return rc;
    if (given && max_cells == 0)
        return cli_fail("%s: --max-voxels must be at least 1", cmd);
    const char *unit = cli_get(a, "--stl-unit");
    if (unit && f != CLI_SRC_STL)
        return cli_fail("%s: --stl-unit applies only to .stl meshes", cmd);
    int fractions = cli_flag(a, "--fractions");

    dpz_err e;
    dpz_err_clear(&e);
    dpz_grid *g = NULL;
    dpz_status s = DPZ_OK;
    switch (f) {
    case CLI_SRC_VTK:
        s = dpz_vtk_read_file(&g, path, max_cells, &e);
        if (s == DPZ_OK && (have_d || fractions)) {
            double dd = have_d ? d : g->d;
            if (g->source_kind == DPZ_SOURCE_SHAPE) {
                dpz_shape shape;
                s = dpz_shape_parse_record(g->source, &shape, &e);
                dpz_grid_destroy(g);
                g = NULL;
                if (s == DPZ_OK) {
                    cli_progress(a, "re-voxelizing the recorded shape at %.4g m", dd);
                    s = dpz_shape_voxelize(&g, &shape, dd, fractions, 4, max_cells, &e);
                }
            } else if (g->source_kind == DPZ_SOURCE_MESH) {
                double unit_m;
                char mesh_path[1024];
                s = dpz_mesh_parse_record(g->source, &unit_m, mesh_path, sizeof mesh_path,
                                          &e);
                dpz_grid_destroy(g);
                g = NULL;
                if (s == DPZ_OK) {
                    char rec[1024];
                    snprintf(rec, sizeof rec, "%s", mesh_path);
                    if (cli_resolve_mesh_path(path, rec, mesh_path, sizeof mesh_path) !=
                        0)
                        return cli_fail("%s: %s records the mesh %s, which cannot be "
                                        "opened (%s): re-voxelize the STL file itself",
                                        cmd, path, rec, strerror(errno));
                    cli_progress(a, "re-voxelizing the recorded mesh %s at %.4g m",
                                 mesh_path, dd);
                    double vol = -1.0;
                    s = dpz_stl_voxelize_file(&g, mesh_path, unit_m, dd, fractions,
                                              max_cells, &vol, &e);
                    if (mesh_volume)
                        *mesh_volume = vol;
                }
            } else {
                dpz_grid_destroy(g);
                return cli_fail("%s: %s is a plain voxel set: --spacing and --fractions "
                                "apply only to a VTK file that records a shape or a mesh "
                                "(written by dipolize shape or voxelize)",
                                cmd, path);
            }
        }
        break;
    case CLI_SRC_NPY:
    case CLI_SRC_CSV:
        if (!have_d)
            return cli_fail(
                "%s: %s holds no spacing: give --spacing LEN (e.g. --spacing 2nm)", cmd,
                path);
        if (fractions)
            return cli_fail("%s: --fractions applies only to shapes and meshes", cmd);
        s = f == CLI_SRC_NPY ? dpz_npy_read_file(&g, path, d, max_cells, &e)
                             : dpz_csvvox_read_file(&g, path, d, max_cells, &e);
        break;
    case CLI_SRC_STL: {
        if (!have_d)
            return cli_fail("%s: an STL mesh needs --spacing LEN (e.g. --spacing 2nm)",
                            cmd);
        if (!unit)
            return cli_fail(
                "%s: an STL mesh needs --stl-unit UNIT (the length unit of its "
                "coordinates: m, cm, mm, um, nm, pm or A)",
                cmd);
        double scale;
        if (dpz_units_length_unit("--stl-unit", unit, &scale, &e) != DPZ_OK)
            return cli_fail_err(cmd, &e);
        double vol = -1.0;
        cli_progress(a, "voxelizing the mesh %s at %.4g m", path, d);
        s = dpz_stl_voxelize_file(&g, path, scale, d, fractions, max_cells, &vol, &e);
        if (mesh_volume)
            *mesh_volume = vol;
        break;
    }
    }
    if (s != DPZ_OK) {
        dpz_grid_destroy(g);
        return cli_fail_err(cmd, &e);
    }
    if (g->n_occ == 0) {
        dpz_grid_destroy(g);
        return cli_fail("%s: %s has no occupied voxel (every label is 0, the host)", cmd,
                        path);
    }
    *grid = g;
    return CLI_OK;
}
