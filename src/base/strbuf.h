/* strbuf.h - a growing text buffer for building reports and config dumps.
 *
 * tg_strbuf b = {0}; tg_sb_printf(&b, ...); ... then take b.s (malloc'ed,
 * NUL-terminated) unless b.oom is set, in which case free(b.s).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_STRBUF_H
#define TG_STRBUF_H

#include <stddef.h>

typedef struct {
    char *s;        /* the text, NUL-terminated (NULL while empty) */
    size_t len, cap;
    int oom;        /* an allocation failed: the text is incomplete */
} tg_strbuf;

void tg_sb_printf(tg_strbuf *b, const char *fmt, ...) __attribute__((format(printf, 2, 3)));

#endif
