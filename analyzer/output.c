/* Safe output files.
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
#include "analyzer/output.h"

#include <errno.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

bool ml_same_file(const char *a, const char *b)
{
    struct stat sa, sb;
    if (a == NULL || b == NULL || stat(a, &sa) != 0 || stat(b, &sb) != 0)
        return false;
    return sa.st_dev == sb.st_dev && sa.st_ino == sb.st_ino;
}

bool ml_output_open(ml_output *o, const char *path, char *err, size_t errlen)
{
    memset(o, 0, sizeof *o);
    if (path == NULL || strcmp(path, "-") == 0) {
        o->f = stdout;
        o->is_stdout = true;
        return true;
    }
    struct stat st;
    if (stat(path, &st) == 0 && S_ISDIR(st.st_mode)) {
        snprintf(err, errlen, "is a directory");
        return false;
    }
    snprintf(o->path, sizeof o->path, "%s", path);
    snprintf(o->tmp, sizeof o->tmp, "%s.XXXXXX", path);
    int fd = mkstemp(o->tmp);
    if (fd < 0) {
        snprintf(err, errlen, "cannot create: %s", strerror(errno));
        return false;
    }
    o->f = fdopen(fd, "w");
    if (o->f == NULL) {
        snprintf(err, errlen, "cannot open: %s", strerror(errno));
        close(fd);
        unlink(o->tmp);
        return false;
    }
    return true;
}

bool ml_output_commit(ml_output *o, char *err, size_t errlen)
{
    if (o->is_stdout)
        return fflush(stdout) == 0;
    bool ok = fflush(o->f) == 0 && !ferror(o->f);
    if (fclose(o->f) != 0)
        ok = false;
    o->f = NULL;
    if (ok) {
        chmod(o->tmp, 0644);
        if (rename(o->tmp, o->path) == 0)
            return true;
    }
    snprintf(err, errlen, "cannot write: %s", strerror(errno));
    unlink(o->tmp);
    return false;
}

void ml_output_abort(ml_output *o)
{
    if (o->is_stdout || o->f == NULL)
        return;
    fclose(o->f);
    o->f = NULL;
    unlink(o->tmp);
}
