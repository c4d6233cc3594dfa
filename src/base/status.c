/* status.c - the status record and the logging callback (see status.h). */
#include "status.h"

#include <stdarg.h>
#include <stdio.h>
#include <string.h>

/* The one piece of global mutable state: the log sink. Set before work starts. */
static tg_log_fn g_log_fn = NULL;
static void *g_log_user = NULL;

tg_code tg_fail(tg_status *st, tg_code code, const char *fmt, ...)
{
    if (st) {
        /* Formatted apart first: callers prefix the message they got,
         * tg_fail(st, rc, "context: %s", st->msg), and vsnprintf must not
         * read the buffer it writes. */
        char buf[sizeof st->msg];
        va_list ap;
        va_start(ap, fmt);
        vsnprintf(buf, sizeof buf, fmt, ap);
        va_end(ap);
        memcpy(st->msg, buf, sizeof buf);
        st->code = code;
    }
    return code;
}

void tg_status_clear(tg_status *st)
{
    if (st) {
        st->code = TG_OK;
        st->msg[0] = '\0';
    }
}

const char *tg_code_name(tg_code code)
{
    switch (code) {
    case TG_OK: return "ok";
    case TG_ERR_USAGE: return "usage error";
    case TG_ERR_CONFIG: return "config error";
    case TG_ERR_IO: return "input/output error";
    case TG_ERR_NUMERIC: return "numerical library error";
    case TG_ERR_BLOWUP: return "run became unstable";
    case TG_ERR_INTERRUPTED: return "interrupted";
    case TG_ERR_NOMEM: return "out of memory";
    case TG_ERR_INTERNAL: return "internal error";
    }
    return "unknown error";
}

void tg_set_log(tg_log_fn fn, void *user)
{
    g_log_fn = fn;
    g_log_user = user;
}

void tg_log(tg_log_level level, const char *fmt, ...)
{
    if (!g_log_fn)
        return;
    char line[2048];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(line, sizeof line, fmt, ap);
    va_end(ap);
    g_log_fn(level, line, g_log_user);
}
