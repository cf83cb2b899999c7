/* Dispatch of the pull interface to its back ends.
 * SPDX-License-Identifier: MIT
 */
#include <stdlib.h>

#include "io/internal.h"

void ml_source_close(ml_source *s)
{
    if (s == NULL)
        return;
    if (s->ops && s->ops->close)
        s->ops->close(s);
    free(s);
}

const ml_source_info *ml_source_get_info(const ml_source *s)
{
    return s ? &s->info : NULL;
}

ml_status ml_source_seek(ml_source *s, int64_t frame)
{
    if (s == NULL || frame < 0 || s->ops->seek == NULL)
        return ML_EINVAL;
    return s->ops->seek(s, frame);
}

ml_status ml_source_read(ml_source *s, float *buf, size_t nframes, size_t *got)
{
    if (s == NULL || got == NULL || (buf == NULL && nframes > 0))
        return ML_EINVAL;
    *got = 0;
    return s->ops->read(s, buf, nframes, got);
}

const char *ml_source_detail(const ml_source *s)
{
    return s ? s->detail : "";
}

uint64_t ml_source_lost_frames(const ml_source *s)
{
    return (s && s->ops->lost) ? s->ops->lost(s) : 0;
}
