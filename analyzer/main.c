/* modlens: modulation-quality and distortion analyser for AM radio work.
 * SPDX-License-Identifier: MIT
 */
#include <stdio.h>
#include <string.h>

#include "analyzer/cli.h"
#include "analyzer/commands.h"

#ifndef ML_VERSION
#define ML_VERSION "0.0.0"
#endif

static void usage(FILE *f)
{
    fprintf(f,
            "usage: modlens COMMAND [options]\n"
            "       modlens --help | --version\n"
            "\n"
            "Turns a sound card recording into modulation-quality and distortion figures for AM radio.\n"
            "\n"
            "commands:\n"
            "  measure FILE   analyse a recording (THD, THD+N, SINAD, SNR, hum, ...) against limits\n"
            "  compare A B    compare two measurements (recordings or saved JSON): better, worse, same\n"
            "  sweep FILE     frequency response and distortion step by step (a recording, or played live)\n"
            "  live           capture from a sound card, then analyse as measure does\n"
            "  watch          live meter in the terminal: modulation or distortion, updated 10 times a second\n"
            "  devices        list the sound-card inputs and outputs\n"
            "  tone           write a test signal to a file, or play it\n"
            "  log            log levels, hum, noise and interference events for hours (CSV)\n"
            "  card           qualify the sound card (its own floor) from a loopback; level calibration\n"
            "\n"
            "options:\n"
            "  --help         this summary (also -h or help)\n"
            "  --version      the program's name and version\n"
            "\n"
            "'modlens COMMAND --help' describes each command.\n\n%s",
            ml_cli_safety);
}

int main(int argc, char **argv)
{
    if (argc < 2) {
        usage(stderr);
        return ML_EXIT_USAGE;
    }
    const char *cmd = argv[1];
    if (strcmp(cmd, "--help") == 0 || strcmp(cmd, "-h") == 0 || strcmp(cmd, "help") == 0) {
        usage(stdout);
        return ML_EXIT_OK;
    }
    if (strcmp(cmd, "--version") == 0) {
        printf("modlens %s\n", ML_VERSION);
        return ML_EXIT_OK;
    }
    if (strcmp(cmd, "measure") == 0)
        return ml_cmd_measure(argc - 1, argv + 1);
    if (strcmp(cmd, "devices") == 0)
        return ml_cmd_devices(argc - 1, argv + 1);
    if (strcmp(cmd, "live") == 0)
        return ml_cmd_live(argc - 1, argv + 1);
    if (strcmp(cmd, "watch") == 0)
        return ml_cmd_watch(argc - 1, argv + 1);
    if (strcmp(cmd, "compare") == 0)
        return ml_cmd_compare(argc - 1, argv + 1);
    if (strcmp(cmd, "tone") == 0)
        return ml_cmd_tone(argc - 1, argv + 1);
    if (strcmp(cmd, "sweep") == 0)
        return ml_cmd_sweep(argc - 1, argv + 1);
    if (strcmp(cmd, "log") == 0)
        return ml_cmd_log(argc - 1, argv + 1);
    if (strcmp(cmd, "card") == 0)
        return ml_cmd_card(argc - 1, argv + 1);
    return ml_cli_error("unknown command '%s' (try 'modlens --help')", cmd);
}
