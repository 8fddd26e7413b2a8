/* fuzz_circuit.c — libFuzzer target over the whole pipeline a user's file goes
 * through: parse, elaborate, check the topology, assemble, factor, solve, the
 * port analyses (through the checks and the ratio rule) and the JSON report.
 *
 * The input is one circuit file.  When it starts with a line "@set NAME=VALUE",
 * that line is taken as a --set override instead (so the command-line path of
 * parameter overrides is fuzzed too); the rest is the circuit.
 *
 * Built only with the meson option -Dfuzz=true and clang; see .ci/fuzz.sh. */
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analysis/analysis.h"
#include "netlist/elab.h"
#include "lang/parser.h"
#include "report/report.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

/* Split off a leading "@set NAME=VALUE" line; returns true and fills *set
 * (a malloc'd NUL-terminated copy of NAME=VALUE, caller frees) when present.
 * A NUL inside the line ends the text early, as it would on a command line. */
static bool leading_set(const char **text, size_t *len, char **set)
{
    *set = NULL;
    if (*len < 6 || memcmp(*text, "@set ", 5) != 0)
        return false;
    const char *nl = memchr(*text, '\n', *len);
    size_t n = nl ? (size_t)(nl - *text) : *len;
    *set = malloc(n - 5 + 1);
    if (!*set)
        return false;
    memcpy(*set, *text + 5, n - 5);
    (*set)[n - 5] = 0;
    *text += nl ? n + 1 : n;
    *len -= nl ? n + 1 : n;
    return true;
}

/* Parse the --set text as ls_session_load does (the whole NAME=VALUE is the
 * "--set" pseudo-file); returns the number of settings made (0 or 1), -1 when
 * there is no '=' or the value does not parse. */
static int make_setting(ls_diags *d, const char *set, ls_setting *out)
{
    if (!set)
        return 0;
    const char *eq = strchr(set, '=');
    if (!eq)
        return -1;
    size_t nlen = (size_t)(eq - set);
    int id = ls_sources_add(d, "--set", set, (unsigned)strlen(set));
    if (id < 0)
        return -1;
    out->name = ls_arena_strndup(d->arena, set, nlen);
    out->value = ls_parse_expr_at(d, id, (unsigned)nlen + 1, false);
    out->loc = (ls_loc){id, 0, (unsigned)nlen};
    out->used = false;
    return out->value && out->name ? 1 : -1;
}

/* Solve and exercise every result reader on a circuit that elaborated. */
static void solve_and_report(ls_netlist *nl, FILE *sink)
{
    ls_options o = {.solver = LS_CHOOSE_AUTO, .min_ratio = 0, .derate = 1};
    ls_op op;
    if (ls_op_solve(&op, nl, &o) == LS_EXIT_OK) {
        ls_checks checks;
        if (ls_checks_run(&op, true, &checks) == 0) {
            ls_report rp = {.out = sink, .fmt = FMT_JSON, .sig = 4, .diags = nl->diags};
            ls_results res;
            if (ls_results_compute(&res, &op, ls_report_needs(&rp)) == 0)
                ls_report_solve(&rp, &res, &checks);
            ls_results_free(&res);
            ls_checks_free(&checks);
        }
    }
    ls_op_free(&op);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    const char *text = (const char *)data;
    size_t len = size;
    char *set = NULL;
    leading_set(&text, &len, &set);

    ls_arena arena;
    ls_diags diags;
    ls_arena_init(&arena);
    ls_diags_init(&diags, &arena);
    FILE *sink = fopen("/dev/null", "w");
    ls_program prog;
    int errs = ls_parse_string(&diags, "fuzz.stack", text, len, &prog);
    ls_setting sets[1];
    int nsets = make_setting(&diags, set, sets);
    if (nsets >= 0) {
        /* like the program: elaborate even after syntax errors, solve only
         * a circuit without errors */
        ls_netlist nl;
        memset(&nl, 0, sizeof nl);
        if (ls_elaborate(&prog, &diags, sets, nsets, &nl) == 0 && errs == 0)
            solve_and_report(&nl, sink ? sink : stderr);
        ls_netlist_free(&nl);
    }
    if (sink) {
        ls_diags_print(&diags, sink); /* the caret excerpts walk the line map */
        fclose(sink);
    }
    ls_diags_free(&diags);
    ls_arena_free(&arena);
    free(set);
    return 0;
}
