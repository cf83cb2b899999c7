/* The card command: qualify the sound card from a loopback of its test signal (a recording, or
 * played and captured here) into a card profile; or make a level calibration from a captured tone
 * of known voltage.
 * SPDX-License-Identifier: MIT
 *
 * The test signal and its analysis are dsp/card.h's; the profile and calibration files
 * io/cardfile.h's, written through io/output.h (checked before any work, a temporary renamed into
 * place only when complete).
 */
#define _POSIX_C_SOURCE 200809L
#include <getopt.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analyzer/bench.h"
#include "analyzer/cli.h"
#include "analyzer/commands.h"
#include "analyzer/input.h"
#include "analyzer/options.h"
#include "dsp/card.h"
#include "dsp/channels.h"
#include "dsp/levels.h"
#include "dsp/metrics.h"
#include "dsp/resolution.h"
#include "dsp/spectrum.h"
#include "io/audio.h"
#include "io/cardfile.h"
#include "io/output.h"
#include "io/printable.h"

#define BLOCK 4096
#define MARGIN_S 3.0 /* captured beyond the signal's length: the round trip and the start */

typedef struct {
    const char *out, *file;
    ml_input_opts in;
    ml_analysis_opts an;
    double calibrate_vrms; /* > 0: --calibrate                                              */
    long card_channels;    /* --channels with --device                                      */
} card_opts;

static void card_usage(FILE *f)
{
    fprintf(
        f,
        "usage: modlens card --out FILE.json FILE\n"
        "       modlens card --out FILE.json --device NAME|INDEX [--output-device NAME|INDEX]\n"
        "       modlens card --calibrate VRMS FILE [--out FILE.json] [--channel N]\n"
        "\n"
        "Qualifies the sound card before it measures anything: its own noise floor (unweighted and\n"
        "A-weighted, per channel), residual THD and THD+N at %.0f dBFS, frequency response at %.0f dBFS,\n"
        "crosstalk and gain difference between the channels, and the sample-rate error between the\n"
        "playing and the capturing clock. FILE is a recording of 'modlens tone --card-test' played\n"
        "through a loopback (the card's output cabled to its input); with --device the test signal is\n"
        "played and captured here. The card profile (JSON) then goes to 'modlens measure --card'.\n"
        "\n"
        "  --out FILE.json           the card profile (or with --calibrate the calibration) to write\n"
        "  --device NAME|INDEX       play the test signal and capture the loopback (see 'modlens devices')\n"
        "  --output-device NAME|INDEX  the output that plays it (default: the default output);\n"
        "                            --play-device is the same option\n"
        "  --rate HZ                 sample rate with --device (default: the device's)\n"
        "  --channels N              channels captured with --device, 1 or 2 (default 2)\n"
        "  --calibrate VRMS          FILE holds a steady tone of VRMS volts r.m.s. at the input (read\n"
        "                            on a true-r.m.s. meter): gives the dBu of a full-scale sine\n"
        "  --channel N               with --calibrate: the channel holding the tone (default 1)\n"
        "  --no-settings             ignore the settings file (its device and output_device)\n"
        "\n"
        "Cabling: a short cable from output to input; keep the levels within the card's rating (start\n"
        "with the output low); never connect a transmitter's output, and mind mains-powered equipment\n"
        "sharing the ground (README 'Qualify your sound card first').\n"
        "\n"
        "Exit status: 0 written, 2 usage, device or input error (nothing written).\n\n%s",
        ML_CARD_LEVEL_DBFS, ML_CARD_RESPONSE_DBFS, ml_cli_safety);
}

static int parse(int argc, char **argv, card_opts *o)
{
    enum { O_OUT = ML_OPT_ID_OWN, O_DEVICE, O_OUTDEV, O_RATE, O_CHANNELS, O_CAL, O_CHANNEL, O_NOSET };
    static const struct option longopts[] = {
        {"out", required_argument, NULL, O_OUT},
        {"device", required_argument, NULL, O_DEVICE},
        {"output-device", required_argument, NULL, O_OUTDEV},
        {"play-device", required_argument, NULL, O_OUTDEV},
        {"rate", required_argument, NULL, O_RATE},
        {"channels", required_argument, NULL, O_CHANNELS},
        {"calibrate", required_argument, NULL, O_CAL},
        {"channel", required_argument, NULL, O_CHANNEL},
        {"no-settings", no_argument, NULL, O_NOSET},
        {"help", no_argument, NULL, 'h'},
        {NULL, 0, NULL, 0},
    };
    memset(o, 0, sizeof *o);
    o->in = ml_input_opts_default();
    o->an = ml_analysis_opts_default();
    o->card_channels = 2;
    opterr = 0;
    optind = 1;
    int ch;
    double v;
    long n;
    while ((ch = getopt_long(argc, argv, ":h", longopts, NULL)) != -1) {
        switch (ch) {
        case O_OUT: o->out = optarg; break;
        case O_DEVICE: o->in.device = optarg; break;
        case O_OUTDEV: o->in.output_device = optarg; break;
        case O_RATE:
            if (!ml_cli_number(optarg, &v) || v < ML_CARD_MIN_RATE_HZ || v > ML_CARD_MAX_RATE_HZ)
                return ml_cli_error("--rate: '%s' is not a sample rate in Hz, %.0f..%.0f", optarg,
                                    ML_CARD_MIN_RATE_HZ, ML_CARD_MAX_RATE_HZ);
            o->in.rate_hz = v;
            break;
        case O_CHANNELS:
            if (!ml_cli_int(optarg, &n) || n < 1 || n > ML_CARD_MAX_CHANNELS)
                return ml_cli_error("--channels: '%s' is not 1 or 2", optarg);
            o->card_channels = n;
            break;
        case O_CAL:
            if (!ml_cli_number(optarg, &v) || !(v > 0) || v > 1000)
                return ml_cli_error("--calibrate: '%s' is not a voltage in volts r.m.s., 0 < V <= 1000",
                                    optarg);
            o->calibrate_vrms = v;
            break;
        case O_CHANNEL:
            if (!ml_cli_int(optarg, &n) || n < 1 || n > ML_MAX_CHANNELS)
                return ml_cli_error("--channel: '%s' is not a channel number 1..%d", optarg, ML_MAX_CHANNELS);
            o->in.channel = n;
            break;
        case O_NOSET: o->an.no_settings = true; break;
        case 'h': card_usage(stdout); return -1;
        case ':':
        case '?': return ml_cli_bad_option(ch, argv, "card");
        default: return ml_cli_error("card: unhandled option");
        }
    }
    if (optind < argc - 1)
        return ml_cli_error("card takes one input FILE; extra argument '%s'", argv[optind + 1]);
    o->file = optind == argc - 1 ? argv[optind] : NULL;
    const bool cal = o->calibrate_vrms > 0;
    if (cal && (o->file == NULL || o->in.device))
        return ml_cli_error("--calibrate needs a recording FILE of the tone (not --device)");
    if (!cal && o->in.channel != 1)
        return ml_cli_error("--channel applies to --calibrate");
    if (!cal && o->out == NULL)
        return ml_cli_error("card needs --out FILE.json for the profile (try 'modlens card --help')");
    if (!cal && o->file && o->in.device)
        return ml_cli_error("card takes either a recording FILE or --device, not both");
    if (o->file && (o->in.output_device || o->in.rate_hz > 0))
        return ml_cli_error("--output-device and --rate apply to --device");
    if (o->out && strcmp(o->out, "-") == 0)
        return ml_cli_error("--out: give a file name");
    o->in.path = o->file;
    o->in.live = o->file == NULL;
    /* without a recording, the settings' device and output_device are the ones to qualify */
    const int rc = ml_bench_setup(o->file ? 0 : ML_BENCH_DEVICE | ML_BENCH_OUTPUT, &o->in, &o->an, NULL);
    if (rc == 0 && !cal && !o->file && !o->in.device)
        return ml_cli_error("card needs a recording FILE of the loopback, or --device to play and capture "
                            "(or device = NAME in the settings)");
    return rc;
}

/* ---- the profile ------------------------------------------------------------------------- */

static void row(const char *label, const ml_card_profile *p, const double *v, const ml_fig_state *s,
                const char *unit)
{
    printf("  %-26s", label);
    for (int c = 0; c < p->channels; c++) {
        char num[32] = "n/a";
        if (isfinite(v[c]))
            snprintf(num, sizeof num, "%s%.2f %s", s && s[c] == ML_FIG_UPPER ? "< " : "", v[c], unit);
        printf(" %16s", num);
    }
    printf("\n");
}

/* The profile as a short table on standard output. */
static void summary(const ml_card_profile *p, const char *out, const char *from)
{
    char o[1024], f[1024];
    ml_printable(o, sizeof o, out);
    ml_printable(f, sizeof f, from);
    printf("card profile %s (%.0f Hz, %d channel%s, from %s)\n", o, p->rate_hz, p->channels,
           p->channels == 1 ? "" : "s", f);
    printf("  %-26s", "");
    for (int c = 0; c < p->channels; c++)
        printf("        channel %d", c + 1);
    printf("\n");
    double v[ML_CARD_MAX_CHANNELS];
    ml_fig_state s[ML_CARD_MAX_CHANNELS];
#define ROW(label, field, state, unit)                                                                       \
    do {                                                                                                     \
        for (int c = 0; c < p->channels; c++) {                                                              \
            v[c] = p->ch[c].field;                                                                           \
            s[c] = state;                                                                                    \
        }                                                                                                    \
        row(label, p, v, s, unit);                                                                           \
    } while (0)
    ROW("test tone", level_dbfs, ML_FIG_MEASURED, "dBFS");
    ROW("THD at -1 dBFS", thd_db, p->ch[c].thd_state, "dB");
    ROW("THD+N at -1 dBFS", thdn_db, p->ch[c].thdn_state, "dB");
    ROW("noise 20 Hz-20 kHz", noise_dbfs, ML_FIG_MEASURED, "dBFS");
    ROW("noise A-weighted", noise_a_dbfs, ML_FIG_MEASURED, "dBFS");
    ROW("noise 468-weighted", noise_468_dbfs, ML_FIG_MEASURED, "dBFS");
    ROW("hum", hum_dbfs, ML_FIG_MEASURED, "dBFS");
    if (p->channels == 2)
        ROW("crosstalk into", crosstalk_db, p->ch[c].crosstalk_state, "dB");
#undef ROW
    for (int c = 0; c < p->channels; c++) {
        double lo = INFINITY, hi = -INFINITY;
        for (size_t k = 0; k < p->npoints; k++)
            if (isfinite(p->ch[c].response_db[k])) {
                lo = fmin(lo, p->ch[c].response_db[k]);
                hi = fmax(hi, p->ch[c].response_db[k]);
            }
        if (p->npoints > 0 && isfinite(lo))
            printf("  response, channel %d: %+.2f .. %+.2f dB re 1 kHz over %.0f Hz .. %.0f Hz\n", c + 1, lo,
                   hi, p->response_hz[0], p->response_hz[p->npoints - 1]);
    }
    if (isfinite(p->gain_difference_db))
        printf("  gain difference: channel 2 %+.3f dB re channel 1\n", p->gain_difference_db);
    if (isfinite(p->rate_error_ppm))
        printf("  sample-rate error: %+.2f ppm (the capturing clock against the playing one)\n",
               p->rate_error_ppm);
}

/* The checked output set with one file (--out); 0 or an exit status. */
static int outputs(const card_opts *o, const char *what, ml_output_set **set, ml_output **out)
{
    char err[512];
    const char *bad = "";
    *set = NULL;
    if (o->out == NULL)
        return 0;
    if (ml_output_set_create(set) != ML_OK || ml_output_set_input(*set, o->file, "the recording") != ML_OK
        || ml_output_set_add(*set, o->out, what, 0, out) != ML_OK)
        return ml_cli_error("out of memory");
    if (ml_output_set_check(*set, &bad, err, sizeof err) != ML_OK)
        return ml_cli_error("%s: %s", bad, err);
    return 0;
}

/* Writes through fn into the checked output and publishes it. */
static int publish(ml_output_set *set, ml_output *out, const void *obj, const char *recording, bool profile)
{
    char err[512];
    const char *bad = "";
    FILE *f = NULL;
    if (ml_output_begin(out, &f, err, sizeof err) != ML_OK)
        return ml_cli_error("%s: %s", ml_output_path(out), err);
    const ml_status st = profile ? ml_card_profile_write(f, obj, recording) : ml_calibration_write(f, obj);
    if (st != ML_OK) {
        ml_output_discard(out);
        return ml_cli_error("%s: cannot write: %s", ml_output_path(out), ml_strerror(st));
    }
    if (ml_output_end(out, err, sizeof err) != ML_OK)
        return ml_cli_error("%s: %s", ml_output_path(out), err);
    if (ml_output_set_commit(set, &bad, err, sizeof err) != ML_OK)
        return ml_cli_error("%s: %s", bad, err);
    return 0;
}

static ml_source *volatile g_src;

static void on_stop(int sig)
{
    (void)sig;
    ml_source_stop(g_src);
}

static void feed_signal(void *ctx, float *buf, size_t n)
{
    ml_cardgen_generate(ctx, buf, n);
}

/* The segment through the analysis until the schedule is over (or the input is). */
static int analyse(const char *name, ml_segment *seg, int channels, ml_card_profile *p)
{
    const double rate = seg->info->rate_hz;
    const ml_cardan_config ac = {.rate_hz = rate, .channels = channels};
    ml_cardan *a = NULL;
    ml_status st = ml_cardan_create(&ac, &a);
    float *buf = malloc((size_t)BLOCK * (size_t)seg->info->channels * sizeof *buf);
    if (st != ML_OK || buf == NULL) {
        ml_cardan_destroy(a);
        free(buf);
        return ml_cli_error("%s: cannot set up the analysis: %s", name,
                            ml_strerror(st != ML_OK ? st : ML_ENOMEM));
    }
    int rc = 0;
    for (int64_t done = 0; rc == 0 && done < seg->nframes && !ml_cardan_done(a);) {
        const size_t want = seg->nframes - done < BLOCK ? (size_t)(seg->nframes - done) : BLOCK;
        size_t got = 0;
        if ((rc = ml_input_read(name, seg, buf, want, &got, done)) != 0)
            break;
        ml_cardan_push(a, buf, got);
        done += (int64_t)got;
        if (got < want)
            break;
    }
    ml_cardan_why why = ML_CARDAN_OK;
    if (rc == 0 && !seg->failed && (st = ml_cardan_finish(a, p, &why)) != ML_OK)
        rc = ml_cli_error("%s: %s", name, why != ML_CARDAN_OK ? ml_cardan_why_text(why) : ml_strerror(st));
    if (rc == 0 && seg->failed)
        rc = ML_EXIT_USAGE;
    ml_cardan_destroy(a);
    free(buf);
    return rc;
}

/* card --out CARD.json FILE */
static int profile_file(card_opts *o, ml_card_profile *p)
{
    ml_segment seg;
    int rc = ml_input_open_file(&o->in, &seg);
    const int nch = seg.info ? seg.info->channels : 0;
    if (rc == 0 && (nch < 1 || nch > ML_CARD_MAX_CHANNELS))
        rc = ml_cli_error("%s: %d channels: a card profile takes a recording of 1 or 2", o->file, nch);
    if (rc == 0 && !(seg.info->rate_hz >= ML_CARD_MIN_RATE_HZ && seg.info->rate_hz <= ML_CARD_MAX_RATE_HZ))
        rc = ml_cli_error("%s: a rate of %.0f Hz; the card test needs %.0f..%.0f Hz", o->file,
                          seg.info->rate_hz, ML_CARD_MIN_RATE_HZ, ML_CARD_MAX_RATE_HZ);
    if (rc == 0)
        rc = analyse(o->file, &seg, nch, p);
    ml_source_close(seg.src);
    return rc;
}

/* card --out CARD.json --device NAME: plays the test signal and captures the loopback. */
static int profile_device(card_opts *o, ml_card_profile *p)
{
    double rate = o->in.rate_hz;
    char e[256];
    if (rate == 0 && ml_audio_device_rate(o->in.device, true, &rate, e, sizeof e) != ML_OK)
        return ml_cli_error("%s: %s", o->in.device ? o->in.device : "default input", e);
    if (!(rate >= ML_CARD_MIN_RATE_HZ && rate <= ML_CARD_MAX_RATE_HZ))
        return ml_cli_error("the device's rate %.0f Hz is outside %.0f..%.0f Hz: give --rate", rate,
                            ML_CARD_MIN_RATE_HZ, ML_CARD_MAX_RATE_HZ);
    ml_cardgen_config gc = ml_cardgen_config_default(rate);
    ml_cardgen *gen = NULL;
    if (ml_cardgen_create(&gc, &gen) != ML_OK)
        return ml_cli_error("out of memory");
    ml_live_config lc = ml_live_config_default();
    lc.rate_hz = rate;
    lc.frames = (int64_t)ml_cardgen_frames(gen) + (int64_t)llround(MARGIN_S * rate);
    lc.fill = feed_signal;
    lc.fill_ctx = gen;
    lc.output_device = o->in.output_device;
    lc.output_channels = 2;
    o->in.channels = o->card_channels;
    ml_segment seg;
    int rc = ml_input_open_device(&o->in, &lc, &seg);
    if (rc == 0) {
        struct sigaction sa, old_int, old_term;
        memset(&sa, 0, sizeof sa);
        sa.sa_handler = on_stop;
        sigemptyset(&sa.sa_mask);
        g_src = seg.src;
        sigaction(SIGINT, &sa, &old_int);
        sigaction(SIGTERM, &sa, &old_term);
        seg.nframes = lc.frames;
        rc = analyse(o->in.device ? o->in.device : "default input", &seg, (int)o->card_channels, p);
        ml_source_stop(seg.src);
        sigaction(SIGINT, &old_int, NULL);
        sigaction(SIGTERM, &old_term, NULL);
        g_src = NULL;
    }
    ml_source_close(seg.src);
    ml_cardgen_destroy(gen);
    return rc;
}

/* ---- the calibration ---------------------------------------------------------------------- */

/* The tone's level in the recording (the audio analysis of dsp/metrics.h over all of it). */
static int tone_level(card_opts *o, double *dbfs, double *hz)
{
    ml_segment seg;
    ml_spectrum *spec = NULL;
    float *buf = NULL, *mono = NULL;
    ml_channels ch;
    int rc = ml_input_open_file(&o->in, &seg);
    if (rc == 0)
        rc = ml_input_channels(&o->in, &seg, ML_KIND_AUDIO, &ch);
    if (rc == 0) {
        ml_spectrum_config sc = ml_spectrum_config_default(seg.info->rate_hz);
        sc.nfft = ml_resolution_nfft(seg.info->rate_hz, seg.nframes, ML_RESOLUTION_SPAN);
        sc.hop = ml_resolution_hop(sc.nfft, ML_RESOLUTION_SPAN);
        buf = malloc(BLOCK * ch.stride * sizeof *buf);
        mono = malloc(BLOCK * sizeof *mono);
        if (sc.nfft == 0)
            rc = ml_cli_error("%s: too short to measure a tone", o->file);
        else if (buf == NULL || mono == NULL || ml_spectrum_create(&sc, &spec) != ML_OK)
            rc = ml_cli_error("out of memory");
    }
    for (int64_t done = 0; rc == 0 && done < seg.nframes;) {
        const size_t want = seg.nframes - done < BLOCK ? (size_t)(seg.nframes - done) : BLOCK;
        size_t got = 0;
        if ((rc = ml_input_read(o->file, &seg, buf, want, &got, done)) == 0) {
            ml_channels_split(&ch, buf, got, mono, NULL);
            ml_spectrum_push(spec, mono, got);
            done += (int64_t)got;
        }
    }
    ml_audio_result ar;
    ml_audio_config ac = ml_audio_config_default();
    ac.band_hi_hz = fmin(ac.band_hi_hz, rc == 0 ? seg.info->rate_hz / 2 : ac.band_hi_hz);
    if (rc == 0 && (ml_audio_analyze(spec, &ac, &ar) != ML_OK || !ar.tone_present))
        rc = ml_cli_error("%s: no clear tone to calibrate from (channel %ld)", o->file, o->in.channel);
    if (rc == 0) {
        *dbfs = 10.0 * log10(ar.fundamental_power / 0.5);
        *hz = ar.fundamental_hz;
    }
    ml_spectrum_destroy(spec);
    free(buf);
    free(mono);
    ml_source_close(seg.src);
    return rc;
}

static int calibrate(card_opts *o)
{
    ml_output_set *set = NULL;
    ml_output *out = NULL;
    int rc = outputs(o, "the calibration (--out)", &set, &out);
    static ml_calibration c;
    memset(&c, 0, sizeof c);
    if (rc == 0)
        rc = tone_level(o, &c.tone_dbfs, &c.tone_hz);
    if (rc == 0 && ml_level_cal_from_tone(o->calibrate_vrms, c.tone_dbfs, &c.cal) != ML_OK)
        rc = ml_cli_error(
            "%s: a tone of %g V r.m.s. read at %.2f dBFS gives a full scale outside %.0f..%+.0f dBu", o->file,
            o->calibrate_vrms, c.tone_dbfs, ML_LEVEL_CAL_MIN_DBU, ML_LEVEL_CAL_MAX_DBU);
    if (rc == 0) {
        c.tone_vrms = o->calibrate_vrms;
        c.channel = (int)o->in.channel;
        snprintf(c.recording, sizeof c.recording, "%s", o->file);
        if (out)
            rc = publish(set, out, &c, NULL, false);
    }
    if (rc == 0) {
        printf(
            "calibration: a tone of %g V r.m.s. (%+.2f dBu) read at %.2f dBFS (%.1f Hz): 0 dBFS = %+.2f dBu "
            "(%.4g V r.m.s.)\n",
            c.tone_vrms, ml_vrms_to_dbu(c.tone_vrms), c.tone_dbfs, c.tone_hz, c.cal.full_scale_dbu,
            ml_dbu_to_vrms(c.cal.full_scale_dbu));
        printf("use it with --full-scale-dbu %.2f%s\n", c.cal.full_scale_dbu,
               out ? ", --calibration FILE or 'calibration = FILE' in the settings file" : "");
    }
    ml_output_set_destroy(set);
    return rc;
}

int ml_cmd_card(int argc, char **argv)
{
    static card_opts o;
    int rc = parse(argc, argv, &o);
    if (rc != 0)
        return rc < 0 ? ML_EXIT_OK : rc;
    if (o.calibrate_vrms > 0)
        return calibrate(&o);
    ml_output_set *set = NULL;
    ml_output *out = NULL;
    static ml_card_profile p;
    rc = outputs(&o, "the card profile (--out)", &set, &out);
    if (rc == 0)
        rc = o.file ? profile_file(&o, &p) : profile_device(&o, &p);
    const char *from = o.file ? o.file : o.in.device ? o.in.device : "the default devices";
    if (rc == 0)
        rc = publish(set, out, &p, from, true);
    if (rc == 0)
        summary(&p, o.out, from);
    ml_output_set_destroy(set);
    return rc;
}
