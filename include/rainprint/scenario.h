/* scenario.h — a synthetic radar scene: the radar, the atmosphere, the rain field and
 * the wind, as plain values (read from YAML by scenario_file.h, or filled by a program).
 *
 * Coordinates: x_km east and y_km north of the radar on a flat map (the ground range of
 * the 4/3-earth model, beam.h, is used as the map distance). Heights are above mean sea
 * level. Every key, its units, default and allowed range: docs/scenario.md.
 *
 * Rain field (docs/method.md §13.3 and docs/scenario.md, "Blending"): each cell has a weight w in [0, 1]
 *   gaussian: w = exp(-r^2 / (2 R^2)), r the distance to the centre, R = radius_km;
 *   line:     w = exp(-v^2 / (2 s^2)) * g(u), s = width_km / 2, u along the line axis
 *             (orientation_deg clockwise from north), v across it, g = 1 for
 *             |u| <= length_km / 2 and exp(-(|u| - L/2)^2 / (2 s^2)) beyond.
 * The cell with the largest w at a point decides it. With a background DSD,
 *   log10 Nw, D0 and mu are blended linearly in w between background and the cell's peak;
 * without one, Nw = w Nw_peak with the peak's D0 and mu where w >= RP_SCENARIO_W_MIN and
 * no rain elsewhere. Rain only below the freezing level.
 * Wind: uniform (u, v) plus an optional Rankine vortex (solid rotation inside radius_km,
 * speed falling as 1/r outside; peak_ms > 0 turns anticlockwise seen from above). */
#ifndef RAINPRINT_SCENARIO_H
#define RAINPRINT_SCENARIO_H

#include <stdbool.h>
#include <stddef.h>

#include "rainprint/status.h"

#define RP_SCENARIO_MAX_ELEVATIONS 32
#define RP_SCENARIO_MAX_CELLS 64
#define RP_SCENARIO_NAME_LEN 64
/* Weight below which a cell without a background gives no rain. */
#define RP_SCENARIO_W_MIN 0.01
/* Largest number of gates of a volume (rays x gates x sweeps): 31 floats a gate are
 * kept (observed, truth, geometry) and the netCDF write adds about 30 bytes a gate, so
 * the `scene` command needs about 150 bytes a gate plus ~100 MB (model, tables):
 * 12 M gates stay under 2 GB (measured 1.9 GB at 12 M gates with LDR). */
#define RP_SCENARIO_MAX_TOTAL_GATES 12000000.0

typedef enum { RP_CELL_GAUSSIAN, RP_CELL_LINE } rp_cell_kind;

typedef struct {
  rp_cell_kind kind;
  double x_km, y_km;        /* centre */
  double radius_km;         /* gaussian */
  double length_km, width_km, orientation_deg; /* line */
  double nw_m3_mm, d0_mm, mu;                  /* peak DSD (normalised gamma, D0 form) */
} rp_cell;

typedef struct {
  char name[RP_SCENARIO_NAME_LEN];
  double latitude_deg, longitude_deg, altitude_m;
  double frequency_ghz;     /* from band or frequency_ghz */
  char band[8];             /* "S", "C", "X" or "" when a frequency was given */
  double beamwidth_deg;
  double gate_spacing_m;    /* first gate centre at gate_spacing_m / 2 */
  size_t gates;
  size_t n_elevations;
  double elevations_deg[RP_SCENARIO_MAX_ELEVATIONS];
  double azimuth_step_deg;
  double prf_hz;            /* from prf_hz or nyquist_ms: v_a = lambda prf / 4 */
  int pulses;
  double sensitivity_dbz_at_10km;
  double phidp_offset_deg, zdr_bias_db;
  bool measures_ldr;
  char start_time[32];      /* "yyyy-mm-ddThh:mm:ssZ" */
} rp_scenario_radar;

typedef struct {
  double u_ms, v_ms;
  bool has_vortex;
  double vortex_x_km, vortex_y_km, vortex_radius_km, vortex_peak_ms;
  double turbulence_ms;
} rp_scenario_wind;

typedef struct {
  rp_scenario_radar radar;
  double surface_temperature_c, lapse_rate_c_per_km;
  bool has_background;
  char background_preset[64]; /* "" unless given by name (resolved into the numbers) */
  double bg_nw_m3_mm, bg_d0_mm, bg_mu;
  size_t n_cells;
  rp_cell cells[RP_SCENARIO_MAX_CELLS];
  rp_scenario_wind wind;
  unsigned long long seed;
  int beam_samples;         /* 1: beam centre only; n: n x n Gauss–Hermite samples */
  int kdp_window_gates;     /* odd, >= 3 */
  bool noise;
} rp_scenario;

/* Defaults of docs/scenario.md: C band, 1 deg beam, 400 gates of 250 m, one sweep at
 * 0.5 deg, 1 deg rays, PRF 1000 Hz, 64 pulses, -5 dBZ at 10 km, 20 C and 6.5 C/km, no
 * rain, no wind, seed 1, beam centre only, 9-gate KDP window, noise on. NULL: no-op. */
void rp_scenario_default(rp_scenario *s);

/* Validate every value. On failure returns RP_EINVAL with "key.path: value ...: reason"
 * in err and, when key is not NULL, the key path ("radar.gate_spacing_m",
 * "rain.cells[2].d0_mm") in key (n bytes) so that a loader can add the line.
 * D0 and mu must lie in the volume's fast-path domain (gate.h RP_GATE_FAST_*): values
 * outside are refused, not clamped. */
rp_status rp_scenario_check(const rp_scenario *s, char *key, size_t n, rp_error *err);

/* Wavelength (m), Nyquist velocity (m/s) and pulse repetition time (s). */
double rp_scenario_wavelength_m(const rp_scenario *s);
double rp_scenario_nyquist_ms(const rp_scenario *s);

/* Freezing level (m above MSL): altitude + 1000 T_s / lapse; +INFINITY for lapse 0 with
 * T_s > 0. Temperature (C) at height_m above MSL (the surface is at the radar's
 * altitude). */
double rp_scenario_freezing_level_m(const rp_scenario *s);
double rp_scenario_temperature_c(const rp_scenario *s, double height_m);

/* DSD at map point (x_km, y_km) (rules above). Returns 1 and fills Nw, D0, mu when it
 * rains there, 0 when not. Assumes a checked scenario. */
int rp_scenario_dsd_at(const rp_scenario *s, double x_km, double y_km, double *nw_m3_mm,
                       double *d0_mm, double *mu);

/* Horizontal wind (m/s, u east, v north) at map point (x_km, y_km). */
void rp_scenario_wind_at(const rp_scenario *s, double x_km, double y_km, double *u_ms,
                         double *v_ms);

#endif
