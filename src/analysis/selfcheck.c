/* selfcheck.c — see selfcheck.h. */
#include "analysis/selfcheck.h"
#include "analysis/newton.h"

#include "parts/parts.h"

#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* How far past the solve's own accuracy a result may stray: the relative
 * residual is a norm over the whole system, one row or one sum can be that
 * many times worse before the solution is wrong rather than rounded. */
#define SLACK 1e3

bool ls_selfcheck_on(void)
{
    const char *e = getenv("LOADSTACK_SELFCHECK");
    return e && *e && strcmp(e, "0") != 0;
}

/* Relative accuracy of an iterated solve (its Newton stopping rule is tighter;
 * this leaves room for the currents it reports). */
#define LS_SELFCHECK_ITERATED 1e-9

static bool abort_mode(void)
{
    const char *e = getenv("LOADSTACK_SELFCHECK");
    return e && strcmp(e, "abort") == 0;
}

/* The accuracy the check holds the solution to: SLACK times its relative
 * residual, never below a few rounding units. */
static double accuracy(const ls_op *op)
{
    double r = isfinite(op->residual) ? op->residual : 0;
    double acc = SLACK * fmax(r, 64 * DBL_EPSILON);
    /* An iterated circuit (junctions, limits, a self-heating thermistor) is
     * solved to its iteration's tolerance, not to the last linear solve's
     * residual: its results hold KCL only to that. */
    return ls_newton_needed(op->nl) ? fmax(acc, LS_SELFCHECK_ITERATED) : acc;
}

/* KCL at every node row; the first failing node into *bad, with what it is
 * off by and the scale the allowance was taken from.  *pscale: the scale of
 * the powers' rounding, sum over nodes of |v| times the currents meeting
 * there (with the noise floor below), for Tellegen's check. */
static bool kcl_holds(const ls_op *op, double acc, int *bad, double *off, double *scale, double *pscale)
{
    const ls_csc *a = &op->mna.a;
    int nn = op->mna.nn, n = op->mna.n;
    double *sum = calloc((size_t)(nn ? nn : 1), sizeof *sum), *mag = calloc((size_t)(nn ? nn : 1), sizeof *mag);
    *pscale = INFINITY;
    if (!sum || !mag) { /* no memory for the check: nothing to say */
        free(sum);
        free(mag);
        return true;
    }
    /* the noise floor of the solve (small unknowns are set to zero) */
    double vmax = 0, imax = 0;
    for (int i = 0; i < n; i++)
        *(i < nn ? &vmax : &imax) = fmax(i < nn ? vmax : imax, fabs(op->x[i]));
    for (int j = 0; j < n; j++)
        for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++) {
            int i = a->rowind[p];
            if (i >= nn)
                continue;
            double t = a->val[p] * op->x[j];
            sum[i] += t;
            mag[i] += fabs(t) + fabs(a->val[p]) * 1e-14 * (j < nn ? vmax : imax);
        }
    /* The residual is a norm over the whole system (|A| |x| + |b|, infinity
     * norms): a row of tiny currents at the far end of a long ladder may be
     * off by that much times the residual without the solution being wrong. */
    double anorm = 0, bnorm = 0, xnorm = fmax(vmax, imax);
    double *rowsum = calloc(n > 0 ? (size_t)n : 1, sizeof *rowsum);
    if (rowsum) {
        for (int j = 0; j < n; j++)
            for (int p = a->colptr[j]; p < a->colptr[j + 1]; p++)
                rowsum[a->rowind[p]] += fabs(a->val[p]);
        for (int i = 0; i < n; i++) {
            anorm = fmax(anorm, rowsum[i]);
            bnorm = fmax(bnorm, fabs(op->mna.b[i]));
        }
        free(rowsum);
    }
    double global = anorm * xnorm + bnorm;
    *pscale = 0;
    for (int i = 0; i < nn; i++)
        *pscale += fabs(op->x[i]) * (mag[i] + fabs(op->mna.b[i]));
    bool ok = true;
    for (int i = 0; i < nn && ok; i++) {
        double r = op->mna.b[i] - sum[i], s = fmax(mag[i] + fabs(op->mna.b[i]), global);
        if (!(fabs(r) <= acc * s + DBL_MIN)) {
            ok = false;
            *bad = i + 1;
            *off = r;
            *scale = s;
        }
    }
    free(sum);
    free(mag);
    return ok;
}

int ls_selfcheck(ls_op *op)
{
    const ls_netlist *nl = op->nl;
    double acc = accuracy(op), off = 0, scale = 0, pscale = 0;
    int bad = -1;
    if (!kcl_holds(op, acc, &bad, &off, &scale, &pscale)) {
        ls_error(nl->diags, LS_NOLOC,
                 "self-check: Kirchhoff's current law fails at node '%s': %.3g A unaccounted for, against currents "
                 "of %.3g A and an allowed %.3g A",
                 nl->nodes[bad].name, off, scale, acc * scale);
        if (abort_mode())
            abort();
        return -1;
    }
    /* Tellegen: the absorbed powers of all parts sum to zero.  A part's
     * reported power is its whole power at every pin (an op-amp's counts its
     * inputs and rails, the kind's pin_power), so the sum is over every part.
     * Each power carries its current's rounding times its pins' voltages:
     * the allowance is over the powers' sizes and that scale (pscale), so
     * currents that are all rounding (a source whose loop is open: 1e-47 A
     * at 5 V) sum to what they are, noise, and no failure. */
    double total = 0, mag = 0;
    for (int i = 0; i < nl->nparts; i++) {
        if (isfinite(op->ppart[i])) {
            total += op->ppart[i];
            mag += fabs(op->ppart[i]);
        }
    }
    /* An iterated circuit's junction currents carry the iteration's absolute
     * tolerance, which no relative allowance on a near-zero total can hold:
     * Tellegen is checked on linear circuits only (KCL above covers both). */
    bool iterated = ls_newton_needed(nl);
    double allowed = acc * (mag + pscale);
    if (!iterated && !(fabs(total) <= allowed + DBL_MIN)) {
        ls_error(nl->diags, LS_NOLOC,
                 "self-check: Tellegen's theorem fails: the parts' powers sum to %.3g W, against %.3g W in all and "
                 "an allowed %.3g W",
                 total, mag, allowed);
        if (abort_mode())
            abort();
        return -1;
    }
    return 0;
}
