/* units.h — physical dimensions as exponents of volt and ampere.
 * ohm = V/A, S = A/V, W = V·A.  `known` false means a plain number that adopts
 * the unit of whatever it meets (see docs/language.md, "Units"). */
#ifndef LS_UNITS_H
#define LS_UNITS_H

#include <stdbool.h>
#include <stddef.h>

typedef struct ls_dims {
    signed char v, a;  /* exponents of V and A */
    bool known;
} ls_dims;

#define LS_FREE     ((ls_dims){0, 0, false})
#define LS_VOLT     ((ls_dims){1, 0, true})
#define LS_AMP      ((ls_dims){0, 1, true})
#define LS_WATT     ((ls_dims){1, 1, true})
#define LS_OHM      ((ls_dims){1, -1, true})
#define LS_SIEMENS  ((ls_dims){-1, 1, true})
/* LSB of an adc: not a physical dimension, so a marker exponent that no
 * product of volts and amperes in a circuit reaches; it is accepted only in a
 * port's budget= (elab.c) and is an error anywhere else. */
#define LS_LSB      ((ls_dims){64, 0, true})

static inline bool ls_dims_is_lsb(ls_dims d) { return d.known && d.v == 64 && d.a == 0; }

static inline bool ls_dims_eq(ls_dims x, ls_dims y)
{
    return x.known == y.known && (!x.known || (x.v == y.v && x.a == y.a));
}

/* A plain name for a dimension: "a voltage", "a resistance", "a pure number",
 * or "a quantity in V^2/A" for anything else.  buf is used for the last case. */
const char *ls_dims_name(ls_dims d, char *buf, size_t n);
/* Short unit symbol ("V", "A", "W", "Ω", "S", "") or NULL when there is none. */
const char *ls_dims_symbol(ls_dims d);

/* Parse a unit word with an optional SI prefix ("mV", "kohm", "MΩ", "%", "ppm").
 * On success sets *scale and *dims and returns true. */
bool ls_unit_parse(const char *s, size_t n, double *scale, ls_dims *dims);
/* Parse a bare SI prefix ("k", "m", "µ") into *scale. */
bool ls_prefix_parse(const char *s, size_t n, double *scale);

#endif
