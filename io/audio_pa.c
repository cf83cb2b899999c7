/* PortAudio back end: device list, live capture source, player (see io/audio.h).
 * SPDX-License-Identifier: MIT
 *
 * References: PortAudio V19 API documentation (Pa_Initialize, Pa_GetDeviceInfo,
 * Pa_IsFormatSupported, Pa_OpenStream, PaStreamCallback, Pa_IsStreamActive).
 */
#define _POSIX_C_SOURCE 200809L
#include "io/audio.h"

#include <ctype.h>
#include <fcntl.h>
#include <math.h>
#include <portaudio.h>
#include <stdarg.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "io/internal.h"
#include "io/ring.h"
#include "io/sink.h"

#define BUFFER_FRAMES 256  /* frames per callback asked of PortAudio                       */
#define RING_S 2.0         /* seconds the capture ring holds before frames are lost          */
#define OUT_RING_S 0.5     /* seconds of playback queued ahead                               */
#define POLL_NS 2000000L   /* 2 ms between looks at the ring while waiting                   */

/* ---- shared ---------------------------------------------------------------------------- */

/* Pa_Initialize with stderr pointed at /dev/null: the ALSA and JACK back ends print scan
 * diagnostics there ("cannot find card", "cannot connect to server") that are not errors of ours. */
static PaError init_quiet(void)
{
    fflush(stderr);
    const int saved = dup(STDERR_FILENO);
    const int nul = open("/dev/null", O_WRONLY);
    if (saved >= 0 && nul >= 0)
        dup2(nul, STDERR_FILENO);
    PaError e = Pa_Initialize();
    /* An audio server that is busy (a loaded machine) can miss PortAudio's connection attempt,
     * which then lists no devices; two more tries, 0.3 s apart, before believing there are none. */
    for (int tries = 0; tries < 2 && e == paNoError && Pa_GetDeviceCount() <= 0; tries++) {
        Pa_Terminate();
        struct timespec t = {0, 300000000L};
        nanosleep(&t, NULL);
        e = Pa_Initialize();
    }
    if (saved >= 0) {
        dup2(saved, STDERR_FILENO);
        close(saved);
    }
    if (nul >= 0)
        close(nul);
    return e;
}

/* Output side of a callback: n frames from the ring, silence (counted) for what is missing. */
static void pour(ml_ring *r, void *output, size_t n, size_t ch, atomic_uint_least64_t *underflows)
{
    const size_t m = ml_ring_pop(r, output, n);
    if (m < n) {
        memset((float *)output + m * ch, 0, (n - m) * ch * sizeof(float));
        atomic_fetch_add_explicit(underflows, n - m, memory_order_relaxed);
    }
}

static double now_s(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static void nap(void)
{
    struct timespec t = {0, POLL_NS};
    nanosleep(&t, NULL);
}

static bool all_digits(const char *s)
{
    if (*s == '\0')
        return false;
    for (; *s; s++)
        if (!isdigit((unsigned char)*s))
            return false;
    return true;
}

static bool contains_ci(const char *hay, const char *needle)
{
    const size_t n = strlen(needle);
    for (; *hay; hay++) {
        size_t i = 0;
        while (i < n && hay[i] && tolower((unsigned char)hay[i]) == tolower((unsigned char)needle[i]))
            i++;
        if (i == n)
            return true;
    }
    return n == 0;
}

static bool equals_ci(const char *a, const char *b)
{
    for (; *a && *b; a++, b++)
        if (tolower((unsigned char)*a) != tolower((unsigned char)*b))
            return false;
    return *a == *b;
}

/* Resolves a device spec (see ml_live_config.device) among devices with channels in the wanted
 * direction. PortAudio must be initialised. */
static ml_status find_device(const char *spec, bool input, PaDeviceIndex *out, char *detail, size_t len)
{
    const char *dir = input ? "input" : "output";
    const int count = Pa_GetDeviceCount();
    if (count <= 0) {
        ml_say(detail, len, "no audio devices found (no sound card, and no audio server running)");
        return ML_EDEVICE;
    }
    if (spec == NULL) {
        const PaDeviceIndex d = input ? Pa_GetDefaultInputDevice() : Pa_GetDefaultOutputDevice();
        if (d == paNoDevice) {
            ml_say(detail, len, "there is no default %s device", dir);
            return ML_EDEVICE;
        }
        *out = d;
        return ML_OK;
    }
    PaDeviceIndex found = paNoDevice;
    int matches = 0;
    if (all_digits(spec)) {
        const long i = strtol(spec, NULL, 10);
        if (i >= count) {
            ml_say(detail, len, "no audio device with index %s (there are %d; see 'modlens devices')", spec, count);
            return ML_EDEVICE;
        }
        found = (PaDeviceIndex)i;
        matches = 1;
    } else {
        for (int i = 0; i < count && matches == 0; i++) {
            const PaDeviceInfo *d = Pa_GetDeviceInfo(i);
            if (d && equals_ci(d->name, spec) && (input ? d->maxInputChannels : d->maxOutputChannels) > 0) {
                found = i;
                matches = 1;
            }
        }
        for (int i = 0; i < count && found == paNoDevice; i++) {
            const PaDeviceInfo *d = Pa_GetDeviceInfo(i);
            if (d && contains_ci(d->name, spec) && (input ? d->maxInputChannels : d->maxOutputChannels) > 0)
                matches++;
        }
        if (found == paNoDevice && matches == 1)
            for (int i = 0; i < count && found == paNoDevice; i++) {
                const PaDeviceInfo *d = Pa_GetDeviceInfo(i);
                if (d && contains_ci(d->name, spec) && (input ? d->maxInputChannels : d->maxOutputChannels) > 0)
                    found = i;
            }
    }
    if (matches == 0) {
        ml_say(detail, len, "no %s device named '%s' (see 'modlens devices')", dir, spec);
        return ML_EDEVICE;
    }
    if (matches > 1) {
        ml_say(detail, len, "'%s' names %d %s devices; give the full name or the index (see 'modlens devices')",
                 spec, matches, dir);
        return ML_EDEVICE;
    }
    const PaDeviceInfo *d = Pa_GetDeviceInfo(found);
    if (d == NULL || (input ? d->maxInputChannels : d->maxOutputChannels) <= 0) {
        ml_say(detail, len, "device %s ('%s') has no %s channels", spec, d ? d->name : "?", dir);
        return ML_EDEVICE;
    }
    *out = found;
    return ML_OK;
}

/* Fills stream parameters for device d, checking the channel count. */
static ml_status stream_params(PaDeviceIndex d, bool input, int channels, PaStreamParameters *p, char *detail,
                               size_t len)
{
    const PaDeviceInfo *info = Pa_GetDeviceInfo(d);
    const int max = input ? info->maxInputChannels : info->maxOutputChannels;
    if (channels < 1 || channels > max) {
        ml_say(detail, len, "device '%s' has %d %s channel%s; %d asked for", info->name, max,
                 input ? "input" : "output", max == 1 ? "" : "s", channels);
        return ML_EDEVICE;
    }
    memset(p, 0, sizeof *p);
    p->device = d;
    p->channelCount = channels;
    p->sampleFormat = paFloat32;
    p->suggestedLatency = input ? info->defaultHighInputLatency : info->defaultHighOutputLatency;
    return ML_OK;
}

/* Opens a stream after checking the format, with a readable reason on refusal. */
static ml_status open_stream(PaStream **stream, const PaStreamParameters *in, const PaStreamParameters *out,
                             double rate, PaStreamCallback *cb, void *user, char *detail, size_t len)
{
    const PaDeviceInfo *info = Pa_GetDeviceInfo(in ? in->device : out->device);
    PaError e = Pa_IsFormatSupported(in, out, rate);
    if (e == paFormatIsSupported)
        e = Pa_OpenStream(stream, in, out, rate, BUFFER_FRAMES, paClipOff, cb, user);
    if (e == paInvalidSampleRate) {
        ml_say(detail, len, "device '%s' refuses %.0f Hz (its default rate is %.0f Hz)", info->name, rate,
                 info->defaultSampleRate);
        return ML_EDEVICE;
    }
    if (e != paNoError) {
        ml_say(detail, len, "device '%s' cannot open a stream at %.0f Hz: %s", info->name, rate,
                 Pa_GetErrorText(e));
        return ML_EDEVICE;
    }
    return ML_OK;
}

/* ---- device list ----------------------------------------------------------------------- */

ml_status ml_audio_list(ml_audio_device *out, size_t cap, size_t *n, char *detail, size_t detail_len)
{
    ml_say(detail, detail_len, "%s", "");
    if ((out == NULL && cap > 0) || n == NULL)
        return ML_EINVAL;
    *n = 0;
    const PaError e = init_quiet();
    if (e != paNoError) {
        ml_say(detail, detail_len, "the audio system cannot start: %s", Pa_GetErrorText(e));
        return ML_EDEVICE;
    }
    const int count = Pa_GetDeviceCount();
    const PaDeviceIndex din = Pa_GetDefaultInputDevice(), dout = Pa_GetDefaultOutputDevice();
    for (int i = 0; i < count && *n < cap; i++) {
        const PaDeviceInfo *d = Pa_GetDeviceInfo(i);
        const PaHostApiInfo *h = d ? Pa_GetHostApiInfo(d->hostApi) : NULL;
        if (d == NULL)
            continue;
        ml_audio_device *o = &out[(*n)++];
        o->index = i;
        snprintf(o->name, sizeof o->name, "%s", d->name);
        snprintf(o->host_api, sizeof o->host_api, "%s", h ? h->name : "?");
        o->max_input_channels = d->maxInputChannels;
        o->max_output_channels = d->maxOutputChannels;
        o->default_rate_hz = d->defaultSampleRate;
        o->default_input = i == din;
        o->default_output = i == dout;
    }
    Pa_Terminate();
    return ML_OK;
}

/* The numbers PortAudio gives for the device spec names (input or output): a copy of its info,
 * whose name must not be used (it dies with the audio system, which this shuts down again). */
static ml_status device_numbers(const char *spec, bool input, PaDeviceInfo *info, char *detail, size_t detail_len)
{
    const PaError e = init_quiet();
    if (e != paNoError) {
        ml_say(detail, detail_len, "the audio system cannot start: %s", Pa_GetErrorText(e));
        return ML_EDEVICE;
    }
    PaDeviceIndex d;
    ml_status st = find_device(spec, input, &d, detail, detail_len);
    if (st == ML_OK) {
        *info = *Pa_GetDeviceInfo(d);
        info->name = NULL;
    }
    Pa_Terminate();
    return st;
}

ml_status ml_audio_device_rate(const char *spec, bool input, double *rate_hz, char *detail, size_t detail_len)
{
    ml_say(detail, detail_len, "%s", "");
    if (rate_hz == NULL)
        return ML_EINVAL;
    PaDeviceInfo info;
    const ml_status st = device_numbers(spec, input, &info, detail, detail_len);
    if (st == ML_OK)
        *rate_hz = info.defaultSampleRate;
    return st;
}

ml_status ml_audio_device_channels(const char *spec, bool input, int *channels, char *detail,
                                   size_t detail_len)
{
    ml_say(detail, detail_len, "%s", "");
    if (channels == NULL)
        return ML_EINVAL;
    PaDeviceInfo info;
    const ml_status st = device_numbers(spec, input, &info, detail, detail_len);
    if (st == ML_OK)
        *channels = input ? info.maxInputChannels : info.maxOutputChannels;
    return st;
}

/* ---- live capture ---------------------------------------------------------------------- */

typedef struct {
    PaStream *stream;
    bool pa_up, running;
    ml_ring in, out;
    size_t ch, out_ch;
    atomic_bool stop;
    atomic_uint_least64_t lost, overflows, underflows;
    ml_audio_fill_fn fill;
    void *fill_ctx;
    float *fillbuf;            /* BUFFER_FRAMES * 4 * out_ch                                     */
    int64_t planned;           /* frames to deliver, -1 unbounded                               */
    int64_t delivered;         /* fresh frames taken from the ring                              */
    int64_t pos;               /* next frame the reader gets                                    */
    float *head;               /* head_cap frames from head_base                                */
    size_t head_cap, head_len;
    int64_t head_base;
    float *scratch;            /* BUFFER_FRAMES * 16 * ch, for discarding                        */
    ml_sink *save;
    double stall_s, last_progress;
    bool failed;               /* reads fail from now on                                        */
    bool gone;                 /* ... because the device stopped                                */
    ml_live_stats names;
} live;

static int live_callback(const void *input, void *output, unsigned long n, const PaStreamCallbackTimeInfo *ti,
                         PaStreamCallbackFlags flags, void *user)
{
    (void)ti;
    live *q = user;
    if (flags & paInputOverflow)
        atomic_fetch_add_explicit(&q->overflows, 1, memory_order_relaxed);
    const size_t k = ml_ring_push(&q->in, input, n); /* NULL input (none delivered) pushes silence */
    if (k < n)
        atomic_fetch_add_explicit(&q->lost, n - k, memory_order_relaxed);
    if (output)
        pour(&q->out, output, n, q->out_ch, &q->underflows);
    return paContinue;
}

static void live_top_up(live *q)
{
    if (q->fill == NULL)
        return;
    const size_t chunk = BUFFER_FRAMES * 4;
    while (ml_ring_writable(&q->out) >= chunk) {
        q->fill(q->fill_ctx, q->fillbuf, chunk);
        ml_ring_push(&q->out, q->fillbuf, chunk);
    }
}

/* Fresh frames x[k] arrived: keep them in the head and the save file. */
static ml_status live_arrived(ml_source *s, live *q, const float *x, size_t k)
{
    if (q->delivered >= q->head_base && q->head_len < q->head_cap) {
        size_t m = q->head_cap - q->head_len < k ? q->head_cap - q->head_len : k;
        memcpy(q->head + q->head_len * q->ch, x, m * q->ch * sizeof *x);
        q->head_len += m;
    }
    q->delivered += (int64_t)k;
    if (q->save) {
        ml_status st = ml_sink_write(q->save, x, k);
        if (st != ML_OK) {
            snprintf(s->detail, sizeof s->detail, "cannot write the capture file: %s", ml_sink_detail(q->save));
            q->failed = true;
            return ML_EIO;
        }
    }
    return ML_OK;
}

/* Waits for up to n fresh frames into buf; ML_OK with *got == 0 when stopped or at the end. */
static ml_status live_fresh(ml_source *s, live *q, float *buf, size_t n, size_t *got)
{
    *got = 0;
    for (;;) {
        if (q->failed)
            return ML_EIO;
        live_top_up(q);
        const size_t k = ml_ring_pop(&q->in, buf, n);
        if (k > 0) {
            q->last_progress = now_s();
            *got = k;
            return live_arrived(s, q, buf, k);
        }
        if (atomic_load(&q->stop))
            return ML_OK;
        const double idle = now_s() - q->last_progress;
        if (Pa_IsStreamActive(q->stream) != 1 || idle > q->stall_s) {
            snprintf(s->detail, sizeof s->detail,
                     "the audio device stopped delivering samples after %.2f s (device gone, or its audio "
                     "server stopped)",
                     (double)q->delivered / s->info.rate_hz);
            q->failed = q->gone = true;
            return ML_EIO;
        }
        nap();
    }
}

static ml_status live_read(ml_source *s, float *buf, size_t nframes, size_t *got)
{
    live *q = s->impl;
    while (*got < nframes) {
        size_t want = nframes - *got;
        if (q->planned >= 0) {
            if (q->pos >= q->planned)
                break;
            if ((int64_t)want > q->planned - q->pos)
                want = (size_t)(q->planned - q->pos);
        }
        float *dst = buf + *got * q->ch;
        if (q->pos < q->delivered) { /* replay from the head after a seek back */
            size_t k = (size_t)(q->delivered - q->pos) < want ? (size_t)(q->delivered - q->pos) : want;
            memcpy(dst, q->head + (size_t)(q->pos - q->head_base) * q->ch, k * q->ch * sizeof *dst);
            q->pos += (int64_t)k;
            *got += k;
            continue;
        }
        size_t k = 0;
        ml_status st = live_fresh(s, q, dst, want, &k);
        q->pos += (int64_t)k;
        *got += k;
        if (st != ML_OK)
            return st;
        if (k == 0)
            break;
    }
    return ML_OK;
}

static ml_status live_seek(ml_source *s, int64_t frame)
{
    live *q = s->impl;
    if (frame < q->delivered) {
        if (frame < q->head_base || q->delivered > q->head_base + (int64_t)q->head_len) {
            snprintf(s->detail, sizeof s->detail, "a live capture cannot go back to frame %lld",
                     (long long)frame);
            return ML_EINVAL;
        }
        q->pos = frame;
        return ML_OK;
    }
    q->head_base = frame;
    q->head_len = 0;
    const size_t cap = BUFFER_FRAMES * 16;
    while (q->delivered < frame) {
        size_t want = frame - q->delivered < (int64_t)cap ? (size_t)(frame - q->delivered) : cap, k = 0;
        ml_status st = live_fresh(s, q, q->scratch, want, &k);
        if (st != ML_OK)
            return st;
        if (k == 0) {
            snprintf(s->detail, sizeof s->detail, "the capture stopped before frame %lld", (long long)frame);
            return ML_EINVAL;
        }
    }
    q->pos = frame;
    return ML_OK;
}

static uint64_t live_lost(const ml_source *s)
{
    live *q = s->impl;
    return atomic_load(&q->lost);
}

static void live_close(ml_source *s)
{
    live *q = s->impl;
    if (q == NULL)
        return;
    /* After a device fault the stream is abandoned rather than closed: with its server gone,
     * PortAudio's JACK back end blocks for minutes in Pa_AbortStream and then fails an assertion
     * (PortAudio 19.6). The process is about to end anyway; the save file is still completed. */
    if (q->stream && !q->gone) {
        if (q->running)
            Pa_AbortStream(q->stream);
        Pa_CloseStream(q->stream);
    }
    if (q->pa_up && !q->gone)
        Pa_Terminate();
    if (q->save)
        ml_sink_close(q->save, NULL, 0);
    ml_ring_free(&q->in);
    ml_ring_free(&q->out);
    free(q->fillbuf);
    free(q->head);
    free(q->scratch);
    free(q);
}

static const ml_source_ops live_ops = {live_read, live_seek, live_lost, live_close};

ml_live_config ml_live_config_default(void)
{
    ml_live_config c;
    memset(&c, 0, sizeof c);
    c.channels = 1;
    c.frames = -1;
    c.head_s = 5.0;
    c.stall_s = 2.0;
    c.save_fd = -1;
    return c;
}

ml_status ml_source_open_live(const ml_live_config *cfg, ml_source **out, char *detail, size_t detail_len)
{
    ml_say(detail, detail_len, "%s", "");
    if (out == NULL)
        return ML_EINVAL;
    *out = NULL;
    if (cfg == NULL || cfg->channels < 1 || cfg->channels > 64 || cfg->rate_hz < 0 || !(cfg->head_s >= 0)
        || !(cfg->stall_s > 0)
        || (cfg->fill && (cfg->output_channels < 1 || cfg->output_channels > 64))) {
        ml_say(detail, detail_len, "invalid capture configuration");
        return ML_EINVAL;
    }
    ml_source *s = calloc(1, sizeof *s);
    live *q = calloc(1, sizeof *q);
    if (s == NULL || q == NULL) {
        free(s);
        free(q);
        return ML_ENOMEM;
    }
    s->ops = &live_ops;
    s->impl = q;
    q->ch = (size_t)cfg->channels;
    q->planned = cfg->frames;
    q->stall_s = cfg->stall_s;
    atomic_init(&q->stop, false);
    atomic_init(&q->lost, 0);
    atomic_init(&q->overflows, 0);
    atomic_init(&q->underflows, 0);
    ml_status st = ML_EDEVICE;
    PaError e = init_quiet();
    if (e != paNoError) {
        ml_say(detail, detail_len, "the audio system cannot start: %s", Pa_GetErrorText(e));
        goto fail;
    }
    q->pa_up = true;
    PaDeviceIndex din, dout = paNoDevice;
    if ((st = find_device(cfg->device, true, &din, detail, detail_len)) != ML_OK)
        goto fail;
    const PaDeviceInfo *di = Pa_GetDeviceInfo(din);
    const double rate = cfg->rate_hz > 0 ? cfg->rate_hz : di->defaultSampleRate;
    PaStreamParameters pin, pout;
    if ((st = stream_params(din, true, cfg->channels, &pin, detail, detail_len)) != ML_OK)
        goto fail;
    if (cfg->fill) {
        if ((st = find_device(cfg->output_device, false, &dout, detail, detail_len)) != ML_OK)
            goto fail;
        if (Pa_GetDeviceInfo(dout)->hostApi != di->hostApi) {
            ml_say(detail, detail_len, "the input '%s' and output '%s' belong to different audio systems; "
                     "play and capture need one full-duplex stream", di->name, Pa_GetDeviceInfo(dout)->name);
            st = ML_EDEVICE;
            goto fail;
        }
        if ((st = stream_params(dout, false, cfg->output_channels, &pout, detail, detail_len)) != ML_OK)
            goto fail;
        q->out_ch = (size_t)cfg->output_channels;
        q->fill = cfg->fill;
        q->fill_ctx = cfg->fill_ctx;
    }
    st = ML_ENOMEM;
    q->head_cap = (size_t)ceil(cfg->head_s * rate) + 1;
    if (ml_ring_init(&q->in, (size_t)(RING_S * rate), q->ch) != ML_OK
        || (q->fill && ml_ring_init(&q->out, (size_t)(OUT_RING_S * rate), q->out_ch) != ML_OK))
        goto fail;
    q->head = malloc(q->head_cap * q->ch * sizeof *q->head);
    q->scratch = malloc(BUFFER_FRAMES * 16 * q->ch * sizeof *q->scratch);
    q->fillbuf = q->fill ? malloc(BUFFER_FRAMES * 4 * q->out_ch * sizeof *q->fillbuf) : NULL;
    if (q->head == NULL || q->scratch == NULL || (q->fill && q->fillbuf == NULL))
        goto fail;
    if ((st = open_stream(&q->stream, &pin, q->fill ? &pout : NULL, rate, live_callback, q, detail,
                          detail_len)) != ML_OK)
        goto fail;
    s->info.rate_hz = rate;
    s->info.channels = cfg->channels;
    s->info.frames = cfg->frames;
    s->info.bits = 24; /* float capture: a 24-bit mantissa */
    s->info.is_float = true;
    const PaHostApiInfo *h = Pa_GetHostApiInfo(di->hostApi);
    snprintf(q->names.device_name, sizeof q->names.device_name, "%s", di->name);
    snprintf(q->names.host_api, sizeof q->names.host_api, "%s", h ? h->name : "?");
    snprintf(s->info.format, sizeof s->info.format, "live capture, %.40s", h ? h->name : "?");
    if (cfg->save_fd >= 0) {
        ml_sink_config sc = ml_sink_config_default((int)lround(rate), cfg->channels);
        sc.encoding = ML_SINK_FLOAT;
        if ((st = ml_sink_open_fd(cfg->save_fd, &sc, &q->save, detail, detail_len)) != ML_OK)
            goto fail;
        ml_sink_set_durable(q->save);
    }
    live_top_up(q);
    e = Pa_StartStream(q->stream);
    if (e != paNoError) {
        ml_say(detail, detail_len, "device '%s' cannot start: %s", di->name, Pa_GetErrorText(e));
        st = ML_EDEVICE;
        goto fail;
    }
    q->running = true;
    q->last_progress = now_s();
    *out = s;
    return ML_OK;
fail:
    ml_source_close(s);
    return st;
}

void ml_source_stop(ml_source *s)
{
    if (s && s->ops == &live_ops)
        atomic_store(&((live *)s->impl)->stop, true);
}

bool ml_source_live_stats(const ml_source *s, ml_live_stats *st)
{
    if (s == NULL || st == NULL || s->ops != &live_ops)
        return false;
    const live *q = s->impl;
    *st = q->names;
    st->captured_frames = (uint64_t)q->delivered;
    st->lost_frames = atomic_load(&((live *)q)->lost);
    st->overflow_events = atomic_load(&((live *)q)->overflows);
    st->underflow_frames = atomic_load(&((live *)q)->underflows);
    st->stopped = atomic_load(&((live *)q)->stop);
    st->failed = q->failed;
    return true;
}

/* ---- player ---------------------------------------------------------------------------- */

struct ml_player {
    PaStream *stream;
    bool pa_up, running;
    ml_ring ring;
    size_t ch;
    atomic_uint_least64_t underflows;
    double stall_s, rate;
    char detail[256];
};

static int play_callback(const void *input, void *output, unsigned long n, const PaStreamCallbackTimeInfo *ti,
                         PaStreamCallbackFlags flags, void *user)
{
    (void)input;
    (void)ti;
    (void)flags;
    ml_player *p = user;
    pour(&p->ring, output, n, p->ch, &p->underflows);
    return paContinue;
}

ml_status ml_player_open(const ml_player_config *cfg, ml_player **out, char *detail, size_t detail_len)
{
    ml_say(detail, detail_len, "%s", "");
    if (out == NULL)
        return ML_EINVAL;
    *out = NULL;
    if (cfg == NULL || !(cfg->rate_hz > 0) || cfg->channels < 1 || cfg->channels > 64) {
        ml_say(detail, detail_len, "invalid playback configuration");
        return ML_EINVAL;
    }
    ml_player *p = calloc(1, sizeof *p);
    if (p == NULL)
        return ML_ENOMEM;
    p->ch = (size_t)cfg->channels;
    p->rate = cfg->rate_hz;
    p->stall_s = cfg->stall_s > 0 ? cfg->stall_s : 2.0;
    atomic_init(&p->underflows, 0);
    ml_status st = ML_EDEVICE;
    PaError e = init_quiet();
    if (e != paNoError) {
        ml_say(detail, detail_len, "the audio system cannot start: %s", Pa_GetErrorText(e));
        goto fail;
    }
    p->pa_up = true;
    PaDeviceIndex d;
    PaStreamParameters po;
    if ((st = find_device(cfg->device, false, &d, detail, detail_len)) != ML_OK
        || (st = stream_params(d, false, cfg->channels, &po, detail, detail_len)) != ML_OK)
        goto fail;
    st = ML_ENOMEM;
    if (ml_ring_init(&p->ring, (size_t)(OUT_RING_S * cfg->rate_hz), p->ch) != ML_OK)
        goto fail;
    if ((st = open_stream(&p->stream, NULL, &po, cfg->rate_hz, play_callback, p, detail, detail_len)) != ML_OK)
        goto fail;
    *out = p;
    return ML_OK;
fail:
    ml_player_close(p, false);
    return st;
}

ml_status ml_player_write(ml_player *p, const float *frames, size_t nframes)
{
    if (p == NULL || (frames == NULL && nframes > 0))
        return ML_EINVAL;
    double last = now_s();
    while (nframes > 0) {
        const size_t k = ml_ring_push(&p->ring, frames, nframes);
        frames += k * p->ch;
        nframes -= k;
        if (k > 0)
            last = now_s();
        if (nframes == 0)
            break;
        if (!p->running) { /* start once the queue is full, so playback begins without a gap */
            const PaError e = Pa_StartStream(p->stream);
            if (e != paNoError) {
                snprintf(p->detail, sizeof p->detail, "the output cannot start: %s", Pa_GetErrorText(e));
                return ML_EIO;
            }
            p->running = true;
            last = now_s();
        }
        if (Pa_IsStreamActive(p->stream) != 1 || now_s() - last > p->stall_s) {
            snprintf(p->detail, sizeof p->detail,
                     "the audio device stopped taking samples (device gone, or its audio server stopped)");
            return ML_EIO;
        }
        nap();
    }
    return ML_OK;
}

uint64_t ml_player_underflows(const ml_player *p)
{
    return p ? atomic_load(&((ml_player *)p)->underflows) : 0;
}

const char *ml_player_detail(const ml_player *p)
{
    return p ? p->detail : "";
}

void ml_player_close(ml_player *p, bool drain)
{
    if (p == NULL)
        return;
    if (p->stream) {
        if (drain && !p->running && ml_ring_readable(&p->ring) > 0 && Pa_StartStream(p->stream) == paNoError)
            p->running = true;
        if (drain && p->running) {
            const double t0 = now_s();
            while (ml_ring_readable(&p->ring) > 0 && Pa_IsStreamActive(p->stream) == 1
                   && now_s() - t0 < OUT_RING_S + p->stall_s)
                nap();
            Pa_StopStream(p->stream); /* plays out the device's own buffers */
        } else if (p->running) {
            Pa_AbortStream(p->stream);
        }
        Pa_CloseStream(p->stream);
    }
    if (p->pa_up)
        Pa_Terminate();
    ml_ring_free(&p->ring);
    free(p);
}
