/* numfmt.cc — %.17g text from double-conversion's correctly rounded digits.
 *
 * Built without exceptions or RTTI and using nothing of the C++ library, so the
 * object needs only double-conversion itself at link time. */
#include "numfmt.h"

#include <double-conversion/double-to-string.h>

#include <cmath>
#include <cstdint>
#include <cstring>

namespace {

using double_conversion::DoubleToStringConverter;

const int kDigits = 17; /* the precision of %.17g */

/* The one kind of input on which the library and printf part ways: an exact
 * value of 18 significant digits ending in 5, halfway between two 17-digit
 * results.  The library rounds it away from zero; printf, in the default
 * rounding mode, to the even neighbour.
 *
 * With |v| = m * 2^e and m odd, the exact decimal value is m * 5^-e / 10^-e
 * when e < 0, whose digits are those of m * 5^-e (odd, so no trailing zero; a
 * multiple of 5, so ending in 5).  It is a halfway case exactly when that
 * integer has 18 digits, which needs -e <= 25 (5^26 > 10^18).  An integer value
 * (e >= 0) cannot be one: with 17 + t digits, its last t would read 50...0, so
 * 2^(t-1) would divide it exactly (e = t - 1) and it would lie below
 * 2^53 * 2^(t-1) yet at or above 10^(16+t), which no t allows.
 *
 * For such a value, write the even-rounded 17 digits to d and the decimal
 * point position (value = digits * 10^(point - length)) and return the digit
 * count; otherwise return 0. */
int halfway_digits(double a, char *d, int *point)
{
    uint64_t u;
    std::memcpy(&u, &a, sizeof u);
    int be = (int)(u >> 52) & 0x7ff;
    if (be == 0 || be == 0x7ff)
        return 0; /* zero and subnormals (hundreds of digits); not finite */
    uint64_t m = (u & ((UINT64_C(1) << 52) - 1)) | (UINT64_C(1) << 52);
    int e = be - 1075;
    int tz = __builtin_ctzll(m);
    m >>= tz;
    e += tz;
    if (e >= 0 || e < -25)
        return 0;
    unsigned __int128 p = m;
    for (int i = 0; i < -e; i++)
        p *= 5;
    const uint64_t e17 = UINT64_C(100000000000000000);
    if (p < e17 || p >= (unsigned __int128)e17 * 10)
        return 0;
    uint64_t q = (uint64_t)(p / 10);
    q += q & 1; /* ties to even */
    char tmp[24];
    int n = 0;
    while (q) {
        tmp[n++] = (char)('0' + q % 10);
        q /= 10;
    }
    for (int i = 0; i < n; i++)
        d[i] = tmp[n - 1 - i];
    /* q * 10^(1 - k) with k = -e: point - n = 1 + e */
    *point = n + 1 + e;
    return n;
}

} // namespace

extern "C" size_t ls_num_g17(char *buf, double v)
{
    char d[kDigits + 8];
    int len, point;
    bool neg;
    len = halfway_digits(std::fabs(v), d, &point);
    if (len) {
        neg = std::signbit(v);
    } else {
        DoubleToStringConverter::DoubleToAscii(v, DoubleToStringConverter::PRECISION, kDigits, d, (int)sizeof d,
                                               &neg, &len, &point);
    }
    /* %g drops trailing zeros (the library may also return fewer digits than
     * asked, meaning zeros) */
    while (len > 1 && d[len - 1] == '0')
        len--;

    char *p = buf;
    if (neg)
        *p++ = '-';
    int x = point - 1; /* the exponent of the first digit */
    if (x < -4 || x >= kDigits) {
        *p++ = d[0];
        if (len > 1) {
            *p++ = '.';
            std::memcpy(p, d + 1, (size_t)(len - 1));
            p += len - 1;
        }
        *p++ = 'e';
        *p++ = x < 0 ? '-' : '+';
        int ax = x < 0 ? -x : x;
        if (ax >= 100) {
            *p++ = (char)('0' + ax / 100);
            ax %= 100;
        }
        *p++ = (char)('0' + ax / 10);
        *p++ = (char)('0' + ax % 10);
    } else if (x >= 0) {
        if (len <= x + 1) {
            std::memcpy(p, d, (size_t)len);
            p += len;
            std::memset(p, '0', (size_t)(x + 1 - len));
            p += x + 1 - len;
        } else {
            std::memcpy(p, d, (size_t)(x + 1));
            p += x + 1;
            *p++ = '.';
            std::memcpy(p, d + x + 1, (size_t)(len - x - 1));
            p += len - x - 1;
        }
    } else {
        *p++ = '0';
        *p++ = '.';
        std::memset(p, '0', (size_t)(-x - 1));
        p += -x - 1;
        std::memcpy(p, d, (size_t)len);
        p += len;
    }
    *p = '\0';
    return (size_t)(p - buf);
}
