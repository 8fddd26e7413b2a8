/* newton.c — the operating point of circuits with real parts.
 *
 * One loop serves two kinds of part.  Junctions (diode, led, zener) and
 * self-heating thermistors are nonlinear: each is stamped as its companion
 * model at a linearization point, the system is solved, and the point moves
 * towards the new solution (Newton-Raphson, with junction-voltage limiting as
 * the damping) until no part moves.  Op-amps with limits are piecewise
 * linear: each has a limit in force (none, a rail, the current limit) and the
 * loop switches limits that the solution contradicts (an active-set
 * iteration) until every one is consistent.  When plain Newton does not
 * settle, shrinking junction shunts (a conductance across every junction,
 * shrunk decade by decade) and then ramping the sources (every independent
 * source raised from zero) are tried.  Every solve reuses the one solver: the pattern of the
 * matrix does not change, so its symbolic analysis is done once. */
#include "analysis/newton.h"

#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "base/fmt.h"

#define NEWTON_MAX 150        /* iterations per attempt */
#define TOTAL_MAX 6000        /* solves over every attempt: then it gives up */
#define GMIN_START 1e-2       /* S: first shunt of gmin stepping */
#define GMIN_STOP 1e-13       /* S: below this the shunt is dropped */
#define SOURCE_STEP_MIN 1e-4  /* smallest source-stepping increment */
#define RELEASES_MAX 3        /* lets go of a rail this often: positive feedback */
#define JUNCTION_VMAX 1e4     /* V: more across a junction than this is no solution */
#define POLISH_RCOND 1e-11    /* the reciprocal condition a solution without LS_GMIN must keep */

typedef enum { RUN_OK, RUN_NOCONV, RUN_SINGULAR, RUN_NOMEM } run_status;

/* Saved analysis state of every part (for restarting a fall-back). */
typedef struct saved {
    int *state, *side;
    double *op_v, *op_t;
} saved;

/* Is part p nonlinear as configured? */
static bool nonlinear(const ls_part *p)
{
    return p->kind->is_nonlinear && p->kind->is_nonlinear(p);
}

bool ls_newton_needed(const ls_netlist *nl)
{
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (nonlinear(p) || (p->kind->is_opamp && ls_opamp_limited(p)))
            return true;
    }
    return false;
}

bool ls_newton_settled(const ls_op *op)
{
    const ls_netlist *nl = op->nl;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (nonlinear(p))
            return false;
        if (!p->kind->is_opamp)
            continue;
        ls_part_run *ps = ls_run_state(&op->run, p);
        if (ps->state == LS_LIM_NONE && !ps->probed && ls_part_has(p, ls_kind_opt(p->kind, "rails")))
            return false; /* run() would try it at its rail first */
        if (!ls_opamp_limited(p))
            continue;
        int side, next = ls_opamp_next(p, &op->run, op->x, op->v, &side);
        if (next != ps->state || side != ps->side)
            return false;
    }
    return true;
}

void ls_newton_init(ls_run *r)
{
    const ls_netlist *nl = r->nl;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (p->slot < 0)
            continue; /* a part without analysis state */
        ls_run_state(r, p)->state = LS_LIM_NONE;
        ls_run_state(r, p)->side = 0;
        ls_run_state(r, p)->open_loop = false;
        ls_run_state(r, p)->probed = false;
        ls_run_state(r, p)->probing = false;
        ls_run_state(r, p)->releases = 0;
        ls_run_state(r, p)->shunt_s = 0;
        ls_run_state(r, p)->src_cut = 0;
        if (p->kind->init)
            p->kind->init(p, r);
    }
}

static void saved_free(saved *s);

/* Copy every part's state into s (allocated here; saved_free frees). 0 ok,
 * -1 no memory (then nothing is left allocated in s). */
static int save(const ls_run *r, saved *s)
{
    const ls_netlist *nl = r->nl;
    size_t n = (size_t)(nl->nparts ? nl->nparts : 1);
    s->state = malloc(n * sizeof *s->state);
    s->side = malloc(n * sizeof *s->side);
    s->op_v = malloc(n * sizeof *s->op_v);
    s->op_t = malloc(n * sizeof *s->op_t);
    if (!s->state || !s->side || !s->op_v || !s->op_t) {
        saved_free(s);
        return -1;
    }
    for (int i = 0; i < nl->nparts; i++) {
        if (nl->parts[i].slot < 0)
            continue;
        s->state[i] = ls_run_state(r, &nl->parts[i])->state;
        s->side[i] = ls_run_state(r, &nl->parts[i])->side;
        s->op_v[i] = ls_run_state(r, &nl->parts[i])->op_v;
        s->op_t[i] = ls_run_state(r, &nl->parts[i])->op_t;
    }
    return 0;
}

/* Put the states of s back. */
static void restore(const ls_run *r, const saved *s)
{
    const ls_netlist *nl = r->nl;
    for (int i = 0; i < nl->nparts; i++) {
        if (nl->parts[i].slot < 0)
            continue;
        ls_run_state(r, &nl->parts[i])->state = s->state[i];
        ls_run_state(r, &nl->parts[i])->side = s->side[i];
        ls_run_state(r, &nl->parts[i])->op_v = s->op_v[i];
        ls_run_state(r, &nl->parts[i])->op_t = s->op_t[i];
        if (ls_run_state(r, &nl->parts[i])->open_loop && ls_run_state(r, &nl->parts[i])->state == LS_LIM_NONE)
            ls_run_state(r, &nl->parts[i])->state = LS_LIM_RAIL_HIGH; /* a comparator is never free */
    }
}

/* Free s (accepts a partly allocated one). */
static void saved_free(saved *s)
{
    free(s->state);
    free(s->side);
    free(s->op_v);
    free(s->op_t);
    memset(s, 0, sizeof *s);
}

/* The gmin-stepping shunt (S) across every junction. */
static void set_shunt(const ls_run *r, double g)
{
    const ls_netlist *nl = r->nl;
    for (int i = 0; i < nl->nparts; i++)
        if (nl->parts[i].slot >= 0)
            ls_run_state(r, &nl->parts[i])->shunt_s = g;
}

/* Every independent source at the fraction a of its value. */
static void set_source_scale(const ls_run *r, double a)
{
    const ls_netlist *nl = r->nl;
    for (int i = 0; i < nl->nparts; i++)
        if (nl->parts[i].slot >= 0)
            ls_run_state(r, &nl->parts[i])->src_cut = 1 - a;
}

/* Move every nonlinear part's linearization point; marks the ones that moved
 * in `moving` (may be NULL).  Returns how many have not settled. */
static int update_nonlinear(ls_op *op, bool *moving)
{
    const ls_netlist *nl = op->nl;
    int n = 0;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        bool still = true;
        if (nonlinear(p))
            still = p->kind->update(p, &op->run, op->x);
        if (moving)
            moving[i] = !still;
        n += !still;
    }
    return n;
}

/* Switch op-amp limits that the solution contradicts.  With one_at_a_time
 * only the first inconsistent op-amp changes (after the whole set has
 * cycled).  Marks the changed ones in `moving`; returns how many changed. */
static int update_opamps(ls_op *op, bool one_at_a_time, bool *moving)
{
    const ls_netlist *nl = op->nl;
    int n = 0;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (!p->kind->is_opamp || !ls_opamp_limited(p))
            continue;
        int side, next = ls_opamp_next(p, &op->run, op->x, op->v, &side);
        if (next == ls_run_state(&op->run, p)->state && side == ls_run_state(&op->run, p)->side)
            continue;
        if (one_at_a_time && n)
            continue;
        bool rail = ls_run_state(&op->run, p)->state == LS_LIM_RAIL_HIGH || ls_run_state(&op->run, p)->state == LS_LIM_RAIL_LOW;
        bool counts = rail && next == LS_LIM_NONE && !ls_run_state(&op->run, p)->probing;
        ls_run_state(&op->run, p)->probing = false;
        if (counts && ++ls_run_state(&op->run, p)->releases >= RELEASES_MAX && ls_part_has(p, ls_kind_opt(p->kind, "rails"))) {
            /* Let go of a rail again and again: the free solution lies beyond the
             * rail while the rail pushes the other way, which is positive
             * feedback.  The output belongs at the rail its drive points to. */
            ls_run_state(&op->run, p)->open_loop = true;
            next = ls_run_state(&op->run, p)->state == LS_LIM_RAIL_HIGH ? LS_LIM_RAIL_LOW : LS_LIM_RAIL_HIGH;
        }
        ls_run_state(&op->run, p)->state = next;
        ls_run_state(&op->run, p)->side = side;
        if (moving)
            moving[i] = true;
        n++;
    }
    return n;
}

/* An ideal op-amp with rails, free, not yet found open-loop. */
static bool open_loop_candidate(const ls_part *p, const ls_run *r)
{
    return p->kind->is_opamp && !p->has_value && ls_part_has(p, ls_kind_opt(p->kind, "rails")) &&
           ls_run_state(r, p)->state == LS_LIM_NONE && !ls_run_state(r, p)->open_loop;
}

bool ls_newton_open_loop(ls_op *op, int col)
{
    const ls_netlist *nl = op->nl;
    int pick = -1;
    if (col >= op->mna.nn && col < op->mna.n && open_loop_candidate(&nl->parts[op->mna.branch_part[col - op->mna.nn]], &op->run))
        pick = op->mna.branch_part[col - op->mna.nn];
    for (int i = 0; i < nl->nparts && pick < 0; i++)
        if (open_loop_candidate(&nl->parts[i], &op->run))
            pick = i;
    if (pick < 0)
        return false;
    ls_run_state(&op->run, &nl->parts[pick])->open_loop = true;
    ls_run_state(&op->run, &nl->parts[pick])->state = LS_LIM_RAIL_HIGH;
    return true;
}

/* One solve at the present states; a singular system with a free comparator
 * in it holds that at a rail and tries again. */
static run_status step(ls_op *op)
{
    int st = ls_op_step(op);
    while (st == LS_SOLVER_SINGULAR && ls_newton_open_loop(op, ls_solver_stats_of(op->solver)->bad_column))
        st = ls_op_step(op);
    if (st == LS_SOLVER_OK)
        return RUN_OK;
    return st == LS_SOLVER_SINGULAR ? RUN_SINGULAR : st == LS_SOLVER_NOMEM ? RUN_NOMEM : RUN_SINGULAR;
}

/* A free output with rails is tried once at its upper rail: with negative
 * feedback the rail contradicts the solution and is released at once; with
 * positive feedback (a comparator with hysteresis) the rail is consistent and
 * kept, since the free solution there is a balance no real output holds.
 * Returns how many op-amps were sent to try. */
static int probe_rails(ls_op *op, bool *moving)
{
    const ls_netlist *nl = op->nl;
    int n = 0;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (!p->kind->is_opamp || ls_run_state(&op->run, p)->probed || ls_run_state(&op->run, p)->state != LS_LIM_NONE ||
            !ls_part_has(p, ls_kind_opt(p->kind, "rails")))
            continue;
        ls_run_state(&op->run, p)->probed = true;
        double hr = ls_part_opt_in(&op->run, p, "headroom", 0), vout = op->v[p->pin[2]];
        double vhi = ls_level_v(&ls_run_range(&op->run, p, OA_RAILS)[1], op->v) - hr;
        double vlo = ls_level_v(&ls_run_range(&op->run, p, OA_RAILS)[0], op->v) + hr;
        if (!(vout < vhi - 1e-6 * (1 + fabs(vhi)) && vout > vlo + 1e-6 * (1 + fabs(vlo))))
            continue;
        ls_run_state(&op->run, p)->state = LS_LIM_RAIL_HIGH;
        ls_run_state(&op->run, p)->probing = true;
        moving[i] = true;
        n++;
    }
    return n;
}

/* Iterate from op->x until settled and consistent, at most max_it solves.
 * `moving` (per part) says afterwards which parts were still moving. */
static run_status run(ls_op *op, int max_it, bool *moving)
{
    const ls_netlist *nl = op->nl;
    int rounds = 0, nlim = 0;
    for (int i = 0; i < nl->nparts; i++)
        nlim += nl->parts[i].kind->is_opamp && ls_opamp_limited(&nl->parts[i]);
    for (int it = 0; it < max_it && op->iterations < TOTAL_MAX; it++) {
        memset(moving, 0, (size_t)nl->nparts * sizeof *moving);
        int unsettled = update_nonlinear(op, moving);
        if (unsettled == 0 && it > 0) {
            bool one = ++rounds > 2 * nlim + 8;
            if (update_opamps(op, one, moving) == 0 && probe_rails(op, moving) == 0) {
                /* Settled: the last solve was stamped within tolerance of the
                 * solution; stamp exactly there so the stored system is the
                 * one the port, sag and influence analyses linearize about. */
                return step(op);
            }
        }
        run_status r = step(op);
        if (r != RUN_OK)
            return r;
    }
    return RUN_NOCONV;
}

/* gmin stepping: a shunt across every junction from GMIN_START down. */
static run_status gmin_stepping(ls_op *op, bool *moving)
{
    run_status r = RUN_OK;
    for (double g = GMIN_START; g >= GMIN_STOP && r == RUN_OK; g /= 10) {
        set_shunt(&op->run, g);
        r = step(op);
        if (r == RUN_OK)
            r = run(op, NEWTON_MAX, moving);
    }
    set_shunt(&op->run, 0);
    if (r == RUN_OK) {
        r = step(op);
        if (r == RUN_OK)
            r = run(op, NEWTON_MAX, moving);
    }
    return r;
}

/* Source stepping: every independent source ramped from zero to its value,
 * the increment growing after a success and shrinking after a failure. */
static run_status source_stepping(ls_op *op, bool *moving)
{
    saved good = {0};
    if (save(&op->run, &good) != 0)
        return RUN_NOMEM;
    double a = 0, inc = 0.1;
    set_source_scale(&op->run, 0);
    run_status r = step(op);
    if (r == RUN_OK)
        r = run(op, NEWTON_MAX, moving);
    while (r == RUN_OK && a < 1) {
        saved_free(&good);
        if (save(&op->run, &good) != 0) {
            r = RUN_NOMEM;
            break;
        }
        double next = fmin(1, a + inc);
        set_source_scale(&op->run, next);
        r = step(op);
        if (r == RUN_OK)
            r = run(op, NEWTON_MAX, moving);
        if (r == RUN_OK) {
            a = next;
            inc *= 2;
        } else if (r == RUN_NOCONV && inc > SOURCE_STEP_MIN) {
            restore(&op->run, &good);
            inc /= 4;
            r = RUN_OK;
        }
    }
    set_source_scale(&op->run, 1);
    saved_free(&good);
    return r;
}

/* Mark the op-amps with rails that were still switching as rail-only
 * (open_loop); returns how many. */
static int rails_only(const ls_run *r, const bool *moving)
{
    const ls_netlist *nl = r->nl;
    int n = 0;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (!moving[i] || !p->kind->is_opamp || ls_run_state(r, p)->open_loop ||
            !ls_part_has(p, ls_kind_opt(p->kind, "rails")))
            continue;
        ls_run_state(r, p)->open_loop = true;
        n++;
    }
    return n;
}

/* Take LS_GMIN back out of the converged solution when the circuit is well
 * posed without it (a shunt of -LS_GMIN cancels it), so a junction's current
 * is its own; keep it where it is needed (a node held only by junctions in
 * reverse), where the circuit would otherwise be singular or ill-conditioned. */
static run_status polish(ls_op *op, bool *moving)
{
    const ls_netlist *nl = op->nl;
    bool junctions = false;
    for (int i = 0; i < nl->nparts; i++)
        junctions |= nonlinear(&nl->parts[i]) && nl->parts[i].kind->is_junction;
    if (!junctions)
        return RUN_OK;
    saved with = {0};
    if (save(&op->run, &with) != 0)
        return RUN_NOMEM;
    set_shunt(&op->run, -LS_GMIN);
    run_status r = step(op);
    if (r == RUN_OK)
        r = run(op, NEWTON_MAX / 3, moving);
    if (r == RUN_NOMEM) { /* not a reason to keep the shunt: the answer would quietly differ */
        saved_free(&with);
        return r;
    }
    if (r != RUN_OK || !(op->rcond >= POLISH_RCOND)) {
        restore(&op->run, &with);
        set_shunt(&op->run, 0);
        r = step(op);
        if (r == RUN_OK)
            r = run(op, NEWTON_MAX, moving);
    }
    saved_free(&with);
    return r;
}

/* Parts past the point where the junction model would carry LS_JUNCTION_IMAX:
 * the circuit forces a voltage that no real junction takes.  Reports them;
 * returns how many. */
static int beyond_check(ls_op *op)
{
    const ls_netlist *nl = op->nl;
    int n = 0;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (!nonlinear(p) || !p->kind->is_junction)
            continue;
        bool beyond;
        double cur = ls_junction_current(&op->run, p, ls_run_state(&op->run, p)->op_v, &beyond);
        if (fabs(ls_run_state(&op->run, p)->op_v) > JUNCTION_VMAX) {
            n++;
            ls_error(nl->diags, p->loc,
                     "the circuit cannot be solved: %s '%s' did not settle: it would need %.4g V across it, beyond "
                     "what any junction holds; the circuit forces a current through it that it blocks (a current "
                     "source into a junction in reverse?)",
                     p->kind->name, p->name, ls_run_state(&op->run, p)->op_v);
            continue;
        }
        if (!beyond)
            continue;
        n++;
        ls_error(nl->diags, p->loc,
                 "the circuit cannot be solved: %s '%s' did not settle: it is held at %.4g V, where it would carry "
                 "%.3g A (beyond %g A no junction is modelled); nothing limits its current: add a series resistance",
                 p->kind->name, p->name, ls_run_state(&op->run, p)->op_v, cur, LS_JUNCTION_IMAX);
    }
    return n;
}

/* The error for an iteration that did not converge, naming the parts. */
static void report_noconv(ls_op *op, const bool *moving)
{
    const ls_netlist *nl = op->nl;
    char names[600] = "";
    int n = 0;
    ls_loc at = LS_NOLOC;
    for (int i = 0; i < nl->nparts; i++) {
        if (!moving[i])
            continue;
        if (n == 0)
            at = nl->parts[i].loc;
        if (n++ < 8) {
            size_t l = strlen(names);
            snprintf(names + l, sizeof names - l, "%s%s '%s'", l ? ", " : "", nl->parts[i].kind->name,
                     nl->parts[i].name);
        }
    }
    if (n > 8) {
        size_t l = strlen(names);
        snprintf(names + l, sizeof names - l, " and %d more", n - 8);
    }
    bool opamps = false, heat = false;
    for (int i = 0; i < nl->nparts; i++) {
        opamps |= moving[i] && nl->parts[i].kind->is_opamp;
        heat |= moving[i] && nl->parts[i].kind->has_body_temp;
    }
    ls_error(nl->diags, at,
             "the circuit cannot be solved: the operating point did not converge in %d iterations (Newton, "
             "shrinking junction shunts and ramping the sources tried); %s%s%s",
             op->iterations, n ? "parts that did not settle: " : "no part settled on a consistent state", names,
             heat     ? " (thermal runaway? a thermistor whose self-heating does not settle heats itself faster than "
                        "its dissipation constant sheds the heat; limit its current)"
             : opamps ? " (an op-amp whose limits contradict each other: is its output driven from outside beyond "
                        "its rails or its current limit?)"
                      : "");
}

ls_outcome ls_newton_solve(ls_op *op)
{
    const ls_netlist *nl = op->nl;
    bool *moving = calloc((size_t)(nl->nparts ? nl->nparts : 1), sizeof *moving);
    saved start = {0};
    if (!moving || save(&op->run, &start) != 0) {
        free(moving);
        saved_free(&start);
        ls_error(nl->diags, LS_NOLOC, "out of memory in the operating-point iteration");
        op->nomem = true;
        return LS_NO_MEMORY;
    }
    set_shunt(&op->run, 0);
    run_status r = run(op, NEWTON_MAX, moving);
    if (r == RUN_NOCONV) {
        restore(&op->run, &start);
        r = gmin_stepping(op, moving);
    }
    if (r == RUN_NOCONV) {
        restore(&op->run, &start);
        r = source_stepping(op, moving);
    }
    if (r == RUN_NOCONV && rails_only(&op->run, moving)) {
        /* The limits went round in circles: positive feedback somewhere.
         * Those op-amps are let choose only between their rails; any state
         * that then settles is consistent, so it is a solution. */
        restore(&op->run, &start);
        r = step(op);
        if (r == RUN_OK)
            r = run(op, NEWTON_MAX, moving);
    }
    if (r == RUN_OK)
        r = polish(op, moving);
    ls_outcome code = LS_DONE;
    if (r == RUN_OK) {
        if (beyond_check(op))
            code = LS_UNSOLVABLE;
    } else if (r == RUN_NOCONV) {
        if (!beyond_check(op))
            report_noconv(op, moving);
        code = LS_UNSOLVABLE;
    } else if (r == RUN_SINGULAR) {
        ls_op_report_singular(op, ls_solver_stats_of(op->solver)->bad_column);
        code = LS_UNSOLVABLE;
    } else {
        ls_error(nl->diags, LS_NOLOC, "out of memory in the operating-point iteration");
        op->nomem = true;
        code = LS_NO_MEMORY;
    }
    free(moving);
    saved_free(&start);
    return code;
}

/* ---- warnings on the solution ------------------------------------------------------------ */

static const char *eng(char *buf, size_t n, double v, const char *unit)
{
    return ls_fmt_eng(buf, n, v, unit, 4, true);
}

double ls_opamp_dissipation(const ls_op *op, int i)
{
    const ls_part *p = &op->nl->parts[i];
    if (!p->kind->is_opamp || !ls_part_has(p, ls_kind_opt(p->kind, "rails")))
        return NAN;
    double hi = ls_level_v(&ls_run_range(&op->run, p, OA_RAILS)[1], op->v), lo = ls_level_v(&ls_run_range(&op->run, p, OA_RAILS)[0], op->v);
    double vout = op->v[p->pin[2]], cur = op->ipart[i];
    double stage = cur >= 0 ? (hi - vout) * cur : (vout - lo) * -cur;
    return stage + ls_part_opt_in(&op->run, p, "iq", 0) * (hi - lo);
}

/* rating= (derated), vmax= and imax= of part i. */
static void rating_warnings(ls_op *op, int i)
{
    const ls_netlist *nl = op->nl;
    const ls_part *p = &nl->parts[i];
    if (!p->has_opt)
        return; /* every warning here is against a rating option */
    char a[48], b[48], c[48];
    int ri = ls_kind_opt(p->kind, "rating"), vi = ls_kind_opt(p->kind, "vmax"), ii = ls_kind_opt(p->kind, "imax");
    double derate = op->opt.derate > 0 ? op->opt.derate : 1;
    /* an op-amp's own dissipation when its rails are known, else what its output delivers */
    double pw = fabs(op->ppart[i]);
    if (p->kind->is_opamp && isfinite(ls_opamp_dissipation(op, i)))
        pw = fabs(ls_opamp_dissipation(op, i));
    if (ls_part_has(p, ri) && pw > ls_run_opt_at(&op->run, p, ri) * derate) {
        if (derate != 1)
            ls_warning(nl->diags, p->loc, "over-rating",
                       "%s '%s' dissipates %s, above its %s rating derated by %g (%s)", p->kind->name, p->name,
                       eng(a, sizeof a, pw, "W"), eng(b, sizeof b, ls_run_opt_at(&op->run, p, ri), "W"), derate,
                       eng(c, sizeof c, ls_run_opt_at(&op->run, p, ri) * derate, "W"));
        else
            ls_warning(nl->diags, p->loc, "over-rating", "%s '%s' dissipates %s, above its %s rating",
                       p->kind->name, p->name, eng(a, sizeof a, pw, "W"), eng(b, sizeof b, ls_run_opt_at(&op->run, p, ri), "W"));
    }
    if (ls_part_has(p, vi) && fabs(op->vpart[i]) > ls_run_opt_at(&op->run, p, vi))
        ls_warning(nl->diags, p->loc, "over-voltage", "%s '%s' has %s across it, above its vmax of %s",
                   p->kind->name, p->name, eng(a, sizeof a, fabs(op->vpart[i]), "V"),
                   eng(b, sizeof b, ls_run_opt_at(&op->run, p, vi), "V"));
    if (!p->kind->is_opamp && ls_part_has(p, ii) && fabs(op->ipart[i]) > ls_run_opt_at(&op->run, p, ii))
        ls_warning(nl->diags, p->loc, "over-current", "%s '%s' carries %s, above its imax of %s", p->kind->name,
                   p->name, eng(a, sizeof a, fabs(op->ipart[i]), "A"), eng(b, sizeof b, ls_run_opt_at(&op->run, p, ii), "A"));
}

/* An op-amp at a limit, or with an input outside cm=. */
/* An ideal op-amp working linearly (no limit in force) whose output pulls its
 * plus input harder than its minus input: a positive-feedback balance that a
 * real circuit leaves for a rail, most often plus and minus swapped.  With
 * z = A^-1 e_k (k the op-amp's row V+ - V- = vos), z_out is dV(out)/d(vos):
 * negative feedback makes the output move against an input offset (a
 * follower: -1), positive feedback with it. */
static void positive_feedback_warning(ls_op *op, int i)
{
    const ls_netlist *nl = op->nl;
    const ls_part *p = &nl->parts[i];
    int out = p->pin[2];
    if (p->has_value || ls_run_state(&op->run, p)->state != LS_LIM_NONE || ls_run_state(&op->run, p)->open_loop || out <= 0 || p->branch < 0)
        return;
    double *z = calloc((size_t)op->mna.n, sizeof *z);
    if (!z)
        return;
    z[p->branch] = 1;
    if (ls_op_solve_vec(op, z, 0) == LS_SOLVER_OK && z[out - 1] > 1e-9)
        ls_warning(nl->diags, p->loc, "opamp-positive-feedback",
                   "op-amp '%s' is in positive feedback: its output pulls its plus input ('%s') more than its minus "
                   "input ('%s'), so the solution is a balance a real circuit would leave for a rail; are plus and "
                   "minus swapped?",
                   p->name, nl->nodes[p->pin[0]].name, nl->nodes[p->pin[1]].name);
    free(z);
}

static void opamp_warnings(ls_op *op, int i)
{
    positive_feedback_warning(op, i);
    const ls_netlist *nl = op->nl;
    const ls_part *p = &nl->parts[i];
    char a[48], b[48];
    assert(ls_run_state(&op->run, p)->state >= LS_LIM_NONE && ls_run_state(&op->run, p)->state <= LS_LIM_CURRENT_SINK);
    switch (ls_run_state(&op->run, p)->state) {
    case LS_LIM_RAIL_HIGH:
    case LS_LIM_RAIL_LOW:
        if (ls_run_state(&op->run, p)->open_loop) {
            ls_warning(nl->diags, p->loc, "opamp-saturated",
                       "op-amp '%s' has no negative feedback (a comparator): its output sits at its %s rail, %s",
                       p->name, ls_run_state(&op->run, p)->state == LS_LIM_RAIL_HIGH ? "upper" : "lower",
                       eng(a, sizeof a, op->v[p->pin[2]], "V"));
            break;
        }
        ls_warning(nl->diags, p->loc, "opamp-saturated",
                   "op-amp '%s' is saturated: its output is held at %s, its %s rail %s headroom, so its feedback no "
                   "longer sets the output",
                   p->name, eng(a, sizeof a, op->v[p->pin[2]], "V"),
                   ls_run_state(&op->run, p)->state == LS_LIM_RAIL_HIGH ? "upper" : "lower", ls_run_state(&op->run, p)->state == LS_LIM_RAIL_HIGH ? "minus" : "plus");
        break;
    case LS_LIM_CURRENT_SOURCE:
    case LS_LIM_CURRENT_SINK:
        ls_warning(nl->diags, p->loc, "opamp-current-limit",
                   "op-amp '%s' is at its output current limit (%s %s): the load, not the feedback, sets its output "
                   "(%s)",
                   p->name, ls_run_state(&op->run, p)->state == LS_LIM_CURRENT_SOURCE ? "sourcing" : "sinking",
                   eng(a, sizeof a, ls_part_opt_in(&op->run, p, "imax", 0), "A"), eng(b, sizeof b, op->v[p->pin[2]], "V"));
        break;
    default:
        break;
    }
    int ci = ls_kind_opt(p->kind, "cm");
    if (!ls_part_has(p, ci))
        return;
    double lo = ls_level_v(&ls_run_range(&op->run, p, OA_CM)[0], op->v), hi = ls_level_v(&ls_run_range(&op->run, p, OA_CM)[1], op->v);
    double vp = op->v[p->pin[0]], vm = op->v[p->pin[1]];
    bool out_p = vp < lo - 1e-12 || vp > hi + 1e-12, out_m = vm < lo - 1e-12 || vm > hi + 1e-12;
    char c[48], e[48];
    eng(b, sizeof b, lo, "V");
    eng(c, sizeof c, hi, "V");
    if (out_p && out_m)
        ls_warning(nl->diags, p->loc, "opamp-common-mode",
                   "op-amp '%s': its inputs (plus at %s, minus at %s) are outside its common-mode range %s..%s",
                   p->name, eng(a, sizeof a, vp, "V"), eng(e, sizeof e, vm, "V"), b, c);
    else if (out_p || out_m)
        ls_warning(nl->diags, p->loc, "opamp-common-mode",
                   "op-amp '%s': its %s input at %s is outside its common-mode range %s..%s", p->name,
                   out_p ? "plus" : "minus", eng(a, sizeof a, out_p ? vp : vm, "V"), b, c);
}

/* An ADC driven from above max_source=, or outside 0..ref. */
static void adc_warnings(ls_op *op, int i)
{
    const ls_netlist *nl = op->nl;
    const ls_part *p = &nl->parts[i];
    ls_adc_result r;
    char a[48], b[48], c[48];
    if (ls_op_adc(op, i, &r) != 0)
        return;
    int mi = ls_kind_opt(p->kind, "max_source");
    if (ls_part_has(p, mi) && !(r.rth <= ls_run_opt_at(&op->run, p, mi)))
        ls_warning(nl->diags, p->loc, "adc-source-resistance",
                   "adc '%s': the source driving it has %s, above its max_source of %s; the sampling input may not "
                   "settle (a buffer or a smaller divider helps)",
                   p->name, eng(a, sizeof a, r.rth, "ohm"), eng(b, sizeof b, ls_run_opt_at(&op->run, p, mi), "ohm"));
    double ref = ls_part_opt_in(&op->run, p, "ref", 0);
    if (r.vin < 0 || r.vin > ref)
        ls_warning(nl->diags, p->loc, "adc-range", "adc '%s': its input at %s is outside its range 0..%s", p->name,
                   eng(a, sizeof a, r.vin, "V"), eng(c, sizeof c, ref, "V"));
}

void ls_real_warnings(ls_op *op)
{
    const ls_netlist *nl = op->nl;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        rating_warnings(op, i);
        if (p->kind->is_opamp)
            opamp_warnings(op, i);
        else if (p->kind->is_adc)
            adc_warnings(op, i);
    }
    for (int i = 1; i < nl->nnodes; i++) {
        if (!(fabs(op->v[i]) > LS_TOUCH_SAFE_DC))
            continue;
        char a[48];
        ls_warning(nl->diags, nl->nodes[i].loc, "hazardous-voltage",
                   "caution: node '%s' is at %s DC against ground, above the %g V usually taken as touch-safe "
                   "(IEC 61140 / IEC 60335-1); follow your local codes and have such work done by qualified people",
                   nl->nodes[i].name, eng(a, sizeof a, op->v[i], "V"), LS_TOUCH_SAFE_DC);
    }
}

/* ---- ADC inputs ---------------------------------------------------------------------------- */

/* The verdict of adc i from its error in LSB (against the budget of the
 * port that feeds it, else half an LSB) and its source resistance. */
static void adc_verdict(ls_op *op, int i, ls_adc_result *r)
{
    const ls_netlist *nl = op->nl;
    const ls_part *p = &nl->parts[i];
    r->budget_lsb = 0.5;
    for (int j = 0; j < nl->nparts; j++) {
        if (!nl->parts[j].kind->is_port || nl->parts[j].pin[1] != p->pin[0])
            continue;
        const ls_port_result *pr = ls_op_port(op, j);
        if (pr && pr->by_budget && pr->budget_from != LS_BUDGET_FROM_ADC)
            r->budget_lsb = pr->budget / r->lsb;
        break;
    }
    int mi = ls_kind_opt(p->kind, "max_source");
    r->source_high = ls_part_has(p, mi) && !(r->rth <= ls_run_opt_at(&op->run, p, mi));
    double e = fabs(r->error_lsb), b = r->budget_lsb;
    if (!isfinite(e) || e > 2 * b + ls_check_slack(2 * b))
        r->verdict = VERDICT_LOADING;
    else if (e > b + ls_check_slack(b))
        r->verdict = VERDICT_MARGINAL;
    else
        r->verdict = VERDICT_OK;
    if (r->source_high)
        r->verdict = VERDICT_LOADING;
}

int ls_op_adc(ls_op *op, int i, ls_adc_result *r)
{
    const ls_part *p = &op->nl->parts[i];
    if (!p->kind->is_adc)
        return -1;
    int node = p->pin[0];
    double rin = ls_part_opt_in(&op->run, p, "rin", 0), leak = ls_part_opt_in(&op->run, p, "leak", 0);
    double levels = ldexp(1, (int)ls_part_opt_in(&op->run, p, "bits", 1));
    memset(r, 0, sizeof *r);
    r->vin = op->v[node];
    r->lsb = ls_adc_lsb_in(&op->run, p);
    /* The driving-point resistance includes the ADC's own rin in parallel. */
    double zd = ls_op_zdrive(op, node);
    if (rin > 0)
        r->rth = zd >= rin ? INFINITY : 1 / (1 / zd - 1 / rin);
    else
        r->rth = zd;
    double iload = (rin > 0 ? r->vin / rin : 0) + leak;
    r->v_open = isfinite(r->rth) ? r->vin + iload * r->rth : NAN;
    r->error_lsb = (r->vin - r->v_open) / r->lsb;
    double code = floor(r->vin / r->lsb);
    r->code = (long long)fmax(0, fmin(levels - 1, code));
    adc_verdict(op, i, r);
    return 0;
}
