/* random_system.h — random sparse systems shaped like MNA matrices, in dense
 * and triplet form alike, for the solver tests (test_selinv.c, test_update.c):
 * conductances between random nodes, voltage-source branch rows with a zero
 * diagonal, and controlled-source entries off the symmetric pattern. */
#ifndef LS_TEST_RANDOM_SYSTEM_H
#define LS_TEST_RANDOM_SYSTEM_H

#include "mna/mna.h"
#include "base/rng.h"

#include <math.h>
#include <stdlib.h>

/* Stamp into a dense column-major n x n matrix and triplets alike. */
static inline void put(double *d, ls_triplets *t, int n, int i, int j, double v)
{
    if (i < 0 || j < 0)
        return;
    if (d) /* NULL: triplets only */
        d[i + (size_t)j * n] += v;
    if (t->nnz == t->cap) {
        t->cap = t->cap ? 2 * t->cap : 64;
        t->ti = realloc(t->ti, t->cap * sizeof *t->ti);
        t->tj = realloc(t->tj, t->cap * sizeof *t->tj);
        t->tx = realloc(t->tx, t->cap * sizeof *t->tx);
        if (!t->ti || !t->tj || !t->tx)
            abort();
    }
    t->ti[t->nnz] = i;
    t->tj[t->nnz] = j;
    t->tx[t->nnz++] = v;
}

/* A conductance g between a and b (-1: ground). */
static inline void conductance(double *d, ls_triplets *t, int n, int a, int b, double g)
{
    put(d, t, n, a, a, g);
    put(d, t, n, b, b, g);
    put(d, t, n, a, b, -g);
    put(d, t, n, b, a, -g);
}

/* One random network of `nodes` nodes and `vs` grounded voltage sources. */
static inline void random_system(ls_rng *r, int nodes, int vs, double *d, ls_triplets *t)
{
    int n = nodes + vs;
    for (int i = 0; i < nodes; i++) /* a spanning tree to ground keeps it regular */
        conductance(d, t, n, i, i == 0 ? -1 : (int)(ls_rng_uniform(r) * i), pow(10, -3 + 4 * ls_rng_uniform(r)));
    for (int e = 0; e < nodes; e++) { /* extra conductances */
        int a = (int)(ls_rng_uniform(r) * nodes), b = (int)(ls_rng_uniform(r) * nodes);
        if (a != b)
            conductance(d, t, n, a, b, pow(10, -3 + 4 * ls_rng_uniform(r)));
    }
    for (int k = 0; k < vs; k++) { /* V(node) = value: branch row, zero diagonal */
        int node = (int)(ls_rng_uniform(r) * nodes), br = nodes + k;
        put(d, t, n, node, br, 1);
        put(d, t, n, br, node, 1);
    }
    for (int c = 0; c < nodes / 4; c++) { /* a transconductance: off the symmetric pattern */
        int a = (int)(ls_rng_uniform(r) * nodes), b = (int)(ls_rng_uniform(r) * nodes);
        put(d, t, n, a, b, 0.01 * ls_rng_uniform(r));
    }
}

#endif
