/* test_spectrum.c - unit tests of the kinetic-energy spectrum (src/model/spectrum.c
 * and the ke_spectrum op of src/model/geom_periodic.c and src/model/geom_basin.c).
 *
 * Checks the exact bin rule, Parseval's relation (sum_b E_b dk equals the
 * model's discrete kinetic energy) for random fields in both geometries,
 * that a single Fourier or sine mode lands in the bin of its wavenumber
 * with the right energy, bitwise equality for 1 and 2 threads, and the
 * refusal of a geometry without a spectrum. It also writes a random field,
 * its 2-D FFT and both spectra to a text file for the numpy cross-check
 * (tests/crosscheck/check_fft_numpy.py):
 *   $TG_TEST_TMPDIR/twingyre-spectrum-crosscheck.txt   (else $TMPDIR or /tmp).
 * A Check suite with its own main().
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "fdops.h"
#include "fourier.h"
#include "geometry.h"
#include "model.h"
#include "spectrum.h"
#include "unit_util.h"

#include <check.h>
#include <errno.h>
#include <math.h>
#include <omp.h>
#include <stdint.h>
#include <stdio.h>
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

static tg_geometry *make_geometry(tg_geometry_kind kind, int points, double size_km)
{
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.geometry = kind;
    cfg.points = points;
    cfg.size_km = size_km;
    tg_status st;
    tg_geometry *g = tg_geometry_create(&cfg, &st);
    ck_assert_msg(g != NULL, "geometry of %d points: %s", points, st.msg);
    return g;
}

static tg_spectrum *make_spectrum(const tg_geometry *g)
{
    tg_status st;
    tg_spectrum *s = tg_spectrum_create(g, &st);
    ck_assert_msg(s != NULL, "%s geometry: %s", g->kind == TG_GEOM_BASIN ? "basin" : "periodic",
                  st.msg);
    return s;
}

static void compute(tg_spectrum *s, tg_geometry *g, const double *psi, double wall)
{
    tg_status st;
    ck_assert_msg(tg_spectrum_compute(s, g, psi, wall, &st) == TG_OK, "compute: %s", st.msg);
}

/* The model's kinetic energy per unit mass of one layer (model.c,
 * tg_model_kinetic_energy): -(1/(2A)) sum_active (psi - c) lap(psi) dx^2,
 * with psi's ring filled by the geometry (wall value c). */
static double model_ke(tg_geometry *g, double *psi, double c)
{
    double *lap = alloc0((size_t)g->ns * g->ns), *row = alloc0(g->ns);
    g->ops->fill_ring(g, psi, c);
    tg_laplacian(g, psi, lap);
    double ke = -0.5 * tg_sum_prod(g, lap, psi, c, row) / g->area;
    free(lap);
    free(row);
    return ke;
}

/* psi = wall + random values on the active nodes (smoothed when width > 0). */
static void random_psi(tg_geometry *g, double *psi, double wall, double width, uint64_t seed)
{
    const int ns = g->ns;
    memset(psi, 0, sizeof(double) * ns * ns);
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++)
            psi[(long)j * ns + i] = 1e4 * next_uniform(&seed);
    if (width > 0.0)
        g->ops->filter_gaussian(g, psi, width);
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++)
            psi[(long)j * ns + i] += wall;
    g->ops->fill_ring(g, psi, wall);
}

/* ---------------------------------------------------------------------- */
/* The bin of kx^2 + ky^2 = m2 is the integer nearest to sqrt(m2).
 * Source: the binning rule of spectrum.h (bins centred at b dk, common
 * practice for isotropic spectra, e.g. Pope 2000, Turbulent Flows,
 * section 6.5, from memory); checked against long double arithmetic. */
START_TEST(bin_is_nearest_integer)
{
    for (long m2 = 0; m2 <= 300000; m2++) {
        long want = (long)floorl(sqrtl((long double)m2) + 0.5L);
        ck_assert_msg(tg_spectrum_bin(m2) == want, "m2 = %ld: bin %d, expected %ld", m2,
                      tg_spectrum_bin(m2), want);
    }
    /* Around squares and the half-way points of large wavenumbers. */
    for (long b = 1000; b < 1100; b++) {
        ck_assert_int_eq(tg_spectrum_bin(b * b + b), b);     /* < (b + 1/2)^2 */
        ck_assert_int_eq(tg_spectrum_bin(b * b + b + 1), b + 1);
        ck_assert_int_eq(tg_spectrum_bin(b * b - b + 1), b); /* > (b - 1/2)^2 */
        ck_assert_int_eq(tg_spectrum_bin(b * b - b), b - 1);
    }
}
END_TEST

/* Parseval in the periodic geometry: sum_b E_b dk equals the model's
 * discrete kinetic energy to round-off, for white and smoothed random
 * fields, and the bins are b dk with dk = 2 pi / L.
 * Source: Parseval's theorem for the DFT (Press et al. 2007, Numerical
 * Recipes 3rd ed., section 12.1, from memory) with the eigenvalues of the
 * five-point Laplacian (spectrum.h). */
static const int per_sizes[] = {16, 64, 256};

START_TEST(periodic_parseval)
{
    const int P = per_sizes[_i];
    const double L = 2500e3;
    tg_geometry *g = make_geometry(TG_GEOM_PERIODIC, P, L / 1e3);
    tg_spectrum *s = make_spectrum(g);
    ck_assert(fabs(s->dk - 2.0 * PI / L) <= 1e-15 * s->dk);
    ck_assert_int_eq(s->nbins, (int)lround(P / sqrt(2.0)));
    for (int b = 1; b <= s->nbins; b++)
        ck_assert(s->k[b - 1] == b * s->dk);
    double *psi = alloc0((size_t)g->ns * g->ns);
    const double widths[] = {0.0, 3.0 * g->dx, 20.0 * g->dx};
    for (int w = 0; w < 3; w++) {
        random_psi(g, psi, 0.0, widths[w], 77u + (uint64_t)w);
        compute(s, g, psi, 0.0);
        double tot = tg_spectrum_total(s), ke = model_ke(g, psi, 0.0);
        ck_assert_msg(ke > 0.0, "zero kinetic energy");
        ck_assert_msg(fabs(tot - ke) <= 1e-12 * ke,
                      "P = %d, width %g: sum E dk = %.17g, kinetic energy %.17g (rel %.2e)", P,
                      widths[w], tot, ke, fabs(tot - ke) / ke);
        for (int b = 0; b < s->nbins; b++)
            ck_assert_msg(s->e[b] >= 0.0, "negative E in bin %d", b + 1);
    }
    free(psi);
    tg_spectrum_destroy(s);
    tg_geometry_destroy(g);
}
END_TEST

/* A single Fourier mode A cos(2 pi (kx x + ky y)/L + phase) lands in bin
 * b = nearest integer to sqrt(kx^2 + ky^2), whose centre b dk is within
 * dk/2 of its wavenumber, with E_b dk = -lambda A^2/4 (the mean of cos^2 is
 * 1/2; lambda from the five-point Laplacian), and nothing elsewhere.
 * Source: Parseval's theorem (as above) and the eigenvalues of the
 * periodic five-point Laplacian (common practice). */
START_TEST(periodic_single_mode)
{
    const int P = 64;
    const double L = 1000e3, A = 3.0e3;
    tg_geometry *g = make_geometry(TG_GEOM_PERIODIC, P, L / 1e3);
    tg_spectrum *s = make_spectrum(g);
    const int ns = g->ns;
    const int modes[][2] = {{1, 0}, {0, 1}, {1, 1}, {3, -4}, {-7, 2}, {12, 9}, {20, -21}, {31, 31}};
    double *psi = alloc0((size_t)ns * ns);
    for (size_t m = 0; m < sizeof modes / sizeof modes[0]; m++) {
        const int kx = modes[m][0], ky = modes[m][1];
        for (int j = 1; j <= P; j++)
            for (int i = 1; i <= P; i++) {
                long ph = ((long)kx * (i - 1) + (long)ky * (j - 1)) % P;
                psi[(long)j * ns + i] = A * cos(2.0 * PI * (double)ph / P + 0.4);
            }
        g->ops->fill_ring(g, psi, 0.0);
        compute(s, g, psi, 0.0);
        const int b0 = (int)lround(sqrt((double)kx * kx + (double)ky * ky));
        const double K = 2.0 * PI / L * sqrt((double)kx * kx + (double)ky * ky);
        ck_assert_msg(fabs(s->k[b0 - 1] - K) <= 0.5 * s->dk, "mode (%d, %d): bin centre %g, K %g",
                      kx, ky, s->k[b0 - 1], K);
        const double sx = sin(PI * kx / P), sy = sin(PI * ky / P);
        const double lambda = -4.0 / (g->dx * g->dx) * (sx * sx + sy * sy);
        const double want = -lambda * A * A / 4.0;
        ck_assert_msg(fabs(s->e[b0 - 1] * s->dk - want) <= 1e-12 * want,
                      "mode (%d, %d): E dk = %.17g in bin %d, expected %.17g", kx, ky,
                      s->e[b0 - 1] * s->dk, b0, want);
        for (int b = 1; b <= s->nbins; b++)
            if (b != b0)
                ck_assert_msg(s->e[b - 1] * s->dk <= 1e-13 * want,
                              "mode (%d, %d): bin %d holds %.3e (mode bin %d)", kx, ky, b,
                              s->e[b - 1] * s->dk, b0);
    }
    free(psi);
    tg_spectrum_destroy(s);
    tg_geometry_destroy(g);
}
END_TEST

/* The spectrum is bitwise the same for 1 and 2 threads.
 * Source: design requirement (fourier.h; fixed summation order). */
START_TEST(periodic_threads_bitwise)
{
    const int saved = omp_get_max_threads();
    omp_set_num_threads(2);
    tg_geometry *g = make_geometry(TG_GEOM_PERIODIC, 128, 1000.0);
    tg_spectrum *s = make_spectrum(g);
    double *psi = alloc0((size_t)g->ns * g->ns), *e1 = alloc0(s->nbins);
    random_psi(g, psi, 0.0, 2.0 * g->dx, 2024u);
    omp_set_num_threads(1);
    compute(s, g, psi, 0.0);
    memcpy(e1, s->e, sizeof(double) * s->nbins);
    omp_set_num_threads(2);
    compute(s, g, psi, 0.0);
    omp_set_num_threads(saved);
    ck_assert_msg(memcmp(e1, s->e, sizeof(double) * s->nbins) == 0,
                  "spectrum differs between 1 and 2 threads");
    free(psi);
    free(e1);
    tg_spectrum_destroy(s);
    tg_geometry_destroy(g);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Parseval in the basin: with a nonzero wall value c, sum_b E_b dk of the
 * sine series of psi - c equals the discrete kinetic energy to round-off,
 * and the bins are b dk with dk = pi / L.
 * Source: Parseval's relation of the type-I sine transform (orthogonality
 * sum_{i=1}^{N-1} sin^2(pi i k/N) = N/2; Press et al. 2007, Numerical
 * Recipes 3rd ed., section 12.4.1, from memory) with the eigenvalues of
 * the five-point Laplacian (geom_basin.c). */
static const int basin_sizes[] = {17, 65, 257};

START_TEST(basin_parseval)
{
    const int points = basin_sizes[_i], N = points - 1;
    const double L = 3000e3;
    tg_geometry *g = make_geometry(TG_GEOM_BASIN, points, L / 1e3);
    tg_spectrum *s = make_spectrum(g);
    ck_assert(fabs(s->dk - PI / L) <= 1e-15 * s->dk);
    ck_assert_int_eq(s->nbins, (int)lround(sqrt(2.0) * (N - 1)));
    for (int b = 1; b <= s->nbins; b++)
        ck_assert(s->k[b - 1] == b * s->dk);
    double *psi = alloc0((size_t)g->ns * g->ns);
    const double walls[] = {0.0, -2.5e4, 7.0e5};
    const double widths[] = {0.0, 3.0 * g->dx, 10.0 * g->dx};
    for (int w = 0; w < 3; w++) {
        random_psi(g, psi, walls[w], widths[w], 91u + (uint64_t)w);
        compute(s, g, psi, walls[w]);
        double tot = tg_spectrum_total(s), ke = model_ke(g, psi, walls[w]);
        ck_assert_msg(ke > 0.0, "zero kinetic energy");
        ck_assert_msg(fabs(tot - ke) <= 1e-12 * ke,
                      "points = %d, wall %g: sum E dk = %.17g, kinetic energy %.17g (rel %.2e)",
                      points, walls[w], tot, ke, fabs(tot - ke) / ke);
    }
    free(psi);
    tg_spectrum_destroy(s);
    tg_geometry_destroy(g);
}
END_TEST

/* Parseval against the model itself: a two-layer basin started from noise
 * (nonzero wall value in the layers through the baroclinic mass
 * constraint); the spectrum of each layer sums to tg_model_kinetic_energy.
 * Source: as basin_parseval; model.c defines the kinetic energy. */
START_TEST(basin_parseval_model)
{
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.points = 65;
    cfg.size_km = 2000.0;
    cfg.nlayers = 2;
    cfg.n_reduced_gravity = 1;
    cfg.thickness_m[0] = 1000.0;
    cfg.thickness_m[1] = 3000.0;
    cfg.reduced_gravity_m_s2[0] = 0.02;
    tg_status st;
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "model: %s", st.msg);
    tg_model_set_noise(m, 5.0e3, 12345u);
    double ke[TG_MAX_LAYERS];
    tg_model_kinetic_energy(m, ke);
    tg_spectrum *s = make_spectrum(m->geom);
    int nonzero_wall = 0;
    for (int k = 0; k < m->nl; k++) {
        compute(s, m->geom, m->psi + k * m->npl, m->wall[k]);
        double tot = tg_spectrum_total(s);
        nonzero_wall += m->wall[k] != 0.0;
        ck_assert_msg(ke[k] > 0.0, "layer %d: zero kinetic energy", k);
        ck_assert_msg(fabs(tot - ke[k]) <= 1e-12 * ke[k],
                      "layer %d (wall %g): sum E dk = %.17g, model %.17g (rel %.2e)", k,
                      m->wall[k], tot, ke[k], fabs(tot - ke[k]) / ke[k]);
    }
    ck_assert_msg(nonzero_wall > 0, "no layer has a nonzero wall value: weak test");
    tg_spectrum_destroy(s);
    tg_model_destroy(m);
}
END_TEST

/* A single sine mode c + A sin(pi kx x/L) sin(pi ky y/L) lands in bin
 * b = nearest integer to sqrt(kx^2 + ky^2) with E_b dk = -lambda A^2/8
 * (the interior mean of sin^2 sin^2 is 1/4) and nothing elsewhere.
 * Source: orthogonality of the discrete sines (Press et al. 2007,
 * Numerical Recipes 3rd ed., section 12.4.1, from memory). */
START_TEST(basin_single_mode)
{
    const int points = 65, N = points - 1;
    const double L = 1000e3, A = 2.0e3, c = 5.0e4;
    tg_geometry *g = make_geometry(TG_GEOM_BASIN, points, L / 1e3);
    tg_spectrum *s = make_spectrum(g);
    const int ns = g->ns;
    const int modes[][2] = {{1, 1}, {2, 1}, {1, 5}, {6, 8}, {30, 2}, {63, 63}, {40, 17}};
    double *psi = alloc0((size_t)ns * ns);
    for (size_t m = 0; m < sizeof modes / sizeof modes[0]; m++) {
        const int kx = modes[m][0], ky = modes[m][1];
        for (int j = 0; j < ns; j++)
            for (int i = 0; i < ns; i++) {
                double v = sin(PI * (double)((long)kx * i % (2 * N)) / N) *
                           sin(PI * (double)((long)ky * j % (2 * N)) / N);
                psi[(long)j * ns + i] = c + A * v;
            }
        g->ops->fill_ring(g, psi, c);
        compute(s, g, psi, c);
        const int b0 = (int)lround(sqrt((double)kx * kx + (double)ky * ky));
        const double K = PI / L * sqrt((double)kx * kx + (double)ky * ky);
        ck_assert_msg(fabs(s->k[b0 - 1] - K) <= 0.5 * s->dk, "mode (%d, %d): bin centre %g, K %g",
                      kx, ky, s->k[b0 - 1], K);
        const double sx = sin(PI * kx / (2.0 * N)), sy = sin(PI * ky / (2.0 * N));
        const double lambda = -4.0 / (g->dx * g->dx) * (sx * sx + sy * sy);
        const double want = -lambda * A * A / 8.0;
        ck_assert_msg(fabs(s->e[b0 - 1] * s->dk - want) <= 1e-11 * want,
                      "mode (%d, %d): E dk = %.17g in bin %d, expected %.17g", kx, ky,
                      s->e[b0 - 1] * s->dk, b0, want);
        ck_assert_msg(fabs(s->e[b0 - 1] * s->dk - model_ke(g, psi, c)) <= 1e-12 * want,
                      "mode (%d, %d): not the discrete kinetic energy", kx, ky);
        for (int b = 1; b <= s->nbins; b++)
            if (b != b0)
                ck_assert_msg(s->e[b - 1] * s->dk <= 1e-12 * want,
                              "mode (%d, %d): bin %d holds %.3e (mode bin %d)", kx, ky, b,
                              s->e[b - 1] * s->dk, b0);
    }
    free(psi);
    tg_spectrum_destroy(s);
    tg_geometry_destroy(g);
}
END_TEST

/* A geometry without the op is refused with a message, not a crash.
 * Source: contract of spectrum.h. */
static void no_destroy(tg_geometry *g)
{
    (void)g;
}

START_TEST(refuses_geometry_without_spectrum)
{
    static const tg_geometry_ops bare = {.destroy = no_destroy};
    tg_geometry g;
    memset(&g, 0, sizeof g);
    g.ns = 8;
    g.ops = &bare;
    tg_status st;
    ck_assert(tg_spectrum_create(&g, &st) == NULL);
    ck_assert_int_eq(st.code, TG_ERR_INTERNAL);
    ck_assert_msg(strstr(st.msg, "no kinetic-energy spectrum") != NULL, "message: %s", st.msg);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Writes the data of the numpy cross-check (check_fft_numpy.py): a random
 * periodic field, its tg_fft2 forward transform, its spectrum and kinetic
 * energy; a random basin field with its wall value, spectrum and kinetic
 * energy. Each block is a line "name count" and count values, one a line.
 * Source: none (data for an independent check). */
static void put_block(FILE *f, const char *name, const double *v, long n)
{
    fprintf(f, "%s %ld\n", name, n);
    for (long a = 0; a < n; a++)
        fprintf(f, "%.17g\n", v[a]);
}

static void put_value(FILE *f, const char *name, double v)
{
    put_block(f, name, &v, 1);
}

START_TEST(write_crosscheck_data)
{
    const char *dir = getenv("TG_TEST_TMPDIR");
    if (!dir || !*dir)
        dir = getenv("TMPDIR");
    if (!dir || !*dir)
        dir = "/tmp";
    char path[4096];
    snprintf(path, sizeof path, "%s/twingyre-spectrum-crosscheck.txt", dir);
    FILE *f = fopen(path, "w");
    ck_assert_msg(f != NULL, "cannot write %s: %s", path, strerror(errno));
    fprintf(f, "# twingyre spectrum cross-check data, written by tests/unit/test_spectrum.c\n");

    /* Periodic: 32 x 32, smoothed noise plus a mean. */
    {
        const int P = 32;
        const double L = 1500e3;
        tg_geometry *g = make_geometry(TG_GEOM_PERIODIC, P, L / 1e3);
        tg_spectrum *s = make_spectrum(g);
        tg_status st;
        tg_fft2 *fft = tg_fft2_create(P, &st);
        ck_assert_msg(fft != NULL, "fft: %s", st.msg);
        const int ns = g->ns;
        double *psi = alloc0((size_t)ns * ns), *act = alloc0((size_t)P * P);
        double *spec = alloc0((size_t)tg_fft2_spec_len(fft));
        random_psi(g, psi, 0.0, 1.5 * g->dx, 555u);
        for (int j = 0; j < P; j++)
            for (int i = 0; i < P; i++)
                act[(long)j * P + i] = psi[(long)(j + 1) * ns + i + 1] + 1.0e3;
        tg_fft2_forward(fft, act, P, spec);
        for (int j = 0; j < P; j++)
            for (int i = 0; i < P; i++)
                psi[(long)(j + 1) * ns + i + 1] = act[(long)j * P + i];
        compute(s, g, psi, 0.0);
        put_value(f, "periodic_points", P);
        put_value(f, "periodic_length_m", L);
        put_block(f, "periodic_field", act, (long)P * P);
        put_block(f, "periodic_fft", spec, tg_fft2_spec_len(fft));
        put_value(f, "periodic_dk", s->dk);
        put_block(f, "periodic_k", s->k, s->nbins);
        put_block(f, "periodic_e", s->e, s->nbins);
        put_value(f, "periodic_ke", model_ke(g, psi, 0.0));
        free(psi);
        free(act);
        free(spec);
        tg_fft2_destroy(fft);
        tg_spectrum_destroy(s);
        tg_geometry_destroy(g);
    }
    /* Basin: 33 points, smoothed noise on a nonzero wall value. */
    {
        const int points = 33;
        const double L = 1200e3, c = -3.0e4;
        tg_geometry *g = make_geometry(TG_GEOM_BASIN, points, L / 1e3);
        tg_spectrum *s = make_spectrum(g);
        const int ns = g->ns;
        double *psi = alloc0((size_t)ns * ns);
        random_psi(g, psi, c, 1.5 * g->dx, 666u);
        compute(s, g, psi, c);
        put_value(f, "basin_points", points);
        put_value(f, "basin_length_m", L);
        put_value(f, "basin_wall", c);
        put_block(f, "basin_field", psi, (long)ns * ns);
        put_value(f, "basin_dk", s->dk);
        put_block(f, "basin_k", s->k, s->nbins);
        put_block(f, "basin_e", s->e, s->nbins);
        put_value(f, "basin_ke", model_ke(g, psi, c));
        free(psi);
        tg_spectrum_destroy(s);
        tg_geometry_destroy(g);
    }
    ck_assert_msg(fclose(f) == 0, "cannot finish %s: %s", path, strerror(errno));
}
END_TEST

static Suite *spectrum_suite(void)
{
    Suite *s = suite_create("spectrum");
    TCase *tb = tcase_create("bins");
    tcase_add_test(tb, bin_is_nearest_integer);
    tcase_add_test(tb, refuses_geometry_without_spectrum);
    suite_add_tcase(s, tb);
    TCase *tp = tcase_create("periodic");
    tcase_add_loop_test(tp, periodic_parseval, 0, (int)(sizeof per_sizes / sizeof per_sizes[0]));
    tcase_add_test(tp, periodic_single_mode);
    tcase_add_test(tp, periodic_threads_bitwise);
    suite_add_tcase(s, tp);
    TCase *tq = tcase_create("basin");
    tcase_add_loop_test(tq, basin_parseval, 0, (int)(sizeof basin_sizes / sizeof basin_sizes[0]));
    tcase_add_test(tq, basin_parseval_model);
    tcase_add_test(tq, basin_single_mode);
    suite_add_tcase(s, tq);
    TCase *tx = tcase_create("crosscheck");
    tcase_add_test(tx, write_crosscheck_data);
    suite_add_tcase(s, tx);
    return s;
}

int main(void)
{
    return tg_unit_run(spectrum_suite());
}
