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

/* The machine formats' number: the shortest decimal that reads back to v
 * exactly (numfmt.h), "0" for both zeros, or "null" when v is not finite.
 * Cut to n - 1 bytes as snprintf would.  Returns buf. */
char *ls_fmt_num(char *buf, size_t n, double v);

/* As ls_fmt_num, but an empty field for a value that is not finite: a CSV cell. */
char *ls_fmt_csv(char *buf, size_t n, double v);

/* ls_fmt_num / ls_fmt_csv into a buffer that lives until the end of the
 * enclosing block, for a printf argument: printf("%s", LS_NUM(v)). */
#define LS_NUM(v) ls_fmt_num((char[32]){0}, 32, (v))
#define LS_CSV(v) ls_fmt_csv((char[32]){0}, 32, (v))

#endif
