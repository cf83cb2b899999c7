/* Pictures of a measurement with cairo: spectrum, envelope, trapezoid, comparison overlay.
 * SPDX-License-Identifier: MIT
 */
#include <cairo-pdf.h>
#include <cairo-svg.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "io/plot_internal.h"

static const double palette[ML_C_COUNT][3] = {
    [ML_C_INK] = {0.16, 0.18, 0.24},      [ML_C_GRID] = {0.87, 0.89, 0.92},
    [ML_C_A] = {0.09, 0.45, 0.47},        [ML_C_B] = {0.86, 0.45, 0.13},
    [ML_C_FUND] = {0.75, 0.18, 0.16},     [ML_C_HARM] = {0.50, 0.27, 0.62},
    [ML_C_HUM] = {0.70, 0.53, 0.05},      [ML_C_CARRIER] = {0.12, 0.30, 0.61},
    [ML_C_SIDEBAND] = {0.20, 0.55, 0.80}, [ML_C_MASK] = {0.85, 0.25, 0.20},
    [ML_C_OBW] = {0.80, 0.92, 0.90},      [ML_C_ENV] = {0.12, 0.30, 0.61},
    [ML_C_PEAK] = {0.75, 0.18, 0.16},     [ML_C_PINCH] = {0.98, 0.80, 0.78},
    [ML_C_PASS] = {0.11, 0.55, 0.25},     [ML_C_FAIL] = {0.78, 0.13, 0.13},
    [ML_C_SHADE] = {0.96, 0.97, 0.98},    [ML_C_HEAD] = {0.14, 0.25, 0.38},
};

void ml_colour(cairo_t *cr, int which)
{
    cairo_set_source_rgb(cr, palette[which][0], palette[which][1], palette[which][2]);
}

void ml_plot_data_init(ml_plot_data *p)
{
    memset(p, 0, sizeof *p);
    p->level_unit = "dBFS";
    p->pinch_level = NAN;
    p->emax = p->emin = NAN;
}

void ml_plot_data_free(ml_plot_data *p)
{
    free(p->freq_hz);
    free(p->level_db);
    free(p->env);
    free(p->ref);
    free(p->sweep.freq_hz);
    free(p->sweep.rel_db);
    free(p->sweep.thd_pct);
    free(p->sweep.thd_upper);
    free(p->sweep.group);
    ml_plot_data_init(p);
}

ml_status ml_plot_alloc_sweep(ml_plot_data *p, size_t n)
{
    ml_plot_sweep *s = &p->sweep;
    if (n == 0 || n > 1000000 || s->n > 0)
        return ML_EINVAL;
    s->freq_hz = malloc(n * sizeof *s->freq_hz);
    s->rel_db = malloc(n * sizeof *s->rel_db);
    s->thd_pct = malloc(n * sizeof *s->thd_pct);
    s->thd_upper = calloc(n, 1);
    s->group = calloc(n, sizeof *s->group);
    if (s->freq_hz == NULL || s->rel_db == NULL || s->thd_pct == NULL || s->thd_upper == NULL
        || s->group == NULL)
        return ML_ENOMEM;
    for (size_t i = 0; i < n; i++)
        s->freq_hz[i] = s->rel_db[i] = s->thd_pct[i] = NAN;
    s->n = n;
    return ML_OK;
}

ml_status ml_plot_alloc_spectrum(ml_plot_data *p, size_t nbins)
{
    free(p->freq_hz);
    free(p->level_db);
    p->freq_hz = malloc((nbins ? nbins : 1) * sizeof *p->freq_hz);
    p->level_db = malloc((nbins ? nbins : 1) * sizeof *p->level_db);
    p->nbins = 0;
    return p->freq_hz && p->level_db ? ML_OK : ML_ENOMEM;
}

ml_status ml_plot_alloc_envelope(ml_plot_data *p, size_t n, bool with_ref)
{
    if (n == 0 || n > ML_PLOT_MAX_ENV)
        return ML_EINVAL;
    p->env = calloc(n, sizeof *p->env);
    p->ref = with_ref ? calloc(n, sizeof *p->ref) : NULL;
    p->env_cap = n;
    p->nenv = 0;
    return p->env && (!with_ref || p->ref) ? ML_OK : ML_ENOMEM;
}

void ml_plot_mark_add(ml_plot_data *p, double x_hz, ml_mark_kind kind, const char *label)
{
    if (p->nmarks >= ML_PLOT_MAX_MARKS || !isfinite(x_hz))
        return;
    ml_plot_mark *m = &p->marks[p->nmarks++];
    m->x_hz = x_hz;
    m->kind = kind;
    snprintf(m->label, sizeof m->label, "%s", label);
}

int ml_plot_type(const char *path)
{
    const char *dot = path ? strrchr(path, '.') : NULL;
    if (dot == NULL)
        return -1;
    if (strcasecmp(dot, ".png") == 0)
        return 0;
    if (strcasecmp(dot, ".svg") == 0)
        return 1;
    if (strcasecmp(dot, ".pdf") == 0)
        return 2;
    return -1;
}

cairo_status_t ml_plot_write_file(void *closure, const unsigned char *data, unsigned int length)
{
    return fwrite(data, 1, length, (FILE *)closure) == length ? CAIRO_STATUS_SUCCESS
                                                              : CAIRO_STATUS_WRITE_ERROR;
}

/* ---- axes ---- */

typedef struct {
    double x, y, w, h;      /* plot area                                   */
    double x0, x1, y0, y1;  /* data range                                  */
    bool logx;
} axes;

static double ax_x(const axes *a, double v)
{
    if (a->logx)
        return a->x + a->w * (log10(fmax(v, 1e-9)) - log10(a->x0)) / (log10(a->x1) - log10(a->x0));
    return a->x + a->w * (v - a->x0) / (a->x1 - a->x0);
}

static double ax_y(const axes *a, double v)
{
    return a->y + a->h * (1.0 - (v - a->y0) / (a->y1 - a->y0));
}

static double nice_step(double span, int target)
{
    double raw = span / target, p = pow(10.0, floor(log10(raw))), m = raw / p;
    return (m < 1.5 ? 1 : m < 3.5 ? 2 : m < 7.5 ? 5 : 10) * p;
}

void ml_text_at(cairo_t *cr, double x, double y, const char *s, double ax, double ay)
{
    cairo_text_extents_t e;
    cairo_text_extents(cr, s, &e);
    cairo_move_to(cr, x - ax * e.width - e.x_bearing, y - ay * e.height - e.y_bearing);
    cairo_show_text(cr, s);
}

ml_box ml_panel_area(cairo_t *cr, double x, double y, double w, double h, double fs)
{
    const ml_box a = {x + 5.2 * fs, y + 2.2 * fs, w - 5.2 * fs - 1.2 * fs, h - 2.2 * fs - 3.6 * fs};
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
    ml_colour(cr, ML_C_SHADE);
    cairo_rectangle(cr, a.x, a.y, a.w, a.h);
    cairo_fill(cr);
    cairo_set_line_width(cr, 0.6);
    cairo_set_font_size(cr, fs * 0.85);
    return a;
}

void ml_panel_labels(cairo_t *cr, double x, double y, ml_box a, double fs, const char *xlabel,
                     const char *ylabel, const char *title)
{
    ml_colour(cr, ML_C_INK);
    cairo_set_line_width(cr, 1.0);
    cairo_rectangle(cr, a.x, a.y, a.w, a.h);
    cairo_stroke(cr);
    cairo_set_font_size(cr, fs);
    ml_text_at(cr, a.x + a.w / 2, a.y + a.h + 2.0 * fs, xlabel, 0.5, 0.0);
    cairo_save(cr);
    cairo_translate(cr, x + 0.3 * fs, a.y + a.h / 2);
    cairo_rotate(cr, -M_PI / 2);
    ml_text_at(cr, 0, 0, ylabel, 0.5, 0.0);
    cairo_restore(cr);
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_BOLD);
    cairo_set_font_size(cr, fs * 1.1);
    ml_text_at(cr, a.x, y + 0.3 * fs, title, 0.0, 0.0);
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr, fs * 0.85);
}

static void hz_label(char *buf, size_t len, double v)
{
    if (fabs(v) >= 1000)
        snprintf(buf, len, "%g k", v / 1000);
    else
        snprintf(buf, len, "%g", v);
}

/* A panel of a picture: where it lies and what its frame says. */
typedef struct {
    double x, y, w, h;      /* the panel's rectangle (cairo user units)                    */
    const char *title, *xlabel, *ylabel;
    bool hz_ticks;          /* frequency ticks ("2 k") on a linear axis                    */
} panel;

/* Frame, grid, ticks and labels of the panel pn; the area inside is returned in *a. */
static void frame(cairo_t *cr, axes *a, const panel *pn)
{
    const double x = pn->x, y = pn->y, w = pn->w, h = pn->h;
    const char *title = pn->title, *xl = pn->xlabel, *yl = pn->ylabel;
    const bool hz_ticks = pn->hz_ticks;
    const double fs = fmax(8.0, fmin(11.0, h / 26));
    const ml_box box = ml_panel_area(cr, x, y, w, h, fs);
    a->x = box.x;
    a->y = box.y;
    a->w = box.w;
    a->h = box.h;
    /* vertical grid */
    if (a->logx) {
        for (double dec = pow(10, floor(log10(a->x0))); dec <= a->x1; dec *= 10)
            for (int m = 1; m <= 9; m++) {
                double v = dec * m;
                if (v < a->x0 || v > a->x1)
                    continue;
                ml_colour(cr, ML_C_GRID);
                cairo_move_to(cr, ax_x(a, v), a->y);
                cairo_line_to(cr, ax_x(a, v), a->y + a->h);
                cairo_stroke(cr);
                if (m == 1 || m == 2 || m == 5) {
                    char b[32];
                    hz_label(b, sizeof b, v);
                    ml_colour(cr, ML_C_INK);
                    ml_text_at(cr, ax_x(a, v), a->y + a->h + 0.4 * fs, b, 0.5, 0.0);
                }
            }
    } else {
        double st = nice_step(a->x1 - a->x0, 8);
        for (double v = ceil(a->x0 / st) * st; v <= a->x1 + 1e-9 * st; v += st) {
            ml_colour(cr, ML_C_GRID);
            cairo_move_to(cr, ax_x(a, v), a->y);
            cairo_line_to(cr, ax_x(a, v), a->y + a->h);
            cairo_stroke(cr);
            char b[32];
            if (hz_ticks)
                hz_label(b, sizeof b, fabs(v) < 1e-9 * st ? 0 : v);
            else
                snprintf(b, sizeof b, "%g", fabs(v) < 1e-9 * st ? 0 : v);
            ml_colour(cr, ML_C_INK);
            ml_text_at(cr, ax_x(a, v), a->y + a->h + 0.4 * fs, b, 0.5, 0.0);
        }
    }
    double st = nice_step(a->y1 - a->y0, 6);
    for (double v = ceil(a->y0 / st) * st; v <= a->y1 + 1e-9 * st; v += st) {
        ml_colour(cr, ML_C_GRID);
        cairo_move_to(cr, a->x, ax_y(a, v));
        cairo_line_to(cr, a->x + a->w, ax_y(a, v));
        cairo_stroke(cr);
        char b[32];
        snprintf(b, sizeof b, "%g", fabs(v) < 1e-9 * st ? 0 : v);
        ml_colour(cr, ML_C_INK);
        ml_text_at(cr, a->x - 0.4 * fs, ax_y(a, v), b, 1.0, 0.5);
    }
    ml_panel_labels(cr, x, y, box, fs, xl, yl, title);
}

/* ---- spectrum ---- */

/* Peak-holding trace: the highest level among the points that fall into each column. */
static void trace(cairo_t *cr, const axes *a, const ml_plot_data *p, int colour, double width)
{
    const int cols = (int)ceil(a->w);
    bool pen = false;
    size_t i = 0;
    while (i < p->nbins && p->freq_hz[i] < a->x0)
        i++;
    for (int c = 0; c <= cols && i < p->nbins; c++) {
        double hi = NAN;
        const double edge = a->x + c + 1;
        size_t start = i;
        while (i < p->nbins && p->freq_hz[i] <= a->x1 && ax_x(a, p->freq_hz[i]) < edge) {
            if (isnan(hi) || p->level_db[i] > hi)
                hi = p->level_db[i];
            i++;
        }
        if (i == start) {
            if (i < p->nbins && p->freq_hz[i] > a->x1)
                break;
            continue; /* no point in this column (sparse low end of a log axis) */
        }
        const double yv = ax_y(a, fmax(a->y0, fmin(a->y1, hi)));
        const double xv = ax_x(a, p->freq_hz[start]);
        if (!pen)
            cairo_move_to(cr, xv, yv);
        else
            cairo_line_to(cr, xv, yv);
        pen = true;
    }
    ml_colour(cr, colour);
    cairo_set_line_width(cr, width);
    cairo_stroke(cr);
}

static double level_near(const ml_plot_data *p, double f, double tol)
{
    double best = -INFINITY;
    for (size_t i = 0; i < p->nbins; i++)
        if (fabs(p->freq_hz[i] - f) <= tol && p->level_db[i] > best)
            best = p->level_db[i];
    return best;
}

void ml_draw_spectrum(cairo_t *cr, double x, double y, double w, double h, const ml_plot_data *a,
                      const ml_plot_data *b, const char *title)
{
    const ml_plot_data *p = a && a->nbins ? a : b;
    if (p == NULL || p->nbins == 0)
        return;
    axes ax = {.x0 = p->x_lo_hz, .x1 = p->x_hi_hz, .logx = p->log_freq};
    double top = -INFINITY;
    for (int s = 0; s < 2; s++) {
        const ml_plot_data *q = s ? b : a;
        for (size_t i = 0; q && i < q->nbins; i++)
            if (q->freq_hz[i] >= ax.x0 && q->freq_hz[i] <= ax.x1 && q->level_db[i] > top)
                top = q->level_db[i];
    }
    ax.y1 = ceil((top + 5) / 10) * 10;
    ax.y0 = ax.y1 - 160;
    char yl[64];
    snprintf(yl, sizeof yl, "level (%s per FFT bin)", p->level_unit);
    frame(cr, &ax, &(panel){x, y, w, h, title, "frequency (Hz)", yl, true});
    cairo_save(cr);
    cairo_rectangle(cr, ax.x, ax.y, ax.w, ax.h);
    cairo_clip(cr);
    if (p->has_obw) {
        ml_colour(cr, ML_C_OBW);
        cairo_rectangle(cr, ax_x(&ax, p->obw_lo_hz), ax.y, ax_x(&ax, p->obw_hi_hz) - ax_x(&ax, p->obw_lo_hz),
                        ax.h);
        cairo_fill(cr);
    }
    trace(cr, &ax, p, ML_C_A, 1.0);
    if (b && b->nbins && a && a->nbins) /* B, the later build, on top */
        trace(cr, &ax, b, ML_C_B, 0.8);
    if (p->nmask > 1) {
        const double dash[] = {5, 3};
        cairo_set_dash(cr, dash, 2, 0);
        ml_colour(cr, ML_C_MASK);
        cairo_set_line_width(cr, 1.4);
        for (size_t i = 0; i < p->nmask; i++) {
            if (isnan(p->mask_hz[i])) /* one side ends: the mask does not apply in between */
                continue;
            const double xv = ax_x(&ax, p->mask_hz[i]), yv = ax_y(&ax, p->mask_db[i]);
            if (i == 0 || isnan(p->mask_hz[i - 1]))
                cairo_move_to(cr, xv, yv);
            else
                cairo_line_to(cr, xv, yv);
        }
        cairo_stroke(cr);
        cairo_set_dash(cr, NULL, 0, 0);
    }
    /* component marks: a small triangle above the line and its label */
    const double fs = fmax(7.0, fmin(10.0, h / 30));
    cairo_set_font_size(cr, fs);
    for (size_t i = 0; i < p->nmarks; i++) {
        const ml_plot_mark *m = &p->marks[i];
        if (m->x_hz < ax.x0 || m->x_hz > ax.x1)
            continue;
        static const int col[] = {ML_C_FUND, ML_C_HARM, ML_C_HUM, ML_C_CARRIER, ML_C_SIDEBAND};
        const double tol = p->nbins > 1 ? 3 * fabs(p->freq_hz[1] - p->freq_hz[0]) + 1e-9 : 1;
        const double lv = level_near(p, m->x_hz, tol);
        const double xv = ax_x(&ax, m->x_hz),
                     yv = ax_y(&ax, fmin(ax.y1, fmax(ax.y0, isfinite(lv) ? lv : ax.y0)));
        ml_colour(cr, col[m->kind]);
        cairo_move_to(cr, xv, yv - 3);
        cairo_line_to(cr, xv - 3.5, yv - 9);
        cairo_line_to(cr, xv + 3.5, yv - 9);
        cairo_close_path(cr);
        cairo_fill(cr);
        ml_text_at(cr, xv, yv - 11, m->label, 0.5, 1.0);
    }
    cairo_restore(cr);
    /* legend */
    cairo_set_font_size(cr, fs);
    double lx = ax.x + ax.w - 8, ly = ax.y + 8;
    bool kind[5] = {false};
    for (size_t i = 0; i < p->nmarks; i++)
        kind[p->marks[i].kind] = true;
    const bool two = b && b->nbins && a && a->nbins;
    struct { int c; const char *t; bool on; } leg[] = {
        {ML_C_A, two ? "A" : "spectrum", true},
        {ML_C_B, "B", two},
        {ML_C_FUND, "fundamental", kind[ML_MARK_FUNDAMENTAL]},
        {ML_C_HARM, "harmonics", kind[ML_MARK_HARMONIC]},
        {ML_C_HUM, "hum", kind[ML_MARK_HUM]},
        {ML_C_CARRIER, "carrier", kind[ML_MARK_CARRIER]},
        {ML_C_SIDEBAND, "tone sidebands", kind[ML_MARK_SIDEBAND]},
        {ML_C_MASK, "emission mask", p->nmask > 1},
        {ML_C_OBW, "occupied bandwidth (99 %)", p->has_obw},
    };
    for (size_t i = 0; i < sizeof leg / sizeof leg[0]; i++) {
        if (!leg[i].on)
            continue;
        cairo_text_extents_t e;
        cairo_text_extents(cr, leg[i].t, &e);
        ml_colour(cr, leg[i].c);
        cairo_rectangle(cr, lx - e.width - 16, ly + 1, 10, fs - 2);
        cairo_fill(cr);
        ml_colour(cr, ML_C_INK);
        ml_text_at(cr, lx, ly, leg[i].t, 1.0, 0.0);
        ly += fs * 1.35;
    }
    if (p->nmask > 1) {
        char b2[96];
        snprintf(b2, sizeof b2, "mask levels refer to %.0f Hz bandwidth", p->mask_rbw_hz);
        ml_colour(cr, ML_C_INK);
        ml_text_at(cr, lx, ly, b2, 1.0, 0.0);
        if (p->mask_note[0])
            ml_text_at(cr, lx, ly + fs * 1.35, p->mask_note, 1.0, 0.0);
    }
}

/* ---- envelope and trapezoid ---- */

static size_t env_shown(const ml_plot_data *p)
{
    size_t n = p->nenv;
    const double cycles = p->fm_hz > 0 ? 5.0 * p->env_rate_hz / p->fm_hz : 0.02 * p->env_rate_hz;
    if (cycles >= 8 && (double)n > cycles)
        n = (size_t)cycles;
    return n;
}

void ml_draw_envelope(cairo_t *cr, double x, double y, double w, double h, const ml_plot_data *p)
{
    if (p->nenv < 2)
        return;
    const size_t n = env_shown(p);
    double top = 1.2;
    for (size_t i = 0; i < n; i++)
        top = fmax(top, p->env[i] * 1.08);
    axes ax = {.x0 = 0, .x1 = 1000.0 * (double)(n - 1) / p->env_rate_hz, .y0 = 0, .y1 = top};
    frame(cr, &ax, &(panel){x, y, w, h, "Envelope", "time (ms)", "envelope E / Ec", false});
    cairo_save(cr);
    cairo_rectangle(cr, ax.x, ax.y, ax.w, ax.h);
    cairo_clip(cr);
    if (isfinite(p->pinch_level)) {
        ml_colour(cr, ML_C_PINCH);
        cairo_rectangle(cr, ax.x, ax_y(&ax, p->pinch_level * 10), ax.w,
                        ax_y(&ax, 0) - ax_y(&ax, p->pinch_level * 10));
        cairo_fill(cr);
    }
    ml_colour(cr, ML_C_INK);
    cairo_set_line_width(cr, 1.0);
    cairo_move_to(cr, ax.x, ax_y(&ax, 1.0));
    cairo_line_to(cr, ax.x + ax.w, ax_y(&ax, 1.0));
    cairo_stroke(cr);
    const double dash[] = {5, 3};
    cairo_set_dash(cr, dash, 2, 0);
    ml_colour(cr, ML_C_PEAK);
    for (int k = 0; k < 2; k++) {
        const double v = k ? p->emin : p->emax;
        if (!isfinite(v))
            continue;
        cairo_move_to(cr, ax.x, ax_y(&ax, v));
        cairo_line_to(cr, ax.x + ax.w, ax_y(&ax, v));
        cairo_stroke(cr);
    }
    cairo_set_dash(cr, NULL, 0, 0);
    ml_colour(cr, ML_C_ENV);
    cairo_set_line_width(cr, 1.3);
    for (size_t i = 0; i < n; i++) {
        const double xv = ax_x(&ax, 1000.0 * (double)i / p->env_rate_hz), yv = ax_y(&ax, p->env[i]);
        if (i == 0)
            cairo_move_to(cr, xv, yv);
        else
            cairo_line_to(cr, xv, yv);
    }
    cairo_stroke(cr);
    /* pinch-off: envelope samples below the pinch level */
    ml_colour(cr, ML_C_FAIL);
    for (size_t i = 0; isfinite(p->pinch_level) && i < n; i++)
        if (p->env[i] < p->pinch_level) {
            cairo_arc(cr, ax_x(&ax, 1000.0 * (double)i / p->env_rate_hz), ax_y(&ax, p->env[i]), 1.6, 0,
                      2 * M_PI);
            cairo_fill(cr);
        }
    cairo_restore(cr);
    const double fs = fmax(7.0, fmin(10.0, h / 26));
    cairo_set_font_size(cr, fs);
    ml_colour(cr, ML_C_INK);
    ml_text_at(cr, ax.x + 4, ax_y(&ax, 1.0) - 2, "Ec", 0.0, 1.0);
    ml_colour(cr, ML_C_PEAK);
    char b[48];
    if (isfinite(p->emax)) {
        snprintf(b, sizeof b, "Emax %.3f Ec", p->emax);
        ml_text_at(cr, ax.x + ax.w - 4, ax_y(&ax, p->emax) - 2, b, 1.0, 1.0);
    }
    if (isfinite(p->emin)) {
        snprintf(b, sizeof b, "Emin %.3f Ec", p->emin);
        ml_text_at(cr, ax.x + ax.w - 4, ax_y(&ax, p->emin) + 2, b, 1.0, 0.0);
    }
    if (isfinite(p->pinch_level)) {
        ml_colour(cr, ML_C_FAIL);
        ml_text_at(cr, ax.x + 4, ax_y(&ax, 0) - 2, "below 10 % of Ec (dots: pinch-off, below 1 %)", 0.0, 1.0);
    }
}

void ml_draw_trapezoid(cairo_t *cr, double x, double y, double w, double h, const ml_plot_data *p)
{
    if (!p->has_trapezoid || p->ref == NULL || p->nenv < 2)
        return;
    double lo = INFINITY, hi = -INFINITY, top = 1.2;
    for (size_t i = 0; i < p->nenv; i++) {
        lo = fmin(lo, p->ref[i]);
        hi = fmax(hi, p->ref[i]);
        top = fmax(top, p->env[i] * 1.08);
    }
    const double pad = 0.06 * fmax(hi - lo, 1e-6);
    axes ax = {.x0 = lo - pad, .x1 = hi + pad, .y0 = 0, .y1 = top};
    frame(cr, &ax,
          &(panel){x, y, w, h, "Trapezoid", "modulating audio (full scale)", "envelope E / Ec", false});
    cairo_save(cr);
    cairo_rectangle(cr, ax.x, ax.y, ax.w, ax.h);
    cairo_clip(cr);
    ml_colour(cr, ML_C_ENV);
    for (size_t i = 0; i < p->nenv; i++) {
        cairo_rectangle(cr, ax_x(&ax, p->ref[i]) - 0.6, ax_y(&ax, p->env[i]) - 0.6, 1.2, 1.2);
    }
    cairo_fill(cr);
    cairo_restore(cr);
}

double ml_plot_height(const ml_plot_data *p, double w)
{
    double h = p->nbins ? 0.42 * w : 0;
    if (p->nenv >= 2)
        h += 0.36 * w;
    return h + ml_plot_sweep_height(p, w);
}

void ml_draw_pictures(cairo_t *cr, double x, double y, double w, const ml_plot_data *p)
{
    if (p->nbins) {
        ml_draw_spectrum(cr, x, y, w, 0.40 * w, p, NULL, p->level_unit[2] == 'c' ? "Spectrum of the capture"
                                                                               : "Spectrum");
        y += 0.42 * w;
    }
    if (p->nenv >= 2) {
        const bool trap = p->has_trapezoid && p->ref;
        ml_draw_envelope(cr, x, y, trap ? 0.62 * w : w, 0.34 * w, p);
        if (trap)
            ml_draw_trapezoid(cr, x + 0.64 * w, y, 0.36 * w, 0.34 * w, p);
        y += 0.36 * w;
    }
    ml_draw_sweep(cr, x, y, w, p);
}

/* ---- comparison table ---- */

size_t ml_draw_compare_table(cairo_t *cr, double x, double y, double w, double h, const ml_comparison *c,
                             size_t first, double font)
{
    const double rowh = font * 1.45;
    const double colx[] = {0, 0.40, 0.53, 0.66, 0.78, 0.88};
    const char *head[] = {"metric", "A", "B", "B - A", "+-", "verdict"};
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_BOLD);
    cairo_set_font_size(cr, font);
    ml_colour(cr, ML_C_HEAD);
    cairo_rectangle(cr, x, y, w, rowh);
    cairo_fill(cr);
    cairo_set_source_rgb(cr, 1, 1, 1);
    for (int k = 0; k < 6; k++)
        ml_text_at(cr, k == 0 ? x + 3 : x + w * (colx[k] + (k < 5 ? 0.12 : 0.11)) - 3, y + rowh / 2, head[k],
                k == 0 ? 0.0 : 1.0, 0.5);
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
    size_t n = 0;
    double yy = y + rowh;
    for (size_t i = first; i < c->nrows && yy + rowh <= y + h; i++, n++, yy += rowh) {
        const ml_compare_row *r = &c->rows[i];
        if ((i - first) % 2 == 1) {
            ml_colour(cr, ML_C_SHADE);
            cairo_rectangle(cr, x, yy, w, rowh);
            cairo_fill(cr);
        }
        char cell[6][48];
        snprintf(cell[0], 48, "%s%s%s", r->metric, r->unit[0] ? " (" : "", r->unit[0] ? r->unit : "");
        if (r->unit[0])
            strncat(cell[0], ")", 47 - strlen(cell[0]));
        if (r->a_valid) snprintf(cell[1], 48, "%.*f", r->decimals, r->a); else snprintf(cell[1], 48, "n/a");
        if (r->b_valid) snprintf(cell[2], 48, "%.*f", r->decimals, r->b); else snprintf(cell[2], 48, "n/a");
        const bool both = r->a_valid && r->b_valid;
        if (both) {
            snprintf(cell[3], 48, "%+.*f", r->decimals, r->difference);
            snprintf(cell[4], 48, "%.*f", r->decimals + 1, r->uncertainty);
        } else {
            snprintf(cell[3], 48, "n/a");
            snprintf(cell[4], 48, " ");
        }
        snprintf(cell[5], 48, "%s", r->verdict);
        for (int k = 0; k < 6; k++) {
            if (k == 5)
                ml_colour(cr, strcmp(r->verdict, "worse") == 0    ? ML_C_FAIL
                              : strcmp(r->verdict, "better") == 0 ? ML_C_PASS
                                                                  : ML_C_INK);
            else
                ml_colour(cr, ML_C_INK);
            ml_text_at(cr, k == 0 ? x + 3 : x + w * (colx[k] + (k < 5 ? 0.12 : 0.11)) - 3, yy + rowh / 2,
                    cell[k], k == 0 ? 0.0 : 1.0, 0.5);
        }
    }
    return n;
}

/* ---- files ---- */

typedef struct {
    cairo_surface_t *s;
    int type;
} canvas;

static ml_status canvas_open(canvas *cv, FILE *f, const char *path, double w, double h)
{
    cv->type = ml_plot_type(path);
    switch (cv->type) {
    case 0: cv->s = cairo_image_surface_create(CAIRO_FORMAT_RGB24, (int)ceil(w), (int)ceil(h)); break;
    case 1: cv->s = cairo_svg_surface_create_for_stream(ml_plot_write_file, f, w, h); break;
    case 2: cv->s = cairo_pdf_surface_create_for_stream(ml_plot_write_file, f, w, h); break;
    default: return ML_EINVAL;
    }
    return cairo_surface_status(cv->s) == CAIRO_STATUS_SUCCESS ? ML_OK : ML_EIO;
}

static ml_status canvas_close(canvas *cv, FILE *f)
{
    cairo_surface_flush(cv->s);
    if (cv->type == 0 && cairo_surface_status(cv->s) == CAIRO_STATUS_SUCCESS
        && cairo_surface_write_to_png_stream(cv->s, ml_plot_write_file, f) != CAIRO_STATUS_SUCCESS) {
        cairo_surface_destroy(cv->s);
        return ML_EIO;
    }
    cairo_surface_finish(cv->s);
    cairo_status_t st = cairo_surface_status(cv->s);
    cairo_surface_destroy(cv->s);
    return st == CAIRO_STATUS_SUCCESS && !ferror(f) ? ML_OK : ML_EIO;
}

static void white(cairo_t *cr)
{
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_paint(cr);
}

/* A white page of w x h with the title font set, ready to draw on. */
static ml_status page_open(canvas *cv, FILE *f, const char *path, double w, double h, cairo_t **cr)
{
    ml_status st = canvas_open(cv, f, path, w, h);
    if (st != ML_OK) {
        if (cv->type >= 0)
            cairo_surface_destroy(cv->s);
        return st;
    }
    *cr = cairo_create(cv->s);
    white(*cr);
    cairo_select_font_face(*cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(*cr, 11);
    ml_colour(*cr, ML_C_INK);
    return ML_OK;
}

ml_status ml_plot_write(FILE *f, const char *path, const ml_plot_data *p, const ml_report *r)
{
    const double w = 1000, margin = 16;
    const double h = ml_plot_height(p, w - 2 * margin) + 2 * margin + 24;
    canvas cv;
    cairo_t *cr = NULL;
    ml_status st = page_open(&cv, f, path, w, h, &cr);
    if (st != ML_OK)
        return st;
    char t[ML_REPORT_PATH_LEN + 200];
    snprintf(t, sizeof t, "modlens: %s (%s, %.0f Hz, %.3f s)", r->path, r->kind, r->sample_rate_hz,
             r->analysed_s);
    ml_text_at(cr, margin, margin, t, 0.0, 0.0);
    ml_draw_pictures(cr, margin, margin + 24, w - 2 * margin, p);
    cairo_destroy(cr);
    return canvas_close(&cv, f);
}

ml_status ml_plot_write_compare(FILE *f, const char *path, const ml_comparison *c, const ml_plot_data *a,
                                const ml_plot_data *b)
{
    const double w = 1000, margin = 16, font = 10;
    const bool spec = (a && a->nbins) || (b && b->nbins);
    const double th = (double)(c->nrows + 1) * font * 1.45 + 4;
    const double h = 2 * margin + 24 + (spec ? 0.42 * (w - 2 * margin) : 0) + th;
    canvas cv;
    cairo_t *cr = NULL;
    ml_status st = page_open(&cv, f, path, w, h, &cr);
    if (st != ML_OK)
        return st;
    char t[2 * ML_REPORT_PATH_LEN + 200];
    snprintf(t, sizeof t, "modlens comparison: A = %s, B = %s", c->a->path, c->b->path);
    ml_text_at(cr, margin, margin, t, 0.0, 0.0);
    double y = margin + 24;
    if (spec) {
        ml_draw_spectrum(cr, margin, y, w - 2 * margin, 0.40 * (w - 2 * margin), a, b, "Spectra, A and B");
        y += 0.42 * (w - 2 * margin);
    }
    ml_draw_compare_table(cr, margin, y, w - 2 * margin, th, c, 0, font);
    cairo_destroy(cr);
    return canvas_close(&cv, f);
}
