/* field.c — the one table of fields (field.h). CF standard names follow the CF standard
 * name table and the CF/Radial 1.4 field list (docs/method.md, volume files). */
#include "rainprint/field.h"

#include <math.h>
#include <string.h>

#define G(member) RP_FIELD_OF_GATE, offsetof(rp_gate_result, member)
#define M(member) RP_FIELD_OF_MOMENTS, offsetof(rp_dsd_moments, member)

static const rp_field_desc FIELDS[RP_FIELD_COUNT] = {
    [RP_FIELD_ZH] = {"zh_dbz", "zh", "Zh", "dBZ", "dBZ", "horizontal reflectivity factor",
                     "equivalent_reflectivity_factor", "DBZ", "%.2f", "Z#dH#u (dBZ)", G(zh_dbz), 0},
    [RP_FIELD_ZV] = {"zv_dbz", "zv", "Zv", "dBZ", "dBZ", "vertical reflectivity factor", NULL,
                     NULL, "%.2f", "Z#dV#u (dBZ)", G(zv_dbz), 0},
    [RP_FIELD_ZDR] = {"zdr_db", "zdr", "ZDR", "dB", "dB", "differential reflectivity",
                      "log_differential_reflectivity_hv", "ZDR", "%.3f", "Z#dDR#u (dB)",
                      G(zdr_db), 0},
    [RP_FIELD_KDP] = {"kdp_deg_km", "kdp", "KDP", "degrees/km", "deg/km",
                      "specific differential phase (one way)",
                      "specific_differential_phase_hv", "KDP", "%.4f",
                      "K#dDP#u (° km#u-1#d)", G(kdp_deg_km), 1},
    [RP_FIELD_RHOHV] = {"rhohv", "rhohv", "rhoHV", "1", "", "co-polar correlation coefficient",
                        "cross_correlation_ratio_hv", "RHOHV", "%.5f", "#gr#dhv#u",
                        G(rhohv), 0},
    [RP_FIELD_DELTA_HV] = {"delta_hv_deg", "delta", "delta_hv", "degrees", "deg",
                           "backscatter differential phase", NULL, NULL, "%.3f",
                           "#gd#dhv#u (°)", G(delta_hv_deg), 0},
    [RP_FIELD_LDR] = {"ldr_db", "ldr", "LDR", "dB", "dB", "linear depolarisation ratio",
                      "log_linear_depolarization_ratio_h", "LDRH", "%.2f", "LDR (dB)",
                      G(ldr_db), 0},
    [RP_FIELD_AH] = {"ah_db_km", "ah", "AH", "dB/km", "dB/km",
                     "specific attenuation, horizontal (one way)", NULL, NULL, "%.5f",
                     "A#dH#u (dB km#u-1#d)", G(ah_db_km), 1},
    [RP_FIELD_AV] = {"av_db_km", "av", "AV", "dB/km", "dB/km",
                     "specific attenuation, vertical (one way)", NULL, NULL, "%.5f",
                     "A#dV#u (dB km#u-1#d)", G(av_db_km), 1},
    [RP_FIELD_ADP] = {"adp_db_km", "adp", "ADP", "dB/km", "dB/km",
                      "specific differential attenuation (one way)", NULL, NULL, "%.5f",
                      "A#dDP#u (dB km#u-1#d)", G(adp_db_km), 1},
    [RP_FIELD_NT] = {"nt_m3", "nt", "Nt", "m-3", "m^-3", "total drop concentration", NULL, NULL,
                     "%.4g", "N#dT#u (m#u-3#d)", M(nt_m3), 1},
    [RP_FIELD_LWC] = {"lwc_g_m3", "lwc", "LWC", "g m-3", "g m^-3", "liquid water content",
                      "mass_concentration_of_liquid_water_in_air", NULL, "%.4g",
                      "LWC (g m#u-3#d)", M(lwc_g_m3), 1},
    [RP_FIELD_RAIN_RATE] = {"rain_rate_mm_h", "rain-rate", "R", "mm h-1", "mm/h", "rain rate",
                            "rainfall_rate", "RRR", "%.4g", "R (mm h#u-1#d)",
                            M(rain_rate_mm_h), 1},
    [RP_FIELD_DM] = {"dm_mm", "dm", "Dm", "mm", "mm", "mass-weighted mean diameter", NULL, NULL,
                     "%.3f", "D#dm#u (mm)", M(dm_mm), 0},
    [RP_FIELD_D0] = {"d0_mm", "d0", "D0", "mm", "mm", "median volume diameter", NULL, NULL,
                     "%.3f", "D#d0#u (mm)", M(d0_mm), 0},
    [RP_FIELD_SIGMA_M] = {"sigma_m_mm", "sigma-m", "sigma_m", "mm", "mm",
                          "mass-weighted standard deviation of the diameter", NULL, NULL,
                          "%.3f", "#gs#dm#u (mm)", M(sigma_m_mm), 0},
    [RP_FIELD_NW] = {"nw_m3_mm", "nw", "Nw(Dm)", "m-3 mm-1", "m^-3 mm^-1",
                     "normalised intercept, Dm-based (Testud et al. 2001)", NULL, NULL, "%.4g",
                     "N#dw#u (m#u-3#d mm#u-1#d)", M(nw_m3_mm), 1},
    [RP_FIELD_Z_RAYLEIGH] = {"z_rayleigh_dbz", "z-rayleigh", "Z (Rayleigh)", "dBZ", "dBZ",
                             "sixth moment of the DSD in dB (Rayleigh reflectivity)", NULL, NULL,
                             "%.2f", "Z#dRayleigh#u (dBZ)", M(z_rayleigh_dbz), 0},
};

const rp_field_desc *rp_field_get(rp_field_id id) {
  return ((int)id >= 0 && id < RP_FIELD_COUNT) ? &FIELDS[id] : NULL;
}

int rp_field_find(const char *text) {
  if (text == NULL) return -1;
  for (int i = 0; i < RP_FIELD_COUNT; i++)
    if (strcmp(FIELDS[i].key, text) == 0 || strcmp(FIELDS[i].name, text) == 0) return i;
  return -1;
}

double rp_field_value(rp_field_id id, const rp_gate_result *r, const rp_dsd_moments *m) {
  const rp_field_desc *f = rp_field_get(id);
  if (f == NULL) return (double)NAN;
  const void *base = f->source == RP_FIELD_OF_GATE ? (const void *)r : (const void *)m;
  if (base == NULL) return (double)NAN;
  double x;
  memcpy(&x, (const char *)base + f->offset, sizeof x);
  return x;
}

const char *const *rp_field_radar_names(size_t *n) {
  static const char *const names[] = {"zh", "zv", "zdr", "kdp", "rhohv",
                                      "delta", "ldr", "ah", "av", "adp"};
  if (n) *n = sizeof names / sizeof names[0];
  return names;
}
