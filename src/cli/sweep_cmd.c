/* sweep_cmd.c — the sweep command: a top-level let stepped from FROM to TO,
 * the quantities tabulated at every point (text, CSV, JSON) and drawn.
 *
 * The circuit is read and elaborated once, following the let (letdeps.h):
 * each point sets the let and recomputes only the values that depend on it
 * (analysis/sweep.h).  When the let reaches more than values (a switch's
 * state=, a snapped value), or a value at some point is one the elaborator
 * refuses, that sweep (or that point) re-elaborates the circuit with
 * `--set LET=value` added, which reports the error.  Points are solved in
 * order, FROM first, each continuing from the previous point's solution, in
 * chains of SWEEP_CHAIN points that each start afresh; a point that does not
 * solve is reported as null and the sweep goes on. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "report/textbuf.h"
#include "report/writer.h"
#include "analysis/sweep.h"
#include "analysis/tolerance.h"
#include "elab/elab.h"
#include "base/fmt.h"
#include "lang/parser.h"
#include "parts/parts.h"
#include "report/plot.h"
#include "cli/progress.h"

#define MAX_QUANTITIES (LS_MAX_POS - 4)
/* chains of points, each starting afresh (analysis/sweep.h) */
#define SWEEP_CHAIN LS_SWEEP_CHAIN

typedef struct sweep {
    ls_cli *cli;
    const char *param;
    const char *qtext[MAX_QUANTITIES];
    int nq;
    int steps;
    int padded;                /* steps rounded up to whole chains (the arrays' length) */
    double *x;                 /* steps param values */
    double *y;                 /* padded × nq, row-major; NaN: not solved / undefined */
    bool *solved;              /* padded */
    ls_dims xdims, qdims[MAX_QUANTITIES];
    /* the limits of the expects on each quantity, at every point (a limit
     * may depend on the swept let) */
    struct limit {
        int k, check, side;    /* quantity, index of the expect, 0 lower / 1 upper */
        double *y;             /* steps values; NaN where not solved */
        char text[160];
    } lim[LS_PLOT_MAX_MARKS];
    int nlim;
    /* the last point solved, kept so the next continues from its solution
     * (per-point elaboration) */
    ls_session *base;
    /* elaborated once: the circuit as given, what the let reaches in it, the
     * quantities bound in it and its solver */
    bool once;
    ls_session *probe;
    ls_letdeps deps;
    const ls_q *q[MAX_QUANTITIES];
    ls_sweeper sw;
} sweep;

/* A copy of cli whose --set list drops PARAM and ends with PARAM=value
 * (text kept in buf).  Returns false when there is no room. */
static bool point_cli(const ls_cli *cli, const char *param, double value, char *buf, size_t n, ls_cli *out)
{
    *out = *cli;
    out->nsets = 0;
    size_t pl = strlen(param);
    for (int i = 0; i < cli->nsets; i++)
        if (!(strncmp(cli->sets[i], param, pl) == 0 && cli->sets[i][pl] == '='))
            out->sets[out->nsets++] = cli->sets[i];
    out->follow = NULL;
    if (out->nsets == LS_MAX_SETS)
        return false;
    snprintf(buf, n, "%s=%s", param, LS_NUM(value));
    out->sets[out->nsets++] = buf;
    return true;
}

/* Make a limit curve for each finite limit of every expect on quantity k
 * (from the first point solved).  Returns 0, or -1 when out of memory (a
 * limit curve the plot would lose). */
static int collect_limits(sweep *w, ls_op *op, const ls_q *q, int k)
{
    const ls_netlist *nl = op->nl;
    for (int c = 0; c < nl->nchecks && w->nlim + 2 <= LS_PLOT_MAX_MARKS; c++) {
        const ls_check *ck = &nl->checks[c];
        if (ck->is_rule || !ck->lhs || !ls_q_same(ck->lhs, q))
            continue;
        ls_check_result r;
        ls_check_eval(op, ck, &r);
        for (int side = 0; side < 2; side++) {
            if (!isfinite(side ? r.hi : r.lo))
                continue;
            struct limit *l = &w->lim[w->nlim];
            l->y = malloc((size_t)w->padded * sizeof *l->y);
            if (!l->y)
                return -1;
            for (int i = 0; i < w->padded; i++)
                l->y[i] = NAN;
            l->k = k;
            l->check = c;
            l->side = side;
            bool two = isfinite(r.lo) && isfinite(r.hi);
            snprintf(l->text, sizeof l->text, "%s%s", ck->text, !two ? "" : side ? " (upper)" : " (lower)");
            w->nlim++;
        }
    }
    return 0;
}

/* The limits at point i, from the expects of the circuit as elaborated for
 * that point (nl) and its solution (op). */
static void record_limits(sweep *w, int i, ls_op *op, const ls_netlist *nl)
{
    for (int j = 0; j < w->nlim; j++) {
        struct limit *l = &w->lim[j];
        if (l->check >= nl->nchecks)
            continue;
        ls_check_result r;
        ls_check_eval(op, &nl->checks[l->check], &r);
        l->y[i] = l->side ? r.hi : r.lo;
    }
}

/* Units written on a FROM or TO argument ("3.3V", "-1 mA"); unitless when
 * none (or the text is an expression). */
static ls_dims arg_dims(const char *text)
{
    ls_arena a;
    ls_diags d;
    ls_arena_init(&a);
    ls_diags_init(&d, &a);
    const ls_expr *e = ls_parse_expr_string(&d, "argument", text, false);
    if (e && e->kind == E_NEG)
        e = e->a;
    ls_dims dims = e && e->kind == E_NUM ? e->dims : LS_FREE;
    ls_diags_free(&d);
    ls_arena_free(&a);
    return dims;
}

/* FROM and TO must carry the param's unit, or none.  Adopts their unit when
 * the param is a plain number.  Returns 0, or LS_EXIT_USAGE after an error. */
static int check_arg_units(sweep *w, ls_diags *d)
{
    for (int i = 2; i <= 3; i++) {
        ls_dims ad = arg_dims(w->cli->pos[i]);
        if (!ad.known)
            continue;
        if (!w->xdims.known) {
            w->xdims = ad;
        } else if (!ls_dims_eq(ad, w->xdims)) {
            char b1[64], b2[64];
            ls_error(d, LS_NOLOC, "sweep: %s '%s' is %s, but let '%s' is %s", i == 2 ? "FROM" : "TO",
                     w->cli->pos[i], ls_dims_name(ad, b1, sizeof b1), w->param, ls_dims_name(w->xdims, b2, sizeof b2));
            return LS_EXIT_USAGE;
        }
    }
    return 0;
}

/* Should every point be elaborated afresh?  LOADSTACK_SWEEP_REELABORATE=1
 * asks for it (the tests compare both ways). */
static bool reelaborate_asked(void)
{
    const char *e = getenv("LOADSTACK_SWEEP_REELABORATE");
    return e && *e && strcmp(e, "0") != 0;
}

/* Free a session (malloc'd). */
static void free_session(ls_session *s)
{
    ls_session_free(s);
    free(s);
}

/* Load the circuit as given (the user's --set list), following LET, and bind
 * the quantities: LET must be a top-level let.  Records the units; prints
 * the diagnostics (so warnings appear once).  Keeps the session as w->probe
 * for the points when the let reaches only values.  Returns an exit code. */
static int probe(sweep *w)
{
    ls_session *s = malloc(sizeof *s);
    if (!s) {
        fprintf(stderr, "loadstack: error: out of memory loading the circuit\n");
        return LS_EXIT_UNSOLVABLE;
    }
    ls_letdeps_init(&w->deps, w->param);
    w->cli->follow = &w->deps;
    int code = ls_session_load(s, w->cli, w->cli->pos[0], NULL);
    if (code == LS_EXIT_OK) {
        int e = ls_hash_get(&s->nl.names, w->param);
        if (e < 0 || s->nl.ents[e].kind != ENT_PARAM) {
            ls_error(&s->diags, LS_NOLOC, "sweep: the circuit has no top-level let '%s' (declare it with 'let %s = ...')",
                     w->param, w->param);
            code = LS_EXIT_USAGE;
        } else {
            w->xdims = s->nl.params[s->nl.ents[e].index].dims;
            code = check_arg_units(w, &s->diags);
        }
    }
    for (int k = 0; k < w->nq && code == LS_EXIT_OK; k++) {
        w->q[k] = ls_session_quantity(s, w->qtext[k]);
        if (w->q[k])
            w->qdims[k] = w->q[k]->dims;
        else
            code = LS_EXIT_USAGE;
    }
    w->cli->follow = NULL;
    ls_diags_print(&s->diags, stderr);
    w->once = code == LS_EXIT_OK && !w->deps.structural && !w->deps.nomem && w->deps.root >= 0 &&
              !ls_session_nomem(s) && !reelaborate_asked();
    if (w->once) {
        ls_options o = {.solver = w->cli->solver, .min_ratio = w->cli->min_ratio, .derate = w->cli->derate};
        ls_sweeper_init(&w->sw, &s->nl, &w->deps, &o);
        w->probe = s;
    } else {
        free_session(s);
        ls_letdeps_free(&w->deps);
    }
    return code;
}

/* Do two elaborations of the circuit have the same parts on the same nodes
 * with the same options given and the same shapes (ls_part_same_shape: a
 * junction's rbulk= from zero to positive adds a branch unknown, a switch
 * that opens drops an edge), so one's values can be stamped into the
 * other's system? */
static bool same_structure(const ls_netlist *a, const ls_netlist *b)
{
    if (a->nparts != b->nparts || a->nnodes != b->nnodes)
        return false;
    for (int i = 0; i < a->nparts; i++) {
        const ls_part *p = &a->parts[i], *q = &b->parts[i];
        if (p->kind != q->kind || p->ref != q->ref || p->has_value != q->has_value || strcmp(p->name, q->name) != 0 ||
            memcmp(p->pin, q->pin, sizeof p->pin) != 0 || p->has_opt != q->has_opt || !ls_part_same_shape(p, q))
            return false;
    }
    return true;
}

/* Set in run (the last solved point's, over a netlist of src's structure)
 * the values of src (main values, options, range ends, budgets), keeping
 * the run's analysis state: the linearization points the last solution
 * left, from which the next solve continues.  The run's netlist stays as
 * it was elaborated.  0, or -1 when out of memory. */
static int copy_values(ls_run *run, const ls_netlist *src)
{
    const ls_netlist *dst = run->nl;
    if (dst->nbudgets != src->nbudgets)
        return -1;
    for (int i = 0; i < dst->nparts; i++) {
        const ls_part *p = &dst->parts[i], *q = &src->parts[i];
        if (ls_run_set_value(run, i, q->value) != 0)
            return -1;
        /* Same structure: the same options given, so both or neither have the
         * side arrays (a range only where a range option was given). */
        for (int k = 0; p->opt && q->opt && k < LS_MAX_OPTS; k++)
            if (ls_part_has(p, k) && ls_run_set_opt(run, i, k, q->opt[k]) != 0)
                return -1;
        for (int k = 0; p->range && q->range && k < LS_MAX_RANGES; k++)
            for (int e = 0; e < 2; e++)
                if (ls_run_set_range(run, i, k, e, q->range[k][e].volts) != 0)
                    return -1;
    }
    for (int b = 0; b < src->nbudgets; b++)
        if (ls_run_set_budget(run, b, src->budgets[b].value) != 0)
            return -1;
    return 0;
}

/* Record point i's values from the solved op with the quantities q and the
 * expects of nl, both bound in the circuit as elaborated (or set) for this
 * point (so a let they use has this point's value).  Returns 0, or -1 when
 * out of memory. */
static int record(sweep *w, int i, ls_op *op, const ls_q *const *q, const ls_netlist *nl)
{
    bool first = true;
    for (int j = 0; j < i; j++)
        first &= !w->solved[j];
    w->solved[i] = true;
    for (int k = 0; k < w->nq; k++) {
        w->y[(size_t)i * (size_t)w->nq + (size_t)k] = ls_q_eval(op, q[k]);
        if (first && collect_limits(w, op, q[k], k) != 0)
            return -1;
    }
    record_limits(w, i, op, nl);
    return 0;
}

/* The first error among s's diagnostics, or "" (s may be NULL). */
static const char *first_error(const ls_session *s)
{
    for (int j = 0; s && j < s->diags.n; j++)
        if (s->diags.items[j].sev == LS_SEV_ERROR)
            return s->diags.items[j].msg;
    return "";
}

/* Out of memory at point i: say so with the stage's own message (the first
 * error of the point's session, when it has one).  Never a null point: a
 * point is null only when its circuit has no solution.  Returns
 * LS_EXIT_UNSOLVABLE. */
static int point_nomem(const sweep *w, int i, const ls_session *s)
{
    const char *why = first_error(s);
    fprintf(stderr, "loadstack: error: out of memory at %s = %.6g (point %d of %d)%s%s\n", w->param, w->x[i], i + 1,
            w->steps, *why ? ": " : "", why);
    return LS_EXIT_UNSOLVABLE;
}

/* Drop the last solved point: the next starts afresh. */
static void drop_base(sweep *w)
{
    if (w->base)
        free_session(w->base);
    w->base = NULL;
}

/* Elaborate the circuit for a point (pc: the --set list with PARAM's value)
 * into s and bind the quantities in it into q.  Returns an exit code. */
static int load_point(const sweep *w, ls_cli *pc, ls_session *s, const ls_q **q)
{
    int code = ls_session_load(s, pc, w->cli->pos[0], NULL);
    for (int k = 0; k < w->nq && code == LS_EXIT_OK; k++) {
        q[k] = ls_session_quantity(s, w->qtext[k]);
        if (!q[k])
            code = LS_EXIT_USAGE;
    }
    return code;
}

/* Point i in the last solved point's system, when s (the circuit as
 * elaborated for point i) has its structure: s's values stamped in and
 * re-solved from that solution.  The quantities and expects are s's own
 * bindings (q): a let inside a QUANTITY is a constant of the binding, and
 * the base's hold the value of the point it was bound at (the structures
 * match, so part and node indices agree).  Returns true when that settled
 * the point (*rc: 0, or LS_EXIT_UNSOLVABLE when memory ran out), false when
 * it is to be solved afresh. */
static bool continue_base(sweep *w, int i, const ls_session *s, const ls_q *const *q, int *rc)
{
    if (!w->base || !same_structure(&w->base->nl, &s->nl) || w->base->nl.nbudgets != s->nl.nbudgets)
        return false;
    if (copy_values(&w->base->op.run, &s->nl) != 0) {
        *rc = point_nomem(w, i, NULL);
        return true;
    }
    if (ls_op_resolve(&w->base->op) == LS_DONE) {
        *rc = record(w, i, &w->base->op, q, &s->nl) != 0 ? point_nomem(w, i, NULL) : 0;
        return true;
    }
    if (w->base->op.nomem) {
        *rc = point_nomem(w, i, w->base);
        return true;
    }
    return false;
}

/* Solve point i by elaborating again: the circuit is re-elaborated with PARAM
 * at x[i]; when its structure matches the last solved point's, the new
 * values are stamped into that system and re-solved from its solution
 * (continuation: a nonlinear circuit starts from the previous point's
 * operating point); otherwise, or if that fails, it is solved afresh.  A
 * point whose circuit has no solution is left null with a one-line warning.
 * Returns 0, or LS_EXIT_UNSOLVABLE after an error when memory ran out (the
 * sweep stops: a point lost to memory is not a point without a solution). */
static int reelaborate_point(sweep *w, int i)
{
    if (i % SWEEP_CHAIN == 0)   /* a new chain starts afresh */
        drop_base(w);
    char buf[256];
    ls_cli pc;
    if (!point_cli(w->cli, w->param, w->x[i], buf, sizeof buf, &pc)) {
        fprintf(stderr, "loadstack: warning: %s = %.6g is left out (too many --set options)\n", w->param, w->x[i]);
        return 0;
    }
    ls_session *s = malloc(sizeof *s);
    if (!s)
        return point_nomem(w, i, NULL);
    const ls_q *q[MAX_QUANTITIES] = {NULL};
    int code = load_point(w, &pc, s, q);
    int rc = 0;
    if (code == LS_EXIT_OK && continue_base(w, i, s, q, &rc)) {
        free_session(s);
        return rc;
    }
    if (code == LS_EXIT_OK)
        code = ls_session_solve(s);
    if (code == LS_EXIT_OK) {
        if (record(w, i, &s->op, q, &s->nl) != 0)
            rc = point_nomem(w, i, NULL);
        drop_base(w);
        w->base = s;   /* the point the next continues from */
        return rc;
    }
    if (ls_session_nomem(s)) {
        rc = point_nomem(w, i, s);
    } else {
        const char *why = first_error(s);
        fprintf(stderr, "loadstack: warning: at %s = %.6g the circuit cannot be solved%s%s; that point is null\n",
                w->param, w->x[i], *why ? ": " : "", why);
    }
    free_session(s);
    return rc;
}

/* Solve point i in the circuit elaborated once: its values set, then solved
 * afresh at the start of a chain, else continuing.  A point whose values
 * the elaborator would refuse, or that does not solve, goes the way of
 * reelaborate_point (which says why; it keeps no base here, so the next
 * point starts afresh).  Returns 0, or LS_EXIT_UNSOLVABLE after an error
 * when memory ran out. */
static int solve_point(sweep *w, int i)
{
    if (!w->once)
        return reelaborate_point(w, i);
    ls_outcome out = ls_sweeper_solve(&w->sw, w->x[i], i % SWEEP_CHAIN == 0);
    if (out == LS_DONE)
        return record(w, i, &w->sw.op, w->q, &w->probe->nl) != 0 ? point_nomem(w, i, NULL) : 0;
    /* (memory that ran out in a stage that only reports it, such as the
     * topology check, shows in the session's diagnostics) */
    if (out != LS_REELABORATE && (w->sw.op.nomem || ls_session_nomem(w->probe)))
        return point_nomem(w, i, w->probe);
    if (w->sw.restructured) {
        /* the let changes how many unknowns a part has: from this point on
         * every point is elaborated, continuing from the one before, as a
         * sweep that cannot follow its let */
        w->once = false;
        return reelaborate_point(w, i);
    }
    int rc = reelaborate_point(w, i);
    drop_base(w);   /* points continue from the circuit elaborated once */
    return rc;
}

/* ---- reports ------------------------------------------------------------------------------- */

/* Value of quantity k at point i (NaN when not solved). */
static double yat(const sweep *w, int i, int k) { return w->y[(size_t)i * (size_t)w->nq + (size_t)k]; }

/* The sweep report, described once for every format (writer.h): the let,
 * then a table of one row per point, the let's value first; a quantity at
 * a point that could not be solved is null, "unsolved" (CSV: empty).  In
 * text, engineering notation with units, each column at least 12 wide. */
static void sweep_report(ls_report *rp, const sweep *w)
{
    char b[64];
    const char *xu = ls_unit_of(w->xdims, w->cli->ascii);
    ls_wr wr;
    ls_wr_begin(&wr, rp);
    ls_wr_str(&wr, "let", w->param);
    ls_wr_say(&wr, "Sweep of %s from %s to %s, %d points%s\n\n", w->param, ls_eng(rp, b, sizeof b, w->x[0], xu),
              ls_eng(rp, b + 32, 32, w->x[w->steps - 1], xu), w->steps, w->cli->log ? " (log spacing)" : "");
    ls_wr_col cols[MAX_QUANTITIES + 1];
    for (int k = 0; k <= w->nq; k++) {
        const char *name = k ? w->qtext[k - 1] : w->param;
        int len = ls_width(name);
        cols[k] = (ls_wr_col){name, name, name, true, len > 12 ? len : 12};
    }
    static const ls_wr_style style = {.fixed = true};
    ls_wr_table(&wr, "points", cols, w->nq + 1, &style);
    for (int i = 0; i < w->steps; i++) {
        ls_wr_cell_num(&wr, w->x[i], ls_eng(rp, b, sizeof b, w->x[i], xu));
        for (int k = 0; k < w->nq; k++) {
            double v = yat(w, i, k);
            const char *text = w->solved[i] ? ls_eng(rp, b, sizeof b, v, ls_unit_of(w->qdims[k], w->cli->ascii))
                                            : "unsolved";
            ls_wr_cell_why(&wr, v, !w->solved[i] ? LS_WHY_UNSOLVED : ls_jw_why_of(v), text);
        }
        ls_wr_row(&wr);
    }
    ls_wr_table_end(&wr);
    ls_wr_finish(&wr);
}

/* Draw the curves.  Returns 0, or LS_EXIT_USAGE after saying why. */
static int sweep_plot(const sweep *w)
{
    ls_plot_series ser[LS_PLOT_MAX_SERIES + LS_PLOT_MAX_MARKS];
    int ns = w->nq < LS_PLOT_MAX_SERIES ? w->nq : LS_PLOT_MAX_SERIES;
    double *cols = malloc((size_t)w->steps * (size_t)(ns ? ns : 1) * sizeof *cols);
    if (!cols) {
        fprintf(stderr, "loadstack: error: out of memory drawing '%s' (%d points)\n", w->cli->plot, w->steps);
        return LS_EXIT_UNSOLVABLE;
    }
    /* each quantity in the panel of its unit; its limits beside it */
    for (int k = 0; k < ns; k++) {
        for (int i = 0; i < w->steps; i++)
            cols[(size_t)k * (size_t)w->steps + (size_t)i] = yat(w, i, k);
        ser[k] = (ls_plot_series){w->qtext[k], w->x, cols + (size_t)k * (size_t)w->steps, (size_t)w->steps,
                                  ls_unit_of(w->qdims[k], w->cli->ascii), false};
    }
    int nser = ns;
    for (int j = 0; j < w->nlim; j++)
        if (w->lim[j].k < ns)
            ser[nser++] = (ls_plot_series){w->lim[j].text, w->x, w->lim[j].y, (size_t)w->steps,
                                           ls_unit_of(w->qdims[w->lim[j].k], w->cli->ascii), true};
    char title[256];
    snprintf(title, sizeof title, "sweep of %s", w->param);
    ls_plot_line p = {.title = title, .xlabel = w->param, .xunit = ls_unit_of(w->xdims, w->cli->ascii),
                      .logx = w->cli->log, .series = ser, .nseries = (size_t)nser};
    char msg[256] = "";
    int st = ls_plot_line_write_to(&p, &w->cli->plot_dest, msg, sizeof msg);
    free(cols);
    if (st != LS_PLOT_OK) {
        fprintf(stderr, "loadstack: error: cannot draw '%s': %s\n", w->cli->plot, msg);
        return LS_EXIT_USAGE;
    }
    if (w->nq > ns)
        fprintf(stderr, "loadstack: warning: the plot shows the first %d quantities\n", ns);
    return 0;
}

/* ---- the command --------------------------------------------------------------------------- */

/* With a share: every process's points (values, solved flags and the limit
 * curves) to all.  A process's limit curves come from the first point it
 * solved; when the processes found different numbers of them (expects whose
 * limits are finite only at some points) the plot leaves them out.  0, or -1
 * when the exchange fails. */
static int share_points(const ls_share *s, sweep *w)
{
    if (!s || s->size <= 1)
        return 0;
    int *nlim = calloc((size_t)s->size, sizeof *nlim);
    if (!nlim)
        return -1;
    nlim[s->rank] = w->nlim;
    int rc = ls_share_gather(s, nlim, s->size, sizeof *nlim);
    bool same = true;
    for (int r = 0; r < s->size; r++)
        same = same && nlim[r] == nlim[0];
    free(nlim);
    long chains = w->padded / SWEEP_CHAIN;
    if (rc == 0)
        rc = ls_share_gather(s, w->y, chains, SWEEP_CHAIN * (size_t)w->nq * sizeof *w->y);
    if (rc == 0)
        rc = ls_share_gather(s, w->solved, chains, SWEEP_CHAIN * sizeof *w->solved);
    if (!same) {
        for (int j = 0; j < w->nlim; j++)
            free(w->lim[j].y);
        w->nlim = 0;
    }
    for (int j = 0; j < w->nlim && rc == 0; j++)
        rc = ls_share_gather(s, w->lim[j].y, chains, SWEEP_CHAIN * sizeof *w->lim[j].y);
    return rc;
}

/* Read PARAM FROM TO QUANTITY... from the positional arguments.  Returns 0 or
 * LS_EXIT_USAGE after saying why. */
static int sweep_args(ls_cli *cli, sweep *w, double *from, double *to)
{
    w->cli = cli;
    w->param = cli->pos[1];
    w->steps = cli->steps >= 2 ? cli->steps : 51;
    if (!ls_cli_number(cli->pos[2], from) || !ls_cli_number(cli->pos[3], to) || !isfinite(*from) ||
        !isfinite(*to)) {
        fprintf(stderr, "loadstack: error: sweep FROM and TO must be numbers, not '%s' and '%s'\n", cli->pos[2],
                cli->pos[3]);
        return LS_EXIT_USAGE;
    }
    if (cli->log && !(*from > 0 && *to > 0)) {
        fprintf(stderr, "loadstack: error: --log needs FROM and TO greater than zero\n");
        return LS_EXIT_USAGE;
    }
    w->nq = cli->npos - 4;
    if (w->nq > MAX_QUANTITIES) {
        fprintf(stderr, "loadstack: error: a sweep takes at most %d quantities\n", MAX_QUANTITIES);
        return LS_EXIT_USAGE;
    }
    for (int k = 0; k < w->nq; k++)
        w->qtext[k] = cli->pos[4 + k];
    return 0;
}

/* The arrays of w's points (steps padded to whole chains) and their let
 * values from FROM to TO.  Returns an exit code, after an error. */
static int sweep_alloc(sweep *w, double from, double to)
{
    w->padded = (w->steps + SWEEP_CHAIN - 1) / SWEEP_CHAIN * SWEEP_CHAIN;
    w->x = malloc((size_t)w->steps * sizeof *w->x);
    w->y = malloc((size_t)w->padded * (size_t)w->nq * sizeof *w->y);
    w->solved = calloc((size_t)w->padded, sizeof *w->solved);
    if (!w->x || !w->y || !w->solved) {
        fprintf(stderr, "loadstack: error: out of memory for %d sweep points\n", w->steps);
        return LS_EXIT_UNSOLVABLE;
    }
    ls_sweep_points(from, to, w->steps, w->cli->log, w->x);
    return LS_EXIT_OK;
}

/* Solve this process's points in order (all of them without a share), with
 * a progress line, then hand them to the other processes.  Returns an exit
 * code. */
static int sweep_run(sweep *w)
{
    const ls_cli *cli = w->cli;
    int code = LS_EXIT_OK;
    ls_progress pg;
    ls_progress_start(&pg, "sweep", "points", cli->quiet);
    long first, last; /* this process's chains, then points */
    ls_share_range(cli->share, w->padded / SWEEP_CHAIN, &first, &last);
    first *= SWEEP_CHAIN;
    last = last * SWEEP_CHAIN < w->steps ? last * SWEEP_CHAIN : w->steps;
    for (long i = first; code == LS_EXIT_OK && i < last; i++) {
        for (int k = 0; k < w->nq; k++)
            w->y[(size_t)i * (size_t)w->nq + (size_t)k] = NAN;
        code = solve_point(w, (int)i);
        ls_progress_update(&pg, i - first + 1, last - first);
    }
    ls_progress_end(&pg);
    if (code == LS_EXIT_OK && share_points(cli->share, w) != 0) {
        fprintf(stderr, "loadstack: error: the processes could not exchange the sweep's points\n");
        code = LS_EXIT_UNSOLVABLE;
    }
    return code;
}

/* Free the sessions the points were solved in. */
static void sweep_sessions_free(sweep *w)
{
    drop_base(w);
    if (w->probe) {
        ls_sweeper_free(&w->sw);
        free_session(w->probe);
        w->probe = NULL;
        ls_letdeps_free(&w->deps);
    }
}

/* After the points: a sweep of no solved point fails; else the plot and
 * the report.  Returns the exit code. */
static int sweep_output(sweep *w)
{
    ls_cli *cli = w->cli;
    int nsolved = 0;
    for (int i = 0; i < w->steps; i++)
        nsolved += w->solved[i];
    if (nsolved == 0) {
        fprintf(stderr, "loadstack: error: the circuit cannot be solved at any point of the sweep\n");
        return LS_EXIT_UNSOLVABLE;
    }
    if (cli->plot) {
        int code = sweep_plot(w);
        if (code != LS_EXIT_OK)
            return code;
    }
    ls_session s;   /* only for the report's meta */
    memset(&s, 0, sizeof s);
    s.cli = cli;
    s.input_path = cli->pos[0];
    ls_report rp = ls_report_for(&s, ls_out_open(cli));
    sweep_report(&rp, w);
    return ls_report_done(&rp, LS_EXIT_OK);
}

/* `loadstack sweep FILE PARAM FROM TO QUANTITY...`: every point in order,
 * then the plot and the report.  Returns the exit code. */
int ls_cmd_sweep(ls_cli *cli)
{
    sweep w;
    memset(&w, 0, sizeof w);
    double from, to;
    if (sweep_args(cli, &w, &from, &to))
        return LS_EXIT_USAGE;
    int code = sweep_alloc(&w, from, to);
    if (code == LS_EXIT_OK)
        code = probe(&w);
    if (code == LS_EXIT_OK)
        code = sweep_run(&w);
    sweep_sessions_free(&w);
    if (code == LS_EXIT_OK)
        code = sweep_output(&w);
    code = ls_out_close(cli, code);
    free(w.x);
    free(w.y);
    free(w.solved);
    for (int j = 0; j < w.nlim; j++)
        free(w.lim[j].y);
    return code;
}
