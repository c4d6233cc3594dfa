/* test_budget.c - unit tests of the energy and enstrophy budget
 * (src/model/budget.c, the rates of src/model/terms.c and the diagnostics of
 * src/model/model.c).
 *
 * Checks the budget.nc variable layout for 1, 2 and 3 layers, that the
 * per-step budget closes (tendency minus the sum of the terms is tiny
 * against the largest term) in a noisy wind-forced two-layer run, that the
 * advection term neither creates nor destroys energy, where its enstrophy
 * rate comes from, and that the energy formula of tg_model_energy equals a
 * direct sum of kinetic and available potential energy, and that the
 * one-pass diagnostics give the same bits as the separate functions. A Check suite with
 * its own main().
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "budget.h"
#include "fdops.h"
#include "model.h"
#include "stepper.h"

#include <check.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "unit_util.h"

/* Deterministic uniform numbers in [-1, 1) from a 64-bit linear
 * congruential generator (common practice). */
static double next_uniform(uint64_t *s)
{
    *s = *s * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(*s >> 11) * (2.0 / 9007199254740992.0) - 1.0;
}

static tg_config layered_config(int nl, int points)
{
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.points = points;
    cfg.nlayers = nl;
    cfg.n_reduced_gravity = nl - 1;
    if (nl == 1) {
        cfg.thickness_m[0] = 4000.0;
    } else if (nl == 3) {
        cfg.thickness_m[0] = 500.0;
        cfg.thickness_m[1] = 1250.0;
        cfg.thickness_m[2] = 3250.0;
        cfg.reduced_gravity_m_s2[0] = 0.025;
        cfg.reduced_gravity_m_s2[1] = 0.0125;
    }
    return cfg;
}

/* ---------------------------------------------------------------------- */
/* (a) Layout of budget.nc: the variable names and their order, the
 * per-layer kind of each, mass_error only with more than one layer, unique
 * names, and a packed record as long as the layout says. Source: the
 * budget.nc contract (README, "Budgets"; budget.h); common practice. */
START_TEST(layout_names_and_count)
{
    const int nl = _i + 1;
    /* A basin run lists every term but the periodic mean-flow conversion. */
    static const char *const terms[] = {"advection", "wind", "bottom_drag", "viscosity", "closure"};
    static const char *const all_terms[TG_NTERMS] = {"advection", "wind", "bottom_drag",
                                                     "viscosity", "mean_flow_conversion",
                                                     "closure"};
    char expect[40][48];
    int kind[40], n = 0;
#define WANT(nm, k)                                                                               \
    do {                                                                                          \
        snprintf(expect[n], sizeof expect[n], "%s", nm);                                          \
        kind[n++] = (k);                                                                          \
    } while (0)
    char buf[48];
    WANT("energy", 0);
    WANT("energy_tendency", 0);
    for (int t = 0; t < 5; t++) {
        snprintf(buf, sizeof buf, "energy_%s", terms[t]);
        WANT(buf, 0);
    }
    WANT("energy_residual", 0);
    WANT("enstrophy", 1);
    WANT("enstrophy_tendency", 1);
    for (int t = 0; t < 5; t++) {
        snprintf(buf, sizeof buf, "enstrophy_%s", terms[t]);
        WANT(buf, 1);
    }
    WANT("enstrophy_residual", 1);
    WANT("kinetic_energy", 1);
    WANT("max_cfl", 0);
    WANT("time_step", 0);
    if (nl > 1)
        WANT("mass_error", 2);
#undef WANT

    tg_budget_layout lay;
    memset(&lay, 0, sizeof lay);
    tg_budget_layout_init(&lay, nl, NULL);
    ck_assert_int_eq(lay.n, n);
    ck_assert_int_eq(lay.n, nl > 1 ? 20 : 19);
    int values = 0;
    for (int v = 0; v < lay.n; v++) {
        ck_assert_str_eq(lay.var[v].name, expect[v]);
        ck_assert_int_eq(lay.var[v].per_layer, kind[v]);
        ck_assert_ptr_nonnull(lay.var[v].units);
        ck_assert_ptr_nonnull(lay.var[v].long_name);
        ck_assert(lay.var[v].long_name[0] != '\0');
        for (int w = 0; w < v; w++)
            ck_assert_str_ne(lay.var[v].name, lay.var[w].name);
        values += kind[v] == 0 ? 1 : (kind[v] == 1 ? nl : nl - 1);
    }
    for (int t = 0; t < TG_NTERMS; t++)
        ck_assert_str_eq(tg_term_name(t), all_terms[t]);

    /* a packed record has one value per layer/interface of each variable */
    tg_diag b, a;
    tg_term_rates r;
    memset(&b, 0, sizeof b);
    memset(&a, 0, sizeof a);
    memset(&r, 0, sizeof r);
    double rec[64];
    ck_assert_int_eq(tg_budget_pack(&lay, 1.0, &b, &a, &r, rec), values);

    /* With every term active (periodic with a background flow) the layout
     * gains energy_mean_flow_conversion and enstrophy_mean_flow_conversion,
     * in term order, and a record grows by 1 + nl values. */
    int all[TG_NTERMS];
    for (int t = 0; t < TG_NTERMS; t++)
        all[t] = 1;
    tg_budget_layout lay2;
    tg_budget_layout_init(&lay2, nl, all);
    ck_assert_int_eq(lay2.n, lay.n + 2);
    ck_assert_str_eq(lay2.var[6].name, "energy_mean_flow_conversion");
    ck_assert_int_eq(tg_budget_pack(&lay2, 1.0, &b, &a, &r, rec), values + 1 + nl);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Sums over the active nodes of (a - ashift) b dx^2 and of |.|. */
static void sums(const tg_geometry *g, const double *a, double ashift, const double *b,
                 double *sum, double *abssum)
{
    *sum = *abssum = 0.0;
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++) {
            long k = (long)j * g->ns + i;
            double v = (a[k] - ashift) * b[k];
            *sum += v;
            *abssum += fabs(v);
        }
    *sum *= g->dx * g->dx;
    *abssum *= g->dx * g->dx;
}

/* (b) Budget closure over 50 steps of a noisy, wind-forced two-layer run
 * at 65 points with the default drag and viscosity: for energy and for
 * each layer's enstrophy, |(X_after - X_before)/dt - sum of the step rates|
 * is below 1e-6 of the largest rate. What remains is the time-stepping
 * error of SSP-RK3 on a quadratic quantity (the step rates are the
 * Runge-Kutta-weighted stage rates, stepper.h). The residual is computed
 * here and compared with tg_budget_relative_residual and with the
 * residual entries of tg_budget_pack. Leaving out the viscosity rate must
 * break the closure (the check can fail). Source: budget definition in
 * budget.h; Shu & Osher 1988, J. Comput. Phys. 77, 439-471, eq. 2.18
 * (stage weights 1/6, 1/6, 2/3); common practice. */
START_TEST(budget_closes)
{
    tg_config cfg = layered_config(2, 65);
    tg_model *m = tg_unit_model(&cfg);
    const int nl = m->nl;
    tg_model_set_noise(m, 2e3, 11u);
    tg_status st;
    double without_visc = INFINITY;
    for (int s = 0; s < 50; s++) {
        tg_diag b, a;
        tg_term_rates r;
        tg_diag_compute(m, &b);
        ck_assert_msg(tg_step(m, &r, &st) == TG_OK, "step %d: %s", s, st.msg);
        tg_diag_compute(m, &a);

        double big = 0.0, sum = 0.0;
        for (int t = 0; t < TG_NTERMS; t++) {
            big = fmax(big, fabs(r.energy[t]));
            sum += r.energy[t];
        }
        const double tend = (a.energy - b.energy) / m->dt;
        const double res_e = fabs(tend - sum) / big;
        ck_assert_msg(res_e < 1e-6, "step %d: energy residual %g of the largest term", s, res_e);
        without_visc = fmin(without_visc, fabs(tend - (sum - r.energy[TG_TERM_VISCOSITY])) / big);

        double res_z_all = 0.0;
        for (int k = 0; k < nl; k++) {
            double bz = 0.0, sz = 0.0;
            for (int t = 0; t < TG_NTERMS; t++) {
                bz = fmax(bz, fabs(r.enstrophy[t][k]));
                sz += r.enstrophy[t][k];
            }
            const double res_z = fabs((a.enstrophy[k] - b.enstrophy[k]) / m->dt - sz) / bz;
            ck_assert_msg(res_z < 1e-6, "step %d layer %d: enstrophy residual %g", s, k, res_z);
            res_z_all = fmax(res_z_all, res_z);
        }

        double le, lz;
        tg_budget_relative_residual(nl, m->dt, &b, &a, &r, &le, &lz);
        ck_assert_msg(fabs(le - res_e) <= 1e-6 * res_e + 1e-300, "library energy residual %g, %g",
                      le, res_e);
        ck_assert_msg(fabs(lz - res_z_all) <= 1e-6 * res_z_all + 1e-300,
                      "library enstrophy residual %g, %g", lz, res_z_all);

        double rec[64];
        tg_budget_layout lay;
        tg_budget_layout_init(&lay, nl, NULL);
        int n = tg_budget_pack(&lay, m->dt, &b, &a, &r, rec);
        ck_assert_int_eq(n, 8 + 8 * nl + nl + 2 + (nl - 1));
        ck_assert(rec[8 + 8 * nl + nl + 1] == m->dt); /* time_step, after max_cfl */
        ck_assert(rec[0] == a.energy);
        ck_assert(fabs(rec[7] - (tend - sum)) <= 1e-9 * big); /* energy_residual */
    }
    ck_assert_msg(without_visc > 1e-3, "closure insensitive to the viscosity term (%g)",
                  without_visc);
    tg_model_destroy(m);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* (c) Advection and energy: with psi_k constant on the walls the Arakawa
 * Jacobian conserves the discrete energy exactly, so the advection term's
 * energy rate is zero to round-off: below 1e-10 of the wind's rate at each
 * of 20 steps, and at a single state below 1e-13 of the natural round-off
 * scale sum_k H_k sum |psi_k - c_k||J_k| dx^2 / (H A). Source: Arakawa
 * 1966, J. Comput. Phys. 1, 119-143, section 3. */
START_TEST(advection_energy_rate_zero)
{
    tg_config cfg = layered_config(2, 33);
    tg_model *m = tg_unit_model(&cfg);
    tg_model_set_noise(m, 2e3, 12u);
    tg_status st;
    for (int s = 0; s < 20; s++) {
        tg_term_rates r;
        ck_assert_msg(tg_step(m, &r, &st) == TG_OK, "%s", st.msg);
        ck_assert(r.energy[TG_TERM_WIND] != 0.0);
        ck_assert_msg(fabs(r.energy[TG_TERM_ADVECTION]) <= 1e-10 * fabs(r.energy[TG_TERM_WIND]),
                      "step %d: advection %g, wind %g", s, r.energy[TG_TERM_ADVECTION],
                      r.energy[TG_TERM_WIND]);
    }
    tg_term_rates r;
    ck_assert(tg_model_tendency(m, 0, &r, &st) == TG_OK);
    const tg_geometry *g = m->geom;
    double *J = calloc((size_t)m->npl, sizeof(double));
    ck_assert_ptr_nonnull(J);
    double scale = 0.0;
    for (int k = 0; k < m->nl; k++) {
        double sk, ak;
        tg_jacobian(g, m->psi + k * m->npl, m->q + k * m->npl, J);
        sums(g, m->psi + k * m->npl, m->wall[k], J, &sk, &ak);
        scale += cfg.thickness_m[k] * ak / (m->Htot * g->area);
    }
    ck_assert_msg(fabs(r.energy[TG_TERM_ADVECTION]) <= 1e-13 * scale, "advection %g, scale %g",
                  r.energy[TG_TERM_ADVECTION], scale);
    free(J);
    tg_model_destroy(m);
}
END_TEST

/* (c) Advection and enstrophy. In the closed basin the Arakawa Jacobian
 * conserves sum q J(psi, q) only when q = 0 on the walls (see
 * test_arakawa.c): the interior pairs cancel, the pairs coupling an
 * interior q to a wall q do not. Hence:
 *   - one layer, beta = 0, free slip: the wall PV is zero (zeta = 0 there,
 *     no stretching, no planetary PV), and the enstrophy rate of advection
 *     is below 1e-10 of the wind's at each step;
 *   - two layers, default beta: the enstrophy rate of advection equals the
 *     wall coupling -(1/A) sum_interior q_k J(psi_k, q_k^wall) dx^2
 *     (q^wall = q with its interior set to 0) to round-off. It is NOT zero:
 *     the continuum identity int q J(psi, q) dA = 0 holds only up to this
 *     first-order wall flux (Pedlosky 1987, Geophysical Fluid Dynamics,
 *     section 6.17 for the continuum statement).
 * Source: Arakawa 1966, J. Comput. Phys. 1, 119-143, section 3. */
START_TEST(advection_enstrophy_rate_zero_with_zero_wall_pv)
{
    tg_config cfg = layered_config(1, 33);
    cfg.beta_per_m_per_s = 0.0;
    cfg.wall_condition = TG_WALL_FREE_SLIP;
    tg_model *m = tg_unit_model(&cfg);
    tg_model_set_noise(m, 2e3, 13u);
    tg_status st;
    for (int s = 0; s < 20; s++) {
        tg_term_rates r;
        ck_assert_msg(tg_step(m, &r, &st) == TG_OK, "%s", st.msg);
        const double adv = r.enstrophy[TG_TERM_ADVECTION][0], wind = r.enstrophy[TG_TERM_WIND][0];
        ck_assert(wind != 0.0);
        ck_assert_msg(fabs(adv) <= 1e-10 * fabs(wind), "step %d: advection %g, wind %g", s, adv,
                      wind);
    }
    tg_model_destroy(m);
}
END_TEST

START_TEST(advection_enstrophy_rate_is_the_wall_flux)
{
    tg_config cfg = layered_config(2, 33);
    tg_model *m = tg_unit_model(&cfg);
    tg_model_set_noise(m, 2e3, 14u);
    tg_status st;
    for (int s = 0; s < 10; s++)
        ck_assert_msg(tg_step(m, NULL, &st) == TG_OK, "%s", st.msg);
    tg_term_rates r;
    ck_assert(tg_model_tendency(m, 0, &r, &st) == TG_OK);
    const tg_geometry *g = m->geom;
    const int ns = g->ns;
    double *J = calloc((size_t)m->npl, sizeof(double)), *qw = calloc((size_t)m->npl, sizeof(double));
    ck_assert(J && qw);
    for (int k = 0; k < m->nl; k++) {
        const double *qk = m->q + k * m->npl, *pk = m->psi + k * m->npl;
        for (int j = 0; j < ns; j++)
            for (int i = 0; i < ns; i++) {
                long p = (long)j * ns + i;
                int wall = i < g->a0 || j < g->a0 || i >= g->a1 || j >= g->a1;
                qw[p] = wall ? qk[p] : 0.0;
            }
        double s_wall, a_wall, s_all, a_all;
        tg_jacobian(g, pk, qw, J);
        sums(g, qk, 0.0, J, &s_wall, &a_wall);
        tg_jacobian(g, pk, qk, J);
        sums(g, qk, 0.0, J, &s_all, &a_all);
        const double expect = -s_wall / g->area, got = r.enstrophy[TG_TERM_ADVECTION][k];
        ck_assert_msg(fabs(got - expect) <= 1e-12 * a_all / g->area,
                      "layer %d: advection enstrophy rate %g, wall flux %g", k, got, expect);
    }
    free(J);
    free(qw);
    tg_model_destroy(m);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* (d) The energy of a derived state (psi_k constant on the walls, mass
 * constraint satisfied) equals the direct sum
 *   E = (1/(H A)) [ sum_k (H_k/2) sum_edges (psi_k(a) - psi_k(b))^2
 *                   + sum_i f0^2/(2 g'_i) trapezoid int (psi_i - psi_{i+1})^2 dA ]
 * where the edge sum runs over all pairs of neighbouring nodes (forward
 * differences along x and y, interior and wall edges), each standing for
 * |grad psi|^2 dx^2 on one cell face; and each layer's kinetic energy is
 * (1/(2A)) sum_edges (delta psi_k)^2. Sources: energy of the layered QG
 * equations, Pedlosky 1987, Geophysical Fluid Dynamics, section 6.16, and
 * Vallis 2017, Atmospheric and Oceanic Fluid Dynamics, section 5.3;
 * summation by parts (common practice). */
static void check_energy(tg_model *m)
{
    const tg_geometry *g = m->geom;
    const int ns = g->ns, N = ns - 1, nl = m->nl;
    const tg_config *c = &m->cfg;
    double ke_sum = 0.0, pe = 0.0, ke[TG_MAX_LAYERS], ke_lib[TG_MAX_LAYERS];
    for (int k = 0; k < nl; k++) {
        const double *p = m->psi + k * m->npl;
        double e = 0.0;
        for (int j = 0; j <= N; j++)
            for (int i = 0; i < N; i++) {
                double dxp = p[(long)j * ns + i + 1] - p[(long)j * ns + i];
                double dyp = p[(long)(i + 1) * ns + j] - p[(long)i * ns + j];
                e += dxp * dxp + dyp * dyp;
            }
        ke[k] = 0.5 * e / g->area;
        ke_sum += 0.5 * c->thickness_m[k] * e;
    }
    for (int i = 0; i + 1 < nl; i++) {
        const double *a = m->psi + i * m->npl, *b = m->psi + (i + 1) * m->npl;
        double s = 0.0;
        for (int jj = 0; jj <= N; jj++)
            for (int ii = 0; ii <= N; ii++) {
                double w = ((ii == 0 || ii == N) ? 0.5 : 1.0) * ((jj == 0 || jj == N) ? 0.5 : 1.0);
                double d = a[(long)jj * ns + ii] - b[(long)jj * ns + ii];
                s += w * d * d;
            }
        s *= g->dx * g->dx;
        pe += c->coriolis_f0_per_s * c->coriolis_f0_per_s / (2.0 * c->reduced_gravity_m_s2[i]) * s;
    }
    const double direct = (ke_sum + pe) / (m->Htot * g->area);
    const double lib = tg_model_energy(m);
    ck_assert_msg(direct > 0.0, "zero energy: the check would be empty");
    ck_assert_msg(fabs(lib - direct) <= 1e-12 * direct, "%d layers: energy %.17g, direct %.17g",
                  nl, lib, direct);
    if (nl > 1)
        ck_assert_msg(pe > 1e-3 * ke_sum, "APE %g negligible against KE %g", pe, ke_sum);
    tg_model_kinetic_energy(m, ke_lib);
    for (int k = 0; k < nl; k++)
        ck_assert_msg(fabs(ke_lib[k] - ke[k]) <= 1e-12 * ke[k], "layer %d: KE %.17g, direct %.17g",
                      k, ke_lib[k], ke[k]);
}

START_TEST(energy_equals_direct_sum_noise)
{
    const int nl = _i + 1;
    tg_config cfg = layered_config(nl, 65);
    tg_model *m = tg_unit_model(&cfg);
    tg_model_set_noise(m, 5e3, 15u + (uint64_t)nl);
    check_energy(m);
    tg_model_destroy(m);
}
END_TEST

/* The same on the state derived from a random, unsmoothed psi (wall values
 * far from zero after the inversion), and after some steps of a forced run. */
START_TEST(energy_equals_direct_sum_random)
{
    const int nl = _i + 2;
    tg_config cfg = layered_config(nl, 33);
    tg_model *m = tg_unit_model(&cfg);
    const long n = (long)nl * m->nout * m->nout;
    double *in = malloc(sizeof(double) * (size_t)n);
    ck_assert_ptr_nonnull(in);
    uint64_t s = 77u + (uint64_t)nl;
    for (long k = 0; k < n; k++)
        in[k] = 1e4 * (next_uniform(&s) + 0.5 * (double)(k / ((long)m->nout * m->nout)));
    tg_model_set_psi(m, in);
    check_energy(m);
    tg_status st;
    for (int t = 0; t < 5; t++)
        ck_assert_msg(tg_step(m, NULL, &st) == TG_OK, "%s", st.msg);
    check_energy(m);
    free(in);
    tg_model_destroy(m);
}
END_TEST

/* tg_diag_compute's one pass gives the same bits as the separate
 * diagnostics it replaces in a run (tg_model_energy, tg_model_enstrophy,
 * tg_model_kinetic_energy, tg_model_mass_error, tg_model_max_cfl), for 1-3
 * layers, basin and periodic, on a stepped random state; and
 * tg_diag_nonfinite finds a NaN or Inf planted in q, and nothing in a finite
 * state. Source: common practice (a faster path checked bitwise against
 * the plain one it replaces). */
START_TEST(fused_diagnostics_match_separate)
{
    const int nl = _i % 3 + 1, periodic = _i / 3;
    tg_config cfg = layered_config(nl, periodic ? 32 : 33);
    if (periodic)
        cfg.geometry = TG_GEOM_PERIODIC;
    tg_model *m = tg_unit_model(&cfg);
    tg_model_set_noise(m, 5e3, 21u + (uint64_t)_i);
    tg_status st;
    for (int t = 0; t < 3; t++)
        ck_assert_msg(tg_step(m, NULL, &st) == TG_OK, "%s", st.msg);

    tg_diag d;
    memset(&d, 0, sizeof d);
    tg_diag_compute(m, &d);
    double e = tg_model_energy(m), z[TG_MAX_LAYERS], ke[TG_MAX_LAYERS],
           me[TG_MAX_LAYERS] = {0.0}, cx, cy;
    int cl;
    tg_model_enstrophy(m, z);
    tg_model_kinetic_energy(m, ke);
    tg_model_mass_error(m, me);
    double cfl = tg_model_max_cfl(m, &cl, &cx, &cy);
    ck_assert_msg(e > 0.0 && cfl > 0.0, "empty state: the check would be empty");
    ck_assert_msg(memcmp(&e, &d.energy, sizeof e) == 0, "energy %.17g against %.17g", d.energy,
                  e);
    for (int k = 0; k < nl; k++) {
        ck_assert_msg(memcmp(&z[k], &d.enstrophy[k], sizeof z[k]) == 0,
                      "layer %d: enstrophy %.17g against %.17g", k, d.enstrophy[k], z[k]);
        ck_assert_msg(memcmp(&ke[k], &d.kinetic[k], sizeof ke[k]) == 0,
                      "layer %d: kinetic energy %.17g against %.17g", k, d.kinetic[k], ke[k]);
    }
    for (int i = 0; i + 1 < nl; i++)
        ck_assert_msg(memcmp(&me[i], &d.mass_error[i], sizeof me[i]) == 0,
                      "interface %d: mass error %.17g against %.17g", i, d.mass_error[i], me[i]);
    ck_assert_msg(memcmp(&cfl, &d.max_cfl, sizeof cfl) == 0 && cl == d.cfl_layer &&
                      cx == d.cfl_x && cy == d.cfl_y,
                  "CFL %.17g layer %d at (%g, %g) against %.17g layer %d at (%g, %g)", d.max_cfl,
                  d.cfl_layer, d.cfl_x, d.cfl_y, cfl, cl, cx, cy);

    int layer = -7;
    ck_assert_int_eq(tg_diag_nonfinite(m, &d, &layer), -1);
    ck_assert_int_eq(layer, -7);
    const tg_geometry *g = m->geom;
    const int kbad = nl - 1;
    const long node = (long)(g->a0 + 3) * g->ns + g->a1 - 2;
    m->q[kbad * m->npl + node] = (_i % 2) ? INFINITY : NAN;
    tg_diag_compute(m, &d);
    ck_assert_int_eq(tg_diag_nonfinite(m, &d, &layer), node);
    ck_assert_int_eq(layer, kbad);

    /* A NaN (or Inf) in psi: the CFL number is infinite, at the node
     * tg_max_cfl stops at. */
    m->psi[kbad * m->npl + node + 2 * g->ns] = (_i % 2) ? NAN : INFINITY;
    tg_diag_compute(m, &d);
    cfl = tg_model_max_cfl(m, &cl, &cx, &cy);
    ck_assert_msg(isinf(d.max_cfl) && isinf(cfl) && cl == d.cfl_layer && cx == d.cfl_x &&
                      cy == d.cfl_y,
                  "non-finite psi: CFL %g layer %d at (%g, %g) against %g layer %d at (%g, %g)",
                  d.max_cfl, d.cfl_layer, d.cfl_x, d.cfl_y, cfl, cl, cx, cy);
    tg_model_destroy(m);
}
END_TEST

static Suite *budget_suite(void)
{
    Suite *s = suite_create("budget");
    TCase *tl = tcase_create("layout");
    tcase_add_loop_test(tl, layout_names_and_count, 0, 3);
    suite_add_tcase(s, tl);
    TCase *tc = tcase_create("closure");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, budget_closes);
    tcase_add_test(tc, advection_energy_rate_zero);
    tcase_add_test(tc, advection_enstrophy_rate_zero_with_zero_wall_pv);
    tcase_add_test(tc, advection_enstrophy_rate_is_the_wall_flux);
    suite_add_tcase(s, tc);
    TCase *te = tcase_create("energy");
    tcase_set_timeout(te, 30);
    tcase_add_loop_test(te, energy_equals_direct_sum_noise, 0, 3);
    tcase_add_loop_test(te, energy_equals_direct_sum_random, 0, 2);
    tcase_add_loop_test(te, fused_diagnostics_match_separate, 0, 6);
    suite_add_tcase(s, te);
    return s;
}

int main(void)
{
    return tg_unit_run(budget_suite());
}
