/* test_rng.c - unit tests of the counter-based random numbers (src/numerics/rng.c).
 *
 * Checks Philox4x32-10 against published known-answer vectors, that the
 * generator is a pure function of (counter, key) and a bijection of the
 * counter, and simple moments of the uniform and normal draws built on it.
 * A Check suite with its own main().
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "rng.h"
#include "unit_util.h"

#include <check.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

/* ---------------------------------------------------------------------- */
/* Known-answer vectors of Philox4x32-10.
 * Source: the algorithm as described in L'Ecuyer, Munger, Oreshkin &
 * Simard 2017, Math. Comput. Simul. 135, 3-17 (section from memory); the
 * expected outputs are that generator evaluated at these counters and keys
 * (values from memory). The independent transcription below checks the
 * same generator on many more inputs. */
typedef struct {
    uint32_t ctr[4], key[2], out[4];
} kat_vector;

static const kat_vector kat[] = {
    {{0x00000000u, 0x00000000u, 0x00000000u, 0x00000000u},
     {0x00000000u, 0x00000000u},
     {0x6627e8d5u, 0xe169c58du, 0xbc57ac4cu, 0x9b00dbd8u}},
    {{0xffffffffu, 0xffffffffu, 0xffffffffu, 0xffffffffu},
     {0xffffffffu, 0xffffffffu},
     {0x408f276du, 0x41c83b0eu, 0xa20bc7c6u, 0x6d5451fdu}},
    {{0x243f6a88u, 0x85a308d3u, 0x13198a2eu, 0x03707344u},
     {0xa4093822u, 0x299f31d0u},
     {0xd16cfe09u, 0x94fdccebu, 0x5001e420u, 0x24126ea1u}},
};

START_TEST(philox_known_answers)
{
    const kat_vector *v = &kat[_i];
    uint32_t out[4];
    tg_philox4x32(v->ctr, v->key, out);
    for (int w = 0; w < 4; w++)
        ck_assert_msg(out[w] == v->out[w], "vector %d word %d: got 0x%08x, expected 0x%08x", _i, w,
                      (unsigned)out[w], (unsigned)v->out[w]);
}
END_TEST

/* An independent straight transcription of the round function as the
 * algorithm is specified (multipliers 0xD2511F53 and 0xCD9E8D57; after
 * each round the key words grow by 0x9E3779B9 and 0xBB67AE85, the
 * fractional parts of the golden ratio and of sqrt(3) times 2^32; ten
 * rounds), compared with the library on many inputs.
 * The known-answer vectors above are the authoritative check; this one
 * covers many more inputs and can only pass if both agree. */
static void ref_philox(const uint32_t ctr[4], const uint32_t key[2], uint32_t out[4])
{
    uint32_t c[4] = {ctr[0], ctr[1], ctr[2], ctr[3]}, k[2] = {key[0], key[1]};
    for (int r = 0; r < 10; r++) {
        if (r > 0) {
            k[0] += 0x9E3779B9u;
            k[1] += 0xBB67AE85u;
        }
        uint64_t p0 = (uint64_t)0xD2511F53u * c[0], p1 = (uint64_t)0xCD9E8D57u * c[2];
        uint32_t hi0 = (uint32_t)(p0 >> 32), lo0 = (uint32_t)p0;
        uint32_t hi1 = (uint32_t)(p1 >> 32), lo1 = (uint32_t)p1;
        uint32_t n[4] = {hi1 ^ c[1] ^ k[0], lo1, hi0 ^ c[3] ^ k[1], lo0};
        memcpy(c, n, sizeof c);
    }
    memcpy(out, c, sizeof c);
}

/* Deterministic test inputs from a 64-bit linear congruential generator
 * (any full-period multiplier and odd increment serve: the inputs only
 * need to vary; common practice). */
static uint64_t lcg(uint64_t *s)
{
    *s = *s * 6364136223846793005ULL + 1442695040888963407ULL;
    return *s;
}

START_TEST(philox_matches_paper_round_function)
{
    uint64_t s = 2011u;
    for (int t = 0; t < 10000; t++) {
        uint32_t ctr[4], key[2], a[4], b[4];
        for (int w = 0; w < 4; w++)
            ctr[w] = (uint32_t)(lcg(&s) >> 32);
        key[0] = (uint32_t)(lcg(&s) >> 32);
        key[1] = (uint32_t)(lcg(&s) >> 32);
        tg_philox4x32(ctr, key, a);
        ref_philox(ctr, key, b);
        ck_assert_msg(memcmp(a, b, sizeof a) == 0, "input %d differs from the transcription", t);
    }
}
END_TEST

/* ---------------------------------------------------------------------- */
/* A keyed bijection: distinct counters under one key give distinct blocks.
 * Source: the round structure of rng.h's source (each round is
 * invertible, so the map counter -> output is a bijection for a fixed
 * key). */
static int cmp_block(const void *a, const void *b)
{
    return memcmp(a, b, 4 * sizeof(uint32_t));
}

START_TEST(philox_distinct_counters_distinct_outputs)
{
    const int n = 1 << 16;
    uint32_t(*out)[4] = malloc(sizeof *out * (size_t)n);
    ck_assert_ptr_nonnull(out);
    const uint32_t key[2] = {12345u, 678u};
    for (int i = 0; i < n; i++) {
        /* neighbouring counters differing in every word position */
        uint32_t ctr[4] = {(uint32_t)(i & 0xff), (uint32_t)((i >> 8) & 0xff), 7u, 0u};
        tg_philox4x32(ctr, key, out[i]);
    }
    qsort(out, (size_t)n, sizeof *out, cmp_block);
    for (int i = 1; i < n; i++)
        ck_assert_msg(cmp_block(out[i - 1], out[i]) != 0, "two counters gave the same block");
    free(out);
}
END_TEST

/* The draws are pure functions of (seed, a, b, c), and every argument
 * matters. Source: the contract in rng.h (common practice for
 * counter-based generators). */
START_TEST(draws_are_pure_and_depend_on_every_argument)
{
    double z1[2], z2[2];
    tg_normal2(99u, 1u, 2u, 3u, z1);
    tg_normal2(99u, 1u, 2u, 3u, z2);
    ck_assert(memcmp(z1, z2, sizeof z1) == 0);
    ck_assert(tg_uniform(99u, 1u, 2u, 3u) == tg_uniform(99u, 1u, 2u, 3u));

    const double base = tg_uniform(99u, 1u, 2u, 3u);
    ck_assert(tg_uniform(100u, 1u, 2u, 3u) != base);
    ck_assert(tg_uniform(99u | (1ull << 40), 1u, 2u, 3u) != base); /* high seed word */
    ck_assert(tg_uniform(99u, 0u, 2u, 3u) != base);
    ck_assert(tg_uniform(99u, 1u, 0u, 3u) != base);
    ck_assert(tg_uniform(99u, 1u, 2u, 0u) != base);

    double zb[2];
    tg_normal2(99u, 1u, 2u, 4u, zb);
    ck_assert(zb[0] != z1[0] && zb[1] != z1[1]);
}
END_TEST

/* Distinct counters give distinct numbers (no repeats over a grid of
 * counters). Source: common practice. */
static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

START_TEST(distinct_counters_distinct_numbers)
{
    const int na = 4, nb = 8, nc = 4096;
    const int n = na * nb * nc;
    double *u = malloc(sizeof(double) * (size_t)n * 2);
    ck_assert_ptr_nonnull(u);
    int t = 0;
    for (int a = 0; a < na; a++)
        for (int b = 0; b < nb; b++)
            for (int c = 0; c < nc; c++) {
                double z[2];
                tg_normal2(7u, (uint32_t)a, (uint32_t)b, (uint32_t)c, z);
                u[t++] = z[0];
                u[t++] = z[1];
            }
    qsort(u, (size_t)t, sizeof(double), cmp_double);
    int repeats = 0;
    for (int i = 1; i < t; i++)
        repeats += (u[i] == u[i - 1]);
    ck_assert_msg(repeats == 0, "%d repeated normal values among %d", repeats, t);
    free(u);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Moments of 1e5 draws. Mean and variance of a standard normal sample lie
 * within 4 standard errors (sigma/sqrt(n) for the mean, sqrt(2/n) for the
 * variance) of 0 and 1; the sample correlation of the two Box-Muller
 * outputs lies within 4/sqrt(n) of 0. Source: Box & Muller 1958, Ann. Math.
 * Stat. 29, 610-611 (the pair is independent standard normal); standard
 * errors: common practice. */
START_TEST(normal_moments)
{
    const int pairs = 50000, n = 2 * pairs;
    double s1 = 0.0, s2 = 0.0, s4 = 0.0, sxy = 0.0;
    for (int i = 0; i < pairs; i++) {
        double z[2];
        tg_normal2(20240101u, 5u, (uint32_t)(i / 1000), (uint32_t)(i % 1000), z);
        ck_assert(isfinite(z[0]) && isfinite(z[1]));
        s1 += z[0] + z[1];
        s2 += z[0] * z[0] + z[1] * z[1];
        s4 += z[0] * z[0] * z[0] * z[0] + z[1] * z[1] * z[1] * z[1];
        sxy += z[0] * z[1];
    }
    const double mean = s1 / n, var = s2 / n - mean * mean;
    ck_assert_msg(fabs(mean) < 4.0 / sqrt((double)n), "mean %g", mean);
    ck_assert_msg(fabs(var - 1.0) < 4.0 * sqrt(2.0 / n), "variance %g", var);
    /* fourth moment 3, standard error sqrt(96/n) (E z^8 = 105) */
    ck_assert_msg(fabs(s4 / n - 3.0) < 4.0 * sqrt(96.0 / n), "fourth moment %g", s4 / n);
    ck_assert_msg(fabs(sxy / pairs) < 4.0 / sqrt((double)pairs), "correlation %g", sxy / pairs);
}
END_TEST

/* Uniform draws lie strictly inside (0, 1) with mean 1/2 and variance 1/12
 * within 4 standard errors. Source: contract in rng.h; moments of the
 * uniform distribution (common practice). */
START_TEST(uniform_range_and_moments)
{
    const int n = 100000;
    double s1 = 0.0, s2 = 0.0, lo = 1.0, hi = 0.0;
    for (int i = 0; i < n; i++) {
        double u = tg_uniform(31337u, 2u, (uint32_t)i, 0u);
        ck_assert_msg(u > 0.0 && u < 1.0, "draw %d = %.17g outside (0, 1)", i, u);
        s1 += u;
        s2 += u * u;
        lo = fmin(lo, u);
        hi = fmax(hi, u);
    }
    const double mean = s1 / n, var = s2 / n - mean * mean;
    ck_assert_msg(fabs(mean - 0.5) < 4.0 * sqrt(1.0 / 12.0 / n), "mean %g", mean);
    /* variance of u^2-type statistic: Var((u-1/2)^2) = 1/80 - 1/144 = 1/180 */
    ck_assert_msg(fabs(var - 1.0 / 12.0) < 4.0 * sqrt(1.0 / 180.0 / n), "variance %g", var);
    ck_assert(lo < 1e-3 && hi > 1.0 - 1e-3); /* the whole range is reached */
}
END_TEST

static Suite *rng_suite(void)
{
    Suite *s = suite_create("rng");
    TCase *tc = tcase_create("philox");
    tcase_add_loop_test(tc, philox_known_answers, 0, (int)(sizeof kat / sizeof kat[0]));
    tcase_add_test(tc, philox_matches_paper_round_function);
    tcase_add_test(tc, philox_distinct_counters_distinct_outputs);
    suite_add_tcase(s, tc);
    TCase *td = tcase_create("draws");
    tcase_add_test(td, draws_are_pure_and_depend_on_every_argument);
    tcase_add_test(td, distinct_counters_distinct_numbers);
    tcase_add_test(td, normal_moments);
    tcase_add_test(td, uniform_range_and_moments);
    suite_add_tcase(s, td);
    return s;
}

int main(void)
{
    return tg_unit_run(rng_suite());
}
