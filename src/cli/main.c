/* main.c - `twingyre`: dispatches to one command per file (cmd_*.c). */
#include <stdio.h>
#include <string.h>

#include "cli.h"
#include "twingyre.h"

/* --version */
#ifndef PACKAGE_VERSION
#define PACKAGE_VERSION "unknown"
#endif

int main(int argc, char **argv)
{
    cli_wait_policy(argv);
    tg_init(); /* the closure layer's checks of config settings */
    if (argc < 2) {
        cli_help_global(stderr);
        return 1;
    }
    const char *cmd = argv[1];
    if (!strcmp(cmd, "--help") || !strcmp(cmd, "-h") || !strcmp(cmd, "help")) {
        if (argc > 2 && cli_help_command(argv[2], stdout) != 0) {
            fprintf(stderr, "twingyre: help: no command '%s' (commands: run, describe, closures, "
                            "twin, fit, vet, sweep)\n", argv[2]);
            return 1;
        }
        if (argc <= 2)
            cli_help_global(stdout);
        return 0;
    }
    if (!strcmp(cmd, "help-man")) {
        cli_help_man(stdout);
        return fflush(stdout) == 0 ? 0 : 3;
    }
    if (!strcmp(cmd, "--version")) {
        printf("twingyre %s\n", PACKAGE_VERSION);
        return 0;
    }
    for (int i = 2; i < argc; i++)
        if ((!strcmp(argv[i], "--help") || !strcmp(argv[i], "-h")) && cli_help_known(cmd)) {
            cli_help_command(cmd, stdout);
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
