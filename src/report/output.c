/* output.c — destinations written whole or not at all (see output.h and
 * docs/output.md). */
#define _GNU_SOURCE /* O_CLOEXEC, O_NOFOLLOW, realpath */
#include "report/output.h"

#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <stdarg.h>
#include <stdatomic.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

/* ---- the signal-cleanup table ---------------------------------------------------------------
 * The one piece of process-wide state in the library, and on purpose: a
 * signal handler can reach nothing else.  A slot is free (0), being filled or
 * emptied (1), or names a live temporary file (2); the handler only reads
 * slots in state 2, so it never sees a half-copied path. */

#define SLOTS 16
#define SLOT_PATH 4096

static char slot_path[SLOTS][SLOT_PATH];
static atomic_int slot_state[SLOTS];

/* Claim a slot for `path`; its index, or -1 when the table is full or the path
 * too long (the caller refuses the destination: it could not be cleaned up). */
static int slot_claim(const char *path)
{
    size_t n = strlen(path);
    if (n >= SLOT_PATH)
        return -1;
    for (int i = 0; i < SLOTS; i++) {
        int expect = 0;
        if (atomic_compare_exchange_strong(&slot_state[i], &expect, 1)) {
            memcpy(slot_path[i], path, n + 1);
            atomic_store(&slot_state[i], 2);
            return i;
        }
    }
    return -1;
}

/* Free slot i (the handler stops looking at it first). */
static void slot_release(int i)
{
    if (i < 0 || i >= SLOTS)
        return;
    atomic_store(&slot_state[i], 1);
    slot_path[i][0] = 0;
    atomic_store(&slot_state[i], 0);
}

void ls_dest_signal_cleanup(void)
{
    for (int i = 0; i < SLOTS; i++)
        if (atomic_load(&slot_state[i]) == 2)
            unlink(slot_path[i]); /* async-signal-safe */
}

/* ---- helpers ------------------------------------------------------------------------------- */

/* printf into msg (may be NULL); returns -1 for the caller to pass on. */
static int fail(char *msg, size_t msgn, const char *fmt, ...)
{
    if (msg && msgn) {
        va_list ap;
        va_start(ap, fmt);
        vsnprintf(msg, msgn, fmt, ap);
        va_end(ap);
    }
    return -1;
}

/* What kind of file st is, in words, for a refusal. */
static const char *kind_word(const struct stat *st)
{
    if (S_ISDIR(st->st_mode))
        return "a directory";
    if (S_ISCHR(st->st_mode))
        return "a character device";
    if (S_ISBLK(st->st_mode))
        return "a block device";
    if (S_ISFIFO(st->st_mode))
        return "a FIFO (named pipe)";
    if (S_ISSOCK(st->st_mode))
        return "a socket";
    return "not a regular file";
}

static char *dup_str(const char *s)
{
    size_t n = strlen(s) + 1;
    char *d = malloc(n);
    if (d)
        memcpy(d, s, n);
    return d;
}

/* The absolute path of p with its directory's symlinks resolved (the last
 * component kept as written), malloc'd; NULL when the directory does not
 * resolve or out of memory. */
static char *canonical(const char *p)
{
    const char *slash = strrchr(p, '/');
    char *dir;
    const char *base;
    if (!slash) {
        dir = realpath(".", NULL);
        base = p;
    } else {
        size_t n = slash == p ? 1 : (size_t)(slash - p);
        char *d = malloc(n + 1);
        if (!d)
            return NULL;
        memcpy(d, p, n);
        d[n] = 0;
        dir = realpath(d, NULL);
        free(d);
        base = slash + 1;
    }
    if (!dir)
        return NULL;
    size_t n = strlen(dir) + strlen(base) + 2;
    char *out = malloc(n);
    if (out)
        snprintf(out, n, "%s%s%s", dir, strcmp(dir, "/") == 0 ? "" : "/", base);
    free(dir);
    return out;
}

/* Resolve path to the regular file it stands for into d->target (a symlink
 * followed to its end), or refuse.  Returns 0 or -1 with msg. */
static int resolve_target(ls_dest *d, const char *what, const char *path, char *msg, size_t msgn)
{
    struct stat ls;
    if (lstat(path, &ls) != 0) {
        if (errno != ENOENT)
            return fail(msg, msgn, "%s '%s': %s", what, path, strerror(errno));
        d->target = dup_str(path); /* a new file */
        return d->target ? 0 : fail(msg, msgn, "%s '%s': out of memory", what, path);
    }
    if (S_ISLNK(ls.st_mode)) {
        struct stat st;
        if (stat(path, &st) != 0)
            return fail(msg, msgn,
                        "%s '%s' is a symbolic link to nothing (%s); refusing to create a file through a link",
                        what, path, strerror(errno));
        if (!S_ISREG(st.st_mode))
            return fail(msg, msgn, "%s '%s' is a symbolic link to %s; loadstack writes only regular files", what,
                        path, kind_word(&st));
        /* A link to a regular file: the file it names is replaced and the link
         * kept, as an editor saving through a link does. */
        d->target = realpath(path, NULL);
        if (!d->target)
            return fail(msg, msgn, "%s '%s': %s", what, path, strerror(errno));
        d->exists = true;
        d->st = st;
        return 0;
    }
    if (!S_ISREG(ls.st_mode))
        return fail(msg, msgn, "%s '%s' is %s; loadstack writes only regular files", what, path, kind_word(&ls));
    d->target = dup_str(path);
    d->exists = true;
    d->st = ls;
    return d->target ? 0 : fail(msg, msgn, "%s '%s': out of memory", what, path);
}

/* Create the temporary file beside d->target: `TARGET.tmpPID-K`, exclusive
 * (no clash with another process or thread writing the same target) and mode
 * 0666 so that the umask decides a new file's permissions. */
static int make_tmp(ls_dest *d, const char *what, char *msg, size_t msgn)
{
    size_t n = strlen(d->target) + 48;
    d->tmp = malloc(n);
    if (!d->tmp)
        return fail(msg, msgn, "%s '%s': out of memory", what, d->path);
    int fd = -1, err = 0;
    for (int k = 0; k < 1000 && fd < 0; k++) {
        snprintf(d->tmp, n, "%s.tmp%ld-%d", d->target, (long)getpid(), k);
        fd = open(d->tmp, O_WRONLY | O_CREAT | O_EXCL | O_NOFOLLOW | O_CLOEXEC, 0666);
        err = errno;
        if (fd < 0 && err != EEXIST)
            break;
    }
    if (fd < 0)
        return fail(msg, msgn, "%s: cannot create '%s': %s", what, d->tmp, strerror(err));
    d->slot = slot_claim(d->tmp);
    d->f = d->slot >= 0 ? fdopen(fd, "wb") : NULL;
    if (!d->f) {
        int rc = fail(msg, msgn, "%s '%s': %s", what, d->path,
                      d->slot < 0 ? "too many output files open at once, or the path is too long" : strerror(errno));
        close(fd);
        unlink(d->tmp);
        slot_release(d->slot);
        d->slot = -1;
        free(d->tmp);
        d->tmp = NULL;
        return rc;
    }
    return 0;
}

/* ---- the UTF-8 filter -------------------------------------------------------------------------- */

int ls_utf8_seq(const unsigned char *s, size_t n)
{
    unsigned c = s[0];
    if (c < 0x80)
        return 1;
    int len;
    unsigned lo = 0x80, hi = 0xBF; /* the allowed range of the second byte (RFC 3629, table 3-7 of Unicode) */
    if (c >= 0xC2 && c <= 0xDF)
        len = 2;
    else if (c >= 0xE0 && c <= 0xEF) {
        len = 3;
        if (c == 0xE0)
            lo = 0xA0; /* no overlong forms */
        if (c == 0xED)
            hi = 0x9F; /* no surrogates */
    } else if (c >= 0xF0 && c <= 0xF4) {
        len = 4;
        if (c == 0xF0)
            lo = 0x90;
        if (c == 0xF4)
            hi = 0x8F; /* nothing above U+10FFFF */
    } else
        return 0;
    for (int i = 1; i < len; i++) {
        if ((size_t)i >= n)
            return -1;
        unsigned b = s[i];
        if (i == 1 ? (b < lo || b > hi) : (b < 0x80 || b > 0xBF))
            return 0;
    }
    return len;
}

typedef struct u8filter {
    FILE *to;
    unsigned char pend[4]; /* the start of a sequence that the next write completes */
    int npend;
} u8filter;

static const char REPLACEMENT[] = "\xEF\xBF\xBD"; /* U+FFFD */

/* Copy the well-formed runs of p[0..n) to s->to and U+FFFD for each broken
 * sequence; an unfinished sequence at the end is kept when `more`
 * may follow.  Returns false on a write error. */
static bool u8_pass(u8filter *s, const unsigned char *p, size_t n, bool more)
{
    size_t i = 0, run = 0;
    while (i < n) {
        /* ASCII, nearly all of a report, eight bytes a step */
        uint64_t w;
        while (i + 8 <= n && (memcpy(&w, p + i, 8), (w & 0x8080808080808080ull) == 0))
            i += 8;
        if (i >= n)
            break;
        int k = ls_utf8_seq(p + i, n - i);
        if (k > 0) {
            i += (size_t)k;
            continue;
        }
        if (i > run && fwrite(p + run, 1, i - run, s->to) != i - run)
            return false;
        if (k < 0 && more) {
            s->npend = (int)(n - i);
            memcpy(s->pend, p + i, n - i);
            return true;
        }
        /* one U+FFFD for the longest start of a sequence there (the
         * "maximal subpart" of the Unicode Standard, section 3.9) */
        size_t m = 1;
        while (m < 4 && i + m < n && ls_utf8_seq(p + i, m + 1) < 0)
            m++;
        if (k < 0)
            m = n - i;
        if (fwrite(REPLACEMENT, 1, 3, s->to) != 3)
            return false;
        i += m;
        run = i;
    }
    return i == run || fwrite(p + run, 1, i - run, s->to) == i - run;
}

/* The filter's write: a carried unfinished sequence goes first, joined to
 * the new bytes in a scratch copy (a few bytes more than one buffer). */
static ssize_t u8_write(void *c, const char *buf, size_t n)
{
    u8filter *s = c;
    if (s->npend == 0)
        return u8_pass(s, (const unsigned char *)buf, n, true) ? (ssize_t)n : -1;
    unsigned char *all = malloc((size_t)s->npend + n);
    if (!all)
        return -1;
    size_t h = (size_t)s->npend;
    memcpy(all, s->pend, h);
    memcpy(all + h, buf, n);
    s->npend = 0;
    bool ok = u8_pass(s, all, h + n, true);
    free(all);
    return ok ? (ssize_t)n : -1;
}

/* Close the filter: an unfinished sequence at the very end is one U+FFFD. */
static int u8_close(void *c)
{
    u8filter *s = c;
    bool ok = s->npend == 0 || fwrite(REPLACEMENT, 1, 3, s->to) == 3;
    free(s);
    return ok ? 0 : -1;
}

int ls_dest_text(ls_dest *d)
{
    if (!d->f || d->raw)
        return d->f ? 0 : -1;
    u8filter *s = calloc(1, sizeof *s);
    if (!s)
        return -1;
    s->to = d->f;
    cookie_io_functions_t io = {.write = u8_write, .close = u8_close};
    FILE *f = fopencookie(s, "w", io);
    if (!f) {
        free(s);
        return -1;
    }
    setvbuf(f, NULL, _IOFBF, 1 << 16);
    d->raw = d->f;
    d->f = f;
    return 0;
}

/* Close the filter (if any), so that everything is in d->raw, and go back to
 * it.  Returns false when a write failed. */
static bool unfilter(ls_dest *d)
{
    if (!d->raw)
        return true;
    bool ok = fclose(d->f) == 0;
    d->f = d->raw;
    d->raw = NULL;
    return ok;
}

/* ---- the interface ----------------------------------------------------------------------------- */

int ls_dest_open(ls_dest *d, const char *what, const char *path, char *msg, size_t msgn)
{
    memset(d, 0, sizeof *d);
    d->slot = -1;
    d->path = path;
    if (!path || strcmp(path, "-") == 0) {
        d->is_stdout = true;
        d->f = stdout;
        return 0;
    }
    if (!*path)
        return fail(msg, msgn, "%s needs a file name", what);
    if (resolve_target(d, what, path, msg, msgn) != 0 || make_tmp(d, what, msg, msgn) != 0) {
        ls_dest_discard(d);
        return -1;
    }
    return 0;
}

bool ls_dest_same(const ls_dest *d, const char *other)
{
    if (!d || d->is_stdout || !d->target || !other || strcmp(other, "-") == 0)
        return false;
    struct stat a, b;
    if (stat(d->target, &a) == 0 && stat(other, &b) == 0)
        return a.st_dev == b.st_dev && a.st_ino == b.st_ino;
    char *ca = canonical(d->target), *cb = canonical(other);
    bool same = ca && cb ? strcmp(ca, cb) == 0 : strcmp(d->target, other) == 0;
    free(ca);
    free(cb);
    return same;
}

bool ls_dest_same_dest(const ls_dest *a, const ls_dest *b)
{
    return b && !b->is_stdout && b->target && ls_dest_same(a, b->target);
}

int ls_dest_commit(ls_dest *d, char *msg, size_t msgn)
{
    bool filtered = unfilter(d);
    if (d->is_stdout) {
        bool bad = !filtered || fflush(stdout) != 0 || ferror(stdout);
        int err = errno;
        memset(d, 0, sizeof *d);
        d->slot = -1;
        return bad ? fail(msg, msgn, "writing to standard output failed: %s", strerror(err)) : 0;
    }
    if (!d->f)
        return fail(msg, msgn, "nothing to write");
    int fd = fileno(d->f), err = 0;
    bool bad = !filtered || fflush(d->f) != 0 || ferror(d->f) || fsync(fd) != 0;
    if (bad)
        err = errno;
    /* The file as it is now (another program may have made or changed it
     * since the check): keep its mode and, where we may, its owner; refuse
     * if it has become something other than a regular file. */
    struct stat now;
    if (!bad && lstat(d->target, &now) == 0) {
        if (!S_ISREG(now.st_mode)) {
            fclose(d->f);
            d->f = NULL;
            int rc = fail(msg, msgn, "'%s' has become %s; not replaced", d->target, kind_word(&now));
            ls_dest_discard(d);
            return rc;
        }
        if (fchmod(fd, now.st_mode & 07777) != 0) {
            bad = true;
            err = errno;
        }
        if (fchown(fd, now.st_uid, now.st_gid) != 0) { /* only root may give a file away */
        }
    }
    bad |= fclose(d->f) != 0;
    d->f = NULL;
    if (!bad && rename(d->tmp, d->target) != 0) {
        err = errno;
        bad = true;
    }
    if (bad) {
        int rc = fail(msg, msgn, "cannot write '%s': %s", d->path, strerror(err ? err : EIO));
        ls_dest_discard(d);
        return rc;
    }
    slot_release(d->slot);
    free(d->tmp);
    free(d->target);
    memset(d, 0, sizeof *d);
    d->slot = -1;
    return 0;
}

void ls_dest_discard(ls_dest *d)
{
    if (!d)
        return;
    unfilter(d);
    if (d->f && !d->is_stdout)
        fclose(d->f);
    if (d->tmp) {
        unlink(d->tmp);
        slot_release(d->slot);
    }
    free(d->tmp);
    free(d->target);
    memset(d, 0, sizeof *d);
    d->slot = -1;
}
