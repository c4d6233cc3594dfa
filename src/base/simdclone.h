/* simdclone.h - TG_SIMD_CLONES: compile a hot row function twice, for
 * x86-64 processors with AVX2 and for the baseline (SSE2), and let the
 * loader pick the copy for the processor it runs on (the compiler's
 * target_clones attribute, resolved through a glibc ifunc).
 *
 * AVX2 vectors hold four doubles instead of two, which halves the
 * instructions of the loops over a row. Neither copy contracts a multiply
 * and an add (AVX2 does not include FMA, and -std=c11 turns contraction
 * off), so every value computed element by element is the same bit for bit
 * in both copies. Only sums formed by `omp simd reduction` differ at
 * round-off: their partial sums follow the vector width. Define
 * TG_NO_SIMD_CLONES (e.g. CPPFLAGS=-DTG_NO_SIMD_CLONES) for one copy on
 * every processor.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_SIMDCLONE_H
#define TG_SIMDCLONE_H

#include <limits.h> /* defines __GLIBC__ on glibc systems */

#if !defined(TG_NO_SIMD_CLONES) && defined(__x86_64__) && defined(__ELF__) && \
    defined(__GLIBC__) && defined(__has_attribute)
#if __has_attribute(target_clones)
#define TG_SIMD_CLONES __attribute__((target_clones("avx2", "default")))
#endif
#endif

#ifndef TG_SIMD_CLONES
#define TG_SIMD_CLONES
#endif

#endif
