/* cmd_run.c - `twingyre run CONFIG [--set ...] [--out DIR]`. */
#define _POSIX_C_SOURCE 200809L
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#ifdef _OPENMP
#include <omp.h>
#endif

#include "run.h"
#include "cli.h"

int cmd_run(int argc, char **argv)
{
    tg_status st;
    tg_status_clear(&st);
    cli_opts o;
    tg_config cfg;
    tg_set_log(cli_log_to_stderr, NULL);
    if (cli_parse(argc, argv, 2, "set out quiet overwrite threads member", &o, &st) != TG_OK ||
        cli_load_config(&o, TG_USE_RUN, &cfg, &st) != TG_OK) {
        fprintf(stderr, "twingyre: %s\n", st.msg);
        return cli_exit_code(st.code);
    }
#ifdef _OPENMP
    if (o.threads > 0)
        omp_set_num_threads(o.threads);
#endif
    volatile sig_atomic_t *stop = cli_catch_stop_signals();

    cli_progress prog;
    cli_progress_init(&prog, o.quiet);
    char *cmdline = cli_command_line(argc, argv);
    tg_run_options ro = {.command_line = cmdline, .stop_requested = stop,
                         .overwrite = o.overwrite, .progress = cli_progress_cb,
                         .progress_user = &prog};
    tg_code rc = tg_run(&cfg, &ro, &st);
    cli_progress_done(&prog);
    free(cmdline);
    if (rc != TG_OK) {
        fprintf(stderr, "twingyre: %s: %s\n", tg_code_name(rc), st.msg);
        return cli_exit_code(rc);
    }
    if (!o.quiet)
        fprintf(stderr, "twingyre: done; output in %s/ (fields.nc, budget.nc, checkpoint.nc)\n",
                cfg.out_directory);
    return 0;
}
