/* strbuf.c - the growing text buffer (strbuf.h). */
#include "strbuf.h"

#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>

void tg_sb_printf(tg_strbuf *b, const char *fmt, ...)
{
    if (b->oom)
        return;
    va_list ap;
    va_start(ap, fmt);
    int need = vsnprintf(NULL, 0, fmt, ap);
    va_end(ap);
    if (need < 0) {
        b->oom = 1;
        return;
    }
    if (b->len + (size_t)need + 1 > b->cap) {
        size_t cap = b->cap ? b->cap : 1024;
        while (b->len + (size_t)need + 1 > cap)
            cap *= 2;
        char *s = realloc(b->s, cap);
        if (!s) {
            b->oom = 1;
            return;
        }
        b->s = s;
        b->cap = cap;
    }
    va_start(ap, fmt);
    vsnprintf(b->s + b->len, b->cap - b->len, fmt, ap);
    va_end(ap);
    b->len += (size_t)need;
}
