/* ncheck.c — one check for every netCDF call (see ncheck.h). */
#include "ncheck.h"

#include <math.h>
#include <netcdf.h>
#include <string.h>

rp_status rp_nc_check(int nc_status, const char *path, const char *what, const char *name,
                      const char *action, rp_error *err) {
  if (nc_status == NC_NOERR) return RP_OK;
  if (name != NULL)
    return rp_error_set(err, RP_ENETCDF, "%s: %s '%s': %s: %s", path, what, name, action,
                        nc_strerror(nc_status));
  return rp_error_set(err, RP_ENETCDF, "%s: %s: %s", path, action, nc_strerror(nc_status));
}

int rp_nc_put_text(int ncid, int varid, const char *name, const char *value) {
  return nc_put_att_text(ncid, varid, name, strlen(value), value);
}

rp_status rp_nc_get_text(int ncid, int varid, const char *name, char *buf, size_t n,
                         const char *path, rp_status bad_status, rp_error *err) {
  nc_type type;
  size_t len;
  const char *where = varid == NC_GLOBAL ? "global" : "variable";
  if (nc_inq_att(ncid, varid, name, &type, &len) != NC_NOERR || type != NC_CHAR || len >= n)
    return rp_error_set(err, bad_status,
                        "%s: %s attribute '%s' is missing, not text or longer than %zu "
                        "characters", path, where, name, n - 1);
  int s = nc_get_att_text(ncid, varid, name, buf);
  if (s != NC_NOERR)
    return rp_error_set(err, bad_status, "%s: %s attribute '%s': cannot read: %s", path,
                        where, name, nc_strerror(s));
  buf[len] = '\0'; /* netCDF text attributes are not NUL-terminated */
  if (memchr(buf, '\0', len) != NULL)
    return rp_error_set(err, bad_status, "%s: %s attribute '%s' holds a NUL byte", path,
                        where, name);
  return RP_OK;
}

rp_status rp_nc_get_double(int ncid, int varid, const char *name, double *value,
                           const char *path, rp_status bad_status, rp_error *err) {
  nc_type type;
  size_t len;
  if (nc_inq_att(ncid, varid, name, &type, &len) != NC_NOERR || type != NC_DOUBLE ||
      len != 1 || nc_get_att_double(ncid, varid, name, value) != NC_NOERR ||
      !isfinite(*value))
    return rp_error_set(err, bad_status, "%s: attribute '%s' is missing or not one finite "
                        "double", path, name);
  return RP_OK;
}
