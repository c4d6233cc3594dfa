/* cmd_vet.c - `twingyre vet CONFIG [--set ...] [--out DIR] [--overwrite]
 * [--threads N] [--member K] [--quiet]`: the closure battery (vet.h), with
 * one progress line per phase, the run table and the verdict table on
 * stdout, and DIR/vet.json. Exit status 0 when every check passes, 9 when
 * one fails, the usual codes for errors. */
#define _POSIX_C_SOURCE 200809L
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#ifdef _OPENMP
#include <omp.h>
#endif

#include "vet.h"
#include "clock.h"
#include "cli.h"

/* A terminal gets one line per phase updated in place; otherwise a line
 * when a phase ends (phases without steps: when they start). */
static void show(const tg_vet_progress *p, void *user)
{
    cli_phase_line *d = user;
    if (d->quiet)
        return;
    const double t = tg_clock_s();
    cli_phase_enter(d, p->index, t);
    const int last = p->step >= p->nsteps;
    const double frac = p->nsteps > 0 ? (double)p->step / p->nsteps : 1.0;
    if (d->tty) {
        if (cli_phase_throttled(d, t, last))
            return;
        if (p->fault)
            fprintf(stderr, "\r\033[K[%d/%d] %-44.44s stopped: %s", p->index, p->count, p->phase,
                    p->fault);
        else
            fprintf(stderr, "\r\033[K[%d/%d] %-44.44s %5.1f%%  day %.1f of %.1f  %.0f s",
                    p->index, p->count, p->phase, 100.0 * frac, p->day, p->last_day, t - d->t0);
        cli_set_line_open(1);
    } else if (last) {
        if (p->fault)
            fprintf(stderr, "twingyre: [%d/%d] %s: stopped, %s (%.1f s)\n", p->index, p->count,
                    p->phase, p->fault, t - d->t0);
        else if (p->nsteps > 0)
            fprintf(stderr, "twingyre: [%d/%d] %s: %ld steps to day %.1f in %.1f s\n", p->index,
                    p->count, p->phase, p->nsteps, p->day, t - d->t0);
        else
            fprintf(stderr, "twingyre: [%d/%d] %s\n", p->index, p->count, p->phase);
    }
    fflush(stderr);
}

int cmd_vet(int argc, char **argv)
{
    tg_status st;
    tg_status_clear(&st);
    cli_opts o;
    tg_config *cfg = NULL;
    tg_code rc = cli_begin(argc, argv, "set out quiet overwrite threads member", &o, &cfg, &st);
    /* Not cli_load_config: tg_vet_run validates (tg_vet_validate). */
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

    char *cmdline = cli_command_line(argc, argv);
    cli_phase_line d;
    cli_phase_init(&d, o.quiet);
    tg_vet_options opt = {.origin = o.config_path, .command_line = cmdline,
                          .stop_requested = stop, .overwrite = o.overwrite,
                          .progress = show, .progress_user = &d};
    tg_vet_report *rep = NULL;
    rc = tg_vet_run(cfg, &opt, &rep, &st);
    cli_phase_end(&d);
    free(cmdline);
    if (rc != TG_OK) {
        fprintf(stderr, "twingyre: %s\n", st.msg);
        free(cfg);
        return cli_exit_code(rc);
    }
    tg_strbuf b = {0};
    tg_vet_table(rep, &b);
    if (b.s)
        fputs(b.s, stdout);
    free(b.s);
    printf("wrote %s/vet.json\n", cfg->out_directory);
    const int passed = rep->passed;
    tg_vet_report_free(rep);
    free(cfg);
    if (fflush(stdout) != 0)
        return cli_exit_code(TG_ERR_IO);
    return passed ? 0 : CLI_EXIT_CHECK_FAILED;
}
