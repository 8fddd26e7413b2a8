/* lowrank.h — what the low-rank modified systems offer beyond analysis.h:
 * the transposed solve the adjoint sensitivities of port fields need. */
#ifndef LS_LOWRANK_H
#define LS_LOWRANK_H

#include "analysis/analysis.h"

/* y <- A'^{-T} y (n values, in place) for the modified system of m.  Through
 * the transposed Woodbury identity A'^-T y = w - Y C^-T w[rows], w = A^-T y,
 * Y = A^-T D^T (built on first use, owned by m), or the fallback's own
 * factorization.  Returns LS_SOLVER_OK, LS_SOLVER_SINGULAR or an error. */
int ls_mod_solve_t(ls_mod *m, double *y);

/* The value (ohm) resistor `part`, one end on port's driver node, would need
 * for the port's zout to be `target` (ohm), the other parts unchanged: exact
 * for the linearized circuit (one conductance added by the Sherman-Morrison
 * formula).  NaN when part is no such resistor or no positive value does it. */
double ls_port_resistor_for_zout(ls_op *op, int port, int part, double target);

#endif
