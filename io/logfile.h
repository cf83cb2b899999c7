/* Append-only line files for long logs (CSV rows and events) that survive being killed, with an
 * exclusive lock so that two logs never write the same file.
 * SPDX-License-Identifier: MIT
 *
 * A log file starts with its head: one or more complete lines (for the log: a line that says
 * what is logged, then the CSV header). Every later line goes to the file in one write(2) of the
 * whole line, so a process killed at any moment leaves the file ending either after its last
 * complete line or, at worst, inside one partial line.
 *
 * Two steps, so that a command can look at every file it will write before it writes any:
 *  1. ml_logfile_attach looks at a path without changing anything: a file that exists is opened
 *     for appending and locked (flock, exclusive, not waiting: a second process gets an error),
 *     its first lines, its last complete line and a partial last line are read, and its content
 *     is compared with the head the caller expects (ml_logfile_match).
 *  2. ml_logfile_begin makes it ready: a missing file is created (exclusively: a file that
 *     appeared in between is an error, never replaced) and locked, an empty file (or one holding
 *     only a cut copy of the head, as a kill inside the head's write leaves) gets the head, a
 *     partial last line is cut. A file whose content is not the head (another log, another
 *     program's data, a file without a single line break) is never changed: begin refuses it.
 * The lock is held until ml_logfile_close.
 */
#ifndef ML_IO_LOGFILE_H
#define ML_IO_LOGFILE_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "dsp/status.h"

#define ML_LOGFILE_LINE_MAX 8192 /* longest line, head lines included, without its '\n' */

typedef struct ml_logfile ml_logfile;

/* What a path holds, compared with the expected head. */
typedef enum {
    ML_LOGFILE_ABSENT,  /* no file: begin creates it                                              */
    ML_LOGFILE_EMPTY,   /* empty, or only the first part of the head (a kill inside its write):
                           begin writes the head                                                 */
    ML_LOGFILE_SAME,    /* starts with the head: begin continues after its last complete line     */
    ML_LOGFILE_KIN,     /* a file of the same kind (its first line starts with kind_prefix) whose
                           head differs: another input, other settings or other columns           */
    ML_LOGFILE_FOREIGN, /* anything else: not a file of this kind                                  */
} ml_logfile_match;

/* Looks at path (see step 1). head: the complete head, each line ending in '\n', at most
 * ML_LOGFILE_LINE_MAX bytes a line; kind_prefix: what the first line of every file of this kind
 * starts with. The handle keeps copies of both. ML_OK with *out set; ML_EIO (cannot open, not a
 * regular file, locked by another process, cannot read; err says which, without the path);
 * ML_EINVAL (bad arguments); ML_ENOMEM. Allocates the handle. */
ml_status ml_logfile_attach(const char *path, const char *head, const char *kind_prefix, ml_logfile **out,
                            char *err, size_t err_len);

ml_logfile_match ml_logfile_get_match(const ml_logfile *f);
/* Line i (0-based) of the file as attached, without its '\n' ("" when the file has no such
 * complete line; cut to ML_LOGFILE_LINE_MAX bytes); for messages about a KIN file. */
const char *ml_logfile_line(const ml_logfile *f, int i);
/* SAME: the last complete line after the head ("" when none), as attached. */
const char *ml_logfile_last(const ml_logfile *f);

/* Step 2 (see the header comment). ML_EFORMAT for a KIN or FOREIGN file (nothing changed), ML_EIO
 * (cannot create, lock, cut or write; err says which), ML_EINVAL when already begun. */
ml_status ml_logfile_begin(ml_logfile *f, char *err, size_t err_len);

/* Appends one line (line without '\n'; the '\n' is added) in a single write. ML_EINVAL for NULL,
 * a line longer than ML_LOGFILE_LINE_MAX or a file not begun; ML_EIO on failure. */
ml_status ml_logfile_write_line(ml_logfile *f, const char *line);

/* Bytes in the file (after begin: as written by this handle). */
uint64_t ml_logfile_size(const ml_logfile *f);

/* Closes and unlocks; NULL is a no-op. */
void ml_logfile_close(ml_logfile *f);

/* The path given to attach. */
const char *ml_logfile_path(const ml_logfile *f);

/* Largest number in CSV field `column` (0-based, io/csv.h) of the complete lines after the first
 * skip_lines lines, streamed (any file size, fixed memory). ML_ENOSIGNAL when no line has a
 * number there, ML_EIO when path cannot be read. */
ml_status ml_logfile_max_field(const char *path, int skip_lines, int column, double *max);

#endif
