/* The demodulator's block classification (quiet or modulated) and peak histograms.
 * SPDX-License-Identifier: MIT
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/am_internal.h"

ml_status ml_am_blocks_init(ml_am_blocks *b, size_t len, double carrier_ref, double quiet_rel, double neff)
{
    memset(b, 0, sizeof *b);
    b->len = len;
    b->carrier_ref = carrier_ref;
    b->quiet_rel = quiet_rel;
    /* three standard deviations of var(E) - var(Q) for Gaussian noise: each variance estimate of
     * neff independent samples has a relative spread sqrt(2 / neff), their difference 2 / sqrt(neff) */
    b->allow = 6.0 / sqrt(neff > 1 ? neff : 1);
    b->hist_scale = ML_AM_HIST_BINS / (ML_AM_HIST_RANGE * carrier_ref);
    b->pending = malloc(ML_AM_OVERSAMPLE * len * sizeof *b->pending);
    b->hist_quiet = malloc(ML_AM_HIST_BINS * sizeof *b->hist_quiet);
    b->hist_mod = malloc(ML_AM_HIST_BINS * sizeof *b->hist_mod);
    if (b->pending == NULL || b->hist_quiet == NULL || b->hist_mod == NULL)
        return ML_ENOMEM;
    ml_am_blocks_reset(b);
    return ML_OK;
}

void ml_am_blocks_free(ml_am_blocks *b)
{
    free(b->pending);
    free(b->hist_quiet);
    free(b->hist_mod);
    b->pending = NULL;
    b->hist_quiet = b->hist_mod = NULL;
}

void ml_am_blocks_reset(ml_am_blocks *b)
{
    b->fill = 0;
    b->sum = b->sumsq = b->sum_s = b->srr = b->sii = b->sri = 0;
    b->sum_y = b->sum_lag = b->sum_v = 0;
    b->npending = 0;
    b->sum_all = b->sum_mod = b->sum_quiet = 0;
    b->sum_s_all = b->sum_s_mod = 0;
    b->q_var_all = b->q_var_quiet = 0;
    b->n_mod = b->n_quiet = b->n_absent = 0;
    b->n_noise_all = b->n_noise_quiet = 0;
    b->followed = false;
    b->last_absent = false;
    memset(b->hist_quiet, 0, ML_AM_HIST_BINS * sizeof *b->hist_quiet);
    memset(b->hist_mod, 0, ML_AM_HIST_BINS * sizeof *b->hist_mod);
    b->hist_quiet_n = b->hist_mod_n = 0;
}

bool ml_am_blocks_end(ml_am_blocks *b)
{
    const double n = (double)b->fill;
    const double mean = b->sum / n;
    const double var = fmax(0.0, b->sumsq / n - mean * mean);
    const double var_q = ml_am_blocks_var_q(b);
    const double still = b->quiet_rel * mean;
    b->last_absent = !(mean >= ML_AM_ABSENT_REL * b->carrier_ref);
    if (b->last_absent) { /* no carrier: in no sum and no histogram */
        b->n_absent += b->fill;
        b->fill = 0;
        b->sum = b->sumsq = b->sum_s = b->srr = b->sii = b->sri = 0;
        b->sum_y = b->sum_lag = b->sum_v = 0;
        b->npending = 0;
        return false;
    }
    /* a missing carrier is not a quiet carrier, and one drowned in noise cannot be told quiet */
    const bool quiet = mean > 0.05 * b->carrier_ref && var - var_q < still * still + b->allow * var_q
                       && var_q < 0.01 * mean * mean;
    if (quiet) {
        b->sum_quiet += b->sum;
        b->n_quiet += b->fill;
        if (b->followed) {
            b->q_var_quiet += var_q * n;
            b->n_noise_quiet += b->fill;
        }
    } else {
        b->sum_mod += b->sum;
        b->sum_s_mod += b->sum_s;
        b->n_mod += b->fill;
    }
    b->sum_all += b->sum;
    b->sum_s_all += b->sum_s;
    if (b->followed) {
        b->q_var_all += var_q * n;
        b->n_noise_all += b->fill;
    }
    uint64_t *restrict h = quiet ? b->hist_quiet : b->hist_mod;
    const uint16_t *restrict p = b->pending;
    const size_t np = b->npending; /* a local count: h's stores could alias the fields */
    for (size_t i = 0; i < np; i++)
        h[p[i]]++;
    if (quiet)
        b->hist_quiet_n += np;
    else
        b->hist_mod_n += np;
    b->fill = 0;
    b->sum = b->sumsq = b->sum_s = b->srr = b->sii = b->sri = 0;
    b->sum_y = b->sum_lag = b->sum_v = 0;
    b->npending = 0;
    return !quiet;
}

double ml_am_blocks_var_q(const ml_am_blocks *b)
{
    if (b->fill == 0)
        return -1.0;
    const double n = (double)b->fill, mag = cabs(b->sum_v);
    /* Q = Im(v conj(u)) = im ur - re ui for the block's mean phasor u of v: its mean is 0, and
     * sum Q^2 = ur^2 sum im^2 + ui^2 sum re^2 - 2 ur ui sum re im; without a mean phasor (no
     * carrier) half the total */
    if (!(mag > 0))
        return 0.5 * (b->srr + b->sii) / n;
    const double ur = creal(b->sum_v) / mag, ui = cimag(b->sum_v) / mag;
    return fmax(0.0, (ur * ur * b->sii + ui * ui * b->srr - 2.0 * ur * ui * b->sri) / n);
}

double ml_am_blocks_noise_var(const ml_am_blocks *b)
{
    if (b->n_noise_quiet > 0)
        return b->q_var_quiet / (double)b->n_noise_quiet;
    return b->n_noise_all > 0 ? b->q_var_all / (double)b->n_noise_all : -1.0;
}

/* Level below which a share p of the histogram's mass lies (linear within a bin). */
static double quantile(const uint64_t *hist, uint64_t total, double p, double scale)
{
    if (total == 0)
        return 0.0;
    const double target = p * (double)total;
    double cum = 0.0;
    for (size_t b = 0; b < ML_AM_HIST_BINS; b++) {
        double next = cum + (double)hist[b];
        if (next >= target && hist[b] > 0)
            return ((double)b + (target - cum) / (double)hist[b]) / scale;
        cum = next;
    }
    return (double)ML_AM_HIST_BINS / scale;
}

double ml_am_blocks_quantile(const ml_am_blocks *b, double p)
{
    /* without modulated blocks every block was quiet: all of them are the quiet ones */
    const bool use_mod = b->hist_mod_n > 0;
    return quantile(use_mod ? b->hist_mod : b->hist_quiet, use_mod ? b->hist_mod_n : b->hist_quiet_n, p,
                    b->hist_scale)
           - ML_AM_HIST_LOW * b->carrier_ref;
}

double ml_am_blocks_fraction_below(const ml_am_blocks *b, double level)
{
    const uint64_t total = b->hist_quiet_n + b->hist_mod_n;
    if (total == 0)
        return 0.0;
    double v = (level + ML_AM_HIST_LOW * b->carrier_ref) * b->hist_scale;
    if (v <= 0)
        return 0.0;
    size_t k = v >= ML_AM_HIST_BINS ? ML_AM_HIST_BINS : (size_t)v;
    double cum = 0.0;
    for (size_t i = 0; i < k; i++)
        cum += (double)(b->hist_quiet[i] + b->hist_mod[i]);
    if (k < ML_AM_HIST_BINS)
        cum += (v - (double)k) * (double)(b->hist_quiet[k] + b->hist_mod[k]);
    return cum / (double)total;
}
