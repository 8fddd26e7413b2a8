/* quantity.c — the one walk over a bound quantity's tree (see quantity.h). */
#include "analysis/quantity.h"

#include <assert.h>
#include <stdalign.h>
#include <stdlib.h>
#include <string.h>

/* Values up to this size live on the walk's stack (a double, a dual number,
 * a fraction of two polynomials); larger ones are allocated. */
#define LOCAL_BYTES 192

/* A fresh value of domain d in *v (zeroed first).  0, or d->init's code. */
static int make(const ls_qdomain *d, void *ctx, void *v)
{
    memset(v, 0, d->size);
    return d->init ? d->init(ctx, v) : 0;
}

static void unmake(const ls_qdomain *d, void *ctx, void *v)
{
    if (d->clear)
        d->clear(ctx, v);
}

/* q->a (op) q->b: the left operand into out, the right one into a value of
 * this frame. */
static int walk_bin(const ls_qdomain *d, void *ctx, const ls_q *q, void *out)
{
    alignas(max_align_t) unsigned char local[LOCAL_BYTES];
    void *b = d->size <= sizeof local ? (void *)local : malloc(d->size);
    if (!b)
        return -1;
    int code = make(d, ctx, b);
    if (code == 0)
        code = ls_q_walk(d, ctx, q->a, out);
    if (code == 0)
        code = ls_q_walk(d, ctx, q->b, b);
    if (code == 0)
        code = d->binop(ctx, q, out, b);
    unmake(d, ctx, b);
    if (b != (void *)local)
        free(b);
    return code;
}

/* A function of q->nargs arguments, walked in order into values of this
 * frame (a frame of its own, so the other nodes' frames stay small). */
static int walk_call(const ls_qdomain *d, void *ctx, const ls_q *q, void *out)
{
    assert(q->nargs >= 0 && q->nargs <= LS_Q_MAX_ARGS); /* the parser's limit */
    alignas(max_align_t) unsigned char local[LS_Q_MAX_ARGS * LOCAL_BYTES];
    size_t bytes = (size_t)(q->nargs ? q->nargs : 1) * d->size;
    unsigned char *mem = bytes <= sizeof local ? local : malloc(bytes);
    if (!mem)
        return -1;
    void *args[LS_Q_MAX_ARGS];
    int made = 0, code = 0;
    for (; made < q->nargs && code == 0; made++) {
        args[made] = mem + (size_t)made * d->size;
        code = make(d, ctx, args[made]);
        if (code == 0)
            code = ls_q_walk(d, ctx, q->args[made], args[made]);
    }
    if (code == 0)
        code = d->call(ctx, q, args, out);
    for (int i = 0; i < made; i++)
        unmake(d, ctx, args[i]);
    if (mem != local)
        free(mem);
    return code;
}

/* (quantity.h) */
int ls_q_walk(const ls_qdomain *d, void *ctx, const ls_q *q, void *out)
{
    assert(d->constant && d->node && d->prop && d->neg && d->binop && d->call);
    int code = d->accepts ? d->accepts(ctx, q) : 0;
    if (code != 0)
        return code;
    switch (q->kind) {
    case Q_CONST: return d->constant(ctx, q, out);
    case Q_NODE: return d->node(ctx, q, out);
    case Q_PROP: return d->prop(ctx, q, out);
    case Q_NEG:
        code = ls_q_walk(d, ctx, q->a, out);
        return code == 0 ? d->neg(ctx, q, out) : code;
    case Q_BIN: return walk_bin(d, ctx, q, out);
    case Q_CALL: return walk_call(d, ctx, q, out);
    }
    assert(!"a bound quantity of no known kind");
    return -1;
}
