/* floor.h - tg-bench's streaming floor of a step (floor.c).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_BENCH_FLOOR_H
#define TG_BENCH_FLOOR_H

typedef struct {
    double a_ms; /* one pass reading 8 fields and writing 4 */
    double b_ms; /* one pass reading 4 fields and writing 4 */
    double c_ms; /* one pass reading 6 fields */
    double step_ms; /* 3 a + 3 b + c */
} fl_result;

/* Times the passes over points x points fields of doubles on the calling
 * thread, the fastest of `reps` repetitions each. Returns 0, or -1 when
 * the fields cannot be allocated. */
int fl_measure(int points, int reps, fl_result *r);

#endif
