/* sources.c — the independent sources: voltage and current, both
 * ramped up by the run's src_cut while the sources are stepped. */
#include "parts/family.h"

/* ---- independent sources ------------------------------------------------------ */

void ls_vsource_stamp(const ls_part *p, ls_stamp_ctx *c)
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
int ls_vsource_monotone(const ls_part *p)
{
    if (ls_part_opt(p, "rint", 0) < 0)
        return 0;
    return p->pin[0] == 0 ? 1 : p->pin[1] == 0 ? -1 : 0;
}

/* A current source only enters the right-hand side. */
int ls_isource_monotone(const ls_part *p)
{
    (void)p;
    return 1;
}

void ls_vsource_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    emit(ctx, p->pin[0], p->pin[1], ls_part_opt(p, "rint", 0) == 0, -1);
}

void ls_isource_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->removed)
        return;
    double i = c->derivative ? 1 : ls_run_value(c->run, p) * src_scale(p, c->run);
    ls_sink_b(c->sink, N(p, 0), -i);
    ls_sink_b(c->sink, N(p, 1), i);
}

void ls_isource_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth)
{
    (void)run; (void)depth;
    out->constant += d ? 1 : ls_run_value(run, p) * src_scale(p, run);
}
