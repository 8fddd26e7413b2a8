/* writer.c — the report writer and its text, JSON and CSV backends (writer.h). */
#include "report/writer.h"

#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

#include "base/fmt.h"

void ls_wr_begin(ls_wr *w, ls_report *rp)
{
    memset(w, 0, sizeof *w);
    w->rp = rp;
    if (rp->fmt == FMT_JSON)
        ls_report_json_begin(rp, &w->jw);
}

int ls_wr_finish(ls_wr *w)
{
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

/* Is the report JSON?  The members are written there (and as CSV field rows
 * where asked). */
static bool json(const ls_wr *w)
{
    return w->rp->fmt == FMT_JSON && !w->json_off;
}

/* Does a member go to a CSV field row now? */
static bool csv_row_on(const ls_wr *w)
{
    return w->rp->fmt == FMT_CSV && w->fields && w->rows_on && w->ob;
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

void ls_wr_fields(ls_wr *w, const char *field, const char *value)
{
    if (w->rp->fmt != FMT_CSV)
        return;
    w->fields = w->rows_on = true;
    w->ob = malloc(sizeof *w->ob);
    if (!w->ob) {
        csv_lost(w, "the CSV report", sizeof *w->ob);
        return;
    }
    ls_ob_init(w->ob, w->rp->out);
    ls_ob_csv_field(w->ob, field);
    ls_ob_putc(w->ob, ',');
    ls_ob_csv_field(w->ob, value);
    ls_ob_putc(w->ob, '\n');
}

void ls_wr_csv_rows(ls_wr *w, bool on)
{
    w->rows_on = on;
}

void ls_wr_field_sep(ls_wr *w, const char *sep)
{
    w->sep = sep;
}

void ls_wr_json_members(ls_wr *w, bool on)
{
    w->json_off = !on;
}

/* Note a container opened (every format: the CSV rows' names follow the
 * objects).  An object's key becomes part of the names of the rows inside it. */
static void push(ls_wr *w, const char *key, bool arr)
{
    if (w->depth >= LS_JW_DEPTH) {   /* deeper than the JSON writer goes: counted only */
        w->depth++;
        return;
    }
    w->pat[w->depth] = w->plen;
    w->parr[w->depth++] = arr;
    if (arr || !key || !w->sep || !w->fields)
        return;
    size_t k = strlen(key), s = strlen(w->sep);
    size_t cap = room(&w->path, &w->pcap, w->plen + k + s + 1);
    if (cap) {
        csv_lost(w, "a field name of the CSV report", cap);
        return;
    }
    memcpy(w->path + w->plen, key, k);
    memcpy(w->path + w->plen + k, w->sep, s + 1);
    w->plen += k + s;
}

void ls_wr_obj(ls_wr *w, const char *key)
{
    push(w, key, false);
    if (json(w))
        ls_jw_obj(&w->jw, key);
}

void ls_wr_arr(ls_wr *w, const char *key)
{
    push(w, key, true);
    if (json(w))
        ls_jw_arr(&w->jw, key);
    else if (csv_row_on(w) && key) {
        w->arr_key = key;
        w->jlen = 0;
    }
}

void ls_wr_end(ls_wr *w)
{
    bool arr = false;
    if (w->depth > LS_JW_DEPTH) {
        w->depth--;
    } else if (w->depth > 0) {
        w->plen = w->pat[--w->depth];
        arr = w->parr[w->depth];
        if (w->path)
            w->path[w->plen] = 0;
    }
    if (json(w)) {
        ls_jw_end(&w->jw);
    } else if (csv_row_on(w) && arr && w->arr_key) {
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

void ls_wr_table(ls_wr *w, const char *key, const ls_wr_col *cols, int ncol, const ls_wr_style *style)
{
    ls_wr_style none = {0};
    if (!style)
        style = &none;
    w->cols = cols;
    w->ncol = ncol < LS_WR_MAXCOL ? ncol : LS_WR_MAXCOL;
    w->cell = 0;
    w->skip_empty = style->skip_empty;
    w->hidden = style->hide_text;
    w->csv_none = true;
    for (int c = 0; c < w->ncol; c++)
        w->csv_none &= !cols[c].csv;
    w->csv_first = true;
    w->rlen = 0;
    switch (w->rp->fmt) {
    case FMT_JSON:
        if (json(w))
            ls_jw_arr(&w->jw, key);
        break;
    case FMT_CSV:
        if (w->csv_none)
            break;
        if (!w->ob) {   /* (a report of field rows has its block already) */
            w->ob = malloc(sizeof *w->ob);
            if (!w->ob) {
                csv_lost(w, "the CSV table", sizeof *w->ob);
                return;
            }
            ls_ob_init(w->ob, w->rp->out);
        }
        if (style->csv_more)
            break;
        for (int c = 0; c < w->ncol; c++) {
            if (!cols[c].csv)
                continue;
            if (!w->csv_first)
                ls_ob_putc(w->ob, ',');
            ls_ob_csv_field(w->ob, cols[c].csv);
            w->csv_first = false;
        }
        ls_ob_putc(w->ob, '\n');
        w->csv_first = true;
        break;
    case FMT_TEXT: {
        if (w->hidden)
            break;
        ls_table t = {.lead = style->lead, .gap = style->gap, .fixed = style->fixed};
        for (int c = 0; c < w->ncol; c++) {
            if (!cols[c].head)
                continue;
            t.head[t.ncol] = cols[c].head;
            t.right[t.ncol] = cols[c].right;
            t.minw[t.ncol++] = cols[c].width;
        }
        w->tab = t;
        break;
    }
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

/* Is the open table in the text report? */
static bool text_on(const ls_wr *w)
{
    return w->rp->fmt == FMT_TEXT && !w->hidden;
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

/* Called before a row's first cell: JSON opens the row's object. */
static void row_open(ls_wr *w)
{
    if (json(w))
        ls_jw_obj(&w->jw, NULL);
}

/* The column of the next cell (a row's first cell opens the row), or NULL
 * when the row is full. */
static const ls_wr_col *next_col(ls_wr *w)
{
    if (w->cell == 0 && w->ncol)
        row_open(w);
    return w->cell < w->ncol ? &w->cols[w->cell] : NULL;
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
    if (json(w) && c->json)
        ls_jw_num_why(&w->jw, c->json, v, why);
    if (csv_cell(w, c))
        ls_ob_csv_number(w->ob, v);
    if (text_on(w) && c->head) {
        char b[64];
        text_cell(w, text ? text : ls_eng(w->rp, b, sizeof b, v, ""));
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
    if (json(w) && c->json)
        ls_jw_int(&w->jw, c->json, v);
    if (csv_cell(w, c))
        ls_ob_puts(w->ob, b);
    if (text_on(w) && c->head)
        text_cell(w, b);
    w->cell++;
}

void ls_wr_cell_bool(ls_wr *w, bool v)
{
    const ls_wr_col *c = next_col(w);
    if (!c)
        return;
    const char *s = v ? "true" : "false";
    if (json(w) && c->json)
        ls_jw_bool(&w->jw, c->json, v);
    if (csv_cell(w, c))
        ls_ob_puts(w->ob, s);
    if (text_on(w) && c->head)
        text_cell(w, s);
    w->cell++;
}

void ls_wr_cell_str(ls_wr *w, const char *s)
{
    const ls_wr_col *c = next_col(w);
    if (!c)
        return;
    if (json(w) && c->json)
        ls_jw_str(&w->jw, c->json, s);
    if (csv_cell(w, c))
        ls_ob_csv_field(w->ob, s ? s : "");
    if (text_on(w) && c->head)
        text_cell(w, s ? s : "");
    w->cell++;
}

void ls_wr_row(ls_wr *w)
{
    switch (w->rp->fmt) {
    case FMT_JSON:
        if (w->cell && json(w))
            ls_jw_end(&w->jw);
        break;
    case FMT_CSV:
        if (w->ob && !w->csv_none)
            ls_ob_putc(w->ob, '\n');
        break;
    case FMT_TEXT:
        if (!w->lost && !w->hidden) {
            const char *cells[LS_WR_MAXCOL];
            int k = 0;
            for (int c = 0; c < w->ncol; c++)
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

int ls_wr_table_end(ls_wr *w)
{
    int rc = w->lost ? -1 : 0;
    switch (w->rp->fmt) {
    case FMT_JSON:
        if (json(w))
            ls_jw_end(&w->jw);
        break;
    case FMT_CSV:
        if (w->csv_none) {
            break;
        } else if (w->ob) {
            ls_ob_flush(w->ob);
            if (!w->fields) {
                free(w->ob);
                w->ob = NULL;
            }
        } else {
            rc = -1;
        }
        break;
    case FMT_TEXT:
        if (w->hidden)
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
    w->lost = w->hidden = w->csv_none = false;
    return rc;
}
