/* Safe output files: written to a temporary beside the target, renamed into place when complete,
 * never the same file as an input.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_ANALYZER_OUTPUT_H
#define ML_ANALYZER_OUTPUT_H

#include <stdbool.h>
#include <stdio.h>

typedef struct {
    FILE *f;
    char path[1024];
    char tmp[1040];
    bool is_stdout;
} ml_output;

/* True when a and b name the same existing file. */
bool ml_same_file(const char *a, const char *b);

/* path NULL or "-" is stdout. Otherwise creates a temporary in path's folder.
 * Returns false with a message in err when the folder is missing or unwritable. */
bool ml_output_open(ml_output *o, const char *path, char *err, size_t errlen);
/* Flushes and renames into place; false with err on failure (the temporary is removed). */
bool ml_output_commit(ml_output *o, char *err, size_t errlen);
/* Removes the temporary without touching path. */
void ml_output_abort(ml_output *o);

#endif
