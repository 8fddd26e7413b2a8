/* op.h — the operating point's record (ls_op, its options, its port results
 * and error bounds) and the few solve primitives that the modules of an
 * operating point share: the iteration (newton), the refinement and error
 * bounds (accuracy), the self-check (selfcheck), the port report (lowrank) and
 * the solve itself (analysis).  A header of its own so that those modules
 * include one common base instead of each other: analysis.h, newton.h,
 * accuracy.h and selfcheck.h all build on this one, and none of them on
 * analysis.h.  The functions are defined in analysis.c (solve, checks,
 * spread) and lowrank.c (port report, driving-point resistance). */
#ifndef LS_OP_H
#define LS_OP_H

#include <stdbool.h>

#include "analysis/outcome.h"
#include "mna/mna.h"
#include "solve/solver.h"

/* The trust in a solution's digits (filled by accuracy.c, accuracy.h). */
typedef struct ls_accuracy {
    double *tail;          /* n: the solution is x + tail (tail 0 until refined) */
    bool refined;          /* the extra-precise refinement ran */
    bool extended;         /* ... and moved some unknown by more than rounding: double was not enough */
    int steps;             /* extra-precise refinement steps */
    bool reliable;         /* first-order bounds hold; else every bound is +inf */
    bool have_bounds;      /* node_bound and part_bound are valid */
    bool estimated;        /* one estimate for every node (large system) */
    bool per_node;         /* large system of resistances and grounded sources: every node's bound by one solve */
    double *node_bound;    /* nnodes: V, absolute; [0] = 0 (ground) */
    double *part_bound;    /* nparts: A, absolute, on the part's current; NaN where none */
    int worst_node, worst_part;     /* largest bound against its value (-1: none untrusted) */
    double worst_node_rel, worst_part_rel;  /* those bounds / |value| */
    /* 3n or NULL: the refinement's last residual as w = |r| + the rounding
     * of the parts' values, then the x and the tail it was taken at, kept
     * when that step's correction moved every unknown by far less than
     * double precision (accuracy.c): the bounds start from it instead of
     * another pass over the parts, and add how far x + tail moved since.
     * A block of ls_big_malloc (base/pages.h): ls_big_free gives it back. */
    double *last;
    bool merged;           /* the last bounds started from `last` (for tests) */
} ls_accuracy;

/* LS_CHOOSE_ITERATIVE: AMG-PCG (amg.h), in the -Dmpi=enabled build only. */
typedef enum ls_solver_choice { LS_CHOOSE_AUTO, LS_CHOOSE_DENSE, LS_CHOOSE_SPARSE, LS_CHOOSE_ITERATIVE } ls_solver_choice;

typedef struct ls_options {
    ls_solver_choice solver;
    double min_ratio;       /* <= 0: the circuit's rule, else 10 */
    double derate;          /* rating multiplier, default 1 */
    /* A variant of a circuit already solved once (sag, thevenin --load): */
    const unsigned char *opened;  /* per part, or NULL: parts stamped as removed */
    const ls_tie *ties;           /* per node, or NULL: conductances to fixed voltages */
    bool keep_states;       /* start from start's linearization points, limits and values */
    const struct ls_run *start;   /* with keep_states: the run to start from (a solved op's), same netlist */
    bool linear_only;       /* one linear solve at those points (no iteration) */
    bool no_bounds;         /* inner solves (variants): no error bounds and no untrusted-digits warning */
    bool trial;             /* a study's trial (tol's Monte Carlo): the solution to the double solve's own
                               accuracy (refined in double), no extra-precise refinement: a trial's value
                               feeds statistics whose spread is far above it, and its digits are never
                               printed one by one (docs/accuracy.md) */
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
    ls_run run;              /* the parts' states and values of this solve (run.h); owned: the netlist
                                is only read, so several ops may share it */
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
    int held_path;           /* held ports: 0 not yet read, 1 closed form, -1 general update
                                (LOADSTACK_PORT_HELD=general, for the tests) */
    size_t work_n;
    double *base_work;       /* lowrank.c's base_solve: rhs and r, base_work_n doubles each */
    size_t base_work_n;
    ls_accuracy acc;         /* extra-precise tail of x and the error bounds (accuracy.h) */
    bool nomem;              /* the last ls_op_solve / ls_op_resolve failed because memory ran out
                                (not a property of the circuit: a caller must not count it as
                                "not solved") */
} ls_op;

/* "; the widest spread of values is resistor 'a' (...) against 'b' (...)",
 * or "" with fewer than two resistors: the usual cause of ill-conditioning. */
void ls_widest_spread(const ls_netlist *nl, char *buf, size_t n);

/* Solve A x = b (or A^T) in place with the op's factorization, refined. */
int ls_op_solve_vec(ls_op *op, double *b, int transpose);

/* The loading report of port part index p (computed once, then cached). */
const ls_port_result *ls_op_port(ls_op *op, int p);

/* A comparison holds within this relative distance of its limit. */
#define LS_CHECK_REL 1e-9
/* The slack (in the limit's unit) a comparison against limit allows; 0 for an
 * infinite limit. */
double ls_check_slack(double limit);

/* Driving-point resistance at node in the base system. */
double ls_op_zdrive(ls_op *op, int node);

#endif
