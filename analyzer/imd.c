/* Intermodulation in measure (see analyzer/imd.h).
 * SPDX-License-Identifier: MIT
 */
#include "analyzer/imd.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analyzer/measure.h"
#include "dsp/imd.h"
#include "dsp/resolution.h"

#define ABSURD_PCT 100.0 /* products above the tone: no two-tone signal (demodulated audio) */
#define MAINS_TOL 0.02 /* a tone within 2 % of m x 50 or 60 Hz (m = 1..6) sits on a mains line */

/* The figures that need a single tone, withdrawn for a two-tone signal. */
static const char *const single_tone[] = {
    "audio.thd_pct",  "audio.thd_db",    "audio.thdn_pct", "audio.thdn_db",
    "audio.sinad_db", "audio.snr_db",    "audio.enob_bits", "audio.noise_dbfs",
    "modulation.envelope_thd_pct", "modulation.noise_db",
};
static const char *const hum_figures[] = {"hum.mains_hz", "hum.level_dbfs", "hum.level_dbc",
                                          "modulation.hum_db"};

static bool on_mains(double f)
{
    for (int m = 1; m <= 6; m++)
        if (fabs(f / (50.0 * m) - 1) <= MAINS_TOL || fabs(f / (60.0 * m) - 1) <= MAINS_TOL)
            return true;
    return false;
}

/* Removes the table at path from rep. */
static void drop_table(ml_report *rep, const char *path)
{
    for (size_t i = 0; i < rep->ntables; i++)
        if (strcmp(rep->tables[i].path, path) == 0) {
            memmove(&rep->tables[i], &rep->tables[i + 1], (rep->ntables - i - 1) * sizeof rep->tables[0]);
            rep->ntables--;
            return;
        }
}

/* Removes the notes that begin with prefix. */
static void drop_note(ml_report *rep, const char *prefix)
{
    size_t k = 0;
    for (size_t i = 0; i < rep->nnotes; i++)
        if (strncmp(rep->notes[i], prefix, strlen(prefix)) != 0) {
            if (k != i)
                memcpy(rep->notes[k], rep->notes[i], sizeof rep->notes[k]);
            k++;
        }
    rep->nnotes = k;
}

/* What the single-tone figures say of a two-tone signal (analyzer/imd.h). */
static void withdraw(ml_report *rep, const ml_imd_result *r)
{
    for (size_t i = 0; i < sizeof single_tone / sizeof *single_tone; i++)
        ml_report_unmeasured(rep, single_tone[i], "two-tone IMD signal: THD and noise need a single tone "
                                                  "(see imd.*)");
    drop_table(rep, "audio.harmonics");
    drop_note(rep, "no clear test tone"); /* the other tone counted as noise */
    static const char one_of[] = "two-tone IMD signal: one of the tones (imd.f1_hz, imd.f2_hz)";
    ml_report_qualify(rep, "audio.fundamental_hz", "%s", one_of);
    ml_report_qualify(rep, "audio.fundamental_dbfs", "%s", one_of);
    ml_report_qualify(rep, "modulation.index_spectral", "two-tone IMD signal: the stronger tone's sidebands");
    if (on_mains(r->f1_hz) || on_mains(r->f2_hz)) {
        for (size_t i = 0; i < sizeof hum_figures / sizeof *hum_figures; i++)
            ml_report_unmeasured(rep, hum_figures[i], "a tone of the IMD signal lies on a mains line");
        drop_table(rep, "hum.components");
    }
}

/* A figure (%) and, when products below the noise carry most of it, its upper bound. */
static void figure(ml_report *rep, const char *name, double pct, bool upper)
{
    ml_measure_add(rep, name, pct);
    if (upper)
        ml_report_bound(rep, name, ML_BOUND_UPPER,
                        "noise-limited: the products do not stand above the noise");
}

/* Products stronger than the tone they ride on (a figure above 100 %, bound or value) are no
 * intermodulation of a two-tone signal: in the demodulated audio of if/iq they mean that the tones
 * are not in it (a two-tone audio recording read as an IF, a wrong --carrier): the reason, or NULL
 * when the figures stand. */
static const char *absurd(const ml_imd_result *r, char *buf, size_t n)
{
    const double f[3] = {r->method == ML_IMD_SMPTE ? r->smpte_pct : r->dfd2_pct,
                         r->method == ML_IMD_SMPTE ? r->smpte_d2_pct : r->dfd3_pct,
                         r->method == ML_IMD_SMPTE ? r->smpte_d3_pct : 0.0};
    double worst = 0.0;
    for (int i = 0; i < 3; i++)
        if (isfinite(f[i]) && f[i] > worst)
            worst = f[i];
    if (!(worst > ABSURD_PCT))
        return NULL;
    snprintf(buf, n,
             "no two-tone signal in the demodulated audio (products %.3g %% of the tone); "
             "audio? --kind audio",
             worst);
    return buf;
}

static void imd_report(ml_report *rep, const ml_spectrum *spec, const ml_analysis_opts *an, bool tone,
                       bool demodulated)
{
    if (an->imd_off || spec == NULL || (an->imd.method == ML_IMD_AUTO && !tone))
        return;
    ml_imd_result r;
    const ml_status st = ml_imd_analyze(spec, &an->imd, &r);
    if (st != ML_OK) {
        if (an->imd.method != ML_IMD_AUTO) { /* asked for: say why there is none */
            const char *why =
                st == ML_ENOSIGNAL ? "two tones were not found" : "the tones lie outside the band";
            const bool smpte = an->imd.method == ML_IMD_SMPTE;
            const char *names[3] = {smpte ? "imd.smpte_pct" : "imd.dfd2_pct",
                                    smpte ? "imd.smpte_d2_pct" : "imd.dfd3_pct",
                                    smpte ? "imd.smpte_d3_pct" : NULL};
            for (int i = 0; i < 3 && names[i]; i++) {
                ml_measure_add(rep, names[i], NAN);
                ml_report_unmeasured(rep, names[i], "%s", why);
            }
        }
        return;
    }
    char why[128];
    if (demodulated && absurd(&r, why, sizeof why) != NULL) {
        /* no figure, and the single-tone figures stand: the audio holds no two-tone signal */
        const bool smpte = r.method == ML_IMD_SMPTE;
        const char *names[6] = {"imd.f1_hz",
                                "imd.f2_hz",
                                "imd.ratio_db",
                                smpte ? "imd.smpte_pct" : "imd.dfd2_pct",
                                smpte ? "imd.smpte_d2_pct" : "imd.dfd3_pct",
                                smpte ? "imd.smpte_d3_pct" : NULL};
        ml_report_add_text(rep, "imd.method", ml_imd_method_name(r.method));
        for (int i = 0; i < 6 && names[i]; i++) {
            ml_measure_add(rep, names[i], NAN);
            ml_report_unmeasured(rep, names[i], "%s", why);
        }
        return;
    }
    const char *method = r.method == ML_IMD_SMPTE ? (r.detected ? "smpte (detected)" : "smpte")
                                                  : (r.detected ? "dfd (detected)" : "dfd");
    ml_report_add_text(rep, "imd.method", method);
    ml_measure_add(rep, "imd.f1_hz", r.f1_hz);
    ml_measure_add(rep, "imd.f2_hz", r.f2_hz);
    ml_measure_add(rep, "imd.ratio_db", r.ratio_db);
    if (r.method == ML_IMD_SMPTE) {
        figure(rep, "imd.smpte_pct", r.smpte_pct, r.smpte_upper_bound);
        figure(rep, "imd.smpte_d2_pct", r.smpte_d2_pct, r.smpte_d2_upper_bound);
        figure(rep, "imd.smpte_d3_pct", r.smpte_d3_pct, r.smpte_d3_upper_bound);
    } else {
        figure(rep, "imd.dfd2_pct", r.dfd2_pct, r.dfd2_upper_bound);
        figure(rep, "imd.dfd3_pct", r.dfd3_pct, r.dfd3_upper_bound);
    }
    if (r.nskipped > 0)
        ml_report_note(rep, "intermodulation: %zu product%s outside the usable band left out of the sums",
                       r.nskipped, r.nskipped == 1 ? "" : "s");
    withdraw(rep, &r);
}

void ml_imd_report(ml_report *rep, const ml_spectrum *spec, const ml_analysis_opts *an, bool tone)
{
    imd_report(rep, spec, an, tone, false);
}

/* ---- the demodulated audio of if/iq ------------------------------------------------------- */

struct ml_imd_envelope {
    ml_spectrum *spec;        /* NULL: no IMD analysis                              */
    size_t decim, phase;      /* every decim-th envelope sample; phase of the next */
    double buf[1024];
    ml_modulation_envelope_fn next;
    void *next_ctx;
};

ml_status ml_imd_envelope_create(const ml_analysis_opts *an, double rate_hz, int64_t frames,
                                 double bandwidth_hz, double transition_hz, ml_modulation_envelope_fn next,
                                 void *next_ctx, ml_imd_envelope **out)
{
    *out = NULL;
    ml_imd_envelope *e = calloc(1, sizeof *e);
    if (e == NULL)
        return ML_ENOMEM;
    e->next = next;
    e->next_ctx = next_ctx;
    e->decim = bandwidth_hz + transition_hz <= rate_hz / 4 ? 2 : 1;
    const double rate = rate_hz / (double)e->decim;
    ml_spectrum_config sc = ml_spectrum_config_default(rate);
    sc.window = an->window;
    sc.nfft = ml_resolution_nfft(rate, frames / (int64_t)e->decim, ML_RESOLUTION_SPAN);
    sc.hop = sc.nfft;
    sc.remove_dc = 1; /* the envelope's DC is the carrier */
    if (!an->imd_off && sc.nfft > 0) {
        const ml_status st = ml_spectrum_create(&sc, &e->spec);
        if (st != ML_OK) {
            free(e);
            return st;
        }
    }
    *out = e;
    return ML_OK;
}

void ml_imd_envelope_destroy(ml_imd_envelope *e)
{
    if (e == NULL)
        return;
    ml_spectrum_destroy(e->spec);
    free(e);
}

void ml_imd_envelope_hook(void *ctx, const double *env, size_t n)
{
    ml_imd_envelope *e = ctx;
    if (e->spec != NULL) {
        size_t k = 0;
        for (size_t i = 0; i < n; i++) {
            if (e->phase == 0)
                e->buf[k++] = env[i];
            e->phase = (e->phase + 1) % e->decim;
            if (k == sizeof e->buf / sizeof e->buf[0]) {
                ml_spectrum_push_double(e->spec, e->buf, k);
                k = 0;
            }
        }
        ml_spectrum_push_double(e->spec, e->buf, k);
    }
    if (e->next)
        e->next(e->next_ctx, env, n);
}

void ml_imd_envelope_report(const ml_imd_envelope *e, ml_report *rep, const ml_analysis_opts *an, bool tone)
{
    if (e != NULL && e->spec != NULL)
        imd_report(rep, e->spec, an, tone, true);
}
