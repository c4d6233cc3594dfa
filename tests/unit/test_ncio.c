/* test_ncio.c - Check suite for src/files/ncio.c: fields (with and without the
 * kinetic-energy spectrum), budget, checkpoint files and reading an initial
 * state.
 *
 * Files are written into a fresh directory under $TG_TEST_TMPDIR (else $TMPDIR; removed at the end),
 * or into $TG_TEST_OUTDIR when set (kept, so tests/crosscheck/
 * check_fields_xarray.py can be run on fields.nc and budget.nc there).
 * Metadata checks follow the CF conventions document (Eaton et al., 2020,
 * "NetCDF Climate and Forecast (CF) Metadata Conventions, version 1.8");
 * section numbers quoted from memory. Everything else is a round-trip check
 * (common practice): what goes in must come back bit for bit.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#define _POSIX_C_SOURCE 200809L

#include <check.h>
#include <errno.h>
#include <math.h>
#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <unistd.h>

#include "ncio.h"
#include "ncverify.h"
#include "unit_util.h"

/* Output directory, set once in main() before any test runs. */
static char g_dir[4096];

static void path_in_dir(char *out, size_t n, const char *name)
{
    snprintf(out, n, "%s/%s", g_dir, name);
}

/* Non-trivial doubles (full mantissas) so round trips test every bit. */
static double field_value(int rec, int k, int j, int i, int which)
{
    return 1.0e4 / 3.0 * sin(0.37 * i + 1.31 * j + 2.13 * k + 0.771 * rec + 0.5 * which) +
           1.0e-7 * (i + 1) / 7.0;
}

static void fill_field(double *a, int rec, int nl, int ny, int nx, int which)
{
    for (int k = 0; k < nl; k++)
        for (int j = 0; j < ny; j++)
            for (int i = 0; i < nx; i++)
                a[((size_t)k * ny + j) * nx + i] = field_value(rec, k, j, i, which);
}

/* Spectrum values of record rec, layer k, bin b (full mantissas, positive). */
static double spectrum_value(int rec, int k, int b)
{
    return 1.0e-2 / 3.0 * (1.5 + cos(0.53 * b + 1.7 * k + 0.29 * rec)) / (b + 1.0);
}

static void fill_spectrum(double *a, int rec, int nl, int nbins)
{
    for (int k = 0; k < nl; k++)
        for (int b = 0; b < nbins; b++)
            a[(size_t)k * nbins + b] = spectrum_value(rec, k, b);
}

/* A wavenumber axis like a 1000/3 km basin's: bin b at (b + 1) dk. */
typedef struct {
    double k[16];
    tg_nc_wavenumbers w;
} test_wavenumbers;

static void make_wavenumbers(test_wavenumbers *t, int nbins)
{
    t->w.nbins = nbins;
    t->w.bin_width = 3.14159265358979323846 / (1.0e6 / 3.0);
    for (int b = 0; b < nbins; b++)
        t->k[b] = (b + 1) * t->w.bin_width;
    t->w.k = t->k;
}

typedef struct {
    double x[16], y[16];
    tg_nc_grid g;
} test_grid;

static void make_grid(test_grid *t, int nx, int ny, int nl)
{
    for (int i = 0; i < nx; i++)
        t->x[i] = (i + 0.5) * 1000.0 / 3.0;
    for (int j = 0; j < ny; j++)
        t->y[j] = (j + 0.5) * 2000.0 / 3.0;
    t->g.nx = nx;
    t->g.ny = ny;
    t->g.nlayers = nl;
    t->g.x = t->x;
    t->g.y = t->y;
    t->g.config_text = "[grid]\nnx = 5\n";
    t->g.command_line = "twingyre run --config test.ini";
    t->g.title = "unit test";
}

static void att_text(int ncid, const char *var, const char *att, char *buf, size_t n)
{
    int varid = NC_GLOBAL;
    if (var)
        ck_assert_int_eq(nc_inq_varid(ncid, var, &varid), NC_NOERR);
    size_t len = 0;
    ck_assert_msg(nc_inq_attlen(ncid, varid, att, &len) == NC_NOERR, "attribute %s:%s missing",
                  var ? var : "(global)", att);
    ck_assert_uint_lt(len, n);
    ck_assert_int_eq(nc_get_att_text(ncid, varid, att, buf), NC_NOERR);
    buf[len] = '\0';
}

static void assert_att(int ncid, const char *var, const char *att, const char *want)
{
    char buf[512];
    att_text(ncid, var, att, buf, sizeof buf);
    ck_assert_str_eq(buf, want);
}

static size_t dim_len(int ncid, const char *name)
{
    int d;
    size_t n;
    ck_assert_int_eq(nc_inq_dimid(ncid, name, &d), NC_NOERR);
    ck_assert_int_eq(nc_inq_dimlen(ncid, d, &n), NC_NOERR);
    return n;
}

/* Writes a fields file of `nrec` records with a spectrum of `nbins` bins
 * (0: no spectrum); used by several tests. */
static void write_fields(const char *path, int nx, int ny, int nl, int nbins, int nrec)
{
    test_grid t;
    test_wavenumbers w;
    make_grid(&t, nx, ny, nl);
    make_wavenumbers(&w, nbins);
    size_t n = (size_t)nl * ny * nx;
    double *psi = malloc(n * sizeof *psi), *q = malloc(n * sizeof *q);
    double *spec = nbins > 0 ? malloc((size_t)nl * nbins * sizeof *spec) : NULL;
    ck_assert_ptr_nonnull(psi);
    ck_assert_ptr_nonnull(q);
    ck_assert(nbins == 0 || spec != NULL);
    tg_status st;
    tg_status_clear(&st);
    tg_fields_file *f = tg_fields_create(path, &t.g, nbins > 0 ? &w.w : NULL, &st);
    ck_assert_msg(f != NULL, "%s", st.msg);
    for (int r = 0; r < nrec; r++) {
        fill_field(psi, r, nl, ny, nx, 0);
        fill_field(q, r, nl, ny, nx, 1);
        if (spec)
            fill_spectrum(spec, r, nl, nbins);
        ck_assert_msg(tg_fields_append(f, 86400.0 * 1.5 * r, psi, q, spec, &st) == TG_OK, "%s",
                      st.msg);
    }
    ck_assert_msg(tg_fields_close(f, &st) == TG_OK, "%s", st.msg);
    free(psi);
    free(q);
    free(spec);
}

/* ---- fields.nc ---- */

START_TEST(test_fields_round_trip)
{
    enum { NX = 5, NY = 4, NL = 2, NB = 6, NREC = 3 };
    char path[4200];
    path_in_dir(path, sizeof path, "fields.nc");
    write_fields(path, NX, NY, NL, NB, NREC);

    int ncid, fmt;
    ck_assert_int_eq(nc_open(path, NC_NOWRITE, &ncid), NC_NOERR);
    ck_assert_int_eq(nc_inq_format(ncid, &fmt), NC_NOERR);
    ck_assert_int_eq(fmt, NC_FORMAT_64BIT_OFFSET);
    ck_assert_uint_eq(dim_len(ncid, "time"), NREC);
    ck_assert_uint_eq(dim_len(ncid, "layer"), NL);
    ck_assert_uint_eq(dim_len(ncid, "y"), NY);
    ck_assert_uint_eq(dim_len(ncid, "x"), NX);
    ck_assert_uint_eq(dim_len(ncid, "wavenumber"), NB);
    int unlim;
    ck_assert_int_eq(nc_inq_unlimdim(ncid, &unlim), NC_NOERR);
    int dtime;
    ck_assert_int_eq(nc_inq_dimid(ncid, "time", &dtime), NC_NOERR);
    ck_assert_int_eq(unlim, dtime);

    /* CF-1.8 section 2.6.1 (Conventions), 4.4 and 4.4.1 (time units, calendar),
     * 4 (axis), Appendix A/standard name table (projection_x_coordinate). */
    assert_att(ncid, NULL, "Conventions", "CF-1.8");
    assert_att(ncid, NULL, "title", "unit test");
    assert_att(ncid, NULL, "command_line", "twingyre run --config test.ini");
    assert_att(ncid, NULL, "resolved_config", "[grid]\nnx = 5\n");
    char buf[512];
    att_text(ncid, NULL, "source", buf, sizeof buf);
    ck_assert_msg(strncmp(buf, "twingyre ", 9) == 0, "source is \"%s\"", buf);
    att_text(ncid, NULL, "history", buf, sizeof buf);
    ck_assert_ptr_nonnull(strstr(buf, "twingyre run --config test.ini"));
    assert_att(ncid, "time", "units", "days since 0001-01-01 00:00:00");
    assert_att(ncid, "time", "calendar", "noleap");
    assert_att(ncid, "time", "axis", "T");
    assert_att(ncid, "x", "units", "m");
    assert_att(ncid, "x", "axis", "X");
    assert_att(ncid, "x", "standard_name", "projection_x_coordinate");
    assert_att(ncid, "y", "units", "m");
    assert_att(ncid, "y", "axis", "Y");
    assert_att(ncid, "y", "standard_name", "projection_y_coordinate");
    assert_att(ncid, "psi", "units", "m2 s-1");
    assert_att(ncid, "q", "units", "s-1");
    /* CF-1.8 section 3.1 (units: udunits strings), 3.2 (long_name). */
    assert_att(ncid, "wavenumber", "units", "rad m-1");
    assert_att(ncid, "wavenumber", "long_name", "isotropic wavenumber, bin centre");
    assert_att(ncid, "ke_spectrum", "units", "m3 s-2");
    assert_att(ncid, "ke_spectrum", "long_name",
               "kinetic energy spectral density per unit mass; its sum times the bin width "
               "equals kinetic_energy in budget.nc");

    int v, ndims, dimids[4], layer[NL];
    ck_assert_int_eq(nc_inq_varid(ncid, "psi", &v), NC_NOERR);
    ck_assert_int_eq(nc_inq_varndims(ncid, v, &ndims), NC_NOERR);
    ck_assert_int_eq(ndims, 4);
    ck_assert_int_eq(nc_inq_vardimid(ncid, v, dimids), NC_NOERR);
    ck_assert_int_eq(dimids[0], dtime);
    ck_assert_int_eq(nc_inq_varid(ncid, "layer", &v), NC_NOERR);
    ck_assert_int_eq(nc_get_var_int(ncid, v, layer), NC_NOERR);
    for (int k = 0; k < NL; k++)
        ck_assert_int_eq(layer[k], k + 1);

    /* ke_spectrum(time, layer, wavenumber); wavenumber a coordinate variable
     * (CF-1.8 section 1.3: a 1-D variable named after its dimension). */
    int dlayer, dk;
    ck_assert_int_eq(nc_inq_dimid(ncid, "layer", &dlayer), NC_NOERR);
    ck_assert_int_eq(nc_inq_dimid(ncid, "wavenumber", &dk), NC_NOERR);
    ck_assert_int_eq(nc_inq_varid(ncid, "ke_spectrum", &v), NC_NOERR);
    ck_assert_int_eq(nc_inq_varndims(ncid, v, &ndims), NC_NOERR);
    ck_assert_int_eq(ndims, 3);
    ck_assert_int_eq(nc_inq_vardimid(ncid, v, dimids), NC_NOERR);
    ck_assert_int_eq(dimids[0], dtime);
    ck_assert_int_eq(dimids[1], dlayer);
    ck_assert_int_eq(dimids[2], dk);
    test_wavenumbers w;
    make_wavenumbers(&w, NB);
    double ks[NB], width = 0.0;
    nc_type wtype;
    size_t wlen;
    ck_assert_int_eq(nc_inq_varid(ncid, "wavenumber", &v), NC_NOERR);
    ck_assert_int_eq(nc_inq_varndims(ncid, v, &ndims), NC_NOERR);
    ck_assert_int_eq(ndims, 1);
    ck_assert_int_eq(nc_inq_vardimid(ncid, v, dimids), NC_NOERR);
    ck_assert_int_eq(dimids[0], dk);
    ck_assert_int_eq(nc_get_var_double(ncid, v, ks), NC_NOERR);
    ck_assert_mem_eq(ks, w.k, sizeof ks);
    ck_assert_int_eq(nc_inq_att(ncid, v, "bin_width", &wtype, &wlen), NC_NOERR);
    ck_assert_int_eq(wtype, NC_DOUBLE);
    ck_assert_uint_eq(wlen, 1);
    ck_assert_int_eq(nc_get_att_double(ncid, v, "bin_width", &width), NC_NOERR);
    ck_assert_double_eq(width, w.w.bin_width);
    double sgot[NL * NB], swant[NL * NB];
    ck_assert_int_eq(nc_inq_varid(ncid, "ke_spectrum", &v), NC_NOERR);
    for (int r = 0; r < NREC; r++) {
        size_t start[3] = {(size_t)r, 0, 0}, count[3] = {1, NL, NB};
        ck_assert_int_eq(nc_get_vara_double(ncid, v, start, count, sgot), NC_NOERR);
        fill_spectrum(swant, r, NL, NB);
        ck_assert_mem_eq(sgot, swant, sizeof sgot);
    }

    test_grid t;
    make_grid(&t, NX, NY, NL);
    double xs[NX], ys[NY], times[NREC];
    ck_assert_int_eq(nc_inq_varid(ncid, "x", &v), NC_NOERR);
    ck_assert_int_eq(nc_get_var_double(ncid, v, xs), NC_NOERR);
    ck_assert_mem_eq(xs, t.x, sizeof xs);
    ck_assert_int_eq(nc_inq_varid(ncid, "y", &v), NC_NOERR);
    ck_assert_int_eq(nc_get_var_double(ncid, v, ys), NC_NOERR);
    ck_assert_mem_eq(ys, t.y, sizeof ys);
    ck_assert_int_eq(nc_inq_varid(ncid, "time", &v), NC_NOERR);
    ck_assert_int_eq(nc_get_var_double(ncid, v, times), NC_NOERR);
    for (int r = 0; r < NREC; r++)
        ck_assert_double_eq(times[r], 1.5 * r);

    double got[NL * NY * NX], want[NL * NY * NX];
    for (int which = 0; which < 2; which++) {
        ck_assert_int_eq(nc_inq_varid(ncid, which ? "q" : "psi", &v), NC_NOERR);
        for (int r = 0; r < NREC; r++) {
            size_t start[4] = {(size_t)r, 0, 0, 0}, count[4] = {1, NL, NY, NX};
            ck_assert_int_eq(nc_get_vara_double(ncid, v, start, count, got), NC_NOERR);
            fill_field(want, r, NL, NY, NX, which);
            ck_assert_mem_eq(got, want, sizeof got);
        }
    }
    ck_assert_int_eq(nc_close(ncid), NC_NOERR);

    /* The last record is what an initial-state read picks up. */
    double psi[NL * NY * NX], q[NL * NY * NX];
    tg_initial_info info;
    tg_status st;
    tg_status_clear(&st);
    ck_assert_msg(tg_initial_read(path, NX, NY, NL, psi, q, &info, &st) == TG_OK, "%s", st.msg);
    ck_assert_int_eq(info.has_q, 1);
    ck_assert_int_eq(info.has_time, 0);
    fill_field(want, NREC - 1, NL, NY, NX, 0);
    ck_assert_mem_eq(psi, want, sizeof psi);
    fill_field(want, NREC - 1, NL, NY, NX, 1);
    ck_assert_mem_eq(q, want, sizeof q);
}
END_TEST

START_TEST(test_fields_killed_writer)
{
    enum { NX = 6, NY = 3, NL = 2 };
    char path[4200];
    path_in_dir(path, sizeof path, "killed_fields.nc");
    test_grid t;
    make_grid(&t, NX, NY, NL);

    pid_t pid = fork();
    ck_assert_int_ge(pid, 0);
    if (pid == 0) {
        /* Child: write three records and vanish without closing the file. */
        double psi[NL * NY * NX], q[NL * NY * NX];
        tg_status st;
        double spec[NL * 4];
        test_wavenumbers w;
        make_wavenumbers(&w, 4);
        tg_fields_file *f = tg_fields_create(path, &t.g, &w.w, &st);
        if (!f)
            _exit(2);
        for (int r = 0; r < 3; r++) {
            fill_field(psi, r, NL, NY, NX, 0);
            fill_field(q, r, NL, NY, NX, 1);
            fill_spectrum(spec, r, NL, 4);
            if (tg_fields_append(f, 86400.0 * r, psi, q, spec, &st) != TG_OK)
                _exit(3);
        }
        _exit(0);
    }
    int status = 0;
    ck_assert_int_eq(waitpid(pid, &status, 0), pid);
    ck_assert(WIFEXITED(status));
    ck_assert_int_eq(WEXITSTATUS(status), 0);

    int ncid;
    ck_assert_int_eq(nc_open(path, NC_NOWRITE, &ncid), NC_NOERR);
    ck_assert_uint_eq(dim_len(ncid, "time"), 3);
    double sgot[NL * 4], swant[NL * 4];
    int v;
    ck_assert_int_eq(nc_inq_varid(ncid, "ke_spectrum", &v), NC_NOERR);
    size_t start[3] = {2, 0, 0}, count[3] = {1, NL, 4};
    ck_assert_int_eq(nc_get_vara_double(ncid, v, start, count, sgot), NC_NOERR);
    fill_spectrum(swant, 2, NL, 4);
    ck_assert_mem_eq(sgot, swant, sizeof sgot);
    ck_assert_int_eq(nc_close(ncid), NC_NOERR);

    double psi[NL * NY * NX], q[NL * NY * NX], want[NL * NY * NX];
    tg_status st;
    tg_status_clear(&st);
    ck_assert_msg(tg_initial_read(path, NX, NY, NL, psi, q, NULL, &st) == TG_OK, "%s", st.msg);
    fill_field(want, 2, NL, NY, NX, 0);
    ck_assert_mem_eq(psi, want, sizeof psi);
    fill_field(want, 2, NL, NY, NX, 1);
    ck_assert_mem_eq(q, want, sizeof q);
}
END_TEST

/* ---- budget.nc ---- */

static double budget_value(int rec, int slot)
{
    return cos(0.9 * rec + 0.41 * slot) * 1.0e-3 / 7.0;
}

static size_t records_on_disk(const char *path)
{
    int ncid;
    ck_assert_int_eq(nc_open(path, NC_NOWRITE, &ncid), NC_NOERR);
    size_t n = dim_len(ncid, "time");
    ck_assert_int_eq(nc_close(ncid), NC_NOERR);
    return n;
}

START_TEST(test_budget_buffering)
{
    enum { NL = 3, NREC = 11, RECLEN = 1 + NL + (NL - 1) };
    char path[4200];
    path_in_dir(path, sizeof path, "budget.nc");
    test_grid t;
    make_grid(&t, 4, 4, NL);
    const tg_budget_var vars[3] = {
        {"energy_total", "J m-2", "total energy per unit area", 0},
        {"energy_layer", "J m-2", "energy per unit area in each layer", 1},
        {"exchange_iface", "W m-2", "energy exchange across each interface", 2},
    };
    tg_status st;
    tg_status_clear(&st);
    tg_budget_file *b = tg_budget_create(path, &t.g, vars, 3, &st);
    ck_assert_msg(b != NULL, "%s", st.msg);
    ck_assert_int_eq(tg_budget_record_len(b), RECLEN);
    ck_assert_int_eq(tg_budget_set_buffer(b, 4, &st), TG_OK);

    double rec[RECLEN];
    int r = 0;
    for (; r < 7; r++) {
        for (int s = 0; s < RECLEN; s++)
            rec[s] = budget_value(r, s);
        ck_assert_msg(tg_budget_append(b, 600.0 * r, 10L * r, rec, &st) == TG_OK, "%s", st.msg);
    }
    /* The 4th append filled the buffer and wrote it; 3 records still wait. */
    ck_assert_uint_eq(records_on_disk(path), 4);
    ck_assert_int_eq(tg_budget_flush(b, &st), TG_OK);
    ck_assert_uint_eq(records_on_disk(path), 7);
    ck_assert_int_eq(tg_budget_flush(b, &st), TG_OK); /* nothing waiting: a no-op */
    ck_assert_uint_eq(records_on_disk(path), 7);

    /* Re-sizing is allowed while the buffer is empty, refused otherwise. */
    ck_assert_int_eq(tg_budget_set_buffer(b, 3, &st), TG_OK);
    for (; r < NREC; r++) {
        for (int s = 0; s < RECLEN; s++)
            rec[s] = budget_value(r, s);
        ck_assert_msg(tg_budget_append(b, 600.0 * r, 10L * r, rec, &st) == TG_OK, "%s", st.msg);
    }
    ck_assert_uint_eq(records_on_disk(path), 10);
    ck_assert_int_eq(tg_budget_set_buffer(b, 8, &st), TG_ERR_INTERNAL);
    ck_assert_msg(tg_budget_close(b, &st) == TG_OK, "%s", st.msg);

    int ncid, v, fmt;
    ck_assert_int_eq(nc_open(path, NC_NOWRITE, &ncid), NC_NOERR);
    ck_assert_int_eq(nc_inq_format(ncid, &fmt), NC_NOERR);
    ck_assert_int_eq(fmt, NC_FORMAT_64BIT_OFFSET);
    ck_assert_uint_eq(dim_len(ncid, "time"), NREC);
    ck_assert_uint_eq(dim_len(ncid, "layer"), NL);
    ck_assert_uint_eq(dim_len(ncid, "interface"), NL - 1);
    assert_att(ncid, NULL, "Conventions", "CF-1.8");
    assert_att(ncid, "time", "calendar", "noleap");
    assert_att(ncid, "energy_layer", "units", "J m-2");
    assert_att(ncid, "exchange_iface", "long_name", "energy exchange across each interface");

    double times[NREC], steps[NREC], tot[NREC], lay[NREC][NL], ifc[NREC][NL - 1];
    ck_assert_int_eq(nc_inq_varid(ncid, "time", &v), NC_NOERR);
    ck_assert_int_eq(nc_get_var_double(ncid, v, times), NC_NOERR);
    ck_assert_int_eq(nc_inq_varid(ncid, "step", &v), NC_NOERR);
    ck_assert_int_eq(nc_get_var_double(ncid, v, steps), NC_NOERR);
    ck_assert_int_eq(nc_inq_varid(ncid, "energy_total", &v), NC_NOERR);
    ck_assert_int_eq(nc_get_var_double(ncid, v, tot), NC_NOERR);
    ck_assert_int_eq(nc_inq_varid(ncid, "energy_layer", &v), NC_NOERR);
    ck_assert_int_eq(nc_get_var_double(ncid, v, &lay[0][0]), NC_NOERR);
    ck_assert_int_eq(nc_inq_varid(ncid, "exchange_iface", &v), NC_NOERR);
    ck_assert_int_eq(nc_get_var_double(ncid, v, &ifc[0][0]), NC_NOERR);
    ck_assert_int_eq(nc_close(ncid), NC_NOERR);
    for (int i = 0; i < NREC; i++) {
        ck_assert_double_eq(times[i], 600.0 * i / 86400.0);
        ck_assert_double_eq(steps[i], 10.0 * i);
        ck_assert_double_eq(tot[i], budget_value(i, 0));
        for (int k = 0; k < NL; k++)
            ck_assert_double_eq(lay[i][k], budget_value(i, 1 + k));
        for (int k = 0; k < NL - 1; k++)
            ck_assert_double_eq(ifc[i][k], budget_value(i, 1 + NL + k));
    }
}
END_TEST

START_TEST(test_budget_one_layer)
{
    char path[4200];
    path_in_dir(path, sizeof path, "budget_one_layer.nc");
    test_grid t;
    make_grid(&t, 4, 4, 1);
    const tg_budget_var with_iface[2] = {
        {"energy_total", "J m-2", "total energy per unit area", 0},
        {"exchange_iface", "W m-2", "energy exchange across each interface", 2},
    };
    tg_status st;
    tg_status_clear(&st);
    ck_assert_ptr_null(tg_budget_create(path, &t.g, with_iface, 2, &st));
    ck_assert_int_eq(st.code, TG_ERR_INTERNAL);

    tg_budget_file *b = tg_budget_create(path, &t.g, with_iface, 1, &st);
    ck_assert_msg(b != NULL, "%s", st.msg);
    ck_assert_int_eq(tg_budget_record_len(b), 1);
    double e = 2.5;
    ck_assert_int_eq(tg_budget_append(b, 0.0, 0, &e, &st), TG_OK);
    ck_assert_int_eq(tg_budget_close(b, &st), TG_OK); /* close flushes */
    int ncid, d;
    ck_assert_int_eq(nc_open(path, NC_NOWRITE, &ncid), NC_NOERR);
    ck_assert_int_eq(nc_inq_dimid(ncid, "interface", &d), NC_EBADDIM);
    ck_assert_uint_eq(dim_len(ncid, "time"), 1);
    ck_assert_int_eq(nc_close(ncid), NC_NOERR);
}
END_TEST

/* ---- checkpoint.nc ---- */

START_TEST(test_checkpoint_round_trip)
{
    enum { NX = 5, NY = 4, NL = 2, N = NL * NY * NX };
    char path[4200], tmp[4300];
    path_in_dir(path, sizeof path, "checkpoint.nc");
    snprintf(tmp, sizeof tmp, "%s.tmp", path);
    test_grid t;
    make_grid(&t, NX, NY, NL);

    double psi[N], q[N], alpha[3], beta[7];
    const char *names[2] = {"alpha", "beta"};
    const double *data[2] = {alpha, beta};
    const size_t lens[2] = {3, 7};
    tg_status st;
    tg_status_clear(&st);
    /* Written twice: the second write replaces the first whole. */
    for (int pass = 0; pass < 2; pass++) {
        fill_field(psi, 10 + pass, NL, NY, NX, 0);
        fill_field(q, 10 + pass, NL, NY, NX, 1);
        for (int i = 0; i < 3; i++)
            alpha[i] = budget_value(pass, i);
        for (int i = 0; i < 7; i++)
            beta[i] = budget_value(pass, 10 + i);
        tg_checkpoint c = {.time_s = 1234567.0 / 7.0 + pass,
                           .step = 98765L + pass,
                           .psi = psi,
                           .q = q,
                           .nextra = 2,
                           .extra_names = names,
                           .extra_data = data,
                           .extra_len = lens};
        ck_assert_msg(tg_checkpoint_write(path, &t.g, &c, &st) == TG_OK, "%s", st.msg);
        ck_assert_int_eq(access(tmp, F_OK), -1); /* no temporary left behind */
    }

    double rpsi[N], rq[N], ralpha[3], rbeta[7];
    tg_initial_info info;
    ck_assert_msg(tg_initial_read(path, NX, NY, NL, rpsi, rq, &info, &st) == TG_OK, "%s", st.msg);
    ck_assert_int_eq(info.has_q, 1);
    ck_assert_int_eq(info.has_time, 1);
    ck_assert_double_eq(info.time_s, 1234567.0 / 7.0 + 1);
    ck_assert_int_eq(info.step, 98766L);
    ck_assert_mem_eq(rpsi, psi, sizeof psi);
    ck_assert_mem_eq(rq, q, sizeof q);
    ck_assert_msg(tg_checkpoint_read_extra(path, "alpha", ralpha, 3, &st) == TG_OK, "%s", st.msg);
    ck_assert_mem_eq(ralpha, alpha, sizeof alpha);
    ck_assert_msg(tg_checkpoint_read_extra(path, "beta", rbeta, 7, &st) == TG_OK, "%s", st.msg);
    ck_assert_mem_eq(rbeta, beta, sizeof beta);

    ck_assert_int_eq(tg_checkpoint_read_extra(path, "beta", rbeta, 6, &st), TG_ERR_CONFIG);
    ck_assert_ptr_nonnull(strstr(st.msg, "7 values"));
    ck_assert_int_eq(tg_checkpoint_read_extra(path, "gamma", rbeta, 6, &st), TG_ERR_IO);
    ck_assert_ptr_nonnull(strstr(st.msg, "gamma"));
    ck_assert_ptr_nonnull(strstr(st.msg, path));

    int ncid, fmt;
    ck_assert_int_eq(nc_open(path, NC_NOWRITE, &ncid), NC_NOERR);
    ck_assert_int_eq(nc_inq_format(ncid, &fmt), NC_NOERR);
    ck_assert_int_eq(fmt, NC_FORMAT_64BIT_OFFSET);
    ck_assert_uint_eq(dim_len(ncid, "alpha_len"), 3);
    ck_assert_uint_eq(dim_len(ncid, "beta_len"), 7);
    assert_att(ncid, "time", "units", "days since 0001-01-01 00:00:00");
    assert_att(ncid, "time", "calendar", "noleap");
    int v;
    double days;
    ck_assert_int_eq(nc_inq_varid(ncid, "time", &v), NC_NOERR);
    ck_assert_int_eq(nc_get_var_double(ncid, v, &days), NC_NOERR);
    ck_assert_double_eq_tol(days, (1234567.0 / 7.0 + 1) / 86400.0, 1e-12);
    ck_assert_int_eq(nc_close(ncid), NC_NOERR);
}
END_TEST

/* ---- reading an initial state written by someone else ---- */

/* A file with psi(layer, y, x) stored as float and, optionally, q as int. */
static void write_plain_state(const char *path, int nl, int ny, int nx, int with_q)
{
    int ncid, d[3], vp, vq = -1;
    ck_assert_int_eq(nc_create(path, NC_CLOBBER, &ncid), NC_NOERR);
    ck_assert_int_eq(nc_def_dim(ncid, "lev", (size_t)nl, &d[0]), NC_NOERR);
    ck_assert_int_eq(nc_def_dim(ncid, "north", (size_t)ny, &d[1]), NC_NOERR);
    ck_assert_int_eq(nc_def_dim(ncid, "east", (size_t)nx, &d[2]), NC_NOERR);
    ck_assert_int_eq(nc_def_var(ncid, "psi", NC_FLOAT, 3, d, &vp), NC_NOERR);
    if (with_q)
        ck_assert_int_eq(nc_def_var(ncid, "q", NC_INT, 3, d, &vq), NC_NOERR);
    ck_assert_int_eq(nc_enddef(ncid), NC_NOERR);
    size_t n = (size_t)nl * ny * nx;
    double *a = malloc(n * sizeof *a);
    ck_assert_ptr_nonnull(a);
    for (size_t m = 0; m < n; m++)
        a[m] = 0.25 * (double)m - 3.0; /* exactly representable as float */
    ck_assert_int_eq(nc_put_var_double(ncid, vp, a), NC_NOERR);
    if (with_q) {
        for (size_t m = 0; m < n; m++)
            a[m] = (double)m * 3.0 - 11.0;
        ck_assert_int_eq(nc_put_var_double(ncid, vq, a), NC_NOERR);
    }
    free(a);
    ck_assert_int_eq(nc_close(ncid), NC_NOERR);
}

START_TEST(test_initial_plain_3d)
{
    enum { NX = 4, NY = 3, NL = 2, N = NL * NY * NX };
    char path[4200];
    double psi[N], q[N];
    tg_initial_info info;
    tg_status st;
    tg_status_clear(&st);

    path_in_dir(path, sizeof path, "plain_psi.nc");
    write_plain_state(path, NL, NY, NX, 0);
    for (int m = 0; m < N; m++)
        q[m] = -7.0;
    ck_assert_msg(tg_initial_read(path, NX, NY, NL, psi, q, &info, &st) == TG_OK, "%s", st.msg);
    ck_assert_int_eq(info.has_q, 0);
    ck_assert_int_eq(info.has_time, 0);
    for (int m = 0; m < N; m++) {
        ck_assert_double_eq(psi[m], 0.25 * m - 3.0);
        ck_assert_double_eq(q[m], -7.0); /* untouched */
    }

    path_in_dir(path, sizeof path, "plain_psi_q.nc");
    write_plain_state(path, NL, NY, NX, 1);
    ck_assert_msg(tg_initial_read(path, NX, NY, NL, psi, q, &info, &st) == TG_OK, "%s", st.msg);
    ck_assert_int_eq(info.has_q, 1);
    ck_assert_int_eq(info.has_time, 0);
    for (int m = 0; m < N; m++) {
        ck_assert_double_eq(psi[m], 0.25 * m - 3.0);
        ck_assert_double_eq(q[m], 3.0 * m - 11.0);
    }
    /* q may be skipped. */
    ck_assert_int_eq(tg_initial_read(path, NX, NY, NL, psi, NULL, &info, &st), TG_OK);
    ck_assert_int_eq(info.has_q, 1);
}
END_TEST

START_TEST(test_initial_mismatch)
{
    char path[4200];
    path_in_dir(path, sizeof path, "mismatch_fields.nc");
    write_fields(path, 5, 4, 2, 3, 2);
    double buf[3 * 6 * 5];
    tg_status st;
    tg_status_clear(&st);

    ck_assert_int_eq(tg_initial_read(path, 5, 4, 3, buf, NULL, NULL, &st), TG_ERR_CONFIG);
    ck_assert_int_eq(st.code, TG_ERR_CONFIG);
    ck_assert_msg(strstr(st.msg, "psi has 2 layers and 5 x 4 points; the config has 3 layers and "
                                 "5 x 4") != NULL,
                  "message: %s", st.msg);
    ck_assert_ptr_nonnull(strstr(st.msg, path));

    ck_assert_int_eq(tg_initial_read(path, 6, 4, 2, buf, NULL, NULL, &st), TG_ERR_CONFIG);
    ck_assert_msg(strstr(st.msg, "the config has 2 layers and 6 x 4") != NULL, "message: %s",
                  st.msg);
    ck_assert_int_eq(tg_initial_read(path, 5, 3, 2, buf, NULL, NULL, &st), TG_ERR_CONFIG);
    ck_assert_msg(strstr(st.msg, "the config has 2 layers and 5 x 3") != NULL, "message: %s",
                  st.msg);
}
END_TEST

START_TEST(test_initial_bad_files)
{
    char path[4200];
    double buf[64];
    tg_status st;
    tg_status_clear(&st);
    int ncid, d[2], v;

    /* No psi at all. */
    path_in_dir(path, sizeof path, "no_psi.nc");
    ck_assert_int_eq(nc_create(path, NC_CLOBBER, &ncid), NC_NOERR);
    ck_assert_int_eq(nc_def_dim(ncid, "n", 4, &d[0]), NC_NOERR);
    ck_assert_int_eq(nc_def_var(ncid, "streamfunction", NC_DOUBLE, 1, d, &v), NC_NOERR);
    ck_assert_int_eq(nc_close(ncid), NC_NOERR);
    ck_assert_int_eq(tg_initial_read(path, 2, 2, 1, buf, NULL, NULL, &st), TG_ERR_IO);
    ck_assert_ptr_nonnull(strstr(st.msg, path));
    ck_assert_msg(strstr(st.msg, "no variable \"psi\"") != NULL, "message: %s", st.msg);

    /* psi of the wrong rank. */
    path_in_dir(path, sizeof path, "psi_2d.nc");
    ck_assert_int_eq(nc_create(path, NC_CLOBBER, &ncid), NC_NOERR);
    ck_assert_int_eq(nc_def_dim(ncid, "a", 2, &d[0]), NC_NOERR);
    ck_assert_int_eq(nc_def_dim(ncid, "b", 2, &d[1]), NC_NOERR);
    ck_assert_int_eq(nc_def_var(ncid, "psi", NC_DOUBLE, 2, d, &v), NC_NOERR);
    ck_assert_int_eq(nc_close(ncid), NC_NOERR);
    ck_assert_int_eq(tg_initial_read(path, 2, 2, 1, buf, NULL, NULL, &st), TG_ERR_IO);
    ck_assert_msg(strstr(st.msg, "psi has 2 dimensions") != NULL, "message: %s", st.msg);

    /* A fields file with no records yet. */
    path_in_dir(path, sizeof path, "empty_fields.nc");
    write_fields(path, 2, 2, 1, 0, 0);
    ck_assert_int_eq(tg_initial_read(path, 2, 2, 1, buf, NULL, NULL, &st), TG_ERR_IO);
    ck_assert_msg(strstr(st.msg, "no records") != NULL, "message: %s", st.msg);

    /* No file. */
    path_in_dir(path, sizeof path, "does_not_exist.nc");
    ck_assert_int_eq(tg_initial_read(path, 2, 2, 1, buf, NULL, NULL, &st), TG_ERR_IO);
    ck_assert_ptr_nonnull(strstr(st.msg, path));
    ck_assert_int_eq(tg_checkpoint_read_extra(path, "alpha", buf, 3, &st), TG_ERR_IO);
    ck_assert_ptr_nonnull(strstr(st.msg, path));
}
END_TEST

/* ---- unwritable places ---- */

START_TEST(test_unwritable_directory)
{
    /* A directory that does not exist (permissions would not stop root). */
    char path[4200];
    test_grid t;
    make_grid(&t, 3, 3, 2);
    tg_status st;
    tg_status_clear(&st);

    path_in_dir(path, sizeof path, "no_such_dir/fields.nc");
    ck_assert_ptr_null(tg_fields_create(path, &t.g, NULL, &st));
    ck_assert_int_eq(st.code, TG_ERR_IO);
    ck_assert_msg(strstr(st.msg, path) != NULL, "message: %s", st.msg);
    ck_assert_msg(strstr(st.msg, "creating the file failed") != NULL, "message: %s", st.msg);

    path_in_dir(path, sizeof path, "no_such_dir/budget.nc");
    const tg_budget_var var = {"energy_total", "J m-2", "total energy", 0};
    tg_status_clear(&st);
    ck_assert_ptr_null(tg_budget_create(path, &t.g, &var, 1, &st));
    ck_assert_int_eq(st.code, TG_ERR_IO);
    ck_assert_msg(strstr(st.msg, path) != NULL, "message: %s", st.msg);

    path_in_dir(path, sizeof path, "no_such_dir/checkpoint.nc");
    double f[2 * 3 * 3] = {0};
    tg_checkpoint c = {.time_s = 0.0, .step = 0, .psi = f, .q = f, .nextra = 0};
    ck_assert_int_eq(tg_checkpoint_write(path, &t.g, &c, &st), TG_ERR_IO);
    ck_assert_msg(strstr(st.msg, path) != NULL, "message: %s", st.msg);
}
END_TEST

START_TEST(test_bad_arguments)
{
    test_grid t;
    make_grid(&t, 3, 3, 2);
    t.g.nx = 0;
    tg_status st;
    tg_status_clear(&st);
    char path[4200];
    path_in_dir(path, sizeof path, "bad_grid.nc");
    ck_assert_ptr_null(tg_fields_create(path, &t.g, NULL, &st));
    ck_assert_int_eq(st.code, TG_ERR_INTERNAL);
    make_grid(&t, 3, 3, 2);
    const tg_budget_var bad = {"energy_total", "J m-2", "total energy", 3};
    ck_assert_ptr_null(tg_budget_create(path, &t.g, &bad, 1, &st));
    ck_assert_int_eq(st.code, TG_ERR_INTERNAL);
    ck_assert_int_eq(tg_fields_close(NULL, &st), TG_OK);
    ck_assert_int_eq(tg_budget_close(NULL, &st), TG_OK);
}
END_TEST

/* A file without a spectrum has neither wavenumber nor ke_spectrum; a
 * spectrum given to the wrong kind of file, or an incomplete wavenumber
 * axis, is the caller's mistake (TG_ERR_INTERNAL). */
/* FNV-1a 64 test vectors of its authors' reference (IETF draft-eastlake-fnv,
 * section 2: offset basis and prime; the vectors "a" and "foobar" from
 * memory, agreeing with an independent Python implementation), and the
 * doubles hashed as their big-endian bytes. */
START_TEST(test_fnv1a_known_answers)
{
    ck_assert_uint_eq(tg_fnv1a_bytes(TG_FNV1A_START, NULL, 0), UINT64_C(0xcbf29ce484222325));
    ck_assert_uint_eq(tg_fnv1a_bytes(TG_FNV1A_START, (const unsigned char *)"a", 1),
                      UINT64_C(0xaf63dc4c8601ec8c));
    ck_assert_uint_eq(tg_fnv1a_bytes(TG_FNV1A_START, (const unsigned char *)"foobar", 6),
                      UINT64_C(0x85944171f73967e8));
    const double one = 1.0; /* 0x3ff0000000000000 */
    const unsigned char be[8] = {0x3f, 0xf0, 0, 0, 0, 0, 0, 0};
    ck_assert_uint_eq(tg_fnv1a_doubles(TG_FNV1A_START, &one, 1),
                      tg_fnv1a_bytes(TG_FNV1A_START, be, 8));
    /* a running hash over two appends equals the hash of both */
    const double two[2] = {1.0, -2.5};
    ck_assert_uint_eq(tg_fnv1a_doubles(tg_fnv1a_doubles(TG_FNV1A_START, two, 1), two + 1, 1),
                      tg_fnv1a_doubles(TG_FNV1A_START, two, 2));
}
END_TEST

/* Every length of a written checkpoint short of whole is refused (the
 * length check: the header's offsets and shapes against the file), and a
 * byte changed in psi's data fails its checksum; the whole file reads. */
START_TEST(test_checkpoint_damage_refused)
{
    enum { NX = 5, NY = 4, NL = 2, N = NL * NY * NX };
    char path[4200], cut[4200];
    path_in_dir(path, sizeof path, "damage.nc");
    path_in_dir(cut, sizeof cut, "damage_cut.nc");
    test_grid t;
    make_grid(&t, NX, NY, NL);
    double psi[N], q[N];
    fill_field(psi, 3, NL, NY, NX, 0);
    fill_field(q, 3, NL, NY, NX, 1);
    tg_checkpoint c = {.time_s = 7200.0, .step = 2, .psi = psi, .q = q};
    tg_status st;
    tg_status_clear(&st);
    ck_assert_msg(tg_checkpoint_write(path, &t.g, &c, &st) == TG_OK, "%s", st.msg);
    FILE *f = fopen(path, "rb");
    ck_assert_ptr_nonnull(f);
    static unsigned char buf[1 << 16];
    size_t n = fread(buf, 1, sizeof buf, f);
    fclose(f);
    ck_assert(n > 0 && n < sizeof buf);
    double p2[N], q2[N];
    ck_assert_msg(tg_initial_read(path, NX, NY, NL, p2, q2, NULL, &st) == TG_OK, "%s", st.msg);
    for (size_t len = 0; len < n; len += (len < n - 64 ? 97 : 1)) {
        f = fopen(cut, "wb");
        ck_assert_ptr_nonnull(f);
        ck_assert_uint_eq(fwrite(buf, 1, len, f), len);
        fclose(f);
        tg_status_clear(&st);
        ck_assert_msg(tg_initial_read(cut, NX, NY, NL, p2, q2, NULL, &st) == TG_ERR_IO,
                      "%zu of %zu bytes read without error", len, n);
        ck_assert_ptr_nonnull(strstr(st.msg, cut));
    }
    /* psi's data end where q's begin: n - 8*NL*NY*NX; change its last byte */
    buf[n - sizeof q - 1] ^= 0x01;
    f = fopen(cut, "wb");
    ck_assert_uint_eq(fwrite(buf, 1, n, f), n);
    fclose(f);
    tg_status_clear(&st);
    ck_assert_int_eq(tg_initial_read(cut, NX, NY, NL, p2, q2, NULL, &st), TG_ERR_IO);
    ck_assert_msg(strstr(st.msg, "variable psi do not match their checksum"), "%s", st.msg);
}
END_TEST

START_TEST(test_fields_spectrum_optional)
{
    enum { NX = 3, NY = 3, NL = 2, NB = 4 };
    char path[4200];
    test_grid t;
    test_wavenumbers w;
    make_grid(&t, NX, NY, NL);
    make_wavenumbers(&w, NB);
    double psi[NL * NY * NX], q[NL * NY * NX], spec[NL * NB];
    fill_field(psi, 0, NL, NY, NX, 0);
    fill_field(q, 0, NL, NY, NX, 1);
    fill_spectrum(spec, 0, NL, NB);
    tg_status st;
    tg_status_clear(&st);

    path_in_dir(path, sizeof path, "fields_no_spectrum.nc");
    tg_fields_file *f = tg_fields_create(path, &t.g, NULL, &st);
    ck_assert_msg(f != NULL, "%s", st.msg);
    ck_assert_int_eq(tg_fields_append(f, 0.0, psi, q, spec, &st), TG_ERR_INTERNAL);
    ck_assert_msg(strstr(st.msg, "the file has no ke_spectrum") != NULL, "message: %s", st.msg);
    ck_assert_msg(tg_fields_append(f, 0.0, psi, q, NULL, &st) == TG_OK, "%s", st.msg);
    ck_assert_msg(tg_fields_close(f, &st) == TG_OK, "%s", st.msg);
    int ncid, id;
    ck_assert_int_eq(nc_open(path, NC_NOWRITE, &ncid), NC_NOERR);
    ck_assert_uint_eq(dim_len(ncid, "time"), 1);
    ck_assert_int_eq(nc_inq_dimid(ncid, "wavenumber", &id), NC_EBADDIM);
    ck_assert_int_eq(nc_inq_varid(ncid, "ke_spectrum", &id), NC_ENOTVAR);
    ck_assert_int_eq(nc_close(ncid), NC_NOERR);

    path_in_dir(path, sizeof path, "fields_spectrum_missing.nc");
    f = tg_fields_create(path, &t.g, &w.w, &st);
    ck_assert_msg(f != NULL, "%s", st.msg);
    ck_assert_int_eq(tg_fields_append(f, 0.0, psi, q, NULL, &st), TG_ERR_INTERNAL);
    ck_assert_msg(strstr(st.msg, "no spectrum was given") != NULL, "message: %s", st.msg);
    ck_assert_msg(tg_fields_close(f, &st) == TG_OK, "%s", st.msg);

    path_in_dir(path, sizeof path, "fields_bad_axis.nc");
    tg_nc_wavenumbers bad = w.w;
    bad.bin_width = 0.0;
    ck_assert_ptr_null(tg_fields_create(path, &t.g, &bad, &st));
    ck_assert_int_eq(st.code, TG_ERR_INTERNAL);
    ck_assert_msg(strstr(st.msg, "wavenumber axis") != NULL, "message: %s", st.msg);
    bad = w.w;
    bad.nbins = 0;
    ck_assert_ptr_null(tg_fields_create(path, &t.g, &bad, &st));
    ck_assert_int_eq(st.code, TG_ERR_INTERNAL);
    bad = w.w;
    bad.k = NULL;
    ck_assert_ptr_null(tg_fields_create(path, &t.g, &bad, &st));
    ck_assert_int_eq(st.code, TG_ERR_INTERNAL);
}
END_TEST

static Suite *ncio_suite(void)
{
    Suite *s = suite_create("ncio");
    TCase *tc = tcase_create("files");
    tcase_add_test(tc, test_fields_round_trip);
    tcase_add_test(tc, test_fields_killed_writer);
    tcase_add_test(tc, test_fields_spectrum_optional);
    tcase_add_test(tc, test_budget_buffering);
    tcase_add_test(tc, test_budget_one_layer);
    tcase_add_test(tc, test_checkpoint_round_trip);
    tcase_add_test(tc, test_fnv1a_known_answers);
    tcase_add_test(tc, test_checkpoint_damage_refused);
    tcase_add_test(tc, test_initial_plain_3d);
    tcase_add_test(tc, test_initial_mismatch);
    tcase_add_test(tc, test_initial_bad_files);
    tcase_add_test(tc, test_unwritable_directory);
    tcase_add_test(tc, test_bad_arguments);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    const char *keep = getenv("TG_TEST_OUTDIR");
    if (!(keep && keep[0]))
        return tg_unit_run_in_scratch(ncio_suite(), g_dir, sizeof g_dir, "ncio");
    snprintf(g_dir, sizeof g_dir, "%s", keep);
    if (mkdir(g_dir, 0755) != 0 && errno != EEXIST) {
        fprintf(stderr, "test_ncio: cannot make %s: %s\n", g_dir, strerror(errno));
        return EXIT_FAILURE;
    }
    return tg_unit_run(ncio_suite());
}
