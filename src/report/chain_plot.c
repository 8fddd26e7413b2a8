/* chain_plot.c — the stage chain drawn (see chain_plot.h). */
#include <cairo-pdf.h>
#include <cairo.h>
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <unistd.h>

#include "base/arena.h"
#include "report/chain_plot.h"
#include "report/output.h"
#include "base/fmt.h"
#include "parts/parts.h"

/* ---- the look ---------------------------------------------------------------------------- */

#define FONT "DejaVu Sans"
#define FONT_CSS "'DejaVu Sans', Verdana, Arial, sans-serif"
#define SIZE_TEXT 12.0      /* px */
#define SIZE_NAME 13.0
#define SIZE_TITLE 16.0
#define LINE_H 16.0         /* px per text line */
#define PAD 8.0             /* px inside boxes and labels */
#define MARGIN 20.0
#define MAX_W 1080.0        /* px: the widest picture (fits A4 landscape in a PDF at 0.75 pt/px) */
#define BOX_MIN_W 140.0
#define BOX_MAX_W 230.0
#define GAP_MIN 70.0        /* px between boxes in a row */
#define ARROW_ROOM 30.0     /* px of visible arrow on each side of a label in a gap */
#define LANE_GAP 8.0        /* px between lanes in a channel */
#define LANE_BARE 14.0      /* px: a lane without a label */
#define CORRIDOR 10.0       /* px per vertical track in the left margin */
#define MAX_LINES 10
#define PNG_SCALE 2.0       /* PNG pixels per CSS pixel: sharp on high-density screens and in print */

/* Okabe–Ito colours: lines and borders, darker shades for text on white, and a
 * light fill for a failing label.  Index by ls_verdict. */
static const char *const line_css[3] = {"#009E73", "#E69F00", "#D55E00"};
static const char *const text_css[3] = {"#00684C", "#7A5000", "#A63A00"};
static const char *const fill_css[3] = {"#FFFFFF", "#FFF6E0", "#FBE3D6"};
static const double line_w[3] = {1.5, 2.0, 3.5};
static const char *const dash_css[3] = {"", "7 4", "10 4"};

/* ---- the layout --------------------------------------------------------------------------- */

typedef struct line {
    const char *s;
    bool bold, italic;   /* italic: a stage's roles, in grey */
    double size;
    int verdict;          /* -1 plain text, else coloured as that verdict */
    double w;             /* measured advance, px */
} line;

typedef struct item {     /* a stage box or a connection label */
    double x, y, w, h;
    line lines[MAX_LINES];
    int nlines;
    int verdict;          /* labels; -1 for boxes */
    const char *id;       /* stage or port name */
    const char *tip;      /* the <title> */
    bool rail;            /* a box for a rail or ground end */
} item;

typedef struct arrow {
    double pt[6][2];
    int npt;
    int verdict;
    const char *port;
} arrow;

struct ls_chain_pic {
    ls_arena arena;
    double w, h;
    const char *title, *summary;
    item *boxes, *labels;
    arrow *arrows;
    int nboxes, nlabels, narrows;
    line title_line;
};

/* Measure a line's width with cairo in the picture's font. */
static void measure(cairo_t *cr, line *l)
{
    cairo_text_extents_t e;
    cairo_select_font_face(cr, FONT, l->italic ? CAIRO_FONT_SLANT_ITALIC : CAIRO_FONT_SLANT_NORMAL,
                           l->bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr, l->size);
    cairo_text_extents(cr, l->s, &e);
    l->w = e.x_advance;
}

/* Append a line (copied into the arena) to it. */
static void add_line(ls_chain_pic *pic, cairo_t *cr, item *it, bool bold, double size, int verdict, const char *fmt,
                     ...) __attribute__((format(printf, 7, 8)));
static void add_line(ls_chain_pic *pic, cairo_t *cr, item *it, bool bold, double size, int verdict, const char *fmt,
                     ...)
{
    if (it->nlines == MAX_LINES)
        return;
    char buf[400];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    line *l = &it->lines[it->nlines++];
    *l = (line){.s = ls_arena_strdup(&pic->arena, buf), .bold = bold, .size = size, .verdict = verdict};
    if (!l->s)
        l->s = "";
    measure(cr, l);
}

/* Width and height an item needs for its lines. */
static void fit(item *it)
{
    double w = 0;
    for (int i = 0; i < it->nlines; i++)
        w = it->lines[i].w > w ? it->lines[i].w : w;
    it->w = ceil(w + 2 * PAD);
    it->h = it->nlines * LINE_H + 2 * PAD;
}

/* Is p one of the parts a reader looks for first in a stage? */
static bool part_is_key(const ls_part *p)
{
    static const char *const kinds[] = {"adc", "current", "ntc", "pot"};
    for (size_t i = 0; i < sizeof kinds / sizeof kinds[0]; i++)
        if (strcmp(p->kind->name, kinds[i]) == 0)
            return true;
    return p->kind->is_opamp;
}

/* The stage box: name, roles, key parts (op-amps, ADCs and sensors first). */
static void stage_box(ls_chain_pic *pic, cairo_t *cr, const ls_netlist *nl, const ls_stage *st, item *it)
{
    char roles[80] = "";
    for (int b = 0; b < LS_STAGE_NFLAGS; b++)
        if (st->has >> b & 1u) {
            size_t l = strlen(roles);
            snprintf(roles + l, sizeof roles - l, "%s%s", l ? " \xC2\xB7 " : "", ls_stage_flag_word(b, false));
        }
    it->verdict = -1;
    it->id = st->name;
    add_line(pic, cr, it, true, SIZE_NAME, -1, "%s", st->name);
    if (roles[0]) {
        add_line(pic, cr, it, false, SIZE_TEXT, -1, "%s", roles);
        it->lines[it->nlines - 1].italic = true;
        measure(cr, &it->lines[it->nlines - 1]);
    }
    /* key parts, one a line: op-amps, ADCs and sensors first, then the rest in declaration order */
    int shown = 0;
    for (int pass = 0; pass < 2; pass++)
        for (int k = 0; k < st->nparts && shown < 3; k++) {
            const ls_part *p = &nl->parts[st->parts[k]];
            bool key = (part_is_key(p) != 0) == (pass == 0);
            if (key) {
                add_line(pic, cr, it, false, SIZE_TEXT, -1, "%s %s", p->kind->name, p->name);
                shown++;
            }
        }
    if (st->nparts > shown)
        add_line(pic, cr, it, false, SIZE_TEXT, -1, "+%d more part%s", st->nparts - shown,
                 st->nparts - shown > 1 ? "s" : "");
    if (!st->nparts)
        add_line(pic, cr, it, false, SIZE_TEXT, -1, "(a node between ports)");
    it->tip = ls_arena_printf(&pic->arena, "stage %s: %d part%s", st->name, st->nparts, st->nparts == 1 ? "" : "s");
}

/* The label of a connection: port, zout -> zin, ratio, sag, verdict, fix. */
static void conn_label(ls_chain_pic *pic, cairo_t *cr, const ls_op *op, int port, bool ascii, item *it)
{
    const ls_part *p = &op->nl->parts[port];
    const ls_port_result *pr = ls_port_read(op, port);
    const char *OHM = ascii ? "ohm" : "\xCE\xA9", *ARROW = ascii ? "->" : "\xE2\x86\x92";
    static const char *const mark[3] = {"\xE2\x9C\x93 ok", "\xE2\x96\xB3 marginal", "\xE2\x9C\x97 LOADING"};
    static const char *const mark_ascii[3] = {"+ ok", "~ marginal", "X LOADING"};
    char a[48], b[48], c[48];
    it->verdict = (int)pr->verdict;
    it->id = p->name;
    add_line(pic, cr, it, true, SIZE_TEXT, -1, "%s%s", p->name, pr->current_mode ? " (current)" : "");
    add_line(pic, cr, it, false, SIZE_TEXT, -1, "zout %s", ls_fmt_eng(a, sizeof a, pr->zout, OHM, 3, ascii));
    add_line(pic, cr, it, false, SIZE_TEXT, -1, "zin %s", ls_fmt_eng(b, sizeof b, pr->zin, OHM, 3, ascii));
    add_line(pic, cr, it, false, SIZE_TEXT, -1, "ratio %s", ls_fmt_eng(c, sizeof c, pr->ratio, "", 3, ascii));
    ls_fmt_eng(a, sizeof a, pr->sag, pr->current_mode ? "A" : "V", 3, ascii);
    if (isfinite(pr->sag_rel) && pr->sag != 0)
        add_line(pic, cr, it, false, SIZE_TEXT, -1, "sag %s (%.3g%%)", a, pr->sag_rel * 100);
    else
        add_line(pic, cr, it, false, SIZE_TEXT, -1, "sag %s", a);
    if (isfinite(pr->budget))
        add_line(pic, cr, it, false, SIZE_TEXT, -1, "budget %s", ls_fmt_eng(a, sizeof a, pr->budget, pr->current_mode ? "A" : "V", 3, ascii));
    add_line(pic, cr, it, true, SIZE_TEXT, it->verdict, "%s", (ascii ? mark_ascii : mark)[pr->verdict]);
    char fix[200];
    ls_chain_fix(op, port, fix, sizeof fix, ascii, 3);
    for (char *s = fix, *semi; *s; s = semi) { /* one line per alternative */
        semi = strstr(s, "; ");
        if (semi)
            *semi = 0, semi += 2;
        else
            semi = s + strlen(s);
        add_line(pic, cr, it, false, SIZE_TEXT, it->verdict, "%s", s);
    }
    it->tip = ls_arena_printf(&pic->arena, "port %s: %s %s %s, %s", p->name, op->nl->nodes[p->pin[0]].name, ARROW,
                              op->nl->nodes[p->pin[1]].name, ls_verdict_word(pr->verdict));
}

/* ---- placement ------------------------------------------------------------------------ */

typedef struct place {
    int nbox;             /* rail boxes first, then the stages */
    int *box_of_stage;    /* stage -> box */
    int *from, *to;       /* per connection: box indices */
    bool *direct;         /* per connection: straight arrow between neighbours */
    int ncol, nrow;
    double bw, bh, rh, gap, x0;
} place;

static int row_of(const place *pl, int b) { return b / pl->ncol; }
static int col_of(const place *pl, int b) { return b % pl->ncol; }
static double box_x(const place *pl, int b) { return pl->x0 + col_of(pl, b) * (pl->bw + pl->gap); }

/* Boxes for the rail and ground ends of ports, one per node, numbered from
 * *n: with drivers, the rails that drive a port (they go before the stages);
 * else the rails that are only loads (after them). */
static void rail_boxes(ls_chain_pic *pic, cairo_t *cr, const ls_op *op, const ls_chain *c, int *rail_box, int *n,
                       bool drivers)
{
    const ls_netlist *nl = op->nl;
    for (int k = 0; k < c->nconns; k++) {
        const ls_part *p = &nl->parts[c->conns[k].port];
        int node = drivers ? (c->conns[k].from < 0 ? p->pin[0] : -1) : (c->conns[k].to < 0 ? p->pin[1] : -1);
        if (node < 0 || rail_box[node] >= 0)
            continue;
        item *it = &pic->boxes[*n];
        rail_box[node] = (*n)++;
        it->verdict = -1;
        it->rail = true;
        it->id = nl->nodes[node].name;
        add_line(pic, cr, it, true, SIZE_NAME, -1, "%s", it->id);
        add_line(pic, cr, it, false, SIZE_TEXT, -1, "%s", node == 0 ? "ground" : "supply rail");
        it->tip = ls_arena_printf(&pic->arena, "%s %s", node == 0 ? "ground" : "supply rail", it->id);
    }
}

/* Sizes shared by all boxes and the gap between them; columns and rows. */
static void grid(ls_chain_pic *pic, place *pl, int ncorr, double title_w)
{
    double bw = BOX_MIN_W, bh = 0, lw = 0;
    for (int b = 0; b < pl->nbox; b++) {
        fit(&pic->boxes[b]);
        bw = pic->boxes[b].w > bw ? pic->boxes[b].w : bw;
        bh = pic->boxes[b].h > bh ? pic->boxes[b].h : bh;
    }
    for (int k = 0; k < pic->nlabels; k++) {
        fit(&pic->labels[k]);
        lw = pic->labels[k].w > lw ? pic->labels[k].w : lw;
    }
    pl->bw = bw > BOX_MAX_W ? BOX_MAX_W : bw;
    pl->gap = lw + 2 * ARROW_ROOM > GAP_MIN ? lw + 2 * ARROW_ROOM : GAP_MIN;
    pl->x0 = MARGIN + (ncorr ? ncorr * CORRIDOR + CORRIDOR : 0);
    double room = MAX_W - pl->x0 - MARGIN;
    pl->ncol = (int)floor((room + pl->gap) / (pl->bw + pl->gap));
    if (pl->ncol < 1)
        pl->ncol = 1;
    if (pl->ncol > pl->nbox)
        pl->ncol = pl->nbox ? pl->nbox : 1;
    pl->nrow = (pl->nbox + pl->ncol - 1) / pl->ncol;
    double lh = 0;
    for (int k = 0; k < pic->nlabels; k++)
        lh = pic->labels[k].h > lh ? pic->labels[k].h : lh;
    pl->bh = bh;
    pl->rh = (lh + 12 > bh ? lh + 12 : bh);
    double w = pl->x0 + pl->ncol * pl->bw + (pl->ncol - 1) * pl->gap + MARGIN;
    w = title_w + 2 * MARGIN > w ? title_w + 2 * MARGIN : w;
    pic->w = ceil(w);
}

/* Which connections are straight arrows between neighbours in a row (the
 * first such port of each neighbouring pair; a box has one such arrow out).
 * used: pl->nbox flags, scratch. */
static void mark_direct(const ls_chain *c, place *pl, bool *used)
{
    memset(used, 0, (size_t)pl->nbox * sizeof *used);
    for (int k = 0; k < c->nconns; k++) {
        int f = pl->from[k], t = pl->to[k];
        pl->direct[k] = !used[f] && row_of(pl, f) == row_of(pl, t) && t == f + 1;
        used[f] |= pl->direct[k];
    }
}

/* For every routed connection k, its rank among the routed connections that
 * leave its driver's box from below (ro) and enter its load's box from above
 * (ri); the counts per box go to nout/nin (pl->nbox each, zeroed). */
static void attach(const ls_chain *c, const place *pl, int *ro, int *ri, int *nout, int *nin)
{
    for (int k = 0; k < c->nconns; k++)
        if (!pl->direct[k]) {
            ro[k] = nout[pl->from[k]]++;
            ri[k] = nin[pl->to[k]]++;
        }
}

/* The working tables of route: per channel (the space above each row of
 * boxes, and below the last) its height and top, per row its top, per
 * routed connection its lane offsets, corridor and attachment ranks. */
typedef struct routing {
    double *ch_h, *ch_y, *row_y;     /* pl->nrow + 1 each */
    double *lane_a, *lane_b;         /* per connection: the driver's lane, the load's lane (from the channel top) */
    int *corr;                       /* per connection: its corridor, -1 for none */
    int *ro, *ri, *nout, *nin;       /* attach's ranks and counts (one block, ro first) */
} routing;

/* Free rt's tables (any may be NULL). */
static void routing_free(routing *rt)
{
    free(rt->ch_h), free(rt->ch_y), free(rt->row_y), free(rt->lane_a), free(rt->lane_b), free(rt->corr), free(rt->ro);
}

/* Allocate rt's tables for c placed by pl; false when out of memory (rt freed). */
static bool routing_alloc(routing *rt, const ls_chain *c, const place *pl)
{
    size_t nch = (size_t)pl->nrow + 1, nk = (size_t)c->nconns + 1;
    rt->ch_h = calloc(nch, sizeof *rt->ch_h);
    rt->ch_y = calloc(nch, sizeof *rt->ch_y);
    rt->row_y = calloc(nch, sizeof *rt->row_y);
    rt->lane_a = calloc(nk, sizeof *rt->lane_a);
    rt->lane_b = calloc(nk, sizeof *rt->lane_b);
    rt->corr = calloc(nk, sizeof *rt->corr);
    rt->ro = calloc(2 * ((size_t)c->nconns + (size_t)pl->nbox) + 1, sizeof *rt->ro);
    if (!rt->ch_h || !rt->ch_y || !rt->row_y || !rt->lane_a || !rt->lane_b || !rt->corr || !rt->ro) {
        routing_free(rt);
        return false;
    }
    rt->ri = rt->ro + c->nconns;
    rt->nout = rt->ri + c->nconns;
    rt->nin = rt->nout + pl->nbox;
    return true;
}

/* Lane offsets inside each channel, measured from its top, and the corridor
 * of each connection that skips rows. */
static void lanes(routing *rt, const ls_chain_pic *pic, const ls_chain *c, const place *pl)
{
    int ncorr = 0;
    for (int k = 0; k < c->nconns; k++) {
        if (pl->direct[k])
            continue;
        int rf = row_of(pl, pl->from[k]), rto = row_of(pl, pl->to[k]);
        double lh = pic->labels[k].h;
        rt->lane_a[k] = rt->ch_h[rf + 1] + LANE_GAP + lh / 2;
        rt->ch_h[rf + 1] += LANE_GAP + lh;
        rt->corr[k] = -1;
        if (rto != rf + 1) {
            rt->lane_b[k] = rt->ch_h[rto] + LANE_GAP + LANE_BARE / 2;
            rt->ch_h[rto] += LANE_GAP + LANE_BARE;
            rt->corr[k] = ncorr++;
        }
    }
}

/* The vertical positions: channel 0, row 0, channel 1, ... from top; the
 * boxes in their rows.  Returns the bottom of the last channel. */
static double stack_rows(routing *rt, ls_chain_pic *pic, const place *pl, double top)
{
    double y = top;
    for (int r = 0; r <= pl->nrow; r++) {
        rt->ch_y[r] = y;
        y += rt->ch_h[r] + (rt->ch_h[r] > 0 ? LANE_GAP : 0);
        if (r < pl->nrow) {
            rt->row_y[r] = y;
            y += pl->rh;
        }
    }
    for (int b = 0; b < pl->nbox; b++) {
        item *it = &pic->boxes[b];
        it->w = pl->bw;
        it->h = pl->bh;
        it->x = box_x(pl, b);
        it->y = rt->row_y[row_of(pl, b)] + (pl->rh - pl->bh) / 2;
    }
    return y;
}

/* Connection k between neighbouring boxes of a row: a straight arrow, its
 * label in the gap. */
static void direct_arrow(const routing *rt, const place *pl, int k, const item *f, const item *t, arrow *a, item *lb)
{
    double ym = rt->row_y[row_of(pl, pl->from[k])] + pl->rh / 2;
    a->npt = 2;
    a->pt[0][0] = f->x + f->w, a->pt[0][1] = ym;
    a->pt[1][0] = t->x, a->pt[1][1] = ym;
    lb->x = f->x + f->w + (pl->gap - lb->w) / 2;
    lb->y = ym - lb->h / 2;
}

/* Connection k routed: down from its driver to its lane, across (through a
 * corridor when it skips rows) and down into its load; its label on the
 * driver's lane, centred on its run, inside the picture. */
static void routed_arrow(const routing *rt, const ls_chain_pic *pic, const place *pl, int k, const item *f,
                         const item *t, arrow *a, item *lb)
{
    double xd = f->x + f->w * (rt->ro[k] + 1) / (rt->nout[pl->from[k]] + 1);
    double xl = t->x + t->w * (rt->ri[k] + 1) / (rt->nin[pl->to[k]] + 1);
    int rf = row_of(pl, pl->from[k]), rto = row_of(pl, pl->to[k]);
    double ya = rt->ch_y[rf + 1] + rt->lane_a[k];
    a->pt[0][0] = xd, a->pt[0][1] = f->y + f->h;
    a->pt[1][0] = xd, a->pt[1][1] = ya;
    if (rt->corr[k] < 0) {
        a->pt[2][0] = xl, a->pt[2][1] = ya;
        a->npt = 4;
    } else {
        double xc = MARGIN + CORRIDOR * (rt->corr[k] + 0.5), yb = rt->ch_y[rto] + rt->lane_b[k];
        a->pt[2][0] = xc, a->pt[2][1] = ya;
        a->pt[3][0] = xc, a->pt[3][1] = yb;
        a->pt[4][0] = xl, a->pt[4][1] = yb;
        a->npt = 6;
    }
    a->pt[a->npt - 1][0] = xl, a->pt[a->npt - 1][1] = t->y;
    double x1 = a->pt[1][0], x2 = a->pt[2][0];
    double cx = (x1 + x2) / 2 - lb->w / 2, lo = pl->x0, hi = pic->w - MARGIN - lb->w;
    lb->x = cx < lo ? lo : cx > hi ? hi : cx;
    lb->y = ya - lb->h / 2;
}

/* Place the boxes, and every connection: a direct arrow with its label in the
 * gap, or its lanes, corridor and label.  Returns the picture height, or -1
 * when out of memory. */
static double route(ls_chain_pic *pic, const ls_chain *c, place *pl, double top)
{
    routing rt;
    if (!routing_alloc(&rt, c, pl))
        return -1;
    attach(c, pl, rt.ro, rt.ri, rt.nout, rt.nin);
    lanes(&rt, pic, c, pl);
    double y = stack_rows(&rt, pic, pl, top);
    for (int k = 0; k < c->nconns; k++) {
        item *lb = &pic->labels[k];
        const item *f = &pic->boxes[pl->from[k]], *t = &pic->boxes[pl->to[k]];
        arrow *a = &pic->arrows[pic->narrows++];
        a->verdict = lb->verdict;
        a->port = lb->id;
        if (pl->direct[k])
            direct_arrow(&rt, pl, k, f, t, a, lb);
        else
            routed_arrow(&rt, pic, pl, k, f, t, a, lb);
    }
    routing_free(&rt);
    return y + MARGIN;
}

/* Count the routed connections that need a corridor (their load is not in
 * the row below their driver's). */
static int corridors(const ls_chain *c, const place *pl)
{
    int n = 0;
    for (int k = 0; k < c->nconns; k++)
        n += !pl->direct[k] && row_of(pl, pl->to[k]) != row_of(pl, pl->from[k]) + 1;
    return n;
}

static int layout(ls_chain_pic *pic, cairo_t *cr, const ls_op *op, const ls_chain *c, bool ascii, place *pl)
{
    const ls_netlist *nl = op->nl;
    int nmax = c->nstages + 2 * c->nconns + 1;
    int *rail_box = malloc((size_t)nl->nnodes * sizeof *rail_box);
    pic->boxes = ls_arena_alloc(&pic->arena, (size_t)nmax * sizeof *pic->boxes);
    pic->labels = ls_arena_alloc(&pic->arena, ((size_t)c->nconns + 1) * sizeof *pic->labels);
    pic->arrows = ls_arena_alloc(&pic->arena, ((size_t)c->nconns + 1) * sizeof *pic->arrows);
    pl->from = ls_arena_alloc(&pic->arena, ((size_t)c->nconns + 1) * sizeof *pl->from);
    pl->to = ls_arena_alloc(&pic->arena, ((size_t)c->nconns + 1) * sizeof *pl->to);
    pl->direct = ls_arena_alloc(&pic->arena, ((size_t)c->nconns + 1) * sizeof *pl->direct);
    if (!rail_box || !pic->boxes || !pic->labels || !pic->arrows || !pl->from || !pl->to || !pl->direct) {
        free(rail_box);
        return -1;
    }
    memset(pic->boxes, 0, (size_t)nmax * sizeof *pic->boxes);
    memset(pic->labels, 0, ((size_t)c->nconns + 1) * sizeof *pic->labels);
    for (int i = 0; i < nl->nnodes; i++)
        rail_box[i] = -1;
    int nrail = 0;
    rail_boxes(pic, cr, op, c, rail_box, &nrail, true);
    for (int s = 0; s < c->nstages; s++)
        stage_box(pic, cr, nl, &c->stages[s], &pic->boxes[nrail + s]);
    int nbox = nrail + c->nstages;
    rail_boxes(pic, cr, op, c, rail_box, &nbox, false);
    pl->nbox = pic->nboxes = nbox;
    for (int k = 0; k < c->nconns; k++) {
        const ls_part *p = &nl->parts[c->conns[k].port];
        pl->from[k] = c->conns[k].from >= 0 ? nrail + c->conns[k].from : rail_box[p->pin[0]];
        pl->to[k] = c->conns[k].to >= 0 ? nrail + c->conns[k].to : rail_box[p->pin[1]];
        conn_label(pic, cr, op, c->conns[k].port, ascii, &pic->labels[k]);
    }
    free(rail_box);
    pic->nlabels = c->nconns;
    double top = MARGIN;
    if (pic->title) {
        pic->title_line = (line){.s = pic->title, .bold = true, .size = SIZE_TITLE, .verdict = -1};
        measure(cr, &pic->title_line);
        top += LINE_H + 14;
    }
    /* the corridor count depends on the columns and the columns on the corridors' width: settle it */
    int ncorr = 0;
    bool *used = ls_arena_alloc(&pic->arena, (size_t)pl->nbox + 1);
    if (!used)
        return -1;
    for (int iter = 0; iter < 4; iter++) {
        grid(pic, pl, ncorr, pic->title ? pic->title_line.w : 0);
        mark_direct(c, pl, used);
        int n = corridors(c, pl);
        if (n == ncorr)
            break;
        ncorr = n;
    }
    pic->h = ceil(route(pic, c, pl, top));
    return pic->h < 0 ? -1 : 0;
}

/* A one-sentence summary for the picture's title and alt text. */
static const char *summary(ls_chain_pic *pic, const ls_op *op, const ls_chain *c)
{
    int bad = 0;
    char names[300] = "";
    for (int k = 0; k < c->nconns; k++) {
        const ls_port_result *pr = ls_port_read(op, c->conns[k].port);
        if (pr->verdict == VERDICT_OK)
            continue;
        size_t l = strlen(names);
        if (l < 200)
            snprintf(names + l, sizeof names - l, "%s%s (%s)", bad ? ", " : "", op->nl->parts[c->conns[k].port].name,
                     ls_verdict_word(pr->verdict));
        bad++;
    }
    return ls_arena_printf(&pic->arena, "Stage chain: %d stage%s, %d connection%s; %s%s", c->nstages,
                           c->nstages == 1 ? "" : "s", c->nconns, c->nconns == 1 ? "" : "s",
                           bad ? "not ok: " : "every connection ok", names);
}

ls_chain_pic *ls_chain_layout(const ls_op *op, const ls_chain *c, const char *title, bool ascii)
{
    ls_chain_pic *pic = calloc(1, sizeof *pic);
    if (!pic)
        return NULL;
    ls_arena_init(&pic->arena);
    pic->title = title ? ls_arena_strdup(&pic->arena, title) : NULL;
    cairo_surface_t *s = cairo_image_surface_create(CAIRO_FORMAT_ARGB32, 1, 1);
    cairo_t *cr = cairo_create(s);
    place pl = {0};
    int rc = cairo_status(cr) == CAIRO_STATUS_SUCCESS ? layout(pic, cr, op, c, ascii, &pl) : -1;
    cairo_destroy(cr);
    cairo_surface_destroy(s);
    if (rc == 0)
        pic->summary = summary(pic, op, c);
    if (rc != 0 || !pic->summary) {
        ls_chain_pic_free(pic);
        return NULL;
    }
    return pic;
}

void ls_chain_pic_free(ls_chain_pic *pic)
{
    if (!pic)
        return;
    ls_arena_free(&pic->arena);
    free(pic);
}

void ls_chain_pic_size(const ls_chain_pic *pic, double *w, double *h)
{
    *w = pic->w;
    *h = pic->h;
}

/* ---- SVG ---------------------------------------------------------------------------------- */

/* s with & < > " escaped, for text and attributes. */
static void xml_text(FILE *f, const char *s)
{
    for (; *s; s++)
        switch (*s) {
        case '&': fputs("&amp;", f); break;
        case '<': fputs("&lt;", f); break;
        case '>': fputs("&gt;", f); break;
        case '"': fputs("&quot;", f); break;
        default: fputc(*s, f);
        }
}

/* Baseline of line i of an item: the lines are centred in the item's height. */
static double line_y(const item *it, int i)
{
    return it->y + (it->h - it->nlines * LINE_H) / 2 + LINE_H * i + LINE_H * 0.75;
}

static const char *line_colour(const line *l)
{
    return l->verdict >= 0 ? text_css[l->verdict] : l->italic ? "#4A4A4A" : "#1A1A1A";
}

static void svg_lines(FILE *f, const item *it, bool centre)
{
    for (int i = 0; i < it->nlines; i++) {
        const line *l = &it->lines[i];
        double x = centre ? it->x + it->w / 2 : it->x + PAD, y = line_y(it, i);
        fprintf(f, "<text x=\"%.1f\" y=\"%.1f\" font-size=\"%g\"%s%s%s fill=\"%s\" textLength=\"%.1f\" "
                   "lengthAdjust=\"spacingAndGlyphs\">",
                x, y, l->size, l->bold ? " font-weight=\"bold\"" : "", l->italic ? " font-style=\"italic\"" : "",
                centre ? " text-anchor=\"middle\"" : "", line_colour(l), l->w);
        xml_text(f, l->s);
        fputs("</text>", f);
    }
}

static void svg_item(FILE *f, const item *it, const char *cls)
{
    fprintf(f, "<g class=\"%s\" data-name=\"", cls);
    xml_text(f, it->id);
    if (it->verdict >= 0)
        fprintf(f, "\" data-verdict=\"%s", ls_verdict_word((ls_verdict)it->verdict));
    fputs("\"><title>", f);
    xml_text(f, it->tip);
    fputs("</title>", f);
    if (it->verdict >= 0)
        fprintf(f, "<rect class=\"bbox\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" rx=\"4\" fill=\"%s\" "
                   "stroke=\"%s\" stroke-width=\"%g\"/>",
                it->x, it->y, it->w, it->h, fill_css[it->verdict], line_css[it->verdict],
                it->verdict == VERDICT_LOADING ? 2.5 : 1.0);
    else
        fprintf(f, "<rect class=\"bbox\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" rx=\"8\" fill=\"%s\" "
                   "stroke=\"#3B4B5B\" stroke-width=\"1.2\"%s/>",
                it->x, it->y, it->w, it->h, it->rail ? "#F2F2F2" : "#EAF1F8", it->rail ? " stroke-dasharray=\"4 3\"" : "");
    svg_lines(f, it, it->verdict < 0);
    fputs("</g>\n", f);
}

static void svg_arrow(FILE *f, const arrow *a)
{
    fputs("<g class=\"arrow\" data-port=\"", f);
    xml_text(f, a->port);
    fprintf(f, "\" data-verdict=\"%s\"><polyline fill=\"none\" stroke=\"%s\" stroke-width=\"%g\"%s%s%s points=\"",
            ls_verdict_word((ls_verdict)a->verdict), line_css[a->verdict], line_w[a->verdict],
            *dash_css[a->verdict] ? " stroke-dasharray=\"" : "", dash_css[a->verdict],
            *dash_css[a->verdict] ? "\"" : "");
    for (int i = 0; i < a->npt; i++)
        fprintf(f, "%s%.1f,%.1f", i ? " " : "", a->pt[i][0], a->pt[i][1]);
    fprintf(f, "\" marker-end=\"url(#ls-head-%d)\"/></g>\n", a->verdict);
}

void ls_chain_svg(const ls_chain_pic *pic, FILE *f, bool inline_svg)
{
    if (!inline_svg)
        fputs("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n", f);
    fprintf(f, "<svg xmlns=\"http://www.w3.org/2000/svg\" class=\"ls-chain\" viewBox=\"0 0 %.0f %.0f\" width=\"%.0f\" "
               "height=\"%.0f\" role=\"img\" aria-labelledby=\"ls-chain-title\" font-family=\"%s\">\n",
            pic->w, pic->h, pic->w, pic->h, FONT_CSS);
    fputs("<title id=\"ls-chain-title\">", f);
    xml_text(f, pic->summary);
    fputs("</title>\n<defs>", f);
    for (int v = 0; v < 3; v++)
        fprintf(f, "<marker id=\"ls-head-%d\" viewBox=\"0 0 10 10\" refX=\"10\" refY=\"5\" markerWidth=\"%g\" "
                   "markerHeight=\"%g\" markerUnits=\"userSpaceOnUse\" orient=\"auto\"><path d=\"M0,0 L10,5 L0,10 z\" "
                   "fill=\"%s\"/></marker>",
                v, 10 + 2 * line_w[v], 10 + 2 * line_w[v], line_css[v]);
    fprintf(f, "</defs>\n<rect x=\"0\" y=\"0\" width=\"%.0f\" height=\"%.0f\" fill=\"#FFFFFF\"/>\n", pic->w, pic->h);
    if (pic->title) {
        fprintf(f, "<text class=\"title\" x=\"%.1f\" y=\"%.1f\" font-size=\"%g\" font-weight=\"bold\" fill=\"#1A1A1A\">",
                MARGIN, MARGIN + LINE_H, SIZE_TITLE);
        xml_text(f, pic->title);
        fputs("</text>\n", f);
    }
    for (int i = 0; i < pic->narrows; i++)
        svg_arrow(f, &pic->arrows[i]);
    for (int i = 0; i < pic->nboxes; i++)
        svg_item(f, &pic->boxes[i], pic->boxes[i].rail ? "stage rail" : "stage");
    for (int i = 0; i < pic->nlabels; i++)
        svg_item(f, &pic->labels[i], "conn");
    fputs("</svg>\n", f);
}

/* ---- cairo: PNG and PDF --------------------------------------------------------------------- */

static void rgb(cairo_t *cr, const char *hex)
{
    unsigned v = (unsigned)strtoul(hex + 1, NULL, 16);
    cairo_set_source_rgb(cr, (v >> 16 & 255) / 255.0, (v >> 8 & 255) / 255.0, (v & 255) / 255.0);
}

static void set_dash(cairo_t *cr, const char *css)
{
    double d[2];
    if (sscanf(css, "%lf %lf", &d[0], &d[1]) == 2)
        cairo_set_dash(cr, d, 2, 0);
    else
        cairo_set_dash(cr, NULL, 0, 0);
}

static void rounded(cairo_t *cr, double x, double y, double w, double h, double r)
{
    cairo_new_sub_path(cr);
    cairo_arc(cr, x + w - r, y + r, r, -M_PI / 2, 0);
    cairo_arc(cr, x + w - r, y + h - r, r, 0, M_PI / 2);
    cairo_arc(cr, x + r, y + h - r, r, M_PI / 2, M_PI);
    cairo_arc(cr, x + r, y + r, r, M_PI, 3 * M_PI / 2);
    cairo_close_path(cr);
}

static void cairo_line(cairo_t *cr, const line *l, double x, double y, bool centre)
{
    cairo_select_font_face(cr, FONT, l->italic ? CAIRO_FONT_SLANT_ITALIC : CAIRO_FONT_SLANT_NORMAL,
                           l->bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr, l->size);
    rgb(cr, line_colour(l));
    cairo_move_to(cr, centre ? x - l->w / 2 : x, y);
    cairo_show_text(cr, l->s);
}

static void cairo_item(cairo_t *cr, const item *it)
{
    bool label = it->verdict >= 0;
    rounded(cr, it->x, it->y, it->w, it->h, label ? 4 : 8);
    rgb(cr, label ? fill_css[it->verdict] : it->rail ? "#F2F2F2" : "#EAF1F8");
    cairo_fill_preserve(cr);
    rgb(cr, label ? line_css[it->verdict] : "#3B4B5B");
    cairo_set_line_width(cr, label ? (it->verdict == VERDICT_LOADING ? 2.5 : 1.0) : 1.2);
    set_dash(cr, it->rail ? "4 3" : "");
    cairo_stroke(cr);
    for (int i = 0; i < it->nlines; i++)
        cairo_line(cr, &it->lines[i], label ? it->x + PAD : it->x + it->w / 2, line_y(it, i), !label);
}

static void cairo_arrow(cairo_t *cr, const arrow *a)
{
    int v = a->verdict;
    double hl = 10 + 2 * line_w[v];
    double (*p)[2] = (double (*)[2])a->pt;
    int n = a->npt;
    double dx = p[n - 1][0] - p[n - 2][0], dy = p[n - 1][1] - p[n - 2][1], len = hypot(dx, dy);
    if (len <= 0)
        return;
    dx /= len, dy /= len;
    rgb(cr, line_css[v]);
    cairo_set_line_width(cr, line_w[v]);
    set_dash(cr, dash_css[v]);
    cairo_move_to(cr, p[0][0], p[0][1]);
    for (int i = 1; i < n - 1; i++)
        cairo_line_to(cr, p[i][0], p[i][1]);
    cairo_line_to(cr, p[n - 1][0] - dx * hl * 0.8, p[n - 1][1] - dy * hl * 0.8);
    cairo_stroke(cr);
    cairo_set_dash(cr, NULL, 0, 0);
    cairo_move_to(cr, p[n - 1][0], p[n - 1][1]);
    cairo_line_to(cr, p[n - 1][0] - dx * hl - dy * hl / 2, p[n - 1][1] - dy * hl + dx * hl / 2);
    cairo_line_to(cr, p[n - 1][0] - dx * hl + dy * hl / 2, p[n - 1][1] - dy * hl - dx * hl / 2);
    cairo_close_path(cr);
    cairo_fill(cr);
}

static void cairo_draw(cairo_t *cr, const ls_chain_pic *pic)
{
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_paint(cr);
    if (pic->title)
        cairo_line(cr, &pic->title_line, MARGIN, MARGIN + LINE_H, false);
    for (int i = 0; i < pic->narrows; i++)
        cairo_arrow(cr, &pic->arrows[i]);
    for (int i = 0; i < pic->nboxes; i++)
        cairo_item(cr, &pic->boxes[i]);
    for (int i = 0; i < pic->nlabels; i++)
        cairo_item(cr, &pic->labels[i]);
}

static cairo_status_t write_cb(void *closure, const unsigned char *data, unsigned int len)
{
    return fwrite(data, 1, len, (FILE *)closure) == len ? CAIRO_STATUS_SUCCESS : CAIRO_STATUS_WRITE_ERROR;
}

/* Draw into fp as PNG or PDF.  Returns a cairo status. */
static cairo_status_t cairo_write(const ls_chain_pic *pic, FILE *fp, bool pdf)
{
    cairo_surface_t *s;
    if (pdf)
        s = cairo_pdf_surface_create_for_stream(write_cb, fp, pic->w * 0.75, pic->h * 0.75);
    else
        s = cairo_image_surface_create(CAIRO_FORMAT_RGB24, (int)ceil(pic->w * PNG_SCALE), (int)ceil(pic->h * PNG_SCALE));
    cairo_t *cr = cairo_create(s);
    cairo_scale(cr, pdf ? 0.75 : PNG_SCALE, pdf ? 0.75 : PNG_SCALE);
    if (cairo_status(cr) == CAIRO_STATUS_SUCCESS)
        cairo_draw(cr, pic);
    cairo_status_t st = cairo_status(cr);
    cairo_destroy(cr);
    if (st == CAIRO_STATUS_SUCCESS && !pdf)
        st = cairo_surface_write_to_png_stream(s, write_cb, fp);
    cairo_surface_finish(s);
    if (st == CAIRO_STATUS_SUCCESS)
        st = cairo_surface_status(s);
    cairo_surface_destroy(s);
    return st;
}

static int fail(char *msg, size_t n, const char *fmt, const char *a, const char *b)
{
    if (msg && n)
        snprintf(msg, n, fmt, a, b);
    return -1;
}

int ls_chain_plot_write(const ls_chain_pic *pic, ls_dest *dest, char *msg, size_t msgn)
{
    const char *path = dest->path ? dest->path : "-";
    size_t len = strlen(path);
    const char *ext = len > 4 ? path + len - 4 : "";
    bool svg = strcasecmp(ext, ".svg") == 0, png = strcasecmp(ext, ".png") == 0, pdf = strcasecmp(ext, ".pdf") == 0;
    if (!svg && !png && !pdf)
        return fail(msg, msgn, "'%s': a drawing's file name must end in .svg, .png or .pdf%s", path, "");
    FILE *fp = dest->f;
    cairo_status_t st = CAIRO_STATUS_SUCCESS;
    if (svg)
        ls_chain_svg(pic, fp, false);
    else
        st = cairo_write(pic, fp, pdf);
    if (ferror(fp))
        return fail(msg, msgn, "cannot write '%s': %s", path, strerror(errno));
    if (st != CAIRO_STATUS_SUCCESS)
        return fail(msg, msgn, "cairo: %s%s", cairo_status_to_string(st), "");
    return 0;
}
