/* Private to io/: the source vtable that each back end fills in, and the message helper.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_IO_INTERNAL_H
#define ML_IO_INTERNAL_H

#include "io/source.h"

typedef struct {
    ml_status (*read)(ml_source *s, float *buf, size_t nframes, size_t *got);
    ml_status (*seek)(ml_source *s, int64_t frame);
    uint64_t (*lost)(const ml_source *s);
    void (*close)(ml_source *s);
} ml_source_ops;

struct ml_source {
    const ml_source_ops *ops;
    ml_source_info info;
    char detail[256];
    void *impl;
};

/* vsnprintf into a caller's optional message buffer buf[len] (NULL or 0: nothing to say). */
void ml_say(char *buf, size_t len, const char *fmt, ...) __attribute__((format(printf, 3, 4)));

#endif
