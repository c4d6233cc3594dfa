/* test_geometry.c - unit tests of the closed-basin geometry (src/model/geom_basin.c)
 * and of the layered PV inversion built on it (src/model/model.c).
 *
 * Checks the grid tables, the mode-by-mode Helmholtz solves against
 * manufactured discrete solutions, the mass constraint of the baroclinic
 * modes, the full layered inversion for 2 and 3 layers, the wall vorticity
 * of the three wall conditions and the transfer function of the Gaussian
 * filter. A Check suite with its own main().
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "fdops.h"
#include "geometry.h"
#include "model.h"
#include "unit_util.h"

#include <check.h>
#include <math.h>
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

/* The first baroclinic F of the default two layers, f0^2 (H1 + H2)/(g' H1 H2)
 * (Vallis 2017, Atmospheric and Oceanic Fluid Dynamics, section 5.3). */
static double default_F1(const tg_config *c)
{
    const double f0 = c->coriolis_f0_per_s, H1 = c->thickness_m[0], H2 = c->thickness_m[1];
    return f0 * f0 * (H1 + H2) / (c->reduced_gravity_m_s2[0] * H1 * H2);
}

static tg_geometry *make_basin(int points, tg_wall_kind wall, double slip, int nmodes,
                               const double *F)
{
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.points = points;
    cfg.wall_condition = wall;
    cfg.wall_slip_coefficient = slip;
    tg_status st;
    tg_geometry *g = tg_geometry_create(&cfg, &st);
    ck_assert_msg(g != NULL, "geometry: %s", st.msg);
    if (nmodes > 0)
        ck_assert_msg(g->ops->setup_modes(g, nmodes, F, &st) == TG_OK, "setup_modes: %s", st.msg);
    return g;
}

static double *field(const tg_geometry *g)
{
    double *f = calloc((size_t)g->ns * g->ns, sizeof(double));
    ck_assert_ptr_nonnull(f);
    return f;
}

static int on_wall(const tg_geometry *g, int i, int j)
{
    return i < g->a0 || j < g->a0 || i >= g->a1 || j >= g->a1;
}

/* Own five-point Laplacian (common practice), independent of fdops.c. */
static double lap5(const tg_geometry *g, const double *f, int i, int j)
{
    const int ns = g->ns;
    const long k = (long)j * ns + i;
    return (f[k + 1] + f[k - 1] + f[k + ns] + f[k - ns] - 4.0 * f[k]) / (g->dx * g->dx);
}

/* Own trapezoidal integral and integral of |f| over the whole basin. */
static void trapezoid(const tg_geometry *g, const double *f, double *integral, double *absint)
{
    const int ns = g->ns, N = ns - 1;
    *integral = *absint = 0.0;
    for (int j = 0; j <= N; j++)
        for (int i = 0; i <= N; i++) {
            double w = ((i == 0 || i == N) ? 0.5 : 1.0) * ((j == 0 || j == N) ? 0.5 : 1.0);
            *integral += w * f[(long)j * ns + i];
            *absint += w * fabs(f[(long)j * ns + i]);
        }
    *integral *= g->dx * g->dx;
    *absint *= g->dx * g->dx;
}

static const int sizes[] = {33, 65};

/* ---------------------------------------------------------------------- */
/* Grid tables: dx = L/(points - 1), node i at x = i dx, trapezoidal weights
 * summing to the area; points not 2^k + 1 are rejected. Source: contract in
 * geometry.h / geom_basin.c; trapezoidal rule: common practice. */
START_TEST(grid_tables)
{
    const int pts = sizes[_i];
    tg_geometry *g = make_basin(pts, TG_WALL_FREE_SLIP, 0.0, 0, NULL);
    tg_config cfg;
    tg_config_defaults(&cfg);
    const double L = cfg.size_km * 1e3;
    ck_assert_int_eq(g->ns, pts);
    ck_assert_int_eq(g->a0, 1);
    ck_assert_int_eq(g->a1, pts - 1);
    ck_assert(fabs(g->dx - L / (pts - 1)) <= 1e-15 * L);
    ck_assert(fabs(g->area - L * L) <= 1e-15 * L * L);
    double wsum = 0.0;
    for (int i = 0; i < pts; i++)
        ck_assert(fabs(g->coord[i] - i * L / (pts - 1)) <= 1e-12 * L);
    for (long k = 0; k < (long)pts * pts; k++)
        wsum += g->weight[k];
    ck_assert_msg(fabs(wsum - L * L) < 1e-12 * L * L, "weights sum to %g, area %g", wsum, L * L);
    tg_geometry_destroy(g);

    cfg.points = pts + 1;
    tg_status st;
    tg_status_clear(&st);
    ck_assert_ptr_null(tg_geometry_create(&cfg, &st));
    ck_assert_int_eq(st.code, TG_ERR_CONFIG);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* (a) Barotropic mode (F = 0): a manufactured discrete solution phi with
 * phi = 0 on the walls and rhs = five-point Laplacian(phi) on the interior
 * is recovered to round-off, and the returned wall value is 0. Source:
 * method of manufactured solutions (common practice); the five-point
 * Laplacian is diagonal in the type-I sine basis (Press et al. 2007,
 * Numerical Recipes 3rd ed., section 20.4), so the solve is exact up to
 * round-off. */
START_TEST(helmholtz_mode0_manufactured)
{
    tg_config cfg;
    tg_config_defaults(&cfg);
    const double F[2] = {0.0, default_F1(&cfg)};
    tg_geometry *g = make_basin(sizes[_i], TG_WALL_FREE_SLIP, 0.0, 2, F);
    const int ns = g->ns;
    double *phi = field(g), *rhs = field(g), *out = field(g);
    uint64_t s = 11u + (uint64_t)_i;
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++)
            phi[(long)j * ns + i] = next_uniform(&s);
    tg_laplacian(g, phi, rhs);
    for (long k = 0; k < (long)ns * ns; k++)
        out[k] = 12345.0; /* the ring must be filled by the solve */
    double wall = g->ops->solve_mode(g, 0, rhs, out);
    ck_assert(wall == 0.0);
    double err = 0.0, big = 0.0;
    for (long k = 0; k < (long)ns * ns; k++) {
        err = fmax(err, fabs(out[k] - phi[k]));
        big = fmax(big, fabs(phi[k]));
    }
    ck_assert_msg(err <= 1e-11 * big, "max error %g of %g", err, big);
    free(phi);
    free(rhs);
    free(out);
    tg_geometry_destroy(g);
}
END_TEST

/* (a) Baroclinic modes (F > 0), manufactured: phi random on the interior,
 * equal to the constant c on the walls with c chosen so that the
 * trapezoidal integral of phi vanishes; rhs = (lap - F) phi on the interior
 * (tg_laplacian). The solve must return phi everywhere and c as the wall
 * value: the mass-constrained problem has a unique solution. Sources:
 * manufactured solutions (common practice); mass constraint McWilliams
 * 1977, Dyn. Atmos. Oceans 1, 427-441. */
START_TEST(helmholtz_baroclinic_manufactured)
{
    tg_config cfg;
    tg_config_defaults(&cfg);
    const double F1 = default_F1(&cfg);
    const double F[3] = {0.0, F1, 30.0 * F1};
    tg_geometry *g = make_basin(sizes[_i], TG_WALL_FREE_SLIP, 0.0, 3, F);
    const int ns = g->ns, N = ns - 1;
    double *phi = field(g), *rhs = field(g), *out = field(g);
    for (int m = 1; m < 3; m++) {
        uint64_t s = 101u + 7u * (uint64_t)m + (uint64_t)_i;
        double sum = 0.0;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                double v = next_uniform(&s) + 0.2; /* nonzero mean: c is not small */
                phi[(long)j * ns + i] = v;
                sum += v;
            }
        /* trapezoid: interior weight dx^2, total wall weight (2N - 1) dx^2 */
        const double c = -sum / (2.0 * N - 1.0);
        g->ops->fill_ring(g, phi, c);
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                long k = (long)j * ns + i;
                rhs[k] = lap5(g, phi, i, j) - F[m] * phi[k];
            }
        double wall = g->ops->solve_mode(g, m, rhs, out);
        ck_assert_msg(fabs(wall - c) <= 1e-11 * fabs(c), "mode %d: wall %.17g, expected %.17g", m,
                      wall, c);
        double err = 0.0, big = 0.0;
        for (long k = 0; k < (long)ns * ns; k++) {
            err = fmax(err, fabs(out[k] - phi[k]));
            big = fmax(big, fabs(phi[k]));
        }
        ck_assert_msg(err <= 1e-11 * big, "mode %d: max error %g of %g", m, err, big);
    }
    free(phi);
    free(rhs);
    free(out);
    tg_geometry_destroy(g);
}
END_TEST

/* (b) Baroclinic mode with a random right-hand side: phi is constant on
 * every wall node and equals the returned wall value, its trapezoidal
 * integral vanishes to round-off relative to the integral of |phi|, and
 * (lap - F) phi = rhs on the interior. Source: McWilliams 1977, Dyn.
 * Atmos. Oceans 1, 427-441 (mass constraint); residual check: common
 * practice. The same checks with F = 0 on the barotropic mode (wall 0). */
START_TEST(helmholtz_random_rhs_constraints)
{
    tg_config cfg;
    tg_config_defaults(&cfg);
    const double F[2] = {0.0, default_F1(&cfg)};
    tg_geometry *g = make_basin(sizes[_i], TG_WALL_FREE_SLIP, 0.0, 2, F);
    const int ns = g->ns;
    double *rhs = field(g), *keep = field(g), *phi = field(g), *rowbuf = field(g);
    for (int m = 0; m < 2; m++) {
        uint64_t s = 555u + (uint64_t)(10 * m + _i);
        double rbig = 0.0;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                long k = (long)j * ns + i;
                keep[k] = rhs[k] = 1e-9 * (next_uniform(&s) + 0.5);
                rbig = fmax(rbig, fabs(keep[k]));
            }
        const double wall = g->ops->solve_mode(g, m, rhs, phi);
        if (m == 0)
            ck_assert(wall == 0.0);
        else
            ck_assert_msg(wall != 0.0, "baroclinic wall value exactly 0 for a biased rhs");
        for (int j = 0; j < ns; j++)
            for (int i = 0; i < ns; i++)
                if (on_wall(g, i, j))
                    ck_assert_msg(phi[(long)j * ns + i] == wall, "mode %d: wall node (%d, %d)", m,
                                  i, j);
        double I, Iabs;
        trapezoid(g, phi, &I, &Iabs);
        if (m > 0) {
            ck_assert_msg(fabs(I) < 1e-13 * Iabs, "mode %d: integral %g of %g", m, I, Iabs);
            double Ilib = tg_integral(g, phi, 0.0, 0, rowbuf);
            double Ilibabs = tg_integral(g, phi, 0.0, 1, rowbuf);
            ck_assert(fabs(Ilib) < 1e-13 * Iabs);
            ck_assert(fabs(Ilibabs - Iabs) < 1e-13 * Iabs);
        }
        double res = 0.0;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                long k = (long)j * ns + i;
                res = fmax(res, fabs(lap5(g, phi, i, j) - F[m] * phi[k] - keep[k]));
            }
        ck_assert_msg(res <= 1e-11 * rbig, "mode %d: residual %g of %g", m, res, rbig);
    }
    free(rhs);
    free(keep);
    free(phi);
    free(rowbuf);
    tg_geometry_destroy(g);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* (c) The layered inversion through tg_model: from a random psi (walls
 * included, not constant), tg_model_set_psi forms q and inverts it. The
 * derived state must satisfy, to round-off:
 *   q_k = lap psi_k + (S psi)_k + beta (y - y0) on interior nodes, with S
 *     written out here from H, g', f0 (Pedlosky 1987, Geophysical Fluid
 *     Dynamics, section 6.16; Vallis 2017, section 5.3), y0 = L/2;
 *   psi_k = m->wall[k] on every wall node;
 *   sum_k H_k psi_k = 0 on the walls (no net barotropic transport through
 *     the basin: the barotropic mode vanishes on the walls);
 *   the trapezoidal integral of psi_i - psi_{i+1} vanishes (McWilliams
 *     1977, Dyn. Atmos. Oceans 1, 427-441), also as tg_model_mass_error. */
static tg_config layered_config(int nl, int points)
{
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.points = points;
    cfg.nlayers = nl;
    cfg.n_reduced_gravity = nl - 1;
    if (nl == 3) {
        cfg.thickness_m[0] = 500.0;
        cfg.thickness_m[1] = 1250.0;
        cfg.thickness_m[2] = 3250.0;
        cfg.reduced_gravity_m_s2[0] = 0.025;
        cfg.reduced_gravity_m_s2[1] = 0.0125;
    }
    return cfg;
}

START_TEST(layered_inversion)
{
    const int nl = 2 + _i / 2, pts = sizes[_i % 2];
    tg_config cfg = layered_config(nl, pts);
    tg_status st;
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "model: %s", st.msg);
    tg_geometry *g = m->geom;
    const int ns = g->ns, no = m->nout;
    ck_assert_int_eq(no, ns);
    const long npl = m->npl;

    double *in = malloc(sizeof(double) * (size_t)nl * no * no);
    ck_assert_ptr_nonnull(in);
    uint64_t s = 9000u + (uint64_t)_i;
    for (long k = 0; k < (long)nl * no * no; k++)
        in[k] = 1e4 * (next_uniform(&s) + 0.3 * (double)(k / ((long)no * no)));
    tg_model_set_psi(m, in);

    /* S from its definition */
    const double f0 = cfg.coriolis_f0_per_s;
    double S[TG_MAX_LAYERS][TG_MAX_LAYERS] = {{0}};
    for (int k = 0; k < nl; k++) {
        if (k > 0) {
            double c = f0 * f0 / (cfg.reduced_gravity_m_s2[k - 1] * cfg.thickness_m[k]);
            S[k][k - 1] += c;
            S[k][k] -= c;
        }
        if (k < nl - 1) {
            double c = f0 * f0 / (cfg.reduced_gravity_m_s2[k] * cfg.thickness_m[k]);
            S[k][k + 1] += c;
            S[k][k] -= c;
        }
    }
    const double y0 = 0.5 * g->length;
    for (int k = 0; k < nl; k++) {
        const double *pk = m->psi + k * npl, *qk = m->q + k * npl;
        double err = 0.0, scale = 0.0;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                long p = (long)j * ns + i;
                double lap = lap5(g, pk, i, j), str = 0.0, str_abs = 0.0;
                for (int kk = 0; kk < nl; kk++) {
                    str += S[k][kk] * m->psi[kk * npl + p];
                    str_abs += fabs(S[k][kk] * m->psi[kk * npl + p]);
                }
                double by = cfg.beta_per_m_per_s * (g->coord[j] - y0);
                err = fmax(err, fabs(qk[p] - (lap + str + by)));
                scale = fmax(scale, fabs(lap) + str_abs + fabs(by));
            }
        ck_assert_msg(err <= 1e-11 * scale, "%d layers, layer %d: PV residual %g of %g", nl, k,
                      err, scale);
        for (int j = 0; j < ns; j++)
            for (int i = 0; i < ns; i++)
                if (on_wall(g, i, j))
                    ck_assert_msg(pk[(long)j * ns + i] == m->wall[k], "layer %d wall (%d, %d)", k,
                                  i, j);
    }
    double bt = 0.0, bt_abs = 0.0;
    for (int k = 0; k < nl; k++) {
        bt += cfg.thickness_m[k] * m->wall[k];
        bt_abs += cfg.thickness_m[k] * fabs(m->wall[k]);
    }
    ck_assert_msg(bt_abs > 0.0, "all wall values zero: the check below would be empty");
    ck_assert_msg(fabs(bt) <= 1e-12 * bt_abs, "sum H_k c_k = %g of %g", bt, bt_abs);

    double err[TG_MAX_LAYERS];
    tg_model_mass_error(m, err);
    double *d = malloc(sizeof(double) * (size_t)npl);
    ck_assert_ptr_nonnull(d);
    for (int i = 0; i + 1 < nl; i++) {
        ck_assert_msg(fabs(err[i]) < 1e-12, "interface %d: mass error %g", i, err[i]);
        for (long p = 0; p < npl; p++)
            d[p] = m->psi[i * npl + p] - m->psi[(i + 1) * npl + p];
        double I, Iabs;
        trapezoid(g, d, &I, &Iabs);
        ck_assert_msg(fabs(I) < 1e-12 * Iabs, "interface %d: integral %g of %g", i, I, Iabs);
    }
    free(d);
    free(in);
    tg_model_destroy(m);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* (d) Wall vorticity from the ghost-node formula: free slip zeta = 0; no
 * slip zeta_wall = 2 (psi_1 - psi_0)/dx^2 (Thom's formula; Thom 1933, Proc.
 * R. Soc. Lond. A 141, 651-669, from memory; common practice), psi_1 the
 * first interior node along the inward normal; partial slip with
 * coefficient a gives a times the no-slip value (geom_basin.c header). */
static void wall_vorticity(tg_wall_kind kind, double a, const double *psi, double *z, int pts)
{
    tg_geometry *g = make_basin(pts, kind, a, 0, NULL);
    for (long k = 0; k < (long)pts * pts; k++)
        z[k] = NAN;
    g->ops->fill_vorticity_ring(g, z, psi);
    tg_geometry_destroy(g);
}

START_TEST(wall_vorticity_conditions)
{
    const int pts = 33, ns = pts, N = pts - 1;
    tg_config cfg;
    tg_config_defaults(&cfg);
    const double dx = cfg.size_km * 1e3 / N;
    double *psi = calloc((size_t)ns * ns, sizeof(double));
    double *zf = calloc((size_t)ns * ns, sizeof(double));
    double *zn = calloc((size_t)ns * ns, sizeof(double));
    double *zp = calloc((size_t)ns * ns, sizeof(double));
    ck_assert(psi && zf && zn && zp);
    uint64_t s = 31u;
    const double c = 250.0;
    for (int j = 0; j <= N; j++)
        for (int i = 0; i <= N; i++)
            psi[(long)j * ns + i] =
                (i == 0 || j == 0 || i == N || j == N) ? c : c + 1e3 * next_uniform(&s);
    const double a = 0.3;
    wall_vorticity(TG_WALL_FREE_SLIP, 0.7, psi, zf, pts); /* coefficient ignored */
    wall_vorticity(TG_WALL_NO_SLIP, 0.7, psi, zn, pts);   /* coefficient ignored */
    wall_vorticity(TG_WALL_PARTIAL_SLIP, a, psi, zp, pts);

    /* wall node index and its inward neighbour, for the four walls */
    for (int t = 1; t < N; t++) {
        const long wall[4] = {t, (long)N * ns + t, (long)t * ns, (long)t * ns + N};
        const long in1[4] = {ns + t, (long)(N - 1) * ns + t, (long)t * ns + 1,
                             (long)t * ns + N - 1};
        for (int w = 0; w < 4; w++) {
            const double noslip = 2.0 * (psi[in1[w]] - psi[wall[w]]) / (dx * dx);
            ck_assert_msg(zf[wall[w]] == 0.0, "free slip, wall %d node %d: %g", w, t, zf[wall[w]]);
            ck_assert_msg(fabs(zn[wall[w]] - noslip) <= 1e-14 * fabs(noslip),
                          "no slip, wall %d node %d: %g, expected %g", w, t, zn[wall[w]], noslip);
            ck_assert_msg(fabs(zp[wall[w]] - a * zn[wall[w]]) <= 1e-14 * fabs(zn[wall[w]]),
                          "partial slip, wall %d node %d: %g, expected %g", w, t, zp[wall[w]],
                          a * zn[wall[w]]);
        }
    }
    /* corners are defined (finite) */
    const long corners[4] = {0, N, (long)N * ns, (long)N * ns + N};
    for (int w = 0; w < 4; w++)
        ck_assert(isfinite(zf[corners[w]]) && isfinite(zn[corners[w]]) && isfinite(zp[corners[w]]));
    free(psi);
    free(zf);
    free(zn);
    free(zp);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* (e) Gaussian filter: a single discrete sine mode sin(pi kx x/L)
 * sin(pi ky y/L) is multiplied by exp(-K^2 w^2 / 24), K^2 = (pi/L)^2 (kx^2 +
 * ky^2). Source: Pope 2000, Turbulent Flows, section 13.2 (transfer
 * function of the Gaussian filter of width Delta, exp(-kappa^2 Delta^2/24)),
 * applied in the sine basis as geometry.h states. A sum of two modes is
 * filtered mode by mode (linearity). */
START_TEST(gaussian_filter_transfer)
{
    const int pts = sizes[_i];
    tg_geometry *g = make_basin(pts, TG_WALL_FREE_SLIP, 0.0, 0, NULL);
    const int ns = g->ns, N = ns - 1;
    const double L = g->length;
    double *f = field(g), *ex = field(g);
    const int modes[][4] = {{1, 1, 0, 0}, {3, 2, 0, 0}, {N / 2, 5, 0, 0}, {N - 1, N - 1, 0, 0},
                            {2, 7, 9, 1}};
    const double widths[] = {g->dx, 4.0 * g->dx, 0.1 * L};
    for (size_t t = 0; t < sizeof modes / sizeof modes[0]; t++)
        for (size_t wi = 0; wi < sizeof widths / sizeof widths[0]; wi++) {
            const double w = widths[wi];
            double big = 0.0;
            for (int j = 0; j <= N; j++)
                for (int i = 0; i <= N; i++) {
                    long k = (long)j * ns + i;
                    double v = 0.0, e = 0.0;
                    for (int h = 0; h < 2; h++) {
                        int kx = modes[t][2 * h], ky = modes[t][2 * h + 1];
                        if (kx == 0)
                            continue;
                        double K2 = (PI / L) * (PI / L) * ((double)kx * kx + (double)ky * ky);
                        double mode = sin(PI * kx * (double)i / N) * sin(PI * ky * (double)j / N);
                        v += mode;
                        e += mode * exp(-K2 * w * w / 24.0);
                    }
                    f[k] = v;
                    ex[k] = e;
                    big = fmax(big, fabs(v));
                }
            g->ops->filter_gaussian(g, f, w);
            double err = 0.0;
            for (long k = 0; k < (long)ns * ns; k++)
                err = fmax(err, fabs(f[k] - ex[k]));
            ck_assert_msg(err <= 1e-12 * big, "mode set %zu, width %g: error %g", t, w, err);
        }
    free(f);
    free(ex);
    tg_geometry_destroy(g);
}
END_TEST

static Suite *geometry_suite(void)
{
    Suite *s = suite_create("geometry");
    TCase *tc = tcase_create("basin");
    tcase_set_timeout(tc, 30);
    tcase_add_loop_test(tc, grid_tables, 0, 2);
    tcase_add_loop_test(tc, helmholtz_mode0_manufactured, 0, 2);
    tcase_add_loop_test(tc, helmholtz_baroclinic_manufactured, 0, 2);
    tcase_add_loop_test(tc, helmholtz_random_rhs_constraints, 0, 2);
    tcase_add_test(tc, wall_vorticity_conditions);
    tcase_add_loop_test(tc, gaussian_filter_transfer, 0, 2);
    suite_add_tcase(s, tc);
    TCase *tl = tcase_create("layered");
    tcase_set_timeout(tl, 30);
    tcase_add_loop_test(tl, layered_inversion, 0, 4); /* 2 and 3 layers at 33 and 65 points */
    suite_add_tcase(s, tl);
    return s;
}

int main(void)
{
    return tg_unit_run(geometry_suite());
}
