/* table_file.h — scattering tables as files: netCDF-4 following the CF conventions (one
 * dimension `diameter`, units and long names on every variable, all inputs and the
 * program version as global attributes, and a checksum of the data), the checks every
 * loaded table passes, and a store that finds shipped and cached tables for the radar
 * model (a table source, table.h), with a cache of bounded size.
 *
 * Trust: tables are data to trust like code. Load only tables you made or received from
 * someone you trust: the checks make accidental corruption safe (it is refused), but a
 * crafted HDF5 file can still crash inside the HDF5 library itself. */
#ifndef RAINPRINT_TABLE_FILE_H
#define RAINPRINT_TABLE_FILE_H

#include <stddef.h>
#include <stdint.h>
#include <time.h>

#include "rainprint/status.h"
#include "rainprint/table.h"

/* Largest table file the loader opens (bytes): a default table is about 40 kB, the
 * largest grid (RP_TABLE_MAX_DIAMETERS) about 10 MB. */
#define RP_TABLE_FILE_MAX_BYTES (32 * 1024 * 1024)
/* Most diameters a table file may declare. */
#define RP_TABLE_MAX_DIAMETERS 100000
/* Physical bounds of rp_table_validate, as multiples of the largest geometric
 * cross-section A of the drop: sigma_back <= BACK * max(A, 4 pi A^2 / lambda^2) and
 * 2 lambda |f(0)| <= FWD * A. Mie spheres of water at 1-100 GHz and 0.1-10 mm stay
 * below 2.6 and 3.7 (tests/test_table.c). */
#define RP_TABLE_BACK_GEOM_FACTOR 10.0
#define RP_TABLE_FWD_GEOM_FACTOR 20.0
/* Default size limit of the table cache: at most this many files and bytes (the least
 * recently used are removed first); override with rp_table_store_set_cache_limits or
 * rp_table_cache_prune. */
#define RP_TABLE_CACHE_MAX_FILES 200
#define RP_TABLE_CACHE_MAX_BYTES ((uint64_t)100 * 1024 * 1024)

/* Write t to path as netCDF-4 with a checksum attribute (data_checksum, see
 * rp_table_checksum). The image is built in memory, written to a temporary file beside
 * the target (through a symlink: beside its target; an existing file keeps its mode),
 * flushed and renamed: the file appears whole or not at all.
 * Returns RP_OK; RP_EINVAL for NULL arguments, a path too long or an output that is not
 * a regular file; RP_ETABLE when t fails rp_table_validate (nothing is written);
 * RP_ENETCDF when netCDF cannot build the image; RP_EIO when the file cannot be written
 * (the message gives the system's reason, e.g. "No space left on device"). */
rp_status rp_table_save(const rp_table *t, const char *path, rp_error *err);

/* Read and check a table file. Before netCDF sees the bytes: a regular file (a FIFO or
 * device is refused without blocking), at most RP_TABLE_FILE_MAX_BYTES, starting with
 * the HDF5 signature (netCDF-3 is refused). Then: exactly the variables of the table
 * (rp_table_column_get), each double(diameter) with its units, one dimension of 2 to
 * RP_TABLE_MAX_DIAMETERS diameters, every attribute present, the checksum equal to
 * that of the data (a table without one is refused with a message to regenerate it),
 * and rp_table_validate. Caller frees *out (NULL on error).
 * Returns RP_OK; RP_EINVAL (NULL argument); RP_EIO (missing or unreadable file);
 * RP_ETABLE for everything else, the message naming the file, the variable or
 * attribute and what is wrong; RP_ENOMEM. */
rp_status rp_table_load(const char *path, rp_table **out, rp_error *err);

/* rp_table_load from a file image in memory (size bytes; name is used in messages).
 * The same checks (size, signature, content); data is not modified. */
rp_status rp_table_load_mem(const char *name, const void *data, size_t size, rp_table **out,
                            rp_error *err);

/* The physics and consistency checks of a table in memory (name used in messages):
 * config in range; wavelength, permittivity (water model at the table's frequency and
 * temperature), axis ratios (shape model or fixed ratio) and fall speeds (fall model)
 * as the models give them (relative 1e-9); diameters increasing in (0, 10] mm; every
 * value finite; |f|^2 columns and Im f(0) >= 0; |<f_hh f_vv*>|^2 <= <|f_hh|^2><|f_vv|^2>
 * (relative slack 1e-6); <|f_hv|^2> <= max(<|f_hh|^2>, <|f_vv|^2>); back-scatter and
 * forward amplitudes below the bounds above. Method and justification in
 * docs/method.md §16. Returns RP_OK, RP_EINVAL (NULL t) or RP_ETABLE naming
 * the variable, index, diameter, value and the bound. */
rp_status rp_table_validate(const rp_table *t, const char *name, rp_error *err);

/* 64-bit FNV-1a checksum that rp_table_save writes for t (algorithm in table_file.c:
 * the metadata attributes and every column's bytes in file order). 0 for NULL. */
uint64_t rp_table_checksum(const rp_table *t);

/* File name (no folder) under which a shipped table for cfg is looked up:
 * "rainprint_<band>_<T>C.nc" for a named band frequency and an integer temperature.
 * Returns 1 with the name in buf, 0 when cfg has no such name. */
int rp_table_shipped_name(const rp_drop_config *cfg, char *buf, size_t n);

/* The table for cfg on the default diameter grid: in shipped_dir (may be NULL) the file
 * rp_table_shipped_name, then the file rp_table_cache_name; else in cache_dir (may be
 * NULL) the file rp_table_cache_name (its last use is recorded as its mtime); else
 * computed now and, when cache_dir is given, saved there (the folder is created; a
 * cache that cannot be written is not an error) and the cache pruned to the default
 * limits. Only those files are opened, never the rest of a folder. A file that fails to
 * load or does not match is skipped. Caller frees *out. Statuses as rp_table_build. */
rp_status rp_table_obtain(const rp_drop_config *cfg, const char *shipped_dir,
                          const char *cache_dir, rp_table **out, rp_table_origin *origin,
                          rp_error *err);

/* A store: the shipped folder and the cache folder (either may be NULL), copied, with
 * the default cache limits. NULL on out-of-memory. Free with rp_table_store_free (NULL
 * is a no-op). */
typedef struct rp_table_store rp_table_store;
rp_table_store *rp_table_store_alloc(const char *shipped_dir, const char *cache_dir);
void rp_table_store_free(rp_table_store *s);
/* Cache limits of the store (files, bytes) used after each save into its cache. */
void rp_table_store_set_cache_limits(rp_table_store *s, size_t max_files, uint64_t max_bytes);

/* The store as a table source for the radar model (rp_table_obtain with its folders).
 * The store must outlive every model using the source. */
rp_table_source rp_table_store_source(rp_table_store *s);

/* ---- the cache, for `rainprint cache list|clear` ---- */

/* One cached table. Nothing is opened to list it: the summary comes from the name. */
typedef struct {
  char name[256];     /* file name in the cache folder */
  uint64_t size_bytes;
  time_t last_use;    /* mtime: written, or last found by rp_table_obtain */
  char summary[256];  /* configuration, e.g. "5.6000GHz 10.00C thurai planar7.00 el0.00 tmatrix" */
} rp_table_cache_entry;

/* The cached tables ("table_*.nc" regular files) of cache_dir, most recently used
 * first, in a new array (*n entries; free with rp_table_cache_list_free). A missing
 * folder is an empty cache. Returns RP_OK; RP_EINVAL (NULL argument); RP_EIO (the
 * folder cannot be read, with the system's reason); RP_ENOMEM. */
rp_status rp_table_cache_list(const char *cache_dir, rp_table_cache_entry **entries, size_t *n,
                              rp_error *err);
void rp_table_cache_list_free(rp_table_cache_entry *entries); /* NULL ok */

/* Remove least recently used tables until at most max_files remain and their sizes add
 * up to at most max_bytes. Returns RP_OK or the statuses of rp_table_cache_list, RP_EIO
 * when a file cannot be removed. */
rp_status rp_table_cache_prune(const char *cache_dir, size_t max_files, uint64_t max_bytes,
                               rp_error *err);

/* Remove every cached table and every leftover temporary file of one from cache_dir
 * (nothing else); *removed (may be NULL) gets the count. A missing folder is fine.
 * Returns RP_OK; RP_EINVAL (NULL folder); RP_EIO (the system's reason). */
rp_status rp_table_cache_clear(const char *cache_dir, size_t *removed, rp_error *err);

#endif
