/* chain_cmd.c — the chain command: the stages in signal order and every
 * connection's loading numbers and verdict, as text, JSON, CSV or an HTML
 * page, with an optional drawing (--plot).  The numbers are the port report's
 * (ls_op_port), the same the solve report prints. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "analysis/chain.h"
#include "netlist/elab.h"
#include "report/chain_plot.h"
#include "cli/cli.h"
#include "base/fmt.h"
#include "cli/html.h"
#include "report/jsonw.h"
#include "parts/parts.h"

/* ---- JSON ---------------------------------------------------------------------------- */

/* A stage index, or null ("none": an end on ground or a rail has no stage). */
static void stage_ref(ls_jw *w, const char *key, int s)
{
    if (s >= 0)
        ls_jw_int(w, key, s);
    else
        ls_jw_null(w, key, LS_WHY_NONE);
}

/* The port fields a connection shows, in order. */
#define NCONN_FIELDS 4
static const ls_prop conn_fields[NCONN_FIELDS] = {PROP_ZOUT, PROP_ZIN, PROP_RATIO, PROP_SAG};

static void conn_json(ls_jw *w, ls_op *op, const ls_conn *k)
{
    const ls_netlist *nl = op->nl;
    const ls_port_result *pr = ls_op_port(op, k->port);
    ls_jw_obj(w, NULL);
    ls_jw_str(w, "port", nl->parts[k->port].name);
    stage_ref(w, "from_stage", k->from);
    stage_ref(w, "to_stage", k->to);
    ls_jw_str(w, "mode", pr->current_mode ? "current" : "voltage");
    for (int f = 0; f < NCONN_FIELDS; f++)
        ls_jw_num(w, ls_prop_name(conn_fields[f]), ls_port_value(pr, conn_fields[f]));
    ls_report_budget_json(w, pr);
    ls_jw_str(w, "verdict", ls_verdict_word(pr->verdict));
    ls_jw_end(w);
}

static void chain_json(ls_report *rp, ls_session *s, const ls_chain *c)
{
    const ls_netlist *nl = &s->nl;
    ls_jw jw, *w = &jw;
    ls_report_json_begin(rp, w);
    ls_jw_str(w, "title", nl->title);
    ls_jw_arr(w, "stages");
    for (int i = 0; i < c->nstages; i++) {
        const ls_stage *st = &c->stages[i];
        ls_jw_obj(w, NULL); /* a stage on one line */
        ls_jw_str(w, "name", st->name);
        ls_jw_str(w, "named_by", st->named_by);
        ls_jw_arr(w, "parts");
        for (int k = 0; k < st->nparts; k++)
            ls_jw_str(w, NULL, nl->parts[st->parts[k]].name);
        ls_jw_end(w);
        ls_jw_arr(w, "has");
        for (int b = 0; b < LS_STAGE_NFLAGS; b++)
            if (st->has >> b & 1u)
                ls_jw_str(w, NULL, ls_stage_flag_word(b, true));
        ls_jw_end(w);
        ls_jw_end(w);
    }
    ls_jw_end(w);
    ls_jw_arr(w, "connections");
    for (int i = 0; i < c->nconns; i++)
        conn_json(w, &s->op, &c->conns[i]); /* a connection on one line */
    ls_jw_end(w);
    ls_jw_arr(w, "rails");
    for (int n = 1; n < nl->nnodes; n++) {
        if (!c->rail[n])
            continue;
        int src = ls_chain_rail_source(nl, c, n);
        ls_jw_obj(w, NULL);
        ls_jw_str(w, "node", nl->nodes[n].name);
        ls_jw_str(w, "source", src >= 0 ? nl->parts[src].name : NULL); /* null: "none" */
        ls_jw_end(w);
    }
    ls_jw_end(w);
    ls_jw_arr(w, "supply_parts");
    for (int k = 0; k < c->nsupply; k++)
        ls_jw_str(w, NULL, nl->parts[c->supply_parts[k]].name);
    ls_jw_end(w);
    ls_jw_bool(w, "loop", c->cyclic);
    ls_report_json_end(rp, w);
}

/* ---- CSV ------------------------------------------------------------------------------ */

static void csv_num(FILE *o, double v)
{
    fputc(',', o);
    fputs(LS_CSV(v), o);
}

static void chain_csv(FILE *o, ls_session *s, const ls_chain *c)
{
    fputs("port,from_stage,to_stage,from,to", o);
    for (int f = 0; f < NCONN_FIELDS; f++)
        fprintf(o, ",%s", ls_prop_name(conn_fields[f]));
    fputs(",verdict\n", o);
    for (int i = 0; i < c->nconns; i++) {
        const ls_conn *k = &c->conns[i];
        const ls_port_result *pr = ls_op_port(&s->op, k->port);
        ls_csv_field(o, s->nl.parts[k->port].name);
        fputc(',', o);
        if (k->from >= 0)
            fprintf(o, "%d", k->from);
        fputc(',', o);
        if (k->to >= 0)
            fprintf(o, "%d", k->to);
        fputc(',', o);
        ls_csv_field(o, k->from >= 0 ? c->stages[k->from].name : "");
        fputc(',', o);
        ls_csv_field(o, k->to >= 0 ? c->stages[k->to].name : "");
        for (int f = 0; f < NCONN_FIELDS; f++)
            csv_num(o, ls_port_value(pr, conn_fields[f]));
        fprintf(o, ",%s\n", ls_verdict_word(pr->verdict));
    }
}

/* ---- text ----------------------------------------------------------------------------- */

/* The stage's role words ("op-amp, ADC") into buf. */
static char *stage_roles(const ls_stage *st, char *buf, size_t n)
{
    buf[0] = 0;
    for (int b = 0; b < LS_STAGE_NFLAGS; b++)
        if (st->has >> b & 1u) {
            size_t l = strlen(buf);
            snprintf(buf + l, n - l, "%s%s", l ? ", " : "", ls_stage_flag_word(b, false));
        }
    return buf;
}

/* "3 name" for a stage end, or the rail node's name. */
static char *end_text(const ls_chain *c, const ls_netlist *nl, int stage, int node, char *buf, size_t n)
{
    if (stage >= 0)
        snprintf(buf, n, "%d %s", stage + 1, c->stages[stage].name);
    else
        snprintf(buf, n, "%s (%s)", nl->nodes[node].name, node == 0 ? "ground" : "rail");
    return buf;
}

static void stages_text(FILE *o, ls_report *rp, const ls_netlist *nl, const ls_chain *c)
{
    (void)rp;
    fprintf(o, "Stages, in signal order (%d)\n", c->nstages);
    if (!c->nstages) {
        fputs("  (none: every part sits between ground and the supply rails)\n", o);
        return;
    }
    char **cells = calloc((size_t)c->nstages * 4 + 1, sizeof *cells);
    if (!cells) {
        rp->nomem = "the table of stages";
        rp->nomem_bytes = ((size_t)c->nstages * 4 + 1) * sizeof *cells;
        return;
    }
    for (int i = 0; i < c->nstages; i++) {
        const ls_stage *st = &c->stages[i];
        char num[16], roles[64], parts[200];
        snprintf(num, sizeof num, "%d", i + 1);
        parts[0] = 0;
        for (int k = 0; k < st->nparts; k++) {
            size_t l = strlen(parts);
            if (l > 150) {
                snprintf(parts + l, sizeof parts - l, ", ... (%d parts)", st->nparts);
                break;
            }
            snprintf(parts + l, sizeof parts - l, "%s%s", k ? ", " : "", nl->parts[st->parts[k]].name);
        }
        cells[4 * i] = strdup(num);
        cells[4 * i + 1] = strdup(st->name);
        cells[4 * i + 2] = strdup(stage_roles(st, roles, sizeof roles));
        cells[4 * i + 3] = strdup(st->nparts ? parts : "(no parts: a node between two ports)");
        for (int j = 0; j < 4; j++)
            if (!cells[4 * i + j]) /* a cell lost is a table that is not whole */
                rp->nomem = "the table of stages";
    }
    const char *head[4] = {"#", "stage", "holds", "parts"};
    const bool right[4] = {true, false, false, false};
    ls_text_table(rp, 4, head, right, (const char *const *)cells, c->nstages);
    for (int i = 0; i < 4 * c->nstages; i++)
        free(cells[i]);
    free(cells);
}

static void conns_text(FILE *o, ls_report *rp, ls_op *op, const ls_chain *c)
{
    const ls_netlist *nl = op->nl;
    const char *OHM = ls_unit_of(LS_OHM, rp->ascii), *ARROW = rp->ascii ? "->" : "\xE2\x86\x92";
    enum { NC = 7 };
    char **cells = calloc((size_t)c->nconns * NC + 1, sizeof *cells);
    if (!cells) {
        rp->nomem = "the table of connections";
        rp->nomem_bytes = ((size_t)c->nconns * NC + 1) * sizeof *cells;
        return;
    }
    for (int i = 0; i < c->nconns; i++) {
        const ls_conn *k = &c->conns[i];
        const ls_part *p = &nl->parts[k->port];
        const ls_port_result *pr = ls_op_port(op, k->port);
        char a[160], b[160], conn[400], z1[64], z2[64], zz[160], r[64], sag[64], sagt[96], verdict[64];
        snprintf(verdict, sizeof verdict, "%s (%s)", ls_verdict_word(pr->verdict), pr->by_budget ? "budget" : "ratio");
        snprintf(conn, sizeof conn, "%s %s %s", end_text(c, nl, k->from, p->pin[0], a, sizeof a), ARROW,
                 end_text(c, nl, k->to, p->pin[1], b, sizeof b));
        snprintf(zz, sizeof zz, "%s %s %s", ls_eng(rp, z1, sizeof z1, pr->zout, OHM), ARROW,
                 ls_eng(rp, z2, sizeof z2, pr->zin, OHM));
        ls_eng(rp, sag, sizeof sag, pr->sag, pr->current_mode ? "A" : "V");
        if (isfinite(pr->sag_rel) && pr->sag != 0)
            snprintf(sagt, sizeof sagt, "%s (%s%%)", sag, ls_fixed(rp, r, sizeof r, "%.3g", pr->sag_rel * 100));
        else
            snprintf(sagt, sizeof sagt, "%s", sag);
        const char *row[NC] = {p->name, conn, zz, ls_eng(rp, r, sizeof r, pr->ratio, ""), sagt,
                               pr->current_mode ? "current" : "voltage", verdict};
        for (int j = 0; j < NC; j++)
            if (!(cells[NC * i + j] = strdup(row[j])))
                rp->nomem = "the table of connections";
    }
    const char *head[NC] = {"port", "from -> to", "zout -> zin", "ratio", "sag", "mode", "verdict"};
    const bool right[NC] = {false, false, false, true, true, false, false};
    ls_text_table(rp, NC, head, right, (const char *const *)cells, c->nconns);
    for (int i = 0; i < NC * c->nconns; i++)
        free(cells[i]);
    free(cells);
    for (int i = 0; i < c->nconns; i++) {
        char fix[200];
        if (*ls_chain_fix(op, c->conns[i].port, fix, sizeof fix, rp->ascii, rp->sig_given ? rp->sig : 3))
            fprintf(o, "  %s %s: %s\n", ARROW, nl->parts[c->conns[i].port].name, fix);
    }
}

static void chain_text(FILE *o, ls_report *rp, ls_session *s, const ls_chain *c)
{
    const ls_netlist *nl = &s->nl;
    fprintf(o, "%s\n\n", nl->title ? nl->title : "(untitled circuit)");
    stages_text(o, rp, nl, c);
    if (c->nconns) {
        fprintf(o, "\nConnections (ports; zin/zout should be at least %g)\n", ls_op_min_ratio(&s->op));
        conns_text(o, rp, &s->op, c);
    } else {
        fputs("\nNo connections: the circuit has no port.  Mark each connection between stages with\n"
              "'port NAME DRIVER -> LOAD' to see its loading.\n",
              o);
    }
    if (c->cyclic)
        fputs("\nSome ports close a loop between stages; the order breaks it at the first-declared stage.\n", o);
    int nrails = 0;
    for (int n = 1; n < nl->nnodes; n++)
        nrails += c->rail[n];
    if (nrails) {
        fputs("\nSupply rails (they feed the stages and do not join them):", o);
        for (int n = 1, k = 0; n < nl->nnodes; n++) {
            if (!c->rail[n])
                continue;
            int src = ls_chain_rail_source(nl, c, n);
            fprintf(o, "%s %s (%s)", k++ ? "," : "", nl->nodes[n].name, src >= 0 ? nl->parts[src].name : "?");
        }
        fputc('\n', o);
    }
    if (c->nsupply) {
        fputs("Parts on the supply only:", o);
        for (int k = 0; k < c->nsupply; k++)
            fprintf(o, "%s %s", k ? "," : "", nl->parts[c->supply_parts[k]].name);
        fputc('\n', o);
    }
}

/* ---- the command ---------------------------------------------------------------------- */

/* Write the report in the chosen format; returns the exit code. */
static int chain_output(ls_session *s, const ls_chain *c, const ls_chain_pic *pic)
{
    ls_cli *cli = s->cli;
    FILE *o = ls_out_open(cli);
    ls_report rp = ls_report_for(s, o);
    int code = LS_EXIT_OK;
    switch (cli->fmt) {
    case FMT_JSON: chain_json(&rp, s, c); break;
    case FMT_CSV: chain_csv(o, s, c); break;
    case FMT_TEXT: chain_text(o, &rp, s, c); break;
    case FMT_HTML: code = ls_html_page(o, s, c, pic); break;
    }
    return ls_out_close(cli, ls_session_verdict(s, ls_report_done(&rp, code)));
}

int ls_cmd_chain(ls_cli *cli)
{
    ls_session s;
    int code = ls_session_load(&s, cli, cli->pos[0], NULL);
    if (code == LS_EXIT_OK)
        code = ls_session_solve(&s);
    ls_chain c = {0};
    ls_chain_pic *pic = NULL;
    if (code == LS_EXIT_OK && ls_chain_build(&s.nl, &c) != 0) {
        fprintf(stderr, "loadstack: error: out of memory\n");
        code = LS_EXIT_UNSOLVABLE;
    }
    if (code == LS_EXIT_OK)
        ls_chain_ports(&s.op, &c);   /* the connections' port reports, read by the picture and the report */
    if (code == LS_EXIT_OK && (cli->plot || cli->fmt == FMT_HTML)) {
        pic = ls_chain_layout(&s.op, &c, s.nl.title, cli->ascii);
        if (!pic) {
            fprintf(stderr, "loadstack: error: out of memory\n");
            code = LS_EXIT_UNSOLVABLE;
        }
    }
    char msg[300];
    if (code == LS_EXIT_OK && cli->plot && ls_chain_plot_write(pic, &cli->plot_dest, msg, sizeof msg) != 0) {
        fprintf(stderr, "loadstack: error: cannot draw '%s': %s\n", cli->plot, msg);
        code = LS_EXIT_USAGE;
    }
    if (code == LS_EXIT_OK)
        code = chain_output(&s, &c, pic);
    ls_diags_print(&s.diags, stderr);
    ls_chain_pic_free(pic);
    ls_chain_free(&c);
    ls_session_free(&s);
    return code;
}
