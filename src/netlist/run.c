/* run.c — per-solve states and values beside a netlist (see run.h). */
#include "netlist/run.h"

#include <stdlib.h>
#include <string.h>

int ls_run_init(ls_run *r, const ls_netlist *nl)
{
    memset(r, 0, sizeof *r);
    r->nl = nl;
    r->state = calloc((size_t)(nl->nstates ? nl->nstates : 1), sizeof *r->state);
    return r->state ? 0 : -1;
}

/* The run's own value table, filled from the netlist on first use.  NULL
 * when out of memory. */
static double *own_values(ls_run *r)
{
    if (!r->value) {
        const ls_netlist *nl = r->nl;
        r->value = malloc((size_t)(nl->nparts ? nl->nparts : 1) * sizeof *r->value);
        if (r->value)
            for (int i = 0; i < nl->nparts; i++)
                r->value[i] = nl->parts[i].value;
    }
    return r->value;
}

/* Free what a run's set holds and the set itself. */
static void set_free(ls_run_set *s)
{
    if (!s)
        return;
    free(s->row);
    free(s->opt);
    free(s->range);
    free(s->budget);
    free(s->q);
    free(s->qvalue);
    free(s);
}

/* Grow *p (of *cap elements of `size` bytes) to hold n.  false when out of
 * memory (*p kept). */
static bool grow(void **p, int *cap, int n, size_t size)
{
    if (n <= *cap)
        return true;
    int c = *cap ? *cap * 2 : 4;
    while (c < n)
        c *= 2;
    void *q = realloc(*p, (size_t)c * size);
    if (!q)
        return false;
    *p = q;
    *cap = c;
    return true;
}

/* The run's set, made empty on first use.  NULL when out of memory. */
static ls_run_set *own_set(ls_run *r)
{
    if (!r->set)
        r->set = calloc(1, sizeof *r->set);
    return r->set;
}

/* Part `part`'s row in r's own options and ranges, made from the netlist's
 * on first use.  -1 when out of memory. */
static int own_row(ls_run *r, int part)
{
    const ls_netlist *nl = r->nl;
    ls_run_set *s = own_set(r);
    if (!s)
        return -1;
    if (!s->row) {
        s->row = malloc((size_t)(nl->nparts ? nl->nparts : 1) * sizeof *s->row);
        if (!s->row)
            return -1;
        for (int i = 0; i < nl->nparts; i++)
            s->row[i] = -1;
    }
    if (s->row[part] >= 0)
        return s->row[part];
    int cap = s->cap_rows;
    if (!grow((void **)&s->opt, &cap, s->nrows + 1, sizeof *s->opt))
        return -1;
    cap = s->cap_rows;
    if (!grow((void **)&s->range, &cap, s->nrows + 1, sizeof *s->range))
        return -1;
    s->cap_rows = cap;
    const ls_part *p = &nl->parts[part];
    int row = s->nrows++;
    memset(s->opt[row], 0, sizeof s->opt[row]);
    memset(s->range[row], 0, sizeof s->range[row]);
    if (p->opt)
        memcpy(s->opt[row], p->opt, sizeof s->opt[row]);
    if (p->range)
        memcpy(s->range[row], p->range, sizeof s->range[row]);
    s->row[part] = row;
    return row;
}

int ls_run_set_opt(ls_run *r, int part, int opt, double value)
{
    assert(part >= 0 && part < r->nl->nparts && opt >= 0 && opt < LS_MAX_OPTS);
    assert(r->nl->parts[part].opt);   /* only an option the part was given */
    int row = own_row(r, part);
    if (row < 0)
        return -1;
    r->set->opt[row][opt] = value;
    return 0;
}

int ls_run_set_range(ls_run *r, int part, int slot, int end, double volts)
{
    assert(part >= 0 && part < r->nl->nparts && slot >= 0 && slot < LS_MAX_RANGES && (end == 0 || end == 1));
    assert(r->nl->parts[part].range);   /* only a kind that takes a range */
    int row = own_row(r, part);
    if (row < 0)
        return -1;
    r->set->range[row][slot][end].volts = volts;
    return 0;
}

int ls_run_set_budget(ls_run *r, int budget, double value)
{
    const ls_netlist *nl = r->nl;
    assert(budget >= 0 && budget < nl->nbudgets);
    ls_run_set *s = own_set(r);
    if (!s)
        return -1;
    if (!s->budget) {
        s->budget = malloc((size_t)nl->nbudgets * sizeof *s->budget);
        if (!s->budget)
            return -1;
        for (int i = 0; i < nl->nbudgets; i++)
            s->budget[i] = nl->budgets[i].value;
    }
    s->budget[budget] = value;
    return 0;
}

int ls_run_set_qconst(ls_run *r, const ls_q *q, double value)
{
    assert(q->kind == Q_CONST);
    ls_run_set *s = own_set(r);
    if (!s)
        return -1;
    for (int i = 0; i < s->nq; i++)
        if (s->q[i] == q) {
            s->qvalue[i] = value;
            return 0;
        }
    int cap = s->cap_q;
    if (!grow((void **)&s->q, &cap, s->nq + 1, sizeof *s->q))
        return -1;
    cap = s->cap_q;
    if (!grow((void **)&s->qvalue, &cap, s->nq + 1, sizeof *s->qvalue))
        return -1;
    s->cap_q = cap;
    s->q[s->nq] = q;
    s->qvalue[s->nq++] = value;
    return 0;
}

/* Copy src's set into dst's (runs of one netlist).  0, or -1 when out of
 * memory (dst then has none: the netlist's). */
static int copy_set(ls_run *dst, const ls_run *src)
{
    const ls_netlist *nl = src->nl;
    set_free(dst->set);
    dst->set = NULL;
    const ls_run_set *s = src->set;
    if (!s)
        return 0;
    ls_run_set *d = calloc(1, sizeof *d);
    if (!d)
        return -1;
    dst->set = d;
    bool ok = true;
    if (s->row) {
        d->row = malloc((size_t)(nl->nparts ? nl->nparts : 1) * sizeof *d->row);
        d->opt = malloc((size_t)(s->nrows ? s->nrows : 1) * sizeof *d->opt);
        d->range = malloc((size_t)(s->nrows ? s->nrows : 1) * sizeof *d->range);
        ok = d->row && d->opt && d->range;
        if (ok) {
            memcpy(d->row, s->row, (size_t)nl->nparts * sizeof *d->row);
            memcpy(d->opt, s->opt, (size_t)s->nrows * sizeof *d->opt);
            memcpy(d->range, s->range, (size_t)s->nrows * sizeof *d->range);
            d->nrows = d->cap_rows = s->nrows;
        }
    }
    if (ok && s->budget) {
        d->budget = malloc((size_t)nl->nbudgets * sizeof *d->budget);
        ok = d->budget != NULL;
        if (ok)
            memcpy(d->budget, s->budget, (size_t)nl->nbudgets * sizeof *d->budget);
    }
    if (ok && s->nq > 0) {
        d->q = malloc((size_t)s->nq * sizeof *d->q);
        d->qvalue = malloc((size_t)s->nq * sizeof *d->qvalue);
        ok = d->q && d->qvalue;
        if (ok) {
            memcpy(d->q, s->q, (size_t)s->nq * sizeof *d->q);
            memcpy(d->qvalue, s->qvalue, (size_t)s->nq * sizeof *d->qvalue);
            d->nq = d->cap_q = s->nq;
        }
    }
    if (!ok) {
        set_free(d);
        dst->set = NULL;
        return -1;
    }
    return 0;
}

int ls_run_copy_study(ls_run *dst, const ls_run *src)
{
    assert(dst->nl->parts == src->nl->parts);
    if (!src->value)
        ls_run_reset_values(dst);
    else if (!own_values(dst))
        return -1;
    else if (src->nl->nparts > 0)
        memcpy(dst->value, src->value, (size_t)src->nl->nparts * sizeof *dst->value);
    return copy_set(dst, src);
}

int ls_run_copy(ls_run *dst, const ls_run *src)
{
    const ls_netlist *nl = src->nl;
    assert(dst->nl->parts == src->nl->parts && dst->nl->nstates == nl->nstates); /* one netlist (a variant's record shares its parts) */
    if (nl->nstates > 0)
        memcpy(dst->state, src->state, (size_t)nl->nstates * sizeof *dst->state);
    return ls_run_copy_study(dst, src);
}

void ls_run_free(ls_run *r)
{
    free(r->state);
    free(r->value);
    set_free(r->set);
    r->state = NULL;
    r->value = NULL;
    r->set = NULL;
}

int ls_run_set_value(ls_run *r, int part, double value)
{
    assert(part >= 0 && part < r->nl->nparts);
    if (!own_values(r))
        return -1;
    r->value[part] = value;
    return 0;
}

void ls_run_reset_values(ls_run *r)
{
    free(r->value);
    set_free(r->set);
    r->value = NULL;
    r->set = NULL;
}
