/* Unit tests for dsp/qpeak: the CISPR 16-1-1 Band B quasi-peak, average and peak chain.
 * SPDX-License-Identifier: MIT
 *
 * Outside references: docs/references.md 11 (CISPR 16-1-1 Band B: 9 kHz at -6 dB, TC 1 ms,
 * TD 160 ms, TM 160 ms and their definitions; the pulse-response table; the reference pulse; QP
 * re peak at 100 Hz; PK = QP = AV for a carrier; AV proportional to the repetition rate).
 * Which table values are verified: docs/references.md 11 gives the 1000/10/2/1 Hz points and
 * their tolerances as read from the standard by a third party (verified, V3); the 20 Hz point
 * (-6.5 +-1.0, labelled 25 Hz in that reading) and the isolated pulse (-23.5 +-2.0) are recalled
 * from memory (not verified); the reference pulse's 66 dBuV (2 mV) is third-party wording plus
 * memory.
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/qpeak.h"
#include "testsig.h"

#define RATE 48000.0
#define BLOCK 4096

/* Pushes frames of a generator in blocks of `block`, restarting the span after `skip` frames. */
typedef void (*gen_fn)(void *ctx, uint64_t n0, float *buf, size_t m, size_t stride);

static void run(ml_qpeak *q, gen_fn gen, void *ctx, uint64_t total, uint64_t skip, size_t block, size_t stride)
{
    float *buf = malloc(block * stride * sizeof *buf);
    ck_assert_ptr_nonnull(buf);
    for (uint64_t n = 0; n < total;) {
        size_t m = (size_t)(total - n < block ? total - n : block);
        if (n < skip && n + m > skip)
            m = (size_t)(skip - n); /* end the block at the span's start */
        gen(ctx, n, buf, m, stride);
        ck_assert_int_eq(ml_qpeak_push(q, buf, m, stride, 0, 1, NULL), ML_OK);
        n += m;
        if (n == skip)
            ml_qpeak_restart_span(q);
    }
    free(buf);
}

/* ---- carriers ---- */

typedef struct {
    bool iq;
    double amp, f_hz;      /* carrier amplitude and frequency (I/Q: re the centre)  */
    uint64_t on, off;      /* present for on <= n < off                             */
} cw_ctx;

static void gen_cw(void *ctx, uint64_t n0, float *buf, size_t m, size_t stride)
{
    const cw_ctx *c = ctx;
    for (size_t i = 0; i < m; i++) {
        const uint64_t n = n0 + i;
        const double a = (n >= c->on && n < c->off) ? c->amp : 0.0;
        const double ph = 2.0 * TS_PI * fmod(c->f_hz * (double)n / RATE, 1.0);
        buf[i * stride] = (float)(a * cos(ph));
        if (c->iq)
            buf[i * stride + 1] = (float)(a * sin(ph));
    }
}

static ml_qpeak *make(bool iq, double centre_hz)
{
    ml_qpeak_config c = ml_qpeak_config_default(RATE, iq, centre_hz);
    ml_qpeak *q = NULL;
    ck_assert_int_eq(ml_qpeak_create(&c, &q), ML_OK);
    return q;
}

/* Readings of a carrier at f_hz, amplitude amp, over 1 s after settling. */
static ml_qpeak_reading cw_reading(bool iq, double centre_hz, double f_hz, double amp)
{
    ml_qpeak *q = make(iq, centre_hz);
    cw_ctx c = {iq, amp, f_hz, 0, UINT64_MAX};
    const uint64_t settle = ml_qpeak_get_settle_frames(q);
    run(q, gen_cw, &c, settle + (uint64_t)RATE, settle, BLOCK, iq ? 2 : 1);
    ml_qpeak_reading r;
    ck_assert_int_eq(ml_qpeak_get_span(q, &r), ML_OK);
    ck_assert_uint_eq(r.frames, (uint64_t)RATE);
    ml_qpeak_destroy(q);
    return r;
}

START_TEST(carrier_reads_its_level)
{
    /* docs/references.md 11: for an unmodulated carrier PK = QP = AV; by the level rule (dsp/qpeak.h
     * step 3) a carrier at L dBFS reads L. Real IF at 12 kHz and I/Q at the centre and at +5 kHz,
     * -20 dBFS. Tolerance 0.03 dB: the analytic filter's passband ripple is within +-0.01 dB
     * (dsp/cfir.h), the Gaussian taps sum to 1 at the centre, and the meters are within 0.03 dB
     * of their end value after settling (dsp/qpeak.h); float samples add ~1e-7. */
    const struct {
        bool iq;
        double centre, f;
    } cases[] = {{false, 12000.0, 12000.0}, {true, 0.0, 0.0}, {true, 5000.0, 5000.0}, {false, 3000.0, 3000.0}};
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        ml_qpeak_reading r = cw_reading(cases[i].iq, cases[i].centre, cases[i].f, 0.1);
        ck_assert_double_eq_tol(r.qp_dbfs, -20.0, 0.03);
        ck_assert_double_eq_tol(r.av_dbfs, -20.0, 0.03);
        ck_assert_double_eq_tol(r.peak_dbfs, -20.0, 0.03);
        ck_assert_double_eq_tol(r.mean_dbfs, -20.0, 0.03);
    }
}
END_TEST

START_TEST(if_filter_shape)
{
    /* dsp/qpeak.h step 2: H(f) = 2^-((2 f / 9000)^2): -6.02 dB at 4.5 kHz off the tuned frequency
     * (the -6 dB bandwidth of docs/references.md 11), -24.08 dB at 9 kHz, symmetric. 0.05 dB: the
     * sampled Gaussian's aliasing is below 1e-20 at 48 kHz, truncation at 6 sigma changes the
     * response by < 1e-7, plus the carrier tolerance above. */
    const double off[] = {4500.0, -4500.0, 9000.0};
    const double want[] = {-6.0206, -6.0206, -24.0824};
    for (size_t i = 0; i < 3; i++) {
        ml_qpeak_reading r = cw_reading(true, 0.0, off[i], 1.0);
        ck_assert_double_eq_tol(r.qp_dbfs, want[i], 0.05);
        ck_assert_double_eq_tol(r.av_dbfs, want[i], 0.05);
        r = cw_reading(false, 12000.0, 12000.0 + off[i], 1.0);
        ck_assert_double_eq_tol(r.qp_dbfs, want[i], 0.05);
    }
}
END_TEST

START_TEST(time_constants_as_defined)
{
    /* docs/references.md 11 defines TC as the time for the detector output to reach 63 % of its
     * steady state after a constant sine is applied, TD as the time to fall to 37 % after it is
     * removed, and the meter by TM^2 a'' + 2 TM a' + a = k i (critically damped): its step
     * response is 1 - (1 + t/TM) e^(-t/TM), 1 - 2/e = 0.2642 at t = TM. The envelope of the
     * switched carrier rises through the Gaussian filter, centred on the filter's delay (that is
     * when the sine is "applied" at the detector): times are measured from the envelope's 50 %
     * point. Tolerances: one sample (21 us) for the sampling of the crossings plus 20 us for the
     * envelope's own rise (10-90 % in 60 us); 0.3 ms at 160 ms likewise plus the rise. */
    ml_qpeak *q = make(true, 0.0);
    const uint64_t on = 4800, off = 4800 + 48000; /* 1 s of carrier, amplitude 0.5 */
    cw_ctx c = {true, 0.5, 0.0, on, off};
    float buf[2];
    double t50 = -1, t63 = -1, tm = -1, steady = 0, t37 = -1, off50 = -1;
    const double k63 = 1.0 - exp(-1.0), k37 = exp(-1.0);
    ml_qpeak_state s;
    for (uint64_t n = 0; n < off + 24000; n++) {
        gen_cw(&c, n, buf, 1, 2);
        ck_assert_int_eq(ml_qpeak_push(q, buf, 1, 2, 0, 1, NULL), ML_OK);
        ck_assert_int_eq(ml_qpeak_get_state(q, &s), ML_OK);
        const double t = (double)n / RATE;
        if (t50 < 0 && s.envelope >= 0.25)
            t50 = t;
        if (n == off - 1)
            steady = s.detector;
        if (n >= off && off50 < 0 && s.envelope <= 0.25 && t50 > 0)
            off50 = t;
        if (off50 > 0 && t37 < 0 && s.detector <= k37 * steady)
            t37 = t;
        if (t50 > 0 && t63 < 0 && s.detector >= k63 * 0.5) /* steady state of the detector: 0.5 */
            t63 = t;
        if (t50 > 0 && tm < 0 && t - t50 >= 0.160 - 0.5 / RATE)
            tm = s.av_meter / 0.5;
    }
    ck_assert_double_eq_tol(steady, 0.5, 1e-4); /* the detector output is calibrated to the carrier */
    ck_assert_double_eq_tol(t63 - t50, 0.001, 41e-6);
    ck_assert_double_eq_tol(t37 - off50, 0.160, 0.3e-3);
    ck_assert_double_eq_tol(tm, 1.0 - 2.0 / exp(1.0), 0.002); /* 0.002: 1.5 samples of the slope */
    double tau_c = 0, k = 0;
    ck_assert_int_eq(ml_qpeak_get_detector(q, &tau_c, &k), ML_OK);
    /* independent check of the solved constants: the half-wave rectifier in steady state
     * conducts over +-theta with cos(theta) = k and (sin(theta) - theta cos(theta)) / pi =
     * k tau_c / TD (charge = discharge) */
    const double th = acos(k);
    ck_assert_double_eq_tol((sin(th) - th * cos(th)) / TS_PI, k * tau_c / 0.160, 1e-9);
    ml_qpeak_destroy(q);
}
END_TEST

/* ---- pulses ---- */

typedef struct {
    bool iq;
    double height;  /* impulse height (one sample): area height / RATE */
    uint64_t period; /* frames between impulses; 0 = one impulse only */
    uint64_t first;  /* frame of the first impulse */
} pulse_ctx;

static void gen_pulses(void *ctx, uint64_t n0, float *buf, size_t m, size_t stride)
{
    const pulse_ctx *c = ctx;
    for (size_t i = 0; i < m; i++) {
        const uint64_t n = n0 + i;
        const bool hit = n >= c->first && (c->period ? (n - c->first) % c->period == 0 : n == c->first);
        buf[i * stride] = hit ? (float)c->height : 0.0f;
        if (c->iq)
            buf[i * stride + 1] = 0.0f;
    }
}

/* Steady readings of impulses at prf Hz (0: one impulse): over max(2 s, 3 periods) after the
 * chain has settled (for the isolated impulse: 3 s after it). */
static ml_qpeak_reading pulse_reading(bool iq, double prf, double height)
{
    ml_qpeak *q = make(iq, iq ? 0.0 : 12000.0);
    const uint64_t settle = ml_qpeak_get_settle_frames(q);
    pulse_ctx c = {iq, height, prf > 0 ? (uint64_t)llround(RATE / prf) : 0, prf > 0 ? 100 : settle + 100};
    const double span_s = prf > 0 ? fmax(2.0, 3.0 / prf) : 3.0;
    run(q, gen_pulses, &c, settle + (uint64_t)(span_s * RATE), settle, BLOCK, iq ? 2 : 1);
    ml_qpeak_reading r;
    ck_assert_int_eq(ml_qpeak_get_span(q, &r), ML_OK);
    ml_qpeak_destroy(q);
    return r;
}

START_TEST(pulse_response_table)
{
    /* docs/references.md 11: CISPR 16-1-1 Band B pulse response, the input level change (dB) that
     * keeps the quasi-peak reading constant, re 100 Hz; at constant input the reading changes by
     * the negative of it. Tested with the standard's own tolerances: this chain needs no widening
     * (measured with the real IF at 48 kHz: 1000 Hz +4.49, 20 Hz -6.62, 10 Hz -10.61, 2 Hz
     * -21.18, 1 Hz -23.49, isolated -23.76; within 0.03 dB of that at 96 and 192 kHz and for
     * I/Q). A detector charged by the envelope itself (E - v) instead of the rectified carrier
     * reads 1.0 dB below the tolerance at 1 Hz, more than the +1 dB the issue allows for an
     * idealised chain; see dsp/qpeak.h step 4. Impulses of equal area, real IF and I/Q. */
    const struct {
        double prf, want, tol;
    } table[] = {
        {1000.0, +4.5, 1.0},  /* verified (V3): 1000 Hz -4.5 +-1.0 as input change */
        {20.0, -6.5, 1.0},    /* recalled: 20 Hz +6.5 +-1.0 (the third-party reading says 25 Hz) */
        {10.0, -10.0, 1.5},   /* verified (V3): 10 Hz +10.0 +-1.5 */
        {2.0, -20.5, 2.0},    /* verified (V3): 2 Hz +20.5 +-2.0 */
        {1.0, -22.5, 2.0},    /* verified (V3): 1 Hz +22.5 +-2.0 */
        {0.0, -23.5, 2.0},    /* recalled: isolated pulse +23.5 +-2.0 */
    };
    for (int iq = 0; iq <= 1; iq++) {
        const double ref = pulse_reading(iq, 100.0, 0.5).qp_dbfs;
        for (size_t i = 0; i < sizeof table / sizeof table[0]; i++) {
            const double rel = pulse_reading(iq, table[i].prf, 0.5).qp_dbfs - ref;
            ck_assert_msg(fabs(rel - table[i].want) <= table[i].tol, "%s %g Hz: %.2f dB re 100 Hz, want %.1f +-%.1f",
                          iq ? "iq" : "if", table[i].prf, rel, table[i].want, table[i].tol);
        }
    }
}
END_TEST

START_TEST(reference_pulse)
{
    /* docs/references.md 11: impulses of area 0.316 uVs (e.m.f.) at 100 Hz read as a sine of
     * 2 mV e.m.f. (66 dBuV, r.m.s.), +-1.5 dB. In full-scale units: area A = h / rate reads as a
     * sine of r.m.s. A * 2e-3 / 0.316e-6, i.e. amplitude sqrt(2) times that, level
     * 20 lg(sqrt(2) * 6329 * A) dBFS. Real IF: the impulse itself. I/Q: the complex baseband of
     * a real impulse of area A is a complex impulse of area 2 A (the convention that makes a
     * carrier A cos read A), so height 2 h. Measured: +0.06 dB off. */
    const double h = 0.5, area = h / RATE;
    const double want = 20.0 * log10(sqrt(2.0) * 2e-3 / 0.316e-6 * area);
    ck_assert_double_eq_tol(pulse_reading(false, 100.0, h).qp_dbfs, want, 1.5);
    ck_assert_double_eq_tol(pulse_reading(true, 100.0, 2.0 * h).qp_dbfs, want, 1.5);
}
END_TEST

START_TEST(qp_re_peak_and_average_rate)
{
    /* docs/references.md 11: QP re peak at 100 Hz is -6.1 (measured by a receiver maker) to
     * -6.6 dB (the standard's table, third-party reading; weak source): test -6.35 +-0.6
     * (measured -6.50 real IF, -6.52 I/Q).
     * Peak (I/Q, exact analysis): the impulse response of the IF filter has the envelope
     * 2 A g(t) for a complex impulse of area 2 A, peak 2 A B_imp, B_imp = integral of H =
     * sqrt(pi / ln 2) * 4500 = 9580.3 Hz for the Gaussian of dsp/qpeak.h: 0.005 dB (the
     * log-parabola is exact for a Gaussian; float samples).
     * Average: the mean envelope is the IF output's pulse area times the rate, 2 A prf exactly (the
     * filter's gain at the centre is 1, g >= 0), so the running average is proportional to the
     * repetition rate (docs/references.md 11: AV proportional to PRF): 20 dB per decade within
     * 0.005 dB. The AV meter's highest deflection follows within 0.05 dB from 100 Hz up (its
     * ripple at 100 Hz: 10 ms period through two 160 ms sections, < 0.5 %). For a real IF at
     * 48 kHz the analytic filter trims the Gaussian's tails beyond 11.75 kHz off the 12 kHz
     * carrier (-41 dB), which moves the mean by 0.09 dB and the peak by 0.02 dB: checked with
     * 0.15 and 0.05 dB. */
    const double h = 0.5, area = h / RATE;
    ml_qpeak_reading f100 = pulse_reading(false, 100.0, h);
    ck_assert_double_eq_tol(f100.qp_dbfs - f100.peak_dbfs, -6.35, 0.6);
    ck_assert_double_eq_tol(f100.peak_dbfs, 20.0 * log10(2.0 * area * sqrt(TS_PI / log(2.0)) * 4500.0), 0.05);
    ck_assert_double_eq_tol(f100.mean_dbfs, 20.0 * log10(2.0 * area * 100.0), 0.15);
    ml_qpeak_reading r100 = pulse_reading(true, 100.0, 2.0 * h);
    ck_assert_double_eq_tol(r100.qp_dbfs - r100.peak_dbfs, -6.35, 0.6);
    ck_assert_double_eq_tol(r100.peak_dbfs, 20.0 * log10(2.0 * area * sqrt(TS_PI / log(2.0)) * 4500.0), 0.005);
    ck_assert_double_eq_tol(r100.mean_dbfs, 20.0 * log10(2.0 * area * 100.0), 0.005);
    ml_qpeak_reading r10 = pulse_reading(true, 10.0, 2.0 * h), r1000 = pulse_reading(true, 1000.0, 2.0 * h);
    ck_assert_double_eq_tol(r1000.mean_dbfs - r100.mean_dbfs, 20.0, 0.005);
    ck_assert_double_eq_tol(r100.mean_dbfs - r10.mean_dbfs, 20.0, 0.005);
    ck_assert_double_eq_tol(r1000.av_dbfs - r100.av_dbfs, 20.0, 0.05);
    ck_assert_double_eq_tol(r1000.av_dbfs, r1000.mean_dbfs, 0.05);
}
END_TEST

/* ---- object behaviour ---- */

/* A modulated carrier with clicks: I/Q at 48 kHz. */
static void gen_mixed(void *ctx, uint64_t n0, float *buf, size_t m, size_t stride)
{
    (void)ctx;
    for (size_t i = 0; i < m; i++) {
        const uint64_t n = n0 + i;
        const double t = (double)n / RATE;
        const double e = 0.2 * (1.0 + 0.6 * sin(2 * TS_PI * 400.0 * t)) + (n % 9600 == 17 ? 0.9 : 0.0);
        buf[i * stride] = (float)(e * cos(2 * TS_PI * 1500.0 * t));
        buf[i * stride + 1] = (float)(e * sin(2 * TS_PI * 1500.0 * t));
    }
}

START_TEST(block_invariance_and_reset)
{
    /* STYLE.md 6: blocks of 1, 7 and 4096 frames give the same readings (bit-identical, as the
     * header promises), and after reset the object reads as when new. Real IF (through the
     * analytic filter) and I/Q. */
    for (int iq = 0; iq <= 1; iq++) {
        ml_qpeak *q = make(iq, iq ? 1500.0 : 9000.0);
        const uint64_t total = 60000, skip = 30011;
        ml_qpeak_reading ref_span, ref_total, r;
        run(q, gen_mixed, NULL, total, skip, 4096, 2);
        ck_assert_int_eq(ml_qpeak_get_span(q, &ref_span), ML_OK);
        ck_assert_int_eq(ml_qpeak_get_total(q, &ref_total), ML_OK);
        ck_assert_uint_eq(ref_span.frames, total - skip);
        ck_assert_uint_eq(ref_total.frames, total);
        ck_assert(isfinite(ref_span.qp_dbfs) && isfinite(ref_span.peak_dbfs));
        const size_t blocks[] = {1, 7, 4096};
        for (size_t b = 0; b < 3; b++) {
            ml_qpeak_reset(q);
            run(q, gen_mixed, NULL, total, skip, blocks[b], 2);
            ck_assert_int_eq(ml_qpeak_get_span(q, &r), ML_OK);
            ck_assert(memcmp(&r, &ref_span, sizeof r) == 0);
            ck_assert_int_eq(ml_qpeak_get_total(q, &r), ML_OK);
            ck_assert(memcmp(&r, &ref_total, sizeof r) == 0);
        }
        ml_qpeak_reset(q);
        ck_assert_int_eq(ml_qpeak_get_total(q, &r), ML_OK);
        ck_assert_uint_eq(r.frames, 0);
        ck_assert(isnan(r.qp_dbfs) && isnan(r.av_dbfs) && isnan(r.peak_dbfs) && isnan(r.mean_dbfs));
        ml_qpeak_destroy(q);
    }
}
END_TEST

START_TEST(push_reading_is_its_frames)
{
    /* The per-push reading covers just the pushed frames: its highest values are those of the
     * span when the span is one push; the span's maximum over several pushes is the largest of
     * theirs; frames add up. */
    ml_qpeak *q = make(true, 1500.0);
    float *buf = malloc(2 * 48000 * sizeof *buf);
    gen_mixed(NULL, 0, buf, 48000, 2);
    ml_qpeak_reading a, b, s;
    ck_assert_int_eq(ml_qpeak_push(q, buf, 20000, 2, 0, 1, &a), ML_OK);
    ck_assert_int_eq(ml_qpeak_push(q, buf + 40000, 28000, 2, 0, 1, &b), ML_OK);
    ck_assert_int_eq(ml_qpeak_get_span(q, &s), ML_OK);
    ck_assert_uint_eq(a.frames + b.frames, s.frames);
    ck_assert_double_eq(fmax(a.qp_dbfs, b.qp_dbfs), s.qp_dbfs);
    ck_assert_double_eq(fmax(a.peak_dbfs, b.peak_dbfs), s.peak_dbfs);
    ck_assert_double_eq(fmax(a.av_dbfs, b.av_dbfs), s.av_dbfs);
    /* 20 lg of the frame-weighted mean of the two means */
    const double m = (pow(10, a.mean_dbfs / 20) * 20000 + pow(10, b.mean_dbfs / 20) * 28000) / 48000;
    ck_assert_double_eq_tol(s.mean_dbfs, 20 * log10(m), 1e-9);
    /* an empty push is valid and reads nothing */
    ck_assert_int_eq(ml_qpeak_push(q, NULL, 0, 2, 0, 1, &a), ML_OK);
    ck_assert_uint_eq(a.frames, 0);
    ck_assert(isnan(a.qp_dbfs));
    ck_assert_int_eq(ml_qpeak_push(q, buf, 1, 2, 2, 1, NULL), ML_EINVAL); /* column outside the frame */
    ck_assert_int_eq(ml_qpeak_push(q, NULL, 1, 2, 0, 1, NULL), ML_EINVAL);
    ck_assert_uint_eq(ml_qpeak_latency(q), (size_t)ceil(6.0 * sqrt(2.0 * log(2.0)) / (TS_PI * 9000.0) * RATE));
    free(buf);
    ml_qpeak_destroy(q);
}
END_TEST

START_TEST(config_rejected)
{
    ml_qpeak *q = (ml_qpeak *)1;
    ck_assert_int_eq(ml_qpeak_create(NULL, &q), ML_EINVAL);
    ck_assert_ptr_null(q);
    ml_qpeak_config c = ml_qpeak_config_default(0.0, true, 0.0);
    ck_assert_int_eq(ml_qpeak_create(&c, &q), ML_EINVAL);
    c = ml_qpeak_config_default(32000.0, true, 0.0); /* below 4 x 9 kHz */
    ck_assert_int_eq(ml_qpeak_create(&c, &q), ML_EINVAL);
    c = ml_qpeak_config_default(RATE, true, 20000.0); /* channel beyond the band edge */
    ck_assert_int_eq(ml_qpeak_create(&c, &q), ML_EINVAL);
    c = ml_qpeak_config_default(RATE, false, 100.0); /* real carrier below the analytic filter */
    ck_assert_int_eq(ml_qpeak_create(&c, &q), ML_EINVAL);
    c = ml_qpeak_config_default(RATE, false, 22000.0);
    ck_assert_int_eq(ml_qpeak_create(&c, &q), ML_EINVAL);
    c = ml_qpeak_config_default(RATE, true, 0.0);
    c.charge_s = 0.0;
    ck_assert_int_eq(ml_qpeak_create(&c, &q), ML_EINVAL);
    c = ml_qpeak_config_default(RATE, true, 0.0);
    c.discharge_s = 0.0015; /* not > 2 TC */
    ck_assert_int_eq(ml_qpeak_create(&c, &q), ML_EINVAL);
    c = ml_qpeak_config_default(RATE, true, 0.0);
    c.meter_s = NAN;
    ck_assert_int_eq(ml_qpeak_create(&c, &q), ML_EINVAL);
    c = ml_qpeak_config_default(RATE, false, 12000.0);
    c.transition_hz = 0.0;
    ck_assert_int_eq(ml_qpeak_create(&c, &q), ML_EINVAL);
    c = ml_qpeak_config_default(RATE, true, INFINITY);
    ck_assert_int_eq(ml_qpeak_create(&c, &q), ML_EINVAL);
    ck_assert_ptr_null(q);
    ml_qpeak_destroy(NULL);
    ml_qpeak_reset(NULL);
    ml_qpeak_restart_span(NULL);
    ml_qpeak_reading r;
    ck_assert_int_eq(ml_qpeak_get_span(NULL, &r), ML_EINVAL);
    ck_assert_int_eq(ml_qpeak_get_total(NULL, &r), ML_EINVAL);
    ck_assert_int_eq(ml_qpeak_push(NULL, NULL, 0, 1, 0, 0, NULL), ML_EINVAL);
}
END_TEST

static Suite *qpeak_suite(void)
{
    Suite *s = suite_create("dsp_qpeak");
    TCase *tc = tcase_create("core");
    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, carrier_reads_its_level);
    tcase_add_test(tc, if_filter_shape);
    tcase_add_test(tc, time_constants_as_defined);
    tcase_add_test(tc, pulse_response_table);
    tcase_add_test(tc, reference_pulse);
    tcase_add_test(tc, qp_re_peak_and_average_rate);
    tcase_add_test(tc, block_invariance_and_reset);
    tcase_add_test(tc, push_reading_is_its_frames);
    tcase_add_test(tc, config_rejected);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return ml_check_run(qpeak_suite());
}
