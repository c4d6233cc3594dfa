/* config_value.c - one value of one key: reading it from text (decimal
 * numbers only: no hex, NaN or infinity; the "C" numeric locale), checking
 * it against its row's range, and writing it back as a config file holds it.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "config_impl.h"

#include <ctype.h>
#include <errno.h>
#include <inttypes.h>
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>


enum { NUM_OK = 0, NUM_SYNTAX, NUM_RANGE };

/* Decimal real: [sign] digits [. digits] [e [sign] digits], at least one digit. */
static int is_real_syntax(const char *s)
{
    const char *p = s;
    int digits = 0;
    if (*p == '+' || *p == '-')
        p++;
    while (isdigit((unsigned char)*p)) {
        p++;
        digits++;
    }
    if (*p == '.') {
        p++;
        while (isdigit((unsigned char)*p)) {
            p++;
            digits++;
        }
    }
    if (!digits)
        return 0;
    if (*p == 'e' || *p == 'E') {
        p++;
        if (*p == '+' || *p == '-')
            p++;
        if (!isdigit((unsigned char)*p))
            return 0;
        while (isdigit((unsigned char)*p))
            p++;
    }
    return *p == '\0';
}

static int parse_real(const char *s, double *out)
{
    if (!is_real_syntax(s))
        return NUM_SYNTAX;
    errno = 0;
    char *end = NULL;
    double v = strtod(s, &end);
    if (!end || *end != '\0')
        return NUM_SYNTAX;
    if (errno == ERANGE || !isfinite(v))
        return NUM_RANGE;
    *out = v;
    return NUM_OK;
}

/* Whether s is a sign (when `minus` allows '-', else only '+') and one or
 * more decimal digits, nothing else. */
static int is_whole_syntax(const char *s, int minus)
{
    if (*s == '+' || (minus && *s == '-'))
        s++;
    if (!*s)
        return 0;
    for (; *s; s++)
        if (!isdigit((unsigned char)*s))
            return 0;
    return 1;
}

static int parse_int(const char *s, long long *out)
{
    if (!is_whole_syntax(s, 1))
        return NUM_SYNTAX;
    errno = 0;
    char *end = NULL;
    long long v = strtoll(s, &end, 10);
    if (!end || *end != '\0')
        return NUM_SYNTAX;
    if (errno == ERANGE)
        return NUM_RANGE;
    *out = v;
    return NUM_OK;
}

static int parse_u64(const char *s, uint64_t *out)
{
    if (!is_whole_syntax(s, 0))
        return NUM_SYNTAX;
    const char *p = s + (*s == '+');
    errno = 0;
    char *end = NULL;
    unsigned long long v = strtoull(p, &end, 10);
    if (!end || *end != '\0')
        return NUM_SYNTAX;
    if (errno == ERANGE)
        return NUM_RANGE;
#if ULLONG_MAX > UINT64_MAX
    if (v > UINT64_MAX)
        return NUM_RANGE;
#endif
    *out = (uint64_t)v;
    return NUM_OK;
}

static int in_bounds(const key_row *r, double v)
{
    if (r->lo_kind == B_INCL && !(v >= r->lo))
        return 0;
    if (r->lo_kind == B_EXCL && !(v > r->lo))
        return 0;
    if (r->hi_kind == B_INCL && !(v <= r->hi))
        return 0;
    if (r->hi_kind == B_EXCL && !(v < r->hi))
        return 0;
    if (r->nonzero && v == 0.0)
        return 0;

    return 1;
}

/* 'value' quoted for a message, shortened when long. */
void tg_cfg_quote(const char *value, char *out, size_t n)
{
    const int keep = 80;
    if (strlen(value) > (size_t)keep)
        snprintf(out, n, "'%.*s...'", keep, value);
    else
        snprintf(out, n, "'%s'", value);
}

/* A path or name given as text: it has to survive being written back into a
 * config file (tg_config_to_ini) and read again. Returns NULL when fine, else
 * the reason. */
static const char *text_problem(const char *v)
{
    size_t len = strlen(v);
    if (len == 0)
        return "it is empty";
    if (len >= TG_PATH_LEN)
        return "it is too long";
    if (isspace((unsigned char)v[0]) || isspace((unsigned char)v[len - 1]))
        return "it starts or ends with white space";
    for (size_t i = 0; i < len; i++) {
        if (iscntrl((unsigned char)v[i]))
            return "it contains a control character";
        if (i > 0 && v[i] == ';' && isspace((unsigned char)v[i - 1]))
            return "a ';' after white space would start a comment in a config file";
    }
    return NULL;
}

/* A real value of row r: a double within the row's bounds and its range of
 * sane values. */
static int apply_real(const key_row *r, tg_config *cfg, const char *value, const char *q,
                      char *why, size_t n)
{
    char *base = (char *)cfg;
    double v = 0.0;
    int rc = parse_real(value, &v);
    if (rc == NUM_RANGE) {
        snprintf(why, n, "expected %s, got %s, which is outside the range of a double", r->expect, q);
        return -1;
    }
    if (rc != NUM_OK || !in_bounds(r, v)) {
        snprintf(why, n, "expected %s, got %s", r->expect, q);
        return -1;
    }
    const double a = r->nonzero ? fabs(v) : v;
    if (r->sane && !(a >= r->sane_lo && a <= r->sane_hi)) {
        snprintf(why, n, "expected %s %s, got %s", r->expect, r->sane, q);
        return -1;
    }
    memcpy(base + r->off, &v, sizeof v);
    return 0;
}

/* A comma-separated list of reals of row r: from min_count to max_count
 * values, each within the row's bounds; stores the values and their count. */
static int apply_real_list(const key_row *r, tg_config *cfg, const char *value, const char *q,
                           char *why, size_t n)
{
    char *base = (char *)cfg;
    double vals[TG_MAX_LAYERS] = {0};
    int total = 0;
    if (value[0] != '\0') {
        total = 1;
        for (const char *p = value; *p; p++)
            total += *p == ',';
    }
    if (total > r->max_count) {
        snprintf(why, n, "expected %s, got %s (%d values, at most %d are allowed)",
                 r->expect, q, total, r->max_count);
        return -1;
    }
    if (total < r->min_count) {
        snprintf(why, n, "expected %s, got %s (no values)", r->expect, q);
        return -1;
    }
    const char *p = value;
    for (int k = 0; k < total; k++) {
        char item[64];
        size_t len = strcspn(p, ",");
        const char *s = p, *e = p + len;
        while (s < e && isspace((unsigned char)*s))
            s++;
        while (e > s && isspace((unsigned char)e[-1]))
            e--;
        size_t ilen = (size_t)(e - s);
        int rc = NUM_SYNTAX;
        if (ilen < sizeof item) {
            memcpy(item, s, ilen);
            item[ilen] = '\0';
            rc = ilen ? parse_real(item, &vals[k]) : NUM_SYNTAX;
        } else {
            snprintf(item, sizeof item, "%.*s...", 40, s);
        }
        if (ilen == 0) {
            snprintf(why, n, "expected %s, got %s (value %d is empty)", r->expect, q, k + 1);
            return -1;
        }
        if (rc != NUM_OK) {
            snprintf(why, n, "expected %s, got %s (value %d, '%s', is not a real number%s)",
                     r->expect, q, k + 1, item,
                     rc == NUM_RANGE ? " that fits in a double" : "");
            return -1;
        }
        if (!in_bounds(r, vals[k])) {
            snprintf(why, n, "expected %s, got %s (value %d, '%s', is not %s)",
                     r->expect, q, k + 1, item, r->item_rule);
            return -1;
        }
        p += len + (p[len] == ',');
    }
    memcpy(base + r->off, vals, (size_t)r->max_count * sizeof vals[0]);
    memcpy(base + r->count_off, &total, sizeof total);
    return 0;
}

/* Parses `value` for row r and stores it into cfg. On failure cfg is left
 * untouched and `why` (size n) says what was expected and what was found. */
int tg_cfg_apply_value(const key_row *r, tg_config *cfg, const char *value, char *why, size_t n)
{
    char q[128];
    char *base = (char *)cfg;
    tg_cfg_quote(value, q, sizeof q);

    switch (r->kind) {
    case V_REAL:
        return apply_real(r, cfg, value, q, why, n);
    case V_INT: {
        long long v = 0;
        int rc = parse_int(value, &v);
        if (rc != NUM_OK || !in_bounds(r, (double)v) || v < INT_MIN || v > INT_MAX) {
            snprintf(why, n, "expected %s, got %s", r->expect, q);
            return -1;
        }
        int iv = (int)v;
        memcpy(base + r->off, &iv, sizeof iv);
        return 0;
    }
    case V_U64: {
        uint64_t v = 0;
        if (parse_u64(value, &v) != NUM_OK) {
            snprintf(why, n, "expected %s, got %s", r->expect, q);
            return -1;
        }
        memcpy(base + r->off, &v, sizeof v);
        return 0;
    }
    case V_REAL_LIST:
        return apply_real_list(r, cfg, value, q, why, n);
    case V_CHOICE:
        for (int k = 0; r->choices[k]; k++) {
            if (strcmp(value, r->choices[k]) == 0) {
                r->put(cfg, k);
                return 0;
            }
        }
        {
            const char *s = tg_cfg_suggest_choice(r->choices, value);
            if (s)
                snprintf(why, n, "expected %s, got %s; did you mean %s?", r->expect, q, s);
            else
                snprintf(why, n, "expected %s, got %s", r->expect, q);
        }
        return -1;
    case V_TEXT: {
        const char *bad = text_problem(value);
        if (bad) {
            snprintf(why, n, "expected %s, got %s (%s)", r->expect, q, bad);
            return -1;
        }
        memcpy(base + r->off, value, strlen(value) + 1);
        return 0;
    }
    case V_INITIAL: {
        if (strcmp(value, "rest") == 0 || strcmp(value, "noise") == 0) {
            cfg->initial_kind = value[0] == 'r' ? TG_INIT_REST : TG_INIT_NOISE;
            cfg->initial_path[0] = '\0';
            return 0;
        }
        const char *bad = text_problem(value);
        if (bad) {
            snprintf(why, n, "expected %s, got %s (%s)", r->expect, q, bad);
            return -1;
        }
        cfg->initial_kind = TG_INIT_FILE;
        memcpy(cfg->initial_path, value, strlen(value) + 1);
        return 0;
    }
    }
    snprintf(why, n, "internal error: key has no value kind");
    return -1;
}

/* Shortest "%.Ng" (N = 15..17) that reads back as exactly v. */
void tg_cfg_format_real(double v, char *out, size_t n)
{
    for (int prec = 15; prec <= 17; prec++) {
        snprintf(out, n, "%.*g", prec, v);
        if (strtod(out, NULL) == v)
            return;
    }
}

/* The value of row r in cfg, written as it would appear in a config file. */
void tg_cfg_format_value(const key_row *r, const tg_config *cfg, char *out, size_t n)
{
    const char *base = (const char *)cfg;
    out[0] = '\0';
    switch (r->kind) {
    case V_REAL: {
        double v;
        memcpy(&v, base + r->off, sizeof v);
        tg_cfg_format_real(v, out, n);
        return;
    }
    case V_INT: {
        int v;
        memcpy(&v, base + r->off, sizeof v);
        snprintf(out, n, "%d", v);
        return;
    }
    case V_U64: {
        uint64_t v;
        memcpy(&v, base + r->off, sizeof v);
        snprintf(out, n, "%" PRIu64, v);
        return;
    }
    case V_REAL_LIST: {
        int count;
        double vals[TG_MAX_LAYERS];
        memcpy(&count, base + r->count_off, sizeof count);
        memcpy(vals, base + r->off, (size_t)r->max_count * sizeof vals[0]);
        if (count < 0)
            count = 0;
        if (count > r->max_count)
            count = r->max_count;
        for (int k = 0; k < count; k++) {
            char item[40];
            tg_cfg_format_real(vals[k], item, sizeof item);
            tg_cfg_append(out, n, "%s%s", k ? ", " : "", item);
        }
        return;
    }
    case V_CHOICE: {
        int v = r->get(cfg);
        int count = 0;
        while (r->choices[count])
            count++;
        snprintf(out, n, "%s", v >= 0 && v < count ? r->choices[v] : "?");
        return;
    }
    case V_TEXT:
        snprintf(out, n, "%s", base + r->off);
        return;
    case V_INITIAL:
        if (cfg->initial_kind == TG_INIT_REST)
            snprintf(out, n, "rest");
        else if (cfg->initial_kind == TG_INIT_NOISE)
            snprintf(out, n, "noise");
        else
            snprintf(out, n, "%s", cfg->initial_path);
        return;
    }
}

