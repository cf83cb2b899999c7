/* libFuzzer target: the strict readers of the sound card's files on arbitrary bytes: the card
 * profile and the calibration (io/cardfile.h, given as a file in memory so that the real
 * open-and-read path runs) and the settings file (analyzer/settings.h). The first byte picks the
 * reader. An accepted file must hold only what the readers promise (every number finite and in its
 * documented range); a refused one must say why in one line.
 * SPDX-License-Identifier: MIT
 */
#define _GNU_SOURCE
#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <unistd.h>

#include "analyzer/settings.h"
#include "io/cardfile.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

/* NAN or within lo..hi */
static void range(double v, double lo, double hi)
{
    if (!isnan(v) && !(v >= lo && v <= hi))
        abort();
}

static void check_profile(const ml_card_profile *p)
{
    if (!(p->rate_hz >= ML_CARD_MIN_RATE_HZ && p->rate_hz <= ML_CARD_MAX_RATE_HZ) || p->channels < 1
        || p->channels > ML_CARD_MAX_CHANNELS || p->npoints > ML_CARD_MAX_POINTS)
        abort();
    if (!(p->test_hz > 0 && p->test_hz <= p->rate_hz / 2) || !(p->band_hi_hz > p->band_lo_hz))
        abort();
    range(p->rate_error_ppm, -1e5, 1e5);
    range(p->gain_difference_db, -200, 200);
    for (size_t k = 0; k < p->npoints; k++)
        if (!(p->response_hz[k] > 0 && p->response_hz[k] < p->rate_hz / 2)
            || (k > 0 && !(p->response_hz[k] > p->response_hz[k - 1])))
            abort();
    for (int c = 0; c < p->channels; c++) {
        const ml_card_channel *ch = &p->ch[c];
        range(ch->noise_dbfs, -400, 20);
        range(ch->thd_db, -400, 100);
        range(ch->crosstalk_db, -400, 100);
        for (size_t k = 0; k < p->npoints; k++)
            range(ch->response_db[k], -200, 200);
        /* what a measurement then computes from it stays finite or NAN */
        const double r = ml_card_response_at(p, c, p->npoints ? p->response_hz[0] : 1000.0);
        if (isinf(r))
            abort();
        ml_card_dut d = {-1, -80, -70, 90, 92, -100, -102, -95, -120};
        ml_card_reach reach;
        ml_card_reach_of(p, c, &d, &reach);
        if (isinf(reach.card_thdn_db))
            abort();
    }
}

static int memfile(const uint8_t *data, size_t size, char *path, size_t len)
{
    int fd = memfd_create("card", 0);
    if (fd < 0)
        return -1;
    if (size > 0 && write(fd, data, size) != (ssize_t)size) {
        close(fd);
        return -1;
    }
    snprintf(path, len, "/proc/self/fd/%d", fd);
    return fd;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size == 0)
        return 0;
    const int which = data[0] % 3;
    data++;
    size--;
    char err[512] = "", path[64];
    ml_status st;
    if (which == 2) {
        ml_settings s;
        st = ml_settings_parse((const char *)data, size, "/settings", &s, err, sizeof err);
        if (st == ML_OK && ((!isnan(s.full_scale_dbu) && !(fabs(s.full_scale_dbu) <= 60))
                            || (s.mains_hz != 0 && s.mains_hz != 50 && s.mains_hz != 60)
                            || (s.calibration && !isnan(s.full_scale_dbu))))
            abort();
        ml_settings_free(&s);
    } else {
        const int fd = memfile(data, size, path, sizeof path);
        if (fd < 0)
            return 0;
        if (which == 0) {
            static ml_card_profile p;
            char rec[64];
            st = ml_card_profile_read(path, &p, rec, sizeof rec, err, sizeof err);
            if (st == ML_OK)
                check_profile(&p);
        } else {
            static ml_calibration c;
            st = ml_calibration_read(path, &c, err, sizeof err);
            if (st == ML_OK && (!(fabs(c.cal.full_scale_dbu) <= 60) || !(c.tone_vrms > 0) || c.channel < 1))
                abort();
        }
        close(fd);
    }
    if (st != ML_OK && st != ML_ENOMEM && (err[0] == '\0' || strchr(err, '\n') != NULL))
        abort();
    return 0;
}
