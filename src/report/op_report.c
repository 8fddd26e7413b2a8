/* op_report.c — the operating-point (solve) and check reports, each
 * described once through the report writer (writer.h), which writes it as
 * text, JSON or CSV. */
#include "report/report.h"
#include "report/writer.h"

#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "elab/elab.h"
#include "base/fmt.h"
#include "analysis/newton.h"

/* The names of a large circuit's nodes and parts lie scattered over its arena,
 * and the first read of each is a cache miss that the row loops would wait for
 * one at a time; asking for the name some rows ahead lets those misses overlap
 * (on a million-node grid this halves the time of the text report). */
#define NAME_AHEAD 16

static void prefetch_node_name(const ls_netlist *nl, int i)
{
    if (i + NAME_AHEAD < nl->nnodes)
        __builtin_prefetch(nl->nodes[i + NAME_AHEAD].name);
}

static void prefetch_part_name(const ls_netlist *nl, int i)
{
    if (i + NAME_AHEAD < nl->nparts)
        __builtin_prefetch(nl->parts[i + NAME_AHEAD].name);
}

void ls_report_budget(ls_wr *w, const ls_port_result *pr)
{
    ls_wr_num_why(w, ls_prop_name(PROP_BUDGET), pr->budget, isnan(pr->budget) ? LS_WHY_NONE : ls_jw_why_of(pr->budget));
    ls_wr_str(w, "by", pr->by_budget ? "budget" : "ratio");
}

/* ---- checks ------------------------------------------------------------------------- */

static const char *verdict_name(ls_verdict v)
{
    static const char *const n[] = {"ok", "marginal", "loading"};
    _Static_assert(sizeof n / sizeof n[0] == VERDICT_LOADING + 1, "one word per ls_verdict");
    assert(v >= VERDICT_OK && v <= VERDICT_LOADING);
    return n[v];
}

static int loc_line(const ls_diags *d, ls_loc l)
{
    if (l.file < 0)
        return 0;
    int line, col;
    ls_loc_linecol(d, l.file, l.start, &line, &col);
    return line;
}

static const char *loc_file(const ls_diags *d, ls_loc l)
{
    return l.file >= 0 ? d->files[l.file].path : "";
}

/* Line and column of a location (0, 0 for none). */
static void loc_linecol(const ls_diags *d, ls_loc l, int *line, int *col)
{
    *line = *col = 0;
    if (l.file >= 0)
        ls_loc_linecol(d, l.file, l.start, line, col);
}

/* The checks table.  check's CSV is this table (file, line, instance, text,
 * value, result); solve's CSV gives each check its own field rows instead. */
enum { CHECK_NCOL = 10 };
static const ls_wr_col check_cols[CHECK_NCOL] = {
    {.head = "result"},   {.json = "file", .csv = "file"}, {.json = "line", .csv = "line"},   {.json = "instance", .csv = "instance"},
    {.json = "text", .csv = "text"},   {.head = "check"},  {.json = "value", .csv = "value", .head = "value"}, {.json = "pass"},
    {.csv = "result"},   {.head = "where"},
};
static const ls_wr_col solve_check_cols[CHECK_NCOL] = {
    {.head = "result"}, {.json = "file"}, {.json = "line"},     {.json = "instance"},
    {.json = "text"},   {.head = "check"}, {.json = "value", .head = "value"}, {.json = "pass"},
    {0},     {.head = "where"},
};

/* One check's row: its cells, then the reason (JSON) and its field rows
 * (solve's CSV: value, result and the reason). */
static void check_row(ls_wr *w, const ls_check_row *r)
{
    ls_report *rp = w->rp;
    char where[600], text[600];
    ls_loc_str(rp->diags, r->loc, where, sizeof where);
    if (r->instance && r->port < 0)
        snprintf(text, sizeof text, "%s  [in %s]", r->text, r->instance);
    else
        snprintf(text, sizeof text, "%s", r->text);
    ls_wr_cell_str(w, r->r.pass ? "pass" : "FAIL");
    ls_wr_cell_str(w, r->loc.file >= 0 ? loc_file(rp->diags, r->loc) : NULL);
    ls_wr_cell_int(w, loc_line(rp->diags, r->loc));
    ls_wr_cell_str(w, r->instance);
    ls_wr_cell_str(w, r->text);
    ls_wr_cell_str(w, text);
    ls_wr_cell_eng(w, r->r.value, ls_unit_of(r->dims, rp->ascii), NULL);
    ls_wr_cell_bool(w, r->r.pass, NULL);
    ls_wr_cell_str(w, r->r.pass ? "pass" : "fail");
    ls_wr_cell_str(w, where);
    ls_wr_route(w, LS_WR_CSV);
    ls_wr_keys(w, "check", r->text);
    ls_wr_num(w, "value", r->r.value);
    ls_wr_str(w, "result", r->r.pass ? "pass" : "fail");
    ls_wr_route(w, LS_WR_ALL);
    if (r->r.reason)
        ls_wr_str(w, "reason", r->r.reason);
    ls_wr_row(w);
}

/* The checks (cols: check_cols or solve_check_cols), their notes in text and
 * the counts. */
static void checks_write(ls_wr *w, const ls_checks *c, const ls_wr_col *cols)
{
    static const ls_wr_style quiet = {.skip_empty = true};
    if (c->n)
        ls_wr_say(w, "\nChecks (%d passed, %d failed)\n", c->passed, c->failed);
    ls_wr_table(w, "checks", cols, CHECK_NCOL, &quiet);
    for (int i = 0; i < c->n; i++)
        check_row(w, &c->rows[i]);
    ls_wr_table_end(w);
    for (int i = 0; i < c->n; i++)
        if (c->rows[i].r.reason)
            ls_wr_say(w, "  note: %s: %s\n", c->rows[i].text, c->rows[i].r.reason);
    ls_wr_keys(w, "checks", "all");
    ls_wr_int(w, "passed", c->passed);
    ls_wr_int(w, "failed", c->failed);
}

/* ---- warnings ----------------------------------------------------------------------- */


/* "caution" for a warning about a hazard to people (its message says so),
 * "warning" for the rest. */
static const char *warning_level(const ls_diag *g)
{
    return strncmp(g->msg, "caution", 7) == 0 ? "caution" : "warning";
}


/* Open a JSON-only container (the CSV field rows have no place for it). */
static void json_open(ls_wr *w, const char *key, bool array)
{
    ls_wr_route(w, LS_WR_JSON);
    if (array)
        ls_wr_arr(w, key);
    else
        ls_wr_obj(w, key);
    ls_wr_route(w, LS_WR_ALL);
}

void ls_report_warnings(ls_wr *w)
{
    const ls_diags *d = w->rp->diags;
    json_open(w, "warnings", true);
    int k = 0;
    for (int i = 0; d && i < d->n; i++) {
        const ls_diag *g = &d->items[i];
        if (g->sev != LS_SEV_WARNING)
            continue;
        int line, col;
        char nth[16];
        loc_linecol(d, g->loc, &line, &col);
        snprintf(nth, sizeof nth, "%d", ++k);
        json_open(w, NULL, false);
        ls_wr_keys(w, "warning", nth);
        ls_wr_str(w, "code", g->code ? g->code : "warning");
        ls_wr_str(w, "level", warning_level(g));
        ls_wr_str(w, "message", g->msg);
        ls_wr_str(w, "file", g->loc.file >= 0 ? loc_file(d, g->loc) : NULL);
        if (g->loc.file >= 0) {
            ls_wr_int(w, "line", line);
            ls_wr_int(w, "column", col);
        } else {
            ls_wr_num_why(w, "line", NAN, LS_WHY_NONE);
            ls_wr_num_why(w, "column", NAN, LS_WHY_NONE);
        }
        ls_wr_end(w);
    }
    ls_wr_end(w);
}

/* The text's "Warnings" section. */
static void warnings_text(ls_wr *w)
{
    const ls_diags *d = w->rp->diags;
    int k = 0;
    for (int i = 0; i < d->n; i++) {
        const ls_diag *g = &d->items[i];
        if (g->sev != LS_SEV_WARNING)
            continue;
        if (!k++)
            ls_wr_say(w, "\nWarnings\n");
        char where[600];
        ls_loc_str(d, g->loc, where, sizeof where);
        ls_wr_say(w, "  %s%s%s [%s]\n", where, where[0] ? ": " : "", g->msg, g->code ? g->code : "warning");
    }
}

/* ---- real parts: limits, ADC inputs, thermistors ----------------------------------------- */

/* A thermistor's rows: the kinds with a body temperature (the table's flag). */
static bool has_body(const ls_part *p)
{
    return p->kind->has_body_temp;
}

/* The text column: which limit holds the output, with its value. */
static const char *limit_text(ls_report *rp, const ls_run *run, const ls_part *p, char *buf, size_t n)
{
    char a[64];
    int state = ls_run_state(run, p)->state;
    assert(state >= LS_LIM_NONE && state <= LS_LIM_CURRENT_SINK);
    switch (state) {
    case LS_LIM_RAIL_HIGH: snprintf(buf, n, "rail-high (upper rail - %s)",
                                    ls_eng(rp, a, sizeof a, ls_part_opt_in(run, p, "headroom", 0), "V")); break;
    case LS_LIM_RAIL_LOW: snprintf(buf, n, "rail-low (lower rail + %s)",
                                   ls_eng(rp, a, sizeof a, ls_part_opt_in(run, p, "headroom", 0), "V")); break;
    case LS_LIM_CURRENT_SOURCE: snprintf(buf, n, "current (sourcing %s)",
                                         ls_eng(rp, a, sizeof a, ls_part_opt_in(run, p, "imax", 0), "A")); break;
    case LS_LIM_CURRENT_SINK: snprintf(buf, n, "current (sinking %s)",
                                       ls_eng(rp, a, sizeof a, ls_part_opt_in(run, p, "imax", 0), "A")); break;
    default: snprintf(buf, n, "none"); break;
    }
    return buf;
}


/* One ADC's reading: the members of "adcs" in JSON and of its "adc" rows in
 * CSV (which also give the LSB: with_lsb). */
static void adc_members(ls_wr *w, const ls_part *p, const ls_adc_result *r, bool with_lsb)
{
    int mi = ls_kind_opt(p->kind, "max_source");
    ls_wr_num(w, "input", r->vin);
    ls_wr_int(w, "code", r->code);
    if (with_lsb)
        ls_wr_num(w, "lsb", r->lsb);
    ls_wr_num(w, "unloaded", r->v_open);
    ls_wr_num(w, "error_lsb", r->error_lsb);
    ls_wr_num(w, "budget_lsb", r->budget_lsb);
    ls_wr_num(w, "source", r->rth);
    ls_wr_num_why(w, "max_source", ls_part_has(p, mi) ? p->opt[mi] : NAN, LS_WHY_NONE);
    ls_wr_bool(w, "source_too_high", r->source_high);
    ls_wr_str(w, "verdict", verdict_name(r->verdict));
}

/* The verdict cell of an ADC: the verdict and what it judged. */
static const char *adc_verdict(ls_report *rp, const ls_adc_result *r, char *buf, size_t n)
{
    char bl[48];
    ls_fixed(rp, bl, sizeof bl, "%.3g", r->budget_lsb);
    if (r->source_high && fabs(r->error_lsb) > r->budget_lsb)
        snprintf(buf, n, "%s: error over %s LSB, source too high", verdict_name(r->verdict), bl);
    else if (r->source_high)
        snprintf(buf, n, "%s: source too high", verdict_name(r->verdict));
    else if (r->verdict != VERDICT_OK)
        snprintf(buf, n, "%s: error over %s LSB", verdict_name(r->verdict), bl);
    else
        snprintf(buf, n, "ok");
    return buf;
}

/* The ADC inputs: the text's table, JSON's "adcs" object.  The verdict judges
 * the reading's error against budget_lsb (the feeding port's budget, else
 * half an LSB) and the source against max_source (source_too_high). */
static void adcs_write(ls_wr *w, const ls_results *res)
{
    static const ls_wr_col cols[] = {
        {.head = "adc"},    {.head = "input", .right = true},  {.head = "code", .right = true},
        {.head = "unloaded", .right = true}, {.head = "error", .right = true}, {.head = "source", .right = true},
        {.head = "max source", .right = true}, {.head = "verdict"},
    };
    static const ls_wr_style quiet = {.skip_empty = true};
    ls_report *rp = w->rp;
    const ls_netlist *nl = res->op->nl;
    const char *OHM = ls_unit_of(LS_OHM, rp->ascii);
    if (res->nadcs)
        ls_wr_say(w, "\nADC inputs (error: the reading's shift from loading and leakage, judged against the feeding "
                     "port's budget, else half an LSB)\n");
    json_open(w, "adcs", false);
    ls_wr_route(w, LS_WR_JSON);
    ls_wr_table(w, NULL, cols, (int)(sizeof cols / sizeof *cols), &quiet);
    for (int k = 0; k < res->nadcs; k++) {
        const ls_adc_result *r = &res->adcs[k].r;
        const ls_part *p = &nl->parts[res->adcs[k].part];
        int mi = ls_kind_opt(p->kind, "max_source");
        char err[64], e[48], verdict[128];
        snprintf(err, sizeof err, "%s LSB", ls_fixed(rp, e, sizeof e, "%+.3g", r->error_lsb));
        ls_wr_cell_str(w, p->name);
        ls_wr_cell_eng(w, r->vin, "V", NULL);
        ls_wr_cell_int(w, r->code);
        ls_wr_cell_eng(w, r->v_open, "V", NULL);
        ls_wr_cell_str(w, isfinite(r->error_lsb) ? err : "undefined");
        ls_wr_cell_eng(w, r->rth, OHM, NULL);
        if (ls_part_has(p, mi))
            ls_wr_cell_eng(w, p->opt[mi], OHM, NULL);
        else
            ls_wr_cell_str(w, "-");
        ls_wr_cell_str(w, adc_verdict(rp, r, verdict, sizeof verdict));
        ls_wr_obj(w, p->name);
        adc_members(w, p, r, false);
        ls_wr_end(w);
        ls_wr_row(w);
    }
    ls_wr_table_end(w);
    ls_wr_end(w);
    ls_wr_route(w, LS_WR_ALL);
}

/* A thermistor's resistance and temperatures (members of its part). */
static void ntc_members(ls_wr *w, const ls_op *op, const ls_part *p)
{
    double t = ls_ntc_body(p, &op->run);
    ls_wr_num(w, "resistance", ls_ntc_r(p, &op->run, t));
    ls_wr_num(w, "temperature", t);
    ls_wr_num(w, "self_heating", t - ls_part_opt_in(&op->run, p, "celsius", 25));
}

/* The text's thermistor table (JSON and CSV give them with their part). */
static void ntc_text(ls_wr *w, const ls_op *op)
{
    static const ls_wr_col cols[] = {
        {.head = "thermistor"}, {.head = "resistance", .right = true}, {.head = "body", .right = true},
        {.head = "self-heating", .right = true},
    };
    static const ls_wr_style quiet = {.skip_empty = true};
    ls_report *rp = w->rp;
    const ls_netlist *nl = op->nl;
    int n = 0;
    for (int i = 0; i < nl->nparts; i++)
        n += has_body(&nl->parts[i]);
    if (n)
        ls_wr_say(w, "\nThermistors\n");
    ls_wr_table(w, NULL, cols, (int)(sizeof cols / sizeof *cols), &quiet);
    for (int i = 0; n && i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (!has_body(p))
            continue;
        double t_amb = ls_part_opt_in(&op->run, p, "celsius", 25), t_body = ls_ntc_body(p, &op->run);
        char b2[64], b3[64], n1[48], n2[48];
        snprintf(b2, sizeof b2, "%s degC", ls_fixed(rp, n1, sizeof n1, "%.4g", t_body));
        snprintf(b3, sizeof b3, "%s K", ls_fixed(rp, n2, sizeof n2, "%.3g", t_body - t_amb));
        ls_wr_cell_str(w, p->name);
        ls_wr_cell_eng(w, ls_ntc_r(p, &op->run, t_body), ls_unit_of(LS_OHM, rp->ascii), NULL);
        ls_wr_cell_str(w, b2);
        ls_wr_cell_str(w, b3);
        ls_wr_row(w);
    }
    ls_wr_table_end(w);
}

/* ---- solve: text ----------------------------------------------------------------------- */

static const char *method_name(ls_method m)
{
    static const char *const n[] = {"dense-lu", "sparse-lu", "sparse-cholesky", "iterative-amg", "dense-cholesky"};
    assert((int)m >= 0 && (size_t)m < sizeof n / sizeof n[0]);
    return n[m];
}

/* The resistors of port i's advice (results.h) as "r_bot at most 1.2 kΩ"
 * phrases into buf; empty when none can meet it. */
static const char *resistor_advice(ls_report *rp, const ls_results *res, int i, char *buf, size_t n)
{
    const ls_netlist *nl = res->op->nl;
    const ls_port_advice *a = ls_results_advice(res, i);
    buf[0] = 0;
    for (int k = 0; a && k < 2 && a->part[k] >= 0; k++) {
        char v[64];
        size_t l = strlen(buf);
        snprintf(buf + l, n - l, "%s%s at most %s", k ? ", or " : "", nl->parts[a->part[k]].name,
                 ls_eng(rp, v, sizeof v, a->ohm[k], ls_unit_of(LS_OHM, rp->ascii)));
    }
    return buf;
}

/* Advice for a voltage-mode port that misses its budget, in the budget's
 * terms: sag = open zout / (zout + zin) of a loaded divider is within B when
 * zin/zout >= |open|/B - 1, which sets the ratio needed, the largest zout and
 * the smallest zin. */
static void budget_advice(ls_wr *w, const ls_results *res, int i, const ls_port_result *pr)
{
    ls_report *rp = w->rp;
    const ls_op *op = res->op;
    const ls_part *p = &op->nl->parts[i];
    const char *OHM = ls_unit_of(LS_OHM, rp->ascii);
    char sag[64], bud[64], need[64], zmax[64], zmin[64], parts[300], lsb[96] = "";
    ls_eng(rp, sag, sizeof sag, fabs(pr->sag), "V");
    ls_eng(rp, bud, sizeof bud, pr->budget, "V");
    if (pr->adc >= 0) {
        const ls_part *a = &op->nl->parts[pr->adc];
        char nb[48];
        snprintf(lsb, sizeof lsb, " (%s LSB of %s)", ls_fixed(rp, nb, sizeof nb, "%.3g", fabs(pr->sag) / ls_adc_lsb_in(&op->run, a)),
                 a->name);
    }
    ls_wr_say(w, "  -> %s: the sag of %s%s is over its budget of %s (%s).", p->name, sag, lsb, bud,
            ls_budget_source(pr));
    double req = fabs(pr->open) / pr->budget - 1;
    if (!isfinite(req) || !(req > 0) || !isfinite(pr->zin) || !(pr->zout > 0)) {
        ls_wr_say(w, "%s", " A buffer (an op-amp follower) between the stages removes the load from the driver.\n");
        return;
    }
    double zo = pr->zin / req;
    ls_eng(rp, need, sizeof need, req, "");
    ls_eng(rp, zmax, sizeof zmax, zo, OHM);
    ls_eng(rp, zmin, sizeof zmin, pr->zout * req, OHM);
    resistor_advice(rp, res, i, parts, sizeof parts);
    ls_wr_say(w, " To meet it: zin/zout of at least %s, e.g. a buffer (an op-amp follower) between them, "
                     "or a driver with zout at most %s%s%s%s, or a load with zin at least %s.\n",
            need, zmax, parts[0] ? " (" : "", parts, parts[0] ? ")" : "", zmin);
}

/* The numbers of the advice for a port that fails its verdict, as the JSON's
 * "fix" carries them.  By the ratio rule: with a voltage port, the largest
 * driver zout and the smallest load zin that would meet it ("zout_max",
 * "zin_min"); with a current port, the largest load zin and the smallest
 * source zout ("zin_max", "zout_min").  By a budget (voltage ports): the
 * zin/zout the budget needs ("ratio_min"), then "zout_max" and "zin_min" for
 * that ratio.  Returns how many fields were set (0: nothing to say: the port
 * passes, its ratio is undefined or negative, its load is a short to ground,
 * or its budget gives no finite ratio). */
static int fix_limits(const ls_op *op, const ls_port_result *pr, const char *field[3], double v[3])
{
    if (pr->verdict == VERDICT_OK)
        return 0;
    if (pr->by_budget) {
        double req = fabs(pr->open) / pr->budget - 1;
        if (pr->current_mode || !isfinite(pr->sag) || !isfinite(req) || !(req > 0) || !isfinite(pr->zin) ||
            !(pr->zout > 0))
            return 0;
        field[0] = "ratio_min", v[0] = req;
        field[1] = "zout_max", v[1] = pr->zin / req;
        field[2] = "zin_min", v[2] = pr->zout * req;
        return 3;
    }
    double min = ls_op_min_ratio(op);
    /* a negative impedance on either side: no limit on the other meets the rule */
    if (isnan(pr->ratio) || pr->ratio < 0 || (!pr->current_mode && pr->zin == 0))
        return 0;
    field[0] = pr->current_mode ? "zin_max" : "zout_max";
    field[1] = pr->current_mode ? "zout_min" : "zin_min";
    v[0] = pr->current_mode ? pr->zout / min : pr->zin / min;
    v[1] = pr->current_mode ? pr->zin * min : pr->zout * min;
    return 2;
}

/* One line for a port that fails its budget or the ratio: the largest zout or
 * the smallest zin that would meet it, or a buffer. */
static void fix_advice(ls_wr *w, const ls_results *res, int i, const ls_port_result *pr)
{
    ls_report *rp = w->rp;
    const ls_op *op = res->op;
    const ls_part *p = &op->nl->parts[i];
    double min = ls_op_min_ratio(op);
    const char *OHM = ls_unit_of(LS_OHM, rp->ascii);
    char r[64], lo[64], hi[64];
    if (pr->verdict == VERDICT_OK)
        return;
    if (pr->by_budget && !pr->current_mode && isfinite(pr->sag)) {
        budget_advice(w, res, i, pr);
        return;
    }
    if (isnan(pr->ratio)) {
        ls_wr_say(w, "  -> %s: the loading ratio is undefined%s%s.\n", p->name, pr->note ? ": " : "",
                pr->note ? pr->note : "");
        return;
    }
    if (pr->by_budget) {   /* current mode, or an unbounded sag: the ratio still says which side to change */
        char s[64], b[64];
        ls_wr_say(w, "  -> %s: the sag of %s is over its budget of %s (%s).\n", p->name,
                ls_eng(rp, s, sizeof s, fabs(pr->sag), pr->current_mode ? "A" : "V"),
                ls_eng(rp, b, sizeof b, pr->budget, pr->current_mode ? "A" : "V"), ls_budget_source(pr));
        return;
    }
    ls_eng(rp, r, sizeof r, pr->ratio, "");
    const char *ff[3];
    double fv[3];
    bool fix = fix_limits(op, pr, ff, fv) > 0; /* the numbers the JSON's "fix" carries */
    if (pr->current_mode && fix) {
        ls_eng(rp, lo, sizeof lo, fv[0], OHM);
        ls_eng(rp, hi, sizeof hi, fv[1], OHM);
        ls_wr_say(w, "  -> %s: zout/zin = %s is below %g. To meet it: a load (zin) of at most %s, or a source "
                         "(zout) of at least %s.\n",
                p->name, r, min, lo, hi);
        return;
    }
    if (!fix && pr->ratio < 0) {
        bool zout_neg = pr->zout < 0;
        char z[64];
        ls_eng(rp, z, sizeof z, zout_neg ? pr->zout : pr->zin, OHM);
        ls_wr_say(w, "  -> %s: the ratio %s is negative: %s is %s (positive feedback), and no %s meets the %g x "
                     "rule; judge this port by its sag (budget=).\n",
                p->name, r, zout_neg ? "the driver's zout" : "the load's zin", z, zout_neg ? "zin" : "zout", min);
        return;
    }
    if (!fix) {
        ls_wr_say(w, "  -> %s: the load side is a short to ground (zin = 0); no driver can meet the ratio.\n",
                p->name);
        return;
    }
    ls_eng(rp, lo, sizeof lo, fv[0], OHM);
    ls_eng(rp, hi, sizeof hi, fv[1], OHM);
    ls_wr_say(w, "  -> %s: zin/zout = %s is below the %g x rule. To meet it: a driver with zout at most %s, or a load "
                     "with zin at least %s, or a buffer (an op-amp follower) between them.\n",
            p->name, r, min, lo, hi);
}

/* The budget cell of a port: "402.8 µV (½ LSB)", "-" without one. */
static const char *budget_cell(ls_report *rp, const ls_port_result *pr, char *buf, size_t n)
{
    char b[64];
    if (isnan(pr->budget))
        return "-";
    ls_eng(rp, b, sizeof b, pr->budget, pr->current_mode ? "A" : "V");
    const char *src = pr->budget_from == LS_BUDGET_FROM_ADC ? "half LSB"
                    : pr->budget_from == LS_BUDGET_FROM_RULE ? "rule" : "";
    snprintf(buf, n, *src ? "%s (%s)" : "%s", b, src);
    return buf;
}

/* The ports table, the note on held load sides (once) and the advice. */

/* The mark of a number whose error bound says its last printed digit may
 * be wrong ("~", accuracy.h), or NULL.  (Only the text meant for people
 * shows marks: the callers skip them where it is not written.) */
static const char *doubt_mark(const ls_report *rp, double v, double bound, double scale)
{
    return ls_acc_doubtful(v, bound, rp->sig, scale) ? "~" : NULL;
}

/* Does the report have the error bounds?  They fail only for want of memory
 * (results.h), and a report that leaves them out is not the report asked
 * for: rp->nomem says so. */
static bool error_bounds(ls_report *rp, const ls_results *res)
{
    if (res->bounds)
        return true;
    rp->nomem = "the error bounds of the solution";
    rp->nomem_bytes = 0; /* (the bounds do not say what they asked for) */
    return false;
}

/* The accuracy line under the solver line: which refinement ran and whether
 * the printed digits are all within their error bounds. */
static void accuracy_text(ls_wr *w, const ls_op *op, int marked)
{
    const ls_accuracy *a = &op->acc;
    const char *how = !a->refined ? "iterative refinement in double precision (a circuit with nonlinear parts)"
                      : a->extended ? "extra-precise refinement (residuals in double-double), needed here"
                                    : "double precision, confirmed by an extra-precise residual";
    if (!a->have_bounds)
        ls_wr_say(w, "accuracy: %s; no error bounds (out of memory)\n", how);
    else if (!a->reliable)
        ls_wr_say(w, "accuracy: %s; no error bounds: the equations are too ill-conditioned for double "
                         "precision, so every number is marked ~\n", how);
    else if (marked)
        ls_wr_say(w, "accuracy: %s; %d number%s marked ~ may be wrong in %s last printed digit\n", how, marked,
                marked == 1 ? "" : "s", marked == 1 ? "its" : "their");
    else
        ls_wr_say(w, "accuracy: %s; every voltage and current is right to the digits printed%s\n", how,
                a->estimated ? " (by an estimated bound)" : "");
}

/* The title, the solver line, the iteration line and the accuracy line.
 * Returns whether the report has error bounds. */

/* The members of port i: its nodes and mode, its fields (ls_port_fields, the
 * budget last with the reason of its null), how it was judged, the verdict,
 * a note and the numbers of its fix (an object: CSV fields "fix.NAME"). */
static void port_members(ls_wr *w, const ls_op *op, int i)
{
    const ls_netlist *nl = op->nl;
    const ls_part *p = &nl->parts[i];
    const ls_port_result *pr = ls_port_read(op, i);
    ls_wr_str(w, "from", nl->nodes[p->pin[0]].name);
    ls_wr_str(w, "to", nl->nodes[p->pin[1]].name);
    ls_wr_str(w, "mode", pr->current_mode ? "current" : "voltage");
    assert(ls_port_fields[LS_PORT_NFIELDS - 1] == PROP_BUDGET);
    for (int f = 0; f < LS_PORT_NFIELDS - 1; f++)
        ls_wr_num(w, ls_prop_name(ls_port_fields[f]), ls_port_value(pr, ls_port_fields[f]));
    ls_report_budget(w, pr);
    if (pr->load_held)
        ls_wr_bool(w, "load_held", true);
    ls_wr_str(w, "verdict", verdict_name(pr->verdict));
    if (pr->note)
        ls_wr_str(w, "note", pr->note);
    const char *ff[3];
    double fv[3];
    int nf = fix_limits(op, pr, ff, fv);
    if (nf) {
        ls_wr_obj(w, "fix");
        for (int j = 0; j < nf; j++)
            ls_wr_num(w, ff[j], fv[j]);
        ls_wr_end(w);
    }
}

/* One row of the text's ports table. */
static void port_row(ls_wr *w, const ls_op *op, int i)
{
    ls_report *rp = w->rp;
    const ls_netlist *nl = op->nl;
    const ls_part *pt = &nl->parts[i];
    const ls_port_result *pr = ls_port_read(op, i);
    const char *u = pr->current_mode ? "A" : "V", *OHM = ls_unit_of(LS_OHM, rp->ascii);
    char conn[600], sag[96], b3[64], b4[64], bud[96], verdict[48];
    snprintf(conn, sizeof conn, "%s -> %s%s", nl->nodes[pt->pin[0]].name, nl->nodes[pt->pin[1]].name,
             pr->current_mode ? " (current)" : "");
    ls_eng(rp, b3, sizeof b3, pr->sag, u);
    if (isfinite(pr->sag_rel) && pr->sag != 0)
        snprintf(sag, sizeof sag, "%s (%s%%)", b3, ls_fixed(rp, b4, sizeof b4, "%.3g", pr->sag_rel * 100));
    else
        snprintf(sag, sizeof sag, "%s", b3);
    snprintf(verdict, sizeof verdict, "%s (%s)", verdict_name(pr->verdict), pr->by_budget ? "budget" : "ratio");
    ls_wr_cell_str(w, pt->name);
    ls_wr_cell_str(w, conn);
    ls_wr_cell_eng(w, pr->open, u, NULL);
    ls_wr_cell_eng(w, pr->loaded, u, NULL);
    ls_wr_cell_str(w, sag);
    ls_wr_cell_str(w, budget_cell(rp, pr, bud, sizeof bud));
    ls_wr_cell_eng(w, pr->zout, OHM, NULL);
    ls_wr_cell_eng(w, pr->zin, OHM, NULL);
    ls_wr_cell_eng(w, pr->ratio, "", NULL);
    ls_wr_cell_eng(w, pr->current, "A", NULL);
    ls_wr_cell_str(w, verdict);
    ls_wr_row(w);
}

/* The text's note on the ports whose load side was held (held of them). */
static void held_note(ls_wr *w, const ls_op *op, int held)
{
    const ls_netlist *nl = op->nl;
    ls_wr_say(w, "  note: the load side of");
    int k = 0;
    for (int i = 0; i < nl->nparts; i++)
        if (nl->parts[i].kind->is_port && ls_port_read(op, i)->load_held)
            ls_wr_say(w, "%s %s", k++ ? (k == held ? " and" : ",") : "", nl->parts[i].name);
    ls_wr_say(w, " has no DC path of its own once opened (an input that only a controlled source senses); "
                 "it was held at its loaded voltage while open and zout were computed, and zin is unbounded.\n");
}

/* The ports: the text's table, the note on held load sides and the advice;
 * JSON's "ports" object.  (CSV gives each port among the parts.) */
static void ports_write(ls_wr *w, const ls_results *res, int nports)
{
    static const ls_wr_col cols[] = {
        {.head = "port"},       {.head = "driver -> load"}, {.head = "open", .right = true},
        {.head = "loaded", .right = true}, {.head = "sag", .right = true},     {.head = "budget", .right = true},
        {.head = "zout", .right = true}, {.head = "zin", .right = true},         {.head = "ratio", .right = true},
        {.head = "current", .right = true}, {.head = "verdict"},
    };
    static const ls_wr_style quiet = {.skip_empty = true};
    const ls_op *op = res->op;
    const ls_netlist *nl = op->nl;
    if (nports)
        ls_wr_say(w, "\nPorts (verdict: the sag against the port's budget where it has one, else zin/zout of at "
                     "least %g)\n", ls_op_min_ratio(op));
    json_open(w, "ports", false);
    ls_wr_route(w, LS_WR_JSON);
    ls_wr_table(w, NULL, cols, (int)(sizeof cols / sizeof *cols), &quiet);
    int held = 0;
    for (int i = 0; nports && i < nl->nparts; i++) {
        if (!nl->parts[i].kind->is_port)
            continue;
        held += ls_port_read(op, i)->load_held;
        port_row(w, op, i);
        ls_wr_obj(w, nl->parts[i].name);
        port_members(w, op, i);
        ls_wr_end(w);
    }
    ls_wr_table_end(w);
    ls_wr_end(w);
    ls_wr_route(w, LS_WR_ALL);
    if (held)
        held_note(w, op, held);
    for (int i = 0; nports && i < nl->nparts; i++)
        if (nl->parts[i].kind->is_port)
            fix_advice(w, res, i, ls_port_read(op, i));
}

/* The op-amps: the text's table (output voltage and current, dissipation
 * where some op-amp has rails= to reckon it from, the limit in force) and
 * JSON's "opamps" object.  (CSV gives each op-amp among the parts.) */
static void opamps_write(ls_wr *w, const ls_op *op, int nops)
{
    static const ls_wr_col with_rails[] = {
        {.head = "op-amp"},      {.head = "out", .right = true}, {.head = "current", .right = true},
        {.head = "dissipation", .right = true}, {.head = "limit"},
    };
    static const ls_wr_col no_rails[] = {
        {.head = "op-amp"}, {.head = "out", .right = true}, {.head = "current", .right = true},
        {0},     {.head = "limit"},
    };
    static const ls_wr_style quiet = {.skip_empty = true};
    ls_report *rp = w->rp;
    const ls_netlist *nl = op->nl;
    if (nops)
        ls_wr_say(w, "\nOp-amps\n");
    bool rails = false;
    for (int i = 0; nops && i < nl->nparts; i++)
        rails |= isfinite(ls_opamp_dissipation(op, i));
    json_open(w, "opamps", false);
    ls_wr_route(w, LS_WR_JSON);
    ls_wr_table(w, NULL, rails ? with_rails : no_rails, 5, &quiet);
    for (int i = 0; nops && i < nl->nparts; i++) {
        const ls_part *pt = &nl->parts[i];
        if (!pt->kind->is_opamp)
            continue;
        char lim[96];
        double pd = ls_opamp_dissipation(op, i);
        ls_wr_cell_str(w, pt->name);
        ls_wr_cell_eng(w, op->v[pt->pin[2]], "V", NULL);
        ls_wr_cell_eng(w, op->ipart[i], "A", NULL);
        if (isfinite(pd))
            ls_wr_cell_eng(w, pd, "W", NULL);
        else
            ls_wr_cell_str(w, "-");
        ls_wr_cell_str(w, limit_text(rp, &op->run, pt, lim, sizeof lim));
        ls_wr_obj(w, pt->name);
        ls_wr_num(w, "out", op->v[pt->pin[2]]);
        ls_wr_num(w, "current", op->ipart[i]);
        ls_wr_str(w, "limited", ls_opamp_limit_word(pt, &op->run));
        ls_wr_num_why(w, "dissipation", pd, LS_WHY_NONE);   /* null: no rails= to reckon it from */
        ls_wr_end(w);
        ls_wr_row(w);
    }
    ls_wr_table_end(w);
    ls_wr_end(w);
    ls_wr_route(w, LS_WR_ALL);
}

/* A record of the parts' sequence: every part but the ports (ctx: the netlist). */
static bool not_port(const void *ctx, int i)
{
    return !((const ls_netlist *)ctx)->parts[i].kind->is_port;
}

/* JSON's "solver" object, on one line: method, library, size, conditioning
 * or the iteration's reach, residual, iterations and refinement. */
static void solver_members(ls_wr *w, const ls_op *op)
{
    ls_wr_compact(w, true);
    ls_wr_obj(w, "solver");
    ls_wr_str(w, "method", method_name(op->method));
    ls_wr_str(w, "library", ls_solver_stats_of(op->solver)->library);
    ls_wr_int(w, "unknowns", op->mna.n);
    if (op->method == LS_METHOD_ITERATIVE_AMG) {
        /* no condition estimate: what the iteration reached stands for it */
        ls_wr_null(w, "rcond", LS_WHY_UNDEFINED);
        ls_wr_int(w, "cg_iterations", op->cg_iterations);
        ls_wr_num(w, "cg_residual", op->cg_residual);
    } else {
        ls_wr_num(w, "rcond", op->rcond);
    }
    ls_wr_num(w, "residual", op->residual);
    ls_wr_int(w, "iterations", op->iterations);
    ls_wr_str(w, "refinement", !op->acc.refined ? "double" : op->acc.extended ? "extended" : "double-confirmed");
    ls_wr_int(w, "refinement_steps", op->acc.steps);
    ls_wr_end(w);
    ls_wr_compact(w, false);
}

/* JSON's "accuracy" object: how the error bounds were found, the bound of
 * every node voltage (V; null, unbounded, when no first-order bound holds),
 * and the worst node and part against their own values. */
static void accuracy_members(ls_wr *w, const ls_op *op)
{
    const ls_netlist *nl = op->nl;
    const ls_accuracy *a = &op->acc;
    ls_wr_obj(w, "accuracy");
    ls_wr_str(w, "bounds", !a->reliable ? "none" : a->estimated ? "estimate" : a->per_node ? "per-node" : "per-result");
    ls_wr_compact(w, true);
    ls_wr_obj(w, "nodes");
    if (a->reliable)
        ls_wr_ahead(w, &(ls_ahead_seq){.nrec = nl->nnodes, .field = {a->node_bound}});
    for (int i = 0; i < nl->nnodes; i++)
        ls_wr_num_why(w, nl->nodes[i].name, a->reliable ? a->node_bound[i] : INFINITY, LS_WHY_UNBOUNDED);
    ls_wr_ahead_end(w);
    ls_wr_end(w);
    ls_wr_compact(w, false);
    if (a->worst_node >= 0) {
        ls_wr_str(w, "worst_node", nl->nodes[a->worst_node].name);
        ls_wr_num(w, "worst_node_rel", a->worst_node_rel);
    }
    if (a->worst_part >= 0) {
        ls_wr_str(w, "worst_part", nl->parts[a->worst_part].name);
        ls_wr_num(w, "worst_part_rel", a->worst_part_rel);
    }
    ls_wr_end(w);
}

/* How many numbers the error bounds doubt in their last printed digit. */
static int doubtful_count(const ls_report *rp, const ls_op *op)
{
    const ls_netlist *nl = op->nl;
    const ls_accuracy *acc = &op->acc;
    double vscale = ls_acc_scale(op, 0), iscale = ls_acc_scale(op, 1);
    int marked = 0;
    for (int i = 0; i < nl->nnodes; i++)
        marked += ls_acc_doubtful(op->v[i], acc->node_bound[i], rp->sig, vscale);
    for (int i = 0; i < nl->nparts; i++)
        marked += !nl->parts[i].kind->is_port && ls_acc_doubtful(op->ipart[i], acc->part_bound[i], rp->sig, iscale);
    return marked;
}

/* The head: the title, the solver (a line in text, an object in JSON), the
 * iteration line and the accuracy line.  Returns whether the report has
 * error bounds (the formats that show them, ls_report_needs). */
static bool solve_head(ls_wr *w, const ls_results *res)
{
    ls_report *rp = w->rp;
    const ls_op *op = res->op;
    const ls_netlist *nl = op->nl;
    ls_wr_route(w, LS_WR_JSON);
    ls_wr_str(w, "title", nl->title);
    solver_members(w, op);
    ls_wr_route(w, LS_WR_ALL);
    ls_wr_say(w, "%s\n", nl->title ? nl->title : "(untitled circuit)");
    if (op->method == LS_METHOD_ITERATIVE_AMG)
        ls_wr_say(w, "solved: %d unknowns by %s (%s), %ld conjugate-gradient iterations to a true relative residual "
                     "of %.2g, relative residual %.2g\n", op->mna.n, method_name(op->method),
                  ls_solver_stats_of(op->solver)->library, op->cg_iterations, op->cg_residual, op->residual);
    else
        ls_wr_say(w, "solved: %d unknowns by %s (%s), reciprocal condition %.2g, relative residual %.2g\n", op->mna.n,
                  method_name(op->method), ls_solver_stats_of(op->solver)->library, op->rcond, op->residual);
    if (op->iterations > 1)
        ls_wr_say(w, "iterated: %d solves until every diode, thermistor and op-amp limit settled\n", op->iterations);
    bool bounds = (ls_report_needs(rp) & LS_NEED_BOUNDS) && error_bounds(rp, res);
    /* marks need the bounds; count them first so the accuracy line can say how
     * many (a line of the text report only: the other formats skip the count,
     * a pass over every node and part) */
    accuracy_text(w, op, bounds && ls_wr_shows_text(w) ? doubtful_count(rp, op) : 0);
    return bounds;
}

/* The node voltages: the text's table (~ where the bounds doubt the last
 * digit; the touch-safety caution column when some node is above it), JSON's
 * "nodes" object of NAME: volts, CSV's node rows. */
static void nodes_write(ls_wr *w, const ls_op *op, bool bounds)
{
    static const ls_wr_col cols[] = {{.head = "node"}, {.head = "voltage", .right = true}, {.head = "caution"}};
    const ls_netlist *nl = op->nl;
    const ls_accuracy *acc = &op->acc;
    bool marks = bounds && ls_wr_shows_text(w);   /* (the marks alone need the scale) */
    double vscale = marks ? ls_acc_scale(op, 0) : 0;
    bool hazard = false;
    for (int i = 0; i < nl->nnodes; i++)
        hazard |= fabs(op->v[i]) > LS_TOUCH_SAFE_DC;
    ls_wr_say(w, "\nNodes\n");
    ls_wr_table(w, NULL, cols, hazard ? 3 : 2, NULL);
    json_open(w, "nodes", false);
    ls_wr_ahead(w, &(ls_ahead_seq){.nrec = nl->nnodes, .field = {op->v}});
    for (int i = 0; i < nl->nnodes; i++) {
        prefetch_node_name(nl, i);
        double v = op->v[i];
        ls_wr_cell_str(w, nl->nodes[i].name);
        ls_wr_cell_eng(w, v, "V", marks ? doubt_mark(w->rp, v, acc->node_bound[i], vscale) : NULL);
        ls_wr_cell_str(w, fabs(v) > LS_TOUCH_SAFE_DC ? "above 60 V DC: not touch-safe" : "");
        ls_wr_row(w);
        ls_wr_route(w, LS_WR_JSON);
        ls_wr_num(w, nl->nodes[i].name, v);
        ls_wr_route(w, LS_WR_CSV);
        ls_wr_keys(w, "node", nl->nodes[i].name);
        ls_wr_num(w, "voltage", v);
        ls_wr_route(w, LS_WR_ALL);
    }
    ls_wr_ahead_end(w);
    ls_wr_end(w);
    ls_wr_table_end(w);
}

/* The members of part i that only some kinds have: JSON's error bound, an
 * op-amp's rows and an ADC's reading (each its own section in CSV, inside
 * the part in JSON), a thermistor's temperatures. */
static void part_extras(ls_wr *w, const ls_results *res, int i, bool bounds)
{
    const ls_op *op = res->op;
    const ls_part *p = &op->nl->parts[i];
    const ls_adc_result *ar = ls_results_adc(res, i);
    ls_wr_route(w, LS_WR_JSON);
    if (bounds && !isnan(op->acc.part_bound[i]))
        ls_wr_num_why(w, "error_bound", op->acc.part_bound[i], LS_WHY_UNBOUNDED);
    if (ar) {
        ls_wr_int(w, "code", ar->code);
        ls_wr_num(w, "lsb", ar->lsb);
        ls_wr_num(w, "unloaded", ar->v_open);
        ls_wr_num(w, "error_lsb", ar->error_lsb);
        ls_wr_num(w, "source_resistance", ar->rth);
    }
    ls_wr_route(w, LS_WR_CSV);
    if (p->kind->is_opamp) {
        ls_wr_keys(w, "opamp", p->name);
        ls_wr_num(w, "out", op->v[p->pin[2]]);
        ls_wr_str(w, "limited", ls_opamp_limit_word(p, &op->run));
        ls_wr_num(w, "dissipation", ls_opamp_dissipation(op, i));
    }
    if (ar) {
        ls_wr_keys(w, "adc", p->name);
        adc_members(w, p, ar, true);
    }
    ls_wr_route(w, LS_WR_ALL);
    if (!ar && has_body(p))
        ntc_members(w, op, p);
}

/* The parts but the ports: the text's table (current, ~ where doubtful,
 * voltage, power), JSON's "parts" object; CSV's part rows, among which each
 * port's and op-amp's and ADC's rows. */
static void parts_write(ls_wr *w, const ls_results *res, bool bounds, int nparts)
{
    static const ls_wr_col cols[] = {
        {.head = "part"},           {.head = "kind"},         {.head = "current", .right = true},
        {.head = "voltage", .right = true},  {.head = "power", .right = true},
    };
    static const ls_wr_style quiet = {.skip_empty = true};
    const ls_op *op = res->op;
    const ls_netlist *nl = op->nl;
    bool marks = bounds && ls_wr_shows_text(w);   /* (the marks alone need the scale) */
    double iscale = marks ? ls_acc_scale(op, 1) : 0;
    if (nparts)
        ls_wr_say(w, "\nParts\n");
    ls_wr_table(w, NULL, cols, (int)(sizeof cols / sizeof *cols), &quiet);
    json_open(w, "parts", false);
    /* the JSON members' numbers in their order: current, voltage, power,
     * error bound (part_extras) of each part but the ports */
    ls_wr_ahead(w, &(ls_ahead_seq){.nrec = nl->nparts,
                                    .field = {op->ipart, op->vpart, op->ppart, bounds ? op->acc.part_bound : NULL},
                                    .want = not_port, .ctx = nl});
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        prefetch_part_name(nl, i);
        if (p->kind->is_port) {
            ls_wr_route(w, LS_WR_CSV);
            ls_wr_keys(w, "port", p->name);
            port_members(w, op, i);
            ls_wr_route(w, LS_WR_ALL);
            continue;
        }
        ls_wr_cell_str(w, p->name);
        ls_wr_cell_str(w, p->kind->name);
        ls_wr_cell_eng(w, op->ipart[i], "A", marks ? doubt_mark(w->rp, op->ipart[i], op->acc.part_bound[i], iscale) : NULL);
        ls_wr_cell_eng(w, op->vpart[i], "V", NULL);
        ls_wr_cell_eng(w, op->ppart[i], "W", NULL);
        ls_wr_row(w);
        json_open(w, p->name, false);
        ls_wr_keys(w, "part", p->name);
        ls_wr_str(w, "kind", p->kind->name);
        ls_wr_num(w, "current", op->ipart[i]);
        ls_wr_num(w, "voltage", op->vpart[i]);
        ls_wr_num(w, "power", op->ppart[i]);
        part_extras(w, res, i, bounds);
        ls_wr_end(w);
    }
    ls_wr_ahead_end(w);
    ls_wr_end(w);
    ls_wr_table_end(w);
}

/* The operating-point report, one description for every format. */
static void solve_write(ls_wr *w, const ls_results *res, const ls_checks *checks)
{
    const ls_op *op = res->op;
    const ls_netlist *nl = op->nl;
    ls_wr_fields_keyed(w, "section", "name", "field", "value");
    bool bounds = solve_head(w, res);
    ls_wr_route(w, LS_WR_CSV);
    ls_wr_keys(w, "rule", "ratio");
    ls_wr_num(w, "min", ls_op_min_ratio(op));
    ls_wr_route(w, LS_WR_ALL);
    nodes_write(w, op, bounds);
    int nparts = 0, nports = 0, nops = 0;
    for (int i = 0; i < nl->nparts; i++) {
        nports += nl->parts[i].kind->is_port;
        nops += nl->parts[i].kind->is_opamp;
        nparts += !nl->parts[i].kind->is_port;
    }
    parts_write(w, res, bounds, nparts);
    ls_wr_route(w, LS_WR_JSON);
    ls_wr_num(w, "min_ratio", ls_op_min_ratio(op));
    ls_wr_route(w, LS_WR_ALL);
    ports_write(w, res, nports);
    opamps_write(w, op, nops);
    adcs_write(w, res);
    ntc_text(w, op);
    checks_write(w, checks, solve_check_cols);
    if (bounds) {
        ls_wr_route(w, LS_WR_JSON);
        accuracy_members(w, op);
        ls_wr_route(w, LS_WR_ALL);
    }
    warnings_text(w);
    ls_report_warnings(w);
}

unsigned ls_report_needs(const ls_report *rp)
{
    static const unsigned needs[] = {
        [FMT_TEXT] = LS_NEED_PORTS | LS_NEED_BOUNDS | LS_NEED_ADCS | LS_NEED_ADVICE,
        [FMT_JSON] = LS_NEED_PORTS | LS_NEED_BOUNDS | LS_NEED_ADCS,
        [FMT_CSV] = LS_NEED_PORTS | LS_NEED_ADCS,
        [FMT_HTML] = 0,   /* the page (html.c) reads the session itself */
    };
    assert((size_t)rp->fmt < sizeof needs / sizeof *needs);
    return needs[rp->fmt];
}

void ls_report_solve(ls_report *rp, const ls_results *res, const ls_checks *checks)
{
    ls_wr w;
    ls_wr_begin(&w, rp);
    solve_write(&w, res, checks);
    ls_wr_finish(&w);
}


/* Is warning g one that --fail-on fails on? */
static bool failing_warning(const ls_report *rp, const ls_diag *g)
{
    for (int k = 0; g->sev == LS_SEV_WARNING && g->code && k < rp->nfailed_warnings; k++)
        if (strcmp(rp->failed_warnings[k], g->code) == 0)
            return true;
    return false;
}

/* check, text: each warning that --fail-on fails on, as a failed line; CSV:
 * as a row of the checks table that did not pass. */
static void failed_warnings(ls_wr *w)
{
    static const ls_wr_col cols[] = {
        {.csv = "file"}, {.csv = "line"},  {.csv = "instance"},
        {.csv = "text"}, {.csv = "value"}, {.csv = "result"},
    };
    static const ls_wr_style more = {.csv_more = true};
    const ls_diags *d = w->rp->diags;
    int k = 0;
    ls_wr_table(w, NULL, cols, (int)(sizeof cols / sizeof *cols), &more);
    for (int i = 0; i < d->n; i++) {
        const ls_diag *g = &d->items[i];
        if (!failing_warning(w->rp, g))
            continue;
        if (!k++)
            ls_wr_say(w, "\nWarnings that fail the check (--fail-on)\n");
        char where[600], text[1200], line[16] = "";
        ls_loc_str(d, g->loc, where, sizeof where);
        ls_wr_say(w, "  FAIL    %s  %s%s%s\n", g->code, where, where[0] ? ": " : "", g->msg);
        snprintf(text, sizeof text, "warning %s: %s", g->code, g->msg);
        if (g->loc.file >= 0)
            snprintf(line, sizeof line, "%d", loc_line(d, g->loc));
        ls_wr_cell_str(w, g->loc.file >= 0 ? loc_file(d, g->loc) : "");
        ls_wr_cell_str(w, line);
        ls_wr_cell_str(w, "");
        ls_wr_cell_str(w, text);
        ls_wr_cell_str(w, "");
        ls_wr_cell_str(w, "false");
        ls_wr_row(w);
    }
    ls_wr_table_end(w);
}

/* check, text: the last line, what failed. */
static void check_summary(ls_wr *w, const ls_checks *checks)
{
    ls_report *rp = w->rp;
    if (!rp->nfailed_warnings) {
        ls_wr_say(w, "\n%s: %d passed, %d failed\n", checks->failed ? "FAILED" : "all checks pass", checks->passed,
                  checks->failed);
        return;
    }
    ls_wr_say(w, "\nFAILED: %d passed, %d failed; warnings named by --fail-on:", checks->passed, checks->failed);
    for (int i = 0; i < rp->nfailed_warnings; i++)
        ls_wr_say(w, "%s %s", i ? "," : "", rp->failed_warnings[i]);
    ls_wr_say(w, "\n");
}

void ls_report_check(ls_report *rp, const ls_checks *checks)
{
    ls_wr w;
    ls_wr_begin(&w, rp);
    if (!checks->n)
        ls_wr_say(&w, "no checks in this circuit (add 'expect' lines or a 'rule')\n");
    checks_write(&w, checks, check_cols);
    ls_wr_arr(&w, "failed_warnings");
    for (int i = 0; i < rp->nfailed_warnings; i++)
        ls_wr_str(&w, NULL, rp->failed_warnings[i]);
    ls_wr_end(&w);
    failed_warnings(&w);
    check_summary(&w, checks);
    ls_report_warnings(&w);
    ls_wr_finish(&w);
}

