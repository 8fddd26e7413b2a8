/* html.c — the one-page HTML report (see html.h). */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "base/fmt.h"
#include "cli/html.h"
#include "elab/elab.h"
#include "analysis/tolerance.h"
#include "analysis/newton.h"
#include "analysis/results.h"
#include "parts/parts.h"
#include "report/plot.h"

#ifndef LS_VERSION
#define LS_VERSION "0.0.0"
#endif

#define MAX_HISTOGRAMS 8

/* Screen: one readable column at 100 % on a laptop, wide tables scroll in
 * place.  Print: black on white, no shadows, sections kept whole.  Verdict
 * colours are the drawing's (Okabe–Ito), always beside a word and a mark. */
static const char css[] =
    "body{font-family:'DejaVu Sans',Verdana,Arial,sans-serif;font-size:15px;line-height:1.45;color:#1a1a1a;"
    "background:#fff;max-width:1120px;margin:0 auto;padding:16px 20px}\n"
    "h1{font-size:1.6em;margin:.2em 0}h2{font-size:1.2em;margin:1.4em 0 .4em;border-bottom:1px solid #ccd}\n"
    "p.meta{color:#444;margin:.2em 0}\n"
    ".scroll{overflow-x:auto}\n"
    "table{border-collapse:collapse;margin:.3em 0;font-variant-numeric:tabular-nums}\n"
    "th,td{border:1px solid #c8ccd4;padding:3px 8px;text-align:left;vertical-align:top}\n"
    "th{background:#eef1f5}td.num{text-align:right;white-space:nowrap}\n"
    ".v-ok{color:#00684c}.v-marginal{color:#7a5000;font-weight:bold}td[class^=v-]{white-space:nowrap}\n"
    ".v-loading{color:#a63a00;font-weight:bold}tr.loading td{background:#fbe3d6}tr.marginal td{background:#fff6e0}\n"
    ".alert{border:3px solid #d55e00;background:#fbe3d6;padding:8px 12px;margin:.8em 0}\n"
    ".good{border:2px solid #009e73;padding:8px 12px;margin:.8em 0}\n"
    ".caution{border:2px solid #e69f00;background:#fff6e0;padding:8px 12px;margin:.8em 0}\n"
    "figure{margin:.5em 0}figure svg,figure img{max-width:100%;height:auto}\n"
    "figcaption{color:#444;font-size:.9em}\n"
    "@media print{body{font-size:10pt;max-width:none;padding:0}.scroll{overflow:visible}"
    "h2{break-after:avoid}figure,table{break-inside:avoid}a{color:inherit}}\n";

/* ---- escaping ------------------------------------------------------------------------------ */

/* s with & < > " ' escaped: safe in text and in quoted attributes. */
static void esc(FILE *o, const char *s)
{
    for (; s && *s; s++)
        switch (*s) {
        case '&': fputs("&amp;", o); break;
        case '<': fputs("&lt;", o); break;
        case '>': fputs("&gt;", o); break;
        case '"': fputs("&quot;", o); break;
        case '\'': fputs("&#39;", o); break;
        default: fputc(*s, o);
        }
}

/* ---- tables ---------------------------------------------------------------------------------- */

/* <table> with a caption and column headings (scope=col); a heading starting
 * with '#' is a number column (the '#' is not shown). */
static void table_open(FILE *o, const char *caption, const char *const *head, int n)
{
    fputs("<div class=\"scroll\"><table>", o);
    if (caption) {
        fputs("<caption class=\"sr\">", o);
        esc(o, caption);
        fputs("</caption>", o);
    }
    fputs("<thead><tr>", o);
    for (int i = 0; i < n; i++) {
        fputs("<th scope=\"col\">", o);
        esc(o, head[i][0] == '#' ? head[i] + 1 : head[i]);
        fputs("</th>", o);
    }
    fputs("</tr></thead><tbody>\n", o);
}

static void table_close(FILE *o) { fputs("</tbody></table></div>\n", o); }

/* The row's first cell, a row heading (scope=row). */
static void cell_head(FILE *o, const char *s)
{
    fputs("<tr><th scope=\"row\">", o);
    esc(o, s);
    fputs("</th>", o);
}

static void cell(FILE *o, const char *s)
{
    fputs("<td>", o);
    esc(o, s);
    fputs("</td>", o);
}

static void cell_num(FILE *o, ls_report *rp, double v, const char *unit)
{
    char b[64];
    fputs("<td class=\"num\">", o);
    esc(o, ls_eng(rp, b, sizeof b, v, unit));
    fputs("</td>", o);
}

/* A verdict cell: the word, a mark and the verdict's colour. */
static void cell_verdict_text(FILE *o, ls_verdict v, const char *word)
{
    static const char *const mark[3] = {"\xE2\x9C\x93", "\xE2\x96\xB3", "\xE2\x9C\x97"};
    fprintf(o, "<td class=\"v-%s\"><span aria-hidden=\"true\">%s</span> ", ls_verdict_word(v), mark[v]);
    esc(o, word);
    fputs("</td>", o);
}

static void cell_verdict(FILE *o, ls_verdict v) { cell_verdict_text(o, v, ls_verdict_word(v)); }

/* ---- sections ------------------------------------------------------------------------------ */

/* A warning about a hazard to people or parts: its message starts with
 * "caution", or it is one of the ratings' warnings. */
static bool is_caution(const ls_diag *g)
{
    static const char *const codes[] = {"hazardous-voltage", "over-rating", "over-voltage", "over-current"};
    if (g->msg && strncmp(g->msg, "caution", 7) == 0)
        return true;
    for (size_t i = 0; g->code && i < sizeof codes / sizeof codes[0]; i++)
        if (strcmp(g->code, codes[i]) == 0)
            return true;
    return false;
}

/* The verdicts at a glance: the failing connections first, impossible to miss. */
static void summary(FILE *o, ls_op *op, const ls_chain *c, const ls_diags *d)
{
    int n[3] = {0, 0, 0};
    for (int k = 0; k < c->nconns; k++)
        n[ls_port_read(op, c->conns[k].port)->verdict]++;
    int cautions = 0;
    for (int i = 0; i < d->n; i++)
        cautions += d->items[i].sev == LS_SEV_WARNING && is_caution(&d->items[i]);
    if (cautions)
        fprintf(o, "<p class=\"caution\"><strong>Caution:</strong> %d safety warning%s below (ratings, voltages). "
                   "loadstack computes a DC operating point only; local codes and licensed practice govern the "
                   "design's safety.</p>\n",
                cautions, cautions > 1 ? "s" : "");
    if (n[VERDICT_LOADING] + n[VERDICT_MARGINAL]) {
        fputs("<div class=\"alert\" role=\"alert\"><strong>Not every connection holds up:</strong><ul>", o);
        for (int k = 0; k < c->nconns; k++) {
            const ls_port_result *pr = ls_port_read(op, c->conns[k].port);
            if (pr->verdict == VERDICT_OK)
                continue;
            char fix[200];
            fprintf(o, "<li><span class=\"v-%s\">%s %s</span>: <strong>", ls_verdict_word(pr->verdict),
                    pr->verdict == VERDICT_LOADING ? "\xE2\x9C\x97" : "\xE2\x96\xB3", ls_verdict_word(pr->verdict));
            esc(o, op->nl->parts[c->conns[k].port].name);
            fputs("</strong> &mdash; ", o);
            esc(o, ls_chain_fix(op, c->conns[k].port, fix, sizeof fix, false, 3));
            fputs("</li>", o);
        }
        fputs("</ul></div>\n", o);
    } else if (c->nconns) {
        fprintf(o, "<p class=\"good\"><span aria-hidden=\"true\">\xE2\x9C\x93</span> All %d connection%s ok.</p>\n",
                c->nconns, c->nconns > 1 ? "s" : "");
    } else {
        fputs("<p class=\"caution\">This circuit has no port, so no connection is judged: mark each connection "
              "between stages with <code>port NAME DRIVER -&gt; LOAD</code> to see its loading.</p>\n",
              o);
    }
}

static void stages_section(FILE *o, const ls_netlist *nl, const ls_chain *c)
{
    fputs("<h2 id=\"stages\">Stages, in signal order</h2>\n", o);
    const char *head[] = {"#", "stage", "holds", "parts"};
    table_open(o, "Stages", head, 4);
    for (int i = 0; i < c->nstages; i++) {
        const ls_stage *st = &c->stages[i];
        char num[16];
        snprintf(num, sizeof num, "%d", i + 1);
        cell_head(o, num);
        cell(o, st->name);
        fputs("<td>", o);
        for (int b = 0, k = 0; b < LS_STAGE_NFLAGS; b++)
            if (st->has >> b & 1u)
                fprintf(o, "%s%s", k++ ? ", " : "", ls_stage_flag_word(b, false));
        fputs("</td><td>", o);
        for (int k = 0; k < st->nparts; k++) {
            fputs(k ? ", " : "", o);
            esc(o, nl->parts[st->parts[k]].name);
        }
        fputs("</td></tr>\n", o);
    }
    table_close(o);
}

static void ports_section(FILE *o, ls_report *rp, ls_op *op, const ls_chain *c)
{
    const ls_netlist *nl = op->nl;
    const char *OHM = ls_unit_of(LS_OHM, rp->ascii);
    fprintf(o, "<h2 id=\"ports\">Connections (ports)</h2>\n<p>zin/zout should be at least %g (a rule of thumb: "
               "a ratio of 10 still costs about 9 %% of the voltage).</p>\n",
            ls_op_min_ratio(op));
    const char *head[] = {"port", "driver \xE2\x86\x92 load", ls_prop_name(PROP_OPEN), ls_prop_name(PROP_LOADED),
                          ls_prop_name(PROP_SAG), ls_prop_name(PROP_ZOUT), ls_prop_name(PROP_ZIN),
                          ls_prop_name(PROP_RATIO), ls_prop_name(PROP_CURRENT), "verdict", "what would fix it"};
    table_open(o, "Connections", head, 11);
    for (int k = 0; k < c->nconns; k++) {
        int i = c->conns[k].port;
        const ls_part *p = &nl->parts[i];
        const ls_port_result *pr = ls_port_read(op, i);
        const char *u = pr->current_mode ? "A" : "V";
        char conn[600], fix[200];
        snprintf(conn, sizeof conn, "%s \xE2\x86\x92 %s%s", nl->nodes[p->pin[0]].name, nl->nodes[p->pin[1]].name,
                 pr->current_mode ? " (current)" : "");
        fprintf(o, "<tr class=\"port %s\" data-port=\"", ls_verdict_word(pr->verdict));
        esc(o, p->name);
        fputs("\"><th scope=\"row\">", o);
        esc(o, p->name);
        fputs("</th>", o);
        cell(o, conn);
        cell_num(o, rp, pr->open, u);
        cell_num(o, rp, pr->loaded, u);
        cell_num(o, rp, pr->sag, u);
        cell_num(o, rp, pr->zout, OHM);
        cell_num(o, rp, pr->zin, OHM);
        cell_num(o, rp, pr->ratio, "");
        cell_num(o, rp, pr->current, "A");
        cell_verdict(o, pr->verdict);
        cell(o, pr->note && pr->verdict != VERDICT_OK && isnan(pr->ratio) ? pr->note
                                                                          : ls_chain_fix(op, i, fix, sizeof fix, false, 3));
        fputs("</tr>\n", o);
    }
    table_close(o);
}

static void nodes_section(FILE *o, ls_report *rp, ls_op *op)
{
    const ls_netlist *nl = op->nl;
    fputs("<h2 id=\"nodes\">Nodes</h2>\n", o);
    const char *head[] = {"node", "voltage", "note"};
    table_open(o, "Nodes", head, 3);
    for (int i = 0; i < nl->nnodes; i++) {
        cell_head(o, nl->nodes[i].name);
        cell_num(o, rp, op->v[i], "V");
        cell(o, fabs(op->v[i]) > LS_TOUCH_SAFE_DC ? "caution: above 60 V DC, not touch-safe" : i == 0 ? "ground" : "");
        fputs("</tr>\n", o);
    }
    table_close(o);
}

static void parts_section(FILE *o, ls_report *rp, ls_op *op)
{
    const ls_netlist *nl = op->nl;
    fputs("<h2 id=\"parts\">Parts</h2>\n", o);
    const char *head[] = {"part", "kind", "current", "voltage", "power"};
    table_open(o, "Parts", head, 5);
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (p->kind->is_port)
            continue;
        cell_head(o, p->name);
        cell(o, p->kind->name);
        cell_num(o, rp, op->ipart[i], "A");
        cell_num(o, rp, op->vpart[i], "V");
        cell_num(o, rp, op->ppart[i], "W");
        fputs("</tr>\n", o);
    }
    table_close(o);
}

static void opamps_section(FILE *o, ls_report *rp, ls_op *op)
{
    const ls_netlist *nl = op->nl;
    const char *head[] = {"op-amp", "out", "current", "dissipation", "limit"};
    bool any = false;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (!p->kind->is_opamp)
            continue;
        if (!any) {
            fputs("<h2 id=\"opamps\">Op-amps</h2>\n", o);
            table_open(o, "Op-amps", head, 5);
            any = true;
        }
        cell_head(o, p->name);
        cell_num(o, rp, op->v[p->pin[2]], "V");
        cell_num(o, rp, op->ipart[i], "A");
        cell_num(o, rp, ls_opamp_dissipation(op, i), "W");
        cell(o, ls_opamp_limit_word(p, &op->run));
        fputs("</tr>\n", o);
    }
    if (any)
        table_close(o);
}

/* The ADC inputs, as the analysis read them (results.h). */
static void adcs_section(FILE *o, ls_report *rp, const ls_results *res)
{
    const ls_netlist *nl = res->op->nl;
    const char *OHM = ls_unit_of(LS_OHM, rp->ascii);
    const char *head[] = {"adc", "input", "code", "unloaded", "error (LSB)", "source resistance", "max source",
                          "settling"};
    if (res->nadcs) {
        fputs("<h2 id=\"adcs\">ADC inputs</h2>\n", o);
        table_open(o, "ADC inputs", head, 8);
    }
    for (int k = 0; k < res->nadcs; k++) {
        const ls_adc_result r = res->adcs[k].r;
        const ls_part *p = &nl->parts[res->adcs[k].part];
        char code[32];
        snprintf(code, sizeof code, "%lld", r.code);
        cell_head(o, p->name);
        cell_num(o, rp, r.vin, "V");
        fprintf(o, "<td class=\"num\">%s</td>", code);
        cell_num(o, rp, r.v_open, "V");
        cell_num(o, rp, r.error_lsb, "");
        cell_num(o, rp, r.rth, OHM);
        int mi = ls_kind_opt(p->kind, "max_source");
        if (ls_part_has(p, mi)) {
            cell_num(o, rp, p->opt[mi], OHM);
            cell_verdict_text(o, r.source_high ? VERDICT_LOADING : VERDICT_OK, r.source_high ? "source too high" : "ok");
        } else {
            cell(o, "-");
            cell(o, "-");
        }
        fputs("</tr>\n", o);
    }
    if (res->nadcs)
        table_close(o);
}

static void checks_section(FILE *o, ls_report *rp, const ls_checks *ch)
{
    fprintf(o, "<h2 id=\"checks\">Checks: %d passed, %d failed</h2>\n", ch->passed, ch->failed);
    if (!ch->n) {
        fputs("<p>No checks in this circuit (add <code>expect</code> lines or a <code>rule</code>).</p>\n", o);
        return;
    }
    const char *head[] = {"check", "value", "result"};
    table_open(o, "Checks", head, 3);
    for (int i = 0; i < ch->n; i++) {
        const ls_check_row *r = &ch->rows[i];
        fprintf(o, "<tr class=\"%s\">", r->r.pass ? "pass" : "loading");
        fputs("<th scope=\"row\">", o);
        esc(o, r->text);
        if (r->instance) {
            fputs(" <small>(in ", o);
            esc(o, r->instance);
            fputs(")</small>", o);
        }
        fputs("</th>", o);
        cell_num(o, rp, r->r.value, ls_unit_of(r->dims, rp->ascii));
        if (r->r.pass)
            fputs("<td class=\"v-ok\"><span aria-hidden=\"true\">\xE2\x9C\x93</span> pass</td>", o);
        else {
            fputs("<td class=\"v-loading\"><span aria-hidden=\"true\">\xE2\x9C\x97</span> FAIL", o);
            if (r->r.reason) {
                fputs(": ", o);
                esc(o, r->r.reason);
            }
            fputs("</td>", o);
        }
        fputs("</tr>\n", o);
    }
    table_close(o);
}

/* Warnings, cautions first. */
static void warnings_section(FILE *o, const ls_diags *d)
{
    int n = 0;
    for (int i = 0; i < d->n; i++)
        n += d->items[i].sev == LS_SEV_WARNING;
    fprintf(o, "<h2 id=\"warnings\">Warnings (%d)</h2>\n", n);
    if (!n) {
        fputs("<p>None.</p>\n", o);
        return;
    }
    const char *head[] = {"level", "where", "message", "code"};
    table_open(o, "Warnings", head, 4);
    for (int pass = 0; pass < 2; pass++)
        for (int i = 0; i < d->n; i++) {
            const ls_diag *g = &d->items[i];
            if (g->sev != LS_SEV_WARNING || is_caution(g) != (pass == 0))
                continue;
            char where[600];
            ls_loc_str(d, g->loc, where, sizeof where);
            fprintf(o, "<tr class=\"%s\">", pass == 0 ? "marginal" : "warning");
            fputs(pass == 0 ? "<th scope=\"row\">caution</th>" : "<th scope=\"row\">warning</th>", o);
            cell(o, where);
            cell(o, g->msg);
            cell(o, g->code ? g->code : "warning");
            fputs("</tr>\n", o);
        }
    table_close(o);
}

/* ---- histograms ---------------------------------------------------------------------------- */

static void base64(FILE *o, const unsigned char *s, size_t n)
{
    static const char t[] = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    for (size_t i = 0; i < n; i += 3) {
        unsigned v = (unsigned)s[i] << 16 | (i + 1 < n ? (unsigned)s[i + 1] << 8 : 0) | (i + 2 < n ? s[i + 2] : 0);
        fputc(t[v >> 18 & 63], o);
        fputc(t[v >> 12 & 63], o);
        fputc(i + 1 < n ? t[v >> 6 & 63] : '=', o);
        fputc(i + 2 < n ? t[v & 63] : '=', o);
    }
}

/* Read a whole file into a malloc'd buffer; *n its length.  NULL on failure. */
static unsigned char *slurp(const char *path, size_t *n)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        return NULL;
    unsigned char *b = NULL;
    size_t cap = 0;
    *n = 0;
    for (;;) {
        if (*n == cap) {
            unsigned char *nb = realloc(b, cap = cap ? cap * 2 : 65536);
            if (!nb) {
                free(b);
                fclose(f);
                return NULL;
            }
            b = nb;
        }
        size_t got = fread(b + *n, 1, cap - *n, f);
        *n += got;
        if (got == 0)
            break;
    }
    fclose(f);
    return b;
}

/* The quantity an expect compares: its text between "expect " and the first
 * comparison ("probe" of "expect probe between 1 V and 2 V"). */
static void quantity_text(const char *text, char *buf, size_t n)
{
    static const char *const cmp[] = {" between ", " <= ", " >= ", " < ", " > ", " = ", " == ", " != "};
    const char *q = strncmp(text, "expect ", 7) == 0 ? text + 7 : text, *end = q + strlen(q);
    for (size_t i = 0; i < sizeof cmp / sizeof cmp[0]; i++) {
        const char *at = strstr(q, cmp[i]);
        if (at && at < end)
            end = at;
    }
    snprintf(buf, n, "%.*s", (int)(end - q), q);
}

/* One histogram of check row's quantity: drawn by the tol command's plotter
 * into a scratch SVG, embedded as an image.  Returns 0 or -1. */
static int histogram(FILE *o, ls_session *s, const ls_check *ck, const char *dir, int k)
{
    double *v;
    if (ls_tol_sample(s, ck->lhs, LS_HTML_TRIALS, 1, &v) != 0)
        return -1;
    char q[200], title[300], path[600], msg[200];
    quantity_text(ck->text, q, sizeof q);
    snprintf(title, sizeof title, "%s: Monte Carlo, %ld trials (uniform within tol=, seed 1)", q, LS_HTML_TRIALS);
    snprintf(path, sizeof path, "%s/h%d.svg", dir, k);
    /* the expect's limits as lines on the histogram */
    ls_check_result cr;
    ls_check_eval(&s->op, ck, &cr);
    const char *unit = ls_unit_of(ck->lhs->dims, s->cli->ascii);
    ls_plot_mark marks[2];
    char lab[2][80], b[48];
    size_t nm = 0;
    if (isfinite(cr.lo)) {
        snprintf(lab[nm], sizeof lab[nm], "expect \xE2\x89\xA5 %s", ls_fmt_eng(b, sizeof b, cr.lo, unit, 4, s->cli->ascii));
        marks[nm] = (ls_plot_mark){cr.lo, lab[nm]};
        nm++;
    }
    if (isfinite(cr.hi)) {
        snprintf(lab[nm], sizeof lab[nm], "expect \xE2\x89\xA4 %s", ls_fmt_eng(b, sizeof b, cr.hi, unit, 4, s->cli->ascii));
        marks[nm] = (ls_plot_mark){cr.hi, lab[nm]};
        nm++;
    }
    ls_plot_hist h = {.title = title, .xlabel = q, .xunit = unit, .ylabel = "trials", .values = v,
                      .n = (size_t)LS_HTML_TRIALS, .marks = marks, .nmarks = nm};
    int rc = ls_plot_hist_write(&h, path, msg, sizeof msg);
    free(v);
    size_t n;
    unsigned char *svg = rc == LS_PLOT_OK ? slurp(path, &n) : NULL;
    unlink(path);
    if (!svg)
        return -1;
    fputs("<figure><img alt=\"Histogram of ", o);
    esc(o, title);
    fputs("\" src=\"data:image/svg+xml;base64,", o);
    base64(o, svg, n);
    fputs("\"><figcaption>", o);
    esc(o, title);
    fputs("</figcaption></figure>\n", o);
    free(svg);
    return 0;
}

/* The histograms of the distinct quantities the expects name.  Returns 0, or
 * -1 after saying which one could not be drawn (its trials or its picture ran
 * out of memory): a page without it is not the page asked for. */
static int histograms_section(FILE *o, ls_session *s)
{
    const ls_netlist *nl = &s->nl;
    bool tol = false;
    for (int i = 0; i < nl->nparts; i++)
        tol |= ls_part_opt(&nl->parts[i], "tol", 0) > 0;
    if (!s->cli->plot_all && !tol)
        return 0;
    fputs("<h2 id=\"tolerance\">Tolerance: the checked quantities over the parts' tol=</h2>\n", o);
    if (!tol) {
        fputs("<p>No part has a <code>tol=</code>: nothing varies.</p>\n", o);
        return 0;
    }
    const char *tmp = getenv("TMPDIR");
    char dir[512];
    snprintf(dir, sizeof dir, "%s/loadstack-html-XXXXXX", tmp && *tmp ? tmp : "/tmp");
    if (!mkdtemp(dir)) {
        fputs("<p>The histograms could not be drawn (no scratch folder).</p>\n", o);
        return 0;
    }
    int shown = 0;
    for (int i = 0; i < nl->nchecks && shown < MAX_HISTOGRAMS; i++) {
        const ls_check *ck = &nl->checks[i];
        bool seen = ck->is_rule || !ck->lhs;
        for (int j = 0; j < i && !seen; j++)
            seen = !nl->checks[j].is_rule && nl->checks[j].lhs && ls_q_same(nl->checks[j].lhs, ck->lhs);
        if (seen)
            continue;
        if (histogram(o, s, ck, dir, shown) != 0) {
            rmdir(dir);
            fprintf(stderr, "loadstack: error: the histogram of '%s' (%ld trials) could not be drawn: out of memory, "
                    "or no room in the scratch folder '%s'\n", ck->text, (long)LS_HTML_TRIALS, dir);
            return -1;
        }
        shown++;
    }
    rmdir(dir);
    if (!shown)
        fputs("<p>No <code>expect</code> names a quantity to draw.</p>\n", o);
    return 0;
}

/* ---- the page ---------------------------------------------------------------------------- */

static void head(FILE *o, ls_session *s)
{
    const char *title = s->nl.title ? s->nl.title : "(untitled circuit)";
    fputs("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
          "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n<meta name=\"generator\" "
          "content=\"loadstack " LS_VERSION "\">\n<title>",
          o);
    esc(o, title);
    fprintf(o, " \xE2\x80\x94 loadstack</title>\n<style>\n%s.sr{position:absolute;left:-9999px}\n</style>\n</head>\n"
               "<body>\n<header>\n<h1>",
            css);
    esc(o, title);
    fputs("</h1>\n<p class=\"meta\">", o);
    esc(o, s->input_path);
    fprintf(o, " &middot; loadstack %s %s &middot; DC operating point, %d unknowns", LS_VERSION, s->cli->command,
            s->op.mna.n);
    for (int i = 0; i < s->cli->nsets; i++) {
        fputs(" &middot; --set ", o);
        esc(o, s->cli->sets[i]);
    }
    fputs("</p>\n</header>\n<main>\n", o);
}

static int page(FILE *o, ls_session *s, const ls_chain *c, const ls_chain_pic *pic, const ls_checks *ch,
                const ls_results *res)
{
    ls_report rp = {.out = o, .fmt = FMT_HTML, .ascii = s->cli->ascii, .sig = 4, .diags = &s->diags};
    head(o, s);
    summary(o, &s->op, c, &s->diags);
    fputs("<h2 id=\"chain\">The chain</h2>\n<figure>\n", o);
    ls_chain_svg(pic, o, true);
    fputs("<figcaption>Each box is a stage (the circuit cut at its ports; supply rails do not join stages); each arrow "
          "a port from driver to load, with its zout, zin, ratio, sag and verdict (colour, mark and word; ok solid, "
          "marginal dashed, loading thick and dashed).</figcaption>\n</figure>\n",
          o);
    stages_section(o, &s->nl, c);
    if (c->nconns)
        ports_section(o, &rp, &s->op, c);
    nodes_section(o, &rp, &s->op);
    parts_section(o, &rp, &s->op);
    opamps_section(o, &rp, &s->op);
    adcs_section(o, &rp, res);
    checks_section(o, &rp, ch);
    warnings_section(o, &s->diags);
    if (histograms_section(o, s) != 0)
        return LS_EXIT_UNSOLVABLE;
    fputs("</main>\n<footer><p class=\"meta\">Made by loadstack from the circuit file alone; a DC analysis, no "
          "substitute for measurement, local codes or licensed practice.</p></footer>\n</body>\n</html>\n",
          o);
    return LS_EXIT_OK;
}

int ls_html_page(FILE *o, ls_session *s, const ls_chain *c, const ls_chain_pic *pic)
{
    ls_chain own = {0};
    ls_chain_pic *own_pic = NULL;
    ls_checks ch;
    int code = LS_EXIT_OK;
    if (!c) {
        if (ls_chain_build(&s->nl, &own) != 0)
            code = LS_EXIT_UNSOLVABLE;
        c = &own;
    }
    if (code == LS_EXIT_OK)
        ls_chain_ports(&s->op, c);
    if (code == LS_EXIT_OK && !pic) {
        pic = own_pic = ls_chain_layout(&s->op, c, s->nl.title, s->cli->ascii);
        if (!pic)
            code = LS_EXIT_UNSOLVABLE;
    }
    if (code == LS_EXIT_OK && ls_checks_run(&s->op, false, &ch) != 0)
        code = LS_EXIT_UNSOLVABLE;
    ls_results res = {0};
    if (code == LS_EXIT_OK && ls_results_compute(&res, &s->op, LS_NEED_PORTS | LS_NEED_ADCS) != 0) {
        ls_checks_free(&ch);
        code = LS_EXIT_UNSOLVABLE;
    }
    if (code == LS_EXIT_OK) {
        code = page(o, s, c, pic, &ch, &res);
        ls_checks_free(&ch);
        ls_results_free(&res);
    } else {
        fprintf(stderr, "loadstack: error: out of memory\n");
    }
    ls_chain_pic_free(own_pic);
    if (c == &own)
        ls_chain_free(&own);
    return code;
}
