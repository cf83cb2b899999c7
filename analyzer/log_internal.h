/* Private to analyzer/log*.c: the logger's state and the functions its parts share.
 * SPDX-License-Identifier: MIT
 *
 * analyzer/log.c        options, the command, the run (start-up, reading, gaps, end, summary,
 *                       picture);
 * analyzer/log_grid.c   the time grid: intervals and their steps, per-step spectra and
 *                       detectors, the interval's accumulators and its modulation analysis;
 * analyzer/log_listen.c what the listener hears: impulses on the audio or the demodulated
 *                       envelope, buzz, the quasi-peak chain (if/iq);
 * analyzer/log_events.c events (impulses merged, buzz, level changes, mains, gaps, the end) and
 *                       the summary;
 * analyzer/log_rows.c   the output files (names, checks, rotation, continuation) and the rows;
 * analyzer/log_state.c  what a log holds (its head line) and the detectors' state beside it.
 */
#ifndef ML_ANALYZER_LOG_INTERNAL_H
#define ML_ANALYZER_LOG_INTERNAL_H

#include <complex.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>
#include <sys/types.h>

#include "analyzer/log.h"
#include "dsp/am.h"
#include "dsp/aweight.h"
#include "dsp/buzz.h"
#include "dsp/channels.h"
#include "dsp/detect.h"
#include "dsp/history.h"
#include "dsp/modulation.h"
#include "dsp/qpeak.h"
#include "dsp/spectrum.h"
#include "dsp/stats.h"
#include "io/logfile.h"
#include "io/output.h"

#define ML_LOG_HUM_N 6       /* hum columns: mains fundamental and harmonics 2..6   */
#define ML_LOG_WORST_N 5     /* worst events kept for the summary                   */
#define ML_LOG_EV_CAP 1024   /* events returned by one detector push                 */
#define ML_LOG_SG_ROWS 128   /* spectrogram bands                                     */
#define ML_LOG_BLOCK 4096    /* frames read at a time                                 */
#define ML_LOG_NCHG 4        /* change detectors: hum, noise, carrier loss, level     */
#define ML_LOG_PREFIX "# modlens log" /* how the first line of a log's files starts   */
#define ML_LOG_STATE_EVERY_S 1.0 /* wall-clock seconds between saves of the state     */

enum {
    ML_LOG_IMPULSE,
    ML_LOG_BUZZ,
    ML_LOG_HUM,
    ML_LOG_NOISE,
    ML_LOG_CARRIER,
    ML_LOG_LEVEL,
    ML_LOG_MAINS,
    ML_LOG_GAP,
    ML_LOG_END,
    ML_LOG_KINDS
};
extern const char *const ml_log_kind_name[ML_LOG_KINDS];
/* The change detectors' index w: hum, noise, carrier loss, broadband level. */
enum { ML_CHG_HUM, ML_CHG_NOISE, ML_CHG_CARRIER, ML_CHG_LEVEL };

typedef struct {
    int kind;
    double start_off, end_off, peak_dbfs, rise_db, start_utc;
} ml_log_summary_event;

typedef struct {
    int64_t start, end;        /* pos of the first impulse's start, the last one's end          */
    double peak_dbfs, rise_db; /* largest of the merged impulses                              */
    long n;                    /* impulses merged; 0 = none pending                             */
} ml_log_impulses;

/* An event line the run this one continues already wrote (not written again). */
typedef struct {
    int kind;
    char start[24];
} ml_log_seen;

typedef struct {
    const ml_log_opts *o;
    ml_source *src;
    const ml_source_info *info;
    double rate, start_utc, offset0_s; /* offset_s = offset0_s + pos / rate                 */
    bool is_complex, is_if;
    ml_channels ch;        /* the analysed column(s) of the frames                           */
    const char *name;      /* the input in messages                                          */
    char tz[128];          /* the time zone of the local times                               */

    /* time grid */
    int64_t pos;           /* frames since the input's start, lost frames included          */
    int64_t origin;        /* pos of the first interval's start                              */
    int64_t ival_frames, step_len;
    int64_t ipos;          /* frames into the current interval                               */
    size_t steps_per_ival; /* K                                                              */

    /* detectors */
    ml_aweight *aw;
    ml_impulse *imp;
    int64_t imp_base;      /* pos of the impulse detector's frame 0                          */
    int64_t imp_judged;    /* pos up to which the impulse detector has been pushed           */
    int64_t imp_counted;   /* pos of an open impulse already counted in a written row, or -1 */
    ml_log_impulses mi;    /* impulse event still open to merging                            */
    ml_log_impulses held[64]; /* merged impulse events held until no buzz can claim them       */
    size_t nheld;
    ml_impulse *imp_buzz;  /* a more sensitive detector whose impulses only feed the buzz one   */
    ml_change *chg[ML_LOG_NCHG];
    double chg_peak[ML_LOG_NCHG];
    double chg_old_start[ML_LOG_NCHG], chg_old_in[ML_LOG_NCHG]; /* offsets of a restored open
                                                                   change's start, its in-run */
    ml_spectrum *spec;     /* the step's spectrum                                            */
    ml_spectrum *mspec;    /* the interval's spectrum on measure's transform, for the mains vote
                              (real input, --mains not given; else NULL)                        */
    size_t nbins;

    /* what the listener hears (if/iq: the envelope of a demodulator of its own) */
    ml_am *lam;
    int64_t lam_base;      /* pos of the first input sample of the demodulator               */
    uint64_t lam_out;      /* envelope samples it gave                                       */
    double *lenv;          /* its output                                                     */
    unsigned char *lmod;
    float *lenvf;
    size_t lcap;
    ml_buzz *buzz;
    double *imp_times;     /* impulse starts (offsets) waiting for the buzz detector         */
    size_t nimp_times;
    ml_buzz_event *bev;
    double buzz_peak_dbfs, buzz_rise_db;
    double buzz_last_s, buzz_last_e, buzz_last_hz; /* the latest buzz ended (NAN: none)            */
    ml_qpeak *qp;
    double qp_centre_hz;
    uint64_t qp_frames;    /* frames pushed since the chain started                           */
    bool qp_span_ok;       /* the current interval's span began with a settled chain         */

    /* interval accumulators */
    ml_stats st;
    double asum;
    int64_t data_frames, lost_frames;
    long impulses;
    double *psd, *psd_sum, *scratch;
    size_t nspectra, nsegments;
    char note[400];

    /* step accumulators */
    double step_sumsq;
    int64_t step_n;
    double hf_sum, hf_x1, hf_x2; /* the broadband level: second difference of what the listener
                                    hears, its sum of squares over the step and its history      */
    int64_t hf_n;
    int hf_prime;          /* samples that only fill the history (after a start or a gap)    */

    /* mains: decided once, held, changed only with an event */
    double mains_hz;       /* 0 while undecided                                               */
    bool mains_given;      /* --mains                                                         */
    int mains_votes;       /* intervals in a row where `mains_vote` led by 6 dB              */
    double mains_vote, mains_vote_s;

    /* carrier and the interval's modulation analysis (if/iq) */
    double carrier_hz;     /* NAN until found                                                 */
    double carrier_amp;    /* its amplitude when found                                        */
    double reference_c;    /* --carrier-reference's C, or NAN                                 */
    bool mod_failed;       /* the analysis cannot be made for this carrier and interval       */
    ml_modulation *mod;
    bool mod_span;         /* the current interval's span is being analysed                   */

    /* buffers */
    float *buf, *mono;
    double *aout;          /* the A-weighted samples of a chunk                               */
    float *pairs;          /* a chunk's I/Q as (re, im) pairs                                  */
    ml_event *ev;

    /* output */
    char suffix[16];       /* "-N" of a new log beside --out (--new-log), else ""               */
    char *rows_path, *events_path, *state_path;
    char *meta;            /* the head's first line, without '\n'                              */
    ml_logfile *rows, *events;
    int64_t period;        /* rotation period of the open files                              */
    double skip_events_until; /* without a saved state: events starting at or before this offset
                                 were written by the run this one continues                   */
    double skip_rows_until;   /* rows starting before this offset are already written        */
    ml_log_seen *seen;     /* events written after the saved state by the run this one continues */
    size_t nseen;
    bool wrote_error;
    ml_output_set *plot_set;
    ml_output *plot_out;

    /* a row waits until the impulse detector has heard its whole interval */
    bool row_pending;
    char *row_a, *row_b;   /* the row's text before and after its impulse count               */
    int64_t row_start, row_end;
    long row_impulses;
    double row_utc;

    /* state beside the log */
    double state_wall;     /* monotonic time of the last save                                  */
    char *snap;            /* a state taken at an interval's end, saved once its row is out    */
    size_t snap_len, snap_cap;
    int64_t snap_row_end;
    bool resumed_fresh;    /* continued without a saved state                                   */
    char resume_note[200]; /* said in the first row this run writes                              */
    double *tmp;           /* scratch for the detectors' numbers                                */
    char *state_text;      /* the saved state read at the start, until the detectors take it   */
    bool state_closed;     /* it was written at a stop                                         */
    size_t tmp_n;
    dev_t state_dev;       /* the state file checked at the start or last written (ino 0: none) */
    ino_t state_ino;

    /* summary */
    long count[ML_LOG_KINDS];
    long per_hour[24], per_local_hour[24];
    ml_log_summary_event worst[ML_LOG_WORST_N];
    size_t nworst;
    long rows_written;
    long fa_hist[3000];    /* rows' Fa in 0.1 dB bins from -100 dB, for the summary's median  */

    ml_history *sgram;     /* --plot: bounded spectrogram of the interval spectra          */
    double band_hz[ML_LOG_SG_ROWS], sg_col[ML_LOG_SG_ROWS];
} ml_logger;

double ml_log_offset_of(const ml_logger *L, int64_t pos);
int64_t ml_log_pos_of(const ml_logger *L, double offset_s);
/* pos of the start of global step g of the grid (the change detectors' value index). */
int64_t ml_log_step_pos(const ml_logger *L, int64_t g);

/* log_rows.c */
/* v with decimals into b[n]; "" (an empty cell) when not finite. */
void ml_log_fmt_num(char *b, size_t n, double v, int decimals);
void ml_log_format_utc(double t, char *b, size_t n);
/* The local time of t (the process's time zone) as ISO 8601 with its UTC offset. */
void ml_log_format_local(double t, char *b, size_t n);
int64_t ml_log_period_of(const ml_log_opts *o, double utc);
/* The rows and events files of a period (allocated, NULL when out of memory). */
char *ml_log_rows_path(const ml_logger *L, int64_t period);
char *ml_log_events_path(const ml_logger *L, int64_t period);
char *ml_log_state_path(const ml_logger *L);
const char *ml_log_rows_header(const ml_analysis_opts *an);
const char *ml_log_events_header(void);
/* The head (meta line and header) of the rows or events files, allocated. */
char *ml_log_head(const ml_logger *L, bool events);
/* Registers every file the log reads and writes in set (io/output.h): the input and carrier
 * reference as inputs, rows, events, state and --plot as outputs (*plot: the last). */
ml_status ml_log_register(const ml_logger *L, ml_output_set *set, const char *rows, const char *events,
                          ml_output **plot);
/* Checks the paths of a period before anything is written (io/output.h refusals). */
int ml_log_check_paths(ml_logger *L, const char *rows, const char *events);
/* Checks and attaches the files of a period (nothing written; ml_log_begin_outputs then begins
 * them: the events file first, the rows file only once both are known good). last_row gets the
 * rows file's last row ("" for none). */
int ml_log_open_outputs(ml_logger *L, int64_t period, char *last_row, size_t last_len);
#define ML_LOG_ADOPT_START 3 /* open_outputs: the log holds this recording from another start     */
#define ML_LOG_TAKEN 4       /* open_outputs: --out holds another log and --new-log was given       */
int ml_log_begin_outputs(ml_logger *L);
/* The current interval's row (its modulation figures in mres, or NULL): written, or held until
 * the impulse detector has heard the interval. */
int ml_log_row(ml_logger *L, const ml_modulation_result *mres);
/* Writes the held row when the impulse detector has passed its end (force: now). */
int ml_log_release_row(ml_logger *L, bool force);

/* log_events.c */
int ml_log_write_event(ml_logger *L, int kind, int64_t start_pos, int64_t end_pos, double peak_dbfs,
                       double rise_db, const char *detail);
int ml_log_write_event_at(ml_logger *L, int kind, double start_off, double end_off, double peak_dbfs,
                          double rise_db, double rate_hz, const char *detail);
/* Ends the merged impulse event: held until the buzz detector has judged past it (a buzz forming
 * around it takes it), then written (force: every held one now). */
int ml_log_flush_impulses(ml_logger *L);
int ml_log_release_held(ml_logger *L, bool force);
/* The held and open impulse events from start_off on belong to a buzz that began there. */
void ml_log_absorb_impulses(ml_logger *L, double start_off);
int ml_log_impulse_events(ml_logger *L, size_t n);
int ml_log_change_events(ml_logger *L, int which, size_t n);
int ml_log_push_changes(ml_logger *L, const double value[ML_LOG_NCHG], const double level[ML_LOG_NCHG]);
int ml_log_buzz_events(ml_logger *L, size_t n, const char *why);
/* Ends every open event with a note of why (a stop, the end of the input). */
int ml_log_close_events(ml_logger *L, const char *why);
void ml_log_print_summary(const ml_logger *L, FILE *f, const char *why);

/* log_listen.c */
/* What the listener hears (x[n]) into the step's broadband level. */
void ml_log_hf_push(ml_logger *L, const float *x, size_t n);
ml_status ml_log_listen_create(ml_logger *L);
void ml_log_listen_destroy(ml_logger *L);
/* The listener's demodulator and the quasi-peak chain for the carrier now known (if/iq). */
void ml_log_listen_setup(ml_logger *L);
/* m frames (interleaved) of data: impulses on what the listener hears, quasi-peak. */
int ml_log_listen_push(ml_logger *L, const float *b, size_t m);
/* Lost frames: every chain of the listener starts afresh after them. */
void ml_log_listen_gap(ml_logger *L);
/* Impulses up to the end (the demodulator flushed), buzz closed with why (NULL: the input ended). */
int ml_log_listen_finish(ml_logger *L, const char *why);
/* The quasi-peak readings of the interval (NAN when none or not settled), and a new span. */
void ml_log_listen_span(ml_logger *L, double *qp_dbfs, double *av_dbfs);
/* The buzz detector told the time up to which impulses are known. */
int ml_log_buzz_advance(ml_logger *L);

/* log_grid.c */
ml_status ml_log_make_objects(ml_logger *L);
void ml_log_free_objects(ml_logger *L);
void ml_log_reset_interval(ml_logger *L);
/* The carrier found (frequency, amplitude): the modulation analysis starts with the next interval
 * (ml_log_start_modulation: with the current one, which must not have begun). */
void ml_log_set_carrier(ml_logger *L, double hz, double amplitude);
void ml_log_start_modulation(ml_logger *L);
void ml_log_sgram_bands(ml_logger *L);
/* The spectrogram column of the interval's mean spectrum L->psd into L->sg_col. */
void ml_log_sgram_column(ml_logger *L);
int ml_log_advance(ml_logger *L, const float *buf, size_t n);
int ml_log_finish(ml_logger *L, const char *end_note, const char *why);

/* log_state.c */
/* The head's first line (what is logged: input, kind, settings) into L->meta. */
int ml_log_make_meta(ml_logger *L);
/* The start time recorded in a head line (NAN when it has none). */
double ml_log_meta_start(const char *meta);
/* Why meta (an existing log's first line) is not L's: "" when only the start differs. */
void ml_log_meta_diff(const ml_logger *L, const char *meta, char *why, size_t n);
/* Takes a snapshot of the detectors at an interval's end (kept in memory), or at a stop (closed:
 * its events are closed); ml_log_save_state writes the latest one beside the log. */
int ml_log_snapshot(ml_logger *L, bool closed);
int ml_log_save_state(ml_logger *L);
/* Refuses a state path holding anything but a modlens log state (a symbolic link, not a regular
 * file, another program's data): one error line, nothing written; 0 when it is absent or a state. */
int ml_log_check_state(ml_logger *L);
/* Reads the state beside the log and restores the detectors. 1 when restored (*pos_out: where the
 * grid resumes, *origin_out its origin), 0 when there is none usable (why[] says why, "" when there is
 * no file), else an exit status. */
int ml_log_load_state(ml_logger *L, int64_t *pos_out, int64_t *origin_out, char *why, size_t n);
/* After the listener is set up: the detectors take the state read by ml_log_load_state. */
int ml_log_restore_state(ml_logger *L);

#endif
