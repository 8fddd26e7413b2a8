/* dense_case.h — the dense backend's tests' shared steps (test_dense_floor.c,
 * test_dense_chol.c): factor a matrix on a fresh dense solver, and write a
 * 2 x 2 matrix. */
#ifndef LS_TEST_DENSE_CASE_H
#define LS_TEST_DENSE_CASE_H

#include <CUnit/Basic.h>

#include "random_system.h"
#include "solve/solver.h"

/* Factor a on a fresh dense solver, with the singularity test only or not;
 * returns the status, the stats into *st.  The solver into *out (freed by
 * the caller) when out is not NULL. */
static inline int dense_case_factor(const ls_csc *a, bool floor_only, ls_solver_stats *st, ls_solver **out)
{
    ls_solver *s = ls_solver_new(&ls_backend_dense, LS_METHOD_DENSE_LU);
    CU_ASSERT_FATAL(s != NULL);
    ls_solver_singularity_only(s, floor_only);
    int rc = ls_solver_analyze(s, a);
    if (rc == LS_SOLVER_OK)
        rc = ls_solver_factor(s, a);
    *st = *ls_solver_stats_of(s);
    if (out)
        *out = s;
    else
        ls_solver_free(&s);
    return rc;
}

/* The 2 x 2 matrix [[m[0], m[1]], [m[2], m[3]]] (zeros left out) into a. */
static inline void dense_case_two_by_two(const double m[4], ls_csc *a)
{
    ls_triplets t = {0};
    for (int k = 0; k < 4; k++)
        if (m[k] != 0)
            put(NULL, &t, 2, k / 2, k % 2, m[k]);
    CU_ASSERT_EQUAL_FATAL(ls_triplets_to_csc(&t, 2, a), 0);
    ls_triplets_free(&t);
}

#endif
