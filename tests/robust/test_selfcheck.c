/* test_selfcheck.c — the self-check (selfcheck.h) passes a right solution and
 * fails a wrong one loudly.  A Wheatstone bridge with a load across it, solved;
 * then one node voltage moved by one part in a million (Kirchhoff's current
 * law must then fail at a node next to it) and, separately, one part's power
 * moved by the same amount (Tellegen's theorem: the absorbed powers of a
 * network sum to zero, so the sum must then fail).  And a source whose only
 * loop is open (a 10 mOhm resistor to a node nothing else joins) next to the bridge:
 * its current is rounding, some 1e-47 A at 10 V, and must pass as the noise it
 * is, while a power moved by a thousandth elsewhere still fails (a fuzzing
 * regression). */
#include <math.h>
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

/* the open loop alone (every power rounding), then beside a divider */
static const char *open_loop = "ground gnd\nvoltage vo gnd -> c 10 V\nresistor ro1 c -> d 1k\n"
                               "resistor ro2 d -> dangling 10m\n";
static const char *open_beside = "ground gnd\nvoltage vs gnd -> top 10 V\nresistor r1 top -> a 1k\n"
                                 "resistor r2 a -> gnd 2k\nvoltage vo gnd -> c 10 V\nresistor ro1 c -> d 1k\n"
                                 "resistor ro2 d -> dangling 10m\n";

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

/* Parse and elaborate text into *nl; false on any error. */
static bool load(ls_diags *diags, const char *name, const char *src, ls_netlist *nl)
{
    ls_program prog;
    memset(nl, 0, sizeof *nl);
    return ls_parse_string(diags, name, src, strlen(src), &prog) == 0 && ls_elaborate(&prog, diags, NULL, 0, nl) == 0;
}

/* Solve src and check it; with moved, one part's power (r1) moved by that
 * share first.  Returns ls_selfcheck's answer; *noise: the
 * largest |current| of the open loop's source. */
static int check_case(ls_diags *diags, const char *src, double moved, double *noise)
{
    ls_netlist nl;
    if (!load(diags, "open.stack", src, &nl))
        return 2;
    ls_options o = {.solver = LS_CHOOSE_AUTO, .derate = 1};
    ls_op op;
    int rc = 2;
    if (ls_op_solve(&op, &nl, &o) == LS_DONE) {
        *noise = fabs(op.ipart[ls_netlist_find_part(&nl, "vo")]);
        if (moved)
            op.ppart[ls_netlist_find_part(&nl, "r1")] *= 1 + moved;
        rc = ls_selfcheck(&op);
    }
    ls_op_free(&op);
    ls_netlist_free(&nl);
    return rc;
}

static void open_loop_cases(ls_diags *diags)
{
    double noise = 1;
    int before = diags->errors;
    want(check_case(diags, open_loop, 0, &noise) == 0 && diags->errors == before,
         "an open loop's rounding passes Tellegen's theorem");
    want(noise < 1e-15, "the open loop carries no current but rounding");
    before = diags->errors;
    want(check_case(diags, open_beside, 0, &noise) == 0 && diags->errors == before,
         "beside a divider, it passes");
    /* the 10 mOhm resistor's 2000 A of cancelling conductance currents at
     * 10 V set the powers' rounding scale (2e4 W, allowed 3e-7 W): a power
     * moved by a thousandth (1e-5 W) is far outside it */
    want(check_case(diags, open_beside, 1e-3, &noise) == -1 && has_error(diags, "Tellegen"),
         "and a moved power of the divider's still fails");
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
    open_loop_cases(&diags);
    ls_diags_free(&diags);
    ls_arena_free(&arena);
    printf("%s\n", fails ? "self-check test failed" : "the self-check passes right results and fails wrong ones");
    return fails ? 1 : 0;
}
