/* fast_same.c — the front end's fast paths give what the simple ones give.
 *
 * The parser's fast path for the commonest part statement
 * (ls_lex_simple_part) gives the same syntax tree and the same messages as
 * reading every statement token by token (ls_parse_string_general), node
 * names' numbers (ls_stmt.from_key, to_key) included.  And the elaborator,
 * which maps a numbered node name it has resolved once straight to its node
 * (lang/nodenames.h), builds the same netlist, field by field, and the same
 * messages as when every name is looked up (the program's node_keys set to 0).
 *
 * Checked on every file of the directories given on the command line (the
 * example circuits, the bad-input corpus, the fuzz corpus and its
 * regressions) and on lines built here around the fast path's edges: every
 * way a line can look like `KIND NAME FROM -> TO NUMBER` and not be one.
 * The comparison is of the whole tree (kinds, every location, every string,
 * every number bit for bit), of the whole netlist (every node, part, entity,
 * check, let, budget and design variable, the name table slot by slot) and
 * of the printed diagnostics.
 *
 * usage: fast_same DIR...   (exit 0 when every text agrees, 1 otherwise) */
#define _GNU_SOURCE
#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "elab/elab.h"
#include "lang/lexer.h"
#include "lang/parser.h"

static int failures, texts;

static bool same_loc(ls_loc a, ls_loc b)
{
    return a.file == b.file && a.start == b.start && a.end == b.end;
}

static bool same_str(const char *a, const char *b)
{
    return (!a && !b) || (a && b && strcmp(a, b) == 0);
}

/* Whether two expressions are the same tree (numbers bit for bit). */
static bool same_expr(const ls_expr *a, const ls_expr *b)
{
    if (!a || !b)
        return a == b;
    if (a->kind != b->kind || !same_loc(a->loc, b->loc))
        return false;
    switch (a->kind) {
    case E_NUM:
        return memcmp(&a->num, &b->num, sizeof a->num) == 0 && memcmp(&a->dims, &b->dims, sizeof a->dims) == 0;
    case E_NAME: return same_str(a->name, b->name);
    case E_NEG: return same_expr(a->a, b->a);
    case E_BIN: return a->op == b->op && same_loc(a->op_loc, b->op_loc) && same_expr(a->a, b->a) && same_expr(a->b, b->b);
    case E_CALL:
        if (a->op != b->op || a->nargs != b->nargs)
            return false;
        for (int i = 0; i < a->nargs; i++)
            if (!same_expr(a->args[i], b->args[i]))
                return false;
        return true;
    default: return false;
    }
}

static bool same_stmts(ls_stmt *const *a, ls_stmt *const *b, int n);

/* Whether two statements are the same, field by field of their kind. */
static bool same_stmt(const ls_stmt *a, const ls_stmt *b)
{
    if (a->kind != b->kind || a->cmp != b->cmp || a->arrow != b->arrow || !same_loc(a->loc, b->loc) ||
        !same_loc(a->text_loc, b->text_loc) || !same_loc(a->name_loc, b->name_loc) || a->nopts != b->nopts ||
        !same_str(a->name, b->name) || !same_str(a->kw, b->kw) || !same_expr(a->value, b->value))
        return false;
    for (int i = 0; i < a->nopts; i++) {
        const ls_opt *o = &a->opts[i], *q = &b->opts[i];
        if (!same_str(o->name, q->name) || !same_loc(o->name_loc, q->name_loc) || !same_expr(o->value, q->value) ||
            !same_expr(o->hi, q->hi))
            return false;
    }
    switch (a->kind) {
    case S_PART:
        return !a->arrow || (same_str(a->from, b->from) && same_str(a->to, b->to) &&
                             same_loc(a->from_loc, b->from_loc) && same_loc(a->to_loc, b->to_loc) &&
                             a->from_key == b->from_key && a->to_key == b->to_key);
    case S_USE: return same_loc(a->kw_loc, b->kw_loc);
    case S_BLOCK:
        if (a->npins != b->npins || a->nbody != b->nbody)
            return false;
        for (int i = 0; i < a->npins; i++)
            if (!same_str(a->pins[i], b->pins[i]) || !same_loc(a->pin_locs[i], b->pin_locs[i]))
                return false;
        return same_stmts(a->body, b->body, a->nbody);
    case S_EXPECT: case S_RULE:
        return same_expr(a->lhs, b->lhs) && same_expr(a->rhs, b->rhs) && same_expr(a->rhs2, b->rhs2) &&
               same_expr(a->within, b->within);
    default: return true;
    }
}

static int briefs; /* top-level statements the fast path kept as an ls_brief */

/* Whether two statement lists are the same (a brief read as the statement it
 * stands for: the general path makes none). */
static bool same_stmts(ls_stmt *const *a, ls_stmt *const *b, int n)
{
    for (int i = 0; i < n; i++) {
        ls_stmt_buf ba, bb;
        briefs += ls_stmt_kind(a[i]) == S_BRIEF;
        if (!same_stmt(ls_stmt_view(a[i], &ba), ls_stmt_view(b[i], &bb)))
            return false;
    }
    return true;
}

/* ---- the netlist, field by field ------------------------------------------- */

static bool same_bits(double a, double b)
{
    return memcmp(&a, &b, sizeof a) == 0;
}

static bool same_dims(ls_dims a, ls_dims b)
{
    return a.v == b.v && a.a == b.a && a.known == b.known;
}

/* Whether two bound quantities are the same tree (constants bit for bit). */
static bool same_q(const ls_q *a, const ls_q *b)
{
    if (!a || !b)
        return a == b;
    if (a->kind != b->kind || !same_loc(a->loc, b->loc) || !same_bits(a->value, b->value) || a->index != b->index ||
        a->prop != b->prop || a->op != b->op || a->nargs != b->nargs || !same_dims(a->dims, b->dims) ||
        !same_q(a->a, b->a) || !same_q(a->b, b->b))
        return false;
    for (int i = 0; i < a->nargs; i++)
        if (!same_q(a->args[i], b->args[i]))
            return false;
    return true;
}

static bool same_part(const ls_part *a, const ls_part *b)
{
    if (a->kind != b->kind || !same_str(a->name, b->name) || !same_str(a->instance, b->instance) ||
        !a->via != !b->via || (a->via && (!same_str(a->via->name, b->via->name) ||
                                          !same_str(a->via->scope, b->via->scope) || !same_loc(a->via->loc, b->via->loc))) ||
        !same_bits(a->value, b->value) || !same_loc(a->loc, b->loc) || !same_loc(a->value_loc, b->value_loc) ||
        memcmp(a->pin, b->pin, sizeof a->pin) != 0 || a->has_opt != b->has_opt ||
        a->ref != b->ref || a->branch != b->branch || a->slot != b->slot || a->has_value != b->has_value ||
        !a->opt != !b->opt || !a->range != !b->range)
        return false;
    for (int i = 0; i < LS_MAX_OPTS && a->opt; i++)
        if ((a->has_opt >> i & 1) && !same_bits(a->opt[i], b->opt[i]))
            return false;
    for (int i = 0; i < LS_MAX_RANGES && a->range; i++)
        for (int j = 0; j < 2; j++)
            if (a->range[i][j].node != b->range[i][j].node || !same_bits(a->range[i][j].volts, b->range[i][j].volts))
                return false;
    return true;
}

static bool same_budget(const ls_budget *a, const ls_budget *b)
{
    return same_bits(a->value, b->value) && a->unit == b->unit && same_loc(a->loc, b->loc);
}

/* Whether two netlists are the same in every field (strings by content). */
static bool same_netlist(const ls_netlist *a, const ls_netlist *b)
{
    if (!same_str(a->title, b->title) || !same_str(a->ground_name, b->ground_name) ||
        !same_loc(a->ground_loc, b->ground_loc) || a->nnodes != b->nnodes || a->nparts != b->nparts ||
        a->nstates != b->nstates || a->nchecks != b->nchecks || a->nparams != b->nparams || a->nents != b->nents ||
        !same_bits(a->min_ratio, b->min_ratio) || a->has_rule != b->has_rule || a->nbudgets != b->nbudgets ||
        a->nfrees != b->nfrees || a->has_rule_sag != b->has_rule_sag ||
        (a->has_rule_sag && !same_budget(&a->rule_sag, &b->rule_sag)) || a->instances != b->instances ||
        a->names.cap != b->names.cap || a->names.count != b->names.count)
        return false;
    for (int i = 0; i < a->nnodes; i++) {
        const ls_node *x = &a->nodes[i], *y = &b->nodes[i];
        if (!same_str(x->name, y->name) || !same_loc(x->loc, y->loc) || x->scope_depth != y->scope_depth ||
            x->dotted_ref != y->dotted_ref || x->claimed != y->claimed)
            return false;
    }
    for (int i = 0; i < a->nparts; i++)
        if (!same_part(&a->parts[i], &b->parts[i]))
            return false;
    for (int i = 0; i < a->nents; i++)
        if (a->ents[i].kind != b->ents[i].kind || a->ents[i].index != b->ents[i].index ||
            !same_loc(ls_entity_loc(a, i), ls_entity_loc(b, i)))
            return false;
    for (int i = 0; i < a->nparams; i++)
        if (!same_bits(a->params[i].value, b->params[i].value) || !same_dims(a->params[i].dims, b->params[i].dims) ||
            !same_loc(a->params[i].loc, b->params[i].loc))
            return false;
    for (int i = 0; i < a->nchecks; i++) {
        const ls_check *x = &a->checks[i], *y = &b->checks[i];
        if (!same_loc(x->loc, y->loc) || !same_str(x->instance, y->instance) || !same_str(x->text, y->text) ||
            !same_q(x->lhs, y->lhs) || !same_q(x->rhs, y->rhs) || !same_q(x->rhs2, y->rhs2) ||
            !same_q(x->within, y->within) || x->cmp != y->cmp || x->relative != y->relative || x->is_rule != y->is_rule)
            return false;
    }
    for (int i = 0; i < a->nbudgets; i++)
        if (!same_budget(&a->budgets[i], &b->budgets[i]))
            return false;
    for (int i = 0; i < a->nfrees; i++) {
        const ls_freevar *x = &a->frees[i], *y = &b->frees[i];
        if (x->part != y->part || !same_bits(x->lo, y->lo) || !same_bits(x->hi, y->hi) ||
            !same_str(x->series, y->series) || !same_loc(x->loc, y->loc))
            return false;
    }
    for (size_t i = 0; i < a->names.cap; i++) { /* the same names in the same slots */
        const ls_hash_slot *x = &a->names.slots[i], *y = &b->names.slots[i];
        if (!same_str(x->key, y->key) || (x->key && (x->hash != y->hash || x->val != y->val)))
            return false;
    }
    return true;
}

/* The printed diagnostics of d and its counts (malloc'd; the caller frees). */
static char *messages(const ls_arena *a, ls_diags *d)
{
    char *out = NULL;
    size_t n = 0;
    FILE *f = open_memstream(&out, &n);
    if (f) {
        ls_diags_print(d, f);
        fprintf(f, "errors %d warnings %d failed %d\n", d->errors, d->warnings, a->failed);
        fclose(f);
    }
    return out;
}

/* One parse of text: its tree in *prog, its printed messages returned
 * (malloc'd; the caller frees). */
static char *parse(ls_arena *a, ls_diags *d, const char *name, const char *text, size_t len, bool general,
                   ls_program *prog)
{
    ls_arena_init(a);
    ls_diags_init(d, a);
    if (general)
        ls_parse_string_general(d, name, text, len, prog);
    else
        ls_parse_string(d, name, text, len, prog);
    return messages(a, d);
}

/* Parse text (the fast way, or the general way: no briefs) and elaborate it
 * into *nl, with the parser's node-name numbers or (numbered false) with
 * every name looked up; the printed messages returned (malloc'd; the caller
 * frees). */
static char *elaborate(ls_arena *a, ls_diags *d, const char *name, const char *text, size_t len, bool general,
                       bool numbered, ls_netlist *nl)
{
    ls_program prog;
    free(parse(a, d, name, text, len, general, &prog));
    if (!numbered)
        prog.node_keys = 0;
    memset(nl, 0, sizeof *nl);
    ls_elaborate(&prog, d, NULL, 0, nl);
    return messages(a, d);
}

/* One side of a comparison: its arena, diagnostics and printed messages. */
typedef struct side {
    ls_arena a;
    ls_diags d;
    char *m;
} side;

/* Free one side's messages, diagnostics and arena. */
static void release(side *x)
{
    free(x->m);
    ls_diags_free(&x->d);
    ls_arena_free(&x->a);
}

/* Elaborate text parsed the fast way with and without the node names'
 * numbers, and parsed the general way (statements, no briefs); a failure
 * when the netlists or the messages differ. */
static bool check_elab(const char *name, const char *text, size_t len)
{
    side x, y, z;
    ls_netlist n1, n2, n3;
    x.m = elaborate(&x.a, &x.d, name, text, len, false, true, &n1);
    y.m = elaborate(&y.a, &y.d, name, text, len, false, false, &n2);
    z.m = elaborate(&z.a, &z.d, name, text, len, true, true, &n3);
    bool ok = x.m && y.m && strcmp(x.m, y.m) == 0 && same_netlist(&n1, &n2);
    if (!ok)
        fprintf(stderr, "fast_same: %s: the numbered node names elaborate differently\n--- numbered:\n%s"
                "--- looked up:\n%s", name, x.m ? x.m : "", y.m ? y.m : "");
    bool same3 = x.m && z.m && strcmp(x.m, z.m) == 0 && same_netlist(&n1, &n3);
    if (!same3)
        fprintf(stderr, "fast_same: %s: the fast path's tree elaborates differently\n--- fast:\n%s"
                "--- general:\n%s", name, x.m ? x.m : "", z.m ? z.m : "");
    ls_netlist_free(&n1);
    ls_netlist_free(&n2);
    ls_netlist_free(&n3);
    release(&x);
    release(&y);
    release(&z);
    return ok && same3;
}

/* Parse text both ways and elaborate it both ways; count a failure when
 * either pair differs. */
static void check_text(const char *name, const char *text, size_t len)
{
    side x, y;
    ls_program p1, p2;
    x.m = parse(&x.a, &x.d, name, text, len, false, &p1);
    y.m = parse(&y.a, &y.d, name, text, len, true, &p2);
    texts++;
    bool ok = x.m && y.m && strcmp(x.m, y.m) == 0 && p1.n == p2.n && same_stmts(p1.stmts, p2.stmts, p1.n);
    if (!ok)
        fprintf(stderr, "fast_same: %s: the fast path differs (statements %d / %d)\n--- fast:\n%s--- general:\n%s",
                name, p1.n, p2.n, x.m ? x.m : "", y.m ? y.m : "");
    release(&x);
    release(&y);
    /* The fuzz regressions named slow_* expand a million instances (they pin
     * the elaborator's time limits, in blocks, where numbers are not used):
     * seconds each, so they are parsed both ways but not elaborated here. */
    const char *base = strrchr(name, '/');
    if (strncmp(base ? base + 1 : name, "slow_", 5) != 0 && !check_elab(name, text, len))
        ok = false;
    if (!ok)
        failures++;
}

/* Every regular file under dir (recursively). */
static void check_dir(const char *dir)
{
    DIR *dp = opendir(dir);
    if (!dp) {
        fprintf(stderr, "fast_same: cannot open %s\n", dir);
        failures++;
        return;
    }
    struct dirent *de;
    while ((de = readdir(dp)) != NULL) {
        if (de->d_name[0] == '.')
            continue;
        char path[4096];
        snprintf(path, sizeof path, "%s/%s", dir, de->d_name);
        struct stat st;
        if (stat(path, &st) != 0)
            continue;
        if (S_ISDIR(st.st_mode)) {
            check_dir(path);
            continue;
        }
        if (!S_ISREG(st.st_mode) || st.st_size > (1 << 24))
            continue;
        size_t len;
        char *text = ls_read_file(path, &len);
        if (text)
            check_text(path, text, len);
        free(text);
    }
    closedir(dp);
}

/* Lines at the fast path's edges, each in a small circuit of its own, with
 * and without a newline at the end, and with a second copy of the line (a
 * clash of names). */
static void check_edges(void)
{
    static const char *const lines[] = {
        "resistor r1 a -> b 1", "resistor r1 a -> b 1.5", "resistor r1 a -> b 0.001", "resistor r1 a -> b 007",
        "resistor r1 a -> b 123456789012345", "resistor r1 a -> b 1234567890123456", "resistor r1 a -> b 0.1234567890123456",
        "resistor r1 a -> b 1e3", "resistor r1 a -> b 1E-3", "resistor r1 a -> b 1k", "resistor r1 a -> b 4k7",
        "resistor r1 a -> b 47R", "resistor r1 a -> b 0R47", "resistor r1 a -> b 1 ohm", "resistor r1 a -> b 1 k",
        "resistor r1 a -> b 1 V", "resistor r1 a -> b 1.", "resistor r1 a -> b 1..2", "resistor r1 a -> b 1 # note",
        "resistor r1 a -> b 1#note", "resistor r1 a -> b 1 \\\n tol=1%", "resistor r1 a -> b -1", "resistor r1 a -> b +1",
        "resistor r1 a -> b (1)", "resistor r1 a -> b 1 tol=1%", "resistor r1 a -> b 1\r", "resistor r1 a -> b 1\t ",
        "resistor r1 a -> b .5", "resistor r1 a -> b 1.5.3", "resistor r1 a -> b 1 2", "resistor r1 a -> b 1+1",
        "resistor r1 a -> b 1 + 1", "resistor r1 a -> b 1*2", "resistor r1 a -> b 1x", "resistor r1 a -> b 1_000",
        "resistor r1 a -> b 1e400", "resistor r1 a -> b 99999999999999999999999", "resistor r1 a -> b",
        "resistor r1 a -> b ", "resistor r1 a b 1", "resistor r1 a->b 1", "resistor r1 a ->b 1", "resistor r1 a-> b 1",
        "resistor r1 a - > b 1", "resistor r1 a -> -> b 1", "resistor r1 a -> b = 1", "resistor r1 a -> b=1",
        "resistor r1=1 a -> b 1", "resistor  r1\ta\t->\tb\t1", "resistor r1.x a -> b 1", "resistor r1 a.b -> c.d 1",
        "resistor r1 a._b -> c 1", "resistor _r a -> _b 1", "resistor r1 a. -> b 1", "resistor r1 a -> b. 1",
        "resistor r1 ground -> b 1", "resistor r1 g -> g 1", "resistor r1 r1 -> b 1", "resistor r1 a -> b 0",
        "resistr r1 a -> b 1", "resister r1 a -> b 1", "let r1 a -> b 1", "ground r1 a -> b 1", "title r1 a -> b 1",
        "use r1 a -> b 1", "end r1 a -> b 1", "block r1 a -> b 1", "include r1 a -> b 1", "expect r1 a -> b 1",
        "capacitor c1 a -> b 1", "voltage v1 a -> b 1", "current i1 a -> b 1", "diode d1 a -> b 1",
        "resistor r\xCE\xA9 a -> b 1", "resistor r1 a -> b 1\xC2\xB5", "resistor r1 a -> b 1 \xCE\xA9",
        "resistor r1 a -> b \xFF", "resistor r1 a\xFF -> b 1", "resistor r1 a -> b 1\x01", "\xEF\xBB\xBFresistor r1 a -> b 1",
        "resistor r1 a -> b 1 1", "resistor r1 a -> b 1\n  \n", "resistor", "resistor r1", "resistor r1 a",
        "resistor r1 a ->", "resistor r1 a -> 1 1", "resistor 1 a -> b 1", "resistor r1 1 -> b 1",
    };
    const char *head = "ground g\nvoltage vs g -> a 1\n";
    char buf[512];
    for (size_t i = 0; i < sizeof lines / sizeof *lines; i++) {
        for (int v = 0; v < 4; v++) {
            int n;
            switch (v) {
            case 0: n = snprintf(buf, sizeof buf, "%s%s\n", head, lines[i]); break;
            case 1: n = snprintf(buf, sizeof buf, "%s%s", head, lines[i]); break;
            case 2: n = snprintf(buf, sizeof buf, "%s%s\n%s\n", head, lines[i], lines[i]); break;
            default: n = snprintf(buf, sizeof buf, "block cell x y\n%s\nend\n%s\n", lines[i], lines[i]); break;
            }
            char name[64];
            snprintf(name, sizeof name, "edge%zu-%d.stack", i, v);
            check_text(name, buf, (size_t)n);
        }
    }
    /* Numbered node names at their edges: a name that is a part before or
     * after its use as a node, the ground under both spellings, a name used
     * inside a block and at the top level, dotted names into an instance,
     * an error at one mention of a name used again, and a name mentioned
     * again after more other names than the parser's cache holds. */
    static const char *const keyed[] = {
        "ground g\nresistor a x -> y 1\nresistor r1 a -> b 1\nresistor r2 a -> b 1\n",
        "ground g\nresistor r1 a -> b 1\nresistor a x -> y 1\nresistor r2 a -> b 1\n",
        "ground g\nresistor r1 g -> a 1\nresistor r2 ground -> a 1\nresistor r3 g -> ground 1\n",
        "resistor r1 a -> g 1\nground g\nresistor r2 g -> a 1\n",
        "ground g\nblock cell x y\nresistor r a -> x 1\nresistor q a -> y 1\nend\nresistor r1 a -> b 1\n"
        "use cell c1 x=a y=b\nresistor r2 a -> c1.a 1\nresistor r3 c1.a -> b 1\n",
        "ground g\nresistor r1 a -> b -1\nresistor r2 a -> b 1\nresistor r2 a -> b 1\nresistor r3 b -> a 1\n",
        "ground g\nlet a = 1\nresistor r1 a -> b 1\nresistor r2 a -> b 1\n",
        "ground g\nresistor r1 a -> a 1\nresistor r2 a -> a 1\n",
    };
    for (size_t i = 0; i < sizeof keyed / sizeof *keyed; i++) {
        char name[64];
        snprintf(name, sizeof name, "keyed%zu.stack", i);
        check_text(name, keyed[i], strlen(keyed[i]));
    }
    {
        /* 40 000 distinct names between two mentions of `far` */
        size_t cap = 2u << 20, k = 0;
        char *t = malloc(cap);
        if (t) {
            k += (size_t)snprintf(t + k, cap - k, "ground g\ncurrent i0 g -> far 1\n");
            for (int j = 0; j < 20000 && k + 64 < cap; j++)
                k += (size_t)snprintf(t + k, cap - k, "resistor r%d n%d -> m%d 1\n", j, j, j);
            k += (size_t)snprintf(t + k, cap - k, "resistor rf far -> n7 1\nresistor rg m7 -> far 2\n");
            check_text("far.stack", t, k);
            free(t);
        }
    }
    /* a NUL byte inside the line and at its end */
    static const char nul1[] = "ground g\nresistor r1 a -> b 1\0 2\n", nul2[] = "ground g\nresistor r1 a\0 -> b 1\n";
    check_text("nul1.stack", nul1, sizeof nul1 - 1);
    check_text("nul2.stack", nul2, sizeof nul2 - 1);
    /* lines just under and over the lexer's limit (LS_MAX_LINE_BYTES) */
    for (int over = -2; over <= 2; over++) {
        size_t nl = LS_MAX_LINE_BYTES + (size_t)over - 20;
        char *t = malloc(nl + 64);
        if (!t)
            continue;
        size_t k = (size_t)sprintf(t, "resistor r");
        memset(t + k, 'x', nl);
        k += nl;
        k += (size_t)sprintf(t + k, " a -> b 1\nresistor r2 a -> b 2\n");
        check_text("long.stack", t, k);
        free(t);
    }
    /* A brief holds offsets up to 255 bytes from the kind word: statements
     * whose text ends at 250 to 258 bytes, the length in the part's name, in
     * its TO node's name, or in blanks after the number. */
    for (int where = 0; where < 3; where++)
        for (int end = 250; end <= 258; end++) {
            const char *blanks = where == 2 ? "\t \t " : "";
            int pad = end - (int)(strlen("resistor r a -> b 1") + strlen(blanks));
            char t[600], name[64];
            int k = sprintf(t, "ground g\nvoltage vs g -> a 1\nresistor r");
            if (where == 0) {
                memset(t + k, 'y', (size_t)pad);
                k += pad;
            }
            k += sprintf(t + k, " a -> b");
            if (where == 1) {
                memset(t + k, 'y', (size_t)pad);
                k += pad;
            }
            k += sprintf(t + k, " 1%s\nresistor r2 a -> b 2\n", blanks);
            snprintf(name, sizeof name, "brief%d-%d.stack", where, end);
            check_text(name, t, (size_t)k);
        }
}

int main(int argc, char **argv)
{
    check_edges();
    for (int i = 1; i < argc; i++)
        check_dir(argv[i]);
    printf("fast_same: %d texts, %d differ, %d brief statements\n", texts, failures, briefs);
    /* briefs: the fast path's compact statements were made, so compared */
    return failures || texts < 400 || briefs < 1000 ? 1 : 0;
}
