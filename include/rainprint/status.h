/* status.h — the one status enum of rainprint and the error record that carries a
 * detail message.
 *
 * Library functions never print or exit: they return an rp_status and, when given a
 * non-NULL rp_error, fill it with a one-line message naming the quantity and value at
 * fault (e.g. "T-matrix did not converge for D = 7.9 mm at 35 GHz after 60 terms").
 * The tool maps statuses to exit codes with rp_status_is_input_error(). */
#ifndef RAINPRINT_STATUS_H
#define RAINPRINT_STATUS_H

#include <stddef.h>

/* X(name, message, is_input_error) */
#define RP_STATUS_MAP(X)                                              \
  X(OK, "success", 0)                                                 \
  X(EINVAL, "invalid argument", 1)                                    \
  X(EDOM, "outside the model's domain of validity", 1)                \
  X(EPARSE, "could not parse input", 1)                               \
  X(EIO, "input/output error", 1)                                     \
  X(ETABLE, "malformed or mismatched scattering table", 1)            \
  X(ESAMPLES, "too few samples pass the thresholds", 1)               \
  X(ENOMEM, "out of memory", 0)                                       \
  X(ENOCONV, "numerical method did not converge", 0)                  \
  X(ENETCDF, "netCDF error", 0)                                       \
  X(EFFTW, "FFTW error", 0)                                           \
  X(EGSL, "GSL error", 0)                                             \
  X(EPLOT, "plotting error", 0)

typedef enum {
#define RP_STATUS_ENUM(name, msg, input) RP_##name,
  RP_STATUS_MAP(RP_STATUS_ENUM)
#undef RP_STATUS_ENUM
  RP_STATUS_COUNT
} rp_status;

#define RP_ERROR_MSG_LEN 512

/* Error record: the status and a detail message. Zero-initialise before use. */
typedef struct {
  rp_status status;
  char msg[RP_ERROR_MSG_LEN];
} rp_error;

/* Short symbolic name ("EINVAL") and generic message of a status. */
const char *rp_status_name(rp_status s);
const char *rp_status_message(rp_status s);

/* Non-zero when the status means the user's input was bad (tool exit code 2) rather
 * than a failure while computing (exit code 1). */
int rp_status_is_input_error(rp_status s);

/* Record status s with a printf-style detail message in err (err may be NULL).
 * Returns s so that a caller can write `return rp_error_set(err, RP_EINVAL, ...)`. */
rp_status rp_error_set(rp_error *err, rp_status s, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

/* Prefix the message already in err with a context string ("table.nc: ") */
void rp_error_prefix(rp_error *err, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

/* Reset err to RP_OK with an empty message (err may be NULL). */
void rp_error_clear(rp_error *err);

/* A progress report of a long library call: fraction_done in [0, 1]. Called from the
 * thread that made the call, so it needs no lock; it must not call back into the call. */
typedef void (*rp_progress_fn)(void *ctx, double fraction_done);

/* Propagate a non-OK status from an expression. */
#define RP_TRY(expr)                     \
  do {                                   \
    rp_status rp_try_s_ = (expr);        \
    if (rp_try_s_ != RP_OK) return rp_try_s_; \
  } while (0)

#endif
