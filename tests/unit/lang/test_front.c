/* test_front.c — the front end's memory and tree: the arena (alignment,
 * zeroed memory, large blocks, the failure flag), numbers read without strtod
 * against the C library's strtod, and every statement kind's fields in the
 * compact syntax tree against the positions of the source text. */
#include "../../cu_run.h"
#include <math.h>
#include <stdalign.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lang/lexer.h"
#include "lang/nodenames.h"
#include "lang/parser.h"
#include "elab/elab.h"

static uint64_t next64(uint64_t *s) /* splitmix64 (Steele, Lea, Flood, OOPSLA 2014) */
{
    uint64_t z = (*s += 0x9e3779b97f4a7c15ull);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
    return z ^ (z >> 31);
}

static int all_zero(const unsigned char *p, size_t n)
{
    for (size_t i = 0; i < n; i++)
        if (p[i])
            return 0;
    return 1;
}

/* ---- arena ------------------------------------------------------------------------------ */

/* C11 7.19: max_align_t is the alignment of every scalar type; a type that
 * needs it has a size that is a multiple of it. */
static void test_arena_alignment(void)
{
    ls_arena a;
    ls_arena_init(&a);
    int wrong = 0;
    for (size_t size = 0; size <= 200; size++) {
        ls_arena_strndup(&a, "x", size % 3); /* unaligned text in between */
        uintptr_t p = (uintptr_t)ls_arena_alloc(&a, size);
        wrong += p == 0;
        if (size % alignof(max_align_t) == 0)
            wrong += p % alignof(max_align_t) != 0;
        wrong += p % alignof(double) != 0 || p % alignof(void *) != 0;
    }
    CU_ASSERT_EQUAL(wrong, 0);
    CU_ASSERT_FALSE(a.failed);
    ls_arena_free(&a);
}

/* Zeroed allocations stay zeroed however text, printf output and large blocks
 * are mixed in, across many blocks; text keeps its contents. */
static void test_arena_zero_and_contents(void)
{
    ls_arena a;
    ls_arena_init(&a);
    uint64_t seed = 5;
    enum { N = 60000 };
    char **text = malloc(N * sizeof *text);
    unsigned char **zero = malloc(N * sizeof *zero);
    size_t *zlen = malloc(N * sizeof *zlen);
    int wrong = 0;
    for (int i = 0; i < N; i++) {
        char buf[64];
        snprintf(buf, sizeof buf, "s%d-%llu", i, (unsigned long long)(next64(&seed) % 100000));
        text[i] = i % 3 ? ls_arena_strdup(&a, buf) : ls_arena_printf(&a, "%s", buf);
        size_t rn = next64(&seed) % 40;
        char *raw = ls_arena_alloc_bytes(&a, rn); /* the caller's bytes: dirtied */
        memset(raw, 0xff, rn);
        zlen[i] = i % 997 == 0 ? (size_t)(3 << 20) + next64(&seed) % 4096 : next64(&seed) % 300;
        zero[i] = ls_arena_alloc(&a, zlen[i]);
        wrong += !all_zero(zero[i], zlen[i]);
        memset(zero[i], 0xa5, zlen[i] < 64 ? zlen[i] : 64); /* dirty it afterwards */
    }
    for (int i = 0; i < N; i++) {
        char buf[64];
        snprintf(buf, sizeof buf, "s%d-", i);
        wrong += strncmp(text[i], buf, strlen(buf)) != 0;
        if (zlen[i] > 64)
            wrong += !all_zero(zero[i] + 64, zlen[i] - 64);
    }
    CU_ASSERT_EQUAL(wrong, 0);
    CU_ASSERT_FALSE(a.failed);
    CU_ASSERT(a.used <= a.reserved);
    CU_ASSERT(a.reserved > (size_t)60 * (3 << 20)); /* the large ones got blocks of their own */
    ls_arena_free(&a);
    CU_ASSERT_EQUAL(a.used, 0);
    CU_ASSERT_PTR_NOT_NULL(ls_arena_alloc(&a, 0)); /* usable again, size 0 included */
    ls_arena_free(&a);
    free(text);
    free(zero);
    free(zlen);
}

/* printf into the arena gives what the C library's snprintf gives. */
static void test_arena_printf(void)
{
    ls_arena a;
    ls_arena_init(&a);
    char want[128];
    snprintf(want, sizeof want, "%s|%5d|%.17g|%x", "node", 42, 0.1, 255u);
    CU_ASSERT_STRING_EQUAL(ls_arena_printf(&a, "%s|%5d|%.17g|%x", "node", 42, 0.1, 255u), want);
    CU_ASSERT_STRING_EQUAL(ls_arena_strndup(&a, "abcdef", 3), "abc");
    ls_arena_free(&a);
}

/* A request that cannot be met sets failed, which stays set. */
static void test_arena_failed(void)
{
    ls_arena a;
    ls_arena_init(&a);
    CU_ASSERT_PTR_NOT_NULL(ls_arena_alloc(&a, 10));
    CU_ASSERT_PTR_NULL(ls_arena_alloc(&a, SIZE_MAX - 8));
    CU_ASSERT(a.failed);
    CU_ASSERT_PTR_NULL(ls_arena_alloc_bytes(&a, SIZE_MAX / 2));
    CU_ASSERT_PTR_NOT_NULL(ls_arena_alloc(&a, 10));
    CU_ASSERT(a.failed);
    ls_arena_free(&a);
}

/* ---- numbers ---------------------------------------------------------------------------- */

/* The lexer's value of text (one number token), or NAN on an error. */
static double lex_value(const char *text)
{
    ls_arena a;
    ls_diags d;
    ls_arena_init(&a);
    ls_diags_init(&d, &a);
    int id = ls_sources_add(&d, "n", text, (unsigned)strlen(text));
    ls_lexer lx;
    ls_lex_init(&lx, &d, id);
    ls_token t;
    ls_lex_next(&lx, &t);
    double v = t.kind == T_NUMBER && d.errors == 0 ? t.num : NAN;
    ls_diags_free(&d);
    ls_arena_free(&a);
    return v;
}

/* Random decimals (1 to 20 digits, a fraction or not, an exponent of 1 to 4
 * digits or none) read exactly as glibc's strtod reads them (correctly
 * rounded: ISO C 7.22.1.3 with IEEE 754 arithmetic), bit for bit. */
static void test_numbers_match_strtod(void)
{
    uint64_t seed = 42;
    int wrong = 0, checked = 0;
    for (int i = 0; i < 200000; i++) {
        char s[64];
        int n = 0;
        int digits = 1 + (int)(next64(&seed) % 20);
        int point = next64(&seed) % 2 ? (int)(next64(&seed) % (unsigned)digits) : -1;
        for (int k = 0; k < digits; k++) {
            if (k == point && k > 0)
                s[n++] = '.';
            s[n++] = (char)('0' + next64(&seed) % 10);
        }
        if (next64(&seed) % 2) {
            s[n++] = next64(&seed) % 2 ? 'e' : 'E';
            int sign = (int)(next64(&seed) % 3);
            if (sign)
                s[n++] = sign == 1 ? '-' : '+';
            int ed = 1 + (int)(next64(&seed) % 4);
            for (int k = 0; k < ed; k++)
                s[n++] = (char)('0' + (k == 0 ? next64(&seed) % 4 : next64(&seed) % 10));
        }
        s[n] = 0;
        double want = strtod(s, NULL);
        double got = lex_value(s);
        if (!isfinite(want)) {
            wrong += !isnan(got); /* out of range is an error */
            continue;
        }
        checked++;
        if (memcmp(&want, &got, sizeof want) != 0) {
            if (wrong < 5)
                fprintf(stderr, "number '%s': lexer %.17g, strtod %.17g\n", s, got, want);
            wrong++;
        }
    }
    CU_ASSERT_EQUAL(wrong, 0);
    CU_ASSERT(checked > 150000);
    /* a few by hand: the largest exact powers, many digits, leading zeros */
    static const char *const cases[] = {"1e22", "9e22", "123456789012345", "1234567890123456",
                                        "0.000000000000000000001", "4.7", "0.1", "3.3e-22", "007",
                                        "2.5E+2", ".5", "1e-320"};
    for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++) {
        double want = strtod(cases[k], NULL), got = lex_value(cases[k]);
        CU_ASSERT_EQUAL(memcmp(&want, &got, sizeof want), 0);
    }
}

/* ---- the tree --------------------------------------------------------------------------- */

static const char *const CIRCUIT =
    "title \"Soil probe\"\n"
    "let vref = 3.3 V\n"
    "let k = max(1, 2, 3) * -vref\n"
    "ground gnd\n"
    "block divider top bottom mid ratio=0.5 spare=\n"
    "  resistor ra top -> mid 10k\n"
    "  resistor rb mid -> bottom 10k*ratio\n"
    "end\n"
    "use divider d1 top=vref_n bottom=gnd mid=probe\n"
    "voltage vs gnd -> vref_n vref\n"
    "resistor rload probe -> gnd 1M tol=1%\n"
    "opamp u1 plus=probe minus=out out=out\n"
    "expect probe = 1.65 V within 2%\n"
    "expect probe between 1 V and 2 V\n"
    "rule ratio >= 10\n";

/* Byte offset of the n-th (from 0) occurrence of what, after the start of
 * the line that begins with line. */
static unsigned at(const char *line, const char *what, int n)
{
    const char *l = strstr(CIRCUIT, line);
    const char *p = strstr(l, what);
    while (n-- > 0)
        p = strstr(p + 1, what);
    return (unsigned)(p - CIRCUIT);
}

static int loc_is(ls_loc l, unsigned start, size_t len)
{
    return l.start == start && l.end == start + len;
}

static void test_tree_fields(void)
{
    ls_arena a;
    ls_diags d;
    ls_arena_init(&a);
    ls_diags_init(&d, &a);
    ls_program prog;
    CU_ASSERT_EQUAL_FATAL(ls_parse_string(&d, "t.stack", CIRCUIT, strlen(CIRCUIT), &prog), 0);
    CU_ASSERT_EQUAL_FATAL(prog.n, 12);
    ls_stmt *const *s = prog.stmts;

    CU_ASSERT_EQUAL(s[0]->kind, S_TITLE);
    CU_ASSERT_STRING_EQUAL(s[0]->name, "Soil probe");

    CU_ASSERT_EQUAL(s[1]->kind, S_PARAM);
    CU_ASSERT_STRING_EQUAL(s[1]->name, "vref");
    CU_ASSERT(loc_is(s[1]->name_loc, at("let vref", "vref", 0), 4));
    CU_ASSERT_EQUAL(s[1]->value->kind, E_NUM);
    CU_ASSERT_EQUAL(s[1]->value->num, 3.3);
    CU_ASSERT(s[1]->value->dims.known && s[1]->value->dims.v == 1 && s[1]->value->dims.a == 0);
    CU_ASSERT(loc_is(s[1]->value->loc, at("let vref", "3.3 V", 0), 5));

    const ls_expr *k = s[2]->value; /* max(1, 2, 3) * -vref */
    CU_ASSERT_EQUAL_FATAL(k->kind, E_BIN);
    CU_ASSERT_EQUAL(k->op, LS_OP_MUL);
    CU_ASSERT(loc_is(k->op_loc, at("let k", "*", 0), 1));
    CU_ASSERT_EQUAL_FATAL(k->a->kind, E_CALL);
    CU_ASSERT_EQUAL(k->a->op, F_MAX);
    CU_ASSERT_EQUAL_FATAL(k->a->nargs, 3);
    CU_ASSERT_EQUAL(k->a->args[2]->kind, E_NUM);
    CU_ASSERT_EQUAL(k->a->args[2]->num, 3);
    CU_ASSERT(loc_is(k->a->loc, at("let k", "max", 0), strlen("max(1, 2, 3)")));
    CU_ASSERT_EQUAL_FATAL(k->b->kind, E_NEG);
    CU_ASSERT_EQUAL_FATAL(k->b->a->kind, E_NAME);
    CU_ASSERT_STRING_EQUAL(k->b->a->name, "vref");

    CU_ASSERT_EQUAL(s[3]->kind, S_GROUND);
    CU_ASSERT_STRING_EQUAL(s[3]->name, "gnd");

    const ls_stmt *b = s[4];
    CU_ASSERT_EQUAL_FATAL(b->kind, S_BLOCK);
    CU_ASSERT_STRING_EQUAL(b->name, "divider");
    CU_ASSERT_EQUAL_FATAL(b->npins, 3);
    CU_ASSERT_STRING_EQUAL(b->pins[2], "mid");
    CU_ASSERT(loc_is(b->pin_locs[0], at("block", "top", 0), 3));
    CU_ASSERT_EQUAL_FATAL(b->nopts, 2);
    CU_ASSERT_STRING_EQUAL(b->opts[0].name, "ratio");
    CU_ASSERT_EQUAL(b->opts[0].value->num, 0.5);
    CU_ASSERT_PTR_NULL(b->opts[1].value); /* spare= has no default */
    CU_ASSERT_PTR_NULL(b->value);
    CU_ASSERT_EQUAL_FATAL(b->nbody, 2);
    CU_ASSERT_EQUAL(b->body[0]->kind, S_PART);
    CU_ASSERT_STRING_EQUAL(b->body[0]->kw, "resistor");
    CU_ASSERT_STRING_EQUAL(b->body[1]->to, "bottom");
    CU_ASSERT_EQUAL(b->body[1]->value->kind, E_BIN);
    CU_ASSERT(loc_is(b->body[1]->value->op_loc, at("  resistor rb", "*", 0), 1));

    const ls_stmt *u = s[5];
    CU_ASSERT_EQUAL_FATAL(u->kind, S_USE);
    CU_ASSERT_STRING_EQUAL(u->kw, "divider");
    CU_ASSERT(loc_is(u->kw_loc, at("use", "divider", 0), 7));
    CU_ASSERT(loc_is(u->loc, at("use", "use", 0), 3));
    CU_ASSERT_STRING_EQUAL(u->name, "d1");
    CU_ASSERT_EQUAL_FATAL(u->nopts, 3);
    CU_ASSERT_STRING_EQUAL(u->opts[2].value->name, "probe");

    const ls_stmt *v = s[6];
    CU_ASSERT_EQUAL_FATAL(v->kind, S_PART);
    CU_ASSERT_STRING_EQUAL(v->kw, "voltage");
    CU_ASSERT(v->arrow);
    CU_ASSERT_STRING_EQUAL(v->name, "vs");
    CU_ASSERT_STRING_EQUAL(v->from, "gnd");
    CU_ASSERT_STRING_EQUAL(v->to, "vref_n");
    CU_ASSERT(loc_is(v->loc, at("voltage vs", "voltage", 0), 7));
    CU_ASSERT(loc_is(v->from_loc, at("voltage vs", "gnd", 0), 3));
    CU_ASSERT(loc_is(v->to_loc, at("voltage vs", "vref_n", 0), 6));
    CU_ASSERT(loc_is(v->text_loc, at("voltage vs", "voltage", 0), strlen("voltage vs gnd -> vref_n vref")));
    CU_ASSERT_EQUAL(v->value->kind, E_NAME);
    CU_ASSERT_EQUAL(v->nopts, 0);
    CU_ASSERT_PTR_NULL(v->opts);

    CU_ASSERT_EQUAL_FATAL(s[7]->nopts, 1);
    CU_ASSERT_STRING_EQUAL(s[7]->opts[0].name, "tol");
    CU_ASSERT_DOUBLE_EQUAL(s[7]->opts[0].value->num, 0.01, 1e-18);

    const ls_stmt *o = s[8]; /* named pins: no arrow, no nodes */
    CU_ASSERT_FALSE(o->arrow);
    CU_ASSERT_PTR_NULL(o->from);
    CU_ASSERT_PTR_NULL(o->to);
    CU_ASSERT_PTR_NULL(o->value);
    CU_ASSERT_EQUAL(o->nopts, 3);

    const ls_stmt *e = s[9];
    CU_ASSERT_EQUAL_FATAL(e->kind, S_EXPECT);
    CU_ASSERT_EQUAL(e->cmp, CMP_EQ);
    CU_ASSERT_STRING_EQUAL(e->lhs->name, "probe");
    CU_ASSERT_EQUAL(e->rhs->num, 1.65);
    CU_ASSERT_PTR_NULL(e->rhs2);
    CU_ASSERT_DOUBLE_EQUAL(e->within->num, 0.02, 1e-18);

    e = s[10];
    CU_ASSERT_EQUAL(e->cmp, CMP_BETWEEN);
    CU_ASSERT_EQUAL(e->rhs->num, 1);
    CU_ASSERT_EQUAL(e->rhs2->num, 2);
    CU_ASSERT_PTR_NULL(e->within);

    const ls_stmt *r = s[11];
    CU_ASSERT_EQUAL(r->kind, S_RULE);
    CU_ASSERT_STRING_EQUAL(r->name, "ratio");
    CU_ASSERT_EQUAL(r->cmp, CMP_GE);
    CU_ASSERT_EQUAL(r->rhs->num, 10);

    CU_ASSERT_FALSE(a.failed);
    ls_diags_free(&d);
    ls_arena_free(&a);
}

/* The program's list is sized for the top file's lines; an include brings
 * more statements than that, so the list grows: every statement is kept, in
 * order, the included ones spliced in where the include stands. */
static void test_many_statements_with_include(void)
{
    char inc[] = "/tmp/ls_front_incXXXXXX";
    int fd = mkstemp(inc);
    CU_ASSERT_FATAL(fd >= 0);
    FILE *f = fdopen(fd, "w");
    for (int i = 0; i < 3000; i++)
        fprintf(f, "resistor x%d a%d -> a%d 1\n", i, i, i + 1);
    fclose(f);
    size_t cap = 1 << 20, n = 0;
    char *text = malloc(cap);
    n += (size_t)snprintf(text + n, cap - n, "ground a0\ninclude \"%s\"\n", inc);
    for (int i = 0; i < 2000; i++)
        n += (size_t)snprintf(text + n, cap - n, "resistor y%d b%d -> b%d 2\n", i, i, i + 1);
    ls_arena a;
    ls_diags d;
    ls_arena_init(&a);
    ls_diags_init(&d, &a);
    ls_program prog;
    CU_ASSERT_EQUAL(ls_parse_string(&d, "main.stack", text, n, &prog), 0);
    CU_ASSERT_EQUAL_FATAL(prog.n, 1 + 3000 + 2000);
    int wrong = 0;
    for (int i = 0; i < 3000; i++) {
        char want[16];
        snprintf(want, sizeof want, "x%d", i);
        ls_stmt_buf buf; /* the lines are kept as briefs (ast.h) */
        wrong += strcmp(ls_stmt_view(prog.stmts[1 + i], &buf)->name, want) != 0;
    }
    for (int i = 0; i < 2000; i++) {
        char want[16];
        snprintf(want, sizeof want, "y%d", i);
        ls_stmt_buf buf;
        wrong += strcmp(ls_stmt_view(prog.stmts[3001 + i], &buf)->name, want) != 0;
    }
    CU_ASSERT_EQUAL(wrong, 0);
    ls_diags_free(&d);
    ls_arena_free(&a);
    free(text);
    remove(inc);
}

/* Scratch after a mark: small objects, a new ordinary block and a large
 * object's own block, released; the arena is back to its size and what it
 * hands out next is zero again, and what came before the mark is intact. */
static void test_arena_mark_release(void)
{
    ls_arena a;
    ls_arena_init(&a);
    char *keep = ls_arena_strdup(&a, "kept across the release");
    for (int round = 0; round < 3; round++) {
        ls_arena_mark m = ls_arena_mark_now(&a);
        size_t reserved = a.reserved, used = a.used;
        for (int i = 0; i < 2000; i++)
            memset(ls_arena_alloc(&a, 64), 0xab, 64);              /* 128 KB: past the first block */
        memset(ls_arena_alloc(&a, (size_t)3 << 20), 0xcd, 16);      /* a block of its own, mapped */
        memset(ls_arena_alloc(&a, 48), 0xef, 48);
        CU_ASSERT(a.reserved > reserved);
        ls_arena_release(&a, &m);
        CU_ASSERT_EQUAL(a.reserved, reserved);
        CU_ASSERT_EQUAL(a.used, used);
        unsigned char *z = ls_arena_alloc(&a, 4096);
        int nonzero = 0;
        for (int i = 0; i < 4096; i++)
            nonzero += z[i] != 0;
        CU_ASSERT_EQUAL(nonzero, 0);
        CU_ASSERT_STRING_EQUAL(keep, "kept across the release");
    }
    ls_arena_free(&a);
}

/* The message of diagnostic i, and its line and column through *line, *col. */
static const char *diag_at(const ls_diags *d, int i, int *line, int *col)
{
    ls_loc_linecol(d, d->items[i].loc.file, d->items[i].loc.start, line, col);
    return d->items[i].msg;
}

/* Part statements by shape: the parser takes any first word that is not a
 * statement keyword as a kind word (one shared string per word), and the
 * elaborator names the words that are no part kind, in the order of the text
 * and after the syntax errors (docs/language.md "What bad input gets"), a
 * block body and a statement whose tail did not parse included. */
static void test_kind_words_by_shape(void)
{
    static const char text[] = "ground g\n"                       /* 1 */
                               "R1 a b 1k\n"                      /* 2: two nodes without '->' */
                               "block f x\n"                      /* 3 */
                               "  resistr r1 x -> ground 1k\n"    /* 4 */
                               "end\n"                            /* 5 */
                               "flux f1 g -> a 1\n"               /* 6 */
                               "resistor r2 a -> g 1k\n"          /* 7 */
                               "resistor r3 a -> g 1k\n";         /* 8 */
    ls_arena a;
    ls_diags d;
    ls_program prog;
    ls_netlist nl;
    memset(&nl, 0, sizeof nl);
    ls_arena_init(&a);
    ls_diags_init(&d, &a);
    CU_ASSERT_EQUAL(ls_parse_string(&d, "t.stack", text, strlen(text), &prog), 1);
    CU_ASSERT_EQUAL_FATAL(prog.n, 6);
    CU_ASSERT_EQUAL(prog.stmts[1]->kind, S_BADPART);
    CU_ASSERT_STRING_EQUAL(prog.stmts[1]->kw, "R1");
    ls_stmt_buf buf; /* `flux f1 g -> a 1` is kept as a brief, and read as the part statement */
    CU_ASSERT_EQUAL(ls_stmt_kind(prog.stmts[3]), S_BRIEF);
    CU_ASSERT_EQUAL(ls_stmt_view(prog.stmts[3], &buf)->kind, S_PART);
    CU_ASSERT_STRING_EQUAL(ls_stmt_view(prog.stmts[3], &buf)->kw, "flux");
    CU_ASSERT_PTR_EQUAL(prog.stmts[4]->kw, prog.stmts[5]->kw);   /* one copy of "resistor" */
    CU_ASSERT_EQUAL(ls_elaborate(&prog, &d, NULL, 0, &nl), 3);
    CU_ASSERT_EQUAL_FATAL(d.n, 4);
    int line, col;
    const char *m = diag_at(&d, 0, &line, &col);
    CU_ASSERT(line == 2 && col == 6 && strstr(m, "'->' expected") != NULL);
    m = diag_at(&d, 1, &line, &col);
    CU_ASSERT(line == 2 && col == 1);
    CU_ASSERT_STRING_EQUAL(m, "unknown part kind or keyword 'R1'");
    m = diag_at(&d, 2, &line, &col);
    CU_ASSERT(line == 4 && col == 3);
    CU_ASSERT_STRING_EQUAL(m, "unknown part kind or keyword 'resistr'; did you mean 'resistor'?");
    m = diag_at(&d, 3, &line, &col);
    CU_ASSERT(line == 6 && col == 1);
    CU_ASSERT_STRING_EQUAL(m, "unknown part kind or keyword 'flux'");
    ls_netlist_free(&nl);
    ls_diags_free(&d);
    ls_arena_free(&a);
}

/* Value of text through the one constant evaluator, NaN after an error; its
 * unit in *dims. */
static double const_value(const char *text, ls_dims *dims)
{
    ls_arena a;
    ls_diags d;
    ls_arena_init(&a);
    ls_diags_init(&d, &a);
    ls_expr *e = ls_parse_expr_string(&d, "arg", text, false);
    double v;
    bool ok = e && ls_eval_const(&d, e, NULL, NULL, &v, dims);
    ls_diags_free(&d);
    ls_arena_free(&a);
    return ok ? v : NAN;
}

/* Constant expressions follow the language's rules (docs/language.md "Values
 * and expressions"): IEC 60062 letter-and-digit codes (4k7 = 4700), a || b =
 * a b / (a + b), functions, a unit that cancels is a plain number, and two
 * different units never add. */
static void test_constant_evaluator(void)
{
    ls_dims dims;
    CU_ASSERT_DOUBLE_EQUAL(const_value("4k7 * 2", &dims), 9400, 1e-9);
    CU_ASSERT(!dims.known);
    CU_ASSERT_DOUBLE_EQUAL(const_value("10k || 10k", &dims), 5000, 1e-9);
    CU_ASSERT_DOUBLE_EQUAL(const_value("sqrt(16) * 1 kohm", &dims), 4000, 1e-9);
    CU_ASSERT(dims.known && ls_dims_eq(dims, LS_OHM));
    CU_ASSERT_DOUBLE_EQUAL(const_value("10 V / 2 V", &dims), 5, 1e-12);
    CU_ASSERT(!dims.known);
    CU_ASSERT(isnan(const_value("1 V + 1 mA", &dims)));
    CU_ASSERT(isnan(const_value("1 / 0", &dims)));
    CU_ASSERT(isnan(const_value("x + 1", &dims)));
}

/* NAME=VALUE settings: the whole text is the "--set" source, an error in the
 * value points at its column there, and a text without a name is refused. */
static void test_settings(void)
{
    ls_arena a;
    ls_diags d;
    ls_arena_init(&a);
    ls_diags_init(&d, &a);
    ls_setting st;
    CU_ASSERT_EQUAL(ls_parse_setting(&d, "vref=2.5 V", &st), 0);
    CU_ASSERT_STRING_EQUAL(st.name, "vref");
    CU_ASSERT_FATAL(st.value != NULL);
    CU_ASSERT_DOUBLE_EQUAL(st.value->num, 2.5, 0);
    CU_ASSERT_EQUAL(st.loc.start, 0);
    CU_ASSERT_EQUAL(st.loc.end, 4);
    CU_ASSERT_EQUAL(d.errors, 0);
    CU_ASSERT_EQUAL(ls_parse_setting(&d, "vref=5 +", &st), -1);
    CU_ASSERT_EQUAL_FATAL(d.n, 1);
    int line, col;
    diag_at(&d, 0, &line, &col);
    CU_ASSERT(line == 1 && col == 9);
    CU_ASSERT_STRING_EQUAL(d.files[d.items[0].loc.file].path, "--set");
    CU_ASSERT_EQUAL(ls_parse_setting(&d, "=5", &st), -1);
    CU_ASSERT_EQUAL(ls_parse_setting(&d, "vref", &st), -1);
    CU_ASSERT_EQUAL(d.errors, 3);
    ls_diags_free(&d);
    ls_arena_free(&a);
}

/* The parser's node-name numbers (lang/nodenames.h): a name mentioned
 * again soon gets the same number and string; equal numbers are always equal
 * names, also when many names crowd the cache (then a name may get a second
 * number, never another name's); the text need not end after the name. */
static void test_node_name_numbers(void)
{
    ls_arena a;
    ls_arena_init(&a);
    ls_node_names nn;
    ls_node_names_init(&nn);
    const char text[] = "n1_2 -> n1_3";
    int k1, k2, k3;
    const char *s1 = ls_node_names_intern(&nn, &a, text, 4, &k1);
    const char *s2 = ls_node_names_intern(&nn, &a, text + 8, 4, &k2);
    const char *s3 = ls_node_names_intern(&nn, &a, "n1_2", 4, &k3);
    CU_ASSERT_STRING_EQUAL(s1, "n1_2");
    CU_ASSERT_STRING_EQUAL(s2, "n1_3");
    CU_ASSERT(k1 > 0 && k2 > 0 && k1 != k2);
    CU_ASSERT_EQUAL(k3, k1);
    CU_ASSERT_PTR_EQUAL(s3, s1);
    int kp; /* a prefix of a kept name is another name */
    ls_node_names_intern(&nn, &a, "n1_", 3, &kp);
    CU_ASSERT(kp != k1 && kp != k2);
    /* 200 000 mentions of 50 000 names in random order: each number stands
     * for one spelling only */
    enum { NAMES = 50000, MENTIONS = 200000 };
    int *name_of = calloc((size_t)MENTIONS + 8, sizeof *name_of);
    CU_ASSERT_PTR_NOT_NULL_FATAL(name_of);
    unsigned long long r = 88172645463325252ull;
    int wrong = 0, repeats = 0;
    for (int m = 0; m < MENTIONS; m++) {
        r ^= r << 13, r ^= r >> 7, r ^= r << 17; /* xorshift64 */
        int which = (int)(r % NAMES);
        char buf[16];
        int n = snprintf(buf, sizeof buf, "m%d", which);
        int k;
        const char *s = ls_node_names_intern(&nn, &a, buf, (size_t)n, &k);
        CU_ASSERT_FATAL(k > 0 && k <= nn.n && k < MENTIONS + 8);
        wrong += strcmp(s, buf) != 0;
        if (name_of[k] == 0)
            name_of[k] = which + 1;
        else
            repeats++, wrong += name_of[k] != which + 1;
    }
    CU_ASSERT_EQUAL(wrong, 0);
    CU_ASSERT(repeats > 0);
    free(name_of);
    ls_node_names_free(&nn);
    ls_arena_free(&a);
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"node names' numbers", test_node_name_numbers},
        {"arena mark and release", test_arena_mark_release},
        {"arena alignment", test_arena_alignment},
        {"arena zeroed memory and contents", test_arena_zero_and_contents},
        {"arena printf", test_arena_printf},
        {"arena failure flag", test_arena_failed},
        {"numbers as strtod reads them", test_numbers_match_strtod},
        {"tree fields of every statement kind", test_tree_fields},
        {"many statements with an include", test_many_statements_with_include},
        {"part statements by shape, kinds named by the elaborator", test_kind_words_by_shape},
        {"the one constant evaluator", test_constant_evaluator},
        {"NAME=VALUE settings", test_settings},
    };
    return ls_cu_run("front", NULL, NULL, cases, LS_CU_COUNT(cases));
}
