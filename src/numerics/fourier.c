/* fourier.c - 2-D real FFT of a P x P periodic array (see fourier.h).
 *
 * Forward: the rows (along x) go through batched 1-D real-to-complex FFTs
 * of length P, TG_FFT2_BATCH rows per FFTW call and two calls per row block
 * when P allows; each block's P/2 + 1 outputs are written transposed into
 * `spec` (row kx, column j), so that
 * the columns become contiguous; then the P/2 + 1 rows of `spec` go through
 * batched complex FFTs of length P, TG_FFT2_BATCH at a time, in place.
 * Inverse: the same passes backwards through an internal (P/2 + 1) x P
 * complex work array, then complex-to-real along the rows and the exact
 * scaling by 1/P^2 (P is a power of two); tg_fft2_apply scales the spectral
 * factor instead, which gives the same bits with one pass less.
 * Internal work arrays keep their rows P + 4 complex apart, like the
 * thread's column buffer, so that the column transforms of tg_fft2_apply
 * run on them in place, without copies. tg_fft2_apply_fused keeps a work
 * array per field, so that each block of rows of every field is filled,
 * and later handed over, together.
 *
 * Each FFTW call runs on the calling thread's own buffers (new-array
 * execute with buffers of the planned sizes, distances and alignment), and
 * which plan transforms a row or column depends only on its index, so
 * results do not depend on the number of OpenMP threads.
 *
 * Ownership: tg_fft2 owns its plans, the work arrays and the per-thread
 * buffers; tg_fft2_destroy frees them all. Only FFTW_ESTIMATE plans are
 * made (timed planning would make round-off differ between runs).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "fourier.h"

#include <fftw3.h>
#include <omp.h>
#include <stdlib.h>
#include <string.h>

#include "simdclone.h"

/* Rows or columns per FFTW call (fixed: it decides which plan does each). */
#define TG_FFT2_BATCH 8

/* FFTW calls of rows per row block when the rows allow: a block's
 * transposing copies then move 2 x TG_FFT2_BATCH complex values (256
 * contiguous bytes) per spectral row. */
#define TG_FFT2_ROW_CALLS 2

struct tg_fft2 {
    int P;           /* points per side */
    int nc;          /* complex outputs per row, P/2 + 1 */
    int rrows;       /* rows per FFTW call, min(TG_FFT2_BATCH, P) */
    int ncalls;      /* FFTW calls per row block: TG_FFT2_ROW_CALLS or 1 */
    int brows;       /* rows per row block, ncalls * rrows */
    int nrb;         /* row blocks, P / brows */
    int ncb;         /* column blocks, ceil(nc / TG_FFT2_BATCH) */
    int ctail;       /* columns in the last column block */
    int nthreads;    /* threads with buffers */
    int rdist;       /* row distance in rbuf (doubles) */
    int cdist;       /* row distance in cbuf (complex) */
    int ldist;       /* row distance in lbuf (complex) */
    int nwork;       /* work arrays (tg_fft2_reserve) */
    int nrows;       /* fields with real rows in every rbuf (tg_fft2_reserve) */
    size_t rlen;     /* doubles of one field's real rows in rbuf */
    double *work[TG_FFT2_MAX_FIELDS]; /* per field: nc rows of P complex, ldist apart */
    double **rbuf;   /* per thread: brows real rows per field (nrows blocks of rlen) */
    fftw_complex **cbuf; /* per thread: brows half-spectrum rows */
    fftw_complex **lbuf; /* per thread: TG_FFT2_BATCH columns of P complex */
    fftw_plan r2c;   /* rrows rows, real to complex */
    fftw_plan c2r;   /* rrows rows, complex to real */
    fftw_plan cfwd, cfwd_tail; /* column FFTs, forward: full block, last block */
    fftw_plan cbwd, cbwd_tail; /* column FFTs, backward */
};

static void destroy_plan(fftw_plan *p, fftw_plan keep)
{
    if (*p && *p != keep)
        fftw_destroy_plan(*p);
    *p = NULL;
}

void tg_fft2_destroy(tg_fft2 *f)
{
    if (!f)
        return;
    destroy_plan(&f->cfwd_tail, f->cfwd);
    destroy_plan(&f->cbwd_tail, f->cbwd);
    destroy_plan(&f->cfwd, NULL);
    destroy_plan(&f->cbwd, NULL);
    destroy_plan(&f->r2c, NULL);
    destroy_plan(&f->c2r, NULL);
    for (int t = 0; t < f->nthreads; t++) {
        if (f->rbuf)
            fftw_free(f->rbuf[t]);
        if (f->cbuf)
            fftw_free(f->cbuf[t]);
        if (f->lbuf)
            fftw_free(f->lbuf[t]);
    }
    free(f->rbuf);
    free(f->cbuf);
    free(f->lbuf);
    for (int n = 0; n < f->nwork; n++)
        fftw_free(f->work[n]);
    free(f);
}

static fftw_plan column_plan(const tg_fft2 *f, int cols, int sign)
{
    int n[1] = {f->P};
    return fftw_plan_many_dft(1, n, cols, f->lbuf[0], NULL, 1, f->ldist, f->lbuf[0], NULL, 1,
                              f->ldist, sign, FFTW_ESTIMATE);
}

tg_fft2 *tg_fft2_create(int P, tg_status *st)
{
    tg_status_clear(st);
    if (P < 4 || P > (1 << 20) || (P & (P - 1)) != 0) {
        tg_fail(st, TG_ERR_CONFIG,
                "Fourier transform: size P = %d is not allowed: P must be a power of two "
                "with 4 <= P <= %d (e.g. 128, 256, 512)", P, 1 << 20);
        return NULL;
    }
    tg_fft2 *f = calloc(1, sizeof *f);
    if (!f) {
        tg_fail(st, TG_ERR_NOMEM, "Fourier transform: cannot allocate the transform record");
        return NULL;
    }
    f->P = P;
    f->nc = P / 2 + 1;
    f->rrows = P < TG_FFT2_BATCH ? P : TG_FFT2_BATCH;
    f->ncalls = (P / f->rrows) % TG_FFT2_ROW_CALLS == 0 ? TG_FFT2_ROW_CALLS : 1;
    f->brows = f->ncalls * f->rrows;
    f->nrb = P / f->brows;
    f->ncb = (f->nc + TG_FFT2_BATCH - 1) / TG_FFT2_BATCH;
    f->ctail = f->nc - (f->ncb - 1) * TG_FFT2_BATCH;
    f->nthreads = omp_get_max_threads();
    if (f->nthreads < 1)
        f->nthreads = 1;
    /* Rows 2^k doubles apart share cache sets; these paddings shift each
     * buffer row by one cache line (64 bytes). */
    f->rdist = P + 8;
    f->cdist = f->nc + 3;
    f->ldist = P + 4;

    const size_t rlen = (size_t)f->brows * f->rdist;
    const size_t clen = (size_t)f->brows * f->cdist;
    const size_t llen = (size_t)TG_FFT2_BATCH * f->ldist;
    const size_t wlen = 2 * (size_t)f->nc * f->ldist;
    f->nwork = 1;
    f->nrows = 1;
    f->rlen = rlen;
    f->work[0] = fftw_malloc(wlen * sizeof(double));
    f->rbuf = calloc((size_t)f->nthreads, sizeof *f->rbuf);
    f->cbuf = calloc((size_t)f->nthreads, sizeof *f->cbuf);
    f->lbuf = calloc((size_t)f->nthreads, sizeof *f->lbuf);
    if (!f->work[0] || !f->rbuf || !f->cbuf || !f->lbuf) {
        tg_fail(st, TG_ERR_NOMEM,
                "Fourier transform: cannot allocate the work array for P = %d (%zu bytes)", P,
                wlen * sizeof(double));
        tg_fft2_destroy(f);
        return NULL;
    }
    memset(f->work[0], 0, wlen * sizeof(double));
    for (int t = 0; t < f->nthreads; t++) {
        f->rbuf[t] = fftw_malloc(rlen * sizeof(double));
        f->cbuf[t] = fftw_malloc(clen * sizeof(fftw_complex));
        f->lbuf[t] = fftw_malloc(llen * sizeof(fftw_complex));
        if (!f->rbuf[t] || !f->cbuf[t] || !f->lbuf[t]) {
            tg_fail(st, TG_ERR_NOMEM,
                    "Fourier transform: fftw_malloc failed for the buffers of thread %d of %d",
                    t, f->nthreads);
            tg_fft2_destroy(f);
            return NULL;
        }
        memset(f->rbuf[t], 0, rlen * sizeof(double));
        memset(f->cbuf[t], 0, clen * sizeof(fftw_complex));
        memset(f->lbuf[t], 0, llen * sizeof(fftw_complex));
        /* New-array execute needs every buffer aligned like the planned one
         * (the column transforms also run on the work arrays). */
        const size_t rcall = (size_t)f->rrows * f->rdist, ccall = (size_t)f->rrows * f->cdist;
        if (fftw_alignment_of(f->rbuf[t]) != fftw_alignment_of(f->rbuf[0]) ||
            fftw_alignment_of(f->rbuf[t] + rcall) != fftw_alignment_of(f->rbuf[0]) ||
            fftw_alignment_of((double *)(f->cbuf[t] + ccall)) !=
                fftw_alignment_of((double *)f->cbuf[0]) ||
            fftw_alignment_of(f->work[0]) != fftw_alignment_of((double *)f->lbuf[0]) ||
            fftw_alignment_of((double *)f->cbuf[t]) != fftw_alignment_of((double *)f->cbuf[0]) ||
            fftw_alignment_of((double *)f->lbuf[t]) != fftw_alignment_of((double *)f->lbuf[0])) {
            tg_fail(st, TG_ERR_INTERNAL,
                    "Fourier transform: fftw_malloc returned buffers of different alignment");
            tg_fft2_destroy(f);
            return NULL;
        }
    }

    int n[1] = {P};
    f->r2c = fftw_plan_many_dft_r2c(1, n, f->rrows, f->rbuf[0], NULL, 1, f->rdist, f->cbuf[0],
                                    NULL, 1, f->cdist, FFTW_ESTIMATE);
    f->c2r = fftw_plan_many_dft_c2r(1, n, f->rrows, f->cbuf[0], NULL, 1, f->cdist, f->rbuf[0],
                                    NULL, 1, f->rdist, FFTW_ESTIMATE);
    f->cfwd = column_plan(f, TG_FFT2_BATCH, FFTW_FORWARD);
    f->cbwd = column_plan(f, TG_FFT2_BATCH, FFTW_BACKWARD);
    if (f->ctail == TG_FFT2_BATCH) {
        f->cfwd_tail = f->cfwd;
        f->cbwd_tail = f->cbwd;
    } else {
        f->cfwd_tail = column_plan(f, f->ctail, FFTW_FORWARD);
        f->cbwd_tail = column_plan(f, f->ctail, FFTW_BACKWARD);
    }
    if (!f->r2c || !f->c2r || !f->cfwd || !f->cbwd || !f->cfwd_tail || !f->cbwd_tail) {
        tg_fail(st, TG_ERR_NUMERIC,
                "Fourier transform: FFTW could not plan the batched transforms of length %d "
                "(real-to-complex %s, complex-to-real %s, complex %s)", P,
                f->r2c ? "ok" : "failed", f->c2r ? "ok" : "failed",
                (f->cfwd && f->cbwd && f->cfwd_tail && f->cbwd_tail) ? "ok" : "failed");
        tg_fft2_destroy(f);
        return NULL;
    }
    tg_log(TG_LOG_DEBUG,
           "Fourier transform: P = %d, %d row blocks of %d, %d column blocks, buffers for %d "
           "threads",
           P, f->nrb, f->brows, f->ncb, f->nthreads);
    return f;
}

int tg_fft2_size(const tg_fft2 *f)
{
    return f ? f->P : 0;
}

long tg_fft2_spec_len(const tg_fft2 *f)
{
    return f ? 2L * f->nc * f->P : 0;
}

/* Threads for a transform: as many as OpenMP would use, at most those with buffers. */
static int team_size(const tg_fft2 *f)
{
    int nt = omp_get_max_threads();
    return nt < f->nthreads ? nt : f->nthreads;
}

/* One column block's spectral factor: v[2 ky] and v[2 ky + 1] times
 * fc[ky] s, ky = 0..P-1. With s = 1/P^2, the inverse's scaling (a power of
 * two: exact) is done here instead of after the inverse row pass; the
 * inverse transforms only add and multiply, so their results come out
 * scaled by s bit for bit as if s were applied after them (outside the
 * subnormal range). Compiled for AVX2 too (simdclone.h; the same bits). */
TG_SIMD_CLONES static void multiply_factor(double *restrict v, const double *restrict fc, double s, int P)
{
#pragma omp simd
    for (int ky = 0; ky < P; ky++) {
        const double w = fc[ky] * s;
        v[2 * ky] *= w;
        v[2 * ky + 1] *= w;
    }
}

/* Complex FFTs of rows kx of `src` (P complex each, interleaved doubles,
 * rows sdist complex apart) into the same rows of `dst` (ddist apart; may
 * equal src), blocks of TG_FFT2_BATCH rows shared among the threads of the
 * enclosing parallel region, through the thread's buffer with `full` or
 * `tail`. */
static void column_pass(const tg_fft2 *f, const double *src, size_t sdist, double *dst,
                        size_t ddist, fftw_plan full, fftw_plan tail)
{
    const int P = f->P;
    fftw_complex *lb = f->lbuf[omp_get_thread_num()];
#pragma omp for schedule(static)
    for (int b = 0; b < f->ncb; b++) {
        const int k0 = b * TG_FFT2_BATCH;
        const int cols = (b == f->ncb - 1) ? f->ctail : TG_FFT2_BATCH;
        for (int c = 0; c < cols; c++)
            memcpy(lb + (size_t)c * f->ldist, src + 2 * (k0 + c) * sdist,
                   sizeof(fftw_complex) * P);
        fftw_execute_dft(cols == TG_FFT2_BATCH ? full : tail, lb, lb);
        for (int c = 0; c < cols; c++)
            memcpy(dst + 2 * (k0 + c) * ddist, lb + (size_t)c * f->ldist,
                   sizeof(fftw_complex) * P);
    }
}

/* The column pass of a spectral multiplication, in place on a work array
 * w (rows ldist apart, laid out and aligned like the thread buffers, so the
 * planned transforms run on it directly): each block of TG_FFT2_BATCH rows
 * goes forward, is multiplied by factor[kx P + ky] / P^2 (multiply_factor)
 * and goes back while it is in cache; the values are those that the
 * separate passes would give, bit for bit, with the inverse's 1/P^2
 * already applied. In the enclosing parallel region. */
static void column_pass_work(const tg_fft2 *f, double *w, const double *factor)
{
    const int P = f->P;
    /* 1/P^2 with P a power of two: exact. */
    const double scale = 1.0 / ((double)P * (double)P);
#pragma omp for schedule(static)
    for (int b = 0; b < f->ncb; b++) {
        const int k0 = b * TG_FFT2_BATCH;
        const int full = b < f->ncb - 1 || f->ctail == TG_FFT2_BATCH;
        const int cols = full ? TG_FFT2_BATCH : f->ctail;
        fftw_complex *blk = (fftw_complex *)(w + 2 * (size_t)k0 * f->ldist);
        fftw_execute_dft(full ? f->cfwd : f->cfwd_tail, blk, blk);
        for (int c = 0; c < cols; c++)
            multiply_factor((double *)(blk + (size_t)c * f->ldist),
                            factor + (size_t)(k0 + c) * P, scale, P);
        fftw_execute_dft(full ? f->cbwd : f->cbwd_tail, blk, blk);
    }
}

/* Transposing copy of complex values (two doubles each): dst[2 r], dst[2 r + 1]
 * = src + r * sstride, r = 0..n-1, for the rows of a block (dst contiguous)
 * from a column of the thread's half-spectrum buffer; transpose_out is the
 * reverse. A full block of TG_FFT2_ROW_CALLS x TG_FFT2_BATCH rows takes the
 * unrolled path. */
static inline void transpose_in(double *restrict dst, const double *restrict src, size_t sstride,
                                int n)
{
    if (n == TG_FFT2_ROW_CALLS * TG_FFT2_BATCH) {
#pragma GCC unroll 16
        for (int r = 0; r < TG_FFT2_ROW_CALLS * TG_FFT2_BATCH; r++)
            memcpy(dst + 2 * r, src + r * sstride, 2 * sizeof(double));
    } else {
        for (int r = 0; r < n; r++)
            memcpy(dst + 2 * r, src + r * sstride, 2 * sizeof(double));
    }
}

static inline void transpose_out(double *restrict dst, size_t dstride, const double *restrict src,
                                 int n)
{
    if (n == TG_FFT2_ROW_CALLS * TG_FFT2_BATCH) {
#pragma GCC unroll 16
        for (int r = 0; r < TG_FFT2_ROW_CALLS * TG_FFT2_BATCH; r++)
            memcpy(dst + r * dstride, src + 2 * r, 2 * sizeof(double));
    } else {
        for (int r = 0; r < n; r++)
            memcpy(dst + r * dstride, src + 2 * r, 2 * sizeof(double));
    }
}

/* Row block b's r2c from the real rows rb into spec[kx][j] (transposed;
 * rows kx `dist` complex apart), with the thread's half-spectrum buffer cb. */
static void forward_block(const tg_fft2 *f, int b, double *rb, fftw_complex *cb, double *spec,
                          size_t dist)
{
    const int j0 = b * f->brows;
    for (int c = 0; c < f->ncalls; c++)
        fftw_execute_dft_r2c(f->r2c, rb + (size_t)c * f->rrows * f->rdist,
                             cb + (size_t)c * f->rrows * f->cdist);
    for (int kx = 0; kx < f->nc; kx++)
        transpose_in(spec + 2 * (kx * dist + j0), (const double *)(cb + kx),
                     2 * (size_t)f->cdist, f->brows);
}

/* Row block b of w[kx][j] (after the column pass; rows kx `dist` complex
 * apart) back along kx into the real rows rb (not scaled), with the
 * thread's half-spectrum buffer cb. */
static void inverse_block(const tg_fft2 *f, int b, const double *w, size_t dist,
                          fftw_complex *cb, double *rb)
{
    const int j0 = b * f->brows;
    for (int kx = 0; kx < f->nc; kx++)
        transpose_out((double *)(cb + kx), 2 * (size_t)f->cdist, w + 2 * (kx * dist + j0),
                      f->brows);
    for (int c = 0; c < f->ncalls; c++)
        fftw_execute_dft_c2r(f->c2r, cb + (size_t)c * f->rrows * f->cdist,
                             rb + (size_t)c * f->rrows * f->rdist);
}

/* Rows along x of `in` (row length `stride`) into spec[kx][j] (rows kx
 * `dist` complex apart), in the enclosing parallel region. */
static void row_pass_forward(const tg_fft2 *f, const double *in, int stride, double *spec,
                             size_t dist)
{
    const int rr = f->brows, tid = omp_get_thread_num();
    double *rb = f->rbuf[tid];
#pragma omp for schedule(static)
    for (int b = 0; b < f->nrb; b++) {
        for (int r = 0; r < rr; r++)
            memcpy(rb + (size_t)r * f->rdist, in + (size_t)(b * rr + r) * stride,
                   sizeof(double) * f->P);
        forward_block(f, b, rb, f->cbuf[tid], spec, dist);
    }
}

/* Rows of w[kx][j] (after the column pass; rows kx `dist` complex apart)
 * back along kx into `out` (row length `stride`), in the enclosing parallel
 * region, with the factor 1/P^2 unless the column pass applied it
 * (`scaled`). */
static void row_pass_inverse(const tg_fft2 *f, const double *w, size_t dist, int scaled,
                             double *out, int stride)
{
    const int P = f->P, rr = f->brows, tid = omp_get_thread_num();
    /* 1/P^2 with P a power of two: exact. */
    const double scale = 1.0 / ((double)P * (double)P);
    double *rb = f->rbuf[tid];
#pragma omp for schedule(static)
    for (int b = 0; b < f->nrb; b++) {
        inverse_block(f, b, w, dist, f->cbuf[tid], rb);
        for (int r = 0; r < rr; r++) {
            const double *x = rb + (size_t)r * f->rdist;
            double *restrict o = out + (size_t)(b * rr + r) * stride;
            if (scaled)
                memcpy(o, x, sizeof(double) * P);
            else
                for (int i = 0; i < P; i++)
                    o[i] = scale * x[i];
        }
    }
}

void tg_fft2_forward(tg_fft2 *f, const double *in, int stride, double *spec)
{
#pragma omp parallel num_threads(team_size(f))
    {
        row_pass_forward(f, in, stride, spec, f->P);
        /* along y: spec[kx][ky] */
        column_pass(f, spec, f->P, spec, f->P, f->cfwd, f->cfwd_tail);
    }
}

void tg_fft2_inverse(tg_fft2 *f, const double *spec, double *out, int stride)
{
#pragma omp parallel num_threads(team_size(f))
    {
        /* along ky: work[kx][j] */
        column_pass(f, spec, f->P, f->work[0], f->ldist, f->cbwd, f->cbwd_tail);
        /* along kx: out[j][i] */
        row_pass_inverse(f, f->work[0], f->ldist, 0, out, stride);
    }
}

void tg_fft2_apply(tg_fft2 *f, int nfields, double *const *fields, int stride,
                   const double *const *factors)
{
    /* One parallel region, field after field, through the first work array. */
#pragma omp parallel num_threads(team_size(f))
    for (int n = 0; n < nfields; n++) {
        row_pass_forward(f, fields[n], stride, f->work[0], f->ldist);
        column_pass_work(f, f->work[0], factors[n]);
        row_pass_inverse(f, f->work[0], f->ldist, 1, fields[n], stride);
    }
}

tg_code tg_fft2_reserve(tg_fft2 *f, int nfields, tg_status *st)
{
    tg_status_clear(st);
    if (nfields < 1 || nfields > TG_FFT2_MAX_FIELDS)
        return tg_fail(st, TG_ERR_INTERNAL,
                       "Fourier transform: %d fields for one pass requested (1 to %d allowed)",
                       nfields, TG_FFT2_MAX_FIELDS);
    if (nfields <= f->nrows)
        return TG_OK;
    const size_t wlen = 2 * (size_t)f->nc * f->ldist;
    for (int n = f->nwork; n < nfields; n++) {
        f->work[n] = fftw_malloc(wlen * sizeof(double));
        if (!f->work[n])
            return tg_fail(st, TG_ERR_NOMEM,
                           "Fourier transform: cannot allocate work array %d for P = %d "
                           "(%zu bytes)", n, f->P, wlen * sizeof(double));
        memset(f->work[n], 0, wlen * sizeof(double));
        f->nwork = n + 1; /* freed by tg_fft2_destroy from here on */
        if (fftw_alignment_of(f->work[n]) != fftw_alignment_of((double *)f->lbuf[0]))
            return tg_fail(st, TG_ERR_INTERNAL,
                           "Fourier transform: work array %d is not aligned like the planned "
                           "columns", n);
    }
    /* Every thread's real rows for every field, each block aligned like the
     * planned one (new-array execute). */
    for (int t = 0; t < f->nthreads; t++) {
        double *rb = fftw_malloc((size_t)nfields * f->rlen * sizeof(double));
        if (!rb)
            return tg_fail(st, TG_ERR_NOMEM,
                           "Fourier transform: fftw_malloc failed for the rows of %d fields "
                           "of thread %d", nfields, t);
        memset(rb, 0, (size_t)nfields * f->rlen * sizeof(double));
        fftw_free(f->rbuf[t]);
        f->rbuf[t] = rb;
    }
    for (int t = 0; t < f->nthreads; t++)
        for (int n = 0; n < nfields; n++)
            if (fftw_alignment_of(f->rbuf[t] + n * f->rlen) != fftw_alignment_of(f->rbuf[0]))
                return tg_fail(st, TG_ERR_INTERNAL,
                               "Fourier transform: the rows of field %d are not aligned like "
                               "the planned rows", n);
    f->nrows = nfields;
    return TG_OK;
}

void tg_fft2_apply_fused(tg_fft2 *f, int nfields, tg_fft2_fill_fn fill,
                         const double *const *factors, tg_fft2_take_fn take, void *ctx)
{
    const int rr = f->brows;
#pragma omp parallel num_threads(team_size(f))
    {
        const int tid = omp_get_thread_num();
        double *rows[TG_FFT2_MAX_FIELDS];
        /* Forward: each row block of every field filled, then each field's
         * block to its spectrum. */
#pragma omp for schedule(static)
        for (int b = 0; b < f->nrb; b++) {
            for (int r = 0; r < rr; r++) {
                for (int n = 0; n < nfields; n++)
                    rows[n] = f->rbuf[tid] + n * f->rlen + (size_t)r * f->rdist;
                fill(ctx, b * rr + r, rows);
            }
            for (int n = 0; n < nfields; n++)
                forward_block(f, b, f->rbuf[tid] + n * f->rlen, f->cbuf[tid], f->work[n],
                              f->ldist);
        }
        /* Columns: forward, factor, backward, field after field. */
        for (int n = 0; n < nfields; n++)
            column_pass_work(f, f->work[n], factors[n]);
        /* Inverse: each row block of every field, then its rows handed over. */
#pragma omp for schedule(static)
        for (int b = 0; b < f->nrb; b++) {
            for (int n = 0; n < nfields; n++)
                inverse_block(f, b, f->work[n], f->ldist, f->cbuf[tid],
                              f->rbuf[tid] + n * f->rlen);
            for (int r = 0; r < rr; r++) {
                for (int n = 0; n < nfields; n++)
                    rows[n] = f->rbuf[tid] + n * f->rlen + (size_t)r * f->rdist;
                take(ctx, b * rr + r, (const double *const *)rows);
            }
        }
    }
}
