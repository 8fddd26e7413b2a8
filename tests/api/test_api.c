/* test_api.c — the public C interface, through <loadstack/loadstack.h> only,
 * against closed forms: the voltage-divider rule, Thevenin's theorem, the
 * loading of a source by a load (Vload = Vth * RL / (Rth + RL)), and the
 * derivative of the divider ratio, worked by hand below each case. */
#include <loadstack/loadstack.h>

#include <CUnit/Basic.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define REL(a, b, tol) (fabs((double)(a) - (double)(b)) <= (tol) * fmax(fabs((double)(a)), fabs((double)(b))))

/* Parse text named "t.stack" and solve; the test fails if either step does. */
static ls_circuit *solved(const char *text, const ls_solve_options *o)
{
    ls_circuit *c = NULL;
    ls_status st = ls_circuit_parse_string("t.stack", text, strlen(text), NULL, 0, &c);
    CU_ASSERT_EQUAL(st, LS_OK);
    if (st >= 0)
        st = ls_circuit_solve(c, o);
    CU_ASSERT(st >= 0);
    if (st < 0) {
        ls_circuit_print_diags(c, stderr);
        ls_circuit_free(&c);
    }
    return c;
}

static const char *divider =
    "ground gnd\n"
    "voltage vs gnd -> top 10 V\n"
    "resistor r1 top -> mid 10k\n"
    "resistor r2 mid -> gnd 4k7\n";

/* Divider rule: V(mid) = 10 V * 4.7k / 14.7k = 3.19728 V.  Thevenin at mid:
 * vth = that, rth = 10k || 4.7k = 3197.28 ohm, norton = vth / rth = 1 mA
 * (= 10 V / 10k, the current r1 would carry with mid shorted). */
static void test_divider_thevenin(void)
{
    ls_circuit *c = solved(divider, NULL);
    if (!c)
        return;
    double v = 0;
    CU_ASSERT_EQUAL(ls_circuit_voltage(c, "mid", &v), LS_OK);
    CU_ASSERT(REL(v, 10.0 * 4.7 / 14.7, 1e-12));
    CU_ASSERT_EQUAL(ls_circuit_voltage(c, "gnd", &v), LS_OK);
    CU_ASSERT_EQUAL(v, 0.0);
    CU_ASSERT_EQUAL(ls_circuit_voltage(c, "nowhere", &v), LS_E_NOT_FOUND);
    ls_thevenin_info th;
    CU_ASSERT_EQUAL(ls_circuit_thevenin(c, "mid", &th), LS_OK);
    CU_ASSERT(REL(th.vth, 10.0 * 4.7 / 14.7, 1e-12));
    CU_ASSERT(REL(th.rth, 10e3 * 4.7e3 / 14.7e3, 1e-9));
    CU_ASSERT(REL(th.norton, 1e-3, 1e-9));
    CU_ASSERT_EQUAL(ls_circuit_node_count(c), 3);
    CU_ASSERT_STRING_EQUAL(ls_circuit_node_name(c, 0), "gnd");
    CU_ASSERT_PTR_NULL(ls_circuit_node_name(c, 3));
    CU_ASSERT_EQUAL(ls_circuit_node_index(c, "mid"), ls_circuit_node_index(c, "mid"));
    CU_ASSERT(ls_circuit_node_index(c, "mid") > 0);
    ls_solve_info si;
    CU_ASSERT_EQUAL(ls_circuit_solve_info(c, &si), LS_OK);
    CU_ASSERT_STRING_EQUAL(si.method, "dense-lu");
    CU_ASSERT(si.residual < 1e-12);
    ls_circuit_free(&c);
    CU_ASSERT_PTR_NULL(c);
}

/* The formula of the divider's tap is the divider rule vs * r2 / (r1 + r2)
 * (Ohm's and Kirchhoff's laws); its value is 10 * 4.7 / 14.7 V; with only r2
 * a symbol it is 10 * r2 / (r2 + 10000); a bad symbol is an error. */
static void test_formula(void)
{
    ls_circuit *c = solved(divider, NULL);
    if (!c)
        return;
    char *f = NULL;
    double v = 0;
    CU_ASSERT_EQUAL(ls_circuit_formula(c, "mid", NULL, 0, &f, &v), LS_OK);
    CU_ASSERT_PTR_NOT_NULL_FATAL(f);
    CU_ASSERT_STRING_EQUAL(f, "vs * r2 / (r1 + r2)");
    CU_ASSERT(REL(v, 10.0 * 4.7 / 14.7, 1e-15));
    ls_free(f);
    CU_ASSERT_EQUAL(ls_circuit_formula(c, "mid", "r2", 0, &f, NULL), LS_OK);
    CU_ASSERT_STRING_EQUAL(f, "10 * r2 / (r2 + 10000)");
    ls_free(f);
    CU_ASSERT_EQUAL(ls_circuit_formula(c, "mid", "nothing_here", 0, &f, NULL), LS_E_CIRCUIT);
    CU_ASSERT_PTR_NULL(f);
    CU_ASSERT_EQUAL(ls_circuit_formula(c, NULL, NULL, 0, &f, NULL), LS_E_ARGUMENT);
    ls_circuit_free(&c);
}

/* Part results: I(r1) = 10 V / 14.7k = 680.27 uA; P(r1) = I^2 * 10k; the
 * source delivers 10 V * I, so it absorbs -10 V * I; its voltage reads as the
 * rise, +10 V (language: "a battery gnd -> vcc reads +9 V"). */
static void test_parts(void)
{
    ls_circuit *c = solved(divider, NULL);
    if (!c)
        return;
    double i = 10.0 / 14.7e3;
    int k = ls_circuit_part_index(c, "r1");
    CU_ASSERT(k >= 0);
    ls_part_info p;
    CU_ASSERT_EQUAL(ls_circuit_part(c, k, &p), LS_OK);
    CU_ASSERT_STRING_EQUAL(p.name, "r1");
    CU_ASSERT_STRING_EQUAL(p.kind, "resistor");
    CU_ASSERT(REL(p.value, 10e3, 1e-15));
    CU_ASSERT(REL(p.current, i, 1e-12));
    CU_ASSERT(REL(p.voltage, i * 10e3, 1e-12));
    CU_ASSERT(REL(p.power, i * i * 10e3, 1e-12));
    CU_ASSERT_EQUAL(ls_circuit_part(c, ls_circuit_part_index(c, "vs"), &p), LS_OK);
    CU_ASSERT(REL(p.voltage, 10.0, 1e-12));
    CU_ASSERT(REL(p.power, -10.0 * i, 1e-12));
    CU_ASSERT_EQUAL(ls_circuit_part(c, ls_circuit_part_count(c), &p), LS_E_ARGUMENT);
    double pw = 0;
    CU_ASSERT_EQUAL(ls_circuit_eval(c, "r1.power + r2.power", &pw), LS_OK);
    CU_ASSERT(REL(pw, 10.0 * i, 1e-12));    /* conservation: all the source delivers */
    ls_circuit_free(&c);
}

static const char *loaded =
    "ground gnd\n"
    "voltage vs gnd -> top 5 V\n"
    "resistor r1 top -> mid 10k\n"
    "resistor r2 mid -> gnd 10k\n"
    "port p mid -> in\n"
    "resistor rl in -> gnd 20k\n";

/* A 10k/10k divider from 5 V into a 20 kohm load.  Open: 2.5 V; zout = 10k ||
 * 10k = 5k; zin = 20k; ratio 4.  Loaded: Vth * RL / (Rth + RL) = 2.5 * 20/25 =
 * 2.0 V; sag 0.5 V (20 % of open); load current 2.0 V / 20k = 100 uA.  With
 * the minimum of 10 the ratio is below half of it (5): loading; with a minimum
 * of 6 it is at least half: marginal; with 3, ok (the verdict rule of the
 * language's port table). */
static void test_port_loading(void)
{
    ls_circuit *c = solved(loaded, NULL);
    if (!c)
        return;
    CU_ASSERT_EQUAL(ls_circuit_port_count(c), 1);
    ls_port_info p;
    CU_ASSERT_EQUAL(ls_circuit_port(c, 0, &p), LS_OK);
    CU_ASSERT_STRING_EQUAL(p.name, "p");
    CU_ASSERT_STRING_EQUAL(p.from, "mid");
    CU_ASSERT_STRING_EQUAL(p.to, "in");
    CU_ASSERT_FALSE(p.current_mode);
    CU_ASSERT(REL(p.open, 2.5, 1e-12));
    CU_ASSERT(REL(p.loaded, 2.0, 1e-12));
    CU_ASSERT(REL(p.sag, 0.5, 1e-9));
    CU_ASSERT(REL(p.sag_rel, 0.2, 1e-9));
    CU_ASSERT(REL(p.zout, 5e3, 1e-9));
    CU_ASSERT(REL(p.zin, 20e3, 1e-9));
    CU_ASSERT(REL(p.ratio, 4, 1e-9));
    CU_ASSERT(REL(p.current, 100e-6, 1e-12));
    CU_ASSERT_EQUAL(p.verdict, LS_VERDICT_LOADING);
    CU_ASSERT_EQUAL(ls_circuit_port(c, 1, &p), LS_E_ARGUMENT);
    CU_ASSERT_EQUAL(ls_circuit_port_by_name(c, "r1", &p), LS_E_NOT_FOUND);
    ls_solve_options o = {.min_ratio = 6};
    CU_ASSERT(ls_circuit_solve(c, &o) >= 0);
    CU_ASSERT_EQUAL(ls_circuit_port_by_name(c, "p", &p), LS_OK);
    CU_ASSERT_EQUAL(p.verdict, LS_VERDICT_MARGINAL);
    o.min_ratio = 3;
    o.backend = LS_BACKEND_SPARSE;
    CU_ASSERT(ls_circuit_solve(c, &o) >= 0);
    CU_ASSERT_EQUAL(ls_circuit_port_by_name(c, "p", &p), LS_OK);
    CU_ASSERT_EQUAL(p.verdict, LS_VERDICT_OK);
    CU_ASSERT(REL(p.loaded, 2.0, 1e-12));
    ls_solve_info si;
    CU_ASSERT_EQUAL(ls_circuit_solve_info(c, &si), LS_OK);
    CU_ASSERT_EQUAL(strncmp(si.method, "sparse-", 7), 0);
    ls_circuit_free(&c);
}

/* The same divider with budget=0.6V on its port: sag 0.5 V (closed form
 * above) is within it, so the budget decides ok although the ratio 4 would
 * say loading; with budget=0.3V the sag is within twice it: marginal.  The
 * language's port table. */
static void test_port_budget(void)
{
    const char *src[2] = {"ground gnd\nvoltage vs gnd -> top 5 V\nresistor r1 top -> mid 10k\n"
                          "resistor r2 mid -> gnd 10k\nport p mid -> in budget=0.6V\nresistor rl in -> gnd 20k\n",
                          "ground gnd\nvoltage vs gnd -> top 5 V\nresistor r1 top -> mid 10k\n"
                          "resistor r2 mid -> gnd 10k\nport p mid -> in budget=0.3V\nresistor rl in -> gnd 20k\n"};
    ls_port_verdict want[2] = {LS_VERDICT_OK, LS_VERDICT_MARGINAL};
    for (int k = 0; k < 2; k++) {
        ls_circuit *c = solved(src[k], NULL);
        if (!c)
            return;
        ls_port_info p;
        CU_ASSERT_EQUAL(ls_circuit_port(c, 0, &p), LS_OK);
        CU_ASSERT(REL(p.budget, k ? 0.3 : 0.6, 1e-15));
        CU_ASSERT_EQUAL(p.by_budget, 1);
        CU_ASSERT_EQUAL(p.load_held, 0);
        CU_ASSERT_EQUAL(p.verdict, want[k]);
        ls_circuit_free(&c);
    }
}

/* Sag at mid of the loaded divider: without rl (or with p opened) mid returns
 * to its open value, so both deltas are the sag, +0.5 V, and they lead the
 * list; without r2, mid = 5 * 20/30 = 3.3333 V (delta +1.3333 V) leads them;
 * without r1 or vs, mid falls to 0 (delta -2 V). */
static void test_sag(void)
{
    ls_circuit *c = solved(loaded, NULL);
    if (!c)
        return;
    ls_sag_entry *e = NULL;
    int n = 0;
    double v = 0;
    CU_ASSERT_EQUAL(ls_circuit_sag(c, "mid", &v, &e, &n), LS_OK);
    CU_ASSERT(REL(v, 2.0, 1e-12));
    CU_ASSERT_EQUAL(n, 5);
    if (e && n == 5) {
        CU_ASSERT(REL(fabs(e[0].delta), 2.0, 1e-9));
        CU_ASSERT(REL(fabs(e[1].delta), 2.0, 1e-9));
        CU_ASSERT_STRING_EQUAL(e[2].name, "r2");
        CU_ASSERT(REL(e[2].delta, 5.0 * 2 / 3 - 2.0, 1e-9));
        CU_ASSERT(REL(e[3].delta, 0.5, 1e-9));
        CU_ASSERT(REL(e[4].delta, 0.5, 1e-9));
        CU_ASSERT(e[3].is_port + e[4].is_port == 1);
        CU_ASSERT(REL(e[3].without, 2.5, 1e-9));
    }
    ls_free(e);
    CU_ASSERT_EQUAL(ls_circuit_sag(c, "nowhere", &v, &e, &n), LS_E_NOT_FOUND);
    ls_circuit_free(&c);
}

/* Sag by connection at mid of the loaded divider: every port opened, mid is
 * 2.5 V; the one port's share is its current (100 uA) times the divider's
 * Thevenin resistance 5k = 0.5 V, the whole sag (substitution theorem). */
static void test_sag_ports(void)
{
    ls_circuit *c = solved(loaded, NULL);
    if (!c)
        return;
    ls_sag_info info;
    ls_sag_share *e = NULL;
    int n = 0;
    CU_ASSERT_EQUAL(ls_circuit_sag_ports(c, "mid", &info, &e, &n), LS_OK);
    CU_ASSERT(REL(info.alone, 2.5, 1e-12));
    CU_ASSERT(REL(info.sag, 0.5, 1e-12));
    CU_ASSERT_EQUAL(info.shapley, 0);
    CU_ASSERT_PTR_NOT_NULL(info.culprit);
    if (info.culprit)
        CU_ASSERT_STRING_EQUAL(info.culprit, "p");
    CU_ASSERT_EQUAL(n, 1);
    if (e && n == 1) {
        CU_ASSERT(REL(e[0].current, 100e-6, 1e-12));
        CU_ASSERT(REL(e[0].transfer, 5e3, 1e-12));
        CU_ASSERT(REL(e[0].share, 0.5, 1e-12));
        CU_ASSERT(REL(e[0].share_rel, 1.0, 1e-12));
    }
    ls_free(e);
    CU_ASSERT_EQUAL(ls_circuit_sag_ports(c, "nowhere", &info, &e, &n), LS_E_NOT_FOUND);
    ls_circuit_free(&c);
}

/* Divider out = V r2 / (r1 + r2): normalized sensitivities (p/Q) dQ/dp are
 * +1 to V, +r1/(r1+r2) to r2 and -r1/(r1+r2) to r1 (differentiating the
 * closed form); dQ/dr2 = V r1 / (r1+r2)^2. */
static void test_influence(void)
{
    ls_circuit *c = solved(divider, NULL);
    if (!c)
        return;
    ls_influence_entry *e = NULL;
    int n = 0;
    double q = 0;
    CU_ASSERT_EQUAL(ls_circuit_influence(c, "mid", &q, &e, &n), LS_OK);
    CU_ASSERT(REL(q, 10.0 * 4.7 / 14.7, 1e-12));
    CU_ASSERT_EQUAL(n, 3);
    int seen = 0;
    for (int i = 0; e && i < n; i++) {
        if (strcmp(e[i].part, "vs") == 0)
            seen += REL(e[i].percent_per_percent, 1.0, 1e-9);
        if (strcmp(e[i].part, "r1") == 0)
            seen += REL(e[i].percent_per_percent, -10 / 14.7, 1e-9);
        if (strcmp(e[i].part, "r2") == 0)
            seen += REL(e[i].percent_per_percent, 10 / 14.7, 1e-9) && REL(e[i].per_unit, 10 * 10e3 / (14.7e3 * 14.7e3), 1e-9);
    }
    CU_ASSERT_EQUAL(seen, 3);
    if (e && n == 3)
        CU_ASSERT_STRING_EQUAL(e[0].part, "vs");   /* largest |percent_per_percent| first */
    ls_free(e);
    int before = ls_circuit_diag_count(c);
    CU_ASSERT_EQUAL(ls_circuit_influence(c, "mid +", &q, &e, &n), LS_E_CIRCUIT);
    CU_ASSERT(ls_circuit_diag_count(c) > before);
    ls_circuit_free(&c);
}

/* Changing r2 to 10k re-solves: mid = 10 * 10/20 = 5 V.  A zero resistance
 * is refused (the language forbids it) and leaves the circuit as it was. */
static void test_set_value(void)
{
    ls_circuit *c = solved(divider, NULL);
    if (!c)
        return;
    double v = 0;
    CU_ASSERT_EQUAL(ls_circuit_set_value(c, "r2", 10e3), LS_OK);
    CU_ASSERT_EQUAL(ls_circuit_voltage(c, "mid", &v), LS_OK);
    CU_ASSERT(REL(v, 5.0, 1e-12));
    CU_ASSERT_EQUAL(ls_circuit_set_value(c, "r2", 0), LS_E_ARGUMENT);
    CU_ASSERT_EQUAL(ls_circuit_set_value(c, "r9", 1), LS_E_NOT_FOUND);
    CU_ASSERT_EQUAL(ls_circuit_voltage(c, "mid", &v), LS_OK);
    CU_ASSERT(REL(v, 5.0, 1e-12));
    ls_circuit_free(&c);
}

/* --set style overrides: vset = 12 V makes the divider give 12 * 4.7/14.7. */
static void test_settings(void)
{
    const char *text = "let vset = 5 V\nground gnd\nvoltage vs gnd -> top vset\n"
                       "resistor r1 top -> mid 10k\nresistor r2 mid -> gnd 4k7\n";
    const char *sets[] = {"vset=12V"};
    ls_circuit *c = NULL;
    CU_ASSERT_EQUAL(ls_circuit_parse_string("s.stack", text, strlen(text), sets, 1, &c), LS_OK);
    CU_ASSERT(ls_circuit_solve(c, NULL) >= 0);
    double v = 0;
    CU_ASSERT_EQUAL(ls_circuit_voltage(c, "mid", &v), LS_OK);
    CU_ASSERT(REL(v, 12 * 4.7 / 14.7, 1e-12));
    ls_circuit_free(&c);
    const char *bad[] = {"vset"};
    CU_ASSERT_EQUAL(ls_circuit_parse_string("s.stack", text, strlen(text), bad, 1, &c), LS_E_CIRCUIT);
    CU_ASSERT(ls_circuit_diag_count(c) >= 1);
    ls_circuit_free(&c);
}

/* Diagnostics as a list: two bad lines give two errors, each at its line and
 * column (counted by hand in the text below: the value of each resistor
 * starts at column 24 of lines 3 and 4). */
static void test_diagnostics(void)
{
    const char *text = "ground gnd\n"
                       "voltage vs gnd -> top 10 V\n"
                       "resistor r1 top -> mid 5 V\n"
                       "resistor r2 mid -> gnd 1 mA\n";
    ls_circuit *c = NULL;
    CU_ASSERT_EQUAL(ls_circuit_parse_string("bad.stack", text, strlen(text), NULL, 0, &c), LS_E_CIRCUIT);
    CU_ASSERT_PTR_NOT_NULL(c);
    int errors = 0, line3 = 0, line4 = 0;
    for (int i = 0; i < ls_circuit_diag_count(c); i++) {
        ls_diagnostic d;
        CU_ASSERT_EQUAL(ls_circuit_diag(c, i, &d), LS_OK);
        if (d.level != LS_LEVEL_ERROR)
            continue;
        errors++;
        CU_ASSERT_PTR_NOT_NULL(d.message);
        if (d.file)
            CU_ASSERT_STRING_EQUAL(d.file, "bad.stack");
        line3 += d.line == 3 && d.column == 24;
        line4 += d.line == 4 && d.column == 24;
    }
    CU_ASSERT(errors >= 2);
    CU_ASSERT_EQUAL(line3, 1);
    CU_ASSERT_EQUAL(line4, 1);
    ls_diagnostic d;
    CU_ASSERT_EQUAL(ls_circuit_diag(c, -1, &d), LS_E_ARGUMENT);
    CU_ASSERT_EQUAL(ls_circuit_solve(c, NULL), LS_E_CIRCUIT);
    double v;
    CU_ASSERT_EQUAL(ls_circuit_voltage(c, "gnd", &v), LS_E_NOT_SOLVED);
    ls_circuit_free(&c);
}

/* A warning alone still gives a circuit: LS_WARNINGS, and the warning in the
 * list with its code (a part whose two ends are one node; docs/language.md). */
static void test_warning(void)
{
    const char *text = "ground gnd\nvoltage vs gnd -> a 1 V\nresistor r1 a -> gnd 1k\n"
                       "resistor r2 a -> a 1k\n";
    ls_circuit *c = NULL;
    CU_ASSERT_EQUAL(ls_circuit_parse_string("w.stack", text, strlen(text), NULL, 0, &c), LS_WARNINGS);
    int found = 0;
    for (int i = 0; i < ls_circuit_diag_count(c); i++) {
        ls_diagnostic d;
        if (ls_circuit_diag(c, i, &d) == LS_OK && d.level == LS_LEVEL_WARNING)
            found += d.code && strcmp(d.code, "same-node") == 0 && d.line == 4;
    }
    CU_ASSERT_EQUAL(found, 1);
    CU_ASSERT(ls_circuit_solve(c, NULL) >= 0);
    ls_circuit_free(&c);
}

/* A file that does not exist: LS_E_IO, with a diagnostic naming it. */
static void test_missing_file(void)
{
    ls_circuit *c = NULL;
    CU_ASSERT_EQUAL(ls_circuit_parse_file("/nonexistent/dir/x.stack", NULL, 0, &c), LS_E_IO);
    CU_ASSERT_EQUAL(ls_circuit_diag_count(c), 1);
    ls_diagnostic d;
    CU_ASSERT_EQUAL(ls_circuit_diag(c, 0, &d), LS_OK);
    CU_ASSERT_PTR_NOT_NULL(strstr(d.message, "/nonexistent/dir/x.stack"));
    CU_ASSERT_PTR_NULL(d.file);
    ls_circuit_free(&c);
}

/* A node tied only to another node has no DC path to ground: unsolvable,
 * with an error that names the nodes. */
static void test_unsolvable(void)
{
    const char *text = "ground gnd\nvoltage vs gnd -> a 1 V\nresistor r1 a -> gnd 1k\n"
                       "resistor r2 x -> y 1k\n";
    ls_circuit *c = NULL;
    ls_status st = ls_circuit_parse_string("f.stack", text, strlen(text), NULL, 0, &c);
    CU_ASSERT(st >= 0);
    CU_ASSERT_EQUAL(ls_circuit_solve(c, NULL), LS_E_UNSOLVABLE);
    int named = 0;
    for (int i = 0; i < ls_circuit_diag_count(c); i++) {
        ls_diagnostic d;
        if (ls_circuit_diag(c, i, &d) == LS_OK && d.level == LS_LEVEL_ERROR)
            named += strstr(d.message, "'x'") != NULL && strstr(d.message, "'y'") != NULL;
    }
    CU_ASSERT(named >= 1);
    double v;
    CU_ASSERT_EQUAL(ls_circuit_voltage(c, "a", &v), LS_E_NOT_SOLVED);
    ls_circuit_free(&c);
}

/* Checks: "mid > 3 V" passes (3.197 V), "mid < 3 V" fails; with the rule, the
 * port of the loaded divider adds a failing row (ratio 4 < 10). */
static void test_checks(void)
{
    const char *text = "ground gnd\nvoltage vs gnd -> top 10 V\nresistor r1 top -> mid 10k\n"
                       "resistor r2 mid -> gnd 4k7\nport p mid -> in\nresistor rl in -> gnd 18.8k\n"
                       "expect in > 2 V\nexpect in < 2 V\n";
    ls_circuit *c = solved(text, NULL);
    if (!c)
        return;
    ls_check_info *k = NULL;
    int n = 0, failed = 0;
    CU_ASSERT_EQUAL(ls_circuit_checks(c, 0, &k, &n, &failed), LS_OK);
    CU_ASSERT_EQUAL(n, 2);
    CU_ASSERT_EQUAL(failed, 1);
    if (k && n == 2) {
        CU_ASSERT(k[0].pass && !k[1].pass);
        CU_ASSERT_EQUAL(k[1].line, 8);
        CU_ASSERT_STRING_EQUAL(k[1].file, "t.stack");
        /* 10 V into 10k against 4.7k || 18.8k = 3.76k: 10 * 3.76 / 13.76 */
        CU_ASSERT(REL(k[0].value, 10 * 3.76 / 13.76, 1e-9));
    }
    ls_free(k);
    CU_ASSERT_EQUAL(ls_circuit_checks(c, 1, &k, &n, &failed), LS_OK);
    CU_ASSERT_EQUAL(n, 3);
    CU_ASSERT_EQUAL(failed, 2);   /* zout = 3197 ohm, zin = 18.8k: ratio 5.88 < 10 */
    ls_free(k);
    ls_circuit_free(&c);
}

/* An op-amp stage of gain 1 + 9k/1k = 10 on rails 0..5 V with 0.1 V headroom:
 * 0.2 V in gives 2 V out (no limit: A/(1 + A/10) = 9.999 for A = 100k); 1 V in
 * would give 10 V, so the output stops at the upper rail less the headroom,
 * 4.9 V (the limit model of the language: rails= and headroom=). */
static void test_opamp_limit(void)
{
    const char *fmt = "ground gnd\nvoltage vin gnd -> in %s\n"
                      "opamp u plus=in minus=fb out=out gain=100k rails=0V..5V headroom=0.1V\n"
                      "resistor rf out -> fb 9k\nresistor rg fb -> gnd 1k\n";
    char text[400];
    snprintf(text, sizeof text, fmt, "0.2 V");
    ls_circuit *c = solved(text, NULL);
    if (!c)
        return;
    ls_part_info p;
    double v = 0;
    CU_ASSERT_EQUAL(ls_circuit_part(c, ls_circuit_part_index(c, "u"), &p), LS_OK);
    CU_ASSERT_STRING_EQUAL(p.limited, "none");
    CU_ASSERT_EQUAL(ls_circuit_voltage(c, "out", &v), LS_OK);
    CU_ASSERT(REL(v, 0.2 * 100e3 / (1 + 100e3 / 10), 1e-9));
    CU_ASSERT_EQUAL(ls_circuit_part(c, ls_circuit_part_index(c, "rf"), &p), LS_OK);
    CU_ASSERT_PTR_NULL(p.limited);
    CU_ASSERT(ls_circuit_set_value(c, "vin", 1.0) >= 0);
    CU_ASSERT_EQUAL(ls_circuit_part(c, ls_circuit_part_index(c, "u"), &p), LS_OK);
    CU_ASSERT_STRING_EQUAL(p.limited, "rail-high");
    CU_ASSERT_EQUAL(ls_circuit_voltage(c, "out", &v), LS_OK);
    CU_ASSERT(REL(v, 4.9, 1e-9));
    ls_circuit_free(&c);
}

/* NULL handles and pointers are refused, never dereferenced; two circuits
 * live side by side without sharing anything. */
/* Each side of a port opened: a 10k/10k divider from 5 V (Thevenin: 2.5 V
 * behind 10k || 10k = 5k, short-circuit 2.5 V / 5k = 0.5 mA) feeding a 20k
 * load (nothing drives it: 0 V behind 20k). */
static void test_thevenin_port(void)
{
    ls_circuit *c = solved("ground gnd\nvoltage vs gnd -> top 5 V\nresistor r1 top -> mid 10k\n"
                           "resistor r2 mid -> gnd 10k\nport p mid -> in\nresistor rl in -> gnd 20k\n",
                           NULL);
    if (!c)
        return;
    ls_thevenin_side d, l;
    CU_ASSERT_EQUAL(ls_circuit_thevenin_port(c, "p", &d, &l), LS_OK);
    CU_ASSERT_STRING_EQUAL(d.node, "mid");
    CU_ASSERT_STRING_EQUAL(l.node, "in");
    CU_ASSERT(REL(d.vth, 2.5, 1e-12) && REL(d.rth, 5e3, 1e-9) && REL(d.norton, 0.5e-3, 1e-9));
    CU_ASSERT(l.vth == 0 && REL(l.rth, 20e3, 1e-9) && isnan(l.norton));
    CU_ASSERT_PTR_NULL(d.why);
    CU_ASSERT_EQUAL(ls_circuit_thevenin_port(c, "r1", &d, &l), LS_E_NOT_FOUND);   /* a part, not a port */
    ls_circuit_free(&c);
}

/* Tolerance of a 10k/10k divider from 10 V, both 1 %: the worst corners are
 * r1 high and r2 low (10 V * 9.9k / 20k = 4.95 V) and the reverse (5.05 V),
 * by the divider rule.  Monte Carlo with uniform +-1 %: every trial lies
 * inside the corners, the mean near 5 V (the ratio is symmetric to first
 * order), and the same seed gives the same numbers on 1 and 3 threads. */
static void test_tol(void)
{
    ls_circuit *c = solved("ground gnd\nvoltage vs gnd -> top 10 V\nresistor r1 top -> mid 10k tol=1%\n"
                           "resistor r2 mid -> gnd 10k tol=1%\nexpect mid between 4.96 V and 5.04 V\n",
                           NULL);
    if (!c)
        return;
    ls_tol_options o = {.trials = 4000, .seed = 9, .threads = 1};
    ls_tol_info a, b;
    double *va = NULL, *vb = NULL;
    CU_ASSERT_EQUAL(ls_circuit_tol(c, "mid", &o, &a, &va), LS_OK);
    o.threads = 3;
    CU_ASSERT_EQUAL(ls_circuit_tol(c, "mid", &o, &b, &vb), LS_OK);
    CU_ASSERT(a.corners == 1 && a.varying == 2 && a.trials == 4000 && a.finite == 4000);
    CU_ASSERT(REL(a.nominal, 5.0, 1e-12));
    CU_ASSERT(REL(a.wc_min, 4.95, 1e-12));
    CU_ASSERT(REL(a.wc_max, 5.05, 1e-12));
    CU_ASSERT(isnan(a.rss));
    CU_ASSERT(a.min >= a.wc_min && a.max <= a.wc_max);
    CU_ASSERT(fabs(a.mean - 5.0) < 1e-3);
    CU_ASSERT(a.yield > 0.5 && a.yield < 1);   /* 4.96..5.04 is inside the 4.95..5.05 corners */
    CU_ASSERT(a.mean == b.mean && a.std == b.std && a.pct[2] == b.pct[2] && a.yield == b.yield);
    if (va && vb)
        CU_ASSERT(memcmp(va, vb, 4000 * sizeof *va) == 0);
    ls_free(va);
    ls_free(vb);
    o.trials = 20000000;
    CU_ASSERT_EQUAL(ls_circuit_tol(c, "mid", &o, &a, NULL), LS_E_ARGUMENT);
    CU_ASSERT_EQUAL(ls_circuit_tol(c, "nowhere", NULL, &a, NULL), LS_E_CIRCUIT);
    ls_circuit_free(&c);
}

/* fit through the C API: a 5 V divider with r2 = 10k and r1 free in E12 from
 * 1k to 100k, mid between 2.4 V and 2.6 V.  By the divider rule mid = 5 V *
 * 10k / (r1 + 10k), so r1 must lie in 9.23k..10.83k: of E12 only 10k does
 * (8.2k gives 2.75 V, 12k 2.27 V); it centres mid at 2.5 V (margin 1) and
 * draws 5 V / 20k = 250 uA (Ohm's law).  The written 9.1k is put back. */
static void test_fit(void)
{
    ls_circuit *c = solved("ground gnd\nvoltage vs gnd -> top 5 V\nresistor r1 top -> mid 9.1k free=1k..100k\n"
                           "resistor r2 mid -> gnd 10k\nexpect mid between 2.4 V and 2.6 V\n",
                           NULL);
    if (!c)
        return;
    ls_fit_options o = {.series = "E12", .top = 3};
    ls_fit_candidate *cand = NULL;
    double *values = NULL, v = 0;
    const char **names = NULL;
    int n = 0, m = 0;
    CU_ASSERT_EQUAL(ls_circuit_fit(c, &o, &cand, &n, &values, &m, &names), LS_OK);
    CU_ASSERT(n == 3 && m == 1);
    if (cand && values && names && n >= 2 && m == 1) {
        CU_ASSERT(cand[0].meets == 1 && values[0] == 10e3 && strcmp(names[0], "r1") == 0);
        CU_ASSERT(REL(cand[0].margin, 1.0, 1e-9));
        CU_ASSERT(REL(cand[0].current, 250e-6, 1e-9));
        CU_ASSERT(cand[1].meets == 0 && cand[1].failed == 1);
    }
    ls_free(cand);
    ls_free(values);
    ls_free((void *)names);
    CU_ASSERT_EQUAL(ls_circuit_eval(c, "r1.value", &v), LS_OK);
    CU_ASSERT(v == 9100);
    o.series = "E7";
    CU_ASSERT_EQUAL(ls_circuit_fit(c, &o, &cand, &n, &values, &m, NULL), LS_E_ARGUMENT);
    ls_circuit_free(&c);
}

/* A sweep of the supply let of a 10k/30k divider: mid = 3/4 of the supply
 * (divider rule) at each of 1, 2, ... 5 V; log spacing from 1 to 100 gives
 * 1, 10, 100. */
static void test_sweep(void)
{
    ls_circuit *c = solved("ground gnd\nlet vin = 3 V\nvoltage vs gnd -> top vin\nresistor r1 top -> mid 10k\n"
                           "resistor r2 mid -> gnd 30k\n",
                           NULL);
    if (!c)
        return;
    const char *q[] = {"mid", "r1.power"};
    double *x = NULL, *y = NULL;
    int solved_n = 0;
    CU_ASSERT_EQUAL(ls_circuit_sweep(c, "vin", 1, 5, 5, 0, q, 2, &x, &y, &solved_n), LS_OK);
    CU_ASSERT_EQUAL(solved_n, 5);
    for (int i = 0; x && y && i < 5; i++) {
        CU_ASSERT_EQUAL(x[i], 1.0 + i);
        CU_ASSERT(REL(y[2 * i], 0.75 * x[i], 1e-12));
        CU_ASSERT(REL(y[2 * i + 1], x[i] * x[i] / 40e3 / 40e3 * 10e3, 1e-12));   /* I^2 R */
    }
    ls_free(x);
    ls_free(y);
    CU_ASSERT_EQUAL(ls_circuit_sweep(c, "vin", 1, 100, 3, 1, q, 1, &x, &y, NULL), LS_OK);
    if (x)
        CU_ASSERT(x[0] == 1 && REL(x[1], 10, 1e-12) && x[2] == 100);
    ls_free(x);
    ls_free(y);
    double v = 0;   /* the circuit itself is not changed */
    CU_ASSERT(ls_circuit_voltage(c, "mid", &v) == LS_OK && REL(v, 2.25, 1e-12));
    CU_ASSERT_EQUAL(ls_circuit_sweep(c, "vin", 0, 5, 3, 1, q, 1, &x, &y, NULL), LS_E_ARGUMENT);
    CU_ASSERT_EQUAL(ls_circuit_sweep(c, "vin", 1, 5, 1, 0, q, 1, &x, &y, NULL), LS_E_ARGUMENT);
    CU_ASSERT_EQUAL(ls_circuit_sweep(c, "nolet", 1, 5, 3, 0, q, 1, &x, &y, NULL), LS_E_CIRCUIT);
    ls_circuit_free(&c);
}

static void test_null_and_side_by_side(void)
{
    ls_circuit *none = NULL;
    ls_circuit_free(NULL);
    ls_circuit_free(&none);
    CU_ASSERT_EQUAL(ls_circuit_diag_count(NULL), 0);
    CU_ASSERT_EQUAL(ls_circuit_solve(NULL, NULL), LS_E_ARGUMENT);
    CU_ASSERT_EQUAL(ls_circuit_parse_file(NULL, NULL, 0, &none), LS_E_ARGUMENT);
    CU_ASSERT_EQUAL(ls_circuit_parse_string("x", NULL, 0, NULL, 0, &none), LS_E_ARGUMENT);
    CU_ASSERT_PTR_NULL(none);
    CU_ASSERT_STRING_EQUAL(ls_circuit_title(NULL), "");
    CU_ASSERT_PTR_NOT_NULL(ls_status_str(LS_E_NOMEM));
    CU_ASSERT(strlen(ls_version()) >= 5);
    ls_circuit *a = solved(divider, NULL), *b = solved(loaded, NULL);
    double va = 0, vb = 0;
    CU_ASSERT_EQUAL(ls_circuit_voltage(a, "mid", &va), LS_OK);
    CU_ASSERT_EQUAL(ls_circuit_voltage(b, "mid", &vb), LS_OK);
    CU_ASSERT(REL(va, 10 * 4.7 / 14.7, 1e-12));
    CU_ASSERT(REL(vb, 2.0, 1e-12));
    ls_circuit_free(&a);
    ls_circuit_free(&b);
}

/* The series case: 1 V, a 1 mOhm wire and a 1 TOhm leakage carry one
 * current, 1/(1e12 + 1e-3) A (Ohm's law on the series sum).  Each part's
 * current is within its error bound of that, and the bound is below a
 * millionth of it; the node bound of b holds V(b) = 1e12/(1e12 + 1e-3) V. */
static void test_error_bounds(void)
{
    ls_circuit *c = solved("ground gnd\nvoltage vs gnd -> a 1 V\nresistor rw a -> b 1m\n"
                           "resistor rl b -> gnd 1T\n", NULL);
    if (!c)
        return;
    double want = 1 / (1e12 + 1e-3), b = 0;
    const char *names[] = {"vs", "rw", "rl"};
    for (int k = 0; k < 3; k++) {
        ls_part_info p;
        CU_ASSERT_EQUAL(ls_circuit_part(c, ls_circuit_part_index(c, names[k]), &p), LS_OK);
        CU_ASSERT_EQUAL(ls_circuit_error_bound(c, names[k], &b), LS_OK);
        CU_ASSERT(b < 1e-6 * want);
        CU_ASSERT(fabs(p.current - want) <= b + 1e-16 * want); /* plus the rounding of want itself */
    }
    double v = 0;
    CU_ASSERT_EQUAL(ls_circuit_voltage(c, "b", &v), LS_OK);
    CU_ASSERT_EQUAL(ls_circuit_error_bound(c, "b", &b), LS_OK);
    CU_ASSERT(fabs(v - 1e12 / (1e12 + 1e-3)) <= b + 1e-16);
    CU_ASSERT_EQUAL(ls_circuit_error_bound(c, "nowhere", &b), LS_E_NOT_FOUND);
    ls_circuit_free(&c);
}

/* ls_solve_info counts what it says.  A linear circuit is one linear system:
 * one solve.  A diode makes the equations nonlinear (Shockley's law), so the
 * operating point takes several solves; the solution it settles on meets
 * Kirchhoff's current law, the diode carrying the resistor's current
 * (5 V - V(a)) / 1 kOhm (Ohm's law).  The refinement steps stay within the
 * documented cap of 8 (docs/accuracy.md). */
static void test_solve_info_counts(void)
{
    ls_circuit *c = solved("ground gnd\nvoltage vs gnd -> top 5 V\nresistor r1 top -> a 1k\n"
                           "resistor r2 a -> gnd 1k\n", NULL);
    ls_solve_info si;
    CU_ASSERT_EQUAL(ls_circuit_solve_info(c, &si), LS_OK);
    CU_ASSERT_EQUAL(si.iterations, 1);
    CU_ASSERT(si.refinement_steps >= 0 && si.refinement_steps <= 8);
    ls_circuit_free(&c);
    c = solved("ground gnd\nvoltage vs gnd -> top 5 V\nresistor r1 top -> a 1k\n"
               "diode d1 a -> gnd isat=10f ideality=1\n", NULL);
    CU_ASSERT_EQUAL(ls_circuit_solve_info(c, &si), LS_OK);
    CU_ASSERT(si.iterations > 1);
    CU_ASSERT(si.refinement_steps >= 0 && si.refinement_steps <= 8);
    double va = NAN;
    CU_ASSERT_EQUAL(ls_circuit_voltage(c, "a", &va), LS_OK);
    CU_ASSERT(va > 0.5 && va < 0.8);   /* a silicon junction at a few mA */
    for (int i = 0; i < ls_circuit_part_count(c); i++) {
        ls_part_info pi;
        if (ls_circuit_part(c, i, &pi) == LS_OK && strcmp(pi.name, "d1") == 0)
            CU_ASSERT(REL(pi.current, (5 - va) / 1e3, 1e-9));
    }
    ls_circuit_free(&c);
}

int main(void)
{
    if (CU_initialize_registry() != CUE_SUCCESS)
        return 2;
    CU_pSuite s = CU_add_suite("api", NULL, NULL);
    if (!s || !CU_add_test(s, "divider and Thevenin", test_divider_thevenin) ||
        !CU_add_test(s, "part results", test_parts) || !CU_add_test(s, "port loading", test_port_loading) ||
        !CU_add_test(s, "port budget", test_port_budget) ||
        !CU_add_test(s, "solve info counts", test_solve_info_counts) ||
        !CU_add_test(s, "sag", test_sag) || !CU_add_test(s, "formula", test_formula) ||
        !CU_add_test(s, "sag by connection", test_sag_ports) || !CU_add_test(s, "influence", test_influence) ||
        !CU_add_test(s, "set value", test_set_value) || !CU_add_test(s, "settings", test_settings) ||
        !CU_add_test(s, "diagnostics list", test_diagnostics) ||
        !CU_add_test(s, "warning", test_warning) || !CU_add_test(s, "missing file", test_missing_file) || !CU_add_test(s, "unsolvable", test_unsolvable) ||
        !CU_add_test(s, "checks", test_checks) || !CU_add_test(s, "op-amp limit", test_opamp_limit) ||
        !CU_add_test(s, "thevenin of a port", test_thevenin_port) || !CU_add_test(s, "tolerance", test_tol) || !CU_add_test(s, "fit", test_fit) || !CU_add_test(s, "sweep", test_sweep) ||
        !CU_add_test(s, "NULL and side by side", test_null_and_side_by_side) ||
        !CU_add_test(s, "error bounds", test_error_bounds)) {
        CU_cleanup_registry();
        return 2;
    }
    CU_basic_set_mode(CU_BRM_VERBOSE);
    CU_basic_run_tests();
    unsigned fails = CU_get_number_of_failures() + CU_get_number_of_tests_failed();
    CU_cleanup_registry();
    return fails ? 1 : 0;
}
