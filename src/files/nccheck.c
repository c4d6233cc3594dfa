/* nccheck.c - checked netCDF calls (nccheck.h).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "nccheck.h"

#include <netcdf.h>
#include <stdio.h>
#include <string.h>

tg_code tg_nc_check(int rc, const char *path, const char *what, const char *var, tg_status *st)
{
    if (rc == NC_NOERR)
        return TG_OK;
    if (var)
        return tg_fail(st, TG_ERR_IO, "%s: %s failed (variable %s): %s", path, what, var,
                       nc_strerror(rc));
    return tg_fail(st, TG_ERR_IO, "%s: %s failed: %s", path, what, nc_strerror(rc));
}

tg_code tg_nc_put_text(int ncid, int varid, const char *att, const char *value, const char *path,
                       const char *varname, tg_status *st)
{
    char what[128];
    snprintf(what, sizeof what, "writing attribute \"%s\"", att);
    return tg_nc_check(nc_put_att_text(ncid, varid, att, strlen(value), value), path, what,
                    varname, st);
}
