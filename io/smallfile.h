/* Small text files read whole or line by line (settings, limits profiles, card profiles,
 * calibrations): the checks they share before a byte is read, and the "key = value" line.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_IO_SMALLFILE_H
#define ML_IO_SMALLFILE_H

#include <stdbool.h>
#include <stddef.h>

#include "dsp/status.h"

/* Opens path to read a small file of the kind `what` ("settings file", "limits profile" ...). It
 * must be a regular file (a FIFO or a device could block forever; the open itself does not block)
 * of at most max_bytes, which max_text says in words ("1 MiB"). On success *fd is open (blocking)
 * and *size is the file's size; otherwise *fd is -1 and err[errlen] (when given) holds the
 * problem: "is a directory, not a <what>", "not a regular file", "larger than <max_text>: not a
 * <what>" (ML_EFORMAT), or the system's reason (ML_EIO). With missing_ok, a path that does not
 * exist (ENOENT, ENOTDIR) is ML_OK with *fd -1 and err untouched. */
ml_status ml_smallfile_open(const char *path, const char *what, size_t max_bytes, const char *max_text,
                            bool missing_ok, int *fd, size_t *size, char *err, size_t errlen);

/* Reads up to size bytes of fd into a new buffer (*data, with a NUL after the *got bytes read; a
 * read error ends it early) and closes fd. ML_ENOMEM when there is no memory (*data NULL). */
ml_status ml_smallfile_read(int fd, size_t size, char **data, size_t *got);

/* s trimmed in place of blanks (space, tab) and line ends ('\r', '\n') at both ends; returns
 * where it now starts. */
char *ml_smallfile_trim(char *s);
/* A line of a "key = value" file trimmed (ml_smallfile_trim; on the first line a UTF-8 byte order
 * mark is skipped too), or NULL for a blank line or a comment (starting with ';' or '#'). */
char *ml_smallfile_line(char *line, bool first_line);

/* Splits a "key = value" line in place (line trimmed of blanks at both ends before): line becomes
 * the key, the value is returned, both without blanks (space, tab) or line ends around them; the
 * value ends before a ';' that starts it or follows a blank (an inline comment). NULL, line
 * untouched, when there is no '=' or it comes first. */
char *ml_smallfile_key_value(char *line);

#endif
