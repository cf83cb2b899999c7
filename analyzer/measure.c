/* The measure command: argv -> options -> streamed analysis -> report -> limits -> output.
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "analyzer/cli.h"
#include "analyzer/commands.h"
#include "analyzer/limits.h"
#include "analyzer/output.h"
#include "analyzer/registry.h"
#include "dsp/metrics.h"
#include "dsp/spectrum.h"
#include "dsp/stats.h"
#include "io/report.h"
#include "io/source.h"

#define BLOCK_FRAMES 4096
#define MAX_CHANNELS 64

typedef enum { KIND_AUTO, KIND_AUDIO, KIND_IF, KIND_IQ } kind_t;

typedef struct {
    const char *input;
    kind_t kind;
    long channel;        /* 1-based */
    double start_s;
    double duration_s;   /* < 0: to the end */
    bool band_given;
    ml_audio_config audio;
    ml_window_type window;
    const char *limits_path;
    ml_report_format format;
    const char *output_path;
} measure_opts;

static void measure_usage(FILE *f)
{
    fprintf(f,
            "usage: modlens measure [options] FILE\n"
            "\n"
            "Analyses a recording (WAV, FLAC, AIFF, ...) and reports distortion and noise figures.\n"
            "\n"
            "input:\n"
            "  --kind auto|audio|if|iq   what the recording holds (default auto)\n"
            "  --channel N               channel to analyse, 1-based (default 1)\n"
            "  --start S                 skip S seconds at the start (default 0)\n"
            "  --duration S              analyse S seconds (default: to the end)\n"
            "analysis:\n"
            "  --band LO:HI              measurement band in Hz (default 20:20000, clipped to Nyquist)\n"
            "  --tone HZ                 expected test-tone frequency (default: strongest in band)\n"
            "  --harmonics N             highest harmonic order in THD, 2..%d (default 10)\n"
            "  --mains 50|60             mains frequency for hum (default: detected)\n"
            "  --window NAME             hft248d (default), hft144d, blackman-harris, hann\n"
            "checks and output:\n"
            "  --limits FILE             limits profile (INI): <metric>_min / <metric>_max\n"
            "  --format text|json|csv    report format (default text)\n"
            "  --output FILE             write the report to FILE (default standard output)\n"
            "\n"
            "Exit status: 0 all checks pass (or no limits), 1 a check fails, 2 usage or input error.\n\n%s",
            ML_MAX_HARMONICS, ml_cli_safety);
}

static int parse_band(const char *s, measure_opts *o)
{
    char buf[64];
    snprintf(buf, sizeof buf, "%s", s);
    char *colon = strchr(buf, ':');
    if (colon == NULL)
        return 0;
    *colon = '\0';
    double lo, hi;
    if (!ml_cli_number(buf, &lo) || !ml_cli_number(colon + 1, &hi) || lo < 0 || hi <= lo)
        return 0;
    o->audio.band_lo_hz = lo;
    o->audio.band_hi_hz = hi;
    o->band_given = true;
    return 1;
}

static int parse_measure(int argc, char **argv, measure_opts *o)
{
    static const struct option longopts[] = {
        {"kind", required_argument, NULL, 'k'},     {"channel", required_argument, NULL, 'c'},
        {"start", required_argument, NULL, 's'},    {"duration", required_argument, NULL, 'd'},
        {"band", required_argument, NULL, 'b'},     {"tone", required_argument, NULL, 't'},
        {"harmonics", required_argument, NULL, 'H'}, {"mains", required_argument, NULL, 'm'},
        {"window", required_argument, NULL, 'w'},   {"limits", required_argument, NULL, 'l'},
        {"format", required_argument, NULL, 'f'},   {"output", required_argument, NULL, 'o'},
        {"help", no_argument, NULL, 'h'},           {NULL, 0, NULL, 0},
    };
    memset(o, 0, sizeof *o);
    o->kind = KIND_AUTO;
    o->channel = 1;
    o->duration_s = -1;
    o->audio = ml_audio_config_default();
    o->window = ML_WINDOW_HFT248D;
    o->format = ML_FORMAT_TEXT;
    opterr = 0;
    optind = 1;
    int ch;
    double v;
    long n;
    while ((ch = getopt_long(argc, argv, ":h", longopts, NULL)) != -1) {
        switch (ch) {
        case 'k':
            if (strcmp(optarg, "auto") == 0) o->kind = KIND_AUTO;
            else if (strcmp(optarg, "audio") == 0) o->kind = KIND_AUDIO;
            else if (strcmp(optarg, "if") == 0) o->kind = KIND_IF;
            else if (strcmp(optarg, "iq") == 0) o->kind = KIND_IQ;
            else return ml_cli_error("--kind: '%s' is not auto, audio, if or iq", optarg);
            break;
        case 'c':
            if (!ml_cli_int(optarg, &n) || n < 1 || n > MAX_CHANNELS)
                return ml_cli_error("--channel: '%s' is not a channel number 1..%d", optarg, MAX_CHANNELS);
            o->channel = n;
            break;
        case 's':
            if (!ml_cli_number(optarg, &v) || v < 0)
                return ml_cli_error("--start: '%s' is not a time in seconds >= 0", optarg);
            o->start_s = v;
            break;
        case 'd':
            if (!ml_cli_number(optarg, &v) || v <= 0)
                return ml_cli_error("--duration: '%s' is not a time in seconds > 0", optarg);
            o->duration_s = v;
            break;
        case 'b':
            if (!parse_band(optarg, o))
                return ml_cli_error("--band: '%s' is not LO:HI in Hz with 0 <= LO < HI", optarg);
            break;
        case 't':
            if (!ml_cli_number(optarg, &v) || v <= 0)
                return ml_cli_error("--tone: '%s' is not a frequency in Hz > 0", optarg);
            o->audio.tone_hz = v;
            break;
        case 'H':
            if (!ml_cli_int(optarg, &n) || n < 2 || n > ML_MAX_HARMONICS)
                return ml_cli_error("--harmonics: '%s' is not an order 2..%d", optarg, ML_MAX_HARMONICS);
            o->audio.harmonics = (int)n;
            break;
        case 'm':
            if (strcmp(optarg, "50") == 0) o->audio.mains_hz = 50;
            else if (strcmp(optarg, "60") == 0) o->audio.mains_hz = 60;
            else return ml_cli_error("--mains: '%s' is not 50 or 60", optarg);
            break;
        case 'w': {
            int found = 0;
            for (int w = ML_WINDOW_HANN; w < ML_WINDOW_COUNT; w++)
                if (strcmp(optarg, ml_window_name((ml_window_type)w)) == 0) {
                    o->window = (ml_window_type)w;
                    found = 1;
                }
            if (!found)
                return ml_cli_error("--window: '%s' is not hft248d, hft144d, blackman-harris or hann", optarg);
            break;
        }
        case 'l': o->limits_path = optarg; break;
        case 'f':
            if (strcmp(optarg, "text") == 0) o->format = ML_FORMAT_TEXT;
            else if (strcmp(optarg, "json") == 0) o->format = ML_FORMAT_JSON;
            else if (strcmp(optarg, "csv") == 0) o->format = ML_FORMAT_CSV;
            else return ml_cli_error("--format: '%s' is not text, json or csv", optarg);
            break;
        case 'o': o->output_path = optarg; break;
        case 'h': measure_usage(stdout); return -1;
        case ':': return ml_cli_error("%s needs a value (try 'modlens measure --help')", argv[optind - 1]);
        default: return ml_cli_error("unknown option '%s' (try 'modlens measure --help')", argv[optind - 1]);
        }
    }
    if (optind != argc - 1)
        return ml_cli_error(optind >= argc ? "measure needs one input FILE (try 'modlens measure --help')"
                                           : "measure takes one input FILE; extra argument '%s'",
                            argv[argc - 1]);
    o->input = argv[optind];
    return 0;
}

/* Adds metric `name` with the registry's unit and precision. */
static void add(ml_report *r, const char *name, double value)
{
    const ml_metric_def *d = ml_registry_lookup(name, NULL);
    ml_report_add(r, name, d ? d->unit : "", d ? d->decimals : 3, value);
}

static void add_audio_metrics(ml_report *r, const ml_audio_result *a, bool ok)
{
    const double p1 = a->fundamental_power;
    double sinad = ml_ratio_db(p1, a->band_power - p1);
    add(r, "audio.fundamental_hz", ok ? a->fundamental_hz : NAN);
    add(r, "audio.fundamental_dbfs", ok ? ml_power_dbfs(p1) : NAN);
    add(r, "audio.thd_pct", ok ? ml_ratio_pct(a->distortion_power, p1) : NAN);
    add(r, "audio.thd_db", ok ? ml_ratio_db(a->distortion_power, p1) : NAN);
    add(r, "audio.thdn_pct", ok ? ml_ratio_pct(a->band_power - p1, p1) : NAN);
    add(r, "audio.thdn_db", ok ? -sinad : NAN);
    add(r, "audio.sinad_db", ok ? sinad : NAN);
    add(r, "audio.snr_db", ok ? ml_ratio_db(p1, a->noise_power) : NAN);
    add(r, "audio.enob_bits", ok ? ml_enob_bits(sinad) : NAN);
    add(r, "audio.noise_dbfs", ok ? ml_power_dbfs(a->noise_power) : NAN);
}

static void add_hum(ml_report *r, const ml_audio_result *a, bool ok)
{
    add(r, "hum.mains_hz", ok ? a->mains_hz : NAN);
    add(r, "hum.level_dbfs", ok ? ml_power_dbfs(a->hum_power) : NAN);
    add(r, "hum.level_dbc", ok ? ml_ratio_db(a->hum_power, a->fundamental_power) : NAN);
}

static void add_tables(ml_report *r, const ml_audio_result *a)
{
    ml_table *t = &r->tables[r->ntables++];
    snprintf(t->path, sizeof t->path, "audio.harmonics");
    snprintf(t->title, sizeof t->title, "harmonics");
    t->ncols = 3;
    t->cols[0] = "order";
    t->cols[1] = "frequency_hz";
    t->cols[2] = "level_dbc";
    t->decimals[0] = 0;
    t->decimals[1] = 2;
    t->decimals[2] = 2;
    for (size_t i = 0; i < a->nharmonics && i < ML_REPORT_MAX_ROWS; i++) {
        t->cell[i][0] = a->harmonics[i].order;
        t->cell[i][1] = a->harmonics[i].frequency_hz;
        t->cell[i][2] = ml_ratio_db(a->harmonics[i].power, a->fundamental_power);
        t->nrows++;
    }
    t = &r->tables[r->ntables++];
    snprintf(t->path, sizeof t->path, "hum.components");
    snprintf(t->title, sizeof t->title, "hum components");
    t->ncols = 3;
    t->cols[0] = "frequency_hz";
    t->cols[1] = "level_dbfs";
    t->cols[2] = "level_dbc";
    t->decimals[0] = 1;
    t->decimals[1] = 2;
    t->decimals[2] = 2;
    for (size_t i = 0; i < a->nhum && i < ML_REPORT_MAX_ROWS; i++) {
        t->cell[i][0] = a->hum[i].frequency_hz;
        t->cell[i][1] = ml_power_dbfs(a->hum[i].power);
        t->cell[i][2] = ml_ratio_db(a->hum[i].power, a->fundamental_power);
        t->nrows++;
    }
}

static void progress(double done, double total, bool *shown)
{
    if (total <= 0)
        return;
    fprintf(stderr, "\rmodlens: measuring %3.0f%%", 100.0 * done / total);
    *shown = true;
}

/* Streams the chosen channel of src through the spectrum and statistics. Returns an exit status
 * (0 to go on), printing its own error. */
static int stream(const measure_opts *o, ml_source *src, int64_t nframes, ml_spectrum *spec,
                  ml_stats *stats)
{
    const ml_source_info *info = ml_source_get_info(src);
    const int nch = info->channels;
    float *buf = malloc((size_t)BLOCK_FRAMES * (size_t)nch * sizeof *buf);
    float *mono = malloc(BLOCK_FRAMES * sizeof *mono);
    if (buf == NULL || mono == NULL) {
        free(buf);
        free(mono);
        return ml_cli_error("%s: out of memory", o->input);
    }
    const bool show = isatty(STDERR_FILENO) && nframes > (int64_t)(60 * info->rate_hz);
    bool shown = false;
    int64_t done = 0, next_report = 0;
    int rc = 0;
    while (done < nframes) {
        size_t want = nframes - done < BLOCK_FRAMES ? (size_t)(nframes - done) : BLOCK_FRAMES, got = 0;
        ml_status st = ml_source_read(src, buf, want, &got);
        if (st != ML_OK) {
            rc = ml_cli_error("%s: read failed at frame %lld: %s", o->input, (long long)done,
                              ml_source_detail(src));
            break;
        }
        for (size_t i = 0; i < got; i++) {
            mono[i] = buf[i * (size_t)nch + (size_t)(o->channel - 1)];
            if (!isfinite(mono[i])) {
                rc = ml_cli_error("%s: sample %lld of channel %ld is not a finite number (NaN or infinity)",
                                  o->input, (long long)(done + (int64_t)i), o->channel);
                goto out;
            }
        }
        ml_stats_push(stats, mono, got);
        ml_spectrum_push(spec, mono, got);
        done += (int64_t)got;
        if (got < want) {
            rc = ml_cli_error("%s: file ends early: %lld of %lld frames could be read", o->input,
                              (long long)done, (long long)nframes);
            break;
        }
        if (show && done >= next_report) {
            progress((double)done, (double)nframes, &shown);
            next_report = done + (int64_t)(10 * info->rate_hz);
        }
    }
out:
    if (shown)
        fprintf(stderr, "\r%*s\r", 30, "");
    free(buf);
    free(mono);
    return rc;
}

int ml_cmd_measure(int argc, char **argv)
{
    measure_opts o;
    int rc = parse_measure(argc, argv, &o);
    if (rc != 0)
        return rc < 0 ? ML_EXIT_OK : rc;

    static ml_limits limits;
    char err[512];
    if (o.limits_path) {
        ml_status st = ml_limits_load(o.limits_path, &limits, err, sizeof err);
        if (st != ML_OK)
            return ml_cli_error("%s: %s", o.limits_path, err);
    }
    if (o.output_path && (ml_same_file(o.output_path, o.input)
                          || (o.limits_path && ml_same_file(o.output_path, o.limits_path))))
        return ml_cli_error("%s: refusing to overwrite an input file with the report", o.output_path);

    ml_source *src = NULL;
    ml_status st = ml_source_open_file(o.input, &src, err, sizeof err);
    if (st != ML_OK)
        return ml_cli_error("%s: %s%s%s", o.input, ml_strerror(st), err[0] ? ": " : "", err);
    const ml_source_info *info = ml_source_get_info(src);
    ml_spectrum *spec = NULL;
    static ml_report rep;
    memset(&rep, 0, sizeof rep);
    rc = ML_EXIT_USAGE;

    const double rate = info->rate_hz;
    const double total_s = (double)info->frames / rate;
    if (info->frames == 0) {
        ml_cli_error("%s: the file holds no audio frames", o.input);
        goto done;
    }
    if (info->channels > MAX_CHANNELS) {
        ml_cli_error("%s: %d channels; at most %d are supported", o.input, info->channels, MAX_CHANNELS);
        goto done;
    }
    if (o.channel > info->channels) {
        ml_cli_error("%s: --channel %ld but the file has %d channel%s", o.input, o.channel, info->channels,
                     info->channels == 1 ? "" : "s");
        goto done;
    }
    int64_t first = (int64_t)llround(o.start_s * rate);
    int64_t nframes = o.duration_s < 0 ? info->frames - first : (int64_t)llround(o.duration_s * rate);
    if (first >= info->frames || first + nframes > info->frames) {
        ml_cli_error("%s: the segment %.3f s + %.3f s goes past the end of the file (%.3f s)", o.input,
                     o.start_s, o.duration_s < 0 ? 0.0 : o.duration_s, total_s);
        goto done;
    }
    if (first > 0 && ml_source_seek(src, first) != ML_OK) {
        ml_cli_error("%s: cannot seek to %.3f s: %s", o.input, o.start_s, ml_source_detail(src));
        goto done;
    }
    if (o.kind == KIND_IF || o.kind == KIND_IQ) {
        ml_cli_error("--kind %s: modulation analysis of if/iq captures is not available yet",
                     o.kind == KIND_IF ? "if" : "iq");
        goto done;
    }
    if (o.audio.band_hi_hz > rate / 2)
        o.audio.band_hi_hz = rate / 2;
    if (o.audio.band_lo_hz >= o.audio.band_hi_hz) {
        ml_cli_error("%s: --band starts at %.1f Hz, at or above the Nyquist frequency %.1f Hz", o.input,
                     o.audio.band_lo_hz, rate / 2);
        goto done;
    }
    if (o.audio.tone_hz > 0 && (o.audio.tone_hz < o.audio.band_lo_hz || o.audio.tone_hz > o.audio.band_hi_hz)) {
        ml_cli_error("--tone %.3f Hz lies outside the band %.1f..%.1f Hz", o.audio.tone_hz, o.audio.band_lo_hz,
                     o.audio.band_hi_hz);
        goto done;
    }

    ml_spectrum_config sc = ml_spectrum_config_default(rate);
    sc.window = o.window;
    while (sc.nfft > 256 && (int64_t)sc.nfft > nframes)
        sc.nfft /= 2;
    sc.hop = sc.nfft / 2;
    if ((int64_t)sc.nfft > nframes) {
        ml_cli_error("%s: %lld frames are too few to analyse (at least %zu needed)", o.input,
                     (long long)nframes, sc.nfft);
        goto done;
    }
    st = ml_spectrum_create(&sc, &spec);
    if (st != ML_OK) {
        ml_cli_error("%s: %s", o.input, ml_strerror(st));
        goto done;
    }
    ml_stats stats;
    ml_stats_init(&stats, info->bits);

    rc = stream(&o, src, nframes, spec, &stats);
    if (rc != 0)
        goto done;

    /* Report header */
    snprintf(rep.path, sizeof rep.path, "%s", o.input);
    snprintf(rep.kind, sizeof rep.kind, "audio");
    snprintf(rep.kind_reason, sizeof rep.kind_reason, "%s",
             o.kind == KIND_AUDIO ? "--kind audio"
                                  : "--kind auto: treated as demodulated audio; if/iq detection is not available yet");
    snprintf(rep.format, sizeof rep.format, "%s", info->format);
    rep.sample_rate_hz = rate;
    rep.channels = info->channels;
    rep.channel = (int)o.channel;
    rep.frames = info->frames;
    rep.duration_s = total_s;
    rep.start_s = (double)first / rate;
    rep.analysed_s = (double)nframes / rate;
    if (o.limits_path)
        snprintf(rep.limits_path, sizeof rep.limits_path, "%s", o.limits_path);

    ml_audio_result ar;
    st = ml_audio_analyze(spec, &o.audio, &ar);
    const bool ok = st == ML_OK;
    snprintf(rep.analysis, sizeof rep.analysis, "%s window, %zu-point FFT (%.3f Hz bins), %zu segments, band %.1f..%.1f Hz",
             ml_window_name(o.window), sc.nfft, rate / (double)sc.nfft, ml_spectrum_segments(spec),
             o.audio.band_lo_hz, o.audio.band_hi_hz);
    if (!ok) {
        if (stats.sumsq == 0)
            ml_report_note(&rep, "input is silent: every analysed sample is zero");
        else if (st == ML_ENOSIGNAL)
            ml_report_note(&rep, "no signal in the band %.1f..%.1f Hz (DC only?)", o.audio.band_lo_hz,
                           o.audio.band_hi_hz);
        else {
            ml_cli_error("%s: analysis failed: %s", o.input, ml_strerror(st));
            rc = ML_EXIT_USAGE;
            goto done;
        }
    }
    add_audio_metrics(&rep, &ar, ok);
    const double peak = fmax(fabs(stats.min), fabs(stats.max));
    add(&rep, "audio.rms_dbfs", stats.count ? ml_power_dbfs(stats.sumsq / (double)stats.count) : NAN);
    add(&rep, "audio.peak_dbfs", peak > 0 ? 20.0 * log10(peak) : -300.0);
    add(&rep, "audio.dc_offset_pct", 100.0 * ml_stats_mean(&stats));
    add(&rep, "audio.clipped_samples", (double)stats.clipped);
    add_hum(&rep, &ar, ok);
    if (ok)
        add_tables(&rep, &ar);
    if (stats.clipped > 0)
        ml_report_note(&rep, "clipping: %llu samples at or within 1 LSB of full scale",
                       (unsigned long long)stats.clipped);
    if (ok && ar.fundamental_power < 10.0 * ar.noise_power)
        ml_report_note(&rep, "no clear test tone: the strongest component is less than 10 dB above the noise");
    if (o.limits_path)
        ml_limits_apply(&limits, &rep);

    ml_output out;
    if (!ml_output_open(&out, o.output_path, err, sizeof err)) {
        rc = ml_cli_error("%s: %s", o.output_path, err);
        goto done;
    }
    st = ml_report_write(out.f, &rep, o.format);
    if (st != ML_OK) {
        ml_output_abort(&out);
        rc = ml_cli_error("%s: cannot write the report", o.output_path ? o.output_path : "standard output");
        goto done;
    }
    if (!ml_output_commit(&out, err, sizeof err)) {
        rc = ml_cli_error("%s: %s", o.output_path, err);
        goto done;
    }
    rc = strcmp(ml_report_verdict(&rep), "fail") == 0 ? ML_EXIT_FAIL : ML_EXIT_OK;
done:
    ml_spectrum_destroy(spec);
    ml_source_close(src);
    return rc;
}
