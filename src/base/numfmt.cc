/* numfmt.cc — shortest and fixed-point number text.
 *
 * The shortest digits come from the C++ library's std::to_chars (GCC's
 * libstdc++, a Ryu-style conversion: the shortest decimal that reads back to
 * the same double, the nearest of them when there are several), laid out here
 * as ECMAScript writes numbers.  It replaced double-conversion's shortest mode
 * for speed: about a third of the time per number, and a large grid's report
 * is millions of them (docs/performance.md, "Numbers out, the fourth round");
 * the digits are the same (tests/unit/base/test_numfmt.c compares both on
 * random doubles, tests/output checks a whole report against Python's repr).
 * The fixed-point digits stay double-conversion's (its rounding of exact ties
 * away from zero is what the engineering notation documents).
 *
 * Built without exceptions or RTTI. */
#include "base/numfmt.h"

#include <charconv>
#include <cmath>

#include <double-conversion/double-to-string.h>


namespace {

using double_conversion::DoubleToStringConverter;
using double_conversion::StringBuilder;

/* Copy n bytes (no library call: the pieces are a few bytes long). */
inline char *copy(char *out, const char *s, int n)
{
    for (int i = 0; i < n; i++)
        out[i] = s[i];
    return out + n;
}

/* n zeros. */
inline char *zeros(char *out, int n)
{
    for (int i = 0; i < n; i++)
        out[i] = '0';
    return out + n;
}

} // namespace

extern "C" size_t ls_num_shortest(char *buf, double v)
{
    char *o = buf;
    if (!std::isfinite(v)) {
        o = copy(o, "null", 4);
        *o = '\0';
        return 4;
    }
    if (v == 0) {   /* both signs of zero: "0" */
        buf[0] = '0';
        buf[1] = '\0';
        return 1;
    }
    /* "-d.ddde-XX": the digits and the exponent of the shortest text */
    char sci[40];
    std::to_chars_result r = std::to_chars(sci, sci + sizeof sci, v, std::chars_format::scientific);
    const char *p = sci, *end = r.ptr;
    if (*p == '-') {
        *o++ = '-';
        p++;
    }
    char dig[20];
    int k = 0;
    for (; p < end && *p != 'e'; p++)
        if (*p != '.')
            dig[k++] = *p;
    int e = 0;   /* v = d.ddd x 10^e */
    bool neg = p[1] == '-';
    for (p += 2; p < end; p++)
        e = 10 * e + (*p - '0');
    if (neg)
        e = -e;
    /* plain digits for exponents -6 .. 20, an exponent with its sign outside
     * (ECMAScript's Number-to-String: n is where the decimal point falls) */
    int n = e + 1;
    if (e >= -6 && e < 21) {
        if (n >= k) {                   /* an integer: the digits, then zeros */
            o = copy(o, dig, k);
            o = zeros(o, n - k);
        } else if (n > 0) {             /* the point inside the digits */
            o = copy(o, dig, n);
            *o++ = '.';
            o = copy(o, dig + n, k - n);
        } else {                        /* 0.000ddd */
            *o++ = '0';
            *o++ = '.';
            o = zeros(o, -n);
            o = copy(o, dig, k);
        }
    } else {
        *o++ = dig[0];
        if (k > 1) {
            *o++ = '.';
            o = copy(o, dig + 1, k - 1);
        }
        *o++ = 'e';
        *o++ = e < 0 ? '-' : '+';
        int a = e < 0 ? -e : e;
        char x[4];
        int nx = 0;
        do
            x[nx++] = (char)('0' + a % 10);
        while ((a /= 10) > 0);
        while (nx)
            *o++ = x[--nx];
    }
    *o = '\0';
    return (size_t)(o - buf);
}

extern "C" int ls_num_fixed(char *out, double x, int d)
{
    if (!(x >= 0 && x < 1e21) || d < 0 || d > 20)
        return 0;
    char tmp[48];
    StringBuilder sb(tmp, (int)sizeof tmp);
    if (!DoubleToStringConverter::EcmaScriptConverter().ToFixed(x, d, &sb))
        return 0;
    int n = sb.position();
    sb.Finalize();
    for (int i = 0; i < n; i++)
        out[i] = tmp[i];
    return n;
}
