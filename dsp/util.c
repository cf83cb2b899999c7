/* Small numeric helpers shared inside dsp/.
 * SPDX-License-Identifier: MIT
 */
#include <math.h>

#include "dsp/internal.h"

double ml_db10(double x)
{
    return x > 1e-300 ? 10.0 * log10(x) : -3000.0;
}
