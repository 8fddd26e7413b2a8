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

#include "analysis/checks.h"
#include "analysis/results.h"
#include "circuit.h"
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

/* Solve and exercise every result reader on a circuit that loaded. */
static void solve_and_report(ls_circuit *c, FILE *sink)
{
    ls_options o = {.solver = LS_CHOOSE_AUTO, .min_ratio = 0, .derate = 1};
    if (ls_circuit_solve_op(c, &o) != LS_DONE)
        return;
    ls_checks checks;
    if (ls_checks_run(&c->op, true, &checks) == 0) {
        ls_report rp = {.out = sink, .fmt = FMT_JSON, .sig = 4, .diags = &c->diags};
        ls_results res;
        if (ls_results_compute(&res, &c->op, ls_report_needs(&rp)) == 0)
            ls_report_solve(&rp, &res, &checks);
        ls_results_free(&res);
        ls_checks_free(&checks);
    }
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    const char *text = size ? (const char *)data : "";
    size_t len = size;
    char *set = NULL;
    leading_set(&text, &len, &set);

    /* the program's and the library's own loader (circuit.c): elaborated
     * even after syntax errors, solved only without errors */
    FILE *sink = fopen("/dev/null", "w");
    ls_circuit c;
    ls_circuit_init(&c);
    const char *sets[1] = {set};
    ls_load how = {.name = "fuzz.stack", .text = text, .len = len, .sets = sets, .nsets = set ? 1 : 0};
    if (ls_circuit_load(&c, &how) == LS_LOADED)
        solve_and_report(&c, sink ? sink : stderr);
    if (sink) {
        ls_diags_print(&c.diags, sink); /* the caret excerpts walk the line map */
        fclose(sink);
    }
    ls_circuit_release(&c);
    free(set);
    return 0;
}
