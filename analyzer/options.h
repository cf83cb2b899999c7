/* The commands' options in three groups: where the samples come from (input), how they are
 * analysed (analysis), and what is written and checked (output). Each command takes the groups
 * it needs; a group's options mean the same in every command.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_ANALYZER_OPTIONS_H
#define ML_ANALYZER_OPTIONS_H

#include <getopt.h>
#include <stdbool.h>
#include <stddef.h>

#include "analyzer/limits.h"
#include "dsp/card.h"
#include "dsp/imd.h"
#include "dsp/metrics.h"
#include "dsp/window.h"
#include "io/plot.h"
#include "io/report.h"

#define ML_MAX_CHANNELS 64

typedef enum { ML_KIND_AUTO, ML_KIND_AUDIO, ML_KIND_IF, ML_KIND_IQ } ml_kind;

/* Input: a file, or a live device, and which of its channels hold what. */
typedef struct {
    const char *path;         /* the file; for live input the name in messages ("live")        */
    bool live;                /* from a sound-card device instead of a file                      */
    const char *device;       /* --device: NULL = the default input                             */
    double rate_hz;           /* --rate: 0 = the device's default                               */
    long channels;            /* --channels: 0 = as the kind needs (iq 2, else 1, plus a reference) */
    double seconds;           /* --seconds: capture length (live)                                */
    const char *save_path;    /* --save: raw capture, NULL for none                              */
    bool play;                /* --play-tone: play a tone while capturing                        */
    double play_hz, play_dbfs;
    const char *output_device; /* --output-device                                                */
    ml_kind kind;             /* --kind                                                          */
    long channel;             /* --channel, 1-based; for iq the I channel (Q is the next one)     */
    long reference_channel;   /* --reference-channel, 1-based, 0 = none                          */
    bool swap_iq;             /* --swap-iq                                                       */
    double start_s;           /* --start                                                         */
    double duration_s;        /* --duration; < 0: to the end                                      */
} ml_input_opts;

/* Analysis: the audio figures' band and window, the carrier and the channel. */
typedef struct {
    ml_audio_config audio;    /* --band, --tone, --no-tone, --with-tone, --harmonics, --mains    */
    ml_window_type window;    /* --window                                                        */
    double carrier_hz;        /* --carrier: NAN = detect                                          */
    double bandwidth_hz;      /* --bandwidth: 0 = widest that fits, at most 10 kHz                */
    const char *carrier_reference; /* --carrier-reference FILE, or NULL                          */
    double peak_hold_ms;      /* --peak-hold-ms                                                  */
    /* levels and the card (analyzer/bench.h fills the last three from the files and settings)   */
    double full_scale_dbu;    /* --full-scale-dbu, or from --calibration / the settings: NAN none */
    const char *calibration_path; /* --calibration FILE                                          */
    double load_ohms;         /* --load-ohms: 0 = none                                            */
    const char *card_path;    /* --card FILE                                                      */
    bool card_correct;        /* --card-correct                                                   */
    bool no_settings;         /* --no-settings                                                    */
    const ml_card_profile *card; /* the card profile loaded from card_path, or NULL              */
    const char *cal_source;   /* where full_scale_dbu comes from ("" none)                       */
    const char *settings_text; /* the settings applied, for the report ("" none)                 */
    ml_imd_config imd;        /* --imd: auto (default), or a method and perhaps its tones         */
    bool imd_off;             /* --imd off                                                       */
    bool imd_given;           /* --imd was given                                                 */
} ml_analysis_opts;

/* Output: limits, the report and its pictures. */
typedef struct {
    const char *limits_path;  /* --limits                                                        */
    const ml_limits *limits;  /* the loaded profile or NULL                                      */
    ml_report_format format;  /* --format                                                        */
    const char *output_path;  /* --output                                                        */
    const char *plot_path;    /* --plot FILE (.png, .svg, .pdf) or NULL                          */
    const char *report_path;  /* --report FILE.pdf or NULL                                       */
    ml_plot_data *plot;       /* filled with the pictures' data when not NULL                    */
} ml_output_opts;

/* Which options a command takes, by group (combine with |). */
enum {
    ML_OPTS_SOURCE = 1 << 0,     /* --kind --channel --swap-iq --reference-channel            */
    ML_OPTS_SEGMENT = 1 << 1,    /* --start --duration                                        */
    ML_OPTS_DEVICE = 1 << 2,     /* --device --rate --channels --seconds                      */
    ML_OPTS_CAPTURE = 1 << 3,    /* --save --play-tone --output-device                        */
    ML_OPTS_AUDIO = 1 << 4,      /* --band --tone --no-tone --with-tone --harmonics --mains --window */
    ML_OPTS_MODULATION = 1 << 5, /* --carrier --bandwidth --carrier-reference --peak-hold-ms  */
    ML_OPTS_REPORT = 1 << 6,     /* --limits --format --output --plot --report                */
    ML_OPTS_LEVELS = 1 << 7,     /* --full-scale-dbu --calibration --no-settings              */
    ML_OPTS_BENCH = 1 << 8,      /* --load-ohms --card --card-correct                         */
    ML_OPTS_IMD = 1 << 9,        /* --imd                                                     */
};
/* getopt ids: the groups' options use ML_OPT_ID_FIRST .. ML_OPT_ID_FIRST + 63; a command's own
 * options use ids from ML_OPT_ID_OWN on (or single characters). */
#define ML_OPT_ID_FIRST 256
#define ML_OPT_ID_OWN 512
/* A return of ml_options_apply: the id is none of the groups'. */
#define ML_OPTS_NOT_MINE (-1)

/* The getopt_long table of the groups' options, followed by own[] (up to its {NULL} end) and the
 * terminating entry, into out[cap]; returns the entries written (without the terminator). */
size_t ml_options_table(unsigned groups, const struct option *own, struct option *out, size_t cap);

/* The group of a group option's id (0 for other ids). */
unsigned ml_options_group(int id);

/* Applies the group option id with its argument: 0 when done, ML_OPTS_NOT_MINE for another id,
 * or an exit status after a printed usage error ("--NAME: ..."). */
int ml_options_apply(int id, const char *arg, ml_input_opts *in, ml_analysis_opts *an, ml_output_opts *out);

/* The defaults of each group. */
ml_input_opts ml_input_opts_default(void);
ml_analysis_opts ml_analysis_opts_default(void);
ml_output_opts ml_output_opts_default(void);

#endif
