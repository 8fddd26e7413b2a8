/* progress.h — a progress line on stderr for long runs (tol, sweep, large
 * solves): shown only when stderr is a terminal and --quiet is not given,
 * and only once a run has taken about a second, so short runs and scripts
 * see nothing.  The line is rewritten in place ("\r") and erased at the end. */
#ifndef LS_PROGRESS_H
#define LS_PROGRESS_H

#include <stdbool.h>
#include <stdio.h>

#define LS_PROGRESS_AFTER_S 1.0   /* s: runs shorter than this show nothing */
#define LS_PROGRESS_EVERY_S 0.2   /* s: at most five updates a second */

typedef struct ls_progress {
    FILE *out;             /* stderr, or NULL when progress is off */
    const char *what;      /* "trials", "points" */
    const char *command;   /* "tol", "sweep" */
    double t0, last;       /* s on the monotonic clock: start, last line */
    int width;             /* length of the last line, to erase it */
} ls_progress;

/* Start a run of `command` counting `what`.  Progress is on when stderr is a
 * terminal and `quiet` is false. */
void ls_progress_start(ls_progress *p, const char *command, const char *what, bool quiet);
/* `done` of `total` are finished: rewrites the line when it is due. */
void ls_progress_update(ls_progress *p, long done, long total);
/* A one-off status (a large solve); shown at once when progress is on. */
void ls_progress_note(ls_progress *p, const char *text);
/* Erase the line, if one was shown. */
void ls_progress_end(ls_progress *p);
/* Seconds on the monotonic clock. */
double ls_progress_now(void);

#endif
