/* eseries.h — IEC 60063 preferred-number series and divider picking.
 *
 * Values are held as mantissas in hundredths (100 = 1.00 ... 988 = 9.88) for one
 * decade; a value in any decade is mantissa × 10^(decade − 2), so 4.7 kΩ is
 * E24 mantissa 470 in decade 3.  All tables are static and read-only. */
#ifndef LS_ESERIES_H
#define LS_ESERIES_H

#include <stddef.h>
#include <stdint.h>

typedef struct ls_eseries {
    const char *name;       /* "E24" */
    int count;              /* values per decade: 6, 12, 24, 48, 96, 192 */
    const uint16_t *mant;   /* mantissas in hundredths, ascending, 100..999: value i is mant[i * stride] */
    int stride;             /* 1, or 2 where the series is every other value of the next (IEC 60063) */
} ls_eseries;

/* Mantissa number i (0..count-1) of s, in hundredths. */
static inline int ls_eseries_mant(const ls_eseries *s, int i) { return s->mant[(size_t)i * (size_t)s->stride]; }

/* One divider rtop (input to output) over rbot (output to ground), ohms. */
typedef struct ls_pick_item {
    double rtop, rbot;  /* Ω */
    double ratio;       /* achieved rbot / (rtop + rbot) */
    double error;       /* achieved / asked − 1 (relative) */
    double zout;        /* rtop ‖ rbot, Ω */
} ls_pick_item;

/* The series named "E6", "E12", "E24", "E48", "E96" or "E192" (the E may be
 * lower case); NULL for any other name.  Points at a static table: never free. */
const ls_eseries *ls_eseries_find(const char *name);

/* Value number `index` (0..count−1) of `decade`: mantissa × 10^(decade − 2),
 * e.g. E24 index 16 (4.7) in decade 3 is 4700.  NaN if index is out of range. */
double ls_eseries_value(const ls_eseries *s, int index, int decade);

/* The series value nearest to v in log distance (|ln(v / candidate)|), searched
 * in v's decade and its neighbours: 9.6 snaps to 10 in E12.  NaN when v is not
 * finite and positive or s is NULL. */
double ls_eseries_snap(const ls_eseries *s, double v);

/* Best dividers for `ratio` (0 < ratio < 1, = rbot / (rtop + rbot)).
 * Search space: every pair (rtop, rbot) of series values v with
 *   vmin ≤ v ≤ total_hi,  vmin = 10^(floor(log10(min(ratio, 1 − ratio) · total_lo)) − 1)
 * (one decade below the smaller resistor's smallest ideal value) whose sum lies
 * in [total_lo, total_hi] ohms.  total_lo and total_hi ≤ 0 (or NaN) each mean the
 * default 1 kΩ and 1 MΩ.  zout_max > 0 keeps only pairs with zout ≤ zout_max;
 * ≤ 0, NaN or infinity means no limit.  Sums and the zout limit have a 1e-12
 * relative allowance so limits that are themselves series values are inclusive.
 * Sorted by |error|, then by zout, then by rtop; the best max_results go to
 * out[] (the caller's array).  Returns how many were written, or −1 for bad
 * arguments (s NULL, ratio not in (0, 1), total_lo > total_hi) or no memory. */
int ls_pick_ratio(const ls_eseries *s, double ratio, double total_lo, double total_hi,
                  double zout_max, ls_pick_item *out, size_t max_results);

/* The range of values resistors are made in (Ω): 0.1 Ω to 100 MΩ, widened to
 * reach a --total range that goes beyond it.  ls_pick_ratio keeps every
 * candidate inside it (a 1.1e-297 Ω "standard value" is no part). */
#define LS_PICK_PART_LO 0.1
#define LS_PICK_PART_HI 100e6
void ls_pick_part_range(double total_lo, double total_hi, double *part_lo, double *part_hi);

/* The tolerance usually paired with a series (a fraction: E6 0.2, E12 0.1,
 * E24 0.05, E48 0.02, E96 0.01, E192 0.005; common practice): a divider whose
 * ratio misses by more than this does not fit. */
double ls_eseries_tolerance(const ls_eseries *s);

#endif
