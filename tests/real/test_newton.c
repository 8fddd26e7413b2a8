/* test_newton.c — the operating-point iteration of real parts, through the
 * library's internal interface: the matrix keeps one pattern while junctions
 * move and op-amp limits switch, so the symbolic analysis is done once
 * (solver statistics); the stamped system at the solution is the one the
 * linear analyses use (A x = b holds for the final x); op-amp stamps against
 * the rows written out by hand for each limit (MNA: a voltage-defined row per
 * output; KCL rows sum the currents leaving a node). */
#include "../cu_run.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "analysis/analysis.h"
#include "elab/elab.h"
#include "lang/parser.h"

typedef struct world {
    ls_arena a;
    ls_diags d;
    ls_program prog;
    ls_netlist nl;
    ls_op op;
    ls_outcome code;
} world;

/* Parse, elaborate and solve text with the given solver; the outcome is kept. */
static void load(world *w, const char *text, ls_solver_choice solver)
{
    memset(w, 0, sizeof *w);
    ls_arena_init(&w->a);
    ls_diags_init(&w->d, &w->a);
    w->code = LS_BAD_REQUEST;   /* until solved: the text did not load */
    if (ls_parse_string(&w->d, "t.stack", text, strlen(text), &w->prog) ||
        ls_elaborate(&w->prog, &w->d, NULL, 0, &w->nl))
        return;
    ls_options o = {.solver = solver, .derate = 1};
    w->code = ls_op_solve(&w->op, &w->nl, &o);
}

static void unload(world *w)
{
    ls_op_free(&w->op);
    ls_netlist_free(&w->nl);
    ls_diags_free(&w->d);
    ls_arena_free(&w->a);
}

static double volts(world *w, const char *name)
{
    int n = ls_netlist_find_node(&w->nl, name);
    return n < 0 ? NAN : w->op.v[n];
}

/* max |A x - b| / max |b| of the stored system at the stored solution. */
static double residual(world *w)
{
    int n = w->op.mna.n;
    double *y = calloc((size_t)n, sizeof *y);
    double r = 0, bn = 0;
    ls_csc_matvec(&w->op.mna.a, w->op.x, y, 0);
    for (int i = 0; i < n; i++) {
        r = fmax(r, fabs(y[i] - w->op.mna.b[i]));
        bn = fmax(bn, fabs(w->op.mna.b[i]));
    }
    free(y);
    return bn > 0 ? r / bn : r;
}

static const char *diodes =
    "ground gnd\nvoltage v1 gnd -> a 24 V\nresistor r1 a -> n1 470\n"
    "diode d1 n1 -> n2 isat=5n ideality=1.9\nled d2 n2 -> n3 vf=2V at=20mA\nzener d3 gnd -> n3 vz=3.3V rbulk=5\n"
    "diode d4 n3 -> n4 rbulk=2\nresistor r2 n4 -> gnd 100\n";

/* Sparse LU: many Newton iterations, one symbolic analysis. */
static void test_one_analysis_sparse(void)
{
    world w;
    load(&w, diodes, LS_CHOOSE_SPARSE);
    CU_ASSERT_EQUAL_FATAL(w.code, LS_DONE);
    const ls_solver_stats *st = ls_solver_stats_of(w.op.solver);
    CU_ASSERT(w.op.iterations > 3);
    CU_ASSERT_EQUAL(st->analyses, 1);
    CU_ASSERT(st->factorizations >= w.op.iterations);
    CU_ASSERT(residual(&w) < 1e-12);
    unload(&w);
}

static const char *limited =
    "ground gnd\nvoltage vs gnd -> vcc 5 V\nvoltage vi gnd -> in 3 V\n"
    "opamp u1 plus=in minus=fb out=out rails=gnd..vcc headroom=0.1V imax=20mA\n"
    "resistor rf out -> fb 10k\nresistor rg fb -> gnd 10k\nresistor rl out -> gnd 1k\n"
    "opamp u2 plus=in minus=o2 out=o2 rails=gnd..vcc imax=5mA\nresistor rl2 o2 -> gnd 100\n";

/* Limits switching (u1 to its rail, u2 to its current limit) keep the pattern. */
static void test_limits_keep_pattern(void)
{
    world w;
    load(&w, limited, LS_CHOOSE_SPARSE);
    CU_ASSERT_EQUAL_FATAL(w.code, LS_DONE);
    const ls_solver_stats *st = ls_solver_stats_of(w.op.solver);
    int u1 = ls_netlist_find_part(&w.nl, "u1"), u2 = ls_netlist_find_part(&w.nl, "u2");
    CU_ASSERT_EQUAL(ls_run_state(&w.op.run, &w.nl.parts[u1])->state, LS_LIM_RAIL_HIGH);
    CU_ASSERT_EQUAL(ls_run_state(&w.op.run, &w.nl.parts[u2])->state, LS_LIM_CURRENT_SOURCE);
    CU_ASSERT_EQUAL(st->analyses, 1);
    /* rail minus headroom; imax x R (Ohm's law) */
    CU_ASSERT_DOUBLE_EQUAL(volts(&w, "out"), 4.9, 1e-12);
    CU_ASSERT_DOUBLE_EQUAL(volts(&w, "o2"), 5e-3 * 100, 1e-12);
    CU_ASSERT(residual(&w) < 1e-12);
    unload(&w);
}

/* Entry (i, j) of the compressed matrix. */
static double entry(const ls_csc *a, int i, int j)
{
    for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++)
        if (a->rowind[p] == i)
            return a->val[p];
    return 0;
}

/* Two operating points on one netlist: each keeps its parts' states and
 * values in its own run, and the netlist's records do not change.  Op a
 * drives in at 3 V (u1's gain 1 + rf/rg = 2, the non-inverting amplifier's
 * closed form, asks 6 V: held at the rail, 5 V - 0.1 V headroom); op b sets
 * vi to 1 V for itself (out = 2 V, linear; u2's follower would put 1 V across
 * 100 ohm, 10 mA > imax: held at 5 mA x 100 ohm = 0.5 V by Ohm's law). */
static void test_two_runs_one_netlist(void)
{
    world w;
    load(&w, limited, LS_CHOOSE_SPARSE);
    CU_ASSERT_EQUAL_FATAL(w.code, LS_DONE);
    size_t size = (size_t)w.nl.nparts * sizeof *w.nl.parts;
    ls_part *before = malloc(size);
    CU_ASSERT_FATAL(before != NULL);
    memcpy(before, w.nl.parts, size);
    int vi = ls_netlist_find_part(&w.nl, "vi"), u1 = ls_netlist_find_part(&w.nl, "u1");
    int u2 = ls_netlist_find_part(&w.nl, "u2"), out = ls_netlist_find_node(&w.nl, "out");
    int o2 = ls_netlist_find_node(&w.nl, "o2");
    ls_op b;
    ls_options o = {.solver = LS_CHOOSE_SPARSE, .derate = 1};
    CU_ASSERT_EQUAL_FATAL(ls_op_solve(&b, &w.nl, &o), LS_DONE);
    CU_ASSERT_EQUAL_FATAL(ls_run_set_value(&b.run, vi, 1.0), 0);
    CU_ASSERT_EQUAL_FATAL(ls_op_resolve(&b), LS_DONE);
    CU_ASSERT_DOUBLE_EQUAL(b.v[out], 2.0, 1e-12);
    CU_ASSERT_DOUBLE_EQUAL(b.v[o2], 0.5, 1e-12);
    CU_ASSERT_EQUAL(ls_run_state(&b.run, &w.nl.parts[u1])->state, LS_LIM_NONE);
    CU_ASSERT_EQUAL(ls_run_state(&b.run, &w.nl.parts[u2])->state, LS_LIM_CURRENT_SOURCE);
    CU_ASSERT_EQUAL(ls_run_value(&b.run, &w.nl.parts[vi]), 1.0);
    /* a is as it was: its states, its values, its solution */
    CU_ASSERT_EQUAL(ls_run_state(&w.op.run, &w.nl.parts[u1])->state, LS_LIM_RAIL_HIGH);
    CU_ASSERT_EQUAL(ls_run_value(&w.op.run, &w.nl.parts[vi]), 3.0);
    CU_ASSERT_EQUAL_FATAL(ls_op_resolve(&w.op), LS_DONE);
    CU_ASSERT_DOUBLE_EQUAL(volts(&w, "out"), 4.9, 1e-12);
    CU_ASSERT_EQUAL(memcmp(before, w.nl.parts, size), 0);
    ls_op_free(&b);
    free(before);
    unload(&w);
}

/* The clamped row by hand: V(out) - V(vcc) = -headroom, the supply entry in
 * vcc's KCL row (the output current leaves vcc while sourcing). */
static void test_clamp_row(void)
{
    world w;
    load(&w, limited, LS_CHOOSE_DENSE);
    CU_ASSERT_EQUAL_FATAL(w.code, LS_DONE);
    const ls_part *u1 = &w.nl.parts[ls_netlist_find_part(&w.nl, "u1")];
    int k = u1->branch, out = ls_netlist_find_node(&w.nl, "out") - 1, vcc = ls_netlist_find_node(&w.nl, "vcc") - 1;
    int in = ls_netlist_find_node(&w.nl, "in") - 1, fb = ls_netlist_find_node(&w.nl, "fb") - 1;
    CU_ASSERT_DOUBLE_EQUAL(entry(&w.op.mna.a, k, out), 1, 0);
    CU_ASSERT_DOUBLE_EQUAL(entry(&w.op.mna.a, k, vcc), -1, 0);
    CU_ASSERT_DOUBLE_EQUAL(entry(&w.op.mna.a, k, in), 0, 0);
    CU_ASSERT_DOUBLE_EQUAL(entry(&w.op.mna.a, k, fb), 0, 0);
    CU_ASSERT_DOUBLE_EQUAL(w.op.mna.b[k], -0.1, 1e-15);
    CU_ASSERT_DOUBLE_EQUAL(entry(&w.op.mna.a, vcc, k), 1, 0);
    CU_ASSERT_DOUBLE_EQUAL(entry(&w.op.mna.a, out, k), -1, 0);
    unload(&w);
}

/* No convergence is LS_UNSOLVABLE with an error at the part. */
static void test_unsolvable_names_part(void)
{
    world w;
    load(&w, "ground gnd\nvoltage v1 gnd -> a 9 V\nled bare a -> gnd vf=2V\n", LS_CHOOSE_AUTO);
    CU_ASSERT_EQUAL(w.code, LS_UNSOLVABLE);
    bool named = false;
    for (int i = 0; i < w.d.n; i++)
        named |= w.d.items[i].sev == LS_SEV_ERROR && strstr(w.d.items[i].msg, "'bare'") && w.d.items[i].loc.file >= 0;
    CU_ASSERT(named);
    unload(&w);
}

/* ls_op_resolve after a value change iterates again from the last solution:
 * the LED current follows Ohm's law on the resistor at the new supply. */
static void test_resolve(void)
{
    world w;
    load(&w, "ground gnd\nvoltage v1 gnd -> a 5 V\nresistor r1 a -> k 150\nled d1 k -> gnd vf=2V at=20mA\n",
         LS_CHOOSE_AUTO);
    CU_ASSERT_EQUAL_FATAL(w.code, LS_DONE);
    int v1 = ls_netlist_find_part(&w.nl, "v1"), r1 = ls_netlist_find_part(&w.nl, "r1");
    w.nl.parts[v1].value = 12;
    CU_ASSERT_EQUAL_FATAL(ls_op_resolve(&w.op), LS_DONE);
    CU_ASSERT_DOUBLE_EQUAL(w.op.ipart[r1], (12 - volts(&w, "k")) / 150, 1e-15);
    CU_ASSERT(volts(&w, "k") > 2.0 && volts(&w, "k") < 2.2);
    CU_ASSERT(residual(&w) < 1e-12);
    unload(&w);
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"one symbolic analysis (sparse)", test_one_analysis_sparse},
        {"limits keep the pattern", test_limits_keep_pattern},
        {"two runs on one netlist", test_two_runs_one_netlist},
        {"clamped row by hand", test_clamp_row},
        {"unsolvable names the part", test_unsolvable_names_part},
        {"resolve iterates", test_resolve},
    };
    return ls_cu_run("newton", NULL, NULL, cases, LS_CU_COUNT(cases));
}
