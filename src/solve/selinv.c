/* selinv.c — entries of A^-1 from a sparse LU: single ones by two sparse
 * triangular solves, or all on the factor's closed pattern in one backward
 * pass (see selinv.h). */
#include "solve/selinv.h"

#include <klu.h>

#include <limits.h>
#include <stdbool.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* One sparse vector: dense values, valid only at the reach (the rest is 0). */
typedef struct svec {
    double *x;   /* n values, zero outside reach */
    int *reach;  /* the nonzero positions, in the order they were computed */
    int nreach;
} svec;

/* One slot of the selected inverse's pattern: Z_ij, Z_ji (i > j) and their
 * absolute-value bounds, side by side so the pass reads one cache line. */
typedef struct zslot {
    double zl, zu, ml, mu;
} zslot;

struct ls_selinv {
    int n;
    int *lp, *li;       /* L below its unit diagonal, by columns */
    double *lx;
    int *tp, *ti;       /* U above its diagonal, by rows (U^T by columns) */
    double *tx;
    double *udiag;
    int *pinv, *qinv;
    int *pperm, *qperm; /* P[k], Q[k]: the row and column of A at pivot k */
    double *rs;         /* row scale factors in pivot order: row P[k] of A was divided by rs[k] */
    int *mark, gen;     /* DFS visit marks: mark[k] == gen is visited */
    int *stack, *pstack;
    svec col[LS_SELINV_MAX], row[LS_SELINV_MAX];
    /* The selected inverse Z = (P (Rs \ A) Q)^-1 on the closed pattern S of
     * the factor (ls_selinv_fill), in pivot order.  S holds, by columns, the
     * strict lower part of the symbolic Cholesky pattern of L + U + (L + U)^T,
     * rows sorted; at slot p of column j (row i > j): zl = Z_ij, zu = Z_ji,
     * ml and mu the same entries of the recurrence run on absolute values
     * (a bound on |Z| whose excess over it measures cancellation). */
    bool filled;
    int *sp, *si;
    zslot *z;
    double *zd, *md;    /* Z_jj and its absolute-value bound */
};

/* Frees everything s owns (s itself too). */
static void selinv_release(ls_selinv *s)
{
    free(s->lp); free(s->li); free(s->lx);
    free(s->tp); free(s->ti); free(s->tx);
    free(s->udiag); free(s->pinv); free(s->qinv); free(s->pperm); free(s->qperm); free(s->rs);
    free(s->mark); free(s->stack); free(s->pstack);
    free(s->sp); free(s->si); free(s->z);
    free(s->zd); free(s->md);
    for (int v = 0; v < LS_SELINV_MAX; v++) {
        free(s->col[v].x); free(s->col[v].reach);
        free(s->row[v].x); free(s->row[v].reach);
    }
    free(s);
}

void ls_selinv_free(ls_selinv **ps)
{
    if (ps && *ps) {
        selinv_release(*ps);
        *ps = NULL;
    }
}

static void *zalloc(size_t count, size_t size) { return calloc(count ? count : 1, size); }

/* L (strictly lower part) and U (strictly upper part, transposed to rows,
 * plus its diagonal) from KLU's extracted factors.  0, or -1 no memory. */
static int split_factors(ls_selinv *s, const int *Lp, const int *Li, const double *Lx, const int *Up,
                         const int *Ui, const double *Ux)
{
    int n = s->n;
    s->lp = zalloc((size_t)n + 1, sizeof(int));
    s->tp = zalloc((size_t)n + 1, sizeof(int));
    s->udiag = zalloc((size_t)n, sizeof(double));
    s->li = zalloc((size_t)Lp[n], sizeof(int));
    s->lx = zalloc((size_t)Lp[n], sizeof(double));
    s->ti = zalloc((size_t)Up[n], sizeof(int));
    s->tx = zalloc((size_t)Up[n], sizeof(double));
    if (!s->lp || !s->tp || !s->udiag || !s->li || !s->lx || !s->ti || !s->tx)
        return -1;
    int nz = 0;
    for (int k = 0; k < n; k++) {
        for (int p = Lp[k]; p < Lp[k + 1]; p++)
            if (Li[p] != k) { /* the unit diagonal is implied */
                s->li[nz] = Li[p];
                s->lx[nz++] = Lx[p];
            }
        s->lp[k + 1] = nz;
    }
    for (int k = 0; k < n; k++) /* count U's off-diagonal entries per row */
        for (int p = Up[k]; p < Up[k + 1]; p++) {
            if (Ui[p] == k)
                s->udiag[k] = Ux[p];
            else
                s->tp[Ui[p] + 1]++;
        }
    for (int i = 0; i < n; i++)
        s->tp[i + 1] += s->tp[i];
    int *fill = malloc((size_t)(n ? n : 1) * sizeof *fill);
    if (!fill)
        return -1;
    memcpy(fill, s->tp, (size_t)n * sizeof *fill);
    for (int k = 0; k < n; k++)
        for (int p = Up[k]; p < Up[k + 1]; p++)
            if (Ui[p] != k) {
                int q = fill[Ui[p]]++;
                s->ti[q] = k;
                s->tx[q] = Ux[p];
            }
    free(fill);
    return 0;
}

/* Factor with KLU (no block triangular form, so the factors are one L and one
 * U), extract them and keep what the entries need.  0 ok, -1 failure. */
static int factor_into(ls_selinv *s, const ls_csc *a, double *rcond)
{
    int n = a->n, rc = -1;
    klu_common c;
    klu_defaults(&c);
    c.btf = 0;
    c.scale = 2; /* rows scaled by their largest entry */
    klu_symbolic *sym = klu_analyze(n, a->colptr, a->rowind, &c);
    klu_numeric *num = sym ? klu_factor(a->colptr, a->rowind, a->val, sym, &c) : NULL;
    if (!num || c.status != KLU_OK || !klu_rcond(sym, num, &c))
        goto done;
    *rcond = c.rcond;
    int *Lp = zalloc((size_t)n + 1, sizeof(int)), *Up = zalloc((size_t)n + 1, sizeof(int));
    int *Li = zalloc((size_t)num->lnz, sizeof(int)), *Ui = zalloc((size_t)num->unz, sizeof(int));
    double *Lx = zalloc((size_t)num->lnz, sizeof(double)), *Ux = zalloc((size_t)num->unz, sizeof(double));
    int *P = s->pperm = zalloc((size_t)n, sizeof(int)), *Q = s->qperm = zalloc((size_t)n, sizeof(int));
    s->rs = zalloc((size_t)n, sizeof(double));
    s->pinv = zalloc((size_t)n, sizeof(int));
    s->qinv = zalloc((size_t)n, sizeof(int));
    if (Lp && Up && Li && Ui && Lx && Ux && P && Q && s->rs && s->pinv && s->qinv &&
        klu_extract(num, sym, Lp, Li, Lx, Up, Ui, Ux, NULL, NULL, NULL, P, Q, s->rs, NULL, &c) &&
        split_factors(s, Lp, Li, Lx, Up, Ui, Ux) == 0) {
        for (int k = 0; k < n; k++) {
            s->pinv[P[k]] = k;
            s->qinv[Q[k]] = k;
        }
        rc = 0;
    }
    free(Lp); free(Up); free(Li); free(Ui); free(Lx); free(Ux);
done:
    klu_free_numeric(&num, &c);
    klu_free_symbolic(&sym, &c);
    return rc;
}

ls_selinv *ls_selinv_new(const ls_csc *a, double *rcond)
{
    ls_selinv *s = calloc(1, sizeof *s);
    if (!s || !a || a->n <= 0) {
        free(s);
        return NULL;
    }
    int n = s->n = a->n;
    *rcond = 0;
    s->mark = zalloc((size_t)n, sizeof(int));
    s->stack = zalloc((size_t)n, sizeof(int));
    s->pstack = zalloc((size_t)n, sizeof(int));
    bool ok = s->mark && s->stack && s->pstack;
    for (int v = 0; v < LS_SELINV_MAX && ok; v++) {
        s->col[v].x = zalloc((size_t)n, sizeof(double));
        s->col[v].reach = zalloc((size_t)n, sizeof(int));
        s->row[v].x = zalloc((size_t)n, sizeof(double));
        s->row[v].reach = zalloc((size_t)n, sizeof(int));
        ok = s->col[v].x && s->col[v].reach && s->row[v].x && s->row[v].reach;
    }
    if (!ok || factor_into(s, a, rcond) != 0) {
        selinv_release(s);
        return NULL;
    }
    return s;
}

/* The columns reachable from `start` in the graph of the lower triangular
 * factor stored by columns in (p, i), in topological order (every column
 * before the ones it updates), into v->reach.  Depth-first, without
 * recursion. */
static void reach(ls_selinv *s, const int *p, const int *idx, int start, svec *v)
{
    int top = s->n; /* reach is filled from the end, then moved to the front */
    int *out = v->reach, head = 0;
    s->gen++;
    if (s->gen == 0x7fffffff) { /* wrap: clear the marks once */
        memset(s->mark, 0, (size_t)s->n * sizeof *s->mark);
        s->gen = 1;
    }
    s->stack[0] = start;
    while (head >= 0) {
        int j = s->stack[head];
        if (s->mark[j] != s->gen) {
            s->mark[j] = s->gen;
            s->pstack[head] = p[j];
        }
        bool done = true;
        for (int q = s->pstack[head]; q < p[j + 1]; q++) {
            int i = idx[q];
            if (s->mark[i] == s->gen)
                continue;
            s->pstack[head] = q + 1; /* resume after i */
            s->stack[++head] = i;
            done = false;
            break;
        }
        if (done) {
            head--;
            out[--top] = j;
        }
    }
    v->nreach = s->n - top;
    memmove(out, out + top, (size_t)v->nreach * sizeof *out);
}

/* v = L^-1 e_start (unit lower L by columns). */
static void solve_l(ls_selinv *s, int start, svec *v)
{
    reach(s, s->lp, s->li, start, v);
    v->x[start] = 1;
    for (int r = 0; r < v->nreach; r++) {
        int k = v->reach[r];
        double xk = v->x[k];
        if (xk != 0)
            for (int q = s->lp[k]; q < s->lp[k + 1]; q++)
                v->x[s->li[q]] -= s->lx[q] * xk;
    }
}

/* v = U^-T e_start (U^T lower, by columns, with the diagonal apart). */
static void solve_ut(ls_selinv *s, int start, svec *v)
{
    reach(s, s->tp, s->ti, start, v);
    v->x[start] = 1;
    for (int r = 0; r < v->nreach; r++) {
        int k = v->reach[r];
        double xk = v->x[k] /= s->udiag[k];
        if (xk != 0)
            for (int q = s->tp[k]; q < s->tp[k + 1]; q++)
                v->x[s->ti[q]] -= s->tx[q] * xk;
    }
}

/* Zero v's values (its reach only). */
static void clear(svec *v)
{
    for (int r = 0; r < v->nreach; r++)
        v->x[v->reach[r]] = 0;
    v->nreach = 0;
}


/* ---- the selected inverse on the factor's pattern (Takahashi's recurrences) ---- */

static int cmp_index(const void *a, const void *b)
{
    int x = *(const int *)a, y = *(const int *)b;
    return (x > y) - (x < y);
}

/* Appends row i to the pattern under construction unless already there
 * (flag[i] == col).  0, or -1 out of memory. */
static int pattern_add(ls_selinv *s, int *flag, int col, int i, size_t *nz, size_t *cap)
{
    if (flag[i] == col)
        return 0;
    flag[i] = col;
    if (*nz == *cap) {
        size_t c = 2 * *cap;
        int *ni = realloc(s->si, c * sizeof *ni);
        if (!ni)
            return -1;
        s->si = ni;
        *cap = c;
    }
    s->si[(*nz)++] = i;
    return 0;
}

/* S (sp, si): column j is {i > j : L_ij or U_ji nonzero} joined with the
 * columns of j's children in the elimination tree (less j itself), so every
 * column minus its first row lies in its parent's column: the closure that
 * lets the recurrences find every entry they read.  With a symmetric pattern
 * and diagonal pivots it is L's own pattern.  0, or -1 out of memory. */
static int pattern_closure(ls_selinv *s)
{
    int n = s->n, rc = -1;
    size_t nz = 0, cap = (size_t)s->lp[n] + (size_t)s->tp[n] + (size_t)n + 1;
    int *flag = malloc((size_t)n * sizeof *flag), *head = malloc((size_t)n * sizeof *head);
    int *next = malloc((size_t)n * sizeof *next);
    s->sp = malloc(((size_t)n + 1) * sizeof *s->sp);
    s->si = malloc(cap * sizeof *s->si);
    if (!flag || !head || !next || !s->sp || !s->si)
        goto done;
    for (int j = 0; j < n; j++)
        flag[j] = head[j] = -1;
    for (int j = 0; j < n; j++) {
        size_t start = nz;
        s->sp[j] = (int)start;
        for (int q = s->lp[j]; q < s->lp[j + 1]; q++)
            if (pattern_add(s, flag, j, s->li[q], &nz, &cap) != 0)
                goto done;
        for (int q = s->tp[j]; q < s->tp[j + 1]; q++)
            if (pattern_add(s, flag, j, s->ti[q], &nz, &cap) != 0)
                goto done;
        for (int c = head[j]; c >= 0; c = next[c])
            for (int q = s->sp[c]; q < s->sp[c + 1]; q++)
                if (s->si[q] != j && pattern_add(s, flag, j, s->si[q], &nz, &cap) != 0)
                    goto done;
        if (nz > (size_t)INT_MAX)
            goto done;   /* the pattern's offsets are ints, like the factor's */
        qsort(s->si + start, nz - start, sizeof *s->si, cmp_index);
        if (nz > start) {   /* the parent is the first row below the diagonal */
            int parent = s->si[start];
            next[j] = head[parent];
            head[parent] = j;
        }
    }
    s->sp[n] = (int)nz;
    rc = 0;
done:
    free(flag);
    free(head);
    free(next);
    return rc;
}

/* L_ij (sl) and U_ji / U_jj (su, the unit upper factor) at every slot of S;
 * zero where S holds fill that neither factor has.  pos: n ints of scratch.
 * 0, or -1 out of memory. */
static int pattern_values(ls_selinv *s, int *pos, double **psl, double **psu)
{
    size_t nz = (size_t)s->sp[s->n];
    double *sl = *psl = calloc(nz ? nz : 1, sizeof *sl);
    double *su = *psu = calloc(nz ? nz : 1, sizeof *su);
    if (!sl || !su)
        return -1;
    for (int j = 0; j < s->n; j++) {
        for (int p = s->sp[j]; p < s->sp[j + 1]; p++)
            pos[s->si[p]] = p;
        for (int q = s->lp[j]; q < s->lp[j + 1]; q++)
            sl[pos[s->li[q]]] = s->lx[q];
        for (int q = s->tp[j]; q < s->tp[j + 1]; q++)
            su[pos[s->ti[q]]] = s->tx[q] / s->udiag[j];
    }
    return 0;
}

/* Column j of Z from the columns after it.  With Z = U1^-1 D^-1 L^-1 (U1 the
 * unit upper factor, D its diagonal), Z L = U1^-1 D^-1 and U1 Z = D^-1 L^-1
 * give, for i > j in column j of S,
 *     Z_ij = -sum_k Z_ik L_kj,   Z_ji = -sum_k U1_jk Z_ki,
 *     Z_jj = 1 / D_j - sum_k U1_jk Z_kj,
 * k over column j of S; every Z_ik they read sits in column min(i, k) > j,
 * because column j below row k lies in column k (the closure).  Each pair
 * (lo, hi) of column j's rows is met once, walking column lo alongside
 * column j (both sorted). */
static void takahashi_column(ls_selinv *s, int j, const double *sl, const double *su)
{
    const int *si = s->si;
    zslot *z = s->z;
    int p0 = s->sp[j], p1 = s->sp[j + 1];
    for (int p = p0; p < p1; p++)
        z[p] = (zslot){0, 0, 0, 0};
    for (int a = p0; a < p1; a++) {
        int lo = si[a];
        double la = sl[a], ua = su[a], fla = fabs(la), fua = fabs(ua);
        /* the k = i terms, then the pairs (lo, hi) with hi after lo */
        double zla = -s->zd[lo] * la, mla = s->md[lo] * fla, zua = -ua * s->zd[lo], mua = fua * s->md[lo];
        int b = s->sp[lo], bend = s->sp[lo + 1];
        for (int c = a + 1; c < p1; c++) {
            int hi = si[c];
            while (b < bend && si[b] != hi)
                b++;
            if (b == bend)
                break;                   /* cannot happen in a closed pattern */
            zslot zb = z[b++];           /* zl = Z_{hi,lo}, zu = Z_{lo,hi} */
            z[c].zl -= zb.zl * la;       /* Z_{hi,j} -= Z_{hi,lo} L_{lo,j} */
            z[c].zu -= ua * zb.zu;       /* Z_{j,hi} -= U1_{j,lo} Z_{lo,hi} */
            zla -= zb.zu * sl[c];        /* Z_{lo,j} -= Z_{lo,hi} L_{hi,j} */
            zua -= su[c] * zb.zl;        /* Z_{j,lo} -= U1_{j,hi} Z_{hi,lo} */
            z[c].ml += zb.ml * fla;
            z[c].mu += fua * zb.mu;
            mla += zb.mu * fabs(sl[c]);
            mua += fabs(su[c]) * zb.ml;
        }
        z[a].zl += zla;
        z[a].zu += zua;
        z[a].ml += mla;
        z[a].mu += mua;
    }
    double d = 1 / s->udiag[j], m = fabs(d);
    for (int a = p0; a < p1; a++) {
        d -= su[a] * z[a].zl;
        m += fabs(su[a]) * z[a].ml;
    }
    s->zd[j] = d;
    s->md[j] = m;
}

int ls_selinv_fill(ls_selinv *s)
{
    if (s->filled)
        return 0;
    int n = s->n, rc = -1;
    double *sl = NULL, *su = NULL;
    int *pos = malloc((size_t)n * sizeof *pos);
    if (!pos || pattern_closure(s) != 0 || pattern_values(s, pos, &sl, &su) != 0)
        goto done;
    size_t nz = (size_t)s->sp[n] ? (size_t)s->sp[n] : 1;
    s->z = malloc(nz * sizeof *s->z);
    s->zd = malloc((size_t)n * sizeof *s->zd);
    s->md = malloc((size_t)n * sizeof *s->md);
    if (!s->z || !s->zd || !s->md)
        goto done;
    for (int j = n - 1; j >= 0; j--)
        takahashi_column(s, j, sl, su);
    s->filled = true;
    rc = 0;
done:
    if (rc != 0) {   /* all or nothing: the entries keep coming from the solves */
        free(s->sp); free(s->si); free(s->z);
        free(s->zd); free(s->md);
        s->sp = s->si = NULL;
        s->z = NULL;
        s->zd = s->md = NULL;
    }
    free(sl);
    free(su);
    free(pos);
    return rc;
}

long ls_selinv_pattern_size(const ls_selinv *s)
{
    return s->filled ? (long)s->n + 2L * s->sp[s->n] : 0;
}

/* Z_rc (pivot order) and its bound from the filled pattern; false when (r, c)
 * is not in S. */
static bool pattern_entry(const ls_selinv *s, int r, int c, double *z, double *m)
{
    if (r == c) {
        *z = s->zd[r];
        *m = s->md[r];
        return true;
    }
    int lo = r < c ? r : c, hi = r < c ? c : r;
    const int *first = s->si + s->sp[lo];
    const int *hit = bsearch(&hi, first, (size_t)(s->sp[lo + 1] - s->sp[lo]), sizeof *first, cmp_index);
    if (!hit)
        return false;
    size_t p = (size_t)(hit - s->si);
    *z = r > c ? s->z[p].zl : s->z[p].zu;
    *m = r > c ? s->z[p].ml : s->z[p].mu;
    return true;
}

int ls_selinv_pattern_entry(const ls_selinv *s, long k, int *row, int *col, double *value, double *mag)
{
    if (!s->filled || k < 0 || k >= ls_selinv_pattern_size(s))
        return -1;
    int r, c;
    if (k < s->n) {
        r = c = (int)k;
    } else {
        long q = (k - s->n) / 2;
        int j = 0, lo = 0, hi = s->n;   /* the column holding slot q */
        while (hi - lo > 1) {
            int mid = lo + (hi - lo) / 2;
            if (s->sp[mid] <= q)
                lo = mid;
            else
                hi = mid;
        }
        j = lo;
        r = (k - s->n) % 2 ? j : s->si[q];
        c = (k - s->n) % 2 ? s->si[q] : j;
    }
    double z = 0, m = 0;
    pattern_entry(s, r, c, &z, &m);
    /* back from pivot order: Z_rc = (A^-1)_{Q[r], P[c]} * Rs_c */
    *row = s->qperm[r];
    *col = s->pperm[c];
    *value = z / s->rs[c];
    if (mag)
        *mag = m / s->rs[c];
    return 0;
}

/* out and mag as ls_selinv_block, every entry from the filled pattern; false
 * (out partly written) when one is not in it. */
static bool block_from_pattern(const ls_selinv *s, const int *rows, int nr, const int *cols, int nc, double *out,
                               double *mag)
{
    for (int r = 0; r < nr; r++)
        for (int c = 0; c < nc; c++) {
            double z = 0, m = 0;
            if (rows[r] >= 0 && cols[c] >= 0) {
                int pc = s->pinv[cols[c]];
                if (!pattern_entry(s, s->qinv[rows[r]], pc, &z, &m))
                    return false;
                z /= s->rs[pc];
                m /= s->rs[pc];
            }
            out[r * nc + c] = z;
            if (mag)
                mag[r * nc + c] = m;
        }
    return true;
}

int ls_selinv_block(ls_selinv *s, const int *rows, int nr, const int *cols, int nc, double *out, double *mag)
{
    if (nr > LS_SELINV_MAX || nc > LS_SELINV_MAX)
        return -1;
    for (int r = 0; r < nr; r++)
        if (rows[r] >= s->n)
            return -1;
    for (int c = 0; c < nc; c++)
        if (cols[c] >= s->n)
            return -1;
    if (s->filled && block_from_pattern(s, rows, nr, cols, nc, out, mag))
        return 0;
    for (int c = 0; c < nc; c++)
        if (cols[c] >= 0)
            solve_l(s, s->pinv[cols[c]], &s->col[c]);
    for (int r = 0; r < nr; r++) {
        if (rows[r] >= 0)
            solve_ut(s, s->qinv[rows[r]], &s->row[r]);
        for (int c = 0; c < nc; c++) {
            double sum = 0, abs_sum = 0;
            if (rows[r] >= 0 && cols[c] >= 0) {
                /* over the shorter reach; the other vector is zero off its own */
                const svec *a = &s->row[r], *b = &s->col[c];
                if (a->nreach > b->nreach) {
                    const svec *t = a;
                    a = b;
                    b = t;
                }
                for (int q = 0; q < a->nreach; q++) {
                    double t = a->x[a->reach[q]] * b->x[a->reach[q]];
                    sum += t;
                    abs_sum += fabs(t);
                }
                double scale = s->rs[s->pinv[cols[c]]]; /* klu_extract gives Rs in pivot order */
                sum /= scale;
                abs_sum /= scale;
            }
            out[r * nc + c] = sum;
            if (mag)
                mag[r * nc + c] = abs_sum;
        }
        clear(&s->row[r]);
    }
    for (int c = 0; c < nc; c++)
        clear(&s->col[c]);
    return 0;
}
