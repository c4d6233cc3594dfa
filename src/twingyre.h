/* twingyre.h - the installed umbrella header of libtwingyre.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TWINGYRE_H
#define TWINGYRE_H

#include "status.h"
#include "config.h"
#include "closure.h"

#endif
