/* test_closure_viscous.c - unit tests of the flow-dependent viscous closures
 * smagorinsky, smagorinsky_biharmonic, leith and leith_qg
 * (closures/smagorinsky.c, smagorinsky_biharmonic.c, leith.c, leith_qg.c,
 * helpers in closures/viscous.h).
 *
 * Checks: the Smagorinsky viscosity of analytic strain and rotation
 * fields, the Leith viscosity of uniform vorticity gradients, the flux form
 * (zero domain integral in the periodic domain), that every scheme removes
 * energy on random and on eddying flows in the basin and in the periodic
 * domain, that the harmonic ones remove the enstrophy of the field they
 * diffuse, and bitwise equality for 1 and 2 OpenMP threads. A Check suite
 * with its own main().
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "viscous.h"
#include "closure_host.h"
#include "fdops.h"
#include "model.h"
#include "stepper.h"
#include "twingyre.h"
#include "unit_util.h"

#include <check.h>
#include <math.h>
#include <omp.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static const double PI = 3.14159265358979323846;

static const char *const schemes[] = {"smagorinsky", "smagorinsky_biharmonic", "leith",
                                      "leith_qg"};
enum { NSCHEMES = 4 };

/* ---------------------------------------------------------------------- */
/* Set-up helpers                                                           */
/* ---------------------------------------------------------------------- */

/* A model with closure `name` (NULL: none); periodic or basin (65 points,
 * 60 km); extra "section.key=value" settings in `more` (NULL-terminated). */
static tg_model *make_model(const char *name, int periodic, const char *const *more)
{
    tg_config cfg;
    tg_status st;
    tg_config_defaults(&cfg);
    char use[128];
    snprintf(use, sizeof use, "closure.use=%s", name ? name : "none");
    const char *base_basin[] = {"grid.points=65", use, NULL};
    const char *base_per[] = {"grid.geometry=periodic", "grid.points=64", "wind.profile=none", use,
                              NULL};
    for (const char *const *a = periodic ? base_per : base_basin; *a; a++)
        ck_assert_msg(tg_config_set(&cfg, *a, &st) == TG_OK, "%s: %s", *a, st.msg);
    for (const char *const *a = more; a && *a; a++)
        ck_assert_msg(tg_config_set(&cfg, *a, &st) == TG_OK, "%s: %s", *a, st.msg);
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "config: %s", st.msg);
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "model with closure %s: %s", name ? name : "none", st.msg);
    return m;
}

/* Tools over a geometry, built on the same fdops and ring fills as the
 * framework's (closure_host.c), for calling the viscous.h helpers. */
static void w_lap(void *c, const double *f, double *o) { tg_laplacian(c, f, o); }
static void w_jac(void *c, const double *a, const double *b, double *o) { tg_jacobian(c, a, b, o); }
static void w_ddx(void *c, const double *f, double *o) { tg_ddx(c, f, o); }
static void w_ddy(void *c, const double *f, double *o) { tg_ddy(c, f, o); }
static void w_dng(void *c, const double *nu, const double *f, double *o)
{
    tg_div_nu_grad(c, nu, f, o);
}
static void w_fill(void *c, double *f, tg_ring_kind how)
{
    const tg_geometry *g = c;
    if (how == TG_RING_EXTEND)
        g->ops->fill_ring_extend(g, f);
    else
        g->ops->fill_ring(g, f, 0.0);
}

static tg_closure_tools tools_for(tg_geometry *g)
{
    return (tg_closure_tools){.ctx = g, .laplacian = w_lap, .jacobian = w_jac, .ddx = w_ddx,
                              .ddy = w_ddy, .div_nu_grad = w_dng, .fill_ring = w_fill};
}

static double *alloc0(size_t n)
{
    double *a = calloc(n, sizeof(double));
    ck_assert_ptr_nonnull(a);
    return a;
}

/* Evaluates the model's closures at its current state (stage 0). */
static const double *eval_closure(tg_model *m)
{
    tg_status st;
    tg_closure_input in = {m->psi, m->q, m->zeta, m->wall, m->step, 0};
    ck_assert_msg(tg_closure_host_eval(m->closures, &in, &st) == TG_OK, "eval: %s", st.msg);
    return tg_closure_host_tend(m->closures, 0);
}

/* The framework's energy and enstrophy rates of the closure at the
 * current state (terms.c: energy -(1/(H A)) sum_k H_k sum (psi_k - c_k) T_k,
 * enstrophy (1/A) sum q_k T_k). */
static tg_term_rates rates_now(tg_model *m)
{
    tg_term_rates r;
    tg_status st;
    ck_assert_msg(tg_model_tendency(m, 0, &r, &st) == TG_OK, "tendency: %s", st.msg);
    return r;
}

/* ---------------------------------------------------------------------- */
/* (a) Smagorinsky viscosity of analytic fields                             */
/* ---------------------------------------------------------------------- */

/* psi = a x y + b (x^2 - y^2)/2 + w (x^2 + y^2)/2 on every stored node of
 * one layer (a: strain along the diagonals, b: strain along the axes, w:
 * solid-body rotation with vorticity 2w). */
static void quadratic_psi(const tg_geometry *g, double a, double b, double w, double *psi)
{
    const double x0 = 0.5 * g->length; /* centred, so values stay moderate */
    for (int j = 0; j < g->ns; j++)
        for (int i = 0; i < g->ns; i++) {
            const double x = g->coord[i] - x0, y = g->coord[j] - x0;
            psi[(long)j * g->ns + i] =
                a * x * y + 0.5 * b * (x * x - y * y) + 0.5 * w * (x * x + y * y);
        }
}

/* Largest relative error of nu against `expect` on the active nodes that
 * are not next to the ring (the analytic psi is not constant on walls,
 * which the helper assumes for its ring of psi_y). */
static double max_rel_err_inner(const tg_geometry *g, const double *nu, double expect)
{
    double e = 0.0;
    for (int j = g->a0 + 1; j < g->a1 - 1; j++)
        for (int i = g->a0 + 1; i < g->a1 - 1; i++)
            e = fmax(e, fabs(nu[(long)j * g->ns + i] - expect) / fabs(expect));
    return e;
}

START_TEST(test_smagorinsky_strain)
{
    /* Smagorinsky 1963, Mon. Wea. Rev. 91, 99-164: nu = (C dx)^2 |D|,
     * |D|^2 = (u_x - v_y)^2 + (v_x + u_y)^2. For psi = S0 x y: u = -S0 x,
     * v = S0 y, u_x - v_y = -2 S0, v_x + u_y = 0, |D| = 2 S0; for
     * psi = S0 (x^2 - y^2)/2: u = S0 y, v = S0 x, v_x + u_y = 2 S0, |D| = 2 S0;
     * solid-body rotation adds no deformation. The compact second
     * differences are exact for quadratics. */
    tg_model *m = make_model(NULL, 0, NULL);
    tg_geometry *g = m->geom;
    tg_closure_tools t = tools_for(g);
    tg_visc_grid gr = {g->ns, g->a0, g->a1, g->dx, &t};
    const size_t n = (size_t)g->ns * g->ns;
    double *psi = alloc0(n), *work = alloc0(n), *nu = alloc0(n);
    const double S0 = 2.0e-6, C = 0.17;
    const double expect = (C * g->dx) * (C * g->dx) * 2.0 * S0;

    quadratic_psi(g, S0, 0.0, 0.0, psi);
    tg_visc_smagorinsky_nu(&gr, C, psi, work, nu);
    double e1 = max_rel_err_inner(g, nu, expect);
    ck_assert_msg(e1 < 1e-10, "psi = S0 x y: nu off (C dx)^2 2 S0 by %.3g relative", e1);

    quadratic_psi(g, 0.0, S0, 0.0, psi);
    tg_visc_smagorinsky_nu(&gr, C, psi, work, nu);
    double e2 = max_rel_err_inner(g, nu, expect);
    ck_assert_msg(e2 < 1e-10, "psi = S0 (x^2-y^2)/2: nu off by %.3g relative", e2);

    /* Both strains and a rotation: |D| = 2 S0 sqrt(1 + 0.75^2) = 2.5 S0. */
    quadratic_psi(g, S0, 0.75 * S0, 3.0 * S0, psi);
    tg_visc_smagorinsky_nu(&gr, C, psi, work, nu);
    double e3 = max_rel_err_inner(g, nu, 1.25 * expect);
    ck_assert_msg(e3 < 1e-10, "strain + rotation: nu off (C dx)^2 2.5 S0 by %.3g relative", e3);

    /* Pure rotation: no deformation, no viscosity. */
    quadratic_psi(g, 0.0, 0.0, S0, psi);
    tg_visc_smagorinsky_nu(&gr, C, psi, work, nu);
    double mx = 0.0;
    for (int j = g->a0 + 1; j < g->a1 - 1; j++)
        for (int i = g->a0 + 1; i < g->a1 - 1; i++)
            mx = fmax(mx, fabs(nu[(long)j * g->ns + i]));
    ck_assert_msg(mx < 1e-9 * expect, "solid-body rotation: nu = %.3g, expected 0", mx);

    /* The ring is extended (TG_RING_EXTEND, closure.h): the west wall takes
     * its interior neighbour's value. */
    quadratic_psi(g, S0, 0.0, 0.0, psi);
    tg_visc_smagorinsky_nu(&gr, C, psi, work, nu);
    const int jm = g->ns / 2;
    ck_assert_double_eq(nu[(long)jm * g->ns + g->a0 - 1], nu[(long)jm * g->ns + g->a0]);
    free(psi);
    free(work);
    free(nu);
    tg_model_destroy(m);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* (b) Leith viscosity of uniform gradients                                 */
/* ---------------------------------------------------------------------- */

START_TEST(test_leith_uniform_gradient)
{
    /* Leith 1996, Physica D 98, 481-491: nu = (C dx)^3 |grad zeta|. For
     * zeta = G y (psi = G y^3 / 6) the gradient is (0, G) and centred
     * differences are exact for linear fields, on every active node. */
    for (int periodic = 0; periodic <= 1; periodic++) {
        tg_model *m = make_model(NULL, periodic, NULL);
        tg_geometry *g = m->geom;
        tg_closure_tools t = tools_for(g);
        tg_visc_grid gr = {g->ns, g->a0, g->a1, g->dx, &t};
        const size_t n = (size_t)g->ns * g->ns;
        double *z = alloc0(n), *gx = alloc0(n), *gy = alloc0(n), *nu = alloc0(n);
        const double G = -3.0e-11, H = 4.0e-11, C = 1.0 / PI, beta = 1.75e-11;
        const double c3 = pow(C * g->dx, 3.0);
        /* a linear field on every stored node; a periodic halo would wrap,
         * so the ring keeps the linear values here (no fill). */
        for (int j = 0; j < g->ns; j++)
            for (int i = 0; i < g->ns; i++)
                z[(long)j * g->ns + i] = G * (double)j * g->dx;
        tg_visc_leith_nu(&gr, C, z, 0.0, gx, gy, nu);
        double e = 0.0;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++)
                e = fmax(e, fabs(nu[(long)j * g->ns + i] - c3 * fabs(G)) / (c3 * fabs(G)));
        ck_assert_msg(e < 1e-10, "%s: zeta = G y: nu off (C dx)^3 |G| by %.3g relative",
                      periodic ? "periodic" : "basin", e);

        /* zeta = G x + H y: |grad zeta| = sqrt(G^2 + H^2); with the extra
         * planetary gradient beta (leith_qg): sqrt(G^2 + (H + beta)^2). */
        for (int j = 0; j < g->ns; j++)
            for (int i = 0; i < g->ns; i++)
                z[(long)j * g->ns + i] = (G * (double)i + H * (double)j) * g->dx;
        tg_visc_leith_nu(&gr, C, z, beta, gx, gy, nu);
        const double want = c3 * sqrt(G * G + (H + beta) * (H + beta));
        e = 0.0;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++)
                e = fmax(e, fabs(nu[(long)j * g->ns + i] - want) / want);
        ck_assert_msg(e < 1e-10, "%s: zeta = G x + H y with beta: nu off by %.3g relative",
                      periodic ? "periodic" : "basin", e);
        free(z);
        free(gx);
        free(gy);
        free(nu);
        tg_model_destroy(m);
    }
}
END_TEST

/* ---------------------------------------------------------------------- */
/* (c) Flux form: zero domain integral in the periodic domain              */
/* ---------------------------------------------------------------------- */

START_TEST(test_flux_form_periodic)
{
    /* Common practice: a tendency in flux (divergence) form, div(F) or
     * lap(w), telescopes to zero over a periodic domain, so the scheme
     * neither creates nor destroys the domain integral of PV. */
    for (int s = 0; s < NSCHEMES; s++) {
        tg_model *m = make_model(schemes[s], 1, NULL);
        tg_model_set_noise(m, 2.0e4, 7);
        const double *T = eval_closure(m);
        const tg_geometry *g = m->geom;
        for (int k = 0; k < m->nl; k++) {
            double sum = 0.0, sabs = 0.0;
            for (int j = g->a0; j < g->a1; j++)
                for (int i = g->a0; i < g->a1; i++) {
                    const double v = T[k * m->npl + (long)j * g->ns + i];
                    sum += v;
                    sabs += fabs(v);
                }
            ck_assert_msg(sabs > 0.0, "%s layer %d: tendency is zero", schemes[s], k);
            ck_assert_msg(fabs(sum) < 1e-12 * sabs,
                          "%s layer %d: sum T = %.3g, sum |T| = %.3g (not flux form)",
                          schemes[s], k, sum, sabs);
        }
        tg_model_destroy(m);
    }
}
END_TEST

/* ---------------------------------------------------------------------- */
/* (d) Energy removed on random and eddying flows                           */
/* ---------------------------------------------------------------------- */

/* Random state (tg_model_set_noise). */
static void check_energy_random(int periodic, const char *const *more, const char *what)
{
    for (int s = 0; s < NSCHEMES; s++) {
        for (uint64_t seed = 1; seed <= 3; seed++) {
            tg_model *m = make_model(schemes[s], periodic, more);
            tg_model_set_noise(m, 2.0e4, seed);
            tg_term_rates r = rates_now(m);
            ck_assert_msg(r.comp_energy[0] < 0.0,
                          "%s, %s, random seed %d: closure energy rate %.3g W/kg is not negative",
                          schemes[s], what, (int)seed, r.comp_energy[0]);
            tg_model_destroy(m);
        }
    }
}

START_TEST(test_energy_random_basin)
{
    /* The schemes are declared dissipative (closure.h, dissipative = 1).
     * Variable-coefficient harmonic and biharmonic operators on vorticity
     * are not energy-negative by construction (see the scheme headers);
     * that they are on random flows is common practice to check. */
    check_energy_random(0, NULL, "basin free slip");
    const char *noslip[] = {"grid.wall_condition=no_slip", NULL};
    check_energy_random(0, noslip, "basin no slip");
}
END_TEST

START_TEST(test_energy_random_periodic)
{
    /* As above (common practice), doubly periodic domain. */
    check_energy_random(1, NULL, "periodic");
}
END_TEST

/* An eddying state: 800 one-hour steps (33 days, a few eddy turnover
 * times at 0.3 m/s and 60 km) of the model without closures from a strong
 * noisy start; in the basin with the double-gyre wind, in the periodic
 * domain with an imposed vertical shear that is baroclinically unstable
 * (Phillips 1954, Tellus 6, 273-286). Every 200th state on the way is handed
 * to a model of each scheme (tg_model_set_q) and its closure energy rate
 * checked there. */
static void check_energy_eddying(int periodic)
{
    const char *per[] = {"time.step_s=3600", "background.zonal_velocity_m_s=0.1, 0", NULL};
    const char *bas[] = {"time.step_s=3600", NULL};
    const char *const *more = periodic ? per : bas;
    tg_model *base = make_model(NULL, periodic, more);
    tg_model *ms[NSCHEMES];
    for (int s = 0; s < NSCHEMES; s++)
        ms[s] = make_model(schemes[s], periodic, more);
    const size_t nout = (size_t)base->nl * base->nout * base->nout;
    double *qbuf = alloc0(nout);
    tg_model_set_noise(base, 5.0e4, 11);
    tg_status st;
    int checked = 0;
    for (int n = 1; n <= 800; n++) {
        ck_assert_msg(tg_step(base, NULL, &st) == TG_OK, "spin-up step %d: %s", n, st.msg);
        if (n % 200 != 0)
            continue;
        tg_model_pack(base, base->q, qbuf);
        for (int s = 0; s < NSCHEMES; s++) {
            tg_model_set_q(ms[s], qbuf);
            tg_term_rates r = rates_now(ms[s]);
            ck_assert_msg(r.comp_energy[0] < 0.0,
                          "%s, %s, step %d: closure energy rate %.3g W/kg is not negative",
                          schemes[s], periodic ? "periodic" : "basin", n, r.comp_energy[0]);
            checked++;
        }
    }
    ck_assert_int_eq(checked, 4 * NSCHEMES);
    free(qbuf);
    for (int s = 0; s < NSCHEMES; s++)
        tg_model_destroy(ms[s]);
    tg_model_destroy(base);
}

START_TEST(test_energy_eddying_basin)
{
    /* Common practice (as test_energy_random_basin), on a flow evolved by
     * the model itself. */
    check_energy_eddying(0);
}
END_TEST

START_TEST(test_energy_eddying_periodic)
{
    /* Common practice, as above. */
    check_energy_eddying(1);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* (e) Enstrophy of the diffused field removed (harmonic schemes)           */
/* ---------------------------------------------------------------------- */

/* sum over the active nodes of f_k T_k for one layer, where f is the field
 * the scheme diffuses: zeta (smagorinsky, leith) or q' = zeta + S psi
 * (leith_qg). */
static double enstrophy_rate(const tg_model *m, const double *T, int k, int use_qd)
{
    const tg_geometry *g = m->geom;
    double s = 0.0;
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++) {
            const long p = (long)j * g->ns + i;
            double f = m->zeta[k * m->npl + p];
            if (use_qd)
                for (int kk = 0; kk < m->nl; kk++)
                    f += m->modes.S[k][kk] * m->psi[kk * m->npl + p];
            s += f * T[k * m->npl + p];
        }
    return s;
}

START_TEST(test_enstrophy_harmonic)
{
    /* Flux form div(nu grad f) with nu >= 0: sum f div(nu grad f) =
     * -sum_faces nu (delta f)^2 <= 0 when f vanishes on the ring (periodic;
     * zeta with free-slip walls), by summation by parts (common practice;
     * Leith 1996, Physica D 98, 481-491 designs nu to drain enstrophy).
     * In the periodic domain q' is the model's PV, so the framework's
     * per-layer enstrophy rate of the closure must be negative too. */
    const char *harmonic[] = {"smagorinsky", "leith", "leith_qg"};
    for (int h = 0; h < 3; h++)
        for (int periodic = 0; periodic <= 1; periodic++) {
            tg_model *m = make_model(harmonic[h], periodic, NULL);
            tg_model_set_noise(m, 2.0e4, 5);
            const double *T = eval_closure(m);
            for (int k = 0; k < m->nl; k++) {
                double z = enstrophy_rate(m, T, k, h == 2);
                ck_assert_msg(z < 0.0, "%s, %s, layer %d: sum f T = %.3g is not negative",
                              harmonic[h], periodic ? "periodic" : "basin", k, z);
            }
            if (periodic && h == 2) {
                tg_term_rates r = rates_now(m);
                for (int k = 0; k < m->nl; k++)
                    ck_assert_msg(r.comp_enstrophy[0][k] < 0.0,
                                  "leith_qg periodic layer %d: enstrophy rate %.3g", k,
                                  r.comp_enstrophy[0][k]);
            }
            tg_model_destroy(m);
        }
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Thread-count independence                                                */
/* ---------------------------------------------------------------------- */

START_TEST(test_threads_bitwise)
{
    /* closure.h: schemes are deterministic for any thread count. */
    const int nmax = omp_get_max_threads();
    for (int s = 0; s < NSCHEMES; s++)
        for (int periodic = 0; periodic <= 1; periodic++) {
            tg_model *m = make_model(schemes[s], periodic, NULL);
            tg_model_set_noise(m, 2.0e4, 3);
            const size_t n = (size_t)m->nl * m->npl;
            double *a = alloc0(n);
            omp_set_num_threads(1);
            memcpy(a, eval_closure(m), n * sizeof(double));
            omp_set_num_threads(2);
            const double *b = eval_closure(m);
            ck_assert_msg(memcmp(a, b, n * sizeof(double)) == 0,
                          "%s %s: tendency differs between 1 and 2 threads", schemes[s],
                          periodic ? "periodic" : "basin");
            omp_set_num_threads(nmax);
            free(a);
            tg_model_destroy(m);
        }
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("closure_viscous");
    TCase *tc = tcase_create("core");
    tcase_set_timeout(tc, 600); /* a safety net for loaded machines, not a timing */
    tcase_add_test(tc, test_smagorinsky_strain);
    tcase_add_test(tc, test_leith_uniform_gradient);
    tcase_add_test(tc, test_flux_form_periodic);
    tcase_add_test(tc, test_energy_random_basin);
    tcase_add_test(tc, test_energy_random_periodic);
    tcase_add_test(tc, test_energy_eddying_basin);
    tcase_add_test(tc, test_energy_eddying_periodic);
    tcase_add_test(tc, test_enstrophy_harmonic);
    tcase_add_test(tc, test_threads_bitwise);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(suite());
}
