/* closure_checks.c - the model layer's checks of config settings, installed
 * into the config layer (config_hooks.h) by tg_init: the registered closure
 * schemes, the closure sections against each scheme's parameter table
 * (closure_host.c) and a coefficients file (basis.c). The config layer
 * includes nothing of the model; this table is how it reaches these checks.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "twingyre.h"
#include "basis.h"
#include "closure_host.h"
#include "config_hooks.h"

#include <stdlib.h>

static int scheme_count(void) { return tg_closure_count(); }

static const char *scheme_name(int i) { return tg_closure_ops_at(i)->name; }

static tg_code check_closures(const tg_config *cfg, const char *origin,
                              char (*used)[TG_SECTION_LEN], int max, int *nused, tg_status *st)
{
    tg_config *tmp = malloc(sizeof *tmp);
    if (!tmp)
        return tg_fail(st, TG_ERR_NOMEM, "no memory to check the closure settings");
    *tmp = *cfg;
    tg_code rc = tg_closure_keep_used(tmp, origin, used, max, nused, st);
    free(tmp);
    return rc;
}

static tg_code check_coefficients(const char *path, int nlayers, tg_status *st)
{
    tg_coef_list list;
    tg_code rc = tg_coef_read(path, nlayers, &list, st);
    if (rc == TG_OK)
        tg_coef_list_free(&list);
    return rc;
}

static const tg_config_hooks hooks = {
    .scheme_count = scheme_count,
    .scheme_name = scheme_name,
    .check_closures = check_closures,
    .closures_ini = tg_closure_config_ini,
    .check_coefficients = check_coefficients,
};

void tg_init(void) { tg_config_set_hooks(&hooks); }
