/* twin_io.h - the NetCDF files of a twin experiment that ncio.h does not
 * make, and reading records back.
 *
 *   record files  time (unlimited), layer, y, x and optionally wavenumber:
 *                 any number of (time, layer, y, x) variables and
 *                 ke_spectrum(time, layer, wavenumber) - subgrid.nc;
 *   map files     one state: (layer, y, x) variables and a scalar time -
 *                 the coarse runs' starting state, the offline predictions;
 *   readers       records of (time, layer, y, x) or (time, layer,
 *                 wavenumber) variables from fields.nc or subgrid.nc.
 *
 * Same conventions as ncio.h: netCDF classic 64-bit offset, CF-1.8, global
 * attributes Conventions, title, source, history, command_line,
 * resolved_config; coordinates layer (1 at the top), y and x (m), time
 * (days since 0001-01-01 00:00:00, calendar noleap), wavenumber (rad m-1,
 * attribute bin_width). Every netCDF call is checked; messages name the
 * file, the variable and the netCDF error text. Appends allocate nothing.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_TWIN_IO_H
#define TG_TWIN_IO_H

#include "ncio.h"
#include "status.h"

/* Value marking a node where a variable is not defined (netCDF's default
 * fill value for doubles, declared as the variable's _FillValue). */
#define TG_TWIN_FILL 9.9692099683868690e+36

typedef struct {
    const char *name;
    const char *units;
    const char *long_name;
    int has_fill;   /* 1: the variable declares _FillValue = TG_TWIN_FILL */
} tg_twin_var;

/* An extra global attribute: text when text != NULL, else the double value. */
typedef struct {
    const char *name;
    const char *text;
    double value;
} tg_twin_attr;

typedef struct tg_record_file tg_record_file;

/* Creates (clobbering) a record file. wn may be NULL (no spectrum). time,
 * every variable and ke_spectrum carry a data_checksum attribute over the
 * records written so far (ncverify.h), rewritten by each append. */
tg_record_file *tg_record_file_create(const char *path, const tg_nc_grid *g,
                                      const tg_nc_wavenumbers *wn, const tg_twin_var *vars,
                                      int nvars, const tg_twin_attr *atts, int natts,
                                      tg_status *st);
/* Appends one record at time_s (s): data[v] is nlayers*ny*nx for variable
 * v; spectrum is nlayers*nbins (NULL exactly when the file has none). */
tg_code tg_record_file_append(tg_record_file *f, double time_s, const double *const *data,
                              const double *spectrum, tg_status *st);
/* Closes and frees (frees even on error). */
tg_code tg_record_file_close(tg_record_file *f, tg_status *st);

/* Writes (clobbering) a map file: data[v] is nlayers*ny*nx. time and every
 * variable carry a data_checksum attribute (ncverify.h). */
tg_code tg_map_file_write(const char *path, const tg_nc_grid *g, double time_s,
                          const tg_twin_var *vars, int nvars, const double *const *data,
                          const tg_twin_attr *atts, int natts, tg_status *st);

typedef struct tg_record_reader tg_record_reader;

/* Opens a record file whose (layer, y, x) shape must be (nl, ny, nx), after
 * checking it (tg_nc_open_verified: regular, whole, checksums match). */
tg_record_reader *tg_record_reader_open(const char *path, int nx, int ny, int nl,
                                        tg_status *st);
int tg_record_reader_count(const tg_record_reader *r);
/* Time of record rec in days. */
tg_code tg_record_reader_time(tg_record_reader *r, int rec, double *days, tg_status *st);
/* Record rec of var (time, layer, y, x) into out (nl*ny*nx), or of a
 * (time, layer, N) variable when n_last = N > 0 (out: nl*N). */
tg_code tg_record_reader_get(tg_record_reader *r, const char *var, int rec, int n_last,
                             double *out, tg_status *st);
void tg_record_reader_close(tg_record_reader *r);

#endif
