/* accuracy.c — extra-precise refinement and error bounds (see accuracy.h). */
#include "analysis/accuracy.h"
#include "base/pages.h"

#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* LAPACK's norm estimator (reverse communication), from the LAPACK that
 * LAPACKE and OpenBLAS bring; LAPACKE has no wrapper for it. */
void dlacn2_(int *n, double *v, double *x, int *isgn, double *est, int *kase, int *isave);

#define MAX_STEPS 8
#define CONVERGED 1e-15         /* relative correction: below double precision */
#define MAX_CONTRACTION 1e-2    /* error shrink per step beyond which bounds are not first order */
/* Rounding of a part's own value and stamp, in units of its contribution: the
 * value read from decimal text (1/2 ulp), 1/R (1/2 ulp), a product in the
 * stamp (1/2 ulp), with room to spare. */
#define DATA_ROUNDING (4 * DBL_EPSILON)
/* The transposed solves that weigh the residual are themselves rounded; to
 * first order they stay within this factor while cond * eps is small. */
#define SOLVE_SAFETY 2.0
/* A refinement step whose correction moved no unknown by more than this
 * fraction of it (a millionth of a unit of its last place) changed only the
 * tails: the bounds then start from that step's residual (ls_acc_bounds). */
#define MERGE_BELOW (1e-6 * DBL_EPSILON)

/* ---- double-double arithmetic ---------------------------------------------------------------- */

/* s + e = a + b exactly. */
static inline double two_sum(double a, double b, double *e)
{
    double s = a + b, bb = s - a;
    *e = (a - (s - bb)) + (b - bb);
    return s;
}

/* p + e = a * b exactly (fma rounds once). */
static inline double two_prod(double a, double b, double *e)
{
    double p = a * b;
    *e = fma(a, b, -p);
    return p;
}

/* (hi, lo) += (a, b), renormalized. */
static inline void dd_add(double *hi, double *lo, double a, double b)
{
    double e, s = two_sum(*hi, a, &e);
    e += *lo + b;
    *hi = s + e;
    *lo = e - (*hi - s);
}

/* ---- the residual, part by part ------------------------------------------------------------- */

#define PART_ROWS 32

struct ls_resid {
    const double *x, *tail;
    double *rhi, *rlo;        /* b - A (x + tail), double-double */
    double *absr;             /* per row: sum over parts of |that part's contribution| */
    int rows[PART_ROWS];      /* rows the current part touched */
    double phi[PART_ROWS], plo[PART_ROWS];   /* its net contribution to each */
    int nrows;
    bool spill;               /* more rows than PART_ROWS: absolute entries added directly */
};

/* The slot of `row` among the current part's rows, or -1 when full. */
static int part_slot(ls_resid *r, int row)
{
    for (int i = 0; i < r->nrows; i++)
        if (r->rows[i] == row)
            return i;
    if (r->nrows == PART_ROWS)
        return -1;
    r->rows[r->nrows] = row;
    r->phi[r->nrows] = r->plo[r->nrows] = 0;
    return r->nrows++;
}

void ls_resid_a(ls_resid *r, int row, int col, double v)
{
    double e, p = two_prod(v, r->x[col], &e);
    e += v * r->tail[col];
    dd_add(&r->rhi[row], &r->rlo[row], -p, -e);
    int k = part_slot(r, row);
    if (k >= 0)
        dd_add(&r->phi[k], &r->plo[k], p, e);
    else
        r->absr[row] += fabs(p);
}

void ls_resid_b(ls_resid *r, int row, double v)
{
    dd_add(&r->rhi[row], &r->rlo[row], v, 0);
    r->absr[row] += fabs(v);
}

void ls_acc_residual(const ls_mna *m, const double *x, const double *tail, double *r, double *absr, double *work)
{
    const ls_netlist *nl = m->nl;
    int n = m->n;
    ls_resid res = {.x = x, .tail = tail, .rhi = work, .rlo = work + n, .absr = absr};
    memset(work, 0, 2 * (size_t)n * sizeof *work);
    memset(absr, 0, (size_t)n * sizeof *absr);
    ls_sink sink = {.mode = SINK_RESIDUAL, .resid = &res, .scale = 1};
    for (int i = 0; i <= nl->nparts; i++) { /* every part, then the variant's ties */
        res.nrows = 0;
        if (i < nl->nparts)
            ls_mna_stamp_part(m, i, &sink);
        else
            ls_mna_stamp_ties(m, &sink);
        for (int k = 0; k < res.nrows; k++)
            absr[res.rows[k]] += fabs(res.phi[k] + res.plo[k]);
    }
    for (int i = 0; i < n; i++)
        r[i] = res.rhi[i] + res.rlo[i];
}

/* The residual of op's solution x + tail (ls_acc_residual). */
static void stamp_residual(ls_op *op, double *r, double *absr, double *work)
{
    ls_acc_residual(&op->mna, op->x, op->acc.tail, r, absr, work);
}

/* ---- refinement ---------------------------------------------------------------------------- */

/* The tail array of op, allocated and cleared.  NULL without memory. */
static double *fresh_tail(ls_op *op)
{
    size_t n = (size_t)(op->mna.n ? op->mna.n : 1);
    if (!op->acc.tail)
        op->acc.tail = malloc(n * sizeof *op->acc.tail);
    if (op->acc.tail)
        memset(op->acc.tail, 0, n * sizeof *op->acc.tail);
    return op->acc.tail;
}

/* Largest |x| among node voltages (kind 0) and branch currents (kind 1). */
static void kind_scales(const ls_op *op, double scale[2])
{
    scale[0] = scale[1] = 0;
    for (int i = 0; i < op->mna.n; i++) {
        int k = i >= op->mna.nn;
        scale[k] = fmax(scale[k], fabs(op->x[i]));
    }
}

/* Keep the residual just summed (r, absr) as the bounds would weigh it,
 * and the point it was taken at, into keep (3n doubles). */
static void keep_residual(const ls_op *op, const double *r, const double *absr, double *keep)
{
    int n = op->mna.n;
    for (int i = 0; i < n; i++)
        keep[i] = fabs(r[i]) + DATA_ROUNDING * absr[i];
    memcpy(keep + n, op->x, (size_t)n * sizeof *keep);
    memcpy(keep + 2 * (size_t)n, op->acc.tail, (size_t)n * sizeof *keep);
}

int ls_acc_refine(ls_op *op)
{
    int n = op->mna.n;
    op->acc.refined = op->acc.extended = false;
    op->acc.steps = 0;
    op->acc.have_bounds = false;
    ls_big_free(op->acc.last);
    op->acc.last = NULL;
    double *tail = fresh_tail(op);
    double *buf = ls_big_malloc(5 * (size_t)(n ? n : 1) * sizeof *buf);
    if (!tail || !buf) {
        ls_big_free(buf);
        return -1;
    }
    /* without memory for it the bounds pass over the parts once more */
    double *keep = ls_big_malloc(3 * (size_t)(n ? n : 1) * sizeof *keep);
    bool kept = false;
    double *r = buf, *absr = buf + n, *x0 = buf + 2 * (size_t)n, *work = buf + 3 * (size_t)n;
    memcpy(x0, op->x, (size_t)n * sizeof *x0);
    double scale[2];
    kind_scales(op, scale);
    /* Two measures of each correction d (as LAPACK's extra-precise refinement
     * keeps them): dz, componentwise, |d_i| / |x_i|, which says when every
     * unknown is right to double precision; dx, normwise, |d_i| against the
     * largest unknown of its kind, whose ratio from step to step estimates
     * cond * eps.  A zero unknown (the current of a port into an ideal input)
     * picks up rounding noise of the correction solve, some eps times the
     * other corrections, and loses it again at the next step: its dz then
     * stays put without saying anything about the conditioning.  So the
     * contraction and "did it converge" are normwise; dz only decides
     * whether another step can still help. */
    double prev_z = INFINITY, prev_x = INFINITY, last_x = INFINITY, contraction = 0;
    for (int step = 0; step < MAX_STEPS; step++) {
        stamp_residual(op, r, absr, work);
        if (keep)
            keep_residual(op, r, absr, keep);
        kept = false;
        if (ls_solver_solve(op->solver, r, 0) != LS_SOLVER_OK)
            break;
        double dz = 0, dx = 0;
        kept = keep != NULL;
        for (int i = 0; i < n; i++) {
            kept = kept && fabs(r[i]) <= MERGE_BELOW * fabs(op->x[i]);
            int k = i >= op->mna.nn;
            /* relative change; a value that is zero in double counts against
             * a tiny fraction of the largest of its kind */
            double size = fmax(fabs(op->x[i]), 1e-24 * scale[k]);
            if (r[i] != 0) {
                dz = fmax(dz, size > 0 ? fabs(r[i]) / size : INFINITY);
                dx = fmax(dx, scale[k] > 0 ? fabs(r[i]) / scale[k] : INFINITY);
            }
            dd_add(&op->x[i], &tail[i], r[i], 0);
        }
        if (prev_x > CONVERGED && dx > 0)
            contraction = fmax(contraction, dx / prev_x);
        last_x = dx;
        op->acc.steps++;
        /* done when every correction is below double precision (x + tail is
         * then right to about cond * eps times that); when the normwise
         * correction no longer halves (rounding has the last word); or when
         * only the componentwise one stalls after the normwise one converged
         * (noise on unknowns that are zero or nearly so) */
        if (dz <= CONVERGED || dx > 0.5 * prev_x || (dx <= CONVERGED && dz > 0.5 * prev_z))
            break;
        prev_z = dz;
        prev_x = dx;
    }
    for (int i = 0; i < n && !op->acc.extended; i++)
        op->acc.extended = fabs(op->x[i] - x0[i]) > 2 * DBL_EPSILON * fabs(x0[i]);
    /* Each step shrinks the error by about cond * eps: where that is not
     * small, or the steps never got below double precision, the system is
     * too ill-conditioned for first-order bounds (the rounding of the parts'
     * own values alone moves the answer by a good part of itself). */
    op->acc.reliable = last_x <= CONVERGED && contraction <= MAX_CONTRACTION;
    op->acc.refined = true;
    if (kept)
        op->acc.last = keep;
    else
        ls_big_free(keep);
    ls_big_free(buf);
    return 0;
}

/* v, or 0 when v is below the rounding of double-double sums of terms as
 * large as `size` (then it is the noise of a difference that is exactly
 * zero, a balanced bridge's detector current, not a result). */
static double below_rounding(double v, double size)
{
    return fabs(v) <= 0x1p-96 * size ? 0 : v;
}

double ls_acc_lin_eval(const ls_op *op, const ls_lin *l)
{
    const double *tail = op->acc.tail;
    if (!tail || !op->acc.refined)
        return ls_lin_eval(l, op->x);
    double hi = l->constant, lo = 0, size = fabs(l->constant);
    for (int i = 0; i < l->n; i++) {
        double e, p = two_prod(l->coef[i], op->x[l->idx[i]], &e);
        dd_add(&hi, &lo, p, e + l->coef[i] * tail[l->idx[i]]);
        size += fabs(p);
    }
    return below_rounding(hi + lo, size);
}

double ls_acc_drop(const ls_op *op, int a, int b)
{
    const double *tail = op->acc.tail;
    if (!tail || !op->acc.refined)
        return op->v[a] - op->v[b];
    double hi = op->v[a], lo = a > 0 ? tail[a - 1] : 0;
    dd_add(&hi, &lo, -op->v[b], b > 0 ? -tail[b - 1] : 0);
    return below_rounding(hi + lo, fabs(op->v[a]) + fabs(op->v[b]));
}

/* ---- bounds ------------------------------------------------------------------------------ */

/* A bound solve's failure: -1 when memory ran out, -2 when the solver could
 * not solve (an iterative solve that stopped short): no bound, not an error. */
static int bound_fail(int st)
{
    return st == LS_SOLVER_NOMEM ? -1 : -2;
}

/* |y|^T w, y = A^-T c (c given as a linear form), into *bound.  y: n doubles
 * of work.  0, or bound_fail's code when the solve fails. */
static int form_bound(ls_op *op, const ls_lin *l, const double *w, double *y, double *bound)
{
    int n = op->mna.n;
    memset(y, 0, (size_t)n * sizeof *y);
    for (int i = 0; i < l->n; i++)
        y[l->idx[i]] += l->coef[i];
    int st = ls_solver_solve(op->solver, y, 1);
    if (st != LS_SOLVER_OK)
        return bound_fail(st);
    double s = 0;
    for (int i = 0; i < n; i++)
        s += fabs(y[i]) * w[i];
    *bound = SOLVE_SAFETY * s;
    return 0;
}

/* max over node rows of (|A^-1| w), estimated by dlacn2 on
 * B = diag(w) A^-T D, D keeping node entries (||B||_1 = ||D A^-1 diag(w)||_inf).
 * v, x: n doubles; isgn: n ints.  0, or bound_fail's code when a solve fails. */
static int estimate_node_bound(ls_op *op, const double *w, double *v, double *x, int *isgn, double *est)
{
    int n = op->mna.n, nn = op->mna.nn, kase = 0, isave[3] = {0, 0, 0};
    *est = 0;
    if (n == 0)
        return 0;
    for (int guard = 0; guard < 20; guard++) {
        dlacn2_(&n, v, x, isgn, est, &kase, isave);
        if (kase == 0)
            return 0;
        if (kase == 1) { /* x <- B x */
            for (int i = nn; i < n; i++)
                x[i] = 0;
            int st = ls_solver_solve(op->solver, x, 1);
            if (st != LS_SOLVER_OK)
                return bound_fail(st);
            for (int i = 0; i < n; i++)
                x[i] *= w[i];
        } else { /* x <- B^T x */
            for (int i = 0; i < n; i++)
                x[i] *= w[i];
            int st = ls_solver_solve(op->solver, x, 0);
            if (st != LS_SOLVER_OK)
                return bound_fail(st);
            for (int i = nn; i < n; i++)
                x[i] = 0;
        }
    }
    return 0;
}

/* The sign of every column of A^-1 in its node rows, into s (n doubles), when
 * every part keeps them one-signed (ls_kind.monotone: positive resistances,
 * current sources, sources with one end on ground; the system an M-matrix
 * once the sources' rows are eliminated); false when some part does not, or
 * for a variant's system. */
static bool column_signs(const ls_op *op, double *s)
{
    const ls_netlist *nl = op->nl;
    if (op->mna.opened || op->mna.ties)
        return false;
    for (int i = 0; i < op->mna.n; i++)
        s[i] = 1;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        int sg = p->kind->monotone ? p->kind->monotone(p) : 0;
        if (sg == 0)
            return false;
        if (p->branch >= 0)
            s[p->branch] = sg;
    }
    return true;
}

/* y = A^-1 (s .* w): in the node rows, where every column of A^-1 has the
 * sign s gives it, that is (|A^-1| w), each node's exact bound before the
 * solve's own rounding, for the price of one solve.  0 done; 1 some node row
 * came out clearly negative (the signs do not hold: use the estimate);
 * bound_fail's code the solve failed.  y: n doubles. */
static int signed_node_bound(ls_op *op, const double *w, const double *s, double *y)
{
    int n = op->mna.n, nn = op->mna.nn;
    for (int i = 0; i < n; i++)
        y[i] = s[i] * w[i];
    int st = ls_solver_solve(op->solver, y, 0);
    if (st != LS_SOLVER_OK)
        return bound_fail(st);
    double top = 0;
    for (int i = 0; i < nn; i++)
        top = fmax(top, fabs(y[i]));
    for (int i = 0; i < nn; i++)
        if (y[i] < -1e-6 * top)
            return 1;
    return 0;
}

/* How far a value is from trustworthy: its bound against its own size, or,
 * for a zero, against a millionth of a millionth of the largest of its kind. */
static double untrust(double value, double bound, double scale)
{
    if (value != 0)
        return bound / fabs(value);
    return scale > 0 ? bound / scale : (bound > 0 ? INFINITY : 0);
}

/* The worst node and part by untrust(), into op->acc. */
static void name_worst(ls_op *op)
{
    const ls_netlist *nl = op->nl;
    double vmax = 0, imax = 0;
    for (int i = 0; i < nl->nnodes; i++)
        vmax = fmax(vmax, fabs(op->v[i]));
    for (int i = 0; i < nl->nparts; i++)
        if (!nl->parts[i].kind->is_port)
            imax = fmax(imax, fabs(op->ipart[i]));
    ls_accuracy *a = &op->acc;
    a->worst_node = a->worst_part = -1;
    a->worst_node_rel = a->worst_part_rel = 0;
    for (int i = 1; i < nl->nnodes; i++) {
        double u = untrust(op->v[i], a->node_bound[i], vmax);
        if (u > a->worst_node_rel) {
            a->worst_node_rel = u;
            a->worst_node = i;
        }
    }
    for (int i = 0; i < nl->nparts; i++) {
        double u = isnan(a->part_bound[i]) ? 0 : untrust(op->ipart[i], a->part_bound[i], imax);
        if (u > a->worst_part_rel) {
            a->worst_part_rel = u;
            a->worst_part = i;
        }
    }
}

/* Does part i have a current that is a linear form of the unknowns (and
 * not the results of its own function)?  Fills l. */
static bool part_form(const ls_op *op, int i, ls_lin *l)
{
    const ls_part *p = &op->nl->parts[i];
    if (p->kind->results || p->kind->is_port)
        return false;
    ls_part_current(p, &op->run, l, false);
    return !l->overflow;
}

/* For a solution that is kept as it is (a nonlinear circuit's last Newton
 * solve): run the extra-precise refinement on a copy to learn whether
 * first-order bounds hold (a->reliable), then put the solution back.  The
 * rcond estimates of the backends (KLU's is of the unscaled matrix) are no
 * guide.  0, or -1 when out of memory. */
static int trial_refine(ls_op *op)
{
    size_t n = (size_t)op->mna.n;
    double *keep = ls_big_malloc((n ? n : 1) * sizeof *keep);
    if (!keep)
        return -1;
    memcpy(keep, op->x, n * sizeof *keep);
    int r = ls_acc_refine(op);
    memcpy(op->x, keep, n * sizeof *keep);
    ls_big_free(keep);
    ls_big_free(op->acc.last); /* the copy's residual, not the kept solution's */
    op->acc.last = NULL;
    if (op->acc.tail)
        memset(op->acc.tail, 0, n * sizeof *op->acc.tail);
    op->acc.refined = op->acc.extended = false;
    op->acc.steps = 0;
    return r;
}

/* No bound holds (the refinement did not settle, or a bound's solve could
 * not be made): every value's digits are unconfirmed, shown as such. */
static void unbounded(ls_op *op)
{
    const ls_netlist *nl = op->nl;
    ls_accuracy *a = &op->acc;
    for (int i = 0; i < nl->nnodes; i++)
        a->node_bound[i] = i ? INFINITY : 0;
    for (int i = 0; i < nl->nparts; i++) {
        ls_lin l;
        a->part_bound[i] = part_form(op, i, &l) ? INFINITY : NAN;
    }
    a->have_bounds = true;
    name_worst(op);
}

/* How far each unknown of x + tail lies from (x0 + t0), rounded up, into
 * shift (n doubles): the differences of the two parts are exact (two_sum),
 * their sum is rounded three times at most. */
static void moved_since(const ls_op *op, const double *x0, const double *t0, double *shift)
{
    const double *tail = op->acc.tail;
    for (int i = 0; i < op->mna.n; i++) {
        double e, f, s = two_sum(op->x[i], -x0[i], &e), t = two_sum(tail[i], -t0[i], &f);
        shift[i] = (fabs(s + t) + fabs(e) + fabs(f)) * (1 + 4 * DBL_EPSILON);
    }
}

/* |c|^T shift for the linear form l (0 without a shift). */
static double form_shift(const ls_lin *l, const double *shift)
{
    double b = 0;
    for (int i = 0; shift && i < l->n; i++)
        b += fabs(l->coef[i]) * shift[l->idx[i]];
    return b * (1 + 2 * LS_LIN_MAX * DBL_EPSILON);
}

int ls_acc_bounds(ls_op *op)
{
    if (op->acc.have_bounds)
        return 0;
    const ls_netlist *nl = op->nl;
    int n = op->mna.n, nn = op->mna.nn;
    size_t m = (size_t)(n ? n : 1);
    ls_accuracy *a = &op->acc;
    if (!a->tail && !fresh_tail(op))
        return -1;
    if (!a->node_bound)
        a->node_bound = calloc((size_t)nl->nnodes, sizeof *a->node_bound);
    if (!a->part_bound)
        a->part_bound = calloc((size_t)(nl->nparts ? nl->nparts : 1), sizeof *a->part_bound);
    double *buf = ls_big_malloc(6 * m * sizeof *buf);
    int *isgn = ls_big_malloc(m * sizeof *isgn);
    if (!a->node_bound || !a->part_bound || !buf || !isgn) {
        ls_big_free(buf);
        ls_big_free(isgn);
        return -1;
    }
    if (!a->refined && trial_refine(op) != 0) {
        ls_big_free(buf);
        ls_big_free(isgn);
        return -1;
    }
    if (!a->reliable) {
        ls_big_free(buf);
        ls_big_free(isgn);
        ls_big_free(a->last);
        a->last = NULL;
        unbounded(op);
        return 0;
    }
    double *w = buf, *absr = buf + m, *y = buf + 2 * m, *work = buf + 3 * m;
    const double *shift = NULL; /* with a kept residual: how far each unknown moved since */
    a->merged = a->last != NULL && a->refined;
    if (a->merged) {
        memcpy(w, a->last, (size_t)n * sizeof *w);
        moved_since(op, a->last + n, a->last + 2 * m, absr);
        shift = absr;
    } else {
        stamp_residual(op, w, absr, work);
        for (int i = 0; i < n; i++)
            w[i] = fabs(w[i]) + DATA_ROUNDING * absr[i];
    }
    int bad = 0;
    bool large = n > LS_ACC_EXACT_LIMIT || nl->nparts > 4 * LS_ACC_EXACT_LIMIT;
    a->estimated = a->per_node = false;
    double est = 0;
    if (large) {
        /* a network of resistances and grounded sources: every node's bound
         * exactly, by one solve; else one estimate for all */
        int sr = column_signs(op, work) ? signed_node_bound(op, w, work, y) : 1;
        if (sr < 0)
            bad = sr;
        a->per_node = sr == 0;
        a->estimated = sr > 0;
        if (a->estimated)
            bad = estimate_node_bound(op, w, y, work, isgn, &est);
    }
    /* the bound of node unknown k, per node or estimated (large systems) */
#define NODE_RAW(k) (SOLVE_SAFETY * (a->per_node ? fmax(y[k], 0) : est) + (shift ? shift[k] : 0))
    a->node_bound[0] = 0;
    for (int i = 1; i < nl->nnodes && !bad; i++) {
        double b;
        if (large) {
            b = NODE_RAW(i - 1);
        } else {
            ls_lin l = {.n = 1, .idx = {i - 1}, .coef = {1}};
            bad = form_bound(op, &l, w, y, &b);
            b += form_shift(&l, shift);
        }
        a->node_bound[i] = b + DBL_EPSILON * fabs(op->v[i]);
    }
    for (int i = 0; i < nl->nparts && !bad; i++) {
        ls_lin l;
        a->part_bound[i] = NAN;
        if (!part_form(op, i, &l))
            continue;
        double b = 0;
        if (large) { /* from the node bounds, without the help of correlation */
            for (int k = 0; k < l.n; k++)
                b += fabs(l.coef[k]) * (l.idx[k] < nn ? NODE_RAW(l.idx[k]) : NAN);
            if (isnan(b))
                continue; /* a branch current: no per-unknown estimate */
        } else {
            bad = form_bound(op, &l, w, y, &b);
            b += form_shift(&l, shift);
        }
        a->part_bound[i] = b + DBL_EPSILON * fabs(op->ipart[i]);
    }
#undef NODE_RAW
    ls_big_free(a->last); /* used once: the bounds are kept */
    a->last = NULL;
    ls_big_free(buf);
    ls_big_free(isgn);
    if (bad == -1)
        return -1;
    if (bad) { /* a solve that stopped short: no bound, said as such */
        unbounded(op);
        return 0;
    }
    a->have_bounds = true;
    name_worst(op);
    return 0;
}

bool ls_acc_doubtful(double value, double bound, int digits, double scale)
{
    if (isnan(bound) || !isfinite(value))
        return false;
    if (isinf(bound))
        return true;
    if (value == 0)
        return bound > 1e-12 * scale;
    /* The last printed digit's unit is at least |value| 10^-digits (a tenth of
     * |value|'s leading digit's unit), so a bound below 0.45 of that (a margin
     * for the rounding of log10 and pow) cannot reach half of it: the answer
     * without the logarithm and the power, which a large report would pay
     * per number.  The common case by far: bounds near double precision. */
    static const double tenth_power[] = {1, 1e-1, 1e-2, 1e-3, 1e-4, 1e-5, 1e-6, 1e-7, 1e-8, 1e-9,
                                         1e-10, 1e-11, 1e-12, 1e-13, 1e-14, 1e-15, 1e-16, 1e-17};
    if (digits >= 1 && digits < (int)(sizeof tenth_power / sizeof *tenth_power) &&
        bound < 0.45 * tenth_power[digits] * fabs(value))
        return false;
    double unit = pow(10, floor(log10(fabs(value))) - (digits - 1));
    return bound > 0.5 * unit;
}

void ls_acc_free(ls_accuracy *a)
{
    ls_big_free(a->last);
    free(a->tail);
    free(a->node_bound);
    free(a->part_bound);
    memset(a, 0, sizeof *a);
}

/* ---- the warning -------------------------------------------------------------------------- */

/* Largest |value| of node voltages (kind 0) or part currents (kind 1). */
static double result_scale(const ls_op *op, int kind)
{
    const ls_netlist *nl = op->nl;
    double m = 0;
    if (kind == 0)
        for (int i = 0; i < nl->nnodes; i++)
            m = fmax(m, fabs(op->v[i]));
    else
        for (int i = 0; i < nl->nparts; i++)
            if (!nl->parts[i].kind->is_port)
                m = fmax(m, fabs(op->ipart[i]));
    return m;
}

double ls_acc_scale(const ls_op *op, int kind)
{
    return result_scale(op, kind);
}

/* Why part i's current may be wrong, in words, into buf. */
static void part_why(const ls_op *op, int i, char *buf, size_t n)
{
    const ls_part *p = &op->nl->parts[i];
    if (p->kind->vsign != VSIGN_OUT && p->kind->npins >= 2) {
        double va = op->v[p->pin[0]], vb = op->v[p->pin[1]];
        if (fabs(va - vb) < 1e-6 * fmax(fabs(va), fabs(vb))) {
            snprintf(buf, n, "it is set by the small difference of two nearly equal node voltages ('%s' and '%s')",
                     op->nl->nodes[p->pin[0]].name, op->nl->nodes[p->pin[1]].name);
            return;
        }
    }
    if (p->kind->is_resistance) {
        snprintf(buf, n,
                 "its small resistance (%.3g ohm) turns the last-digit uncertainty of the voltages at its ends into a "
                 "current uncertainty",
                 ls_run_value(&op->run, p));
        return;
    }
    snprintf(buf, n, "it is the small difference of larger currents at its nodes (reciprocal condition %.2g)",
             op->rcond);
}

void ls_acc_warn(ls_op *op, int digits)
{
    if (ls_acc_bounds(op) != 0)
        return;
    const ls_netlist *nl = op->nl;
    const ls_accuracy *a = &op->acc;
    double vs = result_scale(op, 0), is = result_scale(op, 1);
    int bad_nodes = 0, bad_parts = 0;
    for (int i = 1; i < nl->nnodes; i++)
        bad_nodes += ls_acc_doubtful(op->v[i], a->node_bound[i], digits, vs);
    for (int i = 0; i < nl->nparts; i++)
        bad_parts += ls_acc_doubtful(op->ipart[i], a->part_bound[i], digits, is);
    if (!bad_nodes && !bad_parts)
        return;
    if (!a->reliable) {
        char spread[400] = "";
        ls_widest_spread(nl, spread, sizeof spread);
        ls_warning(nl->diags, LS_NOLOC, "untrusted-digits",
                   "no printed voltage or current can be trusted (all marked ~): the equations are too "
                   "ill-conditioned for double precision (reciprocal condition %.2g), so the rounding of the "
                   "parts' own values moves the answer by a good part of itself%s",
                   op->rcond, spread);
        return;
    }
    char why[400];
    const char *what;
    char name[300];
    double value, bound;
    /* name the worse of the worst node and the worst part */
    if (bad_parts && (!bad_nodes || a->worst_part_rel >= a->worst_node_rel)) {
        int i = a->worst_part;
        snprintf(name, sizeof name, "the current of %s '%s'", nl->parts[i].kind->name, nl->parts[i].name);
        value = op->ipart[i];
        bound = a->part_bound[i];
        part_why(op, i, why, sizeof why);
        what = "A";
    } else {
        int i = a->worst_node;
        snprintf(name, sizeof name, "the voltage of node '%s'", nl->nodes[i].name);
        value = op->v[i];
        bound = a->node_bound[i];
        snprintf(why, sizeof why, "the equations are ill-conditioned (reciprocal condition %.2g)", op->rcond);
        what = "V";
    }
    ls_warning(nl->diags, LS_NOLOC, "untrusted-digits",
               "%d result%s may be wrong in the digits printed (marked ~); the worst is %s, %.4g %s with an error "
               "bound of %.2g %s, because %s",
               bad_nodes + bad_parts, bad_nodes + bad_parts == 1 ? "" : "s", name, value, what, bound, what, why);
}
