/* dconv_ref.cc — the reference for test_numfmt.c: double-conversion's shortest
 * mode (Debian's libdouble-conversion, an outside implementation of the same
 * shortest round-trip digits) in the machine formats' layout: plain digits for
 * decimal exponents -6 .. 20, an exponent with its sign outside, one zero for
 * both signs of zero. */
#include <double-conversion/double-to-string.h>

extern "C" int ref_dconv_shortest(char *buf, int size, double v)
{
    using double_conversion::DoubleToStringConverter;
    const DoubleToStringConverter conv(
        DoubleToStringConverter::EMIT_POSITIVE_EXPONENT_SIGN | DoubleToStringConverter::UNIQUE_ZERO, "null", "null",
        'e', -6, 21, 0, 0);
    double_conversion::StringBuilder sb(buf, size);
    if (!conv.ToShortest(v, &sb))
        return -1;
    int n = sb.position();
    sb.Finalize();
    return n;
}
