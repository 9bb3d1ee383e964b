/* scenario_file.h — scenarios (scenario.h) read from YAML files; every key, its units,
 * default and allowed range in docs/scenario.md.
 *
 *   radar:       name, latitude_deg, longitude_deg, altitude_m, band | frequency_ghz,
 *                beamwidth_deg, gate_spacing_m, gates, elevations_deg: [..],
 *                azimuth_step_deg, nyquist_ms | prf_hz, pulses,
 *                sensitivity_dbz_at_10km, phidp_offset_deg, zdr_bias_db,
 *                measures_ldr, start_time
 *   atmosphere:  surface_temperature_c, lapse_rate_c_per_km
 *   rain:        background: {preset: NAME} | {nw, d0_mm, mu};  cells: [ {kind:
 *                gaussian|line, x_km, y_km, radius_km | length_km, width_km,
 *                orientation_deg, nw, d0_mm, mu} ]
 *   wind:        u_ms, v_ms, turbulence_ms, vortex: {x_km, y_km, radius_km, peak_ms}
 *   seed, beam_samples, kdp_window_gates, noise
 * Unknown keys are errors; numbers must be plain decimals. */
#ifndef RAINPRINT_SCENARIO_FILE_H
#define RAINPRINT_SCENARIO_FILE_H

#include "rainprint/scenario.h"
#include "rainprint/status.h"

/* Read scenario file path into *out (defaults for absent keys, then
 * rp_scenario_check). A `preset:` background is resolved with rp_preset_find in
 * presets_dir (normalised-gamma presets only; a Dm-form preset is converted with
 * D0 = Dm (3.67 + mu) / (4 + mu)); presets_dir may be NULL when no preset is named.
 * text (may be NULL) receives the file's contents (caller frees) for the output
 * file's `scenario` attribute.
 * Statuses: RP_EINVAL (NULL path or out); RP_EIO (cannot open or read the file);
 * RP_EPARSE (YAML syntax, unknown or missing keys, wrong types: "path:line:column:
 * ..."; a value the validation refuses: "path:line: key.path: value ...: reason");
 * RP_ENOMEM. *out is unchanged on error. */
rp_status rp_scenario_file_load(const char *path, const char *presets_dir, rp_scenario *out,
                                char **text, rp_error *err);

/* The same on n bytes of YAML in memory (named name in messages; the shared text rules
 * apply as to a file): for the fuzz target and for callers that hold the text. */
rp_status rp_scenario_load_data(const char *name, const char *data, size_t n,
                                const char *presets_dir, rp_scenario *out, rp_error *err);

#endif
