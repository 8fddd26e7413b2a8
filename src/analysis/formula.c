/* formula.c — symbolic nodal analysis: a quantity as an exact rational
 * function of the parts' values.
 *
 * The MNA system of the solved circuit is built again with entries that are
 * rational functions of the symbols (FLINT's fmpq_mpoly: exact rational
 * coefficients, GCD, factoring).  A resistor R enters as 1/R; every row is
 * multiplied by the least common multiple of its denominators, which leaves
 * the solution unchanged and makes the matrix polynomial, so the formula
 * comes out in resistances, never conductances.  A linear form c^T x of the
 * unknowns is -det([P b; c 0]) / det(P), both determinants from one
 * fraction-free (Bareiss) elimination of the bordered matrix whose pivots are
 * taken only inside P.  Parts with no exact linear stamp (junctions, a limited
 * op-amp, a thermistor, a pot) enter with their stamps at the operating point,
 * as numbers, and the result says so.  Every operation is charged its term
 * products against a work bound, so a circuit too large for a formula gets an
 * error instead of a long wait. */
#include "analysis/formula.h"
#include "analysis/quantity.h"

#include <flint/fmpq.h>
#include <flint/fmpz_vec.h>
#include <flint/fmpq_mpoly.h>
#include <flint/fmpq_mpoly_factor.h>
#include <assert.h>
#include <float.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "elab/elab.h"
#include "lang/parser.h"

/* ---- state --------------------------------------------------------------------------- */

/* A rational function num/den. */
typedef struct rf {
    fmpq_mpoly_t n, d;
} rf;

typedef struct fsym {
    const char *name;
    fmpq_t value;            /* exact value at the file's numbers */
    int part;                /* the part whose main value it is, or -1 for a let */
    bool gain;               /* a finite op-amp gain (--ideal takes it to infinity) */
} fsym;

typedef struct fx {
    bool nomem;              /* a text ran out of memory: the run fails rather than print another form */
    ls_op *op;
    const ls_netlist *nl;
    const ls_program *prog;
    ls_diags *d;
    ls_loc qloc;             /* the quantity, for errors about it */
    const char *qtext;       /* its text, for the same */
    const ls_formula_req *req;
    fmpq_mpoly_ctx_t ctx;
    bool ctx_ready;
    fsym sym[LS_FORMULA_MAX_SYMBOLS + 1];
    int nsym;
    int tie;                 /* variable of the tie conductance (modified systems only) */
    const rf *hold;          /* the opened port's load end held at this voltage (a held port), or NULL */
    rf *pval;                /* per part: its main value */
    bool *pexact;            /* per part: stamped exactly from pval (else numbers at the operating point) */
    int n;                   /* unknowns */
    double work;             /* term products so far */
    bool too_big;            /* past a bound: every operation is skipped from then on */
    const char *too_big_why;
    char **notes;
    int nnotes;
} fx;

/* A linear form sum c[j] x[j] + c0 of the unknowns. */
typedef struct lform {
    rf *c;                   /* n entries */
    rf c0;
} lform;

/* ---- rational functions -------------------------------------------------------------- */

static void rf_init(fx *F, rf *a)
{
    fmpq_mpoly_init(a->n, F->ctx);
    fmpq_mpoly_init(a->d, F->ctx);
    fmpq_mpoly_one(a->d, F->ctx);
}

static void rf_clear(fx *F, rf *a)
{
    fmpq_mpoly_clear(a->n, F->ctx);
    fmpq_mpoly_clear(a->d, F->ctx);
}

static bool rf_is_zero(fx *F, const rf *a) { return fmpq_mpoly_is_zero(a->n, F->ctx); }

/* Charge the work of combining polynomials of lengths la and lb; false once a
 * bound is passed (the caller stops). */
static bool charge(fx *F, slong la, slong lb)
{
    F->work += (double)(la ? la : 1) * (double)(lb ? lb : 1);
    if (F->work > LS_FORMULA_WORK && !F->too_big) {
        F->too_big = true;
        F->too_big_why = "the elimination needs more work than the bound allows";
    }
    return !F->too_big;
}

static bool check_len(fx *F, const fmpq_mpoly_t p)
{
    if (fmpq_mpoly_length(p, F->ctx) > LS_FORMULA_MAX_TERMS && !F->too_big) {
        F->too_big = true;
        F->too_big_why = "an intermediate polynomial grows past the term bound";
    }
    return !F->too_big;
}

/* Machine words of the largest coefficient of a (its integer part's). */
static double coeff_words(const fmpq_mpoly_t a)
{
    slong bits = _fmpz_vec_max_bits(a->zpoly->coeffs, a->zpoly->length);
    return 1 + (double)FLINT_ABS(bits) / 64;
}

/* p <- a * b, charged its term products weighted by the coefficients' size
 * (long numbers multiply slower). */
static void pmul(fx *F, fmpq_mpoly_t p, const fmpq_mpoly_t a, const fmpq_mpoly_t b)
{
    double w = 0.5 * (coeff_words(a) + coeff_words(b));
    if (!charge(F, (slong)((double)fmpq_mpoly_length(a, F->ctx) * w), fmpq_mpoly_length(b, F->ctx)))
        return;
    fmpq_mpoly_mul(p, a, b, F->ctx);
    check_len(F, p);
}

/* Cancel the common factor of num and den; make den's leading coefficient 1. */
static void rf_norm(fx *F, rf *a)
{
    if (F->too_big)
        return;
    if (fmpq_mpoly_is_zero(a->n, F->ctx)) {
        fmpq_mpoly_one(a->d, F->ctx);
        return;
    }
    fmpq_mpoly_t g;
    fmpq_mpoly_init(g, F->ctx);
    charge(F, fmpq_mpoly_length(a->n, F->ctx), fmpq_mpoly_length(a->d, F->ctx));
    if (!F->too_big && fmpq_mpoly_gcd(g, a->n, a->d, F->ctx) && !fmpq_mpoly_is_one(g, F->ctx)) {
        fmpq_mpoly_divides(a->n, a->n, g, F->ctx);
        fmpq_mpoly_divides(a->d, a->d, g, F->ctx);
    }
    fmpq_mpoly_clear(g, F->ctx);
    fmpq_t lc;
    fmpq_init(lc);
    fmpq_mpoly_get_term_coeff_fmpq(lc, a->d, 0, F->ctx);
    fmpq_mpoly_scalar_div_fmpq(a->n, a->n, lc, F->ctx);
    fmpq_mpoly_scalar_div_fmpq(a->d, a->d, lc, F->ctx);
    fmpq_clear(lc);
}

static void rf_set(fx *F, rf *r, const rf *a)
{
    fmpq_mpoly_set(r->n, a->n, F->ctx);
    fmpq_mpoly_set(r->d, a->d, F->ctx);
}

static void rf_set_q(fx *F, rf *r, const fmpq_t q)
{
    fmpq_mpoly_set_fmpq(r->n, q, F->ctx);
    fmpq_mpoly_one(r->d, F->ctx);
}

static void rf_set_si(fx *F, rf *r, slong v)
{
    fmpq_mpoly_set_si(r->n, v, F->ctx);
    fmpq_mpoly_one(r->d, F->ctx);
}

static void rf_set_var(fx *F, rf *r, int var)
{
    fmpq_mpoly_gen(r->n, var, F->ctx);
    fmpq_mpoly_one(r->d, F->ctx);
}

/* r <- a + sign * b. */
static void rf_addsub(fx *F, rf *r, const rf *a, const rf *b, int sign)
{
    rf t;
    rf_init(F, &t);
    fmpq_mpoly_t u;
    fmpq_mpoly_init(u, F->ctx);
    if (fmpq_mpoly_equal(a->d, b->d, F->ctx)) {
        if (sign > 0)
            fmpq_mpoly_add(t.n, a->n, b->n, F->ctx);
        else
            fmpq_mpoly_sub(t.n, a->n, b->n, F->ctx);
        fmpq_mpoly_set(t.d, a->d, F->ctx);
    } else {
        pmul(F, t.n, a->n, b->d);
        pmul(F, u, b->n, a->d);
        if (sign > 0)
            fmpq_mpoly_add(t.n, t.n, u, F->ctx);
        else
            fmpq_mpoly_sub(t.n, t.n, u, F->ctx);
        pmul(F, t.d, a->d, b->d);
    }
    rf_norm(F, &t);
    rf_set(F, r, &t);
    fmpq_mpoly_clear(u, F->ctx);
    rf_clear(F, &t);
}

static void rf_mul(fx *F, rf *r, const rf *a, const rf *b)
{
    rf t;
    rf_init(F, &t);
    pmul(F, t.n, a->n, b->n);
    pmul(F, t.d, a->d, b->d);
    rf_norm(F, &t);
    rf_set(F, r, &t);
    rf_clear(F, &t);
}

/* r <- a / b; false when b is zero. */
static bool rf_div(fx *F, rf *r, const rf *a, const rf *b)
{
    if (rf_is_zero(F, b))
        return false;
    rf t;
    rf_init(F, &t);
    pmul(F, t.n, a->n, b->d);
    pmul(F, t.d, a->d, b->n);
    rf_norm(F, &t);
    rf_set(F, r, &t);
    rf_clear(F, &t);
    return true;
}

static void rf_neg(fx *F, rf *r, const rf *a)
{
    rf_set(F, r, a);
    fmpq_mpoly_neg(r->n, r->n, F->ctx);
}

/* r <- a^e for a whole e (negative: the inverse); false on 0^negative. */
static bool rf_pow(fx *F, rf *r, const rf *a, long e)
{
    rf t;
    rf_init(F, &t);
    rf_set_si(F, &t, 1);
    bool ok = true;
    for (long i = 0; i < labs(e) && !F->too_big; i++)
        rf_mul(F, &t, &t, a);
    if (e < 0) {
        rf one;
        rf_init(F, &one);
        rf_set_si(F, &one, 1);
        ok = rf_div(F, &t, &one, &t);
        rf_clear(F, &one);
    }
    rf_set(F, r, &t);
    rf_clear(F, &t);
    return ok;
}

/* ---- exact numbers ------------------------------------------------------------------- */

/* The shortest decimal that reads back as v, as an exact rational: 4700 for
 * 4k7, 1/100 for 1%, 3/2000 for 1.5m.  A value the user wrote as a decimal of
 * up to 15 digits comes back as exactly that decimal. */
static void q_from_double(fmpq_t q, double v)
{
    char buf[64];
    for (int prec = 1; prec <= 17; prec++) {
        snprintf(buf, sizeof buf, "%.*e", prec - 1, v);
        if (strtod(buf, NULL) == v)
            break;
    }
    /* buf = [-]D.DDDDe[+-]XX */
    char digits[40];
    int nd = 0;
    const char *s = buf;
    bool neg = *s == '-';
    if (neg)
        s++;
    int after = -1;
    for (; *s && *s != 'e'; s++) {
        if (*s == '.')
            after = 0;
        else {
            digits[nd++] = *s;
            if (after >= 0)
                after++;
        }
    }
    digits[nd] = 0;
    long ex = *s == 'e' ? strtol(s + 1, NULL, 10) : 0;
    ex -= after > 0 ? after : 0;
    fmpz_t m, p;
    fmpz_init(m);
    fmpz_init(p);
    fmpz_set_str(m, digits, 10);
    if (neg)
        fmpz_neg(m, m);
    fmpz_set_ui(p, 10);
    fmpz_pow_ui(p, p, (ulong)labs(ex));
    if (ex >= 0) {
        fmpz_mul(m, m, p);
        fmpz_one(p);
    }
    fmpq_set_fmpz_frac(q, m, p);
    fmpz_clear(m);
    fmpz_clear(p);
}

static void rf_set_double(fx *F, rf *r, double v)
{
    fmpq_t q;
    fmpq_init(q);
    q_from_double(q, v);
    rf_set_q(F, r, q);
    fmpq_clear(q);
}

/* The value of a at the symbols' exact values; false when its denominator vanishes. */
static bool rf_eval(fx *F, const rf *a, fmpq_t out)
{
    fmpq *vals = flint_malloc(sizeof(fmpq) * (size_t)(F->nsym + 1));
    fmpq *ptr[LS_FORMULA_MAX_SYMBOLS + 1];
    for (int i = 0; i <= F->nsym; i++) {
        fmpq_init(vals + i);
        if (i < F->nsym)
            fmpq_set(vals + i, F->sym[i].value);
        ptr[i] = vals + i;
    }
    fmpq_t dv;
    fmpq_init(dv);
    fmpq_mpoly_evaluate_all_fmpq(out, a->n, ptr, F->ctx);
    fmpq_mpoly_evaluate_all_fmpq(dv, a->d, ptr, F->ctx);
    bool ok = !fmpq_is_zero(dv);
    if (ok)
        fmpq_div(out, out, dv);
    fmpq_clear(dv);
    for (int i = 0; i <= F->nsym; i++)
        fmpq_clear(vals + i);
    flint_free(vals);
    return ok;
}

static double rf_eval_d(fx *F, const rf *a)
{
    fmpq_t q;
    fmpq_init(q);
    double v = rf_eval(F, a, q) ? fmpq_get_d(q) : NAN;
    fmpq_clear(q);
    return v;
}

/* ---- notes and errors ------------------------------------------------------------------ */

static void note(fx *F, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void note(fx *F, const char *fmt, ...)
{
    char buf[512];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    char **nn = realloc(F->notes, sizeof *nn * (size_t)(F->nnotes + 1));
    if (!nn)
        return;
    F->notes = nn;
    F->notes[F->nnotes] = strdup(buf);
    if (F->notes[F->nnotes])
        F->nnotes++;
}

static ls_outcome too_big_error(fx *F, const char *why)
{
    ls_error(F->d, LS_NOLOC,
             "formula: the circuit is too large for an exact formula (%s; limits: %d symbols, %d unknowns, "
             "%d terms); keep fewer symbols with --symbols NAME,... and the rest become numbers",
             why, LS_FORMULA_MAX_SYMBOLS, LS_FORMULA_MAX_UNKNOWNS, LS_FORMULA_MAX_TERMS);
    return LS_BAD_REQUEST;
}

/* ---- which values are symbols ----------------------------------------------------------- */


/* Is the part's stamp built exactly here (its kind's table entry says how,
 * ls_kind.exact)?  Others enter with their numeric stamps at the operating
 * point; so does an op-amp held at a limit. */
static bool exact_kind(const ls_part *p, const ls_run *run)
{
    if (p->kind->exact == LS_EXACT_OPAMP)
        return p->slot >= 0 && ls_run_state(run, p)->state == LS_LIM_NONE;
    return p->kind->exact != LS_EXACT_NONE;
}

/* Does the part have a main value that can be a symbol? */
static bool has_symbolic_value(const ls_part *p, const ls_run *run)
{
    switch (exact_kind(p, run) ? p->kind->exact : LS_EXACT_NONE) {
    case LS_EXACT_NONE: case LS_EXACT_PORT: case LS_EXACT_SWITCH: case LS_EXACT_ADC: return false;
    case LS_EXACT_OPAMP: return p->has_value;
    default: return true;
    }
}

/* An op-amp with a finite gain= (a symbol of its own). */
static bool is_gain(const ls_part *p) { return p->kind->exact == LS_EXACT_OPAMP && p->has_value; }

/* The statement of a top-level part or let named name, or NULL; a part kept
 * as an ls_brief is given in *buf (valid while *buf is). */
static const ls_stmt *find_stmt(const fx *F, int kind, const char *name, ls_stmt_buf *buf)
{
    if (!F->prog)
        return NULL;
    for (int i = 0; i < F->prog->n; i++) {
        const ls_stmt *s = ls_stmt_view(F->prog->stmts[i], buf);
        if (s->kind == kind && s->name && strcmp(s->name, name) == 0)
            return s;
    }
    return NULL;
}

/* The expression of a top-level part's main value (its VALUE, or gain=/gm=/rm=), or NULL;
 * it may lie in *buf (valid while *buf is). */
static const ls_expr *value_expr(const fx *F, const ls_part *p, ls_stmt_buf *buf)
{
    if (p->instance)
        return NULL;
    const ls_stmt *s = find_stmt(F, S_PART, p->name, buf);
    if (!s)
        return NULL;
    if (s->value)
        return s->value;
    for (int i = 0; i < s->nopts; i++) {
        int k = ls_kind_opt(p->kind, s->opts[i].name);
        if (k >= 0 && (p->kind->opts[k].flags & OPTF_MAIN) && !s->opts[i].hi)
            return s->opts[i].value;
    }
    return NULL;
}

/* The netlist value of top-level let `name`, NAN when there is none. */
static double let_value(const fx *F, const char *name)
{
    int e = ls_hash_get(&F->nl->names, name);
    if (e < 0 || F->nl->ents[e].kind != ENT_PARAM)
        return NAN;
    return F->nl->params[F->nl->ents[e].index].value;
}

static int sym_find(const fx *F, const char *name)
{
    for (int i = 0; i < F->nsym; i++)
        if (strcmp(F->sym[i].name, name) == 0)
            return i;
    return -1;
}

/* Names of the top-level lets an expression uses directly, appended to
 * names[*n] (no repeats).  Returns how many it uses, repeats included. */
static int lets_used(const fx *F, const ls_expr *e, const char **names, int *n, int cap)
{
    int k = 0;
    switch (e->kind) {
    case E_NAME:
        if (!isfinite(let_value(F, e->name)))
            return 0;
        for (int i = 0; i < *n && i < cap; i++)
            if (strcmp(names[i], e->name) == 0)
                return 1;
        if (*n < cap)
            names[*n] = e->name;
        (*n)++;
        return 1;
    case E_NEG: return lets_used(F, e->a, names, n, cap);
    case E_BIN: return lets_used(F, e->a, names, n, cap) + lets_used(F, e->b, names, n, cap);
    case E_CALL:
        for (int i = 0; i < e->nargs; i++)
            k += lets_used(F, e->args[i], names, n, cap);
        return k;
    default: return 0;
    }
}

/* Does the expression call a function (sqrt, min, ...)?  Such a value is no
 * rational function of its lets, so the part's own name is its symbol. */
static bool has_call(const ls_expr *e)
{
    switch (e->kind) {
    case E_CALL: return true;
    case E_NEG: return has_call(e->a);
    case E_BIN: return has_call(e->a) || has_call(e->b);
    default: return false;
    }
}

/* The default symbols, in order of first mention: each part's main value
 * under the part's name, or the lets its value uses.  Returns the count (may
 * exceed cap: the caller reports it). */
static int default_symbols(const fx *F, const char **names, int cap)
{
    int n = 0;
    for (int i = 0; i < F->nl->nparts; i++) {
        const ls_part *p = &F->nl->parts[i];
        if (!has_symbolic_value(p, &F->op->run))
            continue;
        ls_stmt_buf buf;
        const ls_expr *e = F->req->ideal && is_gain(p) ? NULL : value_expr(F, p, &buf);
        if (!e || has_call(e) || lets_used(F, e, names, &n, cap) == 0) {
            if (n < cap)
                names[n] = p->name;
            n++;
        }
    }
    return n;
}

static bool add_sym(fx *F, const char *name, int part, bool gain)
{
    if (sym_find(F, name) >= 0)
        return true;
    if (F->nsym == LS_FORMULA_MAX_SYMBOLS)
        return false;
    fsym *s = &F->sym[F->nsym++];
    s->name = name;
    s->part = part;
    s->gain = gain;
    fmpq_init(s->value);
    return true;
}

/* Choose the symbols from --symbols or the defaults.  Returns the outcome. */
static ls_outcome choose_symbols(fx *F)
{
    enum { CAP = 256 };
    const char *names[CAP];
    int n;
    char *list = NULL;
    if (F->req->symbols) {
        list = strdup(F->req->symbols);
        if (!list)
            return LS_NO_MEMORY;
        n = 0;
        for (char *save = NULL, *t = strtok_r(list, ", ", &save); t && n < CAP; t = strtok_r(NULL, ", ", &save))
            names[n++] = t;
    } else {
        n = default_symbols(F, names, CAP);
    }
    ls_outcome code = LS_DONE;
    for (int i = 0; i < n && i < CAP && code == LS_DONE; i++) {
        int part = ls_netlist_find_part(F->nl, names[i]);
        const char *name = names[i];
        if (part >= 0 && has_symbolic_value(&F->nl->parts[part], &F->op->run)) {
            name = F->nl->parts[part].name;
        } else if (part >= 0) {
            ls_error(F->d, LS_NOLOC, "formula: --symbols: part '%s' (%s) has no main value that can be a symbol",
                     names[i], F->nl->parts[part].kind->name);
            code = LS_BAD_REQUEST;
            break;
        } else if (!isfinite(let_value(F, names[i]))) {
            ls_error(F->d, LS_NOLOC, "formula: --symbols: '%s' is neither a part with a value nor a top-level let",
                     names[i]);
            code = LS_BAD_REQUEST;
            break;
        } else {
            part = -1;
            name = ls_arena_strdup(F->nl->arena, names[i]);
        }
        if (!add_sym(F, name, part, part >= 0 && is_gain(&F->nl->parts[part]))) {
            char why[96];
            snprintf(why, sizeof why, "%d symbols%s", n, F->req->symbols ? " asked for" : " by default");
            code = too_big_error(F, why);
            break;
        }
    }
    if (code == LS_DONE && n > CAP)
        code = too_big_error(F, "too many symbols");
    /* --ideal: every finite gain is a symbol of its own, taken to infinity at the end. */
    for (int i = 0; i < F->nl->nparts && code == LS_DONE && F->req->ideal; i++)
        if (is_gain(&F->nl->parts[i]) && exact_kind(&F->nl->parts[i], &F->op->run))
            if (!add_sym(F, F->nl->parts[i].name, i, true))
                code = too_big_error(F, "too many symbols (every finite op-amp gain counts under --ideal)");
    free(list);
    return code;
}

/* ---- values from the syntax tree --------------------------------------------------------- */

static bool expr_to_rf(fx *F, const ls_expr *e, rf *r, int depth);

/* A top-level let as a rational function: its symbol, or its own expression
 * (when that still gives its value in the netlist: --set may have changed it),
 * or its number. */
static bool let_to_rf(fx *F, const char *name, rf *r, int depth)
{
    int s = sym_find(F, name);
    if (s >= 0 && F->sym[s].part < 0) {
        rf_set_var(F, r, s);
        return true;
    }
    double v = let_value(F, name);
    ls_stmt_buf buf;
    const ls_stmt *st = find_stmt(F, S_PARAM, name, &buf);
    if (st && st->value && expr_to_rf(F, st->value, r, depth + 1) && s < 0) {
        /* symbols inside stand at their values; compare with the netlist's number */
        double got = rf_eval_d(F, r);
        if (got == v || fabs(got - v) <= 1e-13 * fabs(v))
            return true;
    }
    rf_set_double(F, r, v);
    return true;
}

static bool expr_to_rf(fx *F, const ls_expr *e, rf *r, int depth)
{
    if (depth > 64 || F->too_big)
        return false;
    switch (e->kind) {
    case E_NUM: rf_set_double(F, r, e->num); return true;
    case E_NAME: return isfinite(let_value(F, e->name)) && let_to_rf(F, e->name, r, depth);
    case E_NEG:
        if (!expr_to_rf(F, e->a, r, depth + 1))
            return false;
        rf_neg(F, r, r);
        return true;
    case E_BIN: {
        rf a, b;
        rf_init(F, &a);
        rf_init(F, &b);
        bool ok = expr_to_rf(F, e->a, &a, depth + 1) && expr_to_rf(F, e->b, &b, depth + 1);
        if (ok) {
            switch (e->op) {
            case LS_OP_ADD: rf_addsub(F, r, &a, &b, 1); break;
            case LS_OP_SUB: rf_addsub(F, r, &a, &b, -1); break;
            case LS_OP_MUL: rf_mul(F, r, &a, &b); break;
            case LS_OP_DIV: ok = rf_div(F, r, &a, &b); break;
            case LS_OP_PAR: {
                rf s;
                rf_init(F, &s);
                rf_addsub(F, &s, &a, &b, 1);
                rf_mul(F, r, &a, &b);
                ok = rf_div(F, r, r, &s);
                rf_clear(F, &s);
                break;
            }
            case LS_OP_POW: {
                /* only a whole constant exponent keeps it rational */
                double ev = rf_eval_d(F, &b);
                ok = fmpq_mpoly_is_fmpq(b.n, F->ctx) && fmpq_mpoly_is_one(b.d, F->ctx) && ev == floor(ev) &&
                     fabs(ev) <= 16 && rf_pow(F, r, &a, (long)ev);
                break;
            }
            default: ok = false; break;
            }
        }
        rf_clear(F, &a);
        rf_clear(F, &b);
        return ok && !F->too_big;
    }
    default: return false; /* functions: not rational */
    }
}

/* Every part's main value: its symbol, the exact form of its expression, or
 * the shortest decimal of its number. */
static void part_values(fx *F)
{
    for (int i = 0; i < F->nl->nparts && !F->too_big; i++) {
        const ls_part *p = &F->nl->parts[i];
        rf *r = &F->pval[i];
        int s = sym_find(F, p->name);
        if (s >= 0 && F->sym[s].part == i) {
            rf_set_var(F, r, s);
            continue;
        }
        ls_stmt_buf buf;
        const ls_expr *e = has_symbolic_value(p, &F->op->run) ? value_expr(F, p, &buf) : NULL;
        double value = ls_run_value(&F->op->run, p);   /* the solve's (the C API may have set it) */
        if (e && expr_to_rf(F, e, r, 0)) {
            double got = rf_eval_d(F, r);
            if (got == value || fabs(got - value) <= 1e-13 * fabs(value))
                continue;
        }
        rf_set_double(F, r, value);
    }
}

/* Exact values of the symbols: first every symbol at the shortest decimal of
 * its number, then, where its expression has no symbol in it and gives that
 * same number, the exact value of the expression (10k/3 stays a third). */
static void symbol_values(fx *F)
{
    for (int s = 0; s < F->nsym; s++) {
        int part = F->sym[s].part;
        q_from_double(F->sym[s].value,
                      part >= 0 ? ls_run_value(&F->op->run, &F->nl->parts[part]) : let_value(F, F->sym[s].name));
    }
    for (int s = 0; s < F->nsym; s++) {
        int part = F->sym[s].part;
        ls_stmt_buf buf;
        const ls_stmt *st = part < 0 ? find_stmt(F, S_PARAM, F->sym[s].name, &buf) : NULL;
        const ls_expr *e = part >= 0 ? value_expr(F, &F->nl->parts[part], &buf) : st ? st->value : NULL;
        rf r;
        rf_init(F, &r);
        if (e && expr_to_rf(F, e, &r, 0) && fmpq_mpoly_is_fmpq(r.n, F->ctx) && fmpq_mpoly_is_one(r.d, F->ctx)) {
            fmpq_t q;
            fmpq_init(q);
            fmpq_mpoly_get_fmpq(q, r.n, F->ctx);
            if (fmpq_get_d(q) == fmpq_get_d(F->sym[s].value))
                fmpq_set(F->sym[s].value, q);
            fmpq_clear(q);
        }
        rf_clear(F, &r);
    }
}

/* ---- the system ------------------------------------------------------------------------ */

typedef struct sys {
    int n;
    rf *a;                   /* n x n, row-major */
    rf *b;                   /* n */
} sys;

static int sys_init(fx *F, sys *S)
{
    S->n = F->n;
    S->a = malloc(sizeof *S->a * (size_t)(S->n * S->n + 1));
    S->b = malloc(sizeof *S->b * (size_t)(S->n + 1));
    if (!S->a || !S->b) {
        free(S->a);
        free(S->b);
        return -1;
    }
    for (int i = 0; i < S->n * S->n; i++)
        rf_init(F, &S->a[i]);
    for (int i = 0; i < S->n; i++)
        rf_init(F, &S->b[i]);
    return 0;
}

static void sys_free(fx *F, sys *S)
{
    for (int i = 0; i < S->n * S->n; i++)
        rf_clear(F, &S->a[i]);
    for (int i = 0; i < S->n; i++)
        rf_clear(F, &S->b[i]);
    free(S->a);
    free(S->b);
}

/* a[row][col] += sign * v (ground rows and columns dropped). */
static void add_a(fx *F, sys *S, int row, int col, const rf *v, int sign)
{
    if (row < 0 || col < 0)
        return;
    rf_addsub(F, &S->a[row * S->n + col], &S->a[row * S->n + col], v, sign);
}

static void add_b(fx *F, sys *S, int row, const rf *v, int sign)
{
    if (row >= 0)
        rf_addsub(F, &S->b[row], &S->b[row], v, sign);
}

static void add_a_si(fx *F, sys *S, int row, int col, slong v)
{
    rf t;
    rf_init(F, &t);
    rf_set_si(F, &t, v);
    add_a(F, S, row, col, &t, 1);
    rf_clear(F, &t);
}

static void add_a_d(fx *F, sys *S, int row, int col, double v)
{
    if (v == 0)
        return;
    rf t;
    rf_init(F, &t);
    rf_set_double(F, &t, v);
    add_a(F, S, row, col, &t, 1);
    rf_clear(F, &t);
}

static void add_b_d(fx *F, sys *S, int row, double v)
{
    if (v == 0)
        return;
    rf t;
    rf_init(F, &t);
    rf_set_double(F, &t, v);
    add_b(F, S, row, &t, 1);
    rf_clear(F, &t);
}

#define NU(p, i) ls_node_unknown((p)->pin[i])

static void conductance(fx *F, sys *S, int a, int b, const rf *g)
{
    add_a(F, S, a, a, g, 1);
    add_a(F, S, b, b, g, 1);
    add_a(F, S, a, b, g, -1);
    add_a(F, S, b, a, g, -1);
}

/* 1/v for a resistance given as a number (ohm). */
static void inv_double(fx *F, rf *g, double r_ohm)
{
    rf one;
    rf_init(F, &one);
    rf_set_si(F, &one, 1);
    rf_set_double(F, g, r_ohm);
    rf_div(F, g, &one, g);
    rf_clear(F, &one);
}

/* KCL columns of branch k (FROM -> TO) and, unless `open`, its rise row V(TO) - V(FROM). */
static void branch(fx *F, sys *S, int f, int t, int k, bool rise)
{
    add_a_si(F, S, f, k, 1);
    add_a_si(F, S, t, k, -1);
    if (rise) {
        add_a_si(F, S, k, t, 1);
        add_a_si(F, S, k, f, -1);
    }
}

static double opt(const ls_part *p, const char *name, double dflt) { return ls_part_opt(p, name, dflt); }

/* A source's internal resistance, under its version-2 name or the older one. */
static double source_rint(const ls_part *p) { return opt(p, "rint", opt(p, "rs", 0)); }

static void part_lform(fx *F, int part, lform *l, int depth);

static void lform_init(fx *F, lform *l)
{
    l->c = malloc(sizeof *l->c * (size_t)(F->n + 1));
    for (int i = 0; l->c && i < F->n; i++)
        rf_init(F, &l->c[i]);
    rf_init(F, &l->c0);
}

static void lform_clear(fx *F, lform *l)
{
    for (int i = 0; l->c && i < F->n; i++)
        rf_clear(F, &l->c[i]);
    free(l->c);
    rf_clear(F, &l->c0);
}

/* The current-controlled stamps: rows f (+) and t (-) of gain * I(via), into A
 * and b (cccs), or row k of -rm * I(via) (ccvs). */
static void via_stamp(fx *F, sys *S, const ls_part *p, int f, int t, int k)
{
    lform l;
    lform_init(F, &l);
    if (!l.c || p->ref < 0) {
        lform_clear(F, &l);
        return;
    }
    part_lform(F, p->ref, &l, 1);
    const rf *g = &F->pval[p - F->nl->parts];
    rf t1;
    rf_init(F, &t1);
    for (int j = 0; j < F->n; j++) {
        if (rf_is_zero(F, &l.c[j]))
            continue;
        rf_mul(F, &t1, g, &l.c[j]);
        if (k >= 0) {
            add_a(F, S, k, j, &t1, -1);
        } else {
            add_a(F, S, f, j, &t1, 1);
            add_a(F, S, t, j, &t1, -1);
        }
    }
    rf_mul(F, &t1, g, &l.c0);
    if (k >= 0) {
        add_b(F, S, k, &t1, 1);
    } else {
        add_b(F, S, f, &t1, -1);
        add_b(F, S, t, &t1, 1);
    }
    rf_clear(F, &t1);
    lform_clear(F, &l);
}

/* An op-amp without a limit in force: the same rows as its numeric stamp. */
static void opamp_exact(fx *F, sys *S, const ls_part *p, const rf *gain)
{
    int pl = NU(p, 0), mi = NU(p, 1), out = NU(p, 2), k = p->branch;
    add_a_si(F, S, out, k, -1);
    double rin = opt(p, "rin", 0), vos = opt(p, "vos", 0), ib = opt(p, "ib", 0), ios = opt(p, "ios", 0);
    if (rin > 0) {
        rf g;
        rf_init(F, &g);
        inv_double(F, &g, rin);
        conductance(F, S, pl, mi, &g);
        rf_clear(F, &g);
    }
    add_b_d(F, S, pl, -(ib + ios / 2));
    add_b_d(F, S, mi, -(ib - ios / 2));
    int rails = ls_kind_opt(p->kind, "rails");
    if (ls_part_has(p, rails)) {
        int hi = p->range[OA_RAILS][1].node, lo = p->range[OA_RAILS][0].node;
        double iq = opt(p, "iq", 0);
        if (hi > 0) {
            add_a_si(F, S, ls_node_unknown(hi), k, ls_run_state(&F->op->run, p)->side ? 0 : 1);
            add_b_d(F, S, ls_node_unknown(hi), -iq);
        }
        if (lo > 0) {
            add_a_si(F, S, ls_node_unknown(lo), k, ls_run_state(&F->op->run, p)->side ? 1 : 0);
            add_b_d(F, S, ls_node_unknown(lo), iq);
        }
    }
    if (p->has_value) {
        add_a_si(F, S, k, out, 1);
        add_a(F, S, k, pl, gain, -1);
        add_a(F, S, k, mi, gain, 1);
        add_a_d(F, S, k, k, opt(p, "rout", 0));
        if (vos != 0) {
            rf t;
            rf_init(F, &t);
            rf_set_double(F, &t, vos);
            rf_mul(F, &t, &t, gain);
            add_b(F, S, k, &t, 1);
            rf_clear(F, &t);
        }
    } else {
        add_a_si(F, S, k, pl, 1);
        add_a_si(F, S, k, mi, -1);
        add_b_d(F, S, k, -vos);
    }
}

/* A part with no exact stamp: its numeric stamp at the operating point. */
static void numeric_stamp(fx *F, sys *S, const ls_part *p, bool removed)
{
    ls_triplets t = {0};
    t.n = S->n;
    double *b = calloc((size_t)S->n + 1, sizeof *b);
    if (!b)
        return;
    ls_sink sink = {.mode = SINK_ASSEMBLE, .t = &t, .b = b, .scale = 1};
    ls_stamp_ctx c = {.nl = F->nl, .run = &F->op->run, .sink = &sink, .removed = removed};
    p->kind->stamp(p, &c);
    for (size_t i = 0; i < t.nnz && !t.failed; i++)
        add_a_d(F, S, t.ti[i], t.tj[i], t.tx[i]);
    for (int i = 0; i < S->n; i++)
        add_b_d(F, S, i, b[i]);
    free(b);
    ls_triplets_free(&t);
}

/* A resistor's rows: the conductance 1/v between f and t. */
static void exact_resistor(fx *F, sys *S, int f, int t, const rf *v)
{
    rf g, one;
    rf_init(F, &g);
    rf_init(F, &one);
    rf_set_si(F, &one, 1);
    rf_div(F, &g, &one, v);
    conductance(F, S, f, t, &g);
    rf_clear(F, &g);
    rf_clear(F, &one);
}

/* A port's rows: a zero-volt branch; removed, opened, or with its load end
 * held at F->hold. */
static void exact_port(fx *F, sys *S, const ls_part *p, bool removed)
{
    int f = NU(p, 0), t = NU(p, 1), k = p->branch;
    if (removed && F->hold) {
        /* opened with its load end held at its loaded voltage: the driver
         * end is disconnected, the branch row reads V(load) = held value
         * and the branch current is what holds it there */
        add_a_si(F, S, t, k, -1);
        add_a_si(F, S, k, t, 1);
        add_b(F, S, k, F->hold, 1);
        return;
    }
    branch(F, S, f, t, k, false);
    if (removed) {
        add_a_si(F, S, k, k, 1);
    } else {
        add_a_si(F, S, k, f, 1);
        add_a_si(F, S, k, t, -1);
    }
}

/* A switch's rows by its state: ron (or roff) as numbers, or opened. */
static void exact_switch(fx *F, sys *S, const ls_part *p)
{
    int f = NU(p, 0), t = NU(p, 1), k = p->branch;
    bool closed = opt(p, "state", 1) != 0, roff = ls_part_has(p, ls_kind_opt(p->kind, "roff"));
    branch(F, S, f, t, k, false);
    if (!closed && !roff) {
        add_a_si(F, S, k, k, 1);
    } else {
        add_a_si(F, S, k, f, 1);
        add_a_si(F, S, k, t, -1);
        add_a_d(F, S, k, k, -(closed ? opt(p, "ron", 0) : opt(p, "roff", 0)));
    }
}

/* An ADC input's rows: rin= to ground and leak= out of its pin, as numbers. */
static void exact_adc(fx *F, sys *S, const ls_part *p)
{
    int f = NU(p, 0);
    double rin = opt(p, "rin", 0);
    if (rin > 0) {
        rf g;
        rf_init(F, &g);
        inv_double(F, &g, rin);
        add_a(F, S, f, f, &g, 1);
        rf_clear(F, &g);
    }
    add_b_d(F, S, f, -opt(p, "leak", 0));
}

/* Stamp part i (removed: a port opened): the exact rows of its kind's
 * ls_exact, the same rows as its numeric stamp, its value the symbol or
 * fraction F->pval[i]; a part not taken exactly through its numeric stamp. */
static void stamp_part(fx *F, sys *S, int i, bool removed)
{
    const ls_part *p = &F->nl->parts[i];
    const rf *v = &F->pval[i];
    int f = NU(p, 0), t = NU(p, 1), k = p->branch;
    if (!F->pexact[i]) {
        numeric_stamp(F, S, p, removed);
        return;
    }
    switch (p->kind->exact) {
    case LS_EXACT_RESISTOR: exact_resistor(F, S, f, t, v); break;
    case LS_EXACT_VSOURCE:
        branch(F, S, f, t, k, true);
        add_a_d(F, S, k, k, source_rint(p));
        add_b(F, S, k, v, 1);
        break;
    case LS_EXACT_ISOURCE:
        add_b(F, S, f, v, -1);
        add_b(F, S, t, v, 1);
        break;
    case LS_EXACT_PORT: exact_port(F, S, p, removed); break;
    case LS_EXACT_VCVS:
        branch(F, S, f, t, k, true);
        add_a(F, S, k, NU(p, 2), v, -1);
        add_a(F, S, k, NU(p, 3), v, 1);
        break;
    case LS_EXACT_VCCS:
        add_a(F, S, f, NU(p, 2), v, 1);
        add_a(F, S, f, NU(p, 3), v, -1);
        add_a(F, S, t, NU(p, 2), v, -1);
        add_a(F, S, t, NU(p, 3), v, 1);
        break;
    case LS_EXACT_CCCS: via_stamp(F, S, p, f, t, -1); break;
    case LS_EXACT_CCVS:
        branch(F, S, f, t, k, true);
        via_stamp(F, S, p, f, t, k);
        break;
    case LS_EXACT_OPAMP: opamp_exact(F, S, p, v); break;
    case LS_EXACT_SWITCH: exact_switch(F, S, p); break;
    case LS_EXACT_ADC: exact_adc(F, S, p); break;
    case LS_EXACT_NONE: assert(!"a part of a kind without exact stamps is marked exact"); break;
    }
}

/* The system with every part stamped, part `removed` opened (-1: none) and,
 * when tie_node > 0, the tie conductance from that node to ground. */
static int build(fx *F, sys *S, int removed, int tie_node)
{
    if (sys_init(F, S) != 0)
        return -1;
    for (int i = 0; i < F->nl->nparts && !F->too_big; i++)
        stamp_part(F, S, i, i == removed);
    if (tie_node > 0) {
        rf g;
        rf_init(F, &g);
        rf_set_var(F, &g, F->tie);
        add_a(F, S, ls_node_unknown(tie_node), ls_node_unknown(tie_node), &g, 1);
        rf_clear(F, &g);
    }
    return 0;
}

/* ---- linear forms of the quantities -------------------------------------------------------- */

static void lf_add(fx *F, lform *l, int j, const rf *v, int sign)
{
    if (j >= 0)
        rf_addsub(F, &l->c[j], &l->c[j], v, sign);
}

static void lf_add_si(fx *F, lform *l, int j, slong v)
{
    rf t;
    rf_init(F, &t);
    rf_set_si(F, &t, v);
    lf_add(F, l, j, &t, 1);
    rf_clear(F, &t);
}

/* Adds the current of a conductance 1/v from f to t: V(f)/v - V(t)/v. */
static void lform_resistor(fx *F, lform *l, int f, int t, const rf *v)
{
    rf g, one;
    rf_init(F, &g);
    rf_init(F, &one);
    rf_set_si(F, &one, 1);
    rf_div(F, &g, &one, v);
    lf_add(F, l, f, &g, 1);
    lf_add(F, l, t, &g, -1);
    rf_clear(F, &g);
    rf_clear(F, &one);
}

/* Adds a current-controlled current source's current: v times its via=
 * part's current. */
static void lform_cccs(fx *F, lform *l, const ls_part *p, const rf *v, int depth)
{
    lform m;
    lform_init(F, &m);
    if (m.c && p->ref >= 0) {
        part_lform(F, p->ref, &m, depth + 1);
        rf t1;
        rf_init(F, &t1);
        for (int j = 0; j < F->n; j++) {
            rf_mul(F, &t1, v, &m.c[j]);
            lf_add(F, l, j, &t1, 1);
        }
        rf_mul(F, &t1, v, &m.c0);
        rf_addsub(F, &l->c0, &l->c0, &t1, 1);
        rf_clear(F, &t1);
    }
    lform_clear(F, &m);
}

/* Adds the constant c (a number) to l. */
static void lform_constant(fx *F, lform *l, double c)
{
    rf k;
    rf_init(F, &k);
    rf_set_double(F, &k, c);
    rf_addsub(F, &l->c0, &l->c0, &k, 1);
    rf_clear(F, &k);
}

/* Adds an ADC input's current: V(in)/rin + leak, as numbers. */
static void lform_adc(fx *F, lform *l, const ls_part *p)
{
    double rin = opt(p, "rin", 0);
    if (rin > 0) {
        rf g;
        rf_init(F, &g);
        inv_double(F, &g, rin);
        lf_add(F, l, NU(p, 0), &g, 1);
        rf_clear(F, &g);
    }
    lform_constant(F, l, opt(p, "leak", 0));
}

/* Adds a part's current as its numeric linear form at the operating point. */
static void lform_numeric(fx *F, lform *l, const ls_part *p)
{
    ls_lin nl;
    ls_part_current(p, &F->op->run, &nl, false);
    for (int i = 0; i < nl.n; i++) {
        rf c;
        rf_init(F, &c);
        rf_set_double(F, &c, nl.coef[i]);
        lf_add(F, l, nl.idx[i], &c, 1);
        rf_clear(F, &c);
    }
    lform_constant(F, l, nl.constant);
}

/* Part current (A, FROM -> TO) as a linear form, added to l: exact for the
 * kinds stamped exactly (the current of each stamp_part's rows), else the
 * numeric form at the operating point. */
static void part_lform(fx *F, int part, lform *l, int depth)
{
    const ls_part *p = &F->nl->parts[part];
    const rf *v = &F->pval[part];
    if (depth > 32)
        return;
    ls_exact e = F->pexact[part] ? p->kind->exact : LS_EXACT_NONE;
    if (e == LS_EXACT_RESISTOR) {
        lform_resistor(F, l, NU(p, 0), NU(p, 1), v);
    } else if (e == LS_EXACT_ISOURCE) {
        rf_addsub(F, &l->c0, &l->c0, v, 1);
    } else if (e == LS_EXACT_VCCS) {
        lf_add(F, l, NU(p, 2), v, 1);
        lf_add(F, l, NU(p, 3), v, -1);
    } else if (e == LS_EXACT_CCCS) {
        lform_cccs(F, l, p, v, depth);
    } else if (e == LS_EXACT_ADC) {
        lform_adc(F, l, p);
    } else if (F->pexact[part] && p->branch >= 0) {
        lf_add_si(F, l, p->branch, 1);
    } else {
        lform_numeric(F, l, p);
    }
}

/* ---- fraction-free elimination ----------------------------------------------------------------- */

/* Bareiss elimination of the m x m polynomial matrix M (row-major), pivots
 * taken only among the first np rows and columns (the smallest nonzero entry,
 * to keep the growth down).  On return *det_p is the determinant of that
 * leading block and M[m-1][m-1] the determinant of the whole, both up to the
 * same sign.  Returns 0, 1 when the leading block is singular, -1 when a
 * bound was passed. */
static int bareiss(fx *F, fmpq_mpoly_struct *M, int m, int np, fmpq_mpoly_t det_p)
{
    fmpq_mpoly_t prev, t1, t2;
    fmpq_mpoly_init(prev, F->ctx);
    fmpq_mpoly_init(t1, F->ctx);
    fmpq_mpoly_init(t2, F->ctx);
    fmpq_mpoly_one(prev, F->ctx);
    int rc = 0;
#define AT(i, j) (M + (size_t)(i) * (size_t)m + (j))
    for (int k = 0; k < np && rc == 0; k++) {
        int pi = -1, pj = -1;
        slong best = 0;
        for (int i = k; i < np; i++)
            for (int j = k; j < np; j++) {
                slong len = fmpq_mpoly_length(AT(i, j), F->ctx);
                if (len && (pi < 0 || len < best))
                    pi = i, pj = j, best = len;
            }
        if (pi < 0) {
            rc = 1;
            break;
        }
        if (pi != k)
            for (int j = 0; j < m; j++)
                fmpq_mpoly_swap(AT(pi, j), AT(k, j), F->ctx);
        if (pj != k)
            for (int i = 0; i < m; i++)
                fmpq_mpoly_swap(AT(i, pj), AT(i, k), F->ctx);
        for (int i = k + 1; i < m && rc == 0; i++) {
            for (int j = k + 1; j < m; j++) {
                bool zi = fmpq_mpoly_is_zero(AT(i, k), F->ctx), zk = fmpq_mpoly_is_zero(AT(k, j), F->ctx);
                if (fmpq_mpoly_is_zero(AT(i, j), F->ctx) && (zi || zk))
                    continue;
                pmul(F, t1, AT(i, j), AT(k, k));
                if (!zi && !zk) {
                    pmul(F, t2, AT(i, k), AT(k, j));
                    fmpq_mpoly_sub(t1, t1, t2, F->ctx);
                }
                if (F->too_big) {
                    rc = -1;
                    break;
                }
                charge(F, fmpq_mpoly_length(t1, F->ctx), fmpq_mpoly_length(prev, F->ctx));
                if (!fmpq_mpoly_divides(AT(i, j), t1, prev, F->ctx) || !check_len(F, AT(i, j))) {
                    rc = -1; /* the division is exact in theory; a failure means a bound cut it short */
                    break;
                }
            }
            fmpq_mpoly_zero(AT(i, k), F->ctx);
        }
        fmpq_mpoly_set(prev, AT(k, k), F->ctx);
    }
#undef AT
    if (F->too_big)
        rc = -1;
    fmpq_mpoly_set(det_p, prev, F->ctx);
    fmpq_mpoly_clear(prev, F->ctx);
    fmpq_mpoly_clear(t1, F->ctx);
    fmpq_mpoly_clear(t2, F->ctx);
    return rc;
}

/* Least common multiple of the denominators of v[0..n-1] into L. */
static void lcm_dens(fx *F, const rf *v, int n, size_t stride, fmpq_mpoly_t L)
{
    fmpq_mpoly_t g, t;
    fmpq_mpoly_init(g, F->ctx);
    fmpq_mpoly_init(t, F->ctx);
    fmpq_mpoly_one(L, F->ctx);
    for (int j = 0; j < n && !F->too_big; j++) {
        const rf *e = v + (size_t)j * stride;
        if (rf_is_zero(F, e) || fmpq_mpoly_is_one(e->d, F->ctx))
            continue;
        fmpq_mpoly_gcd(g, L, e->d, F->ctx);
        fmpq_mpoly_divides(t, e->d, g, F->ctx);
        pmul(F, L, L, t);
    }
    fmpq_mpoly_clear(g, F->ctx);
    fmpq_mpoly_clear(t, F->ctx);
}

/* p <- L * e (exactly a polynomial when L is a multiple of e's denominator). */
static void scale_entry(fx *F, fmpq_mpoly_t p, const rf *e, const fmpq_mpoly_t L)
{
    fmpq_mpoly_t q;
    fmpq_mpoly_init(q, F->ctx);
    if (!rf_is_zero(F, e) && fmpq_mpoly_divides(q, L, e->d, F->ctx))
        pmul(F, p, q, e->n);
    else
        fmpq_mpoly_zero(p, F->ctx);
    fmpq_mpoly_clear(q, F->ctx);
}

/* c^T x + c0 for A x = rhs (rhs: S->b, or the unit vector at `unit` when unit >= 0).
 * Returns 0, 1 when A is singular, -1 past a bound or out of memory. */
static int solve_form(fx *F, const sys *S, const lform *l, int unit, rf *out)
{
    int n = S->n, m = n + 1;
    fmpq_mpoly_struct *M = flint_malloc(sizeof *M * (size_t)m * (size_t)m);
    rf *row = malloc(sizeof *row * (size_t)m);
    if (!M || !row) {
        flint_free(M);
        free(row);
        F->nomem = true;
        return -1;
    }
    for (int i = 0; i < m * m; i++)
        fmpq_mpoly_init(M + i, F->ctx);
    fmpq_mpoly_t L, det, Lc;
    fmpq_mpoly_init(L, F->ctx);
    fmpq_mpoly_init(det, F->ctx);
    fmpq_mpoly_init(Lc, F->ctx);
    for (int i = 0; i < n; i++) {
        /* row i of [A rhs], scaled by the lcm of its denominators */
        for (int j = 0; j < n; j++)
            row[j] = S->a[i * n + j];
        if (unit >= 0) {
            rf_init(F, &row[n]);
            rf_set_si(F, &row[n], i == unit);
        } else {
            row[n] = S->b[i];
        }
        lcm_dens(F, row, m, 1, L);
        for (int j = 0; j < m; j++)
            scale_entry(F, M + (size_t)i * m + j, &row[j], L);
        if (unit >= 0)
            rf_clear(F, &row[n]);
    }
    lcm_dens(F, l->c, n, 1, Lc);
    for (int j = 0; j < n; j++)
        scale_entry(F, M + (size_t)n * m + j, &l->c[j], Lc);
    int rc = F->too_big ? -1 : bareiss(F, M, m, n, det);
    if (rc == 0) {
        /* c^T x = -det(B) / det(A), then / Lc + c0 */
        rf r;
        rf_init(F, &r);
        fmpq_mpoly_neg(r.n, M + (size_t)m * m - 1, F->ctx);
        pmul(F, r.d, det, Lc);
        rf_norm(F, &r);
        rf_addsub(F, out, &r, &l->c0, 1);
        rf_clear(F, &r);
        if (F->too_big)
            rc = -1;
    }
    free(row);
    fmpq_mpoly_clear(Lc, F->ctx);
    fmpq_mpoly_clear(L, F->ctx);
    fmpq_mpoly_clear(det, F->ctx);
    for (int i = 0; i < m * m; i++)
        fmpq_mpoly_clear(M + i, F->ctx);
    flint_free(M);
    return rc;
}

/* ---- quantities ------------------------------------------------------------------------------- */

static bool depends_on(fx *F, const rf *a, int var)
{
    return fmpq_mpoly_degree_si(a->n, var, F->ctx) > 0 || fmpq_mpoly_degree_si(a->d, var, F->ctx) > 0;
}

/* A linear form in the system with part `removed` opened (-1: the circuit as
 * it is); unit >= 0: the right-hand side is a unit current into that unknown.
 * An opened port whose other side is left with no DC path gets a tie to ground
 * at `tie_node`, and the answer must not depend on it.  Returns the outcome;
 * *why is set for a quantity with no finite formula. */
static ls_outcome solve_in(fx *F, int removed, int tie_node, const lform *l, int unit, rf *out, const char **why)
{
    for (int attempt = 0; attempt < 2; attempt++) {
        sys S;
        if (build(F, &S, removed, attempt ? tie_node : 0) != 0)
            return LS_NO_MEMORY;
        int rc = F->too_big ? -1 : solve_form(F, &S, l, unit, out);
        sys_free(F, &S);
        if (rc < 0)
            return F->too_big ? too_big_error(F, F->too_big_why) : F->nomem ? LS_NO_MEMORY : LS_UNSOLVABLE;
        if (rc == 0) {
            if (attempt && depends_on(F, out, F->tie)) {
                *why = "it depends on a node the opened port leaves with no DC path";
                return LS_BAD_REQUEST;
            }
            return LS_DONE;
        }
        if (removed < 0 || tie_node <= 0)
            break;
    }
    *why = removed < 0 ? "the system is singular" : "a node has no DC path to ground with the port open (unbounded)";
    return removed < 0 ? LS_UNSOLVABLE : LS_BAD_REQUEST;
}

/* Voltage of node `node` (0: ground) as a linear form. */
static void node_form(fx *F, lform *l, int node, int sign)
{
    if (node > 0)
        lf_add_si(F, l, ls_node_unknown(node), sign);
}

static ls_outcome q_rf(fx *F, const ls_q *q, rf *out, const char *text);

static ls_outcome port_prop(fx *F, int part, ls_prop prop, rf *out, const char *text);
static ls_outcome port_prop_voltage(fx *F, int part, ls_prop prop, rf *out, const char *text);

/* The fields of a mode=current port: `open` is the current the driver
 * delivers into a short to ground with the load side disconnected, which for
 * the (linearized) network is its open voltage over zout (Norton); `loaded`
 * the port's current; `sag` their difference (A); `ratio` zout / zin. */
static ls_outcome current_port_prop(fx *F, int part, ls_prop prop, rf *out, const char *text)
{
    rf a, b;
    rf_init(F, &a);
    rf_init(F, &b);
    ls_outcome code = LS_DONE;
    const char *why = NULL;
    switch (prop) {
    case PROP_LOADED: {
        lform l;
        lform_init(F, &l);
        if (l.c) {
            lf_add_si(F, &l, F->nl->parts[part].branch, 1);
            code = solve_in(F, -1, 0, &l, -1, out, &why);
        } else {
            code = LS_NO_MEMORY;
        }
        lform_clear(F, &l);
        break;
    }
    case PROP_OPEN:
        /* the voltage-mode open and zout of the same connection */
        code = port_prop_voltage(F, part, PROP_OPEN, &a, text);
        if (code == LS_DONE)
            code = port_prop_voltage(F, part, PROP_ZOUT, &b, text);
        if (code == LS_DONE && !rf_div(F, out, &a, &b))
            why = "zout is zero (the short-circuit current is unbounded)";
        break;
    case PROP_SAG:
    case PROP_SAG_REL:
        code = current_port_prop(F, part, PROP_OPEN, &a, text);
        if (code == LS_DONE)
            code = current_port_prop(F, part, PROP_LOADED, &b, text);
        if (code == LS_DONE)
            rf_addsub(F, out, &a, &b, -1);
        if (code == LS_DONE && prop == PROP_SAG_REL && !rf_div(F, out, out, &a))
            why = "the short-circuit current is zero";
        break;
    case PROP_RATIO:
        code = port_prop_voltage(F, part, PROP_ZOUT, &a, text);
        if (code == LS_DONE)
            code = port_prop_voltage(F, part, PROP_ZIN, &b, text);
        if (code == LS_DONE && !rf_div(F, out, &a, &b))
            why = "zin is zero";
        break;
    default:
        code = port_prop_voltage(F, part, prop, out, text);
        break;
    }
    if (why) {
        ls_error(F->d, F->qloc, "formula: '%s' has no finite formula: %s", text, why);
        code = LS_BAD_REQUEST;
    }
    rf_clear(F, &a);
    rf_clear(F, &b);
    return code;
}

/* A port's field as the spec defines it (the other ports connected). */
static ls_outcome port_prop(fx *F, int part, ls_prop prop, rf *out, const char *text)
{
    const ls_part *p = &F->nl->parts[part];
    if (ls_part_has(p, ls_kind_opt(p->kind, "mode")) && opt(p, "mode", 0) != 0)
        return current_port_prop(F, part, prop, out, text);
    return port_prop_voltage(F, part, prop, out, text);
}

/* Does the solver hold port part's load side when it opens it (a load side
 * with no DC path of its own, loading.md)?  Its own decision, from the
 * circuit's DC paths, so both describe the same modified circuit. */
static bool port_load_held(fx *F, int part)
{
    const ls_port_result *pr = ls_op_port(F->op, part);
    return pr && pr->load_held;
}

/* A linear form in the system with held port `part` opened: its load end
 * held at its loaded voltage (the load node's voltage in the whole circuit,
 * itself a formula), the driver side free.  For zout (unit >= 0) the held
 * voltage is an independent source and drops out with the rhs. */
static ls_outcome held_solve(fx *F, int part, const lform *l, int unit, rf *out, const char **why)
{
    const ls_part *p = &F->nl->parts[part];
    rf v;
    rf_init(F, &v);
    ls_outcome code = LS_DONE;
    if (unit < 0) {
        lform lv;
        lform_init(F, &lv);
        if (!lv.c)
            code = LS_NO_MEMORY;
        if (code == LS_DONE) {
            node_form(F, &lv, p->pin[1], 1);
            code = solve_in(F, -1, 0, &lv, -1, &v, why);
        }
        lform_clear(F, &lv);
    }
    if (code == LS_DONE) {
        F->hold = &v;
        code = solve_in(F, part, 0, l, unit, out, why);
        F->hold = NULL;
        if (code != LS_DONE && *why)
            *why = "with the load side held at its loaded voltage the driver side has no DC solution";
    }
    rf_clear(F, &v);
    return code;
}

/* zout (at the driver) or zin (at the load) of port part opened, through
 * linear form l (empty, made by the caller): 0 at ground; unbounded (*why)
 * for zin of a held load side.  LS_DONE, or the outcome after reporting why. */
static ls_outcome port_z(fx *F, int part, ls_prop prop, bool held, lform *l, rf *out, const char **why)
{
    const ls_part *p = &F->nl->parts[part];
    int dn = p->pin[0], ln = p->pin[1];
    int node = prop == PROP_ZOUT ? dn : ln;
    if (node <= 0) {
        rf_set_si(F, out, 0);
        return LS_DONE;
    }
    if (held && prop == PROP_ZIN) {
        *why = "the load side has no DC path of its own with the port open (it is held at its loaded voltage), "
               "so zin is unbounded";
        return LS_DONE;
    }
    node_form(F, l, node, 1);
    if (held)
        return held_solve(F, part, l, ls_node_unknown(node), out, why);
    return solve_in(F, part, prop == PROP_ZOUT ? ln : dn, l, ls_node_unknown(node), out, why);
}

/* A field of port `part` made of two others: sag (open - loaded), the
 * relative sag (that over open) or the ratio (zin / zout), into out; *why
 * set when it has no finite formula.  The outcome. */
static ls_outcome port_pair(fx *F, int part, ls_prop prop, rf *out, const char *text, const char **why)
{
    bool sag = prop == PROP_SAG || prop == PROP_SAG_REL;
    rf a, b;
    rf_init(F, &a);
    rf_init(F, &b);
    ls_outcome code = port_prop_voltage(F, part, sag ? PROP_OPEN : PROP_ZIN, &a, text);
    if (code == LS_DONE)
        code = port_prop_voltage(F, part, sag ? PROP_LOADED : PROP_ZOUT, &b, text);
    if (code == LS_DONE && sag)
        rf_addsub(F, out, &a, &b, -1);
    if (code == LS_DONE && prop == PROP_SAG_REL && !rf_div(F, out, out, &a))
        *why = "the open voltage is zero";
    if (code == LS_DONE && prop == PROP_RATIO && !rf_div(F, out, &a, &b))
        *why = "zout is zero";
    rf_clear(F, &a);
    rf_clear(F, &b);
    return code;
}

/* The fields of a voltage-mode port (and zout, zin, open voltage of any). */
static ls_outcome port_prop_voltage(fx *F, int part, ls_prop prop, rf *out, const char *text)
{
    const ls_part *p = &F->nl->parts[part];
    bool held = port_load_held(F, part);
    int dn = p->pin[0], ln = p->pin[1];
    const char *why = NULL;
    ls_outcome code = LS_DONE;
    lform l;
    lform_init(F, &l);
    if (!l.c) {
        lform_clear(F, &l);   /* c0 was made even when c was not */
        return LS_NO_MEMORY;
    }
    switch (prop) {
    case PROP_LOADED:
        node_form(F, &l, dn, 1);
        code = solve_in(F, -1, 0, &l, -1, out, &why);
        break;
    case PROP_OPEN:
        node_form(F, &l, dn, 1);
        code = held ? held_solve(F, part, &l, -1, out, &why) : solve_in(F, part, ln, &l, -1, out, &why);
        break;
    case PROP_ZOUT:
    case PROP_ZIN: code = port_z(F, part, prop, held, &l, out, &why); break;
    case PROP_SAG:
    case PROP_SAG_REL:
    case PROP_RATIO: code = port_pair(F, part, prop, out, text, &why); break;
    default:
        why = "formula does not treat this property";
        code = LS_BAD_REQUEST;
        break;
    }
    if (why && code == LS_DONE)
        code = LS_BAD_REQUEST;
    if (why)
        ls_error(F->d, F->qloc, "formula: '%s' has no finite formula: %s", text, why);
    lform_clear(F, &l);
    return code;
}

/* Part property: current, voltage (as the kind reads it), power. */
static ls_outcome part_prop(fx *F, int part, ls_prop prop, rf *out, const char *text)
{
    const ls_part *p = &F->nl->parts[part];
    const char *why = NULL;
    lform lc, lv;
    lform_init(F, &lc);
    lform_init(F, &lv);
    if (!lc.c || !lv.c) {
        lform_clear(F, &lc);
        lform_clear(F, &lv);
        return LS_NO_MEMORY;
    }
    int plus, minus;
    ls_part_vnodes(p, &plus, &minus);
    node_form(F, &lv, plus, 1);
    node_form(F, &lv, minus, -1);
    part_lform(F, part, &lc, 0);
    ls_outcome code;
    if (prop == PROP_CURRENT) {
        code = solve_in(F, -1, 0, &lc, -1, out, &why);
    } else if (prop == PROP_VOLTAGE) {
        code = solve_in(F, -1, 0, &lv, -1, out, &why);
    } else if (ls_part_power_sign(p) == 0) {
        why = "its power is not its voltage times its current (a track's: both segments; an op-amp's: its "
                  "inputs and supply rails too)";
        code = LS_BAD_REQUEST;
    } else {
        /* power absorbed: the voltage times the current, signed as the kind reads its voltage */
        rf i;
        rf_init(F, &i);
        code = solve_in(F, -1, 0, &lc, -1, &i, &why);
        if (code == LS_DONE)
            code = solve_in(F, -1, 0, &lv, -1, out, &why);
        if (code == LS_DONE) {
            if (ls_part_power_sign(p) < 0)
                rf_neg(F, out, out);
            rf_mul(F, out, out, &i);
        }
        rf_clear(F, &i);
    }
    if (why)
        ls_error(F->d, F->qloc, "formula: '%s' has no finite formula: %s", text, why);
    lform_clear(F, &lc);
    lform_clear(F, &lv);
    return code;
}

/* ---- the exact domain of ls_q_walk: fractions of polynomials in the symbols ------------------- */
/* Every operation returns LS_DONE, or another ls_outcome (as the walk's int
 * code) after reporting why against the quantity's text (F->qtext). */

static int rq_init(void *fv, void *v)
{
    rf_init(fv, v);
    return LS_DONE;
}

static void rq_clear(void *fv, void *v)
{
    rf_clear(fv, v);
}

/* A function has no rational formula: said once, at the call. */
static int rq_accepts(void *fv, const ls_q *q)
{
    fx *F = fv;
    if (q->kind != Q_CALL)
        return LS_DONE;
    ls_error(F->d, F->qloc, "formula: '%s' uses a function (sqrt, abs, min, max, exp, ln, log10), "
             "which has no rational formula", F->qtext);
    return LS_BAD_REQUEST;
}

static int rq_const(void *fv, const ls_q *q, void *out)
{
    rf_set_double(fv, out, q->value);
    return LS_DONE;
}

static int rq_node(void *fv, const ls_q *q, void *out)
{
    fx *F = fv;
    lform l;
    lform_init(F, &l);
    if (!l.c) {
        lform_clear(F, &l);   /* c0 was made even when c was not */
        return LS_NO_MEMORY;
    }
    const char *why = NULL;
    node_form(F, &l, q->index, 1);
    int code = solve_in(F, -1, 0, &l, -1, out, &why);
    if (why)
        ls_error(F->d, F->qloc, "formula: '%s' has no formula: %s", F->qtext, why);
    lform_clear(F, &l);
    return code;
}

static int rq_prop(void *fv, const ls_q *q, void *out)
{
    fx *F = fv;
    if (q->prop == PROP_VALUE) {
        rf_set(F, out, &F->pval[q->index]);
        return LS_DONE;
    }
    if (q->prop == PROP_CURRENT || q->prop == PROP_VOLTAGE || q->prop == PROP_POWER)
        return part_prop(F, q->index, q->prop, out, F->qtext);
    if (F->nl->parts[q->index].kind->is_port)
        return port_prop(F, q->index, q->prop, out, F->qtext);
    ls_error(F->d, F->qloc, "formula: '%s': formula does not treat the property '%s'", F->qtext,
             ls_prop_name(q->prop));
    return LS_BAD_REQUEST;
}

static int rq_neg(void *fv, const ls_q *q, void *a)
{
    (void)q;
    rf_neg(fv, a, a);
    return LS_DONE;
}

/* A whole constant power up to 16, so the result stays a fraction. */
static bool rq_pow(fx *F, rf *a, const rf *b)
{
    double e = rf_eval_d(F, b);
    return fmpq_mpoly_is_fmpq(b->n, F->ctx) && fmpq_mpoly_is_one(b->d, F->ctx) && e == floor(e) && fabs(e) <= 16 &&
           rf_pow(F, a, a, (long)e);
}

static int rq_binop(void *fv, const ls_q *q, void *av, const void *bv)
{
    fx *F = fv;
    rf *a = av;
    const rf *b = bv;
    bool ok = true;
    switch (q->op) {
    case LS_OP_ADD: rf_addsub(F, a, a, b, 1); break;
    case LS_OP_SUB: rf_addsub(F, a, a, b, -1); break;
    case LS_OP_MUL: rf_mul(F, a, a, b); break;
    case LS_OP_DIV: ok = rf_div(F, a, a, b); break;
    case LS_OP_PAR: {
        rf s;
        rf_init(F, &s);
        rf_addsub(F, &s, a, b, 1);
        rf_mul(F, a, a, b);
        ok = rf_div(F, a, a, &s);
        rf_clear(F, &s);
        break;
    }
    case LS_OP_POW: ok = rq_pow(F, a, b); break;
    default: ok = false; break;
    }
    if (!ok) {
        ls_error(F->d, F->qloc, "formula: '%s' has no finite formula (a division by zero, or a "
                 "power that is not a whole constant)", F->qtext);
        return LS_BAD_REQUEST;
    }
    return F->too_big ? too_big_error(F, F->too_big_why) : LS_DONE;
}

/* Never reached: rq_accepts turns every call away. */
static int rq_call(void *fv, const ls_q *q, void *const *args, void *out)
{
    (void)fv, (void)q, (void)args, (void)out;
    assert(!"formula takes no function call");
    return LS_BAD_REQUEST;
}

static const ls_qdomain exact_domain = {
    .size = sizeof(rf), .init = rq_init, .clear = rq_clear, .accepts = rq_accepts,
    .constant = rq_const, .node = rq_node, .prop = rq_prop,
    .neg = rq_neg, .binop = rq_binop, .call = rq_call,
};

/* The exact formula of q into out (made by the caller).  LS_DONE, or the
 * outcome after reporting why. */
static ls_outcome q_rf(fx *F, const ls_q *q, rf *out, const char *text)
{
    F->qtext = text;
    int code = ls_q_walk(&exact_domain, F, q, out);   /* an ls_outcome of the operations, or -1 */
    return code < 0 ? LS_NO_MEMORY : (ls_outcome)code;
}

/* ---- --ideal: every finite gain to infinity --------------------------------------------------- */

/* The limit of a as symbol var -> +infinity: the ratio of the leading
 * coefficients when the degrees agree, 0 when the denominator's is higher.
 * Returns false when it grows without bound. */
static bool limit_inf(fx *F, rf *a, int var)
{
    slong dn = fmpq_mpoly_degree_si(a->n, var, F->ctx), dd = fmpq_mpoly_degree_si(a->d, var, F->ctx);
    if (fmpq_mpoly_is_zero(a->n, F->ctx))
        return true;
    if (dn > dd)
        return false;
    if (dn < dd) {
        rf_set_si(F, a, 0);
        return true;
    }
    slong v = var;
    ulong e = (ulong)dn;
    fmpq_mpoly_get_coeff_vars_ui(a->n, a->n, &v, &e, 1, F->ctx);
    e = (ulong)dd;
    fmpq_mpoly_get_coeff_vars_ui(a->d, a->d, &v, &e, 1, F->ctx);
    rf_norm(F, a);
    return true;
}

/* ---- text of a formula ---------------------------------------------------------------------- */

typedef struct sbuf {
    char *s;
    size_t n, cap;
    bool failed;
} sbuf;

static void sb_put(sbuf *b, const char *t)
{
    size_t k = strlen(t);
    if (b->n + k + 1 > b->cap) {
        size_t cap = (b->cap ? b->cap * 2 : 128) + k;
        char *s = realloc(b->s, cap);
        if (!s) {
            b->failed = true;
            return;
        }
        b->s = s;
        b->cap = cap;
    }
    memcpy(b->s + b->n, t, k + 1);
    b->n += k;
}

/* Text of |q|: a whole number, an exact decimal (1.5, 0.0047, 2.2e-9), or p / q. */
/* Would the exact text of q need a number of more than 40 digits?  Such a
 * number (from many numeric values multiplied together) is printed rounded:
 * the language reads numbers of up to 127 characters, as doubles. */
static bool long_number(const fmpq_t q)
{
    return fmpz_sizeinbase(fmpq_numref(q), 10) > 40 || fmpz_sizeinbase(fmpq_denref(q), 10) > 40;
}

/* |q| as the shortest decimal that reads back as the double nearest to it. */
static void put_rounded(sbuf *b, const fmpq_t q)
{
    double v = fabs(fmpq_get_d(q));
    char buf[40];
    for (int prec = 1; prec <= 17; prec++) {
        snprintf(buf, sizeof buf, "%.*g", prec, v);
        if (strtod(buf, NULL) == v)
            break;
    }
    sb_put(b, buf);
}

/* num/den as a decimal with k digits after the point (den divides 10^k):
 * "0.0047", "12.5", or "4.7e-9" past three leading zeros.  Caller frees;
 * NULL when out of memory. */
static char *decimal_text(const fmpz_t num, const fmpz_t den, int k)
{
    char *txt;
    fmpz_t m;
    fmpz_init(m);
    fmpz_set_ui(m, 10);
    fmpz_pow_ui(m, m, (ulong)k);
    fmpz_divexact(m, m, den);
    fmpz_mul(m, m, num);          /* value = m * 10^-k */
    char *digits = fmpz_get_str(NULL, 10, m);
    size_t nd = strlen(digits);
    /* strip trailing zeros into the exponent */
    while (nd > 1 && digits[nd - 1] == '0' && k > 0) {
        digits[--nd] = 0;
        k--;
    }
    txt = malloc(nd + 32);
    if (txt && (size_t)k < nd) {
        snprintf(txt, nd + 32, "%.*s.%s", (int)(nd - (size_t)k), digits, digits + nd - (size_t)k);
    } else if (txt && k - (int)nd < 4) {
        snprintf(txt, nd + 32, "0.%0*d%s", k - (int)nd, 0, digits);
        if (k == (int)nd)
            snprintf(txt, nd + 32, "0.%s", digits);
    } else if (txt) {
        snprintf(txt, nd + 32, "%c%s%s%se-%d", digits[0], nd > 1 ? "." : "", digits + 1, "",
                 k - (int)nd + 1);
    }
    flint_free(digits);
    fmpz_clear(m);
    return txt;
}

static void put_number(sbuf *b, const fmpq_t q)
{
    if (long_number(q)) {
        put_rounded(b, q);
        return;
    }
    fmpz_t num, den, r;
    fmpz_init(num);
    fmpz_init(den);
    fmpz_init(r);
    fmpz_abs(num, fmpq_numref(q));
    fmpz_set(den, fmpq_denref(q));
    /* den = 2^a 5^b: a decimal with k = max(a, b) digits after the point */
    fmpz_set(r, den);
    int k2 = 0, k5 = 0;
    while (fmpz_divisible_si(r, 2)) { fmpz_divexact_si(r, r, 2); k2++; }
    while (fmpz_divisible_si(r, 5)) { fmpz_divexact_si(r, r, 5); k5++; }
    char *txt = fmpz_is_one(r) && !fmpz_is_one(den) ? decimal_text(num, den, k2 > k5 ? k2 : k5) : NULL;
    if (txt) {
        sb_put(b, txt);
        free(txt);
    } else {
        char *ns = fmpz_get_str(NULL, 10, num);
        sb_put(b, ns);
        flint_free(ns);
        if (!fmpz_is_one(den)) {
            char *ds = fmpz_get_str(NULL, 10, den);
            sb_put(b, " / ");
            sb_put(b, ds);
            flint_free(ds);
        }
    }
    fmpz_clear(num);
    fmpz_clear(den);
    fmpz_clear(r);
}

/* Text of a polynomial: terms joined by + and -, each "c * a * b^2". */
/* Terms [lo, hi) of p, each with its sign (the first one's only when
 * negative). */
static void put_terms(fx *F, sbuf *b, const fmpq_mpoly_t p, slong lo, slong hi)
{
    slong exps[LS_FORMULA_MAX_SYMBOLS + 2];
    fmpq_t c;
    fmpq_init(c);
    for (slong t = lo; t < hi; t++) {
        fmpq_mpoly_get_term_coeff_fmpq(c, p, t, F->ctx);
        fmpq_mpoly_get_term_exp_si(exps, p, t, F->ctx);
        bool neg = fmpq_sgn(c) < 0;
        sb_put(b, t == lo ? (neg ? "-" : "") : (neg ? " - " : " + "));
        bool first = true;
        if (!fmpq_is_pm1(c)) {
            put_number(b, c);
            first = false;
        }
        for (int v = 0; v <= F->nsym; v++) {
            if (!exps[v])
                continue;
            sb_put(b, first ? "" : " * ");
            sb_put(b, v < F->nsym ? F->sym[v].name : "tie");
            if (exps[v] > 1) {
                char e[24];
                snprintf(e, sizeof e, "^%ld", (long)exps[v]);
                sb_put(b, e);
            }
            first = false;
        }
        if (first)
            sb_put(b, "1");
    }
    fmpq_clear(c);
}

/* Terms [lo, hi) of p as a sum.  The language limits how deep an expression
 * may nest, and each operator of a chain counts one level (limits.md), so a
 * sum of more than LS_FORMULA_CHAIN terms is written as a sum of
 * parenthesized groups (of LS_FORMULA_CHAIN^k terms, k as small as keeps the
 * groups within LS_FORMULA_CHAIN): the printed formula then always reads
 * back, whatever the number of terms. */
static void put_sum(fx *F, sbuf *b, const fmpq_mpoly_t p, slong lo, slong hi)
{
    slong n = hi - lo;
    if (n <= LS_FORMULA_CHAIN) {
        put_terms(F, b, p, lo, hi);
        return;
    }
    slong size = LS_FORMULA_CHAIN;
    while ((n + size - 1) / size > LS_FORMULA_CHAIN)
        size *= LS_FORMULA_CHAIN;
    for (slong g = lo; g < hi; g += size) {
        sb_put(b, g == lo ? "(" : " + (");
        put_sum(F, b, p, g, g + size < hi ? g + size : hi);
        sb_put(b, ")");
    }
}

static void put_poly(fx *F, sbuf *b, const fmpq_mpoly_t p)
{
    slong len = fmpq_mpoly_length(p, F->ctx);
    if (len == 0) {
        sb_put(b, "0");
        return;
    }
    put_sum(F, b, p, 0, len);
}

/* One factor of a factored polynomial, normalized: primitive integer
 * coefficients, positive leading term. */
typedef struct factor {
    fmpq_mpoly_t p;
    slong e;
    bool used;
} factor;

typedef struct factored {
    fmpq_t k;                /* constant */
    factor *f;
    int n;
} factored;

static bool factorize(fx *F, const fmpq_mpoly_t a, factored *out)
{
    fmpq_init(out->k);
    out->f = NULL;
    out->n = 0;
    fmpq_mpoly_factor_t fa;
    fmpq_mpoly_factor_init(fa, F->ctx);
    charge(F, fmpq_mpoly_length(a, F->ctx), fmpq_mpoly_length(a, F->ctx));
    if (F->too_big || !fmpq_mpoly_factor(fa, a, F->ctx)) {
        fmpq_mpoly_factor_clear(fa, F->ctx);
        return false;
    }
    out->f = calloc((size_t)fa->num + 1, sizeof *out->f);
    if (!out->f) {
        fmpq_mpoly_factor_clear(fa, F->ctx);
        return false;
    }
    fmpq_t c, k, cont;
    fmpq_init(c);
    fmpq_init(k);
    fmpq_init(cont);
    fmpq_set(k, fa->constant);
    for (slong i = 0; i < fa->num; i++) {
        factor *f = &out->f[out->n++];
        fmpq_mpoly_init(f->p, F->ctx);
        fmpq_mpoly_set(f->p, fa->poly + i, F->ctx);
        f->e = fmpz_get_si(fa->exp + i);
        /* divide by the content, with the leading coefficient's sign */
        fmpq_mpoly_get_term_coeff_fmpq(c, f->p, 0, F->ctx);
        fmpq_mpoly_content(cont, f->p, F->ctx);
        if (fmpq_sgn(c) < 0)
            fmpq_neg(cont, cont);
        fmpq_mpoly_scalar_div_fmpq(f->p, f->p, cont, F->ctx);
        fmpq_pow_si(cont, cont, f->e);
        fmpq_mul(k, k, cont);
    }
    fmpq_set(out->k, k);
    fmpq_clear(k);
    fmpq_clear(cont);
    fmpq_clear(c);
    fmpq_mpoly_factor_clear(fa, F->ctx);
    return true;
}

static void factored_clear(fx *F, factored *a)
{
    for (int i = 0; i < a->n; i++)
        fmpq_mpoly_clear(a->f[i].p, F->ctx);
    free(a->f);
    fmpq_clear(a->k);
}

/* The variable of a polynomial that is one symbol to the first power, or -1. */
static int single_var(fx *F, const fmpq_mpoly_t p)
{
    if (fmpq_mpoly_length(p, F->ctx) != 1 || fmpq_mpoly_total_degree_si(p, F->ctx) != 1)
        return -1;
    for (int v = 0; v <= F->nsym; v++)
        if (fmpq_mpoly_degree_si(p, v, F->ctx) == 1)
            return v;
    return -1;
}

/* Lowest symbol index a polynomial uses (for ordering the factors). */
static int first_var(fx *F, const fmpq_mpoly_t p)
{
    for (int v = 0; v <= F->nsym; v++)
        if (fmpq_mpoly_degree_si(p, v, F->ctx) > 0)
            return v;
    return F->nsym + 1;
}

/* Text of one factor as a multiplicand: parenthesized unless a single term. */
static void put_factor(fx *F, sbuf *b, const factor *f)
{
    bool paren = fmpq_mpoly_length(f->p, F->ctx) > 1 ||
                 (f->e > 1 && fmpq_mpoly_total_degree_si(f->p, F->ctx) > 1);
    if (paren)
        sb_put(b, "(");
    put_poly(F, b, f->p);
    if (paren)
        sb_put(b, ")");
    if (f->e > 1) {
        char e[24];
        snprintf(e, sizeof e, "^%ld", (long)f->e);
        sb_put(b, e);
    }
}

/* A group of the factored form: text and the symbol it starts with. */
typedef struct group {
    char *text;
    int key;
} group;

static int group_cmp(const void *a, const void *b)
{
    const group *x = a, *y = b;
    return (x->key > y->key) - (x->key < y->key);
}

/* Is every variable of a also one of b's? */
static bool vars_within(fx *F, const fmpq_mpoly_t a, const fmpq_mpoly_t b)
{
    for (int v = 0; v <= F->nsym; v++)
        if (fmpq_mpoly_degree_si(a, v, F->ctx) > 0 && fmpq_mpoly_degree_si(b, v, F->ctx) <= 0)
            return false;
    return true;
}

/* The groups of factored_text: the factors of a numerator and a
 * denominator, each factor used at most once, joined into texts (group). */
typedef struct grouping {
    factored *fn, *fd;
    group *g;              /* room for every factor of both */
    int ng;
    bool lost;             /* out of memory: a group's text is missing or cut short */
} grouping;

/* Parallel pairs: 1/(1/a + 1/b) as (a || b), a denominator a + b over the
 * numerator's a and b. */
static void parallel_groups(fx *F, grouping *G)
{
    for (int i = 0; i < G->fd->n; i++) {
        factor *d = &G->fd->f[i];
        if (d->e != 1 || fmpq_mpoly_length(d->p, F->ctx) != 2 || fmpq_mpoly_total_degree_si(d->p, F->ctx) != 1)
            continue;
        slong ex[2][LS_FORMULA_MAX_SYMBOLS + 2];
        fmpq_t c0, c1;
        fmpq_init(c0);
        fmpq_init(c1);
        fmpq_mpoly_get_term_coeff_fmpq(c0, d->p, 0, F->ctx);
        fmpq_mpoly_get_term_coeff_fmpq(c1, d->p, 1, F->ctx);
        fmpq_mpoly_get_term_exp_si(ex[0], d->p, 0, F->ctx);
        fmpq_mpoly_get_term_exp_si(ex[1], d->p, 1, F->ctx);
        bool ones = fmpq_is_one(c0) && fmpq_is_one(c1);
        fmpq_clear(c0);
        fmpq_clear(c1);
        int va = -1, vb = -1;
        for (int v = 0; v <= F->nsym; v++) {
            if (ex[0][v] == 1) va = v;
            if (ex[1][v] == 1) vb = v;
        }
        if (!ones || va < 0 || vb < 0)
            continue;
        int ia = -1, ib = -1;
        for (int j = 0; j < G->fn->n; j++) {
            int v = G->fn->f[j].e > 0 ? single_var(F, G->fn->f[j].p) : -1;
            if (v == va) ia = j;
            if (v == vb) ib = j;
        }
        if (ia < 0 || ib < 0)
            continue;
        G->fn->f[ia].e--;
        G->fn->f[ib].e--;
        d->used = true;
        sbuf t = {0};
        sb_put(&t, "(");
        sb_put(&t, F->sym[va < vb ? va : vb].name);
        sb_put(&t, " || ");
        sb_put(&t, F->sym[va < vb ? vb : va].name);
        sb_put(&t, ")");
        G->lost |= t.failed;
        G->g[G->ng++] = (group){t.s, va < vb ? va : vb};
    }
}

/* Ratios: a denominator factor with the numerator factor that belongs to it. */
static void ratio_groups(fx *F, grouping *G)
{
    for (int i = 0; i < G->fd->n; i++) {
        factor *d = &G->fd->f[i];
        if (d->used || d->e != 1)
            continue;
        int dv = single_var(F, d->p);
        for (int j = 0; j < G->fn->n; j++) {
            factor *nf = &G->fn->f[j];
            if (nf->e != 1 || nf->used)
                continue;
            sbuf t = {0};
            if (dv >= 0 && fmpq_mpoly_length(nf->p, F->ctx) > 1 && fmpq_mpoly_degree_si(nf->p, dv, F->ctx) == 1) {
                /* (d + rest) / d = 1 + rest / d, when d is one of the terms */
                fmpq_mpoly_t rest;
                fmpq_mpoly_init(rest, F->ctx);
                fmpq_mpoly_sub(rest, nf->p, d->p, F->ctx);
                if (fmpq_mpoly_length(rest, F->ctx) == fmpq_mpoly_length(nf->p, F->ctx) - 1 &&
                    fmpq_mpoly_degree_si(rest, dv, F->ctx) <= 0) {
                    sb_put(&t, "(1 + ");
                    bool paren = fmpq_mpoly_length(rest, F->ctx) > 1;
                    sb_put(&t, paren ? "(" : "");
                    put_poly(F, &t, rest);
                    sb_put(&t, paren ? ") / " : " / ");
                    sb_put(&t, F->sym[dv].name);
                    sb_put(&t, ")");
                }
                fmpq_mpoly_clear(rest, F->ctx);
            } else if (dv < 0 && fmpq_mpoly_length(nf->p, F->ctx) == 1 && fmpq_mpoly_total_degree_si(d->p, F->ctx) == 1 &&
                       vars_within(F, nf->p, d->p)) {
                put_factor(F, &t, nf);
                sb_put(&t, " / ");
                put_factor(F, &t, d);
            }
            if (t.s) {
                nf->used = d->used = true;
                G->lost |= t.failed;
                G->g[G->ng++] = (group){t.s, first_var(F, nf->p)};
                break;
            }
        }
    }
}

/* A denominator factor left over, over every numerator factor within its
 * symbols: Black's A (rf + rg) / (A rg + rf + rg) stays one fraction. */
static void leftover_groups(fx *F, grouping *G)
{
    for (int i = 0; i < G->fd->n; i++) {
        factor *d = &G->fd->f[i];
        if (d->used || d->e != 1 || single_var(F, d->p) >= 0)
            continue;
        sbuf t = {0};
        int key = F->nsym + 1, count = 0;
        for (int j = 0; j < G->fn->n; j++) {
            factor *nf = &G->fn->f[j];
            if (nf->used || nf->e <= 0 || !vars_within(F, nf->p, d->p))
                continue;
            sb_put(&t, count++ ? " * " : "");
            put_factor(F, &t, nf);
            nf->used = true;
            int fv = first_var(F, nf->p);
            key = fv < key ? fv : key;
        }
        if (!count)
            continue;
        sb_put(&t, " / ");
        put_factor(F, &t, d);
        d->used = true;
        G->lost |= t.failed;
        G->g[G->ng++] = (group){t.s, key};
    }
}

/* The rest of the numerator, one factor each. */
static void rest_groups(fx *F, grouping *G)
{
    for (int j = 0; j < G->fn->n; j++) {
        if (G->fn->f[j].used || G->fn->f[j].e <= 0)
            continue;
        sbuf t = {0};
        put_factor(F, &t, &G->fn->f[j]);
        G->lost |= t.failed;
        G->g[G->ng++] = (group){t.s, first_var(F, G->fn->f[j].p)};
    }
}

/* The constant k in front: its sign, and a whole numerator unless it is 1
 * before other groups (its denominator joins the division).  Returns
 * whether anything was written. */
static bool put_front_constant(sbuf *b, fmpq_t k, int ng)
{
    bool any = false;
    if (fmpq_sgn(k) < 0)
        sb_put(b, "-");
    fmpq_abs(k, k);
    if (!fmpq_is_one(k) || ng == 0) {
        fmpq_t kn;
        fmpq_init(kn);
        fmpz_set(fmpq_numref(kn), fmpq_numref(k));
        /* a whole numerator in front, its denominator joins the division below */
        if (!fmpz_is_one(fmpq_numref(k)) || ng == 0 || fmpz_is_one(fmpq_denref(k))) {
            if (fmpz_is_one(fmpq_denref(k)) || !fmpz_is_one(fmpq_numref(k)) || ng == 0) {
                fmpq_t w;
                fmpq_init(w);
                fmpz_set(fmpq_numref(w), fmpq_numref(k));
                put_number(b, w);
                fmpq_clear(w);
                any = true;
            }
        }
        fmpq_clear(kn);
    }
    return any;
}

/* What is left of the denominator: k's and the unused factors, after " / ". */
static void put_denominator(fx *F, sbuf *b, const fmpq_t k, const factored *fd)
{
    /* what is left of the denominator */
    int left = 0;
    for (int i = 0; i < fd->n; i++)
        left += !fd->f[i].used;
    bool kden = !fmpz_is_one(fmpq_denref(k));
    if (left || kden) {
        int one = -1;
        for (int i = 0; i < fd->n; i++)
            if (!fd->f[i].used)
                one = i;
        /* a single factor needs no parentheses unless it is a power of a product */
        bool paren = left + kden > 1 ||
                     (left == 1 && !kden && fd->f[one].e > 1 && fmpq_mpoly_length(fd->f[one].p, F->ctx) == 1 &&
                      fmpq_mpoly_total_degree_si(fd->f[one].p, F->ctx) > 1);
        sb_put(b, " / ");
        sb_put(b, paren ? "(" : "");
        bool first = true;
        if (kden) {
            char *ds = fmpz_get_str(NULL, 10, fmpq_denref(k));
            sb_put(b, ds);
            flint_free(ds);
            first = false;
        }
        for (int i = 0; i < fd->n; i++) {
            if (fd->f[i].used)
                continue;
            sb_put(b, first ? "" : " * ");
            put_factor(F, b, &fd->f[i]);
            first = false;
        }
        sb_put(b, paren ? ")" : "");
    }
}

/* The factored text of N/D, grouped the way a hand calculation writes it:
 * a * b / (a + b) as (a || b); a numerator factor over the denominator factor
 * it belongs to (r2 / (r1 + r2)); (rf + rg) / rg as (1 + rf / rg).  NULL when
 * factoring is not available. */
static char *factored_text(fx *F, const rf *a)
{
    factored fn, fd;
    if (!factorize(F, a->n, &fn))
        return NULL;
    if (!factorize(F, a->d, &fd)) {
        factored_clear(F, &fn);
        return NULL;
    }
    fmpq_t k;
    fmpq_init(k);
    fmpq_div(k, fn.k, fd.k);
    grouping G = {.fn = &fn, .fd = &fd, .g = calloc((size_t)(fn.n + fd.n + 1), sizeof *G.g)};
    G.lost = !G.g;
    if (G.g) {
        parallel_groups(F, &G);
        ratio_groups(F, &G);
        leftover_groups(F, &G);
        rest_groups(F, &G);
        qsort(G.g, (size_t)G.ng, sizeof *G.g, group_cmp);
    }
    sbuf b = {0};
    bool any = put_front_constant(&b, k, G.ng);
    for (int i = 0; G.g && i < G.ng; i++) {
        if (any)
            sb_put(&b, " * ");
        sb_put(&b, G.g[i].text);
        free(G.g[i].text);
        any = true;
    }
    put_denominator(F, &b, k, &fd);
    free(G.g);
    fmpq_clear(k);
    factored_clear(F, &fn);
    factored_clear(F, &fd);
    if (G.lost || b.failed) { /* not "not available": the text would silently differ */
        F->nomem = true;
        free(b.s);
        return NULL;
    }
    return b.s;
}

/* The expanded text of a polynomial, parenthesized when it has more than one
 * term and `paren` asks for it. */
static char *poly_text(fx *F, const fmpq_mpoly_t p, bool paren)
{
    sbuf b = {0};
    paren = paren && fmpq_mpoly_length(p, F->ctx) > 1;
    sb_put(&b, paren ? "(" : "");
    put_poly(F, &b, p);
    sb_put(&b, paren ? ")" : "");
    return b.failed ? (free(b.s), NULL) : b.s;
}

/* Numerator and denominator with whole coprime coefficients, the
 * denominator's leading one positive. */
static void integral(fx *F, rf *a)
{
    /* through plain pointers: gcc 12 misjudges the array-typed FLINT handles here */
    fmpq_mpoly_struct *num = a->n, *den = a->d;
    const fmpq_mpoly_ctx_struct *ctx = F->ctx;
    if (fmpq_mpoly_is_zero(den, ctx))
        return;
    fmpq_t c, lc;
    fmpq_init(c);
    fmpq_init(lc);
    fmpq_mpoly_content(c, den, ctx);
    fmpq_mpoly_get_term_coeff_fmpq(lc, den, 0, ctx);
    if (fmpq_sgn(lc) < 0)
        fmpq_neg(c, c);
    fmpq_mpoly_scalar_div_fmpq(num, num, c, ctx);
    fmpq_mpoly_scalar_div_fmpq(den, den, c, ctx);
    /* Whole coefficients of more than 30 digits (many numeric values
     * multiplied) are divided by a common power of ten, exactly, so that the
     * printed numbers stay within what a double holds. */
    slong len = fmpq_mpoly_length(den, ctx);
    size_t digits = 0;
    for (slong t = 0; t < len; t++) {
        fmpq_mpoly_get_term_coeff_fmpq(lc, den, t, ctx);
        size_t dg = fmpz_sizeinbase(fmpq_numref(lc), 10);
        digits = dg > digits ? dg : digits;
    }
    if (digits > 30) {
        fmpz_t p10;
        fmpz_init(p10);
        fmpz_set_ui(p10, 10);
        fmpz_pow_ui(p10, p10, digits - 1);
        fmpq_set_fmpz(c, p10);
        fmpq_mpoly_scalar_div_fmpq(num, num, c, ctx);
        fmpq_mpoly_scalar_div_fmpq(den, den, c, ctx);
        fmpz_clear(p10);
    }
    fmpq_clear(lc);
    fmpq_clear(c);
}

/* Does the text of the polynomial need rounded numbers (long_number)? */
static bool has_long_number(fx *F, const fmpq_mpoly_t p)
{
    fmpq_t c;
    fmpq_init(c);
    bool any = false;
    for (slong t = 0; t < fmpq_mpoly_length(p, F->ctx) && !any; t++) {
        fmpq_mpoly_get_term_coeff_fmpq(c, p, t, F->ctx);
        any = long_number(c);
    }
    fmpq_clear(c);
    return any;
}

/* ---- reading the text back ------------------------------------------------------------------- */

/* ls_eval_const's names in a formula read back: a symbol at its value, as a
 * plain number (the formula's units are its symbols'; only the value is
 * compared).  An unknown name is an error in the scratch diagnostics. */
static bool symbol_value(void *ctx, const ls_expr *e, double *v, ls_dims *d)
{
    const fx *F = ctx;
    int s = sym_find(F, e->name);
    *d = LS_FREE;
    *v = s >= 0 ? fmpq_get_d(F->sym[s].value) : NAN;
    return s >= 0;
}

/* Value of a parsed formula with the symbols at their values (double
 * arithmetic, through the one constant evaluator); NaN when it has none. */
static double eval_text_expr(fx *F, ls_diags *d, const ls_expr *e)
{
    double v;
    ls_dims dims;
    return ls_eval_const(d, e, symbol_value, F, &v, &dims) ? v : NAN;
}

/* Does the text, read back by the language's own parser, give `want`? */
static bool text_reads_back(fx *F, const char *text, double want, double *got_out)
{
    ls_arena a;
    ls_diags d;
    ls_arena_init(&a);
    ls_diags_init(&d, &a);
    ls_expr *e = ls_parse_expr_string(&d, "formula", text, true);
    double got = e ? eval_text_expr(F, &d, e) : NAN;
    if (a.failed || d.nomem || d.lost)
        F->nomem = true;   /* not read back for want of memory: no fault of the text */
    ls_diags_free(&d);
    ls_arena_free(&a);
    *got_out = got;
    if (got == want)
        return true;
    return fabs(got - want) <= 1e-9 * fmax(fabs(got), fabs(want));
}

/* ---- the command's work ---------------------------------------------------------------------- */

/* Sum of |current| of every part touching node (A): the scale of the terms
 * Kirchhoff's current law adds up there, so of the rounding in a branch
 * current the law determines. */
static double node_current_scale(ls_op *op, int node)
{
    double s = 0;
    if (node <= 0)
        return 0;
    for (int i = 0; i < op->nl->nparts; i++)
        for (int k = 0; k < op->nl->parts[i].kind->npins && k < LS_MAX_PINS; k++)
            if (op->nl->parts[i].pin[k] == node && isfinite(op->ipart[i])) {
                s += fabs(op->ipart[i]);
                break;
            }
    return s;
}

/* ---- two questions about a quantity, as domains of ls_q_walk ---------------------------------- */

/* The "modified system" domain: a value is a bool, whether the quantity so
 * far reads a port field the solver computes in a modified system (a port
 * opened): open, zout, zin, sag, sag_rel, ratio. */
static int mod_leaf(void *ctx, const ls_q *q, void *out)
{
    (void)ctx, (void)q;
    *(bool *)out = false;
    return 0;
}

static int mod_prop(void *ctx, const ls_q *q, void *out)
{
    (void)ctx;
    *(bool *)out = q->prop == PROP_OPEN || q->prop == PROP_SAG || q->prop == PROP_SAG_REL || q->prop == PROP_ZOUT ||
                   q->prop == PROP_ZIN || q->prop == PROP_RATIO;
    return 0;
}

static int mod_neg(void *ctx, const ls_q *q, void *a)
{
    (void)ctx, (void)q, (void)a;
    return 0;
}

static int mod_binop(void *ctx, const ls_q *q, void *a, const void *b)
{
    (void)ctx, (void)q;
    *(bool *)a = *(bool *)a || *(const bool *)b;
    return 0;
}

static int mod_call(void *ctx, const ls_q *q, void *const *args, void *out)
{
    (void)ctx;
    *(bool *)out = false;
    for (int i = 0; i < q->nargs; i++)
        *(bool *)out = *(bool *)out || *(const bool *)args[i];
    return 0;
}

static const ls_qdomain modified_domain = {
    .size = sizeof(bool), .constant = mod_leaf, .node = mod_leaf, .prop = mod_prop,
    .neg = mod_neg, .binop = mod_binop, .call = mod_call,
};

/* Is q (or a part of it) a port field the solver computes in a modified
 * system (a port opened)? */
static bool uses_modified_system(const ls_q *q)
{
    bool any = false;
    ls_q_walk(&modified_domain, NULL, q, &any);
    return any;
}

/* The "magnitude" domain: a value is the quantity's value with the size of
 * the numbers the solver combined to get it: |v| for a node, sum |c_j x_j|
 * for a part's current, |a| + |b| for a sum or difference.  A difference of
 * two nearly equal node voltages carries the rounding of the node voltages,
 * so it is judged against their size. */
typedef struct magn {
    double mag, val;
} magn;

static int mag_const(void *ctx, const ls_q *q, void *out)
{
    (void)ctx;
    *(magn *)out = (magn){fabs(q->value), q->value};
    return 0;
}

static int mag_node(void *ctx, const ls_q *q, void *out)
{
    ls_op *op = ctx;
    *(magn *)out = (magn){fabs(op->v[q->index]), op->v[q->index]};
    return 0;
}

/* A part's or port's property: its current's terms, its ends' voltages,
 * sag's open and loaded values. */
static double prop_magnitude(ls_op *op, const ls_q *q, double val)
{
    const ls_part *p = &op->nl->parts[q->index];
    if (q->prop == PROP_CURRENT || q->prop == PROP_POWER) {
        ls_lin l;
        ls_part_current(p, &op->run, &l, false);
        double m = fabs(l.constant);
        for (int i = 0; i < l.n; i++)
            m += fabs(l.coef[i] * op->x[l.idx[i]]);
        m = fmax(m, 1e-3 * node_current_scale(op, p->pin[0]));
        if (q->prop == PROP_POWER)
            m *= fabs(op->v[p->pin[0]]) + (p->kind->npins > 1 ? fabs(op->v[p->pin[1]]) : 0);
        return fmax(m, fabs(val));
    }
    if (q->prop == PROP_VOLTAGE && p->kind->npins > 1)
        return fabs(op->v[p->pin[0]]) + fabs(op->v[p->pin[1]]);
    if (q->prop == PROP_SAG || q->prop == PROP_SAG_REL) {
        const ls_port_result *pr = ls_op_port(op, q->index);
        double m = pr ? fabs(pr->open) + fabs(pr->loaded) : 0;
        return q->prop == PROP_SAG_REL && pr && pr->open != 0 ? m / fabs(pr->open) : m;
    }
    return fabs(val);
}

static int mag_prop(void *ctx, const ls_q *q, void *out)
{
    double val = ls_q_eval(ctx, q);
    *(magn *)out = (magn){prop_magnitude(ctx, q, val), val};
    return 0;
}

static int mag_neg(void *ctx, const ls_q *q, void *a)
{
    (void)ctx, (void)q;
    ((magn *)a)->val = -((magn *)a)->val;
    return 0;
}

static int mag_binop(void *ctx, const ls_q *q, void *av, const void *bv)
{
    (void)ctx;
    magn *a = av;
    const magn *b = bv;
    double val = ls_apply_op(q->op, a->val, b->val);
    switch (q->op) {
    case LS_OP_ADD:
    case LS_OP_SUB: a->mag = a->mag + b->mag; break;
    case LS_OP_MUL: a->mag = a->mag * b->mag; break;
    case LS_OP_DIV: a->mag = a->mag / fabs(b->val); break;
    default: a->mag = fabs(val); break;
    }
    a->val = val;
    return 0;
}

static int mag_call(void *ctx, const ls_q *q, void *const *args, void *out)
{
    (void)ctx;
    double v[LS_Q_MAX_ARGS];
    for (int i = 0; i < q->nargs; i++)
        v[i] = ((const magn *)args[i])->val;
    double val = ls_apply_func(q->op, v, q->nargs);
    *(magn *)out = (magn){fabs(val), val};
    return 0;
}

static const ls_qdomain magnitude_domain = {
    .size = sizeof(magn), .constant = mag_const, .node = mag_node, .prop = mag_prop,
    .neg = mag_neg, .binop = mag_binop, .call = mag_call,
};

/* The size of the numbers the solver combined to get q (magnitude_domain). */
static double q_magnitude(ls_op *op, const ls_q *q)
{
    magn m = {0, 0};
    ls_q_walk(&magnitude_domain, op, q, &m);
    return m.mag;
}

/* Relative difference of the formula's value and the solver's, against the
 * larger of the two and the size of what the solver combined (q_magnitude). */
static double rel_difference(fx *F, const ls_q *q, double value, double solve)
{
    double scale = fmax(fmax(fabs(value), fabs(solve)), q_magnitude(F->op, q));
    if (value == solve)
        return 0;
    return scale > 0 ? fabs(value - solve) / scale : INFINITY;
}

static char *join3(const char *a, const char *b, const char *c)
{
    size_t n = strlen(a) + strlen(b) + strlen(c) + 1;
    char *s = malloc(n);
    if (s)
        snprintf(s, n, "%s%s%s", a, b, c);
    return s;
}

/* The shorter of two texts (the first on a tie); frees the other. */
static char *shorter(char *a, char *b)
{
    if (!a || (b && strlen(b) < strlen(a))) {
        free(a);
        return b;
    }
    free(b);
    return a;
}

static char *best_text(fx *F, rf *a, int depth);

/* A sum of parallel pairs and a rest: for a denominator factor a + b of two
 * symbols, a/b's parallel pair (a || b) is taken out when that removes the
 * factor from the denominator (a bridge's r1 || r2 + r3 || r4).  NULL when no
 * factor comes out. */
static char *parallel_sum_text(fx *F, const rf *a, int depth)
{
    factored fd;
    if (depth > 4 || F->too_big || !factorize(F, a->d, &fd))
        return NULL;
    char *best = NULL;
    slong dd = fmpq_mpoly_total_degree_si(a->d, F->ctx);
    for (int i = 0; i < fd.n && !F->too_big; i++) {
        const fmpq_mpoly_struct *d = fd.f[i].p;
        if (fmpq_mpoly_length(d, F->ctx) != 2 || fmpq_mpoly_total_degree_si(d, F->ctx) != 1)
            continue;
        int va = -1, vb = -1;
        for (int v = 0; v < F->nsym; v++)
            if (fmpq_mpoly_degree_si(d, v, F->ctx) == 1) {
                if (va < 0)
                    va = v;
                else
                    vb = v;
            }
        if (va < 0 || vb < 0)
            continue;
        fmpq_t c;
        fmpq_init(c);
        bool ones = true;
        for (slong t = 0; t < 2; t++) {
            fmpq_mpoly_get_term_coeff_fmpq(c, d, t, F->ctx);
            ones = ones && fmpq_is_one(c);
        }
        fmpq_clear(c);
        if (!ones)
            continue;
        /* rest = a - va vb / (va + vb) */
        rf par, rest;
        rf_init(F, &par);
        rf_init(F, &rest);
        rf_set_var(F, &par, va);
        rf_set_var(F, &rest, vb);
        fmpq_mpoly_mul(par.n, par.n, rest.n, F->ctx);
        fmpq_mpoly_set(par.d, d, F->ctx);
        rf_addsub(F, &rest, a, &par, -1);
        if (!rf_is_zero(F, &rest) && fmpq_mpoly_total_degree_si(rest.d, F->ctx) < dd) {
            char *r = best_text(F, &rest, depth + 1);
            if (r) {
                size_t n = strlen(r) + strlen(F->sym[va].name) + strlen(F->sym[vb].name) + 16;
                char *t = malloc(n);
                if (t)
                    snprintf(t, n, "(%s || %s) %s %s", F->sym[va].name, F->sym[vb].name, r[0] == '-' ? "-" : "+",
                             r[0] == '-' ? r + 1 : r);
                free(r);
                best = shorter(best, t);
            }
        }
        rf_clear(F, &par);
        rf_clear(F, &rest);
    }
    factored_clear(F, &fd);
    return best;
}

/* The shortest of the factored text, the expanded N / D and a sum of
 * parallel pairs; NULL when out of memory.  a is made integral (integral()). */
static char *best_text(fx *F, rf *a, int depth)
{
    integral(F, a);
    bool den1 = fmpq_mpoly_is_one(a->d, F->ctx);
    char *pn = poly_text(F, a->n, !den1), *pd = poly_text(F, a->d, true);
    char *expanded = den1 ? (pn ? strdup(pn) : NULL) : (pn && pd ? join3(pn, " / ", pd) : NULL);
    free(pn);
    free(pd);
    char *best = shorter(factored_text(F, a), expanded);
    if (!den1)
        best = shorter(best, parallel_sum_text(F, a, depth));
    return best;
}

/* Fill res's texts from the final rational function. */
static ls_outcome write_texts(fx *F, rf *a, ls_formula_result *res)
{
    integral(F, a);
    char *num = poly_text(F, a->n, false), *den = poly_text(F, a->d, false);
    res->expression = best_text(F, a, 0);
    if (has_long_number(F, a->n) || has_long_number(F, a->d))
        note(F, "numbers of more than 40 digits are printed rounded to 17 significant digits (the "
                "computation and the value are exact)");
    if (!num || !den || !res->expression) {
        free(num);
        free(den);
        return LS_NO_MEMORY;
    }
    /* the numerator and denominator each as the shorter of factored and expanded */
    rf part;
    rf_init(F, &part);
    for (int side = 0; side < 2; side++) {
        fmpq_mpoly_set(part.n, side ? a->d : a->n, F->ctx);
        fmpq_mpoly_one(part.d, F->ctx);
        char *f = fmpq_mpoly_is_zero(part.n, F->ctx) ? NULL : factored_text(F, &part);
        char **slot = side ? &res->denominator : &res->numerator;
        char *plain = side ? den : num;
        if (f && strlen(f) < strlen(plain)) {
            *slot = f;
            free(plain);
        } else {
            *slot = plain;
            free(f);
        }
    }
    rf_clear(F, &part);
    return F->nomem ? LS_NO_MEMORY : LS_DONE;
}

/* The symbols the final formula uses, in order. */
static int list_symbols(fx *F, const rf *a, ls_formula_result *res)
{
    res->symbols = calloc((size_t)F->nsym + 1, sizeof *res->symbols);
    if (!res->symbols)
        return -1;
    for (int v = 0; v < F->nsym; v++) {
        if (depends_on(F, a, v))
            res->symbols[res->nsymbols++] = strdup(F->sym[v].name);
        else if (F->req->symbols && !(F->req->ideal && F->sym[v].gain))
            note(F, "%s: asked for as a symbol, but the quantity does not depend on it (or it reaches the "
                 "circuit only through a block's parameters, which go in as numbers)", F->sym[v].name);
    }
    return 0;
}

/* Say which parts stand as numbers at the operating point. */
static void mark_exact_parts(fx *F)
{
    for (int i = 0; i < F->nl->nparts; i++) {
        const ls_part *p = &F->nl->parts[i];
        F->pexact[i] = exact_kind(p, &F->op->run);
        if (F->pexact[i])
            continue;
        if (p->kind->exact == LS_EXACT_OPAMP)
            note(F, "%s: op-amp held at its %s limit at the operating point (a fixed %s), not a symbol",
                 p->name, ls_opamp_limit_word(p, &F->op->run),
                 ls_run_state(&F->op->run, p)->state == LS_LIM_RAIL_HIGH ||
                         ls_run_state(&F->op->run, p)->state == LS_LIM_RAIL_LOW
                     ? "output voltage"
                                                                                        : "output current");
        else if (p->kind->is_nonlinear && p->kind->is_nonlinear(p))
            note(F, "%s: %s linearized at its operating point (its conductance and offset there, as numbers)",
                 p->name, p->kind->name);
        else
            note(F, "%s: %s taken as numbers (its stamp at the operating point)", p->name, p->kind->name);
    }
}

/* The self-check of formula a of q, at the file's numbers (the gains as
 * given) against the solver: res->solve, finite_value, bound and difference.
 * LS_DONE, or LS_UNSOLVABLE after saying by how much they differ. */
static ls_outcome self_check(fx *F, const ls_q *q, rf *a, const char *text, ls_formula_result *res)
{
    /* the self-check, on the formula with the file's gains */
    res->solve = ls_q_eval(F->op, q);
    res->finite_value = rf_eval_d(F, a);
    double diff = rel_difference(F, q, res->finite_value, res->solve);
    /* The solver's own error grows with the condition of the system.  Where the
     * solve already warned that the system is ill-conditioned, a difference
     * within its error bound (4 eps / rcond) is the solver's, not the formula's;
     * elsewhere the bound is 1e-12. */
    double bound = uses_modified_system(q) ? LS_FORMULA_SELF_CHECK_PORTS : LS_FORMULA_SELF_CHECK;
    double solver_bound = INFINITY;
    if (F->op->rcond > 0 && isfinite(F->op->rcond))
        solver_bound = 4 * DBL_EPSILON / F->op->rcond;
    if (F->op->rcond < LS_FORMULA_RCOND_ILL)
        bound = fmax(bound, solver_bound);
    /* A port field of the modified system comes from a low-rank update of
     * the base factorization (Sherman-Morrison), whose cancellation adds to
     * the base solve's error: it is held to the larger of 1e-9 and
     * LS_FORMULA_UPDATE_GROWTH times the base solve's bound.  (The error-bound
     * API bounds linear forms of the base solution only, not the update.) */
    if (uses_modified_system(q) && isfinite(solver_bound))
        bound = fmax(bound, LS_FORMULA_UPDATE_GROWTH * solver_bound);
    res->bound = bound;
    if (!(diff <= bound)) {
        ls_error(F->d, F->qloc,
                 "formula: self-check failed for '%s': the formula gives %.17g at the file's numbers, the solver %.17g "
                 "(relative difference %.3g > %.3g)%s", text, res->finite_value, res->solve, diff, bound,
                 diff <= solver_bound ? "; the difference is within the solver's own error bound for this system "
                                        "(4 eps / rcond), so the solver's value is the likelier to be off"
                                      : "");
        return LS_UNSOLVABLE;
    }
    res->difference = diff;
    return LS_DONE;
}

/* --ideal: every finite op-amp gain a depends on taken to infinity, in a.
 * LS_DONE, or LS_BAD_REQUEST when a grows without bound. */
static ls_outcome ideal_limit(fx *F, rf *a, const char *text, ls_formula_result *res)
{
    for (int v = 0; v < F->nsym; v++) {
        if (!F->sym[v].gain || !depends_on(F, a, v))
            continue;
        res->opamps_limited++;
        if (!limit_inf(F, a, v)) {
            ls_error(F->d, F->qloc, "formula: '%s' grows without bound as the gain of %s goes to infinity; "
                     "no ideal formula", text, F->sym[v].name);
            return LS_BAD_REQUEST;
        }
    }
    return LS_DONE;
}

static ls_outcome run(fx *F, const ls_q *q, const char *text, ls_formula_result *res)
{
    ls_outcome code = choose_symbols(F);
    if (code != LS_DONE)
        return code;
    F->tie = F->nsym;
    fmpq_mpoly_ctx_init(F->ctx, F->nsym + 1, ORD_DEGREVLEX);
    F->ctx_ready = true;
    F->pval = calloc((size_t)F->nl->nparts + 1, sizeof *F->pval);
    F->pexact = calloc((size_t)F->nl->nparts + 1, sizeof *F->pexact);
    if (!F->pval || !F->pexact)
        return LS_NO_MEMORY;
    for (int i = 0; i < F->nl->nparts; i++)
        rf_init(F, &F->pval[i]);
    symbol_values(F);
    part_values(F);
    mark_exact_parts(F);
    rf a;
    rf_init(F, &a);
    code = q_rf(F, q, &a, text);
    if (code == LS_DONE && F->too_big)
        code = too_big_error(F, F->too_big_why);
    if (code != LS_DONE) {
        rf_clear(F, &a);
        return code;
    }
    code = self_check(F, q, &a, text, res);
    if (code == LS_DONE && F->req->ideal)
        code = ideal_limit(F, &a, text, res);
    if (code != LS_DONE) {
        rf_clear(F, &a);
        return code;
    }
    res->value = rf_eval_d(F, &a);
    if (F->req->ideal)
        res->difference = rel_difference(F, q, res->value, res->solve);
    code = list_symbols(F, &a, res) == 0 ? write_texts(F, &a, res) : LS_NO_MEMORY;
    rf_clear(F, &a);
    if (code == LS_DONE && F->too_big)
        code = too_big_error(F, F->too_big_why);
    double got = NAN;
    if (code == LS_DONE && !text_reads_back(F, res->expression, res->value, &got)) {
        if (F->nomem) {
            code = LS_NO_MEMORY;   /* it could not be read for want of memory */
        } else {
            ls_error(F->d, LS_NOLOC, "formula: internal error: the printed formula '%s' does not read back to "
                     "%.17g (it reads %.17g)", res->expression, res->value, got);
            code = LS_UNSOLVABLE;
        }
    }
    return code;
}

ls_outcome ls_formula(ls_op *op, const ls_program *prog, const ls_q *q, const ls_formula_req *req,
                      ls_formula_result *res, ls_diags *d)
{
    memset(res, 0, sizeof *res);
    res->ideal = req->ideal;
    res->value = res->solve = res->finite_value = NAN;
    fx F = {.op = op, .nl = op->nl, .prog = prog, .d = d, .qloc = q->loc, .req = req, .n = op->mna.n};
    const char *text = req->quantity ? req->quantity : "the quantity";
    ls_outcome code;
    if (F.n > LS_FORMULA_MAX_UNKNOWNS) {
        char why[96];
        snprintf(why, sizeof why, "%d unknowns", F.n);
        code = too_big_error(&F, why);
    } else {
        code = run(&F, q, text, res);
    }
    if (F.ctx_ready) {
        for (int i = 0; F.pval && i < F.nl->nparts; i++)
            rf_clear(&F, &F.pval[i]);
        fmpq_mpoly_ctx_clear(F.ctx);
    }
    for (int i = 0; i < F.nsym; i++)
        fmpq_clear(F.sym[i].value);
    free(F.pval);
    free(F.pexact);
    res->notes = F.notes;
    res->nnotes = F.nnotes;
    flint_cleanup();
    return code;
}

void ls_formula_result_free(ls_formula_result *res)
{
    free(res->expression);
    free(res->numerator);
    free(res->denominator);
    for (int i = 0; i < res->nsymbols; i++)
        free(res->symbols[i]);
    free(res->symbols);
    for (int i = 0; i < res->nnotes; i++)
        free(res->notes[i]);
    free(res->notes);
    memset(res, 0, sizeof *res);
}
