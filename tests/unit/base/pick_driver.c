/* pick_driver.c — runs ls_pick_ratio once for tests/ref/test_pick_ref.py.
 * Usage: pick_driver SERIES RATIO TOTAL_LO TOTAL_HI ZOUT_MAX N  (0 = default)
 * Prints one line per result: rtop rbot ratio error zout (%.17g). */
#include "base/eseries.h"

#include <stdio.h>
#include <stdlib.h>

/* Exit 0 with the lines printed, 2 on bad usage or a refused search. */
int main(int argc, char **argv)
{
    if (argc != 7) {
        fprintf(stderr, "usage: %s SERIES RATIO TOTAL_LO TOTAL_HI ZOUT_MAX N\n", argv[0]);
        return 2;
    }
    const ls_eseries *s = ls_eseries_find(argv[1]);
    int max = atoi(argv[6]);
    if (!s || max < 0 || max > 10000)
        return 2;
    ls_pick_item *it = malloc(((size_t)max + 1) * sizeof *it);
    if (!it)
        return 2;
    int n = ls_pick_ratio(s, strtod(argv[2], NULL), strtod(argv[3], NULL),
                          strtod(argv[4], NULL), strtod(argv[5], NULL), it, (size_t)max);
    for (int i = 0; i < n; i++)
        printf("%.17g %.17g %.17g %.17g %.17g\n", it[i].rtop, it[i].rbot, it[i].ratio,
               it[i].error, it[i].zout);
    free(it);
    return n < 0 ? 2 : 0;
}
