/* wait_policy.c - how the program's waiting OpenMP threads behave
 * (README, "Speed"; DEVELOPERS.md, "Threads on a shared machine").
 *
 * An OpenMP thread that reaches the end of a parallel loop before the
 * others, or waits for the next parallel region, spins on the CPU for a
 * while and then sleeps (GNU libgomp: GOMP_SPINCOUNT polls, 300000 by
 * default, 0 with OMP_WAIT_POLICY=passive). The runtime's long default spin
 * takes the CPU, on a machine where other processes are busy, from the very
 * thread that is being waited for: two threads ran 8 to 12 times slower
 * than one. Sleeping at once (passive) cures that, but every wake-up then
 * costs a system call: a 129-point run with two threads was 1.4 times
 * slower than with one even on an idle machine, and 2.1 times under load.
 * A short spin of 10000 polls (a few microseconds) keeps both: measured
 * with `twingyre run` on the two-core machine (README, "Speed"), two
 * threads over one at 129 points 1.6 times faster idle and equal under one
 * busy process per core; at 513 points 2.0 times faster idle and equal
 * under load. So the program sets GOMP_SPINCOUNT=10000 unless the user's
 * environment chooses: OMP_WAIT_POLICY or GOMP_SPINCOUNT set by the user
 * are kept as they are.
 *
 * libgomp reads these variables once, when it is loaded, before main runs:
 * setting them later has no effect, and the executable's pre-initializers
 * run before the C library has its environment, so a setenv there is lost.
 * The program therefore sets GOMP_SPINCOUNT and executes itself again
 * (/proc/self/exe, same arguments) when neither variable is set. The
 * second start finds the variable and goes on; so do the processes it
 * starts (sweep members inherit the environment), and FFTW's own threads, if
 * a build uses them, are OpenMP threads of the same runtime.
 *
 * Under valgrind (its preloaded vgpreload_*.so in LD_PRELOAD) the program
 * does not execute itself again: there /proc/self/exe is valgrind's own
 * tool, which refuses to start, and valgrind runs the threads one at a time
 * anyway.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli.h"

/* Polls a waiting thread spins before it sleeps (see above). */
#define TG_CLI_SPINCOUNT "10000"

void cli_wait_policy(char **argv)
{
    if (getenv("OMP_WAIT_POLICY") || getenv("GOMP_SPINCOUNT"))
        return;
    const char *pre = getenv("LD_PRELOAD");
    if (pre && strstr(pre, "vgpreload"))
        return;
    if (setenv("GOMP_SPINCOUNT", TG_CLI_SPINCOUNT, 1) != 0)
        return;
    execv("/proc/self/exe", argv);
    /* No /proc: go on with the runtime's default spin. The variable stays
     * set, so the processes this one starts spin briefly. */
}
