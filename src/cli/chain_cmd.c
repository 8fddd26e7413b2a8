/* chain_cmd.c — the chain command: the stages in signal order and every
 * connection's loading numbers and verdict, as text, JSON, CSV or an HTML
 * page, with an optional drawing (--plot).  The numbers are the port report's
 * (ls_op_port), the same the solve report prints. */
#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "analysis/chain.h"
#include "elab/elab.h"
#include "report/chain_plot.h"
#include "cli/cli.h"
#include "base/fmt.h"
#include "cli/html.h"
#include "report/jsonw.h"
#include "report/writer.h"
#include "parts/parts.h"

/* The port fields a connection shows, in order. */
#define NCONN_FIELDS 4
static const ls_prop conn_fields[NCONN_FIELDS] = {PROP_ZOUT, PROP_ZIN, PROP_RATIO, PROP_SAG};

/* ---- stages --------------------------------------------------------------------------- */

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

/* The text's list of a stage's parts, cut after about 150 bytes. */
static const char *stage_parts(const ls_netlist *nl, const ls_stage *st, char *buf, size_t n)
{
    buf[0] = 0;
    for (int k = 0; k < st->nparts; k++) {
        size_t l = strlen(buf);
        if (l > 150) {
            snprintf(buf + l, n - l, ", ... (%d parts)", st->nparts);
            break;
        }
        snprintf(buf + l, n - l, "%s%s", k ? ", " : "", nl->parts[st->parts[k]].name);
    }
    return st->nparts ? buf : "(no parts: a node between two ports)";
}

/* The stages in signal order: the text's table, JSON's "stages" (each on one
 * line: name, named_by, its parts and what it holds). */
static void stages_write(ls_wr *w, const ls_netlist *nl, const ls_chain *c)
{
    static const ls_wr_col cols[] = {
        {.head = "#", .right = true}, {.json = "name", .head = "stage"}, {.json = "named_by"},
        {.head = "holds"},            {.head = "parts"},
    };
    static const ls_wr_style quiet = {.skip_empty = true};
    ls_wr_say(w, "Stages, in signal order (%d)\n", c->nstages);
    if (!c->nstages)
        ls_wr_say(w, "  (none: every part sits between ground and the supply rails)\n");
    ls_wr_table(w, "stages", cols, (int)(sizeof cols / sizeof *cols), &quiet);
    for (int i = 0; i < c->nstages; i++) {
        const ls_stage *st = &c->stages[i];
        char roles[64], parts[200];
        ls_wr_cell_int(w, i + 1);
        ls_wr_cell_str(w, st->name);
        ls_wr_cell_str(w, st->named_by);
        ls_wr_cell_str(w, stage_roles(st, roles, sizeof roles));
        ls_wr_cell_str(w, stage_parts(nl, st, parts, sizeof parts));
        ls_wr_arr(w, "parts");
        for (int k = 0; k < st->nparts; k++)
            ls_wr_str(w, NULL, nl->parts[st->parts[k]].name);
        ls_wr_end(w);
        ls_wr_arr(w, "has");
        for (int b = 0; b < LS_STAGE_NFLAGS; b++)
            if (st->has >> b & 1u)
                ls_wr_str(w, NULL, ls_stage_flag_word(b, true));
        ls_wr_end(w);
        ls_wr_row(w);
    }
    ls_wr_table_end(w);
}

/* ---- connections ---------------------------------------------------------------------- */

/* "3 name" for a stage end, or the rail node's name. */
static char *end_text(const ls_chain *c, const ls_netlist *nl, int stage, int node, char *buf, size_t n)
{
    if (stage >= 0)
        snprintf(buf, n, "%d %s", stage + 1, c->stages[stage].name);
    else
        snprintf(buf, n, "%s (%s)", nl->nodes[node].name, node == 0 ? "ground" : "rail");
    return buf;
}

/* A stage index cell; none for an end on ground or a rail. */
static void stage_cell(ls_wr *w, int s)
{
    if (s >= 0)
        ls_wr_cell_int(w, s);
    else
        ls_wr_cell_null(w, LS_WHY_NONE);
}

/* The connections: each format's columns (JSON's port fields, budget and
 * verdict; CSV's stage names; text's joined from -> to and zout -> zin). */
static const ls_wr_col conn_cols[] = {
    {.json = "port", .csv = "port", .head = "port"},
    {.json = "from_stage", .csv = "from_stage"},
    {.json = "to_stage", .csv = "to_stage"},
    {.csv = "from"},
    {.csv = "to"},
    {.head = "from -> to"},
    {.json = "mode"},
    {.json = "zout", .csv = "zout"},
    {.json = "zin", .csv = "zin"},
    {.head = "zout -> zin"},
    {.json = "ratio", .csv = "ratio", .head = "ratio", .right = true},
    {.json = "sag", .csv = "sag", .head = "sag", .right = true},
    {.csv = "verdict"},
    {.head = "mode"},
    {.head = "verdict"},
};
_Static_assert(sizeof conn_cols / sizeof *conn_cols <= LS_WR_MAXCOL, "the writer's columns");

/* One connection's row. */
static void conn_row(ls_wr *w, ls_op *op, const ls_chain *c, const ls_conn *k)
{
    ls_report *rp = w->rp;
    const ls_netlist *nl = op->nl;
    const ls_part *p = &nl->parts[k->port];
    const ls_port_result *pr = ls_op_port(op, k->port);
    const char *OHM = ls_unit_of(LS_OHM, rp->ascii), *ARROW = rp->ascii ? "->" : "\xE2\x86\x92";
    const char *mode = pr->current_mode ? "current" : "voltage";
    char a[160], b[160], conn[400], z1[64], z2[64], zz[160], r[64], sag[64], sagt[96], verdict[64];
    assert(conn_fields[0] == PROP_ZOUT && conn_fields[1] == PROP_ZIN && conn_fields[2] == PROP_RATIO &&
           conn_fields[3] == PROP_SAG);
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
    ls_wr_cell_str(w, p->name);
    stage_cell(w, k->from);
    stage_cell(w, k->to);
    ls_wr_cell_str(w, k->from >= 0 ? c->stages[k->from].name : "");
    ls_wr_cell_str(w, k->to >= 0 ? c->stages[k->to].name : "");
    ls_wr_cell_str(w, conn);
    ls_wr_cell_str(w, mode);
    ls_wr_cell_num(w, pr->zout, NULL);
    ls_wr_cell_num(w, pr->zin, NULL);
    ls_wr_cell_str(w, zz);
    ls_wr_cell_eng(w, pr->ratio, "", NULL);
    ls_wr_cell_num(w, pr->sag, sagt);
    ls_report_budget(w, pr);
    ls_wr_str(w, "verdict", ls_verdict_word(pr->verdict));
    ls_wr_cell_str(w, ls_verdict_word(pr->verdict));
    ls_wr_cell_str(w, mode);
    ls_wr_cell_str(w, verdict);
    ls_wr_row(w);
}

/* The connections: the table (JSON's "connections", CSV's rows) and in text
 * the fix of each that fails. */
static void conns_write(ls_wr *w, ls_op *op, const ls_chain *c)
{
    ls_report *rp = w->rp;
    const char *ARROW = rp->ascii ? "->" : "\xE2\x86\x92";
    if (c->nconns)
        ls_wr_say(w, "\nConnections (ports; zin/zout should be at least %g)\n", ls_op_min_ratio(op));
    else
        ls_wr_say(w, "\nNo connections: the circuit has no port.  Mark each connection between stages with\n"
                     "'port NAME DRIVER -> LOAD' to see its loading.\n");
    static const ls_wr_style quiet = {.skip_empty = true};
    ls_wr_table(w, "connections", conn_cols, (int)(sizeof conn_cols / sizeof *conn_cols), &quiet);
    for (int i = 0; i < c->nconns; i++)
        conn_row(w, op, c, &c->conns[i]); /* a connection on one line */
    ls_wr_table_end(w);
    for (int i = 0; i < c->nconns; i++) {
        char fix[200];
        if (*ls_chain_fix(op, c->conns[i].port, fix, sizeof fix, rp->ascii, rp->sig_given ? rp->sig : 3))
            ls_wr_say(w, "  %s %s: %s\n", ARROW, op->nl->parts[c->conns[i].port].name, fix);
    }
}

/* ---- rails and the supply --------------------------------------------------------------- */

/* The supply rails (JSON's "rails": node and source, null when none), the
 * parts on the supply only and whether the stages close a loop. */
static void supply_write(ls_wr *w, const ls_netlist *nl, const ls_chain *c)
{
    static const ls_wr_col cols[] = {{.json = "node"}, {.json = "source"}};
    if (c->cyclic)
        ls_wr_say(w, "\nSome ports close a loop between stages; the order breaks it at the first-declared stage.\n");
    int nrails = 0;
    for (int n = 1; n < nl->nnodes; n++)
        nrails += c->rail[n];
    if (nrails)
        ls_wr_say(w, "\nSupply rails (they feed the stages and do not join them):");
    ls_wr_table(w, "rails", cols, 2, NULL);
    for (int n = 1, k = 0; n < nl->nnodes; n++) {
        if (!c->rail[n])
            continue;
        int src = ls_chain_rail_source(nl, c, n);
        ls_wr_say(w, "%s %s (%s)", k++ ? "," : "", nl->nodes[n].name, src >= 0 ? nl->parts[src].name : "?");
        ls_wr_cell_str(w, nl->nodes[n].name);
        ls_wr_cell_str(w, src >= 0 ? nl->parts[src].name : NULL); /* null: "none" */
        ls_wr_row(w);
    }
    ls_wr_table_end(w);
    if (nrails)
        ls_wr_say(w, "\n");
    if (c->nsupply)
        ls_wr_say(w, "Parts on the supply only:");
    ls_wr_arr(w, "supply_parts");
    for (int k = 0; k < c->nsupply; k++) {
        ls_wr_say(w, "%s %s", k ? "," : "", nl->parts[c->supply_parts[k]].name);
        ls_wr_str(w, NULL, nl->parts[c->supply_parts[k]].name);
    }
    ls_wr_end(w);
    if (c->nsupply)
        ls_wr_say(w, "\n");
    ls_wr_bool(w, "loop", c->cyclic);
}

/* The chain report, one description for text, JSON and CSV. */
static void chain_write(ls_wr *w, ls_session *s, const ls_chain *c)
{
    const ls_netlist *nl = &s->nl;
    ls_wr_str(w, "title", nl->title);
    ls_wr_say(w, "%s\n\n", nl->title ? nl->title : "(untitled circuit)");
    stages_write(w, nl, c);
    conns_write(w, &s->op, c);
    supply_write(w, nl, c);
}

/* ---- the command ---------------------------------------------------------------------- */

/* Write the report in the chosen format; returns the exit code. */
static int chain_output(ls_session *s, const ls_chain *c, const ls_chain_pic *pic)
{
    ls_cli *cli = s->cli;
    FILE *o = ls_out_open(cli);
    ls_report rp = ls_report_for(s, o);
    int code = LS_EXIT_OK;
    if (cli->fmt == FMT_HTML) {   /* the page has its own layout (DEVELOPERS.md, "The HTML page") */
        code = ls_html_page(o, s, c, pic);
    } else {
        ls_wr w;
        ls_wr_begin(&w, &rp);
        chain_write(&w, s, c);
        ls_wr_finish(&w);
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
