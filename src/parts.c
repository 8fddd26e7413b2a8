/* parts.c — the part table and each kind's stamps.
 *
 * MNA layout: node i (1..N-1) is unknown i-1; branch currents follow.  A KCL row
 * sums the currents leaving its node.  A branch current flows through its part
 * from FROM to TO (for an op-amp: out of the output into `out`). */
#include "parts.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* ---- sinks ---------------------------------------------------------------- */

void ls_sink_a(ls_sink *s, int row, int col, double v)
{
    if (row < 0 || col < 0 || v == 0)
        return;
    v *= s->scale;
    if (s->mode == SINK_ADJOINT) {
        s->acc -= s->lambda[row] * v * s->x[col];
        return;
    }
    ls_triplets *t = s->t;
    if (t->nnz == t->cap) {
        size_t cap = t->cap ? t->cap * 2 : 1024;
        int *ti = realloc(t->ti, cap * sizeof *ti);
        if (ti) t->ti = ti;
        int *tj = realloc(t->tj, cap * sizeof *tj);
        if (tj) t->tj = tj;
        double *tx = realloc(t->tx, cap * sizeof *tx);
        if (tx) t->tx = tx;
        if (!ti || !tj || !tx) {
            t->failed = 1;
            return;
        }
        t->cap = cap;
    }
    t->ti[t->nnz] = row;
    t->tj[t->nnz] = col;
    t->tx[t->nnz] = v;
    t->nnz++;
}

void ls_sink_b(ls_sink *s, int row, double v)
{
    if (row < 0 || v == 0)
        return;
    v *= s->scale;
    if (s->mode == SINK_ADJOINT)
        s->acc += s->lambda[row] * v;
    else
        s->b[row] += v;
}

/* ---- stamp helpers ---------------------------------------------------------- */

#define N(p, i) ls_node_unknown((p)->pin[i])

static void conductance(ls_sink *s, int a, int b, double g)
{
    ls_sink_a(s, a, a, g);
    ls_sink_a(s, b, b, g);
    ls_sink_a(s, a, b, -g);
    ls_sink_a(s, b, a, -g);
}

/* KCL entries of a branch current k flowing FROM -> TO through the part. */
static void branch_kcl(ls_sink *s, int from, int to, int k)
{
    ls_sink_a(s, from, k, 1);
    ls_sink_a(s, to, k, -1);
}

/* The branch row of an opened branch: I_k = 0.  Its KCL column entries are
 * kept; they multiply a zero current. */
static void branch_open(ls_sink *s, int k)
{
    ls_sink_a(s, k, k, 1);
}

/* Row k: V(to) - V(from) (the rise the branch forces). */
static void branch_rise(ls_sink *s, int from, int to, int k)
{
    ls_sink_a(s, k, to, 1);
    ls_sink_a(s, k, from, -1);
}

static void lin_add(ls_lin *l, int idx, double c)
{
    if (idx < 0 || c == 0)
        return;
    for (int i = 0; i < l->n; i++) {
        if (l->idx[i] == idx) {
            l->coef[i] += c;
            return;
        }
    }
    if (l->n == LS_LIN_MAX) {
        l->overflow = true;
        return;
    }
    l->idx[l->n] = idx;
    l->coef[l->n++] = c;
}

double ls_lin_eval(const ls_lin *l, const double *x)
{
    double v = l->constant;
    for (int i = 0; i < l->n; i++)
        v += l->coef[i] * x[l->idx[i]];
    return v;
}

static void current_branch(const ls_part *p, const ls_netlist *nl, ls_lin *out, bool d, int depth)
{
    (void)nl; (void)depth;
    if (!d)
        lin_add(out, p->branch, 1);
}

static int one_branch(const ls_part *p) { (void)p; return 1; }
static int no_branch(const ls_part *p) { (void)p; return 0; }

double ls_part_opt(const ls_part *p, const char *name, double dflt)
{
    int i = ls_kind_opt(p->kind, name);
    return ls_part_has(p, i) ? p->opt[i] : dflt;
}

/* ---- resistor ----------------------------------------------------------------- */

static void resistor_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->removed)
        return;
    double g = c->derivative ? -1 / (p->value * p->value) : 1 / p->value;
    conductance(c->sink, N(p, 0), N(p, 1), g);
}

static void resistor_current(const ls_part *p, const ls_netlist *nl, ls_lin *out, bool d, int depth)
{
    (void)nl; (void)depth;
    double g = d ? -1 / (p->value * p->value) : 1 / p->value;
    lin_add(out, N(p, 0), g);
    lin_add(out, N(p, 1), -g);
}

static void two_edge(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    emit(ctx, p->pin[0], p->pin[1], false, -1);
}

/* ---- independent sources ------------------------------------------------------ */

static void vsource_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    int f = N(p, 0), t = N(p, 1), k = p->branch;
    double rs = ls_part_opt(p, "rs", 0);
    if (c->derivative) {
        ls_sink_b(c->sink, k, 1);
        return;
    }
    branch_kcl(c->sink, f, t, k);
    branch_rise(c->sink, f, t, k);
    ls_sink_a(c->sink, k, k, rs);
    if (!c->removed)
        ls_sink_b(c->sink, k, p->value);
}

static void vsource_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    emit(ctx, p->pin[0], p->pin[1], ls_part_opt(p, "rs", 0) == 0, -1);
}

static void isource_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->removed)
        return;
    double i = c->derivative ? 1 : p->value;
    ls_sink_b(c->sink, N(p, 0), -i);
    ls_sink_b(c->sink, N(p, 1), i);
}

static void isource_current(const ls_part *p, const ls_netlist *nl, ls_lin *out, bool d, int depth)
{
    (void)nl; (void)depth;
    out->constant += d ? 1 : p->value;
}

static void no_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    (void)p; (void)ctx; (void)emit;
}

/* ---- port: a zero-volt branch whose current is the load current --------------- */

static void port_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->derivative)
        return;
    int f = N(p, 0), t = N(p, 1), k = p->branch;
    branch_kcl(c->sink, f, t, k);
    if (c->removed) {
        branch_open(c->sink, k);
        return;
    }
    ls_sink_a(c->sink, k, f, 1);
    ls_sink_a(c->sink, k, t, -1);
}

static void vdef_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    emit(ctx, p->pin[0], p->pin[1], true, -1);
}

/* ---- controlled sources ---------------------------------------------------------- */
/* Pins: 0 FROM, 1 TO, 2 cplus, 3 cminus. */

static void vcvs_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    int f = N(p, 0), t = N(p, 1), k = p->branch;
    double g = c->removed ? 0 : c->derivative ? 1 : p->value;
    if (!c->derivative) {
        branch_kcl(c->sink, f, t, k);
        branch_rise(c->sink, f, t, k);
    }
    ls_sink_a(c->sink, k, N(p, 2), -g);
    ls_sink_a(c->sink, k, N(p, 3), g);
}

static void vccs_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->removed)
        return;
    int f = N(p, 0), t = N(p, 1), cp = N(p, 2), cm = N(p, 3);
    double g = c->derivative ? 1 : p->value;
    ls_sink_a(c->sink, f, cp, g);
    ls_sink_a(c->sink, f, cm, -g);
    ls_sink_a(c->sink, t, cp, -g);
    ls_sink_a(c->sink, t, cm, g);
}

static void vccs_current(const ls_part *p, const ls_netlist *nl, ls_lin *out, bool d, int depth)
{
    (void)nl; (void)depth;
    double g = d ? 1 : p->value;
    lin_add(out, N(p, 2), g);
    lin_add(out, N(p, 3), -g);
}

static void via_lin(const ls_part *p, const ls_netlist *nl, ls_lin *out, int depth)
{
    memset(out, 0, sizeof *out);
    if (p->ref < 0 || depth > 32) {
        out->overflow = true;
        return;
    }
    const ls_part *v = &nl->parts[p->ref];
    v->kind->current(v, nl, out, false, depth + 1);
}

static void cccs_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    if (c->removed)
        return;
    ls_lin l;
    via_lin(p, c->nl, &l, 0);
    double g = c->derivative ? 1 : p->value;
    int f = N(p, 0), t = N(p, 1);
    for (int i = 0; i < l.n; i++) {
        ls_sink_a(c->sink, f, l.idx[i], g * l.coef[i]);
        ls_sink_a(c->sink, t, l.idx[i], -g * l.coef[i]);
    }
    ls_sink_b(c->sink, f, -g * l.constant);
    ls_sink_b(c->sink, t, g * l.constant);
}

static void cccs_current(const ls_part *p, const ls_netlist *nl, ls_lin *out, bool d, int depth)
{
    ls_lin l;
    via_lin(p, nl, &l, depth);
    double g = d ? 1 : p->value;
    for (int i = 0; i < l.n; i++)
        lin_add(out, l.idx[i], g * l.coef[i]);
    out->constant += g * l.constant;
    out->overflow |= l.overflow;
}

static void ccvs_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    int f = N(p, 0), t = N(p, 1), k = p->branch;
    double rm = c->removed ? 0 : c->derivative ? 1 : p->value;
    if (!c->derivative) {
        branch_kcl(c->sink, f, t, k);
        branch_rise(c->sink, f, t, k);
    }
    ls_lin l;
    via_lin(p, c->nl, &l, 0);
    for (int i = 0; i < l.n; i++)
        ls_sink_a(c->sink, k, l.idx[i], -rm * l.coef[i]);
    ls_sink_b(c->sink, k, rm * l.constant);
}

/* ---- op-amp ---------------------------------------------------------------------- */
/* Pins: 0 plus, 1 minus, 2 out.  Without gain= it is a nullor: V+ = V-, no input
 * current, and the output supplies whatever current that takes. */

static void opamp_stamp(const ls_part *p, ls_stamp_ctx *c)
{
    int pl = N(p, 0), mi = N(p, 1), out = N(p, 2), k = p->branch;
    double rin = ls_part_opt(p, "rin", 0);
    if (c->derivative) {
        if (p->has_value) {
            ls_sink_a(c->sink, k, pl, -1);
            ls_sink_a(c->sink, k, mi, 1);
        }
        return;
    }
    ls_sink_a(c->sink, out, k, -1);
    if (c->removed) {
        branch_open(c->sink, k);
        return;
    }
    if (rin > 0)
        conductance(c->sink, pl, mi, 1 / rin);
    if (p->has_value) {
        ls_sink_a(c->sink, k, out, 1);
        ls_sink_a(c->sink, k, pl, -p->value);
        ls_sink_a(c->sink, k, mi, p->value);
        ls_sink_a(c->sink, k, k, ls_part_opt(p, "rout", 0));
    } else {
        ls_sink_a(c->sink, k, pl, 1);
        ls_sink_a(c->sink, k, mi, -1);
    }
}

static void opamp_edges(const ls_part *p, void *ctx, ls_edge_fn emit)
{
    bool vdef = !p->has_value || ls_part_opt(p, "rout", 0) == 0;
    emit(ctx, 0, p->pin[2], vdef, -1);
    if (ls_part_opt(p, "rin", 0) > 0)
        emit(ctx, p->pin[0], p->pin[1], false, -1);
}

/* ---- the table ----------------------------------------------------------------- */

#define COMMON_OPTS                                              \
    {"tol", OPT_VALUE, LS_FREE, OPTF_NONNEG, -1, NULL},          \
    {"rating", OPT_VALUE, LS_WATT, OPTF_POSITIVE, -1, NULL}
#define NCOMMON 2

static const ls_kind kinds[] = {
    {.name = "resistor", .shape = SHAPE_TWO, .doc = "resistor FROM -> TO VALUE",
     .value_slot = true, .value_dims = LS_OHM, .value_flags = OPTF_REQUIRED | OPTF_POSITIVE,
     .vsign = VSIGN_DROP, .opts = {COMMON_OPTS}, .nopts = NCOMMON, .npins = 2,
     .branches = no_branch, .stamp = resistor_stamp, .current = resistor_current, .edges = two_edge},
    {.name = "voltage", .shape = SHAPE_TWO, .doc = "voltage FROM -> TO VALUE [rs=R]  (V(TO) - V(FROM) = VALUE)",
     .value_slot = true, .value_dims = LS_VOLT, .value_flags = OPTF_REQUIRED, .vsign = VSIGN_RISE,
     .opts = {COMMON_OPTS, {"rs", OPT_VALUE, LS_OHM, OPTF_NONNEG, -1, NULL}}, .nopts = NCOMMON + 1,
     .npins = 2, .branches = one_branch, .stamp = vsource_stamp, .current = current_branch,
     .edges = vsource_edges},
    {.name = "current", .shape = SHAPE_TWO, .doc = "current FROM -> TO VALUE  (VALUE flows FROM -> TO through it)",
     .value_slot = true, .value_dims = LS_AMP, .value_flags = OPTF_REQUIRED, .vsign = VSIGN_RISE,
     .opts = {COMMON_OPTS}, .nopts = NCOMMON, .npins = 2, .branches = no_branch,
     .stamp = isource_stamp, .current = isource_current, .edges = no_edges},
    {.name = "port", .shape = SHAPE_TWO, .doc = "port DRIVER -> LOAD [mode=voltage|current]",
     .vsign = VSIGN_DROP, .is_port = true,
     .opts = {COMMON_OPTS, {"mode", OPT_WORD, LS_FREE, 0, -1, "voltage|current"}}, .nopts = NCOMMON + 1,
     .npins = 2, .branches = one_branch, .stamp = port_stamp, .current = current_branch,
     .edges = vdef_edges},
    {.name = "vcvs", .shape = SHAPE_TWO, .doc = "vcvs FROM -> TO gain=G cplus=A cminus=B",
     .value_slot = true, .value_dims = LS_FREE, .vsign = VSIGN_RISE,
     .opts = {COMMON_OPTS, {"gain", OPT_VALUE, LS_FREE, OPTF_MAIN | OPTF_REQUIRED, -1, NULL},
              {"cplus", OPT_NODE, LS_FREE, OPTF_REQUIRED, 2, NULL},
              {"cminus", OPT_NODE, LS_FREE, OPTF_REQUIRED, 3, NULL}},
     .nopts = NCOMMON + 3, .npins = 4, .branches = one_branch, .stamp = vcvs_stamp,
     .current = current_branch, .edges = vdef_edges},
    {.name = "vccs", .shape = SHAPE_TWO, .doc = "vccs FROM -> TO gm=G cplus=A cminus=B",
     .value_slot = true, .value_dims = LS_SIEMENS, .vsign = VSIGN_RISE,
     .opts = {COMMON_OPTS, {"gm", OPT_VALUE, LS_SIEMENS, OPTF_MAIN | OPTF_REQUIRED, -1, NULL},
              {"cplus", OPT_NODE, LS_FREE, OPTF_REQUIRED, 2, NULL},
              {"cminus", OPT_NODE, LS_FREE, OPTF_REQUIRED, 3, NULL}},
     .nopts = NCOMMON + 3, .npins = 4, .branches = no_branch, .stamp = vccs_stamp,
     .current = vccs_current, .edges = no_edges},
    {.name = "cccs", .shape = SHAPE_TWO, .doc = "cccs FROM -> TO gain=G via=PART",
     .value_slot = true, .value_dims = LS_FREE, .vsign = VSIGN_RISE,
     .opts = {COMMON_OPTS, {"gain", OPT_VALUE, LS_FREE, OPTF_MAIN | OPTF_REQUIRED, -1, NULL},
              {"via", OPT_PART, LS_FREE, OPTF_REQUIRED, -1, NULL}},
     .nopts = NCOMMON + 2, .npins = 2, .branches = no_branch, .stamp = cccs_stamp,
     .current = cccs_current, .edges = no_edges},
    {.name = "ccvs", .shape = SHAPE_TWO, .doc = "ccvs FROM -> TO rm=R via=PART",
     .value_slot = true, .value_dims = LS_OHM, .vsign = VSIGN_RISE,
     .opts = {COMMON_OPTS, {"rm", OPT_VALUE, LS_OHM, OPTF_MAIN | OPTF_REQUIRED, -1, NULL},
              {"via", OPT_PART, LS_FREE, OPTF_REQUIRED, -1, NULL}},
     .nopts = NCOMMON + 2, .npins = 2, .branches = one_branch, .stamp = ccvs_stamp,
     .current = current_branch, .edges = vdef_edges},
    {.name = "opamp", .shape = SHAPE_PINNED, .doc = "opamp plus=A minus=B out=Y [gain=G rin=R rout=R]",
     .vsign = VSIGN_OUT, .is_opamp = true,
     .opts = {COMMON_OPTS, {"plus", OPT_NODE, LS_FREE, OPTF_REQUIRED, 0, NULL},
              {"minus", OPT_NODE, LS_FREE, OPTF_REQUIRED, 1, NULL},
              {"out", OPT_NODE, LS_FREE, OPTF_REQUIRED, 2, NULL},
              {"gain", OPT_VALUE, LS_FREE, OPTF_MAIN | OPTF_POSITIVE, -1, NULL},
              {"rin", OPT_VALUE, LS_OHM, OPTF_POSITIVE, -1, NULL},
              {"rout", OPT_VALUE, LS_OHM, OPTF_NONNEG, -1, NULL}},
     .nopts = NCOMMON + 6, .npins = 3, .branches = one_branch, .stamp = opamp_stamp,
     .current = current_branch, .edges = opamp_edges},
};

static const char *const keywords[] = {"title", "param", "ground", "include", "block",
                                       "use", "expect", "rule", "end"};

int ls_kind_count(void) { return (int)(sizeof kinds / sizeof kinds[0]); }
const ls_kind *ls_kind_at(int i) { return &kinds[i]; }

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

int ls_kind_opt(const ls_kind *k, const char *name)
{
    for (int i = 0; i < k->nopts; i++)
        if (strcmp(k->opts[i].name, name) == 0)
            return i;
    return -1;
}

int ls_edit_distance(const char *a, const char *b)
{
    size_t la = strlen(a), lb = strlen(b);
    if (la > 63 || lb > 63)
        return 99;
    int row[64];
    for (size_t j = 0; j <= lb; j++)
        row[j] = (int)j;
    for (size_t i = 1; i <= la; i++) {
        int prev = row[0];
        row[0] = (int)i;
        for (size_t j = 1; j <= lb; j++) {
            int cur = row[j];
            int sub = prev + (a[i - 1] != b[j - 1]);
            int del = row[j] + 1, ins = row[j - 1] + 1;
            row[j] = sub < del ? (sub < ins ? sub : ins) : (del < ins ? del : ins);
            prev = cur;
        }
    }
    return row[lb];
}

const char *ls_kind_suggest(const char *name)
{
    const char *best = NULL;
    int bd = 3;
    for (int i = 0; i < ls_kind_count(); i++) {
        int d = ls_edit_distance(name, kinds[i].name);
        if (d < bd) {
            bd = d;
            best = kinds[i].name;
        }
    }
    for (size_t i = 0; i < sizeof keywords / sizeof keywords[0]; i++) {
        int d = ls_edit_distance(name, keywords[i]);
        if (d < bd) {
            bd = d;
            best = keywords[i];
        }
    }
    return best;
}

void ls_part_current(const ls_part *p, const ls_netlist *nl, ls_lin *out, bool derivative)
{
    memset(out, 0, sizeof *out);
    p->kind->current(p, nl, out, derivative, 0);
}
