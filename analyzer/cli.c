/* Command-line helpers.
 * SPDX-License-Identifier: MIT
 */
#include "analyzer/cli.h"

#include "io/printable.h"

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>
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
    /* formatted whole, then made printable: file names, profile keys and values, device names
     * and option values reach the terminal only as escapes (io/printable.h), on one line */
    va_list ap;
    va_start(ap, fmt);
    char small[512], *text = small;
    const int n = vsnprintf(small, sizeof small, fmt, ap);
    va_end(ap);
    if (n >= (int)sizeof small && (text = malloc((size_t)n + 1)) != NULL) {
        va_start(ap, fmt);
        vsnprintf(text, (size_t)n + 1, fmt, ap);
        va_end(ap);
    }
    char *shown = ml_printable_dup(text ? text : small);
    fprintf(stderr, "modlens: %s\n", shown ? shown : "(out of memory)");
    free(shown);
    if (text != small)
        free(text);
    return ML_EXIT_USAGE;
}

const char ml_cli_safety[] =
    "Safety: never connect a sound card directly to a transmitter's output or antenna line. Use a\n"
    "proper RF sampler or attenuator and a downconverter or receiver, keep the input within the\n"
    "card's rated level, and isolate mains-powered and valve equipment (high voltage inside).\n"
    "Observe RF exposure limits and transmit only as your licence and local regulations permit.\n";

int ml_cli_mains(const char *arg, double *mains_hz)
{
    if (strcmp(arg, "50") == 0)
        *mains_hz = 50;
    else if (strcmp(arg, "60") == 0)
        *mains_hz = 60;
    else
        return ml_cli_error("--mains: '%s' is not 50 or 60", arg);
    return 0;
}

int ml_cli_carrier(const char *arg, double *carrier_hz)
{
    return ml_cli_number(arg, carrier_hz) ? 0 : ml_cli_error("--carrier: '%s' is not a frequency in Hz", arg);
}

int ml_cli_bandwidth(const char *arg, double *bandwidth_hz)
{
    double v;
    if (!ml_cli_number(arg, &v) || v < 100)
        return ml_cli_error("--bandwidth: '%s' is not a bandwidth in Hz >= 100", arg);
    *bandwidth_hz = v;
    return 0;
}
