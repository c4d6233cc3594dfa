/* test_closure_stochastic.c - unit tests of the closures "stochastic_additive"
 * and "stochastic_scaling" (closures/stochastic_*.c, closures/ar1_noise.c).
 *
 * Checks: bitwise-identical runs on 1 and 2 OpenMP threads; the stationary
 * variance, lag-one autocorrelation and spatial correlation of the AR(1)
 * field against sigma^2, exp(-dt/tau) and exp(-r^2/(2 ell^2)) within
 * sampling error; independent streams for ensemble members and the same
 * stream for the same member; a checkpoint round trip at the library level
 * (state_save/state_load) that continues bitwise like the uninterrupted run;
 * the additive tendency (equal to xi, zero domain mean, top layer only); the
 * multiplicative tendency (clip(xi) times the target's tendency) and clear
 * errors for a missing target. A Check suite with its own main().
 *
 * The saved state of both schemes (closures/ar1_noise.h) is a 4-value
 * header followed by the active nodes of each field, row by row.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
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

#define HEADER 4

/* ---------------------------------------------------------------------- */
/* Helpers                                                                  */

static tg_model *make_model_member(const char *const *sets, int member)
{
    tg_config cfg;
    tg_status st;
    tg_config_defaults(&cfg);
    for (int i = 0; sets[i]; i++)
        ck_assert_msg(tg_config_set(&cfg, sets[i], &st) == TG_OK, "%s: %s", sets[i], st.msg);
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "config: %s", st.msg);
    cfg.member = member;
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "model: %s", st.msg);
    return m;
}

static tg_model *make_model(const char *const *sets)
{
    return make_model_member(sets, 0);
}

static tg_closure_input input_of(const tg_model *m, long step)
{
    return (tg_closure_input){m->psi, m->q, m->zeta, m->wall, step, 0};
}

static void eval(tg_model *m)
{
    tg_status st;
    tg_closure_input in = input_of(m, m->step);
    ck_assert_msg(tg_closure_host_eval(m->closures, &in, &st) == TG_OK, "eval: %s", st.msg);
}

/* Component c's saved state (malloc'ed), its length in *n. */
static double *saved(const tg_model *m, int c, size_t *n)
{
    *n = tg_closure_host_state_size(m->closures, c);
    ck_assert_msg(*n > HEADER, "component %d saves no state", c);
    double *b = malloc(sizeof(double) * *n);
    ck_assert_ptr_nonnull(b);
    tg_closure_host_state_save(m->closures, c, b);
    return b;
}

static void run_steps(tg_model *m, int n)
{
    tg_status st;
    for (int s = 0; s < n; s++)
        ck_assert_msg(tg_step(m, NULL, &st) == TG_OK, "step %ld: %s", m->step, st.msg);
}

static const char *const ALL_BASIN[] = {
    "grid.points=65",
    "time.step_s=3600",
    "closure.use=viscosity, stochastic_additive, stochastic_scaling",
    "stochastic_scaling.target=viscosity",
    "stochastic_additive.noise_amplitude_per_s2=2e-11",
    NULL};

static const char *const ALL_PERIODIC[] = {
    "grid.geometry=periodic",
    "grid.points=64",
    "grid.size_km=1000",
    "wind.profile=none",
    "background.zonal_velocity_m_s=0.05, 0",
    "time.step_s=3600",
    "closure.use=viscosity, stochastic_additive, stochastic_scaling",
    "stochastic_scaling.target=viscosity",
    "stochastic_additive.noise_amplitude_per_s2=2e-11",
    "stochastic_additive.correlation_length_km=40",
    NULL};

/* ---------------------------------------------------------------------- */
/* (a) 1 and 2 threads: bitwise the same PV and noise fields after 30 steps
 * with both schemes on, in the basin and in the periodic domain (the
 * closure rules of src/model/closure.h: counter-based random numbers, no
 * thread-dependent sums; common practice for reproducibility). */
static void threads_case(const char *const *sets)
{
    double *q[2], *s1[2], *s2[2];
    size_t n1 = 0, n2 = 0;
    long nq = 0;
    const int saved_threads = omp_get_max_threads();
    for (int r = 0; r < 2; r++) {
        omp_set_num_threads(r + 1);
        tg_model *m = make_model(sets);
        tg_model_set_noise(m, 2e4, 5);
        run_steps(m, 30);
        nq = m->nl * m->npl;
        q[r] = malloc(sizeof(double) * nq);
        ck_assert_ptr_nonnull(q[r]);
        memcpy(q[r], m->q, sizeof(double) * nq);
        s1[r] = saved(m, 1, &n1);
        s2[r] = saved(m, 2, &n2);
        tg_model_destroy(m);
    }
    omp_set_num_threads(saved_threads);
    ck_assert_msg(memcmp(q[0], q[1], sizeof(double) * nq) == 0, "PV differs for 1 and 2 threads");
    ck_assert_msg(memcmp(s1[0], s1[1], sizeof(double) * n1) == 0,
                  "additive noise differs for 1 and 2 threads");
    ck_assert_msg(memcmp(s2[0], s2[1], sizeof(double) * n2) == 0,
                  "scaling noise differs for 1 and 2 threads");
    for (int r = 0; r < 2; r++) {
        free(q[r]);
        free(s1[r]);
        free(s2[r]);
    }
}

START_TEST(threads_bitwise_basin)
{
    threads_case(ALL_BASIN);
}
END_TEST

START_TEST(threads_bitwise_periodic)
{
    threads_case(ALL_PERIODIC);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* (b) Statistics of the AR(1) field xi^{n+1} = phi xi^n + sqrt(1-phi^2)
 * sigma eta^{n+1} in the periodic domain (64 x 64, dx = 15.625 km), with
 * ell = 31.25 km = 2 dx, tau = 0.1 day and dt = 1 h, so phi = exp(-dt/tau)
 * = 0.6592. The field is advanced N = 2000 times without stepping the model.
 * Samples: the nodes of an 8 x 8 lattice with spacing 8 dx = 4 ell
 * (correlation exp(-8) = 3e-4, independent for this purpose) in each of the
 * two layers (independent fields): M = 128 series of N + 1 values.
 *
 * Variance: E[xi^2] = sigma^2 exactly (the normalisation is exact and the
 * draws are stationary from step 0). The standard error of the pooled
 * mean of xi^2 is sigma^2 sqrt(2 (1 + phi^2) / ((1 - phi^2) N M)) for an
 * AR(1) series (the variance of a sample variance of a Gaussian AR(1)
 * process: Bartlett 1946, J. R. Stat. Soc. Suppl. 8, 27-41; from memory);
 * tolerance 4 standard errors (0.018 relative here).
 * Lag-one autocorrelation: the pooled estimate sum xi_t xi_{t+1} / sum xi_t^2
 * has standard error sqrt((1 - phi^2) / (N M)) (Bartlett's formula for
 * AR(1); Box, Jenkins & Reinsel, Time Series Analysis, chapter 2; from
 * memory); tolerance 4 standard errors (0.0059 here).
 * Spatial correlation at a distance of r = 2 dx = ell along x and along y,
 * pooled over every node of both layers at 21 times 100 steps apart: the
 * correlation function of the filtered noise is exp(-r^2 / (2 ell^2)) =
 * exp(-1/2) (the Gaussian transfer exp(-K^2 w^2/24) with w^2 = 6 ell^2:
 * Pope 2000, Turbulent Flows, section 13.2), lowered by about 1/Neff = 0.006
 * by the removal of the domain mean (Neff = L^2/(2 pi ell^2) = 163
 * independent areas per field); the sampling error is about (1 - rho^2) /
 * sqrt(21 * 2 * 163) = 0.008 (common practice); tolerance 0.03, about 4
 * standard errors. */
START_TEST(ar1_statistics)
{
    const double sigma = 3e-12, tau_days = 0.1, dt = 3600.0;
    const char *sets[] = {"grid.geometry=periodic",
                          "grid.points=64",
                          "grid.size_km=1000",
                          "wind.profile=none",
                          "time.step_s=3600",
                          "closure.use=stochastic_additive",
                          "stochastic_additive.noise_amplitude_per_s2=3e-12",
                          "stochastic_additive.decorrelation_time_days=0.1",
                          "stochastic_additive.correlation_length_km=31.25",
                          NULL};
    tg_model *m = make_model(sets);
    const int n = m->geom->a1 - m->geom->a0, nl = m->nl;
    ck_assert_int_eq(n, 64);
    const double phi = exp(-dt / (tau_days * 86400.0));
    const int N = 2000, LAT = 8, SP = 8, M = LAT * LAT * nl;
    size_t len;
    double *b = saved(m, 0, &len);
    ck_assert_uint_eq(len, (size_t)HEADER + (size_t)nl * n * n);
    double *prev = malloc(sizeof(double) * M);
    ck_assert_ptr_nonnull(prev);
    double s2 = 0.0, s2lag = 0.0, s11 = 0.0;
    long cnt = 0;
    double cx = 0.0, cy = 0.0, c0 = 0.0;
    for (int t = 0; t <= N; t++) {
        if (t > 0) {
            tg_status st;
            tg_closure_input in = input_of(m, t);
            ck_assert_msg(tg_closure_host_advance(m->closures, &in, &st) == TG_OK, "advance: %s",
                          st.msg);
            tg_closure_host_state_save(m->closures, 0, b);
        }
        int s = 0;
        for (int k = 0; k < nl; k++)
            for (int a = 0; a < LAT; a++)
                for (int c = 0; c < LAT; c++, s++) {
                    const double x = b[HEADER + ((long)k * n + a * SP) * n + c * SP] / sigma;
                    s2 += x * x;
                    cnt++;
                    if (t > 0) {
                        s11 += prev[s] * x;
                        s2lag += prev[s] * prev[s];
                    }
                    prev[s] = x;
                }
        if (t % 100 == 0)
            for (int k = 0; k < nl; k++)
                for (int j = 0; j < n; j++)
                    for (int i = 0; i < n; i++) {
                        const double *f = b + HEADER + (long)k * n * n;
                        const double x = f[j * n + i];
                        c0 += x * x;
                        cx += x * f[j * n + (i + 2) % n];
                        cy += x * f[((j + 2) % n) * n + i];
                    }
    }
    const double var = s2 / cnt, r1 = s11 / s2lag;
    const double se_var = sqrt(2.0 * (1.0 + phi * phi) / ((1.0 - phi * phi) * N * M));
    const double se_r1 = sqrt((1.0 - phi * phi) / ((double)N * M));
    ck_assert_msg(fabs(var - 1.0) < 4.0 * se_var, "variance %g sigma^2, expected 1 +- %g", var,
                  4.0 * se_var);
    ck_assert_msg(fabs(r1 - phi) < 4.0 * se_r1, "lag-one autocorrelation %g, expected %g +- %g",
                  r1, phi, 4.0 * se_r1);
    const double rho = exp(-0.5);
    ck_assert_msg(fabs(cx / c0 - rho) < 0.03, "correlation at r = ell along x %g, expected %g",
                  cx / c0, rho);
    ck_assert_msg(fabs(cy / c0 - rho) < 0.03, "correlation at r = ell along y %g, expected %g",
                  cy / c0, rho);
    free(prev);
    free(b);
    tg_model_destroy(m);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* (c) Ensemble members: the same member gives bitwise the same fields;
 * members 0 and 1 give different, uncorrelated fields, and the two schemes
 * draw from different streams. Basin of 65 points (dx = 60 km), ell =
 * 120 km: a field has about A / (2 pi ell^2) = 158 independent areas, so a
 * sample correlation between independent fields has a standard error of
 * about 1/sqrt(158) = 0.08 per layer; tau = 0.01 day makes the 11 fields
 * of steps 0..10 nearly independent (phi = 0.016), so the mean correlation
 * has a standard error of about 0.024 (0.017 over two layers). Tolerance
 * 0.1, about 4 standard errors (common practice). */
static double correlation(const double *a, const double *b, size_t n)
{
    double ab = 0.0, aa = 0.0, bb = 0.0;
    for (size_t i = HEADER; i < n; i++) {
        ab += a[i] * b[i];
        aa += a[i] * a[i];
        bb += b[i] * b[i];
    }
    return ab / sqrt(aa * bb);
}

START_TEST(members)
{
    const char *sets[] = {"grid.points=65",
                          "time.step_s=3600",
                          "closure.use=viscosity, stochastic_additive, stochastic_scaling",
                          "stochastic_scaling.target=viscosity",
                          "stochastic_additive.decorrelation_time_days=0.01",
                          "stochastic_scaling.decorrelation_time_days=0.01",
                          "stochastic_additive.correlation_length_km=120",
                          "stochastic_scaling.correlation_length_km=120",
                          NULL};
    tg_model *m[3] = {make_model_member(sets, 0), make_model_member(sets, 0),
                      make_model_member(sets, 1)};
    double r01 = 0.0, rsc = 0.0;
    const int T = 10;
    for (int t = 0; t <= T; t++) {
        if (t > 0)
            for (int i = 0; i < 3; i++) {
                tg_status st;
                tg_closure_input in = input_of(m[i], t);
                ck_assert_msg(tg_closure_host_advance(m[i]->closures, &in, &st) == TG_OK, "%s",
                              st.msg);
            }
        size_t n, n2;
        double *a0 = saved(m[0], 1, &n), *a1 = saved(m[1], 1, &n), *a2 = saved(m[2], 1, &n);
        double *c0 = saved(m[0], 2, &n2);
        ck_assert_msg(memcmp(a0, a1, sizeof(double) * n) == 0,
                      "member 0 twice gives different fields at step %d", t);
        ck_assert_msg(memcmp(a0, a2, sizeof(double) * n) != 0, "members 0 and 1 are equal");
        r01 += correlation(a0, a2, n) / (T + 1);
        /* the scaling field (one) against the additive field of layer 1 */
        rsc += correlation(a0, c0, n2) / (T + 1);
        free(a0);
        free(a1);
        free(a2);
        free(c0);
    }
    ck_assert_msg(fabs(r01) < 0.1, "members 0 and 1 correlate: %g", r01);
    ck_assert_msg(fabs(rsc) < 0.1, "the two schemes' fields correlate: %g", rsc);
    for (int i = 0; i < 3; i++)
        tg_model_destroy(m[i]);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* (d) Checkpoint round trip at the library level: run 12 steps, save PV
 * (output layout) and the closures' states, continue 12 steps; a fresh model
 * given the saved PV, step count and states and run 12 steps must end
 * bitwise equal (PV and noise). Without the saved states the continuation
 * must differ (the test can fail). Restart reproducibility: common practice. */
static tg_model *resumed(const char *const *sets, const double *q_out, long step,
                         double *const *states, const size_t *lens, int nc)
{
    tg_model *m = make_model(sets);
    m->step = step;
    tg_model_set_q(m, q_out);
    tg_status st;
    for (int c = 0; c < nc; c++)
        if (states && lens[c])
            ck_assert_msg(tg_closure_host_state_load(m->closures, c, states[c], lens[c], &st) ==
                              TG_OK,
                          "load %d: %s", c, st.msg);
    return m;
}

START_TEST(checkpoint_round_trip)
{
    const char *const *sets = ALL_BASIN;
    tg_model *a = make_model(sets);
    tg_model_set_noise(a, 2e4, 9);
    run_steps(a, 12);
    const int nc = tg_closure_host_count(a->closures);
    ck_assert_int_eq(nc, 3);
    const long step = a->step, no = a->nout;
    double *q_out = malloc(sizeof(double) * a->nl * no * no);
    ck_assert_ptr_nonnull(q_out);
    tg_model_pack(a, a->q, q_out);
    double *states[3] = {NULL, NULL, NULL};
    size_t lens[3] = {0, 0, 0};
    for (int c = 0; c < nc; c++) {
        lens[c] = tg_closure_host_state_size(a->closures, c);
        if (lens[c]) {
            states[c] = malloc(sizeof(double) * lens[c]);
            ck_assert_ptr_nonnull(states[c]);
            tg_closure_host_state_save(a->closures, c, states[c]);
        }
    }
    ck_assert_msg(lens[0] == 0 && lens[1] > 0 && lens[2] > 0, "state sizes %zu %zu %zu",
                  lens[0], lens[1], lens[2]);
    run_steps(a, 12);

    tg_model *b = resumed(sets, q_out, step, states, lens, nc);
    run_steps(b, 12);
    const size_t nq = sizeof(double) * a->nl * a->npl;
    ck_assert_int_eq(b->step, a->step);
    ck_assert_msg(memcmp(a->q, b->q, nq) == 0, "resumed PV differs from the uninterrupted run");
    for (int c = 1; c < nc; c++) {
        size_t la, lb;
        double *sa = saved(a, c, &la), *sb = saved(b, c, &lb);
        ck_assert_msg(la == lb && memcmp(sa, sb, sizeof(double) * la) == 0,
                      "resumed noise of component %d differs", c);
        free(sa);
        free(sb);
    }

    /* Without the states: a fresh field is drawn for the step (warning)
     * and the run differs. */
    tg_model *f = resumed(sets, q_out, step, NULL, lens, nc);
    run_steps(f, 12);
    ck_assert_msg(memcmp(a->q, f->q, nq) != 0, "resuming without the noise state gave the same "
                                               "PV: the test would not detect a missing restore");

    /* A state of the wrong size is refused. */
    tg_status st;
    ck_assert_int_ne(tg_closure_host_state_load(f->closures, 1, states[1], lens[1] - 1, &st),
                     TG_OK);

    tg_model_destroy(a);
    tg_model_destroy(b);
    tg_model_destroy(f);
    for (int c = 0; c < nc; c++)
        free(states[c]);
    free(q_out);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* (f) Additive: the tendency is xi in every layer (Buizza, Miller & Palmer
 * 1999, Q. J. R. Meteorol. Soc. 125, 2887-2908: a stochastic tendency),
 * the same at every Runge-Kutta stage of a step, with zero domain sum per
 * layer (the mean is removed: common practice for circulation); with
 * top_layer_only the lower layer gets nothing. */
static void additive_case(const char *top)
{
    const char *sets[] = {"grid.points=65", "closure.use=stochastic_additive", top, NULL};
    tg_model *m = make_model(sets);
    tg_model_set_noise(m, 2e4, 4);
    eval(m);
    const double *t = tg_closure_host_tend(m->closures, 0);
    size_t len;
    double *b = saved(m, 0, &len);
    const tg_geometry *g = m->geom;
    const int n = g->a1 - g->a0, nf = (int)((len - HEADER) / ((size_t)n * n));
    const int top_only = strstr(top, "true") != NULL;
    ck_assert_int_eq(nf, top_only ? 1 : m->nl);
    for (int k = 0; k < m->nl; k++) {
        double sum = 0.0, abs = 0.0;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                const double v = t[k * m->npl + (long)j * g->ns + i];
                const double x =
                    k < nf ? b[HEADER + ((long)k * n + (j - g->a0)) * n + (i - g->a0)] : 0.0;
                ck_assert_msg(v == x, "layer %d node (%d, %d): tendency %g, xi %g", k + 1, i, j,
                              v, x);
                sum += v;
                abs += fabs(v);
            }
        if (k < nf) {
            ck_assert_msg(abs > 0.0, "layer %d: no noise", k + 1);
            ck_assert_msg(fabs(sum) <= 1e-12 * abs, "layer %d: domain sum %g of %g", k + 1, sum,
                          abs);
        } else
            ck_assert_msg(abs == 0.0, "layer %d forced with top_layer_only", k + 1);
    }
    /* Another stage of the same step, another state: the same tendency. */
    double *t0 = malloc(sizeof(double) * m->nl * m->npl);
    ck_assert_ptr_nonnull(t0);
    memcpy(t0, t, sizeof(double) * m->nl * m->npl);
    tg_model_set_noise(m, 3e4, 8);
    tg_status st;
    tg_closure_input in = {m->psi, m->q, m->zeta, m->wall, m->step, 2};
    ck_assert(tg_closure_host_eval(m->closures, &in, &st) == TG_OK);
    ck_assert_msg(memcmp(t0, tg_closure_host_tend(m->closures, 0),
                         sizeof(double) * m->nl * m->npl) == 0,
                  "the noise changed between stages of one step");
    free(t0);
    free(b);
    tg_model_destroy(m);
}

START_TEST(additive_tendency)
{
    additive_case("stochastic_additive.top_layer_only=false");
    additive_case("stochastic_additive.top_layer_only=true");
}
END_TEST

/* ---------------------------------------------------------------------- */
/* (e) Multiplicative: the component's tendency is clip(xi, -1, 1) times
 * the target's tendency in every layer, so the sum is (1 + xi) T
 * (Buizza, Miller & Palmer 1999, Q. J. R. Meteorol. Soc. 125, 2887-2908,
 * stochastically perturbed tendencies). Amplitude 0.8 so that clipping
 * occurs; the test asserts that it did. */
START_TEST(scaling_tendency)
{
    const char *sets[] = {"grid.points=65", "closure.use=viscosity, stochastic_scaling",
                          "stochastic_scaling.target=viscosity",
                          "stochastic_scaling.noise_amplitude=0.8", NULL};
    tg_model *m = make_model(sets);
    tg_model_set_noise(m, 2e4, 4);
    eval(m);
    const double *T = tg_closure_host_tend(m->closures, 0);
    const double *t = tg_closure_host_tend(m->closures, 1);
    size_t len;
    double *b = saved(m, 1, &len);
    const tg_geometry *g = m->geom;
    const int n = g->a1 - g->a0;
    ck_assert_uint_eq(len, (size_t)HEADER + (size_t)n * n);
    long clipped = 0;
    double tmax = 0.0;
    for (int k = 0; k < m->nl; k++)
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                const long p = k * m->npl + (long)j * g->ns + i;
                const double x = b[HEADER + (long)(j - g->a0) * n + (i - g->a0)];
                const double xc = fmin(1.0, fmax(-1.0, x));
                clipped += xc != x;
                ck_assert_msg(t[p] == xc * T[p], "layer %d node (%d, %d): %g, expected %g * %g",
                              k + 1, i, j, t[p], xc, T[p]);
                tmax = fmax(tmax, fabs(t[p]));
            }
    ck_assert_msg(clipped > 0, "no value was clipped at amplitude 0.8");
    ck_assert_msg(tmax > 0.0, "zero tendency");
    free(b);
    tg_model_destroy(m);
}
END_TEST

/* A target that is not listed before the scheme: the first evaluation
 * fails with a message that names the target and the rule; a missing
 * target key fails in tg_config_check. */
static void expect_eval_error(const char *const *sets, const char *needle)
{
    tg_model *m = make_model(sets);
    tg_status st;
    tg_status_clear(&st);
    tg_closure_input in = input_of(m, 0);
    ck_assert_int_ne(tg_closure_host_eval(m->closures, &in, &st), TG_OK);
    ck_assert_msg(strstr(st.msg, needle) != NULL, "message '%s' lacks '%s'", st.msg, needle);
    tg_model_destroy(m);
}

START_TEST(scaling_missing_target)
{
    const char *after[] = {"grid.points=33", "closure.use=stochastic_scaling, viscosity",
                           "stochastic_scaling.target=viscosity", NULL};
    expect_eval_error(after,
                      "target 'viscosity' is not listed before stochastic_scaling in [closure] use");
    const char *absent[] = {"grid.points=33", "closure.use=viscosity, stochastic_scaling",
                            "stochastic_scaling.target=smagorinsky", NULL};
    expect_eval_error(absent,
                      "target 'smagorinsky' is not listed before stochastic_scaling in [closure] "
                      "use (listed before it: viscosity)");

    tg_config cfg;
    tg_status st;
    tg_config_defaults(&cfg);
    ck_assert(tg_config_set(&cfg, "closure.use=viscosity, stochastic_scaling", &st) == TG_OK);
    ck_assert_int_ne(tg_config_check(&cfg, NULL, &st), TG_OK);
    ck_assert_msg(strstr(st.msg, "target") != NULL, "message '%s' does not name the key", st.msg);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("closure_stochastic");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, threads_bitwise_basin);
    tcase_add_test(tc, threads_bitwise_periodic);
    tcase_add_test(tc, ar1_statistics);
    tcase_add_test(tc, members);
    tcase_add_test(tc, checkpoint_round_trip);
    tcase_add_test(tc, additive_tendency);
    tcase_add_test(tc, scaling_tendency);
    tcase_add_test(tc, scaling_missing_target);
    suite_add_tcase(s, tc);
    return tg_unit_run(s);
}
