/* sweep.c - the sweep file (libinih), its members, their names and their
 * resolved configs (sweep.h). */
#include "sweep.h"
#include "ini_lines.h"
#include "textfile.h"
#include "twin.h"

#include <ini.h>

#include <ctype.h>
#include <errno.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---------------------------------------------------------------- reading */

/* A sweep file larger than this is refused (one with every list full
 * holds some 140 kB of values). */
#define TG_SWEEP_FILE_MAX (1024L * 1024L)

typedef struct {
    tg_ini_lines lines;  /* the reader every INI file shares (ini_lines.h) */
    tg_sweep *sw;
    int last_axis;       /* axis of the previous key = value line, -1 when none */
    int line_base, line_kind, line_combine;
    char kind[32], combine[32], base[TG_PATH_LEN], directory[TG_PATH_LEN];
    /* Keys that take one value, with the line that set them (a second one
     * is refused, as in a config file). */
    struct {
        char key[48];
        int line;
    } once[24];
    int nonce;
} sweep_ctx;

static int ctx_fail(sweep_ctx *c, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static int ctx_fail(sweep_ctx *c, const char *fmt, ...)
{
    char msg[TG_MSG_LEN - 64];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    tg_ini_lines_fail(&c->lines, c->lines.lineno, "%s", msg);
    return 0;
}

/* 1 the first time [section] key is set; a failure the second time. */
static int set_once(sweep_ctx *c, const char *section, const char *key)
{
    char name[48];
    snprintf(name, sizeof name, "%s.%s", section, key);
    for (int i = 0; i < c->nonce; i++)
        if (!strcmp(c->once[i].key, name))
            return ctx_fail(c, "[%s] %s: set twice, on line %d and again on line %d; keep one",
                            section, key, c->once[i].line, c->lines.lineno);
    if (c->nonce < (int)(sizeof c->once / sizeof c->once[0])) {
        snprintf(c->once[c->nonce].key, sizeof c->once[0].key, "%s", name);
        c->once[c->nonce++].line = c->lines.lineno;
    }
    return 1;
}

/* A section header ends any value list. */
static int sweep_header(void *user, const char *name, char *why, size_t n)
{
    (void)name;
    (void)why;
    (void)n;
    ((sweep_ctx *)user)->last_axis = -1;
    return 0;
}

static int copy_text(sweep_ctx *c, char *dst, size_t n, const char *section, const char *key,
                     const char *value)
{
    if (strlen(value) >= n)
        return ctx_fail(c, "[%s] %s: the value is too long (at most %zu characters)", section, key,
                        n - 1);
    strcpy(dst, value);
    return 1;
}

static char *trim(char *s)
{
    while (isspace((unsigned char)*s))
        s++;
    size_t n = strlen(s);
    while (n > 0 && isspace((unsigned char)s[n - 1]))
        s[--n] = '\0';
    return s;
}

/* Splits a value list at '|' when it has one, else at ','; a separator at
 * the end of the line is allowed (the list goes on on an indented line).
 * `append`: add to the values already there (a continuation line). */
static int split_values(sweep_ctx *c, tg_sweep_axis *ax, const char *section, const char *value,
                        int append)
{
    char buf[TG_SWEEP_MAX_VALUES * TG_SWEEP_VALUE_LEN];
    if (strlen(value) >= sizeof buf)
        return ctx_fail(c, "[%s] %s: the value list is too long", section, ax->key);
    strcpy(buf, value);
    const char sep = strchr(buf, '|') ? '|' : ',';
    if (!append)
        ax->nvalues = 0;
    const int first = ax->nvalues;
    char *p = buf;
    for (;;) {
        char *e = strchr(p, sep);
        if (e)
            *e = '\0';
        char *v = trim(p);
        if (*v == '\0' && !e && ax->nvalues > first)
            break; /* a separator at the end of the line */
        if (*v == '\0')
            return ctx_fail(c, "[%s] %s: expected a list of values separated by '%c', found an "
                               "empty value (value %d)", section, ax->key, sep, ax->nvalues + 1);
        if (ax->nvalues >= TG_SWEEP_MAX_VALUES)
            return ctx_fail(c, "[%s] %s: more than %d values", section, ax->key,
                            TG_SWEEP_MAX_VALUES);
        if (strlen(v) >= TG_SWEEP_VALUE_LEN)
            return ctx_fail(c, "[%s] %s: value '%.40s...' is longer than %d characters", section,
                            ax->key, v, TG_SWEEP_VALUE_LEN - 1);
        strcpy(ax->value[ax->nvalues++], v);
        if (!e)
            break;
        p = e + 1;
    }
    return 1;
}

static int whole_numbers(sweep_ctx *c, const tg_sweep_axis *ax, long long lo, long long hi)
{
    for (int i = 0; i < ax->nvalues; i++) {
        const char *v = ax->value[i];
        char *end;
        errno = 0;
        long long x = strtoll(v, &end, 10);
        if (!isdigit((unsigned char)v[0]) || *end || errno || x < lo || x > hi)
            return ctx_fail(c, "[sweep] %s: expected whole numbers from %lld to %lld, got '%s'",
                            ax->label, lo, hi, v);
    }
    return 1;
}

static tg_sweep_axis *new_axis(sweep_ctx *c, const char *section, const char *key)
{
    tg_sweep *sw = c->sw;
    if (sw->naxes >= TG_SWEEP_MAX_AXES) {
        ctx_fail(c, "[%s] %s: more than %d varied keys", section, key, TG_SWEEP_MAX_AXES);
        return NULL;
    }
    tg_sweep_axis *ax = &sw->axis[sw->naxes++];
    memset(ax, 0, sizeof *ax);
    ax->line = c->lines.lineno;
    return ax;
}

static int cluster_pair(sweep_ctx *c, const char *key, const char *value)
{
    tg_sweep_cluster *cl = &c->sw->cluster;
    /* Text that goes into the batch script: a safe character set. */
    const char *safe = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789_.,:+-=";
    if (!strcmp(key, "extra") || !strcmp(key, "setup")) {
        int *n = key[0] == 'e' ? &cl->nextra : &cl->nsetup;
        char(*lines)[TG_SWEEP_VALUE_LEN] = key[0] == 'e' ? cl->extra : cl->setup;
        if (*n >= TG_SWEEP_MAX_LINES)
            return ctx_fail(c, "[cluster] %s: at most %d lines", key, TG_SWEEP_MAX_LINES);
        if (key[0] == 'e' && strncmp(value, "--", 2) != 0)
            return ctx_fail(c, "[cluster] extra: expected an sbatch option starting with '--' "
                               "(e.g. --qos=short), got '%s'", value);
        return copy_text(c, lines[(*n)++], TG_SWEEP_VALUE_LEN, "cluster", key, value);
    }
    if (!strcmp(key, "cpus_per_task")) {
        char *end;
        long v = strtol(value, &end, 10);
        if (!isdigit((unsigned char)value[0]) || *end || v < 1 || v > 1024)
            return ctx_fail(c, "[cluster] cpus_per_task: expected a whole number from 1 to 1024, "
                               "got '%s'", value);
        cl->cpus_per_task = (int)v;
        return 1;
    }
    struct { const char *key; char *dst; size_t n; const char *form; } text[] = {
        {"job_name", cl->job_name, sizeof cl->job_name, NULL},
        {"partition", cl->partition, sizeof cl->partition, NULL},
        {"account", cl->account, sizeof cl->account, NULL},
        {"time_limit", cl->time_limit, sizeof cl->time_limit, "0123456789:-"},
        {"collect_time_limit", cl->collect_time_limit, sizeof cl->collect_time_limit,
         "0123456789:-"},
        {"memory", cl->memory, sizeof cl->memory, "0123456789KMGTkmgt"},
    };
    for (size_t i = 0; i < sizeof text / sizeof text[0]; i++) {
        if (strcmp(key, text[i].key) != 0)
            continue;
        const char *allowed = text[i].form ? text[i].form : safe;
        if (value[0] == '\0' || strspn(value, allowed) != strlen(value))
            return ctx_fail(c, "[cluster] %s: expected %s, got '%s'", key,
                            !strcmp(key, "memory") ? "a size such as 2G or 500M"
                            : text[i].form ? "a duration [D-]HH:MM:SS or minutes"
                                           : "letters, digits and _ . , : + - =",
                            value);
        return copy_text(c, text[i].dst, text[i].n, "cluster", key, value);
    }
    return ctx_fail(c, "[cluster] unknown key '%s' (keys: job_name, partition, account, "
                       "time_limit, collect_time_limit, cpus_per_task, memory, extra, setup)",
                    key);
}

/* One key of [sweep]: base, kind, combine, directory (once each), seeds or
 * members (a value list). */
static int sweep_pair(sweep_ctx *c, const char *section, const char *key, const char *value)
{
    tg_sweep *sw = c->sw;
    const int scalar = !strcmp(key, "base") || !strcmp(key, "kind") ||
                       !strcmp(key, "combine") || !strcmp(key, "directory");
    if (scalar && !set_once(c, section, key))
        return 0;
    if (!strcmp(key, "base")) {
        c->line_base = c->lines.lineno;
        return copy_text(c, c->base, sizeof c->base, section, key, value);
    }
    if (!strcmp(key, "kind")) {
        c->line_kind = c->lines.lineno;
        return copy_text(c, c->kind, sizeof c->kind, section, key, value);
    }
    if (!strcmp(key, "combine")) {
        c->line_combine = c->lines.lineno;
        return copy_text(c, c->combine, sizeof c->combine, section, key, value);
    }
    if (!strcmp(key, "directory")) {
        return copy_text(c, c->directory, sizeof c->directory, section, key, value);
    }
    if (!strcmp(key, "seeds") || !strcmp(key, "members")) {
        const int seeds = key[0] == 's';
        for (int a = 0; a < sw->naxes; a++)
            if (sw->axis[a].kind == (seeds ? TG_AXIS_SEED : TG_AXIS_MEMBER))
                return ctx_fail(c, "[sweep] %s is given twice", key);
        tg_sweep_axis *ax = new_axis(c, section, key);
        if (!ax)
            return 0;
        ax->kind = seeds ? TG_AXIS_SEED : TG_AXIS_MEMBER;
        strcpy(ax->key, seeds ? "initial.seed" : "member");
        strcpy(ax->label, seeds ? "seed" : "member");
        c->last_axis = sw->naxes - 1;
        if (!split_values(c, ax, section, value, 0))
            return 0;
        return seeds ? whole_numbers(c, ax, 0, 4294967295LL) : whole_numbers(c, ax, 0, 1000000);
    }
    return ctx_fail(c, "[sweep] unknown key '%s' (keys: base, kind, combine, directory, "
                       "seeds, members)", key);
}

/* One key of [vary]: section.key = a value list, a new axis. */
static int vary_pair(sweep_ctx *c, const char *section, const char *key, const char *value)
{
    tg_sweep *sw = c->sw;
    if (!strchr(key, '.'))
        return ctx_fail(c, "[vary] %s: expected section.key (e.g. "
                           "dissipation.viscosity_m2_per_s = 200, 400)", key);
    for (int a = 0; a < sw->naxes; a++)
        if (sw->axis[a].kind == TG_AXIS_KEY && !strcmp(sw->axis[a].key, key))
            return ctx_fail(c, "[vary] %s is given twice (first at line %d)", key,
                            sw->axis[a].line);
    tg_sweep_axis *ax = new_axis(c, section, key);
    if (!ax)
        return 0;
    ax->kind = TG_AXIS_KEY;
    if (!copy_text(c, ax->key, sizeof ax->key, section, key, key))
        return 0;
    strcpy(ax->label, strrchr(key, '.') + 1);
    c->last_axis = sw->naxes - 1;
    return split_values(c, ax, section, value, 0);
}

/* One key of [common]: section.key = value, set in every member. */
static int common_pair(sweep_ctx *c, const char *key, const char *value)
{
    tg_sweep *sw = c->sw;
    if (!strchr(key, '.'))
        return ctx_fail(c, "[common] %s: expected section.key (e.g. "
                           "time.duration_days = 30)", key);
    const size_t kl = strlen(key);
    for (int i = 0; i < sw->ncommon; i++)
        if (!strncmp(sw->common[i].set, key, kl) && sw->common[i].set[kl] == '=')
            return ctx_fail(c, "[common] %s is given twice (first at line %d)", key,
                            sw->common[i].line);
    if (sw->ncommon >= TG_SWEEP_MAX_COMMON)
        return ctx_fail(c, "[common]: more than %d keys", TG_SWEEP_MAX_COMMON);
    tg_sweep_common *cm = &sw->common[sw->ncommon];
    if (snprintf(cm->set, sizeof cm->set, "%s=%s", key, value) >= (int)sizeof cm->set)
        return ctx_fail(c, "[common] %s: the value is too long", key);
    cm->line = c->lines.lineno;
    sw->ncommon++;
    return 1;
}

static int on_pair(void *user, const char *section, const char *key, const char *value)
{
    sweep_ctx *c = user;
    tg_sweep *sw = c->sw;
    if (c->lines.failed)
        return 0;
    if (!key) /* a section header alone */
        return 1;
    if (c->lines.continued) {
        if (c->last_axis < 0)
            return ctx_fail(c, "indented line continues [%s] %s, which takes one value; only "
                               "value lists ([vary] keys, seeds, members) go on over indented "
                               "lines", section, key);
        tg_sweep_axis *ax = &sw->axis[c->last_axis];
        return split_values(c, ax, section, value, 1) &&
               (ax->kind != TG_AXIS_SEED || whole_numbers(c, ax, 0, 4294967295LL)) &&
               (ax->kind != TG_AXIS_MEMBER || whole_numbers(c, ax, 0, 1000000));
    }
    c->last_axis = -1;
    if (!strcmp(section, "sweep"))
        return sweep_pair(c, section, key, value);
    if (!strcmp(section, "vary"))
        return vary_pair(c, section, key, value);
    if (!strcmp(section, "common"))
        return common_pair(c, key, value);
    if (!strcmp(section, "cluster")) {
        /* extra and setup are lists, one line each; the others one value. */
        if (strcmp(key, "extra") != 0 && strcmp(key, "setup") != 0 && !set_once(c, section, key))
            return 0;
        return cluster_pair(c, key, value);
    }
    return ctx_fail(c, "unknown section [%s] (sections: sweep, common, vary, cluster)", section);
}

/* dst = rel resolved against the folder of `file` (rel itself when absolute). */
static int resolve(const char *file, const char *rel, char *dst, size_t n)
{
    if (rel[0] == '/')
        return snprintf(dst, n, "%s", rel) < (int)n;
    const char *slash = strrchr(file, '/');
    if (!slash)
        return snprintf(dst, n, "%s", rel) < (int)n;
    return snprintf(dst, n, "%.*s/%s", (int)(slash - file), file, rel) < (int)n;
}

/* ---------------------------------------------------------------- members */

int tg_sweep_choice(const tg_sweep *sw, int k, int a)
{
    if (sw->combine == TG_SWEEP_ZIP && sw->axis[a].kind == TG_AXIS_KEY)
        return (k / (sw->nmembers / sw->axis[0].nvalues)) % sw->axis[0].nvalues;
    /* Mixed radix, last axis fastest; zipped keys count as one axis. */
    int stride = 1;
    for (int b = sw->naxes - 1; b > a; b--)
        stride *= sw->axis[b].nvalues;
    return (k / stride) % sw->axis[a].nvalues;
}

static void sanitize(const char *in, char *out, size_t n)
{
    size_t j = 0;
    int run = 0;
    for (; *in && j + 1 < n; in++) {
        unsigned char ch = (unsigned char)*in;
        if (isalnum(ch) || ch == '.' || ch == '+' || ch == '-') {
            out[j++] = (char)ch;
            run = 0;
        } else if (!run) {
            out[j++] = '_';
            run = 1;
        }
    }
    out[j] = '\0';
}

static tg_code name_members(tg_sweep *sw, tg_status *st)
{
    sw->name = calloc((size_t)sw->nmembers, sizeof *sw->name);
    if (!sw->name)
        return tg_fail(st, TG_ERR_NOMEM, "out of memory naming %d sweep members", sw->nmembers);
    int full[TG_SWEEP_MAX_AXES] = {0};
    for (int a = 0; a < sw->naxes; a++)
        for (int b = 0; b < sw->naxes; b++)
            if (a != b && !strcmp(sw->axis[a].label, sw->axis[b].label))
                full[a] = 1;
    const size_t cut = TG_SWEEP_NAME_LEN - 12;
    for (int k = 0; k < sw->nmembers; k++) {
        char buf[TG_SWEEP_MAX_AXES * 2 * TG_SWEEP_VALUE_LEN], part[2 * TG_SWEEP_VALUE_LEN + 2],
            v[TG_SWEEP_VALUE_LEN], lab[TG_SWEEP_VALUE_LEN];
        buf[0] = '\0';
        for (int a = 0; a < sw->naxes; a++) {
            sanitize(full[a] ? sw->axis[a].key : sw->axis[a].label, lab, sizeof lab);
            sanitize(sw->axis[a].value[tg_sweep_choice(sw, k, a)], v, sizeof v);
            snprintf(part, sizeof part, "%s%s-%s", a ? "_" : "", lab, v);
            strcat(buf, part);
        }
        int clash = strlen(buf) > cut;
        if (clash)
            buf[cut] = '\0';
        for (int j = 0; j < k && !clash; j++)
            clash = !strcmp(sw->name[j], buf);
        if (clash)
            snprintf(sw->name[k], TG_SWEEP_NAME_LEN, "%s_%d", buf, k);
        else
            snprintf(sw->name[k], TG_SWEEP_NAME_LEN, "%s", buf);
    }
    return TG_OK;
}

int tg_sweep_member_sets(const tg_sweep *sw, int k, char sets[][2 * TG_SWEEP_VALUE_LEN + 2])
{
    int n = 0;
    for (int a = 0; a < sw->naxes; a++) {
        if (sw->axis[a].kind == TG_AXIS_MEMBER)
            continue;
        snprintf(sets[n++], 2 * TG_SWEEP_VALUE_LEN + 2, "%s=%s", sw->axis[a].key,
                 sw->axis[a].value[tg_sweep_choice(sw, k, a)]);
    }
    return n;
}

void tg_sweep_member_dir(const tg_sweep *sw, int k, char *buf, size_t n)
{
    snprintf(buf, n, "%s/%s", sw->directory, sw->name[k]);
}

/* The [common] overrides on cfg; the messages name the sweep file's line. */
static tg_code apply_common(const tg_sweep *sw, tg_config *cfg, tg_status *st)
{
    tg_code rc = TG_OK;
    for (int i = 0; i < sw->ncommon && rc == TG_OK; i++) {
        tg_status one;
        tg_status_clear(&one);
        if ((rc = tg_config_set(cfg, sw->common[i].set, &one)) != TG_OK)
            tg_fail(st, rc, "%s:%d: [common] %s", sw->path, sw->common[i].line, one.msg);
    }
    return rc;
}

/* defaults -> base -> [common] -> overrides, without the checks. */
static tg_code member_raw(const tg_sweep *sw, int k, tg_config *cfg, tg_status *st)
{
    char sets[TG_SWEEP_MAX_AXES][2 * TG_SWEEP_VALUE_LEN + 2];
    tg_config_defaults(cfg);
    tg_code rc = tg_config_load_file(cfg, sw->base, st);
    if (rc == TG_OK)
        rc = apply_common(sw, cfg, st);
    if (rc != TG_OK)
        return rc;
    int n = tg_sweep_member_sets(sw, k, sets);
    for (int i = 0; i < n; i++)
        if ((rc = tg_config_set(cfg, sets[i], st)) != TG_OK)
            return rc;
    for (int a = 0; a < sw->naxes; a++)
        if (sw->axis[a].kind == TG_AXIS_MEMBER)
            cfg->member = atoi(sw->axis[a].value[tg_sweep_choice(sw, k, a)]);
    return TG_OK;
}

tg_code tg_sweep_member_config(const tg_sweep *sw, int k, tg_config *cfg, tg_status *st)
{
    if (k < 0 || k >= sw->nmembers)
        return tg_fail(st, TG_ERR_USAGE, "member %d does not exist: the sweep %s has members 0 to %d",
                       k, sw->path, sw->nmembers - 1);
    tg_code rc = member_raw(sw, k, cfg, st);
    if (rc != TG_OK)
        return rc;
    char dir[TG_PATH_LEN + TG_SWEEP_NAME_LEN + 2];
    tg_sweep_member_dir(sw, k, dir, sizeof dir);
    if (strlen(dir) >= sizeof cfg->out_directory)
        return tg_fail(st, TG_ERR_CONFIG, "%s: the member folder %s is too long", sw->path, dir);
    strcpy(cfg->out_directory, dir);
    if (sw->kind == TG_SWEEP_TWIN)
        return tg_config_validate(cfg, TG_USE_TWIN | TG_USE_QUIET, sw->base, st);
    return tg_config_validate(cfg, TG_USE_RUN | TG_USE_QUIET, sw->base, st);
}

/* ---------------------------------------------------------------- loading */

/* The [twin] section of a resolved config (its lines up to the next
 * section), malloc'ed; NULL when out of memory. */
static char *twin_section_text(const tg_config *cfg)
{
    char *ini = tg_config_to_ini(cfg);
    if (!ini)
        return NULL;
    char *b = strstr(ini, "\n[twin]\n");
    if (!b) {
        ini[0] = '\0';
        return ini;
    }
    b += 1;
    char *e = strstr(b + 1, "\n[");
    size_t n = e ? (size_t)(e - b) : strlen(b);
    memmove(ini, b, n);
    ini[n] = '\0';
    return ini;
}

/* kind = auto: a twin when the base config has [twin.reference] or
 * [twin.coarse] entries, or a [twin] key whose value differs from its
 * default. A key merely present with its default value does not count:
 * every resolved config (a member's config.ini, the resolved_config of
 * fields.nc) lists the whole [twin] section. 1: twin, 0: run, -1: no
 * memory. */
static int base_is_twin(const tg_config *cfg)
{
    if (cfg->ntwin_raw > 0)
        return 1;
    tg_config *def = malloc(sizeof *def);
    if (!def)
        return -1;
    tg_config_defaults(def);
    char *a = twin_section_text(cfg), *b = twin_section_text(def);
    int r = (!a || !b) ? -1 : strcmp(a, b) != 0;
    free(a);
    free(b);
    free(def);
    return r;
}

/* Every [vary] key must take at least one of its values; base is the base
 * config as loaded (defaults -> base file). */
static tg_code check_keys(const tg_sweep *sw, const tg_config *base, tg_status *st)
{
    tg_config *scratch = malloc(sizeof *scratch);
    if (!scratch)
        return tg_fail(st, TG_ERR_NOMEM, "out of memory checking the sweep %s", sw->path);
    tg_code rc = TG_OK;
    for (int a = 0; a < sw->naxes && rc == TG_OK; a++) {
        if (sw->axis[a].kind == TG_AXIS_MEMBER)
            continue;
        tg_status first;
        tg_status_clear(&first);
        int accepted = 0;
        for (int v = 0; v < sw->axis[a].nvalues && !accepted; v++) {
            char set[2 * TG_SWEEP_VALUE_LEN + 2];
            snprintf(set, sizeof set, "%s=%s", sw->axis[a].key, sw->axis[a].value[v]);
            *scratch = *base;
            tg_status one;
            tg_status_clear(&one);
            if (tg_config_set(scratch, set, &one) == TG_OK)
                accepted = 1;
            else if (v == 0)
                first = one;
        }
        if (!accepted)
            rc = tg_fail(st, TG_ERR_CONFIG, "%s:%d: [%s] %s: no value is accepted; the first: %s",
                         sw->path, sw->axis[a].line,
                         sw->axis[a].kind == TG_AXIS_SEED ? "sweep" : "vary",
                         sw->axis[a].kind == TG_AXIS_SEED ? "seeds" : sw->axis[a].key, first.msg);
    }
    free(scratch);
    return rc;
}

/* The [sweep] keys of the file: base (relative to the sweep file), combine
 * and the output folder (--out, [sweep] directory or NAME-output). */
static tg_code sweep_settings(sweep_ctx *c, const char *path, const char *out_dir,
                              tg_status *st)
{
    tg_sweep *sw = c->sw;
    tg_code rc = TG_OK;
    if (c->base[0] == '\0')
        rc = tg_fail(st, TG_ERR_CONFIG, "%s: [sweep] base is required (the config every member "
                                        "starts from, relative to the sweep file)", path);
    if (rc == TG_OK && !resolve(path, c->base, sw->base, sizeof sw->base))
        rc = tg_fail(st, TG_ERR_CONFIG, "%s:%d: [sweep] base: the path is too long", path,
                     c->line_base);
    if (rc == TG_OK) {
        if (c->combine[0] == '\0' || !strcmp(c->combine, "product"))
            sw->combine = TG_SWEEP_PRODUCT;
        else if (!strcmp(c->combine, "zip"))
            sw->combine = TG_SWEEP_ZIP;
        else
            rc = tg_fail(st, TG_ERR_CONFIG, "%s:%d: [sweep] combine: expected product or zip, "
                                            "got '%s'", path, c->line_combine, c->combine);
    }
    if (rc == TG_OK) {
        if (out_dir) {
            if (strlen(out_dir) >= sizeof sw->directory)
                rc = tg_fail(st, TG_ERR_USAGE, "--out: the path is too long");
            else if (out_dir[0] == '\0')
                rc = tg_fail(st, TG_ERR_USAGE, "--out: the folder name is empty");
            snprintf(sw->directory, sizeof sw->directory, "%s", out_dir);
        } else if (c->directory[0]) {
            /* Like [output] directory of a config: relative to the current folder. */
            snprintf(sw->directory, sizeof sw->directory, "%s", c->directory);
        } else {
            /* Default: NAME-output in the current folder for the sweep file NAME.ini. */
            const char *b = strrchr(path, '/');
            b = b ? b + 1 : path;
            size_t bl = strlen(b);
            if (bl > 4 && !strcmp(b + bl - 4, ".ini"))
                bl -= 4;
            snprintf(sw->directory, sizeof sw->directory, "%.*s-output", (int)bl, b);
        }
        size_t dl = strlen(sw->directory);
        while (dl > 1 && sw->directory[dl - 1] == '/')
            sw->directory[--dl] = '\0';
    }
    return rc;
}

/* Orders the axes ([vary] keys first, then seeds, then members), rejects a
 * seed varied twice, a value listed twice and an empty sweep, and counts the
 * members. */
static tg_code sweep_axes(sweep_ctx *c, const char *path, tg_status *st)
{
    tg_sweep *sw = c->sw;
    tg_code rc = TG_OK;
    tg_sweep_axis *tmp = malloc(sizeof sw->axis);
    if (!tmp)
        return tg_fail(st, TG_ERR_NOMEM, "out of memory reading sweep file '%s'", path);
    int n = 0;
    for (int pass = 0; pass < 3; pass++)
        for (int a = 0; a < sw->naxes; a++)
            if ((int)sw->axis[a].kind == pass)
                tmp[n++] = sw->axis[a];
    memcpy(sw->axis, tmp, sizeof sw->axis);
    free(tmp);
    sw->nkeys = 0;
    for (int a = 0; a < sw->naxes; a++)
        sw->nkeys += sw->axis[a].kind == TG_AXIS_KEY;
    for (int a = 0; a < sw->nkeys; a++)
        if (!strcmp(sw->axis[a].key, "initial.seed"))
            for (int b = sw->nkeys; b < sw->naxes; b++)
                if (sw->axis[b].kind == TG_AXIS_SEED)
                    rc = tg_fail(st, TG_ERR_CONFIG, "%s:%d: [sweep] seeds and [vary] "
                                 "initial.seed (line %d) both vary the seed; keep one",
                                 path, sw->axis[b].line, sw->axis[a].line);
    /* A value twice on a crossed axis would make two identical members. */
    for (int a = 0; a < sw->naxes && rc == TG_OK; a++) {
        if (sw->combine == TG_SWEEP_ZIP && sw->axis[a].kind == TG_AXIS_KEY)
            continue;
        for (int i = 0; i < sw->axis[a].nvalues && rc == TG_OK; i++)
            for (int j = 0; j < i && rc == TG_OK; j++)
                if (!strcmp(sw->axis[a].value[i], sw->axis[a].value[j]))
                    rc = tg_fail(st, TG_ERR_CONFIG, "%s:%d: [%s] %s: value '%s' is listed twice",
                                 path, sw->axis[a].line,
                                 sw->axis[a].kind == TG_AXIS_KEY ? "vary" : "sweep",
                                 sw->axis[a].kind == TG_AXIS_KEY ? sw->axis[a].key
                                 : sw->axis[a].kind == TG_AXIS_SEED ? "seeds" : "members",
                                 sw->axis[a].value[i]);
    }
    if (rc == TG_OK && sw->naxes == 0)
        rc = tg_fail(st, TG_ERR_CONFIG, "%s: nothing to vary: give [vary] section.key = v1, v2, "
                                        "... and/or [sweep] seeds or members", path);
    if (rc == TG_OK) {
        long long n = 1;
        if (sw->combine == TG_SWEEP_ZIP && sw->nkeys > 0) {
            for (int a = 1; a < sw->nkeys && rc == TG_OK; a++)
                if (sw->axis[a].nvalues != sw->axis[0].nvalues)
                    rc = tg_fail(st, TG_ERR_CONFIG, "%s:%d: [vary] %s: combine = zip needs lists "
                                 "of the same length; %s (line %d) has %d values, this one %d",
                                 path, sw->axis[a].line, sw->axis[a].key, sw->axis[0].key,
                                 sw->axis[0].line, sw->axis[0].nvalues, sw->axis[a].nvalues);
            n = sw->axis[0].nvalues;
            for (int a = sw->nkeys; a < sw->naxes; a++)
                n *= sw->axis[a].nvalues;
        } else {
            for (int a = 0; a < sw->naxes; a++)
                n *= sw->axis[a].nvalues;
        }
        if (rc == TG_OK && n > TG_SWEEP_MAX_MEMBERS)
            rc = tg_fail(st, TG_ERR_CONFIG, "%s: the sweep has %lld members; at most %d are "
                                            "allowed", path, n, TG_SWEEP_MAX_MEMBERS);
        sw->nmembers = (int)n;
    }
    /* With only seeds/members there is nothing to zip. */
    if (rc == TG_OK && sw->combine == TG_SWEEP_ZIP && sw->nkeys == 0)
        sw->combine = TG_SWEEP_PRODUCT;
    return rc;
}

/* Loads the base config once into base: it decides the kind of the members
 * and takes [common]; a key both [common] and varied, and [sweep] members
 * in a twin sweep, are errors. */
static tg_code sweep_base(sweep_ctx *c, const char *path, tg_config *base, tg_status *st)
{
    tg_sweep *sw = c->sw;
    tg_code rc = TG_OK;
    tg_config_defaults(base);
    tg_status bst;
    tg_status_clear(&bst);
    if (tg_config_load_file(base, sw->base, &bst) != TG_OK)
        rc = tg_fail(st, bst.code, "%s:%d: [sweep] base: %s", path, c->line_base, bst.msg);
    else
        rc = apply_common(sw, base, st);
    /* A key both [common] and varied would be set twice. */
    for (int i = 0; i < sw->ncommon && rc == TG_OK; i++)
        for (int a = 0; a < sw->naxes && rc == TG_OK; a++) {
            const size_t kl = strlen(sw->axis[a].key);
            if (sw->axis[a].kind != TG_AXIS_MEMBER &&
                !strncmp(sw->common[i].set, sw->axis[a].key, kl) && sw->common[i].set[kl] == '=')
                rc = tg_fail(st, TG_ERR_CONFIG, "%s:%d: [common] %s is varied too (line %d); "
                             "keep one", path, sw->common[i].line, sw->axis[a].key,
                             sw->axis[a].line);
        }
    if (rc == TG_OK) {
        if (c->kind[0] == '\0' || !strcmp(c->kind, "auto")) {
            int twin = base_is_twin(base);
            if (twin < 0)
                rc = tg_fail(st, TG_ERR_NOMEM, "out of memory reading the base config %s",
                             sw->base);
            sw->kind = twin > 0 ? TG_SWEEP_TWIN : TG_SWEEP_RUN;
            if (twin > 0)
                tg_log(TG_LOG_INFO, "%s: the members are twins: the base config sets [twin] "
                       "keys (kind = run in [sweep] runs them as plain runs)", path);
        }
        else if (!strcmp(c->kind, "run"))
            sw->kind = TG_SWEEP_RUN;
        else if (!strcmp(c->kind, "twin"))
            sw->kind = TG_SWEEP_TWIN;
        else
            rc = tg_fail(st, TG_ERR_CONFIG, "%s:%d: [sweep] kind: expected run, twin or auto, "
                                            "got '%s'", path, c->line_kind, c->kind);
    }
    for (int a = 0; a < sw->naxes && rc == TG_OK; a++)
        if (sw->kind == TG_SWEEP_TWIN && sw->axis[a].kind == TG_AXIS_MEMBER)
            rc = tg_fail(st, TG_ERR_CONFIG, "%s:%d: [sweep] members: picks the noise of "
                         "stochastic closures in runs; a twin sets its ensemble with [twin] "
                         "members (vary twin.members instead)", path, sw->axis[a].line);
    return rc;
}

tg_code tg_sweep_load(const char *path, const char *out_dir, tg_sweep **out, tg_status *st)
{
    *out = NULL;
    char *buf = NULL;
    size_t len = 0;
    tg_code rc = tg_read_text(path, "sweep file", TG_SWEEP_FILE_MAX, &buf, &len, st);
    if (rc != TG_OK)
        return rc;
    tg_sweep *sw = calloc(1, sizeof *sw);
    sweep_ctx *c = calloc(1, sizeof *c);
    if (!sw || !c) {
        free(sw);
        free(c);
        free(buf);
        return tg_fail(st, TG_ERR_NOMEM, "out of memory reading sweep file '%s'", path);
    }
    snprintf(sw->path, sizeof sw->path, "%s", path);
    sw->cluster.cpus_per_task = 1;
    strcpy(sw->cluster.time_limit, "01:00:00");
    strcpy(sw->cluster.collect_time_limit, "00:10:00");
    strcpy(sw->cluster.job_name, "twingyre-sweep");
    c->sw = sw;
    c->last_axis = -1;
    rc = tg_ini_lines_start(&c->lines, path, buf, len, st);
    c->lines.allow_continuation = 1;
    c->lines.header = sweep_header;
    c->lines.header_user = c;
    if (rc == TG_OK)
        rc = tg_ini_lines_finish(&c->lines, ini_parse_stream(tg_ini_lines_read, &c->lines, on_pair, c),
                                 st);
    free(buf);

    if (rc == TG_OK)
        rc = sweep_settings(c, path, out_dir, st);
    if (rc == TG_OK)
        rc = sweep_axes(c, path, st);
    tg_config *base = rc == TG_OK ? malloc(sizeof *base) : NULL;
    if (rc == TG_OK && !base)
        rc = tg_fail(st, TG_ERR_NOMEM, "out of memory reading the base config %s", sw->base);
    if (rc == TG_OK)
        rc = sweep_base(c, path, base, st);
    if (rc == TG_OK)
        rc = check_keys(sw, base, st);
    if (rc == TG_OK)
        rc = name_members(sw, st);
    free(base);
    free(c);
    if (rc != TG_OK) {
        tg_sweep_free(sw);
        return rc;
    }
    *out = sw;
    return TG_OK;
}

void tg_sweep_free(tg_sweep *sw)
{
    if (!sw)
        return;
    free(sw->name);
    free(sw);
}
