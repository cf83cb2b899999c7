/* Safe output files (see output.h).
 * SPDX-License-Identifier: MIT
 *
 * References: POSIX.1-2008 lstat, realpath (with a NULL buffer: allocated), mkstemp, rename
 * (atomic replacement of a directory entry: a link or a node is replaced, never written
 * through), fsync, open_memstream, pathconf(_PC_NAME_MAX).
 */
#define _POSIX_C_SOURCE 200809L
#include "io/output.h"

#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/types.h>
#include <unistd.h>

#include "io/internal.h"

#ifndef PATH_MAX
#define PATH_MAX 4096
#endif

#define STDOUT_NAME "standard output"

typedef enum { ST_IDLE, ST_WRITING, ST_DONE, ST_DISCARDED, ST_COMMITTED } out_state;

struct ml_output {
    ml_output_set *set;
    const char *path;       /* as registered                                                */
    const char *what;       /* for messages                                                 */
    unsigned flags;
    bool is_stdout;
    bool checked, exists;
    char *final;            /* what the rename replaces: path, or a link's resolved target  */
    char *dir;              /* folder of final                                              */
    char *canon;            /* canonical folder + "/" + name                                */
    dev_t dev;
    ino_t ino;
    mode_t mode;            /* permission bits of the file to be                            */
    out_state state;
    char *tmp;              /* temporary's path while writing                               */
    FILE *f;
    char *mem;              /* standard output: the bytes, written at the commit            */
    size_t memlen;
};

struct ml_output_set {
    mode_t umask;
    bool checked;
    size_t nin, nout;
    struct {
        const char *path, *what;
    } in[ML_OUTPUT_MAX_INPUTS];
    ml_output out[ML_OUTPUT_MAX];
};

/* a + b + c in a new string, or NULL */
static char *concat3(const char *a, const char *b, const char *c)
{
    const size_t la = strlen(a), lb = strlen(b), lc = strlen(c);
    char *s = malloc(la + lb + lc + 1);
    if (s == NULL)
        return NULL;
    memcpy(s, a, la);
    memcpy(s + la, b, lb);
    memcpy(s + la + lb, c, lc + 1);
    return s;
}

static const char *base_of(const char *path)
{
    const char *slash = strrchr(path, '/');
    return slash ? slash + 1 : path;
}

/* The folder part of path in a new string: "." without a slash, "/" for a name in the root. */
static char *dir_of(const char *path)
{
    const char *slash = strrchr(path, '/');
    if (slash == NULL)
        return concat3(".", "", "");
    size_t n = (size_t)(slash - path);
    if (n == 0)
        n = 1;
    char *d = malloc(n + 1);
    if (d == NULL)
        return NULL;
    memcpy(d, path, n);
    d[n] = '\0';
    return d;
}

/* "<dir>/<name>.XXXXXX" for mkstemp, the name cut so that it fits the folder's name length. */
static char *temp_template(const char *dir, const char *name)
{
    long name_max = pathconf(dir, _PC_NAME_MAX);
    if (name_max <= 0)
        name_max = 255;
    size_t keep = strlen(name);
    if (keep + 7 > (size_t)name_max)
        keep = (size_t)name_max > 7 ? (size_t)name_max - 7 : 0;
    char *cut = malloc(keep + 8);
    if (cut == NULL)
        return NULL;
    memcpy(cut, name, keep);
    memcpy(cut + keep, ".XXXXXX", 8);
    char *t = concat3(dir, strcmp(dir, "/") == 0 ? "" : "/", cut);
    free(cut);
    return t;
}

static const char *type_problem(mode_t m)
{
    if (S_ISDIR(m))
        return "is a directory";
    if (S_ISCHR(m) || S_ISBLK(m))
        return "is a device, not a regular file";
    if (S_ISFIFO(m))
        return "is a FIFO (named pipe), not a regular file";
    if (S_ISSOCK(m))
        return "is a socket, not a regular file";
    if (S_ISLNK(m))
        return "is a symbolic link";
    if (!S_ISREG(m))
        return "is not a regular file";
    return NULL;
}

static void forget(ml_output *o)
{
    free(o->final);
    free(o->dir);
    free(o->canon);
    o->final = o->dir = o->canon = NULL;
    o->checked = o->exists = false;
}

ml_status ml_output_set_create(ml_output_set **out)
{
    if (out == NULL)
        return ML_EINVAL;
    *out = calloc(1, sizeof **out);
    if (*out == NULL)
        return ML_ENOMEM;
    const mode_t m = umask(022);
    umask(m);
    (*out)->umask = m;
    return ML_OK;
}

void ml_output_set_destroy(ml_output_set *s)
{
    if (s == NULL)
        return;
    ml_output_set_abort(s);
    for (size_t i = 0; i < s->nout; i++)
        forget(&s->out[i]);
    free(s);
}

ml_status ml_output_set_input(ml_output_set *s, const char *path, const char *what)
{
    if (s == NULL)
        return ML_EINVAL;
    if (path == NULL)
        return ML_OK;
    if (s->nin == ML_OUTPUT_MAX_INPUTS)
        return ML_EINVAL;
    s->in[s->nin].path = path;
    s->in[s->nin].what = what ? what : "an input";
    s->nin++;
    s->checked = false;
    return ML_OK;
}

ml_status ml_output_set_add(ml_output_set *s, const char *path, const char *what, unsigned flags, ml_output **out)
{
    if (out != NULL)
        *out = NULL;
    if (s == NULL)
        return ML_EINVAL;
    if (path == NULL)
        return ML_OK;
    if (s->nout == ML_OUTPUT_MAX)
        return ML_EINVAL;
    ml_output *o = &s->out[s->nout++];
    memset(o, 0, sizeof *o);
    o->set = s;
    o->path = path;
    o->what = what ? what : "an output";
    o->flags = flags;
    o->is_stdout = strcmp(path, "-") == 0;
    o->state = ST_IDLE;
    s->checked = false;
    if (out != NULL)
        *out = o;
    return ML_OK;
}

/* One output on its own: its kind, its folder, its identity. */
static ml_status check_one(ml_output_set *s, ml_output *o, char *err, size_t errlen)
{
    forget(o);
    if (o->is_stdout) {
        if (!(o->flags & ML_OUTPUT_STDOUT_OK)) {
            ml_say(err, errlen, "%s cannot go to standard output; give a file name", o->what);
            return ML_EIO;
        }
        o->checked = true;
        return ML_OK;
    }
    const char *path = o->path;
    const size_t len = strlen(path);
    if (len == 0) {
        ml_say(err, errlen, "%s: an empty file name", o->what);
        return ML_EIO;
    }
    if (len >= PATH_MAX) {
        ml_say(err, errlen, "the path is %zu bytes long; the system allows at most %d", len, PATH_MAX - 1);
        return ML_EIO;
    }
    if (path[len - 1] == '/') {
        ml_say(err, errlen, "names a folder, not a file");
        return ML_EIO;
    }
    struct stat st;
    if (lstat(path, &st) == 0) {
        if (S_ISLNK(st.st_mode)) {
            /* written through: the link's regular target is replaced, the link stays */
            o->final = realpath(path, NULL);
            if (o->final == NULL) {
                ml_say(err, errlen, "is a symbolic link to nothing usable (%s)", strerror(errno));
                return ML_EIO;
            }
            if (stat(o->final, &st) != 0) {
                ml_say(err, errlen, "is a symbolic link to nothing usable (%s)", strerror(errno));
                return ML_EIO;
            }
        }
        const char *problem = type_problem(st.st_mode);
        if (problem != NULL) {
            ml_say(err, errlen, "%s", problem);
            return ML_EIO;
        }
        o->exists = true;
        o->dev = st.st_dev;
        o->ino = st.st_ino;
        o->mode = st.st_mode & 0777;
    } else if (errno != ENOENT) {
        ml_say(err, errlen, "cannot use this path: %s", strerror(errno));
        return ML_EIO;
    } else {
        o->mode = 0666 & ~s->umask;
    }
    if (o->final == NULL && (o->final = concat3(path, "", "")) == NULL)
        return ML_ENOMEM;
    if ((o->dir = dir_of(o->final)) == NULL)
        return ML_ENOMEM;
    struct stat sd;
    if (stat(o->dir, &sd) != 0) {
        ml_say(err, errlen, "cannot write in the folder '%s': %s", o->dir, strerror(errno));
        return ML_EIO;
    }
    if (!S_ISDIR(sd.st_mode)) {
        ml_say(err, errlen, "cannot write in '%s': not a folder", o->dir);
        return ML_EIO;
    }
    char *real_dir = realpath(o->dir, NULL);
    if (real_dir == NULL) {
        ml_say(err, errlen, "cannot write in the folder '%s': %s", o->dir, strerror(errno));
        return ML_EIO;
    }
    o->canon = concat3(real_dir, strcmp(real_dir, "/") == 0 ? "" : "/", base_of(o->final));
    free(real_dir);
    if (o->canon == NULL)
        return ML_ENOMEM;
    /* the temporary must be creatable: try it (a read-only mount, permissions, ACLs, quotas) */
    char *probe = temp_template(o->dir, base_of(o->final));
    if (probe == NULL)
        return ML_ENOMEM;
    if (strlen(probe) >= PATH_MAX) {
        ml_say(err, errlen, "the path is too long for a temporary beside it (at most %d bytes)", PATH_MAX - 8);
        free(probe);
        return ML_EIO;
    }
    int fd = mkstemp(probe);
    if (fd < 0) {
        ml_say(err, errlen, "cannot create a file in the folder '%s': %s", o->dir, strerror(errno));
        free(probe);
        return ML_EIO;
    }
    close(fd);
    unlink(probe);
    free(probe);
    o->checked = true;
    return ML_OK;
}

/* An output against the inputs (its identity must be known: after check_one). */
static ml_status check_inputs(const ml_output_set *s, const ml_output *o, char *err, size_t errlen)
{
    struct stat so;
    bool have = false;
    if (o->is_stdout) {
        /* "modlens ... >> input.wav" would append the report to an input */
        have = fstat(STDOUT_FILENO, &so) == 0 && S_ISREG(so.st_mode);
    } else if (o->exists) {
        have = true;
        so.st_dev = o->dev;
        so.st_ino = o->ino;
    }
    if (!have)
        return ML_OK;
    for (size_t i = 0; i < s->nin; i++) {
        struct stat si;
        if (stat(s->in[i].path, &si) == 0 && si.st_dev == so.st_dev && si.st_ino == so.st_ino) {
            if (o->is_stdout)
                ml_say(err, errlen, "is redirected into an input file (%s, %s): refusing to write %s there",
                    s->in[i].what, s->in[i].path, o->what);
            else
                ml_say(err, errlen, "refusing to overwrite an input file (%s) with %s", s->in[i].what, o->what);
            return ML_EIO;
        }
    }
    return ML_OK;
}

/* True when two checked outputs would land in the same file. */
static bool same_output(const ml_output *a, const ml_output *b)
{
    if (a->is_stdout && b->is_stdout)
        return true;
    if (a->is_stdout || b->is_stdout) {
        const ml_output *f = a->is_stdout ? b : a;
        struct stat so;
        return f->exists && fstat(STDOUT_FILENO, &so) == 0 && S_ISREG(so.st_mode) && so.st_dev == f->dev
               && so.st_ino == f->ino;
    }
    if (a->exists && b->exists && a->dev == b->dev && a->ino == b->ino)
        return true;
    return strcmp(a->canon, b->canon) == 0;
}

ml_status ml_output_set_check(ml_output_set *s, const char **bad, char *err, size_t errlen)
{
    if (bad != NULL)
        *bad = "";
    ml_say(err, errlen, "%s", "");
    if (s == NULL)
        return ML_EINVAL;
    s->checked = false;
    for (size_t i = 0; i < s->nout; i++) {
        ml_output *o = &s->out[i];
        ml_status st = check_one(s, o, err, errlen);
        if (st == ML_OK)
            st = check_inputs(s, o, err, errlen);
        for (size_t j = 0; st == ML_OK && j < i; j++)
            if (same_output(&s->out[j], o)) {
                if (o->is_stdout && s->out[j].is_stdout)
                    ml_say(err, errlen, "%s and %s both go to standard output", s->out[j].what, o->what);
                else
                    ml_say(err, errlen, "%s and %s name the same file", s->out[j].what, o->what);
                st = ML_EIO;
            }
        if (st != ML_OK) {
            if (st == ML_ENOMEM)
                ml_say(err, errlen, "out of memory");
            if (bad != NULL)
                *bad = ml_output_path(o);
            return st;
        }
    }
    s->checked = true;
    return ML_OK;
}

ml_status ml_output_begin(ml_output *o, FILE **f, char *err, size_t errlen)
{
    if (f != NULL)
        *f = NULL;
    if (o == NULL || f == NULL || o->state != ST_IDLE || !o->set->checked || !o->checked) {
        ml_say(err, errlen, "internal error: output not checked or already begun");
        return ML_EINVAL;
    }
    if (o->is_stdout) {
        o->f = open_memstream(&o->mem, &o->memlen);
        if (o->f == NULL) {
            ml_say(err, errlen, "out of memory");
            return ML_ENOMEM;
        }
        o->state = ST_WRITING;
        *f = o->f;
        return ML_OK;
    }
    o->tmp = temp_template(o->dir, base_of(o->final));
    if (o->tmp == NULL) {
        ml_say(err, errlen, "out of memory");
        return ML_ENOMEM;
    }
    int fd = mkstemp(o->tmp);
    if (fd < 0) {
        ml_say(err, errlen, "cannot create a temporary in the folder '%s': %s", o->dir, strerror(errno));
        free(o->tmp);
        o->tmp = NULL;
        return ML_EIO;
    }
    if (fchmod(fd, o->mode) != 0 || (o->f = fdopen(fd, "w+b")) == NULL) {
        ml_say(err, errlen, "cannot open a temporary: %s", strerror(errno));
        close(fd);
        unlink(o->tmp);
        free(o->tmp);
        o->tmp = NULL;
        return ML_EIO;
    }
    o->state = ST_WRITING;
    *f = o->f;
    return ML_OK;
}

ml_status ml_output_end(ml_output *o, char *err, size_t errlen)
{
    if (o == NULL || o->state != ST_WRITING) {
        ml_say(err, errlen, "internal error: output not being written");
        return ML_EINVAL;
    }
    int e = 0;
    if (fflush(o->f) != 0 || ferror(o->f))
        e = errno ? errno : EIO;
    if (e == 0 && !o->is_stdout && fsync(fileno(o->f)) != 0 && errno != EINVAL && errno != EROFS)
        e = errno;
    if (fclose(o->f) != 0 && e == 0)
        e = errno ? errno : EIO;
    o->f = NULL;
    if (e != 0) {
        ml_say(err, errlen, "cannot write: %s", strerror(e));
        o->state = ST_WRITING; /* discard removes the temporary */
        ml_output_discard(o);
        return ML_EIO;
    }
    o->state = ST_DONE;
    return ML_OK;
}

void ml_output_discard(ml_output *o)
{
    if (o == NULL)
        return;
    if (o->f != NULL) {
        fclose(o->f);
        o->f = NULL;
    }
    if (o->tmp != NULL && o->state != ST_COMMITTED)
        unlink(o->tmp);
    free(o->tmp);
    o->tmp = NULL;
    free(o->mem);
    o->mem = NULL;
    o->memlen = 0;
    if (o->state != ST_COMMITTED)
        o->state = ST_DISCARDED;
}

void ml_output_set_abort(ml_output_set *s)
{
    for (size_t i = 0; s && i < s->nout; i++)
        if (s->out[i].state == ST_WRITING || s->out[i].state == ST_DONE)
            ml_output_discard(&s->out[i]);
}

/* Just before a rename: the target is still something that may be replaced. */
static ml_status recheck(const ml_output_set *s, const ml_output *o, char *err, size_t errlen)
{
    struct stat st;
    if (lstat(o->final, &st) != 0)
        return errno == ENOENT ? ML_OK : (ml_say(err, errlen, "cannot use this path: %s", strerror(errno)), ML_EIO);
    const char *problem = type_problem(st.st_mode);
    if (problem != NULL) {
        ml_say(err, errlen, "%s now (it changed while modlens ran)", problem);
        return ML_EIO;
    }
    for (size_t i = 0; i < s->nin; i++) {
        struct stat si;
        if (stat(s->in[i].path, &si) == 0 && si.st_dev == st.st_dev && si.st_ino == st.st_ino) {
            ml_say(err, errlen, "refusing to overwrite an input file (%s) with %s", s->in[i].what, o->what);
            return ML_EIO;
        }
    }
    return ML_OK;
}

static void sync_folder(const char *dir)
{
    int fd = open(dir, O_RDONLY);
    if (fd >= 0) {
        fsync(fd);
        close(fd);
    }
}

ml_status ml_output_set_commit(ml_output_set *s, const char **bad, char *err, size_t errlen)
{
    if (bad != NULL)
        *bad = "";
    ml_say(err, errlen, "%s", "");
    if (s == NULL)
        return ML_EINVAL;
    ml_status st = ML_OK;
    const ml_output *culprit = NULL;
    for (size_t i = 0; i < s->nout && st == ML_OK; i++) {
        const ml_output *o = &s->out[i];
        if (o->state == ST_WRITING) {
            ml_say(err, errlen, "internal error: %s was not finished", o->what);
            st = ML_EIO;
        } else if (o->state == ST_DONE && !o->is_stdout) {
            st = recheck(s, o, err, errlen);
        }
        if (st != ML_OK)
            culprit = o;
    }
    for (size_t i = 0; i < s->nout && st == ML_OK; i++) {
        ml_output *o = &s->out[i];
        if (o->state != ST_DONE || !o->is_stdout)
            continue;
        if ((o->memlen > 0 && fwrite(o->mem, 1, o->memlen, stdout) != o->memlen) || fflush(stdout) != 0) {
            ml_say(err, errlen, "cannot write: %s", strerror(errno));
            st = ML_EIO;
            culprit = o;
        } else {
            free(o->mem);
            o->mem = NULL;
            o->state = ST_COMMITTED;
        }
    }
    for (size_t i = 0; i < s->nout && st == ML_OK; i++) {
        ml_output *o = &s->out[i];
        if (o->state != ST_DONE)
            continue;
        if (rename(o->tmp, o->final) != 0) {
            ml_say(err, errlen, "cannot replace the file: %s", strerror(errno));
            st = ML_EIO;
            culprit = o;
            break;
        }
        o->state = ST_COMMITTED;
        free(o->tmp);
        o->tmp = NULL;
        sync_folder(o->dir);
    }
    if (st != ML_OK) {
        if (bad != NULL && culprit != NULL)
            *bad = ml_output_path(culprit);
        ml_output_set_abort(s);
    }
    return st;
}

const char *ml_output_path(const ml_output *o)
{
    return o == NULL ? "" : o->is_stdout ? STDOUT_NAME : o->path;
}

bool ml_output_is_stdout(const ml_output *o)
{
    return o != NULL && o->is_stdout;
}

bool ml_output_exists(const ml_output *o)
{
    return o != NULL && o->checked && o->exists;
}

ml_status ml_output_check_path(const char *path, const char *what, const char *const *inputs, size_t ninputs,
                               char *err, size_t errlen)
{
    ml_output_set *s = NULL;
    ml_status st = ml_output_set_create(&s);
    if (st != ML_OK) {
        ml_say(err, errlen, "out of memory");
        return st;
    }
    for (size_t i = 0; i < ninputs && st == ML_OK; i++)
        st = ml_output_set_input(s, inputs[i], "an input");
    if (st == ML_OK)
        st = ml_output_set_add(s, path, what, 0, NULL);
    if (st == ML_OK)
        st = ml_output_set_check(s, NULL, err, errlen);
    else
        ml_say(err, errlen, "too many inputs");
    ml_output_set_destroy(s);
    return st;
}

bool ml_same_file(const char *a, const char *b)
{
    struct stat sa, sb;
    if (a == NULL || b == NULL || stat(a, &sa) != 0 || stat(b, &sb) != 0)
        return false;
    return sa.st_dev == sb.st_dev && sa.st_ino == sb.st_ino;
}
