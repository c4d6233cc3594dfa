/* cmd_twin.c - `twingyre twin CONFIG [--set ...] [--out DIR] [--overwrite]
 * [--threads N] [--quiet]`: a twin experiment (twin.h), with one progress
 * line per phase (spin-up, reference window, each coarse run and member)
 * and the skill table at the end on stdout. */
#define _POSIX_C_SOURCE 200809L
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#ifdef _OPENMP
#include <omp.h>
#endif

#include "twin.h"
#include "clock.h"
#include "cli.h"

/* One line per phase: updated in place on a terminal, otherwise printed at
 * each quarter of the phase. */
typedef struct {
    cli_phase_line line;
    int last_quarter;
} twin_display;

static void show(const tg_twin_progress *tp, void *user)
{
    twin_display *d = user;
    cli_phase_line *l = &d->line;
    if (l->quiet)
        return;
    const tg_progress *p = &tp->p;
    double t = tg_clock_s();
    if (cli_phase_enter(l, tp->index, t))
        d->last_quarter = -1;
    const long total = p->step_last - p->step_first, done = p->step - p->step_first;
    const double frac = total > 0 ? (double)done / total : 1.0;
    const double rate = t > l->t0 ? done / (t - l->t0) : 0.0;
    const double left = rate > 0 ? (p->step_last - p->step) / rate : -1;
    const int last = p->step >= p->step_last;
    char lb[32];
    cli_format_duration(last ? t - l->t0 : left, 1e7, lb, sizeof lb);
    if (l->tty) {
        if (cli_phase_throttled(l, t, last))
            return;
        fprintf(stderr, "\r\033[K[%d/%d] %-32.32s %5.1f%%  day %.1f of %.1f  %.0f steps/s  %s %s",
                tp->index, tp->count, tp->phase, 100.0 * frac, p->day, p->last_day, rate, lb,
                last ? "taken" : "left");
        cli_set_line_open(1);
        if (last) {
            fputc('\n', stderr);
            cli_set_line_open(0);
            l->index = -tp->index; /* finished; a repeat call starts no new line */
        }
    } else {
        const int quarter = (int)(frac * 4.0 + 1e-9);
        if ((quarter == d->last_quarter || quarter == 0) && !last)
            return;
        d->last_quarter = quarter;
        fprintf(stderr, "twingyre: [%d/%d] %s: %5.1f%%, day %.1f of %.1f, %.0f steps/s, %s %s\n",
                tp->index, tp->count, tp->phase, 100.0 * frac, p->day, p->last_day, rate, lb,
                last ? "taken" : "left");
    }
    fflush(stderr);
}

int cmd_twin(int argc, char **argv)
{
    tg_status st;
    tg_status_clear(&st);
    cli_opts o;
    tg_config *cfg = NULL;
    tg_code rc = cli_begin(argc, argv, "set out quiet overwrite threads", &o, &cfg, &st);
    /* Not cli_load_config: tg_twin_run validates (tg_config_validate for a
     * twin) before it writes anything. */
    if (rc == TG_OK)
        rc = cli_read_config(&o, cfg, &st);
    if (rc != TG_OK) {
        fprintf(stderr, "twingyre: %s\n", st.msg);
        free(cfg);
        return cli_exit_code(rc);
    }
#ifdef _OPENMP
    if (o.threads > 0)
        omp_set_num_threads(o.threads);
#endif
    volatile sig_atomic_t *stop = cli_catch_stop_signals();

    twin_display disp = {.last_quarter = -1};
    cli_phase_init(&disp.line, o.quiet);
    char *cmdline = cli_command_line(argc, argv);
    tg_twin_options to = {.command_line = cmdline, .origin = o.config_path,
                          .stop_requested = stop, .overwrite = o.overwrite,
                          .progress = show, .progress_user = &disp};
    char *table = NULL;
    rc = tg_twin_run(cfg, &to, &table, &st);
    cli_phase_end(&disp.line);
    free(cmdline);
    if (rc != TG_OK) {
        fprintf(stderr, "twingyre: %s: %s\n", tg_code_name(rc), st.msg);
        free(table);
        free(cfg);
        return cli_exit_code(rc);
    }
    if (table)
        fputs(table, stdout);
    fflush(stdout);
    if (!o.quiet)
        fprintf(stderr,
                "twingyre: done; output in %s/ (subgrid.nc, skill.csv, skill.json, offline.nc, "
                "reference/, coarse-*/); report: scripts/twin-report %s\n",
                cfg->out_directory, cfg->out_directory);
    free(table);
    free(cfg);
    return 0;
}
