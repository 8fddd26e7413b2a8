/* own_lu_driver.c — one dense solve for tests/unit/solve/test_own_lu.py.
 * Usage: own_lu_driver own|lapack N|T   (N: A x = b, T: A^T x = b)
 * Reads n, then A row by row (n*n numbers), then b (n numbers) from stdin;
 * factors A on the dense backend, with its own LU (ls_solver_own_lu) or
 * LAPACK's, and prints x, one %.17g a line, or "singular COLUMN". */
#include "mna/mna.h"
#include "solve/solver.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Exit 0 with x or the verdict printed, 2 on bad usage or input. */
int main(int argc, char **argv)
{
    int n;
    if (argc != 3 || (strcmp(argv[1], "own") && strcmp(argv[1], "lapack")) ||
        (strcmp(argv[2], "N") && strcmp(argv[2], "T")) || scanf("%d", &n) != 1 || n < 1 || n > LS_DENSE_OWN_MAX) {
        fprintf(stderr, "usage: %s own|lapack N|T < system\n", argv[0]);
        return 2;
    }
    ls_triplets t = {0};
    t.cap = (size_t)n * n;
    t.ti = malloc(t.cap * sizeof *t.ti);
    t.tj = malloc(t.cap * sizeof *t.tj);
    t.tx = malloc(t.cap * sizeof *t.tx);
    double *b = malloc((size_t)n * sizeof *b);
    if (!t.ti || !t.tj || !t.tx || !b)
        return 2;
    for (int i = 0; i < n; i++)
        for (int j = 0; j < n; j++) {
            double v;
            if (scanf("%lf", &v) != 1)
                return 2;
            if (v != 0) {
                t.ti[t.nnz] = i;
                t.tj[t.nnz] = j;
                t.tx[t.nnz++] = v;
            }
        }
    for (int i = 0; i < n; i++)
        if (scanf("%lf", &b[i]) != 1)
            return 2;
    ls_csc a;
    if (ls_triplets_to_csc(&t, n, &a) != 0)
        return 2;
    ls_solver *s = ls_solver_new(&ls_backend_dense, LS_METHOD_DENSE_LU);
    if (!s)
        return 2;
    ls_solver_singularity_only(s, true);   /* as fit's candidates */
    ls_solver_own_lu(s, strcmp(argv[1], "own") == 0);
    int rc = ls_solver_analyze(s, &a);
    if (rc == LS_SOLVER_OK)
        rc = ls_solver_factor(s, &a);
    if (rc == LS_SOLVER_SINGULAR)
        printf("singular %d\n", ls_solver_stats_of(s)->bad_column);
    else if (rc == LS_SOLVER_OK && ls_solver_solve(s, b, argv[2][0] == 'T') == LS_SOLVER_OK)
        for (int i = 0; i < n; i++)
            printf("%.17g\n", b[i]);
    else
        return 2;
    ls_solver_free(&s);
    ls_csc_free(&a);
    ls_triplets_free(&t);
    free(b);
    return 0;
}
