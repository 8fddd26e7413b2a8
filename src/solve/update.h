/* update.h — solves of a matrix that differs from the factored one in a few
 * rows, through the kept factor and the Sherman-Morrison-Woodbury identity
 * (used by solver.c when a caller allows it: ls_solver_allow_update). */
#ifndef LS_UPDATE_H
#define LS_UPDATE_H

#include <stdbool.h>

#include "base/csc.h"

typedef struct ls_update ls_update;

/* A solve with the kept factor of A0 (plain or transposed, in place): the
 * backend's, given to the update by solver.c; 0 ok, else the backend's
 * status (LS_SOLVER_*, all <= 0). */
typedef int (*ls_kept_solve)(void *ctx, double *b, int transpose);

/* A new, empty update state, or NULL when out of memory. */
ls_update *ls_update_new(void);
void ls_update_free(ls_update *u);

/* A0 := a (its pattern and values copied): the matrix the backend just
 * factored.  Solves are plain again.  0, or -1 no memory (the update is then
 * off until the next successful keep). */
int ls_update_keep(ls_update *u, const ls_csc *a, double rcond);

/* Try to take a (same pattern as A0) as A0 + D with D nonzero in few rows,
 * solving through the kept factor: chosen when its estimated work (rank
 * solves to set up, more work per solve) is below the refactorization's
 * (factor_flops, solve_flops: the backend's counts for A0), or always /
 * never with LOADSTACK_LOWRANK=1 / 0.  Returns true when the update is in
 * force (*rcond then estimates a's reciprocal condition from A0's), false
 * when the caller must refactor (the rank is too large, it would not pay,
 * the capacitance matrix I + D A0^-1 E is close to singular, the pattern
 * differs, no memory). */
bool ls_update_try(ls_update *u, const ls_csc *a, double factor_flops, double solve_flops, ls_kept_solve solve,
                   void *ctx, double *rcond);

/* Is an update in force (solves must go through ls_update_solve)? */
bool ls_update_active(const ls_update *u);

/* ls_update_solve's answer when the caller must refactor and solve again
 * (positive: apart from every LS_SOLVER_* status). */
#define LS_UPDATE_REJECTED 1

/* Solve a x = b (or a^T x = b) in place through the update.  The solution's
 * residual against the true a (A0 + D) is checked; when it is not small
 * (backward error above 1e-10) the answer is LS_UPDATE_REJECTED, b is given
 * back unchanged, and the caller refactors a (ls_update_matrix) and solves
 * plainly.  0 ok, LS_UPDATE_REJECTED, or the kept solve's failing status. */
int ls_update_solve(ls_update *u, double *b, int transpose, ls_kept_solve solve, void *ctx);

/* The matrix of the update in force (A0 + D), for a refactorization. */
const ls_csc *ls_update_matrix(ls_update *u);

/* Counters, for tests and benchmarks: updates used, and solves whose
 * residual check sent them to a refactorization. */
void ls_update_counts(const ls_update *u, long *updates, long *rejected);

#endif
