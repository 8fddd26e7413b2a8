/* results.c — computing what the reports read (results.h). */
#include "analysis/results.h"

#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "analysis/lowrank.h"

/* The resistors at port i's driver node whose value alone would bring zout
 * down to zmax, the two smallest changes, into a. */
static void resistor_advice(ls_op *op, int i, double zmax, ls_port_advice *a)
{
    const ls_netlist *nl = op->nl;
    int f = nl->parts[i].pin[0];
    double change[2] = {INFINITY, INFINITY};
    a->port = i;
    a->zout_max_ohm = zmax;
    a->part[0] = a->part[1] = -1;
    a->ohm[0] = a->ohm[1] = NAN;
    for (int j = 0; j < nl->nparts && f > 0; j++) {
        const ls_part *r = &nl->parts[j];
        if (!r->kind->is_resistance || (r->pin[0] != f && r->pin[1] != f))
            continue;
        double v = ls_port_resistor_for_zout(op, i, j, zmax);
        if (!(v > 0) || !(v < r->value))
            continue;
        double c = r->value / v;   /* how many times smaller */
        int k = c < change[0] ? 0 : c < change[1] ? 1 : 2;
        if (k == 2)
            continue;
        if (k == 0) {
            a->part[1] = a->part[0], a->ohm[1] = a->ohm[0], change[1] = change[0];
        }
        a->part[k] = j, a->ohm[k] = v, change[k] = c;
    }
}

/* The largest zout that meets port pr's budget (ohm), for a voltage-mode port
 * that misses it: sag = open zout / (zout + zin) of a loaded divider is
 * within B when zin/zout >= |open|/B - 1.  NaN when no finite zout does (the
 * advice is then a buffer). */
static double budget_zout_max(const ls_port_result *pr)
{
    if (pr->verdict == VERDICT_OK || !pr->by_budget || pr->current_mode || !isfinite(pr->sag))
        return NAN;
    double req = fabs(pr->open) / pr->budget - 1;
    if (!isfinite(req) || !(req > 0) || !isfinite(pr->zin) || !(pr->zout > 0))
        return NAN;
    return pr->zin / req;
}

/* Every port that misses its budget gets its resistor advice.  0, or -1 out
 * of memory. */
static int compute_advice(ls_results *r, ls_op *op)
{
    const ls_netlist *nl = op->nl;
    int cap = 0;
    for (int i = 0; i < nl->nparts; i++)
        cap += nl->parts[i].kind->is_port && !isnan(budget_zout_max(ls_op_port(op, i)));
    if (!cap)
        return 0;
    r->advice = malloc((size_t)cap * sizeof *r->advice);
    if (!r->advice)
        return -1;
    for (int i = 0; i < nl->nparts; i++) {
        if (!nl->parts[i].kind->is_port)
            continue;
        double zmax = budget_zout_max(ls_op_port(op, i));
        if (!isnan(zmax))
            resistor_advice(op, i, zmax, &r->advice[r->nadvice++]);
    }
    return 0;
}

/* Every adc's reading, in part order.  0, or -1 out of memory. */
static int compute_adcs(ls_results *r, ls_op *op)
{
    const ls_netlist *nl = op->nl;
    int cap = 0;
    for (int i = 0; i < nl->nparts; i++)
        cap += nl->parts[i].kind->is_adc;
    if (!cap)
        return 0;
    r->adcs = malloc((size_t)cap * sizeof *r->adcs);
    if (!r->adcs)
        return -1;
    for (int i = 0; i < nl->nparts; i++)
        if (ls_op_adc(op, i, &r->adcs[r->nadcs].r) == 0)
            r->adcs[r->nadcs++].part = i;
    return 0;
}

int ls_results_compute(ls_results *r, ls_op *op, unsigned need)
{
    memset(r, 0, sizeof *r);
    r->op = op;
    const ls_netlist *nl = op->nl;
    if (need & (LS_NEED_PORTS | LS_NEED_ADVICE))
        for (int i = 0; i < nl->nparts; i++)
            if (nl->parts[i].kind->is_port)
                ls_op_port(op, i);
    /* the bounds fail only for want of memory; the reporter says so */
    if (need & LS_NEED_BOUNDS)
        r->bounds = ls_acc_bounds(op) == 0;
    if (((need & LS_NEED_ADCS) && compute_adcs(r, op) != 0) ||
        ((need & LS_NEED_ADVICE) && compute_advice(r, op) != 0)) {
        ls_results_free(r);
        return -1;
    }
    r->have = need;
    return 0;
}

void ls_results_free(ls_results *r)
{
    free(r->adcs);
    free(r->advice);
    memset(r, 0, sizeof *r);
}

const ls_prop ls_port_fields[LS_PORT_NFIELDS] = {PROP_OPEN, PROP_LOADED, PROP_SAG,     PROP_SAG_REL, PROP_ZOUT,
                                                  PROP_ZIN,  PROP_RATIO,  PROP_CURRENT, PROP_BUDGET};

const ls_port_result *ls_port_read(const ls_op *op, int p)
{
    if (p < 0 || p >= op->nl->nparts || !op->nl->parts[p].kind->is_port)
        return NULL;
    assert(op->port[p].done && "a port's report read before it was computed");
    return &op->port[p];
}

/* Binary search of part p in n rows of `size` bytes whose first member is the
 * part index, ascending.  The row, or NULL. */
static const void *find_part(const void *rows, int n, size_t size, int p)
{
    int lo = 0, hi = n - 1;
    while (lo <= hi) {
        int mid = lo + (hi - lo) / 2;
        int at = *(const int *)((const char *)rows + (size_t)mid * size);
        if (at == p)
            return (const char *)rows + (size_t)mid * size;
        if (at < p)
            lo = mid + 1;
        else
            hi = mid - 1;
    }
    return NULL;
}

const ls_adc_result *ls_results_adc(const ls_results *r, int p)
{
    assert(!r->nadcs || (r->have & LS_NEED_ADCS));
    const ls_adc_row *row = find_part(r->adcs, r->nadcs, sizeof *r->adcs, p);
    return row ? &row->r : NULL;
}

const ls_port_advice *ls_results_advice(const ls_results *r, int p)
{
    return find_part(r->advice, r->nadvice, sizeof *r->advice, p);
}
