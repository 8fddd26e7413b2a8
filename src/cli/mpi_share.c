/* mpi_share.c — ls_share over MPI, for the loadstack-mpi program only (the
 * library and the plain program link no MPI). */
#ifdef LS_MPI_PROGRAM /* (only loadstack-mpi compiles it with MPI's headers) */

#include "cli/mpi_share.h"

#include <limits.h>
#include <mpi.h>
#include <stdlib.h>

/* Every rank's range of items (ls_share_range) to all, by MPI_Allgatherv of
 * bytes.  0, or -1 when a count does not fit MPI's int or MPI fails. */
static int mpi_gather(const ls_share *s, void *buf, long count, size_t width)
{
    int *counts = malloc((size_t)s->size * sizeof *counts), *displs = malloc((size_t)s->size * sizeof *displs);
    int ok = counts && displs;
    for (int r = 0; ok && r < s->size; r++) {
        long long first = (long long)count * r / s->size, last = (long long)count * (r + 1) / s->size;
        long long bytes = (last - first) * (long long)width, at = first * (long long)width;
        ok = bytes <= INT_MAX && at <= INT_MAX;
        if (ok) {
            counts[r] = (int)bytes;
            displs[r] = (int)at;
        }
    }
    /* every rank knows every count: all take the same branch */
    int rc = ok ? MPI_Allgatherv(MPI_IN_PLACE, 0, MPI_DATATYPE_NULL, buf, counts, displs, MPI_BYTE, MPI_COMM_WORLD)
                : MPI_ERR_COUNT;
    free(counts);
    free(displs);
    return rc == MPI_SUCCESS ? 0 : -1;
}

int ls_mpi_start(int *argc, char ***argv, ls_share *share)
{
    int provided;
    /* tol's worker threads reach hypre through one lock (amg.c): serialized */
    if (MPI_Init_thread(argc, argv, MPI_THREAD_SERIALIZED, &provided) != MPI_SUCCESS)
        return -1;
    MPI_Comm_rank(MPI_COMM_WORLD, &share->rank);
    MPI_Comm_size(MPI_COMM_WORLD, &share->size);
    share->gather = mpi_gather;
    return 0;
}

void ls_mpi_end(void)
{
    MPI_Finalize();
}

#endif /* LS_MPI_PROGRAM */
