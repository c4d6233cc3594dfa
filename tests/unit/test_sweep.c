/* test_sweep.c - unit tests of the sweep file and its members (src/experiments/sweep.c,
 * src/experiments/sweep_member.c): member order for product and zip with the seeds and
 * members axes, member names (labels, sanitising, clashes), the --set
 * assignments, FILE:LINE messages of bad sweep files, and the member status
 * file round trip with a long message.
 *
 * These checks rest on the sweep file specification of twingyre (README,
 * "Sweeps and ensembles"), not on published results. Files go to a fresh
 * temporary directory under $TMPDIR that is removed at the end.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#define _POSIX_C_SOURCE 200809L

#include <check.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "status.h"
#include "sweep.h"
#include "unit_util.h"

static char g_dir[256];

static void put(const char *name, const char *text)
{
    char path[512];
    snprintf(path, sizeof path, "%s/%s", g_dir, name);
    FILE *f = fopen(path, "w");
    ck_assert_ptr_nonnull(f);
    fputs(text, f);
    fclose(f);
}

/* Loads g_dir/name (after writing text there); returns the code. */
static tg_code load(const char *name, const char *text, tg_sweep **sw, tg_status *st)
{
    char path[512], out[512];
    put(name, text);
    snprintf(path, sizeof path, "%s/%s", g_dir, name);
    snprintf(out, sizeof out, "%s/out-%s", g_dir, name);
    tg_status_clear(st);
    return tg_sweep_load(path, out, sw, st);
}

static const char *BASE = "[time]\nstep_s = 3600\nduration_days = 1\n";

START_TEST(product_order_and_names)
{
    put("base.ini", BASE);
    tg_sweep *sw;
    tg_status st;
    ck_assert_int_eq(load("p.ini",
                          "[sweep]\nbase = base.ini\nseeds = 5, 6\nmembers = 0, 1\n"
                          "[vary]\ndissipation.viscosity_m2_per_s = 200, 400, 800\n"
                          "closure.use = leith | smagorinsky, viscosity\n",
                          &sw, &st),
                     TG_OK);
    ck_assert_int_eq(sw->nmembers, 3 * 2 * 2 * 2);
    ck_assert_int_eq(sw->naxes, 4);
    /* [vary] keys first in file order, then seeds, then members (fastest). */
    ck_assert_str_eq(sw->axis[0].key, "dissipation.viscosity_m2_per_s");
    ck_assert_str_eq(sw->axis[2].key, "initial.seed");
    ck_assert_str_eq(sw->axis[3].key, "member");
    ck_assert_str_eq(sw->name[0], "viscosity_m2_per_s-200_use-leith_seed-5_member-0");
    ck_assert_str_eq(sw->name[1], "viscosity_m2_per_s-200_use-leith_seed-5_member-1");
    ck_assert_str_eq(sw->name[2], "viscosity_m2_per_s-200_use-leith_seed-6_member-0");
    ck_assert_str_eq(sw->name[4],
                     "viscosity_m2_per_s-200_use-smagorinsky_viscosity_seed-5_member-0");
    ck_assert_str_eq(sw->name[8], "viscosity_m2_per_s-400_use-leith_seed-5_member-0");
    ck_assert_str_eq(sw->name[23],
                     "viscosity_m2_per_s-800_use-smagorinsky_viscosity_seed-6_member-1");
    char sets[TG_SWEEP_MAX_AXES][2 * TG_SWEEP_VALUE_LEN + 2];
    int n = tg_sweep_member_sets(sw, 23, sets);
    ck_assert_int_eq(n, 3); /* the members axis is no --set */
    ck_assert_str_eq(sets[0], "dissipation.viscosity_m2_per_s=800");
    ck_assert_str_eq(sets[1], "closure.use=smagorinsky, viscosity");
    ck_assert_str_eq(sets[2], "initial.seed=6");
    ck_assert_int_eq(tg_sweep_choice(sw, 23, 3), 1);
    tg_sweep_free(sw);
}
END_TEST

START_TEST(zip_order)
{
    put("base.ini", BASE);
    tg_sweep *sw;
    tg_status st;
    ck_assert_int_eq(load("z.ini",
                          "[sweep]\nbase = base.ini\ncombine = zip\nseeds = 1, 2\n"
                          "[vary]\ntime.step_s = 1800, 3600, 3600\n"
                          "dissipation.viscosity_m2_per_s = 100, 200, 300\n",
                          &sw, &st),
                     TG_OK);
    ck_assert_int_eq(sw->nmembers, 3 * 2);
    ck_assert_str_eq(sw->name[0], "step_s-1800_viscosity_m2_per_s-100_seed-1");
    ck_assert_str_eq(sw->name[1], "step_s-1800_viscosity_m2_per_s-100_seed-2");
    ck_assert_str_eq(sw->name[4], "step_s-3600_viscosity_m2_per_s-300_seed-1");
    ck_assert_int_eq(tg_sweep_choice(sw, 5, 0), 2);
    ck_assert_int_eq(tg_sweep_choice(sw, 5, 1), 2);
    ck_assert_int_eq(tg_sweep_choice(sw, 5, 2), 1);
    tg_sweep_free(sw);
}
END_TEST

START_TEST(name_clashes)
{
    put("base.ini", BASE);
    tg_sweep *sw;
    tg_status st;
    /* Two keys with the same last part: both named by their whole key.
     * Values that sanitise alike: the later member gets _K. */
    ck_assert_int_eq(load("c.ini",
                          "[sweep]\nbase = base.ini\ncombine = zip\n"
                          "[vary]\ndissipation.viscosity_m2_per_s = 1, 2\n"
                          "twin.coarse.dissipation.viscosity_m2_per_s = 3, 4\n"
                          "closure.use = a b | a/b\n",
                          &sw, &st),
                     TG_OK);
    ck_assert_str_eq(sw->name[0], "dissipation.viscosity_m2_per_s-1_"
                                  "twin.coarse.dissipation.viscosity_m2_per_s-3_use-a_b");
    ck_assert_str_eq(sw->name[1], "dissipation.viscosity_m2_per_s-2_"
                                  "twin.coarse.dissipation.viscosity_m2_per_s-4_use-a_b");
    tg_sweep_free(sw);
    ck_assert_int_eq(load("d.ini",
                          "[sweep]\nbase = base.ini\n[vary]\nclosure.use = a b | a/b\n", &sw,
                          &st),
                     TG_OK);
    ck_assert_str_eq(sw->name[0], "use-a_b");
    ck_assert_str_eq(sw->name[1], "use-a_b_1");
    tg_sweep_free(sw);
}
END_TEST

START_TEST(continuation_lines)
{
    put("base.ini", BASE);
    tg_sweep *sw;
    tg_status st;
    ck_assert_int_eq(load("l.ini",
                          "[sweep]\nbase = base.ini\nseeds = 1,\n    2, 3\n"
                          "[vary]\ntime.step_s = 600, 900,\n  1200   ; comment\n"
                          "  1800\n",
                          &sw, &st),
                     TG_OK);
    ck_assert_int_eq(sw->axis[0].nvalues, 4);
    ck_assert_str_eq(sw->axis[0].value[3], "1800");
    ck_assert_int_eq(sw->axis[1].nvalues, 3);
    ck_assert_int_eq(sw->nmembers, 12);
    tg_sweep_free(sw);
}
END_TEST

static void expect_error(const char *name, const char *text, tg_code code, const char *msg)
{
    tg_sweep *sw = NULL;
    tg_status st;
    ck_assert_int_eq(load(name, text, &sw, &st), code);
    ck_assert_ptr_null(sw);
    ck_assert_msg(strstr(st.msg, msg) != NULL, "message '%s' lacks '%s'", st.msg, msg);
}

START_TEST(bad_files)
{
    put("base.ini", BASE);
    expect_error("e1.ini", "[sweep]\nbase = base.ini\n[vary]\ntime.step = 1, 2\n", TG_ERR_CONFIG,
                 "e1.ini:4: [vary] time.step: no value is accepted");
    expect_error("e2.ini", "[sweep]\nbase = base.ini\ncombine = diagonal\n[vary]\ntime.step_s = 1\n",
                 TG_ERR_CONFIG, "e2.ini:3: [sweep] combine: expected product or zip");
    expect_error("e3.ini", "[sweep]\nbase = base.ini\nseeds = 1, x\n", TG_ERR_CONFIG,
                 "e3.ini:3: [sweep] seed: expected whole numbers");
    expect_error("e4.ini", "[sweep]\nbase = base.ini\n[vary]\ntime.step_s = 1, 1\n", TG_ERR_CONFIG,
                 "e4.ini:4: [vary] time.step_s: value '1' is listed twice");
    expect_error("e5.ini", "[sweep]\nbase = base.ini\n[vary]\nstep_s = 1, 2\n", TG_ERR_CONFIG,
                 "e5.ini:4: [vary] step_s: expected section.key");
    expect_error("e6.ini", "[sweep]\nbase = base.ini\n[other]\nx = 1\n", TG_ERR_CONFIG,
                 "e6.ini:4: unknown section [other]");
    expect_error("e7.ini", "[sweep]\nbase = base.ini\n", TG_ERR_CONFIG, "nothing to vary");
    expect_error("e8.ini",
                 "[sweep]\nbase = base.ini\nseeds = 1\n[vary]\ninitial.seed = 1, 2\n",
                 TG_ERR_CONFIG, "both vary the seed");
    expect_error("e10.ini", "[sweep]\nbase = base.ini\n  combine = zip\n[vary]\ntime.step_s = 1\n",
                 TG_ERR_CONFIG, "e10.ini:3: indented line continues [sweep] base");
    expect_error("e11.ini", "[sweep]\nbase = base.ini\nseeds = 1,\n  x\n", TG_ERR_CONFIG,
                 "e11.ini:4: [sweep] seed: expected whole numbers");
    expect_error("e9.ini", "[sweep]\nbase = base.ini\n[vary]\ntime.step_s = 1\n"
                           "[cluster]\nmemory = lots\n",
                 TG_ERR_CONFIG, "e9.ini:6: [cluster] memory: expected a size");
}
END_TEST

/* Issue 17, part 5: a sweep file follows the rules of a config file (the
 * same line reader, src/files/ini_lines.c): a key that takes one value is
 * refused the second time (it was last-wins), a NUL byte is refused (it cut
 * the line: "seeds = 7\0, 8, 9" gave one member), and so is text after a
 * section header. */
START_TEST(same_rules_as_config_files)
{
    put("base.ini", BASE);
    const char *vary = "[vary]\ntime.step_s = 1, 2\n";
    char text[512];
    const struct {
        const char *lines, *key;
    } twice[] = {
        {"[sweep]\nbase = base.ini\ndirectory = a\ndirectory = b\n", "[sweep] directory"},
        {"[sweep]\nbase = base.ini\nbase = other.ini\n", "[sweep] base"},
        {"[sweep]\nbase = base.ini\ncombine = zip\ncombine = product\n", "[sweep] combine"},
        {"[sweep]\nbase = base.ini\nkind = run\nkind = twin\n", "[sweep] kind"},
        {"[sweep]\nbase = base.ini\n[cluster]\nmemory = 1G\nmemory = 2G\n", "[cluster] memory"},
        {"[sweep]\nbase = base.ini\n[cluster]\ncpus_per_task = 2\ncpus_per_task = 4\n",
         "[cluster] cpus_per_task"},
    };
    for (size_t i = 0; i < sizeof twice / sizeof twice[0]; i++) {
        char name[32], want[128];
        snprintf(name, sizeof name, "twice%zu.ini", i);
        snprintf(text, sizeof text, "%s%s", twice[i].lines, vary);
        snprintf(want, sizeof want, "%s: set twice", twice[i].key);
        expect_error(name, text, TG_ERR_CONFIG, want);
    }
    /* extra and setup are lists, a line each. */
    tg_sweep *sw;
    tg_status st;
    ck_assert_int_eq(load("lists.ini", "[sweep]\nbase = base.ini\n[vary]\ntime.step_s = 1, 2\n"
                                       "[cluster]\nextra = --qos=a\nextra = --nice=1\n",
                          &sw, &st),
                     TG_OK);
    tg_sweep_free(sw);

    const char nul[] = "[sweep]\nbase = base.ini\nseeds = 7\0, 8, 9\n";
    char path[512];
    snprintf(path, sizeof path, "%s/nul.ini", g_dir);
    FILE *f = fopen(path, "wb");
    ck_assert_ptr_nonnull(f);
    ck_assert_uint_eq(fwrite(nul, 1, sizeof nul - 1, f), sizeof nul - 1);
    ck_assert_int_eq(fclose(f), 0);
    tg_status_clear(&st);
    ck_assert_int_eq(tg_sweep_load(path, NULL, &sw, &st), TG_ERR_CONFIG);
    ck_assert_msg(strstr(st.msg, "nul.ini:3: contains a NUL byte") != NULL, "%s", st.msg);

    expect_error("hdr.ini", "[sweep] base = base.ini\n", TG_ERR_CONFIG,
                 "hdr.ini:1: [sweep]: unexpected text after the section header");
}
END_TEST

START_TEST(member_config_failure)
{
    put("base.ini", BASE);
    tg_sweep *sw;
    tg_status st;
    ck_assert_int_eq(load("m.ini", "[sweep]\nbase = base.ini\n[vary]\ntime.step_s = 600, -5\n",
                          &sw, &st),
                     TG_OK);
    tg_config *cfg = malloc(sizeof *cfg);
    ck_assert_ptr_nonnull(cfg);
    tg_status_clear(&st);
    ck_assert_int_eq(tg_sweep_member_config(sw, 1, cfg, &st), TG_ERR_CONFIG);
    ck_assert_msg(strstr(st.msg, "--set time.step_s=-5") != NULL, "%s", st.msg);
    free(cfg);
    tg_sweep_free(sw);
}
END_TEST

START_TEST(status_round_trip)
{
    put("base.ini", BASE);
    tg_sweep *sw;
    tg_status st;
    ck_assert_int_eq(load("s.ini", "[sweep]\nbase = base.ini\n[vary]\ntime.step_s = 600, 900\n",
                          &sw, &st),
                     TG_OK);
    char msg[700];
    int n = snprintf(msg, sizeof msg, "first part; then ");
    for (int i = 0; n < 600; i++)
        n += snprintf(msg + n, sizeof msg - (size_t)n, "word%d ", i);
    msg[n - 1] = '\0'; /* no trailing blank */
    ck_assert_int_eq(tg_sweep_record_failure(sw, 1, TG_ERR_BLOWUP, msg, &st), TG_OK);
    tg_member_status ms;
    ck_assert_int_eq(tg_sweep_read_status(sw, 1, &ms, &st), TG_OK);
    ck_assert_int_eq(ms.present, 1);
    ck_assert_str_eq(ms.status, "failed");
    ck_assert_int_eq(ms.exit_status, 5);
    ck_assert_str_eq(ms.message, msg);
    ck_assert_int_eq(tg_sweep_member_done(sw, 1), 0);
    ck_assert_int_eq(tg_sweep_read_status(sw, 0, &ms, &st), TG_OK);
    ck_assert_int_eq(ms.present, 0);
    tg_sweep_free(sw);
}
END_TEST

static Suite *sweep_suite(void)
{
    Suite *s = suite_create("sweep");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, product_order_and_names);
    tcase_add_test(tc, zip_order);
    tcase_add_test(tc, name_clashes);
    tcase_add_test(tc, continuation_lines);
    tcase_add_test(tc, bad_files);
    tcase_add_test(tc, same_rules_as_config_files);
    tcase_add_test(tc, member_config_failure);
    tcase_add_test(tc, status_round_trip);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run_in_scratch(sweep_suite(), g_dir, sizeof g_dir, "sweep");
}
