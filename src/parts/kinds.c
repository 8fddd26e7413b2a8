/* kinds.c — the kind table: one entry per part kind, naming the functions of
 * its family file (family.h) and declaring the rest of what the program knows
 * of it (options, pins, limits, how it is removed, what it reports); and the
 * lookups of a kind by name.  tests/house builds this file again with a
 * test-only kind (LS_TEST_KINDS). */
#include "parts/family.h"

#include <assert.h>
#include <string.h>

/* ---- answers several kinds share (the table names them) -------------------------- */

/* The current is the part's branch unknown. */
static void current_branch(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth)
{
    (void)run; (void)depth;
    if (!d)
        lin_add(out, p->branch, 1);
}

static int one_branch(const ls_part *p) { (void)p; return 1; }
static int no_branch(const ls_part *p) { (void)p; return 0; }

/* One conductive edge FROM - TO. */
static void two_edge(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    emit(ctx, p->pin[0], p->pin[1], false, -1);
}

static void no_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    (void)p; (void)ctx; (void)emit;
}

/* One voltage-defined edge FROM - TO. */
static void vdef_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    emit(ctx, p->pin[0], p->pin[1], true, -1);
}

/* Junctions are always nonlinear. */
static bool always(const ls_part *p) { (void)p; return true; }

/* ---- the table ----------------------------------------------------------------- */

#define COMMON_OPTS                                              \
    {"tol", OPT_VALUE, LS_FREE, OPTF_NONNEG, -1, NULL},          \
    {"rating", OPT_VALUE, LS_WATT, OPTF_POSITIVE, -1, NULL},     \
    {"free", OPT_FREE, LS_FREE, 0, -1, NULL}
#define NCOMMON 3
/* Earlier spellings of the junction options, each answered with its new name. */
#define JUNCTION_RENAMED {{"is", "isat"}, {"n", "ideality"}, {"rs", "rbulk"}}

static const ls_kind kinds[] = {
    {.name = "resistor", .exact = LS_EXACT_RESISTOR, .is_resistance = true, .shape = SHAPE_TWO, .doc = "resistor FROM -> TO VALUE [rating=W vmax=V]",
     .value_slot = true, .value_dims = LS_OHM, .value_flags = OPTF_REQUIRED | OPTF_POSITIVE,
     .vsign = VSIGN_DROP, .opts = {COMMON_OPTS, {"snap", OPT_WORD, LS_FREE, 0, -1, "E6|E12|E24|E48|E96|E192"},
                                   {"vmax", OPT_VALUE, LS_VOLT, OPTF_POSITIVE, -1, NULL}},
     .nopts = NCOMMON + 2, .npins = 2,
     .branches = no_branch, .stamp = ls_resistor_stamp, .current = ls_resistor_current, .edges = two_edge,
     .monotone = ls_resistor_monotone},
    {.name = "voltage", .exact = LS_EXACT_VSOURCE, .has_run = true, .shape = SHAPE_TWO, .stage_role = LS_ROLE_SOURCE, .removal = LS_REMOVE_SHORT, .doc = "voltage FROM -> TO VALUE [rint=R]  (V(TO) - V(FROM) = VALUE)",
     .value_slot = true, .value_dims = LS_VOLT, .value_flags = OPTF_REQUIRED, .vsign = VSIGN_RISE,
     .opts = {COMMON_OPTS, {"rint", OPT_VALUE, LS_OHM, OPTF_NONNEG, -1, NULL}}, .nopts = NCOMMON + 1,
     .renamed = {{"rs", "rint"}},
     .npins = 2, .branches = one_branch, .stamp = ls_vsource_stamp, .current = current_branch,
     .edges = ls_vsource_edges, .monotone = ls_vsource_monotone},
    {.name = "current", .exact = LS_EXACT_ISOURCE, .has_run = true, .shape = SHAPE_TWO, .stage_role = LS_ROLE_SENSOR, .doc = "current FROM -> TO VALUE  (VALUE flows FROM -> TO through it)",
     .value_slot = true, .value_dims = LS_AMP, .value_flags = OPTF_REQUIRED, .vsign = VSIGN_RISE,
     .opts = {COMMON_OPTS}, .nopts = NCOMMON, .npins = 2, .branches = no_branch,
     .stamp = ls_isource_stamp, .current = ls_isource_current, .edges = no_edges, .monotone = ls_isource_monotone},
    {.name = "port", .exact = LS_EXACT_PORT, .shape = SHAPE_TWO, .doc = "port DRIVER -> LOAD [mode=voltage|current budget=V|%|LSB]",
     .vsign = VSIGN_DROP, .is_port = true,
     .opts = {COMMON_OPTS, {"mode", OPT_WORD, LS_FREE, 0, -1, "voltage|current"},
              {"budget", OPT_VALUE, LS_VOLT, OPTF_BUDGET, -1, NULL}}, .nopts = NCOMMON + 2,
     .npins = 2, .branches = one_branch, .stamp = ls_port_stamp, .current = current_branch,
     .edges = vdef_edges},
    {.name = "vcvs", .exact = LS_EXACT_VCVS, .shape = SHAPE_TWO, .removal = LS_REMOVE_SHORT, .doc = "vcvs FROM -> TO gain=G cplus=A cminus=B",
     .value_slot = true, .value_dims = LS_FREE, .vsign = VSIGN_RISE,
     .opts = {COMMON_OPTS, {"gain", OPT_VALUE, LS_FREE, OPTF_MAIN | OPTF_REQUIRED, -1, NULL},
              {"cplus", OPT_NODE, LS_FREE, OPTF_REQUIRED, 2, NULL},
              {"cminus", OPT_NODE, LS_FREE, OPTF_REQUIRED, 3, NULL}},
     .nopts = NCOMMON + 3, .npins = 4, .branches = one_branch, .stamp = ls_vcvs_stamp,
     .current = current_branch, .edges = vdef_edges},
    {.name = "vccs", .exact = LS_EXACT_VCCS, .shape = SHAPE_TWO, .doc = "vccs FROM -> TO gm=G cplus=A cminus=B",
     .value_slot = true, .value_dims = LS_SIEMENS, .vsign = VSIGN_RISE,
     .opts = {COMMON_OPTS, {"gm", OPT_VALUE, LS_SIEMENS, OPTF_MAIN | OPTF_REQUIRED, -1, NULL},
              {"cplus", OPT_NODE, LS_FREE, OPTF_REQUIRED, 2, NULL},
              {"cminus", OPT_NODE, LS_FREE, OPTF_REQUIRED, 3, NULL}},
     .nopts = NCOMMON + 3, .npins = 4, .branches = no_branch, .stamp = ls_vccs_stamp,
     .current = ls_vccs_current, .edges = no_edges},
    {.name = "cccs", .exact = LS_EXACT_CCCS, .via_use = LS_VIA_CURRENT, .shape = SHAPE_TWO, .doc = "cccs FROM -> TO gain=G via=PART",
     .value_slot = true, .value_dims = LS_FREE, .vsign = VSIGN_RISE,
     .opts = {COMMON_OPTS, {"gain", OPT_VALUE, LS_FREE, OPTF_MAIN | OPTF_REQUIRED, -1, NULL},
              {"via", OPT_PART, LS_FREE, OPTF_REQUIRED, -1, NULL}},
     .nopts = NCOMMON + 2, .npins = 2, .branches = no_branch, .stamp = ls_cccs_stamp,
     .current = ls_cccs_current, .edges = no_edges},
    {.name = "ccvs", .exact = LS_EXACT_CCVS, .via_use = LS_VIA_VOLTAGE, .shape = SHAPE_TWO, .removal = LS_REMOVE_SHORT, .doc = "ccvs FROM -> TO rm=R via=PART",
     .value_slot = true, .value_dims = LS_OHM, .vsign = VSIGN_RISE,
     .opts = {COMMON_OPTS, {"rm", OPT_VALUE, LS_OHM, OPTF_MAIN | OPTF_REQUIRED, -1, NULL},
              {"via", OPT_PART, LS_FREE, OPTF_REQUIRED, -1, NULL}},
     .nopts = NCOMMON + 2, .npins = 2, .branches = one_branch, .stamp = ls_ccvs_stamp,
     .current = current_branch, .edges = vdef_edges},
    {.name = "opamp", .exact = LS_EXACT_OPAMP, .has_run = true, .shape = SHAPE_PINNED, .stage_role = LS_ROLE_OPAMP,
     .doc = "opamp plus=A minus=B out=Y [gain=G rin=R rout=R rails=LO..HI headroom=V imax=A cm=LO..HI vos=V ib=A "
            "ios=A iq=A]",
     .vsign = VSIGN_OUT, .is_opamp = true,
     .opts = {COMMON_OPTS, {"plus", OPT_NODE, LS_FREE, OPTF_REQUIRED, 0, NULL},
              {"minus", OPT_NODE, LS_FREE, OPTF_REQUIRED, 1, NULL},
              {"out", OPT_NODE, LS_FREE, OPTF_REQUIRED, 2, NULL},
              {"gain", OPT_VALUE, LS_FREE, OPTF_MAIN | OPTF_POSITIVE, -1, NULL},
              {"rin", OPT_VALUE, LS_OHM, OPTF_POSITIVE, -1, NULL},
              {"rout", OPT_VALUE, LS_OHM, OPTF_NONNEG, -1, NULL},
              {"rails", OPT_RANGE, LS_VOLT, 0, OA_RAILS, NULL},
              {"headroom", OPT_VALUE, LS_VOLT, OPTF_NONNEG, -1, NULL},
              {"imax", OPT_VALUE, LS_AMP, OPTF_POSITIVE, -1, NULL},
              {"cm", OPT_RANGE, LS_VOLT, 0, OA_CM, NULL},
              {"vos", OPT_VALUE, LS_VOLT, 0, -1, NULL},
              {"ib", OPT_VALUE, LS_AMP, 0, -1, NULL},
              {"ios", OPT_VALUE, LS_AMP, 0, -1, NULL},
              {"iq", OPT_VALUE, LS_AMP, OPTF_NONNEG, -1, NULL}},
     .nopts = NCOMMON + 14, .npins = 3, .branches = one_branch, .stamp = ls_opamp_stamp,
     .current = current_branch, .edges = ls_opamp_edges, .other_pins = ls_opamp_other_pins,
     .pin_power = ls_opamp_pin_power},
    {.name = "diode", .has_run = true, .shape = SHAPE_TWO, .is_junction = true, .doc = "diode ANODE -> CATHODE [isat=A ideality=N rbulk=R imax=A]",
     .vsign = VSIGN_DROP,
     .opts = {COMMON_OPTS, {"isat", OPT_VALUE, LS_AMP, OPTF_POSITIVE, -1, NULL},
              {"ideality", OPT_VALUE, LS_FREE, OPTF_POSITIVE, -1, NULL},
              {"rbulk", OPT_VALUE, LS_OHM, OPTF_NONNEG, -1, NULL},
              {"imax", OPT_VALUE, LS_AMP, OPTF_POSITIVE, -1, NULL}},
     .nopts = NCOMMON + 4, .npins = 2, .branches = ls_junction_branches, .stamp = ls_junction_stamp,
     .current = ls_junction_lin, .edges = ls_junction_edges, .renamed = JUNCTION_RENAMED,
     .is_nonlinear = always, .init = ls_junction_init,
     .update = ls_junction_update},
    {.name = "led", .has_run = true, .shape = SHAPE_TWO, .is_junction = true, .doc = "led ANODE -> CATHODE vf=V [at=A ideality=N rbulk=R imax=A]",
     .vsign = VSIGN_DROP,
     .opts = {COMMON_OPTS, {"vf", OPT_VALUE, LS_VOLT, OPTF_POSITIVE | OPTF_REQUIRED, -1, NULL},
              {"at", OPT_VALUE, LS_AMP, OPTF_POSITIVE, -1, NULL},
              {"ideality", OPT_VALUE, LS_FREE, OPTF_POSITIVE, -1, NULL},
              {"rbulk", OPT_VALUE, LS_OHM, OPTF_NONNEG, -1, NULL},
              {"imax", OPT_VALUE, LS_AMP, OPTF_POSITIVE, -1, NULL}},
     .nopts = NCOMMON + 5, .npins = 2, .branches = ls_junction_branches, .stamp = ls_junction_stamp,
     .current = ls_junction_lin, .edges = ls_junction_edges, .renamed = JUNCTION_RENAMED,
     .is_nonlinear = always, .init = ls_junction_init,
     .update = ls_junction_update},
    {.name = "zener", .has_run = true, .shape = SHAPE_TWO, .is_junction = true, .doc = "zener ANODE -> CATHODE vz=V [at=A ideality=N isat=A rbulk=R imax=A]",
     .vsign = VSIGN_DROP,
     .opts = {COMMON_OPTS, {"vz", OPT_VALUE, LS_VOLT, OPTF_POSITIVE | OPTF_REQUIRED, -1, NULL},
              {"at", OPT_VALUE, LS_AMP, OPTF_POSITIVE, -1, NULL},
              {"ideality", OPT_VALUE, LS_FREE, OPTF_POSITIVE, -1, NULL},
              {"isat", OPT_VALUE, LS_AMP, OPTF_POSITIVE, -1, NULL},
              {"rbulk", OPT_VALUE, LS_OHM, OPTF_NONNEG, -1, NULL},
              {"imax", OPT_VALUE, LS_AMP, OPTF_POSITIVE, -1, NULL}},
     .nopts = NCOMMON + 6, .npins = 2, .branches = ls_junction_branches, .stamp = ls_junction_stamp,
     .current = ls_junction_lin, .edges = ls_junction_edges, .renamed = JUNCTION_RENAMED,
     .is_nonlinear = always, .init = ls_junction_init,
     .update = ls_junction_update},
    {.name = "pot", .shape = SHAPE_PINNED, .stage_role = LS_ROLE_SENSOR, .doc = "pot NAME TOTAL a=A wiper=W b=B [at=0..1]",
     .value_slot = true, .value_dims = LS_OHM, .value_flags = OPTF_REQUIRED | OPTF_POSITIVE, .vsign = VSIGN_ENDS,
     .opts = {COMMON_OPTS, {"a", OPT_NODE, LS_FREE, OPTF_REQUIRED, 0, NULL},
              {"wiper", OPT_NODE, LS_FREE, OPTF_REQUIRED, 1, NULL},
              {"b", OPT_NODE, LS_FREE, OPTF_REQUIRED, 2, NULL},
              {"at", OPT_VALUE, LS_FREE, OPTF_FRACTION, -1, NULL}},
     .nopts = NCOMMON + 4, .npins = 3, .branches = no_branch, .stamp = ls_pot_stamp, .current = ls_pot_current,
     .edges = ls_pot_edges, .results = ls_pot_results},
    {.name = "ntc", .has_run = true, .has_body_temp = true, .shape = SHAPE_TWO, .stage_role = LS_ROLE_SENSOR, .doc = "ntc FROM -> TO r25=R beta=K [celsius=degC dissipation=W/K]",
     .vsign = VSIGN_DROP,
     .opts = {COMMON_OPTS, {"r25", OPT_VALUE, LS_OHM, OPTF_MAIN | OPTF_POSITIVE | OPTF_REQUIRED, -1, NULL},
              {"beta", OPT_VALUE, LS_FREE, OPTF_POSITIVE | OPTF_REQUIRED, -1, NULL},
              {"celsius", OPT_VALUE, LS_FREE, 0, -1, NULL},
              {"dissipation", OPT_VALUE, LS_WATT, OPTF_POSITIVE, -1, NULL}},
     .nopts = NCOMMON + 4, .npins = 2, .branches = no_branch, .stamp = ls_ntc_stamp, .current = ls_ntc_current,
     .edges = two_edge, .renamed = {{"temp", "celsius"}},
     .is_nonlinear = ls_ntc_nonlinear, .init = ls_ntc_init, .update = ls_ntc_update},
    {.name = "switch", .exact = LS_EXACT_SWITCH, .shape = SHAPE_TWO, .doc = "switch FROM -> TO state=open|closed|LET [ron=R roff=R]",
     .vsign = VSIGN_DROP,
     .opts = {COMMON_OPTS, {"state", OPT_WORD, LS_FREE, OPTF_REQUIRED, -1, "open|closed"},
              {"ron", OPT_VALUE, LS_OHM, OPTF_NONNEG, -1, NULL},
              {"roff", OPT_VALUE, LS_OHM, OPTF_POSITIVE, -1, NULL}},
     .nopts = NCOMMON + 3, .npins = 2, .branches = one_branch, .stamp = ls_switch_stamp,
     .current = current_branch, .edges = ls_switch_edges},
    {.name = "adc", .exact = LS_EXACT_ADC, .is_adc = true, .has_run = true, .shape = SHAPE_PINNED, .stage_role = LS_ROLE_ADC,
     .doc = "adc NAME in=NODE ref=V bits=N [rin=R leak=A max_source=R]",
     .vsign = VSIGN_IN,
     .opts = {COMMON_OPTS, {"in", OPT_NODE, LS_FREE, OPTF_REQUIRED, 0, NULL},
              {"ref", OPT_VALUE, LS_VOLT, OPTF_POSITIVE | OPTF_REQUIRED, -1, NULL},
              {"bits", OPT_VALUE, LS_FREE, OPTF_POSITIVE | OPTF_REQUIRED | OPTF_INTEGER, -1, NULL},
              {"rin", OPT_VALUE, LS_OHM, OPTF_POSITIVE, -1, NULL},
              {"leak", OPT_VALUE, LS_AMP, 0, -1, NULL},
              {"max_source", OPT_VALUE, LS_OHM, OPTF_POSITIVE, -1, NULL}},
     .nopts = NCOMMON + 6, .npins = 1, .branches = no_branch, .stamp = ls_adc_stamp, .current = ls_adc_current,
     .edges = ls_adc_edges, .results = ls_adc_results},
#ifdef LS_TEST_KINDS
    /* Built only into the tests' loadstack_toy: a kind with a limit, added as
     * one family file (tests/house/testsink_kind.c) plus this entry. */
    {.name = "testsink", .has_run = true, .shape = SHAPE_TWO, .removal = LS_REMOVE_OPEN,
     .doc = "testsink FROM -> TO VALUE compliance=V  (draws VALUE FROM -> TO while V(FROM) - V(TO) >= compliance)",
     .value_slot = true, .value_dims = LS_AMP, .value_flags = OPTF_REQUIRED | OPTF_POSITIVE, .vsign = VSIGN_DROP,
     .opts = {COMMON_OPTS, {"compliance", OPT_VALUE, LS_VOLT, OPTF_REQUIRED | OPTF_POSITIVE, -1, NULL}},
     .nopts = NCOMMON + 1, .npins = 2, .branches = ls_testsink_branches, .stamp = ls_testsink_stamp,
     .current = ls_testsink_current, .edges = ls_testsink_edges,
     .is_nonlinear = ls_testsink_nonlinear, .init = ls_testsink_init, .update = ls_testsink_update},
#endif
};

int ls_kind_count(void) { return (int)(sizeof kinds / sizeof kinds[0]); }
const ls_kind *ls_kind_at(int i)
{
    assert(i >= 0 && i < ls_kind_count());
    return &kinds[i];
}

const ls_kind *ls_kind_findn(const char *name, size_t n)
{
    for (int i = 0; i < ls_kind_count(); i++)
        if (strlen(kinds[i].name) == n && memcmp(kinds[i].name, name, n) == 0)
            return &kinds[i];
    return NULL;
}

const ls_kind *ls_kind_find(const char *name)
{
    return ls_kind_findn(name, strlen(name));
}
