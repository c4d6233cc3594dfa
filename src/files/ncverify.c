/* ncverify.c - is a NetCDF input whole? (see ncverify.h for the contract)
 *
 * The length check needs each variable's offset in the file ("begin"),
 * which netCDF-C does not expose. It is read from the classic header as laid
 * down in the NetCDF Classic Format Specification (NetCDF Users Guide,
 * Unidata, "File Format Specifications"; CDF-1, CDF-2 and CDF-5): magic,
 * record count, dimension list, global attributes, then per variable its
 * name, dimension ids, attributes, type, vsize and begin. From these:
 *   fixed variable:  end = begin + (product of its dimensions) * type size
 *   record variable: end = begin + (numrecs - 1) * recsize + one record,
 * with recsize the sum of the record variables' sizes rounded up to 4 bytes
 * (the size itself when there is one record variable), and the file must be
 * at least as long as the largest end. The netCDF-C library still does the
 * real reading; this reader only walks the header, never trusts a count
 * beyond the file's length and saturates its sums.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#define _POSIX_C_SOURCE 200809L
#include "ncverify.h"
#include "ncio_util.h"
#include "textfile.h"

#include <errno.h>
#include <inttypes.h>
#include <math.h>
#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

/* ------------------------------------------------------------------ */
/* FNV-1a                                                              */
/* ------------------------------------------------------------------ */

uint64_t tg_fnv1a_bytes(uint64_t h, const unsigned char *p, size_t n)
{
    for (size_t i = 0; i < n; i++) {
        h ^= p[i];
        h *= UINT64_C(0x100000001b3); /* the 64-bit FNV prime */
    }
    return h;
}

uint64_t tg_fnv1a_doubles(uint64_t h, const double *x, size_t n)
{
    for (size_t i = 0; i < n; i++) {
        uint64_t bits;
        unsigned char be[8];
        memcpy(&bits, &x[i], sizeof bits);
        for (int b = 0; b < 8; b++)
            be[b] = (unsigned char)(bits >> (56 - 8 * b));
        h = tg_fnv1a_bytes(h, be, sizeof be);
    }
    return h;
}

void tg_nc_checksum_text(uint64_t h, char *buf)
{
    snprintf(buf, TG_NC_CHECKSUM_LEN + 1, "fnv1a64:%016" PRIx64, h);
}

tg_code tg_nc_put_checksum(int ncid, int varid, uint64_t h, const char *path, const char *var,
                           tg_status *st)
{
    char text[TG_NC_CHECKSUM_LEN + 1];
    tg_nc_checksum_text(h, text);
    return tg_nc_put_text(ncid, varid, TG_NC_CHECKSUM_ATT, text, path, var, st);
}

/* ------------------------------------------------------------------ */
/* The classic header                                                  */
/* ------------------------------------------------------------------ */

typedef struct {
    FILE *f;
    uint64_t size; /* the file's length */
    uint64_t pos;
    int version;   /* 1, 2 or 5 */
    int short_read;
} hdr_reader;

static uint64_t sat_add(uint64_t a, uint64_t b) { return a > UINT64_MAX - b ? UINT64_MAX : a + b; }
static uint64_t sat_mul(uint64_t a, uint64_t b)
{
    return (a != 0 && b > UINT64_MAX / a) ? UINT64_MAX : a * b;
}

static uint64_t get_be(hdr_reader *r, int nbytes)
{
    unsigned char b[8];
    if (r->short_read || r->pos + (uint64_t)nbytes > r->size ||
        fread(b, 1, (size_t)nbytes, r->f) != (size_t)nbytes) {
        r->short_read = 1;
        return 0;
    }
    r->pos += (uint64_t)nbytes;
    uint64_t v = 0;
    for (int i = 0; i < nbytes; i++)
        v = v << 8 | b[i];
    return v;
}

/* A count or length: 4 bytes, 8 in CDF-5. */
static uint64_t get_nonneg(hdr_reader *r) { return get_be(r, r->version == 5 ? 8 : 4); }

static void skip_raw(hdr_reader *r, uint64_t n)
{
    if (r->short_read || n > r->size - r->pos || fseeko(r->f, (off_t)n, SEEK_CUR) != 0) {
        r->short_read = 1;
        return;
    }
    r->pos += n;
}

/* Skips n bytes rounded up to a multiple of 4. */
static void skip_padded(hdr_reader *r, uint64_t n) { skip_raw(r, sat_add(n, (4 - n % 4) % 4)); }

/* A name: its length, then its bytes padded to 4 (the first NC_MAX_NAME kept). */
static void get_name(hdr_reader *r, char *name)
{
    uint64_t n = get_nonneg(r);
    size_t keep = n < NC_MAX_NAME ? (size_t)n : NC_MAX_NAME;
    if (r->short_read || keep > r->size - r->pos || fread(name, 1, keep, r->f) != keep) {
        r->short_read = 1;
        return;
    }
    name[keep] = '\0';
    r->pos += keep;
    skip_raw(r, sat_add(n - keep, (4 - n % 4) % 4));
}

static int type_size(uint64_t t)
{
    switch (t) {
    case NC_BYTE: case NC_CHAR: case NC_UBYTE: return 1;
    case NC_SHORT: case NC_USHORT: return 2;
    case NC_INT: case NC_FLOAT: case NC_UINT: return 4;
    case NC_DOUBLE: case NC_INT64: case NC_UINT64: return 8;
    default: return 0;
    }
}

/* A list header: its tag (0 when ABSENT) and element count. */
static uint64_t get_list(hdr_reader *r, uint64_t want_tag, int *bad)
{
    uint64_t tag = get_be(r, 4);
    uint64_t n = get_nonneg(r);
    if (!r->short_read && tag != want_tag && !(tag == 0 && n == 0))
        *bad = 1;
    /* every element takes at least 4 bytes: a larger count is damage */
    if (n > (r->size - r->pos) / 4)
        *bad = 1;
    return *bad ? 0 : n;
}

static void skip_attrs(hdr_reader *r, int *bad)
{
    uint64_t n = get_list(r, 0x0C, bad);
    for (uint64_t a = 0; a < n && !r->short_read && !*bad; a++) {
        skip_padded(r, get_nonneg(r)); /* name */
        int ts = type_size(get_be(r, 4));
        uint64_t nelems = get_nonneg(r);
        if (ts == 0 && !r->short_read) {
            *bad = 1;
            return;
        }
        skip_padded(r, sat_mul(nelems, (uint64_t)ts));
    }
}

typedef struct {
    uint64_t end;       /* the largest end of data the header promises */
    uint64_t numrecs;
    uint64_t nrecvars;  /* record variables */
    char var[NC_MAX_NAME + 1]; /* the variable that ends there */
} hdr_extent;

/* Walks the header; returns 0, or -1 when it is cut short or malformed. */
static int header_extent(hdr_reader *r, hdr_extent *ex)
{
    int bad = 0;
    uint64_t *dimlen = NULL;
    typedef struct {
        uint64_t begin, nbytes;
        int is_rec;
        char name[NC_MAX_NAME + 1];
    } var_info;
    var_info *vars = NULL;
    memset(ex, 0, sizeof *ex);
    ex->numrecs = get_nonneg(r);
    int streaming = r->version == 5 ? ex->numrecs == UINT64_MAX : ex->numrecs == 0xffffffffu;

    uint64_t ndims = get_list(r, 0x0A, &bad);
    if (!bad && ndims > 0 && !(dimlen = calloc(ndims, sizeof *dimlen)))
        bad = 1;
    for (uint64_t d = 0; d < ndims && !bad && !r->short_read; d++) {
        skip_padded(r, get_nonneg(r));
        dimlen[d] = get_nonneg(r);
    }
    if (!bad && !r->short_read)
        skip_attrs(r, &bad);
    uint64_t nvars = bad || r->short_read ? 0 : get_list(r, 0x0B, &bad);
    if (!bad && nvars > 0 && !(vars = calloc(nvars, sizeof *vars)))
        bad = 1;
    uint64_t recsize = 0, nrecvars = 0;
    for (uint64_t v = 0; v < nvars && !bad && !r->short_read; v++) {
        var_info *vi = &vars[v];
        get_name(r, vi->name);
        uint64_t vnd = get_nonneg(r);
        if (vnd > (r->size - r->pos) / 4) {
            bad = 1;
            break;
        }
        uint64_t count = 1;
        for (uint64_t k = 0; k < vnd && !r->short_read; k++) {
            uint64_t id = get_nonneg(r);
            if (id >= ndims) {
                bad = 1;
                break;
            }
            if (k == 0 && dimlen[id] == 0)
                vi->is_rec = 1;
            else
                count = sat_mul(count, dimlen[id]);
        }
        if (bad)
            break;
        skip_attrs(r, &bad);
        int ts = type_size(get_be(r, 4));
        (void)get_nonneg(r); /* vsize: recomputed from the shape, as it may saturate */
        vi->begin = get_be(r, r->version == 1 ? 4 : 8);
        if (ts == 0 && !r->short_read)
            bad = 1;
        vi->nbytes = sat_mul(count, (uint64_t)ts);
        if (vi->is_rec) {
            recsize = sat_add(recsize, sat_add(vi->nbytes, (4 - vi->nbytes % 4) % 4));
            nrecvars++;
        }
    }
    if (nrecvars == 1)
        for (uint64_t v = 0; v < nvars; v++)
            if (vars[v].is_rec)
                recsize = vars[v].nbytes;
    ex->nrecvars = nrecvars;
    int rc = (bad || r->short_read) ? -1 : 0;
    for (uint64_t v = 0; v < nvars && rc == 0; v++) {
        const var_info *vi = &vars[v];
        uint64_t end;
        if (vi->nbytes == 0)
            continue;
        if (vi->is_rec) {
            if (streaming || ex->numrecs == 0)
                continue;
            end = sat_add(sat_add(vi->begin, sat_mul(ex->numrecs - 1, recsize)), vi->nbytes);
        } else {
            end = sat_add(vi->begin, vi->nbytes);
        }
        if (end > ex->end) {
            ex->end = end;
            snprintf(ex->var, sizeof ex->var, "%s", vi->name);
        }
    }
    free(dimlen);
    free(vars);
    return rc;
}

/* The regular-file and length checks, before netCDF opens the file. */
static tg_code check_length(const char *path, tg_status *st)
{
    const char *kind = tg_not_regular(path);
    if (kind)
        return tg_fail(st, TG_ERR_IO, "%s: not a regular file (%s); give a NetCDF file", path,
                       kind);
    struct stat sb;
    if (stat(path, &sb) != 0)
        return tg_fail(st, TG_ERR_IO, "%s: cannot be read: %s", path, strerror(errno));
    FILE *f = fopen(path, "rb");
    if (!f)
        return tg_fail(st, TG_ERR_IO, "%s: cannot be read: %s", path, strerror(errno));
    hdr_reader r = {.f = f, .size = (uint64_t)sb.st_size};
    unsigned char magic[4] = {0, 0, 0, 0};
    size_t got = fread(magic, 1, 4, f);
    r.pos = got;
    tg_code code = TG_OK;
    if (got == 4 && magic[0] == 'C' && magic[1] == 'D' && magic[2] == 'F' &&
        (magic[3] == 1 || magic[3] == 2 || magic[3] == 5)) {
        r.version = magic[3];
        hdr_extent ex;
        if (header_extent(&r, &ex) != 0)
            code = tg_fail(st, TG_ERR_IO,
                           "%s: damaged file: its NetCDF header is cut short or malformed", path);
        else if (ex.end > r.size) {
            char recs[64] = "";
            if (ex.nrecvars > 0)
                snprintf(recs, sizeof recs, " (%" PRIu64 " records)", ex.numrecs);
            code = tg_fail(st, TG_ERR_IO,
                           "%s: damaged file: it is %" PRIu64 " bytes long but its NetCDF "
                           "header%s needs %" PRIu64 " bytes for the data of variable %s; it "
                           "was cut short (or its header is damaged)",
                           path, r.size, recs, ex.end, ex.var);
        }
    } else if (got < 4) {
        code = tg_fail(st, TG_ERR_IO, "%s: damaged file: %zu bytes, too short for NetCDF", path,
                       got);
    }
    /* any other magic: netCDF-4/HDF5 or not NetCDF; nc_open says which */
    fclose(f);
    return code;
}

/* ------------------------------------------------------------------ */
/* Checksums                                                           */
/* ------------------------------------------------------------------ */

/* Hashes variable v slab by slab along its first dimension. */
static tg_code hash_var(int ncid, int v, const char *path, const char *name, uint64_t *h,
                        tg_status *st)
{
    int nd, dimids[NC_MAX_VAR_DIMS];
    tg_code code = tg_nc_check(nc_inq_varndims(ncid, v, &nd), path, "inquiring", name, st);
    if (!code)
        code = tg_nc_check(nc_inq_vardimid(ncid, v, dimids), path, "inquiring", name, st);
    size_t len[NC_MAX_VAR_DIMS], start[NC_MAX_VAR_DIMS] = {0}, slab = 1;
    for (int d = 0; d < nd && !code; d++) {
        code = tg_nc_check(nc_inq_dimlen(ncid, dimids[d], &len[d]), path, "inquiring", name, st);
        if (d > 0)
            slab *= len[d];
    }
    if (code)
        return code;
    double *buf = malloc(sizeof(double) * (slab ? slab : 1));
    if (!buf)
        return tg_fail(st, TG_ERR_NOMEM, "%s: no memory to check variable %s", path, name);
    *h = TG_FNV1A_START;
    size_t n0 = nd > 0 ? len[0] : 1;
    size_t count[NC_MAX_VAR_DIMS];
    for (int d = 0; d < nd; d++)
        count[d] = d == 0 ? 1 : len[d];
    for (size_t i = 0; i < n0 && slab > 0 && !code; i++) {
        start[0] = i;
        code = tg_nc_check(nd > 0 ? nc_get_vara_double(ncid, v, start, count, buf)
                                  : nc_get_var_double(ncid, v, buf),
                           path, "reading", name, st);
        if (!code)
            *h = tg_fnv1a_doubles(*h, buf, slab);
    }
    free(buf);
    return code;
}

static tg_code verify_checksums(int ncid, const char *path, tg_status *st)
{
    int nvars;
    tg_code code = tg_nc_check(nc_inq_nvars(ncid, &nvars), path, "counting variables", NULL, st);
    for (int v = 0; v < nvars && !code; v++) {
        nc_type type;
        size_t alen;
        if (nc_inq_att(ncid, v, TG_NC_CHECKSUM_ATT, &type, &alen) != NC_NOERR)
            continue;
        char name[NC_MAX_NAME + 1] = "?";
        (void)nc_inq_varname(ncid, v, name);
        char stored[TG_NC_CHECKSUM_LEN + 1] = "", want[TG_NC_CHECKSUM_LEN + 1];
        if (type != NC_CHAR || alen != TG_NC_CHECKSUM_LEN ||
            nc_get_att_text(ncid, v, TG_NC_CHECKSUM_ATT, stored) != NC_NOERR) {
            code = tg_fail(st, TG_ERR_IO, "%s: damaged file: attribute %s of variable %s is not "
                           "a checksum text", path, TG_NC_CHECKSUM_ATT, name);
            break;
        }
        uint64_t h;
        if ((code = hash_var(ncid, v, path, name, &h, st)))
            break;
        tg_nc_checksum_text(h, want);
        if (memcmp(stored, want, TG_NC_CHECKSUM_LEN) != 0)
            code = tg_fail(st, TG_ERR_IO,
                           "%s: damaged file: the data of variable %s do not match their "
                           "checksum (stored %.*s, computed %s)",
                           path, name, TG_NC_CHECKSUM_LEN, stored, want);
    }
    return code;
}

tg_code tg_nc_open_verified(const char *path, int *ncid, tg_status *st)
{
    *ncid = -1;
    tg_code code = check_length(path, st);
    if (code)
        return code;
    if ((code = tg_nc_check(nc_open(path, NC_NOWRITE, ncid), path, "opening the file", NULL, st)))
        return code;
    if ((code = verify_checksums(*ncid, path, st))) {
        (void)nc_close(*ncid); /* read-only: nothing to lose */
        *ncid = -1;
    }
    return code;
}

tg_code tg_nc_check_finite(const char *path, const char *var, long rec, const double *x,
                           int nlayers, int ny, int nx, tg_status *st)
{
    const size_t n = (size_t)nlayers * (size_t)ny * (size_t)nx;
    for (size_t i = 0; i < n; i++) {
        if (isfinite(x[i]))
            continue;
        char where[48] = "";
        if (rec >= 0)
            snprintf(where, sizeof where, " of record %ld", rec);
        return tg_fail(st, TG_ERR_IO,
                       "%s: variable %s%s holds %g at layer %zu, y index %zu, x index %zu "
                       "(counting from 1); a state must be finite",
                       path, var, where, x[i], i / ((size_t)ny * nx) + 1, i / (size_t)nx % ny + 1,
                       i % (size_t)nx + 1);
    }
    return TG_OK;
}
