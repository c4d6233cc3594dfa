/* ncio.h - NetCDF files of a run: fields, per-step budget, checkpoint, initial state.
 *
 * All files are netCDF classic 64-bit-offset format with CF-1.8 metadata.
 * Classic format is chosen on purpose: after nc_sync the header's record
 * count is on disk, so a file stays readable up to its last synced record
 * even when the process is killed (-9) in the middle of a run. Every
 * netCDF call is checked; messages name the file, the variable and the
 * netCDF error text.
 *
 * Every file carries the global attributes Conventions ("CF-1.8"), title,
 * source ("twingyre VERSION"), history (UTC creation time and command line),
 * command_line and resolved_config. Coordinates: layer (int, 1 at the top),
 * y and x (double, m, projection_y/x_coordinate, distance from the domain
 * origin), time (double, days, calendar noleap) and, in fields.nc when asked
 * for, wavenumber (double, rad m-1, the spectrum's bin centres).
 *
 * Arrays passed in and out are contiguous: value (layer k, y index j,
 * x index i) at [(k*ny + j)*nx + i].
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_NCIO_H
#define TG_NCIO_H

#include <stddef.h>

#include "status.h"

/* What every file needs to know of the grid and the run. */
typedef struct {
    int nx, ny, nlayers;
    const double *x;          /* nx coordinates, m */
    const double *y;          /* ny coordinates, m */
    const char *config_text;  /* resolved config (INI text), stored as global attribute "resolved_config" */
    const char *command_line; /* stored as global attribute "command_line" */
    const char *title;        /* global attribute "title" */
} tg_nc_grid;

/* ---- fields.nc: snapshots of psi (m2 s-1) and q (s-1), dims (time, layer, y, x),
 *      and optionally the kinetic-energy spectrum ke_spectrum (m3 s-2),
 *      dims (time, layer, wavenumber) ---- */
typedef struct tg_fields_file tg_fields_file;

/* The wavenumber axis of ke_spectrum (spectrum.h makes one per geometry). */
typedef struct {
    int nbins;             /* >= 1 */
    const double *k;       /* nbins bin centres, rad m-1 */
    double bin_width;      /* rad m-1, > 0: sum_b E_b bin_width is the layer's kinetic energy */
} tg_nc_wavenumbers;

/* Creates (clobbering) the file. The time coordinate is in days with CF units
 * "days since 0001-01-01 00:00:00" and calendar "noleap": model day 0 is the
 * start of an idealized year 1 (no real date is implied).
 * wn (may be NULL: no spectrum in the file) adds the dimension and
 * coordinate variable "wavenumber" (units "rad m-1", with the double
 * attribute bin_width in rad m-1) and the variable
 * ke_spectrum(time, layer, wavenumber), the kinetic energy per unit mass per
 * unit wavenumber, whose sum over wavenumber times bin_width equals
 * kinetic_energy of budget.nc at the same time. wn is read during the call only. */
tg_fields_file *tg_fields_create(const char *path, const tg_nc_grid *g,
                                 const tg_nc_wavenumbers *wn, tg_status *st);
/* Appends one snapshot at model time `time_s` (seconds since the experiment's day 0);
 * psi and q are nlayers*ny*nx. ke_spectrum is nlayers*nbins, layer k bin b
 * at [k*nbins + b]; it is required when the file was created with
 * wavenumbers and must be NULL otherwise (TG_ERR_INTERNAL). Syncs the file
 * so it is readable if the run dies. */
tg_code tg_fields_append(tg_fields_file *f, double time_s, const double *psi, const double *q,
                         const double *ke_spectrum, tg_status *st);
/* For a run resumed from the checkpoint of its own output folder: a new
 * file (as tg_fields_create) that keeps the records of the existing `path`
 * before model time `before_s` (s); later ones are dropped, as the resumed
 * run writes them again. The new file is made as PATH.tmp and renamed over
 * PATH, so the old one stays whole until then. Errors (the old file damaged,
 * or with other variables) are TG_ERR_IO. */
tg_fields_file *tg_fields_continue(const char *path, const tg_nc_grid *g,
                                   const tg_nc_wavenumbers *wn, double before_s, tg_status *st);
/* Closes and frees (frees even on error). */
tg_code tg_fields_close(tg_fields_file *f, tg_status *st);

/* ---- budget.nc: one record per step, a list of variables chosen by the caller ---- */
typedef struct {
    const char *name;       /* netCDF variable name, e.g. "energy_wind" */
    const char *units;      /* CF units string */
    const char *long_name;  /* plain words */
    int per_layer;          /* 0: (time); 1: (time, layer); 2: (time, interface) */
} tg_budget_var;

typedef struct tg_budget_file tg_budget_file;

/* Dimensions: time (unlimited), layer (nlayers), and interface (nlayers-1)
 * when nlayers > 1; a per_layer 2 variable with one layer is TG_ERR_INTERNAL.
 * Besides the caller's variables the file holds time (days, CF) and step
 * (stored as double: classic files have no 64-bit integer; exact to 2^53).
 * The record buffer holds 256 records unless tg_budget_set_buffer changes it. */
tg_budget_file *tg_budget_create(const char *path, const tg_nc_grid *g, const tg_budget_var *vars,
                                 int nvars, tg_status *st);
/* For a run resumed from the checkpoint of its own output folder: as
 * tg_budget_create, keeping the records of the existing `path` up to and
 * including step `last_step` (later ones are dropped; the resumed run
 * appends them again). Made as PATH.tmp and renamed over PATH. TG_ERR_IO
 * when the old file is damaged, has other variables, or its kept records do
 * not end at last_step (steps would be missing). */
tg_budget_file *tg_budget_continue(const char *path, const tg_nc_grid *g,
                                   const tg_budget_var *vars, int nvars, long last_step,
                                   tg_status *st);
/* Re-sizes the record buffer to `nrecords` (>= 1). Allocates, so call it at
 * set-up; allowed only while the buffer is empty (before the first append or
 * right after a flush), otherwise TG_ERR_INTERNAL. */
tg_code tg_budget_set_buffer(tg_budget_file *b, int nrecords, tg_status *st);
/* Appends one record: time_s, step index, and for each variable in the order
 * given at creation its values (1, nlayers or nlayers-1 numbers) packed one
 * after another in `values`. Records are buffered in memory allocated at
 * creation and written in blocks; a full buffer is flushed (written and
 * synced) by the append that fills it. Never allocates. */
tg_code tg_budget_append(tg_budget_file *b, double time_s, long step, const double *values,
                         tg_status *st);
/* Writes buffered records and syncs. Called at snapshot and checkpoint
 * times and on exit. */
tg_code tg_budget_flush(tg_budget_file *b, tg_status *st);
/* Flushes, closes and frees (frees even on error). */
tg_code tg_budget_close(tg_budget_file *b, tg_status *st);
/* Number of doubles one record of `values` holds. */
int tg_budget_record_len(const tg_budget_file *b);

/* ---- checkpoint.nc: everything needed to resume bitwise ---- */
typedef struct {
    double time_s;           /* model time, s since day 0 */
    long step;               /* steps taken since day 0 */
    const double *psi;       /* nlayers*ny*nx */
    const double *q;         /* nlayers*ny*nx, the prognostic PV */
    /* Opaque extra state (closures later): named double arrays. */
    int nextra;
    const char *const *extra_names;
    const double *const *extra_data;
    const size_t *extra_len;
} tg_checkpoint;

/* Writes to PATH.tmp then renames over PATH, so a crash never leaves a half file.
 * Every variable carries its data_checksum attribute (ncverify.h).
 * Holds psi(layer, y, x), q(layer, y, x), scalar time (days, CF), time_seconds
 * (the exact time_s), step (double), and each extra array as a 1-D variable
 * named after it with its own dimension "<name>_len" (length >= 1). */
tg_code tg_checkpoint_write(const char *path, const tg_nc_grid *g, const tg_checkpoint *c,
                            tg_status *st);

/* ---- reading an initial state ---- */
typedef struct {
    int has_q;        /* 1 when the file holds q (a checkpoint): resume bitwise */
    int has_time;     /* 1 when the file says the model time and step (checkpoint) */
    double time_s;
    long step;
} tg_initial_info;

/* Reads psi(layer, y, x), or the last record of psi(time, layer, y, x), from
 * `path` into psi (nlayers*ny*nx), and q likewise when present (q may be NULL
 * to skip; q is left untouched when the file has none). Any numeric type is
 * converted to double. A grid (ny, nx) or layer count that differs from the
 * given one is TG_ERR_CONFIG with both shapes in the message, points given
 * as "nx x ny". A missing psi, or one of another rank, is TG_ERR_IO.
 * info (may be NULL): has_q says whether the file holds q; has_time is set
 * when the file has scalar time (or time_seconds) and step, as a checkpoint
 * has; time_s then prefers the exact time_seconds.
 * The file is checked first (tg_nc_open_verified: regular, whole, matching
 * its checksums); NaN/Inf in psi or q, a step that is not a whole number in
 * [0, 2^53] and a time that is not finite and >= 0 are TG_ERR_IO too, with
 * the file, the variable and (for values) the position in the message. */
tg_code tg_initial_read(const char *path, int nx, int ny, int nlayers, double *psi, double *q,
                        tg_initial_info *info, tg_status *st);

/* Reads a named extra array from a checkpoint (closure state); TG_ERR_IO when
 * missing, TG_ERR_CONFIG when its length is not `len`. */
tg_code tg_checkpoint_read_extra(const char *path, const char *name, double *data, size_t len,
                                 tg_status *st);

#endif
