/* accuracy.h — how many of the digits of a solution can be trusted.
 *
 * Extra-precise refinement: the residual b - A x is accumulated part by part
 * in double-double (a stamp's products are exact, and two parts' conductances
 * are never summed in double, which loses a 1 TOhm path beside a 1 mOhm wire),
 * and the solution is carried as x + tail, so a current through a small
 * resistance between two nearly equal node voltages comes from the difference
 * of the two double-double voltages, not of two rounded ones.
 *
 * Error bounds: for each result written as a linear form c^T x (a node
 * voltage, a part's current), |error| <= |A^-T c|^T (|r| + g), where r is the
 * extra-precise residual and g bounds, row by row, what rounding each part's
 * own value and stamp (a few units of the last place of every part's
 * contribution) does to the equations.  Exact per result for small systems
 * (one transposed solve each); above LS_ACC_EXACT_LIMIT unknowns, exact per
 * node by one solve for a network whose A^-1 has one-signed columns in its node
 * rows (ls_kind.monotone: resistances, current sources, grounded sources), else
 * one estimate of the largest node error (LAPACK's dlacn2 on A^-1 diag(|r| + g),
 * as its xGERFSX does) stands for every node. */
#ifndef LS_ACCURACY_H
#define LS_ACCURACY_H

#include <stdbool.h>

#include "analysis/op.h"

/* Per-result bounds for systems up to this many unknowns (and four times as
 * many parts); one estimate above. */
#define LS_ACC_EXACT_LIMIT 400

/* Refine the solution of a linear circuit's system with extra-precise
 * residuals until every unknown is right to well past double precision or the
 * steps stop helping (at most 8).  op->x is updated, op->acc.tail holds the
 * rest.  0, or -1 when out of memory (the solution is then unchanged). */
int ls_acc_refine(ls_op *op);
/* Value of a linear form at x + tail, evaluated in double-double (the
 * cancellation of two nearly equal node voltages happens before rounding). */
double ls_acc_lin_eval(const ls_op *op, const ls_lin *l);
/* V(a) - V(b) from x + tail (node indices, 0 = ground). */
double ls_acc_drop(const ls_op *op, int a, int b);
/* Compute the error bounds of the solved op (once; cached until the next
 * solve).  0, or -1 when out of memory (have_bounds stays false). */
int ls_acc_bounds(ls_op *op);
/* Is a value printed with `digits` significant digits possibly wrong in its
 * last digit: bound > half a unit of that digit?  A value of 0 is doubtful
 * when its bound exceeds `scale` * 1e-12 (scale: the largest value of its
 * kind in the circuit). */
bool ls_acc_doubtful(double value, double bound, int digits, double scale);
/* Compute the bounds and, when some node voltage or part current printed
 * with `digits` significant digits may be wrong in them, add the warning
 * `untrusted-digits` naming the worst and why. */
void ls_acc_warn(ls_op *op, int digits);
/* Largest |value| of the node voltages (kind 0) or part currents (kind 1):
 * the scale ls_acc_doubtful judges a zero against. */
double ls_acc_scale(const ls_op *op, int kind);
void ls_acc_free(ls_accuracy *a);
/* r = b - A (x + tail), summed part by part from every part's stamp (and the
 * variant's ties) in double-double and rounded to double; absr[row] = the sum
 * over parts of |that part's net contribution to the row| (the scale the
 * rounding of the parts' own values acts on).  tail may be all zero; r, absr:
 * n doubles; work: 2 n doubles of scratch (n = m->n).  The refinement's
 * residual, exported so a test can hold it against the assembled matrix. */
void ls_acc_residual(const ls_mna *m, const double *x, const double *tail, double *r, double *absr,
                     double *work);

#endif
