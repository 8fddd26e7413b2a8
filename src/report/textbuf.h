/* textbuf.h — what the text side of the reports is made of, inside report/:
 * an output block handed to the stream in large writes (ls_obuf) and aligned
 * tables of text cells (ls_table).
 *
 * A large circuit's report is millions of short pieces (a grid of a million
 * nodes writes some 300 MB of JSON).  Each stdio call costs more than the copy
 * it makes, so the writers put their pieces into one block and hand it to the
 * stream in large fwrite calls.  A writer flushes its block before anything
 * else writes to the stream and before it returns, so the order of the output
 * is the order of the calls.  Errors stay on the stream (ferror). */
#ifndef LS_TEXTBUF_H
#define LS_TEXTBUF_H

#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>

typedef struct ls_obuf {
    FILE *f;
    char *p;              /* next free byte of b */
    char b[32768];
} ls_obuf;

/* Start writing to f. */
void ls_ob_init(ls_obuf *o, FILE *f);
/* Hand what the block holds to the stream. */
void ls_ob_flush(ls_obuf *o);
/* Bytes left in the block. */
size_t ls_ob_room(const ls_obuf *o);
void ls_ob_write(ls_obuf *o, const char *s, size_t n);
void ls_ob_puts(ls_obuf *o, const char *s);
void ls_ob_putc(ls_obuf *o, char c);
void ls_ob_printf(ls_obuf *o, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
/* The shortest exact text of v, or nothing when not finite: a CSV value. */
void ls_ob_csv_number(ls_obuf *o, double v);
/* s as one CSV field, quoted when it holds a comma, a quote or a line end. */
void ls_ob_csv_field(ls_obuf *o, const char *s);

/* Display width of a UTF-8 string (code points). */
int ls_width(const char *s);
/* The byte length of s, and its display width in *w. */
size_t ls_measure(const char *s, int *w);
/* k spaces (none when k <= 0). */
void ls_spaces(ls_obuf *out, int k);
/* s (len bytes, sw columns) padded with spaces to w columns, on the left
 * (right-aligned) or the right. */
void ls_pad(ls_obuf *out, const char *s, size_t len, int sw, int w, bool right);

/* ---- aligned text tables ----
 *
 * The cells of all rows live in one growing text buffer, NUL-terminated and
 * back to back in row order, and the column widths are kept up to date as rows
 * arrive, so a table of a million rows costs no per-cell allocation and one
 * pass to print, which reads the cells in the order they were stored.  Set
 * ncol, head and right (and the layout fields) before the first row. */
#define LS_TABLE_MAXCOL 16   /* the widest table, a sweep's: the let and up to 12 quantities */

typedef struct ls_table {
    int ncol;
    const char *head[LS_TABLE_MAXCOL];
    bool right[LS_TABLE_MAXCOL];
    /* layout (zero: the reports' own: two spaces before each line and between
     * columns, each column as wide as its widest cell) */
    const char *lead, *gap;  /* NULL: two spaces */
    int minw[LS_TABLE_MAXCOL];  /* display columns a cell is padded to at least */
    bool fixed;              /* columns exactly minw wide, as printf's %*s pads: a longer cell
                                overflows its row only (rows need not be kept to measure) */
    char *text;           /* NUL-terminated cells, back to back */
    size_t len, text_cap;
    int rows;
    int w[LS_TABLE_MAXCOL];  /* widest cell of each column so far */
    bool failed;          /* out of memory: rows after it are dropped (t_print tells the report) */
    size_t failed_bytes;  /* what the failed allocation asked for */
} ls_table;

/* Append one row of ncol cells (NULL counts as empty); copies the text. */
void ls_t_row(ls_table *t, const char *const *cells);
/* Print the heading and the rows aligned to f, then empty the table.  A
 * table that lost rows for want of memory says so in *nomem and
 * *nomem_bytes (a report's rp->nomem: what is printed is not the whole
 * table).  Returns 0, or -1 then. */
int ls_t_print(ls_table *t, FILE *f, const char **nomem, size_t *nomem_bytes);

#endif
