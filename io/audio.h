/* Sound-card input and output through PortAudio: the device list, live capture as an ml_source,
 * and a player for generated signals.
 * SPDX-License-Identifier: MIT
 *
 * References: PortAudio V19 API documentation (Pa_Initialize, Pa_OpenStream, PaStreamCallback:
 * "do not allocate memory, access the file system, call library functions or call other
 * functions from the stream callback that may block or take an unpredictable amount of time").
 *
 * Capture and playback use PortAudio's callback API. The callback only copies frames between
 * the device and a preallocated lock-free ring (io/ring.h) and counts overflows; everything else
 * (waiting, saving, analysis) happens on the thread that calls ml_source_read.
 *
 * Every open function initialises PortAudio for the object's lifetime (PortAudio counts
 * initialisations). PortAudio's ALSA back end writes diagnostic lines to stderr while it scans for
 * cards; they are hidden during initialisation (stderr is pointed at /dev/null for that call
 * only), since errors come back as status codes anyway.
 */
#ifndef ML_IO_AUDIO_H
#define ML_IO_AUDIO_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/status.h"
#include "io/source.h"

#define ML_AUDIO_MAX_DEVICES 128

typedef struct {
    int index;               /* PortAudio device index                                      */
    char name[128];
    char host_api[64];
    int max_input_channels;
    int max_output_channels;
    double default_rate_hz;
    bool default_input;      /* the default input of the default host API                    */
    bool default_output;
} ml_audio_device;

/* Lists every device PortAudio sees into out[cap]; *n gets the count (at most cap).
 * ML_EDEVICE when the audio system cannot start (reason in detail[detail_len]). */
ml_status ml_audio_list(ml_audio_device *out, size_t cap, size_t *n, char *detail, size_t detail_len);

/* The default sample rate of the device spec names (see ml_live_config.device), an input when
 * input is true. ML_EDEVICE with the reason in detail[detail_len]. */
ml_status ml_audio_device_rate(const char *spec, bool input, double *rate_hz, char *detail, size_t detail_len);

/* The most channels the device spec names offers (an input when input is true), as
 * ml_audio_device_rate. */
ml_status ml_audio_device_channels(const char *spec, bool input, int *channels, char *detail,
                                   size_t detail_len);

/* Generates the next nframes interleaved frames to play into buf[nframes * channels]. Called on
 * the thread that reads or writes, never in the audio callback. */
typedef void (*ml_audio_fill_fn)(void *ctx, float *buf, size_t nframes);

typedef struct {
    const char *device;       /* NULL: the default input; all digits: a device index; else the
                                 device whose name equals it, or the only one containing it
                                 (case-insensitive)                                          */
    double rate_hz;           /* 0: the device's default rate                                */
    int channels;             /* 1 .. 64                                                      */
    int64_t frames;           /* frames to capture before reads report the end; -1: until
                                 ml_source_stop                                               */
    double head_s;            /* seconds kept after the latest forward seek so that a reader
                                 may seek back into them (default 5)                          */
    double stall_s;           /* no frames for this long means the device is gone (default 2) */
    int save_fd;              /* -1 (the default): none; else an open, seekable descriptor of
                                 a new file that receives every captured frame as it is read
                                 as WAV (32-bit float; complete after each write). The caller
                                 owns it (io/output.h gives one) and closes it after
                                 ml_source_close, which completes the file                   */
    /* Playback on the same full-duplex stream (frame k played and frame k captured belong to the
       same callback, so their difference is the round trip). */
    ml_audio_fill_fn fill;       /* the signal to play; NULL: capture only                    */
    const char *output_device;   /* as device, for outputs; NULL: the default output          */
    int output_channels;         /* 1 .. 64 when fill is set                                   */
    void *fill_ctx;
} ml_live_config;

ml_live_config ml_live_config_default(void);

/* Opens a live capture as a pull source: info.frames is cfg->frames, info.format names the
 * device and host API, reads block until the frames asked for have arrived. ml_source_read
 * returns *got < nframes at the planned end, after ml_source_stop, or after a device fault; a
 * fault also returns ML_EIO with the reason in ml_source_detail (frames read before it stay
 * valid). Seeking forward discards frames (they still go to save_fd); seeking back is allowed
 * into the head_s seconds kept after the latest forward seek, else ML_EINVAL.
 * Errors: ML_EDEVICE (no audio system, no such device, channel count or rate refused), ML_EIO
 * (save file), ML_ENOMEM, ML_EINVAL; the reason goes to detail[detail_len]. Allocates. */
ml_status ml_source_open_live(const ml_live_config *cfg, ml_source **out, char *detail, size_t detail_len);

/* Asks a live source to end: later reads return what is already buffered, then *got < nframes.
 * Async-signal-safe (one atomic store); a no-op for files and NULL. */
void ml_source_stop(ml_source *s);

typedef struct {
    uint64_t captured_frames;   /* frames delivered to the reader (not counting replays)       */
    uint64_t lost_frames;       /* frames the ring could not hold (the reader fell behind)      */
    uint64_t overflow_events;   /* callbacks flagged with an input overflow by the device       */
    uint64_t underflow_frames;  /* output frames played as silence because fill fell behind     */
    bool stopped;               /* ml_source_stop was called                                    */
    bool failed;                /* the device failed; the reason is in ml_source_detail         */
    char device_name[128];
    char host_api[64];
} ml_live_stats;

/* Counters of a live source; false for files. Safe to call any time on the reading thread. */
bool ml_source_live_stats(const ml_source *s, ml_live_stats *st);

/* Playback of a generated signal (the tone command). */
typedef struct ml_player ml_player;

typedef struct {
    const char *device;       /* as ml_live_config.device, for output devices                 */
    double rate_hz;           /* > 0                                                           */
    int channels;             /* 1 .. 64                                                       */
    double stall_s;           /* no progress for this long means the device is gone (default 2) */
} ml_player_config;

/* Opens and starts an output stream. ML_EDEVICE / ML_ENOMEM / ML_EINVAL as for capture. */
ml_status ml_player_open(const ml_player_config *cfg, ml_player **out, char *detail, size_t detail_len);
/* Queues nframes frames, waiting while the queue is full. ML_EIO when the device stops taking
 * frames (reason in ml_player_detail). */
ml_status ml_player_write(ml_player *p, const float *frames, size_t nframes);
/* Frames the device played as silence because the queue ran dry. */
uint64_t ml_player_underflows(const ml_player *p);
const char *ml_player_detail(const ml_player *p);
/* Plays out what is queued (drain true) or drops it, then closes and frees; NULL is a no-op. */
void ml_player_close(ml_player *p, bool drain);

#endif
