/* mpi_share.c — ls_share over MPI, for the loadstack-mpi program only (the
 * library and the plain program link no MPI). */
#ifdef LS_MPI_PROGRAM /* (only loadstack-mpi compiles it with MPI's headers) */

#include "cli/mpi_share.h"

#include <limits.h>
#include <mpi.h>
#include <stdlib.h>
#include <time.h>
#include <unistd.h>

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

/* The tests fail one rank's first exchange on purpose
 * (LOADSTACK_TEST_RANK_FAILS=RANK, tests/mpi/rank_fails.sh): that rank
 * returns as if it had run out of memory before it, and the others wait. */
static int test_fails_here(const ls_share *s)
{
    const char *e = getenv("LOADSTACK_TEST_RANK_FAILS");
    return e && *e && atoi(e) == s->rank;
}

/* The gather of ls_share, or the failure the tests ask for. */
static int mpi_gather_or_fail(const ls_share *s, void *buf, long count, size_t width)
{
    return test_fails_here(s) ? -1 : mpi_gather(s, buf, count, width);
}

int ls_mpi_start(int *argc, char ***argv, ls_mpi *mpi)
{
    int provided;
    ls_share *share = &mpi->share;
    mpi->saved_err = -1;
    mpi->err_log = NULL;
    /* tol's worker threads reach hypre through one lock (amg.c): serialized */
    if (MPI_Init_thread(argc, argv, MPI_THREAD_SERIALIZED, &provided) != MPI_SUCCESS)
        return -1;
    MPI_Comm_rank(MPI_COMM_WORLD, &share->rank);
    MPI_Comm_size(MPI_COMM_WORLD, &share->size);
    share->gather = mpi_gather_or_fail;
    if (MPI_Comm_dup(MPI_COMM_WORLD, &mpi->finish) != MPI_SUCCESS)
        return -1;
    return 0;
}

int ls_mpi_quiet(ls_mpi *mpi)
{
    fflush(stdout);
    fflush(stderr);
    mpi->saved_err = dup(STDERR_FILENO);
    mpi->err_log = tmpfile();
    if (mpi->saved_err < 0 || !mpi->err_log || !freopen("/dev/null", "w", stdout) ||
        dup2(fileno(mpi->err_log), STDERR_FILENO) < 0)
        return -1;
    return 0;
}

/* Copy what this rank wrote to its standard error (the log) to the
 * standard error it had. */
static void show_log(ls_mpi *mpi)
{
    fflush(stderr);
    if (!mpi->err_log || mpi->saved_err < 0)
        return;
    rewind(mpi->err_log);
    char buf[4096];
    size_t n;
    while ((n = fread(buf, 1, sizeof buf, mpi->err_log)) > 0)
        if (write(mpi->saved_err, buf, n) < 0)
            break;
}

/* Seconds a failed rank waits for the others at the end before it decides
 * they are stuck in an exchange it did not join.  Every rank does the same
 * work up to its last exchange, so healthy peers come within moments. */
#define FINISH_WAIT_S 5.0

int ls_mpi_end(ls_mpi *mpi, int code)
{
    MPI_Request req;
    int done = 0;
    if (MPI_Ibarrier(mpi->finish, &req) == MPI_SUCCESS) {
        double t0 = MPI_Wtime();
        /* a rank that succeeded waits as long as it takes: a failed rank ends it */
        while (!done && (code == 0 || MPI_Wtime() - t0 < FINISH_WAIT_S)) {
            MPI_Test(&req, &done, MPI_STATUS_IGNORE);
            if (!done) {
                struct timespec nap = {0, 10 * 1000 * 1000};
                nanosleep(&nap, NULL);
            }
        }
    }
    if (!done) {
        show_log(mpi);
        char line[200];
        int len = snprintf(line, sizeof line,
                           "loadstack-mpi: error: rank %d of %d stopped (exit %d) while the others wait for it: "
                           "ending every rank\n", mpi->share.rank, mpi->share.size, code);
        if (write(mpi->saved_err >= 0 ? mpi->saved_err : STDERR_FILENO, line, (size_t)len) < 0)
            len = 0;
        MPI_Abort(MPI_COMM_WORLD, code);
    }
    if (mpi->err_log)
        fclose(mpi->err_log);
    if (mpi->saved_err >= 0)
        close(mpi->saved_err);
    MPI_Comm_free(&mpi->finish);
    MPI_Finalize();
    return code;
}

#endif /* LS_MPI_PROGRAM */
