/* config_suggest.c - "did you mean ...": edit distances between names,
 * the closest key, section or choice to a misspelt one, and the messages
 * that explain an unknown section or key.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "config_impl.h"

#include <limits.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>


#define EDIT_MAX 63

/* Optimal-string-alignment distance (Damerau-Levenshtein with adjacent
 * transpositions); long strings count as far apart. */
static int edit_distance(const char *a, const char *b)
{
    size_t la = strlen(a), lb = strlen(b);
    if (la > EDIT_MAX || lb > EDIT_MAX)
        return INT_MAX / 2;
    int d[EDIT_MAX + 1][EDIT_MAX + 1];
    for (size_t i = 0; i <= la; i++)
        d[i][0] = (int)i;
    for (size_t j = 0; j <= lb; j++)
        d[0][j] = (int)j;
    for (size_t i = 1; i <= la; i++) {
        for (size_t j = 1; j <= lb; j++) {
            int cost = a[i - 1] != b[j - 1];
            int best = d[i - 1][j] + 1;
            if (d[i][j - 1] + 1 < best)
                best = d[i][j - 1] + 1;
            if (d[i - 1][j - 1] + cost < best)
                best = d[i - 1][j - 1] + cost;
            if (i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1]
                && d[i - 2][j - 2] + 1 < best)
                best = d[i - 2][j - 2] + 1;
            d[i][j] = best;
        }
    }
    return d[la][lb];
}

/* "duration_s" and "duration_days" start with the same word "duration". */
int tg_cfg_same_first_word(const char *a, const char *b)
{
    size_t wa = strcspn(a, "_"), wb = strcspn(b, "_");
    return wa == wb && strncmp(a, b, wa) == 0;
}

/* Whether `cand` is worth suggesting for `given` at edit distance d: a small
 * distance relative to the length, a prefix of at least 3 characters, or the
 * same leading word (e.g. "duration_s" for "duration_days"). */
static int close_enough(const char *given, const char *cand, int d)
{
    size_t lg = strlen(given), lc = strlen(cand);
    size_t m = lg > lc ? lg : lc;
    int limit = m <= 4 ? 1 : m <= 8 ? 2 : (int)(m / 4) + 1;
    if (lg == 0)
        return 0;
    if (d <= limit)
        return 1;
    if (lg >= 3 && strncmp(given, cand, lg) == 0)
        return 1;
    return strcspn(given, "_") >= 4 && tg_cfg_same_first_word(given, cand);
}

/* Best row for an unknown key `name` met in `section` (may be "" or unknown):
 * the same key name in another section first, then the closest key, with
 * keys of the same section preferred on ties. -1 when nothing is close. */
int tg_cfg_suggest_key(const char *section, const char *name)
{
    int best = -1, best_score = INT_MAX;
    for (int i = 0; i < K_COUNT; i++) {
        int d = edit_distance(name, tg_cfg_rows[i].info.key);
        if (!close_enough(name, tg_cfg_rows[i].info.key, d))
            continue;
        int score = 2 * d + (strcmp(tg_cfg_rows[i].info.section, section) != 0);
        if (score < best_score) {
            best_score = score;
            best = i;
        }
    }
    return best;
}

int tg_config_suggest(const char *given, const char *const *cands, int n)
{
    int best = -1, best_d = INT_MAX;
    for (int i = 0; i < n; i++) {
        int d = edit_distance(given, cands[i]);
        if (close_enough(given, cands[i], d) && d < best_d) {
            best_d = d;
            best = i;
        }
    }
    return best;
}

/* Sections that hold no key of the table: kept as written for their checks. */
static const char *const extra_sections[] = {"twin.reference", "twin.coarse", "closure"};
enum { NEXTRA = sizeof extra_sections / sizeof extra_sections[0] };

static const char *suggest_section(const char *name)
{
    const char *best = NULL;
    int best_d = INT_MAX;
    for (int i = 0; i < K_COUNT + NEXTRA; i++) {
        if (i < K_COUNT && !tg_cfg_starts_section(i))
            continue;
        const char *cand = i < K_COUNT ? tg_cfg_rows[i].info.section : extra_sections[i - K_COUNT];
        int d = edit_distance(name, cand);
        if (close_enough(name, cand, d) && d < best_d) {
            best_d = d;
            best = cand;
        }
    }
    return best;
}

const char *tg_cfg_suggest_choice(const char *const *choices, const char *given)
{
    const char *best = NULL;
    int best_d = INT_MAX;
    for (int i = 0; choices[i]; i++) {
        int d = edit_distance(given, choices[i]);
        if (close_enough(given, choices[i], d) && d < best_d) {
            best_d = d;
            best = choices[i];
        }
    }
    return best;
}

/* How a key is written in a message (name_style, config_impl.h). */
static void key_name(int i, name_style style, char *out, size_t n)
{
    if (style == STYLE_FILE)
        snprintf(out, n, "[%s] %s", tg_cfg_rows[i].info.section, tg_cfg_rows[i].info.key);
    else
        snprintf(out, n, "%s.%s", tg_cfg_rows[i].info.section, tg_cfg_rows[i].info.key);
}

/* Appends to out (length n) with snprintf semantics. */
void tg_cfg_append(char *out, size_t n, const char *fmt, ...)
{
    size_t used = strlen(out);
    if (used + 1 >= n)
        return;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(out + used, n - used, fmt, ap);
    va_end(ap);
}

static void list_sections(char *out, size_t n)
{
    for (int i = 0; i < K_COUNT; i++)
        if (tg_cfg_starts_section(i))
            tg_cfg_append(out, n, "[%s], ", tg_cfg_rows[i].info.section);
    for (int i = 0; i < NEXTRA; i++)
        tg_cfg_append(out, n, "[%s]%s", extra_sections[i], i + 1 < NEXTRA ? ", " : "");
    tg_cfg_append(out, n, " and each closure's own section (`twingyre closures` lists them)");
}

static void list_keys_of(const char *section, char *out, size_t n)
{
    int first = 1;
    for (int i = 0; i < K_COUNT; i++) {
        if (strcmp(tg_cfg_rows[i].info.section, section) != 0)
            continue;
        tg_cfg_append(out, n, "%s%s", first ? "" : ", ", tg_cfg_rows[i].info.key);
        first = 0;
    }
}

/* Explains an unknown section name into out. */
void tg_cfg_explain_unknown_section(const char *section, name_style style, char *out, size_t n)
{
    const char *s = suggest_section(section);
    out[0] = '\0';
    if (style == STYLE_FILE)
        tg_cfg_append(out, n, "unknown section [%s]", section);
    else
        tg_cfg_append(out, n, "unknown section '%s'", section);
    if (s) {
        tg_cfg_append(out, n, style == STYLE_FILE ? "; did you mean [%s]?" : "; did you mean %s?", s);
    } else {
        tg_cfg_append(out, n, "; the sections are ");
        list_sections(out, n);
    }
}

/* Explains an unknown key `name` of a known (or empty) section into out. */
void tg_cfg_explain_unknown_key(const char *section, const char *name, name_style style,
                                char *out, size_t n)
{
    char want[128];
    int s = tg_cfg_suggest_key(section, name);
    out[0] = '\0';
    if (s >= 0) {
        key_name(s, style, want, sizeof want);
        if (strcmp(tg_cfg_rows[s].info.key, name) == 0)
            tg_cfg_append(out, n, style == STYLE_FILE ? "not a key of [%s]; did you mean %s?"
                                               : "not a key of %s; did you mean %s?",
                   section, want);
        else if (tg_cfg_rows[s].info.unit[0] && tg_cfg_same_first_word(name, tg_cfg_rows[s].info.key))
            tg_cfg_append(out, n, "unknown key; did you mean %s (unit: %s)?", want, tg_cfg_rows[s].info.unit);
        else
            tg_cfg_append(out, n, "unknown key; did you mean %s?", want);
    } else if (section[0]) {
        tg_cfg_append(out, n, "unknown key; the keys of %s%s%s are ",
               style == STYLE_FILE ? "[" : "", section, style == STYLE_FILE ? "]" : "");
        list_keys_of(section, out, n);
    } else {
        tg_cfg_append(out, n, "unknown key");
    }
}
