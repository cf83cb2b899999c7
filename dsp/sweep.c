/* A frequency sweep's points: groups, reference, band edges, the transform of one step.
 * SPDX-License-Identifier: MIT
 */
#include "dsp/sweep.h"

#include <math.h>
#include <stdbool.h>
#include <stdint.h>

size_t ml_sweep_group(const double *freq_hz, size_t n, double tol_pct, double tol_hz, size_t *group)
{
    size_t g = 0, first = 0; /* the current group's first point */
    for (size_t i = 0; i < n; i++) {
        const double tol = fmax(tol_pct / 100.0 * freq_hz[i], tol_hz);
        bool again = false;
        for (size_t j = first; j < i && !again; j++)
            again = fabs(freq_hz[j] - freq_hz[i]) <= tol;
        if (again) {
            g++;
            first = i;
        }
        group[i] = g;
    }
    return n > 0 ? g + 1 : 0;
}

size_t ml_sweep_reference(const double *freq_hz, const double *level_db, size_t n, double ref_hz)
{
    size_t best = SIZE_MAX;
    double dist = INFINITY;
    for (size_t i = 0; i < n; i++) {
        if (!isfinite(level_db[i]) || !(freq_hz[i] > 0))
            continue;
        const double d = fabs(log10(freq_hz[i] / ref_hz));
        /* the nearer one; on a tie (to rounding) the lower frequency */
        if (d < dist - 1e-12 || (fabs(d - dist) <= 1e-12 && freq_hz[i] < freq_hz[best])) {
            dist = d;
            best = i;
        }
    }
    return best;
}

ml_status ml_sweep_edge(const double *freq_hz, const double *rel_db, size_t n, size_t ref, int direction,
                        double drop_db, double *edge_hz)
{
    if (freq_hz == NULL || rel_db == NULL || edge_hz == NULL || ref >= n || !isfinite(rel_db[ref])
        || (direction != 1 && direction != -1) || !(drop_db > 0) || !isfinite(drop_db))
        return ML_EINVAL;
    for (size_t i = 0; i < n; i++)
        if (!(freq_hz[i] > 0) || (i > 0 && !(freq_hz[i] > freq_hz[i - 1])))
            return ML_EINVAL;
    *edge_hz = NAN;
    const double target = -drop_db;
    size_t prev = ref;
    for (size_t k = ref; direction > 0 ? k + 1 < n : k > 0;) {
        k = direction > 0 ? k + 1 : k - 1;
        if (!isfinite(rel_db[k]))
            continue;
        *edge_hz = freq_hz[k];
        if (rel_db[k] <= target && rel_db[prev] > target) {
            /* level linear in lg f between the two points */
            const double a = log10(freq_hz[prev]), b = log10(freq_hz[k]);
            const double t = (target - rel_db[prev]) / (rel_db[k] - rel_db[prev]);
            *edge_hz = pow(10.0, a + t * (b - a));
            return ML_OK;
        }
        prev = k;
    }
    return ML_ENOSIGNAL;
}

ml_status ml_sweep_step_transform(double rate_hz, int64_t nframes, double tone_hz, ml_window_type preferred,
                                  ml_spectrum_config *cfg)
{
    if (cfg == NULL || !(rate_hz > 0) || !isfinite(rate_hz) || !(tone_hz > 0) || !(tone_hz < rate_hz / 2)
        || preferred <= ML_WINDOW_RECT || preferred >= ML_WINDOW_COUNT)
        return ML_EINVAL;
    if (nframes < 288)
        return ML_ENOSIGNAL;
    *cfg = ml_spectrum_config_default(rate_hz);
    size_t nfft = cfg->nfft;
    while (nfft > 256 && (double)nfft + (double)(nfft / 8) > (double)nframes)
        nfft /= 2;
    cfg->nfft = nfft;
    const int64_t left = nframes - (int64_t)nfft;
    cfg->hop = left < (int64_t)(nfft / 4) ? (size_t)left : nfft / 4;
    cfg->remove_dc = 1;
    cfg->window = ml_sweep_window(tone_hz / (rate_hz / (double)nfft), preferred);
    return ML_OK;
}

ml_window_type ml_sweep_window(double tone_bins, ml_window_type preferred)
{
    if (preferred <= ML_WINDOW_RECT || preferred >= ML_WINDOW_COUNT)
        preferred = ML_WINDOW_HFT248D;
    /* from the preferred window down to those of fewer terms (the enum lists them by terms) */
    for (int w = (int)preferred; w >= (int)ML_WINDOW_HANN; w--) {
        const double lobe = (double)ml_window_terms((ml_window_type)w) + 1.0;
        if (tone_bins >= 2.0 * lobe + 1.0)
            return (ml_window_type)w;
    }
    return ML_WINDOW_HANN;
}
