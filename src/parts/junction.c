/* junction.c — the pn junctions: diode, led and zener, iterated on
 * their companion model. */
#include "parts/family.h"

#include <math.h>
#include <string.h>

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
int ls_junction_branches(const ls_part *p)
{
    return ls_part_opt(p, "rbulk", 0) > 0 ? 1 : 0;
}

/* Companion model at op_v; removed: open (the internal unknown pinned). */
void ls_junction_stamp(const ls_part *p, ls_stamp_ctx *c)
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
void ls_junction_lin(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth)
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

/* Start forward-biased near the knee (a led at its rated vf, a zener off). */
void ls_junction_init(const ls_part *p, ls_run *run)
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
bool ls_junction_update(const ls_part *p, ls_run *run, const double *x)
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
void ls_junction_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    emit(ctx, p->pin[0], p->pin[1], false, -1);
}
