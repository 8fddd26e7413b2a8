/* report.c — what every report shares: the JSON head and end, CSV fields,
 * numbers in engineering notation and fixed digits, units, aligned tables. */
#include "report/report.h"
#include "report/textbuf.h"

#include <assert.h>
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

#include "elab/elab.h"
#include "base/fmt.h"
#include "analysis/newton.h"
#include "base/numfmt.h"

/* ---- shared pieces ------------------------------------------------------------------ */

void ls_report_json_begin(const ls_report *rp, ls_jw *w)
{
    ls_jw_init(w, rp->out, 2);
    ls_jw_obj(w, NULL);
    ls_jw_meta(w, rp->command, rp->file, rp->sets, rp->nsets);
}

int ls_report_json_end(ls_report *rp, ls_jw *w)
{
    if (ls_jw_finish(w) == 0)
        return 0;
    rp->nomem = "the reasons of the JSON report's null fields";
    rp->nomem_bytes = w->failed_bytes;
    return -1;
}

void ls_csv_number(FILE *out, double v)
{
    char b[LS_NUM_MAX];
    fputs(ls_fmt_csv(b, sizeof b, v), out);
}

void ls_csv_field(FILE *out, const char *s)
{
    if (strpbrk(s, ",\"\n\r")) {
        fputc('"', out);
        for (; *s; s++) {
            if (*s == '"')
                fputc('"', out);
            fputc(*s, out);
        }
        fputc('"', out);
    } else {
        fputs(s, out);
    }
}

const char *ls_eng(const ls_report *rp, char *buf, size_t n, double v, const char *unit)
{
    return ls_fmt_eng(buf, n, v, unit, rp->sig, rp->ascii);
}

const char *ls_fixed(const ls_report *rp, char *buf, size_t n, const char *fmt, double v)
{
    if (!rp->sig_given || v == 0 || !isfinite(v) || fmt[0] != '%') {
        snprintf(buf, n, fmt, v);
        return buf;
    }
    /* fmt's flags and width ("%+", "%12"), then '#' (keep trailing zeros) and
     * the digits asked for */
    char f[32] = "%#";
    size_t k = 2;
    const char *c = fmt + 1;
    for (; *c && strchr("+- 0#", *c) && k + 8 < sizeof f; c++)
        f[k++] = *c;
    for (; *c >= '0' && *c <= '9' && k + 8 < sizeof f; c++)
        f[k++] = *c;
    memcpy(f + k, ".*g", 4);
    int len = snprintf(buf, n, f, rp->sig, v);
    /* '#' leaves a bare point after a whole number ("12345679."): drop it */
    if (len > 0 && (size_t)len < n) {
        char *dot = strchr(buf, '.');
        if (dot && (dot[1] == '\0' || dot[1] == 'e' || dot[1] == ' '))
            memmove(dot, dot + 1, strlen(dot));
    }
    return buf;
}

const char *ls_unit_of(ls_dims d, bool ascii)
{
    const char *u = ls_dims_symbol(d);
    if (!u)
        return "";
    if (ascii && strcmp(u, "\xCE\xA9") == 0)
        return "ohm";
    return u;
}
