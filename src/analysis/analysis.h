/* analysis.h — the analyses on a solved circuit: operating point, ports,
 * quantities and checks.  An ls_op owns one factored MNA system; the port,
 * sag, Thevenin and sensitivity analyses reuse its factorization. */
#ifndef LS_ANALYSIS_H
#define LS_ANALYSIS_H

#include "analysis/accuracy.h"
#include "mna/mna.h"
#include "solve/solver.h"

/* LS_CHOOSE_ITERATIVE: AMG-PCG (amg.h), in the -Dmpi=enabled build only. */
typedef enum ls_solver_choice { LS_CHOOSE_AUTO, LS_CHOOSE_DENSE, LS_CHOOSE_SPARSE, LS_CHOOSE_ITERATIVE } ls_solver_choice;

typedef struct ls_options {
    ls_solver_choice solver;
    double min_ratio;       /* <= 0: the circuit's rule, else 10 */
    double derate;          /* rating multiplier, default 1 */
    /* A variant of a circuit already solved once (sag, thevenin --load): */
    const unsigned char *opened;  /* per part, or NULL: parts stamped as removed */
    const ls_tie *ties;           /* per node, or NULL: conductances to fixed voltages */
    bool keep_states;       /* start from the parts' present linearization points and limits */
    bool linear_only;       /* one linear solve at those points (no iteration) */
    bool no_bounds;         /* inner solves (variants): no error bounds and no untrusted-digits warning */
    /* When set, told as each long phase of ls_op_solve starts ("assembling",
     * "factoring", ...): the program's progress line on large solves. */
    void (*phase)(void *ctx, const char *what);
    void *phase_ctx;
} ls_options;

typedef enum ls_verdict { VERDICT_OK, VERDICT_MARGINAL, VERDICT_LOADING } ls_verdict;

typedef struct ls_port_result {
    bool done;
    bool current_mode;
    double open, loaded, sag, sag_rel, zout, zin, ratio, current;  /* NaN undefined, inf unbounded */
    double load_open;        /* V(LOAD) with the port opened (voltage mode; NaN when unknown) */
    double budget;           /* largest |sag| allowed (V, or A in current mode); NaN: none */
    int budget_from;         /* LS_BUDGET_FROM_*: where the budget comes from */
    int adc;                 /* an adc part on the load node (the one with the smallest LSB), or -1 */
    bool by_budget;          /* the verdict was decided by the budget, not the ratio rule */
    bool load_held;          /* the load side floats when opened: held at its loaded voltage */
    ls_verdict verdict;
    const char *note;        /* why a field is undefined, or NULL */
} ls_port_result;

/* Where a port's budget comes from. */
enum { LS_BUDGET_FROM_NONE, LS_BUDGET_FROM_PORT, LS_BUDGET_FROM_RULE, LS_BUDGET_FROM_ADC };

typedef struct ls_op {
    const ls_netlist *nl;
    ls_options opt;
    ls_mna mna;
    ls_solver *solver;
    ls_method method;
    double *x;               /* unknowns */
    double *v;               /* node voltages, v[0] = 0: the same array as x, one slot before it (v[i] = x[i - 1]) */
    double *ipart, *vpart, *ppart;   /* per part: current (A), voltage (V), absorbed power (W) */
    double rcond, residual;
    long cg_iterations;      /* iterative backend: CG iterations of the operating point's solves */
    double cg_residual;      /* iterative backend: the largest true relative residual they ended with */
    int iterations;          /* linear solves of the operating-point iteration (1 for a linear circuit) */
    int refinements;         /* iterative-refinement steps of the last solve */
    double g_pin;            /* conductance used to pin floating nodes in modified systems */
    ls_port_result *port;    /* per part index; valid for ports */
    /* DFS over DC paths from ground, for bridge tests when parts are removed */
    int *tin, *tout, *low;
    bool *bridge_part;       /* removing this part's (single) edge floats nodes */
    int *bridge_child;       /* the DFS child endpoint of that bridge */
    int *order;              /* nodes by tin */
    double *work;            /* refinement workspace: 3 work_n doubles */
    /* once per solution for the port report (lowrank.c), so a port's work
     * does not grow with the circuit: */
    double anorm;            /* max |a_ij| of mna.a; 0: not yet computed */
    int *adc_at;             /* per node: the adc with the smallest LSB on it, or -1; NULL: not yet built */
    struct ls_selinv *selinv;   /* entries of A^-1 for large systems (selinv.h); owned */
    int selinv_state;        /* 0 not tried, 1 built, -1 not used (small, inaccurate or no memory) */
    int grounded_nodes;      /* 1 + the nodes with a DC path to ground (from tin); 0: not yet counted */
    size_t work_n;
    ls_accuracy acc;         /* extra-precise tail of x and the error bounds (accuracy.h) */
    bool nomem;              /* the last ls_op_solve / ls_op_resolve failed because memory ran out
                                (not a property of the circuit: a caller must not count it as
                                "not solved") */
} ls_op;

/* "; the widest spread of values is resistor 'a' (...) against 'b' (...)",
 * or "" with fewer than two resistors: the usual cause of ill-conditioning. */
void ls_widest_spread(const ls_netlist *nl, char *buf, size_t n);

/* Exit codes of the program (cli.md). */
enum { LS_EXIT_OK = 0, LS_EXIT_CHECK = 1, LS_EXIT_USAGE = 2, LS_EXIT_UNSOLVABLE = 3 };

/* Assemble, check the topology, factor and solve.  Returns LS_EXIT_OK, or
 * LS_EXIT_UNSOLVABLE / LS_EXIT_USAGE after reporting the reason. */
int ls_op_solve(ls_op *op, const ls_netlist *nl, const ls_options *o);
/* Re-solve after part values (not the structure) changed: restamp, refactor
 * reusing the symbolic analysis, solve (iterating from the last solution when
 * the circuit has nonlinear parts or limited op-amps).  Port results are
 * recomputed on demand.  The warnings of ls_op_solve are not repeated. */
int ls_op_resolve(ls_op *op);
/* Both set op->nomem when they fail because memory ran out (with an "out of
 * memory" error in the netlist's diagnostics), and clear it otherwise. */
void ls_op_free(ls_op *op);
double ls_op_min_ratio(const ls_op *op);

/* Solve A x = b (or A^T) in place with the op's factorization, refined. */
int ls_op_solve_vec(ls_op *op, double *b, int transpose);

/* The loading report of port part index p (computed once, then cached). */
const ls_port_result *ls_op_port(ls_op *op, int p);
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

/* A comparison holds within this relative distance of its limit. */
#define LS_CHECK_REL 1e-9
/* The slack (in the limit's unit) a comparison against limit allows; 0 for an
 * infinite limit. */
double ls_check_slack(double limit);

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

/* Driving-point resistance at node in the base system. */
double ls_op_zdrive(ls_op *op, int node);

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
