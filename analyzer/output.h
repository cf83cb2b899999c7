/* Forwarding header: the safe-output module lives in io/output.h (one module for every writer;
 * io's writers use it too). New code includes io/output.h.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_ANALYZER_OUTPUT_H
#define ML_ANALYZER_OUTPUT_H

#include "io/output.h"

#endif
