/* sweep --device: plays the step plan on an output while capturing the input into a file (the
 * --save temporary, or an unnamed temporary file), measures the round trip as 'live --play-tone'
 * does, then analyses the capture as 'sweep FILE' analyses a file.
 * SPDX-License-Identifier: MIT
 *
 * The played signal is the one 'tone' writes for the same plan options (analyzer/plan.h): the
 * plan through ml_step_plan_to_synth into dsp/synth.h, one pass, after PREROLL_S of silence (so
 * the first tone's return can be found) and followed by silence while the last step comes back.
 */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "analyzer/cli.h"
#include "analyzer/finish.h"
#include "analyzer/sweep.h"
#include "dsp/synth.h"
#include "io/audio.h"
#include "io/printable.h"

#define PREROLL_S 0.25  /* silence before the first tone (as live --play-tone)                   */
#define TAIL_S 1.0      /* silence captured after the last step: the round trip and its settling  */
#define ONSET_SPAN_S 3.6 /* the onset search reads up to 3 s after the preroll: the capture is at
                            least this long                                                         */

typedef struct {
    ml_synth *syn;
    uint64_t preroll, tones, played; /* frames: silence first, then the plan's, then silence */
} plan_feed;

static void feed_plan(void *ctx, float *buf, size_t n)
{
    plan_feed *t = ctx;
    for (size_t i = 0; i < n;) {
        const uint64_t at = t->played + i;
        if (at < t->preroll || at >= t->preroll + t->tones) {
            buf[i++] = 0.0f;
            continue;
        }
        const uint64_t left = t->preroll + t->tones - at;
        const size_t k = n - i < left ? n - i : (size_t)left;
        ml_synth_generate(t->syn, buf + i, k);
        i += k;
    }
    t->played += n;
}

static ml_source *volatile g_capture;

static void on_stop(int sig)
{
    (void)sig;
    ml_source_stop(g_capture);
}

/* The plan at the capture's rate into the generator; *rate the capture's rate. */
static int plan_setup(ml_sweep_opts *o, double *rate, plan_feed *feed)
{
    char e[256];
    *rate = o->m.in.rate_hz;
    if (*rate == 0 && ml_audio_device_rate(o->m.in.device, true, rate, e, sizeof e) != ML_OK)
        return ml_cli_error("%s: %s", o->m.in.device, e);
    size_t dropped = 0;
    int rc = ml_plan_finish(&o->plan, *rate, &dropped);
    if (rc != 0)
        return rc;
    ml_synth_config sc = ml_synth_config_default(*rate);
    sc.kind = ML_SYNTH_STEPS;
    if (ml_step_plan_entries(&o->plan.plan) > ML_SYNTH_MAX_STEPS)
        return ml_cli_error("the plan has %zu tones and pauses; at most %d (fewer frequencies or levels)",
                            ml_step_plan_entries(&o->plan.plan), ML_SYNTH_MAX_STEPS);
    if (ml_step_plan_to_synth(&o->plan.plan, *rate, sc.steps, ML_SYNTH_MAX_STEPS, &sc.nsteps) != ML_OK
        || ml_synth_create(&sc, &feed->syn) != ML_OK)
        return ml_cli_error("the plan cannot be played at %.0f Hz", *rate);
    feed->preroll = (uint64_t)llround(PREROLL_S * *rate);
    feed->tones = ml_synth_cycle_frames(feed->syn);
    if (dropped > 0)
        fprintf(stderr, "modlens: sweep: %zu frequencies of the set lie at or above %.0f Hz and are left "
                        "out\n",
                dropped, *rate / 2);
    return 0;
}

/* A file for the capture: --save's temporary (its descriptor in files), else an unnamed file
 * in $TMPDIR (or /tmp), removed from its folder at once. *own is that file's descriptor (-1 for
 * --save's). 0 or an exit status. */
static int capture_file(ml_finish_files *files, int *fd, int *own)
{
    *own = -1;
    int rc = ml_finish_capture_begin(files, fd);
    if (rc != 0 || *fd >= 0)
        return rc;
    const char *dir = getenv("TMPDIR");
    char path[4096];
    snprintf(path, sizeof path, "%s/modlens-sweep-XXXXXX", dir && dir[0] ? dir : "/tmp");
    *own = mkstemp(path);
    if (*own < 0)
        return ml_cli_error("%s: cannot create the capture's temporary file: %s", path, strerror(errno));
    unlink(path);
    *fd = *own;
    return 0;
}

/* Captures the whole plan (reads drive the capture into the file); the capture ends early after
 * an interrupt or a device fault. */
static int capture(ml_sweep_opts *o, ml_segment *seg, int64_t total)
{
    float *buf = malloc(ML_BLOCK_FRAMES * (size_t)seg->info->channels * sizeof *buf);
    if (buf == NULL)
        return ml_cli_error("out of memory");
    seg->nframes = total;
    int rc = 0;
    for (int64_t done = 0; rc == 0 && done < seg->nframes;) {
        const size_t want =
            seg->nframes - done < ML_BLOCK_FRAMES ? (size_t)(seg->nframes - done) : ML_BLOCK_FRAMES;
        size_t got = 0;
        rc = ml_input_read(o->m.in.path, seg, buf, want, &got, done);
        done += (int64_t)got;
    }
    free(buf);
    return rc;
}

/* The capture's own figures: device, latency, lost frames, completeness; the plan against the
 * steps found. */
static void describe_capture(ml_report *rep, const ml_sweep_opts *o, const ml_live_stats *ls, double rate,
                             int64_t latency, const char *latency_why, bool early)
{
    char dev[sizeof ls->device_name + 8];
    snprintf(dev, sizeof dev, "live:%s", ls->device_name);
    ml_printable(rep->path, sizeof rep->path, dev);
    ml_measure_add(rep, "live.lost_frames", (double)ls->lost_frames);
    ml_measure_add(rep, "live.overflows", (double)ls->overflow_events);
    ml_measure_add(rep, "live.latency_ms", latency >= 0 ? 1000.0 * (double)latency / rate : NAN);
    ml_measure_add(rep, "live.latency_frames", latency >= 0 ? (double)latency : NAN);
    if (latency < 0) {
        ml_report_unmeasured(rep, "live.latency_ms", "%s", latency_why);
        ml_report_unmeasured(rep, "live.latency_frames", "%s", latency_why);
    }
    char shown[4 * sizeof ls->device_name];
    ml_printable(shown, sizeof shown, ls->device_name);
    ml_report_add_text(rep, "live.device", shown);
    ml_printable(shown, sizeof shown, ls->host_api);
    ml_report_add_text(rep, "live.host_api", shown);
    ml_report_add_text(rep, "live.complete", early ? "no" : "yes");
    if (early)
        ml_report_note(rep, "capture incomplete: %s", ls->failed ? "the device failed" : "interrupted");
    if (ls->lost_frames > 0)
        ml_report_note(rep, "%llu frames were lost (the computer fell behind the sound card)",
                       (unsigned long long)ls->lost_frames);
    if (ls->underflow_frames > 0)
        ml_report_note(rep, "the played steps ran dry for %llu frames",
                       (unsigned long long)ls->underflow_frames);
    const ml_step_plan *p = &o->plan.plan;
    const ml_metric *found = ml_report_find(rep, "sweep.steps");
    const size_t planned = p->nfreqs * p->nlevels;
    if (found && found->valid && (size_t)found->value != planned)
        ml_report_note(rep, "%zu steps were played (%zu frequencies x %zu levels) and %.0f found in the "
                            "capture",
                       planned, p->nfreqs, p->nlevels, found->value);
}

/* The capture read back as a file: the round trip (audio), then the sweep's analysis. */
static int analyse_capture(ml_sweep_opts *o, int fd, const plan_feed *feed, ml_report *rep,
                           ml_report_series *ser, int64_t *latency, const char **latency_why)
{
    char err[512];
    ml_segment seg;
    memset(&seg, 0, sizeof seg);
    if (ml_source_open_fd(fd, &seg.src, err, sizeof err) != ML_OK)
        return ml_cli_error("the capture cannot be read back: %s", err);
    seg.info = ml_source_get_info(seg.src);
    seg.nframes = seg.info->frames;
    *latency = -1;
    *latency_why = "the capture is not audio: the round trip is measured on an audio capture";
    ml_kind kind = o->m.in.kind;
    int rc = 0;
    if (kind == ML_KIND_AUDIO || kind == ML_KIND_AUTO) {
        int64_t onset = 0;
        ml_segment probe = seg;
        rc = ml_live_find_onset(o->m.in.path, o->m.in.channel, o->plan.plan.freqs_hz[0], &probe,
                                feed->preroll, &onset, latency);
        if (rc != 0 && kind == ML_KIND_AUTO) { /* perhaps an IF or I/Q capture: analysed without it */
            rc = 0;
            *latency = -1;
            *latency_why = "the first tone was not found in the capture's channel";
        }
        if (rc == 0 && ml_source_seek(seg.src, 0) != ML_OK)
            rc = ml_cli_error("the capture cannot be read back: %s", ml_source_detail(seg.src));
    }
    o->m.in.path = "live";
    if (rc == 0)
        rc = ml_sweep_analyse(o, &seg, rep, ser);
    ml_source_close(seg.src);
    return rc;
}

int ml_sweep_live(ml_sweep_opts *o, ml_finish_files *files, const char *cmdline)
{
    ml_live_config lc = ml_live_config_default();
    plan_feed feed = {0};
    double rate = 0;
    int fd = -1, own = -1;
    int rc = plan_setup(o, &rate, &feed);
    if (rc == 0)
        rc = capture_file(files, &fd, &own);
    const int64_t total =
        (int64_t)fmax((double)(feed.preroll + feed.tones) + TAIL_S * rate, ONSET_SPAN_S * rate + 1);
    lc.rate_hz = rate;
    lc.frames = total;
    lc.save_fd = fd;
    lc.fill = feed_plan;
    lc.fill_ctx = &feed;
    lc.output_device = o->m.in.output_device;
    lc.output_channels = 1;
    ml_segment seg;
    memset(&seg, 0, sizeof seg);
    if (rc == 0)
        rc = ml_input_open_device(&o->m.in, &lc, &seg);
    if (rc != 0) {
        ml_synth_destroy(feed.syn);
        if (own >= 0)
            close(own);
        return ml_finish_failed(files, rc);
    }
    struct sigaction sa, old_int, old_term;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_stop;
    sigemptyset(&sa.sa_mask);
    g_capture = seg.src;
    sigaction(SIGINT, &sa, &old_int);
    sigaction(SIGTERM, &sa, &old_term);
    rc = capture(o, &seg, total);
    sigaction(SIGINT, &old_int, NULL);
    sigaction(SIGTERM, &old_term, NULL);
    ml_live_stats ls;
    memset(&ls, 0, sizeof ls);
    ml_source_live_stats(seg.src, &ls);
    g_capture = NULL;
    ml_source_close(seg.src); /* completes the capture file */
    static ml_report rep;
    ml_sweep_output out;
    ml_sweep_output_init(&out, &rep, o);
    int64_t latency = -1;
    const char *latency_why = "";
    if (rc == 0 && ls.captured_frames == 0)
        rc = ml_cli_error("%s: no frame was captured", o->m.in.device);
    if (rc == 0)
        rc = analyse_capture(o, fd, &feed, out.rep, &out.ser, &latency, &latency_why);
    if (rc == 0)
        describe_capture(out.rep, o, &ls, rate, latency, latency_why, seg.ended_early);
    if (own >= 0)
        close(own);
    const int crc = ml_finish_capture_end(files, ls.captured_frames > 0);
    if (rc == 0 && crc == 0)
        rc = ml_finish(&(ml_finish_job){.out = &o->m.out, .files = files, .report = out.rep, .plot = &out.pd,
                                        .cmdline = cmdline, .input_failed = seg.failed});
    else
        rc = ml_finish_failed(files, rc != 0 ? rc : crc);
    ml_synth_destroy(feed.syn);
    ml_sweep_output_free(&out);
    return rc;
}
