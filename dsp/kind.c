/* Kind evidence: an I/Q pair or not, an AM IF channel or audio (definitions in dsp/kind.h).
 * SPDX-License-Identifier: MIT
 *
 * References: none beyond dsp/metrics.h (line verdicts) and dsp/spectrum.h (Welch spectra).
 */
#include "dsp/kind.h"

#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "dsp/internal.h"
#include "dsp/metrics.h"
#include "dsp/order.h"

#define COPIES_FRACTION 0.9  /* principal fraction of two copies (rule 2)                        */
#define IMAGE_DB 10.0        /* one-sided spectrum (rule 3)                                      */
#define SILENT_RATIO 1e-10   /* a channel 100 dB below the other is silent (rule 1)                */
#define LOW_HZ 3000.0        /* an IF carrier lies above this (channel rule 1)                    */
#define SYMMETRIC_DB 3.0     /* sideband pairs within 3 dB (channel rules 2, 3)                    */
#define SPAN_HZ 10000.0      /* sidebands searched within +-10 kHz (channel rule 2)                */
#define BASEBAND_HUM_DBC (-60.0) /* baseband hum weaker than this may be pickup (channel rule 5)  */
#define CHUNK 256
#define FLOOR_MARGIN 4.0     /* a line 6 dB above the analysis' floor (as dsp/metrics.h)           */
#define RESIDUE 1e-20        /* 200 dB below the carrier: rounding residue (as dsp/figures.h)      */
#define OTHER_DBC (-40.0)    /* another line this strong is of consequence (channel rule 6)         */
#define OTHER_Z 5.2          /* 1 - 1e-7: the strongest of the band's lobes (as a tone candidate)   */
#define OTHER_TRIES 8        /* symmetric pairs skipped before the search gives up (rule 6)        */
#define MAINS_ORDERS 6       /* mains multiples left out of the search (dsp/metrics.h default)     */
#define WITNESS_RANGE_DB 60.0 /* lines this close to the strongest are tested (pair rule 3)        */
#define WITNESS_MIN_DB 15.0   /* a line's image lies this far below it at least (pair rule 3)      */
#define WITNESS_MAX_DB 20.0   /* ... and as far as the strongest's, less 6 dB, up to 20 dB (rule 3) */
#define WITNESS_SPREAD_DB 6.0
#define WITNESS_CLEAR_DB 10.0 /* a line (and a mirror) stands clear of the noise: its peak bin so far */
#define NOISE_BLOCK_LOBES 8   /* the noise reference: medians over blocks of 8 lobes' bins          */

struct ml_pair {
    ml_pair_config cfg;
    ml_spectrum *spec;
    double n, sx, sy, sxx, syy, sxy; /* sums of the samples minus the first frame's (shifted data) */
    double kx, ky;                   /* the shift                                                  */
    double *work;                    /* nfft: the noise medians' scratch                            */
};

ml_pair_config ml_pair_config_default(double rate_hz)
{
    ml_pair_config c = {.rate_hz = rate_hz, .nfft = 1024};
    while (rate_hz > 0 && c.nfft < ((size_t)1 << 20) && rate_hz / (double)c.nfft > 3.0)
        c.nfft *= 2;
    return c;
}

ml_status ml_pair_create(const ml_pair_config *cfg, ml_pair **out)
{
    if (out == NULL)
        return ML_EINVAL;
    *out = NULL;
    if (cfg == NULL || !(cfg->rate_hz > 0) || !isfinite(cfg->rate_hz) || cfg->nfft < 16 || cfg->nfft > ((size_t)1 << 20)
        || (cfg->nfft & (cfg->nfft - 1)) != 0)
        return ML_EINVAL;
    ml_pair *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    q->cfg = *cfg;
    q->work = malloc((cfg->nfft + cfg->nfft / 16 + 1) * sizeof *q->work); /* bins, then block medians */
    if (q->work == NULL) {
        free(q);
        return ML_ENOMEM;
    }
    ml_spectrum_config sc = ml_spectrum_config_default(cfg->rate_hz);
    sc.nfft = cfg->nfft;
    sc.hop = cfg->nfft / 2;
    sc.complex_input = 1;
    ml_status st = ml_spectrum_create(&sc, &q->spec);
    if (st != ML_OK) {
        free(q->work);
        free(q);
        return st;
    }
    *out = q;
    return ML_OK;
}

void ml_pair_destroy(ml_pair *q)
{
    if (q == NULL)
        return;
    ml_spectrum_destroy(q->spec);
    free(q->work);
    free(q);
}

void ml_pair_reset(ml_pair *q)
{
    if (q == NULL)
        return;
    ml_spectrum_reset(q->spec);
    q->n = q->sx = q->sy = q->sxx = q->syy = q->sxy = q->kx = q->ky = 0.0;
}

ml_status ml_pair_push(ml_pair *q, const float *frames, size_t nframes, size_t channels, size_t ch_x, size_t ch_y)
{
    if (q == NULL || (frames == NULL && nframes > 0) || channels < 2 || ch_x >= channels || ch_y >= channels
        || ch_x == ch_y)
        return ML_EINVAL;
    double complex z[CHUNK];
    for (size_t i = 0; i < nframes;) {
        const size_t m = nframes - i < CHUNK ? nframes - i : CHUNK;
        for (size_t j = 0; j < m; j++) {
            const double x = frames[(i + j) * channels + ch_x], y = frames[(i + j) * channels + ch_y];
            if (q->n == 0) {
                q->kx = x;
                q->ky = y;
            }
            const double dx = x - q->kx, dy = y - q->ky;
            q->n += 1.0;
            q->sx += dx;
            q->sy += dy;
            q->sxx += dx * dx;
            q->syy += dy * dy;
            q->sxy += dx * dy;
            z[j] = CMPLX(x, y);
        }
        ml_status st = ml_spectrum_push_complex(q->spec, z, m);
        if (st != ML_OK)
            return st;
        i += m;
    }
    return ML_OK;
}

/* Sum of psd over the lobe around bin k of an nfft-bin complex spectrum (indices wrap). */
static double lobe_power(const double *psd, size_t nfft, size_t k, size_t lobe)
{
    double s = 0.0;
    for (size_t d = 0; d <= 2 * lobe; d++)
        s += psd[(k + nfft - lobe + d) % nfft];
    return s;
}

/* The noise density of block b: the largest median of it and its neighbours (wrapping). */
static double noise_at(const double *med, size_t nblocks, size_t b)
{
    return fmax(med[b], fmax(med[(b + 1) % nblocks], med[(b + nblocks - 1) % nblocks]));
}

/* Whether the line at complex bin k (peak bin power p) has a counterpart about the strongest line
 * (bin kmax): a line clear of the noise at 2 fmax - f, inside the band and clear of DC, whose peak
 * bin lies within SYMMETRIC_DB of p (an AM carrier's sidebands come in such pairs). */
static bool sideband_of(const ml_pair *q, const double *acc, const double *med, size_t nblocks, size_t block,
                        size_t kmax, size_t k, double p)
{
    const size_t nfft = ml_spectrum_nfft(q->spec), lobe = ml_spectrum_lobe_bins(q->spec);
    const long n = (long)nfft, sk = k < nfft / 2 ? (long)k : (long)k - n;
    const long sm = kmax < nfft / 2 ? (long)kmax : (long)kmax - n, c = 2 * sm - sk;
    if (c <= -n / 2 + (long)lobe || c >= n / 2 - (long)lobe || labs(c) <= (long)lobe)
        return false;
    const size_t kc = (size_t)((c + n) % n);
    const double pc = acc[kc];
    return pc > pow(10.0, WITNESS_CLEAR_DB / 10.0) * noise_at(med, nblocks, kc / block) && p > 0
           && fabs(10.0 * log10(pc / p)) <= SYMMETRIC_DB;
}

/* Pair rule 3 (header): every line of z off DC and Nyquist within WITNESS_RANGE_DB of the strongest
 * (bin kmax, image ratio image_db; its own lobes left out) that stands clear of the noise must not
 * have a mirror that stands clear of the noise too and within `required` dB of it. Lines are read
 * by their peak bins (the flat-top window holds a line's power there whatever its offset, and a
 * real signal puts its mirror at exactly the mirrored offset); a line whose peak bin lies outside
 * DC's lobe is clear of a DC offset's power (the window's side lobes lie 200 dB down). The noise:
 * the median bin of each block of NOISE_BLOCK_LOBES lobes of the accumulated spectrum acc (lines
 * take a small share of a block), scaled to the mean by the chi-square median (dsp/metrics.h), the
 * largest of a block and its two neighbours (a slope of the noise is not taken for lines). Sets
 * r->lines_tested and, for the strongest line that fails, r->mirror_hz, r->mirror_db,
 * r->mirror_required_db. */
static void test_lines(const ml_pair *q, const double *acc, size_t kmax, double image_db, ml_pair_result *r)
{
    const size_t nfft = ml_spectrum_nfft(q->spec), lobe = ml_spectrum_lobe_bins(q->spec), w = 2 * lobe + 1;
    const double required = fmin(WITNESS_MAX_DB, fmax(WITNESS_MIN_DB, image_db - WITNESS_SPREAD_DB));
    const double allow = pow(10.0, -required / 10.0), clear = pow(10.0, WITNESS_CLEAR_DB / 10.0);
    const double least = acc[kmax] * pow(10.0, -WITNESS_RANGE_DB / 10.0);
    size_t block = NOISE_BLOCK_LOBES * w;
    if (block > nfft)
        block = nfft;
    const size_t nblocks = (nfft + block - 1) / block;
    double *med = q->work + nfft;
    const double nu = ml_spectrum_dof(q->spec, 1);
    const double to_mean = nu > 2.0 / 9.0 ? 1.0 / pow(1.0 - 2.0 / (9.0 * nu), 3.0) : 1.0;
    for (size_t b = 0; b < nblocks; b++) {
        const size_t k0 = b * block, m = nfft - k0 < block ? nfft - k0 : block;
        for (size_t i = 0; i < m; i++)
            q->work[i] = acc[k0 + i];
        med[b] = ml_order_median(q->work, m) * to_mean;
    }
    double worst = 0.0;
    for (size_t k = lobe + 1; k + lobe + 1 <= nfft; k++) {
        const size_t km = nfft - k; /* the mirror */
        if ((k > nfft / 2 ? k - nfft / 2 : nfft / 2 - k) <= lobe)
            continue; /* a line at Nyquist is its own mirror */
        bool peak = true;
        for (size_t d = 1; d <= lobe && peak; d++)
            peak = acc[k] > acc[k - d] && acc[k] >= acc[(k + d) % nfft];
        const size_t dk = k > kmax ? k - kmax : kmax - k, dm = km > kmax ? km - kmax : kmax - km;
        if (!peak || dk <= 2 * lobe || dm <= 2 * lobe)
            continue; /* not a line, or the strongest (its mirror) */
        const double hi = acc[k], lo = acc[km];
        if (lo > hi || (lo == hi && k > nfft / 2))
            continue; /* the pair is tested from its stronger side */
        if (!(hi >= least) || !(hi > clear * noise_at(med, nblocks, k / block)))
            continue;
        r->lines_tested++;
        if (lo > clear * noise_at(med, nblocks, km / block) && lo > allow * hi && hi > worst
            && !(sideband_of(q, acc, med, nblocks, block, kmax, k, hi)
                 && sideband_of(q, acc, med, nblocks, block, kmax, km, lo))) {
            worst = hi;
            r->mirror_hz = ml_spectrum_bin_hz(q->spec, k);
            ml_spectrum_get_frequency(q->spec, k, &r->mirror_hz);
            r->mirror_db = 10.0 * log10(hi / lo);
            r->mirror_required_db = required;
        }
    }
}

ml_status ml_pair_get(const ml_pair *q, ml_pair_result *r)
{
    if (q == NULL || r == NULL)
        return ML_EINVAL;
    *r = (ml_pair_result){.verdict = ML_PAIR_UNDECIDED, .correlation = NAN, .principal_fraction = NAN,
                          .line_hz = NAN, .image_db = NAN, .asymmetry_db = NAN, .mirror_hz = NAN,
                          .mirror_db = NAN, .mirror_required_db = NAN};
    if (q->n < 2)
        return ML_OK;
    const double n = q->n, mx = q->sx / n, my = q->sy / n;
    const double vx = fmax(q->sxx / n - mx * mx, 0.0), vy = fmax(q->syy / n - my * my, 0.0);
    const double cxy = q->sxy / n - mx * my;
    r->power_x = vx;
    r->power_y = vy;
    if (vx > 0 && vy > 0)
        r->correlation = fmax(-1.0, fmin(1.0, cxy / sqrt(vx * vy)));
    if (vx + vy > 0) {
        const double h = 0.5 * (vx - vy), lmax = 0.5 * (vx + vy) + sqrt(h * h + cxy * cxy);
        r->principal_fraction = fmin(1.0, lmax / (vx + vy));
    }
    /* the complex spectrum: the strongest line off DC, its mirror, the balance of the two sides */
    const size_t nfft = ml_spectrum_nfft(q->spec), lobe = ml_spectrum_lobe_bins(q->spec);
    const double *acc = ml_spectrum_sum(q->spec);
    if (ml_spectrum_segments(q->spec) > 0 && acc != NULL) {
        size_t kmax = 0;
        double pos = 0.0, neg = 0.0, tot = 0.0;
        for (size_t k = lobe; k + lobe <= nfft; k++) {
            tot += acc[k];
            if (k < nfft / 2)
                pos += acc[k];
            else if (k > nfft / 2)
                neg += acc[k];
            if (kmax == 0 || acc[k] > acc[kmax])
                kmax = k;
        }
        if (pos + neg > 0)
            r->asymmetry_db = 10.0 * log10(fmax(pos, 1e-30 * (pos + neg)) / fmax(neg, 1e-30 * (pos + neg)));
        /* a line: its lobe holds 10 times the power the mean density would put there */
        const double lp = kmax ? lobe_power(acc, nfft, kmax, lobe) : 0.0;
        const double mean_lobe = tot / (double)(nfft - 2 * lobe + 1) * (double)(2 * lobe + 1);
        if (kmax != 0 && kmax != nfft / 2 && lp > 10.0 * mean_lobe) {
            const double im = lobe_power(acc, nfft, nfft - kmax, lobe);
            r->line_hz = ml_spectrum_bin_hz(q->spec, kmax);
            ml_spectrum_get_frequency(q->spec, kmax, &r->line_hz);
            r->image_db = 10.0 * log10(lp / fmax(im, 1e-30 * lp));
            if (r->image_db >= IMAGE_DB)
                test_lines(q, acc, kmax, r->image_db, r);
        }
    }
    if (vx == 0 || vy == 0 || vx < SILENT_RATIO * vy || vy < SILENT_RATIO * vx) {
        r->verdict = ML_PAIR_SILENT;
        r->silent_channel = vx < vy ? 1 : 2;
    } else if (r->principal_fraction >= COPIES_FRACTION) {
        r->verdict = ML_PAIR_COPIES;
    } else if (isnan(r->asymmetry_db)) {
        r->verdict = ML_PAIR_UNDECIDED; /* no complete segment yet */
    } else if (!isnan(r->image_db) && r->image_db >= IMAGE_DB && !isnan(r->mirror_db)) {
        r->verdict = ML_PAIR_MIRRORED;
    } else if (!isnan(r->image_db) ? r->image_db >= IMAGE_DB : fabs(r->asymmetry_db) >= IMAGE_DB) {
        r->verdict = ML_PAIR_IQ;
    } else {
        r->verdict = ML_PAIR_TWO_SIGNALS;
    }
    return ML_OK;
}

char *ml_pair_reason(const ml_pair_result *r, char *buf, size_t n)
{
    if (buf == NULL || n == 0)
        return buf;
    if (r == NULL) {
        buf[0] = '\0';
        return buf;
    }
    const double lv = r->power_x > 0 && r->power_y > 0 ? 10.0 * log10(r->power_x / r->power_y) : NAN;
    switch (r->verdict) {
    case ML_PAIR_IQ:
        if (!isnan(r->image_db))
            snprintf(buf, n, "a quadrature pair: the line at %+.1f Hz has its mirror image %.0f dB below it",
                     r->line_hz, r->image_db);
        else
            snprintf(buf, n, "a quadrature pair: %.0f dB more power on one side of 0 Hz than on the other",
                     fabs(r->asymmetry_db));
        break;
    case ML_PAIR_MIRRORED:
        snprintf(buf, n,
                 "one-sided at %+.1f Hz (image %.0f dB down) but not at %+.1f Hz (image %.1f dB down; an I/Q "
                 "pair holds every line's image %.0f dB or more down): not an I/Q pair",
                 r->line_hz, r->image_db, r->mirror_hz, r->mirror_db, r->mirror_required_db);
        break;
    case ML_PAIR_COPIES:
        snprintf(buf, n,
                 "the channels carry one signal (principal fraction %.4f, correlation %.4f, levels %.1f dB "
                 "apart): not an I/Q pair",
                 r->principal_fraction, r->correlation, lv);
        break;
    case ML_PAIR_TWO_SIGNALS:
        if (!isnan(r->image_db))
            snprintf(buf, n,
                     "two real signals: the complex spectrum is mirror-symmetric (the line at %+.1f Hz has its "
                     "image only %.1f dB below it; correlation %.3f): not an I/Q pair",
                     r->line_hz, r->image_db, r->correlation);
        else
            snprintf(buf, n,
                     "two real signals: the complex spectrum is mirror-symmetric (sides %.1f dB apart; "
                     "correlation %.3f): not an I/Q pair",
                     r->asymmetry_db, r->correlation);
        break;
    case ML_PAIR_SILENT:
        snprintf(buf, n, "channel %zu is silent: not an I/Q pair", r->silent_channel);
        break;
    default:
        snprintf(buf, n, "too short to tell whether the channels are an I/Q pair");
        break;
    }
    return buf;
}

/* ---- one real channel ------------------------------------------------------------------------ */

static size_t bin_of(double hz, double bin_hz)
{
    return (size_t)floor(hz / bin_hz + 0.5);
}

static double dbc(double p, double p1)
{
    return p > 0 && p1 > 0 ? 10.0 * log10(p / p1) : NAN;
}

/* The lines at bins a and b (a symmetric pair around kf) against the noise, excluding kf, a, b
 * and the carrier's first harmonic. False when a bin cannot be measured. */
static bool measure_pair(const ml_spectrum *spec, const double *psd, size_t nbins, size_t kf, size_t a, size_t b,
                         ml_component *ca, ml_component *cb)
{
    const size_t excl[4] = {kf, a, b, 2 * kf};
    return ml_line_measure(spec, psd, nbins, a, excl, 4, ca) == ML_OK
           && ml_line_measure(spec, psd, nbins, b, excl, 4, cb) == ML_OK;
}

/* A line stands above the noise (dsp/metrics.h) and above `floor`: the analysis' own floor in
 * its lobe with FLOOR_MARGIN, and rounding residue (RESIDUE of the carrier's power). */
static bool real_line(const ml_component *c, double floor)
{
    return c->above_noise && c->line_power > floor;
}

static bool symmetric(const ml_component *a, const ml_component *b, double floor)
{
    return real_line(a, floor) && real_line(b, floor) && a->line_power > 0 && b->line_power > 0
           && fabs(10.0 * log10(a->line_power / b->line_power)) <= SYMMETRIC_DB;
}

/* The baseband line at bin c (excluding kf): its line power when it stands above the noise and
 * the floor, else 0. */
static double baseband(const ml_spectrum *spec, const double *psd, size_t nbins, size_t c, size_t kf,
                       double floor)
{
    ml_component o;
    const size_t excl[1] = {kf};
    if (ml_line_measure(spec, psd, nbins, c, excl, 1, &o) != ML_OK || !real_line(&o, floor))
        return 0.0;
    return o.line_power;
}

/* Sidebands of power ps at fc +- fm_hz: IF (why_if), unless the band holds a line at fm_hz itself
 * at least as strong (intermodulation of a tone with that line: audio, why_audio). Rules 2 and 3. */
static void sideband_verdict(const ml_spectrum *spec, const double *psd, size_t nbins, size_t kf, double p1,
                             double floor, double fm_hz, double ps, ml_if_why why_audio, ml_if_why why_if,
                             ml_if_evidence_result *r)
{
    const double bin_hz = ml_spectrum_rate_hz(spec) / (double)ml_spectrum_nfft(spec);
    r->sideband_hz = fm_hz;
    r->sideband_dbc = dbc(ps, p1);
    const size_t cm = bin_of(fm_hz, bin_hz);
    const double pb = ml_spectrum_clears_dc(spec, cm) ? baseband(spec, psd, nbins, cm, kf, floor) : 0.0;
    r->baseband_dbc = dbc(pb, p1);
    r->verdict = pb >= ps ? ML_CHANNEL_AUDIO : ML_CHANNEL_IF;
    r->why = pb >= ps ? why_audio : why_if;
}

/* The verdict of a symmetric pair ca, cb at bins ks and its mirror around fc (rule 2): IF, unless
 * the band holds a line at fm itself at least as strong (intermodulation: audio). */
static void pair_verdict(const ml_spectrum *spec, const double *psd, size_t nbins, size_t kf, size_t ks,
                         double fc, double p1, double floor, const ml_component *ca, const ml_component *cb,
                         ml_if_evidence_result *r)
{
    const double bin_hz = ml_spectrum_rate_hz(spec) / (double)ml_spectrum_nfft(spec);
    double fs_hz = (double)ks * bin_hz;
    ml_spectrum_get_frequency(spec, ks, &fs_hz);
    sideband_verdict(spec, psd, nbins, kf, p1, floor, fabs(fs_hz - fc), fmax(ca->line_power, cb->line_power),
                     ML_IFW_SIDEBANDS_IMD, ML_IFW_SIDEBANDS, r);
}

/* True when bin k lies in the lobe (with the 1 % tolerance of dsp/metrics.h) of a mains multiple
 * k mains, k = 1..MAINS_ORDERS, of 50 or 60 Hz (or of mains_hz). */
static bool at_mains(size_t k, double mains_hz, double bin_hz, size_t lobe)
{
    for (int j = 0; j < 2; j++) {
        const double mains = mains_hz > 0 ? mains_hz : (j ? 60.0 : 50.0);
        for (int m = 1; m <= MAINS_ORDERS; m++) {
            const size_t c = bin_of(m * mains, bin_hz), tol = (size_t)ceil(0.01 * m * mains / bin_hz);
            if ((k > c ? k - c : c - k) <= lobe + tol)
                return true;
        }
    }
    return false;
}

/* A symmetric pair around fc met by the search of rule 6: the line at bin ks and its mirror. */
typedef struct {
    size_t ks; /* 0: none */
    ml_component ca, cb;
} side_pair;

/* Rule 6 (header): the strongest line of the band outside fc's lobe, DC's and the mains multiples',
 * passing over symmetric pairs around fc (the first one into *pair), when it is of consequence: it
 * stands clear of the noise as a tone candidate must (its lobe over the noise expected there beyond
 * the 1 - 1e-7 F quantile), above the floor, within OTHER_DBC of fc and has no mirror within
 * SYMMETRIC_DB. Its line power and bin, or 0 when there is none. */
static double other_line(const ml_spectrum *spec, const double *psd, size_t nbins, size_t kf, double p1,
                         double floor, double mains_hz, size_t *bin, side_pair *pair)
{
    pair->ks = 0;
    const size_t lobe = ml_spectrum_lobe_bins(spec), gap = 2 * lobe + 1;
    const double bin_hz = ml_spectrum_rate_hz(spec) / (double)ml_spectrum_nfft(spec);
    /* the noise estimate of ml_line_measure holds at least 4 lobes' worth of bins */
    const double t = ml_f_quantile(ml_spectrum_dof(spec, gap), ml_spectrum_dof(spec, 4 * gap), OTHER_Z);
    size_t skip[2 * OTHER_TRIES], nskip = 0;
    const size_t klo = bin_of(20.0, bin_hz);
    for (int tries = 0; tries < OTHER_TRIES; tries++) {
        size_t ko = 0;
        for (size_t k = klo; k + lobe < nbins; k++) {
            if ((k > kf ? k - kf : kf - k) < gap || (ko != 0 && psd[k] <= psd[ko])
                || !ml_spectrum_clears_dc(spec, k) || at_mains(k, mains_hz, bin_hz, lobe))
                continue;
            bool skipped = false;
            for (size_t i = 0; i < nskip && !skipped; i++)
                skipped = (k > skip[i] ? k - skip[i] : skip[i] - k) < gap;
            if (!skipped)
                ko = k;
        }
        if (ko == 0)
            return 0.0;
        const size_t km = 2 * kf > ko ? 2 * kf - ko : 0; /* its mirror around fc */
        const bool has_mirror = km > 0 && km + lobe < nbins && ml_spectrum_clears_dc(spec, km);
        const size_t excl[3] = {kf, 2 * kf, has_mirror ? km : kf};
        ml_component o;
        if (ml_line_measure(spec, psd, nbins, ko, excl, 3, &o) != ML_OK || !real_line(&o, floor)
            || !(o.power > t * o.noise_power) || !(o.line_power >= p1 * pow(10.0, OTHER_DBC / 10.0)))
            return 0.0; /* the strongest left is no line of consequence: none is */
        ml_component om;
        const size_t excl_m[3] = {kf, 2 * kf, ko};
        if (has_mirror && ml_line_measure(spec, psd, nbins, km, excl_m, 3, &om) == ML_OK
            && symmetric(&o, &om, floor)) {
            if (pair->ks == 0)
                *pair = (side_pair){.ks = ko, .ca = o, .cb = om};
            skip[nskip++] = ko; /* a sideband pair: modulation, not another signal */
            skip[nskip++] = km;
            continue;
        }
        *bin = ko;
        return o.line_power;
    }
    return 0.0;
}

ml_status ml_if_evidence(const ml_spectrum *spec, double mains_hz, ml_if_evidence_result *r)
{
    if (spec == NULL || r == NULL || ml_spectrum_is_complex(spec) || !(mains_hz == 0 || mains_hz == 50 || mains_hz == 60))
        return ML_EINVAL;
    *r = (ml_if_evidence_result){.verdict = ML_CHANNEL_UNDECIDED, .sideband_dbc = NAN, .baseband_dbc = NAN,
                                 .harmonic_dbc = NAN, .other_dbc = NAN};
    const double rate = ml_spectrum_rate_hz(spec), nyq = rate / 2.0;
    ml_audio_config cfg = ml_audio_config_default();
    cfg.band_lo_hz = 20.0;
    cfg.band_hi_hz = nyq;
    cfg.tone_mode = ML_TONE_FORCE;
    cfg.mains_hz = mains_hz;
    ml_audio_result *a = malloc(sizeof *a);
    const size_t nbins = ml_spectrum_nbins(spec);
    double *psd = malloc(nbins * sizeof *psd);
    ml_status st = ML_ENOMEM;
    if (a == NULL || psd == NULL)
        goto done;
    st = ml_audio_analyze(spec, &cfg, a);
    if (st == ML_ENOSIGNAL) {
        st = ML_OK;
        goto done;
    }
    if (st != ML_OK || (st = ml_spectrum_get_psd(spec, psd, nbins)) != ML_OK)
        goto done;
    if (!a->tone_present || !(a->fundamental_power > 0))
        goto done;
    const double fc = a->fundamental_hz, p1 = a->fundamental_power;
    const double bin_hz = rate / (double)ml_spectrum_nfft(spec);
    const size_t lobe = ml_spectrum_lobe_bins(spec), kf = bin_of(fc, bin_hz);
    const double floor = fmax(FLOOR_MARGIN * a->floor_density * (double)(2 * lobe + 1), RESIDUE * p1);
    /* rule 0: nothing above the reportable range and the floor is no signal; a line in the noise
     * is no carrier */
    if (!(p1 > 0.5 * pow(10.0, -ML_FIGURE_DB_LIMIT / 10.0)) || !(p1 > floor))
        goto done;
    r->carrier_hz = fc;
    if (!a->tone_clear) {
        r->verdict = ML_CHANNEL_AUDIO;
        r->why = ML_IFW_NOISE;
        goto done;
    }
    /* rule 1 */
    if (fc < LOW_HZ) {
        r->verdict = ML_CHANNEL_AUDIO;
        r->why = ML_IFW_LOW;
        goto done;
    }
    /* rule 1b: a baseband line about as strong as fc or stronger, no sideband of it (a mains line
     * the tone decision passed over) */
    const size_t gap = 2 * lobe + 1;
    size_t kb = 0;
    for (size_t k = bin_of(20.0, bin_hz); k < bin_of(LOW_HZ, bin_hz) && k + lobe < nbins; k++)
        if (ml_spectrum_clears_dc(spec, k) && (k > kf ? k - kf : kf - k) >= gap
            && (kb == 0 || psd[k] > psd[kb]))
            kb = k;
    if (kb != 0) {
        ml_component o;
        const size_t excl[1] = {kf};
        const size_t km = 2 * kf - kb; /* its counterpart about fc: a sideband pair is modulation */
        ml_component om;
        const size_t excl_m[2] = {kf, kb};
        const bool pair = km + lobe < nbins && ml_line_measure(spec, psd, nbins, km, excl_m, 2, &om) == ML_OK;
        if (ml_line_measure(spec, psd, nbins, kb, excl, 1, &o) == ML_OK && real_line(&o, floor)
            && o.line_power >= p1 * pow(10.0, -SYMMETRIC_DB / 10.0) && !(pair && symmetric(&o, &om, floor))) {
            r->other_hz = (double)kb * bin_hz;
            ml_spectrum_get_frequency(spec, kb, &r->other_hz);
            r->other_dbc = dbc(o.line_power, p1);
            r->verdict = ML_CHANNEL_AUDIO;
            r->why = ML_IFW_BASEBAND_STRONGER;
            goto done;
        }
    }
    /* rule 2: the strongest component near fc (outside its lobe, away from 2 fc) and its mirror */
    const size_t span = bin_of(fmin(fmin(fc, nyq - fc), SPAN_HZ), bin_hz);
    size_t ks = 0;
    for (size_t k = kf > span ? kf - span : 1; k <= kf + span && k + lobe < nbins; k++) {
        const size_t d = k > kf ? k - kf : kf - k;
        if (d < gap || k + gap > 2 * kf) /* in the carrier's lobe, or its mirror at DC (2 fc's) */
            continue;
        if (ks == 0 || psd[k] > psd[ks])
            ks = k;
    }
    if (ks != 0 && ml_spectrum_clears_dc(spec, ks) && ml_spectrum_clears_dc(spec, 2 * kf - ks)) {
        ml_component ca, cb;
        if (measure_pair(spec, psd, nbins, kf, ks, 2 * kf - ks, &ca, &cb) && symmetric(&ca, &cb, floor)) {
            pair_verdict(spec, psd, nbins, kf, ks, fc, p1, floor, &ca, &cb, r);
            goto done;
        }
    }
    /* rule 3: hum sidebands */
    double best = 0.0, best_f = 0.0;
    for (int j = 0; j < 2; j++) {
        const double mains = mains_hz > 0 ? mains_hz : (j ? 60.0 : 50.0);
        if (mains_hz > 0 && j > 0)
            break;
        for (int k = 1; k <= 3; k++) {
            const size_t d = bin_of(k * mains, bin_hz);
            if (d < gap || d > kf || kf + d + lobe >= nbins)
                continue;
            ml_component ca, cb;
            if (measure_pair(spec, psd, nbins, kf, kf - d, kf + d, &ca, &cb) && symmetric(&ca, &cb, floor)
                && fmax(ca.line_power, cb.line_power) > best) {
                best = fmax(ca.line_power, cb.line_power);
                best_f = k * mains;
            }
        }
    }
    if (best > 0) {
        sideband_verdict(spec, psd, nbins, kf, p1, floor, best_f, best, ML_IFW_HUM_IMD, ML_IFW_HUM_SIDEBANDS, r);
        goto done;
    }
    /* rule 4: harmonics */
    double ph = 0.0;
    for (size_t i = 0; i < a->nharmonics; i++)
        if (real_line(&a->harmonics[i], floor))
            ph = fmax(ph, a->harmonics[i].line_power);
    if (ph > 0) {
        r->harmonic_dbc = dbc(ph, p1);
        r->verdict = ML_CHANNEL_AUDIO;
        r->why = ML_IFW_HARMONICS;
        goto done;
    }
    /* rule 5: hum at baseband, within 60 dB of the line */
    if (a->figures.hum.state == ML_FIG_MEASURED && dbc(a->figures.hum.value, p1) >= BASEBAND_HUM_DBC) {
        r->baseband_dbc = dbc(a->figures.hum.value, p1);
        r->verdict = ML_CHANNEL_AUDIO;
        r->why = ML_IFW_BASEBAND_HUM;
        goto done;
    }
    /* rule 6: another line of consequence */
    size_t ko = 0;
    side_pair pair;
    const double po = other_line(spec, psd, nbins, kf, p1, floor, mains_hz, &ko, &pair);
    if (po > 0) {
        r->other_hz = (double)ko * bin_hz;
        ml_spectrum_get_frequency(spec, ko, &r->other_hz);
        r->other_dbc = dbc(po, p1);
        r->verdict = ML_CHANNEL_AUDIO;
        r->why = ML_IFW_OTHER_LINE;
        goto done;
    }
    if (pair.ks != 0) { /* sidebands farther out than rule 2 looks: as rule 2 */
        pair_verdict(spec, psd, nbins, kf, pair.ks, fc, p1, floor, &pair.ca, &pair.cb, r);
        goto done;
    }
    /* rule 7 */
    r->verdict = ML_CHANNEL_IF;
    r->why = ML_IFW_LONE_CARRIER;
done:
    free(a);
    free(psd);
    return st;
}

char *ml_if_evidence_reason(const ml_if_evidence_result *r, char *buf, size_t n)
{
    if (buf == NULL || n == 0)
        return buf;
    if (r == NULL) {
        buf[0] = '\0';
        return buf;
    }
    const double fc = r->carrier_hz;
    switch (r->why) {
    case ML_IFW_LOW:
        snprintf(buf, n, "the strongest component (%.1f Hz) lies below 3 kHz: audio", fc);
        break;
    case ML_IFW_SIDEBANDS:
        snprintf(buf, n, "a carrier at %.1f Hz with symmetric sidebands at +-%.1f Hz (%.1f dBc) and no line at %.1f Hz "
                         "itself: an AM IF signal",
                 fc, r->sideband_hz, r->sideband_dbc, r->sideband_hz);
        break;
    case ML_IFW_SIDEBANDS_IMD:
        snprintf(buf, n, "the sidebands of the %.1f Hz tone at +-%.1f Hz (%.1f dBc) are weaker than the %.1f Hz line "
                         "itself (%.1f dBc), their cause: audio",
                 fc, r->sideband_hz, r->sideband_dbc, r->sideband_hz, r->baseband_dbc);
        break;
    case ML_IFW_HUM_SIDEBANDS:
        snprintf(buf, n, "a carrier at %.1f Hz with hum sidebands at +-%.0f Hz (%.1f dBc) stronger than any hum at "
                         "%.0f Hz: an AM IF signal",
                 fc, r->sideband_hz, r->sideband_dbc, r->sideband_hz);
        break;
    case ML_IFW_HUM_IMD:
        snprintf(buf, n, "the hum sidebands of the %.1f Hz tone (+-%.0f Hz, %.1f dBc) are weaker than the hum itself "
                         "(%.1f dBc): audio",
                 fc, r->sideband_hz, r->sideband_dbc, r->baseband_dbc);
        break;
    case ML_IFW_HARMONICS:
        snprintf(buf, n, "the %.1f Hz tone has harmonics (%.1f dBc), which an AM channel cannot hold: audio", fc,
                 r->harmonic_dbc);
        break;
    case ML_IFW_BASEBAND_HUM:
        snprintf(buf, n, "mains hum at baseband (%.1f dBc) and none on the %.1f Hz tone: audio", r->baseband_dbc, fc);
        break;
    case ML_IFW_LONE_CARRIER:
        snprintf(buf, n,
                 "a lone line at %.1f Hz, above 3 kHz, with neither sidebands, harmonics nor hum of its "
                 "own and no other line within 40 dB: an unmodulated AM carrier (IF)",
                 fc);
        break;
    case ML_IFW_OTHER_LINE:
        snprintf(buf, n,
                 "the %.1f Hz line is not alone: another at %.1f Hz (%.1f dBc), no sideband of it, "
                 "stands clear of the noise: audio",
                 fc, r->other_hz, r->other_dbc);
        break;
    case ML_IFW_BASEBAND_STRONGER:
        snprintf(buf, n,
                 "a line at %.1f Hz, below 3 kHz, stands %+.1f dB re the %.1f Hz line, no sideband of it: an "
                 "AM IF carrier outweighs all else: audio",
                 r->other_hz, r->other_dbc, fc);
        break;
    case ML_IFW_NOISE:
        snprintf(buf, n,
                 "no line stands clear of the noise (the strongest, %.1f Hz, does not): noise or hum, no "
                 "carrier: audio",
                 fc);
        break;
    default:
        snprintf(buf, n, "no signal to tell IF from audio");
        break;
    }
    return buf;
}
