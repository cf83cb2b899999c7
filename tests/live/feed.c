/* Test helper: a JACK client that plays a WAV file on its output ports, so that PortAudio sees it
 * as a capture device named after the client. Loops the file (or plays it once, then silence)
 * until SIGTERM/SIGINT. The whole file is loaded first: test files are a few seconds long.
 * SPDX-License-Identifier: MIT
 *
 * usage: ml-feed CLIENT FILE [--once]
 *        ml-feed --record CLIENT SOURCE_CLIENT SECONDS OUT.wav
 * Prints "ready" on stdout once its ports are active. The file's rate must equal the server's.
 * --record is the other direction: input ports connected straight to every output port of
 * SOURCE_CLIENT (waiting up to 10 s for them), SECONDS of them written to OUT.wav (float), from
 * the first cycle after the connection.
 */
#define _POSIX_C_SOURCE 200809L
#include <jack/jack.h>
#include <signal.h>
#include <sndfile.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#define MAX_PORTS 8

static float *samples;
static sf_count_t nframes_file;
static int nch;
static jack_port_t *ports[MAX_PORTS];
static atomic_llong pos;
static int once;
static volatile sig_atomic_t quit;

static float *rec;
static atomic_llong rec_pos;
static long long rec_frames;
static atomic_int rec_armed;

static void on_signal(int sig)
{
    (void)sig;
    quit = 1;
}

static int process_record(jack_nframes_t n, void *arg)
{
    (void)arg;
    if (!atomic_load(&rec_armed))
        return 0;
    long long p = atomic_load(&rec_pos);
    const float *in[MAX_PORTS];
    for (int c = 0; c < nch; c++)
        in[c] = jack_port_get_buffer(ports[c], n);
    for (jack_nframes_t i = 0; i < n && p < rec_frames; i++, p++)
        for (int c = 0; c < nch; c++)
            rec[p * nch + c] = in[c][i];
    atomic_store(&rec_pos, p);
    return 0;
}

static int record_main(int argc, char **argv)
{
    if (argc != 6) {
        fprintf(stderr, "usage: ml-feed --record CLIENT SOURCE_CLIENT SECONDS OUT.wav\n");
        return 2;
    }
    jack_status_t status;
    jack_client_t *cl = jack_client_open(argv[2], JackNoStartServer, &status);
    if (cl == NULL) {
        fprintf(stderr, "ml-feed: no JACK server (status 0x%x)\n", (unsigned)status);
        return 2;
    }
    const int rate = (int)jack_get_sample_rate(cl);
    char pattern[160];
    snprintf(pattern, sizeof pattern, "^%s:", argv[3]);
    const char **src = NULL;
    for (int tries = 0; tries < 500 && (src == NULL || src[0] == NULL); tries++) {
        if (src)
            jack_free(src);
        src = jack_get_ports(cl, pattern, JACK_DEFAULT_AUDIO_TYPE, JackPortIsOutput);
        if (src == NULL || src[0] == NULL)
            usleep(20000);
    }
    if (src == NULL || src[0] == NULL) {
        fprintf(stderr, "ml-feed: no output ports of client %s\n", argv[3]);
        return 2;
    }
    nch = 0;
    while (src[nch] && nch < MAX_PORTS)
        nch++;
    rec_frames = (long long)(atof(argv[4]) * rate);
    rec = calloc((size_t)rec_frames * (size_t)nch, sizeof *rec);
    if (rec == NULL || rec_frames <= 0)
        return 2;
    for (int c = 0; c < nch; c++) {
        char name[32];
        snprintf(name, sizeof name, "in_%d", c + 1);
        ports[c] = jack_port_register(cl, name, JACK_DEFAULT_AUDIO_TYPE, JackPortIsInput, 0);
        if (ports[c] == NULL)
            return 2;
    }
    jack_set_process_callback(cl, process_record, NULL);
    if (jack_activate(cl) != 0)
        return 2;
    for (int c = 0; c < nch; c++)
        if (jack_connect(cl, src[c], jack_port_name(ports[c])) != 0) {
            fprintf(stderr, "ml-feed: cannot connect %s\n", src[c]);
            return 2;
        }
    jack_free(src);
    usleep(100000);
    atomic_store(&rec_armed, 1);
    printf("ready\n");
    fflush(stdout);
    signal(SIGTERM, on_signal);
    while (!quit && atomic_load(&rec_pos) < rec_frames)
        usleep(20000);
    jack_deactivate(cl);
    jack_client_close(cl);
    SF_INFO fi = {.samplerate = rate, .channels = nch, .format = SF_FORMAT_WAV | SF_FORMAT_FLOAT};
    SNDFILE *sf = sf_open(argv[5], SFM_WRITE, &fi);
    if (sf == NULL || sf_writef_float(sf, rec, atomic_load(&rec_pos)) != atomic_load(&rec_pos)) {
        fprintf(stderr, "ml-feed: cannot write %s\n", argv[5]);
        return 2;
    }
    sf_close(sf);
    free(rec);
    return 0;
}

static int process(jack_nframes_t n, void *arg)
{
    (void)arg;
    float *out[MAX_PORTS];
    for (int c = 0; c < nch; c++)
        out[c] = jack_port_get_buffer(ports[c], n);
    long long p = atomic_load(&pos);
    for (jack_nframes_t i = 0; i < n; i++, p++) {
        sf_count_t k = once ? p : p % nframes_file;
        for (int c = 0; c < nch; c++)
            out[c][i] = k < nframes_file ? samples[k * nch + c] : 0.0f;
    }
    atomic_store(&pos, p);
    return 0;
}

int main(int argc, char **argv)
{
    if (argc > 1 && strcmp(argv[1], "--record") == 0)
        return record_main(argc, argv);
    if (argc < 3) {
        fprintf(stderr, "usage: ml-feed CLIENT FILE [--once]\n");
        return 2;
    }
    once = argc > 3 && strcmp(argv[3], "--once") == 0;
    SF_INFO fi;
    memset(&fi, 0, sizeof fi);
    SNDFILE *sf = sf_open(argv[2], SFM_READ, &fi);
    if (sf == NULL || fi.channels > MAX_PORTS || fi.frames <= 0) {
        fprintf(stderr, "ml-feed: %s: cannot read (or more than %d channels)\n", argv[2], MAX_PORTS);
        return 2;
    }
    nch = fi.channels;
    nframes_file = fi.frames;
    samples = malloc((size_t)fi.frames * (size_t)nch * sizeof *samples);
    if (samples == NULL || sf_readf_float(sf, samples, fi.frames) != fi.frames) {
        fprintf(stderr, "ml-feed: %s: read failed\n", argv[2]);
        return 2;
    }
    sf_close(sf);
    jack_status_t status;
    jack_client_t *cl = jack_client_open(argv[1], JackNoStartServer, &status);
    if (cl == NULL) {
        fprintf(stderr, "ml-feed: no JACK server (status 0x%x)\n", (unsigned)status);
        return 2;
    }
    if ((int)jack_get_sample_rate(cl) != fi.samplerate) {
        fprintf(stderr, "ml-feed: the file is at %d Hz, the server at %u Hz\n", fi.samplerate,
                jack_get_sample_rate(cl));
        return 2;
    }
    for (int c = 0; c < nch; c++) {
        char name[32];
        snprintf(name, sizeof name, "out_%d", c + 1);
        ports[c] = jack_port_register(cl, name, JACK_DEFAULT_AUDIO_TYPE, JackPortIsOutput, 0);
        if (ports[c] == NULL) {
            fprintf(stderr, "ml-feed: cannot register port %s\n", name);
            return 2;
        }
    }
    jack_set_process_callback(cl, process, NULL);
    signal(SIGTERM, on_signal);
    signal(SIGINT, on_signal);
    if (jack_activate(cl) != 0) {
        fprintf(stderr, "ml-feed: cannot activate\n");
        return 2;
    }
    printf("ready\n");
    fflush(stdout);
    while (!quit)
        usleep(20000);
    jack_deactivate(cl);
    jack_client_close(cl);
    free(samples);
    return 0;
}
