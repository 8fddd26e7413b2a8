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
 *             its items joined by spaces).  A report whose rows carry two
 *             keys first (SECTION,NAME,FIELD,VALUE) opens with
 *             ls_wr_fields_keyed and sets the keys with ls_wr_keys.  With
 *             ls_wr_field_sep (a keyed report: "."), a row is named by the
 *             keys of the open objects and its own, joined
 *             ("monte_carlo.mean", "fix.kind").
 *   routing   ls_wr_route: which backends the members and tables go to from
 *             here (the JSON tree, the CSV field rows, or both: where two
 *             formats order or name a thing differently, each gets its own
 *             call).
 *   prose     ls_wr_say: a line of the text report only.
 *   a table   ls_wr_table, then per row ls_wr_cell_* and ls_wr_row, then
 *             ls_wr_table_end: in JSON an array of objects (one member per
 *             column that has a json key), in CSV a header line and one line
 *             per row (the columns that have a csv key; numbers as their
 *             shortest exact text, empty when not finite), in text an aligned
 *             table (the columns that have a heading; each number shown as
 *             the text the command formatted for it: units, %, digits).
 *             A format with no column of its own writes nothing of the table
 *             (a text-only table, a table only JSON has); members written
 *             between a row's cells and ls_wr_row go into the row's object.
 *
 * The HTML page keeps its own layout (cli/html.c; DEVELOPERS.md says why). */
#ifndef LS_WRITER_H
#define LS_WRITER_H

#include <stdbool.h>

#include "report/jsonw.h"
#include "report/report.h"
#include "report/textbuf.h"

#define LS_WR_MAXCOL 72   /* fit's CSV: seven columns and one per free part (at most 64);
                             the text shows at most LS_TABLE_MAXCOL of them */

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

/* Where members go (ls_wr_route). */
enum { LS_WR_JSON = 1u, LS_WR_CSV = 2u, LS_WR_ALL = 3u };

#define LS_WR_DEPTH LS_JW_DEPTH

typedef struct ls_wr {
    ls_report *rp;
    ls_jw jw;                /* the JSON backend */
    ls_table tab;            /* the text backend's table */
    ls_obuf *ob;             /* the CSV backend's block (malloc'd while a table is open) */
    const ls_wr_col *cols;   /* the open table's columns */
    int ncol, cell;          /* columns; the next cell of the row */
    bool skip_empty;
    bool csv_first;          /* no CSV cell in this row yet */
    char *rbuf;              /* the row's text cells, back to back (malloc'd) */
    size_t rlen, rcap, off[LS_WR_MAXCOL];
    bool lost;               /* out of memory in a cell: the text row is not whole */
    /* CSV of field rows (ls_wr_fields) */
    bool fields, rows_on;    /* field rows asked for; members are rows now */
    const char *arr_key;     /* the array being joined into one row, or NULL */
    char *join;              /* its items, space-separated (malloc'd) */
    size_t jlen, jcap;
    unsigned to;             /* where members go (LS_WR_JSON | LS_WR_CSV) */
    bool tjson, tcsv, ttext; /* the open table is in the JSON, the CSV, the text */
    bool keyed;              /* field rows start with two keys (ls_wr_fields_keyed) */
    const char *key[2];      /* the keys of the next field rows */
    const char *sep;         /* joins the keys of a row's name, or NULL (ls_wr_field_sep) */
    char *path;              /* the open objects' keys, each followed by sep (malloc'd) */
    size_t plen, pcap;
    int depth;               /* containers open through the writer */
    unsigned char open[LS_WR_DEPTH];  /* per depth: what opening it did (JSON, a joined CSV list) */
    size_t pat[LS_WR_DEPTH]; /* per depth: plen when it was opened */
    int wrap;                /* the JSON wrap before ls_wr_compact */
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
/* A number; when not finite, JSON's null carries `why`, CSV's cell is empty. */
void ls_wr_num_why(ls_wr *w, const char *key, double v, const char *why);

/* The CSV report is one row per field under the heading "FIELD,VALUE"
 * (names given); members become rows while ls_wr_csv_rows is on (it is, from
 * here). */
void ls_wr_fields(ls_wr *w, const char *field, const char *value);
/* Whether the members written from now on are CSV rows too. */
void ls_wr_csv_rows(ls_wr *w, bool on);
/* The CSV report is one row per field under the heading
 * "K1,K2,FIELD,VALUE" (names given); each row starts with the two keys last
 * given to ls_wr_keys (they must stay valid until the next call). */
void ls_wr_fields_keyed(ls_wr *w, const char *k1, const char *k2, const char *field, const char *value);
void ls_wr_keys(ls_wr *w, const char *k1, const char *k2);
/* Send the members, containers and tables written from now on to the
 * backends in `to` (LS_WR_JSON, LS_WR_CSV, LS_WR_ALL, the default); a
 * container or table ends where it was opened whatever the route is then. */
void ls_wr_route(ls_wr *w, unsigned to);
/* JSON: while on, the containers opened are written on one line. */
void ls_wr_compact(ls_wr *w, bool on);

/* CSV field rows are named by the keys of the objects open (opened while the
 * route has CSV) and the member's, joined by sep (a static string; NULL: the
 * member's key alone). */
void ls_wr_field_sep(ls_wr *w, const char *sep);

/* The numbers of seq, which the members written next follow in order, may be
 * formatted ahead on a second thread (numahead.h: JSON, large tables; the
 * bytes are the same either way; LOADSTACK_AHEAD=0 never does).  Ended by
 * ls_wr_ahead_end, before seq's arrays change. */
void ls_wr_ahead(ls_wr *w, const ls_ahead_seq *seq);
void ls_wr_ahead_end(ls_wr *w);
/* Whether the text meant for people is written: ls_wr_say's lines and the
 * text of table cells (units, digits, marks).  A report may skip the work
 * that only that text shows. */
bool ls_wr_shows_text(const ls_wr *w);

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
void ls_wr_cell_str(ls_wr *w, const char *s);
/* A number whose text is its engineering notation (ls_eng) with `unit`,
 * after `mark` ("~", or NULL for none); formatted only when text shows it. */
void ls_wr_cell_eng(ls_wr *w, double v, const char *unit, const char *mark);
/* A cell with no value: JSON null with `why` (jsonw.h), CSV and text empty. */
void ls_wr_cell_null(ls_wr *w, const char *why);
/* A yes/no cell: JSON true/false, CSV "true"/"false", text `text` (NULL:
 * "true"/"false"). */
void ls_wr_cell_bool(ls_wr *w, bool v, const char *text);
/* End the row (every column given a cell). */
void ls_wr_row(ls_wr *w);
/* Close the table.  Returns 0, or -1 when memory ran out (rp->nomem says so). */
int ls_wr_table_end(ls_wr *w);

#endif
