/* Unit test of the log run on a scripted live-like source: unknown length, an overflow (lost
 * frames) and a device that disappears mid-stream; then a restart that continues the offsets.
 * SPDX-License-Identifier: MIT
 *
 * The source is a test double of the live capture built on io's private vtable (io/internal.h).
 */
#include <check.h>

#include "tests/unit/ml_check.h"
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "analyzer/log.h"
#include "io/internal.h"
#include "testsig.h"

#define RATE 16000.0

typedef struct {
    int64_t done;    /* frames delivered */
    uint64_t lost;   /* frames reported lost */
    int64_t lose_at; /* deliver-count at which 4000 frames are lost once */
    int64_t fail_at; /* deliver-count at which reads fail */
    ts_rng rng;
} script;

static ml_status fake_read(ml_source *s, float *buf, size_t n, size_t *got)
{
    script *p = s->impl;
    if (p->done >= p->fail_at) {
        snprintf(s->detail, sizeof s->detail, "device vanished, server gone"); /* a comma, as a sound server says */
        return ML_EIO;
    }
    if (p->lose_at >= 0 && p->done >= p->lose_at) {
        p->lost += 4000; /* 0.25 s lost before this block */
        p->lose_at = -1;
    }
    for (size_t i = 0; i < n; i++)
        buf[i] = (float)(0.1 * sin(2 * TS_PI * 1000.0 * (double)(p->done + (int64_t)i) / RATE)
                         + 1e-3 * ts_gauss(&p->rng));
    p->done += (int64_t)n;
    *got = n;
    return ML_OK;
}

static uint64_t fake_lost(const ml_source *s)
{
    return ((const script *)s->impl)->lost;
}

static const ml_source_ops fake_ops = {fake_read, NULL, fake_lost, NULL};

static ml_source fake(script *p, int64_t lose_at, int64_t fail_at)
{
    *p = (script){.lose_at = lose_at, .fail_at = fail_at, .rng = {9}};
    ml_source s = {.ops = &fake_ops, .impl = p};
    s.info = (ml_source_info){.rate_hz = RATE, .channels = 1, .frames = -1, .bits = 24, .is_float = true};
    snprintf(s.info.format, sizeof s.info.format, "test double");
    return s;
}

static ml_log_opts parse(const char *out)
{
    char *argv[] = {"log", "--device", "fake", "--out", (char *)out, "--interval", "0.5", NULL};
    ml_log_opts o;
    ck_assert_int_eq(ml_log_parse(7, argv, &o), 0);
    return o;
}

/* Reads a whole small text file into a static buffer. */
static const char *slurp(const char *path)
{
    static char b[65536];
    FILE *f = fopen(path, "r");
    ck_assert_ptr_nonnull(f);
    size_t n = fread(b, 1, sizeof b - 1, f);
    b[n] = '\0';
    fclose(f);
    return b;
}

static int count_lines(const char *s)
{
    int n = 0;
    for (; *s; s++)
        n += *s == '\n';
    return n;
}

START_TEST(gap_and_vanishing_device)
{
    char dir[] = "/tmp/modlens-logtest-XXXXXX";
    ck_assert_ptr_nonnull(mkdtemp(dir));
    char out[256], evp[256];
    snprintf(out, sizeof out, "%s/live.csv", dir);
    snprintf(evp, sizeof evp, "%s/live-events.csv", dir);
    setenv("TZ", "UTC", 1); /* the local-time columns read +00:00 */
    ml_log_opts o = parse(out);
    script p;
    /* The log reads blocks of 4096 frames (ML_BLOCK_FRAMES). After 12 blocks (3.072 s) 4000 frames
     * (0.25 s) are lost once; after 24 blocks (6.144 s of data) reads fail: the input spans 6.394 s. */
    ml_source s = fake(&p, 12 * 4096, 24 * 4096);
    ck_assert_int_eq(ml_log_run(&o, &s, 1700000000.0), 1); /* 1: the input failed mid-way */
    const char *rows = slurp(out);
    /* 12 whole 0.5 s rows (0 .. 5.5 s), the partial one from 6.0 s (0.394 s), and the head (what
     * is logged, the header) */
    ck_assert_int_eq(count_lines(rows), 15);
    ck_assert(strncmp(rows, "# modlens log 1; input=device:fake; rate_hz=16000; channels=1; kind=audio;", 74) == 0);
    /* 1700000000 s = 2023-11-14T22:13:20Z (date -u -d @1700000000) */
    ck_assert_ptr_nonnull(strstr(rows, "\n2023-11-14T22:13:20.000Z,2023-11-14T22:13:20.000+00:00,0.000,0.500,"));
    /* the interval 3.0 .. 3.5 s holds the gap: 0.25 s lost, marked */
    const char *r3 = strstr(rows, ",3.000,0.500,");
    ck_assert_ptr_nonnull(r3);
    ck_assert_ptr_nonnull(strstr(r3, ",0.250,"));
    ck_assert(strncmp(strchr(r3, '\n') - 4, ",gap", 4) == 0);
    ck_assert_ptr_nonnull(strstr(rows, ",3.500,0.500,")); /* the grid continues after the gap */
    ck_assert_ptr_nonnull(strstr(rows, ",6.000,0.394,"));
    /* the reason ends the last row, one field: quoted (RFC 4180), since it holds a comma */
    ck_assert_ptr_nonnull(strstr(rows, ",\"input failed: input/output error: device vanished, server gone\"\n"));
    const char *ev = slurp(evp);
    ck_assert_ptr_nonnull(strstr(ev, ",3.072,3.322,gap,,,,4000 frames lost (input overflow)\n"));
    ck_assert_ptr_nonnull(strstr(ev, ",6.394,6.394,input-end,,,,\"input failed"));

    /* a restart 100 s after the first start continues the offsets from there */
    ml_source s2 = fake(&p, -1, 4 * 4096); /* 1.024 s: rows at 100.0, 100.5 and 101.0 (partial) */
    ck_assert_int_eq(ml_log_run(&o, &s2, 1700000100.0), 1);
    rows = slurp(out);
    ck_assert_int_eq(count_lines(rows), 18);
    ck_assert_ptr_nonnull(strstr(rows, "\n2023-11-14T22:15:00.000Z,2023-11-14T22:15:00.000+00:00,100.000,0.500,"));
    ck_assert_ptr_nonnull(strstr(rows, "\n2023-11-14T22:15:00.500Z,2023-11-14T22:15:00.500+00:00,100.500,0.500,"));
    unlink(out);
    unlink(evp);
    rmdir(dir);
}
END_TEST

int main(void)
{
    Suite *su = suite_create("analyzer_log");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, gap_and_vanishing_device);
    suite_add_tcase(su, tc);
    return ml_check_run(su);
}
