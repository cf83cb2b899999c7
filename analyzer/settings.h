/* The user's settings file: defaults for the capture device, the card profile, the level
 * calibration, the mains frequency and the limits profile.
 * SPDX-License-Identifier: MIT
 *
 * Where: $XDG_CONFIG_HOME/modlens/settings.ini when XDG_CONFIG_HOME is an absolute path, else
 * $HOME/.config/modlens/settings.ini (the XDG base-directory rule); no file there means no
 * settings. `--no-settings` on any command ignores the file.
 *
 * Syntax as limits profiles (analyzer/limits.h): "key = value" lines, comment lines starting with
 * ";" or "#", inline comments after " ;", blanks around keys and values ignored, lines of any
 * length, the file at most 64 KiB; no [sections]. Keys, each at most once:
 *   device = NAME|INDEX        capture device (live, watch, card --device)
 *   output_device = NAME|INDEX playback device (live --play-tone, card --device)
 *   card = FILE                card profile (modlens card --out)
 *   calibration = FILE         level calibration (modlens card --calibrate ... --out)
 *   full_scale_dbu = DB        or the calibration as a number: -60 .. +60 (not with calibration)
 *   mains = 50|60              mains frequency for hum
 *   limits = FILE              limits profile (measure, live, compare, watch)
 * A FILE that is not absolute is taken from the settings file's folder ("~/" is the home folder).
 * Anything else is an error naming the file, the line and the key.
 */
#ifndef ML_ANALYZER_SETTINGS_H
#define ML_ANALYZER_SETTINGS_H

#include <stdbool.h>
#include <stddef.h>

#include "dsp/status.h"

#define ML_SETTINGS_MAX_BYTES 65536

typedef struct {
    char *path;                /* the settings file (allocated), NULL when there is none       */
    char *device, *output_device, *card, *calibration, *limits; /* allocated, NULL: not set    */
    double full_scale_dbu;     /* NAN: not set                                                 */
    double mains_hz;           /* 0: not set                                                   */
} ml_settings;

/* The settings file's path for this environment into a new string (*path NULL when neither
 * variable gives one). ML_ENOMEM. */
ml_status ml_settings_path(char **path);

/* Reads the file at path into *s (every member NULL / NAN / 0 when the file does not exist).
 * ML_EIO (unreadable, not a regular file) or ML_EFORMAT (content) with "line N: key 'k': problem"
 * or the system's reason in err[errlen]; ML_ENOMEM. *s is to be freed with ml_settings_free in
 * every case. */
ml_status ml_settings_read(const char *path, ml_settings *s, char *err, size_t errlen);

/* As read, from a buffer (the fuzzed entry; relative paths against dir). */
ml_status ml_settings_parse(const char *data, size_t len, const char *dir, ml_settings *s, char *err,
                            size_t errlen);

void ml_settings_free(ml_settings *s);

#endif
