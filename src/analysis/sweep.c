/* sweep.c — the points of a sweep and their solves (see sweep.h). */
#include "analysis/sweep.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "elab/elab.h"
#include "parts/parts.h"
#include "analysis/newton.h"

void ls_sweep_points(double from, double to, int n, bool log_scale, double *x)
{
    for (int i = 0; i < n; i++) {
        double f = (double)i / (double)(n - 1);
        x[i] = log_scale ? from * pow(to / from, f) : from + (to - from) * f;
    }
    x[0] = from;
    x[n - 1] = to;
}

void ls_sweeper_init(ls_sweeper *w, const ls_netlist *nl, const ls_letdeps *deps, const ls_options *o)
{
    memset(w, 0, sizeof *w);
    w->nl = nl;
    w->deps = deps;
    w->opt = *o;
    w->opt.phase = NULL;
    w->opt.phase_ctx = NULL;
    w->opt.start = NULL;
    w->opt.keep_states = false;
}

void ls_sweeper_free(ls_sweeper *w)
{
    if (w->have_op)
        ls_op_free(&w->op);
    if (w->have_point) {
        free(w->lets);
        ls_run_free(&w->point);
    }
    w->lets = NULL;
    w->have_op = w->have_point = w->ready = false;
}

/* The point's lets (from the netlist's) and its run, on first use.  false
 * when out of memory. */
static bool point_ready(ls_sweeper *w)
{
    if (w->have_point)
        return true;
    const ls_netlist *nl = w->nl;
    w->lets = malloc((size_t)(nl->nparams ? nl->nparams : 1) * sizeof *w->lets);
    if (!w->lets)
        return false;
    if (ls_run_init(&w->point, nl) != 0) {
        ls_run_free(&w->point);
        free(w->lets);
        w->lets = NULL;
        return false;
    }
    for (int i = 0; i < nl->nparams; i++)
        w->lets[i] = nl->params[i].value;
    w->have_point = true;
    return true;
}

/* Run entry e's program on the lets' values `lets`.  Returns false where the elaborator
 * would have reported an error: a division by zero, a value that is not a
 * finite number. */
static bool run(const ls_letdeps *d, const ls_ld_entry *e, const double *lets, double *out)
{
    double st[LS_LD_STACK];
    st[0] = 0;
    int sp = 0;
    for (int i = e->code; i < e->code + e->ncode; i++) {
        const ls_ld_code *c = &d->code[i];
        switch (c->op) {
        case LDC_NUM: st[sp++] = c->num; break;
        case LDC_PARAM: st[sp++] = lets[c->arg]; break;
        case LDC_NEG: st[sp - 1] = -st[sp - 1]; break;
        case LDC_BIN:
            if (c->arg == LS_OP_DIV && st[sp - 1] == 0)
                return false;
            st[sp - 2] = ls_apply_op(c->arg, st[sp - 2], st[sp - 1]);
            sp--;
            if (!isfinite(st[sp - 1]))
                return false;
            break;
        case LDC_CALL:
            sp -= c->nargs;
            st[sp] = ls_apply_func(c->arg, st + sp, c->nargs);
            if (!isfinite(st[sp++]))
                return false;
            break;
        }
    }
    if (sp != 1)
        return false;
    *out = st[0];
    return isfinite(*out);
}

/* The checks the elaborator makes on a part's value or option, as a
 * predicate. */
static bool part_value_ok(const ls_ld_entry *e, double v)
{
    return ls_elab_value_ok(e->flags, v) && !(e->is_tol && v >= 1);
}

/* Is a range's low end below its high end, where both are on one node (the
 * elaborator's check on the whole range)?  r: the two ends. */
static bool range_ok(const ls_level *r)
{
    return r[0].node != r[1].node || r[0].volts < r[1].volts;
}

/* What became of setting a point's values. */
typedef enum applied { APPLIED, APPLY_REFUSED, APPLY_NOMEM } applied;

/* Set the followed let to x in the sweeper's lets and recompute everything
 * that depends on it into its point run, in the order the elaborator
 * evaluated them.  APPLY_REFUSED when a value fails the elaborator's checks
 * at x or the record cannot be used (structural, nomem, no root);
 * APPLY_NOMEM when memory ran out.  Either way the point is then partly
 * set: apply again before using it. */
static applied apply(ls_sweeper *w, double x)
{
    const ls_letdeps *d = w->deps;
    const ls_netlist *nl = w->nl;
    if (d->structural || d->nomem || d->root < 0 || d->root >= nl->nparams || !isfinite(x))
        return APPLY_REFUSED;
    if (!point_ready(w))
        return APPLY_NOMEM;
    ls_run *r = &w->point;
    w->lets[d->root] = x;
    for (int i = 0; i < d->n; i++) {
        const ls_ld_entry *e = &d->e[i];
        double v = 0;
        bool nomem = false;
        if (e->kind != LD_QCONST && !run(d, e, w->lets, &v))
            return APPLY_REFUSED;
        switch (e->kind) {
        case LD_PARAM: w->lets[e->target] = v; break;
        case LD_VALUE:
            if (!part_value_ok(e, v))
                return APPLY_REFUSED;
            nomem = ls_run_set_value(r, e->target, v) != 0;
            break;
        case LD_OPT:
            if (!part_value_ok(e, v))
                return APPLY_REFUSED;
            nomem = ls_run_set_opt(r, e->target, e->slot, v) != 0 ||
                    (e->is_main && ls_run_set_value(r, e->target, v) != 0);
            break;
        case LD_BUDGET:
            if (!(v > 0))
                return APPLY_REFUSED;
            nomem = ls_run_set_budget(r, e->target, v) != 0;
            break;
        case LD_RANGE:
            if (ls_run_set_range(r, e->target, e->slot / 2, e->slot % 2, v * e->sign) != 0)
                return APPLY_NOMEM;
            /* the elaborator's check on the whole range, once both ends are known */
            if (e->slot % 2 == 1 || i + 1 == d->n || d->e[i + 1].kind != LD_RANGE ||
                d->e[i + 1].target != e->target || d->e[i + 1].slot != e->slot + 1)
                if (!range_ok(ls_run_range(r, &nl->parts[e->target], e->slot / 2)))
                    return APPLY_REFUSED;
            break;
        case LD_QCONST: nomem = ls_run_set_qconst(r, e->q, w->lets[e->target]) != 0; break;
        }
        if (nomem)
            return APPLY_NOMEM;
    }
    return APPLIED;
}

bool ls_sweep_set_value(ls_sweeper *w, double x)
{
    return apply(w, x) == APPLIED;
}

/* Part p as run r has it: a copy of its record whose options and ranges are
 * the run's, for the table's functions that read a part alone (its branch
 * count, DC edges, ...).  optbuf and rangebuf hold the copies. */
static ls_part part_in(const ls_run *r, const ls_part *p, double *optbuf, ls_level (*rangebuf)[2])
{
    ls_part v = *p;
    int row = ls_run_row(r, p);
    if (row >= 0) {
        memcpy(optbuf, r->set->opt[row], LS_MAX_OPTS * sizeof *optbuf);
        v.opt = optbuf;
        if (p->range) {
            memcpy(rangebuf, r->set->range[row], LS_MAX_RANGES * sizeof *rangebuf);
            v.range = rangebuf;
        }
    }
    v.value = ls_run_value(r, p);
    return v;
}

/* Do the parts the let reaches keep, at the point, the shape they were
 * elaborated with (a junction's rbulk= from zero to positive adds a branch
 * unknown, a source's rint= from zero makes its edge conductive)?  The
 * netlist's numbering of the unknowns and its topology checks hold only
 * then; the table's functions that read a part alone read the netlist. */
static bool shape_kept(const ls_sweeper *w)
{
    const ls_letdeps *d = w->deps;
    double opt[LS_MAX_OPTS];
    ls_level range[LS_MAX_RANGES][2];
    for (int i = 0; i < d->nparts; i++) {
        const ls_part *p = &w->nl->parts[d->parts[i]];
        ls_part q = part_in(&w->point, p, opt, range);
        if (!ls_part_same_shape(p, &q))
            return false;
    }
    return true;
}

ls_outcome ls_sweeper_solve(ls_sweeper *w, double x, bool fresh)
{
    applied set = apply(w, x);
    if (set == APPLY_NOMEM) {   /* not a point to elaborate afresh: the study cannot go on */
        ls_error(w->nl->diags, LS_NOLOC, "out of memory setting the values of a sweep point");
        w->op.nomem = true;
        w->ready = false;
        return LS_NO_MEMORY;
    }
    if (set != APPLIED) {
        w->ready = false;
        return LS_REELABORATE;
    }
    if (!shape_kept(w)) {
        w->ready = false;
        w->restructured = true;
        return LS_REELABORATE;
    }
    ls_outcome code;
    if (fresh || !w->ready) {
        if (w->have_op)
            ls_op_free(&w->op);
        w->have_op = true;
        ls_options o = w->opt;
        o.start = &w->point;   /* the point's values; the parts' first linearization points */
        code = ls_op_solve(&w->op, w->nl, &o);
        /* the points after it change the parts the let reaches: when few
         * rows change, the factor may be kept and updated (solver.h) */
        if (code == LS_DONE && w->op.solver && !ls_newton_needed(w->nl))
            ls_solver_allow_update(w->op.solver, &w->op.mna.a);
    } else if (ls_run_copy_study(&w->op.run, &w->point) != 0) {
        ls_error(w->nl->diags, LS_NOLOC, "out of memory setting the values of a sweep point");
        w->op.nomem = true;
        code = LS_NO_MEMORY;
    } else {
        /* only the parts the let reaches changed: in a linear circuit (no
         * states stamped) only their entries are restamped */
        if (!ls_newton_needed(w->nl))
            ls_mna_expect_changes(&w->op.mna, w->deps->parts, w->deps->nparts);
        code = ls_op_resolve(&w->op);   /* numeric refactor, the analysis kept */
    }
    w->ready = code == LS_DONE;
    return code;
}
