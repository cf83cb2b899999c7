/* Safe output files: every file modlens writes goes through here.
 * SPDX-License-Identifier: MIT
 *
 * A command registers, before any work, the files it reads (inputs) and every file it will write
 * (outputs), and checks them all at once (ml_output_set_check). An output is refused when it
 *  - is the same file as an input or as another output (device and inode when the file exists,
 *    through symbolic and hard links; the canonical path, with every folder's links resolved,
 *    when it does not exist yet);
 *  - exists and is not a regular file: a directory, a device node, a FIFO, a socket;
 *  - is a symbolic link to nothing (dangling or a loop). A symbolic link to a regular file is
 *    written through: its target is replaced, the link itself stays a link;
 *  - lies in a missing folder, in something that is not a folder, or in a folder where no file
 *    can be created (tried: a temporary is created and removed again);
 *  - has a path of PATH_MAX (4096) bytes or more, or a component longer than the file system
 *    allows. No path is ever cut to fit a buffer: paths are held in allocated strings.
 * Standard output ("-") is accepted only where a command allows it, never twice, and never when
 * it is redirected into one of the inputs.
 *
 * Writing goes to a temporary in the target's folder (mkstemp: "<name>.XXXXXX", the name cut to
 * fit the file system's name length), or to memory for standard output. ml_output_set_commit
 * then publishes everything at once: standard output first, then each temporary renamed over its
 * target (the folder is synced). Nothing is published before the commit, so an error exit that
 * calls ml_output_set_abort (or destroys the set) leaves no trace: no report, picture, PDF or
 * capture. A replaced file keeps its permission bits; a new one gets 0666 minus the umask.
 *
 * Limits: the checks are repeated just before the renames, but a file swapped in between by
 * another program is not detected atomically; if a rename fails after others succeeded (which
 * needs the folder to change under us), the ones done stay done and the error names the file.
 * A process killed with SIGKILL leaves its temporaries ("<name>.XXXXXX") behind.
 *
 * All functions are for one thread; none prints or exits.
 */
#ifndef ML_IO_OUTPUT_H
#define ML_IO_OUTPUT_H

#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>

#include "dsp/status.h"

#define ML_OUTPUT_MAX 8 /* outputs per set                         */
#define ML_OUTPUT_MAX_INPUTS 8 /* inputs per set                   */

/* Flags of ml_output_set_add. */
enum {
    ML_OUTPUT_STDOUT_OK = 1 << 0, /* "-" means standard output (written at the commit, from memory) */
};

typedef struct ml_output_set ml_output_set;
typedef struct ml_output ml_output;

/* A new, empty set. ML_ENOMEM. Reads the process umask (call it before starting threads). */
ml_status ml_output_set_create(ml_output_set **out);

/* Removes every temporary that was not committed and frees the set (NULL: no-op). */
void ml_output_set_destroy(ml_output_set *s);

/* Registers a file no output may replace. path NULL: ignored. what names it in messages
 * ("the input", "the limits profile"); both strings must outlive the set. ML_EINVAL when the
 * set is full (ML_OUTPUT_MAX_INPUTS). */
ml_status ml_output_set_input(ml_output_set *s, const char *path, const char *what);

/* Registers an output. path NULL: nothing registered, *out = NULL, ML_OK. what names it in
 * messages (an option such as "--plot"); path and what must outlive the set. ML_EINVAL when
 * the set is full (ML_OUTPUT_MAX). */
ml_status ml_output_set_add(ml_output_set *s, const char *path, const char *what, unsigned flags,
                            ml_output **out);

/* Checks every registered output (see the file comment). ML_OK, or ML_EIO with *bad set to the
 * offending path as given (or "standard output") and a reason without that path in
 * err[errlen], e.g. "is a FIFO, not a regular file" or "refusing to overwrite an input file
 * (the input) with --output". Call it before any work; it may be called again. */
ml_status ml_output_set_check(ml_output_set *s, const char **bad, char *err, size_t errlen);

/* Starts writing an output (after a successful check): creates its temporary, or a memory
 * buffer for standard output, and returns a stream for it in *f (owned by o: do not fclose
 * it). fileno(*f) is a seekable descriptor for a file (for sinks that write by descriptor; do
 * not close it either). ML_EIO with the reason in err[errlen], ML_ENOMEM, ML_EINVAL when o was
 * already begun or the set was not checked. */
ml_status ml_output_begin(ml_output *o, FILE **f, char *err, size_t errlen);

/* Ends writing: flushes, syncs and closes the temporary, which then waits for the commit.
 * ML_EIO with the reason ("cannot write: No space left on device") when anything written was
 * lost; the output is then discarded. */
ml_status ml_output_end(ml_output *o, char *err, size_t errlen);

/* Drops one output (NULL: no-op): its temporary is removed and the commit skips it. */
void ml_output_discard(ml_output *o);

/* Publishes every output that was begun and ended (see the file comment); outputs never begun
 * or discarded are skipped. An output begun but not ended is an error. ML_OK, or ML_EIO with
 * *bad and err as for the check; on an error before the first rename nothing is published and
 * every temporary is removed. */
ml_status ml_output_set_commit(ml_output_set *s, const char **bad, char *err, size_t errlen);

/* Removes every temporary and publishes nothing (the set stays usable for destroy). */
void ml_output_set_abort(ml_output_set *s);

/* The path as registered (for messages); "standard output" for standard output. */
const char *ml_output_path(const ml_output *o);
/* True for standard output. */
bool ml_output_is_stdout(const ml_output *o);
/* After a successful check: true when the target exists (a regular file, perhaps reached
 * through a symbolic link) and would be replaced. */
bool ml_output_exists(const ml_output *o);

/* One path on its own: ml_output_set_check for a set holding only this output and these
 * inputs (inputs[ninputs], NULL entries ignored). For callers that write a file in another way
 * (appending, for example) and need the same refusals. */
ml_status ml_output_check_path(const char *path, const char *what, const char *const *inputs, size_t ninputs,
                               char *err, size_t errlen);

/* True when a and b name the same existing file (device and inode, links followed). */
bool ml_same_file(const char *a, const char *b);

#endif
