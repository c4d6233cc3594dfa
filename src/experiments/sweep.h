/* sweep.h - a sweep: one base config (run or twin), the keys varied with
 * their value lists, how they combine, and where each member goes.
 *
 * The sweep file is INI (read with libinih, README "Sweeps and ensembles"):
 *   [sweep]   base, kind, combine, directory, seeds, members
 *   [vary]    section.key = v1, v2, ...   (or v1 | v2 | ... for list values)
 *   [cluster] Slurm resources (sweep_slurm.c)
 * Members are numbered 0 .. n-1 in the order of the combination: for
 * `product` the first [vary] key varies slowest and the last fastest, for
 * `zip` member K takes the K-th value of every key; the seeds and members
 * axes are always crossed with that, seeds before members, members fastest.
 * Each member runs the base config with one --set override per varied key
 * into DIRECTORY/NAME/, NAME derived from its values (tg_sweep_load
 * documents the rule).
 *
 * Rooms: sweep.c (file, members, configs), sweep_member.c (one member and
 * its status file), sweep_collect.c (sweep.csv, sweep.json),
 * sweep_slurm.c (job-array scripts). The library never starts processes;
 * the command (src/cli/sweep_*.c) runs members as child processes.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_SWEEP_H
#define TG_SWEEP_H

#include <signal.h>

#include "config.h"
#include "status.h"

#define TG_SWEEP_MAX_AXES 16
#define TG_SWEEP_MAX_VALUES 64
#define TG_SWEEP_VALUE_LEN 128
#define TG_SWEEP_MAX_MEMBERS 10000
#define TG_SWEEP_NAME_LEN 200
#define TG_SWEEP_MAX_LINES 16

typedef enum { TG_SWEEP_RUN = 0, TG_SWEEP_TWIN = 1 } tg_sweep_kind;
typedef enum { TG_SWEEP_PRODUCT = 0, TG_SWEEP_ZIP = 1 } tg_sweep_combine;
typedef enum { TG_AXIS_KEY = 0, TG_AXIS_SEED = 1, TG_AXIS_MEMBER = 2 } tg_axis_kind;

typedef struct {
    tg_axis_kind kind;
    char key[TG_SWEEP_VALUE_LEN];   /* section.key as written; "initial.seed" or "member" */
    char label[TG_SWEEP_VALUE_LEN]; /* the name part: the key after its last '.' */
    int line;                       /* line in the sweep file */
    int nvalues;
    char value[TG_SWEEP_MAX_VALUES][TG_SWEEP_VALUE_LEN];
} tg_sweep_axis;

/* [cluster]: resources of the Slurm job array (empty text: not set). */
typedef struct {
    char job_name[64];
    char partition[64];
    char account[64];
    char time_limit[32];          /* per member, [D-]HH:MM:SS */
    char collect_time_limit[32];  /* of the collect job */
    int cpus_per_task;
    char memory[32];              /* per task, e.g. 2G */
    int nextra, nsetup;
    char extra[TG_SWEEP_MAX_LINES][TG_SWEEP_VALUE_LEN];  /* more #SBATCH options */
    char setup[TG_SWEEP_MAX_LINES][TG_SWEEP_VALUE_LEN];  /* shell lines before the command */
} tg_sweep_cluster;

typedef struct {
    char path[TG_PATH_LEN];       /* the sweep file as given */
    char base[TG_PATH_LEN];       /* base config, resolved against the sweep file's folder */
    char directory[TG_PATH_LEN];  /* output folder (relative to the current folder) */
    tg_sweep_kind kind;
    tg_sweep_combine combine;
    int naxes;                    /* [vary] keys first (file order), then seeds, then members */
    int nkeys;                    /* how many of the axes are [vary] keys */
    tg_sweep_axis axis[TG_SWEEP_MAX_AXES];
    tg_sweep_cluster cluster;
    int nmembers;
    char (*name)[TG_SWEEP_NAME_LEN]; /* member names (owned) */
} tg_sweep;

/* Reads and checks a sweep file, loads the base config once (its errors are
 * the sweep's), checks that each [vary] key exists (a key for which no value
 * is accepted is an error at its line), and names the members.
 * Name rule: for each axis LABEL-VALUE, joined with '_'; LABEL is the key
 * after its last '.' (the whole key when two axes would share it), VALUE as
 * written with every run of characters other than letters, digits, '.',
 * '+' and '-' replaced by one '_'; a name already taken by an earlier member
 * gets "_K" appended (K its index). Names longer than TG_SWEEP_NAME_LEN - 12
 * are cut and get "_K" too. `out_dir` (may be NULL) replaces [sweep]
 * directory. On success *out is malloc'ed; free it with tg_sweep_free. */
tg_code tg_sweep_load(const char *path, const char *out_dir, tg_sweep **out, tg_status *st);
void tg_sweep_free(tg_sweep *sw);

/* Index of the value of axis a taken by member k. */
int tg_sweep_choice(const tg_sweep *sw, int k, int a);

/* The member's --set assignments, "section.key=value" (the seeds axis is
 * initial.seed=...; the members axis sets cfg->member and has no entry). */
int tg_sweep_member_sets(const tg_sweep *sw, int k, char sets[][2 * TG_SWEEP_VALUE_LEN + 2]);

/* The member's resolved config: defaults -> base -> its overrides ->
 * output directory DIRECTORY/NAME -> checks (tg_config_validate for a run or a twin,
 * without its warnings). A failure is the member's (TG_ERR_CONFIG with
 * the message of the failing override or check). */
tg_code tg_sweep_member_config(const tg_sweep *sw, int k, tg_config *cfg, tg_status *st);

/* DIRECTORY/NAME of member k. */
void tg_sweep_member_dir(const tg_sweep *sw, int k, char *buf, size_t n);

/* ---- one member (sweep_member.c) ---- */

/* NAME/member.ini, the status record of a member. */
typedef struct {
    int present;              /* the file exists */
    char status[16];          /* running | done | failed | stopped */
    int exit_status;          /* exit status of the member (README "Exit codes") */
    char message[TG_MSG_LEN];
    char host[128];
    int threads;
    char start[32], end[32];  /* UTC, ISO 8601 */
    double seconds;
} tg_member_status;

tg_code tg_sweep_read_status(const tg_sweep *sw, int k, tg_member_status *ms, tg_status *st);

/* 1 when member k's status file says done. */
int tg_sweep_member_done(const tg_sweep *sw, int k);

typedef struct {
    int threads;                            /* recorded in member.ini */
    const char *command_line;               /* stored in the output files */
    volatile sig_atomic_t *stop_requested;  /* may be NULL */
} tg_sweep_member_options;

/* Runs member k unless its status says done: makes NAME/, writes
 * member.ini (running), resolves and checks the config, writes
 * NAME/config.ini, runs it (replacing output of an incomplete earlier
 * attempt), and writes member.ini again with done, failed (config error,
 * blow-up, ...) or stopped (stop request). Returns the member's code;
 * *skipped = 1 when it was already done. */
tg_code tg_sweep_run_member(const tg_sweep *sw, int k, const tg_sweep_member_options *o,
                            int *skipped, tg_status *st);

/* Makes DIRECTORY (and its parents). */
tg_code tg_sweep_make_directory(const tg_sweep *sw, tg_status *st);

/* Makes DIRECTORY/NAME/ of member k (and its parents). */
tg_code tg_sweep_prepare_member(const tg_sweep *sw, int k, tg_status *st);

/* Records a member that could not run at all (e.g. its process died):
 * status failed with the code and message, unless member.ini says done. */
tg_code tg_sweep_record_failure(const tg_sweep *sw, int k, tg_code code, const char *message,
                                tg_status *st);

/* ---- the merged table (sweep_collect.c) ---- */

/* Writes DIRECTORY/sweep.csv and DIRECTORY/sweep.json (README). */
tg_code tg_sweep_collect(const tg_sweep *sw, tg_status *st);

/* ---- Slurm (sweep_slurm.c) ---- */

/* Writes the job-array script `script`, `script`.collect and
 * `script`.submit (README). program and sweep_path must be absolute. */
tg_code tg_sweep_write_slurm(const tg_sweep *sw, const char *script, const char *program,
                             const char *sweep_path, tg_status *st);

#endif
