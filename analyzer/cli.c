/* Command-line helpers.
 * SPDX-License-Identifier: MIT
 */
#include "analyzer/cli.h"

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>

bool ml_cli_number(const char *s, double *v)
{
    char *end = NULL;
    errno = 0;
    *v = strtod(s, &end);
    return end != s && *end == '\0' && errno == 0 && isfinite(*v);
}

bool ml_cli_int(const char *s, long *v)
{
    char *end = NULL;
    errno = 0;
    *v = strtol(s, &end, 10);
    return end != s && *end == '\0' && errno == 0;
}

int ml_cli_error(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    fputs("modlens: ", stderr);
    vfprintf(stderr, fmt, ap);
    fputc('\n', stderr);
    va_end(ap);
    return ML_EXIT_USAGE;
}

const char ml_cli_safety[] =
    "Safety: never connect a sound card directly to a transmitter's output or antenna line. Use a\n"
    "proper RF sampler or attenuator and a downconverter or receiver, keep the input within the\n"
    "card's rated level, and isolate mains-powered and valve equipment (high voltage inside).\n"
    "Observe RF exposure limits and transmit only as your licence and local regulations permit.\n";
