/* selinv.c — single entries of A^-1 from a sparse LU (see selinv.h). */
#include "solve/selinv.h"

#include <klu.h>

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

struct ls_selinv {
    int n;
    int *lp, *li;       /* L below its unit diagonal, by columns */
    double *lx;
    int *tp, *ti;       /* U above its diagonal, by rows (U^T by columns) */
    double *tx;
    double *udiag;
    int *pinv, *qinv;
    double *rs;         /* row scale factors in pivot order: row P[k] of A was divided by rs[k] */
    int *mark, gen;     /* DFS visit marks: mark[k] == gen is visited */
    int *stack, *pstack;
    svec col[LS_SELINV_MAX], row[LS_SELINV_MAX];
};

/* Frees everything s owns (s itself too). */
static void selinv_release(ls_selinv *s)
{
    free(s->lp); free(s->li); free(s->lx);
    free(s->tp); free(s->ti); free(s->tx);
    free(s->udiag); free(s->pinv); free(s->qinv); free(s->rs);
    free(s->mark); free(s->stack); free(s->pstack);
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
    int *P = zalloc((size_t)n, sizeof(int)), *Q = zalloc((size_t)n, sizeof(int));
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
    free(Lp); free(Up); free(Li); free(Ui); free(Lx); free(Ux); free(P); free(Q);
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
