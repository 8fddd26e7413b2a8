/* ast.h — syntax tree of a circuit file: statements and expressions. */
#ifndef LS_AST_H
#define LS_AST_H

#include "diag.h"
#include "units.h"

typedef enum ls_ekind { E_NUM, E_NAME, E_NEG, E_BIN, E_CALL } ls_ekind;

typedef enum ls_func {
    F_SQRT, F_ABS, F_MIN, F_MAX, F_EXP, F_LN, F_LOG10, F_COUNT
} ls_func;

typedef struct ls_expr {
    ls_ekind kind;
    ls_loc loc;             /* the whole expression; for E_BIN the operator is op_loc */
    ls_loc op_loc;
    double num;             /* E_NUM */
    ls_dims dims;           /* E_NUM */
    const char *name;       /* E_NAME (NUL-terminated, in the arena) */
    int op;                 /* E_BIN: an ls_tok; E_CALL: an ls_func */
    struct ls_expr *a, *b;  /* operands (E_NEG uses a) */
    struct ls_expr **args;  /* E_CALL */
    int nargs;
} ls_expr;

typedef struct ls_opt {
    const char *name;
    ls_loc name_loc;
    ls_expr *value;         /* NULL for `NAME=` with nothing after it */
    ls_expr *hi;            /* non-NULL for a range LO..HI (value is LO) */
} ls_opt;

typedef enum ls_skind {
    S_TITLE, S_PARAM, S_GROUND, S_PART, S_BLOCK, S_USE, S_EXPECT, S_RULE
} ls_skind;

typedef enum ls_cmp { CMP_EQ, CMP_LT, CMP_LE, CMP_GT, CMP_GE, CMP_BETWEEN } ls_cmp;

typedef struct ls_stmt {
    ls_skind kind;
    ls_loc loc;             /* the keyword */
    ls_loc text_loc;        /* the whole statement, for reports */
    const char *kw;         /* S_PART: kind keyword; S_USE: block name */
    ls_loc kw_loc;
    const char *name;       /* part / param / ground / block / instance / title text */
    ls_loc name_loc;
    const char *from, *to;  /* S_PART two-terminal */
    ls_loc from_loc, to_loc;
    bool arrow;             /* FROM -> TO given */
    ls_expr *value;         /* S_PART value, S_PARAM value */
    ls_opt *opts;
    int nopts;
    /* S_BLOCK */
    const char **pins;
    ls_loc *pin_locs;
    int npins;
    struct ls_stmt **body;
    int nbody;
    /* S_EXPECT / S_RULE */
    ls_expr *lhs, *rhs, *rhs2, *within;
    ls_cmp cmp;
} ls_stmt;

typedef struct ls_program {
    ls_stmt **stmts;
    int n;
} ls_program;

#endif
