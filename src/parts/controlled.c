/* controlled.c — the controlled sources: vcvs, vccs, and cccs and ccvs,
 * which read their via= part's current. */
#include "parts/family.h"

#include <string.h>

/* ---- controlled sources ---------------------------------------------------------- */
/* Pins: 0 FROM, 1 TO, 2 cplus, 3 cminus. */

void ls_vcvs_stamp(const ls_part *p, ls_stamp_ctx *c)
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

void ls_vccs_stamp(const ls_part *p, ls_stamp_ctx *c)
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

void ls_vccs_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth)
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

void ls_cccs_stamp(const ls_part *p, ls_stamp_ctx *c)
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

void ls_cccs_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth)
{
    ls_lin l;
    via_lin(p, run, &l, depth);
    double g = d ? 1 : ls_run_value(run, p);
    for (int i = 0; i < l.n; i++)
        lin_add(out, l.idx[i], g * l.coef[i]);
    out->constant += g * l.constant;
    out->overflow |= l.overflow;
}

void ls_ccvs_stamp(const ls_part *p, ls_stamp_ctx *c)
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
