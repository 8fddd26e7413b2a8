/* quantity.h — the one walk over a bound quantity's tree (netlist.h's ls_q).
 *
 * Every evaluator of a quantity — its value in double (ls_q_eval), its value
 * with the derivatives by every part (sens.c, dual numbers), its exact
 * formula (formula.c, fractions of polynomials), the questions formula asks
 * of a quantity's shape — is a number domain: the operations one value
 * takes, handed to ls_q_walk, which owns the switch over the node kinds
 * (Q_CONST, Q_NODE, Q_PROP, Q_NEG, Q_BIN, Q_CALL).  A new node kind is added
 * here once, with one more operation in ls_qdomain that every domain must
 * fill (ls_q_walk asserts it), so no evaluator can forget it. */
#ifndef LS_QUANTITY_H
#define LS_QUANTITY_H

#include "netlist/netlist.h"

#include <stddef.h>

/* The most arguments a function call of a quantity has (the parser's limit). */
#define LS_Q_MAX_ARGS 8

/* A number domain.  Every operation returns 0, or a nonzero code of the
 * domain's own that stops the walk and is returned by ls_q_walk (the domain
 * keeps its own error text).  ctx is the domain's state, passed to each. */
typedef struct ls_qdomain {
    size_t size;   /* bytes of one value */
    /* Make *v a value (zeroed memory before), and free what it holds.  NULL:
     * a value holds nothing (plain bytes). */
    int (*init)(void *ctx, void *v);
    void (*clear)(void *ctx, void *v);
    /* May the domain take node q at all?  Asked before its operands are
     * walked, so a domain without, say, functions says why once, at the
     * call, whatever its arguments would have said.  NULL: every node. */
    int (*accepts)(void *ctx, const ls_q *q);
    /* The leaves, into *out: q->value; the voltage of node q->index;
     * property q->prop of part q->index. */
    int (*constant)(void *ctx, const ls_q *q, void *out);
    int (*node)(void *ctx, const ls_q *q, void *out);
    int (*prop)(void *ctx, const ls_q *q, void *out);
    /* The operations, in place: *a = -*a; *a = *a (q->op) *b; *out =
     * q->op(args[0..q->nargs)), args walked in order. */
    int (*neg)(void *ctx, const ls_q *q, void *a);
    int (*binop)(void *ctx, const ls_q *q, void *a, const void *b);
    int (*call)(void *ctx, const ls_q *q, void *const *args, void *out);
} ls_qdomain;

/* Walk q in domain d: *out (made by d->init, or zeroed, by the caller) gets
 * q's value.  Operands are walked left to right, the left one into *out.
 * Returns 0, or the first nonzero code of an operation (d->init's too), or
 * -1 when a value larger than the walk keeps on its stack cannot be
 * allocated (no domain here has one). */
int ls_q_walk(const ls_qdomain *d, void *ctx, const ls_q *q, void *out);

#endif
