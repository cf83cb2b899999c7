/* Runs a command and prints its peak resident memory (KiB) and wall time (s) on stderr's last
 * line as "peakrss_kib=N wall_s=T". A small parent keeps the child's ru_maxrss meaningful (a child
 * forked from a large interpreter inherits the interpreter's high-water mark).
 * SPDX-License-Identifier: MIT
 */
#define _GNU_SOURCE
#include <stdio.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

int main(int argc, char **argv)
{
    if (argc < 2) {
        fprintf(stderr, "usage: ml-peakrss COMMAND [ARGS...]\n");
        return 2;
    }
    struct timespec t0, t1;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    pid_t pid = fork();
    if (pid < 0)
        return 2;
    if (pid == 0) {
        execvp(argv[1], argv + 1);
        _exit(127);
    }
    int status = 0;
    struct rusage ru;
    if (wait4(pid, &status, 0, &ru) < 0)
        return 2;
    clock_gettime(CLOCK_MONOTONIC, &t1);
    double wall = (double)(t1.tv_sec - t0.tv_sec) + 1e-9 * (double)(t1.tv_nsec - t0.tv_nsec);
    fprintf(stderr, "peakrss_kib=%ld wall_s=%.6f\n", ru.ru_maxrss, wall);
    return WIFEXITED(status) ? WEXITSTATUS(status) : 2;
}
