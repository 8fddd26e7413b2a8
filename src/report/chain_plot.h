/* chain_plot.h — the stage chain drawn: a box per stage, an arrow per port.
 *
 * The layout is computed once (text measured with cairo in the fonts the
 * picture uses) and then drawn either as hand-written SVG (real <text>, a
 * <title> per item, classes the tests and the HTML page read) or through cairo
 * (PNG, PDF).  Stages go left to right in signal order and wrap to rows; a
 * port between neighbours in a row is a straight arrow with its label in the
 * gap between the boxes; any other port runs through the channel below its
 * driver's row (and, when its load is not in the next row, up or down the
 * left margin and through the channel above the load's row), each such port
 * on a lane of its own, so no two boxes or labels overlap.
 *
 * Verdicts are shown by colour (a palette safe for colour-blind readers),
 * by a mark and word, and by line style (ok solid, marginal dashed, loading
 * thick and dashed), so a grey print still tells them apart. */
#ifndef LS_CHAIN_PLOT_H
#define LS_CHAIN_PLOT_H

#include "report/output.h"
#include <stdio.h>

#include "analysis/chain.h"
#include "analysis/results.h"

typedef struct ls_chain_pic ls_chain_pic;

/* Lay out chain c of the solved circuit op, whose connections' port reports
 * are computed (ls_chain_ports).  title may be NULL.  Returns the
 * layout (free with ls_chain_pic_free), or NULL when out of memory. */
ls_chain_pic *ls_chain_layout(const ls_op *op, const ls_chain *c, const char *title, bool ascii);
void ls_chain_pic_free(ls_chain_pic *pic);

/* Picture size in CSS pixels. */
void ls_chain_pic_size(const ls_chain_pic *pic, double *w, double *h);

/* Write the picture as an SVG element (no XML declaration when inline, for an
 * HTML page) to f. */
void ls_chain_svg(const ls_chain_pic *pic, FILE *f, bool inline_svg);

/* Write the picture into dest (opened by the output module, which commits
 * it): .svg (as ls_chain_svg), .png or .pdf (cairo) by the path's ending.
 * Returns 0, or -1 with a one-line reason in msg. */
int ls_chain_plot_write(const ls_chain_pic *pic, ls_dest *dest, char *msg, size_t msgn);

#endif
