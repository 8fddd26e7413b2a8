/* jsonw.c — the JSON writer: layout, escapes, shortest numbers, and the
 * reason of every null. */
#include "report/jsonw.h"

#include <assert.h>

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "base/numfmt.h"

#ifndef LS_VERSION
#define LS_VERSION "0.0.0"
#endif

/* ---- the block -------------------------------------------------------------------------- */

/* Hand the block to the stream and empty it. */
static void flush(ls_jw *w)
{
    if (w->p != w->b)
        fwrite(w->b, 1, (size_t)(w->p - w->b), w->f);
    w->p = w->b;
}

/* Free bytes left in the block. */
static size_t room(const ls_jw *w)
{
    return (size_t)(w->b + sizeof w->b - w->p);
}

/* n bytes of s into the block (straight to the stream when larger than it). */
static void put(ls_jw *w, const char *s, size_t n)
{
    if (n > room(w)) {
        flush(w);
        if (n > sizeof w->b) {
            fwrite(s, 1, n, w->f);
            return;
        }
    }
    memcpy(w->p, s, n);
    w->p += n;
}

/* A NUL-terminated string, unescaped. */
static void put_str(ls_jw *w, const char *s)
{
    put(w, s, strlen(s));
}

/* One byte. */
static void put_chr(ls_jw *w, char c)
{
    if (!room(w))
        flush(w);
    *w->p++ = c;
}

/* Length of the valid UTF-8 sequence at p (1..4), or 0 when the bytes there
 * are not one (a stray continuation byte, an overlong form, a surrogate, a
 * code point above U+10FFFF, a sequence cut short). */
static int utf8_len(const unsigned char *p)
{
    unsigned char c = p[0];
    int n;
    unsigned char lo = 0x80, hi = 0xBF; /* the second byte's range */
    if (c >= 0xC2 && c <= 0xDF)
        n = 2;
    else if (c >= 0xE0 && c <= 0xEF)
        n = 3, lo = c == 0xE0 ? 0xA0 : 0x80, hi = c == 0xED ? 0x9F : 0xBF;
    else if (c >= 0xF0 && c <= 0xF4)
        n = 4, lo = c == 0xF0 ? 0x90 : 0x80, hi = c == 0xF4 ? 0x8F : 0xBF;
    else
        return 0;
    if (p[1] < lo || p[1] > hi)
        return 0;
    for (int i = 2; i < n; i++)
        if ((p[i] & 0xC0) != 0x80)
            return 0;
    return n;
}

/* A JSON string literal of s: quotes, backslashes and control bytes escaped;
 * valid UTF-8 copied; a byte that is not part of valid UTF-8 (a Latin-1 file
 * name on the command line) becomes U+FFFD, so the output is always UTF-8. */
static void string(ls_jw *w, const char *s)
{
    static const char hex[] = "0123456789abcdef";
    put_chr(w, '"');
    const unsigned char *p = (const unsigned char *)s;
    while (*p) {
        const unsigned char *q = p;
        while (*q >= 0x20 && *q < 0x80 && *q != '"' && *q != '\\')
            q++;
        put(w, (const char *)p, (size_t)(q - p)); /* a run that needs no escape: one copy */
        if (!*q)
            break;
        if (*q >= 0x80) {
            int n = utf8_len(q);
            if (n)
                put(w, (const char *)q, (size_t)n);
            else
                put(w, "\\ufffd", 6);
            p = q + (n ? n : 1);
            continue;
        }
        char e[6] = {'\\', 'u', '0', '0', hex[*q >> 4], hex[*q & 15]};
        switch (*q) {
        case '"': put(w, "\\\"", 2); break;
        case '\\': put(w, "\\\\", 2); break;
        case '\n': put(w, "\\n", 2); break;
        case '\r': put(w, "\\r", 2); break;
        case '\t': put(w, "\\t", 2); break;
        default: put(w, e, 6); break; /* the other controls */
        }
        p = q + 1;
    }
    put_chr(w, '"');
}

/* ---- layout -------------------------------------------------------------------------------- */

/* A line break and the indent of a member at depth (two spaces a level). */
static void newline(ls_jw *w, int depth)
{
    static const char blanks[] = "                                ";
    put_chr(w, '\n');
    int k = 2 * depth;
    put(w, blanks, (size_t)(k < (int)sizeof blanks - 1 ? k : (int)sizeof blanks - 1));
}

/* The separator before a member of the innermost container, and its key. */
static void member(ls_jw *w, const char *key)
{
    int d = w->depth;
    /* an object's members are named, an array's values are not, and the top
     * level holds one value (RFC 8259 sections 2, 4, 5): anything else is a
     * report's programming error */
    assert(d == 0 ? key == NULL : (key != NULL) == w->obj[d - 1]);
    if (d > 0) {
        if (w->n[d - 1]++)
            put_chr(w, ',');
        if (d <= w->wrap)
            newline(w, d);
        else if (w->n[d - 1] > 1)
            put_chr(w, ' ');
    }
    if (key && d > 0 && w->obj[d - 1]) {
        string(w, key);
        put(w, ": ", 2);
    }
}

void ls_jw_init(ls_jw *w, FILE *f, int wrap)
{
    w->f = f;
    w->depth = 0;
    w->wrap = wrap;
    w->whys = NULL;
    w->nwhy = w->capwhy = 0;
    w->failed = false;
    w->failed_bytes = 0;
    w->ahead = NULL;
    w->p = w->b;
}

/* Open an object or an array as member key of the innermost container. */
static void open_container(ls_jw *w, const char *key, bool obj)
{
    member(w, key);
    put_chr(w, obj ? '{' : '[');
    if (w->depth == LS_JW_DEPTH) { /* a programming error (the reports nest 4 deep): flagged */
        w->failed = true;
        return;
    }
    w->obj[w->depth] = obj;
    w->n[w->depth] = 0;
    w->why0[w->depth] = w->nwhy;
    w->depth++;
}

void ls_jw_obj(ls_jw *w, const char *key) { open_container(w, key, true); }
void ls_jw_arr(ls_jw *w, const char *key) { open_container(w, key, false); }

/* The "why" member of the innermost object, from its remembered nulls. */
static void why_member(ls_jw *w)
{
    int d = w->depth - 1, first = w->why0[d];
    if (w->nwhy == first)
        return;
    member(w, "why");
    put_chr(w, '{');
    for (int i = first; i < w->nwhy; i++) {
        if (i > first)
            put(w, ", ", 2);
        string(w, w->whys[i].key);
        put(w, ": ", 2);
        string(w, w->whys[i].why);
        free(w->whys[i].key);
    }
    put_chr(w, '}');
    w->nwhy = first;
}

void ls_jw_end(ls_jw *w)
{
    if (w->depth == 0)
        return;
    int d = w->depth - 1;
    if (w->obj[d])
        why_member(w);
    if (w->depth <= w->wrap && w->n[d])
        newline(w, d);
    put_chr(w, w->obj[d] ? '}' : ']');
    w->depth--;
}

/* Remember why member `key` of the innermost object is null.  A null in an
 * array has no key to explain; the reports put none there. */
static void remember(ls_jw *w, const char *key, const char *why)
{
    if (!key || w->depth == 0 || !w->obj[w->depth - 1])
        return;
    if (w->nwhy == w->capwhy) {
        int cap = w->capwhy ? 2 * w->capwhy : 16;
        ls_jw_why *n = realloc(w->whys, (size_t)cap * sizeof *n);
        if (!n) {
            w->failed = true;
            w->failed_bytes = (size_t)cap * sizeof *n;
            return;
        }
        w->whys = n;
        w->capwhy = cap;
    }
    char *k = strdup(key);
    if (!k) {
        w->failed = true;
        w->failed_bytes = strlen(key) + 1;
        return;
    }
    w->whys[w->nwhy++] = (ls_jw_why){k, why};
}

/* ---- values ------------------------------------------------------------------------------- */

const char *ls_jw_why_of(double v)
{
    return isinf(v) ? LS_WHY_UNBOUNDED : LS_WHY_UNDEFINED;
}

void ls_jw_null(ls_jw *w, const char *key, const char *why)
{
    member(w, key);
    put(w, "null", 4);
    remember(w, key, why);
}

void ls_jw_num_why(ls_jw *w, const char *key, double v, const char *why)
{
    if (!isfinite(v)) {
        ls_jw_null(w, key, why);
        return;
    }
    member(w, key);
    size_t n;
    const char *t = w->ahead ? ls_numahead_take(w->ahead, v, &n) : NULL;
    if (t) {   /* the same bits, formatted ahead: the same text */
        put(w, t, n);
        return;
    }
    if (room(w) < LS_NUM_MAX)
        flush(w);
    w->p += ls_num_shortest(w->p, v);
}

void ls_jw_num(ls_jw *w, const char *key, double v)
{
    ls_jw_num_why(w, key, v, isfinite(v) ? NULL : ls_jw_why_of(v));
}

void ls_jw_int(ls_jw *w, const char *key, long long v)
{
    char b[24];
    int n = snprintf(b, sizeof b, "%lld", v);
    member(w, key);
    put(w, b, (size_t)n);
}

void ls_jw_uint(ls_jw *w, const char *key, unsigned long long v)
{
    char b[24];
    int n = snprintf(b, sizeof b, "%llu", v);
    member(w, key);
    put(w, b, (size_t)n);
}

void ls_jw_bool(ls_jw *w, const char *key, bool v)
{
    member(w, key);
    put_str(w, v ? "true" : "false");
}

void ls_jw_str(ls_jw *w, const char *key, const char *s)
{
    if (!s) {
        ls_jw_null(w, key, LS_WHY_NONE);
        return;
    }
    member(w, key);
    string(w, s);
}

void ls_jw_meta(ls_jw *w, const char *command, const char *file, const char *const *sets, int nsets)
{
    int wrap = w->wrap;
    w->wrap = w->depth; /* meta on one line */
    ls_jw_obj(w, "meta");
    ls_jw_str(w, "program", "loadstack");
    ls_jw_str(w, "version", LS_VERSION);
    ls_jw_str(w, "command", command);
    ls_jw_str(w, "file", file);
    ls_jw_obj(w, "set");
    for (int i = 0; i < nsets; i++) {
        const char *eq = strchr(sets[i], '=');
        if (!eq)
            continue;
        size_t n = (size_t)(eq - sets[i]);
        char key[256];
        if (n >= sizeof key)
            n = sizeof key - 1;
        memcpy(key, sets[i], n);
        key[n] = '\0';
        ls_jw_str(w, key, eq + 1);
    }
    ls_jw_end(w);
    ls_jw_end(w);
    w->wrap = wrap;
}

int ls_jw_finish(ls_jw *w)
{
    while (w->depth > 0)
        ls_jw_end(w);
    put_chr(w, '\n');
    flush(w);
    for (int i = 0; i < w->nwhy; i++)
        free(w->whys[i].key);
    free(w->whys);
    w->whys = NULL;
    w->nwhy = w->capwhy = 0;
    return w->failed ? -1 : 0;
}
