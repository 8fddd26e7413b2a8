/* test_writer.c — the report writer (src/report/writer.c) and its text, JSON
 * and CSV backends: one report described once, written in each format.
 *
 * References, quoted beside each check:
 *   RFC 8259 (JSON), section 2: "A JSON text is a serialized value"; objects
 *     are "name/value pairs" (section 4), arrays "values" with no names
 *     (section 5); section 6: the number grammar
 *     `[ minus ] int [ frac ] [ exp ]`, "Numeric values that cannot be
 *     represented in the grammar below (such as Infinity and NaN) are not
 *     permitted"; section 7: "All Unicode characters may be placed within the
 *     quotation marks, except for the characters that MUST be escaped:
 *     quotation mark, reverse solidus, and the control characters (U+0000
 *     through U+001F)", with the two-character forms \" \\ \n \r \t and
 *     \u00XX for the other controls.
 *   RFC 4180 (CSV), section 2: rule 4 "Each line should contain the same
 *     number of fields"; rule 6 "Fields containing line breaks (CRLF), double
 *     quotes, and commas should be enclosed in double-quotes"; rule 7 "a
 *     double-quote appearing inside a field must be escaped by preceding it
 *     with another double quote".  (The project ends lines with LF, as every
 *     report does; docs/cli.md.)
 *   The text tables align by display width: one column per code point, so µ
 *     (U+00B5, two bytes) and Ω (U+03A9, two bytes) count as one column each
 *     (the Unicode Standard gives both East Asian Width "ambiguous"/narrow:
 *     one cell in a Western terminal; from memory of UAX #11).
 * Every expected text below is written by hand from those rules. */
#include "report/writer.h"

#include "../../cu_run.h"
#include <math.h>
#include <regex.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <fcntl.h>
#include <unistd.h>

/* The report that fn describes, written in format fmt; malloc'd text. */
static char *render(ls_format fmt, void (*fn)(ls_wr *), int *status)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    CU_ASSERT_PTR_NOT_NULL_FATAL(f);
    ls_report rp = {.out = f, .fmt = fmt, .sig = 4, .command = "test"};
    ls_wr w;
    ls_wr_begin(&w, &rp);
    fn(&w);
    *status = ls_wr_finish(&w);
    fclose(f);
    return buf;
}

/* The JSON text after the top object's "meta" member (its own line): what
 * the report itself wrote. */
static const char *after_meta(const char *s)
{
    const char *m = strstr(s, "\"meta\": {");
    CU_ASSERT_PTR_NOT_NULL_FATAL(m);
    const char *nl = strchr(m, '\n');
    CU_ASSERT_PTR_NOT_NULL_FATAL(nl);
    return nl + 1;
}

static void same(const char *got, const char *want)
{
    if (strcmp(got, want) != 0)
        printf("\n  got:\n%s\n  expected:\n%s\n", got, want);
    CU_ASSERT_STRING_EQUAL(got, want);
}

/* ---- one report with every kind of piece --------------------------------------------------- */

static const ls_wr_col cols[] = {
    {.json = "part", .csv = "part", .head = "part"},
    {.json = "current", .csv = "current", .head = "current", .right = true},
    {.json = "note", .csv = "note", .head = "note"},
};

/* Members, an object, an array, a table of three rows (µ and Ω in the text
 * cells, a value that is not finite, a note with a comma and a quote), prose. */
static void report(ls_wr *w)
{
    ls_wr_str(w, "circuit", "tank sender");
    ls_wr_num(w, "supply", 12);
    ls_wr_int(w, "parts", 3);
    ls_wr_bool(w, "solved", true);
    ls_wr_obj(w, "limits");
    ls_wr_num(w, "low", 0.5);
    ls_wr_num(w, "high", INFINITY);
    ls_wr_end(w);
    ls_wr_arr(w, "tags");
    ls_wr_str(w, NULL, "float");
    ls_wr_str(w, NULL, "arm");
    ls_wr_end(w);
    ls_wr_say(w, "Parts\n");
    ls_wr_table(w, "rows", cols, 3, NULL);
    ls_wr_cell_str(w, "r_top");
    ls_wr_cell_num(w, 2.5e-6, "2.500 µA");
    ls_wr_cell_str(w, "via 4.7 kΩ");
    ls_wr_row(w);
    ls_wr_cell_str(w, "float_sw");
    ls_wr_cell_num(w, NAN, "undefined");
    ls_wr_cell_str(w, "open, \"dry\"");
    ls_wr_row(w);
    ls_wr_cell_str(w, "µc");
    ls_wr_cell_num(w, -0.125, "-125.0 mA");
    ls_wr_cell_str(w, "");
    ls_wr_row(w);
    ls_wr_table_end(w);
    ls_wr_say(w, "end\n");
}

/* Text: the prose lines and an aligned table; the members are not shown.
 * Column starts are in display columns: "µc" is two columns wide, "2.500 µA"
 * eight, "4.7 kΩ" six. */
static void test_text(void)
{
    int st;
    char *got = render(FMT_TEXT, report, &st);
    same(got, "Parts\n"
              "  part        current  note\n"
              "  r_top      2.500 µA  via 4.7 kΩ\n"
              "  float_sw  undefined  open, \"dry\"\n"
              "  µc        -125.0 mA  \n"
              "end\n");
    CU_ASSERT_EQUAL(st, 0);
    free(got);
}

/* The display column where each cell of `line` starts, by counting code
 * points (bytes that are not UTF-8 continuation bytes 10xxxxxx): an
 * independent count of what the table's alignment promises. */
static int column_of(const char *line, const char *cell)
{
    const char *at = strstr(line, cell);
    CU_ASSERT_PTR_NOT_NULL_FATAL(at);
    int col = 0;
    for (const char *p = line; p < at; p++)
        col += ((unsigned char)*p & 0xC0) != 0x80;
    return col;
}

/* The right-aligned column ends at one display column on every line, and
 * the third column starts at one, whatever bytes µ and Ω take. */
static void test_text_width(void)
{
    int st;
    char *got = render(FMT_TEXT, report, &st);
    char *lines[8];
    int n = 0;
    for (char *s = strtok(got, "\n"); s && n < 8; s = strtok(NULL, "\n"))
        lines[n++] = s;
    CU_ASSERT_EQUAL_FATAL(n, 6);
    /* the end column of "current" (right-aligned): start + display width */
    CU_ASSERT_EQUAL(column_of(lines[1], "current") + 7, column_of(lines[2], "2.500 µA") + 8);
    CU_ASSERT_EQUAL(column_of(lines[2], "2.500 µA") + 8, column_of(lines[3], "undefined") + 9);
    CU_ASSERT_EQUAL(column_of(lines[3], "undefined") + 9, column_of(lines[4], "-125.0 mA") + 9);
    CU_ASSERT_EQUAL(column_of(lines[1], "note"), column_of(lines[2], "via"));
    CU_ASSERT_EQUAL(column_of(lines[2], "via"), column_of(lines[3], "open"));
    CU_ASSERT_EQUAL(column_of(lines[1], "part"), column_of(lines[4], "µc"));
    /* the note column starts two spaces after the widest current (9 columns) */
    CU_ASSERT_EQUAL(column_of(lines[3], "open"), column_of(lines[3], "undefined") + 9 + 2);
    free(got);
}

/* JSON: RFC 8259 sections 4 and 5 (objects of named members, arrays of
 * values); a table is an array of one object per row; the infinite high
 * limit and the undefined current are null (section 6: no Infinity or NaN)
 * with their reasons in a "why" member of their object. */
static void test_json(void)
{
    int st;
    char *got = render(FMT_JSON, report, &st);
    static const char head[] = "{\n  \"meta\": {\"program\": \"loadstack\", ";
    CU_ASSERT_EQUAL(strncmp(got, head, sizeof head - 1), 0);
    same(after_meta(got), "  \"circuit\": \"tank sender\",\n"
                          "  \"supply\": 12,\n"
                          "  \"parts\": 3,\n"
                          "  \"solved\": true,\n"
                          "  \"limits\": {\n"
                          "    \"low\": 0.5,\n"
                          "    \"high\": null,\n"
                          "    \"why\": {\"high\": \"unbounded\"}\n"
                          "  },\n"
                          "  \"tags\": [\n"
                          "    \"float\",\n"
                          "    \"arm\"\n"
                          "  ],\n"
                          "  \"rows\": [\n"
                          "    {\"part\": \"r_top\", \"current\": 0.0000025, \"note\": \"via 4.7 kΩ\"},\n"
                          "    {\"part\": \"float_sw\", \"current\": null, \"note\": \"open, \\\"dry\\\"\", "
                          "\"why\": {\"current\": \"undefined\"}},\n"
                          "    {\"part\": \"µc\", \"current\": -0.125, \"note\": \"\"}\n"
                          "  ]\n"
                          "}\n");
    CU_ASSERT_EQUAL(st, 0);
    free(got);
}

/* CSV: the table alone (the members are JSON's), a heading and one line per
 * row, every line of three fields (RFC 4180 rule 4); a number as its
 * shortest exact text, empty when not finite; the note with a comma and
 * quotes enclosed and its quotes doubled (rules 6 and 7). */
static void test_csv(void)
{
    int st;
    char *got = render(FMT_CSV, report, &st);
    same(got, "part,current,note\n"
              "r_top,0.0000025,via 4.7 kΩ\n"
              "float_sw,,\"open, \"\"dry\"\"\"\n"
              "µc,-0.125,\n");
    CU_ASSERT_EQUAL(st, 0);
    free(got);
}

/* ---- JSON strings and numbers ------------------------------------------------------------- */

static void strings(ls_wr *w)
{
    ls_wr_str(w, "quote", "say \"hi\"");
    ls_wr_str(w, "backslash", "C:\\tank");
    ls_wr_str(w, "controls", "a\nb\rc\td\x01" "e\x1f");
    ls_wr_str(w, "solidus", "1/2");
    ls_wr_str(w, "units", "4.7 kΩ, 3 µA");
}

/* RFC 8259 section 7: the quotation mark, the reverse solidus and the
 * controls U+0000..U+001F escaped (\" \\ \n \r \t, else \u00XX); the solidus
 * "/" and characters above U+001F, µ and Ω included, as themselves. */
static void test_json_strings(void)
{
    int st;
    char *got = render(FMT_JSON, strings, &st);
    same(after_meta(got), "  \"quote\": \"say \\\"hi\\\"\",\n"
                          "  \"backslash\": \"C:\\\\tank\",\n"
                          "  \"controls\": \"a\\nb\\rc\\td\\u0001e\\u001f\",\n"
                          "  \"solidus\": \"1/2\",\n"
                          "  \"units\": \"4.7 kΩ, 3 µA\"\n"
                          "}\n");
    free(got);
}

static const double numbers_in[] = {0, -0.0, 1, -12, 0.1, 1.0 / 3, 1e21, 1e-7, 6.02214076e23, -2.5e-300, 4.9e-324,
                                    1.7976931348623157e308, 123456789012345680.0};

static void numbers(ls_wr *w)
{
    ls_wr_arr(w, "n");
    for (size_t i = 0; i < sizeof numbers_in / sizeof *numbers_in; i++)
        ls_wr_num(w, NULL, numbers_in[i]);
    ls_wr_end(w);
    ls_wr_num(w, "nan", NAN);
    ls_wr_num(w, "inf", -INFINITY);
    ls_wr_num_why(w, "open", NAN, LS_WHY_UNSOLVED);
}

/* RFC 8259 section 6: each number matches `-? (0 | [1-9][0-9]*) (. [0-9]+)?
 * ([eE] [-+]? [0-9]+)?` and reads back (strtod) to the same double; NaN and
 * the infinities are null, each with its reason. */
static void test_json_numbers(void)
{
    int st;
    char *got = render(FMT_JSON, numbers, &st);
    regex_t re;
    CU_ASSERT_FATAL(regcomp(&re, "^-?(0|[1-9][0-9]*)(\\.[0-9]+)?([eE][-+]?[0-9]+)?$", REG_EXTENDED | REG_NOSUB) == 0);
    const char *p = strstr(after_meta(got), "\"n\": [");
    CU_ASSERT_PTR_NOT_NULL_FATAL(p);
    p += 6;
    for (size_t i = 0; i < sizeof numbers_in / sizeof *numbers_in; i++) {
        while (*p == ' ' || *p == '\n' || *p == ',')
            p++;
        char tok[64];
        size_t n = strcspn(p, ",\n]");
        CU_ASSERT_FATAL(n > 0 && n < sizeof tok);
        memcpy(tok, p, n);
        tok[n] = 0;
        p += n;
        if (regexec(&re, tok, 0, NULL, 0) != 0)
            printf("\n  not an RFC 8259 number: %s\n", tok);
        CU_ASSERT(regexec(&re, tok, 0, NULL, 0) == 0);
        double back = strtod(tok, NULL);
        CU_ASSERT(back == numbers_in[i]);   /* shortest text that reads back exactly */
    }
    regfree(&re);
    CU_ASSERT_PTR_NOT_NULL(strstr(got, "\"nan\": null"));
    CU_ASSERT_PTR_NOT_NULL(strstr(got, "\"inf\": null"));
    CU_ASSERT_PTR_NOT_NULL(strstr(got, "\"open\": null"));
    CU_ASSERT_PTR_NOT_NULL(strstr(got, "\"why\": {\"nan\": \"undefined\", \"inf\": \"unbounded\", \"open\": \"unsolved\"}"));
    CU_ASSERT_PTR_NULL(strstr(got, "nan,"));
    CU_ASSERT_PTR_NULL(strstr(got, "inf"  "inity"));
    free(got);
}

/* ---- CSV field rows ------------------------------------------------------------------------ */

static void field_rows(ls_wr *w)
{
    ls_wr_fields_keyed(w, "section", "name", "field", "value");
    ls_wr_keys(w, "port", "p_tank");
    ls_wr_obj(w, "fix");
    ls_wr_str(w, "kind", "buffer, then a divider");
    ls_wr_num(w, "zout", 75);
    ls_wr_end(w);
    ls_wr_arr(w, "nodes");
    ls_wr_str(w, NULL, "tank");
    ls_wr_str(w, NULL, "adc_in");
    ls_wr_end(w);
    ls_wr_str(w, "note", "line one\nline two");
}

/* A keyed CSV of field rows: four fields on every line (RFC 4180 rule 4),
 * rows named by the open objects' keys ("fix.kind"), an array joined into
 * one field, the comma and the line break enclosed in quotes (rule 6). */
static void test_csv_fields(void)
{
    int st;
    char *got = render(FMT_CSV, field_rows, &st);
    same(got, "section,name,field,value\n"
              "port,p_tank,fix.kind,\"buffer, then a divider\"\n"
              "port,p_tank,fix.zout,75\n"
              "port,p_tank,nodes,tank adc_in\n"
              "port,p_tank,note,\"line one\nline two\"\n");
    CU_ASSERT_EQUAL(st, 0);
    free(got);
}

/* ---- misuse ---------------------------------------------------------------------------------- */

#ifndef NDEBUG
/* Does fn, run on a JSON writer in a child process, stop on an assert
 * (SIGABRT)?  Misuse is a programming error: the writer asserts (asserts are
 * on in every build but release, DEVELOPERS.md). */
static bool aborts(void (*fn)(ls_wr *))
{
    fflush(stdout);
    pid_t pid = fork();
    if (pid == 0) {
        FILE *f = fopen("/dev/null", "w");
        (void)dup2(open("/dev/null", O_WRONLY), 2);   /* the assert's message is expected */
        ls_report rp = {.out = f, .fmt = FMT_JSON, .sig = 4, .command = "test"};
        ls_wr w;
        ls_wr_begin(&w, &rp);
        fn(&w);
        ls_wr_finish(&w);
        _exit(0);
    }
    int status = 0;
    waitpid(pid, &status, 0);
    return WIFSIGNALED(status) && WTERMSIG(status) == SIGABRT;
}

static void extra_close(ls_wr *w)
{
    ls_wr_obj(w, "a");
    ls_wr_end(w);
    ls_wr_end(w);   /* the top object is the writer's, not the report's */
}

static void key_in_array(ls_wr *w)
{
    ls_wr_arr(w, "list");
    ls_wr_num(w, "named", 1);   /* an array's values have no names (RFC 8259 section 5) */
}

static void no_key_in_object(ls_wr *w)
{
    ls_wr_obj(w, "o");
    ls_wr_num(w, NULL, 1);   /* an object's members are name/value pairs (section 4) */
}

static void left_open(ls_wr *w)
{
    ls_wr_obj(w, "o");   /* never closed before ls_wr_finish */
}

static void well_formed(ls_wr *w)
{
    ls_wr_obj(w, "o");
    ls_wr_arr(w, "a");
    ls_wr_end(w);
    ls_wr_end(w);
}

static void test_misuse(void)
{
    CU_ASSERT_FALSE(aborts(well_formed));   /* the harness itself */
    CU_ASSERT_TRUE(aborts(extra_close));
    CU_ASSERT_TRUE(aborts(key_in_array));
    CU_ASSERT_TRUE(aborts(no_key_in_object));
    CU_ASSERT_TRUE(aborts(left_open));
}
#endif

/* With --json: the report and the strings and numbers above, as JSON on
 * standard output, for tests/unit/report/writer_json.py to parse back. */
static int dump_json(void)
{
    void (*fns[])(ls_wr *) = {report, strings, numbers};
    for (size_t i = 0; i < sizeof fns / sizeof *fns; i++) {
        ls_report rp = {.out = stdout, .fmt = FMT_JSON, .sig = 4, .command = "test"};
        ls_wr w;
        ls_wr_begin(&w, &rp);
        fns[i](&w);
        if (ls_wr_finish(&w) != 0)
            return 1;
    }
    return 0;
}

int main(int argc, char **argv)
{
    if (argc > 1 && strcmp(argv[1], "--json") == 0)
        return dump_json();
    static const ls_cu_case cases[] = {
        {"text: prose and an aligned table", test_text},
        {"text: alignment by display width", test_text_width},
        {"json: nesting, tables, nulls with why", test_json},
        {"json: string escapes (RFC 8259 section 7)", test_json_strings},
        {"json: numbers (RFC 8259 section 6)", test_json_numbers},
        {"csv: a table (RFC 4180)", test_csv},
        {"csv: keyed field rows", test_csv_fields},
#ifndef NDEBUG
        {"misuse stops on an assert", test_misuse},
#endif
    };
    return ls_cu_run("writer", NULL, NULL, cases, LS_CU_COUNT(cases));
}
