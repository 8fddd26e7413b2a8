/* tolerance.c — the tolerance study of one quantity from the parts' tol=
 * options, shared by the `tol` command and the C API (ls_circuit_tol).
 *
 * Every part with a main value and tol > 0 varies (sources too).  The worst
 * case enumerates every corner (each part at its -tol or +tol end) when at most
 * LS_TOL_CORNER_LIMIT parts vary, re-solving with the factorization structure
 * kept; beyond that it takes the linear worst case from the sensitivities (and
 * their root-sum-square).  The Monte Carlo run draws trial i from stream i of
 * PCG32 (rng.h) seeded from the run's seed and i, so a seed gives the same
 * numbers on every machine and with any number of threads; the threads share
 * the netlist's parts (only read) and each owns its operating point, whose
 * run (run.h) holds the trial's values and the parts' states. */
#include "analysis/tolerance.h"

#include <assert.h>
#include <math.h>
#include <pthread.h>
#include <stdatomic.h>
#include <time.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "parts/parts.h"
#include "base/rng.h"
#include "analysis/sens.h"
#include "analysis/newton.h"

const double ls_tol_pct_levels[5] = {0.1, 1, 50, 99, 99.9};
const char *const ls_tol_pct_keys[5] = {"0.1", "1", "50", "99", "99.9"};

/* ---- which expects are "on QUANTITY" ----------------------------------------------------- */

bool ls_q_same(const ls_q *a, const ls_q *b)
{
    if (a->kind != b->kind)
        return false;
    switch (a->kind) {
    case Q_CONST: return a->value == b->value;
    case Q_NODE: return a->index == b->index;
    case Q_PROP: return a->index == b->index && a->prop == b->prop;
    case Q_NEG: return ls_q_same(a->a, b->a);
    case Q_BIN: return a->op == b->op && ls_q_same(a->a, b->a) && ls_q_same(a->b, b->b);
    case Q_CALL:
        if (a->op != b->op || a->nargs != b->nargs)
            return false;
        for (int i = 0; i < a->nargs; i++)
            if (!ls_q_same(a->args[i], b->args[i]))
                return false;
        return true;
    }
    assert(!"a bound quantity of no known kind");
    return false;
}

/* Indices of the expects whose left side is q, into *out (caller frees).
 * Returns the count, -1 on no memory. */
static int matching_checks(const ls_netlist *nl, const ls_q *q, int **out)
{
    *out = malloc((size_t)(nl->nchecks ? nl->nchecks : 1) * sizeof **out);
    if (!*out)
        return -1;
    int n = 0;
    for (int i = 0; i < nl->nchecks; i++)
        if (!nl->checks[i].is_rule && nl->checks[i].lhs && ls_q_same(nl->checks[i].lhs, q))
            (*out)[n++] = i;
    return n;
}

/* ---- Monte Carlo workers ----------------------------------------------------------------- */

typedef struct mc_job {
    const ls_netlist *base;        /* the session's netlist, only read */
    const ls_run *start;           /* the solved op's run: the values the trials vary about */
    ls_options opt;
    const ls_q *q;
    const ls_tol_vary *v;
    int nv;
    const int *checks;             /* matching expects */
    int nchecks;
    long trials;
    long first, last;              /* the trials this process runs (all of them without a share) */
    uint64_t seed;
    bool normal;                   /* tol is 3 sigma of a normal law; else uniform +-tol */
    double *value;                 /* per trial, NaN when it did not solve */
    unsigned char *pass;           /* per trial: every matching expect holds (or accept says so) */
    bool (*accept)(void *ctx, ls_op *op);   /* or NULL: instead of the matching expects */
    void *accept_ctx;
    void (*progress)(void *ctx, long done, long total);   /* or NULL */
    void *progress_ctx;
    atomic_long done;              /* trials finished, for the progress hook */
} mc_job;

typedef struct mc_worker {
    mc_job *job;
    long first, last;              /* trials [first, last) */
    int status;                    /* 0 ok, -1 could not set up, -2 a trial ran out of memory */
    atomic_bool finished;          /* the worker has returned */
} mc_worker;

/* Draw the part values of trial i into run (a function of (seed, i) alone).
 * 0, or -1 when out of memory. */
static int draw_trial(const mc_job *job, ls_run *run, long i)
{
    ls_rng r;
    ls_rng_seed_trial(&r, job->seed, (uint64_t)i);
    for (int j = 0; j < job->nv; j++) {
        double d = job->normal ? ls_rng_normal(&r) * job->v[j].tol / 3 : ls_rng_uniform_pm1(&r) * job->v[j].tol;
        if (ls_run_set_value(run, job->v[j].part, job->v[j].nominal * (1 + d)) != 0)
            return -1;
    }
    return 0;
}

/* One worker's solve: the shared netlist's record with diagnostics of its
 * own (the parts are the session's, only read), its operating point, the
 * nominal run and solution every trial starts from, and the parts a trial
 * restamps. */
typedef struct mc_state {
    ls_netlist nl;
    ls_op op;
    ls_run nominal;
    double *x0;                    /* the nominal solution (op.mna.n) */
    int *varying;                  /* the varying parts; NULL: restamp every part (a circuit that iterates) */
} mc_state;

/* Solve the nominal point in st and keep what the trials start from.
 * Returns 0, or -1 when that failed (st is then freed by mc_state_free). */
static int mc_setup(const mc_job *job, const ls_options *opt, mc_state *st)
{
    int status = -1;
    if (ls_op_solve(&st->op, &st->nl, opt) == LS_DONE && ls_run_init(&st->nominal, &st->nl) == 0 &&
        ls_run_copy(&st->nominal, &st->op.run) == 0 &&
        (job->nv == 0 || ls_run_set_value(&st->nominal, job->v[0].part, job->v[0].nominal) == 0)) {
        /* Every trial starts from the nominal solution and part states, so a
         * trial's result does not depend on the trial solved before it. */
        st->x0 = malloc((size_t)(st->op.mna.n ? st->op.mna.n : 1) * sizeof *st->x0);
        if (st->x0) {
            if (st->op.mna.n > 0)
                memcpy(st->x0, st->op.x, (size_t)st->op.mna.n * sizeof *st->x0);
            status = 0;
        }
    }
    /* In a linear circuit a trial changes only the varying parts' values (the
     * nominal run puts every other value back, and there are no states), so
     * only their entries are restamped (mna.h, ls_mna_expect_changes). */
    if (status == 0 && !ls_newton_needed(&st->nl))
        st->varying = malloc((size_t)(job->nv ? job->nv : 1) * sizeof *st->varying);
    for (int j = 0; st->varying && j < job->nv; j++)
        st->varying[j] = job->v[j].part;
    /* ... and with few varying parts the factor may be kept and updated (solver.h) */
    if (st->varying && st->op.solver)
        ls_solver_allow_update(st->op.solver, &st->op.mna.a);
    return status;
}

static void mc_state_free(mc_state *st)
{
    ls_op_free(&st->op);
    free(st->varying);
    free(st->x0);
    ls_run_free(&st->nominal);
}

/* Do the matching expects (or job->accept) hold in the solved op? */
static bool trial_passes(const mc_job *job, mc_state *st)
{
    bool ok = true;
    if (job->accept)
        ok = job->accept(job->accept_ctx, &st->op);
    for (int c = 0; c < job->nchecks && ok; c++) {
        ls_check_result r;
        ls_check_eval(&st->op, &st->nl.checks[job->checks[c]], &r);
        ok = r.pass;
    }
    return ok;
}

/* Trial i from the nominal point: its values drawn, solved, its value and
 * verdict into job.  0, or -2 when memory ran out (the study stops). */
static int mc_trial(mc_job *job, mc_state *st, long i)
{
    ls_op *op = &st->op;
    if (op->mna.n > 0)
        memcpy(op->x, st->x0, (size_t)op->mna.n * sizeof *st->x0);
    if (ls_run_copy(&op->run, &st->nominal) != 0 || draw_trial(job, &op->run, i) != 0)
        return -2;
    if (st->varying)
        ls_mna_expect_changes(&op->mna, st->varying, job->nv);
    if (ls_op_resolve(op) != LS_DONE) {
        if (op->nomem) /* not a trial that has no solution: the study cannot go on */
            return -2;
        job->value[i] = NAN;
        job->pass[i] = 0;
        return 0;
    }
    job->value[i] = job->q ? ls_q_eval(op, job->q) : NAN;
    job->pass[i] = trial_passes(job, st);
    atomic_fetch_add_explicit(&job->done, 1, memory_order_relaxed);
    return 0;
}

/* Thread body: a solve of its own over the shared netlist (mc_state); fills
 * job->value and job->pass for the worker's trials. */
static void *mc_run(void *arg)
{
    mc_worker *w = arg;
    mc_job *job = w->job;
    /* Trials need their value to the statistics' accuracy, not per-trial
     * bounds: no extra-precise refinement and no error bounds (the
     * session's nominal solve keeps both). */
    ls_options opt = job->opt;
    opt.trial = true;
    opt.no_bounds = true;
    opt.start = job->start;
    opt.keep_states = false;
    ls_arena arena;
    ls_diags diags;
    ls_arena_init(&arena);
    ls_diags_init(&diags, &arena);
    mc_state st = {.nl = *job->base};   /* the record only: its parts stay the session's */
    st.nl.diags = &diags;
    w->status = mc_setup(job, &opt, &st);
    for (long i = w->first; w->status == 0 && i < w->last; i++)
        w->status = mc_trial(job, &st, i);
    mc_state_free(&st);
    ls_diags_free(&diags);
    ls_arena_free(&arena);
    atomic_store(&w->finished, true);
    return NULL;
}

/* Number of threads: LOADSTACK_THREADS if set (1..LS_TOL_MAX_THREADS), else the
 * online processors, at most LS_TOL_MAX_THREADS and never more than trials / 64 + 1. */
static int thread_count(long trials)
{
    long n = sysconf(_SC_NPROCESSORS_ONLN);
    const char *env = getenv("LOADSTACK_THREADS");
    if (env && *env) {
        char *end;
        long e = strtol(env, &end, 10);
        if (*end == 0 && e >= 1)
            n = e;
    }
    if (n < 1)
        n = 1;
    if (n > LS_TOL_MAX_THREADS)
        n = LS_TOL_MAX_THREADS;
    if (n > trials / 64 + 1)
        n = trials / 64 + 1;
    return (int)n;
}

/* Run every trial on `nthreads` threads (the caller's thread takes the first
 * share; with a progress hook it starts that share on a thread too and calls
 * the hook every 50 ms while all of them run).  Returns 0, -1 when a worker
 * could not set up, or -2 when a trial ran out of memory. */
static int mc_all(mc_job *job, int nthreads)
{
    mc_worker w[LS_TOL_MAX_THREADS];
    pthread_t tid[LS_TOL_MAX_THREADS];
    bool started[LS_TOL_MAX_THREADS] = {false};
    for (int t = 0; t < nthreads; t++) {
        w[t].job = job;
        long span = job->last - job->first;
        w[t].first = job->first + span * t / nthreads;
        w[t].last = job->first + span * (t + 1) / nthreads;
        w[t].status = -1;
        atomic_init(&w[t].finished, false);
    }
    atomic_init(&job->done, 0);
    for (int t = job->progress ? 0 : 1; t < nthreads; t++)
        started[t] = pthread_create(&tid[t], NULL, mc_run, &w[t]) == 0;
    if (job->progress && started[0]) {
        const struct timespec tick = {0, 50 * 1000 * 1000}; /* 50 ms */
        bool all;
        do {
            nanosleep(&tick, NULL);
            job->progress(job->progress_ctx, atomic_load(&job->done), job->last - job->first);
            all = true;
            for (int t = 0; t < nthreads; t++)
                all = all && (!started[t] || atomic_load(&w[t].finished));
        } while (!all);
    }
    for (int t = 0; t < nthreads; t++) {
        if (started[t])
            pthread_join(tid[t], NULL);
        else
            mc_run(&w[t]); /* no thread (or no progress hook): do its share here */
    }
    int rc = 0;
    for (int t = 0; t < nthreads; t++)
        if (w[t].status < rc)
            rc = w[t].status;
    return rc;
}

/* With a share: every process's trials (values and verdicts) to all, and
 * the worst status of any process.  Returns that status (code without a share). */
static ls_outcome share_trials(const ls_share *s, mc_job *job, ls_outcome code)
{
    if (!s || s->size <= 1)
        return code;
    int *status = calloc((size_t)s->size, sizeof *status);
    if (!status)
        return LS_NO_MEMORY; /* (the other processes then wait: out of memory ends them all) */
    status[s->rank] = (int)code;
    int rc = ls_share_gather(s, status, s->size, sizeof *status);
    for (int r = 0; r < s->size && rc == 0; r++)
        if (status[r] != LS_DONE)
            code = (ls_outcome)status[r];
    free(status);
    if (rc == 0 && code == LS_DONE)
        rc = ls_share_gather(s, job->value, job->trials, sizeof *job->value);
    if (rc == 0 && code == LS_DONE)
        rc = ls_share_gather(s, job->pass, job->trials, 1);
    return rc != 0 ? LS_NO_WORKER : code;
}

/* ---- statistics ---------------------------------------------------------------------------- */

/* qsort order of doubles, ascending. */
static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return x < y ? -1 : x > y;
}

/* Percentile p (0..100) of sorted s[0..n-1], linear between order statistics
 * at rank (n - 1)·p/100 (numpy's default "linear" method). */
static double percentile(const double *s, long n, double p)
{
    double pos = (double)(n - 1) * p / 100;
    long k = (long)floor(pos);
    if (k >= n - 1)
        return s[n - 1];
    double f = pos - (double)k;
    return s[k] + f * (s[k + 1] - s[k]);
}

/* Mean, sample standard deviation (n - 1), extremes and percentiles of the
 * finite values; yield over every trial.  Returns 0, -1 on no memory. */
static int mc_stats(const mc_job *job, bool want_yield, ls_tol_result *r)
{
    double *s = malloc((size_t)job->trials * sizeof *s);
    if (!s)
        return -1;
    long n = 0, pass = 0;
    for (long i = 0; i < job->trials; i++) {
        if (isfinite(job->value[i]))
            s[n++] = job->value[i];
        pass += job->pass[i];
    }
    r->finite = n;
    r->yield = want_yield ? (double)pass / (double)job->trials : NAN;
    r->mean = r->std = r->min = r->max = NAN;
    for (int k = 0; k < 5; k++)
        r->pct[k] = NAN;
    if (n > 0) {
        double sum = 0;
        for (long i = 0; i < n; i++)
            sum += s[i];
        r->mean = sum / (double)n;
        double ss = 0;
        for (long i = 0; i < n; i++)
            ss += (s[i] - r->mean) * (s[i] - r->mean);
        r->std = n > 1 ? sqrt(ss / (double)(n - 1)) : 0;
        qsort(s, (size_t)n, sizeof *s, cmp_double);
        r->min = s[0];
        r->max = s[n - 1];
        for (int k = 0; k < 5; k++)
            r->pct[k] = percentile(s, n, ls_tol_pct_levels[k]);
    }
    free(s);
    return 0;
}

/* ---- worst case ---------------------------------------------------------------------------- */

/* Set the varying parts to the corner `mask` (bit j: part j at +tol) in
 * run.  0, or -1 when out of memory. */
static int set_corner(ls_run *run, const ls_tol_vary *v, int nv, unsigned long mask)
{
    for (int j = 0; j < nv; j++)
        if (ls_run_set_value(run, v[j].part, v[j].nominal * (1 + ((mask >> j) & 1 ? v[j].tol : -v[j].tol))) != 0)
            return -1;
    return 0;
}

/* The varying parts back at nominal in run (no memory is needed: each has a
 * value of its own there once set). */
static void set_nominal(ls_run *run, const ls_tol_vary *v, int nv)
{
    for (int j = 0; j < nv; j++)
        (void)ls_run_set_value(run, v[j].part, v[j].nominal);
}

/* Every corner, re-solved; the nominal value is included.  The parts are back
 * at nominal (and solved) on return.  Returns LS_DONE, LS_NO_MEMORY or
 * LS_UNSOLVABLE (the nominal point no longer solves). */
static ls_outcome corners(ls_tol_study *t)
{
    ls_tol_result *r = &t->r;
    const ls_tol_vary *v = t->v;
    int nv = t->nv;
    r->corners = true;
    r->wc_min = r->wc_max = r->nominal;
    r->wc_min_mask = r->wc_max_mask = 0;
    bool any = false;
    ls_diags scratch;
    ls_diags_init(&scratch, t->arena);
    ls_diags *keep = t->nl->diags;
    t->nl->diags = &scratch;   /* a singular corner is counted, not reported as an error */
    bool nomem = false;
    for (unsigned long m = 0; m < (1ul << nv) && !nomem; m++) {
        if ((nomem = set_corner(&t->op->run, v, nv, m) != 0))
            break;
        double x = ls_op_resolve(t->op) == LS_DONE ? ls_q_eval(t->op, t->q) : NAN;
        if ((nomem = t->op->nomem))   /* no memory is no property of the corner */
            break;
        if (isnan(x)) {
            r->wc_failed++;
            continue;
        }
        if (!any || x < r->wc_min)
            r->wc_min = x, r->wc_min_mask = m;
        if (!any || x > r->wc_max)
            r->wc_max = x, r->wc_max_mask = m;
        any = true;
    }
    set_nominal(&t->op->run, v, nv);
    ls_outcome st = ls_op_resolve(t->op);
    t->nl->diags = keep;
    ls_diags_free(&scratch);
    if (nomem || t->op->nomem) {
        t->failed_stage = "the worst-case corners";
        return LS_NO_MEMORY;
    }
    if (r->nominal < r->wc_min)
        r->wc_min = r->nominal;
    if (r->nominal > r->wc_max)
        r->wc_max = r->nominal;
    if (r->wc_failed) {
        ls_warning(t->diags, LS_NOLOC, "tol-corner",
                   "%ld of %lu corners could not be solved (or the quantity is undefined there); the worst case "
                   "is unknown",
                   r->wc_failed, 1ul << nv);
        r->wc_min = r->wc_max = NAN;
    }
    return st == LS_DONE ? LS_DONE : LS_UNSOLVABLE;
}

/* dQ/dp of each varying part by central differences (when the adjoint
 * cannot handle the quantity).  Returns LS_DONE, LS_NO_MEMORY or
 * LS_UNSOLVABLE. */
static ls_outcome fd_derivatives(ls_tol_study *t, double *dq)
{
    ls_run *run = &t->op->run;
    for (int j = 0; j < t->nv; j++) {
        int part = t->v[j].part;
        double p = t->v[j].nominal, h = fabs(p) * 1e-6;
        bool nomem = ls_run_set_value(run, part, p + h) != 0;
        double a = !nomem && ls_op_resolve(t->op) == LS_DONE ? ls_q_eval(t->op, t->q) : NAN;
        nomem |= t->op->nomem || ls_run_set_value(run, part, p - h) != 0;
        double b = !nomem && ls_op_resolve(t->op) == LS_DONE ? ls_q_eval(t->op, t->q) : NAN;
        nomem |= t->op->nomem;
        (void)ls_run_set_value(run, part, p);
        if (nomem) {
            ls_op_resolve(t->op);   /* back at nominal, if memory allows */
            t->failed_stage = "the sensitivities";
            return LS_NO_MEMORY;
        }
        dq[j] = (a - b) / (2 * h);
    }
    ls_outcome st = ls_op_resolve(t->op);
    if (t->op->nomem) {
        t->failed_stage = "the sensitivities";
        return LS_NO_MEMORY;
    }
    return st == LS_DONE ? LS_DONE : LS_UNSOLVABLE;
}

/* Linear worst case nominal ± Σ|dQ/dp|·|p|·tol, and the RSS half-width.
 * Returns as fd_derivatives. */
static ls_outcome linear_wc(ls_tol_study *t)
{
    ls_tol_result *r = &t->r;
    ls_tol_vary *v = t->v;
    int nv = t->nv;
    r->corners = false;
    double *dq = calloc((size_t)(nv ? nv : 1), sizeof *dq);
    if (!dq) {
        t->failed_stage = "the sensitivities";
        return LS_NO_MEMORY;
    }
    ls_diags scratch;
    ls_diags_init(&scratch, t->arena);
    ls_diags *keep = t->nl->diags;
    t->nl->diags = &scratch;   /* an unsupported leaf falls back to differences, silently */
    ls_sens_item *items = NULL;
    double value;
    int n = ls_sens(t->op, t->q, &value, &items);
    t->nl->diags = keep;
    ls_diags_free(&scratch);
    ls_outcome st = LS_DONE;
    if (n == LS_SENS_NOMEM) {   /* differences would give other numbers: no fallback */
        free(dq);
        t->failed_stage = "the sensitivities";
        return LS_NO_MEMORY;
    }
    if (n >= 0) {
        for (int j = 0; j < nv; j++)
            for (int i = 0; i < n; i++)
                if (items[i].part == v[j].part)
                    dq[j] = items[i].derivative;
    } else {
        st = fd_derivatives(t, dq);
    }
    free(items);
    double lin = 0, ss = 0;
    for (int j = 0; j < nv; j++) {
        v[j].dev = fabs(dq[j] * v[j].nominal) * v[j].tol;
        lin += v[j].dev;
        ss += v[j].dev * v[j].dev;
    }
    free(dq);
    r->wc_min = r->nominal - lin;
    r->wc_max = r->nominal + lin;
    r->rss = sqrt(ss);
    return st;
}

/* ---- the study ----------------------------------------------------------------------------- */

/* The varying parts, into *out (caller frees).  Returns the count, -1 on no memory. */
static int varying_parts(const ls_netlist *nl, const ls_run *run, ls_tol_vary **out)
{
    *out = calloc((size_t)(nl->nparts ? nl->nparts : 1), sizeof **out);
    if (!*out)
        return -1;
    int n = 0;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        double t = ls_part_opt(p, "tol", 0);
        if (p->has_value && t > 0)
            (*out)[n++] = (ls_tol_vary){.part = i, .nominal = ls_run_value(run, p), .tol = t};
    }
    return n;
}

/* With no part varying every trial would give the nominal value: the
 * Monte Carlo run is not made (trials becomes 0) and its statistics are that
 * value exactly; the yield is whether the nominal design meets every expect on Q. */
static void nothing_varies(ls_tol_study *t)
{
    ls_tol_result *r = &t->r;
    t->trials = 0;
    r->finite = 0;
    r->mean = r->min = r->max = r->nominal;
    r->std = 0;
    for (int k = 0; k < 5; k++)
        r->pct[k] = r->nominal;
    bool ok = true;
    for (int c = 0; c < t->nchecks && ok; c++) {
        ls_check_result cr;
        ls_check_eval(t->op, &t->nl->checks[t->checks[c]], &cr);
        ok = cr.pass;
    }
    r->yield = t->nchecks > 0 ? (ok ? 1.0 : 0.0) : NAN;
}

ls_outcome ls_tol_run(ls_tol_study *t)
{
    t->v = NULL;
    t->checks = NULL;
    t->values = NULL;
    memset(&t->r, 0, sizeof t->r);
    t->nv = varying_parts(t->nl, &t->op->run, &t->v);
    t->nchecks = matching_checks(t->nl, t->q, &t->checks);
    t->failed_stage = "the varying parts";
    if (t->nv < 0 || t->nchecks < 0)
        return LS_NO_MEMORY;
    t->failed_stage = NULL;
    t->r.nominal = ls_q_eval(t->op, t->q);
    if (t->nv == 0)
        ls_warning(t->diags, LS_NOLOC, "tol-none", "no part has a tol= option: nothing varies");
    ls_outcome code = t->nv <= LS_TOL_CORNER_LIMIT ? corners(t) : linear_wc(t);
    if (code != LS_DONE)
        return code;
    if (t->nv == 0) {
        nothing_varies(t);
        return LS_DONE;
    }
    mc_job job = {.base = t->nl, .start = &t->op->run, .opt = t->op->opt, .q = t->q, .v = t->v, .nv = t->nv, .checks = t->checks,
                  .nchecks = t->nchecks, .trials = t->trials, .seed = t->seed, .normal = t->normal,
                  .progress = t->progress, .progress_ctx = t->progress_ctx};
    job.value = malloc((size_t)t->trials * sizeof *job.value);
    job.pass = malloc((size_t)t->trials);
    if (!job.value || !job.pass) {
        free(job.value);
        free(job.pass);
        t->failed_stage = "the table of trials";
        return LS_NO_MEMORY;
    }
    ls_share_range(t->share, t->trials, &job.first, &job.last);
    int threads = t->threads > 0 ? t->threads : thread_count(job.last - job.first);
    if (threads > LS_TOL_MAX_THREADS)
        threads = LS_TOL_MAX_THREADS;
    int rc = mc_all(&job, threads);
    code = rc == 0 ? LS_DONE : rc == -2 ? LS_NO_MEMORY : LS_NO_WORKER;
    t->failed_stage = rc == -2 ? "a Monte Carlo trial" : rc ? "a Monte Carlo worker's copy of the circuit" : NULL;
    code = share_trials(t->share, &job, code);
    if (code == LS_NO_MEMORY && !t->failed_stage)
        t->failed_stage = "a Monte Carlo trial (in another process)";
    if (code == LS_DONE && mc_stats(&job, t->nchecks > 0, &t->r) != 0) {
        code = LS_NO_MEMORY;
        t->failed_stage = "the statistics";
    }
    free(job.pass);
    t->values = job.value;
    if (code != LS_DONE)
        return code;
    if (t->r.finite < t->trials)
        ls_warning(t->diags, LS_NOLOC, "tol-trials",
                   "%ld of %ld trials did not solve or gave no finite value; the statistics leave them out",
                   t->trials - t->r.finite, t->trials);
    return LS_DONE;
}

void ls_tol_free(ls_tol_study *t)
{
    free(t->v);
    free(t->checks);
    free(t->values);
    t->v = NULL;
    t->checks = NULL;
    t->values = NULL;
}

int ls_tol_trials(const ls_netlist *nl, const ls_op *op, const ls_q *q, long trials, uint64_t seed, double **values)
{
    ls_tol_vary *v;
    int nv = varying_parts(nl, &op->run, &v);
    *values = NULL;
    if (nv < 0)
        return -1;
    mc_job job = {.base = nl, .start = &op->run, .opt = op->opt, .q = q, .v = v, .nv = nv, .trials = trials, .first = 0,
                  .last = trials, .seed = seed};
    job.value = malloc((size_t)trials * sizeof *job.value);
    job.pass = malloc((size_t)trials);
    int rc = job.value && job.pass ? mc_all(&job, thread_count(trials)) : -1;
    free(job.pass);
    free(v);
    if (rc != 0) {
        free(job.value);
        return -1;
    }
    *values = job.value;
    return 0;
}

int ls_tol_pass_rate(const ls_netlist *nl, const ls_op *op, long trials, uint64_t seed, bool normal,
                     bool (*accept)(void *ctx, ls_op *op), void *ctx, double *rate)
{
    ls_tol_vary *v;
    int nv = varying_parts(nl, &op->run, &v);
    *rate = NAN;
    if (nv < 0)
        return -1;
    mc_job job = {.base = nl, .start = &op->run, .opt = op->opt, .v = v, .nv = nv, .trials = trials, .first = 0, .last = trials,
                  .seed = seed, .normal = normal, .accept = accept, .accept_ctx = ctx};   /* one process: every trial */
    job.value = malloc((size_t)trials * sizeof *job.value);
    job.pass = malloc((size_t)trials);
    int rc = job.value && job.pass ? mc_all(&job, thread_count(trials)) : -1;
    if (rc == 0) {
        long pass = 0;
        for (long i = 0; i < trials; i++)
            pass += job.pass[i];
        *rate = (double)pass / (double)trials;
    }
    free(job.value);
    free(job.pass);
    free(v);
    return rc;
}
