/* sweep_mpi.c - `mpirun -np P twingyre sweep SWEEP` (sweep_cli.h; compiled
 * only with ./configure --with-mpi). Members are handed out dynamically:
 * every rank runs one member at a time as a child process (as the local
 * pool does) and asks rank 0 for the next when it finishes; rank 0 answers
 * requests between checks on its own child, so it works too. Rank 0 plans
 * the sweep (skips members already done, records invalid configs) before
 * handing anything out and writes sweep.csv and sweep.json at the end.
 * Only this file calls MPI; the library stays free of it.
 *
 * Messages: worker -> 0, tag TAG_ASK: {finished member or -1, its code};
 * 0 -> worker, tag TAG_GIVE: member index, or -1 for "no more work". */
#define _POSIX_C_SOURCE 200809L
#include <mpi.h>

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

enum { TAG_ASK = 11, TAG_GIVE = 12 };

static void nap(void)
{
    struct timespec t = {0, 50000000L};
    nanosleep(&t, NULL);
}

static int mpi_ok(int rc, const char *what)
{
    if (rc == MPI_SUCCESS)
        return 1;
    char msg[MPI_MAX_ERROR_STRING];
    int len = 0;
    MPI_Error_string(rc, msg, &len);
    fprintf(stderr, "twingyre: MPI: %s failed: %s\n", what, msg);
    return 0;
}

/* Waits for a child, passing a stop request on to it. */
static int wait_child(const sweep_ctl *c, pid_t pid)
{
    int ws = 0, forwarded = 0;
    for (;;) {
        pid_t p = waitpid(pid, &ws, WNOHANG);
        if (p == pid)
            return ws;
        if (p < 0 && errno != EINTR)
            return 0;
        if (*c->stop && !forwarded) {
            kill(pid, SIGINT);
            forwarded = 1;
        }
        nap();
    }
}

/* A message that could not be sent or received leaves the other side
 * waiting for it for ever (rank 0 for a request, a worker for its answer),
 * so a failed exchange ends the whole job: what the members wrote stays,
 * and the sweep resumes from it. */
static int give_up(const char *what)
{
    fprintf(stderr, "twingyre: sweep: stopping every rank after the MPI failure (%s); members "
                    "finished so far are kept, run the sweep again to resume\n", what);
    MPI_Abort(MPI_COMM_WORLD, cli_exit_code(TG_ERR_INTERNAL));
    return cli_exit_code(TG_ERR_INTERNAL); /* MPI_Abort does not return in practice */
}

static int worker(const sweep_ctl *c)
{
    int msg[2] = {-1, 0};
    tg_status st;
    for (;;) {
        int k;
        if (!mpi_ok(MPI_Send(msg, 2, MPI_INT, 0, TAG_ASK, MPI_COMM_WORLD), "asking for work"))
            return give_up("asking for work");
        if (!mpi_ok(MPI_Recv(&k, 1, MPI_INT, 0, TAG_GIVE, MPI_COMM_WORLD, MPI_STATUS_IGNORE),
                    "receiving work"))
            return give_up("receiving work");
        if (k < 0)
            return 0;
        tg_status_clear(&st);
        pid_t pid = sweep_launch(c, k, &st);
        if (pid < 0) {
            fprintf(stderr, "twingyre: %s\n", st.msg);
            tg_sweep_record_failure(c->sw, k, st.code, st.msg, &st);
            msg[0] = k;
            msg[1] = (int)TG_ERR_IO;
            continue;
        }
        msg[0] = k;
        msg[1] = (int)sweep_reap(c, k, wait_child(c, pid));
    }
}

static int leader(const sweep_ctl *c, int size)
{
    const tg_sweep *sw = c->sw;
    tg_status st;
    tg_status_clear(&st);
    int *pending = malloc((size_t)sw->nmembers * sizeof *pending);
    int npending = 0, done = 0, failed = 0, planned = pending != NULL;
    int lock = -1;
    if (!pending)
        fprintf(stderr, "twingyre: out of memory starting the sweep\n");
    else if ((lock = sweep_lock(c, &st)) < 0 ||
             sweep_plan(c, pending, &npending, &done, &failed, &st) != TG_OK) {
        fprintf(stderr, "twingyre: %s\n", st.msg);
        planned = 0;
    }
    if (!planned)
        npending = 0; /* hand out nothing; the workers still need their answer */
    if (!c->quiet && done > 0)
        fprintf(stderr, "twingyre: sweep: skipping %d member%s already done\n", done,
                done == 1 ? "" : "s");
    if (!c->quiet)
        fprintf(stderr, "twingyre: sweep: %d ranks\n", size);
    sweep_progress pr;
    sweep_progress_init(&pr, c->quiet, sw->nmembers);
    pr.done = done;
    pr.failed = failed;
    pr.left = npending;
    sweep_progress_show(&pr, 1);
    int next = 0, workers = size - 1, stopped = 0, own = -1;
    pid_t own_pid = 0;
    double t_own = 0.0;
    while (workers > 0 || own_pid > 0 || (next < npending && !*c->stop)) {
        int flag = 0;
        MPI_Status ms;
        if (workers > 0 &&
            !mpi_ok(MPI_Iprobe(MPI_ANY_SOURCE, TAG_ASK, MPI_COMM_WORLD, &flag, &ms), "probing")) {
            give_up("probing");
            break;
        }
        if (flag) {
            int msg[2], give = -1;
            if (!mpi_ok(MPI_Recv(msg, 2, MPI_INT, ms.MPI_SOURCE, TAG_ASK, MPI_COMM_WORLD,
                                 MPI_STATUS_IGNORE), "receiving a request")) {
                give_up("receiving a request");
                break;
            }
            if (msg[0] >= 0 && msg[0] < sw->nmembers) {
                tg_member_status mst; /* its run time, for the estimate */
                const int known = tg_sweep_read_status(sw, msg[0], &mst, &st) == TG_OK &&
                                  mst.present;
                if (sweep_progress_count(&pr, (tg_code)msg[1], known ? mst.seconds : -1.0))
                    stopped = 1;
            }
            if (next < npending && !*c->stop) {
                give = pending[next++];
                pr.running++;
                pr.left--;
            } else {
                workers--;
            }
            if (!mpi_ok(MPI_Send(&give, 1, MPI_INT, ms.MPI_SOURCE, TAG_GIVE, MPI_COMM_WORLD),
                        "handing out work")) {
                give_up("handing out work");
                break;
            }
            sweep_progress_show(&pr, 1);
            continue;
        }
        if (own_pid == 0 && next < npending && !*c->stop) {
            own = pending[next++];
            own_pid = sweep_launch(c, own, &st);
            if (own_pid < 0) {
                fprintf(stderr, "twingyre: %s\n", st.msg);
                tg_sweep_record_failure(sw, own, st.code, st.msg, &st);
                own_pid = 0;
                pr.failed++;
                pr.left--;
            } else {
                pr.running++;
                pr.left--;
                t_own = tg_clock_s();
            }
            sweep_progress_show(&pr, 1);
        }
        if (own_pid > 0) {
            int ws;
            if (*c->stop)
                kill(own_pid, SIGINT);
            if (waitpid(own_pid, &ws, WNOHANG) == own_pid) {
                if (sweep_progress_count(&pr, sweep_reap(c, own, ws), tg_clock_s() - t_own))
                    stopped = 1;
                own_pid = 0;
                sweep_progress_show(&pr, 1);
                continue;
            }
        }
        nap();
        sweep_progress_show(&pr, 0);
    }
    sweep_progress_end(&pr);
    free(pending);
    if (!planned) {
        if (lock >= 0)
            close(lock);
        return cli_exit_code(st.code ? st.code : TG_ERR_NOMEM);
    }
    if (*c->stop)
        stopped = 1;
    return sweep_finish(c, lock, &pr, stopped);
}

int sweep_mpi(const sweep_ctl *c, int *argc, char ***argv)
{
    int rank = 0, size = 1;
    if (!mpi_ok(MPI_Init(argc, argv), "MPI_Init"))
        return cli_exit_code(TG_ERR_INTERNAL);
    if (!mpi_ok(MPI_Comm_set_errhandler(MPI_COMM_WORLD, MPI_ERRORS_RETURN),
                "setting the error handler") ||
        !mpi_ok(MPI_Comm_rank(MPI_COMM_WORLD, &rank), "MPI_Comm_rank") ||
        !mpi_ok(MPI_Comm_size(MPI_COMM_WORLD, &size), "MPI_Comm_size")) {
        MPI_Abort(MPI_COMM_WORLD, TG_ERR_INTERNAL);
        return cli_exit_code(TG_ERR_INTERNAL);
    }
    sweep_ctl mine = *c;
    if (rank != 0)
        mine.quiet = 1; /* one progress line, from rank 0 */
    int rc = rank == 0 ? leader(&mine, size) : worker(&mine);
    int all = rc;
    /* Every rank exits with rank 0's status (a rank's own error first). */
    if (!mpi_ok(MPI_Bcast(&all, 1, MPI_INT, 0, MPI_COMM_WORLD), "sharing the exit status"))
        all = cli_exit_code(TG_ERR_INTERNAL);
    if (!mpi_ok(MPI_Finalize(), "MPI_Finalize") && rc == 0)
        rc = cli_exit_code(TG_ERR_INTERNAL);
    return rank == 0 ? rc : (rc ? rc : all);
}
