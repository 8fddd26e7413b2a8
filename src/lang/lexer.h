/* lexer.h — tokens of the circuit language, produced one at a time. */
#ifndef LS_LEXER_H
#define LS_LEXER_H

#include "base/diag.h"
#include "base/units.h"

typedef enum ls_tok {
    T_EOF, T_NEWLINE, T_IDENT, T_NUMBER, T_STRING,
    T_ARROW, T_DOTDOT, T_PLUS, T_MINUS, T_STAR, T_SLASH, T_CARET,
    T_LPAREN, T_RPAREN, T_COMMA, T_EQ, T_PARALLEL, T_LT, T_LE, T_GT, T_GE,
    T_ERROR
} ls_tok;

typedef struct ls_token {
    ls_tok kind;
    ls_loc loc;
    const char *text;  /* into the file text, `len` bytes (not NUL-terminated) */
    unsigned len;
    double num;        /* T_NUMBER: value with prefix and unit scale applied */
    ls_dims dims;      /* T_NUMBER: its unit, LS_FREE when none */
} ls_token;

#define LS_MAX_LINE_BYTES 100000

typedef struct ls_lexer {
    ls_diags *diags;
    int file;
    const char *src;
    unsigned len, pos;
    unsigned line_begin;     /* start of the current physical line */
    bool line_too_long;      /* reported once per line */
} ls_lexer;

/* Scan registered file `file`; its text is NUL-terminated (ls_sources_add),
 * which ends the scanning loops without a bounds check per byte. */
void ls_lex_init(ls_lexer *lx, ls_diags *d, int file);
/* Next token; errors are reported to the diagnostics and come back as T_ERROR. */
void ls_lex_next(ls_lexer *lx, ls_token *t);
const char *ls_tok_name(ls_tok k);

/* The words after the kind word of the commonest part statement, `NAME FROM
 * -> TO NUMBER` with a plain decimal NUMBER (digits, an optional fraction; no
 * unit, sign or exponent) and nothing after it on its line: byte offsets
 * into the file (start and end of each word, the arrow's start, and the
 * start of the line's end after the blanks that follow the number) and the
 * number's value, exactly as the tokens would give them. */
typedef struct ls_simple_part {
    unsigned name, name_end, from, from_end, arrow, to, to_end, num, num_end, end;
    double value;
} ls_simple_part;

/* Whether the text after lx's position (just after a kind word) is such a
 * statement, scanned in one pass without tokens, filling *sp.  The lexer is
 * not moved: a caller that uses the statement sets lx->pos to sp->num_end
 * (the next token is then the line's end).  False for anything else, also
 * for anything the lexer would report (a NUL byte, an overlong line, a
 * number that is not exact in one rounding): the caller then reads the
 * statement token by token, so every message is the general path's. */
bool ls_lex_simple_part(const ls_lexer *lx, ls_simple_part *sp);

#endif
