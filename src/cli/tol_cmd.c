/* tol_cmd.c — the tol command: options, the study (tolerance.c, shared with
 * the C API's ls_circuit_tol) and its reports: text, JSON, CSV and the
 * Monte Carlo histogram. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "report/writer.h"
#include "elab/elab.h"
#include "base/fmt.h"
#include "lang/parser.h"
#include "parts/parts.h"
#include "report/plot.h"
#include "cli/progress.h"
#include "analysis/tolerance.h"

/* ---- reports ------------------------------------------------------------------------------- */

typedef struct tol_ctx {
    ls_session *s;
    ls_cli *cli;
    const ls_q *q;
    const char *qtext;
    const char *unit;
    ls_tol_vary *v;
    int nv;
    const int *checks;
    int nchecks;
    ls_tol_result r;
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

/* "+1%" / "-5%" for part j at the corner mask. */
static const char *corner_word(char *b, size_t n, const ls_tol_vary *v, unsigned long mask, int j)
{
    snprintf(b, n, "%c%.4g%%", (mask >> j) & 1 ? '+' : '-', 100 * v[j].tol);
    return b;
}

/* The worst case's parts (JSON, text): each varied part's value and tol (a
 * fraction), and where it sits at the minimum and the maximum (+tol or
 * -tol, as a fraction) with the corners, or its share of the linear
 * half-width with the sensitivities. */
static const ls_wr_col corner_cols[] = {
    {"part", NULL, "part", false, 20},       {"kind", NULL, "kind", false, 9},
    {"part_value", NULL, "value", true, 14}, {"tol", NULL, "tol", true, 8},
    {"at_min", NULL, "at min", true, 12},    {"at_max", NULL, "at max", true, 12},
};
static const ls_wr_col share_cols[] = {
    {"part", NULL, "part", false, 20},       {"kind", NULL, "kind", false, 9},
    {"part_value", NULL, "value", true, 14}, {"tol", NULL, "tol", true, 8},
    {"share", NULL, "share", true, 12},
};

/* One row of the parts' table: varied part j. */
static void tol_part_row(ls_wr *w, const tol_ctx *t, int j, double lin)
{
    const ls_report *rp = w->rp;
    const ls_tol_result *r = &t->r;
    const ls_tol_vary *v = &t->v[j];
    const ls_part *p = &t->s->nl.parts[v->part];
    char tb[32], vb[64], c1[48] = "", c2[32] = "", b[64];
    snprintf(tb, sizeof tb, "%.4g%%", 100 * v->tol);
    ls_wr_cell_str(w, p->name);
    ls_wr_cell_str(w, p->kind->name);
    ls_wr_cell_num(w, v->nominal, ls_eng(rp, vb, sizeof vb, v->nominal, ls_unit_of(ls_kind_main_dims(p->kind), t->cli->ascii)));
    ls_wr_cell_num(w, v->tol, tb);
    if (r->corners) {
        bool known = isfinite(r->wc_min);
        double lo = ((r->wc_min_mask >> j) & 1 ? 1 : -1) * v->tol;
        double hi = ((r->wc_max_mask >> j) & 1 ? 1 : -1) * v->tol;
        if (known) {
            corner_word(c1, sizeof c1, t->v, r->wc_min_mask, j);
            corner_word(c2, sizeof c2, t->v, r->wc_max_mask, j);
        }
        ls_wr_cell_why(w, known ? lo : NAN, LS_WHY_UNSOLVED, c1);
        ls_wr_cell_why(w, known ? hi : NAN, LS_WHY_UNSOLVED, c2);
    } else {
        if (lin > 0)
            snprintf(c1, sizeof c1, "%s%%", ls_fixed(rp, b, sizeof b, "%.1f", 100 * v->dev / lin));
        ls_wr_cell_why(w, lin > 0 ? v->dev / lin : NAN, LS_WHY_UNDEFINED, c1);
    }
    ls_wr_row(w);
}

/* The worst case: "worst_case" {min, max, method, rss with the
 * sensitivities, parts}; in text (when a part varies) how it was found,
 * the range and the parts' table. */
static void tol_worst_case(ls_wr *w, const tol_ctx *t)
{
    const ls_report *rp = w->rp;
    const ls_tol_result *r = &t->r;
    const char *u = t->unit;
    char b1[64], b2[64], b3[64], b4[64];
    ls_wr_obj(w, "worst_case");
    ls_wr_num(w, "min", r->wc_min);
    ls_wr_num(w, "max", r->wc_max);
    ls_wr_str(w, "method", r->corners ? "corners" : "sensitivity");
    if (!r->corners)
        ls_wr_num(w, "rss", r->rss);
    if (t->nv > 0) {
        if (r->corners)
            ls_wr_say(w, "Worst case, every corner (%lu solves):\n", 1ul << t->nv);
        else
            ls_wr_say(w, "Worst case, linear from the sensitivities (%d parts are too many for every corner):\n", t->nv);
        ls_wr_say(w, "  min %s   max %s", ls_eng(rp, b1, sizeof b1, r->wc_min, u), ls_eng(rp, b2, sizeof b2, r->wc_max, u));
        if (r->nominal != 0 && isfinite(r->wc_min))
            ls_wr_say(w, "   (%s%% .. %s%% of nominal)",
                      ls_fixed(rp, b3, sizeof b3, "%+.3g", 100 * (r->wc_min / r->nominal - 1)),
                      ls_fixed(rp, b4, sizeof b4, "%+.3g", 100 * (r->wc_max / r->nominal - 1)));
        ls_wr_say(w, "\n");
        if (!r->corners)
            ls_wr_say(w, "  root-sum-square estimate: %s +- %s\n", ls_eng(rp, b1, sizeof b1, r->nominal, u),
                      ls_eng(rp, b2, sizeof b2, r->rss, u));
        ls_wr_say(w, "\n");
    }
    static const ls_wr_style style = {.lead = "  ", .gap = " ", .fixed = true, .skip_empty = true};
    if (r->corners)
        ls_wr_table(w, "parts", corner_cols, (int)(sizeof corner_cols / sizeof *corner_cols), &style);
    else
        ls_wr_table(w, "parts", share_cols, (int)(sizeof share_cols / sizeof *share_cols), &style);
    double lin = r->corners ? 0 : (r->wc_max - r->wc_min) / 2;
    for (int j = 0; j < t->nv; j++)
        tol_part_row(w, t, j, lin);
    ls_wr_table_end(w);
    ls_wr_end(w);
}

/* The Monte Carlo statistics: "monte_carlo" {trials, seed, dist, mean, std,
 * min, max, finite, percentiles} (the CSV has finite after the
 * percentiles); in text (when a part varies) their lines. */
static void tol_monte_carlo(ls_wr *w, const tol_ctx *t)
{
    const ls_report *rp = w->rp;
    const ls_tol_result *r = &t->r;
    const char *u = t->unit;
    char b1[64], b2[64], b3[64], b4[64];
    ls_wr_obj(w, "monte_carlo");
    ls_wr_int(w, "trials", t->trials);
    ls_wr_uint(w, "seed", (unsigned long long)t->seed);
    ls_wr_str(w, "dist", t->normal ? "normal" : "uniform");
    ls_wr_num(w, "mean", r->mean);
    ls_wr_num(w, "std", r->std);
    ls_wr_num(w, "min", r->min);
    ls_wr_num(w, "max", r->max);
    ls_wr_csv_rows(w, false);
    ls_wr_int(w, "finite", r->finite);
    ls_wr_csv_rows(w, true);
    ls_wr_obj(w, "percentiles");
    for (int k = 0; k < 5; k++)
        ls_wr_num(w, ls_tol_pct_keys[k], r->pct[k]);
    ls_wr_end(w);
    ls_wr_route(w, LS_WR_CSV);
    ls_wr_num(w, "finite", (double)r->finite);
    ls_wr_route(w, LS_WR_ALL);
    ls_wr_end(w);
    if (t->nv == 0)
        return;
    ls_wr_say(w, "\nMonte Carlo, %ld trials, %s, seed %llu:\n", t->trials,
              t->normal ? "normal (tol = 3 sigma)" : "uniform within +-tol", (unsigned long long)t->seed);
    ls_wr_say(w, "  mean %s   std %s   min %s   max %s\n", ls_eng(rp, b1, sizeof b1, r->mean, u),
              ls_eng(rp, b2, sizeof b2, r->std, u), ls_eng(rp, b3, sizeof b3, r->min, u),
              ls_eng(rp, b4, sizeof b4, r->max, u));
    ls_wr_say(w, "  percentiles");
    for (int k = 0; k < 5; k++)
        ls_wr_say(w, "  %s%%: %s", ls_tol_pct_keys[k], ls_eng(rp, b1, sizeof b1, r->pct[k], u));
    ls_wr_say(w, "\n");
    if (r->finite < t->trials)
        ls_wr_say(w, "  %ld trials did not solve or gave no finite value\n", t->trials - r->finite);
}

/* The CSV's rows of the worst case's parts, after the statistics:
 * worst_case.parts.NAME.tol, .at_min and .at_max (when known) or .share. */
static void tol_parts_csv(ls_wr *w, const tol_ctx *t)
{
    const ls_tol_result *r = &t->r;
    double lin = r->corners ? 0 : (r->wc_max - r->wc_min) / 2;
    ls_wr_route(w, LS_WR_CSV);
    ls_wr_obj(w, "worst_case");
    ls_wr_obj(w, "parts");
    for (int j = 0; j < t->nv; j++) {
        ls_wr_obj(w, t->s->nl.parts[t->v[j].part].name);
        ls_wr_num(w, "tol", t->v[j].tol);
        if (r->corners && isfinite(r->wc_min)) {
            ls_wr_num(w, "at_min", ((r->wc_min_mask >> j) & 1 ? 1 : -1) * t->v[j].tol);
            ls_wr_num(w, "at_max", ((r->wc_max_mask >> j) & 1 ? 1 : -1) * t->v[j].tol);
        } else if (!r->corners) {
            ls_wr_num(w, "share", lin > 0 ? t->v[j].dev / lin : NAN);
        }
        ls_wr_end(w);
    }
    ls_wr_end(w);
    ls_wr_end(w);
    ls_wr_route(w, LS_WR_ALL);
}

/* The yield and each expect's verdict at the worst case: "yield", "checks"
 * [{text, instance, worst_case}] (CSV: check.TEXT.worst_case), and their
 * lines in text. */
static void tol_yield(ls_wr *w, const tol_ctx *t)
{
    const ls_report *rp = w->rp;
    const ls_tol_result *r = &t->r;
    const ls_netlist *nl = &t->s->nl;
    char b1[64];
    ls_wr_num_why(w, "yield", r->yield, t->nchecks ? LS_WHY_UNSOLVED : LS_WHY_NONE);
    tol_parts_csv(w, t);
    if (t->nchecks == 0)
        ls_wr_say(w, "\nYield: no expect on %s in the circuit\n", t->qtext);
    else if (t->nv == 0)
        ls_wr_say(w, "\nYield %s (the nominal design %s every expect on %s)\n", r->yield > 0 ? "100%" : "0%",
                  r->yield > 0 ? "meets" : "does not meet", t->qtext);
    else
        ls_wr_say(w, "\nYield %s%% (trials meeting every expect on %s):\n",
                  ls_fixed(rp, b1, sizeof b1, "%.2f", 100 * r->yield), t->qtext);
    ls_wr_csv_rows(w, false);
    ls_wr_arr(w, "checks");
    for (int c = 0; c < t->nchecks; c++) {
        const ls_check *ck = &nl->checks[t->checks[c]];
        const char *wc = check_wc_word(t, ck);
        ls_wr_obj(w, NULL);
        ls_wr_str(w, "text", ck->text);
        ls_wr_str(w, "instance", ck->instance);
        ls_wr_str(w, "worst_case", wc);
        ls_wr_end(w);
        if (t->nv > 0)
            ls_wr_say(w, "  %s%s%s  worst case %s\n", ck->text, ck->instance ? "  in " : "",
                      ck->instance ? ck->instance : "", !wc ? "unknown" : strcmp(wc, "inside") == 0 ? "inside" : "OUTSIDE");
    }
    ls_wr_end(w);
    ls_wr_csv_rows(w, true);
    ls_wr_route(w, LS_WR_CSV);
    ls_wr_obj(w, "check");
    for (int c = 0; c < t->nchecks; c++) {
        const ls_check *ck = &nl->checks[t->checks[c]];
        ls_wr_obj(w, ck->text);
        ls_wr_str(w, "worst_case", check_wc_word(t, ck));
        ls_wr_end(w);
    }
    ls_wr_end(w);
    ls_wr_route(w, LS_WR_ALL);
}

/* The tol report, described once for every format (writer.h): the worst
 * case with each part's end or share, the Monte Carlo statistics, and the
 * yield with each expect's verdict.  The CSV is one row per field, named by
 * its path (monte_carlo.mean). */
static void tol_report(ls_report *rp, const tol_ctx *t)
{
    char b1[64];
    ls_wr w;
    ls_wr_begin(&w, rp);
    ls_wr_fields(&w, "field", "value");
    ls_wr_field_sep(&w, ".");
    ls_wr_str(&w, "quantity", t->qtext);
    ls_wr_num(&w, "nominal", t->r.nominal);
    ls_wr_say(&w, "Tolerance of %s (nominal %s): %d part%s vary\n\n", t->qtext,
              ls_eng(rp, b1, sizeof b1, t->r.nominal, t->unit), t->nv, t->nv == 1 ? "" : "s");
    if (t->nv == 0)
        ls_wr_say(&w, "Nothing varies (no part has tol=): the worst case and every Monte Carlo trial would give the "
                      "nominal\nvalue, so no trials were run.\n");
    tol_worst_case(&w, t);
    tol_monte_carlo(&w, t);
    tol_yield(&w, t);
    ls_wr_finish(&w);
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

/* The study's progress hook: the terminal's progress line. */
static void show_progress(void *ctx, long done, long total) { ls_progress_update(ctx, done, total); }

/* ---- the command --------------------------------------------------------------------------- */

/* Options of tol, checked before any work.  Returns 0 or LS_EXIT_USAGE. */
static int tol_options(ls_cli *cli, long *trials, uint64_t *seed, bool *normal)
{
    *trials = cli->trials > 0 ? cli->trials : 10000;
    *seed = cli->seed;
    *normal = false;
    if (*trials < 1 || *trials > LS_TOL_MAX_TRIALS) {
        fprintf(stderr, "loadstack: error: --trials takes a whole number from 1 to %ld\n", LS_TOL_MAX_TRIALS);
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
    ls_progress pg;
    ls_progress_start(&pg, "tol", "trials", cli->quiet);
    ls_tol_study st = {.nl = &s.nl, .op = &s.op, .arena = &s.arena, .diags = &s.diags, .q = t.q,
                       .trials = t.trials, .seed = t.seed, .normal = t.normal,
                       .progress = pg.out ? show_progress : NULL, .progress_ctx = &pg, .share = cli->share};
    double *values = NULL;
    if (code == LS_EXIT_OK) {
        t.unit = ls_unit_of(t.q->dims, cli->ascii);
        ls_outcome out = ls_tol_run(&st);
        if (pg.out)
            ls_progress_end(&pg);
        t.trials = st.trials;   /* 0 when nothing varies */
        if (out == LS_NO_MEMORY || out == LS_NO_WORKER) {
            /* never a statistic: a trial or corner that ran out of memory ends the run */
            fprintf(stderr, "loadstack: error: out of memory in the tolerance study: %s (%d varying parts, %ld trials)\n",
                    st.failed_stage ? st.failed_stage : "the Monte Carlo run", st.nv > 0 ? st.nv : 0, t.trials);
        }
        code = ls_exit_code(out);
        /* the reports read the study through the command's context */
        t.v = st.v;
        t.nv = st.nv;
        t.checks = st.checks;
        t.nchecks = st.nchecks;
        t.r = st.r;
        values = st.values;
    }
    if (code == LS_EXIT_OK && cli->plot)
        code = tol_plot(&t, values);
    if (code != LS_EXIT_OK) {
        ls_diags_print(&s.diags, stderr);
        ls_tol_free(&st);
        ls_session_free(&s);
        return code;
    }
    ls_report rp = ls_report_for(&s, ls_out_open(cli));
    tol_report(&rp, &t);
    code = ls_out_close(cli, ls_session_verdict(&s, ls_report_done(&rp, LS_EXIT_OK)));
    ls_diags_print(&s.diags, stderr);
    ls_tol_free(&st);
    ls_session_free(&s);
    return code;
}

/* ---- samples for other reports ------------------------------------------------------------- */

int ls_tol_sample(ls_session *s, const ls_q *q, long trials, uint64_t seed, double **values)
{
    return ls_tol_trials(&s->nl, &s->op, q, trials, seed, values);
}
