/* sparse.c — KLU, UMFPACK and CHOLMOD backends behind solver.h.
 *
 * Common ground:
 *  - Every instance owns its library Common/Control structures; nothing is global
 *    (SuiteSparse's own malloc hooks aside), so instances may live on different
 *    threads.
 *  - analyze copies the pattern.  factor compares the incoming pattern with that
 *    copy: equal -> reuse the analysis, different (or no analysis yet) -> analyze
 *    again first.  That copy is also what the libraries get as Ap/Ai, so no
 *    caller pointer is kept past a call.
 *  - A factor whose pivot ratio min|U_kk|/max|U_kk| (of the scaled matrix for
 *    KLU and UMFPACK, (min L_kk/max L_kk)^2 for CHOLMOD) falls below
 *    RCOND_SINGULAR is reported LS_SOLVER_SINGULAR ("numerically singular"),
 *    with bad_column the column of the smallest pivot; an exactly zero pivot
 *    gives its column.  stats->rcond is that ratio, except for KLU, which
 *    provides the 1-norm estimate solver.h asks for.
 *  - stats->factorizations counts every numeric factorization attempted (a KLU
 *    refactor that is rejected and redone counts twice), analyses every
 *    symbolic analysis.
 */
#include "solve/solver.h"
#include "solve/sparse.h"
#include "base/pages.h"

#include <cholmod.h>
#include <klu.h>
#include <umfpack.h>

#include <float.h>
#include <limits.h>
#include <math.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

/* Below this the solution has no correct digits to speak of. */
#define RCOND_SINGULAR DBL_EPSILON

/* ------------------------------------------------------------------------ */
/* shared helpers                                                            */
/* ------------------------------------------------------------------------ */

/* malloc(count * size) with the product checked; never returns a 0-byte block. */
static void *alloc_array(size_t count, size_t size)
{
    if (size != 0 && count > SIZE_MAX / size)
        return NULL;
    size_t bytes = count * size;
    return malloc(bytes ? bytes : 1);
}

void ls_solver_pages_for_program(void)
{
    SuiteSparse_config.malloc_func = ls_big_malloc;
    SuiteSparse_config.calloc_func = ls_big_calloc;
    SuiteSparse_config.realloc_func = ls_big_realloc;
    SuiteSparse_config.free_func = ls_big_free;
}

typedef struct pattern {
    int n, nnz;
    int *colptr, *rowind;
} pattern;

static void pattern_free(pattern *p)
{
    free(p->colptr);
    free(p->rowind);
    memset(p, 0, sizeof *p);
}

/* The interface promises a well-formed matrix; this only refuses what would
 * make the size arithmetic below meaningless. */
static int csc_usable(const ls_csc *a)
{
    return a && a->n > 0 && a->n < INT_MAX && a->colptr && a->colptr[0] == 0 &&
           ls_csc_nnz(a) >= 0 && (ls_csc_nnz(a) == 0 || (a->rowind && a->val));
}

static int pattern_same(const pattern *p, const ls_csc *a)
{
    return p->colptr && p->n == a->n && p->nnz == ls_csc_nnz(a) &&
           memcmp(p->colptr, a->colptr, ((size_t)a->n + 1) * sizeof(int)) == 0 &&
           memcmp(p->rowind, a->rowind, (size_t)p->nnz * sizeof(int)) == 0;
}

static int pattern_set(pattern *p, const ls_csc *a)
{
    pattern_free(p);
    int nnz = ls_csc_nnz(a);
    p->colptr = alloc_array((size_t)a->n + 1, sizeof(int));
    p->rowind = alloc_array((size_t)nnz, sizeof(int));
    if (!p->colptr || !p->rowind) {
        pattern_free(p);
        return LS_SOLVER_NOMEM;
    }
    memcpy(p->colptr, a->colptr, ((size_t)a->n + 1) * sizeof(int));
    memcpy(p->rowind, a->rowind, (size_t)nnz * sizeof(int));
    p->n = a->n;
    p->nnz = nnz;
    return LS_SOLVER_OK;
}

/* Index of the smallest |d[k]| (the first exact zero wins outright). */
static int argmin_abs(const double *d, int n)
{
    int best = 0;
    for (int k = 0; k < n; k++) {
        if (d[k] == 0)
            return k;
        if (fabs(d[k]) < fabs(d[best]))
            best = k;
    }
    return best;
}

static void stats_begin(ls_solver_stats *st, ls_method m, const char *lib)
{
    st->method = m;
    st->library = lib;
    st->rcond = NAN;
    st->bad_column = -1;
}

int ls_csc_asym_column(const ls_csc *a, int *next)
{
    /* Walk the columns left to right.  A lower entry (i,j), i>j, must meet its
     * mirror (j,i) as the next not-yet-matched upper entry of column i, because
     * column i's upper rows are sorted and we meet them in increasing j.  An
     * upper entry still unmatched when its own column comes up has no mirror. */
    const int n = a->n;
    for (int j = 0; j < n; j++)
        next[j] = a->colptr[j];
    for (int j = 0; j < n; j++) {
        if (next[j] < a->colptr[j + 1] && a->rowind[next[j]] < j)
            return j;
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++) {
            int i = a->rowind[p];
            if (i <= j)
                continue;
            int q = next[i];
            if (q >= a->colptr[i + 1] || a->rowind[q] != j)
                return j;
            double x = a->val[p], y = a->val[q];
            if (fabs(x - y) > LS_SPARSE_SYM_TOL * fmax(fabs(x), fabs(y)))
                return j;
            next[i]++;
        }
    }
    return -1;
}

/* ------------------------------------------------------------------------ */
/* KLU                                                                       */
/* ------------------------------------------------------------------------ */

/* klu_refactor keeps the old pivot sequence.  If the new numbers make its
 * reciprocal pivot growth this much worse than the last pivoted factor's, we
 * pay for a fresh klu_factor rather than lose the digits. */
#define KLU_REFACTOR_GROWTH_LOSS 1e-3

typedef struct klu_be {
    klu_common c;
    klu_symbolic *sym;
    klu_numeric *num;
    pattern pat;
    double rgrowth_pivoted; /* klu_rgrowth after the last klu_factor */
    int ready;              /* num holds a factor fit for solving */
} klu_be;

static int klu_status(int s)
{
    switch (s) {
    case KLU_SINGULAR: return LS_SOLVER_SINGULAR;
    case KLU_OUT_OF_MEMORY: return LS_SOLVER_NOMEM;
    case KLU_TOO_LARGE: return LS_SOLVER_TOO_LARGE;
    default: return LS_SOLVER_FAILED;
    }
}

static void *klu_be_create(void)
{
    klu_be *k = calloc(1, sizeof *k);
    if (k && !klu_defaults(&k->c)) {
        free(k);
        return NULL;
    }
    return k;
}

static int klu_be_analyze(void *self, const ls_csc *a, ls_solver_stats *st)
{
    klu_be *k = self;
    stats_begin(st, LS_METHOD_SPARSE_LU, "klu");
    k->ready = 0;
    klu_free_numeric(&k->num, &k->c);
    klu_free_symbolic(&k->sym, &k->c);
    if (!csc_usable(a))
        return LS_SOLVER_FAILED;
    int rc = pattern_set(&k->pat, a);
    if (rc != LS_SOLVER_OK)
        return rc;
    k->sym = klu_analyze(a->n, k->pat.colptr, k->pat.rowind, &k->c);
    if (!k->sym) {
        pattern_free(&k->pat);
        return klu_status(k->c.status);
    }
    st->analyses++;
    return LS_SOLVER_OK;
}

static int klu_be_factor(void *self, const ls_csc *a, ls_solver_stats *st)
{
    klu_be *k = self;
    if (!csc_usable(a))
        return LS_SOLVER_FAILED;
    if (!k->sym || !pattern_same(&k->pat, a)) {
        int rc = klu_be_analyze(self, a, st);
        if (rc != LS_SOLVER_OK)
            return rc;
    }
    stats_begin(st, LS_METHOD_SPARSE_LU, "klu");
    k->ready = 0;
    int *ap = k->pat.colptr, *ai = k->pat.rowind;
    double *ax = a->val;

    int refactored = 0;
    if (k->num) {
        st->factorizations++;
        refactored = klu_refactor(ap, ai, ax, k->sym, k->num, &k->c) &&
                     klu_rgrowth(ap, ai, ax, k->sym, k->num, &k->c) &&
                     k->c.rgrowth >= KLU_REFACTOR_GROWTH_LOSS * k->rgrowth_pivoted &&
                     klu_rcond(k->sym, k->num, &k->c) && k->c.rcond >= RCOND_SINGULAR;
    }
    if (!refactored) {
        klu_free_numeric(&k->num, &k->c);
        st->factorizations++;
        k->num = klu_factor(ap, ai, ax, k->sym, &k->c);
        if (!k->num) {
            if (k->c.status == KLU_SINGULAR && k->c.singular_col >= 0 && k->c.singular_col < a->n)
                st->bad_column = k->c.singular_col;
            return klu_status(k->c.status);
        }
        k->rgrowth_pivoted = klu_rgrowth(ap, ai, ax, k->sym, k->num, &k->c) ? k->c.rgrowth : 0;
    }
    /* stats get klu_condest, Hager's 1-norm estimate, as solver.h promises.
     * Singularity is judged on the pivot ratio of the row-scaled factor, as
     * for the other backends: the 1-norm estimate of an unscaled MNA matrix
     * (1e5 op-amp gains next to 1 mS conductances) is tiny for systems KLU
     * solves backward-stably. */
    if (!klu_condest(ap, ax, k->sym, k->num, &k->c) || !klu_rcond(k->sym, k->num, &k->c))
        return klu_status(k->c.status);
    st->rcond = k->c.condest > 0 ? 1.0 / k->c.condest : 0.0;
    st->factor_flops = klu_flops(k->sym, k->num, &k->c) ? k->c.flops : 0;
    st->solve_flops = 2.0 * ((double)k->num->lnz + (double)k->num->unz);
    if (!(k->c.rcond >= RCOND_SINGULAR)) {
        /* U's diagonal is in pivot order; Symbolic->Q maps it back to A. */
        st->bad_column = k->sym->Q[argmin_abs(k->num->Udiag, a->n)];
        return LS_SOLVER_SINGULAR;
    }
    k->ready = 1;
    return LS_SOLVER_OK;
}

static int klu_be_solve(void *self, double *b, int transpose, ls_solver_stats *st)
{
    klu_be *k = self;
    (void)st;
    if (!k->ready)
        return LS_SOLVER_FAILED;
    int ok = transpose ? klu_tsolve(k->sym, k->num, k->pat.n, 1, b, &k->c)
                       : klu_solve(k->sym, k->num, k->pat.n, 1, b, &k->c);
    return ok ? LS_SOLVER_OK : klu_status(k->c.status);
}

static void klu_be_destroy(void *self)
{
    klu_be *k = self;
    if (!k)
        return;
    klu_free_numeric(&k->num, &k->c);
    klu_free_symbolic(&k->sym, &k->c);
    pattern_free(&k->pat);
    free(k);
}

const ls_backend ls_backend_klu = {
    "klu", klu_be_create, klu_be_analyze, klu_be_factor, klu_be_solve, klu_be_destroy, NULL, NULL, NULL,
    NULL,
};

/* ------------------------------------------------------------------------ */
/* UMFPACK                                                                   */
/* ------------------------------------------------------------------------ */

typedef struct umf_be {
    double control[UMFPACK_CONTROL], info[UMFPACK_INFO];
    void *sym, *num;
    pattern pat;
    double *ax;   /* copy of the values: iterative refinement in solve needs A */
    double *x;    /* n: wsolve's X may not alias B */
    double *w;    /* 5n: wsolve workspace with refinement */
    int *wi;      /* n */
    int ready;
} umf_be;

static int umf_status(int s)
{
    switch (s) {
    case UMFPACK_OK: return LS_SOLVER_OK;
    case UMFPACK_WARNING_singular_matrix: return LS_SOLVER_SINGULAR;
    case UMFPACK_ERROR_out_of_memory: return LS_SOLVER_NOMEM;
    default: return LS_SOLVER_FAILED;
    }
}

static void umf_release(umf_be *u)
{
    umfpack_di_free_numeric(&u->num);
    umfpack_di_free_symbolic(&u->sym);
    pattern_free(&u->pat);
    free(u->ax);
    free(u->x);
    free(u->w);
    free(u->wi);
    u->ax = u->x = u->w = NULL;
    u->wi = NULL;
    u->ready = 0;
}

static void *umf_be_create(void)
{
    umf_be *u = calloc(1, sizeof *u);
    if (u)
        umfpack_di_defaults(u->control);
    return u;
}

static int umf_be_analyze(void *self, const ls_csc *a, ls_solver_stats *st)
{
    umf_be *u = self;
    stats_begin(st, LS_METHOD_SPARSE_LU, "umfpack");
    umf_release(u);
    if (!csc_usable(a))
        return LS_SOLVER_FAILED;
    int rc = pattern_set(&u->pat, a);
    if (rc != LS_SOLVER_OK)
        return rc;
    size_t n = (size_t)a->n;
    u->ax = alloc_array((size_t)u->pat.nnz, sizeof(double));
    u->x = alloc_array(n, sizeof(double));
    u->w = n <= SIZE_MAX / 5 ? alloc_array(5 * n, sizeof(double)) : NULL;
    u->wi = alloc_array(n, sizeof(int));
    if (!u->ax || !u->x || !u->w || !u->wi) {
        umf_release(u);
        return LS_SOLVER_NOMEM;
    }
    /* Ax = NULL: UMFPACK would use values only for statistics, and analyze is
     * promised to depend on structure alone. */
    int s = umfpack_di_symbolic(a->n, a->n, u->pat.colptr, u->pat.rowind, NULL, &u->sym,
                                u->control, u->info);
    if (s != UMFPACK_OK) {
        umf_release(u);
        return umf_status(s) == LS_SOLVER_OK ? LS_SOLVER_FAILED : umf_status(s);
    }
    st->analyses++;
    return LS_SOLVER_OK;
}

/* UMFPACK does not name a failing column; read U's diagonal and the column
 * permutation back from the factor.  Borrows the solve workspace. */
static int umf_bad_column(umf_be *u)
{
    int do_recip;
    if (umfpack_di_get_numeric(NULL, NULL, NULL, NULL, NULL, NULL, NULL, u->wi, u->w,
                               &do_recip, NULL, u->num) != UMFPACK_OK)
        return -1;
    return u->wi[argmin_abs(u->w, u->pat.n)];
}

static int umf_be_factor(void *self, const ls_csc *a, ls_solver_stats *st)
{
    umf_be *u = self;
    if (!csc_usable(a))
        return LS_SOLVER_FAILED;
    if (!u->sym || !pattern_same(&u->pat, a)) {
        int rc = umf_be_analyze(self, a, st);
        if (rc != LS_SOLVER_OK)
            return rc;
    }
    stats_begin(st, LS_METHOD_SPARSE_LU, "umfpack");
    u->ready = 0;
    memcpy(u->ax, a->val, (size_t)u->pat.nnz * sizeof(double));
    umfpack_di_free_numeric(&u->num);
    st->factorizations++;
    int s = umfpack_di_numeric(u->pat.colptr, u->pat.rowind, u->ax, u->sym, &u->num,
                               u->control, u->info);
    if (s != UMFPACK_OK && s != UMFPACK_WARNING_singular_matrix) {
        umfpack_di_free_numeric(&u->num);
        return umf_status(s);
    }
    /* UMFPACK_RCOND is min|U_kk| / max|U_kk|, a pivot ratio, not a 1-norm
     * estimate; it is 0 for an exactly singular factor. */
    st->rcond = u->info[UMFPACK_RCOND];
    st->factor_flops = u->info[UMFPACK_FLOPS] > 0 ? u->info[UMFPACK_FLOPS] : 0;
    st->solve_flops = 2.0 * (fmax(u->info[UMFPACK_LNZ], 0) + fmax(u->info[UMFPACK_UNZ], 0));
    if (s == UMFPACK_WARNING_singular_matrix || !(st->rcond >= RCOND_SINGULAR)) {
        st->bad_column = umf_bad_column(u);
        return LS_SOLVER_SINGULAR;
    }
    u->ready = 1;
    return LS_SOLVER_OK;
}

static int umf_be_solve(void *self, double *b, int transpose, ls_solver_stats *st)
{
    umf_be *u = self;
    (void)st;
    if (!u->ready)
        return LS_SOLVER_FAILED;
    int s = umfpack_di_wsolve(transpose ? UMFPACK_At : UMFPACK_A, u->pat.colptr, u->pat.rowind,
                              u->ax, u->x, b, u->num, u->control, u->info, u->wi, u->w);
    if (s != UMFPACK_OK)
        return umf_status(s) == LS_SOLVER_OK ? LS_SOLVER_FAILED : umf_status(s);
    memcpy(b, u->x, (size_t)u->pat.n * sizeof(double));
    return LS_SOLVER_OK;
}

static void umf_be_destroy(void *self)
{
    if (!self)
        return;
    umf_release(self);
    free(self);
}

const ls_backend ls_backend_umfpack = {
    "umfpack", umf_be_create, umf_be_analyze, umf_be_factor, umf_be_solve, umf_be_destroy, NULL, NULL, NULL,
    NULL,
};

/* ------------------------------------------------------------------------ */
/* CHOLMOD                                                                   */
/* ------------------------------------------------------------------------ */

typedef struct chol_be {
    cholmod_common c;
    cholmod_factor *L;
    pattern pat;
    int *work;                /* n ints for the symmetry check */
    cholmod_dense *x, *y, *e; /* cholmod_solve2 reuses these between solves */
    int ready;
} chol_be;

static int chol_status(int s)
{
    switch (s) {
    case CHOLMOD_OUT_OF_MEMORY: return LS_SOLVER_NOMEM;
    case CHOLMOD_TOO_LARGE: return LS_SOLVER_TOO_LARGE;
    case CHOLMOD_NOT_POSDEF: return LS_SOLVER_NOT_SPD;
    default: return LS_SOLVER_FAILED;
    }
}

/* A header over our pattern copy and (for factor) the caller's values, no copy.
 * stype = +1: CHOLMOD reads only the upper triangle of the full symmetric
 * matrix, and upper is the variant its supernodal factorize handles with a
 * single permuted transpose (lower would cost two). */
static cholmod_sparse chol_wrap(const pattern *p, double *val)
{
    cholmod_sparse A;
    memset(&A, 0, sizeof A);
    A.nrow = A.ncol = (size_t)p->n;
    A.nzmax = (size_t)p->nnz;
    A.p = p->colptr;
    A.i = p->rowind;
    A.x = val;
    A.stype = 1;
    A.itype = CHOLMOD_INT;
    A.xtype = val ? CHOLMOD_REAL : CHOLMOD_PATTERN;
    A.dtype = CHOLMOD_DOUBLE;
    A.sorted = 1;
    A.packed = 1;
    return A;
}

static void *chol_be_create(void)
{
    chol_be *h = calloc(1, sizeof *h);
    if (!h)
        return NULL;
    if (!cholmod_start(&h->c)) {
        free(h);
        return NULL;
    }
    /* AMD only: CHOLMOD's default also tries METIS when AMD's flops per
     * nonzero of L pass 500, a measure that is not monotonic in the grid's
     * size, so the time jumped from one size to the next (a 1100 grid 2.4x
     * slower than 1000); AMD alone runs in 0.63-0.66 of the time for 8-11 %
     * more memory (docs/performance.md, "Sparse Cholesky settings"). */
    h->c.nmethods = 1;
    h->c.method[0].ordering = CHOLMOD_AMD;
    h->c.postorder = 1;
    /* Simplicial or supernodal by CHOLMOD's flop estimate: forcing supernodal
     * made small thin matrices (a tol trial) pay BLAS thread start-ups. */
    h->c.supernodal = CHOLMOD_AUTO;
    h->c.quick_return_if_not_posdef = 1; /* the caller retries with LU anyway */
    h->c.print = 0;                      /* statuses are returned, not printed */
    return h;
}

static void chol_release(chol_be *h)
{
    cholmod_free_factor(&h->L, &h->c);
    cholmod_free_dense(&h->x, &h->c);
    cholmod_free_dense(&h->y, &h->c);
    cholmod_free_dense(&h->e, &h->c);
    pattern_free(&h->pat);
    free(h->work);
    h->work = NULL;
    h->ready = 0;
}

static int chol_be_analyze(void *self, const ls_csc *a, ls_solver_stats *st)
{
    chol_be *h = self;
    stats_begin(st, LS_METHOD_SPARSE_CHOLESKY, "cholmod");
    chol_release(h);
    if (!csc_usable(a))
        return LS_SOLVER_FAILED;
    int rc = pattern_set(&h->pat, a);
    if (rc != LS_SOLVER_OK)
        return rc;
    h->work = alloc_array((size_t)a->n, sizeof(int));
    if (!h->work) {
        chol_release(h);
        return LS_SOLVER_NOMEM;
    }
    cholmod_sparse A = chol_wrap(&h->pat, NULL);
    h->L = cholmod_analyze(&A, &h->c);
    if (!h->L) {
        int s = h->c.status;
        chol_release(h);
        return chol_status(s);
    }
    st->analyses++;
    return LS_SOLVER_OK;
}

/* Column of A (through the fill-reducing permutation) of the pivot with the
 * smallest magnitude: the diagonal of a supernodal LL' factor, or D of a
 * simplicial LDL' one.  When sign_only, the first pivot that is not positive
 * instead (-1 if none): a simplicial LDL' factorization goes on past a
 * negative pivot, where LL' stops and says the matrix is not positive. */
static int chol_pivot_column(const cholmod_factor *L, bool sign_only)
{
    const int *perm = L->Perm;
    const double *x = L->x;
    int best = sign_only ? -1 : 0;
    double dmin = INFINITY;
    if (L->is_super) {
        const int *super = L->super, *pi = L->pi, *px = L->px;
        for (size_t s = 0; s < L->nsuper; s++) {
            int nrow = pi[s + 1] - pi[s]; /* rows of the supernode, column-major */
            for (int k = super[s]; k < super[s + 1]; k++) {
                int jj = k - super[s];
                double d = fabs(x[px[s] + (size_t)jj * nrow + jj]);
                if (d < dmin) {
                    dmin = d;
                    best = k;
                }
            }
        }
    } else {
        const int *lp = L->p; /* the diagonal comes first in each column */
        for (int k = 0; k < (int)L->n; k++) {
            double d = x[lp[k]];
            if (sign_only) {
                if (!(d > 0)) {
                    best = k;
                    break;
                }
            } else if (fabs(d) < dmin) {
                dmin = fabs(d);
                best = k;
            }
        }
    }
    if (best < 0)
        return -1;
    return perm ? perm[best] : best;
}

static int chol_be_factor(void *self, const ls_csc *a, ls_solver_stats *st)
{
    chol_be *h = self;
    if (!csc_usable(a))
        return LS_SOLVER_FAILED;
    if (!h->L || !pattern_same(&h->pat, a)) {
        int rc = chol_be_analyze(self, a, st);
        if (rc != LS_SOLVER_OK)
            return rc;
    }
    stats_begin(st, LS_METHOD_SPARSE_CHOLESKY, "cholmod");
    h->ready = 0;
    /* CHOLMOD reads one triangle only, so an unsymmetric matrix would be
     * silently replaced by a symmetric one.  Not symmetric is not SPD. */
    int col = ls_csc_asym_column(a, h->work);
    if (col >= 0) {
        st->bad_column = col;
        return LS_SOLVER_NOT_SPD;
    }
    cholmod_sparse A = chol_wrap(&h->pat, a->val);
    st->factorizations++;
    if (!cholmod_factorize(&A, h->L, &h->c))
        return chol_status(h->c.status);
    if (h->c.status == CHOLMOD_NOT_POSDEF) {
        /* L->minor is in the permuted order.  A singular semidefinite matrix
         * lands here too (its zero pivot rounds either way), and the LU retry
         * then names the singular column. */
        if (h->L->minor < h->L->n)
            st->bad_column = ((const int *)h->L->Perm)[h->L->minor];
        return LS_SOLVER_NOT_SPD;
    }
    if (!h->L->is_super && !h->L->is_ll) {
        int bad = chol_pivot_column(h->L, true);
        if (bad >= 0) {
            st->bad_column = bad;
            return LS_SOLVER_NOT_SPD;
        }
    }
    /* (min L_kk / max L_kk)^2 for LL', min D_kk / max D_kk for LDL': the same number */
    st->rcond = cholmod_rcond(h->L, &h->c);
    st->factor_flops = h->c.fl > 0 ? h->c.fl : 0; /* the analysis's count for this factor */
    st->solve_flops = h->c.lnz > 0 ? 4.0 * h->c.lnz : 0;
    if (!(st->rcond >= RCOND_SINGULAR)) {
        st->bad_column = chol_pivot_column(h->L, false);
        return LS_SOLVER_SINGULAR;
    }
    h->ready = 1;
    return LS_SOLVER_OK;
}

static int chol_be_solve(void *self, double *b, int transpose, ls_solver_stats *st)
{
    chol_be *h = self;
    (void)st;
    (void)transpose; /* A = A^T */
    if (!h->ready)
        return LS_SOLVER_FAILED;
    cholmod_dense B;
    memset(&B, 0, sizeof B);
    B.nrow = B.nzmax = B.d = (size_t)h->pat.n;
    B.ncol = 1;
    B.x = b;
    B.xtype = CHOLMOD_REAL;
    B.dtype = CHOLMOD_DOUBLE;
    if (!cholmod_solve2(CHOLMOD_A, h->L, &B, NULL, &h->x, NULL, &h->y, &h->e, &h->c))
        return chol_status(h->c.status);
    memcpy(b, h->x->x, (size_t)h->pat.n * sizeof(double));
    return LS_SOLVER_OK;
}

static void chol_be_destroy(void *self)
{
    chol_be *h = self;
    if (!h)
        return;
    chol_release(h);
    cholmod_finish(&h->c);
    free(h);
}

const ls_backend ls_backend_cholmod = {
    "cholmod", chol_be_create, chol_be_analyze, chol_be_factor, chol_be_solve, chol_be_destroy, NULL, NULL, NULL,
    NULL,
};
