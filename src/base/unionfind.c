/* unionfind.c — disjoint sets (see unionfind.h). */
#include "base/unionfind.h"

int ls_uf_find(int *parent, int x)
{
    while (parent[x] != x) {
        parent[x] = parent[parent[x]];
        x = parent[x];
    }
    return x;
}

void ls_uf_union(int *parent, int a, int b)
{
    a = ls_uf_find(parent, a);
    b = ls_uf_find(parent, b);
    if (a != b)
        parent[a < b ? b : a] = a < b ? a : b; /* the smaller index (ground = 0) is the root */
}
