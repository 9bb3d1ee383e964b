/* samples_csv.c — relation samples (relate.h) written as CSV, whole or not at all. */
#include "rainprint/samples_csv.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include "io/tempfile.h"
#include "rainprint/fit.h"

/* ---- CSV --------------------------------------------------------------------------- */

static void put_num(FILE *f, double x) {
  if (isfinite(x))
    fprintf(f, ",%.10g", x);
  else
    fputs(",", f);
}

rp_status rp_relate_samples_save_csv(const char *path, const rp_relate_sample *s, size_t n,
                                     const char *const *labels, rp_error *err) {
  if (path == NULL || (s == NULL && n > 0))
    return rp_error_set(err, RP_EINVAL, "relate CSV: NULL path or samples");
  if (labels != NULL)
    for (size_t i = 0; i < n; i++) {
      const char *l = labels[s[i].index];
      if (l != NULL && strpbrk(l, ",\n\r") != NULL)
        return rp_error_set(err, RP_EINVAL, "relate CSV: label '%s' of sample %zu holds a comma "
                            "or line break", l, i);
    }
  char tmp[4096];
  int fd = -1;
  RP_TRY(rp_tempfile_create("relate CSV", path, tmp, sizeof tmp, &fd, err));
  FILE *f = fdopen(fd, "w");
  if (f == NULL) {
    const int e = errno;
    close(fd);
    unlink(tmp);
    return rp_error_set(err, RP_EIO, "%s: cannot open the temporary file: %s", path,
                        strerror(e));
  }
  fputs("index,label,cluster,log10_nw_param,d0_param_mm,mu_param,nt_m3,lwc_g_m3,"
        "rain_rate_mm_h,dm_mm,d0_mm,nw_m3_mm,zh_mm6_m3,zh_dbz,zdr_db,kdp_deg_km,ah_db_km,"
        "adp_db_km,rhohv,held_out,path\n", f);
  for (size_t i = 0; i < n; i++) {
    const rp_relate_sample *p = &s[i];
    const char *l = labels ? labels[p->index] : NULL;
    fprintf(f, "%zu,%s,", p->index, l ? l : "");
    if (p->cluster >= 0) fprintf(f, "%ld", p->cluster);
    put_num(f, p->log10_nw_param);
    put_num(f, p->d0_param_mm);
    put_num(f, p->mu_param);
    put_num(f, p->nt_m3);
    put_num(f, p->lwc_g_m3);
    put_num(f, p->rain_rate_mm_h);
    put_num(f, p->dm_mm);
    put_num(f, p->d0_mm);
    put_num(f, p->nw_m3_mm);
    put_num(f, p->zh_mm6_m3);
    put_num(f, p->zh_dbz);
    put_num(f, p->zdr_db);
    put_num(f, p->kdp_deg_km);
    put_num(f, p->ah_db_km);
    put_num(f, p->adp_db_km);
    put_num(f, p->rhohv);
    fprintf(f, ",%d,%s\n", rp_fit_is_held_out(p->index), p->fast ? "fast" : "direct");
  }
  /* flush and sync before the close so that a full disk is seen here, with its reason */
  errno = 0;
  const int bad_write = ferror(f) || fflush(f) != 0 || fsync(fileno(f)) != 0;
  const int write_errno = errno;
  errno = 0;
  const int bad_close = fclose(f) != 0;
  const int e = bad_write ? write_errno : errno;
  if (bad_write || bad_close) {
    unlink(tmp);
    return rp_error_set(err, RP_EIO, "%s: writing failed: %s", path,
                        e ? strerror(e) : "an I/O error");
  }
  return rp_tempfile_commit("relate CSV", tmp, path, err);
}
