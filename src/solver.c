/* solver.c — the backend-independent front end and sparse-matrix helpers. */
#include "solver.h"

#include <math.h>
#include <pthread.h>
#include <stdlib.h>
#include <string.h>

#ifdef LS_HAVE_OPENMP
#include <omp.h>
#endif

/* OpenBLAS extensions (the build links OpenBLAS; see meson.build). */
void openblas_set_num_threads(int num_threads);
int openblas_get_num_procs(void);

struct ls_solver {
    const ls_backend *be;
    void *self;
    ls_solver_stats st;
    int factored;
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
    return s->be->analyze(s->self, a, &s->st);
}

/* BLAS and OpenMP worker threads pay off only on large factorizations; on
 * small ones they spin between calls (sched_yield) and, with two cores, slow
 * the program and anything beside it.  OpenBLAS's thread count is process-wide
 * state, so it is changed under a lock and only when the wanted count differs. */
static void blas_threads_for(ls_method m, int n)
{
    static pthread_mutex_t lock = PTHREAD_MUTEX_INITIALIZER;
    static int current = 0;
    int big = m == LS_METHOD_DENSE_LU ? 1000 : 200000;
    int want = n >= big ? openblas_get_num_procs() : 1;
#ifdef LS_HAVE_OPENMP
    /* OpenMP's thread count is per calling thread: set it every time.  CHOLMOD
     * asks for a fixed team size in its num_threads clauses, which overrides
     * omp_set_num_threads; with dynamic adjustment on, the runtime bounds
     * every team by that count (and by the idle processors), so the cap holds. */
    omp_set_num_threads(want);
    omp_set_dynamic(1);
#endif
    pthread_mutex_lock(&lock);
    if (want != current) {
        openblas_set_num_threads(want);
        current = want;
    }
    pthread_mutex_unlock(&lock);
}

int ls_solver_factor(ls_solver *s, const ls_csc *a)
{
    blas_threads_for(s->st.method, a->n);
    s->st.bad_column = -1;
    int r = s->be->factor(s->self, a, &s->st);
    s->factored = r == LS_SOLVER_OK;
    return r;
}

int ls_solver_analyze_factor(ls_solver *s, const ls_csc *a)
{
    if (!s->be->analyze_factor) {
        int r = ls_solver_analyze(s, a);
        return r == LS_SOLVER_OK ? ls_solver_factor(s, a) : r;
    }
    s->factored = 0;
    blas_threads_for(s->st.method, a->n);
    s->st.bad_column = -1;
    int r = s->be->analyze_factor(s->self, a, &s->st);
    s->factored = r == LS_SOLVER_OK;
    return r;
}

int ls_solver_solve(ls_solver *s, double *b, int transpose)
{
    if (!s->factored)
        return LS_SOLVER_FAILED;
    return s->be->solve(s->self, b, transpose, &s->st);
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
