/* fmt.h — number formatting shared by the reporters and the plots. */
#ifndef LS_FMT_H
#define LS_FMT_H

#include <stdbool.h>
#include <stddef.h>

/* Write v in engineering notation with `sig` significant digits and an SI prefix
 * glued to `unit` ("V", "A", "W", "Ω", or "" for a plain number): 4.700 kΩ,
 * -12.30 mV, 0 V.  With ascii, µ becomes u and Ω becomes ohm.  Infinity prints as
 * "unbounded" (with its sign), NaN as "undefined".  Returns buf. */
char *ls_fmt_eng(char *buf, size_t n, double v, const char *unit, int sig, bool ascii);

/* x (positive, finite) with d decimals, as printf's "%.*f" writes it in the
 * default rounding mode (exact, ties to even), without a NUL: the length, or 0
 * when x * 10^d is beyond the exact 64-bit reckoning (d > 18, x >= 2^63,
 * subnormal x), left to printf.  out needs 40 bytes. */
int ls_fmt_fixed(char *out, double x, int d);

/* Full precision for machine formats: %.17g, or "null" when not finite. */
char *ls_fmt_full(char *buf, size_t n, double v);

/* Exactly snprintf(buf, n, "%.17g", v), for every v ("inf", "nan" too); finite
 * values by the fast path of numfmt.h.  Returns buf. */
char *ls_fmt_g17(char *buf, size_t n, double v);

/* ls_fmt_g17 into a buffer that lives until the end of the enclosing block, for
 * a printf argument: printf("%s", LS_G17(v)) writes what "%.17g" would. */
#define LS_G17(v) ls_fmt_g17((char[32]){0}, 32, (v))

#endif
