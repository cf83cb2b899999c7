/* CSV fields (see io/csv.h).
 * SPDX-License-Identifier: MIT
 *
 * Reference: RFC 4180 (Common Format and MIME Type for CSV Files), section 2, rules 5-7.
 */
#include "io/csv.h"

#include <string.h>

static bool needs_quotes(const char *s)
{
    const size_t len = strlen(s);
    if (len > 0 && (s[0] == ' ' || s[len - 1] == ' '))
        return true;
    for (const unsigned char *p = (const unsigned char *)s; *p; p++)
        if (*p == ',' || *p == '"' || *p < 0x20 || *p == 0x7f)
            return true;
    return false;
}

bool ml_csv_append(char *b, size_t n, size_t *k, const char *s)
{
    if (s == NULL)
        s = "";
    const size_t start = *k;
    size_t j = start;
    const bool quote = needs_quotes(s);
    /* worst case: separator, quotes, every byte doubled, NUL */
    if (j + 1 > n)
        return false;
    if (j > 0)
        b[j++] = ',';
    if (quote)
        b[j++] = '"';
    for (const unsigned char *p = (const unsigned char *)s; *p; p++) {
        const char c = (*p < 0x20 || *p == 0x7f) ? ' ' : (char)*p;
        if (j + (c == '"' ? 2 : 1) + (quote ? 1 : 0) + 1 > n)
            goto full;
        if (c == '"')
            b[j++] = '"';
        b[j++] = c;
    }
    if (quote) {
        if (j + 2 > n)
            goto full;
        b[j++] = '"';
    }
    if (j + 1 > n)
        goto full;
    b[j] = '\0';
    *k = j;
    return true;
full:
    if (start < n)
        b[start] = '\0';
    return false;
}

static bool at_end(char c)
{
    return c == '\0' || c == '\n' || (c == '\r');
}

/* Scans one field from p; copies it into out[n] when out is not NULL. Returns the position after
 * the field (at a comma or the line's end), or NULL when the field is not valid. */
static const char *scan(const char *p, char *out, size_t n)
{
    size_t k = 0;
    if (*p == '"') {
        p++;
        for (;; p++) {
            if (*p == '\0' || *p == '\n')
                return NULL; /* unclosed */
            if (*p == '"') {
                if (p[1] == '"') {
                    p++;
                } else {
                    p++;
                    break;
                }
            }
            if (out && k + 1 < n)
                out[k++] = *p;
        }
        if (!(*p == ',' || at_end(*p)))
            return NULL;
    } else {
        for (; *p != ',' && !at_end(*p); p++) {
            if (*p == '"')
                return NULL; /* a quote inside an unquoted field */
            if (out && k + 1 < n)
                out[k++] = *p;
        }
    }
    if (*p == '\r' && !(p[1] == '\n' || p[1] == '\0'))
        return NULL; /* a bare carriage return inside the line */
    if (out && n > 0)
        out[k] = '\0';
    return p;
}

bool ml_csv_get_field(const char *line, int i, char *out, size_t n)
{
    if (line == NULL || i < 0)
        return false;
    const char *p = line;
    for (int f = 0;; f++) {
        const char *e = scan(p, f == i ? out : NULL, n);
        if (e == NULL)
            return false;
        if (f == i)
            return true;
        if (*e != ',')
            return false;
        p = e + 1;
    }
}

int ml_csv_count(const char *line)
{
    if (line == NULL)
        return -1;
    const char *p = line;
    for (int f = 1;; f++) {
        const char *e = scan(p, NULL, 0);
        if (e == NULL)
            return -1;
        if (*e != ',')
            return f;
        p = e + 1;
    }
}

int ml_csv_column(const char *header, const char *name)
{
    char f[128];
    const int n = ml_csv_count(header);
    for (int i = 0; i < n; i++)
        if (ml_csv_get_field(header, i, f, sizeof f) && strcmp(f, name) == 0)
            return i;
    return -1;
}
