/* analysis.h — the analyses on a solved circuit: operating point, ports,
 * quantities and checks.  An ls_op owns one factored MNA system; the port,
 * sag, Thevenin and sensitivity analyses reuse its factorization. */
#ifndef LS_ANALYSIS_H
#define LS_ANALYSIS_H

#include "analysis/accuracy.h"
#include "analysis/op.h"

/* Assemble, check the topology, factor and solve.  Returns LS_DONE, or
 * LS_UNSOLVABLE after reporting the reason (LS_NO_MEMORY, with op->nomem,
 * when memory ran out). */
ls_outcome ls_op_solve(ls_op *op, const ls_netlist *nl, const ls_options *o);
/* Re-solve after part values (not the structure) changed: restamp, refactor
 * reusing the symbolic analysis, solve (iterating from the last solution when
 * the circuit has nonlinear parts or limited op-amps).  Port results are
 * recomputed on demand.  The warnings of ls_op_solve are not repeated. */
ls_outcome ls_op_resolve(ls_op *op);
/* Both set op->nomem when they fail because memory ran out (with an "out of
 * memory" error in the netlist's diagnostics), and clear it otherwise. */
void ls_op_free(ls_op *op);
double ls_op_min_ratio(const ls_op *op);

/* The value of port property f (open, loaded, sag, sag_rel, zout, zin,
 * ratio, current, budget) in pr; NaN for another property. */
double ls_port_value(const ls_port_result *pr, ls_prop f);

/* Value of a bound quantity (NaN undefined, +-inf unbounded). */
double ls_q_eval(ls_op *op, const ls_q *q);

typedef struct ls_check_result {
    double value, lo, hi;    /* the left side; the accepted range */
    bool pass;
    const char *reason;      /* when it fails for being undefined */
} ls_check_result;

void ls_check_eval(ls_op *op, const ls_check *c, ls_check_result *r);

/* ---- modified systems (low-rank updates of the factored system) ---- */

/* A modification of the base system A x = b: a few changed rows (and rhs
 * entries), solved through the Woodbury identity with the base factorization,
 * or through a fresh factorization when the rank is large. */
typedef struct ls_mod ls_mod;

/* MOD_HOLD_PORT_LOAD: a port opened with its load end held at its loaded
 * voltage (a source from ground through the port's own branch unknown), for
 * a load side that has no DC path of its own once the port is open. */
typedef enum ls_mod_kind { MOD_REMOVE_PART, MOD_SHORT_PORT_TO_GROUND, MOD_HOLD_PORT_LOAD } ls_mod_kind;

/* Build the modification "part p removed" (a port opened).  Never NULL unless
 * out of memory; check ls_mod_singular. */
ls_mod *ls_mod_new(ls_op *op, int part, ls_mod_kind kind);
bool ls_mod_singular(const ls_mod *m);
/* Solution of the modified system (n values, owned by m). */
const double *ls_mod_x(ls_mod *m);
/* y <- A'^{-1} y. */
int ls_mod_solve(ls_mod *m, double *y);
/* Does node voltage `node` of the modified system depend on the voltages of
 * nodes the modification left floating?  (Then it is undefined.) */
bool ls_mod_depends_on_floating(ls_mod *m, int node);
bool ls_mod_is_floating(const ls_mod *m, int node);
/* Driving-point resistance at node in the modified system, sources zeroed:
 * (A'^{-1})_{node,node}; +inf when the node floats. */
double ls_mod_zdrive(ls_mod *m, int node);
void ls_mod_free(ls_mod **m);

/* ---- sag --what-if: every part and port removed in turn ---- */

typedef struct ls_sag_item {
    int part;
    double without, delta;   /* V at the node with the part removed, and without - now; NaN undefined */
    bool floats;             /* undefined because nothing sets the node any more */
    bool beyond_limit;       /* the linear estimate crossed a limit: without is the exact re-solve
                                (NaN when that fails), or the estimate beyond every voltage of a
                                circuit that has no limit to stop it */
    bool resolved;           /* without comes from an exact re-solve with every limit active */
    char limit[96];          /* the limit crossed ("u1 rail-high", "d1 on"), or "" */
} ls_sag_item;

/* The largest voltage the circuit itself has (V): node voltages and voltage
 * source values. */
double ls_op_volts(const ls_op *op);
/* Fill items[nparts] for `node`, one low-rank update per part (no
 * refactorization), rounding noise of the updates set to zero, sorted by
 * |delta| largest first with undefined items last (ties in part order).  A
 * row whose linear estimate crosses a limit (an op-amp's rail or current
 * limit, a junction turning on or off) is re-solved exactly with the limits
 * active and marked beyond_limit.  Returns 0, or -1 when out of memory. */
int ls_sag(ls_op *op, int node, ls_sag_item *items);

#endif
