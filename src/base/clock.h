/* clock.h - the monotonic clock behind every elapsed time (run and vet
 * timings, sweep members' run time, the commands' progress lines).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_CLOCK_H
#define TG_CLOCK_H

/* Seconds on CLOCK_MONOTONIC (an arbitrary origin: use differences only);
 * 0 when the clock cannot be read (POSIX guarantees it can). */
double tg_clock_s(void);

#endif
