/* Sliding-window analysis for a live meter (see dsp/monitor.h).
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [cfr73.14] 47 CFR 73.14, percentage modulation: positive 100 (MAX - C)/C, negative
 *     100 (C - MIN)/C, C = carrier amplitude without modulation.
 */
#include "dsp/monitor.h"

#include <assert.h>
#include <complex.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/am.h"
#include "dsp/carrier.h"
#include "dsp/figures.h"
#include "dsp/rf.h"
#include "dsp/spectrum.h"

#define CHUNK 4096             /* frames per demodulator push                                  */
#define QUIET_MIN_S 0.1        /* unmodulated time needed before C is taken from it (as measure) */
#define LEVEL_REFIND 2.0       /* carrier amplitude change (6 dB) that re-finds the carrier     */

struct ml_monitor {
    ml_monitor_config cfg;
    size_t cap, head, fill;    /* ring of the latest cap samples; head = next write           */
    double complex *ring;
    double complex *lin;       /* the window in time order                                    */
    double *tmp;               /* real parts / envelope scratch, CHUNK                         */
    double *psd;               /* nbins of spec                                               */
    uint64_t pushed;
    ml_spectrum *spec;         /* audio: the input; if/iq: the captured signal                 */
    /* if/iq: present once the carrier is found */
    ml_am *am;
    ml_spectrum *aud;          /* the envelope's spectrum                                      */
    ml_am_output out;
    double fc, ac, bw, f_first;
    bool have_carrier;
    unsigned finds;
    /* latest analysis, for get_columns */
    bool analysed;
    double col_lo, col_hi, col_ref;
};

ml_monitor_config ml_monitor_config_default(double rate_hz, ml_monitor_kind kind)
{
    ml_monitor_config c = {
        .rate_hz = rate_hz,
        .kind = kind,
        .window_s = 1.0,
        .window = ML_WINDOW_HFT248D,
        .audio = ml_audio_config_default(),
        .carrier_hz = NAN,
        .max_bandwidth_hz = 10000.0,
        .bandwidth_hz = 0.0,
        .peak_hold_s = 0.005,
        .positive_limit_pct = 125.0,
        .refind_hz = 50.0,
    };
    return c;
}

/* The largest power of two up to the default resolution with two segments a quarter of it apart
 * in n (the hop is nfft / 4): a window of 1 s at 48 kHz gets 32768 points (1.5 Hz bins), fine
 * enough to keep 50 Hz hum out of the flat-top window's DC lobe, and still two segments for the
 * phase-advance frequency estimate. */
static size_t nfft_for(double rate_hz, size_t n)
{
    size_t nfft = ml_spectrum_config_default(rate_hz).nfft;
    while (nfft > 256 && nfft + nfft / 4 > n)
        nfft /= 2;
    return nfft + nfft / 4 <= n ? nfft : 0;
}

static void drop_carrier(ml_monitor *q)
{
    ml_am_destroy(q->am);
    ml_spectrum_destroy(q->aud);
    free(q->out.env);
    free(q->out.in);
    free(q->out.modulated);
    memset(&q->out, 0, sizeof q->out);
    q->am = NULL;
    q->aud = NULL;
    q->have_carrier = false;
}

ml_status ml_monitor_create(const ml_monitor_config *cfg, ml_monitor **out)
{
    assert(out != NULL);
    *out = NULL;
    if (cfg == NULL || !(cfg->rate_hz > 0) || !isfinite(cfg->rate_hz) || cfg->kind < ML_MONITOR_AUDIO
        || cfg->kind > ML_MONITOR_IQ || !(cfg->window_s >= 0.1 && cfg->window_s <= 10.0)
        || cfg->window_s * cfg->rate_hz < 1024 || !(cfg->peak_hold_s > 0 && cfg->peak_hold_s < 0.5)
        || !(cfg->refind_hz > 0) || !(cfg->max_bandwidth_hz > 0) || !(cfg->bandwidth_hz >= 0))
        return ML_EINVAL;
    ml_monitor *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    q->cfg = *cfg;
    q->cap = (size_t)llround(cfg->window_s * cfg->rate_hz);
    ml_status st = ML_ENOMEM;
    q->ring = malloc(q->cap * sizeof *q->ring);
    q->lin = malloc(q->cap * sizeof *q->lin);
    q->tmp = malloc(CHUNK * sizeof *q->tmp);
    if (q->ring == NULL || q->lin == NULL || q->tmp == NULL)
        goto fail;
    ml_spectrum_config sc = ml_spectrum_config_default(cfg->rate_hz);
    sc.window = cfg->window;
    sc.nfft = nfft_for(cfg->rate_hz, q->cap);
    sc.hop = sc.nfft / 4;
    sc.complex_input = cfg->kind == ML_MONITOR_IQ;
    if (sc.nfft == 0) {
        st = ML_EINVAL;
        goto fail;
    }
    if ((st = ml_spectrum_create(&sc, &q->spec)) != ML_OK)
        goto fail;
    st = ML_ENOMEM;
    q->psd = malloc(ml_spectrum_nbins(q->spec) * sizeof *q->psd);
    if (q->psd == NULL)
        goto fail;
    *out = q;
    return ML_OK;
fail:
    ml_monitor_destroy(q);
    return st;
}

void ml_monitor_destroy(ml_monitor *q)
{
    if (q == NULL)
        return;
    drop_carrier(q);
    ml_spectrum_destroy(q->spec);
    free(q->ring);
    free(q->lin);
    free(q->tmp);
    free(q->psd);
    free(q);
}

void ml_monitor_reset(ml_monitor *q)
{
    if (q == NULL)
        return;
    q->head = q->fill = 0;
    q->pushed = 0;
    q->have_carrier = false; /* the demodulator is kept until a new carrier replaces it */
    q->finds = 0;
    q->analysed = false;
}

size_t ml_monitor_window_frames(const ml_monitor *q)
{
    return q ? q->cap : 0;
}

size_t ml_monitor_fill(const ml_monitor *q)
{
    return q ? q->fill : 0;
}

ml_status ml_monitor_push(ml_monitor *q, const float *re, const float *im, size_t n)
{
    if (q == NULL || (n > 0 && re == NULL) || (q->cfg.kind == ML_MONITOR_IQ && n > 0 && im == NULL))
        return ML_EINVAL;
    for (size_t i = 0; i < n; i++) {
        /* re + j im without CMPLX (glibc defines it for GCC only); exact for finite samples */
        q->ring[q->head] = (double)re[i] + (q->cfg.kind == ML_MONITOR_IQ ? (double)im[i] : 0.0) * I;
        q->head = q->head + 1 == q->cap ? 0 : q->head + 1;
    }
    q->pushed += n;
    q->fill = q->fill + n > q->cap ? q->cap : q->fill + n;
    return ML_OK;
}

/* Pushes n samples of the window to a spectrum (complex, or their real parts). */
static void spectrum_push(ml_monitor *q, ml_spectrum *s, const double complex *z, size_t n)
{
    if (ml_spectrum_is_complex(s)) {
        ml_spectrum_push_complex(s, z, n);
        return;
    }
    for (size_t i = 0; i < n; i += CHUNK) {
        const size_t m = n - i < CHUNK ? n - i : CHUNK;
        for (size_t j = 0; j < m; j++)
            q->tmp[j] = creal(z[i + j]);
        ml_spectrum_push_double(s, q->tmp, m);
    }
}

static void fill_audio(ml_monitor_result *r, const ml_audio_result *a, bool ok)
{
    ml_audio_figures f;
    ml_figures_audio(a, ok, &f);
    r->audio_ok = ok;
    r->fundamental_hz = f.fundamental_hz;
    r->fundamental_dbfs = f.fundamental_dbfs;
    r->thd_pct = f.thd_pct;
    r->thdn_pct = f.thdn_pct;
    r->sinad_db = f.sinad_db;
    r->snr_db = f.snr_db;
    r->hum_dbfs = f.hum_dbfs;
    r->hum_dbc = f.hum_dbc;
}

/* Finds the carrier in the window's spectrum (already pushed) and builds the demodulator. */
static ml_status find_carrier(ml_monitor *q)
{
    const double rate = q->cfg.rate_hz;
    const bool iq = q->cfg.kind == ML_MONITOR_IQ;
    const ml_carrier_config cc = ml_carrier_config_default(rate, iq, q->cfg.carrier_hz);
    ml_carrier car;
    ml_status st = ml_carrier_find(q->spec, &cc, &car);
    if (st != ML_OK || !(car.amplitude > 0))
        return ML_ENOSIGNAL;
    const double fc = car.frequency_hz, ac = car.amplitude;
    double transition = 0;
    double bw = ml_am_default_bandwidth(rate, iq, fc, q->cfg.max_bandwidth_hz, &transition);
    if (q->cfg.bandwidth_hz > 0 && q->cfg.bandwidth_hz < bw) {
        bw = q->cfg.bandwidth_hz;
        transition = fmin(transition, 0.25 * bw);
    }
    if (bw <= 0)
        return ML_ENOSIGNAL;
    drop_carrier(q);
    ml_am_config ac_cfg = ml_am_config_default(rate, iq, fc, bw, ac);
    ac_cfg.transition_hz = transition;
    ac_cfg.hold_s = q->cfg.peak_hold_s;
    ac_cfg.positive_limit_pct = q->cfg.positive_limit_pct;
    if ((st = ml_am_create(&ac_cfg, &q->am)) != ML_OK)
        return st;
    const size_t env_n = q->cap > 2 * ml_am_edge(q->am) ? q->cap - 2 * ml_am_edge(q->am) : 0;
    ml_spectrum_config sc = ml_spectrum_config_default(rate);
    sc.window = q->cfg.window;
    sc.nfft = nfft_for(rate, env_n);
    sc.hop = sc.nfft / 4;
    if (sc.nfft == 0) {
        drop_carrier(q);
        return ML_ENOSIGNAL;
    }
    if ((st = ml_spectrum_create(&sc, &q->aud)) != ML_OK) {
        drop_carrier(q);
        return st;
    }
    q->out.cap = ml_am_output_cap(q->am, CHUNK);
    q->out.env = malloc(q->out.cap * sizeof *q->out.env);
    q->out.in = malloc(q->out.cap * sizeof *q->out.in);
    q->out.modulated = malloc(q->out.cap);
    if (q->out.env == NULL || q->out.in == NULL || q->out.modulated == NULL) {
        drop_carrier(q);
        return ML_ENOMEM;
    }
    if (q->finds == 0)
        q->f_first = fc;
    q->fc = fc;
    q->ac = ac;
    q->bw = bw;
    q->have_carrier = true;
    q->finds++;
    return ML_OK;
}

/* Envelope output to the spectra: the input samples to the captured signal's, the envelope in
 * units of the provisional carrier to the audio's. */
static void feed(ml_monitor *q, size_t n, double inv_c)
{
    spectrum_push(q, q->spec, q->out.in, n);
    for (size_t i = 0; i < n; i++)
        q->out.env[i] *= inv_c;
    ml_spectrum_push_double(q->aud, q->out.env, n);
}

static ml_status analyse_modulation(ml_monitor *q, ml_monitor_result *r)
{
    const double rate = q->cfg.rate_hz;
    if (!q->have_carrier) {
        ml_spectrum_reset(q->spec);
        spectrum_push(q, q->spec, q->lin, q->cap);
        ml_status st = find_carrier(q);
        if (st != ML_OK)
            return st;
    }
    ml_spectrum_reset(q->spec);
    ml_spectrum_reset(q->aud);
    ml_am_reset(q->am);
    const double inv_c = 1.0 / q->ac;
    size_t nout = 0;
    for (size_t i = 0; i < q->cap; i += CHUNK) {
        const size_t m = q->cap - i < CHUNK ? q->cap - i : CHUNK;
        ml_am_push(q->am, q->lin + i, NULL, m, &q->out, &nout);
        feed(q, nout, inv_c);
    }
    ml_am_finish(q->am, &q->out, &nout);
    feed(q, nout, inv_c);
    ml_am_result ar;
    if (ml_am_get_result(q->am, &ar) != ML_OK)
        return ML_ENOSIGNAL;
    const double c = (double)ar.quiet_samples >= QUIET_MIN_S * rate ? ar.mean_quiet : ar.mean_all;
    if (!(c > 0))
        return ML_ENOSIGNAL;
    ml_spectrum_scale(q->aud, q->ac / c);

    ml_audio_config acfg = q->cfg.audio;
    acfg.band_hi_hz = fmin(acfg.band_hi_hz, q->bw);
    ml_audio_result au;
    bool aok = false;
    if (acfg.band_lo_hz < acfg.band_hi_hz
        && !(acfg.tone_hz > 0 && (acfg.tone_hz < acfg.band_lo_hz || acfg.tone_hz > acfg.band_hi_hz)))
        aok = ml_audio_analyze(q->aud, &acfg, &au) == ML_OK;
    if (!aok)
        memset(&au, 0, sizeof au);
    fill_audio(r, &au, aok);

    const double lh = (double)ml_spectrum_lobe_bins(q->spec) * rate / (double)ml_spectrum_nfft(q->spec);
    double f_car = q->fc, a_car = 0;
    if (ml_rf_find_peak(q->spec, q->fc - lh, q->fc + lh, &f_car, &a_car) != ML_OK)
        a_car = 0;
    const double p_car = a_car * a_car * ml_spectrum_full_scale_power(q->spec);
    /* the same figures as the measure command's [cfr73.14] */
    const double emax = ar.emax;
    const double emin = ar.pinch_events + ar.reversal_events > 0 ? fmin(ar.emin, ar.emin_abs) : ar.emin;
    r->carrier_ok = a_car > 0;
    r->carrier_hz = f_car;
    r->carrier_offset_hz = f_car - (isnan(q->cfg.carrier_hz) ? q->f_first : q->cfg.carrier_hz);
    r->carrier_dbfs = a_car > 0 ? 20 * log10(a_car) : NAN;
    r->bandwidth_hz = q->bw;
    r->cnr_db = a_car > 0 ? ml_rf_cnr_db(q->spec, f_car, p_car, q->bw, aok ? au.fundamental_hz : 0,
                                          acfg.harmonics, aok ? au.mains_hz : 0, acfg.hum_harmonics)
                          : NAN;
    r->index = emax + emin > 0 ? (emax - emin) / (emax + emin) : NAN;
    r->positive_peak_pct = 100 * (emax - c) / c;
    r->negative_peak_pct = 100 * (c - emin) / c;
    r->envelope_thd_pct = r->thd_pct;
    r->mod_hum_db = r->hum_dbfs;
    r->pinch_events = ar.pinch_events + ar.reversal_events;
    r->positive_over = ar.positive_over;
    q->col_lo = f_car - q->bw;
    q->col_hi = f_car + q->bw;
    q->col_ref = p_car > 0 ? p_car : ml_spectrum_full_scale_power(q->spec);
    /* a carrier that moved or changed level a lot is found again at the next analysis */
    if (fabs(f_car - q->fc) > q->cfg.refind_hz || !(a_car > q->ac / LEVEL_REFIND && a_car < q->ac * LEVEL_REFIND))
        q->have_carrier = false;
    return r->carrier_ok ? ML_OK : ML_ENOSIGNAL;
}

static ml_status analyse_audio(ml_monitor *q, ml_monitor_result *r)
{
    ml_spectrum_reset(q->spec);
    spectrum_push(q, q->spec, q->lin, q->cap);
    double ms = 0;
    for (size_t i = 0; i < q->cap; i++)
        ms += creal(q->lin[i]) * creal(q->lin[i]);
    r->rms_dbfs = ml_power_dbfs(ms / (double)q->cap);
    ml_audio_config acfg = q->cfg.audio;
    acfg.band_hi_hz = fmin(acfg.band_hi_hz, q->cfg.rate_hz / 2);
    ml_audio_result au;
    ml_status st = ML_EINVAL;
    if (acfg.band_lo_hz < acfg.band_hi_hz)
        st = ml_audio_analyze(q->spec, &acfg, &au);
    if (st != ML_OK)
        memset(&au, 0, sizeof au);
    fill_audio(r, &au, st == ML_OK);
    q->col_lo = fmax(acfg.band_lo_hz, 1.0);
    q->col_hi = acfg.band_hi_hz;
    q->col_ref = ml_spectrum_full_scale_power(q->spec);
    return st == ML_ENOMEM ? st : ML_OK;
}

ml_status ml_monitor_analyse(ml_monitor *q, ml_monitor_result *out)
{
    if (q == NULL || out == NULL)
        return ML_EINVAL;
    const double nan = NAN;
    ml_monitor_result r = {.window_s = (double)q->cap / q->cfg.rate_hz, .analysed_frames = q->pushed,
                           .rms_dbfs = nan, .fundamental_hz = nan, .fundamental_dbfs = nan, .thd_pct = nan,
                           .thdn_pct = nan, .sinad_db = nan, .snr_db = nan, .hum_dbfs = nan, .hum_dbc = nan,
                           .carrier_hz = nan, .carrier_offset_hz = nan, .carrier_dbfs = nan,
                           .bandwidth_hz = nan, .cnr_db = nan, .index = nan, .positive_peak_pct = nan,
                           .negative_peak_pct = nan, .envelope_thd_pct = nan, .mod_hum_db = nan};
    ml_status st = ML_ENOSIGNAL;
    if (q->fill == q->cap) {
        /* the window in time order: the oldest sample sits at head */
        memcpy(q->lin, q->ring + q->head, (q->cap - q->head) * sizeof *q->lin);
        memcpy(q->lin + (q->cap - q->head), q->ring, q->head * sizeof *q->lin);
        st = q->cfg.kind == ML_MONITOR_AUDIO ? analyse_audio(q, &r) : analyse_modulation(q, &r);
        q->analysed = st == ML_OK;
    }
    r.carrier_finds = q->finds;
    *out = r;
    return st;
}

ml_status ml_monitor_get_columns(const ml_monitor *q, double *db, size_t ncols, double *lo_hz, double *hi_hz)
{
    if (q == NULL || db == NULL || ncols == 0 || lo_hz == NULL || hi_hz == NULL)
        return ML_EINVAL;
    if (!q->analysed)
        return ML_ENOSIGNAL;
    const size_t nbins = ml_spectrum_nbins(q->spec);
    if (ml_spectrum_get_psd(q->spec, q->psd, nbins) != ML_OK)
        return ML_ENOSIGNAL;
    const bool logf = q->cfg.kind == ML_MONITOR_AUDIO;
    const double lo = q->col_lo, hi = q->col_hi, bin = q->cfg.rate_hz / (double)ml_spectrum_nfft(q->spec);
    const size_t nfft = ml_spectrum_nfft(q->spec);
    for (size_t c = 0; c < ncols; c++) {
        const double u0 = (double)c / (double)ncols, u1 = (double)(c + 1) / (double)ncols;
        const double f0 = logf ? lo * pow(hi / lo, u0) : lo + (hi - lo) * u0;
        const double f1 = logf ? lo * pow(hi / lo, u1) : lo + (hi - lo) * u1;
        /* every bin whose centre lies in [f0, f1), or the one nearest the column's middle */
        long k0 = lround(ceil(f0 / bin)), k1 = lround(floor(f1 / bin));
        if (k1 < k0)
            k0 = k1 = lround(0.5 * (f0 + f1) / bin);
        double p = 0;
        for (long k = k0; k <= k1; k++) {
            long kk = k;
            if (ml_spectrum_is_complex(q->spec)) {
                kk = ((k % (long)nfft) + (long)nfft) % (long)nfft; /* negative frequencies */
            } else if (k < 0 || (size_t)k >= nbins) {
                continue;
            }
            p = fmax(p, q->psd[kk]);
        }
        db[c] = p > 0 ? 10 * log10(p / q->col_ref) : -300.0;
    }
    *lo_hz = lo;
    *hi_hz = hi;
    return ML_OK;
}
