/* fit.c — the search for standard values of the free parts (fit.h,
 * docs/fit.md).
 *
 * Sections: the checks of a candidate and their margins; one candidate
 * solved; the ranking; the kept list; the exhaustive walk; the continuous
 * stage (NLopt); the neighbourhood and the descent; the finalists' yields. */
#include "analysis/fit.h"

#include <assert.h>
#include <math.h>
#include <nlopt.h>
#include <pthread.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "base/eseries.h"
#include "analysis/newton.h"
#include "parts/parts.h"
#include "analysis/tolerance.h"

#define MARGIN_CLAMP 50.0       /* margins seen by the continuous stage stay within +-this */
#define DESCENT_BUDGET 20000    /* candidate solves the descent may spend */
#define BOX_LIMIT 4096          /* combinations of the neighbourhood box solved one by one */
#define SPIN_NS 1e5             /* a thread of the search spins this long (ns) before it sleeps */
#define TIE_REL LS_FIT_TIE_REL  /* goal figures this close (relative) are a tie (fit.h) */

/* ---- the checks of a candidate --------------------------------------------------------------- */

typedef struct slot {
    ls_fit_kind kind;
    int index;
} slot;

/* Private state of one run, beside the study. */
typedef struct fit_run {
    ls_fit_study *f;
    slot *slots;
    int nslots;
    double *x0;              /* the operating point at the written values */
    ls_run run0;             /* the parts' states and values there (run.h) */
    bool have_run0;
    ls_fit_cand *keep;       /* the best candidates so far, best first */
    int nkeep, cap_keep;
    uint64_t *seen;          /* hashes of the index vectors solved (open addressing, 0 empty) */
    size_t seen_cap, seen_n;
    long total_hint;         /* for the progress line */
    double *scratch;         /* nvars values */
    bool nomem;              /* a candidate's solve ran out of memory: the search has no answer */
    long worker_factorizations;  /* those of the second thread's op (bb_corners) */
} fit_run;

/* Relative distance of v above lo (one-sided limit): scaled by |lo|, else by
 * |v|, else 1 (docs/fit.md). */
static double one_sided(double dist, double limit, double v)
{
    double scale = limit != 0 ? fabs(limit) : v != 0 ? fabs(v) : 1;
    return dist / scale;
}

/* Margin of v in [lo, hi]: with both ends finite, the distance to the nearer
 * end over half the width (1 in the middle, 0 at an end); with one, the
 * distance over that limit's size. */
static double range_margin(double v, double lo, double hi)
{
    if (isnan(v))
        return -INFINITY;
    if (isfinite(lo) && isfinite(hi))
        return hi > lo ? fmin(v - lo, hi - v) / ((hi - lo) / 2) : (v == lo ? 0 : -INFINITY);
    if (isfinite(lo))
        return isinf(v) ? (v > 0 ? INFINITY : -INFINITY) : one_sided(v - lo, lo, v);
    if (isfinite(hi))
        return isinf(v) ? (v < 0 ? INFINITY : -INFINITY) : one_sided(hi - v, hi, v);
    return INFINITY;
}

/* An expect or rule line. */
static void eval_expect(ls_op *op, int i, ls_fit_check *c)
{
    ls_check_result r;
    ls_check_eval(op, &op->nl->checks[i], &r);
    c->value = r.value;
    c->lo = r.lo;
    c->hi = r.hi;
    c->pass = r.pass;
    c->why = r.reason;
    c->margin = range_margin(r.value, r.lo, r.hi);
    c->in_goal = true;
}

/* A port's verdict: by its budget (|sag| <= budget) or by the ratio rule. */
static void eval_port(ls_op *op, int i, ls_fit_check *c)
{
    const ls_port_result *pr = ls_op_port(op, i);
    c->in_goal = true;
    c->pass = pr->verdict == VERDICT_OK;
    c->why = pr->note;
    if (pr->by_budget) {
        c->value = fabs(pr->sag);
        c->lo = -INFINITY;
        c->hi = pr->budget;
        c->margin = isnan(pr->sag) ? -INFINITY : (pr->budget - fabs(pr->sag)) / pr->budget;
    } else {
        double min = ls_op_min_ratio(op);
        c->value = pr->ratio;
        c->lo = min;
        c->hi = INFINITY;
        c->margin = isnan(pr->ratio) ? -INFINITY : isinf(pr->ratio) ? INFINITY : (pr->ratio - min) / min;
    }
}

/* 1 - |x| / limit: how much of a rating is left. */
static void eval_rating(double x, double limit, ls_fit_check *c)
{
    c->value = fabs(x);
    c->lo = -INFINITY;
    c->hi = limit;
    c->margin = isnan(x) ? -INFINITY : 1 - fabs(x) / limit;
    c->pass = c->margin >= -ls_check_slack(1);
}

/* An op-amp's output: inside its rails less headroom and its current limit.
 * At a limit it fails; its margin is then minus the imbalance of its inputs
 * over the rails' span (how hard the feedback asks for more, docs/fit.md). */
static void eval_opamp_out(ls_op *op, int i, ls_fit_check *c)
{
    const ls_part *p = &op->nl->parts[i];
    double vout = op->v[p->pin[2]];
    int ri = ls_kind_opt(p->kind, "rails"), ii = ls_kind_opt(p->kind, "imax");
    double lo = -INFINITY, hi = INFINITY, span = fmax(ls_op_volts(op), 1e-9);
    if (ls_part_has(p, ri)) {
        double head = ls_part_opt(p, "headroom", 0);
        lo = ls_level_v(&p->range[OA_RAILS][0], op->v) + head;
        hi = ls_level_v(&p->range[OA_RAILS][1], op->v) - head;
        span = fmax(hi - lo, 1e-9);
    }
    c->value = vout;
    c->lo = lo;
    c->hi = hi;
    if (ls_run_state(&op->run, p)->open_loop) { /* a comparator: at a rail by design */
        c->margin = INFINITY;
        c->pass = true;
        return;
    }
    if (ls_run_state(&op->run, p)->state != LS_LIM_NONE) {
        double imbalance = fabs(op->v[p->pin[0]] - op->v[p->pin[1]]);
        c->margin = -fmax(imbalance / span, 1e-12);
        c->pass = false;
        c->why = ls_run_state(&op->run, p)->state == LS_LIM_RAIL_HIGH  ? "saturated at its upper rail"
                 : ls_run_state(&op->run, p)->state == LS_LIM_RAIL_LOW ? "saturated at its lower rail"
                                                    : "at its output current limit";
        return;
    }
    c->margin = INFINITY;
    if (isfinite(lo))
        c->margin = range_margin(vout, lo, hi);
    if (ls_part_has(p, ii))
        c->margin = fmin(c->margin, 1 - fabs(op->ipart[i]) / p->opt[ii]);
    c->pass = c->margin >= -ls_check_slack(1);
}

/* An op-amp's inputs inside cm=. */
static void eval_opamp_cm(ls_op *op, int i, ls_fit_check *c)
{
    const ls_part *p = &op->nl->parts[i];
    double lo = ls_level_v(&p->range[OA_CM][0], op->v), hi = ls_level_v(&p->range[OA_CM][1], op->v);
    double vp = op->v[p->pin[0]], vm = op->v[p->pin[1]];
    double mp = range_margin(vp, lo, hi), mm = range_margin(vm, lo, hi);
    c->value = mp <= mm ? vp : vm;
    c->lo = lo;
    c->hi = hi;
    c->margin = fmin(mp, mm);
    c->pass = c->margin >= -ls_check_slack(1);
}

/* An adc: its input inside 0..ref, or its source below max_source=.  The
 * range needs only the input's voltage (ls_op_adc's vin), not the
 * driving-point solve behind the source's resistance. */
static void eval_adc(ls_op *op, int i, bool source, ls_fit_check *c)
{
    const ls_part *p = &op->nl->parts[i];
    ls_adc_result r;
    if (!p->kind->is_adc || (source && ls_op_adc(op, i, &r) != 0)) {
        c->value = NAN;
        c->margin = -INFINITY;
        c->pass = false;
        return;
    }
    if (source) {
        eval_rating(r.rth, ls_part_opt(p, "max_source", INFINITY), c);
        return;
    }
    double ref = ls_part_opt(p, "ref", 0), vin = op->v[p->pin[0]];
    c->value = vin;
    c->lo = 0;
    c->hi = ref;
    c->margin = range_margin(vin, 0, ref);
    c->pass = c->margin >= -ls_check_slack(1);
}

/* Fill c for check s on the solved operating point op. */
static void eval_slot(ls_op *op, const slot *s, ls_fit_check *c)
{
    const ls_part *p = s->kind == LS_FITC_EXPECT ? NULL : &op->nl->parts[s->index];
    memset(c, 0, sizeof *c);
    c->kind = s->kind;
    c->index = s->index;
    c->lo = -INFINITY;
    c->hi = INFINITY;
    double derate = op->opt.derate > 0 ? op->opt.derate : 1;
    switch (s->kind) {
    case LS_FITC_EXPECT: eval_expect(op, s->index, c); break;
    case LS_FITC_PORT: eval_port(op, s->index, c); break;
    case LS_FITC_RATING: {
        double pw = op->ppart[s->index];
        if (p->kind->is_opamp && isfinite(ls_opamp_dissipation(op, s->index)))
            pw = ls_opamp_dissipation(op, s->index);
        eval_rating(pw, ls_part_opt(p, "rating", INFINITY) * derate, c);
        break;
    }
    case LS_FITC_VMAX: eval_rating(op->vpart[s->index], ls_part_opt(p, "vmax", INFINITY), c); break;
    case LS_FITC_IMAX: eval_rating(op->ipart[s->index], ls_part_opt(p, "imax", INFINITY), c); break;
    case LS_FITC_OPAMP_OUT: eval_opamp_out(op, s->index, c); break;
    case LS_FITC_OPAMP_CM: eval_opamp_cm(op, s->index, c); break;
    case LS_FITC_ADC_RANGE: eval_adc(op, s->index, false, c); break;
    case LS_FITC_ADC_SOURCE: eval_adc(op, s->index, true, c); break;
    }
    if (c->pass && c->margin < 0)
        c->margin = 0; /* within the comparison's slack of its limit */
    if (!c->pass && !(c->margin < 0))
        c->margin = -1e-12;
}

/* Every check that applies to the circuit, into r->slots.  Returns 0, -1 on no memory. */
static int make_slots(fit_run *r)
{
    const ls_netlist *nl = r->f->nl;
    r->slots = malloc((size_t)(nl->nchecks + 4 * nl->nparts + 1) * sizeof *r->slots);
    if (!r->slots)
        return -1;
    int n = 0;
    for (int i = 0; i < nl->nchecks; i++)
        r->slots[n++] = (slot){LS_FITC_EXPECT, i};
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        const ls_kind *k = p->kind;
        if (k->is_port) {
            r->slots[n++] = (slot){LS_FITC_PORT, i};
            continue;
        }
        if (ls_part_has(p, ls_kind_opt(k, "rating")))
            r->slots[n++] = (slot){LS_FITC_RATING, i};
        if (ls_part_has(p, ls_kind_opt(k, "vmax")))
            r->slots[n++] = (slot){LS_FITC_VMAX, i};
        if (k->is_opamp) {
            if (ls_opamp_limited(p))
                r->slots[n++] = (slot){LS_FITC_OPAMP_OUT, i};
            if (ls_part_has(p, ls_kind_opt(k, "cm")))
                r->slots[n++] = (slot){LS_FITC_OPAMP_CM, i};
        } else if (ls_part_has(p, ls_kind_opt(k, "imax"))) {
            r->slots[n++] = (slot){LS_FITC_IMAX, i};
        }
        if (k->is_adc) {
            r->slots[n++] = (slot){LS_FITC_ADC_RANGE, i};
            if (ls_part_has(p, ls_kind_opt(k, "max_source")))
                r->slots[n++] = (slot){LS_FITC_ADC_SOURCE, i};
        }
    }
    r->nslots = n;
    return 0;
}

/* Current drawn from the supplies (A): every voltage source's, every
 * op-amp's quiescent current, and the output current of an op-amp whose
 * rails are not nodes (with rails=gnd..vcc the model already draws its
 * output current through the source on vcc). */
static double supply_current(const ls_op *op)
{
    const ls_netlist *nl = op->nl;
    double sum = 0;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (p->kind->is_opamp) {
            int ri = ls_kind_opt(p->kind, "rails");
            bool through_rails = ls_part_has(p, ri) && p->range[OA_RAILS][0].node >= 0 && p->range[OA_RAILS][1].node >= 0;
            sum += (through_rails ? 0 : fabs(op->ipart[i])) + ls_part_opt(p, "iq", 0);
        }
        else if (p->kind->stage_role == LS_ROLE_SOURCE)   /* a voltage source: a supply */
            sum += fabs(op->ipart[i]);
    }
    return sum;
}

/* ---- one candidate --------------------------------------------------------------------------- */

/* Put the free parts at values[], restart from the written values' operating
 * point (so a result never depends on the candidate solved before it) and
 * solve.  Returns true when it solved. */
static bool solve_on(const fit_run *r, ls_op *op, const double *values, bool *nomem_out)
{
    const ls_fit_study *f = r->f;
    bool nomem = ls_run_copy(&op->run, &r->run0) != 0;
    for (int j = 0; j < f->nvars && !nomem; j++)
        nomem = ls_run_set_value(&op->run, f->vars[j].part, values[j]) != 0;
    if (nomem) {
        *nomem_out = true;
        return false;
    }
    if (op->mna.n > 0)
        memcpy(op->x, r->x0, (size_t)op->mna.n * sizeof *r->x0);
    if (ls_op_resolve(op) == LS_DONE)
        return true;
    /* a solve without memory says nothing of the candidate: never ranked as
     * one that does not solve (docs/limits.md, out of memory) */
    *nomem_out |= op->nomem;
    return false;
}

/* Does the search's fast path apply to the candidates of f?  Their solves
 * then test each matrix for singularity only (ls_solver_singularity_only:
 * the same verdict without the condition estimate where a cheap floor shows
 * it would pass) and factor and solve with the dense backend's own LU
 * (ls_solver_own_lu: the same method without LAPACK's calls, its figures
 * equal to the full path's up to rounding, which the search's ties absorb:
 * docs/fit.md, "The search").  Nothing a candidate reports reads the
 * estimate, except the iteration of a circuit with junctions (newton.c,
 * polish), which then keeps the full path; and f->plain keeps it for the
 * tests' comparison. */
static bool fast_path(const ls_fit_study *f)
{
    if (f->plain)
        return false;
    for (int i = 0; i < f->nl->nparts; i++)
        if (f->nl->parts[i].kind->is_junction)
            return false;
    return true;
}

/* Candidates of the search on op: on the fast path when on and it applies
 * (fast_path); the reported candidates, the finalists' trials and the
 * written values' solve go back to the full path. */
static void candidate_path(const ls_fit_study *f, ls_op *op, bool on)
{
    if (op->solver) {
        ls_solver_singularity_only(op->solver, on && fast_path(f));
        ls_solver_own_lu(op->solver, on && fast_path(f));
    }
}

/* solve_on the session's op. */
static bool solve_at(fit_run *r, const double *values)
{
    return solve_on(r, r->f->op, values, &r->nomem);
}

/* Judge check s on the solved op into c's summary (and keep it when
 * c->checks is set). */
static void tally(const fit_run *r, ls_op *op, int s, ls_fit_cand *c)
{
    ls_fit_check k;
    eval_slot(op, &r->slots[s], &k);
    if (k.in_goal)
        c->margin = fmin(c->margin, k.margin);
    c->worst = fmin(c->worst, k.margin);
    c->failed += !k.pass;
    if (c->checks)
        c->checks[s] = k;
}

/* Summarise the checks on the solved op into c (and keep them when c->checks
 * is set: nslots of them). */
static void judge(fit_run *r, ls_op *op, ls_fit_cand *c)
{
    c->margin = INFINITY;
    c->worst = INFINITY;
    c->failed = 0;
    for (int s = 0; s < r->nslots; s++)
        tally(r, op, s, c);
    c->meets = c->failed == 0;
    c->current = supply_current(op);
}

/* x < y by more than a tie (TIE_REL); false when either is not finite and they are equal. */
static bool clearly_below(double x, double y)
{
    if (x == y || isnan(x) || isnan(y))
        return false;
    if (isfinite(x) && isfinite(y))
        return x < y - TIE_REL * fmax(fabs(x), fabs(y));
    return x < y;
}

/* Can a candidate whose checks other than the ports give it smallest goal
 * margin `margin`, smallest margin `worst`, `failed` failures and supply
 * current `current` no longer enter the kept list, whatever its ports show?
 * The ports can only lower the two margins and add failures, never change
 * the current, so this is exact: it holds only when the list is full and
 * the candidate already ranks after its last entry by more than a tie. */
static bool cannot_rank(const fit_run *r, double margin, double worst, int failed, double current)
{
    if (r->nkeep < r->cap_keep)
        return false;
    const ls_fit_cand *ref = &r->keep[r->cap_keep - 1];
    if (!ref->meets) /* by how close it comes: worst only falls, failures only grow */
        return failed > 0 && clearly_below(worst, ref->worst);
    if (failed > 0)
        return true;  /* infeasible now, infeasible with its ports */
    if (r->f->goal == LS_FIT_CURRENT)
        return clearly_below(ref->current, current);
    return clearly_below(margin, ref->margin);
}

/* judge, for a candidate that is only kept if it ranks (no summary wanted):
 * every check but the ports first, and the ports (the costly part: each its
 * own solves) only when the others leave the candidate a chance to rank
 * (cannot_rank).  Returns true when it judged every check; false when it
 * stopped early (c then holds a partial summary that is never kept). */
static bool judge_if_it_can_rank(fit_run *r, ls_op *op, ls_fit_cand *c)
{
    c->margin = INFINITY;
    c->worst = INFINITY;
    c->failed = 0;
    c->current = supply_current(op);
    for (int pass = 0; pass < 2; pass++) {
        for (int s = 0; s < r->nslots; s++) {
            if ((r->slots[s].kind == LS_FITC_PORT) == (pass == 1))
                tally(r, op, s, c);
        }
        if (pass == 0 && cannot_rank(r, c->margin, c->worst, c->failed, c->current))
            return false;
    }
    c->meets = c->failed == 0;
    return true;
}

/* The summary of a candidate that did not solve: it fails every check. */
static void evaluate_unsolved(const fit_run *r, ls_fit_cand *c)
{
    c->solved = false;
    c->meets = false;
    c->margin = c->worst = -INFINITY;
    c->current = NAN;
    c->failed = r->nslots ? r->nslots : 1;
}

/* Solve candidate c (its value[] set) on op and judge it (*nomem set when
 * the solve ran short of memory). */
static void evaluate_on(fit_run *r, ls_op *op, ls_fit_cand *c, bool *nomem)
{
    c->yield = NAN;
    c->solved = solve_on(r, op, c->value, nomem);
    if (!c->solved) {
        evaluate_unsolved(r, c);
        return;
    }
    judge(r, op, c);
}

/* evaluate_on the session's op. */
static void evaluate(fit_run *r, ls_fit_cand *c)
{
    evaluate_on(r, r->f->op, c, &r->nomem);
}

/* evaluate, for a candidate wanted only if it ranks: false when its port
 * reports were skipped because it cannot (judge_if_it_can_rank), and it
 * must then not be kept. */
static bool evaluate_if_it_can_rank_on(fit_run *r, ls_op *op, ls_fit_cand *c, bool *nomem)
{
    c->yield = NAN;
    if (!solve_on(r, op, c->value, nomem)) {
        evaluate_unsolved(r, c);
        return true;
    }
    return judge_if_it_can_rank(r, op, c);
}

/* evaluate_if_it_can_rank_on the session's op. */
static bool evaluate_if_it_can_rank(fit_run *r, ls_fit_cand *c)
{
    return evaluate_if_it_can_rank_on(r, r->f->op, c, &r->nomem);
}

/* ---- the ranking ----------------------------------------------------------------------------- */

/* -1 when a is better than b on one goal's figure, 1 when worse, 0 for a tie
 * (or when a figure is unknown: a yield not computed). */
static int cmp_goal(ls_fit_goal g, const ls_fit_cand *a, const ls_fit_cand *b)
{
    double x, y;
    bool larger = true;
    switch (g) {
    case LS_FIT_MARGIN: x = a->margin, y = b->margin; break;
    case LS_FIT_YIELD: x = a->yield, y = b->yield; break;
    default: x = a->current, y = b->current, larger = false; break;
    }
    if (isnan(x) || isnan(y) || x == y)
        return 0;
    if (isfinite(x) && isfinite(y) && fabs(x - y) <= TIE_REL * fmax(fabs(x), fabs(y)))
        return 0;
    return (x > y) == larger ? -1 : 1;
}

/* Order of candidates: feasible ones first, by the goal and then the next
 * goals in turn; infeasible ones by how close they come (worst margin), then
 * by how many checks they fail. */
static int cmp_cand(ls_fit_goal goal, const ls_fit_cand *a, const ls_fit_cand *b)
{
    if (a->meets != b->meets)
        return a->meets ? -1 : 1;
    if (!a->meets) { /* by how close: worst margins within a tie are equal */
        if (clearly_below(b->worst, a->worst))
            return -1;
        if (clearly_below(a->worst, b->worst))
            return 1;
        return (a->failed > b->failed) - (a->failed < b->failed);
    }
    for (int k = 0; k < 3; k++) {
        int c = cmp_goal((ls_fit_goal)((goal + k) % 3), a, b);
        if (c)
            return c;
    }
    return 0;
}

/* cmp_cand, then (a full tie) the series positions compared from the last
 * free part to the first, smaller first: the order the enumeration meets
 * them, so the ranking never depends on which stage found a candidate first. */
static int cmp_ranked(const ls_fit_study *f, ls_fit_goal goal, const ls_fit_cand *a, const ls_fit_cand *b)
{
    int c = cmp_cand(goal, a, b);
    for (int j = f->nvars - 1; c == 0 && j >= 0; j--)
        c = (a->idx[j] > b->idx[j]) - (a->idx[j] < b->idx[j]);
    return c;
}

/* ---- the kept list --------------------------------------------------------------------------- */

static void cand_free(ls_fit_cand *c)
{
    free(c->idx);
    free(c->value);
    free(c->checks);
    memset(c, 0, sizeof *c);
}

/* A copy of c's vectors into d.  Returns 0, -1 on no memory. */
static int cand_copy(const ls_fit_study *f, ls_fit_cand *d, const ls_fit_cand *c)
{
    *d = *c;
    d->checks = NULL;
    d->idx = malloc((size_t)f->nvars * sizeof *d->idx);
    d->value = malloc((size_t)f->nvars * sizeof *d->value);
    if (!d->idx || !d->value) {
        free(d->idx);
        free(d->value);
        return -1;
    }
    memcpy(d->idx, c->idx, (size_t)f->nvars * sizeof *d->idx);
    memcpy(d->value, c->value, (size_t)f->nvars * sizeof *d->value);
    return 0;
}

static bool same_values(const ls_fit_study *f, const ls_fit_cand *a, const ls_fit_cand *b)
{
    return memcmp(a->value, b->value, (size_t)f->nvars * sizeof *a->value) == 0;
}

/* Keep c among the best cap_keep candidates (a copy).  Returns 0, -1 on no memory. */
static int keep(fit_run *r, const ls_fit_cand *c)
{
    ls_fit_goal g = r->f->goal == LS_FIT_YIELD ? LS_FIT_MARGIN : r->f->goal; /* yields come later */
    for (int i = 0; i < r->nkeep; i++)
        if (same_values(r->f, &r->keep[i], c))
            return 0;
    int at = r->nkeep;
    while (at > 0 && cmp_ranked(r->f, g, c, &r->keep[at - 1]) < 0)
        at--;
    if (at >= r->cap_keep)
        return 0;
    if (r->nkeep == r->cap_keep)
        cand_free(&r->keep[--r->nkeep]);
    ls_fit_cand copy;
    if (cand_copy(r->f, &copy, c) != 0)
        return -1;
    memmove(&r->keep[at + 1], &r->keep[at], (size_t)(r->nkeep - at) * sizeof *r->keep);
    r->keep[at] = copy;
    r->nkeep++;
    return 0;
}

/* Has the index vector idx been solved already?  Marks it solved.  Returns
 * 1 (seen), 0 (new) or -1 (no memory to mark it: the search ends with an
 * error, as every out of memory does).  (A 64-bit hash stands for the
 * vector; a collision only skips one candidate.) */
static int seen_before(fit_run *r, const int *idx, int n)
{
    uint64_t h = 1469598103934665603ull;
    for (int j = 0; j < n; j++) {
        h ^= (uint64_t)(unsigned)idx[j] + 0x9e3779b97f4a7c15ull;
        h *= 1099511628211ull;
    }
    if (h == 0)
        h = 1;
    if (2 * (r->seen_n + 1) > r->seen_cap) {
        size_t cap = r->seen_cap ? 2 * r->seen_cap : 1024;
        uint64_t *t = calloc(cap, sizeof *t);
        if (!t)
            return -1;
        for (size_t i = 0; i < r->seen_cap; i++)
            if (r->seen[i]) {
                size_t k = r->seen[i] & (cap - 1);
                while (t[k])
                    k = (k + 1) & (cap - 1);
                t[k] = r->seen[i];
            }
        free(r->seen);
        r->seen = t;
        r->seen_cap = cap;
    }
    size_t k = h & (r->seen_cap - 1);
    while (r->seen[k]) {
        if (r->seen[k] == h)
            return 1;
        k = (k + 1) & (r->seen_cap - 1);
    }
    r->seen[k] = h;
    r->seen_n++;
    return 0;
}

/* Solve the series candidate idx[] (unless solved before) and keep it.
 * Returns 0, -1 on no memory; *out (when not NULL) gets its summary. */
static int try_idx(fit_run *r, const int *idx, ls_fit_cand *out, bool *fresh)
{
    ls_fit_study *f = r->f;
    if (fresh)
        *fresh = false;
    int seen = seen_before(r, idx, f->nvars);
    if (seen != 0)
        return seen < 0 ? -1 : 0;
    if (fresh)
        *fresh = true;
    ls_fit_cand c = {.idx = (int *)idx, .value = r->scratch};
    for (int j = 0; j < f->nvars; j++)
        c.value[j] = f->vars[j].values[idx[j]];
    /* without a summary wanted, a candidate that cannot rank skips its ports */
    bool whole = true;
    if (out)
        evaluate(r, &c);
    else
        whole = evaluate_if_it_can_rank(r, &c);
    f->evaluated++;
    if (f->progress && (f->evaluated & 63) == 0)
        f->progress(f->progress_ctx, f->evaluated, r->total_hint > f->evaluated ? r->total_hint : f->evaluated);
    if (out)
        *out = c;
    return whole ? keep(r, &c) : 0;
}

/* ---- every combination ------------------------------------------------------------------------- */

static int exhaustive(fit_run *r)
{
    ls_fit_study *f = r->f;
    int idx[LS_FIT_MAX_FREE] = {0};
    r->total_hint = (long)f->combinations;
    while (true) {
        if (try_idx(r, idx, NULL, NULL) != 0)
            return -1;
        int j = 0;
        while (j < f->nvars && ++idx[j] == f->vars[j].nvalues)
            idx[j++] = 0;
        if (j == f->nvars)
            return 0;
    }
}

/* ---- the continuous stage ---------------------------------------------------------------------- */

typedef struct cont {
    fit_run *r;
    double *last_y;          /* the point judged last (n + 1 values) */
    ls_fit_check *checks;    /* its checks */
    double current;
    bool solved, have;
    long evals;
} cont;

/* A margin as the continuous stage sees it: itself within +-1, compressed
 * logarithmically beyond (so a far-off check still has a slope, and a huge
 * ratio does not swamp the others), within +-MARGIN_CLAMP; undefined is the
 * worst. */
static double clamp_margin(double m)
{
    if (isnan(m))
        return -MARGIN_CLAMP;
    double a = fabs(m) <= 1 ? m : copysign(1 + log(fabs(m)), m);
    return fmax(-MARGIN_CLAMP, fmin(MARGIN_CLAMP, a));
}

/* Solve at exp(y) (the first nvars of y) unless that was the last point. */
static void cont_at(cont *c, const double *y)
{
    fit_run *r = c->r;
    int n = r->f->nvars;
    if (c->have && memcmp(c->last_y, y, (size_t)n * sizeof *y) == 0)
        return;
    memcpy(c->last_y, y, (size_t)n * sizeof *y);
    c->have = true;
    for (int j = 0; j < n; j++)
        r->scratch[j] = exp(y[j]);
    c->solved = solve_at(r, r->scratch);
    c->evals++;
    if (!c->solved)
        return;
    for (int s = 0; s < r->nslots; s++)
        eval_slot(r->f->op, &r->slots[s], &c->checks[s]);
    c->current = supply_current(r->f->op);
}

/* Objective: -t (the margin goal; t is y[n]) or log(current). */
static double cont_objective(unsigned n, const double *y, double *grad, void *data)
{
    (void)grad; /* COBYLA asks for none */
    cont *c = data;
    if (c->r->f->goal != LS_FIT_CURRENT)
        return -y[n - 1];
    cont_at(c, y);
    return c->solved && c->current > 0 ? log(c->current) : 1e3;
}

/* Constraints: t - margin <= 0 for the goal's checks, -margin <= 0 for the
 * limits (every check with the current goal). */
static void cont_constraints(unsigned m, double *out, unsigned n, const double *y, double *grad, void *data)
{
    (void)grad;
    (void)n;
    cont *c = data;
    cont_at(c, y);
    bool margin_goal = c->r->f->goal != LS_FIT_CURRENT;
    double t = margin_goal ? y[c->r->f->nvars] : 0;
    for (unsigned s = 0; s < m; s++) {
        double mg = c->solved ? clamp_margin(c->checks[s].margin) : -MARGIN_CLAMP;
        out[s] = (margin_goal && c->checks[s].in_goal ? t : 0) - mg;
    }
}

/* Run COBYLA from start[] (nvars values); its optimum goes to
 * vars[].optimum and its objective to *obj.  Returns 0, -1 on no memory. */
static int continuous(fit_run *r, const double *start, double *obj)
{
    ls_fit_study *f = r->f;
    int n = f->nvars, dim = n + (f->goal != LS_FIT_CURRENT);
    cont c = {.r = r};
    c.last_y = calloc((size_t)dim, sizeof *c.last_y);
    c.checks = calloc((size_t)(r->nslots ? r->nslots : 1), sizeof *c.checks);
    double *y = calloc((size_t)dim, sizeof *y), *lb = calloc((size_t)dim, sizeof *lb),
           *ub = calloc((size_t)dim, sizeof *ub), *step = calloc((size_t)dim, sizeof *step);
    nlopt_opt o = dim > 0 ? nlopt_create(NLOPT_LN_COBYLA, (unsigned)dim) : NULL;
    int rc = -1;
    if (c.last_y && c.checks && y && lb && ub && step && o) {
        /* on LAPACK's factors: the optimiser's path turns on the last bits
         * of every figure, and the plain path must take the same one */
        if (f->op->solver)
            ls_solver_own_lu(f->op->solver, false);
        for (int j = 0; j < n; j++) {
            lb[j] = log(f->vars[j].lo);
            ub[j] = log(f->vars[j].hi);
            y[j] = log(start[j]);
            step[j] = fmin(0.5, (ub[j] - lb[j]) / 4);
        }
        if (dim > n) { /* t starts at the written values' smallest margin */
            lb[n] = -MARGIN_CLAMP;
            ub[n] = MARGIN_CLAMP;
            cont_at(&c, y);
            double t = MARGIN_CLAMP;
            for (int s = 0; s < r->nslots; s++)
                t = fmin(t, c.solved ? clamp_margin(c.checks[s].margin) : -MARGIN_CLAMP);
            y[n] = t;
            step[n] = 0.5;
        }
        nlopt_set_lower_bounds(o, lb);
        nlopt_set_upper_bounds(o, ub);
        nlopt_set_initial_step(o, step);
        nlopt_set_min_objective(o, cont_objective, &c);
        if (r->nslots > 0)
            nlopt_add_inequality_mconstraint(o, (unsigned)r->nslots, cont_constraints, &c, NULL);
        nlopt_set_xtol_rel(o, 1e-4);
        nlopt_set_maxeval(o, 100 * (n + 1) < 1500 ? 100 * (n + 1) : 1500);
        f->nlopt_status = (int)nlopt_optimize(o, y, obj);
        if (f->op->solver)
            ls_solver_own_lu(f->op->solver, fast_path(f));
        for (int j = 0; j < n; j++)
            f->vars[j].optimum = exp(fmin(ub[j], fmax(lb[j], y[j])));
        rc = 0;
    }
    f->nlopt_evals += c.evals;
    if (o)
        nlopt_destroy(o);
    free(c.last_y);
    free(c.checks);
    free(y);
    free(lb);
    free(ub);
    free(step);
    return rc;
}

/* ---- the neighbourhood and the descent ---------------------------------------------------------- */

/* Index of the first value >= v in var's values (nvalues when none). */
static int lower_index(const ls_fit_var *v, double x)
{
    int lo = 0, hi = v->nvalues;
    while (lo < hi) {
        int mid = (lo + hi) / 2;
        if (v->values[mid] < x)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo;
}

/* Every combination of the w series values on each side of the optimum
 * (w = 2, or 1 when that box is larger than BOX_LIMIT; when even that is,
 * only the value nearest the optimum on a log scale, and the descent goes on
 * from there). */
static int neighbourhood(fit_run *r)
{
    ls_fit_study *f = r->f;
    int n = f->nvars, first[LS_FIT_MAX_FREE], count[LS_FIT_MAX_FREE], idx[LS_FIT_MAX_FREE];
    for (int w = 2; w >= 0; w--) {
        double box = 1;
        for (int j = 0; j < n; j++) {
            const ls_fit_var *v = &f->vars[j];
            int at = lower_index(v, v->optimum);
            if (w == 0) { /* the nearer of the two values around the optimum */
                if (at >= v->nvalues || (at > 0 && v->optimum / v->values[at - 1] < v->values[at] / v->optimum))
                    at--;
                first[j] = at;
                count[j] = 1;
                continue;
            }
            first[j] = at - w < 0 ? 0 : at - w;
            int last = at + w - 1 >= v->nvalues ? v->nvalues - 1 : at + w - 1;
            count[j] = last - first[j] + 1;
            box *= count[j];
        }
        if (box <= BOX_LIMIT)
            break;
    }
    int k[LS_FIT_MAX_FREE] = {0};
    r->total_hint = f->evaluated + 1000;
    while (true) {
        for (int j = 0; j < n; j++)
            idx[j] = first[j] + k[j];
        if (try_idx(r, idx, NULL, NULL) != 0)
            return -1;
        int j = 0;
        while (j < n && ++k[j] == count[j])
            k[j++] = 0;
        if (j == n)
            return 0;
    }
}

/* From the best candidate, move one part one series step at a time while
 * that improves the ranking (steepest step first), within DESCENT_BUDGET solves. */
static int descent(fit_run *r)
{
    ls_fit_study *f = r->f;
    int n = f->nvars, cur[LS_FIT_MAX_FREE], idx[LS_FIT_MAX_FREE];
    ls_fit_goal g = f->goal == LS_FIT_YIELD ? LS_FIT_MARGIN : f->goal;
    if (r->nkeep == 0)
        return 0;
    memcpy(cur, r->keep[0].idx, (size_t)n * sizeof *cur);
    long start = f->evaluated;
    bool moved = true;
    while (moved && f->evaluated - start < DESCENT_BUDGET) {
        moved = false;
        ls_fit_cand here = r->keep[0];   /* the best so far (its vectors stay valid until keep() moves them) */
        if (memcmp(here.idx, cur, (size_t)n * sizeof *cur) != 0)
            memcpy(cur, here.idx, (size_t)n * sizeof *cur);
        for (int j = 0; j < n; j++)
            for (int d = -1; d <= 1; d += 2) {
                memcpy(idx, cur, (size_t)n * sizeof *idx);
                idx[j] += d;
                if (idx[j] < 0 || idx[j] >= f->vars[j].nvalues)
                    continue;
                ls_fit_cand c;
                bool fresh;
                if (try_idx(r, idx, &c, &fresh) != 0)
                    return -1;
                if (fresh && cmp_cand(g, &c, &r->keep[0]) <= 0 && memcmp(r->keep[0].idx, idx, (size_t)n * sizeof *idx) == 0)
                    moved = true;
            }
    }
    return 0;
}

/* ---- how far from the best ------------------------------------------------------------------- */

/* Set found and limit from the best candidate kept and `open`, the limit of
 * the designs not yet solved or ruled out (-inf for the margin, +inf for the
 * current, when there are none; NaN-free: +inf / -inf when one has no bound). */
static void set_limit(fit_run *r, double open)
{
    ls_fit_study *f = r->f;
    bool cur = f->goal == LS_FIT_CURRENT;
    const ls_fit_cand *best = r->nkeep > 0 && r->keep[0].meets ? &r->keep[0] : NULL;
    f->found = best ? (cur ? best->current : best->margin) : NAN;
    f->limit_why = NULL;
    if (best)
        f->limit = cur ? fmin(f->found, open) : fmax(f->found, open);
    else
        f->limit = open;
    if (f->limit == (cur ? -INFINITY : INFINITY)) {
        f->limit = NAN;
        f->limit_why = "a part of the ranges not yet searched has a check without a bound";
    } else if (f->limit == (cur ? INFINITY : -INFINITY)) {
        f->limit_why = "no design in the ranges meets every check";
    }
}

/* ---- branch and bound ---------------------------------------------------------------------------- */

#define BB_BOUND_DIMS 12        /* a box wider than one value in more parts is split without a bound */
#define BB_CACHE 16384          /* points whose checks are kept for the bounds (power of two), at most */
#define BB_BYTES (32L << 20)    /* bytes the cache, and the corner rows, may take each */
#define BB_NOISE 1e-9           /* relative change below which a check is flat along a part */
#define LIMIT_SHARE 0.1         /* share of the search's solves the limit of what it left may take */
#define LIMIT_MIN 2000          /* ... at least this many */
#define BB_SLACK 1e-6           /* relative widening of a limit before a bound may say it is missed */

#define BB_GROUP 8              /* boxes looked at together, their solves one batch (docs/fit.md, Both cores), */
#define BB_GROUP_POINTS 128     /* ... until their corners and combinations reach this many */

/* A box: free part j restricted to series positions lo[j]..hi[j]. */
typedef struct bb_box {
    int lo[LS_FIT_MAX_FREE], hi[LS_FIT_MAX_FREE];
} bb_box;

/* Upper bounds over a box of the smallest goal margin and the smallest margin
 * of every check, and a lower bound of the supply current. */
typedef struct bb_bound {
    double margin, worst, current;
    int unbounded;           /* checks without a bound */
    int margin_at, worst_at; /* the checks that give margin and worst (-1: none) */
} bb_bound;

enum { BB_ENUM, BB_BOUND, BB_WIDE };

/* A box of a group (bb_visit_group). */
typedef struct bb_member {
    bb_box x;
    int act[LS_FIT_MAX_FREE], k;  /* its parts wider than one value */
    int how;                 /* BB_ENUM: solved combination by combination; BB_BOUND: bounded by its
                              * corners; BB_WIDE: too wide for a bound, split */
    int off;                 /* BB_BOUND: its first corner row in corner0 */
    bb_bound bd;             /* its corners' bounds */
    bool out;                /* ... would rule it out */
    int s;                   /* the figure that decides then (bb_deciding) */
    unsigned dep;            /* the parts that figure depends on (bits of act) */
} bb_member;

/* Branch and bound's scratch: a cache of solved points' checks (one row each:
 * value, margin, lo, hi per check, then the current and whether it solved),
 * the rows of a box's corners, and its monotonicity flags. */
typedef struct bb_state {
    int width;               /* doubles in a row: 4 nslots + 2 */
    int cache;               /* entries of the cache (a power of two: BB_CACHE, fewer for wide rows) */
    int dims;                /* most active parts a box is bounded with (BB_BOUND_DIMS, fewer for wide rows) */
    int *keys;               /* BB_CACHE index vectors */
    double *rows;            /* BB_CACHE rows */
    unsigned char *used;
    int filled;
    double *corner;          /* (1 << BB_BOUND_DIMS) rows */
    double *tmp;             /* one row */
    ls_fit_check *checks;    /* nslots */
    int *cidx;               /* a box's corners: (1 << dims) index vectors, */
    double *cval;            /* their values, */
    ls_fit_cand *ccand;      /* and their summaries */
    /* a batch: entry i is the point cidx/cval/ccand[i], solved into row
     * erow[i] (a corner's row, or a step's in srow), or (erank[i]) a
     * combination wanted only if it ranks, with whether it was judged whole */
    double **erow;
    bool *erank;
    bool *whole;
    double *srow;            /* (1 << dims) rows of a group's inward steps */
    unsigned *bstamp;        /* the batch's points by hash (2 << dims slots): stamp bgen when in use, */
    int *bslot;              /* ... and the entry there */
    unsigned bgen;
    double *corner0;         /* the corner rows of a group of boxes (corner points into them) */
    unsigned char *flag0;    /* their flags, flag_size each (flag points into them) */
    size_t flag_size;
    int np, nalias;          /* the batch's entries, and the corner rows that copy one (adst[i] from entry asrc[i]) */
    double **adst;
    int *asrc;
    struct bb_member *grp;   /* BB_GROUP boxes looked at together (bb_visit_group) */
    struct fit_worker *worker;   /* the second thread's op, or NULL (one thread) */
    unsigned char *flag;     /* per (check or current, active part): 1 rises, 2 falls, 4 unknown; value and margin */
    bool limit_varies_any;
} bb_state;

enum { BB_UP = 1, BB_DOWN = 2, BB_BAD = 4 };

static double *row_at(const bb_state *b, double *rows, long i) { return rows + i * b->width; }

/* Hash of an index vector, for the cache. */
static size_t idx_hash(const int *idx, int n)
{
    uint64_t h = 1469598103934665603ull;
    for (int j = 0; j < n; j++) {
        h ^= (uint64_t)(unsigned)idx[j];
        h *= 1099511628211ull;
    }
    return (size_t)(h ^ (h >> 29));
}

/* The cache slot of the series point idx: its entry (*hit) or the empty
 * slot where it would go. */
static size_t cache_find(const fit_run *r, const bb_state *b, const int *idx, bool *hit)
{
    int n = r->f->nvars;
    size_t k = idx_hash(idx, n) & (b->cache - 1);
    *hit = false;
    while (b->used[k]) {
        if (memcmp(&b->keys[k * (size_t)n], idx, (size_t)n * sizeof *idx) == 0) {
            *hit = true;
            return k;
        }
        k = (k + 1) & (b->cache - 1);
    }
    return k;
}

/* Solve candidate c (idx and value set) on op: its summary into c, its
 * checks (into `checks`, nslots of scratch) as a row.  Touches nothing
 * shared but what it reads, so two threads may each run it on an op of
 * their own. */
static void probe_solve(fit_run *r, ls_op *op, bool *nomem, ls_fit_check *checks, ls_fit_cand *c, double *row)
{
    c->checks = checks;
    evaluate_on(r, op, c, nomem);
    c->checks = NULL;
    for (int s = 0; s < r->nslots; s++) {
        const ls_fit_check *q = &checks[s];
        row[4 * s] = c->solved ? q->value : NAN;
        row[4 * s + 1] = c->solved ? q->margin : NAN;
        row[4 * s + 2] = c->solved ? q->lo : NAN;
        row[4 * s + 3] = c->solved ? q->hi : NAN;
    }
    row[4 * r->nslots] = c->current;
    row[4 * r->nslots + 1] = c->solved;
}

/* A point just solved (probe_solve): counted, marked solved, its row
 * cached and the candidate kept.  Returns 0, -1 on no memory. */
static int probe_commit(fit_run *r, bb_state *b, const int *idx, const double *row, const ls_fit_cand *c)
{
    ls_fit_study *f = r->f;
    int n = f->nvars;
    f->evaluated++;
    f->bb_solves++;
    if (seen_before(r, idx, n) < 0) /* marked, so the other stages need not solve it again */
        return -1;
    if (f->progress && (f->evaluated & 63) == 0)
        f->progress(f->progress_ctx, f->evaluated, r->total_hint > f->evaluated ? r->total_hint : f->evaluated);
    bool hit;
    size_t k = cache_find(r, b, idx, &hit);
    if (!hit) {
        if (2 * (b->filled + 1) > b->cache) { /* full: start afresh (the cache only saves solves) */
            memset(b->used, 0, (size_t)b->cache);
            b->filled = 0;
            k = idx_hash(idx, n) & (b->cache - 1);
        }
        b->used[k] = 1;
        b->filled++;
        memcpy(&b->keys[k * (size_t)n], idx, (size_t)n * sizeof *idx);
    }
    memcpy(row_at(b, b->rows, (long)k), row, (size_t)b->width * sizeof *row);
    return keep(r, c);
}

/* The checks of the series point idx into row: from the cache, else solved
 * (and kept, as every candidate).  Returns 0, -1 on no memory. */
static int bb_probe(fit_run *r, bb_state *b, const int *idx, double *row)
{
    ls_fit_study *f = r->f;
    bool hit;
    size_t k = cache_find(r, b, idx, &hit);
    if (hit) {
        memcpy(row, row_at(b, b->rows, (long)k), (size_t)b->width * sizeof *row);
        return 0;
    }
    ls_fit_cand c = {.idx = (int *)idx, .value = r->scratch};
    for (int j = 0; j < f->nvars; j++)
        c.value[j] = f->vars[j].values[idx[j]];
    probe_solve(r, f->op, &r->nomem, b->checks, &c, row);
    return probe_commit(r, b, idx, row, &c);
}

/* Record the sign of the change d between two figures a -> b along an
 * active part into *flag (flat within BB_NOISE of their size). */
static void note_change(unsigned char *flag, double a, double b)
{
    double d = b - a;
    if (a == b) /* the same figure, infinite ones included: flat */
        return;
    if (isnan(d))
        *flag |= BB_BAD;
    else if (d > BB_NOISE * fmax(fabs(a), fabs(b)))
        *flag |= BB_UP;
    else if (d < -BB_NOISE * fmax(fabs(a), fabs(b)))
        *flag |= BB_DOWN;
}

/* Note every figure's change from row a to row b (b one or more series
 * steps up along active part t). */
static void note_rows(const fit_run *r, bb_state *b, int k, int t, const double *a, const double *c)
{
    int ns = r->nslots;
    unsigned char *fv = b->flag, *fm = b->flag + (size_t)(ns + 1) * k;
    bool solved = a[4 * ns + 1] != 0 && c[4 * ns + 1] != 0;
    for (int s = 0; s <= ns; s++) {
        if (!solved) {
            fv[s * k + t] |= BB_BAD;
            fm[s * k + t] |= BB_BAD;
            continue;
        }
        note_change(&fv[s * k + t], a[4 * s], c[4 * s]);   /* (s == ns: the current) */
        if (s < ns) {
            note_change(&fm[s * k + t], a[4 * s + 1], c[4 * s + 1]);
            if (a[4 * s + 2] != c[4 * s + 2] || a[4 * s + 3] != c[4 * s + 3])
                fv[s * k + t] |= BB_BAD; /* the limits move: bound the margin instead */
        }
    }
}

/* Is a figure monotone in every active part (by the flags)? */
static bool flags_monotone(const unsigned char *fl, int k)
{
    for (int t = 0; t < k; t++)
        if ((fl[t] & BB_BAD) || (fl[t] & (BB_UP | BB_DOWN)) == (BB_UP | BB_DOWN))
            return false;
    return true;
}

/* The largest margin of a value in [vmin, vmax] against lo..hi, and 0 at
 * least when the interval reaches the limits widened by BB_SLACK (a check
 * within its comparison's slack passes with margin 0). */
static double interval_margin(double vmin, double vmax, double lo, double hi)
{
    double at = isfinite(lo) && isfinite(hi) ? fmin(vmax, fmax(vmin, (lo + hi) / 2)) : isfinite(lo) ? vmax : vmin;
    double m = isfinite(lo) || isfinite(hi) ? range_margin(at, lo, hi) : INFINITY;
    double wl = isfinite(lo) ? lo - BB_SLACK * fmax(fabs(lo), isfinite(hi) ? hi - lo : 0) : -INFINITY;
    double wh = isfinite(hi) ? hi + BB_SLACK * fmax(fabs(hi), isfinite(lo) ? hi - lo : 0) : INFINITY;
    if (vmax >= wl && vmin <= wh)
        m = fmax(m, 0);
    return m;
}

/* Is check s's margin at most range_margin of its value against lo..hi at
 * every corner, so that a bound of the value bounds the margin?  Not for
 * cm= (the worse of two inputs), nor for an op-amp output without feedback
 * (a comparator passes at a rail: margin +inf); an op-amp at a limit has a
 * margin below that of its clamped output, and one with imax= the smaller
 * of two. */
static bool margin_of_value(const fit_run *r, const bb_state *b, int k, int s)
{
    if (r->slots[s].kind == LS_FITC_OPAMP_CM)
        return false;
    if (r->slots[s].kind == LS_FITC_OPAMP_OUT)
        for (int m = 0; m < 1 << k; m++)
            if (row_at(b, b->corner, m)[4 * s + 1] == INFINITY)
                return false;
    return true;
}

/* Upper bound over the box of check s's margin from the corner rows and its
 * flags, or +inf when it has none. */
static double bound_check(const fit_run *r, const bb_state *b, int k, int s)
{
    int ns = r->nslots, nc = 1 << k;
    const unsigned char *fv = b->flag + (size_t)s * k, *fm = b->flag + (size_t)(ns + 1) * k + (size_t)s * k;
    if (margin_of_value(r, b, k, s) && flags_monotone(fv, k)) {
        double vmin = INFINITY, vmax = -INFINITY;
        for (int m = 0; m < nc; m++) {
            double v = row_at(b, b->corner, m)[4 * s];
            vmin = fmin(vmin, v);
            vmax = fmax(vmax, v);
        }
        if (isfinite(vmin) && isfinite(vmax)) {
            const double *c0 = row_at(b, b->corner, 0);
            vmin -= BB_NOISE * fabs(vmin);
            vmax += BB_NOISE * fabs(vmax);
            return interval_margin(vmin, vmax, c0[4 * s + 2], c0[4 * s + 3]);
        }
    }
    if (flags_monotone(fm, k)) {
        double ub = -INFINITY;
        for (int m = 0; m < nc; m++)
            ub = fmax(ub, row_at(b, b->corner, m)[4 * s + 1]);
        if (!isnan(ub))
            return ub + BB_NOISE * fabs(ub);
    }
    return INFINITY;
}

/* Series positions of corner m of box x (bit t of m: active part act[t] at
 * its upper end) into idx. */
static void corner_idx(const fit_run *r, const bb_box *x, const int *act, int k, int m, int *idx)
{
    memcpy(idx, x->lo, (size_t)r->f->nvars * sizeof *idx);
    for (int t = 0; t < k; t++)
        if (m >> t & 1)
            idx[act[t]] = x->hi[act[t]];
}

/* A second thread's own operating point for candidate solves (the
 * session's netlist record with diagnostics of its own, as tol's trials
 * have), and the thread itself: started once per search and woken for each
 * batch (batch_solve), so a batch costs a wake-up, not a thread. */
typedef struct fit_worker {
    fit_run *r;
    ls_netlist nl;
    ls_arena arena;
    ls_diags diags;
    ls_op op;
    ls_fit_check *checks;    /* nslots */
    bool nomem;
    long fact0;              /* its solver's factorizations after its own solve */
    pthread_t tid;
    bool started;
    pthread_mutex_t mu;
    pthread_cond_t wake;     /* a new batch (gen moved) or quit */
    pthread_cond_t done_cv;  /* every entry of the batch solved */
    unsigned gen;            /* batches handed out */
    bool quit;
    /* the batch: entries 0..np) of b, taken one at a time by either
     * thread under mu (an entry is about 20 us; taking one, tens of ns) */
    bb_state *b;
    int np, next;
    unsigned done;
} fit_worker;

/* Solve entry i of the batch in b on op: a point into its row and summary,
 * or (b->erank[i]) a combination wanted only if it ranks, with whether it
 * was judged whole (evaluate_if_it_can_rank_on: that reads the kept list,
 * which nothing changes while a batch is solved). */
static void batch_entry(fit_run *r, bb_state *b, ls_op *op, bool *nomem, ls_fit_check *checks, int i)
{
    if (b->erank[i])
        b->whole[i] = evaluate_if_it_can_rank_on(r, op, &b->ccand[i], nomem);
    else
        probe_solve(r, op, nomem, checks, &b->ccand[i], b->erow[i]);
}

/* Take and solve entries of batch `gen` until none is left.  Each entry's
 * results go to its own place and depend on its values alone, so which
 * thread takes which entry changes nothing but the time.  The batch ends
 * when every entry is solved, not when the worker wakes: a worker that
 * wakes late finds nothing left of its batch and goes back to sleep. */
static void batch_take(fit_worker *w, unsigned gen, ls_op *op, bool *nomem, ls_fit_check *checks)
{
    /* (gen, done and quit are written under mu, atomically, so that a
     * thread may spin on them without it: spin_until) */
    pthread_mutex_lock(&w->mu);
    while (w->gen == gen && w->next < w->np) {
        int i = w->next++;
        bb_state *b = w->b;
        pthread_mutex_unlock(&w->mu);
        batch_entry(w->r, b, op, nomem, checks, i);
        pthread_mutex_lock(&w->mu);
        __atomic_store_n(&w->done, w->done + 1, __ATOMIC_RELEASE);
        if ((int)w->done == w->np)
            pthread_cond_signal(&w->done_cv);
    }
    pthread_mutex_unlock(&w->mu);
}

/* Spin for up to SPIN_NS while *v equals old (*quit, when given, unset);
 * true when *v moved:
 * the hand-off between the threads comes every millisecond or so, and a
 * thread put to sleep and woken again costs tens of microseconds each way
 * on a virtual machine; a spin that runs out ends in the sleep as before. */
static bool spin_until(const unsigned *v, unsigned old, const bool *quit)
{
    struct timespec t0, t;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    for (unsigned i = 1; __atomic_load_n(v, __ATOMIC_ACQUIRE) == old; i++) {
        if (quit && __atomic_load_n(quit, __ATOMIC_ACQUIRE))
            return false;
#if defined(__x86_64__) || defined(__i386__)
        __builtin_ia32_pause();
#endif
        if ((i & 63) == 0) {
            clock_gettime(CLOCK_MONOTONIC, &t);
            if ((double)(t.tv_sec - t0.tv_sec) * 1e9 + (double)(t.tv_nsec - t0.tv_nsec) > SPIN_NS)
                return false;
        }
    }
    return true;
}

static void *worker_main(void *arg)
{
    fit_worker *w = arg;
    unsigned seen = 0;
    for (;;) {
        spin_until(&w->gen, seen, &w->quit);
        pthread_mutex_lock(&w->mu);
        while (!w->quit && seen == w->gen)
            pthread_cond_wait(&w->wake, &w->mu);
        bool quit = w->quit;
        seen = w->gen;
        pthread_mutex_unlock(&w->mu);
        if (quit)
            return NULL;
        batch_take(w, seen, &w->op, &w->nomem, w->checks);
    }
}

/* Solve the np entries of b's batch, on two threads when there is a worker
 * and enough of them: both take entries one at a time until none is left. */
static void batch_solve(fit_run *r, bb_state *b, int np)
{
    fit_worker *w = b->worker;
    if (!w || np < 4) {
        for (int i = 0; i < np; i++)
            batch_entry(r, b, r->f->op, &r->nomem, b->checks, i);
        return;
    }
    pthread_mutex_lock(&w->mu);
    w->b = b;
    w->np = np;
    w->next = 0;
    __atomic_store_n(&w->done, 0, __ATOMIC_RELEASE);
    unsigned gen = w->gen + 1;
    __atomic_store_n(&w->gen, gen, __ATOMIC_RELEASE);
    pthread_cond_signal(&w->wake);
    pthread_mutex_unlock(&w->mu);
    batch_take(w, gen, r->f->op, &r->nomem, b->checks);
    /* the worker's last entry: spin while it is being solved */
    for (unsigned d = __atomic_load_n(&w->done, __ATOMIC_ACQUIRE); (int)d < np && spin_until(&w->done, d, NULL);)
        d = __atomic_load_n(&w->done, __ATOMIC_ACQUIRE);
    pthread_mutex_lock(&w->mu);
    while ((int)w->done < w->np)
        pthread_cond_wait(&w->done_cv, &w->mu);
    r->nomem |= w->nomem;
    pthread_mutex_unlock(&w->mu);
}

/* Threads for the search: LOADSTACK_THREADS when set, else the online
 * processors; the search uses two at most. */
static int fit_threads(void)
{
    const char *env = getenv("LOADSTACK_THREADS");
    long n = env && *env ? strtol(env, NULL, 10) : sysconf(_SC_NPROCESSORS_ONLN);
    return n >= 2 ? 2 : 1;
}

static void worker_free(fit_worker *w);

/* Set up the second thread's op (solved once at the written values, so
 * its symbolic analysis matches the session's: every candidate then starts
 * from the same state on either op, and solves to the same bits) and start
 * the thread.  Returns the worker, or NULL (one thread: not asked for, or
 * no memory, or it did not solve, or the thread did not start). */
static fit_worker *worker_new(fit_run *r)
{
    if (fit_threads() < 2)
        return NULL;
    fit_worker *w = calloc(1, sizeof *w);
    if (!w)
        return NULL;
    w->r = r;
    pthread_mutex_init(&w->mu, NULL);
    pthread_cond_init(&w->wake, NULL);
    pthread_cond_init(&w->done_cv, NULL);
    ls_arena_init(&w->arena);
    ls_diags_init(&w->diags, &w->arena);
    w->nl = *r->f->nl;
    w->nl.diags = &w->diags;
    w->checks = calloc((size_t)(r->nslots ? r->nslots : 1), sizeof *w->checks);
    ls_options opt = r->f->op->opt;
    opt.phase = NULL; /* the session's progress line is not this op's to move */
    if (w->checks && ls_op_solve(&w->op, &w->nl, &opt) == LS_DONE) {
        w->fact0 = w->op.solver ? ls_solver_stats_of(w->op.solver)->factorizations : 0;
        candidate_path(r->f, &w->op, true);   /* its candidates are the search's */
        w->started = pthread_create(&w->tid, NULL, worker_main, w) == 0;
        if (w->started)
            return w;
    }
    worker_free(w);
    return NULL;
}

/* Stop the thread and free the worker, its candidate factorizations
 * counted into the run's. */
static void worker_free(fit_worker *w)
{
    if (!w)
        return;
    if (w->started) {
        pthread_mutex_lock(&w->mu);
        __atomic_store_n(&w->quit, true, __ATOMIC_RELEASE);
        pthread_cond_signal(&w->wake);
        pthread_mutex_unlock(&w->mu);
        pthread_join(w->tid, NULL);
    }
    if (w->started && w->op.solver)
        w->r->worker_factorizations += ls_solver_stats_of(w->op.solver)->factorizations - w->fact0;
    ls_op_free(&w->op);
    free(w->checks);
    ls_diags_free(&w->diags);
    ls_arena_free(&w->arena);
    pthread_cond_destroy(&w->wake);
    pthread_cond_destroy(&w->done_cv);
    pthread_mutex_destroy(&w->mu);
    free(w);
}

/* Entry i of b's batch: the series point idx (copied), solved into row
 * (a probe: probe_solve), or, with rank, a combination wanted only if it
 * ranks. */
static void batch_add(const fit_run *r, bb_state *b, int i, const int *idx, double *row, bool rank)
{
    const ls_fit_study *f = r->f;
    int n = f->nvars;
    int *at = b->cidx + (size_t)i * n;
    if (at != idx)
        memcpy(at, idx, (size_t)n * sizeof *idx);
    ls_fit_cand *c = &b->ccand[i];
    *c = (ls_fit_cand){.idx = at, .value = b->cval + (size_t)i * n};
    for (int j = 0; j < n; j++)
        c->value[j] = f->vars[j].values[at[j]];
    b->erow[i] = row;
    b->erank[i] = rank;
}

/* A new batch: no point in it yet (batch_find). */
static void batch_begin(bb_state *b)
{
    b->np = 0;
    b->nalias = 0;
    if (++b->bgen == 0) { /* the stamps wrapped: clear them */
        memset(b->bstamp, 0, ((size_t)2 << b->dims) * sizeof *b->bstamp);
        b->bgen = 1;
    }
}

/* The entry of the batch that is the point idx, or -1; when absent and add
 * is set, idx is recorded as entry b->np (the caller adds it). */
static int batch_find(const fit_run *r, bb_state *b, const int *idx, bool add)
{
    int n = r->f->nvars;
    size_t mask = ((size_t)2 << b->dims) - 1, k = idx_hash(idx, n) & mask;
    while (b->bstamp[k] == b->bgen) {
        int e = b->bslot[k];
        if (memcmp(b->cidx + (size_t)e * n, idx, (size_t)n * sizeof *idx) == 0)
            return e;
        k = (k + 1) & mask;
    }
    if (add) {
        b->bstamp[k] = b->bgen;
        b->bslot[k] = b->np;
    }
    return -1;
}

/* Solve the corners of box x (its active parts act[0..k-1]) into the corner
 * rows and note the changes along every edge: those in the cache from it,
 * the others solved (on two threads when there is a worker: each solve is
 * a function of its values alone) and then counted, cached and kept in
 * corner order, so the outcome is the same on one thread or two.  Returns
 * 0, -1 on no memory. */
static int bb_corners(fit_run *r, bb_state *b, const bb_box *x, const int *act, int k)
{
    int nc = 1 << k, n = r->f->nvars, np = 0;
    memset(b->flag, 0, (size_t)2 * (r->nslots + 1) * k);
    for (int m = 0; m < nc; m++) {
        int idx[LS_FIT_MAX_FREE];
        corner_idx(r, x, act, k, m, idx);
        bool hit;
        size_t at = cache_find(r, b, idx, &hit);
        if (hit) {
            memcpy(row_at(b, b->corner, m), row_at(b, b->rows, (long)at), (size_t)b->width * sizeof(double));
            continue;
        }
        batch_add(r, b, np, idx, row_at(b, b->corner, m), false);
        np++;
    }
    batch_solve(r, b, np);
    for (int i = 0; i < np; i++)
        if (probe_commit(r, b, b->cidx + (size_t)i * n, b->erow[i], &b->ccand[i]) != 0)
            return -1;
    for (int m = 0; m < nc; m++)
        for (int t = 0; t < k; t++)
            if (!(m >> t & 1))
                note_rows(r, b, k, t, row_at(b, b->corner, m), row_at(b, b->corner, m | 1 << t));
    return 0;
}

/* The figure a box's corner bounds would rule it out on: the check behind
 * the bound below 0 when nothing in the box meets every check, else the
 * current (index nslots) with the current goal, else the check behind the
 * goal margin's bound. */
static int bb_deciding(const fit_run *r, const bb_bound *bd)
{
    if (bd->worst < 0)
        return bd->worst_at;
    return r->f->goal == LS_FIT_CURRENT ? r->nslots : bd->margin_at;
}

/* Bit mask of the active parts (bits of act) along whose edges figure s
 * changed at all, or was unknown, between the corners: the parts it depends
 * on over the box, by the corners' evidence. */
static unsigned bb_depends(const fit_run *r, const bb_state *b, int k, int s)
{
    int ns = r->nslots;
    const unsigned char *fv = b->flag + (size_t)s * k, *fm = b->flag + (size_t)(ns + 1) * k + (size_t)s * k;
    unsigned d = 0;
    for (int t = 0; t < k; t++)
        if (fv[t] || (s < ns && fm[t]))
            d |= 1u << t;
    return d;
}

/* Which way figure s (a check, or nslots: the current) would have to leave
 * its corners' range inside the box to break the bound the box would be
 * ruled out on: 1 above it (a peak), -1 below it (a valley), 0 either; *col
 * gets the column of the rows that bound is made from (docs/fit.md).  A
 * value bounded toward the top of its interval (the middle of a range above
 * it, or a lower limit) is broken by a peak; toward the bottom by a valley;
 * a margin bounded itself, by a peak; the current's lower bound, by a valley. */
static int bb_danger(const fit_run *r, const bb_state *b, int k, int s, int *col)
{
    int ns = r->nslots;
    if (s == ns) {
        *col = 4 * ns;
        return -1;
    }
    *col = 4 * s + 1;
    if (!margin_of_value(r, b, k, s) || !flags_monotone(b->flag + (size_t)s * k, k))
        return 1;
    double vmin = INFINITY, vmax = -INFINITY;
    for (int m = 0; m < 1 << k; m++) {
        double v = row_at(b, b->corner, m)[4 * s];
        vmin = fmin(vmin, v);
        vmax = fmax(vmax, v);
    }
    if (!isfinite(vmin) || !isfinite(vmax))
        return 1;
    const double *c0 = row_at(b, b->corner, 0);
    double lo = c0[4 * s + 2], hi = c0[4 * s + 3];
    *col = 4 * s;
    if (isfinite(lo) && isfinite(hi))
        return vmax <= (lo + hi) / 2 ? 1 : vmin >= (lo + hi) / 2 ? -1 : 0;
    return isfinite(lo) ? 1 : isfinite(hi) ? -1 : 0;
}

/* Is the change from a to b below noise (note_change would note nothing)? */
static bool flat_change(double a, double b)
{
    unsigned char f = 0;
    note_change(&f, a, b);
    return f == 0;
}

/* Solve the step in from corner m along active part t and note its changes
 * in every figure's flags.  When the edge's ends give figure s the same
 * value (column col) but the step does not, s is not monotone along t: a
 * monotone figure with equal ends is constant between them.  Returns 0, -1
 * on no memory. */
static int bb_step_in(fit_run *r, bb_state *b, const bb_box *x, const int *act, int k, int m, int t, int s, int col)
{
    int idx[LS_FIT_MAX_FREE], ns = r->nslots;
    bool up = m >> t & 1;
    const double *c = row_at(b, b->corner, m), *e = row_at(b, b->corner, m ^ (1 << t));
    corner_idx(r, x, act, k, m, idx);
    idx[act[t]] += up ? -1 : 1;
    if (bb_probe(r, b, idx, b->tmp) != 0)
        return -1;
    if (up)
        note_rows(r, b, k, t, b->tmp, c);
    else
        note_rows(r, b, k, t, c, b->tmp);
    if (s >= 0 && flat_change(c[col], e[col]) && !flat_change(c[col], b->tmp[col])) {
        b->flag[(size_t)s * k + t] |= BB_BAD;
        if (s < ns)
            b->flag[(size_t)(ns + 1) * k + (size_t)s * k + t] |= BB_BAD;
    }
    return 0;
}

static int batch_flush(fit_run *r, bb_state *b);

/* The step in from corner m along active part t of box x, into the batch
 * (with gather: bb_inward) unless it is cached or in the batch already; a
 * full batch is solved first (batch_flush).  Returns 0, -1 on no memory. */
static int step_gather(fit_run *r, bb_state *b, const bb_box *x, const int *act, int k, int m, int t)
{
    int idx[LS_FIT_MAX_FREE];
    corner_idx(r, x, act, k, m, idx);
    idx[act[t]] += m >> t & 1 ? -1 : 1;
    bool hit;
    cache_find(r, b, idx, &hit);
    if (hit || batch_find(r, b, idx, false) >= 0)
        return 0;
    if (b->np == 1 << b->dims && batch_flush(r, b) != 0)
        return -1;
    batch_find(r, b, idx, true);
    batch_add(r, b, b->np, idx, row_at(b, b->srow, b->np), false);
    b->np++;
    return 0;
}

/* The inward steps that test figure s (a check, nslots: the current, or -1:
 * every figure) before the box is ruled out on it.  Only the parts s
 * depends on (dep, bits of act) and one face of the others (at their lower
 * ends) are looked at: along a part it does not depend on, each edge's
 * ends agree, and one step in from the lower end shows a hump between them.
 * Along a part it depends on, a step in at the end of each edge where an
 * excursion that breaks the bound would show (bb_danger: the higher end for
 * a peak, the lower for a valley; both ends when either would; the lower
 * end, by the rule above, when the edge's ends agree).  The changes go into
 * every figure's flags, but only s's are complete enough to bound it.
 * With gather, the steps are only put into the batch (step_gather), to be
 * solved together with other boxes' and then taken from the cache.
 * Returns 0, -1 on no memory. */
static int bb_inward(fit_run *r, bb_state *b, const bb_box *x, const int *act, int k, int s, unsigned dep, bool gather)
{
    int col = 0, danger = s < 0 ? 0 : bb_danger(r, b, k, s, &col);
    unsigned flat = ((1u << k) - 1) & ~dep;
    for (int m = 0; m < 1 << k; m++) {
        if ((unsigned)m & flat)
            continue; /* the face: the parts s does not depend on at their lower ends */
        for (int t = 0; t < k; t++) {
            if (m >> t & 1)
                continue; /* each edge once, from its lower end m */
            int hi = m | 1 << t;
            const double *a = row_at(b, b->corner, m), *z = row_at(b, b->corner, hi);
            bool both = s < 0 || (danger == 0 && !flat_change(a[col], z[col]));
            int end = m;
            if (!both && danger != 0 && !flat_change(a[col], z[col]))
                end = (danger > 0) == (z[col] > a[col]) ? hi : m;
            if (gather) {
                if (step_gather(r, b, x, act, k, end, t) != 0 || (both && step_gather(r, b, x, act, k, hi, t) != 0))
                    return -1;
            } else if (bb_step_in(r, b, x, act, k, end, t, s, col) != 0 ||
                       (both && bb_step_in(r, b, x, act, k, hi, t, s, col) != 0)) {
                return -1;
            }
        }
    }
    return 0;
}

/* The box's bounds from the corner rows and the flags: a figure whose every
 * noted change along a part has one sign is taken as monotone in that part
 * over the box, so its extremes are at corners (docs/fit.md); a check that is
 * not has no bound (counted in out->unbounded). */
static void bb_bounds(fit_run *r, bb_state *b, int k, bb_bound *out)
{
    int ns = r->nslots, nc = 1 << k;
    out->margin = out->worst = INFINITY;
    out->unbounded = 0;
    out->margin_at = out->worst_at = -1;
    for (int s = 0; s < ns; s++) {
        double ub = bound_check(r, b, k, s);
        out->unbounded += ub == INFINITY;
        if (ub < out->worst)
            out->worst = ub, out->worst_at = s;
        if ((r->slots[s].kind == LS_FITC_EXPECT || r->slots[s].kind == LS_FITC_PORT) && ub < out->margin)
            out->margin = ub, out->margin_at = s;
    }
    out->current = -INFINITY;
    if (flags_monotone(b->flag + (size_t)ns * k, k)) {
        out->current = INFINITY;
        for (int m = 0; m < nc; m++)
            out->current = fmin(out->current, row_at(b, b->corner, m)[4 * ns]);
        out->current -= BB_NOISE * fabs(out->current);
        if (isnan(out->current))
            out->current = -INFINITY;
    }
}

/* Can nothing in a box with these bounds enter the ranks that must be right
 * (the reported candidates; with the yield goal, the finalists)? */
static bool bb_prune(const fit_run *r, const bb_bound *bd)
{
    const ls_fit_study *f = r->f;
    int need = f->goal == LS_FIT_YIELD ? 2 * f->top : f->top;
    if (need > r->cap_keep)
        need = r->cap_keep;
    if (r->nkeep < need)
        return false;
    const ls_fit_cand *ref = &r->keep[need - 1];
    if (bd->worst < 0) /* no candidate of the box meets every check */
        return ref->meets || clearly_below(bd->worst, ref->worst);
    if (!ref->meets)
        return false;
    if (f->goal == LS_FIT_CURRENT)
        return clearly_below(ref->current, bd->current);
    return clearly_below(bd->margin, ref->margin);
}

/* bb_prune on figure s alone (bb_deciding's), its bound made again from
 * the flags: the other figures' flags may lack the steps their own bounds
 * would need.  *lost is set when the steps took s's bound away (it turned). */
static bool bb_prune_on(fit_run *r, bb_state *b, int k, const bb_bound *before, int s, bool *lost)
{
    bb_bound one = {.margin = INFINITY, .worst = INFINITY, .current = -INFINITY, .margin_at = -1, .worst_at = -1};
    *lost = false;
    if (s < 0)
        return false;
    if (s == r->nslots) {
        bb_bound all;
        bb_bounds(r, b, k, &all);
        one.current = all.current;
        *lost = one.current == -INFINITY;
    } else if (before->worst < 0) {
        one.worst = bound_check(r, b, k, s);
        *lost = one.worst == INFINITY;
        if (!(one.worst < 0))
            return false; /* the figure that would have ruled it out turned */
    } else {
        one.margin = bound_check(r, b, k, s);
        *lost = one.margin == INFINITY;
    }
    return bb_prune(r, &one);
}

/* Solve, keep and count the batch of combinations b->cidx[0..np) (each
 * marked solved already): on two threads when there is a worker, then kept
 * in order, so the outcome is the same on one thread or two.  Returns 0,
 * -1 on no memory. */
static int enumerate_batch(fit_run *r, bb_state *b, int np)
{
    ls_fit_study *f = r->f;
    int n = f->nvars;
    for (int i = 0; i < np; i++)
        batch_add(r, b, i, b->cidx + (size_t)i * n, NULL, true);
    batch_solve(r, b, np);
    for (int i = 0; i < np; i++) {
        f->evaluated++;
        if (f->progress && (f->evaluated & 63) == 0)
            f->progress(f->progress_ctx, f->evaluated, r->total_hint > f->evaluated ? r->total_hint : f->evaluated);
        if (b->whole[i] && keep(r, &b->ccand[i]) != 0)
            return -1;
    }
    return 0;
}

/* Solve every combination of box x not solved before (try_idx's work, in
 * batches of a box's corners' size).  Returns 0, -1 on no memory. */
static int bb_enumerate(fit_run *r, bb_state *b, const bb_box *x)
{
    int n = r->f->nvars, idx[LS_FIT_MAX_FREE], np = 0, room = 1 << b->dims;
    memcpy(idx, x->lo, (size_t)n * sizeof *idx);
    while (true) {
        int seen = seen_before(r, idx, n);
        if (seen < 0)
            return -1;
        if (seen == 0)
            memcpy(b->cidx + (size_t)np++ * n, idx, (size_t)n * sizeof *idx);
        if (np == room) {
            if (enumerate_batch(r, b, np) != 0)
                return -1;
            np = 0;
        }
        int j = 0;
        while (j < n && ++idx[j] > x->hi[j])
            idx[j] = x->lo[j], j++;
        if (j == n)
            return enumerate_batch(r, b, np);
    }
}

/* The part to split a bounded box along: the one along whose edges the
 * figure closest to ruling the box out (the check behind the bound that
 * decides, or the current) changes most, so the halves' bounds tighten
 * fastest; -1 when that figure does not change (or is unknown). */
static int bb_split_part(const fit_run *r, const bb_state *b, const bb_bound *bd, const int *act, int k)
{
    const ls_fit_study *f = r->f;
    int ns = r->nslots, s = bd->worst < 0 ? bd->worst_at : f->goal == LS_FIT_CURRENT ? ns : bd->margin_at;
    if (s < 0)
        return -1;
    int best = -1;
    double most = 0;
    for (int t = 0; t < k; t++) {
        double sum = 0;
        for (int m = 0; m < 1 << k; m++)
            if (!(m >> t & 1))
                sum += fabs(row_at(b, b->corner, m | 1 << t)[4 * s] - row_at(b, b->corner, m)[4 * s]);
        if (sum > most) /* NaN never is */
            most = sum, best = act[t];
    }
    return best;
}

/* Split x at the middle of part w (-1: the widest, the first of equals)
 * into the stack: the half holding the best candidate's value on top.
 * Returns the stack size. */
static int bb_split(const fit_run *r, const bb_box *x, int w, bb_box *stack, int top)
{
    int n = r->f->nvars;
    if (w < 0)
        for (int j = w = 0; j < n; j++)
            if (x->hi[j] - x->lo[j] > x->hi[w] - x->lo[w])
                w = j;
    int mid = (x->lo[w] + x->hi[w]) / 2;
    bb_box a = *x, b = *x;
    a.hi[w] = mid;
    b.lo[w] = mid + 1;
    bool best_in_b = r->nkeep > 0 && r->keep[0].idx[w] > mid;
    stack[top++] = best_in_b ? a : b;
    stack[top++] = best_in_b ? b : a;
    return top;
}

/* The combinations in box x; its parts wider than one value into act[0..*k-1]. */
static double box_shape(const fit_run *r, const bb_box *x, int *act, int *k)
{
    double count = 1;
    *k = 0;
    for (int j = 0; j < r->f->nvars; j++) {
        count *= x->hi[j] - x->lo[j] + 1;
        if (x->hi[j] > x->lo[j])
            act[(*k)++] = j;
    }
    return count;
}

/* Look at one box popped from the stack: enumerate it when that costs no
 * more than bounding it, else bound it and prune or split.  Returns the new
 * stack size, or -1 on no memory. */
static int bb_visit(fit_run *r, bb_state *b, const bb_box *x, bb_box *stack, int top)
{
    ls_fit_study *f = r->f;
    int act[LS_FIT_MAX_FREE], k;
    double count = box_shape(r, x, act, &k);
    f->bb_boxes++;
    if (count <= 16 || (k <= b->dims && count <= (double)(2 << k))) {
        f->bb_enumerated++;
        long before = f->evaluated;
        int rc = bb_enumerate(r, b, x);
        f->bb_solves += f->evaluated - before;
        return rc != 0 ? -1 : top;
    }
    int w = -1;
    if (k <= b->dims) {
        /* the corners first; the inward steps that test monotonicity only
         * when the corners' bounds would rule the box out */
        bb_bound bd;
        if (bb_corners(r, b, x, act, k) != 0)
            return -1;
        bb_bounds(r, b, k, &bd);
        bool out = bb_prune(r, &bd);
        if (out) {
            /* the steps that test the figure that decides, along the parts it
             * depends on (a check of two parts in a box of four needs a
             * quarter of the steps) */
            int s = bb_deciding(r, &bd);
            if (bb_inward(r, b, x, act, k, s, s < 0 ? (1u << k) - 1 : bb_depends(r, b, k, s), false) != 0)
                return -1;
            bool lost;
            out = bb_prune_on(r, b, k, &bd, s, &lost);
            bd.unbounded += lost;
        }
        f->bb_unbounded += bd.unbounded;
        if (out) {
            f->bb_pruned++;
            return top;
        }
        w = bb_split_part(r, b, &bd, act, k);
    } else {
        f->bb_unbounded += r->nslots;
    }
    return bb_split(r, x, w, stack, top);
}

/* Solve b's batch (on two threads when there is a worker) and commit its
 * entries in their order: a point counted, cached and kept (probe_commit),
 * a combination counted and kept when it was judged whole; then fill the
 * corner rows that copy an entry.  The cache is cleared first when the
 * batch would fill it, so no entry is dropped before it is read.  Starts a
 * new batch.  Returns 0, -1 on no memory. */
static int batch_flush(fit_run *r, bb_state *b)
{
    ls_fit_study *f = r->f;
    int n = f->nvars, np = b->np;
    if (2 * (b->filled + np) > b->cache) {
        memset(b->used, 0, (size_t)b->cache);
        b->filled = 0;
    }
    batch_solve(r, b, np);
    for (int i = 0; i < np; i++) {
        if (b->erank[i]) {
            f->evaluated++;
            f->bb_solves++;
            if (f->progress && (f->evaluated & 63) == 0)
                f->progress(f->progress_ctx, f->evaluated, r->total_hint > f->evaluated ? r->total_hint : f->evaluated);
            if (b->whole[i] && keep(r, &b->ccand[i]) != 0)
                return -1;
        } else if (probe_commit(r, b, b->cidx + (size_t)i * n, b->erow[i], &b->ccand[i]) != 0) {
            return -1;
        }
    }
    for (int i = 0; i < b->nalias; i++)
        memcpy(b->adst[i], b->erow[b->asrc[i]], (size_t)b->width * sizeof(double));
    batch_begin(b);
    return 0;
}

/* Point the corner rows and flags at group member g's. */
static void bb_view(bb_state *b, int g, const bb_member *x)
{
    b->corner = b->corner0 + (size_t)x->off * b->width;
    b->flag = b->flag0 + (size_t)g * b->flag_size;
}

/* Pop the group: up to BB_GROUP boxes from the top of the stack (fewer
 * when their corners and combinations reach BB_GROUP_POINTS: a box of 8
 * parts has 256 corners, enough for a batch on its own, and every box a
 * group adds to the stack's width is one more open box for the limit of a
 * stopped search to bound: bb_open_limits) into b->grp, each classified as
 * bb_visit would.  Returns how many, or 0 when the top box alone is larger
 * than a batch (then it stays on the stack). */
static int group_pop(const fit_run *r, bb_state *b, const bb_box *stack, int *top)
{
    int room = 1 << b->dims, used = 0, rows = 0, ng = 0;
    while (*top > 0 && ng < BB_GROUP && used < BB_GROUP_POINTS) {
        bb_member *x = &b->grp[ng];
        x->x = stack[*top - 1];
        double count = box_shape(r, &x->x, x->act, &x->k);
        int need = 0;
        if (count <= 16 || (x->k <= b->dims && count <= (double)(2 << x->k)))
            x->how = BB_ENUM, need = (int)count;
        else if (x->k <= b->dims)
            x->how = BB_BOUND, need = 1 << x->k;
        else
            x->how = BB_WIDE;
        if (used + need > room)
            break;
        if (x->how == BB_BOUND)
            x->off = rows, rows += need;
        used += need;
        (*top)--;
        ng++;
    }
    return ng;
}

/* The group's first batch: the corners of its boxes to be bounded (from
 * the cache, or solved; a corner two boxes share once) and the
 * combinations of those solved one by one.  Returns 0, -1 on no memory. */
static int group_points(fit_run *r, bb_state *b, int ng)
{
    int n = r->f->nvars;
    batch_begin(b);
    for (int i = 0; i < ng; i++) {
        bb_member *x = &b->grp[i];
        if (x->how != BB_BOUND)
            continue;
        bb_view(b, i, x);
        for (int m = 0; m < 1 << x->k; m++) {
            int idx[LS_FIT_MAX_FREE];
            double *row = row_at(b, b->corner, m);
            corner_idx(r, &x->x, x->act, x->k, m, idx);
            bool hit;
            size_t at = cache_find(r, b, idx, &hit);
            if (hit) {
                memcpy(row, row_at(b, b->rows, (long)at), (size_t)b->width * sizeof(double));
                continue;
            }
            int e = batch_find(r, b, idx, true);
            if (e >= 0) {
                b->adst[b->nalias] = row;
                b->asrc[b->nalias++] = e;
                continue;
            }
            batch_add(r, b, b->np++, idx, row, false);
        }
    }
    for (int i = 0; i < ng; i++) {
        bb_member *x = &b->grp[i];
        if (x->how != BB_ENUM)
            continue;
        r->f->bb_enumerated++;
        int idx[LS_FIT_MAX_FREE];
        memcpy(idx, x->x.lo, (size_t)n * sizeof *idx);
        while (true) {
            if (batch_find(r, b, idx, false) < 0) { /* (a corner in this batch is kept as one) */
                int seen = seen_before(r, idx, n);
                if (seen < 0)
                    return -1;
                if (seen == 0) {
                    batch_find(r, b, idx, true);
                    batch_add(r, b, b->np++, idx, NULL, true);
                }
            }
            int j = 0;
            while (j < n && ++idx[j] > x->x.hi[j])
                idx[j] = x->x.lo[j], j++;
            if (j == n)
                break;
        }
    }
    return batch_flush(r, b);
}

/* The group's second batch: each bounded box's corners' bounds, and the
 * inward steps of those the bounds would rule out.  Returns 0, -1 on no
 * memory. */
static int group_steps(fit_run *r, bb_state *b, int ng)
{
    for (int i = 0; i < ng; i++) {
        bb_member *x = &b->grp[i];
        if (x->how != BB_BOUND)
            continue;
        int k = x->k;
        bb_view(b, i, x);
        memset(b->flag, 0, (size_t)2 * (r->nslots + 1) * k);
        for (int m = 0; m < 1 << k; m++)
            for (int t = 0; t < k; t++)
                if (!(m >> t & 1))
                    note_rows(r, b, k, t, row_at(b, b->corner, m), row_at(b, b->corner, m | 1 << t));
        bb_bounds(r, b, k, &x->bd);
        x->out = bb_prune(r, &x->bd);
        if (x->out) {
            x->s = bb_deciding(r, &x->bd);
            x->dep = x->s < 0 ? (1u << k) - 1 : bb_depends(r, b, k, x->s);
            if (bb_inward(r, b, &x->x, x->act, k, x->s, x->dep, true) != 0)
                return -1;
        }
    }
    return batch_flush(r, b);
}

/* Each box of the group ruled out or split, as bb_visit decides (its steps
 * now from the cache), the last popped first, so the first one's children
 * end on top.  Returns the new stack size, or -1 on no memory. */
static int group_decide(fit_run *r, bb_state *b, int ng, bb_box *stack, int top)
{
    ls_fit_study *f = r->f;
    for (int i = ng - 1; i >= 0; i--) {
        bb_member *x = &b->grp[i];
        if (x->how == BB_WIDE) {
            f->bb_unbounded += r->nslots;
            top = bb_split(r, &x->x, -1, stack, top);
        }
        if (x->how != BB_BOUND)
            continue;
        bb_view(b, i, x);
        bool out = x->out;
        if (out) {
            if (bb_inward(r, b, &x->x, x->act, x->k, x->s, x->dep, false) != 0)
                return -1;
            bool lost;
            out = bb_prune_on(r, b, x->k, &x->bd, x->s, &lost);
            x->bd.unbounded += lost;
        }
        f->bb_unbounded += x->bd.unbounded;
        if (out) {
            f->bb_pruned++;
            continue;
        }
        top = bb_split(r, &x->x, bb_split_part(r, b, &x->bd, x->act, x->k), stack, top);
    }
    return top;
}

/* Look at a group of boxes from the top of the stack together, as bb_visit
 * looks at one, with their solves in two batches: every corner and
 * combination of the group, then the inward steps of the boxes whose
 * corners' bounds would rule them out (docs/fit.md, "Both cores").  Each
 * batch is committed in order, and the decisions are taken after each, box
 * by box, so the search is the same on one thread or two; a batch is large
 * enough for two threads to share.  stack has room for top + 2 BB_GROUP
 * boxes.  Returns the new stack size, or -1 on no memory. */
static int bb_visit_group(fit_run *r, bb_state *b, bb_box *stack, int top)
{
    int ng = group_pop(r, b, stack, &top);
    if (ng == 0) { /* a box larger than a batch: alone */
        bb_box one = stack[--top];
        return bb_visit(r, b, &one, stack, top);
    }
    r->f->bb_boxes += ng;
    if (group_points(r, b, ng) != 0 || group_steps(r, b, ng) != 0)
        return -1;
    top = group_decide(r, b, ng, stack, top);
    b->corner = b->corner0;
    b->flag = b->flag0;
    return top;
}

static void bb_free(bb_state *b)
{
    free(b->keys);
    free(b->rows);
    free(b->used);
    free(b->corner0);
    free(b->tmp);
    free(b->checks);
    free(b->adst);
    free(b->asrc);
    free(b->grp);
    free(b->cidx);
    free(b->cval);
    free(b->ccand);
    free(b->erow);
    free(b->erank);
    free(b->whole);
    free(b->srow);
    free(b->bstamp);
    free(b->bslot);
    free(b->flag0);
    worker_free(b->worker);
}

/* A proven limit over box x of the goal's figure, for a search that stopped
 * with x not yet looked at: the upper bound of the smallest goal margin
 * (with the current goal, the lower bound of the supply current) of any
 * design in x that meets every check, on the same evidence a box is ruled
 * out on (bb_visit): its corners, then the inward steps of the figure the
 * limit comes from, whose bound is made again from them.  A small box is
 * solved combination by combination (its designs are then among those
 * found: -inf, or +inf for the current).  +inf (-inf for the current) when
 * no bound holds.  Returns 0, -1 on no memory. */
static int bb_limit(fit_run *r, bb_state *b, const bb_box *x, double *lim)
{
    ls_fit_study *f = r->f;
    bool cur = f->goal == LS_FIT_CURRENT;
    int act[LS_FIT_MAX_FREE], k;
    double count = box_shape(r, x, act, &k);
    *lim = cur ? -INFINITY : INFINITY;
    if (count <= 16 || (k <= b->dims && count <= (double)(2 << k))) {
        *lim = -*lim;
        return bb_enumerate(r, b, x);
    }
    if (k > b->dims)
        return 0;
    bb_bound bd;
    if (bb_corners(r, b, x, act, k) != 0)
        return -1;
    bb_bounds(r, b, k, &bd);
    if (bd.worst < 0) { /* nothing in it meets every check, unless the steps say otherwise */
        int s = bd.worst_at;
        if (bb_inward(r, b, x, act, k, s, bb_depends(r, b, k, s), false) != 0)
            return -1;
        if (bound_check(r, b, k, s) < 0) {
            *lim = -*lim;
            return 0;
        }
        bb_bounds(r, b, k, &bd);
    }
    int s = cur ? r->nslots : bd.margin_at;
    if (s < 0)
        return 0;
    if (bb_inward(r, b, x, act, k, s, bb_depends(r, b, k, s), false) != 0)
        return -1;
    if (cur) {
        bb_bounds(r, b, k, &bd);
        *lim = bd.current;
    } else {
        *lim = bound_check(r, b, k, s);
    }
    return 0;
}

/* The open box whose limit is the weakest (largest margin, least current):
 * its index in lim[0..n-1]. */
static int weakest(const fit_run *r, const double *lim, int n)
{
    bool cur = r->f->goal == LS_FIT_CURRENT;
    int w = 0;
    for (int i = 1; i < n; i++)
        if (cur ? lim[i] < lim[w] : lim[i] > lim[w])
            w = i;
    return w;
}

/* The limit over every design in the ranges (ls_fit_study's found and
 * limit) for a search that stopped: the better of the best found and every
 * open box's limit (bb_limit).  The boxes the stack left are large, their
 * limits loose: the weakest is then split and its halves bounded again,
 * weakest first, within LIMIT_SHARE of the search's solves (at least
 * LIMIT_MIN), or until it is no better than the best found (those solves
 * are counted apart, in limit_solves).  Returns 0, -1 on no memory. */
static int bb_open_limits(fit_run *r, bb_state *b, const bb_box *stack, int top, long cap)
{
    ls_fit_study *f = r->f;
    bool cur = f->goal == LS_FIT_CURRENT;
    long solves0 = f->bb_solves, evaluated0 = f->evaluated;
    long budget = (long)(LIMIT_SHARE * (double)cap) > LIMIT_MIN ? (long)(LIMIT_SHARE * (double)cap) : LIMIT_MIN;
    int n = top, room = top + 64;
    bb_box *open = malloc((size_t)room * sizeof *open);
    double *lim = malloc((size_t)room * sizeof *lim);
    int rc = open && lim ? 0 : -1;
    if (rc == 0)
        memcpy(open, stack, (size_t)top * sizeof *open);
    for (int i = 0; i < n && rc == 0 && !r->nomem; i++)
        rc = bb_limit(r, b, &open[i], &lim[i]);
    /* (each round splits one box: a round that finds its halves' corners
     * cached solves nothing, so the rounds are capped too) */
    for (long round = 0; rc == 0 && n > 0 && !r->nomem && f->evaluated - evaluated0 < budget && round < budget;
         round++) {
        int w = weakest(r, lim, n);
        const ls_fit_cand *best = r->nkeep > 0 && r->keep[0].meets ? &r->keep[0] : NULL;
        if (lim[w] == (cur ? INFINITY : -INFINITY))
            break; /* nothing open can meet every check */
        if (best && !(cur ? lim[w] < best->current : lim[w] > best->margin))
            break; /* nothing open can beat the best found */
        if (n + 1 >= room) {
            room *= 2;
            bb_box *o2 = realloc(open, (size_t)room * sizeof *open);
            if (o2)
                open = o2;
            double *l2 = realloc(lim, (size_t)room * sizeof *lim);
            if (l2)
                lim = l2;
            if (!o2 || !l2) {
                rc = -1;
                break;
            }
        }
        bb_box x = open[w];
        open[w] = open[--n];
        lim[w] = lim[n];
        n = bb_split(r, &x, -1, open, n);
        for (int i = n - 2; i < n && rc == 0; i++)
            rc = bb_limit(r, b, &open[i], &lim[i]);
    }
    double worst_open = cur ? INFINITY : -INFINITY;
    for (int i = 0; i < n && rc == 0; i++)
        worst_open = cur ? fmin(worst_open, lim[i]) : fmax(worst_open, lim[i]);
    f->limit_solves = f->evaluated - evaluated0;
    f->bb_solves = solves0;
    if (rc == 0)
        set_limit(r, worst_open);
    free(open);
    free(lim);
    return rc;
}

/* Branch and bound's scratch (bb_state), sized for the cache and the
 * widest box it bounds within BB_BYTES, and the second thread (worker_new:
 * NULL on one thread).  Returns false when memory ran out. */
static bool bb_alloc(fit_run *r, bb_state *b)
{
    int n = r->f->nvars;
    while (b->cache > 64 && (long)b->cache * b->width * (long)sizeof(double) > BB_BYTES)
        b->cache /= 2;
    while (b->dims > 2 && (1L << b->dims) * b->width * (long)sizeof(double) > BB_BYTES)
        b->dims--;
    b->keys = malloc((size_t)b->cache * (size_t)n * sizeof *b->keys);
    b->rows = malloc((size_t)b->cache * (size_t)b->width * sizeof *b->rows);
    b->used = calloc((size_t)b->cache, 1);
    size_t room = (size_t)1 << b->dims;
    b->corner = b->corner0 = malloc(room * (size_t)b->width * sizeof *b->corner);
    b->srow = malloc(room * (size_t)b->width * sizeof *b->srow);
    b->tmp = malloc((size_t)b->width * sizeof *b->tmp);
    b->checks = calloc((size_t)(r->nslots ? r->nslots : 1), sizeof *b->checks);
    b->flag_size = (size_t)2 * (r->nslots + 1) * BB_BOUND_DIMS + 1;
    b->flag = b->flag0 = malloc(BB_GROUP * b->flag_size);
    b->cidx = malloc(room * (size_t)n * sizeof *b->cidx);
    b->cval = malloc(room * (size_t)n * sizeof *b->cval);
    b->ccand = malloc(room * sizeof *b->ccand);
    b->erow = malloc(room * sizeof *b->erow);
    b->erank = malloc(room * sizeof *b->erank);
    b->whole = malloc(room * sizeof *b->whole);
    b->adst = malloc(room * sizeof *b->adst);
    b->asrc = malloc(room * sizeof *b->asrc);
    b->bstamp = calloc(2 * room, sizeof *b->bstamp);
    b->bslot = malloc(2 * room * sizeof *b->bslot);
    b->grp = malloc(BB_GROUP * sizeof *b->grp);
    b->worker = worker_new(r);
    return b->keys && b->rows && b->used && b->corner && b->srow && b->tmp && b->checks && b->flag && b->cidx &&
           b->cval && b->ccand && b->erow && b->erank && b->whole && b->adst && b->asrc && b->bstamp && b->bslot &&
           b->grp;
}

/* Branch and bound over the whole candidate set, from the incumbents the
 * earlier stages kept, within max_solves candidate solves (f->proven says
 * whether it finished).  Returns 0, -1 on no memory. */
static int branch_and_bound(fit_run *r)
{
    ls_fit_study *f = r->f;
    int n = f->nvars, depth = 2;
    long cap = f->max_solves > 0 ? f->max_solves : LS_FIT_MAX_SOLVES;
    for (int j = 0; j < n; j++)
        depth += (int)ceil(log2(f->vars[j].nvalues + 1.0)) + 1;
    bb_state b = {.width = 4 * r->nslots + 2, .cache = BB_CACHE, .dims = BB_BOUND_DIMS};
    bool ready = bb_alloc(r, &b);
    int stack_cap = depth + 2 * BB_GROUP;
    bb_box *stack = malloc((size_t)stack_cap * sizeof *stack);
    int rc = -1;
    if (ready && stack) {
        int top = 1;
        for (int j = 0; j < n; j++) {
            stack[0].lo[j] = 0;
            stack[0].hi[j] = f->vars[j].nvalues - 1;
        }
        r->total_hint = f->evaluated + cap;
        long start = f->bb_solves;
        while (top > 0 && f->bb_solves - start < cap && !r->nomem) {
            if (top + 2 * BB_GROUP > stack_cap) { /* a group pops up to BB_GROUP boxes and pushes two for each */
                bb_box *s2 = realloc(stack, (size_t)2 * stack_cap * sizeof *stack);
                if (!s2) {
                    top = -1;
                    break;
                }
                stack = s2;
                stack_cap *= 2;
            }
            top = bb_visit_group(r, &b, stack, top);
        }
        f->proven = top == 0 && !r->nomem;
        rc = top < 0 ? -1 : 0;
        if (rc == 0 && !f->proven && !r->nomem)
            rc = bb_open_limits(r, &b, stack, top, cap);
        else
            set_limit(r, f->goal == LS_FIT_CURRENT ? INFINITY : -INFINITY);
    }
    bb_free(&b);
    free(stack);
    return rc;
}

/* ---- finalists --------------------------------------------------------------------------------- */

/* Monte Carlo acceptance: every check passes on the trial's op. */
static bool trial_feasible(void *ctx, ls_op *op)
{
    const fit_run *r = ctx;
    /* the ports last: each is its own solves, and a trial that fails sooner
     * needs none of them (the verdict is the same in any order) */
    for (int pass = 0; pass < 2; pass++)
        for (int s = 0; s < r->nslots; s++) {
            if ((r->slots[s].kind == LS_FITC_PORT) != (pass == 1))
                continue;
            ls_fit_check k;
            eval_slot(op, &r->slots[s], &k);
            if (!k.pass)
                return false;
        }
    return true;
}

/* Which feasible finalists need a yield: with the yield goal the first
 * 2 * top of them; otherwise those in a group that ties on the goals before
 * the yield and reaches into the first top + 1 (only ties need it).  Marks
 * need[i]; returns how many. */
static int yields_needed(const ls_fit_study *f, const fit_run *r, bool *need)
{
    int n = 0;
    if (f->goal == LS_FIT_YIELD) {
        for (int i = 0; i < r->nkeep && i < 2 * f->top; i++)
            n += need[i] = r->keep[i].meets;
        return n;
    }
    int reach = r->nkeep < f->top + 1 ? r->nkeep : f->top + 1;
    for (int i = 1; i < r->nkeep; i++) {
        const ls_fit_cand *a = &r->keep[i - 1], *b = &r->keep[i];
        if (!b->meets)
            break;
        bool tie = cmp_goal(f->goal, a, b) == 0 && (f->goal == LS_FIT_MARGIN || cmp_goal(LS_FIT_MARGIN, a, b) == 0);
        if (tie && (i < reach || need[i - 1])) {
            n += !need[i - 1] + !need[i];
            need[i - 1] = need[i] = true;
        }
    }
    return n;
}

/* The feasible finalists' yields where the ranking needs them, then the
 * final order.  Returns 0, -1 on no memory. */
static int rank_finalists(fit_run *r)
{
    ls_fit_study *f = r->f;
    bool *need = calloc((size_t)(r->nkeep ? r->nkeep : 1), sizeof *need);
    if (!need)
        return -1;
    int n = yields_needed(f, r, need);
    if (n == 0) {
        free(need);
        return 0;
    }
    f->have_yield = true;
    bool varies = false;
    for (int i = 0; i < f->nl->nparts; i++)
        varies = varies || (f->nl->parts[i].has_value && ls_part_opt(&f->nl->parts[i], "tol", 0) > 0);
    f->yield_trials = varies ? f->trials : 0;
    int done = 0;
    for (int i = 0; i < r->nkeep; i++) {
        ls_fit_cand *c = &r->keep[i];
        if (!need[i])
            continue;
        c->yield = 1; /* nothing varies: every trial would be the nominal design, which is feasible */
        if (!varies)
            continue;
        for (int j = 0; j < f->nvars; j++)
            if (ls_run_set_value(&f->op->run, f->vars[j].part, c->value[j]) != 0) {
                free(need);
                return -1;
            }
        if (ls_tol_pass_rate(f->nl, f->op, f->trials, f->seed, f->normal, trial_feasible, r, &c->yield) != 0) {
            free(need);
            return -1;
        }
        if (f->progress)
            f->progress(f->progress_ctx, ++done, n);
    }
    free(need);
    if (f->goal == LS_FIT_YIELD) /* only the finalists with a yield are ranked by it */
        while (r->nkeep > 2 * f->top)
            cand_free(&r->keep[--r->nkeep]);
    /* insertion sort: stable, and the list is short; a candidate without a
     * yield ties with every other on it, so the yields reorder only their groups */
    for (int i = 1; i < r->nkeep; i++)
        for (int j = i; j > 0 && cmp_cand(f->goal, &r->keep[j], &r->keep[j - 1]) < 0; j--) {
            ls_fit_cand t = r->keep[j];
            r->keep[j] = r->keep[j - 1];
            r->keep[j - 1] = t;
        }
    return 0;
}

/* The reported candidates with every check kept. */
static int report_checks(fit_run *r)
{
    ls_fit_study *f = r->f;
    int n = r->nkeep < f->top ? r->nkeep : f->top;
    for (int i = 0; i < n; i++) {
        ls_fit_cand *c = &r->keep[i];
        c->checks = calloc((size_t)(r->nslots ? r->nslots : 1), sizeof *c->checks);
        if (!c->checks)
            return -1;
        c->nchecks = r->nslots;
        if (solve_at(r, c->value))
            judge(r, f->op, c);
        else
            c->nchecks = 0;
    }
    for (int i = n; i < r->nkeep; i++)
        cand_free(&r->keep[i]);
    r->nkeep = n;
    return 0;
}

/* ---- set-up ------------------------------------------------------------------------------------ */

/* The series values of each free part inside its range.  Returns LS_DONE,
 * LS_BAD_REQUEST (a range holds no series value: f->refused is LS_FIT_EMPTY)
 * or LS_NO_MEMORY. */
static ls_outcome make_vars(ls_fit_study *f)
{
    const ls_netlist *nl = f->nl;
    f->vars = calloc((size_t)nl->nfrees, sizeof *f->vars);
    if (!f->vars)
        return LS_NO_MEMORY;
    f->nvars = nl->nfrees;
    f->combinations = 1;
    ls_outcome code = LS_DONE;
    for (int j = 0; j < nl->nfrees; j++) {
        const ls_freevar *fv = &nl->frees[j];
        ls_fit_var *v = &f->vars[j];
        v->part = fv->part;
        v->lo = fv->lo;
        v->hi = fv->hi;
        v->series = fv->series ? fv->series : f->series;
        v->start = nl->parts[fv->part].value;
        v->optimum = NAN;
        const ls_eseries *es = ls_eseries_find(v->series);
        int d0 = (int)floor(log10(fv->lo)) - 1, d1 = (int)floor(log10(fv->hi)) + 1;
        v->values = malloc((size_t)(d1 - d0 + 1) * (size_t)es->count * sizeof *v->values);
        if (!v->values)
            return LS_NO_MEMORY;
        for (int d = d0; d <= d1; d++)
            for (int i = 0; i < es->count; i++) {
                double x = ls_eseries_value(es, i, d);
                if (x >= fv->lo * (1 - 1e-9) && x <= fv->hi * (1 + 1e-9))
                    v->values[v->nvalues++] = x;
            }
        if (v->nvalues == 0) {
            code = LS_BAD_REQUEST;
            f->refused = LS_FIT_EMPTY;
        }
        f->combinations *= v->nvalues;
    }
    return code;
}

/* Save the operating point at the written values (every candidate starts there). */
static int save_start(fit_run *r)
{
    const ls_netlist *nl = r->f->nl;
    ls_op *op = r->f->op;
    r->x0 = malloc((size_t)(op->mna.n ? op->mna.n : 1) * sizeof *r->x0);
    r->have_run0 = ls_run_init(&r->run0, nl) == 0 && ls_run_copy(&r->run0, &op->run) == 0;
    if (!r->x0 || !r->have_run0)
        return -1;
    if (op->mna.n > 0)
        memcpy(r->x0, op->x, (size_t)op->mna.n * sizeof *r->x0);
    return 0;
}

/* The search proper, once set up. */
static int search(fit_run *r)
{
    ls_fit_study *f = r->f;
    double limit = f->exhaustive_limit > 0 ? f->exhaustive_limit : LS_FIT_EXHAUSTIVE;
    if (f->combinations <= limit) {
        f->exhaustive = f->proven = true;
        int rc = exhaustive(r);
        set_limit(r, f->goal == LS_FIT_CURRENT ? INFINITY : -INFINITY);
        return rc;
    }
    /* Two starts, the written values and the middle of the ranges (on a log
     * scale): the continuous optimum is local, and the written values may sit
     * in a corner.  Each start's neighbourhood is searched; the optimum
     * reported is the better start's. */
    double start[LS_FIT_MAX_FREE], opt[LS_FIT_MAX_FREE], best = INFINITY;
    for (int k = 0; k < 2; k++) {
        for (int j = 0; j < f->nvars; j++)
            start[j] = k == 0 ? f->vars[j].start : sqrt(f->vars[j].lo * f->vars[j].hi);
        double obj = INFINITY;
        if (continuous(r, start, &obj) != 0 || neighbourhood(r) != 0)
            return -1;
        if (k == 0 || obj < best) {
            best = obj;
            for (int j = 0; j < f->nvars; j++)
                opt[j] = f->vars[j].optimum;
        }
    }
    for (int j = 0; j < f->nvars; j++)
        f->vars[j].optimum = opt[j];
    if (descent(r) != 0)
        return -1;
    return branch_and_bound(r);
}

/* After the search: solve the written values again (the session's op as it
 * was), and make the run's code say so when that fails or when a candidate
 * ran short of memory (its error is in `scratch`, the candidates' diagnostics:
 * they are not what they seem).  Returns the run's outcome. */
static ls_outcome put_back(fit_run *r, ls_outcome code, const ls_diags *scratch)
{
    ls_fit_study *f = r->f;
    double *start = r->scratch;
    for (int j = 0; start && j < f->nvars; j++)
        start[j] = f->vars[j].start;
    bool back = start && r->x0 && r->have_run0 && solve_at(r, start);
    if (scratch->nomem > 0 && code == LS_DONE)
        code = LS_NO_MEMORY;
    if (scratch->nomem > 0)
        r->nomem = true;
    if (code == LS_DONE && !back)
        code = r->nomem ? LS_NO_MEMORY : LS_UNSOLVABLE;
    return code;
}

/* The study's results cleared before a search. */
static void reset_out(ls_fit_study *f)
{
    f->vars = NULL;
    f->best = NULL;
    f->nvars = f->nbest = 0;
    f->evaluated = f->nlopt_evals = 0;
    f->nlopt_status = 0;
    f->exhaustive = f->any_feasible = f->have_yield = f->proven = f->fell_back = false;
    f->bb_solves = f->bb_boxes = f->bb_pruned = f->bb_enumerated = f->bb_unbounded = 0;
    f->found = f->limit = NAN;
    f->limit_why = NULL;
    f->limit_solves = 0;
    f->refused = LS_FIT_SEARCHED;
}

/* One search of the study (ls_fit_run).  *redo is set when the chosen
 * design passed every check on the fast path and fails one on the full
 * path (a check within rounding of its limit): the search must run again
 * with every candidate on the full path; nothing is kept then. */
static ls_outcome fit_search(ls_fit_study *f, bool *redo)
{
    reset_out(f);
    *redo = false;
    if (f->nl->nfrees == 0 || f->nl->nfrees > LS_FIT_MAX_FREE) {
        f->refused = f->nl->nfrees == 0 ? LS_FIT_NOFREE : LS_FIT_TOOMANY;
        return LS_BAD_REQUEST;
    }
    if (f->top < 1)
        f->top = 1;
    ls_outcome code = make_vars(f);
    if (code != LS_DONE)
        return code;
    fit_run r = {.f = f};
    r.cap_keep = f->top * 4 > 20 ? f->top * 4 : 20;
    r.keep = calloc((size_t)r.cap_keep, sizeof *r.keep);
    r.scratch = malloc((size_t)f->nvars * sizeof *r.scratch);
    ls_diags scratch;
    ls_diags_init(&scratch, f->arena);
    ls_diags *kept = f->nl->diags;
    f->nl->diags = &scratch;   /* a candidate that does not solve is a candidate that fails, not an error */
    code = LS_NO_MEMORY;
    const ls_solver_stats *ss = f->op->solver ? ls_solver_stats_of(f->op->solver) : NULL;
    long fact0 = ss ? ss->factorizations : 0, an0 = ss ? ss->analyses : 0;
    candidate_path(f, f->op, true);
    bool searched = r.keep && r.scratch && make_slots(&r) == 0 && save_start(&r) == 0 && search(&r) == 0;
    candidate_path(f, f->op, false);
    bool fast_meets = searched && r.nkeep > 0 && r.keep[0].meets && fast_path(f);
    if (searched && rank_finalists(&r) == 0 && report_checks(&r) == 0 && !r.nomem)
        code = LS_DONE;
    *redo = code == LS_DONE && fast_meets && (!r.keep[0].meets || f->redo_test);
    f->factorizations = (ss ? ss->factorizations - fact0 : 0) + r.worker_factorizations;
    f->analyses = ss ? ss->analyses - an0 : 0;
    code = put_back(&r, code, &scratch);
    f->nl->diags = kept;
    ls_diags_free(&scratch);
    f->best = r.keep;
    f->nbest = r.nkeep;
    f->any_feasible = r.nkeep > 0 && r.keep[0].meets;
    if (code != LS_DONE || *redo) {
        for (int i = 0; i < r.nkeep; i++)
            cand_free(&r.keep[i]);
        free(r.keep);
        f->best = NULL;
        f->nbest = 0;
    }
    free(r.slots);
    free(r.x0);
    ls_run_free(&r.run0);
    free(r.seen);
    free(r.scratch);
    return code;
}

/* The search; when the fast path's choice fails on the full path
 * (fit_search's redo), again with every candidate on the full path, and
 * f->fell_back says so (docs/fit.md, "The search"). */
ls_outcome ls_fit_run(ls_fit_study *f)
{
    bool redo;
    ls_outcome code = fit_search(f, &redo);
    if (!redo)
        return code;
    for (int j = 0; j < f->nvars; j++)
        free(f->vars[j].values);
    free(f->vars);
    bool plain = f->plain;
    f->plain = true;
    code = fit_search(f, &redo);
    f->plain = plain;
    f->fell_back = true;
    return code;
}

void ls_fit_free(ls_fit_study *f)
{
    for (int i = 0; i < f->nbest; i++)
        cand_free(&f->best[i]);
    free(f->best);
    for (int j = 0; f->vars && j < f->nvars; j++)
        free(f->vars[j].values);
    free(f->vars);
    f->best = NULL;
    f->vars = NULL;
    f->nbest = f->nvars = 0;
}

/* ---- words --------------------------------------------------------------------------------------- */

const char *ls_fit_check_text(const ls_fit_study *f, const ls_fit_check *c, char *buf, size_t n)
{
    const ls_netlist *nl = f->nl;
    const char *name = c->kind == LS_FITC_EXPECT ? NULL : nl->parts[c->index].name;
    switch (c->kind) {
    case LS_FITC_EXPECT: snprintf(buf, n, "%s", nl->checks[c->index].text); break;
    case LS_FITC_PORT:
        if (isinf(c->lo) && c->lo < 0)
            snprintf(buf, n, "port %s: abs(sag) <= budget", name);
        else
            snprintf(buf, n, "port %s: ratio >= %g", name, c->lo);
        break;
    case LS_FITC_RATING: snprintf(buf, n, "%s: power <= rating", name); break;
    case LS_FITC_VMAX: snprintf(buf, n, "%s: abs(voltage) <= vmax", name); break;
    case LS_FITC_IMAX: snprintf(buf, n, "%s: abs(current) <= imax", name); break;
    case LS_FITC_OPAMP_OUT: snprintf(buf, n, "%s: output inside its rails and current limit", name); break;
    case LS_FITC_OPAMP_CM: snprintf(buf, n, "%s: inputs inside cm=", name); break;
    case LS_FITC_ADC_RANGE: snprintf(buf, n, "%s: input inside 0..ref", name); break;
    case LS_FITC_ADC_SOURCE: snprintf(buf, n, "%s: source resistance <= max_source", name); break;
    }
    return buf;
}

const char *ls_fit_goal_name(ls_fit_goal g)
{
    static const char *const names[] = {"margin", "yield", "current"};
    assert((int)g >= 0 && (size_t)g < sizeof names / sizeof names[0]);
    return names[g];
}

int ls_fit_goal_of(const char *name)
{
    for (int g = 0; g < 3; g++)
        if (strcmp(name, ls_fit_goal_name((ls_fit_goal)g)) == 0)
            return g;
    return -1;
}
