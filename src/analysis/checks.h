/* checks.h — evaluating the circuit's checks: every expect, and each port's
 * verdict as a check row (by its budget, or by the ratio rule when asked).
 * Computed before any report is written; reporters only read the rows. */
#ifndef LS_CHECKS_H
#define LS_CHECKS_H

#include <stdbool.h>

#include "analysis/analysis.h"

/* One check's result (rows owned by ls_checks; texts in the netlist's arena). */
typedef struct ls_check_row {
    const char *text;
    const char *instance;
    ls_loc loc;
    ls_check_result r;
    ls_dims dims;
    int port;                /* rule rows: the port's part index, else -1 */
} ls_check_row;

typedef struct ls_checks {
    ls_check_row *rows;
    int n, passed, failed;
} ls_checks;

/* Evaluate every expect and the budget of every port that has one (and, when
 * with_rule, the ratio rule on the other ports) into out, computing each
 * port's report on the way.  Returns 0, or -1 when out of memory (out empty).
 * Free with ls_checks_free. */
int ls_checks_run(ls_op *op, bool with_rule, ls_checks *out);
/* Free c's rows and empty it; safe on an emptied one. */
void ls_checks_free(ls_checks *c);

/* Where a port's budget comes from, in words ("budget", "rule sag", "half an
 * LSB", "none"): static text. */
const char *ls_budget_source(const ls_port_result *pr);

#endif
