/* thevenin.c — the Thevenin/Norton equivalent of a node or of each side of a
 * port (see thevenin.h): small-signal resistances from the solved system, and
 * exact re-solves (every limit active) for the open voltages, a load, a meter
 * and the short-circuit current where a part is nonlinear. */
#include "analysis/thevenin.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analysis/newton.h"
#include "analysis/variant.h"

/* NODE's voltage with a resistance r (ohm) from it to ground, solved with
 * every limit active; `opened` part (a port, or -1) disconnected.  The limits
 * in force then go into limited.  NaN when that circuit cannot be solved, or
 * (with *nomem set) when memory ran out. */
static double loaded_exact(ls_op *op, int node, int opened, double r, char *limited, size_t n, bool *nomem)
{
    ls_runs base = {0};
    ls_variant v;
    double out = NAN;
    snprintf(limited, n, "unsolved");
    if (ls_runs_save(op, &base) != 0 || ls_variant_init(&v, op) != 0) {
        ls_runs_free(&base);
        *nomem = true;
        return NAN;
    }
    if (opened >= 0)
        v.opened[opened] = LS_OPENED;
    v.ties[node] = (ls_tie){1 / r, 0};
    int held = ls_variant_hold_floating(&v, op);
    if (held >= 0 && ls_variant_solve(&v, op, false) == LS_DONE) {
        out = v.op.v[node];
        ls_limits_in_force(&v.op.run, &base, limited, n);
    } else if (held < 0 || v.op.nomem) {
        *nomem = true;
    }
    ls_runs_restore(op, &base);
    ls_runs_free(&base);
    ls_variant_free(&v);
    return out;
}

/* A load of r ohm on side t: linear circuits by the equivalent's closed form,
 * anything with a limit or a junction by an exact solve. */
static double side_loaded(ls_op *op, ls_th_side *t, int opened, double r, char *limited, size_t n)
{
    if (!ls_newton_needed(op->nl)) {
        snprintf(limited, n, "none");
        return isinf(t->rth) ? 0 : t->vth * r / (r + t->rth);
    }
    return loaded_exact(op, t->node, opened, r, limited, n, &t->nomem);
}

/* The short-circuit current of side t: vth / rth in a linear circuit; with
 * limits or junctions, solved exactly into a conductance a thousand million
 * times the circuit's own (or rth's): an output limit caps the current, and
 * only a side that no limit caps has an unbounded one when rth is 0. */
void ls_thevenin_norton(ls_op *op, ls_th_side *t, int opened)
{
    snprintf(t->norton_limited, sizeof t->norton_limited, "none");
    bool exact = ls_newton_needed(op->nl) && isfinite(t->vth) && !isnan(t->rth) && !isinf(t->rth);
    if (exact) {
        double r = 1e-9 * (t->rth > 0 ? t->rth : 1 / op->g_pin);
        double v = loaded_exact(op, t->node, opened, r, t->norton_limited, sizeof t->norton_limited, &t->nomem);
        if (isnan(v)) {
            t->norton = NAN;
            t->why_norton = "unsolved";
            return;
        }
        if (t->rth > 0 || strcmp(t->norton_limited, "none") != 0) {
            t->norton = v / r;
            return;
        }
    }
    if (t->rth == 0 || isnan(t->rth) || !isfinite(t->vth))
        t->norton = t->rth == 0 && t->vth != 0 && !isnan(t->vth) ? copysign(INFINITY, t->vth) : NAN;
    else
        t->norton = isinf(t->rth) ? 0 : t->vth / t->rth;
}

/* --load and --meter on side t. */
static void side_loads(ls_op *op, ls_th_side *t, int opened, double rload, double rmeter)
{
    if (!isnan(rload)) {
        t->load_v = side_loaded(op, t, opened, rload, t->load_limited, sizeof t->load_limited);
        t->load_i = t->load_v / rload;
    }
    if (!isnan(rmeter))
        t->meter_v = side_loaded(op, t, opened, rmeter, t->meter_limited, sizeof t->meter_limited);
}

/* The node's own voltage with port pi opened, solved exactly; NaN when the
 * node is then left without a DC path (nothing sets it: *why stays NULL),
 * with *why "unsolved", or with *nomem set when memory ran out. */
static double opened_voltage(ls_op *op, int pi, int node, const char **why, bool *nomem)
{
    ls_runs base = {0};
    ls_variant v;
    double out = NAN;
    *why = NULL;
    if (ls_runs_save(op, &base) != 0 || ls_variant_init(&v, op) != 0) {
        ls_runs_free(&base);
        *why = "unsolved";
        *nomem = true;
        return NAN;
    }
    v.opened[pi] = LS_OPENED;
    int held = ls_variant_hold_floating(&v, op);
    if (held < 0) {
        *why = "unsolved";
        *nomem = true;
    } else if (!v.floating[node]) {
        if (ls_variant_solve(&v, op, false) == LS_DONE)
            out = v.op.v[node];
        else
            *why = "unsolved";
        *nomem |= v.op.nomem;
    }
    ls_runs_restore(op, &base);
    ls_runs_free(&base);
    ls_variant_free(&v);
    return out;
}

void ls_thevenin_sides(ls_op *op, int node, int port, double rload, double rmeter, ls_th_side *drv, ls_th_side *ld)
{
    memset(drv, 0, sizeof *drv);
    memset(ld, 0, sizeof *ld);
    drv->load_v = drv->load_i = drv->meter_v = NAN;
    ld->load_v = ld->load_i = ld->meter_v = NAN;
    if (port < 0) {
        drv->node = node;
        drv->vth = op->v[node];
        drv->rth = ls_op_zdrive(op, node);
        ls_thevenin_norton(op, drv, -1);
        side_loads(op, drv, -1, rload, rmeter);
        return;
    }
    const ls_part *p = &op->nl->parts[port];
    const ls_port_result *pr = ls_op_port(op, port);
    if (!pr) { /* the port report ran out of memory */
        drv->nomem = ld->nomem = true;
        drv->vth = drv->rth = drv->norton = ld->vth = ld->rth = ld->norton = NAN;
        return;
    }
    drv->node = p->pin[0];
    drv->rth = pr->zout;
    drv->vth = opened_voltage(op, port, drv->node, &drv->why_vth, &drv->nomem);
    if (isnan(drv->vth) && !drv->why_vth)
        drv->vth = pr->open;   /* a driver that floats once opened: the report's unbounded/undefined */
    ls_thevenin_norton(op, drv, port);
    side_loads(op, drv, port, rload, rmeter);
    ld->node = p->pin[1];
    ld->rth = pr->zin;
    ld->vth = opened_voltage(op, port, ld->node, &ld->why_vth, &ld->nomem);
    ld->norton = NAN;
}
