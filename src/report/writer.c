/* writer.c — the report writer and its text, JSON and CSV backends (writer.h). */
#include "report/writer.h"

#include <assert.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

#include "base/fmt.h"

void ls_wr_begin(ls_wr *w, ls_report *rp)
{
    memset(w, 0, sizeof *w);
    w->rp = rp;
    w->to = LS_WR_ALL;
    if (rp->fmt == FMT_JSON)
        ls_report_json_begin(rp, &w->jw);
}

int ls_wr_finish(ls_wr *w)
{
    assert(w->depth == 0);   /* every ls_wr_obj / ls_wr_arr closed by its ls_wr_end */
    ls_wr_ahead_end(w);
    free(w->rbuf);
    free(w->join);
    free(w->path);
    w->rbuf = w->join = w->path = NULL;
    if (w->ob) {
        ls_ob_flush(w->ob);
        free(w->ob);
        w->ob = NULL;
    }
    if (w->rp->fmt == FMT_JSON)
        return ls_report_json_end(w->rp, &w->jw);
    return w->rp->nomem ? -1 : 0;
}

/* Is the report JSON? */
static bool fmt_json(const ls_wr *w)
{
    return w->rp->fmt == FMT_JSON;
}

/* Does a member go to the JSON tree now? */
static bool json(const ls_wr *w)
{
    return fmt_json(w) && (w->to & LS_WR_JSON);
}

/* Does a member go to a CSV field row now? */
static bool csv_row_on(const ls_wr *w)
{
    return w->rp->fmt == FMT_CSV && w->fields && w->rows_on && w->ob && (w->to & LS_WR_CSV);
}

/* Say that memory ran out for a CSV row (what, bytes asked). */
static void csv_lost(ls_wr *w, const char *what, size_t bytes)
{
    w->rp->nomem = what;
    w->rp->nomem_bytes = bytes;
}

/* Make *buf (of *cap bytes, doubling from 256) hold at least need bytes.
 * 0, or the size that could not be had (*buf is then unchanged). */
static size_t room(char **buf, size_t *cap, size_t need)
{
    if (need <= *cap)
        return 0;
    size_t c = *cap ? *cap * 2 : 256;
    while (c < need)
        c *= 2;
    char *b = realloc(*buf, c);
    if (!b)
        return c;
    *buf = b;
    *cap = c;
    return 0;
}

/* Add item s to the array being joined; false when memory ran out. */
static bool join_item(ls_wr *w, const char *s)
{
    size_t n = strlen(s) + 2;
    size_t cap = room(&w->join, &w->jcap, w->jlen + n);
    if (cap) {
        csv_lost(w, "a list of the CSV report", cap);
        return false;
    }
    if (w->jlen)
        w->join[w->jlen++] = ' ';
    memcpy(w->join + w->jlen, s, n - 1);
    w->jlen += n - 2;
    w->join[w->jlen] = 0;
    return true;
}

/* One FIELD,VALUE row of text v (already CSV: a number or a word), or of a
 * string to quote when quote; inside a joined array, one more item. */
static void csv_member(ls_wr *w, const char *key, const char *v, bool quote)
{
    if (w->arr_key) {
        join_item(w, v);
        return;
    }
    if (w->keyed) {
        for (int k = 0; k < 2; k++) {
            ls_ob_csv_field(w->ob, w->key[k] ? w->key[k] : "");
            ls_ob_putc(w->ob, ',');
        }
    }
    if (w->plen && key) {   /* the open objects' keys, then its own */
        size_t n = strlen(key) + 1;
        size_t cap = room(&w->path, &w->pcap, w->plen + n);
        if (cap) {
            csv_lost(w, "a field name of the CSV report", cap);
            return;
        }
        memcpy(w->path + w->plen, key, n);
        key = w->path;
    }
    ls_ob_csv_field(w->ob, key);
    ls_ob_putc(w->ob, ',');
    if (quote)
        ls_ob_csv_field(w->ob, v);
    else
        ls_ob_puts(w->ob, v);
    ls_ob_putc(w->ob, '\n');
}

/* Open the CSV block of a field report and write its heading of n names. */
static void fields_head(ls_wr *w, int n, const char *const *names)
{
    w->fields = w->rows_on = true;
    w->ob = malloc(sizeof *w->ob);
    if (!w->ob) {
        csv_lost(w, "the CSV report", sizeof *w->ob);
        return;
    }
    ls_ob_init(w->ob, w->rp->out);
    for (int k = 0; k < n; k++) {
        if (k)
            ls_ob_putc(w->ob, ',');
        ls_ob_csv_field(w->ob, names[k]);
    }
    ls_ob_putc(w->ob, '\n');
}

void ls_wr_fields(ls_wr *w, const char *field, const char *value)
{
    if (w->rp->fmt == FMT_CSV)
        fields_head(w, 2, (const char *const[]){field, value});
}

void ls_wr_fields_keyed(ls_wr *w, const char *k1, const char *k2, const char *field, const char *value)
{
    if (w->rp->fmt != FMT_CSV)
        return;
    w->keyed = true;
    if (!w->sep)
        w->sep = ".";
    fields_head(w, 4, (const char *const[]){k1, k2, field, value});
}

void ls_wr_keys(ls_wr *w, const char *k1, const char *k2)
{
    w->key[0] = k1;
    w->key[1] = k2;
}

void ls_wr_route(ls_wr *w, unsigned to)
{
    w->to = to;
}

void ls_wr_field_sep(ls_wr *w, const char *sep)
{
    w->sep = sep;
}

void ls_wr_compact(ls_wr *w, bool on)
{
    if (!fmt_json(w))
        return;
    if (on) {
        w->wrap = w->jw.wrap;
        w->jw.wrap = 1;
    } else {
        w->jw.wrap = w->wrap;
    }
}

void ls_wr_csv_rows(ls_wr *w, bool on)
{
    w->rows_on = on;
}

/* What a container did, kept per depth so that ls_wr_end undoes it whatever
 * the route is by then. */
enum { OPEN_JSON = 1, OPEN_JOIN = 2 };

/* Push the record of a container.  An object's key (name: NULL for an
 * array or a nameless object) becomes part of the names of the CSV field
 * rows inside it when the report names its rows by path (sep) and the
 * members go to CSV rows. */
static void push(ls_wr *w, unsigned rec, const char *name)
{
    if (w->depth >= LS_WR_DEPTH) {   /* deeper than the JSON writer goes: counted only */
        w->depth++;
        return;
    }
    w->pat[w->depth] = w->plen;
    w->open[w->depth++] = (unsigned char)rec;
    if (!name || !w->sep || !w->fields || !(w->to & LS_WR_CSV))
        return;
    size_t k = strlen(name), s = strlen(w->sep);
    size_t cap = room(&w->path, &w->pcap, w->plen + k + s + 1);
    if (cap) {
        csv_lost(w, "a field name of the CSV report", cap);
        return;
    }
    memcpy(w->path + w->plen, name, k);
    memcpy(w->path + w->plen + k, w->sep, s + 1);
    w->plen += k + s;
}

void ls_wr_obj(ls_wr *w, const char *key)
{
    unsigned rec = 0;
    if (json(w)) {
        ls_jw_obj(&w->jw, key);
        rec = OPEN_JSON;
    }
    push(w, rec, key);
}

void ls_wr_arr(ls_wr *w, const char *key)
{
    unsigned rec = 0;
    if (json(w)) {
        ls_jw_arr(&w->jw, key);
        rec = OPEN_JSON;
    } else if (csv_row_on(w) && key) {
        w->arr_key = key;
        w->jlen = 0;
        rec = OPEN_JOIN;
    }
    push(w, rec, NULL);
}

void ls_wr_end(ls_wr *w)
{
    assert(w->depth > 0);
    unsigned rec = 0;
    if (w->depth > LS_WR_DEPTH) {
        w->depth--;
        rec = json(w) ? OPEN_JSON : 0;
    } else if (w->depth > 0) {
        rec = w->open[--w->depth];
        w->plen = w->pat[w->depth];
        if (w->path)
            w->path[w->plen] = 0;
    }
    if (rec & OPEN_JSON) {
        ls_jw_end(&w->jw);
    } else if ((rec & OPEN_JOIN) && w->arr_key) {
        const char *key = w->arr_key;
        w->arr_key = NULL;
        csv_member(w, key, w->jlen ? w->join : "", true);
    }
}

void ls_wr_num(ls_wr *w, const char *key, double v)
{
    if (json(w))
        ls_jw_num(&w->jw, key, v);
    else if (csv_row_on(w))
        csv_member(w, key, LS_CSV(v), false);
}

void ls_wr_num_why(ls_wr *w, const char *key, double v, const char *why)
{
    if (json(w))
        ls_jw_num_why(&w->jw, key, v, why);
    else if (csv_row_on(w))
        csv_member(w, key, LS_CSV(v), false);
}

void ls_wr_int(ls_wr *w, const char *key, long long v)
{
    char b[32];
    if (json(w)) {
        ls_jw_int(&w->jw, key, v);
    } else if (csv_row_on(w)) {
        snprintf(b, sizeof b, "%lld", v);
        csv_member(w, key, b, false);
    }
}

void ls_wr_uint(ls_wr *w, const char *key, unsigned long long v)
{
    char b[32];
    if (json(w)) {
        ls_jw_uint(&w->jw, key, v);
    } else if (csv_row_on(w)) {
        snprintf(b, sizeof b, "%llu", v);
        csv_member(w, key, b, false);
    }
}

void ls_wr_bool(ls_wr *w, const char *key, bool v)
{
    if (json(w))
        ls_jw_bool(&w->jw, key, v);
    else if (csv_row_on(w))
        csv_member(w, key, v ? "true" : "false", false);
}

void ls_wr_str(ls_wr *w, const char *key, const char *s)
{
    if (json(w))
        ls_jw_str(&w->jw, key, s);
    else if (csv_row_on(w))
        csv_member(w, key, s ? s : "", true);
}

void ls_wr_null(ls_wr *w, const char *key, const char *why)
{
    if (json(w))
        ls_jw_null(&w->jw, key, why);
}

void ls_wr_ahead(ls_wr *w, const ls_ahead_seq *seq)
{
    ls_wr_ahead_end(w);
    const char *off = getenv("LOADSTACK_AHEAD");   /* "0": every number in place (to compare) */
    if (fmt_json(w) && !(off && strcmp(off, "0") == 0))
        w->jw.ahead = ls_numahead_start(seq);
}

void ls_wr_ahead_end(ls_wr *w)
{
    ls_numahead_stop(w->jw.ahead);
    w->jw.ahead = NULL;
}

bool ls_wr_shows_text(const ls_wr *w)
{
    return w->rp->fmt == FMT_TEXT;
}

void ls_wr_say(ls_wr *w, const char *fmt, ...)
{
    if (w->rp->fmt != FMT_TEXT)
        return;
    va_list ap;
    va_start(ap, fmt);
    vfprintf(w->rp->out, fmt, ap);
    va_end(ap);
}

/* ---- tables ---------------------------------------------------------------------------- */

/* CSV: the open table's block and its heading (none when it continues the
 * table before). */
static void csv_table_open(ls_wr *w, bool heading)
{
    if (!w->ob) {   /* (a report of field rows has its block already) */
        w->ob = malloc(sizeof *w->ob);
        if (!w->ob) {
            csv_lost(w, "the CSV table", sizeof *w->ob);
            return;
        }
        ls_ob_init(w->ob, w->rp->out);
    }
    if (!heading)
        return;
    for (int c = 0; c < w->ncol; c++) {
        if (!w->cols[c].csv)
            continue;
        if (!w->csv_first)
            ls_ob_putc(w->ob, ',');
        ls_ob_csv_field(w->ob, w->cols[c].csv);
        w->csv_first = false;
    }
    ls_ob_putc(w->ob, '\n');
    w->csv_first = true;
}

/* Text: the open table's aligned layout. */
static void text_table_open(ls_wr *w, const ls_wr_style *style)
{
    ls_table t = {.lead = style->lead, .gap = style->gap, .fixed = style->fixed};
    for (int c = 0; c < w->ncol; c++) {
        if (!w->cols[c].head || t.ncol == LS_TABLE_MAXCOL)
            continue;
        t.head[t.ncol] = w->cols[c].head;
        t.right[t.ncol] = w->cols[c].right;
        t.minw[t.ncol++] = w->cols[c].width;
    }
    w->tab = t;
}

void ls_wr_table(ls_wr *w, const char *key, const ls_wr_col *cols, int ncol, const ls_wr_style *style)
{
    ls_wr_style none = {0};
    if (!style)
        style = &none;
    w->cols = cols;
    w->ncol = ncol < LS_WR_MAXCOL ? ncol : LS_WR_MAXCOL;
    w->cell = 0;
    w->skip_empty = style->skip_empty;
    w->csv_first = true;
    w->rlen = 0;
    w->tjson = w->tcsv = w->ttext = false;
    for (int c = 0; c < w->ncol; c++) {
        w->tjson |= cols[c].json != NULL;
        w->tcsv |= cols[c].csv != NULL;
        w->ttext |= cols[c].head != NULL;
    }
    w->tjson &= json(w);   /* (the members' route at the table's opening holds for it) */
    w->ttext &= !style->hide_text;
    switch (w->rp->fmt) {
    case FMT_JSON:
        if (w->tjson)
            ls_jw_arr(&w->jw, key);
        break;
    case FMT_CSV:
        if (w->tcsv)
            csv_table_open(w, !style->csv_more);
        break;
    case FMT_TEXT:
        if (w->ttext)
            text_table_open(w, style);
        break;
    default: break;
    }
}

/* The CSV separator before the next cell of the row. */
static bool csv_cell(ls_wr *w, const ls_wr_col *c)
{
    if (w->rp->fmt != FMT_CSV || !c->csv || !w->ob)
        return false;
    if (!w->csv_first)
        ls_ob_putc(w->ob, ',');
    w->csv_first = false;
    return true;
}

/* Keep the text of the next cell for the text row. */
static void text_cell(ls_wr *w, const char *s)
{
    size_t n = strlen(s) + 1;
    size_t cap = room(&w->rbuf, &w->rcap, w->rlen + n);
    if (cap) {
        w->lost = true;
        w->rp->nomem = "a row of the text report";
        w->rp->nomem_bytes = cap;
        return;
    }
    w->off[w->cell] = w->rlen;
    memcpy(w->rbuf + w->rlen, s, n);
    w->rlen += n;
}

/* The column of the next cell (a row's first cell opens the row's JSON
 * object), or NULL when the row is full. */
static const ls_wr_col *next_col(ls_wr *w)
{
    if (w->cell == 0 && w->ncol && w->tjson)
        ls_jw_obj(&w->jw, NULL);
    return w->cell < w->ncol ? &w->cols[w->cell] : NULL;
}

/* Is the text report showing column c? */
static bool text_col(const ls_wr *w, const ls_wr_col *c)
{
    return w->rp->fmt == FMT_TEXT && w->ttext && c->head;
}

void ls_wr_cell_num(ls_wr *w, double v, const char *text)
{
    ls_wr_cell_why(w, v, ls_jw_why_of(v), text);
}

void ls_wr_cell_why(ls_wr *w, double v, const char *why, const char *text)
{
    const ls_wr_col *c = next_col(w);
    if (!c)
        return;
    if (w->tjson && c->json)
        ls_jw_num_why(&w->jw, c->json, v, why);
    if (csv_cell(w, c))
        ls_ob_csv_number(w->ob, v);
    if (text_col(w, c)) {
        char b[64];
        text_cell(w, text ? text : ls_eng(w->rp, b, sizeof b, v, ""));
    }
    w->cell++;
}

void ls_wr_cell_eng(ls_wr *w, double v, const char *unit, const char *mark)
{
    const ls_wr_col *c = next_col(w);
    if (!c)
        return;
    if (w->tjson && c->json)
        ls_jw_num(&w->jw, c->json, v);
    if (csv_cell(w, c))
        ls_ob_csv_number(w->ob, v);
    if (text_col(w, c)) {
        char b[72];
        size_t m = mark ? strlen(mark) : 0;
        if (m >= 8)
            m = 0;
        if (m)
            memcpy(b, mark, m);
        ls_eng(w->rp, b + m, sizeof b - m, v, unit);
        text_cell(w, b);
    }
    w->cell++;
}

void ls_wr_cell_int(ls_wr *w, long long v)
{
    const ls_wr_col *c = next_col(w);
    if (!c)
        return;
    char b[32];
    snprintf(b, sizeof b, "%lld", v);
    if (w->tjson && c->json)
        ls_jw_int(&w->jw, c->json, v);
    if (csv_cell(w, c))
        ls_ob_puts(w->ob, b);
    if (text_col(w, c))
        text_cell(w, b);
    w->cell++;
}

void ls_wr_cell_str(ls_wr *w, const char *s)
{
    const ls_wr_col *c = next_col(w);
    if (!c)
        return;
    if (w->tjson && c->json)
        ls_jw_str(&w->jw, c->json, s);
    if (csv_cell(w, c))
        ls_ob_csv_field(w->ob, s ? s : "");
    if (text_col(w, c))
        text_cell(w, s ? s : "");
    w->cell++;
}

void ls_wr_cell_null(ls_wr *w, const char *why)
{
    const ls_wr_col *c = next_col(w);
    if (!c)
        return;
    if (w->tjson && c->json)
        ls_jw_null(&w->jw, c->json, why);
    csv_cell(w, c);
    if (text_col(w, c))
        text_cell(w, "");
    w->cell++;
}

void ls_wr_cell_bool(ls_wr *w, bool v, const char *text)
{
    const ls_wr_col *c = next_col(w);
    if (!c)
        return;
    if (w->tjson && c->json)
        ls_jw_bool(&w->jw, c->json, v);
    if (csv_cell(w, c))
        ls_ob_puts(w->ob, v ? "true" : "false");
    if (text_col(w, c))
        text_cell(w, text ? text : v ? "true" : "false");
    w->cell++;
}

void ls_wr_row(ls_wr *w)
{
    switch (w->rp->fmt) {
    case FMT_JSON:
        if (w->cell && w->tjson)
            ls_jw_end(&w->jw);
        break;
    case FMT_CSV:
        if (w->tcsv && w->ob)
            ls_ob_putc(w->ob, '\n');
        break;
    case FMT_TEXT:
        if (w->ttext && !w->lost) {
            const char *cells[LS_WR_MAXCOL];
            int k = 0;
            for (int c = 0; c < w->ncol && k < LS_TABLE_MAXCOL; c++)
                if (w->cols[c].head)
                    cells[k++] = w->rbuf + w->off[c];
            ls_t_row(&w->tab, cells);
        }
        break;
    default: break;
    }
    w->cell = 0;
    w->rlen = 0;
    w->csv_first = true;
}

/* CSV: hand the table's rows on (the block stays for a field report). */
static int csv_table_end(ls_wr *w)
{
    if (!w->ob)
        return -1;
    ls_ob_flush(w->ob);
    if (!w->fields) {
        free(w->ob);
        w->ob = NULL;
    }
    return 0;
}

int ls_wr_table_end(ls_wr *w)
{
    int rc = w->lost ? -1 : 0;
    switch (w->rp->fmt) {
    case FMT_JSON:
        if (w->tjson)
            ls_jw_end(&w->jw);
        break;
    case FMT_CSV:
        if (w->tcsv)
            rc |= csv_table_end(w);
        break;
    case FMT_TEXT:
        if (!w->ttext)
            break;
        if (w->tab.rows || w->tab.failed || !w->skip_empty)   /* a lost row is told */
            rc |= ls_t_print(&w->tab, w->rp->out, &w->rp->nomem, &w->rp->nomem_bytes);
        else
            free(w->tab.text);
        memset(&w->tab, 0, sizeof w->tab);
        break;
    default: break;
    }
    w->cols = NULL;
    w->ncol = 0;
    w->lost = false;
    return rc;
}
