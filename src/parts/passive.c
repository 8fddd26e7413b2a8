/* passive.c — the parts that only conduct: resistor, port (a zero-volt
 * branch whose current is the load current), pot and switch. */
#include "parts/family.h"

#include <math.h>

/* ---- resistor ----------------------------------------------------------------- */

void ls_resistor_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->removed)
        return;
    double g = c->derivative ? -1 / (ls_run_value(c->run, p) * ls_run_value(c->run, p)) : 1 / ls_run_value(c->run, p);
    conductance(c->sink, N(p, 0), N(p, 1), g);
}

void ls_resistor_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth)
{
    (void)run; (void)depth;
    double g = d ? -1 / (ls_run_value(run, p) * ls_run_value(run, p)) : 1 / ls_run_value(run, p);
    lin_add(out, N(p, 0), g);
    lin_add(out, N(p, 1), -g);
}

/* A positive conductance between two nodes keeps the nodal matrix an M-matrix. */
int ls_resistor_monotone(const ls_part *p)
{
    return p->value > 0 && isfinite(p->value);
}

/* ---- port: a zero-volt branch whose current is the load current --------------- */

void ls_port_stamp(const ls_part *p, ls_stamp_ctx *c)
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
void ls_pot_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->removed)
        return;
    double g1, g2;
    pot_g(p, c->run, c->derivative, &g1, &g2);
    conductance(c->sink, N(p, 0), N(p, 1), g1);
    conductance(c->sink, N(p, 1), N(p, 2), g2);
}

/* The pot's current is the current in the a -> wiper segment. */
void ls_pot_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth)
{
    (void)run; (void)depth;
    double g1, g2;
    pot_g(p, run, d, &g1, &g2);
    lin_add(out, N(p, 0), g1);
    lin_add(out, N(p, 1), -g1);
}

/* current a -> wiper, voltage a - b, power of the whole track. */
void ls_pot_results(const ls_part *p, const ls_run *run, const double *x, const double *v, double out[3])
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
void ls_pot_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    emit(ctx, p->pin[0], p->pin[1], false, -1);
    emit(ctx, p->pin[1], p->pin[2], false, -1);
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
void ls_switch_stamp(const ls_part *p, ls_stamp_ctx *c)
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
void ls_switch_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    bool roff = ls_part_has(p, ls_kind_opt(p->kind, "roff"));
    if (switch_closed(NULL, p))
        emit(ctx, p->pin[0], p->pin[1], ls_part_opt(p, "ron", 0) == 0, -1);
    else if (roff)
        emit(ctx, p->pin[0], p->pin[1], false, -1);
}
