/* sweep_member.c - one member of a sweep (sweep.h): its folder, its
 * resolved config, the run or twin itself, and its status file
 * NAME/member.ini (written through a temporary file and a rename, read
 * back with libinih).
 *
 * libinih reads lines of at most 200 bytes, so a long message is written
 * as several `message = ...` lines that are joined on reading; each piece
 * starts and ends with a non-blank character so that libinih's trimming
 * loses nothing. A ';' after a blank would start an inline comment, so the
 * writer drops blanks before ';'. */
#include "sweep.h"
#include "clock.h"
#include "run.h"
#include "strbuf.h"
#include "textfile.h"
#include "twin.h"

#include <ini.h>

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

static void utc_now(char *buf, size_t n)
{
    time_t t = time(NULL);
    struct tm tm;
    gmtime_r(&t, &tm);
    strftime(buf, n, "%Y-%m-%dT%H:%M:%SZ", &tm);
}

/* ---------------------------------------------------------------- reading */

typedef struct {
    tg_member_status *ms;
} status_ctx;

static int on_status(void *user, const char *section, const char *key, const char *value)
{
    tg_member_status *ms = ((status_ctx *)user)->ms;
    if (strcmp(section, "member") != 0)
        return 1;
    if (!strcmp(key, "status"))
        snprintf(ms->status, sizeof ms->status, "%s", value);
    else if (!strcmp(key, "exit_status"))
        ms->exit_status = atoi(value);
    else if (!strcmp(key, "message")) {
        size_t l = strlen(ms->message);
        snprintf(ms->message + l, sizeof ms->message - l, "%s", value);
    } else if (!strcmp(key, "host"))
        snprintf(ms->host, sizeof ms->host, "%s", value);
    else if (!strcmp(key, "threads"))
        ms->threads = atoi(value);
    else if (!strcmp(key, "start"))
        snprintf(ms->start, sizeof ms->start, "%s", value);
    else if (!strcmp(key, "end"))
        snprintf(ms->end, sizeof ms->end, "%s", value);
    else if (!strcmp(key, "seconds"))
        ms->seconds = atof(value);
    return 1;
}

tg_code tg_sweep_read_status(const tg_sweep *sw, int k, tg_member_status *ms, tg_status *st)
{
    memset(ms, 0, sizeof *ms);
    char path[TG_PATH_LEN + TG_SWEEP_NAME_LEN + 16];
    snprintf(path, sizeof path, "%s/%s/member.ini", sw->directory, sw->name[k]);
    FILE *f = fopen(path, "r");
    if (!f) {
        if (errno == ENOENT)
            return TG_OK;
        return tg_fail(st, TG_ERR_IO, "cannot read %s: %s", path, strerror(errno));
    }
    status_ctx c = {ms};
    int r = ini_parse_file(f, on_status, &c);
    fclose(f);
    if (r != 0)
        return tg_fail(st, TG_ERR_IO, "%s:%d: not a member status file written by twingyre "
                                      "(delete it to run the member again)", path, r);
    ms->present = 1;
    return TG_OK;
}

int tg_sweep_member_done(const tg_sweep *sw, int k)
{
    tg_member_status ms;
    tg_status st;
    return tg_sweep_read_status(sw, k, &ms, &st) == TG_OK && ms.present &&
           !strcmp(ms.status, "done");
}

/* ---------------------------------------------------------------- writing */

static void put_message(FILE *f, const char *msg)
{
    char clean[TG_MSG_LEN];
    size_t j = 0;
    for (const char *p = msg; *p && j + 1 < sizeof clean; p++) {
        char ch = (*p == '\n' || *p == '\r' || *p == '\t') ? ' ' : *p;
        if (ch == ';')
            while (j > 0 && clean[j - 1] == ' ')
                j--;
        clean[j++] = ch;
    }
    clean[j] = '\0';
    const char *s = clean;
    while (*s == ' ')
        s++;
    size_t n = strlen(s);
    while (n > 0 && s[n - 1] == ' ')
        n--;
    if (n == 0) {
        fputs("message =\n", f);
        return;
    }
    const size_t piece = 150;
    size_t i = 0;
    while (i < n) {
        size_t e = i + piece < n ? i + piece : n;
        /* Cut between two non-blank characters. */
        while (e < n && e > i + 1 && (s[e] == ' ' || s[e - 1] == ' '))
            e--;
        if (e < n && (s[e] == ' ' || s[e - 1] == ' '))
            e = i + piece < n ? i + piece : n; /* a long run of blanks: cut anyway */
        fprintf(f, "message = %.*s\n", (int)(e - i), s + i);
        i = e;
    }
}

static tg_code write_status(const tg_sweep *sw, int k, const tg_member_status *ms, tg_status *st)
{
    char path[TG_PATH_LEN + TG_SWEEP_NAME_LEN + 16], tmp[TG_PATH_LEN + TG_SWEEP_NAME_LEN + 32];
    snprintf(path, sizeof path, "%s/%s/member.ini", sw->directory, sw->name[k]);
    /* The pid in the temporary name: the pool may record a member whose
     * process it saw die while a late write of that process is under way. */
    snprintf(tmp, sizeof tmp, "%s.%ld.tmp", path, (long)getpid());
    FILE *f = fopen(tmp, "w");
    if (!f)
        return tg_fail(st, TG_ERR_IO, "cannot write %s: %s", tmp, strerror(errno));
    fprintf(f, "; status of one member of the sweep %s, written by twingyre sweep\n[member]\n",
            sw->path);
    fprintf(f, "index = %d\nname = %s\nstatus = %s\nexit_status = %d\n", k, sw->name[k],
            ms->status, ms->exit_status);
    put_message(f, ms->message);
    fprintf(f, "host = %s\nthreads = %d\nstart = %s\nend = %s\nseconds = %.3f\n", ms->host,
            ms->threads, ms->start, ms->end, ms->seconds);
    return tg_tmp_commit(f, tmp, path, st);
}

static void fill_host(tg_member_status *ms)
{
    if (gethostname(ms->host, sizeof ms->host) != 0)
        strcpy(ms->host, "unknown");
    ms->host[sizeof ms->host - 1] = '\0';
}

tg_code tg_sweep_record_failure(const tg_sweep *sw, int k, tg_code code, const char *message,
                                tg_status *st)
{
    tg_member_status ms;
    tg_code rc = tg_sweep_read_status(sw, k, &ms, st);
    if (rc != TG_OK)
        return rc;
    if (ms.present && !strcmp(ms.status, "done"))
        return TG_OK;
    char dir[TG_PATH_LEN + TG_SWEEP_NAME_LEN + 2];
    tg_sweep_member_dir(sw, k, dir, sizeof dir);
    if ((rc = tg_make_dirs(dir, st)) != TG_OK)
        return rc;
    if (!ms.present) {
        fill_host(&ms);
        utc_now(ms.start, sizeof ms.start);
    }
    strcpy(ms.status, code == TG_ERR_INTERRUPTED ? "stopped" : "failed");
    ms.exit_status = (int)code;
    snprintf(ms.message, sizeof ms.message, "%s", message);
    utc_now(ms.end, sizeof ms.end);
    return write_status(sw, k, &ms, st);
}

tg_code tg_sweep_make_directory(const tg_sweep *sw, tg_status *st)
{
    return tg_make_dirs(sw->directory, st);
}

tg_code tg_sweep_prepare_member(const tg_sweep *sw, int k, tg_status *st)
{
    char dir[TG_PATH_LEN + TG_SWEEP_NAME_LEN + 2];
    tg_sweep_member_dir(sw, k, dir, sizeof dir);
    return tg_make_dirs(dir, st);
}

static tg_code write_config(const char *dir, const tg_config *cfg, tg_status *st)
{
    char path[TG_PATH_LEN + TG_SWEEP_NAME_LEN + 16], tmp[TG_PATH_LEN + TG_SWEEP_NAME_LEN + 32];
    snprintf(path, sizeof path, "%s/config.ini", dir);
    char *text = tg_config_to_ini(cfg);
    if (!text)
        return tg_fail(st, TG_ERR_NOMEM, "out of memory writing %s", path);
    FILE *f = tg_tmp_open(path, tmp, sizeof tmp, st);
    if (f)
        fputs(text, f);
    free(text);
    return f ? tg_tmp_commit(f, tmp, path, st) : st->code;
}

tg_code tg_sweep_run_member(const tg_sweep *sw, int k, const tg_sweep_member_options *o,
                            int *skipped, tg_status *st)
{
    *skipped = 0;
    if (k < 0 || k >= sw->nmembers)
        return tg_fail(st, TG_ERR_USAGE, "--member %d: the sweep %s has members 0 to %d", k,
                       sw->path, sw->nmembers - 1);
    tg_member_status ms;
    tg_code rc = tg_sweep_read_status(sw, k, &ms, st);
    if (rc != TG_OK)
        return rc;
    if (ms.present && !strcmp(ms.status, "done")) {
        *skipped = 1;
        return TG_OK;
    }
    char dir[TG_PATH_LEN + TG_SWEEP_NAME_LEN + 2];
    tg_sweep_member_dir(sw, k, dir, sizeof dir);
    if ((rc = tg_make_dirs(dir, st)) != TG_OK)
        return rc;
    memset(&ms, 0, sizeof ms);
    fill_host(&ms);
    ms.threads = o->threads;
    utc_now(ms.start, sizeof ms.start);
    strcpy(ms.status, "running");
    if ((rc = write_status(sw, k, &ms, st)) != TG_OK)
        return rc;
    const double t0 = tg_clock_s();

    tg_config *cfg = malloc(sizeof *cfg);
    if (!cfg)
        rc = tg_fail(st, TG_ERR_NOMEM, "out of memory setting up member %d", k);
    if (rc == TG_OK)
        rc = tg_sweep_member_config(sw, k, cfg, st);
    if (rc == TG_OK)
        rc = write_config(dir, cfg, st);
    if (rc == TG_OK) {
        if (sw->kind == TG_SWEEP_TWIN) {
            tg_twin_options to = {.command_line = o->command_line, .origin = sw->base,
                                  .stop_requested = o->stop_requested, .overwrite = 1};
            char *table = NULL;
            rc = tg_twin_run(cfg, &to, &table, st);
            free(table);
        } else {
            tg_run_options ro = {.command_line = o->command_line,
                                 .stop_requested = o->stop_requested, .overwrite = 1};
            rc = tg_run(cfg, &ro, st);
        }
    }
    free(cfg);

    tg_status wst;
    tg_status_clear(&wst);
    strcpy(ms.status, rc == TG_OK ? "done" : rc == TG_ERR_INTERRUPTED ? "stopped" : "failed");
    ms.exit_status = (int)rc;
    snprintf(ms.message, sizeof ms.message, "%s", rc == TG_OK ? "" : st->msg);
    utc_now(ms.end, sizeof ms.end);
    ms.seconds = tg_clock_s() - t0;
    tg_code wrc = write_status(sw, k, &ms, &wst);
    if (wrc != TG_OK && rc == TG_OK) {
        *st = wst;
        return wrc;
    }
    return rc;
}
