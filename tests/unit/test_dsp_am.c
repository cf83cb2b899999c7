/* Unit tests for dsp/am: AM demodulation, envelope statistics, overmodulation events, trapezoid.
 * SPDX-License-Identifier: MIT
 *
 * Signals are synthesised here in double precision: a real IF A e(t) cos(2 pi fc t) or I/Q
 * A e(t) exp(j 2 pi fc t), where e(t) is the (signed or clipped) envelope under test.
 *
 * References:
 * [haykin:2001] S. Haykin, Communication Systems, 4th ed., Wiley 2001, ch. 3, sec. 3.1: the AM
 *     signal A_c[1 + mu cos(2 pi f_m t)] cos(2 pi f_c t) has the envelope A_c(1 + mu cos(2 pi f_m t))
 *     for mu <= 1 (docs/references.md 6, "AM signal", confirmed secondary).
 * [newnes] Newnes Radio and RF Engineer's Pocket Book, sec. 8.3.1: mu = (E_max - E_min) /
 *     (E_max + E_min), carrier A_c = (E_max + E_min) / 2 (docs/references.md 6, confirmed).
 * [refs61] docs/references.md 6.1: model A (ideal envelope |1 + mu cos|, the carrier's phase reverses
 *     where 1 + mu cos < 0, visible in I/Q as a 180 degree jump) and model B (pinch-off,
 *     max(0, 1 + mu cos)).
 * [cfr73.1570] 47 CFR 73.1570(b)(1): positive peaks limited to 125 % (docs/references.md 7, confirmed).
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <complex.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/am.h"
#include "dsp/cfir.h"
#include "dsp/internal.h" /* CMPLX, as dsp/am.c builds its complex inputs */
#include "testsig.h"

#define FS 48000.0
#define FC_REAL 12000.0 /* real IF carrier: fs / 4 */
#define BW 5000.0       /* channel (audio) bandwidth */
#define AMP 0.3         /* carrier amplitude A (full scale 1) */
#define BLOCK_S 0.02    /* default classification block: 960 samples at 48 kHz */

/* ---- helpers -------------------------------------------------------------------------------- */

static ml_am *make(const ml_am_config *c)
{
    ml_am *q = NULL;
    ck_assert_int_eq(ml_am_create(c, &q), ML_OK);
    ck_assert_ptr_nonnull(q);
    return q;
}

/* The channel filter am.c designs from its config (dsp/am.h: "a linear-phase low-pass of
 * one-sided width bandwidth_hz (dsp/cfir.h)"; am.c: stop_db 100). The tests build a twin of it
 * only to read the designed response at the frequencies they use (ml_cfir_response_db), so that
 * tolerances can name the filter's actual error instead of its +-0.01 dB passband guarantee. */
static ml_cfir *twin_filter(const ml_am_config *c)
{
    ml_cfir_config fc = {.rate_hz = c->rate_hz, .cutoff_hz = c->bandwidth_hz,
                         .transition_hz = c->transition_hz, .stop_db = 100.0};
    ml_cfir *f = NULL;
    ck_assert_int_eq(ml_cfir_create(&fc, &f), ML_OK);
    return f;
}

/* Gain |H(f)| - 1 of the twin filter at f (linear). */
static double twin_gain_error(const ml_am_config *c, double f_hz)
{
    ml_cfir *f = twin_filter(c);
    double g = pow(10.0, ml_cfir_response_db(f, f_hz) / 20.0) - 1.0;
    ml_cfir_destroy(f);
    return fabs(g);
}

/* Everything a run produces: the concatenated outputs of all pushes and the finish. */
typedef struct {
    double *env;
    double complex *in;
    unsigned char *mod;
    size_t n;
    size_t edge; /* ml_am_edge of the object that made it */
    ml_am_result r;
} run_out;

static void run_free(run_out *o)
{
    free(o->env);
    free(o->in);
    free(o->mod);
    memset(o, 0, sizeof *o);
}

/* Pushes z[n] (and ref[n]) in calls of `block` samples, then finishes and reads the result. */
/* The teardown of one test case: its run's outputs, input, envelope and object. */
static void free_case(run_out *o, double complex *z, double *e, ml_am *q)
{
    run_free(o);
    free(z);
    free(e);
    ml_am_destroy(q);
}

/* keep_in false: the outputs' in arrays are NULL (dsp/am.h: the inputs are then not delayed) and
 * o.in stays zero. */
static run_out run_keep(ml_am *q, const double complex *z, const float *ref, size_t n, size_t block,
                        bool keep_in)
{
    run_out o = {0};
    o.edge = ml_am_edge(q);
    const size_t total_cap = ml_am_output_cap(q, n);
    o.env = malloc(total_cap * sizeof *o.env);
    o.in = calloc(total_cap, sizeof *o.in);
    o.mod = malloc(total_cap);
    ck_assert(o.env && o.in && o.mod);
    const size_t cap = ml_am_output_cap(q, block);
    double *env = malloc(cap * sizeof *env);
    double complex *in = malloc(cap * sizeof *in);
    unsigned char *mod = malloc(cap);
    ck_assert(env && in && mod);
    ml_am_output out = {.env = env, .in = keep_in ? in : NULL, .modulated = mod, .cap = cap};
    for (size_t i = 0;; i += block) {
        size_t cnt = 0;
        const bool last = i >= n;
        if (!last) {
            size_t take = n - i < block ? n - i : block;
            ck_assert_int_eq(ml_am_push(q, z + i, ref ? ref + i : NULL, take, &out, &cnt), ML_OK);
        } else {
            ck_assert_int_eq(ml_am_finish(q, &out, &cnt), ML_OK);
        }
        ck_assert_uint_le(o.n + cnt, total_cap);
        memcpy(o.env + o.n, env, cnt * sizeof *env);
        if (keep_in)
            memcpy(o.in + o.n, in, cnt * sizeof *in);
        memcpy(o.mod + o.n, mod, cnt);
        o.n += cnt;
        if (last)
            break;
    }
    ck_assert_int_eq(ml_am_get_result(q, &o.r), ML_OK);
    free(env);
    free(in);
    free(mod);
    return o;
}

static run_out run(ml_am *q, const double complex *z, const float *ref, size_t n, size_t block)
{
    return run_keep(q, z, ref, n, block, true);
}

/* Input index d of the first envelope sample, checked sample by sample: envelope sample i
 * belongs to input i + d (o->in[i] == z[i + d], bit-identical: the input is only delayed).
 * dsp/am.h: the first and last edge() inputs produce no envelope, so the envelope covers the
 * inputs edge .. n - edge - 1 and d = edge (<= latency). Returns d. */
static size_t first_input(const run_out *o, const double complex *z, size_t n, size_t lat)
{
    (void)lat;
    const size_t d = o->edge;
    ck_assert_uint_le(d, lat);
    ck_assert_uint_eq(o->n + 2 * d, n);
    for (size_t i = 0; i < o->n; i++)
        ck_assert_msg(o->in[i] == z[i + d], "in[%zu] is not input %zu", i, i + d);
    return d;
}

/* Puts the envelope a * e[i] on a carrier: real IF a e cos(w i) or I/Q a e exp(j w i). The phase is
 * reduced exactly: fc * i / fs is evaluated as (fc * i mod fs) / fs with integers, so it carries no
 * error that grows with i (fc is an integer number of Hz in every test). */
static double complex *on_carrier(const double *e, size_t n, double a, double fc_hz, bool cplx)
{
    double complex *z = malloc(n * sizeof *z);
    ck_assert_ptr_nonnull(z);
    const long long fs = (long long)FS, fc = (long long)fc_hz;
    for (size_t i = 0; i < n; i++) {
        long long r = (fc * (long long)i) % fs;
        double ph = 2.0 * TS_PI * (double)r / FS;
        z[i] = cplx ? a * e[i] * cexp(I * ph) : a * e[i] * cos(ph);
    }
    return z;
}

/* Envelope shapes 1 + m x + k x^2 (ENV_PINCH: clipped at 0), x = cos(2 pi fm i / fs). After a
 * lead-in of `lead` samples of carrier (e = 1) the tone starts as a sine instead, so that the
 * envelope is continuous where the modulation begins. */
enum { ENV_TONE, ENV_PINCH, ENV_QUAD };
static double *envelope(size_t n, int shape, double m, double fm_hz, double k, size_t lead)
{
    double *e = malloc(n * sizeof *e);
    ck_assert_ptr_nonnull(e);
    for (size_t i = 0; i < n; i++) {
        if (i < lead) {
            e[i] = 1.0;
            continue;
        }
        const double th = 2.0 * TS_PI * fm_hz * (double)(i - lead) / FS;
        const double x = lead > 0 ? sin(th) : cos(th);
        double v = 1.0 + m * x + k * x * x;
        e[i] = shape == ENV_PINCH ? fmax(0.0, v) : v;
    }
    return e;
}

static float *tone_ref(size_t n, double fm_hz)
{
    float *r = malloc(n * sizeof *r);
    ck_assert_ptr_nonnull(r);
    for (size_t i = 0; i < n; i++)
        r[i] = (float)cos(2.0 * TS_PI * fm_hz * (double)i / FS);
    return r;
}

/* Closeness for results that must agree across block sizes: rel relative to the larger of |a|,
 * |b| and scale (an envelope reading near 0, such as emin_abs at a zero, is compared on the scale
 * of the carrier, where its rounding lives). */
static void assert_close(double a, double b, double rel, double scale, const char *what)
{
    ck_assert_msg(fabs(a - b) <= rel * fmax(fmax(fabs(a), fabs(b)), scale), "%s: %.17g vs %.17g", what, a, b);
}

static void assert_same_result(const ml_am_result *a, const ml_am_result *b, double rel)
{
    ck_assert_uint_eq(a->samples, b->samples);
    ck_assert_uint_eq(a->modulated_samples, b->modulated_samples);
    ck_assert_uint_eq(a->quiet_samples, b->quiet_samples);
    ck_assert_uint_eq(a->pinch_events, b->pinch_events);
    ck_assert_uint_eq(a->reversal_events, b->reversal_events);
    ck_assert_uint_eq(a->positive_over, b->positive_over);
    ck_assert_int_eq(a->has_trapezoid, b->has_trapezoid);
    assert_close(a->mean_all, b->mean_all, rel, AMP, "mean_all");
    assert_close(a->mean_modulated, b->mean_modulated, rel, AMP, "mean_modulated");
    assert_close(a->mean_quiet, b->mean_quiet, rel, AMP, "mean_quiet");
    assert_close(a->emax, b->emax, rel, AMP, "emax");
    assert_close(a->emin, b->emin, rel, AMP, "emin");
    assert_close(a->emax_abs, b->emax_abs, rel, AMP, "emax_abs");
    assert_close(a->emin_abs, b->emin_abs, rel, AMP, "emin_abs");
    assert_close(a->trap_slope, b->trap_slope, rel, AMP, "trap_slope");
    assert_close(a->trap_intercept, b->trap_intercept, rel, AMP, "trap_intercept");
    /* the residual is a difference of nearly equal sums: compare it against the envelope scale */
    ck_assert_msg(fabs(a->trap_residual_rms - b->trap_residual_rms) <= 1e-9 * AMP,
                  "trap_residual_rms: %g vs %g", a->trap_residual_rms, b->trap_residual_rms);
    assert_close(a->trap_ref_rms, b->trap_ref_rms, rel, AMP, "trap_ref_rms");
}

/* ---- configuration -------------------------------------------------------------------------- */

START_TEST(config_rejection)
{
    const ml_am_config good = ml_am_config_default(FS, false, FC_REAL, BW, AMP);
    ml_am *q = NULL;
    ck_assert_int_eq(ml_am_create(&good, &q), ML_OK);
    ml_am_destroy(q);

    ml_am_config bad[40];
    size_t nbad = 0;
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++)
        bad[i] = good;
    bad[nbad++].rate_hz = 0.0;
    bad[nbad++].rate_hz = -48000.0;
    bad[nbad++].rate_hz = NAN;
    bad[nbad++].rate_hz = INFINITY;
    bad[nbad++].carrier_hz = 24000.0;  /* |carrier_hz| < rate_hz / 2 */
    bad[nbad++].carrier_hz = -1000.0;  /* real input needs carrier_hz >= 0 */
    bad[nbad++].carrier_hz = NAN;
    bad[nbad].complex_input = true;    /* complex: |carrier_hz| < rate_hz / 2 on both sides */
    bad[nbad++].carrier_hz = -24000.0;
    bad[nbad].complex_input = true;
    bad[nbad++].carrier_hz = 24000.0;
    bad[nbad++].bandwidth_hz = 0.0;
    bad[nbad++].bandwidth_hz = -5000.0;
    bad[nbad++].bandwidth_hz = NAN;
    bad[nbad++].bandwidth_hz = 23500.0; /* cutoff + transition beyond Nyquist: no channel filter */
    bad[nbad++].bandwidth_hz = 12000.0; /* real IF at 12 kHz: 2 B = D = 24 kHz leaves the mixer's
                                           image no stop band (dsp/am.h: 2 B + t <= D) */
    bad[nbad++].transition_hz = 0.0;
    bad[nbad++].transition_hz = NAN;
    bad[nbad++].carrier_ref = 0.0;
    bad[nbad++].carrier_ref = -0.3;
    bad[nbad++].carrier_ref = INFINITY;
    bad[nbad++].carrier_ref = NAN;
    bad[nbad++].hold_s = 0.0;          /* 0 < hold_s < 0.5 */
    bad[nbad++].hold_s = 0.5;
    bad[nbad++].hold_s = NAN;
    bad[nbad++].block_s = 0.0;
    bad[nbad++].block_s = 3.0 / FS;    /* a block of 3 samples: am.c needs at least 4 */
    bad[nbad++].block_s = NAN;
    bad[nbad++].quiet_rel = 0.0;
    bad[nbad++].quiet_rel = NAN;
    bad[nbad++].pinch_rel = 0.0;
    bad[nbad++].pinch_rel = 0.5;
    bad[nbad++].positive_limit_pct = 0.0;
    bad[nbad++].positive_limit_pct = NAN;
    for (size_t i = 0; i < nbad; i++) {
        q = (ml_am *)&q; /* create must clear *out on failure */
        ck_assert_msg(ml_am_create(&bad[i], &q) == ML_EINVAL, "bad config %zu accepted", i);
        ck_assert_ptr_null(q);
    }
    ck_assert_int_eq(ml_am_create(NULL, &q), ML_EINVAL);
    ck_assert_ptr_null(q);
}
END_TEST

START_TEST(create_destroy_and_defaults)
{
    /* the documented defaults of ml_am_config_default (dsp/am.h) */
    ml_am_config c = ml_am_config_default(FS, true, -3000.0, BW, AMP);
    ck_assert_double_eq(c.rate_hz, FS);
    ck_assert(c.complex_input);
    ck_assert_double_eq(c.carrier_hz, -3000.0);
    ck_assert_double_eq(c.bandwidth_hz, BW);
    ck_assert_double_eq(c.carrier_ref, AMP);
    ck_assert_double_eq(c.hold_s, 0.001);
    ck_assert_double_eq(c.block_s, 0.02);
    ck_assert_double_eq(c.quiet_rel, 0.02);
    ck_assert_double_eq(c.pinch_rel, 0.02);
    ck_assert_double_eq(c.positive_limit_pct, 125.0);
    ck_assert(!c.has_reference);
    for (int k = 0; k < 3; k++) {
        ml_am *q = make(&c);
        ml_am_destroy(q);
    }
    ml_am_destroy(NULL); /* no-op */
    ck_assert_uint_eq(ml_am_latency(NULL), 0);
}
END_TEST

START_TEST(latency_equals_channel_filter)
{
    /* dsp/am.h: the latency is the
     * channel filter's (dsp/cfir.h ml_cfir_latency), for several bandwidths and transitions. The
     * envelope samples that come out line up with the inputs they belong to (first_input). */
    const double bws[] = {3000.0, 5000.0, 10000.0};
    const double trs[] = {500.0, 1000.0, 2000.0};
    for (size_t i = 0; i < 3; i++) {
        ml_am_config c = ml_am_config_default(FS, false, FC_REAL, bws[i], AMP);
        c.transition_hz = trs[i];
        ml_am *q = make(&c);
        ml_cfir *f = twin_filter(&c);
        ck_assert_uint_eq(ml_am_latency(q), ml_cfir_latency(f));
        ck_assert_uint_gt(ml_am_latency(q), 0);
        /* n pushed samples give n - 2 edge envelope samples (first_input), edge <= latency */
        const size_t n = 3 * ml_am_latency(q) + 1234;
        double *e = envelope(n, ENV_TONE, 0.0, 0.0, 0.0, 0);
        double complex *z = on_carrier(e, n, AMP, FC_REAL, false);
        run_out o = run(q, z, NULL, n, 4096);
        first_input(&o, z, n, ml_am_latency(q));
        ck_assert_uint_eq(o.r.samples, o.n);
        run_free(&o);
        free(z);
        free(e);
        ml_cfir_destroy(f);
        ml_am_destroy(q);
    }
}
END_TEST

START_TEST(output_capacity_and_arguments)
{
    ml_am_config c = ml_am_config_default(FS, false, FC_REAL, BW, AMP);
    ml_am *q = make(&c);
    const size_t block_len = (size_t)llround(BLOCK_S * FS);
    /* dsp/am.h: the capacity for a push of n samples is n plus one block plus the flush,
     * latency - edge */
    const size_t flush = ml_am_latency(q) - ml_am_edge(q);
    ck_assert_uint_eq(ml_am_output_cap(q, 0), block_len + flush);
    ck_assert_uint_eq(ml_am_output_cap(q, 100), 100 + block_len + flush);
    ck_assert_uint_eq(ml_am_output_cap(NULL, 100), 0);
    ck_assert_uint_eq(ml_am_edge(NULL), 0);

    const size_t n = 100, cap = ml_am_output_cap(q, n);
    double complex z[100] = {0};
    double *env = malloc(cap * sizeof *env);
    double complex *in = malloc(cap * sizeof *in);
    unsigned char *mod = malloc(cap);
    size_t cnt = 0;
    ml_am_output small = {.env = env, .in = in, .modulated = mod, .cap = cap - 1};
    ck_assert_int_eq(ml_am_push(q, z, NULL, n, &small, &cnt), ML_EINVAL);
    ml_am_output ok = {.env = env, .in = in, .modulated = mod, .cap = cap};
    ml_am_output noenv = {.env = NULL, .in = in, .modulated = mod, .cap = cap};
    ml_am_output noin = {.env = env, .in = NULL, .modulated = mod, .cap = cap};
    ml_am_output nomod = {.env = env, .in = in, .modulated = NULL, .cap = cap};
    ck_assert_int_eq(ml_am_push(q, z, NULL, n, &noenv, &cnt), ML_EINVAL);
    ck_assert_int_eq(ml_am_push(q, z, NULL, n, &noin, &cnt), ML_OK); /* in is optional */
    ck_assert_int_eq(ml_am_push(q, z, NULL, n, &nomod, &cnt), ML_EINVAL);
    ck_assert_int_eq(ml_am_push(q, z, NULL, n, NULL, &cnt), ML_EINVAL);
    ck_assert_int_eq(ml_am_push(q, z, NULL, n, &ok, NULL), ML_EINVAL);
    ck_assert_int_eq(ml_am_push(q, NULL, NULL, n, &ok, &cnt), ML_EINVAL);
    ck_assert_int_eq(ml_am_push(NULL, z, NULL, n, &ok, &cnt), ML_EINVAL);
    ck_assert_int_eq(ml_am_push(q, NULL, NULL, 0, &ok, &cnt), ML_OK); /* n = 0 with NULL z */
    ck_assert_uint_eq(cnt, 0);
    ck_assert_int_eq(ml_am_push(q, z, NULL, n, &ok, &cnt), ML_OK);
    /* finish needs the capacity of a push of 0 */
    ml_am_output fsmall = {.env = env, .in = in, .modulated = mod, .cap = block_len + flush - 1};
    ck_assert_int_eq(ml_am_finish(q, &fsmall, &cnt), ML_EINVAL);
    ck_assert_int_eq(ml_am_finish(NULL, &ok, &cnt), ML_EINVAL);
    ml_am_result r;
    ck_assert_int_eq(ml_am_get_result(NULL, &r), ML_EINVAL);
    ck_assert_int_eq(ml_am_get_result(q, NULL), ML_EINVAL);
    /* 100 samples never leave a filter of latency > 100: no envelope yet */
    ck_assert_uint_gt(ml_am_latency(q), n);
    ck_assert_int_eq(ml_am_get_result(q, &r), ML_ENOSIGNAL);
    /* and 200 < 2 edge samples give none even after the flush */
    ck_assert_uint_gt(2 * ml_am_edge(q), 2 * n);
    ck_assert_int_eq(ml_am_push(q, z, NULL, n, &ok, &cnt), ML_OK);
    ck_assert_int_eq(ml_am_finish(q, &ok, &cnt), ML_OK);
    ck_assert_uint_eq(cnt, 0);
    ck_assert_int_eq(ml_am_get_result(q, &r), ML_ENOSIGNAL);
    /* after finish, push and finish are refused until reset */
    ck_assert_int_eq(ml_am_push(q, z, NULL, n, &ok, &cnt), ML_EINVAL);
    ck_assert_int_eq(ml_am_finish(q, &ok, &cnt), ML_EINVAL);
    ml_am_reset(q);
    ck_assert_int_eq(ml_am_push(q, z, NULL, n, &ok, &cnt), ML_OK);
    ck_assert_double_eq(ml_am_fraction_below(q, AMP), 0.0);
    ck_assert_double_eq(ml_am_fraction_below(NULL, AMP), 0.0);
    ml_am_destroy(q);

    /* with a reference channel, ref must be given */
    c.has_reference = true;
    q = make(&c);
    ck_assert_int_eq(ml_am_push(q, z, NULL, n, &ok, &cnt), ML_EINVAL);
    float ref[100] = {0};
    ck_assert_int_eq(ml_am_push(q, z, ref, n, &ok, &cnt), ML_OK);
    ml_am_destroy(q);
    free(env);
    free(in);
    free(mod);
}
END_TEST

/* ---- block invariance and reset ------------------------------------------------------------- */

/* Signal for the streaming tests: a carrier lead-in (quiet blocks), then AM and overmodulation, so
 * that every statistic (means, histograms, events, trapezoid) is exercised. */
static double complex *mixed_signal(size_t n, bool cplx, double fc, float **ref_out)
{
    double *e = malloc(n * sizeof *e);
    float *ref = malloc(n * sizeof *ref);
    ck_assert(e && ref);
    for (size_t i = 0; i < n; i++) {
        double x = cos(2.0 * TS_PI * 997.0 * (double)i / FS);
        /* quiet, AM, reversed (1.5), pinched off (1.25: a pinch-off band-limited to the 5 kHz
         * channel keeps a flat floor at 997 Hz; at 1.5 it rings below zero like a reversal) */
        double m = i < n / 4 ? 0.0 : i < n / 2 ? 0.5 : i < 3 * n / 4 ? 1.5 : 1.25;
        e[i] = i < 3 * n / 4 ? 1.0 + m * x : fmax(0.0, 1.0 + m * x);
        ref[i] = (float)x;
    }
    double complex *z = on_carrier(e, n, AMP, fc, cplx);
    free(e);
    *ref_out = ref;
    return z;
}

START_TEST(block_invariance)
{
    /* Blocks of 1, 7 and 4096 must give the same envelope and result. The mixer restarts its
     * rotator from the exact phase at each call (am.c), so the phase of one sample may differ by a
     * few ulp between splittings; 1e-12 relative covers that rounding (the cfir itself is
     * bit-identical across splits, dsp/cfir.h). Histogram readings could differ by a bin only if a
     * value sat within 1e-12 of a bin edge; they are compared with the same 1e-12. */
    const struct {
        bool cplx;
        double fc;
    } cases[] = {{false, FC_REAL}, {true, -3000.0}};
    const size_t n = 48000;
    const size_t blocks[] = {1, 7, 4096};
    for (size_t c = 0; c < 2; c++) {
        float *ref;
        double complex *z = mixed_signal(n, cases[c].cplx, cases[c].fc, &ref);
        ml_am_config cfg = ml_am_config_default(FS, cases[c].cplx, cases[c].fc, BW, AMP);
        cfg.has_reference = true;
        run_out o[3];
        double fb[3];
        for (size_t b = 0; b < 3; b++) {
            ml_am *q = make(&cfg);
            o[b] = run(q, z, ref, n, blocks[b]);
            fb[b] = ml_am_fraction_below(q, 0.2 * AMP);
            ml_am_destroy(q);
        }
        /* the signal must have produced every kind of reading, or the comparison is hollow */
        ck_assert_uint_gt(o[2].r.quiet_samples, 0);
        ck_assert_uint_gt(o[2].r.modulated_samples, 0);
        ck_assert_uint_gt(o[2].r.pinch_events, 0);
        ck_assert_uint_gt(o[2].r.reversal_events, 0);
        ck_assert_uint_gt(o[2].r.positive_over, 0);
        ck_assert(o[2].r.has_trapezoid);
        for (size_t b = 0; b < 2; b++) {
            ck_assert_uint_eq(o[b].n, o[2].n);
            for (size_t i = 0; i < o[2].n; i++) {
                ck_assert_msg(fabs(o[b].env[i] - o[2].env[i]) <= 1e-12 * AMP, "case %zu block %zu env[%zu]",
                              c, blocks[b], i);
                ck_assert_msg(o[b].in[i] == o[2].in[i], "in[%zu]", i);
                ck_assert_msg(o[b].mod[i] == o[2].mod[i], "modulated[%zu]", i);
            }
            assert_same_result(&o[b].r, &o[2].r, 1e-12);
            assert_close(fb[b], fb[2], 1e-12, 1.0, "fraction_below");
        }
        /* without the inputs in the output: the same envelope, classes and readings, bit for bit
         * (dropping the input delay line changes no arithmetic on the envelope path) */
        ml_am *q = make(&cfg);
        run_out noin = run_keep(q, z, ref, n, blocks[2], false);
        ml_am_destroy(q);
        ck_assert_uint_eq(noin.n, o[2].n);
        ck_assert_mem_eq(noin.env, o[2].env, o[2].n * sizeof *noin.env);
        ck_assert_mem_eq(noin.mod, o[2].mod, o[2].n);
        assert_same_result(&noin.r, &o[2].r, 0.0);
        run_free(&noin);
        /* the same values as interleaved float frames (reference, I, Q, and a spare column):
         * ml_am_push_frames gives exactly what ml_am_push gives */
        float *fr = malloc(4 * n * sizeof *fr);
        double complex *zf = malloc(n * sizeof *zf);
        ck_assert(fr != NULL && zf != NULL);
        for (size_t i = 0; i < n; i++) {
            fr[4 * i] = ref[i];
            fr[4 * i + 1] = (float)creal(z[i]);
            fr[4 * i + 2] = (float)cimag(z[i]);
            fr[4 * i + 3] = 99.0f;
            zf[i] = CMPLX(fr[4 * i + 1], cases[c].cplx ? fr[4 * i + 2] : 0.0);
        }
        q = make(&cfg);
        run_out by_z = run_keep(q, zf, ref, n, blocks[2], false);
        ml_am_destroy(q);
        q = make(&cfg);
        const size_t cap = ml_am_output_cap(q, blocks[2]);
        double *env = malloc((by_z.n + cap) * sizeof *env);
        unsigned char *mod = malloc(by_z.n + cap);
        ck_assert(env != NULL && mod != NULL);
        const ml_channels bad = {.stride = 4, .re = 1, .im = 4, .complex_input = cases[c].cplx,
                                 .has_ref = cfg.has_reference, .ref = 0};
        ml_am_output one = {.env = env, .in = NULL, .modulated = mod, .cap = cap};
        size_t cnt = 0, got = 0;
        ck_assert_int_eq(ml_am_push_frames(q, fr, &bad, 1, &one, &cnt), cases[c].cplx ? ML_EINVAL : ML_OK);
        ml_am_reset(q);
        for (size_t i = 0; i < n + blocks[2]; i += blocks[2]) { /* the last step finishes */
            ml_am_output part = {.env = env + got, .in = NULL, .modulated = mod + got, .cap = cap};
            if (i < n) {
                const size_t take = n - i < blocks[2] ? n - i : blocks[2];
                const ml_channels in = {.stride = 4, .re = 1, .im = 2, .complex_input = cases[c].cplx,
                                        .has_ref = cfg.has_reference, .ref = 0};
                ck_assert_int_eq(ml_am_push_frames(q, fr + 4 * i, &in, take, &part, &cnt), ML_OK);
            } else {
                ck_assert_int_eq(ml_am_finish(q, &part, &cnt), ML_OK);
            }
            got += cnt;
        }
        ml_am_result rf;
        ck_assert_int_eq(ml_am_get_result(q, &rf), ML_OK);
        ck_assert_uint_eq(got, by_z.n);
        ck_assert_mem_eq(env, by_z.env, got * sizeof *env);
        ck_assert_mem_eq(mod, by_z.mod, got);
        assert_same_result(&rf, &by_z.r, 0.0);
        ml_am_destroy(q);
        run_free(&by_z);
        free(env);
        free(mod);
        free(fr);
        free(zf);
        for (size_t b = 0; b < 3; b++)
            run_free(&o[b]);
        free(z);
        free(ref);
    }
}
END_TEST

START_TEST(reset_returns_to_created_state)
{
    /* Same input after reset -> identical outputs and result (bit-identical: the object runs the
     * same arithmetic from the same state). A different signal first fills every accumulator. */
    const size_t n = 30000;
    float *ref;
    double complex *z = mixed_signal(n, true, 5000.0, &ref);
    ml_am_config cfg = ml_am_config_default(FS, true, 5000.0, BW, AMP);
    cfg.has_reference = true;
    ml_am *fresh = make(&cfg);
    run_out a = run(fresh, z, ref, n, 4096);
    const double fa = ml_am_fraction_below(fresh, 0.2 * AMP);

    ml_am *q = make(&cfg);
    double *e = envelope(n, ENV_PINCH, 2.0, 300.0, 0.0, 0);
    double complex *other = on_carrier(e, n, 1.7 * AMP, 5000.0, true);
    run_out junk = run(q, other, ref, n / 2 + 123, 777); /* stops mid-block, mid-event */
    run_free(&junk);
    ml_am_reset(q);
    run_out b = run(q, z, ref, n, 4096);
    ck_assert_uint_eq(a.n, b.n);
    ck_assert(memcmp(a.env, b.env, a.n * sizeof *a.env) == 0);
    ck_assert(memcmp(a.in, b.in, a.n * sizeof *a.in) == 0);
    ck_assert(memcmp(a.mod, b.mod, a.n) == 0);
    assert_same_result(&a.r, &b.r, 0.0);
    ck_assert_double_eq(ml_am_fraction_below(q, 0.2 * AMP), fa);
    ml_am_reset(NULL); /* no-op */
    run_free(&a);
    run_free(&b);
    free(e);
    free(other);
    free(z);
    free(ref);
    ml_am_destroy(q);
    ml_am_destroy(fresh);
}
END_TEST

/* ---- known signals -------------------------------------------------------------------------- */

/* The carrier cases: real IF at fs/4, and I/Q at -3 kHz, 0 and +5 kHz. */
static const struct {
    bool cplx;
    double fc;
} carriers[] = {{false, FC_REAL}, {true, -3000.0}, {true, 0.0}, {true, 5000.0}};
#define NCARRIERS (sizeof carriers / sizeof carriers[0])

START_TEST(unmodulated_carrier)
{
    /* e = A. Real input: 2 A cos(wc t) e^{-j wc t} = A + A e^{-j 2 wc t}: the mixer doubling
     * (dsp/am.h) makes the baseband A, and the image at 2 fc = 24 kHz is removed by the channel
     * filter, whose designed response there is checked below to be under -120 dB (1e-6 of A).
     * I/Q input: A e^{j wc t} e^{-j wc t} = A, no image. The filter has unity gain at 0 Hz by
     * design (taps normalised, dsp/cfir.h), so every envelope sample from a full filter is A to
     * within 1e-6 of A (image leakage plus rounding). Samples are checked from input index
     * latency() on, which is past the (ntaps - 1) / 2 samples a half-filled filter needs
     * (latency = (ntaps - 1) / 2 + the overlap-save block, dsp/cfir.h); the start-up itself is
     * the subject of startup_transient_not_in_statistics. */
    const size_t n = 96000; /* 2 s */
    for (size_t c = 0; c < NCARRIERS; c++) {
        ml_am_config cfg = ml_am_config_default(FS, carriers[c].cplx, carriers[c].fc, BW, AMP);
        ml_cfir *f = twin_filter(&cfg);
        ck_assert_double_le(ml_cfir_response_db(f, 2.0 * FC_REAL), -120.0);
        ml_cfir_destroy(f);
        ml_am *q = make(&cfg);
        const size_t lat = ml_am_latency(q);
        double *e = envelope(n, ENV_TONE, 0.0, 0.0, 0.0, 0);
        double complex *z = on_carrier(e, n, AMP, carriers[c].fc, carriers[c].cplx);
        run_out o = run(q, z, NULL, n, 4096);
        const size_t d = first_input(&o, z, n, lat);
        double sum_q = 0.0;
        size_t nq = 0;
        for (size_t i = 0; i < o.n; i++) {
            if (i + d >= lat)
                ck_assert_msg(fabs(o.env[i] - AMP) <= 1e-6 * AMP, "carrier %zu env[%zu] = %.12g", c, i,
                              o.env[i]);
            /* no block of a steady carrier is modulated */
            ck_assert_msg(o.mod[i] == 0, "carrier %zu: sample %zu tagged modulated", c, i);
            sum_q += o.env[i];
            nq++;
        }
        ck_assert_uint_eq(o.r.samples, o.n);
        ck_assert_uint_eq(o.r.quiet_samples, o.n);
        ck_assert_uint_eq(o.r.modulated_samples, 0);
        ck_assert_double_eq(o.r.mean_modulated, 0.0);
        /* mean_quiet is the mean of the quiet samples handed out. The object sums per block and
         * the test sample by sample: the two orders of ~1e5 additions differ by rounding of at
         * most n 2^-53 ~ 1e-11 relative; 1e-10 */
        ck_assert_double_eq_tol(o.r.mean_quiet, sum_q / (double)nq, 1e-10 * AMP);
        ck_assert_double_eq_tol(o.r.mean_all, o.r.mean_quiet, 1e-10 * AMP);
        ck_assert_uint_eq(o.r.pinch_events, 0);
        ck_assert_uint_eq(o.r.reversal_events, 0);
        ck_assert_uint_eq(o.r.positive_over, 0);
        ck_assert(!o.r.has_trapezoid);
        /* no modulated block: the peak readings come from all blocks and are A within the
         * histogram's bin (4 A / 65536 = 6.1e-5 A, am.c) */
        ck_assert_double_eq_tol(o.r.emax, AMP, 1e-4 * AMP);
        ck_assert_double_eq_tol(o.r.emin, AMP, 1e-4 * AMP);
        /* the share of time below A / 2 is 0 (every sample is A) and below 2 A it is 1 */
        ck_assert_double_eq_tol(ml_am_fraction_below(q, 2.0 * AMP), 1.0, 1e-12);
        free_case(&o, z, e, q);
    }
}
END_TEST

START_TEST(startup_transient_not_in_statistics)
{
    /* dsp/am.h: "The first latency() input samples only fill the channel filter and produce no
     * envelope". So no statistic may see the filter's start-up (the output of a half-filled
     * filter: a step response that rings up to ~9 % over A for a carrier that is simply on when the
     * capture starts).
     * Steady carrier: every reading is A. emax, emin, emax_abs, emin_abs within 1e-4 A (histogram
     * bin 6.1e-5 A; the interpolated envelope of a constant baseband is that constant); the first
     * envelope sample and mean_quiet within 1e-6 A (see unmodulated_carrier); fraction below
     * 0.99 A = 0. A short capture (0.4 s) is used so that the start-up weighs in the quantiles as
     * it would in a short recording.
     * Tone m = 0.5 at 997 Hz (2 s): the interpolated extremes are the true peaks A(1 +- m) within
     * 1e-4 A: the 4x Catmull-Rom interpolation of a 997 Hz tone sampled at 48 kHz errs by about
     * (2 pi 997 / 48000)^4 / 16 ~ 1e-5 of m A, the filter gain by 1e-5 (tone_modulation). */
    for (size_t c = 0; c < NCARRIERS; c++) {
        for (int tone = 0; tone < 2; tone++) {
            const double m = tone ? 0.5 : 0.0;
            const size_t n = tone ? 96000 : 19200;
            ml_am_config cfg = ml_am_config_default(FS, carriers[c].cplx, carriers[c].fc, BW, AMP);
            ml_am *q = make(&cfg);
            double *e = envelope(n, ENV_TONE, m, 997.0, 0.0, 0);
            double complex *z = on_carrier(e, n, AMP, carriers[c].fc, carriers[c].cplx);
            run_out o = run(q, z, NULL, n, 4096);
            const size_t d = first_input(&o, z, n, ml_am_latency(q));
            ck_assert_msg(fabs(o.env[0] - AMP * e[d]) <= 1e-6 * AMP,
                          "carrier %zu m %g: first envelope sample %.6f A,"
                          " expected %.6f A",
                          c, m, o.env[0] / AMP, e[d]);
            ck_assert_msg(fabs(o.r.emax_abs - AMP * (1.0 + m)) <= 1e-4 * AMP,
                          "carrier %zu m %g: emax_abs %.6f A", c, m, o.r.emax_abs / AMP);
            ck_assert_msg(fabs(o.r.emin_abs - AMP * (1.0 - m)) <= 1e-4 * AMP,
                          "carrier %zu m %g: emin_abs %.6f A", c, m, o.r.emin_abs / AMP);
            if (!tone) {
                ck_assert_msg(fabs(o.r.emax - AMP) <= 1e-4 * AMP, "carrier %zu: emax %.6f A", c,
                              o.r.emax / AMP);
                ck_assert_msg(fabs(o.r.emin - AMP) <= 1e-4 * AMP, "carrier %zu: emin %.6f A", c,
                              o.r.emin / AMP);
                ck_assert_msg(fabs(o.r.mean_quiet - AMP) <= 1e-6 * AMP, "carrier %zu: mean_quiet %.9f A", c,
                              o.r.mean_quiet / AMP);
                ck_assert_double_eq(ml_am_fraction_below(q, 0.99 * AMP), 0.0);
            }
            free_case(&o, z, e, q);
        }
    }
}
END_TEST

START_TEST(tone_modulation)
{
    /* e = 1 + m cos(2 pi fm t), m = 0.5, fm = 997 Hz: envelope A(1 + m cos) [haykin:2001].
     * Expected: emax = A(1 + m), emin = A(1 - m), index (emax - emin) / (emax + emin) = m and
     * carrier (emax + emin) / 2 = A [newnes]. Tolerance 1e-4 relative: the histogram bin is
     * 6.1e-5 A (4 A / 65536, am.c); hold_s = 0.001 reads the level exceeded 0.1 % of the time,
     * which for a cosine peak lies m (1 - cos(pi 0.001)) = 2.5e-6 A below it; the channel filter's
     * gain at fm differs from 1 by the amount checked below (<= 1e-5, scaling m A). Every envelope
     * sample from a full filter must be A(1 + m g cos) with |g - 1| <= 1e-5: 1e-5 m A + 1e-6 A.
     * mean_modulated = A + A m mean(cos): over S consecutive samples |sum cos| <= 1 / sin(pi fm/fs),
     * so the tolerance is A m / (S sin(pi fm / fs)) (about 8e-5 A here) plus 1e-6 A. */
    const double m = 0.5, fm = 997.0;
    const size_t n = 96000;
    for (size_t c = 0; c < NCARRIERS; c++) {
        ml_am_config cfg = ml_am_config_default(FS, carriers[c].cplx, carriers[c].fc, BW, AMP);
        ck_assert_double_le(twin_gain_error(&cfg, fm), 1e-5);
        ml_am *q = make(&cfg);
        const size_t lat = ml_am_latency(q);
        double *e = envelope(n, ENV_TONE, m, fm, 0.0, 0);
        double complex *z = on_carrier(e, n, AMP, carriers[c].fc, carriers[c].cplx);
        run_out o = run(q, z, NULL, n, 4096);
        const size_t d = first_input(&o, z, n, lat);
        for (size_t i = lat; i < o.n; i++)
            ck_assert_msg(fabs(o.env[i] - AMP * e[i + d]) <= (1e-5 * m + 1e-6) * AMP, "carrier %zu env[%zu]",
                          c, i);
        const ml_am_result *r = &o.r;
        ck_assert_double_eq_tol(r->emax, AMP * (1.0 + m), 1e-4 * AMP * (1.0 + m));
        ck_assert_double_eq_tol(r->emin, AMP * (1.0 - m), 1e-4 * AMP * (1.0 + m));
        const double index = (r->emax - r->emin) / (r->emax + r->emin);
        ck_assert_double_eq_tol(index, m, 1e-4);
        ck_assert_double_eq_tol(0.5 * (r->emax + r->emin), AMP, 1e-4 * AMP);
        /* every block of a 997 Hz tone at m = 0.5 varies far more than 2 %: all modulated */
        ck_assert_uint_eq(r->modulated_samples, r->samples);
        ck_assert_uint_eq(r->quiet_samples, 0);
        const double S = (double)r->samples;
        const double tol_mean = AMP * m / (S * sin(TS_PI * fm / FS)) + 1e-6 * AMP;
        ck_assert_double_eq_tol(r->mean_modulated, AMP, tol_mean);
        ck_assert_double_eq_tol(r->mean_all, AMP, tol_mean);
        /* (emax_abs and emin_abs: see startup_transient_not_in_statistics) */
        ck_assert_uint_eq(r->pinch_events, 0);
        ck_assert_uint_eq(r->reversal_events, 0);
        ck_assert_uint_eq(r->positive_over, 0); /* 150 % < 225 % */
        /* Share of time below A: the share of points with cos < 0, i.e. 1/2, read from the 4x
         * interpolated points. They advance the phase by 997 / 192000 of a cycle each, so 192000
         * points hold exactly 997 cycles and (gcd = 1) every phase j / 192000 once: half of them,
         * to one point, have cos < 0. The remaining < 192000 points of the record are a stretch of
         * this rotation, whose count errs by at most the sum of the partial quotients of
         * 997/192000 = [0; 192, 1, 1, 2, 1, 2, 1, 1, 10, 2] (213 points; Ostrowski's bound for
         * rotations). So |share - 1/2| <= 215 / (4 S) = 5.7e-4 for S = 94108: 1e-3 (the filter
         * keeps the sign of cos exactly, its gain being positive). Partial quotients from
         * /usr/bin/python3 with fractions.Fraction(997, 192000). */
        ck_assert_double_eq_tol(ml_am_fraction_below(q, AMP), 0.5, 1e-3);
        free_case(&o, z, e, q);
    }
}
END_TEST

START_TEST(lead_in_then_modulation)
{
    /* L samples of carrier, then m = 0.5 at 997 Hz. Envelope sample i belongs to input i (in[] is
     * checked to be z[i]). Truth: samples i < L quiet, i >= L modulated. The classification is
     * per block of 960 samples (20 ms), and the filter (linear phase, (ntaps - 1) / 2 <= latency
     * samples of look-ahead) lets modulation show up to latency samples early. So:
     *  - every sample i < L - block - latency is tagged quiet;
     *  - every sample i >= L + block is tagged modulated (a block wholly after L holds the tone);
     *  - quiet_samples is L within block + latency, modulated_samples is S - L within the same;
     *  - mean_quiet = A (1e-6 A, see the end). */
    const size_t L = 30000 + 333, n = 96000;
    for (size_t c = 0; c < NCARRIERS; c++) {
        ml_am_config cfg = ml_am_config_default(FS, carriers[c].cplx, carriers[c].fc, BW, AMP);
        ml_am *q = make(&cfg);
        const size_t lat = ml_am_latency(q), blk = (size_t)llround(BLOCK_S * FS);
        double *e = envelope(n, ENV_TONE, 0.5, 997.0, 0.0, L);
        double complex *z = on_carrier(e, n, AMP, carriers[c].fc, carriers[c].cplx);
        run_out o = run(q, z, NULL, n, 4096);
        const size_t d = first_input(&o, z, n, lat);
        size_t nq = 0, nm = 0;
        double sum_q = 0.0;
        for (size_t i = 0; i < o.n; i++) {
            if (i + d + blk + lat < L)
                ck_assert_msg(o.mod[i] == 0, "carrier %zu: sample %zu of the lead-in tagged modulated", c, i);
            if (i + d >= L + blk)
                ck_assert_msg(o.mod[i] == 1, "carrier %zu: sample %zu of the tone tagged quiet", c, i);
            if (o.mod[i]) {
                nm++;
            } else {
                nq++;
                sum_q += o.env[i];
            }
        }
        const ml_am_result *r = &o.r;
        /* the tags and the counts describe the same classification */
        ck_assert_uint_eq(r->quiet_samples, nq);
        ck_assert_uint_eq(r->modulated_samples, nm);
        ck_assert_uint_eq(nq + nm, r->samples);
        ck_assert_msg(llabs((long long)r->quiet_samples - (long long)(L - d)) <= (long long)(blk + lat),
                      "carrier %zu: quiet %llu, lead-in %zu", c, (unsigned long long)r->quiet_samples, L - d);
        ck_assert_msg(llabs((long long)r->modulated_samples - (long long)(r->samples + d - L))
                          <= (long long)(blk + lat),
                      "carrier %zu: modulated %llu", c, (unsigned long long)r->modulated_samples);
        ck_assert_double_eq_tol(r->mean_quiet, sum_q / (double)nq, 1e-10 * AMP); /* see unmodulated_carrier */
        /* the peak readings come from the modulated blocks only: A(1 +- m) as in tone_modulation
         * (1e-4 relative), although the lead-in holds a third of the samples at A */
        ck_assert_double_eq_tol(r->emax, 1.5 * AMP, 1.5e-4 * AMP);
        ck_assert_double_eq_tol(r->emin, 0.5 * AMP, 1.5e-4 * AMP);
        /* every quiet sample from a full filter is A within 1e-6 A (unmodulated_carrier), and the
         * onset of the tone is continuous (sine phase), so the quiet mean is A within 1e-6 A (the
         * filter's start-up must not count, see startup_transient_not_in_statistics) */
        ck_assert_msg(fabs(r->mean_quiet - AMP) <= 1e-6 * AMP, "carrier %zu: mean_quiet %.9f A", c,
                      r->mean_quiet / AMP);
        free_case(&o, z, e, q);
    }
}
END_TEST

/* ---- overmodulation ------------------------------------------------------------------------- */

START_TEST(pinch_off_model_b)
{
    /* Model B [refs61]: e = max(0, 1 + 1.5 cos): the carrier is cut off once per cycle; its phase
     * does not change, so each cut-off is a pinch, none is a reversal. fm = 200 Hz: the channel
     * (5 kHz) keeps 25 harmonics of the clipped envelope, so the cut-off stretch (96 degrees of
     * every cycle, cos < -2/3) stays under 1 % of A. 1 s holds 200 cycles; the count may differ
     * by one at the ends of the record (a cut-off cut by the start or the end). Positive peaks
     * reach 2.5 A > 2.25 A (125 %, [cfr73.1570]): one excursion per cycle, +-1 likewise. */
    const double m = 1.5, fm = 200.0;
    const size_t n = 48000;
    for (size_t c = 0; c < NCARRIERS; c++) {
        ml_am_config cfg = ml_am_config_default(FS, carriers[c].cplx, carriers[c].fc, BW, AMP);
        ml_am *q = make(&cfg);
        double *e = envelope(n, ENV_PINCH, m, fm, 0.0, 0);
        double complex *z = on_carrier(e, n, AMP, carriers[c].fc, carriers[c].cplx);
        run_out o = run(q, z, NULL, n, 4096);
        const double cycles = fm * (double)o.r.samples / FS;
        ck_assert_msg(fabs((double)o.r.pinch_events - cycles) <= 1.0,
                      "carrier %zu: %llu pinches, %.2f cycles", c, (unsigned long long)o.r.pinch_events,
                      cycles);
        ck_assert_uint_eq(o.r.reversal_events, 0);
        ck_assert_msg(fabs((double)o.r.positive_over - cycles) <= 1.0, "carrier %zu: %llu excursions", c,
                      (unsigned long long)o.r.positive_over);
        free_case(&o, z, e, q);
    }
}
END_TEST

START_TEST(phase_reversal_model_a)
{
    /* Model A [refs61]: the signed envelope 1 + 1.5 cos on the carrier. The envelope |1 + m cos|
     * touches 0 twice per cycle (cos = -1/m) and the carrier's phase turns by 180 degrees there and
     * back: one reversed stretch per trough, so one event per trough (dsp/am.h), no pinch; +-1
     * for a trough cut by either end of the record. The signed envelope is a single tone, which
     * the channel passes unchanged. Real IF and I/Q. */
    const double m = 1.5, fm = 200.0;
    const size_t n = 48000;
    for (size_t c = 0; c < NCARRIERS; c++) {
        ml_am_config cfg = ml_am_config_default(FS, carriers[c].cplx, carriers[c].fc, BW, AMP);
        ml_am *q = make(&cfg);
        double *e = envelope(n, ENV_TONE, m, fm, 0.0, 0);
        double complex *z = on_carrier(e, n, AMP, carriers[c].fc, carriers[c].cplx);
        run_out o = run(q, z, NULL, n, 4096);
        const double cycles = fm * (double)o.r.samples / FS;
        /* the reversed stretches of the signed envelope over the inputs the envelope covers
         * (first_input), counted exactly: each begins where e turns negative */
        const size_t d = first_input(&o, z, n, ml_am_latency(q));
        long long lobes = 0;
        for (size_t i = d + 1; i < n - d; i++)
            lobes += e[i] < 0 && e[i - 1] >= 0;
        ck_assert_msg(llabs((long long)o.r.reversal_events - lobes) <= 1, "carrier %zu: %llu reversals, %lld lobes",
                      c, (unsigned long long)o.r.reversal_events, lobes);
        ck_assert_uint_eq(o.r.pinch_events, 0);
        /* |1 + 1.5 cos| peaks at 2.5 (cos = 1) > 2.25: one crest over the limit per cycle; the
         * reversed lobe peaks at |1 - 1.5| = 0.5 and is no crest */
        ck_assert_msg(fabs((double)o.r.positive_over - cycles) <= 1.0, "carrier %zu: %llu excursions", c,
                      (unsigned long long)o.r.positive_over);
        /* the held negative reading is the coherent one, 1 - m = -0.5 A (hold 1 ms/s: the signed
         * envelope lies within 0.75 (pi 0.001)^2 = 7e-6 A of its minimum there); 1e-4 A for the
         * histogram's bins */
        ck_assert_double_eq_tol(o.r.emin, (1.0 - m) * AMP, 1e-4 * AMP);
        free_case(&o, z, e, q);
    }
}
END_TEST

START_TEST(reversal_time_and_reading)
{
    /* m = 1.5, a 10 Hz tone (the signed envelope passes the channel exactly), 2 s.
     * Reversed time (dsp/am.h: the time with S < 0 in the reversal troughs): 1 + m cos theta < 0
     * for cos theta < -1/m, a share 1 - acos(-1/m) / pi = 0.267720 of the time [refs61].
     * The reading below 0: the reading is S where S < -rev (rev = 2 % of A without noise), so the
     * share of readings below 0 is that of 1 + m cos theta < -0.02: 1 - acos(-1.02/m) / pi =
     * 0.261980. Both from python3 -c "from math import *; m=1.5; print(1-acos(-1/m)/pi,
     * 1-acos(-1.02/m)/pi)". The record's ends cut partial cycles (2 s less the filter's edge), so
     * the reversed share is compared with the samples of e < 0 the envelope covers (within 1 % of
     * the whole-cycle share) to 0.2 % of the share: 4 readings per sample at 48 kHz give each of
     * the 20 lobes some 5100 points, so counting errs by 1/5100 per lobe edge; the readings below
     * 0 are compared with the whole-cycle share within 1 %. */
    const double m = 1.5, fm = 10.0;
    const double share = 1.0 - acos(-1.0 / m) / TS_PI, below0 = 1.0 - acos(-1.02 / m) / TS_PI;
    ck_assert_double_eq_tol(share, 0.267720, 1e-6);
    ck_assert_double_eq_tol(below0, 0.261980, 1e-6);
    const size_t n = 96000;
    for (size_t c = 0; c < NCARRIERS; c++) {
        ml_am_config cfg = ml_am_config_default(FS, carriers[c].cplx, carriers[c].fc, BW, AMP);
        ml_am *q = make(&cfg);
        double *e = envelope(n, ENV_TONE, m, fm, 0.0, 0);
        double complex *z = on_carrier(e, n, AMP, carriers[c].fc, carriers[c].cplx);
        run_out o = run(q, z, NULL, n, 4096);
        /* over the inputs the envelope covers, not whole cycles: the share counted there */
        const size_t d = first_input(&o, z, n, ml_am_latency(q));
        size_t neg_in = 0;
        for (size_t i = d; i < d + o.r.samples; i++)
            neg_in += e[i] < 0;
        const double got = o.r.reversed_samples / (double)o.r.samples, want = (double)neg_in / (double)o.r.samples;
        ck_assert_msg(fabs(want - share) <= 0.01 * share, "carrier %zu: %.6f of the span", c, want);
        ck_assert_msg(fabs(got - want) <= 2e-3 * share, "carrier %zu: reversed %.6f, expected %.6f", c, got, want);
        const double neg = ml_am_fraction_below(q, 0.0);
        ck_assert_msg(fabs(neg - below0) <= 0.01 * below0, "carrier %zu: below 0 %.6f, expected %.6f", c, neg,
                      below0);
        ck_assert_double_eq(o.r.off_samples, 0.0);
        /* and the absolute minimum of the interpolated envelope is (nearly) 0 */
        ck_assert_double_le(o.r.emin_abs, 0.01 * AMP);
        free_case(&o, z, e, q);
    }
}
END_TEST

START_TEST(positive_peak_limit)
{
    /* [cfr73.1570] positive peaks limited to 125 %: excursions above 2.25 A counted. m = 0.8
     * peaks at 1.8 A: none. m = 1.3 (signed, I/Q and real) peaks at 2.3 A: one per cycle (+-1);
     * fm = 997 Hz, 0.5 s: the hysteresis (1 % of A) separates consecutive peaks, which dip to
     * far below 2.24 A between them. With positive_limit_pct = 70, m = 0.8 (1.8 A > 1.7 A) counts
     * once per cycle as well. */
    const double fm = 997.0;
    const size_t n = 24000;
    const struct {
        double m, limit;
        bool counts;
    } cases[] = {{0.8, 125.0, false}, {1.3, 125.0, true}, {0.8, 70.0, true}, {0.5, 70.0, false}};
    for (size_t c = 0; c < NCARRIERS; c++) {
        for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++) {
            ml_am_config cfg = ml_am_config_default(FS, carriers[c].cplx, carriers[c].fc, BW, AMP);
            cfg.positive_limit_pct = cases[k].limit;
            ml_am *q = make(&cfg);
            double *e = envelope(n, ENV_TONE, cases[k].m, fm, 0.0, 0);
            double complex *z = on_carrier(e, n, AMP, carriers[c].fc, carriers[c].cplx);
            run_out o = run(q, z, NULL, n, 4096);
            const double cycles = fm * (double)o.r.samples / FS;
            if (cases[k].counts)
                ck_assert_msg(fabs((double)o.r.positive_over - cycles) <= 1.0,
                              "carrier %zu case %zu: %llu, %.2f", c, k, (unsigned long long)o.r.positive_over,
                              cycles);
            else
                ck_assert_msg(o.r.positive_over == 0, "carrier %zu case %zu: %llu excursions", c, k,
                              (unsigned long long)o.r.positive_over);
            free_case(&o, z, e, q);
        }
    }
}
END_TEST

START_TEST(carrier_offset_followed)
{
    /* The mixer 3 Hz, 20 Hz or -35 Hz off the carrier (dsp/am.c follows offsets up to 39 Hz
     * either way; without following, a 20 ms block turns by 21.6 degrees at 3 Hz and its
     * quadrature component would hold a ramp of the carrier's own amplitude). 1 s of carrier,
     * then 1 s of model A phase reversal, 1 + 1.2 sin(2 pi 200 t) [refs61], with white Gaussian
     * noise whose quadrature component through the channel has sigma = 0.02 A (the noise through
     * a filter of noise bandwidth Bn: for I/Q noise of variance s2 (s2 / 2 per component) each
     * baseband component has s2 Bn / fs; for a real IF of variance s2 the doubled mixer output
     * has 4 s2 Bn / fs per component; Bn = the integral of |H(f)|^2 over 0 .. fs / 2 of the twin
     * filter). Checked against the construction:
     *  - noise_rms = sigma within 6 % (48000 quiet samples of which some 10000 are independent
     *    in 2 Bn: the estimate's spread is about 1 / sqrt(2 x 5000) = 1 %, three times that plus
     *    the in-phase share the classification leaves out);
     *  - the lead-in is found quiet (within a block and the filter's latency);
     *  - one reversal event per trough of the signed envelope (200 +- 2: the fade-less onset may
     *    cut one), no pinch-off (rev = 5 sigma = 0.1 A lies well above the troughs' -0.2 A). */
    const size_t L = 48000, n = 96000;
    const double offs[3] = {3.0, 20.0, -35.0}, sig = 0.02;
    for (size_t c = 0; c < 2; c++) {
        const bool cplx = c == 1;
        const double fc = cplx ? -3000.0 : FC_REAL;
        for (size_t k = 0; k < 3; k++) {
            ml_am_config cfg = ml_am_config_default(FS, cplx, fc, BW, AMP);
            ml_cfir *f = twin_filter(&cfg);
            double bn = 0;
            for (double fr = 0.5; fr < FS / 2; fr += 1.0)
                bn += pow(10.0, ml_cfir_response_db(f, fr) / 10.0);
            ml_cfir_destroy(f);
            const double s2 = (sig * AMP) * (sig * AMP) * FS / bn / (cplx ? 1.0 : 4.0);
            ml_am *q = make(&cfg);
            double *e = envelope(n, ENV_TONE, 1.2, 200.0, 0.0, L);
            double complex *z = on_carrier(e, n, AMP, fc + offs[k], cplx);
            ts_rng r = {0x0ff5e7ULL + k + 7 * c};
            for (size_t i = 0; i < n; i++)
                z[i] += cplx ? sqrt(s2 / 2.0) * (ts_gauss(&r) + I * ts_gauss(&r)) : sqrt(s2) * ts_gauss(&r);
            run_out o = run(q, z, NULL, n, 4096);
            const size_t lat = ml_am_latency(q), blk = (size_t)llround(BLOCK_S * FS);
            ck_assert_msg(fabs(o.r.noise_rms / (sig * AMP) - 1.0) <= 0.06, "%s, %+g Hz: noise %.4f A, expected %.4f A",
                          cplx ? "iq" : "if", offs[k], o.r.noise_rms / AMP, sig);
            ck_assert_msg(llabs((long long)o.r.quiet_samples - (long long)(L - o.edge)) <= (long long)(blk + lat),
                          "%s, %+g Hz: quiet %llu", cplx ? "iq" : "if", offs[k],
                          (unsigned long long)o.r.quiet_samples);
            ck_assert_msg(llabs((long long)o.r.reversal_events - 200) <= 2, "%s, %+g Hz: %llu reversals",
                          cplx ? "iq" : "if", offs[k], (unsigned long long)o.r.reversal_events);
            ck_assert_uint_eq(o.r.pinch_events, 0);
            free_case(&o, z, e, q);
        }
    }
}
END_TEST

START_TEST(troughs_cut_by_the_ends)
{
    /* The carrier coming on 12 ms into the input, or going off 12 ms before its end (less than a
     * 20 ms block: no block is without carrier), under a 1 kHz tone at m = 0.8: the envelope
     * never falls below 0.2 A while the carrier is there, so no trough of the modulation is
     * overmodulated; the stretch without carrier is cut by an end of the input and not judged
     * (dsp/am.h): no pinch-off, no reversal, no carrier-off time. The same input with the
     * carrier switched off for 12 ms in the middle and back (a trough that ends) is one pinch-off
     * whose time below F is the 12 ms less the channel filter's edges (within 1 ms). */
    const size_t n = 48000, gap = 576; /* 12 ms */
    for (size_t c = 0; c < 2; c++) {
        const bool cplx = c == 1;
        const double fc = cplx ? -3000.0 : FC_REAL;
        for (int where = 0; where < 3; where++) {
            ml_am_config cfg = ml_am_config_default(FS, cplx, fc, BW, AMP);
            ml_am *q = make(&cfg);
            double *e = envelope(n, ENV_TONE, 0.8, 1000.0, 0.0, 0);
            const size_t at = where == 0 ? ml_am_edge(q) : where == 1 ? n - ml_am_edge(q) - gap : n / 2;
            for (size_t i = at; i < at + gap; i++)
                e[i] = 0.0;
            double complex *z = on_carrier(e, n, AMP, fc, cplx);
            run_out o = run(q, z, NULL, n, 4096);
            ck_assert_uint_eq(o.r.reversal_events, 0);
            if (where < 2) {
                ck_assert_msg(o.r.pinch_events == 0 && o.r.off_samples == 0.0, "%s, %s: %llu pinch-offs, %g off",
                              cplx ? "iq" : "if", where ? "end" : "start", (unsigned long long)o.r.pinch_events,
                              o.r.off_samples);
            } else {
                ck_assert_uint_eq(o.r.pinch_events, 1);
                ck_assert_msg(fabs(o.r.off_samples - (double)gap) <= 48.0, "%s: %g samples off", cplx ? "iq" : "if",
                              o.r.off_samples);
            }
            free_case(&o, z, e, q);
        }
    }
}
END_TEST

/* ---- trapezoid ------------------------------------------------------------------------------ */

START_TEST(trapezoid_linear_and_quadratic)
{
    /* With the modulating tone x = cos(theta) as reference, e = A(1 + m x + k x^2).
     * Least squares e = intercept + slope x over a whole number of cycles (mean x = 0, mean x^3 =
     * 0, mean x^2 = 1/2, mean x^4 = 3/8):
     *   slope = cov(e, x) / var(x) = A (m/2 + k * 0) / (1/2) = A m;
     *   intercept = mean e = A (1 + k/2);
     *   residual = A k (x^2 - 1/2) = A (k/2) cos(2 theta), so
     *   RMS = A k sqrt(mean x^4 - 1/4) = A k sqrt(3/8 - 2/8) = A k / (2 sqrt 2).
     *   (k = 0: slope A m, intercept A, residual 0.)
     * fm = 1000 Hz = fs / 48 and the record holds a whole number of periods of envelope samples,
     * so the sample moments of cos(j theta), j = 1..4, are exactly those of the continuous tone.
     * The reference is float: rounding 2^-24 of x gives residual ~ A m 2^-24 / sqrt(3) = 5e-9 A.
     * The channel filter scales the x and x^2 (2 kHz) terms by its gain, within 1e-5 of 1 at
     * both (checked on the twin filter): slope and residual 2e-5 relative, intercept 1e-5 k A.
     * Tolerances: slope and intercept 2e-5 relative, residual 1e-4 A (k = 0) or 2e-5 relative.
     * The trap_ref_rms is the RMS of x about its mean: 1/sqrt 2, to float rounding (1e-6). */
    const double m = 0.5, fm = 1000.0;
    const double ks[] = {0.0, 0.1};
    for (size_t c = 0; c < NCARRIERS; c++) {
        for (size_t ik = 0; ik < 2; ik++) {
            const double k = ks[ik];
            ml_am_config cfg = ml_am_config_default(FS, carriers[c].cplx, carriers[c].fc, BW, AMP);
            cfg.has_reference = true;
            ck_assert_double_le(twin_gain_error(&cfg, fm), 1e-5);
            ck_assert_double_le(twin_gain_error(&cfg, 2.0 * fm), 1e-5);
            ml_am *q = make(&cfg);
            /* 1500 periods of envelope samples: a short probe gives the first input d */
            const size_t lat = ml_am_latency(q), np = 4 * lat;
            double *ep = envelope(np, ENV_TONE, 0.0, 0.0, 0.0, 0);
            double complex *zp = on_carrier(ep, np, AMP, carriers[c].fc, carriers[c].cplx);
            float *rp = tone_ref(np, fm);
            run_out op = run(q, zp, rp, np, 4096);
            const size_t d = first_input(&op, zp, np, lat);
            run_free(&op);
            free(rp);
            free(zp);
            free(ep);
            ml_am_reset(q);
            const size_t n = 2 * d + 48 * 1500;
            double *e = envelope(n, ENV_QUAD, m, fm, k, 0);
            double complex *z = on_carrier(e, n, AMP, carriers[c].fc, carriers[c].cplx);
            float *ref = tone_ref(n, fm);
            run_out o = run(q, z, ref, n, 4096);
            ck_assert_uint_eq(o.r.samples % 48, 0);
            const ml_am_result *r = &o.r;
            ck_assert(r->has_trapezoid);
            ck_assert_msg(fabs(r->trap_slope - AMP * m) <= 2e-5 * AMP * m, "carrier %zu k %g: slope %.9f A",
                          c, k, r->trap_slope / AMP);
            ck_assert_msg(fabs(r->trap_intercept - AMP * (1.0 + k / 2.0)) <= 2e-5 * AMP,
                          "carrier %zu k %g: intercept %.9f A", c, k, r->trap_intercept / AMP);
            const double res = AMP * k / (2.0 * sqrt(2.0));
            ck_assert_msg(fabs(r->trap_residual_rms - res) <= (k > 0 ? 2e-5 * res : 1e-4 * AMP),
                          "carrier %zu k %g: residual %.9g A, expected %.9g A", c, k,
                          r->trap_residual_rms / AMP, res / AMP);
            ck_assert_double_eq_tol(r->trap_ref_rms, 1.0 / sqrt(2.0), 1e-6);
            run_free(&o);
            free(ref);
            free(z);
            free(e);
            ml_am_destroy(q);
        }
    }
}
END_TEST

START_TEST(trapezoid_needs_varying_reference)
{
    /* A constant reference has no variance: no trapezoid (dsp/am.h "reference given and it
     * varied"); without a reference channel, none either. */
    ml_am_config cfg = ml_am_config_default(FS, false, FC_REAL, BW, AMP);
    cfg.has_reference = true;
    ml_am *q = make(&cfg);
    const size_t n = 20000;
    double *e = envelope(n, ENV_TONE, 0.5, 997.0, 0.0, 0);
    double complex *z = on_carrier(e, n, AMP, FC_REAL, false);
    float *ref = malloc(n * sizeof *ref);
    for (size_t i = 0; i < n; i++)
        ref[i] = 0.25f;
    run_out o = run(q, z, ref, n, 4096);
    ck_assert(!o.r.has_trapezoid);
    run_free(&o);
    free(ref);
    free(z);
    free(e);
    ml_am_destroy(q);
}
END_TEST

START_TEST(image_kept_out_above_quarter_rate)
{
    /* A real IF above fs / 4: fc = 20 kHz at 48 kHz. Mixing moves the negative-frequency half to
     * -40 kHz, folded to +8 kHz: the image's carrier lies D = min(2 fc, fs - 2 fc) = 8 kHz from
     * 0 Hz and its side frequencies (docs/references.md 6: at the carrier +- fm) reach down to
     * D - fm. dsp/am.h's rule 2 B + t <= D keeps them in the stop band. The widest channel,
     * worked out by hand: t0 = min(1000, 8000 / 40) = 200, B = (8000 - 200) / 2 = 3900, t = 200.
     * A tone at fm = 3850 Hz (50 Hz inside the channel's edge), m = 0.9: the envelope must be
     * A(1 + m g cos) [haykin:2001], g the filter's gain at fm (twin filter), sample by sample
     * within 2e-5 A beyond that (the image's remains, 100 dB down, add 1e-5 A at most), and the
     * index (emax - emin) / (emax + emin) = m g [newnes] within 1e-4; no pinch-off or reversal.
     * The same with the transition asked at 1000 Hz (2 B + t = 8800 > D): create narrows it to
     * D - 2 B = 200, so the filter and the envelope are the same. */
    const double fc = 20000.0, m = 0.9, fm = 3850.0;
    double t = 0;
    const double b = ml_am_default_bandwidth(FS, false, fc, 10000.0, &t);
    ck_assert_double_eq_tol(b, 3900.0, 1e-9);
    ck_assert_double_eq_tol(t, 200.0, 1e-9);
    ck_assert_double_eq_tol(ml_am_image_distance_hz(FS, fc), 8000.0, 1e-9);
    const size_t n = 96000;
    for (int asked = 0; asked < 2; asked++) {
        ml_am_config cfg = ml_am_config_default(FS, false, fc, b, AMP);
        cfg.transition_hz = asked ? 1000.0 : t;
        ml_am *q = make(&cfg);
        cfg.transition_hz = t; /* the filter create must have designed */
        ml_cfir *twin = twin_filter(&cfg);
        ck_assert_uint_eq(ml_am_latency(q), ml_cfir_latency(twin));
        const double g = pow(10.0, ml_cfir_response_db(twin, fm) / 20.0);
        ml_cfir_destroy(twin);
        ck_assert_double_le(fabs(1.0 - g), 1.2e-3); /* +-0.01 dB (dsp/cfir.h) */
        const size_t lat = ml_am_latency(q);
        double *e = envelope(n, ENV_TONE, m, fm, 0.0, 0);
        double complex *z = on_carrier(e, n, AMP, fc, false);
        run_out o = run(q, z, NULL, n, 4096);
        const size_t d = first_input(&o, z, n, lat);
        double worst = 0;
        for (size_t i = lat; i + lat < o.n; i++) {
            const double want = AMP * (1.0 + (e[i + d] - 1.0) * g);
            worst = fmax(worst, fabs(o.env[i] - want));
        }
        ck_assert_msg(worst <= 2e-5 * AMP, "asked %d: envelope off by %g A", asked, worst / AMP);
        const ml_am_result *r = &o.r;
        ck_assert_double_eq_tol((r->emax - r->emin) / (r->emax + r->emin), m * g, 1e-4);
        ck_assert_uint_eq(r->pinch_events, 0);
        ck_assert_uint_eq(r->reversal_events, 0);
        free_case(&o, z, e, q);
    }
}
END_TEST

static Suite *am_suite(void)
{
    Suite *s = suite_create("dsp_am");
    TCase *tc = tcase_create("am");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, config_rejection);
    tcase_add_test(tc, create_destroy_and_defaults);
    tcase_add_test(tc, latency_equals_channel_filter);
    tcase_add_test(tc, output_capacity_and_arguments);
    tcase_add_test(tc, block_invariance);
    tcase_add_test(tc, reset_returns_to_created_state);
    tcase_add_test(tc, unmodulated_carrier);
    tcase_add_test(tc, startup_transient_not_in_statistics);
    tcase_add_test(tc, tone_modulation);
    tcase_add_test(tc, lead_in_then_modulation);
    tcase_add_test(tc, pinch_off_model_b);
    tcase_add_test(tc, phase_reversal_model_a);
    tcase_add_test(tc, reversal_time_and_reading);
    tcase_add_test(tc, positive_peak_limit);
    tcase_add_test(tc, carrier_offset_followed);
    tcase_add_test(tc, troughs_cut_by_the_ends);
    tcase_add_test(tc, trapezoid_linear_and_quadratic);
    tcase_add_test(tc, trapezoid_needs_varying_reference);
    tcase_add_test(tc, image_kept_out_above_quarter_rate);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return ml_check_run(am_suite());
}
