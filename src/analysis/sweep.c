/* sweep.c — the points of a sweep and their solves (see sweep.h). */
#include "analysis/sweep.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "parts/parts.h"

void ls_sweep_points(double from, double to, int n, bool log_scale, double *x)
{
    for (int i = 0; i < n; i++) {
        double f = (double)i / (double)(n - 1);
        x[i] = log_scale ? from * pow(to / from, f) : from + (to - from) * f;
    }
    x[0] = from;
    x[n - 1] = to;
}

void ls_sweeper_init(ls_sweeper *w, ls_netlist *nl, const ls_letdeps *deps, const ls_options *o)
{
    memset(w, 0, sizeof *w);
    w->nl = nl;
    w->deps = deps;
    w->opt = *o;
    w->opt.phase = NULL;
    w->opt.phase_ctx = NULL;
}

void ls_sweeper_free(ls_sweeper *w)
{
    if (w->have_op)
        ls_op_free(&w->op);
    free(w->branches);
    w->branches = NULL;
    w->have_op = w->ready = false;
}

bool ls_sweep_set_value(ls_sweeper *w, double x)
{
    return ls_letdeps_apply(w->deps, w->nl, x);
}

/* Do the parts the let reaches still have the branch unknowns they had at
 * the last fresh solve (a junction's rbulk= from zero to positive adds one)?
 * The kept system's numbering is valid only then.  With record set, note
 * them instead.  false also when out of memory noting them. */
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
    int code;
    if (fresh || !w->ready || !same_branches(w, false)) {
        if (w->have_op)
            ls_op_free(&w->op);
        w->have_op = true;
        code = ls_op_solve(&w->op, w->nl, &w->opt);   /* also the parts' first linearization points */
        if (code == LS_EXIT_OK && !same_branches(w, true)) {
            w->op.nomem = true;
            code = LS_EXIT_UNSOLVABLE;
        }
    } else {
        code = ls_op_resolve(&w->op);   /* numeric refactor, the analysis kept */
    }
    w->ready = code == LS_EXIT_OK;
    return code;
}
