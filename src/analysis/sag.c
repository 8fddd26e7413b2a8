/* sag.c — the sag of a node explained by connections (see sag.h).
 *
 * One variant of the circuit with every port opened (floating load sides held
 * at their connected voltages, so the network with the ports replaced by
 * their currents reproduces the connected solution exactly) is factored once
 * at the connected operating point; one transposed solve gives NODE's row of
 * its inverse, Z(NODE, .).  `alone` is that variant solved exactly (every
 * limit and junction active).  When a state differs between the two, or the
 * linearization leaves more than a tenth of the sag unexplained, each port's
 * share becomes its Shapley value: its average marginal effect over the
 * orders of connecting the ports, from exact solves, which add up to the sag
 * by construction. */
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "analysis/newton.h"
#include "base/rng.h"
#include "analysis/sag.h"
#include "analysis/variant.h"

/* Above this share of the sag left unexplained, a nonlinear circuit's
 * linearization is not trusted for the shares. */
#define INTERACTION_LIMIT 0.1

/* Frees r's arrays and zeroes it. */
void ls_sag_report_free(ls_sag_report *r)
{
    for (int i = 0; i < r->nports; i++)
        free(r->ports[i].draws);
    free(r->ports);
    free(r->suggest);
    memset(r, 0, sizeof *r);
}

/* ---- a port's current split at its load node ------------------------------------------------- */

/* Does part q have a pin on node? */
static bool touches(const ls_part *q, int node)
{
    int np = q->kind->npins < LS_MAX_PINS ? q->kind->npins : LS_MAX_PINS;
    for (int k = 0; k < np; k++)
        if (q->pin[k] == node)
            return true;
    return false;
}

/* Current (A) part q draws from node (row node-1 of its own stamp times the
 * solution, less its rhs: KCL's "current leaving through q").  t and b are
 * scratch (b of order n, zero on entry and on return).  NaN out of memory. */
static double draw_of(const ls_op *op, const ls_part *q, int node, ls_triplets *t, double *b)
{
    ls_sink s = {.mode = SINK_ASSEMBLE, .t = t, .b = b, .scale = 1};
    ls_stamp_ctx c = {.nl = op->nl, .run = &op->run, .sink = &s};
    t->nnz = 0;
    q->kind->stamp(q, &c);
    if (t->failed)
        return NAN;
    int row = node - 1;
    double sum = -b[row];
    for (size_t k = 0; k < t->nnz; k++)
        if (t->ti[k] == row)
            sum += t->tx[k] * op->x[t->tj[k]];
    memset(b, 0, (size_t)op->mna.n * sizeof *b);
    return sum;
}

/* qsort order: largest |current| first, ties in part order. */
static int by_abs_draw(const void *a, const void *b)
{
    double x = fabs(((const ls_sag_draw *)a)->current), y = fabs(((const ls_sag_draw *)b)->current);
    if (x != y)
        return x < y ? 1 : -1;
    return ((const ls_sag_draw *)a)->part - ((const ls_sag_draw *)b)->part;
}

/* The parts with a pin on each node, built once for every port's draws (a
 * scan of the part table per port made sag quadratic): the parts on node v
 * are at[start[v] .. start[v + 1]), in ascending part order, each once. */
typedef struct incidence {
    int *start, *at;
    ls_triplets t;   /* draw_of's scratch, shared by the ports */
    double *b;       /* draw_of's scratch right-hand side, order n */
} incidence;

/* Builds inc for op's netlist.  0, or -1 no memory (inc then freed). */
static int incidence_build(const ls_op *op, incidence *inc)
{
    const ls_netlist *nl = op->nl;
    memset(inc, 0, sizeof *inc);
    inc->start = calloc((size_t)nl->nnodes + 1, sizeof *inc->start);
    inc->b = calloc((size_t)(op->mna.n ? op->mna.n : 1), sizeof *inc->b);
    if (!inc->start || !inc->b)
        goto fail;
    for (int pass = 0; pass < 2; pass++) {   /* count, then fill */
        for (int i = 0; i < nl->nparts; i++) {
            const ls_part *q = &nl->parts[i];
            int np = q->kind->npins < LS_MAX_PINS ? q->kind->npins : LS_MAX_PINS;
            for (int k = 0; k < np; k++) {
                int v = q->pin[k], dup = 0;
                for (int j = 0; j < k; j++)
                    dup |= q->pin[j] == v;
                if (v < 0 || v >= nl->nnodes || dup)
                    continue;
                if (pass == 0)
                    inc->start[v + 1]++;
                else
                    inc->at[inc->start[v]++] = i;
            }
        }
        if (pass == 0) {
            for (int v = 0; v < nl->nnodes; v++)
                inc->start[v + 1] += inc->start[v];
            inc->at = malloc((size_t)(inc->start[nl->nnodes] ? inc->start[nl->nnodes] : 1) * sizeof *inc->at);
            if (!inc->at)
                goto fail;
        }
    }
    for (int v = nl->nnodes; v > 0; v--)   /* the fill moved each start to the next one's */
        inc->start[v] = inc->start[v - 1];
    inc->start[0] = 0;
    return 0;
fail:
    free(inc->start);
    free(inc->at);
    free(inc->b);
    memset(inc, 0, sizeof *inc);
    return -1;
}

/* Frees what incidence_build made. */
static void incidence_free(incidence *inc)
{
    free(inc->start);
    free(inc->at);
    free(inc->b);
    ls_triplets_free(&inc->t);
    memset(inc, 0, sizeof *inc);
}

/* The parts that draw port sp's current at its load node, largest first;
 * parts that draw nothing (an ideal input) are left out.  0, or -1 no memory. */
static int port_draws(const ls_op *op, ls_sag_port *sp, incidence *inc)
{
    const ls_netlist *nl = op->nl;
    int load = nl->parts[sp->part].pin[1];
    if (load <= 0)
        return 0;
    int from = inc->start[load], to = inc->start[load + 1];
    sp->draws = calloc((size_t)(to > from ? to - from : 1), sizeof *sp->draws);
    if (!sp->draws)
        return -1;
    double big = fabs(sp->current);
    for (int a = from; a < to; a++) {
        int i = inc->at[a];
        if (i == sp->part)
            continue;
        double c = draw_of(op, &nl->parts[i], load, &inc->t, inc->b);
        if (isnan(c))
            return -1;
        sp->draws[sp->ndraws++] = (ls_sag_draw){i, c};
        big = fmax(big, fabs(c));
    }
    /* rounding noise of the solve is no current */
    int w = 0;
    for (int k = 0; k < sp->ndraws; k++)
        if (fabs(sp->draws[k].current) > 1e-12 * big)
            sp->draws[w++] = sp->draws[k];
    sp->ndraws = w;
    qsort(sp->draws, (size_t)w, sizeof *sp->draws, by_abs_draw);
    return 0;
}

/* ---- exact solves of port combinations -------------------------------------------------------- */

typedef struct combos {
    ls_op *op;
    ls_variant v;
    const ls_sag_port *ports;
    int P, node;
    /* memo of f(mask) for sampled orders: open addressing on the mask */
    uint64_t *keys;
    double *vals;
    unsigned char *used;
    size_t cap;
    bool nomem;              /* a combination's solve ran out of memory */
} combos;

/* NODE's voltage (V) with the ports of mask connected and the others open,
 * solved exactly; NaN when that circuit cannot be solved or leaves NODE
 * floating.  The parts' states are left as that solve leaves them. */
static double solve_mask(combos *c, uint64_t mask)
{
    uint64_t all = c->P == 64 ? ~(uint64_t)0 : (((uint64_t)1 << c->P) - 1);
    if (mask == all)
        return c->op->v[c->node];
    const ls_netlist *nl = c->op->nl;
    memset(c->v.opened, 0, (size_t)nl->nparts * sizeof *c->v.opened);
    memset(c->v.ties, 0, (size_t)nl->nnodes * sizeof *c->v.ties);
    for (int k = 0; k < c->P; k++)
        if (!(mask >> k & 1))
            c->v.opened[c->ports[k].part] = LS_BUFFERED;
    if (ls_variant_hold_floating(&c->v, c->op) < 0) {
        c->nomem = true;
        return NAN;
    }
    if (c->v.floating[c->node] || ls_variant_solve(&c->v, c->op, false) != LS_DONE) {
        c->nomem |= c->v.op.nomem;
        return NAN;
    }
    return c->v.op.v[c->node];
}

/* f(mask), remembered (sampled orders revisit combinations). */
static double memo_mask(combos *c, uint64_t mask)
{
    size_t h = (size_t)((mask * 0x9E3779B97F4A7C15ull) >> 20) & (c->cap - 1);
    while (c->used[h]) {
        if (c->keys[h] == mask)
            return c->vals[h];
        h = (h + 1) & (c->cap - 1);
    }
    double f = solve_mask(c, mask);
    c->used[h] = 1;
    c->keys[h] = mask;
    c->vals[h] = f;
    return f;
}

/* Exact Shapley values over all 2^P combinations into phi.  0 ok, 1 some
 * combination could not be solved, -1 no memory. */
static int shapley_exact(combos *c, double alone, double *phi)
{
    int P = c->P;
    size_t nm = (size_t)1 << P;
    double *f = malloc(nm * sizeof *f), *w = malloc((size_t)P * sizeof *w);
    if (!f || !w) {
        free(f);
        free(w);
        return -1;
    }
    /* w[s] = s! (P-s-1)! / P! = 1 / (P * C(P-1, s)) */
    double binom = 1;
    for (int s = 0; s < P; s++) {
        w[s] = 1 / (P * binom);
        binom = binom * (P - 1 - s) / (s + 1);
    }
    int rc = 0;
    f[0] = alone;
    for (size_t m = 1; m < nm && rc == 0; m++)
        if (isnan(f[m] = solve_mask(c, m)))
            rc = 1;
    for (int p = 0; p < P && rc == 0; p++) {
        double s = 0;
        for (size_t m = 0; m < nm; m++)
            if (!(m >> p & 1))
                s += w[__builtin_popcountll(m)] * (f[m] - f[m | (size_t)1 << p]);
        phi[p] = s;
    }
    free(f);
    free(w);
    return rc;
}

/* Shapley values averaged over `orders` random orders (seed 1) into phi:
 * each order's marginal effects telescope to the sag, so the values add up
 * to it exactly.  0 ok, 1 a combination could not be solved, -1 no memory. */
static int shapley_sampled(combos *c, double alone, double *phi, int orders)
{
    int P = c->P;
    int *perm = malloc((size_t)P * sizeof *perm);
    c->cap = 1;
    while (c->cap < 2 * (size_t)orders * (size_t)P + 2)
        c->cap <<= 1;
    c->keys = malloc(c->cap * sizeof *c->keys);
    c->vals = malloc(c->cap * sizeof *c->vals);
    c->used = calloc(c->cap, 1);
    if (!perm || !c->keys || !c->vals || !c->used) {
        free(perm);
        return -1;
    }
    memset(phi, 0, (size_t)P * sizeof *phi);
    ls_rng r;
    ls_rng_seed(&r, 1, 0);
    int rc = 0;
    for (int o = 0; o < orders && rc == 0; o++) {
        for (int k = 0; k < P; k++)
            perm[k] = k;
        for (int k = P - 1; k > 0; k--) {
            int j = (int)(ls_rng_uniform(&r) * (k + 1));
            int t = perm[k];
            perm[k] = perm[j];
            perm[j] = t;
        }
        uint64_t mask = 0;
        double prev = alone;
        for (int k = 0; k < P && rc == 0; k++) {
            mask |= (uint64_t)1 << perm[k];
            double f = memo_mask(c, mask);
            if (isnan(f))
                rc = 1;
            phi[perm[k]] += prev - f;
            prev = f;
        }
    }
    for (int k = 0; k < P; k++)
        phi[k] /= orders;
    free(perm);
    return rc;
}

/* Replace the shares by Shapley values.  0 done, 1 not possible (r->note
 * says why), -1 no memory.  The parts' states are restored from base. */
static int shapley(ls_op *op, ls_sag_report *r, const ls_runs *base)
{
    int P = r->nports;
    if (P > LS_SAG_MAX_SHAPLEY_PORTS) {
        r->note = "too many ports for exact solves of their combinations: the shares are linearized";
        return 1;
    }
    combos c = {.op = op, .ports = r->ports, .P = P, .node = r->node};
    double *phi = calloc((size_t)P, sizeof *phi);
    if (!phi || ls_variant_init(&c.v, op) != 0) {
        free(phi);
        return -1;
    }
    int orders = 0, rc;
    if (P <= LS_SAG_EXACT_PORTS) {
        rc = shapley_exact(&c, r->alone, phi);
    } else {
        orders = 4096 / P < 16 ? 16 : 4096 / P > 256 ? 256 : 4096 / P;
        rc = shapley_sampled(&c, r->alone, phi, orders);
    }
    ls_runs_restore(op, base);
    if (c.nomem) /* a combination lost to memory is not one without a solution */
        rc = -1;
    if (rc == 0) {
        r->method = LS_SAG_SHAPLEY;
        r->orders = orders;
        for (int k = 0; k < P; k++)
            r->ports[k].share = phi[k];
    } else if (rc == 1) {
        r->note = "some combinations of open ports cannot be solved: the shares are linearized";
    }
    free(phi);
    free(c.keys);
    free(c.vals);
    free(c.used);
    ls_variant_free(&c.v);
    return rc;
}

/* ---- the analysis ------------------------------------------------------------------------------ */

/* Every port of the circuit into r->ports with its current.  -1 no memory. */
static int collect_ports(const ls_op *op, ls_sag_report *r)
{
    const ls_netlist *nl = op->nl;
    r->ports = calloc((size_t)(nl->nparts ? nl->nparts : 1), sizeof *r->ports);
    if (!r->ports)
        return -1;
    for (int i = 0; i < nl->nparts; i++)
        if (nl->parts[i].kind->is_port)
            r->ports[r->nports++] = (ls_sag_port){.part = i, .current = op->x[nl->parts[i].branch],
                                                  .transfer = NAN, .share = NAN, .share_rel = NAN};
    return 0;
}

/* Z(NODE, .) of the all-open variant (linearized at base's solution): the
 * transfers and shares.  z is a scratch of order n. */
static int transfers(ls_variant *v, ls_sag_report *r, double *z)
{
    const ls_netlist *nl = v->op.nl;
    memset(z, 0, (size_t)v->op.mna.n * sizeof *z);
    z[r->node - 1] = 1;
    int st = ls_op_solve_vec(&v->op, z, 1);
    if (st == LS_SOLVER_NOMEM)
        return -1;
    if (st != LS_SOLVER_OK)
        return 1;
    /* rounding noise of the solve is no transfer */
    double zmax = 0;
    for (int i = 0; i < v->op.mna.nn; i++)
        zmax = fmax(zmax, fabs(z[i]));
    for (int i = 0; i < v->op.mna.nn; i++)
        if (fabs(z[i]) < 1e-14 * zmax)
            z[i] = 0;
    for (int k = 0; k < r->nports; k++) {
        const ls_part *p = &nl->parts[r->ports[k].part];
        double zd = p->pin[0] > 0 ? z[p->pin[0] - 1] : 0, zl = p->pin[1] > 0 ? z[p->pin[1] - 1] : 0;
        r->ports[k].transfer = zd - zl;
        r->ports[k].share = r->ports[k].current * r->ports[k].transfer;
    }
    return 0;
}

/* alone (exact), the linearized shares (NaN, with *no_z set, when the
 * all-open system linearized at the connected solution is singular: a
 * limit there makes an output a current source that nothing loads once the
 * ports are open), and whether a state changed.  0 ok, 1 undefined (r->why
 * set), -1 no memory.  Restores the parts' states. */
static int open_every_port(ls_op *op, ls_sag_report *r, const ls_runs *base, bool *no_z)
{
    ls_variant v;
    *no_z = false;
    if (ls_variant_init(&v, op) != 0)
        return -1;
    for (int k = 0; k < r->nports; k++)
        v.opened[r->ports[k].part] = LS_BUFFERED;
    int rc = ls_variant_hold_floating(&v, op) < 0 ? -1 : 0;
    if (rc == 0 && v.floating[r->node]) {
        r->why = "with every port opened the node has no DC path to ground: nothing but its connections sets it";
        rc = 1;
    }
    bool nonlinear = ls_newton_needed(op->nl);
    /* the exact alone first: every limit and junction free to move */
    if (rc == 0 && ls_variant_solve(&v, op, !nonlinear) != LS_DONE) {
        r->why = nonlinear ? "with every port opened the circuit cannot be solved (its iteration does not settle)"
                           : "with every port opened the circuit has no DC solution";
        rc = v.op.nomem ? -1 : 1;
    }
    if (rc == 0) {
        r->alone = v.op.v[r->node];
        int what = -1;
        if (nonlinear && ls_states_differ(&v.op.run, base, &what))
            r->changed = what;
        ls_runs_restore(op, base);
        if (nonlinear && ls_variant_solve(&v, op, true) != LS_DONE) {
            *no_z = true;
            rc = v.op.nomem ? -1 : 0;
        }
    }
    double *z = rc == 0 && !*no_z ? malloc((size_t)(op->mna.n ? op->mna.n : 1) * sizeof *z) : NULL;
    if (rc == 0 && !*no_z && !z)
        rc = -1;
    if (rc == 0 && !*no_z && (rc = transfers(&v, r, z)) == 1) {
        *no_z = true;
        rc = 0;
    }
    free(z);
    ls_runs_restore(op, base);
    ls_variant_free(&v);
    return rc;
}

/* qsort order: largest |share| first, undefined last, ties in part order. */
static int by_abs_share(const void *a, const void *b)
{
    const ls_sag_port *x = a, *y = b;
    bool nx = isnan(x->share), ny = isnan(y->share);
    if (nx != ny)
        return nx ? 1 : -1;
    double ax = nx ? 0 : fabs(x->share), ay = ny ? 0 : fabs(y->share);
    if (ax != ay)
        return ax < ay ? 1 : -1;
    return x->part - y->part;
}

/* Parts attached at NODE whose removal moves it away from ground (its loads,
 * for a suggestion where a port would mark the connection).  -1 no memory. */
static int suggestions(ls_op *op, ls_sag_report *r)
{
    const ls_netlist *nl = op->nl;
    ls_sag_item *items = calloc((size_t)(nl->nparts ? nl->nparts : 1), sizeof *items);
    r->suggest = calloc((size_t)(nl->nparts ? nl->nparts : 1), sizeof *r->suggest);
    if (!items || !r->suggest || ls_sag(op, r->node, items) != 0) {
        free(items);
        return -1;
    }
    double v0 = r->voltage;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_sag_item *it = &items[i];
        const ls_part *p = &nl->parts[it->part];
        if (p->kind->is_port || !touches(p, r->node) || it->beyond_limit || !isfinite(it->delta) || v0 == 0)
            continue;
        if (v0 > 0 ? it->delta > 0 : it->delta < 0)
            r->suggest[r->nsuggest++] = it->part;
    }
    free(items);
    return 0;
}

/* The sum of the ports' shares (V). */
static double sum_shares(const ls_sag_report *r)
{
    double sum = 0;
    for (int k = 0; k < r->nports; k++)
        sum += r->ports[k].share;
    return sum;
}

/* The sag and its remainder once every port's share is known (rc: what
 * open_every_port returned; no_z: the linearized circuit has no solution with
 * every port open), by exact solves of the port combinations (Shapley) where
 * substitution leaves too much unexplained.  0, or -1 no memory. */
static int split_sag(ls_op *op, ls_sag_report *r, const ls_runs *base, int rc, bool no_z)
{
    if (r->nports == 0 || r->node == 0) {
        r->alone = r->voltage;
        r->sag = r->interaction = 0;
    } else if (rc == 0) {
        r->sag = r->alone - r->voltage;
        r->interaction = r->sag - sum_shares(r);
        /* a remainder at the rounding level of the voltages is no reason for exact solves */
        double floor_v = 1e-9 * fmax(fabs(r->alone), fabs(r->voltage));
        bool loose = !(fabs(r->interaction) <= fmax(INTERACTION_LIMIT * fabs(r->sag), floor_v)) &&
                     ls_newton_needed(op->nl);
        if (r->changed >= 0 || loose || no_z) {
            if (shapley(op, r, base) < 0)
                return -1;
            if (r->method != LS_SAG_SHAPLEY && no_z)
                r->why = "the circuit linearized at its solution has no DC solution with every port opened, "
                         "and the exact solves of the port combinations are out of reach";
            if (r->method == LS_SAG_SHAPLEY)
                r->interaction = r->sag - sum_shares(r);
        }
    }
    /* a remainder at the rounding level of the node's voltages is none */
    if (fabs(r->interaction) < 64 * DBL_EPSILON * fmax(fabs(r->alone), fabs(r->voltage)))
        r->interaction = 0;
    return 0;
}

/* Each port's relative share and draws, the ports by |share|, the culprit
 * (pulling the same way as the sag, by more than rounding).  0, or -1 no
 * memory. */
static int rank_ports(ls_op *op, ls_sag_report *r)
{
    incidence inc;
    if (incidence_build(op, &inc) != 0)
        return -1;
    for (int k = 0; k < r->nports; k++) {
        ls_sag_port *sp = &r->ports[k];
        sp->share_rel = r->sag != 0 && isfinite(sp->share) ? sp->share / r->sag : NAN;
        if (port_draws(op, sp, &inc) != 0) {
            incidence_free(&inc);
            return -1;
        }
    }
    incidence_free(&inc);
    qsort(r->ports, (size_t)r->nports, sizeof *r->ports, by_abs_share);
    for (int k = 0; k < r->nports && r->sag != 0 && isfinite(r->sag); k++)
        if (isfinite(r->ports[k].share) && r->ports[k].share * r->sag > 0 &&
            fabs(r->ports[k].share) > 1e-9 * fabs(r->sag)) {
            r->culprit = k;
            break;
        }
    return 0;
}

/* The analysis of sag.h: ports, alone, shares (substitution, else Shapley),
 * draws, order, culprit, suggestions.  0, or -1 no memory (r freed). */
int ls_sag_connections(ls_op *op, int node, ls_sag_report *r)
{
    memset(r, 0, sizeof *r);
    r->node = node;
    r->voltage = op->v[node];
    r->alone = r->sag = r->interaction = NAN;
    r->culprit = r->changed = -1;
    ls_runs base = {0};
    if (collect_ports(op, r) != 0 || ls_runs_save(op, &base) != 0)
        goto nomem;
    bool no_z = false;
    int rc = r->nports && node > 0 ? open_every_port(op, r, &base, &no_z) : 0;
    if (rc < 0 || split_sag(op, r, &base, rc, no_z) != 0 || rank_ports(op, r) != 0)
        goto nomem;
    bool in_the_way = false;
    for (int k = 0; k < r->nports; k++)
        in_the_way |= isfinite(r->ports[k].share) && r->ports[k].share != 0;
    if (!in_the_way && node > 0 && suggestions(op, r) != 0)
        goto nomem;
    ls_runs_free(&base);
    return 0;
nomem:
    ls_runs_free(&base);
    ls_sag_report_free(r);
    return -1;
}
