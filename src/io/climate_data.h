/* climate_data.h — internal (uninstalled): the climate YAML loader on bytes in memory,
 * for the fuzz target and loaders that already hold the text (the public header
 * rainprint/climate_file.h has the file entry point; the lead may move this there). */
#ifndef RP_IO_CLIMATE_DATA_H
#define RP_IO_CLIMATE_DATA_H

#include <stddef.h>

#include "rainprint/ensemble.h"
#include "rainprint/status.h"

/* rp_climate_load_yaml on n bytes (name is used in messages): the same format, text
 * rules and statuses, without RP_EIO. *c is unchanged on error. */
rp_status rp_climate_load_yaml_data(const char *name, const char *data, size_t n,
                                    rp_climate *c, rp_error *err);

#endif
