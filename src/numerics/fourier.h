/* fourier.h - 2-D real fast Fourier transform of a P x P periodic array.
 *
 * The periodic geometry (geom_periodic.c) expands fields in complex
 * exponentials. A real field sampled at P x P points, X[j][i] with the row
 * index j along y and i along x (i, j = 0..P-1), has the discrete Fourier
 * coefficients
 *   C(kx, ky) = sum_{i,j=0..P-1} X[j][i] exp(-2 pi I (kx i + ky j) / P),
 * of which the transform keeps the half kx = 0..P/2 (the others follow from
 * C(-kx, -ky) = conj C(kx, ky)) and all ky = 0..P-1.
 *
 * Spectral layout: `spec` is an array of 2 (P/2 + 1) P doubles, rows along
 * kx, complex values as (real, imaginary) pairs:
 *   spec[2 (kx P + ky)]     = Re C(kx, ky),
 *   spec[2 (kx P + ky) + 1] = Im C(kx, ky),   kx = 0..P/2, ky = 0..P-1.
 * Index ky stands for the signed wavenumber ky for ky <= P/2 and ky - P
 * above (ky = P/2 is the Nyquist row, shared by +P/2 and -P/2). The layout
 * is the transpose of numpy.fft.rfft2(X) (which is indexed [ky, kx]).
 * The wavenumber in rad m-1 of a domain of side L is 2 pi kx / L.
 *
 * Method: 1-D real-to-complex FFTs along the rows (FFTW r2c), then complex
 * FFTs along the columns; the inverse runs the passes backwards (complex
 * backward FFTs along the columns, then complex-to-real along the rows).
 * Rows and columns go in fixed blocks of TG_FFT2_BATCH through batched
 * FFTW plans made at set-up (FFTW_ESTIMATE), executed on per-thread buffers
 * (new-array execute). A spectral multiplication (a Helmholtz solve)
 * can run as one pass (tg_fft2_apply): the columns go forward, are
 * multiplied and go back while they are in cache. The blocks are fixed by index, not by thread, so the
 * arithmetic done on every row and column, and so every result bit, is the
 * same for any OpenMP thread count. FFTW's own threaded plans are not used
 * (their decomposition may change with the number of threads).
 *
 * Ownership: tg_fft2 owns its plans and work buffers; the transforms
 * allocate nothing. One tg_fft2 serves one caller at a time. FFTW's planner
 * is not thread-safe: tg_fft2_create and tg_fft2_destroy must not run while
 * another thread makes or destroys FFTW plans.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_FOURIER_H
#define TG_FOURIER_H

#include "status.h"

typedef struct tg_fft2 tg_fft2;

/* Plans transforms of P x P arrays; P must be a power of two, 4 <= P <= 2^20.
 * Work buffers are made for omp_get_max_threads() threads. */
tg_fft2 *tg_fft2_create(int P, tg_status *st);
void tg_fft2_destroy(tg_fft2 *f);
int tg_fft2_size(const tg_fft2 *f);

/* Number of doubles in a spectral array: 2 (P/2 + 1) P. */
long tg_fft2_spec_len(const tg_fft2 *f);

/* Forward transform (no normalization), layout above:
 * `in` points at point (0, 0) of a real array with row length `stride`
 * (>= P); row j is in[j*stride .. j*stride + P-1]. `spec` must not overlap `in`. */
void tg_fft2_forward(tg_fft2 *f, const double *in, int stride, double *spec);

/* Inverse transform, the exact inverse of tg_fft2_forward (it includes the
 * factor 1/P^2): writes the P x P block of `out` (row length `stride`).
 * `spec` is only read. It must hold the coefficients of a real field:
 * C(kx, P - ky) = conj C(kx, ky) on the rows kx = 0 and kx = P/2, which
 * makes C real at the four self-conjugate points (0 or P/2, 0 or P/2).
 * Multiplying a forward transform by a real factor that is even in kx and
 * in ky (a Helmholtz solve, a filter) keeps this. For other input the
 * result is real but otherwise unspecified. */
void tg_fft2_inverse(tg_fft2 *f, const double *spec, double *out, int stride);

/* Spectral multiplication of nfields fields in place: each P x P block
 * fields[n] (row length `stride`) becomes
 *   tg_fft2_inverse(factors[n] (.) tg_fft2_forward(fields[n])),
 * factors[n] real with the layout of `spec` without the (re, im) pairs
 * (factors[n][kx P + ky], (P/2 + 1) P values) and even in kx and ky as
 * tg_fft2_inverse needs. The result is bit for bit that of the three calls
 * with the product formed as spec[2 k] * factor[k], spec[2 k + 1] * factor[k];
 * each block of columns goes forward, is multiplied and goes back while it
 * is in cache, and all the fields take one parallel region. */
void tg_fft2_apply(tg_fft2 *f, int nfields, double *const *fields, int stride,
                   const double *const *factors);

/* Most fields of one tg_fft2_apply_fused. */
#define TG_FFT2_MAX_FIELDS 8

/* Makes the work arrays and row buffers for tg_fft2_apply_fused of up to
 * nfields fields (1..TG_FFT2_MAX_FIELDS): (nfields - 1) more spectra of
 * 2 (P/2 + 1) (P + 4) doubles. Call it before stepping; it allocates only when
 * nfields is more than before. */
tg_code tg_fft2_reserve(tg_fft2 *f, int nfields, tg_status *st);

/* Writes row j (0..P-1) of every field: rows[n][i], i = 0..P-1. */
typedef void (*tg_fft2_fill_fn)(void *ctx, int j, double *const *rows);

/* Receives row j (0..P-1) of every field's result: rows[n][i], i = 0..P-1. */
typedef void (*tg_fft2_take_fn)(void *ctx, int j, const double *const *rows);

/* tg_fft2_apply of nfields fields (at most those of tg_fft2_reserve) that
 * are never stored: fill(ctx, j, rows) writes row j of every field, and
 * take(ctx, j, rows) receives row j of every result, bit for bit that of
 * tg_fft2_apply, while it is in cache. Each is called once per row, inside
 * one parallel region whose threads share the rows in fixed blocks, so fill
 * and take must write only what belongs to row j; every fill comes before
 * any take. */
void tg_fft2_apply_fused(tg_fft2 *f, int nfields, tg_fft2_fill_fn fill,
                         const double *const *factors, tg_fft2_take_fn take, void *ctx);

#endif
