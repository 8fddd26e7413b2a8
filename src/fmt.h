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

/* Full precision for machine formats: %.17g, or "null" when not finite. */
char *ls_fmt_full(char *buf, size_t n, double v);

#endif
