/* mpi_farm.c: the MPI task farm of `dipolize sweep` (built with -DDPZ_MPI=ON, which
 * defines DPZ_HAVE_MPI). Under `mpirun -n R`, rank 0 hands shard positions out one at a
 * time to whichever worker is free (dynamic load balancing: wavelengths near a resonance
 * take more iterations), receives each finished wavelength's result and writes the rows
 * in wavelength order, so that the directory is always a valid prefix that --resume can
 * continue. Workers never touch the output directory.
 *
 * A worker starts a wavelength from its previous solutions only when that was the
 * preceding position of the shard; otherwise from zero. The tables therefore equal the
 * serial run's to the solver tolerance (not bit for bit, unless one worker got every
 * wavelength in order).
 *
 * Results travel as the bytes of dpz_sweep_result: the ranks must share one binary and
 * byte order (a homogeneous cluster). Without DPZ_HAVE_MPI, or when the program was not
 * started by an MPI launcher, every run is rank 0 of 1 and the sweep is serial. */
#include "sweep_int.h"

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#ifdef DPZ_HAVE_MPI
#include <mpi.h>

enum { TAG_TASK = 1, TAG_STOP = 2, TAG_RESULT = 3 };

/* A worker's answer: the status of the computation, its message, the result. */
typedef struct farm_reply {
    int32_t status;
    int32_t pad;
    char msg[DPZ_ERR_MSG_LEN];
    dpz_sweep_result r;
} farm_reply;

static int mpi_active = 0;

/* True when an MPI launcher started this process (OpenMPI, PMI or PMIx environments).
 * A plain `dipolize sweep` then never initialises MPI, so the serial program needs no
 * MPI runtime at all. */
static int launched_by_mpi(void)
{
    return getenv("OMPI_COMM_WORLD_SIZE") || getenv("PMI_SIZE") || getenv("PMIX_RANK");
}

void dpz__mpi_start(int *argc, char ***argv, int *rank, int *size)
{
    *rank = 0;
    *size = 1;
    if (!launched_by_mpi())
        return;
    int inited = 0;
    MPI_Initialized(&inited);
    if (!inited) {
        if (MPI_Init(argc, argv) != MPI_SUCCESS)
            return;
        mpi_active = 1;
    }
    MPI_Comm_rank(MPI_COMM_WORLD, rank);
    MPI_Comm_size(MPI_COMM_WORLD, size);
}

void dpz__mpi_stop(void)
{
    if (mpi_active) {
        MPI_Finalize();
        mpi_active = 0;
    }
}

int dpz__mpi_max(int v)
{
    if (!mpi_active)
        return v;
    int out = v;
    MPI_Allreduce(&v, &out, 1, MPI_INT, MPI_MAX, MPI_COMM_WORLD);
    return out;
}

int dpz__mpi_bcast(int v)
{
    if (!mpi_active)
        return v;
    MPI_Bcast(&v, 1, MPI_INT, 0, MPI_COMM_WORLD);
    return v;
}

static void send_task(int worker, uint64_t j)
{
    MPI_Send(&j, 1, MPI_UINT64_T, worker, TAG_TASK, MPI_COMM_WORLD);
}

static void send_stop(int worker)
{
    uint64_t none = 0;
    MPI_Send(&none, 1, MPI_UINT64_T, worker, TAG_STOP, MPI_COMM_WORLD);
}

dpz_status dpz__mpi_farm(dpz__sweep_ctx *c, dpz__sweep_out *o, size_t j_first,
                         dpz_err *err)
{
    int size = 1;
    MPI_Comm_size(MPI_COMM_WORLD, &size);
    size_t S = c->shard_size, n = S > j_first ? S - j_first : 0;
    farm_reply *done = calloc(n ? n : 1, sizeof *done);
    char *have = calloc(n ? n : 1, 1);
    farm_reply *rep = malloc(sizeof *rep);
    dpz_status fail = DPZ_OK;
    if (!done || !have || !rep) {
        fail = dpz_err_set(err, DPZ_ENOMEM, "sweep: out of memory on rank 0");
        n = 0; /* hand nothing out; stop every worker */
    }
    size_t next = j_first, write_next = j_first, outstanding = 0;
    for (int w = 1; w < size; w++) {
        if (fail == DPZ_OK && next < S) {
            send_task(w, next++);
            outstanding++;
        } else {
            send_stop(w);
        }
    }
    while (outstanding > 0) {
        MPI_Status ms;
        MPI_Recv(rep, (int)sizeof *rep, MPI_BYTE, MPI_ANY_SOURCE, TAG_RESULT,
                 MPI_COMM_WORLD, &ms);
        outstanding--;
        size_t j = ((size_t)rep->r.position - c->shard_index) / c->shard_count;
        if (rep->status != DPZ_OK) {
            if (fail == DPZ_OK) {
                rep->msg[DPZ_ERR_MSG_LEN - 1] = '\0';
                fail = dpz_err_set(err, (dpz_status)rep->status, "rank %d: %s",
                                   ms.MPI_SOURCE, rep->msg);
            }
        } else if (j >= j_first && j < S) {
            done[j - j_first] = *rep;
            have[j - j_first] = 1;
        }
        /* Rows go out in shard order: the directory stays a prefix --resume can use. */
        while (fail == DPZ_OK && write_next < S && have[write_next - j_first]) {
            fail = dpz__sweep_record(c, o, &done[write_next - j_first].r, NULL, err);
            write_next++;
        }
        if (fail == DPZ_OK && next < S) {
            send_task(ms.MPI_SOURCE, next++);
            outstanding++;
        } else {
            send_stop(ms.MPI_SOURCE);
        }
    }
    free(done);
    free(have);
    free(rep);
    return fail;
}

dpz_status dpz__mpi_work(dpz__sweep_ctx *c, dpz_err *err)
{
    double complex *warm[6] = {NULL};
    int ok = 1;
    for (int i = 0; i < 6; i++) {
        warm[i] = calloc(c->n_vec ? c->n_vec : 1, sizeof(double complex));
        ok = ok && warm[i];
    }
    farm_reply *rep = calloc(1, sizeof *rep);
    dpz_status last = DPZ_OK;
    uint64_t prev = UINT64_MAX;
    for (;;) {
        uint64_t j;
        MPI_Status ms;
        MPI_Recv(&j, 1, MPI_UINT64_T, 0, MPI_ANY_TAG, MPI_COMM_WORLD, &ms);
        if (ms.MPI_TAG == TAG_STOP)
            break;
        size_t p = dpz_sweep_shard_position((size_t)j, c->shard_index, c->shard_count);
        dpz_err e;
        dpz_err_clear(&e);
        dpz_status st;
        if (!ok || !rep) {
            st = dpz_err_set(&e, DPZ_ENOMEM, "out of memory for the solutions");
        } else {
            /* Warm start only along consecutive positions (as the serial run does). */
            if (prev == UINT64_MAX || j != prev + 1)
                for (int i = 0; i < 6; i++)
                    memset(warm[i], 0, c->n_vec * sizeof(double complex));
            st = dpz__sweep_compute(c, p, warm, &rep->r, &e);
        }
        farm_reply fallback;
        farm_reply *out = rep ? rep : &fallback;
        if (!rep)
            memset(&fallback, 0, sizeof fallback);
        out->r.position = p;
        out->status = (int32_t)st;
        snprintf(out->msg, sizeof out->msg, "%s", e.msg);
        MPI_Send(out, (int)sizeof *out, MPI_BYTE, 0, TAG_RESULT, MPI_COMM_WORLD);
        if (st != DPZ_OK)
            last = dpz_err_set(err, st, "%s", e.msg);
        prev = j;
    }
    for (int i = 0; i < 6; i++)
        free(warm[i]);
    free(rep);
    return last;
}

#else /* serial build: one rank */

void dpz__mpi_start(int *argc, char ***argv, int *rank, int *size)
{
    (void)argc;
    (void)argv;
    *rank = 0;
    *size = 1;
}

void dpz__mpi_stop(void) {}

int dpz__mpi_max(int v)
{
    return v;
}

int dpz__mpi_bcast(int v)
{
    return v;
}

dpz_status dpz__mpi_farm(dpz__sweep_ctx *c, dpz__sweep_out *o, size_t j_first,
                         dpz_err *err)
{
    (void)c;
    (void)o;
    (void)j_first;
    return dpz_err_set(err, DPZ_EINVAL, "sweep: this dipolize was built without MPI");
}

dpz_status dpz__mpi_work(dpz__sweep_ctx *c, dpz_err *err)
{
    (void)c;
    return dpz_err_set(err, DPZ_EINVAL, "sweep: this dipolize was built without MPI");
}

#endif
