/* clock.c - the monotonic clock (clock.h). */
#define _POSIX_C_SOURCE 200809L
#include "clock.h"

#include <time.h>

double tg_clock_s(void)
{
    struct timespec ts;
    if (clock_gettime(CLOCK_MONOTONIC, &ts) != 0)
        return 0.0;
    return ts.tv_sec + 1e-9 * ts.tv_nsec;
}
