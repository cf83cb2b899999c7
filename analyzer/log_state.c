/* What a log holds (the first line of its files) and the detectors' state written beside it.
 * SPDX-License-Identifier: MIT
 *
 * The head line. Every rows and events file starts with one line saying what is logged:
 *   # modlens log 1; input=file:NAME; frames=N; rate_hz=R; channels=C; fingerprint=F;
 *   start_utc=T; kind=K; <the settings that change what a row means>
 * (one line; NAME percent-encoded; F an FNV-1a hash of the opening second's samples; for a device
 * input=device:NAME and no frames, fingerprint or start). A run continues a log only when this
 * line is the same, except the start of a file, which the log keeps: a file's start is the one
 * recorded (a later modification time does not move the rows), and --start-time must agree.
 *
 * The state (NAME.state beside --out, a regular file replaced atomically: a temporary beside it renamed
 * over it; a path holding anything else is refused at the start): every interval's
 * end, at most once a second of wall-clock time, and at a stop, the detectors' state (the
 * baselines, the impulse floor, open events, the buzz detector, the mains decided, the carrier
 * found, the A-weighting filter) and where the grid stood. A file log resumed after a kill goes
 * back to that point and runs forward again: the rows and events the killed run had written
 * after it are recognised and not written twice, and everything open at the kill goes on as if
 * nothing had happened. A live log cannot go back: it keeps the baselines and open events and
 * continues from the present. A state written at a stop holds no open events: they were closed
 * with the stop's reason.
 */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <fcntl.h>
#include <inttypes.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <sys/stat.h>
#include <unistd.h>

#include "analyzer/cli.h"
#include "analyzer/log_internal.h"
#include "io/csv.h"

#define STATE_TAG "modlens log state 1"
#define META_VERSION "1"
#define FP_SECONDS 1.0 /* opening samples hashed into the fingerprint */

/* Percent-encodes s (bytes other than letters, digits and ._-/+:@) into out[n]. */
static void encode(const char *s, char *out, size_t n)
{
    static const char hex[] = "0123456789ABCDEF";
    size_t k = 0;
    for (const unsigned char *p = (const unsigned char *)(s ? s : ""); *p && k + 4 < n; p++) {
        if ((*p >= 'a' && *p <= 'z') || (*p >= 'A' && *p <= 'Z') || (*p >= '0' && *p <= '9')
            || strchr("._-/+:@", *p)) {
            out[k++] = (char)*p;
        } else {
            out[k++] = '%';
            out[k++] = hex[*p >> 4];
            out[k++] = hex[*p & 15];
        }
    }
    out[k] = '\0';
}

static const char *base_name(const char *path)
{
    const char *s = strrchr(path, '/');
    return s ? s + 1 : path;
}

/* FNV-1a (64 bits) over the bytes of the opening FP_SECONDS of samples of a file; the source is
 * left at frame 0. */
static int fingerprint(ml_logger *L, uint64_t *h)
{
    *h = 14695981039346656037ull;
    if (ml_source_seek(L->src, 0) != ML_OK)
        return ml_cli_error("%s: cannot read its opening: %s", L->name, ml_source_detail(L->src));
    int64_t left = (int64_t)(FP_SECONDS * L->rate);
    if (L->info->frames >= 0 && left > L->info->frames)
        left = L->info->frames;
    while (left > 0) {
        size_t got = 0;
        const size_t want = left < ML_LOG_BLOCK ? (size_t)left : ML_LOG_BLOCK;
        if (ml_source_read(L->src, L->buf, want, &got) != ML_OK)
            return ml_cli_error("%s: cannot read its opening: %s", L->name, ml_source_detail(L->src));
        const unsigned char *b = (const unsigned char *)L->buf;
        for (size_t i = 0; i < got * L->ch.stride * sizeof *L->buf; i++)
            *h = (*h ^ b[i]) * 1099511628211ull;
        if (got < want)
            break;
        left -= (int64_t)got;
    }
    if (ml_source_seek(L->src, 0) != ML_OK)
        return ml_cli_error("%s: cannot read its opening: %s", L->name, ml_source_detail(L->src));
    return 0;
}

/* "auto" for NAN or 0 (when zero_is_auto), else the number. */
static const char *num_or(double v, bool zero_is_auto, char *b, size_t n)
{
    if (isnan(v) || (zero_is_auto && v == 0))
        snprintf(b, n, "auto");
    else
        snprintf(b, n, "%.12g", v);
    return b;
}

int ml_log_make_meta(ml_logger *L)
{
    const ml_log_opts *o = L->o;
    char name[1024], ident[1400], start[64] = "", ref[1024] = "none", a[8][32];
    if (o->in.live) {
        encode(o->in.device ? o->in.device : "default", name, sizeof name);
        snprintf(ident, sizeof ident, "input=device:%s; rate_hz=%.12g; channels=%d", name, L->rate,
                 L->info->channels);
    } else {
        uint64_t fp;
        int rc = fingerprint(L, &fp);
        if (rc != 0)
            return rc;
        encode(base_name(o->in.path), name, sizeof name);
        snprintf(ident, sizeof ident, "input=file:%s; frames=%" PRId64 "; rate_hz=%.12g; channels=%d; "
                 "fingerprint=%016" PRIx64, name, L->info->frames, L->rate, L->info->channels, fp);
        char utc[40];
        ml_log_format_utc(L->start_utc, utc, sizeof utc);
        snprintf(start, sizeof start, "; start_utc=%s", utc);
    }
    if (o->an.carrier_reference)
        encode(base_name(o->an.carrier_reference), ref, sizeof ref);
    char tz[400];
    encode(L->tz, tz, sizeof tz);
    static const char *const kinds[] = {"audio", "audio", "if", "iq"};
    const ml_audio_config *ac = &o->an.audio;
    const size_t n = 4096;
    free(L->meta);
    if ((L->meta = malloc(n)) == NULL)
        return ml_cli_error("%s: out of memory", L->name);
    snprintf(L->meta, n,
             "%s %s; %s%s; kind=%s; channel=%ld; swap_iq=%d; interval_s=%.12g; rotate_hours=%s; timezone=%s; "
             "mains=%s; band=%.12g:%.12g; tone=%s; harmonics=%d; window=%s; carrier=%s; bandwidth=%s; "
             "carrier_reference=%s; peak_hold_ms=%.12g; impulse_db=%.12g; hum_db=%.12g; noise_db=%.12g; "
             "carrier_loss_db=%.12g; level_db=%.12g; fullscale_dbm=%s; rf_hz=%s; full_scale_dbu=%s",
             ML_LOG_PREFIX, META_VERSION, ident, start, kinds[o->in.kind], o->in.channel, o->in.swap_iq,
             o->interval_s, num_or(o->rotate_h, true, a[0], 32), tz, num_or(ac->mains_hz, true, a[1], 32),
             ac->band_lo_hz, ac->band_hi_hz,
             ac->tone_mode == ML_TONE_NONE ? "none" : num_or(ac->tone_hz, true, a[2], 32), ac->harmonics,
             ml_window_name(o->an.window), num_or(o->an.carrier_hz, false, a[3], 32),
             num_or(o->an.bandwidth_hz, true, a[4], 32), ref, o->an.peak_hold_ms, o->impulse_db, o->hum_db,
             o->noise_db, o->loss_db, o->level_db, o->have_cal ? num_or(o->fullscale_dbm, false, a[5], 32) : "none",
             o->have_cal ? num_or(o->rf_hz, false, a[6], 32) : "none",
             isnan(o->an.full_scale_dbu) ? "none" : num_or(o->an.full_scale_dbu, false, a[7], 32));
    return 0;
}

/* The value of key in a head line (up to ';'), into b[n]; false when absent. */
static bool meta_value(const char *meta, const char *key, char *b, size_t n)
{
    const size_t kl = strlen(key);
    for (const char *p = strchr(meta, ';'); p; p = strchr(p + 1, ';')) {
        const char *q = p + 1;
        while (*q == ' ')
            q++;
        if (strncmp(q, key, kl) == 0 && q[kl] == '=') {
            q += kl + 1;
            const size_t len = strcspn(q, ";");
            snprintf(b, n, "%.*s", (int)len, q);
            return true;
        }
    }
    return false;
}

double ml_log_meta_start(const char *meta)
{
    char v[64];
    double t;
    return meta_value(meta, "start_utc", v, sizeof v) && ml_cli_utc(v, &t) ? t : NAN;
}

void ml_log_meta_diff(const ml_logger *L, const char *meta, char *why, size_t n)
{
    why[0] = '\0';
    if (strncmp(meta, ML_LOG_PREFIX " ", strlen(ML_LOG_PREFIX) + 1) != 0
        || strncmp(meta + strlen(ML_LOG_PREFIX) + 1, META_VERSION ";", strlen(META_VERSION) + 1) != 0) {
        snprintf(why, n, "it was written by another version of the log");
        return;
    }
    /* key by key through ours: the first that differs */
    const char *p = strchr(L->meta, ';');
    while (p) {
        const char *q = p + 1;
        while (*q == ' ')
            q++;
        const size_t kl = strcspn(q, "=");
        char key[64], mine[1400], theirs[1400];
        snprintf(key, sizeof key, "%.*s", (int)(kl < 63 ? kl : 63), q);
        meta_value(L->meta, key, mine, sizeof mine);
        if (!meta_value(meta, key, theirs, sizeof theirs))
            snprintf(theirs, sizeof theirs, "(none)");
        if (strcmp(key, "start_utc") != 0 && strcmp(mine, theirs) != 0) {
            snprintf(why, n, "it logs %s=%s, this run %s=%s", key, theirs, key, mine);
            return;
        }
        p = strchr(p + 1, ';');
    }
    if (strcmp(meta, L->meta) != 0 && isnan(ml_log_meta_start(meta)) == isnan(ml_log_meta_start(L->meta)))
        return; /* only the start differs */
    if (strcmp(meta, L->meta) != 0)
        snprintf(why, n, "its first line differs");
}

/* ---- the state ----------------------------------------------------------------------------- */

/* Appends printf text to the snapshot buffer. */
static bool put(ml_logger *L, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static bool put(ml_logger *L, const char *fmt, ...)
{
    for (;;) {
        va_list ap;
        va_start(ap, fmt);
        const int w = vsnprintf(L->snap + L->snap_len, L->snap_cap - L->snap_len, fmt, ap);
        va_end(ap);
        if (w < 0)
            return false;
        if ((size_t)w < L->snap_cap - L->snap_len) {
            L->snap_len += (size_t)w;
            return true;
        }
        const size_t cap = 2 * L->snap_cap + (size_t)w + 1;
        char *nb = realloc(L->snap, cap);
        if (nb == NULL)
            return false;
        L->snap = nb;
        L->snap_cap = cap;
    }
}

/* A line "key v0 v1 ..." of n values. */
static bool put_values(ml_logger *L, const char *key, const double *v, size_t n)
{
    bool ok = put(L, "%s %zu", key, n);
    for (size_t i = 0; ok && i < n; i++)
        ok = put(L, " %.17g", v[i]);
    return ok && put(L, "\n");
}

/* Scratch for the detectors' numbers (L->tmp, grown as needed). */
static double *scratch(ml_logger *L, size_t n)
{
    if (n > L->tmp_n) {
        double *p = realloc(L->tmp, n * sizeof *p);
        if (p == NULL)
            return NULL;
        L->tmp = p;
        L->tmp_n = n;
    }
    return L->tmp;
}

/* Offset of change detector w's value index g (negative: before a restore). */
static double change_offset(const ml_logger *L, int w, int64_t g, bool in_run)
{
    if (g < 0)
        return in_run ? L->chg_old_in[w] : L->chg_old_start[w];
    return ml_log_offset_of(L, ml_log_step_pos(L, g));
}

int ml_log_snapshot(ml_logger *L, bool closed)
{
    if (L->snap == NULL) {
        L->snap_cap = 65536;
        if ((L->snap = malloc(L->snap_cap)) == NULL)
            return ml_cli_error("%s: out of memory", L->name);
    }
    L->snap_len = 0;
    const double off_mi_s = ml_log_offset_of(L, L->mi.start), off_mi_e = ml_log_offset_of(L, L->mi.end);
    bool ok = put(L, "%s\nmeta %s\nclosed %d\npos %" PRId64 "\norigin %" PRId64 "\noffset0 %.17g\n", STATE_TAG,
                  L->meta, closed, L->pos, closed ? L->pos : L->origin, L->offset0_s)
              && put(L, "period %" PRId64 "\nevents_size %" PRIu64 "\n", L->period, ml_logfile_size(L->events))
              && put(L, "carrier %.17g %.17g\n", L->carrier_hz, L->carrier_amp)
              && put(L, "mains %.17g %d %.17g %.17g\n", L->mains_hz, L->mains_votes, L->mains_vote,
                     L->mains_vote_s)
              && put(L, "mi %ld %.17g %.17g %.17g %.17g\n", L->mi.n, off_mi_s, off_mi_e, L->mi.peak_dbfs,
                     L->mi.rise_db)
              && put(L, "held %zu\n", L->nheld)
              && put(L, "imp_base %.17g\nimp_counted %.17g\n", ml_log_offset_of(L, L->imp_base),
                     L->imp_counted >= 0 ? ml_log_offset_of(L, L->imp_counted) : NAN)
              && put(L, "buzz_peak %.17g %.17g 0\n", L->buzz_peak_dbfs, L->buzz_rise_db)
              && put(L, "hf %.17g %.17g %d\n", L->hf_x1, L->hf_x2, L->hf_prime);
    for (size_t i = 0; ok && i < L->nheld; i++)
        ok = put(L, "h%zu %.17g %.17g %.17g %.17g %ld\n", i, ml_log_offset_of(L, L->held[i].start),
                 ml_log_offset_of(L, L->held[i].end), L->held[i].peak_dbfs, L->held[i].rise_db, L->held[i].n);
    size_t n = ml_impulse_save(L->imp, NULL, 0);
    double *v = scratch(L, n);
    ok = ok && v && put_values(L, "impulse", v, ml_impulse_save(L->imp, v, n));
    n = ml_impulse_save(L->imp_buzz, NULL, 0);
    v = scratch(L, n);
    ok = ok && v && put_values(L, "impulse_buzz", v, ml_impulse_save(L->imp_buzz, v, n));
    for (int w = 0; ok && w < ML_LOG_NCHG; w++) {
        if (L->chg[w] == NULL)
            continue;
        n = ml_change_save(L->chg[w], NULL, 0);
        v = scratch(L, n);
        char key[16];
        snprintf(key, sizeof key, "change%d", w);
        ok = v && put_values(L, key, v, ml_change_save(L->chg[w], v, n));
        /* the open change's start and in-run as offsets (a live log resumes them at new indices) */
        int64_t g0 = 0, gi = 0;
        bool in_run = false;
        const bool open = ml_change_get_open(L->chg[w], &g0, &in_run, &gi);
        ok = ok && put(L, "change%d_at %.17g %.17g %.17g\n", w, L->chg_peak[w],
                       open ? change_offset(L, w, g0, false) : NAN,
                       open && in_run ? change_offset(L, w, gi, true) : NAN);
    }
    if (ok && L->buzz) {
        n = ml_buzz_save(L->buzz, NULL, 0);
        v = scratch(L, n);
        ok = v && put_values(L, "buzz", v, ml_buzz_save(L->buzz, v, n));
    }
    double aw[ML_AWEIGHT_STATE];
    ml_aweight_get_state(L->aw, aw);
    ok = ok && put_values(L, "aweight", aw, ML_AWEIGHT_STATE) && put(L, "end\n");
    if (!ok)
        return ml_cli_error("%s: out of memory", L->name);
    L->snap_row_end = L->pos;
    return 0;
}

/* What lies at the state's path: 0 when nothing, or a regular file (not a link) whose first line
 * is STATE_TAG (its device and inode into *dev, *ino); else why not, into why[n], and -1. */
static int state_file_ok(const char *path, dev_t *dev, ino_t *ino, char *why, size_t n)
{
    struct stat sb;
    *dev = 0;
    *ino = 0;
    if (lstat(path, &sb) != 0) {
        if (errno == ENOENT)
            return 0;
        snprintf(why, n, "cannot inspect the log's state file: %s", strerror(errno));
        return -1;
    }
    if (S_ISLNK(sb.st_mode)) {
        snprintf(why, n, "the log's state file is a symbolic link (the state is never written through a link)");
        return -1;
    }
    if (!S_ISREG(sb.st_mode)) {
        snprintf(why, n, "the log's state file is not a regular file");
        return -1;
    }
    const int fd = open(path, O_RDONLY | O_NOFOLLOW | O_NOCTTY | O_CLOEXEC | O_NONBLOCK);
    char head[sizeof STATE_TAG + 1];
    ssize_t got = -1;
    struct stat fb;
    if (fd >= 0 && fstat(fd, &fb) == 0 && fb.st_dev == sb.st_dev && fb.st_ino == sb.st_ino)
        got = read(fd, head, sizeof head);
    if (fd >= 0)
        close(fd);
    if (got < 0) {
        snprintf(why, n, "the log's state file cannot be read: %s", strerror(errno));
        return -1;
    }
    if ((size_t)got != sizeof head || memcmp(head, STATE_TAG "\n", sizeof STATE_TAG) != 0) {
        snprintf(why, n, "holds something other than a modlens log state (its first line is not '%s')", STATE_TAG);
        return -1;
    }
    *dev = sb.st_dev;
    *ino = sb.st_ino;
    return 0;
}

int ml_log_check_state(ml_logger *L)
{
    char why[300];
    if (state_file_ok(L->state_path, &L->state_dev, &L->state_ino, why, sizeof why) != 0)
        return ml_cli_error("%s: %s; nothing was changed: remove it or choose another --out", L->state_path, why);
    return 0;
}

/* The folder of path and its file name: dir[n] ("." when none), *base into path. */
static void split_path(const char *path, char *dir, size_t n, const char **base)
{
    const char *slash = strrchr(path, '/');
    if (slash == NULL) {
        snprintf(dir, n, ".");
        *base = path;
    } else {
        snprintf(dir, n, "%.*s", slash == path ? 1 : (int)(slash - path), path);
        *base = slash + 1;
    }
}

/* The snapshot into a new temporary beside the state (mkstemp: never an existing file, never
 * through a link), synced, then renamed over the state's name: a rename replaces the name itself,
 * so a link put there meanwhile is replaced, never followed. Before the rename the name must
 * still hold nothing, the state this run wrote or checked, or a modlens state. 0 or -1 (why[n]). */
static int write_state(ml_logger *L, char *why, size_t n)
{
    const size_t plen = strlen(L->state_path);
    char *dir = malloc(plen + 2), *tmp = malloc(plen + 16);
    const char *base;
    int rc = -1, fd = -1;
    if (tmp)
        tmp[0] = '\0';
    if (dir == NULL || tmp == NULL) {
        snprintf(why, n, "out of memory");
        goto out;
    }
    split_path(L->state_path, dir, plen + 2, &base);
    /* "<dir>/.<name cut to 200 bytes>.XXXXXX": a hidden name that fits any file system */
    snprintf(tmp, plen + 16, "%s/.%.200s.XXXXXX", dir, base);
    if ((fd = mkstemp(tmp)) < 0) {
        tmp[0] = '\0';
        snprintf(why, n, "cannot create a temporary beside it: %s", strerror(errno));
        goto out;
    }
    const mode_t mask = umask(0);
    umask(mask);
    size_t done = 0;
    while (done < L->snap_len) {
        const ssize_t w = write(fd, L->snap + done, L->snap_len - done);
        if (w < 0 && errno == EINTR)
            continue;
        if (w <= 0) {
            snprintf(why, n, "cannot write: %s", w < 0 ? strerror(errno) : "nothing written");
            goto out;
        }
        done += (size_t)w;
    }
    if (fchmod(fd, 0666 & ~mask) != 0 || fsync(fd) != 0) {
        snprintf(why, n, "cannot write: %s", strerror(errno));
        goto out;
    }
    struct stat tb;
    if (fstat(fd, &tb) != 0) {
        snprintf(why, n, "cannot write: %s", strerror(errno));
        goto out;
    }
    close(fd);
    fd = -1;
    dev_t dev;
    ino_t ino;
    struct stat sb;
    const bool ours = lstat(L->state_path, &sb) == 0 && S_ISREG(sb.st_mode) && L->state_ino != 0
                      && sb.st_dev == L->state_dev && sb.st_ino == L->state_ino;
    if (!ours && state_file_ok(L->state_path, &dev, &ino, why, n) != 0)
        goto out; /* something else was put there while the log ran */
    if (rename(tmp, L->state_path) != 0) {
        snprintf(why, n, "cannot replace it: %s", strerror(errno));
        goto out;
    }
    tmp[0] = '\0';
    L->state_dev = tb.st_dev;
    L->state_ino = tb.st_ino;
    const int dfd = open(dir, O_RDONLY | O_DIRECTORY | O_CLOEXEC);
    if (dfd >= 0) { /* the rename made durable (best effort: some file systems refuse) */
        fsync(dfd);
        close(dfd);
    }
    rc = 0;
out:
    if (fd >= 0)
        close(fd);
    if (tmp && tmp[0] && rc != 0)
        unlink(tmp);
    free(dir);
    free(tmp);
    return rc;
}

int ml_log_save_state(ml_logger *L)
{
    if (L->snap == NULL || L->snap_len == 0)
        return 0;
    char err[512] = "";
    const int rc = write_state(L, err, sizeof err);
    L->snap_len = 0;
    struct timespec now;
    clock_gettime(CLOCK_MONOTONIC, &now);
    L->state_wall = (double)now.tv_sec + 1e-9 * (double)now.tv_nsec;
    if (rc != 0) {
        L->wrote_error = true;
        return ml_cli_error("%s: %s", L->state_path, err);
    }
    return 0;
}

/* ---- reading it back ------------------------------------------------------------------------- */

typedef struct {
    char *line[64]; /* key lines, in L->state_text */
    size_t nlines;
} state_file;

static const char *find(const state_file *s, const char *key)
{
    const size_t kl = strlen(key);
    for (size_t i = 0; i < s->nlines; i++)
        if (strncmp(s->line[i], key, kl) == 0 && s->line[i][kl] == ' ')
            return s->line[i] + kl + 1;
    return NULL;
}

/* Exactly n numbers after key into v[n]. */
static bool numbers(const state_file *s, const char *key, double *v, size_t n)
{
    const char *p = find(s, key);
    if (p == NULL)
        return false;
    for (size_t i = 0; i < n; i++) {
        char *end;
        v[i] = strtod(p, &end);
        if (end == p)
            return false;
        p = end;
    }
    while (*p == ' ')
        p++;
    return *p == '\0';
}

/* A counted list "key N v..." into scratch; *n its length. */
static double *counted(ml_logger *L, const state_file *s, const char *key, size_t *n)
{
    const char *p = find(s, key);
    char *end;
    if (p == NULL)
        return NULL;
    const double c = strtod(p, &end);
    if (end == p || !(c >= 0 && c <= (double)(1 << 25)) || c != floor(c))
        return NULL;
    double *v = scratch(L, (size_t)c + 1);
    if (v == NULL)
        return NULL;
    p = end;
    for (size_t i = 0; i < (size_t)c; i++) {
        v[i] = strtod(p, &end);
        if (end == p)
            return NULL;
        p = end;
    }
    while (*p == ' ')
        p++;
    if (*p != '\0')
        return NULL;
    *n = (size_t)c;
    return v;
}

/* Splits text (NUL-terminated, modified) into lines; false when it is not whole. */
static bool split(char *text, state_file *s)
{
    memset(s, 0, sizeof *s);
    for (char *p = text; p && *p && s->nlines < 64;) {
        char *e = strchr(p, '\n');
        if (e == NULL)
            break; /* an incomplete line: the file is not whole */
        *e = '\0';
        s->line[s->nlines++] = p;
        p = e + 1;
    }
    return s->nlines >= 2 && strcmp(s->line[0], STATE_TAG) == 0 && strcmp(s->line[s->nlines - 1], "end") == 0;
}

/* Reads the state file into L->state_text; false when absent or unreadable (why says so, "" absent). */
static bool read_state(ml_logger *L, char *why, size_t n)
{
    FILE *f = fopen(L->state_path, "rb");
    if (f == NULL) {
        if (errno != ENOENT)
            snprintf(why, n, "the saved state cannot be read (%s)", strerror(errno));
        return false;
    }
    size_t cap = 0, len = 0, got;
    char b[65536];
    free(L->state_text);
    L->state_text = NULL;
    while ((got = fread(b, 1, sizeof b, f)) > 0) {
        if (len + got + 1 > cap) {
            cap = 2 * (len + got + 1);
            char *t = cap <= ((size_t)64 << 20) ? realloc(L->state_text, cap) : NULL;
            if (t == NULL) {
                fclose(f);
                snprintf(why, n, "the saved state is too large");
                return false;
            }
            L->state_text = t;
        }
        memcpy(L->state_text + len, b, got);
        len += got;
    }
    fclose(f);
    if (L->state_text == NULL) {
        snprintf(why, n, "the saved state is empty");
        return false;
    }
    L->state_text[len] = '\0';
    return true;
}

/* The events the killed run wrote after the state (in the state's events file from its size on,
 * and in a later period's file): read back into L->seen, so that they are not written twice. */
static void read_seen(ml_logger *L, int64_t period, double size)
{
    char *paths[2] = {ml_log_events_path(L, period), ml_log_events_path(L, L->period)};
    for (int i = 0; i < 2; i++) {
        if (paths[i] == NULL || (i == 1 && paths[0] && strcmp(paths[0], paths[1]) == 0))
            continue;
        FILE *f = fopen(paths[i], "rb");
        if (f && i == 0 && fseeko(f, (off_t)size, SEEK_SET) != 0) {
            fclose(f);
            f = NULL;
        }
        char *line = malloc(ML_LOGFILE_LINE_MAX + 2), kind[32], start[24];
        int skip = i == 0 ? 0 : 2; /* the head of a later file */
        while (f && line && fgets(line, ML_LOGFILE_LINE_MAX + 2, f)) {
            if (skip > 0) {
                skip--;
                continue;
            }
            if (strchr(line, '\n') == NULL || !ml_csv_get_field(line, 4, kind, sizeof kind)
                || !ml_csv_get_field(line, 2, start, sizeof start))
                continue;
            int k = -1;
            for (int j = 0; j < ML_LOG_KINDS; j++)
                if (strcmp(kind, ml_log_kind_name[j]) == 0)
                    k = j;
            ml_log_seen *ns = k >= 0 ? realloc(L->seen, (L->nseen + 1) * sizeof *ns) : NULL;
            if (ns) {
                L->seen = ns;
                L->seen[L->nseen].kind = k;
                snprintf(L->seen[L->nseen].start, sizeof L->seen[L->nseen].start, "%s", start);
                L->nseen++;
            }
        }
        free(line);
        if (f)
            fclose(f);
    }
    free(paths[0]);
    free(paths[1]);
}

static int load(ml_logger *L, int64_t *pos_out, int64_t *origin_out, char *why, size_t n);

int ml_log_load_state(ml_logger *L, int64_t *pos_out, int64_t *origin_out, char *why, size_t n)
{
    why[0] = '\0';
    if (!read_state(L, why, n))
        return 0;
    int rc = load(L, pos_out, origin_out, why, n);
    if (rc != 1) {
        free(L->state_text);
        L->state_text = NULL;
    }
    return rc;
}

/* The state's grid, carrier and mains from a copy of L->state_text (the detectors take the text
 * itself later). 1 when usable. */
static int load(ml_logger *L, int64_t *pos_out, int64_t *origin_out, char *why, size_t n)
{
    char *copy = strdup(L->state_text);
    state_file s;
    const char *m = NULL;
    if (copy == NULL || !split(copy, &s) || (m = find(&s, "meta")) == NULL) {
        snprintf(why, n, "the saved state is not complete");
        free(copy);
        return 0;
    }
    if (strcmp(m, L->meta) != 0) {
        snprintf(why, n, "the saved state belongs to another log");
        free(copy);
        return 0;
    }
    double c[1], pos[1], origin[1], off0[1], period[1], evsize[1], car[2], mains[4];
    bool ok = numbers(&s, "closed", c, 1) && numbers(&s, "pos", pos, 1) && numbers(&s, "origin", origin, 1)
              && numbers(&s, "offset0", off0, 1) && numbers(&s, "period", period, 1)
              && numbers(&s, "events_size", evsize, 1) && numbers(&s, "carrier", car, 2)
              && numbers(&s, "mains", mains, 4);
    ok = ok && pos[0] >= 0 && pos[0] <= 9e15 && pos[0] == floor(pos[0]) && origin[0] >= 0 && origin[0] <= pos[0]
         && origin[0] == floor(origin[0]) && evsize[0] >= 0 && evsize[0] <= 9e15 && fabs(period[0]) <= 9e15
         && (mains[0] == 0 || mains[0] == 50 || mains[0] == 60) && isfinite(off0[0]) && off0[0] >= 0;
    free(copy);
    if (!ok) {
        snprintf(why, n, "the saved state is damaged");
        return 0;
    }
    const bool closed = c[0] != 0, live = L->o->in.live;
    if (isfinite(car[0]) && car[1] > 0 && isnan(L->carrier_hz)) {
        L->carrier_hz = car[0]; /* the listener and the analysis are made with it later */
        L->carrier_amp = car[1];
    }
    if (!L->mains_given) {
        L->mains_hz = mains[0];
        L->mains_votes = (int)fmax(0, fmin(mains[1], 1e6));
        L->mains_vote = mains[2];
        L->mains_vote_s = mains[3];
    }
    L->state_closed = closed;
    *pos_out = (int64_t)pos[0];
    *origin_out = closed ? (int64_t)pos[0] : (int64_t)origin[0];
    if (!live) {
        L->offset0_s = off0[0];
        read_seen(L, (int64_t)period[0], evsize[0]);
    }
    return 1;
}

/* The merged impulse events held and open: "held N" then N lines "h<i> start end peak rise n". */
static bool restore_impulses(ml_logger *L, const state_file *s)
{
    double mi[5], nh[1];
    if (!numbers(s, "mi", mi, 5) || !numbers(s, "held", nh, 1) || !(mi[0] >= 0) || !(nh[0] >= 0)
        || nh[0] > (double)(sizeof L->held / sizeof *L->held) || nh[0] != floor(nh[0]))
        return false;
    L->mi = (ml_log_impulses){ml_log_pos_of(L, mi[1]), ml_log_pos_of(L, mi[2]), mi[3], mi[4], (long)mi[0]};
    L->nheld = 0;
    for (size_t i = 0; i < (size_t)nh[0]; i++) {
        char key[32];
        double h[5];
        snprintf(key, sizeof key, "h%zu", i);
        if (!numbers(s, key, h, 5) || !(h[4] >= 1))
            return false;
        L->held[L->nheld++] = (ml_log_impulses){ml_log_pos_of(L, h[0]), ml_log_pos_of(L, h[1]), h[2], h[3], (long)h[4]};
    }
    return true;
}

int ml_log_restore_state(ml_logger *L)
{
    if (L->state_text == NULL)
        return 0;
    state_file s;
    split(L->state_text, &s); /* checked when it was read */
    const bool live = L->o->in.live, closed = L->state_closed;
    /* a file continues exactly (its impulses on the audio itself); the envelope's demodulator and a
     * live input start afresh, keeping the floor */
    const bool continuous = !live, exact = continuous && L->lam == NULL, rebase = live || closed;
    size_t n;
    double *v = counted(L, &s, "impulse", &n);
    bool ok = v && ml_impulse_restore(L->imp, v, n, exact) == ML_OK;
    v = ok ? counted(L, &s, "impulse_buzz", &n) : NULL;
    ok = ok && v && ml_impulse_restore(L->imp_buzz, v, n, exact) == ML_OK;
    for (int w = 0; ok && w < ML_LOG_NCHG; w++) {
        if (L->chg[w] == NULL)
            continue;
        char key[24];
        double at[3];
        snprintf(key, sizeof key, "change%d_at", w);
        ok = numbers(&s, key, at, 3);
        snprintf(key, sizeof key, "change%d", w);
        v = ok ? counted(L, &s, key, &n) : NULL;
        ok = v && ml_change_restore(L->chg[w], v, n, rebase) == ML_OK;
        /* after a rebase the open change's start (and its in-run) lie before index 0: their offsets */
        L->chg_peak[w] = at[0];
        L->chg_old_start[w] = rebase ? at[1] : NAN;
        L->chg_old_in[w] = rebase ? at[2] : NAN;
    }
    v = ok ? counted(L, &s, "buzz", &n) : NULL;
    ok = ok && v && ml_buzz_restore(L->buzz, v, n) == ML_OK;
    /* a stop closed the buzz with the impulses it held: they are counted; the run goes on with
     * the impulses after the stop alone (restored, the detector would count them again in a new
     * buzz starting before the stop) */
    if (ok && closed)
        ml_buzz_reset(L->buzz);
    double aw[ML_AWEIGHT_STATE + 1], base[1], cnt[1], bz[3], hf[3];
    ok = ok && numbers(&s, "aweight", aw, ML_AWEIGHT_STATE + 1) && numbers(&s, "imp_base", base, 1)
         && numbers(&s, "imp_counted", cnt, 1) && numbers(&s, "buzz_peak", bz, 3) && numbers(&s, "hf", hf, 3)
         && isfinite(base[0]) && isfinite(hf[0]) && isfinite(hf[1]) && hf[2] >= 0 && hf[2] <= 2;
    if (ok && continuous)
        ok = ml_aweight_set_state(L->aw, aw + 1) == ML_OK && restore_impulses(L, &s);
    if (ok && exact) {
        L->hf_x1 = hf[0];
        L->hf_x2 = hf[1];
        L->hf_prime = (int)hf[2];
        L->imp_base = ml_log_pos_of(L, base[0]);
        L->imp_counted = isnan(cnt[0]) ? -1 : ml_log_pos_of(L, cnt[0]);
    }
    if (ok && continuous) {
        L->buzz_peak_dbfs = bz[0];
        L->buzz_rise_db = bz[1];
    }
    free(L->state_text);
    L->state_text = NULL;
    if (!ok) {
        /* a state that passed its checks but does not fit the detectors: start them afresh */
        for (int w = 0; w < ML_LOG_NCHG; w++) {
            ml_change_reset(L->chg[w]);
            L->chg_peak[w] = L->chg_old_start[w] = L->chg_old_in[w] = NAN;
        }
        ml_impulse_reset(L->imp);
        ml_impulse_reset(L->imp_buzz);
        ml_buzz_reset(L->buzz);
        L->mi.n = 0;
        L->nheld = 0;
        snprintf(L->resume_note, sizeof L->resume_note, "detectors started afresh (the saved state does not fit)");
    }
    return 0;
}
