/* twin_io.c - record files, map files and record readers of a twin
 * experiment (twin_io.h). */
#define _POSIX_C_SOURCE 200809L
#include "twin_io.h"

#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#ifdef PACKAGE_VERSION
#define TWIN_IO_VERSION PACKAGE_VERSION
#else
#define TWIN_IO_VERSION "unknown"
#endif

#define DAY_S 86400.0
#define TIME_UNITS "days since 0001-01-01 00:00:00"

/* netCDF error -> TG_ERR_IO with the file, what failed and the variable. */
static tg_code ncc(int rc, const char *path, const char *what, const char *var, tg_status *st)
{
    if (rc == NC_NOERR)
        return TG_OK;
    if (var)
        return tg_fail(st, TG_ERR_IO, "%s: %s failed (variable %s): %s", path, what, var,
                       nc_strerror(rc));
    return tg_fail(st, TG_ERR_IO, "%s: %s failed: %s", path, what, nc_strerror(rc));
}

#define TRY(call, what, var)                                   \
    do {                                                       \
        if ((code = ncc((call), path, (what), (var), st)))     \
            goto fail;                                         \
    } while (0)

static tg_code att_text(int ncid, int varid, const char *name, const char *value,
                        const char *path, const char *var, tg_status *st)
{
    char what[128];
    snprintf(what, sizeof what, "writing attribute \"%s\"", name);
    return ncc(nc_put_att_text(ncid, varid, name, strlen(value), value), path, what, var, st);
}

/* Global attributes (as ncio.c writes them) and the caller's extras. */
static tg_code globals(int ncid, const char *path, const tg_nc_grid *g, const tg_twin_attr *atts,
                       int natts, tg_status *st)
{
    tg_code code;
    const char *cmd = g->command_line ? g->command_line : "(not given)";
    char stamp[32] = "unknown time";
    time_t now = time(NULL);
    struct tm tmv;
    if (now != (time_t)-1 && gmtime_r(&now, &tmv))
        strftime(stamp, sizeof stamp, "%Y-%m-%dT%H:%M:%SZ", &tmv);
    size_t hl = strlen(stamp) + strlen(cmd) + 8;
    char *hist = malloc(hl);
    if (!hist)
        return tg_fail(st, TG_ERR_NOMEM, "%s: no memory for the history attribute", path);
    snprintf(hist, hl, "%s: %s", stamp, cmd);
    code = att_text(ncid, NC_GLOBAL, "Conventions", "CF-1.8", path, NULL, st);
    if (!code)
        code = att_text(ncid, NC_GLOBAL, "title", g->title ? g->title : "twingyre twin experiment",
                        path, NULL, st);
    if (!code)
        code = att_text(ncid, NC_GLOBAL, "source", "twingyre " TWIN_IO_VERSION, path, NULL, st);
    if (!code)
        code = att_text(ncid, NC_GLOBAL, "history", hist, path, NULL, st);
    if (!code)
        code = att_text(ncid, NC_GLOBAL, "command_line", cmd, path, NULL, st);
    if (!code)
        code = att_text(ncid, NC_GLOBAL, "resolved_config",
                        g->config_text ? g->config_text : "(not given)", path, NULL, st);
    free(hist);
    for (int a = 0; a < natts && !code; a++) {
        if (atts[a].text)
            code = att_text(ncid, NC_GLOBAL, atts[a].name, atts[a].text, path, NULL, st);
        else
            code = ncc(nc_put_att_double(ncid, NC_GLOBAL, atts[a].name, NC_DOUBLE, 1,
                                         &atts[a].value),
                       path, "writing a global attribute", atts[a].name, st);
    }
    return code;
}

typedef struct {
    int d_layer, d_y, d_x, v_layer, v_y, v_x;
} grid_ids;

/* layer, y, x: dimensions and coordinate variables (define mode). */
static tg_code def_grid(int ncid, const char *path, const tg_nc_grid *g, grid_ids *id,
                        tg_status *st)
{
    tg_code code;
    TRY(nc_def_dim(ncid, "layer", (size_t)g->nlayers, &id->d_layer), "defining dimension", "layer");
    TRY(nc_def_dim(ncid, "y", (size_t)g->ny, &id->d_y), "defining dimension", "y");
    TRY(nc_def_dim(ncid, "x", (size_t)g->nx, &id->d_x), "defining dimension", "x");
    TRY(nc_def_var(ncid, "layer", NC_INT, 1, &id->d_layer, &id->v_layer), "defining", "layer");
    TRY(nc_def_var(ncid, "y", NC_DOUBLE, 1, &id->d_y, &id->v_y), "defining", "y");
    TRY(nc_def_var(ncid, "x", NC_DOUBLE, 1, &id->d_x, &id->v_x), "defining", "x");
    if ((code = att_text(ncid, id->v_layer, "long_name", "layer index, 1 at the top", path,
                         "layer", st)) ||
        (code = att_text(ncid, id->v_y, "units", "m", path, "y", st)) ||
        (code = att_text(ncid, id->v_y, "standard_name", "projection_y_coordinate", path, "y",
                         st)) ||
        (code = att_text(ncid, id->v_y, "axis", "Y", path, "y", st)) ||
        (code = att_text(ncid, id->v_y, "long_name", "northward distance from the domain origin",
                         path, "y", st)) ||
        (code = att_text(ncid, id->v_x, "units", "m", path, "x", st)) ||
        (code = att_text(ncid, id->v_x, "standard_name", "projection_x_coordinate", path, "x",
                         st)) ||
        (code = att_text(ncid, id->v_x, "axis", "X", path, "x", st)) ||
        (code = att_text(ncid, id->v_x, "long_name", "eastward distance from the domain origin",
                         path, "x", st)))
        return code;
    return TG_OK;
fail:
    return code;
}

static tg_code put_grid(int ncid, const char *path, const tg_nc_grid *g, const grid_ids *id,
                        tg_status *st)
{
    tg_code code;
    for (int k = 0; k < g->nlayers; k++) {
        size_t i = (size_t)k;
        int v = k + 1;
        TRY(nc_put_var1_int(ncid, id->v_layer, &i, &v), "writing coordinates", "layer");
    }
    TRY(nc_put_var_double(ncid, id->v_y, g->y), "writing coordinates", "y");
    TRY(nc_put_var_double(ncid, id->v_x, g->x), "writing coordinates", "x");
    return TG_OK;
fail:
    return code;
}

static tg_code time_atts(int ncid, int v, const char *path, tg_status *st)
{
    tg_code code;
    if ((code = att_text(ncid, v, "units", TIME_UNITS, path, "time", st)) ||
        (code = att_text(ncid, v, "calendar", "noleap", path, "time", st)) ||
        (code = att_text(ncid, v, "standard_name", "time", path, "time", st)) ||
        (code = att_text(ncid, v, "long_name", "model time", path, "time", st)))
        return code;
    return TG_OK;
}

/* One variable of the caller's list with its attributes. */
static tg_code def_var(int ncid, const char *path, const tg_twin_var *v, int ndims,
                       const int *dims, int *id, tg_status *st)
{
    tg_code code;
    TRY(nc_def_var(ncid, v->name, NC_DOUBLE, ndims, dims, id), "defining the variable", v->name);
    if ((code = att_text(ncid, *id, "units", v->units, path, v->name, st)) ||
        (code = att_text(ncid, *id, "long_name", v->long_name, path, v->name, st)))
        return code;
    if (v->has_fill) {
        const double fill = TG_TWIN_FILL;
        TRY(nc_put_att_double(ncid, *id, "_FillValue", NC_DOUBLE, 1, &fill),
            "writing attribute \"_FillValue\"", v->name);
    }
    return TG_OK;
fail:
    return code;
}

/* ------------------------------------------------------------------ */
/* Record files                                                        */
/* ------------------------------------------------------------------ */

#define MAX_VARS 32

struct tg_record_file {
    int ncid;
    char path[4096];
    int nx, ny, nl, nbins, nvars;
    int v_time, v_spec, v_var[MAX_VARS];
    char name[MAX_VARS][64];
    size_t nrec;
};

tg_record_file *tg_record_file_create(const char *path, const tg_nc_grid *g,
                                      const tg_nc_wavenumbers *wn, const tg_twin_var *vars,
                                      int nvars, const tg_twin_attr *atts, int natts,
                                      tg_status *st)
{
    tg_code code;
    if (!path || !g || !g->x || !g->y || nvars < 0 || nvars > MAX_VARS) {
        tg_fail(st, TG_ERR_INTERNAL, "record file: bad arguments");
        return NULL;
    }
    if (strlen(path) >= sizeof ((tg_record_file *)0)->path) {
        tg_fail(st, TG_ERR_IO, "%s: path too long", path);
        return NULL;
    }
    tg_record_file *f = calloc(1, sizeof *f);
    if (!f) {
        tg_fail(st, TG_ERR_NOMEM, "%s: no memory for the file handle", path);
        return NULL;
    }
    snprintf(f->path, sizeof f->path, "%s", path);
    f->nx = g->nx;
    f->ny = g->ny;
    f->nl = g->nlayers;
    f->nvars = nvars;
    f->nbins = wn ? wn->nbins : 0;
    int ncid = -1, d_time, d_k = -1, v_k = -1, old;
    grid_ids id;
    TRY(nc_create(path, NC_CLOBBER | NC_64BIT_OFFSET, &ncid), "creating the file", NULL);
    TRY(nc_set_fill(ncid, NC_NOFILL, &old), "setting no-fill mode", NULL);
    TRY(nc_def_dim(ncid, "time", NC_UNLIMITED, &d_time), "defining dimension", "time");
    if ((code = def_grid(ncid, path, g, &id, st)))
        goto fail;
    TRY(nc_def_var(ncid, "time", NC_DOUBLE, 1, &d_time, &f->v_time), "defining", "time");
    if ((code = time_atts(ncid, f->v_time, path, st)))
        goto fail;
    const int dims[4] = {d_time, id.d_layer, id.d_y, id.d_x};
    for (int v = 0; v < nvars; v++) {
        if ((code = def_var(ncid, path, &vars[v], 4, dims, &f->v_var[v], st)))
            goto fail;
        snprintf(f->name[v], sizeof f->name[v], "%s", vars[v].name);
    }
    if (wn) {
        TRY(nc_def_dim(ncid, "wavenumber", (size_t)wn->nbins, &d_k), "defining dimension",
            "wavenumber");
        TRY(nc_def_var(ncid, "wavenumber", NC_DOUBLE, 1, &d_k, &v_k), "defining", "wavenumber");
        if ((code = att_text(ncid, v_k, "units", "rad m-1", path, "wavenumber", st)) ||
            (code = att_text(ncid, v_k, "long_name", "isotropic wavenumber, bin centre", path,
                             "wavenumber", st)))
            goto fail;
        TRY(nc_put_att_double(ncid, v_k, "bin_width", NC_DOUBLE, 1, &wn->bin_width),
            "writing attribute \"bin_width\"", "wavenumber");
        const int sd[3] = {d_time, id.d_layer, d_k};
        const tg_twin_var sv = {"ke_spectrum", "m3 s-2",
                                "kinetic energy spectral density per unit mass; its sum times "
                                "the bin width is the layer's kinetic energy", 0};
        if ((code = def_var(ncid, path, &sv, 3, sd, &f->v_spec, st)))
            goto fail;
    }
    if ((code = globals(ncid, path, g, atts, natts, st)))
        goto fail;
    TRY(nc_enddef(ncid), "finishing the header", NULL);
    if ((code = put_grid(ncid, path, g, &id, st)))
        goto fail;
    if (wn)
        TRY(nc_put_var_double(ncid, v_k, wn->k), "writing coordinates", "wavenumber");
    TRY(nc_sync(ncid), "syncing the file", NULL);
    f->ncid = ncid;
    return f;
fail:
    if (ncid >= 0)
        (void)nc_close(ncid); /* the first error is the one reported */
    free(f);
    return NULL;
}

tg_code tg_record_file_append(tg_record_file *f, double time_s, const double *const *data,
                              const double *spectrum, tg_status *st)
{
    tg_code code;
    const char *path = f->path;
    if ((f->nbins > 0) != (spectrum != NULL))
        return tg_fail(st, TG_ERR_INTERNAL, "%s: spectrum given to a file %s one", path,
                       f->nbins > 0 ? "that needs" : "without");
    const size_t t = f->nrec;
    const double days = time_s / DAY_S;
    const size_t start[4] = {t, 0, 0, 0};
    const size_t count[4] = {1, (size_t)f->nl, (size_t)f->ny, (size_t)f->nx};
    TRY(nc_put_var1_double(f->ncid, f->v_time, &t, &days), "writing a record", "time");
    for (int v = 0; v < f->nvars; v++)
        TRY(nc_put_vara_double(f->ncid, f->v_var[v], start, count, data[v]), "writing a record",
            f->name[v]);
    if (spectrum) {
        const size_t s0[3] = {t, 0, 0}, sc[3] = {1, (size_t)f->nl, (size_t)f->nbins};
        TRY(nc_put_vara_double(f->ncid, f->v_spec, s0, sc, spectrum), "writing a record",
            "ke_spectrum");
    }
    TRY(nc_sync(f->ncid), "syncing the file", NULL);
    f->nrec = t + 1;
    return TG_OK;
fail:
    return code;
}

tg_code tg_record_file_close(tg_record_file *f, tg_status *st)
{
    if (!f)
        return TG_OK;
    tg_code code = ncc(nc_close(f->ncid), f->path, "closing the file", NULL, st);
    free(f);
    return code;
}

/* ------------------------------------------------------------------ */
/* Map files                                                           */
/* ------------------------------------------------------------------ */

tg_code tg_map_file_write(const char *path, const tg_nc_grid *g, double time_s,
                          const tg_twin_var *vars, int nvars, const double *const *data,
                          const tg_twin_attr *atts, int natts, tg_status *st)
{
    tg_code code;
    int ncid = -1, v_time, old;
    int vid[MAX_VARS];
    grid_ids id;
    if (nvars < 0 || nvars > MAX_VARS)
        return tg_fail(st, TG_ERR_INTERNAL, "%s: too many variables (%d)", path, nvars);
    TRY(nc_create(path, NC_CLOBBER | NC_64BIT_OFFSET, &ncid), "creating the file", NULL);
    TRY(nc_set_fill(ncid, NC_NOFILL, &old), "setting no-fill mode", NULL);
    if ((code = def_grid(ncid, path, g, &id, st)))
        goto fail;
    TRY(nc_def_var(ncid, "time", NC_DOUBLE, 0, NULL, &v_time), "defining", "time");
    if ((code = time_atts(ncid, v_time, path, st)))
        goto fail;
    const int dims[3] = {id.d_layer, id.d_y, id.d_x};
    for (int v = 0; v < nvars; v++)
        if ((code = def_var(ncid, path, &vars[v], 3, dims, &vid[v], st)))
            goto fail;
    if ((code = globals(ncid, path, g, atts, natts, st)))
        goto fail;
    TRY(nc_enddef(ncid), "finishing the header", NULL);
    if ((code = put_grid(ncid, path, g, &id, st)))
        goto fail;
    const double days = time_s / DAY_S;
    TRY(nc_put_var_double(ncid, v_time, &days), "writing", "time");
    for (int v = 0; v < nvars; v++)
        TRY(nc_put_var_double(ncid, vid[v], data[v]), "writing", vars[v].name);
    code = ncc(nc_close(ncid), path, "closing the file", NULL, st);
    return code;
fail:
    if (ncid >= 0)
        (void)nc_close(ncid); /* the first error is the one reported */
    return code;
}

/* ------------------------------------------------------------------ */
/* Readers                                                             */
/* ------------------------------------------------------------------ */

struct tg_record_reader {
    int ncid;
    char path[4096];
    int nx, ny, nl, nrec, v_time;
};

tg_record_reader *tg_record_reader_open(const char *path, int nx, int ny, int nl, tg_status *st)
{
    tg_code code;
    tg_record_reader *r = calloc(1, sizeof *r);
    if (!r) {
        tg_fail(st, TG_ERR_NOMEM, "%s: no memory for a reader", path);
        return NULL;
    }
    snprintf(r->path, sizeof r->path, "%s", path);
    r->nx = nx;
    r->ny = ny;
    r->nl = nl;
    int ncid = -1, d;
    size_t len;
    TRY(nc_open(path, NC_NOWRITE, &ncid), "opening the file", NULL);
    const char *names[3] = {"layer", "y", "x"};
    const int want[3] = {nl, ny, nx};
    for (int k = 0; k < 3; k++) {
        TRY(nc_inq_dimid(ncid, names[k], &d), "finding dimension", names[k]);
        TRY(nc_inq_dimlen(ncid, d, &len), "reading dimension", names[k]);
        if ((int)len != want[k]) {
            tg_fail(st, TG_ERR_IO, "%s: dimension %s has %zu entries, expected %d", path,
                    names[k], len, want[k]);
            goto fail_quiet;
        }
    }
    TRY(nc_inq_dimid(ncid, "time", &d), "finding dimension", "time");
    TRY(nc_inq_dimlen(ncid, d, &len), "reading dimension", "time");
    TRY(nc_inq_varid(ncid, "time", &r->v_time), "finding", "time");
    r->nrec = (int)len;
    r->ncid = ncid;
    return r;
fail:
fail_quiet:
    if (ncid >= 0)
        (void)nc_close(ncid); /* the first error is the one reported */
    free(r);
    (void)code;
    return NULL;
}

int tg_record_reader_count(const tg_record_reader *r) { return r->nrec; }

tg_code tg_record_reader_time(tg_record_reader *r, int rec, double *days, tg_status *st)
{
    tg_code code;
    const char *path = r->path;
    const size_t i = (size_t)rec;
    TRY(nc_get_var1_double(r->ncid, r->v_time, &i, days), "reading", "time");
    return TG_OK;
fail:
    return code;
}

tg_code tg_record_reader_get(tg_record_reader *r, const char *var, int rec, int n_last,
                             double *out, tg_status *st)
{
    tg_code code;
    const char *path = r->path;
    int v, nd;
    TRY(nc_inq_varid(r->ncid, var, &v), "finding", var);
    TRY(nc_inq_varndims(r->ncid, v, &nd), "inquiring", var);
    if (nd != (n_last > 0 ? 3 : 4))
        return tg_fail(st, TG_ERR_IO, "%s: variable %s has %d dimensions, expected %d", path, var,
                       nd, n_last > 0 ? 3 : 4);
    if (n_last > 0) {
        const size_t s0[3] = {(size_t)rec, 0, 0}, c[3] = {1, (size_t)r->nl, (size_t)n_last};
        TRY(nc_get_vara_double(r->ncid, v, s0, c, out), "reading a record", var);
    } else {
        const size_t s0[4] = {(size_t)rec, 0, 0, 0};
        const size_t c[4] = {1, (size_t)r->nl, (size_t)r->ny, (size_t)r->nx};
        TRY(nc_get_vara_double(r->ncid, v, s0, c, out), "reading a record", var);
    }
    return TG_OK;
fail:
    return code;
}

void tg_record_reader_close(tg_record_reader *r)
{
    if (!r)
        return;
    (void)nc_close(r->ncid); /* read-only: nothing to lose */
    free(r);
}
