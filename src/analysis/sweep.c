/* sweep.c — the points of a sweep (see sweep.h). */
#include "analysis/sweep.h"

#include <math.h>

void ls_sweep_points(double from, double to, int n, bool log_scale, double *x)
{
    for (int i = 0; i < n; i++) {
        double f = (double)i / (double)(n - 1);
        x[i] = log_scale ? from * pow(to / from, f) : from + (to - from) * f;
    }
    x[0] = from;
    x[n - 1] = to;
}
