/* libFuzzer target: the whole measure command on an audio file held in memory.
 * SPDX-License-Identifier: MIT
 *
 * The first byte picks the options (kind, report format, a nominal carrier); the rest is the
 * file, handed to `modlens measure` as a memfd path so that the same stat/open/decode path runs as
 * for a file on disk. Any exit status but 0, 1 or 2 is a failure; so are crashes and sanitizer
 * reports. Reports go to /dev/null (standard output is redirected once at start).
 */
#define _GNU_SOURCE
#include <fcntl.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <sys/mman.h>
#include <unistd.h>

#include "analyzer/commands.h"

int LLVMFuzzerInitialize(int *argc, char ***argv);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerInitialize(int *argc, char ***argv)
{
    (void)argc;
    (void)argv;
    int null = open("/dev/null", O_WRONLY);
    if (null >= 0) {
        fflush(stdout);
        dup2(null, STDOUT_FILENO);
        close(null);
    }
    return 0;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size < 1)
        return 0;
    const unsigned sel = data[0];
    int fd = memfd_create("capture", 0);
    if (fd < 0)
        return 0;
    if (size > 1 && write(fd, data + 1, size - 1) != (ssize_t)(size - 1)) {
        close(fd);
        return 0;
    }
    static const char *kinds[] = {"auto", "audio", "if", "iq"};
    static const char *formats[] = {"text", "json", "csv", "json"};
    char path[64];
    snprintf(path, sizeof path, "/proc/self/fd/%d", fd);
    char *argv[16];
    int argc = 0;
    argv[argc++] = "measure";
    argv[argc++] = "--kind";
    argv[argc++] = (char *)kinds[sel & 3];
    argv[argc++] = "--format";
    argv[argc++] = (char *)formats[(sel >> 2) & 3];
    if (sel & 16) {
        argv[argc++] = "--carrier";
        argv[argc++] = "1000";
    }
    if (sel & 32) {
        argv[argc++] = "--harmonics";
        argv[argc++] = "3";
    }
    argv[argc++] = path;
    argv[argc] = NULL;
    int rc = ml_cmd_measure(argc, argv);
    close(fd);
    if (rc < 0 || rc > 2)
        abort();
    return 0;
}
