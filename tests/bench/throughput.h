/* throughput.h - tg-bench's model years per wall-clock hour (throughput.c).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_BENCH_THROUGHPUT_H
#define TG_BENCH_THROUGHPUT_H

#define TP_MAX_CONFIGS 8

typedef struct {
    const char *path;    /* config file */
    double days;         /* model days each timed run covers */
    double spinup_days;  /* model days of the cached spin-up */
} tp_config;

typedef struct {
    const char *program;        /* the twingyre executable */
    const char *cache;          /* folder of the spun-up states */
    const char *scratch;        /* folder for the timed runs' output */
    const char *adaptive_set;   /* --set that selects adaptive steps */
    tp_config configs[TP_MAX_CONFIGS];
    int nconfigs;
    int threads[2];             /* the thread counts compared: 1 and 2 */
} tp_options;

/* The 1-minute load average (/proc/loadavg), or -1 when it cannot be read. */
double tp_load_average(void);

/* Parses "CONFIG:DAYS:SPINUP_DAYS" into c; 0, or -1 with a message on stderr. */
int tp_parse_config(const char *s, tp_config *c);

/* Spins up (or finds in the cache) every config, times the runs and prints
 * the table and the targets. Returns the number of runs that failed. */
int tp_run(const tp_options *o);

#endif
