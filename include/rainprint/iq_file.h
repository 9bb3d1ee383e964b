/* iq_file.h — I/Q samples of one or more realisations of a gate as a netCDF-4 file
 * (CF-1.8 conventions), written whole or not at all.
 *
 * Layout: dimensions realisation (n) and pulse (M); variables h_re, h_im, v_re, v_im
 * (double, realisation x pulse, units "1": samples normalised so that the receiver
 * noise power E|n|^2 is 1 in each channel, attribute noise_power = 1), time (pulse,
 * "s" since the first pulse, m T_s), realisation (index); for a mixture spectrum also
 * spectrum_weight, spectrum_mean_velocity, spectrum_width over a component dimension.
 * Global attributes: every input (zh_dbz, zdr_db, rhohv, phidp_deg, velocity_m_s,
 * width_m_s, snr_db, n_pulses, prt_s, wavelength_mm, frequency_ghz,
 * nyquist_velocity_m_s, seed, spectrum_model), the sign conventions (iq.h), the random
 * streams, the rainprint version and a caution that the data are synthetic. */
#ifndef RAINPRINT_IQ_FILE_H
#define RAINPRINT_IQ_FILE_H

#include <complex.h>
#include <stddef.h>
#include <stdint.h>

#include "rainprint/iq.h"
#include "rainprint/status.h"

/* Write n_realisations x p->n_pulses samples h, v (realisation-major, as filled by
 * rp_pulse_ensemble) synthesised with p, spec (NULL: Gaussian) and seed to path.
 * streams (NULL: the default text naming rp_pulse_ensemble's keys) says how each
 * realisation's random stream was keyed. A temporary file beside path is renamed over
 * it when complete. Statuses: RP_EINVAL for NULL pointers or n_realisations of 0, and
 * those of rp_iq_params_check; RP_EIO when the file cannot be created or renamed;
 * RP_ENETCDF when a netCDF call fails (the message names the variable or attribute);
 * RP_ENOMEM. */
rp_status rp_iq_save(const char *path, const rp_iq_params *p, const rp_iq_spectrum *spec,
                     uint64_t seed, size_t n_realisations, const double complex *h,
                     const double complex *v, const char *streams, rp_error *err);

#endif
