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
    S_BADPART   /* a part statement whose words after the kind did not parse (the
                   error is reported): only kw and loc, for the elaborator to
                   name a kind word that is no part kind */
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

typedef struct ls_program {
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
