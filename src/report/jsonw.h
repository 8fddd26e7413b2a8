/* jsonw.h — the JSON writer every report uses.
 *
 * One object or array is open at a time per depth; members are written with
 * their key (NULL inside arrays).  Numbers are the shortest text that reads
 * back to the same double; a number that is not finite, or a missing string,
 * is written `null`, and the writer remembers why, so that the object holding
 * it closes with a `"why": {"KEY": "REASON", ...}` member:
 *   "unbounded"  the value is infinite (a short, an open circuit's ratio),
 *   "undefined"  the value has no meaning here (0/0, a ratio of two zeros),
 *   "unsolved"   the circuit or this point of it could not be solved,
 *   "none"       the field does not apply (a check at top level has no instance).
 * Output goes through a 16 KB block handed to the stream in large writes (a
 * grid's report is millions of numbers); errors stay on the stream (ferror). */
#ifndef LS_JSONW_H
#define LS_JSONW_H

#include <stdbool.h>
#include <stdio.h>

#include "report/numahead.h"

#define LS_JW_DEPTH 16

typedef struct ls_jw_why {
    char *key;               /* malloc'd copy */
    const char *why;         /* one of the reason words (static) */
} ls_jw_why;

typedef struct ls_jw {
    FILE *f;
    int depth;               /* containers open */
    int wrap;                /* containers at depth <= wrap put each member on its own line */
    bool obj[LS_JW_DEPTH];   /* object (true) or array, per depth */
    long n[LS_JW_DEPTH];     /* members written so far, per depth */
    int why0[LS_JW_DEPTH];   /* first entry of whys belonging to the object at that depth */
    ls_jw_why *whys;         /* reasons of the nulls of the open objects, innermost last */
    int nwhy, capwhy;
    bool failed;             /* out of memory: a why was lost */
    size_t failed_bytes;     /* what the failed allocation asked for */
    ls_numahead *ahead;      /* numbers formatted ahead (numahead.h), or NULL: not owned */
    char *p;                 /* next free byte of b */
    char b[16384];
} ls_jw;

/* The reason words. */
#define LS_WHY_UNBOUNDED "unbounded"
#define LS_WHY_UNDEFINED "undefined"
#define LS_WHY_UNSOLVED "unsolved"
#define LS_WHY_NONE "none"

/* Start writing to f; the caller then opens the top-level object.  wrap: see
 * the struct (2 puts the top object's and its children's members on lines). */
void ls_jw_init(ls_jw *w, FILE *f, int wrap);
/* Open an object or an array as member `key` (NULL at top level or in an array). */
void ls_jw_obj(ls_jw *w, const char *key);
void ls_jw_arr(ls_jw *w, const char *key);
/* Close the innermost container; an object first gets its "why" member. */
void ls_jw_end(ls_jw *w);
/* A number; when not finite, null with "unbounded" (infinite) or "undefined" (NaN). */
void ls_jw_num(ls_jw *w, const char *key, double v);
/* A number; when not finite, null with the given reason. */
void ls_jw_num_why(ls_jw *w, const char *key, double v, const char *why);
void ls_jw_int(ls_jw *w, const char *key, long long v);
/* An unsigned integer member (a 64-bit seed keeps all its bits). */
void ls_jw_uint(ls_jw *w, const char *key, unsigned long long v);
void ls_jw_bool(ls_jw *w, const char *key, bool v);
/* A string (escaped; bytes above 0x7f copied, the input is UTF-8); NULL is
 * null with reason "none". */
void ls_jw_str(ls_jw *w, const char *key, const char *s);
/* null with a reason. */
void ls_jw_null(ls_jw *w, const char *key, const char *why);
/* The reason a non-finite v would get from ls_jw_num. */
const char *ls_jw_why_of(double v);
/* The "meta" member: program, version, command, file (NULL: null, "none") and
 * the --set settings ("NAME=VALUE" texts, split at the first '='). */
void ls_jw_meta(ls_jw *w, const char *command, const char *file, const char *const *sets, int nsets);
/* Close every open container, end the line, flush the block to the stream.
 * Returns 0, or -1 when memory ran out on the way (a reason went missing). */
int ls_jw_finish(ls_jw *w);

#endif
