/* Audio distortion and noise metrics from a Welch power spectrum.
 * SPDX-License-Identifier: MIT
 *
 * References:
 * [ieee1241:2000] IEEE Std 1241-2000, Standard for Terminology and Test Methods for Analog-to-
 *     Digital Converters: SINAD eq. 94, ENOB eq. 102.
 * [aes17:2015] AES17-2015, measurement bandwidth 20 Hz to 20 kHz; 0 dBFS = full-scale sine.
 * [paulson:1942] E. Paulson, "An approximate normalization of the analysis of variance
 *     distribution", Ann. Math. Statist. 13(2):233-235, 1942 (cube-root normal approximation of F).
 * [wilson:1931] E. B. Wilson, M. M. Hilferty, "The distribution of chi-square", Proc. Natl. Acad.
 *     Sci. 17(12):684-688, 1931.
 */
#include "dsp/metrics.h"

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/internal.h"

enum { BIN_NOISE = 0, BIN_OUT, BIN_DC, BIN_FUND, BIN_HARM, BIN_HUM, BIN_EXCL };

#define NONE_BIN SIZE_MAX
#define Z_LINE 4.0         /* 1 - 3.2e-5: a line at a known place stands above the noise         */
#define Z_TONE 5.2         /* 1 - 1e-7: the strongest of the band's (up to some 10^4) lobes        */
#define Z_BOUND 2.326      /* 99 %: upper bounds on lines hidden in the noise                      */
#define FLOOR_MARGIN 4.0   /* noise within 6 dB of the analysis' floor is no measurement          */
#define HUM_TOL 0.01       /* a mains line lies within 1 % of its nominal frequency               */
#define THD_HIDDEN 0.122   /* hidden harmonics that could add 0.5 dB (10^0.05 - 1) make THD a bound */
#define ROUNDING_PER_BIN 1e-28 /* transform rounding per bin re the strongest line, per 4096 points */

static const char *const why_text[ML_WHY_COUNT] = {
    [ML_WHY_OK] = "",
    [ML_WHY_TONE_CLEAR] = "a test tone stands clear of the noise",
    [ML_WHY_TONE_FORCED] = "a test tone was declared",
    [ML_WHY_TONE_OFF] = "no test tone was declared",
    [ML_WHY_TONE_ONLY_HUM] = "no test tone: the only lines clear of the noise are mains hum",
    [ML_WHY_TONE_NOT_CLEAR] = "no test tone: no line stands clear of the noise",
    [ML_WHY_TONE_NOT_AT_HZ] = "no test tone at the given frequency: nothing there stands clear of the noise",
    [ML_WHY_TONE_WEAK] = "the declared tone does not stand clear of the noise",
    [ML_WHY_TONE_DC] = "the tone is not resolved from DC: its level includes any DC offset",
    [ML_WHY_NO_HARMONIC_IN_BAND] = "no harmonic of the tone lies inside the band",
    [ML_WHY_HARMONICS_UNRESOLVED] = "the tone is too low for the resolution: its harmonics are not resolved from it",
    [ML_WHY_HARMONICS_IN_NOISE] = "noise-limited: the harmonics do not stand above the noise (upper bound)",
    [ML_WHY_AT_FLOOR] = "at the analysis' own floor (window leakage and rounding): a bound",
    [ML_WHY_OUT_OF_RANGE] = "beyond the reportable range: a bound at its limit",
    [ML_WHY_HUM_UNRESOLVED] = "the capture is too short to tell the mains frequency from DC",
    [ML_WHY_HUM_UNDER_TONE] = "every mains multiple falls on the tone or one of its harmonics",
    [ML_WHY_HUM_PARTIAL] = "not every mains multiple is resolved (from DC or from each other): a lower bound",
    [ML_WHY_HUM_IN_NOISE] = "no mains line stands above the noise (upper bound)",
    [ML_WHY_MAINS_NONE] = "no mains line stands above the noise",
    [ML_WHY_MAINS_GIVEN] = "mains frequency as configured",
    [ML_WHY_NO_SIGNAL] = "no signal in the band",
    [ML_WHY_SILENT] = "the input is silent",
};

const char *ml_audio_why_text(ml_audio_why why)
{
    return (unsigned)why < ML_WHY_COUNT ? why_text[why] : "unknown";
}

ml_audio_config ml_audio_config_default(void)
{
    return (ml_audio_config){.band_lo_hz = 20.0, .band_hi_hz = 20000.0, .tone_hz = 0.0, .harmonics = 10,
                             .mains_hz = 0.0, .hum_harmonics = 6, .tone_mode = ML_TONE_AUTO};
}

double ml_ratio_pct(double num_power, double den_power)
{
    if (!(den_power > 0) || !(num_power > 0))
        return 0.0;
    return 100.0 * sqrt(num_power / den_power);
}

double ml_ratio_db(double num_power, double den_power)
{
    if (!(den_power > 0))
        return 300.0;
    double r = num_power / den_power;
    return r > 1e-30 ? 10.0 * log10(r) : -300.0;
}

double ml_power_dbfs(double power)
{
    return ml_ratio_db(power, 0.5);
}

double ml_enob_bits(double sinad_db)
{
    /* [ieee1241:2000] eq. 94 and 102 with FSR = 2A: ENOB = (SINAD - 10 lg 1.5) / (20 lg 2) */
    return (sinad_db - 10.0 * log10(1.5)) / (20.0 * log10(2.0));
}

double ml_f_quantile(double a, double b, double z)
{
    if (!(a > 0) || !(b > 0) || !(z > 0))
        return NAN;
    /* [paulson:1942]: ((1 - B) u - (1 - A)) / sqrt(B u^2 + A) is about standard normal, with
     * u = F^(1/3), A = 2/(9a), B = 2/(9b). Setting it to z and squaring gives
     * al u^2 - 2 be u + ga = 0; the upper quantile is the larger root. With B = 0 (b infinite)
     * this is [wilson:1931] for chi-square / a. */
    const double A = 2.0 / (9.0 * a), B = isinf(b) ? 0.0 : 2.0 / (9.0 * b);
    const double al = (1.0 - B) * (1.0 - B) - z * z * B, be = (1.0 - A) * (1.0 - B);
    const double ga = (1.0 - A) * (1.0 - A) - z * z * A;
    if (!(al > 0))
        return INFINITY; /* the noise estimate is too uncertain for any finite threshold */
    const double disc = be * be - al * ga;
    const double u = (be + sqrt(disc > 0 ? disc : 0.0)) / al;
    return u * u * u;
}

/* ---- the analysis context ------------------------------------------------------------------ */

typedef struct {
    const ml_spectrum *spec;
    const double *psd;
    const unsigned char *m; /* marks per bin; NULL: noise bins are those outside every slot     */
    size_t nbins, lobe, klo, khi;
    double enbw, bin_hz;
    double dof_lobe;        /* ml_spectrum_dof over a lobe                                     */
    double floor_bin;       /* the analysis floor per bin (psd units)                            */
    /* m NULL (ml_hum_analyze_psd, ml_line_measure): the line centres whose lobes are not noise */
    const size_t *slot;
    size_t nslot;
    const struct skirt *sk; /* lines whose leakage is not signal (the tone search); NULL: none  */
    /* the lines whose leakage makes the floor (floor_per_bin's), for the floor at a given bin */
    size_t floor_n;
    double floor_nu[2], floor_pw[2], floor_round;
} ctx;

/* ---- the skirts of known lines --------------------------------------------------------------- */

/* Lines already accounted for (the mains lines, while the tone is looked for) and the reach of
 * their leakage: with a window of high sidelobes (Hann, on a short capture) a strong line's skirt
 * stands far above the noise many bins away, and a bin on it is no line of its own. */
struct skirt {
    size_t n;
    double nu[ML_MAX_HUM];    /* the line's position in bins (fractional)                     */
    double pw[ML_MAX_HUM];    /* its power (psd units at its peak)                             */
    size_t reach[ML_MAX_HUM]; /* beyond this many bins its leakage is under 1 % of the psd     */
};

/* The leakage a line of power pw at nu bins (from +nu and its mirror -nu) puts into bin k, in psd
 * units: the sidelobes' envelope (ml_window_leakage_envelope). */
static double line_leak(const ctx *x, double k, double nu, double pw)
{
    const ml_window_type win = ml_spectrum_window(x->spec);
    const size_t nfft = ml_spectrum_nfft(x->spec);
    return pw * (ml_window_leakage_envelope(win, nfft, k - nu) + ml_window_leakage_envelope(win, nfft, k + nu));
}

/* The analysis floor around bin c (psd units): the leakage of floor_per_bin's lines averaged over
 * c's lobe, plus the transform's rounding. A window of high sidelobes leaks far more near a strong
 * line than far from it: the band's mean (floor_bin) would hide weak lines far away and flatter
 * those close by. floor_bin where the lines are not known. */
static double floor_at(const ctx *x, size_t c)
{
    if (x->floor_n == 0)
        return x->floor_bin;
    double s = 0.0;
    size_t n = 0;
    /* only the skirts count: a bin in a floor line's own lobe holds the line, not its leakage */
    for (size_t k = c > x->lobe ? c - x->lobe : 0; k <= c + x->lobe && k < x->nbins; k++, n++)
        for (size_t l = 0; l < x->floor_n; l++)
            if (x->floor_pw[l] > 0 && fabs((double)k - x->floor_nu[l]) > (double)x->lobe)
                s += line_leak(x, (double)k, x->floor_nu[l], x->floor_pw[l]);
    return (n ? s / (double)n : 0.0) + x->floor_round;
}

/* The leakage at bin k of the lines of s (each from +nu and its mirror -nu), in psd units. */
static double skirt_at(const ctx *x, size_t k)
{
    const struct skirt *s = x->sk;
    if (s == NULL)
        return 0.0;
    double v = 0.0;
    for (size_t i = 0; i < s->n; i++)
        if (fabs((double)k - s->nu[i]) <= (double)s->reach[i])
            v += line_leak(x, (double)k, s->nu[i], s->pw[i]);
    return v;
}

/* Adds a line at nu bins of power pw to s; its reach is the first offset beyond its lobe where
 * its leakage falls under 1 % of the psd on both sides (at most nbins). */
static void skirt_add(const ctx *x, struct skirt *s, double nu, double pw)
{
    if (s->n >= ML_MAX_HUM || !(pw > 0))
        return;
    const ml_window_type win = ml_spectrum_window(x->spec);
    const size_t nfft = ml_spectrum_nfft(x->spec), c = (size_t)llround(nu);
    size_t d = x->lobe;
    for (; d < x->nbins; d++) {
        const double l = pw * ml_window_leakage_envelope(win, nfft, (double)d);
        const bool lo = c < d || l < 0.01 * x->psd[c - d];
        const bool hi = c + d >= x->nbins || l < 0.01 * x->psd[c + d];
        if (lo && hi)
            break;
    }
    s->nu[s->n] = nu;
    s->pw[s->n] = pw;
    s->reach[s->n] = d;
    s->n++;
}

/* The skirts' leakage summed over the lobe around c, in power (lobe_sum's units / enbw). */
static double skirt_lobe(const ctx *x, size_t c)
{
    if (x->sk == NULL)
        return 0.0;
    double v = 0.0;
    for (size_t k = c > x->lobe ? c - x->lobe : 0; k <= c + x->lobe && k < x->nbins; k++)
        v += skirt_at(x, k);
    return v / x->enbw;
}

/* ml_spectrum_dof, or (a psd from elsewhere: no segment in spec) that of one segment, about two
 * per ENBW of bins. */
static double dof(const ctx *x, size_t nb)
{
    const double d = ml_spectrum_dof(x->spec, nb);
    return d > 0 ? d : fmax(2.0, 2.0 * (double)nb / x->enbw);
}

static size_t nearest_bin(double hz, double bin_hz)
{
    return (size_t)floor(hz / bin_hz + 0.5);
}

static size_t dist(size_t a, size_t b)
{
    return a > b ? a - b : b - a;
}

static bool is_noise(const ctx *x, size_t k)
{
    if (x->m != NULL)
        return x->m[k] == BIN_NOISE;
    if (k < x->lobe)
        return false;
    for (size_t i = 0; i < x->nslot; i++)
        if (dist(k, x->slot[i]) <= x->lobe)
            return false;
    return true;
}

/* Sum of psd over [c - lobe, c + lobe] clipped to [0, nbins). Sets *count to the bins summed. */
static double lobe_sum(const double *psd, size_t nbins, size_t c, size_t lobe, size_t *count)
{
    size_t lo = c > lobe ? c - lobe : 0, hi = c + lobe < nbins ? c + lobe : nbins - 1;
    double s = 0.0;
    for (size_t k = lo; k <= hi; k++)
        s += psd[k];
    *count = hi - lo + 1;
    return s;
}

static void mark(unsigned char *m, size_t nbins, size_t c, size_t lobe, unsigned char what)
{
    size_t lo = c > lobe ? c - lobe : 0, hi = c + lobe < nbins ? c + lobe : nbins - 1;
    for (size_t k = lo; k <= hi; k++)
        if (m[k] == BIN_NOISE || m[k] == BIN_OUT || m[k] == BIN_EXCL || (what == BIN_FUND && m[k] != BIN_DC))
            m[k] = what;
}

/* True when the +-lobe window around c touches a fundamental or harmonic bin (DC is the business
 * of ml_spectrum_clears_dc). */
static bool collides(const unsigned char *m, size_t nbins, size_t c, size_t lobe)
{
    size_t lo = c > lobe ? c - lobe : 0, hi = c + lobe < nbins ? c + lobe : nbins - 1;
    for (size_t k = lo; k <= hi; k++)
        if (m[k] == BIN_FUND || m[k] == BIN_HARM)
            return true;
    return false;
}

/* Power of the component whose lobe is centred on bin c: everything in its lobe, noise included,
 * so a component buried in noise reads the noise in its lobe rather than zero. */
static double component_power(const double *psd, size_t nbins, size_t c, size_t lobe, double enbw)
{
    size_t count = 0;
    return lobe_sum(psd, nbins, c, lobe, &count) / enbw;
}

/* The noise bins near c (its own lobe left out): hw0 (at least 4 lobes) either side, doubled until
 * 4 lobes' worth of noise bins are found or the band is covered. Sets [*lo, *hi] to that window
 * and *count to the noise bins in it (0: none anywhere in the band); returns their psd's sum. */
static double local_window(const ctx *x, size_t c, size_t hw0, size_t *lo_out, size_t *hi_out, size_t *count)
{
    size_t hw = hw0 > 4 * x->lobe ? hw0 : 4 * x->lobe;
    const size_t want = 4 * (2 * x->lobe + 1);
    for (;;) {
        const size_t lo = c > x->klo + hw ? c - hw : x->klo, hi = c + hw < x->khi ? c + hw : x->khi;
        double s = 0.0;
        size_t n = 0;
        for (size_t k = lo; k <= hi; k++)
            if (dist(k, c) > x->lobe && is_noise(x, k)) {
                s += x->psd[k];
                n++;
            }
        if (n >= want || (lo <= x->klo && hi >= x->khi)) {
            *lo_out = lo;
            *hi_out = hi;
            *count = n;
            return s;
        }
        hw *= 2;
    }
}

/* Mean psd over the noise bins near c (local_window). *count: the bins averaged (0: none). */
static double local_density(const ctx *x, size_t c, size_t *count)
{
    size_t lo, hi;
    const double s = local_window(x, c, 0, &lo, &hi, count);
    return *count ? s / (double)*count : 0.0;
}

/* The pattern of a non-negative double (they order as their patterns do); negatives as 0. */
static uint64_t pattern(double v)
{
    uint64_t u = 0;
    if (v > 0)
        memcpy(&u, &v, sizeof u);
    return u;
}

/* The median-based noise density around c (header, tone or no tone rule 3): the median of the noise
 * bins of local_window from hw0 bins either side, scaled to a mean for the spread of one bin's
 * estimate (about chi-square with nu = ml_spectrum_dof of one bin: median / mean =
 * (1 - 2/(9 nu))^3, [wilson:1931]). Lines among those bins -- sidebands, other tones, the splatter
 * beside them -- are not taken for noise while they hold fewer than half of them, as they are in a
 * mean. The lower median is found by bisection on the values' patterns: exact, no allocation. 0
 * when the band has no noise bin. */
static double local_density_robust(const ctx *x, size_t c, size_t hw0)
{
    size_t lo, hi, n;
    (void)local_window(x, c, hw0, &lo, &hi, &n);
    if (n == 0)
        return 0.0;
    const size_t rank = (n + 1) / 2; /* the smallest value with at least rank bins at or below it */
    uint64_t a = 0, b = 0;
    for (size_t k = lo; k <= hi; k++)
        if (dist(k, c) > x->lobe && is_noise(x, k) && pattern(x->psd[k]) > b)
            b = pattern(x->psd[k]);
    while (a < b) { /* the median's pattern lies in [a, b] */
        const uint64_t mid = a + (b - a) / 2;
        size_t below = 0;
        for (size_t k = lo; k <= hi; k++)
            below += dist(k, c) > x->lobe && is_noise(x, k) && pattern(x->psd[k]) <= mid;
        if (below >= rank)
            b = mid;
        else
            a = mid + 1;
    }
    double med;
    memcpy(&med, &a, sizeof med);
    const double w = 1.0 - 2.0 / (9.0 * dof(x, 1));
    return w > 0 ? med / (w * w * w) : med;
}

/* The component at bin c against the noise near it (header). *nu_noise: the dof of that noise
 * estimate (INFINITY when there was none: the noise is then taken as the floor). */
static void line_stats(const ctx *x, size_t c, double z, ml_component *o, double *nu_noise)
{
    size_t cnt = 0, n = 0;
    const double nd = local_density(x, c, &cnt);
    const double p = fmax(0.0, lobe_sum(x->psd, x->nbins, c, x->lobe, &n) / x->enbw - skirt_lobe(x, c));
    const double noise = fmax(nd, floor_at(x, c)) * (double)n / x->enbw;
    const double nu = cnt ? dof(x, cnt) : INFINITY;
    const double t = ml_f_quantile(x->dof_lobe, nu, z), tb = ml_f_quantile(x->dof_lobe, nu, Z_BOUND);
    o->power = p;
    o->noise_power = noise;
    o->line_power = p > noise ? p - noise : 0.0;
    o->above_noise = p > 0 && p > t * noise;
    o->upper_power = o->line_power + (tb - 1.0) * noise;
    if (nu_noise)
        *nu_noise = nu;
}

/* A 99 % upper bound on the total line power hidden in n components that do not stand above the
 * noise: their excess over the expected noise plus the joint margin (their lobes are disjoint,
 * so the degrees of freedom add; the noise estimates' smallest dof is taken for all). */
static double joint_upper(const ctx *x, const ml_component *c, const double *nu_noise, size_t n, bool all)
{
    double p = 0.0, noise = 0.0, nu_n = INFINITY;
    size_t k = 0;
    for (size_t i = 0; i < n; i++) {
        if (c[i].above_noise && !all)
            continue;
        p += c[i].power;
        noise += c[i].noise_power;
        nu_n = fmin(nu_n, nu_noise[i]);
        k++;
    }
    if (k == 0)
        return 0.0;
    const double tb = ml_f_quantile(x->dof_lobe * (double)k, nu_n, Z_BOUND);
    return (p > noise ? p - noise : 0.0) + (tb - 1.0) * noise;
}

/* ---- mains lines --------------------------------------------------------------------------- */

/* The frequency of a line near bin c0 (within +-tol bins), from the phase advance between segments
 * (ml_spectrum_get_frequency). The estimate at a bin is unambiguous only for a line within a bin
 * of it (hop <= nfft/2), so only bins whose own estimate lies within 0.6 bin of them are trusted;
 * of those, the strongest bin's. False when none is (a line too weak against the noise in its
 * bins, or fewer than two segments). */
static bool line_frequency(const ctx *x, size_t c0, size_t tol, double *hz)
{
    if (ml_spectrum_segments(x->spec) < 2)
        return false;
    size_t best = NONE_BIN;
    double fb = 0.0;
    for (size_t k = c0 > tol + 1 ? c0 - tol - 1 : 1; k <= c0 + tol + 1 && k + 1 < x->nbins; k++) {
        double f;
        if (ml_spectrum_get_frequency(x->spec, k, &f) != ML_OK || fabs(f / x->bin_hz - (double)k) > 0.6)
            continue;
        if (best == NONE_BIN || x->psd[k] > x->psd[best]) {
            best = k;
            fb = f;
        }
    }
    if (best == NONE_BIN)
        return false;
    *hz = fb;
    return true;
}

typedef struct {
    double mains;
    size_t n;                    /* slots measured                                             */
    ml_component comp[ML_MAX_HUM];
    size_t bin[ML_MAX_HUM];
    double nu_noise[ML_MAX_HUM];
    double f_est[ML_MAX_HUM];    /* measured frequency of each slot's line (nominal if unknown)  */
    bool f_known[ML_MAX_HUM];    /* f_est was measured                                           */
    bool fund_resolved;          /* order 1 clears DC                                          */
    bool any_resolvable;         /* some order clears DC                                       */
    bool any_under_tone;         /* some order that clears DC lies on the tone or a harmonic   */
    bool multiples_unresolved;   /* some order's lobe overlaps the previous order's            */
    double det_power;            /* line power of the mains lines, multiples of 300 Hz left out */
    double det_power_all;        /* the same with them                                         */
    double first4;               /* power (noise included) of orders 1..4                       */
    double base_power;           /* the base line's line power (0: no mains lines)               */
    double mains_measured_hz;    /* from the base line; 0 when none                             */
    size_t ndet;                 /* mains lines                                                 */
} hum_scan;

/* Scans the multiples 1..h of mains. Slots touching the tone or a harmonic (marks) are skipped, and
 * so are (avoid != NONE_BIN) slots within two lobes of bin avoid, unless their peak is avoid
 * itself (the strongest line of the band may be a mains line). A slot's line is taken within 1 %
 * of its nominal frequency. Which of the lines above the noise are mains lines:
 *  - the base: the stronger line of the two lowest orders that clear DC (normally 50 and 100 Hz:
 *    the mains itself and the rectifier's ripple, one of which is in practice always the strongest
 *    hum component); no base, no mains lines (a lone line at 250 Hz is no hum);
 *  - a line of a higher order is a mains line if its frequency (phase advance) is its order times
 *    the base's within a quarter bin or 0.2 %, and it is less than 6 dB above the base: a line at
 *    a higher multiple that is stronger than that is a tone (the 6 dB rule of the header).
 * The others keep their figures but are not above_noise (not measured as hum). */
static void scan_hum(const ctx *x, double mains, int h, size_t avoid, double f_avoid, int avoid_harmonics,
                     hum_scan *s)
{
    *s = (hum_scan){.mains = mains};
    /* the strongest line (avoid, at f_avoid) is a mains line of this family, or its harmonics
     * (orders 2..avoid_harmonics) are no mains lines */
    const double m_av = f_avoid > 0 ? nearbyint(f_avoid / mains) : 0.0;
    const bool avoid_in = m_av >= 1 && m_av <= h && fabs(f_avoid - m_av * mains) <= HUM_TOL * m_av * mains;
    s->fund_resolved = ml_spectrum_clears_dc(x->spec, nearest_bin(mains, x->bin_hz));
    int low[2] = {0, 0}; /* the two lowest orders that clear DC */
    for (int mlt = 1; mlt <= h && s->n < ML_MAX_HUM; mlt++) {
        const double f = mlt * mains;
        const size_t c0 = nearest_bin(f, x->bin_hz);
        if (c0 + x->lobe >= x->nbins)
            break;
        if (!ml_spectrum_clears_dc(x->spec, c0))
            continue;
        if (s->n > 0 && c0 < s->bin[s->n - 1] + 2 * x->lobe + 1) {
            s->multiples_unresolved = true; /* inside the previous line's lobe */
            continue;
        }
        s->any_resolvable = true;
        if (low[0] == 0)
            low[0] = mlt;
        else if (low[1] == 0)
            low[1] = mlt;
        size_t tolb = (size_t)ceil(HUM_TOL * f / x->bin_hz), c = c0;
        if (tolb < 1)
            tolb = 1;
        for (size_t k = c0 > tolb ? c0 - tolb : 0; k <= c0 + tolb && k + x->lobe < x->nbins; k++)
            if (x->psd[k] > x->psd[c] && ml_spectrum_clears_dc(x->spec, k))
                c = k;
        /* the lobe is summed at the nominal bin (a line within a bin of it has its main lobe
         * inside), or at the peak when a line stands above the noise only there; the frequency is
         * read at the peak */
        const size_t cpk = c;
        c = c0;
        if (x->m != NULL && collides(x->m, x->nbins, c, x->lobe)) {
            s->any_under_tone = true;
            continue;
        }
        if (avoid != NONE_BIN && dist(cpk, avoid) > 1 && dist(c0, avoid) <= 2 * x->lobe)
            continue;
        if (avoid != NONE_BIN && !avoid_in) {
            const double hh = nearbyint(f / f_avoid);
            if (hh >= 2 && hh <= avoid_harmonics && dist(c0, nearest_bin(hh * f_avoid, x->bin_hz)) <= x->lobe)
                continue;
        }
        ml_component *o = &s->comp[s->n];
        line_stats(x, c, Z_LINE, o, &s->nu_noise[s->n]);
        if (!o->above_noise && dist(cpk, c0) > 1 && !(x->m != NULL && collides(x->m, x->nbins, cpk, x->lobe))) {
            ml_component alt;
            double nu_alt;
            line_stats(x, cpk, Z_LINE, &alt, &nu_alt);
            if (alt.above_noise) {
                *o = alt;
                s->nu_noise[s->n] = nu_alt;
                c = cpk;
            }
        }
        o->order = mlt;
        o->frequency_hz = f;
        s->f_est[s->n] = f;
        s->f_known[s->n] = o->above_noise && line_frequency(x, c0, tolb, &s->f_est[s->n]);
        if (s->f_known[s->n] && fabs(s->f_est[s->n] - f) > HUM_TOL * f)
            o->above_noise = false; /* a line, but not within 1 % of this multiple */
        s->bin[s->n] = c;
        if (mlt <= 4)
            s->first4 += o->power;
        s->n++;
    }
    /* the base line */
    size_t base = NONE_BIN;
    for (size_t i = 0; i < s->n; i++)
        if (s->comp[i].above_noise && (s->comp[i].order == low[0] || s->comp[i].order == low[1])
            && (base == NONE_BIN || s->comp[i].line_power > s->comp[base].line_power))
            base = i;
    if (base == NONE_BIN) {
        for (size_t i = 0; i < s->n; i++)
            s->comp[i].above_noise = false;
        return;
    }
    s->base_power = s->comp[base].line_power;
    const double fm = s->f_est[base] / s->comp[base].order;
    s->mains_measured_hz = fm;
    for (size_t i = 0; i < s->n; i++) {
        ml_component *o = &s->comp[i];
        if (!o->above_noise)
            continue;
        if (i != base && o->order != low[0] && o->order != low[1]) {
            const double tol = fmax(0.5 * x->bin_hz, 0.002 * o->frequency_hz);
            if ((s->f_known[i] && fabs(s->f_est[i] - o->order * fm) > tol) || o->line_power >= 4.0 * s->base_power) {
                o->above_noise = false;
                continue;
            }
        }
        s->ndet++;
        s->det_power_all += o->line_power;
        if (fmod(o->frequency_hz, 300.0) != 0.0)
            s->det_power += o->line_power;
    }
}

/* ---- the analysis floor -------------------------------------------------------------------- */

/* Mean over (some 64 of) the band's noise bins of what the analysis itself puts there: the
 * leakage of the lines given (frequency in bins, power; a real line leaks from +nu and from its
 * mirror -nu) through the window (exact, ml_window_leakage), plus the transform's rounding. The
 * rounding was measured for a bin-centred tone (periodic input, so its own rounding falls on its
 * harmonics): about 1e-29 of the tone's power per bin at 4096 points, growing in proportion to
 * nfft (numpy, double precision; 1e-28 per 4096 points keeps a 10 dB margin). */
static double floor_per_bin(const ctx *x, const double *nu, const double *pw, size_t nl, double pmax)
{
    const ml_window_type win = ml_spectrum_window(x->spec);
    const size_t nfft = ml_spectrum_nfft(x->spec), nband = x->khi - x->klo + 1;
    const size_t stride = nband > 64 ? nband / 64 : 1; /* leakage varies smoothly from bin to bin */
    double s = 0.0;
    size_t n = 0;
    for (size_t k = x->klo; k <= x->khi; k += stride) {
        if (!is_noise(x, k))
            continue;
        for (size_t l = 0; l < nl; l++)
            if (pw[l] > 0)
                s += pw[l] * (ml_window_leakage(win, nfft, (double)k - nu[l]) + ml_window_leakage(win, nfft, (double)k + nu[l]));
        n++;
    }
    const double rounding = ROUNDING_PER_BIN * fmax(1.0, (double)nfft / 4096.0) * pmax;
    return (n ? s / (double)n : 0.0) + rounding;
}

/* ---- figures ------------------------------------------------------------------------------- */

static ml_figure fig(ml_fig_state st, double v, ml_audio_why why)
{
    return (ml_figure){.state = st, .value = st == ML_FIG_NONE ? NAN : v, .why = why};
}

/* Keeps a figure inside [lo, hi] (header): a reading beyond becomes a bound at the limit, a
 * bound that says nothing inside the range becomes not measurable. */
static void clamp_fig(ml_figure *f, double lo, double hi)
{
    if (f->state == ML_FIG_NONE)
        return;
    const double v = f->value;
    if (!(v >= lo)) { /* below, or NaN */
        if (f->state == ML_FIG_LOWER || isnan(v))
            *f = fig(ML_FIG_NONE, NAN, ML_WHY_OUT_OF_RANGE);
        else
            *f = fig(ML_FIG_UPPER, lo, ML_WHY_OUT_OF_RANGE);
    } else if (v > hi) {
        if (f->state == ML_FIG_UPPER)
            *f = fig(ML_FIG_NONE, NAN, ML_WHY_OUT_OF_RANGE);
        else
            *f = fig(ML_FIG_LOWER, hi, ML_WHY_OUT_OF_RANGE);
    }
}

static ml_fig_state flip(ml_fig_state s)
{
    return s == ML_FIG_UPPER ? ML_FIG_LOWER : s == ML_FIG_LOWER ? ML_FIG_UPPER : s;
}

/* ---- hum alone ----------------------------------------------------------------------------- */

ml_status ml_hum_analyze_psd(const ml_spectrum *spec, const double *psd, size_t nbins, double mains_hz,
                             int hum_harmonics, ml_audio_result *out)
{
    if (spec == NULL || psd == NULL || out == NULL || nbins != ml_spectrum_nbins(spec)
        || ml_spectrum_is_complex(spec) || hum_harmonics < 1 || hum_harmonics > ML_MAX_HUM
        || !(mains_hz == 0 || mains_hz == 50 || mains_hz == 60))
        return ML_EINVAL;
    *out = (ml_audio_result){0};
    const size_t lobe = ml_spectrum_lobe_bins(spec);
    ctx x = {.spec = spec, .psd = psd, .m = NULL, .nbins = nbins, .lobe = lobe, .klo = lobe,
             .khi = nbins - 1, .enbw = ml_spectrum_enbw_bins(spec),
             .bin_hz = ml_spectrum_rate_hz(spec) / (double)ml_spectrum_nfft(spec)};
    x.dof_lobe = dof(&x, 2 * lobe + 1);
    if (x.khi < x.klo)
        return ML_EINVAL;
    size_t slots[2 * ML_MAX_HUM];
    for (int j = 0; j < 2; j++)
        for (int mlt = 1; mlt <= hum_harmonics; mlt++)
            slots[x.nslot++] = nearest_bin(mlt * (j ? 60.0 : 50.0), x.bin_hz);
    x.slot = slots;
    double pmax = 0.0;
    for (size_t k = x.klo; k <= x.khi; k++)
        pmax = fmax(pmax, psd[k]);
    x.floor_bin = floor_per_bin(&x, NULL, NULL, 0, pmax);
    out->bin_hz = x.bin_hz;
    double mains = mains_hz;
    if (mains == 0) {
        hum_scan s50, s60;
        scan_hum(&x, 50.0, 4, NONE_BIN, 0.0, 0, &s50);
        scan_hum(&x, 60.0, 4, NONE_BIN, 0.0, 0, &s60);
        mains = s60.first4 > s50.first4 ? 60.0 : 50.0;
        out->mains_detected = true;
    }
    hum_scan s;
    scan_hum(&x, mains, hum_harmonics, NONE_BIN, 0.0, 0, &s);
    out->mains_hz = mains;
    out->nhum = s.n;
    for (size_t i = 0; i < s.n; i++) {
        out->hum[i] = s.comp[i];
        out->hum_power += s.comp[i].power;
    }
    return ML_OK;
}

/* The bin of the first harmonic listed in out. */
static size_t hbin_first(const ml_audio_result *out, double bin_hz)
{
    return nearest_bin(out->harmonics[0].frequency_hz, bin_hz);
}

ml_status ml_line_measure(const ml_spectrum *spec, const double *psd, size_t nbins, size_t c, const size_t *excl,
                          size_t nexcl, ml_component *out)
{
    if (spec == NULL || psd == NULL || out == NULL || nbins != ml_spectrum_nbins(spec) || ml_spectrum_is_complex(spec)
        || (excl == NULL && nexcl > 0) || nexcl > 64)
        return ML_EINVAL;
    const size_t lobe = ml_spectrum_lobe_bins(spec);
    if (!ml_spectrum_clears_dc(spec, c) || c + lobe >= nbins)
        return ML_EINVAL;
    ctx x = {.spec = spec, .psd = psd, .m = NULL, .nbins = nbins, .lobe = lobe, .klo = lobe, .khi = nbins - 1,
             .enbw = ml_spectrum_enbw_bins(spec), .bin_hz = ml_spectrum_rate_hz(spec) / (double)ml_spectrum_nfft(spec),
             .slot = excl, .nslot = nexcl};
    x.dof_lobe = dof(&x, 2 * lobe + 1);
    *out = (ml_component){0};
    line_stats(&x, c, Z_LINE, out, NULL);
    out->frequency_hz = (double)c * x.bin_hz;
    return ML_OK;
}

/* ---- the analysis ---------------------------------------------------------------------------- */

/* The strongest bin in [lo, hi] whose marks allow it (m NULL: any); NONE_BIN when none. */
static size_t strongest(const double *psd, const unsigned char *m, size_t lo, size_t hi)
{
    size_t best = NONE_BIN;
    for (size_t k = lo; k <= hi; k++)
        if ((m == NULL || m[k] != BIN_EXCL) && (best == NONE_BIN || psd[k] > psd[best]))
            best = k;
    return best;
}

/* The strongest bin in [lo, hi] farther than half from every one of the n ascending centres;
 * NONE_BIN when none. */
static size_t strongest_skipping(const ctx *x, size_t lo, size_t hi, const size_t *centre, size_t n, size_t half)
{
    size_t best = NONE_BIN, j = 0;
    double vbest = 0.0;
    for (size_t k = lo; k <= hi; k++) {
        while (j < n && centre[j] + half < k)
            j++;
        if (j < n && centre[j] <= k + half)
            continue;
        const double v = x->psd[k] - skirt_at(x, k); /* a bin on a skipped line's skirt is not a line */
        if (best == NONE_BIN || v > vbest) {
            best = k;
            vbest = v;
        }
    }
    return best;
}

/* Restores the first look's marks to noise (keeping DC and OUT). */
static void clear_marks(unsigned char *m, const ctx *x)
{
    for (size_t k = 0; k < x->nbins; k++) { /* branch-free: the compiler vectorises it */
        const unsigned char v = m[k];
        m[k] = (v == BIN_DC || v == BIN_OUT) ? v : (unsigned char)BIN_NOISE;
    }
}

/* The base marks: DC below lobe, OUT outside [klo, khi], NOISE in the band. */
static void base_marks(unsigned char *m, const ctx *x)
{
    memset(m, BIN_DC, x->lobe);
    memset(m + x->lobe, BIN_OUT, x->klo - x->lobe);
    memset(m + x->klo, BIN_NOISE, x->khi - x->klo + 1);
    memset(m + x->khi + 1, BIN_OUT, x->nbins - x->khi - 1);
}

/* Sum of psd[lo..hi] (0 when lo > hi) in four lanes: one running sum would make the loop wait on
 * the adder's latency at every bin. */
static double range_sum(const double *psd, size_t lo, size_t hi)
{
    double a[4] = {0.0, 0.0, 0.0, 0.0};
    size_t k = lo;
    for (; k + 3 <= hi; k += 4) {
        a[0] += psd[k];
        a[1] += psd[k + 1];
        a[2] += psd[k + 2];
        a[3] += psd[k + 3];
    }
    for (; k <= hi; k++)
        a[0] += psd[k];
    return (a[0] + a[1]) + (a[2] + a[3]);
}

/* From bin k up the slope to the local maximum of psd, at most lobe bins away and never into bin 0:
 * a line whose centre lies just outside the band (a 20 Hz tone at the band's edge) is found at its
 * own bin, where the frequency estimate is valid, not on its flank. */
static size_t climb(const double *psd, size_t nbins, size_t k, size_t lobe)
{
    for (size_t step = 0; step < lobe; step++) {
        if (k > 1 && psd[k - 1] > psd[k] && (k + 1 >= nbins || psd[k - 1] >= psd[k + 1]))
            k--;
        else if (k + 2 < nbins && psd[k + 1] > psd[k])
            k++;
        else
            break;
    }
    return k;
}

/* Marks for the first look (robust densities before anything is decided): DC, outside the band,
 * and as excluded the lobes of the strongest line, of its harmonics and of every mains multiple
 * of both families (or of the mains given). */
static void first_marks(unsigned char *m, const ctx *x, size_t ks, double f_strong, const ml_audio_config *cfg)
{
    base_marks(m, x);
    mark(m, x->nbins, ks, x->lobe, BIN_EXCL);
    for (int h = 2; h <= cfg->harmonics; h++) {
        const size_t c = nearest_bin(h * f_strong, x->bin_hz);
        if (c + x->lobe >= x->nbins)
            break;
        mark(m, x->nbins, c, x->lobe, BIN_EXCL);
    }
    for (int j = 0; j < 2; j++) {
        const double mains = cfg->mains_hz > 0 ? cfg->mains_hz : (j ? 60.0 : 50.0);
        for (int mlt = 1; mlt <= cfg->hum_harmonics; mlt++) {
            const double f = mlt * mains;
            size_t tolb = (size_t)ceil(HUM_TOL * f / x->bin_hz);
            const size_t c = nearest_bin(f, x->bin_hz);
            if (c + x->lobe + tolb >= x->nbins)
                break;
            for (size_t d = 0; d <= 2 * tolb; d++)
                if (c + d >= tolb)
                    mark(m, x->nbins, c + d - tolb, x->lobe, BIN_EXCL);
        }
    }
}

typedef struct {
    size_t bin;
    double power, noise, margin_db;
    bool stat_ok, clear;
} tone_look;

/* The candidate at bin c against the noise around it (header, rule 3 without the mains test). */
static void look_at(const ctx *x, size_t c, tone_look *t)
{
    ml_component o;
    double nu = INFINITY;
    line_stats(x, c, Z_TONE, &o, &nu);
    t->bin = c;
    t->power = o.power;
    t->noise = o.noise_power;
    t->stat_ok = o.above_noise;
    /* a third of an octave around c (never narrower than the lobe: the instrument's resolution),
     * its noise density the median over (at least) that width centred on c */
    double third = (double)c * (pow(2.0, 1.0 / 6.0) - pow(2.0, -1.0 / 6.0));
    if (third < (double)(2 * x->lobe + 1))
        third = (double)(2 * x->lobe + 1);
    const double nd = fmax(local_density_robust(x, c, (size_t)ceil(third / 2.0)), floor_at(x, c));
    const double n3 = nd * third / x->enbw;
    /* a lobe that reaches into DC's holds DC's leakage too: only its bins beyond DC's lobe are the
     * line's own (the whole lobe of an unmodulated carrier's envelope, flat noise beside DC's
     * leakage, would otherwise stand clear) */
    double own = o.power;
    if (!ml_spectrum_clears_dc(x->spec, c)) {
        own = 0.0;
        for (size_t k = c > 2 * x->lobe ? c - x->lobe : x->lobe; k <= c + x->lobe && k < x->nbins; k++)
            own += fmax(0.0, x->psd[k] - skirt_at(x, k));
        own /= x->enbw;
    }
    t->margin_db = n3 > 0 && own > 0 ? 10.0 * log10(own / n3) : (own > 0 ? INFINITY : NAN);
    t->clear = t->stat_ok && t->margin_db >= ML_TONE_CLEAR_DB;
}

/* Marks the lobes of the mains family's slots (peak bins of a scan) as what. */
static void mark_slots(unsigned char *m, const ctx *x, const hum_scan *s, bool detected_only, unsigned char what)
{
    for (size_t i = 0; i < s->n; i++)
        if (!detected_only || s->comp[i].above_noise)
            mark(m, x->nbins, s->bin[i], x->lobe, what);
}

/* The nominal slots of a mains family, marked as what (before a scan knows their peaks). */
static void mark_nominal(unsigned char *m, const ctx *x, double mains, int h, unsigned char what)
{
    for (int mlt = 1; mlt <= h; mlt++) {
        const double f = mlt * mains;
        const size_t tolb = (size_t)ceil(HUM_TOL * f / x->bin_hz), c = nearest_bin(f, x->bin_hz);
        if (c + x->lobe + tolb >= x->nbins)
            break;
        for (size_t d = 0; d <= 2 * tolb; d++)
            if (c + d >= tolb)
                mark(m, x->nbins, c + d - tolb, x->lobe, what);
    }
}

/* Steps 4 to 6 of ml_audio_analyze: marks for the tone at bin kf (frequency f1; NONE_BIN: no tone)
 * and its harmonics, the mains family's final scan, noise with and without hum, the tone's and
 * harmonics' powers and the residual. Writes those fields of out (and fin, nu_h, *nres). */
static void measure_pass(ctx *xp, const ml_audio_config *cfg, size_t kf, double f1, double mains,
                         bool mains_found, ml_audio_result *out, hum_scan *finp, double *nu_h, size_t *nresp)
{
    ctx x_ = *xp, *xc = &x_;
    unsigned char *m = (unsigned char *)xp->m;
    const double *psd = xc->psd;
    const size_t nbins = xc->nbins, lobe = xc->lobe, klo = xc->klo, khi = xc->khi, nband = khi - klo + 1;
    const double enbw = xc->enbw, bin_hz = xc->bin_hz, band_hi = out->band_hi_hz;
    const double nyq = ml_spectrum_rate_hz(xc->spec) / 2.0;
    out->fundamental_hz = 0.0;
    out->fundamental_power = 0.0;
    out->distortion_power = 0.0;
    out->nharmonics = 0;
    out->hum_power = 0.0;
    /* 4. the final marks: the tone and its harmonics, then the mains family */
    clear_marks(m, xc);
    size_t hbin[ML_MAX_HARMONICS];
    if (kf != NONE_BIN) {
        out->fundamental_hz = f1;
        mark(m, nbins, kf, lobe, BIN_FUND);
        for (int h = 2; h <= cfg->harmonics; h++) {
            const double fh = h * out->fundamental_hz;
            if (fh > band_hi || fh >= nyq)
                break;
            const size_t c = nearest_bin(fh, bin_hz);
            if (c > khi)
                break;
            hbin[out->nharmonics] = c;
            out->harmonics[out->nharmonics] = (ml_component){.order = h, .frequency_hz = fh};
            out->nharmonics++;
            mark(m, nbins, c, lobe, BIN_HARM);
        }
    }
    hum_scan fin;
    mark_nominal(m, xc, mains, cfg->hum_harmonics, BIN_EXCL);
    scan_hum(xc, mains, cfg->hum_harmonics, NONE_BIN, 0.0, 0, &fin);
    const size_t top = nearest_bin(cfg->hum_harmonics * mains * (1.0 + HUM_TOL), bin_hz) + lobe + 2;
    for (size_t k = 0; k < nbins && k <= top; k++) /* mark_nominal marked nothing above */
        if (m[k] == BIN_EXCL)
            m[k] = (k < klo || k > khi) ? BIN_OUT : BIN_NOISE;
    if (!mains_found) /* lines at the multiples of a mains that has none above the noise are noise */
        for (size_t i = 0; i < fin.n; i++)
            fin.comp[i].above_noise = false;
    mark_slots(m, xc, &fin, true, BIN_HUM);
    out->nhum = fin.n;
    for (size_t i = 0; i < fin.n; i++) {
        out->hum[i] = fin.comp[i];
        out->hum_power += fin.comp[i].power;
    }

    /* 5. noise: with hum (legacy N) and without */
    double na[4] = {0.0, 0.0, 0.0, 0.0}, ha[4] = {0.0, 0.0, 0.0, 0.0};
    size_t ncount = 0, hcount = 0;
    for (size_t k = klo; k <= khi; k++) { /* four lanes, no branches (range_sum) */
        const int isn = m[k] == BIN_NOISE, ish = m[k] == BIN_HUM;
        na[k & 3] += isn ? psd[k] : 0.0;
        ha[k & 3] += ish ? psd[k] : 0.0;
        ncount += (size_t)isn;
        hcount += (size_t)ish;
    }
    const double nsum = (na[0] + na[1]) + (na[2] + na[3]), hsum = (ha[0] + ha[1]) + (ha[2] + ha[3]);
    const double nd_nohum = ncount ? nsum / (double)ncount : 0.0;
    const double nd = ncount + hcount ? (nsum + hsum) / (double)(ncount + hcount) : 0.0;
    out->noise_density = nd / enbw;
    out->noise_power = nd * (double)nband / enbw;
    out->noise_nohum_power = nd_nohum * (double)nband / enbw;

    /* 6. the tone, its harmonics, the residual */
    if (kf != NONE_BIN) {
        out->fundamental_power = component_power(psd, nbins, kf, lobe, enbw);
        for (size_t i = 0; i < out->nharmonics; i++) {
            ml_component *h = &out->harmonics[i];
            const int order = h->order;
            const double fh = h->frequency_hz;
            line_stats(xc, hbin[i], Z_LINE, h, &nu_h[i]);
            h->order = order;
            h->frequency_hz = fh;
            if (hbin[i] < kf + 2 * lobe + 1) /* its lobe overlaps the fundamental's */
                h->above_noise = false;
            out->distortion_power += h->power;
        }
    }
    /* the band outside the fundamental's lobe (a contiguous range: two range sums), and the
     * harmonic lobes' parts beyond the band (a harmonic's centre lies in it) */
    double resid = 0.0;
    size_t nres = nband;
    if (kf != NONE_BIN) {
        const size_t flo = kf > lobe ? kf - lobe : 0, fhi = kf + lobe < nbins ? kf + lobe : nbins - 1;
        if (flo > klo)
            resid += range_sum(psd, klo, flo - 1 < khi ? flo - 1 : khi);
        if (fhi < khi)
            resid += range_sum(psd, fhi + 1 > klo ? fhi + 1 : klo, khi);
        const size_t a = flo > klo ? flo : klo, b = fhi < khi ? fhi : khi;
        if (a <= b)
            nres -= b - a + 1;
    } else {
        resid = range_sum(psd, klo, khi);
    }
    for (size_t k = khi + 1; k < nbins && k <= khi + lobe; k++)
        resid += m[k] == BIN_HARM ? psd[k] : 0.0;
    out->residual_power = resid / enbw;
    out->band_power = out->fundamental_power + out->residual_power;
    *finp = fin;
    *nresp = nres;
}


ml_status ml_audio_analyze(const ml_spectrum *spec, const ml_audio_config *cfg, ml_audio_result *out)
{
    if (spec == NULL || cfg == NULL || out == NULL || ml_spectrum_is_complex(spec))
        return ML_EINVAL;
    const double rate = ml_spectrum_rate_hz(spec), nyq = rate / 2.0;
    if (!(cfg->band_lo_hz >= 0) || !(cfg->band_hi_hz > cfg->band_lo_hz) || cfg->harmonics < 2
        || cfg->harmonics > ML_MAX_HARMONICS || cfg->hum_harmonics < 1 || cfg->hum_harmonics > ML_MAX_HUM
        || !(cfg->tone_hz >= 0) || !(cfg->mains_hz == 0 || cfg->mains_hz == 50 || cfg->mains_hz == 60)
        || (unsigned)cfg->tone_mode > ML_TONE_NONE)
        return ML_EINVAL;
    const size_t nbins = ml_spectrum_nbins(spec), nfft = ml_spectrum_nfft(spec);
    const size_t lobe = ml_spectrum_lobe_bins(spec);
    const double enbw = ml_spectrum_enbw_bins(spec), bin_hz = rate / (double)nfft;
    const double band_hi = cfg->band_hi_hz < nyq ? cfg->band_hi_hz : nyq;
    if (!(band_hi > cfg->band_lo_hz))
        return ML_EINVAL;
    if (cfg->tone_hz > 0 && (cfg->tone_hz < cfg->band_lo_hz || cfg->tone_hz > band_hi))
        return ML_EINVAL;
    size_t klo = (size_t)ceil(cfg->band_lo_hz / bin_hz), khi = (size_t)floor(band_hi / bin_hz);
    if (khi > nbins - 1)
        khi = nbins - 1;
    if (klo < lobe)
        klo = lobe; /* DC and its lobe never count as signal or noise */
    if (klo + 2 * lobe + 1 > khi)
        return ML_EINVAL;
    if (ml_spectrum_segments(spec) == 0)
        return ML_ENOSIGNAL;

    double *psd = malloc(nbins * sizeof *psd);
    unsigned char *m = malloc(nbins);
    if (psd == NULL || m == NULL) {
        free(psd);
        free(m);
        return ML_ENOMEM;
    }
    *out = (ml_audio_result){0};
    out->bin_hz = bin_hz;
    out->band_lo_hz = cfg->band_lo_hz;
    out->band_hi_hz = band_hi;
    out->candidate_margin_db = NAN;
    ml_status st = ml_spectrum_get_psd(spec, psd, nbins);
    if (st != ML_OK)
        goto done;
    ctx x = {.spec = spec, .psd = psd, .m = m, .nbins = nbins, .lobe = lobe, .klo = klo, .khi = khi,
             .enbw = enbw, .bin_hz = bin_hz};
    x.dof_lobe = dof(&x, 2 * lobe + 1);
    const size_t nband = khi - klo + 1;
    const double band_in = range_sum(psd, klo, khi);
    if (!(band_in > 0)) {
        st = ML_ENOSIGNAL;
        goto done;
    }
    /* 1. the strongest line, the first look's marks and the analysis floor */
    size_t ks = strongest(psd, NULL, klo, khi);
    if (ks == klo || ks == khi) /* at the band's edge: the line's own bin may lie outside */
        ks = climb(psd, nbins, ks, lobe);
    double f_strong = (double)ks * bin_hz;
    if (ks > 0 && ks + 1 < nbins)
        ml_spectrum_get_frequency(spec, ks, &f_strong);
    first_marks(m, &x, ks, f_strong, cfg);
    {
        const double nu[2] = {f_strong / bin_hz, 0.0};
        const double pw[2] = {component_power(psd, nbins, ks, lobe, enbw), psd[0]};
        x.floor_bin = floor_per_bin(&x, nu, pw, 2, psd[ks]);
        x.floor_n = 2;
        memcpy(x.floor_nu, nu, sizeof nu);
        memcpy(x.floor_pw, pw, sizeof pw);
        x.floor_round = ROUNDING_PER_BIN * fmax(1.0, (double)nfft / 4096.0) * psd[ks];
    }
    out->floor_density = x.floor_bin / enbw;

    /* 2. mains lines: each family scanned with the first look's marks */
    hum_scan s50 = {0}, s60 = {0};
    if (cfg->mains_hz != 60)
        scan_hum(&x, 50.0, cfg->hum_harmonics, ks, f_strong, cfg->harmonics, &s50);
    if (cfg->mains_hz != 50)
        scan_hum(&x, 60.0, cfg->hum_harmonics, ks, f_strong, cfg->harmonics, &s60);
    const hum_scan *fam = NULL; /* the family whose lines stand above the noise */
    if (cfg->mains_hz == 50)
        fam = &s50;
    else if (cfg->mains_hz == 60)
        fam = &s60;
    else {
        double p50 = s50.det_power, p60 = s60.det_power;
        if (p50 == 0 && p60 == 0) {
            p50 = s50.det_power_all;
            p60 = s60.det_power_all;
        }
        if (p50 > 0 || p60 > 0)
            fam = p60 > p50 ? &s60 : &s50;
    }
    const bool mains_found = fam != NULL && fam->ndet > 0;
    /* the family measured: the detected one, else (legacy choice) the one with more power in its
     * first four multiples */
    const double mains = fam ? fam->mains : (s60.first4 > s50.first4 ? 60.0 : 50.0);
    out->mains_hz = mains;
    out->mains_detected = cfg->mains_hz == 0;
    out->hum_fundamental_resolved = ml_spectrum_clears_dc(spec, nearest_bin(mains, bin_hz));

    /* 3. the candidate and the tone decision */
    size_t cand = NONE_BIN;
    bool at_mains = false;
    struct skirt sk = {0}; /* the mains lines' skirts, while the tone is looked for */
    if (cfg->tone_hz > 0) {
        const size_t c = nearest_bin(cfg->tone_hz, bin_hz);
        const size_t lo = c > klo + lobe ? c - lobe : klo, hi = c + lobe < khi ? c + lobe : khi;
        cand = strongest(psd, NULL, lo, hi);
    } else {
        /* outside the lobes of the mains lines */
        size_t skip[ML_MAX_HUM], nskip = 0;
        for (size_t i = 0; mains_found && i < fam->n; i++)
            if (fam->comp[i].above_noise) {
                skip[nskip++] = fam->bin[i];
                skirt_add(&x, &sk, fam->f_known[i] ? fam->f_est[i] / bin_hz : (double)fam->bin[i],
                          fam->comp[i].line_power);
            }
        x.sk = &sk;
        cand = strongest_skipping(&x, klo, khi, skip, nskip, lobe);
        if (cand == NONE_BIN && cfg->tone_mode == ML_TONE_FORCE)
            cand = ks;
    }
    tone_look look = {.bin = NONE_BIN, .margin_db = NAN};
    if (cand != NONE_BIN && (cand == klo || cand == khi))
        cand = climb(psd, nbins, cand, lobe);
    if (cand != NONE_BIN && cand > 0 && cand + 1 < nbins) {
        look_at(&x, cand, &look);
        out->candidate_hz = (double)cand * bin_hz;
        ml_spectrum_get_frequency(spec, cand, &out->candidate_hz);
        out->candidate_margin_db = look.margin_db;
        /* a multiple of the mains is hum unless 6 dB above the strongest mains line */
        if (mains_found && cfg->tone_hz == 0) {
            const double fm = fam->mains_measured_hz > 0 ? fam->mains_measured_hz : fam->mains;
            const double order = nearbyint(out->candidate_hz / fm);
            if (order >= 1 && fabs(out->candidate_hz - order * fm) <= fmax(bin_hz, 0.05 * order)
                && look.power < 4.0 * fam->base_power) {
                if (order <= cfg->hum_harmonics) {
                    /* one the scan left out (its lobe overlaps the previous multiple's on a short
                     * capture): hum, not a test tone */
                    at_mains = true;
                } else {
                    /* a higher one, if a line of a buzz: a neighbouring multiple stands above the
                     * noise too (a lone line that happens to fall on a multiple, 6 kHz beside 50 Hz
                     * hum, is a tone) */
                    ml_component nb[2];
                    for (int i = 0; i < 2; i++)
                        line_stats(&x, nearest_bin((order + (i ? 1.0 : -1.0)) * fm, bin_hz), Z_TONE, &nb[i], NULL);
                    at_mains = nb[0].above_noise || nb[1].above_noise;
                }
            }
        }
    }
    x.sk = NULL;
    out->tone_clear = look.clear && !at_mains;
    switch (cfg->tone_mode) {
    case ML_TONE_NONE:
        out->tone_present = false;
        out->tone_why = ML_WHY_TONE_OFF;
        break;
    case ML_TONE_FORCE:
        out->tone_present = look.bin != NONE_BIN;
        out->tone_why = out->tone_present ? ML_WHY_TONE_FORCED : ML_WHY_TONE_NOT_CLEAR;
        break;
    default:
        out->tone_present = out->tone_clear;
        out->tone_why = out->tone_clear         ? ML_WHY_TONE_CLEAR
                        : cfg->tone_hz > 0      ? ML_WHY_TONE_NOT_AT_HZ
                        : mains_found           ? ML_WHY_TONE_ONLY_HUM
                                                : ML_WHY_TONE_NOT_CLEAR;
        break;
    }

    /* 4.-6. the measurement proper: with the tone, or without one. Without a tone the fields that
     * current callers read as tone figures describe, as before tone decisions existed, the band's
     * strongest line (a second pass, kept apart from the figures) */
    const size_t kf = out->tone_present ? look.bin : NONE_BIN;
    hum_scan fin;
    double nu_h[ML_MAX_HARMONICS];
    size_t nres = 0;
    measure_pass(&x, cfg, kf, out->candidate_hz, mains, mains_found, out, &fin, nu_h, &nres);
    ml_audio_result legacy;
    if (kf == NONE_BIN) {
        hum_scan lfin;
        double lnu[ML_MAX_HARMONICS];
        size_t lres = 0;
        legacy = *out;
        /* as before: the strongest bin of the band, or the strongest near tone_hz */
        const bool near = cfg->tone_hz > 0 && look.bin != NONE_BIN;
        measure_pass(&x, cfg, near ? look.bin : ks, near ? out->candidate_hz : f_strong, mains, mains_found,
                     &legacy, &lfin, lnu, &lres);
    }

    /* 7. the figures */
    ml_audio_figures *F = &out->figures;
    const double p1 = out->fundamental_power;
    const bool tone = kf != NONE_BIN && p1 > 0;
    const ml_audio_why notone = out->tone_why;
    ml_audio_why tq = ML_WHY_OK;
    if (tone && !out->tone_clear)
        tq = ML_WHY_TONE_WEAK;
    if (tone && !ml_spectrum_clears_dc(spec, kf))
        tq = ML_WHY_TONE_DC;
    F->fundamental_hz = tone ? fig(ML_FIG_MEASURED, out->fundamental_hz, tq) : fig(ML_FIG_NONE, NAN, notone);
    F->fundamental = tone ? fig(ML_FIG_MEASURED, p1, tq) : fig(ML_FIG_NONE, NAN, notone);

    /* THD: the harmonics above the noise, and what the others could hide */
    if (!tone)
        F->thd = fig(ML_FIG_NONE, NAN, notone);
    else if (out->nharmonics == 0)
        F->thd = fig(ML_FIG_NONE, NAN, ML_WHY_NO_HARMONIC_IN_BAND);
    else if (hbin_first(out, bin_hz) < kf + 2 * lobe + 1)
        F->thd = fig(ML_FIG_NONE, NAN, ML_WHY_HARMONICS_UNRESOLVED);
    else {
        double dmeas = 0.0;
        size_t nhid = 0;
        for (size_t i = 0; i < out->nharmonics; i++) {
            if (out->harmonics[i].above_noise)
                dmeas += out->harmonics[i].line_power;
            else
                nhid++;
        }
        const double hidden = nhid ? joint_upper(&x, out->harmonics, nu_h, out->nharmonics, false) : 0.0;
        if (nhid == 0 || (dmeas > 0 && hidden <= THD_HIDDEN * dmeas))
            F->thd = fig(ML_FIG_MEASURED, dmeas / p1, ML_WHY_OK);
        else
            F->thd = fig(ML_FIG_UPPER, fmax(dmeas + hidden, 4.0 * x.floor_bin / enbw) / p1,
                         ML_WHY_HARMONICS_IN_NOISE);
    }

    /* THD+N and SINAD: the residual against the floor over the same bins */
    const double r_floor = x.floor_bin * (double)nres / enbw;
    if (!tone) {
        F->thdn = F->sinad = F->enob = F->snr = fig(ML_FIG_NONE, NAN, notone);
    } else {
        if (out->residual_power <= FLOOR_MARGIN * r_floor)
            F->thdn = fig(ML_FIG_UPPER, fmax(out->residual_power, r_floor) / p1, ML_WHY_AT_FLOOR);
        else
            F->thdn = fig(ML_FIG_MEASURED, out->residual_power / p1, ML_WHY_OK);
        F->sinad = fig(flip(F->thdn.state), 1.0 / F->thdn.value, F->thdn.why);
        const double sinad_db = 10.0 * log10(F->sinad.value), e = ml_enob_bits(sinad_db);
        F->enob = fig(F->sinad.state, e, F->sinad.why);
    }
    /* noise, with and without hum, against the floor */
    const double n_floor = x.floor_bin * (double)nband / enbw;
    const bool n_at = out->noise_power <= FLOOR_MARGIN * n_floor;
    const bool nn_at = out->noise_nohum_power <= FLOOR_MARGIN * n_floor;
    F->noise = n_at ? fig(ML_FIG_UPPER, fmax(out->noise_power, n_floor), ML_WHY_AT_FLOOR)
                    : fig(ML_FIG_MEASURED, out->noise_power, ML_WHY_OK);
    F->noise_nohum = nn_at ? fig(ML_FIG_UPPER, fmax(out->noise_nohum_power, n_floor), ML_WHY_AT_FLOOR)
                           : fig(ML_FIG_MEASURED, out->noise_nohum_power, ML_WHY_OK);
    if (tone)
        F->snr = fig(flip(F->noise.state), p1 / F->noise.value, F->noise.why);

    /* hum and mains: the final scan's lines; bounds where none stands above the noise */
    const double lobe_floor = x.floor_bin * (double)(2 * lobe + 1) / enbw;
    const ml_figure given = fig(ML_FIG_MEASURED, cfg->mains_hz, ML_WHY_MAINS_GIVEN);
    double fin_hum = 0.0; /* the final scan's mains lines (none may remain above its noise) */
    for (size_t i = 0; i < fin.n; i++)
        if (fin.comp[i].above_noise)
            fin_hum += fin.comp[i].line_power;
    if (!s50.any_resolvable && !s60.any_resolvable && !fin.any_resolvable) {
        F->hum = fig(ML_FIG_NONE, NAN, ML_WHY_HUM_UNRESOLVED);
        F->mains_hz = cfg->mains_hz > 0 ? given : fig(ML_FIG_NONE, NAN, ML_WHY_HUM_UNRESOLVED);
    } else if (fin.ndet > 0 && fin_hum > 0) {
        const double h = fin_hum;
        F->hum = fin.fund_resolved && !fin.multiples_unresolved ? fig(ML_FIG_MEASURED, h, ML_WHY_OK)
                                                                 : fig(ML_FIG_LOWER, h, ML_WHY_HUM_PARTIAL);
        F->mains_hz = cfg->mains_hz > 0 ? given : fig(ML_FIG_MEASURED, mains, ML_WHY_OK);
    } else if (fin.n == 0 && fin.any_under_tone) {
        F->hum = fig(ML_FIG_NONE, NAN, ML_WHY_HUM_UNDER_TONE);
        F->mains_hz = cfg->mains_hz > 0 ? given : fig(ML_FIG_NONE, NAN, ML_WHY_HUM_UNDER_TONE);
    } else {
        /* hidden in the noise: the measured family's bound, or (none found) the larger of both */
        double u = joint_upper(&x, fin.comp, fin.nu_noise, fin.n, true);
        if (cfg->mains_hz == 0 && !mains_found)
            u = fmax(joint_upper(&x, s50.comp, s50.nu_noise, s50.n, true),
                     joint_upper(&x, s60.comp, s60.nu_noise, s60.n, true));
        F->hum = fig(ML_FIG_UPPER, fmax(u, lobe_floor), ML_WHY_HUM_IN_NOISE);
        F->mains_hz = cfg->mains_hz > 0 ? given : fig(ML_FIG_NONE, NAN, ML_WHY_MAINS_NONE);
    }
    if (tone && F->hum.state != ML_FIG_NONE)
        F->hum_rel = fig(F->hum.state, F->hum.value / p1, F->hum.why);
    else
        F->hum_rel = fig(ML_FIG_NONE, NAN, tone ? F->hum.why : notone);

    /* 8. the reportable range */
    const double rlo = pow(10.0, -ML_FIGURE_DB_LIMIT / 10.0), rhi = pow(10.0, ML_FIGURE_DB_LIMIT / 10.0);
    ml_figure *ratios[] = {&F->thd, &F->thdn, &F->sinad, &F->snr, &F->hum_rel};
    for (size_t i = 0; i < sizeof ratios / sizeof ratios[0]; i++)
        clamp_fig(ratios[i], rlo, rhi);
    ml_figure *powers[] = {&F->fundamental, &F->noise, &F->noise_nohum, &F->hum};
    for (size_t i = 0; i < sizeof powers / sizeof powers[0]; i++)
        clamp_fig(powers[i], 0.5 * rlo, 0.5 * rhi);
    clamp_fig(&F->enob, 0.0, ML_ENOB_MAX_BITS);
    if (kf == NONE_BIN) {
        out->fundamental_hz = legacy.fundamental_hz;
        out->fundamental_power = legacy.fundamental_power;
        out->nharmonics = legacy.nharmonics;
        for (size_t i = 0; i < legacy.nharmonics; i++)
            out->harmonics[i] = legacy.harmonics[i];
        out->distortion_power = legacy.distortion_power;
        out->band_power = legacy.band_power;
        out->noise_power = legacy.noise_power;
        out->noise_density = legacy.noise_density;
    }
    st = ML_OK;
done:
    free(psd);
    free(m);
    return st;
}

/* ---- the analysis transform ---------------------------------------------------------------- */

/* The mains f resolved by a window of nterms terms at nfft points: its fundamental clears DC (the
 * rule of ml_spectrum_clears_dc with DC removal, c >= lobe + 1, lobe = terms + 1) and, when
 * spaced, its multiples each other (f at least 2 lobe + 1 bins). */
static bool resolves(size_t nterms, size_t nfft, double rate_hz, double f, bool spaced)
{
    const double bins = f / (rate_hz / (double)nfft);
    return nearest_bin(f, rate_hz / (double)nfft) >= nterms + 2 && (!spaced || bins >= (double)(2 * nterms + 3));
}

/* The smallest power of two >= 256 at which a window of nterms terms resolves f. */
static size_t min_nfft(size_t nterms, double rate_hz, double f, bool spaced)
{
    size_t n = 256;
    while (!resolves(nterms, n, rate_hz, f, spaced) && n < ((size_t)1 << 24))
        n *= 2;
    return n;
}

ml_status ml_audio_plan_transform(double rate_hz, int64_t nframes, ml_window_type preferred, double mains_hz,
                                  ml_audio_plan *out)
{
    if (out == NULL || !(rate_hz > 0) || !isfinite(rate_hz) || (unsigned)preferred >= ML_WINDOW_COUNT
        || !(mains_hz == 0 || mains_hz == 50 || mains_hz == 60) || nframes < 0)
        return ML_EINVAL;
    if (nframes < 256)
        return ML_ENOSIGNAL;
    const double f = mains_hz > 0 ? mains_hz : 50.0;
    ml_spectrum_config sc = ml_spectrum_config_default(rate_hz);
    sc.window = preferred;
    sc.remove_dc = 1;
    const size_t nmax = sc.nfft;
    /* first choice: three half-overlapping segments, as for any capture */
    size_t nfft = nmax;
    while (nfft > 256 && 2 * (int64_t)nfft > nframes)
        nfft /= 2;
    *out = (ml_audio_plan){0};
    const size_t pterms = ml_window_terms(preferred);
    if (resolves(pterms, nfft, rate_hz, f, true)) {
        sc.nfft = nfft;
        sc.hop = nfft / 2;
        out->spectrum = sc;
        out->hum_resolved = out->hum_fundamental_resolved = true;
        return ML_OK;
    }
    /* then the preferred window and the narrower-lobed ones, at the shortest nfft that resolves
     * the multiples from each other and, failing that, the fundamental from DC */
    const ml_window_type order[] = {preferred, ML_WINDOW_HFT144D, ML_WINDOW_BLACKMAN_HARRIS, ML_WINDOW_HANN};
    int64_t need = INT64_MAX;
    for (int spaced = 1; spaced >= 0; spaced--)
        for (size_t i = 0; i < sizeof order / sizeof order[0]; i++) {
            const size_t terms = ml_window_terms(order[i]);
            if (i > 0 && terms >= pterms)
                continue;
            const size_t n = min_nfft(terms, rate_hz, f, spaced);
            if (spaced && (int64_t)n + 1 < need)
                need = (int64_t)n + 1;
            if ((int64_t)n + 1 > nframes || n > nmax)
                continue;
            int64_t hop = (nframes - (int64_t)n) / 2;
            if (hop > (int64_t)(n / 2))
                hop = (int64_t)(n / 2);
            if (hop < 1)
                hop = 1;
            sc.window = order[i];
            sc.nfft = n;
            sc.hop = (size_t)hop;
            out->spectrum = sc;
            out->hum_resolved = spaced;
            out->hum_fundamental_resolved = true;
            out->hum_min_frames = spaced ? 0 : need;
            return ML_OK;
        }
    sc.nfft = nfft;
    sc.hop = nfft / 2;
    out->spectrum = sc;
    out->hum_min_frames = need;
    return ML_OK;
}
