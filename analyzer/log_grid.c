/* The log's time grid: intervals (one row each) cut into K steps; per-step spectra feed the
 * change detectors, the interval accumulates levels and spectra, and for if/iq the interval is
 * one span of the modulation analysis (dsp/modulation.h: measure's figures of that interval).
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "analyzer/log_internal.h"
#include "dsp/carrier.h"
#include "dsp/figures.h"
#include "dsp/noisefloor.h"
#include "dsp/resolution.h"
#include "dsp/rf.h"

double ml_log_offset_of(const ml_logger *L, int64_t pos)
{
    return L->offset0_s + (double)pos / L->rate;
}

int64_t ml_log_pos_of(const ml_logger *L, double offset_s)
{
    return (int64_t)llround((offset_s - L->offset0_s) * L->rate);
}

/* The change detectors: hum over floor (not for iq), noise floor, carrier loss (if/iq), the
 * broadband level. */
static ml_status make_detectors(ml_logger *L)
{
    const ml_log_opts *o = L->o;
    const double step_rate = (double)L->steps_per_ival / o->interval_s;
    const double thr[ML_LOG_NCHG] = {o->hum_db, o->noise_db, o->loss_db, o->level_db};
    for (int w = 0; w < ML_LOG_NCHG; w++) {
        L->chg_peak[w] = L->chg_old_start[w] = L->chg_old_in[w] = NAN;
        if ((w == ML_CHG_HUM && L->is_complex) || (w == ML_CHG_CARRIER && !L->is_if && !L->is_complex))
            continue;
        ml_change_config cc = ml_change_config_default(step_rate, w == ML_CHG_CARRIER ? -1 : 1, thr[w]);
        cc.min_s = w == ML_CHG_CARRIER ? 0.5 : 1.0;
        if (cc.baseline_s * step_rate < 1)
            cc.baseline_s = 1.0 / step_rate;
        if (cc.warmup_s > cc.baseline_s)
            cc.warmup_s = cc.baseline_s;
        ml_status st = ml_change_create(&cc, &L->chg[w]);
        if (st != ML_OK)
            return st;
    }
    return ML_OK;
}

ml_status ml_log_make_objects(ml_logger *L)
{
    const double rate = L->rate;
    ml_aweight_config ac = ml_aweight_config_default(rate);
    ml_status st = ml_aweight_create(&ac, &L->aw);
    if (st != ML_OK || (st = ml_log_listen_create(L)) != ML_OK)
        return st;
    /* steps: the power of two <= rate/5 and <= the interval; K steps tile each interval */
    size_t nfft = 256;
    while ((double)(nfft * 2) <= rate / 5 && (int64_t)(nfft * 2) <= L->ival_frames)
        nfft *= 2;
    if ((int64_t)nfft > L->ival_frames)
        return ML_EINVAL;
    L->steps_per_ival = (size_t)(L->ival_frames / (int64_t)nfft);
    L->step_len = L->ival_frames / (int64_t)L->steps_per_ival;
    ml_spectrum_config sc = ml_spectrum_config_default(rate);
    sc.nfft = nfft;
    sc.hop = nfft / 2;
    sc.window = ML_WINDOW_HANN; /* narrow lobe: 50 Hz hum resolved with a short step */
    sc.complex_input = L->is_complex;
    if ((st = ml_spectrum_create(&sc, &L->spec)) != ML_OK || (st = make_detectors(L)) != ML_OK)
        return st;
    if (!L->is_complex && !L->mains_given) {
        /* the mains vote: measure's transform for a capture of an interval's length */
        ml_audio_plan plan;
        if ((st = ml_audio_plan_transform(rate, L->ival_frames, L->o->an.window, 0, &plan)) != ML_OK
            || (st = ml_spectrum_create(&plan.spectrum, &L->mspec)) != ML_OK)
            return st;
    }
    L->nbins = ml_spectrum_nbins(L->spec);
    ml_stats_init(&L->st, L->info->bits >= 2 && L->info->bits <= 32 ? L->info->bits : 24);
    L->psd = calloc(L->nbins, sizeof *L->psd);
    L->psd_sum = calloc(L->nbins, sizeof *L->psd_sum);
    L->scratch = calloc(L->nbins, sizeof *L->scratch);
    L->buf = malloc(ML_LOG_BLOCK * L->ch.stride * sizeof *L->buf);
    L->mono = malloc(ML_LOG_BLOCK * sizeof *L->mono);
    L->aout = malloc(ML_LOG_BLOCK * sizeof *L->aout);
    L->pairs = malloc(2 * ML_LOG_BLOCK * sizeof *L->pairs);
    L->ev = malloc(ML_LOG_EV_CAP * sizeof *L->ev);
    if (!L->psd || !L->psd_sum || !L->scratch || !L->buf || !L->mono || !L->aout || !L->pairs || !L->ev)
        return ML_ENOMEM;
    return ML_OK;
}

void ml_log_free_objects(ml_logger *L)
{
    ml_aweight_destroy(L->aw);
    ml_log_listen_destroy(L);
    for (int w = 0; w < ML_LOG_NCHG; w++)
        ml_change_destroy(L->chg[w]);
    ml_spectrum_destroy(L->spec);
    ml_spectrum_destroy(L->mspec);
    ml_modulation_destroy(L->mod);
    free(L->psd);
    free(L->psd_sum);
    free(L->scratch);
    free(L->buf);
    free(L->mono);
    free(L->aout);
    free(L->pairs);
    free(L->ev);
    ml_logfile_close(L->rows);
    ml_logfile_close(L->events);
    ml_history_destroy(L->sgram);
    ml_output_set_destroy(L->plot_set);
    free(L->rows_path);
    free(L->events_path);
    free(L->state_path);
    free(L->meta);
    free(L->seen);
    free(L->row_a);
    free(L->row_b);
    free(L->snap);
    free(L->tmp);
    free(L->state_text);
}

void ml_log_reset_interval(ml_logger *L)
{
    ml_stats_reset(&L->st);
    L->asum = 0;
    L->data_frames = L->lost_frames = 0;
    L->impulses = 0;
    memset(L->psd_sum, 0, L->nbins * sizeof *L->psd_sum);
    L->nspectra = L->nsegments = 0;
    L->note[0] = '\0';
    if (L->mspec)
        ml_spectrum_reset(L->mspec);
}

/* ---- the modulation analysis of an interval ---------------------------------------------------- */

void ml_log_set_carrier(ml_logger *L, double hz, double amplitude)
{
    L->carrier_hz = hz;
    L->carrier_amp = amplitude;
    ml_log_listen_setup(L);
}

/* The analysis for the carrier found, once (an interval too short for the channel filter, or a
 * carrier too near the band's edge, leaves the modulation columns empty). */
static void make_modulation(ml_logger *L)
{
    if (L->mod || L->mod_failed || isnan(L->carrier_hz) || !(L->carrier_amp > 0))
        return;
    const ml_log_opts *o = L->o;
    ml_modulation_config mc = ml_modulation_config_default(L->rate, &L->ch, L->carrier_hz, L->carrier_amp,
                                                           L->ival_frames);
    mc.bandwidth_hz = o->an.bandwidth_hz;
    mc.peak_hold_s = o->an.peak_hold_ms / 1000.0;
    mc.window = o->an.window;
    mc.audio = o->an.audio;
    mc.resolution = ML_RESOLUTION_WINDOW;
    mc.latch = true; /* C from an unmodulated stretch the log hears, until a later one */
    mc.single_precision = true; /* as measure; the run sets samples beyond +-1e30 to 0 (log.c) */
    mc.max_batch_frames = ML_LOG_BLOCK;
    if (ml_modulation_create(&mc, &L->mod) != ML_OK) {
        L->mod_failed = true;
        return;
    }
    ml_modulation_set_reference(L->mod, L->reference_c);
}

void ml_log_start_modulation(ml_logger *L)
{
    make_modulation(L);
    L->mod_span = L->mod != NULL;
}

/* The interval's modulation figures (or NULL when it was not analysed as a whole). */
static const ml_modulation_result *end_span(ml_logger *L, ml_modulation_result *r)
{
    const bool ok =
        L->mod_span && ml_modulation_finish(L->mod) == ML_OK && ml_modulation_get_result(L->mod, r) == ML_OK;
    if (L->mod)
        ml_modulation_reset(L->mod);
    make_modulation(L);
    L->mod_span = L->mod != NULL;
    return ok ? r : NULL;
}

/* ---- steps ----------------------------------------------------------------------------------- */

/* Hum over the floor: until the mains frequency is known, the larger of the 50 and 60 Hz figures. */
static void hum_value(const ml_logger *L, double fl, double *value, double *level)
{
    const double cand[2] = {50.0, 60.0};
    for (int j = 0; j < 2; j++) {
        double over, hum;
        if ((L->mains_hz > 0 && cand[j] != L->mains_hz)
            || ml_noisefloor_hum_over(L->spec, L->psd, L->nbins, cand[j], ML_LOG_HUM_N, fl, &over, &hum)
                   != ML_OK)
            continue;
        if (isnan(*value) || over > *value) {
            *value = over;
            *level = hum;
        }
    }
}

/* The carrier line's level in the step (carrier loss); finds the carrier when not known yet. */
static double carrier_value(ml_logger *L)
{
    if (isnan(L->carrier_hz)) {
        const ml_carrier_config cc = ml_carrier_config_default(L->rate, L->is_complex, L->o->an.carrier_hz);
        ml_carrier car;
        if (ml_carrier_find(L->spec, &cc, &car) != ML_OK)
            return NAN;
        ml_log_set_carrier(L, car.frequency_hz, car.amplitude);
    }
    const double a = ml_rf_amplitude(L->spec, L->carrier_hz);
    return 20.0 * log10(fmax(a, 1e-150));
}

/* End of a step: one value per change detector (NaN without a complete spectrum). */
static int step_done(ml_logger *L)
{
    double value[ML_LOG_NCHG] = {NAN, NAN, NAN, NAN}, level[ML_LOG_NCHG] = {NAN, NAN, NAN, NAN};
    /* the broadband level: the mean square of the second difference of what the listener heard
     * in the step (events report the step's plain level) */
    if (L->hf_n > 0 && L->hf_sum > 0)
        value[ML_CHG_LEVEL] = ml_power_dbfs(L->hf_sum / (double)L->hf_n);
    if (L->step_n > 0 && L->step_sumsq > 0)
        level[ML_CHG_LEVEL] = ml_power_dbfs(L->step_sumsq / (double)L->step_n);
    L->hf_sum = 0;
    L->hf_n = 0;
    if (ml_spectrum_segments(L->spec) > 0 && ml_spectrum_get_psd(L->spec, L->psd, L->nbins) == ML_OK) {
        for (size_t k = 0; k < L->nbins; k++)
            L->psd_sum[k] += L->psd[k];
        L->nspectra++;
        L->nsegments += ml_spectrum_segments(L->spec);
        size_t lo, hi;
        ml_noisefloor_band(L->spec, &lo, &hi);
        const double fl = ml_noisefloor_dbfs_hz(L->spec, L->psd, lo, hi, L->scratch);
        value[1] = fl;
        level[1] = L->step_n > 0 ? ml_power_dbfs(L->step_sumsq / (double)L->step_n) : NAN;
        if (!L->is_complex)
            hum_value(L, fl, &value[ML_CHG_HUM], &level[ML_CHG_HUM]);
        if (L->is_if || L->is_complex)
            level[ML_CHG_CARRIER] = value[ML_CHG_CARRIER] = carrier_value(L);
    }
    ml_spectrum_reset(L->spec);
    L->step_sumsq = 0;
    L->step_n = 0;
    return ml_log_push_changes(L, value, level);
}

/* ---- spectrogram for --plot ------------------------------------------------------------------ */

void ml_log_sgram_bands(ml_logger *L)
{
    /* log-spaced from the first bin clear of DC to Nyquist (real input), linear over
     * -Nyquist..Nyquist (I/Q) */
    const double nyq = L->rate / 2, bin_hz = L->rate / (double)ml_spectrum_nfft(L->spec);
    const double flo = fmax(20.0, (double)(ml_spectrum_lobe_bins(L->spec) + 1) * bin_hz);
    for (size_t b = 0; b < ML_LOG_SG_ROWS; b++)
        L->band_hz[b] = L->is_complex ? -nyq + ((double)b + 0.5) * (2 * nyq) / ML_LOG_SG_ROWS
                                      : flo * pow(nyq / flo, ((double)b + 0.5) / ML_LOG_SG_ROWS);
}

void ml_log_sgram_column(ml_logger *L)
{
    const double nfft = (double)ml_spectrum_nfft(L->spec), bin_hz = L->rate / nfft;
    const double enbw = ml_spectrum_enbw_bins(L->spec);
    for (size_t b = 0; b < ML_LOG_SG_ROWS; b++) {
        const double half = L->is_complex ? L->rate / ML_LOG_SG_ROWS / 2 : 0;
        /* band edges: halfway (geometrically for log bands) to the neighbouring centres */
        const double lo_c = b == 0 ? L->band_hz[0] : L->band_hz[b - 1];
        const double hi_c = b + 1 == ML_LOG_SG_ROWS ? L->rate / 2 : L->band_hz[b + 1];
        const double fa = L->is_complex ? L->band_hz[b] - half : (b == 0 ? lo_c : sqrt(lo_c * L->band_hz[b]));
        const double fb = L->is_complex ? L->band_hz[b] + half
                                        : (b + 1 == ML_LOG_SG_ROWS ? hi_c : sqrt(L->band_hz[b] * hi_c));
        long ka = lround(fa / bin_hz), kb = lround(fb / bin_hz);
        if (kb < ka)
            kb = ka;
        double sum = 0;
        long n = 0;
        for (long k = ka; k <= kb; k++) {
            const long kk = k < 0 ? k + (long)nfft : k;
            if (kk >= 0 && kk < (long)L->nbins) {
                sum += L->psd[kk];
                n++;
            }
        }
        L->sg_col[b] = n > 0 ? sum / (double)n / enbw / bin_hz : 0.0;
    }
}

/* ---- the stream ------------------------------------------------------------------------------ */

/* m frames of data (interleaved) into the interval's and the step's accumulators. */
static int take_data(ml_logger *L, const float *b, size_t m)
{
    ml_channels_split(&L->ch, b, m, L->mono, NULL);
    ml_stats_push(&L->st, L->mono, m);
    ml_aweight_push(L->aw, L->mono, L->aout, m);
    for (size_t i = 0; i < m; i++) {
        L->asum += L->aout[i] * L->aout[i];
        L->step_sumsq += (double)L->mono[i] * L->mono[i];
    }
    L->step_n += (int64_t)m;
    return ml_log_listen_push(L, b, m);
}

/* The chunk's samples to the step spectrum (the analysed column, or I/Q). */
static void step_spectrum(ml_logger *L, const float *b, size_t m)
{
    if (!L->is_complex) {
        ml_spectrum_push(L->spec, L->mono, m);
        if (L->mspec)
            ml_spectrum_push(L->mspec, L->mono, m);
        return;
    }
    /* I and Q from the frames as (re, im) pairs */
    for (size_t i = 0; i < m; i++) {
        L->pairs[2 * i] = b[i * L->ch.stride + L->ch.re];
        L->pairs[2 * i + 1] = b[i * L->ch.stride + L->ch.im];
    }
    ml_spectrum_push_complex_float_tagged(L->spec, L->pairs, NULL, m);
}

/* The end of an interval: its row, and the next interval starts; now and then the detectors'
 * state (saved once the row is out). */
static int interval_done(ml_logger *L)
{
    ml_modulation_result r;
    int rc = ml_log_row(L, end_span(L, &r));
    L->ipos = 0;
    ml_log_reset_interval(L);
    ml_spectrum_reset(L->spec);
    struct timespec now;
    clock_gettime(CLOCK_MONOTONIC, &now);
    const double t = (double)now.tv_sec + 1e-9 * (double)now.tv_nsec;
    if (rc == 0 && t - L->state_wall >= ML_LOG_STATE_EVERY_S && ml_log_offset_of(L, L->pos) > L->skip_rows_until) {
        rc = ml_log_snapshot(L, false);
        if (rc == 0 && !L->row_pending)
            rc = ml_log_save_state(L);
    }
    return rc;
}

int ml_log_advance(ml_logger *L, const float *buf, size_t n)
{
    size_t done = 0;
    while (done < n) {
        /* the chunk ends at the next step or interval boundary */
        const int64_t j = L->ipos / L->step_len;
        int64_t next = (size_t)j < L->steps_per_ival ? (j + 1) * L->step_len : L->ival_frames;
        if (next > L->ival_frames)
            next = L->ival_frames;
        size_t m = (size_t)(next - L->ipos);
        if (m > n - done)
            m = n - done;
        int rc = 0;
        if (buf != NULL) {
            const float *b = buf + done * L->ch.stride;
            rc = take_data(L, b, m);
            step_spectrum(L, b, m);
            if (L->mod_span && ml_modulation_push(L->mod, b, m) != ML_OK)
                L->mod_span = false;
            L->data_frames += (int64_t)m;
        } else {
            L->lost_frames += (int64_t)m;
            /* no spectrum, filter or envelope spans a gap */
            ml_spectrum_reset(L->spec);
            if (L->mspec)
                ml_spectrum_reset(L->mspec);
            ml_aweight_reset(L->aw);
            L->mod_span = false;
        }
        if (rc != 0)
            return rc;
        L->pos += (int64_t)m;
        L->ipos += (int64_t)m;
        done += m;
        if ((size_t)j < L->steps_per_ival && L->ipos == (j + 1) * L->step_len && (rc = step_done(L)) != 0)
            return rc;
        if (L->ipos == L->ival_frames && (rc = interval_done(L)) != 0)
            return rc;
    }
    return 0;
}

int ml_log_finish(ml_logger *L, const char *end_note, const char *why)
{
    int rc = ml_log_close_events(L, why);
    if (end_note)
        snprintf(L->note, sizeof L->note, "%s", end_note);
    if (rc == 0 && L->ipos > 0) {
        ml_modulation_result r;
        rc = ml_log_row(L, end_span(L, &r));
    }
    if (rc == 0)
        rc = ml_log_release_row(L, true);
    /* the state at the stop: baselines kept, every event closed */
    if (rc == 0 && ml_log_offset_of(L, L->pos) > L->skip_rows_until)
        rc = ml_log_snapshot(L, true);
    if (rc == 0)
        rc = ml_log_save_state(L);
    return rc;
}
