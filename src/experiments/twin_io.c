/* twin_io.c - record files, map files and record readers of a twin
 * experiment (twin_io.h). */
#define _POSIX_C_SOURCE 200809L
#include "twin_io.h"

#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "ncio_util.h"
#include "ncverify.h"

#define DAY_S 86400.0

#define TRY(call, what, var)                                   \
    do {                                                       \
        if ((code = tg_nc_check((call), path, (what), (var), st))) \
            goto fail;                                         \
    } while (0)


/* The global attributes every output file carries, and the caller's extras. */
static tg_code globals(int ncid, const char *path, const tg_nc_grid *g, const tg_twin_attr *atts,
                       int natts, tg_status *st)
{
    tg_code code = tg_nc_globals(ncid, path, g, "twingyre twin experiment", st);
    for (int a = 0; a < natts && !code; a++) {
        if (atts[a].text)
            code = tg_nc_put_text(ncid, NC_GLOBAL, atts[a].name, atts[a].text, path, NULL, st);
        else
            code = tg_nc_check(nc_put_att_double(ncid, NC_GLOBAL, atts[a].name, NC_DOUBLE, 1,
                                         &atts[a].value),
                       path, "writing a global attribute", atts[a].name, st);
    }
    return code;
}


/* layer, y, x: dimensions and coordinate variables (define mode). */



/* One variable of the caller's list with its attributes. */
static tg_code def_var(int ncid, const char *path, const tg_twin_var *v, int ndims,
                       const int *dims, int *id, tg_status *st)
{
    tg_code code;
    TRY(nc_def_var(ncid, v->name, NC_DOUBLE, ndims, dims, id), "defining the variable", v->name);
    if ((code = tg_nc_put_text(ncid, *id, "units", v->units, path, v->name, st)) ||
        (code = tg_nc_put_text(ncid, *id, "long_name", v->long_name, path, v->name, st)))
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
    /* Running checksums (ncverify.h) of time, the variables and the
     * spectrum over the records written so far. */
    uint64_t h_time, h_var[MAX_VARS], h_spec;
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
    int ncid = -1, d_time, v_k = -1, old;
    tg_nc_grid_ids id;
    TRY(nc_create(path, NC_CLOBBER | NC_64BIT_OFFSET, &ncid), "creating the file", NULL);
    TRY(nc_set_fill(ncid, NC_NOFILL, &old), "setting no-fill mode", NULL);
    TRY(nc_def_dim(ncid, "time", NC_UNLIMITED, &d_time), "defining dimension", "time");
    if ((code = tg_nc_def_grid(ncid, path, g, &id, st)))
        goto fail;
    TRY(nc_def_var(ncid, "time", NC_DOUBLE, 1, &d_time, &f->v_time), "defining", "time");
    if ((code = tg_nc_time_atts(ncid, f->v_time, path, st)))
        goto fail;
    const int dims[4] = {d_time, id.d_layer, id.d_y, id.d_x};
    for (int v = 0; v < nvars; v++) {
        if ((code = def_var(ncid, path, &vars[v], 4, dims, &f->v_var[v], st)))
            goto fail;
        snprintf(f->name[v], sizeof f->name[v], "%s", vars[v].name);
    }
    if (wn) {
        if ((code = tg_nc_def_spectrum(ncid, path, wn, d_time, id.d_layer,
                                       "kinetic energy spectral density per unit mass; its "
                                       "sum times the bin width is the layer's kinetic energy",
                                       &v_k, &f->v_spec, st)))
            goto fail;
    }
    if ((code = globals(ncid, path, g, atts, natts, st)))
        goto fail;
    /* Checksums of no records yet; each append rewrites them (same length,
     * so allowed in data mode). */
    f->h_time = f->h_spec = TG_FNV1A_START;
    if ((code = tg_nc_put_checksum(ncid, f->v_time, f->h_time, path, "time", st)))
        goto fail;
    for (int v = 0; v < nvars; v++) {
        f->h_var[v] = TG_FNV1A_START;
        if ((code = tg_nc_put_checksum(ncid, f->v_var[v], f->h_var[v], path, f->name[v], st)))
            goto fail;
    }
    if (wn && (code = tg_nc_put_checksum(ncid, f->v_spec, f->h_spec, path, "ke_spectrum", st)))
        goto fail;
    TRY(nc_enddef(ncid), "finishing the header", NULL);
    if ((code = tg_nc_put_grid(ncid, path, g, &id, st)))
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
    /* The checksums now cover this record too; written by the same sync. */
    const size_t n = (size_t)f->nl * (size_t)f->ny * (size_t)f->nx;
    uint64_t h_time = tg_fnv1a_doubles(f->h_time, &days, 1), h_var[MAX_VARS], h_spec = f->h_spec;
    if ((code = tg_nc_put_checksum(f->ncid, f->v_time, h_time, path, "time", st)))
        goto fail;
    for (int v = 0; v < f->nvars; v++) {
        h_var[v] = tg_fnv1a_doubles(f->h_var[v], data[v], n);
        if ((code = tg_nc_put_checksum(f->ncid, f->v_var[v], h_var[v], path, f->name[v], st)))
            goto fail;
    }
    if (spectrum) {
        h_spec = tg_fnv1a_doubles(h_spec, spectrum, (size_t)f->nl * (size_t)f->nbins);
        if ((code = tg_nc_put_checksum(f->ncid, f->v_spec, h_spec, path, "ke_spectrum", st)))
            goto fail;
    }
    TRY(nc_sync(f->ncid), "syncing the file", NULL);
    f->h_time = h_time;
    memcpy(f->h_var, h_var, sizeof(uint64_t) * (size_t)f->nvars);
    f->h_spec = h_spec;
    f->nrec = t + 1;
    return TG_OK;
fail:
    return code;
}

tg_code tg_record_file_close(tg_record_file *f, tg_status *st)
{
    if (!f)
        return TG_OK;
    tg_code code = tg_nc_check(nc_close(f->ncid), f->path, "closing the file", NULL, st);
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
    tg_nc_grid_ids id;
    if (nvars < 0 || nvars > MAX_VARS)
        return tg_fail(st, TG_ERR_INTERNAL, "%s: too many variables (%d)", path, nvars);
    TRY(nc_create(path, NC_CLOBBER | NC_64BIT_OFFSET, &ncid), "creating the file", NULL);
    TRY(nc_set_fill(ncid, NC_NOFILL, &old), "setting no-fill mode", NULL);
    if ((code = tg_nc_def_grid(ncid, path, g, &id, st)))
        goto fail;
    TRY(nc_def_var(ncid, "time", NC_DOUBLE, 0, NULL, &v_time), "defining", "time");
    if ((code = tg_nc_time_atts(ncid, v_time, path, st)))
        goto fail;
    const int dims[3] = {id.d_layer, id.d_y, id.d_x};
    const double days = time_s / DAY_S;
    const size_t n = (size_t)g->nlayers * (size_t)g->ny * (size_t)g->nx;
    if ((code = tg_nc_put_checksum(ncid, v_time, tg_fnv1a_doubles(TG_FNV1A_START, &days, 1), path,
                                   "time", st)))
        goto fail;
    for (int v = 0; v < nvars; v++)
        if ((code = def_var(ncid, path, &vars[v], 3, dims, &vid[v], st)) ||
            (code = tg_nc_put_checksum(ncid, vid[v], tg_fnv1a_doubles(TG_FNV1A_START, data[v], n),
                                       path, vars[v].name, st)))
            goto fail;
    if ((code = globals(ncid, path, g, atts, natts, st)))
        goto fail;
    TRY(nc_enddef(ncid), "finishing the header", NULL);
    if ((code = tg_nc_put_grid(ncid, path, g, &id, st)))
        goto fail;
    TRY(nc_put_var_double(ncid, v_time, &days), "writing", "time");
    for (int v = 0; v < nvars; v++)
        TRY(nc_put_var_double(ncid, vid[v], data[v]), "writing", vars[v].name);
    code = tg_nc_check(nc_close(ncid), path, "closing the file", NULL, st);
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
    if ((code = tg_nc_open_verified(path, &ncid, st)))
        goto fail;
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
