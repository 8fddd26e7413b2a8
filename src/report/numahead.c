/* numahead.c — numbers formatted ahead on a second thread (numahead.h). */
#include "report/numahead.h"

#include <math.h>
#include <pthread.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "base/numfmt.h"

/* Records per chunk, and chunks in the ring: the helper runs at most RING
 * chunks ahead of the writer (about 0.6 MB of texts in all). */
#define CHUNK_RECS 512
#define RING 8
#define CHUNK_MAX (CHUNK_RECS * LS_AHEAD_FIELDS)
/* A sequence shorter than this is formatted in place (a thread costs more). */
#define MIN_RECS (4 * CHUNK_RECS)
/* How far past the expected number the writer's number is looked for. */
#define SKIP 4

typedef struct chunk {
    int count;                    /* numbers in it */
    uint64_t bits[CHUNK_MAX];     /* each number's bits */
    unsigned char len[CHUNK_MAX];
    char text[CHUNK_MAX][LS_NUM_MAX];
} chunk;

struct ls_numahead {
    ls_ahead_seq seq;
    long nchunks;
    pthread_t helper;
    pthread_mutex_t mu;
    pthread_cond_t cv;
    long claimed;                 /* chunks handed out (to either thread), in order */
    long released;                /* chunks the writer is done with */
    bool ready[RING];             /* the chunk in the slot is formatted */
    bool stop;
    /* the writer's side (no lock needed: only the writer touches them) */
    long cur;                     /* chunk of the next expected number */
    int pos;                      /* its index in that chunk */
    chunk *cc;                    /* chunk cur once had, or NULL */
    chunk ring[RING];
};

/* The bits of v (what decides its text). */
static uint64_t bits_of(double v)
{
    uint64_t u;
    memcpy(&u, &v, sizeof u);
    return u;
}

/* Format chunk id into its slot (outside the lock: the slot is the
 * claimant's alone until it says ready). */
static void format_chunk(ls_numahead *a, long id)
{
    chunk *c = &a->ring[id % RING];
    const ls_ahead_seq *s = &a->seq;
    int r0 = (int)(id * CHUNK_RECS), r1 = r0 + CHUNK_RECS < s->nrec ? r0 + CHUNK_RECS : s->nrec;
    int k = 0;
    for (int r = r0; r < r1; r++) {
        if (s->want && !s->want(s->ctx, r))
            continue;
        for (int f = 0; f < LS_AHEAD_FIELDS; f++) {
            if (!s->field[f])
                continue;
            double v = s->field[f][r];
            if (!isfinite(v))
                continue;
            c->bits[k] = bits_of(v);
            c->len[k] = (unsigned char)ls_num_shortest(c->text[k], v);
            k++;
        }
    }
    c->count = k;
}

/* The helper: claim the next chunk while the ring has room, format it, say so. */
static void *helper_main(void *arg)
{
    ls_numahead *a = arg;
    pthread_mutex_lock(&a->mu);
    for (;;) {
        while (!a->stop && a->claimed < a->nchunks && a->claimed >= a->released + RING)
            pthread_cond_wait(&a->cv, &a->mu);
        if (a->stop || a->claimed >= a->nchunks)
            break;
        long id = a->claimed++;
        pthread_mutex_unlock(&a->mu);
        format_chunk(a, id);
        pthread_mutex_lock(&a->mu);
        a->ready[id % RING] = true;
        pthread_cond_broadcast(&a->cv);
    }
    pthread_mutex_unlock(&a->mu);
    return NULL;
}

/* (numahead.h) The caller owns the result; ls_numahead_stop frees it. */
ls_numahead *ls_numahead_start(const ls_ahead_seq *seq)
{
    if (seq->nrec < MIN_RECS)
        return NULL;
    ls_numahead *a = malloc(sizeof *a);
    if (!a)
        return NULL;
    a->seq = *seq;
    a->nchunks = (seq->nrec + CHUNK_RECS - 1) / CHUNK_RECS;
    a->claimed = a->released = 0;
    a->stop = false;
    a->cur = 0;
    a->pos = 0;
    a->cc = NULL;
    for (int i = 0; i < RING; i++)
        a->ready[i] = false;
    if (pthread_mutex_init(&a->mu, NULL) != 0) {
        free(a);
        return NULL;
    }
    if (pthread_cond_init(&a->cv, NULL) != 0) {
        pthread_mutex_destroy(&a->mu);
        free(a);
        return NULL;
    }
    if (pthread_create(&a->helper, NULL, helper_main, a) != 0) {
        pthread_cond_destroy(&a->cv);
        pthread_mutex_destroy(&a->mu);
        free(a);
        return NULL;
    }
    return a;
}

/* Chunk id, formatted: the helper's when it has claimed it (wait for it),
 * else formatted here, with any unclaimed chunk before it (chunks are claimed
 * in order).  NULL past the last chunk.  The writer asks only for its current
 * chunk and the one after, so the slot is free: released == cur. */
static chunk *get_chunk(ls_numahead *a, long id)
{
    if (id >= a->nchunks)
        return NULL;
    pthread_mutex_lock(&a->mu);
    while (a->claimed <= id) {   /* nobody has it: the writer formats it */
        long mine = a->claimed++;
        pthread_mutex_unlock(&a->mu);
        format_chunk(a, mine);
        pthread_mutex_lock(&a->mu);
        a->ready[mine % RING] = true;
    }
    while (!a->ready[id % RING])
        pthread_cond_wait(&a->cv, &a->mu);
    pthread_mutex_unlock(&a->mu);
    return &a->ring[id % RING];
}

/* The writer moves on to chunk cur + 1: the slot of cur goes back to the helper. */
static void next_chunk(ls_numahead *a)
{
    pthread_mutex_lock(&a->mu);
    a->ready[a->cur % RING] = false;
    a->released = ++a->cur;
    pthread_cond_broadcast(&a->cv);
    pthread_mutex_unlock(&a->mu);
    a->cc = NULL;
    a->pos = 0;
}

/* Index of the number with bits b among c's from..to-1, or -1. */
static int find(const chunk *c, int from, int to, uint64_t b)
{
    to = to < c->count ? to : c->count;
    for (int p = from; p < to; p++)
        if (c->bits[p] == b)
            return p;
    return -1;
}

/* (numahead.h) The writer's side: its current chunk, then a window of SKIP
 * more numbers, which may run into the next chunk. */
const char *ls_numahead_take(ls_numahead *a, double v, size_t *len)
{
    if (!a || !isfinite(v))
        return NULL;
    uint64_t b = bits_of(v);
    for (;;) {   /* the current chunk, past those used up (or empty) */
        if (!a->cc && !(a->cc = get_chunk(a, a->cur)))
            return NULL;
        if (a->pos < a->cc->count)
            break;
        next_chunk(a);
    }
    int end = a->pos + SKIP + 1, p = find(a->cc, a->pos, end, b);
    if (p < 0 && end > a->cc->count) {   /* the window runs into the next chunk */
        chunk *n = get_chunk(a, a->cur + 1);
        int q = n ? find(n, 0, end - a->cc->count, b) : -1;
        if (q < 0)
            return NULL;
        next_chunk(a);
        a->cc = n;
        p = q;
    }
    if (p < 0)
        return NULL;
    a->pos = p + 1;
    *len = a->cc->len[p];
    return a->cc->text[p];
}

/* (numahead.h) */
void ls_numahead_stop(ls_numahead *a)
{
    if (!a)
        return;
    pthread_mutex_lock(&a->mu);
    a->stop = true;
    pthread_cond_broadcast(&a->cv);
    pthread_mutex_unlock(&a->mu);
    pthread_join(a->helper, NULL);
    pthread_cond_destroy(&a->cv);
    pthread_mutex_destroy(&a->mu);
    free(a);
}
