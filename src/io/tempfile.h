/* tempfile.h — internal (uninstalled) helpers for outputs written whole or not at all:
 * a temporary file created beside the output, renamed over it when complete.
 *
 * Names: the temporary file of output "<dir>/<base>" is "<dir>/.rp-tmp-<pid>-<k>-<safe>"
 * where <safe> is <base> with every byte outside [A-Za-z0-9._-] replaced by '_' (so a
 * temporary name never holds '%', which PLplot would expand, unless the folder does).
 * The prefix ".rp-tmp-" is recognisable: such files are ours and can be removed; an
 * output whose own name starts with it is refused (temporary names never stack).
 * Symlinks: an output that is a symlink is written through: the temporary file goes
 * beside the link's final target and replaces the target; the link stays.
 * Permissions: a new output gets the umask's permissions (open(O_CREAT|O_EXCL, 0666));
 * an existing output keeps its mode.
 * Honest errors: every failure names the output and gives strerror() of the system
 * call that failed (e.g. "No space left on device"). Used by the picture writer,
 * the relate CSV, the table writer and the output set (output_set.h). Method in
 * tempfile.c. */
#ifndef RP_IO_TEMPFILE_H
#define RP_IO_TEMPFILE_H

#include <stdbool.h>
#include <stddef.h>

#include "rainprint/status.h"

/* Prefix of every temporary file name. */
#define RP_TEMPFILE_PREFIX ".rp-tmp-"

/* Create the temporary file of path (first free k in 0..99) and open it for writing.
 * tmp (n bytes, caller-owned) receives the name, *fd the open descriptor, which the
 * caller closes. what names the output in messages ("picture", "relate CSV").
 * Returns RP_OK; RP_EINVAL when the name does not fit in n bytes, the output's name is
 * itself a temporary name, or the output is an existing directory or other non-regular
 * file; RP_EIO when the file cannot be created (the message gives the system's
 * reason, e.g. the folder does not exist) or no name is free. */
rp_status rp_tempfile_create(const char *what, const char *path, char *tmp, size_t n,
                             int *fd, rp_error *err);

/* Flush tmp to disk (fsync, so that a full disk is reported here and not lost) and
 * rename it over path's final target (through symlinks); on failure remove tmp.
 * Returns RP_OK or RP_EIO ("<what> '<path>': cannot ...: <strerror>"). */
rp_status rp_tempfile_commit(const char *what, const char *tmp, const char *path,
                             rp_error *err);

/* Write all n bytes of data to fd (retrying short writes and EINTR). RP_OK or RP_EIO
 * "<what> '<path>': cannot write: <strerror>". */
rp_status rp_tempfile_write_all(const char *what, const char *path, int fd, const void *data,
                                size_t n, rp_error *err);

/* The final target of path after following symlinks (at most 40; a dangling link gives
 * the name it points to), in out (n bytes). RP_OK; RP_EINVAL for a name too long or a
 * symlink loop. */
rp_status rp_tempfile_resolve(const char *path, char *out, size_t n, rp_error *err);

/* True when the last component of path starts with RP_TEMPFILE_PREFIX. */
bool rp_tempfile_is_temp_name(const char *path);

/* Remove the temporary files of path (same folder and <safe> part) left by processes
 * that no longer run (a kill before the commit). Returns how many were removed. */
size_t rp_tempfile_remove_stale(const char *path);

#endif
