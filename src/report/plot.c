/* plot.c — line plots and histograms with cairo (SVG and PNG surfaces). */
#include "report/plot.h"

#include "base/fmt.h"

#include <cairo-pdf.h>
#include <cairo-svg.h>
#include <cairo.h>
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <unistd.h>

#define MAX_TICKS 64
#ifndef M_PI
#define M_PI 3.14159265358979323846
#endif

/* ---- messages ------------------------------------------------------------ */

/* Writes a printf-formatted reason to msg (if any) and returns code. */
static int fail(char *msg, size_t msgn, int code, const char *fmt, ...)
{
    if (msg && msgn) {
        va_list ap;
        va_start(ap, fmt);
        vsnprintf(msg, msgn, fmt, ap);
        va_end(ap);
    }
    return code;
}

/* ---- ticks --------------------------------------------------------------- */

/* m × 10^e as the double nearest the decimal (one rounding: 10^|e| is exact
 * for |e| ≤ 22), so ticks print and compare as the decimals they stand for. */
static double dec(double m, int e)
{
    double p = 1.0;
    for (int i = 0; i < abs(e) && i < 330; i++)
        p *= 10.0;
    return e >= 0 ? m * p : m / p;
}

/* See the header. */
size_t ls_plot_nice_ticks(double lo, double hi, int target, double *ticks, size_t max,
                          double *step)
{
    if (!isfinite(lo) || !isfinite(hi) || !isfinite(hi - lo) || !ticks)
        return 0;
    if (lo > hi) {
        double t = lo;
        lo = hi;
        hi = t;
    }
    if (lo == hi) {
        double d = lo == 0 ? 1.0 : fabs(lo) * 0.1;
        lo -= d;
        hi += d;
    }
    if (target < 1)
        target = 1;
    double raw = (hi - lo) / target;
    int e = (int)floor(log10(raw));
    double f = raw / dec(1, e), m;
    /* The smallest 1-2-5 step not below raw: at most `target` intervals
     * inside the data, plus at most one partly outside at each end. */
    if (f <= 1.0 + 1e-9)
        m = 1;
    else if (f <= 2.0 + 1e-9)
        m = 2;
    else if (f <= 5.0 + 1e-9)
        m = 5;
    else
        m = 1, e++;
    double s = dec(m, e);
    /* Tolerance so a bound that is itself a tick (0.3 / 0.1 = 2.9999...)
     * starts there instead of one step further out. */
    double k0 = floor(lo / s + 1e-9), k1 = ceil(hi / s - 1e-9);
    if (k1 - k0 + 1 > (double)max)
        return 0;
    size_t n = 0;
    for (double k = k0; k <= k1; k++)
        ticks[n++] = k == 0 ? 0.0 : dec(k * m, e);
    if (step)
        *step = s;
    return n;
}

/* One axis: shown range, ticks, and how values map onto it. */
typedef struct axis {
    double lo, hi;
    bool log;
    double t[MAX_TICKS];
    size_t nt;
    double step;          /* linear tick step (sets the label digits) */
    const char *unit;
} axis;

/* Fills a from the data range [lo, hi]; the shown range is the outer ticks.
 * Log axes cover whole decades, with 1-2-5 ticks when they span ≤ 3.
 * Returns false when the range cannot be drawn (overflowing span or decades). */
static bool axis_make(axis *a, double lo, double hi, bool logscale, const char *unit, int target)
{
    a->log = logscale;
    a->unit = unit ? unit : "";
    if (!logscale) {
        a->nt = ls_plot_nice_ticks(lo, hi, target, a->t, MAX_TICKS, &a->step);
        if (a->nt < 2)
            return false;
        a->lo = a->t[0];
        a->hi = a->t[a->nt - 1];
        return a->hi > a->lo;
    }
    if (!(lo >= 1e-300 && hi <= 1e300))
        return false;
    int d0 = (int)floor(log10(lo) + 1e-9), d1 = (int)ceil(log10(hi) - 1e-9);
    if (d1 <= d0)
        d1 = d0 + 1;
    a->lo = dec(1, d0);
    a->hi = dec(1, d1);
    a->nt = 0;
    int every = (d1 - d0 + 7) / 8;
    for (int d = d0; d <= d1 && a->nt < MAX_TICKS - 3; d++) {
        if (d1 - d0 <= 3) {
            a->t[a->nt++] = dec(1, d);
            if (d < d1) {
                a->t[a->nt++] = dec(2, d);
                a->t[a->nt++] = dec(5, d);
            }
        } else if ((d - d0) % every == 0) {
            a->t[a->nt++] = dec(1, d);
        }
    }
    a->step = 0;
    return true;
}

/* Fraction 0..1 of v along the axis. */
static double axis_frac(const axis *a, double v)
{
    if (a->log)
        return (log10(v) - log10(a->lo)) / (log10(a->hi) - log10(a->lo));
    return (v - a->lo) / (a->hi - a->lo);
}

/* Tick label into buf: as many significant digits as the step resolves. */
static void axis_label(const axis *a, double v, char *buf, size_t n)
{
    int sig = 1;
    if (!a->log && v != 0) {
        sig = (int)floor(log10(fabs(v)) + 1e-9) - (int)floor(log10(a->step) + 1e-9) + 1;
        sig = sig < 1 ? 1 : sig > 6 ? 6 : sig;
    }
    ls_fmt_eng(buf, n, v, a->unit, sig, false);
}

/* An axis whose ends are exactly lo and hi (a sweep's FROM and TO), with the
 * nice ticks that fall inside.  Returns false as axis_make does. */
static bool axis_make_exact(axis *a, double lo, double hi, bool logscale, const char *unit, int target)
{
    if (!(lo < hi))
        return axis_make(a, lo, hi, logscale, unit, target);
    axis t;
    if (!axis_make(&t, lo, hi, logscale, unit, target))
        return false;
    *a = t;
    a->lo = lo;
    a->hi = hi;
    a->nt = 0;
    double eps = 1e-9 * (hi - lo);
    for (size_t i = 0; i < t.nt; i++)
        if (t.t[i] >= lo - eps && t.t[i] <= hi + eps)
            a->t[a->nt++] = t.t[i];
    return true;
}

/* ---- drawing helpers ------------------------------------------------------ */

typedef struct frame {
    double x0, y0, x1, y1;  /* plot area in pixels, y0 at the top */
    double fs;              /* base font size, pixels */
    int w, h;
} frame;

/* The boxes of every text drawn so far, so no new text lands on one. */
#define MAX_BOXES 512
typedef struct boxes {
    double r[MAX_BOXES][4]; /* x0, y0, x1, y1 */
    int n;
} boxes;

static double px(const frame *f, const axis *a, double v)
{
    return f->x0 + (f->x1 - f->x0) * axis_frac(a, v);
}

static double py(const frame *f, const axis *a, double v)
{
    return f->y1 - (f->y1 - f->y0) * axis_frac(a, v);
}

/* Width in pixels of s at the current font. */
static double text_w(cairo_t *cr, const char *s)
{
    cairo_text_extents_t te;
    cairo_text_extents(cr, s, &te);
    return te.x_advance;
}

/* Height of a line of text at the current font. */
static double text_h(cairo_t *cr)
{
    cairo_font_extents_t fe;
    cairo_font_extents(cr, &fe);
    return fe.ascent + fe.descent;
}

/* Shows s with the point (x, y) at fraction (ax, ay) of its box: (0, 0) top
 * left, (0.5, 0.5) centre, (1, 1) bottom right. */
static void text_at(cairo_t *cr, double x, double y, const char *s, double ax, double ay)
{
    cairo_font_extents_t fe;
    cairo_font_extents(cr, &fe);
    double hgt = fe.ascent + fe.descent;
    cairo_move_to(cr, x - ax * text_w(cr, s), y - ay * hgt + fe.ascent);
    cairo_show_text(cr, s);
}

static bool box_hits(const boxes *b, const double r[4])
{
    for (int i = 0; i < b->n; i++)
        if (r[0] < b->r[i][2] && b->r[i][0] < r[2] && r[1] < b->r[i][3] && b->r[i][1] < r[3])
            return true;
    return false;
}

static void box_add(boxes *b, double x0, double y0, double x1, double y1)
{
    if (b->n < MAX_BOXES) {
        double *r = b->r[b->n++];
        r[0] = x0, r[1] = y0, r[2] = x1, r[3] = y1;
    }
}

/* Draw s as text_at would, moved up or down by whole lines (0, -1, +1, -2, +2 ...
 * when `move`) to the first place where its box (with a pixel of margin) hits
 * no text drawn before and stays within ymin..ymax.  Returns false, drawing
 * nothing, when there is no such place. */
static bool text_free(cairo_t *cr, boxes *b, double x, double y, const char *s, double ax, double ay, bool move,
                      double ymin, double ymax)
{
    double w = text_w(cr, s), h = text_h(cr);
    double left = x - ax * w, top = y - ay * h;
    for (int k = 0; k < (move ? 40 : 1); k++) {
        double dy = (k % 2 ? -1 : 1) * ((k + 1) / 2) * (h + 2);
        double r[4] = {left - 1, top + dy - 1, left + w + 1, top + dy + h + 1};
        if (r[1] < ymin || r[3] > ymax || box_hits(b, r))
            continue;
        if (move) { /* a label inside the plot: a light backdrop keeps it readable over lines and bars */
            cairo_save(cr);
            cairo_set_source_rgba(cr, 1, 1, 1, 0.8);
            cairo_rectangle(cr, r[0], r[1], r[2] - r[0], r[3] - r[1]);
            cairo_fill(cr);
            cairo_restore(cr);
        }
        text_at(cr, x, y + dy, s, ax, ay);
        box_add(b, r[0], r[1], r[2], r[3]);
        return true;
    }
    return false;
}

/* s cut (ending in "...") to at most maxw pixels, into buf (n bytes). */
static const char *fit_text(cairo_t *cr, const char *s, double maxw, char *buf, size_t n)
{
    snprintf(buf, n, "%s", s);
    size_t len = strlen(buf);
    while (len > 0 && text_w(cr, buf) > maxw) {
        do
            len--;
        while (len > 0 && ((unsigned char)buf[len] & 0xC0) == 0x80); /* whole UTF-8 characters */
        if (len + 4 <= n)
            memcpy(buf + len, "...", 4);
    }
    return buf;
}

static const double palette[LS_PLOT_MAX_SERIES][3] = {
    {0.00, 0.45, 0.70}, {0.84, 0.37, 0.00}, {0.00, 0.62, 0.45}, {0.80, 0.47, 0.65},
    {0.35, 0.35, 0.35}, {0.90, 0.62, 0.00}, {0.34, 0.71, 0.91}, {0.60, 0.20, 0.20},
};

/* The base font size of a w × h picture, set on cr. */
static double set_font(cairo_t *cr, int w, int h)
{
    double sc = sqrt((double)w * h / (800.0 * 500.0));
    double fs = 12.0 * (sc < 0.6 ? 0.6 : sc > 2.5 ? 2.5 : sc);
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr, fs);
    return fs;
}

/* Widest y tick label of ya. */
static double ylabels_w(cairo_t *cr, const axis *ya)
{
    char buf[64];
    double lw = 0;
    for (size_t i = 0; i < ya->nt; i++) {
        axis_label(ya, ya->t[i], buf, sizeof buf);
        lw = fmax(lw, text_w(cr, buf));
    }
    return lw;
}

/* Every k-th tick gets a label, the smallest k whose labels (extent each,
 * pixels along the axis) leave a gap of at least `gap` between neighbours. */
static size_t label_stride(const double *pos, const double *extent, size_t n, double gap)
{
    for (size_t k = 1; k < n; k++) {
        bool ok = true;
        for (size_t i = k; i < n && ok; i += k)
            ok = fabs(pos[i] - pos[i - k]) >= (extent[i] + extent[i - k]) / 2 + gap;
        if (ok)
            return k;
    }
    return n ? n : 1;
}

/* Background of the whole picture, once. */
static void paint_white(cairo_t *cr)
{
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_paint(cr);
}

/* One panel: grid, box, ticks, the y tick labels and (xlabels) the x tick
 * labels below it, and its rotated y label cut to the panel's height. */
static void draw_panel(cairo_t *cr, const frame *f, const axis *xa, const axis *ya, bool xlabels,
                       const char *ylabel, boxes *bx)
{
    char buf[64];
    cairo_set_line_width(cr, 1);
    cairo_set_source_rgb(cr, 0.88, 0.88, 0.88);
    for (size_t i = 0; i < xa->nt; i++) {
        double x = round(px(f, xa, xa->t[i])) + 0.5;
        cairo_move_to(cr, x, f->y0);
        cairo_line_to(cr, x, f->y1);
    }
    for (size_t i = 0; i < ya->nt; i++) {
        double y = round(py(f, ya, ya->t[i])) + 0.5;
        cairo_move_to(cr, f->x0, y);
        cairo_line_to(cr, f->x1, y);
    }
    cairo_stroke(cr);

    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_rectangle(cr, f->x0, f->y0, f->x1 - f->x0, f->y1 - f->y0);
    cairo_stroke(cr);
    double tl = f->fs * 0.35, pos[MAX_TICKS] = {0}, ext[MAX_TICKS] = {0};
    for (size_t i = 0; i < xa->nt; i++) {
        double x = px(f, xa, xa->t[i]);
        cairo_move_to(cr, x, f->y1);
        cairo_line_to(cr, x, f->y1 + tl);
        cairo_stroke(cr);
        axis_label(xa, xa->t[i], buf, sizeof buf);
        pos[i] = x;
        ext[i] = text_w(cr, buf);
    }
    size_t k = label_stride(pos, ext, xa->nt, f->fs * 0.8);
    for (size_t i = 0; xlabels && i < xa->nt; i += k) {
        axis_label(xa, xa->t[i], buf, sizeof buf);
        text_free(cr, bx, pos[i], f->y1 + tl + 2, buf, 0.5, 0, false, 0, f->h);
    }
    for (size_t i = 0; i < ya->nt; i++) {
        pos[i] = py(f, ya, ya->t[i]);
        ext[i] = text_h(cr);
        cairo_move_to(cr, f->x0 - tl, pos[i]);
        cairo_line_to(cr, f->x0, pos[i]);
        cairo_stroke(cr);
    }
    k = label_stride(pos, ext, ya->nt, 2);
    for (size_t i = 0; i < ya->nt; i += k) {
        axis_label(ya, ya->t[i], buf, sizeof buf);
        text_free(cr, bx, f->x0 - tl - 2, pos[i], buf, 1, 0.5, false, 0, f->h);
    }
    if (ylabel && *ylabel) {
        char cut[512];
        fit_text(cr, ylabel, f->y1 - f->y0, cut, sizeof cut);
        double w = text_w(cr, cut), h = text_h(cr), ym = (f->y0 + f->y1) / 2;
        cairo_save(cr);
        cairo_translate(cr, f->fs * 0.4, ym);
        cairo_rotate(cr, -M_PI / 2);
        text_at(cr, 0, 0, cut, 0.5, 0);
        cairo_restore(cr);
        box_add(bx, f->fs * 0.4, ym - w / 2, f->fs * 0.4 + h, ym + w / 2);
    }
}

/* The title centred at the top and the x label centred at the bottom. */
static void draw_titles(cairo_t *cr, const frame *f, const char *title, const char *xlabel, boxes *bx)
{
    cairo_set_source_rgb(cr, 0, 0, 0);
    if (xlabel && *xlabel) {
        char cut[512];
        text_free(cr, bx, (f->x0 + f->x1) / 2, f->h - f->fs * 0.4, fit_text(cr, xlabel, f->w - 8, cut, sizeof cut),
                  0.5, 1, false, 0, f->h);
    }
    if (title && *title) {
        char cut[512];
        cairo_save(cr);
        cairo_set_font_size(cr, f->fs * 1.25);
        cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_BOLD);
        text_free(cr, bx, f->w / 2.0, f->fs * 0.8, fit_text(cr, title, f->w - 8, cut, sizeof cut), 0.5, 0, false, 0,
                  f->h);
        cairo_restore(cr);
    }
}

/* Lays out a single-panel plot area for a w × h picture whose y tick labels
 * are in ya, then draws background, grid, ticks, labels, box and title. */
static frame draw_frame(cairo_t *cr, int w, int h, const axis *xa, const axis *ya, const char *title,
                        const char *xlabel, const char *ylabel, boxes *bx)
{
    frame f = {.w = w, .h = h};
    char buf[64];
    f.fs = set_font(cr, w, h);
    f.x0 = ylabels_w(cr, ya) + f.fs * (ylabel && *ylabel ? 2.6 : 1.2);
    /* Room for half of the last x tick label, which is centred on the edge. */
    axis_label(xa, xa->t[xa->nt - 1], buf, sizeof buf);
    f.x1 = w - fmax(f.fs * 1.8, text_w(cr, buf) / 2 + 4);
    f.y0 = f.fs * (title && *title ? 3.0 : 1.2);
    f.y1 = h - f.fs * (xlabel && *xlabel ? 3.6 : 2.2);
    paint_white(cr);
    draw_titles(cr, &f, title, xlabel, bx);
    draw_panel(cr, &f, xa, ya, true, ylabel, bx);
    return f;
}

/* Dashed dark-red reference line from (xa, ya) to (xb, yb). */
static void mark_line(cairo_t *cr, double xa, double ya, double xb, double yb)
{
    static const double dash[] = {6, 4};
    cairo_save(cr);
    cairo_set_source_rgb(cr, 0.75, 0.1, 0.1);
    cairo_set_line_width(cr, 1.5);
    cairo_set_dash(cr, dash, 2, 0);
    cairo_move_to(cr, xa, ya);
    cairo_line_to(cr, xb, yb);
    cairo_stroke(cr);
    cairo_restore(cr);
}

/* ---- output ---------------------------------------------------------------- */

typedef void (*draw_fn)(cairo_t *cr, const void *desc, const axis *xa, const axis *ya, int w,
                        int h);

/* cairo stream callback: all or nothing into the FILE. */
static cairo_status_t write_cb(void *closure, const unsigned char *data, unsigned int len)
{
    return fwrite(data, 1, len, (FILE *)closure) == len ? CAIRO_STATUS_SUCCESS
                                                          : CAIRO_STATUS_WRITE_ERROR;
}

int ls_plot_format(const char *path)
{
    size_t len = path ? strlen(path) : 0;
    if (len > 4 && strcasecmp(path + len - 4, ".svg") == 0)
        return LS_PLOT_SVG;
    if (len > 4 && strcasecmp(path + len - 4, ".png") == 0)
        return LS_PLOT_PNG;
    if (len > 4 && strcasecmp(path + len - 4, ".pdf") == 0)
        return LS_PLOT_PDF;
    return 0;
}

/* Draws with fn onto an SVG, PDF or PNG surface streamed into dest's temporary
 * file; with dest NULL, into a destination opened here on path (see
 * output.h: only a regular file, renamed into place when complete) and
 * committed or discarded before returning.  A caller's dest is left for the
 * caller to commit or discard.  Returns an ls_plot_status. */
static int render(ls_dest *dest, const char *path, int w, int h, draw_fn fn, const void *desc,
                  const axis *xa, const axis *ya, char *msg, size_t msgn)
{
    const char *name = dest ? dest->path : path;
    int format = ls_plot_format(name);
    if (!format)
        return fail(msg, msgn, LS_PLOT_EFORMAT, "'%s': a plot file must end in .svg, .png or .pdf",
                    name ? name : "");
    ls_dest own;
    if (!dest) {
        char why[600];
        if (ls_dest_open(&own, "plot", path, why, sizeof why) != 0)
            return fail(msg, msgn, LS_PLOT_EIO, "%s", why);
        dest = &own;
    }
    FILE *fp = dest->f;
    bool svg = format == LS_PLOT_SVG, png = format == LS_PLOT_PNG, pdf = format == LS_PLOT_PDF;
    /* a PDF page of w × h points: the pixel sizes read as points */
    cairo_surface_t *s = svg   ? cairo_svg_surface_create_for_stream(write_cb, fp, w, h)
                         : pdf ? cairo_pdf_surface_create_for_stream(write_cb, fp, w, h)
                               : cairo_image_surface_create(CAIRO_FORMAT_RGB24, w, h);
    if (svg && cairo_surface_status(s) == CAIRO_STATUS_SUCCESS)
        cairo_svg_surface_set_document_unit(s, CAIRO_SVG_UNIT_PX);
    cairo_t *cr = cairo_create(s);
    if (cairo_status(cr) == CAIRO_STATUS_SUCCESS)
        fn(cr, desc, xa, ya, w, h);
    cairo_status_t st = cairo_status(cr);
    cairo_destroy(cr);
    if (st == CAIRO_STATUS_SUCCESS && png)
        st = cairo_surface_write_to_png_stream(s, write_cb, fp);
    cairo_surface_finish(s);
    if (st == CAIRO_STATUS_SUCCESS)
        st = cairo_surface_status(s);
    cairo_surface_destroy(s);
    int rc = LS_PLOT_OK;
    if (ferror(fp))
        rc = fail(msg, msgn, LS_PLOT_EIO, "cannot write '%s': %s", name, strerror(errno));
    else if (st != CAIRO_STATUS_SUCCESS)
        rc = fail(msg, msgn, LS_PLOT_ECAIRO, "cairo: %s", cairo_status_to_string(st));
    if (dest == &own) {
        char why[600];
        if (rc != LS_PLOT_OK)
            ls_dest_discard(&own);
        else if (ls_dest_commit(&own, why, sizeof why) != 0)
            rc = fail(msg, msgn, LS_PLOT_EIO, "%s", why);
    }
    return rc;
}

/* Checks the picture size, applying the 800 × 500 default for 0. */
static int check_size(int *w, int *h, char *msg, size_t msgn)
{
    if (*w == 0)
        *w = LS_PLOT_DEFAULT_WIDTH;
    if (*h == 0)
        *h = LS_PLOT_DEFAULT_HEIGHT;
    if (*w < 100 || *w > 20000 || *h < 100 || *h > 20000)
        return fail(msg, msgn, LS_PLOT_EARG, "picture size %d x %d is outside 100..20000", *w, *h);
    return LS_PLOT_OK;
}

/* Checks marks: count and finite values; widens [*lo, *hi] to include them. */
static int check_marks(const ls_plot_mark *m, size_t n, double *lo, double *hi, char *msg,
                       size_t msgn)
{
    if (n > LS_PLOT_MAX_MARKS || (n && !m))
        return fail(msg, msgn, LS_PLOT_EARG, "at most %d marker lines", LS_PLOT_MAX_MARKS);
    for (size_t i = 0; i < n; i++) {
        if (!isfinite(m[i].value))
            return fail(msg, msgn, LS_PLOT_EARG, "marker line %zu has no finite value", i + 1);
        *lo = fmin(*lo, m[i].value);
        *hi = fmax(*hi, m[i].value);
    }
    return LS_PLOT_OK;
}

/* ---- line plot ------------------------------------------------------------- */

#define MAX_PANELS LS_PLOT_MAX_SERIES

/* The panels of a line plot: one per y unit, in order of first appearance. */
typedef struct panels {
    int n;
    const char *unit[MAX_PANELS];
    int of[LS_PLOT_MAX_SERIES + LS_PLOT_MAX_MARKS]; /* each series' panel */
    int bounds_panel;                                /* the panel of p->yunit (bounds) */
    axis ya[MAX_PANELS];
    char ylabel[MAX_PANELS][512];
} panels;

static const char *series_unit(const ls_plot_line *p, const ls_plot_series *se)
{
    return se->unit ? se->unit : p->yunit ? p->yunit : "";
}

/* Panel of unit u, added when new; -1 when there are too many. */
static int panel_of(panels *pn, const char *u)
{
    for (int i = 0; i < pn->n; i++)
        if (strcmp(pn->unit[i], u) == 0)
            return i;
    if (pn->n == MAX_PANELS)
        return -1;
    pn->unit[pn->n] = u;
    return pn->n++;
}

/* Panel frames stacked between top and bottom with gap pixels between them. */
static frame panel_frame(const frame *all, int i, int n, double gap)
{
    frame f = *all;
    double ph = (all->y1 - all->y0 - (n - 1) * gap) / n;
    f.y0 = all->y0 + i * (ph + gap);
    f.y1 = f.y0 + ph;
    return f;
}

typedef struct line_draw {
    const ls_plot_line *p;
    panels *pn;
} line_draw;

/* The legend of panel k's curves in its top right corner (a box of text). */
static void draw_legend(cairo_t *cr, const ls_plot_line *p, const panels *pn, int k, const frame *f, boxes *bx)
{
    double tw = 0, maxw = (f->x1 - f->x0) / 2; /* a long name is cut to half the panel's width */
    int rows = 0;
    char cut[512];
    for (size_t s = 0; s < p->nseries; s++)
        if (pn->of[s] == k && !p->series[s].limit && p->series[s].name && *p->series[s].name) {
            tw = fmax(tw, text_w(cr, fit_text(cr, p->series[s].name, maxw, cut, sizeof cut)));
            rows++;
        }
    if (!rows)
        return;
    double rh = f->fs * 1.4, sw = f->fs * 2.2, pad = f->fs * 0.5;
    double bw = tw + sw + 3 * pad, bh = rows * rh + pad;
    double bx0 = f->x1 - bw - 6, by0 = f->y0 + 6;
    cairo_rectangle(cr, bx0, by0, bw, bh);
    cairo_set_source_rgba(cr, 1, 1, 1, 0.85);
    cairo_fill_preserve(cr);
    cairo_set_source_rgb(cr, 0.5, 0.5, 0.5);
    cairo_set_line_width(cr, 1);
    cairo_stroke(cr);
    int r = 0;
    for (size_t s = 0; s < p->nseries; s++) {
        const ls_plot_series *se = &p->series[s];
        if (pn->of[s] != k || se->limit || !se->name || !*se->name)
            continue;
        double y = by0 + pad / 2 + (r++ + 0.5) * rh;
        int c = (int)s % LS_PLOT_MAX_SERIES;
        cairo_set_source_rgb(cr, palette[c][0], palette[c][1], palette[c][2]);
        cairo_set_line_width(cr, 2.5);
        cairo_move_to(cr, bx0 + pad, y);
        cairo_line_to(cr, bx0 + pad + sw, y);
        cairo_stroke(cr);
        cairo_set_source_rgb(cr, 0, 0, 0);
        text_at(cr, bx0 + 2 * pad + sw, y, fit_text(cr, se->name, maxw, cut, sizeof cut), 0, 0.5);
    }
    box_add(bx, bx0, by0, bx0 + bw, by0 + bh);
}

/* One curve (a limit dashed), clipped to the panel. */
static void draw_curve(cairo_t *cr, const ls_plot_series *se, const frame *f, const axis *xa, const axis *ya,
                       int colour)
{
    static const double dash[] = {6, 4};
    bool pen = false;
    for (size_t i = 0; i < se->n; i++) {
        if (!isfinite(se->x[i]) || !isfinite(se->y[i])) {
            pen = false;
            continue;
        }
        double x = px(f, xa, se->x[i]), y = py(f, ya, se->y[i]);
        if (!pen)
            cairo_move_to(cr, x, y);
        cairo_line_to(cr, x, y);
        pen = true;
    }
    cairo_save(cr);
    if (se->limit) {
        cairo_set_source_rgb(cr, 0.75, 0.1, 0.1);
        cairo_set_line_width(cr, 1.5);
        cairo_set_dash(cr, dash, 2, 0);
    } else {
        cairo_set_source_rgb(cr, palette[colour][0], palette[colour][1], palette[colour][2]);
    }
    cairo_stroke(cr);
    cairo_restore(cr);
}

/* A limit's label at height y (just above its line), right- (ax 1) or
 * left-aligned (ax 0) at x; a limit beyond the panel is labelled at the
 * nearer edge with an arrow pointing to where it lies. */
static void edge_label(cairo_t *cr, boxes *bx, const frame *f, double x, double y, const char *name, double ax)
{
    char b[300];
    if (y < f->y0) {
        snprintf(b, sizeof b, "\xE2\x86\x91 %s", name); /* up arrow */
        text_free(cr, bx, x, f->y0 + 3, b, ax, 0, true, f->y0, f->y1);
    } else if (y > f->y1) {
        snprintf(b, sizeof b, "\xE2\x86\x93 %s", name); /* down arrow */
        text_free(cr, bx, x, f->y1 - 3, b, ax, 1, true, f->y0, f->y1);
    } else {
        text_free(cr, bx, x, y - 2, name, ax, 1, true, f->y0, f->y1);
    }
}

/* The label of a limit curve at its last finite point, right-aligned, on the
 * nearest free row of its panel. */
static void label_limit(cairo_t *cr, const ls_plot_series *se, const frame *f, const axis *xa, const axis *ya,
                        boxes *bx)
{
    for (size_t i = se->n; i-- > 0;) {
        if (!isfinite(se->x[i]) || !isfinite(se->y[i]))
            continue;
        double x = fmin(px(f, xa, se->x[i]), f->x1) - 4, y = py(f, ya, se->y[i]);
        cairo_set_source_rgb(cr, 0.75, 0.1, 0.1);
        edge_label(cr, bx, f, x, y, se->name, 1);
        return;
    }
}

static void draw_line(cairo_t *cr, const void *desc, const axis *xa, const axis *unused, int w, int h)
{
    (void)unused;
    const line_draw *ld = desc;
    const ls_plot_line *p = ld->p;
    panels *pn = ld->pn;
    boxes boxes_, *bx = &boxes_; /* 16 KB */
    bx->n = 0;
    frame all = {.w = w, .h = h};
    char buf[64];
    all.fs = set_font(cr, w, h);
    double lw = 0;
    for (int k = 0; k < pn->n; k++)
        lw = fmax(lw, ylabels_w(cr, &pn->ya[k]));
    bool ylabel = false;
    for (int k = 0; k < pn->n; k++)
        ylabel |= pn->ylabel[k][0] != '\0';
    all.x0 = lw + all.fs * (ylabel ? 2.6 : 1.2);
    axis_label(xa, xa->t[xa->nt ? xa->nt - 1 : 0], buf, sizeof buf);
    all.x1 = w - fmax(all.fs * 1.8, text_w(cr, buf) / 2 + 4);
    all.y0 = all.fs * (p->title && *p->title ? 3.0 : 1.2);
    all.y1 = h - all.fs * (p->xlabel && *p->xlabel ? 3.6 : 2.2);
    paint_white(cr);
    draw_titles(cr, &all, p->title, p->xlabel, bx);
    double gap = all.fs * 1.8;
    for (int k = 0; k < pn->n; k++) {
        frame f = panel_frame(&all, k, pn->n, gap);
        const axis *ya = &pn->ya[k];
        cairo_set_source_rgb(cr, 0, 0, 0);
        draw_panel(cr, &f, xa, ya, k == pn->n - 1, pn->ylabel[k], bx);
        cairo_save(cr);
        cairo_rectangle(cr, f.x0, f.y0, f.x1 - f.x0, f.y1 - f.y0);
        cairo_clip(cr);
        for (size_t i = 0; k == pn->bounds_panel && i < p->nbounds; i++) {
            double y = py(&f, ya, p->bounds[i].value);
            mark_line(cr, f.x0, y, f.x1, y);
        }
        cairo_set_line_width(cr, 1.8);
        cairo_set_line_cap(cr, CAIRO_LINE_CAP_ROUND); /* a lone point between gaps shows as a dot */
        cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
        for (size_t s = 0; s < p->nseries; s++)
            if (pn->of[s] == k)
                draw_curve(cr, &p->series[s], &f, xa, ya, (int)s % LS_PLOT_MAX_SERIES);
        cairo_restore(cr);
        draw_legend(cr, p, pn, k, &f, bx);
        for (size_t i = 0; k == pn->bounds_panel && i < p->nbounds; i++) {
            if (!p->bounds[i].label)
                continue;
            cairo_set_source_rgb(cr, 0.75, 0.1, 0.1);
            edge_label(cr, bx, &f, f.x0 + 4, py(&f, ya, p->bounds[i].value), p->bounds[i].label, 0); /* left: the legend is right */
        }
        for (size_t s = 0; s < p->nseries; s++)
            if (pn->of[s] == k && p->series[s].limit && p->series[s].name && *p->series[s].name)
                label_limit(cr, &p->series[s], &f, xa, ya, bx);
    }
}

/* Widen [*lo, *hi] to take in v when v lies within NEAR of the data's span
 * (dlo..dhi) beside it. */
#define NEAR 0.25
static void take_in(double *lo, double *hi, double dlo, double dhi, double v)
{
    double span = dhi - dlo;
    if (!(span > 0))
        span = dhi != 0 ? fabs(dhi) * 0.1 : 1;
    if (v < *lo && v >= dlo - NEAR * span)
        *lo = v;
    if (v > *hi && v <= dhi + NEAR * span)
        *hi = v;
}

/* The y range of each of pn's panels into lo/hi: it follows the panel's
 * curves; a limit is taken in only where it lies within NEAR of the curves'
 * span beside them, so a distant limit does not squash the curves (it is
 * marked at the edge instead).  Returns an ls_plot_status. */
static int panel_ranges(const ls_plot_line *p, const panels *pn, double *lo, double *hi, char *msg, size_t msgn)
{
    for (int k = 0; k < pn->n; k++)
        lo[k] = INFINITY, hi[k] = -INFINITY;
    for (int pass = 0; pass < 2; pass++) /* curves; then limits, for panels with no curve */
        for (size_t s = 0; s < p->nseries; s++) {
            const ls_plot_series *se = &p->series[s];
            int k = pn->of[s];
            if (se->limit != (pass == 1) || (pass == 1 && lo[k] <= hi[k]))
                continue;
            for (size_t i = 0; i < se->n; i++)
                if (isfinite(se->x[i]) && isfinite(se->y[i])) {
                    lo[k] = fmin(lo[k], se->y[i]);
                    hi[k] = fmax(hi[k], se->y[i]);
                }
        }
    if (p->nbounds) {
        double blo = INFINITY, bhi = -INFINITY;
        int rc = check_marks(p->bounds, p->nbounds, &blo, &bhi, msg, msgn);
        if (rc)
            return rc;
        int k = pn->bounds_panel;
        if (!(lo[k] <= hi[k]))
            lo[k] = blo, hi[k] = bhi;
    }
    double dlo[MAX_PANELS], dhi[MAX_PANELS];
    memcpy(dlo, lo, sizeof dlo);
    memcpy(dhi, hi, sizeof dhi);
    for (size_t i = 0; i < p->nbounds; i++) {
        int k = pn->bounds_panel;
        take_in(&lo[k], &hi[k], dlo[k], dhi[k], p->bounds[i].value);
    }
    for (size_t s = 0; s < p->nseries; s++) {
        const ls_plot_series *se = &p->series[s];
        int k = pn->of[s];
        for (size_t i = 0; se->limit && i < se->n; i++)
            if (isfinite(se->x[i]) && isfinite(se->y[i]))
                take_in(&lo[k], &hi[k], dlo[k], dhi[k], se->y[i]);
    }
    return LS_PLOT_OK;
}

/* Panel k's y label: the names of its curves (or the plot's ylabel when
 * there is one panel). */
static void panel_label(const ls_plot_line *p, panels *pn, int k)
{
    char *yl = pn->ylabel[k];
    if (pn->n == 1 && p->ylabel) {
        snprintf(yl, sizeof pn->ylabel[k], "%s", p->ylabel);
        return;
    }
    for (size_t s = 0; s < p->nseries; s++) {
        const ls_plot_series *se = &p->series[s];
        size_t len = strlen(yl);
        if (pn->of[s] == k && !se->limit && se->name && *se->name)
            snprintf(yl + len, sizeof pn->ylabel[k] - len, "%s%s", len ? ", " : "", se->name);
    }
}

/* Groups the curves into panels by unit and makes each panel's y axis from
 * its curves (and the bounds, in the panel of the plot's yunit).  Returns an
 * ls_plot_status. */
static int make_panels(const ls_plot_line *p, panels *pn, int h, char *msg, size_t msgn)
{
    memset(pn, 0, sizeof *pn);
    double lo[MAX_PANELS], hi[MAX_PANELS];
    for (size_t s = 0; s < p->nseries; s++) {
        int k = panel_of(pn, series_unit(p, &p->series[s]));
        if (k < 0)
            return fail(msg, msgn, LS_PLOT_EARG, "at most %d different units in one plot", MAX_PANELS);
        pn->of[s] = k;
    }
    pn->bounds_panel = p->nbounds ? panel_of(pn, p->yunit ? p->yunit : "") : 0;
    if (pn->bounds_panel < 0)
        return fail(msg, msgn, LS_PLOT_EARG, "at most %d different units in one plot", MAX_PANELS);
    int rc = panel_ranges(p, pn, lo, hi, msg, msgn);
    if (rc)
        return rc;
    /* about one tick per 45 pixels of panel height, at least 2 */
    int target = (int)(h / pn->n / 45);
    for (int k = 0; k < pn->n; k++) {
        if (!(lo[k] <= hi[k]))
            lo[k] = hi[k] = 0; /* a panel of limits or curves with no finite point */
        if (!axis_make(&pn->ya[k], lo[k], hi[k], false, pn->unit[k], target > 2 ? target : 2))
            return fail(msg, msgn, LS_PLOT_EARG, "data range too wide to draw");
        panel_label(p, pn, k);
    }
    return LS_PLOT_OK;
}

/* Validates everything before any file is created, then draws into dest (or
 * a file at path when dest is NULL). */
static int line_write(const ls_plot_line *p, ls_dest *dest, const char *path, char *msg, size_t msgn)
{
    if (!p || !p->series || p->nseries < 1 || p->nseries > LS_PLOT_MAX_SERIES + LS_PLOT_MAX_MARKS)
        return fail(msg, msgn, LS_PLOT_EARG, "a line plot needs 1..%d series", LS_PLOT_MAX_SERIES);
    size_t ncurves = 0, nlimits = 0;
    for (size_t s = 0; s < p->nseries; s++) {
        ncurves += !p->series[s].limit;
        nlimits += p->series[s].limit;
    }
    if (ncurves > LS_PLOT_MAX_SERIES || nlimits > LS_PLOT_MAX_MARKS)
        return fail(msg, msgn, LS_PLOT_EARG, "a line plot takes at most %d curves and %d limits",
                    LS_PLOT_MAX_SERIES, LS_PLOT_MAX_MARKS);
    int w = p->width, h = p->height;
    int rc = check_size(&w, &h, msg, msgn);
    if (rc)
        return rc;
    double x0 = INFINITY, x1 = -INFINITY;
    for (size_t s = 0; s < p->nseries; s++) {
        const ls_plot_series *se = &p->series[s];
        if (se->n && (!se->x || !se->y))
            return fail(msg, msgn, LS_PLOT_EARG, "series %zu has no data arrays", s + 1);
        for (size_t i = 0; i < se->n; i++) {
            if (!isfinite(se->x[i]) || !isfinite(se->y[i]))
                continue;
            if (p->logx && se->x[i] <= 0)
                return fail(msg, msgn, LS_PLOT_EARG, "log x axis: series %zu has x = %g <= 0",
                            s + 1, se->x[i]);
            x0 = fmin(x0, se->x[i]);
            x1 = fmax(x1, se->x[i]);
        }
    }
    if (!(x0 <= x1))
        return fail(msg, msgn, LS_PLOT_EARG, "no point with finite x and y to plot");
    panels *pn = malloc(sizeof *pn);
    if (!pn)
        return fail(msg, msgn, LS_PLOT_EIO, "out of memory");
    rc = make_panels(p, pn, h, msg, msgn);
    axis xa;
    if (rc == LS_PLOT_OK && !axis_make_exact(&xa, x0, x1, p->logx, p->xunit, w / 110 > 2 ? w / 110 : 2))
        rc = fail(msg, msgn, LS_PLOT_EARG, "data range too wide to draw");
    if (rc == LS_PLOT_OK) {
        line_draw ld = {p, pn};
        rc = render(dest, path, w, h, draw_line, &ld, &xa, &pn->ya[0], msg, msgn);
    }
    free(pn);
    return rc;
}

int ls_plot_line_write(const ls_plot_line *p, const char *path, char *msg, size_t msgn)
{
    return line_write(p, NULL, path, msg, msgn);
}

int ls_plot_line_write_to(const ls_plot_line *p, ls_dest *dest, char *msg, size_t msgn)
{
    return dest ? line_write(p, dest, NULL, msg, msgn) : fail(msg, msgn, LS_PLOT_EARG, "no destination");
}

/* ---- histogram ------------------------------------------------------------- */

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Quantile q of sorted v[0..n-1], linear between order statistics. */
static double quantile(const double *v, size_t n, double q)
{
    double pos = q * (double)(n - 1);
    size_t i = (size_t)floor(pos);
    if (i + 1 >= n)
        return v[n - 1];
    return v[i] + (pos - (double)i) * (v[i + 1] - v[i]);
}

/* See the header.  Sorts a malloc'd copy of the finite values, freed here. */
int ls_plot_hist_bins(const double *v, size_t n)
{
    double *s = malloc((n ? n : 1) * sizeof *s);
    size_t m = 0;
    if (!s)
        return 1;
    for (size_t i = 0; i < n; i++)
        if (isfinite(v[i]))
            s[m++] = v[i];
    int bins = 1;
    if (m >= 2) {
        qsort(s, m, sizeof *s, cmp_double);
        double iqr = quantile(s, m, 0.75) - quantile(s, m, 0.25), range = s[m - 1] - s[0];
        double bw = 2.0 * iqr / cbrt((double)m);
        double b = bw > 0 && range > 0 ? ceil(range / bw) : ceil(sqrt((double)m));
        bins = b < 1 ? 1 : b > 500 ? 500 : (int)b;
    }
    free(s);
    return bins;
}

/* Counted bins, passed to the drawing callback beside the description. */
typedef struct hist_data {
    const ls_plot_hist *p;
    double lo, width;      /* first bin edge and bin width, x units */
    int bins;
    unsigned *count;
} hist_data;

static void draw_hist(cairo_t *cr, const void *desc, const axis *xa, const axis *ya, int w,
                      int h)
{
    const hist_data *d = desc;
    const ls_plot_hist *p = d->p;
    boxes boxes_, *bx = &boxes_; /* 16 KB */
    bx->n = 0;
    frame f = draw_frame(cr, w, h, xa, ya, p->title, p->xlabel, p->ylabel ? p->ylabel : "count", bx);
    cairo_save(cr);
    cairo_rectangle(cr, f.x0, f.y0, f.x1 - f.x0, f.y1 - f.y0);
    cairo_clip(cr);
    for (int b = 0; b < d->bins; b++) {
        if (!d->count[b])
            continue;
        double xl = px(&f, xa, d->lo + b * d->width), xr = px(&f, xa, d->lo + (b + 1) * d->width);
        double yt = py(&f, ya, d->count[b]);
        cairo_rectangle(cr, xl, yt, xr - xl, f.y1 - yt);
    }
    cairo_set_source_rgb(cr, 0.55, 0.70, 0.85);
    cairo_fill_preserve(cr);
    cairo_set_source_rgb(cr, 0.15, 0.30, 0.50);
    cairo_set_line_width(cr, 0.8);
    cairo_stroke(cr);
    for (size_t i = 0; i < p->nmarks; i++) {
        double v = p->marks[i].value;
        if (v >= xa->lo && v <= xa->hi) {
            double x = px(&f, xa, v);
            mark_line(cr, x, f.y0, x, f.y1);
        }
    }
    cairo_restore(cr);
    /* Labels on the side facing the centre, each on the first free row; a
     * mark beyond the shown range is an arrow at the nearer edge. */
    for (size_t i = 0; i < p->nmarks; i++) {
        const char *label = p->marks[i].label ? p->marks[i].label : "";
        double v = p->marks[i].value;
        char b[300];
        cairo_set_source_rgb(cr, 0.75, 0.1, 0.1);
        if (v < xa->lo || v > xa->hi) {
            bool right = v > xa->hi;
            snprintf(b, sizeof b, right ? "%s \xE2\x86\x92" : "\xE2\x86\x90 %s", label); /* arrows */
            text_free(cr, bx, right ? f.x1 - 3 : f.x0 + 3, f.y0 + 4, b, right ? 1 : 0, 0, true, f.y0, f.y1);
            continue;
        }
        if (!*label)
            continue;
        double x = px(&f, xa, v);
        bool left = x > (f.x0 + f.x1) / 2;
        if (!text_free(cr, bx, left ? x - 3 : x + 3, f.y0 + 4, label, left ? 1 : 0, 0, true, f.y0, f.y1))
            text_free(cr, bx, left ? x + 3 : x - 3, f.y0 + 4, label, left ? 0 : 1, 0, true, f.y0, f.y1);
    }
}

/* Validates, counts and draws into dest (or a file at path when dest is
 * NULL).  The bin counts are malloc'd here and freed before return. */
/* Count p's finite values into bins (d, its count malloc'd): the span
 * lo..hi of the values (widened around a single value) and the tallest
 * bin's count.  Returns an ls_plot_status (nothing allocated on failure). */
static int hist_count(const ls_plot_hist *p, hist_data *d, double *lo_out, double *hi_out, unsigned *top_out,
                      char *msg, size_t msgn)
{
    double lo = INFINITY, hi = -INFINITY;
    for (size_t i = 0; i < p->n; i++)
        if (isfinite(p->values[i])) {
            lo = fmin(lo, p->values[i]);
            hi = fmax(hi, p->values[i]);
        }
    if (!(lo <= hi))
        return fail(msg, msgn, LS_PLOT_EARG, "no finite value to count");
    *d = (hist_data){.p = p, .bins = p->bins ? p->bins : ls_plot_hist_bins(p->values, p->n)};
    if (lo == hi) { /* one distinct value: a single bin of width 1 % of it (or 1) */
        double e = lo == 0 ? 0.5 : fabs(lo) * 0.005;
        lo -= e;
        hi += e;
    }
    d->lo = lo;
    d->width = (hi - lo) / d->bins;
    d->count = calloc((size_t)d->bins, sizeof *d->count);
    if (!d->count)
        return fail(msg, msgn, LS_PLOT_EIO, "out of memory");
    unsigned top = 0;
    for (size_t i = 0; i < p->n; i++) {
        double v = p->values[i];
        if (!isfinite(v))
            continue;
        int b = (int)((v - lo) / d->width);
        b = b < 0 ? 0 : b >= d->bins ? d->bins - 1 : b; /* the maximum falls in the last bin */
        if (++d->count[b] > top)
            top = d->count[b];
    }
    *lo_out = lo;
    *hi_out = hi;
    *top_out = top;
    return LS_PLOT_OK;
}

static int hist_write(const ls_plot_hist *p, ls_dest *dest, const char *path, char *msg, size_t msgn)
{
    if (!p || (p->n && !p->values))
        return fail(msg, msgn, LS_PLOT_EARG, "a histogram needs values");
    if (p->bins < 0 || p->bins > 10000)
        return fail(msg, msgn, LS_PLOT_EARG, "bin count %d is outside 0..10000", p->bins);
    int w = p->width, h = p->height;
    int rc = check_size(&w, &h, msg, msgn);
    if (rc)
        return rc;
    hist_data d;
    double lo = 0, hi = 0;   /* (set by hist_count when it succeeds) */
    unsigned top = 0;
    rc = hist_count(p, &d, &lo, &hi, &top, msg, msgn);
    if (rc)
        return rc;
    /* The shown range follows the data (marks beyond it are arrows at the
     * edge); a mark within NEAR of the data's span beside it is taken in. */
    double xlo = lo, xhi = hi, mlo = INFINITY, mhi = -INFINITY;
    rc = check_marks(p->marks, p->nmarks, &mlo, &mhi, msg, msgn);
    for (size_t i = 0; rc == LS_PLOT_OK && i < p->nmarks; i++)
        take_in(&xlo, &xhi, lo, hi, p->marks[i].value);
    if (rc == LS_PLOT_OK) {
        /* 2 % air each side, so extreme markers do not sit on the frame. */
        double air = 0.02 * (xhi - xlo);
        xlo -= air;
        xhi += air;
        axis xa, ya;
        int yt = h / 70 > 2 ? h / 70 : 2;
        /* At least `yt` counts tall, so the tick step is a whole count. */
        if (!axis_make_exact(&xa, xlo, xhi, false, p->xunit, w / 110 > 2 ? w / 110 : 2) ||
            !axis_make(&ya, 0, top > (unsigned)yt ? top : (unsigned)yt, false, "", yt))
            rc = fail(msg, msgn, LS_PLOT_EARG, "data range too wide to draw");
        else
            rc = render(dest, path, w, h, draw_hist, &d, &xa, &ya, msg, msgn);
    }
    free(d.count);
    return rc;
}

int ls_plot_hist_write(const ls_plot_hist *p, const char *path, char *msg, size_t msgn)
{
    return hist_write(p, NULL, path, msg, msgn);
}

int ls_plot_hist_write_to(const ls_plot_hist *p, ls_dest *dest, char *msg, size_t msgn)
{
    return dest ? hist_write(p, dest, NULL, msg, msgn) : fail(msg, msgn, LS_PLOT_EARG, "no destination");
}
