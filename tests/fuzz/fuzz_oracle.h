/* fuzz_oracle.h — shared checks of the libFuzzer targets: a finding is an abort() with
 * the reason on stderr (libFuzzer then saves the input). The oracles check results,
 * not only the absence of crashes. */
#ifndef RP_FUZZ_ORACLE_H
#define RP_FUZZ_ORACLE_H

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "rainprint/dsd.h"
#include "rainprint/status.h"

#define FUZZ_REQUIRE(cond, ...)                      \
  do {                                               \
    if (!(cond)) {                                   \
      fprintf(stderr, "fuzz oracle: " __VA_ARGS__);  \
      fprintf(stderr, "\n");                         \
      abort();                                       \
    }                                                \
  } while (0)

/* A failure has a message that fits and is NUL-terminated. */
static inline void fuzz_check_error(rp_status s, const rp_error *e) {
  FUZZ_REQUIRE(s != RP_OK, "check_error on success");
  FUZZ_REQUIRE(memchr(e->msg, '\0', sizeof e->msg) != NULL && e->msg[0] != '\0',
               "status %s without a message", rp_status_name(s));
}

/* Moments of an accepted DSD: an error with a message, or every field finite and in
 * its physical range. */
static inline void fuzz_check_moments(const rp_dsd *d) {
  rp_dsd_moments m;
  rp_error e = {0};
  const rp_status s = rp_dsd_moments_eval(d, RP_FALL_DEFAULT, 1.0, &m, &e);
  if (s != RP_OK) {
    fuzz_check_error(s, &e);
    FUZZ_REQUIRE(s == RP_EDOM || s == RP_ENOCONV || s == RP_EGSL, "moments status %s: %s",
                 rp_status_name(s), e.msg);
    return;
  }
  const double v[] = {m.nt_m3, m.lwc_g_m3, m.rain_rate_mm_h, m.dm_mm, m.d0_mm, m.sigma_m_mm,
                      m.nw_m3_mm, m.nw_d0_m3_mm, m.z_rayleigh_mm6_m3, m.z_rayleigh_dbz};
  for (size_t i = 0; i < sizeof v / sizeof v[0]; i++)
    FUZZ_REQUIRE(isfinite(v[i]), "moment field %zu = %g not finite", i, v[i]);
  FUZZ_REQUIRE(m.nt_m3 >= 0.0 && m.lwc_g_m3 > 0.0 && m.lwc_g_m3 <= RP_DSD_LWC_MAX &&
                   m.rain_rate_mm_h >= 0.0 && m.dm_mm > 0.0 && m.dm_mm <= RP_DSD_D_LIMIT_MM &&
                   m.d0_mm > 0.0 && m.d0_mm <= RP_DSD_D_LIMIT_MM,
               "moments out of range: Nt %g LWC %g R %g Dm %g D0 %g", m.nt_m3, m.lwc_g_m3,
               m.rain_rate_mm_h, m.dm_mm, m.d0_mm);
}

#endif
