/* circuit.c — the one place that reads, parses, elaborates and solves a
 * circuit, for the library (api.c) and the program (cli/commands.c) alike.
 * It returns what happened (ls_loaded, ls_op_solve's ls_outcome) and maps
 * nothing: each caller turns that into its own status (api.c) or exit code
 * (cli/). */
#include "circuit.h"

#include <stdlib.h>
#include <string.h>

#include "elab/elab.h"
#include "lang/parser.h"

void ls_circuit_init(ls_circuit *c)
{
    memset(c, 0, sizeof *c);
    ls_arena_init(&c->arena);
    ls_arena_init(&c->syntax);
    ls_diags_init(&c->diags, &c->arena);
}

bool ls_circuit_nomem(const ls_circuit *c)
{
    return c->arena.failed || c->syntax.failed || c->diags.nomem || c->diags.lost || (c->have_op && c->op.nomem);
}

/* Tell the caller's phase hook, when there is one. */
static void phase(const ls_load *how, const char *done)
{
    if (how->phase)
        how->phase(how->ctx, done);
}

/* Copy the settings into the arena (kept for the library's sweeps) and parse
 * them into st.  0, or -1 after an error in the diagnostics (out of memory
 * included). */
static int take_settings(ls_circuit *c, const ls_load *how, ls_setting *st)
{
    c->sets = ls_arena_alloc(&c->arena, (size_t)(how->nsets > 0 ? how->nsets : 1) * sizeof *c->sets);
    if (!c->sets) {
        ls_error(&c->diags, LS_NOLOC, "out of memory keeping the settings");
        return -1;
    }
    for (int i = 0; i < how->nsets; i++) {
        const char *text = how->sets[i] ? how->sets[i] : "";
        if (!(c->sets[i] = ls_arena_strdup(&c->arena, text))) {
            ls_error(&c->diags, LS_NOLOC, "out of memory keeping the settings");
            return -1;
        }
        c->nsets = i + 1;
        if (ls_parse_setting(&c->diags, c->sets[i], &st[i]) != 0)
            return -1;
    }
    return 0;
}

/* The settings parsed, then the elaboration.  0, or -1 after errors. */
static int elaborate(ls_circuit *c, const ls_load *how)
{
    ls_setting *st = calloc((size_t)(how->nsets > 0 ? how->nsets : 1), sizeof *st);
    if (!st) {
        ls_error(&c->diags, LS_NOLOC, "out of memory reading the settings");
        return -1;
    }
    int bad = take_settings(c, how, st);
    if (bad == 0)
        bad = ls_elaborate_following(&c->prog, &c->diags, st, how->nsets, &c->nl, how->follow) ? -1 : 0;
    free(st);
    return bad;
}

ls_loaded ls_circuit_load(ls_circuit *c, const ls_load *how)
{
    c->input_path = how->input_path;
    int errs = how->text ? ls_parse_string_to(&c->diags, how->name, how->text, how->len, &c->syntax, &c->prog)
                         : ls_parse_file_to(&c->diags, how->name, &c->syntax, &c->prog);
    phase(how, "parse");
    if (c->diags.nfiles == 0)   /* unreadable: that one error, not a report on an empty circuit */
        return ls_circuit_nomem(c) ? LS_LOAD_NOMEM : LS_LOAD_UNREADABLE;
    c->source_name = c->diags.files[0].path;
    c->source = c->diags.files[0].text;
    c->source_len = c->diags.files[0].len;
    if (how->after_read && how->after_read(c, how->ctx) != 0)
        return LS_LOAD_STOPPED;
    int bad = elaborate(c, how) != 0 || errs;
    /* A circuit is elaborated once: the tree (a large part of the memory of a
     * big circuit) goes before the solve.  The netlist keeps only names. */
    if (!how->keep_syntax) {
        ls_arena_free(&c->syntax);
        c->prog = (ls_program){0};
    }
    phase(how, "elaborate");
    if (ls_circuit_nomem(c))
        return LS_LOAD_NOMEM;
    if (bad)
        return LS_LOAD_ERRORS;
    c->elaborated = true;
    return LS_LOADED;
}

ls_outcome ls_circuit_solve_op(ls_circuit *c, const ls_options *o)
{
    if (c->have_op)
        ls_op_free(&c->op);
    c->solved = false;
    c->have_op = true;
    ls_outcome out = ls_op_solve(&c->op, &c->nl, o);
    c->solved = out == LS_DONE;
    return out;
}

ls_q *ls_circuit_quantity(ls_circuit *c, const char *text, ls_letdeps *deps)
{
    int e0 = c->diags.errors;
    ls_expr *e = ls_parse_expr_string(&c->diags, "quantity", text, true);
    ls_q *q = e ? ls_bind_quantity_following(&c->nl, e, deps) : NULL;
    if (!q && c->diags.errors == e0) /* the only silent failure is the arena's */
        ls_error(&c->diags, LS_NOLOC, "out of memory reading the quantity '%s' (%zu bytes)", text,
                 c->arena.failed_bytes);
    return q;
}

void ls_circuit_release(ls_circuit *c)
{
    if (c->have_op)
        ls_op_free(&c->op);
    free(c->ports);
    free(c->rule_text);
    ls_netlist_free(&c->nl);
    ls_diags_free(&c->diags);
    ls_arena_free(&c->syntax);
    ls_arena_free(&c->arena);
}
