/* newton.h — the operating point of circuits with real parts: Newton-Raphson
 * for junctions and self-heating, the active-set iteration for op-amp limits,
 * the fall-backs (shrinking junction shunts, ramping the sources); ratings and cautions; ADC inputs.
 * Internal to the library (analysis.c calls it). */
#ifndef LS_NEWTON_H
#define LS_NEWTON_H

#include "analysis/op.h"

/* From analysis.c: re-stamp at the parts' present states, refactor (reusing
 * the symbolic analysis while the pattern holds) and solve into op->x and
 * op->v; counts one iteration.  An LS_SOLVER_* status. */
int ls_op_step(ls_op *op);
/* From analysis.c: the error for a singular system at column col. */
void ls_op_report_singular(ls_op *op, int col);

/* Does the circuit need the iteration (a nonlinear part, a limited op-amp)? */
bool ls_newton_needed(const ls_netlist *nl);
/* Set every part's first linearization point and limit state. */
void ls_newton_init(ls_run *r);
/* Iterate from op->x (the solution of the system stamped at the parts'
 * present states) until every part has settled and every op-amp limit is
 * consistent; on return op->x, op->v and the stamped system are those of the
 * solution.  LS_DONE, or LS_UNSOLVABLE after reporting which parts did not
 * settle (LS_NO_MEMORY, with op->nomem, when memory ran out). */
ls_outcome ls_newton_solve(ls_op *op);
/* Is op->x, solved at the parts' present states, already what
 * ls_newton_solve would return: no nonlinear part, every limited op-amp's
 * state the one its solution asks for, every free op-amp with rails= probed?
 * Then the iteration would only restamp and refactor the same system (a
 * re-solve that starts from a settled run, as fit's candidates and tol's
 * trials do, often is).  Changes nothing. */
bool ls_newton_settled(const ls_op *op);

/* The system is singular at column col: if an ideal op-amp with rails= is
 * free (the bad column's, else the first), hold it at its upper rail from now
 * on, choosing its rail by the sign of its input (a comparator), and return
 * true so the caller re-stamps and tries again; false when there is none. */
bool ls_newton_open_loop(ls_op *op, int col);

/* Warnings about the solved circuit: ratings (with op->opt.derate), op-amps at
 * a limit or outside their common-mode range, nodes above the touch-safe DC
 * voltage, ADC inputs driven from too high a resistance or out of range. */
void ls_real_warnings(ls_op *op);

/* Power (W) an op-amp with rails= dissipates: its output stage's drop from
 * the rail it draws on times its output current, plus iq across the rails;
 * NaN without rails=. */
double ls_opamp_dissipation(const ls_op *op, int i);

/* An ADC input as the solved circuit drives it. */
typedef struct ls_adc_result {
    double vin;            /* V at the input, loaded */
    double v_open;         /* V the source would give without the ADC's load (NaN when unknown) */
    double rth;            /* ohm: Thevenin resistance of the source, the ADC removed */
    double lsb;            /* V per code */
    long long code;        /* the code read, 0 .. 2^bits - 1 */
    double error_lsb;      /* (vin - v_open) / lsb: the reading's error from loading and leakage */
    double budget_lsb;     /* the error allowed: the feeding port's budget in LSB, else half an LSB */
    bool source_high;      /* rth above max_source= */
    int verdict;           /* ls_verdict: |error| within the budget ok, within twice it marginal, else
                              loading; a source above max_source= is loading too */
} ls_adc_result;

/* Results of adc part index i.  0 ok, -1 when i is not an adc. */
int ls_op_adc(ls_op *op, int i, ls_adc_result *r);

/* Above this DC voltage against ground a node gets a caution (V): the usual
 * touch-safe limit for ripple-free DC (IEC 61140 / IEC 60335-1). */
#define LS_TOUCH_SAFE_DC 60.0

#endif
