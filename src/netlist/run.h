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

/* What a study sets in a run beyond the parts' main values: everything a
 * let can reach (a sweep point), so the netlist stays as elaborated.  Each
 * table is a copy of the netlist's, made when the study first changes one of
 * its entries. */
typedef struct ls_run_set {
    int *row;                        /* nl->nparts: the part's row in opt/range, -1 for the netlist's */
    double (*opt)[LS_MAX_OPTS];      /* a part's options (read only where ls_part_has) */
    ls_level (*range)[LS_MAX_RANGES][2];  /* its range ends (rails=, cm=), for kinds with ranges */
    int nrows, cap_rows;
    double *budget;                  /* nl->nbudgets: the ports' budget= values, in their units */
    const ls_q **q;                  /* constants of bound quantities set (a let inside an expect) */
    double *qvalue;                  /* their values */
    int nq, cap_q;
} ls_run_set;

typedef struct ls_run {
    const ls_netlist *nl;
    ls_part_run *state;    /* nl->nstates: part p's is state[p->slot] */
    double *value;         /* nl->nparts: each part's main value in this run; NULL until
                              ls_run_set_value first changes one (then the netlist's) */
    ls_run_set *set;       /* options, range ends, budgets and quantity constants a study
                              set (ls_run_set_opt, ...); NULL: all the netlist's */
} ls_run;

/* A run of nl with every state cleared and the netlist's values.  0, or -1
 * when out of memory (r is then empty and may be freed). */
int ls_run_init(ls_run *r, const ls_netlist *nl);
/* Copy src's states and values into dst (both runs of one netlist, or of
 * records of it that share its parts).  0, or
 * -1 when out of memory (dst's values are then the netlist's). */
int ls_run_copy(ls_run *dst, const ls_run *src);
void ls_run_free(ls_run *r);
/* Copy what a study set in src (main values, options, ranges, budgets,
 * quantity constants) into dst, keeping dst's states.  0, or -1 when out
 * of memory (dst's values are then partly the netlist's: copy again). */
int ls_run_copy_study(ls_run *dst, const ls_run *src);

/* Set part `part`'s main value for the solves of this run (a trial, a
 * candidate, a sweep point); the netlist keeps its own.  Re-solve after it
 * (ls_op_resolve).  0, or -1 when out of memory (nothing changed). */
int ls_run_set_value(ls_run *r, int part, double value);
/* Put every value back to the netlist's (main values and everything set
 * through ls_run_set_opt and the functions below it). */
void ls_run_reset_values(ls_run *r);

/* Set option slot `opt` of part `part` (one the part was given:
 * ls_part_has), one end (0 low, 1 high) of its range slot `slot`, the
 * value of budget `budget` (an index in nl->budgets) or the value of the
 * constant q of a bound quantity (a Q_CONST of one of the netlist's
 * checks), for the solves and checks of this run; the netlist keeps its
 * own.  Each returns 0, or -1 when out of memory (nothing changed). */
int ls_run_set_opt(ls_run *r, int part, int opt, double value);
int ls_run_set_range(ls_run *r, int part, int slot, int end, double volts);
int ls_run_set_budget(ls_run *r, int budget, double value);
int ls_run_set_qconst(ls_run *r, const ls_q *q, double value);

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

/* Part p's row in r's own options and ranges, or -1 (the netlist's). */
static inline int ls_run_row(const ls_run *r, const ls_part *p)
{
    if (!r || !r->set || !r->set->row)
        return -1;
    assert(p >= r->nl->parts && p < r->nl->parts + r->nl->nparts);
    return r->set->row[p - r->nl->parts];
}

/* Option slot i of part p in run r (r may be NULL: the netlist's); read it
 * only where the part was given it (ls_part_has). */
static inline double ls_run_opt_at(const ls_run *r, const ls_part *p, int i)
{
    assert(i >= 0 && i < LS_MAX_OPTS && p->opt);
    int row = ls_run_row(r, p);
    return row < 0 ? p->opt[i] : r->set->opt[row][i];
}

/* The two ends (low, high) of range slot `slot` of part p in run r (r may
 * be NULL: the netlist's).  The part's kind takes a range option. */
static inline const ls_level *ls_run_range(const ls_run *r, const ls_part *p, int slot)
{
    assert(slot >= 0 && slot < LS_MAX_RANGES && p->range);
    int row = ls_run_row(r, p);
    return row < 0 ? p->range[slot] : r->set->range[row][slot];
}

/* Budget `i` (an index in nl->budgets) in run r, in its unit. */
static inline double ls_run_budget(const ls_run *r, int i)
{
    assert(r && i >= 0 && i < r->nl->nbudgets);
    return r->set && r->set->budget ? r->set->budget[i] : r->nl->budgets[i].value;
}

/* The value of the constant q (Q_CONST) of a bound quantity in run r (r
 * may be NULL: as elaborated). */
static inline double ls_run_qconst(const ls_run *r, const ls_q *q)
{
    assert(q->kind == Q_CONST);
    if (r && r->set)
        for (int i = 0; i < r->set->nq; i++)   /* a few: the lets inside a circuit's checks */
            if (r->set->q[i] == q)
                return r->set->qvalue[i];
    return q->value;
}

#endif
