/* config_read.c - reading settings into a tg_config: the documented
 * defaults, an INI file or text (libinih), and `--set section.key=value`
 * overrides; closure sections and [twin.*] overrides are kept as written
 * for their checks (config_check.c, config_twin.c). Reading checks each
 * value against its key's row; the rules between keys are config_check.c's.
 *
 * Reading a file: the whole file is read into memory and handed to
 * ini_parse_stream through our own line reader, which counts lines (the
 * handler of the Debian libinih build gets no line number), rejects lines
 * longer than libinih's line buffer (it would split them silently), rejects
 * indented lines (libinih would glue them to the previous value) and checks
 * [section] headers as they pass. Values go into a working copy that
 * replaces the caller's config only when the whole file is good.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "config_impl.h"
#include "textfile.h"

#include <ini.h>

#include <ctype.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Stores one twin override "section.key = value"; returns 0 or writes why. */
static int store_twin_raw(tg_config *cfg, const char *section, const char *key,
                          const char *value, int line, char *why, size_t n)
{
    if (strlen(key) >= sizeof cfg->twin_raw[0].key ||
        strlen(value) >= sizeof cfg->twin_raw[0].value) {
        snprintf(why, n, "key or value too long (at most %zu and %zu characters)",
                 sizeof cfg->twin_raw[0].key - 1, sizeof cfg->twin_raw[0].value - 1);
        return -1;
    }
    const char *dot = strchr(key, '.');
    if (!dot || dot == key || dot[1] == '\0') {
        snprintf(why, n, "expected an override written as section.key = value "
                         "(e.g. dissipation.viscosity_m2_per_s = 500)");
        return -1;
    }
    for (int i = 0; i < cfg->ntwin_raw; i++) {
        tg_raw_entry *e = &cfg->twin_raw[i];
        if (strcmp(e->section, section) == 0 && strcmp(e->key, key) == 0) {
            if (line > 0 && e->line > 0) {
                snprintf(why, n, "set twice, on line %d and again on line %d; keep one", e->line,
                         line);
                return -1;
            }
            snprintf(e->value, sizeof e->value, "%s", value);
            e->line = line;
            return 0;
        }
    }
    if (cfg->ntwin_raw >= TG_MAX_TWIN_RAW) {
        snprintf(why, n, "too many twin overrides (at most %d)", TG_MAX_TWIN_RAW);
        return -1;
    }
    tg_raw_entry *e = &cfg->twin_raw[cfg->ntwin_raw++];
    snprintf(e->section, sizeof e->section, "%s", section);
    snprintf(e->key, sizeof e->key, "%s", key);
    snprintf(e->value, sizeof e->value, "%s", value);
    e->line = line;
    return 0;
}

/* Stores one closure key = value; returns 0 or writes why. */
static int store_raw(tg_config *cfg, const char *section, const char *key, const char *value,
                     int line, char *why, size_t n)
{
    if (strlen(section) >= sizeof cfg->raw[0].section || strlen(key) >= sizeof cfg->raw[0].key ||
        strlen(value) >= sizeof cfg->raw[0].value) {
        snprintf(why, n, "section, key or value too long");
        return -1;
    }
    for (int i = 0; i < cfg->nraw; i++) {
        tg_raw_entry *e = &cfg->raw[i];
        if (strcmp(e->section, section) == 0 && strcmp(e->key, key) == 0) {
            if (line > 0 && e->line > 0) {
                snprintf(why, n, "set twice, on line %d and again on line %d; keep one", e->line,
                         line);
                return -1;
            }
            snprintf(e->value, sizeof e->value, "%s", value); /* --set replaces */
            e->line = line;
            return 0;
        }
    }
    if (cfg->nraw >= TG_MAX_RAW) {
        snprintf(why, n, "too many closure settings (at most %d)", TG_MAX_RAW);
        return -1;
    }
    tg_raw_entry *e = &cfg->raw[cfg->nraw++];
    snprintf(e->section, sizeof e->section, "%s", section);
    snprintf(e->key, sizeof e->key, "%s", key);
    snprintf(e->value, sizeof e->value, "%s", value);
    e->line = line;
    return 0;
}

const tg_raw_entry *tg_config_raw(const tg_config *cfg, const char *section, const char *key)
{
    for (int i = 0; i < cfg->nraw; i++)
        if (strcmp(cfg->raw[i].section, section) == 0 && strcmp(cfg->raw[i].key, key) == 0)
            return &cfg->raw[i];
    return NULL;
}
/* ------------------------------------------------------------------ */
/* Defaults                                                            */
/* ------------------------------------------------------------------ */

void tg_config_defaults(tg_config *cfg)
{
    if (!cfg)
        return;
    memset(cfg, 0, sizeof *cfg);
    for (int i = 0; i < K_COUNT; i++) {
        char why[512];
        if (tg_cfg_apply_value(&tg_cfg_rows[i], cfg, tg_cfg_rows[i].info.def, why, sizeof why) != 0)
            tg_log(TG_LOG_ERROR, "internal error: default of [%s] %s does not parse: %s",
                   tg_cfg_rows[i].info.section, tg_cfg_rows[i].info.key, why);
    }
    tg_cfg_follow_defaults(cfg);
}

void tg_cfg_follow_defaults(tg_config *cfg)
{
    for (int i = 0; i < K_COUNT; i++)
        if (tg_cfg_rows[i].follow && cfg->set_by_user[i] == TG_SET_DEFAULT)
            tg_cfg_rows[i].follow(cfg);
}

/* ------------------------------------------------------------------ */
/* Reading a config file                                               */
/* ------------------------------------------------------------------ */

#define CONFIG_FILE_MAX (1024L * 1024L)

typedef struct {
    const char *path;
    const char *buf;          /* whole file, NUL-terminated */
    size_t len, pos;
    int lineno;               /* line most recently handed to libinih */
    char section[64];         /* last [section] header seen, for messages */
    int failed;               /* an error is recorded in st */
    int err_line;
    int line_of[K_COUNT];     /* line where each key was set in this file */
    tg_config *work;          /* values being read; copied out on success */
    tg_status *st;
} load_ctx;

static void load_fail(load_ctx *c, int line, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
static void load_fail(load_ctx *c, int line, const char *fmt, ...)
{
    if (c->failed)
        return;
    char msg[TG_MSG_LEN];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    tg_fail(c->st, TG_ERR_CONFIG, "%s:%d: %s", c->path, line, msg);
    c->failed = 1;
    c->err_line = line;
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

/* Best guess at "[section] key" for a line the reader rejects. */
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

/* The ini_reader given to libinih: hands out one line of the in-memory file,
 * counting lines and checking what libinih would mishandle. */
static char *reader(char *str, int num, void *stream)
{
    load_ctx *c = stream;
    if (c->failed || c->pos >= c->len || num < 4)
        return NULL;

    const char *start = c->buf + c->pos;
    size_t rest = c->len - c->pos;
    const char *nl = memchr(start, '\n', rest);
    size_t take = nl ? (size_t)(nl - start) + 1 : rest;
    size_t content = nl ? (size_t)(nl - start) : rest;
    if (content > 0 && start[content - 1] == '\r')
        content--;
    c->lineno++;
    c->pos += take;

    const char *text = start;
    size_t bom = 0;
    if (c->lineno == 1 && content >= 3 && memcmp(start, "\xEF\xBB\xBF", 3) == 0)
        bom = 3;
    text += bom;

    if (content > (size_t)num - 3) {
        char key[128], head[96];
        snprintf(head, sizeof head, "%.*s", (int)(content - bom < 90 ? content - bom : 90), text);
        describe_line_key(head, c->section, key, sizeof key);
        load_fail(c, c->lineno,
                  "%sline is %zu characters long; at most %d are allowed "
                  "(move a trailing comment onto its own line, or shorten the value)",
                  key, content - bom, num - 3);
        return NULL;
    }
    memcpy(str, start, take);
    str[take] = '\0';

    /* libinih glues an indented line to the previous value; refuse it. */
    const char *p = str + bom;
    if (*p == ' ' || *p == '\t') {
        while (*p == ' ' || *p == '\t')
            p++;
        if (*p != '\0' && *p != '\r' && *p != '\n' && *p != ';' && *p != '#') {
            load_fail(c, c->lineno,
                      "line is indented; start keys and [section] headers in the first column "
                      "(an indented line would be read as a continuation of the previous value)");
            return NULL;
        }
    }

    /* Check [section] headers here: libinih does not report empty sections. */
    if (*p == '[') {
        const char *close = strchr(p + 1, ']');
        if (close) {
            char name[64];
            size_t l = (size_t)(close - (p + 1));
            if (l >= sizeof name)
                l = sizeof name - 1;
            memcpy(name, p + 1, l);
            name[l] = '\0';
            /* libinih drops anything after the ']'; refuse it instead. */
            const char *after = close + 1 + strspn(close + 1, " \t\r\n");
            if (*after != '\0' && *after != ';' && *after != '#') {
                load_fail(c, c->lineno, "[%s]: unexpected text after the section header: '%.40s' "
                          "(a comment starts with ';' or '#')", name, after);
                return NULL;
            }
            if (!tg_cfg_section_exists(name)) {
                char why[512];
                tg_cfg_explain_unknown_section(name, STYLE_FILE, why, sizeof why);
                load_fail(c, c->lineno, "%s", why);
                return NULL;
            }
            memcpy(c->section, name, l + 1);
        }
    }
    return str;
}

/* The libinih handler: one key = value pair on line c->lineno. */
static int on_pair(void *user, const char *section, const char *name, const char *value)
{
    load_ctx *c = user;
    int line = c->lineno;
    char why[TG_MSG_LEN];

    if (c->failed)
        return 0;
    if (!value)
        value = "";
    if (name[0] == '\0') {
        load_fail(c, line, "no key name before '='");
        return 0;
    }
    if (section[0] == '\0') {
        int s = tg_cfg_suggest_key("", name);
        if (s >= 0)
            load_fail(c, line, "%s: key comes before any [section] header; did you mean [%s] %s?",
                      name, tg_cfg_rows[s].info.section, tg_cfg_rows[s].info.key);
        else
            load_fail(c, line, "%s: key comes before any [section] header", name);
        return 0;
    }
    if (tg_cfg_closure_section(section)) {
        if (store_raw(c->work, section, name, value, line, why, sizeof why) != 0) {
            load_fail(c, line, "[%s] %s: %s", section, name, why);
            return 0;
        }
        return 1;
    }
    if (tg_cfg_twin_override_section(section)) {
        if (store_twin_raw(c->work, section, name, value, line, why, sizeof why) != 0) {
            load_fail(c, line, "[%s] %s: %s", section, name, why);
            return 0;
        }
        return 1;
    }
    int i = tg_config_key_index(section, name);
    if (i < 0) {
        tg_cfg_explain_unknown_key(section, name, STYLE_FILE, why, sizeof why);
        load_fail(c, line, "[%s] %s: %s", section, name, why);
        return 0;
    }
    if (c->line_of[i]) {
        load_fail(c, line, "[%s] %s: set twice, on line %d and again on line %d; keep one",
                  section, name, c->line_of[i], line);
        return 0;
    }
    if (tg_cfg_apply_value(&tg_cfg_rows[i], c->work, value, why, sizeof why) != 0) {
        load_fail(c, line, "[%s] %s: %s", section, name, why);
        return 0;
    }
    c->line_of[i] = line;
    c->work->set_by_user[i] = TG_SET_FILE;
    c->work->set_line[i] = line;
    return 1;
}

/* Whether the comment lines that open text hold the first line of a
 * resolved config (describe prints one comment line before it). */
static int is_resolved(const char *text)
{
    const size_t hl = strlen(TG_CFG_RESOLVED_HEADER);
    for (const char *p = text; *p == ';' || *p == '#' || *p == '\n' || *p == '\r';) {
        if (strncmp(p, TG_CFG_RESOLVED_HEADER, hl) == 0 && strchr("\r\n", p[hl]))
            return 1;
        const char *nl = strchr(p, '\n');
        if (!nl)
            break;
        p = nl + 1;
    }
    return 0;
}

/* Parses the INI text buf (len bytes, NUL-terminated, owned by the
 * caller) over cfg; `path` names it in messages. */
static tg_code load_buffer(tg_config *cfg, const char *path, char *buf, size_t len,
                           tg_status *st)
{
    tg_code rc;
    const char *nul = memchr(buf, '\0', len);
    if (nul) {
        int line = 1;
        for (const char *p = buf; p < nul; p++)
            line += *p == '\n';
        return tg_fail(st, TG_ERR_CONFIG, "%s:%d: contains a NUL byte; is this really a text file?",
                       path, line);
    }

    load_ctx *c = calloc(1, sizeof *c);
    tg_config *work = malloc(sizeof *work);
    if (!c || !work) {
        free(c);
        free(work);
        return tg_fail(st, TG_ERR_NOMEM, "out of memory reading config file '%s'", path);
    }
    *work = *cfg;
    c->path = path;
    c->buf = buf;
    c->len = len;
    c->work = work;
    c->st = st;

    int r = ini_parse_stream(reader, c, on_pair, c);
    if (r == -2) {
        rc = tg_fail(st, TG_ERR_NOMEM, "libinih could not allocate a line buffer for '%s'", path);
    } else if (r > 0 && (!c->failed || r < c->err_line)) {
        /* A line libinih could not read (the handler never saw it). */
        char text[128], q[160];
        nth_line(buf, len, r, text, sizeof text);
        tg_cfg_quote(text, q, sizeof q);
        const char *t = text;
        while (isspace((unsigned char)*t))
            t++;
        if (*t == '[')
            rc = tg_fail(st, TG_ERR_CONFIG, "%s:%d: section header %s has no closing ']'", path, r, q);
        else
            rc = tg_fail(st, TG_ERR_CONFIG,
                         "%s:%d: expected 'key = value', a [section] header or a comment, got %s",
                         path, r, q);
    } else if (c->failed) {
        rc = TG_ERR_CONFIG;
    } else if (r != 0) {
        rc = tg_fail(st, TG_ERR_INTERNAL, "%s: libinih returned %d", path, r);
    } else {
        work->resolved = is_resolved(buf);
        tg_cfg_follow_defaults(work);
        *cfg = *work;
        rc = TG_OK;
    }
    free(work);
    free(c);
    return rc;
}

tg_code tg_config_load_file(tg_config *cfg, const char *path, tg_status *st)
{
    if (!cfg || !path)
        return tg_fail(st, TG_ERR_INTERNAL, "tg_config_load_file: NULL argument");
    char *buf = NULL;
    size_t len = 0;
    tg_code rc = tg_read_text(path, "config file", CONFIG_FILE_MAX, &buf, &len, st);
    if (rc != TG_OK)
        return rc;
    rc = load_buffer(cfg, path, buf, len, st);
    free(buf);
    if (rc == TG_OK)
        tg_dir_of(path, cfg->config_dir, sizeof cfg->config_dir);
    return rc;
}

tg_code tg_config_load_text(tg_config *cfg, const char *text, const char *name, tg_status *st)
{
    if (!cfg || !text || !name)
        return tg_fail(st, TG_ERR_INTERNAL, "tg_config_load_text: NULL argument");
    size_t len = strlen(text);
    char *buf = malloc(len + 1);
    if (!buf)
        return tg_fail(st, TG_ERR_NOMEM, "out of memory reading the config text of %s", name);
    memcpy(buf, text, len + 1);
    tg_code rc = load_buffer(cfg, name, buf, len, st);
    free(buf);
    return rc;
}

/* ------------------------------------------------------------------ */
/* --set section.key=value                                             */
/* ------------------------------------------------------------------ */

/* Trims white space at both ends of [s, e) in place; returns the start. */
static char *trim(char *s, char *e)
{
    while (s < e && isspace((unsigned char)*s))
        s++;
    while (e > s && isspace((unsigned char)e[-1]))
        e--;
    *e = '\0';
    return s;
}

tg_code tg_config_set(tg_config *cfg, const char *assignment, tg_status *st)
{
    if (!cfg || !assignment)
        return tg_fail(st, TG_ERR_INTERNAL, "tg_config_set: NULL argument");

    char buf[TG_PATH_LEN + 128];
    char why[TG_MSG_LEN];
    size_t len = strlen(assignment);
    if (len >= sizeof buf)
        return tg_fail(st, TG_ERR_CONFIG, "--set %.60s...: the assignment is too long (%zu characters)",
                       assignment, len);
    memcpy(buf, assignment, len + 1);

    char *eq = strchr(buf, '=');
    if (!eq)
        return tg_fail(st, TG_ERR_CONFIG,
                       "--set %s: expected section.key=value, found no '=' (e.g. --set time.step_s=900)",
                       assignment);
    char *lhs = trim(buf, eq);
    char *value = trim(eq + 1, eq + 1 + strlen(eq + 1));

    /* Plugin sections are named plugin.NAME: their key follows the last dot. */
    char *dot = strncmp(lhs, "plugin.", 7) == 0 ? strrchr(lhs, '.') : strchr(lhs, '.');
    if (!dot) {
        int s = tg_cfg_suggest_key("", lhs);
        if (s >= 0)
            return tg_fail(st, TG_ERR_CONFIG,
                           "--set %s: expected section.key=value, found no '.' before '='; "
                           "did you mean %s.%s=%s?",
                           assignment, tg_cfg_rows[s].info.section, tg_cfg_rows[s].info.key, value);
        return tg_fail(st, TG_ERR_CONFIG,
                       "--set %s: expected section.key=value, found no '.' before '=' "
                       "(e.g. --set time.step_s=900)", assignment);
    }
    char *section = trim(lhs, dot);
    char *key = trim(dot + 1, dot + 1 + strlen(dot + 1));
    /* twin.reference.SECTION.KEY and twin.coarse.SECTION.KEY: overrides. */
    if (strcmp(section, "twin") == 0 &&
        (strncmp(key, "reference.", 10) == 0 || strncmp(key, "coarse.", 7) == 0)) {
        char tsec[32];
        size_t tl = strcspn(key, ".");
        snprintf(tsec, sizeof tsec, "twin.%.*s", (int)tl, key);
        if (store_twin_raw(cfg, tsec, key + tl + 1, value, 0, why, sizeof why) != 0)
            return tg_fail(st, TG_ERR_CONFIG, "--set %s: %s", assignment, why);
        return TG_OK;
    }
    if (section[0] == '\0' || key[0] == '\0')
        return tg_fail(st, TG_ERR_CONFIG, "--set %s: expected section.key=value, the %s is empty",
                       assignment, section[0] ? "key" : "section");
    if (!tg_cfg_section_exists(section)) {
        int s = tg_cfg_suggest_key(section, key);
        if (s >= 0 && strcmp(tg_cfg_rows[s].info.key, key) == 0)
            return tg_fail(st, TG_ERR_CONFIG, "--set %s: unknown section '%s'; did you mean %s.%s?",
                           assignment, section, tg_cfg_rows[s].info.section, key);
        tg_cfg_explain_unknown_section(section, STYLE_SET, why, sizeof why);
        return tg_fail(st, TG_ERR_CONFIG, "--set %s: %s", assignment, why);
    }
    if (tg_cfg_closure_section(section)) {
        if (store_raw(cfg, section, key, value, 0, why, sizeof why) != 0)
            return tg_fail(st, TG_ERR_CONFIG, "--set %s: %s", assignment, why);
        return TG_OK;
    }
    int i = tg_config_key_index(section, key);
    if (i < 0) {
        tg_cfg_explain_unknown_key(section, key, STYLE_SET, why, sizeof why);
        return tg_fail(st, TG_ERR_CONFIG, "--set %s: %s", assignment, why);
    }
    if (tg_cfg_apply_value(&tg_cfg_rows[i], cfg, value, why, sizeof why) != 0)
        return tg_fail(st, TG_ERR_CONFIG, "--set %s: %s", assignment, why);
    cfg->set_by_user[i] = TG_SET_OPTION;
    cfg->set_line[i] = 0;
    tg_cfg_follow_defaults(cfg);
    return TG_OK;
}

