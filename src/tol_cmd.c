/* tol_cmd.c — the tol command: worst case and Monte Carlo of a quantity from
 * the parts' tol= options.
 *
 * Every part with a main value and tol > 0 varies (sources too).  The worst
 * case enumerates every corner (each part at its -tol or +tol end) when at most
 * CORNER_LIMIT parts vary, re-solving with the factorization structure kept;
 * beyond that it takes the linear worst case from the sensitivities (and their
 * root-sum-square).  The Monte Carlo run draws trial i from stream i of
 * PCG32 (rng.h) seeded from the run's seed and i, so a seed gives the same
 * numbers on every machine and with any number of threads; each thread owns
 * a copy of the parts and its own operating point. */
#include <errno.h>
#include <stdatomic.h>
#include <math.h>
#include <pthread.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "cli.h"
#include "elab.h"
#include "fmt.h"
#include "parser.h"
#include "parts.h"
#include "plot.h"
#include "progress.h"
#include "rng.h"
#include "sens.h"

#define CORNER_LIMIT 16       /* exact corners up to 2^16 solves */
#define MAX_THREADS 16
#define MAX_TRIALS 10000000L

static const double pct_levels[5] = {0.1, 1, 50, 99, 99.9};
static const char *const pct_keys[5] = {"0.1", "1", "50", "99", "99.9"};

/* One varying part. */
typedef struct vary {
    int part;
    double nominal;      /* main value, in the part's unit */
    double tol;          /* fraction */
    double dev;          /* sensitivity method: |dQ/dp| · |p| · tol, in Q's unit */
} vary;

typedef struct tol_result {
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
} tol_result;

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
    ls_options opt;
    const ls_q *q;
    const vary *v;
    int nv;
    const int *checks;             /* matching expects */
    int nchecks;
    long trials;
    uint64_t seed;
    bool normal;                   /* tol is 3 sigma of a normal law; else uniform +-tol */
    double *value;                 /* per trial, NaN when it did not solve */
    unsigned char *pass;           /* per trial: every matching expect holds */
    bool quiet;                    /* --quiet: no progress line */
    atomic_long done;              /* trials finished, for the progress line */
} mc_job;

typedef struct mc_worker {
    mc_job *job;
    long first, last;              /* trials [first, last) */
    int status;                    /* 0 ok, -1 could not set up */
    atomic_bool finished;          /* the worker has returned */
} mc_worker;

/* Draw the part values of trial i into parts[] (a function of (seed, i) alone). */
static void draw_trial(const mc_job *job, ls_part *parts, long i)
{
    ls_rng r;
    ls_rng_seed_trial(&r, job->seed, (uint64_t)i);
    for (int j = 0; j < job->nv; j++) {
        double d = job->normal ? ls_rng_normal(&r) * job->v[j].tol / 3 : ls_rng_uniform_pm1(&r) * job->v[j].tol;
        parts[job->v[j].part].value = job->v[j].nominal * (1 + d);
    }
}

/* Point the copied parts at analysis states of their own (a copy shares the
 * base netlist's): *runs gets one for every part that has one, in part
 * order.  Returns their number, or -1 when out of memory. */
static int own_runs(ls_part *parts, int n, ls_part_run **runs)
{
    int k = 0;
    for (int i = 0; i < n; i++)
        k += parts[i].run != NULL;
    *runs = malloc((size_t)(k ? k : 1) * sizeof **runs);
    if (!*runs)
        return -1;
    k = 0;
    for (int i = 0; i < n; i++)
        if (parts[i].run) {
            (*runs)[k] = *parts[i].run;
            parts[i].run = &(*runs)[k++];
        }
    return k;
}

/* Thread body: a private netlist (its own parts, their analysis states and
 * diagnostics) and operating point; fills job->value and job->pass for its
 * trials. */
static void *mc_run(void *arg)
{
    mc_worker *w = arg;
    mc_job *job = w->job;
    ls_arena arena;
    ls_diags diags;
    ls_arena_init(&arena);
    ls_diags_init(&diags, &arena);
    ls_netlist nl = *job->base;
    nl.diags = &diags;
    nl.parts = malloc((size_t)(nl.nparts ? nl.nparts : 1) * sizeof *nl.parts);
    size_t psize = (size_t)(nl.nparts ? nl.nparts : 1) * sizeof *nl.parts;
    ls_part *nominal = malloc(psize);
    double *x0 = NULL;
    ls_part_run *runs = NULL, *nominal_runs = NULL;
    int nruns = -1;
    ls_op op;
    bool have_op = false;
    w->status = -1;
    if (nl.parts && nominal) {
        if (nl.nparts > 0) /* a circuit with no parts has no part table (memcpy from NULL is undefined) */
            memcpy(nl.parts, job->base->parts, (size_t)nl.nparts * sizeof *nl.parts);
        nruns = own_runs(nl.parts, nl.nparts, &runs);
        nominal_runs = malloc((size_t)(nruns > 0 ? nruns : 1) * sizeof *nominal_runs);
    }
    if (nruns >= 0 && nominal_runs) {
        have_op = true;
        if (ls_op_solve(&op, &nl, &job->opt) == LS_EXIT_OK) {
            /* Every trial starts from the nominal solution and part states, so a
             * trial's result does not depend on the trial solved before it. */
            memcpy(nominal, nl.parts, psize);
            memcpy(nominal_runs, runs, (size_t)nruns * sizeof *runs);
            x0 = malloc((size_t)(op.mna.n ? op.mna.n : 1) * sizeof *x0);
            if (x0) {
                if (op.mna.n > 0)
                    memcpy(x0, op.x, (size_t)op.mna.n * sizeof *x0);
                w->status = 0;
            }
        }
    }
    for (long i = w->first; w->status == 0 && i < w->last; i++) {
        memcpy(nl.parts, nominal, psize);
        memcpy(runs, nominal_runs, (size_t)nruns * sizeof *runs);
        if (op.mna.n > 0)
            memcpy(op.x, x0, (size_t)op.mna.n * sizeof *x0);
        draw_trial(job, nl.parts, i);
        if (ls_op_resolve(&op) != LS_EXIT_OK) {
            job->value[i] = NAN;
            job->pass[i] = 0;
            continue;
        }
        job->value[i] = ls_q_eval(&op, job->q);
        bool ok = true;
        for (int c = 0; c < job->nchecks && ok; c++) {
            ls_check_result r;
            ls_check_eval(&op, &nl.checks[job->checks[c]], &r);
            ok = r.pass;
        }
        job->pass[i] = ok;
        atomic_fetch_add_explicit(&job->done, 1, memory_order_relaxed);
    }
    if (have_op)
        ls_op_free(&op);
    free(x0);
    free(nominal);
    free(nominal_runs);
    free(runs);
    free(nl.parts);
    ls_diags_free(&diags);
    ls_arena_free(&arena);
    atomic_store(&w->finished, true);
    return NULL;
}

/* Number of threads: LOADSTACK_THREADS if set (1..MAX_THREADS), else the
 * online processors, at most MAX_THREADS and never more than trials / 64 + 1. */
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
    if (n > MAX_THREADS)
        n = MAX_THREADS;
    if (n > trials / 64 + 1)
        n = trials / 64 + 1;
    return (int)n;
}

/* Run every trial on `nthreads` threads (the caller's thread takes the first
 * share; with a progress line on the terminal it starts that share on a
 * thread too and keeps the line while all of them run).  Returns 0, or -1
 * when a worker could not set up. */
static int mc_all(mc_job *job, int nthreads)
{
    mc_worker w[MAX_THREADS];
    pthread_t tid[MAX_THREADS];
    bool started[MAX_THREADS] = {false};
    for (int t = 0; t < nthreads; t++) {
        w[t].job = job;
        w[t].first = job->trials * t / nthreads;
        w[t].last = job->trials * (t + 1) / nthreads;
        w[t].status = -1;
        atomic_init(&w[t].finished, false);
    }
    atomic_init(&job->done, 0);
    ls_progress pg;
    ls_progress_start(&pg, "tol", "trials", job->quiet);
    for (int t = pg.out ? 0 : 1; t < nthreads; t++)
        started[t] = pthread_create(&tid[t], NULL, mc_run, &w[t]) == 0;
    if (pg.out && started[0]) {
        const struct timespec tick = {0, 50 * 1000 * 1000}; /* 50 ms */
        bool all;
        do {
            nanosleep(&tick, NULL);
            ls_progress_update(&pg, atomic_load(&job->done), job->trials);
            all = true;
            for (int t = 0; t < nthreads; t++)
                all = all && (!started[t] || atomic_load(&w[t].finished));
        } while (!all);
        ls_progress_end(&pg);
    }
    for (int t = 0; t < nthreads; t++) {
        if (started[t])
            pthread_join(tid[t], NULL);
        else
            mc_run(&w[t]); /* no thread (or no progress line): do its share here */
    }
    for (int t = 0; t < nthreads; t++)
        if (w[t].status != 0)
            return -1;
    return 0;
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
static int mc_stats(const mc_job *job, bool want_yield, tol_result *r)
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
            r->pct[k] = percentile(s, n, pct_levels[k]);
    }
    free(s);
    return 0;
}

/* ---- worst case ---------------------------------------------------------------------------- */

/* Set the varying parts to the corner `mask` (bit j: part j at +tol). */
static void set_corner(ls_netlist *nl, const vary *v, int nv, unsigned long mask)
{
    for (int j = 0; j < nv; j++)
        nl->parts[v[j].part].value = v[j].nominal * (1 + ((mask >> j) & 1 ? v[j].tol : -v[j].tol));
}

/* Every corner, re-solved; the nominal value is included.  The parts are back
 * at nominal (and solved) on return.  Returns 0, or an exit code. */
static int corners(ls_session *s, const ls_q *q, const vary *v, int nv, tol_result *r)
{
    r->corners = true;
    r->wc_min = r->wc_max = r->nominal;
    r->wc_min_mask = r->wc_max_mask = 0;
    bool any = false;
    ls_diags scratch;
    ls_diags_init(&scratch, &s->arena);
    ls_diags *keep = s->nl.diags;
    s->nl.diags = &scratch;   /* a singular corner is counted, not reported as an error */
    for (unsigned long m = 0; m < (1ul << nv); m++) {
        set_corner(&s->nl, v, nv, m);
        double x = ls_op_resolve(&s->op) == LS_EXIT_OK ? ls_q_eval(&s->op, q) : NAN;
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
    for (int j = 0; j < nv; j++)
        s->nl.parts[v[j].part].value = v[j].nominal;
    int st = ls_op_resolve(&s->op);
    s->nl.diags = keep;
    ls_diags_free(&scratch);
    if (r->nominal < r->wc_min)
        r->wc_min = r->nominal;
    if (r->nominal > r->wc_max)
        r->wc_max = r->nominal;
    if (r->wc_failed) {
        ls_warning(&s->diags, LS_NOLOC, "tol-corner",
                   "%ld of %lu corners could not be solved (or the quantity is undefined there); the worst case "
                   "is unknown",
                   r->wc_failed, 1ul << nv);
        r->wc_min = r->wc_max = NAN;
    }
    return st == LS_EXIT_OK ? 0 : LS_EXIT_UNSOLVABLE;
}

/* dQ/dp of each varying part by central differences (when the adjoint
 * cannot handle the quantity).  Returns 0, or an exit code. */
static int fd_derivatives(ls_session *s, const ls_q *q, vary *v, int nv, double *dq)
{
    for (int j = 0; j < nv; j++) {
        double p = v[j].nominal, h = fabs(p) * 1e-6;
        s->nl.parts[v[j].part].value = p + h;
        double a = ls_op_resolve(&s->op) == LS_EXIT_OK ? ls_q_eval(&s->op, q) : NAN;
        s->nl.parts[v[j].part].value = p - h;
        double b = ls_op_resolve(&s->op) == LS_EXIT_OK ? ls_q_eval(&s->op, q) : NAN;
        s->nl.parts[v[j].part].value = p;
        dq[j] = (a - b) / (2 * h);
    }
    return ls_op_resolve(&s->op) == LS_EXIT_OK ? 0 : LS_EXIT_UNSOLVABLE;
}

/* Linear worst case nominal ± Σ|dQ/dp|·|p|·tol, and the RSS half-width. */
static int linear_wc(ls_session *s, const ls_q *q, vary *v, int nv, tol_result *r)
{
    r->corners = false;
    double *dq = calloc((size_t)(nv ? nv : 1), sizeof *dq);
    if (!dq)
        return LS_EXIT_UNSOLVABLE;
    ls_diags scratch;
    ls_diags_init(&scratch, &s->arena);
    ls_diags *keep = s->nl.diags;
    s->nl.diags = &scratch;   /* an unsupported leaf falls back to differences, silently */
    ls_sens_item *items = NULL;
    double value;
    int n = ls_sens(&s->op, q, &value, &items);
    s->nl.diags = keep;
    ls_diags_free(&scratch);
    int st = 0;
    if (n >= 0) {
        for (int j = 0; j < nv; j++)
            for (int i = 0; i < n; i++)
                if (items[i].part == v[j].part)
                    dq[j] = items[i].derivative;
    } else {
        st = fd_derivatives(s, q, v, nv, dq);
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

/* ---- reports ------------------------------------------------------------------------------- */

typedef struct tol_ctx {
    ls_session *s;
    ls_cli *cli;
    const ls_q *q;
    const char *qtext;
    const char *unit;
    vary *v;
    int nv;
    const int *checks;
    int nchecks;
    tol_result r;
    long trials;
    uint64_t seed;
    bool normal;
} tol_ctx;

/* "inside" when the worst case lies within the expect's limits, "outside"
 * when not, NULL when the worst case is unknown. */
static const char *check_wc_word(const tol_ctx *t, const ls_check *ck)
{
    ls_check_result cr;
    ls_check_eval(&t->s->op, ck, &cr);
    if (!isfinite(t->r.wc_min))
        return NULL;
    return t->r.wc_min >= cr.lo && t->r.wc_max <= cr.hi ? "inside" : "outside";
}

/* The worst case's "parts": each varied part's value and tol (a fraction),
 * and where it sits at the minimum and the maximum (+tol or -tol, as a
 * fraction) with the corners, or its share of the linear half-width with the
 * sensitivities: what the text's part table shows. */
static void tol_parts_json(ls_jw *w, const tol_ctx *t)
{
    const tol_result *r = &t->r;
    double lin = r->corners ? 0 : (r->wc_max - r->wc_min) / 2;
    ls_jw_arr(w, "parts");
    for (int j = 0; j < t->nv; j++) {
        const ls_part *p = &t->s->nl.parts[t->v[j].part];
        ls_jw_obj(w, NULL);
        ls_jw_str(w, "part", p->name);
        ls_jw_str(w, "kind", p->kind->name);
        ls_jw_num(w, "part_value", t->v[j].nominal);
        ls_jw_num(w, "tol", t->v[j].tol);
        if (r->corners) {
            bool known = isfinite(r->wc_min);
            double lo = ((r->wc_min_mask >> j) & 1 ? 1 : -1) * t->v[j].tol;
            double hi = ((r->wc_max_mask >> j) & 1 ? 1 : -1) * t->v[j].tol;
            ls_jw_num_why(w, "at_min", known ? lo : NAN, LS_WHY_UNSOLVED);
            ls_jw_num_why(w, "at_max", known ? hi : NAN, LS_WHY_UNSOLVED);
        } else {
            ls_jw_num_why(w, "share", lin > 0 ? t->v[j].dev / lin : NAN, LS_WHY_UNDEFINED);
        }
        ls_jw_end(w);
    }
    ls_jw_end(w);
}

/* The tol report as one JSON object (cli.md keys; "rss" only with the
 * sensitivity method).  A statistic of no finite trial is "unsolved". */
static void tol_json(const ls_report *rp, const tol_ctx *t)
{
    const tol_result *r = &t->r;
    ls_jw jw, *w = &jw;
    ls_report_json_begin(rp, w);
    ls_jw_str(w, "quantity", t->qtext);
    ls_jw_num(w, "nominal", r->nominal);
    ls_jw_obj(w, "worst_case");
    ls_jw_num(w, "min", r->wc_min);
    ls_jw_num(w, "max", r->wc_max);
    ls_jw_str(w, "method", r->corners ? "corners" : "sensitivity");
    if (!r->corners)
        ls_jw_num(w, "rss", r->rss);
    tol_parts_json(w, t);
    ls_jw_end(w);
    ls_jw_obj(w, "monte_carlo");
    ls_jw_int(w, "trials", t->trials);
    ls_jw_int(w, "seed", (long long)t->seed);
    ls_jw_str(w, "dist", t->normal ? "normal" : "uniform");
    ls_jw_num(w, "mean", r->mean);
    ls_jw_num(w, "std", r->std);
    ls_jw_num(w, "min", r->min);
    ls_jw_num(w, "max", r->max);
    ls_jw_int(w, "finite", r->finite);
    ls_jw_obj(w, "percentiles");
    for (int k = 0; k < 5; k++)
        ls_jw_num(w, pct_keys[k], r->pct[k]);
    ls_jw_end(w);
    ls_jw_end(w);
    if (isfinite(r->yield))
        ls_jw_num(w, "yield", r->yield);
    else
        ls_jw_null(w, "yield", t->nchecks ? LS_WHY_UNSOLVED : LS_WHY_NONE);
    ls_jw_arr(w, "checks");
    for (int c = 0; c < t->nchecks; c++) {
        const ls_check *ck = &t->s->nl.checks[t->checks[c]];
        ls_jw_obj(w, NULL);
        ls_jw_str(w, "text", ck->text);
        ls_jw_str(w, "instance", ck->instance);
        ls_jw_str(w, "worst_case", check_wc_word(t, ck));
        ls_jw_end(w);
    }
    ls_jw_end(w);
    ls_jw_finish(w);
}

/* One `field,value` CSV row; an empty value when v is not finite. */
static void csv_num(FILE *o, const char *field, double v)
{
    fprintf(o, "%s,%s\n", field, LS_CSV(v));
}

/* The tol report as `field,value` rows. */
static void tol_csv(FILE *o, const tol_ctx *t)
{
    const tol_result *r = &t->r;
    fputs("field,value\nquantity,", o);
    ls_csv_field(o, t->qtext);
    fputc('\n', o);
    csv_num(o, "nominal", r->nominal);
    csv_num(o, "worst_case.min", r->wc_min);
    csv_num(o, "worst_case.max", r->wc_max);
    fprintf(o, "worst_case.method,%s\n", r->corners ? "corners" : "sensitivity");
    if (!r->corners)
        csv_num(o, "worst_case.rss", r->rss);
    fprintf(o, "monte_carlo.trials,%ld\nmonte_carlo.seed,%llu\nmonte_carlo.dist,%s\n", t->trials,
            (unsigned long long)t->seed, t->normal ? "normal" : "uniform");
    csv_num(o, "monte_carlo.mean", r->mean);
    csv_num(o, "monte_carlo.std", r->std);
    csv_num(o, "monte_carlo.min", r->min);
    csv_num(o, "monte_carlo.max", r->max);
    for (int k = 0; k < 5; k++) {
        char f[64];
        snprintf(f, sizeof f, "monte_carlo.percentiles.%s", pct_keys[k]);
        csv_num(o, f, r->pct[k]);
    }
    csv_num(o, "monte_carlo.finite", (double)r->finite);
    csv_num(o, "yield", r->yield);
    double lin = r->corners ? 0 : (r->wc_max - r->wc_min) / 2;
    for (int j = 0; j < t->nv; j++) {
        const char *name = t->s->nl.parts[t->v[j].part].name;
        char f[300];
        snprintf(f, sizeof f, "worst_case.parts.%s.tol", name);
        csv_num(o, f, t->v[j].tol);
        if (r->corners && isfinite(r->wc_min)) {
            snprintf(f, sizeof f, "worst_case.parts.%s.at_min", name);
            csv_num(o, f, ((r->wc_min_mask >> j) & 1 ? 1 : -1) * t->v[j].tol);
            snprintf(f, sizeof f, "worst_case.parts.%s.at_max", name);
            csv_num(o, f, ((r->wc_max_mask >> j) & 1 ? 1 : -1) * t->v[j].tol);
        } else if (!r->corners) {
            snprintf(f, sizeof f, "worst_case.parts.%s.share", name);
            csv_num(o, f, lin > 0 ? t->v[j].dev / lin : NAN);
        }
    }
    for (int c = 0; c < t->nchecks; c++) {
        const ls_check *ck = &t->s->nl.checks[t->checks[c]];
        const char *wc = check_wc_word(t, ck);
        char f[600];
        snprintf(f, sizeof f, "check.%s.worst_case", ck->text);
        ls_csv_field(o, f);
        fprintf(o, ",%s\n", wc ? wc : "");
    }
}

/* "+1%" / "-5%" for part j at the corner mask. */
static const char *corner_word(char *b, size_t n, const vary *v, unsigned long mask, int j)
{
    snprintf(b, n, "%c%.4g%%", (mask >> j) & 1 ? '+' : '-', 100 * v[j].tol);
    return b;
}

/* Print s right-aligned in w columns after a space, counting UTF-8 code points. */
static void rpad(FILE *o, const char *s, int w)
{
    int n = 0;
    for (const char *c = s; *c; c++)
        n += ((unsigned char)*c & 0xC0) != 0x80;
    fprintf(o, " %*s%s", w > n ? w - n : 0, "", s);
}

/* The tol report for people: worst case with each part's end or share, the
 * Monte Carlo statistics, and the yield with each expect's verdict. */
static void tol_text(FILE *o, ls_report *rp, const tol_ctx *t)
{
    const tol_result *r = &t->r;
    const ls_netlist *nl = &t->s->nl;
    const char *u = t->unit;
    char b1[64], b2[64], b3[64], b4[64];
    fprintf(o, "Tolerance of %s (nominal %s): %d part%s vary\n\n", t->qtext, ls_eng(rp, b1, sizeof b1, r->nominal, u),
            t->nv, t->nv == 1 ? "" : "s");
    if (t->nv == 0) {
        fputs("Nothing varies (no part has tol=): the worst case and every Monte Carlo trial would give the nominal\n"
              "value, so no trials were run.\n", o);
        if (t->nchecks > 0)
            fprintf(o, "\nYield %s (the nominal design %s every expect on %s)\n", r->yield > 0 ? "100%" : "0%",
                    r->yield > 0 ? "meets" : "does not meet", t->qtext);
        else
            fprintf(o, "\nYield: no expect on %s in the circuit\n", t->qtext);
        return;
    }
    if (r->corners)
        fprintf(o, "Worst case, every corner (%lu solves):\n", 1ul << t->nv);
    else
        fprintf(o, "Worst case, linear from the sensitivities (%d parts are too many for every corner):\n", t->nv);
    fprintf(o, "  min %s   max %s", ls_eng(rp, b1, sizeof b1, r->wc_min, u), ls_eng(rp, b2, sizeof b2, r->wc_max, u));
    if (r->nominal != 0 && isfinite(r->wc_min))
        fprintf(o, "   (%+.3g%% .. %+.3g%% of nominal)", 100 * (r->wc_min / r->nominal - 1),
                100 * (r->wc_max / r->nominal - 1));
    fputc('\n', o);
    if (!r->corners)
        fprintf(o, "  root-sum-square estimate: %s +- %s\n", ls_eng(rp, b1, sizeof b1, r->nominal, u),
                ls_eng(rp, b2, sizeof b2, r->rss, u));
    if (r->corners)
        fprintf(o, "\n  %-20s %-9s %14s %8s %12s %12s\n", "part", "kind", "value", "tol", "at min", "at max");
    else
        fprintf(o, "\n  %-20s %-9s %14s %8s %12s\n", "part", "kind", "value", "tol", "share");
    double lin = r->corners ? 0 : (r->wc_max - r->wc_min) / 2;
    for (int j = 0; j < t->nv; j++) {
        const ls_part *p = &nl->parts[t->v[j].part];
        char tb[32], c1[32] = "", c2[32] = "", vb[64];
        snprintf(tb, sizeof tb, "%.4g%%", 100 * t->v[j].tol);
        if (r->corners && isfinite(r->wc_min)) {
            corner_word(c1, sizeof c1, t->v, r->wc_min_mask, j);
            corner_word(c2, sizeof c2, t->v, r->wc_max_mask, j);
        } else if (!r->corners && lin > 0) {
            snprintf(c1, sizeof c1, "%.1f%%", 100 * t->v[j].dev / lin);
        }
        ls_eng(rp, vb, sizeof vb, t->v[j].nominal, ls_unit_of(ls_kind_main_dims(p->kind), t->cli->ascii));
        fprintf(o, "  %-20s %-9s", p->name, p->kind->name);
        rpad(o, vb, 14);
        if (r->corners)
            fprintf(o, " %8s %12s %12s\n", tb, c1, c2);
        else
            fprintf(o, " %8s %12s\n", tb, c1);
    }
    fprintf(o, "\nMonte Carlo, %ld trials, %s, seed %llu:\n", t->trials,
            t->normal ? "normal (tol = 3 sigma)" : "uniform within +-tol", (unsigned long long)t->seed);
    fprintf(o, "  mean %s   std %s   min %s   max %s\n", ls_eng(rp, b1, sizeof b1, r->mean, u),
            ls_eng(rp, b2, sizeof b2, r->std, u), ls_eng(rp, b3, sizeof b3, r->min, u),
            ls_eng(rp, b4, sizeof b4, r->max, u));
    fputs("  percentiles", o);
    for (int k = 0; k < 5; k++)
        fprintf(o, "  %s%%: %s", pct_keys[k], ls_eng(rp, b1, sizeof b1, r->pct[k], u));
    fputc('\n', o);
    if (r->finite < t->trials)
        fprintf(o, "  %ld trials did not solve or gave no finite value\n", t->trials - r->finite);
    if (t->nchecks == 0) {
        fprintf(o, "\nYield: no expect on %s in the circuit\n", t->qtext);
        return;
    }
    fprintf(o, "\nYield %.2f%% (trials meeting every expect on %s):\n", 100 * r->yield, t->qtext);
    for (int c = 0; c < t->nchecks; c++) {
        const ls_check *ck = &nl->checks[t->checks[c]];
        const char *wc = check_wc_word(t, ck);
        fprintf(o, "  %s%s%s  worst case %s\n", ck->text, ck->instance ? "  in " : "", ck->instance ? ck->instance : "",
                !wc ? "unknown" : strcmp(wc, "inside") == 0 ? "inside" : "OUTSIDE");
    }
}

/* ---- the histogram ------------------------------------------------------------------------- */

/* Draw the Monte Carlo histogram with the worst-case and expect lines.
 * Returns 0, or LS_EXIT_USAGE after saying why. */
static int tol_plot(const tol_ctx *t, const double *values)
{
    ls_plot_mark marks[LS_PLOT_MAX_MARKS];
    char labels[LS_PLOT_MAX_MARKS][96];
    size_t nm = 0;
    char b[64];
    bool ascii = t->cli->ascii;
    if (isfinite(t->r.wc_min) && isfinite(t->r.wc_max)) {
        snprintf(labels[nm], sizeof labels[nm], "worst-case min %s", ls_fmt_eng(b, sizeof b, t->r.wc_min, t->unit, 4, ascii));
        marks[nm] = (ls_plot_mark){t->r.wc_min, labels[nm]};
        nm++;
        snprintf(labels[nm], sizeof labels[nm], "worst-case max %s", ls_fmt_eng(b, sizeof b, t->r.wc_max, t->unit, 4, ascii));
        marks[nm] = (ls_plot_mark){t->r.wc_max, labels[nm]};
        nm++;
    }
    for (int c = 0; c < t->nchecks && nm + 2 <= LS_PLOT_MAX_MARKS; c++) {
        ls_check_result cr;
        ls_check_eval(&t->s->op, &t->s->nl.checks[t->checks[c]], &cr);
        if (isfinite(cr.lo)) {
            snprintf(labels[nm], sizeof labels[nm], "expect %s %s", ascii ? ">=" : "\xE2\x89\xA5",
                     ls_fmt_eng(b, sizeof b, cr.lo, t->unit, 4, ascii));
            marks[nm] = (ls_plot_mark){cr.lo, labels[nm]};
            nm++;
        }
        if (isfinite(cr.hi)) {
            snprintf(labels[nm], sizeof labels[nm], "expect %s %s", ascii ? "<=" : "\xE2\x89\xA4",
                     ls_fmt_eng(b, sizeof b, cr.hi, t->unit, 4, ascii));
            marks[nm] = (ls_plot_mark){cr.hi, labels[nm]};
            nm++;
        }
    }
    /* In order along the axis, so neighbouring lines get different label rows. */
    for (size_t i = 1; i < nm; i++)
        for (size_t j = i; j > 0 && marks[j].value < marks[j - 1].value; j--) {
            ls_plot_mark m = marks[j];
            marks[j] = marks[j - 1];
            marks[j - 1] = m;
        }
    char title[256];
    snprintf(title, sizeof title, "%s: Monte Carlo, %ld trials (%s)", t->qtext, t->trials,
             t->normal ? "normal, tol = 3 sigma" : "uniform");
    ls_plot_hist h = {.title = title, .xlabel = t->qtext, .xunit = t->unit, .ylabel = "trials",
                      .values = values, .n = (size_t)t->trials, .marks = marks, .nmarks = nm};
    if (t->trials == 0) { /* nothing varies: the one value every trial would give */
        snprintf(title, sizeof title, "%s: nothing varies (no part has tol=)", t->qtext);
        h.values = &t->r.nominal;
        h.n = 1;
    }
    char msg[256] = "";
    if (ls_plot_hist_write_to(&h, &t->cli->plot_dest, msg, sizeof msg) != LS_PLOT_OK) {
        fprintf(stderr, "loadstack: error: cannot draw '%s': %s\n", t->cli->plot, msg);
        return LS_EXIT_USAGE;
    }
    return 0;
}

/* ---- the command --------------------------------------------------------------------------- */

/* Options of tol, checked before any work.  Returns 0 or LS_EXIT_USAGE. */
static int tol_options(ls_cli *cli, long *trials, uint64_t *seed, bool *normal)
{
    *trials = cli->trials > 0 ? cli->trials : 10000;
    *seed = cli->seed;
    *normal = false;
    if (*trials < 1 || *trials > MAX_TRIALS) {
        fprintf(stderr, "loadstack: error: --trials takes a whole number from 1 to %ld\n", MAX_TRIALS);
        return LS_EXIT_USAGE;
    }
    if (cli->dist && strcmp(cli->dist, "normal") == 0)
        *normal = true;
    else if (cli->dist && strcmp(cli->dist, "uniform") != 0) {
        fprintf(stderr, "loadstack: error: --dist takes uniform or normal, not '%s'\n", cli->dist);
        return LS_EXIT_USAGE;
    }
    return 0;
}

/* The varying parts, into *out (caller frees).  Returns the count, -1 on no memory. */
static int varying_parts(const ls_netlist *nl, vary **out)
{
    *out = calloc((size_t)(nl->nparts ? nl->nparts : 1), sizeof **out);
    if (!*out)
        return -1;
    int n = 0;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        double t = ls_part_opt(p, "tol", 0);
        if (p->has_value && t > 0)
            (*out)[n++] = (vary){.part = i, .nominal = p->value, .tol = t};
    }
    return n;
}

/* With no part varying every trial would give the nominal value: the
 * Monte Carlo run is not made (0 trials) and its statistics are that value
 * exactly; the yield is whether the nominal design meets every expect on Q. */
static void nothing_varies(tol_ctx *t)
{
    tol_result *r = &t->r;
    t->trials = 0;
    r->finite = 0;
    r->mean = r->min = r->max = r->nominal;
    r->std = 0;
    for (int k = 0; k < 5; k++)
        r->pct[k] = r->nominal;
    bool ok = true;
    for (int c = 0; c < t->nchecks && ok; c++) {
        ls_check_result cr;
        ls_check_eval(&t->s->op, &t->s->nl.checks[t->checks[c]], &cr);
        ok = cr.pass;
    }
    r->yield = t->nchecks > 0 ? (ok ? 1.0 : 0.0) : NAN;
}

/* Worst case then Monte Carlo; fills t->r.  Returns an exit code. */
static int tol_compute(tol_ctx *t, double **values_out)
{
    ls_session *s = t->s;
    int code = t->nv <= CORNER_LIMIT ? corners(s, t->q, t->v, t->nv, &t->r) : linear_wc(s, t->q, t->v, t->nv, &t->r);
    if (code)
        return code;
    if (t->nv == 0) {
        nothing_varies(t);
        *values_out = NULL;
        return 0;
    }
    mc_job job = {.base = &s->nl, .opt = s->op.opt, .q = t->q, .v = t->v, .nv = t->nv, .checks = t->checks,
                  .nchecks = t->nchecks, .trials = t->trials, .seed = t->seed, .normal = t->normal,
                  .quiet = t->cli->quiet};
    job.value = malloc((size_t)t->trials * sizeof *job.value);
    job.pass = malloc((size_t)t->trials);
    if (!job.value || !job.pass) {
        free(job.value);
        free(job.pass);
        fprintf(stderr, "loadstack: error: out of memory for %ld trials\n", t->trials);
        return LS_EXIT_UNSOLVABLE;
    }
    code = mc_all(&job, thread_count(t->trials));
    if (code == 0)
        code = mc_stats(&job, t->nchecks > 0, &t->r);
    free(job.pass);
    if (code != 0) {
        free(job.value);
        fprintf(stderr, "loadstack: error: the Monte Carlo run could not be set up (out of memory)\n");
        return LS_EXIT_UNSOLVABLE;
    }
    if (t->r.finite < t->trials)
        ls_warning(&s->diags, LS_NOLOC, "tol-trials",
                   "%ld of %ld trials did not solve or gave no finite value; the statistics leave them out",
                   t->trials - t->r.finite, t->trials);
    *values_out = job.value;
    return 0;
}

/* `loadstack tol FILE QUANTITY`: load, solve, worst case, Monte Carlo,
 * optional histogram, report.  Returns the exit code. */
int ls_cmd_tol(ls_cli *cli)
{
    tol_ctx t = {.cli = cli, .qtext = cli->pos[1]};
    if (tol_options(cli, &t.trials, &t.seed, &t.normal))
        return LS_EXIT_USAGE;
    ls_session s;
    t.s = &s;
    int code = ls_session_load(&s, cli, cli->pos[0], NULL);
    t.q = code == LS_EXIT_OK ? ls_session_quantity(&s, cli->pos[1]) : NULL;
    if (code == LS_EXIT_OK && !t.q)
        code = LS_EXIT_USAGE;
    if (code == LS_EXIT_OK)
        code = ls_session_solve(&s);
    int *checks = NULL;
    if (code == LS_EXIT_OK) {
        t.nv = varying_parts(&s.nl, &t.v);
        t.nchecks = matching_checks(&s.nl, t.q, &checks);
        t.checks = checks;
        if (t.nv < 0 || t.nchecks < 0)
            code = LS_EXIT_UNSOLVABLE;
    }
    double *values = NULL;
    if (code == LS_EXIT_OK) {
        t.unit = ls_unit_of(t.q->dims, cli->ascii);
        t.r.nominal = ls_q_eval(&s.op, t.q);
        if (t.nv == 0)
            ls_warning(&s.diags, LS_NOLOC, "tol-none", "no part has a tol= option: nothing varies");
        code = tol_compute(&t, &values);
    }
    if (code == LS_EXIT_OK && cli->plot)
        code = tol_plot(&t, values);
    if (code != LS_EXIT_OK) {
        ls_diags_print(&s.diags, stderr);
        free(values);
        free(checks);
        free(t.v);
        ls_session_free(&s);
        return code;
    }
    FILE *o = ls_out_open(cli);
    ls_report rp = ls_report_for(&s, o);
    if (cli->fmt == FMT_JSON)
        tol_json(&rp, &t);
    else if (cli->fmt == FMT_CSV)
        tol_csv(o, &t);
    else
        tol_text(o, &rp, &t);
    code = ls_out_close(cli, ls_session_verdict(&s, LS_EXIT_OK));
    ls_diags_print(&s.diags, stderr);
    free(values);
    free(checks);
    free(t.v);
    ls_session_free(&s);
    return code;
}

/* ---- samples for other reports ------------------------------------------------------------- */

int ls_tol_sample(ls_session *s, const ls_q *q, long trials, uint64_t seed, double **values)
{
    vary *v;
    int nv = varying_parts(&s->nl, &v);
    *values = NULL;
    if (nv < 0)
        return -1;
    mc_job job = {.base = &s->nl, .opt = s->op.opt, .q = q, .v = v, .nv = nv, .trials = trials, .seed = seed};
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
