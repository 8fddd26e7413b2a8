/* suggest.h — "did you mean": the one helper that picks, among the names a
 * word could have meant, the nearest by edit distance.
 *
 *   ls_suggest s;
 *   ls_suggest_init(&s, word, 3);          // candidates closer than 3 edits
 *   for (...) ls_suggest_try(&s, name);   // the first of the nearest wins
 *   if (s.best) ... "did you mean '%s'?", s.best
 */
#ifndef LS_SUGGEST_H
#define LS_SUGGEST_H

/* Levenshtein distance between a and b (insertions, deletions and
 * substitutions of one byte each); 99 when either is longer than 63 bytes. */
int ls_edit_distance(const char *a, const char *b);

typedef struct ls_suggest {
    const char *word;      /* what was written (the caller's string) */
    const char *best;      /* the nearest candidate so far, or NULL */
    int distance;          /* its distance; a candidate must be closer to replace it */
} ls_suggest;

/* Start looking for a name nearer to word than `within` edits. */
void ls_suggest_init(ls_suggest *s, const char *word, int within);
/* Offer a candidate (kept as a pointer): it becomes s->best when strictly
 * nearer than every one before it and than the limit. */
void ls_suggest_try(ls_suggest *s, const char *candidate);

#endif
