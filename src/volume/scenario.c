/* scenario.c — defaults, validation and the fields (rain, wind, temperature) of a
 * synthetic radar scene.
 *
 * Method: the rain-field and wind rules are in scenario.h (docs/method.md §13.3); the
 * temperature falls linearly with height above the radar at lapse_rate_c_per_km, so the
 * freezing level is altitude + 1000 T_s / lapse. The Nyquist velocity is
 * v_a = lambda PRF / 4 (Doviak & Zrnić 1993 §3.6, from memory).
 * Invariants: a scenario that passed rp_scenario_check gives finite fields everywhere;
 * the DSD returned lies in the fast-path domain of gate.h (blending stays between two
 * values inside it). */
#include "rainprint/scenario.h"

#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "rainprint/gate.h"

#define C_LIGHT_M_S 299792458.0

void rp_scenario_default(rp_scenario *s) {
  if (s == NULL) return;
  memset(s, 0, sizeof *s);
  rp_scenario_radar *r = &s->radar;
  snprintf(r->name, sizeof r->name, "%s", "unnamed");
  r->latitude_deg = 0.0;
  r->longitude_deg = 0.0;
  r->altitude_m = 0.0;
  r->frequency_ghz = 5.6;
  snprintf(r->band, sizeof r->band, "%s", "C");
  r->beamwidth_deg = 1.0;
  r->gate_spacing_m = 250.0;
  r->gates = 400;
  r->n_elevations = 1;
  r->elevations_deg[0] = 0.5;
  r->azimuth_step_deg = 1.0;
  r->prf_hz = 1000.0;
  r->pulses = 64;
  r->sensitivity_dbz_at_10km = -5.0;
  r->phidp_offset_deg = 0.0;
  r->zdr_bias_db = 0.0;
  r->measures_ldr = false;
  snprintf(r->start_time, sizeof r->start_time, "%s", "2026-01-01T00:00:00Z");
  s->surface_temperature_c = 20.0;
  s->lapse_rate_c_per_km = 6.5;
  s->has_background = false;
  s->n_cells = 0;
  s->seed = 1;
  s->beam_samples = 1;
  s->kdp_window_gates = 9;
  s->noise = true;
}

/* Report value v of key (printf-formatted path) outside [lo, hi]. */
static rp_status bad_range(char *key, size_t n, rp_error *err, const char *path, double v,
                           double lo, double hi, const char *unit) {
  if (key != NULL && n > 0) snprintf(key, n, "%s", path);
  return rp_error_set(err, RP_EINVAL, "%s: %g %s is outside the allowed range [%g, %g]",
                      path, v, unit, lo, hi);
}

static int in_range(double v, double lo, double hi) { return isfinite(v) && v >= lo && v <= hi; }

#define CHECK(path, v, lo, hi, unit)                                      \
  do {                                                                    \
    if (!in_range((v), (lo), (hi)))                                       \
      return bad_range(key, n, err, (path), (v), (lo), (hi), (unit));     \
  } while (0)

static int digits(const char *t, size_t at, size_t n) {
  int v = 0;
  for (size_t i = at; i < at + n; i++) v = 10 * v + (t[i] - '0');
  return v;
}

static int time_ok(const char *t) {
  /* yyyy-mm-ddThh:mm:ssZ */
  const char *pat = "dddd-dd-ddTdd:dd:ddZ";
  if (strlen(t) != strlen(pat)) return 0;
  for (size_t i = 0; pat[i] != '\0'; i++) {
    if (pat[i] == 'd') {
      if (!isdigit((unsigned char)t[i])) return 0;
    } else if (t[i] != pat[i]) {
      return 0;
    }
  }
  /* a real calendar date and time of day: the writer turns the start into
   * time_coverage_end through timegm, which would silently roll 2026-02-30 over into
   * March (a leap second, :60, is not accepted either: timegm has none) */
  static const int mdays[12] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
  const int y = digits(t, 0, 4), mo = digits(t, 5, 2), d = digits(t, 8, 2);
  const int leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
  if (mo < 1 || mo > 12) return 0;
  if (d < 1 || d > mdays[mo - 1] + (mo == 2 && leap)) return 0;
  return digits(t, 11, 2) <= 23 && digits(t, 14, 2) <= 59 && digits(t, 17, 2) <= 59;
}

static rp_status check_dsd(const char *prefix, double nw, double d0, double mu, char *key,
                           size_t n, rp_error *err) {
  char path[96];
  snprintf(path, sizeof path, "%s.nw", prefix);
  CHECK(path, nw, 1.0, 1e7, "m^-3 mm^-1");
  snprintf(path, sizeof path, "%s.d0_mm", prefix);
  CHECK(path, d0, RP_GATE_FAST_D0_MIN_MM, RP_GATE_FAST_D0_MAX_MM, "mm");
  snprintf(path, sizeof path, "%s.mu", prefix);
  CHECK(path, mu, RP_GATE_FAST_MU_MIN, RP_GATE_FAST_MU_MAX, "");
  return RP_OK;
}

rp_status rp_scenario_check(const rp_scenario *s, char *key, size_t n, rp_error *err) {
  if (key != NULL && n > 0) key[0] = '\0';
  if (s == NULL) return rp_error_set(err, RP_EINVAL, "scenario: NULL");
  const rp_scenario_radar *r = &s->radar;
  CHECK("radar.latitude_deg", r->latitude_deg, -90.0, 90.0, "deg");
  CHECK("radar.longitude_deg", r->longitude_deg, -180.0, 180.0, "deg");
  CHECK("radar.altitude_m", r->altitude_m, -500.0, 9000.0, "m");
  CHECK("radar.frequency_ghz", r->frequency_ghz, 1.0, 40.0, "GHz");
  CHECK("radar.beamwidth_deg", r->beamwidth_deg, 0.1, 5.0, "deg");
  CHECK("radar.gate_spacing_m", r->gate_spacing_m, 10.0, 5000.0, "m");
  CHECK("radar.gates", (double)r->gates, 1.0, 4000.0, "");
  {
    /* the ray length: reported under radar.gates (a key of the file, so that a loader
     * finds its line; the product's name is no key path) */
    const double len_m = (double)r->gates * r->gate_spacing_m;
    if (!in_range(len_m, 10.0, 600000.0)) {
      if (key != NULL && n > 0) snprintf(key, n, "%s", "radar.gates");
      return rp_error_set(err, RP_EINVAL,
                          "radar.gates: %zu gates of %g m reach %g m, outside the allowed "
                          "range [10, 600000] m",
                          r->gates, r->gate_spacing_m, len_m);
    }
  }
  if (r->n_elevations < 1 || r->n_elevations > RP_SCENARIO_MAX_ELEVATIONS)
    return bad_range(key, n, err, "radar.elevations_deg (count)", (double)r->n_elevations,
                     1.0, RP_SCENARIO_MAX_ELEVATIONS, "");
  for (size_t i = 0; i < r->n_elevations; i++) {
    char path[64];
    snprintf(path, sizeof path, "radar.elevations_deg[%zu]", i);
    CHECK(path, r->elevations_deg[i], -2.0, 90.0, "deg");
  }
  CHECK("radar.azimuth_step_deg", r->azimuth_step_deg, 0.1, 10.0, "deg");
  {
    const double rays = 360.0 / r->azimuth_step_deg;
    if (fabs(rays - round(rays)) > 1e-6 * rays) {
      if (key != NULL && n > 0) snprintf(key, n, "%s", "radar.azimuth_step_deg");
      return rp_error_set(err, RP_EINVAL,
                          "radar.azimuth_step_deg: %g deg does not divide 360 deg into a "
                          "whole number of rays",
                          r->azimuth_step_deg);
    }
  }
  CHECK("radar.prf_hz", r->prf_hz, 100.0, 10000.0, "Hz");
  CHECK("radar.pulses", (double)r->pulses, 2.0, 1024.0, "");
  CHECK("radar.sensitivity_dbz_at_10km", r->sensitivity_dbz_at_10km, -40.0, 40.0, "dBZ");
  CHECK("radar.phidp_offset_deg", r->phidp_offset_deg, -180.0, 360.0, "deg");
  CHECK("radar.zdr_bias_db", r->zdr_bias_db, -5.0, 5.0, "dB");
  if (!time_ok(r->start_time)) {
    if (key != NULL && n > 0) snprintf(key, n, "%s", "radar.start_time");
    return rp_error_set(err, RP_EINVAL,
                        "radar.start_time: '%s' is not a UTC date and time of the form "
                        "yyyy-mm-ddThh:mm:ssZ",
                        r->start_time);
  }
  CHECK("atmosphere.surface_temperature_c", s->surface_temperature_c, 0.0, 45.0, "C");
  CHECK("atmosphere.lapse_rate_c_per_km", s->lapse_rate_c_per_km, 0.0, 12.0, "C/km");
  if (s->has_background)
    RP_TRY(check_dsd("rain.background", s->bg_nw_m3_mm, s->bg_d0_mm, s->bg_mu, key, n, err));
  if (s->n_cells > RP_SCENARIO_MAX_CELLS)
    return bad_range(key, n, err, "rain.cells (count)", (double)s->n_cells, 0.0,
                     RP_SCENARIO_MAX_CELLS, "");
  for (size_t i = 0; i < s->n_cells; i++) {
    const rp_cell *c = &s->cells[i];
    char pre[48], path[96];
    snprintf(pre, sizeof pre, "rain.cells[%zu]", i);
    snprintf(path, sizeof path, "%s.x_km", pre);
    CHECK(path, c->x_km, -1000.0, 1000.0, "km");
    snprintf(path, sizeof path, "%s.y_km", pre);
    CHECK(path, c->y_km, -1000.0, 1000.0, "km");
    if (c->kind == RP_CELL_GAUSSIAN) {
      snprintf(path, sizeof path, "%s.radius_km", pre);
      CHECK(path, c->radius_km, 0.1, 500.0, "km");
    } else {
      snprintf(path, sizeof path, "%s.length_km", pre);
      CHECK(path, c->length_km, 0.0, 1000.0, "km");
      snprintf(path, sizeof path, "%s.width_km", pre);
      CHECK(path, c->width_km, 0.1, 200.0, "km");
      snprintf(path, sizeof path, "%s.orientation_deg", pre);
      CHECK(path, c->orientation_deg, 0.0, 360.0, "deg");
    }
    RP_TRY(check_dsd(pre, c->nw_m3_mm, c->d0_mm, c->mu, key, n, err));
  }
  const rp_scenario_wind *w = &s->wind;
  CHECK("wind.u_ms", w->u_ms, -100.0, 100.0, "m/s");
  CHECK("wind.v_ms", w->v_ms, -100.0, 100.0, "m/s");
  CHECK("wind.turbulence_ms", w->turbulence_ms, 0.0, 20.0, "m/s");
  if (w->has_vortex) {
    CHECK("wind.vortex.x_km", w->vortex_x_km, -1000.0, 1000.0, "km");
    CHECK("wind.vortex.y_km", w->vortex_y_km, -1000.0, 1000.0, "km");
    CHECK("wind.vortex.radius_km", w->vortex_radius_km, 0.1, 200.0, "km");
    CHECK("wind.vortex.peak_ms", w->vortex_peak_ms, -100.0, 100.0, "m/s");
  }
  CHECK("beam_samples", (double)s->beam_samples, 1.0, 5.0, "");
  CHECK("kdp_window_gates", (double)s->kdp_window_gates, 3.0, 101.0, "gates");
  if (s->kdp_window_gates % 2 == 0) {
    if (key != NULL && n > 0) snprintf(key, n, "%s", "kdp_window_gates");
    return rp_error_set(err, RP_EINVAL, "kdp_window_gates: %d must be odd",
                        s->kdp_window_gates);
  }
  const double total = round(360.0 / r->azimuth_step_deg) * (double)r->gates *
                       (double)r->n_elevations;
  if (total > RP_SCENARIO_MAX_TOTAL_GATES) {
    if (key != NULL && n > 0) snprintf(key, n, "%s", "radar.gates");
    return rp_error_set(err, RP_EINVAL,
                        "radar: %.0f gates (rays x gates x elevations) exceed the limit of "
                        "%.0f that keeps a volume under 2 GB of memory",
                        total, RP_SCENARIO_MAX_TOTAL_GATES);
  }
  return RP_OK;
}

double rp_scenario_wavelength_m(const rp_scenario *s) {
  return C_LIGHT_M_S / (s->radar.frequency_ghz * 1e9);
}

double rp_scenario_nyquist_ms(const rp_scenario *s) {
  return rp_scenario_wavelength_m(s) * s->radar.prf_hz / 4.0;
}

double rp_scenario_freezing_level_m(const rp_scenario *s) {
  if (s->lapse_rate_c_per_km <= 0.0)
    return s->surface_temperature_c > 0.0 ? (double)INFINITY : s->radar.altitude_m;
  return s->radar.altitude_m + 1000.0 * s->surface_temperature_c / s->lapse_rate_c_per_km;
}

double rp_scenario_temperature_c(const rp_scenario *s, double height_m) {
  return s->surface_temperature_c -
         s->lapse_rate_c_per_km * (height_m - s->radar.altitude_m) / 1000.0;
}

static double cell_weight(const rp_cell *c, double x_km, double y_km) {
  const double dx = x_km - c->x_km, dy = y_km - c->y_km;
  if (c->kind == RP_CELL_GAUSSIAN) {
    const double r2 = dx * dx + dy * dy;
    return exp(-r2 / (2.0 * c->radius_km * c->radius_km));
  }
  const double th = c->orientation_deg * M_PI / 180.0;
  /* axis unit vector (sin th, cos th): clockwise from north */
  const double u = dx * sin(th) + dy * cos(th);
  const double v = -dx * cos(th) + dy * sin(th);
  const double sig = 0.5 * c->width_km;
  double e = v * v;
  const double excess = fabs(u) - 0.5 * c->length_km;
  if (excess > 0.0) e += excess * excess;
  return exp(-e / (2.0 * sig * sig));
}

int rp_scenario_dsd_at(const rp_scenario *s, double x_km, double y_km, double *nw_m3_mm,
                       double *d0_mm, double *mu) {
  double wmax = 0.0;
  const rp_cell *best = NULL;
  for (size_t i = 0; i < s->n_cells; i++) {
    const double w = cell_weight(&s->cells[i], x_km, y_km);
    if (w > wmax) {
      wmax = w;
      best = &s->cells[i];
    }
  }
  if (s->has_background) {
    if (best == NULL) {
      *nw_m3_mm = s->bg_nw_m3_mm;
      *d0_mm = s->bg_d0_mm;
      *mu = s->bg_mu;
      return 1;
    }
    const double lg = (1.0 - wmax) * log10(s->bg_nw_m3_mm) + wmax * log10(best->nw_m3_mm);
    *nw_m3_mm = pow(10.0, lg);
    *d0_mm = (1.0 - wmax) * s->bg_d0_mm + wmax * best->d0_mm;
    *mu = (1.0 - wmax) * s->bg_mu + wmax * best->mu;
    return 1;
  }
  if (best == NULL || wmax < RP_SCENARIO_W_MIN) return 0;
  *nw_m3_mm = wmax * best->nw_m3_mm;
  *d0_mm = best->d0_mm;
  *mu = best->mu;
  return 1;
}

void rp_scenario_wind_at(const rp_scenario *s, double x_km, double y_km, double *u_ms,
                         double *v_ms) {
  double u = s->wind.u_ms, v = s->wind.v_ms;
  if (s->wind.has_vortex) {
    const double dx = x_km - s->wind.vortex_x_km, dy = y_km - s->wind.vortex_y_km;
    const double r = sqrt(dx * dx + dy * dy), R = s->wind.vortex_radius_km;
    if (r > 0.0) {
      const double vt = r <= R ? s->wind.vortex_peak_ms * r / R : s->wind.vortex_peak_ms * R / r;
      u += -vt * dy / r;
      v += vt * dx / r;
    }
  }
  *u_ms = u;
  *v_ms = v;
}
