/* rng.c - Philox4x32-10 and the draws built on it (rng.h). */
#include "rng.h"

#include <math.h>

#include "constants.h"

static inline void mulhilo(uint32_t a, uint32_t b, uint32_t *hi, uint32_t *lo)
{
    uint64_t p = (uint64_t)a * b;
    *hi = (uint32_t)(p >> 32);
    *lo = (uint32_t)p;
}

/* Ten rounds of the Philox4x32 round function: two 32 x 32 -> 64-bit
 * multiplications per round, the key words advanced by fixed increments
 * after each round (the constants below; rng.h names the source). */
void tg_philox4x32(const uint32_t ctr[4], const uint32_t key[2], uint32_t out[4])
{
    uint32_t c0 = ctr[0], c1 = ctr[1], c2 = ctr[2], c3 = ctr[3];
    uint32_t k0 = key[0], k1 = key[1];
    for (int r = 0; r < 10; r++) {
        uint32_t hi0, lo0, hi1, lo1;
        mulhilo(0xD2511F53u, c0, &hi0, &lo0);
        mulhilo(0xCD9E8D57u, c2, &hi1, &lo1);
        uint32_t n0 = hi1 ^ c1 ^ k0, n1 = lo1, n2 = hi0 ^ c3 ^ k1, n3 = lo0;
        c0 = n0;
        c1 = n1;
        c2 = n2;
        c3 = n3;
        k0 += 0x9E3779B9u;
        k1 += 0xBB67AE85u;
    }
    out[0] = c0;
    out[1] = c1;
    out[2] = c2;
    out[3] = c3;
}

static void draw(uint64_t seed, uint32_t a, uint32_t b, uint32_t c, uint32_t out[4])
{
    const uint32_t ctr[4] = {a, b, c, 0u};
    const uint32_t key[2] = {(uint32_t)seed, (uint32_t)(seed >> 32)};
    tg_philox4x32(ctr, key, out);
}

/* 53 random bits to a double strictly inside (0, 1). */
static double to_unit(uint32_t hi, uint32_t lo)
{
    uint64_t bits = ((uint64_t)hi << 21) ^ (uint64_t)(lo >> 11);
    return ((double)bits + 0.5) * (1.0 / 9007199254740992.0);
}

void tg_normal2(uint64_t seed, uint32_t a, uint32_t b, uint32_t c, double out[2])
{
    uint32_t r[4];
    draw(seed, a, b, c, r);
    double u1 = to_unit(r[0], r[1]), u2 = to_unit(r[2], r[3]);
    double rad = sqrt(-2.0 * log(u1));
    out[0] = rad * cos(2.0 * TG_PI * u2);
    out[1] = rad * sin(2.0 * TG_PI * u2);
}

double tg_uniform(uint64_t seed, uint32_t a, uint32_t b, uint32_t c)
{
    uint32_t r[4];
    draw(seed, a, b, c, r);
    return to_unit(r[0], r[1]);
}
