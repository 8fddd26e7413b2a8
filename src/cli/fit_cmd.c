/* fit_cmd.c — the fit command: options, the search (fit.c), its reports
 * (text, JSON, CSV) and the chosen values written into a copy of the
 * circuit (--write). */
#include <assert.h>
#include <math.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "base/eseries.h"
#include "analysis/fit.h"
#include "base/fmt.h"
#include "parts/parts.h"
#include "cli/progress.h"
#include "report/writer.h"

#define FIT_DEFAULT_TRIALS 2000   /* Monte Carlo trials per finalist for the yield */

/* How far a failing check's value lies beyond its limit (in its unit); NaN
 * when the value is undefined or the check is a limit in force. */
static double miss_of(const ls_fit_check *c)
{
    if (c->pass || isnan(c->value))
        return NAN;
    if (c->value > c->hi)
        return c->value - c->hi;
    if (c->value < c->lo)
        return c->lo - c->value;
    return NAN;
}

/* The unit of a check's value, for text. */
static const char *check_unit(const ls_fit_study *f, const ls_fit_check *c, bool ascii)
{
    const ls_netlist *nl = f->nl;
    switch (c->kind) {
    case LS_FITC_EXPECT: return ls_unit_of(nl->checks[c->index].lhs->dims, ascii);
    case LS_FITC_PORT: return isinf(c->hi) ? "" : "V";
    case LS_FITC_RATING: return "W";
    case LS_FITC_VMAX: case LS_FITC_OPAMP_OUT: case LS_FITC_OPAMP_CM: case LS_FITC_ADC_RANGE: return "V";
    case LS_FITC_IMAX: return "A";
    case LS_FITC_ADC_SOURCE: return ls_unit_of(LS_OHM, ascii);
    }
    return "";
}

/* A candidate's goal figure. */
static double goal_figure(const ls_fit_study *f, const ls_fit_cand *c)
{
    return f->goal == LS_FIT_MARGIN ? c->margin : f->goal == LS_FIT_YIELD ? c->yield : c->current;
}

/* ---- JSON ---------------------------------------------------------------------------------- */

/* One check of a candidate (JSON's "checks"). */
static void check_members(ls_wr *w, const ls_fit_study *f, const ls_fit_check *c)
{
    static const char *const kinds[] = {"expect", "port", "rating", "vmax", "imax", "opamp-output", "opamp-cm",
                                        "adc-range", "adc-source"};
    _Static_assert(sizeof kinds / sizeof kinds[0] == LS_FITC_ADC_SOURCE + 1, "one name per ls_fit_kind");
    assert((unsigned)c->kind <= LS_FITC_ADC_SOURCE);
    char t[512];
    ls_wr_obj(w, NULL);
    ls_wr_str(w, "text", ls_fit_check_text(f, c, t, sizeof t));
    ls_wr_str(w, "kind", kinds[c->kind]);
    ls_wr_num(w, "value", c->value);
    ls_wr_num(w, "lo", c->lo);
    ls_wr_num(w, "hi", c->hi);
    ls_wr_num(w, "margin", c->margin);
    ls_wr_bool(w, "pass", c->pass);
    if (!c->pass)
        ls_wr_num_why(w, "miss", miss_of(c), LS_WHY_UNDEFINED);
    if (c->why)
        ls_wr_str(w, "reason", c->why);
    ls_wr_end(w);
}

/* A candidate as JSON object `key` (NULL inside an array). */
static void cand_members(ls_wr *w, const ls_fit_study *f, const ls_fit_cand *c, const char *key)
{
    ls_wr_obj(w, key);
    ls_wr_obj(w, "values");
    for (int j = 0; j < f->nvars; j++)
        ls_wr_num(w, f->nl->parts[f->vars[j].part].name, c->value[j]);
    ls_wr_end(w);
    ls_wr_num_why(w, "goal", goal_figure(f, c), c->solved ? LS_WHY_UNDEFINED : LS_WHY_UNSOLVED);
    ls_wr_bool(w, "meets", c->meets);
    ls_wr_int(w, "failed", c->failed);
    ls_wr_num_why(w, "margin", c->margin, c->solved ? LS_WHY_UNBOUNDED : LS_WHY_UNSOLVED);
    ls_wr_num_why(w, "yield", c->yield, LS_WHY_NONE);
    ls_wr_num_why(w, "current", c->current, LS_WHY_UNSOLVED);
    ls_wr_arr(w, "checks");
    for (int k = 0; k < c->nchecks; k++)
        check_members(w, f, &c->checks[k]);
    ls_wr_end(w);
    ls_wr_end(w);
}

/* The search's counts, each a long of the study: JSON's members of "search"
 * and of its "branch_and_bound". */
typedef struct fit_count {
    const char *key;
    size_t off;    /* offsetof(ls_fit_study, ...), a long */
} fit_count;

static const fit_count search_counts[] = {
    {"solved", offsetof(ls_fit_study, evaluated)},
    {"continuous_solves", offsetof(ls_fit_study, nlopt_evals)},
};
static const fit_count work_counts[] = {
    {"factorizations", offsetof(ls_fit_study, factorizations)},
    {"symbolic_analyses", offsetof(ls_fit_study, analyses)},
};
static const fit_count bb_counts[] = {
    {"solves", offsetof(ls_fit_study, bb_solves)},         {"solve_limit", offsetof(ls_fit_study, max_solves)},
    {"boxes", offsetof(ls_fit_study, bb_boxes)},           {"pruned", offsetof(ls_fit_study, bb_pruned)},
    {"enumerated", offsetof(ls_fit_study, bb_enumerated)}, {"unbounded_checks", offsetof(ls_fit_study, bb_unbounded)},
};

/* The n counts of table t as members. */
static void counts(ls_wr *w, const ls_fit_study *f, const fit_count *t, size_t n)
{
    for (size_t k = 0; k < n; k++)
        ls_wr_int(w, t[k].key, *(const long *)((const char *)f + t[k].off));
}

#define COUNTS(w, f, t) counts(w, f, t, sizeof t / sizeof *t)

/* JSON's "search": how the combinations were searched and what it cost. */
static void search_members(ls_wr *w, const ls_fit_study *f)
{
    ls_wr_obj(w, "search");
    ls_wr_str(w, "method", f->exhaustive ? "every-combination" : "continuous-then-branch-and-bound");
    ls_wr_num(w, "combinations", f->combinations);
    COUNTS(w, f, search_counts);
    ls_wr_bool(w, "proven", f->proven);
    ls_wr_obj(w, "bound");   /* how far the answer may be from the best (docs/fit.md) */
    ls_wr_str(w, "figure", f->goal == LS_FIT_CURRENT ? "current" : "margin");
    ls_wr_num_why(w, "found", f->found, "nothing found meets every check");
    ls_wr_num_why(w, "limit", f->limit, f->limit_why);
    ls_wr_int(w, "solves", f->limit_solves);
    ls_wr_end(w);
    COUNTS(w, f, work_counts);
    if (!f->exhaustive) {
        ls_wr_int(w, "continuous_status", f->nlopt_status);
        ls_wr_obj(w, "branch_and_bound");
        COUNTS(w, f, bb_counts);
        ls_wr_end(w);
    }
    if (f->fell_back) /* only then: docs/fit.md, "The search" */
        ls_wr_bool(w, "fell_back_to_full_path", true);
    if (f->have_yield) {
        ls_wr_int(w, "trials", f->yield_trials);
        ls_wr_uint(w, "seed", (unsigned long long)f->seed);
    }
    ls_wr_end(w);
}

/* ---- text ---------------------------------------------------------------------------------- */

/* A fraction as a percentage, or "-" when unknown. */
static const char *pct(char *b, size_t n, double x)
{
    if (isnan(x))
        snprintf(b, n, "-");
    else if (isinf(x))
        snprintf(b, n, x > 0 ? "unbounded" : "-unbounded");
    else
        snprintf(b, n, "%.4g%%", 100 * x);
    return b;
}

/* A check's limits as text: "lo..hi", ">= lo", "<= hi" or "-". */
static const char *limit_text(ls_report *rp, const ls_fit_check *ck, const char *u, char *lim, size_t n)
{
    char l1[64], l2[64];
    if (isfinite(ck->lo) && isfinite(ck->hi))
        snprintf(lim, n, "%s..%s", ls_eng(rp, l1, sizeof l1, ck->lo, u), ls_eng(rp, l2, sizeof l2, ck->hi, u));
    else if (isfinite(ck->lo))
        snprintf(lim, n, ">= %s", ls_eng(rp, l1, sizeof l1, ck->lo, u));
    else if (isfinite(ck->hi))
        snprintf(lim, n, "<= %s", ls_eng(rp, l1, sizeof l1, ck->hi, u));
    else
        snprintf(lim, n, "-");
    return lim;
}

/* The text's table of one candidate's checks (all, or only the failing ones). */
static void checks_text(ls_wr *w, const ls_fit_study *f, const ls_fit_cand *c, bool failing)
{
    const ls_wr_col cols[] = {
        {.head = "check"}, {.head = "value", .right = true}, {.head = "limit", .right = true},
        {.head = "margin", .right = true}, {.head = failing ? "misses by" : "verdict"},
    };
    ls_report *rp = w->rp;
    ls_wr_table(w, NULL, cols, 5, NULL);
    for (int k = 0; k < c->nchecks; k++) {
        const ls_fit_check *ck = &c->checks[k];
        if (failing && ck->pass)
            continue;
        const char *u = check_unit(f, ck, rp->ascii);
        char t[512], lim[160], m[32], verdict[200];
        double miss = miss_of(ck);
        if (!failing)
            snprintf(verdict, sizeof verdict, "%s", ck->pass ? "ok" : "FAILS");
        else if (isfinite(miss))
            ls_eng(rp, verdict, sizeof verdict, miss, u);
        else
            snprintf(verdict, sizeof verdict, "%s", ck->why ? ck->why : "undefined");
        ls_wr_cell_str(w, ls_fit_check_text(f, ck, t, sizeof t));
        ls_wr_cell_eng(w, ck->value, u, NULL);
        ls_wr_cell_str(w, limit_text(rp, ck, u, lim, sizeof lim));
        ls_wr_cell_str(w, pct(m, sizeof m, ck->margin));
        ls_wr_cell_str(w, verdict);
        ls_wr_row(w);
    }
    ls_wr_table_end(w);
}

/* "r1 12 kΩ, r2 3.9 kΩ" */
static void values_text(ls_wr *w, const ls_fit_study *f, const ls_fit_cand *c)
{
    for (int j = 0; j < f->nvars; j++) {
        const ls_part *p = &f->nl->parts[f->vars[j].part];
        char b[64];
        ls_wr_say(w, "%s%s %s", j ? ", " : "", p->name,
                  ls_eng(w->rp, b, sizeof b, c->value[j], ls_unit_of(ls_kind_main_dims(p->kind), w->rp->ascii)));
    }
}

/* The free parts: the text's table, JSON's "free". */
static void free_parts(ls_wr *w, const ls_fit_study *f)
{
    static const ls_wr_col cols[] = {
        {.json = "part", .head = "part"},
        {.json = "kind", .head = "kind"},
        {.json = "lo"},
        {.json = "hi"},
        {.head = "range", .right = true},
        {.json = "series", .head = "series"},
        {.json = "values", .head = "values", .right = true},
        {.json = "written", .head = "written", .right = true},
        {.json = "optimum"},
        {.head = "optimum", .right = true},
    };
    ls_report *rp = w->rp;
    ls_wr_table(w, "free", cols, (int)(sizeof cols / sizeof *cols), NULL);
    for (int j = 0; j < f->nvars; j++) {
        const ls_fit_var *v = &f->vars[j];
        const ls_part *p = &f->nl->parts[v->part];
        const char *u = ls_unit_of(ls_kind_main_dims(p->kind), rp->ascii);
        char a[32], b[32], range[72];
        snprintf(range, sizeof range, "%s..%s", ls_eng(rp, a, sizeof a, v->lo, u), ls_eng(rp, b, sizeof b, v->hi, u));
        ls_wr_cell_str(w, p->name);
        ls_wr_cell_str(w, p->kind->name);
        ls_wr_cell_num(w, v->lo, NULL);
        ls_wr_cell_num(w, v->hi, NULL);
        ls_wr_cell_str(w, range);
        ls_wr_cell_str(w, v->series);
        ls_wr_cell_int(w, v->nvalues);
        ls_wr_cell_eng(w, v->start, u, NULL);
        if (isnan(v->optimum)) {   /* no continuous stage ran */
            ls_wr_cell_null(w, LS_WHY_NONE);
            ls_wr_cell_str(w, "-");
        } else {
            ls_wr_cell_num(w, v->optimum, NULL);
            ls_wr_cell_eng(w, v->optimum, u, NULL);
        }
        ls_wr_row(w);
    }
    ls_wr_table_end(w);
}

/* The ranked candidates: text's lines, JSON's "candidates", CSV's table (one
 * column per free part after the figures). */
static void ranking(ls_wr *w, const ls_fit_study *f)
{
    static const ls_wr_col figures[] = {
        {.csv = "rank"}, {.csv = "meets"}, {.csv = "goal"}, {.csv = "margin"},
        {.csv = "yield"}, {.csv = "current"}, {.csv = "failed"},
    };
    enum { NFIG = sizeof figures / sizeof *figures };
    _Static_assert(NFIG + LS_FIT_MAX_FREE <= LS_WR_MAXCOL, "the writer's columns");
    ls_wr_col cols[LS_WR_MAXCOL];
    memcpy(cols, figures, sizeof figures);
    for (int j = 0; j < f->nvars; j++)
        cols[NFIG + j] = (ls_wr_col){.csv = f->nl->parts[f->vars[j].part].name};
    ls_report *rp = w->rp;
    ls_wr_say(w, "Candidates, best first:\n");
    ls_wr_arr(w, "candidates");
    ls_wr_table(w, NULL, cols, NFIG + f->nvars, NULL);
    for (int i = 0; i < f->nbest; i++) {
        const ls_fit_cand *c = &f->best[i];
        char m[32], y[32], cur[64];
        ls_wr_say(w, "  %2d. ", i + 1);
        values_text(w, f, c);
        ls_wr_say(w, "\n      margin %s", pct(m, sizeof m, c->margin));
        if (!isnan(c->yield))
            ls_wr_say(w, "   yield %s", pct(y, sizeof y, c->yield));
        ls_wr_say(w, "   supply current %s   %s\n", ls_eng(rp, cur, sizeof cur, c->current, "A"),
                  c->meets ? "meets every check" : c->solved ? "fails" : "does not solve");
        if (!c->meets && c->solved)
            ls_wr_say(w, "      fails %d check%s\n", c->failed, c->failed == 1 ? "" : "s");
        cand_members(w, f, c, NULL);
        ls_wr_cell_int(w, i + 1);
        ls_wr_cell_bool(w, c->meets, NULL);
        ls_wr_cell_num(w, goal_figure(f, c), NULL);
        ls_wr_cell_num(w, c->margin, NULL);
        ls_wr_cell_num(w, c->yield, NULL);
        ls_wr_cell_num(w, c->current, NULL);
        ls_wr_cell_int(w, c->failed);
        for (int j = 0; j < f->nvars; j++)
            ls_wr_cell_num(w, c->value[j], NULL);
        ls_wr_row(w);
    }
    ls_wr_table_end(w);
    ls_wr_end(w);
}

/* The text's line on how far the best found may be from the best there is
 * (a search that stopped at its limit). */
static void bound_text(ls_wr *w, const ls_fit_study *f)
{
    bool cur = f->goal == LS_FIT_CURRENT;
    char a[64], b[64];
    if (cur) {
        ls_eng(w->rp, a, sizeof a, f->found, "A");
        ls_eng(w->rp, b, sizeof b, f->limit, "A");
    } else {
        snprintf(a, sizeof a, "%.6g", f->found);
        snprintf(b, sizeof b, "%.6g", f->limit);
    }
    if (isnan(f->found))
        ls_wr_say(w, "  bound: nothing found meets every check; ");
    else
        ls_wr_say(w, "  bound: best found %s %s; ", cur ? "draws" : "has margin", a);
    if (f->limit_why)
        ls_wr_say(w, "%s\n", f->limit_why);
    else {
        ls_wr_say(w, "no design in the ranges that meets every check %s %s (%ld more solves to bound the ranges "
                     "not searched)\n",
                  cur ? "draws less than" : "has a margin above", b, f->limit_solves);
        /* the bound met: the first candidate is the best there is; only the
         * order of the others stays unproven */
        double slack = LS_FIT_TIE_REL * fmax(fabs(f->found), fabs(f->limit));
        if (!isnan(f->found) && (cur ? f->limit >= f->found - slack : f->limit <= f->found + slack))
            ls_wr_say(w, "  so no design beats the first candidate below by more than a tie; the order of the "
                         "others is not proven\n");
    }
}

/* The text's account of the search. */
static void search_text(ls_wr *w, const ls_fit_study *f)
{
    ls_wr_say(w, "Fit of %d free part%s to standard values, goal: %s\n", f->nvars, f->nvars == 1 ? "" : "s",
              ls_fit_goal_name(f->goal));
    if (f->exhaustive) {
        ls_wr_say(w, "  search: every combination (%.0f, each solved)\n\n", f->combinations);
        return;
    }
    ls_wr_say(w, "  search: %.3g combinations are too many to try each; continuous optimum (NLopt COBYLA, %ld "
                 "solves), the series values around it, then branch and bound (%ld solved, %ld of them by branch "
                 "and bound; %ld boxes, %ld ruled out by their bounds)\n",
              f->combinations, f->nlopt_evals, f->evaluated, f->bb_solves, f->bb_boxes, f->bb_pruned);
    if (f->proven && f->goal == LS_FIT_YIELD)
        ls_wr_say(w, "  proven: no other combination has a larger margin than the finalists, whose yields rank "
                     "them below\n");
    else if (f->proven)
        ls_wr_say(w, "  proven: no other combination ranks above the candidates below\n");
    else
        ls_wr_say(w, "  NOT PROVEN: the search stopped at its limit of %ld solves (--max-solves); the candidates "
                     "below are the best found, and a combination not tried may rank higher\n",
                  f->max_solves);
    if (!f->proven)
        bound_text(w, f);
    if (f->fell_back)
        ls_wr_say(w, "  the fast candidate path's choice failed a check when solved in full: every candidate was "
                     "solved in full again\n");
    ls_wr_say(w, "\n");
}

/* The text's note on the yield. */
static void yield_text(ls_wr *w, const ls_fit_study *f)
{
    if (f->have_yield && f->yield_trials > 0)
        ls_wr_say(w, "  (yield: %ld Monte Carlo trials per candidate from the parts' tol=, seed %llu; a trial counts "
                     "when it meets every check)\n",
                  f->yield_trials, (unsigned long long)f->seed);
    else if (f->have_yield)
        ls_wr_say(w, "  (yield: no part has tol=, so nothing varies: 100%% for a candidate that meets every check)\n");
    ls_wr_say(w, "\n");
}

/* The chosen candidate (JSON's "chosen", null when none meets every check,
 * and then "closest"), with its checks in text. */
static void outcome(ls_wr *w, const ls_fit_study *f)
{
    if (f->any_feasible)
        cand_members(w, f, &f->best[0], "chosen");
    else
        ls_wr_null(w, "chosen", LS_WHY_NONE);
    if (f->nbest == 0)
        return;
    const ls_fit_cand *c = &f->best[0];
    if (f->any_feasible) {
        ls_wr_say(w, "Chosen: ");
        values_text(w, f, c);
        ls_wr_say(w, "\n");
        checks_text(w, f, c, false);
        ls_wr_say(w, "\nMargins: 100%% is the middle of a range, 0%% its edge; a one-sided limit's margin is the "
                     "distance to it over its size.\nBefore building, check the chosen parts' ratings and voltages "
                     "against their data sheets.\n");
        return;
    }
    cand_members(w, f, c, "closest");
    ls_wr_say(w, "No combination of standard values meets every check.\nThe closest: ");
    values_text(w, f, c);
    ls_wr_say(w, "\nIt misses %d check%s:\n", c->failed, c->failed == 1 ? "" : "s");
    checks_text(w, f, c, true);
    ls_wr_say(w, "\nWiden a free= range, choose a finer series (--series E96), or relax a budget.\n");
}

/* The fit report, one description for text, JSON and CSV. */
static void fit_write(ls_wr *w, const ls_fit_study *f)
{
    ls_wr_str(w, "goal", ls_fit_goal_name(f->goal));
    ls_wr_str(w, "series", f->series);
    search_members(w, f);
    search_text(w, f);
    free_parts(w, f);
    ls_wr_say(w, "\n");
    ranking(w, f);
    yield_text(w, f);
    outcome(w, f);
}

/* ---- --write ------------------------------------------------------------------------------- */

/* v as a glued number with an SI prefix that reads back as v ("4.7k", "1.02M", "3.3"). */
static void value_word(char *b, size_t n, double v)
{
    static const char pre[] = "pnum kMG";
    int e = (int)floor(log10(fabs(v)) / 3);
    if (e < -4)
        e = -4;
    if (e > 3)
        e = 3;
    double m = v / pow(10, 3 * e);
    char num[40];
    snprintf(num, sizeof num, "%.6g", m);
    if (e == 0)
        snprintf(b, n, "%s", num);
    else
        snprintf(b, n, "%s%c", num, pre[e + 4]);
}

/* Every free part's value must be written at the top level of the circuit
 * file itself for --write to replace it.  Returns 0, or LS_EXIT_USAGE after
 * an error naming the part. */
static int writable(ls_session *s)
{
    const ls_netlist *nl = &s->nl;
    int code = 0;
    for (int j = 0; j < nl->nfrees; j++) {
        const ls_part *p = &nl->parts[nl->frees[j].part];
        if (p->value_loc.file != 0 || p->instance) {
            ls_error(&s->diags, p->value_loc,
                     "--write replaces a free part's value where it is written; the value of '%s' is written in %s, "
                     "which other parts may share (mark free= a part of the top level of the circuit file)",
                     p->name, p->instance ? "a block" : "an included file");
            code = LS_EXIT_USAGE;
        }
    }
    return code;
}

/* Write the circuit text with each free part's value replaced by the chosen
 * one (in source order, everything else byte for byte) to the --write
 * destination.  Returns 0, or LS_EXIT_USAGE when it cannot be written. */
static int write_circuit(ls_cli *cli, ls_session *s, const ls_fit_study *f)
{
    const ls_file *src = &s->diags.files[0];
    int n = f->nvars;
    int *order = malloc((size_t)(n ? n : 1) * sizeof *order);
    if (!order)
        return LS_EXIT_USAGE;
    for (int j = 0; j < n; j++)
        order[j] = j;
    for (int i = 1; i < n; i++) /* by position in the file */
        for (int j = i; j > 0 && s->nl.parts[f->vars[order[j]].part].value_loc.start <
                                     s->nl.parts[f->vars[order[j - 1]].part].value_loc.start; j--) {
            int t = order[j];
            order[j] = order[j - 1];
            order[j - 1] = t;
        }
    FILE *o = cli->write_dest.f;
    unsigned at = 0;
    for (int i = 0; i < n; i++) {
        const ls_loc l = s->nl.parts[f->vars[order[i]].part].value_loc;
        char w[48];
        value_word(w, sizeof w, f->best[0].value[order[i]]);
        fwrite(src->text + at, 1, l.start - at, o);
        fputs(w, o);
        at = l.end;
    }
    fwrite(src->text + at, 1, src->len - at, o);
    free(order);
    return ferror(o) ? LS_EXIT_USAGE : 0;
}

/* ---- the command --------------------------------------------------------------------------- */

static void show_progress(void *ctx, long done, long total) { ls_progress_update(ctx, done, total); }

/* Options of fit, checked before any work.  Returns 0 or LS_EXIT_USAGE. */
static int fit_options(ls_cli *cli, ls_fit_study *f)
{
    f->series = cli->series ? cli->series : "E24";
    const ls_eseries *es = ls_eseries_find(f->series);
    if (!es) {
        fprintf(stderr, "loadstack: error: --series takes E6, E12, E24, E48, E96 or E192, not '%s'\n", cli->series);
        return LS_EXIT_USAGE;
    }
    f->series = es->name;
    int g = ls_fit_goal_of(cli->goal ? cli->goal : "margin");
    if (g < 0) {
        fprintf(stderr, "loadstack: error: --goal takes margin, yield or current, not '%s'\n", cli->goal);
        return LS_EXIT_USAGE;
    }
    f->goal = (ls_fit_goal)g;
    f->top = cli->top > 0 ? cli->top : 5;
    f->trials = cli->trials > 0 ? cli->trials : FIT_DEFAULT_TRIALS;
    f->seed = cli->seed;
    f->normal = cli->dist && strcmp(cli->dist, "normal") == 0;
    f->max_solves = cli->max_solves > 0 ? cli->max_solves : LS_FIT_MAX_SOLVES;
    /* the tests set this to try the continuous path on cases small enough to enumerate (docs/fit.md) */
    const char *lim = getenv("LOADSTACK_FIT_EXHAUSTIVE");
    f->exhaustive_limit = lim && *lim ? strtod(lim, NULL) : 0;
    if (lim && *lim && f->exhaustive_limit <= 0)
        f->exhaustive_limit = 0.5; /* 0 or less: never enumerate */
    /* and this to compare the search's fast path with the plain one (tests/fit/test_fit_plain.py) */
    const char *plain = getenv("LOADSTACK_FIT_PLAIN");
    f->plain = plain && *plain && strcmp(plain, "0") != 0;
    /* and this to take the fall-back to the full path (tests/fit/test_fit_plain.py) */
    const char *redo = getenv("LOADSTACK_FIT_REDO");
    f->redo_test = redo && *redo && strcmp(redo, "0") != 0;
    return 0;
}

/* Say why the search refused to run (f->refused).  Returns the exit code. */
static int fit_refused(ls_session *s, const ls_fit_study *f)
{
    switch (f->refused) {
    case LS_FIT_NOFREE:
        fprintf(stderr, "loadstack: error: no part is marked free=LO..HI: nothing to fit (see 'man 5 "
                        "loadstack-language')\n");
        return LS_EXIT_USAGE;
    case LS_FIT_TOOMANY:
        fprintf(stderr, "loadstack: error: fit takes at most %d free parts (%d are free)\n", LS_FIT_MAX_FREE,
                s->nl.nfrees);
        return LS_EXIT_USAGE;
    case LS_FIT_EMPTY:
        for (int j = 0; j < f->nvars; j++)
            if (f->vars[j].nvalues == 0)
                ls_error(&s->diags, s->nl.frees[j].loc, "no %s value lies in the free= range of '%s'",
                         f->vars[j].series, s->nl.parts[f->vars[j].part].name);
        return LS_EXIT_USAGE;
    case LS_FIT_SEARCHED:
        break;
    }
    return ls_exit_code(LS_BAD_REQUEST);
}

/* Say why the search could not run or did not finish (out is not LS_DONE).
 * Returns the exit code. */
static int fit_failed(ls_session *s, const ls_fit_study *f, ls_outcome out)
{
    if (out == LS_BAD_REQUEST)
        return fit_refused(s, f);
    if (out == LS_NO_MEMORY)
        fprintf(stderr, "loadstack: error: out of memory during the search\n");
    return ls_exit_code(out);
}

/* Write fit's report and, when asked and a candidate meets every check, the
 * circuit with the chosen values (--write).  Returns the exit code; *closed
 * says the output is closed already (the report was not whole: then nothing
 * is written and the code is final). */
static int fit_output(ls_cli *cli, ls_session *s, const ls_fit_study *f, bool *closed)
{
    *closed = false;
    FILE *o = ls_out_open(cli);
    ls_report rp = ls_report_for(s, o);
    ls_wr w;
    ls_wr_begin(&w, &rp);
    fit_write(&w, f);
    ls_wr_finish(&w);
    int code = ls_report_done(&rp, f->any_feasible ? LS_EXIT_OK : LS_EXIT_CHECK);
    if (code == LS_EXIT_UNSOLVABLE && rp.nomem) {
        if (cli->write)
            ls_dest_discard(&cli->write_dest);
        *closed = true;
        return ls_out_close(cli, code);
    }
    if (cli->write && f->any_feasible && write_circuit(cli, s, f) != 0) {
        fprintf(stderr, "loadstack: error: cannot write '%s'\n", cli->write);
        code = LS_EXIT_USAGE;
    }
    if (cli->write && !f->any_feasible) {
        ls_dest_discard(&cli->write_dest);   /* nothing chosen: no file */
        fprintf(stderr, "loadstack: no standard values meet every check; '%s' was not written\n", cli->write);
    }
    return code;
}

/* `loadstack fit FILE`: load, solve at the written values, search, report,
 * write the chosen values.  Exit 1 when no candidate meets every check. */
int ls_cmd_fit(ls_cli *cli)
{
    ls_fit_study f;
    memset(&f, 0, sizeof f);
    if (fit_options(cli, &f))
        return LS_EXIT_USAGE;
    ls_session s;
    int code = ls_session_load(&s, cli, cli->pos[0], NULL);
    if (code == LS_EXIT_OK && cli->write)
        code = writable(&s);
    if (code == LS_EXIT_OK)
        code = ls_session_solve(&s);
    ls_progress pg;
    ls_progress_start(&pg, "fit", "candidates", cli->quiet);
    if (code == LS_EXIT_OK) {
        f.nl = &s.nl;
        f.op = &s.op;
        f.arena = &s.arena;
        f.progress = pg.out ? show_progress : NULL;
        f.progress_ctx = &pg;
        ls_outcome out = ls_fit_run(&f);
        if (pg.out)
            ls_progress_end(&pg);
        if (out != LS_DONE)
            code = fit_failed(&s, &f, out);
    }
    if (code != LS_EXIT_OK) {
        ls_diags_print(&s.diags, stderr);
        ls_fit_free(&f);
        ls_session_free(&s);
        return code;
    }
    bool closed;
    code = fit_output(cli, &s, &f, &closed);
    if (closed) {
        ls_fit_free(&f);
        ls_session_free(&s);
        return code;
    }
    code = ls_out_close(cli, ls_session_verdict(&s, code));
    if (s.diags.warnings > 0) /* they come from the solve at the written values, not from the chosen ones */
        fputs("loadstack: the warnings below are about the circuit as written, before fit chose its values\n", stderr);
    ls_diags_print(&s.diags, stderr);
    ls_fit_free(&f);
    ls_session_free(&s);
    return code;
}
