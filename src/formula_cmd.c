/* formula_cmd.c — loadstack formula FILE QUANTITY [--symbols A,B,...] [--ideal]. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "elab.h"
#include "fmt.h"
#include "formula.h"
#include "parser.h"

#ifndef LS_VERSION
#define LS_VERSION "0.0.0"
#endif

/* The "meta" object every JSON report starts with. */
static void json_meta(FILE *o, const ls_cli *cli)
{
    fputs("\"meta\": {\"program\": \"loadstack\", \"version\": ", o);
    ls_json_string(o, LS_VERSION);
    fputs(", \"command\": \"formula\", \"file\": ", o);
    ls_json_string(o, cli->pos[0]);
    fputs(", \"set\": {", o);
    for (int i = 0; i < cli->nsets; i++) {
        const char *eq = strchr(cli->sets[i], '=');
        char name[256];
        snprintf(name, sizeof name, "%.*s", (int)(eq - cli->sets[i]), cli->sets[i]);
        fputs(i ? ", " : "", o);
        ls_json_string(o, name);
        fputs(": ", o);
        ls_json_string(o, eq + 1);
    }
    fputs("}}", o);
}

static void report_json(FILE *o, const ls_cli *cli, const ls_formula_result *r)
{
    fputs("{", o);
    json_meta(o, cli);
    fputs(",\n \"quantity\": ", o);
    ls_json_string(o, cli->pos[1]);
    fputs(",\n \"expression\": ", o);
    ls_json_string(o, r->expression);
    fputs(",\n \"numerator\": ", o);
    ls_json_string(o, r->numerator);
    fputs(",\n \"denominator\": ", o);
    ls_json_string(o, r->denominator);
    fputs(",\n \"symbols\": [", o);
    for (int i = 0; i < r->nsymbols; i++) {
        fputs(i ? ", " : "", o);
        ls_json_string(o, r->symbols[i]);
    }
    fprintf(o, "],\n \"ideal\": %s,\n \"value\": ", r->ideal ? "true" : "false");
    ls_json_number(o, r->value);
    fputs(", \"solve\": ", o);
    ls_json_number(o, r->solve);
    fputs(", \"difference\": ", o);
    ls_json_number(o, r->difference);
    fputs(", \"bound\": ", o);
    ls_json_number(o, r->bound);
    fputs(",\n \"notes\": [", o);
    for (int i = 0; i < r->nnotes; i++) {
        fputs(i ? ", " : "", o);
        ls_json_string(o, r->notes[i]);
    }
    fputs("]}\n", o);
}

static void report_csv(FILE *o, const ls_cli *cli, const ls_formula_result *r)
{
    char b[64];
    fputs("field,value\nquantity,", o);
    ls_csv_field(o, cli->pos[1]);
    fputs("\nexpression,", o);
    ls_csv_field(o, r->expression);
    fputs("\nnumerator,", o);
    ls_csv_field(o, r->numerator);
    fputs("\ndenominator,", o);
    ls_csv_field(o, r->denominator);
    fputs("\nsymbols,", o);
    size_t n = 1;
    for (int i = 0; i < r->nsymbols; i++)
        n += strlen(r->symbols[i]) + 1;
    char *list = calloc(n, 1);
    for (int i = 0; list && i < r->nsymbols; i++) {
        strcat(list, i ? " " : "");
        strcat(list, r->symbols[i]);
    }
    ls_csv_field(o, list ? list : "");
    free(list);
    fprintf(o, "\nideal,%s\n", r->ideal ? "true" : "false");
    fprintf(o, "value,%s\n", ls_fmt_full(b, sizeof b, r->value));
    fprintf(o, "solve,%s\n", ls_fmt_full(b, sizeof b, r->solve));
    fprintf(o, "difference,%s\n", ls_fmt_full(b, sizeof b, r->difference));
}

static void report_text(FILE *o, const ls_cli *cli, const ls_formula_result *r, const char *unit)
{
    char b1[64], b2[64];
    fprintf(o, "Formula of %s%s%s%s\n\n", cli->pos[1], *unit ? " (" : "", unit, *unit ? ")" : "");
    fprintf(o, "  %s = %s\n\n", cli->pos[1], r->expression);
    if (strcmp(r->denominator, "1") != 0) {
        fprintf(o, "  numerator     %s\n", r->numerator);
        fprintf(o, "  denominator   %s\n", r->denominator);
    }
    fputs("  symbols       ", o);
    for (int i = 0; i < r->nsymbols; i++)
        fprintf(o, "%s%s", i ? ", " : "", r->symbols[i]);
    fputs(r->nsymbols ? "\n" : "none (every value is a number)\n", o);
    if (r->ideal) {
        fprintf(o, "  ideal         %d finite op-amp gain%s taken to infinity%s\n", r->opamps_limited,
                r->opamps_limited == 1 ? "" : "s", r->opamps_limited ? "" : " (there were none)");
        fprintf(o, "\n  ideal formula at the file's numbers    %s\n", ls_fmt_full(b1, sizeof b1, r->value));
        fprintf(o, "  finite-gain formula at those numbers   %s\n", ls_fmt_full(b1, sizeof b1, r->finite_value));
        fprintf(o, "  solver                                 %s\n", ls_fmt_full(b2, sizeof b2, r->solve));
        fprintf(o, "  self-check: the finite-gain formula agrees with the solver to %.2g\n", r->bound);
        if (r->opamps_limited)
            fprintf(o, "  the ideal formula differs from the solver by %.3g (relative): the finite gain's share\n",
                    r->difference);
    } else {
        fprintf(o, "\n  formula at the file's numbers   %s\n", ls_fmt_full(b1, sizeof b1, r->value));
        fprintf(o, "  solver                          %s\n", ls_fmt_full(b2, sizeof b2, r->solve));
        fprintf(o, "  self-check: relative difference %.2g (at most %.2g%s)\n", r->difference, r->bound,
                r->bound == LS_FORMULA_SELF_CHECK         ? ""
                : r->bound == LS_FORMULA_SELF_CHECK_PORTS ? ": a port field, which the solver gets by low-rank updates"
                                                          : ": the solver's own error bound, the system is ill-conditioned");
    }
    if (r->nnotes) {
        fputs("\n  notes:\n", o);
        for (int i = 0; i < r->nnotes; i++)
            fprintf(o, "    %s\n", r->notes[i]);
    }
}

/* loadstack formula FILE QUANTITY: the exact formula, its value and the solver's. */
int ls_cmd_formula(ls_cli *cli)
{
    ls_session s;
    cli->keep_syntax = true;
    int code = ls_session_load(&s, cli, cli->pos[0], NULL);
    if (code == LS_EXIT_OK)
        code = ls_session_solve(&s);
    ls_q *q = NULL;
    if (code == LS_EXIT_OK) {
        ls_expr *e = ls_parse_expr_string(&s.diags, "quantity", cli->pos[1], true);
        q = e ? ls_bind_quantity(&s.nl, e) : NULL;
        if (!q)
            code = LS_EXIT_USAGE;
    }
    ls_formula_result r = {0};
    if (code == LS_EXIT_OK) {
        ls_formula_req req = {.quantity = cli->pos[1], .symbols = cli->symbols, .ideal = cli->ideal};
        code = ls_formula(&s.op, &s.prog, q, &req, &r, &s.diags);
    }
    if (code != LS_EXIT_OK) {
        ls_diags_print(&s.diags, stderr);
        ls_formula_result_free(&r);
        ls_session_free(&s);
        return code;
    }
    FILE *o = ls_out_open(cli);
    if (cli->fmt == FMT_JSON)
        report_json(o, cli, &r);
    else if (cli->fmt == FMT_CSV)
        report_csv(o, cli, &r);
    else
        report_text(o, cli, &r, ls_unit_of(q->dims, cli->ascii));
    ls_formula_result_free(&r);
    code = ls_out_close(cli, ls_session_verdict(&s, LS_EXIT_OK));
    ls_diags_print(&s.diags, stderr);
    ls_session_free(&s);
    return code;
}
