/* libFuzzer target: the saved-result reader (io/result_read.h) on arbitrary bytes, then, for a
 * report it accepts, the rest of the way compare reads it: the registry's type and range check
 * (analyzer/saved.h) and the conversion into the report model (io/report_read.c, through a file
 * in memory so that the real open-and-read path runs). Under UBSan every number conversion on
 * that way (counts, frame numbers, channels, block counts) is checked for overflow.
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

#include "analyzer/saved.h"
#include "io/result_read.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static void read_back(const uint8_t *data, size_t size)
{
    static ml_report rep;
    int fd = memfd_create("report", 0);
    if (fd < 0)
        return;
    if (size > 0 && write(fd, data, size) != (ssize_t)size) {
        close(fd);
        return;
    }
    char path[64], err[512];
    snprintf(path, sizeof path, "/proc/self/fd/%d", fd);
    ml_status st = ml_saved_read(path, &rep, err, sizeof err);
    close(fd);
    if (st == ML_OK) {
        /* what the comparison then computes with is in range */
        if (rep.channels < 1 || rep.frames < 0 || !(rep.sample_rate_hz > 0) || rep.nmetrics > ML_REPORT_MAX_METRICS)
            abort();
        for (size_t i = 0; i < rep.nmetrics; i++) {
            const ml_metric *m = &rep.metrics[i];
            if (m->valid && !(fabs(m->value) <= ML_RESULT_MAX_MAGNITUDE))
                abort();
            if (m->has_u && !(m->u >= 0 && m->u <= ML_RESULT_MAX_MAGNITUDE))
                abort();
        }
    } else if (err[0] == '\0' || strchr(err, '\n') != NULL) {
        abort();
    }
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    ml_result *r = NULL;
    char err[256];
    ml_status st = ml_result_parse((const char *)data, size, &r, err, sizeof err);
    if (st == ML_OK) {
        /* every listed item is well formed: a name, a finite number in range when it is one */
        for (size_t i = 0; i < ml_result_count(r); i++) {
            const ml_result_item *it = ml_result_item_at(r, i);
            if (it == NULL || it->name[0] == '\0' || ml_result_find(r, it->name) == NULL
                || (it->type == ML_RESULT_NUMBER && !(fabs(it->value) <= ML_RESULT_MAX_MAGNITUDE)))
                abort();
        }
        ml_result_destroy(r);
        read_back(data, size);
    } else if (r != NULL || err[0] == '\0' || memchr(err, '\n', strlen(err)) != NULL) {
        abort(); /* a failure leaves no result and gives one line of reason */
    }
    return 0;
}
