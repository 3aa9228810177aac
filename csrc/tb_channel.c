/*
 * tb_channel.c -- time-varying FIR filtering for channel models.
 *
 * A tapped-delay-line channel turns the transmitted samples x into
 *
 *     y[i] = sum_{m=0}^{L-1} c_m(i) x[i - m]
 *
 * with L lags whose complex taps c_m(i) change with time (fading).  The
 * taps are given at knots, every `interval` samples, and are linear in
 * time between two knots:
 *
 *     knot:    0         1         2                 taps[set][knot][lag]
 *     sample:  |--interval--|--interval--| ...       (interleaved re, im)
 *              ^ offset samples before x[0]
 *
 *     c_m(i) = a_m + t (b_m - a_m),  a = knot k, b = knot k + 1,
 *     k = (offset + i) / interval,   t = ((offset + i) mod interval) / interval
 *
 * With one knot the taps are constant (block fading; interval and offset
 * are then not used).  x[i - m] for i < m comes from `hist`, the L - 1
 * samples that preceded x (oldest first), so a stream cut into chunks
 * gives the same samples as one call.  The work is tiled (see
 * tb_channel_impl.h) so that the inner loop runs over samples with unit
 * stride for a fixed lag, which compilers vectorise.  On x86-64 (GCC,
 * clang) an AVX2 copy is chosen at run time when the CPU has it, as in
 * tb_fft.c; define TB_NO_DISPATCH for the portable copy only.
 */
#include <stddef.h>

#include "tonebank.h"

#if defined(__GNUC__) || defined(__clang__) || defined(_MSC_VER)
#define TB_CHAN_RESTRICT __restrict
#else
#define TB_CHAN_RESTRICT
#endif

/* Output samples per tile: the tile of y and the slice of x it reads
 * stay in the L1 cache while every lag passes over them. */
#define TB_CHAN_TILE 256

static int tb_chan_check(size_t batch, size_t n, size_t n_lags, const void *x,
                         const void *hist, const void *taps, size_t n_tap_sets,
                         size_t n_knots, size_t interval, size_t offset, const void *y)
{
    if (x == NULL || taps == NULL || y == NULL || (n_lags > 1 && hist == NULL))
        return TB_ERR_NULL;
    if (n_lags == 0 || n_tap_sets == 0 || n_knots == 0)
        return TB_ERR_ARG;
    if (n_knots > 1) {
        if (interval == 0)
            return TB_ERR_ARG;
        /* every sample needs knots k and k + 1 */
        if (n > 0 && (offset + n - 1) / interval + 2 > n_knots)
            return TB_ERR_ARG;
    }
    (void)batch;
    return TB_OK;
}

#if !defined(TB_NO_DISPATCH) && (defined(__x86_64__) || defined(_M_X64)) &&            \
    (defined(__GNUC__) || defined(__clang__))
#define TB_CHAN_AVX2 1
#else
#define TB_CHAN_AVX2 0
#endif

#define REAL float
#define SFX(f) f##_f32
#include "tb_channel_impl.h"
#undef REAL
#undef SFX

#define REAL double
#define SFX(f) f##_f64
#include "tb_channel_impl.h"
#undef REAL
#undef SFX

#if TB_CHAN_AVX2
/* The same code compiled for AVX2 (as tb_fft.c does): no FMA, so each
 * output is the same sequence of IEEE operations and the results are
 * bit-identical to the portable copy; only the vector width changes. */
#if defined(__clang__)
#pragma clang attribute push(__attribute__((target("avx2"))), apply_to = function)
#else
#pragma GCC push_options
#pragma GCC target("avx2")
#endif

#define REAL float
#define SFX(f) f##_f32_avx2
#include "tb_channel_impl.h"
#undef REAL
#undef SFX

#define REAL double
#define SFX(f) f##_f64_avx2
#include "tb_channel_impl.h"
#undef REAL
#undef SFX

#if defined(__clang__)
#pragma clang attribute pop
#else
#pragma GCC pop_options
#endif

/* 1 when the CPU and the OS support AVX2 (the compiler's run-time check). */
static int tb_chan_has_avx2(void)
{
    __builtin_cpu_init();
    return __builtin_cpu_supports("avx2") ? 1 : 0;
}
#define TB_CHAN_PICK(name, args) (tb_chan_has_avx2() ? name##_avx2 args : name args)
#else
#define TB_CHAN_PICK(name, args) (name args)
#endif

int tb_channel_fir_f32(size_t batch, size_t n, size_t n_lags,
                       const float *x, ptrdiff_t x_batch_stride,
                       const float *hist, ptrdiff_t hist_batch_stride,
                       const float *taps, size_t n_tap_sets, size_t n_knots,
                       size_t interval, size_t offset,
                       float *y, ptrdiff_t y_batch_stride)
{
    int status = tb_chan_check(batch, n, n_lags, x, hist, taps, n_tap_sets, n_knots,
                               interval, offset, y);
    if (status != TB_OK)
        return status;
    TB_CHAN_PICK(tb_chan_rows_f32, (batch, n, n_lags, x, x_batch_stride, hist,
                                    hist_batch_stride, taps, n_tap_sets, n_knots, interval,
                                    offset, y, y_batch_stride));
    return TB_OK;
}

int tb_channel_fir_f64(size_t batch, size_t n, size_t n_lags,
                       const double *x, ptrdiff_t x_batch_stride,
                       const double *hist, ptrdiff_t hist_batch_stride,
                       const double *taps, size_t n_tap_sets, size_t n_knots,
                       size_t interval, size_t offset,
                       double *y, ptrdiff_t y_batch_stride)
{
    int status = tb_chan_check(batch, n, n_lags, x, hist, taps, n_tap_sets, n_knots,
                               interval, offset, y);
    if (status != TB_OK)
        return status;
    TB_CHAN_PICK(tb_chan_rows_f64, (batch, n, n_lags, x, x_batch_stride, hist,
                                    hist_batch_stride, taps, n_tap_sets, n_knots, interval,
                                    offset, y, y_batch_stride));
    return TB_OK;
}
