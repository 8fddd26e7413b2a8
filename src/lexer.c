/* lexer.c — hand-written scanner: numbers with SI prefixes, IEC 60062 codes and
 * unit words; identifiers with hierarchical dots; operators; strings. */
#include "lexer.h"

#include <ctype.h>
#include <math.h>
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

static bool ident_start(int c) { return isalpha(c) || c == '_'; }
static bool ident_char(int c) { return isalnum(c) || c == '_'; }

/* Bytes of the "suffix word" starting at p: letters, µ μ Ω Ω and %. */
static unsigned suffix_len(const ls_lexer *lx, unsigned p)
{
    unsigned q = p;
    while (q < lx->len) {
        unsigned char c = (unsigned char)lx->src[q];
        if (isalpha(c) || c == '%') {
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

/* number -> mantissa [prefix] [unit] | digits LETTER digits (IEC 60062) */
static void lex_number(ls_lexer *lx, ls_token *t)
{
    unsigned s = lx->pos, p = s;
    bool plain_int = true, iec = false;
    while (p < lx->len && isdigit((unsigned char)lx->src[p]))
        p++;
    if (p < lx->len && lx->src[p] == '.' && p + 1 < lx->len && isdigit((unsigned char)lx->src[p + 1])) {
        plain_int = false;
        p++;
        while (p < lx->len && isdigit((unsigned char)lx->src[p]))
            p++;
    }
    if (p < lx->len && (lx->src[p] == 'e' || lx->src[p] == 'E')) {
        unsigned q = p + 1;
        if (q < lx->len && (lx->src[q] == '+' || lx->src[q] == '-'))
            q++;
        if (q < lx->len && isdigit((unsigned char)lx->src[q])) {
            plain_int = false;
            p = q;
            while (p < lx->len && isdigit((unsigned char)lx->src[p]))
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
    memcpy(buf, lx->src + s, mlen);
    buf[mlen] = 0;
    double v = strtod(buf, NULL);
    unsigned n = suffix_len(lx, p);

    /* IEC 60062: 4k7, 0R47, 2M2 — a marker letter between digit groups. */
    if (plain_int && n > 0) {
        unsigned mk = ((unsigned char)lx->src[p] & 0x80) ? 2 : 1;
        double mult = iec_letter(lx->src + p, mk);
        unsigned q = p + mk;
        if (mult != 0 && q < lx->len && isdigit((unsigned char)lx->src[q])) {
            unsigned fs = q;
            while (q < lx->len && isdigit((unsigned char)lx->src[q]))
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

/* Skip blanks, comments and line continuations; returns false at a newline/EOF. */
static void skip_blanks(ls_lexer *lx)
{
    for (;;) {
        while (lx->pos < lx->len && (lx->src[lx->pos] == ' ' || lx->src[lx->pos] == '\t' ||
                                     lx->src[lx->pos] == '\r'))
            lx->pos++;
        if (lx->pos < lx->len && lx->src[lx->pos] == '#') {
            while (lx->pos < lx->len && lx->src[lx->pos] != '\n')
                lx->pos++;
            return;
        }
        if (lx->pos < lx->len && lx->src[lx->pos] == '\\') {
            unsigned q = lx->pos + 1;
            while (q < lx->len && (lx->src[q] == ' ' || lx->src[q] == '\t' || lx->src[q] == '\r'))
                q++;
            if (q >= lx->len || lx->src[q] == '\n') {
                lx->pos = q < lx->len ? q + 1 : q;
                lx->line_begin = lx->pos;
                continue;
            }
        }
        return;
    }
}

static void check_line_length(ls_lexer *lx)
{
    if (!lx->line_too_long && lx->pos - lx->line_begin > LS_MAX_LINE_BYTES) {
        lx->line_too_long = true;
        ls_error(lx->diags, (ls_loc){lx->file, lx->line_begin, lx->line_begin + 1},
                 "line is longer than %d bytes", LS_MAX_LINE_BYTES);
    }
}

void ls_lex_next(ls_lexer *lx, ls_token *t)
{
    memset(t, 0, sizeof *t);
    skip_blanks(lx);
    check_line_length(lx);
    unsigned s = lx->pos;
    t->text = lx->src + s;
    if (lx->pos >= lx->len) {
        t->kind = T_EOF;
        t->loc = (ls_loc){lx->file, lx->len, lx->len};
        return;
    }
    unsigned char c = (unsigned char)lx->src[lx->pos];
    unsigned char d = lx->pos + 1 < lx->len ? (unsigned char)lx->src[lx->pos + 1] : 0;
    if (c == '\n') {
        lx->pos++;
        lx->line_begin = lx->pos;
        lx->line_too_long = false;
        t->kind = T_NEWLINE;
        t->loc = (ls_loc){lx->file, s, s + 1};
        return;
    }
    if (isdigit(c) || (c == '.' && isdigit(d))) {
        lex_number(lx, t);
        return;
    }
    if (ident_start(c)) {
        unsigned p = lx->pos;
        for (;;) {
            while (p < lx->len && ident_char((unsigned char)lx->src[p]))
                p++;
            if (p + 1 < lx->len && lx->src[p] == '.' && ident_start((unsigned char)lx->src[p + 1]))
                p++;
            else
                break;
        }
        lx->pos = p;
        t->kind = T_IDENT;
        t->len = p - s;
        t->loc = here(lx, s);
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
