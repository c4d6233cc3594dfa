/* ini_lines.c - the line reader of every INI file (ini_lines.h).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "ini_lines.h"

#include <ctype.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

tg_code tg_ini_lines_start(tg_ini_lines *l, const char *path, const char *buf, size_t len,
                           tg_status *st)
{
    memset(l, 0, sizeof *l);
    l->path = path;
    l->buf = buf;
    l->len = len;
    l->st = st;
    const char *nul = memchr(buf, '\0', len);
    if (nul) {
        int line = 1;
        for (const char *p = buf; p < nul; p++)
            line += *p == '\n';
        return tg_fail(st, TG_ERR_CONFIG, "%s:%d: contains a NUL byte; is this really a text file?",
                       path, line);
    }
    return TG_OK;
}

void tg_ini_lines_fail(tg_ini_lines *l, int line, const char *fmt, ...)
{
    if (l->failed)
        return;
    char msg[TG_MSG_LEN];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    tg_fail(l->st, TG_ERR_CONFIG, "%s:%d: %s", l->path, line, msg);
    l->failed = 1;
    l->err_line = line;
}

/* Copies line `lineno` (1-based) of buf without its line end into out. */
static void nth_line(const char *buf, size_t len, int lineno, char *out, size_t n)
{
    const char *p = buf, *end = buf + len;
    for (int k = 1; k < lineno && p < end; k++) {
        const char *nl = memchr(p, '\n', (size_t)(end - p));
        p = nl ? nl + 1 : end;
    }
    size_t l = strcspn(p, "\r\n");
    if (l > (size_t)(end - p))
        l = (size_t)(end - p);
    if (l + 1 > n)
        l = n - 1;
    memcpy(out, p, l);
    out[l] = '\0';
}

/* Best guess at "[section] key: " for a line the reader rejects. */
static void describe_line_key(const char *line, const char *section, char *out, size_t n)
{
    const char *p = line;
    out[0] = '\0';
    while (*p == ' ' || *p == '\t')
        p++;
    size_t klen = strcspn(p, "=:;");
    if (p[klen] != '=' && p[klen] != ':')
        return;
    while (klen > 0 && isspace((unsigned char)p[klen - 1]))
        klen--;
    if (klen == 0 || klen > 60)
        return;
    if (section[0])
        snprintf(out, n, "[%s] %.*s: ", section, (int)klen, p);
    else
        snprintf(out, n, "%.*s: ", (int)klen, p);
}

/* A [section] header: nothing but a comment after its ']', and a name the
 * caller accepts. 0 when fine (or not a header), -1 after a failure. */
static int check_header(tg_ini_lines *l, const char *p)
{
    const char *close = strchr(p + 1, ']');
    if (!close)
        return 0; /* libinih reports it; tg_ini_lines_finish words it */
    char name[64];
    size_t n = (size_t)(close - (p + 1));
    if (n >= sizeof name)
        n = sizeof name - 1;
    memcpy(name, p + 1, n);
    name[n] = '\0';
    /* libinih drops anything after the ']'; refuse it instead. */
    const char *after = close + 1 + strspn(close + 1, " \t\r\n");
    if (*after != '\0' && *after != ';' && *after != '#') {
        tg_ini_lines_fail(l, l->lineno, "[%s]: unexpected text after the section header: '%.40s' "
                          "(a comment starts with ';' or '#')", name, after);
        return -1;
    }
    char why[512];
    if (l->header && l->header(l->header_user, name, why, sizeof why) != 0) {
        tg_ini_lines_fail(l, l->lineno, "%s", why);
        return -1;
    }
    memcpy(l->section, name, n + 1);
    return 0;
}

char *tg_ini_lines_read(char *str, int num, void *stream)
{
    tg_ini_lines *l = stream;
    if (l->failed || l->pos >= l->len || num < 4)
        return NULL;

    const char *start = l->buf + l->pos;
    size_t rest = l->len - l->pos;
    const char *nl = memchr(start, '\n', rest);
    size_t take = nl ? (size_t)(nl - start) + 1 : rest;
    size_t content = nl ? (size_t)(nl - start) : rest;
    if (content > 0 && start[content - 1] == '\r')
        content--;
    l->lineno++;
    l->pos += take;

    size_t bom = 0;
    if (l->lineno == 1 && content >= 3 && memcmp(start, "\xEF\xBB\xBF", 3) == 0)
        bom = 3;
    const char *text = start + bom;

    if (content > (size_t)num - 3) {
        char key[128], head[96];
        snprintf(head, sizeof head, "%.*s", (int)(content - bom < 90 ? content - bom : 90), text);
        describe_line_key(head, l->section, key, sizeof key);
        tg_ini_lines_fail(l, l->lineno,
                          "%sline is %zu characters long; at most %d are allowed "
                          "(move a trailing comment onto its own line, or shorten the value)",
                          key, content - bom, num - 3);
        return NULL;
    }
    memcpy(str, start, take);
    str[take] = '\0';

    /* libinih glues an indented line to the previous value. */
    const char *p = str + bom;
    l->continued = 0;
    if (*p == ' ' || *p == '\t') {
        while (*p == ' ' || *p == '\t')
            p++;
        const int blank = *p == '\0' || *p == '\r' || *p == '\n' || *p == ';' || *p == '#';
        if (!blank && !l->allow_continuation) {
            tg_ini_lines_fail(l, l->lineno,
                              "line is indented; start keys and [section] headers in the first "
                              "column (an indented line would be read as a continuation of the "
                              "previous value)");
            return NULL;
        }
        l->continued = !blank && *p != '[';
    }
    if (*p == '[' && check_header(l, p) != 0)
        return NULL;
    return str;
}

tg_code tg_ini_lines_finish(tg_ini_lines *l, int r, tg_status *st)
{
    if (r == -2)
        return tg_fail(st, TG_ERR_NOMEM, "libinih could not allocate a line buffer for '%s'",
                       l->path);
    if (r > 0 && (!l->failed || r < l->err_line)) {
        /* A line libinih could not read (the handler never saw it). */
        char text[128];
        nth_line(l->buf, l->len, r, text, sizeof text);
        const char *t = text;
        while (isspace((unsigned char)*t))
            t++;
        const int shorten = strlen(text) > 80;
        if (*t == '[')
            return tg_fail(st, TG_ERR_CONFIG, "%s:%d: section header '%.80s%s' has no closing ']'",
                           l->path, r, text, shorten ? "..." : "");
        return tg_fail(st, TG_ERR_CONFIG,
                       "%s:%d: expected 'key = value', a [section] header or a comment, got "
                       "'%.80s%s'", l->path, r, text, shorten ? "..." : "");
    }
    if (l->failed)
        return TG_ERR_CONFIG;
    if (r != 0)
        return tg_fail(st, TG_ERR_INTERNAL, "%s: libinih returned %d", l->path, r);
    return TG_OK;
}
