/* placeholder replaced below */
#include "analyzer/commands.h"
#include "analyzer/cli.h"
int ml_cmd_tone(int argc, char **argv) { (void)argc; (void)argv; return ml_cli_error("tone: not built"); }
