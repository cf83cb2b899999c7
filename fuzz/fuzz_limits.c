/* libFuzzer target: the limits-profile parser (analyzer/limits.h) on arbitrary bytes, given to it
 * as a file in memory (memfd) so that the real open-and-read path runs.
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

#include "analyzer/limits.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static ml_limits lim;
    int fd = memfd_create("profile", 0);
    if (fd < 0)
        return 0;
    if (size > 0 && write(fd, data, size) != (ssize_t)size) {
        close(fd);
        return 0;
    }
    char path[64], err[512];
    snprintf(path, sizeof path, "/proc/self/fd/%d", fd);
    ml_status st = ml_limits_load(path, &lim, err, sizeof err);
    close(fd);
    if (st == ML_OK) {
        /* an accepted profile holds only finite, ordered limits */
        for (size_t i = 0; i < lim.n; i++) {
            const ml_limit *l = &lim.items[i];
            if ((l->has_min && !isfinite(l->min)) || (l->has_max && !isfinite(l->max))
                || (l->has_min && l->has_max && l->min > l->max) || l->metric[0] == '\0')
                abort();
        }
    } else if (err[0] == '\0' || strchr(err, '\n') != NULL) {
        abort();
    }
    return 0;
}
