/* checks.c — the check rows of a solved circuit: expects, port budgets and
 * the ratio rule (checks.h). */
#include "analysis/checks.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "base/fmt.h"

/* The check row of a port judged by the ratio rule. */
static void ratio_row(ls_op *op, int i, const ls_port_result *pr, ls_check_row *row)
{
    const ls_netlist *nl = op->nl;
    double min = ls_op_min_ratio(op);
    row->text = ls_arena_printf(nl->arena, "rule ratio >= %g (port %s)", min, nl->parts[i].name);
    row->instance = nl->parts[i].instance;
    row->loc = nl->parts[i].loc;
    row->dims = LS_FREE;
    row->port = i;
    row->r.value = pr->ratio;
    row->r.lo = min;
    row->r.hi = INFINITY;
    row->r.pass = pr->verdict == VERDICT_OK;
    if (isnan(pr->ratio) && !row->r.pass)
        row->r.reason = pr->note ? pr->note : "the ratio is undefined";
}

/* Where a port's budget comes from, in words. */
const char *ls_budget_source(const ls_port_result *pr)
{
    switch (pr->budget_from) {
    case LS_BUDGET_FROM_PORT: return "budget";
    case LS_BUDGET_FROM_RULE: return "rule sag";
    case LS_BUDGET_FROM_ADC: return "half an LSB";
    default: return "none";
    }
}

/* The check row of a port judged by its budget: |sag| <= budget. */
static void budget_row(ls_op *op, int i, const ls_port_result *pr, ls_check_row *row)
{
    const ls_netlist *nl = op->nl;
    const ls_part *p = &nl->parts[i];
    char b[64];
    ls_fmt_eng(b, sizeof b, pr->budget, pr->current_mode ? "A" : "V", 4, true);
    row->text = ls_arena_printf(nl->arena, "port %s: abs(sag) <= %s (%s)", p->name, b, ls_budget_source(pr));
    row->instance = p->instance;
    row->loc = p->loc;
    row->dims = pr->current_mode ? LS_AMP : LS_VOLT;
    row->port = i;
    row->r.value = fabs(pr->sag);
    row->r.lo = -INFINITY;
    row->r.hi = pr->budget;
    row->r.pass = pr->verdict == VERDICT_OK;
    if (isnan(pr->sag))
        row->r.reason = pr->note ? pr->note : "the sag is undefined";
}

/* (checks.h) */
int ls_checks_run(ls_op *op, bool with_rule, ls_checks *out)
{
    const ls_netlist *nl = op->nl;
    memset(out, 0, sizeof *out);
    int nports = 0;
    for (int i = 0; i < nl->nparts; i++)
        nports += nl->parts[i].kind->is_port;
    int cap = nl->nchecks + nports;
    out->rows = calloc((size_t)(cap ? cap : 1), sizeof *out->rows);
    if (!out->rows)
        return -1;
    for (int i = 0; i < nl->nchecks; i++) {
        const ls_check *c = &nl->checks[i];
        ls_check_row *row = &out->rows[out->n++];
        row->text = c->text;
        row->instance = c->instance;
        row->loc = c->loc;
        row->dims = c->lhs->dims;
        row->port = -1;
        ls_check_eval(op, c, &row->r);
    }
    for (int i = 0; i < nl->nparts; i++) {
        if (!nl->parts[i].kind->is_port)
            continue;
        const ls_port_result *pr = ls_op_port(op, i);
        if (pr->by_budget)
            budget_row(op, i, pr, &out->rows[out->n++]);
        else if (with_rule)
            ratio_row(op, i, pr, &out->rows[out->n++]);
    }
    for (int i = 0; i < out->n; i++) {
        if (out->rows[i].r.pass)
            out->passed++;
        else
            out->failed++;
    }
    return 0;
}

/* (checks.h) */
void ls_checks_free(ls_checks *c)
{
    free(c->rows);
    memset(c, 0, sizeof *c);
}

