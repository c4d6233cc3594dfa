/* cmd_fit.c - `twingyre fit SUBGRID.nc --out COEFFS [options]`: fits
 * closure coefficients to a twin's sub-grid forcing (fit_run.h) and prints
 * the skill table, the coefficients and the path. Argument parsing,
 * progress and exit codes only. */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#ifdef _OPENMP
#include <omp.h>
#endif

#include "basis.h"
#include "fit_run.h"
#include "cli.h"

typedef struct {
    int quiet, tty, last_quarter, open;
} fit_display;

static void show(int done, int total, void *user)
{
    fit_display *d = user;
    if (d->quiet)
        return;
    const double frac = total > 0 ? (double)done / total : 1.0;
    if (d->tty) {
        fprintf(stderr, "\r\033[Kreading samples: %d of %d (%.0f%%)", done, total, 100.0 * frac);
        cli_set_line_open(1);
        d->open = 1;
        if (done >= total) {
            fputc('\n', stderr);
            cli_set_line_open(0);
            d->open = 0;
        }
    } else {
        const int quarter = (int)(frac * 4.0 + 1e-9);
        if (quarter == d->last_quarter || (quarter == 0 && done < total))
            return;
        d->last_quarter = quarter;
        fprintf(stderr, "twingyre: reading samples: %d of %d (%.0f%%)\n", done, total,
                100.0 * frac);
    }
    fflush(stderr);
}

static int usage_error(const char *fmt, ...) __attribute__((format(printf, 1, 2)));
static int usage_error(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    fprintf(stderr, "twingyre: fit: ");
    vfprintf(stderr, fmt, ap);
    fprintf(stderr, " (see twingyre fit --help)\n");
    va_end(ap);
    return cli_exit_code(TG_ERR_USAGE);
}

static int parse_real(const char *s, double lo, double *out)
{
    char *end;
    errno = 0;
    double v = strtod(s, &end);
    if (s[0] == '\0' || *end != '\0' || errno || !isfinite(v) || v < lo)
        return -1;
    *out = v;
    return 0;
}

static int parse_int(const char *s, long lo, long hi, int *out)
{
    char *end;
    errno = 0;
    long v = strtol(s, &end, 10);
    if (s[0] == '\0' || *end != '\0' || errno || v < lo || v > hi)
        return -1;
    *out = (int)v;
    return 0;
}

static int parse_range(const char *s, int *first, int *last)
{
    const char *colon = strchr(s, ':');
    if (!colon)
        return -1;
    char a[32], b[32];
    size_t la = (size_t)(colon - s);
    if (la == 0 || la >= sizeof a || strlen(colon + 1) >= sizeof b)
        return -1;
    memcpy(a, s, la);
    a[la] = '\0';
    snprintf(b, sizeof b, "%s", colon + 1);
    if (parse_int(a, 0, 100000000, first) || parse_int(b, 0, 100000000, last) || *last < *first)
        return -1;
    return 0;
}

/* "a,b,c" or "all" into o->terms. */
static int parse_terms(const char *s, tg_fit_options *o)
{
    if (!strcmp(s, "all")) {
        o->nterms = 0;
        return 0;
    }
    char buf[1024];
    if (strlen(s) >= sizeof buf) {
        fprintf(stderr, "twingyre: fit: --terms: list too long\n");
        return -1;
    }
    snprintf(buf, sizeof buf, "%s", s);
    o->nterms = 0;
    char *save = NULL;
    for (char *tok = strtok_r(buf, ",", &save); tok; tok = strtok_r(NULL, ",", &save)) {
        while (*tok == ' ')
            tok++;
        char *e = tok + strlen(tok);
        while (e > tok && e[-1] == ' ')
            *--e = '\0';
        int t = tg_basis_find(tok);
        if (t < 0) {
            const char *names[TG_FIT_MAX_TERMS];
            int n = tg_basis_count();
            for (int i = 0; i < n && i < TG_FIT_MAX_TERMS; i++)
                names[i] = tg_basis_term_at(i)->name;
            int sg = tg_config_suggest(tok, names, n);
            fprintf(stderr, "twingyre: fit: --terms: unknown term '%s'%s%s%s (`twingyre closures "
                            "coefficients` and the README list the terms)\n",
                    tok, sg >= 0 ? "; did you mean " : "", sg >= 0 ? names[sg] : "",
                    sg >= 0 ? "?" : "");
            return -1;
        }
        for (int i = 0; i < o->nterms; i++)
            if (o->terms[i] == t) {
                fprintf(stderr, "twingyre: fit: --terms: '%s' is listed twice\n", tok);
                return -1;
            }
        o->terms[o->nterms++] = t;
    }
    if (o->nterms == 0) {
        fprintf(stderr, "twingyre: fit: --terms: no term given\n");
        return -1;
    }
    return 0;
}

/* One option a that takes a value, v, into o (--threads into *threads;
 * *have_ridge set by --ridge): 0, or the exit status of a usage error (its
 * message printed). */
static int fit_option(const char *a, const char *v, tg_fit_options *o, int *threads,
                     int *have_ridge)
{
    if (!strcmp(a, "--out")) {
        o->output = v;
    } else if (!strcmp(a, "--terms")) {
        if (parse_terms(v, o))
            return cli_exit_code(TG_ERR_USAGE);
    } else if (!strcmp(a, "--layers")) {
        if (!strcmp(v, "separate"))
            o->shared = 0;
        else if (!strcmp(v, "shared"))
            o->shared = 1;
        else
            return usage_error("--layers: expected separate or shared, got '%s'", v);
    } else if (!strcmp(a, "--method")) {
        if (!strcmp(v, "ols"))
            o->set.method = TG_FIT_OLS;
        else if (!strcmp(v, "ridge"))
            o->set.method = TG_FIT_RIDGE;
        else if (!strcmp(v, "sequential-threshold"))
            o->set.method = TG_FIT_SEQ_THRESHOLD;
        else if (!strcmp(v, "rvm"))
            o->set.method = TG_FIT_RVM;
        else
            return usage_error("--method: expected ols, ridge, sequential-threshold or rvm, "
                               "got '%s'%s", v, strcmp(v, "stlsq") ? ""
                                             : "; did you mean sequential-threshold?");
    } else if (!strcmp(a, "--ridge")) {
        if (parse_real(v, 0.0, &o->set.ridge))
            return usage_error("--ridge: expected a real number >= 0, got '%s'", v);
        *have_ridge = 1;
    } else if (!strcmp(a, "--drop-below")) {
        if (parse_real(v, 0.0, &o->set.threshold))
            return usage_error("--drop-below: expected a real number >= 0, got '%s'", v);
    } else if (!strcmp(a, "--prune-alpha")) {
        if (parse_real(v, 1.0, &o->set.alpha_max))
            return usage_error("--prune-alpha: expected a real number >= 1, got '%s'", v);
    } else if (!strcmp(a, "--train")) {
        if (parse_range(v, &o->train_first, &o->train_last))
            return usage_error("--train: expected FIRST:LAST sample indices with FIRST <= "
                               "LAST, got '%s'", v);
    } else if (!strcmp(a, "--test")) {
        if (parse_range(v, &o->test_first, &o->test_last))
            return usage_error("--test: expected FIRST:LAST sample indices with FIRST <= "
                               "LAST, got '%s'", v);
    } else if (!strcmp(a, "--target")) {
        if (!strcmp(v, "forcing"))
            o->target = TG_FIT_TARGET_FORCING;
        else if (!strcmp(v, "flux"))
            o->target = TG_FIT_TARGET_FLUX;
        else
            return usage_error("--target: expected forcing or flux, got '%s'", v);
    } else if (!strcmp(a, "--chunk-samples")) {
        if (parse_int(v, 1, 100000, &o->chunk_samples))
            return usage_error("--chunk-samples: expected a whole number from 1 to 100000, "
                               "got '%s'", v);
    } else if (!strcmp(a, "--dump-design")) {
        o->dump_path = v;
    } else if (!strcmp(a, "--threads")) {
        if (parse_int(v, 1, 4096, threads))
            return usage_error("--threads: expected a whole number >= 1, got '%s'", v);
    } else {
        return usage_error("unknown option '%s'", a);
    }
    return 0;
}

/* The arguments of `twingyre fit` into o, *threads, *have_ridge (--ridge
 * given) and *quiet; 0, or the exit status of a usage error (reported). */
static int fit_args(int argc, char **argv, tg_fit_options *o, int *threads, int *have_ridge,
                    int *quiet)
{
    for (int i = 2; i < argc; i++) {
        const char *a = argv[i];
        const char *v = i + 1 < argc ? argv[i + 1] : NULL;
        if (!strcmp(a, "--quiet")) {
            *quiet = 1;
            continue;
        }
        if (!strcmp(a, "--overwrite")) {
            o->overwrite = 1;
            continue;
        }
        if (a[0] != '-' || a[1] != '-') {
            if (o->input)
                return usage_error("unexpected argument '%s' (one SUBGRID.nc only)", a);
            o->input = a;
            continue;
        }
        static const char *const with_value[] = {
            "--out", "--terms", "--layers", "--method", "--ridge", "--drop-below", "--prune-alpha",
            "--train", "--test", "--target", "--chunk-samples", "--dump-design", "--threads"};
        int known = 0;
        for (size_t w = 0; w < sizeof with_value / sizeof with_value[0]; w++)
            known |= !strcmp(a, with_value[w]);
        if (!known && !strcmp(a, "--threshold"))
            return usage_error("unknown option '%s'; did you mean --drop-below?", a);
        if (!known)
            return usage_error("unknown option '%s'", a);
        if (!v)
            return usage_error("%s needs a value", a);
        const int bad = fit_option(a, v, o, threads, have_ridge);
        if (bad)
            return bad;
        i++;
    }
    if (!o->input)
        return usage_error("missing SUBGRID.nc (a twin's subgrid.nc)");
    if (!o->output)
        return usage_error("missing --out COEFFS (the coefficients file to write)");
    if (*have_ridge && o->set.method != TG_FIT_RIDGE && o->set.method != TG_FIT_SEQ_THRESHOLD)
        return usage_error("--ridge applies to --method ridge or sequential-threshold, not %s",
                           tg_fit_method_name(o->set.method));
    if (o->set.method == TG_FIT_SEQ_THRESHOLD && !*have_ridge)
        o->set.ridge = 0.0;
    return 0;
}

int cmd_fit(int argc, char **argv)
{
    tg_set_log(cli_log_to_stderr, NULL);
    tg_fit_options o;
    tg_fit_options_default(&o);
    int threads = 0, have_ridge = 0, quiet = 0;
    const int bad = fit_args(argc, argv, &o, &threads, &have_ridge, &quiet);
    if (bad)
        return bad;
#ifdef _OPENMP
    if (threads > 0)
        omp_set_num_threads(threads);
#endif
    cli_log_set_quiet(quiet);
    fit_display disp = {.quiet = quiet, .tty = isatty(STDERR_FILENO), .last_quarter = -1};
    o.progress = show;
    o.progress_user = &disp;
    char *cmdline = cli_command_line(argc, argv);
    o.command_line = cmdline;
    tg_status st;
    tg_status_clear(&st);
    char *report = NULL;
    tg_code rc = tg_fit_run(&o, &report, &st);
    if (disp.open) {
        fputc('\n', stderr);
        cli_set_line_open(0);
    }
    free(cmdline);
    if (rc != TG_OK) {
        fprintf(stderr, "twingyre: %s: %s\n", tg_code_name(rc), st.msg);
        free(report);
        return cli_exit_code(rc);
    }
    if (report)
        fputs(report, stdout);
    fflush(stdout);
    free(report);
    if (!quiet)
        fprintf(stderr, "twingyre: wrote %s; use it with [closure] use = coefficients, "
                        "[coefficients] file = %s\n", o.output, o.output);
    return 0;
}
