/* sens.h — sensitivities of a quantity to every part's main value, by the
 * adjoint method: one transposed solve per leaf of the quantity's expression
 * serves every part at once. */
#ifndef LS_SENS_H
#define LS_SENS_H

#include "analysis/analysis.h"

typedef struct ls_sens_item {
    int part;
    double nominal;        /* the part's main value */
    double derivative;     /* dQ/dp, in Q's unit per p's unit */
    double normalized;     /* (p/Q) dQ/dp; NaN when Q = 0 */
} ls_sens_item;

/* Fill items (one per part that has a main value; caller frees *items).
 * Returns the count, or -1 with an error reported (unsupported leaf, no memory). */
int ls_sens(ls_op *op, const ls_q *q, double *value, ls_sens_item **items);

#endif
