/* test_selfcheck.c — the self-check (selfcheck.h) passes a right solution and
 * fails a wrong one loudly.  A Wheatstone bridge with a load across it, solved;
 * then one node voltage moved by one part in a million (Kirchhoff's current
 * law must then fail at a node next to it) and, separately, one part's power
 * moved by the same amount (Tellegen's theorem: the absorbed powers of a
 * network sum to zero, so the sum must then fail). */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analysis/analysis.h"
#include "elab/elab.h"
#include "lang/parser.h"
#include "analysis/selfcheck.h"

static const char *text = "ground gnd\nvoltage vs gnd -> top 10 V\nresistor r1 top -> a 1k\n"
                          "resistor r2 a -> gnd 2k\nresistor r3 top -> b 3k\nresistor r4 b -> gnd 4k\n"
                          "resistor rl a -> b 5k\n";

static int fails;

static void want(int ok, const char *what)
{
    if (!ok) {
        fprintf(stderr, "FAIL: %s\n", what);
        fails++;
    }
}

static bool has_error(const ls_diags *d, const char *needle)
{
    for (int i = 0; i < d->n; i++)
        if (d->items[i].sev == LS_SEV_ERROR && strstr(d->items[i].msg, needle))
            return true;
    return false;
}

int main(void)
{
    ls_arena arena;
    ls_diags diags;
    ls_arena_init(&arena);
    ls_diags_init(&diags, &arena);
    ls_program prog;
    ls_netlist nl;
    memset(&nl, 0, sizeof nl);
    if (ls_parse_string(&diags, "bridge.stack", text, strlen(text), &prog) != 0 ||
        ls_elaborate(&prog, &diags, NULL, 0, &nl) != 0)
        return 2;
    ls_options o = {.solver = LS_CHOOSE_AUTO, .derate = 1};
    ls_op op;
    want(ls_op_solve(&op, &nl, &o) == LS_DONE, "the bridge solves (with the check on, if set)");
    want(ls_selfcheck(&op) == 0 && diags.errors == 0, "a right solution passes");
    int a = ls_netlist_find_node(&nl, "a");
    double keep = op.v[a];
    op.v[a] *= 1 + 1e-6;
    want(ls_selfcheck(&op) == -1 && has_error(&diags, "Kirchhoff's current law fails"), "a moved node fails KCL");
    op.v[a] = keep;
    int before = diags.errors;
    want(ls_selfcheck(&op) == 0 && diags.errors == before, "restored, it passes again");
    int r1 = ls_netlist_find_part(&nl, "r1");
    op.ppart[r1] *= 1 + 1e-6;
    want(ls_selfcheck(&op) == -1 && has_error(&diags, "Tellegen"), "a moved power fails Tellegen's theorem");
    ls_op_free(&op);
    ls_netlist_free(&nl);
    ls_diags_free(&diags);
    ls_arena_free(&arena);
    printf("%s\n", fails ? "self-check test failed" : "the self-check passes right results and fails wrong ones");
    return fails ? 1 : 0;
}
