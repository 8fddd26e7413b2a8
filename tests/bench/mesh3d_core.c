/* mesh3d_core.c — the solver core on a 3-D mesh, without the front end: the
 * direct (CHOLMOD) and the iterative (hypre AMG-PCG) backends side by side.
 *
 * Usage: mesh3d_core N cholmod|amg|pick|2d-cholmod|2d-amg|2d-pick
 * Assembles the nodal matrix of an N x N x N cubic lattice of one-ohm
 * resistors (N x N square with the 2d- methods) with the corner (0,0,0)
 * grounded and 1 A injected at the centre node, in compressed columns as
 * loadstack's assembly would, then factors (the AMG setup) and solves with
 * one backend.  Prints one line of key=value pairs: the order, the seconds
 * of factor and solve, AMD's fill estimate (the automatic rule's input), the centre voltage (V), for a cross-check between the
 * two methods, and for AMG the CG iterations and the true relative
 * residual.  `pick` solves nothing: it prints the automatic choice
 * (ls_amg_preferred, "auto=iterative-amg" or "auto=direct") and the fill.  Peak memory is measured from outside (/usr/bin/time -v, by
 * mesh3d.sh).  Exit 0 ok, 1 bad usage or no memory, 3 solver failure. */
#include "mna/mna.h"
#include "solve/amg.h"
#include "solve/solver.h"
#include "solve/sparse.h"

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

/* Unknown of node (i, j, l): lexicographic, the ground corner is -1. */
static int unk(int n, int dim, int i, int j, int l)
{
    int id = dim == 3 ? (i * n + j) * n + l : i * n + j;
    return id - 1;
}

/* A one-ohm resistor between unknowns a and b (-1 is ground). */
static void resistor(ls_triplets *t, int a, int b)
{
    int u[2] = {a, b};
    for (int x = 0; x < 2; x++)
        for (int y = 0; y < 2; y++)
            if (u[x] >= 0 && u[y] >= 0) {
                t->ti[t->nnz] = u[x];
                t->tj[t->nnz] = u[y];
                t->tx[t->nnz++] = x == y ? 1 : -1;
            }
}

int main(int argc, char **argv)
{
    int n = argc > 2 ? atoi(argv[1]) : 0;
    const char *which = argc > 2 ? argv[2] : "";
    int dim = strncmp(which, "2d-", 3) == 0 ? 2 : 3;
    const char *m = dim == 2 ? which + 3 : which;
    const ls_backend *be = NULL;
    ls_method meth = LS_METHOD_SPARSE_CHOLESKY;
    bool pick = strcmp(m, "pick") == 0;
    if (strcmp(m, "cholmod") == 0 || pick)
        be = &ls_backend_cholmod;
#ifdef LS_HAVE_AMG
    if (strcmp(m, "amg") == 0) {
        be = &ls_backend_amg;
        meth = LS_METHOD_ITERATIVE_AMG;
    }
#endif
    if (n < 2 || n > (dim == 3 ? 400 : 8000) || !be) {
        fprintf(stderr, "usage: mesh3d_core N cholmod|amg|pick|2d-cholmod|2d-amg|2d-pick (amg, pick: the "
                "-Dmpi=enabled build)\n");
        return 1;
    }
    long nodes = dim == 3 ? (long)n * n * n : (long)n * n;
    int nu = (int)(nodes - 1);
    size_t cap = 4 * (size_t)dim * (size_t)nodes + 8;
    ls_triplets t = {.ti = malloc(cap * sizeof(int)), .tj = malloc(cap * sizeof(int)),
                     .tx = malloc(cap * sizeof(double)), .cap = cap};
    double *b = calloc((size_t)nu, sizeof *b);
    if (!t.ti || !t.tj || !t.tx || !b)
        return 1;
    int nz = dim == 3 ? n : 1;
    for (int i = 0; i < n; i++)
        for (int j = 0; j < n; j++)
            for (int l = 0; l < nz; l++) {
                int u = unk(n, dim, i, j, l);
                if (i + 1 < n)
                    resistor(&t, u, unk(n, dim, i + 1, j, l));
                if (j + 1 < n)
                    resistor(&t, u, unk(n, dim, i, j + 1, l));
                if (dim == 3 && l + 1 < n)
                    resistor(&t, u, unk(n, dim, i, j, l + 1));
            }
    int c = unk(n, dim, n / 2, n / 2, dim == 3 ? n / 2 : 0);
    b[c] = 1; /* 1 A into the centre */
    ls_csc a = {0};
    if (ls_triplets_to_csc(&t, nu, &a) != 0)
        return 1;
    ls_triplets_free(&t);
#ifdef LS_HAVE_AMG
    if (pick) {
        printf("method=%s n=%d amd_fill_per_col=%.1f auto=%s\n", which, nu, ls_csc_fill_per_column(&a),
               ls_amg_preferred(&a, nu) ? "iterative-amg" : "direct");
        ls_csc_free(&a);
        free(b);
        return 0;
    }
#endif
    ls_solver *s = ls_solver_new(be, meth);
    if (!s)
        return 1;
    ls_solver_set_nodes(s, nu);
    double t0 = now_s();
    int st = ls_solver_analyze_factor(s, &a);
    double t1 = now_s();
    if (st == LS_SOLVER_OK)
        st = ls_solver_solve(s, b, 0);
    double t2 = now_s();
    if (st != LS_SOLVER_OK) {
        fprintf(stderr, "mesh3d_core: the %s solve failed (%d)\n", which, st);
        return 3;
    }
    const ls_solver_stats *ss = ls_solver_stats_of(s);
    printf("method=%s n=%d nnz=%d amd_fill_per_col=%.1f factor_s=%.3f solve_s=%.3f v_centre=%.17g", which, nu,
           ls_csc_nnz(&a), ls_csc_fill_per_column(&a), t1 - t0, t2 - t1, b[c]);
    if (meth == LS_METHOD_ITERATIVE_AMG)
        printf(" cg_iterations=%ld cg_residual=%.3g", ss->cg_iterations, ss->cg_residual);
    printf("\n");
    ls_solver_free(&s);
    ls_csc_free(&a);
    free(b);
    return 0;
}
