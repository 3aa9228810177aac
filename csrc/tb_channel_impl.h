/*
 * tb_channel_impl.h -- the precision template of tb_channel.c.
 *
 * Included by tb_channel.c once per precision (REAL = float / SFX(f) =
 * f##_f32, REAL = double / SFX(f) = f##_f64), and on x86-64 with GCC or
 * clang a second time per precision under an AVX2 target (suffix
 * _avx2).  Not a header of its own.
 *
 * Layout of one output tile (at most TB_CHAN_TILE samples, all inside one
 * knot interval, so every lag has one start value a and one slope d):
 *
 *     for m in 0 .. n_lags-1:                 (lag outer: a_m, d_m in registers)
 *         for i in tile:                      (sample inner: unit stride, vectorises)
 *             ya[i] += a_m * x[i - m]         (complex multiply-adds)
 *             yd[i] += d_m * x[i - m]
 *     y[i] = ya[i] + t[i] * yd[i]             (c_m(i) = a_m + t[i] d_m)
 *
 * Each sum is accumulated over m = 0, 1, ... in that order whatever the
 * tiling, so a chunked run gives bit-identical results to a one-shot run.
 */

/* Samples i0 .. i0+len-1 of one row, all inside one knot interval.
 * Since c_m(i) = a_m + t_i d_m, the tile keeps two sums,
 *
 *     ya[i] = sum_m a_m x[i - m],   yd[i] = sum_m d_m x[i - m],
 *
 * and finishes with y[i] = ya[i] + t_i yd[i]: two plain complex
 * multiply-adds per lag and sample, which vectorise like a static FIR.
 * b == NULL (static taps) skips yd. */
static void SFX(tb_chan_tile)(size_t n_lags, size_t len, size_t i0,
                              const REAL *TB_CHAN_RESTRICT x,
                              const REAL *TB_CHAN_RESTRICT hist,
                              const REAL *TB_CHAN_RESTRICT a,
                              const REAL *TB_CHAN_RESTRICT b,
                              const REAL *TB_CHAN_RESTRICT t,
                              REAL *TB_CHAN_RESTRICT y)
{
    REAL yd[2 * TB_CHAN_TILE];
    REAL *TB_CHAN_RESTRICT ya = y + 2 * i0;
    const size_t h = n_lags - 1; /* history samples before x[0] */
    size_t m, i;
    for (i = 0; i < 2 * len; i++)
        ya[i] = 0;
    if (b != NULL)
        for (i = 0; i < 2 * len; i++)
            yd[i] = 0;
    for (m = 0; m < n_lags; m++) {
        const REAL ar = a[2 * m], ai = a[2 * m + 1];
        const REAL dr = b ? b[2 * m] - ar : 0, di = b ? b[2 * m + 1] - ai : 0;
        size_t head = 0; /* samples of the tile that read the history at this lag */
        if (i0 < m)
            head = m - i0 < len ? m - i0 : len;
        for (i = 0; i < head; i++) {
            /* x[i0 + i - m] with a negative index: history sample h + i0 + i - m */
            const REAL *xv = hist + 2 * (h + i0 + i - m);
            ya[2 * i] += ar * xv[0] - ai * xv[1];
            ya[2 * i + 1] += ar * xv[1] + ai * xv[0];
            if (b != NULL) {
                yd[2 * i] += dr * xv[0] - di * xv[1];
                yd[2 * i + 1] += dr * xv[1] + di * xv[0];
            }
        }
        if (head < len) {
            /* x[i0 + i - m] for i >= head, where the index is >= 0 */
            const REAL *TB_CHAN_RESTRICT xv = x + 2 * (i0 + head - m);
            REAL *TB_CHAN_RESTRICT yv = ya + 2 * head;
            const size_t rest = len - head;
            if (b == NULL) {
                for (i = 0; i < rest; i++) {
                    const REAL xr = xv[2 * i], xi = xv[2 * i + 1];
                    yv[2 * i] += ar * xr - ai * xi;
                    yv[2 * i + 1] += ar * xi + ai * xr;
                }
            } else {
                REAL *TB_CHAN_RESTRICT dv = yd + 2 * head;
                for (i = 0; i < rest; i++) {
                    const REAL xr = xv[2 * i], xi = xv[2 * i + 1];
                    yv[2 * i] += ar * xr - ai * xi;
                    yv[2 * i + 1] += ar * xi + ai * xr;
                    dv[2 * i] += dr * xr - di * xi;
                    dv[2 * i + 1] += dr * xi + di * xr;
                }
            }
        }
    }
    if (b != NULL)
        for (i = 0; i < len; i++) {
            ya[2 * i] += t[i] * yd[2 * i];
            ya[2 * i + 1] += t[i] * yd[2 * i + 1];
        }
}

/* Every signal of a call whose arguments tb_chan_check has accepted. */
static void SFX(tb_chan_rows)(size_t batch, size_t n, size_t n_lags,
                              const REAL *x, ptrdiff_t x_batch_stride,
                              const REAL *hist, ptrdiff_t hist_batch_stride,
                              const REAL *taps, size_t n_tap_sets, size_t n_knots,
                              size_t interval, size_t offset,
                              REAL *y, ptrdiff_t y_batch_stride)
{
    size_t q;
    REAL t[TB_CHAN_TILE];
    for (q = 0; q < batch; q++) {
        const REAL *xq = x + 2 * (ptrdiff_t)q * x_batch_stride;
        const REAL *hq = n_lags > 1 ? hist + 2 * (ptrdiff_t)q * hist_batch_stride : NULL;
        const REAL *set = taps + 2 * (q % n_tap_sets) * n_knots * n_lags;
        REAL *yq = y + 2 * (ptrdiff_t)q * y_batch_stride;
        size_t i0 = 0;
        while (i0 < n) {
            size_t len, k, i, rel = 0;
            const REAL *a, *b;
            if (n_knots == 1) {
                /* static taps: no slope, t unused */
                len = n - i0 < TB_CHAN_TILE ? n - i0 : TB_CHAN_TILE;
                a = set;
                b = NULL;
            } else {
                /* stay inside knot interval k = rel / interval */
                size_t left;
                rel = offset + i0;
                k = rel / interval;
                left = interval - (rel - k * interval);
                len = n - i0;
                if (len > left)
                    len = left;
                if (len > TB_CHAN_TILE)
                    len = TB_CHAN_TILE;
                a = set + 2 * k * n_lags;
                b = a + 2 * n_lags;
                for (i = 0; i < len; i++)
                    t[i] = (REAL)((double)(rel + i - k * interval) / (double)interval);
            }
            SFX(tb_chan_tile)(n_lags, len, i0, xq, hq, a, b, t, yq);
            i0 += len;
        }
    }
}
