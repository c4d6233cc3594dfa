/* cmd_fit.c - `twingyre fit` (being written; see the issue list). */
#include <stdio.h>

#include "cli.h"

int cmd_fit(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    fprintf(stderr, "twingyre: fit is not available in this build yet\n");
    return 1;
}
