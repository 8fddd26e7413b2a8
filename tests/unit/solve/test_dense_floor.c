/* test_dense_floor.c — the dense backend's singularity test without the
 * condition estimate (ls_solver_singularity_only, src/solve/dense.c): the
 * floor it puts under the reciprocal condition against a closed form and
 * against LAPACK's own estimate (dgecon of Debian's liblapacke, the full
 * path's), and the factors, solutions and verdicts of both paths compared.
 *
 * - Closed form: A = [[1, 8], [0, 1]] equilibrates (as dgeequ) to
 *   As = [[1, 1], [0, 1]], whose inverse is [[1, -1], [0, 1]]: in the 1-norm
 *   |As| = 2 and |As^-1| = 2, so rcond = 1/4, and the floor, from the
 *   comparison matrix of the factors (here As itself), is 1/4 too; dgecon's
 *   estimate of |As^-1| is a lower bound of it, so its rcond is at least 1/4.
 * - Random systems shaped like MNA matrices (random_system.h): the floor is
 *   at most dgecon's estimate, and the solutions, plain and transposed, are
 *   the same bits on either path.
 * - A nearly singular matrix, [[1, 1], [1, 1 + 1e-15]] (rcond about 2.5e-16,
 *   below the test's 4 eps): singular on both paths, at the same column. */
#include "../../cu_run.h"
#include "dense_case.h"

#include <string.h>

/* The n x n matrix of the triplets. */
static void to_csc(ls_triplets *t, int n, ls_csc *a)
{
    CU_ASSERT_EQUAL_FATAL(ls_triplets_to_csc(t, n, a), 0);
}

static void test_closed_form(void)
{
    ls_csc a = {0};
    dense_case_two_by_two((const double[4]){1, 8, 0, 1}, &a);
    ls_solver_stats fast, full;
    CU_ASSERT_EQUAL(dense_case_factor(&a, true, &fast, NULL), LS_SOLVER_OK);
    CU_ASSERT_EQUAL(dense_case_factor(&a, false, &full, NULL), LS_SOLVER_OK);
    CU_ASSERT_TRUE(fast.rcond_floor);
    CU_ASSERT_FALSE(full.rcond_floor);
    CU_ASSERT_DOUBLE_EQUAL(fast.rcond, 0.25, 1e-15);   /* the closed form above */
    /* dgecon estimates |As^-1| from below, so its rcond is at least the true 1/4 */
    CU_ASSERT_TRUE(full.rcond >= 0.25 && full.rcond <= 1);
    ls_csc_free(&a);
}

static void test_random_systems(void)
{
    ls_rng r;
    ls_rng_seed(&r, 47, 0);
    int floors = 0;
    for (int k = 0; k < 200; k++) {
        int nodes = 5 + k % 40, vs = 1 + k % 4, n = nodes + vs;
        ls_triplets t = {0};
        ls_csc a = {0};
        random_system(&r, nodes, vs, NULL, &t);
        to_csc(&t, n, &a);
        ls_solver_stats fast, full;
        ls_solver *sf, *sp;
        int rf = dense_case_factor(&a, true, &fast, &sf), rp = dense_case_factor(&a, false, &full, &sp);
        CU_ASSERT_EQUAL(rf, rp);
        if (rf == LS_SOLVER_OK && rp == LS_SOLVER_OK) {
            floors += fast.rcond_floor;
            /* a floor: never above LAPACK's estimate (the full path's figure) */
            CU_ASSERT_TRUE(!fast.rcond_floor || fast.rcond <= full.rcond * (1 + 1e-12));
            double *x = malloc(2 * (size_t)n * sizeof *x);
            CU_ASSERT_FATAL(x != NULL);
            for (int tr = 0; tr < 2; tr++) {
                for (int i = 0; i < n; i++)
                    x[i] = x[n + i] = ls_rng_uniform(&r) - 0.5;
                CU_ASSERT_EQUAL(ls_solver_solve(sf, x, tr), LS_SOLVER_OK);
                CU_ASSERT_EQUAL(ls_solver_solve(sp, x + n, tr), LS_SOLVER_OK);
                CU_ASSERT_EQUAL(memcmp(x, x + n, (size_t)n * sizeof *x), 0);   /* the same bits */
            }
            free(x);
        }
        ls_solver_free(&sf);
        ls_solver_free(&sp);
        ls_csc_free(&a);
        ls_triplets_free(&t);
    }
    CU_ASSERT_TRUE(floors > 100);   /* the floor stood in for the estimate on most of them */
}

static void test_nearly_singular(void)
{
    ls_csc a = {0};
    dense_case_two_by_two((const double[4]){1, 1, 1, 1 + 1e-15}, &a);
    ls_solver_stats fast, full;
    CU_ASSERT_EQUAL(dense_case_factor(&a, true, &fast, NULL), LS_SOLVER_SINGULAR);
    CU_ASSERT_EQUAL(dense_case_factor(&a, false, &full, NULL), LS_SOLVER_SINGULAR);
    CU_ASSERT_FALSE(fast.rcond_floor);   /* the floor could not prove it regular: dgecon decided */
    CU_ASSERT_EQUAL(fast.bad_column, full.bad_column);
    CU_ASSERT_EQUAL(fast.rcond, full.rcond);
    ls_csc_free(&a);
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"the floor meets the closed form of a 2 x 2 triangle", test_closed_form},
        {"the floor is below dgecon's estimate, the solves the same bits", test_random_systems},
        {"a nearly singular matrix is singular on both paths", test_nearly_singular},
    };
    return ls_cu_run("dense_floor", NULL, NULL, cases, LS_CU_COUNT(cases));
}
