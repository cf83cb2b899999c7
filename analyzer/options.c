/* The option groups' defaults.
 * SPDX-License-Identifier: MIT
 */
#include "analyzer/options.h"

#include <math.h>

ml_input_opts ml_input_opts_default(void)
{
    return (ml_input_opts){.seconds = 5.0, .kind = ML_KIND_AUTO, .channel = 1, .duration_s = -1};
}

ml_analysis_opts ml_analysis_opts_default(void)
{
    return (ml_analysis_opts){.audio = ml_audio_config_default(), .window = ML_WINDOW_HFT248D, .carrier_hz = NAN,
                              .peak_hold_ms = 5.0};
}

ml_output_opts ml_output_opts_default(void)
{
    return (ml_output_opts){.format = ML_FORMAT_TEXT};
}
