/* rp_test.h — shared helpers for the cmocka tests.
 *
 * cmocka 1.1.5 has no floating-point assert; assert_close() passes when
 * |actual - expected| <= abs_tol + rel_tol * |expected|, and fails on NaN or Inf in
 * either value unless both are the same infinity. */
#ifndef RP_TEST_H
#define RP_TEST_H

#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <dirent.h>

#include <gsl/gsl_errno.h>

static inline void rp_assert_close_impl(double actual, double expected, double rel_tol,
                                        double abs_tol, const char *a_txt,
                                        const char *file, int line) {
  int ok;
  if (isnan(actual) || isnan(expected)) {
    ok = 0;
  } else if (isinf(actual) || isinf(expected)) {
    ok = (actual == expected);
  } else {
    ok = fabs(actual - expected) <= abs_tol + rel_tol * fabs(expected);
  }
  if (!ok) {
    print_error("%s = %.17g, expected %.17g (rel_tol %.3g, abs_tol %.3g, diff %.3g)\n",
                a_txt, actual, expected, rel_tol, abs_tol, actual - expected);
    _fail(file, line);
  }
}

#define assert_close(actual, expected, rel_tol, abs_tol)                          \
  rp_assert_close_impl((double)(actual), (double)(expected), (rel_tol), (abs_tol), \
                       #actual, __FILE__, __LINE__)

/* Tests turn GSL's aborting error handler off, as main() does. */
static inline void rp_test_init(void) { gsl_set_error_handler_off(); }

/* Path of a file in the source tree (RP_SOURCE_DIR is compiled in). */
static inline const char *rp_test_source_path(const char *rel, char *buf, size_t n) {
  snprintf(buf, n, "%s/%s", RP_SOURCE_DIR, rel);
  return buf;
}

/* Number of entries of folder dir other than . and .. (-1 if it cannot be read). */
static inline int rp_test_count_entries(const char *dir) {
  DIR *d = opendir(dir);
  if (d == NULL) return -1;
  int n = 0;
  struct dirent *e;
  while ((e = readdir(d)) != NULL)
    if (strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0) n++;
  closedir(d);
  return n;
}

/* Whole file in a NUL-terminated heap buffer (caller frees); *n its size. NULL if
 * unreadable. */
static inline unsigned char *rp_test_slurp(const char *path, size_t *n) {
  FILE *fp = fopen(path, "rb");
  if (fp == NULL) return NULL;
  fseek(fp, 0, SEEK_END);
  long len = ftell(fp);
  fseek(fp, 0, SEEK_SET);
  unsigned char *buf = len >= 0 ? malloc((size_t)len + 1) : NULL;
  if (buf != NULL && fread(buf, 1, (size_t)len, fp) != (size_t)len) {
    free(buf);
    buf = NULL;
  }
  fclose(fp);
  if (buf != NULL) {
    buf[len] = '\0';
    *n = (size_t)len;
  }
  return buf;
}

#endif
