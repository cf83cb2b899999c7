/* FFT planning and execution cost for the benchmark: for each transform named on the command line,
 * the time FFTW needs to plan it (FFTW_ESTIMATE, as modlens does, and FFTW_MEASURE, which would
 * need wisdom kept on disk to pay off) and the time one transform then takes with each plan
 * (median of 31 after a warm-up).
 * Usage: ml-plan SIZE:complex|real:double|float ...
 * Prints one line per argument: "plan SIZE KIND PREC est_plan_ms est_exec_ms measure_plan_ms measure_exec_ms".
 * SPDX-License-Identifier: MIT
 */
#define _POSIX_C_SOURCE 200809L
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

/* Times planning and the median of 31 executions (after one warm-up) of one transform. */
#define ML_PLAN_ONE(NAME, R, C, ALLOC_R, ALLOC_C, PLAN_C, PLAN_R, EXEC, DESTROY, FREE)                  \
    static void NAME(int n, int cplx, unsigned flags, double *plan_ms, double *exec_ms)                 \
    {                                                                                                   \
        C *ci = ALLOC_C((size_t)n), *co = ALLOC_C((size_t)n);                                           \
        R *ri = ALLOC_R((size_t)n);                                                                     \
        if (ci == NULL || co == NULL || ri == NULL) {                                                   \
            fprintf(stderr, "ml-plan: out of memory\n");                                               \
            exit(2);                                                                                    \
        }                                                                                               \
        double t0 = now_ms();                                                                           \
        void *p = cplx ? (void *)PLAN_C(n, ci, co, FFTW_FORWARD, flags) : (void *)PLAN_R(n, ri, co, flags); \
        *plan_ms = now_ms() - t0;                                                                       \
        for (int i = 0; i < n; i++) { /* MEASURE scribbles on the arrays: fill after planning */        \
            ((R *)ci)[2 * i] = (R)(i % 7) - 3;                                                          \
            ((R *)ci)[2 * i + 1] = (R)(i % 5);                                                          \
            ri[i] = (R)(i % 11) - 5;                                                                    \
        }                                                                                               \
        double t[32];                                                                                   \
        for (int k = 0; k < 32; k++) {                                                                  \
            double a = now_ms();                                                                        \
            EXEC(p);                                                                                    \
            t[k] = now_ms() - a;                                                                        \
        }                                                                                               \
        qsort(t + 1, 31, sizeof t[0], cmp);                                                             \
        *exec_ms = t[16];                                                                               \
        DESTROY(p);                                                                                     \
        FREE(ci);                                                                                       \
        FREE(co);                                                                                       \
        FREE(ri);                                                                                       \
    }
ML_PLAN_ONE(one_double, double, fftw_complex, fftw_alloc_real, fftw_alloc_complex, fftw_plan_dft_1d,
            fftw_plan_dft_r2c_1d, fftw_execute, fftw_destroy_plan, fftw_free)
ML_PLAN_ONE(one_float, float, fftwf_complex, fftwf_alloc_real, fftwf_alloc_complex, fftwf_plan_dft_1d,
            fftwf_plan_dft_r2c_1d, fftwf_execute, fftwf_destroy_plan, fftwf_free)

int main(int argc, char **argv)
{
    if (argc < 2) {
        fprintf(stderr, "usage: ml-plan SIZE:complex|real:double|float ...\n");
        return 2;
    }
    for (int a = 1; a < argc; a++) {
        char kind[16], prec[16];
        int n = 0;
        if (sscanf(argv[a], "%d:%15[a-z]:%15[a-z]", &n, kind, prec) != 3 || n < 16
            || (strcmp(kind, "complex") != 0 && strcmp(kind, "real") != 0)
            || (strcmp(prec, "double") != 0 && strcmp(prec, "float") != 0)) {
            fprintf(stderr, "ml-plan: %s: expected SIZE:complex|real:double|float\n", argv[a]);
            return 2;
        }
        const int cplx = strcmp(kind, "complex") == 0, single = strcmp(prec, "float") == 0;
        double pe, ee, pm, em;
        (single ? one_float : one_double)(n, cplx, FFTW_ESTIMATE, &pe, &ee);
        (single ? one_float : one_double)(n, cplx, FFTW_MEASURE, &pm, &em);
        printf("plan %d %s %s %.3f %.4f %.1f %.4f\n", n, kind, prec, pe, ee, pm, em);
        fftw_forget_wisdom();
        fftwf_forget_wisdom();
    }
    return 0;
}
