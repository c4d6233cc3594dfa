/* textfile.h - the library's small file-system and text helpers: a whole
 * text file read into memory, folders made as needed (mkdir -p), the folder
 * of a path, text files written under PATH.tmp and renamed into place only
 * when complete (so an existing file is never left half-written), and JSON
 * numbers and strings (RFC 8259) for the files
 * written straight to a FILE (skill.json, sweep.json).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_TEXTFILE_H
#define TG_TEXTFILE_H

#include <stddef.h>
#include <stdio.h>

#include "status.h"

/* Reads the whole file into a new NUL-terminated buffer (*out, *len bytes
 * before the NUL; the caller frees it). `what` names the file in messages
 * ("config file"); a file larger than max bytes is refused with
 * TG_ERR_CONFIG. */
tg_code tg_read_text(const char *path, const char *what, long max, char **out, size_t *len,
                     tg_status *st);

/* NULL when path is a regular file or cannot be examined (opening it then
 * says why); otherwise what it is: "a FIFO", "a directory" or "a device or
 * socket". Opening a FIFO would wait for a writer, so readers ask first. */
const char *tg_not_regular(const char *path);

/* Creates path and its missing parents; TG_ERR_IO naming the folder that
 * could not be made, or a file that stands in the way. */
tg_code tg_make_dirs(const char *path, tg_status *st);

/* The folder of path: "." when it has no slash, "/" for a file in the root,
 * else everything before the last slash (cut to n - 1 bytes). */
void tg_dir_of(const char *path, char *dir, size_t n);

/* Opens tmp = "path.tmp" (n bytes at tmp) for writing; NULL and a message
 * in st when it cannot. */
FILE *tg_tmp_open(const char *path, char *tmp, size_t n, tg_status *st);

/* Closes f and renames tmp to path; on a write error removes tmp and leaves
 * path as it was. */
tg_code tg_tmp_commit(FILE *f, const char *tmp, const char *path, tg_status *st);

/* v with 10 significant digits, null when not finite. */
void tg_json_number(FILE *f, double v);

/* s quoted, with '"', '\\' and control characters escaped. */
void tg_json_string(FILE *f, const char *s);

/* The JSON text of one character inside a string: itself, or its escape
 * ('"' and '\\' by a backslash, control characters as \u00XX); written
 * into buf, which the result points to. The one escaping rule of
 * tg_json_string and of JSON built in memory (vet.json). */
const char *tg_json_char(unsigned char ch, char buf[8]);

#endif
