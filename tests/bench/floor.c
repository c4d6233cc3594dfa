/* floor.c - the streaming floor of a step, for tg-bench.
 *
 * How long one thread takes only to move the fields a step of two layers
 * must read and write, with no arithmetic worth the name: per stage, one
 * pass that reads 8 fields and writes 4 (the fused tendency and update
 * reads psi, q, zeta and q at the start of the step of both layers, and
 * writes the new q and the modal right-hand sides) and one that reads 4
 * and writes 4 (the modes back to layers: two modes and q in, psi and
 * zeta out); per step, one pass that reads 6 (the diagnostics). Three
 * stages: 3 a + 3 b + c. The transforms come on top (tg-bench times them
 * apart). A step cannot be faster than this floor plus its transforms on
 * the same machine at the same moment; it is a measurement of the
 * machine, not of twingyre's code (common practice: the STREAM benchmark's
 * idea, McCalpin 1995, IEEE TCCA Newsletter, Dec. 1995, 19-25; reference from
 * memory).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "floor.h"

#include <stdlib.h>
#include <time.h>

#define FL_FIELDS 24

static double fl_now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

/* Keeps the passes' results alive, so that the compiler keeps the passes. */
static volatile double fl_sink;

int fl_measure(int points, int reps, fl_result *r)
{
    const long np = (long)points * points;
    double *f[FL_FIELDS] = {0};
    int rc = 0;
    for (int i = 0; i < FL_FIELDS && rc == 0; i++) {
        f[i] = malloc((size_t)np * sizeof(double));
        if (!f[i])
            rc = -1;
        else
            for (long p = 0; p < np; p++)
                f[i][p] = i + 1e-9 * (double)p;
    }
    r->a_ms = r->b_ms = r->c_ms = 1e300;
    for (int rep = 0; rep < reps && rc == 0; rep++) {
        double t0 = fl_now();
        for (long p = 0; p < np; p++) {
            const double s = ((f[0][p] + f[1][p]) + (f[2][p] + f[3][p])) +
                             ((f[4][p] + f[5][p]) + (f[6][p] + f[7][p]));
            f[8][p] = s;
            f[9][p] = 2.0 * s;
            f[10][p] = 3.0 * s;
            f[11][p] = 4.0 * s;
        }
        double t1 = fl_now();
        for (long p = 0; p < np; p++) {
            const double s = (f[12][p] + f[13][p]) + (f[14][p] + f[15][p]);
            f[16][p] = s;
            f[17][p] = 2.0 * s;
            f[18][p] = 3.0 * s;
            f[19][p] = 4.0 * s;
        }
        double t2 = fl_now(), acc = 0.0;
        for (long p = 0; p < np; p++)
            acc += f[0][p] * f[1][p] + f[2][p] * f[3][p] + f[20][p] * f[21][p];
        double t3 = fl_now();
        fl_sink = acc + f[11][np - 1] + f[19][np - 1];
        if (t1 - t0 < r->a_ms)
            r->a_ms = t1 - t0;
        if (t2 - t1 < r->b_ms)
            r->b_ms = t2 - t1;
        if (t3 - t2 < r->c_ms)
            r->c_ms = t3 - t2;
    }
    for (int i = 0; i < FL_FIELDS; i++)
        free(f[i]);
    if (rc != 0)
        return rc;
    r->a_ms *= 1e3;
    r->b_ms *= 1e3;
    r->c_ms *= 1e3;
    r->step_ms = 3.0 * r->a_ms + 3.0 * r->b_ms + r->c_ms;
    return 0;
}
