/* test_core.c — expressions and unit algebra, elaboration (blocks, names,
 * params), and each part kind's MNA stamp against the hand-derived entries of
 * modified nodal analysis (KCL rows: currents leaving the node; one extra row
 * and column per voltage-defined branch). */
#include "../../cu_run.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "../front_world.h"
#include "mna/mna.h"

typedef struct world {
    ls_arena a;
    ls_diags d;
    ls_program prog;
    ls_netlist nl;
    ls_mna m;
    int errors;
} world;

static int load(world *w, const char *text)
{
    memset(w, 0, sizeof *w);
    w->errors = ls_test_front(&w->a, &w->d, &w->prog, &w->nl, text);
    if (!w->errors)
        ls_mna_build(&w->m, &w->nl);
    return w->errors;
}

static void unload(world *w)
{
    ls_mna_free(&w->m);
    ls_test_front_free(&w->a, &w->d, &w->nl);
}

static double param(world *w, const char *name)
{
    int e = ls_hash_get(&w->nl.names, name);
    if (e < 0 || w->nl.ents[e].kind != ENT_PARAM)
        return NAN;
    return w->nl.params[w->nl.ents[e].index].value;
}

/* Entry (i, j) of the compressed matrix, summed duplicates. */
static double entry(const ls_csc *a, int i, int j)
{
    for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++)
        if (a->rowind[p] == i)
            return a->val[p];
    return 0;
}

static int node(world *w, const char *name)
{
    return ls_netlist_find_node(&w->nl, name) - 1;
}

static bool near(double a, double b) { return fabs(a - b) <= 1e-12 * fmax(1, fabs(b)); }

/* Precedence of the language (docs/language.md): ^ right-assoc, unary minus, * /, ||, + -. */
static void test_expressions(void)
{
    world w;
    CU_ASSERT_EQUAL_FATAL(load(&w, "ground g\n"
                                   "let a = 2 + 3 * 4\n"
                                   "let b = -2 ^ 2\n"
                                   "let c = 2 ^ 3 ^ 2\n"
                                   "let d = 10k || 10k\n"
                                   "let e = 1k + 3k || 6k\n"
                                   "let f = sqrt(16) + abs(-2) + min(3, 1, 2) + max(1, 5)\n"
                                   "let g2 = ln(exp(2)) + log10(1000)\n"
                                   "let h = (1 + 2) * 3\n"
                                   "let i = 5 V / 1 mA\n"
                                   "let j = 4k7 / 47R\n"),
                          0);
    CU_ASSERT(near(param(&w, "a"), 14));
    CU_ASSERT(near(param(&w, "b"), -4));
    CU_ASSERT(near(param(&w, "c"), 512));
    CU_ASSERT(near(param(&w, "d"), 5000));
    CU_ASSERT(near(param(&w, "e"), 3000));
    CU_ASSERT(near(param(&w, "f"), 4 + 2 + 1 + 5));
    CU_ASSERT(near(param(&w, "g2"), 5));
    CU_ASSERT(near(param(&w, "h"), 9));
    CU_ASSERT(near(param(&w, "i"), 5000));
    CU_ASSERT(near(param(&w, "j"), 100));
    int e = ls_hash_get(&w.nl.names, "i");
    ls_dims d = w.nl.params[w.nl.ents[e].index].dims;
    CU_ASSERT(d.known && d.v == 1 && d.a == -1); /* V / A is a resistance */
    unload(&w);
}

static int errors_of(const char *text)
{
    world w;
    int n = load(&w, text);
    unload(&w);
    return n;
}

/* Units are exponents of V and A, checked where known. */
static void test_unit_algebra(void)
{
    CU_ASSERT(errors_of("ground g\nlet x = 1 V + 1 mA\n") > 0);
    CU_ASSERT(errors_of("ground g\nresistor r g -> a 5 V\ncurrent i g -> a 1 mA\n") > 0);
    CU_ASSERT(errors_of("ground g\nresistor r g -> a 5 V / 1 mA\ncurrent i g -> a 1 mA\n") == 0);
    CU_ASSERT(errors_of("ground g\nlet p = 2 W / 1 A\nvoltage v g -> a p rint=1\n") == 0);
    CU_ASSERT(errors_of("ground g\nlet p = 2 W / 1 A\ncurrent i g -> a p\nresistor r a -> g 1k\n") > 0);
    CU_ASSERT(errors_of("ground g\nlet x = 2 ^ 1 V\n") > 0);
    CU_ASSERT(errors_of("ground g\nlet x = sqrt(4 V)\n") > 0);
    CU_ASSERT(errors_of("ground g\nlet x = exp(1 A)\n") > 0);
    CU_ASSERT(errors_of("ground g\nlet x = 1 / 0\n") > 0);
    CU_ASSERT(errors_of("ground g\nresistor r g -> a 0\ncurrent i g -> a 1 mA\n") > 0);
    CU_ASSERT(errors_of("ground g\nresistor r g -> a -1k\ncurrent i g -> a 1 mA\n") > 0);
}

/* Blocks: pins alias outer nodes, locals are INSTANCE.NAME, params and defaults. */
static void test_blocks(void)
{
    world w;
    CU_ASSERT_EQUAL_FATAL(load(&w, "ground gnd\n"
                                   "use stage s1 in=a out=b gain=3\n"
                                   "block stage in out gain=2 rin=10k\n"
                                   "  resistor r_in in -> mid rin\n"
                                   "  resistor r_f mid -> out rin * gain\n"
                                   "  use leaf l1 x=mid\n"
                                   "end\n"
                                   "block leaf x\n"
                                   "  resistor r x -> ground 1k\n"
                                   "end\n"
                                   "voltage v gnd -> a 1 V\n"
                                   "resistor rl b -> gnd 1k\n"),
                          0);
    CU_ASSERT(ls_netlist_find_node(&w.nl, "s1.mid") > 0);
    CU_ASSERT(ls_netlist_find_node(&w.nl, "s1.in") == ls_netlist_find_node(&w.nl, "a"));
    int rf = ls_netlist_find_part(&w.nl, "s1.r_f");
    CU_ASSERT_FATAL(rf >= 0);
    CU_ASSERT(near(w.nl.parts[rf].value, 30e3));
    int leaf = ls_netlist_find_part(&w.nl, "s1.l1.r");
    CU_ASSERT_FATAL(leaf >= 0);
    CU_ASSERT_EQUAL(w.nl.parts[leaf].pin[0], ls_netlist_find_node(&w.nl, "s1.mid"));
    CU_ASSERT_EQUAL(w.nl.parts[leaf].pin[1], 0);
    unload(&w);
    CU_ASSERT(errors_of("ground g\nblock a x\n use b i1 y=x\nend\nblock b y\n use a i2 x=y\nend\nuse a top x=g\n") > 0);
    CU_ASSERT(errors_of("ground g\nblock a x\n resistor r x -> g 1k\nend\nuse a i1\n") > 0);    /* pin missing */
    CU_ASSERT(errors_of("ground g\nblock a x p=\n resistor r x -> g p\nend\nuse a i1 x=g\n") > 0); /* no default */
    CU_ASSERT(errors_of("ground g\nresistor r1 a -> g 1k\nresistor r1 a -> g 1k\n") > 0);      /* duplicate */
    CU_ASSERT(errors_of("ground g\nresistor a a -> g 1k\n") > 0);                            /* node vs part */
}

/* ---- stamps ---------------------------------------------------------------------------------- */

static void test_stamp_resistor_and_sources(void)
{
    world w;
    CU_ASSERT_EQUAL_FATAL(load(&w, "ground g\n"
                                   "voltage v g -> a 5 V rint=2\n"
                                   "resistor r a -> b 4\n"
                                   "current i g -> b 3 mA\n"
                                   "resistor rb b -> g 8\n"),
                          0);
    int a = node(&w, "a"), b = node(&w, "b"), k = w.nl.parts[0].branch;
    const ls_csc *A = &w.m.a;
    CU_ASSERT(near(entry(A, a, a), 0.25));
    CU_ASSERT(near(entry(A, a, b), -0.25));
    CU_ASSERT(near(entry(A, b, b), 0.25 + 0.125));
    /* V(a) - V(g) + rs I = 5, the current I leaves g (dropped) and enters a */
    CU_ASSERT(near(entry(A, k, a), 1));
    CU_ASSERT(near(entry(A, k, k), 2));
    CU_ASSERT(near(entry(A, a, k), -1));
    CU_ASSERT(near(w.m.b[k], 5));
    CU_ASSERT(near(w.m.b[b], 3e-3)); /* 3 mA flows into b */
    unload(&w);
}

/* Branch unknowns are numbered by the elaborator (nodes first, then each
 * voltage-defined part's branch in part order) and the MNA builder writes
 * nothing in the netlist: one netlist can back several solves at once. */
static void test_branches_fixed_at_elaboration(void)
{
    ls_arena a;
    ls_diags d;
    ls_program prog;
    ls_netlist nl;
    memset(&nl, 0, sizeof nl);
    int errors = ls_test_front(&a, &d, &prog, &nl,
                               "ground g\n"
                               "voltage v g -> a 5 V\n"
                               "resistor r a -> b 1k\n"
                               "vcvs e g -> c gain=2 cplus=b cminus=g\n"
                               "resistor rc c -> g 1k\n"
                               "voltage w g -> d 1 V\n"
                               "resistor rd d -> g 1k\n");
    CU_ASSERT_EQUAL_FATAL(errors, 0);
    int nn = nl.nnodes - 1;
    CU_ASSERT_EQUAL(nl.parts[ls_netlist_find_part(&nl, "v")].branch, nn);
    CU_ASSERT_EQUAL(nl.parts[ls_netlist_find_part(&nl, "r")].branch, -1);
    CU_ASSERT_EQUAL(nl.parts[ls_netlist_find_part(&nl, "e")].branch, nn + 1);
    CU_ASSERT_EQUAL(nl.parts[ls_netlist_find_part(&nl, "w")].branch, nn + 2);
    size_t size = (size_t)nl.nparts * sizeof *nl.parts;
    ls_part *before = malloc(size);
    CU_ASSERT_FATAL(before != NULL);
    memcpy(before, nl.parts, size);
    for (int round = 0; round < 2; round++) {
        ls_mna m;
        CU_ASSERT_EQUAL(ls_mna_build(&m, &nl), 0);
        CU_ASSERT_EQUAL(m.n, nn + 3);
        CU_ASSERT_EQUAL(memcmp(before, nl.parts, size), 0);
        ls_mna_free(&m);
    }
    free(before);
    ls_test_front_free(&a, &d, &nl);
}

static void test_stamp_controlled(void)
{
    world w;
    CU_ASSERT_EQUAL_FATAL(load(&w, "ground g\n"
                                   "voltage v g -> a 1 V\n"
                                   "resistor r1 a -> c 1k\n"
                                   "resistor r2 c -> g 1k\n"
                                   "vcvs e g -> x gain=10 cplus=a cminus=c\n"
                                   "resistor rx x -> g 1k\n"
                                   "vccs gm1 y -> g gm=2m cplus=a cminus=c\n"
                                   "resistor ry y -> g 1k\n"
                                   "cccs f1 z -> g gain=3 via=r1\n"
                                   "resistor rz z -> g 1k\n"
                                   "ccvs h1 g -> q rm=50 via=v\n"
                                   "resistor rq q -> g 1k\n"),
                          0);
    const ls_csc *A = &w.m.a;
    int a = node(&w, "a"), c = node(&w, "c"), x = node(&w, "x"), y = node(&w, "y"), z = node(&w, "z"),
        q = node(&w, "q");
    int ke = w.nl.parts[ls_netlist_find_part(&w.nl, "e")].branch;
    int kh = w.nl.parts[ls_netlist_find_part(&w.nl, "h1")].branch;
    int kv = w.nl.parts[ls_netlist_find_part(&w.nl, "v")].branch;
    /* vcvs row: V(x) - 10 (V(a) - V(c)) = 0 */
    CU_ASSERT(near(entry(A, ke, x), 1));
    CU_ASSERT(near(entry(A, ke, a), -10));
    CU_ASSERT(near(entry(A, ke, c), 10));
    /* vccs: 2 mS (V(a) - V(c)) leaves y */
    CU_ASSERT(near(entry(A, y, a), 2e-3));
    CU_ASSERT(near(entry(A, y, c), -2e-3));
    /* cccs: 3 I(r1) = 3 (V(a) - V(c)) / 1k leaves z */
    CU_ASSERT(near(entry(A, z, a), 3e-3));
    CU_ASSERT(near(entry(A, z, c), -3e-3));
    /* ccvs row: V(q) - 50 I(v) = 0 */
    CU_ASSERT(near(entry(A, kh, q), 1));
    CU_ASSERT(near(entry(A, kh, kv), -50));
    unload(&w);
}

static void test_stamp_opamp_and_port(void)
{
    world w;
    CU_ASSERT_EQUAL_FATAL(load(&w, "ground g\n"
                                   "voltage v g -> a 1 V\n"
                                   "port p a -> b\n"
                                   "opamp u1 plus=b minus=o out=o\n"
                                   "opamp u2 plus=b minus=f out=o2 gain=1000 rin=1M rout=50\n"
                                   "resistor r1 o2 -> f 1k\n"
                                   "resistor r2 f -> g 1k\n"
                                   "resistor rl o -> g 1k\n"),
                          0);
    const ls_csc *A = &w.m.a;
    int a = node(&w, "a"), b = node(&w, "b"), o = node(&w, "o"), o2 = node(&w, "o2"), f = node(&w, "f");
    int kp = w.nl.parts[ls_netlist_find_part(&w.nl, "p")].branch;
    int k1 = w.nl.parts[ls_netlist_find_part(&w.nl, "u1")].branch;
    int k2 = w.nl.parts[ls_netlist_find_part(&w.nl, "u2")].branch;
    /* port: V(a) - V(b) = 0; its current leaves a and enters b */
    CU_ASSERT(near(entry(A, kp, a), 1));
    CU_ASSERT(near(entry(A, kp, b), -1));
    CU_ASSERT(near(entry(A, a, kp), 1));
    CU_ASSERT(near(entry(A, b, kp), -1));
    /* ideal op-amp (nullor): V+ - V- = 0, output current enters out */
    CU_ASSERT(near(entry(A, k1, b), 1));
    CU_ASSERT(near(entry(A, k1, o), -1));
    CU_ASSERT(near(entry(A, o, k1), -1));
    /* finite op-amp: V(out) - A (V+ - V-) + rout I = 0; rin between the inputs */
    CU_ASSERT(near(entry(A, k2, o2), 1));
    CU_ASSERT(near(entry(A, k2, b), -1000));
    CU_ASSERT(near(entry(A, k2, f), 1000));
    CU_ASSERT(near(entry(A, k2, k2), 50));
    CU_ASSERT(near(entry(A, f, b), -1e-6 + 0.0));
    unload(&w);
}

static void test_topology(void)
{
    /* a node joined only through a current source has no DC path: a cut-set */
    CU_ASSERT(errors_of("ground g\ncurrent i g -> a 1 mA\n") == 0); /* elaboration alone passes */
    world w;
    load(&w, "ground g\ncurrent i g -> a 1 mA\nresistor r a -> b 1k\n");
    CU_ASSERT(ls_topology_check(&w.nl) > 0);
    unload(&w);
    load(&w, "ground g\nvoltage v1 g -> a 1 V\nvoltage v2 g -> a 2 V\n");
    CU_ASSERT(ls_topology_check(&w.nl) > 0); /* loop of voltage-defined branches */
    unload(&w);
    load(&w, "ground g\nvoltage v1 g -> a 1 V rint=1\nvoltage v2 g -> a 2 V\n");
    CU_ASSERT(ls_topology_check(&w.nl) == 0); /* rs breaks the loop */
    unload(&w);
}

/* Every kind's pins fit the part record's LS_MAX_PINS slots (kept at the
 * most any kind uses, so a grid's two-pin resistors do not carry unused
 * ones), and every node option fills a slot among its kind's pins. */
static void test_pins_fit(void)
{
    int most = 0, bad = 0;
    for (int i = 0; i < ls_kind_count(); i++) {
        const ls_kind *k = ls_kind_at(i);
        most = k->npins > most ? k->npins : most;
        bad += k->npins > LS_MAX_PINS;
        for (int j = 0; j < k->nopts; j++)
            bad += k->opts[j].kind == OPT_NODE && (k->opts[j].pin < 0 || k->opts[j].pin >= k->npins);
    }
    CU_ASSERT_EQUAL(bad, 0);
    CU_ASSERT_EQUAL(most, LS_MAX_PINS); /* a controlled source's four: no slot to spare */
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"pins fit the part record", test_pins_fit},
        {"expressions", test_expressions},
        {"unit algebra", test_unit_algebra},
        {"blocks", test_blocks},
        {"stamp: resistor and sources", test_stamp_resistor_and_sources},
        {"branches fixed at elaboration", test_branches_fixed_at_elaboration},
        {"stamp: controlled sources", test_stamp_controlled},
        {"stamp: op-amp and port", test_stamp_opamp_and_port},
        {"topology", test_topology},
    };
    return ls_cu_run("core", NULL, NULL, cases, LS_CU_COUNT(cases));
}
