/* loading_cmds.c — the sag, thevenin and influence commands. */
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "report/textbuf.h"
#include "elab/elab.h"
#include "base/fmt.h"
#include "lang/parser.h"
#include "analysis/newton.h"
#include "analysis/sag.h"
#include "analysis/sens.h"
#include "analysis/thevenin.h"
#include "analysis/variant.h"

/* "did you mean" for a name that is neither a node nor (where allowed) a port. */
static void no_such_name(ls_session *s, const char *name, const char *file, bool ports)
{
    const char *best = NULL;
    int bd = 3;
    for (int i = 0; i < s->nl.nnodes; i++) {
        int d = ls_edit_distance(name, s->nl.nodes[i].name);
        if (d < bd)
            bd = d, best = s->nl.nodes[i].name;
    }
    for (int i = 0; ports && i < s->nl.nparts; i++) {
        if (!s->nl.parts[i].kind->is_port)
            continue;
        int d = ls_edit_distance(name, s->nl.parts[i].name);
        if (d < bd)
            bd = d, best = s->nl.parts[i].name;
    }
    const char *what = ports ? "node or port" : "node";
    if (best)
        ls_error(&s->diags, LS_NOLOC, "no %s '%s' in %s; did you mean '%s'?", what, name, file, best);
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

/* ---- JSON pieces ------------------------------------------------------------------------------- */

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

/* The members of one side's equivalent in the open JSON object. */
static void side_json(ls_jw *w, const ls_netlist *nl, const ls_th_side *t, const ls_cli *cli, double rload, double rmeter,
                      bool norton)
{
    ls_jw_str(w, "node", nl->nodes[t->node].name);
    ls_jw_num_why(w, "vth", t->vth, t->why_vth ? t->why_vth : ls_jw_why_of(t->vth));
    ls_jw_num(w, "rth", t->rth);
    if (norton)
        ls_jw_num_why(w, "norton", t->norton, t->why_norton ? t->why_norton : ls_jw_why_of(t->norton));
    if (cli->load) {
        ls_jw_obj(w, "load");
        ls_jw_num(w, "r", rload);
        ls_jw_num_why(w, "v", t->load_v, LS_WHY_UNSOLVED);
        ls_jw_num_why(w, "i", t->load_i, LS_WHY_UNSOLVED);
        ls_jw_str(w, "limited", t->load_limited);
        ls_jw_end(w);
    }
    if (cli->meter) {
        double err = t->meter_v - t->vth, rel = t->vth != 0 ? err / t->vth : NAN;
        ls_jw_obj(w, "meter");
        ls_jw_num(w, "r", rmeter);
        ls_jw_num(w, "reading", t->meter_v);
        ls_jw_num(w, "error", err);          /* V */
        ls_jw_num(w, "error_rel", rel);      /* a fraction of vth */
        ls_jw_end(w);
    }
}

/* Text of one side's equivalent, indented by ind spaces. */
static void side_text(ls_report *rp, const ls_th_side *t, const ls_cli *cli, double rload, double rmeter, bool norton,
                      int ind, const char *rth_label)
{
    FILE *o = rp->out;
    const char *OHM = ls_unit_of(LS_OHM, cli->ascii);
    char b1[64], b2[64], b3[64];
    fprintf(o, "%*sopen-circuit voltage  vth     %s\n", ind, "", ls_eng(rp, b1, sizeof b1, t->vth, "V"));
    fprintf(o, "%*s%-21s rth     %s\n", ind, "", rth_label, ls_eng(rp, b1, sizeof b1, t->rth, OHM));
    if (norton) {
        fprintf(o, "%*sshort-circuit current norton  %s", ind, "", ls_eng(rp, b1, sizeof b1, t->norton, "A"));
        if (strcmp(t->norton_limited, "none") != 0)
            fprintf(o, "  (limited: %s)", t->norton_limited);
        fputc('\n', o);
    }
    if (cli->load) {
        fprintf(o, "%*swith a %s load: %s, %s", ind, "", ls_eng(rp, b1, sizeof b1, rload, OHM),
                ls_eng(rp, b2, sizeof b2, t->load_v, "V"), ls_eng(rp, b3, sizeof b3, t->load_i, "A"));
        if (strcmp(t->load_limited, "none") != 0)
            fprintf(o, "  (limited: %s)", t->load_limited);
        fputc('\n', o);
    }
    if (cli->meter) {
        double err = t->meter_v - t->vth;
        fprintf(o, "%*sa meter of %s input resistance reads %s (error %s", ind, "", ls_eng(rp, b1, sizeof b1, rmeter, OHM),
                ls_eng(rp, b2, sizeof b2, t->meter_v, "V"), ls_eng(rp, b3, sizeof b3, err, "V"));
        if (t->vth != 0 && isfinite(err))
            fprintf(o, ", %s%%", ls_fixed(rp, b1, sizeof b1, "%.3g", 100 * err / t->vth));
        fputs(")", o);
        if (strcmp(t->meter_limited, "none") != 0)
            fprintf(o, "  (limited: %s)", t->meter_limited);
        fputc('\n', o);
    }
}

/* CSV rows of one side, field names prefixed. */
static void side_csv(FILE *o, const char *prefix, const ls_th_side *t, const ls_cli *cli, double rload, double rmeter,
                     bool norton)
{
#define ROW(name, v) fprintf(o, "%s%s,%s\n", prefix, name, LS_CSV(v))
    ROW("vth", t->vth);
    ROW("rth", t->rth);
    if (norton)
        ROW("norton", t->norton);
    if (cli->load) {
        ROW("load_r", rload);
        ROW("load_v", t->load_v);
        ROW("load_i", t->load_i);
        fprintf(o, "%sload_limited,", prefix);
        ls_csv_field(o, t->load_limited);
        fputc('\n', o);
    }
    if (cli->meter) {
        ROW("meter_r", rmeter);
        ROW("meter_reading", t->meter_v);
        ROW("meter_error", t->meter_v - t->vth);
        ROW("meter_error_rel", t->vth != 0 ? (t->meter_v - t->vth) / t->vth : NAN);
    }
#undef ROW
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
    FILE *o = ls_out_open(cli);
    ls_report rp = ls_report_for(&s, o);
    char b1[64];
    if (cli->fmt == FMT_JSON) {
        ls_jw jw, *w = &jw;
        ls_report_json_begin(&rp, w);
        if (port < 0) {
            side_json(w, &s.nl, &drv, cli, rload, rmeter, true);
        } else {
            ls_jw_str(w, "port", s.nl.parts[port].name);
            ls_jw_obj(w, "driver");
            side_json(w, &s.nl, &drv, cli, rload, rmeter, true);
            ls_jw_end(w);
            ls_jw_obj(w, "load");
            ls_cli none = {0};
            side_json(w, &s.nl, &ld, &none, NAN, NAN, false);
            ls_jw_end(w);
        }
        ls_report_json_end(&rp, w);
    } else if (cli->fmt == FMT_CSV) {
        fputs("field,value\n", o);
        side_csv(o, port < 0 ? "" : "driver_", &drv, cli, rload, rmeter, true);
        if (port >= 0) {
            ls_cli none = {0};
            side_csv(o, "load_", &ld, &none, NAN, NAN, false);
        }
    } else if (port < 0) {
        fprintf(o, "Thevenin equivalent at '%s' (against ground)\n", s.nl.nodes[node].name);
        side_text(&rp, &drv, cli, rload, rmeter, true, 2, "source resistance");
    } else {
        const ls_part *p = &s.nl.parts[port];
        fprintf(o, "Port '%s' (%s -> %s) opened: each side's equivalent against ground\n", p->name,
                s.nl.nodes[p->pin[0]].name, s.nl.nodes[p->pin[1]].name);
        fprintf(o, "  driver side, at '%s' (what the port delivers):\n", s.nl.nodes[p->pin[0]].name);
        side_text(&rp, &drv, cli, rload, rmeter, true, 4, "source resistance");
        fprintf(o, "  load side, at '%s' (what the port feeds):\n", s.nl.nodes[p->pin[1]].name);
        ls_cli none = {.ascii = cli->ascii};
        side_text(&rp, &ld, &none, NAN, NAN, false, 4, "input resistance");
        if (isfinite(drv.rth) && isfinite(ld.rth) && drv.rth > 0)
            fprintf(o, "  ratio zin/zout        %s\n", ls_eng(&rp, b1, sizeof b1, ld.rth / drv.rth, ""));
    }
    return finish(&s, ls_report_done(&rp, LS_EXIT_OK));
}

/* ---- sag ------------------------------------------------------------------------------------ */

/* The name and kind word of a what-if row. */
static const char *row_kind(const ls_part *p)
{
    return p->kind->is_port ? "port" : p->kind->name;
}

/* s right-aligned in w display columns (a unit's µ and Ω are one column
 * each but two bytes, which printf's %*s would count), into buf (n bytes). */
static const char *rjust(char *buf, size_t n, const char *s, int w)
{
    int pad = w - ls_width(s);
    snprintf(buf, n, "%*s%s", pad > 0 ? pad : 0, "", s);
    return buf;
}

/* The what-if table in text: linear estimates, limit-crossing rows re-solved. */
static void what_if_text(ls_report *rp, const ls_op *op, const ls_sag_item *items)
{
    const ls_netlist *nl = op->nl;
    FILE *o = rp->out;
    char b1[64], b2[64], j1[80], j2[80];
    fputs("\nWhat-if table: each port opened and each part removed in turn (resistors opened, sources set\n"
          "to zero).  This is not an explanation of the sag: the parts that set the node's voltage (a\n"
          "divider's own legs, the source) move it too.  Rows marked * crossed a limit in the linear\n"
          "estimate and were re-solved with every limit active.\n\n", o);
    fprintf(o, "  %-9s %-20s %14s %14s  %s\n", "kind", "name", "without it", "change", "note");
    for (int i = 0; i < nl->nparts; i++) {
        const ls_sag_item *it = &items[i];
        const ls_part *p = &nl->parts[it->part];
        char note[160] = "";
        if (it->beyond_limit && it->resolved)
            snprintf(note, sizeof note, "* %s", it->limit);
        else if (it->beyond_limit)
            snprintf(note, sizeof note, "not physical: %s", it->limit);
        if (isnan(it->without))
            fprintf(o, "  %-9s %-20s %14s %14s  %s\n", row_kind(p), p->name,
                    it->floats ? "floats" : "unsolvable", "-", note);
        else if (it->beyond_limit && !it->resolved)
            fprintf(o, "  %-9s %-20s %14s %14s  %s\n", row_kind(p), p->name, "-", "-", note);
        else
            fprintf(o, "  %-9s %-20s %s %s  %s\n", row_kind(p), p->name,
                    rjust(j1, sizeof j1, ls_eng(rp, b1, sizeof b1, it->without, "V"), 14),
                    rjust(j2, sizeof j2, ls_eng(rp, b2, sizeof b2, it->delta, "V"), 14), note);
    }
}

/* The sag report in text. */
static void sag_text(ls_report *rp, const ls_op *op, const ls_sag_report *r)
{
    const ls_netlist *nl = op->nl;
    FILE *o = rp->out;
    const char *name = nl->nodes[r->node].name, *OHM = ls_unit_of(LS_OHM, rp->ascii);
    char b1[64], b2[64], b3[64], b4[64];
    fprintf(o, "The sag of '%s', explained by its connections (ports)\n", name);
    fprintf(o, "  every port opened    alone      %s\n", ls_eng(rp, b1, sizeof b1, r->alone, "V"));
    fprintf(o, "  everything connected voltage    %s\n", ls_eng(rp, b1, sizeof b1, r->voltage, "V"));
    fprintf(o, "  alone - voltage      sag        %s", ls_eng(rp, b1, sizeof b1, r->sag, "V"));
    if (isfinite(r->sag) && r->sag != 0 && r->alone != 0 && isfinite(r->alone))
        fprintf(o, "  (%s%% of alone)", ls_fixed(rp, b1, sizeof b1, "%.3g", 100 * r->sag / r->alone));
    fputc('\n', o);
    if (r->why) {
        fprintf(o, "\n  No explanation: %s.\n", r->why);
        return;
    }
    if (r->nports == 0 || r->nsuggest > 0 || (r->culprit < 0 && r->sag == 0)) {
        if (r->nports == 0)
            fprintf(o, "\nNo port is in the way: the circuit has no port, so there is no connection to blame.\n");
        else
            fprintf(o, "\nNo port is in the way: no port's current reaches '%s'.\n", name);
        if (r->nsuggest > 0) {
            fprintf(o, "A port marks where one stage hands its signal to the next.  Attached at '%s', these parts\n"
                       "pull it towards ground (without each, it would sit further from 0 V):\n", name);
            for (int k = 0; k < r->nsuggest; k++)
                fprintf(o, "  %s '%s'\n", nl->parts[r->suggest[k]].kind->name, nl->parts[r->suggest[k]].name);
            fprintf(o, "Where one of them belongs to the next stage, give it a node of its own and join the\n"
                       "two with `port p_NAME %s -> NEW_NODE`; then this command names that connection.\n", name);
        }
        if (r->nports == 0)
            return;
    }
    fprintf(o, "\n  %-4s %-16s %12s %12s %12s %8s  %s\n", "rank", "port", "current", "transfer", "share", "of sag",
            "drawn at the load by");
    for (int k = 0; k < r->nports; k++) {
        const ls_sag_port *sp = &r->ports[k];
        char rel[48] = "-", by[400] = "";
        if (isfinite(sp->share_rel))
            snprintf(rel, sizeof rel, "%s%%", ls_fixed(rp, b3, sizeof b3, "%.1f", 100 * sp->share_rel));
        size_t len = 0;
        for (int d = 0; d < sp->ndraws && d < 4 && len < sizeof by; d++) {
            int w = snprintf(by + len, sizeof by - len, "%s%s %s", d ? ", " : "", nl->parts[sp->draws[d].part].name,
                             ls_eng(rp, b4, sizeof b4, sp->draws[d].current, "A"));
            len += w > 0 ? (size_t)w : 0;
        }
        if (sp->ndraws > 4 && len < sizeof by)
            snprintf(by + len, sizeof by - len, ", +%d more", sp->ndraws - 4);
        char j1[80], j2[80], j3[80];
        fprintf(o, "  %-4d %-16s %s %s %s %8s  %s\n", k + 1, nl->parts[sp->part].name,
                rjust(j1, sizeof j1, ls_eng(rp, b1, sizeof b1, sp->current, "A"), 12),
                rjust(j2, sizeof j2, ls_eng(rp, b2, sizeof b2, sp->transfer, OHM), 12),
                rjust(j3, sizeof j3, ls_eng(rp, b3, sizeof b3, sp->share, "V"), 12), rel, by);
    }
    char j1[80];
    fprintf(o, "  %-4s %-16s %12s %12s %s\n", "", "interaction", "", "",
            rjust(j1, sizeof j1, ls_eng(rp, b1, sizeof b1, r->interaction, "V"), 12));
    if (r->method == LS_SAG_SHAPLEY) {
        fprintf(o, "\n  Shares: each port's average effect over the orders of connecting the ports (exact solves");
        if (r->orders)
            fprintf(o, ", %d sampled orders, seed 1", r->orders);
        else
            fprintf(o, " of every combination");
        fprintf(o, "),\n  because ");
        if (r->changed >= 0)
            fprintf(o, "%s '%s' changes state between alone and connected.\n", nl->parts[r->changed].kind->name,
                    nl->parts[r->changed].name);
        else
            fprintf(o, "the linearized shares left more than a tenth of the sag unexplained.\n");
    } else {
        fprintf(o, "\n  Shares: current times transfer resistance (Z(node, driver) - Z(node, load), every port opened);\n"
                   "  they add up to the sag in a linear circuit, and interaction is what the nonlinear parts add.\n");
        if (r->note)
            fprintf(o, "  Note: %s.\n", r->note);
    }
    if (r->culprit >= 0) {
        const ls_sag_port *sp = &r->ports[r->culprit];
        const ls_part *p = &nl->parts[sp->part];
        fprintf(o, "\nCulprit: port '%s' (%s -> %s) accounts for %s of the %s sag", p->name, nl->nodes[p->pin[0]].name,
                nl->nodes[p->pin[1]].name, ls_eng(rp, b1, sizeof b1, sp->share, "V"),
                ls_eng(rp, b2, sizeof b2, r->sag, "V"));
        if (isfinite(sp->share_rel))
            fprintf(o, " (%s%%)", ls_fixed(rp, b3, sizeof b3, "%.0f", 100 * sp->share_rel));
        if (sp->ndraws > 0)
            fprintf(o, "; its current is drawn mostly by %s '%s'", nl->parts[sp->draws[0].part].kind->name,
                    nl->parts[sp->draws[0].part].name);
        fputs(".\n", o);
    } else if (r->nports > 0 && r->nsuggest == 0) {
        fprintf(o, "\nNo culprit: no port pulls '%s' in the direction of its sag.\n", name);
    }
}

/* One what-if row in JSON. */
static void what_if_json(ls_jw *w, const ls_netlist *nl, const ls_sag_item *it)
{
    const ls_part *p = &nl->parts[it->part];
    bool shown = !it->beyond_limit || it->resolved;
    const char *reason = !shown ? LS_WHY_UNBOUNDED : it->floats ? LS_WHY_UNDEFINED : LS_WHY_UNSOLVED;
    ls_jw_obj(w, NULL);
    ls_jw_str(w, "kind", p->kind->is_port ? "port" : "part");
    ls_jw_str(w, "name", p->name);
    ls_jw_num_why(w, "without", shown ? it->without : NAN, reason);
    ls_jw_num_why(w, "delta", shown ? it->delta : NAN, reason);
    ls_jw_bool(w, "beyond_limit", it->beyond_limit);
    ls_jw_end(w);
}

/* The sag report in JSON. */
static void sag_json(ls_report *rp, const ls_netlist *nl, const ls_sag_report *r, const ls_sag_item *items)
{
    ls_jw jw, *w = &jw;
    /* a null alone, sag, interaction or culprit: nothing solved, or no port
     * pulls the node the way it sags */
    const char *why = r->why ? LS_WHY_UNSOLVED : LS_WHY_UNDEFINED;
    ls_report_json_begin(rp, w);
    ls_jw_str(w, "node", nl->nodes[r->node].name);
    ls_jw_num(w, "voltage", r->voltage);
    ls_jw_num_why(w, "alone", r->alone, why);
    ls_jw_num_why(w, "sag", r->sag, why);
    ls_jw_arr(w, "ports");
    for (int k = 0; k < r->nports; k++) {
        const ls_sag_port *sp = &r->ports[k];
        ls_jw_obj(w, NULL);
        ls_jw_str(w, "name", nl->parts[sp->part].name);
        ls_jw_num(w, "current", sp->current);
        ls_jw_num_why(w, "transfer", sp->transfer, r->why ? LS_WHY_UNSOLVED : ls_jw_why_of(sp->transfer));
        ls_jw_num_why(w, "share", sp->share, r->why ? LS_WHY_UNSOLVED : ls_jw_why_of(sp->share));
        ls_jw_num_why(w, "share_rel", sp->share_rel,
                      r->sag == 0 ? LS_WHY_UNDEFINED : r->why ? LS_WHY_UNSOLVED : ls_jw_why_of(sp->share_rel));
        ls_jw_arr(w, "load_parts");
        for (int d = 0; d < sp->ndraws; d++) {
            ls_jw_obj(w, NULL);
            ls_jw_str(w, "name", nl->parts[sp->draws[d].part].name);
            ls_jw_num(w, "current", sp->draws[d].current);
            ls_jw_end(w);
        }
        ls_jw_end(w);
        ls_jw_end(w);
    }
    ls_jw_end(w);
    ls_jw_num_why(w, "interaction", r->interaction, why);
    ls_jw_str(w, "method", r->method == LS_SAG_SHAPLEY ? "shapley" : "substitution");
    if (r->culprit >= 0)
        ls_jw_str(w, "culprit", nl->parts[r->ports[r->culprit].part].name);
    else
        ls_jw_null(w, "culprit", why);
    if (items) {
        ls_jw_arr(w, "what_if");
        for (int i = 0; i < nl->nparts; i++)
            what_if_json(w, nl, &items[i]);
        ls_jw_end(w);
    }
    ls_report_json_end(rp, w);
}

/* The sag report in CSV: one row per port, then (with --what-if) one per
 * what-if row. */
static void sag_csv(FILE *o, const ls_netlist *nl, const ls_sag_report *r, const ls_sag_item *items)
{
#define F(i, v) LS_CSV(v)
    fputs("table,kind,name,current,transfer,share,share_rel,without,delta,beyond_limit\n", o);
    for (int k = 0; k < r->nports; k++) {
        const ls_sag_port *sp = &r->ports[k];
        fputs("ports,port,", o);
        ls_csv_field(o, nl->parts[sp->part].name);
        fprintf(o, ",%s,%s,%s,%s,,,\n", F(0, sp->current), F(1, sp->transfer), F(2, sp->share), F(3, sp->share_rel));
    }
    for (int i = 0; items && i < nl->nparts; i++) {
        const ls_sag_item *it = &items[i];
        bool shown = !it->beyond_limit || it->resolved;
        fprintf(o, "what_if,%s,", nl->parts[it->part].kind->is_port ? "port" : "part");
        ls_csv_field(o, nl->parts[it->part].name);
        fprintf(o, ",,,,,%s,%s,%s\n", shown ? F(0, it->without) : "", shown ? F(1, it->delta) : "",
                it->beyond_limit ? "true" : "false");
    }
#undef F
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
    FILE *o = ls_out_open(cli);
    ls_report rp = ls_report_for(&s, o);
    if (cli->fmt == FMT_JSON)
        sag_json(&rp, nl, &r, items);
    else if (cli->fmt == FMT_CSV)
        sag_csv(o, nl, &r, items);
    else {
        sag_text(&rp, &s.op, &r);
        if (items)
            what_if_text(&rp, &s.op, items);
    }
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

/* The influence table as JSON: {"quantity", "value", "items": [...]}; a
 * null field is explained in the item's "why". */
static void influence_json(ls_report *rp, const ls_session *s, const char *quantity, double value,
                           const ls_sens_item *items, int n)
{
    ls_jw jw, *w = &jw;
    ls_report_json_begin(rp, w);
    ls_jw_str(w, "quantity", quantity);
    ls_jw_num(w, "value", value);
    ls_jw_arr(w, "items");
    for (int i = 0; i < n; i++) {
        const ls_part *p = &s->nl.parts[items[i].part];
        ls_jw_obj(w, NULL);
        ls_jw_str(w, "part", p->name);
        ls_jw_str(w, "kind", p->kind->name);
        ls_jw_num(w, "part_value", items[i].nominal);
        /* no finite derivative: the quantity itself has none; a finite
         * derivative without a relative one: the quantity is 0 */
        ls_jw_num_why(w, "per_unit", items[i].derivative, LS_WHY_UNDEFINED);
        ls_jw_num_why(w, "percent_per_percent", items[i].normalized, LS_WHY_UNDEFINED);
        ls_jw_end(w);
    }
    ls_report_json_end(rp, w);
}

/* The influence table as CSV, the JSON keys as the header. */
static void influence_csv(FILE *o, const ls_session *s, const ls_sens_item *items, int n)
{
    fputs("part,kind,part_value,per_unit,percent_per_percent\n", o);
    for (int i = 0; i < n; i++) {
        const ls_part *p = &s->nl.parts[items[i].part];
        ls_csv_field(o, p->name);
        fprintf(o, ",%s,%s,%s,%s\n", p->kind->name, LS_CSV(items[i].nominal), LS_CSV(items[i].derivative),
                LS_CSV(items[i].normalized));
    }
}

/* Print s padded to w display columns (UTF-8 code points), left- or right-aligned. */
static void cell(FILE *o, const char *s, int w, bool right)
{
    int n = 0;
    for (const char *c = s; *c; c++)
        n += ((unsigned char)*c & 0xC0) != 0x80;
    int pad = w > n ? w - n : 0;
    fprintf(o, "%*s%s%*s", right ? pad : 0, "", s, right ? 0 : pad, "");
}

/* The influence table as text: part, kind, value, change per unit, % per %. */
static void influence_text(ls_report *rp, const ls_session *s, const char *quantity, ls_dims qd, double value,
                           const ls_sens_item *items, int n)
{
    FILE *o = rp->out;
    const char *qu = ls_unit_of(qd, rp->ascii);
    char b1[64], b2[64], b3[64];
    fprintf(o, "Influence of each part's main value on %s = %s\n", quantity, ls_eng(rp, b1, sizeof b1, value, qu));
    fputs("  change per unit: how much the quantity moves per unit of the part's value\n"
          "  % per %: the quantity's change in percent for a 1 % change of the part\n\n", o);
    int wn = 4;
    for (int i = 0; i < n; i++) {
        int l = (int)strlen(s->nl.parts[items[i].part].name);
        wn = l > wn ? l : wn;
    }
    fputs("  ", o);
    cell(o, "part", wn, false);
    fputs("  ", o);
    cell(o, "kind", 9, false);
    cell(o, "value", 13, true);
    cell(o, "change per unit", 20, true);
    cell(o, "% per %", 12, true);
    fputc('\n', o);
    for (int i = 0; i < n; i++) {
        const ls_part *p = &s->nl.parts[items[i].part];
        fputs("  ", o);
        cell(o, p->name, wn, false);
        fputs("  ", o);
        cell(o, p->kind->name, 9, false);
        cell(o, ls_eng(rp, b1, sizeof b1, items[i].nominal, ls_unit_of(ls_kind_main_dims(p->kind), rp->ascii)), 13,
             true);
        cell(o, per_unit_text(rp, b2, sizeof b2, items[i].derivative, qu, p), 20, true);
        if (isfinite(items[i].normalized))
            snprintf(b3, sizeof b3, "%+#.*g", rp->sig, items[i].normalized);
        else
            snprintf(b3, sizeof b3, "undefined");
        cell(o, b3, 12, true);
        fputc('\n', o);
    }
    if (!isfinite(value))
        fputs("\n  The quantity has no finite value here, so it has no derivatives (see the warnings).\n", o);
    else if (value == 0)
        fputs("\n  The quantity is 0 here, so a change in percent of it is undefined.\n", o);
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
    FILE *o = ls_out_open(cli);
    ls_report rp = ls_report_for(&s, o);
    if (cli->fmt == FMT_JSON)
        influence_json(&rp, &s, cli->pos[1], value, items, n);
    else if (cli->fmt == FMT_CSV)
        influence_csv(o, &s, items, n);
    else
        influence_text(&rp, &s, cli->pos[1], q->dims, value, items, n);
    free(items);
    return finish(&s, ls_report_done(&rp, LS_EXIT_OK));
}
