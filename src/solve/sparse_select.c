/* sparse_select.c — which SuiteSparse backend to use for a matrix.
 *
 * The rule (measured with tests/bench/sparse_pick_bench.c; numbers in
 * docs/sparse-backends.md):
 *
 *  1. CHOLMOD when A is numerically symmetric (LS_SPARSE_SYM_TOL), every
 *     diagonal entry is positive, and every column is weakly diagonally
 *     dominant (a_jj >= sum_i!=j |a_ij|, up to rounding).  By Gershgorin that
 *     makes A positive semidefinite, and it is exactly the shape of a nodal
 *     matrix of resistors and current sources; singular cases (a floating
 *     node) come back LS_SOLVER_NOT_SPD and the caller retries with LU.
 *     Symmetric matrices that are not dominant are not guessed at: a failed
 *     Cholesky costs an analysis and part of a factorization, and LU is
 *     never wrong.
 *  1b. The reduced nodal form (reduced.c: ls_backend_reduced, CHOLMOD inside)
 *     when A is the MNA matrix of resistors, current sources and voltage
 *     sources: grounded sources without rs fix their node, sources with rs
 *     are Norton-converted, and what is left is a nodal matrix like rule 1's.
 *     A source-fed grid is the common case; its full MNA matrix is not
 *     positive definite and would otherwise go to LU.  A failed Cholesky
 *     (a floating node) comes back LS_SOLVER_NOT_SPD and LU is retried.
 *  2. Otherwise LU, and KLU unless the factor will be thick.  KLU's
 *     left-looking kernel (no BLAS) is faster than UMFPACK's multifrontal
 *     one on everything circuit-like we measured, and its refactor and
 *     solve are faster on everything; UMFPACK's BLAS-3 fronts only catch up
 *     on big 2-D meshes.  So UMFPACK is chosen only when
 *       n >= PICK_UMF_MIN_N, nnz/col >= PICK_UMF_MIN_PER_COL, and
 *       AMD's estimate of nnz(L)/n for A+A^T >= PICK_UMF_MIN_FILL.
 *     nnz/col alone cannot do it: a 2-D mesh has 5 per column like many
 *     circuits, but fills in heavily.  The AMD ordering costs O(nnz) time,
 *     about a tenth of a mesh factorization, and the first two tests keep
 *     the small and the chain-like matrices from paying for it.  If AMD
 *     cannot run (memory), KLU.  Measured crossover: at fill 20/col
 *     (n = 1e4) KLU factors 1.8x faster; at 30/col (n = 9e4) UMFPACK factors
 *     1.35x faster (KLU still solves 3x faster); at 38/col (n = 2.5e5)
 *     UMFPACK is 2x faster.  25 splits the bracket.
 */
#include "solve/sparse.h"
#include "solve/reduced.h"

#include <amd.h>

#include <math.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdlib.h>

#define PICK_UMF_MIN_N 50000
#define PICK_UMF_MIN_PER_COL 4.0
#ifndef PICK_UMF_MIN_FILL
#define PICK_UMF_MIN_FILL 25.0
#endif

/* See sparse.h.  Columns are the rows of a symmetric matrix, so column sums
 * are the Gershgorin radii. */
int ls_csc_dominance(const ls_csc *a, unsigned char *strict)
{
    for (int j = 0; j < a->n; j++) {
        double diag = 0, off = 0;
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++) {
            if (a->rowind[p] == j)
                diag = a->val[p];
            else
                off += fabs(a->val[p]);
        }
        /* the slack absorbs rounding when diag and off sum the same stamps */
        if (!(diag > 0) || diag < off * (1 - 64 * 2.220446049250313e-16))
            return j;
        if (strict)
            strict[j] = diag > off * (1 + 64 * 2.220446049250313e-16);
    }
    return -1;
}

/* See sparse.h. */
bool ls_csc_likely_spd(const ls_csc *a)
{
    if (a->n <= 0 || ls_csc_dominance(a, NULL) >= 0) /* cheap, and rejects most MNA matrices */
        return false;
    int *work = malloc((size_t)a->n * sizeof(int));
    if (!work)
        return false;
    bool sym = ls_csc_asym_column(a, work) < 0;
    free(work);
    return sym;
}

/* AMD's statistics (info[AMD_INFO]) of its ordering of A+A^T; false if
 * it could not run (memory). */
static bool amd_stats(const ls_csc *a, double *info)
{
    int *perm = malloc((size_t)a->n * sizeof(int));
    if (!perm)
        return false;
    double control[AMD_CONTROL];
    amd_defaults(control);
    int s = amd_order(a->n, a->colptr, a->rowind, perm, control, info);
    free(perm);
    return s == AMD_OK || s == AMD_OK_BUT_JUMBLED;
}

/* See sparse.h. */
double ls_csc_fill_per_column(const ls_csc *a)
{
    double info[AMD_INFO];
    if (!amd_stats(a, info))
        return -1;
    return (info[AMD_LNZ] + a->n) / a->n;
}

/* See sparse.h. */
double ls_sparse_lu_flops(const ls_csc *a)
{
    double info[AMD_INFO];
    if (!a || a->n <= 0 || !amd_stats(a, info))
        return -1;
    return info[AMD_NDIV] + 2 * info[AMD_NMULTSUBS_LU];
}

const ls_backend *ls_sparse_pick(const ls_csc *a, ls_method *method_out)
{
    const ls_backend *be = &ls_backend_klu;
    ls_method m = LS_METHOD_SPARSE_LU;
    if (a && a->n > 0) {
        if (ls_csc_likely_spd(a)) {
            be = &ls_backend_cholmod;
            m = LS_METHOD_SPARSE_CHOLESKY;
        } else if (ls_mna_reducible(a)) {
            be = &ls_backend_reduced;
            m = LS_METHOD_SPARSE_CHOLESKY;
        } else if (a->n >= PICK_UMF_MIN_N &&
                   (double)ls_csc_nnz(a) / a->n >= PICK_UMF_MIN_PER_COL &&
                   ls_csc_fill_per_column(a) >= PICK_UMF_MIN_FILL) {
            be = &ls_backend_umfpack;
        }
    }
    if (method_out)
        *method_out = m;
    return be;
}
