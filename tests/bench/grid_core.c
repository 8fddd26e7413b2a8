/* grid_core.c — the solver core of the grid benchmark without the front end.
 *
 * Usage: grid_core N [reduced|umfpack|klu] [pages]
 * Assembles the MNA matrix loadstack builds for `gen.py grid N` (an N x N grid of
 * one-ohm resistors, ground at the corner (N-1, N-1), a 1 V source without rs
 * from ground to (0, 0): N*N - 1 node unknowns and one branch unknown) directly in
 * compressed columns, then analyzes, factors and solves it with one backend:
 * `reduced` (default) is the reduced nodal form of src/mna.c (CHOLMOD on the
 * SPD system of the free nodes), `umfpack` and `klu` the LU backends that the
 * full MNA matrix went to before it.  Prints the seconds of each step and
 * V(n0_1), for a cross-check against scipy's spsolve (gen.py gridmatrix).
 * `pages` gives SuiteSparse the allocation the loadstack program uses
 * (ls_solver_pages_for_program: the factor's large blocks with huge pages);
 * without it SuiteSparse allocates with malloc, the bare library's way.
 * Exit 0 ok, 1 bad usage or no memory, 3 solver failure. */
#include "mna/mna.h"
#include "solve/reduced.h"
#include "solve/solver.h"

#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Unknown of grid node (i, j): row-major, ground (N-1, N-1) is -1. */
static int unk(int n, int i, int j)
{
    int id = i * n + j;
    return id == n * n - 1 ? -1 : id;
}

/* Append entry (r, c, v) unless r or c is ground. */
static void put(ls_triplets *t, int r, int c, double v)
{
    if (r < 0 || c < 0)
        return;
    t->ti[t->nnz] = r;
    t->tj[t->nnz] = c;
    t->tx[t->nnz++] = v;
}

int main(int argc, char **argv)
{
    int n = argc > 1 ? atoi(argv[1]) : 0;
    const char *which = argc > 2 ? argv[2] : "reduced";
    const ls_backend *be = strcmp(which, "umfpack") == 0 ? &ls_backend_umfpack
                           : strcmp(which, "klu") == 0   ? &ls_backend_klu
                                                         : &ls_backend_reduced;
    bool pages = argc > 3 && strcmp(argv[3], "pages") == 0;
    if (n < 2 || n > 4000 || (argc > 3 && !pages)) {
        fprintf(stderr, "usage: grid_core N [reduced|umfpack|klu] [pages]\n");
        return 1;
    }
    if (pages)
        ls_solver_pages_for_program();
    int nn = n * n - 1, nu = nn + 1, k = nn; /* k: the source's branch unknown */
    size_t cap = 8 * (size_t)n * (size_t)n + 8;
    ls_triplets t = {.ti = malloc(cap * sizeof(int)), .tj = malloc(cap * sizeof(int)),
                     .tx = malloc(cap * sizeof(double)), .cap = cap};
    double *b = calloc((size_t)nu, sizeof *b);
    if (!t.ti || !t.tj || !t.tx || !b)
        return 1;
    double t0 = now_s();
    for (int i = 0; i < n; i++)
        for (int j = 0; j < n; j++)
            for (int d = 0; d < 2; d++) {
                int i2 = i + (d == 1), j2 = j + (d == 0);
                if (i2 >= n || j2 >= n)
                    continue;
                int a = unk(n, i, j), c = unk(n, i2, j2);
                put(&t, a, a, 1);
                put(&t, c, c, 1);
                put(&t, a, c, -1);
                put(&t, c, a, -1);
            }
    /* voltage g -> n0_0, 1 V: KCL column and branch row as src/parts/sources.c stamps them */
    put(&t, unk(n, 0, 0), k, -1);
    put(&t, k, unk(n, 0, 0), 1);
    b[k] = 1;
    ls_csc a;
    if (ls_triplets_to_csc(&t, nu, &a) != 0)
        return 1;
    ls_triplets_free(&t);
    double t1 = now_s();
    ls_solver *s = ls_solver_new(be, LS_METHOD_SPARSE_LU);
    if (!s)
        return 1;
    int st = ls_solver_analyze(s, &a);
    double t2 = now_s();
    if (st == LS_SOLVER_OK)
        st = ls_solver_factor(s, &a);
    double t3 = now_s();
    if (st == LS_SOLVER_OK)
        st = ls_solver_solve(s, b, 0);
    double t4 = now_s();
    if (st != LS_SOLVER_OK) {
        fprintf(stderr, "grid_core: %s failed (%d)\n", which, st);
        return 3;
    }
    printf("n %d backend %s assemble_s %.3f analyze_s %.3f factor_s %.3f solve_s %.3f x %.17g\n", nu,
           ls_solver_stats_of(s)->library, t1 - t0, t2 - t1, t3 - t2, t4 - t3, b[unk(n, 0, 1)]);
    ls_solver_free(&s);
    ls_csc_free(&a);
    free(b);
    return 0;
}
