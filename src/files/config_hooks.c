/* config_hooks.c - the one table of checks that higher layers install into
 * the config layer (config_hooks.h).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "config_hooks.h"

#include <stddef.h>

static const tg_config_hooks *g_hooks = NULL;

void tg_config_set_hooks(const tg_config_hooks *hooks) { g_hooks = hooks; }

const tg_config_hooks *tg_config_get_hooks(void) { return g_hooks; }
