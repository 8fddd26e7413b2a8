/* thevenin.h — the Thevenin/Norton equivalent at a node, or at each side of a
 * port opened, with what a load or a meter does to it; shared by the
 * `thevenin` command and the C API. */
#ifndef LS_THEVENIN_H
#define LS_THEVENIN_H

#include "analysis/analysis.h"

/* One side's equivalent, and what a load or a meter does to it. */
typedef struct ls_th_side {
    int node;                /* seen at this node against ground */
    double vth, rth, norton; /* V, ohm, A; NaN undefined, inf unbounded */
    const char *why_vth, *why_norton;   /* overriding reasons ("unsolved"), or NULL */
    double load_v, load_i, meter_v;     /* with --load / --meter; NaN without */
    char load_limited[256], meter_limited[256], norton_limited[256];
} ls_th_side;

/* The equivalent at `node` (port < 0: into *drv; *ld is cleared), or at both
 * sides of port `port` opened (the driver into *drv, the load into *ld).
 * rload and rmeter (ohm, NaN for none) are solved on the driver side with
 * every limit active.  The circuit's parts and states are as before on return. */
void ls_thevenin_sides(ls_op *op, int node, int port, double rload, double rmeter, ls_th_side *drv, ls_th_side *ld);

/* The short-circuit current of side t (node, vth and rth filled) into
 * t->norton: vth / rth in a linear circuit; with limits or junctions, solved
 * exactly into a conductance a thousand million times the circuit's own, so
 * an output limit caps it.  `opened` is a port kept open, or -1.  NaN with
 * why_norton "unsolved" when that solve fails. */
void ls_thevenin_norton(ls_op *op, ls_th_side *t, int opened);

#endif
