/* Audio-file output through libsndfile (WAV 16/24-bit PCM or float, FLAC 16/24-bit).
 * SPDX-License-Identifier: MIT
 *
 * References: libsndfile API documentation (sf_open, sf_open_fd, sf_format_check, sf_writef_float,
 * sf_writef_int, SFC_SET_CLIPPING, sf_close).
 *
 * PCM samples are rounded here, not by libsndfile: libsndfile 1.2.0's clipping float-to-PCM path
 * for WAV rounds towards minus infinity (errors of 0 .. -1 code, a -0.5 code DC offset), while a
 * test-signal file should hold the nearest code. Each value becomes round(x 2^(bits-1)), clipped
 * to the code range, handed to sf_writef_int left-aligned in 32 bits (libsndfile takes the top
 * bits exactly), so a file read back with sf_readf_float (scale 1/2^(bits-1)) returns x to within
 * half a code.
 */
#include "io/sink.h"

#include <ctype.h>
#include <math.h>
#include <sndfile.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define CONV_FRAMES 1024 /* frames converted to integers per sf_writef_int call */

struct ml_sink {
    SNDFILE *sf;
    int channels;
    ml_sink_encoding encoding;
    int32_t *conv; /* CONV_FRAMES * channels left-aligned PCM codes; NULL for float files */
    uint64_t frames;
    char detail[256];
};

ml_sink_config ml_sink_config_default(int rate_hz, int channels)
{
    ml_sink_config c = {ML_SINK_WAV, ML_SINK_PCM_24, rate_hz, channels};
    return c;
}

static bool ends_with_ci(const char *s, const char *suffix)
{
    size_t n = strlen(s), m = strlen(suffix);
    if (n <= m)
        return false; /* a bare ".wav" is a hidden name, not a WAV file name */
    for (size_t i = 0; i < m; i++)
        if (tolower((unsigned char)s[n - m + i]) != suffix[i])
            return false;
    return s[n - m - 1] != '/';
}

ml_status ml_sink_container_from_path(const char *path, ml_sink_container *c)
{
    if (path == NULL || c == NULL)
        return ML_EINVAL;
    if (ends_with_ci(path, ".wav"))
        *c = ML_SINK_WAV;
    else if (ends_with_ci(path, ".flac"))
        *c = ML_SINK_FLAC;
    else
        return ML_EFORMAT;
    return ML_OK;
}

size_t ml_sink_frame_bytes(const ml_sink_config *cfg)
{
    static const size_t bytes[ML_SINK_ENCODING_COUNT] = {2, 3, 4};
    if (cfg == NULL || (unsigned)cfg->encoding >= ML_SINK_ENCODING_COUNT || cfg->channels < 1
        || cfg->channels > 64)
        return 0;
    return bytes[cfg->encoding] * (size_t)cfg->channels;
}

static void say(char *detail, size_t len, const char *text)
{
    if (detail != NULL && len > 0)
        snprintf(detail, len, "%s", text);
}

/* Fills fi for cfg; false with a reason when libsndfile cannot write it. */
static bool make_info(const ml_sink_config *cfg, SF_INFO *fi, char *detail, size_t len)
{
    memset(fi, 0, sizeof *fi);
    if (cfg == NULL || (unsigned)cfg->container >= ML_SINK_CONTAINER_COUNT
        || (unsigned)cfg->encoding >= ML_SINK_ENCODING_COUNT) {
        say(detail, len, "unknown file format");
        return false;
    }
    if (cfg->channels < 1 || cfg->channels > 64) {
        say(detail, len, "channels must be 1..64");
        return false;
    }
    if (cfg->rate_hz < 1) {
        say(detail, len, "the sample rate must be at least 1 Hz");
        return false;
    }
    if (cfg->container == ML_SINK_FLAC && cfg->encoding == ML_SINK_FLOAT) {
        say(detail, len, "FLAC holds 16 or 24-bit PCM only; use a .wav name for float samples");
        return false;
    }
    static const int major[ML_SINK_CONTAINER_COUNT] = {SF_FORMAT_WAV, SF_FORMAT_FLAC};
    static const int minor[ML_SINK_ENCODING_COUNT] = {SF_FORMAT_PCM_16, SF_FORMAT_PCM_24, SF_FORMAT_FLOAT};
    fi->format = major[cfg->container] | minor[cfg->encoding];
    fi->channels = cfg->channels;
    fi->samplerate = cfg->rate_hz;
    if (!sf_format_check(fi)) {
        if (detail != NULL && len > 0)
            snprintf(detail, len, "libsndfile cannot write %s at %d Hz with %d channel%s",
                     cfg->container == ML_SINK_FLAC ? "FLAC" : "WAV", cfg->rate_hz, cfg->channels,
                     cfg->channels == 1 ? "" : "s");
        return false;
    }
    return true;
}

ml_status ml_sink_check(const ml_sink_config *cfg, char *detail, size_t detail_len)
{
    SF_INFO fi;
    say(detail, detail_len, "");
    return make_info(cfg, &fi, detail, detail_len) ? ML_OK : ML_EINVAL;
}

/* Shared tail of both open functions: sf is the result of sf_open / sf_open_fd. */
static ml_status finish_open(SNDFILE *sf, const SF_INFO *fi, ml_sink **out, char *detail, size_t len)
{
    if (sf == NULL) {
        /* sf_error(NULL) / sf_strerror(NULL) describe the last failed open. Only a system error
         * is about the file itself; the others mean the codec refused this configuration (for
         * example a sample rate FLAC cannot hold), which sf_format_check does not test. */
        const int err = sf_error(NULL);
        const char *text = sf_strerror(NULL);
        if (strncmp(text, "Error : ", 8) == 0)
            text += 8;
        say(detail, len, text);
        return err == SF_ERR_SYSTEM ? ML_EIO : ML_EINVAL;
    }
    ml_sink *s = calloc(1, sizeof *s);
    const bool pcm = (fi->format & SF_FORMAT_SUBMASK) != SF_FORMAT_FLOAT;
    if (s != NULL && pcm)
        s->conv = malloc((size_t)CONV_FRAMES * (size_t)fi->channels * sizeof *s->conv);
    if (s == NULL || (pcm && s->conv == NULL)) {
        free(s);
        sf_close(sf);
        return ML_ENOMEM;
    }
    s->sf = sf;
    s->channels = fi->channels;
    s->encoding = (fi->format & SF_FORMAT_SUBMASK) == SF_FORMAT_PCM_16 ? ML_SINK_PCM_16
                  : pcm                                                ? ML_SINK_PCM_24
                                                                       : ML_SINK_FLOAT;
    /* Saturate rather than wrap around when a value exceeds full scale in a PCM file. */
    sf_command(sf, SFC_SET_CLIPPING, NULL, SF_TRUE);
    *out = s;
    return ML_OK;
}

ml_status ml_sink_open_file(const char *path, const ml_sink_config *cfg, ml_sink **out, char *detail,
                            size_t detail_len)
{
    if (out == NULL)
        return ML_EINVAL;
    *out = NULL;
    say(detail, detail_len, "");
    SF_INFO fi;
    if (path == NULL || !make_info(cfg, &fi, detail, detail_len))
        return ML_EINVAL;
    return finish_open(sf_open(path, SFM_WRITE, &fi), &fi, out, detail, detail_len);
}

ml_status ml_sink_open_fd(int fd, const ml_sink_config *cfg, ml_sink **out, char *detail, size_t detail_len)
{
    if (out == NULL)
        return ML_EINVAL;
    *out = NULL;
    say(detail, detail_len, "");
    SF_INFO fi;
    if (fd < 0 || !make_info(cfg, &fi, detail, detail_len))
        return ML_EINVAL;
    return finish_open(sf_open_fd(fd, SFM_WRITE, &fi, SF_FALSE), &fi, out, detail, detail_len);
}

/* Nearest code of x for a `bits`-bit file, clipped, left-aligned in 32 bits. */
static int32_t to_code(float x, int bits)
{
    const double full = (double)(1L << (bits - 1));
    double c = nearbyint((double)x * full); /* round half to even, the default rounding mode */
    if (c > full - 1)
        c = full - 1;
    if (c < -full)
        c = -full;
    return (int32_t)((uint32_t)(int32_t)c << (32 - bits));
}

static ml_status write_pcm(ml_sink *s, const float *frames, size_t nframes)
{
    const int bits = s->encoding == ML_SINK_PCM_16 ? 16 : 24;
    const size_t nch = (size_t)s->channels;
    for (size_t done = 0; done < nframes;) {
        const size_t n = nframes - done < CONV_FRAMES ? nframes - done : CONV_FRAMES;
        const float *src = frames + done * nch;
        for (size_t i = 0; i < n * nch; i++)
            s->conv[i] = to_code(src[i], bits);
        if (sf_writef_int(s->sf, s->conv, (sf_count_t)n) != (sf_count_t)n) {
            snprintf(s->detail, sizeof s->detail, "%s", sf_strerror(s->sf));
            return ML_EIO;
        }
        done += n;
        s->frames += n;
    }
    return ML_OK;
}

ml_status ml_sink_write(ml_sink *s, const float *frames, size_t nframes)
{
    if (s == NULL || (frames == NULL && nframes > 0))
        return ML_EINVAL;
    for (size_t i = 0; i < nframes * (size_t)s->channels; i++)
        if (!isfinite(frames[i])) {
            snprintf(s->detail, sizeof s->detail, "sample %zu of this block is not a finite number", i);
            return ML_ERANGE;
        }
    if (nframes == 0)
        return ML_OK;
    if (s->conv != NULL)
        return write_pcm(s, frames, nframes);
    sf_count_t n = sf_writef_float(s->sf, frames, (sf_count_t)nframes);
    if (n != (sf_count_t)nframes) {
        snprintf(s->detail, sizeof s->detail, "%s", sf_strerror(s->sf));
        return ML_EIO;
    }
    s->frames += nframes;
    return ML_OK;
}

ml_status ml_sink_set_durable(ml_sink *s)
{
    if (s == NULL)
        return ML_EINVAL;
    sf_command(s->sf, SFC_SET_UPDATE_HEADER_AUTO, NULL, SF_TRUE);
    return ML_OK;
}

uint64_t ml_sink_frames(const ml_sink *s)
{
    return s ? s->frames : 0;
}

const char *ml_sink_detail(const ml_sink *s)
{
    return s ? s->detail : "";
}

ml_status ml_sink_close(ml_sink *s, char *detail, size_t detail_len)
{
    say(detail, detail_len, "");
    if (s == NULL)
        return ML_OK;
    /* A failed write may have been recorded without a short count (header updates): ask too. */
    int err = sf_error(s->sf);
    int cerr = sf_close(s->sf);
    ml_status st = ML_OK;
    if (err != SF_ERR_NO_ERROR || cerr != 0) {
        say(detail, detail_len, sf_error_number(err != SF_ERR_NO_ERROR ? err : cerr));
        st = ML_EIO;
    }
    free(s->conv);
    free(s);
    return st;
}
