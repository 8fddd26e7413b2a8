/* numfmt.cc — shortest and fixed-point number text from double-conversion.
 *
 * Built without exceptions or RTTI and using nothing of the C++ library, so the
 * object needs only double-conversion itself at link time. */
#include "base/numfmt.h"

#include <double-conversion/double-to-string.h>


namespace {

using double_conversion::DoubleToStringConverter;
using double_conversion::StringBuilder;

/* The machine formats' flags: exponents with their sign ("1e+21"), no
 * trailing ".0", one zero for both signs of zero. */
const int kFlags = DoubleToStringConverter::EMIT_POSITIVE_EXPONENT_SIGN | DoubleToStringConverter::UNIQUE_ZERO;

} // namespace

extern "C" size_t ls_num_shortest(char *buf, double v)
{
    /* plain digits for decimal exponents -6 .. 20, as ECMAScript writes
     * numbers (a converter is a few ints: made per call, no static state) */
    const DoubleToStringConverter conv(kFlags, "null", "null", 'e', -6, 21, 0, 0);
    StringBuilder sb(buf, LS_NUM_MAX);
    if (!conv.ToShortest(v, &sb)) {
        sb.Reset();
        sb.AddString("null");
    }
    int n = sb.position();
    sb.Finalize();
    return (size_t)n;
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
