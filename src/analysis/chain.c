/* chain.c — the stage partition and its signal order (see chain.h). */
#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "analysis/chain.h"
#include "analysis/results.h"
#include "base/unionfind.h"
#include "base/fmt.h"
#include "parts/parts.h"

/* ---- rails ------------------------------------------------------------------------------ */

/* A voltage source's internal resistance (ohm): rint= in the current
 * language, rs= in the first one; 0 when not given. */
static double source_rint(const ls_part *p)
{
    int i = ls_kind_opt(p->kind, "rint");
    if (i < 0)
        i = ls_kind_opt(p->kind, "rs");
    return ls_part_has(p, i) ? p->opt[i] : 0;
}

/* Is part p a stiff voltage source (a supply candidate)? */
static bool stiff_source(const ls_part *p)
{
    return p->kind->stage_role == LS_ROLE_SOURCE && source_rint(p) <= LS_RAIL_RINT_MAX;
}

/* Mark ground and the rails in rail[] (nnodes, zeroed by the caller).  A node
 * that drives a port stays a signal node. */
static void mark_rails(const ls_netlist *nl, bool *rail, const bool *drives)
{
    rail[0] = true;
    for (bool grew = true; grew;) {
        grew = false;
        for (int i = 0; i < nl->nparts; i++) {
            const ls_part *p = &nl->parts[i];
            if (!stiff_source(p))
                continue;
            int a = p->pin[0], b = p->pin[1];
            if (rail[a] && !rail[b] && !drives[b])
                rail[b] = grew = true;
            else if (rail[b] && !rail[a] && !drives[a])
                rail[a] = grew = true;
        }
    }
}

int ls_chain_rail_source(const ls_netlist *nl, const ls_chain *c, int node)
{
    for (int i = 0; node > 0 && c->rail[node] && i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (stiff_source(p) && (p->pin[0] == node || p->pin[1] == node))
            return i;
    }
    return -1;
}

/* ---- stages ------------------------------------------------------------------------------ */

/* The node of part p that places it in a stage (its first pin off the rails), or -1. */
static int part_anchor(const ls_part *p, const bool *rail)
{
    for (int k = 0; k < p->kind->npins; k++)
        if (p->pin[k] >= 0 && !rail[p->pin[k]])
            return p->pin[k];
    return -1;
}

/* The stage flag of a part's role (the part table's .stage_role), or 0. */
static unsigned part_flags(const ls_part *p)
{
    switch (p->kind->stage_role) {
    case LS_ROLE_OPAMP: return LS_STAGE_OPAMP;
    case LS_ROLE_ADC: return LS_STAGE_ADC;
    case LS_ROLE_SENSOR: return LS_STAGE_SENSOR;
    case LS_ROLE_SOURCE: return LS_STAGE_SOURCE;
    case LS_ROLE_NONE: break;
    }
    return 0;
}

/* Name stage s: its block instance when every part of the stage belongs to one
 * instance and that instance has no part elsewhere; else the driver node of
 * its first outgoing port; else its first part; else its first node. */
static void name_stage(const ls_netlist *nl, ls_stage *s, int driver, const int *inst_parts)
{
    const char *inst = s->nparts ? nl->parts[s->parts[0]].instance : NULL;
    for (int k = 1; inst && k < s->nparts; k++) {
        const char *o = nl->parts[s->parts[k]].instance;
        if (!o || strcmp(o, inst) != 0)
            inst = NULL;
    }
    if (inst && inst_parts[s->parts[0]] == s->nparts) {
        s->name = inst;
        s->named_by = "instance";
        return;
    }
    if (driver >= 0) {
        s->name = nl->nodes[driver].name;
        s->named_by = "driver node";
        return;
    }
    if (s->nparts) {
        s->name = nl->parts[s->parts[0]].name;
        s->named_by = "first part";
    } else {
        s->name = nl->nodes[s->first].name;
        s->named_by = "node";
    }
}

typedef struct inst_ref {
    const char *inst;
    int part;
} inst_ref;

/* qsort order of parts by instance name (the parts of one instance together). */
static int cmp_instance(const void *a, const void *b)
{
    return strcmp(((const inst_ref *)a)->inst, ((const inst_ref *)b)->inst);
}

/* For every part, how many parts (ports left out) share its instance (0 at
 * the top level): the parts sorted by instance name, then counted run by run.
 * Returns 0, or -1 when out of memory. */
static int count_instances(const ls_netlist *nl, int *inst_parts)
{
    inst_ref *r = malloc(((size_t)nl->nparts + 1) * sizeof *r);
    int n = 0;
    if (!r)
        return -1;
    for (int i = 0; i < nl->nparts; i++) {
        inst_parts[i] = 0;
        if (nl->parts[i].instance && !nl->parts[i].kind->is_port)
            r[n++] = (inst_ref){nl->parts[i].instance, i};
    }
    qsort(r, (size_t)n, sizeof *r, cmp_instance);
    for (int a = 0, b; a < n; a = b) {
        for (b = a + 1; b < n && strcmp(r[a].inst, r[b].inst) == 0; b++)
            ;
        for (int k = a; k < b; k++)
            inst_parts[r[k].part] = b - a;
    }
    free(r);
    return 0;
}

/* ---- signal order ------------------------------------------------------------------------ */

/* A binary min-heap of piece ids (the ready pieces, earliest first). */
typedef struct heap {
    int *a;
    int n;
} heap;

static void heap_push(heap *h, int v)
{
    int i = h->n++;
    for (; i > 0 && h->a[(i - 1) / 2] > v; i = (i - 1) / 2)
        h->a[i] = h->a[(i - 1) / 2];
    h->a[i] = v;
}

static int heap_pop(heap *h)
{
    int top = h->a[0], v = h->a[--h->n], i = 0;
    for (;;) {
        int c = 2 * i + 1;
        if (c >= h->n)
            break;
        if (c + 1 < h->n && h->a[c + 1] < h->a[c])
            c++;
        if (h->a[c] >= v)
            break;
        h->a[i] = h->a[c];
        i = c;
    }
    if (h->n)
        h->a[i] = v;
    return top;
}

/* Kahn's topological sort of the pieces, the earliest-mentioned ready piece
 * first (so the order is stable); on a loop the earliest remaining piece goes
 * next and *cyclic is set.  cfrom/cto give each port's two pieces (-1 rail).
 * Writes rank[piece] = position.  O((P + C) log P).  Returns 0 or -1. */
static int order_pieces(int np, const int *cfrom, const int *cto, int nc, int *rank, bool *cyclic)
{
    int *indeg = calloc((size_t)np + 1, sizeof *indeg), *start = calloc((size_t)np + 2, sizeof *start);
    int *adj = malloc(((size_t)nc + 1) * sizeof *adj);
    heap h = {malloc(((size_t)np + 1) * sizeof *h.a), 0};
    if (!indeg || !start || !adj || !h.a) {
        free(indeg), free(start), free(adj), free(h.a);
        return -1;
    }
    for (int k = 0; k < nc; k++) /* the port graph as adjacency lists (CSR) */
        if (cfrom[k] >= 0 && cto[k] >= 0 && cfrom[k] != cto[k])
            indeg[cto[k]]++, start[cfrom[k] + 2]++;
    for (int i = 0; i < np; i++)
        start[i + 2] += start[i + 1];
    for (int k = 0; k < nc; k++)
        if (cfrom[k] >= 0 && cto[k] >= 0 && cfrom[k] != cto[k])
            adj[start[cfrom[k] + 1]++] = cto[k];
    for (int i = 0; i < np; i++) {
        rank[i] = -1;
        if (!indeg[i])
            heap_push(&h, i);
    }
    *cyclic = false;
    int next_left = 0; /* every piece below it is ranked */
    for (int pos = 0; pos < np; pos++) {
        int pick = -1;
        while (h.n && pick < 0) {
            pick = heap_pop(&h);
            if (rank[pick] >= 0) /* already placed to break a loop */
                pick = -1;
        }
        if (pick < 0) { /* a loop: break it at its earliest piece */
            while (rank[next_left] >= 0)
                next_left++;
            pick = next_left;
            *cyclic = true;
        }
        rank[pick] = pos;
        for (int e = start[pick]; e < start[pick + 1]; e++)
            if (rank[adj[e]] < 0 && --indeg[adj[e]] == 0)
                heap_push(&h, adj[e]);
    }
    free(indeg), free(start), free(adj), free(h.a);
    return 0;
}

static int cmp_conn(const void *a, const void *b)
{
    const ls_conn *x = a, *y = b;
    int fx = x->from < 0 ? -1 : x->from, fy = y->from < 0 ? -1 : y->from;
    if (fx != fy)
        return fx < fy ? -1 : 1;
    return (x->port > y->port) - (x->port < y->port);
}

/* ---- build ---------------------------------------------------------------------------- */

/* Working arrays of one build, freed together. */
typedef struct work {
    int *up, *piece, *rank, *cfrom, *cto, *inst_parts, *count;
    bool *drives;
} work;

static void work_free(work *w)
{
    free(w->up), free(w->piece), free(w->rank), free(w->cfrom), free(w->cto);
    free(w->inst_parts), free(w->count), free(w->drives);
}

/* Join the pins of every part that is not a port, off the rails. */
static void join_parts(const ls_netlist *nl, const bool *rail, int *up)
{
    for (int i = 0; i < nl->nnodes; i++)
        up[i] = i;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        int a = p->kind->is_port ? -1 : part_anchor(p, rail);
        for (int k = 0; a >= 0 && k < p->kind->npins; k++)
            if (p->pin[k] >= 0 && !rail[p->pin[k]])
                ls_uf_union(up, a, p->pin[k]); /* the smaller index is the root: a piece's first mention */
    }
}

/* Number the pieces by first mention: piece[node] = id or -1 (rails, and nodes
 * no part or port touches).  Returns the count. */
static int number_pieces(const ls_netlist *nl, const bool *rail, int *up, int *piece)
{
    bool *used = calloc((size_t)nl->nnodes + 1, sizeof *used);
    if (!used)
        return -1;
    for (int i = 0; i < nl->nparts; i++)
        for (int k = 0; k < nl->parts[i].kind->npins; k++)
            if (nl->parts[i].pin[k] >= 0)
                used[nl->parts[i].pin[k]] = true;
    int n = 0;
    for (int i = 0; i < nl->nnodes; i++)
        piece[i] = -1;
    for (int i = 0; i < nl->nnodes; i++) {
        if (rail[i] || !used[i])
            continue;
        int r = ls_uf_find(up, i);
        if (piece[r] < 0)
            piece[r] = n++;
        piece[i] = piece[r];
    }
    free(used);
    return n;
}

/* Fill the stages' part lists (storage in c->pool) and flags. */
static int fill_stages(const ls_netlist *nl, ls_chain *c, const int *piece, const int *rank, int *count)
{
    c->pool = malloc(((size_t)nl->nparts + 1) * sizeof *c->pool);
    c->supply_parts = malloc(((size_t)nl->nparts + 1) * sizeof *c->supply_parts);
    if (!c->pool || !c->supply_parts)
        return -1;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        int a = p->kind->is_port ? -2 : part_anchor(p, c->rail);
        if (a == -1)
            c->supply_parts[c->nsupply++] = i;
        else if (a >= 0)
            count[rank[piece[a]]]++;
    }
    int at = 0;
    for (int s = 0; s < c->nstages; s++) {
        c->stages[s].parts = c->pool + at;
        at += count[s];
    }
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        int a = p->kind->is_port ? -1 : part_anchor(p, c->rail);
        if (a < 0)
            continue;
        ls_stage *s = &c->stages[rank[piece[a]]];
        s->parts[s->nparts++] = i;
        s->has |= part_flags(p);
    }
    return 0;
}

/* The work arrays of build and the chain's own per-node and per-port
 * arrays.  0, or -1 when out of memory (what was allocated is freed with
 * the work and the chain). */
static int alloc_work(const ls_netlist *nl, ls_chain *c, work *w)
{
    size_t nn = (size_t)nl->nnodes, np = (size_t)nl->nparts + 1;
    w->up = malloc(nn * sizeof *w->up);
    w->piece = malloc(nn * sizeof *w->piece);
    w->rank = malloc(nn * sizeof *w->rank);
    w->cfrom = malloc(np * sizeof *w->cfrom);
    w->cto = malloc(np * sizeof *w->cto);
    w->inst_parts = malloc(np * sizeof *w->inst_parts);
    w->count = calloc(nn + 1, sizeof *w->count);
    w->drives = calloc(nn, sizeof *w->drives);
    c->rail = calloc(nn, sizeof *c->rail);
    c->node_stage = malloc(nn * sizeof *c->node_stage);
    c->conns = malloc(np * sizeof *c->conns);
    if (!w->up || !w->piece || !w->rank || !w->cfrom || !w->cto || !w->inst_parts || !w->count || !w->drives ||
        !c->rail || !c->node_stage || !c->conns)
        return -1;
    return 0;
}

/* Names every stage from the driver node of its first outgoing port (in
 * declaration order) and its instances' parts; w->rank is free again by
 * then and holds one driver per stage. */
static void name_stages(const ls_netlist *nl, ls_chain *c, work *w)
{
    int *driver = w->rank; /* free again: reused, one slot per stage */
    for (int s = 0; s < c->nstages; s++)
        driver[s] = -1;
    for (int i = nl->nparts - 1; i >= 0; i--) {
        const ls_part *p = &nl->parts[i];
        if (p->kind->is_port && c->node_stage[p->pin[0]] >= 0)
            driver[c->node_stage[p->pin[0]]] = p->pin[0];
    }
    for (int s = 0; s < c->nstages; s++)
        name_stage(nl, &c->stages[s], driver[s], w->inst_parts);
}

static int build(const ls_netlist *nl, ls_chain *c, work *w)
{
    size_t nn = (size_t)nl->nnodes;
    if (alloc_work(nl, c, w) != 0)
        return -1;
    for (int i = 0; i < nl->nparts; i++)
        if (nl->parts[i].kind->is_port)
            w->drives[nl->parts[i].pin[0]] = true;
    mark_rails(nl, c->rail, w->drives);
    join_parts(nl, c->rail, w->up);
    int npieces = number_pieces(nl, c->rail, w->up, w->piece);
    if (npieces < 0)
        return -1;
    int nc = 0;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (!p->kind->is_port)
            continue;
        w->cfrom[nc] = w->piece[p->pin[0]];
        w->cto[nc] = w->piece[p->pin[1]];
        c->conns[nc++] = (ls_conn){.port = i};
    }
    if (order_pieces(npieces, w->cfrom, w->cto, nc, w->rank, &c->cyclic) != 0)
        return -1;
    c->stages = calloc((size_t)npieces + 1, sizeof *c->stages);
    if (!c->stages)
        return -1;
    c->nstages = npieces;
    for (int i = (int)nn - 1; i >= 0; i--) {
        c->node_stage[i] = w->piece[i] < 0 ? -1 : w->rank[w->piece[i]];
        if (c->node_stage[i] >= 0)
            c->stages[c->node_stage[i]].first = i;
    }
    for (int k = 0; k < nc; k++) {
        c->conns[k].from = w->cfrom[k] < 0 ? -1 : w->rank[w->cfrom[k]];
        c->conns[k].to = w->cto[k] < 0 ? -1 : w->rank[w->cto[k]];
    }
    c->nconns = nc;
    qsort(c->conns, (size_t)nc, sizeof *c->conns, cmp_conn);
    if (fill_stages(nl, c, w->piece, w->rank, w->count) != 0)
        return -1;
    if (count_instances(nl, w->inst_parts) != 0)
        return -1;
    name_stages(nl, c, w);
    return 0;
}

int ls_chain_build(const ls_netlist *nl, ls_chain *c)
{
    memset(c, 0, sizeof *c);
    work w = {0};
    int rc = build(nl, c, &w);
    work_free(&w);
    if (rc != 0)
        ls_chain_free(c);
    return rc;
}

void ls_chain_free(ls_chain *c)
{
    free(c->stages);
    free(c->conns);
    free(c->node_stage);
    free(c->rail);
    free(c->supply_parts);
    free(c->pool);
    memset(c, 0, sizeof *c);
}

/* ---- words ---------------------------------------------------------------------------- */

const char *ls_stage_flag_word(int bit, bool json)
{
    static const char *const people[LS_STAGE_NFLAGS] = {"op-amp", "ADC", "sensor", "source"};
    static const char *const keys[LS_STAGE_NFLAGS] = {"opamp", "adc", "sensor", "source"};
    return bit >= 0 && bit < LS_STAGE_NFLAGS ? (json ? keys : people)[bit] : "";
}

const char *ls_verdict_word(ls_verdict v)
{
    static const char *const n[] = {"ok", "marginal", "loading"};
    _Static_assert(sizeof n / sizeof n[0] == VERDICT_LOADING + 1, "one word per ls_verdict");
    assert(v >= VERDICT_OK && v <= VERDICT_LOADING);
    return n[v];
}

void ls_chain_ports(ls_op *op, const ls_chain *c)
{
    for (int k = 0; k < c->nconns; k++)
        ls_op_port(op, c->conns[k].port);
}

char *ls_chain_fix(const ls_op *op, int port, char *buf, size_t n, bool ascii, int sig)
{
    const ls_port_result *pr = ls_port_read(op, port);
    const char *OHM = ascii ? "ohm" : "\xCE\xA9", *LE = ascii ? "<=" : "\xE2\x89\xA4",
               *GE = ascii ? ">=" : "\xE2\x89\xA5";
    double min = ls_op_min_ratio(op);
    /* judged by a budget B: |sag| = |open|/(1 + ratio) <= B asks for ratio >= |open|/B - 1 */
    if (pr->by_budget && isfinite(pr->budget) && pr->budget > 0 && isfinite(pr->open))
        min = fabs(pr->open) / pr->budget - 1;
    char lo[48], hi[48];
    buf[0] = 0;
    if (pr->verdict == VERDICT_OK)
        return buf;
    if (isnan(pr->ratio)) {
        snprintf(buf, n, "ratio undefined: see the port report");
    } else if (pr->current_mode) {
        snprintf(buf, n, "fix: zin %s %s; or zout %s %s", LE,
                 ls_fmt_eng(lo, sizeof lo, pr->zout / min, OHM, sig, ascii), GE,
                 ls_fmt_eng(hi, sizeof hi, pr->zin * min, OHM, sig, ascii));
    } else if (pr->zin == 0) {
        snprintf(buf, n, "fix: the load shorts the node to ground");
    } else {
        snprintf(buf, n, "fix: zout %s %s; or zin %s %s; or a buffer", LE,
                 ls_fmt_eng(lo, sizeof lo, pr->zin / min, OHM, sig, ascii), GE,
                 ls_fmt_eng(hi, sizeof hi, pr->zout * min, OHM, sig, ascii));
    }
    return buf;
}
