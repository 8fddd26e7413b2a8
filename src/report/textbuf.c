/* textbuf.c — buffered report output and aligned text tables (textbuf.h). */
#include "report/textbuf.h"

#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

#include "base/numfmt.h"

/* ---- buffered output -------------------------------------------------------------------
 *
 * A large circuit's report is millions of short pieces (a grid of a million
 * nodes writes some 300 MB of JSON).  Each stdio call costs more than the copy
 * it makes, so the writers below put their pieces into one block and hand it to
 * the stream in large fwrite calls.  A writer flushes its block before anything
 * else writes to the stream and before it returns, so the order of the output
 * is the order of the calls.  Errors stay on the stream (ferror), as before. */

void ls_ob_init(ls_obuf *o, FILE *f)
{
    o->f = f;
    o->p = o->b;
}

void ls_ob_flush(ls_obuf *o)
{
    if (o->p != o->b)
        fwrite(o->b, 1, (size_t)(o->p - o->b), o->f);
    o->p = o->b;
}

size_t ls_ob_room(const ls_obuf *o)
{
    return (size_t)(o->b + sizeof o->b - o->p);
}

void ls_ob_write(ls_obuf *o, const char *s, size_t n)
{
    if (n > ls_ob_room(o)) {
        ls_ob_flush(o);
        if (n > sizeof o->b) {
            fwrite(s, 1, n, o->f);
            return;
        }
    }
    memcpy(o->p, s, n);
    o->p += n;
}

void ls_ob_puts(ls_obuf *o, const char *s)
{
    ls_ob_write(o, s, strlen(s));
}

void ls_ob_putc(ls_obuf *o, char c)
{
    if (!ls_ob_room(o))
        ls_ob_flush(o);
    *o->p++ = c;
}

void ls_ob_printf(ls_obuf *o, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    size_t room = ls_ob_room(o);
    int n = vsnprintf(o->p, room, fmt, ap);
    va_end(ap);
    if (n < 0)
        return;
    if ((size_t)n < room) {
        o->p += n;
        return;
    }
    ls_ob_flush(o);
    va_start(ap, fmt);
    if ((size_t)n < sizeof o->b) {
        vsnprintf(o->p, sizeof o->b, fmt, ap);
        o->p += n;
    } else {
        vfprintf(o->f, fmt, ap);
    }
    va_end(ap);
}

/* The shortest exact text, or nothing when not finite: a CSV value */
void ls_ob_csv_number(ls_obuf *o, double v)
{
    if (!isfinite(v))
        return;
    if (ls_ob_room(o) < LS_NUM_MAX)
        ls_ob_flush(o);
    o->p += ls_num_shortest(o->p, v);
}

void ls_ob_csv_field(ls_obuf *o, const char *s)
{
    if (strpbrk(s, ",\"\n\r")) {
        ls_ob_putc(o, '"');
        for (; *s; s++) {
            if (*s == '"')
                ls_ob_putc(o, '"');
            ls_ob_putc(o, *s);
        }
        ls_ob_putc(o, '"');
    } else {
        ls_ob_puts(o, s);
    }
}

/* Display width of a UTF-8 string (code points). */
int ls_width(const char *s)
{
    int w = 0;
    for (; *s; s++)
        w += ((unsigned char)*s & 0xC0) != 0x80;
    return w;
}

/* The byte length of s, and its display width in *w: one pass for both (the
 * table code measures every cell). */
size_t ls_measure(const char *s, int *w)
{
    const char *p = s;
    int k = 0;
    for (; *p; p++)
        k += ((unsigned char)*p & 0xC0) != 0x80;
    *w = k;
    return (size_t)(p - s);
}

/* k spaces, written in blocks rather than one at a time (a report may have
 * millions of cells). */
void ls_spaces(ls_obuf *out, int k)
{
    const char blanks[] = "                                                                ";
    while (k > 0) {
        int c = k < (int)sizeof blanks - 1 ? k : (int)sizeof blanks - 1;
        ls_ob_write(out, blanks, (size_t)c);
        k -= c;
    }
}

/* s (len bytes, sw columns) padded with spaces to w columns, on the left or
 * the right */
void ls_pad(ls_obuf *out, const char *s, size_t len, int sw, int w, bool right)
{
    int k = w - sw;
    if (right)
        ls_spaces(out, k);
    ls_ob_write(out, s, len);
    if (!right)
        ls_spaces(out, k);
}

/* ---- a small table printer for aligned text columns ---------------------------- */

/* The cells of all rows live in one growing text buffer, NUL-terminated and
 * back to back in row order, and the column widths are kept up to date as rows
 * arrive, so a table of a million rows costs no per-cell allocation and one
 * pass to print, which reads the cells in the order they were stored. */

/* Append one row of ncol cells (NULL counts as empty); copies the text. */
void ls_t_row(ls_table *t, const char *const *cells)
{
    if (t->failed)
        return;
    size_t n[LS_TABLE_MAXCOL], total = 0;
    int cw[LS_TABLE_MAXCOL];
    for (int i = 0; i < t->ncol; i++) {
        n[i] = ls_measure(cells[i] ? cells[i] : "", &cw[i]) + 1;
        total += n[i];
    }
    if (t->len + total > t->text_cap) {
        size_t cap = t->text_cap ? t->text_cap * 2 : 4096;
        while (cap < t->len + total)
            cap *= 2;
        char *b = realloc(t->text, cap);
        if (!b) {
            t->failed = true;
            t->failed_bytes = cap;
            return;
        }
        t->text = b;
        t->text_cap = cap;
    }
    for (int i = 0; i < t->ncol; i++) {
        const char *c = cells[i] ? cells[i] : "";
        memcpy(t->text + t->len, c, n[i]);
        t->len += n[i];
        t->w[i] = cw[i] > t->w[i] ? cw[i] : t->w[i];
    }
    t->rows++;
}

/* Print the heading and the rows aligned to f, then empty the table.
 * A table that lost rows for want of memory marks the report (rp->nomem):
 * what is printed is not the whole table.  Returns 0, or -1 then. */
int ls_t_print(ls_table *t, FILE *f, const char **nomem, size_t *nomem_bytes)
{
    bool lost = t->failed;
    if (lost) {
        *nomem = "a table of the text report";
        *nomem_bytes = t->failed_bytes;
    }
    ls_obuf ob, *out = &ob;
    int w[LS_TABLE_MAXCOL];
    const char *lead = t->lead ? t->lead : "  ", *gap = t->gap ? t->gap : "  ";
    for (int c = 0; c < t->ncol; c++) {
        w[c] = ls_width(t->head[c]);
        w[c] = t->w[c] > w[c] ? t->w[c] : w[c];
        w[c] = t->fixed || t->minw[c] > w[c] ? t->minw[c] : w[c];
    }
    ls_ob_init(out, f);
    ls_ob_puts(out, lead);
    for (int c = 0; c < t->ncol; c++) {
        if (c + 1 == t->ncol && !t->right[c])
            ls_ob_puts(out, t->head[c]);
        else
            ls_pad(out, t->head[c], strlen(t->head[c]), ls_width(t->head[c]), w[c], t->right[c]);
        ls_ob_puts(out, c + 1 < t->ncol ? gap : "\n");
    }
    const char *s = t->text;
    for (int r = 0; r < t->rows; r++) {
        ls_ob_puts(out, lead);
        for (int c = 0; c < t->ncol; c++) {
            int sw;
            size_t len = ls_measure(s, &sw);
            if (c + 1 == t->ncol && !t->right[c])
                ls_ob_write(out, s, len);
            else
                ls_pad(out, s, len, sw, w[c], t->right[c]);
            ls_ob_puts(out, c + 1 < t->ncol ? gap : "\n");
            s += len + 1;
        }
    }
    ls_ob_flush(out);
    free(t->text);
    t->text = NULL;
    t->len = t->text_cap = 0;
    t->rows = 0;
    t->failed = false;
    memset(t->w, 0, sizeof t->w);
    return lost ? -1 : 0;
}

