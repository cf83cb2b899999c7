/* Command-line helpers.
 * SPDX-License-Identifier: MIT
 */
#include "analyzer/cli.h"

#include "io/printable.h"

#include <errno.h>
#include <getopt.h>
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

static bool digits(const char *s, int n, int *v)
{
    *v = 0;
    for (int i = 0; i < n; i++) {
        if (s[i] < '0' || s[i] > '9')
            return false;
        *v = 10 * *v + (s[i] - '0');
    }
    return true;
}

/* Days from 1970-01-01 to y-m-d in the proleptic Gregorian calendar: the era arithmetic of
 * H. Hinnant, "chrono-Compatible Low-Level Date Algorithms" (days_from_civil). */
static long days_from_civil(long y, long m, long d)
{
    y -= m <= 2;
    const long era = y / 400;
    const long yoe = y - era * 400;
    const long doy = (153 * (m + (m > 2 ? -3 : 9)) + 2) / 5 + d - 1;
    const long doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    return era * 146097 + doe - 719468;
}

bool ml_cli_utc(const char *s, double *t)
{
    int y, mo, d, h, mi, sec;
    if (strlen(s) < 20 || !digits(s, 4, &y) || s[4] != '-' || !digits(s + 5, 2, &mo) || s[7] != '-'
        || !digits(s + 8, 2, &d) || s[10] != 'T' || !digits(s + 11, 2, &h) || s[13] != ':'
        || !digits(s + 14, 2, &mi) || s[16] != ':' || !digits(s + 17, 2, &sec))
        return false;
    const char *p = s + 19;
    double frac = 0, scale = 0.1;
    if (*p == '.') {
        int n = 0;
        for (p++; *p >= '0' && *p <= '9'; p++, n++, scale /= 10)
            frac += (*p - '0') * scale;
        if (n < 1 || n > 9)
            return false;
    }
    if (strcmp(p, "Z") != 0)
        return false;
    static const int mdays[12] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
    const bool leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
    if (y < 1970 || mo < 1 || mo > 12 || d < 1 || d > mdays[mo - 1] + (mo == 2 && leap) || h > 23 || mi > 59
        || sec > 59)
        return false;
    *t = (double)days_from_civil(y, mo, d) * 86400.0 + h * 3600.0 + mi * 60.0 + sec + frac;
    return true;
}

int ml_cli_bad_option(int ch, char **argv, const char *cmd)
{
    /* a missing value: getopt has stepped past the option, whatever its form */
    if (ch == ':')
        return ml_cli_error("%s needs a value (try 'modlens %s --help')", argv[optind - 1], cmd);
    /* an unknown short option inside a cluster ("-xq") leaves optind on the cluster: name it by
     * optopt; an unknown long option has optopt 0 and is the argument just passed */
    if (optopt > 0 && optopt < 256) {
        char name[3] = {'-', (char)optopt, '\0'};
        return ml_cli_error("unknown option '%s' (try 'modlens %s --help')", name, cmd);
    }
    return ml_cli_error("unknown option '%s' (try 'modlens %s --help')", argv[optind - 1], cmd);
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
