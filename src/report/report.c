/* report.c — the operating-point and check reports in text, JSON and CSV. */
#include "report/report.h"
#include "report/textbuf.h"

#include <assert.h>
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

#include "netlist/elab.h"
#include "base/fmt.h"
#include "analysis/newton.h"
#include "base/numfmt.h"

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

/* ---- shared pieces ------------------------------------------------------------------ */

void ls_report_json_begin(const ls_report *rp, ls_jw *w)
{
    ls_jw_init(w, rp->out, 2);
    ls_jw_obj(w, NULL);
    ls_jw_meta(w, rp->command, rp->file, rp->sets, rp->nsets);
}

int ls_report_json_end(ls_report *rp, ls_jw *w)
{
    if (ls_jw_finish(w) == 0)
        return 0;
    rp->nomem = "the reasons of the JSON report's null fields";
    rp->nomem_bytes = w->failed_bytes;
    return -1;
}

void ls_report_budget_json(ls_jw *w, const ls_port_result *pr)
{
    ls_jw_num_why(w, ls_prop_name(PROP_BUDGET), pr->budget, isnan(pr->budget) ? LS_WHY_NONE : ls_jw_why_of(pr->budget));
    ls_jw_str(w, "by", pr->by_budget ? "budget" : "ratio");
}

void ls_csv_number(FILE *out, double v)
{
    char b[LS_NUM_MAX];
    fputs(ls_fmt_csv(b, sizeof b, v), out);
}

void ls_csv_field(FILE *out, const char *s)
{
    if (strpbrk(s, ",\"\n\r")) {
        fputc('"', out);
        for (; *s; s++) {
            if (*s == '"')
                fputc('"', out);
            fputc(*s, out);
        }
        fputc('"', out);
    } else {
        fputs(s, out);
    }
}

const char *ls_eng(const ls_report *rp, char *buf, size_t n, double v, const char *unit)
{
    return ls_fmt_eng(buf, n, v, unit, rp->sig, rp->ascii);
}

const char *ls_fixed(const ls_report *rp, char *buf, size_t n, const char *fmt, double v)
{
    if (!rp->sig_given || v == 0 || !isfinite(v) || fmt[0] != '%') {
        snprintf(buf, n, fmt, v);
        return buf;
    }
    /* fmt's flags and width ("%+", "%12"), then '#' (keep trailing zeros) and
     * the digits asked for */
    char f[32] = "%#";
    size_t k = 2;
    const char *c = fmt + 1;
    for (; *c && strchr("+- 0#", *c) && k + 8 < sizeof f; c++)
        f[k++] = *c;
    for (; *c >= '0' && *c <= '9' && k + 8 < sizeof f; c++)
        f[k++] = *c;
    memcpy(f + k, ".*g", 4);
    int len = snprintf(buf, n, f, rp->sig, v);
    /* '#' leaves a bare point after a whole number ("12345679."): drop it */
    if (len > 0 && (size_t)len < n) {
        char *dot = strchr(buf, '.');
        if (dot && (dot[1] == '\0' || dot[1] == 'e' || dot[1] == ' '))
            memmove(dot, dot + 1, strlen(dot));
    }
    return buf;
}

const char *ls_unit_of(ls_dims d, bool ascii)
{
    const char *u = ls_dims_symbol(d);
    if (!u)
        return "";
    if (ascii && strcmp(u, "\xCE\xA9") == 0)
        return "ohm";
    return u;
}

/* ---- checks ------------------------------------------------------------------------- */

static const char *verdict_name(ls_verdict v)
{
    static const char *const n[] = {"ok", "marginal", "loading"};
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

/* The "checks" array. */
static void checks_json(const ls_report *rp, ls_jw *w, const ls_checks *c)
{
    ls_jw_arr(w, "checks");
    for (int i = 0; i < c->n; i++) {
        const ls_check_row *r = &c->rows[i];
        ls_jw_obj(w, NULL);
        ls_jw_str(w, "file", r->loc.file >= 0 ? loc_file(rp->diags, r->loc) : NULL);
        ls_jw_int(w, "line", loc_line(rp->diags, r->loc));
        ls_jw_str(w, "instance", r->instance);
        ls_jw_str(w, "text", r->text);
        ls_jw_num(w, "value", r->r.value);
        ls_jw_bool(w, "pass", r->r.pass);
        if (r->r.reason)
            ls_jw_str(w, "reason", r->r.reason);
        ls_jw_end(w);
    }
    ls_jw_end(w);
}

static void checks_text(ls_report *rp, const ls_checks *c)
{
    FILE *o = rp->out;
    if (!c->n)
        return;
    fprintf(o, "\nChecks (%d passed, %d failed)\n", c->passed, c->failed);
    ls_table t = {.ncol = 4, .head = {"result", "check", "value", "where"}};
    for (int i = 0; i < c->n; i++) {
        const ls_check_row *r = &c->rows[i];
        char val[64], where[600], text[600];
        ls_eng(rp, val, sizeof val, r->r.value, ls_unit_of(r->dims, rp->ascii));
        ls_loc_str(rp->diags, r->loc, where, sizeof where);
        if (r->instance && r->port < 0)
            snprintf(text, sizeof text, "%s  [in %s]", r->text, r->instance);
        else
            snprintf(text, sizeof text, "%s", r->text);
        const char *cells[4] = {r->r.pass ? "pass" : "FAIL", text, val, where};
        ls_t_row(&t, cells);
    }
    ls_t_print(&t, rp->out, &rp->nomem, &rp->nomem_bytes);
    for (int i = 0; i < c->n; i++)
        if (c->rows[i].r.reason)
            fprintf(o, "  note: %s: %s\n", c->rows[i].text, c->rows[i].r.reason);
}

/* ---- warnings ----------------------------------------------------------------------- */

/* "caution" for a warning about a hazard to people (its message says so),
 * "warning" for the rest. */
static const char *warning_level(const ls_diag *g)
{
    return strncmp(g->msg, "caution", 7) == 0 ? "caution" : "warning";
}

void ls_report_warnings_json(const ls_report *rp, ls_jw *w)
{
    const ls_diags *d = rp->diags;
    ls_jw_arr(w, "warnings");
    for (int i = 0; d && i < d->n; i++) {
        const ls_diag *g = &d->items[i];
        if (g->sev != LS_SEV_WARNING)
            continue;
        int line, col;
        loc_linecol(d, g->loc, &line, &col);
        ls_jw_obj(w, NULL);
        ls_jw_str(w, "code", g->code ? g->code : "warning");
        ls_jw_str(w, "level", warning_level(g));
        ls_jw_str(w, "message", g->msg);
        ls_jw_str(w, "file", g->loc.file >= 0 ? loc_file(d, g->loc) : NULL);
        if (g->loc.file >= 0) {
            ls_jw_int(w, "line", line);
            ls_jw_int(w, "column", col);
        } else {
            ls_jw_null(w, "line", LS_WHY_NONE);
            ls_jw_null(w, "column", LS_WHY_NONE);
        }
        ls_jw_end(w);
    }
    ls_jw_end(w);
}

void ls_report_warnings_csv(const ls_report *rp, FILE *out)
{
    const ls_diags *d = rp->diags;
    int k = 0;
    for (int i = 0; d && i < d->n; i++) {
        const ls_diag *g = &d->items[i];
        if (g->sev != LS_SEV_WARNING)
            continue;
        int line, col;
        loc_linecol(d, g->loc, &line, &col);
        k++;
        fprintf(out, "warning,%d,code,", k);
        ls_csv_field(out, g->code ? g->code : "warning");
        fprintf(out, "\nwarning,%d,level,%s\nwarning,%d,message,", k, warning_level(g), k);
        ls_csv_field(out, g->msg);
        fprintf(out, "\nwarning,%d,file,", k);
        ls_csv_field(out, g->loc.file >= 0 ? loc_file(d, g->loc) : "");
        if (g->loc.file >= 0)
            fprintf(out, "\nwarning,%d,line,%d\nwarning,%d,column,%d\n", k, line, k, col);
        else
            fprintf(out, "\nwarning,%d,line,\nwarning,%d,column,\n", k, k);
    }
}

static void warnings_text(ls_report *rp)
{
    const ls_diags *d = rp->diags;
    int k = 0;
    for (int i = 0; i < d->n; i++) {
        const ls_diag *g = &d->items[i];
        if (g->sev != LS_SEV_WARNING)
            continue;
        if (!k++)
            fputs("\nWarnings\n", rp->out);
        char where[600];
        ls_loc_str(d, g->loc, where, sizeof where);
        fprintf(rp->out, "  %s%s%s [%s]\n", where, where[0] ? ": " : "", g->msg, g->code ? g->code : "warning");
    }
}

/* ---- real parts: limits, ADC inputs, thermistors ----------------------------------------- */

static bool is_kind(const ls_part *p, const char *k)
{
    return strcmp(p->kind->name, k) == 0;
}

/* The text column: which limit holds the output, with its value. */
static const char *limit_text(ls_report *rp, const ls_part *p, char *buf, size_t n)
{
    char a[64];
    switch (p->run->state) {
    case LS_LIM_RAIL_HIGH: snprintf(buf, n, "rail-high (upper rail - %s)",
                                    ls_eng(rp, a, sizeof a, ls_part_opt(p, "headroom", 0), "V")); break;
    case LS_LIM_RAIL_LOW: snprintf(buf, n, "rail-low (lower rail + %s)",
                                   ls_eng(rp, a, sizeof a, ls_part_opt(p, "headroom", 0), "V")); break;
    case LS_LIM_CURRENT_SOURCE: snprintf(buf, n, "current (sourcing %s)",
                                         ls_eng(rp, a, sizeof a, ls_part_opt(p, "imax", 0), "A")); break;
    case LS_LIM_CURRENT_SINK: snprintf(buf, n, "current (sinking %s)",
                                       ls_eng(rp, a, sizeof a, ls_part_opt(p, "imax", 0), "A")); break;
    default: snprintf(buf, n, "none"); break;
    }
    return buf;
}

static void adc_text(ls_report *rp, const ls_results *res)
{
    const ls_op *op = res->op;
    const ls_netlist *nl = op->nl;
    FILE *o = rp->out;
    const char *OHM = ls_unit_of(LS_OHM, rp->ascii);
    ls_table t = {.ncol = 8, .head = {"adc", "input", "code", "unloaded", "error", "source", "max source", "verdict"},
               .right = {false, true, true, true, true, true, true, false}};
    for (int k = 0; k < res->nadcs; k++) {
        const ls_adc_result r = res->adcs[k].r;
        const ls_part *p = &nl->parts[res->adcs[k].part];
        char b1[64], b2[64], b3[64], b4[64], b5[64], b6[64];
        int mi = ls_kind_opt(p->kind, "max_source");
        bool has_max = ls_part_has(p, mi);
        char verdict[128], e[48], bl[48];
        snprintf(b2, sizeof b2, "%lld", r.code);
        snprintf(b4, sizeof b4, "%s LSB", ls_fixed(rp, e, sizeof e, "%+.3g", r.error_lsb));
        ls_fixed(rp, bl, sizeof bl, "%.3g", r.budget_lsb);
        if (r.source_high && fabs(r.error_lsb) > r.budget_lsb)
            snprintf(verdict, sizeof verdict, "%s: error over %s LSB, source too high", verdict_name(r.verdict), bl);
        else if (r.source_high)
            snprintf(verdict, sizeof verdict, "%s: source too high", verdict_name(r.verdict));
        else if (r.verdict != VERDICT_OK)
            snprintf(verdict, sizeof verdict, "%s: error over %s LSB", verdict_name(r.verdict), bl);
        else
            snprintf(verdict, sizeof verdict, "ok");
        const char *c[8] = {p->name, ls_eng(rp, b1, sizeof b1, r.vin, "V"), b2,
                            ls_eng(rp, b3, sizeof b3, r.v_open, "V"), isfinite(r.error_lsb) ? b4 : "undefined",
                            ls_eng(rp, b5, sizeof b5, r.rth, OHM),
                            has_max ? ls_eng(rp, b6, sizeof b6, p->opt[mi], OHM) : "-", verdict};
        if (!t.rows)
            fputs("\nADC inputs (error: the reading's shift from loading and leakage, judged against the feeding "
                  "port's budget, else half an LSB)\n", o);
        ls_t_row(&t, c);
    }
    if (t.rows)
        ls_t_print(&t, rp->out, &rp->nomem, &rp->nomem_bytes);
}

static void ntc_text(ls_report *rp, const ls_op *op)
{
    const ls_netlist *nl = op->nl;
    FILE *o = rp->out;
    ls_table t = {.ncol = 4, .head = {"thermistor", "resistance", "body", "self-heating"},
               .right = {false, true, true, true}};
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (!is_kind(p, "ntc"))
            continue;
        double t_amb = ls_part_opt(p, "celsius", 25), t_body = ls_ntc_body(p);
        char b1[64], b2[64], b3[64], n1[48], n2[48];
        snprintf(b2, sizeof b2, "%s degC", ls_fixed(rp, n1, sizeof n1, "%.4g", t_body));
        snprintf(b3, sizeof b3, "%s K", ls_fixed(rp, n2, sizeof n2, "%.3g", t_body - t_amb));
        const char *c[4] = {p->name, ls_eng(rp, b1, sizeof b1, ls_ntc_r(p, t_body), ls_unit_of(LS_OHM, rp->ascii)),
                            b2, b3};
        if (!t.rows)
            fputs("\nThermistors\n", o);
        ls_t_row(&t, c);
    }
    if (t.rows)
        ls_t_print(&t, rp->out, &rp->nomem, &rp->nomem_bytes);
}

/* Extra JSON keys of the real parts' entries in "parts": an adc's reading,
 * a thermistor's resistance and temperatures. */
static void part_extra_json(ls_jw *w, const ls_results *res, int i)
{
    const ls_op *op = res->op;
    const ls_part *p = &op->nl->parts[i];
    const ls_adc_result *r = ls_results_adc(res, i);
    if (r) {
        ls_jw_int(w, "code", r->code);
        ls_jw_num(w, "lsb", r->lsb);
        ls_jw_num(w, "unloaded", r->v_open);
        ls_jw_num(w, "error_lsb", r->error_lsb);
        ls_jw_num(w, "source_resistance", r->rth);
    } else if (is_kind(p, "ntc")) {
        double t = ls_ntc_body(p);
        ls_jw_num(w, "resistance", ls_ntc_r(p, t));
        ls_jw_num(w, "temperature", t);
        ls_jw_num(w, "self_heating", t - ls_part_opt(p, "celsius", 25));
    }
}

/* The "adcs" object: what the text's ADC table shows.  The verdict judges the
 * reading's error against budget_lsb (the feeding port's budget, else half an
 * LSB) and the source against max_source (source_too_high). */
static void adcs_json(ls_jw *w, const ls_results *res)
{
    const ls_op *op = res->op;
    const ls_netlist *nl = op->nl;
    ls_jw_obj(w, "adcs");
    for (int k = 0; k < res->nadcs; k++) {
        const ls_adc_result r = res->adcs[k].r;
        const ls_part *p = &nl->parts[res->adcs[k].part];
        int mi = ls_kind_opt(p->kind, "max_source");
        ls_jw_obj(w, p->name);
        ls_jw_num(w, "input", r.vin);
        ls_jw_int(w, "code", r.code);
        ls_jw_num(w, "unloaded", r.v_open);
        ls_jw_num(w, "error_lsb", r.error_lsb);
        ls_jw_num(w, "budget_lsb", r.budget_lsb);
        ls_jw_num(w, "source", r.rth);
        if (ls_part_has(p, mi))
            ls_jw_num(w, "max_source", p->opt[mi]);
        else
            ls_jw_null(w, "max_source", LS_WHY_NONE);
        ls_jw_bool(w, "source_too_high", r.source_high);
        ls_jw_str(w, "verdict", verdict_name(r.verdict));
        ls_jw_end(w);
    }
    ls_jw_end(w);
}

/* ---- solve: text ----------------------------------------------------------------------- */

static const char *method_name(ls_method m)
{
    static const char *const n[] = {"dense-lu", "sparse-lu", "sparse-cholesky", "iterative-amg"};
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
static void budget_advice(ls_report *rp, const ls_results *res, int i, const ls_port_result *pr)
{
    const ls_op *op = res->op;
    const ls_part *p = &op->nl->parts[i];
    const char *OHM = ls_unit_of(LS_OHM, rp->ascii);
    char sag[64], bud[64], need[64], zmax[64], zmin[64], parts[300], lsb[96] = "";
    ls_eng(rp, sag, sizeof sag, fabs(pr->sag), "V");
    ls_eng(rp, bud, sizeof bud, pr->budget, "V");
    if (pr->adc >= 0) {
        const ls_part *a = &op->nl->parts[pr->adc];
        char nb[48];
        snprintf(lsb, sizeof lsb, " (%s LSB of %s)", ls_fixed(rp, nb, sizeof nb, "%.3g", fabs(pr->sag) / ls_adc_lsb(a)),
                 a->name);
    }
    fprintf(rp->out, "  -> %s: the sag of %s%s is over its budget of %s (%s).", p->name, sag, lsb, bud,
            ls_budget_source(pr));
    double req = fabs(pr->open) / pr->budget - 1;
    if (!isfinite(req) || !(req > 0) || !isfinite(pr->zin) || !(pr->zout > 0)) {
        fputs(" A buffer (an op-amp follower) between the stages removes the load from the driver.\n", rp->out);
        return;
    }
    double zo = pr->zin / req;
    ls_eng(rp, need, sizeof need, req, "");
    ls_eng(rp, zmax, sizeof zmax, zo, OHM);
    ls_eng(rp, zmin, sizeof zmin, pr->zout * req, OHM);
    resistor_advice(rp, res, i, parts, sizeof parts);
    fprintf(rp->out, " To meet it: zin/zout of at least %s, e.g. a buffer (an op-amp follower) between them, "
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
 * passes, its ratio is undefined, its load is a short to ground, or its budget
 * gives no finite ratio). */
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
    if (isnan(pr->ratio) || (!pr->current_mode && pr->zin == 0))
        return 0;
    field[0] = pr->current_mode ? "zin_max" : "zout_max";
    field[1] = pr->current_mode ? "zout_min" : "zin_min";
    v[0] = pr->current_mode ? pr->zout / min : pr->zin / min;
    v[1] = pr->current_mode ? pr->zin * min : pr->zout * min;
    return 2;
}

/* One line for a port that fails its budget or the ratio: the largest zout or
 * the smallest zin that would meet it, or a buffer. */
static void fix_advice(ls_report *rp, const ls_results *res, int i, const ls_port_result *pr)
{
    const ls_op *op = res->op;
    const ls_part *p = &op->nl->parts[i];
    double min = ls_op_min_ratio(op);
    const char *OHM = ls_unit_of(LS_OHM, rp->ascii);
    char r[64], lo[64], hi[64];
    if (pr->verdict == VERDICT_OK)
        return;
    if (pr->by_budget && !pr->current_mode && isfinite(pr->sag)) {
        budget_advice(rp, res, i, pr);
        return;
    }
    if (isnan(pr->ratio)) {
        fprintf(rp->out, "  -> %s: the loading ratio is undefined%s%s.\n", p->name, pr->note ? ": " : "",
                pr->note ? pr->note : "");
        return;
    }
    if (pr->by_budget) {   /* current mode, or an unbounded sag: the ratio still says which side to change */
        char s[64], b[64];
        fprintf(rp->out, "  -> %s: the sag of %s is over its budget of %s (%s).\n", p->name,
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
        fprintf(rp->out, "  -> %s: zout/zin = %s is below %g. To meet it: a load (zin) of at most %s, or a source "
                         "(zout) of at least %s.\n",
                p->name, r, min, lo, hi);
        return;
    }
    if (!fix) {
        fprintf(rp->out, "  -> %s: the load side is a short to ground (zin = 0); no driver can meet the ratio.\n",
                p->name);
        return;
    }
    ls_eng(rp, lo, sizeof lo, fv[0], OHM);
    ls_eng(rp, hi, sizeof hi, fv[1], OHM);
    fprintf(rp->out, "  -> %s: zin/zout = %s is below the %g x rule. To meet it: a driver with zout at most %s, or a load "
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
static void ports_text(ls_report *rp, const ls_results *res)
{
    const ls_op *op = res->op;
    FILE *o = rp->out;
    const ls_netlist *nl = op->nl;
    const char *V = "V", *A = "A", *OHM = ls_unit_of(LS_OHM, rp->ascii);
    char b1[64], b2[64], b3[64], b4[64], b5[64], b6[64], b7[64], bud[96], verdict[48];
    fprintf(o, "\nPorts (verdict: the sag against the port's budget where it has one, else zin/zout of at least %g)\n",
            ls_op_min_ratio(op));
    ls_table p = {.ncol = 11,
               .head = {"port", "driver -> load", ls_prop_name(PROP_OPEN), ls_prop_name(PROP_LOADED),
                        ls_prop_name(PROP_SAG), ls_prop_name(PROP_BUDGET), ls_prop_name(PROP_ZOUT),
                        ls_prop_name(PROP_ZIN), ls_prop_name(PROP_RATIO), ls_prop_name(PROP_CURRENT), "verdict"},
               .right = {false, false, true, true, true, true, true, true, true, true, false}};
    int held = 0;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *pt = &nl->parts[i];
        if (!pt->kind->is_port)
            continue;
        const ls_port_result *pr = ls_port_read(op, i);
        const char *u = pr->current_mode ? A : V;
        char conn[600], sag[96];
        held += pr->load_held;
        snprintf(conn, sizeof conn, "%s -> %s%s", nl->nodes[pt->pin[0]].name, nl->nodes[pt->pin[1]].name,
                 pr->current_mode ? " (current)" : "");
        ls_eng(rp, b3, sizeof b3, pr->sag, u);
        if (isfinite(pr->sag_rel) && pr->sag != 0)
            snprintf(sag, sizeof sag, "%s (%s%%)", b3, ls_fixed(rp, b4, sizeof b4, "%.3g", pr->sag_rel * 100));
        else
            snprintf(sag, sizeof sag, "%s", b3);
        snprintf(verdict, sizeof verdict, "%s (%s)", verdict_name(pr->verdict), pr->by_budget ? "budget" : "ratio");
        const char *c[11] = {pt->name, conn, ls_eng(rp, b1, sizeof b1, pr->open, u),
                             ls_eng(rp, b2, sizeof b2, pr->loaded, u), sag, budget_cell(rp, pr, bud, sizeof bud),
                             ls_eng(rp, b4, sizeof b4, pr->zout, OHM), ls_eng(rp, b5, sizeof b5, pr->zin, OHM),
                             ls_eng(rp, b6, sizeof b6, pr->ratio, ""), ls_eng(rp, b7, sizeof b7, pr->current, A),
                             verdict};
        ls_t_row(&p, c);
    }
    ls_t_print(&p, rp->out, &rp->nomem, &rp->nomem_bytes);
    if (held) {
        fputs("  note: the load side of", o);
        int k = 0;
        for (int i = 0; i < nl->nparts; i++)
            if (nl->parts[i].kind->is_port && ls_port_read(op, i)->load_held)
                fprintf(o, "%s %s", k++ ? (k == held ? " and" : ",") : "", nl->parts[i].name);
        fprintf(o, " has no DC path of its own once opened (an input that only a controlled source senses); "
                   "it was held at its loaded voltage while open and zout were computed, and zin is unbounded.\n");
    }
    for (int i = 0; i < nl->nparts; i++)
        if (nl->parts[i].kind->is_port)
            fix_advice(rp, res, i, ls_port_read(op, i));
}

/* v formatted as ls_eng does, with a leading "~" when its error bound says
 * its last printed digit may be wrong (accuracy.h). */
static const char *eng_bounded(ls_report *rp, char *buf, size_t n, double v, const char *unit, double bound,
                               double scale, int *marked)
{
    if (!ls_acc_doubtful(v, bound, rp->sig, scale))
        return ls_eng(rp, buf, n, v, unit);
    buf[0] = '~';
    ls_eng(rp, buf + 1, n - 1, v, unit);
    (*marked)++;
    return buf;
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
static void accuracy_text(ls_report *rp, const ls_op *op, int marked)
{
    const ls_accuracy *a = &op->acc;
    const char *how = !a->refined ? "iterative refinement in double precision (a circuit with nonlinear parts)"
                      : a->extended ? "extra-precise refinement (residuals in double-double), needed here"
                                    : "double precision, confirmed by an extra-precise residual";
    if (!a->have_bounds)
        fprintf(rp->out, "accuracy: %s; no error bounds (out of memory)\n", how);
    else if (!a->reliable)
        fprintf(rp->out, "accuracy: %s; no error bounds: the equations are too ill-conditioned for double "
                         "precision, so every number is marked ~\n", how);
    else if (marked)
        fprintf(rp->out, "accuracy: %s; %d number%s marked ~ may be wrong in %s last printed digit\n", how, marked,
                marked == 1 ? "" : "s", marked == 1 ? "its" : "their");
    else
        fprintf(rp->out, "accuracy: %s; every voltage and current is right to the digits printed%s\n", how,
                a->estimated ? " (by an estimated bound)" : "");
}

/* The title, the solver line, the iteration line and the accuracy line.
 * Returns whether the report has error bounds. */
static bool solve_head_text(ls_report *rp, const ls_results *res)
{
    const ls_op *op = res->op;
    FILE *o = rp->out;
    const ls_netlist *nl = op->nl;
    fprintf(o, "%s\n", nl->title ? nl->title : "(untitled circuit)");
    if (op->method == LS_METHOD_ITERATIVE_AMG)
        fprintf(o, "solved: %d unknowns by %s (%s), %ld conjugate-gradient iterations to a true relative residual "
                "of %.2g, relative residual %.2g\n", op->mna.n, method_name(op->method),
                ls_solver_stats_of(op->solver)->library, op->cg_iterations, op->cg_residual, op->residual);
    else
        fprintf(o, "solved: %d unknowns by %s (%s), reciprocal condition %.2g, relative residual %.2g\n", op->mna.n,
                method_name(op->method), ls_solver_stats_of(op->solver)->library, op->rcond, op->residual);

    if (op->iterations > 1)
        fprintf(o, "iterated: %d solves until every diode, thermistor and op-amp limit settled\n", op->iterations);
    /* marks need the bounds; count them first so the accuracy line can say how many */
    bool bounds = error_bounds(rp, res);
    const ls_accuracy *acc = &op->acc;
    double vscale = ls_acc_scale(op, 0), iscale = ls_acc_scale(op, 1);
    int marked = 0;
    for (int i = 0; bounds && i < nl->nnodes; i++)
        marked += ls_acc_doubtful(op->v[i], acc->node_bound[i], rp->sig, vscale);
    for (int i = 0; bounds && i < nl->nparts; i++)
        marked += !nl->parts[i].kind->is_port && ls_acc_doubtful(op->ipart[i], acc->part_bound[i], rp->sig, iscale);
    accuracy_text(rp, op, marked);
    return bounds;
}

/* The node voltages (~ where the bounds doubt the last digit), with the
 * touch-safety caution column when some node is above it. */
static void nodes_text(ls_report *rp, const ls_op *op, bool bounds)
{
    const ls_netlist *nl = op->nl;
    const ls_accuracy *acc = &op->acc;
    double vscale = ls_acc_scale(op, 0);
    char b1[64];
    int dummy = 0;
    fputs("\nNodes\n", rp->out);
    bool hazard = false;
    for (int i = 0; i < nl->nnodes; i++)
        hazard |= fabs(op->v[i]) > LS_TOUCH_SAFE_DC;
    ls_table t = {.ncol = hazard ? 3 : 2, .head = {"node", "voltage", "caution"}, .right = {false, true, false}};
    for (int i = 0; i < nl->nnodes; i++) {
        prefetch_node_name(nl, i);
        const char *c[3] = {nl->nodes[i].name,
                            bounds ? eng_bounded(rp, b1, sizeof b1, op->v[i], "V", acc->node_bound[i], vscale, &dummy)
                                   : ls_eng(rp, b1, sizeof b1, op->v[i], "V"),
                            fabs(op->v[i]) > LS_TOUCH_SAFE_DC ? "above 60 V DC: not touch-safe" : ""};
        ls_t_row(&t, c);
    }
    ls_t_print(&t, rp->out, &rp->nomem, &rp->nomem_bytes);
}

/* The parts but the ports: current (~ where doubtful), voltage, power. */
static void parts_text(ls_report *rp, const ls_op *op, bool bounds)
{
    const ls_netlist *nl = op->nl;
    const ls_accuracy *acc = &op->acc;
    double iscale = ls_acc_scale(op, 1);
    char b1[64], b2[64], b3[64];
    int dummy = 0;
    fputs("\nParts\n", rp->out);
    ls_table p = {.ncol = 5, .head = {"part", "kind", "current", "voltage", "power"},
                  .right = {false, false, true, true, true}};
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *pt = &nl->parts[i];
        prefetch_part_name(nl, i);
        if (pt->kind->is_port)
            continue;
        const char *c[5] = {pt->name, pt->kind->name,
                            bounds ? eng_bounded(rp, b1, sizeof b1, op->ipart[i], "A", acc->part_bound[i], iscale,
                                                 &dummy)
                                   : ls_eng(rp, b1, sizeof b1, op->ipart[i], "A"),
                            ls_eng(rp, b2, sizeof b2, op->vpart[i], "V"), ls_eng(rp, b3, sizeof b3, op->ppart[i], "W")};
        ls_t_row(&p, c);
    }
    ls_t_print(&p, rp->out, &rp->nomem, &rp->nomem_bytes);
}

/* The op-amps: output voltage and current, dissipation (where some op-amp
 * has rails= to reckon it from) and the limit in force. */
static void opamps_text(ls_report *rp, const ls_op *op)
{
    const ls_netlist *nl = op->nl;
    char b1[64], b2[64], b3[64];
    fputs("\nOp-amps\n", rp->out);
    bool rails = false;
    for (int i = 0; i < nl->nparts; i++)
        rails |= isfinite(ls_opamp_dissipation(op, i));
    ls_table p = {.ncol = rails ? 5 : 4, .head = {"op-amp", "out", "current", "dissipation", "limit"},
                  .right = {false, true, true, true, false}};
    if (!rails) {
        p.head[3] = "limit";
        p.right[3] = false;
    }
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *pt = &nl->parts[i];
        if (!pt->kind->is_opamp)
            continue;
        char lim[96];
        double pd = ls_opamp_dissipation(op, i);
        const char *c[5] = {pt->name, ls_eng(rp, b1, sizeof b1, op->v[pt->pin[2]], "V"),
                            ls_eng(rp, b2, sizeof b2, op->ipart[i], "A"),
                            isfinite(pd) ? ls_eng(rp, b3, sizeof b3, pd, "W") : "-", limit_text(rp, pt, lim, sizeof lim)};
        if (!rails)
            c[3] = c[4];
        ls_t_row(&p, c);
    }
    ls_t_print(&p, rp->out, &rp->nomem, &rp->nomem_bytes);
}

static void solve_text(ls_report *rp, const ls_results *res, const ls_checks *checks)
{
    const ls_op *op = res->op;
    const ls_netlist *nl = op->nl;
    bool bounds = solve_head_text(rp, res);
    nodes_text(rp, op, bounds);
    int nparts = 0, nports = 0, nops = 0;
    for (int i = 0; i < nl->nparts; i++) {
        nports += nl->parts[i].kind->is_port;
        nops += nl->parts[i].kind->is_opamp;
        nparts += !nl->parts[i].kind->is_port;
    }
    if (nparts)
        parts_text(rp, op, bounds);
    if (nports)
        ports_text(rp, res);
    if (nops)
        opamps_text(rp, op);
    adc_text(rp, res);
    ntc_text(rp, op);
    checks_text(rp, checks);
    warnings_text(rp);
}

/* ---- solve: JSON and CSV ------------------------------------------------------------------ */

/* The "accuracy" object: how the error bounds were found, the bound of every
 * node voltage (V; null, unbounded, when no first-order bound holds), and the
 * worst node and part against their own values. */
static void accuracy_json(ls_jw *w, const ls_op *op)
{
    const ls_netlist *nl = op->nl;
    const ls_accuracy *a = &op->acc;
    ls_jw_obj(w, "accuracy");
    ls_jw_str(w, "bounds", !a->reliable ? "none" : a->estimated ? "estimate" : a->per_node ? "per-node" : "per-result");
    int wrap = w->wrap;
    w->wrap = 1; /* the bounds on one line */
    ls_jw_obj(w, "nodes");
    for (int i = 0; i < nl->nnodes; i++)
        ls_jw_num_why(w, nl->nodes[i].name, a->reliable ? a->node_bound[i] : INFINITY, LS_WHY_UNBOUNDED);
    ls_jw_end(w);
    w->wrap = wrap;
    if (a->worst_node >= 0) {
        ls_jw_str(w, "worst_node", nl->nodes[a->worst_node].name);
        ls_jw_num(w, "worst_node_rel", a->worst_node_rel);
    }
    if (a->worst_part >= 0) {
        ls_jw_str(w, "worst_part", nl->parts[a->worst_part].name);
        ls_jw_num(w, "worst_part_rel", a->worst_part_rel);
    }
    ls_jw_end(w);
}

/* The "solver" object, on one line: method, library, size, conditioning or
 * the iteration's reach, residual, iterations and refinement. */
static void solver_json(ls_jw *w, const ls_op *op)
{
    int wrap = w->wrap;
    w->wrap = 1; /* the solver on one line */
    ls_jw_obj(w, "solver");
    ls_jw_str(w, "method", method_name(op->method));
    ls_jw_str(w, "library", ls_solver_stats_of(op->solver)->library);
    ls_jw_int(w, "unknowns", op->mna.n);
    if (op->method == LS_METHOD_ITERATIVE_AMG) {
        /* no condition estimate: what the iteration reached stands for it */
        ls_jw_null(w, "rcond", LS_WHY_UNDEFINED);
        ls_jw_int(w, "cg_iterations", op->cg_iterations);
        ls_jw_num(w, "cg_residual", op->cg_residual);
    } else {
        ls_jw_num(w, "rcond", op->rcond);
    }
    ls_jw_num(w, "residual", op->residual);
    ls_jw_int(w, "iterations", op->iterations);
    ls_jw_str(w, "refinement", !op->acc.refined ? "double" : op->acc.extended ? "extended" : "double-confirmed");
    ls_jw_int(w, "refinement_steps", op->acc.steps);
    ls_jw_end(w);
    w->wrap = wrap;
}

/* The "ports" object: every port's fields (ls_port_fields), budget, verdict,
 * note and the numbers of its fix. */
static void ports_json(ls_jw *w, const ls_op *op)
{
    const ls_netlist *nl = op->nl;
    ls_jw_obj(w, "ports");
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (!p->kind->is_port)
            continue;
        const ls_port_result *pr = ls_port_read(op, i);
        ls_jw_obj(w, p->name);
        ls_jw_str(w, "from", nl->nodes[p->pin[0]].name);
        ls_jw_str(w, "to", nl->nodes[p->pin[1]].name);
        ls_jw_str(w, "mode", pr->current_mode ? "current" : "voltage");
        assert(ls_port_fields[LS_PORT_NFIELDS - 1] == PROP_BUDGET);
        for (int f = 0; f < LS_PORT_NFIELDS - 1; f++)   /* the budget last, with its source */
            ls_jw_num(w, ls_prop_name(ls_port_fields[f]), ls_port_value(pr, ls_port_fields[f]));
        ls_report_budget_json(w, pr);
        if (pr->load_held)
            ls_jw_bool(w, "load_held", true);
        ls_jw_str(w, "verdict", verdict_name(pr->verdict));
        if (pr->note)
            ls_jw_str(w, "note", pr->note);
        const char *ff[3];
        double fv[3];
        int nf = fix_limits(op, pr, ff, fv);
        if (nf) {
            ls_jw_obj(w, "fix");
            for (int j = 0; j < nf; j++)
                ls_jw_num(w, ff[j], fv[j]);
            ls_jw_end(w);
        }
        ls_jw_end(w);
    }
    ls_jw_end(w);
}

/* The "opamps" object: output, current, the limit in force, dissipation. */
static void opamps_json(ls_jw *w, const ls_op *op)
{
    const ls_netlist *nl = op->nl;
    ls_jw_obj(w, "opamps");
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (!p->kind->is_opamp)
            continue;
        ls_jw_obj(w, p->name);
        ls_jw_num(w, "out", op->v[p->pin[2]]);
        ls_jw_num(w, "current", op->ipart[i]);
        ls_jw_str(w, "limited", ls_opamp_limit_word(p));
        double pd = ls_opamp_dissipation(op, i);
        if (isfinite(pd))
            ls_jw_num(w, "dissipation", pd);
        else
            ls_jw_null(w, "dissipation", LS_WHY_NONE); /* no rails= to reckon it from */
        ls_jw_end(w);
    }
    ls_jw_end(w);
}

static void solve_json(ls_report *rp, const ls_results *res, const ls_checks *checks)
{
    const ls_op *op = res->op;
    ls_jw jw, *w = &jw;
    const ls_netlist *nl = op->nl;
    ls_report_json_begin(rp, w);
    ls_jw_str(w, "title", nl->title);
    solver_json(w, op);
    bool bounds = error_bounds(rp, res);
    ls_jw_obj(w, "nodes");
    for (int i = 0; i < nl->nnodes; i++) {
        prefetch_node_name(nl, i);
        ls_jw_num(w, nl->nodes[i].name, op->v[i]);
    }
    ls_jw_end(w);
    ls_jw_obj(w, "parts");
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        prefetch_part_name(nl, i);
        if (p->kind->is_port)
            continue;
        ls_jw_obj(w, p->name);
        ls_jw_str(w, "kind", p->kind->name);
        ls_jw_num(w, "current", op->ipart[i]);
        ls_jw_num(w, "voltage", op->vpart[i]);
        ls_jw_num(w, "power", op->ppart[i]);
        if (bounds && !isnan(op->acc.part_bound[i]))
            ls_jw_num_why(w, "error_bound", op->acc.part_bound[i], LS_WHY_UNBOUNDED);
        part_extra_json(w, res, i);
        ls_jw_end(w);
    }
    ls_jw_end(w);
    ls_jw_num(w, "min_ratio", ls_op_min_ratio(op));
    ports_json(w, op);
    opamps_json(w, op);
    adcs_json(w, res);
    checks_json(rp, w, checks);
    ls_jw_int(w, "passed", checks->passed);
    ls_jw_int(w, "failed", checks->failed);
    if (bounds)
        accuracy_json(w, op);
    ls_report_warnings_json(rp, w);
    ls_report_json_end(rp, w);
}

static void csv_head(ls_obuf *o, const char *section, const char *name, const char *field)
{
    ls_ob_csv_field(o, section);
    ls_ob_putc(o, ',');
    ls_ob_csv_field(o, name);
    ls_ob_putc(o, ',');
    ls_ob_csv_field(o, field);
    ls_ob_putc(o, ',');
}

/* One section,name,field,value row of a number (empty when not finite). */
static void csv_row(ls_obuf *o, const char *section, const char *name, const char *field, double v)
{
    csv_head(o, section, name, field);
    ls_ob_csv_number(o, v);
    ls_ob_putc(o, '\n');
}

/* One row of a word (a verdict, a limit, a name); empty for NULL. */
static void csv_word(ls_obuf *o, const char *section, const char *name, const char *field, const char *word)
{
    csv_head(o, section, name, field);
    ls_ob_csv_field(o, word ? word : "");
    ls_ob_putc(o, '\n');
}

/* The check rows shared by solve's CSV: value and result (pass or fail, the
 * words of check's CSV). */
static void checks_csv_rows(ls_obuf *o, const ls_checks *checks)
{
    for (int i = 0; i < checks->n; i++) {
        const ls_check_row *r = &checks->rows[i];
        csv_row(o, "check", r->text, "value", r->r.value);
        csv_word(o, "check", r->text, "result", r->r.pass ? "pass" : "fail");
        if (r->r.reason)
            csv_word(o, "check", r->text, "reason", r->r.reason);
    }
}

/* The rows of port i: its nodes and mode, its fields (ls_port_fields), how
 * it was judged, the verdict, a note and the numbers of its fix. */
static void port_csv(ls_obuf *o, const ls_op *op, int i)
{
    const ls_netlist *nl = op->nl;
    const ls_part *p = &nl->parts[i];
    const ls_port_result *pr = ls_port_read(op, i);
    csv_word(o, "port", p->name, "from", nl->nodes[p->pin[0]].name);
    csv_word(o, "port", p->name, "to", nl->nodes[p->pin[1]].name);
    csv_word(o, "port", p->name, "mode", pr->current_mode ? "current" : "voltage");
    for (int f = 0; f < LS_PORT_NFIELDS; f++)
        csv_row(o, "port", p->name, ls_prop_name(ls_port_fields[f]), ls_port_value(pr, ls_port_fields[f]));
    csv_word(o, "port", p->name, "by", pr->by_budget ? "budget" : "ratio");
    if (pr->load_held)
        csv_word(o, "port", p->name, "load_held", "true");
    csv_word(o, "port", p->name, "verdict", verdict_name(pr->verdict));
    if (pr->note)
        csv_word(o, "port", p->name, "note", pr->note);
    const char *ff[3];
    double fv[3];
    int nf = fix_limits(op, pr, ff, fv);
    for (int j = 0; j < nf; j++) {
        char fld[32];
        snprintf(fld, sizeof fld, "fix.%s", ff[j]);
        csv_row(o, "port", p->name, fld, fv[j]);
    }
}

static void solve_csv(ls_report *rp, const ls_results *res, const ls_checks *checks)
{
    const ls_op *op = res->op;
    ls_obuf ob, *o = &ob;
    ls_ob_init(o, rp->out);
    const ls_netlist *nl = op->nl;
    ls_ob_puts(o, "section,name,field,value\n");
    csv_row(o, "rule", "ratio", "min", ls_op_min_ratio(op));
    for (int i = 0; i < nl->nnodes; i++) {
        prefetch_node_name(nl, i);
        csv_row(o, "node", nl->nodes[i].name, "voltage", op->v[i]);
    }
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        prefetch_part_name(nl, i);
        if (p->kind->is_port) {
            port_csv(o, op, i);
            continue;
        }
        csv_word(o, "part", p->name, "kind", p->kind->name);
        csv_row(o, "part", p->name, "current", op->ipart[i]);
        csv_row(o, "part", p->name, "voltage", op->vpart[i]);
        csv_row(o, "part", p->name, "power", op->ppart[i]);
        if (p->kind->is_opamp) {
            csv_row(o, "opamp", p->name, "out", op->v[p->pin[2]]);
            csv_word(o, "opamp", p->name, "limited", ls_opamp_limit_word(p));
            csv_row(o, "opamp", p->name, "dissipation", ls_opamp_dissipation(op, i));
        }
        const ls_adc_result *ar = ls_results_adc(res, i);
        if (ar) {
            const ls_adc_result r = *ar;
            int mi = ls_kind_opt(p->kind, "max_source");
            csv_row(o, "adc", p->name, "input", r.vin);
            csv_row(o, "adc", p->name, "code", (double)r.code);
            csv_row(o, "adc", p->name, "lsb", r.lsb);
            csv_row(o, "adc", p->name, "unloaded", r.v_open);
            csv_row(o, "adc", p->name, "error_lsb", r.error_lsb);
            csv_row(o, "adc", p->name, "budget_lsb", r.budget_lsb);
            csv_row(o, "adc", p->name, "source", r.rth);
            csv_row(o, "adc", p->name, "max_source", ls_part_has(p, mi) ? p->opt[mi] : NAN);
            csv_word(o, "adc", p->name, "source_too_high", r.source_high ? "true" : "false");
            csv_word(o, "adc", p->name, "verdict", verdict_name(r.verdict));
        } else if (is_kind(p, "ntc")) {
            double t = ls_ntc_body(p);
            csv_row(o, "part", p->name, "resistance", ls_ntc_r(p, t));
            csv_row(o, "part", p->name, "temperature", t);
            csv_row(o, "part", p->name, "self_heating", t - ls_part_opt(p, "celsius", 25));
        }
    }
    checks_csv_rows(o, checks);
    csv_row(o, "checks", "all", "passed", checks->passed);
    csv_row(o, "checks", "all", "failed", checks->failed);
    ls_ob_flush(o);
    ls_report_warnings_csv(rp, rp->out);
}

unsigned ls_report_needs(const ls_report *rp)
{
    switch (rp->fmt) {
    case FMT_TEXT: return LS_NEED_PORTS | LS_NEED_BOUNDS | LS_NEED_ADCS | LS_NEED_ADVICE;
    case FMT_JSON: return LS_NEED_PORTS | LS_NEED_BOUNDS | LS_NEED_ADCS;
    case FMT_CSV: return LS_NEED_PORTS | LS_NEED_ADCS;
    default: return 0; /* the page (html.c) reads the session itself */
    }
}

void ls_report_solve(ls_report *rp, const ls_results *res, const ls_checks *checks)
{
    switch (rp->fmt) {
    case FMT_TEXT: solve_text(rp, res, checks); break;
    case FMT_JSON: solve_json(rp, res, checks); break;
    case FMT_CSV: solve_csv(rp, res, checks); break;
    case FMT_HTML: break; /* the page is html.c's, called by the command */
    }
}

/* Is warning g one that --fail-on fails on? */
static bool failing_warning(const ls_report *rp, const ls_diag *g)
{
    for (int k = 0; g->sev == LS_SEV_WARNING && g->code && k < rp->nfailed_warnings; k++)
        if (strcmp(rp->failed_warnings[k], g->code) == 0)
            return true;
    return false;
}

/* check, text: each warning that --fail-on fails on, as a failed line. */
static void failed_warnings_text(ls_report *rp)
{
    const ls_diags *d = rp->diags;
    int k = 0;
    for (int i = 0; i < d->n; i++) {
        const ls_diag *g = &d->items[i];
        if (!failing_warning(rp, g))
            continue;
        if (!k++)
            fputs("\nWarnings that fail the check (--fail-on)\n", rp->out);
        char where[600];
        ls_loc_str(d, g->loc, where, sizeof where);
        fprintf(rp->out, "  FAIL    %s  %s%s%s\n", g->code, where, where[0] ? ": " : "", g->msg);
    }
}

/* check, CSV: each warning that --fail-on fails on, as a row that did not pass. */
static void failed_warnings_csv(ls_report *rp, ls_obuf *ob)
{
    const ls_diags *d = rp->diags;
    for (int i = 0; i < d->n; i++) {
        const ls_diag *g = &d->items[i];
        if (!failing_warning(rp, g))
            continue;
        char text[1200];
        snprintf(text, sizeof text, "warning %s: %s", g->code, g->msg);
        ls_ob_csv_field(ob, g->loc.file >= 0 ? loc_file(d, g->loc) : "");
        if (g->loc.file >= 0)
            ls_ob_printf(ob, ",%d,,", loc_line(d, g->loc));
        else
            ls_ob_puts(ob, ",,,");
        ls_ob_csv_field(ob, text);
        ls_ob_puts(ob, ",,false\n");
    }
}

void ls_report_check(ls_report *rp, const ls_checks *checks)
{
    FILE *o = rp->out;
    if (rp->fmt == FMT_JSON) {
        ls_jw w;
        ls_report_json_begin(rp, &w);
        checks_json(rp, &w, checks);
        ls_jw_int(&w, "passed", checks->passed);
        ls_jw_int(&w, "failed", checks->failed);
        ls_jw_arr(&w, "failed_warnings");
        for (int i = 0; i < rp->nfailed_warnings; i++)
            ls_jw_str(&w, NULL, rp->failed_warnings[i]);
        ls_jw_end(&w);
        ls_report_warnings_json(rp, &w);
        ls_report_json_end(rp, &w);
    } else if (rp->fmt == FMT_CSV) {
        ls_obuf ob;
        ls_ob_init(&ob, o);
        ls_ob_puts(&ob, "file,line,instance,text,value,result\n");
        for (int i = 0; i < checks->n; i++) {
            const ls_check_row *r = &checks->rows[i];
            ls_ob_csv_field(&ob, loc_file(rp->diags, r->loc));
            ls_ob_printf(&ob, ",%d,", loc_line(rp->diags, r->loc));
            ls_ob_csv_field(&ob, r->instance ? r->instance : "");
            ls_ob_putc(&ob, ',');
            ls_ob_csv_field(&ob, r->text);
            ls_ob_putc(&ob, ',');
            ls_ob_csv_number(&ob, r->r.value);
            ls_ob_puts(&ob, r->r.pass ? ",pass\n" : ",fail\n");
        }
        failed_warnings_csv(rp, &ob);
        ls_ob_flush(&ob);
    } else {
        if (!checks->n)
            fputs("no checks in this circuit (add 'expect' lines or a 'rule')\n", o);
        checks_text(rp, checks);
        failed_warnings_text(rp);
        if (rp->nfailed_warnings) {
            fprintf(o, "\nFAILED: %d passed, %d failed; warnings named by --fail-on:", checks->passed, checks->failed);
            for (int i = 0; i < rp->nfailed_warnings; i++)
                fprintf(o, "%s %s", i ? "," : "", rp->failed_warnings[i]);
            fputc('\n', o);
        } else
            fprintf(o, "\n%s: %d passed, %d failed\n", checks->failed ? "FAILED" : "all checks pass",
                    checks->passed, checks->failed);
    }
}

/* ---- aligned tables for the other commands' text reports ------------------------------- */

int ls_text_table(ls_report *rp, int ncol, const char *const *head, const bool *right, const char *const *cells,
                  int nrows)
{
    ls_table t = {.ncol = ncol < 10 ? ncol : 10};
    for (int c = 0; c < t.ncol; c++) {
        t.head[c] = head[c];
        t.right[c] = right[c];
    }
    for (int r = 0; r < nrows; r++)
        ls_t_row(&t, cells + (size_t)r * (size_t)ncol);
    return ls_t_print(&t, rp->out, &rp->nomem, &rp->nomem_bytes);
}
