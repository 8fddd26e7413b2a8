/* fit_cmd.c — the fit command: options, the search (fit.c), its reports
 * (text, JSON, CSV) and the chosen values written into a copy of the
 * circuit (--write). */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "base/eseries.h"
#include "analysis/fit.h"
#include "base/fmt.h"
#include "parts/parts.h"
#include "cli/progress.h"

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

static void check_json(ls_jw *w, const ls_fit_study *f, const ls_fit_check *c)
{
    static const char *const kinds[] = {"expect", "port", "rating", "vmax", "imax", "opamp-output", "opamp-cm",
                                        "adc-range", "adc-source"};
    char t[512];
    ls_jw_obj(w, NULL);
    ls_jw_str(w, "text", ls_fit_check_text(f, c, t, sizeof t));
    ls_jw_str(w, "kind", kinds[c->kind]);
    ls_jw_num(w, "value", c->value);
    ls_jw_num(w, "lo", c->lo);
    ls_jw_num(w, "hi", c->hi);
    ls_jw_num(w, "margin", c->margin);
    ls_jw_bool(w, "pass", c->pass);
    if (!c->pass)
        ls_jw_num_why(w, "miss", miss_of(c), LS_WHY_UNDEFINED);
    if (c->why)
        ls_jw_str(w, "reason", c->why);
    ls_jw_end(w);
}

static void cand_json(ls_jw *w, const ls_fit_study *f, const ls_fit_cand *c, const char *key)
{
    ls_jw_obj(w, key);
    ls_jw_obj(w, "values");
    for (int j = 0; j < f->nvars; j++)
        ls_jw_num(w, f->nl->parts[f->vars[j].part].name, c->value[j]);
    ls_jw_end(w);
    ls_jw_num_why(w, "goal", goal_figure(f, c), c->solved ? LS_WHY_UNDEFINED : LS_WHY_UNSOLVED);
    ls_jw_bool(w, "meets", c->meets);
    ls_jw_int(w, "failed", c->failed);
    ls_jw_num_why(w, "margin", c->margin, c->solved ? LS_WHY_UNBOUNDED : LS_WHY_UNSOLVED);
    if (isnan(c->yield))
        ls_jw_null(w, "yield", LS_WHY_NONE);
    else
        ls_jw_num(w, "yield", c->yield);
    ls_jw_num_why(w, "current", c->current, LS_WHY_UNSOLVED);
    ls_jw_arr(w, "checks");
    for (int k = 0; k < c->nchecks; k++)
        check_json(w, f, &c->checks[k]);
    ls_jw_end(w);
    ls_jw_end(w);
}

static void fit_json(ls_report *rp, const ls_fit_study *f)
{
    ls_jw jw, *w = &jw;
    ls_report_json_begin(rp, w);
    ls_jw_str(w, "goal", ls_fit_goal_name(f->goal));
    ls_jw_str(w, "series", f->series);
    ls_jw_obj(w, "search");
    ls_jw_str(w, "method", f->exhaustive ? "every-combination" : "continuous-then-branch-and-bound");
    ls_jw_num(w, "combinations", f->combinations);
    ls_jw_int(w, "solved", f->evaluated);
    ls_jw_int(w, "continuous_solves", f->nlopt_evals);
    ls_jw_bool(w, "proven", f->proven);
    ls_jw_int(w, "factorizations", f->factorizations);
    ls_jw_int(w, "symbolic_analyses", f->analyses);
    if (!f->exhaustive) {
        ls_jw_int(w, "continuous_status", f->nlopt_status);
        ls_jw_obj(w, "branch_and_bound");
        ls_jw_int(w, "solves", f->bb_solves);
        ls_jw_int(w, "solve_limit", f->max_solves);
        ls_jw_int(w, "boxes", f->bb_boxes);
        ls_jw_int(w, "pruned", f->bb_pruned);
        ls_jw_int(w, "enumerated", f->bb_enumerated);
        ls_jw_int(w, "unbounded_checks", f->bb_unbounded);
        ls_jw_end(w);
    }
    if (f->have_yield) {
        ls_jw_int(w, "trials", f->yield_trials);
        ls_jw_int(w, "seed", (long long)f->seed);
    }
    ls_jw_end(w);
    ls_jw_arr(w, "free");
    for (int j = 0; j < f->nvars; j++) {
        const ls_fit_var *v = &f->vars[j];
        const ls_part *p = &f->nl->parts[v->part];
        ls_jw_obj(w, NULL);
        ls_jw_str(w, "part", p->name);
        ls_jw_str(w, "kind", p->kind->name);
        ls_jw_num(w, "lo", v->lo);
        ls_jw_num(w, "hi", v->hi);
        ls_jw_str(w, "series", v->series);
        ls_jw_int(w, "values", v->nvalues);
        ls_jw_num(w, "written", v->start);
        ls_jw_num_why(w, "optimum", v->optimum, LS_WHY_NONE);
        ls_jw_end(w);
    }
    ls_jw_end(w);
    ls_jw_arr(w, "candidates");
    for (int i = 0; i < f->nbest; i++)
        cand_json(w, f, &f->best[i], NULL);
    ls_jw_end(w);
    if (f->any_feasible)
        cand_json(w, f, &f->best[0], "chosen");
    else
        ls_jw_null(w, "chosen", LS_WHY_NONE);
    if (!f->any_feasible && f->nbest > 0)
        cand_json(w, f, &f->best[0], "closest");
    ls_report_json_end(rp, w);
}

/* ---- CSV ----------------------------------------------------------------------------------- */

static void fit_csv(FILE *o, const ls_fit_study *f)
{
    fputs("rank,meets,goal,margin,yield,current,failed", o);
    for (int j = 0; j < f->nvars; j++) {
        fputc(',', o);
        ls_csv_field(o, f->nl->parts[f->vars[j].part].name);
    }
    fputc('\n', o);
    for (int i = 0; i < f->nbest; i++) {
        const ls_fit_cand *c = &f->best[i];
        fprintf(o, "%d,%s,%s,%s,%s,%s,%d", i + 1, c->meets ? "true" : "false", LS_CSV(goal_figure(f, c)),
                LS_CSV(c->margin), LS_CSV(c->yield), LS_CSV(c->current), c->failed);
        for (int j = 0; j < f->nvars; j++)
            fprintf(o, ",%s", LS_CSV(c->value[j]));
        fputc('\n', o);
    }
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

/* The table of one candidate's checks (all, or only the failing ones). */
static void checks_text(FILE *o, ls_report *rp, const ls_fit_study *f, const ls_fit_cand *c, bool failing)
{
    (void)o;   /* the tables write through rp */
    const char *head[] = {"check", "value", "limit", "margin", failing ? "misses by" : "verdict"};
    const bool right[] = {false, true, true, true, false};
    int n = 0;
    for (int k = 0; k < c->nchecks; k++)
        n += !failing || !c->checks[k].pass;
    char **cells = calloc((size_t)(n ? n : 1) * 5, sizeof *cells);
    if (!cells) {
        rp->nomem = "fit's table of checks";
        return;
    }
    int row = 0;
    for (int k = 0; k < c->nchecks; k++) {
        const ls_fit_check *ck = &c->checks[k];
        if (failing && ck->pass)
            continue;
        const char *u = check_unit(f, ck, rp->ascii);
        char t[512], v[64], l1[64], l2[64], lim[160], m[32], verdict[200];
        ls_fit_check_text(f, ck, t, sizeof t);
        ls_eng(rp, v, sizeof v, ck->value, u);
        if (isfinite(ck->lo) && isfinite(ck->hi))
            snprintf(lim, sizeof lim, "%s..%s", ls_eng(rp, l1, sizeof l1, ck->lo, u), ls_eng(rp, l2, sizeof l2, ck->hi, u));
        else if (isfinite(ck->lo))
            snprintf(lim, sizeof lim, ">= %s", ls_eng(rp, l1, sizeof l1, ck->lo, u));
        else if (isfinite(ck->hi))
            snprintf(lim, sizeof lim, "<= %s", ls_eng(rp, l1, sizeof l1, ck->hi, u));
        else
            snprintf(lim, sizeof lim, "-");
        pct(m, sizeof m, ck->margin);
        double miss = miss_of(ck);
        if (!failing)
            snprintf(verdict, sizeof verdict, "%s", ck->pass ? "ok" : "FAILS");
        else if (isfinite(miss))
            ls_eng(rp, verdict, sizeof verdict, miss, u);
        else
            snprintf(verdict, sizeof verdict, "%s", ck->why ? ck->why : "undefined");
        const char *src[5] = {t, v, lim, m, verdict};
        for (int col = 0; col < 5; col++)
            if (!(cells[row * 5 + col] = strdup(src[col]))) {
                rp->nomem = "fit's table of checks";
                cells[row * 5 + col] = (char *)"";   /* the report is dropped; the table stays printable */
            }
        row++;
    }
    ls_text_table(rp, 5, head, right, (const char *const *)cells, n);
    for (int i = 0; i < n * 5; i++)
        if (cells[i] && *cells[i])
            free(cells[i]);
    free(cells);
}

/* "r1 12 kΩ, r2 3.9 kΩ" */
static void values_text(FILE *o, ls_report *rp, const ls_fit_study *f, const ls_fit_cand *c, bool ascii)
{
    for (int j = 0; j < f->nvars; j++) {
        const ls_part *p = &f->nl->parts[f->vars[j].part];
        char b[64];
        fprintf(o, "%s%s %s", j ? ", " : "", p->name,
                ls_eng(rp, b, sizeof b, c->value[j], ls_unit_of(ls_kind_main_dims(p->kind), ascii)));
    }
}

static void free_parts_text(FILE *o, ls_report *rp, const ls_fit_study *f, bool ascii)
{
    (void)o;   /* the tables write through rp */
    const char *head[] = {"part", "kind", "range", "series", "values", "written", "optimum"};
    const bool right[] = {false, false, true, false, true, true, true};
    int n = f->nvars;
    char (*buf)[7][64] = calloc((size_t)(n ? n : 1), sizeof *buf);
    const char **cells = calloc((size_t)(n ? n : 1) * 7, sizeof *cells);
    if (!buf || !cells) {
        rp->nomem = "fit's table of free parts";
        free(buf);
        free(cells);
        return;
    }
    for (int j = 0; j < n; j++) {
        const ls_fit_var *v = &f->vars[j];
        const ls_part *p = &f->nl->parts[v->part];
        const char *u = ls_unit_of(ls_kind_main_dims(p->kind), ascii);
        char a[32], b[32];
        snprintf(buf[j][0], 64, "%s", p->name);
        snprintf(buf[j][1], 64, "%s", p->kind->name);
        snprintf(buf[j][2], 64, "%s..%s", ls_eng(rp, a, sizeof a, v->lo, u), ls_eng(rp, b, sizeof b, v->hi, u));
        snprintf(buf[j][3], 64, "%s", v->series);
        snprintf(buf[j][4], 64, "%d", v->nvalues);
        ls_eng(rp, buf[j][5], 64, v->start, u);
        if (isnan(v->optimum))
            snprintf(buf[j][6], 64, "-");
        else
            ls_eng(rp, buf[j][6], 64, v->optimum, u);
        for (int c = 0; c < 7; c++)
            cells[j * 7 + c] = buf[j][c];
    }
    ls_text_table(rp, 7, head, right, cells, n);
    free(buf);
    free(cells);
}

/* The ranked candidates: one row each. */
static void ranking_text(FILE *o, ls_report *rp, const ls_fit_study *f, bool ascii)
{
    fputs("Candidates, best first:\n", o);
    for (int i = 0; i < f->nbest; i++) {
        const ls_fit_cand *c = &f->best[i];
        char m[32], y[32], cur[64];
        fprintf(o, "  %2d. ", i + 1);
        values_text(o, rp, f, c, ascii);
        fprintf(o, "\n      margin %s", pct(m, sizeof m, c->margin));
        if (!isnan(c->yield))
            fprintf(o, "   yield %s", pct(y, sizeof y, c->yield));
        fprintf(o, "   supply current %s   %s\n", ls_eng(rp, cur, sizeof cur, c->current, "A"),
                c->meets ? "meets every check" : c->solved ? "fails" : "does not solve");
        if (!c->meets && c->solved)
            fprintf(o, "      fails %d check%s\n", c->failed, c->failed == 1 ? "" : "s");
    }
}

static void fit_text(FILE *o, ls_report *rp, const ls_fit_study *f, bool ascii)
{
    fprintf(o, "Fit of %d free part%s to standard values, goal: %s\n", f->nvars, f->nvars == 1 ? "" : "s",
            ls_fit_goal_name(f->goal));
    if (f->exhaustive)
        fprintf(o, "  search: every combination (%.0f, each solved)\n\n", f->combinations);
    else {
        fprintf(o, "  search: %.3g combinations are too many to try each; continuous optimum (NLopt COBYLA, %ld "
                   "solves), the series values around it, then branch and bound (%ld solved, %ld of them by branch "
                   "and bound; %ld boxes, %ld ruled out by their bounds)\n",
                f->combinations, f->nlopt_evals, f->evaluated, f->bb_solves, f->bb_boxes, f->bb_pruned);
        if (f->proven && f->goal == LS_FIT_YIELD)
            fputs("  proven: no other combination has a larger margin than the finalists, whose yields rank "
                  "them below\n\n", o);
        else if (f->proven)
            fputs("  proven: no other combination ranks above the candidates below\n\n", o);
        else
            fprintf(o, "  NOT PROVEN: the search stopped at its limit of %ld solves (--max-solves); the candidates "
                       "below are the best found, and a combination not tried may rank higher\n\n",
                    f->max_solves);
    }
    free_parts_text(o, rp, f, ascii);
    fputc('\n', o);
    ranking_text(o, rp, f, ascii);
    if (f->have_yield && f->yield_trials > 0)
        fprintf(o, "  (yield: %ld Monte Carlo trials per candidate from the parts' tol=, seed %llu; a trial counts when "
                   "it meets every check)\n",
                f->yield_trials, (unsigned long long)f->seed);
    else if (f->have_yield)
        fputs("  (yield: no part has tol=, so nothing varies: 100% for a candidate that meets every check)\n", o);
    fputc('\n', o);
    if (f->nbest == 0)
        return;
    const ls_fit_cand *c = &f->best[0];
    if (f->any_feasible) {
        fputs("Chosen: ", o);
        values_text(o, rp, f, c, ascii);
        fputs("\n", o);
        checks_text(o, rp, f, c, false);
        fputs("\nMargins: 100% is the middle of a range, 0% its edge; a one-sided limit's margin is the distance to "
              "it over its size.\nBefore building, check the chosen parts' ratings and voltages against their "
              "data sheets.\n",
              o);
        return;
    }
    fputs("No combination of standard values meets every check.\nThe closest: ", o);
    values_text(o, rp, f, c, ascii);
    fprintf(o, "\nIt misses %d check%s:\n", c->failed, c->failed == 1 ? "" : "s");
    checks_text(o, rp, f, c, true);
    fputs("\nWiden a free= range, choose a finer series (--series E96), or relax a budget.\n", o);
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
    return 0;
}

/* Say why the search could not run.  Returns the exit code. */
static int fit_failed(ls_session *s, const ls_fit_study *f, int code)
{
    switch (code) {
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
    case LS_FIT_NOMEM:
        fprintf(stderr, "loadstack: error: out of memory during the search\n");
        return LS_EXIT_UNSOLVABLE;
    default:
        return code;
    }
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
        code = ls_fit_run(&f);
        if (pg.out)
            ls_progress_end(&pg);
        if (code != LS_FIT_OK)
            code = fit_failed(&s, &f, code);
    }
    if (code != LS_EXIT_OK) {
        ls_diags_print(&s.diags, stderr);
        ls_fit_free(&f);
        ls_session_free(&s);
        return code;
    }
    FILE *o = ls_out_open(cli);
    ls_report rp = ls_report_for(&s, o);
    if (cli->fmt == FMT_JSON)
        fit_json(&rp, &f);
    else if (cli->fmt == FMT_CSV)
        fit_csv(o, &f);
    else
        fit_text(o, &rp, &f, cli->ascii);
    code = ls_report_done(&rp, f.any_feasible ? LS_EXIT_OK : LS_EXIT_CHECK);
    if (code == LS_EXIT_UNSOLVABLE && rp.nomem) {   /* the report was not whole: nothing written */
        if (cli->write)
            ls_dest_discard(&cli->write_dest);
        code = ls_out_close(cli, code);
        ls_fit_free(&f);
        ls_session_free(&s);
        return code;
    }
    if (cli->write && f.any_feasible && write_circuit(cli, &s, &f) != 0) {
        fprintf(stderr, "loadstack: error: cannot write '%s'\n", cli->write);
        code = LS_EXIT_USAGE;
    }
    if (cli->write && !f.any_feasible) {
        ls_dest_discard(&cli->write_dest);   /* nothing chosen: no file */
        fprintf(stderr, "loadstack: no standard values meet every check; '%s' was not written\n", cli->write);
    }
    code = ls_out_close(cli, ls_session_verdict(&s, code));
    if (s.diags.warnings > 0) /* they come from the solve at the written values, not from the chosen ones */
        fputs("loadstack: the warnings below are about the circuit as written, before fit chose its values\n", stderr);
    ls_diags_print(&s.diags, stderr);
    ls_fit_free(&f);
    ls_session_free(&s);
    return code;
}
