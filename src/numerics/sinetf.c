/* sinetf.c - fast 2-D type-I discrete sine transform (see sinetf.h).
 *
 * 1-D DST-I of length n = N - 1 from one real-to-complex FFT of length N
 * (Press et al. 2007, Numerical Recipes 3rd ed., section 12.4.1; Makhoul
 * 1980, IEEE Trans. ASSP 28, 27-34). With f_0 = 0, form
 *   y_j = sin(j pi/N) (f_j + f_{N-j}) + (f_j - f_{N-j})/2,   j = 0..N-1,
 * and its FFT Y_k = sum_j y_j exp(-2 pi i j k/N) = R_k - i S_k. The
 * symmetric part of y only feeds R, the antisymmetric part only S, and
 *   F_{2k}   = S_k = -Im Y_k,                 k = 1..N/2-1,
 *   F_{2k+1} = F_{2k-1} + R_k,  F_1 = R_0/2,  k = 1..N/2-1,
 * where F_k = sum_{j=1}^{N-1} f_j sin(pi j k/N).
 *
 * The real FFT of length N is itself one complex FFT of length M = N/2 of
 * z_j = y_{2j} + i y_{2j+1} (the same memory as y) and an O(N) unpacking
 * (Press et al. 2007, section 12.3.2, eq. 12.3.6):
 *   Y_k = (Z_k + conj Z_{M-k})/2 - (i/2) exp(-2 pi i k/N) (Z_k - conj Z_{M-k}),
 * with Z_M = Z_0. FFTW's planner without timing (FFTW_ESTIMATE) picks its
 * vectorized complex codelets for these lengths, but a scalar codelet for
 * real ones: at N = 128 the complex FFT and unpacking cost about 0.14 us a
 * row against 0.33 us for FFTW's r2c plan (measured on AVX2). For N > 256
 * FFTW's r2c plan is as fast (0.55 us at N = 512 against 0.43 us plus the
 * unpacking), and is kept.
 *
 * Rows are transformed in fixed blocks of TG_DST_BATCH rows by one batched
 * FFTW plan (a second plan serves the shorter last block). Blocks are fixed
 * by row index, not by thread, and each thread uses its own buffers with the
 * plan's sizes and alignment (fftw_execute_dft_r2c, new-array execute), so
 * the arithmetic done on each row does not depend on the thread count.
 *
 * Around each FFTW call, a block's pre-processing (f -> y, rows in FFTW's
 * input layout: row r at r * rdist reals) and post-processing (Y -> F) are
 * functions with an AVX2 copy (simdclone.h; element by element the same
 * bits as the baseline copy). FFTW keeps the row-contiguous layout it was
 * planned with (row r's Y_k at r * cdist + k complex), so its plans and
 * round-off do not change. The post-processing first forms the running
 * sums of the odd coefficients of a block's rows in place of Re Y_k, the
 * loop over the block's rows innermost and vectorized: the sums advance
 * four rows per AVX2 vector, two per SSE2 vector, each row's additions in
 * the order of the plain recurrence (one vector loads the values of one k
 * from rows cdist complex apart). Then (F_{2k-1},
 * F_{2k}) = scale * (-Im Y_k, Re Y_k): for row-major output a swap within
 * each pair, vectorized along k; for transposed output (row r becomes
 * column r) a loop over the block's rows writing consecutive doubles of
 * two output rows per k, fused with the sums.
 *
 * The 2-D transform is two passes of row transforms. The first writes its
 * rows as the columns of a padded n x (N+8) work array (a transpose on the
 * way out, so no separate transpose pass); the second transforms the rows
 * of that array into the result. The inverse thus only reads `spec` (the
 * header lets it overwrite it).
 *
 * Ownership: tg_dst owns its plans, sine table, work arrays and the
 * per-thread buffers; tg_dst_destroy frees them all. One tg_dst serves one
 * caller at a time (its work arrays are shared by its threads). FFTW's
 * planner is not thread-safe: tg_dst_create and tg_dst_destroy must not run
 * while another thread makes or destroys FFTW plans. Only FFTW_ESTIMATE
 * plans are made (timed planning would make round-off differ between runs).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "sinetf.h"
#include "simdclone.h"

#include <fftw3.h>
#include <math.h>
#include <omp.h>
#include <stdlib.h>
#include <string.h>

/* Rows per FFTW call (fixed: it decides which plan transforms each row). */
#define TG_DST_BATCH 8

/* Largest FFT length N done as a complex FFT of length N/2 (see above). */
#define TG_DST_HALF_MAX 256

struct tg_dst {
    int n;           /* interior points per row */
    int len;         /* FFT length N = n + 1 */
    int nc;          /* complex outputs per row, N/2 + 1 */
    int nblocks;     /* row blocks: ceil(n / TG_DST_BATCH) */
    int tail;        /* rows in the last block (1..TG_DST_BATCH) */
    int nthreads;    /* threads with buffers */
    int ld;          /* row stride of the work arrays */
    int rdist;       /* row distance in rbuf (reals) */
    int cdist;       /* row distance in cbuf (complex) */
    int half;        /* 1: the real FFT is a complex FFT of length N/2 + unpacking */
    double *sint;    /* sin(j pi/N), j = 0..N/2 */
    double *tw;      /* half: cos(2 pi k/N), sin(2 pi k/N) pairs, k = 0..N/2 */
    double *work;    /* n x ld: the first row pass, transposed */
    double **rbuf;   /* per thread: TG_DST_BATCH rows of rdist reals */
    fftw_complex **cbuf; /* per thread: TG_DST_BATCH rows of cdist complex */
    fftw_complex **zbuf; /* half: per thread, the complex FFT's output, as cbuf */
    fftw_plan full;  /* TG_DST_BATCH rows */
    fftw_plan last;  /* `tail` rows; equal to `full` when tail == TG_DST_BATCH */
};

static fftw_plan make_plan(const tg_dst *d, int rows)
{
    if (d->half) {
        int sz[1] = {d->len / 2};
        return fftw_plan_many_dft(1, sz, rows, (fftw_complex *)d->rbuf[0], NULL, 1,
                                  d->rdist / 2, d->zbuf[0], NULL, 1, d->cdist, FFTW_FORWARD,
                                  FFTW_ESTIMATE);
    }
    int sz[1] = {d->len};
    return fftw_plan_many_dft_r2c(1, sz, rows, d->rbuf[0], NULL, 1, d->rdist, d->cbuf[0],
                                  NULL, 1, d->cdist, FFTW_ESTIMATE);
}

/* Each thread's batch buffers (rlen doubles, clen complex), zeroed and
 * aligned like thread 0's, as new-array execution needs. */
static tg_code alloc_row_buffers(tg_dst *d, size_t rlen, size_t clen, tg_status *st)
{
    for (int t = 0; t < d->nthreads; t++) {
        d->rbuf[t] = fftw_malloc(rlen * sizeof(double));
        d->cbuf[t] = fftw_malloc(clen * sizeof(fftw_complex));
        if (d->half)
            d->zbuf[t] = fftw_malloc(clen * sizeof(fftw_complex));
        if (!d->rbuf[t] || !d->cbuf[t] || (d->half && !d->zbuf[t]))
            return tg_fail(st, TG_ERR_NOMEM,
                           "sine transform: fftw_malloc failed for the buffers of thread %d of %d",
                           t, d->nthreads);
        memset(d->rbuf[t], 0, rlen * sizeof(double));
        memset(d->cbuf[t], 0, clen * sizeof(fftw_complex));
        if (d->half)
            memset(d->zbuf[t], 0, clen * sizeof(fftw_complex));
        /* New-array execute needs every buffer aligned like the planned one. */
        if (fftw_alignment_of(d->rbuf[t]) != fftw_alignment_of(d->rbuf[0]) ||
            fftw_alignment_of((double *)d->cbuf[t]) != fftw_alignment_of((double *)d->cbuf[0]) ||
            (d->half && fftw_alignment_of((double *)d->zbuf[t]) !=
                            fftw_alignment_of((double *)d->zbuf[0])))
            return tg_fail(st, TG_ERR_INTERNAL,
                           "sine transform: fftw_malloc returned buffers of different alignment");
    }
    return TG_OK;
}

/* The plans: one for a full batch of rows and one for the last, shorter
 * batch (the same plan when the rows divide evenly). */
static tg_code make_plans(tg_dst *d, tg_status *st)
{
    if (!(d->full = make_plan(d, TG_DST_BATCH)))
        return tg_fail(st, TG_ERR_NUMERIC,
                       "sine transform: FFTW could not plan %d real-to-complex transforms of "
                       "length %d", TG_DST_BATCH, d->len);
    if (d->tail == TG_DST_BATCH)
        d->last = d->full;
    else if (!(d->last = make_plan(d, d->tail)))
        return tg_fail(st, TG_ERR_NUMERIC,
                       "sine transform: FFTW could not plan %d real-to-complex transforms of "
                       "length %d", d->tail, d->len);
    return TG_OK;
}

tg_dst *tg_dst_create(int n, tg_status *st)
{
    tg_status_clear(st);
    if (n < 3 || n >= (1 << 24) || ((n + 1) & n) != 0) {
        tg_fail(st, TG_ERR_CONFIG,
                "sine transform: interior size n = %d is not allowed: n + 1 must be a "
                "power of two with 3 <= n <= %d (e.g. 127, 255, 511)", n, (1 << 24) - 1);
        return NULL;
    }
    tg_dst *d = calloc(1, sizeof *d);
    if (!d) {
        tg_fail(st, TG_ERR_NOMEM, "sine transform: cannot allocate the transform record");
        return NULL;
    }
    d->n = n;
    d->len = n + 1;
    d->nc = d->len / 2 + 1;
    d->nblocks = (n + TG_DST_BATCH - 1) / TG_DST_BATCH;
    d->tail = n - (d->nblocks - 1) * TG_DST_BATCH;
    d->nthreads = omp_get_max_threads();
    if (d->nthreads < 1)
        d->nthreads = 1;
    /* Rows 2^k doubles apart share cache sets; these paddings shift each
     * row by one cache line (64 bytes). */
    d->ld = d->len + 8;
    d->rdist = d->len + 8;
    d->cdist = d->nc + 3;
    d->half = d->len <= TG_DST_HALF_MAX;

    size_t nn = (size_t)n * (size_t)d->ld;
    size_t rlen = (size_t)TG_DST_BATCH * (size_t)d->rdist;
    size_t clen = (size_t)TG_DST_BATCH * (size_t)d->cdist;

    d->sint = malloc(((size_t)d->len / 2 + 1) * sizeof *d->sint);
    d->work = fftw_malloc(nn * sizeof *d->work);
    d->rbuf = calloc((size_t)d->nthreads, sizeof *d->rbuf);
    d->cbuf = calloc((size_t)d->nthreads, sizeof *d->cbuf);
    d->zbuf = calloc((size_t)d->nthreads, sizeof *d->zbuf);
    d->tw = malloc(((size_t)d->len + 2) * sizeof *d->tw);
    if (!d->sint || !d->work || !d->rbuf || !d->cbuf || !d->zbuf || !d->tw) {
        tg_fail(st, TG_ERR_NOMEM,
                "sine transform: cannot allocate work arrays for n = %d (%zu bytes)", n,
                nn * sizeof(double));
        tg_dst_destroy(d);
        return NULL;
    }
    if (alloc_row_buffers(d, rlen, clen, st) != TG_OK) {
        tg_dst_destroy(d);
        return NULL;
    }

    const double pi = 3.14159265358979323846;
    for (int j = 0; j <= d->len / 2; j++)
        d->sint[j] = sin(pi * j / d->len);
    for (int k = 0; k <= d->len / 2; k++) {
        d->tw[2 * k] = cos(2.0 * pi * k / d->len);
        d->tw[2 * k + 1] = sin(2.0 * pi * k / d->len);
    }

    if (make_plans(d, st) != TG_OK) {
        tg_dst_destroy(d);
        return NULL;
    }
    tg_log(TG_LOG_DEBUG,
           "sine transform: n = %d, %d row blocks of %d, buffers for %d threads, %s", n,
           d->nblocks, TG_DST_BATCH, d->nthreads,
           d->half ? "complex FFTs of length (n+1)/2" : "real FFTs of length n+1");
    return d;
}

void tg_dst_destroy(tg_dst *d)
{
    if (!d)
        return;
    if (d->last && d->last != d->full)
        fftw_destroy_plan(d->last);
    if (d->full)
        fftw_destroy_plan(d->full);
    if (d->rbuf)
        for (int t = 0; t < d->nthreads; t++)
            fftw_free(d->rbuf[t]);
    if (d->cbuf)
        for (int t = 0; t < d->nthreads; t++)
            fftw_free(d->cbuf[t]);
    if (d->zbuf)
        for (int t = 0; t < d->nthreads; t++)
            fftw_free(d->zbuf[t]);
    free(d->rbuf);
    free(d->cbuf);
    free(d->zbuf);
    free(d->tw);
    fftw_free(d->work);
    free(d->sint);
    free(d);
}

int tg_dst_size(const tg_dst *d)
{
    return d ? d->n : 0;
}

/* Pre-processing of `rows` rows: row r of f (n values f_1..f_n, rows ss
 * apart) -> row r of y (N values, rows ydist apart). An AVX2 copy
 * (simdclone.h): element by element, the same bits in both copies. */
TG_SIMD_CLONES static void dst_pre(const double *restrict sint, int len, int rows,
                                   const double *restrict f, size_t ss, double *restrict y,
                                   size_t ydist)
{
    const int h = len / 2;
    for (int r = 0; r < rows; r++) {
        const double *fr0 = f + (size_t)r * ss;
        double *yr = y + (size_t)r * ydist;
        /* The next row into the cache now: each row (4 kB at n = 511) is
         * read from both ends, too short for the processor's own
         * prefetching, and this loop waited on its loads. */
        if (r + 1 < rows)
            for (int j = 0; j < len - 1; j += 8)
                __builtin_prefetch(fr0 + ss + j);
        yr[0] = 0.0;
#pragma omp simd
        for (int j = 1; j <= h; j++) {
            double fj = fr0[j - 1], fr = fr0[len - j - 1];
            double a = sint[j] * (fj + fr);
            double b = 0.5 * (fj - fr);
            yr[j] = a + b;
            yr[len - j] = a - b;
        }
    }
}

/* The running sums of the odd coefficients of `rows` rows of Y (N/2+1
 * complex each as re, im pairs, rows cdist complex apart), in place of the
 * real parts: Re Y_k becomes 2 F_{2k+1} = Re Y_0 / 2 + Re Y_1 + ... + Re Y_k
 * (k < N/2), added in that order. The sum is a chain of dependent
 * additions in each row; the rows' chains advance together (the loop
 * over rows innermost, vectorized), so they overlap. Callers pass a whole
 * block's row count as the constant TG_DST_BATCH, for code with a fixed
 * trip count (about 17 % fewer instructions in the post-processing). */
static inline void odd_sums(int len, int cdist, int rows, double *restrict y)
{
    const int h = len / 2;
    const size_t yd = 2 * (size_t)cdist;
    double odd[TG_DST_BATCH];
    for (int r = 0; r < rows; r++) {
        odd[r] = 0.5 * y[r * yd];
        y[r * yd] = odd[r];
    }
    for (int k = 1; k < h; k++)
#pragma omp simd
        for (int r = 0; r < rows; r++) {
            odd[r] += y[r * yd + 2 * (size_t)k];
            y[r * yd + 2 * (size_t)k] = odd[r];
        }
}

/* Post-processing of `rows` rows into row-major output: Y (as for
 * odd_sums) -> scale * F_1..F_n, row r into out + r * rs. After odd_sums
 * the pair (Re Y_k, Im Y_k) gives (F_{2k-1}, F_{2k}) = (-Im Y_k, Re Y_k):
 * a swap and a multiplication, which vectorize. The operations on each
 * value, and their order, are those of the plain recurrence. */
TG_SIMD_CLONES static void dst_post_rows(int len, int cdist, int rows, double *restrict y,
                                         double scale, double *restrict out, size_t rs,
                                         const double *restrict fac)
{
    const int h = len / 2;
    if (rows == TG_DST_BATCH)
        odd_sums(len, cdist, TG_DST_BATCH, y);
    else
        odd_sums(len, cdist, rows, y);
    for (int r = 0; r < rows; r++) {
        const double *yr = y + 2 * (size_t)r * cdist;
        double *o = out + (size_t)r * rs;
        if (fac) {
            /* Each value times its factor (tg_dst_forward_times): the
             * product a separate pass over the result would form. */
            const double *f = fac + (size_t)r * rs;
            o[0] = (scale * yr[0]) * f[0];
#pragma omp simd
            for (int k = 1; k < h; k++) {
                o[2 * k - 1] = (-scale * yr[2 * k + 1]) * f[2 * k - 1];
                o[2 * k] = (scale * yr[2 * k]) * f[2 * k];
            }
            continue;
        }
        o[0] = scale * yr[0];
#pragma omp simd
        for (int k = 1; k < h; k++) {
            o[2 * k - 1] = -scale * yr[2 * k + 1];
            o[2 * k] = scale * yr[2 * k];
        }
    }
}

/* Post-processing of `rows` rows into transposed output: row r of the
 * result becomes column r of out (row stride cs). For each k the rows'
 * values fill consecutive doubles of two rows of out; the running sums
 * advance as in odd_sums, without storing them back. */
static inline void post_cols(int len, int cdist, int rows, const double *restrict y,
                             double scale, double *restrict out, size_t cs)
{
    const int h = len / 2;
    const size_t yd = 2 * (size_t)cdist;
    double odd[TG_DST_BATCH];
    for (int r = 0; r < rows; r++) {
        odd[r] = 0.5 * y[r * yd];
        out[r] = scale * odd[r];
    }
    for (int k = 1; k < h; k++) {
        double *o1 = out + (2 * (size_t)k - 1) * cs, *o2 = out + 2 * (size_t)k * cs;
        const double *yk = y + 2 * (size_t)k;
#pragma omp simd
        for (int r = 0; r < rows; r++) {
            odd[r] += yk[r * yd];
            o1[r] = -scale * yk[r * yd + 1];
            o2[r] = scale * odd[r];
        }
    }
}

TG_SIMD_CLONES static void dst_post_cols(int len, int cdist, int rows, const double *restrict y,
                                         double scale, double *restrict out, size_t cs)
{
    if (rows == TG_DST_BATCH) /* a constant trip count, as in odd_sums */
        post_cols(len, cdist, TG_DST_BATCH, y, scale, out, cs);
    else
        post_cols(len, cdist, rows, y, scale, out, cs);
}

/* The real FFT Y_k, k = 0..N/2-1, of `rows` rows from the complex FFT Z of
 * their packed halves (rows cdist complex apart in z and y), by the
 * unpacking formula in the header comment. With c + i s = exp(2 pi i k/N),
 * E = (Z_k + conj Z_{M-k})/2 and O = (Z_k - conj Z_{M-k})/2:
 *   Re Y_k = Re E - s Re O + c Im O,   Im Y_k = Im E - s Im O - c Re O.
 * Y_{N/2} is not formed: the sine coefficients do not use it. */
TG_SIMD_CLONES static void unpack_rows(const double *restrict tw, int len, int cdist, int rows,
                                       const double *restrict z, double *restrict y)
{
    const int m = len / 2;
    for (int r = 0; r < rows; r++) {
        const double *zr = z + 2 * (size_t)r * cdist;
        double *yr = y + 2 * (size_t)r * cdist;
        yr[0] = zr[0] + zr[1];
        yr[1] = 0.0;
#pragma omp simd
        for (int k = 1; k < m; k++) {
            double ar = zr[2 * k], ai = zr[2 * k + 1];
            double br = zr[2 * (m - k)], bi = -zr[2 * (m - k) + 1];
            double er = 0.5 * (ar + br), ei = 0.5 * (ai + bi);
            double or_ = 0.5 * (ar - br), oi = 0.5 * (ai - bi);
            double c = tw[2 * k], s = tw[2 * k + 1];
            yr[2 * k] = er - s * or_ + c * oi;
            yr[2 * k + 1] = ei - s * oi - c * or_;
        }
    }
}

/* 1-D DST-I of every row of src (row stride ss), times scale, into dst
 * with row stride ds: row r of the result is row r of dst, or column r of
 * dst when `transposed` (which saves a separate transpose pass). Rows are
 * shared among the threads of the enclosing parallel region. */
static void dst_rows(const tg_dst *d, const double *src, int ss, double *dst, int ds,
                     int transposed, double scale, const double *fac)
{
    int tid = omp_get_thread_num();
    double *rb = d->rbuf[tid];
    fftw_complex *cb = d->cbuf[tid];

#pragma omp for schedule(static)
    for (int b = 0; b < d->nblocks; b++) {
        int r0 = b * TG_DST_BATCH;
        int rows = (b == d->nblocks - 1) ? d->tail : TG_DST_BATCH;
        dst_pre(d->sint, d->len, rows, src + (size_t)r0 * ss, (size_t)ss, rb,
                (size_t)d->rdist);
        if (d->half) {
            fftw_complex *zb = d->zbuf[tid];
            fftw_execute_dft(rows == TG_DST_BATCH ? d->full : d->last, (fftw_complex *)rb, zb);
            unpack_rows(d->tw, d->len, d->cdist, rows, (const double *)zb, (double *)cb);
        } else {
            fftw_execute_dft_r2c(rows == TG_DST_BATCH ? d->full : d->last, rb, cb);
        }
        if (transposed)
            dst_post_cols(d->len, d->cdist, rows, (double *)cb, scale, dst + r0, (size_t)ds);
        else
            dst_post_rows(d->len, d->cdist, rows, (double *)cb, scale, dst + (size_t)r0 * ds,
                          (size_t)ds, fac ? fac + (size_t)r0 * ds : NULL);
    }
}

/* Threads for a transform: as many as OpenMP would use, at most those with buffers. */
static int team_size(const tg_dst *d)
{
    int nt = omp_get_max_threads();
    return nt < d->nthreads ? nt : d->nthreads;
}

void tg_dst_forward_times(tg_dst *d, const double *in, int stride, double *spec,
                          const double *factor)
{
    const int ld = d->ld;
#pragma omp parallel num_threads(team_size(d))
    {
        /* rows of `in` run along i, written transposed: work[kx][j] */
        dst_rows(d, in, stride, d->work, ld, 1, 1.0, NULL);
        /* along j: spec[kx][ky] (times factor[kx][ky]) */
        dst_rows(d, d->work, ld, spec, d->n, 0, 1.0, factor);
    }
}

void tg_dst_forward(tg_dst *d, const double *in, int stride, double *spec)
{
    tg_dst_forward_times(d, in, stride, spec, NULL);
}

void tg_dst_inverse(tg_dst *d, double *spec, double *out, int stride)
{
    const int ld = d->ld;
    /* (2/N)^2 with N a power of two: exact. */
    const double scale = 4.0 / ((double)d->len * (double)d->len);
#pragma omp parallel num_threads(team_size(d))
    {
        /* along ky, written transposed: work[j][kx] */
        dst_rows(d, spec, d->n, d->work, ld, 1, 1.0, NULL);
        /* along kx: out[j][i] */
        dst_rows(d, d->work, ld, out, stride, 0, scale, NULL);
    }
}
