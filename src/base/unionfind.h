/* unionfind.h — disjoint sets over 0 .. n-1 in a caller's int array (parent[i] = i
 * to start): the connectivity checks of the elaborator, the topology checks and
 * the analyses that open parts. */
#ifndef LS_UNIONFIND_H
#define LS_UNIONFIND_H

/* The root of x's set; halves the path on the way (parent is written). */
int ls_uf_find(int *parent, int x);
/* Joins the sets of a and b; the smaller index becomes the root, so ground
 * (node 0) is always the root of its set. */
void ls_uf_union(int *parent, int a, int b);

#endif
