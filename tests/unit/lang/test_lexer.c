/* test_lexer.c — tokens, positions, numbers, SI prefixes, IEC 60062 codes, units. */
#include "../../cu_run.h"
#include <math.h>
#include <string.h>

#include "lang/lexer.h"

typedef struct fixture {
    ls_arena a;
    ls_diags d;
    ls_lexer lx;
} fixture;

static void open_text(fixture *f, const char *text)
{
    ls_arena_init(&f->a);
    ls_diags_init(&f->d, &f->a);
    int id = ls_sources_add(&f->d, "t.stack", text, (unsigned)strlen(text));
    ls_lex_init(&f->lx, &f->d, id);
}

static void close_text(fixture *f)
{
    ls_diags_free(&f->d);
    ls_arena_free(&f->a);
}

/* The value of a one-number text, or NAN on any error. */
static double number_of(const char *text, ls_dims *dims)
{
    fixture f;
    open_text(&f, text);
    ls_token t;
    ls_lex_next(&f.lx, &t);
    double v = t.kind == T_NUMBER && f.d.errors == 0 ? t.num : NAN;
    if (dims)
        *dims = t.dims;
    ls_token e;
    ls_lex_next(&f.lx, &e);
    if (e.kind != T_EOF)
        v = NAN;
    close_text(&f);
    return v;
}

static bool close_to(double a, double b)
{
    return fabs(a - b) <= 1e-12 * fabs(b);
}

/* SI prefixes as defined by the BIPM SI Brochure (9th ed., 2019), table 7. */
static void test_si_prefixes(void)
{
    CU_ASSERT(close_to(number_of("1f", NULL), 1e-15));
    CU_ASSERT(close_to(number_of("1p", NULL), 1e-12));
    CU_ASSERT(close_to(number_of("3n", NULL), 3e-9));
    CU_ASSERT(close_to(number_of("4.7u", NULL), 4.7e-6));
    CU_ASSERT(close_to(number_of("4.7\xC2\xB5", NULL), 4.7e-6));  /* µ micro sign */
    CU_ASSERT(close_to(number_of("4.7\xCE\xBC", NULL), 4.7e-6));  /* μ Greek mu */
    CU_ASSERT(close_to(number_of("2m", NULL), 2e-3));
    CU_ASSERT(close_to(number_of("10k", NULL), 1e4));
    CU_ASSERT(close_to(number_of("2.2M", NULL), 2.2e6));
    CU_ASSERT(close_to(number_of("1G", NULL), 1e9));
    CU_ASSERT(close_to(number_of("1T", NULL), 1e12));
    CU_ASSERT(close_to(number_of(".5", NULL), 0.5));
    CU_ASSERT(close_to(number_of("1e-3", NULL), 1e-3));
    CU_ASSERT(close_to(number_of("2.5E+2", NULL), 250));
}

/* IEC 60062 letter-and-digit code: the letter marks the decimal point and the
 * multiplier (R for ohms, k, M, G, T). */
static void test_iec60062(void)
{
    CU_ASSERT(close_to(number_of("4k7", NULL), 4700));
    CU_ASSERT(close_to(number_of("2M2", NULL), 2.2e6));
    CU_ASSERT(close_to(number_of("0R47", NULL), 0.47));
    CU_ASSERT(close_to(number_of("4R7", NULL), 4.7));
    CU_ASSERT(close_to(number_of("47R", NULL), 47));
    CU_ASSERT(close_to(number_of("1K5", NULL), 1500));
    CU_ASSERT(isnan(number_of("4k7k", NULL)));
}

static void test_units(void)
{
    ls_dims d;
    CU_ASSERT(close_to(number_of("5V", &d), 5));
    CU_ASSERT(d.known && d.v == 1 && d.a == 0);
    CU_ASSERT(close_to(number_of("5 mV", &d), 5e-3));
    CU_ASSERT(d.known && d.v == 1 && d.a == 0);
    CU_ASSERT(close_to(number_of("20mA", &d), 0.02));
    CU_ASSERT(d.known && d.v == 0 && d.a == 1);
    CU_ASSERT(close_to(number_of("10kohm", &d), 1e4));
    CU_ASSERT(d.known && d.v == 1 && d.a == -1);
    CU_ASSERT(close_to(number_of("1 M\xCE\xA9", &d), 1e6));        /* Ω U+03A9 */
    CU_ASSERT(d.known && d.v == 1 && d.a == -1);
    CU_ASSERT(close_to(number_of("1k\xE2\x84\xA6", &d), 1e3));      /* Ω U+2126 */
    CU_ASSERT(close_to(number_of("2mS", &d), 2e-3));
    CU_ASSERT(d.known && d.v == -1 && d.a == 1);
    CU_ASSERT(close_to(number_of("0.25W", &d), 0.25));
    CU_ASSERT(d.known && d.v == 1 && d.a == 1);
    CU_ASSERT(close_to(number_of("1%", &d), 0.01));
    CU_ASSERT(!d.known);
    CU_ASSERT(close_to(number_of("50ppm", &d), 50e-6));
    CU_ASSERT(isnan(number_of("10x", NULL)));
}

static void test_detached_prefix_is_error(void)
{
    fixture f;
    open_text(&f, "2 k");
    ls_token t;
    ls_lex_next(&f.lx, &t);
    CU_ASSERT_EQUAL(t.kind, T_ERROR);
    CU_ASSERT_EQUAL(f.d.errors, 1);
    int line, col;
    ls_loc_linecol(&f.d, f.d.items[0].loc.file, f.d.items[0].loc.start, &line, &col);
    CU_ASSERT_EQUAL(line, 1);
    CU_ASSERT_EQUAL(col, 3);
    close_text(&f);
}

static void test_overflow_is_error(void)
{
    CU_ASSERT(isnan(number_of("1e999", NULL)));
}

/* Token kinds and 1-based line:column positions (columns count characters). */
static void test_tokens_and_positions(void)
{
    fixture f;
    open_text(&f, "resistor r1 a -> b.c 4k7 tol=1%\n  \xCE\xA9x\nrails=0..5 || <= >= # note\n");
    ls_tok want[] = {T_IDENT, T_IDENT, T_IDENT, T_ARROW, T_IDENT, T_NUMBER, T_IDENT, T_EQ, T_NUMBER, T_NEWLINE,
                     T_ERROR, T_IDENT, T_NEWLINE, T_IDENT, T_EQ, T_NUMBER, T_DOTDOT, T_NUMBER, T_PARALLEL, T_LE,
                     T_GE, T_NEWLINE, T_EOF};
    int cols[] = {1, 10, 13, 15, 18, 22, 26, 29, 30, 32, 3, 4, 5, 1, 6, 7, 8, 10, 12, 15, 18, 27, 1};
    int lines[] = {1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 2, 2, 2, 3, 3, 3, 3, 3, 3, 3, 3, 3, 4};
    for (size_t i = 0; i < sizeof want / sizeof want[0]; i++) {
        ls_token t;
        ls_lex_next(&f.lx, &t);
        CU_ASSERT_EQUAL(t.kind, want[i]);
        int line, col;
        ls_loc_linecol(&f.d, t.loc.file, t.loc.start, &line, &col);
        CU_ASSERT_EQUAL(line, lines[i]);
        CU_ASSERT_EQUAL(col, cols[i]);
        if (i == 4)
            CU_ASSERT(t.len == 3 && memcmp(t.text, "b.c", 3) == 0);
    }
    close_text(&f);
}

static void test_continuation(void)
{
    fixture f;
    open_text(&f, "a \\\n  b\n");
    ls_token t;
    ls_lex_next(&f.lx, &t);
    CU_ASSERT_EQUAL(t.kind, T_IDENT);
    ls_lex_next(&f.lx, &t);
    CU_ASSERT_EQUAL(t.kind, T_IDENT);  /* the newline after '\' is not a token */
    int line, col;
    ls_loc_linecol(&f.d, t.loc.file, t.loc.start, &line, &col);
    CU_ASSERT_EQUAL(line, 2);
    CU_ASSERT_EQUAL(col, 3);
    close_text(&f);
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"SI prefixes", test_si_prefixes},
        {"IEC 60062 codes", test_iec60062},
        {"units", test_units},
        {"detached prefix", test_detached_prefix_is_error},
        {"overflow", test_overflow_is_error},
        {"tokens and positions", test_tokens_and_positions},
        {"continuation", test_continuation},
    };
    return ls_cu_run("lexer", NULL, NULL, cases, LS_CU_COUNT(cases));
}
