/* test_chain.c — the stage partition (src/chain.c) on small circuits whose
 * stages are worked out by hand from the rule in docs/chain.md: the pieces left
 * connected when every port is opened, ground and supply rails not joining;
 * names by instance, driver node or first part; signal order a stable
 * topological order of the ports. */
#include "../../cu_run.h"
#include <string.h>

#include "analysis/chain.h"
#include "../front_world.h"

typedef struct world {
    ls_arena a;
    ls_diags d;
    ls_program prog;
    ls_netlist nl;
    ls_chain c;
    int errors;
} world;

static int load(world *w, const char *text)
{
    memset(w, 0, sizeof *w);
    w->errors = ls_test_front(&w->a, &w->d, &w->prog, &w->nl, text);
    if (!w->errors)
        w->errors = ls_chain_build(&w->nl, &w->c) != 0;
    return w->errors;
}

static void unload(world *w)
{
    ls_chain_free(&w->c);
    ls_test_front_free(&w->a, &w->d, &w->nl);
}

/* The stage's parts as "a b c". */
static const char *parts_of(world *w, int s, char *buf, size_t n)
{
    buf[0] = 0;
    for (int k = 0; k < w->c.stages[s].nparts; k++) {
        size_t l = strlen(buf);
        snprintf(buf + l, n - l, "%s%s", k ? " " : "", w->nl.parts[w->c.stages[s].parts[k]].name);
    }
    return buf;
}

static bool is_rail(world *w, const char *node)
{
    int i = ls_netlist_find_node(&w->nl, node);
    return i >= 0 && w->c.rail[i];
}

/* A stiff supply is a rail and does not join the divider to the load; a source
 * with 2 ohm inside is a signal source and joins its stage. */
static void test_rails(void)
{
    world w;
    CU_ASSERT_FATAL(load(&w, "ground gnd\nvoltage vs gnd -> vcc 5 V rint=1\nresistor r1 vcc -> a 1k\n"
                             "resistor r2 a -> gnd 1k\nresistor r3 vcc -> b 1k\nresistor r4 b -> gnd 1k\n") == 0);
    CU_ASSERT(is_rail(&w, "vcc"));
    CU_ASSERT_EQUAL(w.c.nstages, 2);
    CU_ASSERT_EQUAL(w.c.nsupply, 1);
    unload(&w);
    CU_ASSERT_FATAL(load(&w, "ground gnd\nvoltage vs gnd -> vcc 5 V rint=2\nresistor r1 vcc -> a 1k\n"
                             "resistor r2 a -> gnd 1k\nresistor r3 vcc -> b 1k\nresistor r4 b -> gnd 1k\n") == 0);
    CU_ASSERT(!is_rail(&w, "vcc"));
    CU_ASSERT_EQUAL(w.c.nstages, 1);
    CU_ASSERT_EQUAL(w.c.nsupply, 0);
    unload(&w);
}

/* A rail derived from a rail (a stiff source between two nodes) is a rail; a
 * stiff source's node that drives a port is a signal. */
static void test_rail_chain_and_driver(void)
{
    world w;
    CU_ASSERT_FATAL(load(&w, "ground gnd\nvoltage v1 gnd -> a 5 V\nvoltage v2 a -> b 1 V\nresistor r b -> gnd 1k\n"
                             "voltage vs gnd -> s 1 V\nport p s -> t\nresistor rt t -> gnd 1k\n") == 0);
    CU_ASSERT(is_rail(&w, "a"));
    CU_ASSERT(is_rail(&w, "b"));
    CU_ASSERT(!is_rail(&w, "s"));
    char buf[200];
    CU_ASSERT_EQUAL_FATAL(w.c.nstages, 2);
    CU_ASSERT_STRING_EQUAL(parts_of(&w, 0, buf, sizeof buf), "vs");
    CU_ASSERT_STRING_EQUAL(w.c.stages[0].name, "s");
    CU_ASSERT(w.c.stages[0].has & LS_STAGE_SOURCE);
    CU_ASSERT_STRING_EQUAL(parts_of(&w, 1, buf, sizeof buf), "rt");
    CU_ASSERT_EQUAL(w.c.nsupply, 3); /* v1, v2 and r sit on rails and ground only */
    unload(&w);
}

/* Names: a whole block instance, else the driver node, else the first part;
 * an op-amp joins its pins into one stage and flags it. */
static void test_names(void)
{
    world w;
    CU_ASSERT_FATAL(load(&w, "ground gnd\nblock buf in out\n  opamp u plus=in minus=out out=out\nend\n"
                             "voltage vs gnd -> vcc 5 V\nresistor r1 vcc -> m 1k\nresistor r2 m -> gnd 1k\n"
                             "port p1 m -> b_in\nuse buf b1 in=b_in out=b_out\nport p2 b_out -> l\n"
                             "resistor rl l -> gnd 1k\n") == 0);
    CU_ASSERT_EQUAL_FATAL(w.c.nstages, 3);
    CU_ASSERT_STRING_EQUAL(w.c.stages[0].name, "m");
    CU_ASSERT_STRING_EQUAL(w.c.stages[0].named_by, "driver node");
    CU_ASSERT_STRING_EQUAL(w.c.stages[1].name, "b1");
    CU_ASSERT_STRING_EQUAL(w.c.stages[1].named_by, "instance");
    CU_ASSERT(w.c.stages[1].has & LS_STAGE_OPAMP);
    CU_ASSERT_STRING_EQUAL(w.c.stages[2].name, "rl");
    CU_ASSERT_STRING_EQUAL(w.c.stages[2].named_by, "first part");
    CU_ASSERT_EQUAL(w.c.nconns, 2);
    CU_ASSERT(w.c.conns[0].from == 0 && w.c.conns[0].to == 1);
    CU_ASSERT(w.c.conns[1].from == 1 && w.c.conns[1].to == 2);
    unload(&w);
}

/* Ports declared against the signal order still give a topological order;
 * ties go to the first mention; a loop through ports is flagged. */
static void test_order(void)
{
    world w;
    CU_ASSERT_FATAL(load(&w, "ground gnd\nresistor rc c -> gnd 1k\nresistor rb b -> gnd 1k\n"
                             "resistor ra a -> gnd 1k\nresistor rd d -> gnd 1k\n"
                             "port p_bc b -> c\nport p_ab a -> b\nport p_ad a -> d\n") == 0);
    CU_ASSERT_EQUAL_FATAL(w.c.nstages, 4);
    /* a feeds b and d; b feeds c: a first, then b (mentioned before d), then c before d (c was mentioned first) */
    CU_ASSERT_STRING_EQUAL(w.c.stages[0].name, "a");
    CU_ASSERT_STRING_EQUAL(w.c.stages[1].name, "b");
    CU_ASSERT_STRING_EQUAL(w.c.stages[2].name, "rc");
    CU_ASSERT_STRING_EQUAL(w.c.stages[3].name, "rd");
    CU_ASSERT(!w.c.cyclic);
    for (int k = 0; k < w.c.nconns; k++)
        CU_ASSERT(w.c.conns[k].from < w.c.conns[k].to);
    unload(&w);
    CU_ASSERT_FATAL(load(&w, "ground gnd\nresistor ra a -> gnd 1k\nresistor rb b -> gnd 1k\n"
                             "port p1 a -> b\nport p2 b -> a\n") == 0);
    CU_ASSERT(w.c.cyclic);
    CU_ASSERT_EQUAL(w.c.nstages, 2);
    unload(&w);
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"rails: stiff sources only", test_rails},
        {"rails: derived rails, port drivers", test_rail_chain_and_driver},
        {"names and op-amp stages", test_names},
        {"signal order and loops", test_order},
    };
    return ls_cu_run("chain", NULL, NULL, cases, LS_CU_COUNT(cases));
}
