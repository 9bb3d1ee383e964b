/* decimal.c — plain decimal numbers in file text (see decimal.h).
 *
 * Method: a single left-to-right scan over the grammar
 *   [+-] digits [. digits] [(e|E) [+-] digits]   (at least one mantissa digit)
 * before strtod(), so that strtod()'s wider C syntax (nan, inf, hex floats, leading
 * blanks, a valid prefix followed by junk) never reaches a value. Overflow and
 * underflow are refused through strtod()'s ERANGE together with isfinite(). */
#include "decimal.h"

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stddef.h>
#include <stdlib.h>

bool rp_decimal_is_plain(const char *s) {
  const char *p = s;
  if (*p == '+' || *p == '-') p++;
  size_t digits = 0;
  while (isdigit((unsigned char)*p)) p++, digits++;
  if (*p == '.') {
    p++;
    while (isdigit((unsigned char)*p)) p++, digits++;
  }
  if (digits == 0) return false;
  if (*p == 'e' || *p == 'E') {
    p++;
    if (*p == '+' || *p == '-') p++;
    if (!isdigit((unsigned char)*p)) return false;
    while (isdigit((unsigned char)*p)) p++;
  }
  return *p == '\0';
}

rp_decimal_result rp_decimal_parse(const char *s, double *x) {
  if (!rp_decimal_is_plain(s)) return RP_DECIMAL_NOT_PLAIN;
  errno = 0;
  double v = strtod(s, NULL);
  if (errno == ERANGE || !isfinite(v)) return RP_DECIMAL_OUT_OF_RANGE;
  *x = v;
  return RP_DECIMAL_OK;
}
