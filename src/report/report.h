/* report.h — text, JSON and CSV reports.  Reporters only read results. */
#ifndef LS_REPORT_H
#define LS_REPORT_H

#include <stdio.h>

#include "analysis/checks.h"
#include "analysis/results.h"
#include "report/jsonw.h"

typedef enum ls_format { FMT_TEXT, FMT_JSON, FMT_CSV, FMT_HTML } ls_format;

typedef struct ls_report {
    FILE *out;
    ls_format fmt;
    bool ascii;
    int sig;                 /* significant digits in text (4) */
    bool sig_given;          /* --digits given: ls_fixed numbers follow sig too */
    const ls_diags *diags;
    /* the JSON "meta" object: the command, the circuit file (NULL: none) and
     * the --set texts ("NAME=VALUE") */
    const char *command, *file;
    const char *const *sets;
    int nsets;
    const char *const *failed_warnings;   /* check: codes that --fail-on fails on */
    int nfailed_warnings;
    /* Set by a reporter when memory ran out while it wrote (what it was
     * writing, with the size it asked for in nomem_bytes): the report is not
     * whole, so the command must fail instead of handing it out
     * (ls_report_done in cli.h). */
    const char *nomem;
    size_t nomem_bytes;
} ls_report;

/* What the solve report in rp's format reads beyond the operating point
 * (LS_NEED_*, results.h): the command computes it with ls_results_compute
 * before calling ls_report_solve. */
unsigned ls_report_needs(const ls_report *rp);
/* The solve report of res (computed for ls_report_needs) and its checks. */
void ls_report_solve(ls_report *rp, const ls_results *res, const ls_checks *checks);
/* The check report: the rows of checks and the warnings --fail-on names. */
void ls_report_check(ls_report *rp, const ls_checks *checks);

/* Pieces shared with the other commands' reporters. */
/* Start a JSON report on rp->out: the top-level object and its "meta". */
void ls_report_json_begin(const ls_report *rp, ls_jw *w);
/* Finish it (ls_jw_finish); when the writer lost a reason for want of memory,
 * rp->nomem says so.  Returns 0, or -1 then. */
int ls_report_json_end(ls_report *rp, ls_jw *w);
/* A port's "budget" (null, "none", without one) and "by" (the rule that
 * decided its verdict: "budget" or "ratio"). */
struct ls_wr;
void ls_report_budget(struct ls_wr *w, const ls_port_result *pr);
void ls_csv_field(FILE *out, const char *s);
/* One CSV number: the shortest exact text, empty when not finite. */
void ls_csv_number(FILE *out, double v);
const char *ls_eng(const ls_report *rp, char *buf, size_t n, double v, const char *unit);
/* v printed by `fmt`, one printf conversion of a double with the text's own
 * precision for that number ("%+.3g", "%.1f", "%12.6f"); or, when --digits
 * was given, with fmt's flags and width and rp->sig significant digits,
 * trailing zeros kept as ls_eng keeps them.  A zero or a value that is not
 * finite is printed by fmt.  Returns buf. */
const char *ls_fixed(const ls_report *rp, char *buf, size_t n, const char *fmt, double v);
const char *ls_unit_of(ls_dims d, bool ascii);
/* The warnings of rp->diags through writer w: JSON's "warnings" array (code,
 * level: "warning", or "caution" for a hazard to people, message, file, line,
 * column), in a SECTION,NAME,FIELD,VALUE CSV the rows "warning,N,FIELD,VALUE"
 * of the same fields; nothing in text (each report says them in its words). */
void ls_report_warnings(struct ls_wr *w);

#endif
