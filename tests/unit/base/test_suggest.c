/* test_suggest.c — the did-you-mean helper (src/base/suggest.c).
 *
 * References: the Levenshtein distance (V. I. Levenshtein, 1965: the least
 * number of single-character insertions, deletions and substitutions
 * turning one string into the other); its classic worked example, "kitten"
 * to "sitting" in 3 edits (k->s, e->i, insert g), and "flaw" to "lawn" in 2,
 * from memory of the textbook examples; the other distances are counted by
 * hand beside each check.  ls_suggest keeps the first of the nearest
 * candidates strictly within its limit. */
#include "base/suggest.h"

#include "../../cu_run.h"
#include <string.h>

static void test_distance(void)
{
    CU_ASSERT_EQUAL(ls_edit_distance("kitten", "sitting"), 3);   /* the classic example */
    CU_ASSERT_EQUAL(ls_edit_distance("flaw", "lawn"), 2);        /* delete f, insert n */
    CU_ASSERT_EQUAL(ls_edit_distance("", "abc"), 3);             /* three insertions */
    CU_ASSERT_EQUAL(ls_edit_distance("abc", ""), 3);             /* three deletions */
    CU_ASSERT_EQUAL(ls_edit_distance("resistor", "resistor"), 0);
    CU_ASSERT_EQUAL(ls_edit_distance("resitor", "resistor"), 1);   /* one insertion */
    CU_ASSERT_EQUAL(ls_edit_distance("rails", "rials"), 2);      /* no transposition: two substitutions */
    CU_ASSERT_EQUAL(ls_edit_distance("gain", "gian"), 2);
    /* symmetric */
    CU_ASSERT_EQUAL(ls_edit_distance("sitting", "kitten"), ls_edit_distance("kitten", "sitting"));
    /* past 63 bytes: the cap, never an overflow of the row */
    char long_name[80];
    memset(long_name, 'a', sizeof long_name - 1);
    long_name[sizeof long_name - 1] = 0;
    CU_ASSERT_EQUAL(ls_edit_distance(long_name, "a"), 99);
}

static void test_nearest(void)
{
    static const char *const kinds[] = {"resistor", "voltage", "current", "port", "opamp"};
    ls_suggest s;
    ls_suggest_init(&s, "resistr", 3);
    for (int i = 0; i < 5; i++)
        ls_suggest_try(&s, kinds[i]);
    CU_ASSERT_PTR_EQUAL(s.best, kinds[0]);   /* one edit */
    CU_ASSERT_EQUAL(s.distance, 1);
    ls_suggest_init(&s, "capacitor", 3);
    for (int i = 0; i < 5; i++)
        ls_suggest_try(&s, kinds[i]);
    CU_ASSERT_PTR_NULL(s.best);   /* nothing within two edits */
    /* a tie keeps the first offered: "pot" is one edit from both */
    static const char *const two[] = {"port", "pit"};
    ls_suggest_init(&s, "pot", 3);
    ls_suggest_try(&s, two[0]);
    ls_suggest_try(&s, two[1]);
    CU_ASSERT_PTR_EQUAL(s.best, two[0]);
    /* the limit is strict: distance 3 is not within 3 */
    ls_suggest_init(&s, "kitten", 3);
    ls_suggest_try(&s, "sitting");
    CU_ASSERT_PTR_NULL(s.best);
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"Levenshtein distance", test_distance},
        {"the nearest name within a limit", test_nearest},
    };
    return ls_cu_run("suggest", NULL, NULL, cases, LS_CU_COUNT(cases));
}
