/* eseries.c — IEC 60063 series tables, snapping, and the divider search.
 *
 * Source of the tables: IEC 60063 (Preferred number series for resistors and
 * capacitors).  E6..E24 keep the standard's historic two-figure values, which
 * differ from round(10^(i/24), 1) at 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7 and 8.2;
 * E48, E96 and E192 are round(10^(i/n), 2) except E192's 9.20 (the formula
 * gives 9.19).  E12 and E6 are every second and fourth E24 value; E48 and E96
 * are every fourth and second E192 value. */
#include "base/eseries.h"

#include <ctype.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

static const uint16_t e24[] = {100, 110, 120, 130, 150, 160, 180, 200, 220, 240, 270, 300,
                               330, 360, 390, 430, 470, 510, 560, 620, 680, 750, 820, 910};
static const uint16_t e192[] = {
    100, 101, 102, 104, 105, 106, 107, 109, 110, 111, 113, 114, 115, 117, 118, 120,
    121, 123, 124, 126, 127, 129, 130, 132, 133, 135, 137, 138, 140, 142, 143, 145,
    147, 149, 150, 152, 154, 156, 158, 160, 162, 164, 165, 167, 169, 172, 174, 176,
    178, 180, 182, 184, 187, 189, 191, 193, 196, 198, 200, 203, 205, 208, 210, 213,
    215, 218, 221, 223, 226, 229, 232, 234, 237, 240, 243, 246, 249, 252, 255, 258,
    261, 264, 267, 271, 274, 277, 280, 284, 287, 291, 294, 298, 301, 305, 309, 312,
    316, 320, 324, 328, 332, 336, 340, 344, 348, 352, 357, 361, 365, 370, 374, 379,
    383, 388, 392, 397, 402, 407, 412, 417, 422, 427, 432, 437, 442, 448, 453, 459,
    464, 470, 475, 481, 487, 493, 499, 505, 511, 517, 523, 530, 536, 542, 549, 556,
    562, 569, 576, 583, 590, 597, 604, 612, 619, 626, 634, 642, 649, 657, 665, 673,
    681, 690, 698, 706, 715, 723, 732, 741, 750, 759, 768, 777, 787, 796, 806, 816,
    825, 835, 845, 856, 866, 876, 887, 898, 909, 920, 931, 942, 953, 965, 976, 988};

/* E24 and E192 hold every value; E12 and E6 are every 2nd and 4th value of
 * E24, E96 and E48 every 2nd and 4th of E192 (IEC 60063 builds each series
 * by taking every other value of the next). */
static const ls_eseries all_series[] = {
    {"E6", 6, e24, 4},   {"E12", 12, e24, 2},  {"E24", 24, e24, 1},
    {"E48", 48, e192, 4}, {"E96", 96, e192, 2}, {"E192", 192, e192, 1},
};

/* Case-insensitive name match against the table above; static result. */
const ls_eseries *ls_eseries_find(const char *name)
{
    if (!name)
        return NULL;
    for (size_t i = 0; i < sizeof all_series / sizeof all_series[0]; i++) {
        const char *a = all_series[i].name, *b = name;
        while (*a && toupper((unsigned char)*b) == *a)
            a++, b++;
        if (!*a && !*b)
            return &all_series[i];
    }
    return NULL;
}

/* code × 10^k with one correctly rounded operation (10^|k| is exact in a double
 * up to 10^22), so 470 × 10^1 is exactly 4700 and 470 / 10^2 is the double 4.7. */
static double scaled(int code, int k)
{
    double p = 1.0;
    for (int i = 0; i < abs(k) && i < 300; i++)
        p *= 10.0;
    return k >= 0 ? code * p : code / p;
}

/* See the header: mantissa × 10^(decade − 2), NaN for a bad index. */
double ls_eseries_value(const ls_eseries *s, int index, int decade)
{
    if (!s || index < 0 || index >= s->count)
        return NAN;
    return scaled(ls_eseries_mant(s, index), decade - 2);
}

/* Try every value of the decade below, at and above v's, so rounding of
 * log10 at a decade edge cannot miss the nearest one. */
double ls_eseries_snap(const ls_eseries *s, double v)
{
    if (!s || !isfinite(v) || v <= 0)
        return NAN;
    int d = (int)floor(log10(v));
    double best = NAN, bestdist = INFINITY;
    for (int dd = d - 1; dd <= d + 1; dd++)
        for (int i = 0; i < s->count; i++) {
            double c = ls_eseries_value(s, i, dd);
            double dist = fabs(log(v / c));
            if (dist < bestdist)
                bestdist = dist, best = c;
        }
    return best;
}

/* Ordering of the result list: |error|, then zout, then rtop.  Returns nonzero
 * when a ranks before b. */
static int better(const ls_pick_item *a, const ls_pick_item *b)
{
    double ea = fabs(a->error), eb = fabs(b->error);
    if (ea != eb)
        return ea < eb;
    if (a->zout != b->zout)
        return a->zout < b->zout;
    return a->rtop < b->rtop;
}

void ls_pick_part_range(double total_lo, double total_hi, double *part_lo, double *part_hi)
{
    *part_lo = total_lo > 0 ? fmin(LS_PICK_PART_LO, total_lo) : LS_PICK_PART_LO;
    *part_hi = total_hi > 0 && isfinite(total_hi) ? fmax(LS_PICK_PART_HI, total_hi) : LS_PICK_PART_HI;
}

double ls_eseries_tolerance(const ls_eseries *s)
{
    switch (s->count) {
    case 6: return 0.2;
    case 12: return 0.1;
    case 24: return 0.05;
    case 48: return 0.02;
    case 96: return 0.01;
    default: return 0.005;
    }
}

/* See the header.  The candidate list is malloc'd here and freed before
 * returning; the kept best results are insertion-sorted into out[]. */
int ls_pick_ratio(const ls_eseries *s, double ratio, double total_lo, double total_hi,
                  double zout_max, ls_pick_item *out, size_t max_results)
{
    if (!(total_lo > 0))
        total_lo = 1e3;
    if (!(total_hi > 0))
        total_hi = 1e6;
    if (!s || !(ratio > 0 && ratio < 1) || total_lo > total_hi || isinf(total_hi))
        return -1;
    if (!(zout_max > 0))
        zout_max = INFINITY;
    const double slack = 1e-12;
    double part_lo, part_hi;
    ls_pick_part_range(total_lo, total_hi, &part_lo, &part_hi);
    int dmin = (int)floor(log10(fmax(fmin(ratio, 1 - ratio) * total_lo, part_lo))) - 1;
    int dmax = (int)floor(log10(fmin(total_hi, part_hi)));
    double vmin = fmax(scaled(1, dmin), part_lo * (1 - slack));
    size_t cap = (size_t)(dmax - dmin + 1) * (size_t)s->count, nc = 0;
    double *cand = malloc(cap * sizeof *cand);
    if (!cand)
        return -1;
    for (int d = dmin; d <= dmax; d++)
        for (int i = 0; i < s->count; i++) {
            double v = ls_eseries_value(s, i, d);
            if (v >= vmin && v <= total_hi * (1 + slack) && v <= part_hi * (1 + slack))
                cand[nc++] = v;
        }
    size_t kept = 0;
    for (size_t a = 0; a < nc; a++)
        for (size_t b = 0; b < nc; b++) {
            double sum = cand[a] + cand[b];
            if (sum < total_lo * (1 - slack) || sum > total_hi * (1 + slack))
                continue;
            ls_pick_item it = {cand[a], cand[b], cand[b] / sum, 0, cand[a] * cand[b] / sum};
            it.error = it.ratio / ratio - 1;
            if (it.zout > zout_max * (1 + slack))
                continue;
            if (kept == max_results && (kept == 0 || !better(&it, &out[kept - 1])))
                continue;
            size_t j = kept < max_results ? kept++ : kept - 1;
            while (j > 0 && better(&it, &out[j - 1])) {
                out[j] = out[j - 1];
                j--;
            }
            out[j] = it;
        }
    free(cand);
    return (int)kept;
}
