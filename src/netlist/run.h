/* run.h — what one solve changes, kept beside an immutable netlist.
 *
 * The netlist is fixed once elaborated.  A solve's part states (a junction's
 * linearization point, an op-amp's limit in force, the ramp of the sources)
 * and the part values a study changes (a tol trial, a fit candidate, a sweep
 * point) live in an ls_run, owned by the operating point (analysis.h) and
 * handed to the stamps with the netlist, so several solves — the threads of
 * `tol` — share one netlist. */
#ifndef LS_RUN_H
#define LS_RUN_H

#include "netlist/netlist.h"

#include <assert.h>

typedef struct ls_run {
    const ls_netlist *nl;
    ls_part_run *state;    /* nl->nstates: part p's is state[p->slot] */
    double *value;         /* nl->nparts: each part's main value in this run; NULL until
                              ls_run_set_value first changes one (then the netlist's) */
} ls_run;

/* A run of nl with every state cleared and the netlist's values.  0, or -1
 * when out of memory (r is then empty and may be freed). */
int ls_run_init(ls_run *r, const ls_netlist *nl);
/* Copy src's states and values into dst (both runs of one netlist, or of
 * records of it that share its parts).  0, or
 * -1 when out of memory (dst's values are then the netlist's). */
int ls_run_copy(ls_run *dst, const ls_run *src);
void ls_run_free(ls_run *r);

/* Set part `part`'s main value for the solves of this run (a trial, a
 * candidate, a sweep point); the netlist keeps its own.  Re-solve after it
 * (ls_op_resolve).  0, or -1 when out of memory (nothing changed). */
int ls_run_set_value(ls_run *r, int part, double value);
/* Put every value back to the netlist's. */
void ls_run_reset_values(ls_run *r);

/* Part p's analysis state in run r (p must be a part of r's netlist whose
 * kind keeps one: ls_kind.has_run). */
static inline ls_part_run *ls_run_state(const ls_run *r, const ls_part *p)
{
    assert(p->slot >= 0 && p->slot < r->nl->nstates);
    return &r->state[p->slot];
}

/* Part p's main value in run r. */
static inline double ls_run_value(const ls_run *r, const ls_part *p)
{
    if (!r->value)
        return p->value;
    assert(p >= r->nl->parts && p < r->nl->parts + r->nl->nparts);
    return r->value[p - r->nl->parts];
}

#endif
