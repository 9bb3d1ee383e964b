/* dsd_vary.c — one DSD parameter replaced, the rest held (dsd_vary.h). */
#include "rainprint/dsd_vary.h"

#include <stddef.h>

static const char *const PARAM_NAMES[RP_DSD_PARAM_COUNT] = {"d0", "dm", "mu", "nw", "rain-rate"};
static const char *const PARAM_UNITS[RP_DSD_PARAM_COUNT] = {"mm", "mm", "", "m^-3 mm^-1", "mm/h"};

const char *rp_dsd_param_name(rp_dsd_param p) {
  return ((int)p >= 0 && p < RP_DSD_PARAM_COUNT) ? PARAM_NAMES[p] : "unknown";
}

const char *const *rp_dsd_param_names(size_t *n) {
  if (n) *n = RP_DSD_PARAM_COUNT;
  return PARAM_NAMES;
}

const char *rp_dsd_param_unit(rp_dsd_param p) {
  return ((int)p >= 0 && p < RP_DSD_PARAM_COUNT) ? PARAM_UNITS[p] : "";
}

static int is_normalized(rp_dsd_model m) {
  return m == RP_DSD_NORMALIZED_GAMMA_D0 || m == RP_DSD_NORMALIZED_GAMMA_DM;
}

rp_status rp_dsd_param_check_base(rp_dsd_param p, const rp_dsd *base, rp_error *err) {
  if (base == NULL || (int)p < 0 || p >= RP_DSD_PARAM_COUNT)
    return rp_error_set(err, RP_EINVAL, "DSD parameter: NULL base or invalid parameter");
  const rp_dsd_model m = base->model;
  const char *need = NULL;
  switch (p) {
    case RP_DSD_PARAM_D0: case RP_DSD_PARAM_DM: case RP_DSD_PARAM_NW:
      if (!is_normalized(m)) need = "a normalised gamma";
      break;
    case RP_DSD_PARAM_MU:
      if (!is_normalized(m) && m != RP_DSD_GAMMA) need = "a gamma or a normalised gamma";
      break;
    default:
      if (m != RP_DSD_MARSHALL_PALMER) need = "Marshall-Palmer";
      break;
  }
  if (need == NULL) return RP_OK;
  return rp_error_set(err, RP_EINVAL, "varying %s needs a base DSD that is %s; the base is %s",
                      PARAM_NAMES[p], need, rp_dsd_model_name(m));
}

rp_status rp_dsd_with_param(const rp_dsd *base, rp_dsd_param p, double value, rp_dsd *out,
                            rp_error *err) {
  RP_TRY(rp_dsd_param_check_base(p, base, err));
  if (out == NULL) return rp_error_set(err, RP_EINVAL, "DSD parameter: NULL output");
  const int dm_form = base->model == RP_DSD_NORMALIZED_GAMMA_DM;
  rp_dsd d;
  rp_status s;
  switch (p) {
    case RP_DSD_PARAM_D0: s = rp_dsd_normalized_gamma_d0(&d, base->nw_m3_mm, value, base->mu, err); break;
    case RP_DSD_PARAM_DM: s = rp_dsd_normalized_gamma_dm(&d, base->nw_m3_mm, value, base->mu, err); break;
    case RP_DSD_PARAM_NW:
      s = dm_form ? rp_dsd_normalized_gamma_dm(&d, value, base->dm_mm, base->mu, err)
                  : rp_dsd_normalized_gamma_d0(&d, value, base->d0_mm, base->mu, err);
      break;
    case RP_DSD_PARAM_MU:
      if (base->model == RP_DSD_GAMMA)
        s = rp_dsd_gamma(&d, base->n0, value, base->lambda_per_mm, err);
      else
        s = dm_form ? rp_dsd_normalized_gamma_dm(&d, base->nw_m3_mm, base->dm_mm, value, err)
                    : rp_dsd_normalized_gamma_d0(&d, base->nw_m3_mm, base->d0_mm, value, err);
      break;
    default: s = rp_dsd_marshall_palmer(&d, value, err); break;
  }
  RP_TRY(s);
  RP_TRY(rp_dsd_set_truncation(&d, base->dmin_mm, base->dmax_mm, err));
  *out = d;
  return RP_OK;
}
