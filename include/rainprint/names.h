/* names.h — one way to turn a name the user typed into one of a fixed list of values, and
 * to say what the valid values are ("valid values are ...") and which one was probably
 * meant ("did you mean ...?"). Every enum <-> name table of the library and every option
 * of the tool goes through it, so the messages read the same everywhere.
 *
 * Suggestions use the Damerau–Levenshtein (optimal string alignment) edit distance,
 * case-insensitive: the closest valid name within max(2, len/3) edits is suggested. */
#ifndef RAINPRINT_NAMES_H
#define RAINPRINT_NAMES_H

#include <stddef.h>

#include "rainprint/status.h"

/* An accepted spelling: an alias maps to the value of a canonical name. */
typedef struct {
  const char *name;
  int value;
} rp_name_alias;

/* Index i of names[0..n-1] equal to given (exact, case-sensitive), else of an alias in
 * aliases[0..n_aliases-1] (value returned), else -1. NULL arguments give -1. */
int rp_names_lookup(const char *const *names, size_t n, const rp_name_alias *aliases,
                    size_t n_aliases, const char *given);

/* The closest of names[0..n-1] to given within the suggestion distance, or NULL. */
const char *rp_names_suggest(const char *const *names, size_t n, const char *given);

/* Edit distance (optimal string alignment, case-insensitive) of a and b; strings longer
 * than 63 characters count as far (returns 64). */
int rp_names_distance(const char *a, const char *b);

/* "a, b or c" into buf (n bytes, truncated with "..." if it does not fit). */
void rp_names_list(const char *const *names, size_t n, char *buf, size_t buf_len);

/* As rp_names_lookup; on a miss returns RP_EINVAL with
 * "unknown <what> 'given' (valid values are a, b or c; did you mean 'b'?)". On success
 * *value gets the index (or the alias's value). */
rp_status rp_names_find(const char *const *names, size_t n, const rp_name_alias *aliases,
                        size_t n_aliases, const char *what, const char *given, int *value,
                        rp_error *err);

#endif
