/* bench.c - tg-bench: speed and memory of the layered model's time step.
 *
 * For every (points, threads) configuration the program forks a child that
 * builds a double-gyre model with a noise initial state (config defaults
 * otherwise: two layers), takes warm-up steps, and then repeats in turn:
 *   - one SSP-RK3 step with budget rates (tg_step as a run calls it), and
 *     the per-step state diagnostics (tg_diag_compute) a run adds;
 *   - the 2-D sine transforms one step needs, on their own: 3 stages x
 *     (one forward + one inverse per vertical mode) = 6 x layers transforms,
 *     through tg_dst_forward / tg_dst_inverse on an array with the model's
 *     row stride;
 *   - as a reference, FFTW's 2-D real-to-complex transform of
 *     (points-1) x (points-1) values (FFTW_ESTIMATE plan), in batches.
 * Interleaving them makes every figure see the same machine conditions;
 * each figure is the median over the repetitions. Peak resident memory is
 * getrusage's ru_maxrss of the child after the warm-up (every model array has
 * been written) and before the benchmark's own arrays exist; a child per
 * configuration keeps it from growing across configurations.
 *
 * Nothing here is a pass/fail test: the targets are printed beside the
 * figures, and the exit status only says whether every configuration ran.
 * The FFTW reference runs on one thread unless the program is compiled with
 * -DTG_BENCH_FFTW_OMP and linked with -lfftw3_omp, when it uses the
 * configuration's thread count.
 *
 * Usage: tg-bench [--sizes 129,257,513] [--threads 1,2] [--steps N]
 *                 [--warmup N] [--seconds S] [--set section.key=value]...
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <errno.h>
#include <fftw3.h>
#include <math.h>
#include <omp.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "budget.h"
#include "config.h"
#include "model.h"
#include "sinetf.h"
#include "status.h"
#include "stepper.h"
#include "twingyre.h"

#define MAX_LIST 16
#define MAX_SETS 64

/* Targets (the benchmark specification). */
#define TARGET_STEP_OVER_DST 1.5   /* at TARGET_STEP_POINTS */
#define TARGET_STEP_POINTS 513
#define TARGET_DST_OVER_R2C 2.0
#define TARGET_PEAK_MB 120.0
#define TARGET_SPEEDUP 1.6         /* two threads over one */

typedef struct {
    int sizes[MAX_LIST], nsizes;
    int threads[MAX_LIST], nthreads;
    int steps;       /* 0: enough for `seconds` per configuration */
    int warmup;
    double seconds;
    const char *sets[MAX_SETS];
    int nsets;
} options;

/* What a child sends back through its pipe. */
typedef struct {
    int ok;
    char msg[TG_MSG_LEN + 64];
    int points, threads, layers, steps; /* steps: timed repetitions */
    int ndst;            /* sine transforms per step */
    double step_ms;      /* median time of one tg_step with rates */
    double diag_ms;      /* median time of one tg_diag_compute */
    double dst_step_ms;  /* median time of the ndst transforms of one step */
    double dst_ms;       /* dst_step_ms / ndst */
    double r2c_ms;       /* median time of one r2c 2-D FFT */
    int r2c_threads;
    double rss_start_mb; /* ru_maxrss before the model exists */
    double rss_peak_mb;  /* ru_maxrss after the warm-up steps */
    double cpu_per_wall; /* process CPU time / wall time over the timed steps */
    double max_cfl;      /* at the end, to show the state is sane */
} result;

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static double cpu_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* The 1-minute load average, or -1 when /proc/loadavg cannot be read. */
static double load_average(void)
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

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static double median(double *v, int n)
{
    qsort(v, (size_t)n, sizeof *v, cmp_double);
    return n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
}

static double maxrss_mb(void)
{
    struct rusage ru;
    if (getrusage(RUSAGE_SELF, &ru) != 0)
        return -1.0;
    return (double)ru.ru_maxrss / 1024.0; /* Linux: kilobytes */
}

static void usage(FILE *out)
{
    fprintf(out,
            "usage: tg-bench [--sizes LIST] [--threads LIST] [--steps N] [--warmup N]\n"
            "                [--seconds S] [--set section.key=value]...\n"
            "  --sizes LIST     grid points per side, 2^k + 1 (default 129,257,513)\n"
            "  --threads LIST   OpenMP thread counts (default 1,2)\n"
            "  --steps N        timed steps per configuration (default: enough for\n"
            "                   --seconds, at least 5)\n"
            "  --warmup N       untimed steps first (default 2, at least 1)\n"
            "  --seconds S      time aimed at per configuration and measurement (default 1)\n"
            "  --set S.K=V      config override, as for `twingyre run` (repeatable)\n"
            "The model: two layers, double-gyre wind, noise initial state (config defaults).\n");
}

static int parse_list(const char *s, int *out, int *n, const char *what)
{
    *n = 0;
    const char *p = s;
    while (*p) {
        char *end;
        errno = 0;
        long v = strtol(p, &end, 10);
        if (end == p || errno || v < 1 || v > 100000 || (*end && *end != ',')) {
            fprintf(stderr, "tg-bench: %s: expected a comma-separated list of positive "
                            "integers, got \"%s\"\n", what, s);
            return -1;
        }
        if (*n == MAX_LIST) {
            fprintf(stderr, "tg-bench: %s: at most %d values\n", what, MAX_LIST);
            return -1;
        }
        out[(*n)++] = (int)v;
        p = *end ? end + 1 : end;
    }
    if (*n == 0) {
        fprintf(stderr, "tg-bench: %s: empty list\n", what);
        return -1;
    }
    return 0;
}

static int parse_int(const char *s, int lo, int *out, const char *what)
{
    char *end;
    errno = 0;
    long v = strtol(s, &end, 10);
    if (end == s || *end || errno || v < lo || v > 10000000) {
        fprintf(stderr, "tg-bench: %s: expected an integer >= %d, got \"%s\"\n", what, lo, s);
        return -1;
    }
    *out = (int)v;
    return 0;
}

static int parse_args(int argc, char **argv, options *o)
{
    *o = (options){.sizes = {129, 257, 513}, .nsizes = 3, .threads = {1, 2}, .nthreads = 2,
                   .steps = 0, .warmup = 2, .seconds = 1.0};
    for (int a = 1; a < argc; a++) {
        const char *opt = argv[a];
        if (!strcmp(opt, "--help") || !strcmp(opt, "-h")) {
            usage(stdout);
            exit(0);
        }
        if (a + 1 >= argc) {
            fprintf(stderr, "tg-bench: %s needs a value (see --help)\n", opt);
            return -1;
        }
        const char *val = argv[++a];
        if (!strcmp(opt, "--sizes")) {
            if (parse_list(val, o->sizes, &o->nsizes, "--sizes"))
                return -1;
        } else if (!strcmp(opt, "--threads")) {
            if (parse_list(val, o->threads, &o->nthreads, "--threads"))
                return -1;
        } else if (!strcmp(opt, "--steps")) {
            if (parse_int(val, 5, &o->steps, "--steps"))
                return -1;
        } else if (!strcmp(opt, "--warmup")) {
            if (parse_int(val, 1, &o->warmup, "--warmup"))
                return -1;
        } else if (!strcmp(opt, "--seconds")) {
            char *end;
            o->seconds = strtod(val, &end);
            if (end == val || *end || !(o->seconds > 0.0) || o->seconds > 3600.0) {
                fprintf(stderr, "tg-bench: --seconds: expected a number in (0, 3600], got "
                                "\"%s\"\n", val);
                return -1;
            }
        } else if (!strcmp(opt, "--set")) {
            if (o->nsets == MAX_SETS) {
                fprintf(stderr, "tg-bench: at most %d --set options\n", MAX_SETS);
                return -1;
            }
            o->sets[o->nsets++] = val;
        } else {
            fprintf(stderr, "tg-bench: unknown option \"%s\" (see --help)\n", opt);
            return -1;
        }
    }
    return 0;
}

/* The configuration of one grid size; 0 or a tg_code with a message on stderr. */
static int make_config(const options *o, int points, tg_config *cfg)
{
    tg_status st;
    char buf[64];
    tg_config_defaults(cfg);
    const char *fixed[] = {"wind.profile=double_gyre", "initial.state=noise"};
    for (size_t i = 0; i < sizeof fixed / sizeof fixed[0]; i++)
        if (tg_config_set(cfg, fixed[i], &st) != TG_OK)
            goto fail;
    for (int i = 0; i < o->nsets; i++)
        if (tg_config_set(cfg, o->sets[i], &st) != TG_OK)
            goto fail;
    snprintf(buf, sizeof buf, "grid.points=%d", points);
    if (tg_config_set(cfg, buf, &st) != TG_OK)
        goto fail;
    if (tg_config_check(cfg, "tg-bench", &st) != TG_OK)
        goto fail;
    if (cfg->initial_kind != TG_INIT_NOISE) {
        fprintf(stderr, "tg-bench: the benchmark starts from noise; do not set initial.state\n");
        return TG_ERR_USAGE;
    }
    return 0;
fail:
    fprintf(stderr, "tg-bench: the configuration of %d points: %s\n", points, st.msg);
    return st.code ? st.code : TG_ERR_CONFIG;
}

/* What the transform timings need, made once per configuration. */
typedef struct {
    tg_dst *dst;
    double *field, *out, *spec; /* ns x ns, ns x ns, n x n */
    int ns, nl;
    int N;                      /* r2c size: N x N */
    double *rin;
    fftw_complex *rout;
    fftw_plan plan;
} kit;

static void kit_free(kit *k)
{
    if (k->plan)
        fftw_destroy_plan(k->plan);
    fftw_free(k->rin);
    fftw_free(k->rout);
    tg_dst_destroy(k->dst);
    free(k->field);
    free(k->out);
    free(k->spec);
    memset(k, 0, sizeof *k);
}

/* Sine transforms of the model's size on a copy of its PV anomaly (same row
 * stride), and the FFTW r2c reference. 0, or -1 with a message in msg. */
static int kit_make(kit *k, const tg_model *m, int threads, int *r2c_threads, char *msg,
                    size_t msglen)
{
    tg_status st;
    memset(k, 0, sizeof *k);
    const int ns = m->geom->ns, n = ns - 2;
    const long npl = m->npl;
    k->ns = ns;
    k->nl = m->nl;
    k->N = ns - 1;
    k->dst = tg_dst_create(n, &st);
    if (!k->dst) {
        snprintf(msg, msglen, "transform set-up: %s", st.msg);
        return -1;
    }
    k->field = malloc(sizeof(double) * (size_t)npl);
    k->out = calloc((size_t)npl, sizeof(double));
    k->spec = malloc(sizeof(double) * (size_t)n * n);
    k->rin = fftw_malloc(sizeof(double) * (size_t)k->N * k->N);
    k->rout = fftw_malloc(sizeof(fftw_complex) * (size_t)k->N * (k->N / 2 + 1));
    if (!k->field || !k->out || !k->spec || !k->rin || !k->rout) {
        snprintf(msg, msglen, "no memory for the transform test arrays (%d x %d)", ns, ns);
        kit_free(k);
        return -1;
    }
    for (long p = 0; p < npl; p++)
        k->field[p] = m->q[p] - m->beta_y[p];
#ifdef TG_BENCH_FFTW_OMP
    fftw_plan_with_nthreads(threads);
    *r2c_threads = threads;
#else
    (void)threads;
    *r2c_threads = 1;
#endif
    k->plan = fftw_plan_dft_r2c_2d(k->N, k->N, k->rin, k->rout, FFTW_ESTIMATE);
#ifdef TG_BENCH_FFTW_OMP
    fftw_plan_with_nthreads(1);
#endif
    if (!k->plan) {
        snprintf(msg, msglen, "FFTW could not plan the %d x %d r2c reference", k->N, k->N);
        kit_free(k);
        return -1;
    }
    for (long p = 0; p < (long)k->N * k->N; p++)
        k->rin[p] = sin(0.001 * (double)p) + 0.25 * cos(0.37 * (double)p);
    return 0;
}

/* Time (s) of the transforms of one step: 3 stages x nl modes x (forward + inverse). */
static double kit_dst_step(kit *k)
{
    const int ns = k->ns;
    double t0 = now_s();
    for (int s = 0; s < 3; s++)
        for (int md = 0; md < k->nl; md++) {
            tg_dst_forward(k->dst, k->field + ns + 1, ns, k->spec);
            tg_dst_inverse(k->dst, k->spec, k->out + ns + 1, ns);
        }
    return now_s() - t0;
}

/* Time (s) of one r2c transform, averaged over a batch of KIT_R2C_BATCH. */
#define KIT_R2C_BATCH 12
static double kit_r2c(kit *k)
{
    double t0 = now_s();
    for (int i = 0; i < KIT_R2C_BATCH; i++)
        fftw_execute(k->plan);
    return (now_s() - t0) / KIT_R2C_BATCH;
}

/* The work of one configuration, in the child. Fills r; returns 0 or -1.
 * After the warm-up, each repetition times one step, the diagnostics, the
 * transforms of one step and a batch of r2c transforms in turn, so that all
 * of them see the same machine conditions; the figures are medians. */
static int run_config(const options *o, const tg_config *cfg, int threads, result *r)
{
    tg_status st;
    tg_status_clear(&st);
    omp_set_num_threads(threads);
    r->points = cfg->points;
    r->threads = threads;
    r->layers = cfg->nlayers;
    r->ndst = 6 * cfg->nlayers;
    r->rss_start_mb = maxrss_mb();

    tg_model *m = tg_model_create(cfg, &st);
    if (!m) {
        snprintf(r->msg, sizeof r->msg, "model set-up: %s", st.msg);
        return -1;
    }
    tg_model_set_noise(m, cfg->noise_amplitude_m2_per_s, cfg->seed);

    tg_term_rates rates;
    tg_diag diag;
    double last = 0.0;
    for (int s = 0; s < o->warmup; s++) {
        double t0 = now_s();
        if (tg_step(m, &rates, &st) != TG_OK) {
            snprintf(r->msg, sizeof r->msg, "warm-up step %d: %s", s + 1, st.msg);
            tg_model_destroy(m);
            return -1;
        }
        last = now_s() - t0;
        tg_diag_compute(m, &diag);
    }
    /* Every array of the model has been written by now. */
    r->rss_peak_mb = maxrss_mb();

    kit k;
    if (kit_make(&k, m, threads, &r->r2c_threads, r->msg, sizeof r->msg) != 0) {
        tg_model_destroy(m);
        return -1;
    }
    kit_dst_step(&k); /* untimed first calls */
    kit_r2c(&k);

    int reps = o->steps;
    if (reps == 0)
        reps = (int)fmin(100000.0, fmax(5.0, ceil(o->seconds / (last + 1e-9))));
    r->steps = reps;
    double *tv = malloc(sizeof(double) * 4 * (size_t)reps);
    if (!tv) {
        kit_free(&k);
        tg_model_destroy(m);
        snprintf(r->msg, sizeof r->msg, "no memory for %d timings", reps);
        return -1;
    }
    double *ts = tv, *td = tv + reps, *tf = tv + 2 * reps, *tr = tv + 3 * reps;
    double wall = 0.0, cpu = 0.0;
    int rc = 0;
    for (int s = 0; s < reps; s++) {
        double c0 = cpu_s(), t0 = now_s();
        tg_code code = tg_step(m, &rates, &st);
        double t1 = now_s(), c1 = cpu_s();
        if (code != TG_OK) {
            snprintf(r->msg, sizeof r->msg, "timed step %d: %s", s + 1, st.msg);
            rc = -1;
            break;
        }
        ts[s] = t1 - t0;
        wall += t1 - t0;
        cpu += c1 - c0;
        t0 = now_s();
        tg_diag_compute(m, &diag);
        td[s] = now_s() - t0;
        tf[s] = kit_dst_step(&k);
        tr[s] = kit_r2c(&k);
    }
    if (rc == 0 && (!isfinite(diag.max_cfl) || diag.max_cfl > cfg->max_cfl)) {
        snprintf(r->msg, sizeof r->msg, "the state blew up (max CFL %g)", diag.max_cfl);
        rc = -1;
    }
    if (rc == 0) {
        r->step_ms = 1e3 * median(ts, reps);
        r->diag_ms = 1e3 * median(td, reps);
        r->dst_step_ms = 1e3 * median(tf, reps);
        r->dst_ms = r->dst_step_ms / r->ndst;
        r->r2c_ms = 1e3 * median(tr, reps);
        r->cpu_per_wall = wall > 0.0 ? cpu / wall : 0.0;
        r->max_cfl = diag.max_cfl;
        r->ok = 1;
    }
    free(tv);
    kit_free(&k);
    tg_model_destroy(m);
    return rc;
}

/* Runs one configuration in a child process; 0 when its result arrived. */
static int fork_config(const options *o, const tg_config *cfg, int threads, result *r)
{
    int fd[2];
    memset(r, 0, sizeof *r);
    if (pipe(fd) != 0) {
        fprintf(stderr, "tg-bench: pipe: %s\n", strerror(errno));
        return -1;
    }
    fflush(NULL);
    pid_t pid = fork();
    if (pid < 0) {
        fprintf(stderr, "tg-bench: fork: %s\n", strerror(errno));
        close(fd[0]);
        close(fd[1]);
        return -1;
    }
    if (pid == 0) {
        close(fd[0]);
#ifdef TG_BENCH_FFTW_OMP
        fftw_init_threads();
#endif
        result res;
        memset(&res, 0, sizeof res);
        run_config(o, cfg, threads, &res);
        const char *p = (const char *)&res;
        size_t left = sizeof res;
        while (left > 0) {
            ssize_t w = write(fd[1], p, left);
            if (w < 0 && errno == EINTR)
                continue;
            if (w <= 0)
                _exit(3);
            p += w;
            left -= (size_t)w;
        }
        close(fd[1]);
        _exit(res.ok ? 0 : 2);
    }
    close(fd[1]);
    char *p = (char *)r;
    size_t got = 0;
    while (got < sizeof *r) {
        ssize_t n = read(fd[0], p + got, sizeof *r - got);
        if (n < 0 && errno == EINTR)
            continue;
        if (n <= 0)
            break;
        got += (size_t)n;
    }
    close(fd[0]);
    int status = 0;
    while (waitpid(pid, &status, 0) < 0 && errno == EINTR)
        ;
    if (got != sizeof *r) {
        memset(r, 0, sizeof *r);
        if (WIFSIGNALED(status))
            snprintf(r->msg, sizeof r->msg, "the child process died of signal %d",
                     WTERMSIG(status));
        else
            snprintf(r->msg, sizeof r->msg, "the child process sent no result (exit %d)",
                     WIFEXITED(status) ? WEXITSTATUS(status) : -1);
        r->points = cfg->points;
        r->threads = threads;
        return -1;
    }
    return r->ok ? 0 : -1;
}

static const result *find(const result *res, int n, int points, int threads)
{
    for (int i = 0; i < n; i++)
        if (res[i].ok && res[i].points == points && res[i].threads == threads)
            return &res[i];
    return NULL;
}

/* A configuration whose threads got less than 90 % of a CPU each. */
static int starved(const result *r)
{
    return r->cpu_per_wall < 0.9 * r->threads;
}

static const char *verdict(int met)
{
    return met ? "target met" : "target NOT met";
}

/* One line of the targets table. */
static void target_line(const char *what, const char *conf, double v, const char *limit, int met,
                        int unsure)
{
    printf("%-40s %-14s %9.2f %8s  %s%s\n", what, conf, v, limit, verdict(met),
           unsure ? " (CPUs were busy: unsure)" : "");
}

int main(int argc, char **argv)
{
    tg_init(); /* the closure layer's config checks, as the command installs them */
    options o;
    if (parse_args(argc, argv, &o) != 0)
        return 1;

    tg_config cfgs[MAX_LIST];
    for (int s = 0; s < o.nsizes; s++) {
        int rc = make_config(&o, o.sizes[s], &cfgs[s]);
        if (rc)
            return rc == TG_ERR_USAGE ? 1 : 2;
    }

    const int nconf = o.nsizes * o.nthreads;
    result *res = calloc((size_t)nconf, sizeof *res);
    if (!res) {
        fprintf(stderr, "tg-bench: no memory\n");
        return 7;
    }
    const tg_config *c0 = &cfgs[0];
    printf("tg-bench: %d layers, %s wind, noise initial state (r.m.s. %g m2/s, seed %llu), "
           "step %g s, %d warm-up step%s; %d CPU%s online\n",
           c0->nlayers,
           c0->wind_profile == TG_WIND_DOUBLE_GYRE   ? "double-gyre"
           : c0->wind_profile == TG_WIND_SINGLE_GYRE ? "single-gyre"
                                                     : "no",
           c0->noise_amplitude_m2_per_s,
           (unsigned long long)c0->seed, c0->step_s, o.warmup, o.warmup == 1 ? "" : "s",
           (int)sysconf(_SC_NPROCESSORS_ONLN),
           sysconf(_SC_NPROCESSORS_ONLN) == 1 ? "" : "s");
    printf("one child process per configuration; times are medians over the repetitions\n");
    const double load0 = load_average();
    if (load0 >= 0.0)
        printf("load average before: %.2f\n", load0);
    printf("\n");

    int failures = 0, k = 0;
    for (int s = 0; s < o.nsizes; s++)
        for (int t = 0; t < o.nthreads; t++, k++) {
            fprintf(stderr, "tg-bench: running %d^2 points, %d thread%s ...\n", o.sizes[s],
                    o.threads[t], o.threads[t] == 1 ? "" : "s");
            if (fork_config(&o, &cfgs[s], o.threads[t], &res[k]) != 0) {
                fprintf(stderr, "tg-bench: %d^2 points, %d threads: %s\n", o.sizes[s],
                        o.threads[t], res[k].msg);
                failures++;
            }
        }

    /* The figures. */
    printf("%6s %3s %6s %9s %8s %10s %8s %8s %8s %7s %8s %8s %8s\n", "points", "thr", "steps",
           "step ms", "diag ms", "DST ms", "step/DST", "DST ms", "r2c ms", "DST/r2c",
           "peak MB", "speed-up", "cpu/wall");
    printf("%6s %3s %6s %9s %8s %10s %8s %8s %8s %7s %8s %8s %8s\n", "", "", "", "", "",
           "(per step)", "", "(one)", "(one)", "", "", "vs 1 thr", "");
    for (int i = 0; i < nconf; i++) {
        const result *r = &res[i];
        if (!r->ok) {
            printf("%6d %3d   failed: %s\n", r->points, r->threads, r->msg);
            continue;
        }
        const result *one = find(res, nconf, r->points, 1);
        char sp[16] = "-";
        if (one && r->threads != 1)
            snprintf(sp, sizeof sp, "%.2f", one->step_ms / r->step_ms);
        char r2c[24];
        snprintf(r2c, sizeof r2c, "%.3f%s", r->r2c_ms, r->r2c_threads != r->threads ? "*" : "");
        printf("%6d %3d %6d %9.3f %8.3f %10.3f %8.2f %8.3f %8s %7.2f %8.1f %8s %7.2f%s\n",
               r->points, r->threads, r->steps, r->step_ms, r->diag_ms, r->dst_step_ms,
               r->step_ms / r->dst_step_ms, r->dst_ms, r2c, r->dst_ms / r->r2c_ms,
               r->rss_peak_mb, sp, r->cpu_per_wall, starved(r) ? "!" : "");
    }
    int any_star = 0;
    double start_mb = 0.0;
    for (int i = 0; i < nconf; i++)
        if (res[i].ok && res[i].rss_start_mb > start_mb)
            start_mb = res[i].rss_start_mb;
    for (int i = 0; i < nconf; i++)
        any_star |= res[i].ok && res[i].r2c_threads != res[i].threads;
    printf("\nstep ms: one tg_step (3 RK stages, with budget rates); diag ms: the per-step "
           "tg_diag_compute a run adds.\n"
           "DST/step: the %d sine transforms of one step (3 stages x %d modes x forward + "
           "inverse), timed alone.\n"
           "r2c: FFTW 2-D real-to-complex of (points-1)^2 values, FFTW_ESTIMATE.\n"
           "peak MB: ru_maxrss of the child after the warm-up, before the benchmark's own "
           "arrays (before the\n  model: %.1f MB or less).\n"
           "Each repetition times one step, the diagnostics, the transforms and a batch of "
           "r2c in turn.\n"
           "cpu/wall: process CPU time over wall time in the timed steps; ! = below 0.9 x "
           "threads: the threads\n  waited for CPUs that other processes held, and the "
           "row's times are too slow\n  (a quiet machine, or OMP_WAIT_POLICY=passive when CPUs are "
           "shared, gives truer figures).\n",
           res[0].ok ? res[0].ndst : 6 * c0->nlayers, c0->nlayers, start_mb);
    if (any_star)
        printf("* the FFTW reference ran on 1 thread (build with -DTG_BENCH_FFTW_OMP "
               "-lfftw3_omp for a threaded one);\n  its DST/r2c target is judged on the "
               "1-thread rows only.\n");

    const double load1 = load_average();
    if (load1 >= 0.0)
        printf("load average after: %.2f (it counts this program's own threads too)\n", load1);

    /* The targets. */
    printf("\n%-40s %-14s %9s %8s  %s\n", "target", "configuration", "measured", "limit",
           "status");
    char conf[32];
    for (int i = 0; i < nconf; i++) {
        const result *r = &res[i];
        if (!r->ok || r->points != TARGET_STEP_POINTS)
            continue;
        snprintf(conf, sizeof conf, "%d^2, %d thr", r->points, r->threads);
        double v = r->step_ms / r->dst_step_ms;
        target_line("step time / its transforms' time", conf, v, "<= 1.5",
                    v <= TARGET_STEP_OVER_DST, starved(r));
    }
    for (int i = 0; i < nconf; i++) {
        const result *r = &res[i];
        if (!r->ok || r->r2c_threads != r->threads)
            continue;
        snprintf(conf, sizeof conf, "%d^2, %d thr", r->points, r->threads);
        double v = r->dst_ms / r->r2c_ms;
        target_line("2-D sine transform / same-size r2c FFT", conf, v, "<= 2.0",
                    v <= TARGET_DST_OVER_R2C, starved(r));
    }
    for (int i = 0; i < nconf; i++) {
        const result *r = &res[i];
        if (!r->ok)
            continue;
        snprintf(conf, sizeof conf, "%d^2, %d thr", r->points, r->threads);
        target_line("peak memory, MB", conf, r->rss_peak_mb, "<= 120",
                    r->rss_peak_mb <= TARGET_PEAK_MB, 0);
    }
    for (int i = 0; i < nconf; i++) {
        const result *r = &res[i];
        const result *one = r->ok ? find(res, nconf, r->points, 1) : NULL;
        if (!one || r->threads != 2)
            continue;
        snprintf(conf, sizeof conf, "%d^2", r->points);
        double v = one->step_ms / r->step_ms;
        target_line("step speed-up, 2 threads over 1", conf, v, ">= 1.6", v >= TARGET_SPEEDUP,
                    starved(r) || starved(one));
    }
    free(res);
    if (failures) {
        fprintf(stderr, "tg-bench: %d configuration%s failed\n", failures,
                failures == 1 ? "" : "s");
        return 8;
    }
    return 0;
}
