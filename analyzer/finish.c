/* The finish step of the reporting commands (see analyzer/finish.h).
 * SPDX-License-Identifier: MIT
 */
#include "analyzer/finish.h"

#include <stdio.h>
#include <string.h>

#include "analyzer/cli.h"
#include "analyzer/output.h"
#include "analyzer/plots.h"

int ml_finish_prepare(ml_output_opts *out, ml_limits *limits, const char *const *inputs, size_t ninputs,
                      const char *capture_path)
{
    char err[512];
    int rc = ml_plots_check_paths(out->plot_path, out->report_path);
    if (rc != 0)
        return rc;
    if (out->limits_path) {
        ml_status st = ml_limits_load(out->limits_path, limits, err, sizeof err);
        if (st != ML_OK)
            return ml_cli_error("%s: %s", out->limits_path, err);
        out->limits = limits;
    }
    /* nothing written may replace an input, and no two outputs may share a file */
    const char *outs[4] = {out->output_path, capture_path, out->plot_path, out->report_path};
    const char *what[4] = {"the report", "the capture", "the plot", "the PDF report"};
    for (int i = 0; i < 4; i++) {
        if (outs[i] == NULL || strcmp(outs[i], "-") == 0)
            continue;
        for (size_t j = 0; j < ninputs; j++)
            if (inputs[j] && ml_same_file(outs[i], inputs[j]))
                return ml_cli_error("%s: refusing to overwrite an input file with %s", outs[i], what[i]);
        if (out->limits_path && ml_same_file(outs[i], out->limits_path))
            return ml_cli_error("%s: refusing to overwrite an input file with %s", outs[i], what[i]);
        for (int j = 0; j < i; j++)
            if (outs[j] && (strcmp(outs[i], outs[j]) == 0 || ml_same_file(outs[i], outs[j])))
                return ml_cli_error("%s: %s and %s would be the same file", outs[i], what[j], what[i]);
    }
    return 0;
}

/* The report or the comparison to --output, completely or not at all. */
static int write_text(const ml_finish_job *j)
{
    const char *path = j->out->output_path;
    char err[512];
    ml_output o;
    if (!ml_output_open(&o, path, err, sizeof err))
        return ml_cli_error("%s: %s", path, err);
    const ml_status st = j->report ? ml_report_write(o.f, j->report, j->out->format)
                                   : ml_compare_write(o.f, j->comparison, j->out->format);
    if (st != ML_OK) {
        ml_output_abort(&o);
        return ml_cli_error("%s: cannot write the %s", path ? path : "standard output",
                            j->report ? "report" : "comparison");
    }
    if (!ml_output_commit(&o, err, sizeof err))
        return ml_cli_error("%s: %s", path, err);
    return 0;
}

int ml_finish(const ml_finish_job *j)
{
    const ml_output_opts *out = j->out;
    if (j->report && out->limits)
        ml_limits_apply(out->limits, j->report);
    int rc = j->report
                 ? ml_plots_write_measure(out->plot_path, out->report_path, j->report, j->plot, j->cmdline)
                 : ml_plots_write_compare(out->plot_path, out->report_path, j->comparison, j->plot, j->plot_b,
                                          j->cmdline);
    if (rc == 0)
        rc = write_text(j);
    if (rc != 0)
        return rc;
    if (j->input_failed)
        return ML_EXIT_USAGE;
    const bool failed =
        j->report ? strcmp(ml_report_verdict(j->report), "fail") == 0 : j->comparison->nworse > 0;
    return failed ? ML_EXIT_FAIL : ML_EXIT_OK;
}
