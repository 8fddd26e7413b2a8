/* variant.c — exact solves of a variant of a solved circuit (see variant.h). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "base/unionfind.h"
#include "analysis/variant.h"

/* ---- saved part states ---------------------------------------------------------------------- */

/* A copy of op's run into r (freed by ls_runs_free).  0, or -1 no memory. */
int ls_runs_save(const ls_op *op, ls_runs *r)
{
    if (ls_run_init(&r->run, op->nl) != 0 || ls_run_copy(&r->run, &op->run) != 0) {
        ls_run_free(&r->run);
        return -1;
    }
    return 0;
}

/* The saved run back into op (the values too: a study may have changed them).
 * Out of memory for the values leaves op's values the netlist's, which is
 * what a saved run without its own values holds anyway. */
void ls_runs_restore(ls_op *op, const ls_runs *r)
{
    (void)ls_run_copy(&op->run, &r->run);
}

/* Frees the saved run; r may be zeroed or already freed. */
void ls_runs_free(ls_runs *r)
{
    ls_run_free(&r->run);
}

/* ---- the variant ------------------------------------------------------------------------------ */

/* v for base's circuit: the netlist record copied with its diagnostics
 * diverted, nothing opened or tied.  0, or -1 no memory (v freed). */
int ls_variant_init(ls_variant *v, const ls_op *base)
{
    memset(v, 0, sizeof *v);
    v->nl = *base->nl;
    ls_arena_init(&v->arena);
    ls_diags_init(&v->diags, &v->arena);
    v->nl.diags = &v->diags;
    int np = base->nl->nparts, nn = base->nl->nnodes;
    v->opened = calloc((size_t)(np ? np : 1), sizeof *v->opened);
    v->ties = calloc((size_t)(nn ? nn : 1), sizeof *v->ties);
    v->floating = calloc((size_t)(nn ? nn : 1), sizeof *v->floating);
    if (!v->opened || !v->ties || !v->floating) {
        ls_variant_free(v);
        return -1;
    }
    return 0;
}

typedef struct uf {
    int *parent;
} uf;

/* Edge callback: every DC path joins its two nodes' groups. */
static void join_edge(void *ctx, int a, int b, bool vdef, int part)
{
    (void)vdef;
    (void)part;
    uf *u = ctx;
    if (a >= 0 && b >= 0)
        ls_uf_union(u->parent, a, b);
}

/* Union-find over the DC paths the variant keeps; floating nodes are tied at
 * their voltage in base.  Their count, or -1 no memory. */
int ls_variant_hold_floating(ls_variant *v, const ls_op *base)
{
    const ls_netlist *nl = base->nl;
    int nn = nl->nnodes;
    int *parent = malloc((size_t)(nn ? nn : 1) * sizeof *parent);
    if (!parent)
        return -1;
    for (int i = 0; i < nn; i++)
        parent[i] = i;
    uf u = {parent};
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (v->opened[i] == LS_BUFFERED)
            ls_uf_union(parent, p->pin[1], 0);   /* the load side is set, the driver left alone */
        else if (!v->opened[i] || ls_removal_keeps_edges(p))
            p->kind->edges(p, &u, join_edge);
    }
    int count = 0;
    for (int i = 1; i < nn; i++) {
        v->floating[i] = ls_uf_find(parent, i) != ls_uf_find(parent, 0);
        if (!v->floating[i])
            continue;
        count++;
        if (!(v->ties[i].g > 0))
            v->ties[i] = (ls_tie){base->g_pin, base->v[i]};
    }
    free(parent);
    return count;
}

/* The variant solved with base's options (see variant.h); ls_op_solve's outcome. */
ls_outcome ls_variant_solve(ls_variant *v, const ls_op *base, bool linear_only)
{
    if (v->have_op)
        ls_op_free(&v->op);
    ls_options o = base->opt;
    o.opened = v->opened;
    o.ties = v->ties;
    o.start = &base->run; /* base's values, and with linear_only its states */
    o.keep_states = linear_only;
    o.linear_only = linear_only;
    o.no_bounds = true; /* an inner solve: its digits are not printed as they are */
    o.phase = NULL;     /* ... and no progress line of its own */
    v->have_op = true;
    return ls_op_solve(&v->op, &v->nl, &o);
}

/* Frees everything v owns (never base's parts); v is zeroed. */
void ls_variant_free(ls_variant *v)
{
    if (v->have_op)
        ls_op_free(&v->op);
    free(v->opened);
    free(v->ties);
    free(v->floating);
    ls_diags_free(&v->diags);
    ls_arena_free(&v->arena);
    memset(v, 0, sizeof *v);
}

/* ---- what changed --------------------------------------------------------------------------- */

/* A junction kind (the part table's .is_junction: diode, led, zener): a part
 * whose state is its junction's conduction. */
static bool is_junction(const ls_part *p)
{
    return p->slot >= 0 && p->kind->is_junction;
}

/* Small-signal conductance (S) of a junction at vj, by a central difference
 * of its model (the exponential has no kink, 0.1 mV is far below kT/q). */
static double junction_g(const ls_run *run, const ls_part *p, double vj)
{
    const double h = 1e-4;
    bool beyond;
    return (ls_junction_current(run, p, vj + h, &beyond) - ls_junction_current(run, p, vj - h, &beyond)) / (2 * h);
}

/* +1 when the junction (its model as in run) conducts more than tenfold better now than in the
 * saved state (it turned on), -1 tenfold worse (off), 0 otherwise. */
static int junction_change(const ls_run *run, const ls_part *p, const ls_part_run *state, const ls_part_run *saved)
{
    double now = junction_g(run, p, state->op_v), then = junction_g(run, p, saved->op_v);
    if (!(now > 0) || !(then > 0))
        return 0;
    return now > 10 * then ? 1 : then > 10 * now ? -1 : 0;
}

/* First op-amp whose limit state, or junction whose conduction, differs from
 * the saved state (see variant.h). */
bool ls_states_differ(const ls_run *now, const ls_runs *saved, int *what)
{
    const ls_netlist *nl = now->nl;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (p->slot < 0)
            continue;
        const ls_part_run *s = ls_run_state(now, p), *then = ls_run_state(&saved->run, p);
        bool d = p->kind->is_opamp ? s->state != then->state : is_junction(p) && junction_change(now, p, s, then) != 0;
        if (d) {
            if (what)
                *what = i;
            return true;
        }
    }
    return false;
}

/* The limits in force and the junctions that changed, as words (see variant.h). */
int ls_limits_in_force(const ls_run *now, const ls_runs *saved, char *buf, size_t n)
{
    const ls_netlist *nl = now->nl;
    int found = 0;
    size_t len = 0;
    buf[0] = 0;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        const char *word = NULL;
        if (p->kind->is_opamp && p->slot >= 0 && ls_run_state(now, p)->state != LS_LIM_NONE)
            word = ls_opamp_limit_word(p, now);
        else if (is_junction(p) && saved) {
            int c = junction_change(now, p, ls_run_state(now, p), ls_run_state(&saved->run, p));
            word = c > 0 ? "on" : c < 0 ? "off" : NULL;
        }
        if (!word)
            continue;
        int w = snprintf(buf + len, len < n ? n - len : 0, "%s%s %s", found ? ", " : "", p->name, word);
        if (w > 0)
            len = len + (size_t)w < n ? len + (size_t)w : n - 1;
        found++;
    }
    if (!found)
        snprintf(buf, n, "none");
    return found;
}
