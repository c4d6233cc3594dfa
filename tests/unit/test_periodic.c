/* test_periodic.c - unit tests of the doubly periodic geometry
 * (src/model/geom_periodic.c) and its 2-D real FFT (src/numerics/fourier.c).
 *
 * Checks the forward transform against the DFT by direct summation, the
 * round trip, bitwise equality for 1 and 2 OpenMP threads, the fused
 * spectral multiplication (tg_fft2_apply) against the separate calls, the grid tables
 * and halo copies, the five-point Laplacian of Fourier modes, the Helmholtz
 * solve on manufactured discrete solutions, the conservation properties of
 * the Arakawa Jacobian in the periodic domain, and the Gaussian filter's
 * transfer function. A Check suite with its own main().
 *
 * The geometry is made with tg_geometry_create from a hand-built config
 * (tg_config_check does not accept geometry = periodic yet).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "fdops.h"
#include "fourier.h"
#include "geometry.h"
#include "unit_util.h"

#include <check.h>
#include <math.h>
#include <omp.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

static const double PI = 3.14159265358979323846;

/* Deterministic uniform numbers in [-1, 1) from a 64-bit linear
 * congruential generator (common practice). */
static double next_uniform(uint64_t *s)
{
    *s = *s * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(*s >> 11) * (2.0 / 9007199254740992.0) - 1.0;
}

static double *alloc0(size_t n)
{
    double *a = calloc(n, sizeof(double));
    ck_assert_ptr_nonnull(a);
    return a;
}

static tg_geometry *make_periodic(int points, double size_km)
{
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.geometry = TG_GEOM_PERIODIC;
    cfg.points = points;
    cfg.size_km = size_km;
    tg_status st;
    tg_geometry *g = tg_geometry_create(&cfg, &st);
    ck_assert_msg(g != NULL, "periodic geometry of %d points: %s", points, st.msg);
    return g;
}

static double *field(const tg_geometry *g)
{
    return alloc0((size_t)g->ns * g->ns);
}

/* Random values on the active nodes, halo filled. */
static void random_field(tg_geometry *g, double *f, uint64_t seed)
{
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++)
            f[(long)j * g->ns + i] = next_uniform(&seed);
    g->ops->fill_ring(g, f, 0.0);
}

static double max_abs_active(const tg_geometry *g, const double *f)
{
    double m = 0.0;
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++)
            m = fmax(m, fabs(f[(long)j * g->ns + i]));
    return m;
}

/* ---------------------------------------------------------------------- */
/* Forward transform against its definition by direct summation.
 * Source: the discrete Fourier transform
 *   C(kx, ky) = sum_{i,j} X[j][i] exp(-2 pi I (kx i + ky j)/P),
 * Press et al. 2007, Numerical Recipes 3rd ed., section 12.1 (from memory),
 * applied along both directions as written in fourier.h. */
static const int direct_sizes[] = {4, 8, 16, 32};

START_TEST(fft_forward_matches_direct_sum)
{
    const int P = direct_sizes[_i], nc = P / 2 + 1, stride = P + 3;
    tg_status st;
    tg_fft2 *f = tg_fft2_create(P, &st);
    ck_assert_msg(f != NULL, "create failed: %s", st.msg);
    ck_assert_int_eq(tg_fft2_size(f), P);
    ck_assert_int_eq(tg_fft2_spec_len(f), 2L * nc * P);

    uint64_t seed = 99u + (uint64_t)P;
    double *in = alloc0((size_t)P * stride);
    double *spec = alloc0((size_t)tg_fft2_spec_len(f));
    for (int a = 0; a < P * stride; a++)
        in[a] = next_uniform(&seed);
    tg_fft2_forward(f, in, stride, spec);

    double err = 0.0, scale = 0.0;
    for (int kx = 0; kx < nc; kx++)
        for (int ky = 0; ky < P; ky++) {
            long double re = 0.0L, im = 0.0L;
            for (int j = 0; j < P; j++)
                for (int i = 0; i < P; i++) {
                    long m = ((long)kx * i + (long)ky * j) % P;
                    long double a = -2.0L * PI * (long double)m / P;
                    re += in[(size_t)j * stride + i] * cosl(a);
                    im += in[(size_t)j * stride + i] * sinl(a);
                }
            const double *c = spec + 2 * ((size_t)kx * P + ky);
            err = fmax(err, fmax(fabs(c[0] - (double)re), fabs(c[1] - (double)im)));
            scale = fmax(scale, (double)fabsl(re));
        }
    ck_assert_msg(scale > 0.0, "reference transform is zero");
    ck_assert_msg(err <= 1e-13 * scale, "P = %d: max error %.3e relative to max %.3e", P, err,
                  scale);
    free(in);
    free(spec);
    tg_fft2_destroy(f);
}
END_TEST

/* Round trip: inverse(forward(x)) == x on strided arrays, and the values
 * beyond the P x P block are left alone.
 * Source: the inverse DFT with the factor 1/P^2 (Press et al. 2007,
 * Numerical Recipes 3rd ed., section 12.1, from memory). */
static const int trip_sizes[] = {4, 16, 64, 256};

START_TEST(fft_round_trip)
{
    const int P = trip_sizes[_i], stride = P + 5;
    tg_status st;
    tg_fft2 *f = tg_fft2_create(P, &st);
    ck_assert_msg(f != NULL, "create failed: %s", st.msg);
    uint64_t seed = 5u + (uint64_t)P;
    double *in = alloc0((size_t)P * stride), *out = alloc0((size_t)P * stride);
    double *spec = alloc0((size_t)tg_fft2_spec_len(f));
    for (int a = 0; a < P * stride; a++) {
        in[a] = next_uniform(&seed);
        out[a] = 7.0;
    }
    tg_fft2_forward(f, in, stride, spec);
    tg_fft2_inverse(f, spec, out, stride);
    double err = 0.0;
    for (int j = 0; j < P; j++) {
        for (int i = 0; i < P; i++)
            err = fmax(err, fabs(out[(size_t)j * stride + i] - in[(size_t)j * stride + i]));
        for (int i = P; i < stride; i++)
            ck_assert_msg(out[(size_t)j * stride + i] == 7.0, "P = %d: wrote beyond the block", P);
    }
    ck_assert_msg(err <= 1e-14, "P = %d: round-trip error %.3e", P, err);
    free(in);
    free(out);
    free(spec);
    tg_fft2_destroy(f);
}
END_TEST

/* Bitwise equality of forward and inverse transforms for 1 and 2 threads.
 * Source: design requirement (fourier.h); common practice for reproducible
 * parallel runs. */
static const int thread_sizes[] = {16, 64, 256};

/* A transform of P x P with buffers for two threads (the thread tests). */
static tg_fft2 *fft_for_two_threads(int P)
{
    omp_set_num_threads(2);
    tg_status st;
    tg_fft2 *f = tg_fft2_create(P, &st);
    ck_assert_msg(f != NULL, "create failed: %s", st.msg);
    return f;
}

START_TEST(fft_threads_bitwise)
{
    const int P = thread_sizes[_i], stride = P + 2;
    const int saved = omp_get_max_threads();
    tg_fft2 *f = fft_for_two_threads(P);
    const size_t nl = (size_t)tg_fft2_spec_len(f), nr = (size_t)P * stride;
    double *in = alloc0(nr), *s1 = alloc0(nl), *s2 = alloc0(nl), *o1 = alloc0(nr),
           *o2 = alloc0(nr);
    uint64_t seed = 31u;
    for (size_t a = 0; a < nr; a++)
        in[a] = next_uniform(&seed);

    omp_set_num_threads(1);
    tg_fft2_forward(f, in, stride, s1);
    tg_fft2_inverse(f, s1, o1, stride);
    omp_set_num_threads(2);
    tg_fft2_forward(f, in, stride, s2);
    tg_fft2_inverse(f, s2, o2, stride);
    omp_set_num_threads(saved);

    ck_assert_msg(memcmp(s1, s2, nl * sizeof(double)) == 0,
                  "P = %d: forward differs between 1 and 2 threads", P);
    ck_assert_msg(memcmp(o1, o2, nr * sizeof(double)) == 0,
                  "P = %d: inverse differs between 1 and 2 threads", P);
    free(in);
    free(s1);
    free(s2);
    free(o1);
    free(o2);
    tg_fft2_destroy(f);
}
END_TEST

/* tg_fft2_apply_fused's two ends for two fields: fill copies row j of each
 * field from in, take copies row j of each result into out (row length
 * `stride`, fields nr apart); each counts its calls of each row. */
typedef struct {
    const double *in;
    double *out;
    int *fills, *takes;
    int P, stride;
    size_t nr;
} row_ends;

static void fill_rows(void *ctx, int j, double *const *rows)
{
    row_ends *s = ctx;
    for (int n = 0; n < 2; n++)
        memcpy(rows[n], s->in + n * s->nr + (size_t)j * s->stride, sizeof(double) * s->P);
#pragma omp atomic
    s->fills[j]++;
}

static void take_rows(void *ctx, int j, const double *const *rows)
{
    row_ends *s = ctx;
    /* every row filled before any is taken */
    for (int jj = 0; jj < s->P; jj++)
        ck_assert_int_eq(s->fills[jj], 1);
    for (int n = 0; n < 2; n++)
        memcpy(s->out + n * s->nr + (size_t)j * s->stride, rows[n], sizeof(double) * s->P);
#pragma omp atomic
    s->takes[j]++;
}

/* tg_fft2_apply on two fields equals, bit for bit, forward transform,
 * multiplication of each (re, im) by the factor and inverse transform,
 * with 1 and 2 threads; it writes only the P x P blocks. tg_fft2_apply_fused
 * takes each row once, before it hands any over, and hands over the same
 * rows, each once. Source: the contract of fourier.h (the fused pass does
 * the same arithmetic). */
START_TEST(fft_apply_bitwise)
{
    const int P = thread_sizes[_i], stride = P + 3, nc = P / 2 + 1;
    const int saved = omp_get_max_threads();
    tg_fft2 *f = fft_for_two_threads(P);
    const size_t nl = (size_t)tg_fft2_spec_len(f), nr = (size_t)P * stride;
    double *in = alloc0(2 * nr), *want = alloc0(2 * nr), *spec = alloc0(nl);
    double *fac = alloc0(2 * (size_t)nc * P), *got[2] = {alloc0(2 * nr), alloc0(2 * nr)};
    uint64_t seed = 77u;
    for (size_t a = 0; a < 2 * nr; a++)
        in[a] = next_uniform(&seed);
    /* factors even in kx and ky: functions of kx and min(ky, P - ky) */
    for (int m = 0; m < 2; m++)
        for (int kx = 0; kx < nc; kx++)
            for (int ky = 0; ky < P; ky++) {
                const int ks = ky <= P / 2 ? ky : P - ky;
                fac[(size_t)m * nc * P + (size_t)kx * P + ky] =
                    1.0 / (1.0 + (m + 1) * (kx * kx + ks * ks));
            }
    for (int m = 0; m < 2; m++) {
        memcpy(want + m * nr, in + m * nr, nr * sizeof(double));
        tg_fft2_forward(f, in + m * nr, stride, spec);
        for (size_t k = 0; k < nl / 2; k++) {
            spec[2 * k] *= fac[(size_t)m * nc * P + k];
            spec[2 * k + 1] *= fac[(size_t)m * nc * P + k];
        }
        tg_fft2_inverse(f, spec, want + m * nr, stride);
    }
    const double *factors[2] = {fac, fac + (size_t)nc * P};
    for (int t = 0; t < 2; t++) {
        memcpy(got[t], in, 2 * nr * sizeof(double));
        double *fields[2] = {got[t], got[t] + nr};
        omp_set_num_threads(t + 1);
        tg_fft2_apply(f, 2, fields, stride, factors);
        ck_assert_msg(memcmp(got[t], want, 2 * nr * sizeof(double)) == 0,
                      "P = %d, %d thread(s): apply differs from forward, product, inverse", P,
                      t + 1);
        /* the same through rows: the P x P blocks of want */
        int *fills = calloc(2 * (size_t)P, sizeof(int)), *takes = fills + P;
        ck_assert_ptr_nonnull(fills);
        row_ends ends = {in, alloc0(2 * nr), fills, takes, P, stride, nr};
        tg_status st;
        ck_assert_int_eq(tg_fft2_reserve(f, 2, &st), TG_OK);
        ck_assert_int_eq(tg_fft2_reserve(f, TG_FFT2_MAX_FIELDS + 1, &st), TG_ERR_INTERNAL);
        ck_assert_ptr_nonnull(strstr(st.msg, "fields for one pass"));
        tg_fft2_apply_fused(f, 2, fill_rows, factors, take_rows, &ends);
        for (int j = 0; j < P; j++) {
            ck_assert_msg(fills[j] == 1 && takes[j] == 1, "P = %d, %d thread(s): row %d "
                          "filled %d times, handed over %d times", P, t + 1, j, fills[j],
                          takes[j]);
            for (int n = 0; n < 2; n++) {
                const size_t o = n * nr + (size_t)j * stride;
                ck_assert_msg(memcmp(ends.out + o, want + o, sizeof(double) * P) == 0,
                              "P = %d, %d thread(s): row %d of field %d differs from apply",
                              P, t + 1, j, n);
            }
        }
        free(ends.out);
        free(fills);
    }
    omp_set_num_threads(saved);
    free(in);
    free(want);
    free(spec);
    free(fac);
    free(got[0]);
    free(got[1]);
    tg_fft2_destroy(f);
}
END_TEST

/* Sizes that are not powers of two (or too small) are refused with a message.
 * Source: contract of fourier.h. */
START_TEST(fft_rejects_bad_sizes)
{
    const int bad[] = {0, 2, 6, 12, 100};
    for (size_t k = 0; k < sizeof bad / sizeof bad[0]; k++) {
        tg_status st;
        tg_fft2 *f = tg_fft2_create(bad[k], &st);
        ck_assert_msg(f == NULL, "P = %d accepted", bad[k]);
        ck_assert_int_eq(st.code, TG_ERR_CONFIG);
        ck_assert_msg(strstr(st.msg, "power of two") != NULL, "message: %s", st.msg);
    }
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.geometry = TG_GEOM_PERIODIC;
    cfg.points = 65;
    tg_status st;
    ck_assert(tg_geometry_create(&cfg, &st) == NULL);
    ck_assert_int_eq(st.code, TG_ERR_CONFIG);
    ck_assert_msg(strstr(st.msg, "2^k") != NULL, "message: %s", st.msg);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Grid tables of the periodic contract (geom_periodic.c header): ns = P+2,
 * active 1..P, coord[s] = (s-1) dx, weight dx^2 on active nodes only.
 * Source: the geometry contract; the rectangle rule is the exact
 * quadrature of trigonometric polynomials of degree < P on a periodic grid
 * (common practice). */
START_TEST(grid_tables)
{
    const int P = 32;
    const double L = 2000.0e3;
    tg_geometry *g = make_periodic(P, L / 1e3);
    ck_assert_int_eq(g->kind, TG_GEOM_PERIODIC);
    ck_assert_int_eq(g->ns, P + 2);
    ck_assert_int_eq(g->a0, 1);
    ck_assert_int_eq(g->a1, P + 1);
    ck_assert_int_eq(g->o0, 1);
    ck_assert_int_eq(g->o1, P + 1);
    ck_assert(g->length == L);
    ck_assert(g->dx == L / P);
    ck_assert(g->area == L * L);
    for (int s = 0; s < g->ns; s++)
        ck_assert_msg(g->coord[s] == (s - 1) * g->dx, "coord[%d] = %g", s, g->coord[s]);
    double wsum = 0.0;
    for (int j = 0; j < g->ns; j++)
        for (int i = 0; i < g->ns; i++) {
            int active = i >= 1 && i <= P && j >= 1 && j <= P;
            double w = g->weight[(long)j * g->ns + i];
            ck_assert_msg(w == (active ? g->dx * g->dx : 0.0), "weight at (%d, %d) = %g", i, j, w);
            wsum += w;
        }
    ck_assert_msg(fabs(wsum - g->area) <= 1e-12 * g->area, "weights sum to %g, area %g", wsum,
                  g->area);
    /* A smooth periodic field integrates exactly: int cos^2(2 pi x/L) = A/2. */
    double *f = field(g), *rowbuf = alloc0(g->ns);
    for (int j = 0; j < g->ns; j++)
        for (int i = 0; i < g->ns; i++) {
            double c = cos(2.0 * PI * g->coord[i] / L);
            f[(long)j * g->ns + i] = c * c;
        }
    double I = tg_integral(g, f, 0.0, 0, rowbuf);
    ck_assert_msg(fabs(I - 0.5 * g->area) <= 1e-13 * g->area, "integral %.15g, expected %.15g", I,
                  0.5 * g->area);
    free(f);
    free(rowbuf);
    tg_geometry_destroy(g);
}
END_TEST

/* The halo holds copies of the opposite side, corners included, for all
 * three ring fills; wall_value is ignored.
 * Source: the geometry contract (geometry.h, geom_periodic.c). */
START_TEST(halo_copies)
{
    const int P = 16;
    tg_geometry *g = make_periodic(P, 500.0);
    const int ns = g->ns;
    double *f = field(g), *psi = field(g);
    for (int pass = 0; pass < 3; pass++) {
        uint64_t seed = 11u + (uint64_t)pass;
        for (long a = 0; a < (long)ns * ns; a++)
            f[a] = next_uniform(&seed);
        if (pass == 0)
            g->ops->fill_ring(g, f, 123.0);
        else if (pass == 1)
            g->ops->fill_vorticity_ring(g, f, psi);
        else
            g->ops->fill_laplacian_ring(g, f);
        for (int j = 0; j < ns; j++)
            for (int i = 0; i < ns; i++) {
                int si = 1 + ((i - 1 + P) % P), sj = 1 + ((j - 1 + P) % P);
                ck_assert_msg(f[(long)j * ns + i] == f[(long)sj * ns + si],
                              "pass %d: stored (%d, %d) is not a copy of (%d, %d)", pass, i, j,
                              si, sj);
            }
    }
    free(f);
    free(psi);
    tg_geometry_destroy(g);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* The five-point Laplacian of a Fourier mode is lambda times the mode with
 *   lambda = -(4/dx^2) [sin^2(pi kx/P) + sin^2(pi ky/P)].
 * Source: common practice (the eigenvalues of the periodic five-point
 * Laplacian; e.g. Press et al. 2007, Numerical Recipes 3rd ed., section
 * 20.4, from memory). */
START_TEST(laplacian_of_fourier_mode)
{
    const int P = 32;
    tg_geometry *g = make_periodic(P, 1000.0);
    const int ns = g->ns;
    const int modes[][2] = {{1, 0},  {0, 3},   {2, -5},  {7, 4},
                            {16, 0}, {16, 16}, {-3, 16}, {11, -13}};
    double *f = field(g), *lap = field(g);
    for (size_t m = 0; m < sizeof modes / sizeof modes[0]; m++) {
        const int kx = modes[m][0], ky = modes[m][1];
        for (int j = 1; j <= P; j++)
            for (int i = 1; i <= P; i++) {
                long ph = ((long)kx * (i - 1) + (long)ky * (j - 1)) % P;
                f[(long)j * ns + i] = cos(2.0 * PI * (double)ph / P + 0.3);
            }
        g->ops->fill_ring(g, f, 0.0);
        tg_laplacian(g, f, lap);
        const double sx = sin(PI * kx / P), sy = sin(PI * ky / P);
        const double lambda = -4.0 / (g->dx * g->dx) * (sx * sx + sy * sy);
        double err = 0.0;
        for (int j = 1; j <= P; j++)
            for (int i = 1; i <= P; i++) {
                long p = (long)j * ns + i;
                err = fmax(err, fabs(lap[p] - lambda * f[p]));
            }
        ck_assert_msg(err <= 1e-12 * fabs(lambda), "mode (%d, %d): error %.3e, lambda %.3e", kx,
                      ky, err, lambda);
    }
    free(f);
    free(lap);
    tg_geometry_destroy(g);
}
END_TEST

/* Helmholtz solve recovers a manufactured discrete solution: for a random
 * zero-mean phi, rhs = lap5(phi) - F phi (fdops.c) is solved back to phi to
 * round-off, whatever constant is added to rhs; the halo is filled and the
 * returned wall value is 0.
 * Source: method of manufactured solutions (Roache 2002, J. Fluids Eng.
 * 124, 4-10); the Fourier diagonalization of the five-point Laplacian is
 * common practice (see laplacian_of_fourier_mode). */
static const int helm_sizes[] = {16, 64};

START_TEST(helmholtz_manufactured)
{
    const int P = helm_sizes[_i];
    tg_geometry *g = make_periodic(P, 3000.0);
    const int ns = g->ns;
    /* F = 0 (barotropic) and two baroclinic values: deformation radii 40 km
     * and 4 dx. */
    const double F[3] = {0.0, 1.0 / (40e3 * 40e3), 1.0 / (16.0 * g->dx * g->dx)};
    tg_status st;
    ck_assert_msg(g->ops->setup_modes(g, 3, F, &st) == TG_OK, "setup: %s", st.msg);
    double *phi = field(g), *lap = field(g), *rhs = field(g), *sol = field(g), *row = alloc0(ns);
    for (int m = 0; m < 3; m++) {
        random_field(g, phi, 1000u + (uint64_t)m);
        double mean = tg_integral(g, phi, 0.0, 0, row) / g->area;
        for (long a = 0; a < (long)ns * ns; a++)
            phi[a] -= mean;
        tg_laplacian(g, phi, lap);
        for (int shift = 0; shift < 2; shift++) {
            for (long a = 0; a < (long)ns * ns; a++)
                rhs[a] = lap[a] - F[m] * phi[a] + (shift ? 3.7e-9 : 0.0);
            for (long a = 0; a < (long)ns * ns; a++)
                sol[a] = NAN;
            double wall = g->ops->solve_mode(g, m, rhs, sol);
            ck_assert_msg(wall == 0.0, "mode %d: returned %g", m, wall);
            double err = 0.0;
            for (int j = 0; j < ns; j++)
                for (int i = 0; i < ns; i++) {
                    long p = (long)j * ns + i;
                    ck_assert_msg(isfinite(sol[p]), "mode %d: (%d, %d) not set", m, i, j);
                    err = fmax(err, fabs(sol[p] - phi[p]));
                }
            ck_assert_msg(err <= 1e-12 * max_abs_active(g, phi),
                          "P = %d, mode %d, shift %d: error %.3e", P, m, shift, err);
        }
    }
    free(phi);
    free(lap);
    free(rhs);
    free(sol);
    free(row);
    tg_geometry_destroy(g);
}
END_TEST

/* The Helmholtz solve gives bitwise identical results for 1 and 2 threads.
 * Source: design requirement (fourier.h); common practice. */
START_TEST(helmholtz_threads_bitwise)
{
    const int saved = omp_get_max_threads();
    omp_set_num_threads(2);
    tg_geometry *g = make_periodic(128, 1000.0);
    const long n = (long)g->ns * g->ns;
    const double F[2] = {0.0, 1.0 / (25e3 * 25e3)};
    tg_status st;
    ck_assert_msg(g->ops->setup_modes(g, 2, F, &st) == TG_OK, "setup: %s", st.msg);
    double *rhs = field(g), *work = field(g), *a = field(g), *b = field(g);
    random_field(g, rhs, 4242u);
    for (int m = 0; m < 2; m++) {
        omp_set_num_threads(1);
        memcpy(work, rhs, sizeof(double) * n);
        g->ops->solve_mode(g, m, work, a);
        omp_set_num_threads(2);
        memcpy(work, rhs, sizeof(double) * n);
        g->ops->solve_mode(g, m, work, b);
        ck_assert_msg(memcmp(a, b, sizeof(double) * n) == 0, "mode %d differs", m);
    }
    omp_set_num_threads(saved);
    free(rhs);
    free(work);
    free(a);
    free(b);
    tg_geometry_destroy(g);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Arakawa Jacobian in the periodic domain: for arbitrary psi and q,
 *   sum J(psi, q) = 0,  sum psi J(psi, q) = 0,  sum q J(psi, q) = 0
 * to round-off (Arakawa 1966, J. Comput. Phys. 1, 119-143, eqs. 36-46 as
 * in fdops.h: the averaged Jacobian conserves mean vorticity, kinetic
 * energy and enstrophy on a periodic grid). Unlike the basin,
 * where the enstrophy sum keeps a wall term (test_arakawa.c), nothing is
 * left here. */
START_TEST(arakawa_conservation)
{
    const int P = 64;
    tg_geometry *g = make_periodic(P, 1000.0);
    double *psi = field(g), *q = field(g), *J = field(g), *row = alloc0(g->ns);
    for (int trial = 0; trial < 3; trial++) {
        random_field(g, psi, 17u + 2u * trial);
        random_field(g, q, 18u + 2u * trial);
        for (long a = 0; a < (long)g->ns * g->ns; a++) {
            psi[a] = 1e4 * psi[a] + 2e3 * trial; /* a mean must not matter */
            q[a] = 1e-5 * q[a];
        }
        tg_jacobian(g, psi, q, J);
        /* Scale: the sums of absolute products. */
        double spj = 0.0, sqj = 0.0, sj = 0.0;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                long p = (long)j * g->ns + i;
                spj += fabs(psi[p] * J[p]);
                sqj += fabs(q[p] * J[p]);
                sj += fabs(J[p]);
            }
        const double d2 = g->dx * g->dx;
        double e = tg_sum_prod(g, psi, J, 0.0, row) / d2;
        double z = tg_sum_prod(g, q, J, 0.0, row) / d2;
        for (long a = 0; a < (long)g->ns * g->ns; a++)
            psi[a] = 1.0;
        double s = tg_sum_prod(g, psi, J, 0.0, row) / d2;
        ck_assert_msg(fabs(e) <= 1e-13 * spj, "trial %d: sum psi J = %.3e (scale %.3e)", trial, e,
                      spj);
        ck_assert_msg(fabs(z) <= 1e-13 * sqj, "trial %d: sum q J = %.3e (scale %.3e)", trial, z,
                      sqj);
        ck_assert_msg(fabs(s) <= 1e-13 * sj, "trial %d: sum J = %.3e (scale %.3e)", trial, s, sj);
        ck_assert_msg(sqj > 0.0 && spj > 0.0, "degenerate fields");
    }
    free(psi);
    free(q);
    free(J);
    free(row);
    tg_geometry_destroy(g);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Gaussian filter transfer: a Fourier mode of wavenumber K comes out
 * multiplied by exp(-K^2 w^2/24) (Pope 2000, Turbulent Flows, section 13.2,
 * Table 13.2, the Gaussian filter), with K from the signed integer
 * wavenumbers; the halo is filled. */
START_TEST(gaussian_filter_transfer)
{
    const int P = 64;
    const double L = 1000e3;
    tg_geometry *g = make_periodic(P, L / 1e3);
    const int ns = g->ns;
    const int modes[][2] = {{1, 0}, {3, -2}, {-5, 7}, {10, 10}, {0, 32}, {32, 5}};
    const double widths[] = {2.0 * g->dx, 4.0 * g->dx, 30e3};
    double *f = field(g), *ref = field(g);
    for (size_t m = 0; m < sizeof modes / sizeof modes[0]; m++)
        for (size_t w = 0; w < sizeof widths / sizeof widths[0]; w++) {
            const int kx = modes[m][0], ky = modes[m][1];
            const double K2 = pow(2.0 * PI / L, 2) * ((double)kx * kx + (double)ky * ky);
            const double t = exp(-K2 * widths[w] * widths[w] / 24.0);
            for (int j = 1; j <= P; j++)
                for (int i = 1; i <= P; i++) {
                    long ph = (((long)kx * (i - 1) + (long)ky * (j - 1)) % P + P) % P;
                    double v = cos(2.0 * PI * (double)ph / P + 0.7);
                    f[(long)j * ns + i] = v;
                    ref[(long)j * ns + i] = t * v;
                }
            g->ops->fill_ring(g, ref, 0.0);
            g->ops->filter_gaussian(g, f, widths[w]);
            double err = 0.0;
            for (long a = 0; a < (long)ns * ns; a++)
                err = fmax(err, fabs(f[a] - ref[a]));
            ck_assert_msg(err <= 1e-13, "mode (%d, %d), width %g m: error %.3e (transfer %.6f)", kx,
                          ky, widths[w], err, t);
        }
    free(f);
    free(ref);
    tg_geometry_destroy(g);
}
END_TEST

static Suite *periodic_suite(void)
{
    Suite *s = suite_create("periodic");
    TCase *tf = tcase_create("fourier");
    tcase_add_loop_test(tf, fft_forward_matches_direct_sum, 0,
                        (int)(sizeof direct_sizes / sizeof direct_sizes[0]));
    tcase_add_loop_test(tf, fft_round_trip, 0, (int)(sizeof trip_sizes / sizeof trip_sizes[0]));
    tcase_add_loop_test(tf, fft_threads_bitwise, 0,
                        (int)(sizeof thread_sizes / sizeof thread_sizes[0]));
    tcase_add_loop_test(tf, fft_apply_bitwise, 0,
                        (int)(sizeof thread_sizes / sizeof thread_sizes[0]));
    tcase_add_test(tf, fft_rejects_bad_sizes);
    suite_add_tcase(s, tf);
    TCase *tg = tcase_create("geometry");
    tcase_add_test(tg, grid_tables);
    tcase_add_test(tg, halo_copies);
    tcase_add_test(tg, laplacian_of_fourier_mode);
    tcase_add_loop_test(tg, helmholtz_manufactured, 0,
                        (int)(sizeof helm_sizes / sizeof helm_sizes[0]));
    tcase_add_test(tg, helmholtz_threads_bitwise);
    tcase_add_test(tg, arakawa_conservation);
    tcase_add_test(tg, gaussian_filter_transfer);
    suite_add_tcase(s, tg);
    return s;
}

int main(void)
{
    return tg_unit_run(periodic_suite());
}
