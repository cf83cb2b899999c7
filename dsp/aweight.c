/* A-frequency weighting filter: three bilinear-transformed biquads with pre-warped poles.
 * SPDX-License-Identifier: MIT
 *
 * References: [iec61672:2013] IEC 61672-1:2013 Annex E, eqs. E.1 and E.6, pole frequencies
 * f1..f4 (E.4; values as listed in docs/references.md section 1.1).
 * [oppenheim:2010] A. V. Oppenheim, R. W. Schafer, Discrete-Time Signal Processing, 3rd ed.,
 * section 7.2 (bilinear transformation and frequency pre-warping).
 */
#include "dsp/aweight.h"

#include <assert.h>
#include <complex.h>
#include <math.h>
#include <stdlib.h>

#include "dsp/biquad.h"
#include "dsp/internal.h"

/* [iec61672:2013] E.4: pole frequencies in Hz */
static const double F1 = 20.598997057618316, F2 = 107.65264864304629, F3 = 737.8622307362901,
                    F4 = 12194.217147998012;


struct ml_aweight {
    ml_aweight_config cfg;
    double gain;
    ml_biquad s[3];
};

ml_aweight_config ml_aweight_config_default(double rate_hz)
{
    return (ml_aweight_config){.rate_hz = rate_hz};
}

/* Analogue pole frequency (rad/s) whose bilinear image lies at f_hz ([oppenheim:2010] 7.2):
 * 2 fs tan(pi f / fs). Near or above Nyquist pre-warping is impossible, so the plain 2 pi f is used. */
static double warp(double f_hz, double fs)
{
    return f_hz < 0.45 * fs ? 2.0 * fs * tan(ML_PI * f_hz / fs) : 2.0 * ML_PI * f_hz;
}

/* Bilinear image (s = K (1 - z^-1)/(1 + z^-1), K = 2 fs) of N(s) / ((s + pa)(s + pb)), where N is
 * s^2 (highpass = 1) or 1. Denominator ((K + pa) - (K - pa) z^-1)((K + pb) - (K - pb) z^-1). */
static ml_biquad section(double pa, double pb, double fs, int highpass)
{
    const double k = 2.0 * fs;
    const double d0 = (k + pa) * (k + pb), d1 = -(k + pa) * (k - pb) - (k - pa) * (k + pb),
                 d2 = (k - pa) * (k - pb);
    ml_biquad q = {{0}, {1.0, d1 / d0, d2 / d0}, 0, 0};
    const double g = highpass ? k * k : 1.0;
    q.b[0] = g / d0;
    q.b[1] = (highpass ? -2.0 : 2.0) * g / d0;
    q.b[2] = g / d0;
    return q;
}

static double response(const ml_aweight *q, double f_hz)
{
    const double complex zi = cexp(-I * 2.0 * ML_PI * f_hz / q->cfg.rate_hz);
    double complex h = 1.0;
    for (int i = 0; i < 3; i++)
        h *= ml_biquad_h(&q->s[i], zi);
    return cabs(h);
}

ml_status ml_aweight_create(const ml_aweight_config *cfg, ml_aweight **out)
{
    assert(out != NULL);
    *out = NULL;
    if (cfg == NULL || !(cfg->rate_hz >= 8000 && cfg->rate_hz <= 1e6))
        return ML_EINVAL;
    ml_aweight *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    q->cfg = *cfg;
    const double fs = cfg->rate_hz;
    const double w1 = warp(F1, fs), w2 = warp(F2, fs), w3 = warp(F3, fs), w4 = warp(F4, fs);
    q->s[0] = section(w1, w1, fs, 1);
    q->s[1] = section(w2, w3, fs, 1);
    q->s[2] = section(w4, w4, fs, 0);
    q->gain = 1.0 / response(q, 1000.0); /* 0 dB at 1 kHz, as A(1000) - A1000 = 0 in eq. E.6 */
    *out = q;
    return ML_OK;
}

void ml_aweight_destroy(ml_aweight *q)
{
    free(q);
}

void ml_aweight_reset(ml_aweight *q)
{
    if (q == NULL)
        return;
    for (int i = 0; i < 3; i++)
        q->s[i].z1 = q->s[i].z2 = 0.0;
}

ml_status ml_aweight_push(ml_aweight *q, const float *x, double *y, size_t n)
{
    if (q == NULL || (n > 0 && (x == NULL || y == NULL)))
        return ML_EINVAL;
    for (size_t i = 0; i < n; i++) {
        double v = q->gain * (double)x[i];
        for (int k = 0; k < 3; k++) {
            v = ml_biquad_step(&q->s[k], v);
        }
        y[i] = v;
    }
    return ML_OK;
}

double ml_aweight_get_response_db(const ml_aweight *q, double f_hz)
{
    if (q == NULL || !(f_hz > 0 && f_hz < q->cfg.rate_hz / 2))
        return NAN;
    return 20.0 * log10(q->gain * response(q, f_hz));
}

void ml_aweight_get_state(const ml_aweight *q, double *s)
{
    for (int i = 0; q && s && i < 3; i++) {
        s[2 * i] = q->s[i].z1;
        s[2 * i + 1] = q->s[i].z2;
    }
}

ml_status ml_aweight_set_state(ml_aweight *q, const double *s)
{
    if (q == NULL || s == NULL)
        return ML_EINVAL;
    for (int i = 0; i < ML_AWEIGHT_STATE; i++)
        if (!isfinite(s[i]))
            return ML_EINVAL;
    for (int i = 0; i < 3; i++) {
        q->s[i].z1 = s[2 * i];
        q->s[i].z2 = s[2 * i + 1];
    }
    return ML_OK;
}
