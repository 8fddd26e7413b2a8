/* mpi_share.h — the MPI side of loadstack-mpi (mpi_share.c). */
#ifndef LS_MPI_SHARE_H
#define LS_MPI_SHARE_H

#include "analysis/share.h"

/* MPI_Init_thread and this process's place among MPI_COMM_WORLD's ranks,
 * into *share.  0, or -1 when MPI cannot start. */
int ls_mpi_start(int *argc, char ***argv, ls_share *share);
/* MPI_Finalize, before the program exits. */
void ls_mpi_end(void);

#endif
