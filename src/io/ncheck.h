/* ncheck.h — internal (uninstalled): every netCDF call of the io/ writers and readers
 * goes through one check that turns a failure into our message with the file name, the
 * variable or attribute involved, what was being done, and nc_strerror's text:
 *   "volume.nc: variable 'DBZ': cannot write the data: NetCDF: HDF error"
 * Text attributes are put and read here too (netCDF text is not NUL-terminated). */
#ifndef RP_IO_NCHECK_H
#define RP_IO_NCHECK_H

#include <stddef.h>

#include "rainprint/status.h"

/* RP_OK when nc_status is NC_NOERR; otherwise RP_ENETCDF with
 * "<path>: <what>[ '<name>']: <action>: <nc_strerror>" in err. name may be NULL
 * (file-level operations); what is "variable", "attribute", "dimension" or "file". */
rp_status rp_nc_check(int nc_status, const char *path, const char *what, const char *name,
                      const char *action, rp_error *err);

/* Jump to the label `fail` with status set when a netCDF call fails. The enclosing
 * function has `rp_status st` and `rp_error *err` in scope. */
#define RP_NC_TRY(call, path, what, name, action)                                  \
  do {                                                                              \
    st = rp_nc_check((call), (path), (what), (name), (action), err);                \
    if (st != RP_OK) goto fail;                                                     \
  } while (0)

/* Put a text attribute (varid may be NC_GLOBAL). Returns the netCDF status. */
int rp_nc_put_text(int ncid, int varid, const char *name, const char *value);

/* Read text attribute `name` of varid into buf (n bytes, NUL-terminated). Returns RP_OK;
 * RP_ETABLE-like input errors are the caller's business: this returns bad_status with
 * "<path>: <what> attribute '<name>' is missing, not text or longer than <n-1>
 * characters" when the attribute is absent, of another type or too long. */
rp_status rp_nc_get_text(int ncid, int varid, const char *name, char *buf, size_t n,
                         const char *path, rp_status bad_status, rp_error *err);

/* Read a scalar double attribute (exactly one finite NC_DOUBLE value); bad_status with
 * "<path>: attribute '<name>' is missing or not one finite double" otherwise. */
rp_status rp_nc_get_double(int ncid, int varid, const char *name, double *value,
                           const char *path, rp_status bad_status, rp_error *err);

#endif
