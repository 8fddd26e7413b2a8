/* suggest.c — edit distance and the nearest name (see suggest.h). */
#include "base/suggest.h"

#include <stddef.h>
#include <string.h>

int ls_edit_distance(const char *a, const char *b)
{
    size_t la = strlen(a), lb = strlen(b);
    if (la > 63 || lb > 63)
        return 99;
    int row[64];   /* one row of the distance table: a's first i bytes against b's first j */
    for (size_t j = 0; j <= lb; j++)
        row[j] = (int)j;
    for (size_t i = 1; i <= la; i++) {
        int prev = row[0];
        row[0] = (int)i;
        for (size_t j = 1; j <= lb; j++) {
            int cur = row[j];
            int sub = prev + (a[i - 1] != b[j - 1]);
            int del = row[j] + 1, ins = row[j - 1] + 1;
            row[j] = sub < del ? (sub < ins ? sub : ins) : (del < ins ? del : ins);
            prev = cur;
        }
    }
    return row[lb];
}

void ls_suggest_init(ls_suggest *s, const char *word, int within)
{
    s->word = word;
    s->best = NULL;
    s->distance = within;
}

void ls_suggest_try(ls_suggest *s, const char *candidate)
{
    int d = ls_edit_distance(s->word, candidate);
    if (d < s->distance) {
        s->distance = d;
        s->best = candidate;
    }
}
