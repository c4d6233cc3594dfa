/* sweep_progress.c - the one progress line of a whole sweep (sweep_cli.h):
 * members done, running, failed and left, time elapsed and an estimate of
 * the time left (mean run time of the members finished so far, shared
 * among the slots in use). On a terminal the line is rewritten in place;
 * otherwise a plain line is printed whenever a count changes. */
#define _POSIX_C_SOURCE 200809L
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include "clock.h"
#include "cli.h"
#include "sweep_cli.h"

void sweep_progress_init(sweep_progress *p, int quiet, int total)
{
    memset(p, 0, sizeof *p);
    p->quiet = quiet;
    p->tty = isatty(STDERR_FILENO);
    p->total = total;
    p->t0 = tg_clock_s();
}

int sweep_progress_count(sweep_progress *p, tg_code code, double seconds)
{
    p->running--;
    if (code == TG_ERR_INTERRUPTED) {
        p->left++;
        return 1;
    }
    if (code == TG_OK)
        p->done++;
    else
        p->failed++;
    if (seconds >= 0) {
        p->busy_s += seconds;
        p->finished_here++;
    }
    return 0;
}

void sweep_progress_show(sweep_progress *p, int force)
{
    if (p->quiet)
        return;
    const double t = tg_clock_s();
    if (p->tty && !force && t - p->t_last < 0.5)
        return;
    char el[32], lf[32], counts[160], line[256];
    cli_format_duration(t - p->t0, 1e8, el, sizeof el);
    double left = -1;
    const int slots = p->running > 0 ? p->running : 1;
    if (p->finished_here > 0)
        left = p->busy_s / p->finished_here * (p->left + p->running) / slots;
    else if (p->left + p->running == 0)
        left = 0;
    cli_format_duration(left, 1e8, lf, sizeof lf);
    snprintf(counts, sizeof counts, "%d of %d done, %d running, %d failed, %d left", p->done,
             p->total, p->running, p->failed, p->left);
    if (p->tty) {
        p->t_last = t;
        snprintf(line, sizeof line, "sweep: %s, %s elapsed, %s left", counts, el, lf);
        fprintf(stderr, "\r\033[K%s", line);
        p->open = 1;
        cli_set_line_open(1);
    } else {
        if (!force && !strcmp(counts, p->last))
            return;
        fprintf(stderr, "twingyre: sweep: %s, %s elapsed, %s left\n", counts, el, lf);
    }
    snprintf(p->last, sizeof p->last, "%s", counts);
    fflush(stderr);
}

void sweep_progress_end(sweep_progress *p)
{
    if (p->open) {
        fputc('\n', stderr);
        p->open = 0;
        cli_set_line_open(0);
    }
}
