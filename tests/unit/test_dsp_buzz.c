/* Unit tests for dsp/buzz: periodic impulsive interference, its mains relation and line combs; with
 * dsp/detect.h (impulse times, broadband level rise) on a synthesised dimmer-like buzz.
 * SPDX-License-Identifier: MIT
 *
 * Outside references: docs/references.md 15 (phase-control dimmers chop twice per mains cycle, so
 * their bursts repeat at 100 Hz on 50 Hz mains and 120 Hz on 60 Hz mains; switch-mode supplies
 * show a comb of lines at the switching frequency; common practice, practitioners' reports).
 * Signals are built here with a fixed seed (tests/unit/testsig.h).
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/buzz.h"
#include "dsp/detect.h"
#include "testsig.h"

#define RATE 48000.0
#define DUR_S 40.0
#define NS ((size_t)(DUR_S * RATE))
#define SIGMA 0.01

/* Dimmer-like buzz in receiver audio: Gaussian noise of sigma 0.01 for 40 s; from 10 s to 30 s a
 * burst every 10 ms (twice the 50 Hz mains) with the firing instant jittered uniformly by
 * +-0.5 ms. Each burst is a broadband click, alternating in sign sample by sample and decaying
 * with 3.83 samples: a (-1)^j e^(-j/3.83), a = 28 sigma. Its energy a^2 / (1 - e^(-2/3.83)) =
 * 2.455 a^2 at 100 per second adds 4.0 sigma^2 of power: the level rises by 10 lg 5.0 = 7.0 dB;
 * the peak rises from the noise's ~4.9 sigma (the largest of 5e5 samples) to ~28 sigma, 15 dB
 * (both checked on the signal below). */
static float *dimmer(unsigned seed, double *bursts, size_t *nbursts)
{
    float *x = malloc(NS * sizeof *x);
    ck_assert_ptr_nonnull(x);
    ts_rng r = {seed};
    for (size_t i = 0; i < NS; i++)
        x[i] = (float)(SIGMA * ts_gauss(&r));
    size_t nb = 0;
    for (int k = 0; k < 2000; k++) {
        const double t = 10.0 + 0.005 + k * 0.01 + (ts_uniform(&r) - 0.5) * 1e-3;
        const size_t n0 = (size_t)llround(t * RATE);
        for (size_t j = 0; j < 40; j++)
            x[n0 + j] += (float)(28 * SIGMA * ((j & 1) ? -1.0 : 1.0) * exp(-(double)j / 3.83));
        if (bursts)
            bursts[nb] = t;
        nb++;
    }
    if (nbursts)
        *nbursts = nb;
    return x;
}

/* Impulse detector settings for the tests: 12 dB over the floor (the bursts' frames stand about
 * 19 dB over the differenced noise's median; the default 20 dB finds only ~3 % of them). */
static ml_impulse *impulse_detector(void)
{
    ml_impulse_config c = ml_impulse_config_default(RATE);
    c.threshold_db = 12.0;
    ml_impulse *q = NULL;
    ck_assert_int_eq(ml_impulse_create(&c, &q), ML_OK);
    return q;
}

/* Audio -> impulses (their start frame's centre, 1 ms resolution) -> buzz, in blocks of `block`
 * samples; now_s is the end of what was pushed. Returns the buzz events; *nimp gets the impulse
 * count. */
static size_t audio_to_buzz(const float *x, size_t block, double mains_hz, ml_buzz_event *out, size_t cap,
                            size_t *nimp)
{
    ml_impulse *imp = impulse_detector();
    ml_buzz_config bc = ml_buzz_config_default(mains_hz);
    ml_buzz *bz = NULL;
    ck_assert_int_eq(ml_buzz_create(&bc, &bz), ML_OK);
    const double frame_s = (double)ml_impulse_frame_samples(imp) / RATE;
    ml_event ev[64];
    double t[64];
    size_t total = 0, impulses = 0;
    for (size_t i = 0; i < NS; i += block) {
        const size_t m = i + block <= NS ? block : NS - i;
        size_t got = 0, nb = 0;
        ck_assert_int_eq(ml_impulse_push(imp, x + i, m, ev, 64, &got), ML_OK);
        for (size_t k = 0; k < got; k++)
            t[k] = ((double)ev[k].start + 0.5) * frame_s;
        impulses += got;
        ck_assert_int_eq(ml_buzz_push(bz, t, got, (double)(i + m) / RATE, out + total, cap - total, &nb), ML_OK);
        total += nb;
    }
    size_t nb = 0;
    ck_assert_int_eq(ml_buzz_finish(bz, out + total, cap - total, &nb), ML_OK);
    total += nb;
    ml_impulse_destroy(imp);
    ml_buzz_destroy(bz);
    if (nimp)
        *nimp = impulses;
    return total;
}

static int cmp_d(const void *a, const void *b)
{
    const double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

START_TEST(dimmer_buzz_is_one_event)
{
    /* The fixture is what the issue describes: level +7 dB and peak +15 dB (checked here, 0.5 and
     * 1 dB for the noise's own variation), impulses at twice the 50 Hz mains for 20 s. The
     * impulse detector reports each burst (about 2000 events); the buzz analysis makes them ONE
     * buzz with its rate within 1 Hz of 100 Hz (the requirement; the least-squares grid gives it
     * far closer: 0.05 Hz is asserted too, since +-0.5 ms of uniform jitter over 200 impulses per
     * window moves the slope by ~1e-4), tied to twice the mains (docs/references.md 15: dimmers),
     * starting and ending within 20 ms of the first and last burst. */
    double bursts[2000];
    size_t nb = 0;
    float *x = dimmer(11, bursts, &nb);
    double ms0 = 0, ms1 = 0, pk0 = 0, pk1 = 0;
    for (size_t i = 0; i < NS; i++) {
        const double v = fabs(x[i]);
        if (i < (size_t)(9.9 * RATE)) {
            ms0 += v * v;
            pk0 = fmax(pk0, v);
        } else if (i >= (size_t)(10.0 * RATE) && i < (size_t)(30.0 * RATE)) {
            ms1 += v * v;
            pk1 = fmax(pk1, v);
        }
    }
    ck_assert_double_eq_tol(10 * log10((ms1 / 20.0) / (ms0 / 9.9)), 7.0, 0.5);
    ck_assert_double_eq_tol(20 * log10(pk1 / pk0), 15.0, 1.0);

    ml_buzz_event ev[8];
    size_t nimp = 0;
    const size_t n = audio_to_buzz(x, 4096, 0.0, ev, 8, &nimp);
    ck_assert_uint_ge(nimp, 1990); /* the impulses were found: hundreds of impulse events */
    ck_assert_uint_le(nimp, 2010);
    ck_assert_uint_eq(n, 1);
    ck_assert_double_eq_tol(ev[0].rate_hz, 100.0, 1.0);
    ck_assert_double_eq_tol(ev[0].rate_hz, 100.0, 0.05);
    ck_assert_double_eq_tol(ev[0].start_s, bursts[0], 0.02);
    ck_assert_double_eq_tol(ev[0].end_s, bursts[nb - 1], 0.02);
    ck_assert_int_eq(ev[0].tie, ML_BUZZ_TWICE_MAINS);
    ck_assert_double_eq(ev[0].mains_hz, 50.0);
    ck_assert_int_eq(ev[0].multiple, 2);
    /* uniform +-0.5 ms jitter has r.m.s. 0.5 / sqrt(3) = 0.289 ms; 1 ms frames add uniform
     * rounding of r.m.s. 0.289 ms: together 0.41 ms, +-0.1 ms for the estimate */
    ck_assert_double_eq_tol(ev[0].jitter_s, 0.41e-3, 0.1e-3);
    ck_assert_uint_ge(ev[0].impulses, 1990);
    ck_assert_uint_le(ev[0].impulses, 2010);
    free(x);
}
END_TEST

START_TEST(dimmer_level_rise_is_an_event)
{
    /* The broadband level rise of the same buzz is found by dsp/detect.h ml_change (no new
     * detector needed): the r.m.s. level of the audio per 100 ms step, baseline the running
     * median, threshold 6 dB held for 1 s. One rise from 10 s to 30 s (one step either side); its
     * mean level re the baseline is 7.0 +-0.5 dB (the fixture's rise). The peak level per step
     * (threshold 10 dB) rises likewise; per 100 ms the noise's peak is ~3.9 sigma rather than
     * 4.9, so that rise is ~17 dB: checked against an independent figure, the median of the
     * per-step peaks during the buzz minus their median before it, within 0.5 dB. */
    float *x = dimmer(11, NULL, NULL);
    const size_t step = 4800, nsteps = NS / step;
    double *rms = malloc(nsteps * sizeof *rms), *pk = malloc(nsteps * sizeof *pk);
    for (size_t s = 0; s < nsteps; s++) {
        double ms = 0, p = 0;
        for (size_t i = s * step; i < (s + 1) * step; i++) {
            ms += (double)x[i] * x[i];
            p = fmax(p, fabs(x[i]));
        }
        rms[s] = 10 * log10(ms / step / 0.5);
        pk[s] = 20 * log10(p);
    }
    double *tmp = malloc(nsteps * sizeof *tmp);
    memcpy(tmp, pk, 99 * sizeof *tmp);
    qsort(tmp, 99, sizeof *tmp, cmp_d);
    const double before = tmp[49];
    memcpy(tmp, pk + 100, 200 * sizeof *tmp);
    qsort(tmp, 200, sizeof *tmp, cmp_d);
    const double during = 0.5 * (tmp[99] + tmp[100]);
    free(tmp);
    const double thr[2] = {6.0, 10.0}, want[2] = {7.0, during - before}, tol[2] = {0.5, 0.5};
    const double *lev[2] = {rms, pk};
    for (int k = 0; k < 2; k++) {
        ml_change_config c = ml_change_config_default(10.0, +1, thr[k]);
        ml_change *q = NULL;
        ck_assert_int_eq(ml_change_create(&c, &q), ML_OK);
        ml_event ev[4];
        size_t n = 0, m = 0;
        ck_assert_int_eq(ml_change_push(q, lev[k], nsteps, ev, 4, &n), ML_OK);
        ck_assert_int_eq(ml_change_finish(q, ev + n, 4 - n, &m), ML_OK);
        ck_assert_uint_eq(n + m, 1);
        ck_assert_int_le(labs((long)ev[0].start - 100), 1);
        ck_assert_int_le(labs((long)ev[0].end - 300), 1);
        /* rise_db is the extreme value re baseline; the mean over the event is the level rise */
        double mean = 0;
        for (int64_t s = ev[0].start; s < ev[0].end; s++)
            mean += lev[k][s];
        mean /= (double)(ev[0].end - ev[0].start);
        ck_assert_double_eq_tol(mean - ev[0].baseline_db, want[k], tol[k]);
        ml_change_destroy(q);
    }
    free(rms);
    free(pk);
    free(x);
}
END_TEST

START_TEST(block_invariance_and_reset)
{
    /* STYLE.md 6: the audio in blocks of 1, 7 and 4096 samples gives the same buzz events, bit for
     * bit; impulse times pushed one by one, seven at a time or all at once likewise; reset makes
     * the object as new. */
    float *x = dimmer(23, NULL, NULL);
    ml_buzz_event ref[8], ev[8];
    const size_t nref = audio_to_buzz(x, 4096, 50.0, ref, 8, NULL);
    ck_assert_uint_eq(nref, 1);
    const size_t blocks[] = {1, 7};
    for (size_t b = 0; b < 2; b++) {
        const size_t n = audio_to_buzz(x, blocks[b], 50.0, ev, 8, NULL);
        ck_assert_uint_eq(n, nref);
        ck_assert(memcmp(ev, ref, n * sizeof *ev) == 0);
    }
    free(x);

    double bursts[2000];
    size_t nb = 0;
    free(dimmer(29, bursts, &nb));
    ml_buzz_config c = ml_buzz_config_default(0.0);
    ml_buzz *q = NULL;
    ck_assert_int_eq(ml_buzz_create(&c, &q), ML_OK);
    const size_t tblocks[] = {2000, 1, 7};
    ml_buzz_event first[4];
    size_t nfirst = 0;
    for (size_t b = 0; b < 3; b++) {
        ml_buzz_reset(q);
        size_t total = 0, got = 0;
        for (size_t i = 0; i < nb; i += tblocks[b]) {
            const size_t m = i + tblocks[b] <= nb ? tblocks[b] : nb - i;
            ck_assert_int_eq(ml_buzz_push(q, bursts + i, m, bursts[i + m - 1], ev + total, 8 - total, &got), ML_OK);
            total += got;
        }
        ck_assert_int_eq(ml_buzz_push(q, NULL, 0, 40.0, ev + total, 8 - total, &got), ML_OK);
        total += got;
        ck_assert_uint_eq(total, 1);
        if (b == 0) {
            memcpy(first, ev, sizeof first[0]);
            nfirst = total;
        } else {
            ck_assert_uint_eq(total, nfirst);
            ck_assert(memcmp(ev, first, sizeof first[0]) == 0);
        }
    }
    ml_buzz_reset(q);
    ck_assert(!ml_buzz_get_active(q, NULL));
    size_t got = 0;
    ck_assert_int_eq(ml_buzz_push(q, bursts, 500, bursts[499], ev, 8, &got), ML_OK);
    ml_buzz_event now;
    ck_assert(ml_buzz_get_active(q, &now)); /* 5 s of it: in progress */
    ck_assert_double_eq_tol(now.rate_hz, 100.0, 0.05);
    ml_buzz_destroy(q);
}
END_TEST

START_TEST(save_restore_continues_exactly)
{
    /* A buzz in progress saved and restored into a new detector ends as the uninterrupted one does,
     * bit for bit (a log resumed in another process); a damaged state is refused. */
    double bursts[2000];
    size_t nb = 0;
    free(dimmer(31, bursts, &nb));
    ml_buzz_config c = ml_buzz_config_default(0.0);
    ml_buzz *a = NULL, *b = NULL;
    ck_assert_int_eq(ml_buzz_create(&c, &a), ML_OK);
    ck_assert_int_eq(ml_buzz_create(&c, &b), ML_OK);
    ml_buzz_event ref[4], ev[4];
    size_t got = 0, n = 0;
    ck_assert_int_eq(ml_buzz_push(a, bursts, nb, 40.0, ref, 4, &got), ML_OK);
    ck_assert_uint_eq(got, 1);
    ml_buzz_reset(a);
    ck_assert_int_eq(ml_buzz_push(a, bursts, 1000, bursts[999], ev, 4, &n), ML_OK);
    ck_assert(ml_buzz_get_active(a, NULL));
    const size_t need = ml_buzz_save(a, NULL, 0);
    double *st = malloc(need * sizeof *st);
    ck_assert_uint_eq(ml_buzz_save(a, st, need), need);
    ck_assert_int_eq(ml_buzz_restore(b, st, need), ML_OK);
    ck_assert(ml_buzz_get_active(b, NULL));
    ck_assert_int_eq(ml_buzz_push(b, bursts + 1000, nb - 1000, 40.0, ev + n, 4 - n, &got), ML_OK);
    ck_assert_uint_eq(n + got, 1);
    /* field by field: the restored event is built member by member (its padding may differ) */
    ck_assert(ev[0].start_s == ref[0].start_s && ev[0].end_s == ref[0].end_s && ev[0].rate_hz == ref[0].rate_hz
              && ev[0].rate_min_hz == ref[0].rate_min_hz && ev[0].rate_max_hz == ref[0].rate_max_hz
              && ev[0].jitter_s == ref[0].jitter_s && ev[0].impulses == ref[0].impulses && ev[0].tie == ref[0].tie
              && ev[0].mains_hz == ref[0].mains_hz && ev[0].multiple == ref[0].multiple);
    st[0] = 4;
    ck_assert_int_eq(ml_buzz_restore(b, st, need), ML_EINVAL);
    st[0] = 3;
    st[need - 1] = -1; /* a time before the others */
    ck_assert_int_eq(ml_buzz_restore(b, st, need), ML_EINVAL);
    free(st);
    ml_buzz_destroy(a);
    ml_buzz_destroy(b);
}
END_TEST

/* Times of a train at rate_hz from t0 to t1, jittered by +-jitter_s, each kept with probability
 * keep. */
static size_t train(double *t, size_t cap, double rate_hz, double t0, double t1, double jitter_s, double keep,
                    unsigned seed)
{
    ts_rng r = {seed};
    size_t n = 0;
    for (double s = t0; s < t1 && n < cap; s += 1.0 / rate_hz) {
        const double j = (ts_uniform(&r) - 0.5) * 2.0 * jitter_s;
        if (ts_uniform(&r) < keep)
            t[n++] = s + j;
    }
    return n;
}

static size_t run_times(const double *t, size_t n, double end_s, double mains_hz, ml_buzz_event *ev, size_t cap)
{
    ml_buzz_config c = ml_buzz_config_default(mains_hz);
    ml_buzz *q = NULL;
    ck_assert_int_eq(ml_buzz_create(&c, &q), ML_OK);
    size_t got = 0, more = 0;
    ck_assert_int_eq(ml_buzz_push(q, t, n, end_s, ev, cap, &got), ML_OK);
    ck_assert_int_eq(ml_buzz_finish(q, ev + got, cap - got, &more), ML_OK);
    ml_buzz_destroy(q);
    return got + more;
}

START_TEST(clicks_are_not_a_buzz)
{
    /* Isolated clicks (12 at random times in 60 s) and clicks at random times (Poisson, 30 per
     * second for 20 s: exponential intervals, so no grid holds 80 % of them) are no buzz. A train
     * with 30 % of its impulses missing and +-1 ms jitter still is one, at its rate. */
    static double t[4000];
    ml_buzz_event ev[8];
    ts_rng r = {3};
    size_t n = 0;
    for (int i = 0; i < 12; i++)
        t[n++] = 60.0 * ts_uniform(&r);
    qsort(t, n, sizeof t[0], cmp_d);
    ck_assert_uint_eq(run_times(t, n, 60.0, 0.0, ev, 8), 0);
    n = 0;
    for (double s = 5.0 - log(ts_uniform(&r)) / 30.0; s < 25.0; s -= log(ts_uniform(&r)) / 30.0)
        t[n++] = s;
    ck_assert_uint_ge(n, 500);
    ck_assert_uint_eq(run_times(t, n, 30.0, 0.0, ev, 8), 0);
    n = train(t, 4000, 100.0, 5.0, 25.0, 1e-3, 0.7, 9);
    ck_assert_uint_eq(run_times(t, n, 30.0, 0.0, ev, 8), 1);
    ck_assert_double_eq_tol(ev[0].rate_hz, 100.0, 0.1);
}
END_TEST

START_TEST(tied_to_the_mains)
{
    /* docs/references.md 15 (common practice): a buzz at twice the mains rate points to
     * phase-control dimmers. 120 Hz on 60 Hz mains (given, and unknown) is twice mains; 60 Hz on
     * 60 Hz mains is the mains rate; 100 Hz on 60 Hz mains is not tied (100/60 = 1.67); 300 Hz
     * is a multiple (k = 6 of 50, 5 of 60: unknown mains picks the nearer in relative terms, an
     * exact tie goes to 50). 2 %: a 100 Hz buzz may read 98..102 Hz (mains within +-1 Hz). */
    static double t[4000];
    ml_buzz_event ev[4];
    const size_t n = train(t, 4000, 120.0, 2.0, 22.0, 0.4e-3, 1.0, 5);
    for (int m = 0; m <= 1; m++) {
        ck_assert_uint_eq(run_times(t, n, 25.0, m ? 60.0 : 0.0, ev, 4), 1);
        ck_assert_double_eq_tol(ev[0].rate_hz, 120.0, 1.0);
        ck_assert_int_eq(ev[0].tie, ML_BUZZ_TWICE_MAINS);
        ck_assert_double_eq(ev[0].mains_hz, 60.0);
        ck_assert_int_eq(ev[0].multiple, 2);
    }
    ck_assert_str_eq(ml_buzz_tie_name(ev[0].tie), "twice-mains");
    ck_assert_ptr_nonnull(strstr(ml_buzz_tie_hint(ev[0].tie), "dimmer"));
    ml_buzz_tie tie;
    double mains;
    int k;
    ck_assert_int_eq(ml_buzz_tie_to_mains(60.0, 60.0, &tie, &mains, &k), ML_OK);
    ck_assert_int_eq(tie, ML_BUZZ_MAINS);
    ck_assert_int_eq(k, 1);
    ck_assert_int_eq(ml_buzz_tie_to_mains(100.0, 60.0, &tie, &mains, &k), ML_OK);
    ck_assert_int_eq(tie, ML_BUZZ_UNTIED);
    ck_assert_double_eq(mains, 0.0);
    ck_assert_int_eq(k, 0);
    ck_assert_int_eq(ml_buzz_tie_to_mains(101.9, 50.0, &tie, &mains, &k), ML_OK);
    ck_assert_int_eq(tie, ML_BUZZ_TWICE_MAINS);
    ck_assert_int_eq(ml_buzz_tie_to_mains(102.1, 50.0, &tie, &mains, &k), ML_OK);
    ck_assert_int_eq(tie, ML_BUZZ_UNTIED);
    ck_assert_int_eq(ml_buzz_tie_to_mains(300.0, 0.0, &tie, &mains, &k), ML_OK);
    ck_assert_int_eq(tie, ML_BUZZ_MAINS_MULTIPLE);
    ck_assert_double_eq(mains, 50.0);
    ck_assert_int_eq(k, 6);
    ck_assert_int_eq(ml_buzz_tie_to_mains(100.0, 55.0, &tie, &mains, &k), ML_EINVAL);
    ck_assert_int_eq(ml_buzz_tie_to_mains(0.0, 50.0, &tie, &mains, &k), ML_EINVAL);
}
END_TEST

START_TEST(comb_of_lines)
{
    /* A switch-mode supply's signature (docs/references.md 15): lines at a switching frequency
     * and its harmonics. Spectrum: 8192 bins of 5.859 Hz (48 kHz / 8192), a noise floor of
     * exponentially distributed powers (a periodogram of noise) and lines 20 dB up at multiples
     * of 3217 Hz (7 of them below 24 kHz, at non-integer bins). Found: spacing within a quarter
     * bin (the least-squares slope over 7 lines), 7 lines. Lines at unrelated frequencies are no
     * comb. */
    const size_t nb = 8192;
    const double bin = 48000.0 / 8192;
    double *psd = malloc(nb * sizeof *psd);
    ts_rng r = {17};
    for (size_t k = 0; k < nb; k++)
        psd[k] = -log(ts_uniform(&r));
    for (int h = 1; h * 3217.0 < 24000.0; h++)
        psd[(size_t)llround(h * 3217.0 / bin)] += 100.0;
    double s = 0;
    size_t lines = 0;
    ck_assert_int_eq(ml_buzz_find_comb(psd, nb, bin, 1000.0, 10000.0, 13.0, 4, &s, &lines), ML_OK);
    ck_assert_double_eq_tol(s, 3217.0, bin / 4);
    ck_assert_uint_eq(lines, 7);
    for (size_t k = 0; k < nb; k++)
        psd[k] = -log(ts_uniform(&r));
    const double odd[] = {1234.0, 4021.0, 7777.0, 15003.0, 19500.0};
    for (size_t i = 0; i < 5; i++)
        psd[(size_t)llround(odd[i] / bin)] += 100.0;
    ck_assert_int_eq(ml_buzz_find_comb(psd, nb, bin, 1000.0, 10000.0, 13.0, 4, &s, &lines), ML_OK);
    ck_assert_double_eq(s, 0.0);
    ck_assert_uint_eq(lines, 0);
    ck_assert_int_eq(ml_buzz_find_comb(psd, 8, bin, 1000.0, 10000.0, 13.0, 4, &s, &lines), ML_EINVAL);
    ck_assert_int_eq(ml_buzz_find_comb(psd, nb, bin, 2000.0, 1000.0, 13.0, 4, &s, &lines), ML_EINVAL);
    free(psd);
}
END_TEST

START_TEST(config_rejected)
{
    ml_buzz *q = (ml_buzz *)1;
    ck_assert_int_eq(ml_buzz_create(NULL, &q), ML_EINVAL);
    ck_assert_ptr_null(q);
    ml_buzz_config c = ml_buzz_config_default(55.0);
    ck_assert_int_eq(ml_buzz_create(&c, &q), ML_EINVAL);
    c = ml_buzz_config_default(50.0);
    c.step_s = 3.0; /* longer than the window */
    ck_assert_int_eq(ml_buzz_create(&c, &q), ML_EINVAL);
    c = ml_buzz_config_default(50.0);
    c.min_rate_hz = 1.0; /* fewer than 3 periods in the window */
    ck_assert_int_eq(ml_buzz_create(&c, &q), ML_EINVAL);
    c = ml_buzz_config_default(50.0);
    c.tolerance = 0.5;
    ck_assert_int_eq(ml_buzz_create(&c, &q), ML_EINVAL);
    c = ml_buzz_config_default(50.0);
    c.min_impulses = 2;
    ck_assert_int_eq(ml_buzz_create(&c, &q), ML_EINVAL);
    c = ml_buzz_config_default(50.0);
    c.window_s = NAN;
    ck_assert_int_eq(ml_buzz_create(&c, &q), ML_EINVAL);
    ck_assert_ptr_null(q);
    c = ml_buzz_config_default(50.0);
    ck_assert_int_eq(ml_buzz_create(&c, &q), ML_OK);
    ml_buzz_event ev[2];
    size_t n = 0;
    const double back[2] = {2.0, 1.0};
    ck_assert_int_eq(ml_buzz_push(q, back, 2, 3.0, ev, 2, &n), ML_EINVAL); /* decreasing times */
    ck_assert_int_eq(ml_buzz_push(q, NULL, 0, 3.0, ev, 2, &n), ML_OK);
    ck_assert_int_eq(ml_buzz_push(q, NULL, 0, 2.0, ev, 2, &n), ML_EINVAL); /* time going back */
    ck_assert_int_eq(ml_buzz_push(q, NULL, 0, NAN, ev, 2, &n), ML_EINVAL);
    ml_buzz_destroy(q);
    ml_buzz_destroy(NULL);
    ml_buzz_reset(NULL);
    ck_assert_str_eq(ml_buzz_tie_name((ml_buzz_tie)99), "unknown");
}
END_TEST

static Suite *buzz_suite(void)
{
    Suite *s = suite_create("dsp_buzz");
    TCase *tc = tcase_create("core");
    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, dimmer_buzz_is_one_event);
    tcase_add_test(tc, dimmer_level_rise_is_an_event);
    tcase_add_test(tc, block_invariance_and_reset);
    tcase_add_test(tc, save_restore_continues_exactly);
    tcase_add_test(tc, clicks_are_not_a_buzz);
    tcase_add_test(tc, tied_to_the_mains);
    tcase_add_test(tc, comb_of_lines);
    tcase_add_test(tc, config_rejected);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return ml_check_run(buzz_suite());
}
