/* parts.c — what every part kind shares, below the families and the table
 * (kinds.c): the sinks stamps go to, a kind's options and a part's option
 * values, a part's current and its shape. */
#include "parts/parts.h"

#include <assert.h>
#include <stdlib.h>
#include <string.h>

/* ---- sinks ---------------------------------------------------------------- */

void ls_sink_put(ls_sink *s, int row, int col, double v)
{
    v *= s->scale;
    assert(s->mode == SINK_ASSEMBLE || s->mode == SINK_ADJOINT || s->mode == SINK_RESIDUAL ||
           s->mode == SINK_COLUMNS);
    if (s->mode == SINK_ADJOINT) {
        s->acc -= s->lambda[row] * v * s->x[col];
        return;
    }
    if (s->mode == SINK_RESIDUAL) {
        ls_resid_a(s->resid, row, col, v);
        return;
    }
    if (s->mode == SINK_COLUMNS) {
        ls_columns *c = s->cols;
        int p = c->next[col];
        if (p == c->end[col]) {
            c->overflow = 1;
            return;
        }
        c->row[p] = row;
        c->val[p] = v;
        c->next[col] = p + 1;
        return;
    }
    ls_triplets *t = s->t;
    if (t->nnz == t->cap) {
        size_t cap = t->cap ? t->cap * 2 : 1024;
        int *ti = realloc(t->ti, cap * sizeof *ti);
        if (ti) t->ti = ti;
        int *tj = realloc(t->tj, cap * sizeof *tj);
        if (tj) t->tj = tj;
        double *tx = realloc(t->tx, cap * sizeof *tx);
        if (tx) t->tx = tx;
        if (!ti || !tj || !tx) {
            t->failed = 1;
            return;
        }
        t->cap = cap;
    }
    t->ti[t->nnz] = row;
    t->tj[t->nnz] = col;
    t->tx[t->nnz] = v;
    t->nnz++;
}

void ls_sink_b(ls_sink *s, int row, double v)
{
    if (row < 0 || v == 0)
        return;
    v *= s->scale;
    if (s->mode == SINK_ADJOINT)
        s->acc += s->lambda[row] * v;
    else if (s->mode == SINK_RESIDUAL)
        ls_resid_b(s->resid, row, v);
    else
        s->b[row] += v;
}

/* ---- a part's options and current --------------------------------------------- */

double ls_lin_eval(const ls_lin *l, const double *x)
{
    double v = l->constant;
    for (int i = 0; i < l->n; i++)
        v += l->coef[i] * x[l->idx[i]];
    return v;
}

double ls_part_opt(const ls_part *p, const char *name, double dflt)
{
    int i = ls_kind_opt(p->kind, name);
    return ls_part_has(p, i) ? p->opt[i] : dflt;
}

double ls_part_opt_in(const ls_run *run, const ls_part *p, const char *name, double dflt)
{
    int i = ls_kind_opt(p->kind, name);
    return ls_part_has(p, i) ? ls_run_opt_at(run, p, i) : dflt;
}

int ls_kind_opt(const ls_kind *k, const char *name)
{
    /* called by the stamps on every solve (a fit's candidates, a tol's
     * trials): a kind asking for its own option by a literal usually passes
     * the table's own pointer (the linker merges equal string constants),
     * and the first letter rules out most other names without a call */
    for (int i = 0; i < k->nopts; i++)
        if (k->opts[i].name == name)
            return i;
    for (int i = 0; i < k->nopts; i++)
        if (k->opts[i].name[0] == name[0] && strcmp(k->opts[i].name, name) == 0)
            return i;
    return -1;
}

ls_dims ls_kind_main_dims(const ls_kind *k)
{
    for (int i = 0; i < k->nopts; i++)
        if (k->opts[i].flags & OPTF_MAIN)
            return k->opts[i].dims;
    return k->value_dims;
}

const char *ls_kind_renamed(const ls_kind *k, const char *name)
{
    for (int i = 0; i < LS_MAX_RENAMED && k->renamed[i].old; i++)
        if (strcmp(k->renamed[i].old, name) == 0)
            return k->renamed[i].now;
    return NULL;
}

/* A part's DC edges as its kind's edges() gives them (ls_part_same_shape). */
#define SHAPE_EDGES 8
typedef struct shape {
    int n;
    struct { int a, b; bool vdef; } e[SHAPE_EDGES];
    bool overflow;
} shape;

static void shape_edge(void *ctx, int a, int b, bool vdef, int part)
{
    (void)part;
    shape *s = ctx;
    if (s->n == SHAPE_EDGES) {
        s->overflow = true;
        return;
    }
    s->e[s->n].a = a;
    s->e[s->n].b = b;
    s->e[s->n++].vdef = vdef;
}

bool ls_part_same_shape(const ls_part *p, const ls_part *q)
{
    const ls_kind *k = p->kind;
    if (q->kind != k || (k->branches && k->branches(p) != k->branches(q)) ||
        (k->other_pins && k->other_pins(p) != k->other_pins(q)) ||
        (k->is_nonlinear && k->is_nonlinear(p) != k->is_nonlinear(q)) ||
        (k->monotone && k->monotone(p) != k->monotone(q)))
        return false;
    if (!k->edges)
        return true;
    shape a = {0}, b = {0};
    k->edges(p, &a, shape_edge);
    k->edges(q, &b, shape_edge);
    if (a.overflow || b.overflow || a.n != b.n)
        return false;
    for (int i = 0; i < a.n; i++)
        if (a.e[i].a != b.e[i].a || a.e[i].b != b.e[i].b || a.e[i].vdef != b.e[i].vdef)
            return false;
    return true;
}

void ls_part_current(const ls_part *p, const ls_run *run, ls_lin *out, bool derivative)
{
    /* idx[] and coef[] are read only below n: clearing them too was a fifth of
     * the per-part results of a large grid */
    out->n = 0;
    out->constant = 0;
    out->overflow = false;
    p->kind->current(p, run, out, derivative, 0);
}
