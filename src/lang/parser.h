/* parser.h — circuit text to a syntax tree; includes are spliced in here. */
#ifndef LS_PARSER_H
#define LS_PARSER_H

#include <stdio.h>

#include "lang/ast.h"

#define LS_MAX_INCLUDE_DEPTH 16
#define LS_MAX_EXPR_DEPTH 200
#define LS_MAX_FILE_BYTES (1u << 30)
#define LS_MAX_OPTIONS 64      /* NAME=VALUE options on one part or block statement */
#define LS_MAX_BLOCK_PINS 256  /* pins of one block */
#define LS_MAX_USE_OPTIONS (LS_MAX_BLOCK_PINS + LS_MAX_OPTIONS) /* a use: every pin, and params */

/* The language's statement keywords, NULL-terminated: any other first word of
 * a statement is a part kind's (which kinds exist is the part table's, asked
 * by the elaborator).  For "did you mean" over kinds and keywords together. */
extern const char *const ls_statement_keywords[];

/* Parse the file at path into *prog (allocated in the diagnostics' arena).
 * Returns the number of errors reported (0 on success). */
int ls_parse_file(ls_diags *d, const char *path, ls_program *prog);
/* Parse text held in memory; `name` is used in diagnostics and for includes
 * (relative to the current directory when name has no directory part). */
int ls_parse_string(ls_diags *d, const char *name, const char *text, size_t len, ls_program *prog);
/* The same with the tree's structures in the arena `syntax` (names and text
 * still in the diagnostics' arena): the caller may free `syntax` once it has
 * elaborated the program for the last time (see ls_program.syntax). */
int ls_parse_file_to(ls_diags *d, const char *path, ls_arena *syntax, ls_program *prog);
int ls_parse_string_to(ls_diags *d, const char *name, const char *text, size_t len, ls_arena *syntax,
                       ls_program *prog);
/* ls_parse_string reading every statement token by token, without the fast
 * path for the commonest part statement (ls_lex_simple_part): for the test
 * that both give the same tree and the same messages. */
int ls_parse_string_general(ls_diags *d, const char *name, const char *text, size_t len, ls_program *prog);
/* Parse one expression from text (for --set values and command-line quantities).
 * Returns NULL after reporting an error. */
ls_expr *ls_parse_expr_string(ls_diags *d, const char *name, const char *text, bool in_expect);

/* The same for an expression starting at byte `offset` of a registered file. */
ls_expr *ls_parse_expr_at(ls_diags *d, int file, unsigned offset, bool in_expect);

/* A top-level let's value given from outside the file: NAME=VALUE of the
 * program's --set, of the library's settings (ls_circuit_read). */
typedef struct ls_setting {
    const char *name;      /* the let's name (in the diagnostics' arena) */
    ls_expr *value;        /* parsed from the VALUE text */
    ls_loc loc;            /* the NAME, in the "--set" pseudo-file */
    bool used;             /* the elaborator found the let */
} ls_setting;

/* Parse one "NAME=VALUE" into *out: the whole text becomes a source named
 * "--set" (so an error in VALUE points at its column there), checked as
 * UTF-8, and VALUE is parsed as an expression.  Returns 0, or -1 after
 * reporting an error (no '=' or no name, bad text, out of memory). */
int ls_parse_setting(ls_diags *d, const char *text, ls_setting *out);

/* Read a whole file; NULL (errno set) on failure.  Caller frees. */
char *ls_read_file(const char *path, size_t *len);
/* The same for an open stream (standard input), read to its end; the
 * stream stays open. */
char *ls_read_stream(FILE *f, size_t *len);

#endif
