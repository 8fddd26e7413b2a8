/* family.h — what the kind table (kinds.c) and the family files beside it
 * (passive.c, sources.c, controlled.c, opamp.c, junction.c, ntc.c, adc.c;
 * DEVELOPERS.md "Adding a part kind") share: the stamp helpers, and the
 * functions of each family that the table names.  Only src/parts/ and the
 * tests' kind include it; the rest of the program reads a kind through its
 * table entry (parts.h).
 *
 * MNA layout: node i (1..N-1) is unknown i-1; branch currents follow.  A KCL row
 * sums the currents leaving its node.  A branch current flows through its part
 * from FROM to TO (for an op-amp: out of the output into `out`).
 *
 * The helpers are static inline so that every family's stamps inline them (a
 * grid of resistors is mostly calls of conductance). */
#ifndef LS_PARTS_FAMILY_H
#define LS_PARTS_FAMILY_H

#include "parts/parts.h"

/* ---- stamp helpers ---------------------------------------------------------- */

/* An entry that stays in the pattern even when its value is zero, so the
 * matrix keeps one structure while limits switch and the symbolic analysis
 * is reused.  (The adjoint sink needs no zeros.) */
static inline void keep_a(ls_sink *s, int row, int col, double v)
{
    if (row < 0 || col < 0)
        return;
    if (v != 0 || (s->mode != SINK_ASSEMBLE && s->mode != SINK_COLUMNS)) { /* only assembly keeps zeros */
        ls_sink_a(s, row, col, v);
        return;
    }
    double scale = s->scale;
    s->scale = 1; /* a plain +0 whatever the scale (-1 * 0 would be -0) */
    ls_sink_put(s, row, col, 0);
    s->scale = scale;
}

/* The unknown of a part's pin i. */
#define N(p, i) ls_node_unknown((p)->pin[i])

/* A conductance g (S) between unknowns a and b (either < 0: ground). */
static inline void conductance(ls_sink *s, int a, int b, double g)
{
    ls_sink_a(s, a, a, g);
    ls_sink_a(s, b, b, g);
    ls_sink_a(s, a, b, -g);
    ls_sink_a(s, b, a, -g);
}

/* KCL entries of a branch current k flowing FROM -> TO through the part. */
static inline void branch_kcl(ls_sink *s, int from, int to, int k)
{
    ls_sink_a(s, from, k, 1);
    ls_sink_a(s, to, k, -1);
}

/* The branch row of an opened branch: I_k = 0.  Its KCL column entries are
 * kept; they multiply a zero current. */
static inline void branch_open(ls_sink *s, int k)
{
    ls_sink_a(s, k, k, 1);
}

/* Row k: V(to) - V(from) (the rise the branch forces). */
static inline void branch_rise(ls_sink *s, int from, int to, int k)
{
    ls_sink_a(s, k, to, 1);
    ls_sink_a(s, k, from, -1);
}

/* Scale of a source's value while the sources are ramped up. */
static inline double src_scale(const ls_part *p, const ls_run *run)
{
    return 1 - ls_run_state(run, p)->src_cut;
}

/* Adds c times unknown idx to a current's linear form (idx < 0: ground, dropped). */
static inline void lin_add(ls_lin *l, int idx, double c)
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

/* Unknown idx of x, or 0 V for ground (idx < 0). */
static inline double xval(const double *x, int idx)
{
    return idx >= 0 ? x[idx] : 0;
}

/* ---- the functions the table names, by family file ------------------------------ */

/* passive.c: resistor, port, pot, switch */
void ls_resistor_stamp(const ls_part *p, ls_stamp_ctx *c);
void ls_resistor_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth);
int ls_resistor_monotone(const ls_part *p);
void ls_port_stamp(const ls_part *p, ls_stamp_ctx *c);
void ls_pot_stamp(const ls_part *p, ls_stamp_ctx *c);
void ls_pot_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth);
void ls_pot_results(const ls_part *p, const ls_run *run, const double *x, const double *v, double out[3]);
void ls_pot_edges(const ls_part *p, void *ctx, ls_edge_fn emit);
void ls_switch_stamp(const ls_part *p, ls_stamp_ctx *c);
void ls_switch_edges(const ls_part *p, void *ctx, ls_edge_fn emit);

/* sources.c: voltage, current */
void ls_vsource_stamp(const ls_part *p, ls_stamp_ctx *c);
int ls_vsource_monotone(const ls_part *p);
int ls_isource_monotone(const ls_part *p);
void ls_vsource_edges(const ls_part *p, void *ctx, ls_edge_fn emit);
void ls_isource_stamp(const ls_part *p, ls_stamp_ctx *c);
void ls_isource_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth);

/* controlled.c: vcvs, vccs, cccs, ccvs */
void ls_vcvs_stamp(const ls_part *p, ls_stamp_ctx *c);
void ls_vccs_stamp(const ls_part *p, ls_stamp_ctx *c);
void ls_vccs_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth);
void ls_cccs_stamp(const ls_part *p, ls_stamp_ctx *c);
void ls_cccs_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth);
void ls_ccvs_stamp(const ls_part *p, ls_stamp_ctx *c);

/* opamp.c: opamp */
void ls_opamp_stamp(const ls_part *p, ls_stamp_ctx *c);
void ls_opamp_edges(const ls_part *p, void *ctx, ls_edge_fn emit);
bool ls_opamp_other_pins(const ls_part *p);
double ls_opamp_pin_power(const ls_part *p, const ls_run *run, const double *v, double current);

/* junction.c: diode, led, zener */
int ls_junction_branches(const ls_part *p);
void ls_junction_stamp(const ls_part *p, ls_stamp_ctx *c);
void ls_junction_lin(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth);
void ls_junction_edges(const ls_part *p, void *ctx, ls_edge_fn emit);
void ls_junction_init(const ls_part *p, ls_run *run);
bool ls_junction_update(const ls_part *p, ls_run *run, const double *x);

/* ntc.c: ntc */
void ls_ntc_stamp(const ls_part *p, ls_stamp_ctx *c);
void ls_ntc_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth);
bool ls_ntc_nonlinear(const ls_part *p);
void ls_ntc_init(const ls_part *p, ls_run *run);
bool ls_ntc_update(const ls_part *p, ls_run *run, const double *x);

/* adc.c: adc */
void ls_adc_stamp(const ls_part *p, ls_stamp_ctx *c);
void ls_adc_current(const ls_part *p, const ls_run *run, ls_lin *out, bool d, int depth);
void ls_adc_results(const ls_part *p, const ls_run *run, const double *x, const double *v, double out[3]);
void ls_adc_edges(const ls_part *p, void *ctx, ls_edge_fn emit);

#ifdef LS_TEST_KINDS
/* tests/house/testsink_kind.c: a current sink with a compliance limit, built
 * only into the test program loadstack_toy (tests/house/meson.build). */
int ls_testsink_branches(const ls_part *p);
void ls_testsink_stamp(const ls_part *p, ls_stamp_ctx *c);
void ls_testsink_current(const ls_part *p, const ls_run *run, ls_lin *out, bool derivative, int depth);
void ls_testsink_edges(const ls_part *p, void *ctx, ls_edge_fn emit);
bool ls_testsink_nonlinear(const ls_part *p);
void ls_testsink_init(const ls_part *p, ls_run *run);
bool ls_testsink_update(const ls_part *p, ls_run *run, const double *x);
#endif

#endif
