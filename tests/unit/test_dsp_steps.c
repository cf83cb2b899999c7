/* Unit tests for dsp/steps: stepped-tone segmentation and the step plan.
 * SPDX-License-Identifier: MIT
 *
 * References: the stepped recording and its expected gains and THD come from an independent scipy
 * computation (tests/unit/make_steps_fixture.py: Butterworth filters, scipy.signal.sosfilt and
 * sosfreqz; docs/references.md 9), passed to this program as its two arguments (meson builds them).
 * Synthesised files follow the placement rule of dsp/synth.h (step i starts at round(rate * sum of
 * the earlier seconds)).
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/metrics.h"
#include "dsp/spectrum.h"
#include "dsp/steps.h"
#include "dsp/synth.h"

static const char *fixture_f32, *fixture_txt;

static ml_steps *make(double rate)
{
    ml_steps_config c = ml_steps_config_default(rate);
    ml_steps *q = NULL;
    ck_assert_int_eq(ml_steps_create(&c, &q), ML_OK);
    return q;
}

/* n samples of the plan p at rate (one pass) into *x (malloc'd) */
static size_t render_plan(const ml_step_plan *p, double rate, double noise_dbfs, float **x)
{
    ml_synth_config sc = ml_synth_config_default(rate);
    sc.kind = ML_SYNTH_STEPS;
    ck_assert_int_eq(ml_step_plan_to_synth(p, rate, sc.steps, ML_SYNTH_MAX_STEPS, &sc.nsteps), ML_OK);
    sc.noise_dbfs = noise_dbfs;
    double fmax = 0;
    for (size_t i = 0; i < p->nfreqs; i++)
        fmax = fmax > p->freqs_hz[i] ? fmax : p->freqs_hz[i];
    sc.nharmonics = 3 * fmax < rate / 2 ? 1 : 0; /* the synth keeps every harmonic below Nyquist */
    sc.harmonics[0] = (ml_synth_harmonic){3, -50.0};
    ml_synth *syn = NULL;
    ck_assert_int_eq(ml_synth_create(&sc, &syn), ML_OK);
    const size_t n = (size_t)ml_synth_cycle_frames(syn);
    *x = malloc(n * sizeof **x);
    ck_assert_int_eq(ml_synth_generate(syn, *x, n), ML_OK);
    ml_synth_destroy(syn);
    return n;
}

static ml_step_plan test_plan(void)
{
    ml_step_plan p = ml_step_plan_default();
    const double f[] = {31.5, 100, 400, 1000, 2500, 6300, 10000, 15000};
    p.nfreqs = 8;
    memcpy(p.freqs_hz, f, sizeof f);
    p.nlevels = 2;
    p.levels_dbfs[0] = -10;
    p.levels_dbfs[1] = -30;
    p.step_s = 0.8;
    p.pause_s = 0.2;
    return p;
}

START_TEST(plan_read_back_without_options)
{
    /* A file made from a plan (8 frequencies x 2 levels, noise -90 dBFS) is
     * read back with the default configuration: every tone step found, in order, inside its
     * scheduled frames (ml_step_plan_schedule), at its frequency (phase-advance estimate: 0.01 %) and
     * level (the synth level rule, docs/references.md 5: 0.05 dB covers the window lobe sum). */
    const double rate = 48000;
    ml_step_plan p = test_plan();
    p.freqs_hz[7] = 7000; /* 3 x 7 kHz < 24 kHz: with a 3rd harmonic at -50 dBc */
    p.step_s = 0.7731;    /* boundaries that are no multiple of the analysis hop */
    p.pause_s = 0.1307;
    float *x = NULL;
    const size_t n = render_plan(&p, rate, -90.0, &x);
    ml_step_expect e[16];
    size_t ne = 0;
    ck_assert_int_eq(ml_step_plan_schedule(&p, rate, e, 16, &ne), ML_OK);
    ck_assert_uint_eq(ne, 16);
    ml_steps *q = make(rate);
    ck_assert_int_eq(ml_steps_push(q, x, n), ML_OK);
    ck_assert_int_eq(ml_steps_finish(q), ML_OK);
    ck_assert_uint_eq(ml_steps_count(q), ne);
    for (size_t i = 0; i < ne; i++) {
        ml_step s;
        ck_assert_int_eq(ml_steps_get(q, i, &s), ML_OK);
        ck_assert_msg(s.measure_start >= e[i].start && s.measure_end <= e[i].end && s.start < s.measure_start,
                      "step %zu: %llu..%llu outside %llu..%llu", i, (unsigned long long)s.measure_start,
                      (unsigned long long)s.measure_end, (unsigned long long)e[i].start,
                      (unsigned long long)e[i].end);
        ck_assert_msg(fabs(s.frequency_hz / e[i].frequency_hz - 1) < 1e-4, "step %zu: %.4f Hz", i,
                      s.frequency_hz);
        ck_assert_msg(fabs(s.level_dbfs - e[i].level_dbfs) < 0.05, "step %zu: %.3f dBFS", i, s.level_dbfs);
        ck_assert(s.level_spread_db < 0.1 && s.nframes >= 3);
    }
    ml_steps_destroy(q);
    free(x);
}
END_TEST

START_TEST(block_invariance_and_reset)
{
    /* Blocks of 1, 7 and 4096 frames give identical steps (frames are cut from the sample count, not
     * from the blocks); reset forgets everything and the same input gives the same steps. */
    const double rate = 48000;
    ml_step_plan p = test_plan();
    p.nlevels = 1;
    float *x = NULL;
    const size_t n = render_plan(&p, rate, -80.0, &x);
    ml_steps *q = make(rate);
    ck_assert_int_eq(ml_steps_push(q, x, n), ML_OK);
    ck_assert_int_eq(ml_steps_finish(q), ML_OK);
    const uint64_t cnt = ml_steps_count(q);
    ck_assert_uint_eq(cnt, 8);
    ml_step ref[8];
    for (uint64_t i = 0; i < cnt; i++)
        ck_assert_int_eq(ml_steps_get(q, i, &ref[i]), ML_OK);
    const size_t blocks[] = {1, 7, 4096};
    for (size_t b = 0; b < 3; b++) {
        ml_steps_reset(q);
        ck_assert_uint_eq(ml_steps_count(q), 0);
        for (size_t i = 0; i < n; i += blocks[b])
            ck_assert_int_eq(ml_steps_push(q, x + i, i + blocks[b] <= n ? blocks[b] : n - i), ML_OK);
        ck_assert_int_eq(ml_steps_finish(q), ML_OK);
        ck_assert_uint_eq(ml_steps_count(q), cnt);
        for (uint64_t i = 0; i < cnt; i++) {
            ml_step s;
            ck_assert_int_eq(ml_steps_get(q, i, &s), ML_OK);
            ck_assert(memcmp(&s, &ref[i], sizeof s) == 0);
        }
    }
    ml_steps_destroy(q);
    free(x);
}
END_TEST

START_TEST(quiet_line_and_skipped_run)
{
    /* By construction (dsp/synth.h steps, AES17 levels): 1 kHz at -10 dBFS, 3 kHz at -90 dBFS,
     * 2 kHz at -10 dBFS (1 s each), then 5 kHz for 0.35 s, each with 0.25 s of pause, all under
     * white noise at -80 dBFS. The -90 dBFS step holds a tenth of the noise's power but its line
     * stands ~35 dB over the noise per bin: a step, at its level within 0.5 dB (the noise in its
     * lobe, 15 % r.m.s. in amplitude per frame, averages over the frames). The 0.35 s tone is
     * steady but shorter than min_step_s plus both edges: a skipped run, named at 5 kHz. */
    const double rate = 48000;
    ml_synth_config sc = ml_synth_config_default(rate);
    sc.kind = ML_SYNTH_STEPS;
    const ml_synth_step seq[] = {{1000, -10, 1}, {0, -10, 0.25}, {3000, -90, 1}, {0, -10, 0.25},
                                 {2000, -10, 1}, {0, -10, 0.25}, {5000, -20, 0.35}, {0, -10, 0.25}};
    memcpy(sc.steps, seq, sizeof seq);
    sc.nsteps = sizeof seq / sizeof seq[0];
    sc.noise_dbfs = -80.0;
    ml_synth *syn = NULL;
    ck_assert_int_eq(ml_synth_create(&sc, &syn), ML_OK);
    const size_t n = (size_t)ml_synth_cycle_frames(syn);
    float *x = malloc(n * sizeof *x);
    ck_assert_int_eq(ml_synth_generate(syn, x, n), ML_OK);
    ml_synth_destroy(syn);
    ml_steps *q = make(rate);
    ck_assert_int_eq(ml_steps_push(q, x, n), ML_OK);
    ck_assert_int_eq(ml_steps_finish(q), ML_OK);
    ck_assert_uint_eq(ml_steps_count(q), 3);
    const double f[] = {1000, 3000, 2000}, l[] = {-10, -90, -10};
    for (uint64_t i = 0; i < 3; i++) {
        ml_step s;
        ck_assert_int_eq(ml_steps_get(q, i, &s), ML_OK);
        ck_assert_msg(fabs(s.frequency_hz / f[i] - 1) < 1e-3, "step %llu: %.3f Hz", (unsigned long long)i,
                      s.frequency_hz);
        ck_assert_msg(fabs(s.level_dbfs - l[i]) < 0.5, "step %llu: %.3f dBFS", (unsigned long long)i, s.level_dbfs);
    }
    ck_assert_uint_ge(ml_steps_skipped_count(q), 1);
    bool seen = false;
    for (uint64_t i = 0; i < ml_steps_skipped_count(q); i++) {
        ml_step s;
        ck_assert_int_eq(ml_steps_get_skipped(q, i, &s), ML_OK);
        seen = seen || (fabs(s.frequency_hz / 5000 - 1) < 0.01 && s.start >= (uint64_t)(3.6 * rate));
    }
    ck_assert(seen);
    ml_step s;
    ck_assert_int_eq(ml_steps_get_skipped(q, ml_steps_skipped_count(q), &s), ML_EINVAL);
    ml_steps_destroy(q);
    free(x);
}
END_TEST

START_TEST(bounded_ring)
{
    /* max_steps 3: only the last three steps stay readable; older ones report ML_ENOSIGNAL. */
    const double rate = 48000;
    ml_step_plan p = test_plan();
    p.nlevels = 1;
    float *x = NULL;
    const size_t n = render_plan(&p, rate, -80.0, &x);
    ml_steps_config c = ml_steps_config_default(rate);
    c.max_steps = 3;
    ml_steps *q = NULL;
    ck_assert_int_eq(ml_steps_create(&c, &q), ML_OK);
    ck_assert_int_eq(ml_steps_push(q, x, n), ML_OK);
    ck_assert_int_eq(ml_steps_finish(q), ML_OK);
    ml_step s;
    ck_assert_uint_eq(ml_steps_count(q), 8);
    ck_assert_int_eq(ml_steps_get(q, 4, &s), ML_ENOSIGNAL);
    ck_assert_int_eq(ml_steps_get(q, 5, &s), ML_OK);
    ck_assert_double_eq_tol(s.frequency_hz, 6300, 0.63);
    ck_assert_int_eq(ml_steps_get(q, 8, &s), ML_EINVAL);
    ml_steps_destroy(q);
    free(x);
}
END_TEST

START_TEST(filtered_recording_levels_and_thd)
{
    /* The scipy-made recording (make_steps_fixture.py): a filter with known gain per step and known
     * harmonics. Every step is found (8 frequencies plus a level change at 1 kHz without a pause);
     * per-step analysis of [measure_start, measure_end) with the project's spectrum (Blackman-Harris,
     * 16384 points) and ml_audio_analyze: level re the 1 kHz -12 dBFS step within 0.1 dB of
     * gain_db(f) - gain_db(1 kHz) + level difference, THD within 0.3 dB of the scipy value where
     * harmonics lie in the band (the brief's tolerances, issue 21). */
    FILE *fa = fopen(fixture_f32, "rb"), *ft = fopen(fixture_txt, "r");
    ck_assert_msg(fa != NULL && ft != NULL, "fixture files %s %s", fixture_f32, fixture_txt);
    fseek(fa, 0, SEEK_END);
    const size_t n = (size_t)ftell(fa) / sizeof(float);
    fseek(fa, 0, SEEK_SET);
    float *x = malloc(n * sizeof *x);
    ck_assert_uint_eq(fread(x, sizeof *x, n, fa), n); /* little-endian float32, as on this machine */
    fclose(fa);
    double ef[16], el[16], eg[16], et[16];
    size_t ne = 0;
    while (ne < 16 && fscanf(ft, "%lf %lf %lf %lf", &ef[ne], &el[ne], &eg[ne], &et[ne]) == 4)
        ne++;
    fclose(ft);
    ck_assert_uint_eq(ne, 9);

    const double rate = 48000;
    ml_steps *q = make(rate);
    for (size_t i = 0; i < n; i += 4096)
        ck_assert_int_eq(ml_steps_push(q, x + i, i + 4096 <= n ? 4096 : n - i), ML_OK);
    ck_assert_int_eq(ml_steps_finish(q), ML_OK);
    ck_assert_uint_eq(ml_steps_count(q), ne);
    double lev[16], thd[16];
    for (size_t i = 0; i < ne; i++) {
        ml_step s;
        ck_assert_int_eq(ml_steps_get(q, i, &s), ML_OK);
        ck_assert_msg(fabs(s.frequency_hz / ef[i] - 1) < 1e-4, "step %zu: %.4f Hz", i, s.frequency_hz);
        ml_spectrum_config sc = ml_spectrum_config_default(rate);
        sc.nfft = 16384;
        sc.hop = 4096;
        sc.window = ML_WINDOW_BLACKMAN_HARRIS;
        ml_spectrum *sp = NULL;
        ck_assert_int_eq(ml_spectrum_create(&sc, &sp), ML_OK);
        const size_t len = (size_t)(s.measure_end - s.measure_start);
        ck_assert_int_eq(ml_spectrum_push(sp, x + s.measure_start, len), ML_OK);
        ml_audio_config ac = ml_audio_config_default();
        ac.tone_hz = s.frequency_hz;
        ml_audio_result r;
        ck_assert_int_eq(ml_audio_analyze(sp, &ac, &r), ML_OK);
        lev[i] = ml_power_dbfs(r.fundamental_power);
        thd[i] = ml_ratio_pct(r.distortion_power, r.fundamental_power);
        /* the segmenter's own level (fundamental, Hann frames) agrees with the per-step analysis */
        ck_assert_msg(fabs(s.level_dbfs - lev[i]) < 0.1, "step %zu: %.3f vs %.3f", i, s.level_dbfs, lev[i]);
        ml_spectrum_destroy(sp);
    }
    const size_t ref = 3; /* 1 kHz at -12 dBFS */
    for (size_t i = 0; i < ne; i++) {
        const double want = (eg[i] + el[i]) - (eg[ref] + el[ref]);
        ck_assert_msg(fabs((lev[i] - lev[ref]) - want) <= 0.1, "step %zu (%g Hz): %.3f dB re 1 kHz (%.3f)",
                      i, ef[i], lev[i] - lev[ref], want);
        if (et[i] > 0.01)
            ck_assert_msg(fabs(20 * log10(thd[i] / et[i])) <= 0.3, "step %zu (%g Hz): THD %.4f %%, want %.4f",
                          i, ef[i], thd[i], et[i]);
    }
    ml_steps_destroy(q);
    free(x);
}
END_TEST

START_TEST(plan_functions)
{
    /* The sequence alternates tone and pause, levels outer; its schedule matches the synth placement
     * rule (analytic: 0.8 s tone + 0.2 s pause = 48000 frames per entry pair at 48 kHz). */
    ml_step_plan p = test_plan();
    ck_assert_uint_eq(ml_step_plan_entries(&p), 32);
    ml_synth_step st[32];
    size_t n = 0;
    ck_assert_int_eq(ml_step_plan_to_synth(&p, 48000, st, 32, &n), ML_OK);
    ck_assert_uint_eq(n, 32);
    ck_assert(st[0].freq_hz == 31.5 && st[0].level_dbfs == -10 && st[1].freq_hz == 0);
    ck_assert(st[16].level_dbfs == -30);
    ml_step_expect e[16];
    ck_assert_int_eq(ml_step_plan_schedule(&p, 48000, e, 16, &n), ML_OK);
    ck_assert_uint_eq(e[9].start, 9 * 48000);
    ck_assert_uint_eq(e[9].end, 9 * 48000 + 38400);
    ck_assert(e[9].freq_index == 1 && e[9].level_index == 1);
    ck_assert_int_eq(ml_step_plan_to_synth(&p, 48000, st, 31, &n), ML_EINVAL);
    p.pause_s = 0;
    ck_assert_uint_eq(ml_step_plan_entries(&p), 16);
    ml_step_plan bad = test_plan();
    bad.freqs_hz[2] = 24000; /* not below Nyquist at 48 kHz */
    ck_assert_int_eq(ml_step_plan_schedule(&bad, 48000, e, 16, &n), ML_EINVAL);
    bad = test_plan();
    bad.levels_dbfs[0] = 1; /* above full scale */
    ck_assert_int_eq(ml_step_plan_to_synth(&bad, 48000, st, 32, &n), ML_EINVAL);
    bad = test_plan();
    bad.nfreqs = 0;
    ck_assert_int_eq(ml_step_plan_schedule(&bad, 48000, e, 16, &n), ML_EINVAL);
    bad = test_plan();
    bad.step_s = 0.01;
    ck_assert_int_eq(ml_step_plan_schedule(&bad, 48000, e, 16, &n), ML_EINVAL);
}
END_TEST

START_TEST(config_rejected)
{
    ml_steps *q = (ml_steps *)1;
    ck_assert_int_eq(ml_steps_create(NULL, &q), ML_EINVAL);
    ck_assert_ptr_null(q);
    for (int i = 0; i < 11; i++) {
        ml_steps_config c = ml_steps_config_default(48000);
        switch (i) {
        case 0: c.rate_hz = 7999; break;
        case 1: c.frame_s = 0.001; break;
        case 2: c.edge_s = -1; break;
        case 3: c.min_step_s = 0; break;
        case 4: c.freq_tol_pct = 0; break;
        case 5: c.freq_tol_hz = NAN; break;
        case 6: c.level_tol_db = 0; break;
        case 7: c.tonal_db = 61; break;
        case 8: c.min_level_dbfs = 1; break;
        case 9: c.line_db = 2; break;
        default: c.max_steps = 0; break;
        }
        ck_assert_msg(ml_steps_create(&c, &q) == ML_EINVAL, "case %d", i);
        ck_assert_ptr_null(q);
    }
    q = make(48000);
    const float bad[2] = {0.0f, INFINITY};
    ck_assert_int_eq(ml_steps_push(q, bad, 2), ML_ERANGE);
    ck_assert_int_eq(ml_steps_push(q, NULL, 3), ML_EINVAL);
    ml_step s;
    ck_assert_int_eq(ml_steps_get(q, 0, &s), ML_EINVAL);
    ck_assert_uint_eq(ml_steps_latency(q), 9600 + 4800);
    ml_steps_destroy(q);
}
END_TEST

static Suite *steps_suite(void)
{
    Suite *s = suite_create("dsp_steps");
    TCase *tc = tcase_create("core");
    tcase_set_timeout(tc, 100);
    tcase_add_test(tc, plan_read_back_without_options);
    tcase_add_test(tc, block_invariance_and_reset);
    tcase_add_test(tc, quiet_line_and_skipped_run);
    tcase_add_test(tc, bounded_ring);
    tcase_add_test(tc, filtered_recording_levels_and_thd);
    tcase_add_test(tc, plan_functions);
    tcase_add_test(tc, config_rejected);
    suite_add_tcase(s, tc);
    return s;
}

int main(int argc, char **argv)
{
    if (argc != 3) {
        fprintf(stderr, "usage: test_dsp_steps FIXTURE.f32 FIXTURE.txt\n");
        return EXIT_FAILURE;
    }
    fixture_f32 = argv[1];
    fixture_txt = argv[2];
    return ml_check_run(steps_suite());
}
