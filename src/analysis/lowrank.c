/* lowrank.c — modified systems by low-rank update, and the port report.
 *
 * Opening a port or removing a part changes a few rows of the MNA matrix:
 * A' = A + E_R D, with E_R the unit columns of the changed rows R and D the row
 * changes.  By the Woodbury identity, with Z = A^-1 E_R and C = I + D Z,
 *     A'^-1 y = w - Z C^-1 (D w),   w = A^-1 y,
 * so each modification costs |R| solves with the one factorization of A.
 * Because A w = y, D w = (A' w)_R - y_R and C = (A' Z)_R: both are formed from
 * the new rows A'_R directly, which keeps the cancellation of "a row replaced
 * by another" out of the small system (opening a port turns its row
 * V(from) - V(to) = 0 into I = 0, and C is then just Z's own entry).
 * Nodes that the change leaves with no DC path to ground are pinned to ground
 * through a conductance (extra rows of the update); any result that depends on
 * a pinned voltage is undefined, and a driving-point resistance at a floating
 * node is unbounded. */
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "elab/elab.h"
#include "base/unionfind.h"
#include "base/fmt.h"
#include "analysis/lowrank.h"
#include "analysis/newton.h"
#include "solve/selinv.h"
#include "analysis/variant.h"

/* The port report takes A^-1's entries from a selected-inverse factor from
 * this many unknowns on (below, two refined solves per port cost less than
 * one more factorization), when KLU's pivot ratio is at least
 * SELINV_MIN_RCOND (else the refined solves, which check their residual). */
#define LS_SELINV_MIN_N 2000
#define SELINV_MIN_RCOND 1e-10
/* A port field from the selected inverse whose two terms' magnitudes add to
 * more than this times the field is computed again from refined solves: the
 * entries' rounding (a few units in the last place of the larger term) must
 * stay below 1e-12 of the field (tests/scale/fast_paths.py). */
#define SELINV_MAX_CANCEL 16.0

#define MAX_RANK 64
#define DEPEND_TOL 1e-9
/* A pivot of C below this share of its uncancelled magnitude: no solution. */
#define SINGULAR_TOL 1e-12
/* Relative residual above which a solve gets a refinement step. */
#define REFINE_TOL 1e-14

struct ls_mod {
    ls_op *op;
    int n, r;
    int *rows;               /* r changed rows, ascending */
    int *dptr, *dcol;        /* D in compressed rows, duplicates summed */
    double *dval;
    int *nptr, *ncol;        /* the new rows A'_R = A_R + D, compressed */
    double *nval;
    double *db;              /* rhs change, n */
    bool db_zero;            /* the right-hand side is unchanged */
    double *Z;               /* n*r, column-major: A^-1 E_R */
    double *Y;               /* n*r, column-major: A^-T D^T, built on first transposed solve */
    double *C;               /* r*r LU factors, column-major */
    int *ipiv;               /* their row interchanges */
    double anorm;            /* max |a_ij| of the base matrix, for residual tests */
    bool singular;
    double *x;               /* modified solution */
    bool *floating;          /* per node */
    int nfloating;
    int *float_row;          /* per node: its index in rows, or -1 */
    int *island;             /* per node: a representative of its DC-connected group */
    /* fallback: an explicit factorization of A' */
    ls_solver *own;
    ls_csc own_a;
    double *scratch;         /* max(n, r) values for the dependence probes, made with m */
};

bool ls_mod_singular(const ls_mod *m) { return m->singular; }
bool ls_mod_is_floating(const ls_mod *m, int node) { return node > 0 && m->floating && m->floating[node]; }

/* Frees m and everything it owns; sets *pm to NULL; accepts NULL. */
void ls_mod_free(ls_mod **pm)
{
    ls_mod *m = pm ? *pm : NULL;
    if (!m)
        return;
    free(m->rows);
    free(m->dptr);
    free(m->dcol);
    free(m->dval);
    free(m->nptr);
    free(m->ncol);
    free(m->nval);
    free(m->db);
    free(m->Z);
    free(m->Y);
    free(m->C);
    free(m->ipiv);
    free(m->x);
    free(m->scratch);
    free(m->floating);
    free(m->float_row);
    free(m->island);
    ls_solver_free(&m->own);
    ls_csc_free(&m->own_a);
    free(m);
    *pm = NULL;
}

/* ---- the small system C (r <= MAX_RANK) ------------------------------------------------------ */
/* Plain Gaussian elimination with partial pivoting: C is tiny, and a LAPACK
 * call per port would cost more in library overhead than in arithmetic. */

/* LU of the r*r column-major a in place, interchanges in piv.  Returns the
 * first zero pivot's index + 1, or 0. */
static int small_lu(double *a, int r, int *piv)
{
    int bad = 0;
    for (int k = 0; k < r; k++) {
        int p = k;
        for (int i = k + 1; i < r; i++)
            if (fabs(a[(size_t)k * r + i]) > fabs(a[(size_t)k * r + p]))
                p = i;
        piv[k] = p;
        if (p != k)
            for (int j = 0; j < r; j++) {
                double t = a[(size_t)j * r + k];
                a[(size_t)j * r + k] = a[(size_t)j * r + p];
                a[(size_t)j * r + p] = t;
            }
        double d = a[(size_t)k * r + k];
        if (d == 0) {
            if (!bad)
                bad = k + 1;
            continue;
        }
        for (int i = k + 1; i < r; i++)
            a[(size_t)k * r + i] /= d;
        for (int j = k + 1; j < r; j++) {
            double f = a[(size_t)j * r + k];
            if (f != 0)
                for (int i = k + 1; i < r; i++)
                    a[(size_t)j * r + i] -= a[(size_t)k * r + i] * f;
        }
    }
    return bad;
}

/* t <- C^-1 t (trans 0) or C^-T t (trans 1) with the factors of small_lu. */
static void small_solve(const double *a, int r, const int *piv, double *t, int trans)
{
    if (!trans) {
        for (int k = 0; k < r; k++) {
            double x = t[k];
            t[k] = t[piv[k]];
            t[piv[k]] = x;
        }
        for (int j = 0; j < r; j++)
            for (int i = j + 1; i < r; i++)
                t[i] -= a[(size_t)j * r + i] * t[j];
        for (int j = r - 1; j >= 0; j--) {
            t[j] /= a[(size_t)j * r + j];
            for (int i = 0; i < j; i++)
                t[i] -= a[(size_t)j * r + i] * t[j];
        }
        return;
    }
    for (int j = 0; j < r; j++) {          /* U^T */
        for (int i = 0; i < j; i++)
            t[j] -= a[(size_t)j * r + i] * t[i];
        t[j] /= a[(size_t)j * r + j];
    }
    for (int j = r - 1; j >= 0; j--)        /* L^T */
        for (int i = j + 1; i < r; i++)
            t[j] -= a[(size_t)j * r + i] * t[i];
    for (int k = r - 1; k >= 0; k--) {
        double x = t[k];
        t[k] = t[piv[k]];
        t[piv[k]] = x;
    }
}

/* max |a_ij| of a compressed matrix. */
static double max_abs(const ls_csc *a)
{
    double m = 0;
    for (int p = 0; p < ls_csc_nnz(a); p++) {
        double v = fabs(a->val[p]);
        if (v > m)
            m = v;
    }
    return m;
}

/* max |a_ij| of the op's matrix, computed once per solution (ls_op_resolve
 * resets it): every port's and every what-if row's refinement tests against it. */
static double op_anorm(ls_op *op)
{
    if (!(op->anorm > 0))
        op->anorm = max_abs(&op->mna.a);
    return op->anorm;
}

/* Relative residual |r| / (anorm |x| + |rhs|), max norms, r already rhs - A x. */
static double rel_residual(const double *r, const double *x, const double *rhs, int n, double anorm)
{
    double rn = 0, xn = 0, bn = 0;
    for (int i = 0; i < n; i++) {
        rn = ls_max_acc(rn, fabs(r[i]));
        xn = ls_max_acc(xn, fabs(x[i]));
        bn = ls_max_acc(bn, fabs(rhs[i]));
    }
    return anorm * xn + bn > 0 ? rn / (anorm * xn + bn) : rn;
}

/* ---- solves with the base factorization ---------------------------------------------------- */

/* y <- A^-1 y (or A^-T y) with the op's factorization, refined only while the
 * residual says it helps: a well-conditioned system costs one solve and one
 * product.  anorm: max |a_ij|, or negative to have it computed.  Returns an
 * ls_solver_status. */
static int base_solve(ls_op *op, double *y, int transpose, double anorm)
{
    const ls_csc *a = &op->mna.a;
    int n = a->n;
    /* its two work vectors are the op's, made once per order: a port costs
     * a few of these solves, and a fit or a tol reports ports per candidate */
    size_t want = (size_t)(n ? n : 1);
    if (!op->base_work || op->base_work_n != want) {
        free(op->base_work);
        op->base_work = malloc(2 * want * sizeof *op->base_work);
        op->base_work_n = op->base_work ? want : 0;
        if (!op->base_work)
            return LS_SOLVER_NOMEM;
    }
    double *rhs = op->base_work, *r = op->base_work + want;
    memcpy(rhs, y, (size_t)n * sizeof *rhs);
    if (anorm < 0)
        anorm = max_abs(a);
    int st = ls_solver_solve(op->solver, y, transpose);
    double last = INFINITY;
    for (int k = 0; k < 3 && st == LS_SOLVER_OK; k++) {
        ls_csc_matvec(a, y, r, transpose);
        for (int i = 0; i < n; i++)
            r[i] = rhs[i] - r[i];
        double rel = rel_residual(r, y, rhs, n, anorm);
        if (rel <= REFINE_TOL || !(rel < 0.5 * last))
            break;
        last = rel;
        st = ls_solver_solve(op->solver, r, transpose);
        for (int i = 0; i < n && st == LS_SOLVER_OK; i++)
            y[i] += r[i];
    }
    return st;
}

/* ---- which nodes float once the part is gone --------------------------------------- */

typedef struct uf_ctx {
    int *parent;
} uf_ctx;

/* Edge callback: every DC path joins its two nodes' groups. */
static void uf_edge(void *ctx, int a, int b, bool vdef, int part)
{
    (void)vdef;
    (void)part;
    uf_ctx *u = ctx;
    if (a >= 0 && b >= 0)
        ls_uf_union(u->parent, a, b);
}

static int dc_bridges(ls_op *op);

/* Edge callback: count a part's DC paths. */
static void count_edge(void *ctx, int a, int b, bool vdef, int part)
{
    (void)a;
    (void)b;
    (void)vdef;
    (void)part;
    (*(int *)ctx)++;
}

/* Has every node a DC path to ground (by the bridges found once per
 * solution)?  false also when they could not be found (out of memory). */
static bool all_grounded(ls_op *op)
{
    if (dc_bridges(op) != 0)
        return false;
    int nn = op->nl->nnodes;
    if (op->grounded_nodes == 0) {   /* counted once per solution */
        op->grounded_nodes = 1;
        for (int i = 0; i < nn; i++)
            op->grounded_nodes += op->tin[i] >= 0;
    }
    return op->grounded_nodes - 1 == nn;
}

/* Does removing (opening) part leave every node with its DC path to ground,
 * by the bridges found once per solution?  True only when every node has a
 * path in the whole circuit and the part's single DC path is no bridge; false
 * when unsure (then the union-find decides).  Saves a pass over every part
 * per what-if row. */
static bool removal_floats_nothing(ls_op *op, const ls_part *p, int part)
{
    int edges = 0;
    if (!all_grounded(op))
        return false;
    p->kind->edges(p, &edges, count_edge);
    return edges == 0 || (edges == 1 && !op->bridge_part[part]);
}

/* Removing a part whose only DC path is a bridge, in a circuit where every
 * node reaches ground, floats exactly the nodes below the bridge in the
 * search tree of dc_bridges (entry time within the child's entry and exit
 * times): m->floating, m->island and m->nfloating from those, without a
 * union-find over every part.  false when it does not apply or memory ran
 * out (then the union-find decides). */
static bool bridge_island(ls_mod *m, int part)
{
    ls_op *op = m->op;
    if (!all_grounded(op) || !op->bridge_part[part])
        return false;
    int c = op->bridge_child[part], nn = op->nl->nnodes, count = 0;
    int *island = malloc((size_t)nn * sizeof *island);
    if (!island)
        return false;
    for (int i = 0; i < nn; i++) {
        bool below = op->tin[i] >= op->tin[c] && op->tin[i] < op->tout[c];
        island[i] = below ? c : 0;
        if (below && i > 0) {
            m->floating[i] = true;
            count++;
        }
    }
    m->island = island;
    m->nfloating = count;
    return true;
}

/* Mark the nodes with no DC path to ground once the part is changed.
 * Returns their number, or -1 when out of memory. */
static int find_floating(ls_mod *m, int part, ls_mod_kind kind)
{
    const ls_netlist *nl = m->op->nl;
    const ls_part *p = &nl->parts[part];
    int nn = nl->nnodes;
    m->floating = calloc((size_t)nn, sizeof *m->floating);
    m->float_row = malloc((size_t)nn * sizeof *m->float_row);
    if (!m->floating || !m->float_row)
        return -1;
    for (int i = 0; i < nn; i++)
        m->float_row[i] = -1;
    if (kind == MOD_REMOVE_PART && (ls_removal_keeps_edges(p) || removal_floats_nothing(m->op, p, part)))
        return 0;
    if (kind == MOD_REMOVE_PART && bridge_island(m, part))
        return m->nfloating;
    int *parent = malloc((size_t)nn * sizeof *parent);
    if (!parent)
        return -1;
    for (int i = 0; i < nn; i++)
        parent[i] = i;
    uf_ctx u = {parent};
    for (int i = 0; i < nl->nparts; i++)
        if (i != part)
            nl->parts[i].kind->edges(&nl->parts[i], &u, uf_edge);
    if (kind == MOD_SHORT_PORT_TO_GROUND)
        ls_uf_union(parent, 0, p->pin[0]);
    if (kind == MOD_HOLD_PORT_LOAD)
        ls_uf_union(parent, 0, p->pin[1]);
    int count = 0;
    for (int i = 1; i < nn; i++)
        if (ls_uf_find(parent, i) != ls_uf_find(parent, 0)) {
            m->floating[i] = true;
            count++;
        }
    for (int i = 0; i < nn; i++)
        parent[i] = ls_uf_find(parent, i);
    m->island = parent;
    m->nfloating = count;
    return count;
}

/* ---- building the update ------------------------------------------------------------------ */

static int cmp_int(const void *a, const void *b)
{
    int x = *(const int *)a, y = *(const int *)b;
    return (x > y) - (x < y);
}

/* Triplets of A' - A for the modification (duplicates not summed), and the
 * rhs change in m->db.  0 ok, -1 out of memory. */
static int delta_triplets(ls_mod *m, int part, ls_mod_kind kind, ls_triplets *t)
{
    ls_op *op = m->op;
    const ls_netlist *nl = op->nl;
    const ls_part *p = &nl->parts[part];
    m->db = calloc((size_t)(m->n ? m->n : 1), sizeof *m->db);
    if (!m->db)
        return -1;
    ls_sink s = {.mode = SINK_ASSEMBLE, .t = t, .b = m->db, .scale = -1};
    if (kind == MOD_REMOVE_PART) {
        ls_stamp_ctx c = {.nl = nl, .run = &op->run, .sink = &s};
        p->kind->stamp(p, &c);
        s.scale = 1;
        c.removed = true;
        p->kind->stamp(p, &c);
    } else if (kind == MOD_HOLD_PORT_LOAD) {
        /* The driver end is disconnected (its KCL entry and its voltage in
         * the branch row dropped): the row becomes -V(load) = -v_loaded, and
         * the branch current is what holds the load end there. */
        s.scale = 1;
        int f = ls_node_unknown(p->pin[0]), k = p->branch;
        ls_sink_a(&s, f, k, -1);
        ls_sink_a(&s, k, f, -1);
        m->db[k] = -op->v[p->pin[1]];
    } else {
        /* The port's load end is disconnected and its driver end shorted to
         * ground: drop the load-side KCL entry and the load voltage from the
         * branch row, which becomes V(driver) = 0. */
        s.scale = 1;
        int to = ls_node_unknown(p->pin[1]), k = p->branch;
        ls_sink_a(&s, to, k, 1);
        ls_sink_a(&s, k, to, 1);
    }
    for (int i = 1; i < nl->nnodes; i++)
        if (m->floating[i]) {
            s.scale = 1;
            ls_sink_a(&s, i - 1, i - 1, op->g_pin);
        }
    m->db_zero = true;
    for (int i = 0; i < m->n; i++)
        if (m->db[i] != 0)
            m->db_zero = false;
    return t->failed ? -1 : 0;
}

typedef struct trip {
    int i, j;
    double v;
} trip;

/* qsort order of triplets: by row, then column. */
static int cmp_trip(const void *a, const void *b)
{
    const trip *x = a, *y = b;
    if (x->i != y->i)
        return (x->i > y->i) - (x->i < y->i);
    return (x->j > y->j) - (x->j < y->j);
}

/* Compressed rows of the triplets tr (sorted by row, then column; no zeros):
 * the row set, its pointers, columns and values.  Returns -1 out of memory. */
static int compress_rows(const trip *tr, size_t nt, int **rows, int *r, int **ptr, int **col, double **val)
{
    int nr = 0;
    for (size_t k = 0; k < nt; k++)
        nr += k == 0 || tr[k].i != tr[k - 1].i;
    *rows = malloc((size_t)(nr ? nr : 1) * sizeof **rows);
    *ptr = calloc((size_t)nr + 1, sizeof **ptr);
    *col = malloc((nt ? nt : 1) * sizeof **col);
    *val = malloc((nt ? nt : 1) * sizeof **val);
    if (!*rows || !*ptr || !*col || !*val)
        return -1;
    int ri = -1;
    for (size_t k = 0; k < nt; k++) {
        if (k == 0 || tr[k].i != tr[k - 1].i)
            (*rows)[++ri] = tr[k].i;
        (*ptr)[ri + 1] = (int)k + 1;
        (*col)[k] = tr[k].j;
        (*val)[k] = tr[k].v;
    }
    *r = nr;
    return 0;
}

/* Sort and sum triplets in place, dropping entries that sum to zero.
 * Returns the new count. */
static size_t merge_trips(trip *tr, size_t nt)
{
    qsort(tr, nt, sizeof *tr, cmp_trip);
    size_t w = 0;
    for (size_t k = 0; k < nt;) {
        trip t = tr[k++];
        while (k < nt && tr[k].i == t.i && tr[k].j == t.j)
            t.v += tr[k++].v;
        if (t.v != 0)
            tr[w++] = t;
    }
    return w;
}

/* Triplets of A'_R: the base rows R (scanned out of the columns; where[i]
 * is i's place in R or -1) plus D.  *k gets their number; NULL out of memory. */
static trip *changed_rows(const ls_mod *m, const int *where, size_t *k)
{
    const ls_csc *a = &m->op->mna.a;
    size_t cnt = (size_t)m->dptr[m->r];
    for (int p = 0; p < ls_csc_nnz(a); p++)
        cnt += where[a->rowind[p]] >= 0;
    trip *tr = malloc((cnt ? cnt : 1) * sizeof *tr);
    if (!tr)
        return NULL;
    *k = 0;
    for (int j = 0; j < a->n; j++)
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++)
            if (where[a->rowind[p]] >= 0)
                tr[(*k)++] = (trip){a->rowind[p], j, a->val[p]};
    for (int i = 0; i < m->r; i++)
        for (int p = m->dptr[i]; p < m->dptr[i + 1]; p++)
            tr[(*k)++] = (trip){m->rows[i], m->dcol[p], m->dval[p]};
    return tr;
}

/* Re-point m->nptr at the rows of R when some new row vanished (nrows, nr:
 * the rows that kept entries): rows of R with an empty new row get empty
 * ranges.  0, or -1 out of memory. */
static int repoint_rows(ls_mod *m, const int *nrows, int nr)
{
    int *ptr = calloc((size_t)m->r + 1, sizeof *ptr);
    if (!ptr)
        return -1;
    for (int i = 0, q = 0; i < m->r; i++) {
        ptr[i + 1] = ptr[i];
        if (q < nr && nrows[q] == m->rows[i]) {
            ptr[i + 1] = m->nptr[q + 1];
            q++;
        }
    }
    free(m->nptr);
    m->nptr = ptr;
    return 0;
}

/* D (the summed row changes, empty rows dropped) and the new rows A'_R.
 * 0 ok, -1 out of memory. */
static int build_rows(ls_mod *m, const ls_triplets *t)
{
    trip *tr = malloc((t->nnz ? t->nnz : 1) * sizeof *tr);
    if (!tr)
        return -1;
    for (size_t k = 0; k < t->nnz; k++)
        tr[k] = (trip){t->ti[k], t->tj[k], t->tx[k]};
    size_t nt = merge_trips(tr, t->nnz);
    int rc = compress_rows(tr, nt, &m->rows, &m->r, &m->dptr, &m->dcol, &m->dval);
    free(tr);
    if (rc != 0)
        return -1;
    int *where = malloc((size_t)(m->n ? m->n : 1) * sizeof *where);
    if (!where)
        return -1;
    for (int i = 0; i < m->n; i++)
        where[i] = -1;
    for (int i = 0; i < m->r; i++)
        where[m->rows[i]] = i;
    size_t k = 0;
    tr = changed_rows(m, where, &k);
    free(where);
    if (!tr)
        return -1;
    nt = merge_trips(tr, k);
    /* a new row may vanish entirely (then A' is singular); keep every row of R */
    int *nrows = NULL, nr = 0;
    rc = compress_rows(tr, nt, &nrows, &nr, &m->nptr, &m->ncol, &m->nval);
    free(tr);
    if (rc == 0 && nr != m->r)
        rc = repoint_rows(m, nrows, nr);
    free(nrows);
    if (rc != 0)
        return -1;
    for (int i = 1; i < m->op->nl->nnodes; i++)
        if (m->floating[i]) {
            int u = i - 1;
            int *pos = bsearch(&u, m->rows, (size_t)m->r, sizeof *m->rows, cmp_int);
            m->float_row[i] = pos ? (int)(pos - m->rows) : -1;
        }
    return 0;
}

/* out_i = A'_{rows_i} y - (sub ? sub[rows_i] : 0) for each changed row: D y
 * when A y = sub. */
static void apply_new_rows(const ls_mod *m, const double *y, const double *sub, double *out)
{
    for (int i = 0; i < m->r; i++) {
        double s = 0;
        for (int p = m->nptr[i]; p < m->nptr[i + 1]; p++)
            s += m->nval[p] * y[m->ncol[p]];
        out[i] = s - (sub ? sub[m->rows[i]] : 0);
    }
}

/* Z = A^-1 E_R and the LU factors of C = A'_R Z; marks m singular when a pivot
 * vanishes against the magnitude of its column.  0 ok, -1 failure. */
static int woodbury_setup(ls_mod *m)
{
    int n = m->n, r = m->r;
    size_t rr = (size_t)(r ? r : 1);
    m->Z = calloc((size_t)(n ? n : 1) * rr, sizeof *m->Z);
    m->C = calloc(rr * rr, sizeof *m->C);
    m->ipiv = malloc(rr * sizeof *m->ipiv);
    double *mag = calloc(rr, sizeof *mag);
    if (!m->Z || !m->C || !m->ipiv || !mag) {
        free(mag);
        return -1;
    }
    for (int j = 0; j < r; j++) {
        double *z = m->Z + (size_t)j * n;
        z[m->rows[j]] = 1;
        if (base_solve(m->op, z, 0, m->anorm) != LS_SOLVER_OK) {
            free(mag);
            return -1;
        }
        apply_new_rows(m, z, NULL, m->C + (size_t)j * r);
        /* the size of the terms that cancel in column j of C */
        for (int i = 0; i < r; i++) {
            double s = 0;
            for (int p = m->nptr[i]; p < m->nptr[i + 1]; p++)
                s += fabs(m->nval[p] * z[m->ncol[p]]);
            mag[j] = fmax(mag[j], s);
        }
    }
    if (r == 0) {
        free(mag);
        return 0;
    }
    if (small_lu(m->C, r, m->ipiv))
        m->singular = true;
    for (int j = 0; j < r && !m->singular; j++)
        if (!(fabs(m->C[(size_t)j * r + j]) > SINGULAR_TOL * mag[j]))
            m->singular = true;
    free(mag);
    return 0;
}

/* The fallback: assemble A' whole and factor it.  0 ok, -1 failure. */
static int explicit_setup(ls_mod *m, const ls_triplets *dt)
{
    ls_op *op = m->op;
    const ls_csc *a = &op->mna.a;
    ls_triplets t = {0};
    size_t nnz = (size_t)ls_csc_nnz(a) + dt->nnz;
    t.ti = malloc((nnz ? nnz : 1) * sizeof *t.ti);
    t.tj = malloc((nnz ? nnz : 1) * sizeof *t.tj);
    t.tx = malloc((nnz ? nnz : 1) * sizeof *t.tx);
    if (!t.ti || !t.tj || !t.tx) {
        ls_triplets_free(&t);
        return -1;
    }
    for (int j = 0; j < a->n; j++)
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++) {
            t.ti[t.nnz] = a->rowind[p];
            t.tj[t.nnz] = j;
            t.tx[t.nnz++] = a->val[p];
        }
    for (size_t k = 0; k < dt->nnz; k++) {
        t.ti[t.nnz] = dt->ti[k];
        t.tj[t.nnz] = dt->tj[k];
        t.tx[t.nnz++] = dt->tx[k];
    }
    int rc = ls_triplets_to_csc(&t, m->n, &m->own_a);
    ls_triplets_free(&t);
    if (rc != 0)
        return -1;
    const ls_backend *be = &ls_backend_dense;
    ls_method meth = LS_METHOD_DENSE_LU;
#ifdef LS_HAVE_SPARSE
    if (!ls_method_is_dense(ls_solver_stats_of(op->solver)->method)) {
        be = &ls_backend_klu;
        meth = LS_METHOD_SPARSE_LU;
    }
#endif
    m->own = ls_solver_new(be, meth);
    if (!m->own)
        return -1;
    int st = ls_solver_analyze(m->own, &m->own_a);
    if (st == LS_SOLVER_OK)
        st = ls_solver_factor(m->own, &m->own_a);
    if (st == LS_SOLVER_SINGULAR)
        m->singular = true;
    else if (st != LS_SOLVER_OK)
        return -1;
    return 0;
}

/* y <- A'^-1 y given w = A^-1 y already in y and the original y in orig. */
static int woodbury_finish(ls_mod *m, double *y, const double *orig)
{
    if (m->r == 0)
        return LS_SOLVER_OK;
    double *t = malloc((size_t)m->r * sizeof *t);
    if (!t)
        return LS_SOLVER_NOMEM;
    apply_new_rows(m, y, orig, t);
    small_solve(m->C, m->r, m->ipiv, t, 0);
    for (int j = 0; j < m->r; j++) {
        const double *z = m->Z + (size_t)j * m->n;
        double s = t[j];
        if (s != 0)
            for (int i = 0; i < m->n; i++)
                y[i] -= z[i] * s;
    }
    free(t);
    return LS_SOLVER_OK;
}

/* y <- A'^-1 y, one pass: the base solve and the Woodbury correction (or the
 * fallback's own factorization). */
static int mod_solve_once(ls_mod *m, double *y, double *orig)
{
    if (m->own)
        return ls_solver_solve(m->own, y, 0);
    memcpy(orig, y, (size_t)m->n * sizeof *orig);
    int st = base_solve(m->op, y, 0, m->anorm);
    if (st == LS_SOLVER_OK)
        st = woodbury_finish(m, y, orig);
    return st;
}

static double mod_residual(const ls_mod *m, const double *x, const double *rhs, double *r, int transpose);

static int mod_solve_t_once(ls_mod *m, double *y);

/* y <- A'^-1 y (transpose 0) or A'^-T y (1) in place: one pass, then up to two
 * refinement steps against A' itself (a nearly cancelling update leaves
 * round-off of the size of the base solution).  Returns an ls_solver_status. */
static int mod_solve_refined(ls_mod *m, double *y, int transpose)
{
    size_t bytes = (size_t)(m->n ? m->n : 1) * sizeof(double);
    double *rhs = malloc(bytes), *r = malloc(bytes), *orig = transpose ? NULL : malloc(bytes);
    if (!rhs || !r || (!transpose && !orig)) {
        free(rhs);
        free(orig);
        free(r);
        return LS_SOLVER_NOMEM;
    }
    memcpy(rhs, y, bytes);
    int st = transpose ? mod_solve_t_once(m, y) : mod_solve_once(m, y, orig);
    double last = INFINITY;
    for (int k = 0; k < 2 && st == LS_SOLVER_OK && m->n > 0; k++) {
        double rel = mod_residual(m, y, rhs, r, transpose);
        if (rel <= REFINE_TOL || !(rel < 0.5 * last))
            break;
        last = rel;
        st = transpose ? mod_solve_t_once(m, r) : mod_solve_once(m, r, orig);
        for (int i = 0; i < m->n && st == LS_SOLVER_OK; i++)
            y[i] += r[i];
    }
    free(rhs);
    free(orig);
    free(r);
    return st;
}

/* y <- A'^-1 y in place (see analysis.h), refined against A'. */
int ls_mod_solve(ls_mod *m, double *y)
{
    if (m->singular)
        return LS_SOLVER_SINGULAR;
    return mod_solve_refined(m, y, 0);
}

/* Y = A^-T D^T, one transposed solve per changed row.  0 ok, -1 failure. */
static int build_y(ls_mod *m)
{
    int n = m->n, r = m->r;
    m->Y = calloc((size_t)(n ? n : 1) * (size_t)(r ? r : 1), sizeof *m->Y);
    if (!m->Y)
        return -1;
    for (int j = 0; j < r; j++) {
        double *y = m->Y + (size_t)j * n;
        for (int p = m->dptr[j]; p < m->dptr[j + 1]; p++)
            y[m->dcol[p]] += m->dval[p];
        if (base_solve(m->op, y, 1, m->anorm) != LS_SOLVER_OK) {
            free(m->Y);
            m->Y = NULL;
            return -1;
        }
    }
    return 0;
}

/* y <- A'^-T y, one pass of the transposed Woodbury identity. */
static int mod_solve_t_once(ls_mod *m, double *y)
{
    if (m->own)
        return ls_solver_solve(m->own, y, 1);
    int st = base_solve(m->op, y, 1, m->anorm);
    if (st != LS_SOLVER_OK || m->r == 0)
        return st;
    double *t = malloc((size_t)m->r * sizeof *t);
    if (!t)
        return LS_SOLVER_NOMEM;
    for (int i = 0; i < m->r; i++)
        t[i] = y[m->rows[i]];
    small_solve(m->C, m->r, m->ipiv, t, 1);
    for (int j = 0; j < m->r; j++) {
        const double *yc = m->Y + (size_t)j * m->n;
        if (t[j] != 0)
            for (int i = 0; i < m->n; i++)
                y[i] -= yc[i] * t[j];
    }
    free(t);
    return LS_SOLVER_OK;
}

/* y <- A'^-T y in place (see lowrank.h), refined against A'^T. */
int ls_mod_solve_t(ls_mod *m, double *y)
{
    if (m->singular)
        return LS_SOLVER_SINGULAR;
    if (!m->own && m->r > 0 && !m->Y && build_y(m) != 0)
        return LS_SOLVER_NOMEM;
    return mod_solve_refined(m, y, 1);
}

/* r <- rhs - A' x with A' = A + E_R D (or A'^T = A^T + D^T E_R^T when
 * transpose); returns the relative residual |r| / (|A| |x| + |rhs|) in the max norm. */
static double mod_residual(const ls_mod *m, const double *x, const double *rhs, double *r, int transpose)
{
    ls_csc_matvec(&m->op->mna.a, x, r, transpose);
    for (int i = 0; i < m->r; i++)
        for (int p = m->dptr[i]; p < m->dptr[i + 1]; p++) {
            if (transpose)
                r[m->dcol[p]] += m->dval[p] * x[m->rows[i]];
            else
                r[m->rows[i]] += m->dval[p] * x[m->dcol[p]];
        }
    for (int i = 0; i < m->n; i++)
        r[i] = rhs[i] - r[i];
    return rel_residual(r, x, rhs, m->n, m->anorm);
}

/* The modified solution: from the base solution when the rhs is unchanged
 * (no solve at all), else a full modified solve; then refined against A'
 * itself, since a nearly cancelling update leaves round-off of the size of
 * the base solution.  Returns an ls_solver_status. */
static int modified_solution(ls_mod *m)
{
    ls_op *op = m->op;
    size_t bytes = (size_t)(m->n ? m->n : 1) * sizeof(double);
    double *rhs = malloc(bytes), *r = malloc(bytes);
    if (!rhs || !r) {
        free(rhs);
        free(r);
        return LS_SOLVER_NOMEM;
    }
    for (int i = 0; i < m->n; i++)
        rhs[i] = m->x[i] = op->mna.b[i] + m->db[i];
    int st;
    if (m->own || !m->db_zero) {
        st = ls_mod_solve(m, m->x);
    } else {
        memcpy(m->x, op->x, bytes);
        st = woodbury_finish(m, m->x, rhs);
    }
    double last = INFINITY;
    for (int k = 0; k < 2 && st == LS_SOLVER_OK && m->n > 0; k++) {
        double rel = mod_residual(m, m->x, rhs, r, 0);
        if (rel <= REFINE_TOL || !(rel < 0.5 * last))
            break;
        last = rel;
        st = ls_mod_solve(m, r);
        for (int i = 0; i < m->n && st == LS_SOLVER_OK; i++)
            m->x[i] += r[i];
    }
    free(rhs);
    free(r);
    return st;
}

/* One attempt at the modification; with pin false, nodes without a DC path
 * are left as they are (controlled sources may still fix their voltages).
 * *topo gets the number of such nodes.  NULL when out of memory. */
static ls_mod *mod_build(ls_op *op, int part, ls_mod_kind kind, bool pin, int *topo)
{
    ls_mod *m = calloc(1, sizeof *m);
    if (!m)
        return NULL;
    m->op = op;
    m->n = op->mna.n;
    m->anorm = op_anorm(op);
    ls_triplets dt = {0};
    *topo = find_floating(m, part, kind);
    if (*topo < 0)
        goto fail;
    if (!pin) {
        memset(m->floating, 0, (size_t)op->nl->nnodes * sizeof *m->floating);
        m->nfloating = 0;
    }
    if (delta_triplets(m, part, kind, &dt) != 0 || build_rows(m, &dt) != 0)
        goto fail;
    int rc = m->r > MAX_RANK ? explicit_setup(m, &dt) : woodbury_setup(m);
    if (rc != 0)
        goto fail;
    m->x = malloc((size_t)(m->n ? m->n : 1) * sizeof *m->x);
    m->scratch = malloc((size_t)(m->n > m->r ? m->n : m->r ? m->r : 1) * sizeof *m->scratch);
    if (!m->x || !m->scratch)
        goto fail;
    if (!m->singular) {
        /* out of memory is a failure of the call, never a "singular" answer */
        int st = modified_solution(m);
        if (st == LS_SOLVER_NOMEM)
            goto fail;
        if (st != LS_SOLVER_OK)
            m->singular = true;
    }
    ls_triplets_free(&dt);
    return m;
fail:
    ls_triplets_free(&dt);
    ls_mod_free(&m);
    return NULL;
}

/* A node without a DC path is floating only when the equations leave it
 * undetermined: the update is tried as it is first, and only a singular
 * result is redone with those nodes pinned to ground. */
ls_mod *ls_mod_new(ls_op *op, int part, ls_mod_kind kind)
{
    int topo = 0;
    ls_mod *m = mod_build(op, part, kind, false, &topo);
    if (m && m->singular && topo > 0) {
        ls_mod_free(&m);
        m = mod_build(op, part, kind, true, &topo);
    }
    return m;
}

/* The modified solution, n values owned by m. */
const double *ls_mod_x(ls_mod *m)
{
    return m->x;
}

/* Does node's voltage change with a pinned node's?  (Then it is undefined.) */
bool ls_mod_depends_on_floating(ls_mod *m, int node)
{
    if (node <= 0 || m->singular || m->nfloating == 0)
        return false;
    if (m->own) {
        /* explicit: probe each pinned node's influence directly */
        double *y = m->scratch;
        bool dep = false;
        for (int i = 1; i < m->op->nl->nnodes && !dep; i++) {
            if (!m->floating[i])
                continue;
            memset(y, 0, (size_t)m->n * sizeof *y);
            y[i - 1] = m->op->g_pin;
            ls_solver_solve(m->own, y, 0);
            dep = fabs(y[node - 1]) > DEPEND_TOL;
        }
        return dep;
    }
    /* A'^-1 E_R = Z C^-1, so (A'^-1)_{node,rows[j]} = (C^-T Z^T e_node)_j */
    int r = m->r;
    double *zr = m->scratch;
    for (int j = 0; j < r; j++)
        zr[j] = m->Z[(size_t)j * m->n + (node - 1)];
    small_solve(m->C, r, m->ipiv, zr, 1);
    bool dep = false;
    for (int i = 1; i < m->op->nl->nnodes && !dep; i++)
        if (m->floating[i] && m->float_row[i] >= 0)
            dep = fabs(zr[m->float_row[i]]) * m->op->g_pin > DEPEND_TOL;
    return dep;
}

/* (A'^-1)_{node,node} (ohm): 0 at ground, inf when the node floats, NaN when singular. */
double ls_mod_zdrive(ls_mod *m, int node)
{
    if (node <= 0)
        return 0;
    if (m->singular)
        return NAN;
    if (m->floating[node])
        return INFINITY;
    double *y = calloc((size_t)m->n, sizeof *y);
    if (!y)
        return NAN;
    y[node - 1] = 1;
    double z = ls_mod_solve(m, y) == LS_SOLVER_OK ? y[node - 1] : NAN;
    free(y);
    return z;
}

/* (A^-1)_{node,node} (ohm) of the base system: the Thevenin resistance at node. */
double ls_op_zdrive(ls_op *op, int node)
{
    if (node <= 0)
        return 0;
    double *y = calloc((size_t)op->mna.n, sizeof *y);
    int st = y ? LS_SOLVER_OK : LS_SOLVER_NOMEM;
    if (y) {
        y[node - 1] = 1;
        st = base_solve(op, y, 0, -1);
    }
    double z = st == LS_SOLVER_OK ? y[node - 1] : NAN;
    free(y);
    /* out of memory is an error, never an undefined resistance */
    if (st == LS_SOLVER_NOMEM)
        ls_error(op->nl->diags, LS_NOLOC, "out of memory finding the resistance at a node (%zu bytes)",
                 (size_t)op->mna.n * sizeof(double));
    return z;
}

/* ---- bridges of the DC graph: which ports float a side when opened -------------------------- */

typedef struct edge_list {
    int *a, *b, *part;
    int n, cap;
    int cur;                 /* the part whose edges are being listed */
    bool failed;
} edge_list;

/* Edge callback: record one DC path with the part that makes it. */
static void list_edge(void *ctx, int a, int b, bool vdef, int part)
{
    (void)vdef;
    (void)part;
    edge_list *e = ctx;
    if (a < 0 || b < 0 || a == b || e->failed)
        return;
    if (e->n == e->cap) {
        int c = e->cap ? 2 * e->cap : 64;
        int *na = realloc(e->a, (size_t)c * sizeof *na);
        if (na)
            e->a = na;
        int *nb = realloc(e->b, (size_t)c * sizeof *nb);
        if (nb)
            e->b = nb;
        int *np = realloc(e->part, (size_t)c * sizeof *np);
        if (np)
            e->part = np;
        if (!na || !nb || !np) {
            e->failed = true;
            return;
        }
        e->cap = c;
    }
    e->a[e->n] = a;
    e->b[e->n] = b;
    e->part[e->n++] = e->cur;
}

/* The DC graph's bridges, once per operating point: op->tin/tout (DFS entry
 * and exit times from ground, -1 when a node is not reached), and for every
 * part whose only DC path is a bridge, bridge_part and bridge_child (the end
 * of it away from ground).  Iterative (a grid can be deep).  A structural
 * answer: which side of an opened port loses its DC path is a matter of
 * topology, never of a threshold on a nearly singular solve.  0, or -1 when
 * out of memory. */
static int dc_bridges(ls_op *op)
{
    if (op->bridge_part)
        return 0;
    const ls_netlist *nl = op->nl;
    int nn = nl->nnodes, np = nl->nparts;
    edge_list e = {0};
    int *nedges = calloc((size_t)(np ? np : 1), sizeof *nedges);
    for (int i = 0; i < np && nedges; i++) {
        int before = e.n;
        e.cur = i;
        nl->parts[i].kind->edges(&nl->parts[i], &e, list_edge);
        nedges[i] = e.n - before;
    }
    int *ptr = calloc((size_t)nn + 1, sizeof *ptr);
    int *adj = malloc((size_t)(2 * e.n + 1) * sizeof *adj);   /* edge ids */
    int *stack = malloc((size_t)(nn + 1) * sizeof *stack), *it = malloc((size_t)(nn + 1) * sizeof *it);
    int *via = malloc((size_t)(nn + 1) * sizeof *via);
    op->tin = malloc((size_t)nn * sizeof *op->tin);
    op->tout = malloc((size_t)nn * sizeof *op->tout);
    op->low = malloc((size_t)nn * sizeof *op->low);
    op->bridge_part = calloc((size_t)(np ? np : 1), sizeof *op->bridge_part);
    op->bridge_child = malloc((size_t)(np ? np : 1) * sizeof *op->bridge_child);
    int rc = -1;
    if (e.failed || !nedges || !ptr || !adj || !stack || !it || !via || !op->tin || !op->tout || !op->low ||
        !op->bridge_part || !op->bridge_child)
        goto done;
    for (int k = 0; k < e.n; k++) {
        ptr[e.a[k] + 1]++;
        ptr[e.b[k] + 1]++;
    }
    for (int i = 0; i < nn; i++)
        ptr[i + 1] += ptr[i];
    {
        int *fill = it;   /* borrowed as the fill cursor */
        memcpy(fill, ptr, (size_t)nn * sizeof *fill);
        for (int k = 0; k < e.n; k++) {
            adj[fill[e.a[k]]++] = k;
            adj[fill[e.b[k]]++] = k;
        }
    }
    for (int i = 0; i < nn; i++)
        op->tin[i] = op->tout[i] = -1;
    for (int i = 0; i < np; i++)
        op->bridge_child[i] = -1;
    int clock = 0, top = 0;
    stack[top] = 0;
    it[0] = ptr[0];
    via[0] = -1;
    op->tin[0] = op->low[0] = clock++;
    while (top >= 0) {
        int u = stack[top];
        if (it[u] < ptr[u + 1]) {
            int k = adj[it[u]++];
            if (k == via[top])
                continue;        /* the tree edge back to the parent (a parallel edge is another id) */
            int w = e.a[k] == u ? e.b[k] : e.a[k];
            if (op->tin[w] < 0) {
                op->tin[w] = op->low[w] = clock++;
                stack[++top] = w;
                it[w] = ptr[w];
                via[top] = k;
            } else if (op->tin[w] < op->low[u]) {
                op->low[u] = op->tin[w];
            }
            continue;
        }
        op->tout[u] = clock;
        if (top > 0) {
            int parent = stack[top - 1], k = via[top];
            if (op->low[u] < op->low[parent])
                op->low[parent] = op->low[u];
            if (op->low[u] > op->tin[parent] && nedges[e.part[k]] == 1) {
                op->bridge_part[e.part[k]] = true;
                op->bridge_child[e.part[k]] = u;
            }
        }
        top--;
    }
    rc = 0;
done:
    free(e.a);
    free(e.b);
    free(e.part);
    free(nedges);
    free(ptr);
    free(adj);
    free(stack);
    free(it);
    free(via);
    if (rc != 0) {   /* all or nothing: a later call starts afresh */
        free(op->bridge_part);
        free(op->bridge_child);
        free(op->tin);
        free(op->tout);
        free(op->low);
        op->bridge_part = NULL;
        op->bridge_child = NULL;
        op->tin = op->tout = op->low = NULL;
    }
    return rc;
}

/* Does opening port p leave its load end (and not its driver end) without a
 * DC path to ground?  Then the load side is an input that only a controlled
 * source senses (an op-amp input without rin, say). */
static bool load_floats_when_open(ls_op *op, int p)
{
    const ls_part *pt = &op->nl->parts[p];
    if (dc_bridges(op) != 0 || pt->pin[1] <= 0)
        return false;
    return op->bridge_part[p] && op->bridge_child[p] == pt->pin[1] && op->tin[pt->pin[0]] >= 0;
}

/* Does opening port p leave node on a side with no DC path (an input only a
 * controlled source senses), so that nothing sets its voltage? */
static bool port_floats_node(ls_op *op, int p, int node)
{
    if (!op->nl->parts[p].kind->is_port || node <= 0 || !load_floats_when_open(op, p))
        return false;
    int c = op->bridge_child[p];
    return op->tin[node] >= op->tin[c] && op->tin[node] < op->tout[c];
}

/* ---- the port report ---------------------------------------------------------------------- */

/* Net current (A) flowing into the floating island that contains `node`, read
 * off the pin conductances of the modified solution (all of it leaves through
 * them), and the sum of their magnitudes in *scale. */
static double island_current(ls_mod *m, int node, double *scale)
{
    int nn = m->op->nl->nnodes;
    double net = 0;
    *scale = 0;
    for (int i = 1; i < nn; i++)
        if (m->floating[i] && m->island[i] == m->island[node]) {
            double c = m->op->g_pin * m->x[i - 1];
            net += c;
            *scale += fabs(c);
        }
    return net;
}

/* Voltage of node in the modified system: NaN when undefined; for a floating
 * node fed a net current (a current source into an open end), unbounded with
 * the sign of that current. */
static double node_value(ls_mod *m, int node)
{
    if (node <= 0)
        return 0;
    if (m->singular)
        return NAN;
    if (m->floating[node]) {
        double scale, net = island_current(m, node, &scale);
        double ref = 0;
        for (int i = 0; i < m->op->nl->nparts; i++)
            ref = fmax(ref, fabs(m->op->ipart[i]));
        return fabs(net) > 1e-9 * ref && fabs(net) > 1e-6 * scale ? copysign(INFINITY, net) : NAN;
    }
    if (ls_mod_depends_on_floating(m, node))
        return NAN;
    return m->x[node - 1];
}

/* Driving-point resistance (ohm) at node in the modified system. */
static double z_at(ls_mod *m, int node)
{
    if (node <= 0)
        return 0;
    if (m->singular)
        return NAN;
    if (m->floating[node])
        return INFINITY;
    if (ls_mod_depends_on_floating(m, node))
        return NAN;
    return ls_mod_zdrive(m, node);
}

/* num/den with the report's conventions: 0/0 and inf/inf undefined (NaN),
 * x/0 unbounded. */
static double ratio_of(double num, double den)
{
    if (isnan(num) || isnan(den))
        return NAN;
    if (den == 0)
        return num == 0 ? NAN : copysign(INFINITY, num);
    if (isinf(num) && isinf(den))
        return NAN;
    return num / den;
}

/* The adc on port pi's load node with the smallest LSB (the first of equals),
 * or -1: ls_port_adc's answer from a per-node index built once per solution
 * (a scan of the part table per port made the report quadratic).  Falls back
 * to the scan when the index cannot be allocated. */
static int port_adc(ls_op *op, int pi)
{
    const ls_netlist *nl = op->nl;
    if (!op->adc_at) {
        op->adc_at = malloc((size_t)(nl->nnodes > 0 ? nl->nnodes : 1) * sizeof *op->adc_at);
        if (!op->adc_at)
            return ls_port_adc(nl, pi);
        for (int i = 0; i < nl->nnodes; i++)
            op->adc_at[i] = -1;
        const ls_kind *adc = ls_kind_find("adc");
        for (int i = 0; i < nl->nparts; i++) {
            const ls_part *p = &nl->parts[i];
            int node = p->pin[0], *best = &op->adc_at[node > 0 ? node : 0];
            if (p->kind != adc || node <= 0)
                continue;
            /* as ls_port_adc: strictly smaller than the best so far (from inf) */
            if (ls_adc_lsb_in(&op->run, p) < (*best < 0 ? INFINITY : ls_adc_lsb_in(&op->run, &nl->parts[*best])))
                *best = i;
        }
    }
    int load = nl->parts[pi].pin[1];
    return load > 0 ? op->adc_at[load] : -1;
}

/* The port's budget (V, or A in current mode) into r: its own budget=, else
 * `rule sag` where its unit fits the port, else half an LSB of an adc on the
 * load node; NaN when none applies (or a % of an undefined open). */
static void port_budget(ls_op *op, int pi, ls_port_result *r)
{
    const ls_netlist *nl = op->nl;
    const ls_part *p = &nl->parts[pi];
    int bi = ls_kind_opt(p->kind, "budget");
    r->adc = r->current_mode ? -1 : port_adc(op, pi);
    const ls_budget *b = NULL;
    double bv = NAN;   /* its value, in its unit: a port's as the run has it (a sweep may set it) */
    r->budget = NAN;
    r->budget_from = LS_BUDGET_FROM_NONE;
    if (ls_part_has(p, bi)) {
        b = &nl->budgets[(int)p->opt[bi]];
        bv = ls_run_budget(&op->run, (int)p->opt[bi]);
        r->budget_from = LS_BUDGET_FROM_PORT;
    } else if (nl->has_rule_sag && (nl->rule_sag.unit == LS_BUDGET_FRACTION ||
                                    nl->rule_sag.unit == (r->current_mode ? LS_BUDGET_AMP : LS_BUDGET_VOLT))) {
        b = &nl->rule_sag;
        bv = b->value;
        r->budget_from = LS_BUDGET_FROM_RULE;
    } else if (r->adc >= 0) {
        r->budget = 0.5 * ls_adc_lsb_in(&op->run, &nl->parts[r->adc]);
        r->budget_from = LS_BUDGET_FROM_ADC;
        return;
    }
    if (!b)
        return;
    switch (b->unit) {
    case LS_BUDGET_VOLT:
    case LS_BUDGET_AMP: r->budget = bv; break;
    case LS_BUDGET_FRACTION: r->budget = isfinite(r->open) ? bv * fabs(r->open) : NAN; break;
    case LS_BUDGET_LSB: r->budget = r->adc >= 0 ? bv * ls_adc_lsb_in(&op->run, &nl->parts[r->adc]) : NAN; break;
    }
}

/* The verdict: against the budget where the port has one (|sag| within it
 * ok, within twice it marginal), else against the minimum ratio, where an
 * undefined ratio passes only when the side that should be large is
 * unbounded.  Both comparisons hold within a relative 1e-9 of their limit. */
static void judge(ls_op *op, int pi, ls_port_result *r)
{
    port_budget(op, pi, r);
    if (!isnan(r->budget)) {
        double s = fabs(r->sag), b = r->budget;
        r->by_budget = true;
        if (isnan(s) || isinf(s))
            r->verdict = VERDICT_LOADING;
        else if (s <= b + ls_check_slack(b))
            r->verdict = VERDICT_OK;
        else if (s <= 2 * b + ls_check_slack(2 * b))
            r->verdict = VERDICT_MARGINAL;
        else
            r->verdict = VERDICT_LOADING;
        return;
    }
    double min = ls_op_min_ratio(op);
    if (!r->current_mode && r->zin == INFINITY) {
        /* no DC current can flow into the load side: nothing for the driver's
         * zout to drop, whatever its value or sign */
        r->verdict = VERDICT_OK;
        return;
    }
    if (isnan(r->ratio))
        r->verdict = isinf(r->current_mode ? r->zout : r->zin) ? VERDICT_OK : VERDICT_LOADING;
    else if (r->ratio >= min - ls_check_slack(min))
        r->verdict = VERDICT_OK;
    else if (r->ratio >= min / 2 - ls_check_slack(min / 2))
        r->verdict = VERDICT_MARGINAL;
    else
        r->verdict = VERDICT_LOADING;
}

/* Warn once per port (a re-solve recomputes the report) about a field with
 * no value. */
static void note_warning(ls_op *op, int pi, const char *note)
{
    const ls_part *p = &op->nl->parts[pi];
    ls_diags *d = op->nl->diags;
    for (int i = 0; i < d->n; i++)
        if (d->items[i].code && strcmp(d->items[i].code, "port-undefined") == 0 && d->items[i].loc.file == p->loc.file &&
            d->items[i].loc.start == p->loc.start)
            return;
    ls_warning(d, p->loc, "port-undefined", "port '%s': %s", p->name, note);
}

/* A voltage-mode port whose current flows from LOAD back to DRIVER while,
 * opened, the load side stands at more than ten times the driver's open
 * voltage: the load side is the one that makes the signal, so the arrow is
 * most likely reversed (the sag is then meaningless, often huge). */
static void reversed_warning(ls_op *op, int pi, const ls_port_result *r)
{
    const ls_part *p = &op->nl->parts[pi];
    if (r->current_mode || !(r->current < 0) || !isfinite(r->load_open) || !isfinite(r->open) ||
        !(fabs(r->load_open) > 10 * fabs(r->open)) || !(fabs(r->load_open) > 1e-9 * ls_op_volts(op)))
        return;
    ls_diags *d = op->nl->diags;
    for (int i = 0; i < d->n; i++)
        if (d->items[i].code && strcmp(d->items[i].code, "port-reversed") == 0 && d->items[i].loc.file == p->loc.file &&
            d->items[i].loc.start == p->loc.start)
            return;
    char a[48], b[48];
    ls_warning(d, p->loc, "port-reversed",
               "port '%s': its current flows backwards, from '%s' to '%s', and opened the load side stands at %s "
               "against the driver side's %s; is the arrow reversed (port %s %s -> %s)?",
               p->name, op->nl->nodes[p->pin[1]].name, op->nl->nodes[p->pin[0]].name,
               ls_fmt_eng(a, sizeof a, r->load_open, "V", 4, true), ls_fmt_eng(b, sizeof b, r->open, "V", 4, true),
               p->name, op->nl->nodes[p->pin[1]].name, op->nl->nodes[p->pin[0]].name);
}

/* Voltage-mode fields: open from the port opened, impedances at both ends. */
static void voltage_fields(ls_op *op, ls_mod *m, const ls_part *p, ls_port_result *r)
{
    int f = p->pin[0], t = p->pin[1];
    r->zout = z_at(m, f);
    r->zin = z_at(m, t);
    r->open = node_value(m, f);
    r->load_open = node_value(m, t);
    r->loaded = op->v[f];
    if (m->singular)
        r->note = "opening this port leaves the circuit without a DC solution (is it inside a feedback loop?); "
                  "open, sag, zout, zin and ratio are undefined";
    else if (isinf(r->open))
        r->note = "with the load disconnected nothing limits the driver's voltage (a current into an open end): "
                  "open and sag are unbounded; a current-output driver wants mode=current";
    else if (isnan(r->open))
        r->note = "with the load disconnected the driver's voltage is not set by anything: open and sag are undefined";
}

/* Current-mode fields: open is the driver's current into a short to ground. */
static void current_fields(ls_op *op, ls_mod *m, int pi, ls_port_result *r)
{
    const ls_part *p = &op->nl->parts[pi];
    r->zout = z_at(m, p->pin[0]);
    r->zin = z_at(m, p->pin[1]);
    r->loaded = r->current;
    ls_mod *s = ls_mod_new(op, pi, MOD_SHORT_PORT_TO_GROUND);
    r->open = s && !s->singular ? s->x[p->branch] : NAN;
    if (s && !s->singular && s->nfloating && p->pin[0] > 0 && ls_mod_depends_on_floating(s, p->pin[0]))
        r->open = NAN;
    if (m->singular)
        r->note = "opening this port leaves the circuit without a DC solution (is it inside a feedback loop?); "
                  "zout, zin and ratio are undefined";
    if (isnan(r->open) && !r->note)
        r->note = p->pin[0] == 0 ? "the driver end is ground: there is no short-circuit current to report"
                                 : "the driver's short-circuit current is not defined";
    ls_mod_free(&s);
}

static void finish_report(ls_op *op, int pi, ls_port_result *r);

/* The selected-inverse factor of the op's matrix (selinv.h), built on first
 * use for systems of at least LS_SELINV_MIN_N unknowns whose KLU pivot
 * ratio says the plain LU is accurate; NULL otherwise (then every entry
 * costs a refined solve).  LOADSTACK_SELINV_MIN_N overrides the size, so the
 * tests can compare both paths on small circuits. */
static ls_selinv *op_selinv(ls_op *op)
{
    if (op->selinv_state == 0) {
        op->selinv_state = -1;
        const char *env = getenv("LOADSTACK_SELINV_MIN_N");
        long min_n = env && *env ? strtol(env, NULL, 10) : LS_SELINV_MIN_N;
        double rcond = 0;
        if (min_n >= 0 && op->mna.n >= min_n) {
            op->selinv = ls_selinv_new(&op->mna.a, &rcond);
            if (op->selinv && rcond >= SELINV_MIN_RCOND)
                op->selinv_state = 1;
            else
                ls_selinv_free(&op->selinv);
        }
    }
    return op->selinv_state == 1 ? op->selinv : NULL;
}

/* e[0..2] = row k of A^-1 and e[3..5] = row s, at columns f, t, k (f or t
 * negative: ground, 0): from the selected-inverse factor where there is one
 * and `selected`, else from two refined transposed solves; mag[] the scale
 * their rounding is relative to (ls_selinv_block).  With srow, the largest
 * |entry| of row s at a node's column (ohm: the scale of its entries'
 * rounding in norm), NaN from the selected inverse.  false when a solve
 * failed (*nomem set when for want of memory). */
static bool port_entries(ls_op *op, int k, int s, int f, int t, double *e, double *mag, bool selected, bool *nomem,
                         double *srow)
{
    int rows[2] = {k, s}, cols[3] = {f, t, k};
    ls_selinv *si = selected ? op_selinv(op) : NULL;
    if (srow)
        *srow = NAN;
    if (si)
        return ls_selinv_block(si, rows, 2, cols, 3, e, mag) == 0;
    int n = op->mna.n;
    double anorm = op_anorm(op);
    double *yk = calloc((size_t)(n ? n : 1), sizeof *yk);
    double *ys = calloc((size_t)(n ? n : 1), sizeof *ys);
    bool ok = yk && ys;
    *nomem = !ok;
    if (ok) {
        yk[k] = 1;
        ys[s] = 1;
        int st = base_solve(op, yk, 1, anorm);
        if (st == LS_SOLVER_OK)
            st = base_solve(op, ys, 1, anorm);
        ok = st == LS_SOLVER_OK;
        *nomem = st == LS_SOLVER_NOMEM;
    }
    for (int j = 0; j < 3 && ok; j++) {
        e[j] = cols[j] >= 0 ? yk[cols[j]] : 0;
        e[3 + j] = cols[j] >= 0 ? ys[cols[j]] : 0;
        mag[j] = fabs(e[j]);   /* refined: accurate to their own size */
        mag[3 + j] = fabs(e[3 + j]);
    }
    if (ok && srow) {
        *srow = 0;
        for (int i = 0; i < op->mna.nn; i++)
            *srow = ls_max_acc(*srow, fabs(ys[i]));
    }
    free(yk);
    free(ys);
    return ok;
}

static bool port_fast_from(ls_op *op, const ls_part *p, ls_port_result *r, bool selected, bool *nomem);

/* The fast path of a voltage-mode port, from two rows of A^-1.  The port's
 * branch row k of A is V(f) - V(t) = 0, so (e_f - e_t)^T A^-1 = e_k^T: row t
 * of A^-1 is row f minus e_k^T.  Opening the port replaces row k by I = 0,
 * a rank-one change, and by the Sherman-Morrison formula
 *     (A'^-1)_ij = a_ij - a_ik (a_kj - [k = j]) / a_kk,   a = A^-1,
 * so zout = a_ff - a_fk a_kf / a_kk, zin = a_tt - a_tk a_kt / a_kk and
 * open = x_f - a_fk x_k / a_kk.  Rows f (or t) and k cost one transposed
 * solve each.  Returns false (nothing set) when a_kk is too small to trust:
 * then opening the port may leave nodes undetermined, for the general path;
 * also false, with *nomem set, when memory ran out (then the general path,
 * whose numbers differ in the last digits, must not stand in for it). */
static bool port_fast(ls_op *op, const ls_part *p, ls_port_result *r, bool *nomem)
{
    if (p->pin[0] == p->pin[1])
        return false;                 /* both ends on one node: no such row identity */
    /* the selected inverse's entries carry the plain LU's rounding, which a
     * difference of nearly equal terms would magnify: then the refined solves */
    *nomem = false;
    if (port_fast_from(op, p, r, true, nomem))
        return true;
    return !*nomem && port_fast_from(op, p, r, false, nomem);
}

/* Rows f and t of A^-1 at columns f, t, k (af, at; a ground end's row is 0)
 * and the scales of their rounding (mf, mt), from row s's entries e[3..5]
 * and mag[3..5]: row t = row f - e_k^T (the port's branch row). */
static void port_rows(int s, int f, int t, const double *e, const double *mag, double *af, double *at, double *mf,
                      double *mt)
{
    double *row = s == f ? af : at, *other = s == f ? at : af, sign = s == f ? -1 : 1;
    double *mrow = s == f ? mf : mt, *mother = s == f ? mt : mf;
    for (int j = 0; j < 3; j++) {
        row[j] = e[3 + j];
        mrow[j] = mag[3 + j];
    }
    if ((s == f ? t : f) >= 0)
        for (int j = 0; j < 3; j++) {
            other[j] = row[j] + (j == 2 ? sign : 0);
            mother[j] = mrow[j] + (j == 2 ? 1 : 0);
        }
}

/* The four fields zout, zin, open, load_open into v[]: each is first - b c /
 * a_kk; the scale of its rounding is the first's scale plus the product of
 * the factors' scales (a factor that is zero by cancellation has a scale,
 * one zero by structure has none), widened by a_kk's own relative scale.
 * With selected, false when a field would lose more than SELINV_MAX_CANCEL
 * to cancellation. */
static bool port_fields(const ls_op *op, const ls_part *p, const double *e, const double *mag, const double *af,
                        const double *at, const double *mf, const double *mt, bool selected, double *v)
{
    int f = p->pin[0] - 1, t = p->pin[1] - 1, k = p->branch;
    double akf = e[0], akt = e[1], akk = e[2];
    double kk = 1 + mag[2] / fabs(akk);
    double xk = fabs(op->x[k]);
    double first[4] = {f >= 0 ? af[0] : 0, t >= 0 ? at[1] : 0, f >= 0 ? op->x[f] : 0, t >= 0 ? op->x[t] : 0};
    double mfirst[4] = {f >= 0 ? mf[0] : 0, t >= 0 ? mt[1] : 0, fabs(first[2]), fabs(first[3])};
    double second[4] = {f >= 0 ? af[2] * akf / akk : 0, t >= 0 ? at[2] * akt / akk : 0,
                        f >= 0 ? af[2] * op->x[k] / akk : 0, t >= 0 ? at[2] * op->x[k] / akk : 0};
    double msecond[4] = {f >= 0 ? mf[2] * mag[0] : 0, t >= 0 ? mt[2] * mag[1] : 0, f >= 0 ? mf[2] * xk : 0,
                         t >= 0 ? mt[2] * xk : 0};
    for (int q = 0; q < 4; q++) {
        v[q] = first[q] - second[q];
        double scale = mfirst[q] + msecond[q] / fabs(akk) * kk;
        /* load_open is only compared with open and the circuit's volts (the
         * reversed-current warning): its rounding counts against those */
        double ref = q < 3 ? fabs(v[q]) : fmax(fabs(v[3]), fmax(fabs(v[2]), fabs(op->v[p->pin[0]])));
        if (selected && scale != 0 && !(scale <= SELINV_MAX_CANCEL * ref))
            return false;
    }
    return true;
}

/* port_fast with the entries from the selected inverse (selected) or from
 * refined solves; with selected, false also when a field would lose more
 * than SELINV_MAX_CANCEL to cancellation. */
static bool port_fast_from(ls_op *op, const ls_part *p, ls_port_result *r, bool selected, bool *nomem)
{
    int f = p->pin[0] - 1, t = p->pin[1] - 1, k = p->branch;
    int s = f >= 0 ? f : t;           /* the end that is not ground */
    if (selected && !op_selinv(op))
        return false;
    /* rows k and s of A^-1 at columns f, t, k (a ground column's entry is 0) */
    double e[6], mag[6];
    if (!port_entries(op, k, s, f, t, e, mag, selected, nomem, NULL))
        return false;
    double af[3] = {0, 0, 0}, at[3] = {0, 0, 0};   /* columns f, t, k */
    double mf[3] = {0, 0, 0}, mt[3] = {0, 0, 0};
    port_rows(s, f, t, e, mag, af, at, mf, mt);
    double akk = e[2];
    /* a_kk in units of the circuit's own conductance, against the terms that
     * cancel in 1 + d^T A^-1 e_k */
    double alpha = op->g_pin > 0 ? 1 / op->g_pin : 1;
    if (!(alpha * fabs(akk) > SINGULAR_TOL * (1 + alpha * fabs(akk) + fabs(af[2]) + fabs(at[2]))))
        return false;
    double v[4];
    if (!port_fields(op, p, e, mag, af, at, mf, mt, selected, v))
        return false;
    r->zout = v[0];
    r->zin = v[1];
    r->open = v[2];
    r->load_open = v[3];
    r->loaded = op->v[p->pin[0]];
    return true;
}

/* A held port's closed form from refined entries may lose no more than
 * this factor to cancellation (in C's determinant or in open's sum; from
 * the selected inverse's, SELINV_MAX_CANCEL); beyond it the general update,
 * which refines against the modified matrix itself, decides. */
#define HELD_MAX_CANCEL 1e3

/* Is column k of A exactly e_f - e_t (f, t unknowns; t >= 0)?  Then, as
 * A e_k = e_f - e_t, column f of A^-1 minus column t is e_k. */
static bool column_is_port(const ls_csc *a, int k, int f, int t)
{
    int cnt = a->colptr[k + 1] - a->colptr[k];
    if (cnt != 2)
        return false;
    for (int p = a->colptr[k]; p < a->colptr[k + 1]; p++)
        if (!(a->rowind[p] == f && a->val[p] == 1) && !(a->rowind[p] == t && a->val[p] == -1))
            return false;
    return true;
}

/* port_held by a closed form, when every node reaches ground (then holding
 * the load end floats nothing and the update is exactly rows f and k).
 * Holding removes A's entries (f,k) and (k,f), a rank-two change
 * A' = A + E_R D with R = (f, k), d_f = -e_k^T, d_k = -e_f^T, and sets the
 * branch row's right-hand side to -v(t).  With a = A^-1, Z = A^-1 E_R and
 * C = I + D Z = [1 - a_kf, -a_kk; -a_ff, 1 - a_fk], the Woodbury identity
 * gives A'^-1 E_R = Z C^-1, so
 *     zout = (A'^-1)_ff = a_ff / det C,
 *     open = x_f + (u_f a_ff + u_k (a_ff a_kk + a_fk (1 - a_kf))) / det C,
 * with u = (x_k, x_f - v(t)) the change's residual at rows f and k.  Rows k
 * and t of A^-1 cost a transposed solve each (port_entries); the branch row
 * V(f) - V(t) = 0 makes row f = row t + e_k^T, so a_ff = a_tf and
 * 1 - a_fk = -a_tk exactly, and when column k is e_f - e_t also
 * 1 - a_kf = -a_kt: C's entries carry no cancellation of their own.
 * det C = det A' / det A is dimensionless: the return difference of the loop
 * the port closes, 1 where the held side feeds nothing back to the driver's,
 * 0 where holding leaves no DC solution (then what is computed is rounding,
 * of either size).  So the closed form is used only where det C is at least
 * 1 / (its cancellation limit) and at least that share of its terms; a
 * held system that is singular, or nearly (a loop gain near 1), goes to the
 * general update, which decides.  A driving-point resistance within the
 * rounding of its row of A^-1 (64 eps of the row's largest entry) is 0: a
 * driver at an op-amp's output or at a source.
 * Returns false, leaving r as it was, when it does not apply, when a term
 * cancels beyond its limit or when a solve failed (*nomem set when for want
 * of memory). */
static bool port_held_fast(ls_op *op, const ls_part *p, ls_port_result *r, bool selected, bool *nomem)
{
    int f = p->pin[0] - 1, t = p->pin[1] - 1, k = p->branch;
    *nomem = false;
    if (f < 0 || t < 0 || f == t || !all_grounded(op) || (selected && !op_selinv(op)))
        return false;
    double e[6], mag[6], cancel = selected ? SELINV_MAX_CANCEL : HELD_MAX_CANCEL, trow;
    if (!port_entries(op, k, t, f, t, e, mag, selected, nomem, &trow))
        return false;
    double akf = e[0], akt = e[1], akk = e[2], aff = e[3], atk = e[5];
    double maff = mag[3], makk = mag[2];
    if (fabs(aff) <= 64 * DBL_EPSILON * trow)   /* never true for a NaN trow */
        aff = 0;
    bool col = column_is_port(&op->mna.a, k, f, t);
    double c11 = col ? -akt : 1 - akf, mc11 = col ? mag[1] : 1 + mag[0];
    double c22 = -atk, mc22 = mag[5];
    double det = c11 * c22 - akk * aff;
    double mdet = mc11 * mc22 + makk * maff;
    if (!(fabs(det) * cancel >= fmax(1, mdet)))
        return false;
    double afk = atk + 1, xf = op->x[f], uf = op->x[k], uk = op->x[f] - op->v[p->pin[1]];
    double num = uf * aff + uk * (aff * akk + afk * c11);
    double open = xf + num / det;
    if (!(fabs(xf) + fabs(num / det) <= cancel * fabs(open)))
        return false;
    r->load_held = true;
    r->zin = INFINITY;
    r->loaded = op->v[p->pin[0]];
    r->zout = aff / det;
    r->open = open;
    return true;
}

/* A voltage-mode port whose load side has no DC path once it is opened: the
 * load end is held at its loaded voltage while the driver side's open and
 * zout are computed (so identical connections get identical answers), and
 * zin is unbounded (no DC current can flow into that side).  The closed form
 * (port_held_fast) where it applies, else the general update; the variable
 * LOADSTACK_PORT_HELD=general forces the latter (tests/loading/held_ports.py
 * compares the two).  Returns false when out of memory. */
static bool port_held(ls_op *op, int pi, ls_port_result *r)
{
    const ls_part *p = &op->nl->parts[pi];
    if (op->held_path == 0) {
        const char *env = getenv("LOADSTACK_PORT_HELD");
        op->held_path = env && strcmp(env, "general") == 0 ? -1 : 1;
    }
    bool nomem = false;
    if (op->held_path > 0 &&
        (port_held_fast(op, p, r, true, &nomem) || (!nomem && port_held_fast(op, p, r, false, &nomem))))
        return true;
    if (nomem)
        return false;
    ls_mod *m = ls_mod_new(op, pi, MOD_HOLD_PORT_LOAD);
    if (!m)
        return false;
    r->load_held = true;
    r->zin = INFINITY;
    r->loaded = op->v[p->pin[0]];
    r->zout = z_at(m, p->pin[0]);
    r->open = node_value(m, p->pin[0]);
    if (m->singular)
        r->note = "with the load side held at its loaded voltage the driver side has no DC solution; "
                  "open, sag and zout are undefined";
    ls_mod_free(&m);
    return true;
}

/* The loading report of port pi into r (r->done is left to the caller). */
static void port_report(ls_op *op, int pi, ls_port_result *r)
{
    const ls_part *p = &op->nl->parts[pi];
    memset(r, 0, sizeof *r);
    r->current_mode = ls_part_opt(p, "mode", 0) == 1;
    r->current = op->x[p->branch];
    r->adc = -1;
    r->budget = NAN;
    r->load_open = NAN;
    bool held = !r->current_mode && load_floats_when_open(op, pi), nomem = false;
    if (held ? port_held(op, pi, r) : !r->current_mode && port_fast(op, p, r, &nomem)) {
        finish_report(op, pi, r);
        return;
    }
    /* a held side failed only for memory */
    ls_mod *m = held || nomem ? NULL : ls_mod_new(op, pi, MOD_REMOVE_PART);
    if (!m) {
        r->open = r->zout = r->zin = r->sag = r->sag_rel = r->ratio = NAN;
        r->loaded = r->current_mode ? r->current : op->v[p->pin[0]];
        r->note = "out of memory";
        r->verdict = VERDICT_LOADING;
        /* an error, not a verdict: a command that reports this port fails (exit 3) */
        ls_error(op->nl->diags, p->loc, "out of memory in the report of port '%s' (%d unknowns)", p->name, op->mna.n);
        return;
    }
    if (r->current_mode)
        current_fields(op, m, pi, r);
    else
        voltage_fields(op, m, p, r);
    ls_mod_free(&m);
    finish_report(op, pi, r);
}

/* ratio, sag, sag_rel, the verdict and the warning from the fields. */
static void finish_report(ls_op *op, int pi, ls_port_result *r)
{
    r->ratio = r->current_mode ? ratio_of(r->zout, r->zin) : ratio_of(r->zin, r->zout);
    if (!r->current_mode) {
        /* an open voltage at the rounding level of the port's own voltages is 0 V */
        const ls_part *p = &op->nl->parts[pi];
        double scale = fmax(fmax(fabs(r->loaded), fabs(op->v[p->pin[1]])), isfinite(r->load_open) ? fabs(r->load_open) : 0);
        if (fabs(r->open) < 64 * DBL_EPSILON * scale)
            r->open = 0;
    }
    r->sag = r->open - r->loaded;
    /* a difference at the rounding level of the two voltages is no sag (two
     * identical connections must not differ by the noise of their solves) */
    if (fabs(r->sag) <= 64 * DBL_EPSILON * fmax(fabs(r->open), fabs(r->loaded)))
        r->sag = 0;
    r->sag_rel = r->sag == 0 ? 0 : ratio_of(r->sag, r->open);
    if (isinf(r->sag_rel))
        r->sag_rel = NAN;
    if (isinf(r->open))
        r->sag_rel = NAN;
    judge(op, pi, r);
    if (r->note)
        note_warning(op, pi, r->note);
    reversed_warning(op, pi, r);
}

/* The cached report of port p (owned by op), or NULL when p is not a port. */
const ls_port_result *ls_op_port(ls_op *op, int p)
{
    if (p < 0 || p >= op->nl->nparts || !op->nl->parts[p].kind->is_port)
        return NULL;
    ls_port_result *r = &op->port[p];
    if (!r->done) {
        port_report(op, p, r);
        r->done = true;
    }
    return r;
}

/* ---- advice: the value of one part that meets a zout ------------------------------------------ */

/* Column `node` of the opened system's resistance matrix into z (n values):
 * A'^-1 e_node with the sources zeroed.  false when it cannot be solved. */
static bool open_column(ls_mod *m, int node, double *z)
{
    memset(z, 0, (size_t)m->n * sizeof *z);
    if (node <= 0)
        return true;
    z[node - 1] = 1;
    return ls_mod_solve(m, z) == LS_SOLVER_OK;
}

double ls_port_resistor_for_zout(ls_op *op, int port, int part, double target)
{
    const ls_netlist *nl = op->nl;
    const ls_part *p = &nl->parts[port], *r = &nl->parts[part];
    int f = p->pin[0];
    if (!r->kind->is_resistance || f <= 0 || !(target >= 0))
        return NAN;
    int other = r->pin[0] == f ? r->pin[1] : r->pin[1] == f ? r->pin[0] : -1;
    if (other < 0 || other == f)
        return NAN;
    ls_mod *m = ls_mod_new(op, port, load_floats_when_open(op, port) ? MOD_HOLD_PORT_LOAD : MOD_REMOVE_PART);
    if (!m)
        return NAN;
    double out = NAN;
    double *cf = malloc((size_t)(m->n ? m->n : 1) * sizeof *cf), *co = malloc((size_t)(m->n ? m->n : 1) * sizeof *co);
    if (cf && co && !m->singular && !m->nfloating && open_column(m, f, cf) && open_column(m, other, co)) {
        /* Adding dG between f and other, u = e_f - e_other, changes
         *   Z_ff -> Z_ff - dG (u'Z e_f)(e_f'Z u) / (1 + dG u'Z u)   (Sherman-Morrison),
         * so dG = (Z_ff - T) / (P - (Z_ff - T) Q), P = (u'Z e_f)(e_f'Z u), Q = u'Z u. */
        double zff = cf[f - 1], zof = other > 0 ? cf[other - 1] : 0;
        double zfo = other > 0 ? co[f - 1] : 0, zoo = other > 0 ? co[other - 1] : 0;
        double P = (zff - zof) * (zff - zfo), Q = zff - zfo - zof + zoo, d = zff - target;
        double den = P - d * Q;
        if (den != 0) {
            double g = 1 / r->value + d / den;
            if (g > 0)
                out = 1 / g;
        }
    }
    free(cf);
    free(co);
    ls_mod_free(&m);
    return out;
}

/* ---- sag ------------------------------------------------------------------------------------------ */

double ls_op_volts(const ls_op *op)
{
    const ls_netlist *nl = op->nl;
    double vmax = 0;
    for (int i = 0; i < nl->nnodes; i++)
        vmax = ls_max_acc(vmax, fabs(op->v[i]));
    for (int i = 0; i < nl->nparts; i++)
        if (nl->parts[i].kind->stage_role == LS_ROLE_SOURCE)   /* a voltage source */
            vmax = ls_max_acc(vmax, fabs(ls_run_value(&op->run, &nl->parts[i])));
    return vmax;
}

/* qsort order: largest |delta| first, undefined items last, ties in part order. */
static int by_delta(const void *a, const void *b)
{
    const ls_sag_item *x = a, *y = b;
    bool nx = isnan(x->delta), ny = isnan(y->delta);
    if (nx != ny)
        return nx ? 1 : -1;
    double ax = nx ? 0 : fabs(x->delta), ay = ny ? 0 : fabs(y->delta);
    if (ax != ay)
        return ax < ay ? 1 : -1;
    return x->part - y->part;
}

/* Does the modified solution x (node voltages vv, vv[0] = 0) cross a limit
 * that the linear update cannot see: an op-amp whose limit state would
 * change, a junction whose conductance would change more than tenfold?
 * Part `skip` (the one removed) is not asked.  Names the first in limit. */
static bool crosses_limit(const ls_op *op, const double *x, const double *vv, int skip, char *limit, size_t n)
{
    const ls_netlist *nl = op->nl;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (i == skip || p->slot < 0)
            continue;
        if (p->kind->is_opamp && ls_opamp_limited(p)) {
            int side, next = ls_opamp_next(p, &op->run, x, vv, &side);
            if (next != ls_run_state(&op->run, p)->state) {
                snprintf(limit, n, "%s %s", p->name, ls_lim_word(next));
                return true;
            }
        } else if (p->kind->is_junction && p->slot >= 0) {
            bool beyond;
            double v1 = ls_junction_v(p, x), v0 = ls_run_state(&op->run, p)->op_v, h = 1e-4;
            double g1 = (ls_junction_current(&op->run, p, v1 + h, &beyond) - ls_junction_current(&op->run, p, v1 - h, &beyond)) / (2 * h);
            double g0 = (ls_junction_current(&op->run, p, v0 + h, &beyond) - ls_junction_current(&op->run, p, v0 - h, &beyond)) / (2 * h);
            if (g0 > 0 && g1 > 0 && (g1 > 10 * g0 || g0 > 10 * g1)) {
                snprintf(limit, n, "%s %s", p->name, g1 > g0 ? "on" : "off");
                return true;
            }
        }
    }
    return false;
}

/* The row of part i: the node's voltage with i removed, by the low-rank
 * update; a row whose estimate crosses a limit is flagged for a re-solve.
 * vv: scratch of n + 1 values.  0, or -1 out of memory. */
static int sag_row(ls_op *op, int node, int i, ls_sag_item *it, double *vv, double vmax)
{
    ls_mod *m = ls_mod_new(op, i, MOD_REMOVE_PART);
    if (!m)
        return -1;
    *it = (ls_sag_item){.part = i, .without = NAN};
    if (!ls_mod_singular(m)) {
        const double *x = ls_mod_x(m);
        vv[0] = 0;
        memcpy(vv + 1, x, (size_t)op->mna.n * sizeof *vv);
        if (node == 0)
            it->without = 0;
        else if (!port_floats_node(op, i, node) && !ls_mod_is_floating(m, node) &&
                 !ls_mod_depends_on_floating(m, node))
            it->without = x[node - 1];
        else
            it->floats = true;   /* by topology for an opened port: nothing sets that side */
        it->beyond_limit = crosses_limit(op, x, vv, i, it->limit, sizeof it->limit);
        if (!it->beyond_limit && isfinite(it->without) && fabs(it->without) > vmax * (1 + 1e-9)) {
            it->beyond_limit = true;
            snprintf(it->limit, sizeof it->limit, "beyond every voltage of the circuit");
        }
    }
    ls_mod_free(&m);
    return 0;
}

/* Re-solve row it exactly (part removed, every limit active, nodes left
 * floating held where they were).  base: the parts' states to return to.
 * 0, or -1 out of memory. */
static int sag_resolve(ls_op *op, int node, ls_sag_item *it, const ls_runs *base)
{
    ls_variant v;
    if (ls_variant_init(&v, op) != 0)
        return -1;
    v.opened[it->part] = LS_OPENED;
    int rc = ls_variant_hold_floating(&v, op) < 0 ? -1 : 0;
    if (rc == 0 && ls_newton_needed(op->nl)) {
        it->resolved = true;
        it->floats = node > 0 && v.floating[node];
        it->without = NAN;
        if (!it->floats && ls_variant_solve(&v, op, false) == LS_DONE) {
            it->without = v.op.v[node];
            /* name what the exact solve ended at, not what the estimate crossed */
            char now[sizeof it->limit];
            if (ls_limits_in_force(&v.op.run, base, now, sizeof now) > 0)
                memcpy(it->limit, now, sizeof now);
            else
                snprintf(it->limit, sizeof it->limit, "re-solved: no limit in force");
        } else if (v.op.nomem) {
            rc = -1;   /* no memory is no row without a solution */
        }
        ls_runs_restore(op, base);
    }
    ls_variant_free(&v);
    return rc;
}

/* What the rows of a linear circuit share when they come from the selected
 * inverse: NODE's row of A^-1 (w = A^-T e_node, one refined transposed
 * solve), scratch for a part's stamps, and the factor.  on is false when the
 * rows take the general path (a circuit with a limit or a junction, whose
 * rows must see the whole modified solution; no selected inverse; NODE
 * ground). */
typedef struct sag_fast {
    bool on;
    ls_selinv *si;
    double *w;        /* n values: row NODE of A^-1 */
    double *b;        /* n values, zero between rows: the stamps' right-hand side */
    ls_triplets t;
} sag_fast;

/* Sets up f for NODE.  0, or -1 out of memory (f then freed). */
static int sag_fast_init(ls_op *op, int node, sag_fast *f)
{
    const ls_netlist *nl = op->nl;
    memset(f, 0, sizeof *f);
    if (node <= 0)
        return 0;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (p->kind->is_junction || (p->kind->is_opamp && ls_opamp_limited(p)))
            return 0;
    }
    f->si = op_selinv(op);
    if (!f->si)
        return 0;
    /* every row reads a few entries among its part's own unknowns: the
     * pattern pass makes each a lookup instead of two solves whose reach
     * grows with the circuit.  LOADSTACK_SELINV_PATTERN=0 keeps the solves
     * (tests/scale/sag_fast.py compares both); out of memory keeps them too */
    const char *env = getenv("LOADSTACK_SELINV_PATTERN");
    if (!(env && strcmp(env, "0") == 0))
        (void)ls_selinv_fill(f->si);
    int n = op->mna.n;
    f->w = calloc((size_t)n, sizeof *f->w);
    f->b = calloc((size_t)n, sizeof *f->b);
    if (!f->w || !f->b)
        goto nomem;
    f->w[node - 1] = 1;
    int st = base_solve(op, f->w, 1, op_anorm(op));
    if (st == LS_SOLVER_NOMEM)
        goto nomem;
    f->on = st == LS_SOLVER_OK;
    return 0;
nomem:
    free(f->w);
    free(f->b);
    memset(f, 0, sizeof *f);
    return -1;
}

static void sag_fast_free(sag_fast *f)
{
    free(f->w);
    free(f->b);
    ls_triplets_free(&f->t);
    memset(f, 0, sizeof *f);
}

/* Index of unknown v in u[0..nu), or -1. */
static int unknown_at(const int *u, int nu, int v)
{
    for (int q = 0; q < nu; q++)
        if (u[q] == v)
            return q;
    return -1;
}

/* The part's own unknowns (its nodes, then its branches) into u[], at most
 * LS_SELINV_MAX of them.  Their number, or -1 when there are more. */
static int part_unknowns(const ls_part *p, int *u)
{
    int nu = 0, np = p->kind->npins < LS_MAX_PINS ? p->kind->npins : LS_MAX_PINS;
    for (int k = 0; k < np; k++) {
        int v = ls_node_unknown(p->pin[k]);
        if (v < 0 || unknown_at(u, nu, v) >= 0)
            continue;
        if (nu == LS_SELINV_MAX)
            return -1;
        u[nu++] = v;
    }
    int nb = p->kind->branches(p);
    for (int k = 0; k < nb; k++) {
        if (nu == LS_SELINV_MAX)
            return -1;
        u[nu++] = p->branch + k;
    }
    return nu;
}

/* The change removing part i makes, as delta_triplets makes it (the stamp
 * taken away, the removed stamp put in), on its unknowns u: dm (row-major
 * nu x nu) to A, db to b.  1 done, 0 when the stamp reaches other unknowns
 * (via=), -1 out of memory. */
static int removal_change(ls_op *op, const ls_part *p, sag_fast *f, const int *u, int nu, double *db, double *dm)
{
    f->t.nnz = 0;
    ls_sink s = {.mode = SINK_ASSEMBLE, .t = &f->t, .b = f->b, .scale = -1};
    ls_stamp_ctx c = {.nl = op->nl, .run = &op->run, .sink = &s};
    p->kind->stamp(p, &c);
    s.scale = 1;
    c.removed = true;
    p->kind->stamp(p, &c);
    for (int q = 0; q < nu; q++) {
        db[q] = f->b[u[q]];
        f->b[u[q]] = 0;
    }
    if (f->t.failed)
        return -1;
    for (int k = 0; k < nu * nu; k++)
        dm[k] = 0;
    for (size_t k = 0; k < f->t.nnz; k++) {
        int r = unknown_at(u, nu, f->t.ti[k]), q = unknown_at(u, nu, f->t.tj[k]);
        if (r < 0 || q < 0)
            return 0;
        dm[r * nu + q] += f->t.tx[k];
    }
    return 1;
}

/* NODE's change w_U . (g - C^-1 Dm (A^-1)_UU g), g = db - Dm x_U,
 * C = I + Dm (A^-1)_UU (ainv row-major), into *d.  false when C is close to
 * singular against its terms (a removal close to cutting the circuit). */
static bool woodbury_node_change(const ls_op *op, const sag_fast *f, const int *u, int nu, const double *db,
                                 const double *dm, const double *ainv, double *d)
{
    double g[LS_SELINV_MAX], y[LS_SELINV_MAX], t[LS_SELINV_MAX], cm[LS_SELINV_MAX * LS_SELINV_MAX];
    double cscale[LS_SELINV_MAX];
    int piv[LS_SELINV_MAX];
    for (int r = 0; r < nu; r++) {
        g[r] = db[r];
        for (int q = 0; q < nu; q++)
            g[r] -= dm[r * nu + q] * op->x[u[q]];
    }
    for (int r = 0; r < nu; r++) {   /* y = (A^-1)_UU g */
        y[r] = 0;
        for (int q = 0; q < nu; q++)
            y[r] += ainv[r * nu + q] * g[q];
    }
    for (int r = 0; r < nu; r++) {   /* t = Dm y */
        t[r] = 0;
        for (int q = 0; q < nu; q++)
            t[r] += dm[r * nu + q] * y[q];
    }
    for (int r = 0; r < nu; r++)     /* C, column-major for small_lu */
        for (int q = 0; q < nu; q++) {
            double v = r == q, sc = r == q;
            for (int k = 0; k < nu; k++) {
                v += dm[r * nu + k] * ainv[k * nu + q];
                sc += fabs(dm[r * nu + k] * ainv[k * nu + q]);
            }
            cm[q * nu + r] = v;
            cscale[q] = r == 0 ? sc : fmax(cscale[q], sc);
        }
    if (small_lu(cm, nu, piv))
        return false;
    for (int q = 0; q < nu; q++)
        if (!(fabs(cm[q * nu + q]) > 1e-3 * cscale[q]))
            return false;
    small_solve(cm, nu, piv, t, 0);
    *d = 0;
    for (int q = 0; q < nu; q++)
        *d += f->w[u[q]] * (g[q] - t[q]);
    return true;
}

/* The row of part i from the selected inverse, in work that follows the
 * factor near the part instead of the order of the system (with the pattern
 * pass, a few lookups).  With U the part's own unknowns (its nodes and
 * branches), removing it changes A by D = E_U Dm E_U^T and b by db (on U),
 * so with x the solution and g = db - D x, the Woodbury identity gives
 *     x'_node - x_node = w_U . g - w_U . C^-1 Dm (A^-1)_UU g,   C = I + Dm (A^-1)_UU,
 * where w = A^-T e_node.  Only (A^-1)_UU comes from the factor.  Returns 1
 * with the row filled, 0 when the row must take the general path (a port;
 * a removal that may leave a node floating; a stamp reaching outside U or
 * more than LS_SELINV_MAX unknowns; entries or a C whose rounding could
 * show at 1e-12), -1 out of memory. */
static int sag_row_fast(ls_op *op, int node, int i, ls_sag_item *it, sag_fast *f, double vmax)
{
    const ls_part *p = &op->nl->parts[i];
    if (p->kind->is_port || !(ls_removal_keeps_edges(p) || removal_floats_nothing(op, p, i)))
        return 0;
    int u[LS_SELINV_MAX], nu = part_unknowns(p, u);
    if (nu < 0)
        return 0;
    double db[LS_SELINV_MAX], dm[LS_SELINV_MAX * LS_SELINV_MAX];
    int st = removal_change(op, p, f, u, nu, db, dm);
    if (st <= 0)
        return st;
    double ainv[LS_SELINV_MAX * LS_SELINV_MAX], mag[LS_SELINV_MAX * LS_SELINV_MAX], d;
    if (ls_selinv_block(f->si, u, nu, u, nu, ainv, mag) != 0)
        return 0;
    for (int k = 0; k < nu * nu; k++)
        if (mag[k] > SELINV_MAX_CANCEL * fabs(ainv[k]) && ainv[k] != 0)
            return 0;                  /* an entry made of cancelling terms */
    if (!woodbury_node_change(op, f, u, nu, db, dm, ainv, &d))
        return 0;
    *it = (ls_sag_item){.part = i, .without = op->x[node - 1] + d};
    if (isfinite(it->without) && fabs(it->without) > vmax * (1 + 1e-9)) {
        it->beyond_limit = true;
        snprintf(it->limit, sizeof it->limit, "beyond every voltage of the circuit");
    }
    return 1;
}

int ls_sag(ls_op *op, int node, ls_sag_item *items)
{
    const ls_netlist *nl = op->nl;
    double v0 = op->v[node], vmax = ls_op_volts(op), noise = 64 * DBL_EPSILON * vmax;
    double *vv = malloc(((size_t)op->mna.n + 1) * sizeof *vv);
    ls_runs base = {0};
    if (!vv || ls_runs_save(op, &base) != 0) {
        free(vv);
        return -1;
    }
    sag_fast fast;
    if (sag_fast_init(op, node, &fast) != 0) {
        free(vv);
        ls_runs_free(&base);
        return -1;
    }
    for (int i = 0; i < nl->nparts; i++) {
        ls_sag_item *it = &items[i];
        int quick = fast.on ? sag_row_fast(op, node, i, it, &fast, vmax) : 0;
        if (quick < 0 || (quick == 0 && sag_row(op, node, i, it, vv, vmax) != 0) ||
            (it->beyond_limit && sag_resolve(op, node, it, &base) != 0)) {
            free(vv);
            ls_runs_free(&base);
            sag_fast_free(&fast);
            return -1;
        }
        /* rounding noise of the update is no voltage */
        if (fabs(it->without) < noise)
            it->without = 0;
        it->delta = it->without - v0;
        if (fabs(it->delta) < noise)
            it->delta = 0;
    }
    free(vv);
    ls_runs_free(&base);
    sag_fast_free(&fast);
    qsort(items, (size_t)nl->nparts, sizeof *items, by_delta);
    return 0;
}
