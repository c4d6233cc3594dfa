/* throughput.c - model years per wall-clock hour of `twingyre run` for whole
 * configs (tg-bench --throughput; README, "Speed").
 *
 * For each config, a spun-up state is made once and cached: `twingyre run
 * CONFIG --set time.duration_days=SPINUP` with adaptive steps (at 513
 * points about six times faster than the config's fixed step; the spin-up
 * only has to reach an eddying state) and one snapshot at its end, into
 * CACHE/NAME-HASH-SPINUPd-adaptive/, where HASH is the 64-bit FNV-1a hash
 * (ncverify.h) of the config file's bytes, so that an edited config gets a
 * new state; the folder is renamed into place only when the run ended well,
 * and a later benchmark reuses it. Each timed run then goes on for DAYS more
 * model days with the config's usual output (snapshots, budget, log,
 * checkpoints) into a scratch folder: an adaptive row resumes the spin-up's
 * checkpoint.nc (its time, step count and wanted step), a fixed row starts
 * at day 0 from the same state's psi, the last record of its fields.nc (a
 * checkpoint written with adaptive steps does not resume with fixed ones).
 * Its wall time, from start to exit, gives
 *   model years per hour = (DAYS / 365.25) / (wall seconds / 3600).
 * The runs go through every combination of: fixed or adaptive steps (the
 * adaptive row needs a build whose config has the key of --adaptive-set;
 * when `twingyre describe` refuses it, the row is skipped with the reason),
 * 1 or 2 threads, and a quiet machine or one busy process per CPU (this
 * program's own children, spinning until they are killed). The program's
 * wait policy is the one users get (src/cli/wait_policy.c): run the
 * benchmark with GOMP_SPINCOUNT=300000 to see the runtime's default. The
 * table gives each run's CPU time (user + system, getrusage of the children) beside its
 * wall time, and the load average after it: "quiet" means no busy process
 * of the benchmark's own, not an idle machine.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "throughput.h"

#include <errno.h>
#include <signal.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "ncverify.h"

#define TP_MAX_ARGS 32
#define TARGET_LOADED_RATIO 1.2 /* 2-thread wall / 1-thread wall, loaded */

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

int tp_parse_config(const char *s, tp_config *c)
{
    static char buf[TP_MAX_CONFIGS][4096];
    static int used;
    if (used == TP_MAX_CONFIGS || strlen(s) >= sizeof buf[0]) {
        fprintf(stderr, "tg-bench: --throughput: at most %d configs of fewer than %zu "
                        "characters\n", TP_MAX_CONFIGS, sizeof buf[0]);
        return -1;
    }
    char *b = buf[used++];
    strcpy(b, s);
    char *c1 = strchr(b, ':'), *c2 = c1 ? strchr(c1 + 1, ':') : NULL, *end1, *end2;
    if (!c1 || !c2)
        goto bad;
    *c1 = *c2 = '\0';
    c->path = b;
    c->days = strtod(c1 + 1, &end1);
    c->spinup_days = strtod(c2 + 1, &end2);
    if (*end1 || *end2 || !(c->days > 0.0) || !(c->spinup_days > 0.0) || !*b)
        goto bad;
    return 0;
bad:
    fprintf(stderr, "tg-bench: --throughput: expected CONFIG:DAYS:SPINUP_DAYS with DAYS and "
                    "SPINUP_DAYS > 0, got \"%s\"\n", s);
    return -1;
}

/* FNV-1a (ncverify.h) of a file's bytes; 0 when it cannot be read. */
static uint64_t file_hash(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        return 0;
    uint64_t h = TG_FNV1A_START;
    unsigned char buf[4096];
    size_t n;
    while ((n = fread(buf, 1, sizeof buf, f)) > 0)
        h = tg_fnv1a_bytes(h, buf, n);
    fclose(f);
    return h;
}

/* Runs argv (output to `log`, appended); returns the exit status (or -1),
 * the wall time in *wall and the CPU time (user + system) in *cpu. */
/* CPU time (user + system) of the children waited for so far. */
static double children_cpu(void)
{
    struct rusage ru;
    if (getrusage(RUSAGE_CHILDREN, &ru) != 0)
        return 0.0;
    return (double)ru.ru_utime.tv_sec + 1e-6 * (double)ru.ru_utime.tv_usec +
           (double)ru.ru_stime.tv_sec + 1e-6 * (double)ru.ru_stime.tv_usec;
}

static int run_program(char *const *argv, const char *log, double *wall, double *cpu)
{
    fflush(NULL);
    const double c0 = children_cpu();
    double t0 = now_s();
    pid_t pid = fork();
    if (pid < 0)
        return -1;
    if (pid == 0) {
        FILE *l = freopen(log, "a", stdout);
        if (!l || dup2(fileno(stdout), STDERR_FILENO) < 0)
            _exit(126);
        execv(argv[0], argv);
        fprintf(stderr, "tg-bench: cannot run %s: %s\n", argv[0], strerror(errno));
        _exit(127);
    }
    int status = 0;
    while (waitpid(pid, &status, 0) < 0 && errno == EINTR)
        ;
    *wall = now_s() - t0;
    /* The busy processes are waited for only after this: not counted. */
    *cpu = children_cpu() - c0;
    return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
}

double tp_load_average(void)
{
    double l = -1.0;
    FILE *f = fopen("/proc/loadavg", "r");
    if (f) {
        if (fscanf(f, "%lf", &l) != 1)
            l = -1.0;
        fclose(f);
    }
    return l;
}

/* One busy process per CPU: their ids in pids (n of them). */
static int load_start(pid_t *pids, int n)
{
    for (int i = 0; i < n; i++) {
        pids[i] = fork();
        if (pids[i] < 0) {
            for (int j = 0; j < i; j++)
                kill(pids[j], SIGKILL);
            return -1;
        }
        if (pids[i] == 0) {
            volatile unsigned long x = 0;
            for (;;)
                x++;
        }
    }
    return 0;
}

static void load_stop(pid_t *pids, int n)
{
    for (int i = 0; i < n; i++) {
        kill(pids[i], SIGKILL);
        while (waitpid(pids[i], NULL, 0) < 0 && errno == EINTR)
            ;
    }
}

/* mkdir -p: 0, or -1 with errno. */
static int make_folders(const char *path)
{
    char p[4096];
    if (snprintf(p, sizeof p, "%s", path) >= (int)sizeof p) {
        errno = ENAMETOOLONG;
        return -1;
    }
    for (char *c = p + 1;; c++) {
        if (*c != '/' && *c != '\0')
            continue;
        const char keep = *c;
        *c = '\0';
        if (mkdir(p, 0777) != 0 && errno != EEXIST)
            return -1;
        *c = keep;
        if (!keep)
            return 0;
    }
}

/* The spun-up state of config c (made when absent): its checkpoint in `ckpt`
 * and its fields file, whose last record is the same state, in `fields`;
 * 0 or -1. */
static int spun_up(const tp_options *o, const tp_config *c, char *ckpt, char *fields, size_t len)
{
    const uint64_t h = file_hash(c->path);
    if (!h) {
        fprintf(stderr, "tg-bench: cannot read %s: %s\n", c->path, strerror(errno));
        return -1;
    }
    const char *base = strrchr(c->path, '/');
    base = base ? base + 1 : c->path;
    char dir[4096], tmp[4200], log[4300], set[64], snap[64], threads[16];
    snprintf(dir, sizeof dir, "%s/%.*s-%016llx-%gd-adaptive", o->cache,
             (int)(strcspn(base, ".")), base, (unsigned long long)h, c->spinup_days);
    snprintf(ckpt, len, "%s/checkpoint.nc", dir);
    snprintf(fields, len, "%s/fields.nc", dir);
    if (access(ckpt, R_OK) == 0) {
        printf("spun-up state of %s: %s (cached)\n", c->path, ckpt);
        return 0;
    }
    if (make_folders(o->cache) != 0) {
        fprintf(stderr, "tg-bench: cannot make the cache folder %s: %s\n", o->cache,
                strerror(errno));
        return -1;
    }
    snprintf(tmp, sizeof tmp, "%s.part%ld", dir, (long)getpid());
    snprintf(log, sizeof log, "%s.log", tmp);
    snprintf(set, sizeof set, "time.duration_days=%g", c->spinup_days);
    snprintf(snap, sizeof snap, "output.snapshot_every_days=%g", c->spinup_days);
    snprintf(threads, sizeof threads, "%d", o->threads[1]);
    char *argv[] = {(char *)o->program, "run", (char *)c->path, "--set", set, "--set", snap,
                    "--out", tmp, "--threads", threads, "--quiet", "--set",
                    (char *)o->adaptive_set, NULL};
    fprintf(stderr, "tg-bench: spinning up %s for %g model days into %s (once; log %s) ...\n",
            c->path, c->spinup_days, dir, log);
    double wall, cpu;
    int rc = run_program(argv, log, &wall, &cpu);
    if (rc != 0 || rename(tmp, dir) != 0) {
        fprintf(stderr, "tg-bench: the spin-up of %s failed (exit %d); see %s\n", c->path, rc,
                log);
        return -1;
    }
    remove(log);
    printf("spun-up state of %s: %s (made in %.0f s: %g model days)\n", c->path, ckpt, wall,
           c->spinup_days);
    return 0;
}

typedef struct {
    int ok, skipped;
    double wall, cpu, years_per_hour;
} tp_row;

int tp_run(const tp_options *o)
{
    const int ncpu = (int)sysconf(_SC_NPROCESSORS_ONLN) > 0 ? (int)sysconf(_SC_NPROCESSORS_ONLN)
                                                            : 1;
    int failures = 0;
    printf("\nThroughput: `%s run` from a spun-up state, the config's usual output; wall time "
           "from start to exit.\nCache of spun-up states: %s\n", o->program, o->cache);
    /* Does this build know adaptive steps? */
    char why[512] = "";
    int adaptive = 0;
    if (o->nconfigs > 0) {
        char *argv[] = {(char *)o->program, "describe", (char *)o->configs[0].path, "--set",
                        (char *)o->adaptive_set, NULL};
        char log[4200];
        snprintf(log, sizeof log, "%s/describe.log", o->scratch);
        remove(log);
        double w, cpu;
        adaptive = run_program(argv, log, &w, &cpu) == 0;
        if (!adaptive) {
            FILE *f = fopen(log, "r");
            if (f) {
                char line[512];
                while (fgets(line, sizeof line, f))
                    if (strstr(line, "twingyre:"))
                        snprintf(why, sizeof why, "%s", line);
                fclose(f);
            }
            why[strcspn(why, "\n")] = '\0';
        }
    }
    if (!adaptive)
        printf("adaptive rows SKIPPED: this build refuses --set %s (%s); they need adaptive "
               "stepping (issue 14, part 2)\n", o->adaptive_set, why[0] ? why : "no message");

    for (int ci = 0; ci < o->nconfigs; ci++) {
        const tp_config *c = &o->configs[ci];
        char ckpt[4200], fields[4200];
        if (!adaptive) {
            printf("\n%s: skipped, the spin-up needs adaptive steps\n", c->path);
            continue;
        }
        if (spun_up(o, c, ckpt, fields, sizeof ckpt) != 0) {
            failures++;
            continue;
        }
        tp_row rows[2][2][2]; /* [adaptive][loaded][threads] */
        memset(rows, 0, sizeof rows);
        printf("\n%s: %g model days per run after %g days of spin-up\n", c->path, c->days,
               c->spinup_days);
        printf("%-9s %-7s %3s %10s %10s %12s %9s\n", "steps", "machine", "thr", "wall s", "cpu s",
               "years/hour", "load avg");
        for (int ad = 0; ad < 2; ad++)
            for (int ld = 0; ld < 2; ld++)
                for (int ti = 0; ti < 2; ti++) {
                    tp_row *r = &rows[ad][ld][ti];
                    const char *steps = ad ? "adaptive" : "fixed";
                    const char *mach = ld ? "loaded" : "quiet";
                    if (ad && !adaptive) {
                        r->skipped = 1;
                        printf("%-9s %-7s %3d %10s %10s %12s\n", steps, mach, o->threads[ti], "-",
                               "-", "skipped");
                        continue;
                    }
                    char init[4300], dur[64], threads[16], out[4200], log[4300];
                    snprintf(init, sizeof init, "initial.state=%s", ad ? ckpt : fields);
                    snprintf(dur, sizeof dur, "time.duration_days=%.17g",
                             ad ? c->spinup_days + c->days : c->days);
                    snprintf(threads, sizeof threads, "%d", o->threads[ti]);
                    snprintf(out, sizeof out, "%s/run", o->scratch);
                    snprintf(log, sizeof log, "%s/run.log", o->scratch);
                    remove(log);
                    char *argv[TP_MAX_ARGS] = {(char *)o->program, "run", (char *)c->path,
                                               "--set", init, "--set", dur, "--out", out,
                                               "--overwrite", "--threads", threads, "--quiet"};
                    int na = 13;
                    argv[na++] = "--set";
                    argv[na++] = (char *)(ad ? o->adaptive_set : o->fixed_set);
                    argv[na] = NULL;
                    pid_t busy[64];
                    const int nbusy = ncpu < 64 ? ncpu : 64;
                    if (ld && load_start(busy, nbusy) != 0) {
                        fprintf(stderr, "tg-bench: cannot start the busy processes\n");
                        failures++;
                        continue;
                    }
                    int rc = run_program(argv, log, &r->wall, &r->cpu);
                    if (ld)
                        load_stop(busy, nbusy);
                    if (rc != 0) {
                        printf("%-9s %-7s %3d   failed (exit %d); see %s\n", steps, mach,
                               o->threads[ti], rc, log);
                        failures++;
                        continue;
                    }
                    r->ok = 1;
                    r->years_per_hour = c->days / 365.25 / (r->wall / 3600.0);
                    printf("%-9s %-7s %3d %10.2f %10.2f %12.1f %9.2f\n", steps, mach,
                           o->threads[ti], r->wall, r->cpu, r->years_per_hour, tp_load_average());
                    fflush(stdout);
                }
        for (int ad = 0; ad < 2; ad++) {
            const tp_row *a = &rows[ad][1][0], *b = &rows[ad][1][1];
            const tp_row *qa = &rows[ad][0][0], *qb = &rows[ad][0][1];
            if (a->ok && b->ok) {
                const double v = b->wall / a->wall;
                printf("target: loaded, %d-thread wall / %d-thread wall (%s) %.2f, limit %.1f: "
                       "%s\n", o->threads[1], o->threads[0], ad ? "adaptive" : "fixed", v,
                       TARGET_LOADED_RATIO, v <= TARGET_LOADED_RATIO ? "target met"
                                                                     : "target NOT met");
            }
            if (qa->ok && qb->ok)
                printf("quiet speed-up, %d threads over %d (%s): %.2f\n", o->threads[1],
                       o->threads[0], ad ? "adaptive" : "fixed", qa->wall / qb->wall);
        }
    }
    return failures;
}
