/* PDF records of a measurement or a comparison (cairo), A4 portrait.
 * SPDX-License-Identifier: MIT
 *
 * Each record is laid out twice: once onto a surface that discards its output, to count the
 * pages, then for real, so that every footer says "page N of M". Long values (paths, the command
 * line, notes) are wrapped, never cut. Text that is not valid UTF-8 is shown with '?' for the bad
 * bytes (cairo refuses such text, which would lose the whole record).
 */
#include <cairo-pdf.h>
#include <math.h>
#include <string.h>

#include "io/plot_internal.h"
#include "io/report_internal.h"

#define PAGE_W 595.276 /* A4 in points (ISO 216: 210 x 297 mm) */
#define PAGE_H 841.890
#define MARGIN 42.0
#define TOP 84.0              /* first baseline under the title band */
#define BOTTOM (PAGE_H - 48)  /* nothing below this but the footer   */
#define LABEL_W 112.0         /* width of the labels of "What was measured" */

typedef struct {
    cairo_t *cr;
    const char *title, *version, *when;
    int page;  /* the current page, from 1                          */
    int pages; /* the total; 0 while counting (footer "page N")      */
    double y;  /* where the next line goes                          */
} doc;

/* ---- text ---- */

/* Bytes of the valid UTF-8 character at s (1..4), 0 for an invalid byte or a control character. */
static int char_len(const unsigned char *s)
{
    const unsigned char c = s[0];
    if (c < 0x20 || c == 0x7f)
        return 0;
    if (c < 0x80)
        return 1;
    int n;
    unsigned char lo = 0x80, hi = 0xbf;
    if (c >= 0xc2 && c <= 0xdf)
        n = 2;
    else if (c >= 0xe0 && c <= 0xef) {
        n = 3;
        if (c == 0xe0)
            lo = 0xa0;
        if (c == 0xed)
            hi = 0x9f;
    } else if (c >= 0xf0 && c <= 0xf4) {
        n = 4;
        if (c == 0xf0)
            lo = 0x90;
        if (c == 0xf4)
            hi = 0x8f;
    } else
        return 0;
    if (s[1] < lo || s[1] > hi)
        return 0;
    for (int i = 2; i < n; i++)
        if (s[i] < 0x80 || s[i] > 0xbf)
            return 0;
    return n;
}

/* Shows (draw) or measures bytes [0, n) of s from the current point, bad bytes as '?', in pieces
 * (cairo advances the current point); returns the advance. */
static double run(cairo_t *cr, const char *s, size_t n, bool draw)
{
    char buf[512];
    size_t k = 0;
    double adv = 0;
    for (size_t i = 0; i <= n;) {
        const int len = i < n ? char_len((const unsigned char *)s + i) : 0;
        if (i == n || k + 5 > sizeof buf) {
            buf[k] = '\0';
            cairo_text_extents_t e;
            cairo_text_extents(cr, buf, &e);
            adv += e.x_advance;
            if (draw)
                cairo_show_text(cr, buf);
            k = 0;
            if (i == n)
                break;
        }
        if (len == 0 || i + (size_t)len > n) {
            buf[k++] = '?';
            i++;
        } else {
            memcpy(buf + k, s + i, (size_t)len);
            k += (size_t)len;
            i += (size_t)len;
        }
    }
    return adv;
}

static double width_of(cairo_t *cr, const char *s, size_t n)
{
    return run(cr, s, n, false);
}

static void put(cairo_t *cr, double x, double y, const char *s)
{
    cairo_move_to(cr, x, y);
    run(cr, s, strlen(s), true);
}

static void put_right(cairo_t *cr, double x, double y, const char *s)
{
    cairo_move_to(cr, x - width_of(cr, s, strlen(s)), y);
    run(cr, s, strlen(s), true);
}

static void font(cairo_t *cr, double size, bool bold)
{
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL,
                           bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr, size);
}

/* Bytes of s[0, n) to put on a line of this width: the longest prefix that fits, ended after a
 * space, '/', ',' or '=' when there is one in its second half; at least one character. */
static size_t fit(cairo_t *cr, const char *s, size_t n, double width)
{
    if (width_of(cr, s, n) <= width)
        return n;
    size_t k = 0;
    while (k < n) {
        const int len = char_len((const unsigned char *)s + k);
        const size_t next = k + (size_t)(len > 0 ? len : 1);
        if (next > n || width_of(cr, s, next) > width)
            break;
        k = next;
    }
    if (k == 0) /* one character wider than the line */
        return (size_t)(char_len((const unsigned char *)s) > 0 ? char_len((const unsigned char *)s) : 1);
    for (size_t b = k; b > k / 2; b--)
        if (strchr(" /,=", s[b - 1]) != NULL)
            return b;
    return k;
}

/* ---- pages ---- */

static void page_frame(doc *d)
{
    cairo_t *cr = d->cr;
    ml_colour(cr, ML_C_HEAD);
    cairo_rectangle(cr, 0, 0, PAGE_W, 58);
    cairo_fill(cr);
    cairo_set_source_rgb(cr, 1, 1, 1);
    font(cr, 17, true);
    put(cr, MARGIN, 36, d->title);
    font(cr, 8.5, false);
    char b[160];
    snprintf(b, sizeof b, "modlens %s", d->version);
    put_right(cr, PAGE_W - MARGIN, 28, b);
    put_right(cr, PAGE_W - MARGIN, 41, d->when);
    ml_colour(cr, ML_C_INK);
    font(cr, 7.5, false);
    if (d->pages > 0)
        snprintf(b, sizeof b, "page %d of %d", d->page, d->pages);
    else
        snprintf(b, sizeof b, "page %d", d->page);
    put_right(cr, PAGE_W - MARGIN, PAGE_H - 24, b);
    put(cr, MARGIN, PAGE_H - 24, d->title);
    ml_colour(cr, ML_C_GRID);
    cairo_set_line_width(cr, 0.8);
    cairo_move_to(cr, MARGIN, PAGE_H - 36);
    cairo_line_to(cr, PAGE_W - MARGIN, PAGE_H - 36);
    cairo_stroke(cr);
    d->y = TOP;
}

static void new_page(doc *d)
{
    cairo_show_page(d->cr);
    d->page++;
    page_frame(d);
}

/* Starts a new page unless h more points fit on this one. */
static void need(doc *d, double h)
{
    if (d->y + h > BOTTOM)
        new_page(d);
}

static void section(doc *d, const char *title)
{
    need(d, 40);
    cairo_t *cr = d->cr;
    font(cr, 11, true);
    ml_colour(cr, ML_C_HEAD);
    put(cr, MARGIN, d->y, title);
    cairo_set_line_width(cr, 1.0);
    cairo_move_to(cr, MARGIN, d->y + 4);
    cairo_line_to(cr, PAGE_W - MARGIN, d->y + 4);
    cairo_stroke(cr);
    d->y += 18;
}

/* text wrapped into lines of `width` from x, lineh apart, in the current font and colour */
static void wrapped(doc *d, double x, double width, double lineh, const char *text)
{
    size_t n = strlen(text);
    const char *s = text;
    do {
        need(d, lineh);
        const size_t k = fit(d->cr, s, n, width);
        cairo_move_to(d->cr, x, d->y);
        run(d->cr, s, k, true);
        d->y += lineh;
        s += k;
        n -= k;
        while (n > 0 && *s == ' ') {
            s++;
            n--;
        }
    } while (n > 0);
}

/* A line of small print across the page (a mark explained, a note), wrapped. */
static void small_print(doc *d, const char *line)
{
    font(d->cr, 8, false);
    ml_colour(d->cr, ML_C_INK);
    wrapped(d, MARGIN, PAGE_W - 2 * MARGIN, 11.0, line);
}

/* "label  value": the value wrapped beside the label, never cut. */
static void field(doc *d, const char *label, const char *value)
{
    need(d, 12.5);
    font(d->cr, 8.5, true);
    ml_colour(d->cr, ML_C_INK);
    put(d->cr, MARGIN, d->y, label);
    font(d->cr, 8.5, false);
    wrapped(d, MARGIN + LABEL_W, PAGE_W - 2 * MARGIN - LABEL_W, 11.0, value[0] ? value : " ");
    d->y += 1.5;
}

static void verdict_box(doc *d, int colour, const char *text)
{
    need(d, 40);
    d->y += 6;
    ml_colour(d->cr, colour);
    cairo_rectangle(d->cr, MARGIN, d->y - 6, PAGE_W - 2 * MARGIN, 24);
    cairo_fill(d->cr);
    cairo_set_source_rgb(d->cr, 1, 1, 1);
    font(d->cr, 12, true);
    put(d->cr, MARGIN + 10, d->y + 10.5, text);
    d->y += 40;
}

static void shade(doc *d, double y, double h)
{
    ml_colour(d->cr, ML_C_SHADE);
    cairo_rectangle(d->cr, MARGIN, y, PAGE_W - 2 * MARGIN, h);
    cairo_fill(d->cr);
}

/* ---- the measurement record ---- */

#define ROW_H 11.0
/* metric table columns: name, value (right edge), mark, +-, unit, limit, result, margin (right) */
static const double MX[] = {MARGIN + 3, MARGIN + 244, MARGIN + 247, MARGIN + 263, MARGIN + 318, MARGIN + 350,
                            MARGIN + 432, PAGE_W - MARGIN - 3};

/* The band of a table's header row at d->y; leaves white bold text of size set. */
static void head_band(doc *d, double size)
{
    cairo_t *cr = d->cr;
    ml_colour(cr, ML_C_HEAD);
    cairo_rectangle(cr, MARGIN, d->y, PAGE_W - 2 * MARGIN, ROW_H + 2);
    cairo_fill(cr);
    cairo_set_source_rgb(cr, 1, 1, 1);
    font(cr, size, true);
}

static void metric_head(doc *d)
{
    cairo_t *cr = d->cr;
    head_band(d, 8);
    const double b = d->y + 9;
    put(cr, MX[0], b, "metric");
    put_right(cr, MX[1], b, "value");
    put(cr, MX[3], b, "+- (95 %)");
    put(cr, MX[4], b, "unit");
    put(cr, MX[5], b, "limit");
    put(cr, MX[6], b, "result");
    put_right(cr, MX[7], b, "margin");
    d->y += ROW_H + 2;
}

static void metric_rows(doc *d, const ml_report *r)
{
    cairo_t *cr = d->cr;
    metric_head(d);
    for (size_t i = 0; i < r->nmetrics; i++) {
        if (d->y + ROW_H > BOTTOM) {
            new_page(d);
            metric_head(d);
        }
        const ml_metric *m = &r->metrics[i];
        if (i % 2 == 1)
            shade(d, d->y, ROW_H);
        char val[64], u[48], mark[16] = "", lim[96] = "", margin[48] = "";
        ml_report_value_text(m, val, sizeof val);
        ml_report_u_text(m, u, sizeof u);
        const int k = ml_report_mark(r, i);
        if (k > 0)
            snprintf(mark, sizeof mark, "[%d]", k);
        const double b = d->y + 8.3;
        ml_colour(cr, ML_C_INK);
        font(cr, 7.8, false);
        put(cr, MX[0], b, m->name);
        put_right(cr, MX[1], b, val);
        put(cr, MX[4], b, m->unit);
        font(cr, 6.5, false);
        put(cr, MX[2], b, mark);
        put(cr, MX[3], b, u);
        font(cr, 7.8, false);
        const ml_check *c = ml_report_check_for(r, m->name);
        if (c) {
            ml_report_limit_text(c, lim, sizeof lim);
            if (c->valid && !c->undecided) /* an undecided label fills the margin column */
                ml_report_number(margin, sizeof margin, c->margin, c->decimals, true);
            put(cr, MX[5], b, lim);
            ml_colour(cr, c->pass ? ML_C_PASS : c->undecided ? ML_C_HEAD : ML_C_FAIL);
            font(cr, 7.8, true);
            put(cr, MX[6], b, c->pass ? "PASS" : c->undecided ? "UNDECIDED" : "FAIL");
            font(cr, 7.8, false);
            ml_colour(cr, ML_C_INK);
            put_right(cr, MX[7], b, margin);
        }
        d->y += ROW_H;
    }
    d->y += 10;
}

/* The explanations of the marks of the metric table. */
static void marks(doc *d, const ml_report *r)
{
    bool any = false;
    for (size_t i = 0; i < r->nmetrics; i++) {
        const int k = ml_report_mark(r, i);
        if (k == 0)
            continue;
        if (!any)
            section(d, "Reasons and qualifiers");
        any = true;
        char line[ML_REPORT_WHY_LEN + 256];
        ml_report_mark_line(k, r->metrics[i].name, &r->metrics[i], line, sizeof line);
        small_print(d, line);
    }
    if (any)
        d->y += 8;
}

static void table_head(doc *d, const ml_table *tb, double colw)
{
    cairo_t *cr = d->cr;
    head_band(d, 8);
    for (size_t c = 0; c < tb->ncols; c++)
        put_right(cr, MARGIN + colw * (double)(c + 1) - 6, d->y + 9, tb->cols[c]);
    d->y += ROW_H + 2;
}

/* The report's tables (harmonics, hum components ...), each under its title. */
static void tables(doc *d, const ml_report *r)
{
    if (r->ntables == 0)
        return;
    cairo_t *cr = d->cr;
    for (size_t t = 0; t < r->ntables; t++) {
        const ml_table *tb = &r->tables[t];
        const double colw = tb->ncols ? fmin(110.0, (PAGE_W - 2 * MARGIN) / (double)tb->ncols) : 110.0;
        /* a table that fits on a page is not split: it starts on the next page if need be */
        const double h = 13 + ROW_H + 2 + ROW_H * (double)(tb->nrows ? tb->nrows : 1) + (t == 0 ? 18 : 0);
        need(d, h <= BOTTOM - TOP ? h : 13 + 4 * ROW_H + 2);
        if (t == 0)
            section(d, "Tables");
        char title[160];
        snprintf(title, sizeof title, "%s (%s)", tb->title, tb->path);
        font(cr, 9, true);
        ml_colour(cr, ML_C_INK);
        put(cr, MARGIN, d->y + 8, title);
        d->y += 13;
        table_head(d, tb, colw);
        if (tb->nrows == 0) {
            font(cr, 7.8, false);
            ml_colour(cr, ML_C_INK);
            put(cr, MARGIN + 3, d->y + 8.3, "(none above the noise within the band)");
            d->y += ROW_H;
        }
        for (size_t i = 0; i < tb->nrows; i++) {
            if (d->y + ROW_H > BOTTOM) {
                new_page(d);
                table_head(d, tb, colw);
            }
            if (i % 2 == 1)
                shade(d, d->y, ROW_H);
            font(cr, 7.8, false);
            ml_colour(cr, ML_C_INK);
            for (size_t c = 0; c < tb->ncols; c++) {
                char n[48];
                ml_report_number(n, sizeof n, tb->cell[i][c], tb->decimals[c], false);
                put_right(cr, MARGIN + colw * (double)(c + 1) - 6, d->y + 8.3, n[0] ? n : "n/a");
            }
            d->y += ROW_H;
        }
        d->y += 10;
    }
}

/* A mark explained, in small print, in the doc ctx. */
static void mark_line(void *ctx, const char *line)
{
    small_print(ctx, line);
}

/* The series' header row: point, each figure's name, result. */
static void series_head(doc *d, const ml_report_point *p0, double colw)
{
    cairo_t *cr = d->cr;
    head_band(d, 6.8);
    put(cr, MARGIN + 3, d->y + 9, "point");
    for (size_t i = 0; p0 && i < p0->nfigures; i++)
        put_right(cr, MARGIN + 28 + colw * (double)(i + 1) - 4, d->y + 9, p0->figures[i].name);
    put_right(cr, PAGE_W - MARGIN - 3, d->y + 9, "result");
    d->y += ROW_H + 2;
}

/* The series (a sweep's points): one row per point, marks beside values, the marks explained
 * after the table. */
static void series(doc *d, const ml_report *r)
{
    const ml_report_series *sr = r->series;
    if (sr == NULL)
        return;
    cairo_t *cr = d->cr;
    const ml_report_point *p0 = sr->npoints ? &sr->points[0] : NULL;
    const size_t nf = p0 ? p0->nfigures : 0;
    const double colw = nf ? (PAGE_W - 2 * MARGIN - 28 - 34) / (double)nf : 60.0;
    need(d, 13 + 3 * ROW_H + 20);
    section(d, sr->title);
    series_head(d, p0, colw);
    int mark = ml_report_metric_marks(r);
    const int first_mark = mark;
    for (size_t k = 0; k < sr->npoints; k++) {
        const ml_report_point *pt = &sr->points[k];
        if (d->y + ROW_H > BOTTOM) {
            new_page(d);
            series_head(d, p0, colw);
        }
        if (k % 2 == 1)
            shade(d, d->y, ROW_H);
        font(cr, 7.2, false);
        ml_colour(cr, ML_C_INK);
        char n[32];
        snprintf(n, sizeof n, "%zu", k);
        put(cr, MARGIN + 3, d->y + 8.3, n);
        for (size_t i = 0; i < pt->nfigures && i < nf; i++) {
            char cell[96];
            ml_report_cell_text(&pt->figures[i], &mark, cell, sizeof cell);
            put_right(cr, MARGIN + 28 + colw * (double)(i + 1) - 4, d->y + 8.3, cell);
        }
        const char *v = ml_report_point_verdict(pt);
        if (v) {
            ml_colour(cr, strcmp(v, "pass") == 0 ? ML_C_PASS : ML_C_FAIL);
            font(cr, 7.2, true);
            put_right(cr, PAGE_W - MARGIN - 3, d->y + 8.3, strcmp(v, "pass") == 0 ? "PASS" : "FAIL");
        }
        d->y += ROW_H;
    }
    d->y += 8;
    ml_report_series_marks(r, first_mark, mark_line, d);
    d->y += 8;
}

static void notes(doc *d, const char (*list)[ML_REPORT_NOTE_LEN], size_t n)
{
    if (n == 0)
        return;
    section(d, "Notes");
    for (size_t i = 0; i < n; i++) {
        char t[ML_REPORT_NOTE_LEN], line[ML_REPORT_NOTE_LEN + 8];
        ml_report_unsign_zeros(t, sizeof t, list[i]);
        snprintf(line, sizeof line, "- %s", t);
        small_print(d, line);
    }
}

typedef struct {
    const ml_report *r;
    const ml_plot_data *p;
    const char *cmdline;
} measure_job;

static void measure_layout(doc *d, const measure_job *j, bool draw_pictures)
{
    const ml_report *r = j->r;
    char b[ML_REPORT_SETTINGS_LEN + 400];
    page_frame(d);
    section(d, "What was measured");
    field(d, "file", r->path);
    snprintf(b, sizeof b, "%s, %.0f Hz, %d channel%s (analysed: %d)", r->format, r->sample_rate_hz, r->channels,
             r->channels == 1 ? "" : "s", r->channel);
    field(d, "input", b);
    snprintf(b, sizeof b, "%.3f s from %.3f s of %.3f s", r->analysed_s, r->start_s, r->duration_s);
    field(d, "segment", b);
    char t[ML_REPORT_SETTINGS_LEN];
    ml_report_unsign_zeros(t, sizeof t, r->kind_reason);
    snprintf(b, sizeof b, "%s (%s)", r->kind, t);
    field(d, "kind", b);
    ml_report_unsign_zeros(b, sizeof b, r->analysis);
    field(d, "analysis", b);
    if (r->settings[0]) {
        ml_report_unsign_zeros(b, sizeof b, r->settings);
        field(d, "settings in force", b);
    }
    field(d, "command", j->cmdline ? j->cmdline : "");
    field(d, "limits", r->limits_path[0] ? r->limits_path : "none");
    for (size_t i = 0; i < r->ntexts; i++) {
        const char *dot = strchr(r->texts[i].name, '.');
        ml_report_unsign_zeros(b, sizeof b, r->texts[i].value);
        field(d, dot ? dot + 1 : r->texts[i].name, b);
    }
    if (r->u_blocks >= 3) {
        snprintf(b, sizeof b, "+- is the 95 %% interval from the spread over %zu blocks of %.2f s", r->u_blocks,
                 r->u_block_s);
        field(d, "uncertainty", b);
    }
    const char *v = ml_report_verdict(r);
    size_t total = 0, failed = 0, undecided = 0;
    ml_report_check_counts(r, &total, &failed, &undecided);
    if (strcmp(v, "unchecked") == 0)
        snprintf(b, sizeof b, "UNCHECKED: no limits given");
    else
        snprintf(b, sizeof b, "%s: %zu of %zu checks passed", strcmp(v, "pass") == 0 ? "PASS"
                                                               : strcmp(v, "undecided") == 0 ? "UNDECIDED"
                                                                                             : "FAIL",
                 total - failed - undecided, total);
    verdict_box(d, strcmp(v, "fail") == 0 ? ML_C_FAIL : strcmp(v, "pass") == 0 ? ML_C_PASS : ML_C_HEAD, b);
    section(d, "Metrics");
    metric_rows(d, r);
    marks(d, r);
    series(d, r);
    tables(d, r);
    notes(d, r->notes, r->nnotes);
    const ml_plot_data *p = j->p;
    if (p && (p->nbins || p->nenv >= 2 || p->sweep.n)) {
        const char *title = d->title;
        d->title = "Measurement record: pictures";
        new_page(d);
        if (draw_pictures)
            ml_draw_pictures(d->cr, MARGIN, 80, PAGE_W - 2 * MARGIN, p);
        d->title = title;
    }
}

/* ---- the comparison record ---- */

typedef struct {
    const ml_comparison *c;
    const ml_plot_data *a, *b;
    const char *cmdline;
} compare_job;

static void compare_layout(doc *d, const compare_job *j, bool draw_pictures)
{
    const ml_comparison *c = j->c;
    char t[ML_REPORT_PATH_LEN + 200];
    page_frame(d);
    section(d, "What was compared");
    snprintf(t, sizeof t, "%s (%s, %.0f Hz, %.3f s)", c->a->path, c->a->kind, c->a->sample_rate_hz, c->a->analysed_s);
    field(d, "A (before)", t);
    snprintf(t, sizeof t, "%s (%s, %.0f Hz, %.3f s)", c->b->path, c->b->kind, c->b->sample_rate_hz, c->b->analysed_s);
    field(d, "B (after)", t);
    field(d, "command", j->cmdline ? j->cmdline : "");
    field(d, "limits", c->limits_path[0] ? c->limits_path : "none (every metric compared)");
    field(d, "same means", "|B - A| within the combined 95 % uncertainty (+ tolerance)");
    if (c->nworse)
        snprintf(t, sizeof t, "B is WORSE than A on %zu compared metric%s", c->nworse, c->nworse == 1 ? "" : "s");
    else
        snprintf(t, sizeof t, "B is not worse than A on any compared metric");
    verdict_box(d, c->nworse ? ML_C_FAIL : ML_C_PASS, t);
    section(d, "Metrics");
    size_t done = 0;
    for (;;) {
        const double y0 = d->y;
        const size_t n = ml_draw_compare_table(d->cr, MARGIN, y0, PAGE_W - 2 * MARGIN, BOTTOM - y0, c, done, 7.5);
        done += n;
        d->y += (double)(n + 1) * 7.5 * 1.45 + 10;
        if (done >= c->nrows || (n == 0 && y0 <= TOP))
            break; /* all drawn (or not one row fits a whole page: nothing more to do) */
        new_page(d);
    }
    notes(d, c->notes, c->nnotes);
    if ((j->a && j->a->nbins) || (j->b && j->b->nbins)) {
        const char *title = d->title;
        d->title = "Comparison record: spectra";
        new_page(d);
        if (draw_pictures)
            ml_draw_spectrum(d->cr, MARGIN, 80, PAGE_W - 2 * MARGIN, 0.62 * (PAGE_W - 2 * MARGIN), j->a, j->b,
                             "Spectra, A and B");
        d->title = title;
    }
}

/* ---- both records: count the pages, then draw ---- */

static cairo_status_t discard(void *closure, const unsigned char *data, unsigned int length)
{
    (void)closure;
    (void)data;
    (void)length;
    return CAIRO_STATUS_SUCCESS;
}

typedef void (*layout_fn)(doc *d, const void *job, bool draw_pictures);

static ml_status record(FILE *f, const char *title, layout_fn layout, const void *job, const char *when,
                        const char *version)
{
    int pages = 0;
    for (int pass = 0; pass < 2; pass++) {
        cairo_surface_t *s = pass == 0 ? cairo_pdf_surface_create_for_stream(discard, NULL, PAGE_W, PAGE_H)
                                       : cairo_pdf_surface_create_for_stream(ml_plot_write_file, f, PAGE_W, PAGE_H);
        if (cairo_surface_status(s) != CAIRO_STATUS_SUCCESS) {
            cairo_surface_destroy(s);
            return ML_EIO;
        }
        doc d = {.cr = cairo_create(s), .title = title, .version = version, .when = when, .page = 1,
                 .pages = pages};
        layout(&d, job, pass == 1);
        pages = d.page;
        cairo_destroy(d.cr);
        cairo_surface_finish(s);
        const cairo_status_t st = cairo_surface_status(s);
        cairo_surface_destroy(s);
        if (st != CAIRO_STATUS_SUCCESS)
            return ML_EIO;
    }
    return fflush(f) == 0 && !ferror(f) ? ML_OK : ML_EIO;
}

static void measure_layout_v(doc *d, const void *job, bool draw_pictures)
{
    measure_layout(d, job, draw_pictures);
}

static void compare_layout_v(doc *d, const void *job, bool draw_pictures)
{
    compare_layout(d, job, draw_pictures);
}

ml_status ml_report_write_pdf(FILE *f, const ml_report *r, const ml_plot_data *p, const char *cmdline,
                              const char *when, const char *version)
{
    if (f == NULL || r == NULL)
        return ML_EINVAL;
    const measure_job j = {r, p, cmdline};
    return record(f, "Measurement record", measure_layout_v, &j, when, version);
}

ml_status ml_compare_write_pdf(FILE *f, const ml_comparison *c, const ml_plot_data *a, const ml_plot_data *b,
                               const char *cmdline, const char *when, const char *version)
{
    if (f == NULL || c == NULL)
        return ML_EINVAL;
    const compare_job j = {c, a, b, cmdline};
    return record(f, "Comparison record", compare_layout_v, &j, when, version);
}
