/* Block estimates of the audio figures and their 95 % intervals.
 * SPDX-License-Identifier: MIT
 *
 * References: [gum:2008] and [welford:1962], full entries in dsp/uncert.h.
 */
#include "dsp/blocks.h"

#include <math.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/uncert.h"

/* The figures estimated per block: every audio figure (dsp/figures.h) but the mains frequency,
 * which is chosen (50 or 60), not measured. */
static const size_t fields[] = {
    offsetof(ml_audio_plain_figures, fundamental_hz), offsetof(ml_audio_plain_figures, fundamental_dbfs),
    offsetof(ml_audio_plain_figures, thd_pct),        offsetof(ml_audio_plain_figures, thd_db),
    offsetof(ml_audio_plain_figures, thdn_pct),       offsetof(ml_audio_plain_figures, thdn_db),
    offsetof(ml_audio_plain_figures, sinad_db),       offsetof(ml_audio_plain_figures, snr_db),
    offsetof(ml_audio_plain_figures, enob_bits),      offsetof(ml_audio_plain_figures, noise_dbfs),
    offsetof(ml_audio_plain_figures, hum_dbfs),       offsetof(ml_audio_plain_figures, hum_dbc),
};
#define U_COUNT (sizeof fields / sizeof fields[0])

static double *field(ml_audio_plain_figures *f, size_t i)
{
    return (double *)(void *)((char *)f + fields[i]);
}
/* Peak readings per block (if/iq): the same hold-share quantiles as the whole envelope's
 * (dsp/am.h), from a histogram of the block's samples (not oversampled: only the spread across
 * blocks is used, not the level). PEAK_BINS over 0 .. PEAK_RANGE x (x = E / provisional C). */
#define PEAK_BINS 8192
#define PEAK_RANGE 4.0
enum { P_EMAX, P_EMIN, P_INDEX, P_COUNT };

struct ml_blocks {
    ml_spectrum *spec;       /* the current block's segments, fed by the whole spectrum's hook  */
    ml_spectrum *whole;      /* the spectrum whose segments these are                         */
    ml_audio_config cfg;
    bool tagged;             /* untagged segments spoil their block                           */
    size_t nfft, hop, keep;  /* keep = nfft - hop samples shared with the next block           */
    size_t segs;             /* segments in the current block                                 */
    bool spec_bad;           /* one of them was not wholly tagged                             */
    ml_running acc[U_COUNT];
    /* peak readings (ml_blocks_set_peaks), from the pushed samples: the same blocks in samples */
    unsigned long long total, last_bad, block_first;
    bool any_bad;
    size_t need;             /* samples until the block's last segment completes              */
    double hold_share;       /* > 0: peak readings per block                                  */
    size_t per;              /* pushed samples per sample of the whole spectrum               */
    uint32_t *hist;          /* PEAK_BINS counts of the current block                         */
    uint64_t hist_n;
    ml_running peak[P_COUNT];
};

/* Level below which a share `share` of the block's samples lies (bin upper edge). */
static double hist_quantile(const ml_blocks *q, double share)
{
    const double want = share * (double)q->hist_n;
    double seen = 0;
    for (size_t b = 0; b < PEAK_BINS; b++) {
        seen += q->hist[b];
        if (seen >= want && seen > 0)
            return (double)(b + 1) * (PEAK_RANGE / PEAK_BINS);
    }
    return PEAK_RANGE;
}

/* Pushed samples in the first block: its segments' span (later blocks add ML_BLOCK_SEGMENTS hops). */
static size_t first_block(const ml_blocks *q)
{
    return (q->nfft + (ML_BLOCK_SEGMENTS - 1) * q->hop) * q->per;
}

ml_status ml_blocks_set_peaks(ml_blocks *q, double hold_share, size_t per)
{
    if (q == NULL || !(hold_share > 0 && hold_share < 0.5) || per < 1 || per > 64)
        return ML_EINVAL;
    if (q->hist == NULL && (q->hist = calloc(PEAK_BINS, sizeof *q->hist)) == NULL)
        return ML_ENOMEM;
    q->hold_share = hold_share;
    q->per = per;
    q->need = first_block(q);
    for (int i = 0; i < P_COUNT; i++)
        ml_running_reset(&q->peak[i]);
    return ML_OK;
}

/* The whole spectrum's hook: one more segment of the current block. */
static void on_segment(void *ctx, const double _Complex *x, const double _Complex *prev, int selected)
{
    ml_blocks *q = ctx;
    /* a block's first segment has no predecessor in the block: no cross-spectrum term */
    ml_spectrum_add_segment(q->spec, x, q->segs > 0 ? prev : NULL);
    if (q->tagged && !selected)
        q->spec_bad = true;
    if (++q->segs < ML_BLOCK_SEGMENTS)
        return;
    ml_audio_result a;
    if (!q->spec_bad && ml_audio_analyze(q->spec, &q->cfg, &a) == ML_OK) {
        ml_audio_plain_figures f;
        ml_figures_audio_raw(&a, true, &f);
        for (size_t i = 0; i < U_COUNT; i++)
            ml_running_push(&q->acc[i], *field(&f, i));
    }
    ml_spectrum_reset(q->spec);
    q->segs = 0;
    q->spec_bad = false;
}

ml_status ml_blocks_create(ml_spectrum *whole, const ml_spectrum_config *sc, const ml_audio_config *cfg,
                           bool tagged, ml_blocks **out)
{
    *out = NULL;
    if (whole == NULL || sc == NULL || cfg == NULL || sc->complex_input || ml_spectrum_is_complex(whole)
        || ml_spectrum_nfft(whole) != sc->nfft || ml_spectrum_window(whole) != sc->window)
        return ML_EINVAL;
    ml_blocks *q = calloc(1, sizeof *q);
    if (q == NULL)
        return ML_ENOMEM;
    q->whole = whole;
    q->cfg = *cfg;
    q->tagged = tagged;
    q->nfft = sc->nfft;
    q->hop = sc->hop;
    q->keep = sc->nfft - sc->hop;
    ml_status st = ml_spectrum_create(sc, &q->spec);
    if (st != ML_OK) {
        ml_blocks_destroy(q);
        return st;
    }
    q->per = 1;
    q->need = first_block(q);
    for (size_t i = 0; i < U_COUNT; i++)
        ml_running_reset(&q->acc[i]);
    ml_spectrum_on_segment(whole, on_segment, q);
    *out = q;
    return ML_OK;
}

void ml_blocks_reset(ml_blocks *q)
{
    if (q == NULL)
        return;
    ml_spectrum_reset(q->spec);
    q->segs = 0;
    q->spec_bad = false;
    for (size_t i = 0; i < U_COUNT; i++)
        ml_running_reset(&q->acc[i]);
    q->total = q->last_bad = q->block_first = 0;
    q->any_bad = false;
    q->need = first_block(q);
    if (q->hist != NULL)
        memset(q->hist, 0, PEAK_BINS * sizeof *q->hist);
    q->hist_n = 0;
    for (int i = 0; i < P_COUNT; i++)
        ml_running_reset(&q->peak[i]);
}

void ml_blocks_destroy(ml_blocks *q)
{
    if (q == NULL)
        return;
    if (q->whole)
        ml_spectrum_on_segment(q->whole, NULL, NULL);
    ml_spectrum_destroy(q->spec);
    free(q->hist);
    free(q);
}

/* The peak readings of one complete block of samples. */
static void finish_peaks(ml_blocks *q)
{
    if (!q->any_bad && q->hist_n > 0) {
        const double emax = hist_quantile(q, 1.0 - q->hold_share), emin = hist_quantile(q, q->hold_share);
        ml_running_push(&q->peak[P_EMAX], emax);
        ml_running_push(&q->peak[P_EMIN], emin);
        ml_running_push(&q->peak[P_INDEX], (emax - emin) / (emax + emin));
    }
    memset(q->hist, 0, PEAK_BINS * sizeof *q->hist);
    q->hist_n = 0;
    /* the next block starts with the overlap of the last segment */
    q->block_first = q->total - q->keep * q->per;
    q->any_bad = q->last_bad > q->block_first; /* last_bad is one past the last untagged sample */
    q->need = ML_BLOCK_SEGMENTS * q->hop * q->per;
}

void ml_blocks_push(ml_blocks *q, const double *x, const unsigned char *tag, size_t n)
{
    if (q->hist == NULL)
        return;
    size_t i = 0;
    while (i < n) {
        const size_t take = n - i < q->need ? n - i : q->need;
        uint32_t *restrict h = q->hist; /* a local pointer: the counts could alias q's fields */
        for (size_t j = i; j < i + take; j++) {
            const double b = x[j] * (PEAK_BINS / PEAK_RANGE);
            h[!(b > 0) ? 0 : b >= PEAK_BINS - 1 ? PEAK_BINS - 1 : (size_t)b]++; /* a NaN to bin 0 */
        }
        for (size_t j = i + take; tag && j > i; j--)
            if (!tag[j - 1]) { /* the last untagged sample of the run */
                q->last_bad = q->total + j - i; /* one past it */
                break;
            }
        q->hist_n += take;
        q->total += take;
        q->any_bad = q->any_bad || q->last_bad > q->block_first;
        q->need -= take;
        i += take;
        if (q->need == 0)
            finish_peaks(q);
    }
}

void ml_blocks_get_audio(const ml_blocks *q, ml_audio_plain_figures *u)
{
    ml_figures_audio_none(u);
    for (size_t i = 0; i < U_COUNT; i++)
        *field(u, i) = ml_running_u95(&q->acc[i]);
}

size_t ml_blocks_count(const ml_blocks *q)
{
    return (size_t)q->acc[0].n;
}

double ml_blocks_block_s(const ml_blocks *q)
{
    return (double)(ML_BLOCK_SEGMENTS * q->hop) / ml_spectrum_rate_hz(q->spec);
}

void ml_blocks_get_peaks(const ml_blocks *q, double *emax_u, double *emin_u, double *index_u)
{
    const bool on = q->hist != NULL;
    *emax_u = on ? ml_running_u95(&q->peak[P_EMAX]) : NAN;
    *emin_u = on ? ml_running_u95(&q->peak[P_EMIN]) : NAN;
    *index_u = on ? ml_running_u95(&q->peak[P_INDEX]) : NAN;
}
