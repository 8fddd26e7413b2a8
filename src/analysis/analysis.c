/* analysis.c — operating point: assemble, check the topology, factor, solve with
 * iterative refinement, derive part results; quantities and checks. */
#include "analysis/analysis.h"
#include "solve/memprobe.h"
#include "analysis/selfcheck.h"
#include "elab/elab.h"
#include "analysis/newton.h"
#include "solve/selinv.h"
#include "analysis/quantity.h"

#include <assert.h>
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#ifdef LS_HAVE_SPARSE
#include "solve/sparse.h"
#endif
#include "solve/amg.h"

/* The automatic choice between dense LU and the sparse backends, by estimated
 * work (tests/bench/sparse_pick_bench dense; docs/performance.md, "Dense or
 * sparse"): dense LU up to AUTO_DENSE_SMALL unknowns (either takes well under
 * a millisecond there); from there to AUTO_DENSE_MAX only when its (2/3) n^3
 * flops are under AUTO_DENSE_FLOP_RATIO times the sparse LU's estimate.  The
 * dense LU runs blocked BLAS-3, 10-20x the flop rate of KLU's left-looking
 * kernel on these sizes: measured crossover at a ratio of 8-18.  Circuits
 * (ladders, channels, meshes) have ratios in the hundreds to thousands and go
 * sparse; only nearly full matrices stay dense.  Above AUTO_DENSE_MAX always
 * sparse (the dense LU's 8 n^2 bytes). */
#define AUTO_DENSE_SMALL 100
#define AUTO_DENSE_MAX 4000
#define AUTO_DENSE_FLOP_RATIO 12.0
#define RCOND_WARN 1e-11
#define RESIDUAL_WARN 1e-9


/* r = b - op(A) x; returns the normwise relative residual
 * ||r|| / (||A|| ||x|| + ||b||), with ||A|| taken as amax (the largest |a_ij|),
 * and, in *berr, the componentwise backward error
 * max_i |r_i| / (|A| |x| + |b|)_i that decides whether refinement can help.
 * absax gets (|op(A)| |x|)_i. */
static double residuals(const ls_csc *a, double amax, const double *x, const double *b, double *r, double *absax,
                        int transpose, double *berr)
{
    int n = a->n;
    double rn = 0, xn = 0, bn = 0, be = 0;
    if (!transpose) {
        memset(r, 0, (size_t)n * sizeof *r);
        memset(absax, 0, (size_t)n * sizeof *absax);
        for (int j = 0; j < n; j++) {
            double xj = x[j];
            for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++) {
                int i = a->rowind[p];
                double t = a->val[p] * xj;
                r[i] += t;
                absax[i] += fabs(t);
            }
        }
    } else {
        for (int j = 0; j < n; j++) {
            double s = 0, sa = 0;
            for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++) {
                double t = a->val[p] * x[a->rowind[p]];
                s += t;
                sa += fabs(t);
            }
            r[j] = s;
            absax[j] = sa;
        }
    }
    for (int i = 0; i < n; i++) {
        r[i] = b[i] - r[i];
        rn = ls_max_acc(rn, fabs(r[i]));
        xn = ls_max_acc(xn, fabs(x[i]));
        bn = ls_max_acc(bn, fabs(b[i]));
        double den = absax[i] + fabs(b[i]);
        if (den > 0)
            be = ls_max_acc(be, fabs(r[i]) / den);
        else if (r[i] != 0)
            be = INFINITY;
    }
    *berr = be;
    double den = amax * xn + bn;
    return den > 0 ? rn / den : rn;
}

/* The refinement workspace of op for its order: rhs, r and |A||x|, n doubles
 * each, allocated once (an operating-point solve touches only the last two).
 * NULL without memory. */
static double *refine_work(ls_op *op)
{
    size_t n = (size_t)(op->mna.n ? op->mna.n : 1);
    if (op->work && op->work_n == n)
        return op->work;
    free(op->work);
    op->work = malloc(3 * n * sizeof *op->work);
    op->work_n = op->work ? n : 0;
    return op->work;
}

/* x holds b on entry and the solution on return; rhs is b, left unchanged (and
 * not x).  Solve with the factorization, then refine against the exact matrix
 * until the componentwise backward error stops improving (at most 4
 * corrections). */
static int refined_solve(ls_op *op, const double *rhs, double *x, int transpose, double *residual_out, int *iters)
{
    const ls_csc *a = &op->mna.a;
    int n = a->n;
    double *work = refine_work(op);
    if (!work)
        return LS_SOLVER_NOMEM;
    size_t m = op->work_n;
    double *r = work + m, *w = work + 2 * m;
    int st = ls_solver_solve(op->solver, x, transpose);
    double res = INFINITY, berr_prev = INFINITY;
    int k = 0;
    while (st == LS_SOLVER_OK) {
        double berr;
        res = residuals(a, op->mna.amax, x, rhs, r, w, transpose, &berr);
        if (berr <= 2 * DBL_EPSILON || k == 4 || !(berr < 0.5 * berr_prev))
            break;
        berr_prev = berr;
        st = ls_solver_solve(op->solver, r, transpose);
        for (int i = 0; i < n && st == LS_SOLVER_OK; i++)
            x[i] += r[i];
        k++;
    }
    if (residual_out)
        *residual_out = res;
    if (iters)
        *iters = k;
    return st;
}

int ls_op_solve_vec(ls_op *op, double *b, int transpose)
{
    double *work = refine_work(op);
    if (!work)
        return LS_SOLVER_NOMEM;
    memcpy(work, b, (size_t)op->mna.n * sizeof *work);
    return refined_solve(op, work, b, transpose, NULL, NULL);
}

void ls_widest_spread(const ls_netlist *nl, char *buf, size_t n)
{
    int lo = -1, hi = -1;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (!p->kind->is_resistance)
            continue;
        if (lo < 0 || p->value < nl->parts[lo].value)
            lo = i;
        if (hi < 0 || p->value > nl->parts[hi].value)
            hi = i;
    }
    if (lo >= 0 && hi != lo)
        snprintf(buf, n, "; the widest spread of values is %s '%s' (%.4g ohm) against '%s' (%.4g ohm)",
                 nl->parts[lo].kind->name, nl->parts[lo].name, nl->parts[lo].value, nl->parts[hi].name,
                 nl->parts[hi].value);
    else
        buf[0] = 0;
}

void ls_op_report_singular(ls_op *op, int col)
{
    const ls_netlist *nl = op->nl;
    char what[300];
    ls_unknown_desc(&op->mna, col, what, sizeof what);
    ls_loc at = LS_NOLOC;
    const char *hint = "";
    if (col >= 0 && col < op->mna.nn) {
        at = nl->nodes[col + 1].loc;
        hint = " (is its voltage set by anything? an ideal op-amp sets its inputs equal only with negative feedback)";
    } else if (col >= op->mna.nn && col < op->mna.n) {
        const ls_part *p = &nl->parts[op->mna.branch_part[col - op->mna.nn]];
        at = p->loc;
        if (p->kind->is_opamp)
            hint = " (an ideal op-amp needs negative feedback, a path from out back to minus)";
        else
            hint = " (controlled sources whose gains cancel, or a source whose current nothing limits)";
    }
    if (op->rcond > 0 && isfinite(op->rcond)) {
        /* no zero pivot, but too small a one for double precision to carry
         * (tiny resistances in a cluster tied to the rest by huge ones) */
        char spread[400];
        ls_widest_spread(nl, spread, sizeof spread);
        ls_error(nl->diags, at,
                 "the circuit cannot be solved in double precision: the equations are numerically singular at %s "
                 "(reciprocal condition %.2g)%s",
                 what, op->rcond, spread);
        return;
    }
    /* an exact zero pivot can also come from rounding when the values span
     * too wide a range for double precision: say so where they do */
    double lo = INFINITY, hi = 0;
    for (int i = 0; i < nl->nparts; i++)
        if (nl->parts[i].kind->is_resistance) {
            lo = fmin(lo, ls_run_value(&op->run, &nl->parts[i]));
            hi = fmax(hi, ls_run_value(&op->run, &nl->parts[i]));
        }
    if (hi / lo >= 1e12) {
        char spread[400];
        ls_widest_spread(nl, spread, sizeof spread);
        ls_error(nl->diags, at,
                 "the circuit cannot be solved: the equations are singular at %s%s, or numerically singular in "
                 "double precision%s",
                 what, hint, spread);
        return;
    }
    ls_error(nl->diags, at, "the circuit cannot be solved: the equations are singular at %s%s", what, hint);
}

/* Does the dense LU pay for this automatic choice (see AUTO_DENSE_SMALL)? */
static bool dense_pays(const ls_csc *a)
{
    if (a->n <= AUTO_DENSE_SMALL)
        return true;
    if (a->n > AUTO_DENSE_MAX)
        return false;
#ifdef LS_HAVE_SPARSE
    double sparse_flops = ls_sparse_lu_flops(a);
    double dense_flops = 2.0 / 3.0 * a->n * (double)a->n * a->n;
    if (sparse_flops < 0) /* AMD out of memory: the size rule of old */
        return a->n <= 1500;
    return dense_flops < AUTO_DENSE_FLOP_RATIO * sparse_flops;
#else
    return true;
#endif
}

static const ls_backend *pick_backend(ls_op *op, ls_method *m)
{
    bool dense = op->opt.solver == LS_CHOOSE_DENSE || (op->opt.solver == LS_CHOOSE_AUTO && dense_pays(&op->mna.a));
#ifdef LS_HAVE_AMG
    if (op->opt.solver == LS_CHOOSE_ITERATIVE || (op->opt.solver == LS_CHOOSE_AUTO && ls_amg_preferred(&op->mna.a, op->mna.nn))) {
        *m = LS_METHOD_ITERATIVE_AMG;
        return &ls_backend_amg;
    }
#endif
#ifdef LS_HAVE_SPARSE
    if (!dense)
        return ls_sparse_pick(&op->mna.a, m);
#else
    (void)dense;
#endif
    *m = LS_METHOD_DENSE_LU;
    return &ls_backend_dense;
}

/* Report why the iterative backend could not take the system, when the user
 * asked for it (--solver iterative); an automatic pick falls back to LU.
 * Returns true when an error was reported. */
static bool iterative_failed(ls_op *op, int st)
{
    const ls_netlist *nl = op->nl;
    const ls_solver_stats *ss = ls_solver_stats_of(op->solver);
    if (st == LS_SOLVER_NOT_CONVERGED) {
        ls_error(nl->diags, LS_NOLOC,
                 "the iterative solver did not converge: the true relative residual stayed at %.2g, above %.0e "
                 "(use --solver sparse)", ss->cg_residual, LS_AMG_RTOL);
        return true;
    }
    if (st == LS_SOLVER_NOMEM) {
        ls_error(nl->diags, LS_NOLOC,
                 "out of memory setting up the iterative solver (%s) for %d unknowns with %d nonzeros: it "
                 "would take about %.1f MB in each process", ss->library, op->mna.n, ls_csc_nnz(&op->mna.a),
                 ss->bytes_needed / 1e6);
        op->nomem = true;
        return true;
    }
    if (op->opt.solver != LS_CHOOSE_ITERATIVE || st != LS_SOLVER_NOT_SPD)
        return false;
    char what[300];
    ls_unknown_desc(&op->mna, ss->bad_column, what, sizeof what);
    ls_error(nl->diags, LS_NOLOC,
             "--solver iterative needs a symmetric positive definite network of resistances between the nodes "
             "(resistors, diodes, current sources; voltage sources, ports and op-amps are taken apart), and at %s it "
             "is not (a controlled source or op-amp input between nodes, or a negative resistance): use --solver "
             "sparse", what);
    return true;
}

/* A factorization that failed for its size (out of memory, or past the
 * dense solver's limit): says so in terms of the system, which is what the
 * user can act on, sets op->nomem for a shortage, and returns true; false for
 * any other status. */
static bool size_failure(ls_op *op, int st, ls_method m, const ls_solver_stats *ss)
{
    const ls_netlist *nl = op->nl;
    if (st == LS_SOLVER_NOMEM && m != LS_METHOD_DENSE_LU) {
        /* the sparse libraries do not say what they asked for: the size
         * of the system is what the user can act on */
        ls_error(nl->diags, LS_NOLOC,
                 "out of memory in the sparse factorization (%s) of %d unknowns with %d nonzeros (the matrix "
                 "alone takes %.1f MB)",
                 ss->library, op->mna.n, ls_csc_nnz(&op->mna.a),
                 (double)ls_csc_nnz(&op->mna.a) * (sizeof(double) + sizeof(int)) / 1e6);
        op->nomem = true;
        return true;
    }
    if (st == LS_SOLVER_TOO_LARGE || st == LS_SOLVER_NOMEM) {
        ls_error(nl->diags, LS_NOLOC,
                 "the system has %d unknowns; the dense solver would need %.1f MB%s", op->mna.n,
                 ss->bytes_needed / 1e6,
                 st == LS_SOLVER_TOO_LARGE ? " and takes at most " "8000 unknowns: use --solver sparse"
                                           : ", more memory than is available");
        op->nomem = st == LS_SOLVER_NOMEM;
        return true;
    }
    return false;
}

/* The outcome of a solve that failed after saying why: out of memory when
 * op->nomem says so (then no property of the circuit), else unsolvable. */
static ls_outcome failed(const ls_op *op)
{
    return op->nomem ? LS_NO_MEMORY : LS_UNSOLVABLE;
}

static ls_outcome factor(ls_op *op)
{
    const ls_netlist *nl = op->nl;
    ls_method m;
    const ls_backend *be = pick_backend(op, &m);
    for (int attempt = 0; attempt < 2; attempt++) {
        op->solver = ls_solver_new(be, m);
        if (!op->solver) {
            ls_error(nl->diags, LS_NOLOC, "out of memory creating the solver");
            op->nomem = true;
            return LS_NO_MEMORY;
        }
        ls_solver_set_nodes(op->solver, op->mna.nn);
        int st = ls_solver_analyze_factor(op->solver, &op->mna.a);
        const ls_solver_stats *ss = ls_solver_stats_of(op->solver);
        op->method = ss->method; /* m, or the dense backend's own pick of LU or Cholesky */
        op->rcond = ss->rcond;
        if (st == LS_SOLVER_OK)
            return LS_DONE;
        if (m == LS_METHOD_ITERATIVE_AMG && iterative_failed(op, st))
            return failed(op);
#ifdef LS_HAVE_SPARSE
        if (st == LS_SOLVER_NOT_SPD && attempt == 0) {
            ls_solver_free(&op->solver);
            be = &ls_backend_klu;
            m = LS_METHOD_SPARSE_LU;
            continue;
        }
#endif
        if (size_failure(op, st, m, ss))
            return failed(op);
        if (st == LS_SOLVER_SINGULAR && ls_newton_open_loop(op, ss->bad_column)) {
            /* a comparator: held at a rail, the system may be regular */
            ls_solver_free(&op->solver);
            if (ls_mna_restamp(&op->mna) != 0) {
                ls_error(nl->diags, LS_NOLOC, "out of memory assembling %d unknowns", op->mna.n);
                op->nomem = true;
                return LS_NO_MEMORY;
            }
            attempt--;
            continue;
        }
        if (st == LS_SOLVER_SINGULAR) {
            ls_op_report_singular(op, ss->bad_column);
            return failed(op);
        }
        ls_error(nl->diags, LS_NOLOC, "the linear solver (%s) failed", ss->library);
        return failed(op);
    }
    return failed(op);
}

/* Unknowns smaller than this fraction of the largest of their kind (node
 * voltages, branch currents) are rounding noise of the solve, not results:
 * they are set to zero rather than printed as if they meant something. */
#define NOISE_FLOOR 1e-14

static void chop_noise(ls_op *op)
{
    int nn = op->mna.nn, n = op->mna.n;
    double vmax = 0, imax = 0;
    for (int i = 0; i < nn; i++)
        vmax = fmax(vmax, fabs(op->x[i]));
    for (int i = nn; i < n; i++)
        imax = fmax(imax, fabs(op->x[i]));
    for (int i = 0; i < n; i++)
        if (fabs(op->x[i]) < NOISE_FLOOR * (i < nn ? vmax : imax)) {
            op->x[i] = 0;
            if (op->acc.tail)
                op->acc.tail[i] = 0;
        }
}

/* Extra-precise refinement for a linear circuit (accuracy.c), except in a
 * study's trial (ls_options.trial): x is then the double solve's.  A circuit
 * with diodes, thermistors or limited op-amps keeps its last Newton solve: its
 * stamps describe the next linearization, not the system just solved, and
 * the bounds say what that leaves.  Bounds are recomputed on demand.  0, or
 * -1 when out of memory. */
static int polish(ls_op *op)
{
    op->acc.have_bounds = false;
    op->acc.refined = false;
    if (op->opt.trial || ls_newton_needed(op->nl))
        return 0;
    return ls_acc_refine(op);
}

static void part_results(ls_op *op)
{
    const ls_netlist *nl = op->nl;
    chop_noise(op);
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (p->kind->results) {
            double r[3];
            p->kind->results(p, &op->run, op->x, op->v, r);
            op->ipart[i] = r[0];
            op->vpart[i] = r[1];
            op->ppart[i] = r[2];
            continue;
        }
        ls_lin l;
        ls_part_current(p, &op->run, &l, false);
        /* from x + tail: a current through a small resistance between two
         * nearly equal node voltages cancels in double-double, not in double */
        double cur = ls_acc_lin_eval(op, &l);
        double vv, drop;
        if (p->kind->vsign == VSIGN_OUT) {
            vv = op->v[p->pin[2]];
            drop = -vv;
        } else {
            drop = ls_acc_drop(op, p->pin[0], p->pin[1]);
            vv = p->kind->vsign == VSIGN_RISE ? -drop : drop;
        }
        op->ipart[i] = cur;
        op->vpart[i] = vv;
        op->ppart[i] = drop * cur;
        if (p->kind->pin_power)
            op->ppart[i] += p->kind->pin_power(p, &op->run, op->v, cur);
    }
}

/* The unknowns and node voltages are one array: v[0] = 0 (ground), then x,
 * whose first nnodes - 1 entries are the node voltages, so v[i] = x[i - 1]
 * holds without a copy.  Freed through v. */
static int alloc_results(ls_op *op)
{
    const ls_netlist *nl = op->nl;
    size_t n = (size_t)op->mna.n, np = (size_t)(nl->nparts ? nl->nparts : 1);
    op->v = calloc(n + 1, sizeof *op->v);
    op->x = op->v ? op->v + 1 : NULL;
    op->ipart = calloc(np, sizeof *op->ipart);
    op->vpart = calloc(np, sizeof *op->vpart);
    op->ppart = calloc(np, sizeof *op->ppart);
    op->port = calloc(np, sizeof *op->port);
    return op->x && op->v && op->ipart && op->vpart && op->ppart && op->port ? 0 : -1;
}

int ls_op_step(ls_op *op)
{
    if (ls_mna_restamp(&op->mna) != 0)
        return LS_SOLVER_NOMEM;
    int st = ls_solver_factor(op->solver, &op->mna.a);
#ifdef LS_HAVE_SPARSE
    if (st == LS_SOLVER_NOT_SPD) {
        /* a limit or a linearization point broke the symmetry the first
         * assembly had: go on with sparse LU */
        ls_solver_free(&op->solver);
        op->solver = ls_solver_new(&ls_backend_klu, LS_METHOD_SPARSE_LU);
        if (!op->solver)
            return LS_SOLVER_NOMEM;
        op->method = LS_METHOD_SPARSE_LU;
        st = ls_solver_analyze_factor(op->solver, &op->mna.a);
    }
#endif
    op->method = ls_solver_stats_of(op->solver)->method;
    op->rcond = ls_solver_stats_of(op->solver)->rcond;
    if (st != LS_SOLVER_OK)
        return st;
    memcpy(op->x, op->mna.b, (size_t)op->mna.n * sizeof *op->x);
    st = refined_solve(op, op->mna.b, op->x, 0, &op->residual, &op->refinements);
    op->iterations++;
    return st;
}

/* A solve or re-solve that failed in the linear algebra with status st
 * (LS_SOLVER_*) while `doing` ("solving", "refining the solution"): the error
 * in the diagnostics; out of memory also sets op->nomem, so that a caller
 * does not take it for a circuit without a solution.  Returns LS_UNSOLVABLE,
 * or LS_NO_MEMORY. */
static ls_outcome solve_failed(ls_op *op, int st, const char *doing)
{
    if (st != LS_SOLVER_NOMEM && iterative_failed(op, st)) /* the iterative solver's own reasons */
        return failed(op);
    if (st == LS_SOLVER_NOMEM) {
        op->nomem = true;
        ls_error(op->nl->diags, LS_NOLOC, "out of memory %s (%d unknowns)", doing, op->mna.n);
    } else {
        ls_error(op->nl->diags, LS_NOLOC, "the linear solver failed while %s", doing);
    }
    return failed(op);
}

/* Tell the caller's phase hook, if any, that phase `what` starts. */
static void phase(const ls_op *op, const char *what)
{
    if (op->opt.phase)
        op->opt.phase(op->opt.phase_ctx, what);
}

/* The conductance (S) that pins a floating node in the modified systems:
 * the mean positive diagonal of the node block, on the scale of the
 * circuit's own, so the update stays well conditioned. */
static double pin_conductance(const ls_op *op)
{
    double dsum = 0;
    int dn = 0;
    for (int j = 0; j < op->mna.nn; j++)
        for (int p = op->mna.a.colptr[j]; p < op->mna.a.colptr[j + 1] && op->mna.a.rowind[p] <= j; p++)
            if (op->mna.a.rowind[p] == j && op->mna.a.val[p] > 0) { /* rows are sorted: stop at the diagonal */
                dsum += op->mna.a.val[p];
                dn++;
            }
    return dn ? dsum / dn : 1;
}

/* The warnings of a solve whose digits may be few: an ill-conditioned
 * system (with the widest spread of values), a large residual. */
static void conditioning_warnings(ls_op *op)
{
    const ls_netlist *nl = op->nl;
    if (op->rcond < RCOND_WARN) {
        char spread[400];
        ls_widest_spread(nl, spread, sizeof spread);
        ls_warning(nl->diags, LS_NOLOC, "ill-conditioned",
                   "the system is ill-conditioned (reciprocal condition %.2g): results may carry few correct digits%s",
                   op->rcond, spread);
    }
    if (!(op->residual <= RESIDUAL_WARN))
        ls_warning(nl->diags, LS_NOLOC, "inaccurate",
                   "the solution's relative residual is %.2g: treat the results as approximate", op->residual);
}

/* What comes before a solve's assembly: its run (the start's states and
 * values when given), the topology checks (not for a variant: its circuit
 * passed them once), the BLAS work buffers.  LS_DONE, or the outcome after
 * reporting why. */
static ls_outcome prepare(ls_op *op, const ls_netlist *nl, const ls_options *o, bool variant)
{
    if (ls_run_init(&op->run, nl) != 0 || (o->start && ls_run_copy(&op->run, o->start) != 0)) {
        ls_error(nl->diags, LS_NOLOC, "out of memory setting up the solve of %d parts", nl->nparts);
        op->nomem = true;
        return LS_NO_MEMORY;
    }
    /* a variant's circuit has passed the checks once already */
    if (!variant)
        phase(op, "checking the topology");
    if (!variant && ls_topology_check(nl))
        return failed(op);
    if (!ls_blas_buffer_fits()) { /* else OpenBLAS would wait for it forever (memprobe.h) */
        ls_error(nl->diags, LS_NOLOC, "out of memory before the solve: the linear algebra library needs work "
                 "buffers of %.1f MB that the process cannot get", 2.0 * (double)LS_BLAS_BUFFER_BYTES / 1e6);
        op->nomem = true;
        return LS_NO_MEMORY;
    }
    return LS_DONE;
}

ls_outcome ls_op_solve(ls_op *op, const ls_netlist *nl, const ls_options *o)
{
    memset(op, 0, sizeof *op);
    op->nl = nl;
    op->opt = *o;
    bool variant = o->opened || o->ties;
    ls_outcome out = prepare(op, nl, o, variant);
    if (out != LS_DONE)
        return out;
    if (!o->keep_states || !o->start)
        ls_newton_init(&op->run);
    phase(op, "assembling the equations");
    if (ls_mna_build_variant(&op->mna, nl, &op->run, o->opened, o->ties) != 0 || alloc_results(op) != 0) {
        ls_error(nl->diags, LS_NOLOC, "out of memory assembling %d unknowns", op->mna.n);
        op->nomem = true;
        return LS_NO_MEMORY;
    }
    phase(op, "factoring");
    out = factor(op);
    if (out != LS_DONE)
        return out;
    phase(op, "solving");
    memcpy(op->x, op->mna.b, (size_t)op->mna.n * sizeof *op->x);
    int st = refined_solve(op, op->mna.b, op->x, 0, &op->residual, &op->refinements);
    if (st != LS_SOLVER_OK)
        return solve_failed(op, st, "solving");
    op->iterations = 1;
    op->cg_iterations = ls_solver_stats_of(op->solver)->cg_iterations;
    op->cg_residual = ls_solver_stats_of(op->solver)->cg_residual;
    if (!o->linear_only && ls_newton_needed(nl)) {
        phase(op, "iterating the nonlinear parts");
        if ((out = ls_newton_solve(op)) != LS_DONE)
            return out;
    }
    phase(op, "refining in extra precision");
    if (polish(op) != 0)
        return solve_failed(op, LS_SOLVER_NOMEM, "refining the solution");
    phase(op, "part currents");
    part_results(op);
    /* (sag's variants with ports opened or tied are left out: not yet
     * checked, see docs/limits.md) */
    if (!variant && ls_selfcheck_on() && ls_selfcheck(op) != 0)
        return failed(op);
    op->g_pin = pin_conductance(op);
    conditioning_warnings(op);
    if (!o->no_bounds) {
        phase(op, "error bounds");
        ls_acc_warn(op, 4); /* the report's default digits; the report marks against its own */
    }
    ls_real_warnings(op);
    return LS_DONE;
}

ls_outcome ls_op_resolve(ls_op *op)
{
    const ls_netlist *nl = op->nl;
    op->nomem = false;
    if (ls_mna_restamp(&op->mna) != 0)
        return solve_failed(op, LS_SOLVER_NOMEM, "assembling the system");
    int st = ls_solver_factor(op->solver, &op->mna.a);
    const ls_solver_stats *ss = ls_solver_stats_of(op->solver);
    op->method = ss->method;
    op->rcond = ss->rcond;
    if (st == LS_SOLVER_SINGULAR) {
        ls_op_report_singular(op, ss->bad_column);
        return failed(op);
    }
    if (st != LS_SOLVER_OK)
        return solve_failed(op, st, "factoring");
    memcpy(op->x, op->mna.b, (size_t)op->mna.n * sizeof *op->x);
    if ((st = refined_solve(op, op->mna.b, op->x, 0, &op->residual, &op->refinements)) != LS_SOLVER_OK)
        return solve_failed(op, st, "solving");
    op->iterations = 1;
    /* the run often starts settled (a candidate or trial near its base): then
     * the iteration would refactor the same system twice more */
    if (ls_newton_needed(nl) && !ls_newton_settled(op)) {
        ls_outcome out = ls_newton_solve(op);
        if (out != LS_DONE)
            return out;
    }
    if (polish(op) != 0)
        return solve_failed(op, LS_SOLVER_NOMEM, "refining the solution");
    part_results(op);
    if (ls_selfcheck_on() && ls_selfcheck(op) != 0)
        return failed(op);
    for (int i = 0; i < nl->nparts; i++)
        op->port[i].done = false;
    /* The DC graph's bridges (lowrank.c, dc_bridges) are kept: every kind's
     * edges read the part as elaborated (a switch's written state, never a
     * run's), so they are a function of op->nl alone, which a re-solve keeps;
     * a fit's candidates and a tol's trials need not list them again. */
    op->anorm = 0; /* the values (and an adc's range) may have changed */
    free(op->adc_at);
    op->adc_at = NULL;
    ls_selinv_free(&op->selinv);
    op->selinv_state = 0;
    return LS_DONE;
}

void ls_op_free(ls_op *op)
{
    ls_solver_free(&op->solver);
    ls_mna_free(&op->mna);
    ls_run_free(&op->run);
    free(op->v); /* x lives in the same array */
    free(op->work);
    free(op->base_work);
    free(op->ipart);
    free(op->vpart);
    free(op->ppart);
    free(op->port);
    free(op->tin);
    free(op->tout);
    free(op->low);
    free(op->bridge_part);
    free(op->bridge_child);
    free(op->order);
    free(op->adc_at);
    ls_selinv_free(&op->selinv);
    ls_acc_free(&op->acc);
    memset(op, 0, sizeof *op);
}

double ls_op_min_ratio(const ls_op *op)
{
    if (op->opt.min_ratio > 0)
        return op->opt.min_ratio;
    return op->nl->min_ratio > 0 ? op->nl->min_ratio : 10;
}

/* ---- quantities ----------------------------------------------------------------------- */

/* An adc's or a thermistor's property (NaN when part is neither). */
static double real_prop(ls_op *op, int part, ls_prop prop)
{
    const ls_part *p = &op->nl->parts[part];
    ls_adc_result a;
    if (prop == PROP_RESISTANCE || prop == PROP_TEMPERATURE) {
        double t = ls_ntc_body(p, &op->run);
        return prop == PROP_TEMPERATURE ? t : ls_ntc_r(p, &op->run, t);
    }
    if (ls_op_adc(op, part, &a) != 0)
        return NAN;
    switch (prop) {
    case PROP_CODE: return (double)a.code;
    case PROP_ERROR_LSB: return a.error_lsb;
    case PROP_UNLOADED: return a.v_open;
    case PROP_SOURCE: return a.rth;
    default: return NAN;
    }
}

/* (analysis.h) */
double ls_port_value(const ls_port_result *pr, ls_prop f)
{
    switch (f) {
    case PROP_OPEN: return pr->open;
    case PROP_LOADED: return pr->loaded;
    case PROP_SAG: return pr->sag;
    case PROP_SAG_REL: return pr->sag_rel;
    case PROP_ZOUT: return pr->zout;
    case PROP_ZIN: return pr->zin;
    case PROP_RATIO: return pr->ratio;
    case PROP_CURRENT: return pr->current;
    case PROP_BUDGET: return pr->budget;
    default: return NAN;
    }
}

static double prop_value(ls_op *op, int part, ls_prop prop)
{
    const ls_port_result *pr;
    switch (prop) {
    case PROP_CURRENT: return op->ipart[part];
    case PROP_VOLTAGE: return op->vpart[part];
    case PROP_POWER: return op->ppart[part];
    case PROP_VALUE: return ls_run_value(&op->run, &op->nl->parts[part]);
    case PROP_CODE: case PROP_ERROR_LSB: case PROP_UNLOADED: case PROP_SOURCE:
    case PROP_RESISTANCE: case PROP_TEMPERATURE: return real_prop(op, part, prop);
    default: break;
    }
    pr = ls_op_port(op, part);
    return pr ? ls_port_value(pr, prop) : NAN;
}

/* The double domain of ls_q_walk: plain values, NaN for undefined. */
static int d_const(void *ctx, const ls_q *q, void *out)
{
    *(double *)out = ls_run_qconst(&((ls_op *)ctx)->run, q);   /* a sweep may set a let inside it */
    return 0;
}

static int d_node(void *ctx, const ls_q *q, void *out)
{
    *(double *)out = ((ls_op *)ctx)->v[q->index];
    return 0;
}

static int d_prop(void *ctx, const ls_q *q, void *out)
{
    *(double *)out = prop_value(ctx, q->index, q->prop);
    return 0;
}

static int d_neg(void *ctx, const ls_q *q, void *a)
{
    (void)ctx, (void)q;
    *(double *)a = -*(double *)a;
    return 0;
}

static int d_binop(void *ctx, const ls_q *q, void *a, const void *b)
{
    (void)ctx;
    *(double *)a = ls_apply_op(q->op, *(double *)a, *(const double *)b);
    return 0;
}

static int d_call(void *ctx, const ls_q *q, void *const *args, void *out)
{
    (void)ctx;
    double v[LS_Q_MAX_ARGS];
    for (int i = 0; i < q->nargs; i++)
        v[i] = *(const double *)args[i];
    *(double *)out = ls_apply_func(q->op, v, q->nargs);
    return 0;
}

static const ls_qdomain double_domain = {
    .size = sizeof(double), .constant = d_const, .node = d_node, .prop = d_prop,
    .neg = d_neg, .binop = d_binop, .call = d_call,
};

double ls_q_eval(ls_op *op, const ls_q *q)
{
    double v = NAN;
    if (ls_q_walk(&double_domain, op, q, &v) != 0)
        return NAN;
    return v;
}

/* Slack (same unit as limit) within which a comparison against `limit`
 * holds: a relative 1e-9 of it (language.md, Checks), so the rounding of a
 * computed value (a ratio of 999.9999999999998 against 1000) never decides a
 * check. */
double ls_check_slack(double limit)
{
    return isfinite(limit) ? LS_CHECK_REL * fabs(limit) : 0;
}

void ls_check_eval(ls_op *op, const ls_check *c, ls_check_result *r)
{
    memset(r, 0, sizeof *r);
    double L = ls_q_eval(op, c->lhs), R = ls_q_eval(op, c->rhs);
    double sR = ls_check_slack(R);
    r->value = L;
    r->lo = -INFINITY;
    r->hi = INFINITY;
    switch (c->cmp) {
    case CMP_EQ: {
        double w = ls_q_eval(op, c->within);
        double tol = c->relative ? fabs(w * R) : fabs(w);
        r->lo = R - tol;
        r->hi = R + tol;
        r->pass = fabs(L - R) <= tol + sR || L == R;
        break;
    }
    case CMP_LT: r->hi = R; r->pass = L < R + sR; break;
    case CMP_LE: r->hi = R; r->pass = L <= R + sR; break;
    case CMP_GT: r->lo = R; r->pass = L > R - sR; break;
    case CMP_GE: r->lo = R; r->pass = L >= R - sR; break;
    case CMP_BETWEEN: {
        double H = ls_q_eval(op, c->rhs2);
        r->lo = fmin(R, H);
        r->hi = fmax(R, H);
        r->pass = L >= r->lo - ls_check_slack(r->lo) && L <= r->hi + ls_check_slack(r->hi);
        break;
    }
    }
    if (isnan(L)) {
        r->pass = false;
        r->reason = "the value is undefined (0/0)";
    } else if (isnan(R) || isnan(r->lo) || isnan(r->hi)) {
        r->pass = false;
        r->reason = "the limit is undefined (0/0)";
    }
}
