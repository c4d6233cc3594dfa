/* test_coarsen.c - the coarse-graining filters and restriction (coarsen.h,
 * ops->filter_field of geom_basin.c and geom_periodic.c).
 *
 * Checks, each with its source:
 * - the sharp spectral filter is a projection onto the modes the coarse
 *   grid resolves: a field built from those modes (plus, in the basin, the
 *   wall patch of resolved wall values) comes back unchanged on the coarse
 *   nodes, and modes beyond the coarse grid are removed (Pope 2000,
 *   Turbulent Flows, section 13.2: the sharp spectral filter keeps
 *   |kappa| < kappa_c = pi/Delta and is idempotent, from memory);
 * - the Gaussian filter multiplies each basis mode by its transfer function
 *   exp(-kappa^2 Delta^2/24) (Pope 2000, section 13.2), with Delta the
 *   documented width = width factor x coarse spacing;
 * - bilinear fields pass the basin filter unchanged, and a wall term
 *   g(y)(1 - x/L) has only g filtered, as the infinite-domain Gaussian acts
 *   on a field linear in x (Gordon & Hall 1973, Int. J. Numer. Methods Eng.
 *   7, 461-477: the bilinearly blended patch reproduces bilinear fields);
 * - grids that do not nest are refused.
 * The case "crosscheck" writes a field and its filtered versions for
 * tests/crosscheck/check_filter_scipy.py (scipy.fft), to
 *   $TG_TEST_TMPDIR/twingyre-filter-crosscheck.txt (else $TMPDIR or /tmp).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "coarsen.h"
#include "config.h"
#include "geometry.h"
#include "unit_util.h"

#include <check.h>
#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static const double PI = 3.14159265358979323846;

static tg_geometry *make_geometry(tg_geometry_kind kind, int points, double size_km)
{
    tg_config cfg;
    tg_status st;
    tg_config_defaults(&cfg);
    cfg.geometry = kind;
    cfg.points = points;
    cfg.size_km = size_km;
    tg_geometry *g = tg_geometry_create(&cfg, &st);
    ck_assert_msg(g != NULL, "geometry: %s", st.msg);
    return g;
}

static tg_coarsen *make_coarsen(tg_geometry *f, tg_geometry *c, tg_filter_kind kind,
                                double factor)
{
    tg_status st;
    tg_coarsen *cg = tg_coarsen_create(f, c, kind, factor, &st);
    ck_assert_msg(cg != NULL, "coarsen: %s", st.msg);
    return cg;
}

static double *alloc0(size_t n)
{
    double *a = calloc(n, sizeof(double));
    ck_assert_ptr_nonnull(a);
    return a;
}

/* Deterministic uniform numbers in [-1, 1) from a 64-bit linear
 * congruential generator (common practice). */
static double next_uniform(uint64_t *s)
{
    *s = *s * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(*s >> 11) * (2.0 / 9007199254740992.0) - 1.0;
}

/* Position of stored index s (both geometries: coord). */
#define X(g, s) ((g)->coord[s])

/* A field the coarse basin grid (Nc cells) resolves, at (x, y): sine modes
 * below Nc, a bilinear part, and the patch of a resolved west-wall term. */
static double basin_resolved(double x, double y, double L)
{
    const double s = x / L, t = y / L;
    return 0.7 * sin(PI * 1 * s) * sin(PI * 2 * t) - 0.4 * sin(PI * 5 * s) * sin(PI * 3 * t) +
           0.25 * sin(PI * 15 * s) * sin(PI * 14 * t) + 2.0 + 1.5 * s - 0.5 * t + 0.3 * s * t +
           0.6 * (1.0 - s) * sin(3 * PI * t) - 0.2 * s * sin(7 * PI * t);
}

/* Only what the coarse grid cannot hold: modes 16 and above, and a
 * wall term of mode 20. */
static double basin_unresolved(double x, double y, double L)
{
    const double s = x / L, t = y / L;
    return 0.5 * sin(PI * 20 * s) * sin(PI * 3 * t) + 0.3 * sin(PI * 2 * s) * sin(PI * 17 * t) +
           0.4 * (1.0 - t) * sin(20 * PI * s);
}

START_TEST(sharp_resolved_basin)
{
    /* 65 -> 17 points: r = 4, Nc = 16 cells. */
    const double L = 1000e3;
    tg_geometry *f = make_geometry(TG_GEOM_BASIN, 65, L / 1e3);
    tg_geometry *c = make_geometry(TG_GEOM_BASIN, 17, L / 1e3);
    tg_coarsen *cg = make_coarsen(f, c, TG_FILTER_SHARP, 0.0);
    ck_assert_int_eq(tg_coarsen_ratio(cg), 4);
    ck_assert_double_eq_tol(tg_coarsen_cutoff(cg), PI / c->dx, 1e-18);
    const int nf = f->ns, nc = c->ns;
    double *a = alloc0((size_t)nf * nf), *b = alloc0((size_t)nf * nf);
    double *ca = alloc0((size_t)nc * nc), *cb = alloc0((size_t)nc * nc);
    for (int j = 0; j < nf; j++)
        for (int i = 0; i < nf; i++) {
            a[j * nf + i] = basin_resolved(X(f, i), X(f, j), L);
            b[j * nf + i] = a[j * nf + i] + basin_unresolved(X(f, i), X(f, j), L);
        }
    tg_coarsen_field(cg, a, ca);
    tg_coarsen_field(cg, b, cb);
    double err = 0.0, errb = 0.0;
    for (int J = 0; J < nc; J++)
        for (int I = 0; I < nc; I++) {
            const double want = basin_resolved(X(c, I), X(c, J), L);
            err = fmax(err, fabs(ca[J * nc + I] - want));
            errb = fmax(errb, fabs(cb[J * nc + I] - want));
        }
    ck_assert_msg(err < 1e-12 * 4.0, "resolved field changed by %g", err);
    ck_assert_msg(errb < 1e-12 * 4.0, "unresolved modes left %g", errb);
    /* And the filter really acts: the unresolved part alone is not zero on the
     * fine grid before filtering but is afterwards. */
    double before = 0.0, after = 0.0;
    for (int p = 0; p < nf * nf; p++) {
        b[p] -= a[p];
        before = fmax(before, fabs(b[p]));
    }
    tg_coarsen_filter(cg, b);
    for (int p = 0; p < nf * nf; p++)
        after = fmax(after, fabs(b[p]));
    ck_assert(before > 0.1);
    ck_assert_msg(after < 1e-12, "sharp filter left %g of the unresolved modes", after);
    free(a);
    free(b);
    free(ca);
    free(cb);
    tg_coarsen_destroy(cg);
    tg_geometry_destroy(f);
    tg_geometry_destroy(c);
}
END_TEST

START_TEST(sharp_resolved_periodic)
{
    /* 64 -> 16 points: r = 4, coarse Nyquist 8. */
    const double L = 1000e3;
    tg_geometry *f = make_geometry(TG_GEOM_PERIODIC, 64, L / 1e3);
    tg_geometry *c = make_geometry(TG_GEOM_PERIODIC, 16, L / 1e3);
    tg_coarsen *cg = make_coarsen(f, c, TG_FILTER_SHARP, 0.0);
    ck_assert_int_eq(tg_coarsen_ratio(cg), 4);
    const int nf = f->ns, nc = c->ns;
    double *a = alloc0((size_t)nf * nf), *ca = alloc0((size_t)nc * nc);
    const double w = 2.0 * PI / L;
    for (int j = 0; j < nf; j++)
        for (int i = 0; i < nf; i++) {
            const double x = X(f, i), y = X(f, j);
            /* resolved: |kx|, |ky| <= 7; unresolved: 8 (the coarse Nyquist) and 12 */
            a[j * nf + i] = 1.3 + cos(w * (3 * x + 5 * y)) - 0.5 * sin(w * (7 * x - 7 * y)) +
                            0.8 * cos(w * (12 * x + 1 * y)) + 0.3 * sin(w * (2 * x + 8 * y)) +
                            0.2 * cos(w * 8 * x);
        }
    tg_coarsen_field(cg, a, ca);
    double err = 0.0;
    for (int J = 0; J < nc; J++)
        for (int I = 0; I < nc; I++) {
            const double x = X(c, I), y = X(c, J);
            const double want = 1.3 + cos(w * (3 * x + 5 * y)) - 0.5 * sin(w * (7 * x - 7 * y));
            err = fmax(err, fabs(ca[J * nc + I] - want));
        }
    ck_assert_msg(err < 1e-12 * 4.0, "periodic sharp filter: error %g", err);
    free(a);
    free(ca);
    tg_coarsen_destroy(cg);
    tg_geometry_destroy(f);
    tg_geometry_destroy(c);
}
END_TEST

START_TEST(gaussian_transfer_basin)
{
    const double L = 1000e3, factor = 2.0;
    tg_geometry *f = make_geometry(TG_GEOM_BASIN, 65, L / 1e3);
    tg_geometry *c = make_geometry(TG_GEOM_BASIN, 17, L / 1e3);
    tg_coarsen *cg = make_coarsen(f, c, TG_FILTER_GAUSSIAN, factor);
    const double D = tg_coarsen_width(cg);
    ck_assert_double_eq_tol(D, factor * c->dx, 1e-9);
    const int nf = f->ns;
    double *a = alloc0((size_t)nf * nf);
    const int modes[][2] = {{1, 1}, {3, 2}, {10, 7}, {30, 1}, {63, 63}};
    for (size_t m = 0; m < sizeof modes / sizeof modes[0]; m++) {
        const int mx = modes[m][0], my = modes[m][1];
        for (int j = 0; j < nf; j++)
            for (int i = 0; i < nf; i++)
                a[j * nf + i] = sin(PI * mx * X(f, i) / L) * sin(PI * my * X(f, j) / L);
        tg_coarsen_filter(cg, a);
        const double K2 = (PI / L) * (PI / L) * (mx * mx + my * my);
        const double gain = exp(-K2 * D * D / 24.0); /* Pope 2000, section 13.2 */
        double err = 0.0;
        for (int j = 0; j < nf; j++)
            for (int i = 0; i < nf; i++)
                err = fmax(err, fabs(a[j * nf + i] - gain * sin(PI * mx * X(f, i) / L) *
                                                         sin(PI * my * X(f, j) / L)));
        ck_assert_msg(err < 1e-13, "mode (%d, %d): error %g (gain %g)", mx, my, err, gain);
    }
    /* Bilinear fields pass; a wall term g(y)(1 - x/L) has g filtered. */
    double err = 0.0;
    for (int j = 0; j < nf; j++)
        for (int i = 0; i < nf; i++) {
            const double s = X(f, i) / L, t = X(f, j) / L;
            a[j * nf + i] = 3.0 + 2.0 * s - t + 0.5 * s * t + (1.0 - s) * sin(3 * PI * t);
        }
    tg_coarsen_filter(cg, a);
    const double g3 = exp(-(3 * PI / L) * (3 * PI / L) * D * D / 24.0);
    for (int j = 0; j < nf; j++)
        for (int i = 0; i < nf; i++) {
            const double s = X(f, i) / L, t = X(f, j) / L;
            const double want = 3.0 + 2.0 * s - t + 0.5 * s * t + (1.0 - s) * g3 * sin(3 * PI * t);
            err = fmax(err, fabs(a[j * nf + i] - want));
        }
    ck_assert_msg(err < 1e-12, "bilinear plus wall term: error %g", err);
    free(a);
    tg_coarsen_destroy(cg);
    tg_geometry_destroy(f);
    tg_geometry_destroy(c);
}
END_TEST

START_TEST(gaussian_transfer_periodic)
{
    const double L = 1500e3, factor = 1.5;
    tg_geometry *f = make_geometry(TG_GEOM_PERIODIC, 64, L / 1e3);
    tg_geometry *c = make_geometry(TG_GEOM_PERIODIC, 16, L / 1e3);
    tg_coarsen *cg = make_coarsen(f, c, TG_FILTER_GAUSSIAN, factor);
    const double D = tg_coarsen_width(cg);
    ck_assert_double_eq_tol(D, factor * c->dx, 1e-9);
    const int nf = f->ns;
    double *a = alloc0((size_t)nf * nf);
    const int modes[][2] = {{0, 1}, {3, 5}, {-7, 2}, {20, -31}, {32, 0}};
    const double w = 2.0 * PI / L;
    for (size_t m = 0; m < sizeof modes / sizeof modes[0]; m++) {
        const int kx = modes[m][0], ky = modes[m][1];
        for (int j = 0; j < nf; j++)
            for (int i = 0; i < nf; i++)
                a[j * nf + i] = cos(w * (kx * X(f, i) + ky * X(f, j)));
        tg_coarsen_filter(cg, a);
        const double gain = exp(-w * w * (kx * kx + ky * ky) * D * D / 24.0);
        double err = 0.0;
        for (int j = 0; j < nf; j++)
            for (int i = 0; i < nf; i++)
                err = fmax(err,
                           fabs(a[j * nf + i] - gain * cos(w * (kx * X(f, i) + ky * X(f, j)))));
        ck_assert_msg(err < 1e-13, "mode (%d, %d): error %g (gain %g)", kx, ky, err, gain);
    }
    free(a);
    tg_coarsen_destroy(cg);
    tg_geometry_destroy(f);
    tg_geometry_destroy(c);
}
END_TEST

START_TEST(grids_that_do_not_nest)
{
    tg_status st;
    tg_geometry *f = make_geometry(TG_GEOM_BASIN, 65, 1000.0);
    tg_geometry *other = make_geometry(TG_GEOM_BASIN, 17, 1200.0);
    tg_geometry *per = make_geometry(TG_GEOM_PERIODIC, 16, 1000.0);
    tg_status_clear(&st);
    ck_assert_ptr_null(tg_coarsen_create(f, other, TG_FILTER_SHARP, 0.0, &st));
    ck_assert_int_ne(st.code, TG_OK);
    tg_status_clear(&st);
    ck_assert_ptr_null(tg_coarsen_create(f, per, TG_FILTER_SHARP, 0.0, &st));
    ck_assert_int_ne(st.code, TG_OK);
    tg_geometry_destroy(f);
    tg_geometry_destroy(other);
    tg_geometry_destroy(per);
}
END_TEST

/* ---- data for tests/crosscheck/check_filter_scipy.py ---- */

static void put_value(FILE *f, const char *name, double v)
{
    fprintf(f, "%s 1\n%.17g\n", name, v);
}

static void put_block(FILE *f, const char *name, const double *v, long n)
{
    fprintf(f, "%s %ld\n", name, n);
    for (long i = 0; i < n; i++)
        fprintf(f, "%.17g\n", v[i]);
}

/* Copies the output nodes (o0..o1) of a stored field into a dense block. */
static void dense(const tg_geometry *g, const double *f, double *out)
{
    const int no = g->o1 - g->o0;
    for (int j = 0; j < no; j++)
        for (int i = 0; i < no; i++)
            out[j * no + i] = f[(j + g->o0) * g->ns + i + g->o0];
}

static void write_case(FILE *out, const char *tag, tg_geometry_kind kind, int pf, int pc,
                       double L, double factor, uint64_t seed)
{
    tg_geometry *f = make_geometry(kind, pf, L / 1e3);
    tg_geometry *c = make_geometry(kind, pc, L / 1e3);
    const int nf = f->ns, nof = f->o1 - f->o0, noc = c->o1 - c->o0;
    double *a = alloc0((size_t)nf * nf), *w = alloc0((size_t)nf * nf);
    double *cc = alloc0((size_t)c->ns * c->ns), *d = alloc0((size_t)nof * nof);
    /* Random values on every output node (walls too), ring filled. */
    for (int j = f->o0; j < f->o1; j++)
        for (int i = f->o0; i < f->o1; i++)
            a[j * nf + i] = next_uniform(&seed);
    if (f->o0 == f->a0)
        f->ops->fill_ring(f, a, 0.0);
    char name[64];
    snprintf(name, sizeof name, "%s_points", tag);
    put_value(out, name, pf);
    snprintf(name, sizeof name, "%s_coarse_points", tag);
    put_value(out, name, pc);
    snprintf(name, sizeof name, "%s_length_m", tag);
    put_value(out, name, L);
    dense(f, a, d);
    snprintf(name, sizeof name, "%s_field", tag);
    put_block(out, name, d, (long)nof * nof);
    for (int kind2 = 0; kind2 < 2; kind2++) {
        tg_coarsen *cg = make_coarsen(f, c, kind2 ? TG_FILTER_GAUSSIAN : TG_FILTER_SHARP, factor);
        memcpy(w, a, sizeof(double) * (size_t)nf * nf);
        tg_coarsen_filter(cg, w);
        dense(f, w, d);
        snprintf(name, sizeof name, "%s_%s", tag, kind2 ? "gaussian" : "sharp");
        put_block(out, name, d, (long)nof * nof);
        snprintf(name, sizeof name, "%s_%s_scale", tag, kind2 ? "gaussian" : "sharp");
        put_value(out, name, kind2 ? tg_coarsen_width(cg) : tg_coarsen_cutoff(cg));
        tg_coarsen_field(cg, a, cc);
        double *dc = alloc0((size_t)noc * noc);
        dense(c, cc, dc);
        snprintf(name, sizeof name, "%s_%s_coarse", tag, kind2 ? "gaussian" : "sharp");
        put_block(out, name, dc, (long)noc * noc);
        free(dc);
        tg_coarsen_destroy(cg);
    }
    free(a);
    free(w);
    free(cc);
    free(d);
    tg_geometry_destroy(f);
    tg_geometry_destroy(c);
}

START_TEST(write_crosscheck_data)
{
    const char *dir = getenv("TG_TEST_TMPDIR");
    if (!dir || !*dir)
        dir = getenv("TMPDIR");
    if (!dir || !*dir)
        dir = "/tmp";
    char path[4096];
    snprintf(path, sizeof path, "%s/twingyre-filter-crosscheck.txt", dir);
    FILE *f = fopen(path, "w");
    ck_assert_msg(f != NULL, "cannot write %s: %s", path, strerror(errno));
    fprintf(f, "# twingyre coarse-graining filter cross-check data, written by "
               "tests/unit/test_coarsen.c\n");
    write_case(f, "basin", TG_GEOM_BASIN, 33, 9, 1200e3, 2.0, 777u);
    write_case(f, "periodic", TG_GEOM_PERIODIC, 32, 8, 900e3, 1.7, 778u);
    ck_assert_int_eq(fclose(f), 0);
}
END_TEST

static Suite *coarsen_suite(void)
{
    Suite *s = suite_create("coarsen");
    TCase *tc = tcase_create("filters");
    tcase_add_test(tc, sharp_resolved_basin);
    tcase_add_test(tc, sharp_resolved_periodic);
    tcase_add_test(tc, gaussian_transfer_basin);
    tcase_add_test(tc, gaussian_transfer_periodic);
    tcase_add_test(tc, grids_that_do_not_nest);
    suite_add_tcase(s, tc);
    TCase *tx = tcase_create("crosscheck");
    tcase_add_test(tx, write_crosscheck_data);
    suite_add_tcase(s, tx);
    return s;
}

int main(void)
{
    return tg_unit_run(coarsen_suite());
}
