/* volume_iq_file.h — the kept I/Q samples of one sweep of a pulse-level volume
 * (volume.h, options keep_iq) as a netCDF-4 file (CF-1.8 conventions), written whole
 * or not at all.
 *
 * Layout: dimensions ray (rays of the sweep), range (gates) and pulse (M); variables
 * h_re, h_im, v_re, v_im (float, ray x range x pulse, units "1": samples normalised so
 * that the receiver noise power E|n|^2 is 1 in each channel), azimuth (ray, degrees),
 * elevation (ray, degrees), range (range, m, gate centres), time (pulse, s since the
 * ray's first pulse, m T_s) and noise_equivalent_reflectivity (range, dBZ: the Z of
 * SNR 0 dB, so Z = that + 10 log10(power - 1) for a noise-subtracted power in the
 * samples' units). Global attributes: sweep (0-based), fixed_angle_deg, n_pulses,
 * prt_s, wavelength_mm, frequency_ghz, nyquist_velocity_m_s, seed, noise_power = 1,
 * the sign conventions (iq.h), the random streams, the instrument name, the rainprint
 * version and a caution that the data are synthetic. Size: 16 M bytes per gate
 * (64 pulses, 360 rays x 1000 gates: 369 MB), stored uncompressed (noise does not
 * compress). */
#ifndef RAINPRINT_VOLUME_IQ_FILE_H
#define RAINPRINT_VOLUME_IQ_FILE_H

#include "rainprint/status.h"
#include "rainprint/volume.h"

/* Write the kept I/Q of v (v->iq_h non-NULL) to path: a temporary file beside path is
 * renamed over it when complete. Statuses: RP_EINVAL for NULL v or path, or a volume
 * without kept I/Q; RP_EIO when the file cannot be created or renamed (the message
 * gives the system's reason); RP_ENETCDF when a netCDF call fails (the message names
 * the variable or attribute); RP_ENOMEM. */
rp_status rp_volume_iq_save(const rp_volume *v, const char *path, rp_error *err);

#endif
