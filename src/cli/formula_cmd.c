/* formula_cmd.c — loadstack formula FILE QUANTITY [--symbols A,B,...] [--ideal]. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "elab/elab.h"
#include "base/fmt.h"
#include "analysis/formula.h"
#include "lang/parser.h"

/* The formula report as one JSON object (cli.md keys), through the JSON
 * writer: meta first, a null value with its reason. */
static void report_json(ls_report *rp, const ls_cli *cli, const ls_formula_result *r)
{
    ls_jw jw, *w = &jw;
    ls_report_json_begin(rp, w);
    ls_jw_str(w, "quantity", cli->pos[1]);
    ls_jw_str(w, "expression", r->expression);
    ls_jw_str(w, "numerator", r->numerator);
    ls_jw_str(w, "denominator", r->denominator);
    ls_jw_arr(w, "symbols");
    for (int i = 0; i < r->nsymbols; i++)
        ls_jw_str(w, NULL, r->symbols[i]);
    ls_jw_end(w);
    ls_jw_bool(w, "ideal", r->ideal);
    ls_jw_num(w, "value", r->value);
    ls_jw_num(w, "solve", r->solve);
    ls_jw_num(w, "difference", r->difference);
    ls_jw_num(w, "bound", r->bound);
    ls_jw_arr(w, "notes");
    for (int i = 0; i < r->nnotes; i++)
        ls_jw_str(w, NULL, r->notes[i]);
    ls_jw_end(w);
    ls_report_json_end(rp, w);
}

static void report_csv(ls_report *rp, FILE *o, const ls_cli *cli, const ls_formula_result *r)
{
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
    if (!list) { /* an empty list would be a wrong one */
        rp->nomem = "the list of symbols";
        rp->nomem_bytes = n;
    }
    for (int i = 0; list && i < r->nsymbols; i++) {
        strcat(list, i ? " " : "");
        strcat(list, r->symbols[i]);
    }
    ls_csv_field(o, list ? list : "");
    free(list);
    fprintf(o, "\nideal,%s\n", r->ideal ? "true" : "false");
    fprintf(o, "value,%s\n", LS_CSV(r->value));
    fprintf(o, "solve,%s\n", LS_CSV(r->solve));
    fprintf(o, "difference,%s\n", LS_CSV(r->difference));
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
        fprintf(o, "\n  ideal formula at the file's numbers    %s\n", ls_fmt_num(b1, sizeof b1, r->value));
        fprintf(o, "  finite-gain formula at those numbers   %s\n", ls_fmt_num(b1, sizeof b1, r->finite_value));
        fprintf(o, "  solver                                 %s\n", ls_fmt_num(b2, sizeof b2, r->solve));
        fprintf(o, "  self-check: the finite-gain formula agrees with the solver to %.2g\n", r->bound);
        if (r->opamps_limited)
            fprintf(o, "  the ideal formula differs from the solver by %.3g (relative): the finite gain's share\n",
                    r->difference);
    } else {
        fprintf(o, "\n  formula at the file's numbers   %s\n", ls_fmt_num(b1, sizeof b1, r->value));
        fprintf(o, "  solver                          %s\n", ls_fmt_num(b2, sizeof b2, r->solve));
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
    if (code == LS_EXIT_OK && !(q = ls_session_quantity(&s, cli->pos[1])))
        code = LS_EXIT_USAGE;
    ls_formula_result r = {0};
    if (code == LS_EXIT_OK) {
        ls_formula_req req = {.quantity = cli->pos[1], .symbols = cli->symbols, .ideal = cli->ideal};
        int e0 = s.diags.errors;
        code = ls_formula(&s.op, &s.prog, q, &req, &r, &s.diags);
        if (code != LS_EXIT_OK && s.diags.errors == e0) /* every other failure gives its reason */
            ls_error(&s.diags, LS_NOLOC, "out of memory making the exact formula of '%s'", cli->pos[1]);
    }
    if (code != LS_EXIT_OK) {
        ls_diags_print(&s.diags, stderr);
        ls_formula_result_free(&r);
        ls_session_free(&s);
        return code;
    }
    FILE *o = ls_out_open(cli);
    ls_report rp = ls_report_for(&s, o);
    if (cli->fmt == FMT_JSON)
        report_json(&rp, cli, &r);
    else if (cli->fmt == FMT_CSV)
        report_csv(&rp, o, cli, &r);
    else
        report_text(o, cli, &r, ls_unit_of(q->dims, cli->ascii));
    ls_formula_result_free(&r);
    code = ls_out_close(cli, ls_session_verdict(&s, ls_report_done(&rp, LS_EXIT_OK)));
    ls_diags_print(&s.diags, stderr);
    ls_session_free(&s);
    return code;
}
