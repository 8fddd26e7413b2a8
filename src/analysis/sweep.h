/* sweep.h — the points of a sweep and the solve of each point, shared by the
 * `sweep` command and the C API.
 *
 * A sweep elaborates its circuit once, following the swept let (letdeps.h);
 * per point it sets the let and recomputes only what depends on it
 * (ls_sweep_set_value), then solves: afresh at the start of each chain of
 * points (a new symbolic analysis and the parts' first linearization points,
 * so a chain's results do not depend on the points before it), else by a
 * numeric refactorization with the kept analysis, continuing from the last
 * point's solution. */
#ifndef LS_SWEEP_H
#define LS_SWEEP_H

#include <stdbool.h>

#include "analysis/analysis.h"
#include "netlist/letdeps.h"

/* Fill x[0..n-1] (n >= 2) with the swept values: evenly spaced from `from` to
 * `to`, or evenly on a log scale with log_scale (both ends > 0); the ends are
 * exactly from and to. */
void ls_sweep_points(double from, double to, int n, bool log_scale, double *x);

/* Points are solved in chains of this many, each starting afresh: a chain's
 * results (to the last bit, for a circuit that iterates) do not depend on the
 * points before it, so loadstack-mpi hands whole chains to its processes and
 * its report is identical to one process's.  A fresh solve every 8 points
 * costs little beside the 7 that continue. */
#define LS_SWEEP_CHAIN 8

/* One circuit elaborated once, solved at many values of one let.  The
 * netlist is only read: a point's values (the lets, and what they reach:
 * part values and options, range ends, budgets, constants inside the
 * checks' quantities) live in the sweeper's lets and its run `point`, which
 * each solve starts from. */
typedef struct ls_sweeper {
    const ls_netlist *nl;      /* the circuit (the caller's, as elaborated) */
    const ls_letdeps *deps;    /* what the let reaches in nl (the caller's) */
    ls_options opt;            /* how each point is solved */
    double *lets;              /* nl->nparams: every let's value at the point */
    ls_run point;              /* the point's values, options, ranges, budgets and constants */
    bool have_point;           /* lets and point hold allocations */
    ls_op op;                  /* the last point's solution and factor */
    bool have_op;              /* op holds allocations */
    bool ready;                /* op holds a solved point of nl to continue from */
    bool restructured;         /* a point changed a part's shape (its branch unknowns, DC edges,
                                  pins that draw current or linearity; the answer was
                                  LS_REELABORATE): the elaborated numbering no longer holds */
} ls_sweeper;

/* Start a sweeper over nl with the record deps and the solve options o
 * (copied).  Nothing is solved yet. */
void ls_sweeper_init(ls_sweeper *w, const ls_netlist *nl, const ls_letdeps *deps, const ls_options *o);
/* Free the point, the solution and the factor (not nl or deps). */
void ls_sweeper_free(ls_sweeper *w);

/* The one place where a point's values are set: the swept let at x and every
 * value that depends on it, into w->lets and w->point (never the netlist).
 * Returns false when that needs a new elaboration (a value the elaborator
 * would refuse at x, a let that reaches more than values, or no memory for
 * the point). */
bool ls_sweep_set_value(ls_sweeper *w, double x);

/* Solve at the let's value x: afresh when `fresh` (or when nothing can be
 * continued), else continuing from the last point.  Returns LS_DONE (the
 * solution in w->op), LS_UNSOLVABLE (the next point starts afresh),
 * LS_NO_MEMORY (w->op.nomem is set too), or LS_REELABORATE when the point's
 * values cannot be set without elaborating again (the caller does that for
 * this point). */
ls_outcome ls_sweeper_solve(ls_sweeper *w, double x, bool fresh);

#endif
