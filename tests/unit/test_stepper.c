/* test_stepper.c - unit tests of the SSP-RK3 time step (src/model/stepper.c).
 *
 * Checks the step against the exact Runge-Kutta update of a linear
 * problem (one layer with bottom drag and wind only), third-order
 * convergence on a beta-plane Rossby-wave problem, the step counter and
 * clock, and bitwise-identical results for 1 and 2 OpenMP threads on a
 * noisy, wind-forced, viscous two-layer run. A Check suite with its own
 * main().
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "model.h"
#include "stepper.h"

#include <check.h>
#include <math.h>
#include <omp.h>
#include <stdlib.h>
#include <string.h>

#include "unit_util.h"

static const double PI = 3.14159265358979323846;

/* One layer, nothing but beta (and what a test switches on). */
static tg_config one_layer_config(int points, double dt)
{
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.points = points;
    cfg.nlayers = 1;
    cfg.thickness_m[0] = 4000.0;
    cfg.n_reduced_gravity = 0;
    cfg.wind_profile = TG_WIND_NONE;
    cfg.stress_amplitude_pa = 0.0;
    cfg.bottom_drag_per_s = 0.0;
    cfg.viscosity_m2_per_s = 0.0;
    cfg.hyperviscosity_m4_per_s = 0.0;
    cfg.step_s = dt;
    return cfg;
}

static void step_n(tg_model *m, int n, tg_term_rates *rates)
{
    tg_status st;
    for (int s = 0; s < n; s++)
        ck_assert_msg(tg_step(m, rates, &st) == TG_OK, "step %d: %s", s, st.msg);
}

/* ---------------------------------------------------------------------- */
/* One layer with bottom drag r and a constant forcing F only (beta = 0):
 * on the interior q = zeta, and when psi and F lie in one eigenspace of
 * the discrete Laplacian (here the sine modes (1, 2) and (2, 1), which
 * share an eigenvalue) zeta = lambda psi stays in it and the Arakawa
 * advection J(psi, lambda psi) vanishes, so each node obeys the linear ODE
 * dz/dt = -r z + F. One SSP-RK3 step of y' = mu y + F gives
 *   y1 = R(z) y0 + dt (1 + z/2 + z^2/6) F,  R(z) = 1 + z + z^2/2 + z^3/6,
 * z = mu dt. Source: Shu & Osher 1988, J. Comput. Phys. 77, 439-471,
 * eq. 2.18 (the scheme); its polynomial on linear problems: common
 * practice. The step is large (r dt = 0.5) so that every coefficient of
 * the polynomial matters. The forcing replaces the model's wind field
 * (m->wind_forcing, a documented field of tg_model). */
START_TEST(linear_problem_exact_update)
{
    tg_config cfg = one_layer_config(33, 5000.0);
    cfg.beta_per_m_per_s = 0.0;
    cfg.bottom_drag_per_s = 0.5 / cfg.step_s;
    cfg.wind_profile = TG_WIND_DOUBLE_GYRE;
    cfg.stress_amplitude_pa = 0.1;
    tg_model *m = tg_unit_model(&cfg);
    const tg_geometry *g = m->geom;
    const int ns = g->ns, N = ns - 1, no = m->nout;
    const long npl = m->npl;

    double *psi = malloc(sizeof(double) * (size_t)no * no);
    double *z0 = malloc(sizeof(double) * (size_t)npl);
    ck_assert(psi && z0);
    for (int j = 0; j <= N; j++)
        for (int i = 0; i <= N; i++) {
            double m12 = sin(PI * i / N) * sin(2.0 * PI * j / N);
            double m21 = sin(2.0 * PI * i / N) * sin(PI * j / N);
            psi[(long)j * no + i] = 1e4 * (m12 + 0.7 * m21);
        }
    tg_model_set_psi(m, psi);
    double zbig = 0.0;
    for (long p = 0; p < npl; p++) {
        z0[p] = m->q[p] - m->beta_y[p];
        zbig = fmax(zbig, fabs(z0[p]));
    }
    for (int j = 0; j <= N; j++)
        for (int i = 0; i <= N; i++) {
            double m12 = sin(PI * i / N) * sin(2.0 * PI * j / N);
            double m21 = sin(2.0 * PI * i / N) * sin(PI * j / N);
            m->wind_forcing[(long)j * ns + i] = cfg.bottom_drag_per_s * zbig * (0.5 * m12 - m21);
        }
    const double z = -cfg.bottom_drag_per_s * m->dt;
    const double R = 1.0 + z + z * z / 2.0 + z * z * z / 6.0;
    const double G = m->dt * (1.0 + z / 2.0 + z * z / 6.0);
    step_n(m, 1, NULL);
    ck_assert_int_eq(m->step, 1);
    ck_assert(m->time_s == m->dt);
    double err = 0.0, big = 0.0;
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++) {
            long p = (long)j * ns + i;
            double ex = R * z0[p] + G * m->wind_forcing[p];
            err = fmax(err, fabs(m->q[p] - m->beta_y[p] - ex));
            big = fmax(big, fabs(ex));
        }
    ck_assert_msg(err <= 1e-12 * big, "error %g of %g", err, big);
    /* the check can fail: forward Euler would be off by O(z^2) */
    ck_assert(fabs(R - (1.0 + z)) * 1e-3 > 1e-12);
    free(psi);
    free(z0);
    tg_model_destroy(m);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Third order: a one-layer Rossby-wave problem (beta only, no wind, drag
 * or viscosity) integrated over T = 2 days with dt = T/4, T/8, T/16 is
 * compared with a reference at dt = T/64; the errors fall by ~8 per
 * halving of dt. Source: Shu & Osher 1988, J. Comput. Phys. 77, 439-471
 * (third-order SSP Runge-Kutta, eq. 2.18); convergence test: common
 * practice. The initial state is the gravest basin sine mode plus a weaker
 * second mode (linear Rossby waves: Pedlosky 1987, Geophysical Fluid
 * Dynamics, section 3.23). */
static void rossby_run(double T, int nsteps, double *qout, long n)
{
    tg_config cfg = one_layer_config(33, T / nsteps);
    tg_model *m = tg_unit_model(&cfg);
    const int no = m->nout;
    ck_assert_int_eq((long)no * no, n);
    double *psi = malloc(sizeof(double) * (size_t)n);
    ck_assert_ptr_nonnull(psi);
    const double *xy = tg_model_out_coord(m);
    const double L = m->geom->length;
    for (int j = 0; j < no; j++)
        for (int i = 0; i < no; i++) {
            double X = xy[i] / L, Y = xy[j] / L;
            psi[(long)j * no + i] = 1e4 * sin(PI * X) * sin(PI * Y) +
                                    3e3 * sin(2.0 * PI * X) * sin(PI * Y);
        }
    tg_model_set_psi(m, psi);
    step_n(m, nsteps, NULL);
    ck_assert_int_eq(m->step, nsteps);
    ck_assert_msg(fabs(m->time_s - T) <= 1e-9 * T, "clock %g, expected %g", m->time_s, T);
    tg_model_pack(m, m->q, qout);
    free(psi);
    tg_model_destroy(m);
}

START_TEST(third_order_convergence)
{
    const double T = 2.0 * 86400.0;
    const long n = 33L * 33L;
    double *q1 = malloc(sizeof(double) * n), *q2 = malloc(sizeof(double) * n);
    double *q4 = malloc(sizeof(double) * n), *qr = malloc(sizeof(double) * n);
    double *q0 = malloc(sizeof(double) * n);
    ck_assert(q1 && q2 && q4 && qr && q0);
    rossby_run(T, 4, q1, n);
    rossby_run(T, 8, q2, n);
    rossby_run(T, 16, q4, n);
    rossby_run(T, 64, qr, n);
    rossby_run(T / 64.0, 1, q0, n); /* for the size of the change over T */
    double e1 = 0.0, e2 = 0.0, e4 = 0.0, change = 0.0;
    for (long k = 0; k < n; k++) {
        e1 = fmax(e1, fabs(q1[k] - qr[k]));
        e2 = fmax(e2, fabs(q2[k] - qr[k]));
        e4 = fmax(e4, fabs(q4[k] - qr[k]));
        change = fmax(change, fabs(qr[k] - q0[k]));
    }
    const double r1 = e1 / e2, r2 = e2 / e4;
    ck_assert_msg(r1 > 7.0 && r1 < 9.0, "error ratio %g (errors %g, %g)", r1, e1, e2);
    ck_assert_msg(r2 > 7.0 && r2 < 9.0, "error ratio %g (errors %g, %g)", r2, e2, e4);
    /* the errors are well above round-off and small against the evolution */
    ck_assert_msg(e4 > 1e-9 * change && e1 < 1e-1 * change, "errors %g, %g; change %g", e1, e4,
                  change);
    free(q1);
    free(q2);
    free(q4);
    free(qr);
    free(q0);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* 1 versus 2 OpenMP threads: 20 steps of a noisy, wind-forced two-layer
 * run with bottom drag, viscosity and hyperviscosity give bitwise identical
 * q, psi and step rates. Source: the contract in fdops.h (each output value
 * and each sum is formed the same way whatever the thread count); common
 * practice for reproducible parallel codes. */
static void threaded_run(int threads, double *q, double *psi, tg_term_rates *rates,
                         double *q_initial)
{
    omp_set_dynamic(0);
    omp_set_num_threads(threads);
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.points = 65;
    cfg.hyperviscosity_m4_per_s = 1e9;
    tg_model *m = tg_unit_model(&cfg);
    tg_model_set_noise(m, 5e3, 2024u);
    const size_t bytes = sizeof(double) * (size_t)m->nl * m->npl;
    if (q_initial)
        memcpy(q_initial, m->q, bytes);
    step_n(m, 20, rates);
    memcpy(q, m->q, bytes);
    memcpy(psi, m->psi, bytes);
    tg_model_destroy(m);
}

START_TEST(threads_bitwise_identical)
{
    const size_t n = 2 * 65 * 65;
    double *q1 = malloc(sizeof(double) * n), *p1 = malloc(sizeof(double) * n);
    double *q2 = malloc(sizeof(double) * n), *p2 = malloc(sizeof(double) * n);
    double *qi = malloc(sizeof(double) * n);
    ck_assert(q1 && p1 && q2 && p2 && qi);
    tg_term_rates r1, r2;
    memset(&r1, 0, sizeof r1);
    memset(&r2, 0, sizeof r2);
    threaded_run(1, q1, p1, &r1, qi);
    threaded_run(2, q2, p2, &r2, NULL);
    ck_assert_msg(memcmp(q1, q2, sizeof(double) * n) == 0, "q differs between 1 and 2 threads");
    ck_assert_msg(memcmp(p1, p2, sizeof(double) * n) == 0, "psi differs between 1 and 2 threads");
    ck_assert_msg(memcmp(&r1, &r2, sizeof r1) == 0, "rates differ between 1 and 2 threads");
    ck_assert_msg(memcmp(q1, qi, sizeof(double) * n) != 0, "the run did not change q");
    free(q1);
    free(p1);
    free(q2);
    free(p2);
    free(qi);
}
END_TEST

static Suite *stepper_suite(void)
{
    Suite *s = suite_create("stepper");
    TCase *tc = tcase_create("ssprk3");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, linear_problem_exact_update);
    tcase_add_test(tc, third_order_convergence);
    tcase_add_test(tc, threads_bitwise_identical);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(stepper_suite());
}
