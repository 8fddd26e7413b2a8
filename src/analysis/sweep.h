/* sweep.h — the points of a sweep, shared by the `sweep` command and the C API. */
#ifndef LS_SWEEP_H
#define LS_SWEEP_H

#include <stdbool.h>

/* Fill x[0..n-1] (n >= 2) with the swept values: evenly spaced from `from` to
 * `to`, or evenly on a log scale with log_scale (both ends > 0); the ends are
 * exactly from and to. */
void ls_sweep_points(double from, double to, int n, bool log_scale, double *x);

#endif
