/* sweep_pool.c - the local pool of `twingyre sweep` (sweep_cli.h): keeps up
 * to --jobs members running as child processes, each with --threads
 * threads, starts the next one when one ends, and collects at the end.
 * A stop request (SIGINT/SIGTERM) is passed on to the running members,
 * which write their checkpoint and record themselves as stopped; nothing
 * new starts, and a later run of the same sweep starts them again.
 * DIR/sweep.lock keeps a second pool out of the same folder. */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "clock.h"
#include "cli.h"
#include "sweep_cli.h"

typedef struct {
    pid_t pid;
    int member;
    double t0;
} slot;

/* Starts pending members (from pending[*next]) in the free slots while the
 * sweep is not stopped; 1 when a member could not be started (message on
 * stderr and in st), else 0. */
static int fill_slots(const sweep_ctl *c, slot *run, const int *pending, int npending, int *next,
                      int *nrun, sweep_progress *pr, tg_status *st)
{
    for (int j = 0; j < c->jobs && *next < npending && !*c->stop; j++) {
        if (run[j].pid > 0)
            continue;
        int k = pending[*next];
        pid_t pid = sweep_launch(c, k, st);
        if (pid < 0) {
            fprintf(stderr, "twingyre: %s\n", st->msg);
            return 1;
        }
        (*next)++;
        run[j] = (slot){pid, k, tg_clock_s()};
        (*nrun)++;
        pr->running++;
        pr->left--;
        sweep_progress_show(pr, 1);
    }
    return 0;
}

/* The slot's child ended with wait status ws: records how its member ended,
 * counts it and frees the slot. 1 when the count stops the sweep. */
static int reap_slot(const sweep_ctl *c, slot *s, int ws, sweep_progress *pr)
{
    int stopped = 0;
    tg_code code = sweep_reap(c, s->member, ws);
    if (sweep_progress_count(pr, code, tg_clock_s() - s->t0)) {
        stopped = 1;
    } else if (code != TG_OK && !c->quiet) {
        tg_member_status ms;
        tg_status rst;
        if (tg_sweep_read_status(c->sw, s->member, &ms, &rst) == TG_OK) {
            sweep_progress_end(pr);
            fprintf(stderr, "twingyre: member %d (%s) failed with status %d: %s\n", s->member,
                    c->sw->name[s->member], (int)code, ms.message);
        }
    }
    s->pid = 0;
    sweep_progress_show(pr, 1);
    return stopped;
}

int sweep_pool(const sweep_ctl *c)
{
    const tg_sweep *sw = c->sw;
    tg_status st;
    tg_status_clear(&st);
    int *pending = malloc((size_t)sw->nmembers * sizeof *pending);
    slot *run = calloc((size_t)c->jobs, sizeof *run);
    if (!pending || !run) {
        free(pending);
        free(run);
        fprintf(stderr, "twingyre: out of memory starting the sweep\n");
        return cli_exit_code(TG_ERR_NOMEM);
    }
    int npending, done, failed;
    int lock = sweep_lock(c, &st);
    if (lock < 0 || sweep_plan(c, pending, &npending, &done, &failed, &st) != TG_OK) {
        fprintf(stderr, "twingyre: %s\n", st.msg);
        free(pending);
        free(run);
        if (lock >= 0)
            close(lock);
        return cli_exit_code(st.code);
    }
    if (!c->quiet && done > 0)
        fprintf(stderr, "twingyre: sweep: skipping %d member%s already done\n", done,
                done == 1 ? "" : "s");
    sweep_progress pr;
    sweep_progress_init(&pr, c->quiet, sw->nmembers);
    pr.done = done;
    pr.failed = failed;
    pr.left = npending;
    int next = 0, nrun = 0, stopped = 0, forwarded = 0, launch_error = 0;
    sweep_progress_show(&pr, 1);
    while (nrun > 0 || (next < npending && !*c->stop && !launch_error)) {
        if (*c->stop && !forwarded) {
            for (int j = 0; j < c->jobs; j++)
                if (run[j].pid > 0)
                    kill(run[j].pid, SIGINT);
            forwarded = 1;
        }
        if (!launch_error)
            launch_error = fill_slots(c, run, pending, npending, &next, &nrun, &pr, &st);
        int ws;
        pid_t p = waitpid(-1, &ws, WNOHANG);
        if (p < 0 && errno != EINTR && errno != ECHILD) {
            fprintf(stderr, "twingyre: waitpid: %s\n", strerror(errno));
            break;
        }
        if (p <= 0) {
            struct timespec nap = {0, 100000000L};
            nanosleep(&nap, NULL);
            sweep_progress_show(&pr, 0);
            continue;
        }
        for (int j = 0; j < c->jobs; j++)
            if (run[j].pid == p) {
                stopped |= reap_slot(c, &run[j], ws, &pr);
                nrun--;
            }
    }
    sweep_progress_end(&pr);
    if (*c->stop)
        stopped = 1;
    free(pending);
    free(run);
    if (launch_error) {
        close(lock);
        return cli_exit_code(st.code);
    }
    return sweep_finish(c, lock, &pr, stopped);
}
