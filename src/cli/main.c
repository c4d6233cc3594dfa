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
            "  sweep SWEEP      run the members of a sweep file (base config, keys to vary)\n"
            "                   and merge their summaries into DIR/sweep.csv, DIR/sweep.json\n"
            "\n"
            "options of run, describe and twin:\n"
            "  --set SECTION.KEY=VALUE  override one config key (repeatable)\n"
            "  --out DIR                output directory (overrides [output] directory)\n"
            "  --overwrite              (run, twin) replace the output files already in DIR\n"
            "  --threads N              (run, twin) OpenMP threads (default: OMP_NUM_THREADS)\n"
            "  --member K               ensemble member of stochastic closures (default 0)\n"
            "  --quiet                  (run, twin) no progress and no summary lines\n"
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
            "8 internal error, 9 sweep with failed members. The README has the config\n"
            "reference and the sweep file reference.\n",
            PACKAGE_VERSION);
}

int main(int argc, char **argv)
{
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
