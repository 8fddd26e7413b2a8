/* sparse.h — choosing among the SuiteSparse backends declared in solver.h. */
#ifndef LS_SPARSE_H
#define LS_SPARSE_H

#include "solve/solver.h"

#include <stdbool.h>

/* Pick the sparse backend for `a` from its structure and values (see the rule in
 * sparse_select.c).  Never NULL.  *method_out (may be NULL) gets
 * LS_METHOD_SPARSE_CHOLESKY for CHOLMOD, else LS_METHOD_SPARSE_LU.  A CHOLMOD
 * pick is a prediction: on LS_SOLVER_NOT_SPD the caller retries with LU. */
const ls_backend *ls_sparse_pick(const ls_csc *a, ls_method *method_out);

/* Estimated floating-point operations of a sparse LU of `a` (divisions plus
 * twice the multiply-subtract pairs of AMD's ordering of A+A^T, no pivoting),
 * or -1 when the estimate could not be made (memory).  O(nnz) time. */
double ls_sparse_lu_flops(const ls_csc *a);

/* Relative tolerance under which a_ij and a_ji count as equal. */
#define LS_SPARSE_SYM_TOL (8 * 2.220446049250313e-16)

/* -1 if A equals A^T (pattern, and values within LS_SPARSE_SYM_TOL), otherwise a
 * column where they differ.  `work` is n ints of scratch.  O(nnz). */
int ls_csc_asym_column(const ls_csc *a, int *work);

/* Positive diagonal and weak column dominance (a_jj >= sum_i!=j |a_ij|, up
 * to rounding): -1 when every column has them, else the first column that
 * does not.  strict (n bytes, may be NULL) gets 1 per column whose diagonal
 * exceeds that sum (a conductance to ground).  O(nnz). */
int ls_csc_dominance(const ls_csc *a, unsigned char *strict);

/* Rule 1 of the selection (sparse_select.c): A symmetric (ls_csc_asym_column)
 * with a positive diagonal and weak column dominance (ls_csc_dominance), so
 * positive semidefinite; a Cholesky factorization is tried on it (CHOLMOD,
 * or the dense backend's dpotrf).  False for n = 0 or without memory.  O(nnz). */
bool ls_csc_likely_spd(const ls_csc *a);

/* AMD's estimate of nnz(L)/n for A+A^T (the fill of a direct factor), or -1
 * if it could not be computed (no memory).  O(nnz) time. */
double ls_csc_fill_per_column(const ls_csc *a);

#endif
