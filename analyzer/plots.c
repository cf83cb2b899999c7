/* Filling the pictures' data during the streamed analysis, and writing picture and PDF files.
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
#include "analyzer/plots.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "analyzer/cli.h"
#include "io/output.h"

#ifndef ML_VERSION
#define ML_VERSION "0.0.0"
#endif

#define WINDOW_S 0.1 /* envelope window: a few cycles of any audio tone above 50 Hz */

void ml_plots_audio(ml_plot_data *p, const ml_spectrum *spec, const ml_audio_result *a, bool ok)
{
    const size_t nb = ml_spectrum_nbins(spec);
    double *psd = NULL;
    if (ml_plot_alloc_spectrum(p, nb) != ML_OK)
        return;
    psd = p->level_db; /* reuse: converted in place */
    if (ml_spectrum_get_psd(spec, psd, nb) != ML_OK) {
        p->nbins = 0;
        return;
    }
    for (size_t k = 0; k < nb; k++) {
        p->freq_hz[k] = ml_spectrum_bin_hz(spec, k);
        p->level_db[k] = ml_power_dbfs(psd[k]); /* a sine of amplitude A reads its level at its peak bin */
    }
    p->nbins = nb;
    p->level_unit = "dBFS";
    p->log_freq = true;
    const double bin = ml_spectrum_rate_hz(spec) / (double)ml_spectrum_nfft(spec);
    p->x_lo_hz = ok ? fmax(10.0, a->band_lo_hz) : fmax(10.0, 2 * bin);
    p->x_hi_hz = ok ? a->band_hi_hz : ml_spectrum_rate_hz(spec) / 2;
    if (!ok)
        return;
    ml_plot_mark_add(p, a->fundamental_hz, ML_MARK_FUNDAMENTAL, "f1");
    for (size_t i = 0; i < a->nharmonics; i++) {
        char b[16];
        snprintf(b, sizeof b, "%d", a->harmonics[i].order);
        ml_plot_mark_add(p, a->harmonics[i].frequency_hz, ML_MARK_HARMONIC, b);
    }
    for (size_t i = 0; i < a->nhum; i++) {
        char b[16];
        snprintf(b, sizeof b, "%.0f", a->hum[i].frequency_hz);
        ml_plot_mark_add(p, a->hum[i].frequency_hz, ML_MARK_HUM, b);
    }
}

void ml_plots_begin_envelope(ml_plot_data *p, int64_t nframes, double rate_hz, size_t edge, bool with_ref)
{
    int64_t len = (int64_t)(WINDOW_S * rate_hz);
    if (len > ML_PLOT_MAX_ENV)
        len = ML_PLOT_MAX_ENV;
    const int64_t usable = nframes - 2 * (int64_t)edge;
    if (len > usable)
        len = usable;
    if (len < 2 || ml_plot_alloc_envelope(p, (size_t)len, with_ref) != ML_OK)
        return;
    p->env_rate_hz = rate_hz;
    p->win_first = (long long)(edge + (size_t)((usable - len) / 2));
    p->env_offset = (long long)edge;
    p->env_seen = 0;
}

void ml_plots_input(ml_plot_data *p, int64_t first, const float *ref, size_t n)
{
    if (p->ref == NULL || ref == NULL)
        return;
    for (size_t i = 0; i < n; i++) {
        const long long k = (long long)first + (long long)i - p->win_first;
        if (k >= 0 && k < (long long)p->env_cap)
            p->ref[k] = ref[i];
    }
}

void ml_plots_envelope(ml_plot_data *p, const double *env, size_t n)
{
    if (p->env == NULL)
        return;
    for (size_t i = 0; i < n; i++) {
        const long long k = p->env_offset + p->env_seen + (long long)i - p->win_first;
        if (k >= 0 && k < (long long)p->env_cap) {
            p->env[k] = env[i];
            if ((size_t)k + 1 > p->nenv)
                p->nenv = (size_t)k + 1;
        }
    }
    p->env_seen += (long long)n;
}

void ml_plots_modulation(ml_plot_data *p, const ml_spectrum *rf, const ml_modulation_result *r,
                         const ml_mask *mask, double env_scale)
{
    const double f_car = r->carrier_hz, bw_hz = r->bandwidth_hz;
    const double carrier_power = r->c * r->c * ml_spectrum_full_scale_power(rf);
    const double fm_hz = r->audio_valid ? r->audio_result.fundamental_hz : 0;
    const size_t nb = ml_spectrum_nbins(rf);
    if (ml_plot_alloc_spectrum(p, nb) == ML_OK && ml_spectrum_get_psd(rf, p->level_db, nb) == ML_OK) {
        /* ascending frequency: a complex spectrum's negative half comes first */
        const bool cx = ml_spectrum_is_complex(rf);
        const size_t half = cx ? nb / 2 : 0;
        double *lv = p->level_db;
        /* swap the halves (nb is even) so that index k holds bin (k + half) % nb */
        for (size_t i = 0; i < half; i++) {
            double t = lv[i];
            lv[i] = lv[i + half];
            lv[i + half] = t;
        }
        for (size_t k = 0; k < nb; k++) {
            const size_t src = cx ? (k + half) % nb : k;
            p->freq_hz[k] = ml_spectrum_bin_hz(rf, src);
            p->level_db[k] = 10 * log10(fmax(p->level_db[k], 1e-30) / carrier_power);
        }
        p->nbins = nb;
        p->level_unit = "dBc";
        p->log_freq = false;
        double span = 1.5 * bw_hz;
        if (mask && mask->npoints > 0)
            span = fmax(span, 1.1 * mask->offset_hz[mask->npoints - 1]);
        const double nyq = ml_spectrum_rate_hz(rf) / 2;
        p->x_lo_hz = fmax(cx ? -nyq : 0.0, f_car - span);
        p->x_hi_hz = fmin(nyq, f_car + span);
        ml_plot_mark_add(p, f_car, ML_MARK_CARRIER, "C");
        if (fm_hz > 0) {
            ml_plot_mark_add(p, f_car + fm_hz, ML_MARK_SIDEBAND, "USB");
            ml_plot_mark_add(p, f_car - fm_hz, ML_MARK_SIDEBAND, "LSB");
        }
        double lo, hi;
        if (ml_rf_occupied_bandwidth(rf, 0.99, &lo, &hi) == ML_OK) {
            p->has_obw = true;
            p->obw_lo_hz = lo;
            p->obw_hi_hz = hi;
        }
        if (mask && mask->npoints > 1 && 2 * mask->npoints + 1 <= ML_PLOT_MAX_MASK) {
            for (size_t i = 0; i < mask->npoints; i++) { /* lower side, from far to near */
                const size_t j = mask->npoints - 1 - i;
                p->mask_hz[p->nmask] = f_car - mask->offset_hz[j];
                p->mask_db[p->nmask++] = mask->dbc[j];
            }
            /* the mask applies only from its first offset out: nothing across the carrier and
             * the sidebands between the sides */
            p->mask_hz[p->nmask] = NAN;
            p->mask_db[p->nmask++] = NAN;
            for (size_t i = 0; i < mask->npoints; i++) {
                p->mask_hz[p->nmask] = f_car + mask->offset_hz[i];
                p->mask_db[p->nmask++] = mask->dbc[i];
            }
            p->mask_rbw_hz = mask->rbw_hz;
            /* the offsets the capture holds on both sides (I/Q: up to +-Nyquist; real: 0 .. Nyquist) */
            const double held = fmin(nyq - f_car, cx ? f_car + nyq : f_car);
            const double last = mask->offset_hz[mask->npoints - 1];
            if (held < last)
                snprintf(p->mask_note, sizeof p->mask_note,
                         held > mask->offset_hz[0] ? "the capture covers the mask only to +-%.1f kHz of its %.1f kHz"
                                                   : "the capture covers none of the mask (+-%.1f kHz of %.1f kHz)",
                         fmax(held, 0) / 1e3, last / 1e3);
        }
    } else {
        p->nbins = 0;
    }
    for (size_t i = 0; i < p->nenv; i++)
        p->env[i] *= env_scale;
    p->emax = r->emax_rel;
    p->emin = r->emin_rel;
    p->pinch_level = r->pinch_rel;
    p->fm_hz = fm_hz;
    p->has_trapezoid = p->ref != NULL && p->nenv >= 2;
}

char *ml_plots_cmdline(int argc, char **argv)
{
    size_t need = sizeof "modlens";
    for (int i = 0; i < argc; i++)
        need += 1 + strlen(argv[i]);
    char *line = malloc(need);
    if (line == NULL)
        return NULL;
    size_t n = (size_t)snprintf(line, need, "modlens");
    for (int i = 0; i < argc; i++)
        n += (size_t)snprintf(line + n, need - n, " %s", argv[i]);
    return line;
}

int ml_plots_check_paths(const char *plot_path, const char *report_path)
{
    if (plot_path && ml_plot_type(plot_path) < 0)
        return ml_cli_error("--plot %s: the file name must end in .png, .svg or .pdf", plot_path);
    if (report_path && ml_plot_type(report_path) != 2)
        return ml_cli_error("--report %s: the file name must end in .pdf", report_path);
    if (plot_path && report_path && strcmp(plot_path, report_path) == 0)
        return ml_cli_error("--plot and --report name the same file %s", plot_path);
    return 0;
}

static void now_text(char *buf, size_t len)
{
    time_t t = time(NULL);
    struct tm tmv;
    if (localtime_r(&t, &tmv) == NULL || strftime(buf, len, "%Y-%m-%d %H:%M:%S %Z", &tmv) == 0)
        snprintf(buf, len, "time unknown");
}

typedef struct {
    const ml_report *r;
    const ml_comparison *c;
    const ml_plot_data *p, *b;
    const char *cmdline;
    bool pdf_record;
} job;

static int write_one(ml_output *o, const job *j)
{
    char err[512], when[64];
    const char *path = ml_output_path(o);
    FILE *f = NULL;
    if (ml_output_begin(o, &f, err, sizeof err) != ML_OK)
        return ml_cli_error("%s: %s", path, err);
    now_text(when, sizeof when);
    ml_plot_data empty;
    ml_plot_data_init(&empty);
    ml_status st;
    if (j->pdf_record)
        st = j->c ? ml_compare_write_pdf(f, j->c, j->p, j->b, j->cmdline, when, ML_VERSION)
                  : ml_report_write_pdf(f, j->r, j->p ? j->p : &empty, j->cmdline, when, ML_VERSION);
    else
        st = j->c ? ml_plot_write_compare(f, path, j->c, j->p, j->b)
                  : ml_plot_write(f, path, j->p ? j->p : &empty, j->r);
    if (st != ML_OK) {
        ml_output_discard(o);
        return ml_cli_error("%s: cannot draw the %s: %s", path, j->pdf_record ? "report" : "pictures",
                            ml_strerror(st));
    }
    if (ml_output_end(o, err, sizeof err) != ML_OK)
        return ml_cli_error("%s: %s", path, err);
    return 0;
}

int ml_plots_write_measure(ml_output *plot, ml_output *pdf, const ml_report *r, const ml_plot_data *p,
                           const char *cmdline)
{
    int rc = 0;
    if (plot)
        rc = write_one(plot, &(job){.r = r, .p = p, .cmdline = cmdline});
    if (rc == 0 && pdf)
        rc = write_one(pdf, &(job){.r = r, .p = p, .cmdline = cmdline, .pdf_record = true});
    return rc;
}

int ml_plots_write_compare(ml_output *plot, ml_output *pdf, const ml_comparison *c, const ml_plot_data *a,
                           const ml_plot_data *b, const char *cmdline)
{
    int rc = 0;
    if (plot)
        rc = write_one(plot, &(job){.c = c, .p = a, .b = b, .cmdline = cmdline});
    if (rc == 0 && pdf)
        rc = write_one(pdf, &(job){.c = c, .p = a, .b = b, .cmdline = cmdline, .pdf_record = true});
    return rc;
}
