/* amg.h — the iterative backend (amg.c): algebraic-multigrid-preconditioned
 * conjugate gradients through hypre, in the build with -Dmpi=enabled only
 * (LS_HAVE_AMG). */
#ifndef LS_AMG_H
#define LS_AMG_H

#include "solve/solver.h"

/* Stopping rule of every solve with the node block: true relative residual
 * ||b - G x||_2 / ||b||_2 at most this. */
#define LS_AMG_RTOL 1e-10

#ifdef LS_HAVE_AMG
/* The backend (method LS_METHOD_ITERATIVE_AMG, library "hypre").  Its factor
 * is the AMG setup; a matrix whose node block is not symmetric and weakly
 * diagonally dominant with a positive diagonal is LS_SOLVER_NOT_SPD, with
 * bad_column at a column that shows it. */
extern const ls_backend ls_backend_amg;

/* Should the automatic choice take the iterative backend for `a` (whose
 * leading `nodes` unknowns are node voltages) rather than a direct
 * factorization?  1 or 0; the measured rule is beside it in amg.c. */
int ls_amg_preferred(const ls_csc *a, int nodes);

/* From now on, split every system's node block by rows among the ranks of
 * MPI_COMM_WORLD (hypre's distributed matrices), every rank solving the
 * same systems in the same order: for loadstack-mpi running one command
 * that is not split by items (docs/iterative.md).  Call once, after MPI
 * has started and before any solve. */
void ls_amg_spread_ranks(void);
#endif

#endif
