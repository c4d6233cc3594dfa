/* plugin_faulty.c - two deliberately broken closure plugins for test_plugin.c.
 *
 * Built twice as libtool modules (Makefile.am):
 *   TG_FAULT_NO_ENTRY: exports a function, but not twingyre_closure_entry;
 *   TG_FAULT_ABI:      exports the entry, whose table claims another
 *                      interface version than this closure.h.
 * The loader must refuse both with a config error that says why.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <stddef.h>

#include "closure.h"

static tg_code never_create(const tg_closure_setup *s, void **state, tg_status *st)
{
    (void)s;
    (void)st;
    *state = NULL;
    return TG_OK;
}

static tg_code never_tendency(void *state, const tg_closure_view *v, double *tend, tg_status *st)
{
    (void)state;
    (void)v;
    (void)tend;
    (void)st;
    return TG_OK;
}

static const tg_closure_ops faulty_ops = {
    .abi = TG_CLOSURE_ABI + 1000, /* an interface this program does not have */
    .name = "faulty",
    .summary = "a plugin with a wrong interface version",
    .source = "none (test fixture)",
    .create = never_create,
    .tendency = never_tendency,
};

#if defined(TG_FAULT_NO_ENTRY)
const tg_closure_ops *some_other_entry(void);
const tg_closure_ops *some_other_entry(void)
{
    return &faulty_ops;
}
#elif defined(TG_FAULT_ABI)
const tg_closure_ops *twingyre_closure_entry(void);
const tg_closure_ops *twingyre_closure_entry(void)
{
    return &faulty_ops;
}
#else
#error "define TG_FAULT_NO_ENTRY or TG_FAULT_ABI"
#endif
