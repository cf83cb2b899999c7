/* The tone command: argv -> signal description -> generator -> file, in blocks.
 * SPDX-License-Identifier: MIT
 *
 * The output goes to a temporary file beside --out and is renamed into place only when it is
 * complete (io/output.h), so a bad option, a write error or an interrupt never leaves a partial
 * file; an existing file is replaced only with --force.
 */
#define _POSIX_C_SOURCE 200809L
#include <getopt.h>
#include <math.h>
#include <signal.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "analyzer/cli.h"
#include "analyzer/commands.h"
#include "dsp/card.h"
#include "analyzer/plan.h"
#include "dsp/synth.h"
#include "io/audio.h"
#include "io/output.h"
#include "io/sink.h"

#define BLOCK_FRAMES 4096
#define MAX_SECONDS 86400.0     /* one day: far beyond any test, and 2^53 frames away        */
#define WAV_MAX_DATA 4294000000.0 /* RIFF sizes are 32-bit; keep clear of 2^32 for the header */
#define AUTO_PEAK_DBFS (-1.0)   /* AM without --level: highest envelope peak at -1 dBFS       */

typedef struct {
    ml_synth_config syn;
    bool freq_given, level_given, level2_given, two_tone, silence, carrier_given;
    bool depth_given, pos_given, neg_given, mod_given, overmod_given, iq_given, lead_given, cnr_given;
    bool hum_level_given, hum_depth_given, seconds_given, allow_clip, play, force;
    double depth;
    double seconds;
    long rate_hz;
    ml_sink_encoding encoding;
    const char *out;
    const char *device;
    ml_plan_opts plan;       /* --freqs, --levels, --step-seconds, --pause-seconds (analyzer/plan.h) */
    int imd;                 /* --imd: 0 none, 1 smpte, 2 din, 3 dfd                                  */
} tone_opts;

/* The intermodulation test signals of --imd (docs/references.md 5 and 12): the low (or first)
 * tone, the high (or second) tone, and the second's level re the first's: SMPTE RP120 60 Hz +
 * 7 kHz and DIN 45403 / IEC 60268-3 250 Hz + 8 kHz at 4:1 (20 lg 4 = 12.04 dB), the
 * difference-frequency twin tone 19 + 20 kHz at equal levels. */
static const struct {
    const char *name;
    double f1_hz, f2_hz, rel2_db;
} imd_signals[] = {{"smpte", 60, 7000, -12.041199826559248},
                   {"din", 250, 8000, -12.041199826559248},
                   {"dfd", 19000, 20000, 0.0}};

static void tone_usage(FILE *f)
{
    fprintf(f,
            "usage: modlens tone [options] --out FILE\n"
            "       modlens tone [options] --play [--device NAME|INDEX]\n"
            "\n"
            "Writes a test signal to FILE (.wav or .flac), or plays it on a sound card output (for\n"
            "--seconds S, or until Ctrl-C when --seconds is not given). Levels follow AES17: a full-scale sine is\n"
            "0 dBFS, so a tone at L dBFS has a peak of 10^(L/20). All tones start at zero phase.\n"
            "\n"
            "signal (one of; default a single tone):\n"
            "  --freq HZ              single tone frequency (default 1000)\n"
            "  --two-tone F1,F2       two tones; the second at --level2\n"
            "  --imd smpte|din|dfd    an intermodulation test signal: SMPTE 60 Hz + 7 kHz or DIN\n"
            "                         250 Hz + 8 kHz at 4:1 (the high tone 12.04 dB below --level),\n"
            "                         or the twin tone 19 + 20 kHz at --level each; --two-tone F1,F2\n"
            "                         moves the tones, keeping the ratio\n"
            "  --step F,L,S           a tone of F Hz at L dBFS for S seconds (repeatable, in order;\n"
            "                         F = 0 is a pause); the sequence repeats to fill --seconds\n"
            "  --silence              digital silence (plus any hum and noise)\n"
            "  --freqs LIST           a step plan (as 'modlens sweep --device' plays it): the\n"
            "                         frequencies in Hz (comma-separated) or a set: octaves (31.5 Hz\n"
            "                         .. 16 kHz), thirds (20 Hz .. 20 kHz), proof (50 Hz .. 10 kHz);\n"
            "                         each in turn, one pass per level of --levels (default -20\n"
            "                         dBFS), --step-seconds long (default 1) with --pause-seconds of\n"
            "                         silence after each (default 0.25); 'modlens sweep FILE' reads\n"
            "                         it back\n"
            "  --levels LIST, --step-seconds S, --pause-seconds S   the plan's (see --freqs)\n"
            "  --carrier HZ           AM test signal on a carrier of HZ (see below)\n"
            "levels and distortion:\n"
            "  --level DBFS           tone level, or peak of the unmodulated AM carrier (default -20;\n"
            "                         AM: chosen so the highest envelope peak is at %.0f dBFS)\n"
            "  --level2 DBFS          level of the second tone (default: --level)\n"
            "  --harmonic N:DBC       add harmonic N (2..%d) at DBC dB re the tone (repeatable);\n"
            "                         with --carrier it distorts the modulating tone. 3:-40 = 1 %%\n"
            "AM (with --carrier): envelope 1 + m x(t), x the modulating tone with its harmonics;\n"
            "m applies to the fundamental, the positive and negative half-cycles may differ:\n"
            "  --depth M              modulation depth, 0..10 (0.8 = 80 %%; default 0.5)\n"
            "  --mod-freq HZ          modulating tone (default 1000)\n"
            "  --positive-peak PCT    depth of the positive half-cycles, in %% (overrides --depth)\n"
            "  --negative-peak PCT    depth of the negative half-cycles, in %% (overrides --depth)\n"
            "  --overmod pinch|reverse  beyond 100 %%: carrier pinch-off (default) or phase reversal\n"
            "  --iq                   two channels I, Q of the complex envelope; the carrier may then\n"
            "                         be 0 or negative (default: one channel, real IF)\n"
            "  --lead-in S            S seconds of unmodulated carrier first (default 0)\n"
            "  --cnr DB               white noise at DB carrier-to-noise ratio in the full band\n"
            "impairments:\n"
            "  --noise DBFS           white Gaussian noise, r.m.s. level in the full band per channel\n"
            "  --hum 50|60|100|120    mains hum (100/120: rectifier ripple) at that frequency\n"
            "  --hum-level DBFS       additive hum level (on every channel)\n"
            "  --hum-depth DB         AM: hum modulation of the envelope, dB re 100 %% (-40 = 1 %%)\n"
            "  --hum-harmonic N:DBC   add hum harmonic N at DBC dB re the hum (repeatable)\n"
            "file:\n"
            "  --seconds S            length including any lead-in (default 10; with --step: one pass)\n"
            "  --rate HZ              sample rate (default 48000)\n"
            "  --bits 16|24|32f       16 or 24-bit PCM, or 32-bit float in WAV files (default 24)\n"
            "  --seed N               noise seed, 0..2^63-1 (default 1); same seed, same file\n"
            "  --allow-clip           allow peaks above full scale (PCM clips, float keeps them)\n"
            "  --out FILE             output file; written via a temporary, then renamed\n"
            "  --force                replace FILE when it exists (a regular file only)\n"
            "sound-card test (see 'modlens card'):\n"
            "  --card-test            the loopback test signal (two channels, about 30 s: silence, 997 Hz\n"
            "                         at -1 dBFS, silence, each channel alone, third-octave steps at -20\n"
            "                         dBFS), TPDF-dithered for --bits (24 for 32f); takes only --out,\n"
            "                         --force, --play, --device, --rate, --bits and --seed\n"
            "playback:\n"
            "  --play                 play the signal instead of writing a file (see 'modlens devices')\n"
            "  --device NAME|INDEX    output device (default: the default output); its rate must\n"
            "                         equal --rate\n"
            "\n"
            "Exit status: 0 written or played, 1 write failure, 2 usage or device error (nothing written).\n"
            "Before feeding a transmitter's audio input, set the level with the transmitter into a dummy\n"
            "load: a full-scale tone can overmodulate it.\n\n%s",
            AUTO_PEAK_DBFS, ML_SYNTH_MAX_ORDER, ml_cli_safety);
}

/* "N:DBC" -> harmonic; false for a bad text. */
static bool parse_harmonic(const char *s, ml_synth_harmonic *h)
{
    char buf[64];
    if (snprintf(buf, sizeof buf, "%s", s) >= (int)sizeof buf)
        return false;
    char *colon = strchr(buf, ':');
    if (colon == NULL)
        return false;
    *colon = '\0';
    long n;
    double dbc;
    if (!ml_cli_int(buf, &n) || !ml_cli_number(colon + 1, &dbc) || n < 2 || n > ML_SYNTH_MAX_ORDER
        || dbc < -300 || dbc > 40)
        return false;
    h->order = (int)n;
    h->level_dbc = dbc;
    return true;
}

/* Splits "a,b[,c...]" into exactly n numbers. */
static bool parse_list(const char *s, double *v, int n)
{
    char buf[128];
    if (snprintf(buf, sizeof buf, "%s", s) >= (int)sizeof buf)
        return false;
    char *p = buf;
    for (int i = 0; i < n; i++) {
        char *comma = strchr(p, ',');
        if ((comma == NULL) != (i == n - 1))
            return false;
        if (comma)
            *comma = '\0';
        if (!ml_cli_number(p, &v[i]))
            return false;
        p = comma ? comma + 1 : p;
    }
    return true;
}

static int add_harmonic(ml_synth_harmonic *list, size_t *n, const char *arg, const char *opt)
{
    ml_synth_harmonic h;
    if (!parse_harmonic(arg, &h))
        return ml_cli_error("%s: '%s' is not N:DBC with N 2..%d and DBC -300..40", opt, arg,
                            ML_SYNTH_MAX_ORDER);
    if (*n >= ML_SYNTH_MAX_HARMONICS)
        return ml_cli_error("%s: at most %d harmonics", opt, ML_SYNTH_MAX_HARMONICS);
    for (size_t i = 0; i < *n; i++)
        if (list[i].order == h.order)
            return ml_cli_error("%s: harmonic %d is given twice", opt, h.order);
    list[(*n)++] = h;
    return 0;
}

static int parse_tone(int argc, char **argv, tone_opts *o)
{
    enum { O_FREQ = 256, O_LEVEL, O_LEVEL2, O_HARM, O_TWO, O_STEP, O_SILENCE, O_CARRIER, O_DEPTH, O_MODF,
           O_POS, O_NEG, O_OVERMOD, O_IQ, O_LEAD, O_NOISE, O_CNR, O_HUM, O_HUML, O_HUMD, O_HUMH, O_SECONDS,
           O_RATE, O_BITS, O_SEED, O_CLIP, O_OUT, O_PLAY, O_DEVICE, O_FORCE, O_FREQS, O_LEVELS, O_STEP_S,
           O_PAUSE_S, O_IMD };
    static const struct option longopts[] = {
        {"freq", required_argument, NULL, O_FREQ},         {"level", required_argument, NULL, O_LEVEL},
        {"level2", required_argument, NULL, O_LEVEL2},     {"harmonic", required_argument, NULL, O_HARM},
        {"two-tone", required_argument, NULL, O_TWO},      {"step", required_argument, NULL, O_STEP},
        {"silence", no_argument, NULL, O_SILENCE},         {"carrier", required_argument, NULL, O_CARRIER},
        {"depth", required_argument, NULL, O_DEPTH},       {"mod-freq", required_argument, NULL, O_MODF},
        {"positive-peak", required_argument, NULL, O_POS}, {"negative-peak", required_argument, NULL, O_NEG},
        {"overmod", required_argument, NULL, O_OVERMOD},   {"iq", no_argument, NULL, O_IQ},
        {"lead-in", required_argument, NULL, O_LEAD},      {"noise", required_argument, NULL, O_NOISE},
        {"cnr", required_argument, NULL, O_CNR},           {"hum", required_argument, NULL, O_HUM},
        {"hum-level", required_argument, NULL, O_HUML},    {"hum-depth", required_argument, NULL, O_HUMD},
        {"hum-harmonic", required_argument, NULL, O_HUMH}, {"seconds", required_argument, NULL, O_SECONDS},
        {"rate", required_argument, NULL, O_RATE},         {"bits", required_argument, NULL, O_BITS},
        {"seed", required_argument, NULL, O_SEED},         {"allow-clip", no_argument, NULL, O_CLIP},
        {"out", required_argument, NULL, O_OUT},           {"help", no_argument, NULL, 'h'},
        {"play", no_argument, NULL, O_PLAY},               {"device", required_argument, NULL, O_DEVICE},
        {"force", no_argument, NULL, O_FORCE},             {"freqs", required_argument, NULL, O_FREQS},
        {"levels", required_argument, NULL, O_LEVELS},
        {"step-seconds", required_argument, NULL, O_STEP_S},
        {"pause-seconds", required_argument, NULL, O_PAUSE_S}, {"imd", required_argument, NULL, O_IMD},
        {NULL, 0, NULL, 0},
    };
    memset(o, 0, sizeof *o);
    o->rate_hz = 48000;
    o->syn = ml_synth_config_default((double)o->rate_hz);
    o->seconds = 10.0;
    o->encoding = ML_SINK_PCM_24;
    o->plan = ml_plan_opts_default();
    opterr = 0;
    optind = 1;
    int ch, rc;
    double v, l[3];
    long n;
    ml_synth_config *s = &o->syn;
    while ((ch = getopt_long(argc, argv, ":h", longopts, NULL)) != -1) {
        switch (ch) {
        case O_FREQ:
            if (!ml_cli_number(optarg, &v) || v <= 0)
                return ml_cli_error("--freq: '%s' is not a frequency in Hz > 0", optarg);
            s->freq_hz = v;
            o->freq_given = true;
            break;
        case O_LEVEL:
            if (!ml_cli_number(optarg, &v) || v < -300 || v > 40)
                return ml_cli_error("--level: '%s' is not a level in dBFS, -300..40", optarg);
            s->level_dbfs = v;
            o->level_given = true;
            break;
        case O_LEVEL2:
            if (!ml_cli_number(optarg, &v) || v < -300 || v > 40)
                return ml_cli_error("--level2: '%s' is not a level in dBFS, -300..40", optarg);
            s->level2_dbfs = v;
            o->level2_given = true;
            break;
        case O_HARM:
            if ((rc = add_harmonic(s->harmonics, &s->nharmonics, optarg, "--harmonic")) != 0)
                return rc;
            break;
        case O_TWO:
            if (!parse_list(optarg, l, 2) || l[0] <= 0 || l[1] <= 0 || l[0] == l[1])
                return ml_cli_error("--two-tone: '%s' is not F1,F2: two different frequencies in Hz > 0",
                                    optarg);
            s->freq_hz = l[0];
            s->freq2_hz = l[1];
            o->two_tone = true;
            break;
        case O_STEP:
            if (!parse_list(optarg, l, 3) || l[0] < 0 || l[1] < -300 || l[1] > 40 || l[2] <= 0
                || l[2] > MAX_SECONDS)
                return ml_cli_error("--step: '%s' is not F,L,S: Hz >= 0, dBFS -300..40, seconds 0..%.0f",
                                    optarg, MAX_SECONDS);
            if (s->nsteps >= ML_SYNTH_MAX_STEPS)
                return ml_cli_error("--step: at most %d steps", ML_SYNTH_MAX_STEPS);
            s->steps[s->nsteps++] = (ml_synth_step){l[0], l[1], l[2]};
            break;
        case O_SILENCE: o->silence = true; break;
        case O_CARRIER:
            if (!ml_cli_number(optarg, &v))
                return ml_cli_error("--carrier: '%s' is not a frequency in Hz", optarg);
            s->carrier_hz = v;
            o->carrier_given = true;
            break;
        case O_DEPTH:
            if (!ml_cli_number(optarg, &v) || v < 0 || v > 10)
                return ml_cli_error("--depth: '%s' is not a depth 0..10 (0.8 = 80 %%)", optarg);
            o->depth = v;
            o->depth_given = true;
            break;
        case O_MODF:
            if (!ml_cli_number(optarg, &v) || v <= 0)
                return ml_cli_error("--mod-freq: '%s' is not a frequency in Hz > 0", optarg);
            s->mod_freq_hz = v;
            o->mod_given = true;
            break;
        case O_POS:
            if (!ml_cli_number(optarg, &v) || v < 0 || v > 1000)
                return ml_cli_error("--positive-peak: '%s' is not a percentage 0..1000", optarg);
            s->depth_pos = v / 100;
            o->pos_given = true;
            break;
        case O_NEG:
            /* The negative peak is often written with its sign (-90 %): accept both forms. */
            if (!ml_cli_number(optarg, &v) || fabs(v) > 1000)
                return ml_cli_error("--negative-peak: '%s' is not a percentage 0..1000", optarg);
            s->depth_neg = fabs(v) / 100;
            o->neg_given = true;
            break;
        case O_OVERMOD:
            if (strcmp(optarg, "pinch") == 0) s->overmod = ML_OVERMOD_PINCH;
            else if (strcmp(optarg, "reverse") == 0) s->overmod = ML_OVERMOD_REVERSE;
            else return ml_cli_error("--overmod: '%s' is not pinch or reverse", optarg);
            o->overmod_given = true;
            break;
        case O_IQ: s->iq = true; o->iq_given = true; break;
        case O_LEAD:
            if (!ml_cli_number(optarg, &v) || v < 0 || v > MAX_SECONDS)
                return ml_cli_error("--lead-in: '%s' is not a time in seconds, 0..%.0f", optarg, MAX_SECONDS);
            s->lead_in_s = v;
            o->lead_given = true;
            break;
        case O_NOISE:
            if (!ml_cli_number(optarg, &v) || v < -300 || v > 40)
                return ml_cli_error("--noise: '%s' is not a level in dBFS, -300..40", optarg);
            s->noise_dbfs = v;
            break;
        case O_CNR:
            if (!ml_cli_number(optarg, &v) || v < -100 || v > 300)
                return ml_cli_error("--cnr: '%s' is not a ratio in dB, -100..300", optarg);
            s->cnr_db = v;
            o->cnr_given = true;
            break;
        case O_HUM:
            if (strcmp(optarg, "50") == 0 || strcmp(optarg, "60") == 0 || strcmp(optarg, "100") == 0
                || strcmp(optarg, "120") == 0)
                s->hum_hz = atof(optarg);
            else
                return ml_cli_error("--hum: '%s' is not 50, 60, 100 or 120", optarg);
            break;
        case O_HUML:
            if (!ml_cli_number(optarg, &v) || v < -300 || v > 40)
                return ml_cli_error("--hum-level: '%s' is not a level in dBFS, -300..40", optarg);
            s->hum_level_dbfs = v;
            o->hum_level_given = true;
            break;
        case O_HUMD:
            if (!ml_cli_number(optarg, &v) || v < -300 || v > 0)
                return ml_cli_error("--hum-depth: '%s' is not a depth in dB re 100 %%, -300..0", optarg);
            s->hum_depth_db = v;
            o->hum_depth_given = true;
            break;
        case O_HUMH:
            if ((rc = add_harmonic(s->hum_harmonics, &s->nhum_harmonics, optarg, "--hum-harmonic")) != 0)
                return rc;
            break;
        case O_SECONDS:
            if (!ml_cli_number(optarg, &v) || v <= 0 || v > MAX_SECONDS)
                return ml_cli_error("--seconds: '%s' is not a length in seconds, 0..%.0f", optarg,
                                    MAX_SECONDS);
            o->seconds = v;
            o->seconds_given = true;
            break;
        case O_RATE:
            if (!ml_cli_int(optarg, &n) || n < 1 || n > 100000000)
                return ml_cli_error("--rate: '%s' is not a sample rate in Hz, 1..100000000", optarg);
            o->rate_hz = n;
            break;
        case O_BITS:
            if (strcmp(optarg, "16") == 0) o->encoding = ML_SINK_PCM_16;
            else if (strcmp(optarg, "24") == 0) o->encoding = ML_SINK_PCM_24;
            else if (strcmp(optarg, "32f") == 0 || strcmp(optarg, "float") == 0) o->encoding = ML_SINK_FLOAT;
            else return ml_cli_error("--bits: '%s' is not 16, 24 or 32f", optarg);
            break;
        case O_SEED:
            if (!ml_cli_int(optarg, &n) || n < 0)
                return ml_cli_error("--seed: '%s' is not a whole number >= 0", optarg);
            s->seed = (uint64_t)n;
            break;
        case O_CLIP: o->allow_clip = true; break;
        case O_OUT: o->out = optarg; break;
        case O_PLAY: o->play = true; break;
        case O_FORCE: o->force = true; break;
        case O_DEVICE: o->device = optarg; break;
        case O_FREQS: case O_LEVELS: case O_STEP_S: case O_PAUSE_S:
            for (size_t i = 0; longopts[i].name; i++)
                if (longopts[i].val == ch && (rc = ml_plan_apply(&o->plan, longopts[i].name, optarg)) != 0)
                    return rc;
            break;
        case O_IMD:
            o->imd = 0;
            for (int i = 0; i < 3; i++)
                if (strcmp(optarg, imd_signals[i].name) == 0)
                    o->imd = i + 1;
            if (o->imd == 0)
                return ml_cli_error("--imd: '%s' is not smpte, din or dfd", optarg);
            break;
        case 'h': tone_usage(stdout); return -1;
        case ':': case '?': return ml_cli_bad_option(ch, argv, "tone");
        default: return ml_cli_error("tone: unhandled option");
        }
    }
    if (optind < argc)
        return ml_cli_error("tone takes no arguments; unexpected '%s' (the file goes after --out)",
                            argv[optind]);
    return 0;
}

/* --freqs ...: the plan as the synth's steps (the sequence sweep --device plays). */
static int plan_steps(tone_opts *o)
{
    if (!o->plan.given)
        return 0;
    ml_synth_config *s = &o->syn;
    int rc = ml_plan_finish(&o->plan, (double)o->rate_hz, NULL);
    if (rc != 0)
        return rc;
    if (ml_step_plan_entries(&o->plan.plan) > ML_SYNTH_MAX_STEPS)
        return ml_cli_error("the plan has %zu tones and pauses; at most %d (fewer frequencies or levels)",
                            ml_step_plan_entries(&o->plan.plan), ML_SYNTH_MAX_STEPS);
    if (ml_step_plan_to_synth(&o->plan.plan, (double)o->rate_hz, s->steps, ML_SYNTH_MAX_STEPS, &s->nsteps)
        != ML_OK)
        return ml_cli_error("the plan cannot be written at %ld Hz", o->rate_hz);
    return 0;
}

/* --imd: the standard's two tones (or --two-tone's frequencies) at its ratio. */
static int imd_tones(tone_opts *o)
{
    if (o->imd == 0)
        return 0;
    ml_synth_config *s = &o->syn;
    if (o->level2_given)
        return ml_cli_error("--level2: --imd sets the second tone's level by its standard (use --two-tone "
                            "alone for other levels)");
    if (!o->two_tone) {
        s->freq_hz = imd_signals[o->imd - 1].f1_hz;
        s->freq2_hz = imd_signals[o->imd - 1].f2_hz;
    }
    s->level2_dbfs = s->level_dbfs + imd_signals[o->imd - 1].rel2_db;
    o->two_tone = true;
    o->level2_given = true;
    return 0;
}

/* Cross-option rules, the signal kind and everything that depends on the sample rate. */
static int check_tone(tone_opts *o)
{
    ml_synth_config *s = &o->syn;
    const double rate = (double)o->rate_hz, ny = rate / 2;
    s->rate_hz = rate;
    const int kinds =
        (o->two_tone || o->imd) + o->silence + (s->nsteps > 0) + o->carrier_given + o->plan.given;
    if (kinds > 1)
        return ml_cli_error("choose one signal: --two-tone (or --imd), --step, --freqs, --silence or "
                            "--carrier");
    if (o->plan.given && !o->plan.freqs_given)
        return ml_cli_error("--levels, --step-seconds and --pause-seconds belong to a plan: give --freqs");
    int rc = plan_steps(o);
    if (rc != 0 || (rc = imd_tones(o)) != 0)
        return rc;
    s->kind = o->two_tone ? ML_SYNTH_TWO_TONE
              : o->silence ? ML_SYNTH_SILENCE
              : s->nsteps > 0 ? ML_SYNTH_STEPS
              : o->carrier_given ? ML_SYNTH_AM : ML_SYNTH_SINE;
    const bool am = s->kind == ML_SYNTH_AM;
    if (o->freq_given && s->kind != ML_SYNTH_SINE)
        return ml_cli_error("--freq sets a single tone; it cannot be combined with %s",
                            am ? "--carrier (use --mod-freq for the modulating tone)" : "another signal");
    if (o->level_given && (s->kind == ML_SYNTH_STEPS || s->kind == ML_SYNTH_SILENCE))
        return ml_cli_error("--level does not apply to %s",
                            s->kind == ML_SYNTH_STEPS ? "--step (each step has its level)" : "--silence");
    if (o->level2_given && s->kind != ML_SYNTH_TWO_TONE)
        return ml_cli_error("--level2 needs --two-tone");
    if (s->nharmonics > 0 && (s->kind == ML_SYNTH_TWO_TONE || s->kind == ML_SYNTH_SILENCE))
        return ml_cli_error("--harmonic applies to a single tone, --step or --carrier");
    const struct {
        bool given;
        const char *name;
    } am_only[] = {
        {o->depth_given, "--depth"},         {o->mod_given, "--mod-freq"},
        {o->pos_given, "--positive-peak"},   {o->neg_given, "--negative-peak"},
        {o->overmod_given, "--overmod"},     {o->iq_given, "--iq"},
        {o->lead_given, "--lead-in"},        {o->cnr_given, "--cnr"},
        {o->hum_depth_given, "--hum-depth"},
    };
    for (size_t i = 0; i < sizeof am_only / sizeof am_only[0]; i++)
        if (!am && am_only[i].given)
            return ml_cli_error("%s needs --carrier", am_only[i].name);
    if (isfinite(s->noise_dbfs) && o->cnr_given)
        return ml_cli_error("give either --noise or --cnr, not both");
    if (s->hum_hz == 0 && (o->hum_level_given || o->hum_depth_given || s->nhum_harmonics > 0))
        return ml_cli_error("--hum-level, --hum-depth and --hum-harmonic need --hum 50|60|100|120");
    if (s->hum_hz > 0 && !o->hum_level_given && !o->hum_depth_given)
        return ml_cli_error("--hum needs --hum-level DBFS%s", am ? " and/or --hum-depth DB" : "");

    if (o->two_tone && !o->level2_given)
        s->level2_dbfs = s->level_dbfs;
    if (am && o->depth_given) {
        if (!o->pos_given)
            s->depth_pos = o->depth;
        if (!o->neg_given)
            s->depth_neg = o->depth;
    }

    /* Frequencies against the sample rate (the generator checks again; these say why). */
    if ((s->kind == ML_SYNTH_SINE || s->kind == ML_SYNTH_TWO_TONE) && s->freq_hz >= ny)
        return ml_cli_error("--%s %g Hz is not below half the sample rate (%g Hz)",
                            o->two_tone ? "two-tone" : "freq", s->freq_hz, ny);
    if (s->kind == ML_SYNTH_TWO_TONE && s->freq2_hz >= ny)
        return ml_cli_error("--two-tone %g Hz is not below half the sample rate (%g Hz)", s->freq2_hz, ny);
    for (size_t i = 0; i < s->nsteps; i++)
        if (s->steps[i].freq_hz >= ny)
            return ml_cli_error("--step %zu: %g Hz is not below half the sample rate (%g Hz)", i + 1,
                                s->steps[i].freq_hz, ny);
    if (am && s->mod_freq_hz >= ny)
        return ml_cli_error("--mod-freq %g Hz is not below half the sample rate (%g Hz)", s->mod_freq_hz, ny);
    if (s->hum_hz >= ny)
        return ml_cli_error("--hum %g Hz is not below half the sample rate (%g Hz)", s->hum_hz, ny);
    double base = am ? s->mod_freq_hz : s->freq_hz;
    for (size_t i = 0; i < s->nsteps; i++)
        base = i == 0 ? s->steps[i].freq_hz : fmax(base, s->steps[i].freq_hz);
    for (size_t i = 0; i < s->nharmonics; i++)
        if (s->harmonics[i].order * base >= ny)
            return ml_cli_error("--harmonic %d: %g Hz is not below half the sample rate (%g Hz)",
                                s->harmonics[i].order, s->harmonics[i].order * base, ny);
    for (size_t i = 0; i < s->nhum_harmonics; i++)
        if (s->hum_harmonics[i].order * s->hum_hz >= ny)
            return ml_cli_error("--hum-harmonic %d: %g Hz is not below half the sample rate (%g Hz)",
                                s->hum_harmonics[i].order, s->hum_harmonics[i].order * s->hum_hz, ny);
    if (am) {
        double b = s->mod_freq_hz;
        for (size_t i = 0; i < s->nharmonics; i++)
            b = fmax(b, s->harmonics[i].order * s->mod_freq_hz);
        if (o->hum_depth_given) {
            b = fmax(b, s->hum_hz);
            for (size_t i = 0; i < s->nhum_harmonics; i++)
                b = fmax(b, s->hum_harmonics[i].order * s->hum_hz);
        }
        if (s->iq ? !(fabs(s->carrier_hz) + b < ny) : !(s->carrier_hz - b > 0 && s->carrier_hz + b < ny))
            return ml_cli_error("--carrier %g Hz: the sidebands reach %g..%g Hz, outside %s Hz",
                                s->carrier_hz, s->carrier_hz - b, s->carrier_hz + b,
                                s->iq ? "the I/Q band -rate/2..rate/2" : "the real band 0..rate/2");
        if (s->lead_in_s >= o->seconds)
            return ml_cli_error("--lead-in %g s leaves nothing of --seconds %g s to modulate", s->lead_in_s,
                                o->seconds);
    }
    return 0;
}

static volatile sig_atomic_t interrupted;

static void on_signal(int sig)
{
    (void)sig;
    interrupted = 1;
}

/* Generates nframes into the sink. Returns an exit status, printing its own error. */
static int generate(const tone_opts *o, ml_synth *syn, ml_sink *sink, uint64_t nframes)
{
    const size_t nch = ml_synth_channels(syn);
    float *buf = malloc((size_t)BLOCK_FRAMES * nch * sizeof *buf);
    if (buf == NULL) {
        ml_cli_error("%s: out of memory", o->out);
        return ML_EXIT_FAIL;
    }
    const bool show = isatty(STDERR_FILENO) && nframes > (uint64_t)(60 * o->rate_hz);
    bool shown = false;
    int rc = ML_EXIT_OK;
    uint64_t done = 0, next_report = 0;
    while (done < nframes) {
        if (interrupted) {
            ml_cli_error("%s: interrupted; nothing written", o->out);
            rc = ML_EXIT_FAIL;
            break;
        }
        const size_t want = nframes - done < BLOCK_FRAMES ? (size_t)(nframes - done) : BLOCK_FRAMES;
        ml_synth_generate(syn, buf, want);
        ml_status st = ml_sink_write(sink, buf, want);
        if (st != ML_OK) {
            ml_cli_error("%s: %s: %s", o->out, ml_strerror(st), ml_sink_detail(sink));
            rc = ML_EXIT_FAIL;
            break;
        }
        done += want;
        if (show && done >= next_report) {
            fprintf(stderr, "\rmodlens: tone %3.0f%%", 100.0 * (double)done / (double)nframes);
            shown = true;
            next_report = done + nframes / 100;
        }
    }
    if (shown)
        fprintf(stderr, "\r%*s\r", 30, "");
    free(buf);
    return rc;
}

/* Plays the signal until nframes (0: until a signal) or an interrupt. Returns an exit status. */
static int play(const tone_opts *o, ml_synth *syn, uint64_t nframes)
{
    char err[512];
    ml_player_config pc = {o->device, (double)o->rate_hz, (int)ml_synth_channels(syn), 2.0};
    ml_player *p = NULL;
    ml_status st = ml_player_open(&pc, &p, err, sizeof err);
    if (st != ML_OK)
        return ml_cli_error("%s: %s", o->device ? o->device : "default output", err);
    const size_t nch = ml_synth_channels(syn);
    float *buf = malloc((size_t)BLOCK_FRAMES * nch * sizeof *buf);
    int rc = ML_EXIT_OK;
    if (buf == NULL) {
        ml_player_close(p, false);
        return ml_cli_error("out of memory");
    }
    uint64_t done = 0;
    while ((nframes == 0 || done < nframes) && !interrupted) {
        const size_t want = nframes && nframes - done < BLOCK_FRAMES ? (size_t)(nframes - done) : BLOCK_FRAMES;
        ml_synth_generate(syn, buf, want);
        if (ml_player_write(p, buf, want) != ML_OK) {
            rc = ml_cli_error("%s: %s after %.2f s", o->device ? o->device : "default output",
                              ml_player_detail(p), (double)done / (double)o->rate_hz);
            break;
        }
        done += want;
    }
    const uint64_t under = ml_player_underflows(p);
    ml_player_close(p, rc == ML_EXIT_OK && !interrupted);
    if (under > 0)
        fprintf(stderr, "modlens: tone: the output ran dry for %llu frames\n", (unsigned long long)under);
    free(buf);
    return rc;
}

/* AM without --level: the carrier level that puts the highest envelope peak at AUTO_PEAK_DBFS. */
static int auto_level(ml_synth_config *s)
{
    ml_synth_config probe = *s;
    probe.level_dbfs = 0.0; /* A = 1: ml_synth_peak = E + additive hum */
    ml_synth *q = NULL;
    if (ml_synth_create(&probe, &q) != ML_OK)
        return ml_cli_error("the signal settings are inconsistent (check frequencies against --rate)");
    const double env = ml_synth_envelope_peak(q), add = ml_synth_peak(q) - env;
    ml_synth_destroy(q);
    const double a = (pow(10.0, AUTO_PEAK_DBFS / 20) - add) / env;
    if (!(a > 0))
        return ml_cli_error("--hum-level leaves no room for the carrier below %.0f dBFS; give --level",
                            AUTO_PEAK_DBFS);
    s->level_dbfs = 20 * log10(a);
    return 0;
}

/* The generator for the options: AM level, consistency and full-scale checks. */
static int make_synth(tone_opts *o, ml_synth **syn)
{
    ml_synth_config *s = &o->syn;
    int rc;
    *syn = NULL;
    if (s->kind == ML_SYNTH_AM && !o->level_given && (rc = auto_level(s)) != 0)
        return rc;
    if (ml_synth_create(s, syn) != ML_OK)
        return ml_cli_error("the signal settings are inconsistent (check frequencies and steps "
                            "against --rate)");
    const double peak = ml_synth_peak(*syn);
    if (peak > 1.0 + 1e-9 && !o->allow_clip) {
        ml_synth_destroy(*syn);
        *syn = NULL;
        return ml_cli_error("the signal peaks at %+.2f dBFS, above full scale; lower the levels or give "
                            "--allow-clip", 20 * log10(peak));
    }
    if (s->kind == ML_SYNTH_AM && !o->level_given)
        fprintf(stderr, "modlens: tone: carrier level %.2f dBFS (envelope peak at %.0f dBFS)\n",
                s->level_dbfs, AUTO_PEAK_DBFS);
    return 0;
}

static void catch_signals(struct sigaction *old_int, struct sigaction *old_term)
{
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigemptyset(&sa.sa_mask);
    interrupted = 0;
    sigaction(SIGINT, &sa, old_int);
    sigaction(SIGTERM, &sa, old_term);
}

/* tone --play: until --seconds or an interrupt. */
static int play_main(tone_opts *o)
{
    ml_synth *syn = NULL;
    int rc = make_synth(o, &syn);
    if (rc != 0)
        return rc;
    const uint64_t nframes = o->seconds_given ? (uint64_t)llround(o->seconds * (double)o->rate_hz) : 0;
    if (o->seconds_given && nframes == 0) {
        ml_synth_destroy(syn);
        return ml_cli_error("--seconds %g gives no frame at %ld Hz", o->seconds, o->rate_hz);
    }
    struct sigaction old_int, old_term;
    catch_signals(&old_int, &old_term);
    rc = play(o, syn, nframes);
    sigaction(SIGINT, &old_int, NULL);
    sigaction(SIGTERM, &old_term, NULL);
    ml_synth_destroy(syn);
    return rc;
}

static int tone_write(tone_opts *op, const ml_sink_config *scp, ml_output_set *set, ml_output *out);

static int card_test_main(int argc, char **argv);

int ml_cmd_tone(int argc, char **argv)
{
    for (int i = 1; i < argc; i++) /* the card test is an option block of its own */
        if (strcmp(argv[i], "--card-test") == 0)
            return card_test_main(argc, argv);
    tone_opts o;
    int rc = parse_tone(argc, argv, &o);
    if (rc != 0)
        return rc < 0 ? ML_EXIT_OK : rc;
    if ((rc = check_tone(&o)) != 0)
        return rc;

    if (o.play && o.out)
        return ml_cli_error("--play and --out exclude each other");
    if (!o.play && o.device)
        return ml_cli_error("--device needs --play");
    if (o.play && o.force)
        return ml_cli_error("--force applies to --out, not to --play");
    if (o.play)
        return play_main(&o);
    /* Output name and format first: nothing is generated for an unwritable request. */
    if (o.out == NULL)
        return ml_cli_error("--out FILE is required (try 'modlens tone --help')");
    if (strcmp(o.out, "-") == 0)
        return ml_cli_error("--out: standard output cannot hold a seekable audio file; give a file name");
    ml_sink_config sc = ml_sink_config_default((int)o.rate_hz, o.syn.kind == ML_SYNTH_AM && o.syn.iq ? 2 : 1);
    sc.encoding = o.encoding;
    if (ml_sink_container_from_path(o.out, &sc.container) != ML_OK)
        return ml_cli_error("--out: '%s' does not end in .wav or .flac", o.out);
    char err[512];
    if (ml_sink_check(&sc, err, sizeof err) != ML_OK)
        return ml_cli_error("%s: %s", o.out, err);
    ml_output_set *set = NULL;
    ml_output *out = NULL;
    const char *bad = "";
    if (ml_output_set_create(&set) != ML_OK || ml_output_set_add(set, o.out, "the signal (--out)", 0, &out) != ML_OK) {
        ml_output_set_destroy(set);
        return ml_cli_error("out of memory");
    }
    if (ml_output_set_check(set, &bad, err, sizeof err) != ML_OK) {
        ml_output_set_destroy(set);
        return ml_cli_error("%s: %s", bad, err);
    }
    if (ml_output_exists(out) && !o.force) {
        ml_output_set_destroy(set);
        return ml_cli_error("%s: the file exists; give --force to replace it", o.out);
    }
    rc = tone_write(&o, &sc, set, out);
    ml_output_set_destroy(set); /* removes the temporary unless it was published */
    return rc;
}

/* Generates the signal into the checked output and publishes it; an exit status. */
static int tone_write(tone_opts *op, const ml_sink_config *scp, ml_output_set *set, ml_output *out)
{
    tone_opts o = *op;
    const ml_sink_config sc = *scp;
    char err[512];
    int rc;

    ml_synth_config *s = &o.syn;
    uint64_t nframes = (uint64_t)llround(o.seconds * (double)o.rate_hz);
    ml_synth *syn = NULL;
    if ((rc = make_synth(&o, &syn)) != 0)
        return rc;
    if (s->kind == ML_SYNTH_STEPS && !o.seconds_given)
        nframes = ml_synth_cycle_frames(syn);
    if (nframes == 0) {
        ml_synth_destroy(syn);
        return ml_cli_error("--seconds %g gives no frame at %ld Hz", o.seconds, o.rate_hz);
    }
    if (sc.container == ML_SINK_WAV && (double)nframes * (double)ml_sink_frame_bytes(&sc) > WAV_MAX_DATA) {
        ml_synth_destroy(syn);
        return ml_cli_error("%s: %.0f s do not fit in a WAV file (4 GiB); use a .flac name or fewer "
                            "--seconds", o.out, (double)nframes / (double)o.rate_hz);
    }
    FILE *f = NULL;
    if (ml_output_begin(out, &f, err, sizeof err) != ML_OK) {
        ml_synth_destroy(syn);
        return ml_cli_error("%s: %s", o.out, err);
    }
    ml_sink *sink = NULL;
    ml_status st = ml_sink_open_fd(fileno(f), &sc, &sink, err, sizeof err);
    if (st != ML_OK) {
        ml_synth_destroy(syn);
        return ml_cli_error("%s: %s%s%s", o.out, ml_strerror(st), err[0] ? ": " : "", err);
    }

    struct sigaction old_int, old_term;
    catch_signals(&old_int, &old_term);
    rc = generate(&o, syn, sink, nframes);
    st = ml_sink_close(sink, err, sizeof err);
    if (rc == ML_EXIT_OK && st != ML_OK) {
        ml_cli_error("%s: %s: %s", o.out, ml_strerror(st), err);
        rc = ML_EXIT_FAIL;
    }
    if (rc == ML_EXIT_OK && ml_output_end(out, err, sizeof err) != ML_OK) {
        ml_cli_error("%s: %s", o.out, err);
        rc = ML_EXIT_FAIL;
    }
    const char *bad = "";
    if (rc == ML_EXIT_OK && ml_output_set_commit(set, &bad, err, sizeof err) != ML_OK) {
        ml_cli_error("%s: %s", bad, err);
        rc = ML_EXIT_FAIL;
    }
    sigaction(SIGINT, &old_int, NULL);
    sigaction(SIGTERM, &old_term, NULL);
    ml_synth_destroy(syn);
    return rc;
}

/* ---- tone --card-test: the sound card's loopback test signal (dsp/card.h) -------------------- */

typedef struct {
    const char *out, *device;
    long rate_hz;
    ml_sink_encoding encoding;
    uint64_t seed;
    bool play, force;
} card_test_opts;

static int card_test_parse(int argc, char **argv, card_test_opts *o)
{
    enum { C_TEST = 256, C_OUT, C_PLAY, C_DEVICE, C_RATE, C_BITS, C_SEED, C_FORCE };
    static const struct option longopts[] = {
        {"card-test", no_argument, NULL, C_TEST},     {"out", required_argument, NULL, C_OUT},
        {"play", no_argument, NULL, C_PLAY},          {"device", required_argument, NULL, C_DEVICE},
        {"rate", required_argument, NULL, C_RATE},    {"bits", required_argument, NULL, C_BITS},
        {"seed", required_argument, NULL, C_SEED},    {"force", no_argument, NULL, C_FORCE},
        {"help", no_argument, NULL, 'h'},             {NULL, 0, NULL, 0},
    };
    *o = (card_test_opts){.rate_hz = 48000, .encoding = ML_SINK_PCM_24, .seed = 1};
    opterr = 0;
    optind = 1;
    int ch;
    long n;
    while ((ch = getopt_long(argc, argv, ":h", longopts, NULL)) != -1) {
        switch (ch) {
        case C_TEST: break;
        case C_OUT: o->out = optarg; break;
        case C_PLAY: o->play = true; break;
        case C_DEVICE: o->device = optarg; break;
        case C_FORCE: o->force = true; break;
        case C_RATE:
            if (!ml_cli_int(optarg, &n) || n < (long)ML_CARD_MIN_RATE_HZ || n > (long)ML_CARD_MAX_RATE_HZ)
                return ml_cli_error("--rate: '%s' is not a sample rate in Hz, %.0f..%.0f", optarg,
                                    ML_CARD_MIN_RATE_HZ, ML_CARD_MAX_RATE_HZ);
            o->rate_hz = n;
            break;
        case C_BITS:
            if (strcmp(optarg, "16") == 0) o->encoding = ML_SINK_PCM_16;
            else if (strcmp(optarg, "24") == 0) o->encoding = ML_SINK_PCM_24;
            else if (strcmp(optarg, "32f") == 0 || strcmp(optarg, "float") == 0) o->encoding = ML_SINK_FLOAT;
            else return ml_cli_error("--bits: '%s' is not 16, 24 or 32f", optarg);
            break;
        case C_SEED:
            if (!ml_cli_int(optarg, &n) || n < 0)
                return ml_cli_error("--seed: '%s' is not a whole number >= 0", optarg);
            o->seed = (uint64_t)n;
            break;
        case 'h': tone_usage(stdout); return -1;
        case ':': return ml_cli_bad_option(ch, argv, "tone");
        case '?':
            return optopt ? ml_cli_bad_option(ch, argv, "tone")
                          : ml_cli_error("%s does not apply to --card-test (try 'modlens tone --help')",
                                         argv[optind - 1]);
        default: return ml_cli_error("tone: unhandled option");
        }
    }
    if (optind < argc)
        return ml_cli_error("tone takes no arguments; unexpected '%s' (the file goes after --out)",
                            argv[optind]);
    if (o->play == (o->out != NULL))
        return ml_cli_error("--card-test needs either --out FILE or --play");
    if (!o->play && o->device)
        return ml_cli_error("--device needs --play");
    if (o->play && o->force)
        return ml_cli_error("--force applies to --out, not to --play");
    return 0;
}

/* Generates the whole signal into the sink or player (one of them). */
static int card_test_run(const card_test_opts *o, ml_cardgen *gen, ml_sink *sink, ml_player *player)
{
    float buf[2 * BLOCK_FRAMES];
    const uint64_t total = ml_cardgen_frames(gen);
    for (uint64_t done = 0; done < total && !interrupted;) {
        const size_t want = total - done < BLOCK_FRAMES ? (size_t)(total - done) : BLOCK_FRAMES;
        ml_cardgen_generate(gen, buf, want);
        if (sink && ml_sink_write(sink, buf, want) != ML_OK)
            return ml_cli_error("%s: %s", o->out, ml_sink_detail(sink));
        if (player && ml_player_write(player, buf, want) != ML_OK)
            return ml_cli_error("%s: %s", o->device ? o->device : "default output", ml_player_detail(player));
        done += want;
    }
    if (interrupted)
        return ml_cli_error("%s: interrupted%s", o->out ? o->out : "tone", o->out ? "; nothing written" : "");
    return 0;
}

static int card_test_play(const card_test_opts *o, ml_cardgen *gen)
{
    char err[512];
    ml_player_config pc = {o->device, (double)o->rate_hz, 2, 2.0};
    ml_player *p = NULL;
    if (ml_player_open(&pc, &p, err, sizeof err) != ML_OK)
        return ml_cli_error("%s: %s", o->device ? o->device : "default output", err);
    const int rc = card_test_run(o, gen, NULL, p);
    ml_player_close(p, rc == 0);
    return rc;
}

static int card_test_write(const card_test_opts *o, ml_cardgen *gen)
{
    ml_sink_config sc = ml_sink_config_default((int)o->rate_hz, 2);
    sc.encoding = o->encoding;
    char err[512];
    const char *bad = "";
    if (ml_sink_container_from_path(o->out, &sc.container) != ML_OK)
        return ml_cli_error("--out: '%s' does not end in .wav or .flac", o->out);
    if (ml_sink_check(&sc, err, sizeof err) != ML_OK)
        return ml_cli_error("%s: %s", o->out, err);
    ml_output_set *set = NULL;
    ml_output *out = NULL;
    FILE *f = NULL;
    ml_sink *sink = NULL;
    int rc = 0;
    if (ml_output_set_create(&set) != ML_OK
        || ml_output_set_add(set, o->out, "the signal (--out)", 0, &out) != ML_OK)
        rc = ml_cli_error("out of memory");
    else if (ml_output_set_check(set, &bad, err, sizeof err) != ML_OK)
        rc = ml_cli_error("%s: %s", bad, err);
    else if (ml_output_exists(out) && !o->force)
        rc = ml_cli_error("%s: the file exists; give --force to replace it", o->out);
    else if (ml_output_begin(out, &f, err, sizeof err) != ML_OK)
        rc = ml_cli_error("%s: %s", o->out, err);
    else if (ml_sink_open_fd(fileno(f), &sc, &sink, err, sizeof err) != ML_OK)
        rc = ml_cli_error("%s: %s", o->out, err);
    if (rc == 0)
        rc = card_test_run(o, gen, sink, NULL);
    if (sink && ml_sink_close(sink, err, sizeof err) != ML_OK && rc == 0)
        rc = ml_cli_error("%s: %s", o->out, err);
    if (rc == 0 && ml_output_end(out, err, sizeof err) != ML_OK)
        rc = ml_cli_error("%s: %s", o->out, err);
    if (rc == 0 && ml_output_set_commit(set, &bad, err, sizeof err) != ML_OK)
        rc = ml_cli_error("%s: %s", bad, err);
    ml_output_set_destroy(set);
    return rc;
}

static int card_test_main(int argc, char **argv)
{
    card_test_opts o;
    int rc = card_test_parse(argc, argv, &o);
    if (rc != 0)
        return rc < 0 ? ML_EXIT_OK : rc;
    ml_cardgen_config gc = ml_cardgen_config_default((double)o.rate_hz);
    gc.dither_bits = o.encoding == ML_SINK_PCM_16 ? 16 : 24;
    gc.seed = o.seed;
    ml_cardgen *gen = NULL;
    if (ml_cardgen_create(&gc, &gen) != ML_OK)
        return ml_cli_error("out of memory");
    struct sigaction old_int, old_term;
    catch_signals(&old_int, &old_term);
    rc = o.play ? card_test_play(&o, gen) : card_test_write(&o, gen);
    sigaction(SIGINT, &old_int, NULL);
    sigaction(SIGTERM, &old_term, NULL);
    ml_cardgen_destroy(gen);
    return rc;
}
