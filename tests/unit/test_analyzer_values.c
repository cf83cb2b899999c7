/* Unit tests for analyzer/values (figures into the report model with their states, the
 * reportable range, cells) and analyzer/limits (checks on bounds).
 * SPDX-License-Identifier: MIT
 *
 * The expectations are the contracts of analyzer/values.h and analyzer/limits.h: a bound stays a
 * bound of its direction, a figure not measured carries its reason, a dB figure beyond
 * +-ML_FIGURE_DB_LIMIT (dsp/metrics.h) becomes a bound at the edge, and a bound passes a limit only
 * when every value it allows does (interval reasoning: the true value of "< 0.3" lies in
 * [0, 0.3] for a % ratio, anywhere below 0.3 otherwise).
 */
#include <check.h>
#include <math.h>
#include <string.h>

#include "analyzer/limits.h"
#include "analyzer/values.h"
#include "tests/unit/ml_check.h"

static ml_report rep;

static const ml_metric *find(const char *name)
{
    for (size_t i = 0; i < rep.nmetrics; i++)
        if (strcmp(rep.metrics[i].name, name) == 0)
            return &rep.metrics[i];
    return NULL;
}

START_TEST(states_reach_the_report)
{
    memset(&rep, 0, sizeof rep);
    const ml_value v[] = {
        {.name = "audio.thd_pct", .value = 0.3, .state = ML_FIG_UPPER, .why = "noise-limited"},
        {.name = "audio.snr_db", .value = 60.0, .state = ML_FIG_LOWER, .why = NULL},
        {.name = "hum.mains_hz", .value = NAN, .state = ML_FIG_NONE, .why = "no mains line"},
        {.name = "audio.fundamental_dbfs", .value = -6.02, .state = ML_FIG_MEASURED, .why = "weak tone"},
        {.name = "audio.thd_db", .value = -40.0},
        {.name = "audio.noise_dbfs", .value = -800.0},                            /* below the range */
        {.name = "audio.sinad_db", .value = 400.0, .state = ML_FIG_UPPER},         /* says nothing */
        {.name = "audio.enob_bits", .value = 40.0},                                /* 0..32 bits */
        {.name = "audio.thdn_db", .value = NAN},
    };
    ml_values_report(&rep, v, sizeof v / sizeof v[0]);
    const ml_metric *m = find("audio.thd_pct");
    ck_assert(m && m->valid && m->bound == ML_BOUND_UPPER && strcmp(m->qualifier, "noise-limited") == 0);
    m = find("audio.snr_db");
    ck_assert(m && m->valid && m->bound == ML_BOUND_LOWER && strcmp(m->qualifier, "lower bound") == 0);
    m = find("hum.mains_hz");
    ck_assert(m && !m->valid && strcmp(m->reason, "no mains line") == 0);
    m = find("audio.fundamental_dbfs");
    ck_assert(m && m->valid && m->bound == ML_BOUND_NONE && strcmp(m->qualifier, "weak tone") == 0);
    m = find("audio.thd_db");
    ck_assert(m && m->valid && m->bound == ML_BOUND_NONE && m->qualifier[0] == '\0' && m->value == -40.0);
    m = find("audio.noise_dbfs");
    ck_assert(m && m->valid && m->bound == ML_BOUND_UPPER && m->value == -ML_FIGURE_DB_LIMIT);
    ck_assert_str_eq(m->qualifier, ml_audio_why_text(ML_WHY_OUT_OF_RANGE));
    m = find("audio.sinad_db");
    ck_assert(m && !m->valid && strcmp(m->reason, ml_audio_why_text(ML_WHY_OUT_OF_RANGE)) == 0);
    m = find("audio.enob_bits");
    ck_assert(m && m->valid && m->bound == ML_BOUND_LOWER && m->value == ML_ENOB_MAX_BITS);
    m = find("audio.thdn_db");
    ck_assert(m && !m->valid);
    /* an interval goes only to a measurement, never to a bound */
    const ml_value u[] = {{.name = "audio.thd_pct", .value = 0.01}, {.name = "audio.thd_db", .value = 0.1}};
    ml_values_report_u(&rep, u, 2);
    ck_assert(!find("audio.thd_pct")->has_u);
    ck_assert(find("audio.thd_db")->has_u);
    ck_assert(ml_values_in_range("audio.noise_dbfs", -289.0) && !ml_values_in_range("audio.noise_dbfs", -291.0));
    ck_assert(ml_values_in_range("audio.thd_pct", 1e6)); /* % has no range of its own */
}
END_TEST

START_TEST(cells)
{
    char b[32];
    const ml_value up = {.name = "audio.thd_pct", .value = 0.3, .state = ML_FIG_UPPER};
    const ml_value lo = {.name = "audio.snr_db", .value = 60.0, .state = ML_FIG_LOWER};
    const ml_value none = {.name = "audio.snr_db", .value = NAN, .state = ML_FIG_NONE};
    const ml_value plain = {.name = "audio.snr_db", .value = 59.996};
    const ml_value floor = {.name = "hum.level_dbfs", .value = -300.0};
    ck_assert_str_eq(ml_values_cell(&up, b, sizeof b), "<0.3000");
    ck_assert_str_eq(ml_values_cell(&lo, b, sizeof b), ">60.00");
    ck_assert_str_eq(ml_values_cell(&none, b, sizeof b), "");
    ck_assert_str_eq(ml_values_cell(&plain, b, sizeof b), "60.00");
    ck_assert_str_eq(ml_values_cell(&floor, b, sizeof b), "<-290.00"); /* never the floor value */
}
END_TEST

/* One check of metric value v (bound b) against min/max (NAN: none). */
static const ml_check *check_one(double v, ml_bound b, double min, double max)
{
    memset(&rep, 0, sizeof rep);
    ml_report_add(&rep, "audio.thd_pct", "%", 4, v);
    rep.metrics[0].bound = b;
    static ml_limits l;
    memset(&l, 0, sizeof l);
    l.n = 1;
    snprintf(l.items[0].metric, sizeof l.items[0].metric, "audio.thd_pct");
    l.items[0].has_min = !isnan(min);
    l.items[0].has_max = !isnan(max);
    l.items[0].min = min;
    l.items[0].max = max;
    ml_limits_apply(&l, &rep);
    return &rep.checks[0];
}

START_TEST(bounds_against_limits)
{
    /* analyzer/limits.h: "< 0.3" lies wholly within <= 0.5 (pass); reaches beyond <= 0.2
     * (undecided); lies wholly below >= 0.4 (fail); "> 0.3" against <= 0.2 fails, against >= 0.2
     * passes, against <= 0.5 is undecided; a plain reading is judged as ever. */
    const ml_check *c = check_one(0.3, ML_BOUND_UPPER, NAN, 0.5);
    ck_assert(c->pass && !c->undecided);
    ck_assert_str_eq(ml_report_verdict(&rep), "pass");
    c = check_one(0.3, ML_BOUND_UPPER, NAN, 0.2);
    ck_assert(!c->pass && c->undecided);
    ck_assert_str_eq(ml_report_verdict(&rep), "undecided");
    c = check_one(0.3, ML_BOUND_UPPER, 0.4, NAN);
    ck_assert(!c->pass && !c->undecided);
    ck_assert_str_eq(ml_report_verdict(&rep), "fail");
    c = check_one(0.3, ML_BOUND_UPPER, 0.2, NAN); /* at least 0.2? the true value may be below */
    ck_assert(!c->pass && c->undecided);
    c = check_one(0.3, ML_BOUND_LOWER, NAN, 0.2);
    ck_assert(!c->pass && !c->undecided);
    c = check_one(0.3, ML_BOUND_LOWER, 0.2, NAN);
    ck_assert(c->pass && !c->undecided);
    c = check_one(0.3, ML_BOUND_LOWER, NAN, 0.5);
    ck_assert(!c->pass && c->undecided);
    c = check_one(0.3, ML_BOUND_NONE, NAN, 0.2);
    ck_assert(!c->pass && !c->undecided);
    ck_assert_str_eq(ml_report_verdict(&rep), "fail");
}
END_TEST

int main(void)
{
    Suite *s = suite_create("analyzer_values");
    TCase *tc = tcase_create("values");
    tcase_add_test(tc, states_reach_the_report);
    tcase_add_test(tc, cells);
    tcase_add_test(tc, bounds_against_limits);
    suite_add_tcase(s, tc);
    return ml_check_run(s);
}
