/* selinv.h — single entries of A^-1 from a sparse LU, at a cost that follows
 * the factor's structure near those entries instead of the order of A.
 *
 * The port report needs six entries of A^-1 per port (rows k and f, columns
 * f, t, k); a full solve for each row made its work grow with the circuit
 * (docs/performance.md).  Here A is factored once by KLU without the block
 * triangular form, P (Rs \ A) Q = L U, and
 *     (A^-1)_ij = (U^-T e_qinv(i))^T (L^-1 e_pinv(j)) / Rs_j,   (Rs_j: row j's scale)
 * two triangular solves whose right-hand sides have one nonzero, so each
 * touches only the columns reachable from it in the factor's graph
 * (Gilbert-Peierls).  No refinement: callers use it only where the factor's
 * pivots say the plain LU is accurate (ls_selinv_new's rcond). */
#ifndef LS_SELINV_H
#define LS_SELINV_H

#include "solve/solver.h"

typedef struct ls_selinv ls_selinv;

/* Factor a (not modified, not kept).  Returns NULL when out of memory or when
 * KLU finds the matrix singular.  *rcond gets KLU's pivot ratio
 * min |u_kk| / max |u_kk| of the row-scaled matrix.  Free with ls_selinv_free. */
ls_selinv *ls_selinv_new(const ls_csc *a, double *rcond);

/* out[r * nc + c] = (A^-1)_{rows[r], cols[c]} for nr, nc <= LS_SELINV_MAX
 * (unknown indices; a negative index, ground, gives 0).  mag (may be NULL)
 * gets the same entries' sums of |terms| of the final product: an entry much
 * smaller than its mag came out of cancellation, and its rounding is relative
 * to mag, not to itself.  Returns 0, or -1 when an index is out of range. */
#define LS_SELINV_MAX 4
int ls_selinv_block(ls_selinv *s, const int *rows, int nr, const int *cols, int nc, double *out, double *mag);

/* Frees *ps and sets it to NULL; accepts NULL. */
void ls_selinv_free(ls_selinv **ps);

#endif
