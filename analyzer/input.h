/* The one input step of every command: a file or a device -> the segment to analyse -> what it
 * holds (kind) -> which channels (dsp/channels.h), and the carrier's first look.
 * SPDX-License-Identifier: MIT
 *
 * measure, live, compare, watch and log open their input, decide the kind, map the channels,
 * look ahead for the carrier and read a carrier reference here, with the same rules and the same
 * messages (each prints one line "modlens: <input>: <problem>" and returns an exit status).
 */
#ifndef ML_ANALYZER_INPUT_H
#define ML_ANALYZER_INPUT_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "analyzer/options.h"
#include "dsp/carrier.h"
#include "dsp/channels.h"
#include "dsp/spectrum.h"
#include "io/audio.h"
#include "io/source.h"

/* Seconds looked at to find the carrier, or to decide whether one channel is an IF signal. */
#define ML_INPUT_LOOK_S 4.0

/* The analysed segment of an open source. */
typedef struct {
    ml_source *src;
    const ml_source_info *info;
    int64_t first;            /* first frame                                                */
    int64_t nframes;          /* frames analysed (shortened when a live capture ends early) */
    bool live;                /* a live capture: an early end shortens the segment           */
    bool ended_early;         /* the capture ended before nframes (interrupt or fault)       */
    bool failed;              /* ... because of a device fault (message already printed)     */
    bool went_silent;         /* a live input stopped delivering: digital silence (or one held
                                 value) from silent_from_s (file time, s) to the end; set by the
                                 pipelines' dropout detection                                  */
    double silent_from_s;
} ml_segment;

/* Opens in->path and checks the channels and the segment (--start, --duration); seeks to its
 * start. 0 or an exit status (error printed); seg->src may be set either way (close it). */
int ml_input_open_file(const ml_input_opts *in, ml_segment *seg);

/* The channels a capture needs for in: --channels, else the analysed channel(s) and reference
 * (ml_input_open_device opens one more for --kind auto when the device has it: the kind rule
 * then sees whether the two are an I/Q pair). */
long ml_input_device_channels(const ml_input_opts *in);

/* Opens the device of in as a live source with lc (device, channels and --rate set from in;
 * the caller sets the rest of lc, a rate too when --rate is not given). seg->nframes is left to
 * the caller. 0 or an exit status. */
int ml_input_open_device(const ml_input_opts *in, ml_live_config *lc, ml_segment *seg);

/* Reads up to want frames at frame `done` of the segment; 0 or an exit status (error printed,
 * naming `name`). A live segment that ends early (interrupt or device fault) is shortened to
 * what arrived and 0 is returned with *got < want. Non-finite samples are errors. */
int ml_input_read(const char *name, ml_segment *seg, float *buf, size_t want, size_t *got, int64_t done);

/* The kind of the segment and why, in reason[len]: in->kind when given; for auto, the one kind
 * rule of every command, from the signal of the opening look_s seconds (at most the segment's
 * nframes), not from the channel count (dsp/kind.h):
 *  - two channels from the analysed one on (not the reference): I/Q when they are a quadrature
 *    pair (ml_pair: one-sided spectrum); identical or near-identical channels (a stereo recording
 *    of one source, an IF saved as stereo), two unrelated real signals or a silent channel are
 *    not, and one channel is read alone as below (the other one when the analysed one is silent:
 *    in->channel is then moved to it);
 *  - one channel: an AM IF signal when ml_if_evidence says so (a carrier above 3 kHz with
 *    symmetric sidebands, hum sidebands stronger than any baseband hum, or alone), else audio.
 * *carrier_hz gets the IF carrier found (else an->carrier_hz). The source is left at the
 * segment's start. 0 or an exit status (error printed). */
int ml_input_kind(ml_input_opts *in, const ml_analysis_opts *an, ml_segment *seg, double look_s,
                  ml_kind *kind, double *carrier_hz, char *reason, size_t len);

/* The channel map of the segment for the kind: 0 or an exit status (error printed). */
int ml_input_channels(const ml_input_opts *in, const ml_segment *seg, ml_kind kind, ml_channels *out);

/* The spectrum (for the carrier search: at most 4096 points when frames allow four segments) of
 * the first `frames` frames of the segment (the analysed column, or I/Q), then seeks back to
 * its start; *out is the caller's to destroy. 0 or an exit status. */
int ml_input_look_ahead(const char *name, ml_segment *seg, const ml_channels *ch, int64_t frames,
                        ml_spectrum **out);

/* The carrier in the opening look_s seconds of the segment (at most its nframes), by
 * dsp/carrier.h: near nominal_hz, or the strongest when NAN; the source is left at the segment's
 * start. 0 or an exit status (error printed: no carrier there). */
int ml_input_find_carrier(const char *name, ml_segment *seg, const ml_channels *ch, double nominal_hz,
                          double look_s, ml_carrier *car);

/* C from a capture of the unmodulated carrier (--carrier-reference path, same set-up: rate and
 * channels as the analysed input): its carrier line's amplitude near near_hz (within 20 bins and
 * 50 Hz; NAN: the strongest component). 0 or an exit status. */
int ml_input_reference_carrier(const char *path, const ml_input_opts *in, bool iq, double rate_hz,
                               double near_hz, double *c);

#endif
