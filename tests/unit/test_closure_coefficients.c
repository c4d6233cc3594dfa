/* test_closure_coefficients.c - unit tests of the closure "coefficients"
 * (closures/coefficients.c) and of the coefficients-file reader (src/model/basis.c).
 *
 * Checks:
 *   - reading a good file (header, comments, `all`, std) and each class of
 *     error, with FILE:LINE in the message and "did you mean" for a
 *     misspelt term; a bad file stops the model's creation;
 *   - the tendency of a one-term file equals coefficient x term (the basis
 *     evaluated by the test on the model's state): bitwise for every term
 *     but lap_zeta, where the product is grouped (c/dx^2) x stencil inside
 *     the viscosity operator and agrees to round-off; a many-term file is
 *     the sum of its terms; a layer line leaves the other layers alone;
 *     coefficient_scale multiplies;
 *   - `all lap_zeta 300` (and with `all lap2_zeta -A4`) gives the tendency,
 *     the model state after steps and the budget rates of the scheme
 *     `viscosity` with A2 = 300 (and A4) bit for bit, in a basin and in the
 *     periodic domain;
 *   - sample = true: the same member gets the same coefficients, other
 *     members and seeds get others, lines without std keep their value,
 *     and over many members the draws have the file's mean and std
 *     (sampling error bounds: common practice).
 * A Check suite with its own main().
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "basis.h"
#include "closure_tools.h"
#include "closure_host.h"
#include "model.h"
#include "stepper.h"
#include "unit_util.h"

#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---------------------------------------------------------------------- */
/* Helpers                                                                  */
/* ---------------------------------------------------------------------- */

static const char *tmpdir(void)
{
    const char *d = getenv("TG_TEST_TMPDIR");
    return (d && d[0]) ? d : ".";
}

/* Writes `text` to TMPDIR/coef_NAME.txt; the path goes to path[]. */
static void write_file(const char *name, const char *text, char *path, size_t n)
{
    snprintf(path, n, "%s/coef_%s.txt", tmpdir(), name);
    FILE *f = fopen(path, "w");
    ck_assert_msg(f != NULL, "cannot write %s", path);
    fputs(text, f);
    fclose(f);
}

#define UNITS TG_BASIS_UNITS_LINE "\n"

/* A config: basin of 33 points or periodic of 32; `use` and extra
 * settings (NULL-terminated, may be NULL). */
static void make_config(tg_config *cfg, int periodic, const char *use, const char *const *more)
{
    tg_status st;
    tg_config_defaults(cfg);
    char u[256];
    snprintf(u, sizeof u, "closure.use=%s", use);
    const char *basin[] = {"grid.points=33", u, NULL};
    const char *per[] = {"grid.geometry=periodic", "grid.points=32", "wind.profile=none",
                         "background.zonal_velocity_m_s=0.05, 0", u, NULL};
    for (const char *const *a = periodic ? per : basin; *a; a++)
        ck_assert_msg(tg_config_set(cfg, *a, &st) == TG_OK, "%s: %s", *a, st.msg);
    for (const char *const *a = more; a && *a; a++)
        ck_assert_msg(tg_config_set(cfg, *a, &st) == TG_OK, "%s: %s", *a, st.msg);
    ck_assert_msg(tg_config_check(cfg, NULL, &st) == TG_OK, "config: %s", st.msg);
}

static tg_model *make_model(int periodic, const char *use, const char *const *more)
{
    tg_config cfg;
    tg_status st;
    make_config(&cfg, periodic, use, more);
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "model with %s: %s", use, st.msg);
    tg_model_set_noise(m, 2.0e4, 5);
    return m;
}

/* A model with closure `coefficients` reading `text`. */
static tg_model *coef_model(int periodic, const char *name, const char *text,
                            const char *const *more)
{
    char path[512], set[600];
    write_file(name, text, path, sizeof path);
    snprintf(set, sizeof set, "coefficients.file=%s", path);
    const char *all[16] = {set};
    int n = 1;
    for (const char *const *a = more; a && *a && n < 15; a++)
        all[n++] = *a;
    all[n] = NULL;
    return make_model(periodic, "coefficients", all);
}

static const double *eval_closure(tg_model *m)
{
    tg_status st;
    tg_closure_input in = {m->psi, m->q, m->zeta, m->wall, m->step, 0};
    ck_assert_msg(tg_closure_host_eval(m->closures, &in, &st) == TG_OK, "eval: %s", st.msg);
    return tg_closure_host_tend(m->closures, 0);
}

/* The basis term `term` of layer k of m's state, evaluated by the test. */
static void term_of(tg_model *m, int term, int k, double *out)
{
    tg_status st;
    tg_tools *tt = tg_tools_create(m->geom, &st);
    ck_assert_ptr_nonnull(tt);
    tg_basis *b = tg_basis_create(m->geom->ns, m->geom->a0, m->geom->a1, m->geom->dx, tg_tools_get(tt),
                                  &st);
    ck_assert_msg(b != NULL, "basis: %s", st.msg);
    const long o = k * m->npl;
    ck_assert(tg_basis_eval(b, term, m->psi + o, m->q + o, m->zeta + o, NULL, NULL, out, &st) ==
              TG_OK);
    tg_basis_destroy(b);
    tg_tools_destroy(tt);
}

/* Least-squares coefficient c of tend = c * term over the active nodes of layer k. */
static double fitted_coef(tg_model *m, const double *tend, int term, int k)
{
    double *t = calloc((size_t)m->npl, sizeof(double));
    ck_assert_ptr_nonnull(t);
    term_of(m, term, k, t);
    const tg_geometry *g = m->geom;
    double num = 0.0, den = 0.0;
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++) {
            const long p = (long)j * g->ns + i;
            num += tend[k * m->npl + p] * t[p];
            den += t[p] * t[p];
        }
    free(t);
    ck_assert(den > 0.0);
    return num / den;
}

/* ---------------------------------------------------------------------- */
/* The file reader                                                          */
/* ---------------------------------------------------------------------- */

START_TEST(test_read_good)
{
    char path[512];
    write_file("good",
               "# a learned set\n"
               "#   units:   coefficient  in s-2 per   term unit  \n"
               "\n"
               "# layer term coefficient std\n"
               "all  lap_zeta   300   30   # harmonic part\n"
               "  1\tdiv_gradu_gradq -8.3e6\n"
               "2 lap2_q -1e9 0\r\n",
               path, sizeof path);
    tg_coef_list l;
    tg_status st;
    ck_assert_msg(tg_coef_read(path, 2, &l, &st) == TG_OK, "%s", st.msg);
    ck_assert_int_eq(l.n, 3);
    ck_assert_int_eq(l.e[0].layer, -1);
    ck_assert_int_eq(l.e[0].term, tg_basis_find("lap_zeta"));
    ck_assert(l.e[0].mean == 300.0 && l.e[0].std == 30.0 && l.e[0].line == 5);
    ck_assert_int_eq(l.e[1].layer, 0);
    ck_assert_int_eq(l.e[1].term, tg_basis_find("div_gradu_gradq"));
    ck_assert(l.e[1].mean == -8.3e6 && l.e[1].std == -1.0 && l.e[1].line == 6);
    ck_assert_int_eq(l.e[2].layer, 1);
    ck_assert(l.e[2].mean == -1e9 && l.e[2].std == 0.0);
    tg_coef_list_free(&l);
    ck_assert_int_eq(l.n, 0);
}
END_TEST

typedef struct {
    const char *text;
    int line;            /* expected line in the message (0: "PATH: ") */
    const char *phrase;  /* expected in the message */
} bad_case;

static const bad_case bad[] = {
    {UNITS "1 lap_zeta 1\n2 lap_zeat 3\n", 3, "unknown term 'lap_zeat'; did you mean lap_zeta?"},
    {UNITS "1 nothing_like_it 1\n", 2, "the terms are: zeta, lap_zeta"},
    {UNITS "0 lap_q 1\n", 2, "layer '0' is not 'all' or a whole number from 1 to 2"},
    {UNITS "\n3 lap_q 1\n", 3, "layer '3' is not"},
    {UNITS "top lap_q 1\n", 2, "layer 'top' is not"},
    {UNITS "1 lap_q abc\n", 2, "coefficient 'abc' of lap_q is not a finite real number"},
    {UNITS "1 lap_q nan\n", 2, "coefficient 'nan'"},
    {UNITS "1 lap_q 1e999\n", 2, "coefficient '1e999'"},
    {UNITS "1 lap_q 1 -2\n", 2, "std '-2' of lap_q is not a finite real number >= 0"},
    {UNITS "1 lap_q 1 x\n", 2, "std 'x'"},
    {UNITS "1 lap_q 1\n2 lap_q 1\n1 lap_q 2\n", 4, "lap_q for layer 1 is already given at line 2"},
    {UNITS "all lap_q 1\n2 lap_q 2\n", 3, "lap_q for layer 2 is already given at line 2"},
    {UNITS "2 lap_q 1\nall lap_q 2\n", 3, "lap_q for all layers is already given at line 2"},
    {UNITS "1 lap_q\n", 2, "expected 'layer term coefficient [std]', got 2 fields"},
    {UNITS "1 lap_q 1 2 3\n", 2, "got 5 fields"},
    {"# header without units\n1 lap_q 1\n", 2, "a coefficient before the units line"},
    {"# units: m2 s-1\n1 lap_q 1\n", 1, "unsupported units line '# units: m2 s-1'"},
    {UNITS "1 lap_q 1\n" UNITS, 3, "the units line must come before the first coefficient"},
    {UNITS "# nothing else\n", 0, "no coefficients"},
    {"# only a comment\n", 0, "no units line"},
};

START_TEST(test_read_errors)
{
    const bad_case *c = &bad[_i];
    char path[512], name[32], want[600];
    snprintf(name, sizeof name, "bad%d", _i);
    write_file(name, c->text, path, sizeof path);
    tg_coef_list l;
    tg_status st;
    tg_status_clear(&st);
    ck_assert_int_eq(tg_coef_read(path, 2, &l, &st), TG_ERR_CONFIG);
    ck_assert_int_eq(l.n, 0);
    ck_assert_ptr_null(l.e);
    if (c->line > 0)
        snprintf(want, sizeof want, "%s:%d: ", path, c->line);
    else
        snprintf(want, sizeof want, "%s: ", path);
    ck_assert_msg(strncmp(st.msg, want, strlen(want)) == 0, "case %d: message '%s' should start '%s'",
                  _i, st.msg, want);
    ck_assert_msg(strstr(st.msg, c->phrase) != NULL, "case %d: message '%s' lacks '%s'", _i,
                  st.msg, c->phrase);
}
END_TEST

START_TEST(test_read_missing)
{
    char path[512];
    snprintf(path, sizeof path, "%s/coef_does_not_exist.txt", tmpdir());
    remove(path);
    tg_coef_list l;
    tg_status st;
    ck_assert_int_eq(tg_coef_read(path, 2, &l, &st), TG_ERR_CONFIG);
    ck_assert_ptr_nonnull(strstr(st.msg, "cannot open the coefficients file"));
    ck_assert_ptr_nonnull(strstr(st.msg, path));
}
END_TEST

/* A bad file stops the model's creation with the reader's message; a
 * missing `file` key is refused by the config check. */
START_TEST(test_model_errors)
{
    char path[512], set[600];
    write_file("model_bad", UNITS "1 lap_zeta 1\n1 lap_zetta 2\n", path, sizeof path);
    snprintf(set, sizeof set, "coefficients.file=%s", path);
    tg_config cfg;
    tg_status st;
    const char *more[] = {set, NULL};
    make_config(&cfg, 0, "coefficients", more);
    ck_assert_ptr_null(tg_model_create(&cfg, &st));
    ck_assert_int_eq(st.code, TG_ERR_CONFIG);
    char want[600];
    snprintf(want, sizeof want, "%s:3: ", path);
    ck_assert_msg(strstr(st.msg, want) && strstr(st.msg, "did you mean lap_zeta"), "%s", st.msg);

    tg_config_defaults(&cfg);
    ck_assert(tg_config_set(&cfg, "closure.use=coefficients", &st) == TG_OK);
    ck_assert_int_eq(tg_config_check(&cfg, NULL, &st), TG_ERR_CONFIG);
    ck_assert_msg(strstr(st.msg, "[coefficients] file is required"), "%s", st.msg);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* The tendency                                                             */
/* ---------------------------------------------------------------------- */

/* One term, different coefficients in the two layers: tend = c_k * term_k. */
static void check_one_term(int periodic, int term)
{
    const char *name = tg_basis_term_at(term)->name;
    const double c[2] = {0.75, -1.25};
    char text[256];
    snprintf(text, sizeof text, UNITS "1 %s %.17g\n2 %s %.17g\n", name, c[0], name, c[1]);
    tg_model *m = coef_model(periodic, "one", text, NULL);
    const double *T = eval_closure(m);
    double *t = calloc((size_t)m->npl, sizeof(double));
    ck_assert_ptr_nonnull(t);
    const tg_geometry *g = m->geom;
    const int grouped = !strcmp(name, "lap_zeta");
    for (int k = 0; k < 2; k++) {
        term_of(m, term, k, t);
        const double scale = c[k] == 0.0 ? 1.0 : fabs(c[k]) * tg_unit_max_abs(m, t, 0) + 1e-300;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                const long p = (long)j * g->ns + i;
                const double want = c[k] * t[p], got = T[k * m->npl + p];
                if (grouped)
                    ck_assert_msg(fabs(got - want) <= 4e-16 * scale + 4e-16 * fabs(want),
                                  "%s layer %d node (%d,%d): %.17g vs %.17g", name, k + 1, i, j,
                                  got, want);
                else
                    ck_assert_msg(got == want, "%s layer %d node (%d,%d): %.17g vs %.17g", name,
                                  k + 1, i, j, got, want);
            }
        ck_assert_msg(tg_unit_max_abs(m, T, k) > 0.0, "%s: zero tendency in layer %d", name, k + 1);
    }
    free(t);
    tg_model_destroy(m);
}

START_TEST(test_coef_times_term_basin)
{
    check_one_term(0, _i);
}
END_TEST

START_TEST(test_coef_times_term_periodic)
{
    check_one_term(1, _i);
}
END_TEST

/* A file with several terms gives the sum of the one-term tendencies. */
START_TEST(test_sum_of_terms)
{
    const char *lines[] = {"all lap_zeta 300\n", "all lap2_zeta -2e9\n", "1 jac_psi_lapq 1e7\n",
                           "all div_gradu_gradq -8e6\n", "2 curl_div_zeta_deform 3e6\n",
                           "1 div_strain_gradzeta 1e8\n"};
    enum { NL = 6 };
    char all[1024] = UNITS;
    for (int i = 0; i < NL; i++)
        strcat(all, lines[i]);
    tg_model *m = coef_model(0, "sum", all, NULL);
    const long n = 2 * m->npl;
    double *T = malloc(sizeof(double) * (size_t)n), *S = calloc((size_t)n, sizeof(double));
    ck_assert(T && S);
    memcpy(T, eval_closure(m), sizeof(double) * (size_t)n);
    for (int i = 0; i < NL; i++) {
        char one[256] = UNITS;
        strcat(one, lines[i]);
        tg_model *mi = coef_model(0, "sum_one", one, NULL);
        const double *Ti = eval_closure(mi);
        for (long p = 0; p < n; p++)
            S[p] += Ti[p];
        tg_model_destroy(mi);
    }
    for (int k = 0; k < 2; k++) {
        const double ref = tg_unit_max_abs(m, S, k);
        ck_assert(ref > 0.0);
        for (long p = k * m->npl; p < (k + 1) * m->npl; p++)
            ck_assert_msg(fabs(T[p] - S[p]) <= 1e-13 * ref, "layer %d: %.17g vs %.17g", k + 1,
                          T[p], S[p]);
    }
    free(T);
    free(S);
    tg_model_destroy(m);
}
END_TEST

/* A line for layer 1 leaves layer 2 at zero; coefficient_scale multiplies. */
START_TEST(test_layers_and_scale)
{
    tg_model *m = coef_model(0, "layer", UNITS "1 lap_q 200\n1 jac_psi_lapzeta 5e6\n", NULL);
    const double *T = eval_closure(m);
    ck_assert(tg_unit_max_abs(m, T, 0) > 0.0);
    ck_assert(tg_unit_max_abs(m, T, 1) == 0.0);
    const long n = 2 * m->npl;
    double *T1 = malloc(sizeof(double) * (size_t)n);
    ck_assert_ptr_nonnull(T1);
    memcpy(T1, T, sizeof(double) * (size_t)n);
    const char *more[] = {"coefficients.coefficient_scale=2", NULL};
    tg_model *m2 = coef_model(0, "layer", UNITS "1 lap_q 200\n1 jac_psi_lapzeta 5e6\n", more);
    const double *T2 = eval_closure(m2);
    for (long p = 0; p < n; p++)
        ck_assert_msg(T2[p] == 2.0 * T1[p], "scale 2 at %ld: %.17g vs %.17g", p, T2[p], T1[p]);
    free(T1);
    tg_model_destroy(m);
    tg_model_destroy(m2);
}
END_TEST

/* `all lap_zeta A2` [+ `all lap2_zeta -A4`] against the scheme viscosity:
 * tendency, state after 12 steps and the budget rates, bitwise. */
static void check_viscosity_twin(int periodic, double A2, double A4)
{
    char text[256], a2[64], a4[64];
    if (A4 != 0.0)
        snprintf(text, sizeof text, UNITS "all lap_zeta %.17g\nall lap2_zeta %.17g\n", A2, -A4);
    else
        snprintf(text, sizeof text, UNITS "all lap_zeta %.17g\n", A2);
    snprintf(a2, sizeof a2, "viscosity.viscosity_m2_per_s=%.17g", A2);
    snprintf(a4, sizeof a4, "viscosity.hyperviscosity_m4_per_s=%.17g", A4);
    const char *vmore[] = {a2, a4, NULL};
    tg_model *mc = coef_model(periodic, "twin", text, NULL);
    tg_model *mv = make_model(periodic, "viscosity", vmore);
    const long n = 2 * mc->npl;
    ck_assert(memcmp(mc->q, mv->q, sizeof(double) * (size_t)n) == 0);
    const double *Tc = eval_closure(mc);
    const double *Tv = eval_closure(mv);
    ck_assert(tg_unit_max_abs(mc, Tc, 0) > 0.0);
    for (long p = 0; p < n; p++)
        ck_assert_msg(Tc[p] == Tv[p], "tendency at %ld: %.17g vs %.17g", p, Tc[p], Tv[p]);
    tg_status st;
    for (int s = 0; s < 12; s++) {
        tg_term_rates rc, rv;
        ck_assert_msg(tg_step(mc, &rc, &st) == TG_OK, "%s", st.msg);
        ck_assert_msg(tg_step(mv, &rv, &st) == TG_OK, "%s", st.msg);
        ck_assert_msg(rc.comp_energy[0] == rv.comp_energy[0], "step %d: energy rate %.17g vs %.17g",
                      s, rc.comp_energy[0], rv.comp_energy[0]);
        for (int k = 0; k < 2; k++)
            ck_assert(rc.comp_enstrophy[0][k] == rv.comp_enstrophy[0][k]);
        for (int t = 0; t < TG_NTERMS; t++)
            ck_assert(rc.energy[t] == rv.energy[t]);
    }
    ck_assert(memcmp(mc->q, mv->q, sizeof(double) * (size_t)n) == 0);
    ck_assert(memcmp(mc->psi, mv->psi, sizeof(double) * (size_t)n) == 0);
    tg_model_destroy(mc);
    tg_model_destroy(mv);
}

START_TEST(test_viscosity_twin)
{
    check_viscosity_twin(0, 300.0, 0.0);
    check_viscosity_twin(1, 300.0, 0.0);
    check_viscosity_twin(0, 300.0, 2e10);
    check_viscosity_twin(1, 0.0, 5e9);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Sampling                                                                 */
/* ---------------------------------------------------------------------- */

static const char *sample_text = UNITS "all lap2_zeta -1e10 2e9\n1 lap_q 100\n";

/* The lap2_zeta coefficient (layer k) and the lap_q coefficient (layer 1)
 * of a member, read back from the tendency. */
static void member_coefs(int member, const char *seed, int sample, double *c4, double *cq)
{
    char smp[32];
    snprintf(smp, sizeof smp, "coefficients.sample=%s", sample ? "true" : "false");
    char path[512], set[600];
    write_file("sample", sample_text, path, sizeof path);
    snprintf(set, sizeof set, "coefficients.file=%s", path);
    const char *all[] = {set, smp, seed, NULL};
    tg_config cfg;
    tg_status st;
    make_config(&cfg, 0, "coefficients", all);
    cfg.member = member;
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "%s", st.msg);
    tg_model_set_noise(m, 2.0e4, 5);
    const double *T = eval_closure(m);
    /* Layer 2 has lap2_zeta only; layer 1 has both terms, read by a
     * two-term least-squares fit. */
    *c4 = fitted_coef(m, T, tg_basis_find("lap2_zeta"), 1);
    double *t4 = calloc((size_t)m->npl, sizeof(double)), *tq = calloc((size_t)m->npl, sizeof(double));
    ck_assert(t4 && tq);
    term_of(m, tg_basis_find("lap2_zeta"), 0, t4);
    term_of(m, tg_basis_find("lap_q"), 0, tq);
    double a11 = 0.0, a12 = 0.0, a22 = 0.0, b1 = 0.0, b2 = 0.0;
    const tg_geometry *g = m->geom;
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++) {
            const long p = (long)j * g->ns + i;
            a11 += t4[p] * t4[p];
            a12 += t4[p] * tq[p];
            a22 += tq[p] * tq[p];
            b1 += t4[p] * T[p];
            b2 += tq[p] * T[p];
        }
    const double det = a11 * a22 - a12 * a12;
    ck_assert(det > 0.0);
    const double c41 = (b1 * a22 - b2 * a12) / det;
    *cq = (a11 * b2 - a12 * b1) / det;
    ck_assert_msg(fabs(c41 - *c4) <= 1e-6 * fabs(*c4), "an `all` line draws one value: %g vs %g",
                  c41, *c4);
    free(t4);
    free(tq);
    tg_model_destroy(m);
}

START_TEST(test_sample_members)
{
    double a4, aq, b4, bq, c4, cq, d4, dq, e4, eq;
    member_coefs(3, "initial.seed=11", 1, &a4, &aq);
    member_coefs(3, "initial.seed=11", 1, &b4, &bq);
    member_coefs(4, "initial.seed=11", 1, &c4, &cq);
    member_coefs(3, "initial.seed=12", 1, &d4, &dq);
    member_coefs(3, "initial.seed=11", 0, &e4, &eq);
    ck_assert_msg(a4 == b4 && aq == bq, "member 3 twice: %.17g %.17g", a4, b4);
    ck_assert_msg(fabs(a4 - c4) > 1e-6 * 2e9, "members 3 and 4 drew %.17g and %.17g", a4, c4);
    ck_assert_msg(fabs(a4 - d4) > 1e-6 * 2e9, "seeds 11 and 12 drew %.17g and %.17g", a4, d4);
    /* No std on the lap_q line: its value stays. */
    ck_assert_msg(fabs(aq - 100.0) < 1e-8 && fabs(cq - 100.0) < 1e-8, "lap_q %.17g %.17g", aq, cq);
    /* sample = false: the mean. */
    ck_assert_msg(fabs(e4 + 1e10) <= 1e-9 * 1e10, "sample=false gave %.17g", e4);
}
END_TEST

/* 64 members: mean within 4 standard errors (4 * 2e9 / 8 = 1e9) of -1e10,
 * sample standard deviation within 40% of 2e9 (its standard error is
 * about 9%; common practice). */
START_TEST(test_sample_distribution)
{
    enum { NM = 64 };
    double s = 0.0, s2 = 0.0;
    for (int mb = 0; mb < NM; mb++) {
        double c4, cq;
        member_coefs(mb, "initial.seed=2024", 1, &c4, &cq);
        s += c4;
        s2 += c4 * c4;
    }
    const double mean = s / NM, sd = sqrt((s2 - NM * mean * mean) / (NM - 1));
    ck_assert_msg(fabs(mean + 1e10) < 1e9, "mean of draws %.6g", mean);
    ck_assert_msg(sd > 0.6 * 2e9 && sd < 1.4 * 2e9, "std of draws %.6g", sd);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("closure_coefficients");
    TCase *tc = tcase_create("coefficients");
    tcase_set_timeout(tc, 600);
    tcase_add_test(tc, test_read_good);
    tcase_add_loop_test(tc, test_read_errors, 0, (int)(sizeof bad / sizeof bad[0]));
    tcase_add_test(tc, test_read_missing);
    tcase_add_test(tc, test_model_errors);
    tcase_add_loop_test(tc, test_coef_times_term_basin, 0, tg_basis_count());
    tcase_add_loop_test(tc, test_coef_times_term_periodic, 0, tg_basis_count());
    tcase_add_test(tc, test_sum_of_terms);
    tcase_add_test(tc, test_layers_and_scale);
    tcase_add_test(tc, test_viscosity_twin);
    tcase_add_test(tc, test_sample_members);
    tcase_add_test(tc, test_sample_distribution);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(suite());
}
