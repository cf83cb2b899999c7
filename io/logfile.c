/* Append-only, locked line files (see io/logfile.h).
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
#include "io/logfile.h"

#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <unistd.h>

#include "io/csv.h"

#define NLINES 2 /* first lines kept for messages */

struct ml_logfile {
    int fd;                   /* -1 while the file is absent and not begun */
    bool begun;
    char *path, *head, *prefix;
    size_t hlen;
    ml_logfile_match match;
    uint64_t size;            /* bytes in the file                                    */
    uint64_t keep;            /* bytes up to the end of the last complete line        */
    char line[NLINES][ML_LOGFILE_LINE_MAX + 1];
    char last[ML_LOGFILE_LINE_MAX + 1];
    char buf[ML_LOGFILE_LINE_MAX + 2];
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
 * chunks, so any file size works with a fixed buffer. -1 on a read error. */
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

/* Lock the descriptor for this process alone, without waiting. */
static ml_status lock(int fd, char *err, size_t err_len)
{
    if (flock(fd, LOCK_EX | LOCK_NB) == 0)
        return ML_OK;
    if (errno == EWOULDBLOCK)
        snprintf(err, err_len, "is being written by another process (it holds the file's lock)");
    else
        fail(err, err_len, "cannot lock");
    return ML_EIO;
}

/* The first NLINES complete lines into f->line[]. */
static ml_status read_first_lines(ml_logfile *f)
{
    off_t off = 0;
    for (int i = 0; i < NLINES && (uint64_t)off < f->keep; i++) {
        const ssize_t n = read_at(f->fd, f->buf, ML_LOGFILE_LINE_MAX + 1, off);
        if (n < 0)
            return ML_EIO;
        const char *nl = memchr(f->buf, '\n', (size_t)n);
        const size_t len = nl ? (size_t)(nl - f->buf) : (size_t)n;
        const size_t cut = len > ML_LOGFILE_LINE_MAX ? ML_LOGFILE_LINE_MAX : len;
        memcpy(f->line[i], f->buf, cut);
        f->line[i][cut] = '\0';
        if (nl == NULL)
            break; /* a line longer than the limit: the rest is not read */
        off += (off_t)len + 1;
    }
    return ML_OK;
}

/* The last complete line after the head into f->last. */
static ml_status read_last_line(ml_logfile *f)
{
    if (f->keep <= f->hlen)
        return ML_OK;
    const off_t start = end_of_last_line(f->fd, (off_t)f->keep - 1, f->buf, sizeof f->buf);
    if (start < 0)
        return ML_EIO;
    size_t len = (size_t)((off_t)f->keep - 1 - start);
    if (len > ML_LOGFILE_LINE_MAX)
        len = ML_LOGFILE_LINE_MAX;
    if (read_at(f->fd, f->last, len, start) != (ssize_t)len)
        return ML_EIO;
    f->last[len] = '\0';
    return ML_OK;
}

/* Compares the content of an existing file with the head. */
static ml_status classify(ml_logfile *f)
{
    if (f->size < f->hlen) { /* only a cut copy of the head (a kill inside its write) may be replaced */
        bool prefix = true;
        for (uint64_t off = 0; prefix && off < f->size; off += sizeof f->buf) {
            const size_t n = f->size - off < sizeof f->buf ? (size_t)(f->size - off) : sizeof f->buf;
            if (read_at(f->fd, f->buf, n, (off_t)off) != (ssize_t)n)
                return ML_EIO;
            prefix = memcmp(f->buf, f->head + off, n) == 0;
        }
        if (prefix) {
            f->match = ML_LOGFILE_EMPTY;
            return ML_OK;
        }
    }
    if (f->keep == 0) { /* no line break at all: not a file of this kind */
        f->match = ML_LOGFILE_FOREIGN;
        return ML_OK;
    }
    if (read_first_lines(f) != ML_OK)
        return ML_EIO;
    bool same = f->keep >= f->hlen;
    for (size_t off = 0; same && off < f->hlen; off += sizeof f->buf) {
        const size_t n = f->hlen - off < sizeof f->buf ? f->hlen - off : sizeof f->buf;
        same = read_at(f->fd, f->buf, n, (off_t)off) == (ssize_t)n && memcmp(f->buf, f->head + off, n) == 0;
    }
    if (same) {
        f->match = ML_LOGFILE_SAME;
        return read_last_line(f);
    }
    f->match = strncmp(f->line[0], f->prefix, strlen(f->prefix)) == 0 ? ML_LOGFILE_KIN : ML_LOGFILE_FOREIGN;
    return ML_OK;
}

static ml_status attach_existing(ml_logfile *f, char *err, size_t err_len)
{
    struct stat sb;
    if (fstat(f->fd, &sb) != 0)
        return fail(err, err_len, "cannot inspect");
    if (!S_ISREG(sb.st_mode)) {
        snprintf(err, err_len, "not a regular file");
        return ML_EIO;
    }
    const int fl = fcntl(f->fd, F_GETFL);
    if (fl < 0 || fcntl(f->fd, F_SETFL, fl & ~O_NONBLOCK) != 0)
        return fail(err, err_len, "cannot open");
    ml_status st = lock(f->fd, err, err_len);
    if (st != ML_OK)
        return st;
    f->size = (uint64_t)sb.st_size;
    const off_t keep = end_of_last_line(f->fd, sb.st_size, f->buf, sizeof f->buf);
    if (keep < 0)
        return fail(err, err_len, "cannot read");
    f->keep = (uint64_t)keep;
    if (classify(f) != ML_OK)
        return fail(err, err_len, "cannot read");
    return ML_OK;
}

ml_status ml_logfile_attach(const char *path, const char *head, const char *kind_prefix, ml_logfile **out,
                            char *err, size_t err_len)
{
    if (out == NULL)
        return ML_EINVAL;
    *out = NULL;
    if (path == NULL || head == NULL || kind_prefix == NULL || head[0] == '\0' || head[strlen(head) - 1] != '\n') {
        snprintf(err, err_len, "invalid arguments");
        return ML_EINVAL;
    }
    ml_logfile *f = calloc(1, sizeof *f);
    if (f == NULL || (f->path = strdup(path)) == NULL || (f->head = strdup(head)) == NULL
        || (f->prefix = strdup(kind_prefix)) == NULL) {
        ml_logfile_close(f);
        snprintf(err, err_len, "out of memory");
        return ML_ENOMEM;
    }
    f->hlen = strlen(head);
    /* O_NONBLOCK: opening a FIFO must not wait for a writer (it is refused below) */
    f->fd = open(path, O_RDWR | O_APPEND | O_CLOEXEC | O_NONBLOCK | O_NOCTTY);
    ml_status st = ML_OK;
    if (f->fd < 0) {
        struct stat lb;
        if (errno != ENOENT)
            st = fail(err, err_len, "cannot open");
        else if (lstat(path, &lb) == 0) { /* a symbolic link to nothing */
            snprintf(err, err_len, "is a symbolic link to a missing file");
            st = ML_EIO;
        } else
            f->match = ML_LOGFILE_ABSENT;
    } else {
        st = attach_existing(f, err, err_len);
    }
    if (st != ML_OK) {
        ml_logfile_close(f);
        return st;
    }
    *out = f;
    return ML_OK;
}

ml_logfile_match ml_logfile_get_match(const ml_logfile *f)
{
    return f ? f->match : ML_LOGFILE_FOREIGN;
}

const char *ml_logfile_line(const ml_logfile *f, int i)
{
    return f && i >= 0 && i < NLINES ? f->line[i] : "";
}

const char *ml_logfile_last(const ml_logfile *f)
{
    return f && f->match == ML_LOGFILE_SAME ? f->last : "";
}

ml_status ml_logfile_begin(ml_logfile *f, char *err, size_t err_len)
{
    if (f == NULL || f->begun) {
        snprintf(err, err_len, "invalid arguments");
        return ML_EINVAL;
    }
    if (f->match == ML_LOGFILE_KIN || f->match == ML_LOGFILE_FOREIGN) {
        snprintf(err, err_len, "holds something other than this log; nothing was changed");
        return ML_EFORMAT;
    }
    bool created = false;
    if (f->match == ML_LOGFILE_ABSENT) {
        f->fd = open(f->path, O_RDWR | O_APPEND | O_CREAT | O_EXCL | O_CLOEXEC | O_NOCTTY, 0666);
        if (f->fd < 0)
            return fail(err, err_len, errno == EEXIST ? "appeared while starting" : "cannot create");
        created = true;
        ml_status st = lock(f->fd, err, err_len);
        if (st != ML_OK) {
            close(f->fd);
            f->fd = -1;
            return st;
        }
    } else {
        struct stat sb;
        if (fstat(f->fd, &sb) != 0 || (uint64_t)sb.st_size != f->size) {
            snprintf(err, err_len, "changed while starting; nothing was changed");
            return ML_EIO;
        }
    }
    const uint64_t cut = f->match == ML_LOGFILE_SAME ? f->keep : 0;
    if (f->size > cut && ftruncate(f->fd, (off_t)cut) != 0) /* a partial line from a killed run */
        return fail(err, err_len, "cannot cut a partial last line");
    f->size = cut;
    if (f->match != ML_LOGFILE_SAME) {
        if (write_all(f->fd, f->head, f->hlen) != ML_OK) {
            const int e = errno;
            if (created)
                unlink(f->path);
            errno = e;
            return fail(err, err_len, "cannot write");
        }
        f->size = f->hlen;
    }
    f->begun = true;
    return ML_OK;
}

ml_status ml_logfile_write_line(ml_logfile *f, const char *line)
{
    if (f == NULL || line == NULL || !f->begun)
        return ML_EINVAL;
    size_t n = strlen(line);
    if (n > ML_LOGFILE_LINE_MAX)
        return ML_EINVAL;
    memcpy(f->buf, line, n);
    f->buf[n] = '\n';
    ml_status st = write_all(f->fd, f->buf, n + 1);
    if (st == ML_OK)
        f->size += n + 1;
    return st;
}

uint64_t ml_logfile_size(const ml_logfile *f)
{
    return f ? f->size : 0;
}

void ml_logfile_close(ml_logfile *f)
{
    if (f == NULL)
        return;
    if (f->fd >= 0)
        close(f->fd);
    free(f->path);
    free(f->head);
    free(f->prefix);
    free(f);
}

const char *ml_logfile_path(const ml_logfile *f)
{
    return f && f->path ? f->path : "";
}

ml_status ml_logfile_max_field(const char *path, int skip_lines, int column, double *max)
{
    FILE *fp = fopen(path, "rb");
    if (fp == NULL)
        return ML_EIO;
    char *line = malloc(ML_LOGFILE_LINE_MAX + 2), field[64];
    if (line == NULL) {
        fclose(fp);
        return ML_ENOMEM;
    }
    bool found = false, complete = true;
    int seen = 0;
    while (fgets(line, ML_LOGFILE_LINE_MAX + 2, fp)) {
        const bool was_complete = complete;
        complete = strchr(line, '\n') != NULL;
        if (!was_complete)
            continue; /* the rest of an over-long line */
        if (!complete)
            break; /* a partial last line does not count */
        if (seen < skip_lines) {
            seen++;
            continue;
        }
        char *end;
        if (!ml_csv_get_field(line, column, field, sizeof field) || field[0] == '\0')
            continue;
        const double v = strtod(field, &end);
        if (*end == '\0' && (!found || v > *max)) {
            *max = v;
            found = true;
        }
    }
    free(line);
    fclose(fp);
    return found ? ML_OK : ML_ENOSIGNAL;
}
