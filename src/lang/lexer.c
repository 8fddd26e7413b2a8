/* lexer.c — hand-written scanner: numbers with SI prefixes, IEC 60062 codes and
 * unit words; identifiers with hierarchical dots; operators; strings. */
#include "lang/lexer.h"

#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

void ls_lex_init(ls_lexer *lx, ls_diags *d, int file)
{
    memset(lx, 0, sizeof *lx);
    lx->diags = d;
    lx->file = file;
    lx->src = d->files[file].text;
    lx->len = d->files[file].len;
}

const char *ls_tok_name(ls_tok k)
{
    static const char *const names[] = {
        "end of file", "end of line", "name", "number", "string",
        "'->'", "'..'", "'+'", "'-'", "'*'", "'/'", "'^'",
        "'('", "')'", "','", "'='", "'||'", "'<'", "'<='", "'>'", "'>='",
        "invalid token"};
    return names[k];
}

static ls_loc here(const ls_lexer *lx, unsigned start)
{
    return (ls_loc){lx->file, start, lx->pos};
}

/* Character classes of the bytes, ASCII only (the language's letters are
 * ASCII; bytes of UTF-8 sequences are none of these).  A table rather than
 * <ctype.h>: no locale lookup per byte. */
enum { C_DIGIT = 1, C_ALPHA = 2, C_UNDER = 4, C_BLANK = 8 };
#define R4(x) x, x, x, x
#define R8(x) R4(x), R4(x)
#define R16(x) R8(x), R8(x)
static const unsigned char cclass[256] = {
    /* 0x00 */ R8(0), 0, C_BLANK, 0, 0, 0, C_BLANK, 0, 0,          /* \t, \r */
    /* 0x10 */ R16(0),
    /* 0x20 */ C_BLANK, R8(0), R4(0), 0, 0, 0,                       /* ' ' */
    /* 0x30 */ R8(C_DIGIT), C_DIGIT, C_DIGIT, R4(0), 0, 0,
    /* 0x40 */ 0, R8(C_ALPHA), R4(C_ALPHA), C_ALPHA, C_ALPHA, C_ALPHA,
    /* 0x50 */ R8(C_ALPHA), C_ALPHA, C_ALPHA, C_ALPHA, 0, 0, 0, 0, C_UNDER,
    /* 0x60 */ 0, R8(C_ALPHA), R4(C_ALPHA), C_ALPHA, C_ALPHA, C_ALPHA,
    /* 0x70 */ R8(C_ALPHA), C_ALPHA, C_ALPHA, C_ALPHA, 0, 0, 0, 0, 0,
    /* 0x80 */ R16(0), R16(0), R16(0), R16(0), R16(0), R16(0), R16(0), R16(0),
};
#undef R4
#undef R8
#undef R16

static inline bool is_digit(int c) { return cclass[(unsigned char)c] & C_DIGIT; }
static inline bool is_alpha(int c) { return cclass[(unsigned char)c] & C_ALPHA; }
static inline bool ident_start(int c) { return cclass[(unsigned char)c] & (C_ALPHA | C_UNDER); }
static inline bool ident_char(int c) { return cclass[(unsigned char)c] & (C_ALPHA | C_UNDER | C_DIGIT); }
static inline bool is_blank(int c) { return cclass[(unsigned char)c] & C_BLANK; }

/* Bytes of the "suffix word" starting at p: letters, µ μ Ω Ω and %. */
static unsigned suffix_len(const ls_lexer *lx, unsigned p)
{
    unsigned q = p;
    while (q < lx->len) {
        unsigned char c = (unsigned char)lx->src[q];
        if (is_alpha(c) || c == '%') {
            q++;
        } else if (c == 0xC2 && q + 1 < lx->len && (unsigned char)lx->src[q + 1] == 0xB5) {
            q += 2;
        } else if (c == 0xCE && q + 1 < lx->len &&
                   ((unsigned char)lx->src[q + 1] == 0xBC || (unsigned char)lx->src[q + 1] == 0xA9)) {
            q += 2;
        } else if (c == 0xE2 && q + 2 < lx->len && (unsigned char)lx->src[q + 1] == 0x84 &&
                   (unsigned char)lx->src[q + 2] == 0xA6) {
            q += 3;
        } else {
            break;
        }
    }
    return q - p;
}

/* IEC 60062 letter code multiplier for the marker letter, or 0. */
static double iec_letter(const char *s, unsigned n)
{
    if (n == 1) {
        switch (s[0]) {
        case 'R': return 1;
        case 'k': case 'K': return 1e3;
        case 'M': return 1e6;
        case 'G': return 1e9;
        case 'T': return 1e12;
        case 'm': return 1e-3;
        case 'u': return 1e-6;
        case 'n': return 1e-9;
        case 'p': return 1e-12;
        default: return 0;
        }
    }
    double sc;
    if (n == 2 && ls_prefix_parse(s, n, &sc)) /* µ, μ */
        return sc;
    return 0;
}

/* Attach a unit word that follows after blanks ("5 V"); error on a lone prefix. */
static void trailing_unit(ls_lexer *lx, ls_token *t)
{
    unsigned p = lx->pos;
    while (p < lx->len && (lx->src[p] == ' ' || lx->src[p] == '\t'))
        p++;
    if (p == lx->pos)
        return;
    unsigned n = suffix_len(lx, p);
    if (n == 0)
        return;
    unsigned end = p + n;
    bool range_follows = end + 1 < lx->len && lx->src[end] == '.' && lx->src[end + 1] == '.'; /* 5 V..9 V */
    if (end < lx->len && (ident_char((unsigned char)lx->src[end]) || (lx->src[end] == '.' && !range_follows) ||
                          lx->src[end] == '='))
        return; /* a longer word, a dotted name or an option name: not a unit */
    double scale;
    ls_dims d;
    if (ls_unit_parse(lx->src + p, n, &scale, &d)) {
        t->num *= scale;
        t->dims = d;
        lx->pos = end;
        t->loc.end = end;
        return;
    }
    if (ls_prefix_parse(lx->src + p, n, &scale)) {
        ls_error(lx->diags, (ls_loc){lx->file, p, end},
                 "SI prefix '%.*s' stands apart from its number; write it glued, as '%.*s%.*s'",
                 (int)n, lx->src + p, (int)t->len, t->text, (int)n, lx->src + p);
        lx->pos = end;
        t->kind = T_ERROR;
    }
}

/* Exact powers of ten: every one up to 1e22 is a double. */
static const double pow10_exact[23] = {
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
    1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};

/* The value of the decimal mantissa s[0..n) (digits, an optional fraction,
 * an optional exponent: what lex_number scanned) when it can be had exactly
 * as strtod would give it, without calling strtod: at most 15 digits make an
 * integer below 2^53, and multiplying or dividing it by an exact power of ten
 * up to 1e22 is one correctly rounded operation, the correctly rounded value
 * of the decimal (the fast path of W. D. Clinger, "How to read floating point
 * numbers accurately", PLDI 1990).  Returns false for anything else. */
static bool exact_decimal(const char *s, unsigned n, double *v)
{
#if FLT_EVAL_METHOD != 0
    return false; /* excess precision would round twice */
#endif
    uint64_t m = 0;
    int digits = 0, scale = 0;
    unsigned i = 0;
    for (; i < n && is_digit(s[i]); i++, digits++)
        m = m * 10 + (uint64_t)(s[i] - '0');
    if (i < n && s[i] == '.')
        for (i++; i < n && is_digit(s[i]); i++, digits++, scale--)
            m = m * 10 + (uint64_t)(s[i] - '0');
    if (digits > 15)
        return false;
    if (i < n) { /* e or E, an optional sign, digits */
        i++;
        bool neg = i < n && s[i] == '-';
        if (i < n && (s[i] == '-' || s[i] == '+'))
            i++;
        if (n - i > 3)
            return false;
        int e = 0;
        for (; i < n; i++)
            e = e * 10 + (s[i] - '0');
        scale += neg ? -e : e;
    }
    if (scale < -22 || scale > 22)
        return false;
    *v = scale >= 0 ? (double)m * pow10_exact[scale] : (double)m / pow10_exact[-scale];
    return true;
}

/* number -> mantissa [prefix] [unit] | digits LETTER digits (IEC 60062) */
static void lex_number(ls_lexer *lx, ls_token *t)
{
    unsigned s = lx->pos, p = s;
    bool plain_int = true, iec = false;
    while (p < lx->len && is_digit((unsigned char)lx->src[p]))
        p++;
    if (p < lx->len && lx->src[p] == '.' && p + 1 < lx->len && is_digit((unsigned char)lx->src[p + 1])) {
        plain_int = false;
        p++;
        while (p < lx->len && is_digit((unsigned char)lx->src[p]))
            p++;
    }
    if (p < lx->len && (lx->src[p] == 'e' || lx->src[p] == 'E')) {
        unsigned q = p + 1;
        if (q < lx->len && (lx->src[q] == '+' || lx->src[q] == '-'))
            q++;
        if (q < lx->len && is_digit((unsigned char)lx->src[q])) {
            plain_int = false;
            p = q;
            while (p < lx->len && is_digit((unsigned char)lx->src[p]))
                p++;
        }
    }
    char buf[128];
    unsigned mlen = p - s;
    t->kind = T_NUMBER;
    t->dims = LS_FREE;
    if (mlen >= sizeof buf) {
        lx->pos = p;
        t->loc = here(lx, s);
        ls_error(lx->diags, t->loc, "number has too many digits");
        t->kind = T_ERROR;
        return;
    }
    double v;
    if (!exact_decimal(lx->src + s, mlen, &v)) {
        memcpy(buf, lx->src + s, mlen);
        buf[mlen] = 0;
        v = strtod(buf, NULL);
    }
    unsigned n = suffix_len(lx, p);

    /* IEC 60062: 4k7, 0R47, 2M2 — a marker letter between digit groups. */
    if (plain_int && n > 0) {
        unsigned mk = ((unsigned char)lx->src[p] & 0x80) ? 2 : 1;
        double mult = iec_letter(lx->src + p, mk);
        unsigned q = p + mk;
        if (mult != 0 && q < lx->len && is_digit((unsigned char)lx->src[q])) {
            unsigned fs = q;
            while (q < lx->len && is_digit((unsigned char)lx->src[q]))
                q++;
            if (q - fs + mlen + 2 >= sizeof buf) {
                lx->pos = q;
                t->loc = here(lx, s);
                ls_error(lx->diags, t->loc, "number has too many digits");
                t->kind = T_ERROR;
                return;
            }
            snprintf(buf, sizeof buf, "%.*s.%.*s", (int)mlen, lx->src + s, (int)(q - fs), lx->src + fs);
            v = strtod(buf, NULL) * mult;
            p = q;
            iec = true;
            n = suffix_len(lx, p);
        } else if (n == 1 && lx->src[p] == 'R') { /* 47R */
            p++;
            n = 0;
        }
    }
    t->num = v;
    if (n > 0) {
        double scale;
        ls_dims d;
        if (iec && !(ls_unit_parse(lx->src + p, n, &scale, &d) && scale == 1)) {
            lx->pos = p + n;
            t->loc = here(lx, s);
            ls_error(lx->diags, (ls_loc){lx->file, p, p + n},
                     "'%.*s' after a letter code: the code already carries its multiplier", (int)n, lx->src + p);
            t->kind = T_ERROR;
            return;
        }
        if (ls_unit_parse(lx->src + p, n, &scale, &d)) {
            t->num *= scale;
            t->dims = d;
        } else if (ls_prefix_parse(lx->src + p, n, &scale)) {
            t->num *= scale;
        } else {
            lx->pos = p + n;
            t->loc = here(lx, s);
            ls_loc at = {lx->file, p, p + n};
            if (n == 1 && lx->src[p] == 'K')
                ls_error(lx->diags, at, "unknown prefix 'K'; kilo is a lower-case 'k'");
            else
                ls_error(lx->diags, at, "unknown unit or prefix '%.*s' after a number", (int)n, lx->src + p);
            t->kind = T_ERROR;
            return;
        }
        p += n;
    }
    if (p < lx->len && ident_char((unsigned char)lx->src[p])) {
        unsigned q = p;
        while (q < lx->len && ident_char((unsigned char)lx->src[q]))
            q++;
        lx->pos = q;
        t->loc = here(lx, s);
        ls_error(lx->diags, (ls_loc){lx->file, s, q}, "malformed number '%.*s'", (int)(q - s), lx->src + s);
        t->kind = T_ERROR;
        return;
    }
    lx->pos = p;
    t->text = lx->src + s;
    t->len = p - s;
    t->loc = here(lx, s);
    if (!isfinite(t->num)) {
        ls_error(lx->diags, t->loc, "number '%.*s' is out of range", (int)t->len, t->text);
        t->kind = T_ERROR;
        return;
    }
    if (t->dims.known == false && n == 0)
        trailing_unit(lx, t);
}

static void lex_string(ls_lexer *lx, ls_token *t)
{
    unsigned s = lx->pos++;
    while (lx->pos < lx->len && lx->src[lx->pos] != '"' && lx->src[lx->pos] != '\n') {
        if (lx->src[lx->pos] == '\\' && lx->pos + 1 < lx->len && lx->src[lx->pos + 1] != '\n')
            lx->pos++;
        lx->pos++;
    }
    if (lx->pos >= lx->len || lx->src[lx->pos] != '"') {
        t->loc = (ls_loc){lx->file, s, s + 1};
        ls_error(lx->diags, t->loc, "string is not closed on its line (a '\"' is missing)");
        t->kind = T_ERROR;
        return;
    }
    lx->pos++;
    t->kind = T_STRING;
    t->text = lx->src + s + 1;
    t->len = lx->pos - s - 2;
    t->loc = here(lx, s);
}

/* Skip blanks, comments and line continuations, up to a newline, a token or
 * the end.  The text is NUL-terminated (ls_sources_add), so the blank loop
 * stops at the end without a bounds check. */
static void skip_blanks(ls_lexer *lx)
{
    const char *src = lx->src;
    unsigned pos = lx->pos;
    for (;;) {
        while (is_blank(src[pos]))
            pos++;
        if (src[pos] == '#' && pos < lx->len) {
            while (pos < lx->len && src[pos] != '\n')
                pos++;
            break;
        }
        if (src[pos] == '\\' && pos < lx->len) {
            unsigned q = pos + 1;
            while (q < lx->len && is_blank(src[q]))
                q++;
            if (q >= lx->len || src[q] == '\n') {
                pos = q < lx->len ? q + 1 : q;
                lx->line_begin = pos;
                continue;
            }
        }
        break;
    }
    lx->pos = pos;
}

static void check_line_length(ls_lexer *lx)
{
    if (!lx->line_too_long && lx->pos - lx->line_begin > LS_MAX_LINE_BYTES) {
        lx->line_too_long = true;
        ls_error(lx->diags, (ls_loc){lx->file, lx->line_begin, lx->line_begin + 1},
                 "line is longer than %d bytes", LS_MAX_LINE_BYTES);
    }
}

/* The operator or the invalid character at lx->pos (after the common tokens). */
static __attribute__((noinline)) void lex_other(ls_lexer *lx, ls_token *t, unsigned s, unsigned char c)
{
    unsigned char d = lx->pos + 1 < lx->len ? (unsigned char)lx->src[lx->pos + 1] : 0;
    if (c == '.' && is_digit(d)) {
        lex_number(lx, t);
        return;
    }
    if (c == '"') {
        lex_string(lx, t);
        return;
    }
    ls_tok k = T_ERROR;
    unsigned w = 1;
    switch (c) {
    case '-': if (d == '>') { k = T_ARROW; w = 2; } else k = T_MINUS; break;
    case '.': if (d == '.') { k = T_DOTDOT; w = 2; } break;
    case '|': if (d == '|') { k = T_PARALLEL; w = 2; } break;
    case '<': if (d == '=') { k = T_LE; w = 2; } else k = T_LT; break;
    case '>': if (d == '=') { k = T_GE; w = 2; } else k = T_GT; break;
    case '=': k = T_EQ; break;
    case '+': k = T_PLUS; break;
    case '*': k = T_STAR; break;
    case '/': k = T_SLASH; break;
    case '^': k = T_CARET; break;
    case '(': k = T_LPAREN; break;
    case ')': k = T_RPAREN; break;
    case ',': k = T_COMMA; break;
    default: break;
    }
    if (k == T_ERROR) {
        /* One whole UTF-8 character, so the message shows it intact. */
        if (c >= 0xC0)
            while (lx->pos + w < lx->len && ((unsigned char)lx->src[lx->pos + w] & 0xC0) == 0x80 && w < 4)
                w++;
        lx->pos += w;
        t->kind = T_ERROR;
        t->loc = here(lx, s);
        if (c == 0)
            ls_error(lx->diags, t->loc, "NUL byte in the file (is it a text file?)");
        else if (c == '|')
            ls_error(lx->diags, t->loc, "a single '|' is not an operator; parallel resistance is '||'");
        else if (c < 0x20 || c == 0x7F)
            ls_error(lx->diags, t->loc, "unexpected control character 0x%02X", c);
        else
            ls_error(lx->diags, t->loc, "unexpected character '%.*s'", (int)w, lx->src + s);
        return;
    }
    lx->pos += w;
    t->kind = k;
    t->len = w;
    t->loc = here(lx, s);
}

/* The end of the name starting at p (src[p] starts one): letters, digits,
 * '_', and '.' before a letter.  The text is NUL-terminated, so the loop
 * needs no bounds check. */
static inline unsigned ident_end(const char *src, unsigned p)
{
    for (p++;;) {
        while (ident_char(src[p]))
            p++;
        if (src[p] == '.' && ident_start(src[p + 1]))
            p++;
        else
            return p;
    }
}

/* Blanks from p (spaces, tabs, carriage returns: no comment, no line
 * continuation), and the position after them. */
static inline unsigned blanks_end(const char *src, unsigned p)
{
    while (is_blank(src[p]))
        p++;
    return p;
}

bool ls_lex_simple_part(const ls_lexer *lx, ls_simple_part *sp)
{
    const char *src = lx->src;
    unsigned p = lx->pos, q;
    unsigned *start[3] = {&sp->name, &sp->from, &sp->to}, *end[3] = {&sp->name_end, &sp->from_end, &sp->to_end};
    for (int w = 0; w < 3; w++) {
        q = blanks_end(src, p);
        if (q == p || !ident_start(src[q]))
            return false;
        *start[w] = q;
        p = *end[w] = ident_end(src, q);
        if (w == 1) { /* FROM '->' */
            q = blanks_end(src, p);
            if (src[q] != '-' || src[q + 1] != '>')
                return false;
            sp->arrow = q;
            p = q + 2;
        }
    }
    q = blanks_end(src, p);
    if (q == p || !is_digit(src[q]))
        return false;
    sp->num = q;
    for (p = q; is_digit(src[p]); p++)
        ;
    if (src[p] == '.' && is_digit(src[p + 1]))
        for (p++; is_digit(src[p]); p++)
            ;
    /* the number ends at a blank or the line's end, and only blanks follow
     * it: no unit, prefix, letter code, exponent, option or comment */
    q = blanks_end(src, p);
    if (!(is_blank(src[p]) || src[p] == '\n' || p >= lx->len) || !(src[q] == '\n' || q >= lx->len))
        return false;
    if (p - lx->line_begin > LS_MAX_LINE_BYTES)
        return false; /* a line the lexer must report */
    sp->num_end = p;
    sp->end = q;
    return exact_decimal(src + sp->num, p - sp->num, &sp->value);
}

/* The common tokens inline (names, line ends, numbers), the rest out of line.
 * The text is NUL-terminated, so the name loop needs no bounds check, and at
 * the end the NUL is tested only after the common cases. */
void ls_lex_next(ls_lexer *lx, ls_token *t)
{
    memset(t, 0, sizeof *t);
    skip_blanks(lx);
    check_line_length(lx);
    const char *src = lx->src;
    unsigned s = lx->pos;
    unsigned char c = (unsigned char)src[s];
    t->text = src + s;
    if (ident_start(c)) {
        unsigned p = ident_end(src, s);
        lx->pos = p;
        t->kind = T_IDENT;
        t->len = p - s;
        t->loc = (ls_loc){lx->file, s, p};
        return;
    }
    if (s >= lx->len) {
        t->kind = T_EOF;
        t->loc = (ls_loc){lx->file, lx->len, lx->len};
        return;
    }
    if (c == '\n') {
        lx->pos++;
        lx->line_begin = lx->pos;
        lx->line_too_long = false;
        t->kind = T_NEWLINE;
        t->loc = (ls_loc){lx->file, s, s + 1};
        return;
    }
    if (is_digit(c))
        lex_number(lx, t);
    else
        lex_other(lx, t, s, c);
}
