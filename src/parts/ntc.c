/* ntc.c — the thermistor: the Beta equation, and its self-heating
 * iterated to the body temperature. */
#include "parts/family.h"

#include <math.h>

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
void ls_ntc_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->removed)
        return;
    double r = ls_ntc_r(p, c->run, ls_ntc_body(p, c->run));
    /* d/d r25 at a fixed body temperature: R is proportional to r25 */
    double g = c->derivative ? -1 / (r * ls_run_value(c->run, p)) : 1 / r;
    conductance(c->sink, N(p, 0), N(p, 1), g);
}

/* Current FROM -> TO through R(T). */
void ls_ntc_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth)
{
    (void)run; (void)depth;
    double r = ls_ntc_r(p, run, ls_ntc_body(p, run));
    double g = d ? -1 / (r * ls_run_value(run, p)) : 1 / r;
    lin_add(out, N(p, 0), g);
    lin_add(out, N(p, 1), -g);
}

/* Only self-heating makes a thermistor nonlinear. */
bool ls_ntc_nonlinear(const ls_part *p)
{
    return ls_part_has(p, ls_kind_opt(p->kind, "dissipation"));
}

#define NTC_T_MAX 1e4   /* degC: a body hotter than this has run away */

void ls_ntc_init(const ls_part *p, ls_run *run)
{
    ls_run_state(run, p)->op_t = ls_part_opt_in(run, p, "celsius", 25);
    ls_run_state(run, p)->heat_t = ls_run_state(run, p)->heat_f = NAN;
}

/* Self-heating: the body temperature T solves T = F(T) = temp + P(T) /
 * dissipation, with P from the last solve (stamped at T).  A secant step on
 * F(T) - T: it damps the fixed point where F falls steeply (current drive)
 * and speeds it up where F rises slowly; where F rises faster than T (thermal
 * runaway) it takes plain steps, which then run off to NTC_T_MAX. */
bool ls_ntc_update(const ls_part *p, ls_run *run, const double *x)
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
