/* diag.c — diagnostics: collection and printing with the source line and a caret. */
#include "base/diag.h"

#include <assert.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

void ls_diags_init(ls_diags *d, ls_arena *a)
{
    memset(d, 0, sizeof *d);
    d->arena = a;
    d->max_errors = 200;
}

void ls_diags_free(ls_diags *d)
{
    ls_hash_free(&d->seen);
    for (int i = 0; i < d->nfiles; i++)
        free(d->files[i].line_start);
    free(d->files);
    free(d->items);
    memset(d, 0, sizeof *d);
}

/* Register text (already in the arena, NUL-terminated at len) under path:
 * the line index is built here.  Its id, or -1 when out of memory. */
static int register_owned(ls_diags *d, const char *path, const char *text, unsigned len)
{
    if (d->nfiles == d->cap_files) {
        int cap = d->cap_files ? d->cap_files * 2 : 8;
        ls_file *f = realloc(d->files, (size_t)cap * sizeof *f);
        if (!f)
            return -1;
        d->files = f;
        d->cap_files = cap;
    }
    ls_file *f = &d->files[d->nfiles];
    f->path = ls_arena_strdup(d->arena, path);
    f->text = text;
    f->len = len;
    /* Line starts, for locations: memchr runs many bytes a step. */
    int lines = 1;
    const char *end = text + len;
    for (const char *c = text; (c = memchr(c, '\n', (size_t)(end - c))) != NULL; c++)
        lines++;
    f->line_start = malloc((size_t)lines * sizeof *f->line_start);
    if (!f->path || !f->line_start) {
        free(f->line_start);
        return -1;
    }
    int k = 0;
    f->line_start[k++] = 0;
    for (const char *c = text; (c = memchr(c, '\n', (size_t)(end - c))) != NULL; c++)
        f->line_start[k++] = (unsigned)(c - text) + 1;
    f->nlines = lines;
    return d->nfiles++;
}

int ls_sources_add(ls_diags *d, const char *path, const char *text, unsigned len)
{
    const char *copy = ls_arena_strndup(d->arena, text, len);
    return copy ? register_owned(d, path, copy, len) : -1;
}

int ls_sources_adopt(ls_diags *d, const char *path, const char *text, unsigned len)
{
    return register_owned(d, path, text, len);
}

void ls_sources_truncate(ls_diags *d, int nfiles)
{
    while (d->nfiles > nfiles)
        free(d->files[--d->nfiles].line_start);
}

/* Length of the well-formed UTF-8 sequence at s (n bytes left), or 0 when
 * the byte at s does not start one (RFC 3629, table 3-7 of Unicode). */
static unsigned utf8_len(const unsigned char *s, size_t n)
{
    unsigned char c = s[0];
    if (c < 0x80)
        return 1;
    unsigned k;
    unsigned char lo = 0x80, hi = 0xBF;   /* the range of the second byte */
    if (c >= 0xC2 && c <= 0xDF)
        k = 2;
    else if (c >= 0xE0 && c <= 0xEF) {
        k = 3;
        if (c == 0xE0) lo = 0xA0;          /* no overlong forms */
        if (c == 0xED) hi = 0x9F;          /* no surrogates */
    } else if (c >= 0xF0 && c <= 0xF4) {
        k = 4;
        if (c == 0xF0) lo = 0x90;
        if (c == 0xF4) hi = 0x8F;          /* nothing above U+10FFFF */
    } else
        return 0;
    if (n < k || s[1] < lo || s[1] > hi)
        return 0;
    for (unsigned i = 2; i < k; i++)
        if ((s[i] & 0xC0) != 0x80)
            return 0;
    return k;
}

int ls_sources_check_utf8(ls_diags *d, int file)
{
    ls_file *f = &d->files[file];
    unsigned char *t = (unsigned char *)f->text;
    int bad = 0, last_line = -1;
    for (size_t i = 0; i < f->len;) {
        /* ASCII, the bulk of a circuit file, eight bytes a step */
        uint64_t w;
        while (i + 8 <= f->len && (memcpy(&w, t + i, 8), (w & 0x8080808080808080ull) == 0))
            i += 8;
        if (i >= f->len)
            break;
        unsigned k = utf8_len(t + i, f->len - i);
        if (k) {
            i += k;
            continue;
        }
        int line, col;
        ls_loc_linecol(d, file, (unsigned)i, &line, &col);
        if (line != last_line) /* one error a line: a Latin-1 file would flood */
            ls_error(d, (ls_loc){file, (unsigned)i, (unsigned)i + 1},
                     "byte 0x%02X is not UTF-8 (text must be UTF-8; a Latin-1 or Windows-1252 file needs converting)",
                     t[i]);
        last_line = line;
        t[i] = '?';
        bad++;
        i++;
    }
    return bad;
}

void ls_loc_linecol(const ls_diags *d, int file, unsigned off, int *line, int *col)
{
    const ls_file *f = &d->files[file];
    int lo = 0, hi = f->nlines - 1;
    while (lo < hi) { /* last line starting at or before off */
        int mid = (lo + hi + 1) / 2;
        if (f->line_start[mid] <= off)
            lo = mid;
        else
            hi = mid - 1;
    }
    int c = 1;
    for (unsigned i = f->line_start[lo]; i < off && i < f->len; i++)
        c += ((unsigned char)f->text[i] & 0xC0) != 0x80;
    *line = lo + 1;
    *col = c;
}

static void add(ls_diags *d, ls_severity sev, ls_loc loc, const char *code,
                const char *fmt, va_list ap)
{
    char buf[1024];
    vsnprintf(buf, sizeof buf, fmt, ap);
    /* A mistake inside a block used many times is reported once, not once per
     * instance: the same message at the same place is a repeat. */
    if (sev == LS_SEV_NOTE) {
        if (d->dropping)
            return;
    } else {
        char *key = ls_arena_printf(d->arena, "%d:%u:%d:%s", loc.file, loc.start, (int)sev, buf);
        d->dropping = key && ls_hash_get(&d->seen, key) >= 0;
        if (d->dropping)
            return;
        if (key)
            ls_hash_put(&d->seen, key, 1);
    }
    if (sev == LS_SEV_ERROR) {
        d->errors++;
        if (strncmp(buf, "out of memory", 13) == 0)
            d->nomem++;
        if (d->errors > d->max_errors)
            return;
    } else if (sev == LS_SEV_WARNING) {
        d->warnings++;
    }
    if (d->n == d->cap) {
        int cap = d->cap ? d->cap * 2 : 16;
        ls_diag *p = realloc(d->items, (size_t)cap * sizeof *p);
        if (!p) { /* lost: counted as an error, so no report goes out without it */
            d->lost++;
            if (sev != LS_SEV_ERROR)
                d->errors++;
            return;
        }
        d->items = p;
        d->cap = cap;
    }
    ls_diag *g = &d->items[d->n++];
    g->sev = sev;
    g->loc = loc;
    g->code = code;
    g->msg = ls_arena_strdup(d->arena, buf);
    if (!g->msg)
        g->msg = "out of memory";
}

void ls_error(ls_diags *d, ls_loc loc, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    add(d, LS_SEV_ERROR, loc, NULL, fmt, ap);
    va_end(ap);
}

void ls_warning(ls_diags *d, ls_loc loc, const char *code, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    add(d, LS_SEV_WARNING, loc, code, fmt, ap);
    va_end(ap);
}

void ls_note(ls_diags *d, ls_loc loc, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    add(d, LS_SEV_NOTE, loc, NULL, fmt, ap);
    va_end(ap);
}

char *ls_loc_str(const ls_diags *d, ls_loc loc, char *buf, size_t n)
{
    if (loc.file < 0 || loc.file >= d->nfiles) {
        if (n)
            buf[0] = 0;
        return buf;
    }
    int line, col;
    ls_loc_linecol(d, loc.file, loc.start, &line, &col);
    snprintf(buf, n, "%s:%d:%d", d->files[loc.file].path, line, col);
    return buf;
}

/* The source line of a location, then a caret under its first character
 * (tabs kept so the caret lines up). */
static void print_excerpt(const ls_diags *d, ls_loc loc, FILE *out)
{
    const ls_file *f = &d->files[loc.file];
    int line, col;
    ls_loc_linecol(d, loc.file, loc.start, &line, &col);
    unsigned s = f->line_start[line - 1], e = s;
    while (e < f->len && f->text[e] != '\n' && f->text[e] != '\r')
        e++;
    unsigned line_end = e;
    if (e - s > 400) /* a pathological line: show a window around the column */
        e = s + 400 < loc.start + 40 ? loc.start + 40 : s + 400;
    if (e > line_end) /* never past the end of this line */
        e = line_end;
    fputs("    ", out);
    fwrite(f->text + s, 1, e - s, out);
    fputs("\n    ", out);
    for (unsigned i = s; i < loc.start && i < e; i++) {
        unsigned char c = (unsigned char)f->text[i];
        if ((c & 0xC0) == 0x80)
            continue;
        fputc(c == '\t' ? '\t' : ' ', out);
    }
    fputs("^\n", out);
}

void ls_diags_print(const ls_diags *d, FILE *out)
{
    ls_diags_print_sel(d, out, NULL, NULL);
}

void ls_diags_print_sel(const ls_diags *d, FILE *out, bool (*skip)(const ls_diag *g, void *ctx), void *ctx)
{
    static const char *const sev[] = {"note", "warning", "error"};
    for (int i = 0; i < d->n; i++) {
        const ls_diag *g = &d->items[i];
        if (skip && skip(g, ctx))
            continue;
        assert(g->sev >= 0 && (size_t)g->sev < sizeof sev / sizeof sev[0]);   /* a word per ls_severity */
        if (g->loc.file >= 0) {
            char where[512];
            fprintf(out, "%s: %s: %s\n", ls_loc_str(d, g->loc, where, sizeof where),
                    sev[g->sev], g->msg);
            print_excerpt(d, g->loc, out);
        } else {
            fprintf(out, "loadstack: %s: %s\n", sev[g->sev], g->msg);
        }
    }
    if (d->errors > d->max_errors)
        fprintf(out, "loadstack: note: %d more errors not shown\n", d->errors - d->max_errors);
    if (d->lost)
        fprintf(out, "loadstack: error: out of memory keeping the diagnostics: %d could not be kept (%zu bytes "
                "each)\n", d->lost, sizeof(ls_diag));
}
