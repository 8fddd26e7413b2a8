/* dense.c — the LAPACK backend: equilibrate (as dgeequ does), factor (dgetrf),
 * estimate the condition (dgecon), solve (dgetrs).  Iterative refinement is done
 * by the caller against the original sparse matrix.  With the singularity test
 * only (ls_solver_singularity_only) the estimate is skipped when a cheap bound
 * already shows it would pass (rcond_floor).  With the own LU
 * (ls_solver_own_lu) a small system on the LU path is factored and solved here instead of by
 * dgetrf and dgetrs (own_getrf, own_getrs): the same factors in the same
 * layout up to rounding, without the library's calls.
 *
 * A matrix that the sparse selection would send to CHOLMOD (symmetric,
 * positive diagonal, weakly diagonally dominant: sparse_select.c's rule 1)
 * is factored by Cholesky instead (the banner "Cholesky" below): half the
 * flops of dgetrf.  Where dpotrf or dpocon refuses it, the LU path factors
 * the same matrix, so the answer and the verdict are the LU's. */
#include <lapacke.h>
#include <stdbool.h>
#include <stdint.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "base/pages.h"
#include "solve/solver.h"
#include "solve/sparse.h"

typedef struct dense {
    int n;
    double *lu;        /* n*n, column-major: the scaled matrix, then its LU factors */
    lapack_int *ipiv;
    double *r, *c;     /* row and column scale factors */
    double *work;
    bool scaled;
    bool floor_only;   /* rcond as a floor where that proves the matrix regular */
    bool own;          /* factor and solve with own_getrf / own_getrs (ls_solver_own_lu) */
    bool own_factors;  /* the factors in lu are own_getrf's */
    double *dinv;      /* with them: 1 / U's diagonal, for own_getrs */
    bool chol;         /* lu holds the Cholesky factor L of S A S, S = diag(r), not LU */
} dense;

static void *dense_create(void)
{
    return calloc(1, sizeof(dense));
}

static void dense_destroy(void *self)
{
    dense *d = self;
    if (!d)
        return;
    free(d->lu);
    free(d->ipiv);
    free(d->r);
    free(d->c);
    free(d->work);
    free(d->dinv);
    free(d);
}

static int dense_analyze(void *self, const ls_csc *a, ls_solver_stats *st)
{
    dense *d = self;
    int n = a->n;
    if (n > LS_DENSE_MAX_UNKNOWNS) {
        st->bytes_needed = ls_dense_bytes(n);
        return LS_SOLVER_TOO_LARGE;
    }
    free(d->lu);
    free(d->ipiv);
    free(d->r);
    free(d->c);
    free(d->work);
    free(d->dinv);
    d->n = n;
    size_t m = n ? (size_t)n : 1;
    d->lu = malloc(m * m * sizeof *d->lu);
    d->ipiv = malloc(m * sizeof *d->ipiv);
    d->r = malloc(m * sizeof *d->r);
    d->c = malloc(m * sizeof *d->c);
    d->work = malloc(m * sizeof *d->work);
    d->dinv = malloc(m * sizeof *d->dinv);
    if (!d->lu || !d->ipiv || !d->r || !d->c || !d->work || !d->dinv) {
        st->bytes_needed = ls_dense_bytes(n);
        return LS_SOLVER_NOMEM;
    }
    /* map its pages in at once: faulting each on its first write costs more,
     * and a 2000-unknown matrix is 8000 pages (base/pages.h) */
    ls_pages_populate(d->lu, m * m * sizeof *d->lu, false);
    st->analyses++;
    return LS_SOLVER_OK;
}

/* Scale factors as LAPACK's dgeequ computes them (r_i = 1 / max_j |a_ij|,
 * c_j = 1 / max_i r_i |a_ij|), but from the compressed matrix: O(nnz) instead of
 * two passes over the dense array.  Returns -1, or the first all-zero row
 * (0..n-1) or column (n..2n-1). */
static int equilibrate(const ls_csc *a, double *r, double *c)
{
    int n = a->n;
    for (int i = 0; i < n; i++)
        r[i] = 0;
    for (int j = 0; j < n; j++)
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++)
            r[a->rowind[p]] = ls_max_acc(r[a->rowind[p]], fabs(a->val[p]));
    for (int i = 0; i < n; i++) {
        if (r[i] == 0)
            return i;
        r[i] = 1 / r[i];
    }
    for (int j = 0; j < n; j++) {
        double m = 0;
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++)
            m = ls_max_acc(m, r[a->rowind[p]] * fabs(a->val[p]));
        if (m == 0)
            return n + j;
        c[j] = 1 / m;
    }
    return -1;
}

/* The singularity test of dense_factor is rcond > SINGULAR_RCOND (dgecon's
 * estimate); rcond_floor stands in for it only above FLOOR_SAFETY times that. */
#define SINGULAR_RCOND (4 * 2.220446049250313e-16)
#define FLOOR_SAFETY 1024.0

/* A floor under the reciprocal condition 1 / (anorm ||U^-1 L^-1||_1) of the
 * LU factors in lu (n x n, column-major, L unit lower), or 0 when the bound
 * overflows.  The comparison matrix M(T) of a triangular T (|t_ii| on its
 * diagonal, -|t_ij| off it) has M(T)^-1 >= |T^-1| entrywise, so
 * ||T^-1||_1 <= ||M(T)^-1||_1 = max_j y_j with M(T)^T y = e: one triangular
 * solve of nonnegative terms each, O(n^2), against dgecon's several.  dgecon's
 * estimate of ||U^-1 L^-1||_1 is a lower bound of it (the norm of A^-1 at
 * vectors of norm at most 1), so its rcond is at least this floor, up to the
 * rounding of its solves, which FLOOR_SAFETY covers many times over. */
static double rcond_floor(const double *lu, int n, double anorm, double *y)
{
    double bu = 0, bl = 0;
    for (int j = 0; j < n; j++) {            /* M(U)^T y = e, forward */
        const double *col = lu + (size_t)j * n;
        double s = 1;
        for (int i = 0; i < j; i++)
            s += fabs(col[i]) * y[i];
        y[j] = s / fabs(col[j]);
        bu = ls_max_acc(bu, y[j]);
    }
    for (int j = n - 1; j >= 0; j--) {       /* M(L)^T y = e, backward, unit diagonal */
        const double *col = lu + (size_t)j * n;
        double s = 1;
        for (int i = j + 1; i < n; i++)
            s += fabs(col[i]) * y[i];
        y[j] = s;
        bl = ls_max_acc(bl, s);
    }
    double den = anorm * bu * bl;
    return den > 0 && isfinite(den) ? 1 / den : 0;
}

/* LU with partial pivoting of the n x n column-major matrix in a, in place,
 * as dgetrf leaves it: L unit lower and U below and above the diagonal, row
 * i swapped with ipiv[i] - 1 at step i (the largest magnitude in the column
 * at or below the diagonal, the first of equals); 1 / U's diagonal into
 * dinv.  Right-looking, one column at a time: for the few tens of unknowns
 * of a candidate's system the arithmetic is a few microseconds, less than
 * the library's calls cost.  Returns 0, or k + 1 for the first exactly zero
 * pivot k (as dgetrf's info; the factorization stops there). */
static int own_getrf(int n, double *restrict a, lapack_int *restrict ipiv, double *restrict dinv)
{
    for (int k = 0; k < n; k++) {
        double *restrict ck = a + (size_t)k * n;
        int p = k;
        double big = fabs(ck[k]);
        for (int i = k + 1; i < n; i++)
            if (fabs(ck[i]) > big) {
                big = fabs(ck[i]);
                p = i;
            }
        ipiv[k] = p + 1;
        if (big == 0)
            return k + 1;
        if (p != k)
            for (int j = 0; j < n; j++) {
                double *cj = a + (size_t)j * n;
                double t = cj[k];
                cj[k] = cj[p];
                cj[p] = t;
            }
        double inv = dinv[k] = 1 / ck[k];
        for (int i = k + 1; i < n; i++)
            ck[i] *= inv;
        for (int j = k + 1; j < n; j++) {
            double *restrict cj = a + (size_t)j * n;
            double u = cj[k];
            if (u != 0)
                for (int i = k + 1; i < n; i++)
                    cj[i] -= ck[i] * u;
        }
    }
    return 0;
}

/* sum of u[i] v[i] for i in [from, to): four partial sums, so that the
 * additions do not wait on each other one by one. */
static double dot(const double *restrict u, const double *restrict v, int from, int to)
{
    double s0 = 0, s1 = 0, s2 = 0, s3 = 0;
    int i = from;
    for (; i + 4 <= to; i += 4) {
        s0 += u[i] * v[i];
        s1 += u[i + 1] * v[i + 1];
        s2 += u[i + 2] * v[i + 2];
        s3 += u[i + 3] * v[i + 3];
    }
    for (; i < to; i++)
        s0 += u[i] * v[i];
    return (s0 + s1) + (s2 + s3);
}

/* Solve A x = b (transpose: A^T x = b) in place with own_getrf's factors. */
static void own_getrs(int n, const double *restrict lu, const lapack_int *restrict ipiv, const double *restrict dinv,
                      double *restrict b, bool transpose)
{
    if (!transpose) {
        for (int k = 0; k < n; k++) {          /* P b, then L y = P b */
            int p = ipiv[k] - 1;
            double t = b[k];
            b[k] = b[p];
            b[p] = t;
        }
        for (int k = 0; k < n; k++) {
            const double *restrict ck = lu + (size_t)k * n;
            double bk = b[k];
            if (bk != 0)
                for (int i = k + 1; i < n; i++)
                    b[i] -= ck[i] * bk;
        }
        for (int k = n - 1; k >= 0; k--) {     /* U x = y */
            const double *restrict ck = lu + (size_t)k * n;
            double bk = b[k] *= dinv[k];
            if (bk != 0)
                for (int i = 0; i < k; i++)
                    b[i] -= ck[i] * bk;
        }
        return;
    }
    for (int k = 0; k < n; k++) {              /* U^T z = b */
        const double *restrict ck = lu + (size_t)k * n;
        b[k] = (b[k] - dot(ck, b, 0, k)) * dinv[k];
    }
    for (int k = n - 1; k >= 0; k--) {         /* L^T w = z */
        const double *restrict ck = lu + (size_t)k * n;
        b[k] -= dot(ck, b, k + 1, n);
    }
    for (int k = n - 1; k >= 0; k--) {         /* x = P^T w */
        int p = ipiv[k] - 1;
        double t = b[k];
        b[k] = b[p];
        b[p] = t;
    }
}

static int dense_factor(void *self, const ls_csc *a, ls_solver_stats *st)
{
    dense *d = self;
    int n = d->n;
    st->rcond_floor = false;
    if (n == 0) {
        st->rcond = 1;
        return LS_SOLVER_OK;
    }
    int zero = equilibrate(a, d->r, d->c);
    if (zero >= 0) {
        st->bad_column = zero >= n ? zero - n : zero;
        st->rcond = 0;
        return LS_SOLVER_SINGULAR;
    }
    d->scaled = true;
    /* Scatter the scaled matrix; its 1-norm (for dgecon) comes from the same loop. */
    memset(d->lu, 0, (size_t)n * n * sizeof *d->lu);
    double anorm = 0;
    for (int j = 0; j < n; j++) {
        double colsum = 0;
        double *col = d->lu + (size_t)j * n;
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++) {
            int i = a->rowind[p];
            col[i] += a->val[p] * d->r[i] * d->c[j];
        }
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++)
            colsum += fabs(col[a->rowind[p]]);
        anorm = ls_max_acc(anorm, colsum);
    }
    /* The _work interfaces skip LAPACKE's NaN scan of the whole matrix: the
     * entries come from finite stamps. */
    d->own_factors = d->own && n <= LS_DENSE_OWN_MAX;
    lapack_int info = d->own_factors ? own_getrf(n, d->lu, d->ipiv, d->dinv)
                                     : LAPACKE_dgetrf_work(LAPACK_COL_MAJOR, n, n, d->lu, n, d->ipiv);
    st->factorizations++;
    if (info > 0) {
        st->bad_column = (int)(info - 1);
        st->rcond = 0;
        return LS_SOLVER_SINGULAR;
    }
    if (info < 0)
        return LS_SOLVER_FAILED;
    st->factor_flops = 2.0 / 3.0 * (double)n * n * n; /* LU without pivoting's count */
    st->solve_flops = 2.0 * (double)n * n;
    if (d->floor_only) {
        double lo = rcond_floor(d->lu, n, anorm, d->work);
        if (lo > FLOOR_SAFETY * SINGULAR_RCOND) {
            st->rcond = lo;
            st->rcond_floor = true;
            return LS_SOLVER_OK;
        }
    }
    double rcond = 0;
    double *work = malloc(4 * (size_t)n * sizeof *work);
    lapack_int *iwork = malloc((size_t)n * sizeof *iwork);
    if (!work || !iwork) {
        free(work);
        free(iwork);
        return LS_SOLVER_NOMEM;
    }
    info = LAPACKE_dgecon_work(LAPACK_COL_MAJOR, '1', n, d->lu, n, anorm, &rcond, work, iwork);
    free(work);
    free(iwork);
    st->rcond = info == 0 ? rcond : NAN;
    if (!(rcond > SINGULAR_RCOND)) {
        /* numerically singular: point at the smallest pivot */
        int worst = 0;
        double wv = INFINITY;
        for (int i = 0; i < n; i++) {
            double v = fabs(d->lu[(size_t)i * n + i]);
            if (v < wv) {
                wv = v;
                worst = i;
            }
        }
        st->bad_column = worst;
        return LS_SOLVER_SINGULAR;
    }
    return LS_SOLVER_OK;
}

static int dense_solve(void *self, double *b, int transpose, ls_solver_stats *st)
{
    (void)st;
    dense *d = self;
    int n = d->n;
    if (n == 0)
        return LS_SOLVER_OK;
    /* A = R^-1 As C^-1:  A x = b  ->  As (C^-1 x) = R b;   A^T y = b  ->  As^T (R^-1 y) = C b */
    const double *pre = transpose ? d->c : d->r, *post = transpose ? d->r : d->c;
    for (int i = 0; i < n; i++)
        b[i] *= pre[i];
    lapack_int info = 0;
    if (d->own_factors)
        own_getrs(n, d->lu, d->ipiv, d->dinv, b, transpose != 0);
    else
        info = LAPACKE_dgetrs_work(LAPACK_COL_MAJOR, transpose ? 'T' : 'N', n, 1, d->lu, n, d->ipiv, b, n);
    for (int i = 0; i < n; i++)
        b[i] *= post[i];
    return info == 0 ? LS_SOLVER_OK : LS_SOLVER_FAILED;
}

static void dense_singularity_only(void *self, bool on)
{
    ((dense *)self)->floor_only = on;
}

static void dense_own_lu(void *self, bool on)
{
    ((dense *)self)->own = on;
}

/* ---- Cholesky ---------------------------------------------------------------------------
 *
 * For A with a positive diagonal, S = diag(1 / sqrt(a_jj)) (dpoequ's scaling)
 * gives As = S A S a unit diagonal; dpotrf factors As = L L^T from its lower
 * triangle, dpocon estimates As's reciprocal condition in the 1-norm and
 * dpotrs solves: A x = b  ->  As (S^-1 x) = S b.  A matrix symmetric only to
 * LS_SPARSE_SYM_TOL is factored as its lower triangle mirrored, as CHOLMOD
 * does; the caller's refinement is against A itself.  For the same reason a
 * transposed solve is a plain one.  The estimate is always made (the floor of
 * ls_solver_singularity_only is the LU path's): it decides whether the LU
 * path must give the verdict. */

/* Scatter the lower triangle of As = S A S into d->lu (column-major; the
 * upper triangle is not read) and S into d->r.  Returns the 1-norm of As as
 * the symmetric matrix that is factored.  a has a positive diagonal. */
static double chol_scatter(dense *d, const ls_csc *a)
{
    int n = d->n;
    double *s = d->r, *colsum = d->work;
    for (int j = 0; j < n; j++) {
        s[j] = 1 / sqrt(a->val[ls_csc_find(a, j, j)]);
        colsum[j] = 0;
    }
    for (int j = 0; j < n; j++) {
        double *col = d->lu + (size_t)j * n;
        memset(col + j, 0, (size_t)(n - j) * sizeof *col);
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++) {
            int i = a->rowind[p];
            if (i < j)
                continue;
            double v = a->val[p] * s[i] * s[j];
            col[i] = v;
            colsum[j] += fabs(v);
            if (i > j)
                colsum[i] += fabs(v);   /* its mirror in column i */
        }
    }
    double anorm = 0;
    for (int j = 0; j < n; j++)
        anorm = fmax(anorm, colsum[j]);
    return anorm;
}

/* Factor a, which passed ls_csc_likely_spd, by Cholesky into d.  LS_SOLVER_OK;
 * LS_SOLVER_NOT_SPD when dpotrf meets a non-positive pivot or dpocon finds
 * As numerically singular (the LU path decides then); LS_SOLVER_NOMEM or
 * LS_SOLVER_FAILED. */
static int chol_factor(dense *d, const ls_csc *a, ls_solver_stats *st)
{
    int n = d->n;
    double anorm = chol_scatter(d, a);
    lapack_int info = LAPACKE_dpotrf_work(LAPACK_COL_MAJOR, 'L', n, d->lu, n);
    if (info > 0)
        return LS_SOLVER_NOT_SPD;
    if (info < 0)
        return LS_SOLVER_FAILED;
    double rcond = 0;
    double *work = malloc(3 * (size_t)n * sizeof *work);
    lapack_int *iwork = malloc((size_t)n * sizeof *iwork);
    if (!work || !iwork) {
        free(work);
        free(iwork);
        st->bytes_needed = ls_dense_bytes(n);
        return LS_SOLVER_NOMEM;
    }
    info = LAPACKE_dpocon_work(LAPACK_COL_MAJOR, 'L', n, d->lu, n, anorm, &rcond, work, iwork);
    free(work);
    free(iwork);
    if (info != 0)
        return LS_SOLVER_FAILED;
    if (!(rcond > SINGULAR_RCOND))
        return LS_SOLVER_NOT_SPD;
    st->factorizations++;
    st->rcond = rcond;
    st->factor_flops = 1.0 / 3.0 * (double)n * n * n;
    st->solve_flops = 2.0 * (double)n * n;
    return LS_SOLVER_OK;
}

/* The backend's factor: Cholesky where a passes ls_csc_likely_spd, else (or
 * where Cholesky refuses it) LU on the same matrix.  stats.method says which
 * factor is held, stats.cholesky_refused whether Cholesky was refused; a
 * refused attempt is not counted in stats.factorizations. */
static int dense_factor_any(void *self, const ls_csc *a, ls_solver_stats *st)
{
    dense *d = self;
    d->chol = false;
    st->cholesky_refused = false;
    st->method = LS_METHOD_DENSE_LU;
    if (d->n > 0 && ls_csc_likely_spd(a)) {
        st->rcond_floor = false;
        int r = chol_factor(d, a, st);
        if (r != LS_SOLVER_NOT_SPD) {
            d->chol = r == LS_SOLVER_OK;
            if (d->chol)
                st->method = LS_METHOD_DENSE_CHOLESKY;
            return r;
        }
        st->cholesky_refused = true;
    }
    return dense_factor(self, a, st);
}

/* The backend's solve, with the factor dense_factor_any kept. */
static int dense_solve_any(void *self, double *b, int transpose, ls_solver_stats *st)
{
    dense *d = self;
    if (!d->chol)
        return dense_solve(self, b, transpose, st);
    int n = d->n;
    for (int i = 0; i < n; i++)
        b[i] *= d->r[i];
    lapack_int info = LAPACKE_dpotrs_work(LAPACK_COL_MAJOR, 'L', n, 1, d->lu, n, b, n);
    for (int i = 0; i < n; i++)
        b[i] *= d->r[i];
    return info == 0 ? LS_SOLVER_OK : LS_SOLVER_FAILED;
}

const ls_backend ls_backend_dense = {
    .name = "lapack",
    .create = dense_create,
    .analyze = dense_analyze,
    .factor = dense_factor_any,
    .solve = dense_solve_any,
    .destroy = dense_destroy,
    .singularity_only = dense_singularity_only,
    .own_lu = dense_own_lu,
};
