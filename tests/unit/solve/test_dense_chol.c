/* test_dense_chol.c — the dense backend's Cholesky path (src/solve/dense.c):
 * which matrices take it, its answers and condition estimate against closed
 * forms, and the LU fallback where it refuses a matrix.
 *
 * - Closed form: A = [[4, -2], [-2, 4]] scales (as LAPACK's dpoequ, s_j =
 *   1 / sqrt(a_jj) = 1/2) to As = [[1, -1/2], [-1/2, 1]], whose inverse is
 *   (4/3) [[1, 1/2], [1/2, 1]]: in the 1-norm |As| = 3/2 and |As^-1| = 2, so
 *   rcond = 1/3; A^-1 = (1/12) [[4, 2], [2, 4]], so b = (2, 0) gives
 *   x = (2/3, 1/3) (Cramer's rule).  dpocon's estimate of |As^-1| is a lower
 *   bound, so its rcond is at least 1/3.
 * - A floating pair of nodes, A = [[1, -1], [-1, 1]] (singular; it passes the
 *   Cholesky test): Cholesky refuses it and LU decides, singular at column 1
 *   (the equilibrated matrix is A itself; after the first pivot the second is
 *   1 - 1 = 0 exactly).
 * - A matrix with a controlled source off the diagonal ([[2, 1], [0, 2]]):
 *   LU directly, not counted as a refusal; x = A^-1 b by back substitution.
 * - Random nodal matrices (conductances to ground and between nodes): the
 *   Cholesky path's solution has a residual within the backward-error bound
 *   of a Cholesky solve (a small multiple of n eps |A| |x|, Higham,
 *   "Accuracy and Stability of Numerical Algorithms", ch. 10), plain and
 *   transposed solves give the same bits, and the singularity-test switch
 *   (ls_solver_singularity_only) changes nothing on this path. */
#include "../../cu_run.h"
#include "dense_case.h"

#include <float.h>
#include <string.h>

static void test_closed_form(void)
{
    ls_csc a = {0};
    dense_case_two_by_two((const double[4]){4, -2, -2, 4}, &a);
    ls_solver_stats st;
    ls_solver *s;
    CU_ASSERT_EQUAL_FATAL(dense_case_factor(&a, false, &st, &s), LS_SOLVER_OK);
    CU_ASSERT_EQUAL(st.method, LS_METHOD_DENSE_CHOLESKY);
    CU_ASSERT_FALSE(st.cholesky_refused);
    CU_ASSERT_EQUAL(st.factorizations, 1);
    CU_ASSERT_TRUE(st.rcond >= 1.0 / 3 * (1 - 1e-15) && st.rcond <= 1.0 / 3 * (1 + 1e-12)); /* the closed form */
    for (int tr = 0; tr < 2; tr++) {
        double x[2] = {2, 0};
        CU_ASSERT_EQUAL(ls_solver_solve(s, x, tr), LS_SOLVER_OK);
        CU_ASSERT_DOUBLE_EQUAL(x[0], 2.0 / 3, 1e-15);
        CU_ASSERT_DOUBLE_EQUAL(x[1], 1.0 / 3, 1e-15);
    }
    ls_solver_free(&s);
    ls_csc_free(&a);
}

static void test_refused(void)
{
    ls_csc a = {0};
    dense_case_two_by_two((const double[4]){1, -1, -1, 1}, &a);
    ls_solver_stats st;
    CU_ASSERT_EQUAL(dense_case_factor(&a, false, &st, NULL), LS_SOLVER_SINGULAR);
    CU_ASSERT_TRUE(st.cholesky_refused);
    CU_ASSERT_EQUAL(st.method, LS_METHOD_DENSE_LU);
    CU_ASSERT_EQUAL(st.bad_column, 1);
    ls_csc_free(&a);
}

static void test_unsymmetric(void)
{
    ls_csc a = {0};
    dense_case_two_by_two((const double[4]){2, 1, 0, 2}, &a);
    ls_solver_stats st;
    ls_solver *s;
    CU_ASSERT_EQUAL_FATAL(dense_case_factor(&a, false, &st, &s), LS_SOLVER_OK);
    CU_ASSERT_EQUAL(st.method, LS_METHOD_DENSE_LU);
    CU_ASSERT_FALSE(st.cholesky_refused);
    double x[2] = {3, 2}; /* 2 x1 + x2 = 3, 2 x2 = 2: x = (1, 1) */
    CU_ASSERT_EQUAL(ls_solver_solve(s, x, 0), LS_SOLVER_OK);
    CU_ASSERT_DOUBLE_EQUAL(x[0], 1, 1e-15);
    CU_ASSERT_DOUBLE_EQUAL(x[1], 1, 1e-15);
    ls_solver_free(&s);
    ls_csc_free(&a);
}

/* max_i |b - A x|_i / (|A| |x|)_i */
static double backward_error(const ls_csc *a, const double *x, const double *b)
{
    int n = a->n;
    double *r = calloc((size_t)n, sizeof *r), *ax = calloc((size_t)n, sizeof *ax), worst = 0;
    CU_ASSERT_FATAL(r && ax);
    for (int j = 0; j < n; j++)
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++) {
            r[a->rowind[p]] += a->val[p] * x[j];
            ax[a->rowind[p]] += fabs(a->val[p] * x[j]);
        }
    for (int i = 0; i < n; i++)
        worst = fmax(worst, fabs(b[i] - r[i]) / ax[i]);
    free(r);
    free(ax);
    return worst;
}

static void test_random_nodal(void)
{
    ls_rng r;
    ls_rng_seed(&r, 91, 0);
    for (int k = 0; k < 100; k++) {
        int n = 2 + k % 60;
        ls_csc a = {0};
        ls_triplets g = {0};
        for (int i = 0; i < n; i++) /* a spanning tree to ground, then extra conductances */
            conductance(NULL, &g, n, i, (int)(ls_rng_uniform(&r) * (i + 1)) - 1, pow(10, -3 + 4 * ls_rng_uniform(&r)));
        for (int e = 0; e < 2 * n; e++) {
            int i = (int)(ls_rng_uniform(&r) * n), j = (int)(ls_rng_uniform(&r) * n);
            if (i != j)
                conductance(NULL, &g, n, i, j, pow(10, -3 + 4 * ls_rng_uniform(&r)));
        }
        CU_ASSERT_EQUAL_FATAL(ls_triplets_to_csc(&g, n, &a), 0);
        ls_solver_stats st, sf;
        ls_solver *s, *f;
        int rc = dense_case_factor(&a, false, &st, &s), rf = dense_case_factor(&a, true, &sf, &f);
        CU_ASSERT_EQUAL(rc, rf);
        if (rc == LS_SOLVER_OK && st.method == LS_METHOD_DENSE_CHOLESKY) {
            CU_ASSERT_EQUAL(sf.method, LS_METHOD_DENSE_CHOLESKY);
            CU_ASSERT_FALSE(sf.rcond_floor);
            CU_ASSERT_EQUAL(st.rcond, sf.rcond);
            double *x = malloc(4 * (size_t)n * sizeof *x);
            CU_ASSERT_FATAL(x != NULL);
            for (int i = 0; i < n; i++)
                x[i] = x[n + i] = x[2 * n + i] = x[3 * n + i] = ls_rng_uniform(&r) - 0.5;
            CU_ASSERT_EQUAL(ls_solver_solve(s, x, 0), LS_SOLVER_OK);
            CU_ASSERT_EQUAL(ls_solver_solve(s, x + n, 1), LS_SOLVER_OK);
            CU_ASSERT_EQUAL(ls_solver_solve(f, x + 2 * n, 0), LS_SOLVER_OK);
            CU_ASSERT_EQUAL(memcmp(x, x + n, (size_t)n * sizeof *x), 0);
            CU_ASSERT_EQUAL(memcmp(x, x + 2 * n, (size_t)n * sizeof *x), 0);
            CU_ASSERT_TRUE(backward_error(&a, x, x + 3 * n) <= 4.0 * n * DBL_EPSILON);
            free(x);
        } else {
            CU_FAIL("a nodal matrix with a tree to ground did not take the Cholesky path");
        }
        ls_solver_free(&s);
        ls_solver_free(&f);
        ls_csc_free(&a);
        ls_triplets_free(&g);
    }
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"Cholesky meets the closed form of a 2 x 2 nodal matrix", test_closed_form},
        {"a floating pair: Cholesky refuses, LU finds the singular column", test_refused},
        {"an unsymmetric matrix goes to LU", test_unsymmetric},
        {"random nodal matrices: backward error, transposed and floor paths", test_random_nodal},
    };
    return ls_cu_run("dense_chol", NULL, NULL, cases, LS_CU_COUNT(cases));
}
