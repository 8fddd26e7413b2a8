/* lowrank.c — modified systems by low-rank update, and the port report.
 *
 * Opening a port or removing a part changes a few rows of the MNA matrix:
 * A' = A + E_R D, with E_R the unit columns of the changed rows R and D the row
 * changes.  By the Woodbury identity, with Z = A^-1 E_R and C = I + D Z,
 *     A'^-1 y = w - Z C^-1 (D w),   w = A^-1 y,
 * so each modification costs |R| solves with the one factorization of A.
 * Nodes that the change leaves with no DC path to ground are pinned to ground
 * through a conductance (extra rows of the update); any result that depends on
 * a pinned voltage is undefined, and a driving-point resistance at a floating
 * node is unbounded. */
#include <lapacke.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "analysis.h"

#define MAX_RANK 64
#define DEPEND_TOL 1e-9

struct ls_mod {
    ls_op *op;
    int n, r;
    int *rows;               /* r changed rows */
    int *dptr, *dcol;        /* D in compressed rows */
    double *dval;
    double *db;              /* rhs change, n, or NULL */
    double *Z;               /* n*r, column-major */
    double *C;               /* r*r LU factors */
    lapack_int *ipiv;
    bool singular;
    double *x;               /* modified solution */
    bool *floating;          /* per node */
    int *float_row;          /* per node: its index in rows, or -1 */
    /* fallback: an explicit factorization of A' */
    ls_solver *own;
    ls_csc own_a;
};

bool ls_mod_singular(const ls_mod *m) { return m->singular; }
bool ls_mod_is_floating(const ls_mod *m, int node) { return node > 0 && m->floating && m->floating[node]; }

void ls_mod_free(ls_mod **pm)
{
    ls_mod *m = pm ? *pm : NULL;
    if (!m)
        return;
    free(m->rows);
    free(m->dptr);
    free(m->dcol);
    free(m->dval);
    free(m->db);
    free(m->Z);
    free(m->C);
    free(m->ipiv);
    free(m->x);
    free(m->floating);
    free(m->float_row);
    ls_solver_free(&m->own);
    ls_csc_free(&m->own_a);
    free(m);
    *pm = NULL;
}

/* ---- which nodes float once the part is gone --------------------------------------- */

typedef struct uf_ctx {
    int *parent;
} uf_ctx;

static void uf_edge(void *ctx, int a, int b, bool vdef, int part)
{
    (void)vdef;
    (void)part;
    uf_ctx *u = ctx;
    if (a >= 0 && b >= 0)
        ls_uf_union(u->parent, a, b);
}

/* Removing a voltage source or a voltage-controlled voltage source leaves a
 * short (its value set to zero); removing anything else opens it. */
static bool removal_keeps_edges(const ls_part *p)
{
    const char *k = p->kind->name;
    return strcmp(k, "voltage") == 0 || strcmp(k, "vcvs") == 0 || strcmp(k, "ccvs") == 0;
}

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
    if (removal_keeps_edges(p) && kind == MOD_REMOVE_PART)
        return 0;
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
    int count = 0;
    for (int i = 1; i < nn; i++)
        if (ls_uf_find(parent, i) != 0) {
            m->floating[i] = true;
            count++;
        }
    free(parent);
    return count;
}

/* ---- building the update ------------------------------------------------------------------ */

static int cmp_int(const void *a, const void *b)
{
    int x = *(const int *)a, y = *(const int *)b;
    return (x > y) - (x < y);
}

/* Triplets of A' - A for the modification. */
static int delta_triplets(ls_mod *m, int part, ls_mod_kind kind, ls_triplets *t)
{
    ls_op *op = m->op;
    const ls_netlist *nl = op->nl;
    const ls_part *p = &nl->parts[part];
    m->db = calloc((size_t)m->n, sizeof *m->db);
    if (!m->db)
        return -1;
    ls_sink s = {.mode = SINK_ASSEMBLE, .t = t, .b = m->db, .scale = -1};
    if (kind == MOD_REMOVE_PART) {
        ls_stamp_ctx c = {.nl = nl, .sink = &s};
        p->kind->stamp(p, &c);
        s.scale = 1;
        c.removed = true;
        p->kind->stamp(p, &c);
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
    return t->failed ? -1 : 0;
}

/* Group the delta triplets by row into D. */
static int build_rows(ls_mod *m, const ls_triplets *t)
{
    int *rows = malloc((t->nnz ? t->nnz : 1) * sizeof *rows);
    if (!rows)
        return -1;
    for (size_t k = 0; k < t->nnz; k++)
        rows[k] = t->ti[k];
    qsort(rows, t->nnz, sizeof *rows, cmp_int);
    int r = 0;
    for (size_t k = 0; k < t->nnz; k++)
        if (r == 0 || rows[r - 1] != rows[k])
            rows[r++] = rows[k];
    m->r = r;
    m->rows = rows;
    m->dptr = calloc((size_t)r + 1, sizeof *m->dptr);
    m->dcol = malloc((t->nnz ? t->nnz : 1) * sizeof *m->dcol);
    m->dval = malloc((t->nnz ? t->nnz : 1) * sizeof *m->dval);
    if (!m->dptr || !m->dcol || !m->dval)
        return -1;
    for (size_t k = 0; k < t->nnz; k++) {
        int *pos = bsearch(&t->ti[k], rows, (size_t)r, sizeof *rows, cmp_int);
        m->dptr[pos - rows + 1]++;
    }
    for (int i = 0; i < r; i++)
        m->dptr[i + 1] += m->dptr[i];
    int *fill = malloc(((size_t)r + 1) * sizeof *fill);
    if (!fill)
        return -1;
    memcpy(fill, m->dptr, ((size_t)r + 1) * sizeof *fill);
    for (size_t k = 0; k < t->nnz; k++) {
        int i = (int)((int *)bsearch(&t->ti[k], rows, (size_t)r, sizeof *rows, cmp_int) - rows);
        m->dcol[fill[i]] = t->tj[k];
        m->dval[fill[i]++] = t->tx[k];
    }
    free(fill);
    for (int i = 1; i < m->op->nl->nnodes; i++)
        if (m->floating[i]) {
            int u = i - 1;
            int *pos = bsearch(&u, rows, (size_t)r, sizeof *rows, cmp_int);
            m->float_row[i] = pos ? (int)(pos - rows) : -1;
        }
    return 0;
}

/* D y for each changed row. */
static void apply_d(const ls_mod *m, const double *y, double *out)
{
    for (int i = 0; i < m->r; i++) {
        double s = 0;
        for (int p = m->dptr[i]; p < m->dptr[i + 1]; p++)
            s += m->dval[p] * y[m->dcol[p]];
        out[i] = s;
    }
}

static int woodbury_setup(ls_mod *m)
{
    int n = m->n, r = m->r;
    m->Z = calloc((size_t)n * (size_t)(r ? r : 1), sizeof *m->Z);
    m->C = calloc((size_t)(r ? r : 1) * (size_t)(r ? r : 1), sizeof *m->C);
    m->ipiv = malloc((size_t)(r ? r : 1) * sizeof *m->ipiv);
    double *col = malloc((size_t)(r ? r : 1) * sizeof *col);
    if (!m->Z || !m->C || !m->ipiv || !col) {
        free(col);
        return -1;
    }
    for (int j = 0; j < r; j++) {
        double *z = m->Z + (size_t)j * n;
        z[m->rows[j]] = 1;
        if (ls_op_solve_vec(m->op, z, 0) != LS_SOLVER_OK) {
            free(col);
            return -1;
        }
        apply_d(m, z, col);
        for (int i = 0; i < r; i++)
            m->C[(size_t)j * r + i] = col[i] + (i == j);
    }
    free(col);
    if (r == 0)
        return 0;
    double cnorm = LAPACKE_dlange(LAPACK_COL_MAJOR, '1', r, r, m->C, r);
    lapack_int info = LAPACKE_dgetrf(LAPACK_COL_MAJOR, r, r, m->C, r, m->ipiv);
    if (info > 0) {
        m->singular = true;
        return 0;
    }
    double rc = 0;
    LAPACKE_dgecon(LAPACK_COL_MAJOR, '1', r, m->C, r, cnorm, &rc);
    /* C's condition measures how close A' is to singular relative to A. */
    if (!(rc > 1e-13))
        m->singular = true;
    return 0;
}

/* The fallback: assemble A' whole and factor it. */
static int explicit_setup(ls_mod *m, const ls_triplets *dt)
{
    ls_op *op = m->op;
    const ls_csc *a = &op->mna.a;
    ls_triplets t = {0};
    size_t nnz = (size_t)ls_csc_nnz(a) + dt->nnz;
    t.ti = malloc(nnz * sizeof *t.ti);
    t.tj = malloc(nnz * sizeof *t.tj);
    t.tx = malloc(nnz * sizeof *t.tx);
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
    const ls_solver_stats *bs = ls_solver_stats_of(op->solver);
    const ls_backend *be = &ls_backend_dense;
#ifdef LS_HAVE_SPARSE
    if (bs->method != LS_METHOD_DENSE_LU)
        be = &ls_backend_klu;
#endif
    (void)bs;
    m->own = ls_solver_new(be, LS_METHOD_DENSE_LU);
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

int ls_mod_solve(ls_mod *m, double *y)
{
    if (m->singular)
        return LS_SOLVER_SINGULAR;
    if (m->own)
        return ls_solver_solve(m->own, y, 0);
    int st = ls_op_solve_vec(m->op, y, 0);
    if (st != LS_SOLVER_OK || m->r == 0)
        return st;
    double *t = malloc((size_t)m->r * sizeof *t);
    if (!t)
        return LS_SOLVER_NOMEM;
    apply_d(m, y, t);
    LAPACKE_dgetrs(LAPACK_COL_MAJOR, 'N', m->r, 1, m->C, m->r, m->ipiv, t, m->r);
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

ls_mod *ls_mod_new(ls_op *op, int part, ls_mod_kind kind)
{
    ls_mod *m = calloc(1, sizeof *m);
    if (!m)
        return NULL;
    m->op = op;
    m->n = op->mna.n;
    ls_triplets dt = {0};
    if (find_floating(m, part, kind) < 0 || delta_triplets(m, part, kind, &dt) != 0 || build_rows(m, &dt) != 0)
        goto fail;
    int rc = m->r > MAX_RANK ? explicit_setup(m, &dt) : woodbury_setup(m);
    if (rc != 0)
        goto fail;
    m->x = malloc((size_t)(m->n ? m->n : 1) * sizeof *m->x);
    if (!m->x)
        goto fail;
    if (!m->singular) {
        for (int i = 0; i < m->n; i++)
            m->x[i] = op->mna.b[i] + m->db[i];
        if (ls_mod_solve(m, m->x) != LS_SOLVER_OK)
            m->singular = true;
    }
    ls_triplets_free(&dt);
    return m;
fail:
    ls_triplets_free(&dt);
    ls_mod_free(&m);
    return NULL;
}

const double *ls_mod_x(ls_mod *m)
{
    return m->x;
}

bool ls_mod_depends_on_floating(ls_mod *m, int node)
{
    if (node <= 0 || m->singular)
        return false;
    int any = -1;
    for (int i = 1; i < m->op->nl->nnodes; i++)
        if (m->floating[i]) {
            any = i;
            break;
        }
    if (any < 0)
        return false;
    if (m->own) {
        /* explicit: probe each pinned node's influence directly */
        double *y = calloc((size_t)m->n, sizeof *y);
        bool dep = false;
        for (int i = 1; y && i < m->op->nl->nnodes && !dep; i++) {
            if (!m->floating[i])
                continue;
            memset(y, 0, (size_t)m->n * sizeof *y);
            y[i - 1] = m->op->g_pin;
            ls_solver_solve(m->own, y, 0);
            dep = fabs(y[node - 1]) > DEPEND_TOL;
        }
        free(y);
        return dep;
    }
    /* (A'^-1)_{node,j} = (C^-T Z_node)_{jj} for a pinned row j = rows[jj] */
    int r = m->r;
    double *zr = malloc((size_t)r * sizeof *zr);
    if (!zr)
        return true;
    for (int j = 0; j < r; j++)
        zr[j] = m->Z[(size_t)j * m->n + (node - 1)];
    LAPACKE_dgetrs(LAPACK_COL_MAJOR, 'T', r, 1, m->C, r, m->ipiv, zr, r);
    bool dep = false;
    for (int i = 1; i < m->op->nl->nnodes && !dep; i++)
        if (m->floating[i] && m->float_row[i] >= 0)
            dep = fabs(zr[m->float_row[i]]) * m->op->g_pin > DEPEND_TOL;
    free(zr);
    return dep;
}

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

double ls_op_zdrive(ls_op *op, int node)
{
    if (node <= 0)
        return 0;
    double *y = calloc((size_t)op->mna.n, sizeof *y);
    if (!y)
        return NAN;
    y[node - 1] = 1;
    double z = ls_op_solve_vec(op, y, 0) == LS_SOLVER_OK ? y[node - 1] : NAN;
    free(y);
    return z;
}

/* ---- the port report ---------------------------------------------------------------------- */

static double node_value(ls_mod *m, int node)
{
    if (node <= 0)
        return 0;
    if (m->singular || m->floating[node] || ls_mod_depends_on_floating(m, node))
        return NAN;
    return m->x[node - 1];
}

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

static void judge(ls_op *op, ls_port_result *r)
{
    double min = ls_op_min_ratio(op);
    if (isnan(r->ratio))
        r->verdict = isinf(r->current_mode ? r->zout : r->zin) ? VERDICT_OK : VERDICT_LOADING;
    else if (r->ratio >= min)
        r->verdict = VERDICT_OK;
    else if (r->ratio >= min / 2)
        r->verdict = VERDICT_MARGINAL;
    else
        r->verdict = VERDICT_LOADING;
}

static void port_report(ls_op *op, int pi, ls_port_result *r)
{
    const ls_part *p = &op->nl->parts[pi];
    int f = p->pin[0], t = p->pin[1];
    r->current_mode = ls_part_opt(p, "mode", 0) == 1;
    r->current = op->x[p->branch];
    ls_mod *m = ls_mod_new(op, pi, MOD_REMOVE_PART);
    if (!m) {
        r->open = r->zout = r->zin = NAN;
        r->note = "out of memory";
    } else {
        if (m->singular)
            r->note = "opening this port leaves the circuit without a DC solution (is it inside a feedback loop?)";
        r->zout = z_at(m, f);
        r->zin = z_at(m, t);
        if (!r->current_mode) {
            r->open = node_value(m, f);
            r->loaded = op->v[f];
        }
        ls_mod_free(&m);
    }
    if (r->current_mode) {
        r->loaded = r->current;
        ls_mod *s = ls_mod_new(op, pi, MOD_SHORT_PORT_TO_GROUND);
        r->open = s && !s->singular ? s->x[p->branch] : NAN;
        ls_mod_free(&s);
        r->ratio = ratio_of(r->zout, r->zin);
    } else {
        r->ratio = ratio_of(r->zin, r->zout);
    }
    r->sag = r->open - r->loaded;
    r->sag_rel = r->sag == 0 ? 0 : ratio_of(r->sag, r->open);
    if (isinf(r->sag_rel))
        r->sag_rel = NAN;
    judge(op, r);
}

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
