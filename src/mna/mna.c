/* mna.c — assembly of the modified-nodal system and the topology checks. */
#include "mna/mna.h"

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

/* Position of row i in column j of a, or -1.  Rows are sorted within a column. */
static int csc_find(const ls_csc *a, int i, int j)
{
    int lo = a->colptr[j], hi = a->colptr[j + 1] - 1;
    while (lo <= hi) {
        int mid = lo + (hi - lo) / 2;
        int r = a->rowind[mid];
        if (r == i)
            return mid;
        if (r < i)
            lo = mid + 1;
        else
            hi = mid - 1;
    }
    return -1;
}

/* Largest |a_ij| (0 for an empty matrix). */
static double csc_amax(const ls_csc *a)
{
    double m = 0;
    for (int p = 0; p < ls_csc_nnz(a); p++)
        m = fmax(m, fabs(a->val[p]));
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
        int p = csc_find(a, i, j);
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
    ls_stamp_ctx c = {.nl = m->nl, .sink = sink, .removed = how == LS_OPENED, .buffered = how == LS_BUFFERED};
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
    if (m->seen_n != nnz || !m->seen) {
        free(m->seen);
        m->seen = malloc(nnz ? nnz : 1);
        m->seen_n = m->seen ? nnz : 0;
        if (!m->seen)
            return -1;
    }
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
    m->amax = csc_amax(&m->a);
    m->in_place++;
    return 1;
}

/* Stamp every part: into the pattern of the last assembly when it still fits,
 * else into triplets that are compressed into m->a (and so freed: on a large
 * grid they would outweigh the matrix); the count is kept so the next full
 * assembly allocates once.  0 ok, -1 no memory. */
static int stamp_all(ls_mna *m)
{
    if (m->a.colptr) {
        int r = restamp_in_place(m);
        if (r != 0)
            return r > 0 ? 0 : -1;
    }
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
    m->amax = csc_amax(&m->a);
    return 0;
}

int ls_mna_build(ls_mna *m, const ls_netlist *nl)
{
    return ls_mna_build_variant(m, nl, NULL, NULL);
}

int ls_mna_build_variant(ls_mna *m, const ls_netlist *nl, const unsigned char *opened, const ls_tie *ties)
{
    memset(m, 0, sizeof *m);
    m->nl = nl;
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
    free(m->seen);
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

/* ---- reduced nodal form ------------------------------------------------------------------
 *
 * A circuit of resistors, current sources and voltage sources has the MNA matrix
 *
 *        [ G    C ]   node voltages v (unknowns 0 .. m-1)
 *    A = [-C^T  D ]   source currents I (unknowns m .. n-1)
 *
 * with G symmetric, each column of C holding +1 at the source's FROM node and -1
 * at its TO node, and D diagonal (a source's rs, often 0).  Such an A is not
 * positive definite (its source rows have zero or tiny diagonals), so CHOLMOD
 * would refuse it.  This backend solves A x = b exactly through a smaller
 * symmetric system instead:
 *  - a source with rs = 0 between ground and node e fixes v_e: that node is
 *    eliminated and its current is recovered afterwards from KCL at e;
 *  - a source with rs > 0 is Norton-converted: I_k = (b_k + c_k^T v) / rs,
 *    which adds c_k c_k^T / rs to G;
 *  - the remaining node voltages solve M v_U = r with M = (G + C1 D1^-1 C1^T)_UU,
 *    positive definite whenever every node has a resistive path to ground or
 *    to a fixed node, and factored by the inner backend (CHOLMOD).
 * Because the same A is solved, everything built on the solver (refinement,
 * low-rank updates, adjoints) is unchanged.  A^T = S A S with S = diag(I, -I),
 * so a transposed solve flips the signs of the source entries around a plain one.
 * Everything is read from A itself, with the MNA layout of parts.c (nodes first,
 * then branch unknowns); ls_mna_reducible says whether A has this shape. */

#ifdef LS_HAVE_SPARSE

/* 1 when x and y agree to a few ulps (a symmetric pair summed in another order). */
static int same_value(double x, double y)
{
    return fabs(x - y) <= 8 * DBL_EPSILON * fmax(fabs(x), fabs(y));
}

/* The first branch unknown m of a reducible A, or -1 when A does not have the
 * shape above.  Fills fixes[k - m] (may be NULL) with the node a zero-rs source
 * k fixes, or -1 for a source with rs > 0.  `mark` is n ints of scratch. */
static int reducible_split(const ls_csc *a, int *fixes, int *mark)
{
    int n = a->n;
    /* m: the smallest index such that every column from m on couples only to
     * rows below m, with +-1 entries mirrored by their negatives. */
    int m = n, maxpartner = -1;
    for (int k = n - 1; k >= 0; k--) {
        int ok = 1, top = -1;
        for (int p = a->colptr[k]; p < a->colptr[k + 1] && ok; p++) {
            int i = a->rowind[p];
            double v = a->val[p];
            if (i == k) {
                ok = v >= 0;
                continue;
            }
            int q = csc_find(a, k, i);
            ok = fabs(v) == 1 && q >= 0 && a->val[q] == -v;
            top = i > top ? i : top;
        }
        if (!ok)
            break;
        maxpartner = top > maxpartner ? top : maxpartner;
        if (maxpartner < k)
            m = k;
    }
    if (m == n)
        return -1;
    int nfixed = 0;
    for (int i = 0; i < n; i++)
        mark[i] = -1;
    /* every column k >= m: only partners below m, and a zero-rs source fixes one
     * node that nothing else fixes */
    for (int k = m; k < n; k++) {
        int partners = 0, last = -1;
        double diag = 0;
        for (int p = a->colptr[k]; p < a->colptr[k + 1]; p++) {
            int i = a->rowind[p];
            if (i == k)
                diag = a->val[p];
            else if (i >= m)
                return -1;
            else {
                partners++;
                last = i;
            }
        }
        int fixed = -1;
        if (diag == 0) {
            if (partners != 1 || mark[last] >= 0)
                return -1;
            mark[last] = k;
            fixed = last;
        }
        if (fixes)
            fixes[k - m] = fixed;
        nfixed += fixed >= 0;
    }
    if (nfixed == m)
        return -1; /* nothing left to factor: LU handles it directly */
    /* A is structurally symmetric, its node block numerically so (to rounding),
     * and every node-branch coupling is mirrored with the opposite sign.  The
     * columns are walked left to right: the mirror of an entry (i, j) below the
     * diagonal must be the next unmatched entry above the diagonal in column
     * i, as those rows are sorted and met in increasing j; an entry above the
     * diagonal still unmatched when its own column comes up has no mirror.
     * mark is free again and holds that next position per column. */
    int *next = mark;
    for (int j = 0; j < n; j++)
        next[j] = a->colptr[j];
    for (int j = 0; j < n; j++) {
        if (next[j] < a->colptr[j + 1] && a->rowind[next[j]] < j)
            return -1;
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++) {
            int i = a->rowind[p];
            if (i <= j)
                continue;
            int q = next[i];
            if (q >= a->colptr[i + 1] || a->rowind[q] != j)
                return -1;
            if (i < m ? !same_value(a->val[q], a->val[p]) : a->val[q] != -a->val[p])
                return -1;
            next[i]++;
        }
    }
    return m;
}

/* See mna.h; only the split is computed, nothing is kept. */
int ls_mna_reducible(const ls_csc *a)
{
    if (!a || a->n <= 0)
        return 0;
    int *mark = malloc((size_t)a->n * sizeof *mark);
    if (!mark)
        return 0;
    int m = reducible_split(a, NULL, mark);
    free(mark);
    return m >= 0;
}

typedef struct reduced {
    const ls_backend *inner;
    void *in;              /* the inner backend's state */
    int n, m, nu;          /* full order, first branch unknown, reduced order */
    int *fixes;            /* per branch (n - m): node a zero-rs source fixes, or -1 */
    int *pos;              /* per node (m): reduced index, or -1 when fixed */
    int *full;             /* per reduced unknown (nu): its node */
    int *mark;             /* n ints of scratch */
    ls_csc mr;             /* the reduced matrix M */
    ls_csc a;              /* the columns of the last factored matrix the solve reads */
    int *subcol;           /* per unknown (n): its column in a, or -1 */
    double *r;             /* nu scratch */
    double *bsave;         /* per branch: the KCL right-hand side of the node it fixes */
    bool factored;         /* the inner backend holds M's factor and h->a its columns */
} reduced;

/* A new reduced-form backend state, or NULL without memory.  Freed by reduced_destroy. */
static void *reduced_create(void)
{
    reduced *h = calloc(1, sizeof *h);
    if (!h)
        return NULL;
    h->inner = &ls_backend_cholmod;
    h->in = h->inner->create();
    if (!h->in) {
        free(h);
        return NULL;
    }
    return h;
}

/* Free everything but the inner backend; h stays usable (reduce reallocates). */
static void reduced_release(reduced *h)
{
    free(h->fixes);
    free(h->pos);
    free(h->full);
    free(h->mark);
    free(h->r);
    free(h->bsave);
    free(h->subcol);
    h->bsave = NULL;
    h->subcol = NULL;
    ls_csc_free(&h->mr);
    ls_csc_free(&h->a);
    h->fixes = h->pos = h->full = h->mark = NULL;
    h->r = NULL;
}

/* Free the state and its inner backend; accepts NULL. */
static void reduced_destroy(void *self)
{
    reduced *h = self;
    if (!h)
        return;
    reduced_release(h);
    h->inner->destroy(h->in);
    free(h);
}

/* Keep in h->a the columns of a that the solve reads (every branch column and
 * the column of every fixed node), rows in full numbering; h->subcol maps a
 * full column to its kept index or -1.  0 ok, -1 no memory. */
static int keep_columns(reduced *h, const ls_csc *a)
{
    int ns = 0;
    size_t nnz = 0;
    for (int j = 0; j < h->n; j++) {
        bool keep = j >= h->m || h->pos[j] < 0;
        h->subcol[j] = keep ? ns++ : -1;
        if (keep)
            nnz += (size_t)(a->colptr[j + 1] - a->colptr[j]);
    }
    ls_csc_free(&h->a);
    h->a.n = ns;
    h->a.colptr = malloc(((size_t)ns + 1) * sizeof(int));
    h->a.rowind = malloc((nnz ? nnz : 1) * sizeof(int));
    h->a.val = malloc((nnz ? nnz : 1) * sizeof(double));
    if (!h->a.colptr || !h->a.rowind || !h->a.val)
        return -1;
    int w = 0;
    for (int j = 0; j < h->n; j++) {
        if (h->subcol[j] < 0)
            continue;
        h->a.colptr[h->subcol[j]] = w;
        int len = a->colptr[j + 1] - a->colptr[j];
        memcpy(h->a.rowind + w, a->rowind + a->colptr[j], (size_t)len * sizeof(int));
        memcpy(h->a.val + w, a->val + a->colptr[j], (size_t)len * sizeof(double));
        w += len;
    }
    h->a.colptr[ns] = w;
    return 0;
}

/* Append (row, value) to column storage growing as needed.  0 ok, -1 no memory. */
static int col_push(ls_csc *c, size_t *cap, size_t at, int row, double v)
{
    if (at == *cap) {
        size_t nc = *cap * 2 + 1024;
        int *ri = realloc(c->rowind, nc * sizeof *ri);
        if (ri)
            c->rowind = ri;
        double *rv = realloc(c->val, nc * sizeof *rv);
        if (rv)
            c->val = rv;
        if (!ri || !rv)
            return -1;
        *cap = nc;
    }
    c->rowind[at] = row;
    c->val[at] = v;
    return 0;
}

/* Build M = (G + C1 D1^-1 C1^T)_UU column by column from a (split at h->m),
 * rows sorted, entries that cancel kept.  0 ok, -1 no memory. */
static int build_reduced(reduced *h, const ls_csc *a)
{
    int m = h->m, nu = h->nu;
    int *slot = h->mark; /* reduced row -> position in the current column, or -1 */
    ls_csc *c = &h->mr;
    ls_csc_free(c);
    c->n = nu;
    c->colptr = malloc(((size_t)nu + 1) * sizeof *c->colptr);
    size_t cap = (size_t)ls_csc_nnz(a) + 16, w = 0;
    c->rowind = malloc(cap * sizeof *c->rowind);
    c->val = malloc(cap * sizeof *c->val);
    if (!c->colptr || !c->rowind || !c->val)
        return -1;
    for (int i = 0; i < nu; i++)
        slot[i] = -1;
    for (int u = 0; u < nu; u++) {
        int j = h->full[u];
        size_t start = w;
        int sorted = 1;
        c->colptr[u] = (int)w;
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++) {
            int i = a->rowind[p];
            if (i < m) {
                int r = h->pos[i];
                if (r < 0)
                    continue;
                if (col_push(c, &cap, w, r, a->val[p]) != 0)
                    return -1;
                slot[r] = (int)w++;
                continue;
            }
            if (h->fixes[i - m] >= 0)
                continue;
            /* Norton source k = i touching node j: c_j = -a_kj, c_l = a_lk */
            int k = i, pd = csc_find(a, k, k);
            double cj = -a->val[p], g = 1 / a->val[pd];
            for (int q = a->colptr[k]; q < a->colptr[k + 1]; q++) {
                int l = a->rowind[q];
                if (l == k || h->pos[l] < 0)
                    continue;
                int r = h->pos[l];
                double v = cj * a->val[q] * g;
                if (slot[r] >= 0) {
                    c->val[slot[r]] += v;
                } else {
                    if (col_push(c, &cap, w, r, v) != 0)
                        return -1;
                    if (w > start && c->rowind[w - 1] > r)
                        sorted = 0;
                    slot[r] = (int)w++;
                }
            }
        }
        for (size_t p = start; p < w; p++)
            slot[c->rowind[p]] = -1;
        if (!sorted) /* insertion sort: Norton entries are few */
            for (size_t p = start + 1; p < w; p++) {
                int r = c->rowind[p];
                double v = c->val[p];
                size_t q = p;
                while (q > start && c->rowind[q - 1] > r) {
                    c->rowind[q] = c->rowind[q - 1];
                    c->val[q] = c->val[q - 1];
                    q--;
                }
                c->rowind[q] = r;
                c->val[q] = v;
            }
    }
    c->colptr[nu] = (int)w;
    return 0;
}

/* Split a, number the free nodes and build M.  LS_SOLVER_* status. */
static int reduce(reduced *h, const ls_csc *a)
{
    int n = a->n;
    if (h->n != n || !h->mark) {
        reduced_release(h);
        h->n = n;
        h->mark = malloc((size_t)n * sizeof *h->mark);
        h->fixes = malloc((size_t)n * sizeof *h->fixes);
        h->pos = malloc((size_t)n * sizeof *h->pos);
        h->full = malloc((size_t)n * sizeof *h->full);
        h->r = malloc((size_t)n * sizeof *h->r);
        h->bsave = malloc((size_t)n * sizeof *h->bsave);
        h->subcol = malloc((size_t)n * sizeof *h->subcol);
        if (!h->mark || !h->fixes || !h->pos || !h->full || !h->r || !h->bsave || !h->subcol)
            return LS_SOLVER_NOMEM;
    }
    h->m = reducible_split(a, h->fixes, h->mark);
    if (h->m < 0)
        return LS_SOLVER_NOT_SPD; /* not this shape: the caller falls back to LU */
    for (int i = 0; i < h->m; i++)
        h->pos[i] = 0;
    for (int k = h->m; k < n; k++)
        if (h->fixes[k - h->m] >= 0)
            h->pos[h->fixes[k - h->m]] = -1;
    h->nu = 0;
    for (int i = 0; i < h->m; i++)
        if (h->pos[i] == 0) {
            h->pos[i] = h->nu;
            h->full[h->nu++] = i;
        }
    if (h->nu == 0)
        return LS_SOLVER_FAILED;
    if (build_reduced(h, a) != 0 || keep_columns(h, a) != 0)
        return LS_SOLVER_NOMEM;
    return LS_SOLVER_OK;
}

/* The inner status, with a reduced bad column mapped back to its node. */
static int inner_status(reduced *h, int st, ls_solver_stats *s)
{
    if (s->bad_column >= 0 && s->bad_column < h->nu)
        s->bad_column = h->full[s->bad_column];
    s->library = "cholmod-reduced";
    return st;
}

/* Split a, build M and analyze its pattern.  LS_SOLVER_* status; not this shape
 * is LS_SOLVER_NOT_SPD, so the caller falls back to LU. */
static int reduced_analyze(void *self, const ls_csc *a, ls_solver_stats *st)
{
    reduced *h = self;
    h->factored = false;
    int rc = reduce(h, a);
    if (rc != LS_SOLVER_OK)
        return rc;
    return inner_status(h, h->inner->analyze(h->in, &h->mr, st), st);
}

/* Factor the M that reduce built; M is freed after (the solve reads only h->a
 * and the numbering, and the next factor builds M again), so it is not held
 * beside the factor and the solves' workspace.  LS_SOLVER_* status. */
static int factor_reduced(reduced *h, ls_solver_stats *st)
{
    int rc = h->inner->factor(h->in, &h->mr, st);
    ls_csc_free(&h->mr);
    h->factored = rc == LS_SOLVER_OK;
    return inner_status(h, rc, st);
}

/* Rebuild M from a's values and factor it; the inner backend reuses its
 * analysis when M's pattern is unchanged.  LS_SOLVER_* status. */
static int reduced_factor(void *self, const ls_csc *a, ls_solver_stats *st)
{
    reduced *h = self;
    h->factored = false;
    int rc = reduce(h, a);
    if (rc != LS_SOLVER_OK)
        return rc;
    return factor_reduced(h, st);
}

/* reduced_analyze and reduced_factor with one split and one M.  LS_SOLVER_* status. */
static int reduced_analyze_factor(void *self, const ls_csc *a, ls_solver_stats *st)
{
    reduced *h = self;
    h->factored = false;
    int rc = reduce(h, a);
    if (rc == LS_SOLVER_OK)
        rc = inner_status(h, h->inner->analyze(h->in, &h->mr, st), st);
    if (rc != LS_SOLVER_OK)
        return rc;
    return factor_reduced(h, st);
}

/* x = A^-1 b in place (the steps are in the banner above).  LS_SOLVER_* status. */
static int reduced_solve_plain(reduced *h, double *x)
{
    const ls_csc *a = &h->a;
    int m = h->m, n = h->n;
    double *r = h->r, *bsave = h->bsave, *bk = x + m;
#define S(j) (h->subcol[j]) /* the kept column of full column j */
    for (int i = 0; i < h->nu; i++)
        r[i] = x[h->full[i]];
    /* fixed node voltages: row k reads a_ke v_e = b_k; keep b_e for KCL at e */
    for (int k = m; k < n; k++) {
        int e = h->fixes[k - m];
        if (e < 0)
            continue;
        bsave[k - m] = x[e];
        x[e] = bk[k - m] / a->val[csc_find(a, k, S(e))];
    }
    /* move the fixed voltages to the right-hand side: r_U -= G_Ue v_e */
    for (int k = m; k < n; k++) {
        int e = h->fixes[k - m];
        if (e < 0)
            continue;
        for (int p = a->colptr[S(e)]; p < a->colptr[S(e) + 1]; p++) {
            int i = a->rowind[p];
            if (i < m && h->pos[i] >= 0)
                r[h->pos[i]] -= a->val[p] * x[e];
        }
    }
    /* Norton sources: t_k = (b_k + sum over fixed partners a_lk v_l) / rs,
     * r_l -= a_lk t_k over the free partners */
    for (int k = m; k < n; k++) {
        if (h->fixes[k - m] >= 0)
            continue;
        double t = bk[k - m];
        for (int p = a->colptr[S(k)]; p < a->colptr[S(k) + 1]; p++) {
            int l = a->rowind[p];
            if (l != k && h->pos[l] < 0)
                t += a->val[p] * x[l];
        }
        t /= a->val[csc_find(a, k, S(k))];
        for (int p = a->colptr[S(k)]; p < a->colptr[S(k) + 1]; p++) {
            int l = a->rowind[p];
            if (l != k && h->pos[l] >= 0)
                r[h->pos[l]] -= a->val[p] * t;
        }
    }
    ls_solver_stats scratch = {.bad_column = -1};
    int st = h->inner->solve(h->in, r, 0, &scratch);
    if (st != LS_SOLVER_OK)
        return st;
    for (int i = 0; i < h->nu; i++)
        x[h->full[i]] = r[i];
    /* Norton currents: I_k = (b_k + sum_l a_lk v_l) / rs */
    for (int k = m; k < n; k++) {
        if (h->fixes[k - m] >= 0)
            continue;
        double t = bk[k - m];
        for (int p = a->colptr[S(k)]; p < a->colptr[S(k) + 1]; p++) {
            int l = a->rowind[p];
            if (l != k)
                t += a->val[p] * x[l];
        }
        bk[k - m] = t / a->val[csc_find(a, k, S(k))];
    }
    /* fixed-node source currents from KCL at their node e: the node block is
     * symmetric and a_ek' = -a_k'e, so row e is read from column e */
    for (int k = m; k < n; k++) {
        int e = h->fixes[k - m];
        if (e < 0)
            continue;
        double s = bsave[k - m];
        for (int p = a->colptr[S(e)]; p < a->colptr[S(e) + 1]; p++) {
            int i = a->rowind[p];
            if (i < m)
                s -= a->val[p] * x[i];
            else if (i != k)
                s += a->val[p] * x[i];
        }
        bk[k - m] = -s / a->val[csc_find(a, k, S(e))]; /* a_ek = -a_ke */
    }
    return LS_SOLVER_OK;
#undef S
}

/* Solve A x = b or A^T x = b in place; A^T = S A S flips the branch signs. */
static int reduced_solve(void *self, double *b, int transpose, ls_solver_stats *st)
{
    reduced *h = self;
    (void)st;
    if (!h->factored)
        return LS_SOLVER_FAILED;
    if (transpose)
        for (int k = h->m; k < h->n; k++)
            b[k] = -b[k];
    int rc = reduced_solve_plain(h, b);
    if (transpose)
        for (int k = h->m; k < h->n; k++)
            b[k] = -b[k];
    return rc;
}

const ls_backend ls_backend_reduced = {
    "cholmod-reduced", reduced_create, reduced_analyze, reduced_factor, reduced_solve, reduced_destroy,
    reduced_analyze_factor,
};

#endif /* LS_HAVE_SPARSE */
