/* api.c — the public C interface (include/loadstack/loadstack.h) over the
 * internal stages: parser, elaborator, operating point, low-rank port and sag
 * analyses, Thevenin, adjoint sensitivities.  Internal results are copied
 * into the public structs here, and the analyses' outcomes become ls_status
 * (status_of: the one mapping). */
#include "loadstack/loadstack.h"

#include <assert.h>
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "analysis/analysis.h"
#include "analysis/checks.h"
#include "elab/elab.h"
#include "base/eseries.h"
#include "analysis/fit.h"
#include "analysis/formula.h"
#include "lang/parser.h"
#include "analysis/sag.h"
#include "analysis/sens.h"
#include "analysis/sweep.h"
#include "analysis/thevenin.h"
#include "analysis/tolerance.h"
#include "circuit.h"

#ifndef LS_VERSION
#define LS_VERSION "0.0.0"
#endif

#define MAX_SETS 256

/* struct ls_circuit is in circuit.h: the program loads and solves through it too. */

/* ---- small helpers ----------------------------------------------------------------------- */

const char *ls_status_str(ls_status st)
{
    switch (st) {
    case LS_OK: return "ok";
    case LS_WARNINGS: return "done, with warnings";
    case LS_E_ARGUMENT: return "invalid argument";
    case LS_E_NOMEM: return "out of memory";
    case LS_E_IO: return "the circuit file cannot be read";
    case LS_E_CIRCUIT: return "errors in the circuit";
    case LS_E_UNSOLVABLE: return "the circuit cannot be solved";
    case LS_E_NOT_FOUND: return "no such node, part or port";
    case LS_E_NOT_SOLVED: return "the circuit is not solved";
    }
    return "unknown status";
}

const char *ls_version(void) { return LS_VERSION; }

void ls_free(void *p) { free(p); }

/* The status of an analysis's outcome: the one place where the library maps
 * ls_outcome to ls_status (LS_DONE is LS_OK; ok_status adds whether warnings
 * came).  What a refused request means depends on the call: an argument
 * (fit) or the circuit's text (a formula's quantity), so the caller says
 * which status it is. */
static ls_status status_of(ls_outcome o, ls_status bad_request)
{
    switch (o) {
    case LS_DONE: return LS_OK;
    case LS_BAD_REQUEST: return bad_request;
    case LS_UNSOLVABLE: return LS_E_UNSOLVABLE;
    case LS_NO_MEMORY: return LS_E_NOMEM;
    case LS_NO_WORKER: return LS_E_NOMEM;   /* a thread that cannot start: resources, as memory */
    case LS_REELABORATE: return LS_E_UNSOLVABLE;   /* (sweep_once reads such a point again) */
    }
    assert(!"an ls_outcome without a status");
    return LS_E_UNSOLVABLE;
}

/* LS_E_NOMEM once the arena failed, else ok (with warnings when the list
 * gained some since `warnings_before`). */
static ls_status ok_status(const ls_circuit *c, int warnings_before)
{
    if (c->arena.failed)
        return LS_E_NOMEM;
    return c->diags.warnings > warnings_before ? LS_WARNINGS : LS_OK;
}

/* The circuit is solved and usable for results: LS_OK, else the reason. */
static ls_status need_solved(const ls_circuit *c)
{
    if (!c)
        return LS_E_ARGUMENT;
    return c->solved ? LS_OK : LS_E_NOT_SOLVED;
}

/* ---- parsing ---------------------------------------------------------------------------- */

/* Record the part index of every port, in circuit order.  0 or -1 (no memory). */
static int index_ports(ls_circuit *c)
{
    c->ports = malloc((size_t)(c->nl.nparts ? c->nl.nparts : 1) * sizeof *c->ports);
    if (!c->ports)
        return -1;
    for (int i = 0; i < c->nl.nparts; i++)
        if (c->nl.parts[i].kind->is_port)
            c->ports[c->nports++] = i;
    return 0;
}

/* Both parse entry points: check the arguments, then read the file `name`
 * (when text is NULL) or take text, parse and elaborate through the one
 * loader (circuit.c, following deps->let when deps is not NULL), and hand
 * the circuit out. */
static ls_status parse_any(const char *name, const char *text, size_t len, const char *const *sets, int nsets,
                           ls_letdeps *deps, ls_circuit **out)
{
    if (!out)
        return LS_E_ARGUMENT;
    *out = NULL;
    if (!name || nsets < 0 || nsets > MAX_SETS || (nsets > 0 && !sets))
        return LS_E_ARGUMENT;
    ls_circuit *c = malloc(sizeof *c);
    if (!c)
        return LS_E_NOMEM;
    ls_circuit_init(c);
    /* the library keeps the syntax tree: formula reads values from it */
    ls_load how = {.name = name, .text = text, .len = len, .input_path = name, .sets = sets, .nsets = nsets,
                   .keep_syntax = true, .follow = deps};
    ls_loaded r = ls_circuit_load(c, &how);
    *out = c;
    switch (r) {
    case LS_LOADED: break;
    case LS_LOAD_UNREADABLE: return text ? LS_E_CIRCUIT : LS_E_IO;
    case LS_LOAD_NOMEM: return LS_E_NOMEM;
    case LS_LOAD_STOPPED:   /* (no after_read here) */
    case LS_LOAD_ERRORS: return LS_E_CIRCUIT;
    }
    if (index_ports(c) != 0)
        return LS_E_NOMEM;
    return ok_status(c, 0);
}

ls_status ls_circuit_parse_file(const char *path, const char *const *sets, int nsets, ls_circuit **out)
{
    return parse_any(path, NULL, 0, sets, nsets, NULL, out);
}

ls_status ls_circuit_parse_string(const char *name, const char *text, size_t len, const char *const *sets,
                                  int nsets, ls_circuit **out)
{
    if (!text) {
        if (out)
            *out = NULL;
        return LS_E_ARGUMENT;
    }
    return parse_any(name, text, len, sets, nsets, NULL, out);
}

void ls_circuit_free(ls_circuit **pc)
{
    if (!pc || !*pc)
        return;
    ls_circuit_release(*pc);
    free(*pc);
    *pc = NULL;
}

/* ---- diagnostics ------------------------------------------------------------------------- */

int ls_circuit_diag_count(const ls_circuit *c)
{
    if (!c)
        return 0;
    return c->diags.n;
}

ls_status ls_circuit_diag(const ls_circuit *c, int i, ls_diagnostic *out)
{
    if (!c || !out || i < 0 || i >= c->diags.n)
        return LS_E_ARGUMENT;
    const ls_diag *g = &c->diags.items[i];
    static const ls_diag_level level[] = {LS_LEVEL_NOTE, LS_LEVEL_WARNING, LS_LEVEL_ERROR};
    memset(out, 0, sizeof *out);
    out->level = level[g->sev];
    out->code = g->code;
    out->message = g->msg;
    if (g->loc.file >= 0 && g->loc.file < c->diags.nfiles) {
        out->file = c->diags.files[g->loc.file].path;
        ls_loc_linecol(&c->diags, g->loc.file, g->loc.start, &out->line, &out->column);
    }
    return LS_OK;
}

void ls_circuit_print_diags(const ls_circuit *c, FILE *f)
{
    if (c && f)
        ls_diags_print(&c->diags, f);
}

const char *ls_circuit_title(const ls_circuit *c)
{
    return c && c->elaborated && c->nl.title ? c->nl.title : "";
}

/* ---- solving ----------------------------------------------------------------------------- */

ls_status ls_circuit_solve(ls_circuit *c, const ls_solve_options *opt)
{
    if (!c)
        return LS_E_ARGUMENT;
    if (!c->elaborated)
        return LS_E_CIRCUIT;
    static const ls_solver_choice choice[] = {LS_CHOOSE_AUTO, LS_CHOOSE_DENSE, LS_CHOOSE_SPARSE,
                                              LS_CHOOSE_ITERATIVE};
#ifdef LS_HAVE_AMG
    const int last = LS_BACKEND_ITERATIVE;
#else
    const int last = LS_BACKEND_SPARSE; /* no iterative solver in this build */
#endif
    ls_options o = {.solver = LS_CHOOSE_AUTO, .min_ratio = 0, .derate = 1};
    if (opt) {
        if ((int)opt->backend < 0 || (int)opt->backend > last)
            return LS_E_ARGUMENT;
        o.solver = choice[opt->backend];
        o.min_ratio = opt->min_ratio > 0 ? opt->min_ratio : 0;
        o.derate = opt->derate > 0 ? opt->derate : 1;
    }
    c->solve_options = o;   /* a sweep solves its points the same way */
    c->solve_opt = opt ? *opt : (ls_solve_options){0};
    int w0 = c->diags.warnings;
    ls_outcome out = ls_circuit_solve_op(c, &o);
    if (ls_circuit_nomem(c)) {
        c->solved = false;
        return LS_E_NOMEM;   /* no memory is no property of the circuit */
    }
    if (out != LS_DONE)
        return status_of(out, LS_E_CIRCUIT);
    return ok_status(c, w0);
}

ls_status ls_circuit_solve_info(const ls_circuit *c, ls_solve_info *out)
{
    ls_status st = need_solved(c);
    if (st != LS_OK)
        return st;
    if (!out)
        return LS_E_ARGUMENT;
    static const char *const method[] = {"dense-lu", "sparse-lu", "sparse-cholesky", "iterative-amg", "dense-cholesky"};
    assert((int)c->op.method >= 0 && (size_t)c->op.method < sizeof method / sizeof method[0]);
    out->method = method[c->op.method];
    out->unknowns = c->op.mna.n;
    out->rcond = c->op.rcond;
    out->residual = c->op.residual;
    out->iterations = c->op.iterations;
    out->refinement_steps = c->op.acc.steps;
    return LS_OK;
}

ls_status ls_circuit_error_bound(ls_circuit *c, const char *name, double *bound)
{
    ls_status st = need_solved(c);
    if (st != LS_OK)
        return st;
    if (!name || !bound)
        return LS_E_ARGUMENT;
    int node = ls_netlist_find_node(&c->nl, name), part = node < 0 ? ls_netlist_find_part(&c->nl, name) : -1;
    if (node < 0 && part < 0)
        return LS_E_NOT_FOUND;
    if (ls_acc_bounds(&c->op) != 0)
        return LS_E_NOMEM;
    *bound = node >= 0 ? c->op.acc.node_bound[node] : c->op.acc.part_bound[part];
    return LS_OK;
}

/* ---- nodes and parts ------------------------------------------------------------------------- */

int ls_circuit_node_count(const ls_circuit *c) { return c && c->elaborated ? c->nl.nnodes : 0; }

const char *ls_circuit_node_name(const ls_circuit *c, int i)
{
    if (!c || !c->elaborated || i < 0 || i >= c->nl.nnodes)
        return NULL;
    return c->nl.nodes[i].name;
}

int ls_circuit_node_index(const ls_circuit *c, const char *name)
{
    if (!c || !c->elaborated || !name)
        return -1;
    return ls_netlist_find_node(&c->nl, name);
}

ls_status ls_circuit_voltage(const ls_circuit *c, const char *name, double *volts)
{
    ls_status st = need_solved(c);
    if (st != LS_OK)
        return st;
    if (!volts || !name)
        return LS_E_ARGUMENT;
    int node = ls_netlist_find_node(&c->nl, name);
    if (node < 0)
        return LS_E_NOT_FOUND;
    *volts = c->op.v[node];
    return LS_OK;
}

int ls_circuit_part_count(const ls_circuit *c) { return c && c->elaborated ? c->nl.nparts : 0; }

int ls_circuit_part_index(const ls_circuit *c, const char *name)
{
    if (!c || !c->elaborated || !name)
        return -1;
    return ls_netlist_find_part(&c->nl, name);
}

ls_status ls_circuit_part(ls_circuit *c, int i, ls_part_info *out)
{
    if (!c || !out || !c->elaborated || i < 0 || i >= c->nl.nparts)
        return LS_E_ARGUMENT;
    const ls_part *p = &c->nl.parts[i];
    out->name = p->name;
    out->kind = p->kind->name;
    out->value = p->has_value ? ls_run_value(&c->op.run, p) : NAN;
    out->current = out->voltage = out->power = NAN;
    out->limited = NULL;
    if (!c->solved)
        return LS_E_NOT_SOLVED;
    if (p->kind->is_opamp)
        out->limited = ls_opamp_limit_word(p, &c->op.run);
    out->current = c->op.ipart[i];
    out->voltage = c->op.vpart[i];
    out->power = c->op.ppart[i];
    return LS_OK;
}

/* ---- ports ----------------------------------------------------------------------------------- */

int ls_circuit_port_count(const ls_circuit *c) { return c && c->elaborated ? c->nports : 0; }

/* The port report caches a result whose update ran out of memory (NaN fields,
 * note "out of memory").  Forget such results, so a later request computes
 * them again; true when there was one. */
static bool forget_oom_ports(ls_circuit *c)
{
    bool any = false;
    for (int i = 0; i < c->nports; i++) {
        ls_port_result *r = &c->op.port[c->ports[i]];
        if (r->done && r->note && strcmp(r->note, "out of memory") == 0) {
            r->done = false;
            any = true;
        }
    }
    return any;
}

/* Copy the loading report of port part index p into *out. */
static ls_status port_info(ls_circuit *c, int p, ls_port_info *out)
{
    const ls_part *part = &c->nl.parts[p];
    const ls_port_result *r = ls_op_port(&c->op, p);
    if (!r || forget_oom_ports(c))
        return LS_E_NOMEM;
    static const ls_port_verdict verdict[] = {LS_VERDICT_OK, LS_VERDICT_MARGINAL, LS_VERDICT_LOADING};
    out->name = part->name;
    out->from = c->nl.nodes[part->pin[0]].name;
    out->to = c->nl.nodes[part->pin[1]].name;
    out->current_mode = r->current_mode;
    out->open = r->open;
    out->loaded = r->loaded;
    out->sag = r->sag;
    out->sag_rel = r->sag_rel;
    out->zout = r->zout;
    out->zin = r->zin;
    out->ratio = r->ratio;
    out->current = r->current;
    out->verdict = verdict[r->verdict];
    out->note = r->note;
    out->budget = r->budget;
    out->by_budget = r->by_budget;
    out->load_held = r->load_held;
    return c->arena.failed ? LS_E_NOMEM : LS_OK;
}

ls_status ls_circuit_port(ls_circuit *c, int i, ls_port_info *out)
{
    ls_status st = need_solved(c);
    if (st != LS_OK)
        return st;
    if (!out || i < 0 || i >= c->nports)
        return LS_E_ARGUMENT;
    return port_info(c, c->ports[i], out);
}

ls_status ls_circuit_port_by_name(ls_circuit *c, const char *name, ls_port_info *out)
{
    ls_status st = need_solved(c);
    if (st != LS_OK)
        return st;
    if (!out || !name)
        return LS_E_ARGUMENT;
    int p = ls_netlist_find_part(&c->nl, name);
    if (p < 0 || !c->nl.parts[p].kind->is_port)
        return LS_E_NOT_FOUND;
    return port_info(c, p, out);
}

/* ---- quantities and checks ------------------------------------------------------------------- */

/* Per-call scratch: a quantity's text, syntax and binding live in the
 * circuit's arena only for the call that evaluates it, so a handle evaluated
 * a million times keeps its size.  A call that reported a diagnostic keeps
 * its scratch: the diagnostic points into it. */
typedef struct scratch {
    ls_arena_mark mark;
    int nfiles, ndiags;
} scratch;

static scratch scratch_begin(const ls_circuit *c)
{
    return (scratch){ls_arena_mark_now(&c->arena), c->diags.nfiles, c->diags.n};
}

static void scratch_end(ls_circuit *c, const scratch *s)
{
    if (c->diags.n != s->ndiags || c->arena.failed)
        return;
    ls_sources_truncate(&c->diags, s->nfiles);
    ls_arena_release(&c->arena, &s->mark);
}

/* Parse and bind a quantity; NULL after reporting an error, with *st set:
 * LS_E_NOMEM when memory ran out on the way (no fault of the text; told by
 * what the circuit's arenas and diagnostics say now against before), else
 * LS_E_CIRCUIT. */
static ls_q *bind_quantity(ls_circuit *c, const char *text, ls_status *st)
{
    int nomem0 = c->diags.nomem, lost0 = c->diags.lost;
    ls_q *q = ls_circuit_quantity(c, text, NULL);
    if (!q)
        *st = c->arena.failed || c->syntax.failed || c->diags.nomem > nomem0 || c->diags.lost > lost0
                  ? LS_E_NOMEM
                  : LS_E_CIRCUIT;
    return q;
}

ls_status ls_circuit_eval(ls_circuit *c, const char *quantity, double *value)
{
    ls_status st = need_solved(c);
    if (st != LS_OK)
        return st;
    if (!quantity || !value)
        return LS_E_ARGUMENT;
    scratch s = scratch_begin(c);
    ls_q *q = bind_quantity(c, quantity, &st);
    if (!q)
        return st;
    double v = ls_q_eval(&c->op, q);
    scratch_end(c, &s);
    if (forget_oom_ports(c))
        return LS_E_NOMEM;
    *value = v;
    return LS_OK;
}

ls_status ls_circuit_formula(ls_circuit *c, const char *quantity, const char *symbols, int ideal, char **formula,
                             double *value)
{
    ls_status st = need_solved(c);
    if (st != LS_OK)
        return st;
    if (!quantity || !formula)
        return LS_E_ARGUMENT;
    *formula = NULL;
    ls_q *q = bind_quantity(c, quantity, &st);
    if (!q)
        return st;
    ls_formula_req req = {.quantity = quantity, .symbols = symbols, .ideal = ideal != 0};
    ls_formula_result r;
    ls_outcome out = ls_formula(&c->op, &c->prog, q, &req, &r, &c->diags);
    if (out == LS_DONE) {
        *formula = r.expression;
        r.expression = NULL;
        if (value)
            *value = r.value;
    }
    ls_formula_result_free(&r);
    if (forget_oom_ports(c))
        return LS_E_NOMEM;
    return status_of(out, LS_E_CIRCUIT);
}

/* 1-based line of a location, 0 for none. */
static int loc_line(const ls_diags *d, ls_loc l)
{
    int line = 0, col = 0;
    if (l.file >= 0)
        ls_loc_linecol(d, l.file, l.start, &line, &col);
    return line;
}

/* The text of port k's ratio rule as the circuit keeps it: the last one
 * handed out when it reads the same, else a new arena copy of t (which
 * lives in scratch).  NULL when out of memory. */
static const char *keep_rule_text(ls_circuit *c, int k, const char *t)
{
    if (!c->rule_text) {
        c->rule_text = calloc((size_t)(c->nports ? c->nports : 1), sizeof *c->rule_text);
        if (!c->rule_text)
            return NULL;
    }
    if (!c->rule_text[k] || strcmp(c->rule_text[k], t) != 0)
        c->rule_text[k] = ls_arena_strdup(&c->arena, t);
    return c->rule_text[k];
}

/* Port number (0..nports-1) of part index p, or -1. */
static int port_number(const ls_circuit *c, int p)
{
    for (int k = 0; k < c->nports; k++)
        if (c->ports[k] == p)
            return k;
    return -1;
}

ls_status ls_circuit_checks(ls_circuit *c, int with_rule, ls_check_info **checks, int *n, int *failed)
{
    ls_status st = need_solved(c);
    if (st != LS_OK)
        return st;
    if (!checks || !n)
        return LS_E_ARGUMENT;
    ls_checks rows;
    /* The rule rows' texts are made in scratch; the ones handed out are
     * kept once per port (see keep_rule_text), copied out before release. */
    scratch s = scratch_begin(c);
    if (ls_checks_run(&c->op, with_rule != 0, &rows) != 0)
        return LS_E_NOMEM;
    ls_check_info *out = calloc((size_t)(rows.n ? rows.n : 1), sizeof *out);
    char **rule = calloc((size_t)(rows.n ? rows.n : 1), sizeof *rule);
    bool oom = !out || !rule || c->arena.failed || forget_oom_ports(c);
    for (int i = 0; i < rows.n && !oom; i++) {
        const ls_check_row *r = &rows.rows[i];
        out[i].text = r->text;
        if (r->port >= 0 && !(rule[i] = strdup(r->text)))
            oom = true;
        out[i].file = r->loc.file >= 0 ? c->diags.files[r->loc.file].path : NULL;
        out[i].line = loc_line(&c->diags, r->loc);
        out[i].instance = r->instance;
        out[i].value = r->r.value;
        out[i].lo = r->r.lo;
        out[i].hi = r->r.hi;
        out[i].pass = r->r.pass;
        out[i].reason = r->r.reason;
    }
    int nrows = rows.n, nfailed = rows.failed;
    int *port_of = NULL;
    if (!oom && with_rule && !(port_of = malloc((size_t)(nrows ? nrows : 1) * sizeof *port_of)))
        oom = true;
    for (int i = 0; i < nrows && port_of; i++)
        port_of[i] = rows.rows[i].port;
    ls_checks_free(&rows);
    scratch_end(c, &s);
    for (int i = 0; i < nrows && !oom && port_of; i++)
        if (rule[i] && !(out[i].text = keep_rule_text(c, port_number(c, port_of[i]), rule[i])))
            oom = true;
    for (int i = 0; rule && i < nrows; i++)
        free(rule[i]);
    free(rule);
    free(port_of);
    if (oom || c->arena.failed) {
        free(out);
        return LS_E_NOMEM;
    }
    *checks = out;
    *n = nrows;
    if (failed)
        *failed = nfailed;
    return LS_OK;
}

/* ---- sag -------------------------------------------------------------------------------------- */

ls_status ls_circuit_sag(ls_circuit *c, const char *node, double *voltage, ls_sag_entry **entries, int *n)
{
    ls_status st = need_solved(c);
    if (st != LS_OK)
        return st;
    if (!node || !entries || !n)
        return LS_E_ARGUMENT;
    int k = ls_netlist_find_node(&c->nl, node);
    if (k < 0)
        return LS_E_NOT_FOUND;
    int np = c->nl.nparts;
    ls_sag_entry *e = calloc((size_t)(np ? np : 1), sizeof *e);
    ls_sag_item *rows = calloc((size_t)(np ? np : 1), sizeof *rows);
    if (!e || !rows || ls_sag(&c->op, k, rows) != 0) {
        free(e);
        free(rows);
        return LS_E_NOMEM;
    }
    double v0 = c->op.v[k];
    for (int i = 0; i < np; i++) {
        const ls_part *p = &c->nl.parts[rows[i].part];
        e[i] = (ls_sag_entry){p->name, p->kind->is_port, rows[i].without, rows[i].delta, rows[i].beyond_limit};
    }
    free(rows);
    if (voltage)
        *voltage = v0;
    *entries = e;
    *n = np;
    return LS_OK;
}

ls_status ls_circuit_sag_ports(ls_circuit *c, const char *node, ls_sag_info *info, ls_sag_share **shares, int *n)
{
    ls_status st = need_solved(c);
    if (st != LS_OK)
        return st;
    if (!node || !info || !shares || !n)
        return LS_E_ARGUMENT;
    int k = ls_netlist_find_node(&c->nl, node);
    if (k < 0)
        return LS_E_NOT_FOUND;
    ls_sag_report r;
    if (ls_sag_connections(&c->op, k, &r) != 0)
        return LS_E_NOMEM;
    ls_sag_share *e = calloc((size_t)(r.nports ? r.nports : 1), sizeof *e);
    if (!e) {
        ls_sag_report_free(&r);
        return LS_E_NOMEM;
    }
    for (int i = 0; i < r.nports; i++) {
        const ls_sag_port *sp = &r.ports[i];
        e[i] = (ls_sag_share){c->nl.parts[sp->part].name, sp->current, sp->transfer, sp->share, sp->share_rel};
    }
    *info = (ls_sag_info){r.voltage, r.alone, r.sag, r.interaction, r.method == LS_SAG_SHAPLEY,
                          r.culprit >= 0 ? c->nl.parts[r.ports[r.culprit].part].name : NULL};
    *shares = e;
    *n = r.nports;
    ls_sag_report_free(&r);
    return LS_OK;
}

/* ---- Thevenin and sensitivity ------------------------------------------------------------------ */

ls_status ls_circuit_thevenin(ls_circuit *c, const char *node, ls_thevenin_info *out)
{
    ls_status st = need_solved(c);
    if (st != LS_OK)
        return st;
    if (!node || !out)
        return LS_E_ARGUMENT;
    int k = ls_netlist_find_node(&c->nl, node);
    if (k < 0)
        return LS_E_NOT_FOUND;
    /* rth = (A^-1)_kk of the solved system: one refined solve for column k */
    double vth = c->op.v[k], rth = 0;
    if (k > 0) {
        double *y = calloc((size_t)c->op.mna.n, sizeof *y);
        if (!y)
            return LS_E_NOMEM;
        y[k - 1] = 1;
        int sst = ls_op_solve_vec(&c->op, y, 0);
        rth = y[k - 1];
        free(y);
        if (sst != LS_SOLVER_OK)
            return sst == LS_SOLVER_NOMEM ? LS_E_NOMEM : LS_E_UNSOLVABLE;
    }
    /* the short-circuit current as the program finds it: exact where a part is nonlinear */
    ls_th_side side = {.node = k, .vth = vth, .rth = rth};
    ls_thevenin_norton(&c->op, &side, -1);
    if (c->arena.failed || side.nomem)
        return LS_E_NOMEM;
    out->vth = vth;
    out->rth = rth;
    out->norton = side.norton;
    return LS_OK;
}

ls_status ls_circuit_thevenin_port(ls_circuit *c, const char *port, ls_thevenin_side *driver, ls_thevenin_side *load)
{
    ls_status st = need_solved(c);
    if (st != LS_OK)
        return st;
    if (!port || !driver || !load)
        return LS_E_ARGUMENT;
    int i = ls_netlist_find_part(&c->nl, port);
    if (i < 0 || !c->nl.parts[i].kind->is_port)
        return LS_E_NOT_FOUND;
    ls_th_side d, l;
    ls_thevenin_sides(&c->op, -1, i, NAN, NAN, &d, &l);
    if (c->arena.failed || d.nomem || l.nomem)
        return LS_E_NOMEM;
    *driver = (ls_thevenin_side){c->nl.nodes[d.node].name, d.vth, d.rth, d.norton,
                                 d.why_vth ? d.why_vth : d.why_norton};
    *load = (ls_thevenin_side){c->nl.nodes[l.node].name, l.vth, l.rth, NAN, l.why_vth};
    return LS_OK;
}

ls_status ls_circuit_influence(ls_circuit *c, const char *quantity, double *value, ls_influence_entry **entries,
                               int *n)
{
    ls_status st = need_solved(c);
    if (st != LS_OK)
        return st;
    if (!quantity || !entries || !n)
        return LS_E_ARGUMENT;
    scratch s = scratch_begin(c);
    ls_q *q = bind_quantity(c, quantity, &st);
    if (!q)
        return st;
    ls_sens_item *items = NULL;
    double v = NAN;
    int k = ls_sens(&c->op, q, &v, &items);
    scratch_end(c, &s);
    if (k < 0)
        return k == LS_SENS_NOMEM || c->arena.failed ? LS_E_NOMEM : LS_E_CIRCUIT;
    ls_influence_entry *e = calloc((size_t)(k ? k : 1), sizeof *e);
    if (!e) {
        free(items);
        return LS_E_NOMEM;
    }
    for (int i = 0; i < k; i++) {
        e[i].part = c->nl.parts[items[i].part].name;
        e[i].part_value = items[i].nominal;
        e[i].per_unit = items[i].derivative;
        e[i].percent_per_percent = items[i].normalized;
    }
    free(items);
    if (value)
        *value = v;
    *entries = e;
    *n = k;
    return LS_OK;
}

/* ---- changing a value ----------------------------------------------------------------------- */

/* The flags (OPTF_*) that limit a part's main value. */
static unsigned main_flags(const ls_part *p)
{
    const ls_kind *k = p->kind;
    if (k->value_slot)
        return k->value_flags;
    for (int i = 0; i < k->nopts; i++)
        if (k->opts[i].flags & OPTF_MAIN)
            return k->opts[i].flags;
    return 0;
}

ls_status ls_circuit_set_value(ls_circuit *c, const char *part, double value)
{
    ls_status st = need_solved(c);
    if (st != LS_OK)
        return st;
    if (!part)
        return LS_E_ARGUMENT;
    int i = ls_netlist_find_part(&c->nl, part);
    if (i < 0)
        return LS_E_NOT_FOUND;
    const ls_part *p = &c->nl.parts[i];
    unsigned f = main_flags(p);
    if (!p->has_value || p->kind->is_port || !isfinite(value) || ((f & OPTF_POSITIVE) && !(value > 0)) ||
        ((f & OPTF_NONNEG) && !(value >= 0)) || ((f & OPTF_FRACTION) && !(value >= 0 && value <= 1)))
        return LS_E_ARGUMENT;
    if (ls_run_set_value(&c->op.run, i, value) != 0) /* the netlist keeps its value: the solve's run changes */
        return LS_E_NOMEM;
    int w0 = c->diags.warnings;
    c->solved = false;
    ls_outcome out = ls_op_resolve(&c->op);
    if (out != LS_DONE)
        return c->arena.failed ? LS_E_NOMEM : status_of(out, LS_E_CIRCUIT);
    c->solved = true;
    return ok_status(c, w0);
}

/* ---- tolerance ------------------------------------------------------------------------------ */

ls_status ls_circuit_tol(ls_circuit *c, const char *quantity, const ls_tol_options *opt, ls_tol_info *out,
                         double **values)
{
    ls_status st = need_solved(c);
    if (st != LS_OK)
        return st;
    if (!quantity || !out)
        return LS_E_ARGUMENT;
    ls_tol_options o = opt ? *opt : (ls_tol_options){0};
    if (o.trials <= 0)
        o.trials = 10000;
    if (o.trials > LS_TOL_MAX_TRIALS || (o.law != LS_TOL_UNIFORM && o.law != LS_TOL_NORMAL))
        return LS_E_ARGUMENT;
    scratch sc = scratch_begin(c);   /* the quantity's binding is scratch for this call */
    ls_q *q = bind_quantity(c, quantity, &st);
    if (!q)
        return st;
    int w0 = c->diags.warnings;
    ls_tol_study t = {.nl = &c->nl, .op = &c->op, .arena = &c->arena, .diags = &c->diags, .q = q,
                      .trials = o.trials, .seed = (uint64_t)o.seed, .normal = o.law == LS_TOL_NORMAL,
                      .threads = o.threads};
    ls_outcome outcome = ls_tol_run(&t);
    if (outcome == LS_UNSOLVABLE)
        c->solved = false;   /* the nominal circuit no longer solves: results would be stale */
    if (outcome != LS_DONE || c->arena.failed) {
        ls_tol_free(&t);
        return outcome == LS_DONE ? LS_E_NOMEM : status_of(outcome, LS_E_ARGUMENT);
    }
    const ls_tol_result *r = &t.r;
    *out = (ls_tol_info){.nominal = r->nominal, .wc_min = r->wc_min, .wc_max = r->wc_max, .corners = r->corners,
                         .rss = r->corners ? NAN : r->rss, .varying = t.nv, .trials = t.trials,
                         .finite = r->finite, .mean = r->mean, .std = r->std, .min = r->min, .max = r->max,
                         .yield = r->yield};
    memcpy(out->pct, r->pct, sizeof out->pct);
    if (values) {
        *values = t.values;
        t.values = NULL;
    }
    ls_tol_free(&t);
    ls_status done = ok_status(c, w0);
    scratch_end(c, &sc);
    return done;
}

/* ---- standard values for the free parts ------------------------------------------------------ */

/* The candidates of a finished study into the caller's arrays.  Returns LS_OK or LS_E_NOMEM. */
static ls_status fit_out(const ls_circuit *c, const ls_fit_study *f, ls_fit_candidate **cands, double **values,
                         const char ***names)
{
    int n = f->nbest, m = f->nvars;
    *cands = malloc((size_t)(n ? n : 1) * sizeof **cands);
    *values = malloc((size_t)(n * m > 0 ? n * m : 1) * sizeof **values);
    if (names)
        *names = malloc((size_t)(m ? m : 1) * sizeof **names);
    if (!*cands || !*values || (names && !*names)) {
        free(*cands);
        free(*values);
        *cands = NULL;
        *values = NULL;
        if (names) {
            free((void *)*names);
            *names = NULL;
        }
        return LS_E_NOMEM;
    }
    for (int i = 0; i < n; i++) {
        const ls_fit_cand *b = &f->best[i];
        (*cands)[i] = (ls_fit_candidate){.meets = b->meets, .failed = b->failed, .margin = b->margin,
                                         .yield = b->yield, .current = b->current};
        memcpy(*values + (size_t)i * m, b->value, (size_t)m * sizeof **values);
    }
    for (int j = 0; names && j < m; j++)
        (*names)[j] = c->nl.parts[f->vars[j].part].name;
    return LS_OK;
}

ls_status ls_circuit_fit(ls_circuit *c, const ls_fit_options *opt, ls_fit_candidate **cands, int *ncands,
                         double **values, int *nfree, const char ***names)
{
    ls_status st = need_solved(c);
    if (st != LS_OK)
        return st;
    if (!cands || !ncands || !values || !nfree)
        return LS_E_ARGUMENT;
    *cands = NULL;
    *values = NULL;
    *ncands = *nfree = 0;
    ls_fit_options o = opt ? *opt : (ls_fit_options){0};
    const ls_eseries *es = ls_eseries_find(o.series ? o.series : "E24");
    if (!es || (int)o.aim < 0 || o.aim > LS_FIT_AIM_CURRENT || o.trials > LS_TOL_MAX_TRIALS ||
        (o.law != LS_TOL_UNIFORM && o.law != LS_TOL_NORMAL))
        return LS_E_ARGUMENT;
    ls_fit_study f = {.nl = &c->nl, .op = &c->op, .arena = &c->arena, .goal = (ls_fit_goal)o.aim,
                      .series = es->name, .top = o.top > 0 ? o.top : 5, .trials = o.trials > 0 ? o.trials : 2000,
                      .seed = (uint64_t)o.seed, .normal = o.law == LS_TOL_NORMAL};
    ls_outcome out = ls_fit_run(&f);
    if (out == LS_UNSOLVABLE)
        c->solved = false;   /* the written values no longer solve: results would be stale */
    if (out == LS_DONE)
        st = fit_out(c, &f, cands, values, names);
    else
        st = status_of(out, LS_E_ARGUMENT);   /* refused: no free part, too many, an empty range */
    if (st == LS_OK) {
        *ncands = f.nbest;
        *nfree = f.nvars;
    }
    ls_fit_free(&f);
    return st;
}

/* ---- sweeps --------------------------------------------------------------------------------- */

#define SWEEP_MAX_STEPS 100000
#define SWEEP_MAX_QUANTITIES 64

/* The sweep at xs[0..steps-1] with the circuit read and elaborated once,
 * following the let (letdeps.h): each point sets the let's value and what
 * depends on it, and is solved afresh at the start of each chain of
 * LS_SWEEP_CHAIN points, else continuing from the last (analysis/sweep.h).
 * A point whose values the elaborator would refuse, or that does not solve,
 * is read again whole by sweep_point.  Fills ys (steps x nq) and *nsolved.
 * Returns LS_OK, LS_E_NOMEM or the status of a first point that
 * sweep_point refuses; *done is false (and nothing done) when the let
 * reaches more than values or the circuit cannot be followed: the caller
 * then reads every point again. */
static ls_status sweep_once(ls_circuit *c, const char *let, const double *xs, int steps,
                            const char *const *quantities, int nq, double *ys, int *nsolved, bool *done);

/* Point i of a sweep: parse the kept text again with the kept settings (any
 * setting of `let` dropped) and let=x, solve, evaluate the quantities into
 * row[0..nq-1] (NaN where undefined).  Returns LS_OK, LS_E_CIRCUIT (the
 * quantities or the setting are not valid; their diagnostics go to c when
 * report is set), LS_E_UNSOLVABLE or LS_E_NOMEM. */
static ls_status sweep_point(ls_circuit *c, const char *let, double x, const char *const *quantities, int nq,
                             double *row, bool report)
{
    for (int k = 0; k < nq; k++)
        row[k] = NAN;
    const char **sets = malloc((size_t)(c->nsets + 1) * sizeof *sets);
    if (!sets)
        return LS_E_NOMEM;
    size_t ll = strlen(let);
    int n = 0;
    for (int i = 0; i < c->nsets; i++)
        if (!(strncmp(c->sets[i], let, ll) == 0 && c->sets[i][ll] == '='))
            sets[n++] = c->sets[i];
    char setting[512];
    snprintf(setting, sizeof setting, "%s=%.17g", let, x);
    sets[n++] = setting;
    ls_circuit *p = NULL;
    ls_status st = ls_circuit_parse_string(c->source_name, c->source, c->source_len, sets, n, &p);
    free(sets);
    if (st >= 0)
        st = ls_circuit_solve(p, &c->solve_opt);
    for (int k = 0; st >= 0 && k < nq; k++) {
        ls_status e = ls_circuit_eval(p, quantities[k], &row[k]);
        if (e < 0)
            st = e;
    }
    if (st < 0 && st != LS_E_NOMEM && p && ls_circuit_nomem(p))
        st = LS_E_NOMEM;   /* a point lost to memory is not a point without a solution */
    if (st == LS_E_CIRCUIT && report && p) {
        /* the first point's errors are the caller's to read */
        for (int i = 0; i < p->diags.n; i++)
            if (p->diags.items[i].sev == LS_SEV_ERROR)
                ls_error(&c->diags, LS_NOLOC, "sweep of %s at %.6g: %s", let, x, p->diags.items[i].msg);
    }
    ls_circuit_free(&p);
    return st < 0 ? st : LS_OK;
}

ls_status ls_circuit_sweep(ls_circuit *c, const char *let, double from, double to, int steps, int log_scale,
                           const char *const *quantities, int nq, double **x, double **y, int *solved)
{
    ls_status st = need_solved(c);
    if (st != LS_OK)
        return st;
    if (!let || !*let || strchr(let, '=') || !quantities || nq < 1 || nq > SWEEP_MAX_QUANTITIES || !x || !y ||
        steps < 2 || steps > SWEEP_MAX_STEPS || !isfinite(from) || !isfinite(to) ||
        (log_scale && !(from > 0 && to > 0)) || !c->source)
        return LS_E_ARGUMENT;
    for (int k = 0; k < nq; k++)
        if (!quantities[k])
            return LS_E_ARGUMENT;
    double *xs = malloc((size_t)steps * sizeof *xs);
    double *ys = malloc((size_t)steps * (size_t)nq * sizeof *ys);
    if (!xs || !ys) {
        free(xs);
        free(ys);
        return LS_E_NOMEM;
    }
    ls_sweep_points(from, to, steps, log_scale != 0, xs);
    int nsolved = 0;
    bool done = false;
    st = sweep_once(c, let, xs, steps, quantities, nq, ys, &nsolved, &done);
    for (int i = 0; !done && i < steps; i++) {
        ls_status p = sweep_point(c, let, xs[i], quantities, nq, ys + (size_t)i * (size_t)nq, i == 0);
        if (p == LS_E_NOMEM || (i == 0 && p == LS_E_CIRCUIT)) {
            st = p;
            break;
        }
        nsolved += p == LS_OK;
    }
    if (st != LS_OK || c->arena.failed) {
        free(xs);
        free(ys);
        return c->arena.failed ? LS_E_NOMEM : st;
    }
    *x = xs;
    *y = ys;
    if (solved)
        *solved = nsolved;
    return LS_OK;
}

static ls_status sweep_once(ls_circuit *c, const char *let, const double *xs, int steps,
                            const char *const *quantities, int nq, double *ys, int *nsolved, bool *done)
{
    ls_letdeps deps;
    ls_letdeps_init(&deps, let);
    ls_circuit *p = NULL;
    const ls_q **q = calloc((size_t)nq, sizeof *q);
    ls_status st = q ? parse_any(c->source_name, c->source, c->source_len, c->sets, c->nsets, &deps, &p)
                     : LS_E_NOMEM;
    for (int k = 0; st == LS_OK && k < nq; k++)
        if (!(q[k] = ls_circuit_quantity(p, quantities[k], &deps)))
            st = LS_E_CIRCUIT;
    if (p && p->arena.failed)
        st = LS_E_NOMEM;
    *done = st == LS_E_NOMEM || (st == LS_OK && !deps.structural && !deps.nomem && deps.root >= 0);
    if (!*done)
        st = LS_E_CIRCUIT;
    ls_sweeper w;
    ls_sweeper_init(&w, p ? &p->nl : NULL, &deps, &c->solve_options);
    *nsolved = 0;
    for (int i = 0; st == LS_OK && i < steps; i++) {
        double *row = ys + (size_t)i * (size_t)nq;
        ls_outcome out = ls_sweeper_solve(&w, xs[i], i % LS_SWEEP_CHAIN == 0);
        if (out == LS_DONE) {
            for (int k = 0; k < nq; k++)
                row[k] = ls_q_eval(&w.op, q[k]);
            (*nsolved)++;
        } else if (out != LS_REELABORATE &&
                   (w.op.nomem || p->arena.failed || p->diags.nomem || p->diags.lost)) {
            st = LS_E_NOMEM;
        } else {
            ls_status pt = sweep_point(c, let, xs[i], quantities, nq, row, i == 0);
            if (pt == LS_E_NOMEM || (i == 0 && pt == LS_E_CIRCUIT))
                st = pt;
            *nsolved += pt == LS_OK;
        }
    }
    ls_sweeper_free(&w);
    ls_letdeps_free(&deps);
    ls_circuit_free(&p);
    free(q);
    return st;
}
