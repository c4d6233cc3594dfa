/* test_plugin.c - unit tests of closure plugins (tg_closure_load_plugin in
 * src/model/closure_host.c, the example closures/examples/example_plugin.c).
 *
 * Checks:
 *   - the example plugin `example_viscosity`, loaded through the config
 *     ([closure] use = plugin:PATH, parameters in [plugin.example_viscosity]),
 *     gives the tendency, the model state after steps and the budget rates
 *     of the built-in scheme `viscosity` with the same parameters, bit for
 *     bit, in a basin and in the periodic domain (both call the same
 *     viscosity tool; Smagorinsky 1963 / Holland 1978 for the physics);
 *   - its parameters are validated like a built-in scheme's;
 *   - a missing file, a shared object without twingyre_closure_entry and a
 *     plugin built for another interface version are config errors whose
 *     messages say which.
 * The plugins are the libtool modules that `make check` builds; the test
 * finds them from TG_BUILDDIR and the dlname in their .la files. A build
 * without shared objects (./configure --disable-shared) has none: the test
 * then reports SKIP (exit 77).
 * A Check suite with its own main().
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "closure_host.h"
#include "model.h"
#include "stepper.h"
#include "twingyre.h"
#include "unit_util.h"

#include <check.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static char example_so[1024], noentry_so[1024], badabi_so[1024];

static const char *tmpdir(void)
{
    const char *d = getenv("TG_TEST_TMPDIR");
    return (d && d[0]) ? d : ".";
}

/* DIR/.libs/DLNAME from DIR/NAME.la; 0 when there is no shared object. */
static int module_path(const char *la_dir, const char *la_name, char *out, size_t n)
{
    const char *b = getenv("TG_BUILDDIR");
    char la[1024];
    snprintf(la, sizeof la, "%s/%s/%s.la", (b && b[0]) ? b : ".", la_dir, la_name);
    FILE *f = fopen(la, "r");
    if (!f) {
        fprintf(stderr, "test_plugin: cannot read %s (run through `make check`)\n", la);
        return -1;
    }
    char line[1024], dl[512] = "";
    while (fgets(line, sizeof line, f))
        if (sscanf(line, "dlname='%511[^']'", dl) == 1)
            break;
    fclose(f);
    if (dl[0] == '\0')
        return 0;
    snprintf(out, n, "%s/%s/.libs/%s", (b && b[0]) ? b : ".", la_dir, dl);
    return 1;
}

/* Writes an INI file (the plugin's section cannot be given with --set)
 * and loads it; `body` holds the [closure] and plugin sections. */
static tg_code load_config(const char *name, int periodic, const char *body, tg_config *cfg,
                           tg_status *st, char *path, size_t n)
{
    snprintf(path, n, "%s/plugin_%s.ini", tmpdir(), name);
    FILE *f = fopen(path, "w");
    ck_assert_msg(f != NULL, "cannot write %s", path);
    if (periodic)
        fputs("[grid]\ngeometry = periodic\npoints = 32\n[wind]\nprofile = none\n"
              "[background]\nzonal_velocity_m_s = 0.05, 0\n",
              f);
    else
        fputs("[grid]\npoints = 33\n", f);
    fputs(body, f);
    fclose(f);
    tg_config_defaults(cfg);
    tg_code rc = tg_config_load_file(cfg, path, st);
    if (rc != TG_OK)
        return rc;
    return tg_config_check(cfg, path, st);
}

static tg_model *create(const tg_config *cfg)
{
    tg_status st;
    tg_model *m = tg_model_create(cfg, &st);
    ck_assert_msg(m != NULL, "model: %s", st.msg);
    tg_model_set_noise(m, 2.0e4, 9);
    return m;
}

static const double *eval_closure(tg_model *m)
{
    tg_status st;
    tg_closure_input in = {m->psi, m->q, m->zeta, m->wall, m->step, 0};
    ck_assert_msg(tg_closure_host_eval(m->closures, &in, &st) == TG_OK, "eval: %s", st.msg);
    return tg_closure_host_tend(m->closures, 0);
}

static void check_twin(int periodic, double A2, double A4)
{
    char body[2048], path[1024];
    tg_config cp, cv;
    tg_status st;
    snprintf(body, sizeof body,
             "[closure]\nuse = plugin:%s\n[plugin.example_viscosity]\n"
             "viscosity_m2_per_s = %.17g\nhyperviscosity_m4_per_s = %.17g\n",
             example_so, A2, A4);
    ck_assert_msg(load_config("twin_plugin", periodic, body, &cp, &st, path, sizeof path) == TG_OK,
                  "%s", st.msg);
    snprintf(body, sizeof body,
             "[closure]\nuse = viscosity\n[viscosity]\n"
             "viscosity_m2_per_s = %.17g\nhyperviscosity_m4_per_s = %.17g\n",
             A2, A4);
    ck_assert_msg(load_config("twin_builtin", periodic, body, &cv, &st, path, sizeof path) == TG_OK,
                  "%s", st.msg);
    tg_model *mp = create(&cp), *mv = create(&cv);
    ck_assert_str_eq(tg_closure_host_label(mp->closures, 0), "example_viscosity");
    ck_assert_str_eq(tg_closure_host_label(mv->closures, 0), "viscosity");
    const long n = (long)mp->nl * mp->npl;
    const double *Tp = eval_closure(mp), *Tv = eval_closure(mv);
    int nonzero = 0;
    for (long p = 0; p < n; p++) {
        ck_assert_msg(Tp[p] == Tv[p], "tendency at %ld: %.17g vs %.17g", p, Tp[p], Tv[p]);
        nonzero |= Tp[p] != 0.0;
    }
    ck_assert(nonzero);
    for (int s = 0; s < 15; s++) {
        tg_term_rates rp, rv;
        ck_assert_msg(tg_step(mp, &rp, &st) == TG_OK, "%s", st.msg);
        ck_assert_msg(tg_step(mv, &rv, &st) == TG_OK, "%s", st.msg);
        ck_assert_msg(rp.comp_energy[0] == rv.comp_energy[0],
                      "step %d: closure energy rate %.17g vs %.17g", s, rp.comp_energy[0],
                      rv.comp_energy[0]);
        ck_assert(rp.comp_energy[0] < 0.0); /* viscosity removes energy */
        for (int k = 0; k < mp->nl; k++)
            ck_assert(rp.comp_enstrophy[0][k] == rv.comp_enstrophy[0][k]);
        for (int t = 0; t < TG_NTERMS; t++) {
            ck_assert(rp.energy[t] == rv.energy[t]);
            for (int k = 0; k < mp->nl; k++)
                ck_assert(rp.enstrophy[t][k] == rv.enstrophy[t][k]);
        }
    }
    ck_assert(memcmp(mp->q, mv->q, sizeof(double) * (size_t)n) == 0);
    ck_assert(memcmp(mp->psi, mv->psi, sizeof(double) * (size_t)n) == 0);
    tg_model_destroy(mp);
    tg_model_destroy(mv);
}

START_TEST(test_example_equals_builtin)
{
    check_twin(0, 300.0, 0.0);
    check_twin(0, 150.0, 3e9);
    check_twin(1, 300.0, 1e9);
}
END_TEST

/* The plugin's section is checked against its parameter table. */
START_TEST(test_example_parameters)
{
    char body[2048], path[1024];
    tg_config cfg;
    tg_status st;
    snprintf(body, sizeof body,
             "[closure]\nuse = plugin:%s\n[plugin.example_viscosity]\nviscosity_m2_per_sec = 3\n",
             example_so);
    ck_assert_int_eq(load_config("param", 0, body, &cfg, &st, path, sizeof path), TG_ERR_CONFIG);
    ck_assert_msg(strstr(st.msg, "did you mean [plugin.example_viscosity] viscosity_m2_per_s?"),
                  "%s", st.msg);
    snprintf(body, sizeof body,
             "[closure]\nuse = plugin:%s\n[plugin.example_viscosity]\nviscosity_m2_per_s = -1\n",
             example_so);
    ck_assert_int_eq(load_config("param", 0, body, &cfg, &st, path, sizeof path), TG_ERR_CONFIG);
    ck_assert_msg(strstr(st.msg, "expected a real number from 0 to"), "%s", st.msg);
    /* Defaults when the section is absent. */
    snprintf(body, sizeof body, "[closure]\nuse = plugin:%s\n", example_so);
    ck_assert_msg(load_config("param", 0, body, &cfg, &st, path, sizeof path) == TG_OK, "%s",
                  st.msg);
    tg_closure_spec *spec = malloc(sizeof *spec);
    ck_assert_ptr_nonnull(spec);
    ck_assert(tg_closure_spec_resolve(&cfg, path, spec, &st) == TG_OK);
    ck_assert_int_eq(spec->n, 1);
    ck_assert_str_eq(spec->c[0].section, "plugin.example_viscosity");
    ck_assert(spec->c[0].params[0] == 500.0 && spec->c[0].params[1] == 0.0);
    free(spec);
}
END_TEST

static void expect_load_error(const char *what, const char *so, const char *phrase)
{
    char body[2048], path[1024];
    tg_config cfg;
    tg_status st;
    snprintf(body, sizeof body, "[closure]\nuse = plugin:%s\n", so);
    ck_assert_int_eq(load_config(what, 0, body, &cfg, &st, path, sizeof path), TG_ERR_CONFIG);
    ck_assert_msg(strstr(st.msg, phrase) != NULL, "%s: message '%s' lacks '%s'", what, st.msg,
                  phrase);
    ck_assert_msg(strstr(st.msg, so) != NULL, "%s: message '%s' does not name %s", what, st.msg,
                  so);
    /* The message points at the config line. */
    ck_assert_msg(strstr(st.msg, path) != NULL, "%s: message '%s' does not name %s", what, st.msg,
                  path);
}

START_TEST(test_missing_file)
{
    char so[1024];
    snprintf(so, sizeof so, "%s/no_such_plugin.so", tmpdir());
    remove(so);
    expect_load_error("missing", so, "cannot load closure plugin");
}
END_TEST

START_TEST(test_no_entry)
{
    expect_load_error("noentry", noentry_so, "has no function twingyre_closure_entry()");
}
END_TEST

START_TEST(test_abi_mismatch)
{
    char phrase[128];
    snprintf(phrase, sizeof phrase, "built for interface version %d (this program has %d)",
             TG_CLOSURE_ABI + 1000, TG_CLOSURE_ABI);
    expect_load_error("badabi", badabi_so, phrase);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("plugin");
    TCase *tc = tcase_create("plugin");
    tcase_set_timeout(tc, 600);
    tcase_add_test(tc, test_example_equals_builtin);
    tcase_add_test(tc, test_example_parameters);
    tcase_add_test(tc, test_missing_file);
    tcase_add_test(tc, test_no_entry);
    tcase_add_test(tc, test_abi_mismatch);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    const int a = module_path("closures/examples", "example_plugin", example_so, sizeof example_so);
    const int b = module_path("tests/unit", "plugin_noentry", noentry_so, sizeof noentry_so);
    const int c = module_path("tests/unit", "plugin_badabi", badabi_so, sizeof badabi_so);
    if (a < 0 || b < 0 || c < 0)
        return 1;
    if (a == 0 || b == 0 || c == 0) {
        printf("SKIP: this build makes no shared objects (--disable-shared), so no plugins\n");
        return 77;
    }
    return tg_unit_run(suite());
}
