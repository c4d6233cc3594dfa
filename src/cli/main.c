/* main.c - `twingyre`: dispatches to one command per file (cmd_*.c). */
#include <stdio.h>
#include <string.h>

#include "cli.h"

#ifndef PACKAGE_VERSION
#define PACKAGE_VERSION "unknown"
#endif

static void usage(FILE *f)
{
    fprintf(f,
            "twingyre %s - layered quasi-geostrophic wind-driven gyre simulator\n"
            "\n"
            "usage: twingyre COMMAND [options]\n"
            "\n"
            "commands:\n"
            "  run CONFIG       run one experiment; writes DIR/fields.nc, DIR/budget.nc,\n"
            "                   DIR/checkpoint.nc\n"
            "  describe CONFIG  print the resolved config and the derived scales\n"
            "  closures [NAME]  list the closure schemes, their parameters and sources\n"
            "  twin CONFIG      twin experiment: fine reference, coarse runs with the closures\n"
            "                   of [twin] compare, sub-grid forcing (DIR/subgrid.nc) and skill\n"
            "                   (DIR/skill.csv, DIR/skill.json)\n"
            "  fit SUBGRID.nc --out COEFFS\n"
            "                   fit closure coefficients of the basis terms to a twin's\n"
            "                   sub-grid forcing; writes a file for [closure] use = coefficients\n"
            "  vet CONFIG       battery of checks on the configured closure (linear, conservation,\n"
            "                   online over step factors and coefficient multipliers, finer\n"
            "                   grid); verdict table on stdout and DIR/vet.json; exit 9 when a\n"
            "                   check fails\n"
            "  sweep SWEEP      run the members of a sweep file (base config, keys to vary)\n"
            "                   and merge their summaries into DIR/sweep.csv, DIR/sweep.json\n"
            "\n"
            "options of run, describe, twin and vet:\n"
            "  --set SECTION.KEY=VALUE  override one config key (repeatable)\n"
            "  --out DIR                output directory (overrides [output] directory)\n"
            "  --overwrite              (run, twin, vet) replace the output files already in DIR\n"
            "  --threads N              (run, twin, vet) OpenMP threads (default: OMP_NUM_THREADS)\n"
            "  --member K               ensemble member of stochastic closures (default 0)\n"
            "  --quiet                  (run, twin, vet) no progress and no summary lines\n"
            "\n"
            "options of fit (defaults in brackets):\n"
            "  --out FILE               the coefficients file to write (required)\n"
            "  --terms a,b,...|all      basis terms to fit [all]\n"
            "  --layers separate|shared one set per layer, or one for all layers [separate]\n"
            "  --method ols|ridge|stlsq|rvm  least squares, ridge, sequentially thresholded\n"
            "                           least squares, relevance vector machine [ols]\n"
            "  --ridge L                ridge parameter on standardized columns [1e-6; stlsq 0]\n"
            "  --threshold T            stlsq threshold on standardized coefficients [0.05]\n"
            "  --prune-alpha A          rvm: prune terms whose precision exceeds A [1e8]\n"
            "  --train FIRST:LAST       training samples (indices from 0) [all]\n"
            "  --test FIRST:LAST        test samples [none]\n"
            "  --target forcing|flux    -S_q, or minus the divergence of the sub-grid flux [forcing]\n"
            "  --chunk-samples N        samples held in memory at once [4]\n"
            "  --dump-design FILE.nc    also write the training design matrix and target\n"
            "  --overwrite, --quiet, --threads N  as above\n"
            "\n"
            "options of sweep:\n"
            "  --jobs N                 members run at the same time on this machine (default 1)\n"
            "  --threads T              OpenMP threads of each member (default 1)\n"
            "  --out DIR                output folder (overrides [sweep] directory)\n"
            "  --member K               run member K only (what a cluster task calls)\n"
            "  --collect                write DIR/sweep.csv and DIR/sweep.json again\n"
            "  --slurm-script FILE      write FILE (job array), FILE.collect, FILE.submit\n"
            "  --mpi                    hand members to MPI ranks (automatic under mpirun;\n"
            "                           needs a build with ./configure --with-mpi)\n"
            "  --quiet                  no progress line\n"
            "\n"
            "  --help                   this text\n"
            "  --version                program version\n"
            "\n"
            "Exit status: 0 done, 1 usage, 2 config, 3 input/output, 4 numerical library,\n"
            "5 unstable run (NaN/Inf or CFL), 6 stopped by a signal, 7 out of memory,\n"
            "8 internal error, 9 a vet check or some sweep members failed. The README has\n"
            "the config reference and the sweep file reference.\n",
            PACKAGE_VERSION);
}

int main(int argc, char **argv)
{
    cli_wait_policy(argv);
    if (argc < 2) {
        usage(stderr);
        return 1;
    }
    const char *cmd = argv[1];
    if (!strcmp(cmd, "--help") || !strcmp(cmd, "-h") || !strcmp(cmd, "help")) {
        usage(stdout);
        return 0;
    }
    if (!strcmp(cmd, "--version")) {
        printf("twingyre %s\n", PACKAGE_VERSION);
        return 0;
    }
    for (int i = 2; i < argc; i++)
        if (!strcmp(argv[i], "--help") || !strcmp(argv[i], "-h")) {
            usage(stdout);
            return 0;
        }
    if (!strcmp(cmd, "run"))
        return cmd_run(argc, argv);
    if (!strcmp(cmd, "describe"))
        return cmd_describe(argc, argv);
    if (!strcmp(cmd, "closures"))
        return cmd_closures(argc, argv);
    if (!strcmp(cmd, "twin"))
        return cmd_twin(argc, argv);
    if (!strcmp(cmd, "fit"))
        return cmd_fit(argc, argv);
    if (!strcmp(cmd, "vet"))
        return cmd_vet(argc, argv);
    if (!strcmp(cmd, "sweep"))
        return cmd_sweep(argc, argv);
    fprintf(stderr, "twingyre: unknown command '%s' (commands: run, describe, closures, twin, fit, vet, sweep; see --help)\n",
            cmd);
    return 1;
}
