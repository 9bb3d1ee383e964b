/* status.c — status names, messages and the error record. */
#include "rainprint/status.h"

#include <stdarg.h>
#include <stdio.h>
#include <string.h>

static const char *const status_names[] = {
#define RP_STATUS_NAME(name, msg, input) #name,
    RP_STATUS_MAP(RP_STATUS_NAME)
#undef RP_STATUS_NAME
};

static const char *const status_messages[] = {
#define RP_STATUS_MSG(name, msg, input) msg,
    RP_STATUS_MAP(RP_STATUS_MSG)
#undef RP_STATUS_MSG
};

static const int status_input[] = {
#define RP_STATUS_INPUT(name, msg, input) input,
    RP_STATUS_MAP(RP_STATUS_INPUT)
#undef RP_STATUS_INPUT
};

const char *rp_status_name(rp_status s) {
  return (s >= 0 && s < RP_STATUS_COUNT) ? status_names[s] : "UNKNOWN";
}

const char *rp_status_message(rp_status s) {
  return (s >= 0 && s < RP_STATUS_COUNT) ? status_messages[s] : "unknown status";
}

int rp_status_is_input_error(rp_status s) {
  return (s >= 0 && s < RP_STATUS_COUNT) ? status_input[s] : 0;
}

rp_status rp_error_set(rp_error *err, rp_status s, const char *fmt, ...) {
  if (err == NULL) return s;
  err->status = s;
  va_list ap;
  va_start(ap, fmt);
  vsnprintf(err->msg, sizeof err->msg, fmt, ap);
  va_end(ap);
  return s;
}

void rp_error_prefix(rp_error *err, const char *fmt, ...) {
  if (err == NULL) return;
  char prefix[RP_ERROR_MSG_LEN];
  char old[RP_ERROR_MSG_LEN];
  va_list ap;
  va_start(ap, fmt);
  vsnprintf(prefix, sizeof prefix, fmt, ap);
  va_end(ap);
  memcpy(old, err->msg, sizeof old);
  /* Truncation of an over-long message is acceptable: copy piecewise. */
  size_t n = strlen(prefix);
  if (n >= sizeof err->msg) n = sizeof err->msg - 1;
  memcpy(err->msg, prefix, n);
  size_t m = strlen(old);
  if (m > sizeof err->msg - 1 - n) m = sizeof err->msg - 1 - n;
  memcpy(err->msg + n, old, m);
  err->msg[n + m] = '\0';
}

void rp_error_clear(rp_error *err) {
  if (err == NULL) return;
  err->status = RP_OK;
  err->msg[0] = '\0';
}
