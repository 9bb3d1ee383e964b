/* rng.c — streams of xoshiro256** seeded by a SplitMix64 hash of (seed, key); see rng.h
 * for the method and references. */
#include "rainprint/rng.h"

#include <math.h>

/* SplitMix64 finaliser: a bijective 64-bit mixer (Steele, Lea & Flood 2014). */
static uint64_t mix64(uint64_t z) {
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
  return z ^ (z >> 31);
}

#define GOLDEN 0x9E3779B97F4A7C15ull

uint64_t rp_rng_key(uint64_t purpose, uint64_t a, uint64_t b, uint64_t c) {
  uint64_t h = mix64(purpose + GOLDEN);
  h = mix64(h ^ (a + 2 * GOLDEN));
  h = mix64(h ^ (b + 3 * GOLDEN));
  return mix64(h ^ (c + 4 * GOLDEN));
}

void rp_rng_init(rp_rng *r, uint64_t seed, uint64_t key) {
  uint64_t z = mix64(mix64(seed + GOLDEN) ^ key);
  for (int i = 0; i < 4; i++) {
    z += GOLDEN; /* SplitMix64 sequence from the hashed start */
    r->s[i] = mix64(z);
  }
  if ((r->s[0] | r->s[1] | r->s[2] | r->s[3]) == 0) r->s[0] = 1; /* all-zero is a fixed point */
  r->spare = 0.0;
  r->has_spare = 0;
}

static uint64_t rotl(uint64_t x, int k) { return (x << k) | (x >> (64 - k)); }

uint64_t rp_rng_u64(rp_rng *r) {
  uint64_t *s = r->s;
  const uint64_t result = rotl(s[1] * 5, 7) * 9;
  const uint64_t t = s[1] << 17;
  s[2] ^= s[0];
  s[3] ^= s[1];
  s[1] ^= s[2];
  s[0] ^= s[3];
  s[2] ^= t;
  s[3] = rotl(s[3], 45);
  return result;
}

double rp_rng_uniform(rp_rng *r) { return (double)(rp_rng_u64(r) >> 11) * 0x1.0p-53; }

double rp_rng_uniform_pos(rp_rng *r) {
  /* (k + 1/2) 2^-53 for the top 53 bits k: in (0, 1), symmetric about 1/2 */
  return ((double)(rp_rng_u64(r) >> 11) + 0.5) * 0x1.0p-53;
}

double rp_rng_normal(rp_rng *r) {
  if (r->has_spare) {
    r->has_spare = 0;
    return r->spare;
  }
  double u, v, s;
  do { /* Marsaglia & Bray (1964) polar method: a point uniform in the unit disc */
    u = 2.0 * rp_rng_uniform(r) - 1.0;
    v = 2.0 * rp_rng_uniform(r) - 1.0;
    s = u * u + v * v;
  } while (s >= 1.0 || s == 0.0);
  const double f = sqrt(-2.0 * log(s) / s);
  r->spare = v * f;
  r->has_spare = 1;
  return u * f;
}

double rp_rng_exponential(rp_rng *r) { return -log(rp_rng_uniform_pos(r)); }
