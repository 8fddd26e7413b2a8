/* hash.h — string-keyed open-addressing table (keys are borrowed, not copied). */
#ifndef LS_HASH_H
#define LS_HASH_H

#include <stddef.h>

typedef struct ls_hash {
    const char **keys;
    int *vals;
    size_t cap, count;
} ls_hash;

void ls_hash_init(ls_hash *h);
void ls_hash_free(ls_hash *h);
/* Value stored for key, or -1.  */
int ls_hash_get(const ls_hash *h, const char *key);
/* Insert or replace; the key pointer must outlive the table.  0 ok, -1 no memory. */
int ls_hash_put(ls_hash *h, const char *key, int val);

#endif
