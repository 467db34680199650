/* cmd_info.c: `dipolize info FILE [--json]`: the facts of a voxel grid (dimensions,
 * spacing, occupied voxels per label, volume, equal-volume radius, where it came from).
 */
#include "cli_int.h"

#include <math.h>
#include <string.h>

static const char *source_kind_name(dpz_source_kind k)
{
    switch (k) {
    case DPZ_SOURCE_SHAPE:
        return "shape";
    case DPZ_SOURCE_MESH:
        return "mesh";
    default:
        return "voxels";
    }
}

/* Bounding box of the occupied voxel centres, m, grid frame. */
static void occupied_box(const dpz_grid *g, double lo[3], double hi[3])
{
    for (int c = 0; c < 3; c++) {
        lo[c] = INFINITY;
        hi[c] = -INFINITY;
    }
    for (size_t v = 0; v < g->n_occ; v++) {
        double r[3];
        dpz_grid_centre(g, g->occ[v], r);
        for (int c = 0; c < 3; c++) {
            if (r[c] < lo[c])
                lo[c] = r[c];
            if (r[c] > hi[c])
                hi[c] = r[c];
        }
    }
}

static int run_info(const cli_args *a)
{
    dpz_grid *g = NULL;
    cli_src_format fmt;
    double mesh_volume = -1.0;
    int rc = cli_load_geometry(a, a->pos[0], &g, &fmt, &mesh_volume);
    if (rc != CLI_OK)
        return rc;
    size_t counts[256];
    dpz_grid_label_counts(g, counts);
    double centroid[3], lo[3], hi[3];
    dpz_grid_centroid(g, centroid);
    occupied_box(g, lo, hi);
    double vol = dpz_grid_volume(g), aeq = dpz_grid_aeq(g);
    /* A recorded shape has a volume formula (dpz_shape_volume; negative when none). */
    double shape_volume = -1.0;
    dpz_shape shape;
    if (g->source_kind == DPZ_SOURCE_SHAPE &&
        dpz_shape_parse_record(g->source, &shape, NULL) == DPZ_OK)
        shape_volume = dpz_shape_volume(&shape);
    if (cli_flag(a, "--json")) {
        cJSON *o = cJSON_CreateObject();
        cJSON_AddStringToObject(o, "file", a->pos[0]);
        cJSON_AddStringToObject(o, "format", cli_src_format_name(fmt));
        double dims[3] = {(double)g->nx, (double)g->ny, (double)g->nz};
        cJSON_AddItemToObject(o, "dims", cli_json_doubles(dims, 3));
        cli_json_add_number(o, "spacing_m", g->d);
        cli_json_add_number(o, "voxels", (double)g->n_occ);
        cJSON *labels = cJSON_CreateArray();
        for (int l = 1; l < 256; l++) {
            if (!counts[l])
                continue;
            cJSON *e = cJSON_CreateObject();
            cli_json_add_number(e, "label", l);
            cli_json_add_number(e, "voxels", (double)counts[l]);
            cJSON_AddItemToArray(labels, e);
        }
        cJSON_AddItemToObject(o, "labels", labels);
        cli_json_add_number(o, "volume_m3", vol);
        cli_json_add_number(o, "a_eq_m", aeq);
        cJSON_AddItemToObject(o, "origin_m", cli_json_vec3(g->origin));
        cJSON_AddItemToObject(o, "centroid_m", cli_json_vec3(centroid));
        cJSON_AddItemToObject(o, "occupied_min_m", cli_json_vec3(lo));
        cJSON_AddItemToObject(o, "occupied_max_m", cli_json_vec3(hi));
        cJSON_AddBoolToObject(o, "fractions", g->fill != NULL);
        cJSON *src = cJSON_CreateObject();
        cJSON_AddStringToObject(src, "kind", source_kind_name(g->source_kind));
        cJSON_AddStringToObject(src, "record", g->source);
        cJSON_AddItemToObject(o, "source", src);
        if (mesh_volume >= 0)
            cli_json_add_number(o, "mesh_volume_m3", mesh_volume);
        if (shape_volume > 0)
            cli_json_add_number(o, "shape_volume_m3", shape_volume);
        rc = cli_json_emit(o);
    } else {
        printf("file        %s (%s)\n", a->pos[0], cli_src_format_name(fmt));
        printf("source      %s%s%s\n", source_kind_name(g->source_kind),
               g->source[0] ? ": " : "", g->source);
        printf("grid        %zu x %zu x %zu cells, spacing %.6g m\n", g->nx, g->ny, g->nz,
               g->d);
        printf("voxels      %zu occupied%s\n", g->n_occ,
               g->fill ? " (with boundary fill fractions)" : "");
        for (int l = 1; l < 256; l++)
            if (counts[l])
                printf("  label %-3d %zu voxels\n", l, counts[l]);
        printf("volume      %.6e m^3", vol);
        if (mesh_volume >= 0)
            printf(" (mesh %.6e m^3, %+.2f%%)", mesh_volume,
                   100.0 * (vol - mesh_volume) / mesh_volume);
        if (shape_volume > 0)
            printf(" (shape %.6e m^3, %+.2f%%)", shape_volume,
                   100.0 * (vol - shape_volume) / shape_volume);
        printf("\na_eq        %.6e m (radius of the sphere of equal volume)\n", aeq);
        printf("centroid    %.6e %.6e %.6e m\n", centroid[0], centroid[1], centroid[2]);
        printf("extent      %.6e .. %.6e, %.6e .. %.6e, %.6e .. %.6e m (voxel centres)\n",
               lo[0], hi[0], lo[1], hi[1], lo[2], hi[2]);
    }
    dpz_grid_destroy(g);
    return rc;
}

static const cli_opt info_opts[] = {
    {"--json", NULL,
     "print one JSON object: dims, spacing_m, voxels, labels, volume_m3, a_eq_m, source, "
     "...",
     0},
    {"--quiet", NULL, "no progress lines on stderr", 0},
    {NULL, NULL, NULL, 0},
};
static const cli_group info_group = {"Output", info_opts};

const cli_cmd cli_cmd_info = {
    .name = "info",
    .usage = "FILE [--json] [--spacing LEN]",
    .summary = "print the facts of a voxel grid",
    .details = "FILE is a VTK voxel file, a NumPy .npy or CSV (i,j,k,label) voxel file "
               "(with --spacing), or an STL mesh (with --spacing and --stl-unit).",
    .example = "dipolize info srr.vtk --json",
    .min_pos = 1,
    .max_pos = 1,
    .groups = {&info_group, &cli_group_geometry, NULL},
    .run = run_info,
};
