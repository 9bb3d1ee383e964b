/* decimal.h — internal (uninstalled) check and conversion of plain decimal numbers in
 * text read from files (the YAML loaders' number scan and the spectrum CSV reader).
 *
 * "Plain decimal" is the one rule the file formats share:
 *   [+-] digits [. digits] [(e|E) [+-] digits], at least one mantissa digit, nothing else.
 * It refuses what strtod() and libcyaml 1.3.1 would otherwise accept: "nan", "inf",
 * hexadecimal ("0x10"), leading or trailing blanks and trailing text ("1.6mm").
 * Method in decimal.c. */
#ifndef RP_IO_DECIMAL_H
#define RP_IO_DECIMAL_H

#include <stdbool.h>

/* Outcome of rp_decimal_parse(). */
typedef enum {
  RP_DECIMAL_OK = 0,       /* a plain decimal with a finite double value */
  RP_DECIMAL_NOT_PLAIN,    /* not of the form above (includes the empty string) */
  RP_DECIMAL_OUT_OF_RANGE  /* plain, but strtod() reports ERANGE (overflow or underflow)
                              or a non-finite value, e.g. "1e999", "1e-999" */
} rp_decimal_result;

/* True when s (NUL-terminated, not NULL) is a plain decimal as defined above. */
bool rp_decimal_is_plain(const char *s);

/* Check s (NUL-terminated, not NULL) and convert it with strtod(). On RP_DECIMAL_OK,
 * *x (not NULL) receives the value; otherwise *x is left untouched. Callers turn the
 * result into their own message (they know the file, line and field). Sets errno. */
rp_decimal_result rp_decimal_parse(const char *s, double *x);

#endif
