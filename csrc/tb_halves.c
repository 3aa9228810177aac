/*
 * tb_halves.c -- sliding correlation of a signal with itself a period later.
 *
 * Timing and frequency synchronisation from a repeated preamble (two
 * identical halves) or from the cyclic prefix needs, at every candidate
 * start d of a long stream,
 *
 *     p[d] = sum_{m=0}^{W-1} conj(x[d+m]) x[d+m+L]      (correlation)
 *     r[d] = sum_{m=0}^{W-1} |x[d+m+L]|^2              (energy, later part)
 *
 * for d = 0 .. n - L - W, with period L and window W:
 *
 *     x:   | d ... d+W-1 | ...... | d+L ... d+L+W-1 |
 *            \___ conj ____________/ multiplied pairwise, summed
 *
 * Summing W products per output costs O(W) per sample; the running form
 *
 *     p[d+1] = p[d] + (conj(x[d+W]) x[d+W+L] - conj(x[d]) x[d+L])
 *
 * costs O(1).  A running sum carries its rounding errors along, so the
 * outputs are cut into blocks of TB_HALVES_BLOCK: each block starts from
 * a direct sum of W products and runs the recursion from there.  The
 * error of any output is then that of at most W + 2 TB_HALVES_BLOCK
 * additions whatever the stream length, at a cost of W /
 * TB_HALVES_BLOCK extra products per output.  Sums are accumulated in
 * double for both precisions (a float accumulator would lose about
 * log2(block) bits); float outputs are rounded once at the end.
 */
#include <stddef.h>

#include "tonebank.h"

/* Outputs per block between direct re-summations (see above). */
#define TB_HALVES_BLOCK 4096

static int tb_halves_check(size_t n, size_t period, size_t window, const void *x,
                           const void *p, const void *r)
{
    if (x == NULL || p == NULL || r == NULL)
        return TB_ERR_NULL;
    /* n_out = n - period - window + 1 outputs; zero of them is fine */
    if (period == 0 || window == 0 || n + 1 < period + window)
        return TB_ERR_ARG;
    return TB_OK;
}

#define REAL float
#define SFX(f) f##_f32
#include "tb_halves_impl.h"
#undef REAL
#undef SFX

#define REAL double
#define SFX(f) f##_f64
#include "tb_halves_impl.h"
#undef REAL
#undef SFX

int tb_halves_correlation_f32(size_t batch, size_t n, size_t period, size_t window,
                              const float *x, ptrdiff_t x_stride, float *p,
                              ptrdiff_t p_stride, float *r, ptrdiff_t r_stride)
{
    size_t q;
    int status = tb_halves_check(n, period, window, x, p, r);
    if (status != TB_OK)
        return status;
    for (q = 0; q < batch; q++)
        tb_halves_row_f32(n, period, window, x + 2 * (ptrdiff_t)q * x_stride,
                          p + 2 * (ptrdiff_t)q * p_stride, r + (ptrdiff_t)q * r_stride);
    return TB_OK;
}

int tb_halves_correlation_f64(size_t batch, size_t n, size_t period, size_t window,
                              const double *x, ptrdiff_t x_stride, double *p,
                              ptrdiff_t p_stride, double *r, ptrdiff_t r_stride)
{
    size_t q;
    int status = tb_halves_check(n, period, window, x, p, r);
    if (status != TB_OK)
        return status;
    for (q = 0; q < batch; q++)
        tb_halves_row_f64(n, period, window, x + 2 * (ptrdiff_t)q * x_stride,
                          p + 2 * (ptrdiff_t)q * p_stride, r + (ptrdiff_t)q * r_stride);
    return TB_OK;
}
