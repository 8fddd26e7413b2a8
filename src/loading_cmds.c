/* loading_cmds.c — the sag, thevenin and sens commands. */
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "elab.h"
#include "fmt.h"
#include "parser.h"
#include "sens.h"

/* Load, solve and find NODE; on failure prints diagnostics and returns the code. */
static int prepare(ls_session *s, ls_cli *cli, int *node)
{
    int code = ls_session_load(s, cli, cli->pos[0], NULL);
    if (code == LS_EXIT_OK && node) {
        *node = ls_netlist_find_node(&s->nl, cli->pos[1]);
        if (*node < 0) {
            const char *best = NULL;
            int bd = 3;
            for (int i = 0; i < s->nl.nnodes; i++) {
                int d = ls_edit_distance(cli->pos[1], s->nl.nodes[i].name);
                if (d < bd)
                    bd = d, best = s->nl.nodes[i].name;
            }
            if (best)
                ls_error(&s->diags, LS_NOLOC, "no node '%s' in %s; did you mean '%s'?", cli->pos[1], cli->pos[0], best);
            else
                ls_error(&s->diags, LS_NOLOC, "no node '%s' in %s", cli->pos[1], cli->pos[0]);
            code = LS_EXIT_USAGE;
        }
    }
    if (code == LS_EXIT_OK)
        code = ls_session_solve(s);
    if (code != LS_EXIT_OK)
        ls_diags_print(&s->diags, stderr);
    return code;
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

/* loadstack thevenin FILE NODE [--load R] [--meter R]: vth, rth, Norton current. */
int ls_cmd_thevenin(ls_cli *cli)
{
    ls_session s;
    int node;
    int code = prepare(&s, cli, &node);
    if (code != LS_EXIT_OK) {
        ls_session_free(&s);
        return code;
    }
    double rload = NAN, rmeter = NAN;
    if (cli->load && !(ls_cli_number(cli->load, &rload) && rload > 0)) {
        fprintf(stderr, "loadstack: error: --load takes a positive resistance, not '%s'\n", cli->load);
        ls_session_free(&s);
        return LS_EXIT_USAGE;
    }
    if (cli->meter && !(ls_cli_number(cli->meter, &rmeter) && rmeter > 0)) {
        fprintf(stderr, "loadstack: error: --meter takes a positive resistance, not '%s'\n", cli->meter);
        ls_session_free(&s);
        return LS_EXIT_USAGE;
    }
    double vth = s.op.v[node], rth = ls_op_zdrive(&s.op, node);
    double norton = rth == 0 ? (vth == 0 ? NAN : copysign(INFINITY, vth)) : vth / rth;
    double vl = vth * rload / (rload + rth), il = vl / rload;
    double rd = vth * rmeter / (rmeter + rth), err = rd - vth;
    FILE *o = ls_out_open(cli);
    ls_report rp = {.out = o, .fmt = cli->fmt, .ascii = cli->ascii, .sig = 4, .diags = &s.diags};
    const char *name = s.nl.nodes[node].name, *OHM = ls_unit_of(LS_OHM, cli->ascii);
    char b1[64], b2[64], b3[64];
    if (cli->fmt == FMT_JSON) {
        fputs("{\"node\": ", o);
        ls_json_string(o, name);
        fputs(", \"vth\": ", o);
        ls_json_number(o, vth);
        fputs(", \"rth\": ", o);
        ls_json_number(o, rth);
        fputs(", \"norton\": ", o);
        ls_json_number(o, norton);
        if (cli->load) {
            fputs(", \"load\": {\"r\": ", o);
            ls_json_number(o, rload);
            fputs(", \"v\": ", o);
            ls_json_number(o, vl);
            fputs(", \"i\": ", o);
            ls_json_number(o, il);
            fputs("}", o);
        }
        if (cli->meter) {
            fputs(", \"meter\": {\"r\": ", o);
            ls_json_number(o, rmeter);
            fputs(", \"reading\": ", o);
            ls_json_number(o, rd);
            fputs(", \"error\": ", o);
            ls_json_number(o, err);
            fputs("}", o);
        }
        fputs("}\n", o);
    } else if (cli->fmt == FMT_CSV) {
        fprintf(o, "field,value\nvth,%s\nrth,%s\nnorton,%s\n", LS_G17(vth), LS_G17(rth),
                isfinite(norton) ? ls_fmt_full(b1, sizeof b1, norton) : "");
        if (cli->load)
            fprintf(o, "load_r,%s\nload_v,%s\nload_i,%s\n", LS_G17(rload), LS_G17(vl), LS_G17(il));
        if (cli->meter)
            fprintf(o, "meter_r,%s\nmeter_reading,%s\nmeter_error,%s\n", LS_G17(rmeter), LS_G17(rd), LS_G17(err));
    } else {
        fprintf(o, "Thevenin equivalent at '%s' (against ground)\n", name);
        fprintf(o, "  open-circuit voltage  vth     %s\n", ls_eng(&rp, b1, sizeof b1, vth, "V"));
        fprintf(o, "  source resistance     rth     %s\n", ls_eng(&rp, b1, sizeof b1, rth, OHM));
        fprintf(o, "  short-circuit current norton  %s\n", ls_eng(&rp, b1, sizeof b1, norton, "A"));
        if (cli->load)
            fprintf(o, "  with a %s load: %s, %s\n", ls_eng(&rp, b1, sizeof b1, rload, OHM),
                    ls_eng(&rp, b2, sizeof b2, vl, "V"), ls_eng(&rp, b3, sizeof b3, il, "A"));
        if (cli->meter)
            fprintf(o, "  a meter of %s input resistance reads %s (error %s, %.3g%%)\n",
                    ls_eng(&rp, b1, sizeof b1, rmeter, OHM), ls_eng(&rp, b2, sizeof b2, rd, "V"),
                    ls_eng(&rp, b3, sizeof b3, err, "V"), vth != 0 ? 100 * err / vth : 0.0);
    }
    return finish(&s, LS_EXIT_OK);
}

/* ---- sag ------------------------------------------------------------------------------------ */

/* Is item it a load pulling the node towards ground (removal moves it away
 * from 0 V, and not beyond the circuit's own voltages)? */
static bool pulls_down(const ls_sag_item *it, double v0, double vmax)
{
    double d = it->delta;
    if (!isfinite(d) || d == 0 || v0 == 0)
        return false;
    if (v0 > 0 ? d < 0 : d > 0)
        return false;
    return fabs(it->without) <= vmax * (1 + 1e-9);
}

/* Text form of the sag report. */
static void sag_text(ls_report *rp, const ls_op *op, int node, const ls_sag_item *items, int culprit, int via,
                     double total)
{
    const ls_netlist *nl = op->nl;
    FILE *o = rp->out;
    double v0 = op->v[node], vmax = ls_op_volts(op);
    char b1[64], b2[64], b3[64];
    fprintf(o, "What pulls '%s' (now %s) away from where it would be without each part\n", nl->nodes[node].name,
            ls_eng(rp, b1, sizeof b1, v0, "V"));
    fprintf(o, "  (a port is opened; a part is removed: resistors opened, sources set to zero)\n\n");
    fprintf(o, "  %-4s %-9s %-20s %14s %14s %8s\n", "rank", "kind", "name", "without it", "delta", "share");
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[items[i].part];
        double d = items[i].delta;
        char share[32] = "";
        if (total > 0 && pulls_down(&items[i], v0, vmax))
            snprintf(share, sizeof share, "%.1f%%", 100 * fabs(d) / total);
        if (isnan(d))
            fprintf(o, "  %-4d %-9s %-20s %14s %14s\n", i + 1, p->kind->is_port ? "port" : p->kind->name, p->name,
                    items[i].floats ? "floats" : "unsolvable", "-");
        else
            fprintf(o, "  %-4d %-9s %-20s %14s %14s %8s\n", i + 1, p->kind->is_port ? "port" : p->kind->name,
                    p->name, ls_eng(rp, b1, sizeof b1, items[i].without, "V"), ls_eng(rp, b2, sizeof b2, d, "V"),
                    share);
    }
    if (culprit < 0) {
        fprintf(o, "\nNothing pulls '%s' towards ground.\n", nl->nodes[node].name);
        return;
    }
    const ls_part *p = &nl->parts[items[culprit].part];
    char through[300] = "";
    if (via >= 0)
        snprintf(through, sizeof through, " (through port '%s')", nl->parts[items[via].part].name);
    fprintf(o, "\nMain culprit: %s '%s'%s pulls '%s' towards ground by %s, %.0f%% of what all loads together pull.\n",
            p->kind->is_port ? "port" : p->kind->name, p->name, through, nl->nodes[node].name,
            ls_eng(rp, b3, sizeof b3, fabs(items[culprit].delta), "V"), 100 * fabs(items[culprit].delta) / total);
}

/* loadstack sag FILE NODE: every part and port taken out in turn. */
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
    double v0 = s.op.v[node], vmax = ls_op_volts(&s.op);
    ls_sag_item *items = calloc((size_t)(nl->nparts ? nl->nparts : 1), sizeof *items);
    if (!items || ls_sag(&s.op, node, items) != 0) {
        fprintf(stderr, "loadstack: error: out of memory in the sag analysis\n");
        free(items);
        ls_session_free(&s);
        return LS_EXIT_UNSOLVABLE;
    }
    /* The main culprit is the part (a port only when no part qualifies) that
     * pulls hardest; the total counts parts only, so a load and the port it
     * hangs on are not counted twice. */
    double total = 0, ptotal = 0;
    int culprit = -1, pculprit = -1, via = -1;
    for (int i = 0; i < nl->nparts; i++) {
        if (!pulls_down(&items[i], v0, vmax))
            continue;
        if (nl->parts[items[i].part].kind->is_port) {
            ptotal += fabs(items[i].delta);
            if (pculprit < 0)
                pculprit = i;
        } else {
            total += fabs(items[i].delta);
            if (culprit < 0)
                culprit = i;
        }
    }
    if (culprit < 0) {
        culprit = pculprit;
        total = ptotal;
    } else {
        for (int i = 0; i < nl->nparts && via < 0; i++)
            if (nl->parts[items[i].part].kind->is_port &&
                fabs(items[i].delta - items[culprit].delta) <= 1e-9 * fabs(items[culprit].delta))
                via = i;
    }
    FILE *o = ls_out_open(cli);
    ls_report rp = {.out = o, .fmt = cli->fmt, .ascii = cli->ascii, .sig = 4, .diags = &s.diags};
    if (cli->fmt == FMT_JSON) {
        fputs("{\"node\": ", o);
        ls_json_string(o, nl->nodes[node].name);
        fputs(", \"voltage\": ", o);
        ls_json_number(o, v0);
        fputs(",\n \"items\": [", o);
        for (int i = 0; i < nl->nparts; i++) {
            const ls_part *p = &nl->parts[items[i].part];
            fprintf(o, "%s\n  {\"kind\": \"%s\", \"name\": ", i ? "," : "", p->kind->is_port ? "port" : "part");
            ls_json_string(o, p->name);
            fputs(", \"without\": ", o);
            ls_json_number(o, items[i].without);
            fputs(", \"delta\": ", o);
            ls_json_number(o, items[i].delta);
            fputs("}", o);
        }
        fputs("]}\n", o);
    } else if (cli->fmt == FMT_CSV) {
        fputs("kind,name,without,delta\n", o);
        for (int i = 0; i < nl->nparts; i++) {
            const ls_part *p = &nl->parts[items[i].part];
            char b1[40], b2[40];
            fprintf(o, "%s,", p->kind->is_port ? "port" : "part");
            ls_csv_field(o, p->name);
            fprintf(o, ",%s,%s\n", isfinite(items[i].without) ? ls_fmt_full(b1, sizeof b1, items[i].without) : "",
                    isfinite(items[i].delta) ? ls_fmt_full(b2, sizeof b2, items[i].delta) : "");
        }
    } else {
        sag_text(&rp, &s.op, node, items, culprit, via, total);
    }
    free(items);
    return finish(&s, LS_EXIT_OK);
}

/* ---- sens ---------------------------------------------------------------------------------- */

/* loadstack sens FILE QUANTITY: adjoint derivatives for every part's main value. */
int ls_cmd_sens(ls_cli *cli)
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
    ls_report rp = {.out = o, .fmt = cli->fmt, .ascii = cli->ascii, .sig = 4, .diags = &s.diags};
    const char *qu = ls_unit_of(q->dims, cli->ascii);
    if (cli->fmt == FMT_JSON) {
        fputs("{\"quantity\": ", o);
        ls_json_string(o, cli->pos[1]);
        fputs(", \"value\": ", o);
        ls_json_number(o, value);
        fputs(",\n \"items\": [", o);
        for (int i = 0; i < n; i++) {
            fprintf(o, "%s\n  {\"part\": ", i ? "," : "");
            ls_json_string(o, s.nl.parts[items[i].part].name);
            fputs(", \"nominal\": ", o);
            ls_json_number(o, items[i].nominal);
            fputs(", \"derivative\": ", o);
            ls_json_number(o, items[i].derivative);
            fputs(", \"normalized\": ", o);
            ls_json_number(o, items[i].normalized);
            fputs("}", o);
        }
        fputs("]}\n", o);
    } else if (cli->fmt == FMT_CSV) {
        fputs("part,nominal,derivative,normalized\n", o);
        for (int i = 0; i < n; i++) {
            char b[40];
            ls_csv_field(o, s.nl.parts[items[i].part].name);
            fprintf(o, ",%s,%s,%s\n", LS_G17(items[i].nominal), LS_G17(items[i].derivative),
                    isfinite(items[i].normalized) ? ls_fmt_full(b, sizeof b, items[i].normalized) : "");
        }
    } else {
        char b1[64];
        fprintf(o, "Sensitivity of %s = %s to each part's main value\n", cli->pos[1], ls_eng(&rp, b1, sizeof b1, value, qu));
        fprintf(o, "  (normalized: the %% change of the quantity for a 1%% change of the part)\n\n");
        fprintf(o, "  %-20s %-9s %14s %14s %12s\n", "part", "kind", "value", "dQ/dp", "normalized");
        for (int i = 0; i < n; i++) {
            const ls_part *p = &s.nl.parts[items[i].part];
            char bd[32], bn[32];
            snprintf(bd, sizeof bd, "%.6g", items[i].derivative);
            snprintf(bn, sizeof bn, "%+.4f", items[i].normalized);
            fprintf(o, "  %-20s %-9s %14.6g %14s %12s\n", p->name, p->kind->name, items[i].nominal,
                    isfinite(items[i].derivative) ? bd : "-", isfinite(items[i].normalized) ? bn : "-");
        }
        if (!isfinite(value))
            fprintf(o, "\n  The quantity has no finite value here, so it has no derivatives (see the warnings).\n");
    }
    free(items);
    return finish(&s, LS_EXIT_OK);
}
