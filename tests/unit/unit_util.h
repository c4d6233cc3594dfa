/* unit_util.h - what several Check suites in tests/unit share: running the
 * file's suite with every case and turning the result into the exit status
 * (0 when every case passed). Include after <check.h>.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_UNIT_UTIL_H
#define TG_UNIT_UTIL_H

#include <check.h>

/* Runs s (and frees it with its runner); 1 when a case failed, else 0. */
static inline int tg_unit_run(Suite *s)
{
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    const int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? 1 : 0;
}

#endif
