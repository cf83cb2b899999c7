/* Test probe: the kind evidence of dsp/kind.h for a raw float32 file, as JSON on standard output.
 * SPDX-License-Identifier: MIT
 *
 * usage: ml-kind-probe RATE CHANNELS FILE.f32 [--mains 0|50|60] [--block N]
 * CHANNELS 2: the pair evidence of channels 1 and 2 (ml_pair), then the IF evidence of channel 1;
 * CHANNELS 1: the IF evidence (ml_if_evidence) of the channel's default Welch spectrum.
 * Exit status 0, or 2 with a message on standard error. Not installed.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "dsp/kind.h"
#include "dsp/spectrum.h"

static void num(const char *key, double v)
{
    if (isfinite(v))
        printf("\"%s\": %.17g, ", key, v);
    else
        printf("\"%s\": null, ", key);
}

int main(int argc, char **argv)
{
    if (argc < 4) {
        fprintf(stderr, "ml-kind-probe: usage: ml-kind-probe RATE CHANNELS FILE.f32 [--mains HZ] [--block N]\n");
        return 2;
    }
    const double rate = atof(argv[1]);
    const size_t ch = (size_t)atol(argv[2]);
    double mains = 0;
    size_t block = 4096;
    for (int i = 4; i + 1 < argc; i += 2) {
        if (strcmp(argv[i], "--mains") == 0)
            mains = atof(argv[i + 1]);
        else if (strcmp(argv[i], "--block") == 0)
            block = (size_t)atol(argv[i + 1]);
    }
    FILE *f = fopen(argv[3], "rb");
    if (f == NULL || ch < 1 || ch > 2 || block == 0) {
        fprintf(stderr, "ml-kind-probe: bad arguments\n");
        if (f)
            fclose(f);
        return 2;
    }
    fseek(f, 0, SEEK_END);
    const size_t n = (size_t)ftell(f) / sizeof(float) / ch;
    fseek(f, 0, SEEK_SET);
    float *x = malloc((n ? n : 1) * ch * sizeof *x), *mono = malloc((n ? n : 1) * sizeof *mono);
    if (x == NULL || mono == NULL || fread(x, sizeof *x, n * ch, f) != n * ch) {
        fclose(f);
        free(x);
        free(mono);
        fprintf(stderr, "ml-kind-probe: cannot read\n");
        return 2;
    }
    fclose(f);
    char why[512];
    printf("{");
    if (ch == 2) {
        ml_pair_config pc = ml_pair_config_default(rate);
        ml_pair *p = NULL;
        if (ml_pair_create(&pc, &p) != ML_OK)
            return 2;
        for (size_t i = 0; i < n; i += block)
            ml_pair_push(p, x + 2 * i, n - i < block ? n - i : block, 2, 0, 1);
        ml_pair_result r;
        ml_pair_get(p, &r);
        printf("\"pair\": {\"verdict\": %d, ", (int)r.verdict);
        num("correlation", r.correlation);
        num("principal_fraction", r.principal_fraction);
        num("line_hz", r.line_hz);
        num("image_db", r.image_db);
        num("asymmetry_db", r.asymmetry_db);
        printf("\"silent_channel\": %zu, \"reason\": \"%s\"}, ", r.silent_channel, ml_pair_reason(&r, why, sizeof why));
        ml_pair_destroy(p);
    }
    for (size_t i = 0; i < n; i++)
        mono[i] = x[i * ch];
    ml_spectrum_config sc = ml_spectrum_config_default(rate);
    while (sc.nfft > 256 && 2 * sc.nfft > n)
        sc.nfft /= 2;
    sc.hop = sc.nfft / 2;
    ml_spectrum *s = NULL;
    if (ml_spectrum_create(&sc, &s) != ML_OK)
        return 2;
    ml_spectrum_push(s, mono, n);
    ml_if_evidence_result e;
    ml_status st = ml_if_evidence(s, mains, &e);
    printf("\"channel\": {\"status\": \"%s\", \"verdict\": %d, \"why\": %d, ", ml_strerror(st), (int)e.verdict, (int)e.why);
    num("carrier_hz", e.carrier_hz);
    num("sideband_hz", e.sideband_hz);
    num("sideband_dbc", e.sideband_dbc);
    num("baseband_dbc", e.baseband_dbc);
    num("harmonic_dbc", e.harmonic_dbc);
    printf("\"reason\": \"%s\"}}\n", ml_if_evidence_reason(&e, why, sizeof why));
    ml_spectrum_destroy(s);
    free(x);
    free(mono);
    return 0;
}
