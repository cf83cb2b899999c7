/* Figures on the bench's terms (see dsp/benchfig.h).
 * SPDX-License-Identifier: MIT
 *
 * References: docs/references.md 1 (A weighting), 2 (BS.468-4), 5 (0 dBFS, AES17), 14 (dBu, dBV).
 */
#include "dsp/benchfig.h"

#include <math.h>

#include "dsp/weighting.h"

/* 10 lg(p / q); NAN unless both are positive and finite (no floor values) */
static double ratio_db(double p, double q)
{
    return p > 0 && q > 0 && isfinite(p) && isfinite(q) ? 10.0 * log10(p / q) : NAN;
}

void ml_bench_noise_none(ml_noise_figures *out)
{
    const double n = NAN;
    *out = (ml_noise_figures){n, n, n, n, n, n, n, n, 0};
}

ml_status ml_bench_noise(const ml_spectrum *spec, const ml_audio_result *a, const ml_qp468 *qp,
                         ml_noise_figures *out)
{
    if (out == NULL)
        return ML_EINVAL;
    ml_bench_noise_none(out);
    if (spec == NULL || a == NULL)
        return ML_EINVAL;
    /* Without a test tone the result still names the band's strongest line as its fundamental
     * (dsp/metrics.h): only the mains lines are taken out then. */
    ml_audio_result t = *a;
    if (!a->tone_present) {
        t.fundamental_power = 0;
        t.nharmonics = 0;
    }
    ml_wnoise_config wc = ml_wnoise_config_default();
    wc.band_lo_hz = a->band_lo_hz;
    wc.band_hi_hz = a->band_hi_hz;
    wc.exclude_hum = true;
    ml_wnoise_result w;
    const ml_status st = ml_weighted_noise(spec, &t, &wc, &w);
    if (st != ML_OK)
        return st;
    const double p1 = a->tone_present ? a->fundamental_power : NAN;
    out->noise_dbfs = ratio_db(w.noise_power, 0.5);
    out->noise_a_dbfs = ratio_db(w.noise_a_power, 0.5);
    out->noise_468_dbfs = ratio_db(w.noise_468_power, 0.5);
    out->snr_a_db = ratio_db(p1, w.noise_a_power);
    out->snr_468_db = ratio_db(p1, w.noise_468_power);
    out->hum_lines = (unsigned)(a->nhum < ML_MAX_HUM ? a->nhum : ML_MAX_HUM);
    out->hum_removed_dbfs = out->hum_lines > 0 ? ratio_db(w.hum_removed_power, 0.5) : NAN;
    out->mains_hz = out->hum_lines > 0 ? a->mains_hz : NAN;
    ml_qp468_result qr;
    if (qp != NULL && !a->tone_present && ml_qp468_get(qp, &qr) == ML_OK && qr.mean_reading > 0)
        out->noise_468_qp_dbfs = 20.0 * log10(qr.mean_reading * sqrt(2.0));
    return ML_OK;
}

/* dbfs + the calibration, NAN for NAN */
static double plus_cal(const ml_level_cal *cal, double dbfs)
{
    return isfinite(dbfs) ? ml_level_dbu(cal, dbfs) : NAN;
}

void ml_bench_volts(const ml_level_cal *cal, double load_ohms, double response_db,
                    const ml_audio_plain_figures *f, const ml_noise_figures *n, double rms_dbfs,
                    ml_volt_figures *out)
{
    const double c = isfinite(response_db) ? response_db : 0.0;
    out->fundamental_dbu = plus_cal(cal, f->fundamental_dbfs - c);
    out->fundamental_dbv = isfinite(out->fundamental_dbu) ? ml_dbu_to_dbv(out->fundamental_dbu) : NAN;
    out->fundamental_vrms = isfinite(out->fundamental_dbu) ? ml_dbu_to_vrms(out->fundamental_dbu) : NAN;
    out->fundamental_w = load_ohms > 0 ? ml_level_watts(out->fundamental_vrms, load_ohms) : NAN;
    out->rms_dbu = plus_cal(cal, rms_dbfs);
    out->noise_dbu = plus_cal(cal, f->noise_dbfs);
    out->noise_a_dbu = plus_cal(cal, n->noise_a_dbfs);
    out->hum_dbu = plus_cal(cal, f->hum_dbfs);
}
