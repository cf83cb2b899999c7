/* Pictures of a measurement: spectrum, envelope, trapezoid, and a comparison's overlay and table,
 * drawn with cairo into PNG, SVG or PDF (chosen by the file name), and the PDF report.
 * SPDX-License-Identifier: MIT
 *
 * The analyzer fills an ml_plot_data while it streams (bounded: one spectrum of nbins points,
 * at most ML_PLOT_MAX_ENV envelope and reference samples) and hands it to the writers here.
 * Writers draw into a FILE the caller opened (analyzer/output.h makes it safe); they never exit
 * and return ML_EIO when the stream or cairo fails, ML_EINVAL for an unknown file type.
 */
#ifndef ML_IO_PLOT_H
#define ML_IO_PLOT_H

#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>

#include "dsp/status.h"
#include "io/compare.h"
#include "io/report.h"

#define ML_PLOT_MAX_MARKS 96
#define ML_PLOT_MAX_MASK 64
#define ML_PLOT_MAX_ENV 16384

typedef enum { ML_MARK_FUNDAMENTAL, ML_MARK_HARMONIC, ML_MARK_HUM, ML_MARK_CARRIER, ML_MARK_SIDEBAND } ml_mark_kind;

typedef struct {
    double x_hz;
    ml_mark_kind kind;
    char label[16];
} ml_plot_mark;

#define ML_PLOT_SWEEP_GROUPS 16
#define ML_PLOT_SWEEP_BANDS 16

/* A sweep's response and distortion against frequency (analyzer/sweep.c): n points, each in a
 * group (one curve per group, the level it was swept at); arrays owned (ml_plot_alloc_sweep). */
typedef struct {
    size_t n;
    double *freq_hz;           /* > 0                                                        */
    double *rel_db;            /* level re the group's reference (dB); NAN: not measured    */
    double *thd_pct;           /* NAN: not measured                                          */
    unsigned char *thd_upper;  /* 1: thd_pct is only an upper bound (drawn open)             */
    size_t *group;             /* 0 .. ngroups - 1                                           */
    size_t ngroups;
    char label[ML_PLOT_SWEEP_GROUPS][32]; /* each group's level, e.g. "-20 dBFS", "50 %"    */
    const char *thd_title;     /* "THD" or "envelope THD"                                    */
    /* the limits profile's [response] window and THD bands (analyzer/limits.h), when given */
    bool has_window;
    double win_lo_hz, win_hi_hz, win_min_db, win_max_db;
    size_t nbands;
    double band_lo_hz[ML_PLOT_SWEEP_BANDS], band_hi_hz[ML_PLOT_SWEEP_BANDS];
    double band_max_pct[ML_PLOT_SWEEP_BANDS];
} ml_plot_sweep;

typedef struct {
    /* spectrum: nbins points in ascending frequency (owned, malloc; NULL when none) */
    size_t nbins;
    double *freq_hz;
    double *level_db;
    const char *level_unit;    /* "dBFS" or "dBc"                                            */
    bool log_freq;             /* logarithmic frequency axis                                 */
    double x_lo_hz, x_hi_hz;   /* axis range                                                 */
    size_t nmarks;
    ml_plot_mark marks[ML_PLOT_MAX_MARKS];
    bool has_obw;              /* occupied bandwidth edges                                   */
    double obw_lo_hz, obw_hi_hz;
    size_t nmask;              /* emission mask polylines (absolute Hz, dBc), both sides; a
                                  NAN frequency ends one polyline (the sides are drawn apart)  */
    double mask_hz[ML_PLOT_MAX_MASK], mask_db[ML_PLOT_MAX_MASK];
    double mask_rbw_hz;
    char mask_note[128];       /* drawn under the mask's legend ("" for none)                 */
    /* envelope in units of the unmodulated carrier Ec (owned; nenv <= ML_PLOT_MAX_ENV) */
    size_t nenv, env_cap;
    double *env;
    double *ref;               /* the reference channel at the same instants, or NULL         */
    double env_rate_hz;
    double emax, emin;         /* peak readings / Ec                                          */
    double pinch_level;        /* pinch-off level / Ec                                        */
    double fm_hz;              /* modulating tone (0: unknown)                                */
    bool has_trapezoid;
    /* capture window bookkeeping for the analyzer */
    long long win_first;       /* first input index of the window                           */
    long long env_seen;        /* envelope samples seen so far                               */
    long long env_offset;      /* input index of envelope sample 0                           */
    ml_plot_sweep sweep;       /* a sweep's curves (n 0: none)                               */
} ml_plot_data;

void ml_plot_data_init(ml_plot_data *p);  /* empty, nothing allocated */
void ml_plot_data_free(ml_plot_data *p);  /* frees and empties */
/* Allocates the spectrum arrays for nbins points; ML_ENOMEM. */
ml_status ml_plot_alloc_spectrum(ml_plot_data *p, size_t nbins);
/* Allocates the envelope window of n <= ML_PLOT_MAX_ENV samples; ML_ENOMEM | ML_EINVAL. */
ml_status ml_plot_alloc_envelope(ml_plot_data *p, size_t n, bool with_ref);
void ml_plot_mark_add(ml_plot_data *p, double x_hz, ml_mark_kind kind, const char *label);
/* Allocates the sweep's arrays for n points (n set, values NAN, groups 0); ML_ENOMEM, ML_EINVAL. */
ml_status ml_plot_alloc_sweep(ml_plot_data *p, size_t n);

/* The file type from the name's extension: 0 png, 1 svg, 2 pdf, -1 other. */
int ml_plot_type(const char *path);

/* The measurement's pictures (spectrum; envelope and trapezoid when present; a sweep's response
 * and distortion against frequency), one under the other, in the type of path, written to f. */
ml_status ml_plot_write(FILE *f, const char *path, const ml_plot_data *p, const ml_report *r);

/* A comparison: A and B spectra overlaid (either may be NULL or empty) and the metric table. */
ml_status ml_plot_write_compare(FILE *f, const char *path, const ml_comparison *c, const ml_plot_data *a,
                                const ml_plot_data *b);

/* PDF report of a measurement: what was measured (input, kind, rate, duration, command line,
 * time, version), the metric table with limits and PASS/FAIL, the notes, and the pictures. */
ml_status ml_report_write_pdf(FILE *f, const ml_report *r, const ml_plot_data *p, const char *cmdline,
                              const char *when, const char *version);
/* PDF report of a comparison: both inputs, the comparison table, the overlaid spectra. */
ml_status ml_compare_write_pdf(FILE *f, const ml_comparison *c, const ml_plot_data *a, const ml_plot_data *b,
                               const char *cmdline, const char *when, const char *version);

#endif
