/* test_eseries.c — IEC 60063 tables, snapping and divider picking.
 * The full pick search is compared with an independent Python brute force in
 * tests/ref/test_pick_ref.py (via pick_driver.c); here only closed-form cases. */
#include "base/eseries.h"

#include "../../cu_run.h"
#include <math.h>
#include <string.h>

/* IEC 60063: n values per decade for series En. */
static void test_counts(void)
{
    static const char *names[] = {"E6", "E12", "E24", "E48", "E96", "E192"};
    static const int n[] = {6, 12, 24, 48, 96, 192};
    for (int i = 0; i < 6; i++) {
        const ls_eseries *s = ls_eseries_find(names[i]);
        CU_ASSERT_PTR_NOT_NULL_FATAL(s);
        CU_ASSERT_EQUAL(s->count, n[i]);
        CU_ASSERT_STRING_EQUAL(s->name, names[i]);
        CU_ASSERT_EQUAL(ls_eseries_mant(s, 0), 100);
        for (int k = 1; k < s->count; k++)
            CU_ASSERT(ls_eseries_mant(s, k) > ls_eseries_mant(s, k - 1) && ls_eseries_mant(s, k) < 1000);
    }
    CU_ASSERT_PTR_EQUAL(ls_eseries_find("e96"), ls_eseries_find("E96"));
    CU_ASSERT_PTR_NULL(ls_eseries_find("E7"));
    CU_ASSERT_PTR_NULL(ls_eseries_find("E2"));
    CU_ASSERT_PTR_NULL(ls_eseries_find("E240"));
    CU_ASSERT_PTR_NULL(ls_eseries_find("E"));
    CU_ASSERT_PTR_NULL(ls_eseries_find(""));
    CU_ASSERT_PTR_NULL(ls_eseries_find(NULL));
}

/* Spot values printed in IEC 60063 (E24 complete; E96 start and end). */
static void test_spot_values(void)
{
    static const int e24[24] = {100, 110, 120, 130, 150, 160, 180, 200, 220, 240, 270, 300,
                                330, 360, 390, 430, 470, 510, 560, 620, 680, 750, 820, 910};
    const ls_eseries *s = ls_eseries_find("E24");
    for (int i = 0; i < 24; i++)
        CU_ASSERT_EQUAL(ls_eseries_mant(s, i), e24[i]);
    const ls_eseries *e96 = ls_eseries_find("E96");
    static const int head[] = {100, 102, 105, 107, 110, 113, 115, 118};
    for (int i = 0; i < 8; i++)
        CU_ASSERT_EQUAL(ls_eseries_mant(e96, i), head[i]);
    CU_ASSERT_EQUAL(ls_eseries_mant(e96, 95), 976);
    /* E6 and E12 complete (IEC 60063, from memory of the printed tables):
     * they are read through E24 with a stride */
    static const int e6[6] = {100, 150, 220, 330, 470, 680};
    static const int e12[12] = {100, 120, 150, 180, 220, 270, 330, 390, 470, 560, 680, 820};
    for (int i = 0; i < 6; i++)
        CU_ASSERT_EQUAL(ls_eseries_mant(ls_eseries_find("E6"), i), e6[i]);
    for (int i = 0; i < 12; i++)
        CU_ASSERT_EQUAL(ls_eseries_mant(ls_eseries_find("E12"), i), e12[i]);
    CU_ASSERT_EQUAL(ls_eseries_mant(ls_eseries_find("E192"), 185), 920);
    CU_ASSERT_EQUAL(ls_eseries_mant(ls_eseries_find("E192"), 191), 988);
    CU_ASSERT_DOUBLE_EQUAL(ls_eseries_value(s, 16, 3), 4700.0, 0.0);
    CU_ASSERT_DOUBLE_EQUAL(ls_eseries_value(s, 0, -1), 0.1, 0.0);
    CU_ASSERT(isnan(ls_eseries_value(s, 24, 0)));
    CU_ASSERT(isnan(ls_eseries_value(s, -1, 0)));
}

/* IEC 60063's defining formula round(10^(i/n)) to 3 figures holds for E48, E96
 * and E192 except E192's 9.20 (formula 9.19); E24 (2 figures) departs from it
 * at exactly the eight historic values 2.7 3.0 3.3 3.6 3.9 4.3 4.7 8.2. */
static void test_formula(void)
{
    static const char *names[] = {"E48", "E96", "E192"};
    for (int k = 0; k < 3; k++) {
        const ls_eseries *s = ls_eseries_find(names[k]);
        for (int i = 0; i < s->count; i++) {
            long f = lround(100.0 * pow(10.0, (double)i / s->count));
            if (s->count == 192 && i == 185) {
                CU_ASSERT(f == 919 && ls_eseries_mant(s, i) == 920);
            } else {
                CU_ASSERT_EQUAL(ls_eseries_mant(s, i), f);
            }
        }
    }
    const ls_eseries *s = ls_eseries_find("E24");
    static const int historic[] = {270, 300, 330, 360, 390, 430, 470, 820};
    int differ = 0;
    for (int i = 0; i < 24; i++) {
        long f = 10 * lround(10.0 * pow(10.0, i / 24.0));
        if (f != ls_eseries_mant(s, i)) {
            CU_ASSERT(differ < 8 && ls_eseries_mant(s, i) == historic[differ]);
            differ++;
        }
    }
    CU_ASSERT_EQUAL(differ, 8);
}

/* IEC 60063 nesting: E12 is every 2nd E24 value, E6 every 2nd E12 value,
 * E96 every 2nd E192 value, E48 every 2nd E96 value. */
static void test_nesting(void)
{
    const char *pairs[][2] = {{"E6", "E12"}, {"E12", "E24"}, {"E48", "E96"}, {"E96", "E192"}};
    for (int p = 0; p < 4; p++) {
        const ls_eseries *a = ls_eseries_find(pairs[p][0]), *b = ls_eseries_find(pairs[p][1]);
        CU_ASSERT_EQUAL_FATAL(2 * a->count, b->count);
        for (int i = 0; i < a->count; i++)
            CU_ASSERT_EQUAL(ls_eseries_mant(a, i), ls_eseries_mant(b, 2 * i));
    }
}

/* Nearest in log distance: the boundary between neighbours a and b is their
 * geometric mean sqrt(a·b). */
static void test_snap(void)
{
    const ls_eseries *e12 = ls_eseries_find("E12"), *e24 = ls_eseries_find("E24"),
                     *e96 = ls_eseries_find("E96"), *e6 = ls_eseries_find("E6");
    CU_ASSERT_DOUBLE_EQUAL(ls_eseries_snap(e12, 4600), 4700, 0);
    CU_ASSERT_DOUBLE_EQUAL(ls_eseries_snap(e12, 9.6), 10, 0);      /* next decade */
    CU_ASSERT_DOUBLE_EQUAL(ls_eseries_snap(e6, 0.0104), 0.01, 1e-18);
    CU_ASSERT_DOUBLE_EQUAL(ls_eseries_snap(e96, 0.0332), 0.0332, 1e-18);
    CU_ASSERT_DOUBLE_EQUAL(ls_eseries_snap(e96, 1e6), 1e6, 0);
    double gm = sqrt(4.3 * 4.7) * 1e3; /* 4495.6 Ω */
    CU_ASSERT_DOUBLE_EQUAL(ls_eseries_snap(e24, gm * 0.999), 4300, 0);
    CU_ASSERT_DOUBLE_EQUAL(ls_eseries_snap(e24, gm * 1.001), 4700, 0);
    gm = sqrt(9.1 * 10) / 10; /* between 0.91 and 1.0 */
    CU_ASSERT_DOUBLE_EQUAL(ls_eseries_snap(e24, gm * 0.999), 0.91, 1e-15);
    CU_ASSERT_DOUBLE_EQUAL(ls_eseries_snap(e24, gm * 1.001), 1.0, 0);
    CU_ASSERT(isnan(ls_eseries_snap(e24, 0)));
    CU_ASSERT(isnan(ls_eseries_snap(e24, -5)));
    CU_ASSERT(isnan(ls_eseries_snap(e24, NAN)));
    CU_ASSERT(isnan(ls_eseries_snap(NULL, 1)));
}

/* Ratio 1/2 is met exactly only by rtop = rbot, so with the default 1 kΩ..1 MΩ
 * total the best ten are the equal E24 pairs from 510 Ω up (500 Ω is not in
 * E24), in order of zout = R/2. */
static void test_pick_half(void)
{
    static const double r[10] = {510, 560, 620, 680, 750, 820, 910, 1000, 1100, 1200};
    ls_pick_item it[10];
    int n = ls_pick_ratio(ls_eseries_find("E24"), 0.5, 0, 0, 0, it, 10);
    CU_ASSERT_EQUAL_FATAL(n, 10);
    for (int i = 0; i < 10; i++) {
        CU_ASSERT_DOUBLE_EQUAL(it[i].rtop, r[i], 0);
        CU_ASSERT_DOUBLE_EQUAL(it[i].rbot, r[i], 0);
        CU_ASSERT_DOUBLE_EQUAL(it[i].error, 0, 0);
        CU_ASSERT_DOUBLE_EQUAL(it[i].zout, r[i] / 2, 1e-12);
    }
}

/* 1/11 is met by rtop = 10·rbot; with zout ≤ 1 kΩ and a 10 kΩ..100 kΩ total the
 * first E12 pair is 10 kΩ over 1 kΩ (zout 909 Ω); 12 k / 1.2 k has zout 1091 Ω. */
static void test_pick_eleventh(void)
{
    ls_pick_item it[3];
    int n = ls_pick_ratio(ls_eseries_find("E12"), 1.0 / 11, 1e4, 1e5, 1000, it, 3);
    CU_ASSERT_EQUAL_FATAL(n, 3);
    CU_ASSERT_DOUBLE_EQUAL(it[0].rtop, 10000, 0);
    CU_ASSERT_DOUBLE_EQUAL(it[0].rbot, 1000, 0);
    CU_ASSERT(fabs(it[0].error) < 1e-15);
    CU_ASSERT_DOUBLE_EQUAL(it[0].zout, 1e7 / 11000, 1e-9);
    for (int i = 0; i < 3; i++) {
        CU_ASSERT(it[i].zout <= 1000);
        CU_ASSERT(it[i].rtop + it[i].rbot >= 1e4 && it[i].rtop + it[i].rbot <= 1e5);
        CU_ASSERT_DOUBLE_EQUAL(it[i].ratio, it[i].rbot / (it[i].rtop + it[i].rbot), 0);
    }
    CU_ASSERT(fabs(it[1].error) >= fabs(it[0].error));
    CU_ASSERT(fabs(it[2].error) >= fabs(it[1].error));
}

/* Bad arguments are refused; an empty search space gives 0 results. */
static void test_pick_bad(void)
{
    ls_pick_item it[4];
    const ls_eseries *s = ls_eseries_find("E6");
    CU_ASSERT_EQUAL(ls_pick_ratio(NULL, 0.5, 0, 0, 0, it, 4), -1);
    CU_ASSERT_EQUAL(ls_pick_ratio(s, 0, 0, 0, 0, it, 4), -1);
    CU_ASSERT_EQUAL(ls_pick_ratio(s, 1, 0, 0, 0, it, 4), -1);
    CU_ASSERT_EQUAL(ls_pick_ratio(s, NAN, 0, 0, 0, it, 4), -1);
    CU_ASSERT_EQUAL(ls_pick_ratio(s, 0.5, 2e3, 1e3, 0, it, 4), -1);
    /* No two E6 values sum to within 1120..1140 Ω (nearest: 1100, 1150). */
    CU_ASSERT_EQUAL(ls_pick_ratio(s, 0.5, 1120, 1140, 0, it, 4), 0);
    CU_ASSERT_EQUAL(ls_pick_ratio(s, 0.5, 0, 0, 0, it, 0), 0);
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"values per decade, lookup", test_counts},
        {"spot values", test_spot_values},
        {"defining formula and historic values", test_formula},
        {"series nesting", test_nesting},
        {"snap", test_snap},
        {"pick ratio 1/2", test_pick_half},
        {"pick ratio 1/11 with zout limit", test_pick_eleventh},
        {"pick bad arguments", test_pick_bad},
    };
    return ls_cu_run("eseries", NULL, NULL, cases, LS_CU_COUNT(cases));
}
