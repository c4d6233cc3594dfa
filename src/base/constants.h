/* constants.h - numerical constants shared by the library (no state). */
#ifndef TG_CONSTANTS_H
#define TG_CONSTANTS_H

#define TG_PI 3.14159265358979323846
#define TG_SECONDS_PER_DAY 86400.0

#endif
