/* PDF records of a measurement or a comparison (cairo), A4 portrait.
 * SPDX-License-Identifier: MIT
 */
#include <cairo-pdf.h>
#include <math.h>
#include <string.h>

#include "io/plot_internal.h"
#include "io/report_internal.h"

#define PAGE_W 595.276 /* A4 in points (ISO 216: 210 x 297 mm) */
#define PAGE_H 841.890
#define MARGIN 42.0

static void put(cairo_t *cr, double x, double y, const char *s)
{
    cairo_move_to(cr, x, y);
    cairo_show_text(cr, s);
}

static void put_right(cairo_t *cr, double x, double y, const char *s)
{
    cairo_text_extents_t e;
    cairo_text_extents(cr, s, &e);
    cairo_move_to(cr, x - e.x_advance, y);
    cairo_show_text(cr, s);
}

static void font(cairo_t *cr, double size, bool bold)
{
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL,
                           bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr, size);
}

/* Title band and footer of a page. */
static void page_frame(cairo_t *cr, const char *title, const char *version, const char *when, int page, int pages)
{
    ml_colour(cr, ML_C_HEAD);
    cairo_rectangle(cr, 0, 0, PAGE_W, 58);
    cairo_fill(cr);
    cairo_set_source_rgb(cr, 1, 1, 1);
    font(cr, 17, true);
    put(cr, MARGIN, 36, title);
    font(cr, 8.5, false);
    char b[128];
    snprintf(b, sizeof b, "modlens %s", version);
    put_right(cr, PAGE_W - MARGIN, 28, b);
    put_right(cr, PAGE_W - MARGIN, 41, when);
    ml_colour(cr, ML_C_INK);
    font(cr, 7.5, false);
    snprintf(b, sizeof b, "page %d of %d", page, pages);
    put_right(cr, PAGE_W - MARGIN, PAGE_H - 24, b);
    put(cr, MARGIN, PAGE_H - 24, "modlens measurement record");
    ml_colour(cr, ML_C_GRID);
    cairo_set_line_width(cr, 0.8);
    cairo_move_to(cr, MARGIN, PAGE_H - 36);
    cairo_line_to(cr, PAGE_W - MARGIN, PAGE_H - 36);
    cairo_stroke(cr);
}

/* "label  value" lines; long values are cut to the line. Returns the next y. */
static double field(cairo_t *cr, double y, const char *label, const char *value)
{
    font(cr, 8.5, true);
    ml_colour(cr, ML_C_INK);
    put(cr, MARGIN, y, label);
    font(cr, 8.5, false);
    char buf[400];
    snprintf(buf, sizeof buf, "%s", value);
    cairo_text_extents_t e;
    for (cairo_text_extents(cr, buf, &e); e.x_advance > PAGE_W - 2 * MARGIN - 112 && strlen(buf) > 4;
         cairo_text_extents(cr, buf, &e))
        strcpy(buf + strlen(buf) - 4, "...");
    put(cr, MARGIN + 112, y, buf);
    return y + 12.5;
}

static double section(cairo_t *cr, double y, const char *title)
{
    font(cr, 11, true);
    ml_colour(cr, ML_C_HEAD);
    put(cr, MARGIN, y, title);
    cairo_set_line_width(cr, 1.0);
    cairo_move_to(cr, MARGIN, y + 4);
    cairo_line_to(cr, PAGE_W - MARGIN, y + 4);
    cairo_stroke(cr);
    return y + 18;
}

/* Metric table rows from `first`; returns rows drawn. */
static size_t metric_table(cairo_t *cr, double y, double bottom, const ml_report *r, size_t first, double *y_end)
{
    const double rowh = 11.0;
    const double cx[] = {MARGIN + 3, MARGIN + 260, MARGIN + 300, MARGIN + 400, MARGIN + 455, PAGE_W - MARGIN - 3};
    ml_colour(cr, ML_C_HEAD);
    cairo_rectangle(cr, MARGIN, y, PAGE_W - 2 * MARGIN, rowh + 2);
    cairo_fill(cr);
    cairo_set_source_rgb(cr, 1, 1, 1);
    font(cr, 8, true);
    put(cr, cx[0], y + 9, "metric");
    put_right(cr, cx[1], y + 9, "value");
    put(cr, cx[2] - 34, y + 9, "");
    put(cr, cx[1] + 6, y + 9, "unit");
    put(cr, cx[3] - 60, y + 9, "limit");
    put(cr, cx[3] + 10, y + 9, "result");
    put_right(cr, cx[5], y + 9, "margin");
    y += rowh + 2;
    size_t n = 0;
    for (size_t i = first; i < r->nmetrics && y + rowh <= bottom; i++, n++, y += rowh) {
        const ml_metric *m = &r->metrics[i];
        if ((i - first) % 2 == 1) {
            ml_colour(cr, ML_C_SHADE);
            cairo_rectangle(cr, MARGIN, y, PAGE_W - 2 * MARGIN, rowh);
            cairo_fill(cr);
        }
        char val[48], lim[48] = "", margin[48] = "", u[48] = "";
        if (m->valid)
            snprintf(val, sizeof val, "%.*f", m->decimals, m->value);
        else
            snprintf(val, sizeof val, "n/a");
        if (m->valid && m->has_u)
            snprintf(u, sizeof u, "+- %.*f", m->decimals + 1, m->u);
        const ml_check *c = ml_report_check_for(r, m->name);
        ml_colour(cr, ML_C_INK);
        font(cr, 7.8, false);
        put(cr, cx[0], y + 8.3, m->name);
        put_right(cr, cx[1], y + 8.3, val);
        put(cr, cx[1] + 6, y + 8.3, m->unit);
        font(cr, 6.5, false);
        put(cr, cx[1] + 34, y + 8.3, u);
        font(cr, 7.8, false);
        if (c) {
            ml_report_limit_text(c, lim, sizeof lim);
            if (c->valid)
                snprintf(margin, sizeof margin, "%+.*f", c->decimals, c->margin);
            put(cr, cx[3] - 60, y + 8.3, lim);
            ml_colour(cr, c->pass ? ML_C_PASS : ML_C_FAIL);
            font(cr, 7.8, true);
            put(cr, cx[3] + 10, y + 8.3, c->pass ? "PASS" : "FAIL");
            font(cr, 7.8, false);
            ml_colour(cr, ML_C_INK);
            put_right(cr, cx[5], y + 8.3, margin);
        }
    }
    *y_end = y;
    return n;
}

static ml_status finish(cairo_surface_t *s, cairo_t *cr, FILE *f)
{
    cairo_destroy(cr);
    cairo_surface_finish(s);
    cairo_status_t st = cairo_surface_status(s);
    cairo_surface_destroy(s);
    return st == CAIRO_STATUS_SUCCESS && fflush(f) == 0 && !ferror(f) ? ML_OK : ML_EIO;
}

ml_status ml_report_write_pdf(FILE *f, const ml_report *r, const ml_plot_data *p, const char *cmdline,
                              const char *when, const char *version)
{
    cairo_surface_t *s = cairo_pdf_surface_create_for_stream(ml_plot_write_file, f, PAGE_W, PAGE_H);
    if (cairo_surface_status(s) != CAIRO_STATUS_SUCCESS) {
        cairo_surface_destroy(s);
        return ML_EIO;
    }
    cairo_t *cr = cairo_create(s);
    const bool pictures = p && (p->nbins || p->nenv >= 2);
    /* rows that fit on the first page decide whether the table continues on a second one */
    const double first_rows = floor((PAGE_H - 60 - 250 - 90) / 11.0);
    const int pages = 1 + ((double)r->nmetrics > first_rows ? 1 : 0) + (pictures ? 1 : 0);
    int page = 1;
    page_frame(cr, "Measurement record", version, when, page, pages);
    double y = 84;
    y = section(cr, y, "What was measured");
    char b[1400];
    y = field(cr, y, "file", r->path);
    snprintf(b, sizeof b, "%s, %.0f Hz, %d channel%s (analysed: %d)", r->format, r->sample_rate_hz, r->channels,
             r->channels == 1 ? "" : "s", r->channel);
    y = field(cr, y, "input", b);
    snprintf(b, sizeof b, "%.3f s from %.3f s of %.3f s", r->analysed_s, r->start_s, r->duration_s);
    y = field(cr, y, "segment", b);
    snprintf(b, sizeof b, "%s (%s)", r->kind, r->kind_reason);
    y = field(cr, y, "kind", b);
    y = field(cr, y, "analysis", r->analysis);
    y = field(cr, y, "command", cmdline);
    y = field(cr, y, "limits", r->limits_path[0] ? r->limits_path : "none");
    for (size_t i = 0; i < r->ntexts; i++)
        y = field(cr, y, strchr(r->texts[i].name, '.') ? strchr(r->texts[i].name, '.') + 1 : r->texts[i].name,
                  r->texts[i].value);
    if (r->u_blocks >= 3) {
        snprintf(b, sizeof b, "+- is the 95 %% interval from the spread over %zu blocks of %.2f s", r->u_blocks,
                 r->u_block_s);
        y = field(cr, y, "uncertainty", b);
    }
    /* verdict box */
    const char *v = ml_report_verdict(r);
    size_t failed = 0;
    for (size_t i = 0; i < r->nchecks; i++)
        failed += !r->checks[i].pass;
    y += 6;
    ml_colour(cr, strcmp(v, "fail") == 0 ? ML_C_FAIL : strcmp(v, "pass") == 0 ? ML_C_PASS : ML_C_HEAD);
    cairo_rectangle(cr, MARGIN, y, PAGE_W - 2 * MARGIN, 24);
    cairo_fill(cr);
    cairo_set_source_rgb(cr, 1, 1, 1);
    font(cr, 12, true);
    if (strcmp(v, "unchecked") == 0)
        snprintf(b, sizeof b, "UNCHECKED: no limits given");
    else
        snprintf(b, sizeof b, "%s: %zu of %zu checks passed", strcmp(v, "pass") == 0 ? "PASS" : "FAIL",
                 r->nchecks - failed, r->nchecks);
    put(cr, MARGIN + 10, y + 16.5, b);
    y += 40;
    y = section(cr, y, "Metrics");
    double yend = y;
    size_t done = metric_table(cr, y, PAGE_H - 60, r, 0, &yend);
    while (done < r->nmetrics) {
        cairo_show_page(cr);
        page_frame(cr, "Measurement record", version, when, ++page, pages);
        done += metric_table(cr, 84, PAGE_H - 60, r, done, &yend);
    }
    y = yend + 14;
    if (r->nnotes) {
        if (y + 14.0 * (double)(r->nnotes + 1) > PAGE_H - 60) {
            cairo_show_page(cr);
            page_frame(cr, "Measurement record", version, when, ++page, pages);
            y = 84;
        }
        y = section(cr, y, "Notes");
        font(cr, 8, false);
        ml_colour(cr, ML_C_INK);
        for (size_t i = 0; i < r->nnotes; i++, y += 12)
            put(cr, MARGIN, y, r->notes[i]);
    }
    if (pictures) {
        cairo_show_page(cr);
        page_frame(cr, "Measurement record: pictures", version, when, ++page, pages);
        ml_draw_pictures(cr, MARGIN, 80, PAGE_W - 2 * MARGIN, p);
    }
    return finish(s, cr, f);
}

ml_status ml_compare_write_pdf(FILE *f, const ml_comparison *c, const ml_plot_data *a, const ml_plot_data *b,
                               const char *cmdline, const char *when, const char *version)
{
    cairo_surface_t *s = cairo_pdf_surface_create_for_stream(ml_plot_write_file, f, PAGE_W, PAGE_H);
    if (cairo_surface_status(s) != CAIRO_STATUS_SUCCESS) {
        cairo_surface_destroy(s);
        return ML_EIO;
    }
    cairo_t *cr = cairo_create(s);
    const bool spec = (a && a->nbins) || (b && b->nbins);
    page_frame(cr, "Comparison record", version, when, 1, spec ? 2 : 1);
    double y = 84;
    y = section(cr, y, "What was compared");
    char t[1400];
    snprintf(t, sizeof t, "%s (%s, %.0f Hz, %.3f s)", c->a->path, c->a->kind, c->a->sample_rate_hz, c->a->analysed_s);
    y = field(cr, y, "A (before)", t);
    snprintf(t, sizeof t, "%s (%s, %.0f Hz, %.3f s)", c->b->path, c->b->kind, c->b->sample_rate_hz, c->b->analysed_s);
    y = field(cr, y, "B (after)", t);
    y = field(cr, y, "command", cmdline);
    y = field(cr, y, "limits", c->limits_path[0] ? c->limits_path : "none (every metric compared)");
    y = field(cr, y, "same means", "|B - A| within the combined 95 % uncertainty (+ tolerance)");
    y += 6;
    ml_colour(cr, c->nworse ? ML_C_FAIL : ML_C_PASS);
    cairo_rectangle(cr, MARGIN, y, PAGE_W - 2 * MARGIN, 24);
    cairo_fill(cr);
    cairo_set_source_rgb(cr, 1, 1, 1);
    font(cr, 12, true);
    if (c->nworse)
        snprintf(t, sizeof t, "B is WORSE than A on %zu compared metric%s", c->nworse, c->nworse == 1 ? "" : "s");
    else
        snprintf(t, sizeof t, "B is not worse than A on any compared metric");
    put(cr, MARGIN + 10, y + 16.5, t);
    y += 40;
    y = section(cr, y, "Metrics");
    size_t done = ml_draw_compare_table(cr, MARGIN, y, PAGE_W - 2 * MARGIN, PAGE_H - 60 - y, c, 0, 7.5);
    int page = 1;
    while (done < c->nrows) {
        cairo_show_page(cr);
        page_frame(cr, "Comparison record", version, when, ++page, spec ? 3 : 2);
        done += ml_draw_compare_table(cr, MARGIN, 84, PAGE_W - 2 * MARGIN, PAGE_H - 144, c, done, 7.5);
    }
    if (spec) {
        cairo_show_page(cr);
        page++;
        page_frame(cr, "Comparison record: spectra", version, when, page, page);
        ml_draw_spectrum(cr, MARGIN, 80, PAGE_W - 2 * MARGIN, 0.62 * (PAGE_W - 2 * MARGIN), a, b, "Spectra, A and B");
        font(cr, 8.5, false);
        ml_colour(cr, ML_C_INK);
        for (size_t i = 0; i < c->nnotes; i++)
            put(cr, MARGIN, 80 + 0.66 * (PAGE_W - 2 * MARGIN) + 14 * (double)i, c->notes[i]);
    }
    return finish(s, cr, f);
}
