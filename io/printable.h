/* Printable text: names from the outside world (file names, limits keys and values, device
 * names, report fields) made safe to print on one terminal line or in a report header.
 * SPDX-License-Identifier: MIT
 *
 * What is escaped (everything else is copied unchanged, so a valid UTF-8 name prints as given):
 *  - the C0 control bytes 0x00-0x1f and DEL 0x7f: "\t", "\n", "\r" and "\xNN" for the others
 *    (an ESC byte can no longer start a terminal escape sequence, a newline no longer splits
 *    one error line into two);
 *  - bytes that are not part of a valid UTF-8 sequence (overlong forms, surrogates, values
 *    above U+10FFFF, stray continuation bytes, cut sequences): "\xNN" per byte;
 *  - the C1 controls U+0080-U+009F (U+009B is a one-character escape introducer on some
 *    terminals), the line and paragraph separators U+2028/U+2029 and the bidirectional
 *    embedding, override and isolate controls U+200E/U+200F, U+202A-U+202E, U+2066-U+2069
 *    (they reorder how the rest of the line is displayed): "\uXXXX".
 * A backslash is copied as it is. The result is ASCII-printable plus valid, visible UTF-8.
 */
#ifndef ML_IO_PRINTABLE_H
#define ML_IO_PRINTABLE_H

#include <stdbool.h>
#include <stddef.h>

/* Writes the printable form of src (NUL-terminated; NULL reads as "") into dst[dstlen], always
 * NUL-terminated when dstlen > 0, and returns the length the whole printable form needs (not
 * counting the NUL), like snprintf: a return value >= dstlen means dst holds a cut copy, which
 * then ends in "..." (never inside an escape or a UTF-8 sequence). dst may be NULL when dstlen
 * is 0 (to measure). dst and src must not overlap. Never allocates. */
size_t ml_printable(char *dst, size_t dstlen, const char *src);

/* The printable form of src in a new string (free() it), or NULL when out of memory. */
char *ml_printable_dup(const char *src);

/* True when src needs no escape (ml_printable would copy it unchanged). */
bool ml_is_printable(const char *src);

#endif
