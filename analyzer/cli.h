/* Command-line helpers shared by the subcommands: strict number parsing and usage errors.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_ANALYZER_CLI_H
#define ML_ANALYZER_CLI_H

#include <stdbool.h>

#define ML_EXIT_OK 0
#define ML_EXIT_FAIL 1
#define ML_EXIT_USAGE 2

/* Parses a finite number with nothing after it. */
bool ml_cli_number(const char *s, double *v);
/* Parses a whole number with nothing after it. */
bool ml_cli_int(const char *s, long *v);
/* Prints "modlens: <message>" to stderr (one line). Returns ML_EXIT_USAGE. */
int ml_cli_error(const char *fmt, ...) __attribute__((format(printf, 1, 2)));

/* Option values shared by the commands; each returns 0, or prints "--NAME: ..." and returns
 * ML_EXIT_USAGE. */
int ml_cli_mains(const char *arg, double *mains_hz);       /* "50" or "60"                  */
int ml_cli_carrier(const char *arg, double *carrier_hz);   /* any finite frequency in Hz     */
int ml_cli_bandwidth(const char *arg, double *bandwidth_hz); /* >= 100 Hz                    */

/* The safety paragraph shown by every --help. */
extern const char ml_cli_safety[];

#endif
