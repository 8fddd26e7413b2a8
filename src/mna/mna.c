/* mna.c — assembly of the modified-nodal system and the topology checks. */
#include "mna/mna.h"
#include "base/pages.h"
#include "base/unionfind.h"

#include <assert.h>
#include <float.h>
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void ls_triplets_free(ls_triplets *t)
{
    free(t->ti);
    free(t->tj);
    free(t->tx);
    memset(t, 0, sizeof *t);
}

/* Sort entries s .. e-1 by row, keeping the order of equal rows (insertion
 * sort: columns are short). */
static void sort_column(int *row, double *val, int s, int e)
{
    for (int p = s + 1; p < e; p++) {
        int r = row[p];
        double v = val[p];
        int q = p - 1;
        while (q >= s && row[q] > r) {
            row[q + 1] = row[q];
            val[q + 1] = val[q];
            q--;
        }
        row[q + 1] = r;
        val[q + 1] = v;
    }
}

int ls_triplets_to_csc(const ls_triplets *t, int n, ls_csc *out)
{
    memset(out, 0, sizeof *out);
    out->n = n;
    if (t->nnz > INT_MAX) /* the int indices cannot count them (LS_MAX_PARTS keeps below this) */
        return -1;
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
    /* Sort each column by row and sum duplicates. */
    int w = 0;
    for (int j = 0; j < n; j++) {
        int s = cnt[j], e = cnt[j + 1];
        sort_column(ri, rv, s, e);
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
    if ((size_t)w < t->nnz && w > 0) { /* give back what the duplicates took */
        int *ri2 = realloc(ri, (size_t)w * sizeof *ri);
        double *rv2 = realloc(rv, (size_t)w * sizeof *rv);
        ri = ri2 ? ri2 : ri;
        rv = rv2 ? rv2 : rv;
    }
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

/* m->seen sized for m->a's entries (contents undefined).  0, or -1 no memory. */
int ls_mna_reserve_seen(ls_mna *m)
{
    size_t nnz = (size_t)ls_csc_nnz(&m->a);
    if (m->seen_n != nnz || !m->seen) {
        free(m->seen);
        m->seen = malloc(nnz ? nnz : 1);
        m->seen_n = m->seen ? nnz : 0;
        if (!m->seen)
            return -1;
    }
    return 0;
}

/* Largest |a_ij| (0 for an empty matrix). */
double ls_csc_amax(const ls_csc *a)
{
    double m = 0;
    for (int p = 0; p < ls_csc_nnz(a); p++)
        m = ls_max_acc(m, fabs(a->val[p]));
    return m;
}

/* Restamps go through a triplet buffer of about this many entries at a time. */
#define RESTAMP_CHUNK 16384

/* Add the buffered triplets into m->a, whose pattern they must fit: the first
 * triplet of an entry sets it, later ones add to it, in stamp order (as
 * compression sums them).  Returns 1 when every triplet has its entry, 0 when
 * one has none. */
static int flush_into_pattern(ls_mna *m, size_t *covered)
{
    ls_csc *a = &m->a;
    const ls_triplets *t = &m->t;
    for (size_t k = 0; k < t->nnz; k++) {
        int i = t->ti[k], j = t->tj[k];
        if (i < 0 || i >= a->n || j < 0 || j >= a->n)
            return 0;
        int p = ls_csc_find(a, i, j);
        if (p < 0)
            return 0;
        if (m->seen[p]) {
            a->val[p] += t->tx[k];
        } else {
            a->val[p] = t->tx[k];
            m->seen[p] = 1;
            ++*covered;
        }
    }
    return 1;
}

/* Stamp part i, as removed or buffered when the variant says so. */
void ls_mna_stamp_part(const ls_mna *m, int i, ls_sink *sink)
{
    unsigned char how = m->opened ? m->opened[i] : 0;
    ls_stamp_ctx c = {.nl = m->nl, .run = ls_mna_run(m), .sink = sink, .removed = how == LS_OPENED,
                      .buffered = how == LS_BUFFERED};
    m->nl->parts[i].kind->stamp(&m->nl->parts[i], &c);
}

/* Stamp the variant's ties: g on the node's diagonal, g*v into its rhs. */
void ls_mna_stamp_ties(const ls_mna *m, ls_sink *sink)
{
    for (int i = 1; m->ties && i < m->nl->nnodes; i++)
        if (m->ties[i].g > 0) {
            ls_sink_a(sink, i - 1, i - 1, m->ties[i].g);
            ls_sink_b(sink, i - 1, m->ties[i].g * m->ties[i].v);
        }
}

/* Restamp into the compressed pattern of the last assembly, a few parts at a
 * time through a small triplet buffer.  Returns 1 done (m->a holds exactly
 * what compressing every triplet would give), 0 the pattern changed (m->a
 * and m->b are then to be rebuilt), -1 no memory. */
static int restamp_in_place(ls_mna *m)
{
    const ls_netlist *nl = m->nl;
    size_t nnz = (size_t)ls_csc_nnz(&m->a);
    if (ls_mna_reserve_seen(m) != 0)
        return -1;
    memset(m->seen, 0, nnz);
    ls_triplets_free(&m->t);
    size_t cap = (m->nnz_hint < RESTAMP_CHUNK ? m->nnz_hint : RESTAMP_CHUNK) + 64;
    m->t.ti = malloc(cap * sizeof *m->t.ti);
    m->t.tj = malloc(cap * sizeof *m->t.tj);
    m->t.tx = malloc(cap * sizeof *m->t.tx);
    if (!m->t.ti || !m->t.tj || !m->t.tx) {
        ls_triplets_free(&m->t);
        return -1;
    }
    m->t.cap = cap;
    memset(m->b, 0, (size_t)m->n * sizeof *m->b);
    ls_sink sink = {.mode = SINK_ASSEMBLE, .t = &m->t, .b = m->b, .scale = 1};
    size_t covered = 0, total = 0;
    int fits = 1;
    for (int i = 0; i < nl->nparts && fits; i++) {
        ls_mna_stamp_part(m, i, &sink);
        if (m->t.failed)
            break;
        if (m->t.nnz >= RESTAMP_CHUNK) {
            fits = flush_into_pattern(m, &covered);
            total += m->t.nnz;
            m->t.nnz = 0;
        }
    }
    ls_mna_stamp_ties(m, &sink);
    if (fits && !m->t.failed) {
        fits = flush_into_pattern(m, &covered);
        total += m->t.nnz;
        m->t.nnz = 0;
    }
    int failed = m->t.failed;
    ls_triplets_free(&m->t);
    if (failed)
        return -1;
    if (!fits || covered != nnz)
        return 0;
    m->nnz_hint = total;
    m->amax = ls_csc_amax(&m->a);
    m->in_place++;
    return 1;
}

/* ---- the first assembly: entries stamped into their columns --------------------- */

/* Slots per column into start[1 .. n] (start[0] = 0), then their prefix sums:
 * a part whose stamp stays among the unknowns of its pins and branches (k of
 * them, a pin counted once per mention) writes at most k entries into each of
 * those columns, and a tie one on its node's diagonal.  A part that reaches
 * further (a controlled source's via=) takes slots of the column it writes
 * into; only a column written more often than this counts allow overflows,
 * which ls_sink_put reports.  Returns the total (above INT_MAX: stopped
 * there, start unusable). */
static size_t size_columns(const ls_mna *m, int *start)
{
    const ls_netlist *nl = m->nl;
    int u[16];
    size_t total = 0;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        int k = 0, np = p->kind->npins, c = p->kind->branches(p);
        for (int j = 0; j < np && k < 16; j++)
            if (p->pin[j] > 0)
                u[k++] = p->pin[j] - 1;
        for (int j = 0; j < c && k < 16; j++)
            u[k++] = p->branch + j;
        total += (size_t)k * (size_t)k;
        if (total > INT_MAX) /* before any column's count could wrap around */
            return total;
        for (int j = 0; j < k; j++)
            start[u[j] + 1] += k;
    }
    for (int i = 1; m->ties && i < nl->nnodes; i++)
        start[i] += m->ties[i].g > 0;
    if (total + (size_t)nl->nnodes > INT_MAX)
        return total + (size_t)nl->nnodes;
    for (int j = 0; j < m->n; j++)
        start[j + 1] += start[j];
    return (size_t)start[m->n];
}

/* Sum the duplicates of each column in the order they were stamped (the
 * first sets the entry, each later one adds to it: the sums compressing
 * triplets makes), then sort the column by row; the columns are packed
 * to the front.  start: the columns' first slots, rewritten as colptr;
 * next: one past each column's last filled slot.  where: n ints of scratch.
 * Returns the entries kept; *stamped the entries stamped. */
static int pack_columns(int n, int *start, const int *next, int *row, double *val, int *where, size_t *stamped)
{
    int w = 0;
    size_t total = 0;
    memset(where, 0xff, (size_t)n * sizeof *where); /* -1: before every column */
    for (int j = 0; j < n; j++) {
        int s = start[j], e = next[j], first = w;
        total += (size_t)(e - s);
        for (int p = s; p < e; p++) { /* w <= p: the slots written were read */
            int r = row[p];
            if (where[r] >= first) {
                val[where[r]] += val[p];
            } else {
                where[r] = w;
                row[w] = r;
                val[w] = val[p];
                w++;
            }
        }
        sort_column(row, val, first, w);
        start[j] = first;
    }
    start[n] = w;
    *stamped = total;
    return w;
}

/* The first assembly without triplets: every column sized from the parts'
 * pins (size_columns), each entry stamped into its column, duplicates summed
 * in stamp order and each column sorted: the matrix compressing the triplets
 * would give, bit for bit (tests/mna/direct_same.c).  0 done, 1 a column
 * overflowed (assemble through triplets), -1 no memory.  The slots are
 * large blocks (base/pages.h: huge pages, fewer faults and translation
 * misses for stamps that land all over them, 8 million on the 1000 grid). */
static int stamp_direct(ls_mna *m)
{
    int n = m->n;
    int *start = calloc((size_t)n + 1, sizeof *start);
    int *next = malloc(((size_t)n + 1) * sizeof *next);
    int *where = malloc(((size_t)n + 1) * sizeof *where);
    if (!start || !next || !where)
        goto nomem;
    size_t slots = size_columns(m, start);
    if (slots > INT_MAX) { /* the int indices cannot count them: let the triplets refuse */
        free(start);
        free(next);
        free(where);
        return 1;
    }
    int *row = ls_big_malloc((slots ? slots : 1) * sizeof *row);
    double *val = ls_big_malloc((slots ? slots : 1) * sizeof *val);
    if (!row || !val) {
        ls_big_free(row);
        ls_big_free(val);
        goto nomem;
    }
    memcpy(next, start, (size_t)n * sizeof *next);
    ls_columns cols = {.next = next, .end = start + 1, .row = row, .val = val};
    ls_sink sink = {.mode = SINK_COLUMNS, .cols = &cols, .b = m->b, .scale = 1};
    memset(m->b, 0, (size_t)n * sizeof *m->b);
    for (int i = 0; i < m->nl->nparts; i++)
        ls_mna_stamp_part(m, i, &sink);
    ls_mna_stamp_ties(m, &sink);
    if (cols.overflow) {
        free(start);
        free(next);
        free(where);
        ls_big_free(row);
        ls_big_free(val);
        return 1;
    }
    size_t stamped;
    int w = pack_columns(n, start, next, row, val, where, &stamped);
    free(next);
    free(where);
    if ((size_t)w < slots && w > 0) { /* give back the slots left empty and the duplicates' */
        int *row2 = ls_big_realloc(row, (size_t)w * sizeof *row);
        double *val2 = ls_big_realloc(val, (size_t)w * sizeof *val);
        row = row2 ? row2 : row;
        val = val2 ? val2 : val;
    }
    ls_csc_free(&m->a);
    m->a = (ls_csc){.n = n, .colptr = start, .rowind = row, .val = val};
    m->nnz_hint = stamped;
    m->amax = ls_csc_amax(&m->a);
    m->direct = true;
    return 0;
nomem:
    free(start);
    free(next);
    free(where);
    return -1;
}

/* Stamp every part: into the pattern of the last assembly when it still fits,
 * else, the first time, straight into columns (stamp_direct), and otherwise
 * into triplets that are compressed into m->a (and so freed: on a large
 * grid they would outweigh the matrix); the count is kept so the next full
 * assembly allocates once.  0 ok, -1 no memory. */
static int stamp_all(ls_mna *m)
{
    /* what each part reaches may differ after a full restamp (a value from
     * zero): patch.c records it again when next asked */
    ls_mna_index_free(m);
    if (m->a.colptr) {
        int r = restamp_in_place(m);
        if (r != 0)
            return r > 0 ? 0 : -1;
    } else {
        int r = stamp_direct(m);
        if (r <= 0)
            return r;
    }
    return ls_mna_stamp_triplets(m);
}

int ls_mna_stamp_triplets(ls_mna *m)
{
    const ls_netlist *nl = m->nl;
    ls_sink sink = {.mode = SINK_ASSEMBLE, .t = &m->t, .b = m->b, .scale = 1};
    ls_triplets_free(&m->t);
    if (m->nnz_hint) {
        m->t.ti = malloc(m->nnz_hint * sizeof *m->t.ti);
        m->t.tj = malloc(m->nnz_hint * sizeof *m->t.tj);
        m->t.tx = malloc(m->nnz_hint * sizeof *m->t.tx);
        if (!m->t.ti || !m->t.tj || !m->t.tx) {
            ls_triplets_free(&m->t);
            return -1;
        }
        m->t.cap = m->nnz_hint;
    }
    memset(m->b, 0, (size_t)m->n * sizeof *m->b);
    for (int i = 0; i < nl->nparts; i++)
        ls_mna_stamp_part(m, i, &sink);
    ls_mna_stamp_ties(m, &sink);
    if (m->t.failed) {
        ls_triplets_free(&m->t);
        return -1;
    }
    ls_csc_free(&m->a);
    int rc = ls_triplets_to_csc(&m->t, m->n, &m->a);
    m->nnz_hint = m->t.nnz;
    ls_triplets_free(&m->t);
    if (rc != 0)
        return -1;
    m->amax = ls_csc_amax(&m->a);
    return 0;
}

int ls_mna_build(ls_mna *m, const ls_netlist *nl)
{
    return ls_mna_build_variant(m, nl, NULL, NULL, NULL);
}

int ls_mna_build_variant(ls_mna *m, const ls_netlist *nl, const ls_run *run, const unsigned char *opened,
                         const ls_tie *ties)
{
    memset(m, 0, sizeof *m);
    m->nl = nl;
    m->run = run;
    if (!run && ls_run_init(&m->own, nl) != 0)
        return -1;
    m->opened = opened;
    m->ties = ties;
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
    size_t guess = 16;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        int c = p->kind->branches(p), np = p->kind->npins;
        assert(p->branch == (c ? k : -1)); /* numbered once by the elaborator */
        for (int j = 0; j < c; j++)
            m->branch_part[k - m->nn + j] = i;
        k += c;
        /* a node-to-node stamp per pair of pins, a few entries per branch:
         * the first assembly's triplets then need no growing copies */
        guess += (size_t)np * (size_t)np + 4 * (size_t)c;
    }
    m->nnz_hint = guess;
    return stamp_all(m);
}

int ls_mna_restamp(ls_mna *m)
{
    int r = ls_mna_try_patch(m);
    if (r != 0)
        return r > 0 ? 0 : -1;
    if (stamp_all(m) != 0)
        return -1;
    (void)ls_mna_index_after_restamp(m); /* no memory for it: the next announcement restamps in full */
    return 0;
}

void ls_mna_free(ls_mna *m)
{
    ls_mna_index_free(m);
    ls_triplets_free(&m->t);
    free(m->seen);
    ls_csc_free(&m->a);
    free(m->b);
    free(m->branch_part);
    ls_run_free(&m->own);
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
                     "undefined; add a resistance (e.g. rint= on a source) or remove one branch",
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

#define FLOATING_DETAILED 20   /* floating components described in full */

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
    /* Each detailed report scans every node and part, so only the first few
     * floating components get one; the rest (thousands of stray parts would
     * make this quadratic) get a short error at their first node. */
    int floating = 0;
    for (int i = 1; i < nn; i++)
        t.head[ls_uf_find(t.dc, i)] = 0;   /* head[] is free now: the size of each component */
    for (int i = 1; i < nn; i++)
        t.head[ls_uf_find(t.dc, i)]++;
    for (int i = 1; i < nn; i++) {
        int r = ls_uf_find(t.dc, i);
        if (r != 0 && !done[r]) {
            done[r] = true;
            if (floating++ < FLOATING_DETAILED)
                report_floating(&t, r, done);
            else
                ls_error(nl->diags, nl->nodes[i].loc, "no DC path to ground from node '%s' (and the %d other node%s "
                         "joined to it)", nl->nodes[i].name, t.head[r] - 1, t.head[r] == 2 ? "" : "s");
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
