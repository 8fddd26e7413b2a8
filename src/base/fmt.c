/* fmt.c — engineering notation and full-precision numbers. */
#include "base/fmt.h"

#include <math.h>
#include <pthread.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "base/numfmt.h"

static const char *prefix_for(int exp3, bool ascii)
{
    static const char *const pre[] = {"f", "p", "n", "u", "m", "", "k", "M", "G", "T"};
    int i = exp3 / 3 + 5;
    if (i < 0 || i > 9)
        return NULL;
    if (i == 3 && !ascii)
        return "\xC2\xB5"; /* µ */
    return pre[i];
}

static const char *unit_text(const char *unit, bool ascii)
{
    if (ascii && strcmp(unit, "\xCE\xA9") == 0)
        return "ohm";
    return unit;
}

/* Copy len bytes of s to buf as snprintf(buf, n, "%s", s) would: cut to n - 1
 * bytes and terminated, nothing written when n is 0. */
static void put_cut(char *buf, size_t n, const char *s, size_t len)
{
    if (!n)
        return;
    if (len > n - 1)
        len = n - 1;
    memcpy(buf, s, len);
    buf[len] = '\0';
}

/* ---- the reckoning of engineering notation -------------------------------------------
 *
 * The text is defined by the arithmetic of eng_reference below: log10 for the
 * decade, pow(10, k) for the scales, round() for the significant digits and
 * printf's %f for the mantissa.  ls_fmt_eng gets the same doubles by cheaper
 * means, each exactly equal:
 *   - pow(10, k) for the few k it needs comes from a table filled once by pow;
 *   - floor(log10(x)) is read off a table of powers of ten, except within a
 *     relative 1e-9 of a power of ten, where log10 itself decides (anywhere else
 *     its error, a few units in the last place, cannot cross an integer);
 *   - floor(e / 3.0) * 3 is integer arithmetic;
 *   - %.*f of the mantissa comes from double-conversion's correctly rounded
 *     fixed-point digits.  That library rounds an exact tie away from zero
 *     where printf rounds it to even, but no tie reaches it: the mantissa is
 *     r / 10^e3 with r already rounded to `sig` digits, so it lies within a few
 *     units in the last place of a number with exactly `decimals` decimals,
 *     never half way between two.
 * tests/unit/base/test_fmt.c compares the two on random and edge inputs. */

/* The slow original, kept for what the fast path leaves to it (more than 17
 * digits, magnitudes beyond FAST_LO..FAST_HI). */
static char *eng_reference(char *buf, size_t n, double v, const char *u, const char *sep, int sig, bool ascii)
{
    double a = fabs(v);
    int e = (int)floor(log10(a));
    /* Round first so 999.95 becomes 1.000 k, not 1000 (one more digit). */
    double scale = pow(10.0, sig - 1 - e);
    double r = round(a * scale) / scale;
    if (r > 0)
        e = (int)floor(log10(r));
    int e3 = (int)(floor(e / 3.0) * 3);
    const char *p = prefix_for(e3, ascii);
    if (!p) {
        snprintf(buf, n, "%.*e%s%s", sig - 1, v, sep, u);
        return buf;
    }
    double m = r / pow(10.0, e3);
    int decimals = sig - 1 - (e - e3);
    if (decimals < 0)
        decimals = 0;
    snprintf(buf, n, "%s%.*f%s%s%s", v < 0 ? "-" : "", decimals, m, sep, p, u);
    return buf;
}

#define FAST_SIG 17       /* significant digits the fast path takes */
#define FAST_LO 1e-18     /* magnitudes it takes: [FAST_LO, FAST_HI) */
#define FAST_HI 1e18
#define P10_MIN (-40)     /* pow(10, k) for k in P10_MIN..P10_MAX */
#define P10_MAX 40
#define DEC_MIN (-22)     /* decades of floor_log10's table */
#define DEC_MAX 22
#define BE_LO (1023 - 70) /* biased binary exponents of floor_log10's range */
#define BE_HI (1023 + 70)

/* Tables filled once, on the first call, and only read after: constants in
 * all but name (pthread_once makes the filling safe from any thread). */
static double pow10_tab[P10_MAX - P10_MIN + 1];
static double dec_tab[DEC_MAX - DEC_MIN + 2];  /* 10^k, nearest double, k in DEC_MIN..DEC_MAX+1 */
static double dec_lo[DEC_MAX - DEC_MIN + 2];   /* 10^k * (1 + 1e-9) */
static double dec_hi[DEC_MAX - DEC_MIN + 2];   /* 10^k * (1 - 1e-9) */
static signed char dec_of_be[BE_HI - BE_LO + 1]; /* floor(log10(2^(be - 1023))) */
static pthread_once_t tab_once = PTHREAD_ONCE_INIT;

static void tab_init(void)
{
    for (int k = P10_MIN; k <= P10_MAX; k++)
        pow10_tab[k - P10_MIN] = pow(10.0, k);
    for (int k = DEC_MIN; k <= DEC_MAX + 1; k++) {
        char s[16];
        snprintf(s, sizeof s, "1e%d", k);
        double t = strtod(s, NULL);
        dec_tab[k - DEC_MIN] = t;
        dec_lo[k - DEC_MIN] = t * (1 + 1e-9);
        dec_hi[k - DEC_MIN] = t * (1 - 1e-9);
    }
    for (int be = BE_LO; be <= BE_HI; be++)
        dec_of_be[be - BE_LO] = (signed char)floor((be - 1023) * 0.30102999566398120);
}

static double pow10i(int k)
{
    return pow10_tab[k - P10_MIN];
}

/* (int)floor(log10(x)) for x > 0, as libm's log10 gives it. */
static int floor_log10(double x)
{
    if (!(x >= 1e-20 && x < 1e20))
        return (int)floor(log10(x));
    /* 2^b <= x < 2^(b+1) puts the decade at floor(b * log10 2) or one above */
    uint64_t u;
    memcpy(&u, &x, sizeof u);
    int k = dec_of_be[(int)(u >> 52) - BE_LO];
    if (x >= dec_tab[k + 1 - DEC_MIN])
        k++;
    if (x < dec_lo[k - DEC_MIN] || x > dec_hi[k + 1 - DEC_MIN])
        return (int)floor(log10(x)); /* near a power of ten: libm's own say */
    return k;
}

/* The text of a value with no digits to round: "undefined" for NaN,
 * "[-]unbounded" for an infinity, "0 UNIT" for zero, into buf.  false for
 * any other value (buf untouched). */
static bool eng_special(char *buf, size_t n, double v, const char *sep, const char *u)
{
    if (isnan(v))
        snprintf(buf, n, "undefined");
    else if (isinf(v))
        snprintf(buf, n, "%sunbounded", v < 0 ? "-" : "");
    else if (v == 0)
        snprintf(buf, n, "0%s%s", sep, u);
    else
        return false;
    return true;
}

/* "[-]M SEP PREFIX UNIT" into buf: the mantissa m (> 0) with `decimals`
 * digits after the point, v's sign.  The digits come from ls_num_fixed,
 * the rest is copied in place; printf only where those do not fit. */
static void eng_assemble(char *buf, size_t n, double v, double m, int decimals, const char *sep, const char *p,
                         const char *u)
{
    char t[128];
    size_t len = 0;
    if (v < 0)
        t[len++] = '-';
    int k = ls_num_fixed(t + len, m, decimals);
    if (!k) {
        snprintf(buf, n, "%s%.*f%s%s%s", v < 0 ? "-" : "", decimals, m, sep, p, u);
        return;
    }
    len += (size_t)k;
    /* the separator and the prefix are a byte or two: copied in place */
    for (const char *q = sep; *q; q++)
        t[len++] = *q;
    for (const char *q = p; *q; q++)
        t[len++] = *q;
    for (const char *q = u; *q; q++) {
        if (len == sizeof t) { /* a unit longer than any the program has */
            snprintf(buf, n, "%s%.*f%s%s%s", v < 0 ? "-" : "", decimals, m, sep, p, u);
            return;
        }
        t[len++] = *q;
    }
    put_cut(buf, n, t, len);
}

char *ls_fmt_eng(char *buf, size_t n, double v, const char *unit, int sig, bool ascii)
{
    const char *u = unit_text(unit ? unit : "", ascii);
    const char *sep = u[0] ? " " : "";
    if (eng_special(buf, n, v, sep, u))
        return buf;
    if (sig < 1)
        sig = 1;
    double a = fabs(v);
    if (sig > FAST_SIG || !(a >= FAST_LO && a < FAST_HI))
        return eng_reference(buf, n, v, u, sep, sig, ascii);
    pthread_once(&tab_once, tab_init);

    /* round to sig digits, then take the decade of the rounded value (9.9996
     * at 4 digits is 10.00) and the prefix of its group of three */
    int e = floor_log10(a);
    double scale = pow10i(sig - 1 - e);
    double r = round(a * scale) / scale;
    if (r > 0)
        e = floor_log10(r);
    int e3 = e >= 0 ? e / 3 * 3 : -((2 - e) / 3) * 3;
    const char *p = prefix_for(e3, ascii);
    if (!p) {
        snprintf(buf, n, "%.*e%s%s", sig - 1, v, sep, u);
        return buf;
    }
    int decimals = sig - 1 - (e - e3);
    eng_assemble(buf, n, v, r / pow10i(e3), decimals < 0 ? 0 : decimals, sep, p, u);
    return buf;
}

char *ls_fmt_num(char *buf, size_t n, double v)
{
    if (!isfinite(v)) {
        put_cut(buf, n, "null", 4);
        return buf;
    }
    if (n >= LS_NUM_MAX) {
        ls_num_shortest(buf, v);
    } else {
        char t[LS_NUM_MAX];
        put_cut(buf, n, t, ls_num_shortest(t, v));
    }
    return buf;
}

char *ls_fmt_csv(char *buf, size_t n, double v)
{
    if (!isfinite(v)) {
        put_cut(buf, n, "", 0);
        return buf;
    }
    return ls_fmt_num(buf, n, v);
}
