/* progress.c — the progress line of long runs; see progress.h. */
#include "cli/progress.h"

#include <string.h>
#include <time.h>
#include <unistd.h>

double ls_progress_now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

void ls_progress_start(ls_progress *p, const char *command, const char *what, bool quiet)
{
    memset(p, 0, sizeof *p);
    /* a pipe or a file gets no carriage returns: a log would fill with them */
    p->out = !quiet && isatty(STDERR_FILENO) ? stderr : NULL;
    p->command = command;
    p->what = what;
    p->t0 = ls_progress_now();
}

/* Write text over the last line (padding with spaces where it was longer). */
static void show(ls_progress *p, const char *text)
{
    int n = (int)strlen(text);
    fprintf(p->out, "\r%s%*s", text, p->width > n ? p->width - n : 0, "");
    fflush(p->out);
    p->width = n;
}

void ls_progress_update(ls_progress *p, long done, long total)
{
    if (!p->out || total <= 0)
        return;
    double t = ls_progress_now();
    if (t - p->t0 < LS_PROGRESS_AFTER_S || t - p->last < LS_PROGRESS_EVERY_S)
        return;
    p->last = t;
    char line[160];
    int n = snprintf(line, sizeof line, "loadstack %s: %ld of %ld %s (%.0f%%)", p->command, done, total, p->what,
                     100.0 * (double)done / (double)total);
    if (done > 0 && done < total && n > 0 && (size_t)n < sizeof line) {
        /* the rate so far, which is steady for trials and sweep points alike */
        double left = (t - p->t0) * (double)(total - done) / (double)done;
        snprintf(line + n, sizeof line - (size_t)n, ", about %.0f s left", left < 1 ? 1 : left);
    }
    show(p, line);
}

void ls_progress_note(ls_progress *p, const char *text)
{
    if (!p->out)
        return;
    char line[160];
    snprintf(line, sizeof line, "loadstack %s: %s", p->command, text);
    show(p, line);
}

void ls_progress_end(ls_progress *p)
{
    if (!p->out || !p->width)
        return;
    fprintf(p->out, "\r%*s\r", p->width, "");
    fflush(p->out);
    p->width = 0;
}
