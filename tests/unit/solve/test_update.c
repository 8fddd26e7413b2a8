/* test_update.c — solves through a kept factor and a low-rank update
 * (src/solve/update.c, ls_solver_allow_update) against LAPACK's dgesv of the
 * changed matrix (Debian's liblapacke, the outside reference), on random
 * sparse systems shaped like MNA matrices (random_system.h).
 *
 * Each check changes a few conductances of a factored system (the entries
 * stay in the pattern), factors again with updates allowed and solves plain
 * and transposed: the solution must agree with dgesv's to 1e-9 of its largest
 * entry (both are backward-stable solves: their difference is bounded by the
 * condition times the rounding, and these systems have condition up to about
 * 1e6), and its backward error against the true changed matrix must be at
 * most 1e-13 (a solve through the Woodbury identity is backward stable when
 * the capacitance matrix is well conditioned).  The update counter must show
 * that the update, not a refactorization, answered.  Also: a change that
 * makes the matrix singular is refused (the refactorization then names it),
 * too many changed rows refactor, and the automatic choice takes the update
 * on a large 2-D grid and not on a tiny system. */
#include "../../cu_run.h"
#include "random_system.h"
#include "solve/solver.h"

#include <lapacke.h>
#include <string.h>

/* Largest |x_i|. */
static double amax(const double *x, int n)
{
    double m = 0;
    for (int i = 0; i < n; i++)
        m = fmax(m, fabs(x[i]));
    return m;
}

/* |b - A x|_inf / (|A|_inf |x|_inf + |b|_inf) for the dense column-major A
 * (or A^T). */
static double backward_error(const double *d, int n, const double *x, const double *b, int transpose)
{
    double rn = 0, an = 0;
    for (int i = 0; i < n; i++) {
        double r = b[i], row = 0;
        for (int j = 0; j < n; j++) {
            double aij = transpose ? d[j + (size_t)i * n] : d[i + (size_t)j * n];
            r -= aij * x[j];
            row += fabs(aij);
        }
        rn = fmax(rn, fabs(r));
        an = fmax(an, row);
    }
    return rn / (an * amax(x, n) + amax(b, n));
}

/* Change the conductance between a and b (nodes, -1 ground) by dg in the
 * dense matrix and in the compressed one (whose pattern holds the entries). */
static void change(double *d, ls_csc *a, int n, int na, int nb, double dg)
{
    int ii[4] = {na, nb, na, nb}, jj[4] = {na, nb, nb, na};
    double v[4] = {dg, dg, -dg, -dg};
    for (int k = 0; k < 4; k++) {
        if (ii[k] < 0 || jj[k] < 0)
            continue;
        d[ii[k] + (size_t)jj[k] * n] += v[k];
        int p = ls_csc_find(a, ii[k], jj[k]);
        CU_ASSERT_FATAL(p >= 0);
        a->val[p] += v[k];
    }
}

/* A conductance of the system that is in its pattern: the node pair of a
 * random off-diagonal node entry. */
static void pick_pair(ls_rng *r, const ls_csc *a, int nodes, int *na, int *nb)
{
    for (;;) {
        int j = (int)(ls_rng_uniform(r) * nodes);
        int len = a->colptr[j + 1] - a->colptr[j];
        int i = a->rowind[a->colptr[j] + (int)(ls_rng_uniform(r) * len)];
        if (i != j && i < nodes && ls_csc_find(a, j, i) >= 0) {
            *na = i;
            *nb = j;
            return;
        }
    }
}

/* dgesv of the dense d (or d^T) with right-hand side b into x. */
static int dense_solve(const double *d, int n, const double *b, double *x, int transpose)
{
    double *m = malloc((size_t)n * n * sizeof *m);
    lapack_int *piv = malloc((size_t)n * sizeof *piv);
    if (!m || !piv)
        abort();
    for (int i = 0; i < n; i++)
        for (int j = 0; j < n; j++)
            m[i + (size_t)j * n] = transpose ? d[j + (size_t)i * n] : d[i + (size_t)j * n];
    memcpy(x, b, (size_t)n * sizeof *x);
    int info = LAPACKE_dgesv(LAPACK_COL_MAJOR, n, 1, m, n, piv, x, n);
    free(m);
    free(piv);
    return info;
}

static void test_updates_match_lapack(void)
{
    setenv("LOADSTACK_LOWRANK", "1", 1); /* the update whenever it is safe: the path under test */
    ls_rng r;
    ls_rng_seed(&r, 31, 0);
    int systems = 0, checked = 0;
    for (int trial = 0; trial < 30; trial++) {
        int nodes = 6 + trial * 3, vs = 1 + trial % 3, n = nodes + vs;
        double *d = calloc((size_t)n * n, sizeof *d), *b = malloc((size_t)n * sizeof *b);
        double *x = malloc((size_t)n * sizeof *x), *want = malloc((size_t)n * sizeof *want);
        ls_triplets t = {0};
        ls_csc a = {0};
        if (!d || !b || !x || !want)
            abort();
        random_system(&r, nodes, vs, d, &t);
        CU_ASSERT_EQUAL_FATAL(ls_triplets_to_csc(&t, n, &a), 0);
        ls_solver *s = ls_solver_new(&ls_backend_klu, LS_METHOD_SPARSE_LU);
        CU_ASSERT_PTR_NOT_NULL_FATAL(s);
        if (dense_solve(d, n, d, want, 0) != 0 || ls_solver_analyze_factor(s, &a) != LS_SOLVER_OK) {
            ls_solver_free(&s); /* two sources on one node: singular by chance */
            goto next;
        }
        systems++;
        ls_solver_allow_update(s, &a);
        /* up to four successive changes, each against the one factor kept */
        for (int step = 0; step < 4; step++) {
            int na, nb;
            pick_pair(&r, &a, nodes, &na, &nb);
            change(d, &a, n, na, nb, pow(10, -3 + 3 * ls_rng_uniform(&r)));
            long up0, rej0, up1, rej1;
            ls_solver_update_counts(s, &up0, &rej0);
            int st = ls_solver_factor(s, &a);
            ls_solver_update_counts(s, &up1, &rej1);
            CU_ASSERT_EQUAL(st, LS_SOLVER_OK);
            CU_ASSERT_EQUAL(up1, up0 + 1); /* answered by the update */
            for (int tr = 0; tr < 2 && st == LS_SOLVER_OK; tr++) {
                for (int i = 0; i < n; i++)
                    b[i] = ls_rng_uniform(&r) - 0.5;
                memcpy(x, b, (size_t)n * sizeof *x);
                CU_ASSERT_EQUAL(ls_solver_solve(s, x, tr), LS_SOLVER_OK);
                CU_ASSERT_EQUAL_FATAL(dense_solve(d, n, b, want, tr), 0);
                double big = amax(want, n);
                for (int i = 0; i < n; i++)
                    CU_ASSERT(fabs(x[i] - want[i]) <= 1e-9 * big);
                CU_ASSERT(backward_error(d, n, x, b, tr) <= 1e-13);
                checked++;
            }
            ls_solver_update_counts(s, &up1, &rej1);
            CU_ASSERT_EQUAL(rej1, rej0); /* no solve needed the refactorization */
        }
        ls_solver_free(&s);
    next:
        free(d); free(b); free(x); free(want);
        ls_triplets_free(&t);
        ls_csc_free(&a);
    }
    unsetenv("LOADSTACK_LOWRANK");
    CU_ASSERT(systems >= 20);
    CU_ASSERT(checked >= 150);
}

/* A chain of m nodes (node 0 grounded through g0, neighbours through 1 S):
 * dense and compressed. */
static void chain(int m, double g0, double *d, ls_csc *a)
{
    ls_triplets t = {0};
    conductance(d, &t, m, 0, -1, g0);
    for (int i = 0; i + 1 < m; i++)
        conductance(d, &t, m, i, i + 1, 1);
    CU_ASSERT_EQUAL_FATAL(ls_triplets_to_csc(&t, m, a), 0);
    ls_triplets_free(&t);
}

static void test_singular_change_refused(void)
{
    setenv("LOADSTACK_LOWRANK", "1", 1);
    enum { M = 12 };
    double d[M * M] = {0};
    ls_csc a = {0};
    chain(M, 1, d, &a);
    ls_solver *s = ls_solver_new(&ls_backend_klu, LS_METHOD_SPARSE_LU);
    CU_ASSERT_EQUAL_FATAL(ls_solver_analyze_factor(s, &a), LS_SOLVER_OK);
    ls_solver_allow_update(s, &a);
    long up0, rej0, up1, rej1;
    ls_solver_update_counts(s, &up0, &rej0);
    change(d, &a, M, M - 2, M - 1, -1); /* the last node left floating: singular */
    CU_ASSERT_EQUAL(ls_solver_factor(s, &a), LS_SOLVER_SINGULAR);
    ls_solver_update_counts(s, &up1, &rej1);
    CU_ASSERT_EQUAL(up1, up0); /* the capacitance matrix was singular: refused */
    ls_solver_free(&s);
    ls_csc_free(&a);
    unsetenv("LOADSTACK_LOWRANK");
}

static void test_many_rows_refactor(void)
{
    setenv("LOADSTACK_LOWRANK", "1", 1);
    enum { M = 120 };
    double *d = calloc((size_t)M * M, sizeof *d), b[M], x[M], want[M];
    ls_csc a = {0};
    chain(M, 0.5, d, &a);
    ls_solver *s = ls_solver_new(&ls_backend_klu, LS_METHOD_SPARSE_LU);
    CU_ASSERT_EQUAL_FATAL(ls_solver_analyze_factor(s, &a), LS_SOLVER_OK);
    ls_solver_allow_update(s, &a);
    for (int i = 0; i + 1 < M; i += 2) /* 120 rows change: beyond any update's rank */
        change(d, &a, M, i, i + 1, 0.25);
    long up0, rej0, up1, rej1;
    ls_solver_update_counts(s, &up0, &rej0);
    CU_ASSERT_EQUAL(ls_solver_factor(s, &a), LS_SOLVER_OK);
    ls_solver_update_counts(s, &up1, &rej1);
    CU_ASSERT_EQUAL(up1, up0);
    for (int i = 0; i < M; i++)
        b[i] = x[i] = 1.0 / (1 + i);
    CU_ASSERT_EQUAL(ls_solver_solve(s, x, 0), LS_SOLVER_OK);
    CU_ASSERT_EQUAL_FATAL(dense_solve(d, M, b, want, 0), 0);
    for (int i = 0; i < M; i++)
        CU_ASSERT(fabs(x[i] - want[i]) <= 1e-10 * amax(want, M));
    ls_solver_free(&s);
    ls_csc_free(&a);
    free(d);
    unsetenv("LOADSTACK_LOWRANK");
}

/* The automatic choice (flops of the kept factor against the update's
 * solves): a one-conductance change of a 2-D grid of 80 x 80 nodes is
 * updated, of a 6-node chain refactored. */
static void test_automatic_choice(void)
{
    unsetenv("LOADSTACK_LOWRANK");
    for (int big = 0; big < 2; big++) {
        int side = big ? 80 : 6, m = big ? side * side : side;
        ls_triplets t = {0};
        ls_csc a = {0};
        if (big) { /* conductances of 1 S to the right and below, the corner grounded */
            for (int k = 0; k < m; k++) {
                if ((k + 1) % side)
                    conductance(NULL, &t, m, k, k + 1, 1);
                if (k + side < m)
                    conductance(NULL, &t, m, k, k + side, 1);
            }
            conductance(NULL, &t, m, 0, -1, 1);
            CU_ASSERT_EQUAL_FATAL(ls_triplets_to_csc(&t, m, &a), 0);
        } else {
            double d[36] = {0};
            chain(m, 1, d, &a);
        }
        ls_solver *s = ls_solver_new(&ls_backend_klu, LS_METHOD_SPARSE_LU);
        CU_ASSERT_EQUAL_FATAL(ls_solver_analyze_factor(s, &a), LS_SOLVER_OK);
        ls_solver_allow_update(s, &a);
        int p = ls_csc_find(&a, m / 2, m / 2);
        CU_ASSERT_FATAL(p >= 0);
        a.val[p] += 0.5; /* one diagonal entry changes: rank one */
        long up0, rej0, up1, rej1;
        ls_solver_update_counts(s, &up0, &rej0);
        CU_ASSERT_EQUAL(ls_solver_factor(s, &a), LS_SOLVER_OK);
        ls_solver_update_counts(s, &up1, &rej1);
        CU_ASSERT_EQUAL(up1 - up0, big ? 1 : 0);
        ls_solver_free(&s);
        ls_csc_free(&a);
        ls_triplets_free(&t);
    }
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"updated solves match LAPACK on the changed matrix", test_updates_match_lapack},
        {"a change that makes the matrix singular is refused", test_singular_change_refused},
        {"too many changed rows refactor", test_many_rows_refactor},
        {"the automatic choice updates a grid, not a tiny chain", test_automatic_choice},
    };
    return ls_cu_run("update", NULL, NULL, cases, LS_CU_COUNT(cases));
}
