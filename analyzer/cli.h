/* Command-line helpers shared by the subcommands: strict number parsing and usage errors.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_ANALYZER_CLI_H
#define ML_ANALYZER_CLI_H

#include <stdbool.h>

#define ML_EXIT_OK 0
#define ML_EXIT_FAIL 1
#define ML_EXIT_USAGE 2

/* Longest time an option may give (about 31.7 years): times this size, multiplied by any rate a
 * file can hold (below 2^31 Hz), stay far inside int64_t frame counts. */
#define ML_CLI_MAX_SECONDS 1e9

/* Parses a finite number with nothing after it. */
bool ml_cli_number(const char *s, double *v);
/* Parses a whole number with nothing after it. */
bool ml_cli_int(const char *s, long *v);
/* A UTC time "YYYY-MM-DDTHH:MM:SS[.f...]Z" (ISO 8601, Gregorian calendar, years 1970..9999,
 * 1..9 fraction digits) -> seconds since 1970-01-01T00:00:00Z. False for anything else,
 * including dates that do not exist (2024-02-30, 2023-02-29, 2100-02-29) and second 60 (POSIX
 * time has no leap seconds). */
bool ml_cli_utc(const char *s, double *t);
/* Prints "modlens: <message>" to stderr as one printable line (names, keys and values in it are
 * escaped, io/printable.h). Returns ML_EXIT_USAGE. */
int ml_cli_error(const char *fmt, ...) __attribute__((format(printf, 1, 2)));

/* Option values shared by the commands; each returns 0, or prints "--NAME: ..." and returns
 * ML_EXIT_USAGE. */
int ml_cli_mains(const char *arg, double *mains_hz);       /* "50" or "60"                  */
int ml_cli_carrier(const char *arg, double *carrier_hz);   /* any finite frequency in Hz     */
int ml_cli_bandwidth(const char *arg, double *bandwidth_hz); /* >= 100 Hz                    */

/* "unknown option '-x'" / "'--name' needs a value" for getopt's '?' and ':' returns, naming the
 * option getopt looked at (optopt for a short option inside a cluster such as "-xq"); cmd is the
 * command for the hint. Returns ML_EXIT_USAGE. */
int ml_cli_bad_option(int ch, char **argv, const char *cmd);

/* The safety paragraph shown by every --help. */
extern const char ml_cli_safety[];

#endif
