/* sweep_int.h: declarations shared by sweep.c (the serial sweep, its output directory and
 * --resume) and mpi_farm.c (the MPI task farm). Internal to cli/. */
#ifndef DPZ_CLI_SWEEP_INT_H
#define DPZ_CLI_SWEEP_INT_H

#include <complex.h>
#include <stddef.h>

#include "cli_int.h"
#include "dpz_sweep.h"

#ifdef __cplusplus
extern "C" {
#endif

/* The sweep command for the dispatcher's table (sweep.c). */
extern const cli_cmd cli_cmd_sweep;

/* Everything a rank needs to compute any wavelength of the run. */
typedef struct dpz__sweep_ctx {
    const cli_args *a;
    dpz_grid *grid;    /* owned */
    cli_materials mat; /* owned */
    dpz_setup setup;   /* grid, host index and solver options */
    double *wl;        /* full wavelength list, m (owned) */
    size_t n_wl;
    size_t shard_index, shard_count, shard_size;
    double khat[3];       /* incidence direction, unit vector */
    double complex e0[3]; /* incident polarization (cross sections per |E0|^2) */
    size_t n_vec;         /* 3 * n_occ: length of one solution vector (with --refine:
                             the sum over the levels, coarse to fine) */
    /* --refine: the levels (ref.n == 0 without it), where level l's part of each warm
     * vector starts (warm_off[l], entries), and the multipole origin shared by every
     * level (the user's, else the centroid of the finest level's voxels). */
    cli_refine ref;
    size_t warm_off[CLI_REFINE_MAX];
    double ref_origin_m[3];
} dpz__sweep_ctx;

/* Computes the wavelength at `position` of the full list: the 6x6 tensor (warm-started
 * from `warm`, six vectors of n_vec entries, which receive the solutions, or zeros when
 * the tensor solves did not converge) and the plane-wave cross sections. With --refine
 * every level is solved from its own part of the warm vectors, the tensor is
 * extrapolated (cli_refine_extrapolate) and the cross sections and diagnostics come from
 * the finest level. A solve that
 * does not converge is not an error: r->converged = 0. Other failures (out of memory,
 * FFTW, LAPACK) return their status with the message in err. */
dpz_status dpz__sweep_compute(dpz__sweep_ctx *c, size_t position, double complex *warm[6],
                              dpz_sweep_result *r, dpz_err *err);

/* Rank 0's view of the output directory. */
typedef struct dpz__sweep_out dpz__sweep_out;

/* Records one finished wavelength: appends its rows to the three tables and its entry to
 * the summary, commits (dpz__sweep_commit) after the first wavelength of a session, at
 * the last and whenever 20 times the last commit's duration has passed, and prints the
 * progress line. Results must arrive in shard order. `warm` (may be NULL: none) holds the
 * solutions after this wavelength, for the restart state. */
dpz_status dpz__sweep_record(dpz__sweep_ctx *c, dpz__sweep_out *o,
                             const dpz_sweep_result *r, double complex *const warm[6],
                             dpz_err *err);
/* Makes every recorded wavelength durable: fsync of the tables, the restart state from
 * `warm` (may be NULL), summary.json replaced atomically last (what a resume trusts). */
dpz_status dpz__sweep_commit(dpz__sweep_ctx *c, dpz__sweep_out *o,
                             double complex *const warm[6], dpz_err *err);

/* ---- MPI (mpi_farm.c); without DPZ_HAVE_MPI every rank is rank 0 of 1 ------------- */
/* Initialises MPI when the program was started by an MPI launcher (and built with MPI);
 * *rank and *size receive the rank and the number of ranks (0 and 1 otherwise). */
void dpz__mpi_start(int *argc, char ***argv, int *rank, int *size);
void dpz__mpi_stop(void);
/* The largest of `v` over all ranks (v itself with one rank). */
int dpz__mpi_max(int v);
/* Rank 0's value of `v` on every rank. */
int dpz__mpi_bcast(int v);
/* Rank 0: hands shard positions j_first .. shard_size-1 out to the workers and records
 * their results in shard order. Returns the status of the first failure (a worker's
 * failure message in err). */
dpz_status dpz__mpi_farm(dpz__sweep_ctx *c, dpz__sweep_out *o, size_t j_first,
                         dpz_err *err);
/* Ranks > 0: computes what rank 0 hands out until told to stop. */
dpz_status dpz__mpi_work(dpz__sweep_ctx *c, dpz_err *err);

#ifdef __cplusplus
}
#endif
#endif
