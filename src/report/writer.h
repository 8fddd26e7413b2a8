/* writer.h — one interface for a command's report, with a backend per format.
 *
 * A command describes its report once, through these calls, and the backend
 * of rp->fmt writes it:
 *
 *   members   ls_wr_obj / _arr / _end, ls_wr_num / _int / _bool / _str /
 *             _null: the JSON tree (a number that is not finite is null with
 *             its why, jsonw.h).  The text and CSV reports do not show them:
 *             the text says what matters in its own lines (ls_wr_say), and a
 *             CSV report is its table.
 *             A report whose CSV is one row per field (FIELD,VALUE) says so
 *             with ls_wr_fields; then the members written while
 *             ls_wr_csv_rows is on are rows too (an array of strings one row,
 *             its items joined by spaces).  With ls_wr_field_sep, a row is
 *             named by the keys of the open objects and its own, joined
 *             ("monte_carlo.mean").  Where the CSV rows are arranged otherwise
 *             than the JSON members, ls_wr_json_members turns the JSON off
 *             for the members written only as rows.
 *   prose     ls_wr_say: a line of the text report only.
 *   a table   ls_wr_table, then per row ls_wr_cell_* and ls_wr_row, then
 *             ls_wr_table_end: in JSON an array of objects (one member per
 *             column that has a json key), in CSV a header line and one line
 *             per row (the columns that have a csv key; numbers as their
 *             shortest exact text, empty when not finite), in text an aligned
 *             table (the columns that have a heading; each number shown as
 *             the text the command formatted for it: units, %, digits).
 *
 * The HTML page keeps its own layout (cli/html.c). */
#ifndef LS_WRITER_H
#define LS_WRITER_H

#include <stdbool.h>

#include "report/jsonw.h"
#include "report/report.h"
#include "report/textbuf.h"

#define LS_WR_MAXCOL LS_TABLE_MAXCOL

/* One column of a table. */
typedef struct ls_wr_col {
    const char *json;        /* the member name in JSON; NULL: not in the JSON */
    const char *csv;         /* the column name in CSV; NULL: not in the CSV */
    const char *head;        /* the heading in text; NULL: not in the text */
    bool right;              /* text: right-aligned */
    int width;               /* text: at least this many display columns */
} ls_wr_col;

/* How a table looks in text (zero: the reports' own, ls_table). */
typedef struct ls_wr_style {
    const char *lead, *gap;  /* before each line, between columns; NULL: two spaces */
    bool fixed;              /* each column exactly its width (ls_table.fixed) */
    bool skip_empty;         /* no heading either when the table has no row */
    bool hide_text;          /* not in the text report (its lines say the matter otherwise) */
    bool csv_more;           /* CSV: the rows go on under the previous table's heading
                                (the same csv columns), with no heading of their own */
} ls_wr_style;

typedef struct ls_wr {
    ls_report *rp;
    ls_jw jw;                /* the JSON backend */
    ls_table tab;            /* the text backend's table */
    ls_obuf *ob;             /* the CSV backend's block (malloc'd while a table is open) */
    const ls_wr_col *cols;   /* the open table's columns */
    int ncol, cell;          /* columns; the next cell of the row */
    bool skip_empty;
    bool hidden;             /* the open table is not in the text (ls_wr_style.hide_text) */
    bool csv_none;           /* the open table has no CSV column: nothing of it in the CSV */
    bool csv_first;          /* no CSV cell in this row yet */
    char *rbuf;              /* the row's text cells, back to back (malloc'd) */
    size_t rlen, rcap, off[LS_WR_MAXCOL];
    bool lost;               /* out of memory in a cell: the text row is not whole */
    /* CSV of field rows (ls_wr_fields) */
    bool fields, rows_on;    /* field rows asked for; members are rows now */
    const char *arr_key;     /* the array being joined into one row, or NULL */
    char *join;              /* its items, space-separated (malloc'd) */
    size_t jlen, jcap;
    const char *sep;         /* joins the keys of a row's name, or NULL (ls_wr_field_sep) */
    char *path;              /* the open objects' keys, each followed by sep (malloc'd) */
    size_t plen, pcap;
    int depth;               /* containers open (every format) */
    size_t pat[LS_JW_DEPTH];  /* plen when each was opened */
    bool parr[LS_JW_DEPTH];  /* each an array */
    bool json_off;           /* members are not JSON now (ls_wr_json_members) */
} ls_wr;

/* Start the report of rp (JSON: the top object and its "meta"). */
void ls_wr_begin(ls_wr *w, ls_report *rp);
/* Finish it.  Returns 0, or -1 when memory ran out on the way (rp->nomem
 * says what was lost). */
int ls_wr_finish(ls_wr *w);

/* JSON members (see above). */
void ls_wr_obj(ls_wr *w, const char *key);
void ls_wr_arr(ls_wr *w, const char *key);
void ls_wr_end(ls_wr *w);
void ls_wr_num(ls_wr *w, const char *key, double v);
void ls_wr_int(ls_wr *w, const char *key, long long v);
/* An unsigned integer member: JSON and CSV write all 64 bits (a seed). */
void ls_wr_uint(ls_wr *w, const char *key, unsigned long long v);
void ls_wr_bool(ls_wr *w, const char *key, bool v);
void ls_wr_str(ls_wr *w, const char *key, const char *s);
void ls_wr_null(ls_wr *w, const char *key, const char *why);

/* The CSV report is one row per field under the heading "FIELD,VALUE"
 * (names given); members become rows while ls_wr_csv_rows is on (it is, from
 * here). */
void ls_wr_fields(ls_wr *w, const char *field, const char *value);
/* Whether the members written from now on are CSV rows too. */
void ls_wr_csv_rows(ls_wr *w, bool on);

/* CSV field rows are named by the keys of the open objects and the
 * member's, joined by sep (a static string; NULL: the member's key alone). */
void ls_wr_field_sep(ls_wr *w, const char *sep);
/* Whether the members and tables written from now on are in the JSON (on
 * from the start).  Turn it off and on again at the same depth. */
void ls_wr_json_members(ls_wr *w, bool on);
/* A number member whose null (not finite) gives the reason why. */
void ls_wr_num_why(ls_wr *w, const char *key, double v, const char *why);

/* A line of the text report (printf format; the newline is the caller's). */
void ls_wr_say(ls_wr *w, const char *fmt, ...) __attribute__((format(printf, 2, 3)));

/* Open table `key` (the JSON member) of ncol (at most LS_WR_MAXCOL) columns;
 * cols must outlive the table.  style may be NULL. */
void ls_wr_table(ls_wr *w, const char *key, const ls_wr_col *cols, int ncol, const ls_wr_style *style);
/* The next cell: a number with the text it shows as (NULL: the engineering
 * notation of rp, no unit). */
void ls_wr_cell_num(ls_wr *w, double v, const char *text);
/* ... with the reason of its JSON null when v is not finite. */
void ls_wr_cell_why(ls_wr *w, double v, const char *why, const char *text);
void ls_wr_cell_int(ls_wr *w, long long v);
/* A truth: JSON true/false, CSV and text the words. */
void ls_wr_cell_bool(ls_wr *w, bool v);
void ls_wr_cell_str(ls_wr *w, const char *s);
/* End the row (every column given a cell). */
void ls_wr_row(ls_wr *w);
/* Close the table.  Returns 0, or -1 when memory ran out (rp->nomem says so). */
int ls_wr_table_end(ls_wr *w);

#endif
