/* sweep_cli.h - the process side of `twingyre sweep` (command layer only):
 * planning which members run, starting a member as a child process
 * (`PROGRAM sweep SWEEP --out DIR --member K --threads T --quiet`, output
 * to NAME/member.log), recording how it ended, the whole-sweep progress
 * line, the local pool (sweep_pool.c) and the MPI dispatcher
 * (sweep_mpi.c, built only with --with-mpi).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_SWEEP_CLI_H
#define TG_SWEEP_CLI_H

#include <signal.h>
#include <sys/types.h>

#include "sweep.h"
#include "cli.h"

/* Environment variable that tells a member process the pid of the pool
 * (or MPI rank) that started it (cmd_sweep.c: it stops when that dies). */
#define SWEEP_PARENT_ENV "TWINGYRE_SWEEP_PARENT"

/* Exit status of a sweep in which some members failed (README): the
 * commands' shared "judged failed" status. */
#define SWEEP_EXIT_MEMBERS_FAILED CLI_EXIT_CHECK_FAILED

typedef struct {
    const tg_sweep *sw;
    const char *program;        /* executable for the children */
    const char *sweep_path;     /* the sweep file as given */
    int jobs, threads, quiet;
    volatile sig_atomic_t *stop;
} sweep_ctl;

/* Members to run, in index order: not done and with a valid config. A
 * member whose config is invalid is recorded as failed (exit status 2)
 * here. Counts go to *done (already done) and *failed. pending has
 * sw->nmembers slots. */
tg_code sweep_plan(const sweep_ctl *c, int *pending, int *npending, int *done, int *failed,
                   tg_status *st);

/* Takes DIR/sweep.lock (a POSIX record lock, released when the process
 * ends) so that two pools or MPI runs never work in one folder at once.
 * Returns the open descriptor or -1 with the message in st. */
int sweep_lock(const sweep_ctl *c, tg_status *st);

/* Starts member k as a child process; returns its pid or -1 (message in st). */
pid_t sweep_launch(const sweep_ctl *c, int k, tg_status *st);

/* After member k's child ended with wait status ws: makes sure member.ini
 * says how it ended and returns the member's code (TG_OK when done). */
tg_code sweep_reap(const sweep_ctl *c, int k, int ws);

/* Whole-sweep progress: one line updated in place on a terminal, else a
 * plain line whenever a count changes. */
typedef struct {
    int quiet, tty, open;
    int total, done, failed, running, left;
    double t0, t_last, busy_s; /* busy_s: summed run time of members finished here */
    int finished_here;
    char last[256];
} sweep_progress;

void sweep_progress_init(sweep_progress *p, int quiet, int total);
/* Counts a member that ended here with code (TG_OK: done; stopped members
 * are left again; others failed) after `seconds` of run time (< 0:
 * unknown, not used for the estimate). Returns 1 when it was stopped. */
int sweep_progress_count(sweep_progress *p, tg_code code, double seconds);
void sweep_progress_show(sweep_progress *p, int force);
void sweep_progress_end(sweep_progress *p);

/* Local pool: runs the pending members, c->jobs at a time; collects at the
 * end. Returns the exit status of the sweep. */
int sweep_pool(const sweep_ctl *c);

/* MPI: members handed to ranks on request; rank 0 collects. Returns the
 * exit status of this rank. */
int sweep_mpi(const sweep_ctl *c, int *argc, char ***argv);

/* End of a pool or MPI sweep: collects sweep.csv / sweep.json, closes the
 * lock descriptor, prints the summary line (unless quiet) and returns the
 * exit status from the counts in pr (interrupted when stopped). */
int sweep_finish(const sweep_ctl *c, int lock, const sweep_progress *pr, int stopped);

#endif
