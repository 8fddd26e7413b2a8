/* units.c — unit words, SI prefixes and dimension names. */
#include "base/units.h"

#include <stdio.h>
#include <string.h>

static const struct { const char *name; double scale; } prefixes[] = {
    {"f", 1e-15}, {"p", 1e-12}, {"n", 1e-9}, {"u", 1e-6}, {"\xC2\xB5", 1e-6},
    {"\xCE\xBC", 1e-6}, {"m", 1e-3}, {"k", 1e3}, {"M", 1e6}, {"G", 1e9}, {"T", 1e12},
};

static const struct { const char *name; ls_dims dims; } units[] = {
    {"V", LS_VOLT}, {"A", LS_AMP}, {"W", LS_WATT}, {"S", LS_SIEMENS},
    {"ohm", LS_OHM}, {"\xCE\xA9", LS_OHM}, {"\xE2\x84\xA6", LS_OHM},
};

bool ls_prefix_parse(const char *s, size_t n, double *scale)
{
    for (size_t i = 0; i < sizeof prefixes / sizeof prefixes[0]; i++) {
        if (strlen(prefixes[i].name) == n && memcmp(prefixes[i].name, s, n) == 0) {
            *scale = prefixes[i].scale;
            return true;
        }
    }
    return false;
}

static bool plain_unit(const char *s, size_t n, ls_dims *dims)
{
    for (size_t i = 0; i < sizeof units / sizeof units[0]; i++) {
        if (strlen(units[i].name) == n && memcmp(units[i].name, s, n) == 0) {
            *dims = units[i].dims;
            return true;
        }
    }
    return false;
}

bool ls_unit_parse(const char *s, size_t n, double *scale, ls_dims *dims)
{
    if (n == 1 && s[0] == '%') {
        *scale = 0.01;
        *dims = LS_FREE;
        return true;
    }
    if (n == 3 && memcmp(s, "ppm", 3) == 0) {
        *scale = 1e-6;
        *dims = LS_FREE;
        return true;
    }
    if (n == 3 && memcmp(s, "LSB", 3) == 0) {
        *scale = 1;
        *dims = LS_LSB;
        return true;
    }
    if (plain_unit(s, n, dims)) {
        *scale = 1;
        return true;
    }
    /* A prefix is one character, which is one to two bytes of UTF-8. */
    for (size_t k = 1; k <= 2 && k < n; k++) {
        if (ls_prefix_parse(s, k, scale) && plain_unit(s + k, n - k, dims))
            return true;
    }
    return false;
}

const char *ls_dims_name(ls_dims d, char *buf, size_t n)
{
    if (!d.known || (d.v == 0 && d.a == 0))
        return "a pure number";
    if (ls_dims_is_lsb(d))
        return "a number of LSB";
    if (d.v == 1 && d.a == 0) return "a voltage";
    if (d.v == 0 && d.a == 1) return "a current";
    if (d.v == 1 && d.a == 1) return "a power";
    if (d.v == 1 && d.a == -1) return "a resistance";
    if (d.v == -1 && d.a == 1) return "a conductance";
    snprintf(buf, n, "a quantity in V^%d·A^%d", d.v, d.a);
    return buf;
}

const char *ls_dims_symbol(ls_dims d)
{
    if (!d.known || (d.v == 0 && d.a == 0)) return "";
    if (ls_dims_is_lsb(d)) return "LSB";
    if (d.v == 1 && d.a == 0) return "V";
    if (d.v == 0 && d.a == 1) return "A";
    if (d.v == 1 && d.a == 1) return "W";
    if (d.v == 1 && d.a == -1) return "\xCE\xA9";
    if (d.v == -1 && d.a == 1) return "S";
    return NULL;
}
