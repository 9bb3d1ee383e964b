/* dsd_vary.h — one parameter of a DSD replaced by another value, the rest held: what
 * `rainprint curve --vary d0|dm|mu|nw|rain-rate` does, as library rules.
 *
 * Which bases take which parameter:
 *   d0, dm, nw   a normalised gamma (either form); d0 builds the D0 form, dm the Dm form,
 *                nw keeps the base's form
 *   mu           a gamma (N0 and Lambda held) or a normalised gamma (Nw and D0/Dm held)
 *   rain-rate    Marshall–Palmer
 * The result keeps the base's truncation. The held parameters keep their numbers: varying
 * d0 of a Dm-form base builds the D0 form with the base's Nw value (and dm of a D0-form
 * base the Dm form), which is then the parameter of the new form — the two forms' Nw differ
 * by a mu-dependent factor (1.163 at mu 3), so the DSD's moment-based Nw changes too. */
#ifndef RAINPRINT_DSD_VARY_H
#define RAINPRINT_DSD_VARY_H

#include "rainprint/dsd.h"
#include "rainprint/status.h"

typedef enum {
  RP_DSD_PARAM_D0,
  RP_DSD_PARAM_DM,
  RP_DSD_PARAM_MU,
  RP_DSD_PARAM_NW,
  RP_DSD_PARAM_RAIN_RATE,
  RP_DSD_PARAM_COUNT
} rp_dsd_param;

/* "d0", "dm", "mu", "nw", "rain-rate"; "unknown" for an invalid p. */
const char *rp_dsd_param_name(rp_dsd_param p);
/* Names of every parameter in a static array of *n entries. */
const char *const *rp_dsd_param_names(size_t *n);
/* Unit of the parameter's value ("mm", "", "m^-3 mm^-1", "mm/h"). */
const char *rp_dsd_param_unit(rp_dsd_param p);

/* RP_OK when base takes parameter p; RP_EINVAL "varying d0 needs a base DSD that is a
 * normalised gamma; the base is gamma" otherwise (or for NULL/invalid arguments). */
rp_status rp_dsd_param_check_base(rp_dsd_param p, const rp_dsd *base, rp_error *err);

/* *out = base with parameter p set to value (see above), truncated as base.
 * Statuses: those of rp_dsd_param_check_base and of the DSD constructors. */
rp_status rp_dsd_with_param(const rp_dsd *base, rp_dsd_param p, double value, rp_dsd *out,
                            rp_error *err);

#endif
