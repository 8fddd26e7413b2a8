/* loading_cmds.c — the sag, thevenin and influence commands. */
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "report/textbuf.h"
#include "report/writer.h"
#include "elab/elab.h"
#include "base/fmt.h"
#include "lang/parser.h"
#include "analysis/newton.h"
#include "analysis/sag.h"
#include "analysis/sens.h"
#include "analysis/thevenin.h"
#include "analysis/variant.h"
#include "base/suggest.h"

/* "did you mean" for a name that is neither a node nor (where allowed) a port. */
static void no_such_name(ls_session *s, const char *name, const char *file, bool ports)
{
    ls_suggest near;
    ls_suggest_init(&near, name, 3);
    for (int i = 0; i < s->nl.nnodes; i++)
        ls_suggest_try(&near, s->nl.nodes[i].name);
    for (int i = 0; ports && i < s->nl.nparts; i++)
        if (s->nl.parts[i].kind->is_port)
            ls_suggest_try(&near, s->nl.parts[i].name);
    const char *what = ports ? "node or port" : "node";
    if (near.best)
        ls_error(&s->diags, LS_NOLOC, "no %s '%s' in %s; did you mean '%s'?", what, name, file, near.best);
    else
        ls_error(&s->diags, LS_NOLOC, "no %s '%s' in %s", what, name, file);
}

/* Load, solve and find NODE (or, when port is not NULL, a PORT by that name:
 * then *node is -1 and *port its part index); on failure prints diagnostics
 * and returns the code. */
static int prepare_at(ls_session *s, ls_cli *cli, int *node, int *port)
{
    int code = ls_session_load(s, cli, cli->pos[0], NULL);
    if (port)
        *port = -1;
    if (code == LS_EXIT_OK && node) {
        *node = ls_netlist_find_node(&s->nl, cli->pos[1]);
        if (*node < 0 && port) {
            int p = ls_netlist_find_part(&s->nl, cli->pos[1]);
            if (p >= 0 && s->nl.parts[p].kind->is_port)
                *port = p;
        }
        if (*node < 0 && (!port || *port < 0)) {
            no_such_name(s, cli->pos[1], cli->pos[0], port != NULL);
            code = LS_EXIT_USAGE;
        }
    }
    if (code == LS_EXIT_OK)
        code = ls_session_solve(s);
    if (code != LS_EXIT_OK)
        ls_diags_print(&s->diags, stderr);
    return code;
}

static int prepare(ls_session *s, ls_cli *cli, int *node)
{
    return prepare_at(s, cli, node, NULL);
}

/* Close the report, print the diagnostics, free the session; the exit code. */
static int finish(ls_session *s, int code)
{
    code = ls_out_close(s->cli, ls_session_verdict(s, code));
    ls_diags_print(&s->diags, stderr);
    ls_session_free(s);
    return code;
}

/* ---- thevenin ------------------------------------------------------------------------------ */

/* --load and --meter take a resistance: a plain number or one in ohms.
 * Prints the usage error and returns false otherwise. */
static bool ohms_option(const char *opt, const char *text, double *v)
{
    ls_dims dims = LS_FREE;
    bool ok = ls_cli_number_dims(text, v, &dims);
    if (ok && dims.known && !ls_dims_eq(dims, LS_OHM)) {
        char buf[64];
        fprintf(stderr, "loadstack: error: %s takes a resistance (ohms), got %s ('%s')\n", opt,
                ls_dims_name(dims, buf, sizeof buf), text);
        return false;
    }
    if (!ok || !(*v > 0) || !isfinite(*v)) {
        fprintf(stderr, "loadstack: error: %s takes a positive resistance in ohms (e.g. 4.7k), not '%s'\n", opt, text);
        return false;
    }
    return true;
}

/* "  (limited: WHAT)" when a limit was active, then the end of the text line. */
static void limited_note(ls_wr *w, const char *limited)
{
    if (strcmp(limited, "none") != 0)
        ls_wr_say(w, "  (limited: %s)", limited);
    ls_wr_say(w, "\n");
}

/* What a meter of rmeter ohms reads at one side: the "meter" object (its
 * error in V and as a fraction of vth) and its text line. */
static void meter_report(ls_wr *w, const ls_th_side *t, double rmeter, int ind, const char *OHM)
{
    const ls_report *rp = w->rp;
    char b1[64], b2[64], b3[64];
    double err = t->meter_v - t->vth, rel = t->vth != 0 ? err / t->vth : NAN;
    ls_wr_obj(w, "meter");
    ls_wr_num(w, "r", rmeter);
    ls_wr_num(w, "reading", t->meter_v);
    ls_wr_num(w, "error", err);          /* V */
    ls_wr_num(w, "error_rel", rel);      /* a fraction of vth */
    ls_wr_end(w);
    ls_wr_say(w, "%*sa meter of %s input resistance reads %s (error %s", ind, "", ls_eng(rp, b1, sizeof b1, rmeter, OHM),
              ls_eng(rp, b2, sizeof b2, t->meter_v, "V"), ls_eng(rp, b3, sizeof b3, err, "V"));
    if (t->vth != 0 && isfinite(err))
        ls_wr_say(w, ", %s%%", ls_fixed(rp, b1, sizeof b1, "%.3g", 100 * err / t->vth));
    ls_wr_say(w, ")");
    limited_note(w, t->meter_limited);
}

/* One side's equivalent: JSON members, CSV field rows (named by the objects
 * they sit in: driver_vth, driver_load_r) and text lines indented by ind
 * spaces.  The node is a JSON member only (the text says it in its heading). */
static void side_report(ls_wr *w, const ls_netlist *nl, const ls_th_side *t, const ls_cli *cli, double rload,
                        double rmeter, bool norton, int ind, const char *rth_label)
{
    const ls_report *rp = w->rp;
    const char *OHM = ls_unit_of(LS_OHM, cli->ascii);
    char b1[64], b2[64], b3[64];
    ls_wr_csv_rows(w, false);
    ls_wr_str(w, "node", nl->nodes[t->node].name);
    ls_wr_csv_rows(w, true);
    ls_wr_num_why(w, "vth", t->vth, t->why_vth ? t->why_vth : ls_jw_why_of(t->vth));
    ls_wr_num(w, "rth", t->rth);
    ls_wr_say(w, "%*sopen-circuit voltage  vth     %s\n", ind, "", ls_eng(rp, b1, sizeof b1, t->vth, "V"));
    ls_wr_say(w, "%*s%-21s rth     %s\n", ind, "", rth_label, ls_eng(rp, b1, sizeof b1, t->rth, OHM));
    if (norton) {
        ls_wr_num_why(w, "norton", t->norton, t->why_norton ? t->why_norton : ls_jw_why_of(t->norton));
        ls_wr_say(w, "%*sshort-circuit current norton  %s", ind, "", ls_eng(rp, b1, sizeof b1, t->norton, "A"));
        limited_note(w, t->norton_limited);
    }
    if (cli->load) {
        ls_wr_obj(w, "load");
        ls_wr_num(w, "r", rload);
        ls_wr_num_why(w, "v", t->load_v, LS_WHY_UNSOLVED);
        ls_wr_num_why(w, "i", t->load_i, LS_WHY_UNSOLVED);
        ls_wr_str(w, "limited", t->load_limited);
        ls_wr_end(w);
        ls_wr_say(w, "%*swith a %s load: %s, %s", ind, "", ls_eng(rp, b1, sizeof b1, rload, OHM),
                  ls_eng(rp, b2, sizeof b2, t->load_v, "V"), ls_eng(rp, b3, sizeof b3, t->load_i, "A"));
        limited_note(w, t->load_limited);
    }
    if (cli->meter)
        meter_report(w, t, rmeter, ind, OHM);
}

/* The thevenin report, described once for every format (writer.h): at a
 * node its equivalent; at a port the driver side's (with --load and
 * --meter) and the load side's, and in text their ratio.  The CSV is one
 * row per field, named driver_vth, load_rth, ... at a port. */
static void thevenin_report(ls_report *rp, const ls_cli *cli, const ls_netlist *nl, int node, int port,
                            const ls_th_side *drv, const ls_th_side *ld, double rload, double rmeter)
{
    char b1[64];
    ls_wr w;
    ls_wr_begin(&w, rp);
    ls_wr_fields(&w, "field", "value");
    ls_wr_field_sep(&w, "_");
    if (port < 0) {
        ls_wr_say(&w, "Thevenin equivalent at '%s' (against ground)\n", nl->nodes[node].name);
        side_report(&w, nl, drv, cli, rload, rmeter, true, 2, "source resistance");
        ls_wr_finish(&w);
        return;
    }
    const ls_part *p = &nl->parts[port];
    ls_wr_say(&w, "Port '%s' (%s -> %s) opened: each side's equivalent against ground\n", p->name,
              nl->nodes[p->pin[0]].name, nl->nodes[p->pin[1]].name);
    ls_wr_csv_rows(&w, false);
    ls_wr_str(&w, "port", p->name);
    ls_wr_csv_rows(&w, true);
    ls_wr_say(&w, "  driver side, at '%s' (what the port delivers):\n", nl->nodes[p->pin[0]].name);
    ls_wr_obj(&w, "driver");
    side_report(&w, nl, drv, cli, rload, rmeter, true, 4, "source resistance");
    ls_wr_end(&w);
    ls_wr_say(&w, "  load side, at '%s' (what the port feeds):\n", nl->nodes[p->pin[1]].name);
    ls_cli none = {.ascii = cli->ascii};   /* no --load or --meter on the load side */
    ls_wr_obj(&w, "load");
    side_report(&w, nl, ld, &none, NAN, NAN, false, 4, "input resistance");
    ls_wr_end(&w);
    if (isfinite(drv->rth) && isfinite(ld->rth) && drv->rth > 0)
        ls_wr_say(&w, "  ratio zin/zout        %s\n", ls_eng(rp, b1, sizeof b1, ld->rth / drv->rth, ""));
    ls_wr_finish(&w);
}

/* loadstack thevenin FILE NODE|PORT [--load R] [--meter R]: vth, rth, Norton
 * current; for a port, the driver side's and the load side's. */
int ls_cmd_thevenin(ls_cli *cli)
{
    double rload = NAN, rmeter = NAN;
    if ((cli->load && !ohms_option("--load", cli->load, &rload)) ||
        (cli->meter && !ohms_option("--meter", cli->meter, &rmeter)))
        return LS_EXIT_USAGE;
    ls_session s;
    int node, port;
    int code = prepare_at(&s, cli, &node, &port);
    if (code != LS_EXIT_OK) {
        ls_session_free(&s);
        return code;
    }
    ls_op *op = &s.op;
    ls_th_side drv, ld;
    ls_thevenin_sides(op, node, port, rload, rmeter, &drv, &ld);
    if (drv.nomem || ld.nomem) { /* never a null "unsolved": memory is no property of the circuit */
        fprintf(stderr, "loadstack: error: out of memory in the Thevenin equivalent (the exact re-solves of %d "
                "unknowns)\n", op->mna.n);
        return finish(&s, LS_EXIT_UNSOLVABLE);
    }
    ls_report rp = ls_report_for(&s, ls_out_open(cli));
    thevenin_report(&rp, cli, &s.nl, node, port, &drv, &ld, rload, rmeter);
    return finish(&s, ls_report_done(&rp, LS_EXIT_OK));
}

/* ---- sag ------------------------------------------------------------------------------------ */

/* The what-if table: each port opened and each part removed in turn.  The
 * CSV rows go on under the ports' heading (sag_port_cols: the same CSV
 * columns); the text shows the kind's own name and a note. */
static const ls_wr_col what_if_cols[] = {
    {NULL, "table", NULL, false, 0},
    {"kind", "kind", NULL, false, 0},              /* "port" or "part" */
    {NULL, NULL, "kind", false, 9},                /* the kind's name */
    {"name", "name", "name", false, 20},
    {NULL, "current", NULL, false, 0},
    {NULL, "transfer", NULL, false, 0},
    {NULL, "share", NULL, false, 0},
    {NULL, "share_rel", NULL, false, 0},
    {"without", "without", "without it", true, 14},
    {"delta", "delta", "change", true, 14},
    {"beyond_limit", "beyond_limit", NULL, false, 0},
    {NULL, NULL, " note", false, 0},               /* (two spaces before it) */
};

/* One what-if row: linear estimates, limit-crossing rows re-solved (*);
 * one still beyond its limit shows no number. */
static void what_if_row(ls_wr *w, const ls_netlist *nl, const ls_sag_item *it)
{
    const ls_report *rp = w->rp;
    const ls_part *p = &nl->parts[it->part];
    bool shown = !it->beyond_limit || it->resolved;
    const char *reason = !shown ? LS_WHY_UNBOUNDED : it->floats ? LS_WHY_UNDEFINED : LS_WHY_UNSOLVED;
    char b1[64], b2[64], note[160] = " ";
    const char *without = b1, *change = b2;
    if (isnan(it->without))
        without = it->floats ? "floats" : "unsolvable", change = "-";
    else if (!shown)
        without = change = "-";
    else
        ls_eng(rp, b1, sizeof b1, it->without, "V"), ls_eng(rp, b2, sizeof b2, it->delta, "V");
    if (it->beyond_limit)
        snprintf(note, sizeof note, " %s%s", it->resolved ? "* " : "not physical: ", it->limit);
    ls_wr_cell_str(w, "what_if");
    ls_wr_cell_str(w, p->kind->is_port ? "port" : "part");
    ls_wr_cell_str(w, p->kind->is_port ? "port" : p->kind->name);
    ls_wr_cell_str(w, p->name);
    for (int k = 0; k < 4; k++)   /* the ports' columns */
        ls_wr_cell_num(w, NAN, NULL);
    ls_wr_cell_why(w, shown ? it->without : NAN, reason, without);
    ls_wr_cell_why(w, shown ? it->delta : NAN, reason, change);
    ls_wr_cell_bool(w, it->beyond_limit, NULL);
    ls_wr_cell_str(w, note);
    ls_wr_row(w);
}

/* The what-if table (sag --what-if), after a text preface. */
static void what_if_report(ls_wr *w, const ls_netlist *nl, const ls_sag_item *items)
{
    ls_wr_say(w, "\nWhat-if table: each port opened and each part removed in turn (resistors opened, sources set\n"
                 "to zero).  This is not an explanation of the sag: the parts that set the node's voltage (a\n"
                 "divider's own legs, the source) move it too.  Rows marked * crossed a limit in the linear\n"
                 "estimate and were re-solved with every limit active.\n\n");
    static const ls_wr_style style = {.lead = "  ", .gap = " ", .fixed = true, .csv_more = true};
    ls_wr_table(w, "what_if", what_if_cols, (int)(sizeof what_if_cols / sizeof *what_if_cols), &style);
    for (int i = 0; i < nl->nparts; i++)
        what_if_row(w, nl, &items[i]);
    ls_wr_table_end(w);
}

/* The sag's three numbers: members and the report's first lines. */
static void sag_numbers(ls_wr *w, const ls_netlist *nl, const ls_sag_report *r)
{
    const ls_report *rp = w->rp;
    char b1[64];
    /* a null alone or sag: nothing solved, or no port pulls the node the way it sags */
    const char *why = r->why ? LS_WHY_UNSOLVED : LS_WHY_UNDEFINED;
    ls_wr_str(w, "node", nl->nodes[r->node].name);
    ls_wr_num(w, "voltage", r->voltage);
    ls_wr_num_why(w, "alone", r->alone, why);
    ls_wr_num_why(w, "sag", r->sag, why);
    ls_wr_say(w, "The sag of '%s', explained by its connections (ports)\n", nl->nodes[r->node].name);
    ls_wr_say(w, "  every port opened    alone      %s\n", ls_eng(rp, b1, sizeof b1, r->alone, "V"));
    ls_wr_say(w, "  everything connected voltage    %s\n", ls_eng(rp, b1, sizeof b1, r->voltage, "V"));
    ls_wr_say(w, "  alone - voltage      sag        %s", ls_eng(rp, b1, sizeof b1, r->sag, "V"));
    if (isfinite(r->sag) && r->sag != 0 && r->alone != 0 && isfinite(r->alone))
        ls_wr_say(w, "  (%s%% of alone)", ls_fixed(rp, b1, sizeof b1, "%.3g", 100 * r->sag / r->alone));
    ls_wr_say(w, "\n");
}

/* When no port is in the way (text only): why, and the parts that pull the
 * node towards ground, which a port could name.  Returns whether the text
 * goes on with the ports' table. */
static bool sag_no_port(ls_wr *w, const ls_netlist *nl, const ls_sag_report *r)
{
    const char *name = nl->nodes[r->node].name;
    if (r->why) {
        ls_wr_say(w, "\n  No explanation: %s.\n", r->why);
        return false;
    }
    if (!(r->nports == 0 || r->nsuggest > 0 || (r->culprit < 0 && r->sag == 0)))
        return true;
    if (r->nports == 0)
        ls_wr_say(w, "\nNo port is in the way: the circuit has no port, so there is no connection to blame.\n");
    else
        ls_wr_say(w, "\nNo port is in the way: no port's current reaches '%s'.\n", name);
    if (r->nsuggest > 0) {
        ls_wr_say(w, "A port marks where one stage hands its signal to the next.  Attached at '%s', these parts\n"
                     "pull it towards ground (without each, it would sit further from 0 V):\n", name);
        for (int k = 0; k < r->nsuggest; k++)
            ls_wr_say(w, "  %s '%s'\n", nl->parts[r->suggest[k]].kind->name, nl->parts[r->suggest[k]].name);
        ls_wr_say(w, "Where one of them belongs to the next stage, give it a node of its own and join the\n"
                     "two with `port p_NAME %s -> NEW_NODE`; then this command names that connection.\n", name);
    }
    return r->nports > 0;
}

/* The ports' table: each port's current, transfer resistance, share of the
 * sag, and (JSON, text) the load parts that draw its current.  Its CSV
 * columns are the what-if table's too. */
static const ls_wr_col sag_port_cols[] = {
    {NULL, "table", NULL, false, 0},
    {NULL, "kind", NULL, false, 0},
    {NULL, NULL, "rank", false, 4},
    {"name", "name", "port", false, 16},
    {"current", "current", "current", true, 12},
    {"transfer", "transfer", "transfer", true, 12},
    {"share", "share", "share", true, 12},
    {"share_rel", "share_rel", "of sag", true, 8},
    {NULL, "without", NULL, false, 0},
    {NULL, "delta", NULL, false, 0},
    {NULL, "beyond_limit", NULL, false, 0},
    {NULL, NULL, " drawn at the load by", false, 0},   /* (two spaces before it) */
};

/* " R1 1.2 mA, R2 0.3 mA, +2 more": the first four load parts of a port
 * (text), into by (n bytes). */
static void drawn_by(const ls_report *rp, const ls_netlist *nl, const ls_sag_port *sp, char *by, size_t n)
{
    char b[64];
    size_t len = snprintf(by, n, " ");
    for (int d = 0; d < sp->ndraws && d < 4 && len < n; d++) {
        int k = snprintf(by + len, n - len, "%s%s %s", d ? ", " : "", nl->parts[sp->draws[d].part].name,
                         ls_eng(rp, b, sizeof b, sp->draws[d].current, "A"));
        len += k > 0 ? (size_t)k : 0;
    }
    if (sp->ndraws > 4 && len < n)
        snprintf(by + len, n - len, ", +%d more", sp->ndraws - 4);
}

/* One row of sag_port_cols: port k of r. */
static void sag_port_row(ls_wr *w, const ls_netlist *nl, const ls_sag_report *r, int k)
{
    const ls_report *rp = w->rp;
    const ls_sag_port *sp = &r->ports[k];
    const char *OHM = ls_unit_of(LS_OHM, rp->ascii);
    char b1[64], b2[64], b3[64], b4[48], rel[48] = "-", by[401];
    if (isfinite(sp->share_rel))
        snprintf(rel, sizeof rel, "%s%%", ls_fixed(rp, b4, sizeof b4, "%.1f", 100 * sp->share_rel));
    drawn_by(rp, nl, sp, by, sizeof by);
    ls_wr_cell_str(w, "ports");
    ls_wr_cell_str(w, "port");
    ls_wr_cell_int(w, k + 1);
    ls_wr_cell_str(w, nl->parts[sp->part].name);
    ls_wr_cell_num(w, sp->current, ls_eng(rp, b1, sizeof b1, sp->current, "A"));
    ls_wr_cell_why(w, sp->transfer, r->why ? LS_WHY_UNSOLVED : ls_jw_why_of(sp->transfer),
                   ls_eng(rp, b2, sizeof b2, sp->transfer, OHM));
    ls_wr_cell_why(w, sp->share, r->why ? LS_WHY_UNSOLVED : ls_jw_why_of(sp->share),
                   ls_eng(rp, b3, sizeof b3, sp->share, "V"));
    ls_wr_cell_why(w, sp->share_rel,
                   r->sag == 0 ? LS_WHY_UNDEFINED : r->why ? LS_WHY_UNSOLVED : ls_jw_why_of(sp->share_rel), rel);
    for (int c = 0; c < 3; c++)   /* the what-if columns */
        ls_wr_cell_str(w, "");
    ls_wr_cell_str(w, by);
    ls_wr_arr(w, "load_parts");   /* (JSON: every one) */
    for (int d = 0; d < sp->ndraws; d++) {
        ls_wr_obj(w, NULL);
        ls_wr_str(w, "name", nl->parts[sp->draws[d].part].name);
        ls_wr_num(w, "current", sp->draws[d].current);
        ls_wr_end(w);
    }
    ls_wr_end(w);
    ls_wr_row(w);
}

/* How the shares were found (text). */
static void sag_method_text(ls_wr *w, const ls_netlist *nl, const ls_sag_report *r)
{
    if (r->method == LS_SAG_SHAPLEY) {
        ls_wr_say(w, "\n  Shares: each port's average effect over the orders of connecting the ports (exact solves");
        if (r->orders)
            ls_wr_say(w, ", %d sampled orders, seed 1", r->orders);
        else
            ls_wr_say(w, " of every combination");
        ls_wr_say(w, "),\n  because ");
        if (r->changed >= 0)
            ls_wr_say(w, "%s '%s' changes state between alone and connected.\n", nl->parts[r->changed].kind->name,
                      nl->parts[r->changed].name);
        else
            ls_wr_say(w, "the linearized shares left more than a tenth of the sag unexplained.\n");
    } else {
        ls_wr_say(w, "\n  Shares: current times transfer resistance (Z(node, driver) - Z(node, load), every port opened);\n"
                     "  they add up to the sag in a linear circuit, and interaction is what the nonlinear parts add.\n");
        if (r->note)
            ls_wr_say(w, "  Note: %s.\n", r->note);
    }
}

/* The culprit: the port that accounts for most of the sag (text). */
static void sag_culprit_text(ls_wr *w, const ls_netlist *nl, const ls_sag_report *r)
{
    const ls_report *rp = w->rp;
    char b1[64], b2[64], b3[64];
    if (r->culprit < 0) {
        if (r->nports > 0 && r->nsuggest == 0)
            ls_wr_say(w, "\nNo culprit: no port pulls '%s' in the direction of its sag.\n", nl->nodes[r->node].name);
        return;
    }
    const ls_sag_port *sp = &r->ports[r->culprit];
    const ls_part *p = &nl->parts[sp->part];
    ls_wr_say(w, "\nCulprit: port '%s' (%s -> %s) accounts for %s of the %s sag", p->name, nl->nodes[p->pin[0]].name,
              nl->nodes[p->pin[1]].name, ls_eng(rp, b1, sizeof b1, sp->share, "V"),
              ls_eng(rp, b2, sizeof b2, r->sag, "V"));
    if (isfinite(sp->share_rel))
        ls_wr_say(w, " (%s%%)", ls_fixed(rp, b3, sizeof b3, "%.0f", 100 * sp->share_rel));
    if (sp->ndraws > 0)
        ls_wr_say(w, "; its current is drawn mostly by %s '%s'", nl->parts[sp->draws[0].part].kind->name,
                  nl->parts[sp->draws[0].part].name);
    ls_wr_say(w, ".\n");
}

/* The sag report, described once for every format (writer.h): the sag of
 * the node, each port's share of it and the culprit; with items, the
 * what-if table.  The CSV is the two tables under one heading. */
static void sag_report(ls_report *rp, const ls_netlist *nl, const ls_sag_report *r, const ls_sag_item *items)
{
    char b1[64];
    /* a null interaction or culprit: nothing solved, or no port pulls the
     * node the way it sags */
    const char *why = r->why ? LS_WHY_UNSOLVED : LS_WHY_UNDEFINED;
    ls_wr w;
    ls_wr_begin(&w, rp);
    sag_numbers(&w, nl, r);
    bool text = sag_no_port(&w, nl, r);   /* the text goes on */
    if (text)
        ls_wr_say(&w, "\n");
    ls_wr_style style = {.lead = "  ", .gap = " ", .fixed = true, .hide_text = !text};
    ls_wr_table(&w, "ports", sag_port_cols, (int)(sizeof sag_port_cols / sizeof *sag_port_cols), &style);
    for (int k = 0; k < r->nports; k++)
        sag_port_row(&w, nl, r, k);
    ls_wr_table_end(&w);
    ls_wr_num_why(&w, "interaction", r->interaction, why);
    ls_wr_str(&w, "method", r->method == LS_SAG_SHAPLEY ? "shapley" : "substitution");
    if (r->culprit >= 0)
        ls_wr_str(&w, "culprit", nl->parts[r->ports[r->culprit].part].name);
    else
        ls_wr_null(&w, "culprit", why);
    if (text) {
        /* under the share column: right-aligned by display columns, as the table's */
        int pad = 12 - ls_width(ls_eng(rp, b1, sizeof b1, r->interaction, "V"));
        ls_wr_say(&w, "  %-4s %-16s %12s %12s %*s%s\n", "", "interaction", "", "", pad > 0 ? pad : 0, "", b1);
        sag_method_text(&w, nl, r);
        sag_culprit_text(&w, nl, r);
    }
    if (items)
        what_if_report(&w, nl, items);
    ls_wr_finish(&w);
}

/* loadstack sag FILE NODE [--what-if]: the sag explained by connections. */
int ls_cmd_sag(ls_cli *cli)
{
    ls_session s;
    int node;
    int code = prepare(&s, cli, &node);
    if (code != LS_EXIT_OK) {
        ls_session_free(&s);
        return code;
    }
    const ls_netlist *nl = &s.nl;
    ls_sag_report r;
    ls_sag_item *items = NULL;
    if (ls_sag_connections(&s.op, node, &r) != 0) {
        fprintf(stderr, "loadstack: error: out of memory in the sag analysis\n");
        ls_session_free(&s);
        return LS_EXIT_UNSOLVABLE;
    }
    if (cli->what_if) {
        items = calloc((size_t)(nl->nparts ? nl->nparts : 1), sizeof *items);
        if (!items || ls_sag(&s.op, node, items) != 0) {
            fprintf(stderr, "loadstack: error: out of memory in the sag analysis\n");
            free(items);
            ls_sag_report_free(&r);
            ls_session_free(&s);
            return LS_EXIT_UNSOLVABLE;
        }
    }
    ls_report rp = ls_report_for(&s, ls_out_open(cli));
    sag_report(&rp, nl, &r, items);
    free(items);
    ls_sag_report_free(&r);
    return finish(&s, ls_report_done(&rp, LS_EXIT_OK));
}

/* ---- influence ----------------------------------------------------------------------------- */

/* One part's change per unit as text: "-46.78 µV/Ω" (the quantity's unit per
 * the part's), "10.64 mV" for a unitless part, "1.121 m per Ω" for a unitless
 * quantity (so a prefix is not read as a unit of its own).  Writes into buf
 * (n bytes) and returns it. */
static const char *per_unit_text(const ls_report *rp, char *buf, size_t n, double v, const char *qu,
                                 const ls_part *p)
{
    const char *pu = ls_unit_of(ls_kind_main_dims(p->kind), rp->ascii);
    char unit[48], num[48];
    if (!isfinite(v))
        return ls_eng(rp, buf, n, v, "");
    if (*qu || !*pu) {
        snprintf(unit, sizeof unit, "%s%s%s", qu, *pu ? "/" : "", pu);
        return ls_eng(rp, buf, n, v, unit);
    }
    snprintf(buf, n, "%s per %s", ls_eng(rp, num, sizeof num, v, ""), pu);
    return buf;
}

/* The influence table: part, kind, value, change per unit, % per %.  In
 * text the part column is as wide as the longest name (set per report). */
static const ls_wr_col influence_cols[] = {
    {"part", "part", "part", false, 0},
    {"kind", "kind", "kind", false, 9},
    {"part_value", "part_value", "value", true, 13},
    {"per_unit", "per_unit", "change per unit", true, 20},
    {"percent_per_percent", "percent_per_percent", "% per %", true, 12},
};

/* One row of the influence table.  A null field is explained in the item's
 * "why": no finite derivative, the quantity itself has none; a finite
 * derivative without a relative one, the quantity is 0. */
static void influence_row(ls_wr *w, const ls_netlist *nl, const char *qu, const ls_sens_item *it)
{
    const ls_report *rp = w->rp;
    const ls_part *p = &nl->parts[it->part];
    char b1[64], b2[64], b3[64];
    if (isfinite(it->normalized))
        snprintf(b3, sizeof b3, "%+#.*g", rp->sig, it->normalized);
    else
        snprintf(b3, sizeof b3, "undefined");
    ls_wr_cell_str(w, p->name);
    ls_wr_cell_str(w, p->kind->name);
    ls_wr_cell_num(w, it->nominal, ls_eng(rp, b1, sizeof b1, it->nominal, ls_unit_of(ls_kind_main_dims(p->kind), rp->ascii)));
    ls_wr_cell_why(w, it->derivative, LS_WHY_UNDEFINED, per_unit_text(rp, b2, sizeof b2, it->derivative, qu, p));
    ls_wr_cell_why(w, it->normalized, LS_WHY_UNDEFINED, b3);
    ls_wr_row(w);
}

/* The influence report, described once for every format (writer.h):
 * {"quantity", "value", "items": [...]}; the CSV is the table. */
static void influence_report(ls_report *rp, const ls_netlist *nl, const char *quantity, ls_dims qd, double value,
                             const ls_sens_item *items, int n)
{
    const char *qu = ls_unit_of(qd, rp->ascii);
    char b1[64];
    ls_wr w;
    ls_wr_begin(&w, rp);
    ls_wr_str(&w, "quantity", quantity);
    ls_wr_num(&w, "value", value);
    ls_wr_say(&w, "Influence of each part's main value on %s = %s\n", quantity, ls_eng(rp, b1, sizeof b1, value, qu));
    ls_wr_say(&w, "  change per unit: how much the quantity moves per unit of the part's value\n"
                  "  %% per %%: the quantity's change in percent for a 1 %% change of the part\n\n");
    int wn = 4;
    for (int i = 0; i < n; i++) {
        int l = ls_width(nl->parts[items[i].part].name);
        wn = l > wn ? l : wn;
    }
    /* the part column and two spaces after it; the others touch */
    ls_wr_col cols[sizeof influence_cols / sizeof *influence_cols];
    memcpy(cols, influence_cols, sizeof cols);
    cols[0].width = wn + 2;
    static const ls_wr_style style = {.lead = "  ", .gap = "", .fixed = true};
    ls_wr_table(&w, "items", cols, (int)(sizeof cols / sizeof *cols), &style);
    for (int i = 0; i < n; i++)
        influence_row(&w, nl, qu, &items[i]);
    ls_wr_table_end(&w);
    if (!isfinite(value))
        ls_wr_say(&w, "\n  The quantity has no finite value here, so it has no derivatives (see the warnings).\n");
    else if (value == 0)
        ls_wr_say(&w, "\n  The quantity is 0 here, so a change in percent of it is undefined.\n");
    ls_wr_finish(&w);
}

/* loadstack influence FILE QUANTITY: how much each part's main value moves
 * QUANTITY, by adjoint derivatives (one transposed solve serves every part). */
int ls_cmd_influence(ls_cli *cli)
{
    ls_session s;
    int code = prepare(&s, cli, NULL);
    if (code != LS_EXIT_OK) {
        ls_session_free(&s);
        return code;
    }
    ls_q *q = ls_session_quantity(&s, cli->pos[1]);
    ls_sens_item *items = NULL;
    double value = NAN;
    int n = q ? ls_sens(&s.op, q, &value, &items) : -1;
    if (n < 0) {
        ls_diags_print(&s.diags, stderr);
        ls_session_free(&s);
        return LS_EXIT_USAGE;
    }
    ls_report rp = ls_report_for(&s, ls_out_open(cli));
    influence_report(&rp, &s.nl, cli->pos[1], q->dims, value, items, n);
    free(items);
    return finish(&s, ls_report_done(&rp, LS_EXIT_OK));
}
