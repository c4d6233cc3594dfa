/* sweep_child.c - members as child processes (sweep_cli.h): which members
 * to run, starting one with posix_spawn (safe inside an MPI process, where
 * a plain fork may upset the transport), and recording how it ended. */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <fcntl.h>
#include <spawn.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <unistd.h>

#include "sweep_cli.h"

extern char **environ;

tg_code sweep_plan(const sweep_ctl *c, int *pending, int *npending, int *done, int *failed,
                   tg_status *st)
{
    const tg_sweep *sw = c->sw;
    *npending = *done = *failed = 0;
    tg_config *cfg = malloc(sizeof *cfg);
    if (!cfg)
        return tg_fail(st, TG_ERR_NOMEM, "out of memory checking the members");
    tg_code rc = TG_OK;
    for (int k = 0; k < sw->nmembers && rc == TG_OK; k++) {
        if (tg_sweep_member_done(sw, k)) {
            (*done)++;
            continue;
        }
        tg_status mst;
        tg_status_clear(&mst);
        tg_code mrc = tg_sweep_member_config(sw, k, cfg, &mst);
        if (mrc == TG_OK) {
            pending[(*npending)++] = k;
            continue;
        }
        (*failed)++;
        if (!c->quiet)
            fprintf(stderr, "twingyre: member %d (%s) is not run: %s\n", k, sw->name[k], mst.msg);
        rc = tg_sweep_record_failure(sw, k, mrc, mst.msg, st);
    }
    free(cfg);
    return rc;
}

int sweep_lock(const sweep_ctl *c, tg_status *st)
{
    if (tg_sweep_make_directory(c->sw, st) != TG_OK)
        return -1;
    char path[TG_PATH_LEN + 16];
    snprintf(path, sizeof path, "%s/sweep.lock", c->sw->directory);
    int fd = open(path, O_RDWR | O_CREAT, 0644);
    if (fd < 0) {
        tg_fail(st, TG_ERR_IO, "cannot open %s: %s", path, strerror(errno));
        return -1;
    }
    struct flock fl = {.l_type = F_WRLCK, .l_whence = SEEK_SET, .l_start = 0, .l_len = 0};
    if (fcntl(fd, F_SETLK, &fl) != 0) {
        int e = errno;
        close(fd);
        if (e == EACCES || e == EAGAIN)
            tg_fail(st, TG_ERR_IO, "another twingyre sweep is working in %s (%s is locked); "
                                   "wait for it or stop it first", c->sw->directory, path);
        else
            tg_fail(st, TG_ERR_IO, "cannot lock %s: %s", path, strerror(e));
        return -1;
    }
    return fd;
}

pid_t sweep_launch(const sweep_ctl *c, int k, tg_status *st)
{
    const tg_sweep *sw = c->sw;
    if (tg_sweep_prepare_member(sw, k, st) != TG_OK)
        return -1;
    char log[TG_PATH_LEN + TG_SWEEP_NAME_LEN + 16], ks[16], ts[16];
    snprintf(log, sizeof log, "%s/%s/member.log", sw->directory, sw->name[k]);
    snprintf(ks, sizeof ks, "%d", k);
    snprintf(ts, sizeof ts, "%d", c->threads);
    char *argv[] = {(char *)c->program, "sweep", (char *)c->sweep_path, "--out",
                    (char *)sw->directory, "--member", ks, "--threads", ts, "--quiet", NULL};
    posix_spawn_file_actions_t fa;
    if (posix_spawn_file_actions_init(&fa) != 0) {
        tg_fail(st, TG_ERR_NOMEM, "cannot prepare the process of member %d", k);
        return -1;
    }
    int e = posix_spawn_file_actions_addopen(&fa, STDIN_FILENO, "/dev/null", O_RDONLY, 0);
    if (!e)
        e = posix_spawn_file_actions_addopen(&fa, STDERR_FILENO, log,
                                             O_WRONLY | O_CREAT | O_APPEND, 0644);
    if (!e)
        e = posix_spawn_file_actions_adddup2(&fa, STDERR_FILENO, STDOUT_FILENO);
    /* The environment plus SWEEP_PARENT_ENV=this pid, which makes the member
     * stop if this process dies. */
    size_t nenv = 0;
    while (environ[nenv])
        nenv++;
    char parent[64];
    snprintf(parent, sizeof parent, "%s=%ld", SWEEP_PARENT_ENV, (long)getpid());
    char **envp = malloc((nenv + 2) * sizeof *envp);
    if (!envp && !e)
        e = ENOMEM;
    if (envp) {
        size_t m = 0;
        const size_t plen = strlen(SWEEP_PARENT_ENV);
        for (size_t i = 0; i < nenv; i++)
            if (strncmp(environ[i], SWEEP_PARENT_ENV, plen) != 0 || environ[i][plen] != '=')
                envp[m++] = environ[i];
        envp[m++] = parent;
        envp[m] = NULL;
    }
    pid_t pid = -1;
    if (!e)
        e = posix_spawn(&pid, c->program, &fa, NULL, argv, envp);
    free(envp);
    posix_spawn_file_actions_destroy(&fa);
    if (e) {
        tg_fail(st, TG_ERR_IO, "cannot start member %d (%s %s, log %s): %s", k, c->program,
                "sweep", log, strerror(e));
        return -1;
    }
    return pid;
}

tg_code sweep_reap(const sweep_ctl *c, int k, int ws)
{
    const tg_sweep *sw = c->sw;
    tg_member_status ms;
    tg_status st;
    tg_status_clear(&st);
    if (tg_sweep_read_status(sw, k, &ms, &st) == TG_OK && ms.present &&
        strcmp(ms.status, "running") != 0) {
        if (!strcmp(ms.status, "done"))
            return TG_OK;
        return ms.exit_status > 0 ? (tg_code)ms.exit_status : TG_ERR_INTERNAL;
    }
    /* The child did not record its end: it died. */
    char msg[256];
    tg_code code;
    if (WIFSIGNALED(ws)) {
        code = WTERMSIG(ws) == SIGINT || WTERMSIG(ws) == SIGTERM ? TG_ERR_INTERRUPTED
                                                                 : TG_ERR_INTERNAL;
        snprintf(msg, sizeof msg, "the member's process was killed by signal %d; see member.log",
                 WTERMSIG(ws));
    } else {
        int x = WIFEXITED(ws) ? WEXITSTATUS(ws) : -1;
        code = x > 0 && x <= TG_ERR_INTERNAL ? (tg_code)x : TG_ERR_INTERNAL;
        snprintf(msg, sizeof msg,
                 "the member's process ended with status %d without recording it; see member.log",
                 x);
    }
    if (tg_sweep_record_failure(sw, k, code, msg, &st) != TG_OK && !c->quiet)
        fprintf(stderr, "twingyre: %s\n", st.msg);
    return code;
}

int sweep_finish(const sweep_ctl *c, int lock, const sweep_progress *pr, int stopped)
{
    const tg_sweep *sw = c->sw;
    tg_status st;
    tg_status_clear(&st);
    tg_code crc = tg_sweep_collect(sw, &st);
    /* The lock file is removed while still locked, so a sweep that starts
     * now makes a fresh one; it held nothing but the lock. */
    char path[TG_PATH_LEN + 16];
    snprintf(path, sizeof path, "%s/sweep.lock", sw->directory);
    if (lock >= 0 && unlink(path) != 0 && errno != ENOENT)
        tg_log(TG_LOG_WARN, "cannot remove %s: %s", path, strerror(errno));
    if (lock >= 0)
        close(lock);
    if (crc != TG_OK) {
        fprintf(stderr, "twingyre: %s\n", st.msg);
        return cli_exit_code(st.code);
    }
    if (!c->quiet)
        fprintf(stderr, "twingyre: sweep: %d done, %d failed%s; table in %s/sweep.csv and "
                        "sweep.json\n",
                pr->done, pr->failed, stopped ? ", stopped (run the sweep again to resume)" : "",
                sw->directory);
    if (stopped)
        return TG_ERR_INTERRUPTED;
    return pr->failed ? SWEEP_EXIT_MEMBERS_FAILED : 0;
}
