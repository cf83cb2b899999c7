/* A sweep's pictures with cairo: response (dB re the reference) and THD (%, logarithmic) against
 * frequency on a logarithmic axis, one curve per group (level), with the limits' window and THD
 * ceilings; round ticks from io/ticks.h.
 * SPDX-License-Identifier: MIT
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "io/plot_internal.h"
#include "io/ticks.h"

/* curve colours, one per group (cycled) */
static const double curve_rgb[][3] = {{0.09, 0.45, 0.47}, {0.86, 0.45, 0.13}, {0.12, 0.30, 0.61},
                                      {0.50, 0.27, 0.62}, {0.75, 0.18, 0.16}, {0.20, 0.55, 0.20},
                                      {0.70, 0.53, 0.05}, {0.35, 0.35, 0.35}};
#define NCURVE_RGB (sizeof curve_rgb / sizeof curve_rgb[0])

typedef struct {
    double x, y, w, h;     /* plot area                        */
    double lx0, lx1;       /* lg of the frequency range        */
    double y0, y1;         /* data range (lg for a log y axis) */
    bool logy;
} area;

static double px(const area *a, double f_hz)
{
    return a->x + a->w * (log10(f_hz) - a->lx0) / (a->lx1 - a->lx0);
}

static double py(const area *a, double v)
{
    const double t = a->logy ? log10(v) : v;
    return a->y + a->h * (1.0 - (t - a->y0) / (a->y1 - a->y0));
}

/* Frame, grid, ticks (io/ticks.h) and labels of a panel at x, y, w, h; the plot area in *a (its
 * data ranges set by the caller before). */
static void frame(cairo_t *cr, area *a, double x, double y, double w, double h, const char *title,
                  const char *ylabel)
{
    const double fs = fmax(8.0, fmin(11.0, h / 24));
    const ml_box box = ml_panel_area(cr, x, y, w, h, fs);
    a->x = box.x;
    a->y = box.y;
    a->w = box.w;
    a->h = box.h;
    ml_ticks t;
    if (ml_ticks_log_hz(pow(10, a->lx0), pow(10, a->lx1), 12, &t) == ML_OK)
        for (size_t i = 0; i < t.n; i++) {
            const double xv = px(a, t.tick[i].value);
            ml_colour(cr, ML_C_GRID);
            cairo_move_to(cr, xv, a->y);
            cairo_line_to(cr, xv, a->y + a->h);
            cairo_stroke(cr);
            ml_colour(cr, ML_C_INK);
            ml_text_at(cr, xv, a->y + a->h + 0.4 * fs, t.tick[i].label, 0.5, 0.0);
        }
    const ml_status st = a->logy ? ml_ticks_log_hz(pow(10, a->y0), pow(10, a->y1), 8, &t)
                                 : ml_ticks_linear(a->y0, a->y1, 8, &t);
    for (size_t i = 0; st == ML_OK && i < t.n; i++) {
        const double yv = py(a, t.tick[i].value);
        ml_colour(cr, ML_C_GRID);
        cairo_move_to(cr, a->x, yv);
        cairo_line_to(cr, a->x + a->w, yv);
        cairo_stroke(cr);
        ml_colour(cr, ML_C_INK);
        ml_text_at(cr, a->x - 0.4 * fs, yv, t.tick[i].label, 1.0, 0.5);
    }
    ml_panel_labels(cr, x, y, box, fs, "frequency (Hz)", ylabel, title);
}

/* The points of group g in ascending frequency into idx[]; returns their count. */
static size_t group_points(const ml_plot_sweep *s, size_t g, size_t *idx)
{
    size_t n = 0;
    for (size_t i = 0; i < s->n; i++)
        if (s->group[i] == g)
            idx[n++] = i;
    for (size_t i = 1; i < n; i++)
        for (size_t j = i; j > 0 && s->freq_hz[idx[j - 1]] > s->freq_hz[idx[j]]; j--) {
            const size_t t = idx[j];
            idx[j] = idx[j - 1];
            idx[j - 1] = t;
        }
    return n;
}

/* One curve: lines between neighbouring measured points, a marker at each (open when open[i]). */
static void curve(cairo_t *cr, const area *a, const ml_plot_sweep *s, size_t g, const double *v,
                  const unsigned char *open, size_t *idx)
{
    const double *rgb = curve_rgb[g % NCURVE_RGB];
    const size_t n = group_points(s, g, idx);
    cairo_set_source_rgb(cr, rgb[0], rgb[1], rgb[2]);
    cairo_set_line_width(cr, 1.6);
    bool pen = false;
    for (size_t k = 0; k < n; k++) {
        const size_t i = idx[k];
        if (!isfinite(v[i]) || (a->logy && !(v[i] > 0))) {
            pen = false; /* a gap where a point was not measured */
            continue;
        }
        if (pen)
            cairo_line_to(cr, px(a, s->freq_hz[i]), py(a, v[i]));
        else
            cairo_move_to(cr, px(a, s->freq_hz[i]), py(a, v[i]));
        pen = true;
    }
    cairo_stroke(cr);
    for (size_t k = 0; k < n; k++) {
        const size_t i = idx[k];
        if (!isfinite(v[i]) || (a->logy && !(v[i] > 0)))
            continue;
        cairo_arc(cr, px(a, s->freq_hz[i]), py(a, v[i]), 2.6, 0, 2 * M_PI);
        if (open && open[i]) { /* an upper bound: open, with a tick pointing down */
            cairo_stroke(cr);
            cairo_move_to(cr, px(a, s->freq_hz[i]), py(a, v[i]) + 2.6);
            cairo_line_to(cr, px(a, s->freq_hz[i]), py(a, v[i]) + 7.0);
            cairo_stroke(cr);
        } else {
            cairo_fill(cr);
        }
    }
}

static void legend(cairo_t *cr, const area *a, const ml_plot_sweep *s)
{
    if (s->ngroups < 2)
        return;
    double y = a->y + 12;
    for (size_t g = 0; g < s->ngroups && g < ML_PLOT_SWEEP_GROUPS; g++) {
        const double *rgb = curve_rgb[g % NCURVE_RGB];
        cairo_set_source_rgb(cr, rgb[0], rgb[1], rgb[2]);
        cairo_rectangle(cr, a->x + a->w - 92, y - 5, 14, 4);
        cairo_fill(cr);
        ml_colour(cr, ML_C_INK);
        ml_text_at(cr, a->x + a->w - 74, y - 3, s->label[g], 0.0, 0.5);
        y += 12;
    }
}

/* The frequency range of the points (and of the limits drawn), widened by a quarter octave. */
static void freq_range(const ml_plot_sweep *s, area *a)
{
    double lo = INFINITY, hi = 0;
    for (size_t i = 0; i < s->n; i++)
        if (s->freq_hz[i] > 0) {
            lo = fmin(lo, s->freq_hz[i]);
            hi = fmax(hi, s->freq_hz[i]);
        }
    if (!(hi > 0)) {
        lo = 20;
        hi = 20000;
    }
    a->lx0 = log10(lo) - 0.075;
    a->lx1 = log10(hi) + 0.075;
}

static void response_panel(cairo_t *cr, double x, double y, double w, double h, const ml_plot_sweep *s,
                           size_t *idx)
{
    area a = {.logy = false};
    freq_range(s, &a);
    double lo = -3, hi = 1;
    for (size_t i = 0; i < s->n; i++)
        if (isfinite(s->rel_db[i])) {
            lo = fmin(lo, s->rel_db[i]);
            hi = fmax(hi, s->rel_db[i]);
        }
    if (s->has_window) {
        lo = fmin(lo, s->win_min_db);
        hi = fmax(hi, s->win_max_db);
    }
    a.y0 = floor(lo - 1);
    a.y1 = ceil(hi + 1);
    frame(cr, &a, x, y, w, h, "Response", "level re the reference (dB)");
    cairo_save(cr);
    cairo_rectangle(cr, a.x, a.y, a.w, a.h);
    cairo_clip(cr);
    if (s->has_window) { /* the window: shaded, its edges dashed */
        const double x0 = isfinite(s->win_lo_hz) ? px(&a, s->win_lo_hz) : a.x,
                     x1 = isfinite(s->win_hi_hz) ? px(&a, s->win_hi_hz) : a.x + a.w;
        ml_colour(cr, ML_C_OBW);
        const double y0 = py(&a, s->win_max_db), y1 = py(&a, s->win_min_db);
        cairo_rectangle(cr, x0, y0, x1 - x0, y1 - y0);
        cairo_fill(cr);
        ml_colour(cr, ML_C_MASK);
        cairo_set_line_width(cr, 1.0);
        const double dash[] = {4.0, 3.0};
        cairo_set_dash(cr, dash, 2, 0);
        cairo_rectangle(cr, x0, y0, x1 - x0, y1 - y0);
        cairo_stroke(cr);
        cairo_set_dash(cr, NULL, 0, 0);
    }
    for (size_t g = 0; g < s->ngroups; g++)
        curve(cr, &a, s, g, s->rel_db, NULL, idx);
    cairo_restore(cr);
    legend(cr, &a, s);
}

static void thd_panel(cairo_t *cr, double x, double y, double w, double h, const ml_plot_sweep *s,
                      size_t *idx)
{
    area a = {.logy = true};
    freq_range(s, &a);
    double lo = INFINITY, hi = 0;
    for (size_t i = 0; i < s->n; i++)
        if (s->thd_pct[i] > 0) {
            lo = fmin(lo, s->thd_pct[i]);
            hi = fmax(hi, s->thd_pct[i]);
        }
    for (size_t i = 0; i < s->nbands; i++) {
        lo = fmin(lo, s->band_max_pct[i]);
        hi = fmax(hi, s->band_max_pct[i]);
    }
    if (!(hi > 0)) {
        lo = 0.01;
        hi = 10;
    }
    a.y0 = floor(log10(lo));
    a.y1 = fmax(ceil(log10(hi)), a.y0 + 1);
    char yl[64];
    snprintf(yl, sizeof yl, "%s (%%)", s->thd_title ? s->thd_title : "THD");
    frame(cr, &a, x, y, w, h, s->thd_title ? s->thd_title : "THD", yl);
    cairo_save(cr);
    cairo_rectangle(cr, a.x, a.y, a.w, a.h);
    cairo_clip(cr);
    ml_colour(cr, ML_C_MASK);
    cairo_set_line_width(cr, 1.4);
    for (size_t i = 0; i < s->nbands; i++) { /* each band's ceiling */
        cairo_move_to(cr, px(&a, s->band_lo_hz[i]), py(&a, s->band_max_pct[i]));
        cairo_line_to(cr, px(&a, s->band_hi_hz[i]), py(&a, s->band_max_pct[i]));
        cairo_stroke(cr);
    }
    for (size_t g = 0; g < s->ngroups; g++)
        curve(cr, &a, s, g, s->thd_pct, s->thd_upper, idx);
    cairo_restore(cr);
    legend(cr, &a, s);
}

double ml_plot_sweep_height(const ml_plot_data *p, double w)
{
    return p->sweep.n ? 2 * 0.42 * w : 0;
}

void ml_draw_sweep(cairo_t *cr, double x, double y, double w, const ml_plot_data *p)
{
    const ml_plot_sweep *s = &p->sweep;
    if (s->n == 0)
        return;
    size_t idx[1024];
    size_t *buf = s->n <= 1024 ? idx : malloc(s->n * sizeof *buf);
    if (buf == NULL)
        return;
    response_panel(cr, x, y, w, 0.40 * w, s, buf);
    thd_panel(cr, x, y + 0.42 * w, w, 0.40 * w, s, buf);
    if (buf != idx)
        free(buf);
}
