/* letdeps.h — what one top-level let reaches, recorded while the circuit is
 * elaborated, so that a sweep can set the let to a new value and recompute
 * only the values that depend on it (directly or through other lets and
 * block parameters), without parsing or elaborating again.
 *
 * The elaborator (elab.c) records every value it evaluates from an
 * expression that reads the let: each as a small postfix program over the
 * circuit's lets, with where the result goes (a let, a part's main value or
 * option, an end of a range, a port's budget, a constant of a bound
 * quantity) and the checks the elaborator made on it.  A let that reaches
 * anything that is not a plain value (a word option such as a switch's
 * state, a free= range, a value rounded by snap=) marks the record
 * `structural`: such a sweep elaborates every point afresh.
 *
 * Replaying the record for a new value of the let is all that changes per
 * point (ls_sweep_set_value in analysis/sweep.c): into the sweeper's own
 * copy of the lets and its run (run.h), never into the netlist it was made
 * with, which stays as elaborated.  The targets below name where each value
 * sits in the netlist; the run keeps its own value for each.  A value that fails the elaborator's checks
 * at some point (a resistance of zero, a division by zero) makes the apply
 * fail; the caller then elaborates that point afresh, which reports it. */
#ifndef LS_LETDEPS_H
#define LS_LETDEPS_H

#include "netlist/netlist.h"

/* Where a recomputed value goes. */
typedef enum ls_ld_kind {
    LD_PARAM,      /* nl->params[target].value (a let or a block parameter) */
    LD_VALUE,      /* nl->parts[target].value (the positional value) */
    LD_OPT,        /* nl->parts[target].opt[slot] (and .value when it is the main value) */
    LD_BUDGET,     /* nl->budgets[target].value */
    LD_RANGE,      /* nl->parts[target].range[slot / 2][slot % 2].volts, times sign */
    LD_QCONST      /* a bound quantity's constant q: let `target`'s value (a let inside a check) */
} ls_ld_kind;

/* One step of a value's program (postfix, evaluated on a small stack). */
typedef struct ls_ld_code {
    unsigned char op;  /* LDC_* */
    unsigned char nargs;
    int arg;           /* LDC_PARAM: param index; LDC_BIN: ls_tok; LDC_CALL: ls_func */
    double num;        /* LDC_NUM */
} ls_ld_code;

enum { LDC_NUM, LDC_PARAM, LDC_NEG, LDC_BIN, LDC_CALL };

/* Deepest program a replay evaluates; deeper ones are recorded as
 * structural (ls_letdeps_end), so a replay never runs out of stack. */
#define LS_LD_STACK 64

typedef struct ls_ld_entry {
    ls_ld_kind kind;
    int target;
    int slot;
    unsigned flags;    /* the OPTF_* checks the elaborator made on the value */
    bool is_main;      /* LD_OPT: the option is the part's main value */
    bool is_tol;       /* LD_OPT: tol=, a fraction below 1 */
    double sign;       /* LD_RANGE: -1 for NODE - X, else 1 */
    const ls_q *q;     /* LD_QCONST */
    int code, ncode;   /* its program: ls_letdeps.code[code .. code + ncode - 1] */
} ls_ld_entry;

typedef struct ls_letdeps {
    const char *let;       /* the top-level let followed (the caller's string) */
    int root;              /* its index in nl->params, -1 until elaborated */
    unsigned char *dep;    /* per let index: 1 when its value depends on `let` */
    int ndep;
    ls_ld_entry *e;
    int n, cap;
    ls_ld_code *code;
    int ncode, cap_code;
    int *parts;            /* the parts whose values it reaches, each once, in order */
    int nparts, cap_parts;
    bool structural;       /* the let reaches more than values: elaborate per point */
    char why[160];         /* with structural: what it reaches */
    bool nomem;            /* the record is incomplete for want of memory: do not use it */
} ls_letdeps;

/* Start a record for the top-level let named `let` (kept as a pointer). */
void ls_letdeps_init(ls_letdeps *d, const char *let);
/* Free what the record holds (not d itself). */
void ls_letdeps_free(ls_letdeps *d);

/* Is let index i reached by the followed let? */
bool ls_letdeps_reaches(const ls_letdeps *d, int param);
/* Mark let index i as reached. */
void ls_letdeps_mark(ls_letdeps *d, int param);
/* Say the followed let reaches something other than a value (why: a short
 * phrase, "the state= of switch 's1'"); the first reason is kept. */
void ls_letdeps_structural(ls_letdeps *d, const char *why);

/* Recording, by the elaborator: begin an entry (its program follows through
 * ls_letdeps_emit), then fill in its fields through ls_letdeps_entry.
 * Returns the entry's index, or -1 when out of memory (d->nomem set). */
int ls_letdeps_begin(ls_letdeps *d, ls_ld_kind kind, int target);
void ls_letdeps_emit(ls_letdeps *d, int op, int arg, int nargs, double num);
/* Close the entry opened by ls_letdeps_begin. */
void ls_letdeps_end(ls_letdeps *d, int entry);
/* The entry at index i (valid until the next begin). */
ls_ld_entry *ls_letdeps_entry(ls_letdeps *d, int i);


#endif
