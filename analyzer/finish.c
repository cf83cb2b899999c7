/* The finish step of the reporting commands (see analyzer/finish.h).
 * SPDX-License-Identifier: MIT
 */
#include "analyzer/finish.h"

#include <stdio.h>
#include <string.h>

#include "analyzer/cli.h"
#include "analyzer/plots.h"

int ml_finish_prepare(ml_output_opts *out, ml_limits *limits, const ml_finish_input *inputs, size_t ninputs,
                      const char *capture_path, ml_finish_files *files)
{
    char err[512];
    memset(files, 0, sizeof *files);
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
    ml_output_set *set = NULL;
    if (ml_output_set_create(&set) != ML_OK)
        return ml_cli_error("out of memory");
    files->set = set;
    ml_status st = ML_OK;
    for (size_t i = 0; i < ninputs && st == ML_OK; i++)
        st = ml_output_set_input(set, inputs[i].path, inputs[i].what);
    if (st == ML_OK)
        st = ml_output_set_input(set, out->limits_path, "the limits profile");
    if (st == ML_OK)
        st = ml_output_set_add(set, out->output_path ? out->output_path : "-", "the report (--output)",
                               ML_OUTPUT_STDOUT_OK, &files->report);
    if (st == ML_OK)
        st = ml_output_set_add(set, capture_path, "the capture (--save)", 0, &files->save);
    if (st == ML_OK)
        st = ml_output_set_add(set, out->plot_path, "the pictures (--plot)", 0, &files->plot);
    if (st == ML_OK)
        st = ml_output_set_add(set, out->report_path, "the PDF record (--report)", 0, &files->pdf);
    if (st != ML_OK) {
        ml_finish_files_free(files);
        return ml_cli_error("internal error: too many files to check");
    }
    const char *bad = "";
    if (ml_output_set_check(set, &bad, err, sizeof err) != ML_OK) {
        ml_finish_files_free(files);
        return ml_cli_error("%s: %s", bad, err);
    }
    return 0;
}

void ml_finish_files_free(ml_finish_files *files)
{
    ml_output_set_destroy(files->set);
    memset(files, 0, sizeof *files);
}

int ml_finish_capture_begin(ml_finish_files *files, int *fd)
{
    *fd = -1;
    if (files->save == NULL)
        return 0;
    char err[512];
    FILE *f = NULL;
    if (ml_output_begin(files->save, &f, err, sizeof err) != ML_OK)
        return ml_cli_error("%s: %s", ml_output_path(files->save), err);
    files->capturing = true;
    *fd = fileno(f);
    return 0;
}

int ml_finish_capture_end(ml_finish_files *files, bool frames_arrived)
{
    if (!files->capturing)
        return 0;
    files->capturing = false;
    char err[512];
    if (ml_output_end(files->save, err, sizeof err) != ML_OK)
        return ml_cli_error("%s: %s", ml_output_path(files->save), err);
    if (!frames_arrived)
        ml_output_discard(files->save);
    return 0;
}

/* Publishes every output ended so far; 0 or an exit status (error printed). */
static int commit(ml_finish_files *files)
{
    char err[512];
    const char *bad = "";
    if (ml_output_set_commit(files->set, &bad, err, sizeof err) != ML_OK)
        return ml_cli_error("%s: %s", bad, err);
    return 0;
}

int ml_finish_failed(ml_finish_files *files, int rc)
{
    ml_output_discard(files->report);
    ml_output_discard(files->plot);
    ml_output_discard(files->pdf);
    if (files->capturing) /* not ended: its file is incomplete */
        ml_output_discard(files->save);
    files->capturing = false;
    const int crc = commit(files);
    return crc != 0 && (rc == 0 || rc == ML_EXIT_FAIL) ? crc : rc;
}

/* The report or the comparison into its output. */
static int write_text(const ml_finish_job *j)
{
    ml_output *o = j->files->report;
    const char *path = ml_output_path(o);
    char err[512];
    FILE *f = NULL;
    if (ml_output_begin(o, &f, err, sizeof err) != ML_OK)
        return ml_cli_error("%s: %s", path, err);
    const ml_status st = j->report ? ml_report_write(f, j->report, j->out->format)
                                   : ml_compare_write(f, j->comparison, j->out->format);
    if (st != ML_OK) {
        ml_output_discard(o);
        return ml_cli_error("%s: cannot write the %s", path, j->report ? "report" : "comparison");
    }
    if (ml_output_end(o, err, sizeof err) != ML_OK)
        return ml_cli_error("%s: %s", path, err);
    return 0;
}

int ml_finish(const ml_finish_job *j)
{
    const ml_output_opts *out = j->out;
    ml_finish_files *files = j->files;
    if (j->report && out->limits)
        ml_limits_apply(out->limits, j->report);
    int rc = j->report ? ml_plots_write_measure(files->plot, files->pdf, j->report, j->plot, j->cmdline)
                       : ml_plots_write_compare(files->plot, files->pdf, j->comparison, j->plot, j->plot_b,
                                                j->cmdline);
    if (rc == 0)
        rc = write_text(j);
    if (rc != 0)
        return ml_finish_failed(files, rc);
    if ((rc = commit(files)) != 0) /* all or nothing */
        return rc;
    if (j->input_failed)
        return ML_EXIT_USAGE;
    /* an undecided check (a bound beyond its limit) has not passed either */
    const bool failed = j->report ? strcmp(ml_report_verdict(j->report), "fail") == 0
                                        || strcmp(ml_report_verdict(j->report), "undecided") == 0
                                  : j->comparison->nworse > 0;
    return failed ? ML_EXIT_FAIL : ML_EXIT_OK;
}
