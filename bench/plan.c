/* FFT planning cost for the benchmark: for the transform sizes modlens uses, the time FFTW needs
 * to plan (FFTW_ESTIMATE, as modlens does, and FFTW_MEASURE, which would need wisdom kept on
 * disk to pay off) and the time one transform then takes with each plan (median of 31).
 * Prints one line per size: "plan SIZE KIND est_plan_ms est_exec_ms measure_plan_ms measure_exec_ms".
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
#include <complex.h>
#include <fftw3.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

static double now_ms(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return 1e3 * (double)t.tv_sec + 1e-6 * (double)t.tv_nsec;
}

static int cmp(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static void one(int n, int cplx, unsigned flags, double *plan_ms, double *exec_ms)
{
    fftw_complex *ci = fftw_alloc_complex((size_t)n), *co = fftw_alloc_complex((size_t)n);
    double *ri = fftw_alloc_real((size_t)n);
    double t0 = now_ms();
    fftw_plan p = cplx ? fftw_plan_dft_1d(n, ci, co, FFTW_FORWARD, flags) : fftw_plan_dft_r2c_1d(n, ri, co, flags);
    *plan_ms = now_ms() - t0;
    for (int i = 0; i < n; i++) { /* MEASURE scribbles on the arrays: fill after planning */
        ci[i] = (double)(i % 7) - 3.0 + I * (double)(i % 5);
        ri[i] = (double)(i % 11) - 5.0;
    }
    double t[31];
    for (int k = 0; k < 31; k++) {
        double a = now_ms();
        fftw_execute(p);
        t[k] = now_ms() - a;
    }
    qsort(t, 31, sizeof t[0], cmp);
    *exec_ms = t[15];
    fftw_destroy_plan(p);
    fftw_free(ci);
    fftw_free(co);
    fftw_free(ri);
}

int main(void)
{
    /* 65536: the Welch spectra at 48 kHz (complex for I/Q, real for audio); 2048: the channel
     * filter's overlap-save transform for its 313 taps */
    const struct { int n, cplx; } sizes[] = {{65536, 1}, {65536, 0}, {2048, 1}};
    for (size_t i = 0; i < sizeof sizes / sizeof sizes[0]; i++) {
        double pe, ee, pm, em;
        one(sizes[i].n, sizes[i].cplx, FFTW_ESTIMATE, &pe, &ee);
        one(sizes[i].n, sizes[i].cplx, FFTW_MEASURE, &pm, &em);
        printf("plan %d %s %.3f %.4f %.1f %.4f\n", sizes[i].n, sizes[i].cplx ? "complex" : "real", pe, ee, pm, em);
        fftw_forget_wisdom();
    }
    return 0;
}
