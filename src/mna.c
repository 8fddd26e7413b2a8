/* mna.c — assembly of the modified-nodal system and the topology checks. */
#include "mna.h"

#include <stdlib.h>
#include <string.h>

void ls_triplets_free(ls_triplets *t)
{
    free(t->ti);
    free(t->tj);
    free(t->tx);
    memset(t, 0, sizeof *t);
}

void ls_csc_free(ls_csc *a)
{
    free(a->colptr);
    free(a->rowind);
    free(a->val);
    memset(a, 0, sizeof *a);
}

int ls_triplets_to_csc(const ls_triplets *t, int n, ls_csc *out)
{
    memset(out, 0, sizeof *out);
    out->n = n;
    int *cnt = calloc((size_t)n + 1, sizeof *cnt);
    int *ri = malloc((t->nnz ? t->nnz : 1) * sizeof *ri);
    double *rv = malloc((t->nnz ? t->nnz : 1) * sizeof *rv);
    if (!cnt || !ri || !rv)
        goto fail;
    for (size_t k = 0; k < t->nnz; k++)
        cnt[t->tj[k] + 1]++;
    for (int j = 0; j < n; j++)
        cnt[j + 1] += cnt[j];
    int *pos = malloc(((size_t)n + 1) * sizeof *pos);
    if (!pos)
        goto fail;
    memcpy(pos, cnt, ((size_t)n + 1) * sizeof *pos);
    for (size_t k = 0; k < t->nnz; k++) {
        int p = pos[t->tj[k]]++;
        ri[p] = t->ti[k];
        rv[p] = t->tx[k];
    }
    free(pos);
    /* Sort each column by row (insertion sort: columns are short) and sum duplicates. */
    int w = 0;
    for (int j = 0; j < n; j++) {
        int s = cnt[j], e = cnt[j + 1];
        for (int p = s + 1; p < e; p++) {
            int r = ri[p];
            double v = rv[p];
            int q = p - 1;
            while (q >= s && ri[q] > r) {
                ri[q + 1] = ri[q];
                rv[q + 1] = rv[q];
                q--;
            }
            ri[q + 1] = r;
            rv[q + 1] = v;
        }
        cnt[j] = w;
        for (int p = s; p < e; p++) {
            if (w > cnt[j] && ri[w - 1] == ri[p]) {
                rv[w - 1] += rv[p];
            } else {
                ri[w] = ri[p];
                rv[w] = rv[p];
                w++;
            }
        }
    }
    cnt[n] = w;
    out->colptr = cnt;
    out->rowind = ri;
    out->val = rv;
    return 0;
fail:
    free(cnt);
    free(ri);
    free(rv);
    return -1;
}

static int stamp_all(ls_mna *m)
{
    const ls_netlist *nl = m->nl;
    ls_sink sink = {.mode = SINK_ASSEMBLE, .t = &m->t, .b = m->b, .scale = 1};
    m->t.nnz = 0;
    memset(m->b, 0, (size_t)m->n * sizeof *m->b);
    for (int i = 0; i < nl->nparts; i++) {
        ls_stamp_ctx c = {.nl = nl, .sink = &sink};
        nl->parts[i].kind->stamp(&nl->parts[i], &c);
    }
    if (m->t.failed)
        return -1;
    ls_csc_free(&m->a);
    return ls_triplets_to_csc(&m->t, m->n, &m->a);
}

int ls_mna_build(ls_mna *m, const ls_netlist *nl)
{
    memset(m, 0, sizeof *m);
    m->nl = nl;
    m->nn = nl->nnodes - 1;
    int nb = 0;
    for (int i = 0; i < nl->nparts; i++)
        nb += nl->parts[i].kind->branches(&nl->parts[i]);
    m->n = m->nn + nb;
    m->branch_part = malloc((size_t)(nb ? nb : 1) * sizeof *m->branch_part);
    m->b = calloc((size_t)(m->n ? m->n : 1), sizeof *m->b);
    if (!m->branch_part || !m->b)
        return -1;
    int k = m->nn;
    for (int i = 0; i < nl->nparts; i++) {
        ls_part *p = &nl->parts[i];
        int c = p->kind->branches(p);
        p->branch = c ? k : -1;
        for (int j = 0; j < c; j++)
            m->branch_part[k - m->nn + j] = i;
        k += c;
    }
    return stamp_all(m);
}

int ls_mna_restamp(ls_mna *m)
{
    return stamp_all(m);
}

void ls_mna_free(ls_mna *m)
{
    ls_triplets_free(&m->t);
    ls_csc_free(&m->a);
    free(m->b);
    free(m->branch_part);
    memset(m, 0, sizeof *m);
}

const char *ls_unknown_desc(const ls_mna *m, int idx, char *buf, size_t n)
{
    if (idx < 0 || idx >= m->n) {
        snprintf(buf, n, "an unknown");
    } else if (idx < m->nn) {
        snprintf(buf, n, "node '%s'", m->nl->nodes[idx + 1].name);
    } else {
        const ls_part *p = &m->nl->parts[m->branch_part[idx - m->nn]];
        if (p->kind->is_opamp)
            snprintf(buf, n, "the output of op-amp '%s'", p->name);
        else if (p->kind->is_port)
            snprintf(buf, n, "the current of port '%s'", p->name);
        else
            snprintf(buf, n, "the current of %s '%s'", p->kind->name, p->name);
    }
    return buf;
}

/* ---- topology --------------------------------------------------------------------- */

int ls_uf_find(int *parent, int x)
{
    while (parent[x] != x) {
        parent[x] = parent[parent[x]];
        x = parent[x];
    }
    return x;
}

void ls_uf_union(int *parent, int a, int b)
{
    a = ls_uf_find(parent, a);
    b = ls_uf_find(parent, b);
    if (a != b)
        parent[a < b ? b : a] = a < b ? a : b; /* the smaller index (ground = 0) is the root */
}

typedef struct topo {
    const ls_netlist *nl;
    int *dc;               /* union-find over conductive edges */
    int *vd;               /* union-find over voltage-defined edges */
    int part;              /* part whose edges are being emitted */
    /* forest of voltage-defined edges, for naming the parts of a loop */
    int *head, *next, *to, *epart;
    int nedges;
    int loops;
} topo;

static void forest_add(topo *t, int a, int b, int part)
{
    int e = t->nedges;
    t->to[e] = b; t->epart[e] = part; t->next[e] = t->head[a]; t->head[a] = e;
    t->to[e + 1] = a; t->epart[e + 1] = part; t->next[e + 1] = t->head[b]; t->head[b] = e + 1;
    t->nedges += 2;
}

/* The parts on the forest path a -> b, written into buf as 'x', 'y'. */
static void loop_parts(topo *t, int a, int b, char *buf, size_t n)
{
    int nn = t->nl->nnodes;
    int *prev = malloc((size_t)nn * sizeof *prev), *via = malloc((size_t)nn * sizeof *via);
    int *queue = malloc((size_t)nn * sizeof *queue);
    buf[0] = 0;
    if (!prev || !via || !queue)
        goto out;
    for (int i = 0; i < nn; i++)
        prev[i] = -2;
    int qh = 0, qt = 0;
    queue[qt++] = a;
    prev[a] = -1;
    while (qh < qt && prev[b] == -2) {
        int u = queue[qh++];
        for (int e = t->head[u]; e >= 0; e = t->next[e]) {
            int w = t->to[e];
            if (prev[w] == -2) {
                prev[w] = u;
                via[w] = t->epart[e];
                queue[qt++] = w;
            }
        }
    }
    int count = 0;
    for (int u = b; u != a && prev[u] >= 0 && count < 12; u = prev[u], count++) {
        size_t l = strlen(buf);
        snprintf(buf + l, n - l, "%s'%s'", l ? ", " : "", t->nl->parts[via[u]].name);
    }
out:
    free(prev);
    free(via);
    free(queue);
}

static void on_edge(void *ctx, int a, int b, bool vdef, int part)
{
    topo *t = ctx;
    (void)part;
    if (a < 0 || b < 0)
        return;
    ls_uf_union(t->dc, a, b);
    if (!vdef)
        return;
    if (a == b || ls_uf_find(t->vd, a) == ls_uf_find(t->vd, b)) {
        const ls_part *p = &t->nl->parts[t->part];
        if (++t->loops <= 20) {
            char parts[512];
            if (a == b)
                snprintf(parts, sizeof parts, "it is shorted on itself");
            else
                loop_parts(t, a, b, parts, sizeof parts);
            ls_error(t->nl->diags, p->loc,
                     "%s '%s' closes a loop made only of voltage-defined branches (with %s): the currents in the loop are "
                     "undefined; add a resistance (e.g. rs= on a source) or remove one branch",
                     p->kind->name, p->name, parts[0] ? parts : "itself");
        }
        return;
    }
    ls_uf_union(t->vd, a, b);
    forest_add(t, a, b, t->part);
}

/* Nodes of one floating component, and the current-defined parts touching it. */
static void report_floating(topo *t, int root, const bool *seen_root)
{
    (void)seen_root;
    const ls_netlist *nl = t->nl;
    char nodes[512] = "", sources[512] = "";
    int count = 0, first = -1;
    for (int i = 1; i < nl->nnodes; i++) {
        if (ls_uf_find(t->dc, i) != root)
            continue;
        if (first < 0)
            first = i;
        if (count++ < 8) {
            size_t l = strlen(nodes);
            snprintf(nodes + l, sizeof nodes - l, "%s'%s'", l ? ", " : "", nl->nodes[i].name);
        }
    }
    if (count > 8) {
        size_t l = strlen(nodes);
        snprintf(nodes + l, sizeof nodes - l, " and %d more", count - 8);
    }
    int nsrc = 0;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        int a = p->pin[0], b = p->pin[1];
        if (p->kind->shape != SHAPE_TWO || a < 0 || b < 0)
            continue;
        bool ina = ls_uf_find(t->dc, a) == root, inb = ls_uf_find(t->dc, b) == root;
        if (ina != inb && nsrc++ < 6) {
            size_t l = strlen(sources);
            snprintf(sources + l, sizeof sources - l, "%s'%s'", l ? ", " : "", p->name);
        }
    }
    ls_loc at = nl->nodes[first].loc;
    if (nsrc)
        ls_error(nl->diags, at,
                 "no DC path to ground from %s %s: it joins the rest only through current sources (%s), a cut-set "
                 "of current sources",
                 count > 1 ? "nodes" : "node", nodes, sources);
    else
        ls_error(nl->diags, at, "no DC path to ground from %s %s: connect %s to the circuit through a resistance or a "
                 "source", count > 1 ? "nodes" : "node", nodes, count > 1 ? "them" : "it");
}

int ls_topology_check(const ls_netlist *nl)
{
    int e0 = nl->diags->errors;
    int nn = nl->nnodes;
    topo t = {.nl = nl};
    size_t maxe = 2 * (size_t)nl->nparts * 2 + 2;
    t.dc = malloc((size_t)nn * sizeof *t.dc);
    t.vd = malloc((size_t)nn * sizeof *t.vd);
    t.head = malloc((size_t)nn * sizeof *t.head);
    t.next = malloc(maxe * sizeof *t.next);
    t.to = malloc(maxe * sizeof *t.to);
    t.epart = malloc(maxe * sizeof *t.epart);
    bool *done = calloc((size_t)nn, sizeof *done);
    if (!t.dc || !t.vd || !t.head || !t.next || !t.to || !t.epart || !done) {
        ls_error(nl->diags, LS_NOLOC, "out of memory in the topology check");
        goto out;
    }
    for (int i = 0; i < nn; i++) {
        t.dc[i] = t.vd[i] = i;
        t.head[i] = -1;
    }
    for (int i = 0; i < nl->nparts; i++) {
        t.part = i;
        nl->parts[i].kind->edges(&nl->parts[i], &t, on_edge);
    }
    for (int i = 1; i < nn; i++) {
        int r = ls_uf_find(t.dc, i);
        if (r != 0 && !done[r]) {
            done[r] = true;
            report_floating(&t, r, done);
        }
    }
out:
    free(t.dc);
    free(t.vd);
    free(t.head);
    free(t.next);
    free(t.to);
    free(t.epart);
    free(done);
    return nl->diags->errors - e0;
}
