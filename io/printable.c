/* Printable text (see printable.h).
 * SPDX-License-Identifier: MIT
 *
 * References: the Unicode Standard, chapter 3, table 3-7 "Well-Formed UTF-8 Byte Sequences"
 * (which lead and continuation bytes form a valid sequence); ECMA-48 section 5 (C0 and C1
 * control functions); Unicode Standard Annex 9 (the bidirectional formatting characters).
 */
#include "io/printable.h"

#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "io/internal.h"

/* Length of the valid UTF-8 sequence at s (2..4), with its code point; 0 when s does not start
 * one (Unicode table 3-7). */
static size_t utf8_sequence(const unsigned char *s, uint32_t *cp)
{
    const unsigned char c = s[0];
    size_t n;
    unsigned char lo = 0x80, hi = 0xbf; /* allowed range of the second byte */
    if (c >= 0xc2 && c <= 0xdf) {
        n = 2;
        *cp = c & 0x1f;
    } else if (c >= 0xe0 && c <= 0xef) {
        n = 3;
        *cp = c & 0x0f;
        if (c == 0xe0)
            lo = 0xa0; /* no overlong forms */
        else if (c == 0xed)
            hi = 0x9f; /* no surrogates */
    } else if (c >= 0xf0 && c <= 0xf4) {
        n = 4;
        *cp = c & 0x07;
        if (c == 0xf0)
            lo = 0x90;
        else if (c == 0xf4)
            hi = 0x8f; /* nothing above U+10FFFF */
    } else {
        return 0;
    }
    for (size_t i = 1; i < n; i++) {
        const unsigned char b = s[i]; /* a NUL ends the check: 0 is no continuation byte */
        if (b < (i == 1 ? lo : 0x80) || b > (i == 1 ? hi : 0xbf))
            return 0;
        *cp = (*cp << 6) | (b & 0x3f);
    }
    return n;
}

static bool hidden_code_point(uint32_t cp)
{
    return (cp >= 0x80 && cp <= 0x9f) || cp == 0x200e || cp == 0x200f || cp == 0x2028 || cp == 0x2029
           || (cp >= 0x202a && cp <= 0x202e) || (cp >= 0x2066 && cp <= 0x2069);
}

/* The printable form of the unit at s: into unit[16] (NUL-terminated); *used gets the source
 * bytes it covers. */
static void next_unit(const unsigned char *s, char unit[16], size_t *used)
{
    const unsigned char c = s[0];
    if (c == '\t' || c == '\n' || c == '\r') {
        snprintf(unit, 16, "\\%c", c == '\t' ? 't' : c == '\n' ? 'n' : 'r');
        *used = 1;
        return;
    }
    if (c < 0x20 || c == 0x7f) {
        snprintf(unit, 16, "\\x%02x", c);
        *used = 1;
        return;
    }
    if (c < 0x80) {
        unit[0] = (char)c;
        unit[1] = '\0';
        *used = 1;
        return;
    }
    uint32_t cp = 0;
    const size_t n = utf8_sequence(s, &cp);
    if (n == 0) {
        snprintf(unit, 16, "\\x%02x", c);
        *used = 1;
    } else if (hidden_code_point(cp)) {
        snprintf(unit, 16, "\\u%04x", (unsigned)cp);
        *used = n;
    } else {
        memcpy(unit, s, n);
        unit[n] = '\0';
        *used = n;
    }
}

size_t ml_printable(char *dst, size_t dstlen, const char *src)
{
    const unsigned char *s = (const unsigned char *)(src ? src : "");
    char unit[16];
    size_t used, need = 0;
    for (const unsigned char *p = s; *p; p += used) {
        next_unit(p, unit, &used);
        need += strlen(unit);
    }
    if (dstlen == 0)
        return need;
    /* whole units only; when the whole form does not fit, keep room for "..." */
    const size_t room = need < dstlen ? dstlen - 1 : dstlen - 1 - (dstlen > 3 ? 3 : dstlen - 1);
    size_t put = 0;
    for (const unsigned char *p = s; *p; p += used) {
        next_unit(p, unit, &used);
        const size_t len = strlen(unit);
        if (put + len > room)
            break;
        memcpy(dst + put, unit, len);
        put += len;
    }
    for (int k = 0; need >= dstlen && k < 3 && put < dstlen - 1; k++)
        dst[put++] = '.';
    dst[put] = '\0';
    return need;
}

char *ml_printable_dup(const char *src)
{
    const size_t n = ml_printable(NULL, 0, src);
    char *d = malloc(n + 1);
    if (d != NULL)
        ml_printable(d, n + 1, src);
    return d;
}

bool ml_is_printable(const char *src)
{
    /* every escape is longer than what it replaces */
    return ml_printable(NULL, 0, src) == strlen(src ? src : "");
}

void ml_say(char *buf, size_t len, const char *fmt, ...)
{
    if (buf == NULL || len == 0)
        return;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(buf, len, fmt, ap);
    va_end(ap);
}
