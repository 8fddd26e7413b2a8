/* netlist.h — the flat circuit after elaboration: nodes, parts, checks.
 * Node 0 is ground.  Parts refer to nodes by index. */
#ifndef LS_NETLIST_H
#define LS_NETLIST_H

#include "lang/ast.h"
#include "base/hash.h"

#include <stdint.h>

#define LS_MAX_PINS 4 /* the most any kind has (a controlled source's four); checked by unit-core */
#define LS_MAX_OPTS 24 /* at most 32: ls_part.has_opt is a bit set */

#define LS_MAX_RANGES 2

struct ls_kind;

/* One end of a range option (rails=, cm=): V(node) + volts, or a fixed
 * voltage when node is -1. */
typedef struct ls_level {
    int node;
    double volts;
} ls_level;

/* Op-amp output limits in force (ls_part.state). */
enum { LS_LIM_NONE = 0, LS_LIM_RAIL_HIGH, LS_LIM_RAIL_LOW, LS_LIM_CURRENT_SOURCE, LS_LIM_CURRENT_SINK };

typedef struct ls_node {
    const char *name;
    ls_loc loc;            /* first mention */
    int scope_depth;       /* 0 top level, else instance depth (for the pin warning) */
    bool dotted_ref;       /* made by a dotted reference from outside its instance */
    bool claimed;          /* a block body declared it */
} ls_node;

/* Analysis state of one part in one solve (kept in an ls_run, run.h, not in
 * the netlist), written by the operating-point iteration (analysis.c,
 * newton.c) and read by the stamps, so every analysis that re-stamps the
 * system (ports, sag, influence) sees the circuit linearized at its solution.
 * Only sources, op-amps, junctions, thermistors and ADC inputs have one. */
typedef struct ls_part_run {
    double op_v;           /* junction: voltage (V, anode -> cathode) the companion model is stamped at */
    double op_t;           /* ntc: body temperature (degC) its resistance is stamped at */
    double heat_t, heat_f; /* ntc: the previous temperature and its image (secant on self-heating) */
    double shunt_s;        /* shrinking junction shunts: extra conductance (S) across a junction */
    double src_cut;        /* ramping the sources: fraction of a source's value left out (0 = all of it) */
    int state;             /* op-amp: LS_LIM_* in force */
    int side;              /* op-amp: 1 while sinking (its current returns into the lower rail) */
    int releases;          /* op-amp: times a rail was let go (positive feedback shows as repeats) */
    bool open_loop;        /* op-amp: ideal with rails, singular when free (a comparator): only rails */
    bool probed;           /* op-amp: its upper rail has been tried once from a free solution */
    bool probing;          /* op-amp: held at that rail only to try it */
} ls_part_run;

/* A part's via= as written, which the elaborator resolves into ls_part.ref
 * once every part is known. */
typedef struct ls_via_name {
    const char *name;      /* the part or port named */
    const char *scope;     /* the instance prefix it is named in ("" at the top level) */
    ls_loc loc;
} ls_via_name;

/* One part of the flat circuit.  The record is kept small (a large grid has
 * millions of them: 120 bytes each): options, ranges and via= live in side
 * records in the netlist's arena, allocated only for the parts that use
 * them. */
typedef struct ls_part {
    const struct ls_kind *kind;
    const char *name;      /* hierarchical: "d1.upper" */
    const char *instance;  /* "d1", or NULL at the top level */
    double *opt;           /* LS_MAX_OPTS option values, NULL while no option is given;
                              read opt[i] only where ls_part_has(p, i) */
    ls_level (*range)[2];  /* OPT_RANGE options: range[slot][0 low, 1 high]; LS_MAX_RANGES
                              slots, zeroed, for kinds that take a range option, else NULL */
    const ls_via_name *via; /* via= as written, NULL without one (resolved into ref) */
    double value;          /* the main value (resistance, voltage, gain, ...) as elaborated; a solve
                              reads it through its run (ls_run_value: a study may change it) */
    ls_loc loc;            /* the name in the statement */
    ls_loc value_loc;
    int pin[LS_MAX_PINS];  /* node indices; -1 when not given */
    uint32_t has_opt;      /* bit i: option i was given */
    int ref;               /* via= part index, -1 */
    int branch;            /* first MNA branch unknown, -1 if none (numbered once by the elaborator) */
    int slot;              /* its analysis state's index in a run (ls_run.state), -1: its kind keeps none */
    bool has_value;
} ls_part;
_Static_assert(LS_MAX_OPTS <= 32, "ls_part.has_opt holds one bit per option");
_Static_assert(sizeof(ls_part) <= 120, "a part record stays within 120 bytes (docs/performance.md)");

/* A bound quantity: the syntax of an expect or a QUANTITY with names resolved. */
typedef enum ls_qkind { Q_CONST, Q_NODE, Q_PROP, Q_NEG, Q_BIN, Q_CALL } ls_qkind;

typedef enum ls_prop {
    PROP_CURRENT, PROP_VOLTAGE, PROP_POWER,
    PROP_OPEN, PROP_LOADED, PROP_SAG, PROP_SAG_REL, PROP_ZOUT, PROP_ZIN, PROP_RATIO, PROP_BUDGET,
    PROP_VALUE, PROP_CODE, PROP_ERROR_LSB, PROP_UNLOADED, PROP_SOURCE, PROP_RESISTANCE, PROP_TEMPERATURE,
    PROP_COUNT
} ls_prop;

typedef struct ls_q {
    ls_qkind kind;
    ls_loc loc;
    double value;          /* Q_CONST */
    int index;             /* Q_NODE: node; Q_PROP: part */
    ls_prop prop;          /* Q_PROP */
    int op;                /* Q_BIN: ls_binop; Q_CALL: ls_func */
    struct ls_q *a, *b;
    struct ls_q **args;
    int nargs;
    ls_dims dims;
} ls_q;

typedef struct ls_check {
    ls_loc loc;            /* the statement's keyword */
    const char *instance;  /* NULL at the top level */
    const char *text;      /* "expect adc_in = 1.65 V within 1%" */
    ls_q *lhs, *rhs, *rhs2, *within;
    ls_cmp cmp;
    bool relative;         /* within is a fraction of the expected value */
    bool is_rule;
} ls_check;

typedef enum ls_ent_kind { ENT_NODE, ENT_ALIAS, ENT_PART, ENT_INSTANCE, ENT_PARAM, ENT_BLOCK } ls_ent_kind;

/* What a name stands for.  Its location (where it was declared) is its
 * record's (the node's, part's or let's loc), or for an alias or an instance
 * kept apart in ls_netlist.ent_locs: read it with ls_entity_loc.  8 bytes:
 * a 1000 x 1000 grid has 3 million entities (docs/performance.md, "Front
 * end, the sixth round"). */
typedef struct ls_entity {
    ls_ent_kind kind;
    int index;             /* node, part, param; ENT_ALIAS: the outer node; ENT_INSTANCE: the block */
} ls_entity;
_Static_assert(sizeof(ls_entity) <= 8, "an entity stays within 8 bytes");

/* The location of an entity that has no record of its own to keep it. */
typedef struct ls_ent_loc {
    int ent;               /* index into ls_netlist.ents */
    ls_loc loc;
} ls_ent_loc;

typedef struct ls_param {
    double value;
    ls_dims dims;
    ls_loc loc;
} ls_param;

/* A sag budget as written: volts, amperes (current-mode ports), a fraction
 * of the port's open value, or LSBs of the adc on the port's load node. */
typedef enum ls_budget_unit { LS_BUDGET_VOLT, LS_BUDGET_AMP, LS_BUDGET_FRACTION, LS_BUDGET_LSB } ls_budget_unit;

typedef struct ls_budget {
    double value;          /* in its unit */
    ls_budget_unit unit;
    ls_loc loc;            /* the value as written */
} ls_budget;

/* A design variable: a part whose main value has free=LO..HI (language.md),
 * for `fit`.  The part's opt[free] holds its index in nl->frees. */
typedef struct ls_freevar {
    int part;
    double lo, hi;         /* the range, in the part's main unit; 0 < lo < hi */
    const char *series;    /* the part's snap= series ("E96"), or NULL: the command's --series */
    ls_loc loc;            /* free=LO..HI as written */
} ls_freevar;

typedef struct ls_netlist {
    ls_arena *arena;
    ls_diags *diags;
    const char *title;
    const char *ground_name;
    ls_loc ground_loc;
    ls_node *nodes;
    int nnodes, cap_nodes;
    ls_part *parts;
    int nparts, cap_parts;
    int nstates;           /* parts with an analysis state (ls_part.slot 0 .. nstates - 1) */
    ls_check *checks;
    int nchecks, cap_checks;
    ls_param *params;
    int nparams, cap_params;
    ls_entity *ents;
    int nents, cap_ents;
    ls_ent_loc *ent_locs;  /* the aliases' and instances' locations, by increasing ent */
    int nent_locs, cap_ent_locs;
    ls_hash names;         /* full name -> entity */
    double min_ratio;      /* from `rule ratio`, else 10 */
    bool has_rule;
    ls_budget *budgets;    /* ports' budget= (a port's opt[budget] is its index here) */
    int nbudgets, cap_budgets;
    ls_freevar *frees;        /* free= design variables, in part order */
    int nfrees, cap_frees;
    ls_budget rule_sag;    /* `rule sag <= X`, when has_rule_sag */
    bool has_rule_sag;
    int instances;
} ls_netlist;

void ls_netlist_free(ls_netlist *nl);
/* Part index by full name, or -1. */
int ls_netlist_find_part(const ls_netlist *nl, const char *name);
/* Node index by full name (pins resolve to their outer node), or -1. */
int ls_netlist_find_node(const ls_netlist *nl, const char *name);
/* Where entity e (an index into nl->ents) was declared; LS_NOLOC when
 * nowhere in the text (the ground's alias without a ground statement). */
ls_loc ls_entity_loc(const ls_netlist *nl, int e);

#endif
