/* Text for ml_status codes.
 * SPDX-License-Identifier: MIT
 */
#include "dsp/status.h"

#include <stddef.h>

static const char *const messages[ML_STATUS_COUNT] = {
    [ML_OK] = "success",
    [ML_EINVAL] = "invalid argument",
    [ML_ENOMEM] = "out of memory",
    [ML_EFFT] = "FFT planning failed",
    [ML_EIO] = "input/output error",
    [ML_EFORMAT] = "not a readable audio file",
    [ML_EDEVICE] = "audio device error",
    [ML_ENOSIGNAL] = "no usable signal",
    [ML_ERANGE] = "sample value is not finite (NaN or infinity)",
};

const char *ml_strerror(ml_status s)
{
    if ((unsigned)s >= ML_STATUS_COUNT || messages[s] == NULL)
        return "unknown status";
    return messages[s];
}
