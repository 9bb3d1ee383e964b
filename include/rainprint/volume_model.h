/* volume_model.h — the radar model (radar_model.h) as the physics of a volume
 * (volume.h): the scattering configuration for a scenario's radar, the cache warmed
 * for the scenario's temperatures and elevations, one read-only temperature view per
 * sweep, and the fall-speed moments from the model's entry table.
 *
 * Use (the `scene` command):
 *   rp_radar_config c;  rp_volume_radar_config(&scenario, &c, err);  c.source = ...;
 *   rp_radar_model_alloc(&c, &model, err);
 *   rp_volume_model_alloc(model, &scenario, &vm, err);
 *   rp_volume_synthesize(&scenario, rp_volume_model_physics(vm), &opts, &vol, err);
 * Temperatures: rain exists only between 0 C and the surface temperature, so the views
 * cover [0, surface_temperature_c + lapse_rate_c_per_km / 2] (the margin for beam
 * samples below the radar's altitude; at most RP_RADAR_TEMP_MAX_C); temperatures
 * outside are clamped to the view. */
#ifndef RAINPRINT_VOLUME_MODEL_H
#define RAINPRINT_VOLUME_MODEL_H

#include "rainprint/radar_model.h"
#include "rainprint/scenario.h"
#include "rainprint/status.h"
#include "rainprint/volume.h"

/* The default radar configuration (rp_radar_config_default) with one band at the
 * scenario's frequency. The caller sets the table source. RP_EINVAL for NULL. */
rp_status rp_volume_radar_config(const rp_scenario *s, rp_radar_config *c, rp_error *err);

typedef struct rp_volume_model rp_volume_model;

/* Bind model m (band 0; borrowed, must outlive *out) to scenario s: warms the cache
 * (rp_radar_model_prepare), takes a view per elevation and tabulates the fall-speed
 * moments. Caller frees *out. Statuses: RP_EINVAL (NULL, a scenario that fails
 * rp_scenario_check), those of rp_radar_model_prepare / _temps / _entry and
 * rp_fallmom_alloc, RP_ENOMEM. */
rp_status rp_volume_model_alloc(rp_radar_model *m, const rp_scenario *s,
                                rp_volume_model **out, rp_error *err);
void rp_volume_model_free(rp_volume_model *vm); /* NULL ok */

/* The physics to pass to rp_volume_synthesize (borrowed from vm). */
const rp_volume_physics *rp_volume_model_physics(const rp_volume_model *vm);

#endif
