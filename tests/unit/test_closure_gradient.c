/* test_closure_gradient.c - unit tests of the closure "gradient_model"
 * (closures/gradient_model.c).
 *
 * Checks, on analytic streamfunctions in the doubly periodic domain, that
 * the tendency is -div((Delta^2/12) grad u . grad q) to second order in the
 * grid spacing, that it scales with coefficient * factor^2, that it tends to
 * minus the divergence of the exact sub-filter flux of a Gaussian filter as
 * Delta -> 0, that its domain integral vanishes (periodic and basin), and
 * that a run with it is bitwise the same on 1 and 2 OpenMP threads.
 * A Check suite with its own main().
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

static const double PI = 3.14159265358979323846;

/* ---------------------------------------------------------------------- */
/* Models                                                                   */

static tg_model *make_model(const char *const *sets)
{
    tg_config cfg;
    tg_status st;
    tg_config_defaults(&cfg);
    for (int i = 0; sets[i]; i++)
        ck_assert_msg(tg_config_set(&cfg, sets[i], &st) == TG_OK, "%s: %s", sets[i], st.msg);
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "config: %s", st.msg);
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "model: %s", st.msg);
    return m;
}

static tg_model *periodic_model(int points, double factor, double coef)
{
    char g_points[128], g_width[128], g_coef[128];
    snprintf(g_points, sizeof g_points, "grid.points=%d", points);
    snprintf(g_width, sizeof g_width, "gradient_model.filter_width_factor=%.17g", factor);
    snprintf(g_coef, sizeof g_coef, "gradient_model.gradient_model_coefficient=%.17g", coef);
    const char *sets[] = {"grid.geometry=periodic", g_points, "grid.size_km=1000",
                          "wind.profile=none", "closure.use=gradient_model", g_width, g_coef,
                          NULL};
    return make_model(sets);
}

/* Evaluates the closures at the model's state; component 0's tendency. */
static const double *eval(tg_model *m)
{
    tg_status st;
    tg_closure_input in = {m->psi, m->q, m->zeta, m->wall, m->step, 0};
    ck_assert_msg(tg_closure_host_eval(m->closures, &in, &st) == TG_OK, "eval: %s", st.msg);
    return tg_closure_host_tend(m->closures, 0);
}

/* ---------------------------------------------------------------------- */
/* An analytic streamfunction: psi_k = c_k f, f = sum_n a_n cos(K_n . x + ph_n),
 * wavevectors on the periodic lattice 2 pi / L. */

#define NMODE 3
static const int MODE_KX[NMODE] = {1, 3, 2}, MODE_KY[NMODE] = {2, -1, 1};
static const double MODE_A[NMODE] = {2.0e4, 1.2e4, 0.7e4}, MODE_PH[NMODE] = {0.3, 1.1, -0.7};
static const double LAYER_C[2] = {1.0, 0.4};

/* d^(nx+ny) f / dx^nx dy^ny at (x, y); Lside the domain side. */
static double fd(int nx, int ny, double x, double y, double Lside)
{
    double s = 0.0;
    for (int n = 0; n < NMODE; n++) {
        const double kx = 2.0 * PI * MODE_KX[n] / Lside, ky = 2.0 * PI * MODE_KY[n] / Lside;
        const double th = kx * x + ky * y + MODE_PH[n];
        s += MODE_A[n] * pow(kx, nx) * pow(ky, ny) * cos(th + 0.5 * PI * (nx + ny));
    }
    return s;
}

/* Sets psi_k = c_k f on the output grid. */
static void set_analytic(tg_model *m)
{
    ck_assert_int_le(m->nl, 2);
    const int no = m->nout;
    const double *xc = tg_model_out_coord(m), L = m->geom->length;
    double *psi = calloc((size_t)m->nl * no * no, sizeof(double));
    ck_assert_ptr_nonnull(psi);
    for (int k = 0; k < m->nl; k++)
        for (int j = 0; j < no; j++)
            for (int i = 0; i < no; i++)
                psi[((long)k * no + j) * no + i] = LAYER_C[k] * fd(0, 0, xc[i], xc[j], L);
    tg_model_set_psi(m, psi);
    free(psi);
}

/* (S c)_k */
static double s_of(const tg_model *m, int k)
{
    double s = 0.0;
    for (int j = 0; j < m->nl; j++)
        s += m->modes.S[k][j] * LAYER_C[j];
    return s;
}

/* -div(c grad u . grad q) of the analytic field at (x, y), layer k, expanded:
 * -c (u_xx q_x + u_x q_xx + u_xy q_y + u_y q_xy + v_xy q_x + v_x q_xy + v_yy q_y + v_y q_yy). */
static double exact_gradient_tendency(const tg_model *m, int k, double c, double x, double y)
{
    const double L = m->geom->length, ck = LAYER_C[k], sk = s_of(m, k);
#define U(a, b) (-ck * fd((a), (b) + 1, x, y, L))
#define V(a, b) (ck * fd((a) + 1, (b), x, y, L))
#define Q(a, b) (ck * (fd((a) + 2, (b), x, y, L) + fd((a), (b) + 2, x, y, L)) + sk * fd((a), (b), x, y, L))
    const double t = U(2, 0) * Q(1, 0) + U(1, 0) * Q(2, 0) + U(1, 1) * Q(0, 1) + U(0, 1) * Q(1, 1) +
                     V(1, 1) * Q(1, 0) + V(1, 0) * Q(1, 1) + V(0, 2) * Q(0, 1) + V(0, 1) * Q(0, 2);
#undef U
#undef V
#undef Q
    return -c * t;
}

/* Max over active nodes and layers of |tend - exact| / max |exact|. */
static double rel_error_gradient(tg_model *m, const double *tend, double c)
{
    const tg_geometry *g = m->geom;
    double emax = 0.0, amax = 0.0;
    for (int k = 0; k < m->nl; k++)
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                const double ex = exact_gradient_tendency(m, k, c, g->coord[i], g->coord[j]);
                const double nu = tend[k * m->npl + (long)j * g->ns + i];
                emax = fmax(emax, fabs(nu - ex));
                amax = fmax(amax, fabs(ex));
            }
    return emax / amax;
}

/* ---------------------------------------------------------------------- */
/* The discrete tendency against the analytic -div((Delta^2/12) grad u .
 * grad q) (Clark, Ferziger & Reynolds 1979, J. Fluid Mech. 91, 1-16, the
 * gradient model of the sub-filter flux; Leonard 1974, Adv. Geophys. 18A,
 * 237-248): the maximum relative error must fall like dx^2 (ratio near 4
 * per halving of dx; we require > 3: order of accuracy of second-order
 * differences, common practice) and be below 1.5% on 256 points (the
 * highest wavenumber has K dx = 0.08 there). */
START_TEST(matches_formula_second_order)
{
    const int P[4] = {32, 64, 128, 256};
    double err[4];
    for (int r = 0; r < 4; r++) {
        tg_model *m = periodic_model(P[r], 1.0, 1.0);
        set_analytic(m);
        const double dx = m->geom->dx;
        err[r] = rel_error_gradient(m, eval(m), dx * dx / 12.0);
        tg_model_destroy(m);
    }
    for (int r = 1; r < 4; r++)
        ck_assert_msg(err[r - 1] / err[r] > 3.0,
                      "error ratio %g (errors %g, %g at %d, %d points): not second order",
                      err[r - 1] / err[r], err[r - 1], err[r], P[r - 1], P[r]);
    ck_assert_msg(err[3] < 0.015, "relative error %g on %d points", err[3], P[3]);
}
END_TEST

/* The flux is proportional to coefficient * factor^2 (the definition
 * c = C Delta^2/12, Delta = factor dx): C = 0.5, factor 2 gives exactly twice
 * the tendency of C = 1, factor 1 (powers of two: equal to round-off). */
START_TEST(scales_with_parameters)
{
    tg_model *m1 = periodic_model(32, 1.0, 1.0), *m2 = periodic_model(32, 2.0, 0.5);
    set_analytic(m1);
    set_analytic(m2);
    const double *t1 = eval(m1), *t2 = eval(m2);
    const tg_geometry *g = m1->geom;
    double dmax = 0.0, amax = 0.0;
    for (int k = 0; k < m1->nl; k++)
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                const long p = k * m1->npl + (long)j * g->ns + i;
                dmax = fmax(dmax, fabs(t2[p] - 2.0 * t1[p]));
                amax = fmax(amax, fabs(t1[p]));
            }
    ck_assert_msg(amax > 0.0, "zero tendency");
    ck_assert_msg(dmax <= 1e-13 * amax, "C = 0.5, factor 2 differs from twice C = 1, factor 1 "
                                        "by %g (max %g)", dmax, amax);
    tg_model_destroy(m1);
    tg_model_destroy(m2);
}
END_TEST

/* -div tau for the exact sub-filter flux tau = (u q)bar - ubar qbar of the
 * Gaussian filter with transfer G(K) = exp(-K^2 Delta^2/24) (Pope 2000,
 * Turbulent Flows, section 13.2, table 13.2), for the analytic field: u and q
 * are sums of cosines A cos(K.x + ph), products of two of them are
 * (A1 A2/2)[cos(K+ . x + ph+) + cos(K- . x + ph-)], and the filter multiplies
 * each cosine by G of its wavenumber. */
typedef struct {
    double A, kx, ky, ph;
} wave;

static int waves_of(const tg_model *m, int k, char which, wave *w)
{
    const double L = m->geom->length, ck = LAYER_C[k], sk = s_of(m, k);
    for (int n = 0; n < NMODE; n++) {
        const double kx = 2.0 * PI * MODE_KX[n] / L, ky = 2.0 * PI * MODE_KY[n] / L;
        /* d/dx cos(th) = kx cos(th + pi/2) */
        if (which == 'u')
            w[n] = (wave){-ck * MODE_A[n] * ky, kx, ky, MODE_PH[n] + 0.5 * PI};
        else if (which == 'v')
            w[n] = (wave){ck * MODE_A[n] * kx, kx, ky, MODE_PH[n] + 0.5 * PI};
        else
            w[n] = (wave){(sk - ck * (kx * kx + ky * ky)) * MODE_A[n], kx, ky, MODE_PH[n]};
    }
    return NMODE;
}

static double exact_filtered_tendency(const tg_model *m, int k, double delta, double x, double y)
{
    wave u[NMODE], v[NMODE], q[NMODE];
    waves_of(m, k, 'u', u);
    waves_of(m, k, 'v', v);
    waves_of(m, k, 'q', q);
    const double c = delta * delta / 24.0;
#define GF(kx, ky) exp(-((kx) * (kx) + (ky) * (ky)) * c)
    double t = 0.0;
    for (int dir = 0; dir < 2; dir++) {
        const wave *a = dir == 0 ? u : v; /* tau_x from u q, tau_y from v q */
        for (int n = 0; n < NMODE; n++)
            for (int l = 0; l < NMODE; l++) {
                const double g12 = GF(a[n].kx, a[n].ky) * GF(q[l].kx, q[l].ky);
                for (int sgn = -1; sgn <= 1; sgn += 2) {
                    const double kx = a[n].kx + sgn * q[l].kx, ky = a[n].ky + sgn * q[l].ky;
                    const double ph = a[n].ph + sgn * q[l].ph;
                    const double amp = 0.5 * a[n].A * q[l].A * (GF(kx, ky) - g12);
                    /* -d/dx_dir of amp cos(K.x + ph) = amp K_dir sin(K.x + ph) */
                    t += amp * (dir == 0 ? kx : ky) * sin(kx * x + ky * y + ph);
                }
            }
    }
#undef GF
    return t;
}

/* Leonard 1974 (Adv. Geophys. 18A, 237-248) and Clark, Ferziger & Reynolds
 * 1979 (J. Fluid Mech. 91, 1-16): the gradient model is the leading term of
 * the Taylor expansion of the exact sub-filter flux, so with Delta = dx the
 * relative difference from the exact Gaussian-filter flux divergence must
 * fall as the grid is refined (both the truncation O((K Delta)^2) and the
 * discretisation O((K dx)^2) go like dx^2: ratio > 3 per halving, common
 * practice) and be below 1.5% on 256 points. */
START_TEST(converges_to_exact_subfilter_flux)
{
    const int P[4] = {32, 64, 128, 256};
    double err[4];
    for (int r = 0; r < 4; r++) {
        tg_model *m = periodic_model(P[r], 1.0, 1.0);
        set_analytic(m);
        const double *t = eval(m);
        const tg_geometry *g = m->geom;
        double emax = 0.0, amax = 0.0;
        for (int k = 0; k < m->nl; k++)
            for (int j = g->a0; j < g->a1; j++)
                for (int i = g->a0; i < g->a1; i++) {
                    const double ex =
                        exact_filtered_tendency(m, k, g->dx, g->coord[i], g->coord[j]);
                    emax = fmax(emax, fabs(t[k * m->npl + (long)j * g->ns + i] - ex));
                    amax = fmax(amax, fabs(ex));
                }
        err[r] = emax / amax;
        tg_model_destroy(m);
    }
    for (int r = 1; r < 4; r++)
        ck_assert_msg(err[r - 1] / err[r] > 3.0, "error ratio %g (errors %g, %g)",
                      err[r - 1] / err[r], err[r - 1], err[r]);
    ck_assert_msg(err[3] < 0.015, "relative difference %g on %d points", err[3], P[3]);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* The flux form conserves the domain integral of q (circulation): the sum
 * of the tendency over the active nodes vanishes to round-off, relative to
 * the sum of its magnitude (flux-form conservation: common practice). In
 * the basin the wall faces carry no flux. Random states. */
static void check_zero_integral(tg_model *m, const char *what)
{
    tg_model_set_noise(m, 5e3, 7);
    const double *t = eval(m);
    const tg_geometry *g = m->geom;
    for (int k = 0; k < m->nl; k++) {
        double s = 0.0, a = 0.0;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                const double v = t[k * m->npl + (long)j * g->ns + i];
                s += v;
                a += fabs(v);
            }
        ck_assert_msg(a > 0.0, "%s layer %d: zero tendency", what, k + 1);
        ck_assert_msg(fabs(s) <= 1e-12 * a, "%s layer %d: integral %g of total magnitude %g",
                      what, k + 1, s, a);
    }
}

START_TEST(zero_integral_periodic)
{
    tg_model *m = periodic_model(64, 1.0, 1.0);
    check_zero_integral(m, "periodic");
    tg_model_destroy(m);
}
END_TEST

START_TEST(zero_integral_basin)
{
    const char *sets[] = {"grid.points=65", "closure.use=gradient_model",
                          "gradient_model.filter_width_factor=2", NULL};
    tg_model *m = make_model(sets);
    check_zero_integral(m, "basin");
    tg_model_destroy(m);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Bitwise the same model state after 20 steps on 1 and 2 threads (the
 * closure rules of src/model/closure.h; common practice for reproducibility). */
START_TEST(threads_bitwise)
{
    const char *sets[] = {"grid.points=65", "closure.use=gradient_model", "time.step_s=3600",
                          NULL};
    double *q[2];
    long n = 0;
    for (int r = 0; r < 2; r++) {
        omp_set_num_threads(r + 1);
        tg_model *m = make_model(sets);
        tg_model_set_noise(m, 2e4, 3);
        tg_status st;
        for (int s = 0; s < 20; s++)
            ck_assert_msg(tg_step(m, NULL, &st) == TG_OK, "step %d: %s", s, st.msg);
        n = m->nl * m->npl;
        q[r] = malloc(sizeof(double) * n);
        ck_assert_ptr_nonnull(q[r]);
        memcpy(q[r], m->q, sizeof(double) * n);
        tg_model_destroy(m);
    }
    ck_assert_msg(memcmp(q[0], q[1], sizeof(double) * n) == 0,
                  "1 and 2 threads give different states");
    free(q[0]);
    free(q[1]);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("closure_gradient");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, matches_formula_second_order);
    tcase_add_test(tc, scales_with_parameters);
    tcase_add_test(tc, converges_to_exact_subfilter_flux);
    tcase_add_test(tc, zero_integral_periodic);
    tcase_add_test(tc, zero_integral_basin);
    tcase_add_test(tc, threads_bitwise);
    suite_add_tcase(s, tc);
    return tg_unit_run(s);
}
