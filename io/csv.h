/* CSV fields as RFC 4180 has them, for the log's line files (io/logfile.h) and their readers.
 * SPDX-License-Identifier: MIT
 *
 * Writing: a field is enclosed in double quotes when it holds a comma, a double quote, a
 * carriage return or a line feed, or begins or ends with a space; a double quote inside is
 * doubled. The log's files are read line by line, so a field never holds a line break: carriage
 * returns and line feeds (and the other C0 control bytes) become spaces before quoting.
 * Reading: fields are separated by commas; a field that begins with a double quote runs to the
 * matching closing quote ("" inside is one quote) and the closing quote must be followed by a
 * comma or the end of the line. The line's end is its NUL, '\n' or "\r\n".
 */
#ifndef ML_IO_CSV_H
#define ML_IO_CSV_H

#include <stdbool.h>
#include <stddef.h>

/* Appends field s (NULL reads as "") to b[n] at *k, quoted as needed, preceded by a comma unless
 * *k is 0; *k advances by what was written. Returns false, leaving b[*k] unchanged and
 * NUL-terminated, when the field does not fit (b[n] must hold it and the NUL). */
bool ml_csv_append(char *b, size_t n, size_t *k, const char *s);

/* Field i (0-based) of line, unquoted, into out[n] (NUL-terminated, cut to n - 1 bytes). False
 * when the line has fewer fields or is not valid CSV up to that field (an unclosed quote, a
 * character after a closing quote). */
bool ml_csv_get_field(const char *line, int i, char *out, size_t n);

/* Index of the field whose text is name in a header line; -1 when there is none. */
int ml_csv_column(const char *header, const char *name);

/* Number of fields of line, or -1 when it is not valid CSV. */
int ml_csv_count(const char *line);

#endif
