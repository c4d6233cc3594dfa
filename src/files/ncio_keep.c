/* ncio_keep.c - copies the leading records of an existing record file into a
 * new one, for a run resumed in its own output folder (ncio.h:
 * tg_budget_continue, tg_fields_continue). See ncio_util.h for the contract.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "ncio_util.h"
#include "ncverify.h"

#include <math.h>
#include <netcdf.h>
#include <stdlib.h>

/* Copies records [0, n) of the record variable `name` (id v in ncid) from fid. */
static tg_code copy_var(int fid, const char *from, int ncid, int v, const char *name,
                        size_t n, tg_status *st)
{
    int nd, fv, fnd, dims[NC_MAX_VAR_DIMS], fdims[NC_MAX_VAR_DIMS];
    tg_code code;
    if (nc_inq_varid(fid, name, &fv) != NC_NOERR)
        return tg_fail(st, TG_ERR_IO, "%s: no variable %s to continue from", from, name);
    if ((code = tg_nc_check(nc_inq_varndims(ncid, v, &nd), from, "inquiring", name, st)) ||
        (code = tg_nc_check(nc_inq_vardimid(ncid, v, dims), from, "inquiring", name, st)) ||
        (code = tg_nc_check(nc_inq_varndims(fid, fv, &fnd), from, "inquiring", name, st)) ||
        (code = tg_nc_check(nc_inq_vardimid(fid, fv, fdims), from, "inquiring", name, st)))
        return code;
    size_t start[NC_MAX_VAR_DIMS] = {0}, count[NC_MAX_VAR_DIMS], slab = 1;
    int same = nd == fnd;
    for (int d = 1; d < nd && same; d++) {
        size_t a, b;
        if ((code = tg_nc_check(nc_inq_dimlen(ncid, dims[d], &a), from, "inquiring", name, st)) ||
            (code = tg_nc_check(nc_inq_dimlen(fid, fdims[d], &b), from, "inquiring", name, st)))
            return code;
        same = a == b;
        count[d] = a;
        slab *= a;
    }
    if (!same)
        return tg_fail(st, TG_ERR_IO, "%s: variable %s has another shape than this run writes",
                       from, name);
    count[0] = 1;
    double *buf = malloc(sizeof(double) * (slab ? slab : 1));
    if (!buf)
        return tg_fail(st, TG_ERR_NOMEM, "%s: no memory to copy variable %s", from, name);
    for (size_t r = 0; r < n && !code && slab > 0; r++) {
        start[0] = r;
        code = tg_nc_check(nc_get_vara_double(fid, fv, start, count, buf), from, "reading", name,
                           st);
        if (!code)
            code = tg_nc_check(nc_put_vara_double(ncid, v, start, count, buf), from,
                               "copying a record", name, st);
    }
    free(buf);
    return code;
}

tg_code tg_nc_keep_records(const char *from, int ncid, const char *key, double limit,
                           int inclusive, size_t *nkept, double *last, tg_status *st)
{
    int fid, kv, unlim, nvars;
    size_t nold = 0;
    double *k = NULL;
    *nkept = 0;
    *last = NAN;
    tg_code code = tg_nc_open_verified(from, &fid, st);
    if (code)
        return code;
    if (nc_inq_varid(fid, key, &kv) != NC_NOERR || nc_inq_unlimdim(fid, &unlim) != NC_NOERR ||
        unlim < 0) {
        code = tg_fail(st, TG_ERR_IO, "%s: no record variable %s to continue from", from, key);
        goto done;
    }
    if ((code = tg_nc_check(nc_inq_dimlen(fid, unlim, &nold), from, "inquiring", key, st)))
        goto done;
    if (nold > 0 && !(k = malloc(sizeof(double) * nold))) {
        code = tg_fail(st, TG_ERR_NOMEM, "%s: no memory for %zu records of %s", from, nold, key);
        goto done;
    }
    if (nold > 0 &&
        (code = tg_nc_check(nc_get_var_double(fid, kv, k), from, "reading", key, st)))
        goto done;
    size_t n = 0;
    while (n < nold && (inclusive ? k[n] <= limit : k[n] < limit))
        n++;
    if ((code = tg_nc_check(nc_inq_nvars(ncid, &nvars), from, "counting variables", NULL, st)) ||
        (code = tg_nc_check(nc_inq_unlimdim(ncid, &unlim), from, "inquiring", NULL, st)))
        goto done;
    for (int v = 0; v < nvars && !code; v++) {
        int nd, dims[NC_MAX_VAR_DIMS];
        char name[NC_MAX_NAME + 1];
        if ((code = tg_nc_check(nc_inq_varndims(ncid, v, &nd), from, "inquiring", NULL, st)))
            break;
        if (nd < 1 || nc_inq_vardimid(ncid, v, dims) != NC_NOERR || dims[0] != unlim)
            continue;
        if ((code = tg_nc_check(nc_inq_varname(ncid, v, name), from, "inquiring", NULL, st)))
            break;
        code = copy_var(fid, from, ncid, v, name, n, st);
    }
    if (!code) {
        *nkept = n;
        *last = n > 0 ? k[n - 1] : NAN;
    }
done:
    free(k);
    (void)nc_close(fid); /* read-only: nothing to lose */
    return code;
}
