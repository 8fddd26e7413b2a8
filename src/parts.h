/* parts.h — the part table.  Every part kind is one entry here plus its stamp
 * functions in parts.c: name, terminals, options, how it enters the MNA system,
 * how its current is expressed and what it contributes to the topology checks. */
#ifndef LS_PARTS_H
#define LS_PARTS_H

#include "netlist.h"

typedef enum ls_optkind { OPT_VALUE, OPT_NODE, OPT_PART, OPT_WORD, OPT_RANGE } ls_optkind;

enum {
    OPTF_REQUIRED = 1,   /* must be given */
    OPTF_POSITIVE = 2,   /* > 0 */
    OPTF_NONNEG = 4,     /* >= 0 */
    OPTF_MAIN = 8,       /* this option is the part's main value */
    OPTF_FRACTION = 16   /* 0..1 */
};

typedef struct ls_optdef {
    const char *name;
    ls_optkind kind;
    ls_dims dims;        /* OPT_VALUE / OPT_RANGE of values */
    unsigned flags;
    int pin;             /* OPT_NODE: the pin slot it fills */
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

/* Where stamps go: assembly into triplets and a right-hand side, or the adjoint
 * accumulation lambda^T (db - dA x) used by the sensitivity analysis. */
typedef enum ls_sink_mode { SINK_ASSEMBLE, SINK_ADJOINT } ls_sink_mode;

typedef struct ls_triplets {
    int n;                 /* order */
    int *ti, *tj;
    double *tx;
    size_t nnz, cap;
    int failed;
} ls_triplets;

typedef struct ls_sink {
    ls_sink_mode mode;
    ls_triplets *t;        /* SINK_ASSEMBLE */
    double *b;             /* SINK_ASSEMBLE, order n */
    const double *lambda;  /* SINK_ADJOINT */
    const double *x;       /* SINK_ADJOINT */
    double acc;            /* SINK_ADJOINT result */
    double scale;          /* every stamp is multiplied by this (1 normally) */
} ls_sink;

void ls_sink_a(ls_sink *s, int row, int col, double v);  /* row/col < 0: ground, dropped */
void ls_sink_b(ls_sink *s, int row, double v);

/* What a stamp needs: the unknown index of a node, of a branch, the netlist. */
typedef struct ls_stamp_ctx {
    const ls_netlist *nl;
    ls_sink *sink;
    bool removed;          /* stamp the part as removed (opened / set to zero) */
    bool derivative;       /* stamp d/d(main value) instead of the value */
} ls_stamp_ctx;

static inline int ls_node_unknown(int node) { return node - 1; }

typedef enum ls_shape { SHAPE_TWO, SHAPE_PINNED } ls_shape;
typedef enum ls_vsign { VSIGN_DROP, VSIGN_RISE, VSIGN_OUT } ls_vsign;

/* Topology: conductive edges (DC paths) and voltage-defined edges. */
typedef void (*ls_edge_fn)(void *ctx, int a, int b, bool voltage_defined, int part);

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
    ls_optdef opts[LS_MAX_OPTS];
    int nopts;
    int npins;                   /* SHAPE_TWO: 2 + node options */
    int (*branches)(const ls_part *p);
    void (*stamp)(const ls_part *p, ls_stamp_ctx *c);
    void (*current)(const ls_part *p, const ls_netlist *nl, ls_lin *out, bool derivative, int depth);
    void (*edges)(const ls_part *p, void *ctx, ls_edge_fn emit);
} ls_kind;

const ls_kind *ls_kind_find(const char *name);
const ls_kind *ls_kind_findn(const char *name, size_t n);
/* Closest kind or keyword name for a misspelling, or NULL. */
const char *ls_kind_suggest(const char *name);
int ls_kind_count(void);
const ls_kind *ls_kind_at(int i);
/* Index of option `name` in the kind, or -1. */
int ls_kind_opt(const ls_kind *k, const char *name);

/* Option value helpers. */
static inline bool ls_part_has(const ls_part *p, int opt) { return opt >= 0 && p->has_opt[opt]; }
double ls_part_opt(const ls_part *p, const char *name, double dflt);

/* Part current as a linear form (recursing through via=); depth guards cycles. */
void ls_part_current(const ls_part *p, const ls_netlist *nl, ls_lin *out, bool derivative);
double ls_lin_eval(const ls_lin *l, const double *x);

/* Levenshtein distance, capped; used for "did you mean" suggestions. */
int ls_edit_distance(const char *a, const char *b);

#endif
