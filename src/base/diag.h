/* diag.h — source files, locations and the diagnostics list.
 *
 * A location is a file id plus a byte range; line and column are worked out
 * only when a diagnostic is printed, from a line map built once per file.
 * Columns count characters (UTF-8 code points), from 1. */
#ifndef LS_DIAG_H
#define LS_DIAG_H

#include <stdbool.h>
#include <stdio.h>

#include "base/arena.h"
#include "base/hash.h"

typedef struct ls_loc {
    int file;            /* index into ls_sources.files; -1 for none */
    unsigned start, end; /* byte range [start, end) */
} ls_loc;

#define LS_NOLOC ((ls_loc){-1, 0, 0})

typedef struct ls_file {
    const char *path;      /* as the user wrote it (or "<string>", "--set") */
    const char *text;      /* whole contents, NUL-terminated */
    unsigned len;
    unsigned *line_start;  /* byte offset of each line */
    int nlines;
} ls_file;

typedef enum ls_severity { LS_SEV_NOTE, LS_SEV_WARNING, LS_SEV_ERROR } ls_severity;

typedef struct ls_diag {
    ls_severity sev;
    ls_loc loc;
    const char *code;      /* warning code (docs/warnings.md) or NULL */
    const char *msg;       /* arena string */
} ls_diag;

typedef struct ls_diags {
    ls_arena *arena;
    ls_file *files;
    int nfiles, cap_files;
    ls_diag *items;
    int n, cap;
    int errors, warnings;
    int max_errors;        /* stop collecting past this many (0: 200) */
    ls_hash seen;          /* "file:offset:severity:message" of every diagnostic, to drop repeats */
    bool dropping;         /* the last error or warning was a repeat: drop its notes too */
    int nomem;             /* errors that say memory ran out: every such message begins "out of
                              memory" (the convention that lets a caller tell a want of memory
                              from a fault of the circuit) */
    int lost;              /* diagnostics that could not be kept for want of memory: each also
                              counts as an error (a report must not go out without them), and
                              ls_diags_print says how many there were */
} ls_diags;

void ls_diags_init(ls_diags *d, ls_arena *a);
void ls_diags_free(ls_diags *d);
/* Register a file's text (copied into the arena); returns its id, -1 on no memory. */
int ls_sources_add(ls_diags *d, const char *path, const char *text, unsigned len);
/* The same for text already in the diagnostics' arena (ls_arena_alloc_bytes of
 * d->arena), NUL-terminated at len: kept where it is, not copied (a large
 * file is read once, straight into its final place). */
int ls_sources_adopt(ls_diags *d, const char *path, const char *text, unsigned len);
/* Forget the files registered after the first `nfiles` (their text lives in
 * the arena, which the caller rolls back); only when no diagnostic points
 * into them. */
void ls_sources_truncate(ls_diags *d, int nfiles);

/* Check that file `file`'s text is UTF-8: each line's first byte that is
 * not part of a well-formed sequence (RFC 3629) is an error at its column,
 * and every such byte is replaced by '?' in the stored text, so no report,
 * excerpt or output carries it.  Returns the number of bytes replaced. */
int ls_sources_check_utf8(ls_diags *d, int file);
/* 1-based line and column (code points) of a byte offset. */
void ls_loc_linecol(const ls_diags *d, int file, unsigned off, int *line, int *col);

void ls_error(ls_diags *d, ls_loc loc, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
void ls_warning(ls_diags *d, ls_loc loc, const char *code, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));
void ls_note(ls_diags *d, ls_loc loc, const char *fmt, ...) __attribute__((format(printf, 3, 4)));

/* Print every diagnostic as `file:line:col: severity: message`, the line and a caret. */
void ls_diags_print(const ls_diags *d, FILE *out);
/* The same, leaving out each diagnostic for which skip(g, ctx) is true (the
 * warnings a report on the same terminal already shows). */
void ls_diags_print_sel(const ls_diags *d, FILE *out, bool (*skip)(const ls_diag *g, void *ctx), void *ctx);
/* "file:line:col" of a location into buf (or "" for none). */
char *ls_loc_str(const ls_diags *d, ls_loc loc, char *buf, size_t n);

#endif
