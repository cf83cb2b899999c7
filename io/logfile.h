/* Append-only line files for long logs (CSV rows and events) that survive being killed.
 * SPDX-License-Identifier: MIT
 *
 * Every line goes to the file in one write(2) of the whole line, so a process killed at any moment
 * leaves the file ending either after its last complete line or, at worst, inside one partial line.
 * Opening an existing file checks that its first line is the expected header, cuts a trailing
 * partial line (one not ending in '\n') and hands back the last complete line, so a restarted log
 * continues after it without repeating the header. A new (or empty) file gets the header.
 */
#ifndef ML_IO_LOGFILE_H
#define ML_IO_LOGFILE_H

#include <stdbool.h>
#include <stddef.h>

#include "dsp/status.h"

typedef struct ml_logfile ml_logfile;

/* Opens or creates path for appending. header is the first line without '\n'.
 * On success *out is the open file and last[last_len] holds the last complete line after the
 * header without its '\n' ("" when the file holds no such line; a line longer than last_len - 1
 * is cut). ML_EIO: cannot open, read, cut or write (detail in err); ML_EFORMAT: the file exists
 * with a different first line (err says so). Allocates the handle. */
ml_status ml_logfile_open(const char *path, const char *header, ml_logfile **out, char *last, size_t last_len,
                          char *err, size_t err_len);

/* Appends one line (line without '\n'; the '\n' is added) in a single write. ML_EIO on failure. */
ml_status ml_logfile_write_line(ml_logfile *f, const char *line);

/* Closes; NULL is a no-op. */
void ml_logfile_close(ml_logfile *f);

/* The path given to open. */
const char *ml_logfile_path(const ml_logfile *f);

/* Largest number in field `column` (0-based, comma-separated) of the complete lines after the
 * header, streamed (any file size, fixed memory). ML_ENOSIGNAL when no line has a number there,
 * ML_EIO when path cannot be read. */
ml_status ml_logfile_max_field(const char *path, int column, double *max);

/* True when path exists and holds at least one complete line after its header. */
bool ml_logfile_has_rows(const char *path);

#endif
