/* test_acc_merge.c — error bounds from the refinement's last residual
 * (src/analysis/accuracy.c, docs/accuracy.md "Error bounds").
 *
 * When the refinement's last correction moved every unknown by less than a
 * millionth of a unit of its last place, the bounds start from that step's
 * residual and add how far x + tail moved since, instead of summing the
 * residual once more over the parts.  The reference is the bounds from that
 * extra pass at the final x + tail (the way every bound was computed
 * before): on circuits of each way the bounds are taken — per result (up to
 * 400 unknowns), per node by one solve (a large network of resistances and
 * grounded sources), and by the norm estimate (a large circuit with an
 * op-amp) — the kept residual must have been used, and every node and part
 * bound must agree with the reference's to 1e-6 relative (the shift added
 * is at most 1e-6 of the eps·|value| each bound already carries).  That
 * every bound holds the true error is checked against exact rational
 * solutions by tests/ref/merged_bounds.py and tests/ref/exact_accuracy.py. */
#include "../../cu_run.h"
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "circuit.h"
#include "analysis/accuracy.h"

/* A k x k grid of resistors of 1.00 .. 1.99 ohm (fixed pattern) fed by a
 * grounded 1 V source at one corner, grounded at the other; with an op-amp
 * buffer of the middle node driving a load when opamp is set (the estimate's
 * path).  Returns the text (malloc'd). */
static char *grid_text(int k, bool opamp)
{
    size_t cap = (size_t)k * (size_t)k * 96 + 512, len = 0;
    char *t = malloc(cap);
    if (!t)
        return NULL;
    len = (size_t)snprintf(t, cap, "ground g\nvoltage vin g -> n0_0 1\n");
    for (int i = 0; i < k; i++)
        for (int j = 0; j < k; j++) {
            char a[32], b[32], c[32];
            snprintf(a, sizeof a, i == k - 1 && j == k - 1 ? "g" : "n%d_%d", i, j);
            snprintf(b, sizeof b, i == k - 1 && j + 1 == k - 1 ? "g" : "n%d_%d", i, j + 1);
            snprintf(c, sizeof c, i + 1 == k - 1 && j == k - 1 ? "g" : "n%d_%d", i + 1, j);
            if (j + 1 < k)
                len += (size_t)snprintf(t + len, cap - len, "resistor rh%d_%d %s -> %s 1.%02d\n", i, j, a, b,
                                        (i * 7 + j * 3) % 100);
            if (i + 1 < k)
                len += (size_t)snprintf(t + len, cap - len, "resistor rv%d_%d %s -> %s 1.%02d\n", i, j, a, c,
                                        (i * 5 + j * 11) % 100);
        }
    if (opamp)
        len += (size_t)snprintf(t + len, cap - len,
                                "opamp ub plus=n%d_%d minus=bo out=bo gain=200k rout=50\nresistor rload bo -> g 1k\n",
                                k / 2, k / 2);
    return t;
}

/* Within 1e-6 relative (NaN with NaN, infinity with itself). */
static bool agree(double a, double b)
{
    if (isnan(a) || isnan(b))
        return isnan(a) && isnan(b);
    if (isinf(a) || isinf(b))
        return a == b;
    return fabs(a - b) <= 1e-6 * fmax(fabs(a), fabs(b));
}

/* Solve text; the bounds from the kept residual against those from a pass
 * over the parts at the final x + tail.  how: the accuracy.bounds word the
 * circuit must take ("per-result", "per-node", "estimate"). */
static void check(const char *text, const char *how)
{
    ls_circuit c;
    ls_circuit_init(&c);
    ls_load load = {.name = "merge.stack", .text = text, .len = strlen(text)};
    CU_ASSERT_FATAL(ls_circuit_load(&c, &load) == LS_LOADED);
    ls_options o = {.solver = LS_CHOOSE_AUTO, .derate = 1};
    CU_ASSERT_FATAL(ls_circuit_solve_op(&c, &o) == LS_DONE);
    ls_op *op = &c.op;
    CU_ASSERT_FATAL(ls_acc_bounds(op) == 0);
    ls_accuracy *a = &op->acc;
    CU_ASSERT(a->have_bounds && a->reliable);
    CU_ASSERT(a->merged);         /* the kept residual was used */
    CU_ASSERT(a->last == NULL);   /* ... once */
    const char *got = a->per_node ? "per-node" : a->estimated ? "estimate" : "per-result";
    if (strcmp(got, how) != 0)
        fprintf(stderr, "  bounds taken %s, expected %s\n", got, how);
    CU_ASSERT(strcmp(got, how) == 0);
    int nn = c.nl.nnodes, np = c.nl.nparts;
    double *kept = malloc(((size_t)nn + (size_t)np) * sizeof *kept);
    CU_ASSERT_FATAL(kept != NULL);
    memcpy(kept, a->node_bound, (size_t)nn * sizeof *kept);
    memcpy(kept + nn, a->part_bound, (size_t)np * sizeof *kept);
    a->have_bounds = false; /* again, now through a pass over the parts */
    CU_ASSERT_FATAL(ls_acc_bounds(op) == 0);
    CU_ASSERT(!a->merged);
    int differ = 0, finite = 0;
    for (int i = 0; i < nn + np; i++) {
        double full = i < nn ? a->node_bound[i] : a->part_bound[i - nn];
        finite += isfinite(full) && full > 0;
        if (!agree(kept[i], full)) {
            if (differ++ < 5)
                fprintf(stderr, "  %s %d: from the kept residual %.17g, from a pass %.17g\n",
                        i < nn ? "node" : "part", i < nn ? i : i - nn, kept[i], full);
        }
    }
    CU_ASSERT(differ == 0);
    CU_ASSERT(finite > (nn + np) / 2);
    free(kept);
    ls_circuit_release(&c);
}

static void test_per_result(void)
{
    char *t = grid_text(8, false); /* 64 nodes */
    CU_ASSERT_FATAL(t != NULL);
    check(t, "per-result");
    free(t);
}

static void test_per_node(void)
{
    char *t = grid_text(25, false); /* 625 nodes */
    CU_ASSERT_FATAL(t != NULL);
    check(t, "per-node");
    free(t);
}

static void test_estimate(void)
{
    char *t = grid_text(25, true); /* an op-amp: columns of A^-1 not one-signed */
    CU_ASSERT_FATAL(t != NULL);
    check(t, "estimate");
    free(t);
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"bounds per result from the kept residual", test_per_result},
        {"bounds per node from the kept residual", test_per_node},
        {"estimated bounds from the kept residual", test_estimate},
    };
    return ls_cu_run("bounds from the refinement's last residual", NULL, NULL, cases, LS_CU_COUNT(cases));
}
