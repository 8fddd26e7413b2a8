/* testsink_kind.c — a part kind written the way DEVELOPERS.md "Adding a part
 * kind" says, compiled only into the test program loadstack_toy: a current sink
 * with a compliance limit.
 *
 *   testsink FROM -> TO VALUE compliance=V
 *
 * While V(FROM) - V(TO) >= compliance it draws VALUE (A) from FROM to TO
 * through itself.  Below its compliance it cannot hold the current and acts as
 * the resistance compliance / VALUE, so its current falls in proportion to its
 * voltage and is continuous at the knee.  Its state (the limit in force) lives
 * in the part's run state and is settled by the operating-point iteration
 * through the table's init/update hooks; removed (sag, ports) it is opened. */
#include "parts/family.h"

#include <math.h>

enum { SINK_REGULATING = 0, SINK_SATURATED = 1 };

/* V: its compliance= in this run (a sweep may set it). */
static double compliance(const ls_part *p, const ls_run *run)
{
    return ls_part_opt_in(run, p, "compliance", 1);
}

/* S: the conductance below the compliance. */
static double saturated_g(const ls_part *p, const ls_run *run)
{
    return ls_run_value(run, p) / compliance(p, run);
}

/* No branch current unknown: its current is VALUE or g (V(FROM) - V(TO)). */
int ls_testsink_branches(const ls_part *p)
{
    (void)p;
    return 0;
}

/* MNA entries: a current VALUE out of FROM into TO while regulating, the
 * conductance compliance / VALUE while saturated; nothing when removed.  The
 * derivative is d/d VALUE of the same entries. */
void ls_testsink_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->removed)
        return;
    int from = N(p, 0), to = N(p, 1);
    if (ls_run_state(c->run, p)->state == SINK_SATURATED) {
        double g = c->derivative ? 1 / compliance(p, c->run) : saturated_g(p, c->run);
        conductance(c->sink, from, to, g);
        return;
    }
    double i = c->derivative ? 1 : ls_run_value(c->run, p);
    ls_sink_b(c->sink, from, -i);
    ls_sink_b(c->sink, to, i);
}

/* Its current FROM -> TO (A) as a linear form in the unknowns. */
void ls_testsink_current(const ls_part *p, const ls_run *run, ls_lin *out, bool derivative, int depth)
{
    (void)depth;
    if (ls_run_state(run, p)->state == SINK_SATURATED) {
        double g = derivative ? 1 / compliance(p, run) : saturated_g(p, run);
        lin_add(out, N(p, 0), g);
        lin_add(out, N(p, 1), -g);
        return;
    }
    out->constant += derivative ? 1 : ls_run_value(run, p);
}

/* A current sink is no DC path for the topology checks (like a current source). */
void ls_testsink_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    (void)p;
    (void)ctx;
    (void)emit;
}

/* Its limit makes it piecewise linear: it always iterates. */
bool ls_testsink_nonlinear(const ls_part *p)
{
    (void)p;
    return true;
}

/* Starts regulating. */
void ls_testsink_init(const ls_part *p, ls_run *run)
{
    ls_run_state(run, p)->state = SINK_REGULATING;
}

/* The state the last solve x calls for; true when it is the one in force. */
bool ls_testsink_update(const ls_part *p, ls_run *run, const double *x)
{
    double v = xval(x, N(p, 0)) - xval(x, N(p, 1));
    int want;
    if (ls_run_state(run, p)->state == SINK_REGULATING)
        want = v >= compliance(p, run) ? SINK_REGULATING : SINK_SATURATED;
    else   /* saturated: its current g v reaches VALUE exactly at the compliance */
        want = v > compliance(p, run) ? SINK_REGULATING : SINK_SATURATED;
    bool settled = want == ls_run_state(run, p)->state;
    ls_run_state(run, p)->state = want;
    return settled;
}
