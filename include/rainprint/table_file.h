/* table_file.h — scattering tables as files: netCDF-4 following the CF conventions (one
 * dimension `diameter`, units and long names on every variable, all inputs and the
 * program version as global attributes), and a store that finds shipped and cached
 * tables for the radar model (a table source, table.h). */
#ifndef RAINPRINT_TABLE_FILE_H
#define RAINPRINT_TABLE_FILE_H

#include "rainprint/status.h"
#include "rainprint/table.h"

/* Write t to path as netCDF-4 (temporary file in the same folder, then rename: the file
 * appears whole or not at all). RP_ENETCDF / RP_EIO on failure (the message names the
 * file, the variable or attribute, and netCDF's reason), RP_EINVAL for NULL arguments or
 * a path too long for the temporary name. */
rp_status rp_table_save(const rp_table *t, const char *path, rp_error *err);

/* Read and check a table: required variables and attributes present with the right
 * types, sizes and units, diameters strictly increasing in (0, 10] mm, every value
 * finite, second moments >= 0, config in range. Caller frees *out.
 * RP_EIO for a missing/unreadable file, RP_ETABLE for a malformed one, RP_ENOMEM. */
rp_status rp_table_load(const char *path, rp_table **out, rp_error *err);

/* The table for cfg on the default diameter grid: a matching table among the *.nc files
 * of shipped_dir (may be NULL), else one in cache_dir (may be NULL), else computed now
 * and, when cache_dir is given, saved there (the folder is created; a cache that cannot
 * be written is not an error). Tables that fail to load or do not match are skipped.
 * Caller frees *out. Statuses as rp_table_build. */
rp_status rp_table_obtain(const rp_drop_config *cfg, const char *shipped_dir,
                          const char *cache_dir, rp_table **out, rp_table_origin *origin,
                          rp_error *err);

/* A store: the shipped folder and the cache folder (either may be NULL), copied.
 * NULL on out-of-memory. Free with rp_table_store_free (NULL is a no-op). */
typedef struct rp_table_store rp_table_store;
rp_table_store *rp_table_store_alloc(const char *shipped_dir, const char *cache_dir);
void rp_table_store_free(rp_table_store *s);

/* The store as a table source for the radar model (rp_table_obtain with its folders).
 * The store must outlive every model using the source. */
rp_table_source rp_table_store_source(rp_table_store *s);

#endif
