/* numfmt.h — number text from the double-conversion library.
 *
 * Two conversions, both correctly rounded by the library (no wide integer
 * arithmetic of ours, so the file builds for 32-bit targets too):
 *   - ls_num_shortest: the machine formats' text, the shortest decimal that
 *     reads back to the same double;
 *   - ls_num_fixed: "%.*f"-style digits for the engineering notation.
 * A C interface over a small C++ file. */
#ifndef LS_NUMFMT_H
#define LS_NUMFMT_H

#include <stddef.h>

#ifdef __cplusplus
extern "C" {
#endif

/* Room for the longest shortest text ("-2.2250738585072014e-308", or
 * "-0.0000012345678901234567") and its NUL. */
#define LS_NUM_MAX 32

/* Write v (finite) into buf (at least LS_NUM_MAX bytes) as the shortest
 * decimal that reads back to v: plain digits for 1e-6 <= |v| < 1e21, an
 * exponent ("1e-7", "1.5e+21") outside that (the layout of ECMAScript's
 * Number-to-String, which JSON readers expect); -0 is written "0".  NUL
 * terminated; returns the length. */
size_t ls_num_shortest(char *buf, double v);

/* Write x (finite, >= 0, below 1e21) with exactly d decimals (0 <= d <= 20)
 * into out (at least 48 bytes), without a NUL, as printf's "%.*f" writes it
 * except that an exact tie rounds away from zero (printf: to even).  Returns
 * the length, or 0 when the arguments are out of that range. */
int ls_num_fixed(char *out, double x, int d);

#ifdef __cplusplus
}
#endif

#endif
