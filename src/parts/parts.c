/* parts.c — the part table and each kind's stamps.
 *
 * MNA layout: node i (1..N-1) is unknown i-1; branch currents follow.  A KCL row
 * sums the currents leaving its node.  A branch current flows through its part
 * from FROM to TO (for an op-amp: out of the output into `out`). */
#include "parts/parts.h"

#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* ---- sinks ---------------------------------------------------------------- */

void ls_sink_a(ls_sink *s, int row, int col, double v)
{
    if (row < 0 || col < 0 || v == 0)
        return;
    v *= s->scale;
    assert(s->mode == SINK_ASSEMBLE || s->mode == SINK_ADJOINT || s->mode == SINK_RESIDUAL);
    if (s->mode == SINK_ADJOINT) {
        s->acc -= s->lambda[row] * v * s->x[col];
        return;
    }
    if (s->mode == SINK_RESIDUAL) {
        ls_resid_a(s->resid, row, col, v);
        return;
    }
    ls_triplets *t = s->t;
    if (t->nnz == t->cap) {
        size_t cap = t->cap ? t->cap * 2 : 1024;
        int *ti = realloc(t->ti, cap * sizeof *ti);
        if (ti) t->ti = ti;
        int *tj = realloc(t->tj, cap * sizeof *tj);
        if (tj) t->tj = tj;
        double *tx = realloc(t->tx, cap * sizeof *tx);
        if (tx) t->tx = tx;
        if (!ti || !tj || !tx) {
            t->failed = 1;
            return;
        }
        t->cap = cap;
    }
    t->ti[t->nnz] = row;
    t->tj[t->nnz] = col;
    t->tx[t->nnz] = v;
    t->nnz++;
}

void ls_sink_b(ls_sink *s, int row, double v)
{
    if (row < 0 || v == 0)
        return;
    v *= s->scale;
    if (s->mode == SINK_ADJOINT)
        s->acc += s->lambda[row] * v;
    else if (s->mode == SINK_RESIDUAL)
        ls_resid_b(s->resid, row, v);
    else
        s->b[row] += v;
}

/* An entry that stays in the pattern even when its value is zero, so the
 * matrix keeps one structure while limits switch and the symbolic analysis
 * is reused.  (The adjoint sink needs no zeros.) */
static void keep_a(ls_sink *s, int row, int col, double v)
{
    if (row < 0 || col < 0)
        return;
    if (v != 0 || s->mode != SINK_ASSEMBLE) { /* only assembly keeps zeros */
        ls_sink_a(s, row, col, v);
        return;
    }
    double scale = s->scale;
    s->scale = 1;
    ls_sink_a(s, row, col, 1);
    s->scale = scale;
    if (!s->t->failed && s->t->nnz)
        s->t->tx[s->t->nnz - 1] = 0;
}

/* ---- stamp helpers ---------------------------------------------------------- */

#define N(p, i) ls_node_unknown((p)->pin[i])

static void conductance(ls_sink *s, int a, int b, double g)
{
    ls_sink_a(s, a, a, g);
    ls_sink_a(s, b, b, g);
    ls_sink_a(s, a, b, -g);
    ls_sink_a(s, b, a, -g);
}

/* KCL entries of a branch current k flowing FROM -> TO through the part. */
static void branch_kcl(ls_sink *s, int from, int to, int k)
{
    ls_sink_a(s, from, k, 1);
    ls_sink_a(s, to, k, -1);
}

/* The branch row of an opened branch: I_k = 0.  Its KCL column entries are
 * kept; they multiply a zero current. */
static void branch_open(ls_sink *s, int k)
{
    ls_sink_a(s, k, k, 1);
}

/* Row k: V(to) - V(from) (the rise the branch forces). */
static void branch_rise(ls_sink *s, int from, int to, int k)
{
    ls_sink_a(s, k, to, 1);
    ls_sink_a(s, k, from, -1);
}

/* The helpers of family files outside this one (parts.h). */
void ls_stamp_conductance(ls_sink *s, int a, int b, double g) { conductance(s, a, b, g); }

/* Scale of a source's value while the sources are ramped up. */
static double src_scale(const ls_part *p, const ls_run *run)
{
    return 1 - ls_run_state(run, p)->src_cut;
}

static void lin_add(ls_lin *l, int idx, double c)
{
    if (idx < 0 || c == 0)
        return;
    for (int i = 0; i < l->n; i++) {
        if (l->idx[i] == idx) {
            l->coef[i] += c;
            return;
        }
    }
    if (l->n == LS_LIN_MAX) {
        l->overflow = true;
        return;
    }
    l->idx[l->n] = idx;
    l->coef[l->n++] = c;
}

void ls_lin_add(ls_lin *l, int idx, double c) { lin_add(l, idx, c); }

double ls_lin_eval(const ls_lin *l, const double *x)
{
    double v = l->constant;
    for (int i = 0; i < l->n; i++)
        v += l->coef[i] * x[l->idx[i]];
    return v;
}

static void current_branch(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth)
{
    (void)run; (void)depth;
    if (!d)
        lin_add(out, p->branch, 1);
}

static int one_branch(const ls_part *p) { (void)p; return 1; }
static int no_branch(const ls_part *p) { (void)p; return 0; }

double ls_part_opt(const ls_part *p, const char *name, double dflt)
{
    int i = ls_kind_opt(p->kind, name);
    return ls_part_has(p, i) ? p->opt[i] : dflt;
}

double ls_part_opt_in(const ls_run *run, const ls_part *p, const char *name, double dflt)
{
    int i = ls_kind_opt(p->kind, name);
    return ls_part_has(p, i) ? ls_run_opt_at(run, p, i) : dflt;
}

/* ---- resistor ----------------------------------------------------------------- */

static void resistor_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->removed)
        return;
    double g = c->derivative ? -1 / (ls_run_value(c->run, p) * ls_run_value(c->run, p)) : 1 / ls_run_value(c->run, p);
    conductance(c->sink, N(p, 0), N(p, 1), g);
}

static void resistor_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth)
{
    (void)run; (void)depth;
    double g = d ? -1 / (ls_run_value(run, p) * ls_run_value(run, p)) : 1 / ls_run_value(run, p);
    lin_add(out, N(p, 0), g);
    lin_add(out, N(p, 1), -g);
}

static void two_edge(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    emit(ctx, p->pin[0], p->pin[1], false, -1);
}

/* A positive conductance between two nodes keeps the nodal matrix an M-matrix. */
static int resistor_monotone(const ls_part *p)
{
    return p->value > 0 && isfinite(p->value);
}

/* ---- independent sources ------------------------------------------------------ */

static void vsource_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    int f = N(p, 0), t = N(p, 1), k = p->branch;
    double rs = ls_part_opt_in(c->run, p, "rint", 0);
    if (c->derivative) {
        ls_sink_b(c->sink, k, 1);
        return;
    }
    branch_kcl(c->sink, f, t, k);
    branch_rise(c->sink, f, t, k);
    ls_sink_a(c->sink, k, k, rs);
    if (!c->removed)
        ls_sink_b(c->sink, k, ls_run_value(c->run, p) * src_scale(p, c->run));
}

/* A source with one end on ground fixes (or, through rint, feeds) a node:
 * raising its value raises every node voltage when ground is FROM, lowers
 * every one when ground is TO.  Between two other nodes the response has
 * both signs. */
static int vsource_monotone(const ls_part *p)
{
    if (ls_part_opt(p, "rint", 0) < 0)
        return 0;
    return p->pin[0] == 0 ? 1 : p->pin[1] == 0 ? -1 : 0;
}

/* A current source only enters the right-hand side. */
static int isource_monotone(const ls_part *p)
{
    (void)p;
    return 1;
}

static void vsource_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    emit(ctx, p->pin[0], p->pin[1], ls_part_opt(p, "rint", 0) == 0, -1);
}

static void isource_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->removed)
        return;
    double i = c->derivative ? 1 : ls_run_value(c->run, p) * src_scale(p, c->run);
    ls_sink_b(c->sink, N(p, 0), -i);
    ls_sink_b(c->sink, N(p, 1), i);
}

static void isource_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth)
{
    (void)run; (void)depth;
    out->constant += d ? 1 : ls_run_value(run, p) * src_scale(p, run);
}

static void no_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    (void)p; (void)ctx; (void)emit;
}

/* ---- port: a zero-volt branch whose current is the load current --------------- */

static void port_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->derivative)
        return;
    int f = N(p, 0), t = N(p, 1), k = p->branch;
    if (c->buffered) {
        /* V(t) = V(f), with the current entering t from nowhere (sag's "alone") */
        ls_sink_a(c->sink, t, k, -1);
        ls_sink_a(c->sink, k, f, 1);
        ls_sink_a(c->sink, k, t, -1);
        return;
    }
    branch_kcl(c->sink, f, t, k);
    if (c->removed) {
        branch_open(c->sink, k);
        return;
    }
    ls_sink_a(c->sink, k, f, 1);
    ls_sink_a(c->sink, k, t, -1);
}

static void vdef_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    emit(ctx, p->pin[0], p->pin[1], true, -1);
}

/* ---- controlled sources ---------------------------------------------------------- */
/* Pins: 0 FROM, 1 TO, 2 cplus, 3 cminus. */

static void vcvs_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    int f = N(p, 0), t = N(p, 1), k = p->branch;
    double g = c->removed ? 0 : c->derivative ? 1 : ls_run_value(c->run, p);
    if (!c->derivative) {
        branch_kcl(c->sink, f, t, k);
        branch_rise(c->sink, f, t, k);
    }
    ls_sink_a(c->sink, k, N(p, 2), -g);
    ls_sink_a(c->sink, k, N(p, 3), g);
}

static void vccs_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->removed)
        return;
    int f = N(p, 0), t = N(p, 1), cp = N(p, 2), cm = N(p, 3);
    double g = c->derivative ? 1 : ls_run_value(c->run, p);
    ls_sink_a(c->sink, f, cp, g);
    ls_sink_a(c->sink, f, cm, -g);
    ls_sink_a(c->sink, t, cp, -g);
    ls_sink_a(c->sink, t, cm, g);
}

static void vccs_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth)
{
    (void)run; (void)depth;
    double g = d ? 1 : ls_run_value(run, p);
    lin_add(out, N(p, 2), g);
    lin_add(out, N(p, 3), -g);
}

static void via_lin(const ls_part *p, const ls_run *run, ls_lin *out, int depth)
{
    memset(out, 0, sizeof *out);
    if (p->ref < 0 || depth > 32) {
        out->overflow = true;
        return;
    }
    const ls_part *v = &run->nl->parts[p->ref];
    v->kind->current(v, run, out, false, depth + 1);
}

static void cccs_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->removed)
        return;
    ls_lin l;
    via_lin(p, c->run, &l, 0);
    double g = c->derivative ? 1 : ls_run_value(c->run, p);
    int f = N(p, 0), t = N(p, 1);
    for (int i = 0; i < l.n; i++) {
        ls_sink_a(c->sink, f, l.idx[i], g * l.coef[i]);
        ls_sink_a(c->sink, t, l.idx[i], -g * l.coef[i]);
    }
    ls_sink_b(c->sink, f, -g * l.constant);
    ls_sink_b(c->sink, t, g * l.constant);
}

static void cccs_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth)
{
    ls_lin l;
    via_lin(p, run, &l, depth);
    double g = d ? 1 : ls_run_value(run, p);
    for (int i = 0; i < l.n; i++)
        lin_add(out, l.idx[i], g * l.coef[i]);
    out->constant += g * l.constant;
    out->overflow |= l.overflow;
}

static void ccvs_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    int f = N(p, 0), t = N(p, 1), k = p->branch;
    double rm = c->removed ? 0 : c->derivative ? 1 : ls_run_value(c->run, p);
    if (!c->derivative) {
        branch_kcl(c->sink, f, t, k);
        branch_rise(c->sink, f, t, k);
    }
    ls_lin l;
    via_lin(p, c->run, &l, 0);
    for (int i = 0; i < l.n; i++)
        ls_sink_a(c->sink, k, l.idx[i], -rm * l.coef[i]);
    ls_sink_b(c->sink, k, rm * l.constant);
}

/* ---- op-amp ---------------------------------------------------------------------- */
/* Pins: 0 plus, 1 minus, 2 out.  Without gain= it is a nullor: V+ = V-, no input
 * current, and the output supplies whatever current that takes.  Its branch
 * row depends on the limit in force (the run's state of the part):
 *   none        ideal: V+ - V- = -vos;  finite: V(out) - A (V+ - V- + vos) + rout I = 0
 *   rail-high   V(out) = V(upper rail) - headroom
 *   rail-low    V(out) = V(lower rail) + headroom
 *   current     I = +imax (sourcing) or -imax (sinking)
 * The DC error model: vos in series with the + input, ib + ios/2 into the +
 * input and ib - ios/2 into the - input.  With rails= naming nodes, the output
 * current is drawn from the upper rail while sourcing and returned into the
 * lower rail while sinking (its state's side), and iq flows from the upper rail to the
 * lower one. */

/* Was option `name` given on this part? */
static bool opamp_has(const ls_part *p, const char *name)
{
    return ls_part_has(p, ls_kind_opt(p->kind, name));
}

double ls_level_v(const ls_level *l, const double *v)
{
    return (l->node >= 0 ? v[l->node] : 0) + l->volts;
}

bool ls_opamp_limited(const ls_part *p)
{
    return opamp_has(p, "rails") || opamp_has(p, "imax");
}

const char *ls_opamp_limit_word(const ls_part *p, const ls_run *run)
{
    return ls_lim_word(ls_run_state(run, p)->state);
}

const char *ls_lim_word(int state)
{
    assert(state >= LS_LIM_NONE && state <= LS_LIM_CURRENT_SINK);
    switch (state) {
    case LS_LIM_RAIL_HIGH: return "rail-high";
    case LS_LIM_RAIL_LOW: return "rail-low";
    case LS_LIM_CURRENT_SOURCE:
    case LS_LIM_CURRENT_SINK: return "current";
    default: return "none";
    }
}

/* Unknown idx of x, or 0 V for ground (idx < 0). */
static double xval(const double *x, int idx)
{
    return idx >= 0 ? x[idx] : 0;
}

/* Voltage-defined row k: V(out) - V(level node) = level volts + offset. */
static void clamp_row(ls_sink *s, int out, int k, const ls_level *l, double offset)
{
    ls_sink_a(s, k, out, 1);
    if (l->node > 0)
        ls_sink_a(s, k, ls_node_unknown(l->node), -1);
    ls_sink_b(s, k, l->volts + offset);
}

/* Entries of row k for every limit, as zeros, so the pattern never changes. */
static void opamp_pattern(const ls_part *p, ls_sink *s)
{
    int k = p->branch;
    keep_a(s, k, N(p, 0), 0);
    keep_a(s, k, N(p, 1), 0);
    keep_a(s, k, N(p, 2), 0);
    keep_a(s, k, k, 0);
    if (opamp_has(p, "rails"))
        for (int e = 0; e < 2; e++)
            if (p->range[OA_RAILS][e].node > 0)
                keep_a(s, k, ls_node_unknown(p->range[OA_RAILS][e].node), 0);
}

/* Bias currents, quiescent and supply current: everything outside row k. */
static void opamp_supply(const ls_part *p, ls_stamp_ctx *c)
{
    ls_sink *s = c->sink;
    int pl = N(p, 0), mi = N(p, 1), k = p->branch;
    double sc = src_scale(p, c->run);
    double ib = ls_part_opt_in(c->run, p, "ib", 0), ios = ls_part_opt_in(c->run, p, "ios", 0);
    ls_sink_b(s, pl, -(ib + ios / 2) * sc);
    ls_sink_b(s, mi, -(ib - ios / 2) * sc);
    if (!opamp_has(p, "rails"))
        return;
    int hi = p->range[OA_RAILS][1].node, lo = p->range[OA_RAILS][0].node;
    double iq = ls_part_opt_in(c->run, p, "iq", 0) * sc;
    if (hi > 0) {
        keep_a(s, ls_node_unknown(hi), k, ls_run_state(c->run, p)->side ? 0 : 1);
        ls_sink_b(s, ls_node_unknown(hi), -iq);
    }
    if (lo > 0) {
        keep_a(s, ls_node_unknown(lo), k, ls_run_state(c->run, p)->side ? 1 : 0);
        ls_sink_b(s, ls_node_unknown(lo), iq);
    }
}

/* Does current flow at the op-amp's inputs or rails (bias, rin, rails= on
 * nodes)?  Then its power is not its output's alone. */
static bool opamp_other_pins(const ls_part *p)
{
    if (ls_part_opt(p, "ib", 0) != 0 || ls_part_opt(p, "ios", 0) != 0 || ls_part_opt(p, "rin", 0) > 0)
        return true;
    return opamp_has(p, "rails") && (p->range[OA_RAILS][0].node > 0 || p->range[OA_RAILS][1].node > 0);
}

/* Power absorbed at the inputs and rails (W), the currents as opamp_supply
 * and opamp_stamp draw them: the bias currents into the inputs, rin between
 * them, the output current from the upper rail while sourcing (into the
 * lower one while sinking) and iq from the upper rail to the lower one.  A
 * rail given as a voltage, or ground, is outside the circuit: 0 V here. */
static double opamp_pin_power(const ls_part *p, const ls_run *run, const double *v, double current)
{
    double sc = src_scale(p, run), ib = ls_part_opt_in(run, p, "ib", 0), ios = ls_part_opt_in(run, p, "ios", 0);
    double rin = ls_part_opt_in(run, p, "rin", 0), vp = v[p->pin[0]], vm = v[p->pin[1]];
    double w = (vp * (ib + ios / 2) + vm * (ib - ios / 2)) * sc;
    if (rin > 0)
        w += (vp - vm) * (vp - vm) / rin;
    if (!opamp_has(p, "rails"))
        return w;
    int hi = p->range[OA_RAILS][1].node, lo = p->range[OA_RAILS][0].node;
    double vhi = hi > 0 ? v[hi] : 0, vlo = lo > 0 ? v[lo] : 0;
    w += (ls_run_state(run, p)->side ? vlo : vhi) * current;
    return w + ls_part_opt_in(run, p, "iq", 0) * sc * (vhi - vlo);
}

/* Row k by the limit in force (see above); derivative: d/d gain when free. */
static void opamp_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    int pl = N(p, 0), mi = N(p, 1), out = N(p, 2), k = p->branch;
    double rin = ls_part_opt_in(c->run, p, "rin", 0), vos = ls_part_opt_in(c->run, p, "vos", 0) * src_scale(p, c->run);
    double hr = ls_part_opt_in(c->run, p, "headroom", 0) * src_scale(p, c->run), imax = ls_part_opt_in(c->run, p, "imax", INFINITY);
    if (c->derivative) {
        if (p->has_value && ls_run_state(c->run, p)->state == LS_LIM_NONE) {
            ls_sink_a(c->sink, k, pl, -1);
            ls_sink_a(c->sink, k, mi, 1);
            ls_sink_b(c->sink, k, vos);
        }
        return;
    }
    ls_sink_a(c->sink, out, k, -1);
    if (c->removed) {
        branch_open(c->sink, k);
        return;
    }
    opamp_pattern(p, c->sink);
    if (rin > 0)
        conductance(c->sink, pl, mi, 1 / rin);
    opamp_supply(p, c);
    assert(ls_run_state(c->run, p)->state >= LS_LIM_NONE && ls_run_state(c->run, p)->state <= LS_LIM_CURRENT_SINK);
    switch (ls_run_state(c->run, p)->state) {
    case LS_LIM_RAIL_HIGH:
        clamp_row(c->sink, out, k, &ls_run_range(c->run, p, OA_RAILS)[1], -hr);
        return;
    case LS_LIM_RAIL_LOW:
        clamp_row(c->sink, out, k, &ls_run_range(c->run, p, OA_RAILS)[0], hr);
        return;
    case LS_LIM_CURRENT_SOURCE:
    case LS_LIM_CURRENT_SINK:
        ls_sink_a(c->sink, k, k, 1);
        ls_sink_b(c->sink, k, ls_run_state(c->run, p)->state == LS_LIM_CURRENT_SOURCE ? imax : -imax);
        return;
    default:
        break;
    }
    if (p->has_value) {
        ls_sink_a(c->sink, k, out, 1);
        ls_sink_a(c->sink, k, pl, -ls_run_value(c->run, p));
        ls_sink_a(c->sink, k, mi, ls_run_value(c->run, p));
        ls_sink_a(c->sink, k, k, ls_part_opt_in(c->run, p, "rout", 0));
        ls_sink_b(c->sink, k, ls_run_value(c->run, p) * vos);
    } else {
        ls_sink_a(c->sink, k, pl, 1);
        ls_sink_a(c->sink, k, mi, -1);
        ls_sink_b(c->sink, k, -vos);
    }
}

/* How far the op-amp's own model would drive its output above where it is
 * (V): positive means it pushes up.  Ideal: the input difference itself. */
static double opamp_drive(const ls_part *p, const ls_run *run, const double *x, const double *v)
{
    double vd = v[p->pin[0]] - v[p->pin[1]] + ls_part_opt_in(run, p, "vos", 0) * src_scale(p, run);
    if (!p->has_value)
        return vd;
    return ls_run_value(run, p) * vd - ls_part_opt_in(run, p, "rout", 0) * x[p->branch] - v[p->pin[2]];
}

int ls_opamp_next(const ls_part *p, const ls_run *run, const double *x, const double *v, int *side)
{
    double i = x[p->branch], vout = v[p->pin[2]];
    bool rails = opamp_has(p, "rails");
    double hr = ls_part_opt_in(run, p, "headroom", 0) * src_scale(p, run), imax = ls_part_opt_in(run, p, "imax", INFINITY);
    double vhi = rails ? ls_level_v(&ls_run_range(run, p, OA_RAILS)[1], v) - hr : INFINITY;
    double vlo = rails ? ls_level_v(&ls_run_range(run, p, OA_RAILS)[0], v) + hr : -INFINITY;
    double ev = 1e-9 * (1 + fmax(fabs(vhi < INFINITY ? vhi : 0), fabs(vlo > -INFINITY ? vlo : 0)));
    double ei = isfinite(imax) ? 1e-9 * imax : 0;
    double d = opamp_drive(p, run, x, v);
    const double iside = 1e-12;
    *side = i < -iside ? 1 : i > iside ? 0 : ls_run_state(run, p)->side;
    if (ls_run_state(run, p)->open_loop) {
        /* no feedback sets it: the sign of the input difference picks the rail */
        if (ls_run_state(run, p)->state == LS_LIM_NONE)
            return d >= 0 ? LS_LIM_RAIL_HIGH : LS_LIM_RAIL_LOW;
        if (ls_run_state(run, p)->state == LS_LIM_RAIL_HIGH && d < -ev)
            return LS_LIM_RAIL_LOW;
        if (ls_run_state(run, p)->state == LS_LIM_RAIL_LOW && d > ev)
            return LS_LIM_RAIL_HIGH;
        if ((ls_run_state(run, p)->state == LS_LIM_RAIL_HIGH || ls_run_state(run, p)->state == LS_LIM_RAIL_LOW) && fabs(i) > imax + ei)
            return i > 0 ? LS_LIM_CURRENT_SOURCE : LS_LIM_CURRENT_SINK;
        if (ls_run_state(run, p)->state == LS_LIM_CURRENT_SOURCE && (d < -ev || vout > vhi + ev))
            return d < -ev ? LS_LIM_RAIL_LOW : LS_LIM_RAIL_HIGH;
        if (ls_run_state(run, p)->state == LS_LIM_CURRENT_SINK && (d > ev || vout < vlo - ev))
            return d > ev ? LS_LIM_RAIL_HIGH : LS_LIM_RAIL_LOW;
        return ls_run_state(run, p)->state;
    }
    assert(ls_run_state(run, p)->state >= LS_LIM_NONE && ls_run_state(run, p)->state <= LS_LIM_CURRENT_SINK);
    switch (ls_run_state(run, p)->state) {
    case LS_LIM_RAIL_HIGH:
        if (d < -ev)
            return LS_LIM_NONE;
        return fabs(i) > imax + ei ? (i > 0 ? LS_LIM_CURRENT_SOURCE : LS_LIM_CURRENT_SINK) : LS_LIM_RAIL_HIGH;
    case LS_LIM_RAIL_LOW:
        if (d > ev)
            return LS_LIM_NONE;
        return fabs(i) > imax + ei ? (i > 0 ? LS_LIM_CURRENT_SOURCE : LS_LIM_CURRENT_SINK) : LS_LIM_RAIL_LOW;
    case LS_LIM_CURRENT_SOURCE:
        if (d < -ev)
            return LS_LIM_NONE;
        return vout > vhi + ev ? LS_LIM_RAIL_HIGH : vout < vlo - ev ? LS_LIM_RAIL_LOW : LS_LIM_CURRENT_SOURCE;
    case LS_LIM_CURRENT_SINK:
        if (d > ev)
            return LS_LIM_NONE;
        return vout < vlo - ev ? LS_LIM_RAIL_LOW : vout > vhi + ev ? LS_LIM_RAIL_HIGH : LS_LIM_CURRENT_SINK;
    default:
        if (vout > vhi + ev)
            return LS_LIM_RAIL_HIGH;
        if (vout < vlo - ev)
            return LS_LIM_RAIL_LOW;
        if (i > imax + ei)
            return LS_LIM_CURRENT_SOURCE;
        if (i < -imax - ei)
            return LS_LIM_CURRENT_SINK;
        return LS_LIM_NONE;
    }
}

/* The output is voltage-defined against ground; rin joins the inputs. */
static void opamp_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    bool vdef = !p->has_value || ls_part_opt(p, "rout", 0) == 0;
    emit(ctx, 0, p->pin[2], vdef, -1);
    if (ls_part_opt(p, "rin", 0) > 0)
        emit(ctx, p->pin[0], p->pin[1], false, -1);
}

/* ---- junctions: diode, led, zener --------------------------------------------------- */
/* Shockley's equation I = is (exp(v / (n Vt)) - 1) across the junction, with
 * rs in series (then the junction's anode side is an internal unknown, the
 * part's branch), and for a zener a reverse breakdown term
 * -at (exp((-v - vbd) / (n Vt)) - exp(-vbd / (n Vt))) with vbd set so that the
 * terminal voltage is vz at the current at.  Past LS_JUNCTION_IMAX the
 * exponentials go on as straight lines, so no current overflows; a solution
 * out there is reported as one that cannot be solved.  The companion model
 * stamped at op_v is the conductance g = dI/dv in parallel with the current
 * I(op_v) - g op_v; LS_GMIN and the shrinking junction shunt sit across it. */

typedef struct junction {
    double is, nvt;        /* forward term */
    double ib0, nbvt, vbd; /* breakdown term (ib0 = 0: none) */
    double rs;
} junction;

/* The junction model of a diode, led or zener from its options. */
static junction junction_of(const ls_run *run, const ls_part *p)
{
    junction j = {0};
    const char *k = p->kind->name;
    double n = ls_part_opt_in(run, p, "ideality", strcmp(k, "led") == 0 ? 2 : 1);
    j.rs = ls_part_opt_in(run, p, "rbulk", 0);
    j.nvt = n * LS_THERMAL_VOLTAGE;
    if (strcmp(k, "led") == 0) {
        double vf = ls_part_opt_in(run, p, "vf", 2), at = ls_part_opt_in(run, p, "at", 20e-3);
        j.is = at / expm1(fmax((vf - at * j.rs) / j.nvt, 1e-3));
    } else if (strcmp(k, "zener") == 0) {
        double at = ls_part_opt_in(run, p, "at", 5e-3);
        j.is = ls_part_opt_in(run, p, "isat", 1e-14);
        j.nvt = LS_THERMAL_VOLTAGE;
        j.ib0 = at;
        j.nbvt = n * LS_THERMAL_VOLTAGE;
        j.vbd = ls_part_opt_in(run, p, "vz", 5) - at * j.rs;
    } else {
        j.is = ls_part_opt_in(run, p, "isat", 1e-14);
    }
    return j;
}

/* i0 (exp(u / nvt)) continued linearly above i0 exp(u/nvt) = LS_JUNCTION_IMAX;
 * *g its derivative in u, *beyond set past that point. */
static double lexp(double i0, double u, double nvt, double *g, bool *beyond)
{
    double umax = nvt * fmin(log(LS_JUNCTION_IMAX / i0), 700);
    if (u <= umax) {
        double e = i0 * exp(u / nvt);
        *g = e / nvt;
        return e;
    }
    double e = i0 * exp(umax / nvt);
    *g = e / nvt;
    *beyond = true;
    return e + *g * (u - umax);
}

/* Junction current and conductance at v (no shunts). */
static double junction_eval(const junction *j, double v, double *g, bool *beyond)
{
    double gf, gb = 0;
    double i = lexp(j->is, v, j->nvt, &gf, beyond) - j->is;
    if (j->ib0 > 0) {
        double b0 = j->ib0 * exp(-j->vbd / j->nbvt);
        i -= lexp(j->ib0, -v - j->vbd, j->nbvt, &gb, beyond) - b0;
    }
    *g = gf + gb;
    return i;
}

double ls_junction_current(const ls_run *run, const ls_part *p, double vj, bool *beyond)
{
    junction j = junction_of(run, p);
    double g;
    *beyond = false;
    return junction_eval(&j, vj, &g, beyond);
}

double ls_junction_v(const ls_part *p, const double *x)
{
    int an = p->branch >= 0 ? p->branch : N(p, 0);
    return xval(x, an) - xval(x, N(p, 1));
}

/* With rbulk= the junction's anode side is an internal unknown (one branch). */
static int junction_branches(const ls_part *p)
{
    return ls_part_opt(p, "rbulk", 0) > 0 ? 1 : 0;
}

/* Companion model at op_v; removed: open (the internal unknown pinned). */
static void junction_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->derivative)
        return;
    junction j = junction_of(c->run, p);
    int a = N(p, 0), k = N(p, 1), in = p->branch;
    if (c->removed) {
        if (in >= 0)
            ls_sink_a(c->sink, in, in, 1);
        return;
    }
    bool beyond = false;
    double g;
    double i = junction_eval(&j, ls_run_state(c->run, p)->op_v, &g, &beyond);
    g += LS_GMIN + ls_run_state(c->run, p)->shunt_s;
    i += (LS_GMIN + ls_run_state(c->run, p)->shunt_s) * ls_run_state(c->run, p)->op_v;
    double ieq = i - g * ls_run_state(c->run, p)->op_v;
    int ja = a;
    if (in >= 0) {
        conductance(c->sink, a, in, 1 / j.rs);
        ja = in;
    }
    /* kept even when g underflows to zero (a junction far in reverse), so the
     * pattern does not change between iterations */
    keep_a(c->sink, ja, ja, g);
    keep_a(c->sink, k, k, g);
    keep_a(c->sink, ja, k, -g);
    keep_a(c->sink, k, ja, -g);
    ls_sink_b(c->sink, ja, -ieq);
    ls_sink_b(c->sink, k, ieq);
}

/* Current anode -> cathode: through rs, or the companion model at op_v. */
static void junction_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth)
{
    (void)run; (void)depth;
    if (d)
        return;
    junction j = junction_of(run, p);
    if (p->branch >= 0) {
        lin_add(out, N(p, 0), 1 / j.rs);
        lin_add(out, p->branch, -1 / j.rs);
        return;
    }
    bool beyond = false;
    double g;
    double i = junction_eval(&j, ls_run_state(run, p)->op_v, &g, &beyond);
    g += LS_GMIN + ls_run_state(run, p)->shunt_s;
    i += (LS_GMIN + ls_run_state(run, p)->shunt_s) * ls_run_state(run, p)->op_v;
    lin_add(out, N(p, 0), g);
    lin_add(out, N(p, 1), -g);
    out->constant += i - g * ls_run_state(run, p)->op_v;
}

/* Junctions are always nonlinear. */
static bool always(const ls_part *p) { (void)p; return true; }

/* Start forward-biased near the knee (a led at its rated vf, a zener off). */
static void junction_init(const ls_part *p, ls_run *run)
{
    junction j = junction_of(run, p);
    if (strcmp(p->kind->name, "led") == 0)
        ls_run_state(run, p)->op_v = ls_part_opt_in(run, p, "vf", 2) - ls_part_opt_in(run, p, "at", 20e-3) * j.rs;
    else if (strcmp(p->kind->name, "zener") == 0)
        ls_run_state(run, p)->op_v = 0;
    else
        ls_run_state(run, p)->op_v = j.nvt * log(j.nvt / (sqrt(2) * j.is));
}

/* Junction-voltage limiting of one exponential term i0 exp(u/nvt): a step up
 * past the critical voltage becomes logarithmic, so the current grows by a
 * bounded factor per iteration. */
static double limit_up(double unew, double uold, double i0, double nvt)
{
    double ucrit = nvt * log(nvt / (sqrt(2) * i0));
    double umax = nvt * fmin(log(LS_JUNCTION_IMAX / i0), 700);
    if (unew <= ucrit || unew - uold <= 2 * nvt || uold >= umax)
        return unew;
    double base = uold > ucrit ? uold : ucrit;
    return base + nvt * log1p((unew - base) / nvt);
}

/* Newton step of the junction voltage, limited; settled when it stops moving. */
static bool junction_update(const ls_part *p, ls_run *run, const double *x)
{
    junction j = junction_of(run, p);
    double vnew = ls_junction_v(p, x), vold = ls_run_state(run, p)->op_v;
    double v = vnew;
    if (vnew > vold) {
        v = limit_up(vnew, vold, j.is, j.nvt);
    } else if (j.ib0 > 0) {
        double u = -vnew - j.vbd, ul = limit_up(u, -vold - j.vbd, j.ib0, j.nbvt);
        if (ul != u) /* (only then: -vbd - u need not give vnew back exactly) */
            v = -j.vbd - ul;
    }
    if (!isfinite(v))
        v = vold;
    ls_run_state(run, p)->op_v = v;
    double tol = 1e-9 * j.nvt + 1e-12 * fabs(vnew);
    return v == vnew && fabs(vnew - vold) <= tol;
}

/* A junction conducts (some) at DC: a conductive edge. */
static void junction_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    emit(ctx, p->pin[0], p->pin[1], false, -1);
}

/* ---- pot: a track from a to b, wiper at=0..1 from a --------------------------------- */
/* Pins: 0 a, 1 wiper, 2 b.  Neither segment goes below POT_END of the total,
 * the wiper's contact, so the ends stay finite conductances. */

#define POT_END 1e-6

/* Segment conductances a-wiper and wiper-b (S), or their d/d(total). */
static void pot_g(const ls_part *p, const ls_run *run, bool d, double *g1, double *g2)
{
    double at = ls_part_opt_in(run, p, "at", 0.5), r = ls_run_value(run, p);
    double f1 = fmax(at, POT_END), f2 = fmax(1 - at, POT_END);
    *g1 = d ? -1 / (r * r * f1) : 1 / (r * f1);
    *g2 = d ? -1 / (r * r * f2) : 1 / (r * f2);
}

/* Two conductances; removed: the whole track opened. */
static void pot_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->removed)
        return;
    double g1, g2;
    pot_g(p, c->run, c->derivative, &g1, &g2);
    conductance(c->sink, N(p, 0), N(p, 1), g1);
    conductance(c->sink, N(p, 1), N(p, 2), g2);
}

/* The pot's current is the current in the a -> wiper segment. */
static void pot_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth)
{
    (void)run; (void)depth;
    double g1, g2;
    pot_g(p, run, d, &g1, &g2);
    lin_add(out, N(p, 0), g1);
    lin_add(out, N(p, 1), -g1);
}

/* current a -> wiper, voltage a - b, power of the whole track. */
static void pot_results(const ls_part *p, const ls_run *run, const double *x, const double *v, double out[3])
{
    (void)x;
    double g1, g2;
    pot_g(p, run, false, &g1, &g2);
    double d1 = v[p->pin[0]] - v[p->pin[1]], d2 = v[p->pin[1]] - v[p->pin[2]];
    out[0] = d1 * g1;
    out[1] = v[p->pin[0]] - v[p->pin[2]];
    out[2] = d1 * d1 * g1 + d2 * d2 * g2;
}

/* Both segments conduct. */
static void pot_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    emit(ctx, p->pin[0], p->pin[1], false, -1);
    emit(ctx, p->pin[1], p->pin[2], false, -1);
}

/* ---- ntc thermistor: the Beta equation, optional self-heating ------------------------ */
/* R(T) = r25 exp(beta (1/T - 1/T25)), T in kelvin, T25 = 298.15 K.  With
 * dissipation= (W/K) the body sits at temp + P / dissipation, found by the
 * iteration (op_t); the stamp is the conductance at op_t. */

#define KELVIN 273.15

double ls_ntc_r(const ls_part *p, const ls_run *run, double t_c)
{
    double beta = ls_part_opt_in(run, p, "beta", 3950);
    return ls_run_value(run, p) * exp(beta * (1 / (t_c + KELVIN) - 1 / (25 + KELVIN)));
}

double ls_ntc_body(const ls_part *p, const ls_run *run)
{
    return ls_part_has(p, ls_kind_opt(p->kind, "dissipation")) ? ls_run_state(run, p)->op_t : ls_part_opt_in(run, p, "celsius", 25);
}

/* The conductance at the body temperature; derivative: d/d r25. */
static void ntc_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->removed)
        return;
    double r = ls_ntc_r(p, c->run, ls_ntc_body(p, c->run));
    /* d/d r25 at a fixed body temperature: R is proportional to r25 */
    double g = c->derivative ? -1 / (r * ls_run_value(c->run, p)) : 1 / r;
    conductance(c->sink, N(p, 0), N(p, 1), g);
}

/* Current FROM -> TO through R(T). */
static void ntc_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth)
{
    (void)run; (void)depth;
    double r = ls_ntc_r(p, run, ls_ntc_body(p, run));
    double g = d ? -1 / (r * ls_run_value(run, p)) : 1 / r;
    lin_add(out, N(p, 0), g);
    lin_add(out, N(p, 1), -g);
}

/* Only self-heating makes a thermistor nonlinear. */
static bool ntc_nonlinear(const ls_part *p)
{
    return ls_part_has(p, ls_kind_opt(p->kind, "dissipation"));
}

#define NTC_T_MAX 1e4   /* degC: a body hotter than this has run away */

static void ntc_init(const ls_part *p, ls_run *run)
{
    ls_run_state(run, p)->op_t = ls_part_opt_in(run, p, "celsius", 25);
    ls_run_state(run, p)->heat_t = ls_run_state(run, p)->heat_f = NAN;
}

/* Self-heating: the body temperature T solves T = F(T) = temp + P(T) /
 * dissipation, with P from the last solve (stamped at T).  A secant step on
 * F(T) - T: it damps the fixed point where F falls steeply (current drive)
 * and speeds it up where F rises slowly; where F rises faster than T (thermal
 * runaway) it takes plain steps, which then run off to NTC_T_MAX. */
static bool ntc_update(const ls_part *p, ls_run *run, const double *x)
{
    double v = xval(x, N(p, 0)) - xval(x, N(p, 1)), t = ls_run_state(run, p)->op_t;
    double f = ls_part_opt_in(run, p, "celsius", 25) + v * v / ls_ntc_r(p, run, t) / ls_part_opt_in(run, p, "dissipation", 1);
    double w = 1;
    if (isfinite(ls_run_state(run, p)->heat_t) && t != ls_run_state(run, p)->heat_t) {
        double slope = (f - ls_run_state(run, p)->heat_f) / (t - ls_run_state(run, p)->heat_t);
        if (slope < 0.95)
            w = fmin(20, 1 / (1 - slope));
    }
    ls_run_state(run, p)->heat_t = t;
    ls_run_state(run, p)->heat_f = f;
    double next = t + w * (f - t);
    if (!isfinite(next) || next > NTC_T_MAX)
        next = NTC_T_MAX;
    if (next < -KELVIN + 1)
        next = -KELVIN + 1;
    ls_run_state(run, p)->op_t = next;
    return fabs(f - t) <= 1e-9 * (1 + fabs(t)) && t < NTC_T_MAX;
}

/* ---- switch: state=open|closed ------------------------------------------------------- */
/* Always one branch, so flipping the state keeps the structure:
 * closed V(a) - V(b) = ron I; open I = 0, or V(a) - V(b) = roff I with roff=. */

/* Is the switch closed in run (NULL: as elaborated)? */
static bool switch_closed(const ls_run *run, const ls_part *p)
{
    return ls_part_opt_in(run, p, "state", 1) != 0;
}

/* Branch row by state, its pattern kept for both. */
static void switch_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->derivative)
        return;
    int f = N(p, 0), t = N(p, 1), k = p->branch;
    branch_kcl(c->sink, f, t, k);
    keep_a(c->sink, k, f, 0);
    keep_a(c->sink, k, t, 0);
    keep_a(c->sink, k, k, 0);
    bool roff = ls_part_has(p, ls_kind_opt(p->kind, "roff"));
    if (c->removed || (!switch_closed(c->run, p) && !roff)) {
        branch_open(c->sink, k);
        return;
    }
    ls_sink_a(c->sink, k, f, 1);
    ls_sink_a(c->sink, k, t, -1);
    ls_sink_a(c->sink, k, k, -(switch_closed(c->run, p) ? ls_part_opt_in(c->run, p, "ron", 0) : ls_part_opt_in(c->run, p, "roff", 0)));
}

/* Closed: a (voltage-defined when ron = 0) edge; open: none unless roff=. */
static void switch_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    bool roff = ls_part_has(p, ls_kind_opt(p->kind, "roff"));
    if (switch_closed(NULL, p))
        emit(ctx, p->pin[0], p->pin[1], ls_part_opt(p, "ron", 0) == 0, -1);
    else if (roff)
        emit(ctx, p->pin[0], p->pin[1], false, -1);
}

/* ---- adc: an ADC input as a load -------------------------------------------------------- */
/* Pin 0 in.  rin= to ground and leak= drawn from the pin (A, into the pin). */

static void adc_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->removed || c->derivative)
        return;
    double rin = ls_part_opt_in(c->run, p, "rin", 0);
    if (rin > 0)
        ls_sink_a(c->sink, N(p, 0), N(p, 0), 1 / rin);
    ls_sink_b(c->sink, N(p, 0), -ls_part_opt_in(c->run, p, "leak", 0) * src_scale(p, c->run));
}

/* Current into the pin: V/rin + leak. */
static void adc_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth)
{
    (void)run; (void)depth;
    if (d)
        return;
    double rin = ls_part_opt_in(run, p, "rin", 0);
    if (rin > 0)
        lin_add(out, N(p, 0), 1 / rin);
    out->constant += ls_part_opt_in(run, p, "leak", 0) * src_scale(p, run);
}

/* current into the pin, voltage at it, power it absorbs. */
static void adc_results(const ls_part *p, const ls_run *run, const double *x, const double *v, double out[3])
{
    (void)run;
    double rin = ls_part_opt_in(run, p, "rin", 0), vin = v[p->pin[0]];
    (void)x;
    out[0] = (rin > 0 ? vin / rin : 0) + ls_part_opt_in(run, p, "leak", 0);
    out[1] = vin;
    out[2] = vin * out[0];
}

double ls_adc_lsb(const ls_part *p) { return ls_adc_lsb_in(NULL, p); }

double ls_adc_lsb_in(const ls_run *run, const ls_part *p)
{
    return ls_part_opt_in(run, p, "ref", 1) / ldexp(1, (int)ls_part_opt_in(run, p, "bits", 1));
}

/* rin= is a DC path to ground. */
static void adc_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    if (ls_part_opt(p, "rin", 0) > 0)
        emit(ctx, p->pin[0], 0, false, -1);
}

/* ---- the table ----------------------------------------------------------------- */

#define COMMON_OPTS                                              \
    {"tol", OPT_VALUE, LS_FREE, OPTF_NONNEG, -1, NULL},          \
    {"rating", OPT_VALUE, LS_WATT, OPTF_POSITIVE, -1, NULL},     \
    {"free", OPT_FREE, LS_FREE, 0, -1, NULL}
#define NCOMMON 3
/* Earlier spellings of the junction options, each answered with its new name. */
#define JUNCTION_RENAMED {{"is", "isat"}, {"n", "ideality"}, {"rs", "rbulk"}}

#ifdef LS_TEST_KINDS
/* tests/house/testsink_kind.c: a current sink with a compliance limit, built
 * only into the test program loadstack_toy (tests/house/meson.build). */
int ls_testsink_branches(const ls_part *p);
void ls_testsink_stamp(const ls_part *p, ls_stamp_ctx *c);
void ls_testsink_current(const ls_part *p, const ls_run *run, ls_lin *out, bool derivative, int depth);
void ls_testsink_edges(const ls_part *p, void *ctx, ls_edge_fn emit);
bool ls_testsink_nonlinear(const ls_part *p);
void ls_testsink_init(const ls_part *p, ls_run *run);
bool ls_testsink_update(const ls_part *p, ls_run *run, const double *x);
#endif

static const ls_kind kinds[] = {
    {.name = "resistor", .exact = LS_EXACT_RESISTOR, .is_resistance = true, .shape = SHAPE_TWO, .doc = "resistor FROM -> TO VALUE [rating=W vmax=V]",
     .value_slot = true, .value_dims = LS_OHM, .value_flags = OPTF_REQUIRED | OPTF_POSITIVE,
     .vsign = VSIGN_DROP, .opts = {COMMON_OPTS, {"snap", OPT_WORD, LS_FREE, 0, -1, "E6|E12|E24|E48|E96|E192"},
                                   {"vmax", OPT_VALUE, LS_VOLT, OPTF_POSITIVE, -1, NULL}},
     .nopts = NCOMMON + 2, .npins = 2,
     .branches = no_branch, .stamp = resistor_stamp, .current = resistor_current, .edges = two_edge,
     .monotone = resistor_monotone},
    {.name = "voltage", .exact = LS_EXACT_VSOURCE, .has_run = true, .shape = SHAPE_TWO, .stage_role = LS_ROLE_SOURCE, .removal = LS_REMOVE_SHORT, .doc = "voltage FROM -> TO VALUE [rint=R]  (V(TO) - V(FROM) = VALUE)",
     .value_slot = true, .value_dims = LS_VOLT, .value_flags = OPTF_REQUIRED, .vsign = VSIGN_RISE,
     .opts = {COMMON_OPTS, {"rint", OPT_VALUE, LS_OHM, OPTF_NONNEG, -1, NULL}}, .nopts = NCOMMON + 1,
     .renamed = {{"rs", "rint"}},
     .npins = 2, .branches = one_branch, .stamp = vsource_stamp, .current = current_branch,
     .edges = vsource_edges, .monotone = vsource_monotone},
    {.name = "current", .exact = LS_EXACT_ISOURCE, .has_run = true, .shape = SHAPE_TWO, .stage_role = LS_ROLE_SENSOR, .doc = "current FROM -> TO VALUE  (VALUE flows FROM -> TO through it)",
     .value_slot = true, .value_dims = LS_AMP, .value_flags = OPTF_REQUIRED, .vsign = VSIGN_RISE,
     .opts = {COMMON_OPTS}, .nopts = NCOMMON, .npins = 2, .branches = no_branch,
     .stamp = isource_stamp, .current = isource_current, .edges = no_edges, .monotone = isource_monotone},
    {.name = "port", .exact = LS_EXACT_PORT, .shape = SHAPE_TWO, .doc = "port DRIVER -> LOAD [mode=voltage|current budget=V|%|LSB]",
     .vsign = VSIGN_DROP, .is_port = true,
     .opts = {COMMON_OPTS, {"mode", OPT_WORD, LS_FREE, 0, -1, "voltage|current"},
              {"budget", OPT_VALUE, LS_VOLT, OPTF_BUDGET, -1, NULL}}, .nopts = NCOMMON + 2,
     .npins = 2, .branches = one_branch, .stamp = port_stamp, .current = current_branch,
     .edges = vdef_edges},
    {.name = "vcvs", .exact = LS_EXACT_VCVS, .shape = SHAPE_TWO, .removal = LS_REMOVE_SHORT, .doc = "vcvs FROM -> TO gain=G cplus=A cminus=B",
     .value_slot = true, .value_dims = LS_FREE, .vsign = VSIGN_RISE,
     .opts = {COMMON_OPTS, {"gain", OPT_VALUE, LS_FREE, OPTF_MAIN | OPTF_REQUIRED, -1, NULL},
              {"cplus", OPT_NODE, LS_FREE, OPTF_REQUIRED, 2, NULL},
              {"cminus", OPT_NODE, LS_FREE, OPTF_REQUIRED, 3, NULL}},
     .nopts = NCOMMON + 3, .npins = 4, .branches = one_branch, .stamp = vcvs_stamp,
     .current = current_branch, .edges = vdef_edges},
    {.name = "vccs", .exact = LS_EXACT_VCCS, .shape = SHAPE_TWO, .doc = "vccs FROM -> TO gm=G cplus=A cminus=B",
     .value_slot = true, .value_dims = LS_SIEMENS, .vsign = VSIGN_RISE,
     .opts = {COMMON_OPTS, {"gm", OPT_VALUE, LS_SIEMENS, OPTF_MAIN | OPTF_REQUIRED, -1, NULL},
              {"cplus", OPT_NODE, LS_FREE, OPTF_REQUIRED, 2, NULL},
              {"cminus", OPT_NODE, LS_FREE, OPTF_REQUIRED, 3, NULL}},
     .nopts = NCOMMON + 3, .npins = 4, .branches = no_branch, .stamp = vccs_stamp,
     .current = vccs_current, .edges = no_edges},
    {.name = "cccs", .exact = LS_EXACT_CCCS, .via_use = LS_VIA_CURRENT, .shape = SHAPE_TWO, .doc = "cccs FROM -> TO gain=G via=PART",
     .value_slot = true, .value_dims = LS_FREE, .vsign = VSIGN_RISE,
     .opts = {COMMON_OPTS, {"gain", OPT_VALUE, LS_FREE, OPTF_MAIN | OPTF_REQUIRED, -1, NULL},
              {"via", OPT_PART, LS_FREE, OPTF_REQUIRED, -1, NULL}},
     .nopts = NCOMMON + 2, .npins = 2, .branches = no_branch, .stamp = cccs_stamp,
     .current = cccs_current, .edges = no_edges},
    {.name = "ccvs", .exact = LS_EXACT_CCVS, .via_use = LS_VIA_VOLTAGE, .shape = SHAPE_TWO, .removal = LS_REMOVE_SHORT, .doc = "ccvs FROM -> TO rm=R via=PART",
     .value_slot = true, .value_dims = LS_OHM, .vsign = VSIGN_RISE,
     .opts = {COMMON_OPTS, {"rm", OPT_VALUE, LS_OHM, OPTF_MAIN | OPTF_REQUIRED, -1, NULL},
              {"via", OPT_PART, LS_FREE, OPTF_REQUIRED, -1, NULL}},
     .nopts = NCOMMON + 2, .npins = 2, .branches = one_branch, .stamp = ccvs_stamp,
     .current = current_branch, .edges = vdef_edges},
    {.name = "opamp", .exact = LS_EXACT_OPAMP, .has_run = true, .shape = SHAPE_PINNED, .stage_role = LS_ROLE_OPAMP,
     .doc = "opamp plus=A minus=B out=Y [gain=G rin=R rout=R rails=LO..HI headroom=V imax=A cm=LO..HI vos=V ib=A "
            "ios=A iq=A]",
     .vsign = VSIGN_OUT, .is_opamp = true,
     .opts = {COMMON_OPTS, {"plus", OPT_NODE, LS_FREE, OPTF_REQUIRED, 0, NULL},
              {"minus", OPT_NODE, LS_FREE, OPTF_REQUIRED, 1, NULL},
              {"out", OPT_NODE, LS_FREE, OPTF_REQUIRED, 2, NULL},
              {"gain", OPT_VALUE, LS_FREE, OPTF_MAIN | OPTF_POSITIVE, -1, NULL},
              {"rin", OPT_VALUE, LS_OHM, OPTF_POSITIVE, -1, NULL},
              {"rout", OPT_VALUE, LS_OHM, OPTF_NONNEG, -1, NULL},
              {"rails", OPT_RANGE, LS_VOLT, 0, OA_RAILS, NULL},
              {"headroom", OPT_VALUE, LS_VOLT, OPTF_NONNEG, -1, NULL},
              {"imax", OPT_VALUE, LS_AMP, OPTF_POSITIVE, -1, NULL},
              {"cm", OPT_RANGE, LS_VOLT, 0, OA_CM, NULL},
              {"vos", OPT_VALUE, LS_VOLT, 0, -1, NULL},
              {"ib", OPT_VALUE, LS_AMP, 0, -1, NULL},
              {"ios", OPT_VALUE, LS_AMP, 0, -1, NULL},
              {"iq", OPT_VALUE, LS_AMP, OPTF_NONNEG, -1, NULL}},
     .nopts = NCOMMON + 14, .npins = 3, .branches = one_branch, .stamp = opamp_stamp,
     .current = current_branch, .edges = opamp_edges, .other_pins = opamp_other_pins,
     .pin_power = opamp_pin_power},
    {.name = "diode", .has_run = true, .shape = SHAPE_TWO, .is_junction = true, .doc = "diode ANODE -> CATHODE [isat=A ideality=N rbulk=R imax=A]",
     .vsign = VSIGN_DROP,
     .opts = {COMMON_OPTS, {"isat", OPT_VALUE, LS_AMP, OPTF_POSITIVE, -1, NULL},
              {"ideality", OPT_VALUE, LS_FREE, OPTF_POSITIVE, -1, NULL},
              {"rbulk", OPT_VALUE, LS_OHM, OPTF_NONNEG, -1, NULL},
              {"imax", OPT_VALUE, LS_AMP, OPTF_POSITIVE, -1, NULL}},
     .nopts = NCOMMON + 4, .npins = 2, .branches = junction_branches, .stamp = junction_stamp,
     .current = junction_current, .edges = junction_edges, .renamed = JUNCTION_RENAMED,
     .is_nonlinear = always, .init = junction_init,
     .update = junction_update},
    {.name = "led", .has_run = true, .shape = SHAPE_TWO, .is_junction = true, .doc = "led ANODE -> CATHODE vf=V [at=A ideality=N rbulk=R imax=A]",
     .vsign = VSIGN_DROP,
     .opts = {COMMON_OPTS, {"vf", OPT_VALUE, LS_VOLT, OPTF_POSITIVE | OPTF_REQUIRED, -1, NULL},
              {"at", OPT_VALUE, LS_AMP, OPTF_POSITIVE, -1, NULL},
              {"ideality", OPT_VALUE, LS_FREE, OPTF_POSITIVE, -1, NULL},
              {"rbulk", OPT_VALUE, LS_OHM, OPTF_NONNEG, -1, NULL},
              {"imax", OPT_VALUE, LS_AMP, OPTF_POSITIVE, -1, NULL}},
     .nopts = NCOMMON + 5, .npins = 2, .branches = junction_branches, .stamp = junction_stamp,
     .current = junction_current, .edges = junction_edges, .renamed = JUNCTION_RENAMED,
     .is_nonlinear = always, .init = junction_init,
     .update = junction_update},
    {.name = "zener", .has_run = true, .shape = SHAPE_TWO, .is_junction = true, .doc = "zener ANODE -> CATHODE vz=V [at=A ideality=N isat=A rbulk=R imax=A]",
     .vsign = VSIGN_DROP,
     .opts = {COMMON_OPTS, {"vz", OPT_VALUE, LS_VOLT, OPTF_POSITIVE | OPTF_REQUIRED, -1, NULL},
              {"at", OPT_VALUE, LS_AMP, OPTF_POSITIVE, -1, NULL},
              {"ideality", OPT_VALUE, LS_FREE, OPTF_POSITIVE, -1, NULL},
              {"isat", OPT_VALUE, LS_AMP, OPTF_POSITIVE, -1, NULL},
              {"rbulk", OPT_VALUE, LS_OHM, OPTF_NONNEG, -1, NULL},
              {"imax", OPT_VALUE, LS_AMP, OPTF_POSITIVE, -1, NULL}},
     .nopts = NCOMMON + 6, .npins = 2, .branches = junction_branches, .stamp = junction_stamp,
     .current = junction_current, .edges = junction_edges, .renamed = JUNCTION_RENAMED,
     .is_nonlinear = always, .init = junction_init,
     .update = junction_update},
    {.name = "pot", .shape = SHAPE_PINNED, .stage_role = LS_ROLE_SENSOR, .doc = "pot NAME TOTAL a=A wiper=W b=B [at=0..1]",
     .value_slot = true, .value_dims = LS_OHM, .value_flags = OPTF_REQUIRED | OPTF_POSITIVE, .vsign = VSIGN_ENDS,
     .opts = {COMMON_OPTS, {"a", OPT_NODE, LS_FREE, OPTF_REQUIRED, 0, NULL},
              {"wiper", OPT_NODE, LS_FREE, OPTF_REQUIRED, 1, NULL},
              {"b", OPT_NODE, LS_FREE, OPTF_REQUIRED, 2, NULL},
              {"at", OPT_VALUE, LS_FREE, OPTF_FRACTION, -1, NULL}},
     .nopts = NCOMMON + 4, .npins = 3, .branches = no_branch, .stamp = pot_stamp, .current = pot_current,
     .edges = pot_edges, .results = pot_results},
    {.name = "ntc", .has_run = true, .has_body_temp = true, .shape = SHAPE_TWO, .stage_role = LS_ROLE_SENSOR, .doc = "ntc FROM -> TO r25=R beta=K [celsius=degC dissipation=W/K]",
     .vsign = VSIGN_DROP,
     .opts = {COMMON_OPTS, {"r25", OPT_VALUE, LS_OHM, OPTF_MAIN | OPTF_POSITIVE | OPTF_REQUIRED, -1, NULL},
              {"beta", OPT_VALUE, LS_FREE, OPTF_POSITIVE | OPTF_REQUIRED, -1, NULL},
              {"celsius", OPT_VALUE, LS_FREE, 0, -1, NULL},
              {"dissipation", OPT_VALUE, LS_WATT, OPTF_POSITIVE, -1, NULL}},
     .nopts = NCOMMON + 4, .npins = 2, .branches = no_branch, .stamp = ntc_stamp, .current = ntc_current,
     .edges = two_edge, .renamed = {{"temp", "celsius"}},
     .is_nonlinear = ntc_nonlinear, .init = ntc_init, .update = ntc_update},
    {.name = "switch", .exact = LS_EXACT_SWITCH, .shape = SHAPE_TWO, .doc = "switch FROM -> TO state=open|closed|LET [ron=R roff=R]",
     .vsign = VSIGN_DROP,
     .opts = {COMMON_OPTS, {"state", OPT_WORD, LS_FREE, OPTF_REQUIRED, -1, "open|closed"},
              {"ron", OPT_VALUE, LS_OHM, OPTF_NONNEG, -1, NULL},
              {"roff", OPT_VALUE, LS_OHM, OPTF_POSITIVE, -1, NULL}},
     .nopts = NCOMMON + 3, .npins = 2, .branches = one_branch, .stamp = switch_stamp,
     .current = current_branch, .edges = switch_edges},
    {.name = "adc", .exact = LS_EXACT_ADC, .is_adc = true, .has_run = true, .shape = SHAPE_PINNED, .stage_role = LS_ROLE_ADC,
     .doc = "adc NAME in=NODE ref=V bits=N [rin=R leak=A max_source=R]",
     .vsign = VSIGN_IN,
     .opts = {COMMON_OPTS, {"in", OPT_NODE, LS_FREE, OPTF_REQUIRED, 0, NULL},
              {"ref", OPT_VALUE, LS_VOLT, OPTF_POSITIVE | OPTF_REQUIRED, -1, NULL},
              {"bits", OPT_VALUE, LS_FREE, OPTF_POSITIVE | OPTF_REQUIRED | OPTF_INTEGER, -1, NULL},
              {"rin", OPT_VALUE, LS_OHM, OPTF_POSITIVE, -1, NULL},
              {"leak", OPT_VALUE, LS_AMP, 0, -1, NULL},
              {"max_source", OPT_VALUE, LS_OHM, OPTF_POSITIVE, -1, NULL}},
     .nopts = NCOMMON + 6, .npins = 1, .branches = no_branch, .stamp = adc_stamp, .current = adc_current,
     .edges = adc_edges, .results = adc_results},
#ifdef LS_TEST_KINDS
    /* Built only into the tests' loadstack_toy: a kind with a limit, added as
     * one family file (tests/house/testsink_kind.c) plus this entry. */
    {.name = "testsink", .has_run = true, .shape = SHAPE_TWO, .removal = LS_REMOVE_OPEN,
     .doc = "testsink FROM -> TO VALUE compliance=V  (draws VALUE FROM -> TO while V(FROM) - V(TO) >= compliance)",
     .value_slot = true, .value_dims = LS_AMP, .value_flags = OPTF_REQUIRED | OPTF_POSITIVE, .vsign = VSIGN_DROP,
     .opts = {COMMON_OPTS, {"compliance", OPT_VALUE, LS_VOLT, OPTF_REQUIRED | OPTF_POSITIVE, -1, NULL}},
     .nopts = NCOMMON + 1, .npins = 2, .branches = ls_testsink_branches, .stamp = ls_testsink_stamp,
     .current = ls_testsink_current, .edges = ls_testsink_edges,
     .is_nonlinear = ls_testsink_nonlinear, .init = ls_testsink_init, .update = ls_testsink_update},
#endif
};

int ls_kind_count(void) { return (int)(sizeof kinds / sizeof kinds[0]); }
const ls_kind *ls_kind_at(int i)
{
    assert(i >= 0 && i < ls_kind_count());
    return &kinds[i];
}

const ls_kind *ls_kind_findn(const char *name, size_t n)
{
    for (int i = 0; i < ls_kind_count(); i++)
        if (strlen(kinds[i].name) == n && memcmp(kinds[i].name, name, n) == 0)
            return &kinds[i];
    return NULL;
}

const ls_kind *ls_kind_find(const char *name)
{
    return ls_kind_findn(name, strlen(name));
}

int ls_kind_opt(const ls_kind *k, const char *name)
{
    /* called by the stamps on every solve (a fit's candidates, a tol's
     * trials): the first letter rules out most names without a call */
    for (int i = 0; i < k->nopts; i++)
        if (k->opts[i].name[0] == name[0] && strcmp(k->opts[i].name, name) == 0)
            return i;
    return -1;
}

ls_dims ls_kind_main_dims(const ls_kind *k)
{
    for (int i = 0; i < k->nopts; i++)
        if (k->opts[i].flags & OPTF_MAIN)
            return k->opts[i].dims;
    return k->value_dims;
}

const char *ls_kind_renamed(const ls_kind *k, const char *name)
{
    for (int i = 0; i < LS_MAX_RENAMED && k->renamed[i].old; i++)
        if (strcmp(k->renamed[i].old, name) == 0)
            return k->renamed[i].now;
    return NULL;
}

/* A part's DC edges as its kind's edges() gives them (ls_part_same_shape). */
#define SHAPE_EDGES 8
typedef struct shape {
    int n;
    struct { int a, b; bool vdef; } e[SHAPE_EDGES];
    bool overflow;
} shape;

static void shape_edge(void *ctx, int a, int b, bool vdef, int part)
{
    (void)part;
    shape *s = ctx;
    if (s->n == SHAPE_EDGES) {
        s->overflow = true;
        return;
    }
    s->e[s->n].a = a;
    s->e[s->n].b = b;
    s->e[s->n++].vdef = vdef;
}

bool ls_part_same_shape(const ls_part *p, const ls_part *q)
{
    const ls_kind *k = p->kind;
    if (q->kind != k || (k->branches && k->branches(p) != k->branches(q)) ||
        (k->other_pins && k->other_pins(p) != k->other_pins(q)) ||
        (k->is_nonlinear && k->is_nonlinear(p) != k->is_nonlinear(q)) ||
        (k->monotone && k->monotone(p) != k->monotone(q)))
        return false;
    if (!k->edges)
        return true;
    shape a = {0}, b = {0};
    k->edges(p, &a, shape_edge);
    k->edges(q, &b, shape_edge);
    if (a.overflow || b.overflow || a.n != b.n)
        return false;
    for (int i = 0; i < a.n; i++)
        if (a.e[i].a != b.e[i].a || a.e[i].b != b.e[i].b || a.e[i].vdef != b.e[i].vdef)
            return false;
    return true;
}

void ls_part_current(const ls_part *p, const ls_run *run, ls_lin *out, bool derivative)
{
    /* idx[] and coef[] are read only below n: clearing them too was a fifth of
     * the per-part results of a large grid */
    out->n = 0;
    out->constant = 0;
    out->overflow = false;
    p->kind->current(p, run, out, derivative, 0);
}
