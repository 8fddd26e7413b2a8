/* sens.c — adjoint sensitivities.
 *
 * For A x = b and a quantity Q = c^T x (+ explicit terms), with lambda = A^-T c,
 *     dQ/dp = lambda^T (db/dp - dA/dp x) + dQ/dp|explicit.
 * Each part's derivative stamp (the part table's stamp in derivative mode) is
 * accumulated straight into lambda^T (db - dA x) by an adjoint sink.  Products,
 * quotients and functions of leaves are differentiated by forward-mode dual
 * numbers over the parts. */
#include "analysis/sens.h"
#include "analysis/newton.h"

#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "elab/elab.h"
#include "analysis/lowrank.h"
#include "analysis/quantity.h"
#include "solve/amg.h"

/* The error of a gradient that ran out of memory (compared by address:
 * ls_sens then returns LS_SENS_NOMEM, which a caller must not take for a
 * quantity without derivatives). */
static const char nomem_error[] = "out of memory";

typedef struct ctx {
    ls_op *op;
    int np;
    const char *error;
    /* The current-controlled sources reading each part's current, built once
     * per analysis so that via_terms costs the readers of one part, not a scan
     * of the table: readers of part m are via_list[via_start[m] .. via_start[m+1]),
     * in ascending part order (the order of the scan they replace, so sums are
     * bit for bit the same).  NULL when no part has a via= reader. */
    int *via_start, *via_list;
} ctx;

typedef struct dual {
    double v;
    double *g;             /* np entries */
} dual;

/* Does the part have a main value to differentiate by (ports have none)? */
static bool has_main(const ls_part *p)
{
    return p->has_value && !p->kind->is_port;
}

/* Does the part's stamp read the current of its via= part (its kind's via_use)? */
static bool reads_via(const ls_part *p)
{
    return p->ref >= 0 && p->kind->via_use != LS_VIA_NONE;
}

/* Builds c->via_start / c->via_list (see ctx) by a counting sort over the
 * readers' via= parts: O(parts).  Returns false when out of memory; both stay
 * NULL when no part is read (the common case costs one pass and no memory). */
static bool index_via(ctx *c)
{
    const ls_netlist *nl = c->op->nl;
    int readers = 0;
    for (int j = 0; j < nl->nparts; j++)
        readers += reads_via(&nl->parts[j]);
    if (readers == 0)
        return true;
    c->via_start = calloc((size_t)nl->nparts + 1, sizeof *c->via_start);
    c->via_list = malloc((size_t)readers * sizeof *c->via_list);
    if (!c->via_start || !c->via_list)
        return false;
    for (int j = 0; j < nl->nparts; j++)
        if (reads_via(&nl->parts[j]))
            c->via_start[nl->parts[j].ref + 1]++;
    for (int m = 0; m < nl->nparts; m++)
        c->via_start[m + 1] += c->via_start[m];
    int *fill = malloc((size_t)nl->nparts * sizeof *fill);
    if (!fill)
        return false;
    memcpy(fill, c->via_start, (size_t)nl->nparts * sizeof *fill);
    for (int j = 0; j < nl->nparts; j++) /* ascending j: each list stays sorted */
        if (reads_via(&nl->parts[j]))
            c->via_list[fill[nl->parts[j].ref]++] = j;
    free(fill);
    return true;
}

/* The stamps of a part that reads its via= part's current change with that
 * part's value too (a resistor's current is V/R), as its kind's via_use says:
 * returns lambda^T (db - dA x) of those stamps for d/d(value of part m). */
static double via_terms(ctx *c, int m, const double *lambda, const double *x)
{
    if (!c->via_start || c->via_start[m] == c->via_start[m + 1])
        return 0;
    const ls_netlist *nl = c->op->nl;
    double acc = 0;
    ls_lin dl;
    ls_part_current(&nl->parts[m], &c->op->run, &dl, true);
    if (dl.n == 0 && dl.constant == 0)
        return 0;
    for (int v = c->via_start[m]; v < c->via_start[m + 1]; v++) {
        const ls_part *p = &nl->parts[c->via_list[v]];
        bool cccs = p->kind->via_use == LS_VIA_CURRENT;
        /* current lin: rows f, t get +-gain * coef (LS_VIA_CURRENT); row k gets -rm * coef (LS_VIA_VOLTAGE) */
        int rows[2] = {cccs ? ls_node_unknown(p->pin[0]) : p->branch, cccs ? ls_node_unknown(p->pin[1]) : -1};
        double w[2] = {cccs ? ls_run_value(&c->op->run, p) : -ls_run_value(&c->op->run, p), cccs ? -ls_run_value(&c->op->run, p) : 0};
        for (int r = 0; r < 2; r++) {
            if (rows[r] < 0)
                continue;
            double ax = 0;
            for (int i = 0; i < dl.n; i++)
                ax += w[r] * dl.coef[i] * x[dl.idx[i]];
            /* the constant part sits on the right-hand side with the opposite sign */
            acc -= lambda[rows[r]] * (ax + w[r] * dl.constant);
        }
    }
    return acc;
}

/* g[m] = lambda^T (db_m - dA_m x) for every part m (0 for parts without a
 * main value), at the solution x. */
static void adjoint_all(ctx *c, const double *lambda, const double *x, double *g)
{
    const ls_netlist *nl = c->op->nl;
    ls_sink s = {.mode = SINK_ADJOINT, .lambda = lambda, .x = x, .scale = 1};
    for (int m = 0; m < nl->nparts; m++) {
        const ls_part *p = &nl->parts[m];
        if (!has_main(p)) {
            g[m] = 0;
            continue;
        }
        s.acc = 0;
        ls_stamp_ctx sc = {.nl = nl, .run = &c->op->run, .sink = &s, .derivative = true};
        p->kind->stamp(p, &sc);
        g[m] = s.acc + via_terms(c, m, lambda, x);
    }
}

/* Gradient of the linear functional sum coef_i x_idx_i. */
static bool linear_leaf(ctx *c, const ls_lin *l, double *g)
{
    int n = c->op->mna.n;
    double *lam = calloc((size_t)(n ? n : 1), sizeof *lam);
    if (!lam)
        return false;
    for (int i = 0; i < l->n; i++)
        lam[l->idx[i]] += l->coef[i];
    bool ok = ls_op_solve_vec(c->op, lam, 1) == LS_SOLVER_OK;
    if (ok)
        adjoint_all(c, lam, c->op->x, g);
    free(lam);
    return ok;
}

static bool alloc_dual(ctx *c, dual *d);

/* ---- port fields: adjoints of the modified systems (lowrank.c) ----------------------------- */

/* Gradient of unknown idx of the modified system m at its solution x':
 * lambda' = A'^-T e_idx, g = lambda'^T (db_p - dA_p x').  The opened port's
 * own stamps have no derivative, so dA'_p = dA_p. */
static bool mod_value_grad(ctx *c, ls_mod *m, int idx, double *g)
{
    int n = c->op->mna.n;
    double *lam = calloc((size_t)(n ? n : 1), sizeof *lam);
    if (!lam)
        return false;
    lam[idx] = 1;
    bool ok = ls_mod_solve_t(m, lam) == LS_SOLVER_OK;
    if (ok)
        adjoint_all(c, lam, ls_mod_x(m), g);
    free(lam);
    return ok;
}

/* g = -u^T dA_p v for every parameter p, from the adjoint sink (which adds
 * u^T db_p; a second pass at x = 0 takes it out).  False when out of memory. */
static bool z_grad_from(ctx *c, const double *u, const double *v, double *g)
{
    int n = c->op->mna.n, np = c->np;
    double *zero = calloc((size_t)(n ? n : 1), sizeof *zero);
    double *gb = calloc((size_t)(np ? np : 1), sizeof *gb);
    bool ok = zero && gb;
    if (ok) {
        adjoint_all(c, u, v, g);
        adjoint_all(c, u, zero, gb);
        for (int k = 0; k < np; k++)
            g[k] -= gb[k];
    }
    free(zero);
    free(gb);
    return ok;
}

/* Gradient of the driving-point resistance z = e^T A'^-1 e at unknown idx:
 * dz/dp = -u^T dA_p v with u = A'^-T e, v = A'^-1 e.  The adjoint sink also
 * adds u^T db_p, so that part is taken out by a second pass at x = 0. */
static bool mod_z_grad(ctx *c, ls_mod *m, int idx, double *g)
{
    int n = c->op->mna.n;
    double *u = calloc((size_t)(n ? n : 1), sizeof *u);
    double *v = calloc((size_t)(n ? n : 1), sizeof *v);
    bool ok = u && v;
    if (ok) {
        u[idx] = v[idx] = 1;
        ok = ls_mod_solve_t(m, u) == LS_SOLVER_OK && ls_mod_solve(m, v) == LS_SOLVER_OK;
    }
    ok = ok && z_grad_from(c, u, v, g);
    free(u);
    free(v);
    return ok;
}

static bool leaf_node(ctx *c, int node, dual *out);

/* Gradient of open for a port whose load side is held at its loaded voltage
 * v_t: the held system's own adjoint (the hold fixed) plus the hold's share,
 * d open/d b_k times d b_k/dp, where the hold row's right-hand side is
 * b_k = -v_t and d open/d b_k = (A'^-T e_f)_k. */
static bool held_open_grad(ctx *c, ls_mod *m, int j, double *g)
{
    const ls_part *p = &c->op->nl->parts[j];
    int n = c->op->mna.n, f = ls_node_unknown(p->pin[0]);
    double *lam = calloc((size_t)(n ? n : 1), sizeof *lam);
    dual vt = {0};
    bool ok = lam && alloc_dual(c, &vt) && mod_value_grad(c, m, f, g);
    if (ok) {
        lam[f] = 1;
        ok = ls_mod_solve_t(m, lam) == LS_SOLVER_OK && leaf_node(c, p->pin[1], &vt);
    }
    if (ok)
        for (int k = 0; k < c->np; k++)
            g[k] -= lam[p->branch] * vt.g[k];
    free(lam);
    free(vt.g);
    return ok;
}

/* Every derivative undefined. */
static void fill_nan(ctx *c, double *g)
{
    for (int k = 0; k < c->np; k++)
        g[k] = NAN;
}

typedef enum piece { PIECE_OPEN, PIECE_ZOUT, PIECE_ZIN } piece;

/* One field of port j (value as the port report has it) with its gradient.
 * A field with no finite value gets NaN derivatives. */
static bool port_piece(ctx *c, int j, piece what, dual *out)
{
    const ls_part *p = &c->op->nl->parts[j];
    const ls_port_result *pr = ls_op_port(c->op, j);
    if (!pr) {
        c->error = nomem_error;
        return false;
    }
    out->v = what == PIECE_OPEN ? pr->open : what == PIECE_ZOUT ? pr->zout : pr->zin;
    if (!isfinite(out->v)) {
        fill_nan(c, out->g);
        return true;
    }
    int node = what == PIECE_ZIN ? p->pin[1] : p->pin[0];
    if (what != PIECE_OPEN && node == 0) {
        memset(out->g, 0, (size_t)c->np * sizeof *out->g);
        return true;
    }
    bool shorted = what == PIECE_OPEN && pr->current_mode;
    ls_mod *m = ls_mod_new(c->op, j, shorted ? MOD_SHORT_PORT_TO_GROUND
                                   : pr->load_held ? MOD_HOLD_PORT_LOAD : MOD_REMOVE_PART);
    if (!m) {
        c->error = nomem_error;
        return false;
    }
    bool ok = true;
    if (ls_mod_singular(m))
        fill_nan(c, out->g);
    else if (what == PIECE_OPEN && node == 0 && !shorted)
        memset(out->g, 0, (size_t)c->np * sizeof *out->g);
    else if (what == PIECE_OPEN && pr->load_held)
        ok = held_open_grad(c, m, j, out->g);
    else if (what == PIECE_OPEN)
        ok = mod_value_grad(c, m, shorted ? p->branch : ls_node_unknown(node), out->g);
    else
        ok = mod_z_grad(c, m, ls_node_unknown(node), out->g);
    ls_mod_free(&m);
    if (!ok)
        c->error = "a solve of the opened-port system failed";
    return ok;
}

/* The loaded value of port j: V(driver), or the port current in current mode. */
static bool leaf_current(ctx *c, int j, dual *out);
static bool leaf_node(ctx *c, int node, dual *out);

/* loaded of port j with its gradient. */
static bool port_loaded(ctx *c, int j, dual *out)
{
    const ls_part *p = &c->op->nl->parts[j];
    if (ls_part_opt_in(&c->op->run, p, "mode", 0) == 1)
        return leaf_current(c, j, out);
    return leaf_node(c, p->pin[0], out);
}

/* Gradient of a / b into a's (the value is set by the caller). */
static void dual_quotient(ctx *c, dual *a, const dual *b)
{
    for (int k = 0; k < c->np; k++)
        a->g[k] = (a->g[k] * b->v - a->v * b->g[k]) / (b->v * b->v);
}

/* open, sag, sag_rel, zout, zin, ratio of port j; the value is the report's. */
static bool port_field(ctx *c, int j, ls_prop prop, dual *out)
{
    const ls_port_result *pr = ls_op_port(c->op, j);
    if (!pr) {
        c->error = nomem_error;
        return false;
    }
    dual b = {0};
    if (!alloc_dual(c, &b))
        return false;
    bool ok = true;
    switch (prop) {
    case PROP_OPEN: ok = port_piece(c, j, PIECE_OPEN, out); break;
    case PROP_ZOUT: ok = port_piece(c, j, PIECE_ZOUT, out); break;
    case PROP_ZIN: ok = port_piece(c, j, PIECE_ZIN, out); break;
    case PROP_SAG:
    case PROP_SAG_REL:
        /* sag = open - loaded; sag_rel = sag / open */
        ok = port_piece(c, j, PIECE_OPEN, out) && port_loaded(c, j, &b);
        if (ok) {
            double open = out->v;
            for (int k = 0; k < c->np; k++) {
                double dopen = out->g[k], dsag = dopen - b.g[k];
                out->g[k] = prop == PROP_SAG ? dsag : (dsag * open - pr->sag * dopen) / (open * open);
            }
        }
        out->v = prop == PROP_SAG ? pr->sag : pr->sag_rel;
        break;
    case PROP_RATIO: {
        bool cur = pr->current_mode;
        ok = port_piece(c, j, cur ? PIECE_ZOUT : PIECE_ZIN, out) && port_piece(c, j, cur ? PIECE_ZIN : PIECE_ZOUT, &b);
        if (ok)
            dual_quotient(c, out, &b);
        out->v = pr->ratio;
        break;
    }
    default:
        break;
    }
    if (ok && !isfinite(out->v))
        fill_nan(c, out->g);
    free(b.g);
    return ok;
}

/* d(current of part j)/d(main value of m) with x held fixed. */
static double explicit_current(ctx *c, int j, int m, int depth)
{
    const ls_netlist *nl = c->op->nl;
    const ls_part *p = &nl->parts[j];
    double d = 0;
    if (depth > 32)
        return 0;
    if (j == m) {
        ls_lin l;
        ls_part_current(p, &c->op->run, &l, true);
        d += ls_lin_eval(&l, c->op->x);
    }
    if (p->kind->via_use == LS_VIA_CURRENT && p->ref >= 0)   /* its current is VALUE x I(via) */
        d += ls_run_value(&c->op->run, p) * explicit_current(c, p->ref, m, depth + 1);
    return d;
}

/* V(node) with its gradient (one transposed solve). */
static bool leaf_node(ctx *c, int node, dual *out)
{
    out->v = c->op->v[node];
    memset(out->g, 0, (size_t)c->np * sizeof *out->g);
    if (node == 0)
        return true;
    ls_lin l = {.n = 1, .idx = {node - 1}, .coef = {1}};
    return linear_leaf(c, &l, out->g);
}

/* The current of part j with its gradient: the adjoint of its linear form
 * plus its explicit dependence on part values. */
static bool leaf_current(ctx *c, int j, dual *out)
{
    const ls_netlist *nl = c->op->nl;
    ls_lin l;
    ls_part_current(&nl->parts[j], &c->op->run, &l, false);
    out->v = c->op->ipart[j];
    if (l.overflow) {
        c->error = "the current depends on too many unknowns for the sensitivity analysis";
        return false;
    }
    if (!linear_leaf(c, &l, out->g))
        return false;
    for (int m = 0; m < nl->nparts; m++)
        if (has_main(&nl->parts[m]))
            out->g[m] += explicit_current(c, j, m, 0);
    return true;
}

/* A part's voltage as its kind reads it (ls_part_vnodes), with its gradient. */
static bool leaf_voltage(ctx *c, int j, dual *out)
{
    const ls_part *p = &c->op->nl->parts[j];
    int plus, minus;
    ls_part_vnodes(p, &plus, &minus);
    ls_lin l = {0};
    if (plus > 0) {
        l.idx[l.n] = plus - 1;
        l.coef[l.n++] = 1;
    }
    if (minus > 0) {
        l.idx[l.n] = minus - 1;
        l.coef[l.n++] = -1;
    }
    out->v = c->op->v[plus] - c->op->v[minus];
    return linear_leaf(c, &l, out->g);
}

/* A dual number with np zeroed derivatives; caller frees d->g. */
static bool alloc_dual(ctx *c, dual *d)
{
    d->g = calloc((size_t)(c->np ? c->np : 1), sizeof *d->g);
    if (!d->g)
        c->error = nomem_error;
    return d->g != NULL;
}

static bool eval(ctx *c, const ls_q *q, dual *out);

/* A thermistor's resistance or temperature with its gradient.  Without
 * self-heating the body sits at celsius=, so the temperature is fixed and
 * R = r25 exp(B (1/T - 1/T25)) is proportional to r25 (its main value). */
static bool ntc_prop(ctx *c, int j, ls_prop prop, dual *out)
{
    const ls_part *p = &c->op->nl->parts[j];
    double t = ls_ntc_body(p, &c->op->run);
    if (ls_part_has(p, ls_kind_opt(p->kind, "dissipation"))) {
        c->error = "a self-heating thermistor's resistance and temperature have no adjoint here; use tol or sweep";
        return false;
    }
    memset(out->g, 0, (size_t)c->np * sizeof *out->g);
    out->v = prop == PROP_TEMPERATURE ? t : ls_ntc_r(p, &c->op->run, t);
    if (prop == PROP_RESISTANCE)
        out->g[j] = out->v / ls_run_value(&c->op->run, p);
    return true;
}

static bool port_field(ctx *c, int j, ls_prop prop, dual *out);

/* The driving-point resistance zd = e^T A^-1 e at unknown idx of the base
 * system with its gradient: dz/dp = -u^T dA_p v, u = A^-T e, v = A^-1 e (the
 * adjoint sink's u^T db_p taken out by a second pass at x = 0). */
static bool base_z_grad(ctx *c, int idx, double *z, double *g)
{
    int n = c->op->mna.n;
    double *u = calloc((size_t)(n ? n : 1), sizeof *u), *v = calloc((size_t)(n ? n : 1), sizeof *v);
    bool ok = u && v;
    if (ok) {
        u[idx] = v[idx] = 1;
        ok = ls_op_solve_vec(c->op, u, 1) == LS_SOLVER_OK && ls_op_solve_vec(c->op, v, 0) == LS_SOLVER_OK;
    }
    if (ok)
        *z = v[idx];
    ok = ok && z_grad_from(c, u, v, g);
    free(u);
    free(v);
    return ok;
}

/* An adc's error_lsb, unloaded or source with its gradient (newton.c's
 * ls_op_adc differentiated): with zd the driving-point resistance at the
 * input, rth = 1/(1/zd - 1/rin), iload = vin/rin + leak,
 * unloaded = vin + iload rth, error_lsb = -iload rth / lsb; rin, leak and the
 * LSB are options, not main values, so they are constants here. */
static bool adc_prop(ctx *c, int j, ls_prop prop, dual *out)
{
    const ls_part *p = &c->op->nl->parts[j];
    ls_adc_result a;
    dual vin = {0}, zd = {0};
    if (ls_op_adc(c->op, j, &a) != 0 || p->pin[0] <= 0) {
        c->error = "not an adc input";
        return false;
    }
    bool ok = alloc_dual(c, &vin) && alloc_dual(c, &zd) && leaf_node(c, p->pin[0], &vin) &&
              base_z_grad(c, ls_node_unknown(p->pin[0]), &zd.v, zd.g);
    if (ok) {
        double rin = ls_part_opt_in(&c->op->run, p, "rin", 0), rth = a.rth, iload = a.vin * (rin > 0 ? 1 / rin : 0) +
                                                                  ls_part_opt_in(&c->op->run, p, "leak", 0);
        double k = rin > 0 ? rth * rth / (zd.v * zd.v) : 1;    /* d rth / d zd */
        out->v = prop == PROP_SOURCE ? a.rth : prop == PROP_UNLOADED ? a.v_open : a.error_lsb;
        for (int m = 0; m < c->np; m++) {
            double drth = k * zd.g[m], dvin = vin.g[m], dil = rin > 0 ? dvin / rin : 0;
            out->g[m] = prop == PROP_SOURCE ? drth
                      : prop == PROP_UNLOADED ? dvin + dil * rth + iload * drth
                      : -(dil * rth + iload * drth) / a.lsb;
        }
        if (!isfinite(out->v) || !isfinite(rth))
            fill_nan(c, out->g);
    } else if (!c->error) {
        c->error = "a solve for the adc's source resistance failed";
    }
    free(vin.g);
    free(zd.g);
    return ok;
}

/* A port's budget with its gradient: a fraction of open moves with open,
 * volts, amperes and LSB are fixed. */
static bool port_budget_dual(ctx *c, int j, dual *out)
{
    const ls_netlist *nl = c->op->nl;
    const ls_part *p = &nl->parts[j];
    const ls_port_result *pr = ls_op_port(c->op, j);
    if (!pr) {
        c->error = nomem_error;
        return false;
    }
    int bi = ls_kind_opt(p->kind, "budget");
    const ls_budget *b = pr->budget_from == LS_BUDGET_FROM_PORT ? &nl->budgets[(int)p->opt[bi]]
                       : pr->budget_from == LS_BUDGET_FROM_RULE ? &nl->rule_sag : NULL;
    memset(out->g, 0, (size_t)c->np * sizeof *out->g);
    if (b && b->unit == LS_BUDGET_FRACTION && isfinite(pr->budget)) {
        if (!port_field(c, j, PROP_OPEN, out))
            return false;
        double sgn = pr->open < 0 ? -1 : 1;
        for (int k = 0; k < c->np; k++)
            out->g[k] *= sgn * (b == &nl->rule_sag ? b->value : ls_run_budget(&c->op->run, (int)p->opt[bi]));
    }
    out->v = pr->budget;
    if (!isfinite(out->v))
        fill_nan(c, out->g);
    return true;
}

/* A property leaf (PART.current, PORT.zout, ...) with its gradient. */
static bool eval_prop(ctx *c, const ls_q *q, dual *out)
{
    const ls_part *p = &c->op->nl->parts[q->index];
    switch (q->prop) {
    case PROP_CURRENT:
        return leaf_current(c, q->index, out);
    case PROP_VOLTAGE:
        return leaf_voltage(c, q->index, out);
    case PROP_POWER: {
        /* absorbed: the voltage times the current, signed as the kind reads its voltage */
        int sign = ls_part_power_sign(p);
        if (sign == 0) {
            c->error = "this part's power is not its voltage times its current (a track's: both segments; an "
                       "op-amp's: its inputs and supply rails too), so it "
                       "has no derivative here; ask for the influence on its nodes or its current instead";
            return false;
        }
        dual i = {0};
        if (!alloc_dual(c, &i))
            return false;
        bool ok = leaf_voltage(c, q->index, out) && leaf_current(c, q->index, &i);
        if (ok) {
            out->v *= sign;
            for (int m = 0; m < c->np; m++)
                out->g[m] = sign * out->g[m] * i.v + out->v * i.g[m];
        }
        out->v *= i.v;
        free(i.g);
        return ok;
    }
    case PROP_LOADED:
        return port_loaded(c, q->index, out);
    case PROP_VALUE:
        /* d(value of j)/d(value of m) is 1 for m = j */
        memset(out->g, 0, (size_t)c->np * sizeof *out->g);
        out->v = ls_run_value(&c->op->run, p);
        if (has_main(p))
            out->g[q->index] = 1;
        return true;
    case PROP_RESISTANCE:
    case PROP_TEMPERATURE:
        return ntc_prop(c, q->index, q->prop, out);
    case PROP_BUDGET:
        return port_budget_dual(c, q->index, out);
    case PROP_CODE:
        c->error = "an adc's code is a whole number, which no part moves smoothly; ask for the influence on its "
                   "input node (or error_lsb) instead";
        return false;
    case PROP_ERROR_LSB:
    case PROP_UNLOADED:
    case PROP_SOURCE:
        return adc_prop(c, q->index, q->prop, out);
    default:
        if (!p->kind->is_port) {
            c->error = "only a port has open, sag, zout, zin and ratio fields";
            return false;
        }
        return port_field(c, q->index, q->prop, out);
    }
}

/* ---- the dual-number domain of ls_q_walk: a value with its gradient ---------------------- */
/* Every operation returns 0, or 1 with c->error saying why (NULL: the
 * analysis failed with nothing more to say). */

static int dd_init(void *cv, void *v)
{
    return alloc_dual(cv, v) ? 0 : 1;
}

static void dd_clear(void *cv, void *v)
{
    (void)cv;
    free(((dual *)v)->g);
}

/* A function other than min and max of more than one argument has no
 * derivative rule here (the elaborator allows none). */
static int dd_accepts(void *cv, const ls_q *q)
{
    (void)cv;
    return q->kind == Q_CALL && q->nargs != 1 && q->op != F_MIN && q->op != F_MAX;
}

static int dd_const(void *cv, const ls_q *q, void *o)
{
    ctx *c = cv;
    dual *out = o;
    out->v = ls_run_qconst(&c->op->run, q);
    memset(out->g, 0, (size_t)c->np * sizeof *out->g);
    return 0;
}

static int dd_node(void *cv, const ls_q *q, void *o)
{
    return leaf_node(cv, q->index, o) ? 0 : 1;
}

static int dd_prop(void *cv, const ls_q *q, void *o)
{
    return eval_prop(cv, q, o) ? 0 : 1;
}

static int dd_neg(void *cv, const ls_q *q, void *o)
{
    ctx *c = cv;
    dual *out = o;
    (void)q;
    out->v = -out->v;
    for (int m = 0; m < c->np; m++)
        out->g[m] = -out->g[m];
    return 0;
}

static int dd_binop(void *cv, const ls_q *q, void *o, const void *bv)
{
    ctx *c = cv;
    dual *out = o;
    const dual *b = bv;
    double x = out->v, y = b->v, v = ls_apply_op(q->op, x, y);
    for (int m = 0; m < c->np; m++) {
        double dx = out->g[m], dy = b->g[m];
        switch (q->op) {
        case LS_OP_ADD: out->g[m] = dx + dy; break;
        case LS_OP_SUB: out->g[m] = dx - dy; break;
        case LS_OP_MUL: out->g[m] = dx * y + x * dy; break;
        case LS_OP_DIV: out->g[m] = (dx * y - x * dy) / (y * y); break;
        case LS_OP_PAR: out->g[m] = (dx * y * y + dy * x * x) / ((x + y) * (x + y)); break;
        case LS_OP_POW: out->g[m] = v * (dy * log(x) + y * dx / x); break;
        }
        if (q->op == LS_OP_POW && dy == 0)
            out->g[m] = y * pow(x, y - 1) * dx;
    }
    out->v = v;
    return 0;
}

/* One argument's functions by the chain rule; min and max take the
 * gradient of the argument they pick (the last one equal to the value). */
static int dd_call(void *cv, const ls_q *q, void *const *argv, void *o)
{
    ctx *c = cv;
    dual *out = o;
    const dual *const *args = (const dual *const *)argv;
    int n = q->nargs;
    double vals[LS_Q_MAX_ARGS] = {0};
    for (int i = 0; i < n; i++)
        vals[i] = args[i]->v;
    double v = ls_apply_func(q->op, vals, n), x = args[0]->v;
    int pick = 0;
    for (int i = 0; i < n; i++)
        if (vals[i] == v)
            pick = i;
    for (int m = 0; m < c->np; m++) {
        double dx = args[0]->g[m];
        switch (q->op) {
        case F_SQRT: out->g[m] = dx / (2 * v); break;
        case F_ABS: out->g[m] = x < 0 ? -dx : dx; break;
        case F_EXP: out->g[m] = v * dx; break;
        case F_LN: out->g[m] = dx / x; break;
        case F_LOG10: out->g[m] = dx / (x * log(10.0)); break;
        default: out->g[m] = args[pick]->g[m]; break;
        }
    }
    out->v = v;
    return 0;
}

static const ls_qdomain dual_domain = {
    .size = sizeof(dual), .init = dd_init, .clear = dd_clear, .accepts = dd_accepts,
    .constant = dd_const, .node = dd_node, .prop = dd_prop,
    .neg = dd_neg, .binop = dd_binop, .call = dd_call,
};

/* Q with its gradient by forward-mode dual numbers over the parts (out
 * allocated by the caller). */
static bool eval(ctx *c, const ls_q *q, dual *out)
{
    return ls_q_walk(&dual_domain, c, q, out) == 0;
}

/* Frees the via index of index_via (NULL-safe). */
static void free_via(ctx *c)
{
    free(c->via_start);
    free(c->via_list);
    c->via_start = c->via_list = NULL;
}

/* A contribution |p dQ/dp| at most this share of the largest one (or of |Q|)
 * is rounding, not a finding, after a direct solve: 64 units of rounding. */
#define LS_SENS_ROUNDING (64 * DBL_EPSILON)

/* qsort order: largest |normalized| (|derivative| when undefined) first. */
static int by_norm(const void *a, const void *b)
{
    const ls_sens_item *x = a, *y = b;
    double ax = isnan(x->normalized) ? fabs(x->derivative) : fabs(x->normalized);
    double ay = isnan(y->normalized) ? fabs(y->derivative) : fabs(y->normalized);
    if (ax != ay)
        return ax < ay ? 1 : -1;
    return x->part - y->part;
}

/* The iterative solver's adjoint solves stop at a relative residual of
 * LS_AMG_RTOL, so a derivative whose contribution |p dQ/dp| is below that
 * share of the largest one (or of |Q|) is noise of the stopping rule (where
 * the exact answer is 0 it comes out near 1e-26), not a finding: it is
 * reported as exactly 0 (docs/iterative.md).  The direct solvers' adjoint
 * solves are exact but for rounding: there a contribution within
 * LS_SENS_ROUNDING of the largest one (or of |Q|) is the rounding of a
 * derivative that is 0 (a part behind an ideal source or a buffer comes out
 * near 1e-34 V, with digits that follow the machine's BLAS kernels), and is
 * reported as exactly 0 too (docs/loading.md). */
static void zero_below(ls_sens_item *it, int k, double q, double rel)
{
    double scale = fabs(q);
    for (int i = 0; i < k; i++)
        if (fabs(it[i].nominal * it[i].derivative) > scale)
            scale = fabs(it[i].nominal * it[i].derivative);
    for (int i = 0; i < k; i++)
        /* a part whose value is 0 (a 0 V source) has no contribution to
         * judge its derivative by: kept as solved */
        if (it[i].derivative != 0 && it[i].nominal != 0
            && fabs(it[i].nominal * it[i].derivative) <= rel * scale) {
            it[i].derivative = 0;
            it[i].normalized = q != 0 ? 0 : NAN;
        }
}

/* An item with its sort key rounded to 7 significant digits. */
typedef struct keyed {
    double key;
    ls_sens_item item;
} keyed;

/* qsort order of keyed items: largest key first, then by part. */
static int by_key(const void *a, const void *b)
{
    const keyed *x = a, *y = b;
    if (x->key != y->key)
        return x->key < y->key ? 1 : -1;
    return x->item.part - y->item.part;
}

/* The iterative solver's order: unresolved derivatives made 0
 * (zero_below), then sorted as by_norm but on keys rounded to 7
 * significant digits.  Parts that are equal by symmetry get derivatives
 * that differ in the last digits, differently from one solve to the next
 * (another count of ranks, another solver); the rounding makes them ties
 * broken by part, so the order is the same (docs/iterative.md).  0, or -1
 * without memory. */
static int sort_unresolved(ls_sens_item *it, int k, double q)
{
    zero_below(it, k, q, LS_AMG_RTOL);
    keyed *ks = malloc((size_t)(k ? k : 1) * sizeof *ks);
    if (!ks)
        return -1;
    for (int i = 0; i < k; i++) {
        double v = isnan(it[i].normalized) ? fabs(it[i].derivative) : fabs(it[i].normalized);
        char buf[32];
        snprintf(buf, sizeof buf, "%.6e", v);
        ks[i].key = strtod(buf, NULL);
        ks[i].item = it[i];
    }
    qsort(ks, (size_t)k, sizeof *ks, by_key);
    for (int i = 0; i < k; i++)
        it[i] = ks[i].item;
    free(ks);
    return 0;
}

/* See sens.h. */
int ls_sens(ls_op *op, const ls_q *q, double *value, ls_sens_item **items)
{
    const ls_netlist *nl = op->nl;
    ctx c = {.op = op, .np = nl->nparts};
    dual d;
    *items = NULL;
    if (!index_via(&c) || !alloc_dual(&c, &d)) {
        ls_error(nl->diags, LS_NOLOC, "out of memory in the sensitivity analysis (%d parts)", nl->nparts);
        free_via(&c);
        return LS_SENS_NOMEM;
    }
    bool ok = eval(&c, q, &d);
    free_via(&c);
    if (!ok) {
        if (c.error == nomem_error)
            ls_error(nl->diags, q->loc, "out of memory in the sensitivity analysis (%d parts)", nl->nparts);
        else
            ls_error(nl->diags, q->loc, "%s", c.error ? c.error : "the sensitivity analysis failed");
        free(d.g);
        return c.error == nomem_error ? LS_SENS_NOMEM : -1;
    }
    *value = d.v;
    int k = 0;
    ls_sens_item *it = calloc((size_t)(nl->nparts ? nl->nparts : 1), sizeof *it);
    if (!it) {
        ls_error(nl->diags, LS_NOLOC, "out of memory in the sensitivity analysis (%zu bytes for %d parts)",
                 (size_t)(nl->nparts ? nl->nparts : 1) * sizeof *it, nl->nparts);
        free(d.g);
        return LS_SENS_NOMEM;
    }
    for (int m = 0; m < nl->nparts; m++) {
        const ls_part *p = &nl->parts[m];
        if (!has_main(p))
            continue;
        it[k].part = m;
        it[k].nominal = ls_run_value(&op->run, p);
        it[k].derivative = d.g[m];
        it[k].normalized = d.v != 0 ? ls_run_value(&op->run, p) / d.v * d.g[m] : NAN;
        k++;
    }
    if (op->method != LS_METHOD_ITERATIVE_AMG) {
        zero_below(it, k, d.v, LS_SENS_ROUNDING);
        qsort(it, (size_t)k, sizeof *it, by_norm);
    }
    else if (sort_unresolved(it, k, d.v) != 0) {
        ls_error(nl->diags, LS_NOLOC, "out of memory in the sensitivity analysis (%d parts)", nl->nparts);
        free(d.g);
        free(it);
        return LS_SENS_NOMEM;
    }
    free(d.g);
    *items = it;
    return k;
}
