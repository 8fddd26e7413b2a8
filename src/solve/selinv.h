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
 * (Gilbert-Peierls).  After ls_selinv_fill the entries on the factor's
 * closed pattern come instead from one backward pass over the factor, and
 * each costs a lookup (sag's what-if rows read a few per part).  No
 * refinement: callers use it only where the factor's pivots say the plain
 * LU is accurate (ls_selinv_new's rcond). */
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
 * gets the same entries' sums of |terms| of the final product (from the
 * filled pattern: the recurrences run on absolute values, a bound of the
 * same kind): an entry much smaller than its mag came out of cancellation,
 * and its rounding is relative to mag, not to itself.  Returns 0, or -1 when an index is out of range. */
#define LS_SELINV_MAX 4
int ls_selinv_block(ls_selinv *s, const int *rows, int nr, const int *cols, int nc, double *out, double *mag);

/* The selected inverse on the factor's pattern, in one backward pass over
 * the factor (Takahashi's recurrences, selinv.c): afterwards every entry of
 * A^-1 whose pivot positions lie in the closed pattern of L + U -- among
 * them every (i, j) with A_ij and A_ji on the diagonal pivots, so the
 * entries among one part's own unknowns -- costs a lookup, and
 * ls_selinv_block takes them from there (others still by the two solves).
 * The pass costs about what the factorization did and keeps four doubles
 * per pattern entry, so callers ask for it only when they will read many
 * entries.  0, or -1 out of memory (then the solves go on serving). */
int ls_selinv_fill(ls_selinv *s);

/* The number of entries the filled pattern holds (0 before ls_selinv_fill),
 * and entry k of them (0 <= k < size): *row, *col its place in A^-1, *value
 * (A^-1)_{row,col}, *mag (may be NULL) the same entry of the recurrences run
 * on absolute values, a bound on |value| whose excess measures cancellation.
 * Each place appears once.  0, or -1 when k is out of range.  For tests and
 * for reading the pattern whole. */
long ls_selinv_pattern_size(const ls_selinv *s);
int ls_selinv_pattern_entry(const ls_selinv *s, long k, int *row, int *col, double *value, double *mag);

/* Frees *ps and sets it to NULL; accepts NULL. */
void ls_selinv_free(ls_selinv **ps);

#endif
