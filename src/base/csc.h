/* csc.h — a square sparse matrix in compressed columns, 0-based, duplicates
 * summed, row indices sorted within each column: what the assembly builds and
 * every solver backend reads. */
#ifndef LS_CSC_H
#define LS_CSC_H

typedef struct ls_csc {
    int n;          /* order */
    int *colptr;    /* n+1 entries: column j holds rowind/val[colptr[j] .. colptr[j+1]-1] */
    int *rowind;    /* nnz row indices */
    double *val;    /* nnz values */
} ls_csc;

static inline int ls_csc_nnz(const ls_csc *a) { return a->colptr[a->n]; }

/* The larger of a running maximum m (never NaN) and v: fmax(m, v) without
 * its library call (a NaN v leaves m, as fmax does), for the loops over a
 * matrix's entries that every solve of a fit or a tol runs. */
static inline double ls_max_acc(double m, double v) { return v > m ? v : m; }

/* Frees the arrays and zeroes the matrix (accepts a zeroed one).  rowind and
 * val may be large blocks of ls_big_malloc (base/pages.h): free them here or
 * with ls_big_free, never with free. */
void ls_csc_free(ls_csc *a);
/* The position of entry (i, j) in rowind/val, or -1 when it is not stored
 * (a binary search of column j). */
int ls_csc_find(const ls_csc *a, int i, int j);

#endif
