/* fit.h — standard values for the parts marked free= (language.md): the
 * search behind the `fit` command (docs/fit.md).
 *
 * A candidate gives every free part one value of its series (IEC 60063,
 * eseries.h) within its range.  It is feasible when every expect and rule
 * holds, every port's verdict is ok (by its budget or the ratio rule) and no
 * limit is crossed: power ratings (derated), vmax=, imax=, an op-amp at a rail
 * or its current limit or with an input outside cm=, an adc input outside
 * 0..ref or driven from above max_source=.  Among the feasible candidates the
 * goal ranks: margin (the smallest normalised distance of an expect, rule or
 * port to its limit, largest first), yield (Monte Carlo from the parts' tol=,
 * seeded as `tol`) or current (least supply current); ties go to the next goal
 * in the order margin, yield, current (wrapping round).
 *
 * The search: every combination when there are at most LS_FIT_EXHAUSTIVE;
 * otherwise a continuous optimum first (NLopt's COBYLA on the logarithms of
 * the values: maximise t subject to every margin >= t, or minimise the
 * current subject to every margin >= 0), then the series values around it
 * (every combination of the nearest values on each side) and a descent one
 * series step at a time from the best of those, then branch and bound over
 * boxes of series values with the checks' bounds at the boxes' corners, up to
 * max_solves candidate solves (proven says whether it finished).  Every candidate solve reuses
 * the factorization's symbolic analysis (ls_op_resolve). */
#ifndef LS_FIT_H
#define LS_FIT_H

#include <stdbool.h>
#include <stdint.h>

#include "analysis/analysis.h"

#define LS_FIT_EXHAUSTIVE 100000   /* combinations enumerated one by one up to this */
#define LS_FIT_MAX_FREE 64         /* free parts a search takes */
#define LS_FIT_MAX_SOLVES 200000   /* default cap on branch and bound's candidate solves (docs/fit.md: why) */

typedef enum ls_fit_goal { LS_FIT_MARGIN, LS_FIT_YIELD, LS_FIT_CURRENT } ls_fit_goal;

/* Goal figures this close (relative) are a tie: the search ranks them by the
 * next goal, and a bound this close to the best found is met. */
#define LS_FIT_TIE_REL 1e-9

/* What a check of a candidate is about. */
typedef enum ls_fit_kind {
    LS_FITC_EXPECT,      /* nl->checks[index] (an expect or a rule line) */
    LS_FITC_PORT,        /* the verdict of port part `index` */
    LS_FITC_RATING,      /* part `index`: power <= rating (derated) */
    LS_FITC_VMAX,        /* part `index`: |voltage| <= vmax */
    LS_FITC_IMAX,        /* part `index`: |current| <= imax (not op-amps) */
    LS_FITC_OPAMP_OUT,   /* op-amp `index`: output inside its rails and current limit */
    LS_FITC_OPAMP_CM,    /* op-amp `index`: both inputs inside cm= */
    LS_FITC_ADC_RANGE,   /* adc `index`: input inside 0..ref */
    LS_FITC_ADC_SOURCE   /* adc `index`: source resistance <= max_source */
} ls_fit_kind;

/* One check of one candidate. */
typedef struct ls_fit_check {
    ls_fit_kind kind;
    int index;
    double value;        /* the checked value (unit of the check) */
    double lo, hi;       /* its accepted range (+-inf for none) */
    double margin;       /* normalised distance to the nearest limit: > 0 inside, < 0 outside (docs/fit.md) */
    bool pass;
    bool in_goal;        /* counts in the margin goal (expects, rules, ports); limits only decide feasibility */
    const char *why;     /* a failing check's reason when its value is undefined or a limit is in force, or NULL */
} ls_fit_check;

/* One candidate: a value for every free part. */
typedef struct ls_fit_cand {
    int *idx;            /* nfree indices into each free part's series values (-1: the continuous optimum) */
    double *value;       /* nfree values, in the parts' main units */
    bool solved;         /* the circuit solved with these values */
    bool meets;          /* feasible: every check passes */
    double margin;       /* smallest margin of the goal's checks (+inf with none) */
    double worst;        /* smallest margin of every check: how close an infeasible candidate comes */
    double current;      /* A drawn from the supplies (docs/fit.md) */
    double yield;        /* fraction of Monte Carlo trials that are feasible; NaN when not computed */
    int failed;          /* checks that fail */
    ls_fit_check *checks;/* every check (only for the reported candidates), nchecks of them */
    int nchecks;
} ls_fit_cand;

/* One free part of the search. */
typedef struct ls_fit_var {
    int part;
    double lo, hi;       /* free= range */
    const char *series;  /* "E24" */
    double *values;      /* the series values inside the range, ascending, nvalues of them */
    int nvalues;
    double start;        /* the written value */
    double optimum;      /* the continuous optimum (NaN when no continuous stage ran) */
} ls_fit_var;

/* Why ls_fit_run did not search (its outcome is then LS_BAD_REQUEST). */
typedef enum ls_fit_refusal {
    LS_FIT_SEARCHED = 0,   /* it did search */
    LS_FIT_NOFREE,         /* no part is free */
    LS_FIT_EMPTY,          /* a free range holds no series value: vars says which */
    LS_FIT_TOOMANY,        /* more than LS_FIT_MAX_FREE free parts */
} ls_fit_refusal;

typedef struct ls_fit_study {
    /* in */
    ls_netlist *nl;      /* solved through op; part values are put back on return */
    ls_op *op;
    ls_arena *arena;     /* scratch diagnostics of the candidate solves */
    ls_fit_goal goal;
    const char *series;  /* the series of a free part without snap= ("E24") */
    int top;             /* candidates to report (>= 1) */
    long trials;         /* Monte Carlo trials per finalist for the yield */
    uint64_t seed;
    bool normal;
    void (*progress)(void *ctx, long done, long total);   /* or NULL */
    void *progress_ctx;
    double exhaustive_limit;   /* <= 0: LS_FIT_EXHAUSTIVE; the tests lower it to try the continuous path */
    long max_solves;     /* candidate solves branch and bound may spend (<= 0: LS_FIT_MAX_SOLVES) */
    bool plain;          /* every candidate on the full path (docs/fit.md, "The search"): the tests
                          * compare it with the fast path; not meant for use otherwise */
    bool redo_test;      /* treat the fast path's chosen design as failing on the full path, so that the
                          * search runs again (ls_fit_run): the tests' way into the fall-back, which no
                          * circuit is known to reach; not meant for use otherwise */
    /* out */
    ls_fit_var *vars;
    int nvars;
    double combinations; /* product of the nvalues */
    bool exhaustive;     /* every combination was tried */
    int nlopt_status;    /* NLopt's result code of the continuous stage (0 when none ran) */
    long nlopt_evals;    /* its circuit solves */
    long evaluated;      /* candidates solved in the discrete search */
    bool proven;         /* no combination outranks the reported ones: every one was tried, or branch and
                          * bound finished (docs/fit.md); false when the solve limit stopped it */
    long bb_solves;      /* candidate solves of branch and bound (its share of evaluated) */
    long bb_boxes;       /* boxes it looked at */
    long bb_pruned;      /* of them, dropped on their bounds */
    long bb_enumerated;  /* small enough to solve every combination in them */
    long bb_unbounded;   /* (box, check) pairs with no bound: not monotone at the corners, or undefined */
    long factorizations; /* numeric factorizations the search made (every candidate solve one, at least) */
    long analyses;       /* symbolic analyses it made: 0, the one of the written values' solve serves all */
    /* How far the answer may be from the best (docs/fit.md, "How far from the best"): the goal's
     * figure (the smallest goal margin, or with the current goal the supply current) of the best
     * design found, and a limit no design in the ranges that meets every check can pass: at most
     * this margin, or at least this current.  Equal when proven.  limit is NaN when an open box
     * had no bound (limit_why says so), -inf (margin) / +inf (current) when no design in the
     * ranges can meet every check. */
    double found;        /* NaN when nothing found meets every check */
    double limit;
    const char *limit_why;   /* a static string, or NULL */
    long limit_solves;   /* candidate solves the open boxes' limits took after the search stopped */
    bool fell_back;      /* the fast path's chosen design failed a check on the full path, so the search
                          * ran again with every candidate on the full path (docs/fit.md, "The search") */
    ls_fit_cand *best;   /* the best candidates, best first: feasible ones by the goal, then the closest */
    int nbest;
    bool any_feasible;   /* best[0].meets */
    bool have_yield;     /* the finalists' yields were computed */
    long yield_trials;   /* trials per finalist (0: no part has tol=, so none were run) */
    ls_fit_refusal refused;   /* with LS_BAD_REQUEST: why there was no search */
} ls_fit_study;

/* Run the search.  Returns LS_DONE (whether or not a candidate is feasible:
 * see any_feasible), LS_BAD_REQUEST when it cannot search (refused says
 * why), LS_NO_MEMORY, or LS_UNSOLVABLE when the circuit no longer solves at
 * its written values.  Free the outputs with ls_fit_free in every case. */
ls_outcome ls_fit_run(ls_fit_study *f);

/* Release vars and best (the inputs are the caller's). */
void ls_fit_free(ls_fit_study *f);

/* A check's words for a report: "expect adc_in = 1.65 V within 1%", "port
 * p_adc: abs(sag) <= budget", "r_top: power <= rating" ...  Written into buf. */
const char *ls_fit_check_text(const ls_fit_study *f, const ls_fit_check *c, char *buf, size_t n);

/* The goal's name ("margin", "yield", "current"), and the goal of a name (-1 for none). */
const char *ls_fit_goal_name(ls_fit_goal g);
int ls_fit_goal_of(const char *name);

#endif
