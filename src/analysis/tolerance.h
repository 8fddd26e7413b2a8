/* tolerance.h — the tolerance study shared by the `tol` command and the C API:
 * worst case (every corner, or linear from the sensitivities) and a seeded,
 * threaded Monte Carlo run of one quantity, with the yield of its expects. */
#ifndef LS_TOLERANCE_H
#define LS_TOLERANCE_H

#include <stdbool.h>
#include <stdint.h>

#include "analysis/analysis.h"
#include "analysis/share.h"

#define LS_TOL_CORNER_LIMIT 16       /* exact corners up to 2^16 solves */
#define LS_TOL_MAX_TRIALS 10000000L
#define LS_TOL_MAX_THREADS 16

/* The Monte Carlo percentile levels, in percent, and their report keys. */
extern const double ls_tol_pct_levels[5];
extern const char *const ls_tol_pct_keys[5];

/* One varying part. */
typedef struct ls_tol_vary {
    int part;
    double nominal;      /* main value, in the part's unit */
    double tol;          /* fraction */
    double dev;          /* sensitivity method: |dQ/dp| · |p| · tol, in Q's unit */
} ls_tol_vary;

typedef struct ls_tol_result {
    double nominal;
    double wc_min, wc_max;
    bool corners;                  /* method used */
    unsigned long wc_min_mask, wc_max_mask;   /* corners: bit j set = part j at +tol */
    double rss;                    /* sensitivity method: RSS half-width */
    long wc_failed;                /* corners that did not solve */
    double mean, std, min, max;
    double pct[5];
    long finite;                   /* trials with a finite value */
    double yield;                  /* NaN: no expect on the quantity */
} ls_tol_result;

/* One study.  The caller fills the inputs; ls_tol_run fills the rest. */
typedef struct ls_tol_study {
    /* in */
    ls_netlist *nl;                /* solved through op (op->nl == nl); values are restored on return */
    ls_op *op;
    ls_arena *arena;               /* scratch diagnostics during the corners */
    ls_diags *diags;               /* warnings of the study (tol-none, tol-corner, tol-trials) */
    const ls_q *q;
    long trials;                   /* 1 .. LS_TOL_MAX_TRIALS */
    uint64_t seed;
    bool normal;                   /* tol is 3 sigma of a normal law; else uniform +-tol */
    int threads;                   /* <= 0: LOADSTACK_THREADS, else the online processors */
    void (*progress)(void *ctx, long done, long total);   /* called every 50 ms during the trials, or NULL */
    void *progress_ctx;
    const ls_share *share;         /* or NULL: trials split among processes (share.h), values gathered */
    /* out (trials becomes 0 when nothing varies: no trials are run, the
       statistics are the nominal value and the yield the nominal verdict) */
    ls_tol_vary *v;                /* the varying parts, nv of them */
    int nv;
    int *checks;                   /* indices of the expects on q, nchecks of them */
    int nchecks;
    ls_tol_result r;
    double *values;                /* per trial, NaN where it did not solve; trials of them */
    const char *failed_stage;      /* with LS_NO_MEMORY or LS_NO_WORKER: the stage that ran out of
                                      memory ("the worst-case corners", "a Monte Carlo trial" ...) */
} ls_tol_study;

/* Run the study: the varying parts, the expects on q, the nominal value, the
 * worst case, the Monte Carlo trials and their statistics.  Returns LS_DONE,
 * LS_UNSOLVABLE (the nominal circuit no longer solves), LS_NO_MEMORY (memory
 * ran out anywhere: the varying parts, a corner's or a trial's solve, the
 * statistics; never counted as a corner or trial that did not solve) or
 * LS_NO_WORKER (a worker could not set up); t->failed_stage names the stage.
 * Free the outputs with ls_tol_free in every case. */
ls_outcome ls_tol_run(ls_tol_study *t);

/* Only the Monte Carlo values of q over `trials` trials with `seed` (no worst
 * case, no yield), into *values (caller frees).  Returns 0, or -1 when out of
 * memory or a worker could not set up. */
int ls_tol_trials(const ls_netlist *nl, const ls_op *op, const ls_q *q, long trials, uint64_t seed, double **values);

/* The fraction of `trials` Monte Carlo trials (the parts' tol=, drawn as
 * `tol` draws them for `seed`: trial i from stream i) for which accept(ctx,
 * op) holds on the trial's solved operating point (a trial that does not
 * solve fails).  accept runs on several threads at once, each with its own
 * op.  Returns 0 with *rate set, or -1 when out of memory or a worker could
 * not set up. */
int ls_tol_pass_rate(const ls_netlist *nl, const ls_op *op, long trials, uint64_t seed, bool normal,
                     bool (*accept)(void *ctx, ls_op *op), void *ctx, double *rate);

/* Release the study's outputs (v, checks, values); the inputs are the caller's. */
void ls_tol_free(ls_tol_study *t);

/* Do two bound quantities have the same structure (same nodes, properties,
 * operators and constants)?  An expect is "on" QUANTITY when its left side is
 * the same as QUANTITY's. */
bool ls_q_same(const ls_q *a, const ls_q *b);

#endif
