/* Small text files: open, check, read whole; key = value lines.
 * SPDX-License-Identifier: MIT
 */
#include "io/smallfile.h"

#include <errno.h>
#include <fcntl.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

ml_status ml_smallfile_open(const char *path, const char *what, size_t max_bytes, const char *max_text,
                            bool missing_ok, int *fd, size_t *size, char *err, size_t errlen)
{
    char none[1];
    if (err == NULL || errlen == 0) {
        err = none;
        errlen = sizeof none;
    }
    *fd = -1;
    *size = 0;
    /* O_NONBLOCK: a FIFO must not block the open (it is refused below) */
    const int f = open(path, O_RDONLY | O_NONBLOCK | O_CLOEXEC | O_NOCTTY);
    if (f < 0) {
        if (missing_ok && (errno == ENOENT || errno == ENOTDIR))
            return ML_OK;
        snprintf(err, errlen, "%s", strerror(errno));
        return ML_EIO;
    }
    struct stat st;
    ml_status s = ML_OK;
    if (fstat(f, &st) != 0)
        s = (snprintf(err, errlen, "%s", strerror(errno)), ML_EIO);
    else if (S_ISDIR(st.st_mode))
        s = (snprintf(err, errlen, "is a directory, not a %s", what), ML_EIO);
    else if (!S_ISREG(st.st_mode))
        s = (snprintf(err, errlen, "not a regular file"), ML_EIO);
    else if ((uintmax_t)st.st_size > max_bytes)
        s = (snprintf(err, errlen, "larger than %s: not a %s", max_text, what), ML_EFORMAT);
    if (s != ML_OK) {
        close(f);
        return s;
    }
    fcntl(f, F_SETFL, fcntl(f, F_GETFL) & ~O_NONBLOCK);
    *fd = f;
    *size = (size_t)st.st_size;
    return ML_OK;
}

ml_status ml_smallfile_read(int fd, size_t size, char **data, size_t *got)
{
    char *buf = malloc(size + 1);
    size_t n = 0;
    while (buf && n < size) {
        const ssize_t k = read(fd, buf + n, size - n);
        if (k < 0 && errno == EINTR)
            continue;
        if (k <= 0)
            break;
        n += (size_t)k;
    }
    close(fd);
    *data = buf;
    *got = n;
    if (buf == NULL)
        return ML_ENOMEM;
    buf[n] = '\0';
    return ML_OK;
}

static bool blank(char ch)
{
    return ch == ' ' || ch == '\t';
}

static void rtrim(char *s)
{
    size_t n = strlen(s);
    while (n > 0 && (blank(s[n - 1]) || s[n - 1] == '\r' || s[n - 1] == '\n'))
        s[--n] = '\0';
}

char *ml_smallfile_trim(char *s)
{
    while (blank(*s))
        s++;
    rtrim(s);
    return s;
}

char *ml_smallfile_line(char *line, bool first_line)
{
    if (first_line && strncmp(line, "\xef\xbb\xbf", 3) == 0) /* a UTF-8 byte order mark */
        line += 3;
    line = ml_smallfile_trim(line);
    return *line == '\0' || *line == ';' || *line == '#' ? NULL : line;
}

char *ml_smallfile_key_value(char *line)
{
    char *eq = strchr(line, '=');
    if (eq == NULL || eq == line)
        return NULL;
    *eq = '\0';
    rtrim(line);
    char *value = eq + 1;
    for (char *p = value; *p; p++)
        if (*p == ';' && (p == value || blank(p[-1]))) {
            *p = '\0';
            break;
        }
    while (blank(*value))
        value++;
    rtrim(value);
    return value;
}
