/* mpi_share.h — the MPI side of loadstack-mpi (mpi_share.c). */
#ifndef LS_MPI_SHARE_H
#define LS_MPI_SHARE_H

#include "analysis/share.h"

#include <mpi.h>
#include <stdio.h>

/* One rank of loadstack-mpi. */
typedef struct ls_mpi {
    ls_share share;   /* rank, size and the gather of tol's trials and sweep's points */
    MPI_Comm finish;  /* a copy of MPI_COMM_WORLD for the meeting at the end of the run alone */
    int saved_err;    /* a rank after the first: its own standard error (for a last word), else -1 */
    FILE *err_log;    /* ...and the file its standard error goes to meanwhile, else NULL */
} ls_mpi;

/* MPI_Init_thread and this process's place among MPI_COMM_WORLD's ranks,
 * into *mpi.  0, or -1 when MPI cannot start. */
int ls_mpi_start(int *argc, char ***argv, ls_mpi *mpi);
/* A rank after the first writes nothing: standard output to /dev/null,
 * standard error to a temporary file that ls_mpi_end shows only if this
 * rank has to end the run alone.  0, or -1 when that cannot be arranged. */
int ls_mpi_quiet(ls_mpi *mpi);
/* The end of the run with exit code `code`: the ranks meet and MPI ends.  A
 * rank that failed (code not 0) and whose peers do not come within a few
 * seconds (they wait in an exchange it will never join) shows its error
 * and ends every rank with MPI_Abort(code): a failure of one rank never
 * leaves the others waiting forever.  Returns the code to exit with. */
int ls_mpi_end(ls_mpi *mpi, int code);

#endif
