/* Levels in volts, weighted noise, the card's own floor and the settings (see analyzer/bench.h).
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
#include "analyzer/bench.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analyzer/cli.h"
#include "analyzer/registry.h"
#include "analyzer/settings.h"
#include "analyzer/values.h"
#include "dsp/card.h"
#include "dsp/levels.h"
#include "dsp/qp468.h"
#include "io/cardfile.h"
#include "io/printable.h"

/* What the setup read, for the run's lifetime (the options point into it). */
static ml_settings g_set = {.full_scale_dbu = NAN};
static ml_card_profile g_card;
static char g_card_shown[256];
static char g_settings[ML_REPORT_SETTINGS_LEN];
static char g_cal_source[320];
static bool g_card_from_settings, g_cal_from_settings; /* the file names came from the settings */

/* "a, b" lists */
static void list_add(char *buf, size_t len, const char *item)
{
    const size_t n = strlen(buf);
    snprintf(buf + n, len - n, "%s%s", n ? ", " : "", item);
}

/* A text setting: taken when the command line left it unset, else listed as overridden. */
static void apply_text(const char *key, const char *value, const char **slot, char *applied, char *over)
{
    if (value == NULL)
        return;
    if (*slot == NULL) {
        *slot = value;
        list_add(applied, 256, key);
    } else {
        list_add(over, 256, key);
    }
}

static void apply_settings(unsigned use, ml_input_opts *in, ml_analysis_opts *an, ml_output_opts *out,
                           char *applied, char *over)
{
    const ml_settings *s = &g_set;
    if (use & ML_BENCH_DEVICE)
        apply_text("device", s->device, &in->device, applied, over);
    if (use & ML_BENCH_OUTPUT)
        apply_text("output_device", s->output_device, &in->output_device, applied, over);
    if ((use & ML_BENCH_LIMITS) && out)
        apply_text("limits", s->limits, &out->limits_path, applied, over);
    if (use & ML_BENCH_CARD) {
        g_card_from_settings = s->card && an->card_path == NULL;
        apply_text("card", s->card, &an->card_path, applied, over);
    }
    if ((use & ML_BENCH_MAINS) && s->mains_hz > 0) {
        if (an->audio.mains_hz == 0) {
            an->audio.mains_hz = s->mains_hz;
            list_add(applied, 256, s->mains_hz == 50 ? "mains 50 Hz" : "mains 60 Hz");
        } else {
            list_add(over, 256, "mains");
        }
    }
    const bool cal_set = s->calibration || !isnan(s->full_scale_dbu);
    if ((use & ML_BENCH_CAL) && cal_set) {
        if (isnan(an->full_scale_dbu) && an->calibration_path == NULL) {
            g_cal_from_settings = s->calibration != NULL;
            if (s->calibration)
                an->calibration_path = s->calibration;
            else
                an->full_scale_dbu = s->full_scale_dbu;
            list_add(applied, 256, "calibration");
            snprintf(g_cal_source, sizeof g_cal_source, "the settings");
        } else {
            list_add(over, 256, "calibration");
        }
    }
}

/* The settings file, when there is one and it is not ignored. */
static int read_settings(unsigned use, ml_input_opts *in, ml_analysis_opts *an, ml_output_opts *out)
{
    char *path = NULL, err[512];
    if (ml_settings_path(&path) != ML_OK)
        return ml_cli_error("out of memory");
    if (path == NULL)
        return 0;
    const ml_status st = ml_settings_read(path, &g_set, err, sizeof err);
    if (st != ML_OK) {
        const int rc = ml_cli_error("%s: %s (give --no-settings to ignore it)", path, err);
        free(path);
        ml_settings_free(&g_set);
        return rc;
    }
    free(path);
    if (g_set.path == NULL)
        return 0;
    char applied[256] = "", over[256] = "", shown[4 * 256];
    apply_settings(use, in, an, out, applied, over);
    ml_printable(shown, sizeof shown, g_set.path);
    if (applied[0] || over[0])
        snprintf(g_settings, sizeof g_settings, "settings %.160s: %.120s%s%.120s%s", shown,
                 applied[0] ? applied : "none used", over[0] ? " (from the command line instead: " : "", over,
                 over[0] ? ")" : "");
    return 0;
}

/* The calibration: --calibration FILE (or the settings' calibration file), or a number. */
static int read_calibration(ml_analysis_opts *an)
{
    if (an->calibration_path == NULL) {
        if (!isnan(an->full_scale_dbu) && g_cal_source[0] == '\0')
            snprintf(g_cal_source, sizeof g_cal_source, "--full-scale-dbu");
        return 0;
    }
    if (!isnan(an->full_scale_dbu))
        return ml_cli_error("give either --full-scale-dbu or --calibration, not both");
    static ml_calibration cal;
    char err[512], shown[1024];
    if (ml_calibration_read(an->calibration_path, &cal, err, sizeof err) != ML_OK)
        return ml_cli_error("%s: %s%s", an->calibration_path, err,
                            g_cal_from_settings ? " (named in the settings; --no-settings ignores them)" : "");
    an->full_scale_dbu = cal.cal.full_scale_dbu;
    ml_printable(shown, sizeof shown, an->calibration_path);
    const size_t n = strlen(g_cal_source);
    snprintf(g_cal_source + n, sizeof g_cal_source - n,
             "%scalibration file %.200s (%.6g V r.m.s. read at %.2f dBFS)", n ? ", " : "", shown,
             cal.tone_vrms, cal.tone_dbfs);
    return 0;
}

int ml_bench_setup(unsigned use, ml_input_opts *in, ml_analysis_opts *an, ml_output_opts *out)
{
    ml_settings_free(&g_set);
    g_settings[0] = g_cal_source[0] = g_card_shown[0] = '\0';
    g_card_from_settings = g_cal_from_settings = false;
    an->card = NULL;
    int rc = an->no_settings ? 0 : read_settings(use, in, an, out);
    if (rc == 0)
        rc = read_calibration(an);
    if (rc == 0 && an->card_correct && an->card_path == NULL)
        rc =
            ml_cli_error("--card-correct needs a card profile (--card FILE, or card = FILE in the settings)");
    if (rc == 0 && an->card_path) {
        char err[512];
        if (ml_card_profile_read(an->card_path, &g_card, NULL, 0, err, sizeof err) != ML_OK)
            rc = ml_cli_error("%s: %s%s", an->card_path, err,
                              g_card_from_settings ? " (named in the settings; --no-settings ignores them)" : "");
        else
            an->card = &g_card;
        ml_printable(g_card_shown, sizeof g_card_shown, an->card_path);
    }
    an->settings_text = g_settings;
    an->cal_source = g_cal_source;
    return rc;
}

/* ---- the audio pass ------------------------------------------------------------------------ */

struct ml_bench_pass {
    ml_qp468 *qp;
};

int ml_bench_audio_begin(double rate_hz, ml_bench_pass **out)
{
    *out = NULL;
    const ml_qp468_config qc = ml_qp468_config_default(rate_hz);
    ml_qp468 *qp = NULL;
    if (!(rate_hz >= 32000 && rate_hz <= 384000))
        return 0;
    const ml_status st = ml_qp468_create(&qc, &qp);
    if (st == ML_EINVAL)
        return 0;
    ml_bench_pass *p = st == ML_OK ? malloc(sizeof *p) : NULL;
    if (p == NULL) {
        ml_qp468_destroy(qp);
        return ml_cli_error("out of memory");
    }
    p->qp = qp;
    *out = p;
    return 0;
}

void ml_bench_audio_push(ml_bench_pass *p, const float *x, size_t n)
{
    if (p != NULL)
        ml_qp468_push(p->qp, x, n);
}

void ml_bench_audio_end(ml_bench_pass *p)
{
    if (p == NULL)
        return;
    ml_qp468_destroy(p->qp);
    free(p);
}

/* The card channel for the analysed one (1-based). */
static int card_channel(const ml_card_profile *card, int channel)
{
    return channel >= 1 && channel <= card->channels ? channel - 1 : 0;
}

/* The dut's figures a card can limit. */
static ml_card_dut dut_of(const ml_audio_result *a, bool ok, const ml_audio_plain_figures *f,
                          const ml_noise_figures *n)
{
    const bool tone = ok && a->tone_present;
    const ml_fig_state hs = ok ? a->figures.hum.state : ML_FIG_NONE;
    return (ml_card_dut){.fundamental_dbfs = tone ? f->fundamental_dbfs : NAN,
                         .thd_db = tone ? f->thd_db : NAN,
                         .thdn_db = tone ? f->thdn_db : NAN,
                         .snr_db = tone ? f->snr_db : NAN,
                         .snr_a_db = n->snr_a_db,
                         .noise_dbfs = n->noise_dbfs,
                         .noise_a_dbfs = n->noise_a_dbfs,
                         .noise_468_dbfs = n->noise_468_dbfs,
                         .hum_dbfs = hs == ML_FIG_MEASURED || hs == ML_FIG_LOWER ? f->hum_dbfs : NAN};
}

/* The card-limited marks, and a note saying how many. */
static void card_marks(const ml_analysis_opts *an, int channel, double rate_hz, const ml_card_dut *d,
                       ml_report *rep)
{
    const ml_card_profile *card = an->card;
    rep->card_checked = true;
    ml_card_reach reach;
    ml_card_reach_of(card, card_channel(card, channel), d, &reach);
    const char *names[32];
    double card_db[32];
    const size_t n = ml_values_card_limited(&reach, names, card_db, 32);
    size_t marked = 0;
    for (size_t i = 0; i < n; i++) {
        const bool level = strstr(names[i], "noise") != NULL || strncmp(names[i], "hum.", 4) == 0;
        marked += ml_report_card_limited(rep, names[i], "card-limited: the card's own is %.1f %s", card_db[i],
                                         level ? "dBFS" : "dB")
                  != NULL;
    }
    if (marked > 0)
        ml_report_note(rep,
                       "card profile %s: %zu figure%s within %.0f dB of what the card itself resolves "
                       "(marked card-limited)",
                       g_card_shown, marked, marked == 1 ? " lies" : "s lie", ML_CARD_MARGIN_DB);
    else
        ml_report_note(rep, "card profile %s: no figure lies within %.0f dB of what the card itself resolves",
                       g_card_shown, ML_CARD_MARGIN_DB);
    if (channel > card->channels)
        ml_report_note(rep, "the card profile has no channel %d: its channel 1 was compared", channel);
    if (fabs(card->rate_hz - rate_hz) > 0.5)
        ml_report_note(rep,
                       "the card profile was measured at %.0f Hz, this capture is at %.0f Hz: its floor is "
                       "compared as it is",
                       card->rate_hz, rate_hz);
}

/* The card's response at the tone (--card-correct), 0 when none applies. */
static double correction(const ml_analysis_opts *an, int channel, const ml_audio_result *a, bool ok,
                         ml_report *rep)
{
    if (!an->card || !an->card_correct || !ok || !a->tone_present)
        return 0;
    const double c = ml_card_response_at(an->card, card_channel(an->card, channel), a->fundamental_hz);
    if (isnan(c)) {
        ml_report_note(rep, "--card-correct: %.1f Hz lies outside the card profile's response: not corrected",
                       a->fundamental_hz);
        return 0;
    }
    ml_report_note(rep,
                   "--card-correct: the levels in volts are corrected by %+.3f dB, the card's response at "
                   "%.1f Hz",
                   -c, a->fundamental_hz);
    return c;
}

/* The weighted noise figures of v[n] as bounds where the unweighted noise of a lies at the
 * analysis' own floor (window leakage and rounding, dsp/metrics.h): they sum the same bins, so they
 * hold that floor too -- the noise an upper bound, the signal-to-noise ratio a lower one. */
static void weighted_at_floor(const ml_audio_result *a, bool measured, ml_value *v, size_t n)
{
    if (!measured || a->figures.noise.state != ML_FIG_UPPER || a->figures.noise.why != ML_WHY_AT_FLOOR)
        return;
    static const char *const noise[] = {"audio.noise_a_dbfs", "audio.noise_468_dbfs", "audio.noise_a_dbu"};
    for (size_t i = 0; i < n; i++) {
        if (!isfinite(v[i].value) || v[i].state != ML_FIG_MEASURED)
            continue;
        for (size_t j = 0; j < sizeof noise / sizeof *noise; j++)
            if (strcmp(v[i].name, noise[j]) == 0) {
                v[i].state = ML_FIG_UPPER;
                v[i].why = ml_audio_why_text(ML_WHY_AT_FLOOR);
            }
        if (strcmp(v[i].name, "audio.snr_a_db") == 0) {
            v[i].state = ML_FIG_LOWER;
            v[i].why = ml_audio_why_text(ML_WHY_AT_FLOOR);
        }
    }
}

void ml_bench_audio_report(const ml_bench_pass *p, const ml_analysis_opts *an, int channel,
                           const ml_spectrum *spec, const ml_audio_result *a, bool ok, double rms_dbfs,
                           ml_report *rep)
{
    ml_noise_figures nf;
    ml_bench_noise_none(&nf);
    const bool measured = ok && ml_bench_noise(spec, a, p ? p->qp : NULL, &nf) == ML_OK;
    ml_audio_plain_figures f;
    ml_figures_audio(a, ok, &f);
    const bool volts = !isnan(an->full_scale_dbu);
    ml_volt_figures vf;
    if (volts) {
        const ml_level_cal cal = {.full_scale_dbu = an->full_scale_dbu};
        ml_bench_volts(&cal, an->load_ohms, correction(an, channel, a, ok, rep), &f, &nf, rms_dbfs, &vf);
    }
    ml_value v[ML_VALUES_MAX];
    const size_t nv = ml_values_bench(&nf, &vf, volts, an->load_ohms > 0, v);
    weighted_at_floor(a, measured, v, nv);
    const bool tone = ok && a->tone_present;
    /* the quasi-peak reading is a noise measurement: reported only without a test tone */
    for (size_t i = 0; i < nv; i++)
        if (!tone || strcmp(v[i].name, "audio.noise_468_qp_dbfs") != 0)
            ml_values_report(rep, &v[i], 1);
    if (measured && !tone)
        ml_report_unmeasured(rep, "audio.snr_a_db", "no test tone");
    if (!measured) { /* no analysis (silence, no signal): the reason of the unweighted noise */
        const ml_metric *n = ml_report_find(rep, "audio.noise_dbfs");
        const char *why = n && !n->valid && n->reason[0] ? n->reason : "the audio analysis found no signal";
        for (size_t i = 0; i < nv; i++) {
            const ml_metric *m = ml_report_find(rep, v[i].name);
            if (m && !m->valid && m->reason[0] == '\0')
                ml_report_unmeasured(rep, v[i].name, "%s", why);
        }
    }
    if (measured && !tone && p == NULL)
        ml_report_unmeasured(rep, "audio.noise_468_qp_dbfs",
                             "the quasi-peak meter needs a rate of 32..384 kHz");
    ml_report_qualify(rep, "audio.noise_468_qp_dbfs",
                      "BS.468-4 quasi-peak; detector time constants fitted to its tone-burst tables");
    if (an->card) {
        const ml_card_dut d = dut_of(a, ok, &f, &nf);
        card_marks(an, channel, spec ? ml_spectrum_rate_hz(spec) : an->card->rate_hz, &d, rep);
    }
}

void ml_bench_demod_noise_report(const ml_spectrum *aud, const ml_audio_result *a, bool ok, ml_report *rep)
{
    ml_noise_figures nf;
    ml_bench_noise_none(&nf);
    const bool measured = ok && aud != NULL && ml_bench_noise(aud, a, NULL, &nf) == ML_OK;
    ml_value v[ML_VALUES_MAX];
    const size_t nv = ml_values_bench(&nf, NULL, false, false, v);
    weighted_at_floor(a, measured, v, nv);
    for (size_t i = 0; i < nv; i++) {
        if (strcmp(v[i].name, "audio.noise_468_qp_dbfs") == 0)
            continue; /* the meter reads an audio pass's captured samples only */
        if (isfinite(v[i].value)) {
            ml_values_report(rep, &v[i], 1);
            continue;
        }
        const char *why = !measured                                   ? "the demodulated audio was not analysed"
                          : strcmp(v[i].name, "audio.snr_a_db") == 0 ? "no test tone"
                                                                      : "not measurable on this capture";
        const ml_metric_def *d = ml_registry_lookup(v[i].name, NULL);
        ml_report_add_missing_why(rep, v[i].name, d ? d->unit : "", d ? d->decimals : 2, why);
    }
}

void ml_bench_modulation_report(const ml_analysis_opts *an, const ml_modulation_result *r,
                                double capture_rms_dbfs, bool iq, ml_report *rep)
{
    if (!isnan(an->full_scale_dbu)) {
        const double fs = an->full_scale_dbu;
        ml_value v[4];
        ml_values_report(
            rep, v,
            ml_values_capture_volts(isfinite(r->carrier_level_dbfs) ? r->carrier_level_dbfs + fs : NAN,
                                    isfinite(capture_rms_dbfs) ? capture_rms_dbfs + fs : NAN, iq, v));
        ml_report_note(rep, "calibration: the captured levels are given in dBu too; the demodulated audio's "
                            "figures stay in dB re 100 %% modulation");
    }
    if (an->card)
        ml_report_note(rep,
                       "card profile %s: its floor applies to audio captures; if/iq figures are not compared",
                       g_card_shown);
}

void ml_bench_settings_text(const ml_analysis_opts *an, char *buf, size_t len)
{
    buf[0] = '\0';
    if (an->settings_text && an->settings_text[0])
        snprintf(buf, len, "%s", an->settings_text);
    size_t n = strlen(buf);
    if (!isnan(an->full_scale_dbu) && n < len)
        n += (size_t)snprintf(buf + n, len - n, "%scalibration 0 dBFS = %+.2f dBu (%s)", n ? "; " : "",
                              an->full_scale_dbu,
                              an->cal_source && an->cal_source[0] ? an->cal_source : "given");
    if (an->load_ohms > 0 && n < len)
        n += (size_t)snprintf(buf + n, len - n, "%sload %g ohm", n ? "; " : "", an->load_ohms);
    if (an->card && n < len)
        snprintf(buf + n, len - n, "%scard profile %s (%.0f Hz, %d channel%s)%s", n ? "; " : "", g_card_shown,
                 an->card->rate_hz, an->card->channels, an->card->channels == 1 ? "" : "s",
                 an->card_correct ? ", response corrected" : "");
}

void ml_bench_finish(const ml_analysis_opts *an, ml_report *rep)
{
    char text[ML_REPORT_SETTINGS_LEN];
    ml_bench_settings_text(an, text, sizeof text);
    if (text[0] == '\0')
        return;
    if (rep->settings[0]) {
        char old[ML_REPORT_SETTINGS_LEN];
        memcpy(old, rep->settings, sizeof old);
        ml_report_settings(rep, "%.250s; %s", old, text);
    } else {
        ml_report_settings(rep, "%s", text);
    }
}

void ml_bench_card_limited_names(const ml_analysis_opts *an, int channel, const ml_audio_plain_figures *f,
                                 const ml_noise_figures *n, char *buf, size_t len)
{
    buf[0] = '\0';
    if (an->card == NULL)
        return;
    const ml_card_dut d = {.fundamental_dbfs = f->fundamental_dbfs,
                           .thd_db = f->thd_db,
                           .thdn_db = f->thdn_db,
                           .snr_db = f->snr_db,
                           .snr_a_db = n->snr_a_db,
                           .noise_dbfs = n->noise_dbfs,
                           .noise_a_dbfs = n->noise_a_dbfs,
                           .noise_468_dbfs = n->noise_468_dbfs,
                           .hum_dbfs = f->hum_dbfs};
    ml_card_reach reach;
    ml_card_reach_of(an->card, card_channel(an->card, channel), &d, &reach);
    const char *names[32];
    double card_db[32];
    const size_t k = ml_values_card_limited(&reach, names, card_db, 32);
    for (size_t i = 0; i < k; i++) {
        const size_t used = strlen(buf);
        if (strstr(names[i], "_dbu") == NULL) /* watch shows dBFS */
            snprintf(buf + used, len - used, "%s%s", used ? "," : "", ml_values_short_name(names[i]));
    }
}

const char *ml_bench_log_header(const ml_analysis_opts *an, const char *header)
{
    static const char from[] = "rms_dbfs,peak_dbfs,a_weighted_dbfs", to[] = "rms_dbu,peak_dbu,a_weighted_dbu";
    static char h[2048];
    const char *at = strstr(header, from);
    if (isnan(an->full_scale_dbu) || at == NULL || strlen(header) >= sizeof h)
        return header;
    snprintf(h, sizeof h, "%.*s%s%s", (int)(at - header), header, to, at + strlen(from));
    return h;
}

void ml_bench_log_levels(const ml_analysis_opts *an, double *rms, double *peak, double *a_weighted)
{
    if (isnan(an->full_scale_dbu))
        return;
    const ml_level_cal cal = {.full_scale_dbu = an->full_scale_dbu};
    double *v[3] = {rms, peak, a_weighted};
    for (int i = 0; i < 3; i++)
        *v[i] = isfinite(*v[i]) ? ml_level_dbu(&cal, *v[i]) : NAN;
}
