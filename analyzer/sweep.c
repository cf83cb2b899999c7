/* The sweep command: a stepped-tone recording (or a plan played on a device) -> one point per
 * step: frequency, level, level re the reference step, THD, THD+N (and for if/iq the modulation
 * index, the tone's modulation level and the envelope THD), grouped by level -> report, limits
 * ([response]), pictures.
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analyzer/cli.h"
#include "analyzer/commands.h"
#include "analyzer/finish.h"
#include "analyzer/plots.h"
#include "analyzer/sweep.h"
#include "analyzer/values.h"
#include "dsp/sweep.h"

#define GROUP_TOL_PCT 2.0 /* a frequency met again within this (or 2 Hz) starts a new group: */
#define GROUP_TOL_HZ 2.0  /* the step search's own tolerances (dsp/steps.h defaults)          */

static void sweep_usage(FILE *f)
{
    fprintf(
        f,
        "usage: modlens sweep [options] FILE\n"
        "       modlens sweep --device NAME|INDEX [plan options] [options]\n"
        "\n"
        "Frequency response and distortion from a stepped-tone recording: finds the steps by itself\n"
        "(steady tones separated by a pause or a change of frequency or level) and reports one point\n"
        "per step: frequency, level, level re the reference step (dB), THD and THD+N; for an IF or\n"
        "I/Q recording the steps are those of the demodulated audio, with each step's modulation\n"
        "index, its tone's modulation level and the envelope THD. Steps at several levels form one\n"
        "group per level, each with its own reference. A file made by 'modlens tone --freqs ...'\n"
        "is read back with no options.\n"
        "\n"
        "sweep:\n"
        "  --reference-hz HZ         the reference step is the one nearest HZ (default 1000)\n"
        "input:\n"
        "  --kind auto|audio|if|iq   what the recording holds (as 'modlens measure'; give --kind\n"
        "                            audio when three equal steps in the first 4 s could look like\n"
        "                            a carrier with sidebands)\n"
        "  --channel N               channel to analyse, 1-based (default 1; for iq the I channel)\n"
        "  --swap-iq                 the I/Q channels are Q then I\n"
        "  --start S                 skip S seconds at the start (default 0)\n"
        "  --duration S              analyse S seconds (default: to the end)\n"
        "analysis:\n"
        "  --band LO:HI              THD and THD+N band in Hz (default 20:20000; widened to hold a\n"
        "                            step's tone)\n"
        "  --harmonics N             highest harmonic order in THD, 2..%d (default 10)\n"
        "  --mains 50|60             mains frequency for hum (default: detected)\n"
        "  --window NAME             hft248d (default), hft144d, blackman-harris, hann; a low\n"
        "                            step takes the next window of fewer terms that resolves it\n"
        "  --carrier HZ, --bandwidth HZ, --carrier-reference FILE, --peak-hold-ms MS\n"
        "                            if/iq, as for 'modlens measure'\n"
        "play and measure (no FILE):\n"
        "  --device NAME|INDEX       plays the steps on this device's output and captures its input;\n"
        "                            the round-trip latency is measured as 'modlens live\n"
        "                            --play-tone' measures it\n"
        "  --play-device NAME|INDEX  play on this output instead (same audio system); also\n"
        "                            spelled --output-device\n"
        "  --rate HZ                 sample rate (default: the device's)\n"
        "  --channels N              channels to capture (default: as the kind needs)\n"
        "  --save FILE.wav           keep the capture (32-bit float WAV); 'modlens sweep FILE.wav'\n"
        "                            reads it again\n"
        "  --freqs LIST              the frequencies in Hz (comma-separated), or a set: octaves\n"
        "                            (31.5 Hz .. 16 kHz, the default), thirds (20 Hz .. 20 kHz),\n"
        "                            proof (50, 100, 400, 1000, 5000, 7500, 10000 Hz)\n"
        "  --levels LIST             levels in dBFS, one sweep per level (default -20)\n"
        "  --step-seconds S          each tone's length (default 1)\n"
        "  --pause-seconds S         the silence after each tone (default 0.25)\n"
        "checks and output:\n"
        "  --limits FILE             limits profile (INI): <metric>_min / <metric>_max, and\n"
        "                            [response] with range_hz, window_db and thd_max_pct per band\n"
        "  --format text|json|csv    report format (default text)\n"
        "  --output FILE             write the report to FILE (default standard output)\n"
        "  --plot FILE               response (dB re the reference) and THD against frequency,\n"
        "                            one curve per level (.png .svg .pdf)\n"
        "  --report FILE.pdf         a PDF record: what was measured, the points, the pictures\n"
        "\n"
        "Exit status: 0 all checks pass (or no limits), 1 a check fails, 2 usage, device or input\n"
        "error.\n"
        "\n"
        "Before feeding a transmitter's audio input with --device, set the level with the\n"
        "transmitter into a dummy load.\n\n%s",
        ML_MAX_HARMONICS, ml_cli_safety);
}

enum { O_REFERENCE = ML_OPT_ID_OWN, O_FREQS, O_LEVELS, O_STEP_S, O_PAUSE_S };

/* Options and the FILE; 0, -1 after --help, or an exit status. */
static int sweep_parse(int argc, char **argv, ml_sweep_opts *o)
{
    static const struct option own[] = {
        {"reference-hz", required_argument, NULL, O_REFERENCE}, {"freqs", required_argument, NULL, O_FREQS},
        {"levels", required_argument, NULL, O_LEVELS},
        {"step-seconds", required_argument, NULL, O_STEP_S},
        {"pause-seconds", required_argument, NULL, O_PAUSE_S}, {"help", no_argument, NULL, 'h'},
        {NULL, 0, NULL, 0}};
    struct option longopts[64];
    ml_options_table(ML_OPTS_SOURCE | ML_OPTS_SEGMENT | ML_OPTS_DEVICE | ML_OPTS_CAPTURE | ML_OPTS_AUDIO
                         | ML_OPTS_MODULATION | ML_OPTS_REPORT,
                     own, longopts, sizeof longopts / sizeof *longopts);
    memset(o, 0, sizeof *o);
    o->m.in = ml_input_opts_default();
    o->m.an = ml_analysis_opts_default();
    o->m.out = ml_output_opts_default();
    o->reference_hz = 1000.0;
    o->plan = ml_plan_opts_default();
    bool device_opt = false;
    opterr = 0;
    optind = 1;
    int ch, idx = -1;
    while ((ch = getopt_long(argc, argv, ":h", longopts, &idx)) != -1) {
        const char *name = idx >= 0 ? longopts[idx].name : "";
        idx = -1;
        if (ch >= ML_OPT_ID_FIRST && ch < ML_OPT_ID_OWN) {
            if (strcmp(name, "play-tone") == 0)
                return ml_cli_error("--play-tone belongs to 'modlens live': sweep plays its own steps with "
                                    "--device");
            if (strcmp(name, "tone") == 0)
                return ml_cli_error("--tone: sweep takes each step's own frequency as the tone");
            const int rc = ml_options_apply(ch, optarg, &o->m.in, &o->m.an, &o->m.out);
            if (rc != 0)
                return rc;
            if (ml_options_group(ch) & (ML_OPTS_DEVICE | ML_OPTS_CAPTURE))
                device_opt = device_opt || strcmp(name, "seconds") != 0;
            if (strcmp(name, "seconds") == 0)
                return ml_cli_error("--seconds: a sweep lasts as long as its plan (--freqs, --levels, "
                                    "--step-seconds, --pause-seconds)");
            continue;
        }
        double v;
        switch (ch) {
        case O_REFERENCE:
            if (!ml_cli_number(optarg, &v) || !(v > 0) || v > 1e9)
                return ml_cli_error("--reference-hz: '%s' is not a frequency in Hz > 0", optarg);
            o->reference_hz = v;
            break;
        case O_FREQS: case O_LEVELS: case O_STEP_S: case O_PAUSE_S: {
            const int rc = ml_plan_apply(&o->plan, name, optarg);
            if (rc != 0)
                return rc;
            break;
        }
        case 'h': sweep_usage(stdout); return -1;
        case ':': case '?': return ml_cli_bad_option(ch, argv, "sweep");
        default: return ml_cli_error("sweep: unhandled option");
        }
    }
    o->m.in.live = o->m.in.device != NULL;
    if (o->m.in.live) {
        if (optind < argc)
            return ml_cli_error("sweep --device plays and measures: no FILE; unexpected '%s'", argv[optind]);
        o->m.in.path = "live";
        if (o->m.in.output_device == NULL)
            o->m.in.output_device = o->m.in.device; /* the device's own output */
        return 0;
    }
    if (device_opt)
        return ml_cli_error("--rate, --channels, --save and --output-device play and measure with --device; "
                            "a FILE is read as it is");
    if (o->plan.given)
        return ml_cli_error("--freqs, --levels, --step-seconds and --pause-seconds play a plan with "
                            "--device; a FILE's steps are found by themselves");
    if (optind != argc - 1)
        return ml_cli_error(optind >= argc ? "sweep needs one input FILE, or --device NAME to play and "
                                             "measure (try 'modlens sweep --help')"
                                           : "sweep takes one input FILE; extra argument '%s'",
                            argv[argc - 1]);
    o->m.in.path = argv[optind];
    return 0;
}

/* ---- the report -------------------------------------------------------------------------- */

/* Adds the figure leaf with value v (NAN: not measured) and the state of fg (bound, qualifier
 * or reason), the value already converted to the figure's unit. */
static ml_metric *add_figure(ml_report_point *p, const char *leaf, double v, const ml_figure *fg,
                             const char *why_not)
{
    const ml_point_def *d = ml_values_point_def(leaf);
    ml_metric *m = ml_report_point_add(p, leaf, d->unit, d->decimals, v);
    if (m == NULL)
        return NULL;
    if (!m->valid) {
        const char *why = why_not ? why_not : fg && fg->why != ML_WHY_OK ? ml_audio_why_text(fg->why) : NULL;
        ml_metric_missing(m, "%s", why ? why : "not measured");
    } else if (fg && fg->state == ML_FIG_UPPER) {
        ml_metric_bound(m, ML_BOUND_UPPER, "%s", ml_audio_why_text(fg->why));
    } else if (fg && fg->state == ML_FIG_LOWER) {
        ml_metric_bound(m, ML_BOUND_LOWER, "%s", ml_audio_why_text(fg->why));
    } else if (fg && fg->why != ML_WHY_OK) {
        ml_metric_qualify(m, "%s", ml_audio_why_text(fg->why));
    }
    return m;
}

/* A power ratio figure in percent (100 sqrt), NAN when not measured. */
static double pct_of(const ml_figure *fg)
{
    return fg->state == ML_FIG_NONE ? NAN : 100.0 * sqrt(fg->value);
}

/* The level of a step in dB: audio dBFS, if/iq dB re 100 % modulation (10 lg(P / 0.5)). */
static double level_db(const ml_sweep_meas *m)
{
    const bool ok = m->analysed && m->level.state != ML_FIG_NONE && m->level.value > 0;
    return ok ? 10 * log10(m->level.value / 0.5) : NAN;
}

#define MAX_GROUPS 256 /* groups reported (a plan has at most 8 levels) */

typedef struct {
    size_t n, ngroups;
    size_t *group;            /* per step                                                */
    double *freq, *lev, *rel; /* per step: frequency, level (dB), level re the reference */
    size_t ref[MAX_GROUPS];   /* per group: its reference step (SIZE_MAX: none)          */
} sweep_points;

/* Per group: its reference and the band edges (ML_OK crossing, ML_ENOSIGNAL beyond, -1 none). */
typedef struct {
    size_t ref;
    double lo_hz, hi_hz;
    int lo_st, hi_st;
    double thd_max_pct;
    ml_bound thd_max_bound;
} group_figs;

/* The edges of group g from the steps in it, sorted by frequency. */
static void group_edges(const sweep_points *sp, size_t g, group_figs *gf)
{
    static size_t idx[ML_SWEEP_MAX_STEPS];
    size_t n = 0;
    for (size_t i = 0; i < sp->n; i++)
        if (sp->group[i] == g)
            idx[n++] = i;
    /* insertion sort by frequency (a group is a few dozen steps) */
    for (size_t i = 1; i < n; i++)
        for (size_t j = i; j > 0 && sp->freq[idx[j - 1]] > sp->freq[idx[j]]; j--) {
            const size_t t = idx[j];
            idx[j] = idx[j - 1];
            idx[j - 1] = t;
        }
    static double f[ML_SWEEP_MAX_STEPS], r[ML_SWEEP_MAX_STEPS];
    size_t ref = SIZE_MAX, k = 0;
    for (size_t i = 0; i < n; i++) {
        if (i > 0 && !(sp->freq[idx[i]] > f[k - 1]))
            continue; /* the same frequency twice in one group: the first stays */
        f[k] = sp->freq[idx[i]];
        r[k] = sp->rel[idx[i]];
        if (idx[i] == gf->ref)
            ref = k;
        k++;
    }
    gf->lo_st = gf->hi_st = -1;
    gf->lo_hz = gf->hi_hz = NAN;
    if (ref == SIZE_MAX)
        return;
    gf->lo_st = ml_sweep_edge(f, r, k, ref, -1, ML_SWEEP_DROP_DB, &gf->lo_hz);
    gf->hi_st = ml_sweep_edge(f, r, k, ref, +1, ML_SWEEP_DROP_DB, &gf->hi_hz);
}

/* The point figures of step i into the series. */
static void add_point(const ml_sweep_run *r, const sweep_points *sp, size_t i, ml_report_series *ser)
{
    const ml_sweep_meas *m = &r->meas[i];
    const double rate = r->seg->info->rate_hz;
    ml_report_point *p = ml_report_series_add(ser, (double)(r->seg->first + m->first) / rate,
                                              (double)m->nframes / rate);
    if (p == NULL)
        return;
    const bool mod = r->kind != ML_KIND_AUDIO;
    const char *why = m->analysed ? NULL : m->why_not;
    add_figure(p, "group", (double)sp->group[i], NULL, NULL);
    add_figure(p, "frequency_hz", m->frequency_hz, NULL, NULL);
    const double lv = m->analysed && m->level.state != ML_FIG_NONE ? m->level.value : NAN;
    if (mod)
        add_figure(p, "level_pct", 100.0 * sqrt(2.0 * lv), &m->level, why);
    else
        add_figure(p, "level_dbfs", sp->lev[i], &m->level, why);
    ml_metric *rel = add_figure(p, "relative_db", sp->rel[i], &m->level, why);
    if (rel && !rel->valid && isfinite(sp->lev[i]))
        ml_metric_missing(rel, "no reference step measured in this group");
    if (mod) {
        add_figure(p, "index", m->analysed ? m->index : NAN, NULL, why ? why : "not measured");
        add_figure(p, "carrier_shift_pct", m->analysed ? m->carrier_shift_pct : NAN, NULL,
                   why ? why : "no unmodulated carrier: C is the mean envelope");
    }
    const double thd = m->analysed ? pct_of(&m->thd) : NAN;
    add_figure(p, "thd_pct", thd, &m->thd, why);
    if (mod)
        add_figure(p, "envelope_thd_pct", thd, &m->thd, why);
    add_figure(p, "thdn_pct", m->analysed ? pct_of(&m->thdn) : NAN, &m->thdn, why);
}

/* An edge as a metric: the crossing, or a bound when the response holds beyond the last point. */
static void add_edge(ml_report *rep, const char *name, int st, double hz, bool lower)
{
    ml_measure_add(rep, name, st == ML_OK || st == ML_ENOSIGNAL ? hz : NAN);
    if (st == ML_ENOSIGNAL && isfinite(hz))
        ml_report_bound(rep, name, lower ? ML_BOUND_UPPER : ML_BOUND_LOWER,
                        "the response holds within %.0f dB to the %s step", ML_SWEEP_DROP_DB,
                        lower ? "lowest" : "highest");
    else if (st != ML_OK)
        ml_report_unmeasured(rep, name, st == -1 ? "no reference step" : "no step %s the reference",
                             lower ? "below" : "above");
}

/* The groups' table (sweep.groups) and the first group's figures as metrics. */
static void add_groups(const ml_sweep_run *r, const sweep_points *sp, const group_figs *gf, ml_report *rep)
{
    const bool mod = r->kind != ML_KIND_AUDIO;
    ml_table *t = &rep->tables[rep->ntables++];
    snprintf(t->path, sizeof t->path, "sweep.groups");
    snprintf(t->title, sizeof t->title, "groups (one per level swept)");
    static const char *const cols[2][6] = {
        {"group", "level_dbfs", "reference_hz", "lower_3db_hz", "upper_3db_hz", "thd_max_pct"},
        {"group", "level_pct", "reference_hz", "lower_3db_hz", "upper_3db_hz", "thd_max_pct"}};
    static const int dec[6] = {0, 2, 2, 1, 1, 4};
    t->ncols = 6;
    for (int k = 0; k < 6; k++) {
        t->cols[k] = cols[mod][k];
        t->decimals[k] = dec[k];
    }
    for (size_t g = 0; g < sp->ngroups && g < ML_REPORT_MAX_ROWS; g++) {
        const size_t ref = gf[g].ref;
        const double lv = ref == SIZE_MAX ? NAN : sp->lev[ref];
        t->cell[g][0] = (double)g;
        t->cell[g][1] = mod ? 100.0 * pow(10.0, lv / 20.0) : lv;
        t->cell[g][2] = ref == SIZE_MAX ? NAN : sp->freq[ref];
        t->cell[g][3] = gf[g].lo_st == ML_OK ? gf[g].lo_hz : NAN;
        t->cell[g][4] = gf[g].hi_st == ML_OK ? gf[g].hi_hz : NAN;
        t->cell[g][5] = gf[g].thd_max_pct;
        t->nrows++;
    }
    ml_measure_add(rep, "sweep.steps", (double)sp->n);
    const group_figs *g0 = &gf[0];
    ml_measure_add(rep, "sweep.reference_hz", g0->ref == SIZE_MAX ? NAN : sp->freq[g0->ref]);
    if (g0->ref == SIZE_MAX)
        ml_report_unmeasured(rep, "sweep.reference_hz", "no step's level was measured");
    add_edge(rep, "sweep.lower_3db_hz", g0->lo_st, g0->lo_hz, true);
    add_edge(rep, "sweep.upper_3db_hz", g0->hi_st, g0->hi_hz, false);
    double worst = NAN;
    ml_bound b = ML_BOUND_NONE;
    for (size_t g = 0; g < sp->ngroups; g++)
        if (isfinite(gf[g].thd_max_pct) && !(worst >= gf[g].thd_max_pct)) {
            worst = gf[g].thd_max_pct;
            b = gf[g].thd_max_bound;
        }
    ml_measure_add(rep, "sweep.thd_max_pct", worst);
    if (isnan(worst))
        ml_report_unmeasured(rep, "sweep.thd_max_pct", "no step's THD was measured");
    else if (b == ML_BOUND_UPPER)
        ml_report_bound(rep, "sweep.thd_max_pct", ML_BOUND_UPPER, "the highest is a step's upper bound");
    if (sp->ngroups > 1)
        ml_report_note(rep, "%zu groups (levels): sweep.reference_hz and the band edges are the first "
                            "group's; sweep.groups lists each",
                       sp->ngroups);
}

/* The pictures' data: one curve per group, the [response] window and bands. */
static void plot_points(const ml_sweep_opts *o, const ml_sweep_run *r, const sweep_points *sp,
                        const ml_report_series *ser, ml_plot_data *pd)
{
    if (pd == NULL || sp->n == 0 || ml_plot_alloc_sweep(pd, sp->n) != ML_OK)
        return;
    ml_plot_sweep *s = &pd->sweep;
    const bool mod = r->kind != ML_KIND_AUDIO;
    for (size_t i = 0; i < sp->n; i++) {
        s->freq_hz[i] = sp->freq[i];
        s->rel_db[i] = sp->rel[i];
        s->group[i] = sp->group[i];
        ml_report_point *p = &ser->points[i];
        const ml_metric *t = ml_report_point_find(p, "thd_pct");
        s->thd_pct[i] = t && t->valid ? t->value : NAN;
        s->thd_upper[i] = t && t->valid && t->bound == ML_BOUND_UPPER;
    }
    s->ngroups = sp->ngroups;
    for (size_t g = 0; g < sp->ngroups && g < ML_PLOT_SWEEP_GROUPS; g++) {
        const size_t ref = sp->ref[g];
        const double lv = ref == SIZE_MAX ? NAN : sp->lev[ref];
        if (mod)
            snprintf(s->label[g], sizeof s->label[g], "%.0f %%", 100.0 * pow(10.0, lv / 20.0));
        else
            snprintf(s->label[g], sizeof s->label[g], "%.1f dBFS", lv);
    }
    s->thd_title = mod ? "envelope THD" : "THD";
    const ml_limits *l = o->m.out.limits;
    if (l && l->has_response) {
        const ml_response_limits *rl = &l->response;
        s->has_window = rl->has_window;
        s->win_lo_hz = rl->has_range ? rl->range_lo_hz : NAN;
        s->win_hi_hz = rl->has_range ? rl->range_hi_hz : NAN;
        s->win_min_db = rl->window_min_db;
        s->win_max_db = rl->window_max_db;
        s->nbands = rl->nbands < ML_PLOT_SWEEP_BANDS ? rl->nbands : ML_PLOT_SWEEP_BANDS;
        for (size_t i = 0; i < s->nbands; i++) {
            s->band_lo_hz[i] = rl->band_lo_hz[i];
            s->band_hi_hz[i] = rl->band_hi_hz[i];
            s->band_max_pct[i] = rl->band_max_pct[i];
        }
    }
}

/* Group g's reference, its steps' levels re the reference, its highest THD and its edges. */
static void group_figures(const ml_sweep_opts *o, const ml_sweep_run *r, sweep_points *sp, size_t g,
                          group_figs *gf)
{
    static double f[ML_SWEEP_MAX_STEPS], l[ML_SWEEP_MAX_STEPS];
    static size_t idx[ML_SWEEP_MAX_STEPS];
    size_t k = 0;
    for (size_t i = 0; i < sp->n; i++)
        if (sp->group[i] == g) {
            idx[k] = i;
            f[k] = sp->freq[i];
            l[k++] = sp->lev[i];
        }
    const size_t ref = ml_sweep_reference(f, l, k, o->reference_hz);
    gf->ref = sp->ref[g] = ref == SIZE_MAX ? SIZE_MAX : idx[ref];
    gf->thd_max_pct = NAN;
    for (size_t j = 0; j < k; j++) {
        const size_t i = idx[j];
        sp->rel[i] = ref == SIZE_MAX ? NAN : sp->lev[i] - l[ref];
        const ml_sweep_meas *m = &r->meas[i];
        const double t = m->analysed ? pct_of(&m->thd) : NAN;
        if (isfinite(t) && !(gf->thd_max_pct >= t)) {
            gf->thd_max_pct = t;
            gf->thd_max_bound = m->thd.state == ML_FIG_UPPER ? ML_BOUND_UPPER : ML_BOUND_NONE;
        }
    }
    group_edges(sp, g, gf);
}

/* Groups, references, relative levels, edges; the points, the groups and the pictures. */
static int report_points(ml_sweep_opts *o, const ml_sweep_run *r, ml_report *rep, ml_report_series *ser)
{
    const size_t n = r->nsteps;
    sweep_points sp = {.n = n};
    group_figs *gf = NULL;
    sp.group = calloc(n ? n : 1, sizeof *sp.group);
    sp.freq = malloc((n ? n : 1) * sizeof *sp.freq);
    sp.lev = malloc((n ? n : 1) * sizeof *sp.lev);
    sp.rel = malloc((n ? n : 1) * sizeof *sp.rel);
    int rc = sp.group && sp.freq && sp.lev && sp.rel ? 0 : ml_cli_error("%s: out of memory", o->m.in.path);
    for (size_t i = 0; rc == 0 && i < n; i++) {
        sp.freq[i] = r->meas[i].frequency_hz;
        sp.lev[i] = level_db(&r->meas[i]);
        sp.rel[i] = NAN;
    }
    if (rc == 0)
        sp.ngroups = ml_sweep_group(sp.freq, n, GROUP_TOL_PCT, GROUP_TOL_HZ, sp.group);
    if (rc == 0 && sp.ngroups > MAX_GROUPS)
        rc = ml_cli_error("%s: %zu groups of steps; at most %d are reported", o->m.in.path, sp.ngroups,
                          MAX_GROUPS);
    if (rc == 0 && (gf = calloc(sp.ngroups ? sp.ngroups : 1, sizeof *gf)) == NULL)
        rc = ml_cli_error("%s: out of memory", o->m.in.path);
    for (size_t g = 0; rc == 0 && g < sp.ngroups; g++)
        group_figures(o, r, &sp, g, &gf[g]);
    if (rc == 0) {
        for (size_t i = 0; i < n; i++)
            add_point(r, &sp, i, ser);
        if (sp.ngroups > 0)
            add_groups(r, &sp, gf, rep);
        plot_points(o, r, &sp, ser, o->m.out.plot);
    }
    free(gf);
    free(sp.group);
    free(sp.freq);
    free(sp.lev);
    free(sp.rel);
    return rc;
}

/* A note naming the steady tones left out (the first ML_SWEEP_NAMED of n: frequency, start time
 * in the input, level; the rest counted) and why. */
static void name_tones(ml_report *rep, const ml_step *t, uint64_t n, double rate, double t0, bool mod,
                       const char *why)
{
    char list[ML_REPORT_NOTE_LEN];
    size_t len = 0;
    uint64_t named = 0;
    list[0] = '\0';
    for (uint64_t i = 0; i < n && i < ML_SWEEP_NAMED; i++) {
        char one[96];
        snprintf(one, sizeof one, "%s%.1f Hz at %.2f s (%.1f %s)", i ? ", " : "", t[i].frequency_hz,
                 t0 + (double)t[i].start / rate, t[i].level_dbfs, mod ? "dB re 100 %" : "dBFS");
        const size_t k = strlen(one);
        if (len + k + strlen(why) + 48 > sizeof list) /* room for the count, why and "and N more" */
            break;
        memcpy(list + len, one, k + 1);
        len += k;
        named++;
    }
    if (named < n)
        snprintf(list + len, sizeof list - len, " and %llu more", (unsigned long long)(n - named));
    ml_report_note(rep, "%llu steady tone%s %s: %s", (unsigned long long)n, n == 1 ? "" : "s", why, list);
}

/* The analysis line and the notes on how the steps were measured. */
static void describe(const ml_sweep_opts *o, const ml_sweep_run *r, ml_report *rep)
{
    const ml_steps_config *c = &r->steps_cfg;
    size_t lo = 0, hi = 0, unmeasured = 0;
    for (size_t i = 0; i < r->nsteps; i++) {
        const size_t n = r->meas[i].nfft;
        lo = n && (lo == 0 || n < lo) ? n : lo;
        hi = n > hi ? n : hi;
        unmeasured += !r->meas[i].analysed;
    }
    char ffts[64];
    if (lo == hi)
        snprintf(ffts, sizeof ffts, "%zu", hi);
    else
        snprintf(ffts, sizeof ffts, "%zu..%zu", lo, hi);
    if (r->kind == ML_KIND_AUDIO)
        snprintf(rep->analysis, sizeof rep->analysis,
                 "%zu steps found in %.2f s frames (%.2f s cut at each end); each step on its own: %s window "
                 "(fewer terms for low tones), %s-point FFT, the step's frequency as the tone; band "
                 "%.1f..%.1f Hz; reference nearest %.1f Hz",
                 r->nsteps, c->frame_s, c->edge_s, ml_window_name(o->m.an.window), ffts,
                 o->m.an.audio.band_lo_hz, o->m.an.audio.band_hi_hz, o->reference_hz);
    else
        snprintf(rep->analysis, sizeof rep->analysis,
                 "%zu steps found in the envelope (%.2f s frames, %.2f s cut at each end); carrier %.1f Hz, "
                 "channel filter +-%.0f Hz; each step's span through the modulation analysis with C from %s; "
                 "reference nearest %.1f Hz",
                 r->nsteps, c->frame_s, c->edge_s, r->car.frequency_hz, r->bw_hz,
                 r->c_source == ML_C_REFERENCE ? "the carrier reference"
                 : r->c_source == ML_C_QUIET   ? "the unmodulated pauses"
                                               : "each step's mean envelope",
                 o->reference_hz);
    const double rate = r->seg->info->rate_hz, t0 = (double)r->seg->first / rate;
    if (r->nhum > 0)
        name_tones(rep, r->hum, r->nhum, rate, t0, r->kind != ML_KIND_AUDIO,
                   "left out as hum (a mains frequency, over 30 dB below the loudest step)");
    if (r->nskipped > 0) {
        char why[128];
        snprintf(why, sizeof why, "left out as too short to measure (a step lasts %.2f s plus %.2f s at each end)",
                 c->min_step_s, c->edge_s);
        name_tones(rep, r->skipped, r->nskipped, rate, t0, r->kind != ML_KIND_AUDIO, why);
    }
    if (unmeasured > 0)
        ml_report_note(rep, "%zu step%s could not be measured (reasons beside their figures)", unmeasured,
                       unmeasured == 1 ? "" : "s");
    if (r->kind != ML_KIND_AUDIO && r->c_source == ML_C_MEAN)
        ml_report_note(rep, "no unmodulated carrier between the steps: each step's modulation is relative to "
                            "its mean envelope (give --carrier-reference, or pauses of carrier alone)");
}

int ml_sweep_analyse(ml_sweep_opts *o, ml_segment *seg, ml_report *rep, ml_report_series *ser)
{
    ml_kind kind;
    char reason[160];
    double carrier;
    int rc = ml_input_kind(&o->m.in, &o->m.an, seg, ML_INPUT_LOOK_S, &kind, &carrier, reason, sizeof reason);
    if (rc != 0)
        return rc;
    ml_sweep_run r = {.o = o, .seg = seg, .kind = kind};
    rc = ml_sweep_find_steps(&r, carrier);
    if (rc == 0 && r.nsteps == 0)
        rc = ml_cli_error("%s: no step to measure%s: a step is a steady tone of at least %.2f s (plus %.2f s at "
                          "each end) standing clear of the noise", o->m.in.path,
                          r.nhum ? " (only hum at a mains frequency)" : "", r.steps_cfg.min_step_s,
                          r.steps_cfg.edge_s);
    /* the series exists (perhaps empty) in every sweep report */
    const size_t cap = r.nsteps ? r.nsteps : 1;
    if (rc == 0 && ml_report_series_alloc(ser, "sweep.points", "sweep points", cap) != ML_OK)
        rc = ml_cli_error("%s: out of memory", o->m.in.path);
    if (rc == 0)
        rc = ml_sweep_measure_steps(&r);
    if (rc == 0 && r.nsteps == 0) /* every run was hum after all */
        rc = ml_cli_error("%s: no step to measure (only hum at a mains frequency): a step is a steady tone of at "
                          "least %.2f s (plus %.2f s at each end) standing clear of the noise",
                          o->m.in.path, r.steps_cfg.min_step_s, r.steps_cfg.edge_s);
    if (rc == 0) {
        const char *name = kind == ML_KIND_AUDIO ? "audio" : kind == ML_KIND_IF ? "if" : "iq";
        ml_measure_describe(rep, &o->m, seg, name, reason);
        rep->series = ser;
        if (r.nsteps > 0)
            rc = report_points(o, &r, rep, ser);
        else
            ml_measure_add(rep, "sweep.steps", 0);
        describe(o, &r, rep);
    }
    ml_sweep_run_free(&r);
    return rc;
}

/* ---- the command ------------------------------------------------------------------------- */

void ml_sweep_output_init(ml_sweep_output *out, ml_report *rep, ml_sweep_opts *o)
{
    memset(rep, 0, sizeof *rep);
    out->rep = rep;
    memset(&out->ser, 0, sizeof out->ser);
    ml_plot_data_init(&out->pd);
    if (o->m.out.plot_path || o->m.out.report_path)
        o->m.out.plot = &out->pd;
}

void ml_sweep_output_free(ml_sweep_output *out)
{
    ml_report_series_free(&out->ser);
    ml_plot_data_free(&out->pd);
}

static int sweep_file(ml_sweep_opts *o, ml_finish_files *files, const char *cmdline)
{
    static ml_report rep;
    ml_sweep_output out;
    ml_sweep_output_init(&out, &rep, o);
    ml_segment seg;
    int rc = ml_input_open_file(&o->m.in, &seg);
    if (rc == 0)
        rc = ml_sweep_analyse(o, &seg, out.rep, &out.ser);
    ml_source_close(seg.src);
    if (rc == 0)
        rc = ml_finish(&(ml_finish_job){.out = &o->m.out, .files = files, .report = out.rep, .plot = &out.pd,
                                        .cmdline = cmdline});
    ml_sweep_output_free(&out);
    return rc;
}

int ml_cmd_sweep(int argc, char **argv)
{
    char *cmdline = ml_plots_cmdline(argc, argv);
    ml_sweep_opts o;
    static ml_limits limits;
    ml_finish_files files;
    int rc = sweep_parse(argc, argv, &o);
    if (rc == 0)
        rc = ml_measure_prepare(&o.m, &limits, &files);
    if (rc == 0) {
        rc = o.m.in.live ? ml_sweep_live(&o, &files, cmdline) : sweep_file(&o, &files, cmdline);
        ml_finish_files_free(&files);
    }
    free(cmdline);
    return rc < 0 ? ML_EXIT_OK : rc;
}
