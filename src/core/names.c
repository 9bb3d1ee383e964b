/* names.c — name lookup, lists of valid values and "did you mean" suggestions (names.h). */
#include "rainprint/names.h"

#include <ctype.h>
#include <stdio.h>
#include <string.h>

int rp_names_lookup(const char *const *names, size_t n, const rp_name_alias *aliases,
                    size_t n_aliases, const char *given) {
  if (names == NULL || given == NULL) return -1;
  for (size_t i = 0; i < n; i++)
    if (names[i] != NULL && strcmp(names[i], given) == 0) return (int)i;
  for (size_t i = 0; aliases != NULL && i < n_aliases; i++)
    if (strcmp(aliases[i].name, given) == 0) return aliases[i].value;
  return -1;
}

#define NAME_MAX_LEN 63

int rp_names_distance(const char *a, const char *b) {
  const size_t la = strlen(a), lb = strlen(b);
  if (la > NAME_MAX_LEN || lb > NAME_MAX_LEN) return NAME_MAX_LEN + 1;
  int d[NAME_MAX_LEN + 1][NAME_MAX_LEN + 1];
  for (size_t i = 0; i <= la; i++) d[i][0] = (int)i;
  for (size_t j = 0; j <= lb; j++) d[0][j] = (int)j;
  for (size_t i = 1; i <= la; i++)
    for (size_t j = 1; j <= lb; j++) {
      const int ca = tolower((unsigned char)a[i - 1]), cb = tolower((unsigned char)b[j - 1]);
      const int cost = ca != cb;
      int v = d[i - 1][j] + 1;
      if (d[i][j - 1] + 1 < v) v = d[i][j - 1] + 1;
      if (d[i - 1][j - 1] + cost < v) v = d[i - 1][j - 1] + cost;
      if (i > 1 && j > 1 && ca == tolower((unsigned char)b[j - 2]) &&
          tolower((unsigned char)a[i - 2]) == cb && d[i - 2][j - 2] + 1 < v)
        v = d[i - 2][j - 2] + 1; /* transposition */
      d[i][j] = v;
    }
  return d[la][lb];
}

const char *rp_names_suggest(const char *const *names, size_t n, const char *given) {
  if (names == NULL || given == NULL || given[0] == '\0') return NULL;
  const size_t len = strlen(given);
  const int limit = len / 3 > 2 ? (int)(len / 3) : 2;
  const char *best = NULL;
  int best_d = limit + 1;
  for (size_t i = 0; i < n; i++) {
    if (names[i] == NULL) continue;
    int dist = rp_names_distance(given, names[i]);
    /* a typed prefix of a longer name ("thurai" for "thurai-2007") counts as close */
    const size_t ln = strlen(names[i]);
    if (len >= 3 && ln > len && strncmp(names[i], given, len) == 0 && dist > 1) dist = 1;
    if (dist < best_d) {
      best_d = dist;
      best = names[i];
    }
  }
  return best;
}

void rp_names_list(const char *const *names, size_t n, char *buf, size_t buf_len) {
  if (buf == NULL || buf_len == 0) return;
  buf[0] = '\0';
  size_t used = 0;
  for (size_t i = 0; i < n && names != NULL; i++) {
    const char *sep = i == 0 ? "" : (i + 1 == n ? " or " : ", ");
    const int w = snprintf(buf + used, buf_len - used, "%s%s", sep, names[i]);
    if (w < 0 || (size_t)w >= buf_len - used) {
      if (buf_len > 4) strcpy(buf + buf_len - 4, "...");
      return;
    }
    used += (size_t)w;
  }
}

rp_status rp_names_find(const char *const *names, size_t n, const rp_name_alias *aliases,
                        size_t n_aliases, const char *what, const char *given, int *value,
                        rp_error *err) {
  if (given == NULL || value == NULL)
    return rp_error_set(err, RP_EINVAL, "%s: NULL name or output", what ? what : "name");
  const int k = rp_names_lookup(names, n, aliases, n_aliases, given);
  if (k >= 0) {
    *value = k;
    return RP_OK;
  }
  char list[512];
  rp_names_list(names, n, list, sizeof list);
  const char *s = rp_names_suggest(names, n, given);
  if (s != NULL)
    return rp_error_set(err, RP_EINVAL, "unknown %s '%s' (valid values are %s; did you mean "
                        "'%s'?)", what, given, list, s);
  return rp_error_set(err, RP_EINVAL, "unknown %s '%s' (valid values are %s)", what, given, list);
}
