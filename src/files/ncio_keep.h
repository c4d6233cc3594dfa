/* ncio_keep.h - the leading records of an existing record file copied into
 * a new one, for a run resumed in its own output folder (used by ncio.c's
 * tg_budget_continue and tg_fields_continue).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_NCIO_KEEP_H
#define TG_NCIO_KEEP_H

#include <stddef.h>

#include "status.h"

/* For a run resumed in its own output folder: copies into the open file
 * ncid (data mode, same record variables) the leading records of the
 * existing file `from` whose record variable `key` is <= limit (inclusive)
 * or < limit; *nkept is their number and *last the key of the last one
 * (NaN when none). `from` is checked as any input (ncverify.h); a record
 * variable of ncid missing in `from` or of another shape is TG_ERR_IO. */
tg_code tg_nc_keep_records(const char *from, int ncid, const char *key, double limit,
                           int inclusive, size_t *nkept, double *last, tg_status *st);

#endif
