/* formula.h — a quantity of a solved circuit as an exact formula of the parts'
 * values: symbolic nodal analysis with exact rational coefficients (FLINT's
 * multivariate polynomials over Q), fraction-free elimination, common factors
 * cancelled, and a self-check against the solver's value. */
#ifndef LS_FORMULA_H
#define LS_FORMULA_H

#include "analysis/analysis.h"

#define LS_FORMULA_MAX_SYMBOLS 16      /* symbols kept in the formula (gains limited away by --ideal count too) */
#define LS_FORMULA_MAX_UNKNOWNS 40     /* MNA unknowns */
#define LS_FORMULA_MAX_TERMS 4000      /* terms of any polynomial during the elimination */
#define LS_FORMULA_CHAIN 32            /* terms of a printed sum before it is written in groups (the language's depth limit) */
#define LS_FORMULA_WORK 40000000.0     /* term products over the whole computation (about half a second) */
#define LS_FORMULA_RCOND_ILL 1e-11    /* below this the solve warns "ill-conditioned" (analysis.c) */
#define LS_FORMULA_SELF_CHECK_PORTS 1e-9 /* port fields the solver gets from low-rank updates of its
                                           factorization (open, zout, zin, sag, ratio): more rounding */
#define LS_FORMULA_UPDATE_GROWTH 16    /* ... at most this many times the base solve's 4 eps / rcond:
                                          the update's own cancellation (self-check of port fields) */
#define LS_FORMULA_SELF_CHECK 1e-12    /* relative: formula at the file's numbers against the solver
                                          (or the solver's own error bound, 4 eps / rcond, when larger) */

typedef struct ls_formula_req {
    const char *quantity;    /* the quantity as the user wrote it, for messages */
    const char *symbols;     /* "a,b,c": only these stay symbols; NULL: the default set */
    bool ideal;              /* every finite op-amp gain -> infinity */
} ls_formula_req;

typedef struct ls_formula_result {
    char *expression;        /* in the language's expression syntax; malloc'd */
    char *numerator, *denominator;   /* the same split in two (denominator "1" when there is none) */
    char **symbols;          /* the symbols left in the expression, in order of first mention */
    int nsymbols;
    char **notes;            /* parts taken as numbers at the operating point, and why */
    int nnotes;
    bool ideal;
    double value;            /* the formula at the file's numbers */
    double solve;            /* the solver's value of the quantity */
    double difference;       /* |value - solve| relative to the size of what the solver combined (formula.c) */
    double bound;            /* the self-check's bound: 1e-12, or the solver's error bound eps/rcond when larger */
    double finite_value;     /* --ideal: the formula before the limit, at the file's numbers (checked); else = value */
    int opamps_limited;      /* --ideal: finite-gain op-amps taken to infinite gain */
} ls_formula_result;

/* The exact formula of the bound quantity q of the solved circuit op.
 * prog is the circuit's syntax tree (part values are read from it so that
 * `4k7`, `1%` and expressions of lets stay exact and lets stay symbols) or
 * NULL (values then come from the netlist's numbers).  Errors and notes go to
 * d.  Returns LS_DONE, LS_BAD_REQUEST (bad --symbols, a quantity with no
 * formula, or a circuit past the size limits), LS_UNSOLVABLE (singular
 * system, or the self-check failed) or LS_NO_MEMORY (not always with an
 * error in d).  The caller frees res with ls_formula_result_free, whatever
 * the result. */
ls_outcome ls_formula(ls_op *op, const ls_program *prog, const ls_q *q, const ls_formula_req *req,
                      ls_formula_result *res, ls_diags *d);
void ls_formula_result_free(ls_formula_result *res);

#endif
