/* Private to io/: the cairo drawing shared by the picture files and the PDF reports.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_IO_PLOT_INTERNAL_H
#define ML_IO_PLOT_INTERNAL_H

#include <cairo.h>

#include "io/plot.h"

/* Panels drawn into the rectangle x, y, w, h (cairo user units). */
void ml_draw_spectrum(cairo_t *cr, double x, double y, double w, double h, const ml_plot_data *a,
                      const ml_plot_data *b, const char *title);
void ml_draw_envelope(cairo_t *cr, double x, double y, double w, double h, const ml_plot_data *p);
void ml_draw_trapezoid(cairo_t *cr, double x, double y, double w, double h, const ml_plot_data *p);
/* The comparison table from row `first`; returns the number of rows that fitted. */
size_t ml_draw_compare_table(cairo_t *cr, double x, double y, double w, double h, const ml_comparison *c,
                             size_t first, double font);
/* Height the pictures of p need at width w (spectrum + envelope/trapezoid row). */
double ml_plot_height(const ml_plot_data *p, double w);
/* A sweep's two panels (response, THD) one under the other at width w (io/plot_sweep.c), and the
 * height they take (0 without a sweep). */
void ml_draw_sweep(cairo_t *cr, double x, double y, double w, const ml_plot_data *p);
double ml_plot_sweep_height(const ml_plot_data *p, double w);
/* The pictures one under the other. */
void ml_draw_pictures(cairo_t *cr, double x, double y, double w, const ml_plot_data *p);

/* cairo write callback into a FILE * closure. */
cairo_status_t ml_plot_write_file(void *closure, const unsigned char *data, unsigned int length);

/* A rectangle in cairo user units. */
typedef struct {
    double x, y, w, h;
} ml_box;

/* Draws s with its ink box placed so that the point (ax, ay) of the box (0..1 across and down)
 * lies at x, y. */
void ml_text_at(cairo_t *cr, double x, double y, const char *s, double ax, double ay);
/* The plot area of a panel at x, y, w, h with font size fs (room for the tick labels at the left
 * and below, for the title above), filled with the panel shade; leaves the tick font (fs * 0.85)
 * and the grid line width (0.6) set. */
ml_box ml_panel_area(cairo_t *cr, double x, double y, double w, double h, double fs);
/* The border of the plot area a, the x label under it, the y label turned up at the panel's left
 * edge x, the title (bold) at the panel's top y; leaves the tick font set again. */
void ml_panel_labels(cairo_t *cr, double x, double y, ml_box a, double fs, const char *xlabel,
                     const char *ylabel, const char *title);

/* Colours of the project (r, g, b in 0..1). */
void ml_colour(cairo_t *cr, int which);
enum {
    ML_C_INK, ML_C_GRID, ML_C_A, ML_C_B, ML_C_FUND, ML_C_HARM, ML_C_HUM, ML_C_CARRIER, ML_C_SIDEBAND,
    ML_C_MASK, ML_C_OBW, ML_C_ENV, ML_C_PEAK, ML_C_PINCH, ML_C_PASS, ML_C_FAIL, ML_C_SHADE, ML_C_HEAD,
    ML_C_COUNT
};

#endif
