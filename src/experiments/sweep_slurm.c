/* sweep_slurm.c - Slurm batch scripts of a sweep (sweep.h):
 *   SCRIPT          job array, one task per member (index = member index),
 *                   each `twingyre sweep SWEEP --member $SLURM_ARRAY_TASK_ID`
 *   SCRIPT.collect  the collect job (`twingyre sweep SWEEP --collect`)
 *   SCRIPT.submit   submits the array, then the collect job with
 *                   --dependency=afterany:ARRAY so that it runs once every
 *                   task has ended, whatever their exit status
 * Task output goes to DIRECTORY/slurm-logs/. Resources from [cluster].
 */
#include "sweep.h"
#include "textfile.h"

#include <errno.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>

/* Paths go between single quotes in the scripts. */
static tg_code quotable(const char *what, const char *s, tg_status *st)
{
    if (strchr(s, '\'') || strchr(s, '\n'))
        return tg_fail(st, TG_ERR_USAGE, "--slurm-script: the %s '%s' contains a quote or a "
                                         "newline, which the batch script cannot hold", what, s);
    return TG_OK;
}

static void resources(FILE *f, const tg_sweep_cluster *cl, int collect)
{
    if (cl->partition[0])
        fprintf(f, "#SBATCH --partition=%s\n", cl->partition);
    if (cl->account[0])
        fprintf(f, "#SBATCH --account=%s\n", cl->account);
    fprintf(f, "#SBATCH --time=%s\n", collect ? cl->collect_time_limit : cl->time_limit);
    fprintf(f, "#SBATCH --ntasks=1\n#SBATCH --cpus-per-task=%d\n", collect ? 1 : cl->cpus_per_task);
    if (cl->memory[0] && !collect)
        fprintf(f, "#SBATCH --mem=%s\n", cl->memory);
    for (int i = 0; i < cl->nextra; i++)
        fprintf(f, "#SBATCH %s\n", cl->extra[i]);
}

/* Makes the script executable and renames it into place (textfile.h): an
 * earlier script of that name stays whole until the new one is. */
static tg_code finish(FILE *f, const char *tmp, const char *path, tg_status *st)
{
    if (chmod(tmp, 0755) != 0) {
        tg_code rc = tg_fail(st, TG_ERR_IO, "cannot make %s executable: %s", tmp, strerror(errno));
        fclose(f);
        remove(tmp);
        return rc;
    }
    return tg_tmp_commit(f, tmp, path, st);
}

tg_code tg_sweep_write_slurm(const tg_sweep *sw, const char *script, const char *program,
                             const char *sweep_path, tg_status *st)
{
    tg_code rc;
    if ((rc = quotable("program path", program, st)) != TG_OK ||
        (rc = quotable("sweep file path", sweep_path, st)) != TG_OK ||
        (rc = quotable("output folder", sw->directory, st)) != TG_OK ||
        (rc = quotable("script path", script, st)) != TG_OK)
        return rc;
    if (sw->directory[0] != '/')
        return tg_fail(st, TG_ERR_INTERNAL, "tg_sweep_write_slurm: the output folder %s is not "
                                            "absolute", sw->directory);
    const tg_sweep_cluster *cl = &sw->cluster;
    char path[TG_PATH_LEN + 16], tmp[TG_PATH_LEN + 32];
    const char *names[3] = {"", ".collect", ".submit"};
    for (int s = 0; s < 3; s++) {
        snprintf(path, sizeof path, "%s%s", script, names[s]);
        FILE *f = tg_tmp_open(path, tmp, sizeof tmp, st);
        if (!f)
            return st->code;
        fprintf(f, "#!/bin/bash\n");
        if (s == 0) {
            fprintf(f, "# Job array of the sweep %s: task K runs member K (%d members).\n"
                       "# Written by twingyre sweep --slurm-script; submit with: bash '%s.submit'\n",
                    sweep_path, sw->nmembers, script);
            fprintf(f, "#SBATCH --job-name=%s\n#SBATCH --array=0-%d\n", cl->job_name,
                    sw->nmembers - 1);
            fprintf(f, "#SBATCH --output=%s/slurm-logs/member-%%a.out\n", sw->directory);
            resources(f, cl, 0);
            fputs("set -u\n", f);
            for (int i = 0; i < cl->nsetup; i++)
                fprintf(f, "%s\n", cl->setup[i]);
            fprintf(f, "exec '%s' sweep '%s' --out '%s' --quiet --member \"$SLURM_ARRAY_TASK_ID\" "
                       "--threads \"${SLURM_CPUS_PER_TASK:-%d}\"\n",
                    program, sweep_path, sw->directory, cl->cpus_per_task);
        } else if (s == 1) {
            fprintf(f, "# Collect job of the sweep %s: merges the members' summaries into\n"
                       "# %s/sweep.csv and sweep.json. Submitted by '%s.submit' after the array.\n",
                    sweep_path, sw->directory, script);
            fprintf(f, "#SBATCH --job-name=%s-collect\n", cl->job_name);
            fprintf(f, "#SBATCH --output=%s/slurm-logs/collect.out\n", sw->directory);
            resources(f, cl, 1);
            fputs("set -u\n", f);
            for (int i = 0; i < cl->nsetup; i++)
                fprintf(f, "%s\n", cl->setup[i]);
            fprintf(f, "exec '%s' sweep '%s' --out '%s' --quiet --collect\n", program, sweep_path,
                    sw->directory);
        } else {
            fprintf(f, "# Submits the job array of the sweep %s and its collect job, which\n"
                       "# waits for every array task to end (afterany). Prints both job ids.\n",
                    sweep_path);
            fprintf(f, "set -euo pipefail\nmkdir -p '%s/slurm-logs'\n", sw->directory);
            fprintf(f, "array=$(sbatch --parsable '%s')\narray=${array%%%%;*}\n", script);
            fprintf(f, "collect=$(sbatch --parsable --dependency=afterany:\"$array\" '%s.collect')\n"
                       "collect=${collect%%%%;*}\n", script);
            fputs("echo \"array job $array, collect job $collect\"\n", f);
        }
        if ((rc = finish(f, tmp, path, st)) != TG_OK)
            return rc;
    }
    return TG_OK;
}
