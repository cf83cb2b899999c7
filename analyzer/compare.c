/* The compare command: two recordings (or saved JSON reports) metric by metric, with verdicts.
 * SPDX-License-Identifier: MIT
 *
 * Verdict of one metric (README "Comparing two measurements"): the difference d = B - A is
 * "same" when |d| <= U + T, where U = sqrt(uA^2 + uB^2) combines the two 95 % half-widths
 * (analyzer/uncertainty.h; 0 for a side without an estimate) with a floor of half the displayed
 * resolution, and T is the --tolerance for that metric (default 0). Otherwise the registry's
 * direction decides: lower-is-better metrics are "better" when d < 0, higher-is-better ones when
 * d > 0, "worse" the other way. A metric without a direction that a profile limits is judged by
 * its distance to the profile's target (the middle of a min..max range, else the one limit);
 * without a target it is "changed". A side that is only a bound (io/report.h: "< 0.30") is an
 * interval open on one side: B - A then lies in an interval, and the verdict is decided only when
 * that interval lies wholly beyond +-(U + T) (B is larger, or smaller, for certain); it is
 * "same" when the interval lies wholly within +-(U + T), or the two are bounds of one direction
 * within U + T of each other (nothing tells them apart); otherwise it is "undecided", which
 * never counts as worse. Exit status 1 when a counted metric is "worse":
 * every metric without --limits, only the limited ones with a profile. Two captures of different
 * kinds (audio against I/Q, ...) are refused (exit 2) unless --mixed-kinds is given.
 */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analyzer/cli.h"
#include "analyzer/commands.h"
#include "analyzer/finish.h"
#include "analyzer/limits.h"
#include "analyzer/measure.h"
#include "analyzer/plots.h"
#include "analyzer/registry.h"
#include "analyzer/saved.h"
#include "io/compare.h"
#include "io/printable.h"

#define MAX_TOLERANCES 64

typedef struct {
    char metric[64]; /* full dotted name, "" = every metric */
    double value;
} tolerance;

static void compare_usage(FILE *f)
{
    fprintf(f,
            "usage: modlens compare [options] A B\n"
            "\n"
            "Compares two measurements of the same kind of signal, metric by metric: B against A (for\n"
            "example a build after a change against the one before). A and B are recordings, measured\n"
            "here with the same options, or JSON reports saved by 'modlens measure --format json'.\n"
            "\n"
            "  --tolerance X             a difference within the measurement uncertainty plus X (in the\n"
            "                            metric's unit) counts as the same, for every metric\n"
            "  --tolerance METRIC=X      the same for one metric only (repeatable; overrides X)\n"
            "  --mixed-kinds             compare A and B even when they hold different kinds of signal\n"
            "                            (audio, if, iq): only the figures both have (default: refused)\n"
            "  --limits FILE             check A and B against a profile; only its metrics then decide\n"
            "                            the exit status; modulation peaks are judged by their distance\n"
            "                            to the profile's limit\n"
            "  --format text|json|csv    comparison format (default text)\n"
            "  --output FILE             write the comparison to FILE (default standard output)\n"
            "  --plot FILE               A and B spectra overlaid and the metric table (.png .svg .pdf)\n"
            "  --report FILE.pdf         a PDF record of the comparison\n"
            "  measure's analysis options (see 'modlens measure --help') apply to both recordings.\n"
            "\n"
            "Exit status: 0 B is not worse than A beyond the uncertainty (plus tolerance) on any compared\n"
            "metric, 1 it is worse on at least one, 2 usage or input error.\n\n%s",
            ml_cli_safety);
}

/* Moves --tolerance arguments out of argv into tol[] and --mixed-kinds into *mixed_kinds; returns
 * the new argc or -1 (error printed). */
static int take_tolerances(int argc, char **argv, tolerance *tol, size_t *ntol, bool *mixed_kinds)
{
    int out = 0;
    *ntol = 0;
    *mixed_kinds = false;
    for (int i = 0; i < argc; i++) {
        const char *val = NULL;
        if (i > 0 && strcmp(argv[i], "--mixed-kinds") == 0) {
            *mixed_kinds = true;
            continue;
        }
        if (strcmp(argv[i], "--tolerance") == 0) {
            if (i + 1 >= argc) {
                ml_cli_error("--tolerance needs a value (try 'modlens compare --help')");
                return -1;
            }
            val = argv[++i];
        } else if (strncmp(argv[i], "--tolerance=", 12) == 0) {
            val = argv[i] + 12;
        } else {
            argv[out++] = argv[i];
            continue;
        }
        if (*ntol >= MAX_TOLERANCES) {
            ml_cli_error("--tolerance: at most %d may be given", MAX_TOLERANCES);
            return -1;
        }
        tolerance *t = &tol[(*ntol)++];
        t->metric[0] = '\0';
        const char *eq = strchr(val, '=');
        const char *num = val;
        if (eq) {
            char name[64];
            int amb = 0;
            const ml_metric_def *d = eq - val < (ptrdiff_t)sizeof name
                                         ? (snprintf(name, sizeof name, "%.*s", (int)(eq - val), val),
                                            ml_registry_lookup(name, &amb))
                                         : (snprintf(name, sizeof name, "%.40s...", val), NULL);
            if (d == NULL) {
                ml_cli_error("--tolerance: '%s' is %s metric", name, amb ? "an ambiguous" : "not a known");
                return -1;
            }
            snprintf(t->metric, sizeof t->metric, "%s", d->name);
            num = eq + 1;
        }
        if (!ml_cli_number(num, &t->value) || t->value < 0 || t->value > 1e15) {
            ml_cli_error("--tolerance: '%s' is not a number 0..1e15 (or METRIC=number)", val);
            return -1;
        }
    }
    return out;
}

static double tolerance_for(const tolerance *tol, size_t ntol, const char *metric)
{
    double all = 0;
    for (size_t i = 0; i < ntol; i++)
        if (tol[i].metric[0] == '\0')
            all = tol[i].value;
    for (size_t i = 0; i < ntol; i++)
        if (strcmp(tol[i].metric, metric) == 0)
            return tol[i].value;
    return all;
}

typedef enum { NOT_JSON, JSON_TEXT, JSON_BOM } json_start;

/* How the file starts: its first non-blank byte opens a JSON object or array (JSON_TEXT), or a
 * UTF-8 byte-order mark comes before one (JSON_BOM); else NOT_JSON (a recording). */
static json_start starts_like_json(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        return NOT_JSON;
    unsigned char bom[3];
    const bool has_bom = fread(bom, 1, 3, f) == 3 && bom[0] == 0xEF && bom[1] == 0xBB && bom[2] == 0xBF;
    if (!has_bom)
        rewind(f);
    int c;
    do
        c = fgetc(f);
    while (c == ' ' || c == '\t' || c == '\r' || c == '\n');
    fclose(f);
    if (c != '{' && c != '[')
        return NOT_JSON;
    return has_bom ? JSON_BOM : JSON_TEXT;
}

/* One side: a saved report (limits re-applied) or a fresh measurement. */
static int load_side(ml_measure_opts *o, const char *path, ml_report *rep, ml_plot_data *plot, bool *measured)
{
    *measured = false;
    const json_start js = starts_like_json(path);
    if (js == JSON_BOM)
        return ml_cli_error("%s: not a modlens JSON report: it starts with a UTF-8 byte-order mark (a saved "
                            "report has none)",
                            path);
    if (js == JSON_TEXT) {
        char err[512];
        ml_status st = ml_saved_read(path, rep, err, sizeof err); /* typed by the registry */
        if (st != ML_OK)
            return ml_cli_error("%s: %s", path, err);
        if (o->out.limits)
            ml_limits_apply(o->out.limits, rep);
        return 0;
    }
    ml_measure_opts one = *o;
    one.in.path = path;
    one.out.plot = plot;
    *measured = true;
    const int rc = ml_measure_analyse(&one, rep);
    if (rc == 0 && o->out.limits)
        ml_limits_apply(o->out.limits, rep);
    return rc;
}

static const ml_limit *limit_for(const ml_limits *l, const char *metric)
{
    for (size_t i = 0; l && i < l->n; i++)
        if (strcmp(l->items[i].metric, metric) == 0)
            return &l->items[i];
    return NULL;
}

/* The range [lo, hi] of the true value a side's value allows: a point, or open on one side for a
 * bound; an upper bound in % (the bounded figures in % are ratios of powers: THD, THD+N) reaches
 * down to 0. */
static void side_range(const ml_metric_def *d, double v, ml_bound b, double *lo, double *hi)
{
    *lo = b == ML_BOUND_UPPER ? (strcmp(d->unit, "%") == 0 ? 0.0 : -INFINITY) : v;
    *hi = b == ML_BOUND_LOWER ? INFINITY : v;
}

static void judge(ml_compare_row *r, const ml_metric_def *d, const ml_limit *lim, double u, double tol)
{
    if (!r->a_valid || !r->b_valid) {
        r->verdict = "n/a";
        return;
    }
    r->difference = r->b - r->a;
    const double floor_u = 0.5 * pow(10.0, -r->decimals); /* below the displayed resolution */
    r->uncertainty = fmax(u, floor_u) + tol;
    if (r->a_bound != ML_BOUND_NONE || r->b_bound != ML_BOUND_NONE) {
        /* B - A lies in [b_lo - a_hi, b_hi - a_lo]: decided only when wholly beyond the uncertainty */
        double alo, ahi, blo, bhi;
        side_range(d, r->a, r->a_bound, &alo, &ahi);
        side_range(d, r->b, r->b_bound, &blo, &bhi);
        const double dlo = blo - ahi, dhi = bhi - alo;
        const int sign = dlo > r->uncertainty ? 1 : dhi < -r->uncertainty ? -1 : 0;
        if (sign == 0 && ((dlo >= -r->uncertainty && dhi <= r->uncertainty)
                          || (r->a_bound == r->b_bound && fabs(r->difference) <= r->uncertainty)))
            r->verdict = "same"; /* every difference allowed is within U + T, or bounds alike */
        else if (sign == 0 || d->better == ML_BETTER_NONE)
            r->verdict = sign == 0 ? "undecided" : "changed";
        else
            r->verdict = (sign < 0) == (d->better == ML_BETTER_LOWER) ? "better" : "worse";
        return;
    }
    if (fabs(r->difference) <= r->uncertainty) {
        r->verdict = "same";
        return;
    }
    if (d->better == ML_BETTER_LOWER) {
        r->verdict = r->difference < 0 ? "better" : "worse";
    } else if (d->better == ML_BETTER_HIGHER) {
        r->verdict = r->difference > 0 ? "better" : "worse";
    } else if (lim && (lim->has_min || lim->has_max)) {
        const double target = lim->has_min && lim->has_max ? 0.5 * (lim->min + lim->max)
                              : lim->has_max                ? lim->max
                                                            : lim->min;
        const double da = fabs(r->a - target), db = fabs(r->b - target);
        r->verdict = fabs(db - da) <= r->uncertainty ? "same" : db < da ? "better" : "worse";
    } else {
        r->verdict = "changed";
    }
}

static void fill_limit(ml_compare_row *row, const ml_report *a, const ml_report *b)
{
    for (size_t i = 0; i < a->nchecks; i++)
        if (strcmp(a->checks[i].metric, row->metric) == 0) {
            const ml_check *c = &a->checks[i];
            row->has_limit = true;
            row->a_pass = c->pass;
            if (c->has_min && c->has_max)
                snprintf(row->limit, sizeof row->limit, "%.*f..%.*f", c->decimals, c->min, c->decimals,
                         c->max);
            else if (c->has_min)
                snprintf(row->limit, sizeof row->limit, ">= %.*f", c->decimals, c->min);
            else
                snprintf(row->limit, sizeof row->limit, "<= %.*f", c->decimals, c->max);
        }
    for (size_t i = 0; i < b->nchecks; i++)
        if (strcmp(b->checks[i].metric, row->metric) == 0)
            row->b_pass = b->checks[i].pass;
}

static void add_row(ml_comparison *c, const ml_measure_opts *o, const char *name, const tolerance *tol,
                    size_t ntol)
{
    const ml_metric_def *d = ml_registry_lookup(name, NULL);
    if (d == NULL || strcmp(d->name, name) != 0 || c->nrows >= ML_REPORT_MAX_METRICS)
        return;
    for (size_t i = 0; i < c->nrows; i++)
        if (strcmp(c->rows[i].metric, name) == 0)
            return;
    ml_compare_row *r = &c->rows[c->nrows++];
    memset(r, 0, sizeof *r);
    snprintf(r->metric, sizeof r->metric, "%s", name);
    r->unit = d->unit;
    r->decimals = d->decimals;
    const ml_metric *ma = NULL, *mb = NULL;
    for (size_t i = 0; i < c->a->nmetrics; i++)
        if (strcmp(c->a->metrics[i].name, name) == 0)
            ma = &c->a->metrics[i];
    for (size_t i = 0; i < c->b->nmetrics; i++)
        if (strcmp(c->b->metrics[i].name, name) == 0)
            mb = &c->b->metrics[i];
    r->a_valid = ma && ma->valid;
    r->b_valid = mb && mb->valid;
    r->a = r->a_valid ? ma->value : 0;
    r->b = r->b_valid ? mb->value : 0;
    r->a_bound = r->a_valid ? ma->bound : ML_BOUND_NONE;
    r->b_bound = r->b_valid ? mb->bound : ML_BOUND_NONE;
    const double ua = r->a_valid && ma->has_u ? ma->u : 0, ub = r->b_valid && mb->has_u ? mb->u : 0;
    const ml_limit *lim = limit_for(o->out.limits, name);
    judge(r, d, lim, sqrt(ua * ua + ub * ub), tolerance_for(tol, ntol, name));
    /* a figure one side does not have at all is not compared: it never counts (and a note names it) */
    r->counted = ma != NULL && mb != NULL && (o->out.limits ? lim != NULL : true);
    if (r->counted && strcmp(r->verdict, "worse") == 0)
        c->nworse++;
    fill_limit(r, c->a, c->b);
}

static void note(ml_comparison *c, const char *fmt, const char *a, const char *b)
{
    if (c->nnotes >= ML_REPORT_MAX_NOTES)
        return;
    char buf[2200];
    snprintf(buf, sizeof buf, fmt, a, b);
    snprintf(c->notes[c->nnotes++], sizeof c->notes[0], "%.255s", buf);
}

/* The metrics one side has and the other lacks altogether, named in a note per side (a report
 * that lost a section must not read as "not worse on any"). */
static void absent_notes(ml_comparison *c)
{
    for (int side = 0; side < 2; side++) {
        const ml_report *other = side == 0 ? c->a : c->b;
        char names[ML_REPORT_NOTE_LEN] = "";
        size_t n = 0, shown = 0;
        for (size_t i = 0; i < c->nrows; i++) {
            if (ml_report_find(other, c->rows[i].metric) != NULL)
                continue;
            n++;
            const size_t k = strlen(names);
            if (k + strlen(c->rows[i].metric) + 2 < sizeof names - 64) {
                snprintf(names + k, sizeof names - k, "%s%s", k ? ", " : "", c->rows[i].metric);
                shown++;
            }
        }
        if (n == 0 || c->nnotes >= ML_REPORT_MAX_NOTES)
            continue;
        char more[32] = "";
        if (shown < n)
            snprintf(more, sizeof more, " and %zu more", n - shown);
        snprintf(c->notes[c->nnotes++], sizeof c->notes[0], "not compared, %s lacks %zu metric%s: %s%s",
                 side == 0 ? "A" : "B", n, n == 1 ? "" : "s", names, more);
    }
}

/* With a card profile in force on a side: which of its figures the card limits (analyzer/bench.h). */
static void card_notes(ml_comparison *c, const ml_report *r, const char *side)
{
    if (!r->card_checked)
        return;
    char names[ML_REPORT_NOTE_LEN] = "";
    for (size_t i = 0; i < r->ncard_limited; i++) {
        const size_t n = strlen(names);
        snprintf(names + n, sizeof names - n, "%s%s", n ? ", " : "", r->card_limited[i]);
    }
    note(c, "%s: card-limited (within 10 dB of the card's own floor): %s", side, names[0] ? names : "none");
}

/* The --tolerance values of a run, and --mixed-kinds. */
typedef struct {
    tolerance item[MAX_TOLERANCES];
    size_t n;
    bool mixed_kinds;
} tolerances;

/* compare A B: both sides measured or read back, the rows and their notes, then the finish step. */
static int compare_body(ml_measure_opts *o, ml_finish_files *files, const char *cmdline, void *ctx)
{
    const tolerances *tol = ctx;
    static ml_report ra, rb;
    static ml_comparison cmp;
    ml_plot_data pa, pb;
    ml_plot_data_init(&pa);
    ml_plot_data_init(&pb);
    bool ma = false, mb = false;
    int rc = load_side(o, o->in.path, &ra, &pa, &ma);
    if (rc == 0)
        rc = load_side(o, o->input2, &rb, &pb, &mb);
    if (rc == 0 && strcmp(ra.kind, rb.kind) != 0 && !tol->mixed_kinds)
        rc = ml_cli_error("%s: B holds %s, A (%s) %s: a comparison of different kinds of signal says nothing "
                          "(give --mixed-kinds to compare the figures both have)",
                          o->input2, rb.kind, o->in.path, ra.kind);
    if (rc != 0)
        goto done;
    memset(&cmp, 0, sizeof cmp);
    cmp.a = &ra;
    cmp.b = &rb;
    if (o->out.limits_path)
        ml_printable(cmp.limits_path, sizeof cmp.limits_path, o->out.limits_path);
    for (size_t i = 0; i < ra.nmetrics; i++)
        add_row(&cmp, o, ra.metrics[i].name, tol->item, tol->n);
    for (size_t i = 0; i < rb.nmetrics; i++)
        add_row(&cmp, o, rb.metrics[i].name, tol->item, tol->n);
    absent_notes(&cmp);
    if (strcmp(ra.kind, rb.kind) != 0)
        note(&cmp, "A was measured as %s and B as %s: only the metrics both have are compared", ra.kind,
             rb.kind);
    if (ra.u_blocks < 3)
        note(
            &cmp,
            "%s%s is too short for an uncertainty estimate (fewer than 3 blocks): its figures count as exact",
            "A", "");
    if (rb.u_blocks < 3)
        note(
            &cmp,
            "%s%s is too short for an uncertainty estimate (fewer than 3 blocks): its figures count as exact",
            "B", "");
    card_notes(&cmp, &ra, "A");
    card_notes(&cmp, &rb, "B");
    if ((o->out.plot_path || o->out.report_path) && (!ma || !mb))
        note(&cmp, "%s%s read from a saved report: no spectrum to draw", !ma ? "A" : "",
             !mb ? (!ma ? " and B" : "B") : "");
    rc = ml_finish(&(ml_finish_job){.out = &o->out, .files = files, .comparison = &cmp,
                                    .plot = ma ? &pa : NULL, .plot_b = mb ? &pb : NULL, .cmdline = cmdline});
done:
    ml_plot_data_free(&pa);
    ml_plot_data_free(&pb);
    return rc;
}

int ml_cmd_compare(int argc, char **argv)
{
    for (int i = 1; i < argc; i++)
        if (strcmp(argv[i], "--help") == 0 || strcmp(argv[i], "-h") == 0) {
            compare_usage(stdout);
            return ML_EXIT_OK;
        }
    static tolerances tol;
    char *cmdline = ml_plots_cmdline(argc, argv); /* before the tolerances leave argv */
    argc = take_tolerances(argc, argv, tol.item, &tol.n, &tol.mixed_kinds);
    if (argc < 0) {
        free(cmdline);
        return ML_EXIT_USAGE;
    }
    /* --plot X --output X, or any output naming an input: refused before any work */
    return ml_measure_command(argc, argv, 2, cmdline, compare_body, &tol);
}
