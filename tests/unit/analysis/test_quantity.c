/* test_quantity.c — the one walk over a quantity's tree (src/analysis/quantity.c)
 * and the double domain on it (ls_q_eval), on a divider solved by hand:
 * 12 V over 1k and 3k gives 9 V at the tap (the voltage divider rule),
 * 3 mA through both (Ohm's law), 27 mW in the 3k (P = V I). */
#include "../../cu_run.h"
#include <math.h>
#include <string.h>

#include "analysis/analysis.h"
#include "analysis/quantity.h"
#include "../front_world.h"

typedef struct world {
    ls_arena a;
    ls_diags d;
    ls_program prog;
    ls_netlist nl;
    ls_op op;
} world;

static const char divider[] = "ground gnd\nvoltage vs gnd -> top 12 V\nresistor r1 top -> tap 1k\n"
                              "resistor r2 tap -> gnd 3k\n";

static int load(world *w)
{
    memset(w, 0, sizeof *w);
    int errors = ls_test_front(&w->a, &w->d, &w->prog, &w->nl, divider);
    if (!errors) {
        ls_options o = {0};
        errors = ls_op_solve(&w->op, &w->nl, &o) != LS_DONE;
    }
    return errors;
}

static void unload(world *w)
{
    ls_op_free(&w->op);
    ls_test_front_free(&w->a, &w->d, &w->nl);
}

/* The quantity text bound to w's netlist (NULL on an error). */
static ls_q *bind(world *w, const char *text)
{
    ls_expr *e = ls_parse_expr_string(&w->d, "q", text, false);
    return e ? ls_bind_quantity(&w->nl, e) : NULL;
}

static double eval(world *w, const char *text)
{
    ls_q *q = bind(w, text);
    CU_ASSERT_PTR_NOT_NULL_FATAL(q);
    return ls_q_eval(&w->op, q);
}

static void test_double_domain(void)
{
    world w;
    CU_ASSERT_FATAL(load(&w) == 0);
    CU_ASSERT_DOUBLE_EQUAL(eval(&w, "tap"), 9.0, 1e-12);                      /* divider rule: 12 * 3k/4k */
    CU_ASSERT_DOUBLE_EQUAL(eval(&w, "r2.current"), 3e-3, 1e-15);             /* Ohm: 12 V / 4k */
    CU_ASSERT_DOUBLE_EQUAL(eval(&w, "r2.power"), 27e-3, 1e-14);              /* P = V I = 9 V * 3 mA */
    CU_ASSERT_DOUBLE_EQUAL(eval(&w, "-(top - tap) / r1.current"), -1000, 1e-9); /* R = V / I */
    CU_ASSERT_DOUBLE_EQUAL(eval(&w, "sqrt(3^2 + 4^2)"), 5, 1e-15);           /* 3-4-5 triangle */
    CU_ASSERT_DOUBLE_EQUAL(eval(&w, "max(1, tap, 2) + min(tap, 4, 3)"), 12, 1e-12);
    CU_ASSERT_DOUBLE_EQUAL(eval(&w, "1k || 3k"), 750, 1e-12);                /* parallel: R1 R2 / (R1 + R2) */
    CU_ASSERT(isnan(eval(&w, "(tap - tap) / (tap - tap)")));                 /* 0/0 stays undefined */
    unload(&w);
}

/* A domain that writes down the order in which the walk meets the nodes. */
typedef struct trace {
    char s[128];
    bool refuse_calls;
} trace;

static void put(trace *t, const char *what)
{
    strncat(t->s, what, sizeof t->s - strlen(t->s) - 1);
}

static int t_accepts(void *ctx, const ls_q *q)
{
    trace *t = ctx;
    if (t->refuse_calls && q->kind == Q_CALL) {
        put(t, "refused ");
        return 7;
    }
    return 0;
}
static int t_const(void *ctx, const ls_q *q, void *out) { (void)q, (void)out; put(ctx, "const "); return 0; }
static int t_node(void *ctx, const ls_q *q, void *out) { (void)q, (void)out; put(ctx, "node "); return 0; }
static int t_prop(void *ctx, const ls_q *q, void *out) { (void)q, (void)out; put(ctx, "prop "); return 0; }
static int t_neg(void *ctx, const ls_q *q, void *a) { (void)q, (void)a; put(ctx, "neg "); return 0; }
static int t_binop(void *ctx, const ls_q *q, void *a, const void *b)
{
    (void)q, (void)a, (void)b;
    put(ctx, "bin ");
    return 0;
}
static int t_call(void *ctx, const ls_q *q, void *const *args, void *out)
{
    (void)args, (void)out;
    char buf[16];
    snprintf(buf, sizeof buf, "call%d ", q->nargs);
    put(ctx, buf);
    return 0;
}

static const ls_qdomain tracing = {
    .size = 1, .accepts = t_accepts, .constant = t_const, .node = t_node, .prop = t_prop,
    .neg = t_neg, .binop = t_binop, .call = t_call,
};

/* Operands left to right, each operation after its operands; a refusal
 * stops the walk before the refused node's operands, with its code. */
static void test_walk_order(void)
{
    world w;
    CU_ASSERT_FATAL(load(&w) == 0);
    ls_q *q = bind(&w, "-tap + r1.current * max(r1.value, 2 * top / r1.current)");
    CU_ASSERT_PTR_NOT_NULL_FATAL(q);
    trace t = {.s = ""};
    char v;
    CU_ASSERT_EQUAL(ls_q_walk(&tracing, &t, q, &v), 0);
    CU_ASSERT_STRING_EQUAL(t.s, "node neg prop prop const node bin prop bin call2 bin bin ");
    trace r = {.s = "", .refuse_calls = true};
    CU_ASSERT_EQUAL(ls_q_walk(&tracing, &r, q, &v), 7);
    CU_ASSERT_STRING_EQUAL(r.s, "node neg prop refused ");
    unload(&w);
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"double domain against the divider", test_double_domain},
        {"walk order and refusal", test_walk_order},
    };
    return ls_cu_run("quantity", NULL, NULL, cases, LS_CU_COUNT(cases));
}
