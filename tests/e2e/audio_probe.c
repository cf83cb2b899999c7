/* Test probe: the dsp audio analysis of a raw float32 file, as JSON on standard output.
 * SPDX-License-Identifier: MIT
 *
 * Lets the Python tests compare dsp/metrics.h's result fields (the tone decision, the figures
 * with their states and reasons, the lines' verdicts, the analysis transform plan) with numpy and
 * scipy computations before any command reports them. Not installed.
 *
 * usage: ml-audio-probe RATE FILE.f32 [--tone-mode auto|force|none] [--tone HZ] [--mains 0|50|60]
 *                       [--band LO:HI] [--window NAME] [--nfft N [--hop H]] [--harmonics N]
 *                       [--hum-harmonics N] [--block N]
 * Without --nfft the transform comes from ml_audio_plan_transform for the file's length.
 * Exit status 0, or 2 with a message on standard error.
 */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/metrics.h"
#include "dsp/spectrum.h"
#include "dsp/window.h"

static int fail(const char *msg, const char *arg)
{
    fprintf(stderr, "ml-audio-probe: %s%s%s\n", msg, arg ? ": " : "", arg ? arg : "");
    return 2;
}

static void num(const char *key, double v, int last)
{
    if (isfinite(v))
        printf("\"%s\": %.17g%s", key, v, last ? "" : ", ");
    else
        printf("\"%s\": null%s", key, last ? "" : ", ");
}

static const char *state_name(ml_fig_state s)
{
    switch (s) {
    case ML_FIG_MEASURED:
        return "measured";
    case ML_FIG_UPPER:
        return "upper";
    case ML_FIG_LOWER:
        return "lower";
    default:
        return "none";
    }
}

static void figure(const char *key, const ml_figure *f, int last)
{
    printf("\"%s\": {\"state\": \"%s\", ", key, state_name(f->state));
    num("value", f->value, 0);
    printf("\"why\": %d, \"text\": \"%s\"}%s", (int)f->why, ml_audio_why_text(f->why), last ? "" : ", ");
}

static void components(const char *key, const ml_component *c, size_t n, int last)
{
    printf("\"%s\": [", key);
    for (size_t i = 0; i < n; i++) {
        printf("{\"order\": %d, ", c[i].order);
        num("frequency_hz", c[i].frequency_hz, 0);
        num("power", c[i].power, 0);
        num("noise_power", c[i].noise_power, 0);
        num("line_power", c[i].line_power, 0);
        num("upper_power", c[i].upper_power, 0);
        printf("\"above_noise\": %s}%s", c[i].above_noise ? "true" : "false", i + 1 < n ? ", " : "");
    }
    printf("]%s", last ? "" : ", ");
}

static int window_by_name(const char *s, ml_window_type *w)
{
    for (int i = 0; i < ML_WINDOW_COUNT; i++)
        if (strcmp(s, ml_window_name((ml_window_type)i)) == 0) {
            *w = (ml_window_type)i;
            return 1;
        }
    return 0;
}

int main(int argc, char **argv)
{
    if (argc < 3)
        return fail("usage: ml-audio-probe RATE FILE.f32 [options]", NULL);
    const double rate = atof(argv[1]);
    ml_audio_config cfg = ml_audio_config_default();
    ml_window_type win = ML_WINDOW_HFT248D;
    size_t nfft = 0, hop = 0, block = 4096;
    for (int i = 3; i < argc; i += 2) { /* OPTION VALUE pairs */
        const char *a = argv[i], *v = i + 1 < argc ? argv[i + 1] : NULL;
        if (v == NULL)
            return fail("option needs a value", a);
        if (strcmp(a, "--tone-mode") == 0)
            cfg.tone_mode = strcmp(v, "force") == 0 ? ML_TONE_FORCE : strcmp(v, "none") == 0 ? ML_TONE_NONE : ML_TONE_AUTO;
        else if (strcmp(a, "--tone") == 0)
            cfg.tone_hz = atof(v);
        else if (strcmp(a, "--mains") == 0)
            cfg.mains_hz = atof(v);
        else if (strcmp(a, "--band") == 0) {
            if (sscanf(v, "%lf:%lf", &cfg.band_lo_hz, &cfg.band_hi_hz) != 2)
                return fail("bad --band", v);
        } else if (strcmp(a, "--window") == 0) {
            if (!window_by_name(v, &win))
                return fail("bad --window", v);
        } else if (strcmp(a, "--nfft") == 0)
            nfft = (size_t)atol(v);
        else if (strcmp(a, "--hop") == 0)
            hop = (size_t)atol(v);
        else if (strcmp(a, "--harmonics") == 0)
            cfg.harmonics = atoi(v);
        else if (strcmp(a, "--hum-harmonics") == 0)
            cfg.hum_harmonics = atoi(v);
        else if (strcmp(a, "--block") == 0)
            block = (size_t)atol(v);
        else
            return fail("unknown option", a);
    }
    FILE *f = fopen(argv[2], "rb");
    if (f == NULL)
        return fail("cannot open", argv[2]);
    fseek(f, 0, SEEK_END);
    const long bytes = ftell(f);
    fseek(f, 0, SEEK_SET);
    const size_t n = bytes > 0 ? (size_t)bytes / sizeof(float) : 0;
    float *x = malloc((n ? n : 1) * sizeof *x);
    if (x == NULL || fread(x, sizeof *x, n, f) != n) {
        fclose(f);
        free(x);
        return fail("cannot read", argv[2]);
    }
    fclose(f);

    ml_audio_plan plan = {0};
    if (nfft == 0) {
        ml_status st = ml_audio_plan_transform(rate, (int64_t)n, win, cfg.mains_hz, &plan);
        if (st != ML_OK) {
            free(x);
            return fail("plan", ml_strerror(st));
        }
    } else {
        plan.spectrum = ml_spectrum_config_default(rate);
        plan.spectrum.window = win;
        plan.spectrum.nfft = nfft;
        plan.spectrum.hop = hop ? hop : nfft / 2;
        plan.hum_resolved = plan.hum_fundamental_resolved = true;
    }
    ml_spectrum *q = NULL;
    ml_status st = ml_spectrum_create(&plan.spectrum, &q);
    if (st != ML_OK) {
        free(x);
        return fail("spectrum", ml_strerror(st));
    }
    for (size_t i = 0; i < n; i += block)
        ml_spectrum_push(q, x + i, n - i < block ? n - i : block);
    free(x);
    ml_audio_result r;
    st = ml_audio_analyze(q, &cfg, &r);
    printf("{\"status\": \"%s\", \"plan\": {\"nfft\": %zu, \"hop\": %zu, \"window\": \"%s\", \"remove_dc\": %d, "
           "\"hum_resolved\": %s, \"hum_fundamental_resolved\": %s, \"hum_min_frames\": %lld, "
           "\"segments\": %zu}",
           ml_strerror(st), plan.spectrum.nfft, plan.spectrum.hop, ml_window_name(plan.spectrum.window),
           plan.spectrum.remove_dc, plan.hum_resolved ? "true" : "false",
           plan.hum_fundamental_resolved ? "true" : "false", (long long)plan.hum_min_frames,
           ml_spectrum_segments(q));
    if (st == ML_OK) {
        printf(", \"result\": {");
        num("bin_hz", r.bin_hz, 0);
        num("band_lo_hz", r.band_lo_hz, 0);
        num("band_hi_hz", r.band_hi_hz, 0);
        num("fundamental_hz", r.fundamental_hz, 0);
        num("fundamental_power", r.fundamental_power, 0);
        num("distortion_power", r.distortion_power, 0);
        num("noise_power", r.noise_power, 0);
        num("noise_nohum_power", r.noise_nohum_power, 0);
        num("band_power", r.band_power, 0);
        num("residual_power", r.residual_power, 0);
        num("noise_density", r.noise_density, 0);
        num("floor_density", r.floor_density, 0);
        num("mains_hz", r.mains_hz, 0);
        num("hum_power", r.hum_power, 0);
        num("candidate_hz", r.candidate_hz, 0);
        num("candidate_margin_db", r.candidate_margin_db, 0);
        printf("\"tone_present\": %s, \"tone_clear\": %s, \"tone_why\": \"%s\", \"hum_fundamental_resolved\": %s, ",
               r.tone_present ? "true" : "false", r.tone_clear ? "true" : "false", ml_audio_why_text(r.tone_why),
               r.hum_fundamental_resolved ? "true" : "false");
        components("harmonics", r.harmonics, r.nharmonics, 0);
        components("hum", r.hum, r.nhum, 1);
        printf("}, \"figures\": {");
        const ml_audio_figures *F = &r.figures;
        figure("fundamental_hz", &F->fundamental_hz, 0);
        figure("fundamental", &F->fundamental, 0);
        figure("thd", &F->thd, 0);
        figure("thdn", &F->thdn, 0);
        figure("sinad", &F->sinad, 0);
        figure("snr", &F->snr, 0);
        figure("enob", &F->enob, 0);
        figure("noise", &F->noise, 0);
        figure("noise_nohum", &F->noise_nohum, 0);
        figure("hum", &F->hum, 0);
        figure("hum_rel", &F->hum_rel, 0);
        figure("mains_hz", &F->mains_hz, 1);
        printf("}");
    }
    printf("}\n");
    ml_spectrum_destroy(q);
    return 0;
}
