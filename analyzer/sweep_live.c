#include "analyzer/sweep.h"
#include "analyzer/cli.h"
int ml_sweep_live(ml_sweep_opts *o, ml_finish_files *files, const char *cmdline){(void)o;(void)files;(void)cmdline;return ml_cli_error("not yet");}
