/* sinetf.h - fast 2-D type-I discrete sine transform of an n x n array.
 *
 * The basin geometry expands interior fields (walls excluded) in sines:
 *   X[j][i] = sum_{kx=1..n} sum_{ky=1..n} C[kx][ky] sin(pi i kx/(n+1)) sin(pi j ky/(n+1)),
 * for i, j = 1..n, where n + 1 = 2^k. The five-point Laplacian is diagonal in
 * this basis, so a Helmholtz solve is forward transform, divide, inverse.
 *
 * Each 1-D DST-I of length n is computed from one real FFT of length
 * n + 1 with O(n) pre- and post-processing, which is far faster than
 * FFTW's own RODFT00 kind (Makhoul 1980, IEEE Trans. ASSP 28, 27-34; Press
 * et al. 2007, Numerical Recipes 3rd ed., section 12.4.1). The real FFT is
 * FFTW's r2c for n + 1 > 256, and one complex FFT of half the length with
 * an unpacking for n + 1 <= 256 (sinetf.c says why).
 * The 2-D transform is two passes of row transforms, the first writing its rows as columns.
 *
 * Plans and every work buffer are made in tg_dst_create; the transforms
 * allocate nothing. Rows are shared among OpenMP threads with a static
 * schedule; each row is transformed by the same FFTW plan whatever the
 * thread count, so results are bitwise identical for any thread count.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_SINETF_H
#define TG_SINETF_H

#include "status.h"

typedef struct tg_dst tg_dst;

/* Plans transforms of n x n interior arrays; n + 1 must be a power of two
 * (n >= 3). Work buffers are made for omp_get_max_threads() threads. */
tg_dst *tg_dst_create(int n, tg_status *st);
void tg_dst_destroy(tg_dst *d);
int tg_dst_size(const tg_dst *d);

/* Forward transform (no normalization):
 *   spec[(kx-1)*n + (ky-1)] = sum_{i,j=1..n} in[(j-1)*stride + (i-1)] sin(pi i kx/(n+1)) sin(pi j ky/(n+1)).
 * `in` points at interior node (1,1); `stride` is the row length of the
 * array it lives in (>= n). `spec` is dense n x n. in and spec must not overlap. */
void tg_dst_forward(tg_dst *d, const double *in, int stride, double *spec);

/* tg_dst_forward, each coefficient then multiplied by factor[(kx-1)*n +
 * (ky-1)] (dense n x n; NULL: none) in the same pass: the same bits as
 * tg_dst_forward followed by a pass spec[a] *= factor[a], without that
 * pass (a Helmholtz solve's division by its eigenvalues). */
void tg_dst_forward_times(tg_dst *d, const double *in, int stride, double *spec,
                          const double *factor);

/* Inverse transform: the exact inverse of tg_dst_forward (it includes the
 * factor (2/(n+1))^2). Writes only the n x n interior block of `out`;
 * spec is used as scratch and is overwritten. */
void tg_dst_inverse(tg_dst *d, double *spec, double *out, int stride);

#endif
