/* textfile.c - whole text files read, folders, PATH.tmp-then-rename text
 * files and JSON values (textfile.h). */
#define _POSIX_C_SOURCE 200809L
#include "textfile.h"

#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

tg_code tg_read_text(const char *path, const char *what, long max, char **out, size_t *out_len,
                     tg_status *st)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        return tg_fail(st, TG_ERR_IO, "cannot open %s '%s': %s", what, path, strerror(errno));
    size_t cap = 4096, len = 0;
    char *buf = malloc(cap);
    if (!buf) {
        fclose(f);
        return tg_fail(st, TG_ERR_NOMEM, "out of memory reading %s '%s'", what, path);
    }
    for (;;) {
        if (len > (size_t)max) {
            free(buf);
            fclose(f);
            return tg_fail(st, TG_ERR_CONFIG, "%s: larger than %ld bytes; is this really a %s?",
                           path, max, what);
        }
        if (len + 1 >= cap) {
            char *bigger = realloc(buf, cap * 2);
            if (!bigger) {
                free(buf);
                fclose(f);
                return tg_fail(st, TG_ERR_NOMEM, "out of memory reading %s '%s'", what, path);
            }
            buf = bigger;
            cap *= 2;
        }
        size_t got = fread(buf + len, 1, cap - 1 - len, f);
        len += got;
        if (got == 0) {
            if (ferror(f)) {
                int e = errno;
                free(buf);
                fclose(f);
                return tg_fail(st, TG_ERR_IO, "cannot read %s '%s': %s", what, path,
                               strerror(e));
            }
            break;
        }
    }
    fclose(f);
    buf[len] = '\0';
    *out = buf;
    *out_len = len;
    return TG_OK;
}

const char *tg_not_regular(const char *path)
{
    struct stat sb;
    if (stat(path, &sb) != 0 || S_ISREG(sb.st_mode))
        return NULL;
    return S_ISFIFO(sb.st_mode) ? "a FIFO" : S_ISDIR(sb.st_mode) ? "a directory"
                                                                 : "a device or socket";
}

tg_code tg_make_dirs(const char *path, tg_status *st)
{
    char *buf = strdup(path);
    if (!buf)
        return tg_fail(st, TG_ERR_NOMEM, "no memory to create directory %s", path);
    for (char *p = buf + (buf[0] != '\0');; p++) {
        const char ch = *p;
        if (ch == '/' || ch == '\0') {
            *p = '\0';
            if (mkdir(buf, 0777) != 0 && errno != EEXIST) {
                tg_code rc = tg_fail(st, TG_ERR_IO, "cannot create directory %s: %s", buf,
                                     strerror(errno));
                free(buf);
                return rc;
            }
            *p = ch;
        }
        if (ch == '\0')
            break;
    }
    free(buf);
    struct stat sb;
    if (stat(path, &sb) != 0 || !S_ISDIR(sb.st_mode))
        return tg_fail(st, TG_ERR_IO, "%s exists and is not a directory", path);
    return TG_OK;
}

FILE *tg_tmp_open(const char *path, char *tmp, size_t n, tg_status *st)
{
    if (snprintf(tmp, n, "%s.tmp", path) >= (int)n) {
        tg_fail(st, TG_ERR_IO, "cannot write %s: the path is too long", path);
        return NULL;
    }
    FILE *f = fopen(tmp, "w");
    if (!f)
        tg_fail(st, TG_ERR_IO, "cannot write %s: %s", tmp, strerror(errno));
    return f;
}

tg_code tg_tmp_commit(FILE *f, const char *tmp, const char *path, tg_status *st)
{
    const int bad = ferror(f);
    if (fclose(f) != 0 || bad) {
        remove(tmp);
        return tg_fail(st, TG_ERR_IO, "cannot write %s", tmp);
    }
    if (rename(tmp, path) != 0) {
        tg_code rc = tg_fail(st, TG_ERR_IO, "cannot rename %s to %s: %s", tmp, path,
                             strerror(errno));
        remove(tmp);
        return rc;
    }
    return TG_OK;
}

void tg_dir_of(const char *path, char *dir, size_t n)
{
    const char *slash = strrchr(path, '/');
    if (!slash)
        snprintf(dir, n, ".");
    else if (slash == path)
        snprintf(dir, n, "/");
    else
        snprintf(dir, n, "%.*s", (int)(slash - path), path);
}

void tg_json_number(FILE *f, double v)
{
    if (isfinite(v))
        fprintf(f, "%.10g", v);
    else
        fputs("null", f);
}

const char *tg_json_char(unsigned char ch, char buf[8])
{
    if (ch == '"' || ch == '\\')
        snprintf(buf, 8, "\\%c", ch);
    else if (ch < 0x20)
        snprintf(buf, 8, "\\u%04x", ch);
    else
        snprintf(buf, 8, "%c", ch);
    return buf;
}

void tg_json_string(FILE *f, const char *s)
{
    char buf[8];
    fputc('"', f);
    for (; *s; s++)
        fputs(tg_json_char((unsigned char)*s, buf), f);
    fputc('"', f);
}
