/* test_closure_network.c - unit tests of the closure "network"
 * (closures/network.c and its libtorch bridge closures/network_torch.cc).
 *
 * The networks are written at test time by tests/unit/make_network.py
 * (Debian's python3-torch), never committed as binaries. Checks:
 *   - a network whose single 3x3 convolution is A2 times the five-point
 *     Laplacian of zeta gives the tendency of the scheme `viscosity` with
 *     the same A2 to 1e-12 relative, in a basin and in the periodic domain
 *     (the five-point Laplacian stencil, LeVeque 2007, Finite Difference
 *     Methods for Ordinary and Partial Differential Equations, eq. 3.5;
 *     the walls reach the network through the ring the framework fills,
 *     the periodic edges through the halo copy); the match rests on common
 *     practice (the same stencil summed in another order);
 *   - the same Laplacian in flux form (F = -A2 grad zeta, output = flux)
 *     gives a tendency whose domain sum vanishes to round-off (1e-13 of
 *     the sum of its magnitudes), in both geometries (telescoping sums of a
 *     flux form, LeVeque 2002, Finite Volume Methods for Hyperbolic
 *     Problems, section 4.1);
 *   - every_stage = false evaluates at stage 0 and returns that tendency
 *     unchanged at stages 1 and 2 whatever the state, and so does the
 *     default; every_stage = true follows the state; multiplier 2 doubles the tendency bit for bit;
 *     remove_mean leaves a zero domain mean (round-off);
 *   - bad networks stop the model's creation with TG_ERR_CONFIG and a
 *     message that names the fault: missing file, not TorchScript, no
 *     normalization, channel count, output shape, inputs and output that
 *     contradict the file's records; a network returning NaN stops the
 *     evaluation with TG_ERR_BLOWUP and names the closure.
 * Skips (77) in a build without libtorch unless TG_REQUIRE_TORCH=1.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "closure_host.h"
#include "model.h"
#include "unit_util.h"

#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static char scratch[512];

/* Writes network KIND for this grid into the scratch folder; its path to out. */
static void make_net(const char *kind, int nl, double dx, double a2, char *out, size_t n)
{
    const char *src = getenv("TG_SRCDIR");
    snprintf(out, n, "%s/%s-%d-%.0f.pt", scratch, kind, nl, dx);
    char cmd[2048];
    snprintf(cmd, sizeof cmd,
             "/usr/bin/python3 '%s/tests/unit/make_network.py' %s '%s' --layers %d --dx %.17g "
             "--a2 %.17g",
             src && src[0] ? src : ".", kind, out, nl, dx, a2);
    ck_assert_msg(system(cmd) == 0, "the generator failed: %s", cmd);
}

/* Sets cfg for a basin of 33 points or a periodic domain of 32, then `more`. */
static void make_config(tg_config *cfg, int periodic, const char *const *more)
{
    tg_status st;
    tg_config_defaults(cfg);
    const char *basin[] = {"grid.points=33", NULL};
    const char *per[] = {"grid.geometry=periodic", "grid.points=32", "wind.profile=none",
                         "background.zonal_velocity_m_s=0.05, 0", NULL};
    for (const char *const *a = periodic ? per : basin; *a; a++)
        ck_assert_msg(tg_config_set(cfg, *a, &st) == TG_OK, "%s: %s", *a, st.msg);
    for (const char *const *a = more; a && *a; a++)
        ck_assert_msg(tg_config_set(cfg, *a, &st) == TG_OK, "%s: %s", *a, st.msg);
    ck_assert_msg(tg_config_check(cfg, NULL, &st) == TG_OK, "config: %s", st.msg);
}

static tg_model *model_with(int periodic, const char *const *more)
{
    tg_config cfg;
    make_config(&cfg, periodic, more);
    tg_model *m = tg_unit_model(&cfg);
    tg_model_set_noise(m, 2.0e4, 5);
    return m;
}

/* A model using the network at path with extra settings (NULL-terminated). */
static tg_model *net_model(int periodic, const char *path, const char *const *extra)
{
    char use[] = "closure.use=network", file[700];
    snprintf(file, sizeof file, "network.file=%s", path);
    const char *more[12] = {use, file};
    int n = 2;
    for (const char *const *a = extra; a && *a && n < 11; a++)
        more[n++] = *a;
    more[n] = NULL;
    return model_with(periodic, more);
}

/* The grid spacing and layer count of the test's grid. */
static void grid_of(int periodic, double *dx, int *nl)
{
    const char *more[] = {"closure.use=viscosity", NULL};
    tg_model *m = model_with(periodic, more);
    *dx = m->geom->dx;
    *nl = m->nl;
    tg_model_destroy(m);
}

static const double *eval_at(tg_model *m, int stage, const double *zeta, tg_code want)
{
    tg_status st;
    tg_closure_input in = {m->psi, m->q, zeta ? zeta : m->zeta, m->wall, m->step, stage};
    tg_code rc = tg_closure_host_eval(m->closures, &in, &st);
    ck_assert_msg(rc == want, "eval: code %d, want %d: %s", rc, want, st.msg);
    return tg_closure_host_tend(m->closures, 0);
}

/* ---------------------------------------------------------------------- */

static void laplacian_case(int periodic)
{
    double dx;
    int nl;
    grid_of(periodic, &dx, &nl);
    char path[600];
    make_net("laplacian", nl, dx, 300.0, path, sizeof path);
    const char *visc[] = {"closure.use=viscosity", "viscosity.viscosity_m2_per_s=300", NULL};
    tg_model *mv = model_with(periodic, visc);
    tg_model *mn = net_model(periodic, path, NULL);
    const double *tv = eval_at(mv, 0, NULL, TG_OK), *tn = eval_at(mn, 0, NULL, TG_OK);
    for (int k = 0; k < nl; k++) {
        const double big = tg_unit_max_abs(mv, tv, k);
        ck_assert(big > 0.0);
        double d = 0.0;
        const tg_geometry *g = mv->geom;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                const long p = k * mv->npl + (long)j * g->ns + i;
                d = fmax(d, fabs(tv[p] - tn[p]));
            }
        ck_assert_msg(d <= 1e-12 * big, "%s layer %d: network - viscosity %.3e of %.3e",
                      periodic ? "periodic" : "basin", k + 1, d, big);
    }
    tg_model_destroy(mv);
    tg_model_destroy(mn);
}

START_TEST(test_laplacian_basin) { laplacian_case(0); }
END_TEST
START_TEST(test_laplacian_periodic) { laplacian_case(1); }
END_TEST

static void flux_case(int periodic)
{
    double dx;
    int nl;
    grid_of(periodic, &dx, &nl);
    char path[600];
    make_net("flux", nl, dx, 300.0, path, sizeof path);
    tg_model *m = net_model(periodic, path, NULL);
    const double *t = eval_at(m, 0, NULL, TG_OK);
    const tg_geometry *g = m->geom;
    for (int k = 0; k < nl; k++) {
        double sum = 0.0, mag = 0.0;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                sum += t[k * m->npl + (long)j * g->ns + i];
                mag += fabs(t[k * m->npl + (long)j * g->ns + i]);
            }
        ck_assert(mag > 0.0);
        ck_assert_msg(fabs(sum) <= 1e-13 * mag, "%s layer %d: domain sum %.3e of %.3e",
                      periodic ? "periodic" : "basin", k + 1, sum, mag);
    }
    tg_model_destroy(m);
}

START_TEST(test_flux_basin) { flux_case(0); }
END_TEST
START_TEST(test_flux_periodic) { flux_case(1); }
END_TEST

START_TEST(test_stage_options)
{
    double dx;
    int nl;
    grid_of(0, &dx, &nl);
    char path[600];
    make_net("laplacian", nl, dx, 300.0, path, sizeof path);
    const char *once[] = {"network.every_stage=false", NULL};
    const char *each[] = {"network.every_stage=true", NULL};
    const char *twice[] = {"network.multiplier=2", NULL};
    const char *mean[] = {"network.remove_mean=true", NULL};
    tg_model *mo = net_model(0, path, once), *me = net_model(0, path, each);
    tg_model *md = net_model(0, path, NULL);
    tg_model *m2 = net_model(0, path, twice), *mm = net_model(0, path, mean);
    const size_t nb = sizeof(double) * (size_t)(nl * mo->npl);
    double *t0 = malloc(nb), *other = malloc(nb);
    ck_assert(t0 && other);
    /* Another zeta: the state doubled. */
    for (long p = 0; p < nl * mo->npl; p++)
        other[p] = 2.0 * mo->zeta[p];
    memcpy(t0, eval_at(mo, 0, NULL, TG_OK), nb);
    ck_assert(memcmp(eval_at(mo, 1, other, TG_OK), t0, nb) == 0);
    ck_assert(memcmp(eval_at(mo, 2, other, TG_OK), t0, nb) == 0);
    ck_assert(memcmp(eval_at(mo, 0, other, TG_OK), t0, nb) != 0);
    ck_assert(memcmp(eval_at(me, 0, NULL, TG_OK), t0, nb) == 0);
    ck_assert(memcmp(eval_at(me, 1, other, TG_OK), t0, nb) != 0);
    /* The default is once per step. */
    ck_assert(memcmp(eval_at(md, 0, NULL, TG_OK), t0, nb) == 0);
    ck_assert(memcmp(eval_at(md, 1, other, TG_OK), t0, nb) == 0);

    const double *t2 = eval_at(m2, 0, NULL, TG_OK);
    const tg_geometry *g = m2->geom;
    for (int k = 0; k < nl; k++)
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                const long p = k * m2->npl + (long)j * g->ns + i;
                ck_assert(t2[p] == 2.0 * t0[p]);
            }
    const double *tm = eval_at(mm, 0, NULL, TG_OK);
    for (int k = 0; k < nl; k++) {
        double sum = 0.0, mag = 0.0, raw = 0.0;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                const long p = k * mm->npl + (long)j * g->ns + i;
                sum += tm[p];
                mag += fabs(tm[p]);
                raw += t0[p];
            }
        ck_assert_msg(fabs(raw) > 1e-6 * mag, "the raw tendency has a mean to remove");
        ck_assert_msg(fabs(sum) <= 1e-13 * mag, "layer %d: mean left %.3e of %.3e", k + 1, sum,
                      mag);
    }
    free(t0);
    free(other);
    tg_model_destroy(mo);
    tg_model_destroy(me);
    tg_model_destroy(md);
    tg_model_destroy(m2);
    tg_model_destroy(mm);
}
END_TEST

/* The model's creation fails with TG_ERR_CONFIG and `phrase` in the message. */
static void refused(const char *path, const char *const *extra, const char *phrase)
{
    tg_config cfg;
    char file[700];
    snprintf(file, sizeof file, "network.file=%s", path);
    const char *more[8] = {"closure.use=network", file};
    int n = 2;
    for (const char *const *a = extra; a && *a; a++)
        more[n++] = *a;
    more[n] = NULL;
    make_config(&cfg, 0, more);
    tg_status st;
    tg_status_clear(&st);
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m == NULL, "%s was accepted", path);
    ck_assert_int_eq(st.code, TG_ERR_CONFIG);
    ck_assert_msg(strstr(st.msg, phrase) != NULL, "'%s' not in: %s", phrase, st.msg);
}

START_TEST(test_bad_networks)
{
    double dx;
    int nl;
    grid_of(0, &dx, &nl);
    char path[600];
    snprintf(path, sizeof path, "%s/absent.pt", scratch);
    refused(path, NULL, "cannot open the network file: No such file");
    snprintf(path, sizeof path, "%s/text.pt", scratch);
    FILE *f = fopen(path, "w");
    ck_assert_ptr_nonnull(f);
    fputs("not a network\n", f);
    fclose(f);
    refused(path, NULL, "not a TorchScript network");
    make_net("nonorm", nl, dx, 300.0, path, sizeof path);
    refused(path, NULL, "has no attribute 'input_mean'");
    make_net("channels", nl, dx, 300.0, path, sizeof path);
    refused(path, NULL, "to have 3 channels, but got 2 channels");
    make_net("shape", nl, dx, 300.0, path, sizeof path);
    refused(path, NULL, "the network returned 29 x 29 values per channel; expected 33 x 33");
    make_net("laplacian", nl, dx, 300.0, path, sizeof path);
    const char *q[] = {"network.inputs=q", NULL};
    refused(path, q, "[network] inputs = q, but");
    const char *fl[] = {"network.output=flux", NULL};
    refused(path, fl, "[network] output = flux, but");
    const char *bad[] = {"network.inputs=zeta, omega", NULL};
    refused(path, bad, "'omega' is not one of u, v, q, psi, zeta");
    make_net("unrecorded", nl, dx, 300.0, path, sizeof path);
    refused(path, NULL, "records no input fields");
    const char *two[] = {"network.inputs=zeta, q", "network.output=tendency", NULL};
    refused(path, two, "its normalization has 2 input channels, but inputs zeta,q for 2 layers "
                       "make 4");
    /* With the keys set, the unrecorded file runs. */
    const char *keys[] = {"network.inputs=zeta", "network.output=tendency", NULL};
    tg_model *m = net_model(0, path, keys);
    eval_at(m, 0, NULL, TG_OK);
    tg_model_destroy(m);
}
END_TEST

START_TEST(test_nan)
{
    double dx;
    int nl;
    grid_of(0, &dx, &nl);
    char path[600];
    make_net("nan", nl, dx, 300.0, path, sizeof path);
    tg_model *m = net_model(0, path, NULL);
    tg_status st;
    tg_closure_input in = {m->psi, m->q, m->zeta, m->wall, m->step, 0};
    ck_assert_int_eq(tg_closure_host_eval(m->closures, &in, &st), TG_ERR_BLOWUP);
    ck_assert_msg(strstr(st.msg, "closure network") && strstr(st.msg, "returned"), "%s", st.msg);
    tg_model_destroy(m);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("closure network");
    TCase *t = tcase_create("network");
    tcase_set_timeout(t, 600);
    tcase_add_test(t, test_laplacian_basin);
    tcase_add_test(t, test_laplacian_periodic);
    tcase_add_test(t, test_flux_basin);
    tcase_add_test(t, test_flux_periodic);
    tcase_add_test(t, test_stage_options);
    tcase_add_test(t, test_bad_networks);
    tcase_add_test(t, test_nan);
    suite_add_tcase(s, t);
    return s;
}

int main(void)
{
    const char *built = getenv("TG_TORCH_BUILT");
    if (!built || strcmp(built, "yes") != 0) {
        const char *req = getenv("TG_REQUIRE_TORCH");
        if (req && !strcmp(req, "1")) {
            printf("FAIL - TG_REQUIRE_TORCH=1 but this build has no libtorch "
                   "(./configure --with-torch; Debian: libtorch-dev)\n");
            return 1;
        }
        printf("SKIP - this build has no libtorch (./configure --with-torch)\n");
        return 77;
    }
    return tg_unit_run_in_scratch(suite(), scratch, sizeof scratch, "network");
}
