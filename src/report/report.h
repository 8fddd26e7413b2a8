/* report.h — text, JSON and CSV reports.  Reporters only read results. */
#ifndef LS_REPORT_H
#define LS_REPORT_H

#include <stdio.h>

#include "analysis/analysis.h"
#include "report/jsonw.h"

typedef enum ls_format { FMT_TEXT, FMT_JSON, FMT_CSV, FMT_HTML } ls_format;

typedef struct ls_report {
    FILE *out;
    ls_format fmt;
    bool ascii;
    int sig;                 /* significant digits in text (4) */
    const ls_diags *diags;
    /* the JSON "meta" object: the command, the circuit file (NULL: none) and
     * the --set texts ("NAME=VALUE") */
    const char *command, *file;
    const char *const *sets;
    int nsets;
    const char *const *failed_warnings;   /* check: codes that --fail-on fails on */
    int nfailed_warnings;
} ls_report;

/* Check results for every expect and rule (allocated by the caller). */
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

/* Evaluate every expect (and, when asked, the ratio rule on every port). */
int ls_checks_run(ls_op *op, bool with_rule, ls_checks *out);
void ls_checks_free(ls_checks *c);

void ls_report_solve(ls_report *rp, ls_op *op, const ls_checks *checks);
void ls_report_check(ls_report *rp, ls_op *op, const ls_checks *checks);

/* Pieces shared with the other commands' reporters. */
/* Start a JSON report on rp->out: the top-level object and its "meta". */
void ls_report_json_begin(const ls_report *rp, ls_jw *w);
/* A port's "budget" (null, "none", without one) and "by" (the rule that
 * decided its verdict: "budget" or "ratio"). */
void ls_report_budget_json(ls_jw *w, const ls_port_result *pr);
void ls_csv_field(FILE *out, const char *s);
/* One CSV number: the shortest exact text, empty when not finite. */
void ls_csv_number(FILE *out, double v);
const char *ls_eng(const ls_report *rp, char *buf, size_t n, double v, const char *unit);
const char *ls_unit_of(ls_dims d, bool ascii);
/* The "warnings" array: code, level ("warning", or "caution" for a hazard to
 * people), message, file, line, column. */
void ls_report_warnings_json(const ls_report *rp, ls_jw *w);
/* The "warning" rows of a section,name,field,value CSV: one row per warning
 * (name: its code; field: its file:line:col; value: the message). */
void ls_report_warnings_csv(const ls_report *rp, FILE *out);
/* Print nrows rows of ncol (at most 10) cells, row after row in `cells`, under
 * the heading `head`, aligned (right[c]: right-aligned column); indented by two
 * spaces as every text report.  NULL cells print empty. */
void ls_text_table(FILE *f, int ncol, const char *const *head, const bool *right, const char *const *cells,
                   int nrows);

#endif
