/* cmd_sweep.c - `twingyre sweep` (being written; see the issue list). */
#include <stdio.h>

#include "cli.h"

int cmd_sweep(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    fprintf(stderr, "twingyre: sweep is not available in this build yet\n");
    return 1;
}
