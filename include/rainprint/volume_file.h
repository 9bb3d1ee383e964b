/* volume_file.h — synthetic volumes in netCDF-4 files following the CF conventions and
 * CF/Radial 1.4 (with the instrument_parameters sub-convention), and a reader of fields
 * for pictures and scoring.
 *
 * Layout: dimensions time (one per ray), range, sweep, string_length; the required
 * variables of the convention for a fixed ground radar (volume_number,
 * time_coverage_start/end, latitude, longitude, altitude, time, range, sweep_number,
 * sweep_mode, fixed_angle, sweep_start_ray_index, sweep_end_ray_index, azimuth,
 * elevation), instrument_parameters (frequency, pulse_width, prt, nyquist_velocity,
 * n_samples, polarization_mode) and radar_parameters (radar_beam_width_h/v), both
 * declared in Conventions, and one float (time, range) variable per
 * field of volume.h with units, _FillValue (-9999), long_name, standard_name for the
 * observed ones, coordinates "elevation azimuth range", and field_folds/fold limits on
 * VEL. The flag field is a byte variable with CF flag_values / flag_meanings.
 * Global attributes add the scenario text, the seed, the noise switch, the program
 * version (rp_version()) and the caution on synthetic data. */
#ifndef RAINPRINT_VOLUME_FILE_H
#define RAINPRINT_VOLUME_FILE_H

#include <stddef.h>

#include "rainprint/status.h"
#include "rainprint/volume.h"

#define RP_VOLUME_FILL_VALUE (-9999.0f)
/* Deflate level of rp_volume_file_write (with the shuffle filter). */
#define RP_VOLUME_DEFLATE_DEFAULT 1

/* Write volume v to path, whole or not at all (a temporary file renamed into place).
 * scenario_text (may be NULL) is stored as the global attribute `scenario`.
 * Statuses: RP_EINVAL (NULL v or path), RP_EIO (the file cannot be created or
 * renamed), RP_ENETCDF (a netCDF call failed: the message names the variable). */
rp_status rp_volume_file_write(const rp_volume *v, const char *path, const char *scenario_text,
                               rp_error *err);

/* As rp_volume_file_write with deflate level deflate_level in [0, 9] (0: no compression,
 * fastest, about 120 bytes a gate; RP_EINVAL outside). */
rp_status rp_volume_file_write_level(const rp_volume *v, const char *path,
                                     const char *scenario_text, int deflate_level,
                                     rp_error *err);

/* ---- reading ---------------------------------------------------------------------- */

typedef struct rp_volume_reader rp_volume_reader;

/* Open a volume file, or any netCDF file with `time` and `range` dimensions (a user's
 * retrieval). Sweep variables and angles are read when present (a retrieval without
 * them is one sweep of all rays). Caller closes *out with rp_volume_file_close.
 * Statuses: RP_EINVAL (NULL), RP_EIO (cannot open), RP_EPARSE (no time or range
 * dimension, or inconsistent sweep indices), RP_ENOMEM. */
rp_status rp_volume_file_open(const char *path, rp_volume_reader **out, rp_error *err);
void rp_volume_file_close(rp_volume_reader *r); /* NULL ok */

/* Rays (time), gates (range) and sweeps of the file. */
size_t rp_volume_file_rays(const rp_volume_reader *r);
size_t rp_volume_file_gates(const rp_volume_reader *r);
size_t rp_volume_file_sweeps(const rp_volume_reader *r);

/* Per-ray azimuth and elevation (degrees, rays values), per-gate range (m, gates
 * values), sweep k's first and last ray (inclusive) and fixed angle. Borrowed (valid
 * until close); NaN where the file has no such variable. */
const double *rp_volume_file_azimuth_deg(const rp_volume_reader *r);
const double *rp_volume_file_elevation_deg(const rp_volume_reader *r);
const double *rp_volume_file_range_m(const rp_volume_reader *r);
rp_status rp_volume_file_sweep_rays(const rp_volume_reader *r, size_t k, size_t *first,
                                    size_t *last, double *fixed_angle_deg, rp_error *err);

/* RP_OK when a and b have the same rays and gates (and, where both files have them,
 * ranges within 0.01 m and azimuths and elevations within 0.01 deg), so that a
 * retrieval can be scored against the truth gate by gate; RP_EINVAL naming what
 * differs otherwise. */
rp_status rp_volume_file_same_grid(const rp_volume_reader *a, const rp_volume_reader *b,
                                   rp_error *err);

/* Fields: the variables of dimensions (time, range), in file order. Name i is
 * borrowed (valid until close); NULL past the end. */
size_t rp_volume_file_n_fields(const rp_volume_reader *r);
const char *rp_volume_file_field_name(const rp_volume_reader *r, size_t i);

/* Read field `name` whole (rays x gates doubles into out, caller-allocated), with its
 * _FillValue (and values outside valid_min/valid_max) as NaN and scale_factor /
 * add_offset applied. units (n bytes, may be NULL) gets the units attribute or "".
 * Statuses: RP_EINVAL (NULL, unknown field: the message lists the fields),
 * RP_ENETCDF. */
rp_status rp_volume_file_read_field(const rp_volume_reader *r, const char *name, double *out,
                                    char *units, size_t n, rp_error *err);

/* One sweep (or an RHI cut) of a field with its geometry, for pictures. Owned arrays;
 * free with rp_volume_cut_free. Values row per ray: values[i * n_gates + g]. */
typedef struct {
  size_t n_rays, n_gates;
  double fixed_angle_deg;
  double *azimuth_deg, *elevation_deg; /* n_rays */
  double *range_m;                     /* n_gates */
  double *values;                      /* n_rays x n_gates, NaN = fill */
  double *height_m, *ground_m;         /* n_rays x n_gates: 4/3-earth, above the radar
                                          and along the ground */
  char units[64];
} rp_volume_cut;

/* Sweep k (0-based) of field name. Statuses: as rp_volume_file_read_field; RP_EINVAL
 * for k out of range. */
rp_status rp_volume_file_read_sweep(const rp_volume_reader *r, const char *name, size_t k,
                                    rp_volume_cut *out, rp_error *err);
/* The ray nearest azimuth_deg in every sweep (an RHI cut through a PPI volume), rays in
 * sweep order. Statuses as rp_volume_file_read_sweep; RP_EINVAL for a NaN azimuth. */
rp_status rp_volume_file_read_rhi(const rp_volume_reader *r, const char *name,
                                  double azimuth_deg, rp_volume_cut *out, rp_error *err);
void rp_volume_cut_free(rp_volume_cut *c); /* NULL ok; frees the arrays, not c */

/* What a volume file says about itself, for titles: the instrument's name (global
 * attribute instrument_name), the band letter of the frequency (rp_band_of_frequency;
 * "" when none), the frequency (GHz, from instrument_parameters `frequency`), the
 * start time (time_coverage_start) and the Nyquist velocity of the first ray (m/s).
 * Missing items are "" or NaN (files of other programs). */
typedef struct {
  char instrument_name[128];
  char band[8];
  double frequency_ghz;
  char time_coverage_start[40];
  double nyquist_ms;
} rp_volume_file_meta;

void rp_volume_file_get_meta(const rp_volume_reader *r, rp_volume_file_meta *out);

#endif
