/* test_basis.c - unit tests of the basis-term library (src/model/basis.h, src/model/basis.c).
 *
 * Checks:
 *   - the table: unique names, lookup, and that every coefficient unit times
 *     its term unit is s-2 (the PV tendency);
 *   - every term against its analytic value for smooth fields (sums of
 *     Fourier modes) in the periodic geometry: the error is small on a 64^2
 *     grid and falls by about 4 when the spacing halves (second-order
 *     stencils; the check asks for a ratio above 3, where first order gives
 *     2). Derivatives of Fourier modes and the product rule are textbook
 *     calculus; second order of centred differences is common practice.
 *     The two terms with a |.| diffusivity are compared away from its zeros
 *     (where the exact term has a kink);
 *   - units by scaling: stretching lengths by 2 (psi by 4, spacing by 2) and
 *     rates by 2 (psi, q, zeta by 2) scale each term by the powers of m and
 *     s in its unit (dimensional analysis, common practice);
 *   - the flux-form terms have zero domain sum in a basin (no circulation
 *     from the walls; telescoping sums, common practice);
 *   - the same values for 1 and 3 OpenMP threads (bitwise);
 *   - no two terms are the same on the grid up to a factor (|cosine| of
 *     every pair below 1 - 1e-6 on a basin state): two proportional columns
 *     make a fit's Gram matrix singular (linear algebra, common practice);
 *   - a coefficients file naming the former term curl_div_gradu_gradu
 *     loads it as curl_div_zeta_deform with half the coefficient, alone or
 *     added to a curl_div_zeta_deform line for the same layer (for
 *     non-divergent flow the gradient-model momentum term is zeta Dt / 2,
 *     zeta Ds off-diagonal: algebra in basis.c's header).
 * A Check suite with its own main().
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "basis.h"
#include "closure_tools.h"
#include "fdops.h"
#include "geometry.h"
#include "unit_util.h"

#include <check.h>
#include <math.h>
#include <omp.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static const double PI = 3.14159265358979323846;

/* ---------------------------------------------------------------------- */
/* Analytic fields: sums of a cos(kx x + ky y + ph)                        */
/* ---------------------------------------------------------------------- */

typedef struct {
    int n;
    double a[4], kx[4], ky[4], ph[4];
} field;

/* d^nx/dx^nx d^ny/dy^ny of the field at (x, y):
 * d/dx cos(theta) = kx cos(theta + pi/2). */
static double D(const field *f, int nx, int ny, double x, double y)
{
    double s = 0.0;
    for (int m = 0; m < f->n; m++)
        s += f->a[m] * pow(f->kx[m], nx) * pow(f->ky[m], ny) *
             cos(f->kx[m] * x + f->ky[m] * y + f->ph[m] + 0.5 * PI * (nx + ny));
    return s;
}

/* A linear combination of derivatives of analytic fields. */
typedef struct {
    int n;
    double c[3];
    const field *f[3];
    int px[3], py[3];
} lin;

static double lin_d(const lin *l, int i, int j, double x, double y)
{
    double s = 0.0;
    for (int m = 0; m < l->n; m++)
        s += l->c[m] * D(l->f[m], l->px[m] + i, l->py[m] + j, x, y);
    return s;
}

static double binom(int n, int k)
{
    return (k == 0 || k == n) ? 1.0 : (double)n; /* n <= 2 here */
}

/* d^a/dx^a d^b/dy^b (f g), Leibniz rule, a, b <= 2. */
static double prod_d(const lin *f, const lin *g, int a, int b, double x, double y)
{
    double s = 0.0;
    for (int i = 0; i <= a; i++)
        for (int j = 0; j <= b; j++)
            s += binom(a, i) * binom(b, j) * lin_d(f, i, j, x, y) * lin_d(g, a - i, b - j, x, y);
    return s;
}

static field PSI, Q;

static void init_fields(double L)
{
    const double k = 2.0 * PI / L;
    PSI = (field){3, {1e4, 7e3, 5e3}, {k, 2 * k, 3 * k}, {2 * k, -k, 0.0}, {0.3, 1.1, 0.4}};
    Q = (field){2, {1e-5, 6e-6}, {2 * k, k}, {k, -3 * k}, {0.5, 2.0}};
}

static lin one(double c, const field *f, int px, int py)
{
    return (lin){1, {c}, {f}, {px}, {py}};
}

/* The analytic value of term `name` at (x, y). */
static double exact(const char *name, double x, double y)
{
#define P(a, b) D(&PSI, a, b, x, y)
#define QQ(a, b) D(&Q, a, b, x, y)
#define Z(a, b) (P((a) + 2, b) + P(a, (b) + 2))
#define LZ(a, b) (Z((a) + 2, b) + Z(a, (b) + 2))
#define LQ(a, b) (QQ((a) + 2, b) + QQ(a, (b) + 2))
    const lin ux = one(-1, &PSI, 1, 1), uy = one(-1, &PSI, 0, 2), vx = one(1, &PSI, 2, 0),
              vy = one(1, &PSI, 1, 1);
    const lin zeta = {2, {1, 1}, {&PSI, &PSI}, {2, 0}, {0, 2}};
    const lin ds = {2, {-1, 1}, {&PSI, &PSI}, {0, 2}, {2, 0}}; /* u_y + v_x */
    const lin dt = one(-2, &PSI, 1, 1);                        /* u_x - v_y */
    if (!strcmp(name, "zeta"))
        return Z(0, 0);
    if (!strcmp(name, "lap_zeta"))
        return LZ(0, 0);
    if (!strcmp(name, "lap2_zeta"))
        return LZ(2, 0) + LZ(0, 2);
    if (!strcmp(name, "lap_q"))
        return LQ(0, 0);
    if (!strcmp(name, "lap2_q"))
        return LQ(2, 0) + LQ(0, 2);
    if (!strcmp(name, "jac_psi_lapzeta"))
        return P(1, 0) * LZ(0, 1) - P(0, 1) * LZ(1, 0);
    if (!strcmp(name, "jac_psi_lapq"))
        return P(1, 0) * LQ(0, 1) - P(0, 1) * LQ(1, 0);
    if (!strcmp(name, "jac_zeta_lapzeta"))
        return Z(1, 0) * LZ(0, 1) - Z(0, 1) * LZ(1, 0);
    if (!strcmp(name, "div_gradu_gradzeta") || !strcmp(name, "div_gradu_gradq")) {
        const int isq = !strcmp(name, "div_gradu_gradq");
        const lin fx = isq ? one(1, &Q, 1, 0) : (lin){2, {1, 1}, {&PSI, &PSI}, {3, 1}, {0, 2}};
        const lin fy = isq ? one(1, &Q, 0, 1) : (lin){2, {1, 1}, {&PSI, &PSI}, {2, 0}, {1, 3}};
        return prod_d(&ux, &fx, 1, 0, x, y) + prod_d(&uy, &fy, 1, 0, x, y) +
               prod_d(&vx, &fx, 0, 1, x, y) + prod_d(&vy, &fy, 0, 1, x, y);
    }
    if (!strcmp(name, "curl_div_zeta_deform"))
        return prod_d(&zeta, &dt, 2, 0, x, y) - prod_d(&zeta, &dt, 0, 2, x, y) +
               2.0 * prod_d(&zeta, &ds, 1, 1, x, y);
    if (!strcmp(name, "div_absgradzeta_gradzeta")) {
        /* div(g grad zeta) = g lap zeta + grad g . grad zeta, g = |grad zeta| */
        const double zx = Z(1, 0), zy = Z(0, 1), g = hypot(zx, zy);
        if (g == 0.0)
            return 0.0;
        return g * LZ(0, 0) + (zx * zx * Z(2, 0) + 2.0 * zx * zy * Z(1, 1) + zy * zy * Z(0, 2)) / g;
    }
    if (!strcmp(name, "div_strain_gradzeta")) {
        const double s1 = lin_d(&ds, 0, 0, x, y), s2 = lin_d(&dt, 0, 0, x, y), s = hypot(s1, s2);
        if (s == 0.0)
            return 0.0;
        const double sx = (s1 * lin_d(&ds, 1, 0, x, y) + s2 * lin_d(&dt, 1, 0, x, y)) / s;
        const double sy = (s1 * lin_d(&ds, 0, 1, x, y) + s2 * lin_d(&dt, 0, 1, x, y)) / s;
        return s * LZ(0, 0) + sx * Z(1, 0) + sy * Z(0, 1);
    }
    ck_abort_msg("no analytic value for term %s", name);
    return 0.0;
#undef P
#undef QQ
#undef Z
#undef LZ
#undef LQ
}

/* ---------------------------------------------------------------------- */
/* Grid helpers                                                             */
/* ---------------------------------------------------------------------- */

typedef struct {
    tg_geometry *g;
    tg_tools *tt;
    tg_basis *b;
    double *psi, *q, *zeta, *out;
} grid;

static tg_geometry *make_geometry(int periodic, int points, double size_km)
{
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.geometry = periodic ? TG_GEOM_PERIODIC : TG_GEOM_BASIN;
    cfg.points = points;
    cfg.size_km = size_km;
    tg_status st;
    tg_geometry *g = tg_geometry_create(&cfg, &st);
    ck_assert_msg(g != NULL, "geometry of %d points: %s", points, st.msg);
    return g;
}

static grid make_grid(int periodic, int points, double size_km)
{
    grid r;
    tg_status st;
    r.g = make_geometry(periodic, points, size_km);
    r.tt = tg_tools_create(r.g, &st);
    ck_assert_ptr_nonnull(r.tt);
    r.b = tg_basis_create(r.g->ns, r.g->a0, r.g->a1, r.g->dx, tg_tools_get(r.tt), &st);
    ck_assert_msg(r.b != NULL, "basis: %s", st.msg);
    const size_t n = (size_t)r.g->ns * r.g->ns;
    r.psi = calloc(n, sizeof(double));
    r.q = calloc(n, sizeof(double));
    r.zeta = calloc(n, sizeof(double));
    r.out = calloc(n, sizeof(double));
    ck_assert(r.psi && r.q && r.zeta && r.out);
    return r;
}

static void free_grid(grid *r)
{
    tg_basis_destroy(r->b);
    tg_tools_destroy(r->tt);
    tg_geometry_destroy(r->g);
    free(r->psi);
    free(r->q);
    free(r->zeta);
    free(r->out);
}

/* Analytic psi, q, zeta on every stored node (periodic: the halo holds the
 * periodic images, which the analytic fields give by themselves); all
 * times `rate`, psi and zeta also times `len2` (with wavenumbers 1/sqrt(len2)
 * times smaller, zeta then keeps its values). */
static void set_analytic(grid *r, double rate, double len2)
{
    const int ns = r->g->ns;
    for (int j = 0; j < ns; j++)
        for (int i = 0; i < ns; i++) {
            const double x = r->g->coord[i], y = r->g->coord[j];
            const long p = (long)j * ns + i;
            r->psi[p] = rate * len2 * D(&PSI, 0, 0, x, y);
            r->q[p] = rate * D(&Q, 0, 0, x, y);
            r->zeta[p] = rate * len2 * (D(&PSI, 2, 0, x, y) + D(&PSI, 0, 2, x, y));
        }
}

static void eval(grid *r, int term)
{
    tg_status st;
    ck_assert_msg(tg_basis_eval(r->b, term, r->psi, r->q, r->zeta, NULL, NULL, r->out, &st) ==
                      TG_OK,
                  "eval %d: %s", term, st.msg);
}

/* The diffusivity factor of the terms with a kink (|grad zeta| or |S|),
 * and -1 for the smooth terms. */
static double kink_factor(const char *name, double x, double y)
{
    if (!strcmp(name, "div_absgradzeta_gradzeta"))
        return hypot(D(&PSI, 3, 0, x, y) + D(&PSI, 1, 2, x, y),
                     D(&PSI, 2, 1, x, y) + D(&PSI, 0, 3, x, y));
    if (!strcmp(name, "div_strain_gradzeta"))
        return hypot(D(&PSI, 2, 0, x, y) - D(&PSI, 0, 2, x, y), 2.0 * D(&PSI, 1, 1, x, y));
    return -1.0;
}

/* Max |numerical - analytic| over the active nodes, relative to max |analytic|.
 * For the terms whose diffusivity is |grad zeta| or |S|, the term has a
 * kink (its derivative jumps) where that vanishes; nodes where it is below
 * a fifth of its maximum are left out there. */
static double rel_error(int term, int points)
{
    init_fields(1e6);
    grid r = make_grid(1, points, 1000.0);
    set_analytic(&r, 1.0, 1.0);
    eval(&r, term);
    const char *name = tg_basis_term_at(term)->name;
    double kmax = 0.0;
    for (int j = r.g->a0; j < r.g->a1; j++)
        for (int i = r.g->a0; i < r.g->a1; i++)
            kmax = fmax(kmax, kink_factor(name, r.g->coord[i], r.g->coord[j]));
    double emax = 0.0, fmax_ = 0.0;
    for (int j = r.g->a0; j < r.g->a1; j++)
        for (int i = r.g->a0; i < r.g->a1; i++) {
            const double kf = kink_factor(name, r.g->coord[i], r.g->coord[j]);
            if (kf >= 0.0 && kf < 0.2 * kmax)
                continue;
            const double e = exact(name, r.g->coord[i], r.g->coord[j]);
            emax = fmax(emax, fabs(r.out[(long)j * r.g->ns + i] - e));
            fmax_ = fmax(fmax_, fabs(e));
        }
    free_grid(&r);
    ck_assert_msg(fmax_ > 0.0, "term %s vanishes for the test fields", name);
    return emax / fmax_;
}

/* ---------------------------------------------------------------------- */
/* Tests                                                                    */
/* ---------------------------------------------------------------------- */

START_TEST(test_table)
{
    const int n = tg_basis_count();
    ck_assert_int_ge(n, 10);
    ck_assert_int_le(n, 16);
    for (int i = 0; i < n; i++) {
        const tg_basis_term *t = tg_basis_term_at(i);
        ck_assert_ptr_nonnull(t);
        ck_assert_int_eq(tg_basis_find(t->name), i);
        for (int k = 0; k < i; k++)
            ck_assert_str_ne(tg_basis_term_at(k)->name, t->name);
        ck_assert(t->formula && t->formula[0] && t->meaning && t->meaning[0]);
    }
    ck_assert_ptr_null(tg_basis_term_at(n));
    ck_assert_ptr_null(tg_basis_term_at(-1));
    ck_assert_int_eq(tg_basis_find("no_such_term"), -1);
}
END_TEST

/* Exponents of m and s in a unit string such as "m-2 s-1" or "m4". */
static void unit_exponents(const char *u, int *em, int *es)
{
    *em = *es = 0;
    char buf[64];
    snprintf(buf, sizeof buf, "%s", u);
    char *save = NULL;
    for (char *t = strtok_r(buf, " ", &save); t; t = strtok_r(NULL, " ", &save)) {
        ck_assert_msg(t[0] == 'm' || t[0] == 's', "unit %s: unknown symbol in '%s'", u, t);
        int e = t[1] ? atoi(t + 1) : 1;
        ck_assert_msg(t[1] == '\0' || e != 0, "unit %s: bad exponent in '%s'", u, t);
        if (t[0] == 'm')
            *em += e;
        else
            *es += e;
    }
}

/* coefficient unit x term unit = s-2 (the tendency of PV, which is in s-1). */
START_TEST(test_units_product)
{
    for (int i = 0; i < tg_basis_count(); i++) {
        const tg_basis_term *t = tg_basis_term_at(i);
        int tm, ts, cm, cs;
        unit_exponents(t->term_unit, &tm, &ts);
        unit_exponents(t->coef_unit, &cm, &cs);
        ck_assert_msg(tm + cm == 0 && ts + cs == -2, "%s: (%s) x (%s) is not s-2", t->name,
                      t->coef_unit, t->term_unit);
    }
}
END_TEST

/* Each term against calculus on smooth periodic fields; second order. */
START_TEST(test_analytic)
{
    const int term = _i;
    const char *name = tg_basis_term_at(term)->name;
    const double e64 = rel_error(term, 64), e128 = rel_error(term, 128);
    ck_assert_msg(e64 < 0.15, "%s: relative error %.3g on 64^2", name, e64);
    if (term == tg_basis_find("zeta")) {
        ck_assert_msg(e64 < 1e-14 && e128 < 1e-14, "zeta is a copy: errors %.3g %.3g", e64, e128);
        return;
    }
    ck_assert_msg(e64 / e128 > 3.0,
                  "%s: error %.3g (64^2) -> %.3g (128^2), ratio %.2f, not second order", name, e64,
                  e128, e64 / e128);
}
END_TEST

/* Scaling lengths by 2 (spacing x2, psi x4) multiplies a term in m^a s^b
 * by 2^a; scaling rates by 2 (psi, q, zeta x2) multiplies it by 2^-b. */
START_TEST(test_units_scaling)
{
    const int term = _i;
    const tg_basis_term *t = tg_basis_term_at(term);
    int em, es;
    unit_exponents(t->term_unit, &em, &es);
    init_fields(1e6);
    grid a = make_grid(1, 32, 1000.0);
    set_analytic(&a, 1.0, 1.0);
    eval(&a, term);
    /* Lengths x2: the same fields on the grid nodes (psi x4), spacing x2. */
    init_fields(2e6);
    grid b = make_grid(1, 32, 2000.0);
    set_analytic(&b, 1.0, 4.0);
    eval(&b, term);
    /* Rates x2. */
    init_fields(1e6);
    grid c = make_grid(1, 32, 1000.0);
    set_analytic(&c, 2.0, 1.0);
    eval(&c, term);
    const double fl = pow(2.0, em), fr = pow(2.0, -es);
    double ref = 0.0, dl = 0.0, dr = 0.0;
    for (int j = a.g->a0; j < a.g->a1; j++)
        for (int i = a.g->a0; i < a.g->a1; i++) {
            const long p = (long)j * a.g->ns + i;
            ref = fmax(ref, fabs(a.out[p]));
            dl = fmax(dl, fabs(b.out[p] - fl * a.out[p]));
            dr = fmax(dr, fabs(c.out[p] - fr * a.out[p]));
        }
    ck_assert_msg(ref > 0.0, "%s vanishes", t->name);
    ck_assert_msg(dl <= 1e-12 * fl * ref, "%s (%s): lengths x2 should scale it by %g; error %.3g",
                  t->name, t->term_unit, fl, dl / (fl * ref));
    ck_assert_msg(dr <= 1e-12 * fr * ref, "%s (%s): rates x2 should scale it by %g; error %.3g",
                  t->name, t->term_unit, fr, dr / (fr * ref));
    free_grid(&a);
    free_grid(&b);
    free_grid(&c);
}
END_TEST

/* A smooth basin state: psi vanishing on the walls, zeta with the
 * free-slip wall vorticity, q = zeta + a linear function of y plus a bump. */
static void set_basin_state(grid *r)
{
    tg_geometry *g = r->g;
    const int ns = g->ns;
    const double L = g->length;
    for (int j = 0; j < ns; j++)
        for (int i = 0; i < ns; i++) {
            const double x = g->coord[i] / L, y = g->coord[j] / L;
            const long p = (long)j * ns + i;
            r->psi[p] = 1e4 * sin(PI * x) * sin(PI * y) * (1.0 + 0.5 * sin(2 * PI * x + 0.3) * y) +
                        3e3 * sin(3 * PI * x) * sin(2 * PI * y);
        }
    g->ops->fill_ring(g, r->psi, 0.0);
    tg_laplacian(g, r->psi, r->zeta);
    g->ops->fill_vorticity_ring(g, r->zeta, r->psi);
    for (int j = 0; j < ns; j++)
        for (int i = 0; i < ns; i++) {
            const long p = (long)j * ns + i;
            const double y = g->coord[j] / L, x = g->coord[i] / L;
            r->q[p] = r->zeta[p] + 1.75e-11 * (g->coord[j] - 0.5 * L) +
                      1e-6 * exp(-20.0 * ((x - 0.4) * (x - 0.4) + (y - 0.6) * (y - 0.6)));
        }
}

/* Flux-form terms: zero domain sum in a basin (telescoping face fluxes,
 * no flux through the walls; common practice). */
START_TEST(test_basin_conservation)
{
    const char *names[] = {"div_gradu_gradzeta", "div_gradu_gradq", "curl_div_zeta_deform"};
    grid r = make_grid(0, 65, 3840.0);
    set_basin_state(&r);
    for (int n = 0; n < 3; n++) {
        const int term = tg_basis_find(names[n]);
        ck_assert_int_ge(term, 0);
        eval(&r, term);
        double s = 0.0, sa = 0.0;
        for (int j = r.g->a0; j < r.g->a1; j++)
            for (int i = r.g->a0; i < r.g->a1; i++) {
                s += r.out[(long)j * r.g->ns + i];
                sa += fabs(r.out[(long)j * r.g->ns + i]);
            }
        ck_assert_msg(sa > 0.0, "%s vanishes", names[n]);
        ck_assert_msg(fabs(s) <= 1e-12 * sa, "%s: domain sum %.3g of sum |.| %.3g", names[n], s,
                      sa);
    }
    free_grid(&r);
}
END_TEST

/* Every term is finite and defined in the basin (rings and walls). */
START_TEST(test_basin_finite)
{
    grid r = make_grid(0, 33, 3840.0);
    set_basin_state(&r);
    for (int term = 0; term < tg_basis_count(); term++) {
        for (long p = 0; p < (long)r.g->ns * r.g->ns; p++)
            r.out[p] = 12345.0; /* the ring of out is not touched */
        eval(&r, term);
        double m = 0.0;
        for (int j = r.g->a0; j < r.g->a1; j++)
            for (int i = r.g->a0; i < r.g->a1; i++) {
                const double v = r.out[(long)j * r.g->ns + i];
                ck_assert_msg(isfinite(v), "%s not finite", tg_basis_term_at(term)->name);
                m = fmax(m, fabs(v));
            }
        ck_assert_msg(m > 0.0, "%s vanishes in the basin", tg_basis_term_at(term)->name);
        ck_assert(r.out[0] == 12345.0 && r.out[r.g->ns - 1] == 12345.0);
    }
    free_grid(&r);
}
END_TEST

/* The same values for 1 and 3 threads, bitwise. */
START_TEST(test_threads)
{
    grid r = make_grid(0, 65, 3840.0);
    set_basin_state(&r);
    const size_t n = (size_t)r.g->ns * r.g->ns;
    double *one_thread = malloc(n * sizeof(double));
    ck_assert_ptr_nonnull(one_thread);
    const int saved = omp_get_max_threads();
    for (int term = 0; term < tg_basis_count(); term++) {
        omp_set_num_threads(1);
        eval(&r, term);
        memcpy(one_thread, r.out, n * sizeof(double));
        omp_set_num_threads(3);
        eval(&r, term);
        ck_assert_msg(memcmp(one_thread, r.out, n * sizeof(double)) == 0,
                      "%s differs between 1 and 3 threads", tg_basis_term_at(term)->name);
    }
    omp_set_num_threads(saved);
    free(one_thread);
    free_grid(&r);
}
END_TEST

START_TEST(test_bad_term)
{
    grid r = make_grid(1, 16, 1000.0);
    tg_status st;
    ck_assert_int_eq(tg_basis_eval(r.b, tg_basis_count(), r.psi, r.q, r.zeta, NULL, NULL, r.out,
                                   &st),
                     TG_ERR_INTERNAL);
    ck_assert_ptr_nonnull(strstr(st.msg, "no term"));
    ck_assert_ptr_null(tg_basis_create(16, 0, 16, 1.0, tg_tools_get(r.tt), &st));
    free_grid(&r);
}
END_TEST

START_TEST(test_terms_distinct)
{
    grid r = make_grid(0, 65, 3840.0);
    set_basin_state(&r);
    const int n = tg_basis_count();
    const long npl = (long)r.g->ns * r.g->ns;
    double *all = malloc(sizeof(double) * (size_t)(n * npl));
    ck_assert_ptr_nonnull(all);
    for (int t = 0; t < n; t++) {
        eval(&r, t);
        memcpy(all + t * npl, r.out, sizeof(double) * (size_t)npl);
    }
    for (int a = 0; a < n; a++)
        for (int b = 0; b < a; b++) {
            double ab = 0.0, aa = 0.0, bb = 0.0;
            for (int j = r.g->a0; j < r.g->a1; j++)
                for (int i = r.g->a0; i < r.g->a1; i++) {
                    const long p = (long)j * r.g->ns + i;
                    ab += all[a * npl + p] * all[b * npl + p];
                    aa += all[a * npl + p] * all[a * npl + p];
                    bb += all[b * npl + p] * all[b * npl + p];
                }
            const double c = fabs(ab) / sqrt(aa * bb);
            ck_assert_msg(c < 1.0 - 1e-6, "%s and %s are proportional on the grid (|cos| = %.12f)",
                          tg_basis_term_at(a)->name, tg_basis_term_at(b)->name, c);
        }
    free(all);
    free_grid(&r);
}
END_TEST

START_TEST(test_renamed_term)
{
    char path[] = "/tmp/test_basis_renamed.XXXXXX";
    int fd = mkstemp(path);
    ck_assert_int_ge(fd, 0);
    FILE *f = fdopen(fd, "w");
    ck_assert_ptr_nonnull(f);
    fprintf(f, "%s\n1 curl_div_gradu_gradu 4 2\n1 curl_div_zeta_deform 1\n"
               "2 curl_div_gradu_gradu -6\n", TG_BASIS_UNITS_LINE);
    fclose(f);
    tg_coef_list list = {0, NULL};
    tg_status st;
    tg_status_clear(&st);
    ck_assert_int_eq(tg_coef_read(path, 2, &list, &st), TG_OK);
    remove(path);
    const int zd = tg_basis_find("curl_div_zeta_deform");
    ck_assert_int_eq(tg_basis_find("curl_div_gradu_gradu"), -1);
    ck_assert_int_eq(list.n, 2);
    ck_assert_int_eq(list.e[0].term, zd);
    ck_assert_int_eq(list.e[0].layer, 0);
    ck_assert(fabs(list.e[0].mean - 3.0) < 1e-15); /* 4 / 2 + 1 */
    ck_assert(fabs(list.e[0].std - 1.0) < 1e-15);  /* 2 / 2, the other has none */
    ck_assert_int_eq(list.e[1].term, zd);
    ck_assert_int_eq(list.e[1].layer, 1);
    ck_assert(fabs(list.e[1].mean + 3.0) < 1e-15);
    ck_assert(list.e[1].std < 0.0);
    tg_coef_list_free(&list);
    /* The former name twice for one layer is a duplicate like any other. */
    strcpy(path, "/tmp/test_basis_renamed.XXXXXX");
    fd = mkstemp(path);
    ck_assert_int_ge(fd, 0);
    f = fdopen(fd, "w");
    fprintf(f, "%s\n1 curl_div_gradu_gradu 4\n1 curl_div_gradu_gradu 2\n", TG_BASIS_UNITS_LINE);
    fclose(f);
    ck_assert_int_eq(tg_coef_read(path, 2, &list, &st), TG_ERR_CONFIG);
    ck_assert_ptr_nonnull(strstr(st.msg, "already given at line 2"));
    remove(path);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("basis");
    TCase *tc = tcase_create("basis");
    tcase_set_timeout(tc, 600);
    tcase_add_test(tc, test_table);
    tcase_add_test(tc, test_units_product);
    tcase_add_loop_test(tc, test_analytic, 0, tg_basis_count());
    tcase_add_loop_test(tc, test_units_scaling, 0, tg_basis_count());
    tcase_add_test(tc, test_basin_conservation);
    tcase_add_test(tc, test_basin_finite);
    tcase_add_test(tc, test_threads);
    tcase_add_test(tc, test_bad_term);
    tcase_add_test(tc, test_terms_distinct);
    tcase_add_test(tc, test_renamed_term);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(suite());
}
