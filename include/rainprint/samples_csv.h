/* samples_csv.h — relation samples (relate.h) as a CSV file. */
#ifndef RAINPRINT_SAMPLES_CSV_H
#define RAINPRINT_SAMPLES_CSV_H

#include <stddef.h>

#include "rainprint/relate.h"
#include "rainprint/status.h"

/* Write samples s[0..n-1] as CSV to path, whole or not at all (temporary file in the
 * same folder, then rename). Header line with units in the names:
 *   index,label,cluster,log10_nw_param,d0_param_mm,mu_param,nt_m3,lwc_g_m3,
 *   rain_rate_mm_h,dm_mm,d0_mm,nw_m3_mm,zh_mm6_m3,zh_dbz,zdr_db,kdp_deg_km,ah_db_km,
 *   adp_db_km,rhohv,held_out,path
 * label: labels[index] when labels != NULL (spectra row labels, borrowed; commas are not
 * allowed in them), else empty; held_out 1/0; path "fast" or "direct". Numbers with 10
 * significant digits; NaN written as an empty field.
 * The file gets the permissions of any new file under the umask.
 * Returns RP_OK; RP_EINVAL (NULL path or s with n > 0, a label with a comma or newline,
 * a path too long for the temporary name); RP_EIO (cannot create, write or rename;
 * nothing is left behind). */
rp_status rp_relate_samples_save_csv(const char *path, const rp_relate_sample *s, size_t n,
                                     const char *const *labels, rp_error *err);

#endif
