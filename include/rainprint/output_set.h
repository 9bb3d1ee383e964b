/* output_set.h — outputs written whole or not at all, singly or as a set that goes
 * together (a CSV and its picture), and the check of an output path that a command
 * makes before any work starts.
 *
 * A set hands out one temporary file name per output (beside each output's final
 * target, through symlinks; the name starts with ".rp-tmp-" and holds no '%', which
 * PLplot would expand). The writers write into those names. rp_output_set_commit()
 * then flushes every temporary file and renames them over their outputs in the order
 * they were added; freeing a set that was not committed removes its temporary files,
 * so every old output stays as it was.
 * A kill before the first rename leaves only ".rp-tmp-<pid>-..." files (removed by the
 * next rp_output_set_add() for the same output, since their process is gone); a kill
 * between two renames leaves the outputs before it new and those after it old (rename
 * is atomic per file; POSIX has no atomic rename of several files). Add the output that
 * other outputs describe (the data) last, so a half-committed set never shows a picture
 * of data that is not there.
 * Existing outputs keep their mode; new ones get the umask's. Method in output_set.c. */
#ifndef RAINPRINT_OUTPUT_SET_H
#define RAINPRINT_OUTPUT_SET_H

#include <stddef.h>

#include "rainprint/status.h"

/* Check that path can be written before any work starts: not empty, not a rainprint
 * temporary name, not an existing directory, FIFO, device or socket (after following
 * symlinks), its folder exists, and a file can be created there (a temporary file is
 * created and removed again: this also catches read-only file systems and permissions,
 * which access() misjudges for root). what names the output in messages ("--csv").
 * Returns RP_OK; RP_EINVAL (NULL/empty path, temporary name, not a regular file);
 * RP_EIO (folder missing or not writable, with the system's reason). */
rp_status rp_output_check(const char *what, const char *path, rp_error *err);

typedef struct rp_output_set rp_output_set;

/* An empty set; NULL on out-of-memory. Free with rp_output_set_free (NULL no-op). */
rp_output_set *rp_output_set_alloc(void);

/* Add an output: creates its temporary file (empty, closed) and sets *tmp_path to its
 * name (owned by the set, valid until the set is freed). what names the output in
 * messages. Stale temporary files of the same output are removed first.
 * Returns RP_OK; RP_EINVAL (NULL argument, a path given twice, a temporary name, a
 * non-regular existing output, or a '%' in the temporary name, i.e. in the folder);
 * RP_EIO (cannot create, with the system's reason); RP_ENOMEM. */
rp_status rp_output_set_add(rp_output_set *s, const char *what, const char *path,
                            const char **tmp_path, rp_error *err);

/* Number of outputs added so far. */
size_t rp_output_set_count(const rp_output_set *s);

/* Flush every temporary file to disk (all before any rename: a full disk fails here,
 * with every old output intact), then rename each over its output in the order added.
 * Returns RP_OK; RP_EINVAL (NULL set, already committed); RP_EIO naming the output
 * and the system's reason. After a failed flush nothing was renamed; after a failed
 * rename the outputs before it are new (the message says which). Either way the
 * remaining temporary files are removed by rp_output_set_free. */
rp_status rp_output_set_commit(rp_output_set *s, rp_error *err);

/* Free the set; temporary files not renamed into place are removed. */
void rp_output_set_free(rp_output_set *s);

#endif
