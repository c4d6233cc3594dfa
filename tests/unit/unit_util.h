/* unit_util.h - what the Check suites of tests/unit and tests/validation
 * share: running the file's suite with every case and turning the result
 * into the exit status (0 when every case passed), optionally inside a
 * scratch folder made for the run and removed after it; a model made from a
 * config or the case fails with the set-up's message; the largest magnitude
 * of a field.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_UNIT_UTIL_H
#define TG_UNIT_UTIL_H

#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "model.h"
#include "twingyre.h"

/* tg_model_create(cfg), failing the running case with its message. */
static inline tg_model *tg_unit_model(const tg_config *cfg)
{
    tg_status st;
    tg_model *m = tg_model_create(cfg, &st);
    ck_assert_msg(m != NULL, "model: %s", st.msg);
    return m;
}

/* max over the active nodes of layer k of |f| (f: m's layout). */
static inline double tg_unit_max_abs(const tg_model *m, const double *f, int k)
{
    const tg_geometry *g = m->geom;
    double r = 0.0;
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++)
            r = fmax(r, fabs(f[k * m->npl + (long)j * g->ns + i]));
    return r;
}

/* Runs s (and frees it with its runner); 1 when a case failed, else 0.
 * Installs the library's config checks first (tg_init), as the command does. */
static inline int tg_unit_run(Suite *s)
{
    tg_init();
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    const int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? 1 : 0;
}

/* Runs s with a fresh scratch folder: dir (n bytes) receives
 * $TG_TEST_TMPDIR/twingyre-test-NAME-XXXXXX (the suite's scratch folder,
 * DEVELOPERS.md; else $TMPDIR, else /tmp), made before the cases run and
 * removed after. 1 when a case failed or the folder could not be made,
 * else 0. Needs _POSIX_C_SOURCE 200809L (mkdtemp). */
static inline int tg_unit_run_in_scratch(Suite *s, char *dir, size_t n, const char *name)
{
    const char *tmp = getenv("TG_TEST_TMPDIR");
    if (!tmp || !*tmp)
        tmp = getenv("TMPDIR");
    snprintf(dir, n, "%s/twingyre-test-%s-XXXXXX", tmp && *tmp ? tmp : "/tmp", name);
    if (!mkdtemp(dir)) {
        perror("mkdtemp");
        srunner_free(srunner_create(s)); /* frees s */
        return 1;
    }
    const int failed = tg_unit_run(s);
    const size_t len = strlen(dir) + sizeof "rm -rf ''";
    char *cmd = malloc(len); /* as long as the folder's name needs */
    if (cmd)
        snprintf(cmd, len, "rm -rf '%s'", dir);
    if (!cmd || system(cmd) != 0)
        fprintf(stderr, "could not remove %s\n", dir);
    free(cmd);
    return failed;
}

#endif
