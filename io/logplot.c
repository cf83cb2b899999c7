/* Picture of a noise log with cairo (see io/logplot.h).
 * SPDX-License-Identifier: MIT
 *
 * References: cairo API documentation (image, SVG and PDF surfaces, the toy text API).
 */
#include "io/logplot.h"

#include <cairo-pdf.h>
#include <cairo-svg.h>
#include <cairo.h>
#include <errno.h>
#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "io/csv.h"
#include "io/plot.h"
#include "io/plot_internal.h"
#include "io/ticks.h"

#define W 1200
#define H 820
#define X0 70.0
#define X1 (W - 100.0) /* room for the spectrogram's colour scale on the right */
#define NB 1000        /* level buckets: one per pixel column or so */
#define LINE 8194      /* a CSV line of io/logfile.h's longest, '\n' and NUL */

typedef struct {
    double lo, hi, sum;
    long n;
} bucket;

/* A line of the file that is not its '#' head line; false at the end. */
static bool next_line(FILE *f, char *line, size_t n)
{
    while (fgets(line, (int)n, f))
        if (line[0] != '#')
            return true;
    return false;
}

/* Value of field i of a line (NAN when empty or missing). */
static double field(const char *line, int i)
{
    char b[64], *end;
    if (i < 0 || !ml_csv_get_field(line, i, b, sizeof b) || b[0] == '\0')
        return NAN;
    const double v = strtod(b, &end);
    return *end == '\0' ? v : NAN;
}

static void text(cairo_t *cr, double x, double y, const char *s, double align)
{
    cairo_text_extents_t te;
    cairo_text_extents(cr, s, &te);
    cairo_move_to(cr, x - align * te.x_advance, y);
    cairo_show_text(cr, s);
}

/* Colour for a level t in 0..1: dark blue -> cyan -> yellow -> red. */
static void colormap(double t, double *r, double *g, double *b)
{
    t = t < 0 ? 0 : t > 1 ? 1 : t;
    *r = t < 0.5 ? 0.0 : (t - 0.5) * 2.0;
    *g = t < 0.5 ? t * 2.0 : 1.0 - (t - 0.75 > 0 ? (t - 0.75) * 4.0 : 0.0);
    *b = t < 0.5 ? 0.4 + t * 1.2 : 1.0 - (t - 0.5) * 2.0;
}

/* The picture's frame: where the level history and the spectrogram lie, and their data ranges. */
typedef struct {
    double tmin, tmax;   /* time axis, s (both panels)                                     */
    double lmin, lmax;   /* level axis, dBFS                                                */
    double ly0, ly1;     /* the level panel's top and bottom, pixels                        */
    double sy0, sy1;     /* the spectrogram's                                               */
} frame;

static double xt(const frame *fr, double t)
{
    return X0 + (t - fr->tmin) / (fr->tmax - fr->tmin) * (X1 - X0);
}

static double yl(const frame *fr, double v)
{
    return fr->ly1 - (v - fr->lmin) / (fr->lmax - fr->lmin) * (fr->ly1 - fr->ly0);
}

/* The level columns of the rows' header. */
typedef struct {
    int off, dur, rms, pk, aw;
} columns;

/* Pass 1: the time and level ranges of the rows into fr; the row count. */
static long ranges(FILE *f, const columns *c, frame *fr)
{
    char line[LINE];
    double tmin = INFINITY, tmax = -INFINITY, lmin = INFINITY, lmax = -INFINITY;
    long rows = 0;
    while (next_line(f, line, sizeof line)) {
        const double t = field(line, c->off), d = field(line, c->dur), r = field(line, c->rms),
                     p = field(line, c->pk);
        if (!isfinite(t))
            continue;
        rows++;
        tmin = fmin(tmin, t);
        tmax = fmax(tmax, t + (isfinite(d) ? d : 0));
        if (isfinite(r) && r > -200)
            lmin = fmin(lmin, r);
        if (isfinite(p))
            lmax = fmax(lmax, p);
    }
    if (!(tmin >= 0))
        tmin = 0;
    if (!(tmax > tmin))
        tmax = tmin + 1;
    if (!isfinite(lmin))
        lmin = -120;
    if (!isfinite(lmax) || lmax <= lmin)
        lmax = lmin + 10;
    *fr = (frame){.tmin = tmin,
                  .tmax = tmax,
                  .lmin = floor(lmin / 10) * 10 - 10,
                  .lmax = ceil(lmax / 10) * 10 + 5,
                  .ly0 = 48,
                  .ly1 = 400,
                  .sy0 = 460,
                  .sy1 = 770};
    return rows;
}

/* Pass 2: one bucket per pixel column or so, for rms, A-weighted and peak (b[3][NB]). */
static void buckets(FILE *f, const columns *c, const frame *fr, bucket *b)
{
    char line[LINE];
    for (int i = 0; i < 3 * NB; i++)
        b[i] = (bucket){INFINITY, -INFINITY, 0, 0};
    rewind(f);
    if (!next_line(f, line, sizeof line)) /* the header */
        return;
    while (next_line(f, line, sizeof line)) {
        const double t = field(line, c->off);
        if (!isfinite(t))
            continue;
        int i = (int)floor((t - fr->tmin) / (fr->tmax - fr->tmin) * (NB - 1));
        i = i < 0 ? 0 : i >= NB ? NB - 1 : i;
        const double v[3] = {field(line, c->rms), field(line, c->aw), field(line, c->pk)};
        for (int k = 0; k < 3; k++) {
            bucket *bk = &b[k * NB + i];
            if (isfinite(v[k]) && v[k] > -250) {
                bk->lo = fmin(bk->lo, v[k]);
                bk->hi = fmax(bk->hi, v[k]);
                bk->sum += v[k];
                bk->n++;
            }
        }
    }
}

/* Time ticks under both panels, level ticks, their grid lines and axis titles. */
static void axes(cairo_t *cr, const frame *fr)
{
    cairo_set_line_width(cr, 1);
    ml_ticks tk;
    if (ml_ticks_linear(fr->lmin, fr->lmax, 10, &tk) == ML_OK)
        for (size_t i = 0; i < tk.n; i++) {
            const double y = yl(fr, tk.tick[i].value);
            cairo_set_source_rgb(cr, 0.88, 0.88, 0.88);
            cairo_move_to(cr, X0, y);
            cairo_line_to(cr, X1, y);
            cairo_stroke(cr);
            cairo_set_source_rgb(cr, 0, 0, 0);
            text(cr, X0 - 6, y + 4, tk.tick[i].label, 1);
        }
    cairo_set_source_rgb(cr, 0, 0, 0);
    text(cr, 8, fr->ly0 - 6, "dBFS", 0);
    if (ml_ticks_time(fr->tmin, fr->tmax, 12, &tk) != ML_OK)
        return;
    for (size_t i = 0; i < tk.n; i++) {
        const double x = xt(fr, tk.tick[i].value);
        for (int p = 0; p < 2; p++) {
            const double y0 = p ? fr->sy0 : fr->ly0, y1 = p ? fr->sy1 : fr->ly1;
            cairo_set_source_rgba(cr, 0.5, 0.5, 0.5, p ? 0.35 : 0.3);
            cairo_move_to(cr, x, y0);
            cairo_line_to(cr, x, y1);
            cairo_stroke(cr);
            cairo_set_source_rgb(cr, 0, 0, 0);
            text(cr, x, y1 + 15, tk.tick[i].label, 0.5);
        }
    }
    char t[64];
    snprintf(t, sizeof t, "time since the input's start (%s)", tk.unit);
    text(cr, (X0 + X1) / 2, fr->sy1 + 32, t, 0.5);
}

/* The colour of an event kind (and whether it is drawn as a span or a tick). */
typedef struct {
    const char *kind;
    double r, g, b;
    bool span;
} kind_style;

static const kind_style STYLES[] = {
    {"impulse", 0.80, 0.10, 0.10, false}, {"buzz", 0.85, 0.00, 0.70, true},
    {"hum", 1.00, 0.55, 0.00, true},      {"noise", 0.55, 0.20, 0.75, true},
    {"level", 0.10, 0.55, 0.55, true},    {"carrier-loss", 0.00, 0.00, 0.00, true},
    {"mains", 0.10, 0.20, 0.90, false},   {"gap", 0.60, 0.60, 0.60, true},
    {"input-end", 0.30, 0.30, 0.30, false},
};
#define NSTYLES (sizeof STYLES / sizeof *STYLES)

static const kind_style *style_of(const char *kind)
{
    for (size_t i = 0; i < NSTYLES; i++)
        if (strcmp(kind, STYLES[i].kind) == 0)
            return &STYLES[i];
    return &STYLES[NSTYLES - 2];
}

/* Events as shaded spans (or ticks) in the level panel and ticks above the spectrogram, streamed
 * from the events file. */
static void events(cairo_t *cr, const frame *fr, const char *events_csv)
{
    char line[LINE];
    FILE *e = events_csv ? fopen(events_csv, "r") : NULL;
    if (e == NULL)
        return;
    int c_s = -1, c_e = -1, c_k = -1;
    if (next_line(e, line, sizeof line)) {
        c_s = ml_csv_column(line, "start_offset_s");
        c_e = ml_csv_column(line, "end_offset_s");
        c_k = ml_csv_column(line, "kind");
    }
    while (c_s >= 0 && c_e >= 0 && c_k >= 0 && next_line(e, line, sizeof line)) {
        const double t0 = field(line, c_s), t1 = field(line, c_e);
        char kind[32];
        if (!isfinite(t0) || t0 > fr->tmax || !ml_csv_get_field(line, c_k, kind, sizeof kind))
            continue;
        const kind_style *st = style_of(kind);
        const double xa = xt(fr, fmax(t0, fr->tmin)), xb = fmax(xt(fr, isfinite(t1) ? fmin(t1, fr->tmax) : t0), xa + 1);
        if (st->span) {
            cairo_set_source_rgba(cr, st->r, st->g, st->b, 0.16);
            cairo_rectangle(cr, xa, fr->ly0, xb - xa, fr->ly1 - fr->ly0);
            cairo_fill(cr);
        }
        cairo_set_source_rgba(cr, st->r, st->g, st->b, 0.8);
        cairo_rectangle(cr, xa, st->span ? fr->ly0 : fr->ly0, st->span ? xb - xa : 1.2, 8);
        cairo_fill(cr);
        cairo_rectangle(cr, xa, fr->sy0 - 7, st->span ? xb - xa : 1.2, 6);
        cairo_fill(cr);
    }
    fclose(e);
}

/* The levels: the mean line of each bucket, with a legend; the events' legend. */
static void levels(cairo_t *cr, const frame *fr, const bucket *b)
{
    const struct {
        const bucket *b;
        double r, g, bl;
        const char *name;
    } series[3] = {{b + 2 * NB, 0.6, 0.6, 0.6, "peak"},
                   {b, 0.1, 0.3, 0.8, "rms"},
                   {b + NB, 0.1, 0.6, 0.2, "A-weighted"}};
    for (int k = 0; k < 3; k++) {
        cairo_set_source_rgb(cr, series[k].r, series[k].g, series[k].bl);
        bool pen = false;
        for (int i = 0; i < NB; i++) {
            const bucket *bk = &series[k].b[i];
            if (bk->n == 0)
                continue;
            const double t = fr->tmin + (fr->tmax - fr->tmin) * i / (NB - 1.0),
                         y = yl(fr, bk->sum / (double)bk->n);
            if (pen)
                cairo_line_to(cr, xt(fr, t), y);
            else
                cairo_move_to(cr, xt(fr, t), y);
            pen = true;
        }
        cairo_stroke(cr);
        cairo_rectangle(cr, X1 - 300 + 100 * k, 12, 14, 4);
        cairo_fill(cr);
        cairo_set_source_rgb(cr, 0, 0, 0);
        text(cr, X1 - 282 + 100 * k, 20, series[k].name, 0);
    }
    double x = X0;
    cairo_set_source_rgb(cr, 0, 0, 0);
    text(cr, x, 36, "events:", 0);
    x += 52;
    for (size_t i = 0; i < NSTYLES; i++) {
        cairo_set_source_rgb(cr, STYLES[i].r, STYLES[i].g, STYLES[i].b);
        cairo_rectangle(cr, x, 28, STYLES[i].span ? 12 : 2, 9);
        cairo_fill(cr);
        cairo_set_source_rgb(cr, 0, 0, 0);
        cairo_text_extents_t te;
        cairo_text_extents(cr, STYLES[i].kind, &te);
        text(cr, x + 15, 36, STYLES[i].kind, 0);
        x += 24 + te.x_advance;
    }
}

/* Frequency of a spectrogram row position u in 0..1 (bottom to top), and back. */
typedef struct {
    bool log;
    double lo, hi;
} faxis;

static double fy(const frame *fr, const faxis *a, double f)
{
    const double u = a->log ? log(f / a->lo) / log(a->hi / a->lo) : (f - a->lo) / (a->hi - a->lo);
    return fr->sy1 - u * (fr->sy1 - fr->sy0);
}

/* The spectrogram's colour scale: a bar of the colour map with round dB ticks. */
static void colour_scale(cairo_t *cr, const frame *fr, double dmin, double dmax)
{
    const double x = X1 + 14, w = 14, y0 = fr->sy0, y1 = fr->sy1;
    for (int i = 0; i < 200; i++) {
        double r, g, b;
        colormap((i + 0.5) / 200.0, &r, &g, &b);
        cairo_set_source_rgb(cr, r, g, b);
        const double ya = y1 - (i + 1) * (y1 - y0) / 200.0;
        cairo_rectangle(cr, x, ya, w, (y1 - y0) / 200.0 + 0.5);
        cairo_fill(cr);
    }
    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_line_width(cr, 1);
    cairo_rectangle(cr, x, y0, w, y1 - y0);
    cairo_stroke(cr);
    ml_ticks tk;
    if (ml_ticks_linear(dmin, dmax, 8, &tk) == ML_OK)
        for (size_t i = 0; i < tk.n; i++) {
            const double y = y1 - (tk.tick[i].value - dmin) / (dmax - dmin) * (y1 - y0);
            cairo_move_to(cr, x + w, y);
            cairo_line_to(cr, x + w + 4, y);
            cairo_stroke(cr);
            text(cr, x + w + 6, y + 4, tk.tick[i].label, 0);
        }
    text(cr, x - 4, y0 - 8, "dBFS/Hz", 0);
}

/* The spectrogram from the bounded history, in dBFS/Hz (at most 100 dB shown). */
static void spectrogram(cairo_t *cr, const frame *fr, const ml_logplot_spec *spec)
{
    const ml_history *h = spec ? spec->sgram : NULL;
    const size_t nc = ml_history_get_count(h), nr = ml_history_get_rows(h);
    if (nc == 0 || nr < 2)
        return;
    double dmin = INFINITY, dmax = -INFINITY;
    for (size_t i = 0; i < nc; i++) {
        const double *col = ml_history_get_column(h, i, NULL, NULL);
        for (size_t k = 0; k < nr; k++) {
            const double d = 10 * log10(fmax(col[k] / spec->unit_power, 1e-30));
            dmin = fmin(dmin, d);
            dmax = fmax(dmax, d);
        }
    }
    if (dmax - dmin > 100)
        dmin = dmax - 100;
    dmin = floor(dmin / 10) * 10;
    dmax = ceil(dmax / 10) * 10;
    if (!(dmax > dmin))
        dmax = dmin + 10;
    for (size_t i = 0; i < nc; i++) {
        double t0, t1;
        const double *col = ml_history_get_column(h, i, &t0, &t1);
        const double xa = xt(fr, t0), xb = fmax(xt(fr, t1), xa + 1);
        for (size_t k = 0; k < nr; k++) {
            const double d = 10 * log10(fmax(col[k] / spec->unit_power, 1e-30));
            double r, g, b;
            colormap((d - dmin) / (dmax - dmin), &r, &g, &b);
            cairo_set_source_rgb(cr, r, g, b);
            const double ya = fr->sy1 - (double)k / (double)nr * (fr->sy1 - fr->sy0);
            const double yb = fr->sy1 - (double)(k + 1) / (double)nr * (fr->sy1 - fr->sy0);
            cairo_rectangle(cr, xa, yb, xb - xa, ya - yb + 0.5);
            cairo_fill(cr);
        }
    }
    /* the rows' edges: halfway (geometrically for a log axis) between their centres */
    faxis a = {spec->log_freq, 0, 0};
    const double *c = spec->band_hz;
    if (a.log) {
        const double r = sqrt(c[1] / c[0]);
        a.lo = c[0] / r;
        a.hi = c[nr - 1] * r;
    } else {
        const double s = (c[1] - c[0]) / 2;
        a.lo = c[0] - s;
        a.hi = c[nr - 1] + s;
    }
    ml_ticks tk;
    const ml_status st = a.log ? ml_ticks_log_hz(a.lo, a.hi, 10, &tk) : ml_ticks_linear(a.lo, a.hi, 9, &tk);
    cairo_set_line_width(cr, 1);
    for (size_t i = 0; st == ML_OK && i < tk.n; i++) {
        const double y = fy(fr, &a, tk.tick[i].value);
        cairo_set_source_rgb(cr, 0, 0, 0);
        cairo_move_to(cr, X0 - 4, y);
        cairo_line_to(cr, X0, y);
        cairo_stroke(cr);
        text(cr, X0 - 6, y + 4, tk.tick[i].label, 1);
    }
    cairo_set_source_rgb(cr, 0, 0, 0);
    text(cr, 8, fr->sy0 - 10, "Hz", 0);
    text(cr, X0 + 40, fr->sy0 - 10,
         a.log ? "spectrogram of this run (logarithmic frequency axis)" : "spectrogram of this run (I/Q: offset from the centre)",
         0);
    colour_scale(cr, fr, dmin, dmax);
}

/* The surface for the file type (0 PNG, 1 SVG, 2 PDF). */
static cairo_surface_t *surface(int type, FILE *f)
{
    switch (type) {
    case 0: return cairo_image_surface_create(CAIRO_FORMAT_RGB24, W, H);
    case 1: return cairo_svg_surface_create_for_stream(ml_plot_write_file, f, W, H);
    default: return cairo_pdf_surface_create_for_stream(ml_plot_write_file, f, W, H);
    }
}

ml_status ml_logplot_write(FILE *out, const char *type_path, const char *rows_csv, const char *events_csv,
                           const ml_logplot_spec *spec, char *err, size_t err_len)
{
    const int type = ml_plot_type(type_path);
    if (type < 0) {
        snprintf(err, err_len, "no picture type (end the name in .png, .svg or .pdf)");
        return ML_EINVAL;
    }
    char line[LINE];
    FILE *f = fopen(rows_csv, "r");
    if (f == NULL) {
        snprintf(err, err_len, "cannot read %s: %s", rows_csv, strerror(errno));
        return ML_EIO;
    }
    columns c = {-1, -1, -1, -1, -1};
    if (next_line(f, line, sizeof line))
        c = (columns){ml_csv_column(line, "offset_s"), ml_csv_column(line, "duration_s"),
                      ml_csv_column(line, "rms_dbfs"), ml_csv_column(line, "peak_dbfs"),
                      ml_csv_column(line, "a_weighted_dbfs")};
    frame fr;
    bucket *b = NULL;
    ml_status st = ML_OK;
    if (c.off < 0 || c.rms < 0 || c.pk < 0 || c.aw < 0) {
        snprintf(err, err_len, "%s lacks the level columns", rows_csv);
        st = ML_EFORMAT;
    } else if (ranges(f, &c, &fr) == 0) {
        snprintf(err, err_len, "%s holds no rows to draw", rows_csv);
        st = ML_ENOSIGNAL;
    } else if ((b = malloc(3 * NB * sizeof *b)) == NULL) {
        snprintf(err, err_len, "out of memory");
        st = ML_ENOMEM;
    } else {
        buckets(f, &c, &fr, b);
    }
    fclose(f);
    if (st != ML_OK)
        return st;
    cairo_surface_t *s = surface(type, out);
    cairo_t *cr = cairo_create(s);
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_paint(cr);
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr, 12);
    cairo_set_source_rgb(cr, 0, 0, 0);
    text(cr, X0, 16, spec && spec->title ? spec->title : "level history", 0);
    axes(cr, &fr);
    events(cr, &fr, events_csv);
    levels(cr, &fr, b);
    spectrogram(cr, &fr, spec);
    cairo_destroy(cr);
    free(b);
    cairo_surface_flush(s);
    cairo_status_t cs = cairo_surface_status(s);
    if (cs == CAIRO_STATUS_SUCCESS && type == 0)
        cs = cairo_surface_write_to_png_stream(s, ml_plot_write_file, out);
    cairo_surface_finish(s);
    if (cs == CAIRO_STATUS_SUCCESS)
        cs = cairo_surface_status(s);
    cairo_surface_destroy(s);
    if (cs != CAIRO_STATUS_SUCCESS) {
        snprintf(err, err_len, "cannot write: %s", cairo_status_to_string(cs));
        return ML_EIO;
    }
    return ML_OK;
}
