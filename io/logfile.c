/* Append-only line files (see io/logfile.h).
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
#include "io/logfile.h"

#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#define LINE_MAX_BYTES 4096

struct ml_logfile {
    int fd;
    char path[1024];
    char buf[LINE_MAX_BYTES + 2];
};

static ml_status fail(char *err, size_t err_len, const char *what)
{
    snprintf(err, err_len, "%s: %s", what, strerror(errno));
    return ML_EIO;
}

static ml_status write_all(int fd, const char *s, size_t n)
{
    while (n > 0) {
        ssize_t w = write(fd, s, n);
        if (w < 0) {
            if (errno == EINTR)
                continue;
            return ML_EIO;
        }
        s += w;
        n -= (size_t)w;
    }
    return ML_OK;
}

/* Reads up to n bytes at offset off into b; returns the count or -1. */
static ssize_t read_at(int fd, char *b, size_t n, off_t off)
{
    size_t done = 0;
    while (done < n) {
        ssize_t r = pread(fd, b + done, n - done, off + (off_t)done);
        if (r < 0 && errno == EINTR)
            continue;
        if (r < 0)
            return -1;
        if (r == 0)
            break;
        done += (size_t)r;
    }
    return (ssize_t)done;
}

/* Offset just after the last '\n' in [0, size), or 0 when there is none. Reads backwards in
 * chunks, so any file size works with a fixed buffer. */
static off_t end_of_last_line(int fd, off_t size, char *b, size_t blen)
{
    off_t pos = size;
    while (pos > 0) {
        size_t n = pos > (off_t)blen ? blen : (size_t)pos;
        if (read_at(fd, b, n, pos - (off_t)n) != (ssize_t)n)
            return -1;
        for (size_t i = n; i-- > 0;)
            if (b[i] == '\n')
                return pos - (off_t)n + (off_t)i + 1;
        pos -= (off_t)n;
    }
    return 0;
}

ml_status ml_logfile_open(const char *path, const char *header, ml_logfile **out, char *last, size_t last_len,
                          char *err, size_t err_len)
{
    *out = NULL;
    if (last_len > 0)
        last[0] = '\0';
    const size_t hlen = strlen(header);
    if (hlen > LINE_MAX_BYTES) {
        snprintf(err, err_len, "header too long");
        return ML_EIO;
    }
    ml_logfile *f = calloc(1, sizeof *f);
    if (f == NULL) {
        snprintf(err, err_len, "out of memory");
        return ML_ENOMEM;
    }
    snprintf(f->path, sizeof f->path, "%s", path);
    f->fd = open(path, O_RDWR | O_CREAT | O_APPEND | O_CLOEXEC, 0644);
    if (f->fd < 0) {
        free(f);
        return fail(err, err_len, "cannot open");
    }
    ml_status st = ML_EIO;
    struct stat sb;
    if (fstat(f->fd, &sb) != 0) {
        fail(err, err_len, "cannot inspect");
        goto bad;
    }
    if (!S_ISREG(sb.st_mode)) {
        snprintf(err, err_len, "not a regular file");
        goto bad;
    }
    off_t keep = end_of_last_line(f->fd, sb.st_size, f->buf, sizeof f->buf);
    if (keep < 0) {
        fail(err, err_len, "cannot read");
        goto bad;
    }
    if (keep > 0) {
        /* the first line must be our header */
        ssize_t n = read_at(f->fd, f->buf, hlen + 1, 0);
        if (n != (ssize_t)hlen + 1 || memcmp(f->buf, header, hlen) != 0 || f->buf[hlen] != '\n') {
            snprintf(err, err_len, "holds a log with different columns (or is not a log)");
            st = ML_EFORMAT;
            goto bad;
        }
    }
    if (keep < sb.st_size && ftruncate(f->fd, keep) != 0) { /* a partial line from a killed run */
        fail(err, err_len, "cannot cut a partial last line");
        goto bad;
    }
    if (keep == 0) {
        memcpy(f->buf, header, hlen);
        f->buf[hlen] = '\n';
        if (write_all(f->fd, f->buf, hlen + 1) != ML_OK) {
            fail(err, err_len, "cannot write");
            goto bad;
        }
    } else if (keep > (off_t)hlen + 1 && last_len > 0) {
        /* the last complete line: from the '\n' before it */
        off_t start = end_of_last_line(f->fd, keep - 1, f->buf, sizeof f->buf);
        if (start < 0) {
            fail(err, err_len, "cannot read");
            goto bad;
        }
        size_t len = (size_t)(keep - 1 - start);
        if (len > last_len - 1)
            len = last_len - 1;
        if (read_at(f->fd, last, len, start) != (ssize_t)len) {
            fail(err, err_len, "cannot read");
            goto bad;
        }
        last[len] = '\0';
    }
    *out = f;
    return ML_OK;
bad:
    close(f->fd);
    free(f);
    return st;
}

ml_status ml_logfile_write_line(ml_logfile *f, const char *line)
{
    if (f == NULL || line == NULL)
        return ML_EINVAL;
    size_t n = strlen(line);
    if (n > LINE_MAX_BYTES)
        return ML_EINVAL;
    memcpy(f->buf, line, n);
    f->buf[n] = '\n';
    return write_all(f->fd, f->buf, n + 1);
}

void ml_logfile_close(ml_logfile *f)
{
    if (f == NULL)
        return;
    close(f->fd);
    free(f);
}

const char *ml_logfile_path(const ml_logfile *f)
{
    return f ? f->path : "";
}

ml_status ml_logfile_max_field(const char *path, int column, double *max)
{
    FILE *fp = fopen(path, "rb");
    if (fp == NULL)
        return ML_EIO;
    char line[LINE_MAX_BYTES + 2];
    bool header = true, found = false, complete = true;
    while (fgets(line, sizeof line, fp)) {
        const bool was_complete = complete;
        complete = strchr(line, '\n') != NULL;
        if (!was_complete || header) { /* the rest of a long line, or the header */
            header = header && !complete;
            continue;
        }
        if (!complete)
            break; /* a partial last line does not count */
        const char *p = line;
        for (int i = 0; i < column && p; i++) {
            p = strchr(p, ',');
            if (p)
                p++;
        }
        if (p == NULL)
            continue;
        char *end;
        const double v = strtod(p, &end);
        if (end != p && (*end == ',' || *end == '\n' || *end == '\r') && (!found || v > *max)) {
            *max = v;
            found = true;
        }
    }
    fclose(fp);
    return found ? ML_OK : ML_ENOSIGNAL;
}

bool ml_logfile_has_rows(const char *path)
{
    FILE *fp = fopen(path, "rb");
    if (fp == NULL)
        return false;
    int c, lines = 0;
    while ((c = fgetc(fp)) != EOF && lines < 2)
        if (c == '\n')
            lines++;
    fclose(fp);
    return lines >= 2;
}
