/* ast.h — syntax tree of a circuit file: statements and expressions.
 *
 * The tree of a large circuit is millions of nodes, so each node keeps only
 * the fields of its kind: the kind-specific fields share storage (anonymous
 * unions) and a reader must read only the fields its node's kind lists below.
 * Fields outside the unions are valid for every kind, and zero (NULL) where a
 * kind does not set them. */
#ifndef LS_AST_H
#define LS_AST_H

#include <stddef.h>

#include "base/diag.h"
#include "base/units.h"

typedef enum ls_ekind { E_NUM, E_NAME, E_NEG, E_BIN, E_CALL } ls_ekind;

/* The binary operators of the language: a + b, a - b, a * b, a / b, a ^ b and
 * a || b (in parallel: a b / (a + b)).  The syntax tree's own codes, kept by
 * the netlist's quantities too, so no stage past the parser needs tokens. */
typedef enum ls_binop { LS_OP_ADD, LS_OP_SUB, LS_OP_MUL, LS_OP_DIV, LS_OP_POW, LS_OP_PAR } ls_binop;

typedef enum ls_func {
    F_SQRT, F_ABS, F_MIN, F_MAX, F_EXP, F_LN, F_LOG10, F_COUNT
} ls_func;

/* An expression.  It is allocated only as large as its kind needs (see
 * ls_expr_size): never copy one by value, and read only its kind's fields. */
typedef struct ls_expr {
    unsigned char kind;            /* an ls_ekind */
    union {
        ls_dims dims;              /* E_NUM: its unit */
        unsigned char op;          /* E_BIN: an ls_binop; E_CALL: an ls_func */
    };
    ls_loc loc;                    /* the whole expression; for E_BIN the operator is op_loc */
    union {
        double num;                /* E_NUM */
        const char *name;          /* E_NAME (NUL-terminated, in the arena) */
        struct {
            struct ls_expr *a, *b; /* E_NEG: a; E_BIN: a op b */
            ls_loc op_loc;         /* E_BIN */
        };
        struct {
            struct ls_expr **args; /* E_CALL */
            int nargs;
        };
    };
} ls_expr;

/* Bytes an expression of kind k occupies (8-byte multiples). */
static inline size_t ls_expr_size(ls_ekind k)
{
    switch (k) {
    case E_NUM: case E_NAME: case E_NEG: return offsetof(ls_expr, b);
    case E_CALL: return (offsetof(ls_expr, nargs) + sizeof(int) + 7) / 8 * 8;
    default: return sizeof(ls_expr);
    }
}

typedef struct ls_opt {
    const char *name;
    ls_loc name_loc;
    ls_expr *value;         /* NULL for `NAME=` with nothing after it */
    ls_expr *hi;            /* non-NULL for a range LO..HI (value is LO) */
} ls_opt;

typedef enum ls_skind {
    S_TITLE, S_PARAM, S_GROUND, S_PART, S_BLOCK, S_USE, S_EXPECT, S_RULE,
    S_BADPART,  /* a part statement whose words after the kind did not parse (the
                   error is reported): only kw and loc, for the elaborator to
                   name a kind word that is no part kind */
    S_BRIEF     /* a top-level S_PART in its commonest form, kept as an ls_brief */
} ls_skind;

typedef enum ls_cmp { CMP_EQ, CMP_LT, CMP_LE, CMP_GT, CMP_GE, CMP_BETWEEN } ls_cmp;

typedef struct ls_stmt {
    unsigned char kind;     /* an ls_skind */
    unsigned char cmp;      /* S_EXPECT, S_RULE: an ls_cmp */
    bool arrow;             /* S_PART: FROM -> TO given */
    ls_loc loc;             /* the keyword (for S_PART and S_BADPART the kind word) */
    ls_loc text_loc;        /* the whole statement, for reports */
    ls_loc name_loc;
    int nopts;
    const char *name;       /* part / param / ground / block / instance / rule / title text */
    const char *kw;         /* S_PART, S_BADPART: the kind word as written (the parser does not know the
                               kinds: the elaborator looks it up); S_USE: block name */
    ls_expr *value;         /* S_PART value, S_PARAM value */
    ls_opt *opts;           /* S_PART, S_USE, S_BLOCK (params with defaults); NULL when nopts is 0 */
    union {
        struct {            /* S_PART two-terminal (arrow) */
            const char *from, *to;   /* possibly shared with other statements (lang/nodenames.h) */
            ls_loc from_loc, to_loc;
            int from_key, to_key;    /* the names' numbers (1 ..; equal numbers, equal names), 0: none */
        };
        ls_loc kw_loc;      /* S_USE: the block name */
        struct {            /* S_BLOCK; arrays NULL when empty */
            const char **pins;
            ls_loc *pin_locs;
            struct ls_stmt **body;
            int npins, nbody;
        };
        struct {            /* S_EXPECT: all; S_RULE: rhs */
            ls_expr *lhs, *rhs, *rhs2, *within;
        };
    };
} ls_stmt;

/* Byte offsets in an ls_brief, from the kind word's first byte. */
enum { LS_BR_KW_END, LS_BR_NAME, LS_BR_NAME_END, LS_BR_FROM, LS_BR_FROM_END, LS_BR_TO, LS_BR_TO_END, LS_BR_NUM,
       LS_BR_NUM_END, LS_BR_END, LS_BR_OFFSETS };

/* A top-level part statement `KIND NAME FROM -> TO NUMBER` with a plain
 * number and nothing after it (the parser's fast path, lexer.h), kept in 72
 * bytes instead of a statement and its number (152): a grid of a million
 * cells has two million of them, and the tree's memory is written by the
 * parse and read again by the elaboration (docs/performance.md, "Front end,
 * the fifth round").  It holds exactly what the statement holds, so
 * ls_stmt_view gives the same statement the token path builds.  It starts
 * with the kind byte, like ls_stmt: an entry of the program's top-level list
 * whose ls_stmt_kind is S_BRIEF is one of these (never inside a block). */
typedef struct ls_brief {
    unsigned char kind;                 /* S_BRIEF */
    unsigned char off[LS_BR_OFFSETS];   /* LS_BR_*: the words' byte ranges and the statement's end */
    int file;
    unsigned start;                     /* the kind word's first byte */
    const char *kw, *name, *from, *to;  /* as in ls_stmt (kw and the node names possibly shared) */
    double num;                         /* the number's value (no unit) */
    int from_key, to_key;               /* as in ls_stmt */
} ls_brief;
_Static_assert(sizeof(ls_brief) <= 72, "a brief statement stays within 72 bytes (64-bit)");

/* A statement's kind, for any entry of a statement list (an ls_stmt or an
 * ls_brief): read as a byte, since an ls_brief is no ls_stmt. */
static inline ls_skind ls_stmt_kind(const ls_stmt *s) { return (ls_skind)*(const unsigned char *)s; }

/* The ls_brief s is, or NULL when s is a statement. */
static inline const ls_brief *ls_brief_of(const ls_stmt *s)
{
    return ls_stmt_kind(s) == S_BRIEF ? (const ls_brief *)(const void *)s : NULL;
}

/* Room for the statement an ls_brief stands for, and its number. */
typedef struct ls_stmt_buf {
    ls_stmt s;
    ls_expr num;
} ls_stmt_buf;

/* The statement s is: s itself, or for an S_BRIEF the S_PART it stands for,
 * built in *buf (valid while *buf is). */
static inline const ls_stmt *ls_stmt_view(const ls_stmt *s, ls_stmt_buf *buf)
{
    const ls_brief *b = ls_brief_of(s);
    if (!b)
        return s;
    ls_stmt *t = &buf->s;
    ls_expr *e = &buf->num;
    int f = b->file;
    unsigned at = b->start;
    const unsigned char *o = b->off;
    e->kind = E_NUM;
    e->dims = LS_FREE;
    e->loc = (ls_loc){f, at + o[LS_BR_NUM], at + o[LS_BR_NUM_END]};
    e->num = b->num;
    t->kind = S_PART;
    t->cmp = 0;
    t->arrow = true;
    t->loc = (ls_loc){f, at, at + o[LS_BR_KW_END]};
    t->text_loc = (ls_loc){f, at, at + o[LS_BR_END]};
    t->name_loc = (ls_loc){f, at + o[LS_BR_NAME], at + o[LS_BR_NAME_END]};
    t->nopts = 0;
    t->name = b->name;
    t->kw = b->kw;
    t->value = e;
    t->opts = NULL;
    t->from = b->from;
    t->to = b->to;
    t->from_loc = (ls_loc){f, at + o[LS_BR_FROM], at + o[LS_BR_FROM_END]};
    t->to_loc = (ls_loc){f, at + o[LS_BR_TO], at + o[LS_BR_TO_END]};
    t->from_key = b->from_key;
    t->to_key = b->to_key;
    return t;
}

typedef struct ls_program {
    /* The top-level statements, in order; an entry may be an ls_brief (read
     * each with ls_stmt_kind, and ls_stmt_view before any other field). */
    ls_stmt **stmts;
    int n;
    /* Where the tree's structures (statements, expressions, lists) are:
     * an arena of the caller's (ls_parse_file_to), or NULL for the
     * diagnostics' arena.  Names and text always go to the diagnostics'
     * arena, and the netlist keeps no pointer into the tree, so the caller
     * may free this arena once the program is elaborated for the last time. */
    ls_arena *syntax;
    /* Numbers the parser gave node names (ls_stmt.from_key, to_key: 1 ..
     * node_keys); 0 for a program whose statements carry none. */
    int node_keys;
} ls_program;

#endif
