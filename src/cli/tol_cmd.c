/* tol_cmd.c — the tol command: options, the study (tolerance.c, shared with
 * the C API's ls_circuit_tol) and its reports: text, JSON, CSV and the
 * Monte Carlo histogram. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
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

/* The worst case's "parts": each varied part's value and tol (a fraction),
 * and where it sits at the minimum and the maximum (+tol or -tol, as a
 * fraction) with the corners, or its share of the linear half-width with the
 * sensitivities: what the text's part table shows. */
static void tol_parts_json(ls_jw *w, const tol_ctx *t)
{
    const ls_tol_result *r = &t->r;
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
static void tol_json(ls_report *rp, const tol_ctx *t)
{
    const ls_tol_result *r = &t->r;
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
        ls_jw_num(w, ls_tol_pct_keys[k], r->pct[k]);
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
    ls_report_json_end(rp, w);
}

/* One `field,value` CSV row; an empty value when v is not finite. */
static void csv_num(FILE *o, const char *field, double v)
{
    fprintf(o, "%s,%s\n", field, LS_CSV(v));
}

/* The tol report as `field,value` rows. */
static void tol_csv(FILE *o, const tol_ctx *t)
{
    const ls_tol_result *r = &t->r;
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
        snprintf(f, sizeof f, "monte_carlo.percentiles.%s", ls_tol_pct_keys[k]);
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
static const char *corner_word(char *b, size_t n, const ls_tol_vary *v, unsigned long mask, int j)
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
    const ls_tol_result *r = &t->r;
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
        fprintf(o, "   (%s%% .. %s%% of nominal)", ls_fixed(rp, b3, sizeof b3, "%+.3g", 100 * (r->wc_min / r->nominal - 1)),
                ls_fixed(rp, b4, sizeof b4, "%+.3g", 100 * (r->wc_max / r->nominal - 1)));
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
        char tb[32], c1[48] = "", c2[32] = "", vb[64];
        snprintf(tb, sizeof tb, "%.4g%%", 100 * t->v[j].tol);
        if (r->corners && isfinite(r->wc_min)) {
            corner_word(c1, sizeof c1, t->v, r->wc_min_mask, j);
            corner_word(c2, sizeof c2, t->v, r->wc_max_mask, j);
        } else if (!r->corners && lin > 0) {
            snprintf(c1, sizeof c1, "%s%%", ls_fixed(rp, b3, sizeof b3, "%.1f", 100 * t->v[j].dev / lin));
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
        fprintf(o, "  %s%%: %s", ls_tol_pct_keys[k], ls_eng(rp, b1, sizeof b1, r->pct[k], u));
    fputc('\n', o);
    if (r->finite < t->trials)
        fprintf(o, "  %ld trials did not solve or gave no finite value\n", t->trials - r->finite);
    if (t->nchecks == 0) {
        fprintf(o, "\nYield: no expect on %s in the circuit\n", t->qtext);
        return;
    }
    fprintf(o, "\nYield %s%% (trials meeting every expect on %s):\n", ls_fixed(rp, b1, sizeof b1, "%.2f", 100 * r->yield),
            t->qtext);
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
        code = ls_tol_run(&st);
        if (pg.out)
            ls_progress_end(&pg);
        t.trials = st.trials;   /* 0 when nothing varies */
        if (code == LS_TOL_NOMEM || code == LS_TOL_SETUP) {
            /* never a statistic: a trial or corner that ran out of memory ends the run */
            fprintf(stderr, "loadstack: error: out of memory in the tolerance study: %s (%d varying parts, %ld trials)\n",
                    st.failed_stage ? st.failed_stage : "the Monte Carlo run", st.nv > 0 ? st.nv : 0, t.trials);
            code = LS_EXIT_UNSOLVABLE;
        }
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
    FILE *o = ls_out_open(cli);
    ls_report rp = ls_report_for(&s, o);
    if (cli->fmt == FMT_JSON)
        tol_json(&rp, &t);
    else if (cli->fmt == FMT_CSV)
        tol_csv(o, &t);
    else
        tol_text(o, &rp, &t);
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
