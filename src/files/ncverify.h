/* ncverify.h - checks that a NetCDF file twingyre reads is whole: a regular
 * file, as long as its header says, and (for the files twingyre writes for
 * itself to read back) with data matching the checksum stored beside it.
 *
 * netCDF-C reads the missing part of a classic file cut short as zeros,
 * without an error; these checks turn that into TG_ERR_IO with a message
 * naming the file and what is wrong.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_NCVERIFY_H
#define TG_NCVERIFY_H

#include <stddef.h>
#include <stdint.h>

#include "status.h"

/* The text attribute a checksummed variable carries: "fnv1a64:" followed by
 * 16 lower-case hex digits, the 64-bit FNV-1a hash (Fowler, Noll and Vo; IETF
 * draft-eastlake-fnv, section 2) of the variable's values in netCDF index
 * order, each value taken as the 8 bytes of its IEEE 754 double, most
 * significant byte first (the byte order of the file itself). */
#define TG_NC_CHECKSUM_ATT "data_checksum"
#define TG_NC_CHECKSUM_LEN 24 /* "fnv1a64:" + 16 hex digits */

/* The FNV-1a starting value; tg_fnv1a_doubles continues a running hash, so
 * records appended one at a time hash like the whole variable. */
#define TG_FNV1A_START UINT64_C(0xcbf29ce484222325)
uint64_t tg_fnv1a_bytes(uint64_t h, const unsigned char *p, size_t n);
/* Each double as its 8 IEEE 754 bytes, most significant first. */
uint64_t tg_fnv1a_doubles(uint64_t h, const double *x, size_t n);

/* The attribute's text for hash h (buf holds TG_NC_CHECKSUM_LEN + 1). */
void tg_nc_checksum_text(uint64_t h, char *buf);

/* Writes (or rewrites: same length, allowed in data mode) the checksum
 * attribute of variable varid. */
tg_code tg_nc_put_checksum(int ncid, int varid, uint64_t h, const char *path, const char *var,
                           tg_status *st);

/* Opens `path` read-only after checking it: it must be a regular file (a
 * FIFO or a device would block or stream), and a classic file (CDF-1, -2,
 * -5) must be at least as long as its header says its variables and records
 * need. Then every variable carrying TG_NC_CHECKSUM_ATT is read and hashed
 * and must match. Any failure is TG_ERR_IO with "PATH: ..." saying what is
 * wrong; *ncid is then closed and set to -1. NetCDF-4 (HDF5) files get the
 * regular-file and checksum checks only (HDF5 keeps its own structure). */
tg_code tg_nc_open_verified(const char *path, int *ncid, tg_status *st);

/* Scans n values for NaN/Inf: TG_OK, or TG_ERR_IO naming the file, the
 * variable, the record (rec >= 0; -1: none) and the position as layer, y
 * and x indices (values laid out (layer, y, x) with nx, ny). */
tg_code tg_nc_check_finite(const char *path, const char *var, long rec, const double *x,
                           int nlayers, int ny, int nx, tg_status *st);

#endif
