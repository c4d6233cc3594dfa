/* cli.h - shared helpers of the command layer (not part of the library).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_CLI_H
#define TG_CLI_H

#include <signal.h>
#include <stdio.h>

#include "config.h"
#include "run.h"
#include "status.h"

/* Options every command that takes a config accepts. */
typedef struct {
    const char *config_path;
    const char *sets[256];
    int nsets;
    const char *out_dir;   /* --out, NULL when not given */
    int quiet;
    int overwrite;
    int threads;           /* 0: leave OpenMP's default */
    int member;            /* --member K: ensemble member of stochastic closures */
    int member_given;      /* --member was given */
    int jobs;              /* --jobs N (sweep); 0 when not given */
    int collect, mpi;      /* --collect, --mpi (sweep) */
    const char *slurm_script; /* --slurm-script FILE (sweep), NULL when not given */
} cli_opts;

/* Makes waiting OpenMP threads sleep instead of spinning unless the user's
 * environment sets OMP_WAIT_POLICY or GOMP_SPINCOUNT: sets
 * OMP_WAIT_POLICY=passive and executes the program again with argv
 * (wait_policy.c says why). Call first thing in main; returns when nothing
 * was to be done or the new start failed. */
void cli_wait_policy(char **argv);

/* Parses argv[first..] into o. Unknown options are a usage error (message in
 * st). `allow` is a string of the option names this command takes, e.g.
 * "set out quiet overwrite threads". The one file argument is the config. */
tg_code cli_parse(int argc, char **argv, int first, const char *allow, cli_opts *o,
                  tg_status *st);

/* cli_parse for a command whose file argument is `what` (e.g. "sweep
 * file"), named so in messages; it is o->config_path. */
tg_code cli_parse_for(int argc, char **argv, int first, const char *allow, const char *what,
                      cli_opts *o, tg_status *st);

/* defaults -> file -> each --set -> --out (and --member), without the
 * cross-key checks: for a command that makes checks of its own (twin). */
tg_code cli_read_config(const cli_opts *o, tg_config *cfg, tg_status *st);

/* cli_read_config, then the cross-key checks (tg_config_check). */
tg_code cli_load_config(const cli_opts *o, tg_config *cfg, tg_status *st);

/* Joins argv into one string (for the files' attributes); malloc'ed. */
char *cli_command_line(int argc, char **argv);

/* Makes SIGINT and SIGTERM set the returned flag (for the library's
 * stop_requested fields) instead of ending the program; a failed sigaction
 * is logged as a warning. Call once per command, after tg_set_log. */
volatile sig_atomic_t *cli_catch_stop_signals(void);

/* Writes a duration for a progress line: "12 s", "3.5 min", "2.1 h", or "?"
 * when s is negative, not a number or above `longest` seconds. */
void cli_format_duration(double s, double longest, char *buf, size_t n);

/* Log sink writing "twingyre: ..." lines to stderr, aware of the progress line. */
void cli_log_to_stderr(tg_log_level level, const char *line, void *user);

/* Quiet: the log sink drops information lines (warnings and errors stay).
 * cli_progress_init sets it too. */
void cli_log_set_quiet(int quiet);

/* The start of a command that loads a config: the log sink on stderr,
 * argv[2..] parsed into o with the options in `allow` (cli_parse), the log
 * sink quiet when --quiet was given, and *cfg a malloc'ed config to load
 * (NULL when out of memory; the caller frees it). The message is in st. */
tg_code cli_begin(int argc, char **argv, const char *allow, cli_opts *o, tg_config **cfg,
                  tg_status *st);

/* Progress display: on a terminal one line updated in place (percent,
 * model days, steps per second, time left, kinetic energy, CFL); otherwise a
 * plain line every 5 % of the run. Quiet shows nothing. */
typedef struct {
    int quiet, tty;
    double t_start, t_last;
    long step_start;
    int last_decile;
} cli_progress;

void cli_progress_init(cli_progress *p, int quiet);
void cli_progress_cb(const tg_progress *p, void *user); /* user = cli_progress* */
void cli_progress_done(cli_progress *p);

/* The one-line-per-phase display of `twin` and `vet`: the phase shown now
 * (index, 0: none), when it started and when a terminal line was last
 * redrawn. The commands format the line; these keep the bookkeeping. */
typedef struct {
    int quiet, tty;
    int index;
    double t0, t_last;
} cli_phase_line;

void cli_phase_init(cli_phase_line *d, int quiet);
/* At a report of phase `index` at time t: when the phase changed, ends the
 * previous terminal line, starts the phase's clock and returns 1; else 0. */
int cli_phase_enter(cli_phase_line *d, int index, double t);
/* On a terminal: 1 when the line was redrawn less than 0.2 s ago and this
 * is not the phase's last report (skip it); otherwise notes t and returns 0. */
int cli_phase_throttled(cli_phase_line *d, double t, int last);
/* Ends the open terminal line of the phase shown, if any. */
void cli_phase_end(cli_phase_line *d);

/* Tells the log sink whether a progress line is open on stderr (a line
 * without its newline), so that a log line clears it first. */
void cli_set_line_open(int open);

int cmd_run(int argc, char **argv);
int cmd_describe(int argc, char **argv);
int cmd_closures(int argc, char **argv);
int cmd_twin(int argc, char **argv);
int cmd_fit(int argc, char **argv);
int cmd_vet(int argc, char **argv);
int cmd_sweep(int argc, char **argv);

/* Exit status of a command that ran to its end but judged something failed:
 * a `vet` check, or some `sweep` members (README, "Exit codes"); not a
 * library code. */
#define CLI_EXIT_CHECK_FAILED 9

/* Exit status of a library code (README, "Exit codes"). */
int cli_exit_code(tg_code code);

#endif
