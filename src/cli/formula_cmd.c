/* formula_cmd.c — loadstack formula FILE QUANTITY [--symbols A,B,...] [--ideal]. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "report/writer.h"
#include "elab/elab.h"
#include "base/fmt.h"
#include "analysis/formula.h"
#include "lang/parser.h"

/* The members of the formula report: in JSON (cli.md keys; a null value with
 * its reason) and, but the bound and the notes, as the CSV's field rows. */
static void formula_members(ls_wr *w, const ls_cli *cli, const ls_formula_result *r)
{
    ls_wr_fields(w, "field", "value");
    ls_wr_str(w, "quantity", cli->pos[1]);
    ls_wr_str(w, "expression", r->expression);
    ls_wr_str(w, "numerator", r->numerator);
    ls_wr_str(w, "denominator", r->denominator);
    ls_wr_arr(w, "symbols");
    for (int i = 0; i < r->nsymbols; i++)
        ls_wr_str(w, NULL, r->symbols[i]);
    ls_wr_end(w);
    ls_wr_bool(w, "ideal", r->ideal);
    ls_wr_num(w, "value", r->value);
    ls_wr_num(w, "solve", r->solve);
    ls_wr_num(w, "difference", r->difference);
    ls_wr_csv_rows(w, false);
    ls_wr_num(w, "bound", r->bound);
    ls_wr_arr(w, "notes");
    for (int i = 0; i < r->nnotes; i++)
        ls_wr_str(w, NULL, r->notes[i]);
    ls_wr_end(w);
}

/* The text's comparison of the formula with the solver: with --ideal the
 * ideal and finite-gain formulas, else the formula, each against the solver. */
static void formula_check_text(ls_wr *w, const ls_formula_result *r)
{
    char b1[64], b2[64];
    if (r->ideal) {
        ls_wr_say(w, "  ideal         %d finite op-amp gain%s taken to infinity%s\n", r->opamps_limited,
                  r->opamps_limited == 1 ? "" : "s", r->opamps_limited ? "" : " (there were none)");
        ls_wr_say(w, "\n  ideal formula at the file's numbers    %s\n", ls_fmt_num(b1, sizeof b1, r->value));
        ls_wr_say(w, "  finite-gain formula at those numbers   %s\n", ls_fmt_num(b1, sizeof b1, r->finite_value));
        ls_wr_say(w, "  solver                                 %s\n", ls_fmt_num(b2, sizeof b2, r->solve));
        ls_wr_say(w, "  self-check: the finite-gain formula agrees with the solver to %.2g\n", r->bound);
        if (r->opamps_limited)
            ls_wr_say(w, "  the ideal formula differs from the solver by %.3g (relative): the finite gain's share\n",
                      r->difference);
    } else {
        ls_wr_say(w, "\n  formula at the file's numbers   %s\n", ls_fmt_num(b1, sizeof b1, r->value));
        ls_wr_say(w, "  solver                          %s\n", ls_fmt_num(b2, sizeof b2, r->solve));
        ls_wr_say(w, "  self-check: relative difference %.2g (at most %.2g%s)\n", r->difference, r->bound,
                  r->bound == LS_FORMULA_SELF_CHECK         ? ""
                  : r->bound == LS_FORMULA_SELF_CHECK_PORTS ? ": a port field, which the solver gets by low-rank updates"
                                                            : ": the solver's own error bound, the system is ill-conditioned");
    }
}

/* The formula report, described once for every format (writer.h): the text
 * says the formula, its parts and symbols, the comparison and the notes. */
static void formula_report(ls_report *rp, const ls_cli *cli, const ls_formula_result *r, const char *unit)
{
    ls_wr w;
    ls_wr_begin(&w, rp);
    formula_members(&w, cli, r);
    ls_wr_say(&w, "Formula of %s%s%s%s\n\n", cli->pos[1], *unit ? " (" : "", unit, *unit ? ")" : "");
    ls_wr_say(&w, "  %s = %s\n\n", cli->pos[1], r->expression);
    if (strcmp(r->denominator, "1") != 0) {
        ls_wr_say(&w, "  numerator     %s\n", r->numerator);
        ls_wr_say(&w, "  denominator   %s\n", r->denominator);
    }
    ls_wr_say(&w, "  symbols       ");
    for (int i = 0; i < r->nsymbols; i++)
        ls_wr_say(&w, "%s%s", i ? ", " : "", r->symbols[i]);
    ls_wr_say(&w, "%s", r->nsymbols ? "\n" : "none (every value is a number)\n");
    formula_check_text(&w, r);
    if (r->nnotes) {
        ls_wr_say(&w, "\n  notes:\n");
        for (int i = 0; i < r->nnotes; i++)
            ls_wr_say(&w, "    %s\n", r->notes[i]);
    }
    ls_wr_finish(&w);
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
        code = ls_exit_code(ls_formula(&s.op, &s.prog, q, &req, &r, &s.diags));
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
    formula_report(&rp, cli, &r, ls_unit_of(q->dims, cli->ascii));
    ls_formula_result_free(&r);
    code = ls_out_close(cli, ls_session_verdict(&s, ls_report_done(&rp, LS_EXIT_OK)));
    ls_diags_print(&s.diags, stderr);
    ls_session_free(&s);
    return code;
}
