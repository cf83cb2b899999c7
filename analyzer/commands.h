/* Entry points of the subcommands; each returns the process exit status.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_ANALYZER_COMMANDS_H
#define ML_ANALYZER_COMMANDS_H

int ml_cmd_measure(int argc, char **argv);
int ml_cmd_tone(int argc, char **argv);
int ml_cmd_devices(int argc, char **argv);
int ml_cmd_live(int argc, char **argv);
int ml_cmd_compare(int argc, char **argv);
int ml_cmd_log(int argc, char **argv);
int ml_cmd_watch(int argc, char **argv);
int ml_cmd_card(int argc, char **argv);
int ml_cmd_sweep(int argc, char **argv);

#endif
