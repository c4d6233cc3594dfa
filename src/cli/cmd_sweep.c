/* cmd_sweep.c - `twingyre sweep SWEEP [--jobs N] [--threads T] [--out DIR]
 * [--quiet] [--member K | --collect | --slurm-script FILE | --mpi]`:
 * argument parsing and the choice of what to do; the work is in the
 * library (sweep.h) and in sweep_pool.c, sweep_mpi.c, sweep_child.c. */
#define _POSIX_C_SOURCE 200809L
#define _XOPEN_SOURCE 700 /* realpath */
#include <limits.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#ifdef _OPENMP
#include <omp.h>
#endif
#ifdef __linux__
#include <sys/prctl.h>
#endif

#include "cli.h"
#include "sweep_cli.h"

/* A member started by a pool (or an MPI rank) stops when that process dies
 * (kill -9, a crash): on Linux it asks for SIGTERM at its parent's death,
 * and if the parent is already gone it stops at once. SIGTERM sets the
 * stop flag, so the member checkpoints and records itself as stopped, and
 * re-running the sweep resumes it instead of racing an orphan. */
static void follow_parent(void)
{
    const char *p = getenv(SWEEP_PARENT_ENV);
    if (!p)
        return;
    pid_t parent = (pid_t)strtol(p, NULL, 10);
#ifdef __linux__
    if (prctl(PR_SET_PDEATHSIG, SIGTERM) != 0)
        tg_log(TG_LOG_WARN, "sweep member: cannot ask to stop with the pool (prctl failed)");
#endif
    if (getppid() != parent)
        raise(SIGTERM);
}

/* The options of sweep (cli_parse_for) and their defaults and exclusions;
 * 0 when the command line is usable, else the exit status. */
static int parse(int argc, char **argv, cli_opts *o)
{
    tg_status st;
    tg_status_clear(&st);
    if (cli_parse_for(argc, argv, 2, "jobs threads out quiet member collect slurm-script mpi list",
                      "sweep file", o, &st) != TG_OK) {
        fprintf(stderr, "twingyre: %s\n", st.msg);
        return cli_exit_code(st.code);
    }
    if (o->member_given + o->collect + (o->slurm_script != NULL) + o->mpi + o->list > 1) {
        fprintf(stderr, "twingyre: --member, --collect, --slurm-script, --mpi and --list exclude "
                        "each other\n");
        return cli_exit_code(TG_ERR_USAGE);
    }
    if (o->jobs == 0)
        o->jobs = 1;
    if (o->threads == 0)
        o->threads = 1; /* each member gets an explicit --threads */
    return 0;
}

/* The executable children and batch scripts should call: this one, or the
 * libtool wrapper beside .libs/ in an uninstalled build (the bare binary
 * there finds its library only through the wrapper's environment). */
static void own_program(char *buf, size_t n)
{
    char real[PATH_MAX];
    if (!realpath("/proc/self/exe", real)) {
        snprintf(buf, n, "/proc/self/exe");
        return;
    }
    snprintf(buf, n, "%s", real);
    char *slash = strrchr(real, '/');
    if (!slash || slash - real < 6 || strncmp(slash - 6, "/.libs", 6) != 0)
        return;
    const char *base = slash + 1;
    if (!strncmp(base, "lt-", 3))
        base += 3;
    char wrapper[PATH_MAX + 16];
    snprintf(wrapper, sizeof wrapper, "%.*s/%s", (int)(slash - 6 - real), real, base);
    if (strlen(wrapper) < n && access(wrapper, X_OK) == 0)
        memcpy(buf, wrapper, strlen(wrapper) + 1);
}

static int under_mpirun(void)
{
    return getenv("OMPI_COMM_WORLD_SIZE") != NULL || getenv("PMI_SIZE") != NULL ||
           getenv("PMIX_RANK") != NULL;
}

/* --list: each member's index, name, folder and values, after the [common]
 * overrides, with the verdict of its resolved config's checks; runs
 * nothing and writes nothing. */
static int list_members(const tg_sweep *sw)
{
    tg_config *cfg = malloc(sizeof *cfg);
    if (!cfg) {
        fprintf(stderr, "twingyre: out of memory\n");
        return cli_exit_code(TG_ERR_NOMEM);
    }
    printf("sweep %s: %d members (%s), base %s, output in %s/\n", sw->path, sw->nmembers,
           sw->kind == TG_SWEEP_TWIN ? "twins" : "runs", sw->base, sw->directory);
    for (int i = 0; i < sw->ncommon; i++)
        printf("  common: %s\n", sw->common[i].set);
    int refused = 0;
    for (int k = 0; k < sw->nmembers; k++) {
        printf("%d %s", k, sw->name[k]);
        for (int a = 0; a < sw->naxes; a++)
            printf(" %s=%s", sw->axis[a].key, sw->axis[a].value[tg_sweep_choice(sw, k, a)]);
        tg_status st;
        tg_status_clear(&st);
        if (tg_sweep_member_config(sw, k, cfg, &st) != TG_OK) {
            printf("  (refused: %s)", st.msg);
            refused++;
        }
        printf("\n");
    }
    free(cfg);
    if (refused)
        printf("%d of %d members would fail their config checks (exit status 2 each)\n", refused,
               sw->nmembers);
    return fflush(stdout) == 0 ? 0 : cli_exit_code(TG_ERR_IO);
}

static int slurm_script(tg_sweep *sw, const cli_opts *a)
{
    tg_status st;
    tg_status_clear(&st);
    char program[PATH_MAX], sweep_abs[PATH_MAX], cwd[PATH_MAX];
    own_program(program, sizeof program);
    if (!realpath(a->config_path, sweep_abs) || !getcwd(cwd, sizeof cwd)) {
        fprintf(stderr, "twingyre: cannot resolve the path of %s\n", a->config_path);
        return cli_exit_code(TG_ERR_IO);
    }
    if (sw->directory[0] != '/') {
        char abs[TG_PATH_LEN];
        if (snprintf(abs, sizeof abs, "%s/%s", cwd, sw->directory) >= (int)sizeof abs) {
            fprintf(stderr, "twingyre: the output folder path is too long\n");
            return cli_exit_code(TG_ERR_USAGE);
        }
        strcpy(sw->directory, abs);
    }
    if (tg_sweep_write_slurm(sw, a->slurm_script, program, sweep_abs, &st) != TG_OK) {
        fprintf(stderr, "twingyre: %s\n", st.msg);
        return cli_exit_code(st.code);
    }
    if (!a->quiet)
        fprintf(stderr, "twingyre: wrote %s (job array of %d members), %s.collect and %s.submit; "
                        "submit with: bash %s.submit\n",
                a->slurm_script, sw->nmembers, a->slurm_script, a->slurm_script, a->slurm_script);
    return 0;
}

int cmd_sweep(int argc, char **argv)
{
    cli_seen_lines seen = {0};
    tg_set_log(cli_log_once, &seen); /* each member's checks would repeat the base's warnings */
    cli_opts a;
    int prc = parse(argc, argv, &a);
    if (prc != 0)
        return prc;
#ifndef TG_WITH_MPI
    if (a.mpi) {
        fprintf(stderr, "twingyre: --mpi: this twingyre was built without MPI; rebuild with "
                        "./configure --with-mpi (Debian packages libopenmpi-dev and "
                        "openmpi-bin)\n");
        return cli_exit_code(TG_ERR_USAGE);
    }
#endif
    cli_log_set_quiet(a.quiet);
    tg_status st;
    tg_status_clear(&st);
    tg_sweep *sw = NULL;
    if (tg_sweep_load(a.config_path, a.out_dir, &sw, &st) != TG_OK) {
        fprintf(stderr, "twingyre: %s\n", st.msg);
        return cli_exit_code(st.code);
    }
    volatile sig_atomic_t *stop = cli_catch_stop_signals();

    int rc = 0;
    if (a.list) {
        rc = list_members(sw);
    } else if (a.slurm_script) {
        rc = slurm_script(sw, &a);
    } else if (a.collect) {
        if (tg_sweep_collect(sw, &st) != TG_OK) {
            fprintf(stderr, "twingyre: %s\n", st.msg);
            rc = cli_exit_code(st.code);
        } else if (!a.quiet) {
            fprintf(stderr, "twingyre: wrote %s/sweep.csv and %s/sweep.json (%d members)\n",
                    sw->directory, sw->directory, sw->nmembers);
        }
    } else if (a.member_given) {
        follow_parent();
#ifdef _OPENMP
        omp_set_num_threads(a.threads);
#endif
        char *cmdline = cli_command_line(argc, argv);
        tg_sweep_member_options mo = {.threads = a.threads, .command_line = cmdline,
                                      .stop_requested = stop};
        int skipped = 0;
        tg_code mrc = tg_sweep_run_member(sw, a.member, &mo, &skipped, &st);
        free(cmdline);
        if (mrc != TG_OK) {
            fprintf(stderr, "twingyre: member %d: %s: %s\n", a.member, tg_code_name(mrc), st.msg);
            rc = cli_exit_code(mrc);
        } else if (!a.quiet) {
            fprintf(stderr, "twingyre: member %d (%s) %s\n", a.member, sw->name[a.member],
                    skipped ? "was already done" : "done");
        }
    } else {
        char program[PATH_MAX];
        own_program(program, sizeof program);
        sweep_ctl c = {.sw = sw, .program = program, .sweep_path = a.config_path, .jobs = a.jobs,
                       .threads = a.threads, .quiet = a.quiet, .stop = stop};
#ifdef TG_WITH_MPI
        if (a.mpi || under_mpirun())
            rc = sweep_mpi(&c, &argc, &argv);
        else
            rc = sweep_pool(&c);
#else
        (void)under_mpirun;
        rc = sweep_pool(&c);
#endif
    }
    tg_sweep_free(sw);
    return rc;
}
