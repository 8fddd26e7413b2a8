/* csc.c — compressed-column matrices (see csc.h). */
#include "base/csc.h"
#include "base/pages.h"

#include <stdlib.h>
#include <string.h>

void ls_csc_free(ls_csc *a)
{
    free(a->colptr);
    ls_big_free(a->rowind); /* the entries may be a mapping of their own (mna.c) */
    ls_big_free(a->val);
    memset(a, 0, sizeof *a);
}

int ls_csc_find(const ls_csc *a, int i, int j)
{
    int lo = a->colptr[j], hi = a->colptr[j + 1] - 1;
    while (lo <= hi) {
        int mid = lo + (hi - lo) / 2;
        int r = a->rowind[mid];
        if (r == i)
            return mid;
        if (r < i)
            lo = mid + 1;
        else
            hi = mid - 1;
    }
    return -1;
}
