/* The measure command: argv -> options -> streamed analysis -> report -> limits -> output.
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
#include "analyzer/measure.h"

#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "analyzer/bench.h"
#include "analyzer/cli.h"
#include "analyzer/commands.h"
#include "analyzer/finish.h"
#include "analyzer/plots.h"
#include "analyzer/registry.h"
#include "analyzer/uncertainty.h"
#include "analyzer/values.h"
#include "dsp/channels.h"
#include "dsp/figures.h"
#include "dsp/resolution.h"
#include "dsp/spectrum.h"
#include "dsp/stats.h"
#include "io/printable.h"

static void measure_usage(FILE *f)
{
    fprintf(
        f,
        "usage: modlens measure [options] FILE\n"
        "\n"
        "Analyses a recording (WAV, FLAC, AIFF, ...): distortion and noise of demodulated audio, or\n"
        "the modulation of an AM signal captured as a downconverted IF or as I/Q.\n"
        "\n"
        "input:\n"
        "  --kind auto|audio|if|iq   what the recording holds (default auto, tested on the signal:\n"
        "                            iq when two channels are a quadrature pair, never for copies of\n"
        "                            one signal; if when one channel holds an AM carrier; else audio)\n"
        "  --channel N               channel to analyse, 1-based (default 1; for iq the I channel)\n"
        "  --swap-iq                 the I/Q channels are Q then I\n"
        "  --start S                 skip S seconds at the start (default 0)\n"
        "  --duration S              analyse S seconds (default: to the end)\n"
        "audio analysis:\n"
        "  --band LO:HI              measurement band in Hz (default 20:20000, clipped to Nyquist\n"
        "                            and, for if/iq, to the channel bandwidth)\n"
        "  --tone HZ                 expected test-tone frequency (default: strongest in band)\n"
        "  --no-tone                 no test tone: measure hum and noise only (default: decided from\n"
        "                            the signal; a line 10 dB clear of the noise around it is a tone)\n"
        "  --with-tone               take the strongest line (or the one at --tone) as the test tone\n"
        "                            even when it does not stand clear of the noise\n"
        "  --harmonics N             highest harmonic order in THD, 2..%d (default 10)\n"
        "  --mains 50|60             mains frequency for hum (default: detected)\n"
        "  --window NAME             hft248d (default), hft144d, blackman-harris, hann\n"
        "levels and the sound card:\n"
        "  --full-scale-dbu DB       the dBu a full-scale sine corresponds to at the input (e.g. 18,\n"
        "                            EBU R68): levels are then given in dBu, dBV and volts too\n"
        "  --calibration FILE        the calibration made by 'modlens card --calibrate'\n"
        "  --load-ohms R             with a calibration: the tone's power into R ohms, in watts\n"
        "  --card FILE               the sound card's profile ('modlens card --out'): figures within\n"
        "                            %.0f dB of what the card itself resolves are marked card-limited\n"
        "  --card-correct            correct the tone's level in volts for the card's response\n"
        "  --no-settings             ignore the settings file (~/.config/modlens/settings.ini)\n"
        "  --imd auto|off|smpte|dfd  intermodulation (default auto: measured when the signal is an\n"
        "                            IMD test signal); smpte:FL,FH or dfd:F1,F2 force the method and\n"
        "                            name the tones; THD and noise figures are then not measurable\n"
        "modulation analysis (if/iq):\n"
        "  --carrier HZ              carrier frequency (default: detected; the offset is reported)\n"
        "  --bandwidth HZ            one-sided audio bandwidth of the channel filter (default: the\n"
        "                            widest that fits, at most 10000)\n"
        "  --carrier-reference FILE  capture of the unmodulated carrier (same set-up) giving C\n"
        "  --reference-channel N     channel carrying the modulating audio (trapezoid linearity)\n"
        "  --peak-hold-ms MS         peak readings need MS per second above the level (default 5)\n"
        "checks and output:\n"
        "  --limits FILE             limits profile (INI): <metric>_min / <metric>_max, [mask]\n"
        "  --format text|json|csv    report format (default text)\n"
        "  --output FILE             write the report to FILE (default standard output)\n"
        "  --plot FILE               pictures: spectrum; envelope and trapezoid for if/iq (.png .svg .pdf)\n"
        "  --report FILE.pdf         a PDF record: what was measured, the metric table, the pictures\n"
        "\n"
        "Exit status: 0 all checks pass (or no limits), 1 a check fails or cannot be decided (a\n"
        "noise-limited bound beyond its limit), 2 usage or input error.\n\n%s",
        ML_MAX_HARMONICS, ML_CARD_MARGIN_DB, ml_cli_safety);
}

int ml_measure_parse(int argc, char **argv, ml_measure_opts *o, int ninputs)
{
    const bool live = ninputs == 0;
    static const struct option own[] = {{"help", no_argument, NULL, 'h'}, {NULL, 0, NULL, 0}};
    /* measure and compare take the device options only to say whose they are */
    struct option longopts[64];
    ml_options_table(ML_OPTS_SOURCE | ML_OPTS_SEGMENT | ML_OPTS_AUDIO | ML_OPTS_MODULATION | ML_OPTS_REPORT
                         | ML_OPTS_DEVICE | ML_OPTS_CAPTURE | ML_OPTS_LEVELS | ML_OPTS_BENCH | ML_OPTS_IMD,
                     own, longopts, sizeof longopts / sizeof *longopts);
    const char *cmd = argv[0]; /* measure, compare, live or watch */
    memset(o, 0, sizeof *o);
    o->in = ml_input_opts_default();
    o->an = ml_analysis_opts_default();
    o->out = ml_output_opts_default();
    o->in.live = live;
    opterr = 0;
    optind = 1;
    int ch;
    while ((ch = getopt_long(argc, argv, ":h", longopts, NULL)) != -1) {
        const int rc = ml_options_apply(ch, optarg, &o->in, &o->an, &o->out);
        if (rc > 0)
            return rc;
        if (rc == 0) {
            if (!live && (ml_options_group(ch) & (ML_OPTS_DEVICE | ML_OPTS_CAPTURE))) {
                const char *name = "";
                for (size_t i = 0; longopts[i].name; i++)
                    if (longopts[i].val == ch)
                        name = longopts[i].name;
                return ml_cli_error("--%s belongs to 'modlens live', not %s", name, cmd);
            }
            continue;
        }
        switch (ch) {
        case 'h': (live ? ml_live_usage : measure_usage)(stdout); return -1;
        case ':': case '?': return ml_cli_bad_option(ch, argv, cmd);
        default: return ml_cli_error("%s: unhandled option", cmd);
        }
    }
    if (live) {
        if (optind < argc)
            return ml_cli_error("live takes no FILE; unexpected '%s'", argv[optind]);
        if (o->in.output_device && !o->in.play)
            return ml_cli_error("--output-device needs --play-tone");
        if (o->in.duration_s > 0 && o->in.start_s + o->in.duration_s > o->in.seconds)
            return ml_cli_error("--start + --duration (%.3f s) exceed --seconds %.3f",
                                o->in.start_s + o->in.duration_s, o->in.seconds);
        if (o->in.start_s >= o->in.seconds)
            return ml_cli_error("--start %.3f s leaves nothing of --seconds %.3f", o->in.start_s,
                                o->in.seconds);
        o->in.path = "live";
        return ml_bench_setup(ML_BENCH_DEVICE | (o->in.play ? ML_BENCH_OUTPUT : 0) | ML_BENCH_MAINS
                                  | ML_BENCH_LIMITS | ML_BENCH_CARD | ML_BENCH_CAL,
                              &o->in, &o->an, &o->out);
    }
    if (ninputs == 2 && argc - optind != 2)
        return ml_cli_error("compare needs two inputs A and B (try 'modlens compare --help')");
    if (ninputs == 1 && optind != argc - 1)
        return ml_cli_error(optind >= argc ? "measure needs one input FILE (try 'modlens measure --help')"
                                           : "measure takes one input FILE; extra argument '%s'",
                            argv[argc - 1]);
    o->in.path = argv[optind];
    o->input2 = ninputs == 2 ? argv[optind + 1] : NULL;
    return ml_bench_setup(ML_BENCH_MAINS | ML_BENCH_LIMITS | ML_BENCH_CARD | ML_BENCH_CAL, &o->in, &o->an,
                          &o->out);
}

void ml_measure_add(ml_report *r, const char *name, double value)
{
    ml_values_report(r, &(ml_value){.name = name, .value = value}, 1);
}

/* The table of harmonics (order, frequency, dBc) or of hum components (frequency, dBFS, dBc):
 * the lines that stand above the noise (dsp/metrics.h), each at its power less the noise
 * expected in its lobe (so that the harmonics' rows add up to THD); dBc NAN without a tone. The
 * others are no measurement: the figures say what they bound. */
static void component_table(ml_report *r, bool hum, const ml_component *c, size_t n, double p1)
{
    static const char *const cols[2][3] = {{"order", "frequency_hz", "level_dbc"},
                                           {"frequency_hz", "level_dbfs", "level_dbc"}};
    static const int decimals[2][3] = {{0, 2, 2}, {1, 2, 2}};
    if (r->ntables >= ML_REPORT_MAX_TABLES)
        return;
    ml_table *t = &r->tables[r->ntables++];
    snprintf(t->path, sizeof t->path, "%s", hum ? "hum.components" : "audio.harmonics");
    snprintf(t->title, sizeof t->title, "%s", hum ? "hum components" : "harmonics");
    t->ncols = 3;
    for (int k = 0; k < 3; k++) {
        t->cols[k] = cols[hum][k];
        t->decimals[k] = decimals[hum][k];
    }
    for (size_t i = 0; i < n && t->nrows < ML_REPORT_MAX_ROWS; i++) {
        const double p = c[i].line_power, dbfs = 10.0 * log10(p / 0.5), dbc = 10.0 * log10(p / p1);
        if (!c[i].above_noise || !(p > 0) || !ml_values_in_range("hum.level_dbfs", dbfs))
            continue;
        t->cell[t->nrows][0] = hum ? c[i].frequency_hz : c[i].order;
        t->cell[t->nrows][1] = hum ? dbfs : c[i].frequency_hz;
        t->cell[t->nrows][2] = p1 > 0 && ml_values_in_range("hum.level_dbc", dbc) ? dbc : NAN;
        t->nrows++;
    }
}

void ml_measure_add_audio(ml_report *r, const ml_audio_result *a, bool ok)
{
    ml_audio_plain_figures f;
    ml_value v[ML_VALUES_MAX];
    ml_figures_audio(a, ok, &f);
    ml_values_report(r, v, ml_values_audio(&f, v));
    if (!ok)
        return;
    /* harmonics only where THD is a figure: with a tone, resolved from it, inside the band */
    const double p1 = a->tone_present ? a->fundamental_power : NAN;
    const bool thd = a->tone_present && a->figures.thd.state != ML_FIG_NONE;
    component_table(r, false, a->harmonics, thd ? a->nharmonics : 0, p1);
    component_table(r, true, a->hum, a->nhum, p1);
}

void ml_measure_add_audio_none(ml_report *r, ml_audio_why why)
{
    ml_audio_plain_figures f;
    ml_value v[ML_VALUES_MAX];
    ml_figures_audio_none(&f);
    const size_t n = ml_values_audio(&f, v);
    for (size_t i = 0; i < n; i++)
        v[i].why = ml_audio_why_text(why);
    ml_values_report(r, v, n);
}

void ml_measure_plan_notes(ml_report *rep, const ml_audio_plan *plan, ml_window_type preferred, double capture_s,
                           double overhead_s)
{
    if (plan->spectrum.window != preferred)
        ml_report_note(rep, "the %s window was used instead of %s: on a capture this short its narrower lobe "
                            "is needed to resolve the mains lines",
                       ml_window_name(plan->spectrum.window), ml_window_name(preferred));
    const double need_s = (double)plan->hum_min_frames / plan->spectrum.rate_hz + overhead_s;
    if (!plan->hum_fundamental_resolved)
        ml_report_note(rep,
                       "hum not measurable: the capture (%.3f s) is too short to tell the mains frequency "
                       "from DC (at least %.3f s needed)",
                       capture_s, need_s);
    else if (!plan->hum_resolved)
        ml_report_note(rep,
                       "the capture (%.3f s) resolves the mains fundamental but not every multiple: hum leaves "
                       "the unresolved multiples out (%.3f s needed for all)",
                       capture_s, need_s);
}

void ml_measure_tone_note(ml_report *r, const ml_audio_result *a, const char *what, const char *re)
{
    char cand[128] = "";
    if (a->candidate_hz > 0 && isfinite(a->candidate_margin_db))
        snprintf(cand, sizeof cand, "; the strongest other line, %.1f Hz, %s", a->candidate_hz,
                 a->candidate_margin_db > 0 ? "" : "lies in the noise");
    if (a->candidate_hz > 0 && isfinite(a->candidate_margin_db) && a->candidate_margin_db > 0)
        snprintf(cand + strlen(cand), sizeof cand - strlen(cand), "stands %.1f dB above the noise around it",
                 a->candidate_margin_db);
    if (a->tone_present) {
        ml_report_add_text(r, "audio.measurement", "tone");
        if (a->tone_why == ML_WHY_TONE_FORCED && !a->tone_clear)
            ml_report_note(r,
                           "%s: the declared test tone at %.1f Hz does not stand %.0f dB clear of the noise "
                           "around it (%.1f dB): read its figures with care",
                           what, a->fundamental_hz, ML_TONE_CLEAR_DB, a->candidate_margin_db);
        return;
    }
    ml_report_add_text(r, "audio.measurement", "hum and noise");
    const bool named = a->tone_why != ML_WHY_TONE_OFF && cand[0] != '\0';
    ml_report_note(r, "hum-and-noise measurement of %s (re %s, no tone figures): %s%s%s", what, re,
                   ml_audio_why_text(a->tone_why), named ? cand : "",
                   named ? " (--with-tone takes it as the tone)" : "");
}

bool ml_measure_dropout_notes(ml_report *rep, ml_segment *seg, const ml_dropout_result *r, bool left_out)
{
    enum { NOTE_EVENTS = 4 }; /* dropouts listed by time; the rest counted */
    const double rate = seg->info->rate_hz, t0 = (double)seg->first / rate;
    if (r->nevents == 0)
        return false;
    if (r->nevents == 1 && r->nsilence == 1 && r->events[0].start == 0 && r->ongoing) {
        ml_report_note(rep, "the input holds one value (%.6g) from start to end: %s", r->events[0].value,
                       r->events[0].value == 0 ? "digital silence" : "a stuck converter, or DC alone");
        return false;
    }
    char list[ML_REPORT_NOTE_LEN] = "";
    size_t len = 0;
    for (size_t i = 0; i < r->nstored && i < NOTE_EVENTS && len < sizeof list; i++) {
        const ml_dropout_event *e = &r->events[i];
        const double a = t0 + (double)e->start / rate, b = t0 + (double)(e->end + 1) / rate;
        if (e->kind == ML_DROPOUT_SILENCE)
            len += (size_t)snprintf(list + len, sizeof list - len, "%s%s %.3f-%.3f s", i ? "; " : "",
                                    e->value == 0 ? "silence" : "held value", a, b);
        else
            len += (size_t)snprintf(list + len, sizeof list - len, "%sdiscontinuity at %.3f s", i ? "; " : "",
                                    a);
    }
    ml_report_note(rep, "dropouts %s (%zu: %zu silence, %zu discontinuit%s): %s%s",
                   left_out ? "left out of the figures" : "in the capture, not left out of the figures",
                   r->nevents, r->nsilence, r->nstep, r->nstep == 1 ? "y" : "ies", list,
                   r->nevents > NOTE_EVENTS ? "; ..." : "");
    if (r->ongoing && seg->live) {
        seg->went_silent = true;
        seg->silent_from_s = t0 + (double)r->events[r->nstored - 1].start / rate;
    }
    if (left_out && r->nevents > r->nstored)
        ml_report_note(rep, "more than %d dropouts: those after the %dth are counted, not left out",
                       ML_DROPOUT_MAX_EVENTS, ML_DROPOUT_MAX_EVENTS);
    return left_out;
}

void ml_measure_describe(ml_report *r, const ml_measure_opts *o, const ml_segment *seg, const char *kind,
                         const char *reason)
{
    const double rate = seg->info->rate_hz;
    ml_printable(r->path, sizeof r->path, o->in.path); /* escaped, and a cut one ends in "..." */
    snprintf(r->kind, sizeof r->kind, "%s", kind);
    snprintf(r->kind_reason, sizeof r->kind_reason, "%s", reason);
    snprintf(r->format, sizeof r->format, "%s", seg->info->format);
    r->sample_rate_hz = rate;
    r->channels = seg->info->channels;
    r->channel = (int)o->in.channel;
    r->frames = seg->info->frames;
    r->duration_s = (double)seg->info->frames / rate;
    r->start_s = (double)seg->first / rate;
    r->analysed_s = (double)seg->nframes / rate;
    if (o->out.limits_path)
        ml_printable(r->limits_path, sizeof r->limits_path, o->out.limits_path);
    if (seg->info->cut_short)
        ml_report_note(r, "the file is cut short: its header announces more samples than it holds; the %lld "
                          "frames present were analysed",
                       (long long)seg->info->frames);
}

void ml_measure_progress(const ml_segment *seg, int64_t done, int64_t *next, bool *shown)
{
    const double rate = seg->info->rate_hz;
    if (done < *next || seg->nframes <= (int64_t)(60 * rate) || !isatty(STDERR_FILENO))
        return;
    fprintf(stderr, "\rmodlens: measuring %3.0f%%", 100.0 * (double)done / (double)seg->nframes);
    *shown = true;
    *next = done + (int64_t)(10 * rate);
}

void ml_measure_progress_end(bool shown)
{
    if (shown)
        fprintf(stderr, "\r%*s\r", 30, "");
}

int ml_measure_prepare(ml_measure_opts *o, ml_limits *limits, ml_finish_files *files)
{
    const ml_finish_input ins[5] = {
        {o->in.live ? NULL : o->in.path, o->input2 ? "recording A" : "the recording"},
        {o->input2, "recording B"},
        {o->an.carrier_reference, "the carrier reference"},
        {o->an.card_path, "the card profile"},
        {o->an.calibration_path, "the calibration"},
    };
    return ml_finish_prepare(&o->out, limits, ins, 5, o->in.save_path, files);
}

int ml_measure_run(ml_measure_opts *o, ml_segment *seg, ml_report *rep)
{
    ml_kind kind;
    char reason[384];
    double carrier;
    int rc = ml_input_kind(&o->in, &o->an, seg, ML_INPUT_LOOK_S, &kind, &carrier, reason, sizeof reason);
    if (rc != 0)
        return rc;
    if (kind == ML_KIND_AUDIO)
        rc = ml_measure_audio(o, seg, reason, rep);
    else
        rc = ml_measure_modulation(o, seg, kind, reason, carrier, rep);
    if (rc == 0)
        ml_bench_finish(&o->an, rep);
    return rc;
}

int ml_measure_analyse(ml_measure_opts *o, ml_report *rep)
{
    ml_segment seg;
    memset(rep, 0, sizeof *rep);
    int rc = ml_input_open_file(&o->in, &seg);
    if (rc == 0)
        rc = ml_measure_run(o, &seg, rep);
    ml_source_close(seg.src);
    return rc;
}

int ml_measure_command(int argc, char **argv, int ninputs, char *cmdline, ml_measure_body *body, void *ctx)
{
    ml_measure_opts o;
    static ml_limits limits;
    ml_finish_files files;
    int rc = ml_measure_parse(argc, argv, &o, ninputs);
    if (rc == 0)
        rc = ml_measure_prepare(&o, &limits, &files);
    if (rc == 0) {
        rc = body(&o, &files, cmdline, ctx);
        ml_finish_files_free(&files); /* whatever was not published goes */
    }
    free(cmdline);
    return rc < 0 ? ML_EXIT_OK : rc;
}

/* measure FILE: the analysis, then the finish step. */
static int measure_body(ml_measure_opts *o, ml_finish_files *files, const char *cmdline, void *ctx)
{
    (void)ctx;
    static ml_report rep;
    ml_plot_data pd;
    ml_plot_data_init(&pd);
    if (o->out.plot_path || o->out.report_path)
        o->out.plot = &pd;
    int rc = ml_measure_analyse(o, &rep);
    if (rc == 0)
        rc = ml_finish(&(ml_finish_job){.out = &o->out, .files = files, .report = &rep, .plot = &pd,
                                        .cmdline = cmdline});
    ml_plot_data_free(&pd);
    return rc;
}

int ml_cmd_measure(int argc, char **argv)
{
    return ml_measure_command(argc, argv, 1, ml_plots_cmdline(argc, argv), measure_body, NULL);
}
