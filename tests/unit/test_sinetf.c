/* test_sinetf.c - unit tests of the fast 2-D sine transform (src/numerics/sinetf.c).
 *
 * Checks the forward and inverse transforms against their definitions by
 * direct summation (in 2-D for small sizes, for separable fields up to
 * n = 1023), the round trip on a strided array with walls, the
 * diagonal form of the five-point Laplacian, bitwise equality of results for
 * 1 and 2 OpenMP threads, and the rejection of sizes with n + 1 not a power
 * of two. A Check suite with its own main().
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "sinetf.h"
#include "unit_util.h"

#include <check.h>
#include <math.h>
#include <omp.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

static const double PI = 3.14159265358979323846;

/* Deterministic uniform numbers in [-1, 1) from a 64-bit linear congruential
 * generator; the state is the caller's. */
static double next_uniform(uint64_t *s)
{
    *s = *s * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(*s >> 11) * (2.0 / 9007199254740992.0) - 1.0;
}

/* sin(pi m / N) with m reduced modulo 2N first, so that the reference table
 * is accurate to the last bit or so even for large i*k. */
static double sin_pi_frac(long m, long len)
{
    m %= 2 * len;
    return sin(PI * (double)m / (double)len);
}

/* Table t[(k-1)*n + (i-1)] = sin(pi i k / (n+1)), i, k = 1..n. */
static double *sine_table(int n)
{
    double *t = malloc((size_t)n * n * sizeof *t);
    ck_assert_ptr_nonnull(t);
    for (int k = 1; k <= n; k++)
        for (int i = 1; i <= n; i++)
            t[(size_t)(k - 1) * n + (i - 1)] = sin_pi_frac((long)i * k, n + 1);
    return t;
}

static double max_abs(const double *a, size_t count)
{
    double m = 0.0;
    for (size_t i = 0; i < count; i++)
        if (fabs(a[i]) > m)
            m = fabs(a[i]);
    return m;
}

/* ---------------------------------------------------------------------- */
/* Forward transform against its definition by direct summation.
 * Source: the sine transform F_k = sum_{j=1}^{N-1} f_j sin(pi j k/N),
 * Press et al. 2007, Numerical Recipes 3rd ed., section 12.4.1, applied
 * along both directions as written in sinetf.h. */
static const int direct_sizes[] = {3, 7, 15, 31};

START_TEST(forward_matches_direct_sum)
{
    const int n = direct_sizes[_i];
    const int stride = n + 3;
    tg_status st;
    tg_dst *d = tg_dst_create(n, &st);
    ck_assert_msg(d != NULL, "create failed: %s", st.msg);
    ck_assert_int_eq(tg_dst_size(d), n);

    uint64_t seed = 12345u + (uint64_t)n;
    double *in = malloc((size_t)n * stride * sizeof *in);
    double *spec = malloc((size_t)n * n * sizeof *spec);
    double *ref = calloc((size_t)n * n, sizeof *ref);
    ck_assert(in && spec && ref);
    for (int a = 0; a < n * stride; a++)
        in[a] = next_uniform(&seed);

    double *t = sine_table(n);
    for (int kx = 1; kx <= n; kx++)
        for (int ky = 1; ky <= n; ky++) {
            long double sum = 0.0L;
            for (int j = 1; j <= n; j++)
                for (int i = 1; i <= n; i++)
                    sum += (long double)in[(size_t)(j - 1) * stride + (i - 1)] *
                           t[(size_t)(kx - 1) * n + (i - 1)] * t[(size_t)(ky - 1) * n + (j - 1)];
            ref[(size_t)(kx - 1) * n + (ky - 1)] = (double)sum;
        }

    tg_dst_forward(d, in, stride, spec);

    double scale = max_abs(ref, (size_t)n * n), err = 0.0;
    for (size_t a = 0; a < (size_t)n * n; a++)
        if (fabs(spec[a] - ref[a]) > err)
            err = fabs(spec[a] - ref[a]);
    ck_assert_msg(scale > 0.0, "reference transform is zero");
    ck_assert_msg(err <= 1e-13 * scale, "n = %d: max error %.3e relative to max %.3e", n,
                  err, scale);

    free(t);
    free(ref);
    free(spec);
    free(in);
    tg_dst_destroy(d);
}
END_TEST

/* Inverse transform against direct summation of
 *   X[j][i] = (2/N)^2 sum_{kx,ky} C[kx][ky] sin(pi i kx/N) sin(pi j ky/N).
 * Source: the sine transform is its own inverse up to the factor 2/N,
 * Press et al. 2007, Numerical Recipes 3rd ed., section 12.4.1, applied in
 * both directions (the (2/N)^2 that sinetf.h puts into the inverse). */
START_TEST(inverse_matches_direct_sum)
{
    const int n = direct_sizes[_i];
    const int len = n + 1;
    const int stride = n + 5;
    tg_status st;
    tg_dst *d = tg_dst_create(n, &st);
    ck_assert_msg(d != NULL, "create failed: %s", st.msg);

    uint64_t seed = 777u + (uint64_t)n;
    double *spec = malloc((size_t)n * n * sizeof *spec);
    double *coef = malloc((size_t)n * n * sizeof *coef);
    double *out = calloc((size_t)n * stride, sizeof *out);
    double *ref = calloc((size_t)n * n, sizeof *ref);
    ck_assert(spec && coef && out && ref);
    for (int a = 0; a < n * n; a++)
        coef[a] = spec[a] = next_uniform(&seed);

    double *t = sine_table(n);
    const long double f = 4.0L / ((long double)len * len);
    for (int j = 1; j <= n; j++)
        for (int i = 1; i <= n; i++) {
            long double sum = 0.0L;
            for (int kx = 1; kx <= n; kx++)
                for (int ky = 1; ky <= n; ky++)
                    sum += (long double)coef[(size_t)(kx - 1) * n + (ky - 1)] *
                           t[(size_t)(kx - 1) * n + (i - 1)] * t[(size_t)(ky - 1) * n + (j - 1)];
            ref[(size_t)(j - 1) * n + (i - 1)] = (double)(f * sum);
        }

    tg_dst_inverse(d, spec, out, stride);

    double scale = max_abs(ref, (size_t)n * n), err = 0.0;
    for (int j = 0; j < n; j++)
        for (int i = 0; i < n; i++) {
            double e = fabs(out[(size_t)j * stride + i] - ref[(size_t)j * n + i]);
            if (e > err)
                err = e;
        }
    ck_assert_msg(scale > 0.0, "reference synthesis is zero");
    ck_assert_msg(err <= 1e-13 * scale, "n = %d: max error %.3e relative to max %.3e", n,
                  err, scale);

    free(t);
    free(ref);
    free(out);
    free(coef);
    free(spec);
    tg_dst_destroy(d);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Forward and inverse transforms of a separable field f(i) g(j) against
 * the products of 1-D direct sums, F(kx) G(ky), at sizes on both sides of
 * the switch between half-length complex FFTs and real FFTs (sinetf.c), up
 * to n = 1023 where the 2-D direct sum would be too slow.
 * Source: the sine transform F_k = sum_{j=1}^{N-1} f_j sin(pi j k/N) and
 * its inverse with factor 2/N, Press et al. 2007, Numerical Recipes 3rd
 * ed., section 12.4.1, applied along both directions as in sinetf.h. */
static const int separable_sizes[] = {63, 127, 255, 511, 1023};

static void dst1_direct(int n, const double *f, double *out)
{
    for (int k = 1; k <= n; k++) {
        long double sum = 0.0L;
        for (int i = 1; i <= n; i++)
            sum += (long double)f[i - 1] * sin_pi_frac((long)i * k, n + 1);
        out[k - 1] = (double)sum;
    }
}

START_TEST(separable_matches_direct_sum)
{
    const int n = separable_sizes[_i], stride = n + 5;
    tg_status st;
    tg_dst *d = tg_dst_create(n, &st);
    ck_assert_msg(d != NULL, "create failed: %s", st.msg);
    uint64_t seed = 77u + (uint64_t)n;
    double *f = malloc((size_t)n * sizeof *f), *g = malloc((size_t)n * sizeof *g);
    double *ff = malloc((size_t)n * sizeof *ff), *gg = malloc((size_t)n * sizeof *gg);
    double *in = malloc((size_t)n * stride * sizeof *in);
    double *spec = malloc((size_t)n * n * sizeof *spec);
    double *back = malloc((size_t)n * stride * sizeof *back);
    ck_assert(f && g && ff && gg && in && spec && back);
    for (int i = 0; i < n; i++) {
        f[i] = next_uniform(&seed);
        g[i] = next_uniform(&seed);
    }
    for (int j = 0; j < n; j++)
        for (int i = 0; i < n; i++)
            in[(size_t)j * stride + i] = f[i] * g[j];
    dst1_direct(n, f, ff);
    dst1_direct(n, g, gg);

    tg_dst_forward(d, in, stride, spec);
    double err = 0.0, scale = max_abs(ff, (size_t)n) * max_abs(gg, (size_t)n);
    for (int kx = 0; kx < n; kx++)
        for (int ky = 0; ky < n; ky++) {
            double e = fabs(spec[(size_t)kx * n + ky] - ff[kx] * gg[ky]);
            if (e > err)
                err = e;
        }
    ck_assert_msg(err <= 1e-13 * scale, "n = %d: forward error %.3e relative to max %.3e", n,
                  err, scale);

    tg_dst_inverse(d, spec, back, stride);
    double rerr = 0.0, rscale = max_abs(f, (size_t)n) * max_abs(g, (size_t)n);
    for (int j = 0; j < n; j++)
        for (int i = 0; i < n; i++) {
            double e = fabs(back[(size_t)j * stride + i] - in[(size_t)j * stride + i]);
            if (e > rerr)
                rerr = e;
        }
    ck_assert_msg(rerr <= 1e-13 * rscale, "n = %d: round trip error %.3e relative to max %.3e",
                  n, rerr, rscale);
    free(back);
    free(spec);
    free(in);
    free(gg);
    free(ff);
    free(g);
    free(f);
    tg_dst_destroy(d);
}
END_TEST

/* inverse(forward(x)) == x to round-off on an (n+2) x stride array with
 * walls and padding; nothing outside the interior block may change.
 * Source: the DST-I inverse relation, Press et al. 2007, Numerical Recipes
 * 3rd ed., section 12.4.1. */
START_TEST(round_trip_strided)
{
    const int n = 127;
    const int stride = n + 6;     /* walls at i = 0 and n+1, then padding */
    const int rows = n + 2;       /* walls at j = 0 and n+1 */
    const size_t total = (size_t)rows * stride;
    tg_status st;
    tg_dst *d = tg_dst_create(n, &st);
    ck_assert_msg(d != NULL, "create failed: %s", st.msg);

    uint64_t seed = 4242u;
    double *x = malloc(total * sizeof *x);
    double *x0 = malloc(total * sizeof *x0);
    double *y = malloc(total * sizeof *y);
    double *y0 = malloc(total * sizeof *y0);
    double *spec = malloc((size_t)n * n * sizeof *spec);
    ck_assert(x && x0 && y && y0 && spec);
    for (size_t a = 0; a < total; a++) {
        x[a] = next_uniform(&seed);
        y[a] = 1.0e6 + (double)a; /* sentinels, all distinct */
    }
    memcpy(x0, x, total * sizeof *x);
    memcpy(y0, y, total * sizeof *y);

    const size_t first = (size_t)stride + 1; /* node (1,1) */
    tg_dst_forward(d, x + first, stride, spec);
    ck_assert_msg(memcmp(x, x0, total * sizeof *x) == 0, "forward changed its input array");
    tg_dst_inverse(d, spec, y + first, stride);

    double err = 0.0, scale = 0.0;
    for (int j = 0; j < rows; j++)
        for (int i = 0; i < stride; i++) {
            size_t a = (size_t)j * stride + i;
            int interior = j >= 1 && j <= n && i >= 1 && i <= n;
            if (interior) {
                if (fabs(y[a] - x[a]) > err)
                    err = fabs(y[a] - x[a]);
                if (fabs(x[a]) > scale)
                    scale = fabs(x[a]);
            } else {
                ck_assert_msg(memcmp(&y[a], &y0[a], sizeof *y) == 0,
                              "inverse wrote outside the interior at j = %d, i = %d", j, i);
            }
        }
    ck_assert_msg(err <= 1e-13 * scale, "round trip error %.3e relative to max %.3e", err,
                  scale);

    free(spec);
    free(y0);
    free(y);
    free(x0);
    free(x);
    tg_dst_destroy(d);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* One sine mode transforms to one coefficient, (N/2)^2, and the five-point
 * Laplacian (zero walls, unit spacing) of that mode transforms to
 * lambda (N/2)^2 with lambda = 2 cos(pi kx/N) + 2 cos(pi ky/N) - 4; for a
 * random field the Laplacian is diagonal: spec(L x) = lambda spec(x).
 * Source: common practice (eigenvectors of the five-point Laplacian with
 * Dirichlet walls; orthogonality sum_j sin(pi j k/N) sin(pi j k'/N) =
 * (N/2) delta_kk', Press et al. 2007, Numerical Recipes 3rd ed., 12.4.1). */

/* Five-point Laplacian of the interior of x ((n+2) x (n+2), zero walls). */
static void laplacian5(int n, const double *x, double *lx)
{
    const int s = n + 2;
    for (int j = 1; j <= n; j++)
        for (int i = 1; i <= n; i++) {
            size_t a = (size_t)j * s + i;
            lx[a] = x[a + 1] + x[a - 1] + x[a + s] + x[a - s] - 4.0 * x[a];
        }
}

static double lambda5(int kx, int ky, int len)
{
    return 2.0 * cos(PI * kx / len) + 2.0 * cos(PI * ky / len) - 4.0;
}

START_TEST(sine_mode_and_laplacian)
{
    const int n = 63, len = n + 1, s = n + 2;
    const int modes[][2] = {{1, 1}, {5, 17}, {63, 63}, {32, 1}, {2, 62}};
    const double amp = 0.25 * len * len; /* (N/2)^2 */
    tg_status st;
    tg_dst *d = tg_dst_create(n, &st);
    ck_assert_msg(d != NULL, "create failed: %s", st.msg);

    double *x = calloc((size_t)s * s, sizeof *x);
    double *lx = calloc((size_t)s * s, sizeof *lx);
    double *spec = malloc((size_t)n * n * sizeof *spec);
    double *lspec = malloc((size_t)n * n * sizeof *lspec);
    ck_assert(x && lx && spec && lspec);

    for (size_t m = 0; m < sizeof modes / sizeof modes[0]; m++) {
        const int kx = modes[m][0], ky = modes[m][1];
        for (int j = 1; j <= n; j++)
            for (int i = 1; i <= n; i++)
                x[(size_t)j * s + i] = sin_pi_frac((long)i * kx, len) * sin_pi_frac((long)j * ky, len);
        laplacian5(n, x, lx);
        tg_dst_forward(d, x + s + 1, s, spec);
        tg_dst_forward(d, lx + s + 1, s, lspec);
        const double lam = lambda5(kx, ky, len);
        for (int px = 1; px <= n; px++)
            for (int py = 1; py <= n; py++) {
                size_t a = (size_t)(px - 1) * n + (py - 1);
                int hit = px == kx && py == ky;
                double want = hit ? amp : 0.0;
                ck_assert_msg(fabs(spec[a] - want) <= 1e-12 * amp,
                              "mode (%d,%d): coefficient (%d,%d) = %.17g, want %.17g", kx, ky,
                              px, py, spec[a], want);
                double lwant = hit ? lam * amp : 0.0;
                ck_assert_msg(fabs(lspec[a] - lwant) <= 1e-12 * amp,
                              "Laplacian of mode (%d,%d): coefficient (%d,%d) = %.17g, want %.17g",
                              kx, ky, px, py, lspec[a], lwant);
            }
    }

    /* Random interior field: the Laplacian is diagonal in the sine basis. */
    uint64_t seed = 99u;
    for (int j = 1; j <= n; j++)
        for (int i = 1; i <= n; i++)
            x[(size_t)j * s + i] = next_uniform(&seed);
    laplacian5(n, x, lx);
    tg_dst_forward(d, x + s + 1, s, spec);
    tg_dst_forward(d, lx + s + 1, s, lspec);
    double scale = max_abs(lspec, (size_t)n * n), err = 0.0;
    for (int px = 1; px <= n; px++)
        for (int py = 1; py <= n; py++) {
            size_t a = (size_t)(px - 1) * n + (py - 1);
            double e = fabs(lspec[a] - lambda5(px, py, len) * spec[a]);
            if (e > err)
                err = e;
        }
    ck_assert_msg(err <= 1e-12 * scale, "Laplacian not diagonal: error %.3e relative to %.3e",
                  err, scale);

    free(lspec);
    free(spec);
    free(lx);
    free(x);
    tg_dst_destroy(d);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Results are bitwise identical for 1 and 2 OpenMP threads, and for two
 * calls in a row. Source: common practice (reproducibility requirement of
 * sinetf.h). */
static int team_threads(void)
{
    int count = 0;
#pragma omp parallel
    {
#pragma omp single
        count = omp_get_num_threads();
    }
    return count;
}

START_TEST(bitwise_one_vs_two_threads)
{
    const int n = 511, stride = n + 4;
    omp_set_num_threads(2);
    tg_status st;
    tg_dst *d = tg_dst_create(n, &st);
    ck_assert_msg(d != NULL, "create failed: %s", st.msg);

    uint64_t seed = 2024u;
    const size_t nn = (size_t)n * n, total = (size_t)n * stride;
    double *in = malloc(total * sizeof *in);
    double *s1 = malloc(nn * sizeof *s1), *s2 = malloc(nn * sizeof *s2);
    double *s3 = malloc(nn * sizeof *s3);
    double *o1 = calloc(total, sizeof *o1), *o2 = calloc(total, sizeof *o2);
    ck_assert(in && s1 && s2 && s3 && o1 && o2);
    for (size_t a = 0; a < total; a++)
        in[a] = next_uniform(&seed);

    omp_set_num_threads(1);
    ck_assert_int_eq(team_threads(), 1);
    tg_dst_forward(d, in, stride, s1);
    memcpy(s3, s1, nn * sizeof *s1);
    tg_dst_inverse(d, s3, o1, stride);

    omp_set_num_threads(2);
    ck_assert_int_eq(team_threads(), 2);
    tg_dst_forward(d, in, stride, s2);
    ck_assert_msg(memcmp(s1, s2, nn * sizeof *s1) == 0,
                  "forward transform differs between 1 and 2 threads");
    memcpy(s3, s2, nn * sizeof *s2);
    tg_dst_inverse(d, s3, o2, stride);
    ck_assert_msg(memcmp(o1, o2, total * sizeof *o1) == 0,
                  "inverse transform differs between 1 and 2 threads");

    tg_dst_forward(d, in, stride, s2);
    ck_assert_msg(memcmp(s1, s2, nn * sizeof *s1) == 0,
                  "forward transform differs between two calls");

    free(o2);
    free(o1);
    free(s3);
    free(s2);
    free(s1);
    free(in);
    tg_dst_destroy(d);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Sizes with n + 1 not a power of two (or too small) are refused with a
 * message. Source: common practice (contract of tg_dst_create in sinetf.h). */
static const int bad_sizes[] = {-5, -1, 0, 1, 2, 4, 5, 6, 8, 11, 100, 510, 512, 767, 1000};

START_TEST(rejects_bad_size)
{
    const int n = bad_sizes[_i];
    tg_status st;
    st.code = TG_OK;
    st.msg[0] = '\0';
    tg_dst *d = tg_dst_create(n, &st);
    ck_assert_msg(d == NULL, "n = %d was accepted", n);
    ck_assert_int_ne(st.code, TG_OK);
    ck_assert_msg(strstr(st.msg, "power of two") != NULL, "n = %d: message \"%s\"", n, st.msg);
    tg_dst_destroy(NULL); /* must be harmless */
}
END_TEST

START_TEST(accepts_good_sizes)
{
    const int good[] = {3, 7, 255, 1023};
    for (size_t m = 0; m < sizeof good / sizeof good[0]; m++) {
        tg_status st;
        tg_dst *d = tg_dst_create(good[m], &st);
        ck_assert_msg(d != NULL, "n = %d refused: %s", good[m], st.msg);
        ck_assert_int_eq(st.code, TG_OK);
        ck_assert_int_eq(tg_dst_size(d), good[m]);
        tg_dst_destroy(d);
    }
}
END_TEST

/* tg_dst_forward_times gives the same bits as tg_dst_forward followed by
 * multiplying each coefficient by its factor, at n = 127 and 511 (both FFT
 * paths). Source: common practice (a fused pass checked bitwise against
 * the two passes it replaces). */
START_TEST(forward_times_matches_two_passes)
{
    const int n = _i ? 511 : 127, stride = n + 2;
    tg_status st;
    tg_dst *d = tg_dst_create(n, &st);
    ck_assert_msg(d != NULL, "create failed: %s", st.msg);
    const size_t nn = (size_t)n * n;
    double *in = malloc((size_t)n * stride * sizeof *in);
    double *fac = malloc(nn * sizeof *fac), *a = malloc(nn * sizeof *a),
           *b = malloc(nn * sizeof *b);
    ck_assert(in && fac && a && b);
    uint64_t seed = 99u + (uint64_t)n;
    for (size_t i = 0; i < (size_t)n * stride; i++)
        in[i] = next_uniform(&seed);
    for (size_t i = 0; i < nn; i++)
        fac[i] = 1.0 / (3.0 + next_uniform(&seed));
    tg_dst_forward(d, in, stride, a);
    for (size_t i = 0; i < nn; i++)
        a[i] *= fac[i];
    tg_dst_forward_times(d, in, stride, b, fac);
    ck_assert_msg(memcmp(a, b, nn * sizeof *a) == 0, "n = %d: fused product differs", n);
    tg_dst_forward_times(d, in, stride, b, NULL);
    tg_dst_forward(d, in, stride, a);
    ck_assert_msg(memcmp(a, b, nn * sizeof *a) == 0, "n = %d: NULL factor changed the result",
                  n);
    free(b);
    free(a);
    free(fac);
    free(in);
    tg_dst_destroy(d);
}
END_TEST

static Suite *sinetf_suite(void)
{
    Suite *s = suite_create("sinetf");

    TCase *tc = tcase_create("definition");
    tcase_set_timeout(tc, 60);
    tcase_add_loop_test(tc, forward_matches_direct_sum, 0,
                        (int)(sizeof direct_sizes / sizeof direct_sizes[0]));
    tcase_add_loop_test(tc, inverse_matches_direct_sum, 0,
                        (int)(sizeof direct_sizes / sizeof direct_sizes[0]));
    tcase_add_loop_test(tc, separable_matches_direct_sum, 0,
                        (int)(sizeof separable_sizes / sizeof separable_sizes[0]));
    tcase_add_loop_test(tc, forward_times_matches_two_passes, 0, 2);
    tcase_add_test(tc, round_trip_strided);
    tcase_add_test(tc, sine_mode_and_laplacian);
    suite_add_tcase(s, tc);

    tc = tcase_create("threads");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, bitwise_one_vs_two_threads);
    suite_add_tcase(s, tc);

    tc = tcase_create("errors");
    tcase_add_loop_test(tc, rejects_bad_size, 0, (int)(sizeof bad_sizes / sizeof bad_sizes[0]));
    tcase_add_test(tc, accepts_good_sizes);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(sinetf_suite());
}
