/* ncio.c - the NetCDF files of a run: fields.nc, budget.nc, checkpoint.nc,
 * and reading an initial state (see ncio.h for the contract).
 *
 * Every file is netCDF classic 64-bit-offset (NC_64BIT_OFFSET) with CF-1.8
 * metadata. Every nc_* call goes through tg_nc_check(), which turns a netCDF
 * error into "PATH: what failed (variable NAME): netCDF message" in the
 * caller's tg_status and TG_ERR_IO. Memory is owned by the file handles and
 * allocated at create; appends allocate nothing.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#define _POSIX_C_SOURCE 200809L

#include "ncio.h"
#include "ncio_util.h"
#include "ncio_keep.h"
#include "ncverify.h"

#include <errno.h>
#include <math.h>
#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#ifdef PACKAGE_VERSION
#define TG_NC_VERSION PACKAGE_VERSION
#else
#define TG_NC_VERSION "unknown"
#endif

#define TG_SECONDS_PER_DAY 86400.0
#define TG_TIME_UNITS "days since 0001-01-01 00:00:00"
#define TG_TIME_CALENDAR "noleap"

/* ------------------------------------------------------------------------ */
/* Error helper and small building blocks                                    */
/* ------------------------------------------------------------------------ */

/* Turns a netCDF return code into TG_OK or TG_ERR_IO with a message naming the
 * file, what was being done and (when var is not NULL) the variable. */
/* Shorthand inside functions that have `path`, `st`, a tg_code `code` and a
 * `fail:` label. */
#define NC_TRY(call, what, var)                                                   \
    do {                                                                          \
        code = tg_nc_check((call), path, (what), (var), st);                         \
        if (code != TG_OK)                                                        \
            goto fail;                                                            \
    } while (0)

static char *dup_string(const char *s)
{
    size_t n = strlen(s) + 1;
    char *d = malloc(n);
    if (d)
        memcpy(d, s, n);
    return d;
}

static tg_code check_grid(const char *path, const tg_nc_grid *g, tg_status *st)
{
    if (!path)
        return tg_fail(st, TG_ERR_INTERNAL, "netCDF output: no file path given");
    if (!g || !g->x || !g->y || g->nx < 1 || g->ny < 1 || g->nlayers < 1)
        return tg_fail(st, TG_ERR_INTERNAL,
                       "%s: grid description is incomplete (need nx, ny, nlayers >= 1 and "
                       "x, y coordinates)",
                       path);
    return TG_OK;
}

/* Global attributes shared by every file of a run. */
tg_code tg_nc_globals(int ncid, const char *path, const tg_nc_grid *g, const char *default_title,
                      tg_status *st)
{
    tg_code code;
    const char *cmd = g->command_line ? g->command_line : "(not given)";
    const char *cfg = g->config_text ? g->config_text : "(not given)";
    const char *title = g->title ? g->title : default_title;

    char stamp[32] = "unknown time";
    time_t now = time(NULL);
    struct tm tmv;
    if (now != (time_t)-1 && gmtime_r(&now, &tmv))
        strftime(stamp, sizeof stamp, "%Y-%m-%dT%H:%M:%SZ", &tmv);

    size_t hlen = strlen(stamp) + strlen(cmd) + 64;
    char *history = malloc(hlen);
    if (!history)
        return tg_fail(st, TG_ERR_NOMEM, "%s: allocating the history attribute failed", path);
    if (g->command_line)
        snprintf(history, hlen, "%s: %s", stamp, cmd);
    else
        snprintf(history, hlen, "%s: created by twingyre %s", stamp, TG_NC_VERSION);

    if ((code = tg_nc_put_text(ncid, NC_GLOBAL, "Conventions", "CF-1.8", path, NULL, st)) ||
        (code = tg_nc_put_text(ncid, NC_GLOBAL, "title", title, path, NULL, st)) ||
        (code = tg_nc_put_text(ncid, NC_GLOBAL, "source", "twingyre " TG_NC_VERSION, path, NULL,
                         st)) ||
        (code = tg_nc_put_text(ncid, NC_GLOBAL, "history", history, path, NULL, st)) ||
        (code = tg_nc_put_text(ncid, NC_GLOBAL, "command_line", cmd, path, NULL, st)) ||
        (code = tg_nc_put_text(ncid, NC_GLOBAL, "resolved_config", cfg, path, NULL, st))) {
        free(history);
        return code;
    }
    free(history);
    return TG_OK;
}

/* CF attributes of a time variable (record coordinate or checkpoint scalar). */
tg_code tg_nc_time_atts(int ncid, int varid, const char *path, tg_status *st)
{
    tg_code code;
    if ((code = tg_nc_put_text(ncid, varid, "units", TG_TIME_UNITS, path, "time", st)) ||
        (code = tg_nc_put_text(ncid, varid, "calendar", TG_TIME_CALENDAR, path, "time", st)) ||
        (code = tg_nc_put_text(ncid, varid, "standard_name", "time", path, "time", st)) ||
        (code = tg_nc_put_text(ncid, varid, "axis", "T", path, "time", st)) ||
        (code = tg_nc_put_text(ncid, varid, "long_name", "model time", path, "time", st)))
        return code;
    return TG_OK;
}

/* Defines an integer index coordinate (layer or interface) 1..n. */
static tg_code def_index_coord(int ncid, const char *path, const char *name, int n,
                               const char *long_name, int *dimid, int *varid, tg_status *st)
{
    tg_code code;
    char what[96];
    snprintf(what, sizeof what, "defining dimension \"%s\"", name);
    if ((code = tg_nc_check(nc_def_dim(ncid, name, (size_t)n, dimid), path, what, NULL, st)))
        return code;
    if ((code = tg_nc_check(nc_def_var(ncid, name, NC_INT, 1, dimid, varid), path,
                         "defining the variable", name, st)))
        return code;
    /* A count: CF's unit "1" (dimensionless). */
    if ((code = tg_nc_put_text(ncid, *varid, "units", "1", path, name, st)))
        return code;
    return tg_nc_put_text(ncid, *varid, "long_name", long_name, path, name, st);
}

static tg_code put_index_coord(int ncid, const char *path, const char *name, int varid, int n,
                               tg_status *st)
{
    tg_code code = TG_OK;
    for (int k = 0; k < n && code == TG_OK; k++) {
        size_t idx = (size_t)k;
        int v = k + 1;
        code = tg_nc_check(nc_put_var1_int(ncid, varid, &idx, &v), path, "writing the index",
                        name, st);
    }
    return code;
}

/* Dimensions and coordinate variables layer, y, x (in define mode). */
tg_code tg_nc_def_grid(int ncid, const char *path, const tg_nc_grid *g, tg_nc_grid_ids *ids,
                       tg_status *st)
{
    tg_code code;
    if ((code = def_index_coord(ncid, path, "layer", g->nlayers, "layer index, 1 at the top",
                                &ids->d_layer, &ids->v_layer, st)))
        return code;
    if ((code = tg_nc_check(nc_def_dim(ncid, "y", (size_t)g->ny, &ids->d_y), path,
                         "defining dimension \"y\"", NULL, st)) ||
        (code = tg_nc_check(nc_def_dim(ncid, "x", (size_t)g->nx, &ids->d_x), path,
                         "defining dimension \"x\"", NULL, st)) ||
        (code = tg_nc_check(nc_def_var(ncid, "y", NC_DOUBLE, 1, &ids->d_y, &ids->v_y), path,
                         "defining the variable", "y", st)) ||
        (code = tg_nc_check(nc_def_var(ncid, "x", NC_DOUBLE, 1, &ids->d_x, &ids->v_x), path,
                         "defining the variable", "x", st)))
        return code;
    /* The long names hold for both the walled basin (origin at the south-west
     * corner) and the periodic domain (origin at the start of the period). */
    if ((code = tg_nc_put_text(ncid, ids->v_y, "units", "m", path, "y", st)) ||
        (code = tg_nc_put_text(ncid, ids->v_y, "standard_name", "projection_y_coordinate", path, "y",
                         st)) ||
        (code = tg_nc_put_text(ncid, ids->v_y, "axis", "Y", path, "y", st)) ||
        (code = tg_nc_put_text(ncid, ids->v_y, "long_name", "northward distance from the domain origin",
                         path, "y", st)) ||
        (code = tg_nc_put_text(ncid, ids->v_x, "units", "m", path, "x", st)) ||
        (code = tg_nc_put_text(ncid, ids->v_x, "standard_name", "projection_x_coordinate", path, "x",
                         st)) ||
        (code = tg_nc_put_text(ncid, ids->v_x, "axis", "X", path, "x", st)) ||
        (code = tg_nc_put_text(ncid, ids->v_x, "long_name", "eastward distance from the domain origin",
                         path, "x", st)))
        return code;
    return TG_OK;
}

/* Writes the grid coordinates (in data mode). */
tg_code tg_nc_put_grid(int ncid, const char *path, const tg_nc_grid *g, const tg_nc_grid_ids *ids,
                       tg_status *st)
{
    tg_code code;
    if ((code = put_index_coord(ncid, path, "layer", ids->v_layer, g->nlayers, st)) ||
        (code = tg_nc_check(nc_put_var_double(ncid, ids->v_y, g->y), path, "writing coordinates",
                         "y", st)) ||
        (code = tg_nc_check(nc_put_var_double(ncid, ids->v_x, g->x), path, "writing coordinates",
                         "x", st)))
        return code;
    return TG_OK;
}

/* psi and q with their CF attributes; dims given by the caller. */
static tg_code def_psi_q(int ncid, const char *path, int ndims, const int *dims, int *v_psi,
                         int *v_q, tg_status *st)
{
    tg_code code;
    if ((code = tg_nc_check(nc_def_var(ncid, "psi", NC_DOUBLE, ndims, dims, v_psi), path,
                         "defining the variable", "psi", st)) ||
        (code = tg_nc_put_text(ncid, *v_psi, "units", "m2 s-1", path, "psi", st)) ||
        (code = tg_nc_put_text(ncid, *v_psi, "long_name", "streamfunction", path, "psi", st)) ||
        (code = tg_nc_check(nc_def_var(ncid, "q", NC_DOUBLE, ndims, dims, v_q), path,
                         "defining the variable", "q", st)) ||
        (code = tg_nc_put_text(ncid, *v_q, "units", "s-1", path, "q", st)) ||
        (code = tg_nc_put_text(ncid, *v_q, "long_name",
                         "potential vorticity (including the planetary term)", path, "q", st)))
        return code;
    return TG_OK;
}

/* Closes a file on an error path; the first error is the one reported. */
static void close_quietly(int ncid)
{
    (void)nc_close(ncid); /* already failing: the first error is what the caller sees */
}

/* Closes a file read without error; *ncid becomes -1 whatever the result,
 * so the caller's clean-up does not close it again. */
static tg_code close_checked(int *ncid, const char *path, tg_status *st)
{
    const int rc = nc_close(*ncid);
    *ncid = -1;
    return tg_nc_check(rc, path, "closing the file", NULL, st);
}

/* ------------------------------------------------------------------------ */
/* fields.nc                                                                 */
/* ------------------------------------------------------------------------ */

struct tg_fields_file {
    int ncid;
    char *path;
    int nx, ny, nlayers;
    int nbins;   /* 0: the file has no spectrum */
    int v_time, v_psi, v_q, v_spec;
    size_t nrec; /* records written */
};

tg_code tg_nc_def_spectrum(int ncid, const char *path, const tg_nc_wavenumbers *wn, int d_time,
                           int d_layer, const char *long_name, int *v_k, int *v_spec,
                           tg_status *st)
{
    tg_code code;
    int d_k;
    if ((code = tg_nc_check(nc_def_dim(ncid, "wavenumber", (size_t)wn->nbins, &d_k), path,
                         "defining dimension \"wavenumber\"", NULL, st)) ||
        (code = tg_nc_check(nc_def_var(ncid, "wavenumber", NC_DOUBLE, 1, &d_k, v_k), path,
                         "defining the variable", "wavenumber", st)) ||
        (code = tg_nc_put_text(ncid, *v_k, "units", "rad m-1", path, "wavenumber", st)) ||
        (code = tg_nc_put_text(ncid, *v_k, "long_name", "isotropic wavenumber, bin centre", path,
                         "wavenumber", st)) ||
        (code = tg_nc_check(nc_put_att_double(ncid, *v_k, "bin_width", NC_DOUBLE, 1,
                                           &wn->bin_width),
                         path, "writing attribute \"bin_width\"", "wavenumber", st)) ||
        (code = tg_nc_put_text(ncid, *v_k, "comment",
                         "bin b holds the wavenumbers K with k_b - bin_width/2 <= K < "
                         "k_b + bin_width/2; bin_width is in rad m-1",
                         path, "wavenumber", st)))
        return code;
    int dims[3] = {d_time, d_layer, d_k};
    if ((code = tg_nc_check(nc_def_var(ncid, "ke_spectrum", NC_DOUBLE, 3, dims, v_spec), path,
                         "defining the variable", "ke_spectrum", st)) ||
        (code = tg_nc_put_text(ncid, *v_spec, "units", "m3 s-2", path, "ke_spectrum", st)) ||
        (code = tg_nc_put_text(ncid, *v_spec, "long_name", long_name, path, "ke_spectrum",
                               st)))
        return code;
    return TG_OK;
}

tg_fields_file *tg_fields_create(const char *path, const tg_nc_grid *g,
                                 const tg_nc_wavenumbers *wn, tg_status *st)
{
    tg_code code;
    if (check_grid(path, g, st))
        return NULL;
    if (wn && (wn->nbins < 1 || !wn->k || !(wn->bin_width > 0.0))) {
        tg_fail(st, TG_ERR_INTERNAL,
                "%s: wavenumber axis is incomplete (need nbins >= 1, bin centres and a bin "
                "width > 0; got %d bins, width %g rad/m)",
                path, wn->nbins, wn->bin_width);
        return NULL;
    }

    tg_fields_file *f = calloc(1, sizeof *f);
    if (!f) {
        tg_fail(st, TG_ERR_NOMEM, "%s: allocating the fields file handle failed", path);
        return NULL;
    }
    f->ncid = -1;
    f->path = dup_string(path);
    if (!f->path) {
        tg_fail(st, TG_ERR_NOMEM, "%s: allocating the fields file handle failed", path);
        free(f);
        return NULL;
    }
    f->nx = g->nx;
    f->ny = g->ny;
    f->nlayers = g->nlayers;
    f->nbins = wn ? wn->nbins : 0;
    f->v_spec = -1;

    int ncid = -1;
    tg_nc_grid_ids ids;
    int d_time, v_k = -1;
    NC_TRY(nc_create(path, NC_CLOBBER | NC_64BIT_OFFSET, &ncid), "creating the file", NULL);
    int old_fill;
    NC_TRY(nc_set_fill(ncid, NC_NOFILL, &old_fill), "setting no-fill mode", NULL);
    NC_TRY(nc_def_dim(ncid, "time", NC_UNLIMITED, &d_time), "defining dimension \"time\"", NULL);
    if ((code = tg_nc_def_grid(ncid, path, g, &ids, st)))
        goto fail;
    NC_TRY(nc_def_var(ncid, "time", NC_DOUBLE, 1, &d_time, &f->v_time), "defining the variable",
           "time");
    if ((code = tg_nc_time_atts(ncid, f->v_time, path, st)))
        goto fail;
    int dims[4] = {d_time, ids.d_layer, ids.d_y, ids.d_x};
    if ((code = def_psi_q(ncid, path, 4, dims, &f->v_psi, &f->v_q, st)))
        goto fail;
    if (wn && (code = tg_nc_def_spectrum(ncid, path, wn, d_time, ids.d_layer,
                                         "kinetic energy spectral density per unit mass; its sum "
                                         "times the bin width equals kinetic_energy in budget.nc",
                                         &v_k, &f->v_spec, st)))
        goto fail;
    if ((code = tg_nc_globals(ncid, path, g, "twingyre snapshots of streamfunction and potential "
                                           "vorticity", st)))
        goto fail;
    NC_TRY(nc_enddef(ncid), "finishing the header", NULL);
    if ((code = tg_nc_put_grid(ncid, path, g, &ids, st)))
        goto fail;
    if (wn)
        NC_TRY(nc_put_var_double(ncid, v_k, wn->k), "writing coordinates", "wavenumber");
    NC_TRY(nc_sync(ncid), "syncing the file", NULL);
    f->ncid = ncid;
    return f;

fail:
    if (ncid >= 0)
        close_quietly(ncid);
    free(f->path);
    free(f);
    return NULL;
}

tg_code tg_fields_append(tg_fields_file *f, double time_s, const double *psi, const double *q,
                         const double *ke_spectrum, tg_status *st)
{
    if (!f || !psi || !q)
        return tg_fail(st, TG_ERR_INTERNAL, "fields append: missing file handle or data");
    if ((f->nbins > 0) != (ke_spectrum != NULL))
        return tg_fail(st, TG_ERR_INTERNAL,
                       "%s: fields append: %s", f->path,
                       f->nbins > 0 ? "the file has ke_spectrum but no spectrum was given"
                                    : "a spectrum was given but the file has no ke_spectrum");
    tg_code code;
    const char *path = f->path;
    double days = time_s / TG_SECONDS_PER_DAY;
    size_t t = f->nrec;
    size_t start[4] = {t, 0, 0, 0};
    size_t count[4] = {1, (size_t)f->nlayers, (size_t)f->ny, (size_t)f->nx};
    NC_TRY(nc_put_var1_double(f->ncid, f->v_time, &t, &days), "writing a record", "time");
    NC_TRY(nc_put_vara_double(f->ncid, f->v_psi, start, count, psi), "writing a record", "psi");
    NC_TRY(nc_put_vara_double(f->ncid, f->v_q, start, count, q), "writing a record", "q");
    if (f->nbins > 0) {
        size_t sstart[3] = {t, 0, 0};
        size_t scount[3] = {1, (size_t)f->nlayers, (size_t)f->nbins};
        NC_TRY(nc_put_vara_double(f->ncid, f->v_spec, sstart, scount, ke_spectrum),
               "writing a record", "ke_spectrum");
    }
    NC_TRY(nc_sync(f->ncid), "syncing the file", NULL);
    f->nrec = t + 1;
    return TG_OK;
fail:
    return code;
}

tg_code tg_fields_close(tg_fields_file *f, tg_status *st)
{
    if (!f)
        return TG_OK;
    tg_code code = tg_nc_check(nc_close(f->ncid), f->path, "closing the file", NULL, st);
    free(f->path);
    free(f);
    return code;
}

/* PATH.tmp, malloc'ed (NULL when out of memory). */
static char *tmp_path(const char *path)
{
    size_t n = strlen(path);
    char *t = malloc(n + 5);
    if (t) {
        memcpy(t, path, n);
        memcpy(t + n, ".tmp", 5);
    }
    return t;
}

/* Fills a file made at PATH.tmp (open as ncid) with the records of PATH
 * whose `key` is <= limit (inclusive) or < limit, then renames it over PATH:
 * the old file stays whole until then. With want_last >= 0 the kept records
 * must end at key want_last (or be none). *own_path, the handle's path for
 * messages, switches to PATH; *n is the number of records kept. */
static tg_code continue_fill(int ncid, const char *tmp, const char *path, const char *key,
                             double limit, int inclusive, double want_last, char **own_path,
                             size_t *n, tg_status *st)
{
    double last;
    tg_code code = tg_nc_keep_records(path, ncid, key, limit, inclusive, n, &last, st);
    if (code)
        return code;
    if (want_last >= 0.0 && *n > 0 && last != want_last)
        return tg_fail(st, TG_ERR_IO,
                       "%s: the records end at %s %.17g, before the checkpoint's %.17g: the "
                       "ones between are lost (resume into another folder, or pass "
                       "--overwrite to start the output files afresh)",
                       path, key, last, want_last);
    if ((code = tg_nc_check(nc_sync(ncid), tmp, "syncing the file", NULL, st)))
        return code;
    char *final = dup_string(path);
    if (!final)
        return tg_fail(st, TG_ERR_NOMEM, "%s: no memory for the file name", path);
    if (rename(tmp, path) != 0) {
        free(final);
        return tg_fail(st, TG_ERR_IO, "%s: renaming %s over it failed: %s", path, tmp,
                       strerror(errno));
    }
    free(*own_path);
    *own_path = final;
    return TG_OK;
}

tg_fields_file *tg_fields_continue(const char *path, const tg_nc_grid *g,
                                   const tg_nc_wavenumbers *wn, double before_s, tg_status *st)
{
    char *tmp = tmp_path(path);
    if (!tmp) {
        tg_fail(st, TG_ERR_NOMEM, "%s: no memory for the file name", path);
        return NULL;
    }
    tg_fields_file *f = tg_fields_create(tmp, g, wn, st);
    size_t n = 0;
    if (f && continue_fill(f->ncid, tmp, path, "time", before_s / TG_SECONDS_PER_DAY, 0, -1.0,
                           &f->path, &n, st)) {
        close_quietly(f->ncid);
        (void)remove(tmp); /* the old file is left as it was */
        free(f->path);
        free(f);
        f = NULL;
    }
    if (f)
        f->nrec = n;
    free(tmp);
    return f;
}

/* ------------------------------------------------------------------------ */
/* budget.nc                                                                 */
/* ------------------------------------------------------------------------ */

#define TG_BUDGET_DEFAULT_BUFFER 256

struct tg_budget_file {
    int ncid;
    char *path;
    int nlayers;
    int nvars;
    int reclen;     /* doubles per record of `values` */
    int v_time, v_step;
    int *varid;     /* nvars */
    int *width;     /* nvars: 1, nlayers or nlayers-1 */
    int *offset;    /* nvars: position of the variable inside one record of `values` */
    char **names;   /* nvars, owned copies for messages */
    size_t cap;     /* records the buffer holds */
    size_t nbuf;    /* records waiting in the buffer */
    size_t nrec;    /* records written to the file */
    double *buf_time; /* cap, days */
    int *buf_step;    /* cap */
    double *buf_vals; /* cap*reclen, variable-major: variable v at cap*offset[v],
                         record r of it at + r*width[v] (a ready nc_put_vara block) */
};

static void budget_free(tg_budget_file *b)
{
    if (!b)
        return;
    if (b->names)
        for (int v = 0; v < b->nvars; v++)
            free(b->names[v]);
    free(b->names);
    free(b->varid);
    free(b->width);
    free(b->offset);
    free(b->buf_time);
    free(b->buf_step);
    free(b->buf_vals);
    free(b->path);
    free(b);
}

/* (Re)allocates the record buffer for `cap` records; the buffer must be empty. */
static tg_code budget_alloc_buffer(tg_budget_file *b, size_t cap, tg_status *st)
{
    size_t nvals = cap * (size_t)b->reclen;
    double *t = malloc(cap * sizeof *t);
    int *s = malloc(cap * sizeof *s);
    double *v = malloc((nvals ? nvals : 1) * sizeof *v);
    if (!t || !s || !v) {
        free(t);
        free(s);
        free(v);
        return tg_fail(st, TG_ERR_NOMEM, "%s: allocating a budget buffer of %zu records failed",
                       b->path, cap);
    }
    free(b->buf_time);
    free(b->buf_step);
    free(b->buf_vals);
    b->buf_time = t;
    b->buf_step = s;
    b->buf_vals = v;
    b->cap = cap;
    return TG_OK;
}

/* The checks of tg_budget_create on its arguments: a whole grid, named
 * variables per layer (1), per interface (2) or not (0), interfaces only
 * with two layers or more. */
static tg_code budget_check(const char *path, const tg_nc_grid *g, const tg_budget_var *vars,
                            int nvars, tg_status *st)
{
    tg_code code;
    if ((code = check_grid(path, g, st)))
        return code;
    if (nvars < 0 || (nvars > 0 && !vars))
        return tg_fail(st, TG_ERR_INTERNAL, "%s: budget variable list is missing", path);
    int need_interface = 0;
    for (int v = 0; v < nvars; v++) {
        if (!vars[v].name || !vars[v].units || !vars[v].long_name)
            return tg_fail(st, TG_ERR_INTERNAL,
                           "%s: budget variable %d lacks a name, units or long name", path, v);
        if (vars[v].per_layer < 0 || vars[v].per_layer > 2)
            return tg_fail(st, TG_ERR_INTERNAL,
                           "%s: budget variable %s has per_layer %d (must be 0, 1 or 2)", path,
                           vars[v].name, vars[v].per_layer);
        if (vars[v].per_layer == 2)
            need_interface = 1;
    }
    if (need_interface && g->nlayers < 2)
        return tg_fail(st, TG_ERR_INTERNAL, "%s: a budget variable is defined on layer "
                       "interfaces but the run has 1 layer", path);
    return TG_OK;
}

/* A budget file handle for vars (names, widths and offsets of a record, the
 * record buffer), its file not yet open; NULL (st set) on no memory. */
static tg_budget_file *budget_new(const char *path, const tg_nc_grid *g,
                                  const tg_budget_var *vars, int nvars, tg_status *st)
{
    tg_budget_file *b = calloc(1, sizeof *b);
    if (!b)
        goto nomem;
    b->ncid = -1;
    b->nlayers = g->nlayers;
    b->nvars = nvars;
    b->path = dup_string(path);
    size_t nv = nvars > 0 ? (size_t)nvars : 1;
    b->varid = calloc(nv, sizeof *b->varid);
    b->width = calloc(nv, sizeof *b->width);
    b->offset = calloc(nv, sizeof *b->offset);
    b->names = calloc(nv, sizeof *b->names);
    if (!b->path || !b->varid || !b->width || !b->offset || !b->names)
        goto nomem;
    b->reclen = 0;
    for (int v = 0; v < nvars; v++) {
        b->names[v] = dup_string(vars[v].name);
        if (!b->names[v])
            goto nomem;
        b->width[v] = vars[v].per_layer == 0 ? 1
                      : vars[v].per_layer == 1 ? g->nlayers
                                               : g->nlayers - 1;
        b->offset[v] = b->reclen;
        b->reclen += b->width[v];
    }
    if (budget_alloc_buffer(b, TG_BUDGET_DEFAULT_BUFFER, st))
        goto fail;
    return b;

nomem:
    tg_fail(st, TG_ERR_NOMEM, "%s: allocating the budget file handle failed", path);
fail:
    budget_free(b);
    return NULL;
}

tg_budget_file *tg_budget_create(const char *path, const tg_nc_grid *g, const tg_budget_var *vars,
                                 int nvars, tg_status *st)
{
    tg_code code;
    if (budget_check(path, g, vars, nvars, st))
        return NULL;
    tg_budget_file *b = budget_new(path, g, vars, nvars, st);
    int ncid = -1;
    if (!b)
        return NULL;

    int d_time, d_layer, v_layer, d_iface = -1, v_iface = -1;
    NC_TRY(nc_create(path, NC_CLOBBER | NC_64BIT_OFFSET, &ncid), "creating the file", NULL);
    int old_fill;
    NC_TRY(nc_set_fill(ncid, NC_NOFILL, &old_fill), "setting no-fill mode", NULL);
    NC_TRY(nc_def_dim(ncid, "time", NC_UNLIMITED, &d_time), "defining dimension \"time\"", NULL);
    if ((code = def_index_coord(ncid, path, "layer", g->nlayers, "layer index, 1 at the top",
                                &d_layer, &v_layer, st)))
        goto fail;
    if (g->nlayers > 1 &&
        (code = def_index_coord(ncid, path, "interface", g->nlayers - 1,
                                "interface index, 1 below the top layer", &d_iface, &v_iface, st)))
        goto fail;
    NC_TRY(nc_def_var(ncid, "time", NC_DOUBLE, 1, &d_time, &b->v_time), "defining the variable",
           "time");
    if ((code = tg_nc_time_atts(ncid, b->v_time, path, st)))
        goto fail;
    /* Classic files have no 64-bit integer type: NC_INT, up to TG_NC_STEP_MAX. */
    NC_TRY(nc_def_var(ncid, "step", NC_INT, 1, &d_time, &b->v_step), "defining the variable",
           "step");
    if ((code = tg_nc_put_text(ncid, b->v_step, "long_name", "steps taken since day 0", path, "step",
                         st)) ||
        (code = tg_nc_put_text(ncid, b->v_step, "units", "1", path, "step", st)))
        goto fail;
    for (int v = 0; v < nvars; v++) {
        int dims[2] = {d_time, vars[v].per_layer == 1 ? d_layer : d_iface};
        int nd = vars[v].per_layer == 0 ? 1 : 2;
        NC_TRY(nc_def_var(ncid, vars[v].name, NC_DOUBLE, nd, dims, &b->varid[v]),
               "defining the variable", vars[v].name);
        if ((code = tg_nc_put_text(ncid, b->varid[v], "units", vars[v].units, path, vars[v].name, st)) ||
            (code = tg_nc_put_text(ncid, b->varid[v], "long_name", vars[v].long_name, path,
                             vars[v].name, st)))
            goto fail;
    }
    if ((code = tg_nc_globals(ncid, path, g, "twingyre per-step budget", st)))
        goto fail;
    NC_TRY(nc_enddef(ncid), "finishing the header", NULL);
    if ((code = put_index_coord(ncid, path, "layer", v_layer, g->nlayers, st)))
        goto fail;
    if (g->nlayers > 1 &&
        (code = put_index_coord(ncid, path, "interface", v_iface, g->nlayers - 1, st)))
        goto fail;
    NC_TRY(nc_sync(ncid), "syncing the file", NULL);
    b->ncid = ncid;
    return b;

fail:
    if (ncid >= 0)
        close_quietly(ncid);
    budget_free(b);
    return NULL;
}

tg_budget_file *tg_budget_continue(const char *path, const tg_nc_grid *g,
                                   const tg_budget_var *vars, int nvars, long last_step,
                                   tg_status *st)
{
    char *tmp = tmp_path(path);
    if (!tmp) {
        tg_fail(st, TG_ERR_NOMEM, "%s: no memory for the file name", path);
        return NULL;
    }
    tg_budget_file *b = tg_budget_create(tmp, g, vars, nvars, st);
    size_t n = 0;
    if (b && continue_fill(b->ncid, tmp, path, "step", (double)last_step, 1, (double)last_step,
                           &b->path, &n, st)) {
        close_quietly(b->ncid);
        (void)remove(tmp); /* the old file is left as it was */
        budget_free(b);
        b = NULL;
    }
    if (b)
        b->nrec = n;
    free(tmp);
    return b;
}

tg_code tg_budget_set_buffer(tg_budget_file *b, int nrecords, tg_status *st)
{
    if (!b)
        return tg_fail(st, TG_ERR_INTERNAL, "budget buffer: missing file handle");
    if (nrecords < 1)
        return tg_fail(st, TG_ERR_INTERNAL, "%s: budget buffer of %d records (must be >= 1)",
                       b->path, nrecords);
    if (b->nbuf != 0)
        return tg_fail(st, TG_ERR_INTERNAL,
                       "%s: budget buffer resized while %zu records wait in it (flush first)",
                       b->path, b->nbuf);
    return budget_alloc_buffer(b, (size_t)nrecords, st);
}

int tg_budget_record_len(const tg_budget_file *b)
{
    return b ? b->reclen : 0;
}

tg_code tg_budget_flush(tg_budget_file *b, tg_status *st)
{
    if (!b)
        return tg_fail(st, TG_ERR_INTERNAL, "budget flush: missing file handle");
    if (b->nbuf == 0)
        return TG_OK;
    tg_code code;
    const char *path = b->path;
    size_t start[2] = {b->nrec, 0};
    size_t count[2] = {b->nbuf, 0};
    NC_TRY(nc_put_vara_double(b->ncid, b->v_time, start, count, b->buf_time), "writing records",
           "time");
    NC_TRY(nc_put_vara_int(b->ncid, b->v_step, start, count, b->buf_step), "writing records",
           "step");
    for (int v = 0; v < b->nvars; v++) {
        count[1] = (size_t)b->width[v];
        const double *block = b->buf_vals + b->cap * (size_t)b->offset[v];
        NC_TRY(nc_put_vara_double(b->ncid, b->varid[v], start, count, block), "writing records",
               b->names[v]);
    }
    NC_TRY(nc_sync(b->ncid), "syncing the file", NULL);
    b->nrec += b->nbuf;
    b->nbuf = 0;
    return TG_OK;
fail:
    return code;
}

tg_code tg_budget_append(tg_budget_file *b, double time_s, long step, const double *values,
                         tg_status *st)
{
    if (!b || (b->reclen > 0 && !values))
        return tg_fail(st, TG_ERR_INTERNAL, "budget append: missing file handle or values");
    if (step < 0 || step > TG_NC_STEP_MAX)
        return tg_fail(st, TG_ERR_INTERNAL, "%s: step %ld does not fit the file's step variable "
                       "(at most %ld)", b->path, step, TG_NC_STEP_MAX);
    tg_code code;
    if (b->nbuf == b->cap && (code = tg_budget_flush(b, st))) /* an earlier flush failed */
        return code;
    size_t r = b->nbuf;
    b->buf_time[r] = time_s / TG_SECONDS_PER_DAY;
    b->buf_step[r] = (int)step;
    for (int v = 0; v < b->nvars; v++) {
        double *dst = b->buf_vals + b->cap * (size_t)b->offset[v] + r * (size_t)b->width[v];
        memcpy(dst, values + b->offset[v], (size_t)b->width[v] * sizeof *dst);
    }
    b->nbuf = r + 1;
    if (b->nbuf == b->cap)
        return tg_budget_flush(b, st);
    return TG_OK;
}

tg_code tg_budget_close(tg_budget_file *b, tg_status *st)
{
    if (!b)
        return TG_OK;
    tg_code code = tg_budget_flush(b, st);
    if (code == TG_OK)
        code = tg_nc_check(nc_close(b->ncid), b->path, "closing the file", NULL, st);
    else
        close_quietly(b->ncid);
    budget_free(b);
    return code;
}

/* ------------------------------------------------------------------------ */
/* checkpoint.nc                                                             */
/* ------------------------------------------------------------------------ */

/* Defines the closures' extra arrays of a checkpoint (one dimension NAME_len
 * and one variable NAME each, with its checksum) into v_extra. */
static tg_code def_checkpoint_extras(int ncid, const char *path, const tg_checkpoint *c,
                                     int *v_extra, tg_status *st)
{
    tg_code code = TG_OK;
    for (int e = 0; e < c->nextra; e++) {
        char dname[NC_MAX_NAME + 1];
        const char *name = c->extra_names[e];
        int d;
        snprintf(dname, sizeof dname, "%s_len", name);
        NC_TRY(nc_def_dim(ncid, dname, c->extra_len[e], &d), "defining the length dimension", name);
        NC_TRY(nc_def_var(ncid, name, NC_DOUBLE, 1, &d, &v_extra[e]), "defining the variable",
               name);
        if ((code = tg_nc_put_text(ncid, v_extra[e], "long_name",
                             "saved state of a closure (opaque to the file format)", path, name,
                             st)) ||
            (code = tg_nc_put_checksum(
                 ncid, v_extra[e],
                 tg_fnv1a_doubles(TG_FNV1A_START, c->extra_data[e], c->extra_len[e]), path, name,
                 st)))
            goto fail;
    }
fail:
    return code;
}

/* The checks of tg_checkpoint_write on its arguments: a whole grid, psi and
 * q, a step the file's NC_INT holds, and named, non-empty extra arrays. */
static tg_code checkpoint_check(const char *final_path, const tg_nc_grid *g,
                                const tg_checkpoint *c, tg_status *st)
{
    tg_code code;
    if ((code = check_grid(final_path, g, st)))
        return code;
    if (!c || !c->psi || !c->q || c->nextra < 0 ||
        (c->nextra > 0 && (!c->extra_names || !c->extra_data || !c->extra_len)))
        return tg_fail(st, TG_ERR_INTERNAL, "%s: checkpoint data is incomplete", final_path);
    if (c->step < 0 || c->step > TG_NC_STEP_MAX)
        return tg_fail(st, TG_ERR_INTERNAL, "%s: step %ld does not fit the file's step variable "
                       "(at most %ld)", final_path, c->step, TG_NC_STEP_MAX);
    for (int e = 0; e < c->nextra; e++) {
        if (!c->extra_names[e] || !c->extra_data[e] || c->extra_len[e] == 0)
            return tg_fail(st, TG_ERR_INTERNAL,
                           "%s: checkpoint extra array %d has no name, no data or length 0",
                           final_path, e);
        if (strlen(c->extra_names[e]) + 5 > NC_MAX_NAME)
            return tg_fail(st, TG_ERR_INTERNAL, "%s: checkpoint extra name \"%s\" is too long",
                           final_path, c->extra_names[e]);
    }
    return TG_OK;
}

tg_code tg_checkpoint_write(const char *final_path, const tg_nc_grid *g, const tg_checkpoint *c,
                            tg_status *st)
{
    tg_code code;
    if ((code = checkpoint_check(final_path, g, c, st)))
        return code;

    char *path = tmp_path(final_path); /* the temporary file: errors name it */
    int *v_extra = malloc((c->nextra > 0 ? (size_t)c->nextra : 1) * sizeof *v_extra);
    if (!path || !v_extra) {
        free(path);
        free(v_extra);
        return tg_fail(st, TG_ERR_NOMEM, "%s: allocating checkpoint bookkeeping failed",
                       final_path);
    }

    int ncid = -1, created = 0;
    tg_nc_grid_ids ids;
    int v_time, v_secs, v_step, v_psi, v_q;
    NC_TRY(nc_create(path, NC_CLOBBER | NC_64BIT_OFFSET, &ncid), "creating the file", NULL);
    created = 1;
    int old_fill;
    NC_TRY(nc_set_fill(ncid, NC_NOFILL, &old_fill), "setting no-fill mode", NULL);
    if ((code = tg_nc_def_grid(ncid, path, g, &ids, st)))
        goto fail;
    NC_TRY(nc_def_var(ncid, "time", NC_DOUBLE, 0, NULL, &v_time), "defining the variable", "time");
    if ((code = tg_nc_time_atts(ncid, v_time, path, st)))
        goto fail;
    /* The exact model time in seconds: days * 86400 need not give back the
     * same double, and resuming must be bitwise. */
    NC_TRY(nc_def_var(ncid, "time_seconds", NC_DOUBLE, 0, NULL, &v_secs), "defining the variable",
           "time_seconds");
    if ((code = tg_nc_put_text(ncid, v_secs, "units", "s", path, "time_seconds", st)) ||
        (code = tg_nc_put_text(ncid, v_secs, "long_name", "model time in seconds since day 0", path,
                         "time_seconds", st)))
        goto fail;
    NC_TRY(nc_def_var(ncid, "step", NC_INT, 0, NULL, &v_step), "defining the variable", "step");
    if ((code = tg_nc_put_text(ncid, v_step, "long_name", "steps taken since day 0", path, "step", st)) ||
        (code = tg_nc_put_text(ncid, v_step, "units", "1", path, "step", st)))
        goto fail;
    int dims[3] = {ids.d_layer, ids.d_y, ids.d_x};
    if ((code = def_psi_q(ncid, path, 3, dims, &v_psi, &v_q, st)))
        goto fail;
    double days = c->time_s / TG_SECONDS_PER_DAY;
    double step = (double)c->step; /* the checksum is over values read as doubles */
    const size_t n3 = (size_t)g->nlayers * (size_t)g->ny * (size_t)g->nx;
    /* Each variable's checksum, which a reader verifies (ncverify.h). */
    if ((code = tg_nc_put_checksum(ncid, v_time, tg_fnv1a_doubles(TG_FNV1A_START, &days, 1), path,
                                   "time", st)) ||
        (code = tg_nc_put_checksum(ncid, v_secs, tg_fnv1a_doubles(TG_FNV1A_START, &c->time_s, 1),
                                   path, "time_seconds", st)) ||
        (code = tg_nc_put_checksum(ncid, v_step, tg_fnv1a_doubles(TG_FNV1A_START, &step, 1), path,
                                   "step", st)) ||
        (code = tg_nc_put_checksum(ncid, v_psi, tg_fnv1a_doubles(TG_FNV1A_START, c->psi, n3), path,
                                   "psi", st)) ||
        (code = tg_nc_put_checksum(ncid, v_q, tg_fnv1a_doubles(TG_FNV1A_START, c->q, n3), path,
                                   "q", st)))
        goto fail;
    if ((code = def_checkpoint_extras(ncid, path, c, v_extra, st)))
        goto fail;
    if ((code = tg_nc_globals(ncid, path, g, "twingyre checkpoint", st)))
        goto fail;
    NC_TRY(nc_enddef(ncid), "finishing the header", NULL);
    if ((code = tg_nc_put_grid(ncid, path, g, &ids, st)))
        goto fail;
    const int step_int = (int)c->step;
    NC_TRY(nc_put_var_double(ncid, v_time, &days), "writing the data", "time");
    NC_TRY(nc_put_var_double(ncid, v_secs, &c->time_s), "writing the data", "time_seconds");
    NC_TRY(nc_put_var_int(ncid, v_step, &step_int), "writing the data", "step");
    NC_TRY(nc_put_var_double(ncid, v_psi, c->psi), "writing the data", "psi");
    NC_TRY(nc_put_var_double(ncid, v_q, c->q), "writing the data", "q");
    for (int e = 0; e < c->nextra; e++)
        NC_TRY(nc_put_var_double(ncid, v_extra[e], c->extra_data[e]), "writing the data",
               c->extra_names[e]);
    if ((code = close_checked(&ncid, path, st)))
        goto fail;
    if (rename(path, final_path) != 0) {
        code = tg_fail(st, TG_ERR_IO, "%s: renaming %s over it failed: %s", final_path, path,
                       strerror(errno));
        goto fail;
    }
    free(path);
    free(v_extra);
    return TG_OK;

fail:
    if (ncid >= 0)
        close_quietly(ncid);
    if (created)
        (void)remove(path); /* best effort: the error reported is the first one */
    free(path);
    free(v_extra);
    return code;
}

/* ------------------------------------------------------------------------ */
/* Reading an initial state                                                  */
/* ------------------------------------------------------------------------ */

/* Reads var (3-D, or the last record of 4-D) into out after checking its shape. */
static tg_code read_layered(int ncid, const char *path, const char *name, int varid, int nx,
                            int ny, int nlayers, double *out, tg_status *st)
{
    tg_code code;
    int ndims;
    int dimids[NC_MAX_VAR_DIMS];
    size_t len[4] = {0, 0, 0, 0};
    NC_TRY(nc_inq_varndims(ncid, varid, &ndims), "inquiring the rank", name);
    if (ndims != 3 && ndims != 4)
        return tg_fail(st, TG_ERR_IO,
                       "%s: %s has %d dimensions; an initial state needs %s(layer, y, x) or "
                       "%s(time, layer, y, x)",
                       path, name, ndims, name, name);
    NC_TRY(nc_inq_vardimid(ncid, varid, dimids), "inquiring the dimensions", name);
    for (int d = 0; d < ndims; d++)
        NC_TRY(nc_inq_dimlen(ncid, dimids[d], &len[d]), "inquiring a dimension length", name);
    size_t start[4] = {0, 0, 0, 0};
    size_t count[4];
    int o = ndims - 3; /* index of the layer dimension */
    if (ndims == 4) {
        if (len[0] == 0)
            return tg_fail(st, TG_ERR_IO, "%s: %s has no records to start from", path, name);
        start[0] = len[0] - 1;
        count[0] = 1;
    }
    if (len[o] != (size_t)nlayers || len[o + 1] != (size_t)ny || len[o + 2] != (size_t)nx)
        return tg_fail(st, TG_ERR_CONFIG,
                       "%s: %s has %zu layers and %zu x %zu points; the config has %d layers and "
                       "%d x %d",
                       path, name, len[o], len[o + 2], len[o + 1], nlayers, nx, ny);
    count[o] = len[o];
    count[o + 1] = len[o + 1];
    count[o + 2] = len[o + 2];
    NC_TRY(nc_get_vara_double(ncid, varid, start, count, out), "reading", name);
    return tg_nc_check_finite(path, name, ndims == 4 ? (long)start[0] + 1 : -1, out, nlayers, ny,
                              nx, st);
fail:
    return code;
}

/* Looks up a variable; *found is 0 when it does not exist. */
static tg_code find_var(int ncid, const char *path, const char *name, int *varid, int *found,
                        tg_status *st)
{
    int rc = nc_inq_varid(ncid, name, varid);
    *found = rc == NC_NOERR;
    if (rc == NC_ENOTVAR)
        return TG_OK;
    return tg_nc_check(rc, path, "looking up", name, st);
}

/* Reads a scalar (0-D) variable; *found is 0 when absent or not scalar. */
static tg_code read_scalar(int ncid, const char *path, const char *name, double *value,
                           int *found, tg_status *st)
{
    tg_code code;
    int varid, ndims;
    if ((code = find_var(ncid, path, name, &varid, found, st)) || !*found)
        return code;
    NC_TRY(nc_inq_varndims(ncid, varid, &ndims), "inquiring the rank", name);
    if (ndims != 0) {
        *found = 0;
        return TG_OK;
    }
    NC_TRY(nc_get_var_double(ncid, varid, value), "reading", name);
    return TG_OK;
fail:
    return code;
}

tg_code tg_initial_read(const char *path, int nx, int ny, int nlayers, double *psi, double *q,
                        tg_initial_info *info, tg_status *st)
{
    tg_code code;
    tg_initial_info dummy;
    if (!info)
        info = &dummy;
    memset(info, 0, sizeof *info);
    if (!path || !psi || nx < 1 || ny < 1 || nlayers < 1)
        return tg_fail(st, TG_ERR_INTERNAL, "initial state: missing path or psi array, or bad grid");

    int ncid = -1;
    if ((code = tg_nc_open_verified(path, &ncid, st)))
        goto fail;

    int v_psi, found;
    if ((code = find_var(ncid, path, "psi", &v_psi, &found, st)))
        goto fail;
    if (!found) {
        code = tg_fail(st, TG_ERR_IO,
                       "%s: no variable \"psi\" (streamfunction) in the file; an initial state "
                       "needs psi(layer, y, x) or psi(time, layer, y, x)",
                       path);
        goto fail;
    }
    if ((code = read_layered(ncid, path, "psi", v_psi, nx, ny, nlayers, psi, st)))
        goto fail;

    int v_q;
    if ((code = find_var(ncid, path, "q", &v_q, &found, st)))
        goto fail;
    info->has_q = found;
    if (found && q && (code = read_layered(ncid, path, "q", v_q, nx, ny, nlayers, q, st)))
        goto fail;

    double days = 0.0, secs = 0.0, step = 0.0;
    int has_days, has_secs, has_step;
    if ((code = read_scalar(ncid, path, "time", &days, &has_days, st)) ||
        (code = read_scalar(ncid, path, "time_seconds", &secs, &has_secs, st)) ||
        (code = read_scalar(ncid, path, "step", &step, &has_step, st)))
        goto fail;
    if ((has_days || has_secs) && has_step) {
        info->has_time = 1;
        info->time_s = has_secs ? secs : days * TG_SECONDS_PER_DAY;
        /* A step count is a whole number a long holds exactly (a double is
         * exact to 2^53); the time is finite and not before day 0. Whether
         * time and step agree depends on the run's step size: the caller
         * checks that. */
        if (!(step >= 0.0 && step <= 9007199254740992.0) || step != floor(step)) {
            code = tg_fail(st, TG_ERR_IO,
                           "%s: damaged file: step is %.17g; a checkpoint's step is a whole "
                           "number from 0 to 2^53",
                           path, step);
            goto fail;
        }
        if (!isfinite(info->time_s) || info->time_s < 0.0) {
            code = tg_fail(st, TG_ERR_IO,
                           "%s: damaged file: %s is %.17g; a checkpoint's time is finite and "
                           ">= 0",
                           path, has_secs ? "time_seconds" : "time", has_secs ? secs : days);
            goto fail;
        }
        info->step = (long)step;
    }

    if ((code = close_checked(&ncid, path, st)))
        goto fail;
    return TG_OK;

fail:
    if (ncid >= 0)
        close_quietly(ncid);
    return code;
}

tg_code tg_checkpoint_read_extra(const char *path, const char *name, double *data, size_t len,
                                 tg_status *st)
{
    tg_code code;
    if (!path || !name || !data)
        return tg_fail(st, TG_ERR_INTERNAL, "checkpoint extra: missing path, name or array");
    int ncid = -1, varid, found, ndims, dimid;
    size_t n;
    if ((code = tg_nc_open_verified(path, &ncid, st)))
        goto fail;
    if ((code = find_var(ncid, path, name, &varid, &found, st)))
        goto fail;
    if (!found) {
        code = tg_fail(st, TG_ERR_IO, "%s: the checkpoint holds no saved state \"%s\"", path, name);
        goto fail;
    }
    NC_TRY(nc_inq_varndims(ncid, varid, &ndims), "inquiring the rank", name);
    if (ndims != 1) {
        code = tg_fail(st, TG_ERR_IO, "%s: saved state %s has %d dimensions (expected 1)", path,
                       name, ndims);
        goto fail;
    }
    NC_TRY(nc_inq_vardimid(ncid, varid, &dimid), "inquiring the dimensions", name);
    NC_TRY(nc_inq_dimlen(ncid, dimid, &n), "inquiring a dimension length", name);
    if (n != len) {
        code = tg_fail(st, TG_ERR_CONFIG, "%s: saved state %s has %zu values; the run expects %zu",
                       path, name, n, len);
        goto fail;
    }
    NC_TRY(nc_get_var_double(ncid, varid, data), "reading", name);
    if ((code = close_checked(&ncid, path, st)))
        goto fail;
    return TG_OK;
fail:
    if (ncid >= 0)
        close_quietly(ncid);
    return code;
}
