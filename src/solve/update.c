/* update.c — solves of A = A0 + D through A0's kept factor (see update.h).
 *
 * D = A - A0 is taken from the two matrices entry by entry (same pattern), so
 * nothing needs to know which part changed.  With R the rows and C the
 * columns where D is nonzero (r and c of them) and Dm = D[R, C] (r x c),
 *
 *     A = A0 + E_R Dm E_C^T,   Z = A0^-1 E_R (n x r),   K = I_r + Dm Z[C, :],
 *     A^-1 b   = y - Z K^-1 Dm y[C],            y = A0^-1 b,
 *     A^-T b   = y - A0^-T E_C Dm^T K^-T y[R],  y = A0^-T b
 *
 * (the Sherman-Morrison-Woodbury identity).  Setting up costs r solves for Z
 * and an LU of K; a plain solve then costs one solve with A0 and O(n r), a
 * transposed one two solves.  A refactorization costs the factor's flops, so
 * the update is chosen when r solves plus the extra work of a few solves
 * (UPDATE_SOLVES) come to less than the factor (docs/performance.md, "Low-rank
 * update", has the measured crossover).  K close to singular (the change
 * nearly cancels a pivot of A0's factor) means the identity would lose the
 * digits: the caller refactors.  Every solve's residual is checked against
 * the true A; a solve that fails the check is answered LS_UPDATE_REJECTED and
 * the caller refactors A. */
#include "solve/update.h"

#include <lapacke.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* At most this many rows of D (more: refactor).  K is r x r dense. */
#define UPDATE_MAX_RANK 32
/* Solves a point makes with its matrix (the solve and its refinement steps),
 * for the estimate of the extra work per solve. */
#define UPDATE_SOLVES 3
/* A capacitance matrix K with a reciprocal condition below this is left to a
 * refactorization: its solve would lose more than half the digits. */
#define UPDATE_RCOND_MIN 1e-8
/* Largest backward error of an updated solve against the true matrix before
 * a refactorization is asked for (a backward-stable solve is near 1e-16). */
#define UPDATE_BERR_MAX 1e-10

struct ls_update {
    int n, nnz;
    int *colptr, *rowind;  /* A0's pattern (also A's) */
    double *a0, *acur;     /* A0's values, and the matrix of the update in force */
    bool kept;             /* a0 holds the factored matrix */
    double rcond0, norm0;  /* A0's reciprocal condition (backend's) and 1-norm */
    bool active;
    int r, c;
    int *rows, *cols;      /* R and C */
    int *rmark, *cmark;    /* n each: scratch, -1 or the index into rows / cols */
    double *dm;            /* r x c, column-major */
    double *z;             /* n x r, column-major */
    double *k;             /* r x r, LU of K */
    lapack_int *ipiv;
    double *rhs, *w;       /* n each: the right-hand side kept for the residual, a work vector */
    double normi;          /* A's infinity norm */
    ls_csc view;           /* ls_update_matrix's view of colptr, rowind, acur (nothing owned) */
    long updates, rejected;
};

ls_update *ls_update_new(void)
{
    return calloc(1, sizeof(ls_update));
}

/* Frees the per-matrix arrays (not the struct). */
static void release(ls_update *u)
{
    free(u->colptr);
    free(u->rowind);
    free(u->a0);
    free(u->acur);
    free(u->rows);
    free(u->cols);
    free(u->rmark);
    free(u->cmark);
    free(u->dm);
    free(u->z);
    free(u->k);
    free(u->ipiv);
    free(u->rhs);
    free(u->w);
    long up = u->updates, rej = u->rejected;
    memset(u, 0, sizeof *u);
    u->updates = up;
    u->rejected = rej;
}

void ls_update_free(ls_update *u)
{
    if (!u)
        return;
    release(u);
    free(u);
}

/* 1-norm (largest column sum of |a_ij|) of the pattern with values v. */
static double norm1(const ls_update *u, const double *v)
{
    double m = 0;
    for (int j = 0; j < u->n; j++) {
        double s = 0;
        for (int p = u->colptr[j]; p < u->colptr[j + 1]; p++)
            s += fabs(v[p]);
        m = fmax(m, s);
    }
    return m;
}

int ls_update_keep(ls_update *u, const ls_csc *a, double rcond)
{
    int n = a->n, nnz = ls_csc_nnz(a);
    u->active = false;
    if (!u->kept || u->n != n || u->nnz != nnz) {
        release(u);
        size_t nn = (size_t)(n ? n : 1), nz = (size_t)(nnz ? nnz : 1);
        u->colptr = malloc((nn + 1) * sizeof *u->colptr);
        u->rowind = malloc(nz * sizeof *u->rowind);
        u->a0 = malloc(nz * sizeof *u->a0);
        u->acur = malloc(nz * sizeof *u->acur);
        u->rmark = malloc(nn * sizeof *u->rmark);
        u->cmark = malloc(nn * sizeof *u->cmark);
        u->rhs = malloc(nn * sizeof *u->rhs);
        u->w = malloc(nn * sizeof *u->w);
        u->rows = malloc(UPDATE_MAX_RANK * sizeof *u->rows);
        u->cols = malloc(UPDATE_MAX_RANK * sizeof *u->cols);
        u->dm = malloc(UPDATE_MAX_RANK * UPDATE_MAX_RANK * sizeof *u->dm);
        u->k = malloc(UPDATE_MAX_RANK * UPDATE_MAX_RANK * sizeof *u->k);
        u->ipiv = malloc(UPDATE_MAX_RANK * sizeof *u->ipiv);
        u->z = malloc(nn * UPDATE_MAX_RANK * sizeof *u->z);
        if (!u->colptr || !u->rowind || !u->a0 || !u->acur || !u->rmark || !u->cmark || !u->rhs || !u->w ||
            !u->rows || !u->cols || !u->dm || !u->k || !u->ipiv || !u->z) {
            release(u);
            return -1;
        }
        u->n = n;
        u->nnz = nnz;
        for (int i = 0; i < n; i++)
            u->rmark[i] = u->cmark[i] = -1;
    }
    memcpy(u->colptr, a->colptr, ((size_t)n + 1) * sizeof *u->colptr);
    memcpy(u->rowind, a->rowind, (size_t)nnz * sizeof *u->rowind);
    memcpy(u->a0, a->val, (size_t)nnz * sizeof *u->a0);
    u->kept = true;
    u->rcond0 = rcond;
    u->norm0 = norm1(u, u->a0);
    return 0;
}

bool ls_update_active(const ls_update *u)
{
    return u && u->active;
}

const ls_csc *ls_update_matrix(ls_update *u)
{
    u->view = (ls_csc){.n = u->n, .colptr = u->colptr, .rowind = u->rowind, .val = u->acur};
    return &u->view;
}

void ls_update_counts(const ls_update *u, long *updates, long *rejected)
{
    *updates = u ? u->updates : 0;
    *rejected = u ? u->rejected : 0;
}

/* Clear the row and column marks of the last collection. */
static void clear_marks(ls_update *u)
{
    for (int i = 0; i < u->r; i++)
        u->rmark[u->rows[i]] = -1;
    for (int j = 0; j < u->c; j++)
        u->cmark[u->cols[j]] = -1;
    u->r = u->c = 0;
}

/* R, C and Dm of a - A0.  false when a has another pattern or D has more
 * than UPDATE_MAX_RANK rows or columns. */
static bool collect(ls_update *u, const ls_csc *a)
{
    clear_marks(u);
    if (a->n != u->n || ls_csc_nnz(a) != u->nnz ||
        memcmp(a->colptr, u->colptr, ((size_t)u->n + 1) * sizeof *u->colptr) != 0 ||
        memcmp(a->rowind, u->rowind, (size_t)u->nnz * sizeof *u->rowind) != 0)
        return false;
    for (int j = 0; j < u->n; j++)
        for (int p = u->colptr[j]; p < u->colptr[j + 1]; p++) {
            if (a->val[p] == u->a0[p])
                continue;
            int i = u->rowind[p];
            if (u->rmark[i] < 0) {
                if (u->r == UPDATE_MAX_RANK)
                    return false;
                u->rmark[i] = u->r;
                u->rows[u->r++] = i;
            }
            if (u->cmark[j] < 0) {
                if (u->c == UPDATE_MAX_RANK)
                    return false;
                u->cmark[j] = u->c;
                u->cols[u->c++] = j;
            }
        }
    memset(u->dm, 0, (size_t)u->r * (size_t)u->c * sizeof *u->dm);
    for (int jj = 0; jj < u->c; jj++) {
        int j = u->cols[jj];
        for (int p = u->colptr[j]; p < u->colptr[j + 1]; p++)
            if (u->rmark[u->rowind[p]] >= 0)
                u->dm[u->rmark[u->rowind[p]] + (size_t)u->r * jj] = a->val[p] - u->a0[p];
    }
    return true;
}

/* Does the update pay against a refactorization (flops, see the top)?  The
 * variable LOADSTACK_LOWRANK=1 answers yes, =0 no (to compare the paths). */
static bool pays(const ls_update *u, double factor_flops, double solve_flops)
{
    const char *env = getenv("LOADSTACK_LOWRANK");
    if (env && !strcmp(env, "0"))
        return false;
    if (env && !strcmp(env, "1"))
        return true;
    if (!(factor_flops > 0) || !(solve_flops > 0))
        return false;
    double r = u->r;
    double setup = r * solve_flops + 2.0 * r * r * u->c + r * r * r;
    double per_solve = 2.0 * u->n * r + 2.0 * r * u->c;
    return setup + UPDATE_SOLVES * per_solve < factor_flops;
}

/* Z = A0^-1 E_R (one kept solve per changed row) and the capacitance
 * matrix K = I + Dm Z[C, :].  false when a solve fails. */
static bool capacitance(ls_update *u, ls_kept_solve solve, void *ctx)
{
    int n = u->n, r = u->r, c = u->c;
    for (int i = 0; i < r; i++) { /* Z = A0^-1 E_R */
        double *zi = u->z + (size_t)n * i;
        memset(zi, 0, (size_t)n * sizeof *zi);
        zi[u->rows[i]] = 1;
        if (solve(ctx, zi, 0) != 0)
            return false;
    }
    for (int k = 0; k < r; k++) /* K = I + Dm Z[C, :] */
        for (int i = 0; i < r; i++) {
            double s = i == k;
            for (int j = 0; j < c; j++)
                s += u->dm[i + (size_t)r * j] * u->z[(size_t)n * k + u->cols[j]];
            u->k[i + (size_t)r * k] = s;
        }
    return true;
}

/* The largest column sum of |M| for an r x c matrix M in column-major
 * order with leading dimension ld (the 1-norm). */
static double norm1_dense(const double *m, int r, int c, size_t ld)
{
    double norm = 0;
    for (int j = 0; j < c; j++) {
        double s = 0;
        for (int i = 0; i < r; i++)
            s += fabs(m[i + ld * (size_t)j]);
        norm = fmax(norm, s);
    }
    return norm;
}

/* Factor K in place (LU, pivots in u->ipiv).  false when LAPACK fails or K
 * is too ill-conditioned for the update to be trusted (UPDATE_RCOND_MIN). */
static bool factor_k(ls_update *u)
{
    int r = u->r;
    double knorm = norm1_dense(u->k, r, r, (size_t)r), krcond = 0;
    return LAPACKE_dgetrf(LAPACK_COL_MAJOR, r, r, u->k, r, u->ipiv) == 0 &&
           LAPACKE_dgecon(LAPACK_COL_MAJOR, '1', r, u->k, r, knorm, &krcond) == 0 && krcond >= UPDATE_RCOND_MIN;
}

/* |K^-1 Dm| in the 1-norm into *mnorm (K factored).  false when out of
 * memory or LAPACK fails. */
static bool kdm_norm(const ls_update *u, double *mnorm)
{
    int r = u->r, c = u->c;
    double *m = malloc((size_t)r * (size_t)c * sizeof *m);
    if (!m)
        return false;
    memcpy(m, u->dm, (size_t)r * (size_t)c * sizeof *m);
    bool ok = LAPACKE_dgetrs(LAPACK_COL_MAJOR, 'N', r, c, u->k, r, u->ipiv, m, r) == 0;
    if (ok)
        *mnorm = norm1_dense(m, r, c, (size_t)r);
    free(m);
    return ok;
}

/* Make a the update's current matrix: its values, its reciprocal condition
 * estimate (given |Z| |K^-1 Dm|), and its infinity norm for the residual
 * checks. */
static void take_matrix(ls_update *u, const ls_csc *a, double zm, double *rcond)
{
    int n = u->n;
    memcpy(u->acur, a->val, (size_t)u->nnz * sizeof *u->acur);
    /* rcond(A) >= rcond(A0) |A0| / (|A| (1 + |Z| |K^-1 Dm|)) in the 1-norm,
     * from A^-1 = (I - Z K^-1 Dm E_C^T) A0^-1: a conservative estimate */
    double anorm = norm1(u, u->acur);
    *rcond = anorm > 0 ? u->rcond0 * u->norm0 / (anorm * (1 + zm)) : u->rcond0;
    memset(u->w, 0, (size_t)n * sizeof *u->w);
    for (int p = 0; p < u->nnz; p++)
        u->w[u->rowind[p]] += fabs(u->acur[p]);
    u->normi = 0;
    for (int i = 0; i < n; i++)
        u->normi = fmax(u->normi, u->w[i]);
}

bool ls_update_try(ls_update *u, const ls_csc *a, double factor_flops, double solve_flops, ls_kept_solve solve,
                   void *ctx, double *rcond)
{
    if (!u || !u->kept)
        return false;
    u->active = false;
    if (!collect(u, a))
        return false;
    if (u->r == 0) { /* the matrix factored: nothing to do */
        memcpy(u->acur, a->val, (size_t)u->nnz * sizeof *u->acur);
        u->active = true;
        u->updates++;
        *rcond = u->rcond0;
        return true;
    }
    double mnorm = 0;
    if (!pays(u, factor_flops, solve_flops) || !capacitance(u, solve, ctx) || !factor_k(u) || !kdm_norm(u, &mnorm))
        return false;
    /* |Z| in the 1-norm: the columns of Z are its n x r block */
    double znorm = norm1_dense(u->z, u->n, u->r, (size_t)u->n);
    take_matrix(u, a, znorm * mnorm, rcond);
    u->active = true;
    u->updates++;
    return true;
}

/* Backward error of x for A x = rhs (or A^T), with A = the update's matrix:
 * |rhs - A x|_inf / (|A|_inf |x|_inf + |rhs|_inf). */
static double berr(ls_update *u, const double *x, int transpose)
{
    double *res = u->w;
    int n = u->n;
    memcpy(res, u->rhs, (size_t)n * sizeof *res);
    for (int j = 0; j < n; j++)
        for (int p = u->colptr[j]; p < u->colptr[j + 1]; p++) {
            int i = u->rowind[p];
            if (transpose)
                res[j] -= u->acur[p] * x[i];
            else
                res[i] -= u->acur[p] * x[j];
        }
    double rn = 0, xn = 0, bn = 0;
    for (int i = 0; i < n; i++) {
        rn = fmax(rn, fabs(res[i]));
        xn = fmax(xn, fabs(x[i]));
        bn = fmax(bn, fabs(u->rhs[i]));
    }
    double den = u->normi * xn + bn;
    return den > 0 ? rn / den : rn;
}

/* b given back its right-hand side (kept in u->rhs); LS_UPDATE_REJECTED. */
static int restore(ls_update *u, double *b)
{
    memcpy(b, u->rhs, (size_t)u->n * sizeof *b);
    u->rejected++;
    return LS_UPDATE_REJECTED;
}

int ls_update_solve(ls_update *u, double *b, int transpose, ls_kept_solve solve, void *ctx)
{
    if (u->r == 0)
        return solve(ctx, b, transpose);
    int n = u->n, r = u->r, c = u->c;
    memcpy(u->rhs, b, (size_t)n * sizeof *u->rhs);
    int st = solve(ctx, b, transpose); /* y */
    if (st != 0)
        return st;
    double s[UPDATE_MAX_RANK];
    if (!transpose) {
        for (int i = 0; i < r; i++) { /* Dm y[C] */
            double t = 0;
            for (int j = 0; j < c; j++)
                t += u->dm[i + (size_t)r * j] * b[u->cols[j]];
            s[i] = t;
        }
        if (LAPACKE_dgetrs(LAPACK_COL_MAJOR, 'N', r, 1, u->k, r, u->ipiv, s, r) != 0)
            return restore(u, b);
        for (int i = 0; i < r; i++) /* y - Z K^-1 Dm y[C] */
            for (int q = 0; q < n; q++)
                b[q] -= u->z[(size_t)n * i + q] * s[i];
    } else {
        for (int i = 0; i < r; i++)
            s[i] = b[u->rows[i]];
        if (LAPACKE_dgetrs(LAPACK_COL_MAJOR, 'T', r, 1, u->k, r, u->ipiv, s, r) != 0)
            return restore(u, b);
        double *w = u->w;
        memset(w, 0, (size_t)n * sizeof *w);
        for (int j = 0; j < c; j++) { /* E_C Dm^T K^-T y[R] */
            double t = 0;
            for (int i = 0; i < r; i++)
                t += u->dm[i + (size_t)r * j] * s[i];
            w[u->cols[j]] = t;
        }
        if ((st = solve(ctx, w, 1)) != 0)
            return st;
        for (int q = 0; q < n; q++)
            b[q] -= w[q];
    }
    double e = berr(u, b, transpose);
    if (!(e <= UPDATE_BERR_MAX)) {
        return restore(u, b); /* the caller solves again after a refactorization */
    }
    return 0;
}
