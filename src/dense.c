/* dense.c — the LAPACK backend: equilibrate (dgeequ), factor (dgetrf),
 * estimate the condition (dgecon), solve (dgetrs).  Iterative refinement is done
 * by the caller against the original sparse matrix. */
#include <lapacke.h>
#include <stdbool.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "solver.h"

typedef struct dense {
    int n;
    double *lu;        /* n*n, column-major: the scaled matrix, then its LU factors */
    lapack_int *ipiv;
    double *r, *c;     /* row and column scale factors */
    double *work;
    bool scaled;
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
    d->n = n;
    size_t m = n ? (size_t)n : 1;
    d->lu = malloc(m * m * sizeof *d->lu);
    d->ipiv = malloc(m * sizeof *d->ipiv);
    d->r = malloc(m * sizeof *d->r);
    d->c = malloc(m * sizeof *d->c);
    d->work = malloc(m * sizeof *d->work);
    if (!d->lu || !d->ipiv || !d->r || !d->c || !d->work) {
        st->bytes_needed = ls_dense_bytes(n);
        return LS_SOLVER_NOMEM;
    }
    st->analyses++;
    return LS_SOLVER_OK;
}

static int dense_factor(void *self, const ls_csc *a, ls_solver_stats *st)
{
    dense *d = self;
    int n = d->n;
    if (n == 0) {
        st->rcond = 1;
        return LS_SOLVER_OK;
    }
    memset(d->lu, 0, (size_t)n * n * sizeof *d->lu);
    for (int j = 0; j < n; j++)
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++)
            d->lu[(size_t)j * n + a->rowind[p]] += a->val[p];
    double rowcnd, colcnd, amax;
    lapack_int info = LAPACKE_dgeequ(LAPACK_COL_MAJOR, n, n, d->lu, n, d->r, d->c, &rowcnd, &colcnd, &amax);
    if (info > 0) {
        /* an all-zero row (info <= n) or column (info > n) */
        st->bad_column = info > n ? (int)(info - n - 1) : (int)(info - 1);
        st->rcond = 0;
        return LS_SOLVER_SINGULAR;
    }
    d->scaled = true;
    for (int j = 0; j < n; j++)
        for (int i = 0; i < n; i++)
            d->lu[(size_t)j * n + i] *= d->r[i] * d->c[j];
    double anorm = LAPACKE_dlange(LAPACK_COL_MAJOR, '1', n, n, d->lu, n);
    info = LAPACKE_dgetrf(LAPACK_COL_MAJOR, n, n, d->lu, n, d->ipiv);
    st->factorizations++;
    if (info > 0) {
        st->bad_column = (int)(info - 1);
        st->rcond = 0;
        return LS_SOLVER_SINGULAR;
    }
    if (info < 0)
        return LS_SOLVER_FAILED;
    double rcond = 0;
    info = LAPACKE_dgecon(LAPACK_COL_MAJOR, '1', n, d->lu, n, anorm, &rcond);
    st->rcond = info == 0 ? rcond : NAN;
    if (!(rcond > 4 * 2.220446049250313e-16)) {
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
    lapack_int info = LAPACKE_dgetrs(LAPACK_COL_MAJOR, transpose ? 'T' : 'N', n, 1, d->lu, n, d->ipiv, b, n);
    for (int i = 0; i < n; i++)
        b[i] *= post[i];
    return info == 0 ? LS_SOLVER_OK : LS_SOLVER_FAILED;
}

const ls_backend ls_backend_dense = {
    .name = "lapack",
    .create = dense_create,
    .analyze = dense_analyze,
    .factor = dense_factor,
    .solve = dense_solve,
    .destroy = dense_destroy,
};
