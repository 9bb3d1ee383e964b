/* text_rules.h — internal (uninstalled): the one set of rules for every text file
 * rainprint reads (spectrum CSV, preset and climate YAML, and the scenario loader to
 * come). A reader calls rp_text_read_file() (or rp_text_check() on bytes it already
 * has) and parses the returned buffer; the rules are then the same everywhere:
 *   - the file is a regular file (a FIFO or device is refused without blocking) of at
 *     most RP_TEXT_MAX_FILE_BYTES;
 *   - a UTF-8 byte-order mark (EF BB BF) at the start is accepted and skipped; a UTF-16
 *     or UTF-32 mark is refused ("save the file as UTF-8");
 *   - a NUL byte anywhere is refused with its line and column ("1<NUL>0" would
 *     otherwise read as 1);
 *   - no line is longer than RP_TEXT_MAX_LINE_BYTES bytes (without its line break).
 * Lines end in "\n" ("\r\n" counts the same); line and column numbers are 1-based,
 * columns counted in bytes. Multi-document YAML is refused by the YAML scan
 * (yaml_check.h), which uses these rules. Method in text_rules.c. */
#ifndef RP_IO_TEXT_RULES_H
#define RP_IO_TEXT_RULES_H

#include <stddef.h>

#include "rainprint/status.h"

#define RP_TEXT_MAX_LINE_BYTES 65536
#define RP_TEXT_MAX_FILE_BYTES (64 * 1024 * 1024)

/* Check n bytes of text under the rules above (name is used in messages). On RP_OK,
 * *body (may be NULL) gets the offset of the text after any UTF-8 BOM (0 or 3).
 * Returns RP_OK; RP_EINVAL (NULL name, or NULL data with n > 0); RP_EPARSE with
 * "name:line:column: NUL byte ...", "name:line: line longer than N bytes",
 * "name: UTF-16 ... save it as UTF-8" or "name: N bytes, above the limit ...". */
rp_status rp_text_check(const char *name, const char *data, size_t n, size_t *body,
                        rp_error *err);

/* Read the text file path whole and check it (rp_text_check). On RP_OK *text is a new
 * NUL-terminated buffer of *n bytes without the BOM (the caller frees it with free());
 * the file's own NUL bytes having been refused, strlen(*text) == *n.
 * Returns RP_OK; RP_EINVAL (NULL argument); RP_EIO (cannot open or read: the system's
 * reason; not a regular file); RP_EPARSE (the rules); RP_ENOMEM. *text is NULL on error. */
rp_status rp_text_read_file(const char *path, char **text, size_t *n, rp_error *err);

#endif
