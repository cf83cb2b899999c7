/* Saved reports read back (compare's A or B given as JSON): the strict reader io/result_read.h,
 * then the metric registry's types and ranges, then the report model.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_ANALYZER_SAVED_H
#define ML_ANALYZER_SAVED_H

#include <stddef.h>

#include "dsp/status.h"
#include "io/report.h"
#include "io/result_read.h"

/* Checks a parsed report against the registry (analyzer/registry.h): every registered metric is
 * a number or null, never text (text there would hide a regression behind "n/a"); a count
 * (unit "" and no decimals: clipped samples, lost frames, events) is a whole number >= 0;
 * every "uncertainty.<metric>" is a number >= 0 or null; every number is one its figure can take:
 * dB, dBFS and dBc figures and ENOB in their reportable range (ml_values_in_range: |dB| <= 290,
 * 0..32 bits), dBu and dBV within 290 dB plus the largest full-scale calibration, figures in %,
 * Hz, ms, V and W and the modulation indices >= 0 (except the signed DC offsets, carrier shift,
 * carrier frequency and offsets), a share of time (overmodulation_pct, carrier_off_pct) <= 100,
 * a frequency at most the input's sample rate. Then the sections its kind always has must be
 * there: a sweep report (one with sweep figures) "sweep"; an audio report "audio" and "hum"; an
 * if or iq report "carrier", "modulation", "audio" and "hum". ML_OK, or ML_EFORMAT with
 * "key 'NAME': VALUE UNIT is impossible: why" or "no \"SECTION\" section: ..." in err[errlen]
 * (names printable, io/printable.h). */
ml_status ml_saved_check(const ml_result *r, char *err, size_t errlen);

/* Reads path as a saved JSON report into rep: ml_result_read_file, ml_saved_check, then
 * ml_report_read_json with the registry's units and decimals. ML_OK, or the status of the step
 * that failed with its reason in err[errlen]. */
ml_status ml_saved_read(const char *path, ml_report *rep, char *err, size_t errlen);

#endif
