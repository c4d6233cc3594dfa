/* test_config_rules.c - unit tests of the one validation entry
 * (tg_config_validate) and of the rules issues 16 and 17 asked for: ranges
 * a user could mean, quantities derived from several keys, defaults that
 * follow other keys, the [twin] and [vet] rules applied by every command,
 * the closure checks installed through config_hooks.h, and warnings given
 * once (never for a resolved config read back).
 *
 * These checks rest on the config interface's own specification (key
 * ranges, message format) and on common practice, not on published
 * results; the one physical bound (the RK3 step's stability limit) is
 * cited beside its rule in src/files/config_check.c.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#define _POSIX_C_SOURCE 200809L

#include <check.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "config.h"
#include "config_hooks.h"
#include "status.h"
#include "unit_util.h"

static char g_dir[256];

/* Counts warnings and keeps the last one. */
static int g_warnings;
static char g_last[TG_MSG_LEN];
static void count_log(tg_log_level level, const char *line, void *user)
{
    (void)user;
    if (level == TG_LOG_WARN) {
        g_warnings++;
        snprintf(g_last, sizeof g_last, "%s", line);
    }
}

static void write_file(const char *name, const char *text, char *path, size_t n)
{
    snprintf(path, n, "%s/%s", g_dir, name);
    FILE *f = fopen(path, "wb");
    ck_assert_msg(f != NULL, "cannot create %s", path);
    ck_assert_uint_eq(fwrite(text, 1, strlen(text), f), strlen(text));
    ck_assert_int_eq(fclose(f), 0);
}

/* defaults -> text (may be NULL) -> each --set; the status of the reading. */
static tg_code read_cfg(tg_config *cfg, const char *text, const char *const *sets, int nsets,
                        tg_status *st)
{
    tg_config_defaults(cfg);
    tg_status_clear(st);
    tg_code rc = text ? tg_config_load_text(cfg, text, "test.ini", st) : TG_OK;
    for (int i = 0; i < nsets && rc == TG_OK; i++)
        rc = tg_config_set(cfg, sets[i], st);
    return rc;
}

static void assert_has(const char *msg, const char *needle)
{
    ck_assert_msg(strstr(msg, needle) != NULL, "message \"%s\" lacks \"%s\"", msg, needle);
}

/* One --set that must be refused as it is read, naming the key and `why`. */
static void set_refused(const char *assignment, const char *why)
{
    tg_config cfg;
    tg_status st;
    ck_assert_msg(read_cfg(&cfg, NULL, &assignment, 1, &st) == TG_ERR_CONFIG,
                  "%s was accepted", assignment);
    assert_has(st.msg, assignment);
    assert_has(st.msg, why);
}

/* A config that reads but that validation for `uses` must refuse with a
 * message holding `n1`. */
static void validate_refused(const char *text, const char *const *sets, int nsets, unsigned uses,
                             tg_code code, const char *n1)
{
    tg_config cfg;
    tg_status st;
    ck_assert_msg(read_cfg(&cfg, text, sets, nsets, &st) == TG_OK, "read: %s", st.msg);
    tg_code rc = tg_config_validate(&cfg, uses, "test.ini", &st);
    ck_assert_msg(rc == code, "expected code %d, got %d (%s)", code, rc, st.msg);
    assert_has(st.msg, n1);
}

static tg_code validate_ok(const char *text, const char *const *sets, int nsets, unsigned uses,
                           tg_config *cfg, tg_status *st)
{
    ck_assert_msg(read_cfg(cfg, text, sets, nsets, st) == TG_OK, "read: %s", st->msg);
    return tg_config_validate(cfg, uses, "test.ini", st);
}

/* Issue 17, part 2: values that passed the config and broke the run. */
START_TEST(test_ranges_a_user_could_mean)
{
    set_refused("time.duration_days=1e308", "at most 1e6");
    set_refused("time.step_s=1e-300", "from 1e-3 to 1e7");
    set_refused("planet.coriolis_f0_per_s=-1e308", "magnitude from 1e-7 to 1e-2");
    set_refused("planet.coriolis_f0_per_s=1e-300", "magnitude from 1e-7 to 1e-2");
    set_refused("planet.coriolis_f0_per_s=1.8e19", "magnitude from 1e-7 to 1e-2");
    set_refused("planet.beta_per_m_per_s=65537", "at most 1e-9");
    set_refused("dissipation.viscosity_m2_per_s=1e308", "at most 1e6");
    set_refused("layers.thickness_m=1e300, 1000", "at most 12000");
    /* The values the shipped configs use still read. */
    tg_config cfg;
    tg_status st;
    const char *ok[] = {"planet.coriolis_f0_per_s=-7.2921e-5", "planet.beta_per_m_per_s=2.2e-11",
                        "time.step_s=900", "time.duration_days=3650"};
    ck_assert_msg(validate_ok(NULL, ok, 4, TG_USE_RUN, &cfg, &st) == TG_OK, "%s", st.msg);
}
END_TEST

/* Issue 17, part 2: quantities derived from several keys, checked at
 * config time with the key's place and exit status 2. */
START_TEST(test_derived_quantities)
{
    /* 1e6 days in steps of 1 ms: 8.6e16 steps. */
    const char *many[] = {"time.duration_days=1e6", "time.step_s=1e-3"};
    validate_refused(NULL, many, 2, TG_USE_RUN, TG_ERR_CONFIG, "steps; at most 1e+09");
    validate_refused("[time]\nduration_days = 1e6\nstep_s = 0.001\n", NULL, 0, TG_USE_RUN,
                     TG_ERR_CONFIG, "test.ini:2: [time] duration_days:");
    /* A viscosity in range that no explicit step of this grid survives. */
    const char *visc[] = {"grid.points=4097", "dissipation.viscosity_m2_per_s=1e6"};
    validate_refused(NULL, visc, 2, TG_USE_RUN, TG_ERR_CONFIG,
                     "--set dissipation.viscosity_m2_per_s=1000000: the explicit step is unstable");
    const char *hyper[] = {"dissipation.hyperviscosity_m4_per_s=1e16"};
    validate_refused(NULL, hyper, 1, TG_USE_RUN, TG_ERR_CONFIG,
                     "hyperviscosity_m4_per_s=1e+16: the explicit step is unstable");
    /* Near the limit is left to the run (the test of the 4097-point grid
     * in test_config keeps passing). */
    tg_config cfg;
    tg_status st;
    const char *fine[] = {"grid.points=4097"};
    ck_assert_msg(validate_ok(NULL, fine, 1, TG_USE_RUN, &cfg, &st) == TG_OK, "%s", st.msg);
}
END_TEST

/* Issue 16: a default is never the cause of an error. */
START_TEST(test_defaults_follow_other_keys)
{
    tg_config cfg;
    tg_status st;
    /* One layer: no interface, no reduced gravity. */
    ck_assert_msg(validate_ok("[layers]\nthickness_m = 4000\n", NULL, 0, TG_USE_RUN, &cfg, &st) ==
                      TG_OK, "%s", st.msg);
    ck_assert_int_eq(cfg.n_reduced_gravity, 0);
    /* Two layers: the documented 0.02. */
    ck_assert_msg(validate_ok("[layers]\nthickness_m = 500, 3500\n", NULL, 0, TG_USE_RUN, &cfg,
                              &st) == TG_OK, "%s", st.msg);
    ck_assert_int_eq(cfg.n_reduced_gravity, 1);
    ck_assert(cfg.reduced_gravity_m_s2[0] == 0.02);
    /* The same through --set, and back to one layer. */
    const char *back[] = {"layers.thickness_m=500, 1000, 2500", "layers.thickness_m=4000"};
    ck_assert_msg(validate_ok(NULL, back, 2, TG_USE_RUN, &cfg, &st) == TG_OK, "%s", st.msg);
    ck_assert_int_eq(cfg.n_reduced_gravity, 0);
    /* A periodic domain: periodic grid sizes and no wind. */
    ck_assert_msg(validate_ok("[grid]\ngeometry = periodic\n", NULL, 0, TG_USE_RUN, &cfg, &st) ==
                      TG_OK, "%s", st.msg);
    ck_assert_int_eq(cfg.points, 128);
    ck_assert_int_eq(cfg.wind_profile, TG_WIND_NONE);
    /* ... also for a twin of it. */
    ck_assert_msg(validate_ok("[grid]\ngeometry = periodic\n[twin]\nspinup_days = 100\n", NULL, 0,
                              TG_USE_TWIN, &cfg, &st) == TG_OK, "%s", st.msg);
    ck_assert_int_eq(cfg.twin_reference_points, 512);
    ck_assert_int_eq(cfg.twin_coarse_points, 128);
    /* Set keys are kept whatever the geometry. */
    ck_assert_int_eq(read_cfg(&cfg, "[grid]\npoints = 65\ngeometry = periodic\n", NULL, 0, &st),
                     TG_OK);
    ck_assert_int_eq(cfg.points, 65);
    /* vet: the required margin follows the multipliers tried. */
    ck_assert_msg(validate_ok("[closure]\nuse = smagorinsky\n[vet]\nmultipliers = 0.5, 1.5\n", NULL,
                              0, TG_USE_RUN | TG_USE_VET, &cfg, &st) == TG_OK, "%s", st.msg);
    ck_assert(cfg.vet_required_margin == 1.5);
}
END_TEST

/* Issues 16 and 17: describe (uses inferred) refuses what twin and vet refuse. */
START_TEST(test_one_validation_for_every_command)
{
    const char *cases[][2] = {
        {"twin.coarse_points=45", "--set twin.coarse_points=45: a basin needs 2^k + 1 points"},
        {"twin.coarse.grid.points=65", "cannot be overridden"},
        {"twin.compare=smagorinsky,leit", "unknown closure 'leit'; did you mean leith?"},
        {"twin.sample_every_days=7", "[twin] analysis_days"},
        {"twin.coarse.dissipation.viscosity=500", "did you mean"},
        {"twin.reference.twin.members=2", "[twin] keys cannot be overridden here"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        const char *set[] = {cases[i][0]};
        validate_refused(NULL, set, 1, 0, TG_ERR_CONFIG, cases[i][1]);
    }
    const char *margin[] = {"vet.required_margin=8"};
    validate_refused("[closure]\nuse = smagorinsky\n", margin, 1, 0, TG_ERR_CONFIG,
                     "--set vet.required_margin=8: expected at most the largest of [vet] multipliers");
    validate_refused("[vet]\nspinup_days = 10\n", NULL, 0, 0, TG_ERR_CONFIG,
                     "vet needs a closure to vet");
    validate_refused("[twin.coarse]\ngrid.points = nan\n", NULL, 0, 0, TG_ERR_CONFIG,
                     "test.ini:2: [twin.coarse] grid.points: cannot be overridden");
    validate_refused("[twin.coarse]\ndissipation.viscosity_m2_per_s = nan\n", NULL, 0, 0,
                     TG_ERR_CONFIG, "test.ini:2: [twin.coarse] dissipation.viscosity_m2_per_s:");
    const char *state[] = {"initial.state=/etc/passwd"};
    validate_refused(NULL, state, 1, 0, TG_ERR_IO, "is not a netCDF file");
    /* The uses a config shows: none of its own, a run. */
    tg_config cfg;
    tg_status st;
    ck_assert_int_eq(read_cfg(&cfg, NULL, NULL, 0, &st), TG_OK);
    ck_assert_uint_eq(tg_config_uses(&cfg), TG_USE_RUN);
    const char *both[] = {"twin.members=2", "vet.krylov_dimension=10"};
    ck_assert_int_eq(read_cfg(&cfg, NULL, both, 2, &st), TG_OK);
    ck_assert_uint_eq(tg_config_uses(&cfg), TG_USE_TWIN | TG_USE_VET);
}
END_TEST

/* Issue 17, part 6. */
START_TEST(test_closure_list_and_headers)
{
    validate_refused("[closure]\nuse = ,,,\n", NULL, 0, TG_USE_RUN, TG_ERR_CONFIG,
                     "test.ini:2: [closure] use: an empty name in the list");
    tg_config cfg;
    tg_status st;
    tg_config_defaults(&cfg);
    ck_assert_int_eq(tg_config_load_text(&cfg, "[grid] trailing\npoints = 65\n", "h.ini", &st),
                     TG_ERR_CONFIG);
    assert_has(st.msg, "h.ini:1: [grid]: unexpected text after the section header");
    ck_assert_int_eq(tg_config_load_text(&cfg, "[grid] ; a comment\npoints = 65\n", "h.ini", &st),
                     TG_OK);
    /* Issue 16: the list of sections names [closure]. */
    ck_assert_int_eq(tg_config_load_text(&cfg, "[qqqqqqqqqq]\n", "s.ini", &st), TG_ERR_CONFIG);
    assert_has(st.msg, "[closure]");
    ck_assert_int_eq(tg_config_load_text(&cfg, "[closur]\n", "s.ini", &st), TG_ERR_CONFIG);
    assert_has(st.msg, "did you mean [closure]?");
}
END_TEST

/* Issue 17, part 6: a FIFO as initial state blocked the check; now refused,
 * and so is a file that is not netCDF (for [vet] reference_state too). */
START_TEST(test_state_file_kinds)
{
    char fifo[512], text[700];
    snprintf(fifo, sizeof fifo, "%s/state.fifo", g_dir);
    ck_assert_int_eq(mkfifo(fifo, 0600), 0);
    snprintf(text, sizeof text, "[initial]\nstate = %s\n", fifo);
    validate_refused(text, NULL, 0, TG_USE_RUN, TG_ERR_CONFIG, "is not a regular file (a FIFO)");
    char path[512];
    write_file("fake.nc", "plain text, no netCDF signature\n", path, sizeof path);
    snprintf(text, sizeof text, "[vet]\nreference_state = %s\n[closure]\nuse = smagorinsky\n", path);
    validate_refused(text, NULL, 0, 0, TG_ERR_IO, "test.ini:2: [vet] reference_state:");
}
END_TEST

/* Issue 16: a warning once; a resolved config reads back silently. */
START_TEST(test_warnings_once_and_resolved_silent)
{
    tg_set_log(count_log, NULL);
    tg_config cfg;
    tg_status st;
    const char *text = "[grid]\nwall_slip_coefficient = 0.7\n[initial]\nnoise_amplitude_m2_per_s = 5\n"
                       "[twin]\nfilter = sharp\nfilter_width_factor = 3\n"
                       "[smagorinsky]\ncoefficient = 0.1\n";
    g_warnings = 0;
    ck_assert_msg(validate_ok(text, NULL, 0, 0, &cfg, &st) == TG_OK, "%s", st.msg);
    ck_assert_int_eq(g_warnings, 4);
    char *ini = tg_config_to_ini(&cfg);
    ck_assert_ptr_nonnull(ini);
    ck_assert_int_eq(g_warnings, 4); /* the dump says nothing */
    /* The unused closure section once, with its file and line. */
    g_warnings = 0;
    ck_assert_msg(validate_ok("[smagorinsky]\ncoefficient = 0.1\n", NULL, 0, TG_USE_RUN, &cfg, &st) ==
                      TG_OK, "%s", st.msg);
    ck_assert_int_eq(g_warnings, 1);
    assert_has(g_last, "test.ini:2: [smagorinsky] is ignored");
    /* A twin's check of all its runs warns once too. */
    g_warnings = 0;
    ck_assert_msg(validate_ok("[smagorinsky]\ncoefficient = 0.1\n[twin]\nspinup_days = 100\n", NULL,
                              0, TG_USE_TWIN, &cfg, &st) == TG_OK, "%s", st.msg);
    ck_assert_int_eq(g_warnings, 1);
    /* The resolved config of the first one reads back without a warning. */
    tg_config back;
    tg_config_defaults(&back);
    ck_assert_int_eq(tg_config_load_text(&back, ini, "resolved.ini", &st), TG_OK);
    g_warnings = 0;
    ck_assert_msg(tg_config_validate(&back, 0, "resolved.ini", &st) == TG_OK, "%s", st.msg);
    ck_assert_msg(g_warnings == 0, "%d warnings, the last: %s", g_warnings, g_last);
    free(ini);
    tg_set_log(NULL, NULL);
}
END_TEST

/* The closure checks reach the config layer only through the hooks. */
START_TEST(test_without_hooks)
{
    tg_config_set_hooks(NULL);
    tg_config cfg;
    tg_status st;
    tg_config_defaults(&cfg);
    ck_assert_int_eq(tg_config_load_text(&cfg, "[smagorinsky]\ncoefficient = 0.1\n", "h.ini", &st),
                     TG_ERR_CONFIG);
    assert_has(st.msg, "unknown section [smagorinsky]");
    ck_assert_int_eq(tg_config_load_text(&cfg, "[closure]\nuse = leith\n", "h.ini", &st), TG_OK);
    ck_assert_int_eq(tg_config_check(&cfg, "h.ini", &st), TG_ERR_INTERNAL);
    assert_has(st.msg, "tg_init");
    tg_init();
    ck_assert_msg(tg_config_check(&cfg, "h.ini", &st) == TG_OK, "%s", st.msg);
}
END_TEST

/* README's config reference is the key table's (tg_config_print_reference):
 * every row it prints is a line of README.md (which splits the rows into
 * one table per topic). */
START_TEST(test_readme_in_sync)
{
    const char *src = getenv("TG_SRCDIR");
    ck_assert_msg(src && *src, "TG_SRCDIR is not set (make check sets it)");
    char path[1024];
    snprintf(path, sizeof path, "%s/README.md", src);
    FILE *f = fopen(path, "rb");
    ck_assert_msg(f != NULL, "cannot open %s", path);
    static char readme[1 << 20];
    size_t n = fread(readme, 1, sizeof readme - 1, f);
    fclose(f);
    readme[n] = '\0';
    char ref[512];
    snprintf(ref, sizeof ref, "%s/reference.md", g_dir);
    f = fopen(ref, "w+");
    ck_assert_ptr_nonnull(f);
    tg_config_print_reference(f);
    rewind(f);
    char line[2048], want[2052];
    int rows = 0;
    while (fgets(line, sizeof line, f)) {
        if (rows++ < 2)
            continue; /* the header */
        snprintf(want, sizeof want, "\n%s", line);
        ck_assert_msg(strstr(readme, want) != NULL,
                      "README.md lacks the key table's row (regenerate it from "
                      "tg_config_print_reference):\n%s", line);
    }
    fclose(f);
    ck_assert_int_eq(rows, 2 + tg_config_key_count());
}
END_TEST

static Suite *rules_suite(void)
{
    Suite *s = suite_create("config_rules");
    TCase *tc = tcase_create("all");
    tcase_add_test(tc, test_ranges_a_user_could_mean);
    tcase_add_test(tc, test_derived_quantities);
    tcase_add_test(tc, test_defaults_follow_other_keys);
    tcase_add_test(tc, test_one_validation_for_every_command);
    tcase_add_test(tc, test_closure_list_and_headers);
    tcase_add_test(tc, test_state_file_kinds);
    tcase_add_test(tc, test_warnings_once_and_resolved_silent);
    tcase_add_test(tc, test_without_hooks);
    tcase_add_test(tc, test_readme_in_sync);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run_in_scratch(rules_suite(), g_dir, sizeof g_dir, "config-rules");
}
