/* Card profiles and level calibrations as JSON files: the writers and the strict readers.
 * SPDX-License-Identifier: MIT
 *
 * Card profile (`modlens card --out CARD.json`, dsp/card.h): one JSON object with exactly these
 * members (numbers are JSON numbers; "null" where the profile holds NAN):
 *   "modlens_card_profile": 1 (the format's version, an integer)
 *   "recording": text (the recording or device measured; at most 4095 bytes)
 *   "sample_rate_hz": 8000 .. 768000
 *   "channels": the integer 1 or 2
 *   "test_tone_hz": 0 < f < rate/2;  "test_level_dbfs", "response_level_dbfs": -200 .. 0
 *   "band_lo_hz", "band_hi_hz": 0 <= lo < hi <= rate/2
 *   "rate_error_ppm": null or |x| <= 100000;  "gain_difference_db": null or |x| <= 200
 *   "response_hz": 0 .. 40 frequencies, strictly ascending, each 0 < f < rate/2
 *   "channel": an array of `channels` objects, each with exactly
 *       "level_dbfs", "noise_dbfs", "noise_a_dbfs", "noise_468_dbfs", "hum_dbfs": null or -400 .. 20
 *       "thd_db", "thdn_db", "crosstalk_db": null or -400 .. 100
 *       "thd_bound", "thdn_bound", "crosstalk_bound": "", "upper" or "lower" ("" when the value is null)
 *       "response_db": as many entries as response_hz, each null or -200 .. 200
 * Calibration (`modlens card --calibrate VRMS FILE --out CAL.json`, dsp/levels.h): exactly
 *   "modlens_calibration": 1;  "full_scale_dbu": -60 .. 60 (the dBu of a 0 dBFS sine)
 *   "tone_vrms": 0 < v <= 1000;  "tone_dbfs": -200 .. 20;  "tone_hz": 0 < f <= 1e6
 *   "channel": integer 1 .. 64;  "recording": text (at most 4095 bytes)
 *   and full_scale_dbu must equal 20 lg(tone_vrms / 0.7746 V) - tone_dbfs within 0.01 dB.
 * Anything else -- another member, a member missing or repeated, a wrong type, a number out of
 * range, not JSON, more than 1 MiB -- is refused with one line naming the member
 * ("key 'channel[2].noise_dbfs': -500 is out of range -400..20").
 */
#ifndef ML_IO_CARDFILE_H
#define ML_IO_CARDFILE_H

#include <stddef.h>
#include <stdio.h>

#include "dsp/card.h"
#include "dsp/levels.h"
#include "dsp/status.h"

#define ML_CARDFILE_MAX_BYTES ((size_t)1 << 20)
#define ML_CARDFILE_TEXT_MAX 4096

typedef struct {
    ml_level_cal cal;
    double tone_vrms, tone_dbfs, tone_hz;
    int channel;
    char recording[ML_CARDFILE_TEXT_MAX];
} ml_calibration;

/* Writes p (recording: what was measured, NULL for "") as JSON to f. ML_EIO when f fails,
 * ML_ENOMEM. */
ml_status ml_card_profile_write(FILE *f, const ml_card_profile *p, const char *recording);
/* Parses len bytes (need not be NUL-terminated) into *p. ML_EFORMAT with the reason in
 * err[errlen] (one printable line), ML_ENOMEM, ML_EINVAL for NULL arguments. */
ml_status ml_card_profile_parse(const char *data, size_t len, ml_card_profile *p, char *recording,
                                size_t reclen, char *err, size_t errlen);
/* Reads a file: as parse, plus ML_EIO when it cannot be read (missing, a directory, not a regular
 * file) and ML_EFORMAT when empty or too large. recording may be NULL. */
ml_status ml_card_profile_read(const char *path, ml_card_profile *p, char *recording, size_t reclen,
                               char *err, size_t errlen);

ml_status ml_calibration_write(FILE *f, const ml_calibration *c);
ml_status ml_calibration_parse(const char *data, size_t len, ml_calibration *c, char *err, size_t errlen);
ml_status ml_calibration_read(const char *path, ml_calibration *c, char *err, size_t errlen);

#endif
