/* Round-number plot ticks (rules in io/ticks.h).
 * SPDX-License-Identifier: MIT
 */
#include "io/ticks.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

/* Decimal places that show v exactly to 1e-9 relative (at most 9). */
static int decimals_of(double v)
{
    for (int d = 0; d < 9; d++) {
        const double s = pow(10.0, d), r = round(v * s) / s;
        if (fabs(r - v) <= 1e-9 * fmax(fabs(v), 1e-300) || fabs(r - v) < 1e-12)
            return d;
    }
    return 9;
}

static void put(ml_ticks *t, double v, const char *label)
{
    if (t->n >= ML_TICKS_MAX)
        return;
    t->tick[t->n].value = v;
    size_t len = strlen(label);
    if (len >= ML_TICK_LABEL)
        len = ML_TICK_LABEL - 1; /* cut, never overrun (labels of sane axes are far shorter) */
    memcpy(t->tick[t->n].label, label, len);
    t->tick[t->n].label[len] = '\0';
    t->n++;
}

/* step = m * 10^e exactly enough: the k-th multiple as k * m * 10^e (division for e < 0, so
 * 0.1 * 3 becomes 3 / 10 = 0.3, not 0.30000000000000004). */
static double multiple(long long k, int m, int e)
{
    return e >= 0 ? (double)k * m * pow(10.0, e) : (double)k * m / pow(10.0, -e);
}

static size_t count_in(double lo, double hi, double step)
{
    const double a = ceil(lo / step - 1e-9), b = floor(hi / step + 1e-9);
    return b >= a ? (size_t)(b - a + 1) : 0;
}

/* The smallest 1, 2, 5 x 10^e step with at most max ticks: writes m and e. */
static void nice_step(double lo, double hi, size_t max, int *m_out, int *e_out)
{
    static const int ms[3] = {1, 2, 5};
    int e = (int)floor(log10((hi - lo) / (double)max)) - 1;
    for (;; e++)
        for (int i = 0; i < 3; i++)
            if (count_in(lo, hi, multiple(1, ms[i], e)) <= max) {
                *m_out = ms[i];
                *e_out = e;
                return;
            }
}

static void number_label(char *buf, size_t len, double v, int dec)
{
    snprintf(buf, len, "%.*f", dec, v == 0 ? 0.0 : v); /* never "-0" */
}

static ml_status check(double lo, double hi, size_t max, ml_ticks *out)
{
    if (out == NULL)
        return ML_EINVAL;
    memset(out, 0, sizeof *out);
    if (!isfinite(lo) || !isfinite(hi) || !(lo < hi) || max < 2 || max > ML_TICKS_MAX
        || !(hi - lo > 1e-12 * fmax(fabs(lo), fabs(hi))))
        return ML_EINVAL;
    return ML_OK;
}

/* Linear ticks with labels "<number><suffix>". */
static void linear(double lo, double hi, size_t max, const char *suffix, ml_ticks *out)
{
    int m = 1, e = 0;
    nice_step(lo, hi, max, &m, &e);
    out->step = multiple(1, m, e);
    const int dec = e < 0 ? -e : 0;
    const long long a = (long long)ceil(lo / out->step - 1e-9), b = (long long)floor(hi / out->step + 1e-9);
    for (long long k = a; k <= b; k++) {
        const double v = multiple(k, m, e);
        char num[ML_TICK_LABEL], lab[ML_TICK_LABEL + 8];
        number_label(num, sizeof num, v, dec);
        snprintf(lab, sizeof lab, "%s%s", num, suffix);
        put(out, v, lab);
    }
}

ml_status ml_ticks_linear(double lo, double hi, size_t max_count, ml_ticks *out)
{
    ml_status st = check(lo, hi, max_count, out);
    if (st != ML_OK)
        return st;
    linear(lo, hi, max_count, "", out);
    return ML_OK;
}

ml_status ml_ticks_time(double lo_s, double hi_s, size_t max_count, ml_ticks *out)
{
    ml_status st = check(lo_s, hi_s, max_count, out);
    if (st != ML_OK)
        return st;
    if (lo_s < 0)
        return ML_EINVAL;
    static const double steps[] = {1,    2,    5,    10,    15,    20,    30,    60,    120,    300,   600,
                                   900,  1200, 1800, 3600,  7200,  10800, 21600, 43200, 86400, 172800, 604800};
    const size_t nsteps = sizeof steps / sizeof steps[0];
    if (count_in(lo_s, hi_s, 1.0) > max_count) {
        double step = 0;
        for (size_t i = 0; i < nsteps && step == 0; i++)
            if (count_in(lo_s, hi_s, steps[i]) <= max_count)
                step = steps[i];
        for (double w = 604800.0; step == 0; w *= 10) /* 7 d x 2, 5, 10, 20, 50 ...: 14, 35, 70 d */
            for (int i = 0; i < 3 && step == 0; i++) {
                const double s = w * (i == 0 ? 2 : i == 1 ? 5 : 10);
                if (count_in(lo_s, hi_s, s) <= max_count)
                    step = s;
            }
        out->step = step;
        const long long a = (long long)ceil(lo_s / step - 1e-9), b = (long long)floor(hi_s / step + 1e-9);
        const char *unit = hi_s < 60 ? "s"
                           : hi_s < 3600 ? "m:ss"
                           : fmod(step, 86400) == 0 ? "d"
                           : fmod(step, 3600) == 0 ? "h"
                           : fmod(step, 60) == 0 ? "h:mm"
                                                 : "h:mm:ss";
        snprintf(out->unit, sizeof out->unit, "%s", unit);
        for (long long k = a; k <= b; k++) {
            const long long v = llround((double)k * step);
            char lab[ML_TICK_LABEL + 16];
            if (strcmp(unit, "s") == 0)
                snprintf(lab, sizeof lab, "%lld s", v);
            else if (strcmp(unit, "m:ss") == 0)
                snprintf(lab, sizeof lab, "%lld:%02lld", v / 60, v % 60);
            else if (strcmp(unit, "d") == 0)
                snprintf(lab, sizeof lab, "%lld d", v / 86400);
            else if (strcmp(unit, "h") == 0)
                snprintf(lab, sizeof lab, "%lld h", v / 3600);
            else if (strcmp(unit, "h:mm") == 0)
                snprintf(lab, sizeof lab, "%lld:%02lld", v / 3600, v / 60 % 60);
            else
                snprintf(lab, sizeof lab, "%lld:%02lld:%02lld", v / 3600, v / 60 % 60, v % 60);
            put(out, (double)v, lab);
        }
        return ML_OK;
    }
    /* whole seconds fit: "s" labels from 1 s steps down to the linear rule below 1 s */
    snprintf(out->unit, sizeof out->unit, "s");
    linear(lo_s, hi_s, max_count, " s", out);
    return ML_OK;
}

static void hz_label(char *buf, size_t len, double v)
{
    const char *suffix = "";
    double x = v;
    if (v >= 1e6) {
        x = v / 1e6;
        suffix = "M";
    } else if (v >= 1e3) {
        x = v / 1e3;
        suffix = "k";
    }
    snprintf(buf, len, "%.*f%s", decimals_of(x), x, suffix);
}

ml_status ml_ticks_log_hz(double lo_hz, double hi_hz, size_t max_count, ml_ticks *out)
{
    ml_status st = check(lo_hz, hi_hz, max_count, out);
    if (st != ML_OK)
        return st;
    if (!(lo_hz > 0))
        return ML_EINVAL;
    const int e0 = (int)floor(log10(lo_hz)), e1 = (int)ceil(log10(hi_hz));
    static const int ms[3] = {1, 2, 5};
    /* count of 1, 2, 5 x 10^e inside, then of the decades */
    size_t n125 = 0;
    for (int e = e0; e <= e1; e++)
        for (int i = 0; i < 3; i++) {
            const double v = multiple(1, ms[i], e);
            if (v >= lo_hz * (1 - 1e-12) && v <= hi_hz * (1 + 1e-12))
                n125++;
        }
    if (n125 < 2) {
        linear(lo_hz, hi_hz, max_count, "", out);
        for (size_t i = 0; i < out->n; i++)
            hz_label(out->tick[i].label, ML_TICK_LABEL, out->tick[i].value);
        return ML_OK;
    }
    int every = 0; /* 0: 1, 2, 5; else decades with e divisible by every */
    if (n125 > max_count)
        for (every = 1;; every++) {
            size_t c = 0;
            for (int e = e0; e <= e1; e++) {
                const double v = multiple(1, 1, e);
                if (e % every == 0 && v >= lo_hz * (1 - 1e-12) && v <= hi_hz * (1 + 1e-12))
                    c++;
            }
            if (c <= max_count)
                break;
        }
    for (int e = e0; e <= e1; e++)
        for (int i = 0; i < 3; i++) {
            if (every > 0 && (i > 0 || e % every != 0))
                continue;
            const double v = multiple(1, ms[i], e);
            if (v >= lo_hz * (1 - 1e-12) && v <= hi_hz * (1 + 1e-12)) {
                char lab[ML_TICK_LABEL];
                hz_label(lab, sizeof lab, v);
                put(out, v, lab);
            }
        }
    return ML_OK;
}
