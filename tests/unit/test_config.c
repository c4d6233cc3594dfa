/* test_config.c - unit tests of reading a config (src/files/config_*.c): defaults,
 * loading a file, every class of error message (file:line, key, "did you
 * mean"), --set overrides, the cross-key rules and the round trip through
 * tg_config_to_ini.
 *
 * These checks rest on the key specification of twingyre's config (names,
 * defaults, ranges and message format as the config interface defines
 * them), not on published results. Config files are written to a fresh
 * temporary directory that is removed at the end.
 *
 * Build by hand (from the repository root; the sources of src/base and
 * the config_*.c files of src/files):
 *   gcc -std=c11 -Wall -Wextra -O2 -Isrc -Isrc/base -Isrc/files src/base/[a-z]*.c \
 *       src/files/config_[a-z]*.c src/files/ini_lines.c tests/unit/test_config.c -linih -lm \
 *       $(pkg-config --cflags --libs check) \
 *       -o /tmp/test_config && /tmp/test_config
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#define _POSIX_C_SOURCE 200809L

#include <check.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "config.h"
#include "status.h"
#include "unit_util.h"

/* Temporary directory for the config files of this run (set in main). */
static char g_dir[256];

/* Writes `text` to g_dir/name and returns the path in `path` (size n). */
static void write_file(const char *name, const char *text, char *path, size_t n)
{
    snprintf(path, n, "%s/%s", g_dir, name);
    FILE *f = fopen(path, "wb");
    ck_assert_msg(f != NULL, "cannot create %s", path);
    size_t len = strlen(text);
    ck_assert_uint_eq(fwrite(text, 1, len, f), len);
    ck_assert_int_eq(fclose(f), 0);
}

/* Writes len bytes (which may include NUL bytes) to g_dir/name. */
static void write_bytes(const char *name, const char *bytes, size_t len, char *path, size_t n)
{
    snprintf(path, n, "%s/%s", g_dir, name);
    FILE *f = fopen(path, "wb");
    ck_assert_msg(f != NULL, "cannot create %s", path);
    ck_assert_uint_eq(fwrite(bytes, 1, len, f), len);
    ck_assert_int_eq(fclose(f), 0);
}

/* Every value field of two configs is equal (bookkeeping excluded). */
static void assert_same_values(const tg_config *a, const tg_config *b)
{
    ck_assert_int_eq(a->geometry, b->geometry);
    ck_assert(a->size_km == b->size_km);
    ck_assert_int_eq(a->points, b->points);
    ck_assert_int_eq(a->wall_condition, b->wall_condition);
    ck_assert(a->wall_slip_coefficient == b->wall_slip_coefficient);
    ck_assert_int_eq(a->nlayers, b->nlayers);
    for (int k = 0; k < a->nlayers; k++)
        ck_assert(a->thickness_m[k] == b->thickness_m[k]);
    ck_assert_int_eq(a->n_reduced_gravity, b->n_reduced_gravity);
    for (int k = 0; k < a->n_reduced_gravity; k++)
        ck_assert(a->reduced_gravity_m_s2[k] == b->reduced_gravity_m_s2[k]);
    ck_assert(a->coriolis_f0_per_s == b->coriolis_f0_per_s);
    ck_assert(a->beta_per_m_per_s == b->beta_per_m_per_s);
    ck_assert_int_eq(a->wind_profile, b->wind_profile);
    ck_assert(a->stress_amplitude_pa == b->stress_amplitude_pa);
    ck_assert(a->reference_density_kg_m3 == b->reference_density_kg_m3);
    ck_assert(a->bottom_drag_per_s == b->bottom_drag_per_s);
    ck_assert(a->viscosity_m2_per_s == b->viscosity_m2_per_s);
    ck_assert(a->hyperviscosity_m4_per_s == b->hyperviscosity_m4_per_s);
    ck_assert(a->step_s == b->step_s);
    ck_assert(a->duration_days == b->duration_days);
    ck_assert(a->max_cfl == b->max_cfl);
    ck_assert_int_eq(a->initial_kind, b->initial_kind);
    ck_assert_str_eq(a->initial_path, b->initial_path);
    ck_assert(a->noise_amplitude_m2_per_s == b->noise_amplitude_m2_per_s);
    ck_assert(a->seed == b->seed);
    ck_assert_str_eq(a->out_directory, b->out_directory);
    ck_assert(a->snapshot_every_days == b->snapshot_every_days);
    ck_assert(a->checkpoint_every_days == b->checkpoint_every_days);
    ck_assert(a->log_every_days == b->log_every_days);
}

/* Message contains `needle` (NULL needles are skipped). */
static void assert_has(const char *msg, const char *needle)
{
    if (needle)
        ck_assert_msg(strstr(msg, needle) != NULL, "message \"%s\" lacks \"%s\"", msg, needle);
}

/* Loads `text` over the defaults from file `name`; expects `code` and a
 * message starting with "PATH:LINE: " that contains n1 and n2. The config
 * must be left exactly as it was. */
static void load_expect(const char *name, const char *text, tg_code code, int line,
                        const char *n1, const char *n2)
{
    char path[512], prefix[600];
    tg_config cfg, before;
    tg_status st;
    tg_config_defaults(&cfg);
    before = cfg;
    tg_status_clear(&st);
    write_file(name, text, path, sizeof path);
    tg_code rc = tg_config_load_file(&cfg, path, &st);
    ck_assert_msg(rc == code, "%s: expected code %d, got %d (%s)", name, code, rc, st.msg);
    ck_assert_int_eq(st.code, code);
    snprintf(prefix, sizeof prefix, "%s:%d: ", path, line);
    ck_assert_msg(strncmp(st.msg, prefix, strlen(prefix)) == 0,
                  "message \"%s\" does not start with \"%s\"", st.msg, prefix);
    assert_has(st.msg, n1);
    assert_has(st.msg, n2);
    ck_assert(memcmp(&cfg, &before, sizeof cfg) == 0);
}

/* Loads a file that must be good, then runs tg_config_check on it. */
static tg_code load_and_check(const char *name, const char *text, tg_config *cfg,
                              tg_status *st, char *path, size_t n)
{
    tg_config_defaults(cfg);
    tg_status_clear(st);
    write_file(name, text, path, n);
    tg_code rc = tg_config_load_file(cfg, path, st);
    ck_assert_msg(rc == TG_OK, "%s should load: %s", name, st->msg);
    return tg_config_check(cfg, path, st);
}

/* Expects a cross-key error that starts with "PATH:LINE: " and names the key. */
static void check_expect(const char *name, const char *text, int line, const char *n1,
                         const char *n2)
{
    char path[512], prefix[600];
    tg_config cfg;
    tg_status st;
    tg_code rc = load_and_check(name, text, &cfg, &st, path, sizeof path);
    ck_assert_msg(rc == TG_ERR_CONFIG, "%s: check should fail, got %d", name, rc);
    snprintf(prefix, sizeof prefix, "%s:%d: ", path, line);
    ck_assert_msg(strncmp(st.msg, prefix, strlen(prefix)) == 0,
                  "message \"%s\" does not start with \"%s\"", st.msg, prefix);
    assert_has(st.msg, n1);
    assert_has(st.msg, n2);
}

/* Applies an override that must fail; the message starts with "--set A: ". */
static void set_expect(const char *assignment, const char *n1, const char *n2)
{
    tg_config cfg, before;
    tg_status st;
    char prefix[600];
    tg_config_defaults(&cfg);
    before = cfg;
    tg_status_clear(&st);
    tg_code rc = tg_config_set(&cfg, assignment, &st);
    ck_assert_msg(rc == TG_ERR_CONFIG, "--set %s should fail, got %d", assignment, rc);
    snprintf(prefix, sizeof prefix, "--set %s: ", assignment);
    ck_assert_msg(strncmp(st.msg, prefix, strlen(prefix)) == 0,
                  "message \"%s\" does not start with \"%s\"", st.msg, prefix);
    assert_has(st.msg, n1);
    assert_has(st.msg, n2);
    ck_assert(memcmp(&cfg, &before, sizeof cfg) == 0);
}

/* ---------------------------------------------------------------- */

START_TEST(test_defaults)
{
    tg_config cfg;
    tg_status st;
    tg_config_defaults(&cfg);
    tg_status_clear(&st);
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "defaults fail: %s", st.msg);

    /* The documented defaults of the key specification. */
    ck_assert_int_eq(cfg.geometry, TG_GEOM_BASIN);
    ck_assert(cfg.size_km == 3840.0);
    ck_assert_int_eq(cfg.points, 129);
    ck_assert_int_eq(cfg.wall_condition, TG_WALL_FREE_SLIP);
    ck_assert(cfg.wall_slip_coefficient == 0.5);
    ck_assert_int_eq(cfg.nlayers, 2);
    ck_assert(cfg.thickness_m[0] == 1000.0 && cfg.thickness_m[1] == 3000.0);
    ck_assert_int_eq(cfg.n_reduced_gravity, 1);
    ck_assert(cfg.reduced_gravity_m_s2[0] == 0.02);
    ck_assert(cfg.coriolis_f0_per_s == 9.37e-5);
    ck_assert(cfg.beta_per_m_per_s == 1.75e-11);
    ck_assert_int_eq(cfg.wind_profile, TG_WIND_DOUBLE_GYRE);
    ck_assert(cfg.stress_amplitude_pa == 0.08);
    ck_assert(cfg.reference_density_kg_m3 == 1030.0);
    ck_assert(cfg.bottom_drag_per_s == 1e-7);
    ck_assert(cfg.viscosity_m2_per_s == 200.0);
    ck_assert(cfg.hyperviscosity_m4_per_s == 0.0);
    ck_assert(cfg.step_s == 1800.0);
    ck_assert(cfg.duration_days == 360.0);
    ck_assert(cfg.max_cfl == 1.0);
    ck_assert_int_eq(cfg.initial_kind, TG_INIT_REST);
    ck_assert(cfg.noise_amplitude_m2_per_s == 1000.0);
    ck_assert(cfg.seed == 1);
    ck_assert_str_eq(cfg.out_directory, "output");
    ck_assert(cfg.snapshot_every_days == 30.0);
    ck_assert(cfg.checkpoint_every_days == 360.0);
    ck_assert(cfg.log_every_days == 30.0);
    for (int i = 0; i < TG_CONFIG_MAX_KEYS; i++)
        ck_assert_int_eq(cfg.set_by_user[i], TG_SET_DEFAULT);
}
END_TEST

START_TEST(test_key_table)
{
    int n = tg_config_key_count();
    ck_assert_int_eq(n, 51); /* 41 core and [twin] keys, 10 [vet] keys */
    ck_assert(n <= TG_CONFIG_MAX_KEYS);
    ck_assert_ptr_null(tg_config_key(-1));
    ck_assert_ptr_null(tg_config_key(n));
    for (int i = 0; i < n; i++) {
        const tg_key_info *k = tg_config_key(i);
        ck_assert_ptr_nonnull(k);
        ck_assert_int_eq(tg_config_key_index(k->section, k->key), i);
        ck_assert(k->meaning[0] && k->range[0] && k->type[0]);
        /* Re-applying the documented default over the defaults changes nothing. */
        tg_config a, b;
        tg_status st;
        char assignment[512];
        tg_config_defaults(&a);
        b = a;
        snprintf(assignment, sizeof assignment, "%s.%s=%s", k->section, k->key, k->def);
        ck_assert_msg(tg_config_set(&b, assignment, &st) == TG_OK, "%s: %s", assignment, st.msg);
        assert_same_values(&a, &b);
        ck_assert_int_eq(b.set_by_user[i], TG_SET_OPTION);
    }
    ck_assert_int_eq(tg_config_key_index("grid", "nope"), -1);
    ck_assert_int_eq(tg_config_key_index("time", "points"), -1);
}
END_TEST

START_TEST(test_good_file)
{
    const char *text =
        "\xEF\xBB\xBF; an experiment with three layers\n"       /* 1, with a byte-order mark */
        "[grid]\n"                                              /* 2 */
        "geometry = basin\n"                                    /* 3 */
        "size_km = 2000   ; smaller basin\n"                    /* 4 */
        "points = 257\r\n"                                      /* 5, CRLF */
        "wall_condition = partial_slip\n"                       /* 6 */
        "wall_slip_coefficient = 0.25\n"                        /* 7 */
        "\n"                                                    /* 8 */
        "# hash comment\n"                                      /* 9 */
        "[layers]\n"                                            /* 10 */
        "thickness_m = 500, 1250.5,2250\n"                      /* 11 */
        "reduced_gravity_m_s2 = 0.03, 1.5e-2\n"                 /* 12 */
        "[planet]\n"                                            /* 13 */
        "coriolis_f0_per_s = -1e-4\n"                           /* 14 */
        "beta_per_m_per_s = 0\n"                                /* 15 */
        "[wind]\n"                                              /* 16 */
        "profile = single_gyre\n"                               /* 17 */
        "[time]\n"                                              /* 18 */
        "step_s = 900\n"                                        /* 19 */
        "duration_days = 3650\n"                                /* 20 */
        "[initial]\n"                                           /* 21 */
        "state = noise\n"                                       /* 22 */
        "seed = 18446744073709551615\n"                         /* 23 */
        "[output]\n"                                            /* 24 */
        "directory = runs/three layers\n"                       /* 25 */
        "checkpoint_every_days = 0\n";                          /* 26 */
    char path[512];
    tg_config cfg;
    tg_status st;
    ck_assert_msg(load_and_check("good.ini", text, &cfg, &st, path, sizeof path) == TG_OK,
                  "check: %s", st.msg);
    ck_assert_int_eq(cfg.geometry, TG_GEOM_BASIN);
    ck_assert(cfg.size_km == 2000.0);
    ck_assert_int_eq(cfg.points, 257);
    ck_assert_int_eq(cfg.wall_condition, TG_WALL_PARTIAL_SLIP);
    ck_assert(cfg.wall_slip_coefficient == 0.25);
    ck_assert_int_eq(cfg.nlayers, 3);
    ck_assert(cfg.thickness_m[0] == 500.0 && cfg.thickness_m[1] == 1250.5 && cfg.thickness_m[2] == 2250.0);
    ck_assert_int_eq(cfg.n_reduced_gravity, 2);
    ck_assert(cfg.reduced_gravity_m_s2[0] == 0.03 && cfg.reduced_gravity_m_s2[1] == 1.5e-2);
    ck_assert(cfg.coriolis_f0_per_s == -1e-4);
    ck_assert(cfg.beta_per_m_per_s == 0.0);
    ck_assert_int_eq(cfg.wind_profile, TG_WIND_SINGLE_GYRE);
    ck_assert(cfg.step_s == 900.0);
    ck_assert(cfg.duration_days == 3650.0);
    ck_assert_int_eq(cfg.initial_kind, TG_INIT_NOISE);
    ck_assert(cfg.seed == UINT64_MAX);
    ck_assert_str_eq(cfg.out_directory, "runs/three layers");
    ck_assert(cfg.checkpoint_every_days == 0.0);
    /* Keys not in the file keep their defaults and are marked so. */
    ck_assert(cfg.viscosity_m2_per_s == 200.0);
    int i_points = tg_config_key_index("grid", "points");
    int i_visc = tg_config_key_index("dissipation", "viscosity_m2_per_s");
    ck_assert_int_eq(cfg.set_by_user[i_points], TG_SET_FILE);
    ck_assert_int_eq(cfg.set_line[i_points], 5);
    ck_assert_int_eq(cfg.set_line[tg_config_key_index("output", "checkpoint_every_days")], 26);
    ck_assert_int_eq(cfg.set_by_user[i_visc], TG_SET_DEFAULT);
}
END_TEST

START_TEST(test_missing_file)
{
    tg_config cfg;
    tg_status st;
    char path[512];
    tg_config_defaults(&cfg);
    snprintf(path, sizeof path, "%s/does-not-exist.ini", g_dir);
    ck_assert_int_eq(tg_config_load_file(&cfg, path, &st), TG_ERR_IO);
    assert_has(st.msg, path);
}
END_TEST

START_TEST(test_unknown_section)
{
    load_expect("sec1.ini", "[grid]\npoints = 129\n[gird]\n", TG_ERR_CONFIG, 3,
                "unknown section [gird]", "did you mean [grid]?");
    load_expect("sec2.ini", "[banana]\nx = 1\n", TG_ERR_CONFIG, 1,
                "unknown section [banana]", "[dissipation]");
    load_expect("sec3.ini", "[Time]\nstep_s = 1\n", TG_ERR_CONFIG, 1, "did you mean [time]?", NULL);
}
END_TEST

START_TEST(test_unknown_key)
{
    load_expect("key1.ini", "[grid]\ngeometri = basin\n", TG_ERR_CONFIG, 2,
                "[grid] geometri: unknown key", "did you mean [grid] geometry?");
    /* A key of another section points to the right section. */
    load_expect("key2.ini", "[grid]\nstep_s = 900\n", TG_ERR_CONFIG, 2,
                "[grid] step_s: not a key of [grid]", "did you mean [time] step_s?");
    /* A key written without (or with another) unit suffix. */
    load_expect("key3.ini", "[time]\nduration = 10\n", TG_ERR_CONFIG, 2,
                "[time] duration:", "did you mean [time] duration_days (unit: days)?");
    load_expect("key4.ini", "[dissipation]\nviscosity_m2_s = 10\n", TG_ERR_CONFIG, 2,
                "did you mean [dissipation] viscosity_m2_per_s", NULL);
    /* Nothing close: no guess, but the keys of the section. */
    load_expect("key5.ini", "[grid]\nzzqqxx = 1\n", TG_ERR_CONFIG, 2,
                "[grid] zzqqxx: unknown key", "geometry, size_km, points");
    /* A key before any section. */
    load_expect("key6.ini", "step_s = 900\n", TG_ERR_CONFIG, 1,
                "before any [section]", "did you mean [time] step_s?");
    /* The "no suggestion" message really has none. */
    char path[512];
    tg_config cfg;
    tg_status st;
    tg_config_defaults(&cfg);
    write_file("key7.ini", "[wind]\nqqqqqqqq = 2\n", path, sizeof path);
    ck_assert_int_eq(tg_config_load_file(&cfg, path, &st), TG_ERR_CONFIG);
    ck_assert_ptr_null(strstr(st.msg, "did you mean"));
}
END_TEST

START_TEST(test_wrong_type)
{
    static const struct {
        const char *text;
        const char *key;
        const char *got;
    } cases[] = {
        {"[time]\nstep_s = abc\n", "[time] step_s: expected a real number > 0", "got 'abc'"},
        {"[time]\nstep_s = 900s\n", "[time] step_s:", "got '900s'"},
        {"[time]\nstep_s = nan\n", "[time] step_s:", "got 'nan'"},
        {"[time]\nstep_s = inf\n", "[time] step_s:", "got 'inf'"},
        {"[time]\nstep_s = 0x10\n", "[time] step_s:", "got '0x10'"},
        {"[time]\nstep_s = 1e999\n", "[time] step_s:", "outside the range of a double"},
        {"[time]\nstep_s =\n", "[time] step_s:", "got ''"},
        {"[grid]\npoints = 12.5\n", "[grid] points: expected an integer", "got '12.5'"},
        {"[grid]\npoints = 1e2\n", "[grid] points: expected an integer", "got '1e2'"},
        {"[initial]\nseed = -1\n", "[initial] seed: expected an unsigned 64-bit integer", "got '-1'"},
        {"[initial]\nseed = 1.5\n", "[initial] seed:", "got '1.5'"},
        {"[initial]\nseed = 18446744073709551616\n", "[initial] seed:", "got '18446744073709551616'"},
        {"[layers]\nthickness_m = 1000, abc\n", "[layers] thickness_m:", "value 2, 'abc', is not a real number"},
        {"[layers]\nthickness_m = 1000, , 3000\n", "[layers] thickness_m:", "value 2 is empty"},
        {"[layers]\nthickness_m = 1000,\n", "[layers] thickness_m:", "value 2 is empty"},
        {"[layers]\nthickness_m =\n", "[layers] thickness_m:", "no values"},
        {"[output]\ndirectory =\n", "[output] directory:", "it is empty"},
    };
    for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++) {
        char name[32];
        snprintf(name, sizeof name, "type%zu.ini", k);
        load_expect(name, cases[k].text, TG_ERR_CONFIG, 2, cases[k].key, cases[k].got);
    }
}
END_TEST

START_TEST(test_out_of_range)
{
    /* The exact wording of a range error. */
    char path[512], want[700];
    tg_config cfg;
    tg_status st;
    tg_config_defaults(&cfg);
    write_file("range0.ini", "[time]\n\nstep_s = -5\n", path, sizeof path);
    ck_assert_int_eq(tg_config_load_file(&cfg, path, &st), TG_ERR_CONFIG);
    snprintf(want, sizeof want, "%s:3: [time] step_s: expected a real number > 0, got '-5'", path);
    ck_assert_str_eq(st.msg, want);

    load_expect("range1.ini", "[grid]\nwall_slip_coefficient = 1.5\n", TG_ERR_CONFIG, 2,
                "[grid] wall_slip_coefficient: expected a real number from 0 to 1", "got '1.5'");
    load_expect("range2.ini", "[grid]\npoints = 8\n", TG_ERR_CONFIG, 2, "[grid] points:", "got '8'");
    load_expect("range3.ini", "[planet]\ncoriolis_f0_per_s = 0\n", TG_ERR_CONFIG, 2,
                "[planet] coriolis_f0_per_s: expected a nonzero real number", "got '0'");
    load_expect("range4.ini", "[planet]\nbeta_per_m_per_s = -1e-11\n", TG_ERR_CONFIG, 2,
                "[planet] beta_per_m_per_s: expected a real number >= 0", "got '-1e-11'");
    load_expect("range5.ini", "[time]\nstep_s = 0\n", TG_ERR_CONFIG, 2, "[time] step_s:", "got '0'");
    load_expect("range6.ini", "[layers]\nreduced_gravity_m_s2 = 0.02, -0.01\n", TG_ERR_CONFIG, 2,
                "[layers] reduced_gravity_m_s2:", "value 2, '-0.01', is not > 0");
    load_expect("range7.ini", "[output]\nsnapshot_every_days = 0\n", TG_ERR_CONFIG, 2,
                "[output] snapshot_every_days:", "got '0'");
}
END_TEST

START_TEST(test_bad_choice)
{
    load_expect("choice1.ini", "[grid]\ngeometry = basn\n", TG_ERR_CONFIG, 2,
                "[grid] geometry: expected one of basin, periodic, got 'basn'", "did you mean basin?");
    load_expect("choice2.ini", "[wind]\nprofile = triple\n", TG_ERR_CONFIG, 2,
                "[wind] profile: expected one of double_gyre, single_gyre, none", "got 'triple'");
    load_expect("choice3.ini", "[grid]\nwall_condition = noslip\n", TG_ERR_CONFIG, 2,
                "[grid] wall_condition:", "did you mean no_slip?");
}
END_TEST

START_TEST(test_duplicate_key)
{
    load_expect("dup.ini", "[time]\nstep_s = 900\nduration_days = 10\nstep_s = 600\n", TG_ERR_CONFIG, 4,
                "[time] step_s: set twice", "on line 2 and again on line 4");
    /* Also across two headers of the same section. */
    load_expect("dup2.ini", "[time]\nstep_s = 900\n[grid]\npoints = 65\n[time]\nstep_s = 600\n",
                TG_ERR_CONFIG, 6, "set twice", "line 2");
}
END_TEST

START_TEST(test_long_line)
{
    char text[600];
    char dir[301];
    memset(dir, 'd', 300);
    dir[300] = '\0';
    snprintf(text, sizeof text, "[output]\nlog_every_days = 10\ndirectory = %s\nseed = 3\n", dir);
    load_expect("long.ini", text, TG_ERR_CONFIG, 3, "[output] directory: line is", "characters long");
    /* A long comment line is refused too (it would be split, not ignored). */
    snprintf(text, sizeof text, "[output]\n; %s\nstep_s = 1\n", dir);
    load_expect("long2.ini", text, TG_ERR_CONFIG, 2, "characters long", NULL);
}
END_TEST

START_TEST(test_too_many_layers)
{
    load_expect("layers7.ini", "[layers]\nthickness_m = 100, 200, 300, 400, 500, 600, 700\n",
                TG_ERR_CONFIG, 2, "[layers] thickness_m:", "7 values, at most 6");
    load_expect("gprime6.ini", "[layers]\nreduced_gravity_m_s2 = 1, 1, 1, 1, 1, 1\n",
                TG_ERR_CONFIG, 2, "[layers] reduced_gravity_m_s2:", "6 values, at most 5");
}
END_TEST

START_TEST(test_syntax)
{
    load_expect("syn1.ini", "[grid]\ngeometry basin\n", TG_ERR_CONFIG, 2,
                "expected 'key = value'", "got 'geometry basin'");
    load_expect("syn2.ini", "[grid\npoints = 129\n", TG_ERR_CONFIG, 1, "no closing ']'", NULL);
    /* A syntax error before a bad value is the one reported. */
    load_expect("syn3.ini", "[grid]\noops\npoints = 3\n", TG_ERR_CONFIG, 2, "expected 'key = value'", NULL);
    /* Indented lines would be glued to the previous value by libinih. */
    load_expect("indent.ini", "[grid]\ngeometry = basin\n  points = 65\n", TG_ERR_CONFIG, 3,
                "indented", NULL);

    /* A NUL byte would end libinih's view of the line early. */
    char path[512];
    tg_config cfg;
    tg_status st;
    static const char bytes[] = "[grid]\npoints = 65\nsize_km = 1\0x\n";
    tg_config_defaults(&cfg);
    write_bytes("nul.ini", bytes, sizeof bytes - 1, path, sizeof path);
    ck_assert_int_eq(tg_config_load_file(&cfg, path, &st), TG_ERR_CONFIG);
    assert_has(st.msg, ":3: contains a NUL byte");
}
END_TEST

START_TEST(test_layer_count)
{
    /* Only the thicknesses are set: the message points at them and says
     * both counts, noting that the reduced gravities are the default. */
    check_expect("gcount.ini", "[layers]\nthickness_m = 500, 1000, 2500\n", 2,
                 "[layers] thickness_m: ", "gives 3 layers, which need 2 values of reduced_gravity_m_s2");
    /* Three or more layers have no default reduced gravity (issue 16: the
     * default follows the layer count; it used to be one value for any
     * count, so the default itself made the error). */
    check_expect("gcount1.ini", "[layers]\nthickness_m = 500, 1000, 2500\n", 2,
                 "has a default only for 1 layer (none) and 2 layers (0.02)", NULL);
    /* Both keys set in the file: the message names the reduced-gravity line,
     * the thickness line and both counts. */
    check_expect("gcount2.ini", "[layers]\nthickness_m = 500, 1000, 2500\nreduced_gravity_m_s2 = 0.02\n",
                 3, "[layers] reduced_gravity_m_s2: thickness_m (line 2) gives 3 layers, which need 2",
                 "reduced_gravity_m_s2 (line 3) has 1");
    check_expect("gcount3.ini", "[layers]\nthickness_m = 4000\nreduced_gravity_m_s2 = 0.02\n",
                 3, "gives 1 layer, which needs 0 values", "has 1");
}
END_TEST

START_TEST(test_geometry_rules)
{
    char path[512];
    tg_config cfg;
    tg_status st;

    /* Basin: points must be 2^k + 1. */
    check_expect("pts1.ini", "[grid]\npoints = 100\n", 2, "[grid] points: a basin needs 2^k + 1", "got 100");
    check_expect("pts2.ini", "[grid]\npoints = 4096\n", 2, "[grid] points:", "got 4096");
    ck_assert_int_eq(load_and_check("pts3.ini", "[grid]\npoints = 17\n", &cfg, &st, path, sizeof path), TG_OK);
    ck_assert_int_eq(load_and_check("pts4.ini", "[grid]\npoints = 4097\n", &cfg, &st, path, sizeof path), TG_OK);

    /* Periodic: points must be 2^k; wind must be none for now. */
    const char *periodic_ok = "[grid]\ngeometry = periodic\npoints = 128\n[wind]\nprofile = none\n";
    ck_assert_msg(load_and_check("per1.ini", periodic_ok, &cfg, &st, path, sizeof path) == TG_OK,
                  "%s", st.msg);

    /* The background flow: one value per layer, periodic geometry only. */
    ck_assert_int_eq(load_and_check("bg1.ini",
                                    "[grid]\ngeometry = periodic\npoints = 64\n[wind]\nprofile = none\n"
                                    "[background]\nzonal_velocity_m_s = 0.05, -0.01\n",
                                    &cfg, &st, path, sizeof path), TG_OK);
    ck_assert_int_eq(cfg.n_zonal_velocity, 2);
    ck_assert(cfg.zonal_velocity_m_s[1] == -0.01);
    check_expect("bg2.ini", "[background]\nzonal_velocity_m_s = 0.05, 0\n", 2,
                 "[background] zonal_velocity_m_s: a uniform background flow needs geometry = periodic",
                 NULL);
    check_expect("bg3.ini",
                 "[grid]\ngeometry = periodic\npoints = 64\n[wind]\nprofile = none\n"
                 "[background]\nzonal_velocity_m_s = 0.05\n",
                 7, "[background] zonal_velocity_m_s: expected one value per layer (2), got 1", NULL);
    check_expect("per2.ini", "[grid]\ngeometry = periodic\npoints = 129\n[wind]\nprofile = none\n", 3,
                 "[grid] points: periodic geometry (line 2) needs 2^k points", "got 129");
    /* Defaults that follow the geometry (issue 16: they used to be the
     * basin's 129 points and double_gyre wind, errors in a periodic domain). */
    ck_assert_msg(load_and_check("per2b.ini", "[grid]\ngeometry = periodic\n[wind]\nprofile = none\n",
                                 &cfg, &st, path, sizeof path) == TG_OK, "%s", st.msg);
    ck_assert_int_eq(cfg.points, 128);
    ck_assert_msg(load_and_check("per3.ini", "[grid]\ngeometry = periodic\npoints = 64\n", &cfg, &st,
                                 path, sizeof path) == TG_OK, "%s", st.msg);
    ck_assert_int_eq(cfg.wind_profile, TG_WIND_NONE);
    check_expect("per4.ini", "[grid]\ngeometry = periodic\npoints = 64\n[wind]\nprofile = single_gyre\n", 5,
                 "[wind] profile: profile single_gyre is not available in periodic geometry", NULL);

    /* Periodic with a wall key set explicitly, even to its default value. */
    check_expect("per5.ini",
                 "[grid]\ngeometry = periodic\npoints = 64\nwall_condition = free_slip\n[wind]\nprofile = none\n",
                 4, "[grid] wall_condition: wall keys do not apply to periodic geometry", NULL);
    check_expect("per6.ini",
                 "[grid]\ngeometry = periodic\npoints = 64\n[wind]\nprofile = none\n[grid]\nwall_slip_coefficient = 0.1\n",
                 7, "[grid] wall_slip_coefficient: wall keys do not apply to periodic geometry", NULL);

    /* The same from --set. */
    ck_assert_int_eq(load_and_check("per7.ini", periodic_ok, &cfg, &st, path, sizeof path), TG_OK);
    ck_assert_int_eq(tg_config_set(&cfg, "grid.wall_condition=no_slip", &st), TG_OK);
    ck_assert_int_eq(tg_config_check(&cfg, path, &st), TG_ERR_CONFIG);
    ck_assert_msg(strncmp(st.msg, "--set grid.wall_condition=no_slip: ", 35) == 0, "%s", st.msg);
    assert_has(st.msg, "wall keys do not apply to periodic geometry");
}
END_TEST

START_TEST(test_time_rules)
{
    check_expect("t1.ini", "[output]\nsnapshot_every_days = 0.01\n", 2,
                 "[output] snapshot_every_days: 0.01 days is shorter than one time step", NULL);
    check_expect("t2.ini", "[time]\nstep_s = 86400\n[output]\nlog_every_days = 0.5\n", 4,
                 "[output] log_every_days:", "step_s (line 2) = 86400 s");
    check_expect("t3.ini", "[output]\ncheckpoint_every_days = 0.001\n", 2,
                 "[output] checkpoint_every_days:", NULL);
    check_expect("t4.ini", "[time]\nstep_s = 86400\nduration_days = 0.5\n", 2,
                 "[time] step_s: 86400 s is longer than the whole run", "duration_days (line 3) = 0.5");
    char path[512];
    tg_config cfg;
    tg_status st;
    ck_assert_int_eq(load_and_check("t5.ini", "[output]\ncheckpoint_every_days = 0\n", &cfg, &st, path, sizeof path),
                     TG_OK);
}
END_TEST

START_TEST(test_initial_file)
{
    char text[1200], path[512], state[512];
    tg_config cfg;
    tg_status st;
    snprintf(text, sizeof text, "[initial]\nstate = %s/no-such-state.nc\n", g_dir);
    check_expect("init1.ini", text, 2, "[initial] state: cannot open initial state file", "no-such-state.nc");
    check_expect("init2.ini", "[initial]\nstate = Rest\n", 2, "[initial] state:", "did you mean rest?");

    /* An existing file with a netCDF signature is accepted and kept as a path. */
    write_file("state.nc", "CDF\001 and the rest is not read by the config check", state,
               sizeof state);
    snprintf(text, sizeof text, "[initial]\nstate = %s\n", state);
    ck_assert_msg(load_and_check("init3.ini", text, &cfg, &st, path, sizeof path) == TG_OK, "%s", st.msg);
    ck_assert_int_eq(cfg.initial_kind, TG_INIT_FILE);
    ck_assert_str_eq(cfg.initial_path, state);

    /* An empty file is refused. */
    write_file("empty.nc", "", state, sizeof state);
    snprintf(text, sizeof text, "[initial]\nstate = %s\n", state);
    check_expect("init4.ini", text, 2, "[initial] state:", "empty");
}
END_TEST

START_TEST(test_set_good)
{
    tg_config cfg;
    tg_status st;
    tg_config_defaults(&cfg);
    ck_assert_int_eq(tg_config_set(&cfg, "layers.thickness_m=500, 1000,2500", &st), TG_OK);
    ck_assert_int_eq(tg_config_set(&cfg, " layers . reduced_gravity_m_s2 = 0.03,0.01 ", &st), TG_OK);
    ck_assert_int_eq(tg_config_set(&cfg, "time.step_s=600", &st), TG_OK);
    ck_assert_int_eq(tg_config_set(&cfg, "initial.state=noise", &st), TG_OK);
    ck_assert_int_eq(cfg.nlayers, 3);
    ck_assert_int_eq(cfg.n_reduced_gravity, 2);
    ck_assert(cfg.reduced_gravity_m_s2[1] == 0.01);
    ck_assert(cfg.step_s == 600.0);
    ck_assert_int_eq(cfg.initial_kind, TG_INIT_NOISE);
    int i = tg_config_key_index("time", "step_s");
    ck_assert_int_eq(cfg.set_by_user[i], TG_SET_OPTION);
    ck_assert_int_eq(cfg.set_line[i], 0);
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "%s", st.msg);
}
END_TEST

START_TEST(test_set_malformed)
{
    set_expect("time.step_s", "expected section.key=value", "no '='");
    set_expect("step_s=900", "no '.'", "did you mean time.step_s=900?");
    set_expect("zzqq=900", "no '.'", NULL);
    set_expect(".step_s=900", "the section is empty", NULL);
    set_expect("time.=900", "the key is empty", NULL);
    set_expect("tim.step_s=900", "unknown section 'tim'", "did you mean time.step_s?");
    set_expect("grids.points=65", "unknown section 'grids'", "did you mean grid.points?");
    set_expect("qqqq.zzzz=1", "unknown section 'qqqq'", NULL);
    set_expect("time.stepp=900", "unknown key", "did you mean time.step_s?");
    set_expect("grid.step_s=900", "not a key of grid", "did you mean time.step_s?");
}
END_TEST

START_TEST(test_set_bad_value)
{
    tg_config cfg;
    tg_status st;
    tg_config_defaults(&cfg);
    ck_assert_int_eq(tg_config_set(&cfg, "time.step_s=-5", &st), TG_ERR_CONFIG);
    ck_assert_str_eq(st.msg, "--set time.step_s=-5: expected a real number > 0, got '-5'");
    set_expect("grid.points=12.5", "expected an integer", "got '12.5'");
    set_expect("grid.geometry=periodc", "got 'periodc'", "did you mean periodic?");
    set_expect("layers.thickness_m=1,2,3,4,5,6,7", "7 values", NULL);
    set_expect("output.directory=a ;b", "comment", NULL);
    set_expect("output.directory=", "it is empty", NULL);
    set_expect("planet.coriolis_f0_per_s=1e-4x", "got '1e-4x'", NULL);
}
END_TEST

/* Writes cfg with tg_config_to_ini, reads it back over the defaults and
 * expects the same values and the same text. */
static void round_trip(const tg_config *cfg, const char *name)
{
    char path[512];
    tg_config back;
    tg_status st;
    char *text = tg_config_to_ini(cfg);
    ck_assert_ptr_nonnull(text);
    write_file(name, text, path, sizeof path);
    tg_config_defaults(&back);
    ck_assert_msg(tg_config_load_file(&back, path, &st) == TG_OK, "%s: %s\n%s", name, st.msg, text);
    assert_same_values(cfg, &back);
    /* Every key is in the file. */
    for (int i = 0; i < tg_config_key_count(); i++)
        ck_assert_int_eq(back.set_by_user[i], TG_SET_FILE);
    char *again = tg_config_to_ini(&back);
    ck_assert_ptr_nonnull(again);
    ck_assert_str_eq(text, again);
    free(again);
    free(text);
}

START_TEST(test_round_trip)
{
    tg_config cfg;
    tg_status st;
    char state[512], assignment[700];
    tg_config_defaults(&cfg);
    round_trip(&cfg, "rt_defaults.ini");

    /* Values that need all 17 significant digits. */
    write_file("rt_state.nc", "x", state, sizeof state);
    const char *sets[] = {
        "grid.size_km=1234.5678901234567",
        "grid.points=513",
        "grid.wall_condition=partial_slip",
        "grid.wall_slip_coefficient=0.1",
        "layers.thickness_m=100.1, 200.2, 300.3, 400.4, 500.5, 600.6",
        "layers.reduced_gravity_m_s2=0.01, 0.02, 0.03, 0.04, 0.05",
        "planet.coriolis_f0_per_s=-7.2921e-5",
        "planet.beta_per_m_per_s=2.2e-11",
        "wind.profile=none",
        "wind.stress_amplitude_pa=0",
        "dissipation.hyperviscosity_m4_per_s=1e10",
        "time.step_s=333.33333333333331",
        "initial.seed=12345678901234567890",
        "output.directory=runs/a b#c",
        "output.checkpoint_every_days=0",
    };
    for (size_t k = 0; k < sizeof sets / sizeof sets[0]; k++)
        ck_assert_msg(tg_config_set(&cfg, sets[k], &st) == TG_OK, "%s: %s", sets[k], st.msg);
    snprintf(assignment, sizeof assignment, "initial.state=%s", state);
    ck_assert_int_eq(tg_config_set(&cfg, assignment, &st), TG_OK);
    cfg.duration_days = 1.0 / 3.0;  /* not a short decimal */
    cfg.max_cfl = 0.1 + 0.2;
    round_trip(&cfg, "rt_many.ini");

    /* One layer: no reduced gravity at all. */
    tg_config_defaults(&cfg);
    ck_assert_int_eq(tg_config_set(&cfg, "layers.thickness_m=4000", &st), TG_OK);
    ck_assert_int_eq(tg_config_set(&cfg, "layers.reduced_gravity_m_s2=", &st), TG_OK);
    ck_assert_int_eq(cfg.n_reduced_gravity, 0);
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "%s", st.msg);
    round_trip(&cfg, "rt_one_layer.ini");

    /* The dump carries units as trailing comments. */
    char *text = tg_config_to_ini(&cfg);
    ck_assert_ptr_nonnull(text);
    assert_has(text, "[planet]\ncoriolis_f0_per_s = 9.37e-05");
    assert_has(text, "; s-1\n");
    assert_has(text, "; m s-2\n");
    free(text);
}
END_TEST

START_TEST(test_reference)
{
    char path[512];
    snprintf(path, sizeof path, "%s/reference.md", g_dir);
    FILE *f = fopen(path, "w+");
    ck_assert_ptr_nonnull(f);
    tg_config_print_reference(f);
    rewind(f);
    char line[1024];
    int rows = 0;
    while (fgets(line, sizeof line, f)) {
        ck_assert(line[0] == '|');
        rows++;
    }
    fclose(f);
    ck_assert_int_eq(rows, 2 + tg_config_key_count());
}
END_TEST

static Suite *config_suite(void)
{
    Suite *s = suite_create("config");
    TCase *tc = tcase_create("all");
    tcase_add_test(tc, test_defaults);
    tcase_add_test(tc, test_key_table);
    tcase_add_test(tc, test_good_file);
    tcase_add_test(tc, test_missing_file);
    tcase_add_test(tc, test_unknown_section);
    tcase_add_test(tc, test_unknown_key);
    tcase_add_test(tc, test_wrong_type);
    tcase_add_test(tc, test_out_of_range);
    tcase_add_test(tc, test_bad_choice);
    tcase_add_test(tc, test_duplicate_key);
    tcase_add_test(tc, test_long_line);
    tcase_add_test(tc, test_too_many_layers);
    tcase_add_test(tc, test_syntax);
    tcase_add_test(tc, test_layer_count);
    tcase_add_test(tc, test_geometry_rules);
    tcase_add_test(tc, test_time_rules);
    tcase_add_test(tc, test_initial_file);
    tcase_add_test(tc, test_set_good);
    tcase_add_test(tc, test_set_malformed);
    tcase_add_test(tc, test_set_bad_value);
    tcase_add_test(tc, test_round_trip);
    tcase_add_test(tc, test_reference);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run_in_scratch(config_suite(), g_dir, sizeof g_dir, "config");
}
