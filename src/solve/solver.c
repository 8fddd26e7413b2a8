/* solver.c — the backend-independent front end and sparse-matrix helpers. */
#include "solve/solver.h"
#include "solve/update.h"

#include <math.h>
#include <pthread.h>
#include <stdlib.h>
#include <string.h>

#ifdef LS_HAVE_OPENMP
#include <omp.h>
#endif

/* OpenBLAS extensions (the build links OpenBLAS; see meson.build). */
void openblas_set_num_threads(int num_threads);
int openblas_get_num_threads(void);
int openblas_get_num_procs(void);

struct ls_solver {
    const ls_backend *be;
    void *self;
    ls_solver_stats st;
    int factored;
    int n;           /* order of the last matrix analyzed or factored */
    ls_update *upd;  /* low-rank updates allowed (ls_solver_allow_update), else NULL */
    bool singularity_only;  /* ls_solver_singularity_only */
};

ls_solver *ls_solver_new(const ls_backend *be, ls_method method)
{
    ls_solver *s = calloc(1, sizeof *s);
    if (!s)
        return NULL;
    s->be = be;
    s->self = be->create();
    if (!s->self) {
        free(s);
        return NULL;
    }
    s->st.method = method;
    s->st.library = be->name;
    s->st.rcond = NAN;
    s->st.bad_column = -1;
    return s;
}

int ls_solver_analyze(ls_solver *s, const ls_csc *a)
{
    s->factored = 0;
    s->n = a->n;
    return s->be->analyze(s->self, a, &s->st);
}

/* BLAS and OpenMP worker threads pay off only on large factorizations; on
 * small ones they spin between calls (sched_yield) and, with two cores, slow
 * the program and anything beside it.  So each factorization and solve runs
 * with the count measured best for its size, and the caller's own settings
 * come back before the call returns: a host process (numpy, its own BLAS
 * code) keeps the threads it chose.
 *
 * OpenBLAS's thread count is process-wide, so it is saved by the first call
 * that enters and restored by the last that leaves (a count under a lock:
 * two host threads solving at once must not restore each other's value).
 * Between those, a host thread doing its own BLAS work runs with our count.
 * OpenMP's settings are per calling thread and are saved and restored by
 * each call. */
typedef struct thread_scope {
#ifdef LS_HAVE_OPENMP
    int omp_max, omp_dynamic;   /* the calling thread's OpenMP settings on entry */
#endif
    int blas_entered;           /* this call changed (or holds) OpenBLAS's count */
} thread_scope;

static pthread_mutex_t blas_lock = PTHREAD_MUTEX_INITIALIZER;
static int blas_depth;      /* calls inside a scope, all threads */
static int blas_saved;      /* the host's OpenBLAS thread count, while blas_depth > 0 */

static void scope_enter(thread_scope *t, ls_method m, int n)
{
    int big = ls_method_is_dense(m) ? 1000 : 200000;
    int want = n >= big ? openblas_get_num_procs() : 1;
#ifdef LS_HAVE_OPENMP
    /* CHOLMOD asks for a fixed team size in its num_threads clauses, which
     * overrides omp_set_num_threads; with dynamic adjustment on, the runtime
     * bounds every team by that count (and by the idle processors), so the
     * cap holds. */
    t->omp_max = omp_get_max_threads();
    t->omp_dynamic = omp_get_dynamic();
    if (t->omp_max != want)
        omp_set_num_threads(want);
    if (!t->omp_dynamic)
        omp_set_dynamic(1);
#endif
    /* Already the count wanted (the program sets one thread at its start;
     * see ls_solver_threads_for_program): nothing to change, nothing to put
     * back, no lock. */
    t->blas_entered = openblas_get_num_threads() != want;
    if (!t->blas_entered)
        return;
    pthread_mutex_lock(&blas_lock);
    if (blas_depth++ == 0)
        blas_saved = openblas_get_num_threads();
    if (openblas_get_num_threads() != want)
        openblas_set_num_threads(want);
    pthread_mutex_unlock(&blas_lock);
}

static void scope_leave(thread_scope *t)
{
#ifdef LS_HAVE_OPENMP
    if (omp_get_max_threads() != t->omp_max)
        omp_set_num_threads(t->omp_max);
    if (omp_get_dynamic() != t->omp_dynamic)
        omp_set_dynamic(t->omp_dynamic);
#endif
    if (!t->blas_entered)
        return;
    pthread_mutex_lock(&blas_lock);
    if (--blas_depth == 0 && openblas_get_num_threads() != blas_saved)
        openblas_set_num_threads(blas_saved);
    pthread_mutex_unlock(&blas_lock);
}

void ls_solver_threads_for_program(void)
{
    openblas_set_num_threads(1);
#ifdef LS_HAVE_OPENMP
    omp_set_num_threads(1);
    omp_set_dynamic(1);
#endif
}

/* The backend's solve with its factor as it stands (update.h's kept solve). */
static int kept_solve(void *ctx, double *b, int transpose)
{
    ls_solver *s = ctx;
    return s->be->solve(s->self, b, transpose, &s->st);
}

/* After the backend factored a: a becomes the update's A0.  Out of memory
 * there only turns the updates off until the next factorization. */
static void keep_for_update(ls_solver *s, const ls_csc *a, int r)
{
    if (s->upd && r == LS_SOLVER_OK)
        (void)ls_update_keep(s->upd, a, s->st.rcond);
}

int ls_solver_factor(ls_solver *s, const ls_csc *a)
{
    thread_scope t;
    scope_enter(&t, s->st.method, a->n);
    s->st.bad_column = -1;
    double rcond;
    if (s->upd && s->factored && s->n == a->n &&
        ls_update_try(s->upd, a, s->st.factor_flops, s->st.solve_flops, kept_solve, s, &rcond)) {
        s->st.rcond = rcond; /* solves now go through the kept factor and the update */
        scope_leave(&t);
        return LS_SOLVER_OK;
    }
    s->n = a->n;
    if (s->be->singularity_only)
        s->be->singularity_only(s->self, s->singularity_only && !s->upd);
    int r = s->be->factor(s->self, a, &s->st);
    s->factored = r == LS_SOLVER_OK;
    keep_for_update(s, a, r);
    scope_leave(&t);
    return r;
}

void ls_solver_singularity_only(ls_solver *s, bool on)
{
    s->singularity_only = on;
}

void ls_solver_allow_update(ls_solver *s, const ls_csc *factored)
{
    if (!factored) {
        ls_update_free(s->upd);
        s->upd = NULL;
        return;
    }
    if (s->st.method == LS_METHOD_ITERATIVE_AMG)
        return;
    if (!s->upd)
        s->upd = ls_update_new(); /* no memory: no updates, every factor is a refactorization */
    if (s->upd && s->factored)
        keep_for_update(s, factored, LS_SOLVER_OK);
}

void ls_solver_update_counts(const ls_solver *s, long *updates, long *rejected)
{
    ls_update_counts(s->upd, updates, rejected);
}

int ls_solver_analyze_factor(ls_solver *s, const ls_csc *a)
{
    if (!s->be->analyze_factor) {
        int r = ls_solver_analyze(s, a);
        return r == LS_SOLVER_OK ? ls_solver_factor(s, a) : r;
    }
    s->factored = 0;
    thread_scope t;
    scope_enter(&t, s->st.method, a->n);
    s->st.bad_column = -1;
    s->n = a->n;
    int r = s->be->analyze_factor(s->self, a, &s->st);
    s->factored = r == LS_SOLVER_OK;
    keep_for_update(s, a, r);
    scope_leave(&t);
    return r;
}

int ls_solver_solve(ls_solver *s, double *b, int transpose)
{
    if (!s->factored)
        return LS_SOLVER_FAILED;
    thread_scope t;
    scope_enter(&t, s->st.method, s->n);
    int r;
    if (ls_update_active(s->upd)) {
        r = ls_update_solve(s->upd, b, transpose, kept_solve, s);
        if (r == LS_UPDATE_REJECTED) {
            /* the updated solution failed its residual check against the
             * true matrix: refactor that matrix and solve plainly */
            const ls_csc *a = ls_update_matrix(s->upd);
            r = s->be->factor(s->self, a, &s->st);
            s->factored = r == LS_SOLVER_OK;
            keep_for_update(s, a, r);
            if (r == LS_SOLVER_OK)
                r = s->be->solve(s->self, b, transpose, &s->st);
        }
    } else {
        r = s->be->solve(s->self, b, transpose, &s->st);
    }
    scope_leave(&t);
    return r;
}

void ls_solver_set_nodes(ls_solver *s, int m)
{
    if (s->be->set_nodes)
        s->be->set_nodes(s->self, m);
}

const ls_solver_stats *ls_solver_stats_of(const ls_solver *s)
{
    return &s->st;
}

void ls_solver_free(ls_solver **s)
{
    if (!s || !*s)
        return;
    (*s)->be->destroy((*s)->self);
    ls_update_free((*s)->upd);
    free(*s);
    *s = NULL;
}

void ls_csc_matvec(const ls_csc *a, const double *x, double *y, int transpose)
{
    int n = a->n;
    if (!transpose) {
        memset(y, 0, (size_t)n * sizeof *y);
        for (int j = 0; j < n; j++) {
            double xj = x[j];
            for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++)
                y[a->rowind[p]] += a->val[p] * xj;
        }
    } else {
        for (int j = 0; j < n; j++) {
            double s = 0;
            for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++)
                s += a->val[p] * x[a->rowind[p]];
            y[j] = s;
        }
    }
}

double ls_csc_norm_inf(const ls_csc *a)
{
    double *row = calloc((size_t)(a->n ? a->n : 1), sizeof *row);
    if (!row)
        return NAN;
    for (int j = 0; j < a->n; j++)
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++)
            row[a->rowind[p]] += fabs(a->val[p]);
    double m = 0;
    for (int i = 0; i < a->n; i++)
        m = row[i] > m ? row[i] : m;
    free(row);
    return m;
}

size_t ls_dense_bytes(int n)
{
    return (size_t)n * (size_t)n * sizeof(double) + (size_t)n * (sizeof(int) + 4 * sizeof(double));
}
