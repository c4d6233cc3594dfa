/* wait_policy.c - how the program's waiting OpenMP threads behave
 * (README, "Speed"; DEVELOPERS.md, "Threads on a shared machine").
 *
 * An OpenMP thread that reaches the end of a parallel loop before the
 * others, or waits for the next parallel region, either spins on the CPU
 * for a while (GNU libgomp's default: about 300000 polls) or sleeps at once
 * (OMP_WAIT_POLICY=passive). Spinning gains a few microseconds per region on
 * an idle machine; on a machine where other processes are busy it takes the
 * CPU from the very thread that is being waited for, and two threads ran
 * 8 to 12 times slower than one. So the program waits passively unless the
 * user's environment chooses: OMP_WAIT_POLICY or GOMP_SPINCOUNT set by the
 * user are kept as they are.
 *
 * libgomp reads these variables once, when it is loaded, before main runs:
 * setting them later has no effect, and the executable's pre-initializers
 * run before the C library has its environment, so a setenv there is lost.
 * The program therefore sets OMP_WAIT_POLICY=passive and executes itself
 * again (/proc/self/exe, same arguments) when neither variable is set. The
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

void cli_wait_policy(char **argv)
{
    if (getenv("OMP_WAIT_POLICY") || getenv("GOMP_SPINCOUNT"))
        return;
    const char *pre = getenv("LD_PRELOAD");
    if (pre && strstr(pre, "vgpreload"))
        return;
    if (setenv("OMP_WAIT_POLICY", "passive", 1) != 0)
        return;
    execv("/proc/self/exe", argv);
    /* No /proc: go on with the runtime's default (spinning) policy. The
     * variable stays set, so the processes this one starts wait passively. */
}
