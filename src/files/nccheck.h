/* nccheck.h - the bottom of the netCDF code: a netCDF call's return code
 * turned into a tg_status naming the file, and a checked text attribute.
 * Every netCDF file of the library (ncio.c, ncverify.c, ncio_keep.c and the
 * experiments' writers through ncio_util.h) goes through these.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_NCCHECK_H
#define TG_NCCHECK_H

#include "status.h"

/* netCDF return code -> TG_OK, or TG_ERR_IO naming the file, what was being
 * done and (when var is not NULL) the variable. */
tg_code tg_nc_check(int rc, const char *path, const char *what, const char *var, tg_status *st);

/* A text attribute, checked. */
tg_code tg_nc_put_text(int ncid, int varid, const char *att, const char *value, const char *path,
                       const char *varname, tg_status *st);

#endif
