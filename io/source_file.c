/* Audio-file input through libsndfile.
 * SPDX-License-Identifier: MIT
 *
 * References: libsndfile API documentation (sf_open_fd, sf_readf_float normalisation to +-1.0,
 * SFC_SET_SCALE_FLOAT_INT_READ, sf_seek).
 *
 * The file is opened here and handed to libsndfile by descriptor: sf_open refuses paths of 1024
 * bytes or more ("Supplied filename too long"), and the checks (a regular file, not empty) are
 * made on the descriptor that is then read, so nothing can swap the file in between.
 */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <fcntl.h>
#include <stdbool.h>
#include <sndfile.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "io/internal.h"

typedef struct {
    SNDFILE *sf;
    int fd; /* ours: libsndfile is told not to close it */
} file_impl;

static ml_status file_read(ml_source *s, float *buf, size_t nframes, size_t *got)
{
    SNDFILE *sf = ((file_impl *)s->impl)->sf;
    sf_count_t n = sf_readf_float(sf, buf, (sf_count_t)nframes);
    if (n < 0 || (n < (sf_count_t)nframes && sf_error(sf) != SF_ERR_NO_ERROR)) {
        snprintf(s->detail, sizeof s->detail, "%s", sf_strerror(sf));
        return ML_EIO;
    }
    *got = (size_t)n;
    return ML_OK;
}

static ml_status file_seek(ml_source *s, int64_t frame)
{
    if (s->info.frames >= 0 && frame > s->info.frames)
        return ML_EINVAL;
    SNDFILE *sf = ((file_impl *)s->impl)->sf;
    if (sf_seek(sf, (sf_count_t)frame, SEEK_SET) < 0) {
        snprintf(s->detail, sizeof s->detail, "%s", sf_strerror(sf));
        return ML_EINVAL;
    }
    return ML_OK;
}

static void file_close(ml_source *s)
{
    file_impl *f = s->impl;
    if (f == NULL)
        return;
    sf_close(f->sf);
    close(f->fd);
    free(f);
}

static const ml_source_ops file_ops = {file_read, file_seek, NULL, file_close};

static void describe(const SF_INFO *fi, ml_source_info *info)
{
    const char *major = "audio";
    switch (fi->format & SF_FORMAT_TYPEMASK) {
    case SF_FORMAT_WAV: major = "WAV"; break;
    case SF_FORMAT_WAVEX: major = "WAV"; break;
    case SF_FORMAT_RF64: major = "RF64"; break;
    case SF_FORMAT_W64: major = "W64"; break;
    case SF_FORMAT_FLAC: major = "FLAC"; break;
    case SF_FORMAT_AIFF: major = "AIFF"; break;
    case SF_FORMAT_OGG: major = "Ogg"; break;
    case SF_FORMAT_CAF: major = "CAF"; break;
    default: break;
    }
    int bits = 24;
    bool is_float = false;
    const char *sub = "PCM";
    switch (fi->format & SF_FORMAT_SUBMASK) {
    case SF_FORMAT_PCM_S8: case SF_FORMAT_PCM_U8: bits = 8; break;
    case SF_FORMAT_PCM_16: bits = 16; break;
    case SF_FORMAT_PCM_24: bits = 24; break;
    case SF_FORMAT_PCM_32: bits = 32; break;
    case SF_FORMAT_FLOAT: bits = 24; is_float = true; sub = "float"; break;
    case SF_FORMAT_DOUBLE: bits = 32; is_float = true; sub = "double"; break;
    default: bits = 16; sub = "encoded"; break;
    }
    info->bits = bits;
    info->is_float = is_float;
    if (is_float)
        snprintf(info->format, sizeof info->format, "%s %s", major, sub);
    else
        snprintf(info->format, sizeof info->format, "%s %d-bit %s", major, bits, sub);
}

/* A header without a sample count (libsndfile then reports SF_COUNT_MAX frames, e.g. a FLAC
 * stream whose STREAMINFO says 0 samples): the frames are counted by reading them once, in
 * blocks of at most 64 Ki samples, and the file is rewound. False when that fails. */
static bool count_frames(SNDFILE *sf, SF_INFO *fi)
{
    const sf_count_t block = fi->channels < 65536 ? 65536 / fi->channels : 1;
    float *buf = malloc((size_t)block * (size_t)fi->channels * sizeof *buf);
    if (buf == NULL)
        return false;
    sf_count_t total = 0, n;
    while ((n = sf_readf_float(sf, buf, block)) > 0 && total <= ((sf_count_t)1 << 53))
        total += n;
    free(buf);
    if (n < 0 || total > ((sf_count_t)1 << 53))
        return false;
    /* nothing to rewind when nothing was there (a header-only stream cannot seek at all) */
    if (total > 0 && (sf_error(sf) != SF_ERR_NO_ERROR || sf_seek(sf, 0, SEEK_SET) != 0))
        return false;
    fi->frames = total;
    return true;
}

static ml_status open_descriptor(int fd, ml_source **out, char *detail, size_t detail_len);

ml_status ml_source_open_file(const char *path, ml_source **out, char *detail, size_t detail_len)
{
    *out = NULL;
    if (detail && detail_len)
        detail[0] = '\0';
    if (path == NULL)
        return ML_EINVAL;
    /* O_NONBLOCK: opening a FIFO must not wait for a writer (it is refused just below) */
    const int fd = open(path, O_RDONLY | O_NONBLOCK | O_CLOEXEC | O_NOCTTY);
    if (fd < 0) {
        if (detail)
            snprintf(detail, detail_len, "cannot open: %s", strerror(errno));
        return ML_EIO;
    }
    return open_descriptor(fd, out, detail, detail_len);
}

ml_status ml_source_open_fd(int fd, ml_source **out, char *detail, size_t detail_len)
{
    *out = NULL;
    if (detail && detail_len)
        detail[0] = '\0';
    const int own = fd < 0 ? -1 : fcntl(fd, F_DUPFD_CLOEXEC, 0);
    if (own < 0 || lseek(own, 0, SEEK_SET) != 0) {
        if (detail)
            snprintf(detail, detail_len, "%s", fd < 0 ? "no file" : strerror(errno));
        if (own >= 0)
            close(own);
        return fd < 0 ? ML_EINVAL : ML_EIO;
    }
    return open_descriptor(own, out, detail, detail_len);
}

/* The checks and libsndfile on fd (ours from here on: closed on every failure). */
static ml_status open_descriptor(int fd, ml_source **out, char *detail, size_t detail_len)
{
    struct stat stb;
    const char *problem = NULL;
    ml_status bad = ML_EIO;
    if (fstat(fd, &stb) != 0)
        problem = strerror(errno);
    else if (S_ISDIR(stb.st_mode))
        problem = "is a directory";
    else if (!S_ISREG(stb.st_mode))
        problem = "not a regular file";
    else if (stb.st_size == 0) {
        problem = "the file is empty";
        bad = ML_EFORMAT;
    } else {
        const int fl = fcntl(fd, F_GETFL);
        if (fl < 0 || fcntl(fd, F_SETFL, fl & ~O_NONBLOCK) != 0)
            problem = strerror(errno);
    }
    if (problem != NULL) {
        if (detail)
            snprintf(detail, detail_len, "%s", problem);
        close(fd);
        return bad;
    }
    SF_INFO fi;
    memset(&fi, 0, sizeof fi);
    SNDFILE *sf = sf_open_fd(fd, SFM_READ, &fi, SF_FALSE);
    if (sf == NULL) {
        if (detail)
            snprintf(detail, detail_len, "%s", sf_strerror(NULL));
        close(fd);
        return ML_EFORMAT;
    }
    if (fi.channels < 1 || fi.samplerate < 1 || fi.frames < 0) {
        sf_close(sf);
        close(fd);
        if (detail)
            snprintf(detail, detail_len, "header gives %d channels at %d Hz", fi.channels, fi.samplerate);
        return ML_EFORMAT;
    }
    if (fi.frames > ((sf_count_t)1 << 53) && !count_frames(sf, &fi)) {
        sf_close(sf);
        close(fd);
        if (detail)
            snprintf(detail, detail_len, "the header gives no length and the frames cannot be counted");
        return ML_EFORMAT;
    }
    file_impl *impl = malloc(sizeof *impl);
    ml_source *s = calloc(1, sizeof *s);
    if (s == NULL || impl == NULL) {
        free(s);
        free(impl);
        sf_close(sf);
        close(fd);
        return ML_ENOMEM;
    }
    impl->sf = sf;
    impl->fd = fd;
    s->ops = &file_ops;
    s->impl = impl;
    s->info.rate_hz = fi.samplerate;
    s->info.channels = fi.channels;
    s->info.frames = fi.frames;
    describe(&fi, &s->info);
    /* libsndfile reads what is there and notes the shortfall in its log, as
     * "data : <announced> (should be <present>)" */
    char log[2048] = "";
    sf_command(sf, SFC_GET_LOG_INFO, log, sizeof log);
    for (const char *l = log; *l != '\0';) {
        const char *eol = strchr(l, '\n');
        if (strncmp(l, "data", 4) == 0) {
            const char *sb = strstr(l, "(should be");
            s->info.cut_short = sb != NULL && (eol == NULL || sb < eol);
        }
        if (eol == NULL)
            break;
        l = eol + 1;
    }
    /* Integer files read as float are scaled by 1/2^(bits-1) by default: full scale = +-1.0. */
    *out = s;
    return ML_OK;
}
