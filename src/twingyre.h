/* twingyre.h - the installed umbrella header of libtwingyre.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TWINGYRE_H
#define TWINGYRE_H

#include "status.h"
#include "config.h"
#include "closure.h"

/* Installs the checks of the closure layer into the config layer
 * (config_hooks.h: closure sections, [twin] compare names, coefficient
 * files). Call it once at start-up, before reading a config that has
 * closure settings; calling it again does no harm. */
void tg_init(void);

#endif
