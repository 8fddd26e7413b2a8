/* parser.c — recursive descent over one statement per line.
 * On an error the rest of the line is skipped, so one run reports many errors. */
#include "lang/parser.h"

#include <assert.h>
#include <errno.h>
#include <limits.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "lang/lexer.h"
#include "lang/nodenames.h"

/* Distinct kind words a parse keeps one copy of (the part table has fewer). */
#define LS_KIND_WORDS 64

typedef struct inc_frame {
    const char *real;         /* canonical path, for cycle detection */
    const char *shown;        /* as written, for the message */
    struct inc_frame *up;
} inc_frame;

typedef struct parser {
    ls_diags *d;
    ls_arena *a;              /* names and text: they outlive the tree */
    ls_arena *sa;             /* the tree's structures (ls_program.syntax, else a) */
    ls_lexer lx;
    ls_token tok;             /* current */
    ls_token ahead;           /* one token of look-ahead */
    bool have_ahead;
    bool in_expect;
    bool general_only;        /* no simple_part: every statement token by token (ls_parse_string_general) */
    int expr_depth;
    int inc_depth;
    inc_frame *incs;
    const char *dir;          /* directory of this file, for includes */
    ls_node_names *nodes;     /* FROM and TO names' numbers, shared with included files; NULL: none */
    /* The kind words seen so far (in the arena), each kept once however many
     * part statements use it; the last one used is tried first. */
    struct { const char *w; unsigned len; } kinds[LS_KIND_WORDS];
    int nkinds, last_kind;
} parser;

typedef struct stmt_list {
    ls_stmt **v;
    int n, cap;
    ls_arena *a;              /* v is in this arena (the program's list, until it outgrows it); NULL: malloc */
} stmt_list;

static void parse_lines(parser *p, stmt_list *out, ls_stmt *block);

/* The words that start a statement other than a part's (a part statement
 * starts with its kind word: any other word). */
const char *const ls_statement_keywords[] = {"title", "let", "ground", "include", "block",
                                             "use", "expect", "rule", "end", NULL};

/* ---- small helpers ---------------------------------------------------- */

static void advance(parser *p)
{
    if (p->have_ahead) {
        p->tok = p->ahead;
        p->have_ahead = false;
    } else {
        ls_lex_next(&p->lx, &p->tok);
    }
}

static const ls_token *peek(parser *p)
{
    if (!p->have_ahead) {
        ls_lex_next(&p->lx, &p->ahead);
        p->have_ahead = true;
    }
    return &p->ahead;
}

static bool at_eol(const parser *p)
{
    return p->tok.kind == T_NEWLINE || p->tok.kind == T_EOF;
}

static void skip_line(parser *p)
{
    while (!at_eol(p))
        advance(p);
}

static char *tok_str(parser *p, const ls_token *t)
{
    return ls_arena_strndup(p->a, t->text, t->len);
}

/* A node name of a part statement (its n bytes at text): its string, shared
 * with a recent mention of the same name, and its number in *key (0 when not
 * numbered; see nodenames.h).  NULL when out of memory. */
static const char *node_name(parser *p, const char *text, size_t n, int *key)
{
    *key = 0;
    if (!p->nodes)
        return ls_arena_strndup(p->a, text, n);
    return ls_node_names_intern(p->nodes, p->a, text, n, key);
}

static bool is_word(const ls_token *t, const char *w)
{
    return t->kind == T_IDENT && strlen(w) == t->len && memcmp(t->text, w, t->len) == 0;
}

/* Append a statement; out of memory marks the arena failed, which the
 * elaborator turns into an error, so a statement is never lost silently. */
static void push(parser *p, stmt_list *l, ls_stmt *s)
{
    if (l->n == l->cap) {
        int cap = l->cap ? l->cap * 2 : 16;
        ls_stmt **v = NULL;
        if (l->cap <= INT_MAX / 2 && l->a) { /* outgrew its arena array: go on on the heap */
            v = malloc((size_t)cap * sizeof *v);
            if (v && l->n)
                memcpy(v, l->v, (size_t)l->n * sizeof *v);
        } else if (l->cap <= INT_MAX / 2) {
            v = realloc(l->v, (size_t)cap * sizeof *v);
        }
        if (!v) {
            p->a->failed = 1;
            return;
        }
        l->a = NULL;
        l->v = v;
        l->cap = cap;
    }
    l->v[l->n++] = s;
}

/* Describe the current token for "expected X, got Y" messages. */
static const char *got(parser *p)
{
    if (p->tok.kind == T_IDENT || p->tok.kind == T_NUMBER)
        return ls_arena_printf(p->a, "'%.*s'", (int)p->tok.len, p->tok.text);
    return ls_tok_name(p->tok.kind);
}

static void expected(parser *p, const char *what)
{
    if (p->tok.kind != T_ERROR) /* the lexer already said what is wrong */
        ls_error(p->d, p->tok.loc, "%s expected, got %s", what, got(p));
}

static ls_loc span(ls_loc a, ls_loc b)
{
    return (ls_loc){a.file, a.start, b.end > a.start ? b.end : a.end};
}

/* ---- expressions -------------------------------------------------------- */

static ls_expr *parse_sum(parser *p);

/* A zeroed expression of kind k, only as large as that kind needs. */
static ls_expr *new_expr(parser *p, ls_ekind k, ls_loc loc)
{
    ls_expr *e = ls_arena_alloc(p->sa, ls_expr_size(k));
    if (e) {
        e->kind = k;
        e->loc = loc;
    }
    return e;
}

static int func_id(const ls_token *t)
{
    static const char *const names[F_COUNT] = {"sqrt", "abs", "min", "max", "exp", "ln", "log10"};
    for (int i = 0; i < F_COUNT; i++)
        if (is_word(t, names[i]))
            return i;
    return -1;
}

static bool reserved_in_expect(const ls_token *t)
{
    return is_word(t, "within") || is_word(t, "between") || is_word(t, "and");
}

/* call -> FUNC '(' sum {',' sum} ')' */
static ls_expr *parse_call(parser *p, int f)
{
    ls_expr *e = new_expr(p, E_CALL, p->tok.loc);
    if (!e)
        return NULL;
    e->op = f;
    advance(p); /* name */
    advance(p); /* ( */
    ls_expr *args[8];
    int n = 0;
    if (p->tok.kind != T_RPAREN) {
        for (;;) {
            ls_expr *x = parse_sum(p);
            if (!x)
                return NULL;
            if (n == 8) {
                ls_error(p->d, x->loc, "too many arguments (at most 8)");
                return NULL;
            }
            args[n++] = x;
            if (p->tok.kind != T_COMMA)
                break;
            advance(p);
        }
    }
    if (p->tok.kind != T_RPAREN) {
        expected(p, "',' or ')'");
        return NULL;
    }
    e->loc = span(e->loc, p->tok.loc);
    advance(p);
    e->args = ls_arena_alloc(p->sa, (size_t)(n ? n : 1) * sizeof *e->args);
    if (!e->args)
        return NULL;
    memcpy(e->args, args, (size_t)n * sizeof *args);
    e->nargs = n;
    return e;
}

/* primary -> NUMBER | NAME | FUNC '(' args ')' | '(' sum ')' */
static ls_expr *parse_primary(parser *p)
{
    ls_token t = p->tok;
    if (t.kind == T_NUMBER) {
        ls_expr *e = new_expr(p, E_NUM, t.loc);
        if (e) {
            e->num = t.num;
            e->dims = t.dims;
        }
        advance(p);
        return e;
    }
    if (t.kind == T_IDENT) {
        if (p->in_expect && reserved_in_expect(&t)) {
            ls_error(p->d, t.loc, "a value expected before '%.*s'", (int)t.len, t.text);
            return NULL;
        }
        int f = func_id(&t);
        if (f >= 0 && peek(p)->kind == T_LPAREN)
            return parse_call(p, f);
        ls_expr *e = new_expr(p, E_NAME, t.loc);
        if (e)
            e->name = tok_str(p, &t);
        advance(p);
        return e;
    }
    if (t.kind == T_LPAREN) {
        advance(p);
        ls_expr *e = parse_sum(p);
        if (!e)
            return NULL;
        if (p->tok.kind != T_RPAREN) {
            int line, col;
            ls_loc_linecol(p->d, t.loc.file, t.loc.start, &line, &col);
            if (p->tok.kind != T_ERROR)
                ls_error(p->d, p->tok.loc, "')' expected to close the '(' at column %d, got %s", col, got(p));
            return NULL;
        }
        e->loc = span(t.loc, p->tok.loc);
        advance(p);
        return e;
    }
    expected(p, "a value");
    return NULL;
}

/* Enter one more level of the expression tree: a nesting (parentheses, a
 * sign, a call) or one more operator of a chain (1 + 2 + 3 ... is as deep as
 * it is long, and every walker of the tree recurses on it).  Returns false,
 * after reporting once, past LS_MAX_EXPR_DEPTH; the caller leaves the level
 * (expr_depth--) either way. */
static bool enter(parser *p)
{
    if (++p->expr_depth <= LS_MAX_EXPR_DEPTH)
        return true;
    if (p->expr_depth == LS_MAX_EXPR_DEPTH + 1)
        ls_error(p->d, p->tok.loc, "expression nested more than %d deep", LS_MAX_EXPR_DEPTH);
    return false;
}

/* The tree's code of a binary operator token (level_op admits only these). */
static ls_binop binop_of(ls_tok k)
{
    switch (k) {
    case T_PLUS: return LS_OP_ADD;
    case T_MINUS: return LS_OP_SUB;
    case T_STAR: return LS_OP_MUL;
    case T_SLASH: return LS_OP_DIV;
    case T_CARET: return LS_OP_POW;
    default: assert(k == T_PARALLEL); return LS_OP_PAR;
    }
}

/* A new E_BIN node a OP b, op a token; NULL when out of memory. */
static ls_expr *binary(parser *p, ls_tok op, ls_loc op_loc, ls_expr *a, ls_expr *b)
{
    ls_expr *e = new_expr(p, E_BIN, span(a->loc, b->loc));
    if (e) {
        e->op = (unsigned char)binop_of(op);
        e->op_loc = op_loc;
        e->a = a;
        e->b = b;
    }
    return e;
}

static ls_expr *parse_unary(parser *p);

/* power -> primary ['^' unary]     (right-associative) */
static ls_expr *parse_power(parser *p)
{
    ls_expr *a = parse_primary(p);
    if (!a || p->tok.kind != T_CARET)
        return a;
    ls_loc op = p->tok.loc;
    advance(p);
    ls_expr *b = parse_unary(p);
    return b ? binary(p, T_CARET, op, a, b) : NULL;
}

/* unary -> ('-' | '+') unary | power */
static ls_expr *parse_unary(parser *p)
{
    if (!enter(p)) {
        p->expr_depth--;
        return NULL;
    }
    ls_expr *e;
    if (p->tok.kind == T_MINUS || p->tok.kind == T_PLUS) {
        ls_token t = p->tok;
        advance(p);
        ls_expr *a = parse_unary(p);
        if (!a) {
            e = NULL;
        } else if (t.kind == T_PLUS) {
            e = a;
        } else {
            e = new_expr(p, E_NEG, span(t.loc, a->loc));
            if (e)
                e->a = a;
        }
    } else {
        e = parse_power(p);
    }
    p->expr_depth--;
    return e;
}

/* The left-associative binary levels, loosest first:
 *   sum      -> parallel {('+' | '-') parallel}
 *   parallel -> product {'||' product}
 *   product  -> unary {('*' | '/') unary}
 * Every chained operator counts towards the depth limit, because the
 * evaluators recurse on the tree it builds. */
enum { LEVEL_SUM, LEVEL_PARALLEL, LEVEL_PRODUCT, LEVEL_UNARY };

static bool level_op(int level, ls_tok k)
{
    switch (level) {
    case LEVEL_SUM: return k == T_PLUS || k == T_MINUS;
    case LEVEL_PARALLEL: return k == T_PARALLEL;
    default: return k == T_STAR || k == T_SLASH;
    }
}

static ls_expr *parse_level(parser *p, int level)
{
    if (level == LEVEL_UNARY)
        return parse_unary(p);
    ls_expr *a = parse_level(p, level + 1);
    int chained = 0;
    while (a && level_op(level, p->tok.kind)) {
        chained++;
        if (!enter(p)) {
            a = NULL;
            break;
        }
        ls_tok op = p->tok.kind;
        ls_loc l = p->tok.loc;
        advance(p);
        ls_expr *b = parse_level(p, level + 1);
        a = b ? binary(p, op, l, a, b) : NULL;
    }
    p->expr_depth -= chained;
    return a;
}

/* Whether a number is the whole operand: nothing after it binds to it. */
static bool ends_operand(ls_tok k)
{
    switch (k) {
    case T_PLUS: case T_MINUS: case T_STAR: case T_SLASH: case T_CARET: case T_PARALLEL: return false;
    default: return true;
    }
}

/* sum: a whole expression */
static ls_expr *parse_sum(parser *p)
{
    /* A lone number at the top of an expression (most part values) is its
     * own tree: the levels below would each pass it up unchanged, and at
     * depth 0 none of them can reach the depth limit. */
    if (p->expr_depth == 0 && p->tok.kind == T_NUMBER && ends_operand(peek(p)->kind))
        return parse_primary(p);
    if (!enter(p)) {
        p->expr_depth--;
        return NULL;
    }
    ls_expr *a = parse_level(p, LEVEL_SUM);
    p->expr_depth--;
    return a;
}

/* ---- statements ----------------------------------------------------------- */

static ls_stmt *new_stmt(parser *p, ls_skind k)
{
    ls_stmt *s = ls_arena_alloc(p->sa, sizeof *s);
    if (s) {
        s->kind = k;
        s->loc = p->tok.loc;
        s->text_loc = p->tok.loc;
    }
    return s;
}

static bool expect_ident(parser *p, const char *what, const char **name, ls_loc *loc)
{
    if (p->tok.kind != T_IDENT) {
        expected(p, what);
        return false;
    }
    *name = tok_str(p, &p->tok);
    *loc = p->tok.loc;
    advance(p);
    return *name != NULL;
}

/* After a statement: the line must end here. */
static bool end_of_statement(parser *p)
{
    if (at_eol(p))
        return true;
    if (p->tok.kind != T_ERROR)
        ls_error(p->d, p->tok.loc, "end of line expected, got %s", got(p));
    return false;
}

static bool option_ahead(parser *p)
{
    return p->tok.kind == T_IDENT && peek(p)->kind == T_EQ;
}

/* options -> {NAME '=' [sum ['..' sum]]}   (empty only when allow_empty)
 * A part's VALUE may also stand between its options (`pot p1 a=x wiper=w b=y
 * 10k at=0.3`) when it was not given before them: with_value. */
static bool parse_options(parser *p, ls_stmt *s, bool allow_empty, bool with_value)
{
    /* A `use` connects every pin of its block (up to LS_MAX_BLOCK_PINS) and
     * sets its params, so it may carry that many more options than a part. */
    int max = s->kind == S_USE ? LS_MAX_USE_OPTIONS : LS_MAX_OPTIONS;
    ls_opt buf[LS_MAX_USE_OPTIONS];
    int n = 0;
    while (!at_eol(p)) {
        if (!option_ahead(p)) {
            if (with_value && !s->value) {
                s->value = parse_sum(p);
                if (!s->value)
                    return false;
                continue;
            }
            expected(p, with_value && s->value ? "an option NAME=VALUE (the value is already given)"
                                               : "an option NAME=VALUE");
            return false;
        }
        if (n == max) {
            ls_error(p->d, p->tok.loc, "too many options on one %s (at most %d)", s->kind == S_USE ? "use" : "statement",
                     max);
            return false;
        }
        ls_opt *o = &buf[n++];
        memset(o, 0, sizeof *o);
        o->name = tok_str(p, &p->tok);
        o->name_loc = p->tok.loc;
        advance(p); /* name */
        ls_loc eq = p->tok.loc;
        advance(p); /* = */
        if (at_eol(p) || option_ahead(p)) {
            if (!allow_empty) {
                ls_error(p->d, eq, "a value expected after '%s='", o->name);
                return false;
            }
            continue;
        }
        o->value = parse_sum(p);
        if (!o->value)
            return false;
        if (p->tok.kind == T_DOTDOT) {
            advance(p);
            o->hi = parse_sum(p);
            if (!o->hi)
                return false;
        }
    }
    if (n == 0)
        return true; /* opts stays NULL */
    s->opts = ls_arena_alloc(p->sa, (size_t)n * sizeof *s->opts);
    if (!s->opts)
        return false;
    memcpy(s->opts, buf, (size_t)n * sizeof *buf);
    s->nopts = n;
    return true;
}

/* The kind word of a part statement, in the arena: the string of an earlier
 * part statement with the same word (the last one's first: most lines repeat
 * it), so a large circuit keeps one copy of each kind word (past
 * LS_KIND_WORDS distinct words, a copy each).  NULL when out of memory. */
static const char *kind_word(parser *p, const ls_token *t)
{
    for (int k = -1; k < p->nkinds; k++) {
        int i = k < 0 ? p->last_kind : k;
        if (i >= p->nkinds)
            continue; /* none yet */
        if (t->len == p->kinds[i].len && memcmp(t->text, p->kinds[i].w, t->len) == 0) {
            p->last_kind = i;
            return p->kinds[i].w;
        }
    }
    const char *w = tok_str(p, t);
    if (w && p->nkinds < LS_KIND_WORDS) {
        p->kinds[p->nkinds].w = w;
        p->kinds[p->nkinds].len = t->len;
        p->last_kind = p->nkinds++;
    }
    return w;
}

/* The strings of the simple part statement sp, into *kw, *name, *from and
 * *to (the node names' numbers into *from_key, *to_key); false when out of
 * memory. */
static inline bool simple_words(parser *p, const ls_simple_part *sp, const char **kw, const char **name,
                                const char **from, const char **to, int *from_key, int *to_key)
{
    const char *src = p->lx.src;
    return (*kw = kind_word(p, &p->tok)) && (*name = ls_arena_strndup(p->a, src + sp->name, sp->name_end - sp->name)) &&
           (*from = node_name(p, src + sp->from, sp->from_end - sp->from, from_key)) &&
           (*to = node_name(p, src + sp->to, sp->to_end - sp->to, to_key));
}

/* At the top level, the simple part statement sp as an ls_brief (ast.h),
 * when its words lie within 255 bytes of its start; else NULL with nothing
 * allocated. */
static ls_stmt *simple_brief(parser *p, const ls_simple_part *sp)
{
    unsigned at = p->tok.loc.start, end = sp->end;
    if (end - at > UCHAR_MAX)
        return NULL;
    ls_brief *b = ls_arena_alloc(p->sa, sizeof *b);
    if (!b || !simple_words(p, sp, &b->kw, &b->name, &b->from, &b->to, &b->from_key, &b->to_key))
        return NULL;
    unsigned char *o = b->off; /* each below end, so below at + 256 */
    o[LS_BR_KW_END] = (unsigned char)(p->tok.loc.end - at);
    o[LS_BR_NAME] = (unsigned char)(sp->name - at);
    o[LS_BR_NAME_END] = (unsigned char)(sp->name_end - at);
    o[LS_BR_FROM] = (unsigned char)(sp->from - at);
    o[LS_BR_FROM_END] = (unsigned char)(sp->from_end - at);
    o[LS_BR_TO] = (unsigned char)(sp->to - at);
    o[LS_BR_TO_END] = (unsigned char)(sp->to_end - at);
    o[LS_BR_NUM] = (unsigned char)(sp->num - at);
    o[LS_BR_NUM_END] = (unsigned char)(sp->num_end - at);
    o[LS_BR_END] = (unsigned char)(end - at);
    b->kind = S_BRIEF;
    b->file = p->lx.file;
    b->start = at;
    b->num = sp->value;
    return (ls_stmt *)(void *)b;
}

/* The commonest part statement, `KIND NAME FROM -> TO NUMBER` with nothing
 * after the plain number (ls_lex_simple_part), built without tokens: the
 * same statement, locations and strings as parse_part builds, in the same
 * order; at the top level (block NULL) as an ls_brief when it fits one, and
 * then with its text_loc.  NULL, with nothing read, for any other statement
 * (and when out of memory: parse_part then meets the same shortage and the
 * arena is marked). */
static ls_stmt *simple_part(parser *p, const ls_stmt *block)
{
    ls_simple_part sp;
    if (p->have_ahead || p->general_only || !ls_lex_simple_part(&p->lx, &sp))
        return NULL;
    ls_stmt *s = NULL;
    if (!block && (s = simple_brief(p, &sp)) != NULL) {
        p->lx.pos = sp.num_end;
        advance(p); /* the line's end */
        return s;
    }
    int f = p->lx.file;
    /* The statement and its number in one allocation: 8-byte aligned, so no
     * padding between one statement's number and the next statement. */
    s = ls_arena_alloc(p->sa, sizeof *s + ls_expr_size(E_NUM));
    if (!s)
        return NULL;
    ls_expr *e = (ls_expr *)(s + 1);
    _Static_assert(sizeof(ls_stmt) % _Alignof(ls_expr) == 0, "the number follows its statement aligned");
    s->kind = S_PART;
    s->loc = s->text_loc = p->tok.loc;
    e->kind = E_NUM;
    e->loc = (ls_loc){f, sp.num, sp.num_end};
    if (!simple_words(p, &sp, &s->kw, &s->name, &s->from, &s->to, &s->from_key, &s->to_key))
        return NULL;
    s->name_loc = (ls_loc){f, sp.name, sp.name_end};
    s->from_loc = (ls_loc){f, sp.from, sp.from_end};
    s->to_loc = (ls_loc){f, sp.to, sp.to_end};
    s->arrow = true;
    e->num = sp.value;
    e->dims = LS_FREE;
    s->value = e;
    p->lx.pos = sp.num_end;
    advance(p); /* the line's end */
    return s;
}

/* part -> KIND NAME [FROM '->' TO] [VALUE] {OPTION}
 * The grammar alone decides: any word that is not a statement keyword starts
 * a part statement, and the elaborator asks the part table whether KIND is a
 * kind.  Returns the statement, or NULL after a syntax error in the words
 * after KIND (reported) or when out of memory. */
static ls_stmt *parse_part(parser *p)
{
    ls_stmt *s = new_stmt(p, S_PART);
    if (!s || !(s->kw = kind_word(p, &p->tok)))
        return NULL;
    advance(p);
    if (!expect_ident(p, "a part name", &s->name, &s->name_loc))
        return NULL;
    if (p->tok.kind == T_IDENT && peek(p)->kind == T_ARROW) {
        s->from = node_name(p, p->tok.text, p->tok.len, &s->from_key);
        s->from_loc = p->tok.loc;
        advance(p);
        advance(p);
        if (p->tok.kind != T_IDENT) {
            expected(p, "a node name after '->'");
            return NULL;
        }
        s->to = node_name(p, p->tok.text, p->tok.len, &s->to_key);
        s->to_loc = p->tok.loc;
        advance(p);
        if (!s->to)
            return NULL;
        s->arrow = true;
    } else if (p->tok.kind == T_IDENT && !option_ahead(p) && !at_eol(p)) {
        /* Two names without an arrow: say how polarity is written. */
        const ls_token *n2 = peek(p);
        if (n2->kind == T_IDENT || n2->kind == T_NUMBER) {
            ls_error(p->d, p->tok.loc, "'->' expected between the two nodes of '%s' (write FROM -> TO)",
                     s->name);
            return NULL;
        }
    }
    if (!at_eol(p) && !option_ahead(p)) {
        s->value = parse_sum(p);
        if (!s->value)
            return NULL;
    }
    if (!parse_options(p, s, false, true))
        return NULL;
    return s;
}

/* let -> 'let' NAME '=' sum */
static ls_stmt *parse_let(parser *p)
{
    ls_stmt *s = new_stmt(p, S_PARAM);
    advance(p);
    if (!s || !expect_ident(p, "a name for the let", &s->name, &s->name_loc))
        return NULL;
    if (p->tok.kind != T_EQ) {
        expected(p, "'=' after the let's name");
        return NULL;
    }
    advance(p);
    s->value = parse_sum(p);
    return s->value ? s : NULL;
}

/* cmp -> '=' | '<' | '<=' | '>' | '>=' | 'between'   (into an ls_cmp) */
static bool parse_cmp(parser *p, unsigned char *c)
{
    switch (p->tok.kind) {
    case T_EQ: *c = CMP_EQ; break;
    case T_LT: *c = CMP_LT; break;
    case T_LE: *c = CMP_LE; break;
    case T_GT: *c = CMP_GT; break;
    case T_GE: *c = CMP_GE; break;
    default:
        if (is_word(&p->tok, "between")) {
            *c = CMP_BETWEEN;
            break;
        }
        expected(p, "a comparison ('=', '<', '<=', '>', '>=' or 'between')");
        return false;
    }
    advance(p);
    return true;
}

/* expect -> 'expect' sum cmp sum ['within' sum] | 'expect' sum 'between' sum 'and' sum */
static ls_stmt *parse_expect(parser *p)
{
    ls_stmt *s = new_stmt(p, S_EXPECT);
    if (!s)
        return NULL;
    advance(p);
    p->in_expect = true;
    s->lhs = parse_sum(p);
    if (!s->lhs || !parse_cmp(p, &s->cmp))
        goto fail;
    s->rhs = parse_sum(p);
    if (!s->rhs)
        goto fail;
    if (s->cmp == CMP_BETWEEN) {
        if (!is_word(&p->tok, "and")) {
            expected(p, "'and' (between LOW and HIGH)");
            goto fail;
        }
        advance(p);
        if (!(s->rhs2 = parse_sum(p)))
            goto fail;
    } else if (is_word(&p->tok, "within")) {
        if (s->cmp != CMP_EQ) {
            ls_error(p->d, p->tok.loc, "'within' goes only with '='");
            goto fail;
        }
        advance(p);
        if (!(s->within = parse_sum(p)))
            goto fail;
    } else if (s->cmp == CMP_EQ) {
        if (at_eol(p))
            ls_error(p->d, s->rhs->loc, "'=' needs a tolerance: add 'within 1%%' or 'within 5 mV'");
        else
            expected(p, "'within'");
        goto fail;
    }
    p->in_expect = false;
    return s;
fail:
    p->in_expect = false;
    return NULL;
}

/* rule -> 'rule' NAME cmp sum */
static ls_stmt *parse_rule(parser *p)
{
    ls_stmt *s = new_stmt(p, S_RULE);
    if (!s)
        return NULL;
    advance(p);
    if (!expect_ident(p, "a rule name (ratio or sag)", &s->name, &s->name_loc))
        return NULL;
    bool sag = strcmp(s->name, "sag") == 0;
    if (!sag && strcmp(s->name, "ratio") != 0) {
        ls_error(p->d, s->name_loc, "unknown rule '%s'; the rules loadstack knows are 'ratio' and 'sag'", s->name);
        return NULL;
    }
    if (!parse_cmp(p, &s->cmp))
        return NULL;
    if (!sag && s->cmp != CMP_GE && s->cmp != CMP_GT) {
        ls_error(p->d, s->loc, "a ratio rule sets a minimum: write 'rule ratio >= 10'");
        return NULL;
    }
    if (sag && s->cmp != CMP_LE && s->cmp != CMP_LT) {
        ls_error(p->d, s->loc, "a sag rule sets a budget, a maximum: write 'rule sag <= 0.2%%' or 'rule sag <= 1 mV'");
        return NULL;
    }
    s->rhs = parse_sum(p);
    return s->rhs ? s : NULL;
}

/* use -> 'use' BLOCK NAME {PIN=NODE | PARAM=VALUE} */
static ls_stmt *parse_use(parser *p)
{
    ls_stmt *s = new_stmt(p, S_USE);
    if (!s)
        return NULL;
    advance(p);
    if (!expect_ident(p, "a block name", &s->kw, &s->kw_loc) ||
        !expect_ident(p, "an instance name", &s->name, &s->name_loc))
        return NULL;
    return parse_options(p, s, false, false) ? s : NULL;
}

/* block -> 'block' NAME {PIN} {PARAM=[DEFAULT]} NEWLINE {statement} 'end' */
static ls_stmt *parse_block(parser *p, stmt_list *out)
{
    (void)out;
    ls_stmt *s = new_stmt(p, S_BLOCK);
    if (!s)
        return NULL;
    advance(p);
    if (!expect_ident(p, "a block name", &s->name, &s->name_loc))
        return NULL;
    const char *pins[LS_MAX_BLOCK_PINS];
    ls_loc locs[LS_MAX_BLOCK_PINS];
    int n = 0;
    while (p->tok.kind == T_IDENT && !option_ahead(p)) {
        if (n == LS_MAX_BLOCK_PINS) {
            ls_error(p->d, p->tok.loc, "too many pins (at most %d)", LS_MAX_BLOCK_PINS);
            return NULL;
        }
        locs[n] = p->tok.loc;
        pins[n++] = tok_str(p, &p->tok);
        advance(p);
    }
    if (n > 0) { /* no pins: both stay NULL */
        s->pins = ls_arena_alloc(p->sa, (size_t)n * sizeof *s->pins);
        s->pin_locs = ls_arena_alloc(p->sa, (size_t)n * sizeof *s->pin_locs);
        if (!s->pins || !s->pin_locs)
            return NULL;
        memcpy(s->pins, pins, (size_t)n * sizeof *pins);
        memcpy(s->pin_locs, locs, (size_t)n * sizeof *locs);
        s->npins = n;
    }
    if (!parse_options(p, s, true, false))
        return NULL;
    return s;
}

static void parse_include(parser *p, stmt_list *out, ls_stmt *block);
static int add_text(ls_diags *d, const char *name, const char *text, size_t len, bool in_arena);

/* After a part statement whose words after KIND did not parse: keep its
 * kind word alone (S_BADPART), so the elaborator can say when the word is no
 * part kind at all, as it does for a whole statement. */
static void broken_part(parser *p, stmt_list *out, const ls_token *kw)
{
    ls_stmt *s = ls_arena_alloc(p->sa, sizeof *s);
    if (!s)
        return; /* the arena is marked failed: the elaborator says out of memory */
    s->kind = S_BADPART;
    s->loc = s->text_loc = kw->loc;
    s->kw = kind_word(p, kw);
    if (s->kw)
        push(p, out, s);
}

/* statement -> title | let | ground | include | block | use | expect | rule | part */
static void parse_statement(parser *p, stmt_list *out, ls_stmt *block)
{
    ls_token kw = p->tok;
    ls_stmt *s = NULL;
    if (kw.kind != T_IDENT) {
        expected(p, "a statement (a part kind or a keyword)");
        skip_line(p);
        return;
    }
    if (is_word(&kw, "title")) {
        s = new_stmt(p, S_TITLE);
        advance(p);
        if (p->tok.kind != T_STRING) {
            expected(p, "a quoted title");
            s = NULL;
        } else {
            s->name = tok_str(p, &p->tok);
            advance(p);
        }
        if (s && block) {
            ls_error(p->d, kw.loc, "'title' belongs at the top level, not inside a block");
            s = NULL;
        }
    } else if (is_word(&kw, "let")) {
        s = parse_let(p);
    } else if (is_word(&kw, "param")) {
        /* the earlier spelling: say so, then read the statement as a let so
         * that its name does not cause follow-on errors */
        ls_error(p->d, kw.loc, "'param' is now spelled 'let' (let NAME = VALUE)");
        s = parse_let(p);
    } else if (is_word(&kw, "ground")) {
        s = new_stmt(p, S_GROUND);
        advance(p);
        if (s && !expect_ident(p, "the ground node's name", &s->name, &s->name_loc))
            s = NULL;
        if (s && block) {
            ls_error(p->d, kw.loc, "'ground' belongs at the top level; inside a block, write 'ground' as a node name");
            s = NULL;
        }
    } else if (is_word(&kw, "include")) {
        parse_include(p, out, block);
        return;
    } else if (is_word(&kw, "block")) {
        if (block) {
            int line, col;
            ls_loc_linecol(p->d, block->loc.file, block->loc.start, &line, &col);
            ls_error(p->d, kw.loc, "blocks cannot be defined inside a block ('%s' opened at line %d)",
                     block->name, line);
            skip_line(p);
            return;
        }
        s = parse_block(p, out);
        if (s) {
            if (!end_of_statement(p))
                skip_line(p);
            s->text_loc = span(s->loc, p->tok.loc);
            s->text_loc.end = p->tok.loc.start;
            stmt_list body = {0};
            parse_lines(p, &body, s);
            if (body.n) { /* an empty body stays NULL */
                s->body = ls_arena_alloc(p->sa, (size_t)body.n * sizeof *s->body);
                if (s->body)
                    memcpy(s->body, body.v, (size_t)body.n * sizeof *body.v);
            }
            s->nbody = s->body ? body.n : 0; /* out of memory: the arena is marked failed */
            free(body.v);
            push(p, out, s);
            return;
        }
    } else if (is_word(&kw, "use")) {
        s = parse_use(p);
    } else if (is_word(&kw, "expect")) {
        s = parse_expect(p);
    } else if (is_word(&kw, "rule")) {
        s = parse_rule(p);
    } else if (is_word(&kw, "end")) {
        ls_error(p->d, kw.loc, "'end' without a 'block' to close");
        advance(p);
    } else if ((s = simple_part(p, block)) == NULL) {
        s = parse_part(p);
        if (!s || !end_of_statement(p)) {
            /* Its syntax error is reported; the elaborator still hears of its
             * kind word, so an unknown one is named too. */
            broken_part(p, out, &kw);
            s = NULL;
        }
    }
    if (s && end_of_statement(p)) {
        if (ls_stmt_kind(s) != S_BRIEF) /* a brief has its end */
            s->text_loc = (ls_loc){kw.loc.file, kw.loc.start, p->tok.loc.start};
        push(p, out, s);
    }
    skip_line(p);
}

/* lines -> {NEWLINE | statement NEWLINE}   up to EOF, or 'end' inside a block */
static void parse_lines(parser *p, stmt_list *out, ls_stmt *block)
{
    for (;;) {
        if (p->tok.kind == T_NEWLINE) {
            advance(p);
            continue;
        }
        if (p->tok.kind == T_EOF) {
            if (block && block->loc.file == p->lx.file) {
                int line, col;
                ls_loc_linecol(p->d, block->loc.file, block->loc.start, &line, &col);
                ls_error(p->d, p->tok.loc, "'end' expected to close 'block %s' at line %d", block->name, line);
            }
            return;
        }
        if (block && is_word(&p->tok, "end")) {
            if (p->lx.file != block->loc.file) {
                /* An included file cannot close a block opened outside it. */
                ls_error(p->d, p->tok.loc, "an included file cannot end a block opened outside it ('%s')",
                         block->name);
                skip_line(p);
                continue;
            }
            advance(p);
            if (!end_of_statement(p))
                skip_line(p);
            return;
        }
        parse_statement(p, out, block);
    }
}

/* ---- settings from outside the file ------------------------------------------------- */

int ls_parse_setting(ls_diags *d, const char *text, ls_setting *out)
{
    const char *eq = text ? strchr(text, '=') : NULL;
    if (!eq || eq == text) {
        ls_error(d, LS_NOLOC, "a setting takes NAME=VALUE, got '%s'", text ? text : "(null)");
        return -1;
    }
    size_t nlen = (size_t)(eq - text), len = strlen(text);
    out->name = ls_arena_strndup(d->arena, text, nlen);
    int id = ls_sources_add(d, "--set", text, (unsigned)len);
    if (id < 0) {
        ls_error(d, LS_NOLOC, "out of memory reading --set '%s' (%zu bytes)", text, len + 1);
        return -1;
    }
    if (ls_sources_check_utf8(d, id) > 0)
        return -1;
    out->value = ls_parse_expr_at(d, id, (unsigned)nlen + 1, false);
    out->loc = (ls_loc){id, 0, (unsigned)nlen};
    out->used = false;
    return out->name && out->value ? 0 : -1;
}

/* ---- files and includes ------------------------------------------------- */

char *ls_read_file(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        return NULL;
    char *buf = ls_read_stream(f, len);
    int err = errno;
    fclose(f);
    errno = err;
    return buf;
}

char *ls_read_stream(FILE *f, size_t *len)
{
    /* A regular file's size is known: one buffer one byte larger, so the read
     * ends without growing it (a file that grows meanwhile still fits). */
    size_t cap = 1 << 16, n = 0;
    struct stat st;
    if (fstat(fileno(f), &st) == 0 && S_ISREG(st.st_mode) && st.st_size > 0) {
        if ((uintmax_t)st.st_size >= LS_MAX_FILE_BYTES) {
            errno = EFBIG;
            return NULL;
        }
        cap = (size_t)st.st_size + 1;
    }
    char *buf = malloc(cap + 1);
    while (buf) {
        size_t r = fread(buf + n, 1, cap - n, f);
        n += r;
        if (r == 0)
            break;
        if (n == cap) {
            if (cap >= LS_MAX_FILE_BYTES) {
                free(buf);
                buf = NULL;
                errno = EFBIG;
                break;
            }
            char *b = realloc(buf, cap * 2 + 1);
            if (!b) {
                free(buf);
                buf = NULL;
                break;
            }
            buf = b;
            cap *= 2;
        }
    }
    int err = ferror(f) ? errno : 0;
    if (buf && err) {
        free(buf);
        errno = err;
        return NULL;
    }
    if (buf) {
        buf[n] = 0;
        *len = n;
    }
    return buf;
}

/* A file's text, NUL-terminated: a regular file is read at its size into the
 * arena `into` (the diagnostics' arena, where the text stays for the
 * messages: read once, never copied; a large one gets huge pages), anything
 * else (or a file that changes size meanwhile) by ls_read_file into *heap,
 * which the caller copies into the arena and frees.  NULL (errno set) when the
 * file cannot be read. */
static char *load_text(ls_arena *into, const char *path, size_t *len, char **heap)
{
    *heap = NULL;
    FILE *f = fopen(path, "rb");
    if (!f)
        return NULL;
    struct stat st;
    if (fstat(fileno(f), &st) == 0 && S_ISREG(st.st_mode) && (uintmax_t)st.st_size < LS_MAX_FILE_BYTES) {
        size_t want = (size_t)st.st_size;
        char *buf = ls_arena_alloc_bytes(into, want + 1);
        size_t n = buf ? fread(buf, 1, want + 1, f) : 0;
        if (buf && n == want && !ferror(f)) {
            fclose(f);
            buf[n] = 0;
            *len = n;
            return buf;
        }
    }
    fclose(f);
    return *heap = ls_read_file(path, len);
}

static const char *dir_of(ls_arena *a, const char *path)
{
    const char *slash = strrchr(path, '/');
    if (!slash)
        return "";
    return ls_arena_strndup(a, path, (size_t)(slash - path + 1));
}

/* Parse a registered file's statements into out. */
static void parse_registered(parser *outer, int file, const char *dir, inc_frame *frames, int depth,
                             stmt_list *out, ls_stmt *block)
{
    parser p;
    memset(&p, 0, sizeof p);
    p.d = outer->d;
    p.a = outer->a;
    p.sa = outer->sa;
    p.dir = dir;
    p.incs = frames;
    p.general_only = outer->general_only;
    p.nodes = outer->nodes;
    p.inc_depth = depth;
    ls_lex_init(&p.lx, p.d, file);
    advance(&p);
    parse_lines(&p, out, block);
    if (block && p.tok.kind != T_EOF) {
        /* 'end' inside an included file closed the including file's block */
        ls_error(p.d, p.tok.loc, "an included file cannot end a block opened outside it");
    }
}

/* Whether the file whose canonical path is `real` (written `name`, at sloc)
 * is already being read by an including file: then reported, naming the
 * whole chain outermost first (a -> b -> a). */
static bool include_cycle(parser *p, const char *name, const char *real, ls_loc sloc)
{
    for (inc_frame *f = p->incs; f; f = f->up) {
        if (strcmp(f->real, real) != 0)
            continue;
        char chain[600];
        snprintf(chain, sizeof chain, "'%s'", name);
        for (inc_frame *g = p->incs; g; g = g->up) {
            char tmp[600];
            snprintf(tmp, sizeof tmp, "'%.200s' -> %.380s", g->shown, chain); /* truncated, never overflowing */
            memcpy(chain, tmp, sizeof chain);
        }
        ls_error(p->d, sloc, "include cycle: %s (a file cannot include itself, directly or through others)", chain);
        return true;
    }
    return false;
}

/* include -> 'include' STRING */
static void parse_include(parser *p, stmt_list *out, ls_stmt *block)
{
    ls_loc kwloc = p->tok.loc;
    advance(p);
    if (p->tok.kind != T_STRING) {
        expected(p, "a quoted file name");
        skip_line(p);
        return;
    }
    ls_loc sloc = p->tok.loc;
    char *name = tok_str(p, &p->tok);
    advance(p);
    if (!end_of_statement(p)) {
        skip_line(p);
        return;
    }
    (void)kwloc;
    if (p->inc_depth + 1 > LS_MAX_INCLUDE_DEPTH) {
        ls_error(p->d, sloc, "includes nested more than %d deep", LS_MAX_INCLUDE_DEPTH);
        return;
    }
    const char *path = name[0] == '/' ? name : ls_arena_printf(p->a, "%s%s", p->dir, name);
    char real[PATH_MAX];
    if (!realpath(path, real)) {
        ls_error(p->d, sloc, "cannot open included file '%s': %s", path, strerror(errno));
        return;
    }
    if (include_cycle(p, name, real, sloc))
        return;
    struct stat st;
    if (stat(real, &st) == 0 && !S_ISREG(st.st_mode)) {
        /* a device or a pipe could block or never end (/dev/zero, a fifo) */
        ls_error(p->d, sloc, "included file '%s' is not a regular file", path);
        return;
    }
    size_t len = 0;
    char *heap, *text = load_text(p->d->arena, path, &len, &heap);
    if (!text) {
        ls_error(p->d, sloc, "cannot read included file '%s': %s", path, strerror(errno));
        return;
    }
    int id = len < UINT_MAX ? add_text(p->d, path, text, len, !heap) : -1;
    free(heap);
    if (id < 0) {
        ls_error(p->d, sloc, "out of memory reading '%s'", path);
        return;
    }
    inc_frame fr = {ls_arena_strdup(p->a, real), name, p->incs};
    parse_registered(p, id, dir_of(p->a, path), &fr, p->inc_depth + 1, out, block);
}

static int parse_top(ls_diags *d, int file, const char *path, ls_program *prog, bool general_only)
{
    parser p;
    memset(&p, 0, sizeof p);
    p.general_only = general_only;
    p.d = d;
    p.a = d->arena;
    p.sa = prog->syntax ? prog->syntax : d->arena;
    int errors0 = d->errors;
    char real[PATH_MAX];
    inc_frame fr = {NULL, path, NULL};
    if (realpath(path, real))
        fr.real = ls_arena_strdup(p.a, real);
    else
        fr.real = "";
    /* The program's list goes straight into the arena, sized for the most
     * statements the file can hold: one a line, and one per 6 bytes (the
     * shortest, `led d`, and its newline), so the list is never much larger
     * than the text.  Includes can make it outgrow that (as would a
     * miscount: it is only a first size); it then goes on on the heap and is
     * copied into the arena at the end. */
    stmt_list out = {0};
    size_t most = d->files[file].len / 6 + 1;
    int cap = (size_t)d->files[file].nlines < most ? d->files[file].nlines : (int)most;
    out.v = ls_arena_alloc(p.sa, (size_t)cap * sizeof *out.v);
    if (out.v) {
        out.cap = cap;
        out.a = p.sa;
    }
    ls_node_names nodes;
    ls_node_names_init(&nodes);
    p.nodes = &nodes;
    parse_registered(&p, file, dir_of(p.a, path), &fr, 0, &out, NULL);
    prog->node_keys = nodes.n;
    ls_node_names_free(&nodes);
    if (out.a) {
        prog->stmts = out.v;
    } else {
        prog->stmts = ls_arena_alloc(p.sa, (size_t)(out.n ? out.n : 1) * sizeof *prog->stmts);
        if (prog->stmts && out.n) /* an empty file has no array to copy */
            memcpy(prog->stmts, out.v, (size_t)out.n * sizeof *out.v);
        free(out.v);
    }
    prog->n = prog->stmts ? out.n : 0;
    if (p.sa->failed) /* the callers look at the diagnostics' arena for out of memory */
        p.a->failed = 1;
    return d->errors - errors0;
}

/* Register a circuit text under `name`: a UTF-8 byte-order mark at its start
 * is skipped (editors on some systems write one), and bytes that are not
 * UTF-8 are reported and replaced (ls_sources_check_utf8).  Its file id, or
 * -1 (nothing reported: the caller says why).  The text is copied into the
 * diagnostics' arena, or kept in place when it was read there (in_arena:
 * load_text without a heap copy). */
static int add_text(ls_diags *d, const char *name, const char *text, size_t len, bool in_arena)
{
    if (len >= 3 && memcmp(text, "\xEF\xBB\xBF", 3) == 0) {
        text += 3;
        len -= 3;
    }
    int id = in_arena ? ls_sources_adopt(d, name, text, (unsigned)len) : ls_sources_add(d, name, text, (unsigned)len);
    if (id >= 0)
        ls_sources_check_utf8(d, id);
    return id;
}

/* Register a top-level text (copied unless in_arena: see add_text); its file id, or -1 after reporting why not. */
static int register_text(ls_diags *d, const char *name, const char *text, size_t len, bool in_arena)
{
    if (len >= LS_MAX_FILE_BYTES) {
        ls_error(d, LS_NOLOC, "'%s' is larger than %u bytes", name, LS_MAX_FILE_BYTES);
        return -1;
    }
    int id = add_text(d, name, text, len, in_arena);
    if (id < 0)
        ls_error(d, LS_NOLOC, "out of memory reading '%s'", name);
    return id;
}

/* ls_parse_string_to, with or without the fast path for simple part
 * statements. */
static int parse_text(ls_diags *d, const char *name, const char *text, size_t len, ls_arena *syntax,
                      ls_program *prog, bool general_only)
{
    *prog = (ls_program){.syntax = syntax};
    int errors0 = d->errors; /* counting the text's UTF-8 errors too */
    int id = register_text(d, name, text, len, false);
    if (id < 0)
        return 1;
    parse_top(d, id, name, prog, general_only);
    return d->errors - errors0;
}

int ls_parse_string_to(ls_diags *d, const char *name, const char *text, size_t len, ls_arena *syntax,
                       ls_program *prog)
{
    return parse_text(d, name, text, len, syntax, prog, false);
}

int ls_parse_string_general(ls_diags *d, const char *name, const char *text, size_t len, ls_program *prog)
{
    return parse_text(d, name, text, len, NULL, prog, true);
}

int ls_parse_file_to(ls_diags *d, const char *path, ls_arena *syntax, ls_program *prog)
{
    *prog = (ls_program){.syntax = syntax};
    size_t len = 0;
    char *heap, *text = load_text(d->arena, path, &len, &heap);
    if (!text) {
        ls_error(d, LS_NOLOC, "cannot read '%s': %s", path, strerror(errno));
        return 1;
    }
    int errors0 = d->errors; /* counting the text's UTF-8 errors too */
    int id = register_text(d, path, text, len, !heap);
    free(heap); /* before parsing, so the tree can reuse the pages */
    if (id < 0)
        return 1;
    parse_top(d, id, path, prog, false);
    return d->errors - errors0;
}

int ls_parse_string(ls_diags *d, const char *name, const char *text, size_t len, ls_program *prog)
{
    return ls_parse_string_to(d, name, text, len, NULL, prog);
}

int ls_parse_file(ls_diags *d, const char *path, ls_program *prog)
{
    return ls_parse_file_to(d, path, NULL, prog);
}

ls_expr *ls_parse_expr_at(ls_diags *d, int file, unsigned offset, bool in_expect)
{
    parser p;
    memset(&p, 0, sizeof p);
    p.d = d;
    p.a = p.sa = d->arena;
    p.in_expect = in_expect;
    ls_lex_init(&p.lx, d, file);
    p.lx.pos = offset;
    advance(&p);
    int e0 = d->errors;
    ls_expr *e = parse_sum(&p);
    if (e && p.tok.kind != T_EOF && p.tok.kind != T_NEWLINE) {
        expected(&p, "end of the expression");
        return NULL;
    }
    return d->errors == e0 ? e : NULL;
}

ls_expr *ls_parse_expr_string(ls_diags *d, const char *name, const char *text, bool in_expect)
{
    int id = ls_sources_add(d, name, text, (unsigned)strlen(text));
    if (id < 0) {
        ls_error(d, LS_NOLOC, "out of memory reading %s '%s' (%zu bytes)", name, text, strlen(text) + 1);
        return NULL;
    }
    if (ls_sources_check_utf8(d, id) > 0) /* command-line text must be UTF-8 too */
        return NULL;
    return ls_parse_expr_at(d, id, 0, in_expect);
}
