/* numfmt.h — full-precision number text for the machine formats.
 *
 * ls_num_g17 writes the same characters as the C library's snprintf(buf, n,
 * "%.17g", v) does in the default rounding mode, for every finite v, several
 * times faster: the digits come from the double-conversion library (correctly
 * rounded, with the exact-halfway cases settled to even here, as printf does),
 * and the layout follows %g's rules.  A C interface over a small C++ file. */
#ifndef LS_NUMFMT_H
#define LS_NUMFMT_H

#include <stddef.h>

#ifdef __cplusplus
extern "C" {
#endif

/* Room for the longest result ("-2.2250738585072014e-308") and its NUL. */
#define LS_NUM_G17_MAX 32

/* Write v (finite) as %.17g into buf (at least LS_NUM_G17_MAX bytes), NUL
 * terminated; return the length. */
size_t ls_num_g17(char *buf, double v);

#ifdef __cplusplus
}
#endif

#endif
