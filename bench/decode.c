/* Decode floor for the benchmark: reads a file with libsndfile exactly as modlens does
 * (sf_readf_float in 4096-frame blocks) and does nothing else but touch the samples.
 * SPDX-License-Identifier: MIT
 */
#include <sndfile.h>
#include <stdio.h>
#include <stdlib.h>

int main(int argc, char **argv)
{
    if (argc != 2) {
        fprintf(stderr, "usage: ml-decode FILE\n");
        return 2;
    }
    SF_INFO fi = {0};
    SNDFILE *sf = sf_open(argv[1], SFM_READ, &fi);
    if (sf == NULL) {
        fprintf(stderr, "ml-decode: %s: %s\n", argv[1], sf_strerror(NULL));
        return 2;
    }
    float *buf = malloc(4096 * (size_t)fi.channels * sizeof *buf);
    if (buf == NULL)
        return 2;
    double sum = 0.0;
    sf_count_t n;
    while ((n = sf_readf_float(sf, buf, 4096)) > 0)
        for (sf_count_t i = 0; i < n * fi.channels; i++)
            sum += buf[i];
    printf("%g\n", sum);
    free(buf);
    sf_close(sf);
    return 0;
}
