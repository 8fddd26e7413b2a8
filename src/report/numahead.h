/* numahead.h — the numbers of a large JSON report formatted ahead on a second
 * thread.
 *
 * A grid's report is millions of numbers, and their shortest digits are most
 * of the report phase's work.  The report knows the order in which it will
 * write the numbers of a table (the node voltages; each part's current,
 * voltage, power and error bound), so a helper thread formats them ahead in
 * chunks while the writer lays out names and keys; when the writer comes to a
 * number it takes the text made for it.  Both threads format: a chunk nobody
 * has started when the writer needs it is formatted by the writer itself, so
 * the work splits by itself between the two cores.
 *
 * The bytes cannot differ from formatting in place: a text is taken only for
 * a double with the same bits as the one it was made from (the text is a
 * function of those bits alone), and any other number is formatted where it
 * stands.  A sequence that does not match what the writer writes (a kind
 * with extra members) costs speed, never a byte. */
#ifndef LS_NUMAHEAD_H
#define LS_NUMAHEAD_H

#include <stdbool.h>
#include <stddef.h>

#define LS_AHEAD_FIELDS 4

/* Which records of a sequence are written (ctx: the caller's). */
typedef bool (*ls_ahead_want)(const void *ctx, int rec);

/* The numbers in the order the writer meets them: for each record r wanted,
 * field[0][r], field[1][r], ... (a NULL field is left out); values that are
 * not finite are left out too (the writer writes them null). */
typedef struct ls_ahead_seq {
    int nrec;
    const double *field[LS_AHEAD_FIELDS];
    ls_ahead_want want;   /* NULL: every record */
    const void *ctx;
} ls_ahead_seq;

typedef struct ls_numahead ls_numahead;

/* Start formatting seq's numbers ahead (seq's arrays must stay unchanged until
 * ls_numahead_stop).  NULL when the sequence is too short to pay, or no
 * memory or thread could be had: the writer then formats every number itself. */
ls_numahead *ls_numahead_start(const ls_ahead_seq *seq);

/* The text of v when it is the next number of the sequence (or a few further
 * on: numbers the writing left out are skipped), with its length in *len; it
 * stays valid until the next call.  NULL when v is not there: format it in
 * place. */
const char *ls_numahead_take(ls_numahead *a, double v, size_t *len);

/* Stop the helper, wait for it and free everything (NULL is fine). */
void ls_numahead_stop(ls_numahead *a);

#endif
