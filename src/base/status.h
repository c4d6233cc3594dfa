/* status.h - error codes, the status record every library call fills, and logging.
 *
 * The library never calls exit() and never prints on its own: a failing call
 * returns a non-zero tg_code and writes a one-line message into the caller's
 * tg_status; progress and diagnostics go through the log callback that the
 * caller installs with tg_set_log(). The callback pointer is the only global
 * mutable state of the library; set it once before starting work.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_STATUS_H
#define TG_STATUS_H

#include <stddef.h>

/* Return codes. The command layer maps them to exit codes (README, "Exit codes"). */
typedef enum {
    TG_OK = 0,
    TG_ERR_USAGE = 1,      /* bad command line */
    TG_ERR_CONFIG = 2,     /* bad config file, key or value */
    TG_ERR_IO = 3,         /* a file could not be read or written */
    TG_ERR_NUMERIC = 4,    /* a library (FFTW, LAPACK) failed or a set-up is singular */
    TG_ERR_BLOWUP = 5,     /* NaN/Inf or CFL above the limit during a run */
    TG_ERR_INTERRUPTED = 6,/* stopped by SIGINT/SIGTERM after writing a checkpoint */
    TG_ERR_NOMEM = 7,      /* allocation failed */
    TG_ERR_INTERNAL = 8    /* a bug: an invariant did not hold */
} tg_code;

#define TG_MSG_LEN 1024

typedef struct {
    tg_code code;
    char msg[TG_MSG_LEN];
} tg_status;

/* Sets st->code and st->msg (printf-style) and returns code; st may be NULL.
 * The arguments may include st->msg itself (a context prefixed to it). */
tg_code tg_fail(tg_status *st, tg_code code, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

/* Clears a status to TG_OK with an empty message. */
void tg_status_clear(tg_status *st);

/* A short name of a code ("config error", ...). */
const char *tg_code_name(tg_code code);

/* Logging: levels and the callback. The default callback discards everything. */
typedef enum { TG_LOG_ERROR = 0, TG_LOG_WARN = 1, TG_LOG_INFO = 2, TG_LOG_DEBUG = 3 } tg_log_level;
typedef void (*tg_log_fn)(tg_log_level level, const char *line, void *user);
void tg_set_log(tg_log_fn fn, void *user);
void tg_log(tg_log_level level, const char *fmt, ...) __attribute__((format(printf, 2, 3)));

#endif
