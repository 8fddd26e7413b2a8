/* adc.c — an ADC input as a load, and its LSB. */
#include "parts/family.h"

#include <math.h>

/* ---- adc: an ADC input as a load -------------------------------------------------------- */
/* Pin 0 in.  rin= to ground and leak= drawn from the pin (A, into the pin). */

void ls_adc_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->removed || c->derivative)
        return;
    double rin = ls_part_opt_in(c->run, p, "rin", 0);
    if (rin > 0)
        ls_sink_a(c->sink, N(p, 0), N(p, 0), 1 / rin);
    ls_sink_b(c->sink, N(p, 0), -ls_part_opt_in(c->run, p, "leak", 0) * src_scale(p, c->run));
}

/* Current into the pin: V/rin + leak. */
void ls_adc_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth)
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
void ls_adc_results(const ls_part *p, const ls_run *run, const double *x, const double *v, double out[3])
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
void ls_adc_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    if (ls_part_opt(p, "rin", 0) > 0)
        emit(ctx, p->pin[0], 0, false, -1);
}
