/* The step plan's options (see analyzer/plan.h).
 * SPDX-License-Identifier: MIT
 */
#include "analyzer/plan.h"

#include <stdio.h>
#include <string.h>

#include "analyzer/cli.h"

static const double octaves[] = {31.5, 63, 125, 250, 500, 1000, 2000, 4000, 8000, 16000};
static const double thirds[] = {20,   25,   31.5, 40,   50,   63,   80,    100,   125,   160,   200,
                                250,  315,  400,  500,  630,  800,  1000,  1250,  1600,  2000,  2500,
                                3150, 4000, 5000, 6300, 8000, 10000, 12500, 16000, 20000};
static const double proof[] = {50, 100, 400, 1000, 5000, 7500, 10000};

static void set_freqs(ml_step_plan *p, const double *f, size_t n)
{
    p->nfreqs = n;
    memcpy(p->freqs_hz, f, n * sizeof *f);
}

ml_plan_opts ml_plan_opts_default(void)
{
    ml_plan_opts o = {.plan = ml_step_plan_default(), .named_set = true};
    set_freqs(&o.plan, octaves, sizeof octaves / sizeof *octaves);
    return o;
}

bool ml_plan_is_option(const char *name)
{
    return strcmp(name, "freqs") == 0 || strcmp(name, "levels") == 0 || strcmp(name, "step-seconds") == 0
           || strcmp(name, "pause-seconds") == 0;
}

/* "a,b,c" into v[max]: the count, or 0 when a field is not a number or there are more than max. */
static size_t number_list(const char *s, double *v, size_t max)
{
    char buf[1024];
    if (snprintf(buf, sizeof buf, "%s", s) >= (int)sizeof buf)
        return 0;
    size_t n = 0;
    char *p = buf;
    for (;;) {
        char *comma = strchr(p, ',');
        if (comma)
            *comma = '\0';
        if (n >= max || !ml_cli_number(p, &v[n]))
            return 0;
        n++;
        if (comma == NULL)
            return n;
        p = comma + 1;
    }
}

static int apply_freqs(ml_plan_opts *p, const char *arg)
{
    static const struct {
        const char *name;
        const double *f;
        size_t n;
    } sets[] = {{"octaves", octaves, sizeof octaves / sizeof *octaves},
                {"thirds", thirds, sizeof thirds / sizeof *thirds},
                {"proof", proof, sizeof proof / sizeof *proof}};
    p->freqs_given = true;
    for (size_t i = 0; i < sizeof sets / sizeof *sets; i++)
        if (strcmp(arg, sets[i].name) == 0) {
            set_freqs(&p->plan, sets[i].f, sets[i].n);
            p->named_set = true;
            return 0;
        }
    double v[ML_STEP_PLAN_MAX_FREQS];
    const size_t n = number_list(arg, v, ML_STEP_PLAN_MAX_FREQS);
    for (size_t i = 0; i < n; i++)
        if (!(v[i] > 0))
            return ml_cli_error("--freqs: %g Hz is not a frequency > 0", v[i]);
    if (n == 0)
        return ml_cli_error("--freqs: '%s' is not octaves, thirds, proof or a list of at most %d frequencies "
                            "in Hz",
                            arg, ML_STEP_PLAN_MAX_FREQS);
    set_freqs(&p->plan, v, n);
    p->named_set = false;
    return 0;
}

int ml_plan_apply(ml_plan_opts *p, const char *name, const char *arg)
{
    double v;
    p->given = true;
    if (strcmp(name, "freqs") == 0)
        return apply_freqs(p, arg);
    if (strcmp(name, "levels") == 0) {
        double l[ML_STEP_PLAN_MAX_LEVELS];
        const size_t n = number_list(arg, l, ML_STEP_PLAN_MAX_LEVELS);
        for (size_t i = 0; i < n; i++)
            if (!(l[i] >= -200 && l[i] <= 0))
                return ml_cli_error("--levels: %g is not a level in dBFS, -200..0", l[i]);
        if (n == 0)
            return ml_cli_error("--levels: '%s' is not a list of at most %d levels in dBFS", arg,
                                ML_STEP_PLAN_MAX_LEVELS);
        p->plan.nlevels = n;
        memcpy(p->plan.levels_dbfs, l, n * sizeof *l);
        return 0;
    }
    if (strcmp(name, "step-seconds") == 0) {
        if (!ml_cli_number(arg, &v) || v < 0.05 || v > 3600)
            return ml_cli_error("--step-seconds: '%s' is not a time in seconds, 0.05..3600", arg);
        p->plan.step_s = v;
        return 0;
    }
    if (strcmp(name, "pause-seconds") == 0) {
        if (!ml_cli_number(arg, &v) || v < 0 || v > 3600)
            return ml_cli_error("--pause-seconds: '%s' is not a time in seconds, 0..3600", arg);
        p->plan.pause_s = v;
        return 0;
    }
    return ml_cli_error("--%s: not a plan option", name);
}

int ml_plan_finish(ml_plan_opts *p, double rate_hz, size_t *dropped)
{
    ml_step_plan *pl = &p->plan;
    size_t kept = 0, gone = 0;
    for (size_t i = 0; i < pl->nfreqs; i++) {
        if (pl->freqs_hz[i] < rate_hz / 2) {
            pl->freqs_hz[kept++] = pl->freqs_hz[i];
            continue;
        }
        if (!p->named_set)
            return ml_cli_error("--freqs: %g Hz is not below half the sample rate (%g Hz)", pl->freqs_hz[i],
                                rate_hz / 2);
        gone++;
    }
    pl->nfreqs = kept;
    if (dropped)
        *dropped = gone;
    if (kept == 0)
        return ml_cli_error("--freqs: no frequency lies below half the sample rate (%g Hz)", rate_hz / 2);
    return 0;
}
