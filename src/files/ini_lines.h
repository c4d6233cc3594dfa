/* ini_lines.h - the line reader every INI file of twingyre goes through
 * (config files, resolved configs held as text, sweep files): the whole
 * text in memory, handed to libinih's ini_parse_stream line by line.
 *
 * libinih reads lines silently in ways a config must not: it splits a line
 * longer than its buffer, it ends a line at a NUL byte, it glues an
 * indented line to the previous value, it drops text after a section
 * header's ']', and the Debian build's handler gets no line number. The
 * reader refuses each of these with "PATH:LINE: ..." (or, for a file whose
 * value lists go on over indented lines, marks such a line as a
 * continuation), counts lines, skips a UTF-8 byte-order mark and lets the
 * caller check each [section] header as it passes.
 *
 * Use: tg_ini_lines_start (refuses a NUL byte), ini_parse_stream(
 * tg_ini_lines_read, &lines, handler, user) with the handler reading
 * lines.lineno and calling tg_ini_lines_fail, then tg_ini_lines_finish.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_INI_LINES_H
#define TG_INI_LINES_H

#include <stddef.h>

#include "status.h"

typedef struct {
    const char *path;         /* names the text in messages */
    const char *buf;          /* the whole text, NUL-terminated after len bytes */
    size_t len, pos;
    int lineno;               /* the line most recently handed to libinih */
    char section[64];         /* the last [section] header, for messages */
    /* 1: an indented line continues the previous value (sweep value
     * lists), marked in `continued`; 0: an indented line is refused. */
    int allow_continuation;
    int continued;
    /* Called with each [section] header's name (may be NULL): 0 when the
     * section is fine, else -1 with the reason in why (size n). */
    int (*header)(void *user, const char *name, char *why, size_t n);
    void *header_user;
    int failed;               /* an error is recorded in st */
    int err_line;
    tg_status *st;
} tg_ini_lines;

/* Sets l up over buf (len bytes, NUL-terminated); TG_ERR_CONFIG with
 * "PATH:LINE: contains a NUL byte" when the text holds one (libinih would
 * end the line there and read what follows as another line). */
tg_code tg_ini_lines_start(tg_ini_lines *l, const char *path, const char *buf, size_t len,
                           tg_status *st);

/* The ini_reader for ini_parse_stream (stream: the tg_ini_lines). */
char *tg_ini_lines_read(char *str, int num, void *stream);

/* Records the first failure as "PATH:LINE: message" (TG_ERR_CONFIG). */
void tg_ini_lines_fail(tg_ini_lines *l, int line, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

/* The status of a whole read from ini_parse_stream's result r: a line
 * libinih could not read, a failure recorded by the reader or the handler,
 * or TG_OK. */
tg_code tg_ini_lines_finish(tg_ini_lines *l, int r, tg_status *st);

#endif
