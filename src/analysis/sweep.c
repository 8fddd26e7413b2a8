/* sweep.c — the points of a sweep and their solves (see sweep.h). */
#include "analysis/sweep.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "lang/lexer.h"
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

static bool same_branches(ls_sweeper *w, bool record);

void ls_sweeper_init(ls_sweeper *w, ls_netlist *nl, const ls_letdeps *deps, const ls_options *o)
{
    memset(w, 0, sizeof *w);
    w->nl = nl;
    w->deps = deps;
    w->opt = *o;
    w->opt.phase = NULL;
    w->opt.phase_ctx = NULL;
    /* the branch unknowns as elaborated: the netlist's numbering of them is
     * fixed (run.h), so a point that changes a count is elaborated afresh
     * (out of memory here: every point is) */
    if (nl)
        same_branches(w, true);
}

void ls_sweeper_free(ls_sweeper *w)
{
    if (w->have_op)
        ls_op_free(&w->op);
    free(w->branches);
    w->branches = NULL;
    w->have_op = w->ready = false;
}

/* Run entry e's program on nl's lets.  Returns false where the elaborator
 * would have reported an error: a division by zero, a value that is not a
 * finite number. */
static bool run(const ls_letdeps *d, const ls_ld_entry *e, const ls_netlist *nl, double *out)
{
    double st[LS_LD_STACK];
    st[0] = 0;
    int sp = 0;
    for (int i = e->code; i < e->code + e->ncode; i++) {
        const ls_ld_code *c = &d->code[i];
        switch (c->op) {
        case LDC_NUM: st[sp++] = c->num; break;
        case LDC_PARAM: st[sp++] = nl->params[c->arg].value; break;
        case LDC_NEG: st[sp - 1] = -st[sp - 1]; break;
        case LDC_BIN:
            if (c->arg == T_SLASH && st[sp - 1] == 0)
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

/* Set the followed let to x in nl (the netlist the record was made with) and
 * recompute everything that depends on it, in the order the elaborator
 * evaluated them.  Returns true, or false when a value fails the
 * elaborator's checks at x (nl is then partly updated: apply again before
 * using it) or the record cannot be used (structural, nomem, no root). */
static bool apply(const ls_letdeps *d, ls_netlist *nl, double x)
{
    if (d->structural || d->nomem || d->root < 0 || d->root >= nl->nparams || !isfinite(x))
        return false;
    nl->params[d->root].value = x;
    for (int i = 0; i < d->n; i++) {
        const ls_ld_entry *e = &d->e[i];
        double v = 0;
        if (e->kind != LD_QCONST && !run(d, e, nl, &v))
            return false;
        switch (e->kind) {
        case LD_PARAM: nl->params[e->target].value = v; break;
        case LD_VALUE:
            if (!part_value_ok(e, v))
                return false;
            nl->parts[e->target].value = v;
            break;
        case LD_OPT:
            if (!part_value_ok(e, v))
                return false;
            nl->parts[e->target].opt[e->slot] = v;
            if (e->is_main)
                nl->parts[e->target].value = v;
            break;
        case LD_BUDGET:
            if (!(v > 0))
                return false;
            nl->budgets[e->target].value = v;
            break;
        case LD_RANGE: {
            ls_level *r = nl->parts[e->target].range[e->slot / 2];
            r[e->slot % 2].volts = v * e->sign;
            /* the elaborator's check on the whole range, once both ends are known */
            if (e->slot % 2 == 1 || i + 1 == d->n || d->e[i + 1].kind != LD_RANGE ||
                d->e[i + 1].target != e->target || d->e[i + 1].slot != e->slot + 1)
                if (r[0].node == r[1].node && !(r[0].volts < r[1].volts))
                    return false;
            break;
        }
        case LD_QCONST: e->q->value = nl->params[e->target].value; break;
        }
    }
    return true;
}

bool ls_sweep_set_value(ls_sweeper *w, double x)
{
    return apply(w->deps, w->nl, x);
}

/* Do the parts the let reaches still have the branch unknowns they had when
 * elaborated (a junction's rbulk= from zero to positive adds one)?  The
 * netlist's numbering of the unknowns is valid only then.  With record set,
 * note them instead.  false also when out of memory noting them. */
static bool same_branches(ls_sweeper *w, bool record)
{
    const ls_letdeps *d = w->deps;
    if (record) {
        free(w->branches);
        w->branches = malloc((size_t)(d->nparts ? d->nparts : 1) * sizeof *w->branches);
        if (!w->branches)
            return false;
    }
    for (int i = 0; i < d->nparts; i++) {
        const ls_part *p = &w->nl->parts[d->parts[i]];
        int b = p->kind->branches ? p->kind->branches(p) : 0;
        if (record)
            w->branches[i] = b;
        else if (!w->branches || w->branches[i] != b)
            return false;
    }
    return true;
}

int ls_sweeper_solve(ls_sweeper *w, double x, bool fresh)
{
    if (!ls_sweep_set_value(w, x)) {
        w->ready = false;
        return LS_SWEEP_REELABORATE;
    }
    if (!same_branches(w, false)) {
        w->ready = false;
        w->restructured = true;
        return LS_SWEEP_REELABORATE;
    }
    int code;
    if (fresh || !w->ready) {
        if (w->have_op)
            ls_op_free(&w->op);
        w->have_op = true;
        code = ls_op_solve(&w->op, w->nl, &w->opt);   /* also the parts' first linearization points */
        /* the points after it change the parts the let reaches: when few
         * rows change, the factor may be kept and updated (solver.h) */
        if (code == LS_EXIT_OK && w->op.solver && !ls_newton_needed(w->nl))
            ls_solver_allow_update(w->op.solver, &w->op.mna.a);
    } else {
        /* only the parts the let reaches changed: in a linear circuit (no
         * states stamped) only their entries are restamped */
        if (!ls_newton_needed(w->nl))
            ls_mna_expect_changes(&w->op.mna, w->deps->parts, w->deps->nparts);
        code = ls_op_resolve(&w->op);   /* numeric refactor, the analysis kept */
    }
    w->ready = code == LS_EXIT_OK;
    return code;
}
