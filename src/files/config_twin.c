/* config_twin.c - the configs of a twin experiment derived from its base
 * config ([twin] points, [twin.reference] and [twin.coarse] overrides, the
 * coarse runs' settings) and the [twin] rules, which
 * tg_config_validate applies.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "config_impl.h"
#include "constants.h"

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>


/* Keys a twin sets itself; `coarse_only` ones may still be overridden for
 * the reference. */
static const struct {
    const char *key;
    int coarse_only;
    const char *why;
} twin_fixed[] = {
    {"grid.geometry", 0, "both runs share the domain"},
    {"grid.size_km", 0, "both runs share the domain"},
    {"grid.points", 0, "use [twin] reference_points and coarse_points"},
    {"layers.thickness_m", 0, "both runs need the same layers"},
    {"layers.reduced_gravity_m_s2", 0, "both runs need the same layers"},
    {"time.duration_days", 0, "the twin sets it from [twin] spinup_days and analysis_days"},
    {"output.directory", 0, "the twin writes into its own output directory"},
    {"initial.state", 1, "coarse runs start from the coarse-grained reference"},
    {"output.snapshot_every_days", 1, "coarse runs write a snapshot at every [twin] sample"},
    {"closure.use", 1, "[twin] compare chooses the closure of each coarse run"},
};

tg_code tg_config_twin_derive(const tg_config *base, int coarse, const char *origin,
                              tg_config *out, tg_status *st)
{
    if (!base || !out)
        return tg_fail(st, TG_ERR_INTERNAL, "tg_config_twin_derive: NULL argument");
    const char *sec = coarse ? "twin.coarse" : "twin.reference";
    const char *file = origin ? origin : "config file";
    *out = *base;
    out->points = coarse ? base->twin_coarse_points : base->twin_reference_points;
    out->ntwin_raw = 0;
    for (int r = 0; r < base->ntwin_raw; r++) {
        const tg_raw_entry *e = &base->twin_raw[r];
        if (strcmp(e->section, sec) != 0)
            continue;
        char where[TG_MSG_LEN];
        if (e->line > 0)
            snprintf(where, sizeof where, "%s:%d: [%s] %s", file, e->line, sec, e->key);
        else
            snprintf(where, sizeof where, "--set %s.%s=%s", sec, e->key, e->value);
        if (strncmp(e->key, "twin.", 5) == 0)
            return tg_fail(st, TG_ERR_CONFIG, "%s: [twin] keys cannot be overridden here", where);
        for (size_t k = 0; k < sizeof twin_fixed / sizeof twin_fixed[0]; k++)
            if (strcmp(e->key, twin_fixed[k].key) == 0 && (coarse || !twin_fixed[k].coarse_only))
                return tg_fail(st, TG_ERR_CONFIG, "%s: cannot be overridden (%s)", where,
                               twin_fixed[k].why);
        char assignment[sizeof e->key + sizeof e->value + 2];
        snprintf(assignment, sizeof assignment, "%s=%s", e->key, e->value);
        tg_status s2;
        tg_status_clear(&s2);
        if (tg_config_set(out, assignment, &s2) != TG_OK) {
            /* tg_config_set's message starts with "--set ASSIGNMENT: ". */
            const char *msg = s2.msg;
            char prefix[sizeof assignment + 16];
            snprintf(prefix, sizeof prefix, "--set %s: ", assignment);
            if (strncmp(msg, prefix, strlen(prefix)) == 0)
                msg += strlen(prefix);
            return tg_fail(st, TG_ERR_CONFIG, "%s: %s", where, msg);
        }
        char ksec[64];
        size_t sl = strcspn(e->key, ".");
        snprintf(ksec, sizeof ksec, "%.*s", (int)sl, e->key);
        int i = tg_config_key_index(ksec, e->key + sl + (e->key[sl] == '.'));
        if (i >= 0) {
            out->set_by_user[i] = e->line > 0 ? TG_SET_FILE : TG_SET_OPTION;
            out->set_line[i] = e->line;
        }
    }
    return TG_OK;
}

/* Whether x is a whole multiple of unit (to 1e-9 relative); *n gets the
 * multiple when it fits in a long. */
static int whole_multiple(double x, double unit, long *n)
{
    double r = x / unit;
    double k = floor(r + 0.5);
    if (!isfinite(r) || fabs(k) > 1e15)
        return 0;
    if (n)
        *n = (long)k;
    return fabs(r - k) <= 1e-9 * fmax(1.0, fabs(r));
}

const char *tg_config_fitted_entry(const tg_config *cfg, const char *entry, char *path, size_t n)
{
    /* Prefix and the scheme that reads the file through its key `file`. */
    static const char *const kinds[2][2] = {{"coefficients:", "coefficients"},
                                            {"network:", "network"}};
    for (int k = 0; k < 2; k++) {
        const size_t len = strlen(kinds[k][0]);
        if (strncmp(entry, kinds[k][0], len) != 0)
            continue;
        const char *p = entry + len;
        while (isspace((unsigned char)*p))
            p++;
        if (p[0] == '/' || p[0] == '\0' || cfg->config_dir[0] == '\0')
            snprintf(path, n, "%s", p);
        else
            snprintf(path, n, "%s/%s", cfg->config_dir, p);
        return kinds[k][1];
    }
    return NULL;
}

tg_code tg_config_twin_reference(const tg_config *base, const char *origin, tg_config *out,
                                 tg_status *st)
{
    tg_code rc = tg_config_twin_derive(base, 0, origin, out, st);
    if (rc != TG_OK)
        return rc;
    out->duration_days = base->twin_spinup_days + base->twin_analysis_days;
    /* The reference steps its own loop (twin.c, run_reference) with fixed
     * steps of step_s, so its samples fall on whole steps; [time]
     * step_choice = adaptive applies to the coarse runs only (README,
     * "Adaptive steps"). */
    out->step_choice = TG_STEP_FIXED;
    if (snprintf(out->out_directory, sizeof out->out_directory, "%s/reference",
                 base->out_directory) >= (int)sizeof out->out_directory)
        return tg_fail(st, TG_ERR_CONFIG, "output directory path too long: %s",
                       base->out_directory);
    return TG_OK;
}

tg_code tg_config_twin_coarse(const tg_config *base, const char *origin, tg_config *out,
                              tg_status *st)
{
    tg_code rc = tg_config_twin_derive(base, 1, origin, out, st);
    if (rc != TG_OK)
        return rc;
    out->duration_days = base->twin_analysis_days;
    out->snapshot_every_days = base->twin_sample_every_days;
    out->log_every_days = base->twin_analysis_days;
    out->initial_kind = TG_INIT_REST; /* the starting file is written later */
    out->initial_path[0] = '\0';
    /* The coarse runs' [initial] keys other than the seed do not apply. */
    out->set_by_user[K_INITIAL_STATE] = TG_SET_DEFAULT;
    out->set_by_user[K_NOISE] = TG_SET_DEFAULT;
    return TG_OK;
}

/* The next entry of a comma-separated list: [*a, *e) without surrounding
 * blanks; advances *p. 0 at the end of the list. */
static int next_item(const char **p, const char **a, const char **e)
{
    if (**p == '\0')
        return 0;
    const size_t len = strcspn(*p, ",");
    const char *s = *p, *t = *p + len;
    while (s < t && isspace((unsigned char)*s))
        s++;
    while (t > s && isspace((unsigned char)t[-1]))
        t--;
    *a = s;
    *e = t;
    *p += len + ((*p)[len] == ',');
    return 1;
}

int tg_config_twin_entries(const tg_config *base, char entries[][TG_RAW_TEXT])
{
    int n = 0;
    snprintf(entries[n++], TG_RAW_TEXT, "none");
    for (const char *p = base->twin_compare, *s, *e; next_item(&p, &s, &e);)
        if (e > s && !((size_t)(e - s) == 4 && !strncmp(s, "none", 4)) && n < TG_MAX_CLOSURES)
            snprintf(entries[n++], TG_RAW_TEXT, "%.*s", (int)(e - s), s);
    return n;
}

tg_code tg_config_twin_entry(const tg_config *base, const tg_config *coarse, const char *entry,
                             tg_config *out, tg_status *st)
{
    char fitted[TG_PATH_LEN], a[TG_PATH_LEN + 32];
    const char *is_fitted = tg_config_fitted_entry(base, entry, fitted, sizeof fitted);
    *out = *coarse;
    snprintf(a, sizeof a, "closure.use=%.*s", TG_RAW_TEXT - 1, is_fitted ? is_fitted : entry);
    tg_code rc = tg_config_set(out, a, st);
    if (rc != TG_OK || !is_fitted)
        return rc;
    /* The file, resolved against the config's directory. */
    if (strlen(fitted) >= TG_RAW_TEXT - 1)
        return tg_fail(st, TG_ERR_CONFIG, "[twin] compare: '%s': path longer than %d characters",
                       entry, TG_RAW_TEXT - 2);
    snprintf(a, sizeof a, "%s.file=%s", is_fitted, fitted);
    return tg_config_set(out, a, st);
}

/* The compare list: names separated by commas, no empty or repeated entry,
 * every name a registered scheme, a plugin or a coefficients file that
 * loads, at most TG_MAX_CLOSURES - 1 besides none. */
static tg_code compare_rules(const tg_config *base, const char *origin, tg_status *st)
{
    const tg_config_hooks *h = tg_config_get_hooks();
    const char *p = base->twin_compare;
    char seen[TG_MAX_CLOSURES + 1][TG_RAW_TEXT];
    int nseen = 0, others = 0;
    for (int item = 1;; item++) {
        const size_t len = strcspn(p, ",");
        const char *s = p, *e = p + len;
        while (s < e && isspace((unsigned char)*s))
            s++;
        while (e > s && isspace((unsigned char)e[-1]))
            e--;
        const size_t l = (size_t)(e - s);
        if (l == 0)
            return tg_cfg_key_fail(base, K_TWIN_COMPARE, origin, st, "entry %d is empty", item);
        if (l >= TG_RAW_TEXT)
            return tg_cfg_key_fail(base, K_TWIN_COMPARE, origin, st, "entry %d is too long", item);
        char name[TG_RAW_TEXT];
        memcpy(name, s, l);
        name[l] = '\0';
        for (int k = 0; k < nseen; k++)
            if (strcmp(seen[k], name) == 0)
                return tg_cfg_key_fail(base, K_TWIN_COMPARE, origin, st, "'%s' is listed twice",
                                       name);
        char fitted[TG_PATH_LEN];
        const char *scheme = tg_config_fitted_entry(base, name, fitted, sizeof fitted);
        if (scheme && (fitted[0] == '\0' || name[strlen(name) - 1] == ':'))
            return tg_cfg_key_fail(base, K_TWIN_COMPARE, origin, st,
                                   "entry %d: %s: needs a file, e.g. %s:fitted.%s", item, scheme,
                                   scheme, strcmp(scheme, "network") ? "txt" : "pt");
        if (scheme && !strcmp(scheme, "coefficients")) {
            /* A coefficients file: it must load for this many layers. */
            tg_status cs;
            tg_status_clear(&cs);
            if (!h)
                return tg_fail(st, TG_ERR_INTERNAL, "[twin] compare: coefficient files cannot be "
                               "checked: the closure layer's checks are not installed (tg_init)");
            if (h->check_coefficients(fitted, base->nlayers, &cs) != TG_OK)
                return tg_cfg_key_fail(base, K_TWIN_COMPARE, origin, st,
                                       "'%s': the coefficients file does not load: %s (relative "
                                       "paths are taken from the config file's directory)",
                                       name, cs.msg);
        } else if (scheme) {
            /* A network file: twin.c loads it with the coarse grid before the
             * reference runs; here it must at least open. */
            FILE *f = fopen(fitted, "rb");
            if (!f)
                return tg_cfg_key_fail(base, K_TWIN_COMPARE, origin, st,
                                       "'%s': cannot open the network file %s: %s (relative "
                                       "paths are taken from the config file's directory)",
                                       name, fitted, strerror(errno));
            fclose(f);
        } else if (strcmp(name, "none") != 0 && strncmp(name, "plugin:", 7) != 0 &&
                   !tg_cfg_is_scheme(name)) {
            const char *names[64];
            int nn = h ? h->scheme_count() : 0;
            for (int i = 0; i < nn && i < 64; i++)
                names[i] = h->scheme_name(i);
            int sgi = tg_config_suggest(name, names, nn < 64 ? nn : 64);
            if (sgi >= 0)
                return tg_cfg_key_fail(base, K_TWIN_COMPARE, origin, st,
                                       "unknown closure '%s'; did you mean %s? (`twingyre "
                                       "closures` lists them)", name, names[sgi]);
            return tg_cfg_key_fail(base, K_TWIN_COMPARE, origin, st,
                                   "unknown closure '%s' (`twingyre closures` lists them; a "
                                   "plugin is plugin:PATH.so)", name);
        }
        memcpy(seen[nseen++], name, l + 1);
        others += strcmp(name, "none") != 0;
        if (others > TG_MAX_CLOSURES - 1)
            return tg_cfg_key_fail(base, K_TWIN_COMPARE, origin, st,
                                   "at most %d closures besides none can be compared in one twin",
                                   TG_MAX_CLOSURES - 1);
        if (p[len] == '\0')
            break;
        p += len + 1;
    }
    return TG_OK;
}

/* Reference and coarse points of the geometry's form, the coarse spacing an
 * integer multiple r >= 2 of the reference spacing. */
static tg_code points_rules(const tg_config *base, const char *origin, tg_status *st)
{
    const int periodic = base->geometry == TG_GEOM_PERIODIC;
    const int keys[2] = {K_TWIN_REF_POINTS, K_TWIN_COARSE_POINTS};
    const int pts[2] = {base->twin_reference_points, base->twin_coarse_points};
    char note[64];
    tg_cfg_key_note(base, K_GEOMETRY, note, sizeof note);
    for (int w = 0; w < 2; w++) {
        int p = pts[w];
        if (!periodic && !(p >= 17 && p <= 4097 && tg_cfg_is_pow2(p - 1)))
            return tg_cfg_key_fail(base, keys[w], origin, st,
                                   "a basin needs 2^k + 1 points with 17 <= points <= 4097 "
                                   "(e.g. 65, 129, 257, 513), got %d", p);
        if (periodic && !(p >= 16 && p <= 4096 && tg_cfg_is_pow2(p)))
            return tg_cfg_key_fail(base, keys[w], origin, st,
                                   "periodic geometry%s needs 2^k points with 16 <= points <= "
                                   "4096 (e.g. 64, 128, 256, 512), got %d", note, p);
    }
    /* Spacing L/(points - 1) in a basin, L/points when periodic. */
    const int cells_ref = periodic ? pts[0] : pts[0] - 1;
    const int cells_coarse = periodic ? pts[1] : pts[1] - 1;
    tg_cfg_key_note(base, K_TWIN_REF_POINTS, note, sizeof note);
    if (cells_ref % cells_coarse != 0 || cells_ref / cells_coarse < 2)
        return tg_cfg_key_fail(base, K_TWIN_COARSE_POINTS, origin, st,
                               "the coarse grid spacing must be an integer multiple r >= 2 of the "
                               "reference spacing, but %d %s cells per side against the "
                               "reference's %d (reference_points%s = %d) gives r = %.6g; e.g. "
                               "513 -> 129 is r = 4",
                               cells_coarse, periodic ? "periodic" : "basin", cells_ref, note,
                               pts[0], (double)cells_ref / cells_coarse);
    return TG_OK;
}

/* The spin-up a whole number of reference steps, the sample interval a
 * whole number of steps of both runs, the window a whole number of samples. */
static tg_code timing_rules(const tg_config *base, double dref, double dcrs, const char *origin,
                            tg_status *st)
{
    long n;
    const double day = TG_SECONDS_PER_DAY;
    char note[64];
    if (!whole_multiple(base->twin_spinup_days * day, dref, &n))
        return tg_cfg_key_fail(base, K_TWIN_SPINUP, origin, st,
                               "%g days is not a whole number of reference steps of %g s",
                               base->twin_spinup_days, dref);
    if (!whole_multiple(base->twin_sample_every_days * day, dref, &n) || n < 1)
        return tg_cfg_key_fail(base, K_TWIN_SAMPLE, origin, st,
                               "%g days is not a whole number (>= 1) of reference steps of %g s",
                               base->twin_sample_every_days, dref);
    if (!whole_multiple(base->twin_sample_every_days * day, dcrs, &n) || n < 1)
        return tg_cfg_key_fail(base, K_TWIN_SAMPLE, origin, st,
                               "%g days is not a whole number (>= 1) of coarse steps of %g s",
                               base->twin_sample_every_days, dcrs);
    if (!whole_multiple(base->twin_analysis_days, base->twin_sample_every_days, &n) || n < 1) {
        tg_cfg_key_note(base, K_TWIN_SAMPLE, note, sizeof note);
        return tg_cfg_key_fail(base, K_TWIN_ANALYSIS, origin, st,
                               "%g days is not a whole number (>= 1) of sample intervals "
                               "(sample_every_days%s = %g)",
                               base->twin_analysis_days, note, base->twin_sample_every_days);
    }
    return TG_OK;
}

tg_code tg_cfg_check_twin(const tg_config *base, const char *origin,
                          char (*used)[TG_SECTION_LEN], int max, int *nused, tg_status *st)
{
    *nused = 0;
    tg_code rc = points_rules(base, origin, st);
    if (rc == TG_OK)
        rc = compare_rules(base, origin, st);
    if (rc != TG_OK)
        return rc;
    tg_config *ref = malloc(sizeof *ref), *crs = malloc(sizeof *crs), *cc = malloc(sizeof *cc);
    if (!ref || !crs || !cc) {
        free(ref);
        free(crs);
        free(cc);
        return tg_fail(st, TG_ERR_NOMEM, "no memory to check the twin settings");
    }
    int n = 0;
    rc = tg_config_twin_reference(base, origin, ref, st);
    if (rc == TG_OK && (rc = tg_cfg_check_run(ref, origin, used, max, &n, st)) != TG_OK)
        tg_fail(st, rc, "the reference run: %s", st->msg);
    *nused += n;
    if (rc == TG_OK)
        rc = tg_config_twin_coarse(base, origin, crs, st);
    if (rc == TG_OK)
        rc = timing_rules(base, ref->step_s, crs->step_s, origin, st);
    char entries[TG_MAX_CLOSURES][TG_RAW_TEXT];
    const int nent = rc == TG_OK ? tg_config_twin_entries(base, entries) : 0;
    for (int i = 0; i < nent && rc == TG_OK; i++) {
        n = 0;
        rc = tg_config_twin_entry(base, crs, entries[i], cc, st);
        if (rc != TG_OK)
            tg_fail(st, rc, "%s: [twin] compare: %s", origin ? origin : "config", st->msg);
        else if ((rc = tg_cfg_check_run(cc, origin, used + *nused, max - *nused, &n, st)) != TG_OK)
            tg_fail(st, rc, "the coarse run with closure %s: %s", entries[i], st->msg);
        *nused += n;
    }
    free(ref);
    free(crs);
    free(cc);
    return rc;
}
