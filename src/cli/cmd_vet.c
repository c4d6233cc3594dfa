/* cmd_vet.c - `twingyre vet` (being written; see the issue list). */
#include <stdio.h>

#include "cli.h"

int cmd_vet(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    fprintf(stderr, "twingyre: vet is not available in this build yet\n");
    return 1;
}
