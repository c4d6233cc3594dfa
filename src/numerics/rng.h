/* rng.h - counter-based random numbers (Philox4x32-10).
 *
 * Philox4x32-10, a counter-based generator (described and assessed in
 * L'Ecuyer, Munger, Oreshkin & Simard 2017, "Random numbers for parallel
 * computers: requirements and methods, with emphasis on GPUs", Math.
 * Comput. Simul. 135, 3-17; section from memory), maps a 128-bit counter
 * and a 64-bit key to 128 random bits with no state. Keying by (seed) and counting by (stream,
 * step, node) makes every draw a pure function of where and when it is
 * used, so results do not depend on thread count, on the order of loops or
 * on restarts.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_RNG_H
#define TG_RNG_H

#include <stdint.h>

/* Ten Philox4x32 rounds of ctr under key into out. */
void tg_philox4x32(const uint32_t ctr[4], const uint32_t key[2], uint32_t out[4]);

/* Two independent standard normal numbers for (seed, a, b, c), by the
 * Box-Muller transform (Box & Muller 1958, Ann. Math. Stat. 29, 610-611). */
void tg_normal2(uint64_t seed, uint32_t a, uint32_t b, uint32_t c, double out[2]);

/* A uniform number in (0, 1) for (seed, a, b, c). */
double tg_uniform(uint64_t seed, uint32_t a, uint32_t b, uint32_t c);

#endif
