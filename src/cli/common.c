/* common.c - what the commands share: option parsing, config loading, the
 * stop request (SIGINT/SIGTERM) and the format of durations.
 *
 * The stop flag is the one piece of state here: a signal handler can only
 * reach a static object. */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

static int allowed(const char *allow, const char *name)
{
    size_t n = strlen(name);
    for (const char *p = allow; (p = strstr(p, name)) != NULL; p += n)
        if ((p == allow || p[-1] == ' ') && (p[n] == ' ' || p[n] == '\0'))
            return 1;
    return 0;
}

/* A whole number from lo to hi for option --opt; a usage error otherwise. */
static tg_code whole(const char *opt, const char *val, long lo, long hi, int *out, tg_status *st)
{
    char *end;
    long x = strtol(val, &end, 10);
    if (*val == '\0' || *end != '\0' || x < lo || x > hi)
        return tg_fail(st, TG_ERR_USAGE, "--%s needs a whole number from %ld to %ld, got '%s'", opt,
                       lo, hi, val);
    *out = (int)x;
    return TG_OK;
}

tg_code cli_parse_for(int argc, char **argv, int first, const char *allow, const char *what,
                      cli_opts *o, tg_status *st)
{
    memset(o, 0, sizeof *o);
    for (int i = first; i < argc; i++) {
        const char *a = argv[i];
        if (a[0] != '-' || a[1] == '\0') {
            if (o->config_path)
                return tg_fail(st, TG_ERR_USAGE, "unexpected argument '%s' (the %s is '%s')", a,
                               what, o->config_path);
            o->config_path = a;
            continue;
        }
        const char *name = a[1] == '-' ? a + 2 : a + 1;
        const char *val = NULL;
        char key[64];
        const char *eq = strchr(name, '=');
        size_t kl = eq ? (size_t)(eq - name) : strlen(name);
        if (kl >= sizeof key)
            kl = sizeof key - 1;
        memcpy(key, name, kl);
        key[kl] = '\0';
        if (!allowed(allow, key))
            return tg_fail(st, TG_ERR_USAGE, "unknown option '%s' (see --help)", a);
        int takes_value = !strcmp(key, "set") || !strcmp(key, "out") || !strcmp(key, "threads") ||
                          !strcmp(key, "member") || !strcmp(key, "jobs") ||
                          !strcmp(key, "slurm-script");
        if (takes_value) {
            if (eq)
                val = eq + 1;
            else if (i + 1 < argc)
                val = argv[++i];
            else
                return tg_fail(st, TG_ERR_USAGE, "option --%s needs a value", key);
        } else if (eq) {
            return tg_fail(st, TG_ERR_USAGE, "option --%s takes no value", key);
        }
        tg_code rc = TG_OK;
        if (!strcmp(key, "set")) {
            if (o->nsets >= (int)(sizeof o->sets / sizeof o->sets[0]))
                return tg_fail(st, TG_ERR_USAGE, "too many --set options");
            o->sets[o->nsets++] = val;
        } else if (!strcmp(key, "out")) {
            o->out_dir = val;
        } else if (!strcmp(key, "threads")) {
            rc = whole(key, val, 1, 1024, &o->threads, st);
        } else if (!strcmp(key, "member")) {
            rc = whole(key, val, 0, 1000000, &o->member, st);
            o->member_given = 1;
        } else if (!strcmp(key, "jobs")) {
            rc = whole(key, val, 1, 1024, &o->jobs, st);
        } else if (!strcmp(key, "slurm-script")) {
            o->slurm_script = val;
        } else if (!strcmp(key, "quiet")) {
            o->quiet = 1;
        } else if (!strcmp(key, "overwrite")) {
            o->overwrite = 1;
        } else if (!strcmp(key, "collect")) {
            o->collect = 1;
        } else if (!strcmp(key, "mpi")) {
            o->mpi = 1;
        }
        if (rc != TG_OK)
            return rc;
    }
    if (!o->config_path)
        return tg_fail(st, TG_ERR_USAGE, "no %s given (see --help)", what);
    return TG_OK;
}

tg_code cli_parse(int argc, char **argv, int first, const char *allow, cli_opts *o, tg_status *st)
{
    return cli_parse_for(argc, argv, first, allow, "config file", o, st);
}

tg_code cli_read_config(const cli_opts *o, tg_config *cfg, tg_status *st)
{
    tg_code rc;
    tg_config_defaults(cfg);
    if ((rc = tg_config_load_file(cfg, o->config_path, st)) != TG_OK)
        return rc;
    for (int i = 0; i < o->nsets; i++)
        if ((rc = tg_config_set(cfg, o->sets[i], st)) != TG_OK)
            return rc;
    if (o->out_dir) {
        if (strlen(o->out_dir) >= sizeof cfg->out_directory)
            return tg_fail(st, TG_ERR_USAGE, "--out path is too long");
        strcpy(cfg->out_directory, o->out_dir);
    }
    cfg->member = o->member;
    return TG_OK;
}

tg_code cli_load_config(const cli_opts *o, unsigned uses, tg_config *cfg, tg_status *st)
{
    tg_code rc = cli_read_config(o, cfg, st);
    return rc != TG_OK ? rc : tg_config_validate(cfg, uses, o->config_path, st);
}

tg_code cli_begin(int argc, char **argv, const char *allow, cli_opts *o, tg_config **cfg,
                  tg_status *st)
{
    tg_set_log(cli_log_to_stderr, NULL);
    *cfg = malloc(sizeof **cfg);
    if (!*cfg)
        return tg_fail(st, TG_ERR_NOMEM, "out of memory");
    tg_code rc = cli_parse(argc, argv, 2, allow, o, st);
    cli_log_set_quiet(rc == TG_OK ? o->quiet : 0);
    return rc;
}

char *cli_command_line(int argc, char **argv)
{
    size_t n = 1;
    for (int i = 0; i < argc; i++)
        n += strlen(argv[i]) + 3;
    char *s = malloc(n);
    if (!s)
        return NULL;
    s[0] = '\0';
    for (int i = 0; i < argc; i++) {
        if (i)
            strcat(s, " ");
        int quote = strchr(argv[i], ' ') != NULL;
        if (quote)
            strcat(s, "'");
        strcat(s, argv[i]);
        if (quote)
            strcat(s, "'");
    }
    return s;
}

int cli_exit_code(tg_code code)
{
    return (int)code; /* the codes are the exit statuses; README lists them */
}

static volatile sig_atomic_t g_stop = 0;

static void on_stop_signal(int sig)
{
    (void)sig;
    g_stop = 1;
}

volatile sig_atomic_t *cli_catch_stop_signals(void)
{
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_stop_signal;
    sigemptyset(&sa.sa_mask);
    const int sigs[2] = {SIGINT, SIGTERM};
    for (int i = 0; i < 2; i++)
        if (sigaction(sigs[i], &sa, NULL) != 0)
            tg_log(TG_LOG_WARN, "cannot catch %s (sigaction: %s); it will end the program "
                   "without a checkpoint", sigs[i] == SIGINT ? "SIGINT" : "SIGTERM",
                   strerror(errno));
    return &g_stop;
}

void cli_format_duration(double s, double longest, char *buf, size_t n)
{
    if (!(s >= 0) || s > longest)
        snprintf(buf, n, "?");
    else if (s < 120)
        snprintf(buf, n, "%.0f s", s);
    else if (s < 7200)
        snprintf(buf, n, "%.1f min", s / 60);
    else
        snprintf(buf, n, "%.1f h", s / 3600);
}
