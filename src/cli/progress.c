/* progress.c - the progress line, the per-phase line of twin and vet, and
 * the stderr log sink of the commands.
 *
 * The one piece of command-layer state: whether a progress line is on the
 * terminal right now, so that a log line first clears it. */
#define _POSIX_C_SOURCE 200809L
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "clock.h"
#include "cli.h"

static int g_line_open = 0; /* a progress line is on stderr without a newline */
static int g_quiet = 0;

void cli_log_to_stderr(tg_log_level level, const char *line, void *user)
{
    (void)user;
    if (g_quiet && level > TG_LOG_WARN)
        return;
    if (level >= TG_LOG_DEBUG) {
        const char *env = getenv("TWINGYRE_LOG");
        if (!env || strcmp(env, "debug") != 0)
            return;
    }
    if (g_line_open) {
        fputs("\r\033[K", stderr);
        g_line_open = 0;
    }
    const char *tag = level == TG_LOG_ERROR ? "error: " : level == TG_LOG_WARN ? "warning: " : "";
    fprintf(stderr, "twingyre: %s%s\n", tag, line);
}

void cli_set_line_open(int open)
{
    g_line_open = open;
}

void cli_log_set_quiet(int quiet)
{
    g_quiet = quiet;
}

void cli_progress_init(cli_progress *p, int quiet)
{
    p->quiet = quiet;
    g_quiet = quiet;
    p->tty = isatty(STDERR_FILENO);
    p->t_start = p->t_last = tg_clock_s();
    p->step_start = -1;
    p->last_decile = -1;
}

void cli_progress_cb(const tg_progress *pr, void *user)
{
    cli_progress *p = user;
    if (p->quiet)
        return;
    if (p->step_start < 0)
        p->step_start = pr->step_first; /* timing started at init, before step one */
    double t = tg_clock_s();
    long done = pr->step - p->step_start, total = pr->step_last - p->step_start;
    double frac = total > 0 ? (double)done / total : 1.0;
    double rate = (t - p->t_start) > 0 ? done / (t - p->t_start) : 0.0;
    double left = rate > 0 ? (pr->step_last - pr->step) / rate : -1;
    char lb[32];
    cli_format_duration(left, 1e7, lb, sizeof lb);
    if (p->tty) {
        if (t - p->t_last < 0.2 && pr->step != pr->step_last)
            return;
        p->t_last = t;
        fprintf(stderr,
                "\r\033[K%5.1f%%  day %.1f of %.1f  %.1f steps/s  %s left  KE %.3e m2 s-2  CFL %.3f",
                100.0 * frac, pr->day, pr->last_day, rate, lb, pr->kinetic_energy, pr->max_cfl);
        g_line_open = 1;
    } else {
        int twentieth = (int)(frac * 20.0 + 1e-9);
        if (twentieth == p->last_decile && pr->step != pr->step_last)
            return;
        p->last_decile = twentieth;
        fprintf(stderr,
                "twingyre: %5.1f%% day %.1f of %.1f, %.1f steps/s, %s left, KE %.3e m2 s-2, "
                "CFL %.3f\n",
                100.0 * frac, pr->day, pr->last_day, rate, lb, pr->kinetic_energy, pr->max_cfl);
    }
    fflush(stderr);
}

void cli_progress_done(cli_progress *p)
{
    if (g_line_open) {
        fputc('\n', stderr);
        g_line_open = 0;
    }
    (void)p;
}

void cli_phase_init(cli_phase_line *d, int quiet)
{
    memset(d, 0, sizeof *d);
    d->quiet = quiet;
    d->tty = isatty(STDERR_FILENO);
}

void cli_phase_end(cli_phase_line *d)
{
    if (d->tty && d->index > 0) {
        fputc('\n', stderr);
        g_line_open = 0;
    }
}

int cli_phase_enter(cli_phase_line *d, int index, double t)
{
    if (index == d->index)
        return 0;
    cli_phase_end(d);
    d->index = index;
    d->t0 = t;
    d->t_last = 0.0;
    return 1;
}

int cli_phase_throttled(cli_phase_line *d, double t, int last)
{
    if (d->tty && t - d->t_last < 0.2 && !last)
        return 1;
    d->t_last = t;
    return 0;
}
