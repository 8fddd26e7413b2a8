/* test_jsonw.c — the JSON writer: layout, escapes, numbers, null and why.
 *
 * References: RFC 8259 (section 7: '"', '\' and the controls below U+0020
 * escaped, other characters as themselves; section 6: numbers without NaN or
 * infinities; section 8.1: UTF-8), and the Unicode Standard's table of
 * well-formed UTF-8 byte sequences (chapter 3, table 3-7) for what counts as
 * valid input; an ill-formed byte is replaced by U+FFFD, the replacement
 * character.  Each case compares the bytes written with the text expected. */
#include "report/jsonw.h"

#include "../../cu_run.h"
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Run fn on a writer into a memory stream; returns the malloc'd text. */
static char *capture(void (*fn)(ls_jw *), int wrap, int *status)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    ls_jw w;
    ls_jw_init(&w, f, wrap);
    fn(&w);
    *status = ls_jw_finish(&w);
    fclose(f);
    return buf;
}

static void expect(void (*fn)(ls_jw *), int wrap, const char *want)
{
    int st;
    char *got = capture(fn, wrap, &st);
    if (strcmp(got, want) != 0)
        printf("\n  got:\n%s\n  expected:\n%s", got, want);
    CU_ASSERT_STRING_EQUAL(got, want);
    CU_ASSERT_EQUAL(st, 0);
    free(got);
}

/* 1/4700 as Python's repr writes it: 0.0002127659574468085 */
static void flat(ls_jw *w)
{
    ls_jw_obj(w, NULL);
    ls_jw_str(w, "name", "r_top");
    ls_jw_num(w, "r", 4700);
    ls_jw_num(w, "g", 1.0 / 4700);
    ls_jw_int(w, "code", -12);
    ls_jw_bool(w, "pass", true);
    ls_jw_num(w, "zero", -0.0);
}

static void test_flat(void)
{
    expect(flat, 0,
           "{\"name\": \"r_top\", \"r\": 4700, \"g\": 0.0002127659574468085, \"code\": -12, \"pass\": true, \"zero\": 0}\n");
}

/* Members of the first `wrap` levels on their own lines, deeper ones inline. */
static void nested(ls_jw *w)
{
    ls_jw_obj(w, NULL);
    ls_jw_obj(w, "nodes");
    ls_jw_num(w, "vin", 5);
    ls_jw_num(w, "mid", 1.5);
    ls_jw_end(w);
    ls_jw_arr(w, "items");
    ls_jw_obj(w, NULL);
    ls_jw_num(w, "a", 1);
    ls_jw_end(w);
    ls_jw_end(w);
    ls_jw_obj(w, "empty");
    ls_jw_end(w);
}

static void test_layout(void)
{
    expect(nested, 2,
           "{\n  \"nodes\": {\n    \"vin\": 5,\n    \"mid\": 1.5\n  },\n  \"items\": [\n    {\"a\": 1}\n  ],\n"
           "  \"empty\": {}\n}\n");
}

/* Each null's reason in its own object's "why", written when the object
 * closes; an object without nulls has none. */
static void nulls(ls_jw *w)
{
    ls_jw_obj(w, NULL);
    ls_jw_num(w, "ratio", INFINITY);
    ls_jw_obj(w, "inner");
    ls_jw_num(w, "rel", NAN);
    ls_jw_num_why(w, "v", NAN, LS_WHY_UNSOLVED);
    ls_jw_num_why(w, "ok", 2, LS_WHY_UNSOLVED);
    ls_jw_end(w);
    ls_jw_str(w, "instance", NULL);
    ls_jw_num(w, "down", -INFINITY);
    ls_jw_obj(w, "clean");
    ls_jw_num(w, "x", 1);
    ls_jw_end(w);
}

static void test_why(void)
{
    expect(nulls, 0,
           "{\"ratio\": null, \"inner\": {\"rel\": null, \"v\": null, \"ok\": 2, \"why\": {\"rel\": \"undefined\", \"v\": "
           "\"unsolved\"}}, \"instance\": null, \"down\": null, \"clean\": {\"x\": 1}, \"why\": {\"ratio\": "
           "\"unbounded\", \"instance\": \"none\", \"down\": \"unbounded\"}}\n");
}

static void strings(ls_jw *w)
{
    ls_jw_obj(w, NULL);
    ls_jw_str(w, "esc", "a\"b\\c\nd\te\x01");
    ls_jw_str(w, "utf8", "4.7 k\xCE\xA9, 3 \xC2\xB5" "A, \xE2\x89\xA4, \xF0\x9F\x94\x8B");
    /* Latin-1 degree sign, a stray continuation, an overlong '/', a surrogate, a cut sequence */
    ls_jw_str(w, "bad", "25\xB0" "C \x80 \xC0\xAF \xED\xA0\x80 \xE2\x89");
}

static void test_strings(void)
{
    expect(strings, 0,
           "{\"esc\": \"a\\\"b\\\\c\\nd\\te\\u0001\", \"utf8\": \"4.7 k\xCE\xA9, 3 \xC2\xB5" "A, \xE2\x89\xA4, "
           "\xF0\x9F\x94\x8B\", \"bad\": \"25\\ufffdC \\ufffd \\ufffd\\ufffd \\ufffd\\ufffd\\ufffd \\ufffd\\ufffd\"}\n");
}

static void meta(ls_jw *w)
{
    static const char *const sets[] = {"vsys=13.8 V", "r_low=4.7k"};
    ls_jw_obj(w, NULL);
    ls_jw_meta(w, "solve", NULL, sets, 2);
    ls_jw_str(w, "title", "t");
}

static void test_meta(void)
{
    char want[512];
    snprintf(want, sizeof want,
             "{\n  \"meta\": {\"program\": \"loadstack\", \"version\": \"%s\", \"command\": \"solve\", \"file\": null, "
             "\"set\": {\"vsys\": \"13.8 V\", \"r_low\": \"4.7k\"}, \"why\": {\"file\": \"none\"}},\n  \"title\": \"t\"\n}\n",
             LS_VERSION);
    expect(meta, 2, want);
}

/* Many nulls in one object (the why list grows), and a large output (the
 * block is flushed on the way). */
static void many(ls_jw *w)
{
    ls_jw_obj(w, NULL);
    for (int i = 0; i < 5000; i++) {
        char k[16];
        snprintf(k, sizeof k, "n%d", i);
        ls_jw_num(w, k, i % 2 ? NAN : (double)i);
    }
}

static void test_many(void)
{
    int st;
    char *got = capture(many, 0, &st);
    CU_ASSERT_EQUAL(st, 0);
    CU_ASSERT(strstr(got, "\"n4999\": null") != NULL);
    CU_ASSERT(strstr(got, "\"n4998\": 4998") != NULL);
    CU_ASSERT(strstr(got, "\"why\": {\"n1\": \"undefined\", \"n3\": \"undefined\"") != NULL);
    CU_ASSERT(strstr(got, "\"n4999\": \"undefined\"}}\n") != NULL);
    free(got);
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"flat object, numbers, -0", test_flat},
        {"layout of nested containers", test_layout},
        {"null and why", test_why},
        {"escapes and UTF-8", test_strings},
        {"meta", test_meta},
        {"many nulls, large output", test_many},
    };
    return ls_cu_run("jsonw: the JSON writer", NULL, NULL, cases, LS_CU_COUNT(cases));
}
