/* opamp.c — the op-amp: ideal or finite gain, its DC error model, and
 * its output limits (rails, current), chosen by the iteration. */
#include "parts/family.h"

#include <assert.h>
#include <math.h>

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
bool ls_opamp_other_pins(const ls_part *p)
{
    if (ls_part_opt(p, "ib", 0) != 0 || ls_part_opt(p, "ios", 0) != 0 || ls_part_opt(p, "rin", 0) > 0)
        return true;
    return opamp_has(p, "rails") && (p->range[OA_RAILS][0].node > 0 || p->range[OA_RAILS][1].node > 0);
}

/* Power absorbed at the inputs and rails (W), the currents as opamp_supply
 * and ls_opamp_stamp draw them: the bias currents into the inputs, rin between
 * them, the output current from the upper rail while sourcing (into the
 * lower one while sinking) and iq from the upper rail to the lower one.  A
 * rail given as a voltage, or ground, is outside the circuit: 0 V here. */
double ls_opamp_pin_power(const ls_part *p, const ls_run *run, const double *v, double current)
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
void ls_opamp_stamp(const ls_part *p, ls_stamp_ctx *c)
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
void ls_opamp_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    bool vdef = !p->has_value || ls_part_opt(p, "rout", 0) == 0;
    emit(ctx, 0, p->pin[2], vdef, -1);
    if (ls_part_opt(p, "rin", 0) > 0)
        emit(ctx, p->pin[0], p->pin[1], false, -1);
}
