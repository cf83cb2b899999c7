/* The option groups' defaults.
 * SPDX-License-Identifier: MIT
 */
#include "analyzer/options.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analyzer/cli.h"
#include "dsp/levels.h"

ml_input_opts ml_input_opts_default(void)
{
    return (ml_input_opts){.seconds = 5.0, .kind = ML_KIND_AUTO, .channel = 1, .duration_s = -1};
}

ml_analysis_opts ml_analysis_opts_default(void)
{
    return (ml_analysis_opts){.audio = ml_audio_config_default(),
                              .window = ML_WINDOW_HFT248D,
                              .carrier_hz = NAN,
                              .peak_hold_ms = 5.0,
                              .full_scale_dbu = NAN,
                              .cal_source = "",
                              .settings_text = "",
                              .imd = ml_imd_config_default()};
}

ml_output_opts ml_output_opts_default(void)
{
    return (ml_output_opts){.format = ML_FORMAT_TEXT};
}

/* ---- parsing -------------------------------------------------------------------------------- */

enum {
    O_KIND = ML_OPT_ID_FIRST,
    O_CHANNEL,
    O_SWAP,
    O_REFCH,
    O_START,
    O_DURATION,
    O_DEVICE,
    O_RATE,
    O_CHANNELS,
    O_SECONDS,
    O_SAVE,
    O_PLAY,
    O_OUTDEV,
    O_BAND,
    O_TONE,
    O_NOTONE,
    O_WITHTONE,
    O_HARMONICS,
    O_MAINS,
    O_WINDOW,
    O_CARRIER,
    O_BANDWIDTH,
    O_CREF,
    O_HOLD,
    O_LIMITS,
    O_FORMAT,
    O_OUTPUT,
    O_PLOT,
    O_REPORT,
    O_FSDBU,
    O_CAL,
    O_NOSET,
    O_LOAD,
    O_CARD,
    O_CARDCORR,
    O_IMD
};

static const struct {
    struct option opt;
    unsigned group;
} entries[] = {
    {{"kind", required_argument, NULL, O_KIND}, ML_OPTS_SOURCE},
    {{"channel", required_argument, NULL, O_CHANNEL}, ML_OPTS_SOURCE},
    {{"swap-iq", no_argument, NULL, O_SWAP}, ML_OPTS_SOURCE},
    {{"reference-channel", required_argument, NULL, O_REFCH}, ML_OPTS_SOURCE},
    {{"start", required_argument, NULL, O_START}, ML_OPTS_SEGMENT},
    {{"duration", required_argument, NULL, O_DURATION}, ML_OPTS_SEGMENT},
    {{"device", required_argument, NULL, O_DEVICE}, ML_OPTS_DEVICE},
    {{"rate", required_argument, NULL, O_RATE}, ML_OPTS_DEVICE},
    {{"channels", required_argument, NULL, O_CHANNELS}, ML_OPTS_DEVICE},
    {{"seconds", required_argument, NULL, O_SECONDS}, ML_OPTS_DEVICE},
    {{"save", required_argument, NULL, O_SAVE}, ML_OPTS_CAPTURE},
    {{"play-tone", required_argument, NULL, O_PLAY}, ML_OPTS_CAPTURE},
    {{"output-device", required_argument, NULL, O_OUTDEV}, ML_OPTS_CAPTURE},
    {{"play-device", required_argument, NULL, O_OUTDEV}, ML_OPTS_CAPTURE}, /* the same option */
    {{"band", required_argument, NULL, O_BAND}, ML_OPTS_AUDIO},
    {{"tone", required_argument, NULL, O_TONE}, ML_OPTS_AUDIO},
    {{"no-tone", no_argument, NULL, O_NOTONE}, ML_OPTS_AUDIO},
    {{"with-tone", no_argument, NULL, O_WITHTONE}, ML_OPTS_AUDIO},
    {{"harmonics", required_argument, NULL, O_HARMONICS}, ML_OPTS_AUDIO},
    {{"mains", required_argument, NULL, O_MAINS}, ML_OPTS_AUDIO},
    {{"window", required_argument, NULL, O_WINDOW}, ML_OPTS_AUDIO},
    {{"carrier", required_argument, NULL, O_CARRIER}, ML_OPTS_MODULATION},
    {{"bandwidth", required_argument, NULL, O_BANDWIDTH}, ML_OPTS_MODULATION},
    {{"carrier-reference", required_argument, NULL, O_CREF}, ML_OPTS_MODULATION},
    {{"peak-hold-ms", required_argument, NULL, O_HOLD}, ML_OPTS_MODULATION},
    {{"limits", required_argument, NULL, O_LIMITS}, ML_OPTS_REPORT},
    {{"format", required_argument, NULL, O_FORMAT}, ML_OPTS_REPORT},
    {{"output", required_argument, NULL, O_OUTPUT}, ML_OPTS_REPORT},
    {{"plot", required_argument, NULL, O_PLOT}, ML_OPTS_REPORT},
    {{"report", required_argument, NULL, O_REPORT}, ML_OPTS_REPORT},
    {{"full-scale-dbu", required_argument, NULL, O_FSDBU}, ML_OPTS_LEVELS},
    {{"calibration", required_argument, NULL, O_CAL}, ML_OPTS_LEVELS},
    {{"no-settings", no_argument, NULL, O_NOSET}, ML_OPTS_LEVELS},
    {{"load-ohms", required_argument, NULL, O_LOAD}, ML_OPTS_BENCH},
    {{"card", required_argument, NULL, O_CARD}, ML_OPTS_BENCH},
    {{"card-correct", no_argument, NULL, O_CARDCORR}, ML_OPTS_BENCH},
    {{"imd", required_argument, NULL, O_IMD}, ML_OPTS_IMD},
};

size_t ml_options_table(unsigned groups, const struct option *own, struct option *out, size_t cap)
{
    size_t n = 0;
    for (size_t i = 0; i < sizeof entries / sizeof *entries && n + 1 < cap; i++)
        if (entries[i].group & groups)
            out[n++] = entries[i].opt;
    for (size_t i = 0; own && own[i].name && n + 1 < cap; i++)
        out[n++] = own[i];
    out[n] = (struct option){NULL, 0, NULL, 0};
    return n;
}

unsigned ml_options_group(int id)
{
    for (size_t i = 0; i < sizeof entries / sizeof *entries; i++)
        if (entries[i].opt.val == id)
            return entries[i].group;
    return 0;
}

/* s copied into buf[64] and cut at its first sep: *rest is what follows it, NULL without one.
 * False when s does not fit (never a number cut short). */
static bool split_at(const char *s, char sep, char buf[64], char **rest)
{
    if (snprintf(buf, 64, "%s", s) >= 64)
        return false;
    *rest = strchr(buf, sep);
    if (*rest)
        *(*rest)++ = '\0';
    return true;
}

/* "LO:HI" for --band. */
static int parse_band(const char *s, ml_audio_config *a)
{
    char buf[64], *hi_text;
    double lo, hi;
    if (!split_at(s, ':', buf, &hi_text) || hi_text == NULL || !ml_cli_number(buf, &lo)
        || !ml_cli_number(hi_text, &hi) || lo < 0 || hi <= lo)
        return 0;
    a->band_lo_hz = lo;
    a->band_hi_hz = hi;
    return 1;
}

/* "FREQ[,LEVEL]" for --play-tone. */
static int parse_play(const char *s, ml_input_opts *l)
{
    char buf[64], *level;
    double f, lv = -12.0;
    if (!split_at(s, ',', buf, &level) || !ml_cli_number(buf, &f) || f <= 0
        || (level && (!ml_cli_number(level, &lv) || lv > 0 || lv < -120)))
        return 0;
    l->play = true;
    l->play_hz = f;
    l->play_dbfs = lv;
    return 1;
}

static int apply_input(int id, const char *arg, ml_input_opts *in)
{
    double v;
    long n;
    switch (id) {
    case O_KIND:
        if (strcmp(arg, "auto") == 0) in->kind = ML_KIND_AUTO;
        else if (strcmp(arg, "audio") == 0) in->kind = ML_KIND_AUDIO;
        else if (strcmp(arg, "if") == 0) in->kind = ML_KIND_IF;
        else if (strcmp(arg, "iq") == 0) in->kind = ML_KIND_IQ;
        else return ml_cli_error("--kind: '%s' is not auto, audio, if or iq", arg);
        return 0;
    case O_CHANNEL:
    case O_REFCH:
        if (!ml_cli_int(arg, &n) || n < 1 || n > ML_MAX_CHANNELS)
            return ml_cli_error("--%s: '%s' is not a channel number 1..%d",
                                id == O_CHANNEL ? "channel" : "reference-channel", arg, ML_MAX_CHANNELS);
        *(id == O_CHANNEL ? &in->channel : &in->reference_channel) = n;
        return 0;
    case O_SWAP: in->swap_iq = true; return 0;
    case O_START:
        if (!ml_cli_number(arg, &v) || v < 0 || v > ML_CLI_MAX_SECONDS)
            return ml_cli_error("--start: '%s' is not a time in seconds, 0..%.0f", arg, ML_CLI_MAX_SECONDS);
        in->start_s = v;
        return 0;
    case O_DURATION:
        if (!ml_cli_number(arg, &v) || v <= 0 || v > ML_CLI_MAX_SECONDS)
            return ml_cli_error("--duration: '%s' is not a time in seconds, 0 < S <= %.0f", arg,
                                ML_CLI_MAX_SECONDS);
        in->duration_s = v;
        return 0;
    case O_DEVICE: in->device = arg; return 0;
    case O_OUTDEV: in->output_device = arg; return 0;
    case O_SAVE: in->save_path = arg; return 0;
    case O_RATE:
        if (!ml_cli_number(arg, &v) || v < 1000 || v > 1000000)
            return ml_cli_error("--rate: '%s' is not a sample rate in Hz, 1000..1000000", arg);
        in->rate_hz = v;
        return 0;
    case O_CHANNELS:
        if (!ml_cli_int(arg, &n) || n < 1 || n > ML_MAX_CHANNELS)
            return ml_cli_error("--channels: '%s' is not a channel count 1..%d", arg, ML_MAX_CHANNELS);
        in->channels = n;
        return 0;
    case O_SECONDS:
        if (!ml_cli_number(arg, &v) || v <= 0 || v > 31536000)
            return ml_cli_error("--seconds: '%s' is not a time in seconds, 0 < S <= 31536000 (a year)", arg);
        in->seconds = v;
        return 0;
    case O_PLAY:
        if (!parse_play(arg, in))
            return ml_cli_error("--play-tone: '%s' is not FREQ[,LEVEL] (Hz > 0, dBFS -120..0)", arg);
        return 0;
    default: return ML_OPTS_NOT_MINE;
    }
}

/* "auto", "off", "smpte" or "dfd", the last two optionally ":F1,F2" (Hz, 0 < F1 < F2). */
static int parse_imd(const char *s, ml_analysis_opts *an)
{
    char buf[64], *tones;
    double f1, f2;
    if (!split_at(s, ':', buf, &tones))
        return 0;
    ml_imd_config c = ml_imd_config_default();
    an->imd_off = false;
    if (strcmp(buf, "off") == 0 || strcmp(buf, "auto") == 0) {
        an->imd_off = strcmp(buf, "off") == 0;
        an->imd = c;
        return tones == NULL;
    }
    if (strcmp(buf, "smpte") == 0)
        c.method = ML_IMD_SMPTE;
    else if (strcmp(buf, "dfd") == 0)
        c.method = ML_IMD_DFD;
    else
        return 0;
    if (tones) {
        char *f2_text = strchr(tones, ',');
        if (f2_text == NULL)
            return 0;
        *f2_text++ = '\0';
        if (!ml_cli_number(tones, &f1) || !ml_cli_number(f2_text, &f2) || !(f1 > 0) || !(f2 > f1))
            return 0;
        c.f1_hz = f1;
        c.f2_hz = f2;
    }
    an->imd = c;
    return 1;
}

static int apply_analysis(int id, const char *arg, ml_analysis_opts *an)
{
    double v;
    long n;
    switch (id) {
    case O_BAND:
        if (!parse_band(arg, &an->audio))
            return ml_cli_error("--band: '%s' is not LO:HI in Hz with 0 <= LO < HI", arg);
        return 0;
    case O_TONE:
        if (!ml_cli_number(arg, &v) || v <= 0)
            return ml_cli_error("--tone: '%s' is not a frequency in Hz > 0", arg);
        if (an->audio.tone_mode == ML_TONE_NONE)
            return ml_cli_error("--tone and --no-tone contradict each other");
        an->audio.tone_hz = v;
        return 0;
    case O_NOTONE:
    case O_WITHTONE:
        if (an->audio.tone_mode != ML_TONE_AUTO
            && an->audio.tone_mode != (id == O_NOTONE ? ML_TONE_NONE : ML_TONE_FORCE))
            return ml_cli_error("--no-tone and --with-tone contradict each other");
        if (id == O_NOTONE && an->audio.tone_hz > 0)
            return ml_cli_error("--tone and --no-tone contradict each other");
        an->audio.tone_mode = id == O_NOTONE ? ML_TONE_NONE : ML_TONE_FORCE;
        return 0;
    case O_HARMONICS:
        if (!ml_cli_int(arg, &n) || n < 2 || n > ML_MAX_HARMONICS)
            return ml_cli_error("--harmonics: '%s' is not an order 2..%d", arg, ML_MAX_HARMONICS);
        an->audio.harmonics = (int)n;
        return 0;
    case O_MAINS: return ml_cli_mains(arg, &an->audio.mains_hz);
    case O_WINDOW:
        for (int w = ML_WINDOW_HANN; w < ML_WINDOW_COUNT; w++)
            if (strcmp(arg, ml_window_name((ml_window_type)w)) == 0) {
                an->window = (ml_window_type)w;
                return 0;
            }
        return ml_cli_error("--window: '%s' is not hft248d, hft144d, blackman-harris or hann", arg);
    case O_CARRIER: return ml_cli_carrier(arg, &an->carrier_hz);
    case O_BANDWIDTH: return ml_cli_bandwidth(arg, &an->bandwidth_hz);
    case O_CREF: an->carrier_reference = arg; return 0;
    case O_IMD:
        if (!parse_imd(arg, an))
            return ml_cli_error("--imd: '%s' is not auto, off, smpte[:FL,FH] or dfd[:F1,F2] (Hz, "
                                "0 < F1 < F2)",
                                arg);
        an->imd_given = true;
        return 0;
    case O_HOLD:
        if (!ml_cli_number(arg, &v) || v <= 0 || v >= 500)
            return ml_cli_error("--peak-hold-ms: '%s' is not a time in ms, 0 < MS < 500", arg);
        an->peak_hold_ms = v;
        return 0;
    case O_FSDBU:
        if (!ml_cli_number(arg, &v) || v < ML_LEVEL_CAL_MIN_DBU || v > ML_LEVEL_CAL_MAX_DBU)
            return ml_cli_error("--full-scale-dbu: '%s' is not a level in dBu, %.0f..%+.0f", arg,
                                ML_LEVEL_CAL_MIN_DBU, ML_LEVEL_CAL_MAX_DBU);
        an->full_scale_dbu = v;
        return 0;
    case O_CAL: an->calibration_path = arg; return 0;
    case O_NOSET: an->no_settings = true; return 0;
    case O_LOAD:
        if (!ml_cli_number(arg, &v) || v < 0.01 || v > 1e6)
            return ml_cli_error("--load-ohms: '%s' is not a resistance in ohms, 0.01..1e6", arg);
        an->load_ohms = v;
        return 0;
    case O_CARD: an->card_path = arg; return 0;
    case O_CARDCORR: an->card_correct = true; return 0;
    default: return ML_OPTS_NOT_MINE;
    }
}

static int apply_output(int id, const char *arg, ml_output_opts *out)
{
    switch (id) {
    case O_LIMITS: out->limits_path = arg; return 0;
    case O_FORMAT:
        if (strcmp(arg, "text") == 0) out->format = ML_FORMAT_TEXT;
        else if (strcmp(arg, "json") == 0) out->format = ML_FORMAT_JSON;
        else if (strcmp(arg, "csv") == 0) out->format = ML_FORMAT_CSV;
        else return ml_cli_error("--format: '%s' is not text, json or csv", arg);
        return 0;
    case O_OUTPUT: out->output_path = arg; return 0;
    case O_PLOT: out->plot_path = arg; return 0;
    case O_REPORT: out->report_path = arg; return 0;
    default: return ML_OPTS_NOT_MINE;
    }
}

int ml_options_apply(int id, const char *arg, ml_input_opts *in, ml_analysis_opts *an, ml_output_opts *out)
{
    int rc = apply_input(id, arg, in);
    if (rc == ML_OPTS_NOT_MINE)
        rc = apply_analysis(id, arg, an);
    if (rc == ML_OPTS_NOT_MINE)
        rc = apply_output(id, arg, out);
    return rc;
}
