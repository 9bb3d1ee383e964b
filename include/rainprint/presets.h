/* presets.h — named example rains (DSD presets) read from YAML files.
 *
 * One preset per file (dsd-presets/<name>.yaml in the source tree):
 *   name: maritime-downpour              # lowercase letters, digits and hyphens
 *   description: "..."                   # one line shown by `rainprint presets`
 *   model: normalized-gamma              # exponential | marshall-palmer | gamma |
 *                                        # normalized-gamma
 *   parameters:                          # exactly the ones the model takes:
 *     nw_m3_mm: 31600                    #   exponential:      n0, lambda_per_mm
 *     d0_mm: 1.6                         #   marshall-palmer:  rain_rate_mm_h
 *     mu: 3                              #   gamma:            n0, mu, lambda_per_mm
 *                                        #   normalized-gamma: nw_m3_mm, mu and one of
 *                                        #                     d0_mm (c = 3.67) or
 *                                        #                     dm_mm (c = 4)
 *   dmin_mm: 0.1                         # optional truncation (defaults 0.1, 8 mm)
 *   dmax_mm: 8
 *   source: "..."                        # the published values it rests on, or
 *                                        # "invented for the demo"
 * n0 is in m^-3 mm^-1 for the exponential and m^-3 mm^-(1+mu) for the gamma model.
 * Numbers must be plain decimals: nan, inf, hex and trailing text ("1.6mm") are refused.
 * The values must lie within the DSD bounds of dsd.h (e.g. nw_m3_mm <= RP_DSD_NW_MAX).
 * Text rules shared by every reader: one YAML document, UTF-8 (a byte-order mark is
 * accepted), no NUL bytes, lines of at most 65536 bytes, a regular file of at most
 * 64 MiB.
 *
 * The library takes the directory as a parameter; the tool finds the default one
 * (RP_SOURCE_DIR "/dsd-presets" or the RAINPRINT_PRESETS environment variable). */
#ifndef RAINPRINT_PRESETS_H
#define RAINPRINT_PRESETS_H

#include <stddef.h>

#include "rainprint/dsd.h"
#include "rainprint/status.h"

typedef struct {
  char name[64];
  char description[256];
  char source[512];
  rp_dsd dsd; /* an analytic model: no borrowed pointers */
} rp_preset;

/* Read one preset file into *out (caller-allocated).
 * Returns RP_OK; RP_EINVAL (NULL argument); RP_EIO (the file cannot be opened);
 * RP_EPARSE (YAML syntax, schema or value errors: the message starts with
 * "path:line:column:" where the position is known, and names the field);
 * RP_ENOMEM. *out is unchanged on error. */
rp_status rp_preset_load_file(const char *path, rp_preset *out, rp_error *err);

/* rp_preset_load_file from n bytes in memory (name is used in messages). Same rules
 * and statuses, without RP_EIO. */
rp_status rp_preset_load_data(const char *name, const char *data, size_t n, rp_preset *out,
                              rp_error *err);

/* Read every *.yaml file in dir into a new array sorted by preset name; *n gets its
 * length. The caller frees the array with rp_preset_list_free().
 * Returns RP_OK; RP_EINVAL (NULL argument); RP_EIO (dir cannot be read or holds no
 * *.yaml file); RP_EPARSE (a file is malformed, or two files define the same name);
 * RP_ENOMEM. On error *list is NULL and *n is 0. */
rp_status rp_preset_load_dir(const char *dir, rp_preset **list, size_t *n, rp_error *err);

/* Free a list from rp_preset_load_dir (NULL is a no-op). */
void rp_preset_list_free(rp_preset *list);

/* Find the preset called name among the files of dir.
 * Returns RP_OK; RP_EINVAL for NULL arguments or an unknown name (the message lists
 * the known names); or any status of rp_preset_load_dir. */
rp_status rp_preset_find(const char *dir, const char *name, rp_preset *out, rp_error *err);

#endif
