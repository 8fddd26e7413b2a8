/* results.h — what a report reads beyond the operating point itself: every
 * port's report, the error bounds, the ADC readings and the resistor advice
 * of a port that misses its budget.  Each of them takes solves (low-rank
 * updates, driving-point solves), so the command computes them here, before
 * the reporter runs, and the reporter only reads (report/ never solves).
 *
 * A reporter says what it reads (ls_report_needs in report.h), so a report
 * that does not print a piece does not pay for it: a CSV report computes no
 * error bounds, a check report no port advice. */
#ifndef LS_RESULTS_H
#define LS_RESULTS_H

#include <stdbool.h>

#include "analysis/analysis.h"
#include "analysis/newton.h"

/* What to compute (a mask). */
enum {
    LS_NEED_PORTS = 1,    /* every port's report (ls_op_port) */
    LS_NEED_BOUNDS = 2,   /* the error bounds of the solution (op->acc) */
    LS_NEED_ADCS = 4,     /* every adc's reading */
    LS_NEED_ADVICE = 8,   /* the resistors that would meet a missed budget (needs the ports) */
};

/* The resistors at a port's driver node whose value alone would bring its
 * zout down to zout_max_ohm (the largest zout that meets the port's budget):
 * at most two, the smallest change first. */
typedef struct ls_port_advice {
    int port;                /* part index of the port */
    double zout_max_ohm;
    int part[2];             /* resistor part indices; -1: none */
    double ohm[2];           /* the value each would need */
} ls_port_advice;

/* One adc's reading. */
typedef struct ls_adc_row {
    int part;                /* part index of the adc */
    ls_adc_result r;
} ls_adc_row;

typedef struct ls_results {
    const ls_op *op;
    unsigned have;           /* the LS_NEED_* computed */
    bool bounds;             /* op->acc holds error bounds (asked for, and memory sufficed) */
    ls_adc_row *adcs;        /* in part order; malloc'd */
    int nadcs;
    ls_port_advice *advice;  /* in port order, only ports with advice; malloc'd */
    int nadvice;
} ls_results;

/* Compute `need` (LS_NEED_*) on the solved op into r.  Returns 0, or -1 when
 * memory ran out for r's own tables (r then empty, an "out of memory" for the
 * caller to report).  The error bounds failing for want of memory is not an
 * error here: r->bounds stays false and the reporter says what is missing.
 * Free with ls_results_free; op must outlive r. */
int ls_results_compute(ls_results *r, ls_op *op, unsigned need);
/* Free r's tables and empty it; safe on an emptied one. */
void ls_results_free(ls_results *r);

/* The numbers of a port's report, in the order every report lists them; each
 * is a property of the language, so its one name is ls_prop_name's (the
 * name an expect uses is the name the JSON, CSV and text reports print). */
#define LS_PORT_NFIELDS 9
extern const ls_prop ls_port_fields[LS_PORT_NFIELDS];
/* (ls_port_value, analysis.h, reads one of them) */

/* The cached report of port p, which must have been computed (LS_NEED_PORTS,
 * ls_checks_run, ls_chain_ports or ls_op_port); NULL when p is not a port. */
const ls_port_result *ls_port_read(const ls_op *op, int p);
/* The reading of adc part p, or NULL when p is not an adc. */
const ls_adc_result *ls_results_adc(const ls_results *r, int p);
/* The advice for port p, or NULL when it has none. */
const ls_port_advice *ls_results_advice(const ls_results *r, int p);

#endif
