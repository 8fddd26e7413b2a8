/* patch.c — restamping only the parts whose values changed (see mna.h,
 * ls_mna_expect_changes).
 *
 * The stamps are additive, so an entry of A (or of b) is the sum, in part
 * order, of what every part reaching it stamps there.  A patch recomputes
 * exactly the entries the changed parts reach: each such entry is set to zero
 * and every part that reaches it (changed or not) is stamped again, in part
 * order, keeping only the triplets that land on those entries.  The sums are
 * then formed in the same order as a full restamp forms them, so the matrix
 * and the right-hand side are the same bit for bit, at the cost of the
 * changed parts and their neighbours instead of every part.
 *
 * Which entries a part reaches is recorded once (the index below): its
 * matrix positions from its triplets, and as its right-hand-side rows the
 * unknowns of its pins, rails and branches (a superset: rows it may write).  A
 * patch checks what it relies on and otherwise restamps in full: a changed
 * part's triplets must land on recorded positions (a value from or to zero
 * adds or drops entries), every recomputed position must be reached again,
 * and nothing may be written outside the recorded rows. */
#include "mna/mna.h"

#include <stdlib.h>
#include <string.h>

/* Parts (the ties as one more, last) against the entries they reach. */
typedef struct ls_mna_index {
    int np;                  /* nparts + 1: index np stands for the ties */
    int *ppos_ptr, *ppos;    /* per part: positions in a->val its stamp reaches */
    int *prow_ptr, *prow;    /* per part: rows of b it may write (pins, branches) */
    int *posp_ptr, *posp;    /* per position: the parts reaching it, ascending */
    int *rowp_ptr, *rowp;    /* per row: the parts that may write it, ascending */
    int *dep_ptr, *dep;      /* per part: the parts whose stamps read its value (via=) */
    unsigned *mark_pos, *mark_row, *mark_part, *mark_changed; /* == epoch: in this patch's sets */
    unsigned epoch;
    int *plist, *rlist, *tlist;  /* this patch's positions, rows and parts to stamp */
    double *bs;              /* scratch right-hand side, all zero between patches */
    int failures;            /* patches that had to restamp in full */
} ls_mna_index;

/* After this many patches in a row that fell back to a full restamp, a circuit's
 * changes are taken to be of the kind a patch cannot follow (values through
 * zero): patching stops for that system. */
#define PATCH_GIVE_UP 3

/* Frees m's index (NULL-safe). */
void ls_mna_index_free(ls_mna *m)
{
    ls_mna_index *x = m->index;
    if (!x)
        return;
    free(x->ppos_ptr);
    free(x->ppos);
    free(x->prow_ptr);
    free(x->prow);
    free(x->posp_ptr);
    free(x->posp);
    free(x->rowp_ptr);
    free(x->rowp);
    free(x->dep_ptr);
    free(x->dep);
    free(x->mark_pos);
    free(x->mark_row);
    free(x->mark_part);
    free(x->mark_changed);
    free(x->plist);
    free(x->rlist);
    free(x->tlist);
    free(x->bs);
    free(x);
    m->index = NULL;
}

/* Stamp part i (or the ties, i == nparts) into m->t (emptied first) with its
 * right-hand side into b. */
static void stamp_one(ls_mna *m, int i, double *b)
{
    ls_sink sink = {.mode = SINK_ASSEMBLE, .t = &m->t, .b = b, .scale = 1};
    m->t.nnz = 0;
    if (i < m->nl->nparts)
        ls_mna_stamp_part(m, i, &sink);
    else
        ls_mna_stamp_ties(m, &sink);
}

/* The rows part i may write into out (its pins', its ranges' nodes and its
 * branches, or every tied node for the ties); their count. */
static int part_rows(const ls_mna *m, int i, int *out)
{
    const ls_netlist *nl = m->nl;
    int k = 0;
    if (i == nl->nparts) {
        for (int j = 1; m->ties && j < nl->nnodes; j++)
            if (m->ties[j].g > 0)
                out[k++] = j - 1;
        return k;
    }
    const ls_part *p = &nl->parts[i];
    int nodes[LS_MAX_PINS + 2 * LS_MAX_RANGES], nn = 0;
    for (int j = 0; j < LS_MAX_PINS; j++)
        nodes[nn++] = p->pin[j];
    for (int j = 0; p->range && j < LS_MAX_RANGES; j++) /* an op-amp's rails take its supply current */
        for (int e = 0; e < 2; e++)
            nodes[nn++] = p->range[j][e].node;
    for (int j = 0; j < nn; j++) {
        int u = nodes[j] - 1;
        bool dup = false;
        for (int q = 0; q < k && !dup; q++)
            dup = out[q] == u;
        if (nodes[j] >= 1 && nodes[j] < nl->nnodes && !dup)
            out[k++] = u;
    }
    int nb = p->kind->branches(p);
    for (int j = 0; j < nb; j++)
        out[k++] = p->branch + j;
    return k;
}

/* Sort ints ascending (for the part lists). */
static int cmp_int(const void *a, const void *b)
{
    int x = *(const int *)a, y = *(const int *)b;
    return (x > y) - (x < y);
}

/* Transpose the lists (ptr, idx) over np owners into lists over nt targets,
 * owners ascending in each.  0, or -1 no memory. */
static int invert(const int *ptr, const int *idx, int np, int nt, int **optr, int **oidx)
{
    int *c = calloc((size_t)nt + 1, sizeof *c);
    int *o = malloc((size_t)(ptr[np] ? ptr[np] : 1) * sizeof *o);
    if (!c || !o) {
        free(c);
        free(o);
        return -1;
    }
    for (int k = 0; k < ptr[np]; k++)
        c[idx[k] + 1]++;
    for (int t = 0; t < nt; t++)
        c[t + 1] += c[t];
    int *pos = malloc(((size_t)nt + 1) * sizeof *pos);
    if (!pos) {
        free(c);
        free(o);
        return -1;
    }
    memcpy(pos, c, ((size_t)nt + 1) * sizeof *pos);
    for (int i = 0; i < np; i++) /* owners in ascending order: each list comes out sorted */
        for (int k = ptr[i]; k < ptr[i + 1]; k++)
            o[pos[idx[k]]++] = i;
    free(pos);
    *optr = c;
    *oidx = o;
    return 0;
}

/* Append v to the growing array *a (capacity *cap).  0, or -1 no memory. */
static int push(int **a, int *len, int *cap, int v)
{
    if (*len == *cap) {
        int nc = *cap ? 2 * *cap : 256;
        int *na = realloc(*a, (size_t)nc * sizeof *na);
        if (!na)
            return -1;
        *a = na;
        *cap = nc;
    }
    (*a)[(*len)++] = v;
    return 0;
}

/* The parts that read another part's value (a current-controlled source's
 * via= part: its current is that part's voltage over its resistance), as
 * lists per read part in x->dep_ptr / x->dep.  0, or -1 no memory. */
static int index_refs(const ls_mna *m, ls_mna_index *x)
{
    const ls_netlist *nl = m->nl;
    int np = nl->nparts, nref = 0;
    int *ptr = malloc(((size_t)np + 1) * sizeof *ptr), *idx = malloc(((size_t)np + 1) * sizeof *idx);
    if (!ptr || !idx) {
        free(ptr);
        free(idx);
        return -1;
    }
    for (int i = 0; i < np; i++) { /* each part reads at most its one via= part */
        ptr[i] = nref;
        if (nl->parts[i].ref >= 0 && nl->parts[i].ref < np)
            idx[nref++] = nl->parts[i].ref;
    }
    ptr[np] = nref;
    int rc = invert(ptr, idx, np, np, &x->dep_ptr, &x->dep);
    free(ptr);
    free(idx);
    return rc;
}

/* m's index with its per-part pointers, marks and scratch allocated (the
 * lists empty), and in *rows room for one part's rows.  NULL when out of
 * memory (nothing kept). */
static ls_mna_index *index_alloc(ls_mna *m, int **rows)
{
    int np = m->nl->nparts + 1, n = m->n, nnz = ls_csc_nnz(&m->a);
    ls_mna_index *x = calloc(1, sizeof *x);
    if (!x)
        return NULL;
    m->index = x;
    x->np = np;
    x->ppos_ptr = malloc(((size_t)np + 1) * sizeof *x->ppos_ptr);
    x->prow_ptr = malloc(((size_t)np + 1) * sizeof *x->prow_ptr);
    x->mark_pos = calloc((size_t)(nnz ? nnz : 1), sizeof *x->mark_pos);
    x->mark_row = calloc((size_t)(n ? n : 1), sizeof *x->mark_row);
    x->mark_part = calloc((size_t)np, sizeof *x->mark_part);
    x->mark_changed = calloc((size_t)np, sizeof *x->mark_changed);
    x->bs = calloc((size_t)(n ? n : 1), sizeof *x->bs);
    *rows = malloc(((size_t)LS_MAX_PINS + 2 * LS_MAX_RANGES + (size_t)(n ? n : 1)) * sizeof **rows);
    if (!x->ppos_ptr || !x->prow_ptr || !x->mark_pos || !x->mark_row || !x->mark_part || !x->mark_changed ||
        !x->bs || !*rows) {
        free(*rows);
        ls_mna_index_free(m);
        return NULL;
    }
    return x;
}

/* The growing lists of the index while it is built. */
typedef struct index_lists {
    int plen, pcap, rlen, rcap;
} index_lists;

/* Stamp part i once more and record the positions it reaches and the rows
 * it may write (rows: scratch).  0, 1 when its stamps do not fit what a
 * patch assumes (a position outside the pattern, a row an earlier part
 * wrote outside its own), or -1 no memory. */
static int index_part(ls_mna *m, ls_mna_index *x, int i, int *rows, index_lists *l)
{
    int rc = 0;
    x->ppos_ptr[i] = l->plen;
    x->prow_ptr[i] = l->rlen;
    x->epoch++;
    int nr = part_rows(m, i, rows);
    for (int k = 0; k < nr; k++)
        if (x->bs[rows[k]] != 0) /* an earlier part wrote a row outside its own */
            rc = 1;
    stamp_one(m, i, x->bs);
    if (m->t.failed)
        return -1;
    for (size_t k = 0; k < m->t.nnz && rc == 0; k++) {
        int q = ls_csc_find(&m->a, m->t.ti[k], m->t.tj[k]);
        if (q < 0)
            rc = 1;
        else if (x->mark_pos[q] != x->epoch) {
            x->mark_pos[q] = x->epoch;
            rc = push(&x->ppos, &l->plen, &l->pcap, q);
        }
    }
    for (int k = 0; k < nr && rc == 0; k++) {
        x->bs[rows[k]] = 0;
        rc = push(&x->prow, &l->rlen, &l->rcap, rows[k]);
    }
    return rc;
}

/* Build m's index from its current pattern by stamping every part once more.
 * Returns 0, 1 when the circuit's stamps do not fit what a patch assumes
 * (a stamp outside the pattern or outside its part's rows: no index, full
 * restamps), or -1 no memory. */
static int build_index(ls_mna *m)
{
    int np = m->nl->nparts + 1, n = m->n, nnz = ls_csc_nnz(&m->a);
    int *rows;
    ls_mna_index *x = index_alloc(m, &rows);
    if (!x)
        return -1;
    index_lists l = {0};
    int rc = 0;
    ls_triplets_free(&m->t);
    for (int i = 0; i < np && rc == 0; i++)
        rc = index_part(m, x, i, rows, &l);
    free(rows);
    ls_triplets_free(&m->t);
    for (int r = 0; r < n && rc == 0; r++)
        if (x->bs[r] != 0) /* a stamp wrote a row outside its part's pins and branches */
            rc = 1;
    if (rc == 0) {
        x->ppos_ptr[np] = l.plen;
        x->prow_ptr[np] = l.rlen;
        if (invert(x->ppos_ptr, x->ppos, np, nnz, &x->posp_ptr, &x->posp) != 0 ||
            invert(x->prow_ptr, x->prow, np, n, &x->rowp_ptr, &x->rowp) != 0 || index_refs(m, x) != 0)
            rc = -1;
    }
    if (rc != 0) {
        ls_mna_index_free(m);
        return rc;
    }
    memset(x->mark_pos, 0, (size_t)(nnz ? nnz : 1) * sizeof *x->mark_pos);
    memset(x->mark_row, 0, (size_t)(n ? n : 1) * sizeof *x->mark_row);
    memset(x->mark_part, 0, (size_t)np * sizeof *x->mark_part);
    x->epoch = 1;
    return 0;
}

/* The changed parts and the parts whose stamps read their values (via=),
 * each once, into a malloc'd list of *n; NULL when out of memory. */
static int *with_readers(ls_mna_index *x, const int *parts, int k, int *n)
{
    unsigned e = x->epoch;
    for (int s = 0; s < k; s++) /* a part whose stamp reads a changed part's value changes with it */
        x->mark_changed[parts[s]] = e;
    int *all = malloc(((size_t)k + (size_t)x->dep_ptr[x->np - 1] + 1) * sizeof *all), na = 0;
    if (!all)
        return NULL;
    for (int s = 0; s < k; s++) {
        all[na++] = parts[s];
        for (int d = x->dep_ptr[parts[s]]; d < x->dep_ptr[parts[s] + 1]; d++)
            if (x->mark_changed[x->dep[d]] != e) {
                x->mark_changed[x->dep[d]] = e;
                all[na++] = x->dep[d];
            }
    }
    *n = na;
    return all;
}

/* Append to *out (length *len, capacity *cap) every entry of the lists
 * (ptr, idx) of the n owners in `of` not yet marked with the patch's epoch
 * in mark, marking it.  0, or -1 no memory. */
static int gather(const ls_mna_index *x, const int *of, int n, const int *ptr, const int *idx, unsigned *mark,
                  int **out, int *len, int *cap)
{
    for (int s = 0; s < n; s++)
        for (int q = ptr[of[s]]; q < ptr[of[s] + 1]; q++)
            if (mark[idx[q]] != x->epoch) {
                mark[idx[q]] = x->epoch;
                if (push(out, len, cap, idx[q]) != 0)
                    return -1;
            }
    return 0;
}

/* Collect this patch's positions, rows and parts from the changed parts:
 * the positions and rows the changed parts (and their readers) reach, then
 * every part reaching one of those, in part order.  0, or -1 no memory. */
static int collect(ls_mna_index *x, const int *parts, int k, int *npos, int *nrow, int *npart)
{
    int pc = 0, rc = 0, tc = 0, plen = 0, rlen = 0, tlen = 0, na = 0;
    free(x->plist);
    free(x->rlist);
    free(x->tlist);
    x->plist = x->rlist = x->tlist = NULL;
    int *all = with_readers(x, parts, k, &na);
    if (!all)
        return -1;
    int st = gather(x, all, na, x->ppos_ptr, x->ppos, x->mark_pos, &x->plist, &plen, &pc);
    if (st == 0)
        st = gather(x, all, na, x->prow_ptr, x->prow, x->mark_row, &x->rlist, &rlen, &rc);
    free(all);
    if (st != 0 || gather(x, x->plist, plen, x->posp_ptr, x->posp, x->mark_part, &x->tlist, &tlen, &tc) != 0 ||
        gather(x, x->rlist, rlen, x->rowp_ptr, x->rowp, x->mark_part, &x->tlist, &tlen, &tc) != 0)
        return -1;
    qsort(x->tlist, (size_t)tlen, sizeof *x->tlist, cmp_int);
    *npos = plen;
    *nrow = rlen;
    *npart = tlen;
    return 0;
}

/* Patch m for the changed parts (see the top of this file).  1 done, 0 the
 * stamps did not fit the index (m->a and m->b must be restamped in full),
 * -1 no memory. */
static int patch(ls_mna *m, const int *parts, int k)
{
    ls_mna_index *x = m->index;
    int npos, nrow, npart;
    if (++x->epoch == 0) { /* wrapped: every mark is stale, start the marks over */
        memset(x->mark_pos, 0, (size_t)(ls_csc_nnz(&m->a) ? ls_csc_nnz(&m->a) : 1) * sizeof *x->mark_pos);
        memset(x->mark_row, 0, (size_t)(m->n ? m->n : 1) * sizeof *x->mark_row);
        memset(x->mark_part, 0, (size_t)x->np * sizeof *x->mark_part);
        memset(x->mark_changed, 0, (size_t)x->np * sizeof *x->mark_changed);
        x->epoch = 1;
    }
    if (collect(x, parts, k, &npos, &nrow, &npart) != 0)
        return -1;
    unsigned e = x->epoch;
    for (int q = 0; q < npos; q++)
        m->seen[x->plist[q]] = 0;
    int ok = 1;
    ls_triplets_free(&m->t);
    for (int t = 0; t < npart && ok; t++) {
        int i = x->tlist[t];
        stamp_one(m, i, x->bs);
        if (m->t.failed) {
            ls_triplets_free(&m->t);
            return -1;
        }
        for (size_t s = 0; s < m->t.nnz && ok; s++) {
            int q = ls_csc_find(&m->a, m->t.ti[s], m->t.tj[s]);
            if (q < 0 || (x->mark_pos[q] != e && x->mark_changed[i] == e)) {
                ok = 0; /* a changed part reaches an entry it did not reach when recorded */
            } else if (x->mark_pos[q] == e) {
                if (m->seen[q]) {
                    m->a.val[q] += m->t.tx[s];
                } else {
                    m->a.val[q] = m->t.tx[s];
                    m->seen[q] = 1;
                }
            }
        }
    }
    ls_triplets_free(&m->t);
    for (int q = 0; q < npos && ok; q++)
        ok = m->seen[x->plist[q]]; /* an entry nothing reaches now: the pattern shrank */
    for (int q = 0; q < nrow; q++) {
        if (ok)
            m->b[x->rlist[q]] = x->bs[x->rlist[q]];
        x->bs[x->rlist[q]] = 0;
    }
    for (int t = 0; t < npart; t++)
        for (int q = x->prow_ptr[x->tlist[t]]; q < x->prow_ptr[x->tlist[t] + 1]; q++)
            x->bs[x->prow[q]] = 0;
    for (int r = 0; r < m->n; r++)
        if (x->bs[r] != 0) { /* a stamp outside its rows: the index cannot follow this circuit */
            ok = 0;
            x->bs[r] = 0;
        }
    return ok;
}

/* The patch path of ls_mna_restamp (mna.c): 1 patched, 0 not (restamp in
 * full), -1 no memory. */
int ls_mna_try_patch(ls_mna *m)
{
    const int *parts = m->pending;
    int k = m->npending;
    m->pending = NULL;
    m->npending = 0;
    if (!parts || !m->a.colptr || m->patch_failures >= PATCH_GIVE_UP)
        return 0;
    /* beyond a quarter of the parts a full restamp costs about as much */
    if (k > m->nl->nparts / 4 + 1)
        return 0;
    if (ls_mna_reserve_seen(m) != 0)
        return -1;
    if (!m->index) {
        /* the index must describe the values the matrix holds: it is made
         * right after this (full) restamp, for the next announcement */
        m->want_index = true;
        return 0;
    }
    for (int s = 0; s < k; s++)
        if (parts[s] < 0 || parts[s] >= m->nl->nparts)
            return 0;
    int r = patch(m, parts, k);
    if (r <= 0) {
        /* the caller restamps in full; the index is made again from that
         * assembly the next time (its pattern may have changed) */
        ls_mna_index_free(m);
        m->patch_failures += r == 0;
        m->want_index = r == 0;
        return r;
    }
    m->patch_failures = 0;
    m->amax = ls_csc_amax(&m->a);
    m->patched++;
    return 1;
}

/* After a full restamp asked for by an announcement: record what each part
 * reaches, from the values just stamped.  0, or -1 no memory (no index:
 * the next announcement restamps in full again). */
int ls_mna_index_after_restamp(ls_mna *m)
{
    if (!m->want_index)
        return 0;
    m->want_index = false;
    int r = build_index(m);
    if (r > 0)
        m->patch_failures = PATCH_GIVE_UP;
    return r < 0 ? -1 : 0;
}

void ls_mna_expect_changes(ls_mna *m, const int *parts, int k)
{
    /* LOADSTACK_RESTAMP_ALL=1: every restamp in full (to compare the paths) */
    const char *env = getenv("LOADSTACK_RESTAMP_ALL");
    if (env && !strcmp(env, "1"))
        return;
    m->pending = parts;
    m->npending = k;
}
