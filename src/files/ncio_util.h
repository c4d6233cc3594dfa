/* ncio_util.h - netCDF building blocks shared by the library's writers
 * (ncio.c for run output, twin_io.c for twin output). Not installed.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_NCIO_UTIL_H
#define TG_NCIO_UTIL_H

#include "ncio.h"

/* netCDF return code -> TG_OK, or TG_ERR_IO naming the file, what was being
 * done and (when var is not NULL) the variable. */
tg_code tg_nc_check(int rc, const char *path, const char *what, const char *var, tg_status *st);

/* A text attribute, checked. */
tg_code tg_nc_put_text(int ncid, int varid, const char *att, const char *value, const char *path,
                       const char *varname, tg_status *st);

/* The global attributes every output file carries (Conventions, title,
 * source, history, command_line, resolved_config). */
tg_code tg_nc_globals(int ncid, const char *path, const tg_nc_grid *g, const char *default_title,
                      tg_status *st);

/* CF attributes of a time variable (days since day 0, noleap). */
tg_code tg_nc_time_atts(int ncid, int varid, const char *path, tg_status *st);

/* Dimensions and coordinate variables layer, y, x with their CF attributes
 * (define mode), and their values (data mode). */
typedef struct {
    int d_layer, d_y, d_x;
    int v_layer, v_y, v_x;
} tg_nc_grid_ids;

tg_code tg_nc_def_grid(int ncid, const char *path, const tg_nc_grid *g, tg_nc_grid_ids *ids,
                       tg_status *st);
tg_code tg_nc_put_grid(int ncid, const char *path, const tg_nc_grid *g, const tg_nc_grid_ids *ids,
                       tg_status *st);

/* The wavenumber dimension and coordinate variable (units, bin centres'
 * long_name, bin_width, comment) and ke_spectrum(time, layer, wavenumber)
 * in m3 s-2 with the given long_name, in define mode; the coordinate's
 * values go in with nc_put_var_double(ncid, *v_k, wn->k) in data mode. */
tg_code tg_nc_def_spectrum(int ncid, const char *path, const tg_nc_wavenumbers *wn, int d_time,
                           int d_layer, const char *long_name, int *v_k, int *v_spec,
                           tg_status *st);

/* For a run resumed in its own output folder: copies into the open file
 * ncid (data mode, same record variables) the leading records of the
 * existing file `from` whose record variable `key` is <= limit (inclusive)
 * or < limit; *nkept is their number and *last the key of the last one
 * (NaN when none). `from` is checked as any input (ncverify.h); a record
 * variable of ncid missing in `from` or of another shape is TG_ERR_IO. */
tg_code tg_nc_keep_records(const char *from, int ncid, const char *key, double limit,
                           int inclusive, size_t *nkept, double *last, tg_status *st);

#endif
