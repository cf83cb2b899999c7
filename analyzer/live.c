/* The devices and live commands: list sound-card devices; capture, then analyse as measure does.
 * SPDX-License-Identifier: MIT
 *
 * live opens the capture as an ml_source and hands it to the same pipelines as measure, so every
 * analysis works on live input. With --play-tone it plays a tone on the same full-duplex stream,
 * finds where the tone comes back (the round-trip latency) and analyses from shortly after that.
 */
#define _POSIX_C_SOURCE 200809L
#include <jansson.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <getopt.h>

#include "analyzer/cli.h"
#include "analyzer/commands.h"
#include "analyzer/finish.h"
#include "analyzer/measure.h"
#include "analyzer/plots.h"
#include "dsp/channels.h"
#include "dsp/synth.h"
#include "io/audio.h"
#include "io/printable.h"

#define PREROLL_S 0.25     /* silence played before the tone, so its onset can be found       */
#define NOISE_S 0.1        /* opening capture that sets the onset threshold (before any tone)  */
#define ONSET_WAIT_S 3.0   /* how long after the preroll the tone may take to come back        */
#define SETTLE_S 0.1       /* skipped after the onset before analysis (the DUT settles)        */
#define HEAD_S 5.0         /* seconds a capture keeps for the look-ahead's seek back           */

/* ---- devices ---------------------------------------------------------------------------- */

static void devices_usage(FILE *f)
{
    fprintf(f,
            "usage: modlens devices [--format text|json]\n"
            "\n"
            "Lists every audio input and output device the sound system offers, one a line: its\n"
            "number, name, audio system (host API), input and output channels, default sample rate,\n"
            "and in words whether it is the default input, output or both. Give a device to 'live',\n"
            "'watch', 'log' or 'tone --play' by number or name.\n\n%s",
            ml_cli_safety);
}

int ml_cmd_devices(int argc, char **argv)
{
    static const struct option longopts[] = {
        {"format", required_argument, NULL, 'f'}, {"help", no_argument, NULL, 'h'}, {NULL, 0, NULL, 0}};
    bool json = false;
    opterr = 0;
    optind = 1;
    int ch;
    while ((ch = getopt_long(argc, argv, ":h", longopts, NULL)) != -1) {
        switch (ch) {
        case 'f':
            if (strcmp(optarg, "json") == 0) json = true;
            else if (strcmp(optarg, "text") == 0) json = false;
            else return ml_cli_error("--format: '%s' is not text or json", optarg);
            break;
        case 'h': devices_usage(stdout); return ML_EXIT_OK;
        case ':': case '?': return ml_cli_bad_option(ch, argv, "devices");
        default: return ml_cli_error("devices: unhandled option");
        }
    }
    if (optind < argc)
        return ml_cli_error("devices takes no arguments; unexpected '%s'", argv[optind]);
    static ml_audio_device dev[ML_AUDIO_MAX_DEVICES];
    size_t n = 0;
    char err[256];
    if (ml_audio_list(dev, ML_AUDIO_MAX_DEVICES, &n, err, sizeof err) != ML_OK)
        return ml_cli_error("audio: %s", err);
    if (json) {
        json_t *root = json_object(), *arr = json_array();
        for (size_t i = 0; i < n; i++) {
            json_t *d = json_object();
            json_object_set_new(d, "index", json_integer(dev[i].index));
            json_object_set_new(d, "name", json_string(dev[i].name));
            json_object_set_new(d, "host_api", json_string(dev[i].host_api));
            json_object_set_new(d, "input_channels", json_integer(dev[i].max_input_channels));
            json_object_set_new(d, "output_channels", json_integer(dev[i].max_output_channels));
            json_object_set_new(d, "default_rate_hz", json_real(dev[i].default_rate_hz));
            json_object_set_new(d, "default_input", json_boolean(dev[i].default_input));
            json_object_set_new(d, "default_output", json_boolean(dev[i].default_output));
            json_array_append_new(arr, d);
        }
        json_object_set_new(root, "devices", arr);
        char *text = json_dumps(root, JSON_INDENT(2));
        json_decref(root);
        if (text == NULL)
            return ml_cli_error("out of memory");
        puts(text);
        free(text);
    } else if (n == 0) {
        printf("no audio devices found (no sound card, and no audio server running)\n");
    } else {
        printf("%3s  %-32s  %-24s  %6s  %7s  %7s  %s\n", "#", "device", "audio system", "inputs", "outputs",
               "rate Hz", "default for");
        for (size_t i = 0; i < n; i++) {
            char name[4 * sizeof dev[i].name], api[4 * sizeof dev[i].host_api]; /* the system's text */
            ml_printable(name, sizeof name, dev[i].name);
            ml_printable(api, sizeof api, dev[i].host_api);
            const char *def = dev[i].default_input && dev[i].default_output ? "input and output"
                              : dev[i].default_input                        ? "input"
                              : dev[i].default_output                       ? "output"
                                                                            : "";
            printf("%3d  %-32s  %-24s  %6d  %7d  %7.0f  %s\n", dev[i].index, name, api,
                   dev[i].max_input_channels, dev[i].max_output_channels, dev[i].default_rate_hz, def);
        }
    }
    return fflush(stdout) == 0 && !ferror(stdout) ? ML_EXIT_OK : ml_cli_error("cannot write the list");
}

/* ---- live ------------------------------------------------------------------------------- */

void ml_live_usage(FILE *f)
{
    fprintf(f,
            "usage: modlens live [capture options] [analysis options]\n"
            "\n"
            "Captures from a sound-card input, then analyses the capture exactly as 'modlens measure'\n"
            "does (same report, limits and exit status).\n"
            "\n"
            "capture:\n"
            "  --device NAME|INDEX     input device (default: the default input; see 'modlens devices')\n"
            "  --rate HZ               sample rate (default: the device's)\n"
            "  --channels N            channels to capture (default: 2 for --kind iq, else 1, more for\n"
            "                          --channel / --reference-channel)\n"
            "  --seconds S             capture length (default 5); Ctrl-C ends it early and the part\n"
            "                          captured is analysed, flagged as incomplete\n"
            "  --save FILE.wav         keep the raw capture (32-bit float WAV, valid at every moment)\n"
            "play and measure:\n"
            "  --play-tone FREQ[,LEVEL]  play a sine of FREQ Hz at LEVEL dBFS (default -12) on the\n"
            "                          output while capturing; the round-trip latency is measured and\n"
            "                          the analysis starts %.0f ms after the tone comes back\n"
            "  --output-device NAME|INDEX  output for the tone (default: the default output; same\n"
            "                          audio system as the input); --play-device is the same option\n"
            "analysis: every option of 'modlens measure' except FILE (--kind, --channel, --band,\n"
            "  --tone, --carrier, --limits, --format, --output, ...); --start and --duration count\n"
            "  from the start of the capture.\n"
            "\n"
            "Exit status: 0 all checks pass (or no limits), 1 a check fails or cannot be decided, 2\n"
            "usage, device or input error (a capture cut short by a device fault is still reported,\n"
            "flagged, with status 2).\n"
            "\n"
            "Never connect a sound card input to a transmitter output: use an RF sampler or attenuator\n"
            "and a receiver or downconverter. Before feeding a transmitter's audio input with\n"
            "--play-tone, set the level with the transmitter into a dummy load.\n\n%s",
            1000 * SETTLE_S, ml_cli_safety);
}

static ml_source *volatile g_live;

static void on_stop(int sig)
{
    (void)sig;
    ml_source_stop(g_live);
}

typedef struct {
    ml_synth *syn;
    uint64_t preroll, played;
} tone_feed;

static void feed_tone(void *ctx, float *buf, size_t n)
{
    tone_feed *t = ctx;
    size_t i = 0;
    for (; i < n && t->played + i < t->preroll; i++)
        buf[i] = 0.0f;
    if (i < n)
        ml_synth_generate(t->syn, buf + i, n - i);
    t->played += n;
}

/* Finds where the played tone comes back; sets *onset (capture frame) and *latency (frames).
 * The threshold T is 4 x the opening noise peak (at least -70 dBFS). The tone played from frame
 * P0 = preroll is A sin(2 pi f n / fs); its first sample above T (after scaling by the returned
 * amplitude) is n1, and the latency is (first captured sample above T) - (P0 + n1): exact for a
 * linear path, within a sample or two with noise. */
int ml_live_find_onset(const char *name, long channel, double tone_hz, ml_segment *seg, uint64_t preroll,
                       int64_t *onset, int64_t *latency)
{
    const double rate = seg->info->rate_hz;
    const int64_t noise_n = (int64_t)(NOISE_S * rate),
                  limit = (int64_t)preroll + (int64_t)(ONSET_WAIT_S * rate);
    const int64_t period = (int64_t)ceil(rate / tone_hz);
    ml_channels ch; /* the analysed channel, where the tone comes back */
    if (ml_channels_map(seg->info->channels, channel, false, false, 0, &ch) != ML_OK)
        return ml_cli_error("--channel %ld is not in the capture", channel);
    float *buf = malloc(ML_BLOCK_FRAMES * ch.stride * sizeof *buf),
          *mono = malloc(ML_BLOCK_FRAMES * sizeof *mono);
    if (buf == NULL || mono == NULL) {
        free(buf);
        free(mono);
        return ml_cli_error("out of memory");
    }
    double noise = 0, thr = 0, amp = 0;
    int64_t pos = 0, j = -1;
    int rc = 0;
    while (rc == 0 && pos < limit && (j < 0 || pos < j + 2 * period)) {
        size_t got = 0;
        ml_segment whole = *seg;
        whole.nframes = limit;
        rc = ml_input_read(name, &whole, buf, ML_BLOCK_FRAMES, &got, pos);
        if (rc == 0 && got < ML_BLOCK_FRAMES)
            rc = whole.failed ? ML_EXIT_USAGE
                              : ml_cli_error("live: the capture ended while waiting for the tone");
        if (rc == 0)
            ml_channels_split(&ch, buf, got, mono, NULL);
        for (size_t i = 0; rc == 0 && i < got; i++, pos++) {
            const double x = fabs(mono[i]);
            if (pos < noise_n) {
                noise = fmax(noise, x);
                continue;
            }
            if (thr == 0)
                thr = fmax(4 * noise, pow(10, -70.0 / 20));
            if (j < 0 && x > thr)
                j = pos;
            if (j >= 0 && pos < j + 2 * period)
                amp = fmax(amp, x);
        }
    }
    free(buf);
    free(mono);
    if (rc != 0)
        return rc;
    if (j < 0)
        return ml_cli_error("live: the played tone did not come back within %.1f s (threshold %.1f dBFS); "
                            "check the connection and the levels", ONSET_WAIT_S, 20 * log10(thr));
    int64_t n1 = 0;
    while (amp * fabs(sin(2 * M_PI * tone_hz * (double)n1 / rate)) <= thr && n1 < period)
        n1++;
    *onset = j;
    *latency = j - ((int64_t)preroll + n1);
    return 0;
}

/* --play-tone: the generator at the capture's rate (the device's default unless --rate) and lc's
 * playback. 0 or an exit status. */
static int play_setup(const ml_measure_opts *o, ml_live_config *lc, tone_feed *feed)
{
    double rate = o->in.rate_hz;
    char e[256];
    if (rate == 0 && ml_audio_device_rate(o->in.device, true, &rate, e, sizeof e) != ML_OK)
        return ml_cli_error("%s: %s", o->in.device ? o->in.device : "default input", e);
    lc->rate_hz = rate;
    if (!(o->in.play_hz < rate / 2))
        return ml_cli_error("--play-tone %.1f Hz is at or above the Nyquist frequency %.0f Hz", o->in.play_hz,
                            rate / 2);
    ml_synth_config sc = ml_synth_config_default(rate);
    sc.freq_hz = o->in.play_hz;
    sc.level_dbfs = o->in.play_dbfs;
    if (ml_synth_create(&sc, &feed->syn) != ML_OK)
        return ml_cli_error("--play-tone: the tone cannot be generated at %.0f Hz", rate);
    feed->preroll = (uint64_t)llround(PREROLL_S * rate);
    lc->output_device = o->in.output_device;
    lc->output_channels = 1;
    lc->fill = feed_tone;
    lc->fill_ctx = feed;
    return 0;
}

/* The analysed segment of the capture: from --start (after the tone's return with --play-tone,
 * measuring the latency into *latency), for --duration or to the end of --seconds. */
static int segment(const ml_measure_opts *o, ml_segment *seg, const tone_feed *feed, int64_t *latency)
{
    const double rate = seg->info->rate_hz;
    const int64_t total = (int64_t)llround(o->in.seconds * rate);
    seg->first = (int64_t)llround(o->in.start_s * rate);
    int rc = 0;
    *latency = -1;
    if (o->in.play) {
        int64_t onset = 0;
        rc = ml_live_find_onset(o->in.path, o->in.channel, o->in.play_hz, seg, feed->preroll, &onset,
                                latency);
        if (rc == 0 && seg->first < onset + (int64_t)(SETTLE_S * rate))
            seg->first = onset + (int64_t)(SETTLE_S * rate);
    }
    seg->nframes = o->in.duration_s > 0 ? (int64_t)llround(o->in.duration_s * rate) : total - seg->first;
    if (rc == 0 && seg->nframes <= 0)
        rc = ml_cli_error("live: --seconds %.3f leaves nothing to analyse after the tone's return",
                          o->in.seconds);
    if (rc == 0 && ml_source_seek(seg->src, seg->first) != ML_OK)
        rc = seg->live && !seg->failed ? ml_cli_error("%s: %s", o->in.path, ml_source_detail(seg->src))
                                       : ML_EXIT_USAGE;
    return rc;
}

/* The capture's own figures and notes: device, completeness, lost frames, latency. */
static void describe_capture(ml_report *rep, const ml_measure_opts *o, const ml_segment *seg, int64_t latency)
{
    const double rate = seg->info->rate_hz;
    ml_live_stats ls;
    ml_source_live_stats(seg->src, &ls);
    char dev[sizeof ls.device_name + 8];
    snprintf(dev, sizeof dev, "live:%s", ls.device_name);
    ml_printable(rep->path, sizeof rep->path, dev); /* device names are the system's text */
    rep->frames = (int64_t)ls.captured_frames;
    rep->duration_s = (double)ls.captured_frames / rate;
    rep->analysed_s = (double)seg->nframes / rate;
    ml_measure_add(rep, "live.lost_frames", (double)ls.lost_frames);
    ml_measure_add(rep, "live.overflows", (double)ls.overflow_events);
    ml_measure_add(rep, "live.latency_ms", latency >= 0 ? 1000.0 * (double)latency / rate : NAN);
    ml_measure_add(rep, "live.latency_frames", latency >= 0 ? (double)latency : NAN);
    char shown[4 * sizeof ls.device_name];
    ml_printable(shown, sizeof shown, ls.device_name);
    ml_report_add_text(rep, "live.device", shown);
    ml_printable(shown, sizeof shown, ls.host_api);
    ml_report_add_text(rep, "live.host_api", shown);
    /* a capture is complete when the input delivered signal to its end: a feed that stops leaves
     * digital silence (the dropout detection of the pipelines marks it) */
    ml_report_add_text(rep, "live.complete", seg->ended_early || seg->went_silent ? "no" : "yes");
    if (seg->ended_early)
        ml_report_note(rep, "capture incomplete: %s after %.3f s of %.3f s",
                       seg->failed ? "the device failed" : "interrupted", (double)ls.captured_frames / rate,
                       o->in.seconds);
    if (seg->went_silent)
        ml_report_note(rep,
                       "capture incomplete: the input stopped delivering at %.3f s (digital silence from "
                       "there to the end of the %.3f s capture%s)",
                       seg->silent_from_s, (double)ls.captured_frames / rate,
                       strcmp(rep->kind, "audio") == 0 ? ", left out of the figures" : "");
    if (ls.lost_frames > 0)
        ml_report_note(rep, "%llu frames were lost (the computer fell behind the sound card)",
                       (unsigned long long)ls.lost_frames);
    if (ls.overflow_events > 0)
        ml_report_note(rep, "the device reported %llu input overflows",
                       (unsigned long long)ls.overflow_events);
    if (ls.underflow_frames > 0 && o->in.play)
        ml_report_note(rep, "the played tone ran dry for %llu frames",
                       (unsigned long long)ls.underflow_frames);
}

/* Captures into the checked files, analyses as measure does and finishes; an exit status. The
 * capture (--save) goes to its temporary by descriptor from the start, and is kept whenever
 * frames arrived, even when the analysis or the report fails. */
static int live_run(ml_measure_opts *o, ml_finish_files *files, const char *cmdline, void *ctx)
{
    (void)ctx;
    ml_live_config lc = ml_live_config_default();
    lc.head_s = HEAD_S + (o->in.play ? PREROLL_S + ONSET_WAIT_S : 0);
    tone_feed feed = {NULL, 0, 0};
    ml_segment seg;
    memset(&seg, 0, sizeof seg);
    int rc = ml_finish_capture_begin(files, &lc.save_fd);
    if (rc != 0 || (o->in.play && (rc = play_setup(o, &lc, &feed)) != 0)
        || (rc = ml_input_open_device(&o->in, &lc, &seg)) != 0) {
        ml_synth_destroy(feed.syn);
        return rc;
    }
    struct sigaction sa, old_int, old_term;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_stop;
    sigemptyset(&sa.sa_mask);
    g_live = seg.src;
    sigaction(SIGINT, &sa, &old_int);
    sigaction(SIGTERM, &sa, &old_term);
    int64_t latency = -1;
    rc = segment(o, &seg, &feed, &latency);
    static ml_report rep;
    memset(&rep, 0, sizeof rep);
    ml_plot_data pd;
    ml_plot_data_init(&pd);
    if (o->out.plot_path || o->out.report_path)
        o->out.plot = &pd;
    if (rc == 0)
        rc = ml_measure_run(o, &seg, &rep);
    ml_source_stop(seg.src);
    sigaction(SIGINT, &old_int, NULL);
    sigaction(SIGTERM, &old_term, NULL);
    if (rc == 0)
        describe_capture(&rep, o, &seg, latency);
    ml_live_stats ls;
    memset(&ls, 0, sizeof ls);
    ml_source_live_stats(seg.src, &ls);
    g_live = NULL;
    ml_source_close(seg.src); /* completes the capture file */
    ml_synth_destroy(feed.syn);
    const int crc = ml_finish_capture_end(files, ls.captured_frames > 0);
    if (rc == 0 && crc == 0)
        rc = ml_finish(&(ml_finish_job){.out = &o->out, .files = files, .report = &rep, .plot = &pd,
                                        .cmdline = cmdline, .input_failed = seg.failed});
    else
        rc = ml_finish_failed(files, rc != 0 ? rc : crc);
    ml_plot_data_free(&pd);
    return rc;
}

int ml_cmd_live(int argc, char **argv)
{
    return ml_measure_command(argc, argv, 0, ml_plots_cmdline(argc, argv), live_run, NULL);
}
