/* Sliding-window analysis for a live meter (see dsp/monitor.h).
 * SPDX-License-Identifier: MIT
 */
#include "dsp/monitor.h"

#include <assert.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/carrier.h"
#include "dsp/channels.h"
#include "dsp/resolution.h"
#include "dsp/spectrum.h"
#include "dsp/stats.h"

#define CHUNK 4096             /* frames per push into the modulation analysis                 */
#define LEVEL_REFIND 2.0       /* carrier amplitude change (6 dB) that re-finds the carrier     */
#define BLOCK_S 0.02           /* blocks whose power is compared (gap_s)                        */
#define GAP_REL 0.01           /* a block 20 dB below the strongest is a gap                    */
#define EDGE_S 0.005           /* the window's edges checked apart (gap_s)                      */
#define EDGE_REL 0.001         /* an edge 30 dB below the strongest block is a gap (a 50 Hz tone
                                  at 100 % has 5 ms around its trough 19.3 dB below its block)    */

struct ml_monitor {
    ml_monitor_config cfg;
    size_t width;              /* floats per frame: 2 for iq, else 1                           */
    size_t cap, head, fill;    /* ring of the latest cap frames; head = next write             */
    float *ring;
    float *lin;                /* the window in time order                                    */
    double *psd;               /* nbins of spec                                               */
    double *bpow;              /* power of each 20 ms block of the window (gap_s)              */
    uint64_t pushed;
    ml_spectrum *spec;         /* audio: the input; if/iq: the window, to find the carrier      */
    /* if/iq: present once the carrier is found */
    ml_modulation *mod;
    double fc, ac;             /* the carrier as found                                        */
    bool have_carrier;
    unsigned finds;
    double reference_c;        /* set_reference's C, or NAN                                   */
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
    q->reference_c = NAN;
    q->width = cfg->kind == ML_MONITOR_IQ ? 2 : 1;
    q->cap = (size_t)llround(cfg->window_s * cfg->rate_hz);
    ml_status st = ML_ENOMEM;
    q->ring = malloc(q->cap * q->width * sizeof *q->ring);
    q->lin = malloc(q->cap * q->width * sizeof *q->lin);
    q->bpow = malloc((q->cap / (size_t)llround(BLOCK_S * cfg->rate_hz) + 1) * sizeof *q->bpow);
    if (q->ring == NULL || q->lin == NULL || q->bpow == NULL)
        goto fail;
    ml_spectrum_config sc = ml_spectrum_config_default(cfg->rate_hz);
    sc.window = cfg->window;
    sc.nfft = ml_resolution_nfft(cfg->rate_hz, (int64_t)q->cap, ML_RESOLUTION_WINDOW);
    sc.hop = ml_resolution_hop(sc.nfft, ML_RESOLUTION_WINDOW);
    sc.complex_input = cfg->kind == ML_MONITOR_IQ;
    if (sc.nfft == 0) {
        st = ML_EINVAL;
        goto fail;
    }
    if ((st = ml_spectrum_create(&sc, &q->spec)) != ML_OK)
        goto fail;
    st = ML_ENOMEM;
    /* the largest spectrum shown: the window's, or the modulation analysis' (same length) */
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
    ml_modulation_destroy(q->mod);
    ml_spectrum_destroy(q->spec);
    free(q->ring);
    free(q->lin);
    free(q->psd);
    free(q->bpow);
    free(q);
}

void ml_monitor_reset(ml_monitor *q)
{
    if (q == NULL)
        return;
    q->head = q->fill = 0;
    q->pushed = 0;
    q->have_carrier = false; /* the analysis object is kept until a new carrier replaces it */
    q->finds = 0;
    q->analysed = false;
    if (q->mod)
        ml_modulation_set_reference(q->mod, q->reference_c);
}

ml_status ml_monitor_set_reference(ml_monitor *q, double c)
{
    if (q == NULL || !(isnan(c) || (c > 0 && isfinite(c))))
        return ML_EINVAL;
    q->reference_c = c;
    return q->mod ? ml_modulation_set_reference(q->mod, c) : ML_OK;
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
        float *f = q->ring + q->width * q->head;
        f[0] = re[i];
        if (q->width == 2)
            f[1] = im[i];
        q->head = q->head + 1 == q->cap ? 0 : q->head + 1;
    }
    q->pushed += n;
    q->fill = q->fill + n > q->cap ? q->cap : q->fill + n;
    return ML_OK;
}

/* The window's frames to its spectrum. */
static void window_spectrum(ml_monitor *q)
{
    ml_spectrum_reset(q->spec);
    if (q->width == 2)
        ml_spectrum_push_complex_float_tagged(q->spec, q->lin, NULL, q->cap);
    else
        ml_spectrum_push(q->spec, q->lin, q->cap);
}

/* Finds the carrier in the window's spectrum (dsp/carrier.h) and builds the modulation analysis
 * around it. */
static ml_status find_carrier(ml_monitor *q)
{
    const double rate = q->cfg.rate_hz;
    const bool iq = q->cfg.kind == ML_MONITOR_IQ;
    window_spectrum(q);
    ml_carrier_config cc = ml_carrier_config_default(rate, iq, q->cfg.carrier_hz);
    cc.min_prominence_db = ML_MODULATION_MIN_PROMINENCE_DB; /* a window of noise holds no carrier */
    ml_carrier car;
    if (ml_carrier_find(q->spec, &cc, &car) != ML_OK || !(car.amplitude > 0))
        return ML_ENOSIGNAL;
    double bw, transition;
    ml_status st = ml_modulation_channel(rate, iq, car.frequency_hz, q->cfg.bandwidth_hz,
                                         q->cfg.max_bandwidth_hz, &bw, &transition);
    if (bw <= 0)
        return ML_ENOSIGNAL;
    ml_channels ch;
    ml_channels_map(iq ? 2 : 1, 1, iq, false, 0, &ch);
    ml_modulation_config mc = ml_modulation_config_default(rate, &ch, car.frequency_hz, car.amplitude,
                                                           (int64_t)q->cap);
    mc.bandwidth_hz = st == ML_OK ? bw : 0; /* a request wider than fits: the widest */
    mc.max_bandwidth_hz = q->cfg.max_bandwidth_hz;
    mc.peak_hold_s = q->cfg.peak_hold_s;
    mc.positive_limit_pct = q->cfg.positive_limit_pct;
    mc.window = q->cfg.window;
    mc.audio = q->cfg.audio;
    mc.resolution = ML_RESOLUTION_WINDOW;
    mc.latch = true;
    mc.max_batch_frames = CHUNK;
    ml_modulation_destroy(q->mod); /* a new carrier: a new analysis, and no latched C */
    q->mod = NULL;
    if ((st = ml_modulation_create(&mc, &q->mod)) != ML_OK)
        return st == ML_ENOSIGNAL ? ML_ENOSIGNAL : st;
    ml_modulation_set_reference(q->mod, q->reference_c);
    q->fc = car.frequency_hz;
    q->ac = car.amplitude;
    q->have_carrier = true;
    q->finds++;
    return ML_OK;
}

/* Time in 20 ms blocks of the window whose power lies more than GAP_DB below the strongest
 * block's, and a block's time for each edge of EDGE_S 30 dB below it: the signal comes or goes
 * within the window (a modulated carrier's blocks differ by a few dB at most: 1 + m cos averaged
 * over 20 ms for tones from 25 Hz up). */
static double gap_s(const ml_monitor *q)
{
    const size_t len = (size_t)llround(BLOCK_S * q->cfg.rate_hz), w = q->width;
    double pmax = 0;
    size_t nb = q->cap / len;
    for (size_t b = 0; b < nb; b++) {
        double p = 0;
        for (size_t i = b * len * w; i < (b + 1) * len * w; i++)
            p += (double)q->lin[i] * q->lin[i];
        q->bpow[b] = p;
        pmax = p > pmax ? p : pmax;
    }
    size_t gaps = 0;
    for (size_t b = 0; b < nb; b++)
        gaps += !(q->bpow[b] >= pmax * GAP_REL);
    if (!(pmax > 0))
        return (double)q->cap / q->cfg.rate_hz;
    /* the window's first and last EDGE_S (the peak hold's 5 ms: less moves no held reading)
     * against the strongest block at the same power per frame: the signal comes or goes at an
     * edge, within a block */
    const size_t el = (size_t)llround(EDGE_S * q->cfg.rate_hz);
    if (el > 0 && el <= q->cap) {
        double ph = 0, pt = 0;
        for (size_t i = 0; i < el * w; i++) {
            ph += (double)q->lin[i] * q->lin[i];
            pt += (double)q->lin[(q->cap - el) * w + i] * q->lin[(q->cap - el) * w + i];
        }
        const double lim = pmax * EDGE_REL * (double)el / (double)len;
        gaps += !(ph >= lim) + !(pt >= lim);
    }
    return (double)(gaps * len) / q->cfg.rate_hz;
}

static ml_status analyse_modulation(ml_monitor *q, ml_monitor_result *r)
{
    /* a window the signal leaves or enters holds no carrier throughout: not analysed (its
     * figures would mix the carrier with what is left without it), and no carrier is found in it */
    r->gap_s = gap_s(q);
    if (r->gap_s > 0)
        return ML_ENOSIGNAL;
    if (!q->have_carrier) {
        ml_status st = find_carrier(q);
        if (st != ML_OK)
            return st;
    }
    ml_modulation_reset(q->mod);
    for (size_t i = 0; i < q->cap; i += CHUNK)
        ml_modulation_push(q->mod, q->lin + q->width * i, q->cap - i < CHUNK ? q->cap - i : CHUNK);
    ml_modulation_finish(q->mod);
    ml_modulation_result *m = &r->modulation;
    const ml_status st = ml_modulation_get_result(q->mod, m);
    const double a_car = m->carrier_amplitude;
    r->carrier_ok = st == ML_OK && a_car > 0;
    if (st != ML_OK) {
        /* the carrier went (no line stands out of the noise): find it afresh next time */
        q->have_carrier = false;
        return ML_ENOSIGNAL;
    }
    r->audio_ok = m->audio_valid;
    r->audio = m->audio;
    const double p_car = a_car * a_car * ml_spectrum_full_scale_power(ml_modulation_get_spectrum(q->mod));
    q->col_lo = m->carrier_hz - m->bandwidth_hz;
    q->col_hi = m->carrier_hz + m->bandwidth_hz;
    q->col_ref = p_car > 0 ? p_car : ml_spectrum_full_scale_power(q->spec);
    /* a carrier that moved or changed level a lot is found again at the next analysis */
    if (fabs(m->carrier_hz - q->fc) > q->cfg.refind_hz
        || !(a_car > q->ac / LEVEL_REFIND && a_car < q->ac * LEVEL_REFIND))
        q->have_carrier = false;
    return r->carrier_ok ? ML_OK : ML_ENOSIGNAL;
}

static ml_status analyse_audio(ml_monitor *q, ml_monitor_result *r)
{
    window_spectrum(q);
    ml_stats s;
    ml_stats_init(&s, 24);
    ml_stats_push(&s, q->lin, q->cap);
    ml_level_figures lv;
    ml_figures_level(&s, 1, &lv);
    r->rms_dbfs = lv.rms_dbfs;
    r->peak_dbfs = lv.peak_dbfs;
    r->clipped = lv.clipped;
    ml_audio_config acfg = q->cfg.audio;
    acfg.band_hi_hz = fmin(acfg.band_hi_hz, q->cfg.rate_hz / 2);
    ml_audio_result au;
    ml_status st = ML_EINVAL;
    if (acfg.band_lo_hz < acfg.band_hi_hz)
        st = ml_audio_analyze(q->spec, &acfg, &au);
    r->audio_ok = st == ML_OK;
    ml_figures_audio(&au, r->audio_ok, &r->audio);
    if (r->audio_ok)
        ml_bench_noise(q->spec, &au, NULL, &r->noise);
    q->col_lo = fmax(acfg.band_lo_hz, 1.0);
    q->col_hi = acfg.band_hi_hz;
    q->col_ref = ml_spectrum_full_scale_power(q->spec);
    return st == ML_ENOMEM ? st : ML_OK;
}

/* A result with nothing measured. */
static void empty_result(const ml_monitor *q, ml_monitor_result *r)
{
    const double nan = NAN;
    memset(r, 0, sizeof *r);
    r->window_s = (double)q->cap / q->cfg.rate_hz;
    r->analysed_frames = q->pushed;
    r->rms_dbfs = r->peak_dbfs = nan;
    ml_figures_audio_none(&r->audio);
    ml_bench_noise_none(&r->noise);
    ml_modulation_result *m = &r->modulation;
    m->carrier_hz = m->carrier_amplitude = m->carrier_level_dbfs = m->c = m->unmodulated_dbfs = nan;
    m->cnr_db = m->cnr_bandwidth_hz = m->bandwidth_hz = m->index = m->index_spectral = nan;
    m->positive_peak_pct = m->negative_peak_pct = m->carrier_shift_pct = m->overmodulation_pct = nan;
    m->sideband_asymmetry_db = m->trapezoid_deviation_pct = m->occupied_bandwidth_hz = nan;
    m->emax_rel = m->emin_rel = nan;
    m->positive_peak_held_pct = m->carrier_off_pct = m->carrier_prominence_db = nan;
    m->absent_s = 0;
    m->noise_pct = m->floor_pct = m->reversal_pct = m->held_noise_pct = m->top_noise_pct = nan;
    ml_figures_audio_none(&m->audio);
}

ml_status ml_monitor_analyse(ml_monitor *q, ml_monitor_result *out)
{
    if (q == NULL || out == NULL)
        return ML_EINVAL;
    ml_monitor_result r;
    empty_result(q, &r);
    ml_status st = ML_ENOSIGNAL;
    if (q->fill == q->cap) {
        /* the window in time order: the oldest frame sits at head */
        const size_t w = q->width;
        memcpy(q->lin, q->ring + w * q->head, (q->cap - q->head) * w * sizeof *q->lin);
        memcpy(q->lin + w * (q->cap - q->head), q->ring, q->head * w * sizeof *q->lin);
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
    const ml_spectrum *s = q->cfg.kind == ML_MONITOR_AUDIO ? q->spec : ml_modulation_get_spectrum(q->mod);
    const size_t nbins = ml_spectrum_nbins(s);
    if (nbins > ml_spectrum_nbins(q->spec) || ml_spectrum_get_psd(s, q->psd, nbins) != ML_OK)
        return ML_ENOSIGNAL;
    const bool logf = q->cfg.kind == ML_MONITOR_AUDIO;
    const double lo = q->col_lo, hi = q->col_hi, bin = q->cfg.rate_hz / (double)ml_spectrum_nfft(s);
    const size_t nfft = ml_spectrum_nfft(s);
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
            if (ml_spectrum_is_complex(s)) {
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
