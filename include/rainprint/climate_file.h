/* climate_file.h — climates (ensemble.h) read from YAML files. */
#ifndef RAINPRINT_CLIMATE_FILE_H
#define RAINPRINT_CLIMATE_FILE_H

#include "rainprint/ensemble.h"
#include "rainprint/status.h"

/* Read a climate from a YAML file:
 *   name: island-showers           # 1..63 characters
 *   source: "..."                  # where the numbers come from (required, not kept)
 *   mu_model: gaussian             # optional: gaussian (default) | zhang2001
 *   clusters:                      # 1..4 entries
 *     - name: stratiform
 *       weight: 0.6
 *       log10_nw_mean: 3.4
 *       log10_nw_sd: 0.3
 *       d0_mean_mm: 1.4
 *       d0_sd_mm: 0.35
 *       corr_log10_nw_d0: -0.5
 *       mu_mean: 3                 # required with gaussian, optional with zhang2001
 *       mu_sd: 2
 * Numbers must be plain decimals (nan, inf, hex and trailing text such as "1.4mm" are
 * refused); unknown keys are errors; the result then passes rp_climate_validate.
 * Returns RP_OK; RP_EINVAL (NULL argument); RP_EIO (the file cannot be opened);
 * RP_EPARSE (syntax, schema or value error: the message starts with the path, gives
 * "line:column" where libcyaml or libyaml knows it, and names the field); RP_ENOMEM.
 * *c is unchanged on error. */
rp_status rp_climate_load_yaml(const char *path, rp_climate *c, rp_error *err);

#endif
