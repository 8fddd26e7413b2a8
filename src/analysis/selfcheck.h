/* selfcheck.h — every solve checks its own results (a debug and CI mode).
 *
 * With LOADSTACK_SELFCHECK=1 in the environment (the test suite sets it),
 * every operating point, fresh or re-solved, is checked before it is used:
 *   - Kirchhoff's current law at every node: the node's row of the modified
 *     nodal system is the sum of the currents leaving it, so b - A x there is
 *     the current the solution fails to account for;
 *   - Tellegen's theorem: the powers the parts absorb (their own results,
 *     computed from the part table, not from the matrix) sum to zero; on
 *     circuits of two-pin parts, whose reported power is their whole power.
 * Each to a tolerance derived from the solve's own relative residual.  A
 * failure is an error naming the node (or the power sum) and the amounts;
 * LOADSTACK_SELFCHECK=abort aborts instead, so a fuzzer counts it. */
#ifndef LS_SELFCHECK_H
#define LS_SELFCHECK_H

#include <stdbool.h>

#include "analysis/op.h"

/* Is the self-check asked for (read from the environment at each call)? */
bool ls_selfcheck_on(void);

/* Check op's solution; 0 when it holds, -1 after an error diagnostic (or
 * abort() in abort mode). */
int ls_selfcheck(ls_op *op);

#endif
