/* output.h — writing a file whole or not at all, and never a file that was
 * not asked for.  Every report, plot and picture of every command goes
 * through one ls_dest (docs/output.md is the contract):
 *
 *   ls_dest_open    checks the path and creates the temporary file beside the
 *                   file it will replace, before any work starts;
 *   ls_dest_same    tells whether another path names the same file;
 *   ls_dest_commit  flushes, syncs, gives the file its mode and renames it
 *                   into place (one rename: a reader sees the old file or the
 *                   new one, never a part);
 *   ls_dest_discard removes the temporary file.
 *
 * The temporary files of a process are also listed in a small static table so
 * that ls_dest_signal_cleanup (async-signal-safe) can remove them from a
 * SIGINT or SIGTERM handler. */
#ifndef LS_OUTPUT_H
#define LS_OUTPUT_H

#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>
#include <sys/stat.h>

typedef struct ls_dest {
    const char *path;       /* as the user gave it; NULL or "-" means standard output */
    bool is_stdout;
    char *target;           /* the regular file that will be replaced or created (a
                               symlink resolved to the file it names); malloc'd */
    bool exists;            /* target exists: st holds its mode and owner */
    struct stat st;
    char *tmp;              /* the temporary file beside target while open; malloc'd */
    FILE *f;                /* where to write: tmp or stdout, or the UTF-8 filter over it */
    FILE *raw;              /* under the filter (ls_dest_text), else NULL */
    int slot;               /* index in the signal-cleanup table, -1 if none */
} ls_dest;

/* Check `path` as a destination and open a temporary file beside it.  Refuses
 * (returns -1 with a one-line reason in msg, nothing created) a path that
 * exists and is not a regular file (device, FIFO, socket, directory), a
 * symlink that does not end at a regular file, and a directory it cannot
 * create a file in.  "-" or NULL is standard output.  On success returns 0 and
 * d->f is ready; free with ls_dest_commit or ls_dest_discard.  `what` names
 * the option in messages ("--output"). */
int ls_dest_open(ls_dest *d, const char *what, const char *path, char *msg, size_t msgn);

/* Make d a text destination: from now on d->f replaces every byte that is not
 * part of well-formed UTF-8 (RFC 3629) with U+FFFD, so no report (text, JSON
 * or CSV) carries invalid UTF-8 whatever its names and titles hold.  Returns
 * 0, or -1 when out of memory (d unchanged). */
int ls_dest_text(ls_dest *d);

/* The length of the well-formed UTF-8 sequence at s (n bytes available): 1..4;
 * 0 when the bytes there are not one; -1 when they are the start of one that
 * needs more bytes than n. */
int ls_utf8_seq(const unsigned char *s, size_t n);

/* Is `other` (a path) the same file as d's target?  Compared by device and
 * inode when both exist, and by their absolute, symlink-resolved paths
 * otherwise.  False for standard output and for a NULL other. */
bool ls_dest_same(const ls_dest *d, const char *other);

/* Are two destinations the same file (neither being standard output)? */
bool ls_dest_same_dest(const ls_dest *a, const ls_dest *b);

/* Finish d: flush and sync the temporary file, give it the replaced file's
 * mode (and owner, where allowed) or the umask's for a new file, and rename it
 * over the target.  For standard output only flushes.  Returns 0, or -1 with
 * the reason in msg (the temporary file is then removed and the target left as
 * it was).  d is emptied either way. */
int ls_dest_commit(ls_dest *d, char *msg, size_t msgn);

/* Remove d's temporary file (if any) and empty d.  Safe on an emptied or
 * zeroed dest. */
void ls_dest_discard(ls_dest *d);

/* Remove every temporary file still open in this process.  Async-signal-safe:
 * for a signal handler (the program calls it on SIGINT and SIGTERM). */
void ls_dest_signal_cleanup(void);

#endif
