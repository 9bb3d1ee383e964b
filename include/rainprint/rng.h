/* rng.h — seeded random numbers for parallel work: streams split by a key.
 *
 * Every random draw in rainprint comes from a stream named by (seed, key): the seed the
 * user gives (--seed, stored in every output), and a key that names the work item the
 * draws belong to (an ensemble member, a gate, a ray, a pulse series) and their purpose.
 * A work item draws only from its own stream, so results are identical for any thread
 * count and any schedule: who computes item k, and when, does not change what k draws.
 *
 * Method: the (seed, key) pair is hashed by the SplitMix64 finaliser (Steele, Lea &
 * Flood 2014) into the 256-bit state of xoshiro256** (Blackman & Vigna 2021, "Scrambled
 * linear pseudorandom number generators", ACM TOMS 47(4) 36), a generator with period
 * 2^256 - 1 that passes BigCrush. Distinct keys give unrelated starting points; with
 * 2^64 keys and streams of up to 2^64 draws each, overlap is negligible (the state space
 * is 2^256). Uniform doubles take the top 53 bits; normal deviates come from the polar
 * method of Marsaglia & Bray (1964), exponential ones from -ln(U).
 *
 * The state is a small value type: put one on the stack per work item; no allocation,
 * no global state, thread-safe as long as a stream is used by one thread at a time. */
#ifndef RAINPRINT_RNG_H
#define RAINPRINT_RNG_H

#include <stddef.h>
#include <stdint.h>

typedef struct {
  uint64_t s[4];
  double spare;   /* second deviate of the polar method */
  int has_spare;
} rp_rng;

/* Purposes: the first part of a key, so that streams of different uses never meet. */
enum {
  RP_RNG_ENSEMBLE = 1,   /* ensemble member draws: key (purpose, member) */
  RP_RNG_VOLUME_NOISE,   /* observation noise of a volume gate */
  RP_RNG_PULSES,         /* I/Q synthesis of a gate or realisation */
  RP_RNG_TEST            /* tests and benchmarks */
};

/* A key from up to four parts, e.g. rp_rng_key(RP_RNG_VOLUME_NOISE, sweep, ray, gate).
 * Different part lists give different keys (the parts are hashed in order). */
uint64_t rp_rng_key(uint64_t purpose, uint64_t a, uint64_t b, uint64_t c);

/* Start the stream (seed, key) in *r. */
void rp_rng_init(rp_rng *r, uint64_t seed, uint64_t key);

/* Next 64 random bits. */
uint64_t rp_rng_u64(rp_rng *r);

/* Uniform on [0, 1) with 53 random bits. */
double rp_rng_uniform(rp_rng *r);

/* Uniform on (0, 1): never 0 (safe for logarithms). */
double rp_rng_uniform_pos(rp_rng *r);

/* Standard normal deviate (mean 0, variance 1). */
double rp_rng_normal(rp_rng *r);

/* Exponential deviate with mean 1. */
double rp_rng_exponential(rp_rng *r);

#endif
