/* test_sweep_reach.c — a sweep's points are set in the sweeper's run, never in
 * the netlist (src/analysis/sweep.c, src/netlist/run.h).
 *
 * The outside reference is the elaborator itself on the circuit read afresh
 * with the let set (`--set LET=x`, here ls_load.sets): at every point the
 * sweeper's solution must give the same report — every node voltage, every
 * part's current, voltage and power, every port's report (open, loaded,
 * sag, zout, zin, budget, verdict), every ADC reading and every check (its
 * value, its accepted range, pass or fail) — as that fresh elaboration,
 * for each kind of thing a let can reach beyond a main value: a secondary
 * option (a source's rint=, an ADC's ref=), a port's budget=, a range end
 * (an op-amp's fixed upper rail, saturating at some points) and a constant
 * inside an expect's quantity.  Points after the first of a chain continue
 * from the last one's factor (a numeric refactorization), so values agree
 * to 1e-9 relative; verdicts, codes, limits in force and pass/fail exactly.
 * And the netlist the sweeper read is the same, byte for byte, after the
 * sweep as before it (the compiler holds the sweeper to a const netlist;
 * this holds the run's readers to it). */
#include "../../cu_run.h"
#include <math.h>
#include <string.h>

#include "circuit.h"
#include "analysis/sweep.h"
#include "analysis/newton.h"
#include "analysis/quantity.h"
#include "parts/parts.h"

/* A divider into a follower with a fixed upper rail, an ADC on its output
 * and a port with a budget: every let below reaches something other than a
 * main value. */
static const char circuit[] =
    "let trim = 0.5 ohm\n"     /* a secondary option: the source's rint= */
    "let vr = 3 V\n"           /* a range end: the op-amp's upper rail */
    "let bud = 2 mV\n"         /* a port's budget= */
    "let lim = 1.2\n"          /* a constant inside an expect's quantity */
    "let aref = 2.5 V\n"       /* a secondary option of an ADC: ref= */
    "ground gnd\n"
    "voltage  vs   gnd -> top  5 V  rint=trim\n"
    "resistor r1   top -> mid  10k\n"
    "resistor r2   mid -> gnd  10k\n"
    "port     p_mid mid -> buf_in budget=bud\n"
    "resistor rl   buf_in -> gnd 1M\n"
    "opamp    u1   plus=buf_in minus=out out=out gain=100k rails=0V..vr headroom=0.1V\n"
    "adc      a1   in=out ref=aref bits=10 rin=1M\n"
    "expect out = lim * 2 V within 5%\n"
    "expect a1.code >= 800\n";

/* The circuit read with LET=x set (let NULL: as written), solved.  0, or -1. */
static int load(ls_circuit *c, const char *let, double x, ls_letdeps *follow)
{
    char set[96];
    const char *sets[1] = {set};
    if (let)
        snprintf(set, sizeof set, "%s=%.17g", let, x);
    ls_circuit_init(c);
    ls_load how = {.name = "reach.stack", .text = circuit, .len = strlen(circuit), .sets = let ? sets : NULL,
                   .nsets = let ? 1 : 0, .follow = follow};
    if (ls_circuit_load(c, &how) != LS_LOADED)
        return -1;
    return 0;
}

static bool close_to(double a, double b)
{
    if (isnan(a) || isnan(b))
        return isnan(a) && isnan(b);
    if (isinf(a) || isinf(b))
        return a == b;
    return fabs(a - b) <= 1e-9 * fmax(fabs(a), fabs(b)) + 1e-15;
}

#define SAME(a, b, what, i)                                                                            \
    do {                                                                                               \
        if (!close_to((a), (b)))                                                                       \
            fprintf(stderr, "  %s of %d: sweep %.17g, fresh %.17g\n", what, i, (double)(a), (double)(b)); \
        CU_ASSERT(close_to((a), (b)));                                                                 \
    } while (0)

/* Does the sweeper's solution s (its netlist sn) report what the fresh
 * elaboration's f (netlist fn) does? */
static void same_report(ls_op *s, ls_op *f)
{
    const ls_netlist *sn = s->nl, *fn = f->nl;
    CU_ASSERT_FATAL(sn->nnodes == fn->nnodes && sn->nparts == fn->nparts && sn->nchecks == fn->nchecks);
    for (int i = 0; i < sn->nnodes; i++)
        SAME(s->v[i], f->v[i], "node voltage", i);
    for (int i = 0; i < sn->nparts; i++) {
        SAME(s->ipart[i], f->ipart[i], "part current", i);
        SAME(s->vpart[i], f->vpart[i], "part voltage", i);
        SAME(s->ppart[i], f->ppart[i], "part power", i);
        const ls_part *p = &sn->parts[i];
        if (p->kind->is_port) {
            const ls_port_result *a = ls_op_port(s, i), *b = ls_op_port(f, i);
            CU_ASSERT_FATAL(a && b);
            SAME(a->open, b->open, "port open", i);
            SAME(a->loaded, b->loaded, "port loaded", i);
            SAME(a->sag, b->sag, "port sag", i);
            SAME(a->zout, b->zout, "port zout", i);
            SAME(a->zin, b->zin, "port zin", i);
            SAME(a->budget, b->budget, "port budget", i);
            CU_ASSERT_EQUAL(a->verdict, b->verdict);
            CU_ASSERT_EQUAL(a->budget_from, b->budget_from);
        }
        if (p->kind->is_adc) {
            ls_adc_result a, b;
            CU_ASSERT_FATAL(ls_op_adc(s, i, &a) == 0 && ls_op_adc(f, i, &b) == 0);
            CU_ASSERT_EQUAL(a.code, b.code);
            SAME(a.lsb, b.lsb, "adc lsb", i);
            SAME(a.error_lsb, b.error_lsb, "adc error", i);
            SAME(a.v_open, b.v_open, "adc unloaded", i);
        }
        if (p->kind->is_opamp)
            CU_ASSERT_EQUAL(ls_run_state(&s->run, p)->state, ls_run_state(&f->run, &fn->parts[i])->state);
    }
    for (int i = 0; i < sn->nchecks; i++) {
        ls_check_result a, b;
        ls_check_eval(s, &sn->checks[i], &a);
        ls_check_eval(f, &fn->checks[i], &b);
        SAME(a.value, b.value, "check value", i);
        SAME(a.lo, b.lo, "check low limit", i);
        SAME(a.hi, b.hi, "check high limit", i);
        CU_ASSERT_EQUAL(a.pass, b.pass);
    }
}

/* A copy of everything in nl that a let can reach (lets, main values,
 * options, ranges, budgets, the constants of the checks' quantities), to
 * compare before and after a sweep. */
typedef struct snapshot {
    double v[4096];
    int n;
} snapshot;

static void put(snapshot *s, double v)
{
    CU_ASSERT_FATAL(s->n < (int)(sizeof s->v / sizeof *s->v));
    s->v[s->n++] = v;
}

static void put_q(snapshot *s, const ls_q *q)
{
    if (!q)
        return;
    if (q->kind == Q_CONST)
        put(s, q->value);
    put_q(s, q->a);
    put_q(s, q->b);
    for (int i = 0; i < q->nargs; i++)
        put_q(s, q->args[i]);
}

static void take(snapshot *s, const ls_netlist *nl)
{
    s->n = 0;
    for (int i = 0; i < nl->nparams; i++)
        put(s, nl->params[i].value);
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        put(s, p->value);
        for (int k = 0; p->opt && k < LS_MAX_OPTS; k++)
            put(s, p->opt[k]);
        for (int k = 0; p->range && k < LS_MAX_RANGES; k++)
            for (int e = 0; e < 2; e++)
                put(s, p->range[k][e].volts);
    }
    for (int i = 0; i < nl->nbudgets; i++)
        put(s, nl->budgets[i].value);
    for (int i = 0; i < nl->nchecks; i++) {
        put_q(s, nl->checks[i].lhs);
        put_q(s, nl->checks[i].rhs);
        put_q(s, nl->checks[i].rhs2);
        put_q(s, nl->checks[i].within);
    }
}

/* Sweep `let` over xs[0..n-1] in one chain (the first point fresh, the rest
 * continuing) and compare each point with a fresh elaboration; the
 * netlist must be unchanged after.  `reached` names what the let must reach. */
static void sweep_against_fresh(const char *let, const double *xs, int n, ls_ld_kind reached)
{
    ls_letdeps deps;
    ls_letdeps_init(&deps, let);
    ls_circuit base;
    CU_ASSERT_FATAL(load(&base, NULL, 0, &deps) == 0);
    CU_ASSERT_FATAL(!deps.structural && !deps.nomem && deps.root >= 0);
    bool found = false;
    for (int i = 0; i < deps.n; i++)
        found |= deps.e[i].kind == reached;
    CU_ASSERT(found);   /* the let reaches what this case is about */
    const ls_netlist *nl = &base.nl;   /* the sweeper is given a const netlist */
    static snapshot before, after;
    take(&before, nl);
    ls_sweeper w;
    ls_options o = {0};
    ls_sweeper_init(&w, nl, &deps, &o);
    for (int i = 0; i < n; i++) {
        ls_outcome out = ls_sweeper_solve(&w, xs[i], i == 0);
        CU_ASSERT_EQUAL_FATAL(out, LS_DONE);
        ls_circuit fresh;
        CU_ASSERT_FATAL(load(&fresh, let, xs[i], NULL) == 0);
        CU_ASSERT_FATAL(ls_circuit_solve_op(&fresh, &o) == LS_DONE);
        same_report(&w.op, &fresh.op);
        ls_circuit_release(&fresh);
    }
    ls_sweeper_free(&w);
    take(&after, nl);
    CU_ASSERT_EQUAL(before.n, after.n);
    CU_ASSERT(memcmp(before.v, after.v, (size_t)before.n * sizeof *before.v) == 0);
    ls_circuit_release(&base);
    ls_letdeps_free(&deps);
}

/* rint= of the supply from half an ohm to 3 kohm: the tap sags. */
static void test_secondary_option(void)
{
    const double xs[] = {0.5, 7, 120, 3000, 42};
    sweep_against_fresh("trim", xs, 5, LD_OPT);
}

/* ref= of the ADC: its LSB, its code, the budget of half an LSB is not
 * used (the port has its own) but the code check flips. */
static void test_adc_option(void)
{
    const double xs[] = {2.5, 3.3, 2.0, 4.096};
    sweep_against_fresh("aref", xs, 4, LD_OPT);
}

/* budget= of the port across the sag (12.4 mV): loading below, ok above. */
static void test_budget(void)
{
    const double xs[] = {2e-3, 12e-3, 13e-3, 50e-3, 1e-3};
    sweep_against_fresh("bud", xs, 5, LD_BUDGET);
}

/* The fixed upper rail: below the follower's input plus headroom the
 * output sits at the rail (a limit in force), above it follows. */
static void test_range_end(void)
{
    const double xs[] = {3, 1.5, 2.2, 2.6, 5};
    sweep_against_fresh("vr", xs, 5, LD_RANGE);
}

/* The constant inside `expect out = lim * 2 V within 5%`: its limits move,
 * and it passes only near lim = 1.24. */
static void test_check_constant(void)
{
    const double xs[] = {1.2, 1.0, 1.24, 1.3, 1.25};
    sweep_against_fresh("lim", xs, 5, LD_QCONST);
}

/* rint= to zero makes the source's edge voltage-defined: a shape the
 * elaborated topology checks did not see, so that point is elaborated
 * afresh (the sweeper says so), never solved in the old shape. */
static void test_shape_change(void)
{
    ls_letdeps deps;
    ls_letdeps_init(&deps, "trim");
    ls_circuit base;
    CU_ASSERT_FATAL(load(&base, NULL, 0, &deps) == 0);
    ls_sweeper w;
    ls_options o = {0};
    ls_sweeper_init(&w, &base.nl, &deps, &o);
    CU_ASSERT_EQUAL(ls_sweeper_solve(&w, 1, true), LS_DONE);
    CU_ASSERT_FALSE(w.restructured);
    CU_ASSERT_EQUAL(ls_sweeper_solve(&w, 0, false), LS_REELABORATE);
    CU_ASSERT_TRUE(w.restructured);
    ls_sweeper_free(&w);
    ls_circuit_release(&base);
    ls_letdeps_free(&deps);
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"a let into a secondary option (rint=)", test_secondary_option},
        {"a let into an adc's ref=", test_adc_option},
        {"a let into a port's budget=", test_budget},
        {"a let into a range end (rails=)", test_range_end},
        {"a let inside an expect's quantity", test_check_constant},
        {"a let that changes a part's shape", test_shape_change},
    };
    return ls_cu_run("sweep-reach", NULL, NULL, cases, LS_CU_COUNT(cases));
}
