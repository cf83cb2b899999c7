/* Picture of a noise log with cairo (see io/logplot.h).
 * SPDX-License-Identifier: MIT
 *
 * References: cairo API documentation (image surfaces, cairo_surface_write_to_png, toy text API).
 */
#include "io/logplot.h"

#include <cairo.h>
#include <errno.h>
#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define W 1200
#define H 820
#define X0 70.0
#define X1 (W - 20.0)
#define NB 1000 /* level buckets: one per pixel column or so */
#define LINE 4096

typedef struct {
    double lo, hi, sum;
    long n;
} bucket;

/* Index of column name in a header line; -1 when absent. */
static int column(const char *header, const char *name)
{
    int i = 0;
    size_t len = strlen(name);
    for (const char *p = header;; i++) {
        size_t f = strcspn(p, ",\r\n");
        if (f == len && strncmp(p, name, len) == 0)
            return i;
        if (p[f] != ',')
            return -1;
        p += f + 1;
    }
}

/* Value of field i of a line (NAN when empty or missing). */
static double field(const char *line, int i)
{
    const char *p = line;
    for (; i > 0 && p; i--) {
        p = strchr(p, ',');
        if (p)
            p++;
    }
    if (p == NULL || *p == ',' || *p == '\n' || *p == '\0')
        return NAN;
    char *end;
    double v = strtod(p, &end);
    return end == p ? NAN : v;
}

static void field_str(const char *line, int i, char *b, size_t n)
{
    const char *p = line;
    for (; i > 0 && p; i--) {
        p = strchr(p, ',');
        if (p)
            p++;
    }
    size_t len = p ? strcspn(p, ",\r\n") : 0;
    if (len >= n)
        len = n - 1;
    if (p)
        memcpy(b, p, len);
    b[len] = '\0';
}

static void text(cairo_t *cr, double x, double y, const char *s, double align)
{
    cairo_text_extents_t te;
    cairo_text_extents(cr, s, &te);
    cairo_move_to(cr, x - align * te.width, y);
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
    int off, rms, pk, aw;
} columns;

/* Pass 1: the time and level ranges of the rows into fr; the row count. */
static long ranges(FILE *f, const columns *c, frame *fr)
{
    char line[LINE];
    double tmin = INFINITY, tmax = -INFINITY, lmin = INFINITY, lmax = -INFINITY;
    long rows = 0;
    while (fgets(line, sizeof line, f)) {
        const double t = field(line, c->off), r = field(line, c->rms), p = field(line, c->pk);
        if (!isfinite(t))
            continue;
        rows++;
        tmin = fmin(tmin, t);
        tmax = fmax(tmax, t);
        if (isfinite(r) && r > -200)
            lmin = fmin(lmin, r);
        if (isfinite(p))
            lmax = fmax(lmax, p);
    }
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
                  .ly0 = 40,
                  .ly1 = 400,
                  .sy0 = 450,
                  .sy1 = 780};
    return rows;
}

/* Pass 2: one bucket per pixel column or so, for rms, A-weighted and peak (b[3][NB]). */
static void buckets(FILE *f, const columns *c, const frame *fr, bucket *b)
{
    char line[LINE];
    for (int i = 0; i < 3 * NB; i++)
        b[i] = (bucket){INFINITY, -INFINITY, 0, 0};
    rewind(f);
    if (fgets(line, sizeof line, f) == NULL)
        return;
    while (fgets(line, sizeof line, f)) {
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

/* Grid, level and time labels. */
static void axes(cairo_t *cr, const frame *fr)
{
    cairo_set_line_width(cr, 1);
    for (double v = fr->lmin; v <= fr->lmax; v += 10) {
        cairo_set_source_rgb(cr, 0.88, 0.88, 0.88);
        cairo_move_to(cr, X0, yl(fr, v));
        cairo_line_to(cr, X1, yl(fr, v));
        cairo_stroke(cr);
        char b[32];
        snprintf(b, sizeof b, "%.0f", v);
        cairo_set_source_rgb(cr, 0, 0, 0);
        text(cr, X0 - 6, yl(fr, v) + 4, b, 1);
    }
    text(cr, 8, fr->ly0 - 10, "dBFS", 0);
    for (int k = 0; k <= 8; k++) {
        const double t = fr->tmin + (fr->tmax - fr->tmin) * k / 8.0;
        char b[32];
        if (fr->tmax - fr->tmin > 7200)
            snprintf(b, sizeof b, "%.2f h", t / 3600);
        else
            snprintf(b, sizeof b, "%.0f s", t);
        text(cr, xt(fr, t), fr->ly1 + 16, b, 0.5);
        text(cr, xt(fr, t), fr->sy1 + 16, b, 0.5);
    }
}

/* Events as vertical marks (impulses) or shaded spans, streamed from the events file. */
static void events(cairo_t *cr, const frame *fr, const char *events_csv)
{
    char line[LINE];
    FILE *e = events_csv ? fopen(events_csv, "r") : NULL;
    if (e == NULL)
        return;
    int c_s = -1, c_e = -1, c_k = -1;
    if (fgets(line, sizeof line, e)) {
        c_s = column(line, "start_offset_s");
        c_e = column(line, "end_offset_s");
        c_k = column(line, "kind");
    }
    while (c_s >= 0 && c_e >= 0 && c_k >= 0 && fgets(line, sizeof line, e)) {
        const double t0 = field(line, c_s), t1 = field(line, c_e);
        char kind[32];
        field_str(line, c_k, kind, sizeof kind);
        if (!isfinite(t0) || t0 > fr->tmax + 1e9)
            continue;
        double r = 0.8, g = 0.1, b = 0.1;
        if (strcmp(kind, "hum") == 0) r = 1.0, g = 0.55, b = 0.0;
        else if (strcmp(kind, "noise") == 0) r = 0.55, g = 0.2, b = 0.75;
        else if (strcmp(kind, "carrier-loss") == 0) r = 0.0, g = 0.0, b = 0.0;
        else if (strcmp(kind, "impulse") != 0) r = g = b = 0.6;
        const double xa = xt(fr, t0), xb = fmax(xt(fr, isfinite(t1) ? t1 : t0), xa + 1);
        cairo_set_source_rgba(cr, r, g, b, strcmp(kind, "impulse") == 0 ? 0.6 : 0.18);
        if (strcmp(kind, "impulse") == 0) {
            cairo_move_to(cr, xa, fr->ly0);
            cairo_line_to(cr, xa, fr->ly0 + 14);
            cairo_stroke(cr);
        } else {
            cairo_rectangle(cr, xa, fr->ly0, xb - xa, fr->ly1 - fr->ly0);
            cairo_fill(cr);
        }
    }
    fclose(e);
}

/* The levels: the mean line of each bucket, with a legend. */
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
    text(cr, X0, 33, "events: impulse (red ticks), hum (orange), noise (violet), carrier-loss (grey)", 0);
}

/* The spectrogram from the bounded history, in dB re the spec's unit power (at most 100 dB). */
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
    if (!(dmax > dmin))
        dmax = dmin + 1;
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
    cairo_set_source_rgb(cr, 0, 0, 0);
    char b[64];
    for (int k = 0; k <= 4; k++) {
        const size_t row = (size_t)((double)(nr - 1) * k / 4.0);
        snprintf(b, sizeof b, "%.0f", spec->band_hz[row]);
        text(cr, X0 - 6, fr->sy1 - ((double)row + 0.5) / (double)nr * (fr->sy1 - fr->sy0) + 4, b, 1);
    }
    snprintf(b, sizeof b, "spectrogram, Hz (%s axis; colour %.0f .. %.0f dB)",
             spec->log_freq ? "log" : "linear", dmin, dmax);
    text(cr, X0, fr->sy0 - 8, b, 0);
}

ml_status ml_logplot_write(const char *png, const char *rows_csv, const char *events_csv,
                           const ml_logplot_spec *spec, char *err, size_t err_len)
{
    char line[LINE];
    FILE *f = fopen(rows_csv, "r");
    if (f == NULL) {
        snprintf(err, err_len, "cannot read %s: %s", rows_csv, strerror(errno));
        return ML_EIO;
    }
    columns c = {-1, -1, -1, -1};
    if (fgets(line, sizeof line, f))
        c = (columns){column(line, "offset_s"), column(line, "rms_dbfs"), column(line, "peak_dbfs"),
                      column(line, "a_weighted_dbfs")};
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
    cairo_surface_t *s = cairo_image_surface_create(CAIRO_FORMAT_RGB24, W, H);
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
    cairo_status_t cs = cairo_surface_write_to_png(s, png);
    cairo_surface_destroy(s);
    if (cs != CAIRO_STATUS_SUCCESS) {
        snprintf(err, err_len, "cannot write: %s", cairo_status_to_string(cs));
        return ML_EIO;
    }
    return ML_OK;
}
