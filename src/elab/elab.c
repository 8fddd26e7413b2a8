/* elab.c — elaboration: expand blocks, resolve names, check units, evaluate
 * values and bind the checks.  Errors are collected; elaboration goes on past
 * them so one run reports as much as it can. */
#include "elab/elab.h"
#include "base/unionfind.h"

#include <assert.h>
#include <limits.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "base/eseries.h"
#include "base/memlimit.h"
#include "base/pages.h"
#include "lang/parser.h"
#include "netlist/letdeps.h"
#include "parts/parts.h"

typedef struct scope {
    const char *prefix;         /* "" at the top level, else the instance path */
    const ls_stmt *block;       /* the block being expanded, NULL at the top */
    const struct scope *up;
    int depth;
} scope;

typedef struct elab {
    ls_netlist *nl;
    ls_diags *d;
    ls_arena *a;
    ls_hash blocks;             /* block name -> index into blockv */
    const ls_stmt **blockv;
    int nblocks;
    ls_setting *sets;
    int nsets;
    ls_hash warned;             /* "block\x1fname" already warned about */
    struct { int node; const ls_stmt *block; const char *base; ls_loc loc; } *locals;
    int nlocals, cap_locals;
    bool nodes_capped, parts_capped;  /* LS_MAX_NODES / LS_MAX_PARTS reported */
    bool oom;                         /* out of memory reported */
    bool allow_lsb;                   /* evaluating a port's budget=: LSB is a unit here */
    ls_name_value names;              /* ls_eval_const: how names get values (NULL: lets and params) */
    void *names_ctx;
    const char *last_kw;              /* the kind word last looked up (the parser shares one string */
    const ls_kind *last_kind;         /* per word on consecutive lines) and its kind, or NULL */
    ls_letdeps *deps;                 /* a let being followed (sweeps), or NULL */
    /* Hashes of the names prefetched a few statements ahead (prefetch_names),
     * found again by the name's pointer (the tree's strings do not move), so
     * a name is hashed once; a slot another name took is only a lost hint. */
    struct { const char *key; uint32_t hv; } hints[64];
    /* The node each number the parser gave a node name stands for at the
     * top level (ls_stmt.from_key, to_key: index 1 .. nkeys), -1 until a
     * top-level reference has resolved it to a node; NULL when the program
     * has no numbers (or no memory for them: names are then looked up as ever). */
    int *node_of_key;
    int nkeys;
    /* The kind of each top-level statement (ls_stmt_kind), read once by
     * check_kinds, so the later passes over the whole program that look at
     * kinds alone (blocks, ground, expansion, lets, checks) read these bytes
     * and not the statements (a 1000 x 1000 grid's are 144 MB); NULL when
     * there was no memory for them (the statements are read instead). */
    unsigned char *top_kinds;
    int nvia;                   /* parts given via= (resolve_refs has work only then) */
} elab;

/* The kind of statement i of the list stmts, from kinds when given. */
static inline ls_skind kind_at(const unsigned char *kinds, ls_stmt *const *stmts, int i)
{
    return kinds ? (ls_skind)kinds[i] : ls_stmt_kind(stmts[i]);
}

/* ---- growable arrays ---------------------------------------------------------- */

static bool grow(void **v, int *cap, int need, size_t elem)
{
    if (need <= *cap)
        return true;
    int c = *cap ? *cap : 64;
    while (c < need)
        c *= 2;
    void *p = realloc(*v, (size_t)c * elem);
    if (!p)
        return false;
    *v = p;
    *cap = c;
    return true;
}

/* Out of memory in the elaborator is an error, reported once: a statement is
 * never dropped silently. */
static void out_of_memory_n(elab *x, size_t bytes)
{
    if (!x->oom)
        ls_error(x->d, LS_NOLOC,
                 "out of memory while expanding the circuit: a request for %.1f MB failed, with %d nodes and %d "
                 "parts made so far",
                 (double)bytes / 1e6, x->nl->nnodes, x->nl->nparts);
    x->oom = true;
}

/* The same for a failure in the arena (names, values): its size is the
 * arena's record of it. */
static void out_of_memory(elab *x)
{
    out_of_memory_n(x, x->a->failed_bytes ? x->a->failed_bytes : x->d->arena->failed_bytes);
}

/* Make room for exactly `need` elements when the array holds fewer (the
 * elaborator's size estimate, so that a large circuit does not copy its
 * tables as they double), its pages mapped in at once (base/pages.h: the
 * estimate is what the circuit fills); a failure changes nothing (they grow
 * as they go). */
static void reserve(void **v, int *cap, long long need, size_t elem)
{
    if (need <= *cap || need > INT_MAX / 2)
        return;
    void *p = realloc(*v, (size_t)need * elem);
    if (p) {
        ls_pages_populate(p, (size_t)need * elem, true);
        *v = p;
        *cap = (int)need;
    }
}

/* Room for `need` elements, else the out-of-memory error; true when there
 * is room.  The common case, room already there, stays inline. */
static inline bool grow_x(elab *x, void **v, int *cap, int need, size_t elem)
{
    if (need <= *cap || grow(v, cap, need, elem))
        return true;
    size_t c = *cap ? (size_t)*cap : 64; /* what grow asked for */
    while (c < (size_t)need)
        c *= 2;
    out_of_memory_n(x, c * elem);
    return false;
}

/* ---- names ----------------------------------------------------------------------- */

/* NAME in scope s: "prefix.name" in the arena, or name itself at the top
 * level.  NULL (the elaboration flagged out of memory) when the arena is full:
 * every caller checks. */
static const char *qualify(elab *x, const scope *s, const char *name)
{
    if (!s->prefix[0])
        return name;
    const char *full = ls_arena_printf(x->a, "%s.%s", s->prefix, name);
    if (!full)
        out_of_memory(x);
    return full;
}

static const char *ent_what(ls_ent_kind k)
{
    static const char *const w[] = {"node", "pin", "part", "instance", "parameter", "block"};
    _Static_assert(sizeof w / sizeof w[0] == ENT_BLOCK + 1, "one word per ls_ent_kind");
    assert(k >= ENT_NODE && k <= ENT_BLOCK);
    return w[k];
}

static void note_decl(elab *x, ls_loc loc, const char *name)
{
    if (loc.file >= 0)
        ls_note(x->d, loc, "'%s' was declared here", name);
}

/* The name table's hash of full (len bytes): the one prefetch_names kept,
 * else computed. */
static uint32_t name_hash(elab *x, const char *full, size_t len)
{
    size_t n = sizeof x->hints / sizeof x->hints[0];
    __typeof__(x->hints[0]) *h = &x->hints[((uintptr_t)full >> 3) % n];
    if (h->key == full) {
        h->key = NULL;
        return h->hv;
    }
    return (uint32_t)ls_hash_bytes(full, len);
}

/* Prefetch full's slot in the name table and keep its hash for name_hash. */
static void prefetch_name(elab *x, const char *full)
{
    size_t n = sizeof x->hints / sizeof x->hints[0];
    __typeof__(x->hints[0]) *h = &x->hints[((uintptr_t)full >> 3) % n];
    h->key = full;
    h->hv = ls_hash_prefetch(&x->nl->names, full);
}

/* Declare a name in its scope; a clash is an error naming both places, or,
 * with `found`, no error: *found is set to the entity already there (else -1).
 * Returns the new entity's index, or -1. */
static int declare(elab *x, const char *full, ls_ent_kind kind, int index, ls_loc loc, int *found)
{
    ls_netlist *nl = x->nl;
    if (found)
        *found = -1;
    if (!full) /* qualify ran out of memory */
        return -1;
    size_t len = strlen(full);
    if (len > LS_MAX_NAME_BYTES) {
        ls_error(x->d, loc, "name is longer than %d bytes", LS_MAX_NAME_BYTES);
        return -1;
    }
    /* Room for the entity first, so nothing can fail once the name is in;
     * a node, part or let keeps its location in its own record. */
    bool own_loc = kind != ENT_NODE && kind != ENT_PART && kind != ENT_PARAM;
    if (!grow_x(x, (void **)&nl->ents, &nl->cap_ents, nl->nents + 1, sizeof *nl->ents) ||
        (own_loc && !grow_x(x, (void **)&nl->ent_locs, &nl->cap_ent_locs, nl->nent_locs + 1, sizeof *nl->ent_locs)))
        return -1;
    int e;
    int r = ls_hash_intern_hashed(&nl->names, full, name_hash(x, full, len), nl->nents, &e);
    if (r < 0) {
        out_of_memory_n(x, 2 * (nl->names.cap ? nl->names.cap : 16) * sizeof(ls_hash_slot)); /* the doubled table */
        return -1;
    }
    if (r == 0) {
        if (found) {
            *found = e;
            return -1;
        }
        ls_entity *o = &nl->ents[e];
        ls_error(x->d, loc, "'%s' is already declared as a %s", full, ent_what(o->kind));
        note_decl(x, ls_entity_loc(nl, e), full);
        return -1;
    }
    if (own_loc)
        nl->ent_locs[nl->nent_locs++] = (ls_ent_loc){nl->nents, loc};
    nl->ents[nl->nents++] = (ls_entity){kind, index};
    return e;
}

/* A new node named full; with `found` as for declare (a name already there is
 * no error, and no limit applies to it).  Returns its index, or -1. */
static int new_node(elab *x, const char *full, ls_loc loc, int depth, int *found)
{
    ls_netlist *nl = x->nl;
    if (found)
        *found = -1;
    if (!full) /* qualify ran out of memory */
        return -1;
    if (nl->nnodes >= LS_MAX_NODES) {
        if (found && (*found = ls_hash_get(&nl->names, full)) >= 0)
            return -1;
        if (nl->nnodes == LS_MAX_NODES && !x->nodes_capped) /* say it once */
            ls_error(x->d, loc, "more than %d nodes after the blocks are expanded", LS_MAX_NODES);
        x->nodes_capped = true;
        return -1;
    }
    if (!grow_x(x, (void **)&nl->nodes, &nl->cap_nodes, nl->nnodes + 1, sizeof *nl->nodes))
        return -1;
    int i = nl->nnodes++;
    nl->nodes[i] = (ls_node){.name = full, .loc = loc, .scope_depth = depth};
    if (declare(x, full, ENT_NODE, i, loc, found) < 0) {
        nl->nnodes--;
        return -1;
    }
    return i;
}

/* The node a name stands for in scope s, made on first use. */
static int node_ref(elab *x, const scope *s, const char *name, ls_loc loc)
{
    ls_netlist *nl = x->nl;
    /* the first bytes rule out most names before a string comparison */
    if ((name[0] == 'g' && strcmp(name, "ground") == 0) ||
        (nl->ground_name && name[0] == nl->ground_name[0] && strcmp(name, nl->ground_name) == 0))
        return 0;
    const char *full = qualify(x, s, name);
    int e;
    int i = new_node(x, full, loc, s->depth, &e); /* one probe finds it or makes it */
    if (e >= 0) {
        ls_entity *o = &nl->ents[e];
        if (o->kind == ENT_NODE || o->kind == ENT_ALIAS) {
            if (o->kind == ENT_NODE && s->block && !strchr(name, '.'))
                nl->nodes[o->index].claimed = true;
            return o->index;
        }
        ls_error(x->d, loc, "'%s' is a %s, not a node", name, ent_what(o->kind));
        note_decl(x, ls_entity_loc(nl, e), full);
        return -1;
    }
    if (i < 0)
        return -1;
    if (strchr(name, '.')) { /* asked only here and above: most references are neither new nor in a block */
        nl->nodes[i].dotted_ref = true;
    } else if (s->block) {
        nl->nodes[i].claimed = true;
        if (grow((void **)&x->locals, &x->cap_locals, x->nlocals + 1, sizeof *x->locals)) {
            x->locals[x->nlocals].node = i;
            x->locals[x->nlocals].block = s->block;
            x->locals[x->nlocals].base = name;
            x->locals[x->nlocals].loc = loc;
            x->nlocals++;
        }
    }
    return i;
}

/* node_ref for a part's FROM or TO with its number from the parser (key,
 * 0 for none; equal numbers are equal names): at the top level a name
 * resolved to a node once is that node at every later mention (the name
 * table only gains names, and the ground's name is fixed before the parts),
 * so only the first mention with each number is looked up.
 * A mention that fails (an error) is not remembered: each one reports. */
static int node_ref_keyed(elab *x, const scope *s, const char *name, ls_loc loc, int key)
{
    if (s->prefix[0] || key <= 0 || key > x->nkeys || !x->node_of_key)
        return node_ref(x, s, name, loc);
    int *known = &x->node_of_key[key];
    if (*known < 0)
        *known = node_ref(x, s, name, loc);
    return *known;
}

/* A parameter visible from scope s: its own, else the top level's. */
static const ls_param *param_ref(elab *x, const scope *s, const char *name)
{
    ls_netlist *nl = x->nl;
    const char *full = qualify(x, s, name);
    if (!full)
        return NULL;
    int e = ls_hash_get(&nl->names, full);
    if (e >= 0 && nl->ents[e].kind == ENT_PARAM)
        return &nl->params[nl->ents[e].index];
    if (s->prefix[0]) {
        e = ls_hash_get(&nl->names, name);
        if (e >= 0 && nl->ents[e].kind == ENT_PARAM)
            return &nl->params[nl->ents[e].index];
    }
    return NULL;
}

static int add_param(elab *x, const scope *s, const char *name, double v, ls_dims d, ls_loc loc)
{
    ls_netlist *nl = x->nl;
    if (!grow_x(x, (void **)&nl->params, &nl->cap_params, nl->nparams + 1, sizeof *nl->params))
        return -1;
    int i = nl->nparams++;
    nl->params[i] = (ls_param){v, d, loc};
    if (declare(x, qualify(x, s, name), ENT_PARAM, i, loc, NULL) < 0)
        return -1;
    return i;
}

/* ---- dimensions -------------------------------------------------------------------- */

static const char *dname(ls_dims d, char *buf, size_t n)
{
    return ls_dims_name(d, buf, n);
}

/* The source text of a location (for messages), shortened. */
static const char *src_text(elab *x, ls_loc l)
{
    if (l.file < 0)
        return "";
    const ls_file *f = &x->d->files[l.file];
    unsigned n = l.end > l.start ? l.end - l.start : 0;
    if (n > 60)
        n = 60;
    return ls_arena_strndup(x->a, f->text + l.start, n);
}

static ls_dims norm(ls_dims d)
{
    if (d.known && d.v == 0 && d.a == 0)
        return LS_FREE;
    return d;
}

/* Dimensions of `a op b`; reports a mismatch at the operator.  Free adopts. */
static bool combine(elab *x, int op, ls_loc at, ls_dims a, ls_dims b, const ls_expr *eb, ls_dims *out)
{
    char b1[64], b2[64];
    switch (op) {
    case LS_OP_ADD:
    case LS_OP_SUB:
    case LS_OP_PAR:
        if (a.known && b.known && (a.v != b.v || a.a != b.a)) {
            ls_error(x->d, at, "cannot %s %s and %s",
                     op == LS_OP_ADD ? "add" : op == LS_OP_SUB ? "subtract" : "put in parallel",
                     dname(a, b1, sizeof b1), dname(b, b2, sizeof b2));
            return false;
        }
        *out = a.known ? a : b;
        return true;
    case LS_OP_MUL:
        *out = norm((ls_dims){(signed char)(a.v + b.v), (signed char)(a.a + b.a), a.known || b.known});
        return true;
    case LS_OP_DIV:
        *out = norm((ls_dims){(signed char)(a.v - b.v), (signed char)(a.a - b.a), a.known || b.known});
        return true;
    case LS_OP_POW:
        if (b.known) {
            ls_error(x->d, at, "an exponent must be a pure number, got %s", dname(b, b1, sizeof b1));
            return false;
        }
        if (!a.known) {
            *out = LS_FREE;
            return true;
        }
        if (eb->kind == E_NUM && eb->num == floor(eb->num) && fabs(eb->num) <= 8) {
            int k = (int)eb->num;
            *out = norm((ls_dims){(signed char)(a.v * k), (signed char)(a.a * k), true});
            return true;
        }
        ls_error(x->d, at, "%s can only be raised to a whole constant power", dname(a, b1, sizeof b1));
        return false;
    }
    return false;
}

static bool call_dims(elab *x, const ls_expr *e, const ls_dims *ad, ls_dims *out)
{
    char b[64];
    switch (e->op) {
    case F_SQRT:
        if (ad[0].known && (ad[0].v % 2 || ad[0].a % 2)) {
            ls_error(x->d, e->loc, "sqrt of %s has no unit", dname(ad[0], b, sizeof b));
            return false;
        }
        *out = ad[0].known ? (ls_dims){(signed char)(ad[0].v / 2), (signed char)(ad[0].a / 2), true} : LS_FREE;
        *out = norm(*out);
        return true;
    case F_ABS:
        *out = ad[0];
        return true;
    case F_MIN:
    case F_MAX: {
        ls_dims d = ad[0];
        for (int i = 1; i < e->nargs; i++)
            if (!combine(x, LS_OP_ADD, e->args[i]->loc, d, ad[i], NULL, &d))
                return false;
        *out = d;
        return true;
    }
    default: /* exp, ln, log10 */
        if (ad[0].known) {
            ls_error(x->d, e->args[0]->loc, "the argument of this function must be a pure number, got %s",
                     dname(ad[0], b, sizeof b));
            return false;
        }
        *out = LS_FREE;
        return true;
    }
}

static bool arity_ok(elab *x, const ls_expr *e)
{
    static const char *const names[F_COUNT] = {"sqrt", "abs", "min", "max", "exp", "ln", "log10"};
    assert(e->op >= 0 && e->op < F_COUNT);
    bool many = e->op == F_MIN || e->op == F_MAX;
    if ((many && e->nargs < 1) || (!many && e->nargs != 1)) {
        ls_error(x->d, e->loc, "'%s' takes %s", names[e->op], many ? "one or more arguments" : "one argument");
        return false;
    }
    return true;
}

/* ---- value expressions (lets and block parameters only) ------------------------------------------------- */

static double apply(int op, double a, double b)
{
    switch (op) {
    case LS_OP_ADD: return a + b;
    case LS_OP_SUB: return a - b;
    case LS_OP_MUL: return a * b;
    case LS_OP_DIV: return a / b;
    case LS_OP_POW: return pow(a, b);
    case LS_OP_PAR: return a * b / (a + b);
    }
    return NAN;
}

double ls_apply_func(int f, const double *v, int n)
{
    double r;
    switch (f) {
    case F_SQRT: return sqrt(v[0]);
    case F_ABS: return fabs(v[0]);
    case F_EXP: return exp(v[0]);
    case F_LN: return log(v[0]);
    case F_LOG10: return log10(v[0]);
    case F_MIN:
        r = v[0];
        for (int i = 1; i < n; i++) r = v[i] < r ? v[i] : r;
        return r;
    case F_MAX:
        r = v[0];
        for (int i = 1; i < n; i++) r = v[i] > r ? v[i] : r;
        return r;
    }
    return NAN;
}

double ls_apply_op(int op, double a, double b) { return apply(op, a, b); }

/* LSB is a unit only in a port's budget= (where an adc on the load side
 * defines it); anywhere else it is an error at its column. */
static bool lsb_allowed(elab *x, const ls_expr *e)
{
    if (!ls_dims_is_lsb(e->dims) || x->allow_lsb)
        return true;
    ls_error(x->d, e->loc, "'LSB' is a unit only in a port's budget= (the LSB of the adc on its load side); "
                           "write volts or a %% here");
    return false;
}

/* The value of a name in an expression: the caller's (x->names) or a let's
 * visible from scope s; false after an error saying what the name is instead. */
static bool eval_name(elab *x, const scope *s, const ls_expr *e, double *v, ls_dims *d)
{
    if (x->names)
        return x->names(x->names_ctx, e, v, d) && isfinite(*v);
    const ls_param *p = param_ref(x, s, e->name);
    if (p) {
        *v = p->value;
        *d = p->dims;
        return true;
    }
    const char *full = qualify(x, s, e->name);
    if (!full)
        return false;
    int en = ls_hash_get(&x->nl->names, full);
    if (en >= 0 && x->nl->ents[en].kind != ENT_PARAM)
        ls_error(x->d, e->loc, "'%s' is a %s; a value is expected here (a number or a let)", e->name,
                 ent_what(x->nl->ents[en].kind));
    else
        ls_error(x->d, e->loc, "unknown name '%s' (no let or block parameter of that name)", e->name);
    return false;
}

/* The value of a constant expression in scope s, with its unit in *d: true,
 * or false after reporting why not (a unit mismatch, a division by zero, a
 * value that is not finite, an unknown name). */
static bool eval(elab *x, const scope *s, const ls_expr *e, double *v, ls_dims *d)
{
    switch (e->kind) {
    case E_NUM:
        *v = e->num;
        *d = e->dims;
        return lsb_allowed(x, e);
    case E_NAME:
        return eval_name(x, s, e, v, d);
    case E_NEG:
        if (!eval(x, s, e->a, v, d))
            return false;
        *v = -*v;
        return true;
    case E_BIN: {
        double a, b;
        ls_dims da, db;
        bool ok_a = eval(x, s, e->a, &a, &da); /* both sides, to report both */
        bool ok_b = eval(x, s, e->b, &b, &db);
        if (!ok_a || !ok_b)
            return false;
        if (!combine(x, e->op, e->op_loc, da, db, e->b, d))
            return false;
        if (e->op == LS_OP_DIV && b == 0) {
            ls_error(x->d, e->op_loc, "division by zero");
            return false;
        }
        *v = apply(e->op, a, b);
        break;
    }
    case E_CALL: {
        double av[8];
        ls_dims ad[8];
        if (!arity_ok(x, e))
            return false;
        for (int i = 0; i < e->nargs; i++)
            if (!eval(x, s, e->args[i], &av[i], &ad[i]))
                return false;
        if (!call_dims(x, e, ad, d))
            return false;
        *v = ls_apply_func(e->op, av, e->nargs);
        break;
    }
    }
    if (!isfinite(*v)) {
        ls_error(x->d, e->loc, "value is not a finite number (%s)", isnan(*v) ? "undefined" : "it overflows");
        return false;
    }
    return true;
}

/* ls_eval_const without names: each one is an error. */
static bool no_names(void *ctx, const ls_expr *e, double *v, ls_dims *d)
{
    ls_diags *diags = ctx;
    (void)v;
    (void)d;
    ls_error(diags, e->loc, "unknown name '%s' (a number is expected here)", e->name);
    return false;
}

bool ls_eval_const(ls_diags *d, const ls_expr *e, ls_name_value names, void *ctx, double *v, ls_dims *dims)
{
    elab x;
    memset(&x, 0, sizeof x);
    x.d = d;
    x.a = d->arena;
    x.names = names ? names : no_names;
    x.names_ctx = names ? ctx : d;
    scope top = {"", NULL, NULL, 0};
    *dims = LS_FREE;   /* what a caller reads when the evaluation fails */
    bool ok = eval(&x, &top, e, v, dims);
    if (ok)
        *dims = norm(*dims);
    return ok;
}

/* Evaluate a value for a slot of dimension want; a free result takes it. */
static bool eval_slot(elab *x, const scope *s, const ls_expr *e, ls_dims want, double *v)
{
    ls_dims d;
    if (!eval(x, s, e, v, &d))
        return false;
    d = norm(d);
    want = norm(want);
    if (d.known && !ls_dims_eq(d, want)) {
        char b1[64], b2[64];
        const char *w = dname(want, b1, sizeof b1);
        if (strncmp(w, "a ", 2) == 0)
            w += 2;
        ls_error(x->d, e->loc, "%s expected, got %s ('%s')", w, dname(d, b2, sizeof b2), src_text(x, e->loc));
        return false;
    }
    return true;
}

/* ---- following one let (letdeps.h) ------------------------------------------------------ */

/* Does e read a let that the followed let reaches? */
static bool reads_followed(elab *x, const scope *s, const ls_expr *e)
{
    switch (e->kind) {
    case E_NAME: {
        const ls_param *p = param_ref(x, s, e->name);
        return p && ls_letdeps_reaches(x->deps, (int)(p - x->nl->params));
    }
    case E_NEG: return reads_followed(x, s, e->a);
    case E_BIN: return reads_followed(x, s, e->a) || reads_followed(x, s, e->b);
    case E_CALL:
        for (int i = 0; i < e->nargs; i++)
            if (reads_followed(x, s, e->args[i]))
                return true;
        return false;
    default: return false;
    }
}

/* e as a postfix program over the lets (already evaluated without error). */
static void emit_expr(elab *x, const scope *s, const ls_expr *e)
{
    switch (e->kind) {
    case E_NUM: ls_letdeps_emit(x->deps, LDC_NUM, 0, 0, e->num); break;
    case E_NAME:
        ls_letdeps_emit(x->deps, LDC_PARAM, (int)(param_ref(x, s, e->name) - x->nl->params), 0, 0);
        break;
    case E_NEG:
        emit_expr(x, s, e->a);
        ls_letdeps_emit(x->deps, LDC_NEG, 0, 0, 0);
        break;
    case E_BIN:
        emit_expr(x, s, e->a);
        emit_expr(x, s, e->b);
        ls_letdeps_emit(x->deps, LDC_BIN, e->op, 0, 0);
        break;
    case E_CALL:
        for (int i = 0; i < e->nargs; i++)
            emit_expr(x, s, e->args[i]);
        ls_letdeps_emit(x->deps, LDC_CALL, e->op, e->nargs, 0);
        break;
    }
}

/* A value just evaluated from e into (kind, target): when a let is followed
 * and e reads it, record how to recompute the value.  Returns the entry's
 * index (its other fields for the caller to fill in), else -1. */
static int follow(elab *x, const scope *s, const ls_expr *e, ls_ld_kind kind, int target)
{
    if (!x->deps || !reads_followed(x, s, e))
        return -1;
    int en = ls_letdeps_begin(x->deps, kind, target);
    if (en < 0)
        return -1;
    emit_expr(x, s, e);
    ls_letdeps_end(x->deps, en);
    return en;
}

/* A word, a range of free= or a rounded value read from the followed let:
 * more than a value changes with it. */
static void follow_structural(elab *x, const scope *s, const ls_expr *e, const char *what, const char *kind,
                              const char *name)
{
    if (!x->deps || !e || !reads_followed(x, s, e))
        return;
    char why[160];
    snprintf(why, sizeof why, "the %s of %s '%s'", what, kind, name);
    ls_letdeps_structural(x->deps, why);
}

/* ---- quantities (expects) ---------------------------------------------------------------- */

const char *ls_prop_name(ls_prop p)
{
    static const char *const n[PROP_COUNT] = {"current", "voltage", "power", "open", "loaded",
                                              "sag", "sag_rel", "zout", "zin", "ratio", "budget",
                                              "value", "code", "error_lsb", "unloaded", "source",
                                              "resistance", "temperature"};
    assert(p >= 0 && p < PROP_COUNT);
    return n[p];
}

/* Dimension of a part's main value (its VALUE, or the option marked main). */
static ls_dims main_dims(const ls_kind *k)
{
    for (int i = 0; i < k->nopts; i++)
        if (k->opts[i].flags & OPTF_MAIN)
            return k->opts[i].dims;
    return k->value_dims;
}

bool ls_prop_applies(const ls_part *p, ls_prop prop)
{
    switch (prop) {
    case PROP_CURRENT: return true;
    case PROP_VOLTAGE: case PROP_POWER: return !p->kind->is_port;
    case PROP_VALUE: return !p->kind->is_port && p->has_value;
    case PROP_CODE: case PROP_ERROR_LSB: case PROP_UNLOADED: case PROP_SOURCE: return p->kind->is_adc;
    case PROP_RESISTANCE: case PROP_TEMPERATURE: return p->kind->has_body_temp;
    default: return p->kind->is_port; /* open .. budget */
    }
}

/* The properties of p, "current, voltage, power, value", into buf (n bytes). */
static const char *prop_list(const ls_part *p, char *buf, size_t n)
{
    buf[0] = 0;
    int k = 0, last = -1;
    for (int i = 0; i < PROP_COUNT; i++)
        if (ls_prop_applies(p, (ls_prop)i))
            last = i;
    for (int i = 0; i < PROP_COUNT; i++) {
        if (!ls_prop_applies(p, (ls_prop)i))
            continue;
        if (k++)
            strncat(buf, i == last ? " or " : ", ", n - strlen(buf) - 1);
        strncat(buf, ls_prop_name((ls_prop)i), n - strlen(buf) - 1);
    }
    return buf;
}

ls_dims ls_prop_dims(const ls_part *p, ls_prop prop)
{
    bool cur = p->kind->is_port && ls_part_opt(p, "mode", 0) == 1;
    switch (prop) {
    case PROP_CURRENT: return LS_AMP;
    case PROP_VOLTAGE: return LS_VOLT;
    case PROP_POWER: return LS_WATT;
    case PROP_OPEN: case PROP_LOADED: case PROP_SAG: case PROP_BUDGET: return cur ? LS_AMP : LS_VOLT;
    case PROP_ZOUT: case PROP_ZIN: case PROP_SOURCE: case PROP_RESISTANCE: return LS_OHM;
    case PROP_UNLOADED: return LS_VOLT;
    case PROP_VALUE: return main_dims(p->kind);
    default: return LS_FREE;   /* ratio, sag_rel, code, error_lsb, temperature (degC) */
    }
}

static ls_q *new_q(elab *x, ls_qkind k, ls_loc loc)
{
    ls_q *q = ls_arena_alloc(x->a, sizeof *q);
    if (q) {
        q->kind = k;
        q->loc = loc;
    }
    return q;
}

/* A let's value as a constant leaf at e (recorded for a followed let).
 * NULL when out of memory. */
static ls_q *bind_let(elab *x, const ls_param *p, const ls_expr *e)
{
    ls_q *q = new_q(x, Q_CONST, e->loc);
    if (q) {
        q->value = p->value;
        q->dims = p->dims;
        int pi = (int)(p - x->nl->params);
        if (x->deps && ls_letdeps_reaches(x->deps, pi)) {
            int en = ls_letdeps_begin(x->deps, LD_QCONST, pi);
            if (en >= 0)
                ls_letdeps_entry(x->deps, en)->q = q;
        }
    }
    return q;
}

/* Node `index`'s voltage as a leaf at e; NULL when out of memory. */
static ls_q *bind_node(elab *x, int index, const ls_expr *e)
{
    ls_q *q = new_q(x, Q_NODE, e->loc);
    if (q) {
        q->index = index;
        q->dims = LS_VOLT;
    }
    return q;
}

/* The entity o that e's name stands for, as a leaf: a node's voltage, else
 * an error saying what the name is instead (NULL). */
static ls_q *bind_entity(elab *x, const ls_entity *o, const ls_expr *e)
{
    if (o->kind == ENT_NODE || o->kind == ENT_ALIAS)
        return bind_node(x, o->index, e);
    if (o->kind == ENT_PART) {
        const ls_part *pt = &x->nl->parts[o->index];
        char props[256];
        ls_error(x->d, e->loc, "'%s' is a %s; name a property: %s.%s", e->name, pt->kind->is_port ? "port" : "part",
                 e->name, prop_list(pt, props, sizeof props));
        return NULL;
    }
    ls_error(x->d, e->loc, "'%s' is a %s; a node voltage or a property is expected", e->name, ent_what(o->kind));
    return NULL;
}

/* Property `prop` (the text after the last dot) of part pi, named `base`,
 * as a leaf at e; NULL after an error (no such property, or not this
 * part's). */
static ls_q *bind_prop(elab *x, int pi, const char *base, const char *prop, const ls_expr *e)
{
    const ls_part *pt = &x->nl->parts[pi];
    char props[256];
    for (int k = 0; k < PROP_COUNT; k++) {
        if (strcmp(prop, ls_prop_name((ls_prop)k)) != 0)
            continue;
        if (pt->kind->is_port && (k == PROP_VOLTAGE || k == PROP_POWER)) {
            ls_error(x->d, e->loc, "a port has no '%s' (it is a zero-volt connection); try %s.loaded", prop, base);
            return NULL;
        }
        if (!ls_prop_applies(pt, (ls_prop)k)) {
            ls_error(x->d, e->loc, "%s '%s' has no property '%s'%s; its properties are %s", pt->kind->name, base,
                     prop, k == PROP_VALUE ? " (it has no main value)" : "", prop_list(pt, props, sizeof props));
            return NULL;
        }
        ls_q *q = new_q(x, Q_PROP, e->loc);
        if (q) {
            q->index = pi;
            q->prop = (ls_prop)k;
            q->dims = ls_prop_dims(pt, q->prop);
        }
        return q;
    }
    ls_error(x->d, e->loc, "%s '%s' has no property '%s'; its properties are %s", pt->kind->name, base, prop,
             prop_list(pt, props, sizeof props));
    return NULL;
}

/* Resolve NAME or PART.PROP in scope s to a quantity leaf: a let, the
 * ground, a node or alias, else a part's property. */
static ls_q *bind_name(elab *x, const scope *s, const ls_expr *e)
{
    ls_netlist *nl = x->nl;
    const ls_param *p = param_ref(x, s, e->name);
    if (p)
        return bind_let(x, p, e);
    if (strcmp(e->name, "ground") == 0 || strcmp(e->name, nl->ground_name ? nl->ground_name : "") == 0)
        return bind_node(x, 0, e);
    const char *full = qualify(x, s, e->name);
    if (!full)
        return NULL;
    int en = ls_hash_get(&nl->names, full);
    if (en >= 0)
        return bind_entity(x, &nl->ents[en], e);
    const char *dot = strrchr(full, '.');
    if (dot) {
        char *base = ls_arena_strndup(x->a, full, (size_t)(dot - full));
        int pe = base ? ls_hash_get(&nl->names, base) : -1;
        if (pe >= 0 && nl->ents[pe].kind == ENT_PART)
            return bind_prop(x, nl->ents[pe].index, base, dot + 1, e);
    }
    ls_error(x->d, e->loc, "unknown node, part or parameter '%s'", e->name);
    return NULL;
}

static ls_q *bind(elab *x, const scope *s, const ls_expr *e)
{
    ls_q *q = NULL;
    switch (e->kind) {
    case E_NUM:
        if (!lsb_allowed(x, e))
            return NULL;
        q = new_q(x, Q_CONST, e->loc);
        if (q) {
            q->value = e->num;
            q->dims = e->dims;
        }
        return q;
    case E_NAME:
        return bind_name(x, s, e);
    case E_NEG: {
        ls_q *a = bind(x, s, e->a);
        if (!a || !(q = new_q(x, Q_NEG, e->loc)))
            return NULL;
        q->a = a;
        q->dims = a->dims;
        return q;
    }
    case E_BIN: {
        ls_q *a = bind(x, s, e->a), *b = bind(x, s, e->b);
        if (!a || !b || !(q = new_q(x, Q_BIN, e->loc)))
            return NULL;
        q->op = e->op;
        q->a = a;
        q->b = b;
        if (!combine(x, e->op, e->op_loc, a->dims, b->dims, e->b, &q->dims))
            return NULL;
        return q;
    }
    case E_CALL: {
        if (!arity_ok(x, e) || !(q = new_q(x, Q_CALL, e->loc)))
            return NULL;
        q->op = e->op;
        q->nargs = e->nargs;
        q->args = ls_arena_alloc(x->a, (size_t)e->nargs * sizeof *q->args);
        ls_dims ad[8];
        if (!q->args)
            return NULL;
        for (int i = 0; i < e->nargs; i++) {
            if (!(q->args[i] = bind(x, s, e->args[i])))
                return NULL;
            ad[i] = q->args[i]->dims;
        }
        return call_dims(x, e, ad, &q->dims) ? q : NULL;
    }
    }
    return NULL;
}

/* ---- budgets ------------------------------------------------------------------------- */

/* Evaluate a sag budget (budget= or `rule sag`): volts, amperes, a pure
 * number or % (a fraction of open) or, with lsb, LSB.  Fills *b; false after
 * an error at the value. */
static bool eval_budget(elab *x, const scope *s, const ls_expr *e, bool lsb, ls_budget *b)
{
    ls_dims d;
    double v;
    x->allow_lsb = lsb;
    bool ok = eval(x, s, e, &v, &d);
    x->allow_lsb = false;
    if (!ok)
        return false;
    d = norm(d);
    char buf[64];
    if (!d.known)
        b->unit = LS_BUDGET_FRACTION;
    else if (ls_dims_is_lsb(d))
        b->unit = LS_BUDGET_LSB;
    else if (ls_dims_eq(d, LS_VOLT))
        b->unit = LS_BUDGET_VOLT;
    else if (ls_dims_eq(d, LS_AMP))
        b->unit = LS_BUDGET_AMP;
    else {
        ls_error(x->d, e->loc, "a sag budget is volts, a %% of the open value%s; got %s ('%s')",
                 lsb ? " or LSB" : "", dname(d, buf, sizeof buf), src_text(x, e->loc));
        return false;
    }
    if (!(v > 0)) {
        ls_error(x->d, e->loc, "a sag budget must be above zero ('%s')", src_text(x, e->loc));
        return false;
    }
    b->value = v;
    b->loc = e->loc;
    return true;
}

/* A port's budget=: stored in nl->budgets, its index into *index. */
static bool add_budget(elab *x, const scope *s, const ls_expr *e, double *index)
{
    ls_netlist *nl = x->nl;
    ls_budget b;
    if (!eval_budget(x, s, e, true, &b) ||
        !grow_x(x, (void **)&nl->budgets, &nl->cap_budgets, nl->nbudgets + 1, sizeof *nl->budgets))
        return false;
    nl->budgets[nl->nbudgets] = b;
    *index = nl->nbudgets++;
    return true;
}

int ls_port_adc(const ls_netlist *nl, int port)
{
    int load = nl->parts[port].pin[1], best = -1;
    double best_lsb = INFINITY;
    if (load <= 0)
        return -1;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (!p->kind->is_adc || p->pin[0] != load)
            continue;
        double lsb = ls_adc_lsb(p);
        if (lsb < best_lsb) {
            best_lsb = lsb;
            best = i;
        }
    }
    return best;
}

/* Per node, whether ls_port_adc would find an adc input there (the same
 * rule: an adc whose LSB is below infinity), from one pass over the parts, so
 * that the budget check does not scan the part table per port.  Malloc'd,
 * nnodes flags; NULL when out of memory (then ls_port_adc per port). */
static bool *adc_on_node(const ls_netlist *nl)
{
    bool *has = calloc((size_t)(nl->nnodes ? nl->nnodes : 1), sizeof *has);
    if (!has)
        return NULL;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (p->kind->is_adc && p->pin[0] > 0 && p->pin[0] < nl->nnodes &&
            ls_adc_lsb(p) < INFINITY)
            has[p->pin[0]] = true;
    }
    return has;
}

/* Budgets whose unit does not fit their port: LSB without an adc on the load
 * node, volts on a current-mode port, amperes on a voltage-mode one. */
static void check_budgets(elab *x)
{
    ls_netlist *nl = x->nl;
    int bi = ls_kind_opt(ls_kind_find("port"), "budget");
    bool *adc = NULL, adc_tried = false;
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        if (!p->kind->is_port || !ls_part_has(p, bi))
            continue;
        const ls_budget *b = &nl->budgets[(int)p->opt[bi]];
        bool cur = ls_part_opt(p, "mode", 0) == 1;
        bool no_adc = false;
        if (b->unit == LS_BUDGET_LSB && !cur) {
            if (!adc_tried) {
                adc = adc_on_node(nl);
                adc_tried = true;
            }
            int load = p->pin[1];
            no_adc = adc ? !(load > 0 && load < nl->nnodes && adc[load]) : ls_port_adc(nl, i) < 0;
        }
        if (b->unit == LS_BUDGET_LSB && (cur || no_adc))
            ls_error(x->d, b->loc, "budget in LSB needs an adc input on the port's load node, and '%s' has none%s; "
                     "write volts or a %% of the open value",
                     nl->nodes[p->pin[1]].name, cur ? " (and a current-mode port's sag is a current)" : "");
        else if (b->unit == LS_BUDGET_VOLT && cur)
            ls_error(x->d, b->loc, "port '%s' is current-mode: its sag, and so its budget, is a current (or a %%)",
                     p->name);
        else if (b->unit == LS_BUDGET_AMP && !cur)
            ls_error(x->d, b->loc, "port '%s' is voltage-mode: its budget is volts, a %% or LSB, not a current",
                     p->name);
    }
    free(adc);
}

/* ---- statements --------------------------------------------------------------------- */

static const char *stmt_text(elab *x, const ls_stmt *st)
{
    const ls_file *f = &x->d->files[st->text_loc.file];
    unsigned s = st->text_loc.start, e = st->text_loc.end;
    if (e > f->len)
        e = f->len;
    char *out = ls_arena_alloc(x->a, e - s + 1);
    if (!out)
        return "";
    /* Fold continuation lines, comments and runs of blanks into single spaces. */
    size_t n = 0;
    bool space = false;
    for (unsigned i = s; i < e; i++) {
        char c = f->text[i];
        if (c == '#') {
            while (i < e && f->text[i] != '\n')
                i++;
            space = true;
            continue;
        }
        if (c == '\\' || c == '\n' || c == '\r' || c == ' ' || c == '\t') {
            space = true;
            continue;
        }
        if (space && n)
            out[n++] = ' ';
        space = false;
        out[n++] = c;
    }
    out[n] = 0;
    return out;
}

static void add_check(elab *x, const scope *s, const ls_stmt *st)
{
    ls_netlist *nl = x->nl;
    ls_check c = {.loc = st->loc, .instance = s->prefix[0] ? s->prefix : NULL, .text = stmt_text(x, st),
                  .cmp = st->cmp};
    c.lhs = bind(x, s, st->lhs);
    c.rhs = bind(x, s, st->rhs);
    if (st->rhs2)
        c.rhs2 = bind(x, s, st->rhs2);
    if (!c.lhs || !c.rhs || (st->rhs2 && !c.rhs2))
        return;
    ls_dims d;
    if (!combine(x, LS_OP_SUB, st->rhs->loc, c.lhs->dims, c.rhs->dims, NULL, &d))
        return;
    if (c.rhs2 && !combine(x, LS_OP_SUB, st->rhs2->loc, d, c.rhs2->dims, NULL, &d))
        return;
    if (st->within) {
        if (!(c.within = bind(x, s, st->within)))
            return;
        if (!norm(c.within->dims).known) {
            c.relative = true;
        } else if (!combine(x, LS_OP_SUB, st->within->loc, d, c.within->dims, NULL, &d)) {
            return;
        }
    }
    if (!grow_x(x, (void **)&nl->checks, &nl->cap_checks, nl->nchecks + 1, sizeof *nl->checks))
        return;
    nl->checks[nl->nchecks++] = c;
}

/* The option names of a kind, "tol, rating, rs", written into buf (n bytes,
 * the caller's; no shared static buffer, so circuits can elaborate side by side). */
static const char *opt_names(const ls_kind *k, char *buf, size_t n)
{
    buf[0] = 0;
    for (int i = 0; i < k->nopts; i++) {
        if (i)
            strncat(buf, ", ", n - strlen(buf) - 1);
        strncat(buf, k->opts[i].name, n - strlen(buf) - 1);
    }
    return buf;
}

bool ls_elab_value_ok(unsigned flags, double v)
{
    return !((flags & OPTF_POSITIVE) && !(v > 0)) && !((flags & OPTF_NONNEG) && v < 0) &&
           !((flags & OPTF_FRACTION) && (v < 0 || v > 1)) && !((flags & OPTF_INTEGER) && (v != floor(v) || v > 62));
}

static bool check_flags(elab *x, unsigned flags, double v, ls_loc loc, const char *what)
{
    if (ls_elab_value_ok(flags, v))
        return true;
    if ((flags & OPTF_POSITIVE) && !(v > 0)) {
        ls_error(x->d, loc, "%s must be greater than zero", what);
        return false;
    }
    if ((flags & OPTF_NONNEG) && v < 0) {
        ls_error(x->d, loc, "%s must not be negative", what);
        return false;
    }
    if ((flags & OPTF_FRACTION) && (v < 0 || v > 1)) {
        ls_error(x->d, loc, "%s must be between 0 and 1", what);
        return false;
    }
    if ((flags & OPTF_INTEGER) && (v != floor(v) || v > 62)) {
        ls_error(x->d, loc, "%s must be a whole number (at most 62)", what);
        return false;
    }
    return true;
}

static bool set_word(elab *x, const scope *s, ls_part *p, int oi, const ls_opt *o)
{
    const ls_optdef *od = &p->kind->opts[oi];
    if (o->value->kind == E_NAME && !o->hi) {
        const char *w = od->words;
        for (int idx = 0; *w; idx++) {
            const char *bar = strchr(w, '|');
            size_t n = bar ? (size_t)(bar - w) : strlen(w);
            if (strlen(o->value->name) == n && strncmp(o->value->name, w, n) == 0) {
                p->opt[oi] = idx;
                return true;
            }
            w += n + (bar ? 1 : 0);
        }
    }
    /* A let stands for the word with its value as the index (state=pump_on
     * with let pump_on = 1 is closed), so --set can flip it. */
    double v;
    ls_dims d;
    int nwords = 1;
    for (const char *c = od->words; *c; c++)
        nwords += *c == '|';
    if (o->value->kind == E_NAME && !o->hi && param_ref(x, s, o->value->name)) {
        if (!eval(x, s, o->value, &v, &d))
            return false;
        follow_structural(x, s, o->value, od->name, p->kind->name, p->name);
        if (v == floor(v) && v >= 0 && v < nwords) {
            p->opt[oi] = v;
            return true;
        }
        ls_error(x->d, o->value->loc, "%s= takes one of: %s, or a let whose value is 0 to %d ('%s' is %g)",
                 od->name, od->words, nwords - 1, o->value->name, v);
        return false;
    }
    ls_error(x->d, o->value->loc, "%s= takes one of: %s, or a let whose value is 0 to %d", od->name, od->words,
             nwords - 1);
    return false;
}

/* One end of a range option: a node, a node plus or minus a voltage
 * (vcc-1.5V), or a value of the option's unit. */
static bool range_end(elab *x, const scope *s, const ls_expr *e, ls_dims want, ls_level *out, int slot)
{
    const ls_expr *name = NULL, *off = NULL;
    double sign = 1;
    out->node = -1;
    out->volts = 0;
    if (e->kind == E_NAME && !param_ref(x, s, e->name)) {
        name = e;
    } else if (e->kind == E_BIN && (e->op == LS_OP_ADD || e->op == LS_OP_SUB) && e->a->kind == E_NAME &&
               !param_ref(x, s, e->a->name)) {
        name = e->a;
        off = e->b;
        sign = e->op == LS_OP_SUB ? -1 : 1;
    } else if (e->kind == E_BIN && e->op == LS_OP_ADD && e->b->kind == E_NAME && !param_ref(x, s, e->b->name)) {
        name = e->b;
        off = e->a;
    }
    if (!name) {
        if (!eval_slot(x, s, e, want, &out->volts))
            return false;
        int en = follow(x, s, e, LD_RANGE, x->nl->nparts);
        if (en >= 0)
            ls_letdeps_entry(x->deps, en)->slot = slot;
        return true;
    }
    if (!ls_dims_eq(norm(want), LS_VOLT)) {
        ls_error(x->d, name->loc, "'%s': only a voltage range may name a node", name->name);
        return false;
    }
    out->node = node_ref(x, s, name->name, name->loc);
    if (out->node < 0)
        return false;
    if (off && !eval_slot(x, s, off, LS_VOLT, &out->volts))
        return false;
    out->volts *= sign;
    int en = off ? follow(x, s, off, LD_RANGE, x->nl->nparts) : -1;
    if (en >= 0) {
        ls_letdeps_entry(x->deps, en)->slot = slot;
        ls_letdeps_entry(x->deps, en)->sign = sign;
    }
    return true;
}

/* range -> LO '..' HI, each end a node, a node +- a voltage, or a value. */
static bool set_range(elab *x, const scope *s, ls_part *p, int oi, const ls_opt *o)
{
    const ls_optdef *od = &p->kind->opts[oi];
    if (!o->hi) {
        ls_error(x->d, o->value->loc, "%s= takes a range LO..HI (two nodes or two voltages, e.g. gnd..vcc or 0..5V)",
                 od->name);
        return false;
    }
    if (!p->range) {
        p->range = ls_arena_alloc(x->a, LS_MAX_RANGES * sizeof *p->range);
        if (!p->range) {
            out_of_memory(x);
            return false;
        }
    }
    ls_level *r = p->range[od->pin];
    bool ok_lo = range_end(x, s, o->value, od->dims, &r[0], 2 * od->pin); /* both ends, to report both */
    bool ok_hi = range_end(x, s, o->hi, od->dims, &r[1], 2 * od->pin + 1);
    if (!ok_lo || !ok_hi)
        return false;
    if (r[0].node == r[1].node && !(r[0].volts < r[1].volts)) {
        ls_error(x->d, o->value->loc, "%s= %s: the low end must be below the high end", od->name,
                 src_text(x, (ls_loc){o->value->loc.file, o->value->loc.start, o->hi->loc.end}));
        return false;
    }
    return true;
}

/* free=LO..HI: both ends in the unit of the part's main value, 0 < LO < HI;
 * stored in nl->frees, its index in p->opt[oi]. */
static bool set_free(elab *x, const scope *s, ls_part *p, int oi, const ls_opt *o)
{
    ls_netlist *nl = x->nl;
    const ls_kind *k = p->kind;
    ls_dims d = ls_kind_main_dims(k);
    bool has_main = k->value_slot;
    for (int i = 0; i < k->nopts; i++)
        has_main = has_main || (k->opts[i].flags & OPTF_MAIN);
    if (!has_main) {
        ls_error(x->d, o->name_loc, "free= is for a part with a main value; a %s has none", k->name);
        return false;
    }
    if (!o->hi) {
        ls_error(x->d, o->value->loc, "free= takes a range LO..HI of the part's value (e.g. free=1k..100k)");
        return false;
    }
    ls_freevar f = {.part = nl->nparts, .series = NULL,
                 .loc = {o->value->loc.file, o->value->loc.start, o->hi->loc.end}};
    bool ok_lo = eval_slot(x, s, o->value, d, &f.lo), ok_hi = eval_slot(x, s, o->hi, d, &f.hi);
    if (!ok_lo || !ok_hi)
        return false;
    follow_structural(x, s, o->value, "free= range", k->name, p->name);
    follow_structural(x, s, o->hi, "free= range", k->name, p->name);
    if (!(f.lo > 0 && f.hi > f.lo && isfinite(f.hi))) {
        ls_error(x->d, f.loc, "free= %s: the range must be 0 < LO < HI (standard values are positive)",
                 src_text(x, f.loc));
        return false;
    }
    if (!grow_x(x, (void **)&nl->frees, &nl->cap_frees, nl->nfrees + 1, sizeof *nl->frees))
        return false;
    nl->frees[nl->nfrees] = f;
    p->opt[oi] = nl->nfrees++;
    return true;
}

/* After a part's options: its free= record learns the snap= series (before
 * snap_value turns that option into the rounding error), and the written
 * value, the starting point, must lie in the range. */
static void finish_free(elab *x, ls_part *p)
{
    const ls_kind *k = p->kind;
    int fi = ls_kind_opt(k, "free"), si = ls_kind_opt(k, "snap");
    if (!ls_part_has(p, fi))
        return;
    ls_freevar *f = &x->nl->frees[(int)p->opt[fi]];
    if (ls_part_has(p, si)) {
        static const char *const names[] = {"E6", "E12", "E24", "E48", "E96", "E192"};
        int w = (int)p->opt[si];
        if (w >= 0 && w < 6)
            f->series = names[w];
    }
    if (p->has_value && !(p->value >= f->lo * (1 - 1e-12) && p->value <= f->hi * (1 + 1e-12)))
        ls_error(x->d, p->value_loc, "%s '%s': its value %g lies outside its free= range %s",
                 k->name, p->name, p->value, src_text(x, f->loc));
}

/* snap=SERIES: round the value to the nearest IEC 60063 value of the series
 * and warn with the rounding error; opt[oi] then holds that error as a
 * fraction (snapped / written - 1) instead of the word's index. */
static void snap_value(elab *x, ls_part *p, int oi, ls_loc at)
{
    const char *w = p->kind->opts[oi].words;
    for (int i = (int)p->opt[oi]; i > 0 && strchr(w, '|'); i--)
        w = strchr(w, '|') + 1;
    char name[8];
    size_t n = strcspn(w, "|");
    snprintf(name, sizeof name, "%.*s", (int)(n < sizeof name ? n : sizeof name - 1), w);
    double v = ls_eseries_snap(ls_eseries_find(name), p->value);
    if (!isfinite(v))
        return;
    p->opt[oi] = v / p->value - 1;
    if (v != p->value)
        ls_warning(x->d, at, "snapped", "%s '%s': %.6g ohm rounded to the %s value %.6g ohm (%+.3g%%)",
                   p->kind->name, p->name, p->value, name, v, 100 * p->opt[oi]);
    p->value = v;
}

/* The part kind a part statement's kind word names, or NULL.  The parser
 * knows only the grammar; the table is asked here, the last answer first. */
static const ls_kind *kind_of(elab *x, const char *kw)
{
    if (kw != x->last_kw || !x->last_kind) {
        x->last_kw = kw;
        x->last_kind = ls_kind_find(kw);
    }
    return x->last_kind;
}

/* The closest part kind or statement keyword to a word that is neither
 * (within two edits), or NULL. */
static const char *suggest_kind(const char *word)
{
    const char *best = NULL;
    int bd = 3;
    for (int i = 0; i < ls_kind_count(); i++) {
        int d = ls_edit_distance(word, ls_kind_at(i)->name);
        if (d < bd) {
            bd = d;
            best = ls_kind_at(i)->name;
        }
    }
    for (const char *const *k = ls_statement_keywords; *k; k++) {
        int d = ls_edit_distance(word, *k);
        if (d < bd) {
            bd = d;
            best = *k;
        }
    }
    return best;
}

/* An error for each part statement (broken ones too) whose kind word is no
 * part kind, in the order of the text, block bodies included: first of the
 * elaboration's errors, right after the syntax errors. */
/* Name the kind word of every part statement in stmts (blocks' bodies
 * included) that is no kind; each statement's kind into kinds[i] when kinds
 * is given. */
static void check_kinds(elab *x, ls_stmt *const *stmts, int n, unsigned char *kinds)
{
    for (int i = 0; i < n; i++) {
        if (kinds)
            kinds[i] = (unsigned char)ls_stmt_kind(stmts[i]);
        const ls_brief *br = ls_brief_of(stmts[i]);
        if (br && kind_of(x, br->kw))
            continue; /* the common case, without a view */
        ls_stmt_buf buf;
        const ls_stmt *st = ls_stmt_view(stmts[i], &buf);
        if (st->kind == S_BLOCK) {
            check_kinds(x, st->body, st->nbody, NULL);
            continue;
        }
        if ((st->kind != S_PART && st->kind != S_BADPART) || kind_of(x, st->kw))
            continue;
        char name[64];
        snprintf(name, sizeof name, "%.60s", st->kw);
        const char *near = suggest_kind(name);
        if (near)
            ls_error(x->d, st->loc, "unknown part kind or keyword '%s'; did you mean '%s'?", name, near);
        else
            ls_error(x->d, st->loc, "unknown part kind or keyword '%s'", name);
    }
}

/* A part whose main value is rounded by snap= or checked against free=:
 * when the followed let reaches that value (an entry since n0), more than
 * the value changes with it. */
static void follow_rounded(elab *x, const ls_part *p, int n0)
{
    for (int i = n0; i < x->deps->n; i++) {
        const ls_ld_entry *e = ls_letdeps_entry(x->deps, i);
        if (e->kind == LD_VALUE || (e->kind == LD_OPT && e->is_main)) {
            char why[160];
            snprintf(why, sizeof why, "the value of %s '%s', rounded by snap= or bounded by free=", p->kind->name,
                     p->name);
            ls_letdeps_structural(x->deps, why);
            return;
        }
    }
}

/* part -> fill an ls_part from its statement */
/* The error for an option name kind k does not have: the nearest name it
 * has, or the list of them. */
static void unknown_option(elab *x, const ls_kind *k, const ls_opt *o)
{
    const char *best = NULL;
    char names[512];
    int bd = 3;
    for (int j = 0; j < k->nopts; j++) {
        int dd = ls_edit_distance(o->name, k->opts[j].name);
        if (dd < bd) {
            bd = dd;
            best = k->opts[j].name;
        }
    }
    if (best)
        ls_error(x->d, o->name_loc, "%s has no option '%s'; did you mean '%s'?", k->name, o->name, best);
    else
        ls_error(x->d, o->name_loc, "%s has no option '%s' (it takes: %s)", k->name, o->name,
                 opt_names(k, names, sizeof names));
}

/* A numeric option (OPT_VALUE) oi of part p from o: evaluated, checked and
 * stored (a budget as its index), with its let dependence followed.  False
 * after an error (reported). */
static bool set_value(elab *x, const scope *s, ls_part *p, int oi, const ls_opt *o)
{
    const ls_optdef *od = &p->kind->opts[oi];
    double v;
    if (od->flags & OPTF_BUDGET) {
        if (!add_budget(x, s, o->value, &v))
            return false;
        p->opt[oi] = v;
        follow(x, s, o->value, LD_BUDGET, (int)v);
        return true;
    }
    if (!eval_slot(x, s, o->value, od->dims, &v) || !check_flags(x, od->flags, v, o->value->loc, o->name))
        return false;
    if (od->flags & OPTF_MAIN) {
        if (p->has_value) {
            ls_error(x->d, o->name_loc, "%s is given twice (as the value and as %s=)", o->name, o->name);
            return false;
        }
        p->value = v;
        p->has_value = true;
        p->value_loc = o->value->loc;
    }
    if (strcmp(od->name, "tol") == 0 && v >= 1) {
        ls_error(x->d, o->value->loc, "tol= is a fraction below 1 (write 1%% or 0.01)");
        return false;
    }
    p->opt[oi] = v;
    int en = follow(x, s, o->value, LD_OPT, x->nl->nparts);
    if (en >= 0) {
        ls_ld_entry *le = ls_letdeps_entry(x->deps, en);
        le->slot = oi;
        le->flags = od->flags;
        le->is_main = od->flags & OPTF_MAIN;
        le->is_tol = strcmp(od->name, "tol") == 0;
    }
    return true;
}

/* Option o of part p (of kind k, its index oi in the kind's table) set from
 * its statement; *snap_loc gets where snap= was written.  1 when set, 0
 * after an error (reported: the option is left out), -1 out of memory (the
 * part is to be dropped). */
static int set_option(elab *x, const scope *s, ls_part *p, int oi, const ls_opt *o, ls_loc *snap_loc)
{
    if (ls_part_has(p, oi)) {
        ls_error(x->d, o->name_loc, "option '%s' is given twice", o->name);
        return 0;
    }
    if (!p->opt) {
        p->opt = ls_arena_alloc(x->a, LS_MAX_OPTS * sizeof *p->opt);
        if (!p->opt) {
            out_of_memory(x);
            return -1;
        }
    }
    const ls_optdef *od = &p->kind->opts[oi];
    if (od->kind == OPT_WORD && strcmp(od->name, "snap") == 0)
        *snap_loc = o->value->loc;
    if (o->hi && od->kind != OPT_RANGE && od->kind != OPT_FREE) {
        ls_error(x->d, o->hi->loc, "%s= takes one value, not a range", o->name);
        return 0;
    }
    bool ok = true;
    switch (od->kind) {
    case OPT_VALUE:
        ok = set_value(x, s, p, oi, o);
        break;
    case OPT_NODE:
        if (o->value->kind != E_NAME) {
            ls_error(x->d, o->value->loc, "%s= takes a node name", o->name);
            return 0;
        }
        p->pin[od->pin] = node_ref(x, s, o->value->name, o->value->loc);
        break;
    case OPT_PART:
        if (o->value->kind != E_NAME) {
            ls_error(x->d, o->value->loc, "%s= takes the name of a part or port", o->name);
            return 0;
        }
        {
            ls_via_name *v = ls_arena_alloc(x->a, sizeof *v);
            if (!v)
                return 0; /* the arena is marked: reported at the end */
            *v = (ls_via_name){o->value->name, s->prefix, o->value->loc};
            p->via = v;
            x->nvia++;
        }
        break;
    case OPT_WORD: ok = set_word(x, s, p, oi, o); break;
    case OPT_RANGE: ok = set_range(x, s, p, oi, o); break;
    case OPT_FREE: ok = set_free(x, s, p, oi, o); break;
    }
    if (!ok)
        return 0;
    p->has_opt |= 1u << oi;
    return 1;
}

/* The options of statement st into part p.  False when out of memory (the
 * part is to be dropped). */
static bool set_options(elab *x, const scope *s, const ls_stmt *st, ls_part *p, ls_loc *snap_loc)
{
    const ls_kind *k = p->kind;
    for (int i = 0; i < st->nopts; i++) {
        const ls_opt *o = &st->opts[i];
        int oi = ls_kind_opt(k, o->name);
        const char *now = oi < 0 ? ls_kind_renamed(k, o->name) : NULL;
        if (now)
            ls_error(x->d, o->name_loc, "%s option '%s=' is now spelled '%s='", k->name, o->name, now);
        else if (oi < 0)
            unknown_option(x, k, o);
        else if (set_option(x, s, p, oi, o, snap_loc) < 0)
            return false;
    }
    return true;
}

/* The error for a required value part p of statement st lacks. */
static void require_value(elab *x, const ls_stmt *st, const ls_part *p)
{
    const ls_kind *k = p->kind;
    if ((k->value_flags & OPTF_REQUIRED) && !p->has_value && !st->value) {
        char b[64];
        ls_error(x->d, st->name_loc, "%s '%s' needs a value (%s)", k->name, st->name, dname(k->value_dims, b, sizeof b));
    }
}

/* The errors for the required options part p of statement st lacks. */
static void require_options(elab *x, const ls_stmt *st, const ls_part *p)
{
    const ls_kind *k = p->kind;
    for (int i = 0; i < k->nopts; i++) {
        const ls_optdef *od = &k->opts[i];
        if (!(od->flags & OPTF_REQUIRED) || ls_part_has(p, i) || ((od->flags & OPTF_MAIN) && p->has_value))
            continue;
        if ((od->flags & OPTF_MAIN) && st->value)
            continue; /* the positional value was given but had an error */
        ls_error(x->d, st->name_loc, "%s '%s' needs %s=  (%s)", k->name, st->name, od->name, k->doc);
    }
}

/* The index of kind k's option that is its main value (OPTF_MAIN), or -1. */
static int main_option(const ls_kind *k)
{
    int main_opt = -1;
    for (int i = 0; i < k->nopts; i++)
        if (k->opts[i].flags & OPTF_MAIN)
            main_opt = i;
    return main_opt;
}

/* The value written after the nodes of statement st into part p, evaluated
 * in the unit of the kind's value (or of its main option, main_opt >= 0). */
static void set_positional(elab *x, const scope *s, const ls_stmt *st, ls_part *p, int main_opt)
{
    const ls_kind *k = p->kind;
    ls_dims vd = main_opt >= 0 ? k->opts[main_opt].dims : k->value_dims;
    if (!k->value_slot) {
        ls_error(x->d, st->value->loc, "a %s takes no value here: %s", k->name, k->doc);
    } else if (eval_slot(x, s, st->value, vd, &p->value)) {
        p->has_value = true;
        p->value_loc = st->value->loc;
        int en = follow(x, s, st->value, LD_VALUE, x->nl->nparts);
        if (en >= 0)
            ls_letdeps_entry(x->deps, en)->flags = main_opt < 0 ? k->value_flags : 0;
    }
}

/* Part p of statement st into the netlist under its name (unless the part
 * table is at its limit or the name is taken: both reported). */
static void store_part(elab *x, const ls_stmt *st, const ls_part *p)
{
    ls_netlist *nl = x->nl;
    if (nl->nparts >= LS_MAX_PARTS) {
        if (!x->parts_capped) /* say it once, with what the parts alone would take */
            ls_error(x->d, st->name_loc, "more than %d parts after the blocks are expanded (%.0f MB for the part "
                     "table alone)", LS_MAX_PARTS, (double)LS_MAX_PARTS * sizeof(ls_part) / 1e6);
        x->parts_capped = true;
        return;
    }
    if (!grow_x(x, (void **)&nl->parts, &nl->cap_parts, nl->nparts + 1, sizeof *nl->parts))
        return;
    nl->parts[nl->nparts] = *p;
    if (declare(x, p->name, ENT_PART, nl->nparts, st->name_loc, NULL) >= 0)
        nl->nparts++;
}

/* The record of statement st's part of kind k in scope s, before its nodes,
 * value and options: no pins, no branch, no state.  False when its name
 * cannot be made (out of memory, reported at the end). */
static bool start_part(elab *x, const scope *s, const ls_stmt *st, const ls_kind *k, ls_part *p)
{
    memset(p, 0, sizeof *p);
    p->kind = k;
    p->loc = st->name_loc;
    p->ref = -1;
    p->branch = -1;
    for (int i = 0; i < LS_MAX_PINS; i++)
        p->pin[i] = -1;
    p->name = qualify(x, s, st->name);
    p->instance = s->prefix[0] ? s->prefix : NULL;
    p->slot = -1;
    return p->name != NULL;
}

/* A part's free= range checked and its snap= rounding done, the rounding
 * recorded for a followed let (deps entries from deps_n0 on are the
 * part's); snap_loc is where snap= was written. */
static void finish_rounding(elab *x, ls_part *p, int deps_n0, ls_loc snap_loc)
{
    const ls_kind *k = p->kind;
    finish_free(x, p);
    if (x->deps && p->has_value && (ls_part_has(p, ls_kind_opt(k, "snap")) || ls_part_has(p, ls_kind_opt(k, "free"))))
        follow_rounded(x, p, deps_n0);
    if (p->has_value && ls_part_has(p, ls_kind_opt(k, "snap")))
        snap_value(x, p, ls_kind_opt(k, "snap"), snap_loc);
}

/* Statement st's part into the netlist (in scope s): its nodes, value and
 * options checked, unless an error was reported. */
static void elab_part(elab *x, const scope *s, const ls_stmt *st)
{
    ls_netlist *nl = x->nl;
    const ls_kind *k = kind_of(x, st->kw);
    if (!k)
        return; /* named by check_kinds */
    ls_part p;
    ls_loc snap_loc = LS_NOLOC;
    if (!start_part(x, s, st, k, &p))
        return;
    int errs = x->d->errors;
    int deps_n0 = x->deps ? x->deps->n : 0;

    if (k->shape == SHAPE_TWO && !st->arrow) {
        ls_error(x->d, st->name_loc, "%s '%s' needs its nodes: %s", k->name, st->name, k->doc);
        return;
    }
    if (k->shape == SHAPE_PINNED && st->arrow) {
        ls_error(x->d, st->from_loc, "%s takes named pins, not FROM -> TO: %s", k->name, k->doc);
        return;
    }
    if (st->arrow) {
        p.pin[0] = node_ref_keyed(x, s, st->from, st->from_loc, st->from_key);
        p.pin[1] = node_ref_keyed(x, s, st->to, st->to_loc, st->to_key);
    }
    int main_opt = main_option(k);
    if (st->value)
        set_positional(x, s, st, &p, main_opt);
    if (!set_options(x, s, st, &p, &snap_loc))
        return;
    require_value(x, st, &p);
    if (p.has_value && main_opt < 0 && !check_flags(x, k->value_flags, p.value, p.value_loc,
                                                     k->value_dims.v == 1 && k->value_dims.a == -1
                                                         ? "a resistance (use a port for a zero-ohm connection)"
                                                         : "the value"))
        return;
    require_options(x, st, &p);
    if (p.has_opt) /* free= and snap= are options: without any, nothing to finish */
        finish_rounding(x, &p, deps_n0, snap_loc);
    if (st->arrow && p.pin[0] >= 0 && p.pin[0] == p.pin[1])
        ls_warning(x->d, st->from_loc, "same-node", "both ends of %s '%s' are the same node '%s'", k->name, st->name,
                   nl->nodes[p.pin[0]].name);
    if (x->d->errors != errs)
        return;
    store_part(x, st, &p);
}

static void elab_body(elab *x, const scope *s, ls_stmt *const *stmts, int n, const unsigned char *kinds);

static int block_index(elab *x, const char *name)
{
    return ls_hash_get(&x->blocks, name);
}

static int find_pin(const ls_stmt *b, const char *name)
{
    for (int i = 0; i < b->npins; i++)
        if (strcmp(b->pins[i], name) == 0)
            return i;
    return -1;
}

static int find_bparam(const ls_stmt *b, const char *name)
{
    for (int i = 0; i < b->nopts; i++)
        if (strcmp(b->opts[i].name, name) == 0)
            return i;
    return -1;
}

/* The error for a use of a block that is not defined: the nearest block
 * name, if one is near. */
static void unknown_block(elab *x, const ls_stmt *st)
{
    const char *best = NULL;
    int bd = 3;
    for (int i = 0; i < x->nblocks; i++) {
        int dd = ls_edit_distance(st->kw, x->blockv[i]->name);
        if (dd < bd) {
            bd = dd;
            best = x->blockv[i]->name;
        }
    }
    if (best)
        ls_error(x->d, st->kw_loc, "unknown block '%s'; did you mean '%s'?", st->kw, best);
    else
        ls_error(x->d, st->kw_loc, "unknown block '%s'", st->kw);
}

/* Whether block b may be expanded for use st in scope s: not inside itself,
 * not past the nesting depth or the instance count (each reported). */
static bool use_allowed(elab *x, const scope *s, const ls_stmt *st, const ls_stmt *b)
{
    for (const scope *u = s; u; u = u->up) {
        if (u->block == b) {
            char chain[512] = "";
            for (const scope *v = s; v && v->block; v = v->up) {
                char tmp[512];
                snprintf(tmp, sizeof tmp, "%s%s%s", v->block->name, chain[0] ? " <- " : "", chain);
                memcpy(chain, tmp, sizeof chain);
            }
            ls_error(x->d, st->kw_loc, "block '%s' uses itself (%s <- %s): recursion is not allowed", b->name,
                     b->name, chain);
            return false;
        }
    }
    if (s->depth + 1 > LS_MAX_BLOCK_DEPTH) {
        ls_error(x->d, st->kw_loc, "blocks nested more than %d deep", LS_MAX_BLOCK_DEPTH);
        return false;
    }
    if (++x->nl->instances > LS_MAX_INSTANCES) {
        if (x->nl->instances == LS_MAX_INSTANCES + 1)
            ls_error(x->d, st->kw_loc, "more than %d block instances", LS_MAX_INSTANCES);
        return false;
    }
    return true;
}

/* The error for option o of a use that is neither a pin nor a parameter of
 * block b: the nearest of those names, if one is near. */
static void unknown_use_option(elab *x, const ls_stmt *b, const ls_opt *o)
{
    const char *best = NULL;
    int bd = 3;
    for (int j = 0; j < b->npins; j++)
        if (ls_edit_distance(o->name, b->pins[j]) < bd)
            bd = ls_edit_distance(o->name, b->pins[j]), best = b->pins[j];
    for (int j = 0; j < b->nopts; j++)
        if (ls_edit_distance(o->name, b->opts[j].name) < bd)
            bd = ls_edit_distance(o->name, b->opts[j].name), best = b->opts[j].name;
    if (best)
        ls_error(x->d, o->name_loc, "block '%s' has no pin or parameter '%s'; did you mean '%s'?", b->name,
                 o->name, best);
    else
        ls_error(x->d, o->name_loc, "block '%s' has no pin or parameter '%s'", b->name, o->name);
}

/* The options of use st of block b: each pin's node aliased in the
 * instance's scope `in` (pin_given marks it), each parameter's option kept
 * in param_given for bind_block_params. */
static void connect_pins(elab *x, const scope *s, const scope *in, const ls_stmt *st, const ls_stmt *b,
                         bool *pin_given, const ls_opt **param_given)
{
    for (int i = 0; i < st->nopts; i++) {
        const ls_opt *o = &st->opts[i];
        int pi = find_pin(b, o->name);
        if (pi >= 0) {
            if (pin_given[pi]) {
                ls_error(x->d, o->name_loc, "pin '%s' is connected twice", o->name);
                continue;
            }
            pin_given[pi] = true;
            if (o->value->kind != E_NAME || o->hi) {
                ls_error(x->d, o->value->loc, "pin '%s' takes a node name", o->name);
                continue;
            }
            int node = node_ref(x, s, o->value->name, o->value->loc);
            if (node >= 0)
                declare(x, qualify(x, in, o->name), ENT_ALIAS, node, o->name_loc, NULL);
            continue;
        }
        int qi = find_bparam(b, o->name);
        if (qi >= 0) {
            if (param_given[qi])
                ls_error(x->d, o->name_loc, "parameter '%s' is given twice", o->name);
            else
                param_given[qi] = o;
            continue;
        }
        unknown_use_option(x, b, o);
    }
    for (int i = 0; i < b->npins; i++)
        if (!pin_given[i])
            ls_error(x->d, st->name_loc, "pin '%s' of block '%s' is not connected in '%s'", b->pins[i], b->name,
                     st->name);
}

/* Block b's parameters in the instance's scope `in`: the value use st gave
 * (param_given, evaluated in the user's scope s) or the default (evaluated
 * in the instance's scope); a parameter with neither is an error. */
static void bind_block_params(elab *x, const scope *s, const scope *in, const ls_stmt *st, const ls_stmt *b,
                              const ls_opt *const *param_given)
{
    ls_netlist *nl = x->nl;
    for (int i = 0; i < b->nopts; i++) {
        const ls_opt *bo = &b->opts[i];
        double v;
        ls_dims d;
        if (param_given[i]) {
            if (!eval(x, s, param_given[i]->value, &v, &d))
                continue;
            if (follow(x, s, param_given[i]->value, LD_PARAM, nl->nparams) >= 0)
                ls_letdeps_mark(x->deps, nl->nparams);
        } else if (bo->value) {
            if (!eval(x, in, bo->value, &v, &d))
                continue;
            if (follow(x, in, bo->value, LD_PARAM, nl->nparams) >= 0)
                ls_letdeps_mark(x->deps, nl->nparams);
        } else {
            ls_error(x->d, st->name_loc, "'%s' needs parameter '%s' of block '%s' (it has no default)", st->name,
                     bo->name, b->name);
            continue;
        }
        add_param(x, in, bo->name, v, d, bo->name_loc);
    }
}

/* use -> an instance of a block: its pins tied to the user's nodes, its
 * parameters bound, its body expanded under the instance's name. */
static void elab_use(elab *x, const scope *s, const ls_stmt *st)
{
    int bi = block_index(x, st->kw);
    if (bi < 0) {
        unknown_block(x, st);
        return;
    }
    const ls_stmt *b = x->blockv[bi];
    if (!use_allowed(x, s, st, b))
        return;
    const char *full = qualify(x, s, st->name);
    if (declare(x, full, ENT_INSTANCE, bi, st->name_loc, NULL) < 0)
        return;
    scope in = {full, b, s, s->depth + 1};
    int errs = x->d->errors;
    bool pin_given[256] = {0};
    const ls_opt *param_given[256] = {0};
    connect_pins(x, s, &in, st, b, pin_given, param_given);
    bind_block_params(x, s, &in, st, b, param_given);
    if (x->d->errors != errs)
        return;
    elab_body(x, &in, b->body, b->nbody, NULL);
}

/* Let i (declared by st, its value from `used`) is the followed let itself,
 * or depends on it. */
static void follow_param(elab *x, const scope *s, const ls_stmt *st, const ls_expr *used, int i)
{
    if (!x->deps || i < 0)
        return;
    if (!s->prefix[0] && strcmp(st->name, x->deps->let) == 0) {
        x->deps->root = i;
        ls_letdeps_mark(x->deps, i);
    } else if (follow(x, s, used, LD_PARAM, i) >= 0) {
        ls_letdeps_mark(x->deps, i);
    }
}

static void elab_param(elab *x, const scope *s, const ls_stmt *st)
{
    const ls_expr *e = st->value;
    ls_setting *set = NULL;
    if (!s->prefix[0])
        for (int i = 0; i < x->nsets; i++)
            if (strcmp(x->sets[i].name, st->name) == 0)
                set = &x->sets[i];
    double v;
    ls_dims d;
    if (!eval(x, s, e, &v, &d))
        return;
    const ls_expr *used = e;   /* the expression the let's value comes from */
    if (set) {
        set->used = true;
        double sv;
        ls_dims sd;
        if (!eval(x, s, set->value, &sv, &sd)) {
            sd = d; /* keep the file's value so later uses do not cascade */
            sv = v;
        } else if (norm(sd).known && norm(d).known && !ls_dims_eq(norm(sd), norm(d))) {
            char b1[64], b2[64];
            ls_error(x->d, set->value->loc, "let '%s' is %s, but --set gives %s", st->name,
                     dname(d, b1, sizeof b1), dname(sd, b2, sizeof b2));
            sv = v;
            sd = d;
        } else {
            used = set->value;
        }
        v = sv;
        if (norm(sd).known)
            d = sd;
    }
    follow_param(x, s, st, used, add_param(x, s, st->name, v, d, st->name_loc));
}

/* Params first (in order), then parts, instances and checks. */
enum { PREFETCH_AHEAD = 8 };

/* Ask for the name-table slot of node name `name` numbered key, unless that
 * number is resolved already (it then needs no probe). */
static void prefetch_node(elab *x, const char *name, int key)
{
    if (!x->node_of_key || key <= 0 || key > x->nkeys || x->node_of_key[key] < 0)
        prefetch_name(x, name);
}

/* Ask for the name-table slots of statement i's names (a part at the top level). */
static void prefetch_names(elab *x, ls_stmt *const *stmts, int n, int i)
{
    if (i >= n)
        return;
    const ls_brief *b = ls_brief_of(stmts[i]);
    const ls_stmt *a = stmts[i];
    if (b) {
        prefetch_name(x, b->name);
        prefetch_node(x, b->from, b->from_key);
        prefetch_node(x, b->to, b->to_key);
    } else if (a->kind == S_PART) {
        prefetch_name(x, a->name);
        if (a->arrow) {
            prefetch_node(x, a->from, a->from_key);
            prefetch_node(x, a->to, a->to_key);
        }
    }
}

/* The statements stmts (kinds: their kinds, or NULL to read them) in scope
 * s: lets first (in order), then parts and instances, then checks. */
static void elab_body(elab *x, const scope *s, ls_stmt *const *stmts, int n, const unsigned char *kinds)
{
    for (int i = 0; i < n; i++)
        if (kind_at(kinds, stmts, i) == S_PARAM)
            elab_param(x, s, stmts[i]);
    for (int i = 0; i < n; i++) {
        /* A large flat circuit is bound by the name table's cache misses:
         * ask for the slots of a statement a few lines ahead. */
        if (!s->prefix[0]) {
            prefetch_names(x, stmts, n, i + PREFETCH_AHEAD);
        }
        ls_skind k = kind_at(kinds, stmts, i);
        if (k == S_PART || k == S_BRIEF) {
            ls_stmt_buf buf; /* for a brief (only at the top level) */
            elab_part(x, s, ls_stmt_view(stmts[i], &buf));
        } else if (k == S_USE) {
            elab_use(x, s, stmts[i]);
        }
    }
    for (int i = 0; i < n; i++) {
        ls_skind k = kind_at(kinds, stmts, i);
        if (k == S_EXPECT)
            add_check(x, s, stmts[i]);
        else if (k == S_RULE && s->prefix[0])
            ls_error(x->d, stmts[i]->loc, "'rule' belongs at the top level (it applies to every port)");
    }
}

/* ---- whole program ---------------------------------------------------------------- */

static void collect_blocks(elab *x, const ls_program *prog)
{
    int n = 0;
    for (int i = 0; i < prog->n; i++)
        n += kind_at(x->top_kinds, prog->stmts, i) == S_BLOCK;
    x->blockv = calloc((size_t)(n ? n : 1), sizeof *x->blockv);
    if (!x->blockv) {
        ls_error(x->d, LS_NOLOC, "out of memory elaborating the blocks (%zu bytes)",
                 (size_t)(n ? n : 1) * sizeof *x->blockv);
        return;
    }
    for (int i = 0; i < prog->n; i++) {
        if (kind_at(x->top_kinds, prog->stmts, i) != S_BLOCK)
            continue;
        const ls_stmt *b = prog->stmts[i];
        int prev = ls_hash_get(&x->blocks, b->name);
        if (prev >= 0) {
            ls_error(x->d, b->name_loc, "block '%s' is defined twice", b->name);
            note_decl(x, x->blockv[prev]->name_loc, b->name);
            continue;
        }
        for (int j = 0; j < b->npins; j++) {
            for (int k = 0; k < j; k++)
                if (strcmp(b->pins[j], b->pins[k]) == 0)
                    ls_error(x->d, b->pin_locs[j], "pin '%s' is listed twice", b->pins[j]);
            if (find_bparam(b, b->pins[j]) >= 0)
                ls_error(x->d, b->pin_locs[j], "'%s' is both a pin and a parameter", b->pins[j]);
        }
        x->blockv[x->nblocks] = b;
        ls_hash_put(&x->blocks, b->name, x->nblocks++);
    }
}

static void ground_and_title(elab *x, const ls_program *prog)
{
    ls_netlist *nl = x->nl;
    const ls_stmt *g = NULL, *t = NULL;
    for (int i = 0; i < prog->n; i++) {
        ls_skind k = kind_at(x->top_kinds, prog->stmts, i);
        if (k != S_GROUND && k != S_TITLE && k != S_RULE)
            continue;
        const ls_stmt *s = prog->stmts[i];
        if (s->kind == S_GROUND) {
            if (g) {
                ls_error(x->d, s->loc, "a second 'ground': a circuit has exactly one ground node");
                note_decl(x, g->name_loc, g->name);
            } else {
                g = s;
            }
        } else if (s->kind == S_TITLE) {
            if (t)
                ls_error(x->d, s->loc, "a second 'title': a circuit has one title");
            else
                t = s;
        } else if (s->kind == S_RULE && strcmp(s->name, "sag") == 0) {
            scope top = {"", NULL, NULL, 0};
            if (nl->has_rule_sag)
                ls_error(x->d, s->loc, "a second 'rule sag'; keep one");
            else if (eval_budget(x, &top, s->rhs, false, &nl->rule_sag))
                nl->has_rule_sag = true;
        } else if (s->kind == S_RULE) {
            if (nl->has_rule) {
                ls_error(x->d, s->loc, "a second 'rule ratio'; keep one");
                continue;
            }
            scope top = {"", NULL, NULL, 0};
            double v;
            if (eval_slot(x, &top, s->rhs, LS_FREE, &v) && check_flags(x, OPTF_POSITIVE, v, s->rhs->loc, "the ratio")) {
                nl->min_ratio = v;
                nl->has_rule = true;
            }
        }
    }
    nl->title = t ? t->name : NULL;
    if (!g) {
        ls_stmt_buf first;
        ls_loc at = {prog->n ? ls_stmt_view(prog->stmts[0], &first)->loc.file : 0, 0, 0};
        if (x->d->nfiles > 0)
            ls_error(x->d, at, "the circuit has no ground: add a line 'ground NAME' naming the 0 V node");
        else
            ls_error(x->d, LS_NOLOC, "the circuit has no ground");
        nl->ground_name = "gnd";
    } else {
        nl->ground_name = g->name;
        nl->ground_loc = g->name_loc;
    }
    new_node(x, nl->ground_name, g ? g->name_loc : LS_NOLOC, 0, NULL);
    if (strcmp(nl->ground_name, "ground") != 0)
        declare(x, "ground", ENT_ALIAS, 0, g ? g->name_loc : LS_NOLOC, NULL);
}

static void resolve_refs(elab *x)
{
    ls_netlist *nl = x->nl;
    if (!x->nvia)
        return; /* every ref is -1: nothing to resolve, no chain */
    for (int i = 0; i < nl->nparts; i++) {
        ls_part *p = &nl->parts[i];
        const ls_via_name *via = p->via;
        if (!via)
            continue;
        const char *full = via->scope[0] ? ls_arena_printf(x->a, "%s.%s", via->scope, via->name) : via->name;
        int r = ls_netlist_find_part(nl, full);
        if (r < 0) {
            ls_error(x->d, via->loc, "via= names '%s', which is not a part or port", via->name);
            continue;
        }
        const ls_part *v = &nl->parts[r];
        if (v->kind->current == NULL) {
            ls_error(x->d, via->loc, "the current of %s '%s' cannot control a source", v->kind->name, via->name);
            continue;
        }
        p->ref = r;
    }
    /* A chain of current-controlled sources that comes back to itself has no
     * defined current: follow each chain.  The stamps follow a chain only
     * LS_MAX_VIA_CHAIN links deep, so a longer one is refused here rather than
     * stamped as a zero current (and the walk stays linear in the parts). */
    for (int i = 0; i < nl->nparts; i++) {
        int r = nl->parts[i].ref, steps = 0;
        while (r >= 0 && r != i && steps <= LS_MAX_VIA_CHAIN) {
            r = nl->parts[r].ref;
            steps++;
        }
        if (r >= 0 && r != i) {
            ls_error(x->d, nl->parts[i].via->loc,
                     "current-controlled sources are chained through via= more than %d deep from '%s'",
                     LS_MAX_VIA_CHAIN, nl->parts[i].name);
            nl->parts[i].ref = -1;
            continue;
        }
        if (r == i) {
            ls_error(x->d, nl->parts[i].via->loc, "current-controlled sources control each other in a loop through '%s'",
                     nl->parts[i].name);
            for (int j = i; nl->parts[j].ref >= 0;) {
                int next = nl->parts[j].ref;
                nl->parts[j].ref = -1;
                j = next;
            }
        }
    }
}

/* The node with a name nearest to node i's (edit distance at most 2) among
 * the nodes some part touches (cnt), or -1. */
static int near_node(const ls_netlist *nl, int i, const int *cnt)
{
    int best = -1, bd = 3;
    for (int j = 0; j < nl->nnodes; j++) {
        if (j == i || cnt[j] < 1)
            continue;
        int d = ls_edit_distance(nl->nodes[i].name, nl->nodes[j].name);
        if (d < bd) {
            bd = d;
            best = j;
        }
    }
    return best;
}

/* Edge callback: a DC path joins its two nodes' groups (ctx: the parents). */
static void join_edge(void *ctx, int a, int b, bool vdef, int part)
{
    (void)vdef;
    (void)part;
    if (a >= 0 && b >= 0)
        ls_uf_union(ctx, a, b);
}

/* A node that only one pin of one part touches joins nothing: most often a
 * mistyped name that made a new node.  Suggestions are looked for only for
 * the first few (each costs a pass over the nodes). */
static void single_connection_warnings(elab *x)
{
    ls_netlist *nl = x->nl;
    int *cnt = calloc((size_t)(nl->nnodes ? nl->nnodes : 1), sizeof *cnt);
    int *who = malloc((size_t)(nl->nnodes ? nl->nnodes : 1) * sizeof *who);
    if (!cnt || !who) {
        free(cnt);
        free(who);
        return;
    }
    for (int i = 0; i < nl->nparts; i++)
        for (int j = 0; j < nl->parts[i].kind->npins; j++) {
            int n = nl->parts[i].pin[j];
            if (n >= 0 && n < nl->nnodes) {
                cnt[n]++;
                who[n] = i;
            }
        }
    /* a node named in a range option (an op-amp's rails=, cm=) is used there
     * too: the rail a supply feeds is not a mistyped name */
    for (int i = 0; i < nl->nparts; i++) {
        const ls_part *p = &nl->parts[i];
        for (int o = 0; p->range && o < p->kind->nopts; o++) {
            if (p->kind->opts[o].kind != OPT_RANGE || !ls_part_has(p, o))
                continue;
            for (int e = 0; e < 2; e++) {
                int n = p->range[p->kind->opts[o].pin][e].node;
                if (n > 0 && n < nl->nnodes)
                    cnt[n]++;
            }
        }
    }
    /* a node with no DC path to ground gets the topology error instead */
    int *parent = malloc((size_t)(nl->nnodes ? nl->nnodes : 1) * sizeof *parent);
    if (!parent) {
        free(cnt);
        free(who);
        return;
    }
    for (int i = 0; i < nl->nnodes; i++)
        parent[i] = i;
    for (int i = 0; i < nl->nparts; i++)
        nl->parts[i].kind->edges(&nl->parts[i], parent, join_edge);
    int warned = 0;
    for (int i = 1; i < nl->nnodes; i++) {
        if (cnt[i] != 1 || ls_uf_find(parent, i) != ls_uf_find(parent, 0))
            continue;
        const ls_part *p = &nl->parts[who[i]];
        int near = warned++ < 20 ? near_node(nl, i, cnt) : -1;
        ls_warning(x->d, nl->nodes[i].loc, "single-connection",
                   "node '%s' has only one connection (%s '%s'), so it joins nothing; is the name mistyped?%s%s%s",
                   nl->nodes[i].name, p->kind->name, p->name, near >= 0 ? " (did you mean '" : "",
                   near >= 0 ? nl->nodes[near].name : "", near >= 0 ? "'?)" : "");
    }
    free(cnt);
    free(who);
    free(parent);
}

static void final_checks(elab *x)
{
    ls_netlist *nl = x->nl;
    if (x->d->errors == 0)
        single_connection_warnings(x);
    for (int i = 0; i < nl->nnodes; i++) {
        const ls_node *n = &nl->nodes[i];
        if (n->dotted_ref && !n->claimed) {
            const char *dot = strrchr(n->name, '.');
            char inst[256];
            snprintf(inst, sizeof inst, "%.*s", (int)(dot - n->name), n->name);
            ls_error(x->d, n->loc, "unknown node '%s': instance '%s' has no node '%s'", n->name, inst, dot + 1);
        }
    }
    for (int i = 0; i < x->nlocals; i++) {
        const char *base = x->locals[i].base;
        int top = ls_hash_get(&nl->names, base);
        if (top < 0 || nl->ents[top].kind != ENT_NODE)
            continue;
        char *key = ls_arena_printf(x->a, "%s\x1f%s", x->locals[i].block->name, base);
        if (!key || ls_hash_get(&x->warned, key) >= 0)
            continue;
        ls_hash_put(&x->warned, key, 1);
        ls_warning(x->d, x->locals[i].loc, "local-node",
                   "'%s' inside block '%s' is a local node of each instance, not the top-level node '%s'; make it a pin "
                   "if you meant the top-level one",
                   base, x->locals[i].block->name, base);
    }
    for (int i = 0; i < x->nsets; i++)
        if (!x->sets[i].used)
            ls_error(x->d, x->sets[i].loc, "--set %s: the circuit has no top-level let '%s'", x->sets[i].name,
                     x->sets[i].name);
}

/* ---- expansion size, before expanding -------------------------------------------------- */

/* What one use of a block expands to: instances (itself included) and parts,
 * saturated so that sums cannot overflow. */
typedef struct bsize {
    long long inst, parts;
    int state;                  /* 0 not seen, 1 on the DFS stack, 2 done */
} bsize;

#define SIZE_CAP (4LL * LS_MAX_INSTANCES + 4LL * LS_MAX_PARTS)

static long long sat_add(long long a, long long b)
{
    return a + b > SIZE_CAP ? SIZE_CAP : a + b;
}

/* Fill sz[bi] (and every block below it) by an explicit-stack depth-first walk:
 * each block once, whatever the nesting, so a long chain of blocks cannot
 * exhaust the C stack.  A block met again on the stack is a recursion (the
 * expansion reports it) and counts nothing here.  Returns false on no memory. */
static bool size_block(elab *x, int bi, bsize *sz)
{
    if (sz[bi].state)
        return true;
    struct frame { int bi, next; } *st = malloc((size_t)x->nblocks * sizeof *st);
    if (!st)
        return false;
    int sp = 0;
    st[sp++] = (struct frame){bi, 0};
    sz[bi].state = 1;
    while (sp > 0) {
        struct frame *f = &st[sp - 1];
        const ls_stmt *b = x->blockv[f->bi];
        if (f->next < b->nbody) {
            const ls_stmt *u = b->body[f->next++];
            int ui = u->kind == S_USE ? block_index(x, u->kw) : -1;
            if (ui >= 0 && sz[ui].state == 0) {
                sz[ui].state = 1;
                st[sp++] = (struct frame){ui, 0};
            }
            continue;
        }
        long long inst = 1, parts = 0;
        for (int i = 0; i < b->nbody; i++) {
            const ls_stmt *u = b->body[i];
            int ui = u->kind == S_USE ? block_index(x, u->kw) : -1;
            if (u->kind == S_PART)
                parts = sat_add(parts, 1);
            else if (ui >= 0 && sz[ui].state == 2) {
                inst = sat_add(inst, sz[ui].inst);
                parts = sat_add(parts, sz[ui].parts);
            }
        }
        sz[f->bi] = (bsize){inst, parts, 2};
        sp--;
    }
    free(st);
    return true;
}

/* Refuse, before anything is expanded, a circuit whose blocks would expand
 * past LS_MAX_INSTANCES instances or LS_MAX_PARTS parts (a few lines of
 * blocks that use each other twice at every level make 2^n): the error is at
 * the top-level statement that crosses the limit.  Returns true when the
 * expansion may go ahead. */
static bool expansion_fits(elab *x, const ls_program *prog, long long *nparts)
{
    bsize *sz = calloc((size_t)(x->nblocks ? x->nblocks : 1), sizeof *sz);
    if (!sz)
        return true; /* the expansion's own counters still apply */
    long long inst = 0, parts = 0;
    bool ok = true;
    /* what the process may hold, in parts: the memory-derived limit below the
     * fixed ceiling (docs/limits.md, "Size of the input") */
    double held = (double)ls_memory_limit_bytes();
    for (int i = 0; i < prog->n && ok; i++) {
        ls_skind kind = kind_at(x->top_kinds, prog->stmts, i);
        if (kind == S_PART || kind == S_BRIEF) {
            parts = sat_add(parts, 1);
        } else if (kind == S_USE) {
            int bi = block_index(x, prog->stmts[i]->kw);
            if (bi < 0 || !size_block(x, bi, sz))
                continue;
            inst = sat_add(inst, sz[bi].inst);
            parts = sat_add(parts, sz[bi].parts);
        } else {
            continue;
        }
        if (inst <= LS_MAX_INSTANCES && parts <= LS_MAX_PARTS && (double)parts * LS_PART_MIN_BYTES <= held)
            continue; /* within every limit: no message, no statement to view */
        ls_stmt_buf buf;
        const ls_stmt *st = ls_stmt_view(prog->stmts[i], &buf);
        if (inst > LS_MAX_INSTANCES) {
            ls_error(x->d, st->kw_loc, "with this use the blocks expand to more than %d instances (%s%lld)",
                     LS_MAX_INSTANCES, inst == SIZE_CAP ? "at least " : "", inst);
            ok = false;
        } else if (parts > LS_MAX_PARTS) {
            ls_error(x->d, st->kind == S_USE ? st->kw_loc : st->name_loc,
                     "with this statement the circuit expands to more than %d parts (%s%lld, about %.0f MB "
                     "for the part table alone)", LS_MAX_PARTS, parts == SIZE_CAP ? "at least " : "", parts,
                     (double)parts * sizeof(ls_part) / 1e6);
            ok = false;
        } else if ((double)parts * LS_PART_MIN_BYTES > held) {
            ls_error(x->d, st->kind == S_USE ? st->kw_loc : st->name_loc,
                     "out of memory: with this statement the circuit expands to %lld parts, whose table and names "
                     "alone would take about %.1f MB, more than the %.1f MB this process may hold (the machine's "
                     "memory or its limit, ulimit -v)", parts, (double)parts * LS_PART_MIN_BYTES / 1e6, held / 1e6);
            ok = false;
        }
    }
    free(sz);
    *nparts = parts;
    return ok;
}

/* Number the branch unknowns once, here, for every solve of the netlist: a
 * part's first is nnodes - 1 plus the branches of the parts before it, -1
 * for a part without one; and the analysis states' slots in a run (run.h).
 * The MNA builder reads them and never writes (one netlist may back several
 * solves at once). */
static void number_branches(ls_netlist *nl)
{
    int k = nl->nnodes - 1;
    nl->nstates = 0;
    for (int i = 0; i < nl->nparts; i++) {
        ls_part *p = &nl->parts[i];
        int c = p->kind->branches(p);
        p->branch = c ? k : -1;
        k += c;
        p->slot = p->kind->has_run ? nl->nstates++ : -1;
    }
}

int ls_elaborate(const ls_program *prog, ls_diags *d, ls_setting *sets, int nsets, ls_netlist *nl)
{
    return ls_elaborate_following(prog, d, sets, nsets, nl, NULL);
}

int ls_elaborate_following(const ls_program *prog, ls_diags *d, ls_setting *sets, int nsets, ls_netlist *nl,
                           ls_letdeps *deps)
{
    elab x;
    memset(&x, 0, sizeof x);
    x.deps = deps;
    x.nl = nl;
    x.d = d;
    x.a = d->arena;
    x.sets = sets;
    x.nsets = nsets;
    nl->arena = d->arena;
    nl->diags = d;
    nl->min_ratio = 10;
    int e0 = d->errors;
    ls_hash_init(&x.blocks);
    ls_hash_init(&x.warned);
    x.top_kinds = malloc(prog->n ? (size_t)prog->n : 1);
    check_kinds(&x, prog->stmts, prog->n, x.top_kinds);
    collect_blocks(&x, prog);
    ground_and_title(&x, prog);
    scope top = {"", NULL, NULL, 0};
    long long nparts = 0;
    if (expansion_fits(&x, prog, &nparts)) {
        /* Room in the name table for every part and, as a guess, a little
         * more than half as many nodes again (a square grid of N x N nodes has
         * 2 N (N - 1) + 1 parts, so half leaves it N nodes short, and the
         * entity table of the 1000 grid doubled for its last thousand), so
         * that a large circuit does not rehash or copy as it grows (a failure
         * here only means the tables grow as they go). */
        long long nodes = nparts / 2 + nparts / 32 + 16;
        ls_hash_reserve(&nl->names, (size_t)(nparts + nodes));
        reserve((void **)&nl->parts, &nl->cap_parts, nparts, sizeof *nl->parts);
        reserve((void **)&nl->ents, &nl->cap_ents, nparts + nodes, sizeof *nl->ents);
        reserve((void **)&nl->nodes, &nl->cap_nodes, nodes, sizeof *nl->nodes);
        if (prog->node_keys > 0 && (x.node_of_key = malloc(((size_t)prog->node_keys + 1) * sizeof *x.node_of_key))) {
            memset(x.node_of_key, 0xff, ((size_t)prog->node_keys + 1) * sizeof *x.node_of_key); /* every int -1 */
            x.nkeys = prog->node_keys;
        }
        elab_body(&x, &top, prog->stmts, prog->n, x.top_kinds);
    }
    resolve_refs(&x);
    check_budgets(&x);
    final_checks(&x);
    number_branches(nl);
    /* names and syntax live in the arena: a failed allocation there may have
     * left a name or a value out */
    if (d->arena->failed)
        out_of_memory(&x);
    ls_hash_free(&x.blocks);
    ls_hash_free(&x.warned);
    free(x.blockv);
    free(x.locals);
    free(x.node_of_key);
    free(x.top_kinds);
    return d->errors - e0;
}

ls_q *ls_bind_quantity(ls_netlist *nl, const ls_expr *e)
{
    return ls_bind_quantity_following(nl, e, NULL);
}

ls_q *ls_bind_quantity_following(ls_netlist *nl, const ls_expr *e, ls_letdeps *deps)
{
    elab x;
    memset(&x, 0, sizeof x);
    x.deps = deps;
    x.nl = nl;
    x.d = nl->diags;
    x.a = nl->arena;
    scope top = {"", NULL, NULL, 0};
    return bind(&x, &top, e);
}
