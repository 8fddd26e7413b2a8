/* parts.h — the part table.  Every part kind is one entry of the table in
 * kinds.c plus its functions in the file of its family (family.h lists them):
 * name, terminals, options, how it enters the MNA system, how its current is
 * expressed, what it contributes to the topology checks, how it is removed and
 * what it reports. */
#ifndef LS_PARTS_H
#define LS_PARTS_H

#include "netlist/netlist.h"
#include "netlist/run.h"
#include "base/suggest.h"   /* the did-you-mean of unknown kinds and options (elab.c) */

#include <assert.h>

/* OPT_FREE: free=LO..HI, a range of the part's main value (kept in nl->frees). */
typedef enum ls_optkind { OPT_VALUE, OPT_NODE, OPT_PART, OPT_WORD, OPT_RANGE, OPT_FREE } ls_optkind;

enum {
    OPTF_REQUIRED = 1,   /* must be given */
    OPTF_POSITIVE = 2,   /* > 0 */
    OPTF_NONNEG = 4,     /* >= 0 */
    OPTF_MAIN = 8,       /* this option is the part's main value */
    OPTF_FRACTION = 16,  /* 0..1 */
    OPTF_INTEGER = 32,   /* a whole number */
    OPTF_BUDGET = 64     /* a port's sag budget: volts, a fraction, or LSB (elab.c stores its ls_budget index) */
};

typedef struct ls_optdef {
    const char *name;
    ls_optkind kind;
    ls_dims dims;        /* OPT_VALUE / OPT_RANGE of values */
    unsigned flags;
    int pin;             /* OPT_NODE: the pin slot it fills; OPT_RANGE: its slot in ls_part.range */
    const char *words;   /* OPT_WORD: "open|closed" (stored as the word's index) */
} ls_optdef;

/* Linear form of a part's current (A, FROM -> TO) in the MNA unknowns. */
#define LS_LIN_MAX 16
typedef struct ls_lin {
    int n;
    int idx[LS_LIN_MAX];   /* unknown index */
    double coef[LS_LIN_MAX];
    double constant;
    bool overflow;
} ls_lin;

/* Where stamps go: assembly into triplets and a right-hand side, the adjoint
 * accumulation lambda^T (db - dA x) used by the sensitivity analysis, or the
 * residual b - A x accumulated part by part in extended precision
 * (accuracy.c), which never sums two parts' conductances in double. */
typedef enum ls_sink_mode { SINK_ASSEMBLE, SINK_ADJOINT, SINK_RESIDUAL, SINK_COLUMNS } ls_sink_mode;
typedef struct ls_resid ls_resid;
void ls_resid_a(ls_resid *r, int row, int col, double v);
void ls_resid_b(ls_resid *r, int row, double v);

typedef struct ls_triplets {
    int n;                 /* order */
    int *ti, *tj;
    double *tx;
    size_t nnz, cap;
    int failed;
} ls_triplets;

/* SINK_COLUMNS: the first assembly's entries placed straight into slots of
 * their column (mna.c sizes the columns before stamping), duplicates not yet
 * summed.  A column with no slot left sets overflow and drops the entry. */
typedef struct ls_columns {
    int *next;             /* per column: its next free slot */
    const int *end;        /* per column: one past its last slot */
    int *row;              /* per slot: the entry's row */
    double *val;           /* per slot: its value */
    int overflow;
} ls_columns;

typedef struct ls_sink {
    ls_sink_mode mode;
    ls_triplets *t;        /* SINK_ASSEMBLE */
    ls_columns *cols;      /* SINK_COLUMNS */
    double *b;             /* SINK_ASSEMBLE and SINK_COLUMNS, order n */
    const double *lambda;  /* SINK_ADJOINT */
    const double *x;       /* SINK_ADJOINT */
    double acc;            /* SINK_ADJOINT result */
    ls_resid *resid;       /* SINK_RESIDUAL */
    double scale;          /* every stamp is multiplied by this (1 normally) */
} ls_sink;

/* ls_sink_a past its checks: an entry of A at (row, col), both >= 0, v != 0. */
void ls_sink_put(ls_sink *s, int row, int col, double v);
/* An entry of A at (row, col); row/col < 0 (ground) and zeros are dropped.
 * Inline, so the stamps in each family file skip those without a call. */
static inline void ls_sink_a(ls_sink *s, int row, int col, double v)
{
    if (row < 0 || col < 0 || v == 0)
        return;
    ls_sink_put(s, row, col, v);
}
void ls_sink_b(ls_sink *s, int row, double v);

/* What a stamp needs: the unknown index of a node, of a branch, the netlist,
 * and the run (run.h: the parts' states and values in this solve). */
typedef struct ls_stamp_ctx {
    const ls_netlist *nl;
    const ls_run *run;     /* run->nl == nl */
    ls_sink *sink;
    bool removed;          /* stamp the part as removed (opened / set to zero) */
    bool buffered;         /* a port: its load side gets the driver's voltage, the driver supplies nothing */
    bool derivative;       /* stamp d/d(main value) instead of the value */
} ls_stamp_ctx;

static inline int ls_node_unknown(int node) { return node - 1; }

typedef enum ls_shape { SHAPE_TWO, SHAPE_PINNED } ls_shape;
/* How a part's `voltage` reads, and how its absorbed power follows from it
 * (ls_part_vnodes, ls_part_power_sign). */
typedef enum ls_vsign {
    VSIGN_DROP,   /* V(pin 0) - V(pin 1); power = voltage x current */
    VSIGN_RISE,   /* V(pin 1) - V(pin 0); power = -voltage x current */
    VSIGN_OUT,    /* V(pin 2), an output against ground; power = -voltage x current */
    VSIGN_ENDS,   /* V(pin 0) - V(pin 2), across a three-pin track's ends; its power is its
                     own (the kind's results), no product of voltage and current */
    VSIGN_IN      /* V(pin 0), an input against ground; power = voltage x current */
} ls_vsign;

/* How a kind's stamp reads the current of its via= part (ls_part.ref). */
typedef enum ls_via_use {
    LS_VIA_NONE = 0,
    LS_VIA_CURRENT,       /* a current VALUE x I(via) from FROM to TO (rows FROM, TO); its own
                             current is that product */
    LS_VIA_VOLTAGE        /* a branch V(TO) - V(FROM) = VALUE x I(via) (its branch row); its own
                             current is its branch unknown */
} ls_via_use;

/* Topology: conductive edges (DC paths) and voltage-defined edges. */
typedef void (*ls_edge_fn)(void *ctx, int a, int b, bool voltage_defined, int part);

#define LS_MAX_RENAMED 4

/* What a part becomes when `sag`, the port report or a what-if removes it. */
typedef enum ls_removal {
    LS_REMOVE_OPEN = 0,   /* opened: no current (the default) */
    LS_REMOVE_SHORT       /* set to zero: a voltage-defined part keeps its two ends at one voltage */
} ls_removal;

/* The part's role in a stage of `chain` (what a stage holding it is drawn and
 * described as). */
typedef enum ls_stage_role {
    LS_ROLE_NONE = 0,     /* wiring: resistors, ports, controlled sources, ... */
    LS_ROLE_SOURCE,       /* a voltage source: a supply or a signal source */
    LS_ROLE_SENSOR,       /* a current source, thermistor or potentiometer: a sensor's model */
    LS_ROLE_OPAMP,        /* an amplifier */
    LS_ROLE_ADC           /* a converter input */
} ls_stage_role;

/* How `formula` stamps a kind exactly, its value a symbol (the rows are
 * those of its numeric stamp; src/analysis/formula.c).  LS_EXACT_NONE: the
 * kind enters through its numeric stamp at the operating point, which is
 * always right and reported as "taken as numbers". */
typedef enum ls_exact {
    LS_EXACT_NONE = 0,
    LS_EXACT_RESISTOR,    /* conductance 1/VALUE; VALUE a symbol */
    LS_EXACT_VSOURCE,     /* a branch V(TO) - V(FROM) = VALUE, with rint=; VALUE a symbol */
    LS_EXACT_ISOURCE,     /* VALUE from FROM to TO; VALUE a symbol */
    LS_EXACT_PORT,        /* a zero-volt branch, or opened (no value) */
    LS_EXACT_VCVS,        /* gain= a symbol */
    LS_EXACT_VCCS,        /* gm= a symbol */
    LS_EXACT_CCCS,        /* gain= a symbol, through via='s current */
    LS_EXACT_CCVS,        /* rm= a symbol, through via='s current */
    LS_EXACT_OPAMP,       /* exact only while no limit is in force; gain= a symbol when given */
    LS_EXACT_SWITCH,      /* ron=/roff= as numbers (no value) */
    LS_EXACT_ADC          /* rin= and leak= as numbers (no value) */
} ls_exact;

typedef struct ls_kind {
    const char *name;
    ls_shape shape;
    const char *doc;             /* one line for --help and docs */
    bool value_slot;             /* a positional VALUE is allowed */
    ls_dims value_dims;
    unsigned value_flags;
    ls_vsign vsign;              /* how `voltage` reads */
    bool is_port;
    bool is_opamp;
    bool has_run;                /* keeps analysis state in a run (ls_run_state): sources, op-amps, junctions, ... */
    ls_removal removal;          /* how it is removed (sag, ports, what-if) */
    ls_stage_role stage_role;    /* its role in a stage of `chain` */
    ls_exact exact;              /* how `formula` stamps it exactly (LS_EXACT_NONE: as numbers) */
    bool is_junction;            /* iterates as a pn junction (ls_junction_current/_v): the iteration's
                                    polishing, its past-the-model check and sag's on/off limits */
    bool is_resistance;          /* a plain resistance FROM -> TO, its main value in ohms, carrying
                                    V/R and nothing else: the resistor advice of a port, the
                                    spread of values named when a system is singular, the
                                    small-resistance reason of the error bounds */
    bool is_adc;                 /* reads its input node (pin 0) as a code (ls_op_adc): the
                                    readings, the range and source checks, the code property */
    bool has_body_temp;          /* a body temperature (a thermistor's): its resistance and
                                    temperature properties; one that iterates and does not
                                    settle points at thermal runaway */
    ls_via_use via_use;          /* how its stamp reads the current of its via= part */
    ls_optdef opts[LS_MAX_OPTS];
    int nopts;
    /* Options that were spelled differently before; naming one is an error
     * that gives the new name.  Unused slots have old == NULL. */
    struct { const char *old, *now; } renamed[LS_MAX_RENAMED];
    int npins;                   /* SHAPE_TWO: 2 + node options */
    int (*branches)(const ls_part *p);
    void (*stamp)(const ls_part *p, ls_stamp_ctx *c);
    void (*current)(const ls_part *p, const ls_run *run, ls_lin *out, bool derivative, int depth);
    void (*edges)(const ls_part *p, void *ctx, ls_edge_fn emit);
    /* Nonlinear parts (NULL for linear ones) --------------------------------- */
    /* Is this part nonlinear as configured (an ntc only with dissipation=)? */
    bool (*is_nonlinear)(const ls_part *p);
    /* The first linearization point (op_v / op_t) in run's state of p. */
    void (*init)(const ls_part *p, ls_run *run);
    /* Move the linearization point towards the solution x of the last
     * linear solve (with damping and limiting); true when it has settled. */
    bool (*update)(const ls_part *p, ls_run *run, const double *x);
    /* Current (A), voltage (V, as vsign reads) and absorbed power (W) for parts
     * whose results are not the generic ones (pot, adc); NULL otherwise. */
    void (*results)(const ls_part *p, const ls_run *run, const double *x, const double *v, double out[3]);
    /* Error bounds (accuracy.c): does this part keep every node row of A^-1
     * one-signed, column by column, as a network of positive resistances and
     * grounded sources does (an M-matrix)?  0 no (or NULL); else the sign of
     * its branch column in the node rows, +1 or -1 (+1 for a part without a
     * branch).  Then |A^-1| w on the node rows is one solve. */
    int (*monotone)(const ls_part *p);
    /* Parts with pins beyond the ones their voltage reads (an op-amp's inputs
     * and supply rails; NULL otherwise): does current flow at them for this
     * part, and the power absorbed there (W) given the node voltages v and
     * the part's current, so that a part's power is its whole absorbed power
     * and the parts' powers sum to zero. */
    bool (*other_pins)(const ls_part *p);
    double (*pin_power)(const ls_part *p, const ls_run *run, const double *v, double current);
} ls_kind;

const ls_kind *ls_kind_find(const char *name);
const ls_kind *ls_kind_findn(const char *name, size_t n);
int ls_kind_count(void);
const ls_kind *ls_kind_at(int i);
/* Unit of a kind's main value: its OPTF_MAIN option's, else the value slot's. */
ls_dims ls_kind_main_dims(const ls_kind *k);
/* The current name of an option that `name` used to spell, or NULL. */
const char *ls_kind_renamed(const ls_kind *k, const char *name);
/* Index of option `name` in the kind, or -1. */
int ls_kind_opt(const ls_kind *k, const char *name);

/* The nodes a part's `voltage` reads (its kind's vsign): V(*plus) - V(*minus),
 * node 0 being ground. */
static inline void ls_part_vnodes(const ls_part *p, int *plus, int *minus)
{
    switch (p->kind->vsign) {
    case VSIGN_DROP: *plus = p->pin[0], *minus = p->pin[1]; return;
    case VSIGN_RISE: *plus = p->pin[1], *minus = p->pin[0]; return;
    case VSIGN_OUT: *plus = p->pin[2], *minus = 0; return;
    case VSIGN_ENDS: *plus = p->pin[0], *minus = p->pin[2]; return;
    case VSIGN_IN: *plus = p->pin[0], *minus = 0; return;
    }
    assert(!"a vsign outside ls_vsign");
}

/* The sign s with absorbed power = s x voltage x current (FROM -> TO) for a
 * part, or 0 when its power is not that product (a track's two segments, an
 * op-amp drawing on its supply rails or inputs). */
static inline int ls_part_power_sign(const ls_part *p)
{
    if (p->kind->other_pins && p->kind->other_pins(p))
        return 0;
    switch (p->kind->vsign) {
    case VSIGN_DROP: case VSIGN_IN: return 1;
    case VSIGN_RISE: case VSIGN_OUT: return -1;
    case VSIGN_ENDS: return 0;
    }
    assert(!"a vsign outside ls_vsign");
    return 0;
}

/* Removing a part of a kind removed as a short (a voltage source, a
 * voltage-defined controlled source: its value set to zero) keeps its DC
 * edges; removing anything else opens it (the table's .removal). */
static inline bool ls_removal_keeps_edges(const ls_part *p) { return p->kind->removal == LS_REMOVE_SHORT; }

/* Option value helpers. */
static inline bool ls_part_has(const ls_part *p, int opt)
{
    assert(opt < LS_MAX_OPTS); /* an option index from ls_kind_opt: -1 (none) or a slot */
    return opt >= 0 && (p->has_opt >> opt & 1u);
}
/* Option `name` of part p as elaborated, or dflt when not given: for what
 * is fixed with the netlist (a part's branch count, its DC edges, whether
 * current flows at its other pins), never for a value a solve stamps. */
double ls_part_opt(const ls_part *p, const char *name, double dflt);
/* Option `name` of part p in run `run` (a study may set it: run.h), or dflt
 * when not given; run NULL: as elaborated. */
double ls_part_opt_in(const ls_run *run, const ls_part *p, const char *name, double dflt);

/* Do parts p and q (one part as elaborated twice, or as elaborated and with
 * a run's options: same pins) have the same shape: the same branch
 * unknowns, DC edges, pins that draw current, linearity and monotonicity?
 * What the table's functions without a run read of a part is its shape, so
 * a study may change a part's values in a run only while it keeps it. */
bool ls_part_same_shape(const ls_part *p, const ls_part *q);

/* Part current as a linear form in run (recursing through via=); depth guards cycles. */
void ls_part_current(const ls_part *p, const ls_run *run, ls_lin *out, bool derivative);
double ls_lin_eval(const ls_lin *l, const double *x);

/* ---- real parts: helpers for the iteration and the reports ---- */

enum { OA_RAILS = 0, OA_CM = 1 };   /* op-amp range slots in ls_part.range */

/* Voltage of one end of a range option given node voltages v (v[0] = 0). */
double ls_level_v(const ls_level *l, const double *v);
/* The op-amp limit (LS_LIM_*) that should be in force given the solution x
 * and node voltages v of the last solve; *side is set to the supply side
 * (1 sinking) that current calls for. */
int ls_opamp_next(const ls_part *p, const ls_run *run, const double *x, const double *v, int *side);
/* The word for the op-amp's output limit in force, as the JSON report and the
 * C API give it: "rail-high", "rail-low", "current" or "none". */
const char *ls_opamp_limit_word(const ls_part *p, const ls_run *run);
/* The same word for an op-amp limit state LS_LIM_*. */
const char *ls_lim_word(int state);
/* Does the op-amp have any output limit (rails= or imax=)? */
bool ls_opamp_limited(const ls_part *p);
/* Junction current (A, anode -> cathode) of a diode, led or zener at junction
 * voltage vj (V), its model's options as in run, without the shunt terms; *beyond is set when vj is past the
 * point where the model's current exceeds LS_JUNCTION_IMAX. */
double ls_junction_current(const ls_run *run, const ls_part *p, double vj, bool *beyond);
/* Junction voltage (V) of a diode, led or zener in the solution x. */
double ls_junction_v(const ls_part *p, const double *x);
/* Thermistor resistance (ohm) at temperature t_c (degC), by the Beta equation. */
double ls_ntc_r(const ls_part *p, const ls_run *run, double t_c);
/* An adc's LSB (V): ref / 2^bits, as elaborated (ls_adc_lsb) or in run. */
double ls_adc_lsb(const ls_part *p);
double ls_adc_lsb_in(const ls_run *run, const ls_part *p);
/* Thermistor body temperature (degC): celsius=, plus self-heating when solved with dissipation=. */
double ls_ntc_body(const ls_part *p, const ls_run *run);

#define LS_JUNCTION_IMAX 1e3     /* A: past this the exponential is continued linearly */
#define LS_GMIN 1e-12            /* S: always across every junction (keeps a cut-off node defined) */
#define LS_THERMAL_VOLTAGE (1.380649e-23 * 298.15 / 1.602176634e-19) /* V: kT/q at 25 degC (SI 2019 exact k, q) */

#endif
