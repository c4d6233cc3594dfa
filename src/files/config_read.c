/* config_read.c - reading settings into a tg_config: the documented
 * defaults, an INI file or text (libinih), and `--set section.key=value`
 * overrides; closure sections and [twin.*] overrides are kept as written
 * for their checks (config_check.c, config_twin.c). Reading checks each
 * value against its key's row; the rules between keys are config_check.c's.
 *
 * Reading a file: the whole file is read into memory and handed to
 * ini_parse_stream through the line reader of every INI file (ini_lines.c:
 * line numbers, long lines, NUL bytes, indented lines and section headers
 * refused as libinih would mishandle them), which checks each [section]
 * header against the sections that exist. Values go into a working copy
 * that replaces the caller's config only when the whole file is good; a
 * file that starts with the resolved config's first line is marked
 * (tg_config.resolved), and defaults that follow other keys are applied
 * after each file and each --set.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "config_impl.h"
#include "ini_lines.h"
#include "textfile.h"

#include <ini.h>

#include <ctype.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Stores section/key = value in the list e[0 .. *count - 1] (at most max,
 * `what` names them in the message when full): a second setting in the
 * file is refused, one from --set (line 0) replaces. 0, or -1 and why. */
static int store_entry(tg_raw_entry *list, int *count, int max, const char *what,
                       const char *section, const char *key, const char *value, int line,
                       char *why, size_t n)
{
    if (strlen(section) >= sizeof list[0].section || strlen(key) >= sizeof list[0].key ||
        strlen(value) >= sizeof list[0].value) {
        snprintf(why, n, "section, key or value too long (at most %zu, %zu and %zu characters)",
                 sizeof list[0].section - 1, sizeof list[0].key - 1, sizeof list[0].value - 1);
        return -1;
    }
    for (int i = 0; i < *count; i++) {
        tg_raw_entry *e = &list[i];
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
    if (*count >= max) {
        snprintf(why, n, "too many %s (at most %d)", what, max);
        return -1;
    }
    tg_raw_entry *e = &list[(*count)++];
    snprintf(e->section, sizeof e->section, "%s", section);
    snprintf(e->key, sizeof e->key, "%s", key);
    snprintf(e->value, sizeof e->value, "%s", value);
    e->line = line;
    return 0;
}

/* Stores one twin override "section.key = value"; returns 0 or writes why. */
static int store_twin_raw(tg_config *cfg, const char *section, const char *key,
                          const char *value, int line, char *why, size_t n)
{
    const char *dot = strchr(key, '.');
    if (!dot || dot == key || dot[1] == '\0') {
        snprintf(why, n, "expected an override written as section.key = value "
                         "(e.g. dissipation.viscosity_m2_per_s = 500)");
        return -1;
    }
    return store_entry(cfg->twin_raw, &cfg->ntwin_raw, TG_MAX_TWIN_RAW, "twin overrides",
                       section, key, value, line, why, n);
}

/* Stores one closure key = value; returns 0 or writes why. */
static int store_raw(tg_config *cfg, const char *section, const char *key, const char *value,
                     int line, char *why, size_t n)
{
    return store_entry(cfg->raw, &cfg->nraw, TG_MAX_RAW, "closure settings", section, key, value,
                       line, why, n);
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
    tg_ini_lines lines;       /* the reader: path, line numbers, the first failure */
    int line_of[K_COUNT];     /* line where each key was set in this file */
    tg_config *work;          /* values being read; copied out on success */
} load_ctx;

#define load_fail(c, line, ...) tg_ini_lines_fail(&(c)->lines, line, __VA_ARGS__)

/* Each [section] header: a section of the table, [twin.*] or a closure's. */
static int config_header(void *user, const char *name, char *why, size_t n)
{
    (void)user;
    if (tg_cfg_section_exists(name))
        return 0;
    tg_cfg_explain_unknown_section(name, STYLE_FILE, why, n);
    return -1;
}

/* The libinih handler: one key = value pair on line c->lines.lineno. */
static int on_pair(void *user, const char *section, const char *name, const char *value)
{
    load_ctx *c = user;
    int line = c->lines.lineno;
    char why[TG_MSG_LEN];

    if (c->lines.failed)
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
    load_ctx *c = calloc(1, sizeof *c);
    tg_config *work = malloc(sizeof *work);
    if (!c || !work) {
        free(c);
        free(work);
        return tg_fail(st, TG_ERR_NOMEM, "out of memory reading config file '%s'", path);
    }
    *work = *cfg;
    c->work = work;
    tg_code rc = tg_ini_lines_start(&c->lines, path, buf, len, st);
    c->lines.header = config_header;
    if (rc == TG_OK)
        rc = tg_ini_lines_finish(&c->lines, ini_parse_stream(tg_ini_lines_read, &c->lines, on_pair, c),
                                 st);
    if (rc == TG_OK) {
        work->resolved = is_resolved(buf);
        tg_cfg_follow_defaults(work);
        *cfg = *work;
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

