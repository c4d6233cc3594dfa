/* test_initial.c - unit tests of the starting state (src/experiments/initial.c).
 *
 * The rule every command shares (initial.h): a checkpoint (q, time and
 * step) gives its PV bit for bit, any other file its streamfunction. The
 * test writes one state three ways - a checkpoint, a fields.nc snapshot
 * and a plain psi(layer, y, x) file - each with a PV that is NOT the one
 * of its streamfunction (q of another state), and checks which of the two
 * the model takes. Also [initial] state = rest and noise, and a missing
 * file. The rule rests on common practice (a restart file restores the
 * prognostic variable exactly); nothing here is from a paper.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#define _POSIX_C_SOURCE 200809L
#include "initial.h"

#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "unit_util.h"

static char g_dir[512];

/* Two layers of a small basin, no forcing needed. */
static tg_config small_config(void)
{
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.points = 17;
    cfg.initial_kind = TG_INIT_NOISE;
    return cfg;
}

/* The test's two states in output layout: psi_a (of state A) and q_b (the
 * PV of another state B), plus A's own q for comparison. */
typedef struct {
    tg_config cfg;
    size_t n;
    double *psi_a, *q_a, *q_b, *x, *y;
    tg_nc_grid g;
} states;

static void make_states(states *s)
{
    s->cfg = small_config();
    tg_model *m = tg_unit_model(&s->cfg);
    s->n = (size_t)m->nl * m->nout * m->nout;
    s->psi_a = malloc(sizeof(double) * s->n);
    s->q_a = malloc(sizeof(double) * s->n);
    s->q_b = malloc(sizeof(double) * s->n);
    s->x = malloc(sizeof(double) * (size_t)m->nout);
    s->y = malloc(sizeof(double) * (size_t)m->nout);
    ck_assert(s->psi_a && s->q_a && s->q_b && s->x && s->y);
    tg_model_set_noise(m, 1000.0, 1);
    tg_model_pack(m, m->psi, s->psi_a);
    tg_model_pack(m, m->q, s->q_a);
    tg_model_set_noise(m, 1000.0, 2);
    tg_model_pack(m, m->q, s->q_b);
    memcpy(s->x, tg_model_out_coord(m), sizeof(double) * (size_t)m->nout);
    memcpy(s->y, tg_model_out_coord(m), sizeof(double) * (size_t)m->nout);
    s->g = (tg_nc_grid){.nx = m->nout, .ny = m->nout, .nlayers = m->nl, .x = s->x, .y = s->y};
    tg_model_destroy(m);
}

static void free_states(states *s)
{
    free(s->psi_a);
    free(s->q_a);
    free(s->q_b);
    free(s->x);
    free(s->y);
}

static double max_abs_diff(const double *a, const double *b, size_t n)
{
    double d = 0.0;
    for (size_t i = 0; i < n; i++)
        d = fmax(d, fabs(a[i] - b[i]));
    return d;
}

static double max_abs(const double *a, size_t n)
{
    double d = 0.0;
    for (size_t i = 0; i < n; i++)
        d = fmax(d, fabs(a[i]));
    return d;
}

/* Loads `path` into a fresh model; its psi and q in output layout. */
static void load(const states *s, const char *path, double *psi, double *q,
                 tg_initial_info *info)
{
    tg_status st;
    tg_model *m = tg_unit_model(&s->cfg);
    ck_assert_msg(tg_state_from_file(m, path, info, &st) == TG_OK, "%s", st.msg);
    ck_assert_int_eq(m->step, 0); /* left to the caller */
    tg_model_pack(m, m->psi, psi);
    tg_model_pack(m, m->q, q);
    tg_model_destroy(m);
}

START_TEST(checkpoint_gives_its_pv_bitwise)
{
    states s;
    make_states(&s);
    char path[700];
    snprintf(path, sizeof path, "%s/checkpoint.nc", g_dir);
    tg_status st;
    tg_checkpoint c = {.time_s = 86400.0, .step = 96, .psi = s.psi_a, .q = s.q_b};
    ck_assert_msg(tg_checkpoint_write(path, &s.g, &c, &st) == TG_OK, "%s", st.msg);
    double *psi = malloc(sizeof(double) * s.n), *q = malloc(sizeof(double) * s.n);
    tg_initial_info info;
    load(&s, path, psi, q, &info);
    ck_assert(info.has_q && info.has_time);
    ck_assert_int_eq(info.step, 96);
    /* q of state B exactly (interior and walls: the ring is recomputed
     * from the wall condition, so compare the interior only). */
    const int nx = s.g.nx, nl = s.g.nlayers;
    for (int k = 0; k < nl; k++)
        for (int j = 1; j < nx - 1; j++)
            for (int i = 1; i < nx - 1; i++) {
                const size_t p = ((size_t)k * nx + j) * nx + i;
                ck_assert_msg(q[p] == s.q_b[p], "layer %d node (%d, %d): %.17g != %.17g", k, i,
                              j, q[p], s.q_b[p]);
            }
    free(psi);
    free(q);
    free_states(&s);
}
END_TEST

/* A snapshot file holds q as well, but no scalar time and step: psi wins. */
START_TEST(fields_file_gives_its_psi)
{
    states s;
    make_states(&s);
    char path[700];
    snprintf(path, sizeof path, "%s/fields.nc", g_dir);
    tg_status st;
    tg_fields_file *f = tg_fields_create(path, &s.g, NULL, &st);
    ck_assert_msg(f != NULL, "%s", st.msg);
    ck_assert_msg(tg_fields_append(f, 0.0, s.q_a, s.q_a, NULL, &st) == TG_OK, "%s", st.msg);
    ck_assert_msg(tg_fields_append(f, 86400.0, s.psi_a, s.q_b, NULL, &st) == TG_OK, "%s",
                  st.msg);
    ck_assert_msg(tg_fields_close(f, &st) == TG_OK, "%s", st.msg);
    double *psi = malloc(sizeof(double) * s.n), *q = malloc(sizeof(double) * s.n);
    tg_initial_info info;
    load(&s, path, psi, q, &info);
    ck_assert(info.has_q && !info.has_time);
    /* The last record's psi (state A) and the PV of state A, not B's. */
    const double scale = max_abs(s.psi_a, s.n), qscale = max_abs(s.q_a, s.n);
    ck_assert_msg(max_abs_diff(psi, s.psi_a, s.n) <= 1e-12 * scale, "psi differs by %g",
                  max_abs_diff(psi, s.psi_a, s.n));
    ck_assert_msg(max_abs_diff(q, s.q_a, s.n) <= 1e-12 * qscale, "q is not A's: off by %g",
                  max_abs_diff(q, s.q_a, s.n));
    ck_assert(max_abs_diff(q, s.q_b, s.n) > 1e-3 * qscale);
    free(psi);
    free(q);
    free_states(&s);
}
END_TEST

START_TEST(initial_kinds)
{
    states s;
    make_states(&s);
    tg_status st;
    tg_initial_info info;
    double *psi = malloc(sizeof(double) * s.n);

    /* rest: the model as created (psi = 0) */
    tg_config cfg = s.cfg;
    cfg.initial_kind = TG_INIT_REST;
    tg_model *m = tg_unit_model(&cfg);
    ck_assert(tg_state_initial(m, &cfg, &info, &st) == TG_OK);
    ck_assert(!info.has_q && !info.has_time);
    tg_model_pack(m, m->psi, psi);
    ck_assert(max_abs(psi, s.n) == 0.0);
    tg_model_destroy(m);

    /* noise: tg_model_set_noise with the config's amplitude and seed */
    cfg.initial_kind = TG_INIT_NOISE;
    cfg.noise_amplitude_m2_per_s = 1000.0;
    cfg.seed = 1;
    m = tg_unit_model(&cfg);
    ck_assert(tg_state_initial(m, &cfg, &info, &st) == TG_OK);
    tg_model_pack(m, m->psi, psi);
    ck_assert(max_abs_diff(psi, s.psi_a, s.n) == 0.0);
    tg_model_destroy(m);

    /* a file that is not there: the reader's error, naming the path */
    cfg.initial_kind = TG_INIT_FILE;
    snprintf(cfg.initial_path, sizeof cfg.initial_path, "%s/nowhere.nc", g_dir);
    m = tg_unit_model(&cfg);
    ck_assert_int_eq(tg_state_initial(m, &cfg, &info, &st), TG_ERR_IO);
    ck_assert_msg(strstr(st.msg, "nowhere.nc") != NULL, "%s", st.msg);
    tg_model_destroy(m);
    free(psi);
    free_states(&s);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("initial");
    TCase *tc = tcase_create("core");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, checkpoint_gives_its_pv_bitwise);
    tcase_add_test(tc, fields_file_gives_its_psi);
    tcase_add_test(tc, initial_kinds);
    suite_add_tcase(s, tc);
    return tg_unit_run_in_scratch(s, g_dir, sizeof g_dir, "initial");
}
