/* reduced.c — the reduced nodal form: a solver backend for the MNA systems of
 * resistors and sources (see reduced.h), CHOLMOD inside. */
#include "solve/reduced.h"
#include "solve/sparse.h"

#include <float.h>
#include <stdbool.h>
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

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
 * Everything is read from A itself, with the MNA layout of src/parts/family.h (nodes first,
 * then branch unknowns); ls_mna_reducible says whether A has this shape. */

#ifdef LS_HAVE_SPARSE

/* 1 when x and y agree to a few ulps (a symmetric pair summed in another order). */
static int same_value(double x, double y)
{
    return fabs(x - y) <= 8 * DBL_EPSILON * fmax(fabs(x), fabs(y));
}

/* m: the smallest index such that every column from m on couples only to
 * rows below m, with +-1 entries mirrored by their negatives (n: none). */
static int branch_tail(const ls_csc *a)
{
    int n = a->n, m = n, maxpartner = -1;
    for (int k = n - 1; k >= 0; k--) {
        int ok = 1, top = -1;
        for (int p = a->colptr[k]; p < a->colptr[k + 1] && ok; p++) {
            int i = a->rowind[p];
            double v = a->val[p];
            if (i == k) {
                ok = v >= 0;
                continue;
            }
            int q = ls_csc_find(a, k, i);
            ok = fabs(v) == 1 && q >= 0 && a->val[q] == -v;
            top = i > top ? i : top;
        }
        if (!ok)
            break;
        maxpartner = top > maxpartner ? top : maxpartner;
        if (maxpartner < k)
            m = k;
    }
    return m;
}

/* Every column k >= m: only partners below m, and a zero-rs source fixes
 * one node that nothing else fixes (fixes[k - m], may be NULL: that node, or
 * -1 for a source with rs > 0).  Returns the number of fixed nodes, or -1
 * when a column breaks the shape.  mark: n ints of scratch. */
static int source_fixes(const ls_csc *a, int m, int *fixes, int *mark)
{
    int n = a->n, nfixed = 0;
    for (int i = 0; i < n; i++)
        mark[i] = -1;
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
    return nfixed;
}

/* Is A structurally symmetric, its node block (below m) numerically so (to
 * rounding), and every node-branch coupling mirrored with the opposite sign?
 * The columns are walked left to right: the mirror of an entry (i, j) below
 * the diagonal must be the next unmatched entry above the diagonal in column
 * i, as those rows are sorted and met in increasing j; an entry above the
 * diagonal still unmatched when its own column comes up has no mirror.
 * next: n ints of scratch, the next position per column. */
static bool mirrored(const ls_csc *a, int m, int *next)
{
    int n = a->n;
    for (int j = 0; j < n; j++)
        next[j] = a->colptr[j];
    for (int j = 0; j < n; j++) {
        if (next[j] < a->colptr[j + 1] && a->rowind[next[j]] < j)
            return false;
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++) {
            int i = a->rowind[p];
            if (i <= j)
                continue;
            int q = next[i];
            if (q >= a->colptr[i + 1] || a->rowind[q] != j)
                return false;
            if (i < m ? !same_value(a->val[q], a->val[p]) : a->val[q] != -a->val[p])
                return false;
            next[i]++;
        }
    }
    return true;
}

/* The first branch unknown m of a reducible A, or -1 when A does not have the
 * shape above.  Fills fixes[k - m] (may be NULL) with the node a zero-rs source
 * k fixes, or -1 for a source with rs > 0.  `mark` is n ints of scratch. */
static int reducible_split(const ls_csc *a, int *fixes, int *mark)
{
    int m = branch_tail(a);
    if (m == a->n)
        return -1;
    int nfixed = source_fixes(a, m, fixes, mark);
    if (nfixed < 0 || nfixed == m)
        return -1; /* nfixed == m: nothing left to factor, LU handles it directly */
    return mirrored(a, m, mark) ? m : -1;
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

/* Sorts entries start..w-1 of c by row, by insertion: a column's Norton
 * entries that arrive out of order are few. */
static void sort_column(ls_csc *c, size_t start, size_t w)
{
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

/* The column of M being built: its fill w from start, whether its rows
 * came in ascending order, and per reduced row its position (slot, -1:
 * none yet). */
typedef struct rcol {
    ls_csc *c;
    size_t cap, w, start;
    bool sorted;
    int *slot;
} rcol;

/* Add v at reduced row r of the column (summed onto an entry already
 * there).  0, or -1 no memory. */
static int col_add(rcol *col, int r, double v)
{
    if (col->slot[r] >= 0) {
        col->c->val[col->slot[r]] += v;
        return 0;
    }
    if (col_push(col->c, &col->cap, col->w, r, v) != 0)
        return -1;
    if (col->w > col->start && col->c->rowind[col->w - 1] > r)
        col->sorted = false;
    col->slot[r] = (int)col->w++;
    return 0;
}

/* Add the term of Norton source k touching the column's node, whose entry
 * in k's row is -cj: c_j c_l / a_kk for every free node l of k's column.
 * 0, or -1 no memory. */
static int add_source(const reduced *h, const ls_csc *a, rcol *col, int k, double cj)
{
    int pd = ls_csc_find(a, k, k);
    double g = 1 / a->val[pd];
    for (int q = a->colptr[k]; q < a->colptr[k + 1]; q++) {
        int l = a->rowind[q];
        if (l == k || h->pos[l] < 0)
            continue;
        if (col_add(col, h->pos[l], cj * a->val[q] * g) != 0)
            return -1;
    }
    return 0;
}

/* Build M = (G + C1 D1^-1 C1^T)_UU column by column from a (split at h->m),
 * rows sorted, entries that cancel kept.  0 ok, -1 no memory. */
static int build_reduced(reduced *h, const ls_csc *a)
{
    int m = h->m, nu = h->nu;
    ls_csc *c = &h->mr;
    ls_csc_free(c);
    c->n = nu;
    c->colptr = malloc(((size_t)nu + 1) * sizeof *c->colptr);
    rcol col = {.c = c, .cap = (size_t)ls_csc_nnz(a) + 16, .slot = h->mark}; /* reduced row -> position, or -1 */
    c->rowind = malloc(col.cap * sizeof *c->rowind);
    c->val = malloc(col.cap * sizeof *c->val);
    if (!c->colptr || !c->rowind || !c->val)
        return -1;
    for (int i = 0; i < nu; i++)
        col.slot[i] = -1;
    for (int u = 0; u < nu; u++) {
        int j = h->full[u];
        col.start = col.w;
        col.sorted = true;
        c->colptr[u] = (int)col.w;
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++) {
            int i = a->rowind[p];
            if (i < m) {   /* a conductance to free node pos[i]: rows arrive in order */
                int r = h->pos[i];
                if (r < 0)
                    continue;
                if (col_push(c, &col.cap, col.w, r, a->val[p]) != 0)
                    return -1;
                col.slot[r] = (int)col.w++;
            } else if (h->fixes[i - m] < 0 && add_source(h, a, &col, i, -a->val[p]) != 0) {
                /* Norton source k = i touching node j: c_j = -a_kj, c_l = a_lk */
                return -1;
            }
        }
        for (size_t p = col.start; p < col.w; p++)
            col.slot[c->rowind[p]] = -1;
        if (!col.sorted)
            sort_column(c, col.start, col.w);
    }
    c->colptr[nu] = (int)col.w;
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

/* The backend's state with M rebuilt from a (any factor forgotten first);
 * *rc gets reduce's LS_SOLVER_* status. */
static reduced *reduce_anew(void *self, const ls_csc *a, int *rc)
{
    reduced *h = self;
    h->factored = false;
    *rc = reduce(h, a);
    return h;
}

/* Split a, build M and analyze its pattern.  LS_SOLVER_* status; not this shape
 * is LS_SOLVER_NOT_SPD, so the caller falls back to LU. */
static int reduced_analyze(void *self, const ls_csc *a, ls_solver_stats *st)
{
    int rc;
    reduced *h = reduce_anew(self, a, &rc);
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
    int rc;
    reduced *h = reduce_anew(self, a, &rc);
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
        x[e] = bk[k - m] / a->val[ls_csc_find(a, k, S(e))];
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
        t /= a->val[ls_csc_find(a, k, S(k))];
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
        bk[k - m] = t / a->val[ls_csc_find(a, k, S(k))];
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
        bk[k - m] = -s / a->val[ls_csc_find(a, k, S(e))]; /* a_ek = -a_ke */
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
    reduced_analyze_factor, NULL, NULL, NULL,
};

#endif /* LS_HAVE_SPARSE */
